"""SigMF captures (``.sigmf-meta`` / ``.sigmf-data`` pair, or their common base name).

The metadata is parsed and checked with the ``sigmf`` package; samples are
read block by block at file offsets, so a file is never loaded whole.  Complex
datatypes (``cf32``, ``cf64``, ``ci32``, ``ci16``, ``ci8``, ``cu8`` ... in
either byte order) give ``kind == "iq"``; real datatypes (``rf32_le``,
``ri16_le`` ...) are handled like mono audio (``kind == "audio"``, delivered as
the analytic signal).  ``core:header_bytes`` of every capture segment and
``core:trailing_bytes`` are honoured.  ``core:sha512`` is checked on opening
or left to the analysis's own pass (:func:`verify_sha512`).
"""

from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np

from ..errors import InputError, warn
from ._blocks import Capture, _MemmapSource, _clip_level, _parse_datatype, _sigmf_bits
from ._files import _check_file, _ignored_options, _load_json, _sidecar_truth

__all__ = ["verify_sha512"]

_META_EXT = ".sigmf-meta"
_DATA_EXT = ".sigmf-data"
_TRUTH_KEY = "tonepair:truth"


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



def _int_field(g: dict, key: str, default: int, path: Path, minimum: int = 0) -> int:
    v = g.get(key, default)
    if isinstance(v, bool) or not isinstance(v, (int, float)) or v != v or abs(v) > 2 ** 62 \
            or int(v) != v or v < minimum:
        raise InputError(f"{key} is {v!r}, not a whole number >= {minimum}", path,
                         "repair the metadata so that it follows SigMF 1.x")
    return int(v)



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
    meta = _sigmf_metadata(meta_path)
    g = meta["global"]
    data_path = _sigmf_dataset(g, meta_path, data_path)
    _ignored_options(path, rate, fmt, "SigMF")
    rate_hz = _sigmf_rate(g, meta_path)
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
    caps = meta["captures"] or [{"core:sample_start": 0}]
    pieces, n_samples = _sigmf_pieces(meta, caps, data_path, meta_path, comp.itemsize * n_comp * n_ch)
    centre = _sigmf_centre(caps, meta_path)
    unchecked = _sigmf_checksum(g, data_path, strict, verify)
    truth = g.get(_TRUTH_KEY)
    if not isinstance(truth, dict):
        truth = _sidecar_truth(path, data_path)
    src = _MemmapSource(data_path, pieces, comp, n_comp, n_ch, scale, bias)
    return Capture(path=path, data_path=data_path, kind="iq" if n_comp == 2 else "audio",
                   sample_rate_hz=float(rate_hz), centre_hz=centre, n_samples=int(n_samples), datatype=dt,
                   truth=truth, metadata=meta, clip_level=_clip_level(_sigmf_bits(dt)),
                   sha512_unchecked=unchecked, _source=src)


def _sigmf_metadata(meta_path: Path) -> dict:
    """The metadata, checked for its three sections and against the SigMF schema (the ``sigmf``
    package's warnings passed on as ours)."""
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
    return meta


def _sigmf_dataset(g: dict, meta_path: Path, data_path: Path) -> Path:
    """The dataset file: ``core:dataset`` when named (in the metadata's folder), else ``data_path``."""
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
    return data_path


def _sigmf_rate(g: dict, meta_path: Path):
    """``core:sample_rate``, checked to be a positive number."""
    rate_hz = g.get("core:sample_rate")
    if rate_hz is None:
        raise InputError("SigMF metadata has no core:sample_rate", meta_path,
                         "add \"core:sample_rate\" (samples per second) to the global object")
    if isinstance(rate_hz, bool) or not isinstance(rate_hz, (int, float)) or not np.isfinite(rate_hz) \
            or rate_hz <= 0:
        raise InputError(f"core:sample_rate {rate_hz!r} is not a positive number", meta_path,
                         "give the sample rate in samples per second")
    return rate_hz


def _sigmf_pieces(meta: dict, caps: list, data_path: Path, meta_path: Path,
                  frame: int) -> tuple[list[tuple[int, int, int]], int]:
    """Where the samples lie: ``(first, stop, byte_base)`` runs of the capture segments (headers and
    trailing bytes skipped, adjacent segments merged), and the number of whole samples."""
    g = meta["global"]
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
    return pieces, n_samples


def _sigmf_centre(caps: list, meta_path: Path) -> float | None:
    """``core:frequency`` of the first capture segment (a warning when the segments differ)."""
    freqs = [c.get("core:frequency") for c in caps]
    freqs = [f if isinstance(f, (int, float)) and not isinstance(f, bool) and np.isfinite(f) else None
             for f in freqs]
    centre = None if freqs[0] is None else float(freqs[0])
    if len({f for f in freqs}) > 1:
        warn(f"{meta_path}: capture segments have different core:frequency values "
             f"({', '.join('none' if f is None else f'{f:g}' for f in freqs)} Hz); "
             f"using the first segment's, {'none' if centre is None else f'{centre:g} Hz'}")
    return centre


def _sigmf_checksum(g: dict, data_path: Path, strict: bool, verify: bool) -> str | None:
    """Check ``core:sha512`` now (``verify``) or return it for the analysis to check; None without one."""
    sha = g.get("core:sha512")
    unchecked = None
    if sha and verify:
        from ._digest import file_sha512

        verify_sha512(data_path, sha, file_sha512(data_path), strict)
    elif sha:
        unchecked = str(sha)
    return unchecked
