"""The band-power trace of a whole capture: in-band power and out-of-band noise per frame.

Rectangular frames of a power of two samples, at least two symbols long, are
transformed bin-major; each frame gives its in-band power, an out-of-band noise
estimate (the median over groups of bins, so an interferer in a few groups does
not lift it), its 0 Hz bin and its energy.  A DC offset known only after the
pass is removed from the power afterwards, exactly, from the 0 Hz bin.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np

__all__ = ["NOISE_GROUPS", "PowerTrace", "TraceFrames", "band_bins", "band_power_frames", "frame_length",
           "remove_dc"]


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
