"""The fast numerical kernels against general-purpose reference implementations.

Each kernel replaces a slower general routine on the hot path; here it is held
to that routine: numpy.exp for the block oscillator, scipy.stats.kstest /
scipy.stats.rice for the envelope checks, and a direct per-window sum for the
window energies.  The
model checks computed by hand are held to the scipy.stats routine each one
reproduces: scipy.stats.normaltest, scipy.stats.f_oneway, scipy.stats.kstest
and scipy.stats.norm, with numpy.corrcoef and numpy.polyfit for correlations
and slopes, the grouped branch moments to numpy.mean / numpy.cov, and the
measured pulse to its per-entry definition (numpy.exp).  The likelihood-rule
error integral is held to scipy.integrate.quad and the decision gain's root
to scipy.optimize.brentq.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from scipy import stats

from analyzer import branches, diagnostics, estimate, theory
from analyzer.estimate import GroupMoments
from analyzer.branches import _correlate  # private kernel, tested directly
from analyzer.diagnostics import _diagnostics  # private kernel, tested directly
from analyzer.theory import _likelihood  # private kernel, tested directly


@pytest.mark.parametrize("freq, first, count", [(12345.678, 0, 1000), (-0.31e6, 987_654_321, 5000),
                                                 (250e3, 3, 1)])
def test_oscillator_matches_numpy_exp(freq, first, count):
    fs = 1e6
    n = first + np.arange(count, dtype=np.float64)
    ref = np.exp(-2j * np.pi * np.mod(freq / fs * n, 1.0))      # reference: numpy.exp, phase reduced
    got = branches.oscillator(freq, fs, first, count)
    assert got.shape == (count,)
    # tolerance: a float64 phase of f/fs * n cycles carries ~1.1e-16 of that count (3e8 cycles here:
    # 3e-8 cycle, 2e-7 rad), in the reference as in the kernel
    assert np.max(np.abs(got - ref)) < 1e-15 * max(1.0, abs(freq / fs) * (first + count)) * 2 * np.pi + 1e-12


@pytest.mark.parametrize("first", [0, 123_456_789])
def test_correlate_matches_direct_template_sums(first):
    rng = np.random.default_rng(11)
    fs, tones = 1e6, (-50e3, 50e3)
    grid = branches.symbol_grid(first + 2.3, 20.37, 300)
    x = rng.standard_normal(6200) + 1j * rng.standard_normal(6200)
    got = branches.correlate(x, first, grid, tones, fs).z
    n = grid.first_samples[:, None] + np.arange(grid.window)[None, :]       # capture index of each sample
    # reference: the definition z_i = sum_n x[n] exp(-j 2 pi f_i n / fs) / sqrt(L), by numpy.exp with
    # the phase reduced modulo a cycle in exact integer arithmetic first (n f / fs = n / 20 here)
    ref = np.stack([np.sum(x[n - first] * np.exp(-2j * np.pi * np.mod(n * int(f / 1e3), 1000) / 1000), axis=1)
                    for f in tones], axis=1) / np.sqrt(grid.window)
    # tolerance: rounding only -- the kernel's float64 phase of f n / fs cycles (1.2e7 cycles at the
    # large offset) carries ~1e-16 of that count: 1.2e-9 cycle; sums of 20 unit samples are ~4.5
    tol = 1e-13 + 2 * np.pi * 1.2e-16 * abs(tones[0]) / fs * (first + 6200) * np.sqrt(grid.window) * 5
    assert np.max(np.abs(got - ref)) < tol


def test_window_energy_matches_direct_sums():
    rng = np.random.default_rng(7)
    fs, tones, L = 80000.0, (-4000.0, 6000.0), 16
    x = rng.standard_normal(700) + 1j * rng.standard_normal(700)
    got = branches.window_energy(x, 100, 150, 400, L, tones, fs)
    n = np.arange(150, 400)[:, None] + np.arange(L)[None, :]       # capture index of each window sample
    ref = sum(np.abs(np.sum(x[n - 100] * np.exp(-2j * np.pi * f * n / fs), axis=1)) ** 2 for f in tones) / L
    np.testing.assert_allclose(got, ref, rtol=1e-9)               # direct definition, rounding only


@pytest.mark.parametrize("sps", [20.0003, 20.5, 19.98, 16.0])
def test_window_products_equal_explicit_sums(sps):
    # reference: numpy.dot of each window with the templates, one symbol at a time
    rng = np.random.default_rng(int(sps * 100))
    x = rng.standard_normal(30000) + 1j * rng.standard_normal(30000)
    L = int(np.floor(sps + 0.02))
    base = rng.standard_normal((L, 2)) + 1j * rng.standard_normal((L, 2))
    first = np.ceil(7.3 + np.arange(1200) * sps - 1e-9).astype(np.int64)
    got = _correlate._window_products(x, first, L, base)
    ref = np.array([x[s:s + L] @ base for s in first])
    np.testing.assert_allclose(got, ref, rtol=1e-12, atol=1e-12)          # rounding only


@pytest.mark.parametrize("n, nu, sigma", [(2000, 3.0, 1.3), (50, 1.0, 0.7), (12000, 2.0, 1.0), (500, 0.0, 1.3)])
def test_ks_check_matches_scipy_kstest(n, nu, sigma):
    rng = np.random.default_rng(n)
    r = np.abs(nu + 1.1 * sigma * (rng.standard_normal(n) + 1j * rng.standard_normal(n)))
    law = stats.rice(nu / sigma, scale=sigma) if nu > 0 else stats.rayleigh(scale=sigma)
    ref = stats.kstest(r, law.cdf)                                 # reference: scipy.stats.kstest
    d, p = diagnostics.ks_test(diagnostics.envelope_cdf(r, nu, sigma))
    assert d == pytest.approx(ref.statistic, abs=2e-5)            # CDF interpolation error < 1e-5
    assert p == pytest.approx(ref.pvalue, rel=0.05, abs=1e-6)


def test_envelope_cdf_matches_scipy_rice():
    r = np.linspace(0.0, 9.0, 1000)
    for nu, sigma in ((0.5, 1.0), (4.0, 0.8), (0.0, 2.0)):
        law = stats.rice(nu / sigma, scale=sigma) if nu > 0 else stats.rayleigh(scale=sigma)
        np.testing.assert_allclose(diagnostics.envelope_cdf(r, nu, sigma), law.cdf(r), atol=1e-5)  # stated bound


# --------------------------------------------------------------------------- hand-computed scipy.stats tests
def _samples():
    rng = np.random.default_rng(42)
    return {"normal": rng.standard_normal(8000), "exponential": rng.exponential(size=3000),
            "student-t": rng.standard_t(5, size=500), "uniform": rng.uniform(size=200),
            "small": rng.standard_normal(8), "shifted": 1e6 + rng.standard_normal(4000)}


@pytest.mark.parametrize("name", list(_samples()))
def test_normal_test_matches_scipy_normaltest(name):
    x = _samples()[name]
    ref = stats.normaltest(x)                                      # reference: scipy.stats.normaltest
    k2, p = diagnostics.normal_test(x)
    # the same formulas on the same moments: rounding only (moments summed in another order)
    assert k2 == pytest.approx(ref.statistic, rel=1e-9, abs=1e-12)
    assert p == pytest.approx(ref.pvalue, rel=1e-8, abs=1e-300)


def test_normal_test_degenerate_samples_are_nan_like_scipy():
    for x in (np.ones(50), np.arange(7.0)):
        with warnings.catch_warnings():                            # scipy warns on both
            warnings.simplefilter("ignore")
            try:
                ref = stats.normaltest(x)                          # reference: scipy.stats.normaltest
            except ValueError:                                     # older scipy (1.11) refuses under 8 samples
                ref = None
        if ref is not None:
            assert np.isnan(ref.statistic) and np.isnan(ref.pvalue)
        else:
            assert x.size < 8
        k2, p = diagnostics.normal_test(x)
        assert np.isnan(k2) and np.isnan(p)


@pytest.mark.parametrize("sizes", [(32, 32, 33, 32), (500, 499, 500, 500, 500, 499, 500, 500), (40, 90)])
def test_f_test_oneway_matches_scipy_f_oneway(sizes):
    rng = np.random.default_rng(sum(sizes))
    groups = [rng.normal(0.05 * i, 1.0 + 0.1 * i, size=s) for i, s in enumerate(sizes)]
    ref = stats.f_oneway(*groups)                                  # reference: scipy.stats.f_oneway
    f, p = diagnostics.f_test_oneway(np.concatenate(groups), np.array(sizes))
    assert f == pytest.approx(ref.statistic, rel=1e-10)            # two-pass sums: rounding only
    assert p == pytest.approx(ref.pvalue, rel=1e-9, abs=1e-300)


def test_f_test_oneway_constant_groups_like_scipy():
    cases = [[np.full(5, 1.0), np.full(4, 2.0)], [np.full(5, 3.0), np.full(4, 3.0)]]
    for groups in cases:
        with warnings.catch_warnings():                            # scipy warns on both
            warnings.simplefilter("ignore")
            ref = stats.f_oneway(*groups)                          # reference: scipy.stats.f_oneway
        f, p = diagnostics.f_test_oneway(np.concatenate(groups), np.array([len(g) for g in groups]))
        np.testing.assert_equal([f, p], [ref.statistic, ref.pvalue])   # inf / 0 and nan / nan


def test_ebn0_trend_against_f_oneway_and_polyfit():
    rng = np.random.default_rng(3)
    n = 1000
    sent = rng.integers(0, 2, n)
    z = (rng.standard_normal((n, 2)) + 1j * rng.standard_normal((n, 2))) * 0.3
    amp = np.linspace(1.0, 1.3, n)                                 # a slow power ramp
    z[np.arange(n), sent] += amp * np.exp(1j * rng.uniform(0, 2 * np.pi, n))
    tr = diagnostics.ebn0_trend(z, sent, 1.25, blocks=8)
    p = np.abs(z) ** 2
    on, off = p[np.arange(n), sent], p[np.arange(n), 1 - sent]
    edges = np.linspace(0, n, 9).astype(int)
    blocks = [(on[a:b], off[a:b]) for a, b in zip(edges[:-1], edges[1:])]
    eb = [10 * np.log10((np.mean(a) - np.mean(b)) / np.mean(b) * 1.25) for a, b in blocks]
    np.testing.assert_allclose(tr.block_ebn0_db, eb, rtol=1e-12)                   # direct definition
    ref = stats.f_oneway(*[a - b for a, b in blocks])               # reference: scipy.stats.f_oneway
    assert tr.p_value == pytest.approx(ref.pvalue, rel=1e-8, abs=1e-300)
    slope = np.polyfit(np.arange(8), eb, 1)[0]                      # reference: numpy.polyfit
    assert tr.slope_db_per_block == pytest.approx(slope, rel=1e-10)
    assert tr.flagged == (ref.pvalue < diagnostics.FLAG_LEVEL)


@pytest.mark.parametrize("nu, sigma", [(0.001, 1.0), (0.7, 1.0), (2.0, 0.5), (6.0, 1.3), (30.0, 2.0)])
def test_envelope_cdf_hermite_bound(nu, sigma):
    # the stated interpolation bound, 1.2e-7, against scipy.stats.rice.cdf at points between the grid nodes
    rng = np.random.default_rng(int(nu * 10))
    r = np.abs(nu + sigma * (rng.standard_normal(3000) + 1j * rng.standard_normal(3000)) / np.sqrt(2))
    ref = stats.rice(nu / sigma, scale=sigma).cdf(r)               # reference: scipy.stats.rice
    np.testing.assert_allclose(diagnostics.envelope_cdf(r, nu, sigma), ref, rtol=0, atol=1.2e-7)


def test_output_correlations_match_numpy_corrcoef():
    rng = np.random.default_rng(11)
    n = 700
    sent = (rng.uniform(size=n) < 0.4).astype(np.uint8)
    mix = np.array([[1.0, 0.3, 0.0, 0.1], [0.0, 1.0, 0.2, 0.0], [0.0, 0.0, 1.0, 0.5], [0.0, 0.0, 0.0, 1.0]])
    iq = rng.standard_normal((n, 4)) @ mix + np.array([3.0, -1.0, 0.5, 2.0])
    z = np.column_stack([iq[:, 0] + 1j * iq[:, 1], iq[:, 2] + 1j * iq[:, 3]])
    got = diagnostics.output_correlations(z, sent)
    for j in (0, 1):
        ref = np.corrcoef(iq[sent == j], rowvar=False)              # reference: numpy.corrcoef
        np.testing.assert_allclose(got[j], ref, rtol=0, atol=1e-13)
    few = diagnostics.output_correlations(z[:4], np.array([0, 0, 0, 1]))
    assert np.all(np.isnan(few[1])) and np.allclose(few[0], np.corrcoef(iq[:3], rowvar=False), atol=1e-13)


def test_model_checks_match_scipy_stats():
    rng = np.random.default_rng(5)
    n, g, s2 = 3000, np.array([2.0, 2.2]), np.array([0.5, 0.45])    # s2: variance of one real output
    sent = rng.integers(0, 2, n)
    sig = np.sqrt(s2)
    z = (rng.standard_normal((n, 2)) + 1j * rng.standard_normal((n, 2))) * sig
    z[np.arange(n), sent] += g[sent] * np.exp(1j * rng.uniform(0, 2 * np.pi, n))
    got = {c.name: c for c in diagnostics.model_checks(z, sent, g, s2, 0.0, n_tests=6)}
    # references: scipy.stats.normaltest, scipy.stats.kstest with scipy.stats.rice / rayleigh,
    # numpy.corrcoef and scipy.stats.norm, each with the documented Bonferroni factors
    idle = np.concatenate([np.r_[(z[sent != i, i] / sig[i]).real, (z[sent != i, i] / sig[i]).imag] for i in (0, 1)])
    ref = stats.normaltest(idle)
    c = got["noise-branch Gaussianity"]
    assert c.statistic == pytest.approx(ref.statistic, rel=1e-9)
    assert c.p_value == pytest.approx(min(1.0, ref.pvalue * 6), rel=1e-8)
    env = np.abs(z)
    on = [stats.kstest(env[sent == i, i], stats.rice(g[i] / sig[i], scale=sig[i]).cdf) for i in (0, 1)]
    off = [stats.kstest(env[sent != i, i], stats.rayleigh(scale=sig[i]).cdf) for i in (0, 1)]
    for name, refs in (("Rician fit, tone sent", on), ("Rayleigh fit, tone not sent", off)):
        c = got[name]
        assert c.statistic == pytest.approx(max(r.statistic for r in refs), abs=2e-7)   # CDF bound 1.2e-7
        assert c.p_value == pytest.approx(min(1.0, min(r.pvalue for r in refs) * 12), rel=1e-4)
    r_iq = [np.corrcoef(z[sent != i, i].real, z[sent != i, i].imag)[0, 1] for i in (0, 1)]
    zstat = max(abs(np.arctanh(r)) for r in r_iq) * np.sqrt(min(np.sum(sent == 0), np.sum(sent == 1)) - 3)
    c = got["I/Q independence"]
    assert c.statistic == pytest.approx(zstat, rel=1e-10)
    assert c.p_value == pytest.approx(min(1.0, 2 * stats.norm.sf(zstat) * 12), rel=1e-10)


def test_cross_branch_check_matches_corrcoef_and_norm():
    rng = np.random.default_rng(8)
    n = 900
    sent = rng.integers(0, 2, n)
    z = rng.standard_normal((n, 2)) + 1j * rng.standard_normal((n, 2))
    z[:, 1] += 0.1 * z[:, 0].real                                   # a little tone-0 / tone-1 correlation
    got = diagnostics.cross_branch_check(z, sent, n_tests=6)
    iq = np.column_stack([z[:, 0].real, z[:, 0].imag, z[:, 1].real, z[:, 1].imag])
    zs = [np.abs(np.corrcoef(iq[sent == j], rowvar=False)[:2, 2:]).max() * np.sqrt(np.sum(sent == j))
          for j in (0, 1)]                                          # reference: numpy.corrcoef
    assert got.statistic == pytest.approx(max(zs), rel=1e-12)
    assert got.p_value == pytest.approx(min(1.0, 2 * stats.norm.sf(max(zs)) * 48), rel=1e-12)  # scipy.stats.norm
    again = diagnostics.cross_branch_check(z, sent, n_tests=6,
                                           correlations=diagnostics.output_correlations(z, sent))
    assert (again.statistic, again.p_value) == (got.statistic, got.p_value)


@pytest.mark.parametrize("contiguous", [True, False])
def test_measured_pulse_matches_direct_derotation(contiguous):
    # reference: the definition in measured_pulse's notes evaluated entry by entry with numpy.exp
    rng = np.random.default_rng(21 + contiguous)
    fs, f, n, L = 80000.0, (-2500.0, 2500.0), 400, 16
    sent = rng.integers(0, 2, n)
    first = 100 + 16 * np.arange(n) + rng.integers(0, 2, n)
    idx = first[:, None] + np.arange(L)[None, :]
    if not contiguous:
        idx[:, L // 2:] += 1                                        # one sample skipped inside each window
    ramp = np.minimum(1.0, (np.arange(L) + 1) / 4.0)                 # a shaped pulse
    tone = np.asarray(f)[sent][:, None]
    rows = ramp * np.exp(2j * np.pi * tone * idx / fs + 1j * rng.uniform(0, 2 * np.pi, (n, 1)))
    rows = rows + 0.2 * (rng.standard_normal((n, L)) + 1j * rng.standard_normal((n, L)))
    nv = np.array([0.08, 0.08])
    got = diagnostics.measured_pulse(rows, idx, sent, f, fs, nv)
    even = np.arange(L) % 2 == 0
    pulse, res = [], []
    for i in (0, 1):
        k = np.flatnonzero(sent == i)
        xk = rows[k] * np.exp(-2j * np.pi * f[i] * idx[k] / fs)
        ph_e = np.exp(-1j * np.angle(xk[:, even].sum(axis=1)))
        ph_o = np.exp(-1j * np.angle(xk[:, ~even].sum(axis=1)))
        m = (xk * np.where(even[None, :], ph_o[:, None], ph_e[:, None])).mean(axis=0)
        pulse.append(m)
        u = m / np.linalg.norm(m)
        res.append(np.sum(np.abs(xk) ** 2, axis=1) - np.abs(xk @ np.conj(u)) ** 2)
    np.testing.assert_allclose(got.pulse, np.array(pulse), rtol=0, atol=1e-13)     # rounding only
    assert got.noise_per_sample == pytest.approx(np.mean(np.concatenate(res)) / (L - 1), rel=1e-12)
    assert list(got.n_used) == [np.sum(sent == 0), np.sum(sent == 1)]
    if contiguous:                                                  # first-sample form of the index
        short = diagnostics.measured_pulse(rows, idx[:, 0], sent, f, fs, nv)
        np.testing.assert_array_equal(short.pulse, got.pulse)
        assert short.noise_per_sample == got.noise_per_sample


def test_noise_correlation_and_idle_power_tails_match_scipy():
    rng = np.random.default_rng(13)
    z = rng.standard_normal((300, 2)) + 1j * rng.standard_normal((300, 2))
    z[:, 1] += 0.2 * z[:, 0]
    rho = 0.05 + 0.02j
    got = diagnostics.noise_correlation(z, rho)
    a, b = z[:, 0], z[:, 1]
    r = np.sum(a * np.conj(b)) / np.sqrt(np.sum(np.abs(a) ** 2) * np.sum(np.abs(b) ** 2))   # direct definition
    assert abs(got.value - r) < 1e-14
    sd = (1 - abs(rho) ** 2) / np.sqrt(300)
    assert got.p_value == pytest.approx(stats.chi2.sf(2 * (abs(r - rho) / sd) ** 2, 2), rel=1e-12)  # scipy.stats.chi2
    mom = GroupMoments(n=np.array([400.0, 380.0]), mean=np.array([[2.0, 0.11], [0.1, 2.1]]),
                       cov=np.zeros((2, 2, 2)))
    chk = diagnostics.idle_power_check(mom, np.array([0.1, 0.1]), 0.09, 0.0, n_tests=6)
    zs = [abs(0.1 / 0.09 - 1) * np.sqrt(380.0) * 0.09 / 0.1, abs(0.1 / 0.09 - 1) * np.sqrt(400.0) * 0.09 / 0.11]
    assert chk.statistic == pytest.approx(max(zs), rel=1e-12)                       # documented statistic
    assert chk.p_value == pytest.approx(min(1.0, 2 * stats.norm.sf(max(zs)) * 12), rel=1e-12)  # scipy.stats.norm


def test_group_moments_match_numpy_mean_and_cov():
    rng = np.random.default_rng(17)
    n = 900
    sent = rng.integers(0, 2, n)
    mask = rng.uniform(size=n) < 0.8
    z = rng.standard_normal((n, 2)) + 1j * rng.standard_normal((n, 2))
    z[np.arange(n), sent] += 2.0
    for m in (None, mask):
        got = estimate.group_moments(z, sent, m)
        use = np.ones(n, bool) if m is None else m
        for j in (0, 1):
            p = np.abs(z[use & (sent == j)]) ** 2
            assert got.n[j] == len(p)
            np.testing.assert_allclose(got.mean[j], p.mean(axis=0), rtol=1e-13)          # numpy.mean
            np.testing.assert_allclose(got.cov[j], np.cov(p, rowvar=False), rtol=1e-12)  # reference: numpy.cov
    one = estimate.group_moments(z[:3], np.array([0, 0, 1]))
    np.testing.assert_allclose(one.mean[1], np.abs(z[2]) ** 2, rtol=1e-14)
    assert one.n[1] == 1 and np.all(one.cov[1] == 0)


def test_ln_i0_inverse_inverts_scipy_bessel():
    from scipy import special

    x = np.concatenate([np.linspace(0.0, 5.0, 501), np.geomspace(5.0, 5000.0, 300)])
    c = np.log(special.i0e(x)) + x                       # reference: ln I0(x) from scipy.special.i0e
    got = _likelihood._ln_i0_inverse(c)
    np.testing.assert_allclose(got, x, rtol=1e-9, atol=1e-12)         # two Newton steps from the start


def test_likelihood_rule_error_matches_a_direct_integration():
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


@pytest.mark.parametrize("n", [141, 500, 1996, 4000, 10000])
def test_ks_pvalues_match_scipy_kstwo(n):
    rng = np.random.default_rng(n)
    # distances over the whole law: the Pelz-Good range (n d^2 < 2.2) densely, and beyond it
    d = np.concatenate([np.linspace(0.3, 1.6, 300) / np.sqrt(n), rng.uniform(0.0, 0.7, 60), [0.5 / n, 1.0]])
    got = _diagnostics._ks_pvalues(d, np.full(d.size, n))
    ref = stats.kstwo.sf(d, n)                                     # reference: scipy.stats.kstwo
    series = n * d * d < 2.2
    # tolerance: the same series on Python floats instead of numpy scalars: rounding only
    np.testing.assert_allclose(got[series], ref[series], rtol=1e-13, atol=1e-300)
    # beyond, twice the one-sided tail: the stated 1e-11 of the sum (and underflow near 0)
    np.testing.assert_allclose(got[~series], ref[~series], rtol=1e-11, atol=1e-300)
    assert np.count_nonzero(~series & (ref > 1e-12)) >= 5           # the one-sided range is exercised
    big = _diagnostics._ks_pvalues(d[:50], np.full(50, 20000))
    np.testing.assert_allclose(big, stats.kstwobign.sf(d[:50] * np.sqrt(20000)), rtol=1e-14)  # asymptotic law


def test_ks_family_pvalues_are_the_bonferroni_minimum():
    d, n = [0.01, 0.03, 0.02, 0.001, 0.05], [2000, 2004, 150, 3000, 30]
    p = stats.kstwo.sf(d, n)                                       # reference: scipy.stats.kstwo
    got = _diagnostics._ks_family_pvalues(d, n, [12, 3], [0, 0, 1, 1, 0])
    assert got[0] == pytest.approx(min(1.0, 12 * min(p[0], p[1], p[4])), rel=1e-13)
    assert got[1] == pytest.approx(min(1.0, 3 * min(p[2], p[3])), rel=1e-13)


@pytest.mark.parametrize("n, L, c", [(4000, 20, 4), (700, 16, 1), (3, 5, 2)])
def test_real_form_products_match_complex_matmul(n, L, c):
    rng = np.random.default_rng(n + L + c)
    m = rng.standard_normal((n, L)) + 1j * rng.standard_normal((n, L))
    v = rng.standard_normal((L, c)) + 1j * rng.standard_normal((L, c))
    w = rng.standard_normal((c, n)) + 1j * rng.standard_normal((c, n))
    # reference: numpy's complex matmul; tolerance: rounding of L (resp. n) complex multiply-adds,
    # relative to the sum of the magnitudes of the terms
    got = _diagnostics._rows_times(m, v)
    assert got.shape == (n, c)
    np.testing.assert_array_less(np.abs(got - m @ v), 8 * L * 1.2e-16 * (np.abs(m) @ np.abs(v)) + 1e-300)
    got = _diagnostics._times_rows(w, m)
    assert got.shape == (c, L)
    np.testing.assert_array_less(np.abs(got - w @ m), 8 * n * 1.2e-16 * (np.abs(w) @ np.abs(m)) + 1e-300)


@pytest.mark.parametrize("x_start, n_before, n_after", [(0, 40, 37), (987_654, 0, 25), (123, 31, 0)])
def test_noise_window_outputs_match_the_correlator_route(x_start, n_before, n_after):
    rng = np.random.default_rng(x_start + 1)
    fs, tones, L, sps = 1e6, (-50e3, 50e3), 20, 20.0
    guard = 2.0
    burst = 300
    first = x_start + int(guard * sps) + n_before * L + 7        # burst start, leaving n_before windows
    n = (first - x_start) + burst * L + int(guard * sps) + n_after * L + 5
    x = rng.standard_normal(n) + 1j * rng.standard_normal(n)
    grid = branches.symbol_grid(first + 0.3, sps, burst)
    got = diagnostics.noise_window_outputs(x, x_start, grid, tones, fs, guard)
    # reference 1: the correlator (absolute-time templates) with each output referred to its window start
    parts = []
    before_end = int(np.floor(grid.first_start - guard * sps)) - x_start
    nb = max(before_end, 0) // L
    if nb:
        g = branches.SymbolGrid(float(x_start + before_end - nb * L), float(L), nb, L)
        parts.append(diagnostics.window_referenced(branches.correlate(x, x_start, g, tones, fs), fs))
    after_start = int(np.ceil(grid.stop + guard * sps)) - x_start
    na = (len(x) - after_start) // L
    if na:
        g = branches.SymbolGrid(float(x_start + after_start), float(L), na, L)
        parts.append(diagnostics.window_referenced(branches.correlate(x, x_start, g, tones, fs), fs))
    ref = np.concatenate(parts)
    assert got.shape == ref.shape == (nb + na, 2)
    assert nb >= n_before and na >= n_after
    # tolerance: the correlator route turns each output by exp(-j 2 pi f n0 / fs) and back with
    # numpy.exp of a phase of up to 2 pi f n0 / fs rad (3e5 rad here): ~1e-16 of that, per output of size ~4.5
    tol = 1e-13 + 4 * 2 * np.pi * 1.2e-16 * max(abs(f) for f in tones) / fs * (x_start + n) * 4.5
    assert np.max(np.abs(got - ref)) < tol
    # reference 2: the definition z_i = sum_m x[n0 + m] exp(-j 2 pi f_i m / fs) / sqrt(L), numpy.exp
    starts = np.r_[before_end - nb * L + L * np.arange(nb), after_start + L * np.arange(na)].astype(int)
    m = np.arange(L)
    direct = np.stack([np.sum(x[starts[:, None] + m] * np.exp(-2j * np.pi * f * m / fs), axis=1) for f in tones],
                      axis=1) / np.sqrt(L)
    np.testing.assert_allclose(got, direct, rtol=0, atol=1e-13)                    # rounding only


@pytest.mark.parametrize("n", [141, 2000, 10000])
def test_one_sided_ks_tail_matches_scipy_smirnov(n):
    from scipy import special

    for x in np.sqrt(np.linspace(2.2, 60.0, 40) / n):
        ref = special.smirnov(n, x)                                # reference: scipy.special.smirnov
        assert _diagnostics._smirnov_sf(n, x) == pytest.approx(ref, rel=1e-11, abs=1e-300)   # stated bound


def test_ks_statistics_of_several_samples_match_scipy_kstest():
    rng = np.random.default_rng(19)
    samples = [rng.uniform(size=k) for k in (2000, 1996, 37, 500)]
    samples[3] = samples[3] ** 1.2                                  # one sample off the uniform law
    got = _diagnostics._ks_statistics(samples)
    for u, d in zip(samples, got):
        ref = stats.kstest(u, "uniform").statistic                 # reference: scipy.stats.kstest
        assert d == pytest.approx(ref, rel=1e-14, abs=1e-15)        # the same sorted differences
        assert d == _diagnostics._ks_statistic(u)
    with_nan = [samples[0], np.r_[samples[2], np.nan]]
    assert np.isnan(_diagnostics._ks_statistics(with_nan)[1])        # as the one-sample form gives it


def test_envelope_cdfs_of_several_samples_equal_one_by_one():
    rng = np.random.default_rng(23)
    rs = [np.abs(3.0 + 1.1 * (rng.standard_normal(2000) + 1j * rng.standard_normal(2000))),
          np.abs(0.4 * (rng.standard_normal(1500) + 1j * rng.standard_normal(1500))),
          np.abs(5.0 + 0.7 * (rng.standard_normal(300) + 1j * rng.standard_normal(300))),
          np.full(20, 2.5), np.zeros(0)]
    nus, sigmas = [3.0, 0.0, 5.0, 1.0, 1.0], [1.1, 0.4, 0.7, 0.5, 1.0]
    got = _diagnostics._envelope_cdfs(rs, nus, sigmas)
    for r, nu, s, g in zip(rs, nus, sigmas, got):
        np.testing.assert_array_equal(g, diagnostics.envelope_cdf(r, nu, s))     # the same values
    law = stats.rice(3.0 / 1.1, scale=1.1)                                      # reference: scipy.stats.rice
    np.testing.assert_allclose(got[0], law.cdf(rs[0]), rtol=0, atol=1.2e-7)     # the stated bound


