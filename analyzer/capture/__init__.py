"""Capture files: open SigMF, raw interleaved I/Q, WAV and FLAC and read them in blocks; the SigMF checksum from the pass's own reads; write captures (synth, annotations)."""

from ._digest import CaptureDigest, FileDigest, file_sha512
from ._formats import (
    ArrayCapture, Capture, HILBERT_MARGIN, RAW_FORMATS, open_capture, read_all, verify_sha512,
)
from ._write import NAMESPACE, write_audio, write_raw, write_sigmf

__all__ = [
    "CaptureDigest", "FileDigest", "file_sha512", "ArrayCapture", "Capture", "HILBERT_MARGIN",
    "RAW_FORMATS", "open_capture", "read_all", "verify_sha512", "NAMESPACE", "write_audio",
    "write_raw", "write_sigmf",
]
