"""All bursts pooled: branch statistics, bit errors, expected BER, implementation loss, frames."""

from __future__ import annotations

import numpy as np

from .. import errorcount, estimate, theory
from ._results import BerCount, BurstResult, Summary

__all__ = ["summarise"]


def summarise(bursts: list[BurstResult]) -> Summary:
    """The bursts pooled: moments and energy sums added, bit and frame counts summed, theory bit-weighted."""
    if not bursts:
        return Summary(None, None, float("nan"), None)
    mom = estimate.pool_moments([b.moments for b in bursts])
    rho = float(np.mean([abs(b.rho) for b in bursts]))
    scale = float(np.mean([b.grid.samples_per_symbol / b.grid.window for b in bursts]))
    stats = estimate.branch_stats(mom, rho, scale, all(b.stats.data_aided for b in bursts))
    stats = estimate.with_physical_ebn0(stats, estimate.physical_ebn0(
        estimate.pool_energy([b.energy for b in bursts])))
    counted = [b.ber for b in bursts if b.ber is not None]
    ber = None
    if counted:
        bits = sum(c.bits for c in counted)
        errors = sum(c.errors for c in counted)
        lo, hi = theory.clopper_pearson(errors, bits)
        names = sorted({c.reference for c in counted})
        maps = sorted({c.tone_for_one for c in counted})
        ber = BerCount(reference=",".join(names), bits=bits, errors=errors,
                       rate=errors / bits if bits else float("nan"), ci95=(float(lo), float(hi)),
                       slips=sum(c.slips for c in counted), tone_for_one=",".join(maps))
    # expected BER of the pooled bits: the bit-weighted mean of each burst's theory
    w = np.array([b.ber.bits if b.ber is not None else b.n_symbols for b in bursts], float)
    th = np.array([b.ber_theory for b in bursts])
    ok = np.isfinite(th)
    ber_th = float(np.sum(w[ok] * th[ok]) / np.sum(w[ok])) if ok.any() else float("nan")
    loss = None
    if ber is not None and np.isfinite(stats.ebn0_db):
        loss = theory.implementation_loss_db(stats.ebn0_db, stats.ebn0_db_ci95, ber.errors, ber.bits)
    counts = [b.frames for b in bursts if b.frames is not None]
    fr = errorcount.pool_counts(counts) if counts else None
    fth = None
    if fr is not None and stats is not None:
        fth = errorcount.pooled_theory(counts, [b.frame_theory for b in bursts if b.frames is not None],
                                   stats.ebn0_db, stats.ebn0_db_ci95)
    reason = None
    if ber is None:
        reasons = list(dict.fromkeys(b.ber_reason for b in bursts if b.ber_reason))
        reason = reasons[0] if len(reasons) == 1 else "; ".join(
            f"burst {b.index}: {b.ber_reason}" for b in bursts if b.ber_reason) or None
    return Summary(stats=stats, ber=ber, ber_theory=ber_th, loss=loss, frames=fr, frame_theory=fth,
                   ber_reason=reason)
