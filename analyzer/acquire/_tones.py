"""Each burst's two tones, from the symbols that carried them.

Tones
    The averaged periodogram of the burst with a rectangular window one symbol
    long (Bartlett's method) has a lobe of width ~R_s at each tone; its peak
    near each hint is the first estimate.  Once symbols are decided, each tone
    is re-estimated from the symbols that carried it only (so the other tone's
    lobe cannot pull it), as the peak of the sum of their zero-padded
    periodograms -- the noncoherent maximum-likelihood frequency estimate for
    a tone of unknown phase per symbol.

References
----------
.. [1] D. C. Rife and R. R. Boorstyn, "Single-tone parameter estimation from
   discrete-time observations," IEEE Trans. Inf. Theory, vol. 20, no. 5,
   pp. 591-598, 1974 (from memory).
"""

from __future__ import annotations

import numpy as np

__all__ = ["lag_products", "noncoherent_frequency", "real_tone_frequency", "refine_tones", "steady_symbols",
           "transition_deficit"]


def lag_products(rows: np.ndarray) -> np.ndarray:
    """``R[l] = sum_k sum_m r[k, m + l] conj(r[k, m])`` for lags ``l = 0 .. L-1``.

    The summed periodogram of the rows is the trigonometric polynomial
    ``P(f) = R[0] + 2 Re sum_{l>0} R[l] exp(-j 2 pi f l / fs)``, which
    :func:`noncoherent_frequency` maximises without an FFT grid.  ``R[l]`` is
    the sum of the l-th superdiagonal of the Gram matrix ``r^H r`` (one small
    matrix product).
    """
    L = rows.shape[1]
    g = rows.conj().T @ rows                       # g[a, b] = sum_k conj(r[k, a]) r[k, b]
    i, j = np.triu_indices(L)
    v = g[i, j]
    return (np.bincount(j - i, weights=v.real, minlength=L)
            + 1j * np.bincount(j - i, weights=v.imag, minlength=L))


def _periodogram_from_lags(R: np.ndarray, f: np.ndarray, fs: float) -> np.ndarray:
    lags = np.arange(1, len(R))
    ph = np.exp(-2j * np.pi * np.outer(np.atleast_1d(f), lags) / fs)
    return R[0].real + 2.0 * np.real(ph @ R[1:])


def noncoherent_frequency(rows: np.ndarray, sample_rate_hz: float, centre_hz: float,
                          half_width_hz: float) -> float:
    """Frequency of a tone of unknown phase in each row: argmax of the summed periodogram.

    The objective is evaluated exactly from the lag products (no FFT grid, so no
    interpolation bias), first on a grid of 1/16 of the lobe width, then
    refined by Newton's method on its exact derivatives (a bounded scalar
    search where the objective is not concave there).

    References
    ----------
    Rife & Boorstyn (1974): the periodogram maximum is the maximum-likelihood
    frequency of a tone in white Gaussian noise (from memory); with an
    independent phase per row the likelihood is the sum of the rows'
    periodograms.
    """
    from scipy.optimize import minimize_scalar

    R = lag_products(rows)
    L = rows.shape[1]
    step = sample_rate_hz / L / 16.0
    grid = centre_hz + np.arange(-half_width_hz, half_width_hz + step / 2, step)
    p = _periodogram_from_lags(R, grid, sample_rate_hz)
    i = int(np.argmax(p))
    lo, hi = grid[max(i - 1, 0)], grid[min(i + 1, len(grid) - 1)]
    if hi <= lo:
        return float(grid[i])
    # Newton's method on P'(f) = 0 from the grid's best point: P is a trigonometric
    # polynomial, so its derivatives are exact sums over the lags
    w = 2 * np.pi * np.arange(1, L) / sample_rate_hz
    f = float(grid[i])
    for _ in range(8):
        ph = R[1:] * np.exp(-1j * w * f)
        d1 = 2.0 * float(np.sum(w * ph.imag))            # dP/df
        d2 = -2.0 * float(np.sum(w * w * ph.real))       # d2P/df2
        if not d2 < 0:
            break
        f_next = min(max(f - d1 / d2, lo), hi)
        if abs(f_next - f) <= 1e-9 * step:
            if lo < f_next < hi:
                return float(f_next)
            break
        f = f_next
    # not concave at the start, or the optimum sits on the bracket: a bounded search
    res = minimize_scalar(lambda v: -_periodogram_from_lags(R, v, sample_rate_hz)[0],
                          bounds=(lo, hi), method="bounded", options={"xatol": 1e-6 * step})
    return float(res.x)


