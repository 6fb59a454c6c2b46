"""Open a capture file and read it block by block as complex64 samples.

Supported inputs
----------------
*SigMF* (``.sigmf-meta`` / ``.sigmf-data`` pair, or their common base name):
the metadata is parsed and checked with the ``sigmf`` package; samples are
read block by block at file offsets, so a file is never loaded whole.  Complex
datatypes (``cf32``, ``cf64``, ``ci32``, ``ci16``, ``ci8``, ``cu8`` ... in
either byte order) give ``kind == "iq"``; real datatypes (``rf32_le``,
``ri16_le`` ...) are handled like mono audio (``kind == "audio"``, delivered as
the analytic signal).  ``core:header_bytes`` of every capture segment and
``core:trailing_bytes`` are honoured.

*Raw interleaved I/Q* (any other extension): the caller must give the sample
rate and one of the formats ``cf32``, ``ci16``, ``ci8``, ``cu8`` (little
endian).

*WAV / FLAC* (through ``soundfile``): two channels are I (left) and Q (right);
one channel is real audio, delivered as the analytic signal.

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
import json
import re
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import InputError, warn

__all__ = ["Capture", "open_capture", "read_all", "verify_sha512", "RAW_FORMATS", "HILBERT_MARGIN"]

#: Samples of context on each side of a block for the analytic transform.
HILBERT_MARGIN = 8192

#: Raw formats accepted by :func:`open_capture` (all little endian).
RAW_FORMATS = ("cf32", "ci16", "ci8", "cu8")

_META_EXT = ".sigmf-meta"
_DATA_EXT = ".sigmf-data"
_AUDIO_EXT = {".wav": "wav", ".flac": "flac"}
_TRUTH_KEY = "tonepair:truth"
_SIGMF_TYPE = re.compile(r"^(?P<cr>[cr])(?P<num>[fiu])(?P<bits>8|16|32|64)(?:_(?P<end>le|be))?$")


# --------------------------------------------------------------------------- sources
class _MemmapSource:
    """Samples of a binary file, read block by block with explicit file reads.

    Each :meth:`raw` call reads only the bytes of the samples asked for
    (``numpy.fromfile`` at an offset) and keeps nothing mapped, so the
    process's resident memory does not grow with the part of the file read
    so far (a long-lived ``numpy.memmap`` would keep every page touched
    resident until it is closed).

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

    def _read(self, i: int, lo: int, hi: int, dtype) -> np.ndarray:
        """Stored values of samples ``lo <= n < hi`` of piece ``i``."""
        first, stop, base = self.pieces[i]
        frame = self.component.itemsize * self.n_comp * self.n_channels
        per = 1 if dtype is not self.component else self.n_comp * self.n_channels
        x = np.fromfile(self.path, dtype=dtype, count=(hi - lo) * per, offset=base + lo * frame)
        if len(x) != (hi - lo) * per:
            raise InputError(f"file ends early: samples {lo} to {hi} were expected", self.path,
                             "the file changed or was cut short while it was read")
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


class _AudioSource:
    """Samples of a WAV/FLAC file read through soundfile (opened per read)."""

    def __init__(self, path: Path, channels: int):
        self.path = path
        self.channels = channels

    def raw(self, a: int, b: int) -> np.ndarray:
        import soundfile as sf

        try:
            with sf.SoundFile(str(self.path)) as f:
                f.seek(a)
                x = f.read(b - a, dtype="float64", always_2d=True)
        except (RuntimeError, OSError, ValueError) as exc:       # sf.LibsndfileError is a RuntimeError
            raise InputError(f"cannot read samples {a} to {b} ({exc})", self.path,
                             "the audio file is damaged; write or record it again") from None
        if len(x) != b - a:
            raise InputError(f"audio file ends early: samples {a} to {b} were expected, {len(x)} read",
                             self.path, "the audio file is truncated; write or record it again")
        if self.channels == 2:
            return x[:, 0] + 1j * x[:, 1]
        return x[:, 0]


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


