"""What received bits are compared with: an O.150 pattern or an explicit cyclic pattern, and bits files.

No I/O happens here: callers read files and pass their text.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError
from ._patterns import PATTERNS, _aligned, _flipped_period, _raw_period

__all__ = ["Reference", "parse_bits_text"]


@dataclass(frozen=True, eq=False)
class Reference:
    """What the received bits are compared with.

    Either an O.150 pattern (``bits is None``) or an explicit cyclic pattern.
    Build with :meth:`prbs` or :meth:`pattern`.  Two references are equal when
    name, polarity and pattern bits are equal.

    Attributes
    ----------
    name : str
        Pattern name (``"PN9"``) or a label for an explicit pattern
        (``"bits:FILE"``).
    inverted : bool
        For a PRBS: the expected bits are the complement of the O.150-standard
        sequence.  Always False for an explicit pattern.
    bits : numpy.ndarray or None
        Explicit pattern (read-only uint8 0/1, repeated cyclically), or None.
    """

    name: str
    inverted: bool = False
    bits: np.ndarray | None = field(default=None, repr=False)

    @classmethod
    def prbs(cls, name: str, inverted: bool = False) -> "Reference":
        """Reference to O.150 pattern ``name``; ``inverted`` complements it.

        Raises
        ------
        InputError
            If ``name`` is not a known pattern.
        """
        if name not in PATTERNS:
            raise InputError(f"unknown test pattern {name!r}",
                             hint="use one of " + ", ".join(PATTERNS))
        return cls(name, bool(inverted), None)

    @classmethod
    def pattern(cls, bits, name: str) -> "Reference":
        """Reference to an explicit pattern ``bits`` repeated cyclically.

        Raises
        ------
        InputError
            If ``bits`` is empty, not one-dimensional or holds values other than 0/1.
        """
        arr = np.asarray(bits)
        if arr.ndim != 1 or arr.size == 0:
            raise InputError(f"reference pattern {name!r} is empty or not a bit sequence")
        if arr.min() < 0 or arr.max() > 1:
            raise InputError(f"reference pattern {name!r} holds values other than 0 and 1")
        arr = arr.astype(np.uint8, copy=True)
        arr.flags.writeable = False
        return cls(str(name), False, arr)

    @property
    def is_prbs(self) -> bool:
        """True for an O.150 pattern."""
        return self.bits is None

    @property
    def label(self) -> str:
        """Name for reports: ``"PN9"``, ``"PN15 inverted"``, ``"bits:FILE"``."""
        return f"{self.name} inverted" if self.inverted else self.name

    @property
    def period(self) -> int:
        """Length of one period of the expected bits."""
        return PATTERNS[self.name].period if self.is_prbs else int(self.bits.size)

    def sequence(self) -> np.ndarray:
        """One period of the expected bits (uint8), as transmitted from its start."""
        if not self.is_prbs:
            return self.bits
        spec = PATTERNS[self.name]
        return _flipped_period(self.name) if spec.inverted != self.inverted else _raw_period(self.name)

    def expected(self, alignment: int, lo: int, hi: int) -> np.ndarray:
        """Reference bits for received bits ``lo <= k < hi`` under ``alignment`` (see :class:`ErrorCount`);
        ``lo`` may be negative (bits before the first received one)."""
        return _aligned(self.sequence(), alignment, lo, hi)

    def __eq__(self, other):
        if not isinstance(other, Reference):
            return NotImplemented
        if (self.name, self.inverted, self.is_prbs) != (other.name, other.inverted, other.is_prbs):
            return False
        return self.is_prbs or np.array_equal(self.bits, other.bits)

    def __hash__(self):
        return hash((self.name, self.inverted, None if self.bits is None else self.bits.tobytes()))


_BAD_CHAR = re.compile(r"[^01\s]")
_SPACE = re.compile(r"\s+")


def parse_bits_text(text: str, path=None) -> np.ndarray:
    """Parse the text of a bits file.

    The text holds the characters ``0`` and ``1``; whitespace (spaces, tabs,
    newlines) is ignored anywhere, and a line whose first non-blank character is
    ``#`` is a comment.  Anything else is an error.

    Parameters
    ----------
    text : str
        File contents.
    path : str or Path, optional
        File name, used only in error messages.

    Returns
    -------
    numpy.ndarray
        uint8 array of 0/1 in file order.

    Raises
    ------
    InputError
        On any other character (the message names it, its line and column, 1-based)
        or when the text holds no bits.
    """
    hint = "a bits file holds only 0 and 1, whitespace, and lines starting with '#'"
    parts = []
    for lineno, line in enumerate(text.splitlines(), start=1):
        stripped = line.strip()
        if not stripped or stripped.startswith("#"):
            continue
        bad = _BAD_CHAR.search(line)
        if bad is not None:
            raise InputError(f"unexpected character {bad.group()!r} on line {lineno}, "
                             f"column {bad.start() + 1}", path, hint)
        parts.append(_SPACE.sub("", line))
    body = "".join(parts)
    if not body:
        raise InputError("no bits found", path, hint)
    return np.frombuffer(body.encode("ascii"), dtype=np.uint8) - np.uint8(ord("0"))

