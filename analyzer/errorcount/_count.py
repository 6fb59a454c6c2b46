"""The error count: first sync, loss of sync, slips and bit errors against a reference.

:func:`count_errors` is a short sequence of steps over one frozen :class:`_Scan`
(the received bits, the window, the aligner): first sync (from a hint or from
proposed alignments), then, window by window, loss of sync, re-alignment and
slips, each stretch of counted bits kept as a segment; the segments give the
mask and the expected bits.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ._align import _Aligner, _signed
from ._patterns import PATTERNS, _as_bits
from ._reference import Reference

__all__ = ["ErrorCount", "count_errors", "sync_bits_needed", "LOSS_OF_SYNC_RATE", "HINT_MAX_RATE"]

LOSS_OF_SYNC_RATE = 0.35
"""Window error rate above which sync is taken as lost (and below which an
alignment is accepted).  It lies between the highest BER we expect to measure
(0.2) and the 0.5 of a misaligned comparison; at BER 0.2 a 64-bit window exceeds
it with probability about 1e-3, and such a false alarm only costs a re-check
(the re-sync finds the same alignment and counting continues)."""


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



#: A PRBS alignment hint is taken without proposing candidates only when its
#: error rate is at most this: any other alignment of an m-sequence agrees
#: with the received bits half the time, so none can then beat it.
HINT_MAX_RATE = 0.25




def _order(ref: Reference) -> int:
    """Bits of one alignment-proposing window: the register length of a PRBS, ``ceil(log2(L+1))``
    for an explicit pattern of length L (at least 1)."""
    return (PATTERNS[ref.name].order if ref.is_prbs
            else max(1, math.ceil(math.log2(ref.period + 1))))


def sync_bits_needed(ref: Reference) -> int:
    """The fewest received bits with which :func:`count_errors` (default window) can sync.

    An alignment is accepted on at least ``2W`` bits after the window that
    proposed it (see :func:`count_errors`): for a PRBS that window is ``order``
    bits long, so ``2W + order`` bits are needed (PN23: W = 184, 391 bits).
    """
    order = _order(ref)
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
    order = _order(ref)
    W = max(64, 8 * order) if window is None else int(window)
    if W < 8:
        raise ValueError(f"window must be at least 8 bits, got {W}")
    if b.size < W:
        return _unsynced(ref.label, b.size)
    sc = _Scan(b, _Aligner(b, ref), W, order)
    first = _from_hint(sc, alignment_hint) if alignment_hint is not None and ref.is_prbs else None
    if first is None:
        first = _acquire(sc, 0)
    if first is None:
        return _unsynced(ref.label, b.size)
    segments, slips = _follow(sc, *first)
    return _result(sc, ref.label, first, segments, slips)


@dataclass(frozen=True, eq=False)
class _Scan:
    """What every step of one count reads: the received bits, the aligner, the window W and the
    length of one alignment-proposing window (``order``)."""

    bits: np.ndarray
    aligner: _Aligner
    window: int
    order: int

    @property
    def n_bits(self) -> int:
        return int(self.bits.size)


def _unsynced(label: str, n_bits: int) -> ErrorCount:
    """The count of bits no alignment was found for."""
    return ErrorCount(label, 0, 0, 0, False, np.zeros(n_bits, dtype=bool), np.zeros(n_bits, dtype=np.uint8), -1)


def _acquire(sc: _Scan, start: int) -> tuple[int, int] | None:
    """First accepted alignment at or after ``start``: (a, first counted bit)."""
    W, n_bits, al = sc.window, sc.n_bits, sc.aligner
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
            if key[0] <= LOSS_OF_SYNC_RATE and (found is None or key < found[0]):
                found = (key, a, c0)
        if found is not None:
            return found[1], found[2]
        if hi == n_bits:
            return None
        s += 2 * W
    return None


def _from_hint(sc: _Scan, a: int) -> tuple[int, int] | None:
    """First sync seeded from the earliest window in the first 4W that agrees with ``a``."""
    W, n_bits, order, al, b = sc.window, sc.n_bits, sc.order, sc.aligner, sc.bits
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


def _find_loss(sc: _Scan, a: int, scan: int) -> int | None:
    """Start of the first window of W bits from ``scan`` with more than ``r*W`` errors."""
    W, n_bits, b = sc.window, sc.n_bits, sc.bits
    chunk = max(64 * W, 1 << 16)
    pos = scan
    while pos + W <= n_bits:
        hi = min(n_bits, pos + chunk)
        e = (b[pos:hi] != sc.aligner.expected(a, pos, hi)).astype(np.int32)
        cs = np.concatenate([[0], np.cumsum(e)])
        bad = np.flatnonzero(cs[W:] - cs[:-W] > LOSS_OF_SYNC_RATE * W)
        if bad.size:
            return pos + int(bad[0])
        if hi == n_bits:
            return None
        pos = hi - W + 1
    return None


def _realign(sc: _Scan, a: int, k: int) -> int | None:
    """The best accepted alignment after a loss window at ``k`` (``a`` itself when it still wins), or None."""
    W, n_bits, al = sc.window, sc.n_bits, sc.aligner
    j = k + W
    t_hi = min(n_bits, j + 4 * W)
    if t_hi - j < 2 * W:
        return None
    cands = {c for c, _ in al.candidates(k, min(n_bits, k + 16 * W), 2 * W)} | {a}
    rates = sorted((al.error_rate(c, j, t_hi), c != a, c) for c in cands)
    return rates[0][2] if rates[0][0] <= LOSS_OF_SYNC_RATE else None


def _slip_split(sc: _Scan, a: int, new: int, lo: int, t_hi: int) -> tuple[int, int]:
    """Where a slip from ``a`` to ``new`` happened in ``[lo, t_hi)``: the split ``s`` and the bits
    ``m`` inserted there (see :func:`count_errors`, *Slip*)."""
    b, al = sc.bits, sc.aligner
    d = _signed(new - a, al.period)
    m = -d if d < 0 and -d <= (t_hi - lo) // 2 else 0
    e_old = (b[lo:t_hi] != al.expected(a, lo, t_hi))
    e_new = (b[lo:t_hi] != al.expected(new, lo, t_hi))
    co = np.concatenate([[0], np.cumsum(e_old)])
    cn = np.concatenate([[0], np.cumsum(e_new)])
    split = np.arange(0, t_hi - lo - m + 1)
    cost = co[split] + (cn[-1] - cn[split + m])
    return lo + int(np.argmin(cost)), m


def _last_good(sc: _Scan, a: int, lo: int, j: int) -> int:
    """End of counting under ``a`` when no alignment is accepted after a loss: the point in
    ``[lo, j]`` minimising ``errors - r*bits`` before it."""
    e_old = (sc.bits[lo:j] != sc.aligner.expected(a, lo, j))
    co = np.concatenate([[0], np.cumsum(e_old)])
    return lo + int(np.argmin(co - LOSS_OF_SYNC_RATE * np.arange(co.size)))


def _follow(sc: _Scan, a: int, seg: int) -> tuple[list[tuple[int, int, int]], int]:
    """From the first sync (alignment ``a`` from bit ``seg``) to the end: the counted segments
    ``(lo, hi, alignment)`` and the number of slips."""
    W, n_bits = sc.window, sc.n_bits
    segments, slips, scan = [], 0, seg
    while True:
        k = _find_loss(sc, a, scan)
        if k is None:
            segments.append((seg, n_bits, a))
            break
        j = k + W
        best = _realign(sc, a, k)
        lo = max(seg, k - 2 * W)
        if best == a:                      # error burst, alignment still right
            scan = j
            continue
        if best is not None:               # slip to a new alignment
            s, m = _slip_split(sc, a, best, lo, min(n_bits, j + 4 * W))
            segments.append((seg, s, a))
            slips += 1
            a, seg = best, s + m
            scan = max(seg, k + 1)
            continue
        # no acceptable alignment right after the loss
        segments.append((seg, _last_good(sc, a, lo, j), a))
        nxt = _acquire(sc, j)
        if nxt is None:
            break
        if nxt[0] != a:
            slips += 1
        a, seg = nxt
        scan = seg
    return segments, slips


def _result(sc: _Scan, label: str, first: tuple[int, int], segments, slips: int) -> ErrorCount:
    """The count from the first sync and the counted segments."""
    b, al = sc.bits, sc.aligner
    counted = np.zeros(b.size, dtype=bool)
    expected = np.zeros(b.size, dtype=np.uint8)
    a0, sync_position = first
    expected[:sync_position] = al.expected(a0, 0, sync_position)
    for lo, hi, a in segments:
        if hi > lo:
            counted[lo:hi] = True
            expected[lo:hi] = al.expected(a, lo, hi)
    n_counted = int(np.count_nonzero(counted))
    n_err = int(np.count_nonzero(b[counted] != expected[counted]))
    return ErrorCount(label, n_counted, n_err, slips, True, counted, expected, sync_position, a0)
