"""Open a capture file, whatever its format: SigMF, WAV / FLAC, or raw interleaved I/Q (any other extension).

The openers are :mod:`._sigmf`, :mod:`._audio` and :mod:`._raw`; what they
return is read in blocks through :class:`._blocks.Capture`.
"""

from __future__ import annotations

from pathlib import Path

from ..errors import InputError
from ._audio import _AUDIO_EXT, _open_audio
from ._blocks import Capture
from ._files import _check_file
from ._raw import _open_raw
from ._sigmf import _DATA_EXT, _open_sigmf, _sigmf_paths

__all__ = ["open_capture"]


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
