"""Capture files: open SigMF, raw interleaved I/Q, WAV and FLAC and read them in blocks; the SigMF checksum from the pass's own reads; write captures (synth, annotations)."""

from ._blocks import ArrayCapture, Capture, HILBERT_MARGIN, read_all
from ._digest import CaptureDigest, FileDigest, file_sha512
from ._open import open_capture
from ._raw import RAW_FORMATS
from ._sigmf import verify_sha512
from ._write import NAMESPACE, replace_atomically, write_audio, write_raw, write_sigmf

__all__ = [
    "CaptureDigest", "FileDigest", "file_sha512", "ArrayCapture", "Capture", "HILBERT_MARGIN",
    "RAW_FORMATS", "open_capture", "read_all", "verify_sha512", "NAMESPACE", "replace_atomically",
    "write_audio", "write_raw", "write_sigmf",
]