# --------------------------------------------------------------------------- helpers
def _load_json(path: Path, what: str) -> dict:
    try:
        with open(path, "rb") as fp:
            doc = json.loads(fp.read().decode("utf-8"))
    except UnicodeDecodeError:
        raise InputError(f"{what} is not UTF-8 text", path, "check that this is the right file") from None
    except json.JSONDecodeError as exc:
        raise InputError(f"{what} is not valid JSON (line {exc.lineno}, column {exc.colno}: {exc.msg})",
                         path, "repair the JSON or write the file again") from None
    except OSError as exc:
        raise InputError(f"cannot read {what}: {exc.strerror}", path, "check the file permissions") from None
    if not isinstance(doc, dict):
        raise InputError(f"{what} is not a JSON object", path, "check that this is the right file")
    return doc


def _sidecar_truth(*paths: Path) -> dict | None:
    for p in paths:
        side = p.with_name(p.name + ".truth.json")
        if side.is_file():
            try:
                doc = json.loads(side.read_text(encoding="utf-8"))
            except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
                warn(f"{side}: truth file ignored, it cannot be read ({exc})")
                continue
            if isinstance(doc, dict):
                return doc
            warn(f"{side}: truth file ignored, it is not a JSON object")
    return None


def _check_file(path: Path) -> None:
    if path.is_dir():
        raise InputError("is a folder, not a capture file", path, "name one capture file")
    if not path.exists():
        raise InputError("file not found", path, "check the name and folder")
    if not path.is_file():
        raise InputError("is not a regular file", path, "name a capture file")


def _sigmf_paths(path: Path) -> tuple[Path, Path] | None:
    """(meta, data) if ``path`` names a SigMF recording, else None."""
    name = path.name
    if name.endswith(_META_EXT):
        base = name[:-len(_META_EXT)]
    elif name.endswith(_DATA_EXT):
        base = name[:-len(_DATA_EXT)]
    elif not path.exists() and path.with_name(name + _META_EXT).exists():
        base = name
    else:
        return None
    return path.with_name(base + _META_EXT), path.with_name(base + _DATA_EXT)


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


_AUDIO_BITS = {"PCM_S8": 8, "PCM_U8": 8, "PCM_16": 16, "PCM_24": 24, "PCM_32": 32}


def _int_field(g: dict, key: str, default: int, path: Path, minimum: int = 0) -> int:
    v = g.get(key, default)
    if isinstance(v, bool) or not isinstance(v, (int, float)) or v != v or abs(v) > 2 ** 62 \
            or int(v) != v or v < minimum:
        raise InputError(f"{key} is {v!r}, not a whole number >= {minimum}", path,
                         "repair the metadata so that it follows SigMF 1.x")
    return int(v)


def _ignored_options(path: Path, rate, fmt, what: str) -> None:
    if rate is not None or fmt is not None:
        warn(f"{path}: --rate/--format ignored, the {what} file gives its own sample rate and format")


# --------------------------------------------------------------------------- openers
def verify_sha512(data_path: Path, expected, actual: str, strict: bool) -> None:
    """Compare the dataset's SHA-512 with the metadata's ``core:sha512``.

    A mismatch is a warning (the capture is analysed anyway) or, with
    ``strict``, an InputError.
    """
    if actual.lower() != str(expected).lower():
        if strict:
            raise InputError("SHA-512 checksum does not match core:sha512 in the metadata", data_path,
                             "the data may be damaged or edited; restore the recording, or drop "
                             "--strict to analyse it anyway")
        warn(f"{data_path}: SHA-512 checksum does not match core:sha512 in the metadata; "
             "the data may be damaged or edited (analysing it anyway; --strict makes this an error)")