#: Fewest symbols per tone in the middle of a run for :func:`refine_tones` to use only those.
MIN_STEADY_SYMBOLS = 16


def steady_symbols(tone_index: np.ndarray, reach: int = 1) -> np.ndarray:
    """Symbols in the middle of a run: the same tone before, during and after.

    With a shaped frequency pulse (Gaussian, raised cosine) or receiver filters,
    the frequency moves between the tones over part of a symbol next to every
    change of tone, and a short run never reaches the tone; the middle of a run
    of three or more sits on the steady tone (what a long run settles to).  For
    rectangular keying every symbol does, so nothing is lost but symbols.
    ``reach`` symbols either side must carry the same tone (1: runs of three).
    """
    b = np.asarray(tone_index).astype(np.int64)
    n = len(b)
    out = np.zeros(n, bool)
    if n > 2 * reach:
        mid = b[reach:n - reach]
        same = np.ones(n - 2 * reach, bool)
        for j in range(1, reach + 1):
            same &= (b[reach - j:n - reach - j] == mid) & (b[reach + j:n - reach + j] == mid)
        out[reach:n - reach] = same
    return out


def transition_deficit(rows: np.ndarray, tone_index: np.ndarray, sample_rate_hz: float,
                       tones_hz) -> tuple[float, float]:
    """How much less energy the sent tone's template collects next to a change of tone.

    ``1 - E_t / E_s`` with ``E_t`` the mean ``|z_sent|^2`` of symbols next to a
    change of tone and ``E_s`` that of symbols in the middle of a run, and its
    standard error (delta method on the two means).  About zero for
    rectangular keying; a shaped frequency pulse or a receiver filter moves the
    frequency away from the tone next to every change, which the template
    sees as lost energy.
    """
    b = np.asarray(tone_index).astype(np.int64)
    steady = steady_symbols(b)
    moving = ~steady
    moving[[0, -1]] = False
    if np.count_nonzero(steady) < 8 or np.count_nonzero(moving) < 8:
        return float("nan"), float("nan")
    L = rows.shape[1]
    n = np.arange(L)
    w = np.exp(-2j * np.pi * np.outer(n, np.asarray(tones_hz, float)) / sample_rate_hz) / np.sqrt(L)
    z = rows @ w
    e = np.abs(z[np.arange(len(b)), b]) ** 2
    es, et = e[steady], e[moving]
    ms, mt = float(es.mean()), float(et.mean())
    if not ms > 0:
        return float("nan"), float("nan")
    r = mt / ms
    se = r * np.sqrt(es.var(ddof=1) / es.size / ms ** 2 + et.var(ddof=1) / et.size / max(mt, 1e-300) ** 2)
    return float(1.0 - r), float(se)


#: A transition deficit (:func:`transition_deficit`) this many standard errors
#: above zero, and above :data:`SHAPED_MIN_DEFICIT`, marks a shaped or filtered
#: transmission: its tones are then measured on the middle of runs only.
SHAPED_SIGMAS = 4.0
SHAPED_MIN_DEFICIT = 0.005
#: Above this transition deficit (a Gaussian pulse of BT 0.3 at a deviation
#: of R_s loses about half, BT 0.5 a sixth) a run of three has not
#: settled in its middle symbol either: the tones are measured on runs of five
#: when each tone has ``8 * MIN_STEADY_SYMBOLS`` of them (a 1500-symbol burst
#: keeps runs of three: at 10 dB a sixteenth of the symbols spread the tones
#: twice as far as the 0.2% of R_s that runs of three leave at BT 0.3).
STRONGLY_SHAPED_DEFICIT = 0.3


def _real_tone_power(rows: np.ndarray, freqs: np.ndarray, sample_rate_hz: float) -> np.ndarray:
    """Summed energy of real rows in the span of ``cos, sin`` at each frequency (least squares)."""
    n = np.arange(rows.shape[1])
    out = np.empty(len(freqs))
    for j, f in enumerate(freqs):
        c = np.stack([np.cos(2 * np.pi * f * n / sample_rate_hz), np.sin(2 * np.pi * f * n / sample_rate_hz)], 1)
        q, _ = np.linalg.qr(c)
        p = rows @ q
        out[j] = float(np.sum(p * p))
    return out


