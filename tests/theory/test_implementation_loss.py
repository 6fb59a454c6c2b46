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
