"""Implementation loss against theory, its interval, and its split into named causes.

Implementation loss is positive when the link does worse than theory: measured
Eb/N0 (dB) minus the Eb/N0 (dB) the reference model needs for the measured BER.
Pure functions on floats and small frozen dataclasses; no I/O.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ._binomial import clopper_pearson
from ._closed_form import BER_LIMIT, LinkModel, ebn0_required_db

__all__ = ["LossEstimate", "implementation_loss_db", "LossParts", "loss_parts"]


@dataclass(frozen=True)
class LossEstimate:
    """Implementation loss and its approximate 95 % interval.

    Attributes
    ----------
    value : float
        Measured Eb/N0 minus required Eb/N0, dB (positive = worse than theory);
        ``nan`` when there were no errors (or the BER is at/above 0.5).
    ci95 : tuple of float
        ``(lo, hi)`` in dB; ``nan`` for an end that is not bounded by the data
        (``lo`` with zero errors), ``+inf`` for ``hi`` when the BER interval
        reaches 0.5.
    ber_used : float
        The measured BER ``errors / bits`` used for ``value``.
    """

    value: float
    ci95: tuple[float, float]
    ber_used: float


def implementation_loss_db(ebn0_db, ebn0_ci95_db, errors, bits,
                           reference_model: LinkModel = LinkModel()) -> LossEstimate:
    """Implementation loss of a measured link against a reference model.

    Parameters
    ----------
    ebn0_db : float
        Measured average Eb/N0, dB.
    ebn0_ci95_db : (float, float)
        95 % interval of the measured Eb/N0, dB.
    errors, bits : int
        Bit errors and bits compared.
    reference_model : LinkModel, optional
        Model the link is compared with; default ideal orthogonal BFSK.

    Returns
    -------
    LossEstimate
        ``value = ebn0_db - ebn0_required_db(errors/bits, reference_model)``.

    Notes
    -----
    Let ``R(p) = ebn0_required_db(p)`` (decreasing in ``p``), ``[pL, pH]`` the
    Clopper--Pearson 95 % interval of the BER and ``[E_lo, E_hi]`` the Eb/N0
    interval.  With ``R = R(p_hat)``::

        lo = value - sqrt((ebn0_db - E_lo)^2 + (R(pL) - R)^2)
        hi = value + sqrt((E_hi - ebn0_db)^2 + (R - R(pH))^2)

    i.e. the half-widths of the two intervals are added in quadrature on each
    side.  This is an approximation that treats the Eb/N0 and BER estimates as
    independent and each interval as a one-sigma-like scale; it is not an exact
    coverage statement.  If ``pH >= 0.5`` the upper end is ``+inf``.

    With zero errors there is no point estimate (``value = nan``) and only an
    upper bound, taken conservatively from the two interval ends together:
    ``ci95 = (nan, E_hi - R(pH))``.

    References
    ----------
    .. [1] C. J. Clopper and E. S. Pearson, *Biometrika*, 1934 (BER interval)
       -- from memory.
    """
    e = float(ebn0_db)
    e_lo, e_hi = (float(v) for v in ebn0_ci95_db)
    k = int(errors)
    n = int(bits)
    ber = k / n
    p_lo, p_hi = (float(v) for v in clopper_pearson(k, n, 0.95))

    r_at_hi = _required_db(p_hi, reference_model)
    if k == 0:
        return LossEstimate(math.nan, (math.nan, e_hi - r_at_hi), ber)

    if ber >= BER_LIMIT:
        r_at_lo = _required_db(p_lo, reference_model)
        # No point estimate; the loss is at least (E_lo - R(pL)).
        return LossEstimate(math.nan, (e_lo - r_at_lo, math.inf), ber)

    r = _required_db(ber, reference_model)
    r_at_lo = _required_db(p_lo, reference_model)
    value = e - r
    lo = value - math.hypot(e - e_lo, r_at_lo - r)
    hi = value + math.hypot(e_hi - e, r - r_at_hi) if math.isfinite(r_at_hi) else math.inf
    return LossEstimate(value, (lo, hi), ber)


def _required_db(p: float, model: LinkModel) -> float:
    """:func:`ebn0_required_db` of ``p``; ``-inf`` at or above :data:`BER_LIMIT`.

    There theory needs no Eb/N0 at all, which sends the corresponding loss bound to ``+inf``.
    """
    if p >= BER_LIMIT:
        return -math.inf
    return float(ebn0_required_db(p, model))


@dataclass(frozen=True)
class LossParts:
    """The implementation loss split into named parts (dB, at the measured BER)."""

    total_db: float
    correlation_db: float
    imbalance_db: float
    rest_db: float
    template_db: float = float("nan")
    shaping_db: float = float("nan")


def loss_parts(total_db: float, ber: float, model: LinkModel,
               template_db: float = float("nan"), shaping_db: float = float("nan")) -> LossParts:
    """Split ``total_db`` (against ideal orthogonal equal-energy BFSK) into causes.

    ``correlation`` is the extra Eb/N0 equal-energy tones of the measured
    correlation need at the measured BER, ``imbalance`` the further extra the
    measured imbalance costs, and ``rest`` what remains (timing, frequency and
    pulse-shape errors, interference, estimation error).

    ``shaping_db`` (the physical Eb/N0 less the correlators' own reading, see
    :func:`analyzer.estimate.with_physical_ebn0`) is what pulse shaping,
    filters and intersymbol interference cost the correlators: part of
    ``total_db`` (the measured Eb/N0 is the signal energy at the capture), named
    as its own cause and taken out of ``rest`` when finite.  ``template_db``
    (optional, from :func:`analyzer.diagnostics.measured_pulse`) is the energy the rectangular
    template fails to collect from the measured pulse, reported beside the split.
    """
    t = float(template_db)
    sh = float(shaping_db)
    if not (np.isfinite(total_db) and 0 < ber < 0.5):
        return LossParts(float(total_db), float("nan"), float("nan"), float("nan"), t, sh)
    ideal = float(ebn0_required_db(ber))
    corr_only = LinkModel(tone_correlation=model.tone_correlation, imbalance_db=0.0)
    c = float(ebn0_required_db(ber, corr_only)) - ideal
    both = float(ebn0_required_db(ber, model)) - ideal
    rest = float(total_db) - both - (sh if np.isfinite(sh) else 0.0)
    return LossParts(float(total_db), c, both - c, rest, t, sh)
