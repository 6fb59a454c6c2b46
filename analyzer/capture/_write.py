"""Write captures: SigMF recordings, WAV/FLAC audio and raw I/Q files.

Used by ``tonepair synth`` and by the tests.  Every writer

* refuses to replace an existing file unless ``overwrite=True``
  (:class:`~analyzer.errors.InputError` naming the file otherwise);
* writes atomically: a temporary file in the destination folder is filled and
  then moved over the target with :func:`os.replace`, so a reader never sees a
  half-written capture.

Integer formats use the scaling that :mod:`analyzer.capture` undoes:
``ci16 = round(32768 x)`` clipped to +-32767, ``ci8 = round(128 x)`` clipped
to +-127, ``cu8 = round(128 x + 127.5)`` clipped to 0..255.  A warning is
issued when any sample is clipped.
"""

from __future__ import annotations

import json
import math
import os
import tempfile
from pathlib import Path

import numpy as np

from ..errors import InputError, warn

__all__ = ["write_sigmf", "write_audio", "write_raw", "replace_atomically", "NAMESPACE", "SIGMF_DATATYPES", "RAW_FORMATS"]

#: Our SigMF extension namespace, declared in ``core:extensions``.
NAMESPACE = {"name": "tonepair", "version": "0.1.0", "optional": True}
#: SigMF datatypes :func:`write_sigmf` can write.
SIGMF_DATATYPES = ("cf32_le", "ci16_le", "rf32_le", "ri16_le")
#: Raw formats :func:`write_raw` can write (little endian, interleaved I/Q).
RAW_FORMATS = ("cf32", "ci16", "ci8", "cu8")

_RECORDER = "tonepair synth"


# --------------------------------------------------------------------------- helpers
def _jsonable(obj):
    """A copy of ``obj`` that :func:`json.dumps` accepts (non-finite floats become None)."""
    if isinstance(obj, dict):
        return {str(k): _jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_jsonable(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return _jsonable(obj.tolist())
    if isinstance(obj, (bool, np.bool_)):
        return bool(obj)
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        return float(obj) if math.isfinite(obj) else None
    if obj is None or isinstance(obj, str):
        return obj
    if isinstance(obj, Path):
        return str(obj)
    raise TypeError(f"truth value of type {type(obj).__name__} cannot be written as JSON")


def _check_target(path: Path, overwrite: bool) -> None:
    if path.is_dir():
        raise InputError("is a folder", path, "choose a file name for the output")
    if path.exists() and not overwrite:
        raise InputError("already exists", path, "pass --overwrite to replace it, or choose another name")


def replace_atomically(path: Path, fill, hint: str = "choose a writable folder for the output") -> Path:
    """Call ``fill(tmp_path)`` on a temporary file beside ``path``, then move it over ``path``.

    The one atomic write of the package (captures here, reports in
    :mod:`analyzer.report`): a reader never sees a half-written file, and a
    failure leaves neither the temporary file nor a partial target.  The
    temporary file gets the mode any new file gets (0666 less the umask), not
    the 0600 of :func:`tempfile.mkstemp`.

    Raises
    ------
    InputError
        The folder cannot be created or written in (``hint`` says what to do).
    """
    p = Path(path)
    try:
        p.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"cannot create the output folder ({exc.strerror or exc})", p.parent, hint) from None
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=".tmp", dir=p.parent)
    except OSError as exc:
        raise InputError(f"cannot write in the output folder ({exc.strerror or exc})", p.parent, hint) from None
    try:
        try:
            mask = os.umask(0)
            os.umask(mask)
            os.fchmod(fd, 0o666 & ~mask)      # a temporary file is made 0600; the file is not private
        finally:
            os.close(fd)
        fill(Path(tmp))
        os.replace(tmp, p)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
    return p


def _write_bytes(path: Path, data: bytes | np.ndarray) -> None:
    def fill(tmp: Path) -> None:
        with open(tmp, "wb") as fp:
            fp.write(data.tobytes() if isinstance(data, np.ndarray) else data)
            fp.flush()
            os.fsync(fp.fileno())
    replace_atomically(path, fill)


def _as_samples(samples) -> np.ndarray:
    x = np.asarray(samples)
    if x.ndim != 1 or x.size == 0:
        raise InputError(f"samples must be a non-empty 1-D array, got shape {x.shape}")
    if not np.issubdtype(x.dtype, np.number):
        raise InputError(f"samples must be numbers, got dtype {x.dtype}")
    if not np.all(np.isfinite(x)):
        raise InputError("samples contain NaN or Inf", None, "fix the signal before writing it")
    return x


