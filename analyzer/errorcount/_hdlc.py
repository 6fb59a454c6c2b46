"""HDLC frames in the decided tones: line decoding, frame extraction, FCS check.

Pure functions on numpy arrays and frozen dataclasses; no I/O.

Framing (ISO/IEC 13239, from memory)
------------------------------------
* **NRZI line coding**: a change of tone between two symbols carries a 0, no
  change a 1.  Bit ``k`` of the decoded stream therefore belongs to symbol
  ``k + 1`` (it compares symbols ``k`` and ``k + 1``); the first symbol of a
  burst carries no bit.  Because only changes count, the decoding does not
  depend on which tone is called 0 or 1: neither the tone mapping nor the
  polarity needs to be found (unlike a PRBS count, which tries both).
* **Flag** ``01111110`` opens and closes every frame; consecutive frames may
  share one flag between them, and idle time is filled with flags.
* **Zero-bit insertion**: inside a frame the transmitter inserts a 0 after
  every five consecutive 1s, so the content never shows six 1s in a row; the
  receiver removes the 0 that follows five 1s.
* **Abort**: seven or more consecutive 1s end a frame without a valid close;
  the frame in progress is discarded (here it is counted as found and not
  valid, when it was long enough to be a frame).
* Octets are sent least significant bit first.  Between flags a frame is at
  least 32 bits (address, control and the 16-bit FCS); shorter stretches are
  ignored, a stretch that is not a whole number of octets is an invalid frame.

Frame check sequence: CRC-16 as in ITU-T X.25 (reflected polynomial 0x1021,
i.e. 0x8408 least significant bit first; register preset to 0xFFFF; the FCS is
the one's complement of the register, sent low octet first).  Run over the
content *and* its FCS, the register ends at the constant 0xF0B8 when the frame
is intact.  The CRC of the nine ASCII characters "123456789" is 0x906E (common
practice, from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import theory

__all__ = ["FLAG_BITS", "GOOD_RESIDUE", "MIN_FRAME_BITS", "Frame", "FrameCount",
           "crc16_x25", "fcs_bytes", "nrzi_decode", "nrzi_encode", "flag_positions", "remove_stuffing",
           "insert_stuffing", "frame_bits", "encode_frames", "find_frames", "count_frames", "looks_framed",
           "pool_counts", "known_symbols"]

#: The flag 01111110 in the order its bits are sent.
FLAG_BITS = np.array([0, 1, 1, 1, 1, 1, 1, 0], dtype=np.uint8)
#: CRC register after a frame and its intact FCS (before the final complement).
GOOD_RESIDUE = 0xF0B8
#: Fewest bits between flags that make a frame (address, control, FCS).
MIN_FRAME_BITS = 32

_POLY_REFLECTED = 0x8408


def _crc_table() -> np.ndarray:
    t = np.arange(256, dtype=np.uint32)
    for _ in range(8):
        t = np.where(t & 1, (t >> 1) ^ _POLY_REFLECTED, t >> 1)
    return t.astype(np.uint16)


_TABLE = [int(v) for v in _crc_table()]


def _register(data: bytes, reg: int = 0xFFFF) -> int:
    for byte in data:
        reg = (reg >> 8) ^ _TABLE[(reg ^ byte) & 0xFF]
    return reg


def crc16_x25(data: bytes) -> int:
    """CRC-16/X.25 of ``data`` (preset 0xFFFF, reflected 0x1021, final complement).

    References
    ----------
    .. [1] ITU-T Recommendation X.25, frame check sequence; ISO/IEC 13239
       (HDLC) -- from memory.
    """
    return _register(bytes(data)) ^ 0xFFFF


def fcs_bytes(data: bytes) -> bytes:
    """The two FCS octets sent after ``data`` (low octet first)."""
    c = crc16_x25(data)
    return bytes((c & 0xFF, c >> 8))


# --------------------------------------------------------------------------- line coding
def nrzi_decode(tones: np.ndarray) -> np.ndarray:
    """Bits from tone indices: 1 where a symbol keeps the tone of the one before, 0 where it changes.

    Returns ``len(tones) - 1`` bits; bit ``k`` belongs to symbol ``k + 1``.
    """
    t = np.asarray(tones, dtype=np.uint8)
    if t.size < 2:
        return np.zeros(0, np.uint8)
    return (t[1:] == t[:-1]).astype(np.uint8)


def nrzi_encode(bits: np.ndarray, first_tone: int = 0) -> np.ndarray:
    """Tone indices for ``bits`` after a symbol on ``first_tone`` (which is included first).

    Returns ``len(bits) + 1`` tones; a 0 changes the tone, a 1 keeps it.
    """
    b = np.asarray(bits, dtype=np.uint8)
    changes = np.concatenate(([0], np.cumsum(1 - b.astype(np.int64))))
    return ((changes + int(first_tone)) % 2).astype(np.uint8)


def _ones_run(bits: np.ndarray) -> np.ndarray:
    """For each position, the number of consecutive 1s ending there (0 at a 0)."""
    idx = np.arange(bits.size)
    last_zero = np.maximum.accumulate(np.where(bits == 0, idx, -1)) if bits.size else idx
    return (idx - last_zero).astype(np.int64)


def flag_positions(bits: np.ndarray) -> np.ndarray:
    """Start index of every flag 01111110 in ``bits`` (flags that share a 0 are both found)."""
    b = np.asarray(bits, dtype=np.int64)
    if b.size < 8:
        return np.zeros(0, np.int64)
    code = np.zeros(b.size - 7, np.int64)
    for k in range(8):
        code = (code << 1) | b[k:b.size - 7 + k]
    return np.flatnonzero(code == 0b01111110)


def remove_stuffing(bits: np.ndarray) -> tuple[np.ndarray, bool]:
    """Content bits with every 0 that follows five 1s removed, and whether an abort (seven 1s) occurs.

    Six 1s in a row inside a frame (not a flag, which is found first) is also
    taken as an abort: an intact transmitter never sends it there.
    """
    b = np.asarray(bits, dtype=np.uint8)
    if b.size == 0:
        return b, False
    run = _ones_run(b)
    before = np.concatenate(([0], run[:-1]))
    stuffed = (b == 0) & (before == 5)
    return b[~stuffed], bool(np.any(run >= 6))


def insert_stuffing(bits: np.ndarray) -> np.ndarray:
    """Content bits with a 0 inserted after every five consecutive 1s.

    The runs are counted on the output, so a run restarts after each inserted
    0: a 1 at input position ``i`` that ends the ``5 m``-th consecutive 1 is
    followed by an inserted 0.
    """
    b = np.asarray(bits, dtype=np.uint8)
    if b.size == 0:
        return b
    run = _ones_run(b)
    after = (b == 1) & (run % 5 == 0)
    out = np.zeros(b.size + int(after.sum()), np.uint8)
    pos = np.arange(b.size) + np.concatenate(([0], np.cumsum(after)[:-1]))
    out[pos] = b
    return out


def frame_bits(data: bytes) -> np.ndarray:
    """On-air bits of one frame between its flags: ``data`` and its FCS, LSB first, stuffed."""
    raw = np.frombuffer(bytes(data) + fcs_bytes(data), dtype=np.uint8)
    return insert_stuffing(np.unpackbits(raw, bitorder="little"))


def encode_frames(frames: list[bytes], preamble_flags: int = 8, flags_between: int = 1,
                  first_tone: int = 0) -> np.ndarray:
    """Tone indices of framed traffic: flags, each frame, flags between and a closing flag.

    Parameters
    ----------
    frames : list of bytes
        Frame contents without FCS (the FCS is added).
    preamble_flags : int
        Flags before the first frame (at least 1: it opens the first frame).
    flags_between : int
        Flags between two frames and after the last (at least 1).
    first_tone : int
        Tone of the symbol before the first bit.

    Returns
    -------
    numpy.ndarray
        uint8 tone indices, one more than the number of bits sent.
    """
    if preamble_flags < 1 or flags_between < 1:
        raise ValueError("frames need at least one flag before and after them")
    parts = [np.tile(FLAG_BITS, preamble_flags)]
    for f in frames:
        parts += [frame_bits(f), np.tile(FLAG_BITS, flags_between)]
    return nrzi_encode(np.concatenate(parts), first_tone)


# --------------------------------------------------------------------------- frames in decisions
@dataclass(frozen=True)
class Frame:
    """One frame found between two flags.

    Attributes
    ----------
    start_symbol : int
        Symbol (index into the burst's decisions) carrying the frame's first bit after the opening flag.
    stop_symbol : int
        One past the symbol carrying its last bit before the closing flag.
    length_bytes : int
        Octets of content without the FCS (-1 when not a whole number of octets).
    fcs_valid : bool
        The FCS checks (CRC register ends at :data:`GOOD_RESIDUE`).
    data : bytes
        Content without the FCS (b"" when not a whole number of octets).
    aborted : bool
        The frame held an abort sequence.
    """

    start_symbol: int
    stop_symbol: int
    length_bytes: int
    fcs_valid: bool
    data: bytes
    aborted: bool = False

    @property
    def on_air_bits(self) -> int:
        """Bits sent between the flags (with the inserted zeros)."""
        return self.stop_symbol - self.start_symbol


@dataclass(frozen=True)
class FrameCount:
    """Frames of one burst (or pooled) with the frame error rate and its Clopper-Pearson 95% interval.

    Attributes
    ----------
    frames : tuple of Frame
        Every frame found, in order.
    found, valid : int
        Frames found, and those with a valid FCS.
    error_rate : float
        ``(found - valid) / found`` (nan when none was found).
    ci95 : (float, float)
        Clopper-Pearson 95% interval of the frame error rate.
    known : numpy.ndarray or None
        Per symbol, True where a valid frame (with its two flags) fixes the tone sent.
    expected : numpy.ndarray or None
        Per symbol, the tone sent where ``known`` (the decided tone elsewhere).
    """

    frames: tuple[Frame, ...]
    found: int
    valid: int
    error_rate: float
    ci95: tuple[float, float]
    known: np.ndarray | None = None
    expected: np.ndarray | None = None

    @property
    def known_symbols(self) -> int:
        return int(self.known.sum()) if self.known is not None else 0


def find_frames(tones: np.ndarray) -> tuple[Frame, ...]:
    """Every frame between flags in a burst's decided tones (NRZI decoded, stuffing removed, FCS checked)."""
    bits = nrzi_decode(tones)
    flags = flag_positions(bits)
    out = []
    for a, b in zip(flags[:-1], flags[1:]):
        lo, hi = int(a) + 8, int(b)           # content between the end of one flag and the next
        if hi - lo <= 0:
            continue
        content, aborted = remove_stuffing(bits[lo:hi])
        if aborted:
            # the part before the abort, when it could have been a frame
            cut = int(np.argmax(_ones_run(bits[lo:hi]) >= 6))
            if remove_stuffing(bits[lo:lo + cut])[0].size < MIN_FRAME_BITS:
                continue
            out.append(Frame(lo + 1, hi + 1, -1, False, b"", aborted=True))
            continue
        if content.size < MIN_FRAME_BITS:
            continue
        if content.size % 8:
            out.append(Frame(lo + 1, hi + 1, -1, False, b""))
            continue
        raw = np.packbits(content, bitorder="little").tobytes()
        ok = _register(raw) == GOOD_RESIDUE
        out.append(Frame(lo + 1, hi + 1, len(raw) - 2, ok, raw[:-2]))
    return tuple(out)


def known_symbols(tones: np.ndarray, frames: tuple[Frame, ...]) -> tuple[np.ndarray, np.ndarray]:
    """Tones fixed by the frames with a valid FCS, and the mask of those symbols.

    A valid frame is known bit for bit, and so are its opening and closing
    flags; re-encoded (stuffing, NRZI, flags) it gives the tone of every
    symbol from the one before the opening flag to the last of the closing
    flag, up to the polarity, which is taken from the decisions there (an
    intact frame decided on inverted tones throughout would need every one
    of its symbols wrong).

    Returns
    -------
    (expected, mask) : numpy.ndarray (uint8), numpy.ndarray (bool)
        ``expected`` equals ``tones`` outside the mask.
    """
    t = np.asarray(tones, dtype=np.uint8)
    expected = t.copy()
    mask = np.zeros(t.size, bool)
    for f in frames:
        if not f.fcs_valid:
            continue
        a = f.start_symbol - 9                # the symbol before the opening flag's first bit
        b = f.stop_symbol + 8                 # one past the closing flag's last symbol
        if a < 0 or b > t.size:
            continue
        bits = np.concatenate((FLAG_BITS, frame_bits(f.data), FLAG_BITS))
        enc = nrzi_encode(bits, int(t[a]))
        if enc.size != b - a:
            continue
        if np.count_nonzero(enc != t[a:b]) > (b - a) // 2:
            enc ^= np.uint8(1)
        expected[a:b] = enc
        mask[a:b] = True
    return expected, mask


def _count(frames: tuple[Frame, ...], known: np.ndarray | None = None,
           expected: np.ndarray | None = None) -> FrameCount:
    found = len(frames)
    valid = sum(f.fcs_valid for f in frames)
    if found:
        lo, hi = theory.clopper_pearson(found - valid, found)
        rate, ci = (found - valid) / found, (float(lo), float(hi))
    else:
        rate, ci = float("nan"), (float("nan"), float("nan"))
    return FrameCount(frames=tuple(frames), found=found, valid=int(valid), error_rate=float(rate), ci95=ci,
                      known=known, expected=expected)


def count_frames(tones: np.ndarray) -> FrameCount:
    """Frames in a burst's decided tones, their counts and the symbols their valid frames fix."""
    frames = find_frames(tones)
    expected, mask = known_symbols(tones, frames)
    return _count(frames, mask, expected)


def looks_framed(count: FrameCount) -> bool:
    """Whether a burst carries HDLC traffic, for detection: at least one valid frame, and at least
    half of the frames found valid.

    Random bits hold a flag every 256 bits or so; a stretch between two such
    flags passes the FCS with probability about 2^-19 (a whole number of
    octets, 1/8, and the 16-bit check), so a long random burst can show one
    valid "frame" among thousands of invalid ones -- which the second
    condition rejects.
    """
    return count.valid >= 1 and 2 * count.valid >= count.found


def pool_counts(counts: list[FrameCount]) -> FrameCount:
    """All bursts' frames together (``known``: the bursts' masks end to end)."""
    masks = [c.known for c in counts]
    known = np.concatenate(masks) if masks and all(m is not None for m in masks) else None
    return _count(tuple(f for c in counts for f in c.frames), known)
