"""Coarse estimates with no hints: the occupied band, candidate tone pairs, the tones, rate candidates.

The band comes from the survey's spectrogram of the whole capture; the tones
from the modes of the instantaneous frequency in that band (or from the
strongest peaks of the mean spectrum); the symbol rate from the line of the
instants where the sent tone changes.  All are first estimates: the timing
search and the decision-directed tone estimates refine them, and
:mod:`._blind` chooses among the rate candidates.
"""

from __future__ import annotations

import numpy as np

from ..survey import cell_edges_hz
from ._timing import _parabolic_peak, tone_transitions

__all__ = ["band_limit", "blind_rate_candidates", "blind_symbol_rate", "blind_tones", "occupied_band",
           "peak_tone_pairs"]


def _robust_z(v: np.ndarray, valid: np.ndarray) -> np.ndarray:
    """``(v - median) / (1.4826 MAD)``, median and MAD over the cells ``valid``."""
    med = np.median(v[valid])
    mad = 1.4826 * np.median(np.abs(v[valid] - med))
    return (v - med) / max(mad, 1e-12 * abs(med) + 1e-12)


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
    z_hi = _robust_z(np.percentile(sm, 97, axis=0) / floor, valid)
    z_mean = _robust_z(np.mean(sg, axis=0) / global_floor, valid)
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