def real_tone_frequency(rows: np.ndarray, sample_rate_hz: float, centre_hz: float,
                        half_width_hz: float) -> float:
    """Frequency of a real tone of unknown amplitude and phase in each (real) row.

    The maximum-likelihood frequency of a real sinusoid in white noise
    maximises the energy of its least-squares fit ``a cos + b sin``; unlike the
    periodogram of a complex tone, this is not pulled by the tone's own image
    at the negative frequency, which a window of one symbol does not resolve
    from a low audio tone.  Grid of 1/16 of the lobe width, then a bounded
    scalar search.

    References
    ----------
    Rife & Boorstyn (1974), the least-squares (maximum-likelihood) frequency of
    a sinusoid in white Gaussian noise (from memory).
    """
    from scipy.optimize import minimize_scalar

    rows = np.asarray(rows, float)
    step = sample_rate_hz / rows.shape[1] / 16.0
    lo_f = max(centre_hz - half_width_hz, step)
    grid = np.arange(lo_f, centre_hz + half_width_hz + step / 2, step)
    if grid.size == 0:
        return float(centre_hz)
    p = _real_tone_power(rows, grid, sample_rate_hz)
    i = int(np.argmax(p))
    lo, hi = grid[max(i - 1, 0)], grid[min(i + 1, len(grid) - 1)]
    if hi <= lo:
        return float(grid[i])
    res = minimize_scalar(lambda v: -_real_tone_power(rows, np.array([v]), sample_rate_hz)[0],
                          bounds=(lo, hi), method="bounded", options={"xatol": 1e-6 * step})
    return float(res.x)


def refine_tones(rows: np.ndarray, decisions: np.ndarray, sample_rate_hz: float,
                 tones_hz: tuple[float, float], weights: np.ndarray | None = None
                 ) -> tuple[float, float]:
    """Decision-directed steady-tone estimates from the symbols that carried each tone.

    When the symbols next to a change of tone lose energy on their template
    (:func:`transition_deficit`: a shaped pulse or a receiver filter), only
    symbols in the middle of a run (:func:`steady_symbols`) are used, provided
    each tone has at least :data:`MIN_STEADY_SYMBOLS` of them, so that the
    steady tones are measured, not the mean frequency of symbols still moving
    between the tones.  Rectangular keying keeps every symbol (twice the
    precision of a quarter of them).

    Parameters
    ----------
    rows : numpy.ndarray
        (n_symbols, L) samples of each symbol.
    decisions : numpy.ndarray
        Tone index (0/1) per symbol (decided or known).
    sample_rate_hz : float
        Sample rate.
    tones_hz : (float, float)
        Current estimates: the search spans +-0.45 R_s (or spacing) around them.
    weights : numpy.ndarray, optional
        Boolean mask of symbols to use (e.g. high-confidence decisions).

    Returns
    -------
    (float, float)
        Refined (f0, f1).
    """
    L = rows.shape[1]
    rs = sample_rate_hz / L
    half = 0.45 * min(abs(tones_hz[1] - tones_hz[0]), rs)
    out = []
    use = np.ones(len(rows), bool) if weights is None else np.asarray(weights, bool)
    real = not np.any(np.asarray(rows).imag)           # real audio: fit real tones
    steady = use & steady_symbols(decisions)
    d = np.asarray(decisions)
    if all(np.count_nonzero(steady & (d == i)) >= MIN_STEADY_SYMBOLS for i in (0, 1)):
        deficit, se = transition_deficit(rows, d, sample_rate_hz, tones_hz)
        if deficit > max(SHAPED_SIGMAS * se, SHAPED_MIN_DEFICIT):
            use = steady
            wide = use & steady_symbols(decisions, 2)
            if deficit > STRONGLY_SHAPED_DEFICIT and all(
                    np.count_nonzero(wide & (d == i)) >= 8 * MIN_STEADY_SYMBOLS for i in (0, 1)):
                use = wide
    for i in (0, 1):
        sel = use & (decisions == i)
        if np.count_nonzero(sel) < 4:
            out.append(float(tones_hz[i]))
            continue
        if real:
            out.append(real_tone_frequency(rows[sel].real, sample_rate_hz, tones_hz[i], half))
        else:
            out.append(noncoherent_frequency(rows[sel], sample_rate_hz, tones_hz[i], half))
    return (out[0], out[1])
