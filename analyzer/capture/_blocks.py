"""A capture opened for reading: block reads as complex64, stored formats and their scaling, the analytic signal of real audio.

Scaling
-------
Integer samples are scaled to full scale: ``ci32 / 2**31``, ``ci16 / 32768``,
``ci8 / 128`` and, for unsigned bytes, ``(x - 127.5) / 128`` (so the offset
binary mid-point maps to zero).  Audio integers are scaled to +-1 by
``soundfile``.

Analytic signal of real audio
-----------------------------
A real recording ``x`` is returned as ``x + j H{x}`` (``H``: Hilbert
transform), so tone frequencies are the audio frequencies and the spectrum has
no negative-frequency image.  Each block is transformed with
:func:`scipy.signal.hilbert` together with :data:`HILBERT_MARGIN` samples of
context on each side, which are then trimmed off.  The outer half of each
context is faded in/out with a half-Hann taper, so that the cut-off context
does not ring into the block.  Away from the file edges (more than
``2 * HILBERT_MARGIN`` samples in) a block read then matches a transform of
the whole file to better than 1e-6 of full scale for tones, and for broadband noise
of rms ``s`` to about ``4e-3 s`` rms (1e-4 for a typical noise floor): that is
the part of the ideal transform (whose kernel decays only as ``1/(pi n)``)
that comes from samples beyond the context.  Nearer the start or end of the
file the transform sees the edge of the recording, as any transform of a
finite record does: for a full-scale 1200 Hz tone at 48 kHz the error is
about 0.1 at 10 samples from the edge, 1e-2 at 100, 1e-3 at 1000 and 1e-4
beyond 8000 samples.
"""

from __future__ import annotations

import functools
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import InputError

__all__ = ["Capture", "ArrayCapture", "read_all", "HILBERT_MARGIN"]

#: Samples of context on each side of a block for the analytic transform.
HILBERT_MARGIN = 8192

_SIGMF_TYPE = re.compile(r"^(?P<cr>[cr])(?P<num>[fiu])(?P<bits>8|16|32|64)(?:_(?P<end>le|be))?$")


# --------------------------------------------------------------------------- stored formats
def _parse_datatype(dt: str, path: Path) -> tuple[np.dtype, int, float, float]:
    """(component dtype, components, scale, bias) for a SigMF datatype."""
    m = _SIGMF_TYPE.match(dt)
    if not m or (m["num"] == "f" and m["bits"] in ("8", "16")) or (m["bits"] != "8" and not m["end"]):
        raise InputError(f"unsupported SigMF datatype {dt!r}", path,
                         "tonepair reads cf32/cf64/ci32/ci16/ci8/cu8 and rf32/ri16/... with _le or _be")
    bits = int(m["bits"])
    order = ">" if m["end"] == "be" else "<"
    comp = np.dtype(f"{order}{m['num']}{bits // 8}")
    n_comp = 2 if m["cr"] == "c" else 1
    if m["num"] == "f":
        return comp, n_comp, 1.0, 0.0
    full = 2.0 ** (bits - 1)
    bias = full - 0.5 if m["num"] == "u" else 0.0
    return comp, n_comp, 1.0 / full, bias


def _clip_level(bits: int | None) -> float | None:
    """Scaled magnitude at which an integer sample of ``bits`` bits is at its limit."""
    if not bits:
        return None
    full = 2.0 ** (bits - 1)
    return min(0.999, (full - 1.0) / full) - 1e-12


def _sigmf_bits(dt: str) -> int | None:
    m = _SIGMF_TYPE.match(dt)
    return None if m is None or m["num"] == "f" else int(m["bits"])


