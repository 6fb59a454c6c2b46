"""Why the link does worse than theory: model checks, causes of the loss, pulse, leakage, noise correlation."""

from ._diagnostics import (
    FLAG_LEVEL, Leakage, ModelCheck, NoiseCorrelation, PulseShape,
    Trend, cross_branch_check, ebn0_trend,
    envelope_cdf, f_test_oneway, idle_power_check, ks_test, leakage, measured_pulse,
    model_checks, noise_correlation, noise_window_outputs, normal_test, output_correlations,
    window_referenced,
)

__all__ = [
    "FLAG_LEVEL", "Leakage", "ModelCheck", "NoiseCorrelation",
    "PulseShape", "Trend", "cross_branch_check",
    "ebn0_trend", "envelope_cdf", "f_test_oneway", "idle_power_check", "ks_test", "leakage",
    "measured_pulse", "model_checks", "noise_correlation", "noise_window_outputs",
    "normal_test", "output_correlations", "window_referenced",
]
