"""Raw interleaved I/Q captures: the caller gives the sample rate and one of :data:`RAW_FORMATS` (little endian)."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..errors import InputError, warn
from ._blocks import Capture, _MemmapSource, _clip_level, _parse_datatype, _sigmf_bits
from ._files import _check_file, _sidecar_truth

__all__ = ["RAW_FORMATS"]

#: Raw formats accepted by :func:`open_capture` (all little endian).
RAW_FORMATS = ("cf32", "ci16", "ci8", "cu8")


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


