"""Noise correlation of the two correlators, noise-only windows and the idle-branch power check.

References: |sinc(df T)| for white noise through rectangular templates (common practice,
numpy.sinc); scipy.stats.chi2 and scipy.stats.norm tails; the correlator's own definition
(numpy.exp) for the noise windows.
"""

from __future__ import annotations


import numpy as np
import pytest
from scipy import stats

from analyzer import branches, diagnostics
from analyzer.estimate import GroupMoments

FS, RS = 80000.0, 5000.0


def test_noise_correlation_of_white_and_coloured_noise():
    L, n = 16, 8000
    df = 0.8 * RS
    tones = (-df / 2, df / 2)
    rng = np.random.default_rng(4)
    w = (rng.standard_normal(n * L + 1) + 1j * rng.standard_normal(n * L + 1)) / np.sqrt(2)
    grid = branches.SymbolGrid(0.0, float(L), n, L)
    rho = branches.template_correlation(tones, FS, L)
    white = diagnostics.noise_correlation(
        diagnostics.window_referenced(branches.correlate(w[:-1], 0, grid, tones, FS), FS), rho)
    # Reference: white noise gives the template correlation, |sinc(df T)| (common practice, numpy.sinc);
    # standard error (1 - |rho|^2)/sqrt(n) = 0.011, tolerance 0.04.
    assert abs(abs(white.value) - abs(np.sinc(0.8))) < 0.04
    assert white.p_value > 1e-5
    # Noise through a two-tap averaging filter is no longer white: the coefficient moves away from rho.
    col = diagnostics.noise_correlation(
        diagnostics.window_referenced(branches.correlate(0.5 * (w[1:] + w[:-1]), 0, grid, tones, FS), FS), rho)
    assert col.p_value < 0.01


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
