"""The reference and the error count: ITU-T O.150 patterns, detection, sync, bit errors; HDLC frames and their error-rate theory."""

from ._count import ErrorCount, count_errors, sync_bits_needed
from ._frame_theory import FrameTheory, frame_error_rate, frame_theory, pooled_theory
from ._hdlc import (
    FLAG_BITS, Frame, FrameCount, count_frames, crc16_x25, encode_frames, fcs_bytes, find_frames,
    flag_positions, frame_bits, insert_stuffing, looks_framed, nrzi_decode, nrzi_encode, pool_counts,
    remove_stuffing,
)
from ._patterns import DETECT_Z_MIN, PATTERNS, detect_pattern, prbs_sequence
from ._reference import Reference, parse_bits_text

__all__ = [
    "FLAG_BITS", "Frame", "FrameCount", "FrameTheory", "count_frames", "crc16_x25",
    "encode_frames", "fcs_bytes", "find_frames", "flag_positions", "frame_bits",
    "frame_error_rate", "frame_theory", "insert_stuffing", "looks_framed", "nrzi_decode",
    "nrzi_encode", "pool_counts", "pooled_theory", "remove_stuffing", "DETECT_Z_MIN",
    "ErrorCount", "PATTERNS", "Reference", "count_errors", "detect_pattern", "parse_bits_text",
    "prbs_sequence", "sync_bits_needed",
]
