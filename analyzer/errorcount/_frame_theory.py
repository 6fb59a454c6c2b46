"""Frame error rate theory: the rate predicted at the measured Eb/N0, and the implementation loss the measured rate shows.

Pure functions on numpy arrays and frozen dataclasses; no I/O.  The frames
themselves (NRZI, flags, zero-bit insertion, FCS) are in :mod:`._hdlc`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .. import theory
from ._hdlc import FrameCount, pool_counts

__all__ = ["FrameTheory", "FRAME_EDGE_SYMBOLS", "MIN_FRAMES_FOR_LOSS", "frame_error_rate", "frame_theory",
           "pooled_theory"]

#: Fewest frames for which an implementation loss is derived from the frame error rate.
MIN_FRAMES_FOR_LOSS = 10


@dataclass(frozen=True)
class FrameTheory:
    """Frame error rate theory predicts at the measured Eb/N0, and the loss the measured rate shows.

    Attributes
    ----------
    tone_error_rate : float
        Probability of a wrong tone decision at the measured Eb/N0.
    error_rate : float
        Predicted frame error rate, averaged over the frames found.
    loss : theory.LossEstimate or None
        Implementation loss from the frame error rate (at least
        :data:`MIN_FRAMES_FOR_LOSS` frames): measured Eb/N0 minus the Eb/N0
        ideal orthogonal noncoherent BFSK needs for the tone error rate that
        gives the measured frame error rate.
    """

    tone_error_rate: float
    error_rate: float
    loss: theory.LossEstimate | None


#: Symbols besides its on-air bits that a frame needs right: its two flags (16 bits) and, as NRZI
#: compares each symbol with the one before, the symbol before the opening flag.
FRAME_EDGE_SYMBOLS = 17


def frame_error_rate(tone_error_rate, on_air_bits) -> np.ndarray:
    """Frame error rate ``1 - (1 - p)^(n + 17)`` of frames with ``n`` on-air bits between their flags.

    Model: tone decisions err independently with probability ``p``.  With
    NRZI bit ``k`` compares symbols ``k - 1`` and ``k``, so a tone error
    changes two consecutive bits.  A frame is received intact when its ``n``
    on-air bits and its two flags (16 bits) are: those ``n + 16`` bits depend
    on ``n + 17`` symbols (the bits' own and the one before the first), the
    symbols of :func:`._hdlc.known_symbols`.  An error in the content changes it,
    and the 16-bit FCS misses a changed frame with probability of the order
    of 2^-16 (neglected); an error in a flag moves or removes it, so the frame
    runs into a neighbour and fails its FCS too.  With one flag shared
    between two frames, its loss joins them into one invalid frame, so the
    rate measured over the frames found then runs a little below this (by at
    most the flags' share of the symbols, ``16 / (n + 17)``, of it).

    References
    ----------
    .. [1] ISO/IEC 13239 (NRZI, flags, zero-bit insertion, FCS) -- from memory.
    .. [2] J. G. Proakis, *Digital Communications*, McGraw-Hill (independent
       symbol errors, block error probability ``1 - (1 - p)^n``) -- from memory.
    """
    p = np.asarray(tone_error_rate, dtype=float)
    n = np.asarray(on_air_bits, dtype=float)
    return -np.expm1((n + FRAME_EDGE_SYMBOLS) * np.log1p(-np.minimum(p, 1.0 - 1e-16)))


def _tone_rate_for(fer: float, bits: np.ndarray) -> float:
    """The tone error rate whose mean frame error rate over frames of ``bits`` is ``fer``."""
    from scipy import optimize

    if fer <= 0:
        return 0.0
    if fer >= float(np.mean(frame_error_rate(theory.BER_LIMIT, bits))):
        return theory.BER_LIMIT
    return float(optimize.brentq(_mean_rate_excess, 0.0, theory.BER_LIMIT, args=(bits, fer),
                                 xtol=1e-15, rtol=1e-12))


def _mean_rate_excess(p: float, bits: np.ndarray, fer: float) -> float:
    """Mean frame error rate at tone error rate ``p`` over frames of ``bits``, less ``fer``."""
    return float(np.mean(frame_error_rate(p, bits))) - fer


def frame_theory(ebn0: float, model: theory.LinkModel, count: FrameCount, ebn0_db: float,
                 ebn0_ci95_db: tuple[float, float]) -> FrameTheory | None:
    """Predicted frame error rate for the frames found, and the loss from the measured one.

    ``p = theory.ber_expected(ebn0, model)`` is the tone error rate at the
    measured Eb/N0 (linear) and tone plan; the prediction is the mean of
    :func:`frame_error_rate` over the frames found.  The loss inverts the
    measured frame error rate (and the ends of its Clopper-Pearson interval)
    to a tone error rate, then :func:`theory.ebn0_required_db`, and combines
    the two intervals as :func:`theory.implementation_loss_db` does.
    """
    if count.found == 0 or not np.isfinite(ebn0):
        return None
    bits = np.array([f.on_air_bits for f in count.frames], float)
    p = float(theory.ber_expected(ebn0, model))
    fer_th = float(np.mean(frame_error_rate(p, bits)))
    loss = None
    if count.found >= MIN_FRAMES_FOR_LOSS and np.isfinite(ebn0_db):
        loss = _loss(count, bits, ebn0_db, ebn0_ci95_db)
    return FrameTheory(tone_error_rate=p, error_rate=fer_th, loss=loss)


def pooled_theory(counts: list[FrameCount], theories: list[FrameTheory | None], ebn0_db: float,
                  ebn0_ci95_db: tuple[float, float]) -> FrameTheory | None:
    """Theory for the bursts' frames together: predictions averaged over the frames, one loss from the
    pooled count and the pooled Eb/N0."""
    pairs = [(c, t) for c, t in zip(counts, theories) if t is not None and c.found]
    if not pairs:
        return None
    w = np.array([c.found for c, _ in pairs], float)
    p = float(np.sum(w * [t.tone_error_rate for _, t in pairs]) / np.sum(w))
    fer = float(np.sum(w * [t.error_rate for _, t in pairs]) / np.sum(w))
    pooled = pool_counts([c for c, _ in pairs])
    loss = None
    if pooled.found >= MIN_FRAMES_FOR_LOSS and np.isfinite(ebn0_db):
        bits = np.array([f.on_air_bits for f in pooled.frames], float)
        loss = _loss(pooled, bits, ebn0_db, ebn0_ci95_db)
    return FrameTheory(tone_error_rate=p, error_rate=fer, loss=loss)


def _required_db(fer: float, bits: np.ndarray) -> float:
    """Eb/N0 (dB) ideal BFSK needs for the tone error rate giving frame error rate ``fer`` over frames of
    ``bits`` (``-inf`` at the rate limit, ``inf`` for no errors)."""
    p = _tone_rate_for(fer, bits)
    if p >= theory.BER_LIMIT:
        return -math.inf
    if p <= 0:
        return math.inf
    return float(theory.ebn0_required_db(p))


def _loss(count: FrameCount, bits: np.ndarray, e: float, e_ci: tuple[float, float]) -> theory.LossEstimate:
    e_lo, e_hi = (float(v) for v in e_ci)
    fer = count.error_rate
    r_hi = _required_db(count.ci95[1], bits)
    p_used = _tone_rate_for(fer, bits)
    if count.valid == count.found:
        return theory.LossEstimate(math.nan, (math.nan, e_hi - r_hi), p_used)
    r_lo = _required_db(count.ci95[0], bits) if count.ci95[0] > 0 else math.inf
    r = _required_db(fer, bits)
    if not math.isfinite(r):
        return theory.LossEstimate(math.nan, (e_lo - r_lo if math.isfinite(r_lo) else math.nan, math.inf), p_used)
    value = e - r
    lo = value - math.hypot(e - e_lo, r_lo - r) if math.isfinite(r_lo) else -math.inf
    hi = value + math.hypot(e_hi - e, r - r_hi) if math.isfinite(r_hi) else math.inf
    return theory.LossEstimate(value, (lo, hi), p_used)
