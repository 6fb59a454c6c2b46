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

What the module offers:

* :func:`prbs_sequence` -- the patterns themselves.
* :func:`detect_pattern` -- which pattern and polarity received bits follow, from the
  recurrence checks (binomial z-score >= :data:`DETECT_Z_MIN`).
* :class:`Reference`, :func:`parse_bits_text` -- what to compare with: an O.150
  pattern or an explicit cyclic pattern given as the text of a bits file.
* :func:`count_errors` -- alignment, loss of sync (window error rate above
  :data:`LOSS_OF_SYNC_RATE`), slips and bit errors.

No I/O happens here: callers read files and pass their text.
"""

from __future__ import annotations

import functools
import math
import re
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError

__all__ = [
    "PatternSpec",
    "PATTERNS",
    "prbs_sequence",
    "PatternDetection",
    "detect_pattern",
    "DETECT_Z_MIN",
    "Reference",
    "parse_bits_text",
    "ErrorCount",
    "count_errors",
    "sync_bits_needed",
    "LOSS_OF_SYNC_RATE",
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


# ---------------------------------------------------------------------------
# References and bits files
# ---------------------------------------------------------------------------
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


# ---------------------------------------------------------------------------
# Alignment and error counting
# ---------------------------------------------------------------------------
LOSS_OF_SYNC_RATE = 0.35
"""Window error rate above which sync is taken as lost (and below which an
alignment is accepted).  It lies between the highest BER we expect to measure
(0.2) and the 0.5 of a misaligned comparison; at BER 0.2 a 64-bit window exceeds
it with probability about 1e-3, and such a false alarm only costs a re-check
(the re-sync finds the same alignment and counting continues)."""

_N_CANDIDATES = 16


@dataclass(frozen=True, eq=False)
class ErrorCount:
    """Result of comparing received bits with a reference.

    Attributes
    ----------
    reference : str
        :attr:`Reference.label` of the reference used.
    bits : int
        Number of bits compared (``counted.sum()``).
    errors : int
        Number of compared bits that differ from ``expected``.
    slips : int
        Number of times the alignment changed (bits inserted or deleted).
    synced : bool
        Whether an alignment was found at all.
    counted : numpy.ndarray
        bool mask, True for the bits that were compared.
    expected : numpy.ndarray
        uint8 reference bit for each received bit; meaningful where ``counted``
        (before the first sync it holds the first alignment extrapolated back,
        in excluded stretches after it 0).
    sync_position : int
        Index of the first compared bit, -1 when not synced.
    alignment : int
        The first alignment ``a`` (received bit ``k`` against reference bit
        ``(k + a) mod period``), -1 when not synced.
    """

    reference: str
    bits: int
    errors: int
    slips: int
    synced: bool
    counted: np.ndarray
    expected: np.ndarray
    sync_position: int
    alignment: int = -1

    @property
    def rate(self) -> float:
        """errors / bits (nan when nothing was compared)."""
        return self.errors / self.bits if self.bits else float("nan")


class _Aligner:
    """Reference period plus the machinery to propose alignments.

    An alignment ``a`` means ``expected[k] = seq[(k + a) % period]``.
    """

    def __init__(self, bits: np.ndarray, ref: Reference):
        self.bits = bits
        self.seq = ref.sequence()
        self.period = ref.period
        if ref.is_prbs:
            spec = PATTERNS[ref.name]
            self.seed = spec.order
            self.table = _state_table(ref.name)
            flip = spec.inverted != ref.inverted
            states = _window_states(bits, spec.order)
            if flip:
                states ^= np.int32((1 << spec.order) - 1)
            self.states = states
        else:
            self.seed = 0
            pm = 2.0 * self.seq - 1.0
            self.pattern_fft = np.fft.rfft(pm)

    def expected(self, a: int, lo: int, hi: int) -> np.ndarray:
        return _aligned(self.seq, a, lo, hi)

    def error_rate(self, a: int, lo: int, hi: int) -> float:
        return float(np.count_nonzero(self.bits[lo:hi] != self.expected(a, lo, hi))) / (hi - lo)

    def _vote_scores(self, ks: np.ndarray, off: np.ndarray, span: int) -> np.ndarray:
        """Error rate of each vote ``(k, offset)`` over the ``span`` bits after its window.

        Bits past the end are not counted; a vote with fewer than ``span // 2``
        bits left scores 1.  Error-free windows all vote for the same offset, so
        there are usually far fewer distinct offsets than votes: then the error
        indicator of each distinct offset is summed once over the stretch the
        votes cover and every vote's count is a difference of two running sums.
        Otherwise each vote's ``span`` bits are compared directly.  Both give
        the same integer counts.
        """
        n_bits = self.bits.size
        first = ks + self.seed                       # first bit scored by each vote
        n_in = np.clip(n_bits - first, 0, span)
        u_off, which = np.unique(off, return_inverse=True)
        base = int(first.min())
        end = int(min(n_bits, first.max() + span))
        width = max(end - base, 0)
        if u_off.size * width <= ks.size * span:
            m = np.arange(base, end, dtype=np.int64)
            err = self.bits[None, base:end] != self.seq[(m[None, :] + u_off[:, None]) % self.period]
            run = np.zeros((u_off.size, width + 1), dtype=np.int64)
            np.cumsum(err, axis=1, out=run[:, 1:])
            start = np.minimum(first - base, width)
            miss = run[which, start + n_in] - run[which, start]
        else:
            miss = np.empty(ks.size, dtype=np.int64)
            step = max(1, (1 << 20) // span)        # bounded memory per block
            lags = np.arange(span, dtype=np.int64)[None, :]
            for b0 in range(0, ks.size, step):
                cols = first[b0:b0 + step, None] + lags
                inside = cols < n_bits
                got = self.bits[np.minimum(cols, n_bits - 1)]
                want = self.seq[(cols + off[b0:b0 + step, None]) % self.period]
                miss[b0:b0 + step] = ((got != want) & inside).sum(axis=1)
        return np.where(n_in >= max(1, span // 2), miss / np.maximum(n_in, 1), 1.0)

    def candidates(self, lo: int, hi: int, span: int) -> list[tuple[int, int]]:
        """Up to ``_N_CANDIDATES`` alignments suggested by bits ``lo:hi``.

        Returns ``(a, k0)`` pairs, best first.  PRBS: every ``order``-bit window
        starting at ``k`` in ``lo:hi`` votes for the alignment its state lookup
        gives; each vote is scored by its error rate over the ``span`` bits after
        its window (one vectorised gather for all votes), an alignment takes the
        best score of its votes and ``k0`` is the start of its earliest vote.
        Explicit pattern: the highest circular-correlation peaks of ``lo:hi``,
        with ``k0 = lo``.
        """
        if self.seed:
            kmax = min(hi, self.states.size)
            if kmax <= lo:
                return []
            ks = np.arange(lo, kmax, dtype=np.int64)
            pos = self.table[self.states[lo:kmax]]
            ok = pos >= 0
            ks = ks[ok]
            if ks.size == 0:
                return []
            off = (pos[ok].astype(np.int64) - ks) % self.period
            score = self._vote_scores(ks, off, span)
            order = np.lexsort((ks, off))               # by offset, then position
            off_s, ks_s, score_s = off[order], ks[order], score[order]
            starts = np.flatnonzero(np.r_[True, off_s[1:] != off_s[:-1]])
            u_off, u_k = off_s[starts], ks_s[starts]    # earliest vote of each offset
            u_score = np.minimum.reduceat(score_s, starts)
            pick = np.lexsort((u_k, u_score))[:_N_CANDIDATES]
            return [(int(u_off[i]), int(u_k[i])) for i in pick]
        L = self.period
        x = 2.0 * self.bits[lo:hi] - 1.0
        if x.size == 0:
            return []
        x = np.concatenate([x, np.zeros((-x.size) % L)]).reshape(-1, L).sum(axis=0)
        # corr[c] = sum_i x[i] * p[(i + c) % L]  (circular cross-correlation)
        corr = np.fft.irfft(np.conj(np.fft.rfft(x)) * self.pattern_fft, n=L)
        pick = np.argsort(-corr, kind="stable")[:_N_CANDIDATES]
        return [(int((c - lo) % L), lo) for c in pick]


def _signed(d: int, period: int) -> int:
    """Map an alignment difference to ``[-period//2, period - period//2)``."""
    return (d + period // 2) % period - period // 2


#: A PRBS alignment hint is taken without proposing candidates only when its
#: error rate is at most this: any other alignment of an m-sequence agrees
#: with the received bits half the time, so none can then beat it.
HINT_MAX_RATE = 0.25


def sync_bits_needed(ref: Reference) -> int:
    """The fewest received bits with which :func:`count_errors` (default window) can sync.

    An alignment is accepted on at least ``2W`` bits after the window that
    proposed it (see :func:`count_errors`): for a PRBS that window is ``order``
    bits long, so ``2W + order`` bits are needed (PN23: W = 184, 391 bits).
    """
    order = (PATTERNS[ref.name].order if ref.is_prbs
             else max(1, math.ceil(math.log2(ref.period + 1))))
    return 2 * max(64, 8 * order) + (order if ref.is_prbs else 0)


def count_errors(bits: np.ndarray, ref: Reference, window: int | None = None,
                 alignment_hint: int | None = None) -> ErrorCount:
    """Align received bits with a reference, follow slips and count bit errors.

    Parameters
    ----------
    bits : numpy.ndarray
        Received hard bits, 0/1.
    ref : Reference
        What to compare with.
    window : int, optional
        Window length W in bits for sync decisions.  Default ``max(64, 8*order)``
        for a PRBS and ``max(64, 8*ceil(log2(L+1)))`` for an explicit pattern of
        length L.
    alignment_hint : int, optional
        PRBS: an alignment the first sync is likely to find (from an earlier
        count of nearly the same bits).  The first ``order``-bit window of the
        first ``4W`` that agrees with it is the vote first sync would seed from;
        when the ``4W`` bits after it give an error rate of at most
        :data:`HINT_MAX_RATE` the hint is accepted as first sync would accept
        it, without proposing candidates (the same result: every other
        alignment scores about 0.5 there).  Otherwise first sync runs as usual.

    Returns
    -------
    ErrorCount

    Notes
    -----
    Alignment ``a`` means received bit ``k`` is compared with reference bit
    ``(k + a) mod period``.  The rules, with ``r = LOSS_OF_SYNC_RATE = 0.35``:

    *Proposing alignments.*  PRBS: every run of ``order`` received bits is looked
    up in a table of the reference's ``order``-bit states (each non-zero state
    occurs once per period), giving one vote ``(position - k) mod period``.  A vote
    is right whenever its ``order`` bits are error free, which stays common enough
    up to BER 0.2.  Each vote is scored by its error rate over the ``2W`` bits
    after its window; the 16 best-scoring alignments are candidates.  Explicit
    pattern: circular cross-correlation (FFT) of the ±1 bits with the ±1 pattern;
    the 16 highest peaks are candidates.

    *Accepting an alignment.*  A candidate is accepted when its error rate over a
    stretch of ``4W`` bits (at least ``2W`` must be available) is at most ``r``.
    Random or misaligned bits give 0.5 there, at least 4.8 standard deviations
    above ``r``; a link at BER 0.2 gives 0.2, at least 6 below.

    *First sync.*  Candidates come from the first ``4W`` bits (then from later
    ``4W`` stretches, advancing by ``2W``, until one is accepted), each judged on
    the ``4W`` bits after its seed; the accepted one with the lowest error rate
    wins (ties: earliest seed).  PRBS: the seed is the first ``order``-bit window
    that voted for the winner; it and everything before it are not counted, so
    ``sync_position = k0 + order`` (those bits agree with the alignment by
    construction, and the bits before were passed over because their windows
    held errors).  Explicit pattern: counting starts at the start of the stretch
    the correlation used.

    *Loss of sync.*  Declared at the first window of ``W`` compared bits with more
    than ``r*W`` errors.  With that window ``[k, k+W)``, candidates come from
    ``[k, k+16W)``, the current alignment is added, and all are judged on the same
    ``[k+W, k+5W)``; the lowest error rate wins if accepted (ties favour the
    current alignment).  If the winner is the current alignment it was an error
    burst (or a false alarm, about 1e-3 per window at BER 0.2): counting continues
    unchanged.

    *Slip.*  If the best accepted candidate ``a'`` differs, the slip is
    ``d = a' - a`` (signed, modulo period): ``d < 0`` means ``-d`` bits were
    inserted, ``d > 0`` that ``d`` bits were deleted.  Over
    ``[max(segment start, k-2W), k+5W)`` the split ``s`` minimising
    (errors under ``a`` before ``s``) + (errors under ``a'`` from ``s + m``) is
    chosen, where ``m = -d`` for an insertion (the inserted bits ``[s, s+m)``
    have no reference and are not counted; ``m = 0`` if ``-d`` exceeds half the
    search span) and ``m = 0`` for a deletion.  Ties go to the earliest ``s``;
    every minimising split gives the same error total, so the count is not
    ambiguous (only the position is).  Each change of alignment is one slip.
    Choosing the split that minimises errors is slightly optimistic: a flip next
    to the slip point can be explained by moving the split, so at BER 0.2 a slip
    hides on average one or two errors (at BER <= 0.1 rarely more than one).
    Two slips closer than about ``W`` bits that cancel look like an error burst.

    *No alignment after loss.*  If no candidate is accepted, counting under the
    old alignment ends at the point ``t`` in ``[max(segment start, k-2W), k+W]``
    minimising ``errors - r*bits`` before ``t``; the search for a new alignment
    then starts at ``k+W`` as for the first sync, and the bits in between are not
    counted.  A slip is counted if the new alignment differs from the old one.
    If none is found, the rest is not counted.  Near the end of the bits a new
    alignment needs ``2W`` bits after the loss window to be accepted, so a slip in
    the last ``3W`` bits ends the count there; one in the last ``W`` bits may not
    be seen at all and then shows up as errors.
    """
    b = _as_bits(bits)
    n_bits = b.size
    counted = np.zeros(n_bits, dtype=bool)
    expected = np.zeros(n_bits, dtype=np.uint8)
    label = ref.label

    def unsynced() -> ErrorCount:
        return ErrorCount(label, 0, 0, 0, False, counted, expected, -1)

    if ref.is_prbs:
        order = PATTERNS[ref.name].order
    else:
        order = max(1, math.ceil(math.log2(ref.period + 1)))
    W = max(64, 8 * order) if window is None else int(window)
    if W < 8:
        raise ValueError(f"window must be at least 8 bits, got {W}")
    if n_bits < W:
        return unsynced()
    al = _Aligner(b, ref)
    r = LOSS_OF_SYNC_RATE

    def acquire(start: int) -> tuple[int, int] | None:
        """First accepted alignment at or after ``start``: (a, first counted bit)."""
        s = start
        while s < n_bits:
            hi = min(n_bits, s + 4 * W)
            found = None
            for a, k0 in al.candidates(s, hi, 2 * W):
                c0 = k0 + al.seed
                v_hi = min(n_bits, c0 + 4 * W)
                if v_hi - c0 < 2 * W:
                    continue
                key = (al.error_rate(a, c0, v_hi), c0)
                if key[0] <= r and (found is None or key < found[0]):
                    found = (key, a, c0)
            if found is not None:
                return found[1], found[2]
            if hi == n_bits:
                return None
            s += 2 * W
        return None

    chunk = max(64 * W, 1 << 16)

    def find_loss(a: int, scan: int) -> int | None:
        """Start of the first window of W bits from ``scan`` with > r*W errors."""
        pos = scan
        while pos + W <= n_bits:
            hi = min(n_bits, pos + chunk)
            e = (b[pos:hi] != al.expected(a, pos, hi)).astype(np.int32)
            cs = np.concatenate([[0], np.cumsum(e)])
            bad = np.flatnonzero(cs[W:] - cs[:-W] > r * W)
            if bad.size:
                return pos + int(bad[0])
            if hi == n_bits:
                return None
            pos = hi - W + 1
        return None

    def commit(lo: int, hi: int, a: int) -> None:
        if hi > lo:
            counted[lo:hi] = True
            expected[lo:hi] = al.expected(a, lo, hi)

    def from_hint(a: int) -> tuple[int, int] | None:
        """First sync seeded from the earliest window in the first 4W that agrees with ``a``."""
        a = int(a) % al.period
        hi = min(n_bits, 4 * W + order - 1)
        agree = np.concatenate(([0], np.cumsum(b[:hi] == al.expected(a, 0, hi))))
        whole = np.flatnonzero(agree[order:] - agree[:-order] == order)
        if whole.size == 0:
            return None
        c0 = int(whole[0]) + order
        v_hi = min(n_bits, c0 + 4 * W)
        if v_hi - c0 < 2 * W or al.error_rate(a, c0, v_hi) > HINT_MAX_RATE:
            return None
        return a, c0

    first = from_hint(alignment_hint) if alignment_hint is not None and ref.is_prbs else None
    if first is None:
        first = acquire(0)
    if first is None:
        return unsynced()
    a, seg = first
    sync_position = seg
    expected[:seg] = al.expected(a, 0, seg)
    slips = 0
    scan = seg
    while True:
        k = find_loss(a, scan)
        if k is None:
            commit(seg, n_bits, a)
            break
        j = k + W
        t_hi = min(n_bits, j + 4 * W)
        best = None
        if t_hi - j >= 2 * W:
            cands = {c for c, _ in al.candidates(k, min(n_bits, k + 16 * W), 2 * W)} | {a}
            rates = sorted((al.error_rate(c, j, t_hi), c != a, c) for c in cands)
            if rates[0][0] <= r:
                best = rates[0][2]
        lo = max(seg, k - 2 * W)
        if best == a:                      # error burst, alignment still right
            scan = j
            continue
        if best is not None:               # slip to a new alignment
            d = _signed(best - a, al.period)
            m = -d if d < 0 and -d <= (t_hi - lo) // 2 else 0
            e_old = (b[lo:t_hi] != al.expected(a, lo, t_hi))
            e_new = (b[lo:t_hi] != al.expected(best, lo, t_hi))
            co = np.concatenate([[0], np.cumsum(e_old)])
            cn = np.concatenate([[0], np.cumsum(e_new)])
            split = np.arange(0, t_hi - lo - m + 1)
            cost = co[split] + (cn[-1] - cn[split + m])
            s = lo + int(np.argmin(cost))
            commit(seg, s, a)
            slips += 1
            a, seg = best, s + m
            scan = max(seg, k + 1)
            continue
        # no acceptable alignment right after the loss
        e_old = (b[lo:j] != al.expected(a, lo, j))
        co = np.concatenate([[0], np.cumsum(e_old)])
        t = lo + int(np.argmin(co - r * np.arange(co.size)))
        commit(seg, t, a)
        nxt = acquire(j)
        if nxt is None:
            break
        if nxt[0] != a:
            slips += 1
        a, seg = nxt
        scan = seg
    n_counted = int(np.count_nonzero(counted))
    n_err = int(np.count_nonzero(b[counted] != expected[counted]))
    return ErrorCount(label, n_counted, n_err, slips, True, counted, expected, sync_position, first[0])
