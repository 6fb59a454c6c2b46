"""ITU-T O.150 pseudo-random test patterns: generation, detection, sync and error counting.

Pattern definitions (ITU-T O.150, from memory; PN7 is common practice, not in O.150):

========  ==============  ======  ============================================
name      polynomial      period  O.150 polarity
========  ==============  ======  ============================================
PN7       x^7 + x^6 + 1     127   not inverted (common practice)
PN9       x^9 + x^5 + 1     511   not inverted
PN11      x^11 + x^9 + 1   2047   not inverted
PN15      x^15 + x^14 + 1 32767   inverted
PN23      x^23 + x^18 + 1  8388607 inverted
========  ==============  ======  ============================================

The generator is an n-stage shift register whose p-th and n-th stage outputs are
added modulo 2 and fed back to the first stage; the output is taken from the
n-th stage and the register starts with all stages at ONE.  The output then
obeys ``b[k] = b[k-p] XOR b[k-n]`` and begins with n ONEs (before inversion).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class PatternSpec:
    """One O.150 pattern.

    Attributes
    ----------
    name : str
        Short name, e.g. ``"PN9"``.
    order : int
        Register length n (period 2**n - 1).
    tap : int
        Inner feedback stage p (< n).
    inverted : bool
        Whether O.150 specifies the inverted output.
    """

    name: str
    order: int
    tap: int
    inverted: bool

    @property
    def period(self) -> int:
        return (1 << self.order) - 1


PATTERNS: dict[str, PatternSpec] = {
    s.name: s
    for s in (
        PatternSpec("PN7", 7, 6, False),
        PatternSpec("PN9", 9, 5, False),
        PatternSpec("PN11", 11, 9, False),
        PatternSpec("PN15", 15, 14, True),
        PatternSpec("PN23", 23, 18, True),
    )
}


def _raw_sequence(order: int, tap: int, n_bits: int) -> np.ndarray:
    """Output of the shift register started at all ONEs, without inversion."""
    out = np.empty(max(n_bits, order), dtype=np.uint8)
    out[:order] = 1
    k = order
    # b[k..k+tap-1] depends only on earlier bits: fill `tap` bits per step.
    while k < n_bits:
        m = min(tap, n_bits - k)
        out[k:k + m] = out[k - tap:k - tap + m] ^ out[k - order:k - order + m]
        k += m
    return out[:n_bits]


def prbs_sequence(name: str, n_bits: int | None = None) -> np.ndarray:
    """The O.150 pattern ``name`` from its standard start, with O.150's polarity.

    Parameters
    ----------
    name : str
        One of :data:`PATTERNS`.
    n_bits : int, optional
        Number of bits (default: one period).  Longer requests repeat the period.

    Returns
    -------
    numpy.ndarray
        uint8 array of 0/1.
    """
    spec = PATTERNS[name]
    n = spec.period if n_bits is None else int(n_bits)
    seq = _raw_sequence(spec.order, spec.tap, n)
    return seq ^ np.uint8(1) if spec.inverted else seq
