"""Model checks of the correlator outputs against scipy.stats and their false-alarm level.

References: the checks are scipy.stats tests (normaltest, kstest with the laws kstwo /
kstwobign, f_oneway) and normal-law z tests (scipy.stats.norm), with numpy.corrcoef and
numpy.polyfit for correlations and slopes and scipy.stats.rice / rayleigh for the envelope
laws; on a clean capture the family is flagged at most the stated 1% of the time.
"""

from __future__ import annotations


import warnings

import numpy as np
import pytest
from scipy import stats

from analyzer import diagnostics
from analyzer.synth import SynthParams
from analyzer.diagnostics import _envelope, _model_checks  # private kernels, tested directly

FS = 80000.0


def test_clean_captures_are_not_flagged(analyse_synth):
    flagged = 0
    for seed in range(10):
        out = analyse_synth(SynthParams(continuous_phase=False, ebn0_db=10.0, symbols_per_burst=2000, seed=300 + seed))
        b = out.bursts[0]
        flagged += any(c.flagged for c in b.checks)
    # Family-wise level 1% (Bonferroni): P(>= 2 flagged of 10) < 0.5% (scipy.stats.binom(10, 0.01).sf(1)).
    assert flagged <= 1


def test_interferer_is_flagged(analyse_synth):
    def add_cw(x):
        n = np.arange(len(x))
        return x + 0.08 * np.exp(2j * np.pi * 2300.0 * n / FS)   # a carrier 200 Hz from the upper tone

    out = analyse_synth(SynthParams(continuous_phase=False, ebn0_db=12.0, symbols_per_burst=2000, seed=5), x=add_cw)
    names = {c.name for c in out.bursts[0].checks if c.flagged}
    # The idle-branch law (Rayleigh, scipy.stats.rayleigh) must be rejected at the 1% level.
    assert "Rayleigh fit, tone not sent" in names