def _open_sigmf(path: Path, meta_path: Path, data_path: Path, rate, fmt, strict: bool = False,
                verify: bool = True) -> Capture:
    import jsonschema
    import sigmf
    from sigmf import sigmffile

    _check_file(meta_path)
    meta = _load_json(meta_path, "SigMF metadata")
    for section, kind in (("global", dict), ("captures", list), ("annotations", list)):
        if not isinstance(meta.get(section), kind):
            raise InputError(f"SigMF metadata has no {section!r} {'object' if kind is dict else 'list'}",
                             meta_path, "the SigMF 1.x metadata needs global, captures and annotations")
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            sigmffile.SigMFFile(metadata=meta).validate()
    except jsonschema.exceptions.ValidationError as exc:
        where = "/".join(str(p) for p in exc.absolute_path) or "top level"
        raise InputError(f"SigMF metadata is not valid ({where}: {exc.message})", meta_path,
                         "repair the metadata so that it follows SigMF 1.x") from None
    except sigmf.error.SigMFError as exc:
        raise InputError(f"SigMF metadata is not valid ({exc})", meta_path,
                         "repair the metadata so that it follows SigMF 1.x") from None
    for w in caught:
        warn(f"{meta_path}: {w.message}")

    g = meta["global"]
    if g.get("core:metadata_only"):
        raise InputError("SigMF recording is metadata only (no samples)", meta_path,
                         "analyse a recording that has its dataset")
    dataset = g.get("core:dataset")
    if dataset:
        if not isinstance(dataset, str) or Path(dataset).name != dataset or dataset in (".", ".."):
            raise InputError(f"core:dataset {dataset!r} is not a file name", meta_path,
                             "name a dataset file in the same folder as the metadata")
        data_path = meta_path.parent / dataset
    if not data_path.exists():
        raise InputError(f"SigMF dataset {data_path.name} not found beside the metadata", meta_path,
                         "put the dataset file in the same folder as the .sigmf-meta")
    _check_file(data_path)
    _ignored_options(path, rate, fmt, "SigMF")

    rate_hz = g.get("core:sample_rate")
    if rate_hz is None:
        raise InputError("SigMF metadata has no core:sample_rate", meta_path,
                         "add \"core:sample_rate\" (samples per second) to the global object")
    if isinstance(rate_hz, bool) or not isinstance(rate_hz, (int, float)) or not np.isfinite(rate_hz) \
            or rate_hz <= 0:
        raise InputError(f"core:sample_rate {rate_hz!r} is not a positive number", meta_path,
                         "give the sample rate in samples per second")
    if "core:datatype" not in g:
        raise InputError("SigMF metadata has no core:datatype", meta_path,
                         "add \"core:datatype\" (for example \"cf32_le\") to the global object")
    dt = str(g["core:datatype"]).lower()
    comp, n_comp, scale, bias = _parse_datatype(dt, meta_path)
    n_ch = _int_field(g, "core:num_channels", 1, meta_path, minimum=0)
    if n_ch < 1:
        raise InputError(f"core:num_channels is {n_ch}", meta_path, "set it to 1 or more")
    if n_ch > 1:
        warn(f"{meta_path}: {n_ch} channels; reading channel 0 only")

    frame = comp.itemsize * n_comp * n_ch
    caps = meta["captures"] or [{"core:sample_start": 0}]
    if not all(isinstance(c, dict) for c in caps):
        raise InputError("a SigMF capture segment is not a JSON object", meta_path,
                         "repair the metadata so that it follows SigMF 1.x")
    offset = _int_field(g, "core:offset", 0, meta_path)
    headers = np.cumsum([_int_field(c, "core:header_bytes", 0, meta_path) for c in caps])
    trailing = _int_field(g, "core:trailing_bytes", 0, meta_path)
    sample_starts = [_int_field(c, "core:sample_start", 0, meta_path) for c in caps]
    size = data_path.stat().st_size
    payload = size - int(headers[-1]) - trailing
    if payload <= 0:
        raise InputError("SigMF dataset holds no samples", data_path, "check that the recording was saved")
    n_samples, extra = divmod(payload, frame)
    if extra:
        warn(f"{data_path}: {payload} bytes of samples is not a whole number of {frame}-byte samples; "
             f"the last {extra} bytes are ignored")
    if n_samples == 0:
        raise InputError("SigMF dataset holds no whole sample", data_path, "check that the recording was saved")

    starts = [max(0, s - offset) for s in sample_starts]
    if any(b < a for a, b in zip(starts, starts[1:])):
        raise InputError("SigMF capture segments are not in order of core:sample_start", meta_path,
                         "sort the captures list by core:sample_start (SigMF 1.x)")
    claimed = max(starts) + 1           # a segment that starts at sample s holds sample s
    for a in meta["annotations"]:
        if isinstance(a, dict) and isinstance(a.get("core:sample_start"), int):
            count = a.get("core:sample_count", 0)
            count = count if isinstance(count, int) and count > 0 else 0
            claimed = max(claimed, a["core:sample_start"] - offset + count)
    if claimed > n_samples:
        warn(f"{data_path}: the dataset holds {n_samples} samples but the metadata's captures/annotations "
             f"reach sample {claimed}; the recording looks cut short (analysing the {n_samples} samples there are)")
    starts[0] = 0
    pieces = []
    for k, (s, h) in enumerate(zip(starts, headers)):
        stop = starts[k + 1] if k + 1 < len(starts) else n_samples
        stop = min(stop, n_samples)
        if s >= stop:
            continue
        if pieces and pieces[-1][2] == int(h) and pieces[-1][1] == s:
            pieces[-1] = (pieces[-1][0], stop, int(h))
        else:
            pieces.append((s, stop, int(h)))

    freqs = [c.get("core:frequency") for c in caps]
    freqs = [f if isinstance(f, (int, float)) and not isinstance(f, bool) and np.isfinite(f) else None
             for f in freqs]
    centre = None if freqs[0] is None else float(freqs[0])
    if len({f for f in freqs}) > 1:
        warn(f"{meta_path}: capture segments have different core:frequency values "
             f"({', '.join('none' if f is None else f'{f:g}' for f in freqs)} Hz); "
             f"using the first segment's, {'none' if centre is None else f'{centre:g} Hz'}")

    sha = g.get("core:sha512")
    unchecked = None
    if sha and verify:
        from ._digest import file_sha512

        verify_sha512(data_path, sha, file_sha512(data_path), strict)
    elif sha:
        unchecked = str(sha)

    truth = g.get(_TRUTH_KEY)
    if not isinstance(truth, dict):
        truth = _sidecar_truth(path, data_path)
    src = _MemmapSource(data_path, pieces, comp, n_comp, n_ch, scale, bias)
    return Capture(path=path, data_path=data_path, kind="iq" if n_comp == 2 else "audio",
                   sample_rate_hz=float(rate_hz), centre_hz=centre, n_samples=int(n_samples), datatype=dt,
                   truth=truth, metadata=meta, clip_level=_clip_level(_sigmf_bits(dt)),
                   sha512_unchecked=unchecked, _source=src)


