"""Coverage of the 95% intervals: Eb/N0 (analyzer.estimate) and tones / centre / imbalance
(analyzer.intervals), counted over many captures against the binomial law (scipy.stats.binom).

The coverage of a true 95% interval over n independent captures is Binomial(n, 0.95).  Each
test accepts the central band of that law that holds with probability 1 - 1e-5 (false-failure
probability 1e-5 per test), and is sized so that the same interval made 0.7 or 1.5 times as
wide falls outside the band (0.7: 83% coverage; 1.5: 99.7%).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from analyzer import estimate, pipeline
from analyzer.capture import ArrayCapture
from analyzer.synth import SynthParams, synthesize

FALSE_FAILURE = 1e-5


def _band(n, p=0.95, alpha=FALSE_FAILURE):
    # reference: scipy.stats.binom; P(hits outside [lo, hi]) <= alpha for a true 95% interval
    return stats.binom.ppf(alpha / 2, n, p), stats.binom.isf(alpha / 2, n, p)


def _branch_outputs(rng, n_symbols, ebn0_db):
    """Correlator outputs of ideal orthogonal noncoherent BFSK: the sent branch holds g e^{j phi} + noise,
    the other noise alone (complex circular Gaussian of power s2); Eb/N0 = g^2 / s2 with energy_scale 1."""
    sent = rng.integers(0, 2, n_symbols)
    s2 = 10 ** (-ebn0_db / 10)
    z = np.sqrt(s2 / 2) * (rng.standard_normal((n_symbols, 2)) + 1j * rng.standard_normal((n_symbols, 2)))
    z[np.arange(n_symbols), sent] += np.exp(2j * np.pi * rng.uniform(size=n_symbols))
    return z, sent


def test_ebn0_interval_covers_95_percent():
    n, ebn0_db = 1000, 8.0
    rng = np.random.default_rng(20261204)
    hits = 0
    for _ in range(n):
        z, sent = _branch_outputs(rng, 400, ebn0_db)
        st = estimate.branch_stats(estimate.group_moments(z, sent), 0.0, 1.0, True)
        lo, hi = st.ebn0_db_ci95
        hits += lo <= ebn0_db <= hi
    lo, hi = _band(n)
    # 0.7x: expected 830 hits, 1.5x: 997 -- both outside [lo, hi] = about [921, 977]
    assert lo > 0.84 * n and hi < 0.99 * n
    assert lo <= hits <= hi


def test_reported_ebn0_interval_covers_95_percent():
    """The physical Eb/N0 (what the report states) from sample rows of ideal bursts: each symbol
    window holds a unit tone of random phase at the tone sent plus complex white noise of variance
    s2 per sample, so Eb/N0 = L / s2 with energy_scale 1 (the generator's definition by hand)."""
    from analyzer import estimate

    n_runs, n_sym, L, fs, ebn0_db = 600, 1500, 16, 80000.0, 8.0
    tones = (-2500.0, 2500.0)
    s2 = L / 10 ** (ebn0_db / 10)
    rng = np.random.default_rng(41)
    m = np.arange(L)
    hits = 0
    for _ in range(n_runs):
        sent = rng.integers(0, 2, n_sym)
        rows = np.exp(1j * (2 * np.pi * np.asarray(tones)[sent][:, None] * m / fs
                            + rng.uniform(0, 2 * np.pi, n_sym)[:, None]))
        rows += np.sqrt(s2 / 2) * (rng.standard_normal((n_sym, L)) + 1j * rng.standard_normal((n_sym, L)))
        pe = estimate.physical_ebn0(estimate.energy_sums(rows, sent, tones, fs, real=False, scale=1.0))
        lo, hi = pe.ebn0_db_ci95
        hits += lo <= ebn0_db <= hi
    lo, hi = _band(n_runs)
    # 0.7x: expected 498 hits, 1.5x: 598 -- both outside [lo, hi] = about [547, 593]
    assert lo > 0.84 * n_runs and hi < 0.99 * n_runs
    assert lo <= hits <= hi


@pytest.fixture(scope="module")
def tone_runs():
    out = []
    for seed in range(80):
        p = SynthParams(continuous_phase=False, symbols_per_burst=400, ebn0_db=10.0, seed=5000 + seed,
                        centre_offset_hz=137.0,
                        start_offset_samples=800.0 + 0.37 * seed, tail_samples=400)
        r = synthesize(p)
        res = pipeline.analyze_capture(ArrayCapture(r.samples, p.sample_rate_hz),
                                       pipeline.AnalysisOptions(p.tones_hz, p.symbol_rate_hz))
        b = res.bursts[0]
        iv = estimate.burst_intervals(b.tones_hz, b.stats.gain_sq, b.stats.noise_var_complex, b.stats.n_symbols,
                                       b.grid.window, p.sample_rate_hz, 0.0)
        out.append((np.array(p.tones_hz) + 137.0, iv))
    return out


def test_tone_intervals_cover_95_percent(tone_runs):
    # the two tones of a burst are estimated from disjoint symbols: 160 independent trials
    hits = sum(iv.tones_hz[i][0] <= truth[i] <= iv.tones_hz[i][1] for truth, iv in tone_runs for i in (0, 1))
    n = 2 * len(tone_runs)
    lo, hi = _band(n)
    assert lo <= hits <= hi


def test_centre_and_imbalance_intervals_cover_95_percent(tone_runs):
    n = len(tone_runs)
    lo, hi = _band(n)
    centre = sum(iv.centre_offset_hz[0] <= 137.0 <= iv.centre_offset_hz[1] for _, iv in tone_runs)
    imbalance = sum(iv.imbalance_db[0] <= 0.0 <= iv.imbalance_db[1] for _, iv in tone_runs)   # equal tones sent
    assert lo <= centre <= hi
    assert lo <= imbalance <= hi


def test_correlation_interval_is_the_range_over_the_spacing_interval():
    # reference: |rho| of two unit tones over L samples is the Dirichlet kernel
    # |sin(pi df L / fs) / (L sin(pi df / fs))| (common practice), evaluated here with numpy
    fs, L = 80000.0, 16
    iv = estimate.burst_intervals((-2500.0, 2600.0), (1.0, 1.0), (0.01, 0.01), (500, 500), L, fs)
    sd = np.hypot(*iv.tone_sd_hz)
    df = np.linspace(5100.0 - 1.959964 * sd, 5100.0 + 1.959964 * sd, 2001)
    rho = np.abs(np.sin(np.pi * df * L / fs) / (L * np.sin(np.pi * df / fs)))
    assert iv.tone_correlation == pytest.approx((rho.min(), rho.max()), rel=2e-3, abs=1e-5)


def test_tone_standard_deviation_matches_the_spread_of_the_estimates(tone_runs):
    # sum of squared standardised errors is chi-square with n degrees of freedom when the stated
    # standard deviation is right (reference: scipy.stats.chi2); band at FALSE_FAILURE.  A standard
    # deviation 0.7 or 1.5 times the right one moves the sum to about 2n or n/2.25, outside the band.
    z2 = [((iv.tones_hz[i][0] + iv.tones_hz[i][1]) / 2 - truth[i]) ** 2 / iv.tone_sd_hz[i] ** 2
          for truth, iv in tone_runs for i in (0, 1)]
    n = len(z2)
    lo, hi = stats.chi2.ppf(FALSE_FAILURE / 2, n), stats.chi2.isf(FALSE_FAILURE / 2, n)
    assert n / 2.25 < lo and hi < 2 * n
    assert lo <= sum(z2) <= hi
