"""ITU-T O.150 pseudo-random test patterns: generation, periods, state lookup and detection.

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

What the module offers:

* :func:`prbs_sequence` -- the patterns themselves.
* :func:`detect_pattern` -- which pattern and polarity received bits follow, from the
  recurrence checks (binomial z-score >= :data:`DETECT_Z_MIN`).
* the private kernels the reference and the error count build on: cached periods,
  the state table of each pattern, cyclic gathers.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

__all__ = [
    "PatternSpec",
    "PATTERNS",
    "prbs_sequence",
    "PatternDetection",
    "detect_pattern",
    "DETECT_Z_MIN",
]


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
    """Output of the shift register started at all ONEs, without inversion.

    Uses ``b[k] = b[k - q*p] XOR b[k - q*n]`` with ``q`` the largest power of two
    such that ``q*n <= k``: over GF(2), ``f(x)**q = f(x**q)`` for the feedback
    polynomial ``f``, so the longer-lag recurrence holds for the same sequence and
    lets each numpy step fill ``q*p`` bits (a few dozen steps even for PN23).
    """
    n_bits = int(n_bits)
    total = max(n_bits, order)
    out = np.empty(total, dtype=np.uint8)
    out[:order] = 1
    k = order
    while k < total:
        q = 1
        while 2 * q * order <= k:
            q *= 2
        lag_p, lag_n = q * tap, q * order
        m = min(lag_p, total - k)
        np.bitwise_xor(out[k - lag_p:k - lag_p + m], out[k - lag_n:k - lag_n + m],
                       out=out[k:k + m])
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

    Raises
    ------
    KeyError
        If ``name`` is not in :data:`PATTERNS`.
    ValueError
        If ``n_bits`` is negative.
    """
    spec = PATTERNS[name]
    n = spec.period if n_bits is None else int(n_bits)
    if n < 0:
        raise ValueError(f"n_bits must be >= 0, got {n}")
    seq = _raw_sequence(spec.order, spec.tap, n)
    return seq ^ np.uint8(1) if spec.inverted else seq


@functools.lru_cache(maxsize=None)
def _raw_period(name: str) -> np.ndarray:
    """One period of the raw (not inverted) register output, read-only, cached."""
    spec = PATTERNS[name]
    seq = _raw_sequence(spec.order, spec.tap, spec.period)
    seq.flags.writeable = False
    return seq


@functools.lru_cache(maxsize=None)
def _flipped_period(name: str) -> np.ndarray:
    """One period of the inverted register output, read-only, cached."""
    seq = _raw_period(name) ^ np.uint8(1)
    seq.flags.writeable = False
    return seq


def _aligned(seq: np.ndarray, a: int, lo: int, hi: int) -> np.ndarray:
    """``seq[(k + a) mod period]`` for ``lo <= k < hi`` (``lo`` may be negative)."""
    idx = np.arange(lo, hi, dtype=np.int64)
    idx += int(a)
    idx %= seq.size
    return seq[idx]


def _window_states(bits: np.ndarray, order: int) -> np.ndarray:
    """Integer value of every ``order``-bit window, first bit most significant.

    Entry ``k`` is ``sum_j bits[k+j] << (order-1-j)`` for ``k = 0 .. len-order``.
    The loop runs over the ``order`` bit positions, not over the bits.
    """
    n_win = bits.size - order + 1
    if n_win <= 0:
        return np.zeros(0, dtype=np.int32)
    b32 = bits.astype(np.int32)
    states = np.zeros(n_win, dtype=np.int32)
    for j in range(order):
        states <<= 1
        states |= b32[j:j + n_win]
    return states


@functools.lru_cache(maxsize=None)
def _state_table(name: str) -> np.ndarray:
    """Position lookup for the raw sequence: ``table[state] = i``, -1 for state 0.

    ``i`` is the index in the period where the raw sequence's ``order`` consecutive
    bits (cyclic) equal ``state``.  Every non-zero state occurs exactly once per
    period of a maximal-length sequence, so the table is a bijection.  PN23 needs
    a 32 MiB int32 table, built once per process.
    """
    spec = PATTERNS[name]
    raw = _raw_period(name)
    ext = np.concatenate([raw, raw[:spec.order - 1]])
    states = _window_states(ext, spec.order)
    table = np.full(1 << spec.order, -1, dtype=np.int32)
    table[states] = np.arange(spec.period, dtype=np.int32)
    table.flags.writeable = False
    return table


