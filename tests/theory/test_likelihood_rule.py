"""The likelihood-ratio rule for tones of unequal energy: its BER and its gain over square-law.

References: Proakis & Salehi, *Digital Communications* -- noncoherent detection, Rician and
Rayleigh envelope laws (from memory); Monte Carlo draws from scipy.stats.rice / rayleigh;
scipy.integrate.quad and scipy.optimize.brentq as general-purpose reference implementations;
binomial bands from scipy.stats.binom.
"""

from __future__ import annotations


import numpy as np
import pytest
from scipy import special, stats

from analyzer import theory
from analyzer.synth import SynthParams
from analyzer.theory import _likelihood  # private kernel, tested directly


def test_likelihood_rule_equal_energies_is_square_law():
    # Equal energies: the likelihood rule is the square-law rule, Pb = 1/2 exp(-Eb/2N0)
    # (Proakis & Salehi, from memory); relative tolerance 1e-5, gain within 0.01 dB of 0.
    for x in (2.0, 10.0, 30.0):
        assert theory.ber_likelihood(x, x) == pytest.approx(0.5 * np.exp(-x / 2), rel=1e-5)
    assert abs(theory.decision_gain(10.0, 0.0).gain_db) < 0.01


def test_likelihood_ber_monte_carlo():
    # Monte Carlo of the rule on envelopes drawn from scipy.stats.rice (sent) and rayleigh (not sent),
    # one real output of unit variance, g = sqrt(2 E/N0): E0/N0 = 13.3, E1/N0 = 6.67 (3 dB imbalance).
    e0, e1 = 40 / 3, 20 / 3
    g = np.sqrt(2 * np.array([e0, e1]))
    n = 200_000
    rng = np.random.default_rng(2)

    def lam(gi, r):   # ln I0(g r) - g^2/2
        return np.log(special.i0e(gi * r)) + gi * r - gi * gi / 2

    errs = 0
    for s in (0, 1):
        o = 1 - s
        rs = stats.rice.rvs(g[s], size=n, random_state=rng)
        ro = stats.rayleigh.rvs(size=n, random_state=rng)
        errs += np.count_nonzero(lam(g[o], ro) > lam(g[s], rs))
    pb = theory.ber_likelihood(e0, e1)
    lo, hi = stats.binom.ppf(5e-6, 2 * n, pb), stats.binom.isf(5e-6, 2 * n, pb)
    assert lo <= errs <= hi                  # binomial band of probability 1 - 1e-5 (false failure 1e-5) (scipy.stats.binom)
    # and the square-law rule at the same point, 1/4 (exp(-E0/2N0) + exp(-E1/2N0)) (Proakis & Salehi,
    # from memory), is worse by a margin far outside the Monte Carlo spread
    assert 0.25 * (np.exp(-e0 / 2) + np.exp(-e1 / 2)) > 2 * hi / (2 * n)


def test_tone_imbalance_3db(analyse_synth):
    a1 = 10 ** (-3 / 20)
    out = analyse_synth(SynthParams(continuous_phase=False,
                           ebn0_db=10.0, symbols_per_burst=3000, tone_amplitudes=(1.0, a1), seed=8))
    b = out.bursts[0]
    # Reference: the generator's amplitude ratio, 20 log10(a1) = -3 dB; tolerance 0.5 dB (issue 4).
    assert abs(b.stats.imbalance_db - (-3.0)) < 0.5
    assert b.theory_model.closed_form == "unequal-energy"
    # Square-law BER with unequal energies, Pb = 1/2 sum_i 1/2 exp(-E_i/2N0) (Proakis & Salehi, from
    # memory), at the generator's operating point: Eb/N0 = 10 dB average, E_high/E_low = a1^2.
    eb = 10 ** (10.0 / 10)
    e_lo, e_hi = 2 * eb / (1 + a1 ** 2), 2 * eb * a1 ** 2 / (1 + a1 ** 2)
    pb = 0.25 * (np.exp(-e_lo / 2) + np.exp(-e_hi / 2))
    lo, hi = stats.binom.ppf(5e-6, b.ber.bits, pb), stats.binom.isf(5e-6, b.ber.bits, pb)
    assert lo <= b.ber.errors <= hi          # binomial band of probability 1 - 1e-5 (false failure 1e-5) (scipy.stats.binom)
    # the likelihood-ratio rule gains about 1 dB here (see test_likelihood_ber_monte_carlo)
    assert 0.5 < b.decision_gain.gain_db < 1.5


def test_ln_i0_inverse_inverts_scipy_bessel():
    # private kernel: ber_likelihood reaches only a small part of this range (ln I0 beyond its
    # table starts near x = 2000, far above any Eb/N0 a test can integrate)
    from scipy import special

    x = np.concatenate([np.linspace(0.0, 5.0, 501), np.geomspace(5.0, 5000.0, 300)])
    c = np.log(special.i0e(x)) + x                       # reference: ln I0(x) from scipy.special.i0e
    got = _likelihood._ln_i0_inverse(c)
    np.testing.assert_allclose(got, x, rtol=1e-9, atol=1e-12)         # two Newton steps from the start