def test_impulsive_noise_is_flagged(analyse_synth):
    def impulses(x):
        rng = np.random.default_rng(9)
        y = x.copy()
        idx = rng.choice(len(x), size=len(x) // 400, replace=False)
        y[idx] += 3.0 * np.exp(2j * np.pi * rng.uniform(size=idx.size))
        return y

    out = analyse_synth(SynthParams(continuous_phase=False, ebn0_db=12.0, symbols_per_burst=2000, seed=6), x=impulses)
    assert any(c.flagged for c in out.bursts[0].checks)


def test_envelope_cdf_matches_scipy_rice():
    r = np.linspace(0.0, 9.0, 1000)
    for nu, sigma in ((0.5, 1.0), (4.0, 0.8), (0.0, 2.0)):
        law = stats.rice(nu / sigma, scale=sigma) if nu > 0 else stats.rayleigh(scale=sigma)
        np.testing.assert_allclose(diagnostics.envelope_cdf(r, nu, sigma), law.cdf(r), atol=1e-5)  # stated bound


@pytest.mark.parametrize("nu, sigma", [(0.001, 1.0), (0.7, 1.0), (2.0, 0.5), (6.0, 1.3), (30.0, 2.0)])
def test_envelope_cdf_hermite_bound(nu, sigma):
    # the stated interpolation bound, 1.2e-7, against scipy.stats.rice.cdf at points between the grid nodes
    rng = np.random.default_rng(int(nu * 10))
    r = np.abs(nu + sigma * (rng.standard_normal(3000) + 1j * rng.standard_normal(3000)) / np.sqrt(2))
    ref = stats.rice(nu / sigma, scale=sigma).cdf(r)               # reference: scipy.stats.rice
    np.testing.assert_allclose(diagnostics.envelope_cdf(r, nu, sigma), ref, rtol=0, atol=1.2e-7)


def test_envelope_cdfs_of_several_samples_equal_one_by_one():
    # private kernel: model_checks (its only caller) shows its values only through KS distances,
    # within the CDF bound; that the batched grids give exactly envelope_cdf's values shows only here
    rng = np.random.default_rng(23)
    rs = [np.abs(3.0 + 1.1 * (rng.standard_normal(2000) + 1j * rng.standard_normal(2000))),
          np.abs(0.4 * (rng.standard_normal(1500) + 1j * rng.standard_normal(1500))),
          np.abs(5.0 + 0.7 * (rng.standard_normal(300) + 1j * rng.standard_normal(300))),
          np.full(20, 2.5), np.zeros(0)]
    nus, sigmas = [3.0, 0.0, 5.0, 1.0, 1.0], [1.1, 0.4, 0.7, 0.5, 1.0]
    got = _envelope._envelope_cdfs(rs, nus, sigmas)
    for r, nu, s, g in zip(rs, nus, sigmas, got):
        np.testing.assert_array_equal(g, diagnostics.envelope_cdf(r, nu, s))     # the same values
    law = stats.rice(3.0 / 1.1, scale=1.1)                                      # reference: scipy.stats.rice
    np.testing.assert_allclose(got[0], law.cdf(rs[0]), rtol=0, atol=1.2e-7)     # the stated bound


def test_ks_statistics_of_several_samples_match_scipy_kstest():
    # private kernel: through model_checks the distance carries the CDF interpolation error (1.2e-7);
    # agreement with scipy.stats.kstest to rounding, and the NaN case, show only here
    rng = np.random.default_rng(19)
    samples = [rng.uniform(size=k) for k in (2000, 1996, 37, 500)]
    samples[3] = samples[3] ** 1.2                                  # one sample off the uniform law
    got = _model_checks._ks_statistics(samples)
    for u, d in zip(samples, got):
        ref = stats.kstest(u, "uniform").statistic                 # reference: scipy.stats.kstest
        assert d == pytest.approx(ref, rel=1e-14, abs=1e-15)        # the same sorted differences
        assert d == _model_checks._ks_statistic(u)
    with_nan = [samples[0], np.r_[samples[2], np.nan]]
    assert np.isnan(_model_checks._ks_statistics(with_nan)[1])        # as the one-sample form gives it


@pytest.mark.parametrize("n", [3000, 24000])
def test_model_checks_match_scipy_stats(n):
    # 24000 symbols: about 12000 per tone, beyond the 10000 up to which the KS law is scipy.stats.kstwo
    rng = np.random.default_rng(5)
    g, s2 = np.array([2.0, 2.2]), np.array([0.5, 0.45])    # s2: variance of one real output
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
    on = [(env[sent == i, i], stats.rice(g[i] / sig[i], scale=sig[i]).cdf) for i in (0, 1)]
    off = [(env[sent != i, i], stats.rayleigh(scale=sig[i]).cdf) for i in (0, 1)]
    for name, samples in (("Rician fit, tone sent", on), ("Rayleigh fit, tone not sent", off)):
        refs = [stats.kstest(x, cdf) for x, cdf in samples]
        # up to 10000 samples the p-value of scipy.stats.kstest (the law scipy.stats.kstwo), above
        # it the asymptotic law scipy.stats.kstwobign.sf(D sqrt(n)), as documented
        p_refs = [r.pvalue if x.size <= 10000 else stats.kstwobign.sf(r.statistic * np.sqrt(x.size))
                  for r, (x, _) in zip(refs, samples)]
        c = got[name]
        assert c.statistic == pytest.approx(max(r.statistic for r in refs), abs=2e-7)   # CDF bound 1.2e-7
        # tolerance: the law's slope times the distance's CDF error (2e-7 at most): below 1e-4 relative
        assert c.p_value == pytest.approx(min(1.0, min(p_refs) * 12), rel=1e-4)
    r_iq = [np.corrcoef(z[sent != i, i].real, z[sent != i, i].imag)[0, 1] for i in (0, 1)]
    zstat = max(abs(np.arctanh(r)) for r in r_iq) * np.sqrt(min(np.sum(sent == 0), np.sum(sent == 1)) - 3)
    c = got["I/Q independence"]
    assert c.statistic == pytest.approx(zstat, rel=1e-10)
    assert c.p_value == pytest.approx(min(1.0, 2 * stats.norm.sf(zstat) * 12), rel=1e-10)


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


def test_ebn0_trend_of_a_level_constant_within_blocks_is_scipy_f_oneway_without_warnings():
    # every block of |z_sent|^2 - |z_idle|^2 constant, the level stepping between blocks: F is
    # infinite and the p-value 0, as scipy.stats.f_oneway gives it; one level throughout: nan
    n = 512
    sent = np.arange(n) % 2
    for amp in (np.repeat([1.0, 1.5, 2.0, 2.5], n // 4), np.full(n, 2.0)):
        z = np.zeros((n, 2), complex)
        z[np.arange(n), sent] = amp
        with warnings.catch_warnings():
            warnings.simplefilter("error")                     # no warning may reach the terminal
            tr = diagnostics.ebn0_trend(z, sent, 1.0, blocks=4)
        with warnings.catch_warnings():                        # scipy warns on constant groups
            warnings.simplefilter("ignore")
            ref = stats.f_oneway(*np.split(amp ** 2, 4))      # reference: scipy.stats.f_oneway
        np.testing.assert_equal(tr.p_value, ref.pvalue)        # 0 and nan: exactly