# --------------------------------------------------------------------------- binary data files
class _MemmapSource:
    """Samples of a binary file, read block by block with explicit file reads.

    Each :meth:`raw` call reads only the bytes of the samples asked for
    (``numpy.fromfile`` at an offset) and keeps nothing mapped, so the
    process's resident memory does not grow with the part of the file read
    so far (a long-lived ``numpy.memmap`` would keep every page touched
    resident until it is closed).  A read that starts where the previous one
    ended asks the kernel to read the next stretch of as many bytes in the
    background (``posix_fadvise`` ``WILLNEED``), so a pass over the file does
    not wait for the disk block after block.

    Parameters
    ----------
    path : Path
        Data file.
    pieces : list of tuple
        ``(first, stop, byte_base)``: samples ``first <= n < stop`` start at byte
        ``byte_base + n * frame_bytes``.
    component : numpy.dtype
        dtype of one real component (I, Q or a real sample).
    n_comp : int
        2 for complex, 1 for real samples.
    n_channels : int
        Interleaved channels; channel 0 is read.
    scale, bias : float
        Sample value = ``(stored - bias) * scale``.
    """

    def __init__(self, path: Path, pieces, component: np.dtype, n_comp: int, n_channels: int,
                 scale: float, bias: float):
        self.path = path
        self.pieces = pieces
        self.component = np.dtype(component)
        self.n_comp = n_comp
        self.n_channels = n_channels
        self.scale = scale
        self.bias = bias
        # little-endian float32 I/Q of one channel: read straight into complex64
        self._direct = (self.component == np.dtype("<f4") and n_comp == 2 and n_channels == 1
                        and scale == 1.0 and not bias)
        self._end = -1              # the byte after the last read

    def _read(self, i: int, lo: int, hi: int, dtype) -> np.ndarray:
        """Stored values of samples ``lo <= n < hi`` of piece ``i``."""
        first, stop, base = self.pieces[i]
        frame = self.component.itemsize * self.n_comp * self.n_channels
        per = 1 if dtype is not self.component else self.n_comp * self.n_channels
        start, size = base + lo * frame, (hi - lo) * frame
        x = np.fromfile(self.path, dtype=dtype, count=(hi - lo) * per, offset=start)
        if len(x) != (hi - lo) * per:
            raise InputError(f"file ends early: samples {lo} to {hi} were expected", self.path,
                             "the file changed or was cut short while it was read")
        if start == self._end:
            _read_ahead(self.path, start + size, size)
        self._end = start + size
        return x

    def read_complex64(self, a: int, b: int) -> np.ndarray | None:
        """Samples ``a <= n < b`` as complex64 when no conversion is needed, else None."""
        if not self._direct:
            return None
        parts = [self._read(i, max(a, first), min(b, stop), np.dtype("<c8"))
                 for i, (first, stop, _) in enumerate(self.pieces) if max(a, first) < min(b, stop)]
        return np.concatenate(parts) if len(parts) != 1 else parts[0]

    def byte_span(self, a: int, b: int) -> tuple[list | None, int]:
        """Where samples ``a <= n < b`` lie in the file: ``(runs, end)``.

        ``end`` is the byte after sample ``b - 1``.  When the samples are read
        unconverted (the array read holds exactly the file's bytes), ``runs``
        lists ``(file_offset, i, j)``: the array's samples ``i <= k < j`` are
        the file's bytes from ``file_offset`` on; otherwise it is None.
        """
        frame = self.component.itemsize * self.n_comp * self.n_channels
        runs, end = [], 0
        for first, stop, base in self.pieces:
            lo, hi = max(a, first), min(b, stop)
            if lo < hi:
                runs.append((base + lo * frame, lo - a, hi - a))
                end = base + hi * frame
        return (runs if self._direct else None), end

    def raw(self, a: int, b: int) -> np.ndarray:
        """Samples ``a <= n < b`` (already clipped) as complex128 or float64."""
        parts = []
        for i, (first, stop, _) in enumerate(self.pieces):
            lo, hi = max(a, first), min(b, stop)
            if lo < hi:
                v = self._read(i, lo, hi, self.component)
                v = v.reshape(hi - lo, self.n_channels, self.n_comp)[:, 0, :]
                parts.append(np.array(v, dtype=np.float64))
        x = np.concatenate(parts) if len(parts) != 1 else parts[0]
        if self.bias:
            x = x - self.bias
        if self.scale != 1.0:
            x = x * self.scale
        if self.n_comp == 2:
            return x[:, 0] + 1j * x[:, 1]
        return x[:, 0]


def _read_ahead(path: Path, offset: int, size: int) -> None:
    """Ask the kernel to read ``size`` bytes of ``path`` from ``offset`` on into the page cache, in the background."""
    import os

    if not hasattr(os, "posix_fadvise"):
        return
    try:
        fd = os.open(path, os.O_RDONLY)
    except OSError:
        return
    try:
        os.posix_fadvise(fd, offset, size, os.POSIX_FADV_WILLNEED)
    except OSError:
        pass
    finally:
        os.close(fd)



