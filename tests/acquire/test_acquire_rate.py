"""The measured symbol rate and its 95% interval (analyzer.acquire.measured_rate, slope_interval)."""

import numpy as np
import pytest
from scipy import stats

from analyzer import acquire
from analyzer.branches import symbol_grid
from analyzer.synth import SynthParams, synthesize


def test_slope_interval_is_theil_sen_with_a_median_deviation_interval():
    rng = np.random.default_rng(3)
    x = np.arange(16.0) * 7.5 + 3.0
    y = 0.02 * x + rng.normal(0, 0.3, x.size)
    y[5] += 4.0                                       # one part locked on a wrong plateau
    slope, half = acquire.slope_interval(x, y)
    ts = stats.theilslopes(y, x)                      # reference: scipy.stats.theilslopes
    assert slope == pytest.approx(ts.slope, rel=1e-12)
    # reference: scipy.stats.median_abs_deviation (normal scale) of the residuals, the standard error
    # of a slope (Draper and Smith, from memory), Student t (scipy.stats.t) with 0.37 of 14 dof = 5
    r = y - (ts.slope * x + ts.intercept)
    scale = stats.median_abs_deviation(r, scale="normal")
    sxx = float(np.sum((x - x.mean()) ** 2))
    assert half == pytest.approx(stats.t.ppf(0.975, 5) * scale / np.sqrt(sxx), rel=1e-9)
    # the outlier hardly moves it: within a tenth of the least-squares pull (scipy.stats.linregress)
    assert abs(slope - 0.02) < 0.1 * abs(stats.linregress(x, y).slope - 0.02) + 3 * half
    # the floor: the scale at least sqrt(floor_var)
    _, half_floor = acquire.slope_interval(x, 0.02 * x, floor_var=0.04)
    assert half_floor == pytest.approx(stats.t.ppf(0.975, 5) * 0.2 / np.sqrt(sxx), rel=1e-9)


def _rate_case(seed: int, ppm: float, continuous: bool):
    p = SynthParams(ebn0_db=10.0, n_bursts=1, symbols_per_burst=1500, seed=seed, rate_error_ppm=ppm,
                    continuous_phase=continuous, start_offset_samples=800.3 + 0.13 * (seed % 8))
    res = synthesize(p)
    b = res.truth["bursts"][0]
    # the grid as timing hands it on: the right start, the nominal rate (the transmitter is off by ppm)
    grid = symbol_grid(b["start_sample"], p.sample_rate_hz / p.symbol_rate_hz, b["n_symbols"])
    got = acquire.measured_rate(res.samples, 0, grid, p.tones_hz, p.sample_rate_hz,
                                metric="contrast" if continuous else "energy")
    return got, b["symbol_rate_hz"]


@pytest.mark.parametrize("continuous", [True, False])
def test_rate_interval_holds_the_transmitted_rate(continuous):
    n = 40
    rows = [_rate_case(700 + s, 100.0 * ((s % 5) - 2), continuous) for s in range(n)]
    assert all(r[0] is not None and r[0].blocks == acquire.RATE_BLOCKS for r in rows)
    lo = np.array([r[0].ci95_hz[0] for r in rows])
    hi = np.array([r[0].ci95_hz[1] for r in rows])
    est = np.array([r[0].symbol_rate_hz for r in rows])
    truth = np.array([r[1] for r in rows])
    covered = int(np.sum((lo <= truth) & (truth <= hi)))
    # coverage at least 0.90 (measured 0.95-1.00 over 60-100 captures a cell, 7-30 dB): fewer than 28 of 40
    # has probability 8.8e-5 (scipy.stats.binom.cdf(27, 40, 0.9))
    assert covered >= 28
    # not needlessly wide: within a third of the half-width a correct interval holds the truth about
    # half the time (normal: P(|Z| < 0.65) = 0.49; t with 14 dof a little more); 34 or more of 40
    # has probability below 1e-4 for p = 0.55 (scipy.stats.binom.sf(33, 40, 0.55) = 3e-5)
    near = int(np.sum(np.abs(est - truth) <= (hi - lo) / 6))
    assert near <= 33
    # the estimate itself: no bias beyond 4 standard errors of the mean (common practice)
    err = est / truth - 1
    assert abs(err.mean()) <= 4 * err.std(ddof=1) / np.sqrt(n)