def _as_bits(bits, what: str = "bits") -> np.ndarray:
    """Validate a 1-D array of 0/1 and return it as uint8."""
    arr = np.asarray(bits)
    if arr.ndim != 1:
        raise ValueError(f"{what} must be one-dimensional, got shape {arr.shape}")
    if arr.size and (arr.min() < 0 or arr.max() > 1):
        raise ValueError(f"{what} must hold only 0 and 1")
    return arr.astype(np.uint8, copy=False)


# ---------------------------------------------------------------------------
# Pattern detection
# ---------------------------------------------------------------------------
DETECT_Z_MIN = 5.0
"""Detection threshold on the binomial z-score of the recurrence checks.

For independent, equiprobable random bits every check ``c[k]`` contains the bit
``b[k]`` that no earlier check contains, so the checks are independent fair coin
flips and the number that hold is Binomial(m, 1/2).  Hoeffding's inequality gives
``P(z >= t) <= exp(-t**2 / 2)``: at ``t = 5`` at most 3.7e-6 per (pattern, polarity)
hypothesis, at most 3.7e-5 for the ten hypotheses of the five patterns.
"""


@dataclass(frozen=True)
class PatternDetection:
    """Which O.150 pattern a run of received bits follows.

    Attributes
    ----------
    name : str
        Pattern name, a key of :data:`PATTERNS`.
    inverted : bool
        True when the received bits are the complement of the O.150-standard
        sequence (in FSK terms the tone-to-bit mapping is swapped).
    check_fraction : float
        Fraction of the recurrence checks ``b[k]^b[k-p]^b[k-n]`` that held for the
        reported polarity.  With independent bit errors of probability ``e`` the
        expected value is ``(1 + (1 - 2e)**3) / 2``.
    """

    name: str
    inverted: bool
    check_fraction: float


def _checks(bits: np.ndarray, spec: PatternSpec) -> np.ndarray:
    """``c[k] = b[k] ^ b[k-p] ^ b[k-n]`` for ``k = n .. len-1`` (0 for the raw sequence)."""
    n, p, size = spec.order, spec.tap, bits.size
    return bits[n:] ^ bits[n - p:size - p] ^ bits[:size - n]


def detect_pattern(bits: np.ndarray, candidates=None) -> PatternDetection | None:
    """Find the O.150 pattern and polarity of received hard bits.

    For each candidate the recurrence check ``c[k] = b[k] ^ b[k-p] ^ b[k-n]`` is
    evaluated at every ``k >= n``.  It is 0 throughout for the raw register output
    and 1 throughout for its complement; a bit error upsets the (up to) three checks
    that contain it.  With ``m`` checks of which ``h`` hold for the better polarity,
    the score is the binomial z-score ``z = (2h - m) / sqrt(m)``.  The candidate with
    the highest ``z`` is returned when ``z >= DETECT_Z_MIN`` (5.0); see
    :data:`DETECT_Z_MIN` for the false-detection bound on random bits.

    Parameters
    ----------
    bits : numpy.ndarray
        Received hard bits, 0/1.
    candidates : iterable of str, optional
        Pattern names to try (default: all of :data:`PATTERNS`).

    Returns
    -------
    PatternDetection or None
        None when no candidate reaches the threshold, when the bits are all equal
        (a constant input satisfies every recurrence and identifies nothing), or
        when fewer than ``3 * order`` bits are available for every candidate
        (candidates longer than a third of the input are skipped).

    Notes
    -----
    At bit error rate ``e`` a check holds with probability ``(1 + (1-2e)**3)/2``,
    so ``z`` grows like ``(1-2e)**3 * sqrt(m)``: at ``e = 0.1`` about 100 checks
    suffice, at ``e = 0.2`` about 540.
    """
    b = _as_bits(bits)
    names = list(PATTERNS) if candidates is None else list(candidates)
    unknown = [nm for nm in names if nm not in PATTERNS]
    if unknown:
        raise ValueError(f"unknown pattern(s) {unknown}; known: {list(PATTERNS)}")
    if b.size == 0 or b.min() == b.max():
        return None
    best: tuple[float, PatternDetection] | None = None
    for nm in names:
        spec = PATTERNS[nm]
        if b.size < 3 * spec.order:
            continue
        c = _checks(b, spec)
        m = c.size
        ones = int(np.count_nonzero(c))
        zeros = m - ones
        held = max(ones, zeros)
        z = (2 * held - m) / math.sqrt(m)
        complement_of_raw = ones > zeros
        det = PatternDetection(nm, bool(complement_of_raw != spec.inverted), held / m)
        if best is None or z > best[0]:
            best = (z, det)
    if best is None or best[0] < DETECT_Z_MIN:
        return None
    return best[1]
