"""Checks of analyzer.theory against published formulas, handbook values and scipy.

Every check names its reference beside it.  References used:
* Proakis & Salehi, *Digital Communications* -- noncoherent binary signalling (from memory)
* Sklar, *Digital Communications* -- noncoherent BFSK curves (from memory)
* Marcum 1950 / Simon & Alouini -- Marcum Q definition (from memory)
* Clopper & Pearson 1934 -- exact binomial interval (from memory)
* scipy.stats (ncx2, rice, rayleigh, binom, binomtest) and scipy.integrate.quad
  as general-purpose reference implementations.
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


# ---------------------------------------------------------------------------
# Marcum Q
# ---------------------------------------------------------------------------
def test_marcum_q1_against_ncx2_grid():
    # Reference: Q1(a, b) = P(chi'^2_2(a^2) > b^2) = scipy.stats.ncx2.sf(b^2, 2, a^2)
    # (Marcum 1950 definition, from memory).  Tolerance: rel 1e-8.
    # scipy's ncx2 tail itself loses accuracy below ~1e-250 (checked against quadrature
    # of the defining integral), so the grid comparison uses reference values >= 1e-250;
    # the deeper tail is checked against quadrature below.
    g = np.concatenate([np.linspace(0.0, 40.0, 81), [0.01, 7.3, 19.999, 20.001, 39.99]])
    a, b = np.meshgrid(g, g)
    q = theory.marcum_q1(a, b)
    ref = stats.ncx2.sf(b**2, 2, a**2)
    use = ref >= 1e-250
    assert use.sum() > 4000
    np.testing.assert_allclose(q[use], ref[use], rtol=1e-8, atol=0)


def test_marcum_q1_near_diagonal_against_ncx2():
    # Reference: scipy.stats.ncx2.sf(b^2, 2, a^2) along a ~ b, the hardest region for
    # the series.  Tolerance: rel 1e-8.
    d = np.linspace(0.0, 40.0, 201)
    for off in (0.0, 1e-7, 1e-3, 0.3):
        np.testing.assert_allclose(theory.marcum_q1(d, d + off),
                                   stats.ncx2.sf((d + off) ** 2, 2, d**2), rtol=1e-8)
        np.testing.assert_allclose(theory.marcum_q1(d + off, d),
                                   stats.ncx2.sf(d**2, 2, (d + off) ** 2), rtol=1e-8)


@pytest.mark.parametrize("a,b", [(2.0, 39.0), (3.5, 39.5), (5.0, 40.0), (1.5, 38.5)])
def test_marcum_q1_deep_tail_against_quadrature(a, b):
    # Reference: the defining integral Q1(a,b) = int_b^inf x exp(-(x^2+a^2)/2) I0(ax) dx
    # (Marcum 1950, from memory), by scipy.integrate.quad with the factor exp(-(b-a)^2/2)
    # taken out so the integrand is O(1).  Values are ~1e-300 .. 1e-268.  Tolerance: rel 1e-8.
    c = 0.5 * (b - a) ** 2
    val, _ = integrate.quad(lambda x: x * np.exp(-0.5 * (x - a) ** 2 + c) * special.ive(0, a * x),
                            b, np.inf, epsabs=0.0, epsrel=1e-12, limit=200)
    ref = val * math.exp(-c)
    assert ref > 1e-300
    assert theory.marcum_q1(a, b) == pytest.approx(ref, rel=1e-8, abs=0.0)


def test_marcum_q1_edges():
    # Reference: Q1(0, b) = exp(-b^2/2) and Q1(a, 0) = 1 (Simon & Alouini, from memory).
    b = np.linspace(0.0, 38.0, 77)
    np.testing.assert_allclose(theory.marcum_q1(0.0, b), np.exp(-0.5 * b**2), rtol=1e-12, atol=0)
    np.testing.assert_allclose(theory.marcum_q1(b, 0.0), np.ones_like(b), rtol=0, atol=1e-15)


# ---------------------------------------------------------------------------
# Closed-form BER
# ---------------------------------------------------------------------------
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


# ---------------------------------------------------------------------------
# Link model, expected BER and its inverse
# ---------------------------------------------------------------------------
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


# ---------------------------------------------------------------------------
# Binomial statistics
# ---------------------------------------------------------------------------
CASES = [(0, 1), (1, 1), (0, 10), (3, 10), (10, 10), (1, 37), (0, 1000), (7, 1000),
         (999, 1000), (123, 12345), (1, 10**6), (50, 10**6), (0, 10**7), (10**5, 10**7)]


@pytest.mark.parametrize("level", [0.95, 0.99])
def test_clopper_pearson_against_binomtest(level):
    # Reference: scipy.stats.binomtest(k, n).proportion_ci(method='exact')
    # (Clopper & Pearson 1934, from memory).  Tolerance: rel 1e-7, abs 1e-12: binomtest
    # finds its limits by root finding, good only to ~6e-9 relative / ~2.3e-13 absolute at
    # n = 1e6 .. 1e7 (the closed-form test below checks the ends to rel 1e-12).
    for k, n in CASES:
        ref = stats.binomtest(k, n).proportion_ci(confidence_level=level, method="exact")
        lo, hi = theory.clopper_pearson(k, n, level)
        assert lo == pytest.approx(ref.low, rel=1e-7, abs=1e-12), (k, n)
        assert hi == pytest.approx(ref.high, rel=1e-7, abs=1e-12), (k, n)
    # Vectorised call must agree with the scalar references too.
    k = np.array([c[0] for c in CASES])
    n = np.array([c[1] for c in CASES])
    lo, hi = theory.clopper_pearson(k, n, level)
    ref_hi = [stats.binomtest(int(a), int(b)).proportion_ci(level, "exact").high for a, b in CASES]
    np.testing.assert_allclose(hi, ref_hi, rtol=1e-7, atol=1e-12)
    assert lo[0] == 0.0 and hi[1] == 1.0


@pytest.mark.parametrize("level", [0.95, 0.99])
@pytest.mark.parametrize("n", [1, 10, 1000, 10**6, 10**9])
def test_clopper_pearson_closed_form_ends(n, level):
    # Reference: closed forms of the exact interval (Clopper & Pearson 1934, from memory):
    # k = 0 -> hi = 1 - (alpha/2)^(1/n);  k = 1 -> lo = 1 - (1 - alpha/2)^(1/n);
    # k = n -> lo = (alpha/2)^(1/n).  Tolerance: rel 1e-12.
    half = (1.0 - level) / 2.0
    lo0, hi0 = theory.clopper_pearson(0, n, level)
    lo1, _ = theory.clopper_pearson(1, n, level)
    lon, hin = theory.clopper_pearson(n, n, level)
    assert hi0 == pytest.approx(-math.expm1(math.log(half) / n), rel=1e-12)
    assert lo1 == pytest.approx(-math.expm1(math.log1p(-half) / n), rel=1e-12)
    assert lon == pytest.approx(math.exp(math.log(half) / n), rel=1e-12)
    assert lo0 == 0.0 and hin == 1.0


@pytest.mark.parametrize("p,n", [(1e-2, 200_000), (1e-5, 10**6), (0.3, 50), (1e-3, 12345)])
def test_binomial_band_tails(p, n):
    # Reference: scipy.stats.binom.cdf / sf: each tail outside the band holds at most
    # (1 - level)/2 = 5e-4, and widening by one count on either side would not be needed
    # (the band is the tightest quantile band).  Tolerance: exact integer counts.
    lo, hi = theory.binomial_band(p, n, 0.999)
    assert stats.binom.cdf(lo - 1, n, p) <= 5e-4 < stats.binom.cdf(lo, n, p)
    assert stats.binom.sf(hi, n, p) <= 5e-4 < stats.binom.sf(hi - 1, n, p)


# ---------------------------------------------------------------------------
# Implementation loss
# ---------------------------------------------------------------------------
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
