"""Each burst's symbol rate and timing: the spectral line of the window energy, then a local search.

Symbol rate and timing
    The total correlator energy ``e[n] = |z0(n)|^2 + |z1(n)|^2`` of a window of
    one symbol starting at sample n is periodic at the symbol rate and peaks
    where the window lines up with a symbol.  The frequency of its spectral line
    near R_s gives the symbol rate; the phase of that line gives the timing,
    as in square-law timing recovery.  For continuous-phase keying, whose
    energy line is weak, the instants where the sent tone changes give a line
    of their own.

References
----------
.. [1] M. Oerder and H. Meyr, "Digital filter and square timing recovery,"
   IEEE Trans. Commun., vol. 36, no. 5, pp. 605-612, 1988 (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..branches import EnergyTrace, SymbolGrid, energy_trace, oscillator, sliding_sums, symbol_grid, window_energy

__all__ = [
    "GRID_FIT_MIN_CHANGES", "TimingEstimate", "estimate_symbol_timing", "grid_fit",
    "grid_for_span", "line_fit", "narrow_spectrum", "refine_timing", "symbol_timing", "tone_difference", "tone_transitions",
    "transition_line_timing",
]


def _parabolic_peak(y: np.ndarray, i: int) -> float:
    """Fractional index of the peak of ``y`` near sample ``i`` (three-point parabola)."""
    if i <= 0 or i >= len(y) - 1:
        return float(i)
    a, b, c = y[i - 1], y[i], y[i + 1]
    den = a - 2 * b + c
    if den >= 0:
        return float(i)
    return float(i + 0.5 * (a - c) / den)


@dataclass(frozen=True)
class TimingEstimate:
    """Symbol rate and timing of a burst.

    Attributes
    ----------
    symbol_rate_hz : float
        Measured symbol rate.
    phase_sample : float
        A fractional capture sample at which a symbol begins.
    line_snr : float
        Power of the symbol-rate line over the mean of the nearby spectrum
        (a quality figure: below ~10 the timing is unreliable).
    """

    symbol_rate_hz: float
    phase_sample: float
    line_snr: float


def _block_sums(y: np.ndarray) -> np.ndarray:
    """Row sums of a (rows, d) array, the same as ``y.sum(axis=1)``.

    For ``4 <= d <= 16`` the rows are summed with four interleaved running
    sums over whole columns, combined as ``(a0 + a1) + (a2 + a3)``: the order
    numpy's pairwise summation uses within such a short row, vectorised over
    the rows instead of one short reduction per row (which numpy runs with a
    per-row call overhead several times the arithmetic).
    """
    d = y.shape[1]
    if not (4 <= d <= 16 and d % 4 == 0):
        return y.sum(axis=1)
    acc = [y[:, j].copy() for j in range(4)]
    for i in range(4, d, 4):
        for j in range(4):
            acc[j] += y[:, i + j]
    return (acc[0] + acc[1]) + (acc[2] + acc[3])


def narrow_spectrum(v: np.ndarray, sample_rate_hz: float, centre_hz: float, half_width_hz: float,
                    step_hz: float) -> tuple[np.ndarray, np.ndarray]:
    """The DTFT ``V(f) = sum_n v[n] exp(-j 2 pi f n / fs)`` on a fine grid over a narrow band.

    ``v`` is mixed down by ``centre_hz`` and summed in blocks of ``D`` samples,
    with ``D`` the largest power of two for which the band's edge turns by at
    most 1/100 cycle across a block; one FFT of the block sums, zero-padded to
    a spacing of at most ``step_hz``, then gives the spectrum.  Each block sum
    stands for its samples at the block's centre: content of ``v`` inside the
    band is reproduced to within 2e-4 relative (the second-order term of the
    phase across a block), and content elsewhere leaks in through the block
    sum's response by at most about 2% of its amplitude at the band's edges
    (nothing at the centre) -- ample for locating a line and for a median
    noise level.  The cost is one complex multiply per sample plus an FFT of
    about ``fs / (D step)`` points, instead of a chirp-z transform of the
    whole input.

    Parameters
    ----------
    v : numpy.ndarray
        Real or complex samples.
    sample_rate_hz : float
        Sample rate.
    centre_hz, half_width_hz : float
        Band evaluated: ``centre +- half_width``.
    step_hz : float
        Largest grid spacing wanted.

    Returns
    -------
    freqs : numpy.ndarray
        Grid frequencies (Hz), increasing, covering the band.
    spectrum : numpy.ndarray
        Complex ``V(f)`` on the grid.
    """
    fs = float(sample_rate_hz)
    d = _block_length(fs, half_width_hz, len(v))
    blocks = _mixed_blocks(v, fs, centre_hz, d)
    return _blocks_spectrum(blocks, fs, centre_hz, half_width_hz, step_hz)


def _block_length(fs: float, half_width_hz: float, n: int) -> int:
    """:func:`narrow_spectrum`'s block: the band's edge turns by at most 1/100 cycle across it."""
    d = int(2 ** np.floor(np.log2(max(1.0, 0.01 * fs / max(half_width_hz, 1e-300)))))
    return int(max(1, min(d, n // 8)))


@dataclass(frozen=True)
class _Blocks:
    """``v`` mixed down and summed in blocks of ``d`` (see :func:`narrow_spectrum`)."""

    sums: np.ndarray          # one per whole block; block b stands at its centre b d + (d - 1) / 2
    d: int
    rest: complex | None      # the short last block's sum, standing at t_rest
    t_rest: float


def _mixed_blocks(v: np.ndarray, fs: float, centre_hz: float, d: int) -> _Blocks:
    n = len(v)
    nb = n // d
    osc = oscillator(centre_hz, fs, 0, n)
    y = v[:nb * d] * osc[:nb * d]
    sums = _block_sums(y.reshape(nb, d))
    if nb * d < n:            # the short last block stands at its own centre, one block's phase ahead
        return _Blocks(sums, d, complex(np.sum(v[nb * d:] * osc[nb * d:])), nb * d + 0.5 * (n - nb * d - 1))
    return _Blocks(sums, d, None, 0.0)


def _shifted_blocks(b: _Blocks, fs: float, shift_hz: float) -> _Blocks:
    """The block sums as if mixed ``shift_hz`` further down (one turn per block, at its centre)."""
    t = np.arange(len(b.sums)) * b.d + 0.5 * (b.d - 1)
    rest = None if b.rest is None else b.rest * complex(np.exp(-2j * np.pi * shift_hz * b.t_rest / fs))
    return _Blocks(b.sums * np.exp(-2j * np.pi * shift_hz * t / fs), b.d, rest, b.t_rest)


def _blocks_spectrum(b: _Blocks, fs: float, centre_hz: float, half_width_hz: float,
                     step_hz: float) -> tuple[np.ndarray, np.ndarray]:
    from scipy.fft import fft, next_fast_len

    d, nb = b.d, len(b.sums)
    nfft = int(np.ceil(fs / (d * step_hz)))
    nfft = next_fast_len(max(nfft, 2 * nb + 2))
    spec = fft(b.sums, n=nfft)
    df = fs / (d * nfft)
    k_half = int(np.ceil(half_width_hz / df))
    k = np.arange(-k_half, k_half + 1)
    off = k * df
    out = spec[k % nfft] * np.exp(-2j * np.pi * off * 0.5 * (d - 1) / fs)   # block centres at b d + (d-1)/2
    if b.rest is not None:
        out = out + b.rest * np.exp(-2j * np.pi * off * b.t_rest / fs)
    return centre_hz + off, out


def _line_search(v: np.ndarray, sample_rate_hz: float, lo: float, hi: float) -> tuple[float, float, float]:
    """The strongest line of ``v`` in ``[lo, hi]``: frequency, power and quality.

    The frequency is found on a grid of 1/8 resolution cell with a
    three-point parabola on the power.  The quality is the line's power over
    the median spectrum 8 to 64 cells to either side of it, from the same
    block sums turned to the line (:func:`narrow_spectrum` with blocks set
    by the search band: at 64 cells the turn across a block is a few
    hundredths of a cycle, which moves a median level by well under 1%).
    """
    fs = float(sample_rate_hz)
    res = fs / max(len(v), 1)
    centre, half = 0.5 * (lo + hi), 0.5 * (hi - lo)
    blocks = _mixed_blocks(v, fs, centre, _block_length(fs, half, len(v)))
    f, spec = _blocks_spectrum(blocks, fs, centre, half, res / 8)
    pw = np.abs(spec) ** 2
    i = int(np.argmax(pw))
    rate = float(f[0] + _parabolic_peak(pw, i) * (f[1] - f[0]))
    peak = float(pw[i])
    f2, spec2 = _blocks_spectrum(_shifted_blocks(blocks, fs, rate - centre), fs, rate, 64 * res, 0.5 * res)
    ref = np.median(np.abs(spec2[np.abs(f2 - rate) / res >= 8]) ** 2)
    return rate, peak, float(peak / max(ref, 1e-300))


def estimate_symbol_timing(x: np.ndarray, x_start: int, sample_rate_hz: float, tones_hz,
                           rate_hint_hz: float, search_ppm: float = 3000.0,
                           energy: EnergyTrace | None = None) -> TimingEstimate:
    """Symbol rate near ``rate_hint_hz`` and timing from the spectral line of ``e[n]``.

    Parameters
    ----------
    x : numpy.ndarray
        Complex samples of the burst; ``x[0]`` is capture sample ``x_start``.
    x_start : int
        Capture index of ``x[0]``.
    sample_rate_hz : float
        Sample rate.
    tones_hz : (float, float)
        Tone estimates for the correlators.
    rate_hint_hz : float
        Nominal symbol rate.
    search_ppm : float
        Half-width of the rate search.
    energy : EnergyTrace, optional
        Window energies already computed on these samples with these tones
        (used when its window is ``floor(fs / rate_hint_hz)`` and it covers
        ``x``).

    Returns
    -------
    TimingEstimate

    References
    ----------
    Oerder & Meyr (1988), square-law timing recovery (from memory).
    """
    window = int(np.floor(sample_rate_hz / rate_hint_hz))
    e = None
    if energy is not None and energy.window == window:
        e = energy.between(x_start, x_start + max(len(x) - window + 1, 0))
    if e is None:
        e = energy_trace(x, x_start, window, tones_hz, sample_rate_hz).values
    e = e - e.mean()
    n_e = len(e)
    lo = rate_hint_hz * (1 - search_ppm * 1e-6)
    hi = rate_hint_hz * (1 + search_ppm * 1e-6)
    rate, peak, quality = _line_search(e, sample_rate_hz, lo, hi)
    c = np.dot(e, oscillator(rate, sample_rate_hz, 0, n_e))
    sps = sample_rate_hz / rate
    # e[n] is flat-topped over [t_k, t_k + sps - L]; its centre is the line's phase.
    centre = (-np.angle(c) / (2 * np.pi)) * sps
    # Hard keying sampled at integer instants cannot tell apart starts within
    # one sample: the aligned window starts at ceil(t_k); report the middle of
    # that interval, ceil(t_k) - 1/2 (error uniform within +-1/2 sample).
    phase = x_start + centre - 0.5 * (sps - window) - 0.5
    return TimingEstimate(float(rate), float(phase), quality)


def grid_for_span(phase_sample: float, symbol_rate_hz: float, sample_rate_hz: float,
                  lo_sample: float, hi_sample: float) -> SymbolGrid:
    """The symbol grid through ``phase_sample`` covering [lo_sample, hi_sample)."""
    sps = sample_rate_hz / symbol_rate_hz
    k0 = int(np.ceil((lo_sample - phase_sample) / sps))
    first = phase_sample + k0 * sps
    n = int(np.floor((hi_sample - first) / sps))
    return symbol_grid(first, sps, max(n, 0))


def line_fit(x: np.ndarray, y: np.ndarray) -> tuple[float, float]:
    """Least-squares line ``y ~ slope x + intercept`` (as ``numpy.polyfit(x, y, 1)``), in closed form."""
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    xm, ym = float(np.mean(x)), float(np.mean(y))
    dx = x - xm
    sxx = float(np.dot(dx, dx))
    slope = float(np.dot(dx, y - ym)) / sxx if sxx > 0 else 0.0
    return slope, ym - slope * xm


def refine_timing(x: np.ndarray, x_start: int, grid: SymbolGrid, tones_hz, sample_rate_hz: float,
                  blocks: int = 4, span: float | None = None, step: float | None = None,
                  energy: EnergyTrace | None = None, metric: str = "energy") -> SymbolGrid:
    """Refine the symbol grid by maximising the correlator energy block by block.

    The spectral-line estimate of :func:`estimate_symbol_timing` leaves a
    timing error of a fraction of a sample, and its rate error makes the
    timing drift across a long burst.  Here the grid is shifted by ``delta``
    samples (``-span .. span`` in ``step``; by default a quarter of a symbol
    or 1.5 samples, whichever is more), the total energy
    ``sum |z0|^2 + |z1|^2`` of each of ``blocks`` consecutive parts of the
    burst is computed for every shift, the best shift of each part is taken
    as the centre of its plateau (hard keying sampled at integer instants is
    flat over one sample), and a straight line through the parts' best shifts
    corrects both the start and the symbol period.  This maximises the
    noncoherent receiver's own metric (the low-SNR form of its likelihood).

    ``energy``, when given (made with ``grid.window`` and these tones), supplies
    the window energies instead of a new correlation (``metric="energy"`` only).
    ``metric="contrast"`` maximises ``sum ||z1|^2 - |z0|^2|`` instead (see
    :func:`branches.window_energy`): the sharper metric for continuous-phase
    keying, where a window that straddles a boundary still collects nearly the
    whole energy but leaks part of it into the other branch.

    Returns
    -------
    SymbolGrid
        The refined grid (same symbol count); the input grid if the samples do
        not cover the shifted grids.
    """
    n = grid.n_symbols
    if n < 4 * blocks:
        blocks = max(1, n // 4)
    span, step = _search_span(grid, span, step)
    got = _block_best_shifts(x, x_start, grid, tones_hz, sample_rate_hz, blocks, span, step, energy, metric)
    if got is None:
        return grid
    centres, best = got
    if blocks >= 2:
        slope, icpt = line_fit(centres, best)
    else:
        slope, icpt = 0.0, best[0]
    return symbol_grid(grid.first_start + icpt, grid.samples_per_symbol + slope, n)


def _search_span(grid: SymbolGrid, span: float | None, step: float | None) -> tuple[float, float]:
    """Reach and step (samples) of the timing search around a grid (defaults of :func:`refine_timing`)."""
    if span is None:
        # continuous-phase keying gives the spectral line a weaker hold on the
        # timing: search a quarter of a symbol, at least 1.5 samples
        span = max(1.5, 0.25 * grid.samples_per_symbol)
    if step is None:
        step = max(0.125, span / 24)
    return span, step


def _block_best_shifts(x: np.ndarray, x_start: int, grid: SymbolGrid, tones_hz, sample_rate_hz: float,
                       blocks: int, span: float, step: float, energy: EnergyTrace | None,
                       metric: str) -> tuple[np.ndarray, np.ndarray] | None:
    """Best shift (samples) of each of ``blocks`` consecutive parts of the grid, and the parts' centres
    (symbol index); None when the samples do not cover the shifted grids.

    Each part's best shift is the centre of the plateau of its summed metric
    over the shifts ``-span .. span`` in ``step`` (see :func:`refine_timing`).
    """
    n = grid.n_symbols
    deltas = np.arange(-span, span + step / 2, step)
    edges = np.linspace(0, n, blocks + 1).astype(int)
    # first sample of every symbol of every shifted grid (as SymbolGrid.first_samples)
    firsts = np.ceil(grid.starts[None, :] + deltas[:, None] - 1e-9).astype(np.int64)
    lo, hi = int(firsts.min()), int(firsts.max()) + 1
    if lo < x_start or hi - 1 + grid.window > x_start + len(x):
        return None
    # the energy of a window at every start sample, once; each shifted grid picks its symbols
    e_all = None
    if metric == "energy" and energy is not None and energy.window == grid.window:
        e_all = energy.between(lo, hi)
    if e_all is None:
        e_all = window_energy(x, x_start, lo, hi, grid.window, tones_hz, sample_rate_hz, metric)
    block_energy = np.add.reduceat(e_all[firsts - lo], edges[:-1], axis=1)
    best = np.empty(blocks)
    for b in range(blocks):
        col = block_energy[:, b]
        i = int(np.argmax(col))
        tol = 1e-9 * abs(col[i])
        lo = i
        while lo > 0 and col[lo - 1] >= col[i] - tol:
            lo -= 1
        hi = i
        while hi < len(col) - 1 and col[hi + 1] >= col[i] - tol:
            hi += 1
        best[b] = 0.5 * (deltas[lo] + deltas[hi])
    return 0.5 * (edges[:-1] + edges[1:] - 1), best


def tone_difference(x: np.ndarray, sample_rate_hz: float, tones_hz, m: int) -> np.ndarray:
    """``d[n] = |S1(n)|^2 - |S0(n)|^2`` over windows of ``m`` samples (see branches.sliding_sums)."""
    s = sliding_sums(x, tones_hz, sample_rate_hz, m)
    p = s.real ** 2 + s.imag ** 2
    return p[1] - p[0]


def tone_transitions(x: np.ndarray, sample_rate_hz: float, tones_hz) -> tuple[np.ndarray, int]:
    """Sample indices (relative to ``x``) where the sent tone changes, and the window used.

    With tones ``f0, f1`` and a window of ``m = fs / (2 (f1 - f0))`` samples
    (half the time the two tones take to separate, so at most about half a
    symbol for the usual spacings), ``d[n] = |S1(n)|^2 - |S0(n)|^2`` is a
    noisy two-level waveform.  A hysteresis slicer (thresholds at 0.6 of the
    median ``|d|``) with a dead time of ``m`` gives the instants of change.
    The returned index is that of the first window past the threshold; the
    boundary itself lies about ``m/2`` samples later.
    """
    spacing = abs(float(tones_hz[1]) - float(tones_hz[0]))
    if spacing <= 0:
        return np.empty(0, np.int64), 1
    m = int(max(1, round(0.5 * sample_rate_hz / spacing)))
    if len(x) < 16 * m:
        return np.empty(0, np.int64), m
    d = tone_difference(x, sample_rate_hz, tones_hz, m)
    h = 0.6 * np.median(np.abs(d))
    state = np.where(d > h, 1, np.where(d < -h, -1, 0))
    nz = np.flatnonzero(state)
    if nz.size < 4:
        return np.empty(0, np.int64), m
    filled = state[nz][np.maximum(np.searchsorted(nz, np.arange(len(d)), side="right") - 1, 0)]
    trans = np.flatnonzero(np.diff(filled) != 0) + 1
    if trans.size:
        keep = np.concatenate(([True], np.diff(trans) >= m))
        trans = trans[keep]
    return trans, m


def transition_line_timing(x: np.ndarray, x_start: int, sample_rate_hz: float, tones_hz,
                           rate_hint_hz: float, search_ppm: float = 3000.0,
                           transitions: tuple[np.ndarray, int] | None = None) -> TimingEstimate | None:
    """Symbol rate near the hint and timing from the tone-transition impulse train.

    The counterpart of :func:`estimate_symbol_timing` for continuous-phase
    keying, whose whole-symbol energy line is weak: the line of the
    transition instants (see :func:`tone_transitions`) near the hint gives the
    rate, and its phase the timing (corrected for the slicer's lag of about
    0.3 window past the mid-point).
    """
    trans, m = transitions if transitions is not None else tone_transitions(x, sample_rate_hz, tones_hz)
    if trans.size < 8:
        return None
    lo = rate_hint_hz * (1 - search_ppm * 1e-6)
    hi = rate_hint_hz * (1 + search_ppm * 1e-6)
    length = len(x) - m + 1
    imp = np.zeros(length)
    imp[trans] = 1.0
    imp -= imp.mean()
    rate, peak, quality = _line_search(imp, sample_rate_hz, lo, hi)
    c = np.sum(np.exp(-2j * np.pi * rate * trans / sample_rate_hz))
    sps = sample_rate_hz / rate
    centre = (-np.angle(c) / (2 * np.pi)) * sps            # where the slicer fires, mod sps
    # window [n, n+m) balanced at n = ceil(t) - m/2; the slicer fires ~0.3 m later
    phase = x_start + centre + m / 2 - 0.3 * m - 0.5
    return TimingEstimate(float(rate), float(phase), quality)


def symbol_timing(x: np.ndarray, x_start: int, sample_rate_hz: float, tones_hz, rate_hint_hz: float,
                  search_ppm: float = 3000.0, energy: EnergyTrace | None = None,
                  transitions: tuple[np.ndarray, int] | None = None) -> TimingEstimate:
    """Rate and timing: the energy line, or the transition line when the energy line is weak.

    The whole-symbol energy line (:func:`estimate_symbol_timing`) is the
    sharper one for phase-discontinuous keying; for continuous-phase keying it
    can be weak (quality below 20) and the transition line
    (:func:`transition_line_timing`) takes over when it is stronger.
    ``energy`` is passed on to :func:`estimate_symbol_timing` and
    ``transitions`` (from :func:`tone_transitions` on the same samples) to
    :func:`transition_line_timing`: callers trying many rates on one stretch
    compute them once.
    """
    tm = estimate_symbol_timing(x, x_start, sample_rate_hz, tones_hz, rate_hint_hz, search_ppm, energy)
    if tm.line_snr >= 20:
        return tm
    alt = transition_line_timing(x, x_start, sample_rate_hz, tones_hz, rate_hint_hz, search_ppm, transitions)
    if alt is not None and alt.line_snr > tm.line_snr:
        return alt
    return tm


def _row_medians(v: np.ndarray) -> np.ndarray:
    """``numpy.median(v, axis=1, keepdims=True)`` for finite ``v``, the same numbers: the middle
    element (or the mean of the two middle ones) after one partition of each row, without
    the general median's checks and copies (several times faster for short rows)."""
    w = v.shape[1]
    k = w // 2
    if w % 2:
        return np.partition(v, k, axis=1)[:, k:k + 1]
    p = np.partition(v, (k - 1, k), axis=1)
    return (p[:, k - 1:k] + p[:, k:k + 1]) / 2


