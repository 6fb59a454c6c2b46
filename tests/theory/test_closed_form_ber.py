"""Closed-form BER of noncoherent binary FSK and the Eb/N0 a BER needs, against published formulas.

References:
* Proakis & Salehi, *Digital Communications* -- noncoherent binary signalling (from memory)
* Sklar, *Digital Communications* -- noncoherent BFSK curves (from memory)
* scipy.stats (ncx2, rice, rayleigh) and scipy.integrate.quad as general-purpose reference
  implementations.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, special, stats

from analyzer import theory
from analyzer.theory import LinkModel


def db2lin(x_db):
    return 10.0 ** (np.asarray(x_db, dtype=float) / 10.0)


@pytest.mark.parametrize("ebn0_db", [0.0, 5.0, 10.0, 13.4])
def test_ber_orthogonal_formula(ebn0_db):
    # Reference: Pb = 1/2 exp(-Eb/2N0), noncoherent orthogonal BFSK (Proakis & Salehi,
    # Sklar; from memory).  Tolerance: rel 1e-12.
    x = 10.0 ** (ebn0_db / 10.0)
    assert theory.ber_orthogonal(x) == pytest.approx(0.5 * math.exp(-x / 2.0), rel=1e-12)


@pytest.mark.parametrize("ebn0_db", [3.0, 9.0, 12.0])
def test_ber_orthogonal_against_rice_rayleigh_integral(ebn0_db):
    # Reference: square-law error event |z0| > |z1| with |z1| Rician and |z0| Rayleigh
    # (independent), integrated with scipy.stats.rice / rayleigh and scipy.integrate.quad.
    # N0 = 1: per-dimension sigma = sqrt(1/2).  Tolerance: rel 1e-8.
    x = 10.0 ** (ebn0_db / 10.0)
    s = math.sqrt(0.5)
    nu = math.sqrt(x)
    f = lambda r: stats.rice.pdf(r / s, nu / s) / s * stats.rayleigh.sf(r / s)
    ref, _ = integrate.quad(f, 0.0, nu + 20.0, epsabs=0.0, epsrel=1e-11, limit=200)
    assert theory.ber_orthogonal(x) == pytest.approx(ref, rel=1e-8)


def test_handbook_required_ebn0():
    # Reference: noncoherent orthogonal BFSK needs about 10.9 dB for 1e-3 and about
    # 13.4 dB for 1e-5 (standard textbook curves, e.g. Sklar; from memory).  Tolerance 0.1 dB.
    req = theory.ebn0_required_db([1e-3, 1e-5])
    assert req[0] == pytest.approx(10.9, abs=0.1)
    assert req[1] == pytest.approx(13.4, abs=0.1)


def test_ber_correlated_limits():
    # Reference: the Proakis & Salehi correlated form (from memory) reduces to
    # 1/2 exp(-Eb/2N0) at rho = 0 and to 1/2 at |rho| = 1.  Tolerance: rel 1e-12.
    x = db2lin(np.linspace(-5.0, 20.0, 11))
    np.testing.assert_allclose(theory.ber_correlated(x, 0.0), 0.5 * np.exp(-x / 2.0), rtol=1e-12)
    np.testing.assert_allclose(theory.ber_correlated(x, 1.0), np.full_like(x, 0.5), rtol=1e-12)
    np.testing.assert_allclose(theory.ber_correlated(x, 1j), np.full_like(x, 0.5), rtol=1e-12)


def test_ber_correlated_formula_with_scipy_marcum():
    # Reference: Pb = Q1(a,b) - 1/2 exp(-(a^2+b^2)/2) I0(ab), a,b = sqrt(Eb/2N0 (1 -/+
    # sqrt(1-|rho|^2))) (Proakis & Salehi, from memory), with Q1 from scipy.stats.ncx2
    # and I0 from scipy.special.i0e.  Tolerance: rel 1e-8.
    x, rho = np.meshgrid(db2lin(np.linspace(0.0, 15.0, 7)), [0.05, 0.19, 0.5, 0.9])
    root = np.sqrt(1.0 - rho**2)
    a = np.sqrt(x / 2.0 * (1.0 - root))
    b = np.sqrt(x / 2.0 * (1.0 + root))
    ref = stats.ncx2.sf(b**2, 2, a**2) - 0.5 * np.exp(-0.5 * (b - a) ** 2) * special.i0e(a * b)
    np.testing.assert_allclose(theory.ber_correlated(x, rho), ref, rtol=1e-8)


def test_bell202_tone_correlation():
    # Reference: 1200/2200 Hz tones at 1200 Bd (common practice, from memory): spacing
    # 1000 Hz, |rho| = |sinc(1000/1200)| = sin(5 pi/6)/(5 pi/6) = 3/(5 pi) ~ 0.19.
    rho = abs(np.sinc(1000.0 / 1200.0))
    assert rho == pytest.approx(3.0 / (5.0 * math.pi), rel=1e-12)
    assert rho == pytest.approx(0.19, abs=0.002)


@pytest.mark.parametrize("ebn0_db", [5.0, 10.0, 13.0])
def test_ber_correlated_against_conditional_integral(ebn0_db):
    # Independent numerical evaluation at |rho| = 0.19 (N0 = 1, tone 1 sent, phase 0):
    # z1 = sqrt(E) + n1, and given z1, z0 ~ CN(rho z1, 1 - |rho|^2) (Gaussian conditioning
    # with covariance [[1, rho], [rho*, 1]] and leakage rho sqrt(E)).  So
    # Pb = int rice_pdf(r) * P(|z0|^2 > r^2 | |z1| = r) dr with the inner probability from
    # scipy.stats.ncx2 and the outer density from scipy.stats.rice.  Tolerance: rel 1e-7.
    rho = 0.19
    x = 10.0 ** (ebn0_db / 10.0)
    s = math.sqrt(0.5)
    nu = math.sqrt(x)
    v = (1.0 - rho**2) / 2.0

    def f(r):
        return (stats.rice.pdf(r / s, nu / s) / s
                * stats.ncx2.sf(r * r / v, 2, rho**2 * r * r / v))

    ref, _ = integrate.quad(f, 0.0, nu + 20.0, epsabs=0.0, epsrel=1e-11, limit=400,
                            points=[nu])
    assert theory.ber_correlated(x, rho) == pytest.approx(ref, rel=1e-7)


def test_ber_square_law_unequal_orthogonal_formula():
    # Reference: square-law detection of orthogonal tones with energies E0, E1:
    # Pb = 1/2 sum_i 1/2 exp(-E_i/2N0) (each conditional error from Proakis & Salehi,
    # from memory).  Tolerance: rel 1e-12.
    e0 = db2lin([3.0, 8.0, 11.0])
    e1 = db2lin([6.0, 9.5, 14.0])
    ref = 0.25 * (np.exp(-e0 / 2.0) + np.exp(-e1 / 2.0))
    np.testing.assert_allclose(theory.ber_square_law(e0, e1), ref, rtol=1e-12)


def _monte_carlo_square_law(e0, e1, rho, n, rng):
    """Square-law receiver on simulated branch outputs (N0 = 1)."""
    bits = rng.integers(0, 2, n)
    energy = np.where(bits == 1, e1, e0)
    phase = np.exp(2j * np.pi * rng.random(n))
    amp = np.sqrt(energy) * phase
    # Leakage: tone 1 sent -> branch 0 gets rho*sqrt(E1); tone 0 sent -> branch 1 gets
    # conj(rho)*sqrt(E0)  (rho = <w1, w0>).
    m0 = np.where(bits == 0, amp, rho * amp)
    m1 = np.where(bits == 1, amp, np.conj(rho) * amp)
    cov = np.array([[1.0, rho], [np.conj(rho), 1.0]])      # E[n0 n1*] = rho N0
    chol = np.linalg.cholesky(cov)
    w = (rng.standard_normal((2, n)) + 1j * rng.standard_normal((2, n))) / math.sqrt(2.0)
    noise = chol @ w
    z0 = m0 + noise[0]
    z1 = m1 + noise[1]
    decided = (np.abs(z1) ** 2 > np.abs(z0) ** 2).astype(int)
    return int(np.count_nonzero(decided != bits))


@pytest.mark.parametrize("e0_db,e1_db,rho", [
    (9.0, 10.5, 0.19 * np.exp(0.7j)),   # unequal energies, Bell-202-like correlation
    (8.5, 11.0, 0.0),                   # unequal energies, orthogonal
    (10.0, 10.0, 0.45),                 # equal energies, strongly correlated
])
def test_ber_square_law_monte_carlo(e0_db, e1_db, rho):
    # Reference: Monte Carlo of the square-law decision on complex Gaussian branch outputs
    # (numpy), 4e5 trials with random bits, so the error count is Binomial(n, Pb).  The count
    # must fall inside the central 99.9 % band of scipy.stats.binom at the predicted Pb.
    n = 400_000
    rng = np.random.default_rng(20240611)
    e0, e1 = 10.0 ** (e0_db / 10.0), 10.0 ** (e1_db / 10.0)
    pb = float(theory.ber_square_law(e0, e1, rho))
    assert 3e-3 < pb < 5e-2
    errors = _monte_carlo_square_law(e0, e1, rho, n, rng)
    lo, hi = stats.binom.interval(0.999, n, pb)
    assert lo <= errors <= hi, (errors, lo, hi, pb * n)


def test_link_model_closed_form_names():
    # Reference: thresholds stated in analyzer.theory (|rho| < 0.02, |imbalance| < 0.1 dB).
    assert theory.CORRELATION_NEGLIGIBLE == 0.02
    assert theory.IMBALANCE_NEGLIGIBLE_DB == 0.1
    assert LinkModel().closed_form == "orthogonal"
    assert LinkModel(0.0199, 0.099).closed_form == "orthogonal"
    assert LinkModel(0.02, 0.0).closed_form == "correlated"
    assert LinkModel(0.0, -0.1).closed_form == "unequal-energy"
    assert LinkModel(0.19, 1.0).closed_form == "unequal-energy correlated"
    with pytest.raises(ValueError):
        LinkModel(1.2, 0.0)


def test_ber_expected_unequal_energy_split():
    # Reference: average Eb = (E_low + E_high)/2 with E_high/E_low = 10^(imb/10), then the
    # orthogonal unequal-energy square-law form 1/4 (exp(-E_low/2N0) + exp(-E_high/2N0))
    # (Proakis & Salehi, from memory).  Tolerance: rel 1e-12.
    x = db2lin(np.linspace(0.0, 16.0, 9))
    r = 10.0 ** (2.0 / 10.0)
    e_lo, e_hi = 2 * x / (1 + r), 2 * x * r / (1 + r)
    ref = 0.25 * (np.exp(-e_lo / 2) + np.exp(-e_hi / 2))
    np.testing.assert_allclose(theory.ber_expected(x, LinkModel(0.0, 2.0)), ref, rtol=1e-12)
    np.testing.assert_allclose(theory.ber_expected(x, LinkModel(0.0, -2.0)), ref, rtol=1e-12)


def test_thresholds_change_required_ebn0_little():
    # Reference: the orthogonal closed form 1/2 exp(-Eb/2N0) (Proakis & Salehi, from memory).
    # Just at the thresholds, keeping the small correlation and imbalance moves the required
    # Eb/N0 by at most 0.015 dB at BER 1e-3 .. 1e-6 (tolerance of the documented claim).
    for ber in (1e-3, 1e-6):
        ideal = -2.0 * math.log(2.0 * ber)
        at_threshold = LinkModel(0.020001, 0.100001)
        assert at_threshold.closed_form == "unequal-energy correlated"
        req = float(theory.ebn0_required_db(ber, at_threshold))
        assert req == pytest.approx(10 * math.log10(ideal), abs=0.015)

MODELS = [LinkModel(), LinkModel(0.19, 0.0), LinkModel(0.0, 1.5), LinkModel(0.19, 1.5),
          LinkModel(0.6, 3.0)]


@pytest.mark.parametrize("model", MODELS, ids=lambda m: m.closed_form)
def test_round_trip_and_monotone(model):
    # Reference: exact inverse -- ebn0_required_db(ber_expected(x)) must return x;
    # tolerance 1e-6 dB.  Both curves must decrease strictly (BER falls with Eb/N0).
    x_db = np.linspace(-5.0, 25.0, 31)
    ber = theory.ber_expected(db2lin(x_db), model)
    assert np.all(np.diff(ber) < 0)
    back = theory.ebn0_required_db(ber, model)
    np.testing.assert_allclose(back, x_db, rtol=0, atol=1e-6)
    req = theory.ebn0_required_db(np.logspace(-12, -0.31, 40), model)
    assert np.all(np.diff(req) < 0)


@pytest.mark.parametrize("model", [LinkModel(0.95, 10.0), LinkModel(0.999, 0.0), LinkModel(0.0, 20.0),
                                   LinkModel(0.021, 0.11)], ids=str)
def test_round_trip_far_from_orthogonal(model):
    # Reference: exact inverse -- ebn0_required_db(ber_expected(x)) must return x, here for
    # strongly correlated or unequal tones (tones far from the orthogonal closed form, whose
    # inverse -2 ln(2 Pb) bounds the root from below) and just past both thresholds.
    # Tolerance 1e-9 dB over BER 1e-40 .. 0.3 (x_db >= -5, where the root is well conditioned).
    x_db = np.linspace(-5.0, 45.0, 26)
    ber = theory.ber_expected(db2lin(x_db), model)
    use = (ber > 1e-40) & (ber < 0.3)
    assert use.sum() >= 8
    back = theory.ebn0_required_db(ber[use], model)
    np.testing.assert_allclose(back, x_db[use], rtol=0, atol=1e-9)
    # scalar input gives the same value as the array path (numpy scalar, not a 0-d array)
    one = theory.ebn0_required_db(float(ber[use][0]), model)
    assert isinstance(one, np.float64) and one == pytest.approx(x_db[use][0], abs=1e-9)


def test_required_ebn0_orthogonal_inverse_and_conventions():
    # Reference: algebraic inverse of 1/2 exp(-x/2): x = -2 ln(2 Pb) (Proakis & Salehi,
    # from memory).  Tolerance 1e-9 dB.  Conventions: nan for BER >= 0.5, +inf for BER <= 0.
    p = np.array([0.3, 1e-2, 1e-4, 1e-8, 1e-15, 1e-100])
    ref = 10 * np.log10(-2.0 * np.log(2.0 * p))
    np.testing.assert_allclose(theory.ebn0_required_db(p), ref, rtol=0, atol=1e-9)
    out = theory.ebn0_required_db([0.5, 0.7, 0.0, np.nan])
    assert np.isnan(out[0]) and np.isnan(out[1]) and out[2] == np.inf and np.isnan(out[3])
    assert float(theory.ebn0_required_db(1e-3, LinkModel(1.0, 0.0))) == np.inf