def _open_audio(path: Path, container: str, rate, fmt) -> Capture:
    import soundfile as sf

    _check_file(path)
    if path.stat().st_size == 0:
        raise InputError("file is empty", path, "record or write the capture again")
    try:
        info = sf.info(str(path))
    except (RuntimeError, sf.LibsndfileError) as exc:
        raise InputError(f"cannot read as {container.upper()} audio ({exc})", path,
                         "check that the file is a complete WAV/FLAC recording") from None
    _ignored_options(path, rate, fmt, container.upper())
    if info.channels not in (1, 2):
        raise InputError(f"audio has {info.channels} channels", path,
                         "give a mono file (real audio) or a stereo file (I left, Q right)")
    if info.frames <= 0:
        raise InputError("audio file holds no samples", path, "record or write the capture again")
    return Capture(path=path, data_path=path, kind="iq" if info.channels == 2 else "audio",
                   sample_rate_hz=float(info.samplerate), centre_hz=None, n_samples=int(info.frames),
                   datatype=f"{container}:{info.subtype}", truth=_sidecar_truth(path), metadata={},
                   clip_level=_clip_level(_AUDIO_BITS.get(info.subtype)), _source=_AudioSource(path, info.channels))


def _open_raw(path: Path, rate, fmt) -> Capture:
    _check_file(path)
    size = path.stat().st_size
    if size == 0:
        raise InputError("file is empty", path, "record or write the capture again")
    missing = [opt for opt, v in (("--rate", rate), ("--format", fmt)) if v is None]
    if missing:
        guess = path.suffix.lower().lstrip(".")
        words = {"--rate": "--rate HZ",
                 "--format": f"--format FMT (one of {', '.join(RAW_FORMATS)}, little endian)"}
        hint = "give " + " and ".join(words[m] for m in missing)
        if guess in RAW_FORMATS and fmt is None:
            hint += f"; the name suggests --format {guess}"
        raise InputError("not a SigMF, WAV or FLAC file; raw I/Q samples need " + " and ".join(missing),
                         path, hint)
    name = str(fmt).lower().removesuffix("_le")
    if name not in RAW_FORMATS:
        raise InputError(f"unknown raw format {fmt!r}", path, f"use --format {'|'.join(RAW_FORMATS)}")
    try:
        rate_hz = float(rate)
    except (TypeError, ValueError):
        raise InputError(f"sample rate {rate!r} is not a number", path, "give --rate in Hz") from None
    if not np.isfinite(rate_hz) or rate_hz <= 0:
        raise InputError(f"sample rate {rate!r} must be a positive number of Hz", path, "check --rate")
    dt = name + ("_le" if name in ("cf32", "ci16") else "")
    comp, n_comp, scale, bias = _parse_datatype(dt, path)
    frame = comp.itemsize * n_comp
    n_samples, extra = divmod(size, frame)
    if n_samples == 0:
        raise InputError(f"file is smaller than one {name} sample ({frame} bytes)", path,
                         "check --format and the file")
    if extra:
        warn(f"{path}: {size} bytes is not a whole number of {frame}-byte {name} samples; "
             f"using {n_samples} samples and ignoring the last {extra} bytes (check --format)")
    src = _MemmapSource(path, [(0, n_samples, 0)], comp, n_comp, 1, scale, bias)
    return Capture(path=path, data_path=path, kind="iq", sample_rate_hz=rate_hz, centre_hz=None,
                   n_samples=int(n_samples), datatype=dt, truth=_sidecar_truth(path), metadata={},
                   clip_level=_clip_level(_sigmf_bits(dt)), _source=src)