#: Fewest changes of tone for :func:`grid_fit` to judge a burst's timing.
GRID_FIT_MIN_CHANGES = 24


def grid_fit(tone_index: np.ndarray, d: np.ndarray, first_d: int, grid: SymbolGrid) -> tuple[float, float]:
    """How well a burst's changes of tone fit one regular symbol grid.

    Parameters
    ----------
    tone_index : numpy.ndarray
        Decided tone per symbol on ``grid``.
    d : numpy.ndarray
        ``|S1|^2 - |S0|^2`` over half-symbol windows (:func:`tone_difference`)
        of the burst's samples; ``d[j]`` is the window starting at capture
        sample ``first_d + j``.
    first_d : int
        Capture index of ``d[0]``.
    grid : SymbolGrid

    Returns
    -------
    (off_grid, even_runs) : (float, float)
        ``off_grid``: share of the changes of tone whose sign change in ``d``
        lies near half a symbol (3/8 or more) from the grid's boundary (a few
        per cent when every change falls on the grid, at 10 dB or more;
        start-stop characters with 1.5 stop bits shift every character after
        the first by half a symbol).  ``even_runs``: share of the runs of one tone that last an
        even number of symbols (about a half for random data; near 1 when the
        grid runs at twice the true rate).  ``nan`` with too few changes.
    """
    b = np.asarray(tone_index).astype(np.int64)
    k = np.flatnonzero(b[1:] != b[:-1]) + 1
    if k.size < GRID_FIT_MIN_CHANGES:
        return float("nan"), float("nan")
    runs = np.diff(np.concatenate(([0], k, [len(b)])))[1:-1]
    even = float(np.mean(runs % 2 == 0)) if runs.size else float("nan")
    sps = grid.samples_per_symbol
    half = int(max(1, round(sps / 2)))
    # the half-symbol window straddling boundary t_k changes sign when centred on it
    centre = grid.starts[k] - half / 2 - first_d
    lo = np.floor(centre - sps / 2).astype(np.int64)
    ok = (lo >= 0) & (lo + int(np.ceil(sps)) + 1 < len(d))
    if np.count_nonzero(ok) < GRID_FIT_MIN_CHANGES:
        return float("nan"), even
    lo, centre, kk = lo[ok], centre[ok], k[ok]
    idx = lo[:, None] + np.arange(int(np.ceil(sps)) + 1)[None, :]
    v = d[idx] * np.where(b[kk] == 1, 1.0, -1.0)[:, None]     # rising at the change
    # least-squares change point: the minimum of the prefix sum of the oriented difference
    pos = lo + np.argmin(np.cumsum(v - _row_medians(v), axis=1), axis=1) + 0.5
    off = np.abs(pos - centre)
    return float(np.mean(off >= 0.375 * sps)), even
