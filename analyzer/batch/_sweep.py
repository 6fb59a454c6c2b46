"""One link measured at several levels: a single implementation loss fitted across points.

Pure functions on floats and frozen dataclasses; no I/O.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .. import theory
from ..errors import InputError

__all__ = ["SweepPoint", "LossFit", "fit_loss"]

Z95 = 1.959963984540054        # two-sided 95% point of the standard normal


@dataclass(frozen=True)
class SweepPoint:
    """One capture of the sweep: pooled Eb/N0 and bit error count."""

    path: str
    ebn0_db: float
    ebn0_db_ci95: tuple[float, float]
    errors: int
    bits: int

    @property
    def ber(self) -> float:
        return self.errors / self.bits if self.bits else math.nan

    @property
    def ber_ci95(self) -> tuple[float, float]:
        lo, hi = theory.clopper_pearson(self.errors, self.bits)
        return float(lo), float(hi)


@dataclass(frozen=True)
class LossFit:
    """The fitted implementation loss and what follows from it.

    Attributes
    ----------
    loss_db, loss_db_ci95 : float, (float, float)
        Implementation loss L (positive = worse than ideal) and its 95% interval.
    target_ber : float
        BER at which the required Eb/N0 is stated.
    ebn0_at_target_db, ebn0_at_target_db_ci95 : float, (float, float)
        Ideal requirement at ``target_ber`` plus L (and its interval).
    used : tuple of bool
        Which points entered the fit (False: no errors, BER >= 0.5 or no Eb/N0).
    residuals_db : tuple of float
        ``ebn0_i - L - R(ber_i)`` of each point (nan for unused points).
    upper_bounds_db : tuple of float
        For points with zero errors, the upper bound on L they imply,
        ``E_hi - R(p_hi)`` (nan otherwise).
    chi2 : float
        Weighted sum of squared residuals.
    """

    loss_db: float
    loss_db_ci95: tuple[float, float]
    target_ber: float
    ebn0_at_target_db: float
    ebn0_at_target_db_ci95: tuple[float, float]
    used: tuple[bool, ...]
    residuals_db: tuple[float, ...]
    upper_bounds_db: tuple[float, ...]
    chi2: float


def fit_loss(points: list[SweepPoint], target_ber: float = 1e-3,
             model: theory.LinkModel = theory.LinkModel()) -> LossFit:
    """Weighted least-squares fit of one implementation loss across sweep points.

    Minimises ``sum_i w_i (E_i - L - R(p_i))^2`` with ``E_i`` the measured Eb/N0
    (dB), ``p_i`` the measured BER and ``R`` = :func:`analyzer.theory.ebn0_required_db`
    (ideal noncoherent orthogonal BFSK by default).  The solution is the weighted
    mean ``L = sum w_i d_i / sum w_i`` of ``d_i = E_i - R(p_i)``.

    Parameters
    ----------
    points : list of SweepPoint
    target_ber : float, optional
        In (0, 0.5); default 1e-3.
    model : LinkModel, optional
        Reference model for ``R``.

    Returns
    -------
    LossFit

    Raises
    ------
    InputError
        ``target_ber`` outside (0, 0.5), or no point with at least one error
        (and BER below 0.5) to fit.

    Notes
    -----
    Weights ``w_i = 1 / (s_E^2 + s_R^2)``: ``s_E`` is the half-width of the
    Eb/N0 95% interval over 1.96, ``s_R = (R(p_lo) - R(p_hi)) / (2 * 1.96)`` from
    the Clopper-Pearson interval mapped through ``R``, i.e. each interval is read
    as a normal one (an approximation for few errors).  The standard error of L
    is ``1/sqrt(sum w)``, scaled up by ``sqrt(chi2 / (n - 1))`` when the points
    scatter more than their intervals say (n >= 2); the interval is
    ``L -/+ 1.96 se``.  Points with zero errors carry no point estimate of BER:
    they are left out of the fit and reported as upper bounds on L
    (``E_hi - R(p_hi)``).  Points at BER >= 0.5 are also left out.  The Eb/N0 at
    the target is ``R(target_ber) + L``, with the interval of L.

    References
    ----------
    .. [1] Weighted least squares / inverse-variance weighted mean, common practice.
    .. [2] C. J. Clopper and E. S. Pearson, *Biometrika*, 1934 (BER interval) -- from memory.
    """
    if not (isinstance(target_ber, (int, float)) and 0.0 < target_ber < 0.5):
        raise InputError(f"target BER {target_ber!r} must lie between 0 and 0.5", None, "check --target-ber")
    used, d, w, bounds = [], [], [], []
    for p in points:
        ok = math.isfinite(p.ebn0_db) and p.bits > 0 and 0 < p.errors and p.ber < theory.BER_LIMIT
        lo, hi = p.ber_ci95
        e_lo, e_hi = p.ebn0_db_ci95
        if p.bits > 0 and p.errors == 0 and math.isfinite(e_hi) and hi < theory.BER_LIMIT:
            bounds.append(float(e_hi - theory.ebn0_required_db(hi, model)))
        else:
            bounds.append(math.nan)
        used.append(ok)
        if not ok:
            d.append(math.nan)
            w.append(0.0)
            continue
        r = float(theory.ebn0_required_db(p.ber, model))
        r_lo_p = float(theory.ebn0_required_db(lo, model))          # lo > 0 since errors > 0
        r_hi_p = float(theory.ebn0_required_db(min(hi, 0.499999), model))
        s_e = (e_hi - e_lo) / (2 * Z95) if math.isfinite(e_hi - e_lo) else 1.0
        s_r = (r_lo_p - r_hi_p) / (2 * Z95)
        d.append(p.ebn0_db - r)
        w.append(1.0 / max(s_e ** 2 + s_r ** 2, 1e-12))
    dv, wv = np.array(d), np.array(w)
    m = np.array(used)
    n = int(m.sum())
    if n == 0:
        raise InputError("no sweep point has bit errors to fit an implementation loss", None,
                         "add captures at lower levels (a few hundred errors each is ideal), or more bits")
    L = float(np.sum(wv[m] * dv[m]) / np.sum(wv[m]))
    res = np.where(m, dv - L, np.nan)
    chi2 = float(np.sum(wv[m] * res[m] ** 2))
    se = 1.0 / math.sqrt(float(np.sum(wv[m])))
    if n >= 2:
        se *= max(1.0, math.sqrt(chi2 / (n - 1)))
    ci = (L - Z95 * se, L + Z95 * se)
    r_t = float(theory.ebn0_required_db(target_ber, model))
    return LossFit(loss_db=L, loss_db_ci95=ci, target_ber=float(target_ber), ebn0_at_target_db=r_t + L,
                   ebn0_at_target_db_ci95=(r_t + ci[0], r_t + ci[1]), used=tuple(bool(u) for u in used),
                   residuals_db=tuple(float(x) for x in res), upper_bounds_db=tuple(bounds), chi2=chi2)
