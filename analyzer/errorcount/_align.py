"""Proposing alignments of received bits with a reference: state-table votes (PRBS), circular correlation (explicit pattern).

An alignment ``a`` means received bit ``k`` is compared with reference bit
``(k + a) mod period``.  :mod:`._count` accepts, follows and counts them.
"""

from __future__ import annotations

import numpy as np

from ._patterns import PATTERNS, _aligned, _state_table, _window_states
from ._reference import Reference

#: Alignments proposed at a time.
_N_CANDIDATES = 16


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
