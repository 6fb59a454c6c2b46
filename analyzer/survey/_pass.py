"""The passes over a whole capture: sample checks, DC offset, spectra and the band-power trace.

With the tones known from hints, one pass reads the capture once and yields
everything the burst search needs; blind, a second pass forms the trace once
the spectra have shown where the signal lies.

The DC offset (the mean of all samples) is known only at the end of the pass,
so the spectra and the trace are taken of the raw samples and corrected
afterwards, exactly: subtracting a constant ``d`` from a frame changes its DFT
only where the window's own DFT ``W`` is nonzero, by ``-d W_k`` -- at 0 Hz
alone for the rectangular trace frames, and at 0 Hz and the two neighbouring
bins for the periodic Hann window of the spectra (``W_0 = N/2``,
``W_{+-1} = -N/4``).  Each frame keeps its raw DFT there.

Every sum is formed per :data:`QUANTUM` samples or per frame and the pieces
are put together at the end, so no result depends on the read block.

References
----------
.. [1] F. J. Harris, "On the use of windows for harmonic analysis with the
   discrete Fourier transform," Proc. IEEE, vol. 66, no. 1, pp. 51-83, 1978
   (the periodic Hann window's three-term DFT; from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ._trace import PowerTrace, TraceFrames, band_bins, band_power_frames, remove_dc

__all__ = ["QUANTUM", "TraceSpec", "Survey", "block_size", "blocks", "survey", "trace_pass",
           "spectrogram_stride", "DC_FALSE_ALARM", "dc_offset_test", "SPECTROGRAM_NFFT", "SPECTROGRAM_CELLS",
           "cell_edges_hz"]

#: Samples per partial sum (a power of two, at least the spectrogram frame).
QUANTUM = 1 << 12
#: With hints, at most about this many spectrogram frames are transformed:
#: one frame in ``stride`` along a long capture (the report's figure shows at
#: most 600 rows, and the averaged spectrum of a few thousand frames is as
#: steady as that of all of them).  Blind, every frame is transformed, since
#: the band is found from them.
SPECTROGRAM_MAX_FRAMES = 4800
#: Spectrogram frame (samples) and the number of frequency cells its bins are summed into.
SPECTROGRAM_NFFT = 1024
SPECTROGRAM_CELLS = 128


def cell_edges_hz(sample_rate_hz: float, cells: int = SPECTROGRAM_CELLS) -> np.ndarray:
    """Frequency edges (cells + 1) of the spectrogram cells, Hz."""
    return np.linspace(-sample_rate_hz / 2, sample_rate_hz / 2, cells + 1)


#: Probability that a capture with no DC offset is reported as having one.
DC_FALSE_ALARM = 1e-6


def dc_offset_test(mean: complex, n_samples: int, freqs: np.ndarray, psd: np.ndarray,
                   real: bool = False) -> tuple[float, float]:
    """How far the capture's mean lies from zero, against what noise and signal alone would give.

    With no DC offset the mean of ``N`` samples of a stationary signal is, by
    the central limit theorem, Gaussian of variance ``S(0) / N``, ``S(0)`` the
    power spectral density at 0 Hz (per sample, white noise of variance
    ``sigma^2`` giving ``sigma^2``).  ``S(0)`` is read from the spectrum two to
    four bins either side of 0 Hz, where a DC offset leaves nothing (the periodic
    Hann window's DFT is nonzero at 0 and +-1 bins only).  For complex samples
    ``2 N |m|^2 / S(0)`` is chi-square with 2 degrees of freedom; for real audio
    (read as its analytic signal, whose spectrum is ``4 S_x`` above 0 Hz and 0
    below, so ``S_x(0)`` is half the two-sided mean) ``N m_r^2 / S_x(0)`` has 1.

    Parameters
    ----------
    mean : complex
        Mean of all samples.
    n_samples : int
        Number of samples.
    freqs, psd : numpy.ndarray
        Averaged spectrum (fftshifted, per-sample density as :class:`Survey` gives).
    real : bool
        The capture is real audio.

    Returns
    -------
    statistic, p_value : float
        The chi-square statistic and its upper tail probability (nan when the
        spectrum holds no power near 0 Hz).

    References
    ----------
    .. [1] M. B. Priestley, *Spectral Analysis and Time Series*, Academic Press,
       1981: the variance of the sample mean of a stationary series is about
       ``2 pi f(0) / N`` (from memory).
    """
    from scipy import stats

    k0 = int(np.argmin(np.abs(freqs)))
    near = np.r_[psd[max(k0 - 4, 0):max(k0 - 1, 0)], psd[k0 + 2:k0 + 5]]
    s0 = float(np.mean(near)) if near.size else 0.0
    if real:
        s0 *= 0.5
    if not s0 > 0 or n_samples < 1:
        return float("nan"), float("nan")
    if real:
        t = n_samples * float(mean.real) ** 2 / s0
        return t, float(stats.chi2.sf(t, 1))
    t = 2.0 * n_samples * abs(mean) ** 2 / s0
    return t, float(stats.chi2.sf(t, 2))


@dataclass(frozen=True)
class TraceSpec:
    """What the power trace needs: band, frame and noise bands."""

    band: tuple[float, float]
    frame: int
    noise_bands: list


@dataclass(frozen=True)
class Survey:
    """What the pass found.

    Attributes
    ----------
    mean : complex
        Mean of all samples (the DC offset), full scale.
    power : float
        Mean ``|x|^2``.
    clipped : int
        Samples at the converter limit (integer formats).
    any_signal : bool
        Some sample is not zero.
    spectrogram : numpy.ndarray
        (frames, cells) float32 power per cell, DC offset removed.
    spectrogram_stride : int
        One frame of :data:`SPECTROGRAM_NFFT` samples in this many was transformed.
    freqs, psd : numpy.ndarray
        Averaged spectrum (fftshifted), DC offset removed.
    trace : PowerTrace or None
        The band-power trace (DC offset removed) when a band was given.
    """

    mean: complex
    power: float
    clipped: int
    any_signal: bool
    spectrogram: np.ndarray
    spectrogram_stride: int
    freqs: np.ndarray
    psd: np.ndarray
    trace: PowerTrace | None = None


def block_size(block: int | None, default: int, *frames: int) -> int:
    """Read block: at least ``block`` (or ``default``) samples, a whole multiple of QUANTUM and of each frame."""
    unit = max((QUANTUM,) + tuple(int(f) for f in frames))
    want = max(int(block or default), unit)
    return -(-want // unit) * unit


def blocks(read, n_samples: int, block: int, progress=None, stage: str = ""):
    """Yield ``(position, samples)`` over the whole capture, ``block`` samples at a time,
    reporting progress after each block."""
    pos = 0
    while pos < n_samples:
        x = read(pos, block)
        if len(x) == 0:
            break
        yield pos, x
        pos += len(x)
        if progress:
            progress(pos, n_samples, stage)


def spectrogram_stride(n_samples: int, every_frame: bool) -> int:
    """Spectrogram frames skipped per frame transformed (1 = all)."""
    if every_frame:
        return 1
    return max(1, -(-(n_samples // SPECTROGRAM_NFFT) // SPECTROGRAM_MAX_FRAMES))


def _first_bad(x: np.ndarray, pos: int, path) -> None:
    finite = np.isfinite(x)
    if not np.all(finite):
        bad = pos + int(np.flatnonzero(~finite)[0])
        raise InputError(f"sample {bad} is not a finite number (NaN or Inf)", path,
                         "the recording is corrupt; trim or re-record it")


def _quantum_sums(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Sum and energy of each QUANTUM of ``x`` (the last one may be short)."""
    full = len(x) // QUANTUM * QUANTUM
    parts = [x[:full].reshape(-1, QUANTUM)] if full else []
    sums = [np.sum(q, axis=1, dtype=np.complex128) for q in parts]
    v = x.view(np.float32) if x.dtype == np.complex64 else x.astype(np.complex64).view(np.float32)
    vq = v[:2 * full].reshape(-1, 2 * QUANTUM)
    energy = [np.einsum("ij,ij->i", vq, vq, dtype=np.float64)] if full else []
    if full < len(x):
        sums.append(np.array([np.sum(x[full:], dtype=np.complex128)]))
        t = v[2 * full:].astype(np.float64)
        energy.append(np.array([np.dot(t, t)]))
    return (np.concatenate(sums) if sums else np.empty(0, complex),
            np.concatenate(energy) if energy else np.empty(0))


def periodic_hann(n: int) -> np.ndarray:
    """The periodic (DFT-even) Hann window of ``n`` samples, float64.

    Formed with the same operations as ``scipy.signal.windows.hann(n, sym=False)``
    (a symmetric window of ``n + 1`` samples, the last dropped), so it is the same
    to the last bit, without importing scipy.signal.

    References
    ----------
    .. [1] ``scipy.signal.windows.hann`` and ``scipy.signal.windows.general_cosine``.
    """
    if n <= 1:
        return np.ones(max(int(n), 0))
    fac = np.linspace(-np.pi, np.pi, n + 1, dtype=np.float64)
    w = np.zeros(n + 1, dtype=np.float64)
    for k, a in enumerate((0.5, 0.5)):
        w += np.float64(a) * np.cos(k * fac)
    return w[:-1]


class _Periodograms:
    """Hann-windowed frames of one length: spectrogram cells, averaged spectrum, raw DC bins."""

    #: DFT bins a constant reaches through the periodic Hann window, and the window's DFT there
    BINS = (0, 1, -1)

    def __init__(self, nfft: int, cells: int | None, stride: int):
        self.nfft, self.cells, self.stride = nfft, cells, stride
        # periodic (DFT-even) Hann, 0.5 - 0.5 cos(2 pi k / n): its DFT has three nonzero bins
        self.w = periodic_hann(nfft).astype(np.float32)
        self.w2 = 3.0 * nfft / 8.0                      # sum of the periodic Hann window squared
        self.W = np.array([nfft / 2.0, -nfft / 4.0, -nfft / 4.0])
        self.rows, self.raw = [], []
        self.psd = np.zeros(nfft)
        self.xsum = np.zeros(3, complex)
        self.n = 0

    def add(self, x: np.ndarray, pos: int) -> None:
        from scipy.fft import fft

        m = len(x) // self.nfft
        if m == 0:
            return
        first = pos // self.nfft
        take = np.flatnonzero((first + np.arange(m)) % self.stride == 0)
        if take.size == 0:
            return
        frames = x[:m * self.nfft].reshape(m, self.nfft)[take] * self.w
        xf = fft(frames, axis=1)
        spec = xf.real ** 2 + xf.imag ** 2
        self.psd += np.sum(spec, axis=0, dtype=np.float64)
        raw = xf[:, list(self.BINS)].astype(np.complex128)
        self.xsum += raw.sum(axis=0)
        self.n += take.size
        if self.cells:
            self.raw.append(raw)
            spec = np.fft.fftshift(spec, axes=1) / np.float32(self.w2)
            self.rows.append(spec.reshape(take.size, self.cells, self.nfft // self.cells)
                             .mean(axis=2, dtype=np.float32))

    def spectrogram(self, dc: complex) -> np.ndarray:
        if not self.rows:
            return np.empty((0, self.cells or 0), np.float32)
        sg = np.concatenate(self.rows)
        if dc != 0:
            raw = np.concatenate(self.raw)
            per_cell = self.nfft // self.cells
            for j, k in enumerate(self.BINS):
                shifted = raw[:, j] - dc * self.W[j]
                delta = (np.abs(shifted) ** 2 - np.abs(raw[:, j]) ** 2) / (self.w2 * per_cell)
                cell = ((k + self.nfft // 2) % self.nfft) // per_cell
                sg[:, cell] += delta.astype(np.float32)
        return sg

    def spectrum(self, dc: complex, sample_rate_hz: float) -> tuple[np.ndarray, np.ndarray]:
        psd = self.psd.copy()
        if dc != 0 and self.n:
            for j, k in enumerate(self.BINS):
                b = dc * self.W[j]
                psd[k] += -2.0 * float(np.real(self.xsum[j] * np.conj(b))) + self.n * abs(b) ** 2
        if self.n:
            psd /= self.n * self.w2
        freqs = np.fft.fftshift(np.fft.fftfreq(self.nfft, 1.0 / sample_rate_hz))
        return freqs, np.fft.fftshift(psd)


class _Trace:
    """Band-power trace frames of a whole capture, with the raw DC bins for the correction.

    The per-frame arrays are made before the pass, one entry per whole frame
    of the capture, and each block writes its frames in place.  With
    ``shared`` they live in memory shared with forked workers (an anonymous
    shared mapping), so the workers' frames need not be sent back.
    """

    def __init__(self, spec: TraceSpec, sample_rate_hz: float, n_samples: int, shared: bool = False):
        self.spec, self.fs = spec, sample_rate_hz
        n = max(int(n_samples), 0) // spec.frame
        dtypes = (np.float64, np.float64, np.complex128, np.float64)
        if shared:
            from ..parallel import shared_zeros

            arrays = shared_zeros(n, dtypes)
        else:
            arrays = [np.zeros(n, dtype=t) for t in dtypes]
        self.power, self.noise, self.dc_bin, self.energy = arrays

    def add(self, x: np.ndarray, pos: int) -> TraceFrames:
        s = self.spec
        tf = band_power_frames(x, self.fs, s.band, s.frame, s.noise_bands)
        i = pos // s.frame
        j = i + len(tf.power)
        self.power[i:j], self.noise[i:j], self.dc_bin[i:j], self.energy[i:j] = \
            tf.power, tf.noise, tf.dc_bin, tf.energy
        return tf

    def result(self, dc: complex) -> PowerTrace:
        s = self.spec
        power = remove_dc(self.power, self.dc_bin, dc, self.fs, s.band, s.frame)
        return PowerTrace(power, self.noise, s.frame, band_bins(self.fs, s.band, s.frame), s.band)


@dataclass
class _Partial:
    """What the pass collects over one stretch of consecutive blocks."""

    main: _Periodograms
    short: _Periodograms | None
    sums: list              # per quantum, or (with a trace) of the capture's last partial frame only
    energies: list
    clipped: int = 0
    end: int = 0


def _stretch(read, lo: int, hi: int, block: int, setup: tuple, trace: _Trace | None = None,
             progress=None, stage: str = "", digest=None) -> _Partial:
    """The pass over samples ``lo <= n < hi`` (``lo`` a multiple of ``block``); trace frames go into ``trace``;
    each read is shown to ``digest`` (``digest.seen(pos, x)``), in order."""
    sample_rate_hz, nfft_psd, kind, clip_level, path, stride = setup
    nfft = SPECTROGRAM_NFFT
    part = _Partial(_Periodograms(nfft, SPECTROGRAM_CELLS, stride),
                    _Periodograms(nfft_psd, None, 1) if nfft_psd != nfft else None, [], [])
    pos = lo
    while pos < hi:
        x = read(pos, min(block, hi - pos))
        if len(x) == 0:
            break
        if digest is not None:
            digest.seen(pos, x)
        if trace is not None:
            # the trace frames carry each frame's sum (its 0 Hz bin) and energy (Parseval)
            tf = trace.add(x, pos)
            whole = len(tf.energy) * trace.spec.frame
            sm, en = tf.dc_bin, tf.energy
            if whole < len(x):                   # the capture's last, partial frame
                sm_t, en_t = _quantum_sums(x[whole:])
                part.sums.append(sm_t)
                part.energies.append(en_t)
                sm, en = np.concatenate((sm, sm_t)), np.concatenate((en, en_t))
        else:
            sm, en = _quantum_sums(x)
            part.sums.append(sm)
            part.energies.append(en)
        if not (np.all(np.isfinite(sm)) and np.all(np.isfinite(en))):
            _first_bad(x, pos, path)
        if clip_level is not None:
            over = np.abs(x.real) >= clip_level
            if kind != "audio":          # audio: the imaginary part is computed, not stored
                over |= np.abs(x.imag) >= clip_level
            part.clipped += int(np.count_nonzero(over))
        for acc in (part.main, part.short):
            if acc is not None:
                acc.add(x, pos)
        pos += len(x)
        part.end = pos
        if progress:
            progress(pos, hi, stage)
    return part


def _merge(parts: list[_Partial]) -> _Partial:
    first = parts[0]
    for p in parts[1:]:
        for a, b in ((first.main, p.main), (first.short, p.short)):
            if a is not None:
                a.rows += b.rows
                a.raw += b.raw
                a.psd += b.psd
                a.xsum += b.xsum
                a.n += b.n
        first.sums += p.sums
        first.energies += p.energies
        first.clipped += p.clipped
        first.end = p.end
    return first


#: Captures at least this long are surveyed by forked worker processes, each
#: over its own stretch of blocks (shorter ones are not worth the fork).
PARALLEL_MIN_SAMPLES = 1 << 22
#: Stretches per worker (progress advances stretch by stretch).
_STRETCHES_PER_WORKER = 4


def _stretch_task(ctx: tuple, lo: int, hi: int) -> _Partial:
    read, block, setup, trace = ctx
    return _stretch(read, lo, hi, block, setup, trace)


def _parallel_stretches(read, n_samples: int, block: int, setup: tuple, trace: _Trace | None, workers: int,
                        progress, stage, digest=None):
    """The pass over the whole capture, split in stretches among forked workers (while this process
    feeds ``digest`` the file in order, block by block)."""
    from ..parallel import fork_map

    n_blocks = -(-n_samples // block)
    k = int(min(n_blocks, workers * _STRETCHES_PER_WORKER))
    cuts = [int(round(i * n_blocks / k)) * block for i in range(k + 1)]
    cuts[-1] = n_samples
    bounds = [(a, min(b, n_samples)) for a, b in zip(cuts[:-1], cuts[1:]) if a < min(b, n_samples)]
    parts = []
    for part in fork_map(_stretch_task, (read, block, setup, trace), bounds, workers,
                         alongside=digest.step if digest is not None else None):
        parts.append(part)
        if progress:
            progress(part.end, n_samples, stage)
    return _merge(parts)


def survey(read, n_samples: int, sample_rate_hz: float, block: int, nfft_psd: int, *,
           kind: str = "iq", clip_level: float | None = None, path=None, trace: TraceSpec | None = None,
           stride: int = 1, progress=None, stage: str = "survey", workers: int = 1, digest=None) -> Survey:
    """One pass over the raw samples: checks, mean, power, clipping, spectra and (with ``trace``) the trace.

    Parameters
    ----------
    read : callable
        ``read(start, count)`` of the raw capture.
    n_samples : int
        Samples in the capture.
    sample_rate_hz : float
        Sample rate.
    block : int
        Samples per read (a multiple of QUANTUM and of every frame length; see :func:`block_size`).
    nfft_psd : int
        Frame of the averaged spectrum: :data:`SPECTROGRAM_NFFT`, or
        shorter for captures shorter than that (then with no spectrogram).
    kind : str
        ``"iq"`` or ``"audio"`` (audio: only the real part is stored, so only
        it can clip).
    clip_level : float, optional
        Converter limit for integer formats.
    path : optional
        For error messages.
    trace : TraceSpec, optional
        Band of the power trace, when known before the pass.
    stride : int
        Transform one spectrogram frame in this many (see :func:`spectrogram_stride`).
    workers : int
        Forked processes that share the pass for captures of at least
        :data:`PARALLEL_MIN_SAMPLES` (the caller decides whether forking is
        safe).  Every sum is kept per quantum or frame, so the result is the
        same as from one process, up to the rounding of the averaged spectrum's
        sum over frames.
    digest : analyzer.digest.CaptureDigest, optional
        Fed the data file in order during the pass: by each read in one
        process, block by block by this process while workers share the pass.
        Its :meth:`~analyzer.digest.FileDigest.hexdigest` is then the file's
        SHA-512 at the cost of the bytes the pass did not read.

    Raises
    ------
    InputError
        At the first sample that is not a finite number.
    """
    setup = (sample_rate_hz, nfft_psd, kind, clip_level, path, stride)
    parallel = workers > 1 and n_samples >= PARALLEL_MIN_SAMPLES and n_samples > block
    frames = _Trace(trace, sample_rate_hz, n_samples, shared=parallel) if trace is not None else None
    if parallel:
        part = _parallel_stretches(read, n_samples, block, setup, frames, workers, progress, stage, digest)
    else:
        part = _stretch(read, 0, n_samples, block, setup, frames, progress, stage, digest)
    n = max(part.end, 1)
    sm = np.concatenate(([] if frames is None else [frames.dc_bin]) + part.sums + [np.zeros(1, complex)])
    en = np.concatenate(([] if frames is None else [frames.energy]) + part.energies + [np.zeros(1)])
    total_e = float(np.sum(en))
    dc = complex(np.sum(sm)) / n
    # (a frame energy formed in single precision can underflow where its sum does not)
    any_signal = total_e > 0 or bool(np.any(sm != 0))
    freqs, psd = (part.short or part.main).spectrum(dc, sample_rate_hz)
    return Survey(mean=dc, power=total_e / n, clipped=part.clipped, any_signal=any_signal,
                  spectrogram=part.main.spectrogram(dc), spectrogram_stride=stride, freqs=freqs, psd=psd,
                  trace=frames.result(dc) if frames is not None else None)


def trace_pass(read, n_samples: int, sample_rate_hz: float, block: int, spec: TraceSpec, dc: complex = 0j,
               progress=None, stage: str = "power trace") -> PowerTrace:
    """One more pass over the raw samples for the band-power trace (DC offset ``dc`` removed)."""
    tr = _Trace(spec, sample_rate_hz, n_samples)
    for pos, x in blocks(read, n_samples, block, progress, stage):
        tr.add(x, pos)
    return tr.result(dc)