def _quantise(x: np.ndarray, full: float, lo: float, hi: float, bias: float, dtype, name: str) -> np.ndarray:
    """Scale a real array to integers ``round(full x + bias)`` clipped to [lo, hi]; warn on clipping."""
    q = np.rint(x * full + bias)
    n_clip = int(np.count_nonzero((q < lo) | (q > hi)))
    if n_clip:
        warn(f"{n_clip} of {q.size} {name} sample components clipped at full scale")
    return np.clip(q, lo, hi).astype(dtype)


def _interleave(x: np.ndarray) -> np.ndarray:
    """Complex -> float64 array I0, Q0, I1, Q1 ...; real arrays are returned as float64."""
    if np.iscomplexobj(x):
        out = np.empty(2 * x.size, dtype=np.float64)
        out[0::2] = x.real
        out[1::2] = x.imag
        return out
    return x.astype(np.float64)


def _encode(x: np.ndarray, fmt: str) -> np.ndarray:
    """Bytes-ready array of ``x`` in format ``cf32``/``rf32``/``ci16``/``ri16``/``ci8``/``cu8``."""
    v = _interleave(x)
    kind = fmt[1:]
    if kind == "f32":
        return v.astype("<f4")
    if kind == "i16":
        return _quantise(v, 32768.0, -32767, 32767, 0.0, "<i2", fmt)
    if kind == "i8":
        return _quantise(v, 128.0, -127, 127, 0.0, "i1", fmt)
    if kind == "u8":
        return _quantise(v, 128.0, 0, 255, 127.5, "u1", fmt)
    raise ValueError(fmt)


def _truth_json(truth: dict) -> str:
    return json.dumps(_jsonable(truth), indent=2, allow_nan=False) + "\n"


# --------------------------------------------------------------------------- writers
def write_sigmf(base: Path, samples: np.ndarray, sample_rate_hz: float, datatype: str = "cf32_le",
                centre_hz: float | None = None, truth: dict | None = None, description: str = "",
                overwrite: bool = False) -> Path:
    """Write a SigMF recording ``<base>.sigmf-data`` + ``<base>.sigmf-meta``.

    Parameters
    ----------
    base : Path
        Base name (a trailing ``.sigmf-meta``/``.sigmf-data`` is removed).
    samples : numpy.ndarray
        1-D complex samples (``cf32_le``/``ci16_le``) or real samples
        (``rf32_le``/``ri16_le``), full scale +-1 for the integer types.
    sample_rate_hz : float
        ``core:sample_rate``.
    datatype : str
        One of :data:`SIGMF_DATATYPES`.  ``ci16_le`` stores ``round(32768 x)``
        clipped to +-32767 (a warning if any sample clipped).
    centre_hz : float, optional
        ``core:frequency`` of the single capture segment.
    truth : dict, optional
        Synthetic truth, stored as global ``tonepair:truth`` (the ``tonepair``
        namespace is declared in ``core:extensions``).
    description : str
        ``core:description``.
    overwrite : bool
        Replace existing files.

    Returns
    -------
    Path
        The ``.sigmf-meta`` path.

    Raises
    ------
    InputError
        An output file exists (and not ``overwrite``), or the datatype or
        samples do not fit.
    """
    import sigmf
    from sigmf import hashing, sigmffile

    base = Path(str(base).removesuffix(".sigmf-meta").removesuffix(".sigmf-data"))
    meta_path = base.with_name(base.name + ".sigmf-meta")
    data_path = base.with_name(base.name + ".sigmf-data")
    dt = str(datatype).lower()
    if dt not in SIGMF_DATATYPES:
        raise InputError(f"cannot write SigMF datatype {datatype!r}", meta_path,
                         f"use one of {', '.join(SIGMF_DATATYPES)}")
    x = _as_samples(samples)
    if np.iscomplexobj(x) and dt.startswith("r"):
        raise InputError(f"complex samples need a complex datatype, not {dt}", meta_path, "use cf32_le or ci16_le")
    if not np.iscomplexobj(x) and dt.startswith("c"):
        x = x.astype(np.complex128)
    if not (np.isfinite(sample_rate_hz) and sample_rate_hz > 0):
        raise InputError(f"sample rate {sample_rate_hz!r} must be a positive number of Hz", meta_path)
    for p in (meta_path, data_path):
        _check_target(p, overwrite)

    payload = _encode(x, dt.removesuffix("_le"))
    g = {
        "core:datatype": dt,
        "core:version": sigmf.__specification__,
        "core:sample_rate": float(sample_rate_hz),
        "core:recorder": _RECORDER,
        "core:description": str(description),
        "core:num_channels": 1,
        "core:extensions": [dict(NAMESPACE)],
    }
    if truth is not None:
        g["tonepair:truth"] = _jsonable(truth)
    seg = {"core:sample_start": 0}
    if centre_hz is not None:
        seg["core:frequency"] = float(centre_hz)

    holder: dict = {}

    def fill_data(tmp: Path) -> None:
        with open(tmp, "wb") as fp:
            fp.write(payload.tobytes())
            fp.flush()
            os.fsync(fp.fileno())
        g["core:sha512"] = hashing.calculate_sha512(filename=tmp)
        meta = {"global": g, "captures": [seg], "annotations": []}
        rec = sigmffile.SigMFFile(metadata=meta)
        rec.validate()          # schema check by the sigmf package before anything is published
        holder["text"] = rec.dumps(pretty=True) + "\n"

    replace_atomically(data_path, fill_data)
    _write_bytes(meta_path, holder["text"].encode("utf-8"))
    return meta_path


