"""Noise seen by the two correlators: their correlation on noise-only windows, and the idle-branch power.

White noise gives both correlators the template correlation ``<w1, w0>`` as
their noise correlation; a receiver filter that colours the noise changes it.
The windows outside a burst hold noise alone; the idle-branch power of the
burst must be that noise plus the expected tone leakage.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import special

from ._model_checks import ModelCheck, _check, _norm_sf

__all__ = ["NoiseCorrelation", "noise_correlation", "window_referenced", "noise_window_outputs",
           "idle_power_check"]


# --------------------------------------------------------------------------- noise correlation
@dataclass(frozen=True)
class NoiseCorrelation:
    """Complex correlation of the two branches' outputs on noise alone.

    Attributes
    ----------
    value : complex
        ``sum z0 conj(z1) / sqrt(sum |z0|^2 sum |z1|^2)`` over noise-only windows.
    n_windows : int
    ci95_abs : float
        Approximate 95% half-width of ``|value|`` (``1.96 (1 - |r|^2) / sqrt(n)``).
    template_correlation : complex
        ``<w1, w0>``: what white noise gives.
    p_value : float
        Test that ``value`` equals the template correlation (complex normal
        approximation, variance ``(1 - |rho|^2)^2 / n``).
    """

    value: complex
    n_windows: int
    ci95_abs: float
    template_correlation: complex
    p_value: float


def noise_correlation(z_idle: np.ndarray, rho: complex) -> NoiseCorrelation | None:
    """Noise correlation between the two branches from noise-only windows.

    Parameters
    ----------
    z_idle : numpy.ndarray
        (n, 2) outputs of both correlators on windows that hold noise only.
    rho : complex
        Template correlation ``<w1, w0>`` (:func:`analyzer.branches.template_correlation`).

    Returns
    -------
    NoiseCorrelation or None
        None with fewer than 8 windows.

    Notes
    -----
    For white noise of variance ``s^2`` per sample, ``E[z0 conj(z1)] =
    s^2 <w1, w0>``, so the coefficient equals the template correlation; a
    receiver filter that colours the noise changes it.  For circular complex
    Gaussian pairs the sample coefficient has variance ``(1 - |rho|^2)^2 / n``
    (about half in each of its real and imaginary parts).

    References
    ----------
    .. [1] N. R. Goodman, "Statistical analysis based on a certain multivariate
       complex Gaussian distribution", *Ann. Math. Statist.*, 1963 -- from memory.
    """
    z = np.asarray(z_idle)
    n = len(z)
    if n < 8:
        return None
    a, b = z[:, 0], z[:, 1]
    den = np.sqrt(np.vdot(a, a).real * np.vdot(b, b).real)
    r = complex(np.vdot(b, a) / den) if den > 0 else complex("nan")
    rho = complex(rho)
    sd = (1 - min(abs(rho) ** 2, 1.0)) / np.sqrt(n)
    d = abs(r - rho) / max(sd, 1e-12)
    # |r - rho|^2 / (sd^2 / 2) is chi-square with 2 degrees of freedom under the null
    p = float(special.chdtrc(2, 2 * d * d)) if np.isfinite(d) else float("nan")   # scipy.stats.chi2(2).sf
    return NoiseCorrelation(r, n, float(1.96 * (1 - min(abs(r) ** 2, 1.0)) / np.sqrt(n)), rho, p)


def window_referenced(out, sample_rate_hz: float) -> np.ndarray:
    """Correlator outputs with each template referred to its window's first sample.

    :func:`analyzer.branches.correlate` refers the templates to absolute
    sample time, so ``z0 conj(z1)`` turns by ``2 pi (f1 - f0) n0 / fs`` from
    window to window; referred to the window start, white noise gives
    ``E[z0 conj(z1)] = s^2 <w1, w0>`` in every window.
    """
    n0 = out.grid.first_samples.astype(float)
    f = np.asarray(out.tones_hz, float)
    return out.z * np.exp(2j * np.pi * np.outer(n0, f) / sample_rate_hz)


def noise_window_outputs(x: np.ndarray, x_start: int, grid, tones_hz, sample_rate_hz: float,
                         guard_symbols: float = 2.0) -> np.ndarray:
    """Both correlator outputs on the whole windows of ``x`` that lie outside the burst.

    Windows of the burst's length ``L`` are laid back to back before the first
    symbol and after the last one, leaving ``guard_symbols`` symbols free at
    each edge (ramps, timing), and correlated with the burst's templates.

    Returns
    -------
    numpy.ndarray
        (n, 2) complex outputs (n may be 0), each template referred to its
        window's first sample ``n0``: ``z_i = sum_m x[n0 + m] exp(-j 2 pi f_i
        m / fs) / sqrt(L)``, as :func:`window_referenced` gives them from
        :func:`analyzer.branches.correlate`.

    Notes
    -----
    The windows are consecutive blocks of ``x``, so they are a reshape of it
    and the outputs one product with the two templates of the window start;
    the absolute-time phase the correlator applies and
    :func:`window_referenced` takes off again is never formed (that round
    trip only adds rounding, about 1e-16 per cycle of ``f n0 / fs``).
    """
    L = grid.window
    sps = grid.samples_per_symbol
    f = np.asarray(tones_hz, float)
    parts = []
    before_end = int(np.floor(grid.first_start - guard_symbols * sps)) - x_start
    n_before = max(before_end, 0) // L
    if n_before > 0:
        parts.append(x[before_end - n_before * L:before_end].reshape(n_before, L))
    after_start = int(np.ceil(grid.stop + guard_symbols * sps)) - x_start
    n_after = max(len(x) - after_start, 0) // L
    if n_after > 0:
        if after_start < 0:
            raise ValueError("symbol grid runs outside the samples given")
        parts.append(x[after_start:after_start + n_after * L].reshape(n_after, L))
    if not parts:
        return np.zeros((0, 2), complex)
    rows = parts[0] if len(parts) == 1 else np.concatenate(parts)
    # the conjugate templates of a window starting at sample 0, as branches.correlate forms them
    base = np.exp(-2j * np.pi * np.outer(np.arange(L), f) / sample_rate_hz) / np.sqrt(L)
    return np.asarray(rows, complex) @ base


def idle_power_check(moments, noise_var_complex, noise_per_sample: float, rho_abs: float,
                     n_tests: int = 6) -> ModelCheck | None:
    """Test that the idle-branch power is noise plus the template leakage only.

    The moment fit (:mod:`analyzer.estimate`) reads the noise of branch i off
    the idle power ``U_i = |rho|^2 g_j^2 + s_i^2``; ``noise_per_sample``
    (:func:`analyzer.diagnostics.measured_pulse`) measures it without that model.  Under the model
    the two agree; ``U_i`` is a mean of ``n_i`` powers with relative standard
    deviation about ``1/sqrt(n_i)`` (exponential law), the independent level
    is far more precise, so ``(s_fit / s_ind - 1) sqrt(n)`` is referred to the
    normal law (two branches, Bonferroni).

    References
    ----------
    .. [1] Exponential law of the power of circular complex Gaussian noise
       (chi-square with two degrees of freedom) -- from memory; ``scipy.stats.norm``
       tail (``scipy.special.ndtr``).
    """
    s_ind = float(noise_per_sample)
    nv = np.asarray(noise_var_complex, float)
    if not (np.isfinite(s_ind) and s_ind > 0) or np.any(moments.n < 20):
        return None
    zs = []
    for i in (0, 1):
        n_idle = moments.n[1 - i]
        # relative sd of U_i; the leakage part r g^2 adds a little spread, ignored (conservative for r -> 0)
        zs.append(abs(nv[i] / s_ind - 1.0) * np.sqrt(n_idle) * s_ind / max(moments.mean[1 - i, i], 1e-300))
    stat = float(max(zs))
    p = min(1.0, 2 * _norm_sf(stat) * 2 * n_tests)
    return _check("idle-branch power", stat, p,
                  "the idle branch holds more than noise and the expected tone leakage: the pulse is "
                  "not rectangular (shaping, filtering), timing or frequency error, or an interferer; "
                  "the fitted noise and Eb/N0 are then biased")