def open_capture(path, rate: float | None = None, fmt: str | None = None, strict: bool = False,
                 verify: bool = True) -> Capture:
    """Open a capture file (nothing is read but metadata and headers).

    Parameters
    ----------
    path : str or Path
        ``.sigmf-meta``, ``.sigmf-data`` or the base name of a SigMF
        recording; a ``.wav`` or ``.flac`` file; or any other file of raw
        interleaved I/Q samples.
    rate : float, optional
        Sample rate in Hz, needed for raw files (``--rate``).
    fmt : str, optional
        Raw sample format, one of ``cf32``, ``ci16``, ``ci8``, ``cu8``
        (little endian; ``--format``).
    strict : bool
        Make a SigMF checksum mismatch an error instead of a warning (``--strict``).
    verify : bool
        Check the SigMF ``core:sha512`` now (one read of the dataset).  False
        leaves it in ``Capture.sha512_unchecked`` for the analysis, which
        checks it in its own pass over the file.

    Returns
    -------
    Capture
        The opened capture.

    Raises
    ------
    InputError
        The file is missing, empty, a folder, of an unknown or unsupported
        format, has invalid SigMF metadata or no sample rate, or a raw file
        lacks ``rate``/``fmt``.
    """
    p = Path(path)
    if p.name.endswith(".sigmf") and p.is_file():
        raise InputError("SigMF archives (.sigmf) are not read directly", p,
                         "extract the archive (it is a tar file) and name its .sigmf-meta")
    sig = _sigmf_paths(p)
    if sig is not None:
        meta_path, data_path = sig
        if not p.exists() and not meta_path.exists():
            _check_file(p)
        if not meta_path.exists() and p.name.endswith(_DATA_EXT) and p.is_file():
            if rate is None or fmt is None:
                raise InputError(f"no SigMF metadata ({meta_path.name}) beside this dataset", p,
                                 "put the .sigmf-meta file beside it, or give --rate and --format "
                                 "to read it as raw I/Q samples")
            return _open_raw(p, rate, fmt)
        return _open_sigmf(p, meta_path, data_path, rate, fmt, strict, verify)
    container = _AUDIO_EXT.get(p.suffix.lower())
    if container:
        return _open_audio(p, container, rate, fmt)
    return _open_raw(p, rate, fmt)