def write_audio(path: Path, samples: np.ndarray, sample_rate_hz: int, subtype: str | None = None,
                truth: dict | None = None, overwrite: bool = False) -> Path:
    """Write a WAV or FLAC capture.

    Parameters
    ----------
    path : Path
        ``.wav`` or ``.flac`` file.
    samples : numpy.ndarray
        Complex samples (written as stereo: I left, Q right) or real samples
        (mono), full scale +-1.
    sample_rate_hz : int
        Sample rate.
    subtype : str, optional
        soundfile subtype; default ``"FLOAT"`` for WAV and ``"PCM_24"`` for
        FLAC (which holds ``PCM_16`` or ``PCM_24`` only).  For PCM subtypes
        samples beyond +-1 are clipped, with a warning.
    truth : dict, optional
        Written to the sidecar ``<path>.truth.json``.
    overwrite : bool
        Replace existing files (a stale sidecar of the old file is removed).

    Returns
    -------
    Path
        ``path``.

    Raises
    ------
    InputError
        Wrong extension or subtype, or an output exists (and not ``overwrite``).
    """
    import soundfile as sf

    path = Path(path)
    container = {".wav": "WAV", ".flac": "FLAC"}.get(path.suffix.lower())
    if container is None:
        raise InputError("audio output must end in .wav or .flac", path, "rename the output file")
    st = (subtype or ("FLOAT" if container == "WAV" else "PCM_24")).upper()
    allowed = ("PCM_16", "PCM_24") if container == "FLAC" else ("PCM_16", "PCM_24", "PCM_32", "FLOAT", "DOUBLE")
    if st not in allowed:
        raise InputError(f"{container} cannot hold subtype {st}", path, f"use one of {', '.join(allowed)}")
    rate = int(sample_rate_hz)
    if rate <= 0 or rate != sample_rate_hz:
        raise InputError(f"audio sample rate must be a positive whole number of Hz, got {sample_rate_hz!r}", path)
    x = _as_samples(samples)
    side = path.with_name(path.name + ".truth.json")
    _check_target(path, overwrite)
    if truth is not None:
        _check_target(side, overwrite)

    data = np.column_stack([x.real, x.imag]) if np.iscomplexobj(x) else x.astype(np.float64)
    if st.startswith("PCM"):
        over = int(np.count_nonzero(np.abs(data) > 1.0))
        if over:
            warn(f"{over} of {data.size} sample components beyond full scale clipped to +-1")
            data = np.clip(data, -1.0, 1.0)

    def fill(tmp: Path) -> None:
        sf.write(str(tmp), data, rate, subtype=st, format=container)

    replace_atomically(path, fill)
    if truth is not None:
        _write_bytes(side, _truth_json(truth).encode("utf-8"))
    elif side.exists():
        side.unlink()           # the old file's truth no longer describes the new one
    return path


def write_raw(path, samples, fmt: str = "cf32", overwrite: bool = False) -> Path:
    """Write raw interleaved I/Q samples (little endian, no header).

    Parameters
    ----------
    path : str or Path
        Output file.
    samples : numpy.ndarray
        1-D complex samples, full scale +-1.
    fmt : str
        ``cf32`` (float32 pairs), ``ci16`` (``round(32768 x)`` clipped to
        +-32767), ``ci8`` (``round(128 x)`` clipped to +-127) or ``cu8``
        (``round(128 x + 127.5)`` clipped to 0..255).
    overwrite : bool
        Replace an existing file.

    Returns
    -------
    Path
        ``path``.

    Raises
    ------
    InputError
        Unknown format, or the output exists (and not ``overwrite``).
    """
    path = Path(path)
    name = str(fmt).lower().removesuffix("_le")
    if name not in RAW_FORMATS:
        raise InputError(f"unknown raw format {fmt!r}", path, f"use one of {', '.join(RAW_FORMATS)}")
    x = _as_samples(samples).astype(np.complex128)
    _check_target(path, overwrite)
    _write_bytes(path, _encode(x, name))
    return path
