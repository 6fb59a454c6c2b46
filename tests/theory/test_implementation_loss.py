"""Implementation loss and its interval against the closed form it is defined by.

References: Proakis & Salehi, *Digital Communications* -- noncoherent binary signalling
(from memory); Clopper & Pearson 1934 (from memory), evaluated with scipy.stats.
"""

from __future__ import annotations

import math

import pytest
from scipy import stats

from analyzer import theory
from analyzer.theory import LinkModel


def _req_orthogonal_db(p):
    # Algebraic inverse of 1/2 exp(-x/2) (Proakis & Salehi, from memory).
    return 10 * math.log10(-2.0 * math.log(2.0 * p))


def test_implementation_loss_value_and_interval():
    # Reference: loss = measured Eb/N0 - Eb/N0 ideal BFSK needs for the measured BER, the
    # inverse taken algebraically, BER interval from scipy.stats.binomtest (exact), half-
    # widths added in quadrature.  Tolerance 1e-6 dB.
    ebn0_db, ci = 12.0, (11.6, 12.5)
    k, n = 100, 100_000
    est = theory.implementation_loss_db(ebn0_db, ci, k, n)
    cp = stats.binomtest(k, n).proportion_ci(0.95, "exact")
    r = _req_orthogonal_db(k / n)
    r_lo_ber, r_hi_ber = _req_orthogonal_db(cp.low), _req_orthogonal_db(cp.high)
    value = ebn0_db - r
    assert est.value == pytest.approx(value, abs=1e-6)
    assert est.value == pytest.approx(1.06, abs=0.01)   # 12 dB vs ~10.94 dB for 1e-3
    assert est.ber_used == pytest.approx(1e-3, rel=1e-15)
    lo_ref = value - math.hypot(ebn0_db - ci[0], r_lo_ber - r)
    hi_ref = value + math.hypot(ci[1] - ebn0_db, r - r_hi_ber)
    assert est.ci95[0] == pytest.approx(lo_ref, abs=1e-6)
    assert est.ci95[1] == pytest.approx(hi_ref, abs=1e-6)


def test_implementation_loss_zero_errors_upper_bound_only():
    # Reference: with 0 errors the exact upper BER limit 1 - 0.025^(1/n)
    # (scipy.stats.binomtest, exact) gives the only bound: E_hi - required(p_hi).
    # Tolerance 1e-6 dB.
    n = 50_000
    est = theory.implementation_loss_db(14.0, (13.5, 14.4), 0, n)
    p_hi = stats.binomtest(0, n).proportion_ci(0.95, "exact").high
    assert p_hi == pytest.approx(1.0 - 0.025 ** (1.0 / n), rel=1e-9)
    assert math.isnan(est.value) and math.isnan(est.ci95[0])
    assert est.ci95[1] == pytest.approx(14.4 - _req_orthogonal_db(p_hi), abs=1e-6)
    assert est.ber_used == 0.0


def test_implementation_loss_correlated_reference_is_smaller():
    # Reference: at |rho| = 0.19 the correlated form needs more Eb/N0 than orthogonal tones
    # for 1e-3 (Proakis & Salehi form, checked above against scipy.stats); the loss against
    # that model is the orthogonal loss minus the difference of the two required Eb/N0.
    # Tolerance 1e-6 dB.
    m = LinkModel(0.19, 0.0)
    ideal = theory.implementation_loss_db(12.0, (11.8, 12.2), 200, 200_000)
    vs_model = theory.implementation_loss_db(12.0, (11.8, 12.2), 200, 200_000, m)
    gap = float(theory.ebn0_required_db(1e-3, m)) - _req_orthogonal_db(1e-3)
    assert gap > 0.1
    assert vs_model.value == pytest.approx(ideal.value - gap, abs=1e-6)


def _required_db_by_brentq(pb_of_x, ber):
    """Eb/N0 (dB) at which pb_of_x (linear Eb/N0 -> BER) equals ber, by scipy.optimize.brentq."""
    from scipy.optimize import brentq

    return brentq(lambda y: math.log(pb_of_x(10 ** (y / 10))) - math.log(ber), -5.0, 30.0, xtol=1e-12)


def _pb_correlated(x, rho):
    # Pb = Q1(a,b) - 1/2 exp(-(a^2+b^2)/2) I0(ab), a,b = sqrt(Eb/2N0 (1 -/+ sqrt(1-|rho|^2)))
    # (Proakis & Salehi, from memory); Q1 from scipy.stats.ncx2, I0 from scipy.special.i0e
    from scipy import special

    root = math.sqrt(1.0 - rho ** 2)
    a, b = math.sqrt(x / 2.0 * (1.0 - root)), math.sqrt(x / 2.0 * (1.0 + root))
    return float(stats.ncx2.sf(b * b, 2, a * a) - 0.5 * math.exp(-0.5 * (b - a) ** 2) * special.i0e(a * b))


def _pb_unequal(x, imbalance_db):
    # square-law BER with unequal energies, Pb = 1/4 (exp(-E_lo/2N0) + exp(-E_hi/2N0)), the average
    # Eb/N0 x split at E_hi/E_lo = r (Proakis & Salehi, from memory)
    r = 10 ** (imbalance_db / 10)
    return 0.25 * (math.exp(-x / (1 + r)) + math.exp(-x * r / (1 + r)))


@pytest.mark.parametrize("model", [LinkModel(0.3, 0.0), LinkModel(0.0, 2.0)], ids=lambda m: m.closed_form)
def test_loss_parts_are_the_extra_eb_n0_of_the_published_error_rates(model):
    ber, total, shaping = 1e-3, 2.5, 0.4
    ideal = _req_orthogonal_db(ber)
    if model.correlated:
        corr, imb = _required_db_by_brentq(lambda x: _pb_correlated(x, model.tone_correlation), ber) - ideal, 0.0
    else:
        corr, imb = 0.0, _required_db_by_brentq(lambda x: _pb_unequal(x, model.imbalance_db), ber) - ideal
    parts = theory.loss_parts(total, ber, model, 0.2, shaping)
    # tolerance: the two root searches (1e-12 dB) and the closed forms' rounding, 1e-6 dB
    assert parts.correlation_db == pytest.approx(corr, abs=1e-6)
    assert parts.imbalance_db == pytest.approx(imb, abs=1e-6)
    assert parts.rest_db == pytest.approx(total - corr - imb - shaping, abs=1e-6)   # the documented split
    assert (parts.total_db, parts.template_db, parts.shaping_db) == (total, 0.2, shaping)
    assert max(corr, imb) > 0.1                              # the model's part is not negligible here
    # without a finite shaping part nothing is taken out of the rest; no split at or above BER 1/2
    assert theory.loss_parts(total, ber, model).rest_db == pytest.approx(total - corr - imb, abs=1e-6)
    assert math.isnan(theory.loss_parts(total, 0.5, model).rest_db)