def test_likelihood_rule_error_matches_a_direct_integration():
    # private kernel: ber_likelihood gives only the mean of P(e|0) and P(e|1); each conditional
    # error probability, held to the reference on its own, has no public door
    from scipy import integrate

    # reference: P(e | 0 sent) for the likelihood rule by scipy.integrate.quad over the Rician
    # envelope (scipy.stats.rice) of the Rayleigh tail exp(-h^2/2), h from ln I0 by scipy.optimize
    from scipy.optimize import brentq
    from scipy import special

    g0, g1 = 3.0, 2.0

    def tail(r):
        c = np.log(special.i0e(g0 * r)) + g0 * r - 0.5 * g0 ** 2 + 0.5 * g1 ** 2
        if c <= 0:
            return 1.0
        h = brentq(lambda v: np.log(special.i0e(v)) + v - c, 0.0, c + 50.0) / g1
        return np.exp(-0.5 * h * h)

    ref = integrate.quad(lambda r: stats.rice.pdf(r, g0) * tail(r), 0.0, g0 + 12.0, limit=200)[0]
    got = float(_likelihood._lr_error_given(g0, g1)[0])
    assert got == pytest.approx(ref, rel=1e-8)            # quad's default relative tolerance, 1.5e-8


def _lr_reference(gs, go):
    """P(e | sent) of the likelihood rule by scipy.integrate.quad, the threshold by scipy.optimize.brentq."""
    from scipy import integrate, special
    from scipy.optimize import brentq

    def lnI0(v):
        return np.log(special.i0e(v)) + v                 # ln I0 from scipy.special.i0e

    def integrand(r):
        c = lnI0(gs * r) - 0.5 * gs ** 2 + 0.5 * go ** 2
        if c <= 0:
            t = 1.0
        elif go == 0:
            t = 0.0
        else:
            h = brentq(lambda v: lnI0(v) - c, 0.0, c + 50.0, xtol=1e-300, rtol=1e-15) / go
            t = np.exp(-0.5 * h * h)
        return r * np.exp(-0.5 * (r - gs) ** 2) * special.i0e(gs * r) * t   # scipy.stats.rice.pdf

    pts = None
    if gs > go:                                            # where the tail leaves 1: give quad the kink
        c0 = 0.5 * (gs * gs - go * go)
        pts = [brentq(lambda v: lnI0(v) - c0, 0.0, c0 + 50.0, xtol=1e-300, rtol=1e-15) / gs]
    return integrate.quad(integrand, 0.0, gs + 12.0, points=pts, limit=400, epsabs=0.0, epsrel=1e-12)[0]


@pytest.mark.parametrize("e_sent, e_other", [(15.6, 16.0), (13.3, 6.67), (6.67, 13.3), (10.0, 10.0), (2.0, 2.5),
                                              (40.0, 30.0), (500.0, 400.0), (15.0, 0.0), (0.0, 15.0),
                                              (0.01, 0.02)])
def test_likelihood_rule_quadrature_matches_adaptive_quad(e_sent, e_other):
    # private kernel, for the same reason as above: one conditional error probability per pair
    gs, go = np.sqrt(2 * e_sent), np.sqrt(2 * e_other)
    ref = _lr_reference(gs, go)                            # reference: scipy.integrate.quad, epsrel 1e-12
    got = _likelihood._lr_error_given(gs, go)
    assert got.shape == (1,)
    # tolerance: the composite Gauss-Legendre rule converges geometrically on each smooth piece
    # (about 1e-14 here); 1e-10 leaves room for the reference's own error
    assert got[0] == pytest.approx(ref, rel=1e-10, abs=1e-300)
    # several pairs in one call give each pair's value
    both = _likelihood._lr_error_given([gs, go], [go, gs])
    assert both[0] == pytest.approx(got[0], rel=1e-15, abs=1e-300)
    assert both[1] == pytest.approx(_lr_reference(go, gs), rel=1e-10, abs=1e-300)


@pytest.mark.parametrize("ebn0_db, imbalance_db", [(12.0, 0.15), (12.0, 1.0), (9.0, -2.5), (15.0, 4.0),
                                                    (6.0, 0.5)])
def test_decision_gain_root_matches_brentq(ebn0_db, imbalance_db):
    from scipy.optimize import brentq

    got = theory.decision_gain(10 ** (ebn0_db / 10), imbalance_db)
    r = 10 ** (abs(imbalance_db) / 10)

    def f(y_db):
        x = 10 ** (y_db / 10)
        return np.log(theory.ber_likelihood(2 * x / (1 + r), 2 * x * r / (1 + r))) - np.log(got.ber_square_law)

    # reference: scipy.optimize.brentq on the same equation over the documented bracket, to 1e-10 dB
    ref = brentq(f, ebn0_db - 6.0, ebn0_db + 0.5, xtol=1e-10)
    assert got.gain_db == pytest.approx(ebn0_db - ref, abs=1e-4)                 # the stated accuracy
    assert got.gain_db > 0
