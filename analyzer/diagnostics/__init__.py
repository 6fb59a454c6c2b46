"""Why the link does worse than theory: model checks, causes of the loss, pulse, leakage, noise correlation."""

from ._diagnostics import (
    DecisionGain, FLAG_LEVEL, Leakage, LossParts, ModelCheck, NoiseCorrelation, PulseShape,
    Trend, ber_likelihood, blind_ber, cross_branch_check, decision_gain, ebn0_trend,
    envelope_cdf, f_test_oneway, idle_power_check, ks_test, leakage, loss_parts, measured_pulse,
    model_checks, noise_correlation, noise_window_outputs, normal_test, output_correlations,
    window_referenced,
)

__all__ = [
    "DecisionGain", "FLAG_LEVEL", "Leakage", "LossParts", "ModelCheck", "NoiseCorrelation",
    "PulseShape", "Trend", "ber_likelihood", "blind_ber", "cross_branch_check", "decision_gain",
    "ebn0_trend", "envelope_cdf", "f_test_oneway", "idle_power_check", "ks_test", "leakage",
    "loss_parts", "measured_pulse", "model_checks", "noise_correlation", "noise_window_outputs",
    "normal_test", "output_correlations", "window_referenced",
]