# --------------------------------------------------------------------------- Capture
@dataclass(frozen=True)
class Capture:
    """An opened capture: what it is and how to read it.

    Attributes
    ----------
    path : Path
        The file the user named (``.sigmf-meta``, ``.sigmf-data``, raw, WAV or FLAC).
    data_path : Path
        The file holding the samples.
    kind : str
        ``"iq"`` (complex baseband) or ``"audio"`` (real signal, delivered as
        its analytic signal).
    sample_rate_hz : float
        Sample rate.
    centre_hz : float or None
        SigMF ``core:frequency`` of the first capture segment; None if unknown.
    n_samples : int
        Number of samples.
    datatype : str
        SigMF datatype (``"cf32_le"``, ``"ci16_le"``, ``"cu8"`` ...) or, for
        audio, ``"wav:PCM_16"``, ``"flac:PCM_24"`` ...
    truth : dict or None
        Synthetic truth, if the capture carries it (SigMF global
        ``tonepair:truth`` or a sidecar ``<file>.truth.json``).
    metadata : dict
        SigMF metadata (empty for raw and audio files).
    clip_level : float or None
        For integer formats, the magnitude (of I or Q, after scaling) at or
        above which a stored value is at the converter's limit: the largest
        positive code over full scale, capped at 0.999; None for float data.
    sha512_unchecked : str or None
        The metadata's ``core:sha512`` when it is still to be checked against
        the dataset (opened with ``verify=False``: the analysis checks it in
        its own pass over the file, see :func:`verify_sha512`); else None.
    """

    path: Path
    data_path: Path
    kind: str
    sample_rate_hz: float
    centre_hz: float | None
    n_samples: int
    datatype: str
    truth: dict | None
    metadata: dict
    clip_level: float | None = None
    sha512_unchecked: str | None = None
    _source: object = field(default=None, repr=False, compare=False)

    def sample_bytes(self, a: int, b: int) -> tuple[list | None, int] | None:
        """Where the samples ``a <= n < b`` that :meth:`read` returned lie in the data file.

        ``(runs, end)``: ``end`` is the byte after sample ``b - 1``; when the
        array read holds exactly the file's bytes (stored as complex64),
        ``runs`` lists ``(file_offset, i, j)``, the array's samples
        ``i <= k < j`` being the file's bytes from ``file_offset`` on; else
        None.  None for captures not read from a binary data file.
        """
        span = getattr(self._source, "byte_span", None)
        if span is None:
            return None
        runs, end = span(a, b)
        return (None if self.real else runs), end

    @property
    def real(self) -> bool:
        """True when the stored signal is real (read as its analytic signal)."""
        return self.kind == "audio"

    def read(self, start: int, count: int) -> np.ndarray:
        """Read samples ``start`` to ``start + count``, clipped to the file.

        Parameters
        ----------
        start : int
            First sample (values below 0 are clipped to 0).
        count : int
            Number of samples wanted.

        Returns
        -------
        numpy.ndarray
            complex64, ``max(0, min(start + count, n_samples) - max(start, 0))``
            samples.  Integers are scaled to full scale; real signals are
            returned as their analytic signal (see module docstring).
        """
        a = max(0, int(start))
        b = min(self.n_samples, int(start) + int(count))
        if b <= a:
            return np.empty(0, dtype=np.complex64)
        if not self.real:
            direct = getattr(self._source, "read_complex64", None)
            x = direct(a, b) if direct is not None else None
            if x is not None:
                return x
            return np.asarray(self._source.raw(a, b), dtype=np.complex64)
        ra = max(0, a - HILBERT_MARGIN)
        rb = min(self.n_samples, b + HILBERT_MARGIN)
        x = self._source.raw(ra, rb)
        n = len(x)
        taper = _taper()
        m = len(taper)
        if ra > 0:                      # fade in the left context (not at the file's own edge)
            x[:m] *= taper
        if rb < self.n_samples:         # fade out the right context
            x[n - m:] *= taper[::-1]
        import scipy.fft                # imported where needed (real signals only): heavy modules
        import scipy.signal

        z = scipy.signal.hilbert(x, N=scipy.fft.next_fast_len(n, real=True))[:n]
        return np.asarray(z[a - ra:b - ra], dtype=np.complex64)


@functools.cache
def _taper() -> np.ndarray:
    """Half-Hann fade over the outer half of the analytic-transform context."""
    m = HILBERT_MARGIN // 2
    return 0.5 - 0.5 * np.cos(np.pi * (np.arange(m) + 0.5) / m)


class ArrayCapture:
    """A capture held in memory: samples already in an array (for scripts, tests and benchmarks).

    It offers what the pipeline reads from a :class:`Capture`; ``read`` returns
    views of the array, which the pipeline never changes.

    Parameters
    ----------
    samples : array_like
        Complex samples (for ``kind="audio"``, the analytic signal).
    sample_rate_hz : float
        Sample rate.
    kind : str
        ``"iq"`` or ``"audio"``.
    centre_hz : float, optional
        RF centre frequency, if known.
    path : str
        Name shown in reports.
    """

    datatype = "cf32_le"
    truth = None
    metadata: dict = {}

    def __init__(self, samples, sample_rate_hz: float, kind: str = "iq", centre_hz: float | None = None,
                 path: str = "<memory>"):
        self.samples = np.asarray(samples, dtype=np.complex64)
        self.sample_rate_hz = float(sample_rate_hz)
        self.kind = kind
        self.centre_hz = centre_hz
        self.path = path
        self.data_path = path
        self.n_samples = int(self.samples.size)

    def read(self, start: int, count: int) -> np.ndarray:
        """``count`` samples from ``start`` (fewer at the end), a view of the array."""
        start = max(int(start), 0)
        return self.samples[start:start + max(int(count), 0)]


def read_all(capture: Capture) -> np.ndarray:
    """Read every sample of a capture.

    Parameters
    ----------
    capture : Capture
        An opened capture.

    Returns
    -------
    numpy.ndarray
        complex64 samples (see :meth:`Capture.read`).
    """
    return capture.read(0, capture.n_samples)

