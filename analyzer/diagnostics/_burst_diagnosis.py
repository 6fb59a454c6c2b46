"""The receiver-model diagnostics of one burst, all in one step."""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

from ..theory import DecisionGain, LossParts, blind_ber, decision_gain, loss_parts
from ._model_checks import ModelCheck, Trend, cross_branch_check, ebn0_trend, model_checks, output_correlations
from ._noise import NoiseCorrelation, idle_power_check, noise_correlation, noise_window_outputs
from ._pulse import Leakage, PulseShape, leakage, measured_pulse

__all__ = ["BurstDiagnosis", "diagnose_burst"]


@dataclass(frozen=True)
class BurstDiagnosis:
    """Why one burst does worse than theory (the fields of the burst's result they fill)."""

    checks: tuple[ModelCheck, ...]
    trend: Trend | None
    loss_parts: LossParts | None
    blind_ber: tuple[float, tuple[float, float]] | None
    decision_gain: DecisionGain | None
    pulse: PulseShape
    leakage: Leakage
    noise_correlation: NoiseCorrelation | None
    output_correlation: np.ndarray

    def as_fields(self) -> dict:
        """The diagnosis as a dict of its fields (not copied)."""
        return {f.name: getattr(self, f.name) for f in fields(self)}


def diagnose_burst(x, x_start, fs, grid, tones, out, sent, stats, mom, rho, model, ber, loss, scale,
                   rows) -> BurstDiagnosis:
    """Receiver-model diagnostics of one burst.

    ``x`` from sample ``x_start`` holds the burst at sample rate ``fs`` on
    ``grid`` with ``tones``; ``out`` its branch outputs, ``sent`` the tone of
    each symbol used for the statistics, ``stats`` and ``mom`` its branch
    statistics and moments, ``rho`` the template correlation, ``model`` the
    link model, ``ber`` and ``loss`` its bit-error count and implementation
    loss (None when not counted), ``scale`` samples per symbol over the window
    and ``rows`` the symbols' samples.
    """
    checks = model_checks(out.z, sent, stats.signal_gain, stats.noise_var, abs(rho), n_tests=6)
    corr = output_correlations(out.z, sent)
    if abs(rho) < 0.05:
        checks.append(cross_branch_check(out.z, sent, n_tests=6, correlations=corr))
    trend = ebn0_trend(out.z, sent, scale)
    pulse = measured_pulse(rows, grid.first_samples, sent, tones, fs, stats.noise_var_complex)
    checks.append(idle_power_check(mom, stats.noise_var_complex, pulse.noise_per_sample, abs(rho)))
    checks = [c for c in checks if c is not None]
    leak = leakage(mom, pulse.noise_per_sample)
    ncor = noise_correlation(noise_window_outputs(x, x_start, grid, tones, fs), rho)
    parts = None
    if loss is not None and ber is not None and ber.errors > 0:
        parts = loss_parts(loss.value, ber.rate, model, pulse.template_loss_db_mean,
                           stats.ebn0_db - stats.correlator_ebn0_db)
    ok = np.isfinite(stats.ebn0_db)
    blind = blind_ber(stats.ebn0_db, stats.ebn0_db_ci95, model) if ok else None
    gain = decision_gain(stats.ebn0, stats.imbalance_db) if ok else None
    return BurstDiagnosis(checks=tuple(checks), trend=trend, loss_parts=parts, blind_ber=blind, decision_gain=gain,
                          pulse=pulse, leakage=leak, noise_correlation=ncor, output_correlation=corr)
