"""Acquisition: where the bursts are, and each burst's tones, symbol rate and timing.

The search between bursts runs on a cheap decimated trace of the power inside
the signal band; the heavy estimates run only on the samples of each burst.

Estimators
----------
Tones
    The averaged periodogram of the burst with a rectangular window one symbol
    long (Bartlett's method) has a lobe of width ~R_s at each tone; its peak
    near each hint is the first estimate.  Once symbols are decided, each tone
    is re-estimated from the symbols that carried it only (so the other tone's
    lobe cannot pull it), as the peak of the sum of their zero-padded
    periodograms -- the noncoherent maximum-likelihood frequency estimate for
    a tone of unknown phase per symbol.
Symbol rate and timing
    The total correlator energy ``e[n] = |z0(n)|^2 + |z1(n)|^2`` of a window of
    one symbol starting at sample n is periodic at the symbol rate and peaks
    where the window lines up with a symbol.  The frequency of its spectral line
    near R_s gives the symbol rate; the phase of that line gives the timing,
    as in square-law timing recovery.
Burst edges
    The coarse edges from the power trace are refined to whole symbols on the
    symbol grid by the maximum-sum run of symbol energies above the midpoint
    between the noise and signal levels (a CUSUM change-point rule).

References
----------
.. [1] M. Oerder and H. Meyr, "Digital filter and square timing recovery,"
   IEEE Trans. Commun., vol. 36, no. 5, pp. 605-612, 1988 (from memory).
.. [2] D. C. Rife and R. R. Boorstyn, "Single-tone parameter estimation from
   discrete-time observations," IEEE Trans. Inf. Theory, vol. 20, no. 5,
   pp. 591-598, 1974 (from memory).
.. [3] E. S. Page, "Continuous inspection schemes," Biometrika, vol. 41,
   pp. 100-115, 1954 (from memory).
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np
from ..branches import EnergyTrace, SymbolGrid, energy_trace, oscillator, sliding_sums, symbol_grid, window_energy

__all__ = [
    "PowerTrace", "TraceFrames", "BurstSpan", "band_power_frames", "find_bursts", "quiet_floor",
    "estimate_symbol_timing", "trim_to_burst", "tone_difference", "grid_fit", "peak_tone_pairs", "refine_tones", "steady_symbols", "transition_deficit",
    "segment_symbols",
]


# --------------------------------------------------------------------------- power trace
@dataclass(frozen=True)
class PowerTrace:
    """Band power of consecutive frames of a capture.

    Attributes
    ----------
    power : numpy.ndarray
        Mean in-band power per frame (sample units).
    noise_density : numpy.ndarray
        Median power per FFT bin outside the band (guarded), per frame, scaled
        to the in-band sum: the in-band power a noise-only frame would have if
        the noise is white.  NaN where no out-of-band bins exist.
    frame : int
        Frame length in samples (also the hop).
    bins : int
        Number of FFT bins summed per frame (sets the trace's noise spread).
    band_hz : tuple of float
        Band summed (low, high) in Hz.
    """

    power: np.ndarray
    noise_density: np.ndarray
    frame: int
    bins: int
    band_hz: tuple[float, float]


def frame_length(sample_rate_hz: float, symbol_rate_hz: float) -> int:
    """Power-trace frame: a power of two of at least two symbols (bins <= R_s/2)."""
    sps = sample_rate_hz / symbol_rate_hz
    return int(2 ** np.ceil(np.log2(max(8.0, 2.0 * sps))))


#: The out-of-band bins of a trace frame are split into at most this many
#: groups of neighbouring bins; the noise estimate is the median of the
#: groups' mean powers, so an interferer in a few groups does not lift it.
NOISE_GROUPS = 8


def _runs(bins: np.ndarray) -> list[tuple[int, int]]:
    """Contiguous runs ``(first, stop)`` of the sorted bin indices ``bins``."""
    bins = np.asarray(bins, np.intp)
    if bins.size == 0:
        return []
    cut = np.flatnonzero(np.diff(bins) != 1) + 1
    return [(int(r[0]), int(r[-1]) + 1) for r in np.split(bins, cut)]


def _row_sum(s: np.ndarray, runs: list[tuple[int, int]]) -> np.ndarray:
    """Sum of the rows ``s[a:b]`` over the runs, column by column (in row order, so the
    same column gives the same sum wherever it lies in ``s``)."""
    out = np.add.reduce(s[runs[0][0]:runs[0][1]], axis=0)
    for a, b in runs[1:]:
        out = out + np.add.reduce(s[a:b], axis=0)
    return out


def _sorted_rows(m: np.ndarray) -> np.ndarray:
    """``numpy.sort(m, axis=0)`` for a few rows: odd-even transposition (compare and
    exchange neighbouring rows, as many rounds as rows), one array operation per exchange."""
    rows = [r for r in m]
    g = len(rows)
    for rnd in range(g):
        for i in range(rnd % 2, g - 1, 2):
            lo = np.minimum(rows[i], rows[i + 1])
            rows[i + 1] = np.maximum(rows[i], rows[i + 1])
            rows[i] = lo
    return np.array(rows)


@dataclass(frozen=True)
class TraceFrames:
    """What :func:`band_power_frames` gives per whole frame.

    Attributes
    ----------
    power : numpy.ndarray
        Mean power per frame of the in-band part of the signal.
    noise : numpy.ndarray
        The in-band power a noise-only frame would have if the noise is
        white (see :func:`band_power_frames`); NaN with fewer than four
        out-of-band bins.
    dc_bin : numpy.ndarray
        The complex DFT of each frame at 0 Hz (the sum of its samples), so
        that a DC offset known only later can be removed from ``power``
        exactly (:func:`remove_dc`).
    energy : numpy.ndarray
        ``sum |x|^2`` over each frame (Parseval: the sum of all bin powers
        over the frame length).
    """

    power: np.ndarray
    noise: np.ndarray
    dc_bin: np.ndarray
    energy: np.ndarray


def _band_masks(sample_rate_hz: float, band_hz, frame: int, noise_bands_hz):
    freqs = np.fft.fftfreq(frame, 1.0 / sample_rate_hz)
    inband = (freqs >= band_hz[0]) & (freqs <= band_hz[1])
    noise = np.zeros(frame, bool)
    for lo, hi in noise_bands_hz:
        noise |= (freqs >= lo) & (freqs <= hi)
    noise[0] = False          # the DC bin: a DC offset is not noise (and is removed only later)
    return inband, noise & ~inband


@functools.lru_cache(maxsize=32)
def _trace_layout(sample_rate_hz: float, band_hz: tuple, frame: int, noise_bands_hz: tuple):
    """Bins :func:`band_power_frames` sums, worked out once per band and frame.

    Returns the in-band runs and bin count, the runs and sizes of the noise
    groups, and the factor from the groups' median mean bin power to the
    in-band noise power per frame (a mean of ``k`` exponential bins is
    Gamma(k, 1/k): its median is ``gammaincinv(k, 1/2) / k`` of the mean).
    """
    from scipy.special import gammaincinv

    inband, noise = _band_masks(sample_rate_hz, band_hz, frame, noise_bands_hz)
    n_in = int(np.count_nonzero(inband))
    n_noise = int(np.count_nonzero(noise))
    groups = np.array_split(np.flatnonzero(noise), int(min(NOISE_GROUPS, n_noise // 4))) if n_noise >= 4 else []
    to_mean = 0.0
    if groups:
        k = n_noise / len(groups)
        to_mean = float((k / gammaincinv(k, 0.5)) * n_in / frame**2)
    return (_runs(np.flatnonzero(inband)), n_in, [_runs(g) for g in groups], [int(g.size) for g in groups],
            to_mean)


def band_power_frames(x: np.ndarray, sample_rate_hz: float, band_hz: tuple[float, float],
                      frame: int, noise_bands_hz=()) -> TraceFrames:
    """In-band power, the out-of-band noise estimate, the DC bin and the energy of each whole frame of ``x``.

    Parameters
    ----------
    x : numpy.ndarray
        Complex samples (a block of the capture; any remainder after the last
        whole frame is ignored).
    sample_rate_hz : float
        Sample rate.
    band_hz : (float, float)
        Band to sum, Hz (baseband, may be negative).
    frame : int
        Frame length.
    noise_bands_hz : sequence of (float, float)
        Where noise alone is expected (outside ``band_hz``); empty for none.

    Returns
    -------
    TraceFrames
        The noise estimate: the out-of-band bins (the DC bin excluded) are
        split into up to :data:`NOISE_GROUPS` groups of neighbours, and the
        median of the groups' mean bin powers, corrected from median to mean
        (a mean of ``k`` bins of complex Gaussian noise is Gamma(k, 1/k),
        whose median is ``gammaincinv(k, 1/2) / k``; ln 2 for one bin), is
        scaled to the in-band bin count.

    Notes
    -----
    The frames are transformed bin-major (one row per DFT bin, one column
    per frame), so that every sum over bins is a sum of whole rows: each
    frame's figures are formed in the same order wherever the frame lies in
    the block.
    """
    from scipy.fft import fft

    n_frames = len(x) // frame
    if n_frames == 0:
        return TraceFrames(np.empty(0), np.empty(0), np.empty(0, complex), np.empty(0))
    y = fft(np.asarray(x[:n_frames * frame]).reshape(n_frames, frame).T, axis=0)     # (bins, frames)
    s = y.real ** 2 + y.imag ** 2
    in_runs, n_in, group_runs, group_sizes, to_mean = _trace_layout(
        float(sample_rate_hz), tuple(float(v) for v in band_hz), int(frame),
        tuple((float(lo), float(hi)) for lo, hi in noise_bands_hz))
    power = _row_sum(s, in_runs).astype(np.float64) / frame**2 if n_in else np.zeros(n_frames)
    energy = np.add.reduce(s, axis=0).astype(np.float64) / frame
    if group_runs:
        means = _sorted_rows(np.array([_row_sum(s, r).astype(np.float64) / k
                                       for r, k in zip(group_runs, group_sizes)]))
        g = len(group_runs)
        nd = 0.5 * (means[(g - 1) // 2] + means[g // 2]) * to_mean
    else:
        nd = np.full(n_frames, np.nan)
    return TraceFrames(power, nd, y[0].astype(np.complex128), energy)


def remove_dc(power: np.ndarray, dc_bin: np.ndarray, dc: complex, sample_rate_hz: float,
              band_hz: tuple[float, float], frame: int) -> np.ndarray:
    """The in-band power of :func:`band_power_frames` had ``dc`` been subtracted from every sample.

    A constant ``d`` adds ``d * frame`` to a rectangular frame's DFT at 0 Hz
    and nothing elsewhere, so only frames whose band holds 0 Hz change, by
    ``(|X0 - D|^2 - |X0|^2) / frame^2 = (|D|^2 - 2 Re(X0 conj(D))) / frame^2``
    with ``D = d frame`` (the second form has no difference of large squares,
    and needs no complex temporaries on a trace of millions of frames).
    """
    inband, _ = _band_masks(sample_rate_hz, band_hz, frame, ())
    if dc == 0 or not inband[0] or len(power) == 0:
        return power
    x0 = np.asarray(dc_bin)
    d = complex(dc) * frame
    out = np.multiply(x0.real, -2.0 * d.real / frame**2, dtype=np.float64)
    out += x0.imag * (-2.0 * d.imag / frame**2)
    out += abs(d) ** 2 / frame**2
    out += power
    return out


def band_bins(sample_rate_hz: float, band_hz: tuple[float, float], frame: int) -> int:
    """Number of FFT bins :func:`band_power_frames` sums."""
    return int(np.count_nonzero(_band_masks(sample_rate_hz, band_hz, frame, ())[0]))


@dataclass(frozen=True)
class BurstSpan:
    """A coarse burst found in the power trace (capture samples, stop exclusive)."""

    start: int
    stop: int
    power: float          # mean in-band power over the span
    floor: float          # noise floor (in-band power per frame) used


def doubling_means(p: np.ndarray, k_top: int):
    """Yield ``(k, numpy.convolve(p, ones(k) / k, mode="same"))`` for ``k = 1, 2, 4, .. k_top``.

    The sums over ``2k`` samples are two sums over ``k`` (one addition per
    sample and length, none of a running sum's cancellation); ``k`` above
    ``len(p)`` is clipped to it, as the burst search needs.
    """
    p = np.asarray(p, float)
    n = p.size
    run = np.concatenate((np.zeros(k_top), p, np.zeros(k_top)))
    k = 1
    while k <= k_top:
        if k <= n:
            off = k_top + (k - 1) // 2 - (k - 1)
            yield k, run[off:off + n] / k
        else:
            yield n, np.convolve(p, np.ones(n) / n, mode="same")
            return
        if k >= k_top or k >= n:
            return
        run = run[:-k] + run[k:]
        k *= 2


def find_bursts(trace: PowerTrace, min_len_samples: float, n_sigma: float = 5.0,
                max_rel_spread: float = 0.08, track: np.ndarray | None = None) -> tuple[list[BurstSpan], float]:
    """Find candidate bursts as runs of frames whose band power stands above the noise floor.

    Parameters
    ----------
    trace : PowerTrace
        In-band power per frame.
    min_len_samples : float
        Shortest run kept (shorter runs are noise spikes).
    n_sigma : float
        Threshold above the floor in standard deviations of the smoothed noise
        trace.  A frame of B bins of complex Gaussian noise is chi-square with
        2B degrees of freedom (relative spread 1/sqrt(B)), 1/sqrt(B k) after a
        k-frame moving average.
    max_rel_spread : float
        The moving average is made long enough that the relative spread of the
        noise trace is at most this (so weak bursts are found), but never
        longer than a quarter of the shortest burst sought.
    track : numpy.ndarray, optional
        The caller's :func:`floor_track` of this trace, when it has one (with
        out-of-band noise; otherwise the floor comes from the trace itself).

    Returns
    -------
    spans : list of BurstSpan
        Coarse spans; neighbouring bursts closer than the smoothing may be
        merged -- the symbol-level segmentation splits them again.
    floor : float
        The noise floor (mean in-band noise power per frame): from the frames
        between the spans found (:func:`quiet_floor`) where there are enough
        of them, else the median of the floor track.
    """
    p = np.asarray(trace.power, dtype=float)
    if p.size == 0:
        return [], 0.0
    b = max(trace.bins, 1)
    k_want = smoothing_frames(b, max_rel_spread)
    # The 20th percentile of noise-only frames sits ~0.84 sd below their mean;
    # it overestimates the floor when bursts fill most of the capture, so the
    # out-of-band estimate (white noise assumed) caps it where available.
    if track is None or len(track) != p.size or not np.all(np.isfinite(track)):
        k_floor = int(min(max(1, k_want), p.size))
        ps = np.convolve(p, np.ones(k_floor) / k_floor, mode="same")
        rel = 1.0 / np.sqrt(b * k_floor)
        track = floor_track(trace, np.percentile(ps, 20) / max(1.0 - 0.84 * rel, 0.5))
    floor = float(np.median(track))
    # Several moving-average lengths: short ones see short strong bursts, long
    # ones see long weak bursts; a run found at length k must last >= k frames.
    min_frames = max(1, int(min_len_samples / trace.frame / 2))
    above = np.zeros(p.size, bool)
    k_top = 1
    while k_top < k_want and k_top < p.size:
        k_top *= 2
    for kk, ps in doubling_means(p, k_top):
        a_k = ps > track * (1.0 + n_sigma / np.sqrt(b * kk))
        edges = np.flatnonzero(np.diff(np.concatenate(([0], a_k.astype(np.int8), [0])))).reshape(-1, 2)
        for a, e in edges:
            if e - a >= max(kk, min_frames):
                above[a:e] = True
    spans: list[BurstSpan] = []
    edges = np.flatnonzero(np.diff(np.concatenate(([0], above.astype(np.int8), [0]))))
    for a, e in edges.reshape(-1, 2):
        start, stop = a * trace.frame, e * trace.frame
        spans.append(BurstSpan(int(start), int(stop), float(np.mean(p[a:e])), float(np.mean(track[a:e]))))
    # the frames between the spans, clear of the longest moving average's reach, read the floor
    # without the lift strong bursts give the out-of-band bins
    quiet = quiet_floor(trace, spans, k_want + 8)
    return spans, float(floor if quiet is None else quiet)


def smoothing_frames(bins: int, max_rel_spread: float = 0.08) -> int:
    """Frames in the longest moving average of :func:`find_bursts`: enough that a trace of
    ``bins`` bins per frame has relative noise spread ``max_rel_spread`` (1/sqrt(bins k))."""
    return int(np.ceil(1.0 / (max_rel_spread**2 * max(int(bins), 1))))


#: Fewest frames between bursts from which :func:`quiet_floor` states the floor.
QUIET_MIN_FRAMES = 32


def quiet_floor(trace: PowerTrace, spans, margin_frames: int) -> float | None:
    """The noise floor from the stretches between bursts: the mean in-band power of the frames
    outside every span (and ``margin_frames`` either side of it).

    A frame of noise alone has expected in-band power equal to the floor, so
    the mean over the quiet frames is unbiased; the out-of-band estimate is
    not, inside bursts: the skirts of the keyed tones (rectangular symbols
    fall off as 1/f^2) and the frame's own spectral leakage lift the
    out-of-band bins while a burst is on.  None when fewer than
    :data:`QUIET_MIN_FRAMES` quiet frames remain (bursts fill the capture).
    """
    p = np.asarray(trace.power, float)
    quiet = np.ones(p.size, bool)
    m = max(int(margin_frames), 0)
    for s in spans:
        quiet[max(0, s.start // trace.frame - m):max(0, -(-s.stop // trace.frame) + m)] = False
    if np.count_nonzero(quiet) < QUIET_MIN_FRAMES:
        return None
    return float(np.mean(p[quiet]))


#: The floor track averages the noise estimate over blocks of this many
#: frames and takes the running median of :data:`FLOOR_TRACK_BLOCKS` blocks.
FLOOR_TRACK_FRAMES = 8
FLOOR_TRACK_BLOCKS = 17


def floor_track(trace: PowerTrace, global_floor: float) -> np.ndarray:
    """The in-band noise floor frame by frame, following a drifting noise level.

    Where out-of-band noise is seen (``trace.noise_density``) it tracks the
    floor, even inside long bursts, whose power stays in band: the estimate is
    averaged over blocks of :data:`FLOOR_TRACK_FRAMES` frames, and the running
    median of :data:`FLOOR_TRACK_BLOCKS` block means (about 136 frames) is the
    floor of every frame of the middle block.  The median ignores the few
    blocks an interferer or a burst's skirt lifts; the block means make it
    cost a small fraction of a running median over single frames.  This
    assumes the noise is white across the band (true of SDR and analyser I/Q
    away from the anti-alias roll-off).  Without out-of-band bins the floor is
    the constant ``global_floor``.
    """
    p = np.asarray(trace.power, float)
    nd = np.asarray(trace.noise_density, float)
    if nd.size != p.size or not np.isfinite(nd).any():
        return np.full(p.size, float(global_floor))
    from scipy.ndimage import median_filter

    ok = np.isfinite(nd) & (nd > 0)
    ndf = nd if ok.all() else np.where(ok, nd, np.nanmedian(nd))
    m = FLOOR_TRACK_FRAMES
    n_full = ndf.size // m
    means = ndf[:n_full * m].reshape(n_full, m).mean(axis=1)
    if n_full * m < ndf.size:
        means = np.append(means, ndf[n_full * m:].mean())
    w = int(min(FLOOR_TRACK_BLOCKS, means.size) | 1)
    return np.repeat(median_filter(means, size=w, mode="nearest"), m)[:ndf.size]


def segment_symbols(energies: np.ndarray, noise_level: float, min_symbols: int = 8,
                    branch_energies: np.ndarray | None = None) -> list[tuple[int, int]]:
    """Split a run of candidate symbols into bursts and refine each burst's edges.

    The moving average is chosen from the contrast between signal and noise
    symbols: long enough that the gap between the two levels is four standard
    deviations of the smoothed signal-symbol energy (4 to 64 symbols).  Each
    run above the midpoint is then trimmed to whole symbols by
    :func:`trim_to_burst`.

    Parameters
    ----------
    energies : numpy.ndarray
        ``|z0|^2 + |z1|^2`` per candidate symbol on one symbol grid.
    noise_level : float
        Expected energy of a noise-only symbol (``2 sigma^2``).
    min_symbols : int
        Shortest burst kept.
    branch_energies : numpy.ndarray, optional
        ``(|z0|^2, |z1|^2)`` per symbol, shape (n, 2): a dip is a gap between
        bursts only if neither branch holds more than noise there (see
        :func:`_noise_like`), so a run of the weaker of two unequal tones
        does not split a burst.

    Returns
    -------
    list of (first, stop)
        Symbol index ranges, one per burst.
    """
    pe = energies if branch_energies is None else np.asarray(branch_energies, float)
    e = np.asarray(energies, dtype=float)
    if e.size == 0:
        return []
    n = float(noise_level)
    g2 = max(float(np.percentile(e, 75)) - n, 1e-12 * max(n, 1e-300))
    for _ in range(3):
        # energy of a signal symbol: |g + n0|^2 + |n1|^2 with E|n|^2 = n/2 per branch
        sd = np.sqrt(2 * g2 * n / 2 + 2 * (n / 2) ** 2)
        k = int(min(np.clip(np.ceil((8 * sd / g2) ** 2), 4, 64), e.size))
        es = np.convolve(e, np.ones(k) / k, mode="same")
        theta = n + 0.5 * g2
        above = es > theta
        if not above.any():
            break
        g2 = max(float(np.mean(e[above])) - n, 1e-12 * max(n, 1e-300))
    theta = n + 0.5 * g2
    above = es > theta
    edges = np.flatnonzero(np.diff(np.concatenate(([0], above.astype(np.int8), [0])))).reshape(-1, 2)
    runs: list[list[int]] = []
    for a, b in edges:
        # runs are joined across a dip that is short or does not look like noise
        # (a run of the weaker tone of an unequal pair, or of shaped transitions)
        if runs and (a - runs[-1][1] < max(k, MIN_GAP_SYMBOLS) or not _noise_like(pe[runs[-1][1]:a], n)):
            runs[-1][1] = b
        else:
            runs.append([int(a), int(b)])
    out = []
    for a, b in runs:
        lo = max(0, a - k)
        hi = min(e.size, b + k)
        # the edge threshold sits halfway up to the lower quartile of the run's
        # energies: with unequal tones half the symbols carry the weaker one
        q = float(np.percentile(e[a:b], 25)) if b > a else n + g2
        f, st = trim_to_burst(e[lo:hi], n, n + min(max(q - n, 0.25 * g2), g2))
        for a2, b2 in _split_at_gaps(e[lo + f:lo + st], n, g2, pe[lo + f:lo + st]):
            if b2 - a2 >= min_symbols:
                out.append((lo + f + a2, lo + f + b2))
    merged: list[tuple[int, int]] = []
    for f, st in sorted(out):
        if merged and f < merged[-1][1]:
            merged[-1] = (merged[-1][0], max(st, merged[-1][1]))
        else:
            merged.append((f, st))
    return merged


def _noise_like(e: np.ndarray, noise_level: float, sigmas: float = 3.3) -> bool:
    """Whether the symbols of a stretch are consistent with noise alone.

    ``e`` holds each symbol's branch energies ``(|z0|^2, |z1|^2)`` (shape
    ``(r, 2)``) or their sums (shape ``(r,)``).  A noise-only branch energy is
    exponential with mean ``noise_level / 2``, so the mean of ``r`` of them
    exceeds ``noise_level / 2 (1 + sigmas / sqrt(r))`` with probability about
    ``Phi(-sigmas)`` (central limit; 3.3 sigmas: 5e-4 for either of the two
    branches).  A run of the weaker of two unequal tones puts its energy on one
    branch, which stands above that whenever the weaker tone can be decided;
    with sums only, the test is on ``noise_level (1 + sigmas / sqrt(2 r))``.
    """
    e = np.asarray(e, float)
    r = e.shape[0]
    if r == 0:
        return True
    if e.ndim == 2:
        return bool(np.max(e.mean(axis=0)) < 0.5 * noise_level * (1.0 + sigmas / np.sqrt(r)))
    return bool(np.mean(e) < noise_level * (1.0 + sigmas / np.sqrt(2.0 * r)))


#: Shortest gap that splits a burst, symbols.  A transmitter keying off and on
#: again takes longer than this; a run of the weaker of two unequal tones
#: (up to 9 symbols in PN9, 11 in PN11) can look like noise at low SNR when
#: it is short, and is not a gap.
MIN_GAP_SYMBOLS = 16


def _split_at_gaps(e: np.ndarray, noise_level: float, g2: float, branch_energies: np.ndarray | None = None,
                   false_rate: float = 0.01) -> list[tuple[int, int]]:
    """Split a burst where a run of symbols all fall below the midpoint energy.

    A burst symbol's energy ``|g + n0|^2 + |n1|^2`` (complex noise of variance
    ``noise_level / 2`` per branch) is, scaled by ``4 / noise_level``, a
    noncentral chi-square with 4 degrees of freedom and noncentrality
    ``4 g^2 / noise_level``; with ``p`` its probability of falling below the
    midpoint, a run of ``r`` such symbols inside a burst of ``N`` happens by
    chance about ``N p^r`` times.  Runs at least as long as the ``r`` that
    makes this ``false_rate`` are taken as gaps between bursts (shorter gaps
    cannot be told from noise at this signal level).
    """
    from scipy.special import chndtr      # the noncentral chi-square CDF (scipy.stats.ncx2.cdf)

    n_sym = e.size
    if n_sym < 3 or g2 <= 0 or noise_level <= 0:
        return [(0, n_sym)]
    theta = noise_level + 0.5 * g2
    p = float(chndtr(4 * theta / noise_level, 4, 4 * g2 / noise_level))
    if not 0 < p < 1:
        return [(0, n_sym)]
    r = int(max(2, np.ceil(np.log(false_rate / n_sym) / np.log(p))))
    low = e < theta
    edges = np.flatnonzero(np.diff(np.concatenate(([0], low.astype(np.int8), [0])))).reshape(-1, 2)
    # a gap must also look like noise on average (a grid that drifts half a
    # symbol off inside a burst lowers the energy to about the midpoint, not to n)
    r = max(r, MIN_GAP_SYMBOLS)
    long_enough = edges[(edges[:, 1] - edges[:, 0] >= r) & (edges[:, 0] > 0) & (edges[:, 1] < n_sym)]
    gaps = [(a, b) for a, b in long_enough
            if np.mean(e[a:b]) < noise_level + 0.2 * g2
            and _noise_like((e if branch_energies is None else branch_energies)[a:b], noise_level)]
    if not gaps:
        return [(0, n_sym)]
    parts, start = [], 0
    for a, b in gaps:
        parts.append((start, int(a)))
        start = int(b)
    parts.append((start, n_sym))
    return parts


# --------------------------------------------------------------------------- tones
def _parabolic_peak(y: np.ndarray, i: int) -> float:
    """Fractional index of the peak of ``y`` near sample ``i`` (three-point parabola)."""
    if i <= 0 or i >= len(y) - 1:
        return float(i)
    a, b, c = y[i - 1], y[i], y[i + 1]
    den = a - 2 * b + c
    if den >= 0:
        return float(i)
    return float(i + 0.5 * (a - c) / den)


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


# --------------------------------------------------------------------------- timing
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


def trim_to_burst(energies: np.ndarray, noise_level: float, signal_level: float | None = None
                  ) -> tuple[int, int]:
    """Symbols that belong to the burst: the maximum-sum run of ``energy - midpoint``.

    Parameters
    ----------
    energies : numpy.ndarray
        ``|z0|^2 + |z1|^2`` per candidate symbol (covering the burst plus a
        margin of noise-only symbols where available).
    noise_level : float
        Expected energy of a noise-only symbol (``2 sigma^2`` for the two
        branches).
    signal_level : float, optional
        Expected energy of a burst symbol (default: median of the upper half).

    Returns
    -------
    (first, stop)
        Index of the first symbol and one past the last.

    References
    ----------
    Page (1954), cumulative-sum change-point detection (from memory).
    """
    e = np.asarray(energies, dtype=float)
    if e.size == 0:
        return 0, 0
    if signal_level is None:
        signal_level = np.median(e[e >= np.percentile(e, 50)]) if e.size > 4 else e.max()
    theta = 0.5 * (noise_level + signal_level)
    prefix = np.concatenate(([0.0], np.cumsum(e - theta)))
    run_min = np.minimum.accumulate(prefix)
    # index of the running minimum for each end point
    is_new_min = prefix <= run_min
    idx = np.where(is_new_min, np.arange(len(prefix)), 0)
    arg_min = np.maximum.accumulate(idx)
    gain = prefix - run_min
    stop = int(np.argmax(gain))
    first = int(arg_min[stop])
    return first, stop


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
    sps = grid.samples_per_symbol
    if span is None:
        # continuous-phase keying gives the spectral line a weaker hold on the
        # timing: search a quarter of a symbol, at least 1.5 samples
        span = max(1.5, 0.25 * sps)
    if step is None:
        step = max(0.125, span / 24)
    deltas = np.arange(-span, span + step / 2, step)
    edges = np.linspace(0, n, blocks + 1).astype(int)
    # first sample of every symbol of every shifted grid (as SymbolGrid.first_samples)
    firsts = np.ceil(grid.starts[None, :] + deltas[:, None] - 1e-9).astype(np.int64)
    lo, hi = int(firsts.min()), int(firsts.max()) + 1
    if lo < x_start or hi - 1 + grid.window > x_start + len(x):
        return grid
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
    centres = 0.5 * (edges[:-1] + edges[1:] - 1)
    if blocks >= 2:
        slope, icpt = line_fit(centres, best)
    else:
        slope, icpt = 0.0, best[0]
    return symbol_grid(grid.first_start + icpt, grid.samples_per_symbol + slope, n)


# --------------------------------------------------------------------------- blind acquisition
SPECTROGRAM_NFFT = 1024
SPECTROGRAM_CELLS = 128


def cell_edges_hz(sample_rate_hz: float, cells: int = SPECTROGRAM_CELLS) -> np.ndarray:
    """Frequency edges (cells + 1) of the spectrogram cells, Hz."""
    return np.linspace(-sample_rate_hz / 2, sample_rate_hz / 2, cells + 1)


def occupied_band(cells_power: np.ndarray, sample_rate_hz: float, positive_only: bool = False,
                  n_sigma: float = 5.0, smooth: int = 4) -> tuple[float, float] | None:
    """The band the bursts occupy, from a spectrogram of the whole capture, without hints.

    Each cell's noise floor is its 20th percentile over time; a cell belongs
    to the signal when, after a ``smooth``-frame moving average, its 97th
    percentile over time stands ``n_sigma`` standard deviations above that
    floor (so bursts filling only a few per cent of the time are found).  The
    band is the contiguous run of such cells around the strongest one
    (gaps of up to 1/16 of the band bridged), widened by one cell on each side.

    Returns
    -------
    (low_hz, high_hz) or None when no cell stands out.
    """
    sg = np.asarray(cells_power, float)
    if sg.shape[0] < 2:
        return None
    n_frames, cells = sg.shape
    k = max(1, min(smooth, n_frames))
    kern = np.ones(k) / k
    sm = np.apply_along_axis(lambda c: np.convolve(c, kern, mode="valid"), 0, sg)
    floor = np.percentile(sm, 20, axis=0)
    edges = cell_edges_hz(sample_rate_hz, cells)
    valid = np.ones(cells, bool)
    if positive_only:
        valid = edges[:-1] >= 0
    if not valid.any():
        return None
    # Floor of each cell: its own 20th percentile over time, but never above the
    # median floor of all cells -- a cell the bursts fill most of the time
    # would otherwise hide behind its own level.  Cells are then compared with
    # each other: signal cells are outliers of the excess distribution.
    global_floor = np.median(floor[valid])
    floor = np.maximum(np.minimum(floor, global_floor), 1e-6 * global_floor + 1e-300)
    # Two views of each cell, each scored against the spread over all cells
    # (robust z-score: median and MAD): the 97th percentile over time sees
    # bursts that fill a few per cent of the capture; the mean over time sees
    # weak bursts that fill most of it.
    def zscore(v):
        med = np.median(v[valid])
        mad = 1.4826 * np.median(np.abs(v[valid] - med))
        return (v - med) / max(mad, 1e-12 * abs(med) + 1e-12)

    z_hi = zscore(np.percentile(sm, 97, axis=0) / floor)
    z_mean = zscore(np.mean(sg, axis=0) / global_floor)
    excess = np.maximum(z_hi, z_mean)
    sig = valid & (excess > 2.0 * n_sigma)
    if not sig.any():
        return None
    # clusters of signal cells (gaps of up to 1/16 of the cells bridged); the
    # band spans every cluster at least a quarter as strong as the strongest
    # (an FSK signal with wide spacing shows two lobes with a gap between)
    gap = max(3, cells // 16)
    idx = np.flatnonzero(sig)
    groups = [[idx[0], idx[0]]]
    for j in idx[1:]:
        if j - groups[-1][1] <= gap:
            groups[-1][1] = j
        else:
            groups.append([j, j])
    strength = [float(np.max(excess[a:b + 1])) for a, b in groups]
    top = max(strength)
    keep = [g for g, st in zip(groups, strength) if st >= 0.25 * top]
    lo = max(min(g[0] for g in keep) - 1, 0)
    hi_i = min(max(g[1] for g in keep) + 1, cells - 1)
    return float(edges[lo]), float(edges[hi_i + 1])


def peak_tone_pairs(x: np.ndarray, sample_rate_hz: float, band_hz: tuple[float, float], n_peaks: int = 4,
                    min_separation_hz: float = 150.0) -> list[tuple[float, float]]:
    """Candidate tone pairs from the strongest peaks of the mean spectrum within ``band_hz``.

    The periodogram of 1024-sample Hann frames (``scipy.signal.welch``) of the
    analytic samples, smoothed over ``min_separation_hz / 2``; its ``n_peaks``
    strongest local maxima give every pair at least ``min_separation_hz``
    apart, strongest pairs first.  Candidates only: the caller keeps the pair
    whose symbol-rate line stands out most.
    """
    from scipy.signal import welch

    n = int(min(1024, 2 ** np.floor(np.log2(max(len(x), 16)))))
    f, p = welch(x, fs=sample_rate_hz, nperseg=n, return_onesided=False, detrend=False)
    sel = (f >= band_hz[0]) & (f <= band_hz[1])
    f, p = f[sel], p[sel]
    order = np.argsort(f)
    f, p = f[order], p[order]
    if f.size < 5:
        return []
    k = max(1, int(round(0.5 * min_separation_hz / (sample_rate_hz / n) / 2)))
    sm = np.convolve(p, np.ones(2 * k + 1) / (2 * k + 1), mode="same")
    is_max = np.r_[False, (sm[1:-1] >= sm[:-2]) & (sm[1:-1] > sm[2:]), False]
    peaks = np.flatnonzero(is_max)
    peaks = peaks[np.argsort(sm[peaks])[::-1][:n_peaks]]
    pairs = []
    for a in range(len(peaks)):
        for b in range(a + 1, len(peaks)):
            lo, hi = sorted((float(f[peaks[a]]), float(f[peaks[b]])))
            if hi - lo >= min_separation_hz:
                pairs.append((lo, hi))
    return pairs


def band_limit(x: np.ndarray, sample_rate_hz: float, band_hz: tuple[float, float]) -> np.ndarray:
    """Zero everything outside ``band_hz`` (FFT brick-wall filter of the whole segment)."""
    X = np.fft.fft(x)
    f = np.fft.fftfreq(len(x), 1.0 / sample_rate_hz)
    X[(f < band_hz[0]) | (f > band_hz[1])] = 0.0
    return np.fft.ifft(X)


def blind_tones(x: np.ndarray, sample_rate_hz: float, band_hz: tuple[float, float]) -> tuple[float, float]:
    """First estimates of the two tones with no hints: modes of the instantaneous frequency.

    The segment is band-limited to ``band_hz``; the phase increment of a lag
    of ``m`` samples (``m ~ fs / bandwidth``, which is at most half a symbol
    for a band at least two symbol rates wide), averaged over ``m`` samples,
    gives a short-time frequency; its histogram has one mode per tone, even
    when the tones are closer than the symbol rate and their spectral lobes
    merge.  The frequencies are split in two by 1-D two-means, and each
    side's histogram mode is a tone.

    Returns
    -------
    (f0, f1)
        Coarse tones (the decision-directed estimator refines them).
    """
    y = band_limit(x, sample_rate_hz, band_hz)
    bw = max(band_hz[1] - band_hz[0], 1e-9 * sample_rate_hz)
    m = int(max(1, round(sample_rate_hz / bw)))
    prod = y[m:] * np.conj(y[:-m])
    c = np.concatenate(([0.0], np.cumsum(prod)))
    avg = c[m:] - c[:-m]
    weight = np.abs(avg)
    f = np.angle(avg) / (2 * np.pi * m) * sample_rate_hz
    # the lag-m product aliases beyond +-fs/(2m): unwrap around the band centre
    centre = 0.5 * (band_hz[0] + band_hz[1])
    span = sample_rate_hz / m
    f = centre + (f - centre + span / 2) % span - span / 2
    keep = (f >= band_hz[0]) & (f <= band_hz[1])
    f, weight = f[keep], weight[keep]
    if f.size < 16:
        return (band_hz[0] + 0.25 * bw, band_hz[1] - 0.25 * bw)
    w = weight ** 2
    # two-means split of the short-time frequencies (Lloyd iterations in 1-D),
    # then the mode of each side: the mode is not pulled by the samples that
    # straddle a tone change, as a mean would be
    order = np.argsort(f)
    cw = np.cumsum(w[order]) / np.sum(w)
    c0 = f[order][np.searchsorted(cw, 0.25)]
    c1 = f[order][min(np.searchsorted(cw, 0.75), f.size - 1)]
    for _ in range(30):
        thr = 0.5 * (c0 + c1)
        lo_side = f <= thr
        if not lo_side.any() or lo_side.all():
            break
        n0 = np.sum(w[lo_side] * f[lo_side]) / np.sum(w[lo_side])
        n1 = np.sum(w[~lo_side] * f[~lo_side]) / np.sum(w[~lo_side])
        if abs(n0 - c0) + abs(n1 - c1) < 1e-6 * bw:
            c0, c1 = n0, n1
            break
        c0, c1 = n0, n1
    thr = 0.5 * (c0 + c1)
    nb = 256
    hist, edges = np.histogram(f, bins=nb, range=band_hz, weights=w)
    ks = max(1, nb // 64)
    h = np.convolve(hist, np.ones(2 * ks + 1) / (2 * ks + 1), mode="same")
    centres = 0.5 * (edges[:-1] + edges[1:])
    step = centres[1] - centres[0]
    left = np.flatnonzero(centres <= thr)
    right = np.flatnonzero(centres > thr)
    if left.size == 0 or right.size == 0:
        return (float(c0), float(c1))
    i = int(left[np.argmax(h[left])])
    j = int(right[np.argmax(h[right])])
    a = centres[0] + _parabolic_peak(h, i) * step
    b = centres[0] + _parabolic_peak(h, j) * step
    return (float(a), float(b))


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


def _impulse_spectrum(trans: np.ndarray, length: int, sample_rate_hz: float):
    imp = np.zeros(length)
    imp[trans] = 1.0
    imp -= imp.mean()
    nfft = int(2 ** np.ceil(np.log2(length * 2)))
    spec = np.abs(np.fft.rfft(imp, n=nfft)) ** 2
    return np.fft.rfftfreq(nfft, 1.0 / sample_rate_hz), spec


def blind_rate_candidates(x: np.ndarray, sample_rate_hz: float, tones_hz, n_peaks: int = 5,
                          transitions: tuple[np.ndarray, int] | None = None) -> list[float]:
    """The strongest lines of the tone-transition spectrum (see :func:`blind_symbol_rate`).

    Returns up to ``n_peaks`` local maxima between a quarter and four times the
    tone spacing, strongest first, each with its sub-multiples R/2..R/4 that
    stay in range -- candidates for a timing-line test to choose from.
    """
    spacing = abs(float(tones_hz[1]) - float(tones_hz[0]))
    trans, m = transitions if transitions is not None else tone_transitions(x, sample_rate_hz, tones_hz)
    if trans.size < 8 or spacing <= 0:
        return []
    freqs, spec = _impulse_spectrum(trans, len(x) - m + 1, sample_rate_hz)
    sel = np.flatnonzero((freqs >= spacing / 4) & (freqs <= min(4 * spacing, 0.5 * sample_rate_hz)))
    if sel.size < 3:
        return []
    step = freqs[1] - freqs[0]
    seg = spec[sel]
    is_max = np.r_[False, (seg[1:-1] >= seg[:-2]) & (seg[1:-1] >= seg[2:]), False]
    peaks = sel[np.flatnonzero(is_max)]
    peaks = peaks[np.argsort(spec[peaks])[::-1][:n_peaks]]
    out: list[float] = []
    for i in peaks:
        r = float(freqs[0] + _parabolic_peak(spec, int(i)) * step)
        for k in (1, 2, 3, 4):
            if r / k >= spacing / 4:
                out.append(r / k)
    return out


def blind_symbol_rate(x: np.ndarray, sample_rate_hz: float, tones_hz,
                      transitions: tuple[np.ndarray, int] | None = None) -> float | None:
    """Symbol rate with no hint: the line of the tone-transition instants.

    The instants from :func:`tone_transitions` lie on multiples of the symbol
    period; the spectrum of that impulse train has lines at the symbol rate
    and its harmonics.  The strongest line between a quarter and four times
    the tone spacing (and below fs/2) is found, then the lowest of its
    sub-multiples that still carries a line is the symbol rate.

    Returns
    -------
    float or None
        Coarse symbol rate (refined later), or None with too few transitions.
    """
    spacing = abs(float(tones_hz[1]) - float(tones_hz[0]))
    trans, m = transitions if transitions is not None else tone_transitions(x, sample_rate_hz, tones_hz)
    if trans.size < 8:
        return None
    freqs, spec = _impulse_spectrum(trans, len(x) - m + 1, sample_rate_hz)
    sel = np.flatnonzero((freqs >= spacing / 4) & (freqs <= min(4 * spacing, 0.5 * sample_rate_hz)))
    if sel.size == 0:
        return None
    i = int(sel[np.argmax(spec[sel])])
    step = freqs[1] - freqs[0]
    best = float(freqs[0] + _parabolic_peak(spec, i) * step)
    # Without jitter every harmonic is as strong as the fundamental: take the
    # lowest sub-multiple R/k that still carries a line (>= 30% of the
    # strongest, and well above the continuous part of the spectrum).
    floor = np.median(spec[sel])
    top = spec[i]
    for k in range(6, 1, -1):
        cand = best / k
        if cand < spacing / 4:
            continue
        j = int(round(cand / step))
        lo, hi = max(j - 2, 0), min(j + 3, len(spec))
        jj = lo + int(np.argmax(spec[lo:hi]))
        if spec[jj] >= 0.3 * top and spec[jj] > 8 * floor:
            return float(freqs[0] + _parabolic_peak(spec, jj) * step)
    return best


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
    pos = lo + np.argmin(np.cumsum(v - np.median(v, axis=1, keepdims=True), axis=1), axis=1) + 0.5
    off = np.abs(pos - centre)
    return float(np.mean(off >= 0.375 * sps)), even
