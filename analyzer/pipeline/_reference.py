"""The reference and the error-count policy of a burst: which reference, both tone mappings, why no
count, the bit-error figures with their interval, HDLC frames when they are the reference."""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from .. import errorcount, theory
from ._results import AnalysisOptions, BerCount

__all__ = ["is_synced", "resolve_reference", "count_bits", "ber_reason", "ber_count", "frame_count"]


def is_synced(ec: errorcount.ErrorCount | None) -> bool:
    """Whether an error count found the reference and compared bits (False for no count)."""
    return ec is not None and ec.synced and ec.bits > 0


def resolve_reference(opts: AnalysisOptions, bits: np.ndarray, bits_file_text: str | None):
    """The reference to count errors against, or None (with the tone mapping found)."""
    ref = opts.reference
    if ref in ("none", "frames"):
        return None
    if ref == "auto":
        det = errorcount.detect_pattern(bits)
        if det is None:
            return None
        return errorcount.Reference.prbs(det.name, inverted=det.inverted)
    if ref.startswith("bits:"):
        pattern = errorcount.parse_bits_text(bits_file_text or "", ref[5:])
        return errorcount.Reference.pattern(pattern, ref)
    # a named pattern: find the polarity (tone mapping) from the data
    det = errorcount.detect_pattern(bits, candidates=[ref])
    inverted = bool(det.inverted) if det is not None else False
    return errorcount.Reference.prbs(ref, inverted=inverted)


def count_bits(bits: np.ndarray, ref, hint: int | None = None) -> tuple[errorcount.ErrorCount | None, bool]:
    """Count errors; return the count and whether a ONE rides on the low tone.

    For a PRBS the polarity found by detection already fixes the mapping: bits
    (tone index, 1 = high tone) that follow the complement of the O.150 pattern
    are that pattern with a ONE on the low tone, so the count is labelled with
    the pattern as O.150 defines it and the mapping says "low" (the same
    received bits could be called "the inverted pattern, ONE on the high tone";
    one name is given, never both flips at once).  For an explicit pattern
    both mappings are tried and the better kept.
    ``expected`` in the returned count is always in tone-index space.
    ``hint`` is a PRBS alignment from an earlier count of nearly these bits
    (see :func:`errorcount.count_errors`).
    """
    if ref is None:
        return None, False
    if ref.is_prbs:
        ec = errorcount.count_errors(bits, ref, alignment_hint=hint)
        return replace(ec, reference=ref.name), bool(ref.inverted)
    direct = errorcount.count_errors(bits, ref)
    swapped = errorcount.count_errors(bits ^ np.uint8(1), ref)
    if swapped.synced and (not direct.synced or swapped.errors < direct.errors):
        return replace(swapped, expected=swapped.expected ^ np.uint8(1)), True
    return direct, False


def ber_reason(opts: AnalysisOptions, bits: np.ndarray, ref, ber) -> str | None:
    """Why no bit errors were counted on a burst's decisions ``bits`` (None when they were)."""
    if ber is not None:
        return None
    asked = opts.reference
    if asked == "none":
        return "not asked for (reference none)"
    if asked == "frames":
        return "the HDLC frames are the reference"
    if ref is None and asked == "auto":
        return "no O.150 pattern found in the decisions"
    if ref is None:
        ref = errorcount.Reference.prbs(asked)
    name = ref.name if asked == "auto" else asked
    need = errorcount.sync_bits_needed(ref)
    if bits.size < need:
        return f"{name}: the burst is too short to sync ({bits.size} bits; {name} needs at least {need})"
    if ref.is_prbs:
        other = errorcount.detect_pattern(bits)
        if other is not None and other.name != ref.name:
            return f"{name} not found; the bits follow {other.name}"
    return f"{name} not found in the decisions"


def ber_count(ec: errorcount.ErrorCount, low_is_one: bool) -> BerCount:
    """The bit-error figures of a synced count, with the Clopper-Pearson 95% interval."""
    lo, hi = theory.clopper_pearson(ec.errors, ec.bits)
    return BerCount(reference=ec.reference, bits=int(ec.bits), errors=int(ec.errors),
                    rate=float(ec.errors / ec.bits) if ec.bits else float("nan"),
                    ci95=(float(lo), float(hi)), slips=int(ec.slips),
                    tone_for_one="low" if low_is_one else "high")



def frame_count(opts: AnalysisOptions, dec: np.ndarray) -> errorcount.FrameCount | None:
    """The HDLC frames in a burst's final decisions when they are the reference: always with
    ``--reference frames``, under ``auto`` (no pattern synced) when the burst looks framed."""
    if opts.reference not in ("frames", "auto"):
        return None
    fc = errorcount.count_frames(dec)
    if opts.reference == "auto" and not errorcount.looks_framed(fc):
        return None
    return fc

