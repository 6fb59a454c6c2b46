"""The JSON report of a level sweep (keys documented in ``sweep.schema.json``)."""

from __future__ import annotations

from ._json import _num, _pair

SWEEP_METHOD = ("Implementation loss L minimises the sum of w_i (Eb/N0_i - L - R(BER_i))^2, R the Eb/N0 ideal "
                "noncoherent orthogonal BFSK needs (1/2 exp(-Eb/2N0)); weights from the 95% intervals of Eb/N0 and "
                "BER; interval widened when the points scatter more than their intervals. Points with no bit "
                "errors are left out of the fit (they only bound L from above).")

SWEEP_SCHEMA_ID = "https://tonepair.invalid/schema/sweep-1.json"


def sweep_report(points, fit) -> dict:
    """JSON-ready report of a level sweep (``batch.SweepPoint`` list, ``batch.LossFit``); points listed by
    Eb/N0 (lowest first)."""
    from .. import __version__, theory

    out = []
    for p, used, res, ub in zip(points, fit.used, fit.residuals_db, fit.upper_bounds_db):
        out.append({"path": p.path, "ebn0_db": _num(p.ebn0_db), "ebn0_db_ci95": _pair(p.ebn0_db_ci95),
                    "ber": _num(p.ber), "ber_ci95": _pair(p.ber_ci95), "errors": int(p.errors),
                    "bits": int(p.bits), "used": bool(used), "residual_db": _num(res),
                    "loss_upper_bound_db": _num(ub)})
    out.sort(key=lambda q: (q["ebn0_db"] is None, q["ebn0_db"] if q["ebn0_db"] is not None else 0.0))
    return {"$schema": SWEEP_SCHEMA_ID, "tool": {"name": "tonepair", "version": __version__},
            "implementation_loss_db": _num(fit.loss_db), "implementation_loss_db_ci95": _pair(fit.loss_db_ci95),
            "target_ber": fit.target_ber, "ebn0_at_target_db": _num(fit.ebn0_at_target_db),
            "ebn0_at_target_db_ci95": _pair(fit.ebn0_at_target_db_ci95),
            "ebn0_ideal_at_target_db": _num(theory.ebn0_required_db(fit.target_ber)),
            "chi2": _num(fit.chi2), "method": SWEEP_METHOD, "points": out}
