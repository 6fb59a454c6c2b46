"""Where the bursts are: runs of frames above the noise floor, then whole symbols on the grid.

The search between bursts runs on the cheap band-power trace of the survey;
within a candidate stretch the symbols of one grid are split into bursts and
each burst's edges are refined.

Burst edges
    The coarse edges from the power trace are refined to whole symbols on the
    symbol grid by the maximum-sum run of symbol energies above the midpoint
    between the noise and signal levels (a CUSUM change-point rule).

References
----------
.. [1] E. S. Page, "Continuous inspection schemes," Biometrika, vol. 41,
   pp. 100-115, 1954 (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..survey import PowerTrace

__all__ = ["BurstSpan", "doubling_means", "find_bursts", "floor_track", "quiet_floor", "segment_symbols",
           "smoothing_frames", "trim_to_burst"]


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
