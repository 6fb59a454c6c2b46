"""95% intervals of the burst measurements a spec judges: tones, centre offset, imbalance, correlation.

Pure functions of what a burst result already holds (correlator statistics, the
symbols used per tone, the grid and the tones); no I/O.

Tones.  Each tone is estimated from the ``K_i`` symbols that carried it, each an
``M``-sample stretch of a tone of unknown phase (``M`` the correlator window),
by maximising the summed noncoherent correlator power.  With a per-sample
signal-to-noise ratio ``rho_i`` the Cramer-Rao bound for the frequency of one
such stretch of a complex tone in white noise is ``6 / (rho_i M (M^2 - 1))``
rad^2 per sample^2 [1]_; the ``K_i`` stretches are independent, so the bound
divides by ``K_i``.  ``rho_i = g_i^2 / (M E|n_i|^2)`` follows from the branch
statistics (the correlator sums the signal coherently over ``M`` samples and the
noise power ``M`` times), whatever the correlator's normalisation.  The
interval is the estimate +- 1.96 bound standard deviations: at the bound the
estimator is unbiased and Gaussian for SNR well above its threshold.

Centre offset: the mean of the two tones, standard deviation
``sqrt(var_0 + var_1) / 2``.

Imbalance ``10 log10(g_1^2 / g_0^2)``: each ``g_i^2`` is the mean of ``|z|^2``
over its ``K_i`` symbols less the noise power; for complex Gaussian noise of
power ``s^2`` the variance of ``|z|^2`` is ``s^4 + 2 g^2 s^2`` [2]_, and the
noise power itself is estimated from as many symbols (variance ``s^4 / K``).
The delta method gives the variance of each ``10 log10 g_i^2``.

Tone correlation ``|rho|`` is a known function of the tone spacing (the
Dirichlet kernel of :func:`analyzer.branches.template_correlation`): its
interval is the range of ``|rho|`` over the spacing's interval.

References
----------
.. [1] D. C. Rife and R. R. Boorstyn, "Single-tone parameter estimation from
   discrete-time observations," IEEE Trans. Inf. Theory, vol. 20, no. 5,
   pp. 591-598, 1974 (from memory).
.. [2] A. Papoulis, *Probability, Random Variables, and Stochastic Processes*:
   moments of the noncentral chi-square (Rician power) law (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Z95", "BurstIntervals", "burst_intervals"]

Z95 = 1.959963984540054
"""Two-sided 95% point of the standard normal law (scipy.stats.norm.isf(0.025))."""


@dataclass(frozen=True)
class BurstIntervals:
    """95% intervals of one burst's judged quantities ((lo, hi) pairs; nan when not known).

    Attributes
    ----------
    tones_hz : ((float, float), (float, float))
        Each measured tone.
    tone_sd_hz : (float, float)
        Standard deviation of each tone estimate (Cramer-Rao bound).
    centre_offset_hz : (float, float)
    imbalance_db : (float, float)
    tone_correlation : (float, float)
    """

    tones_hz: tuple[tuple[float, float], tuple[float, float]]
    tone_sd_hz: tuple[float, float]
    centre_offset_hz: tuple[float, float]
    imbalance_db: tuple[float, float]
    tone_correlation: tuple[float, float]


def tone_sd_hz(gain_sq, noise_var_complex, n_symbols, window: int, sample_rate_hz: float) -> np.ndarray:
    """Standard deviation (Cramer-Rao bound) of each tone estimate, Hz; see the module docstring."""
    g2 = np.asarray(gain_sq, float)
    s2 = np.asarray(noise_var_complex, float)
    k = np.asarray(n_symbols, float)
    m = float(window)
    with np.errstate(divide="ignore", invalid="ignore"):
        rho = g2 / (m * s2)
        var_w = 6.0 / (rho * m * (m * m - 1.0) * k)
        sd = np.sqrt(var_w) * sample_rate_hz / (2 * np.pi)
    return np.where((g2 > 0) & (s2 > 0) & (k > 0) & (m > 1), sd, np.nan)


def _abs_rho(spacing_hz, sample_rate_hz, window):
    m = np.arange(window)
    return np.abs(np.mean(np.exp(2j * np.pi * np.asarray(spacing_hz, float)[:, None] * m / sample_rate_hz), axis=1))


def burst_intervals(tones_hz, gain_sq, noise_var_complex, n_symbols, window: int, sample_rate_hz: float,
                    nominal_centre_hz: float = 0.0) -> BurstIntervals:
    """95% intervals of the tones, centre offset, imbalance and tone correlation of one burst.

    Parameters
    ----------
    tones_hz : (float, float)
        Measured tones.
    gain_sq, noise_var_complex, n_symbols : array_like
        (2,) per tone: ``g_i^2``, ``E|n_i|^2`` and the symbols used
        (:class:`analyzer.estimate.BranchStats`).
    window : int
        Correlator window M, samples.
    sample_rate_hz : float
    nominal_centre_hz : float
        Subtracted from the centre (the mean of the nominal tones; 0 without).

    Returns
    -------
    BurstIntervals
    """
    f = np.asarray(tones_hz, float)
    sd = tone_sd_hz(gain_sq, noise_var_complex, n_symbols, window, sample_rate_hz)
    tones = tuple((float(f[i] - Z95 * sd[i]), float(f[i] + Z95 * sd[i])) for i in (0, 1))
    c = 0.5 * (f[0] + f[1]) - nominal_centre_hz
    csd = 0.5 * float(np.hypot(sd[0], sd[1]))
    centre = (float(c - Z95 * csd), float(c + Z95 * csd))

    g2 = np.asarray(gain_sq, float)
    s2 = np.asarray(noise_var_complex, float)
    k = np.asarray(n_symbols, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        var_g2 = (s2 ** 2 + 2 * g2 * s2) / k + s2 ** 2 / k
        var_db = (10 / np.log(10)) ** 2 * var_g2 / g2 ** 2
        imb = 10 * np.log10(g2[1] / g2[0])
    isd = float(np.sqrt(var_db.sum()))
    imbalance = (float(imb - Z95 * isd), float(imb + Z95 * isd)) if np.all(g2 > 0) else (np.nan, np.nan)

    ssd = float(np.hypot(sd[0], sd[1]))
    spacing = f[1] - f[0]
    if np.isfinite(ssd):
        grid = np.linspace(spacing - Z95 * ssd, spacing + Z95 * ssd, 65)
        r = _abs_rho(grid, sample_rate_hz, window)
        corr = (float(r.min()), float(r.max()))
    else:
        corr = (np.nan, np.nan)
    return BurstIntervals(tones_hz=tones, tone_sd_hz=(float(sd[0]), float(sd[1])), centre_offset_hz=centre,
                          imbalance_db=imbalance, tone_correlation=corr)
