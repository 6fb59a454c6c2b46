"""Why the link does worse than theory: model checks of the correlator outputs, the measured
pulse and its template loss, leakage, and the noise the correlators see."""

from ._burst_diagnosis import BurstDiagnosis, diagnose_burst
from ._envelope import envelope_cdf
from ._model_checks import (
    FLAG_LEVEL, ModelCheck, Trend, cross_branch_check, ebn0_trend, model_checks, output_correlations,
)
from ._noise import (
    NoiseCorrelation, idle_power_check, noise_correlation, noise_window_outputs, window_referenced,
)
from ._pulse import Leakage, PulseShape, leakage, measured_pulse

__all__ = [
    "FLAG_LEVEL", "Leakage", "ModelCheck", "NoiseCorrelation", "PulseShape", "Trend",
    "cross_branch_check", "ebn0_trend", "envelope_cdf", "idle_power_check", "leakage",
    "measured_pulse", "model_checks", "noise_correlation", "noise_window_outputs",
    "output_correlations", "window_referenced", "BurstDiagnosis", "diagnose_burst",
]
