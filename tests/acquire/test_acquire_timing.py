"""Acquisition timing kernels against general-purpose references.

The narrow-band spectrum and the line search are held to scipy.signal.zoom_fft
(the DTFT on a grid), the block sums to numpy.sum, the closed-form line fit to
numpy.polyfit.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import signal

from analyzer import acquire
# private kernels, tested directly: _block_sums is held to numpy.sum at rounding level, which
# narrow_spectrum (its only caller, good to 2e-4 of the band) cannot show; _line_search takes any
# series, while the public timing functions give it only the window energies or transition
# instants of a burst
from analyzer.acquire import _timing


@pytest.mark.parametrize("d", [1, 2, 4, 8, 12, 16, 64])
def test_block_sums_match_numpy_sum(d):
    rng = np.random.default_rng(d)
    y = (rng.standard_normal((501, d)) + 1j * rng.standard_normal((501, d))) * 10.0 ** rng.integers(-3, 4, (501, d))
    got = _timing._block_sums(y)
    ref = np.sum(y, axis=1)                              # reference: numpy.sum along the rows
    # tolerance: rounding of d additions, relative to the sum of magnitudes
    assert np.all(np.abs(got - ref) <= 4 * d * 1.2e-16 * np.sum(np.abs(y), axis=1))


@pytest.mark.parametrize("n, half_hz", [(84_000, 800.0), (9_001, 150.0), (2_000, 5_000.0)])
def test_narrow_spectrum_matches_zoom_fft(n, half_hz):
    rng = np.random.default_rng(n)
    fs, centre = 1e6, 50e3
    t = np.arange(n)
    # a line inside the band plus broadband noise
    v = np.cos(2 * np.pi * (centre + 0.3 * half_hz) * t / fs + 0.4) + 0.2 * rng.standard_normal(n)
    f, got = acquire.narrow_spectrum(v, fs, centre, half_hz, fs / n / 4)
    ref = signal.zoom_fft(v, [f[0], f[-1]], m=len(f), fs=fs, endpoint=True)   # reference: scipy.signal
    peak = np.max(np.abs(ref))
    # band content to 2e-4 of the peak; broadband leakage adds up to ~2% of the noise at the edges
    assert np.max(np.abs(got - ref)) < 0.02 * 0.2 * np.sqrt(n) + 2e-4 * peak
    assert np.argmax(np.abs(got)) == np.argmax(np.abs(ref))


@pytest.mark.parametrize("n, ppm", [(88_000, 3000.0), (20_000, 10000.0)])
def test_line_search_matches_zoom_fft(n, ppm):
    # reference: scipy.signal.zoom_fft (the DTFT on a grid) around the line and 8..64 cells out
    rng = np.random.default_rng(n)
    fs, rate = 1e6, 50e3 * (1 + 0.4 * ppm * 1e-6)
    t = np.arange(n)
    v = np.cos(2 * np.pi * rate * t / fs + 0.4) + 3.0 * rng.standard_normal(n)
    lo, hi = 50e3 * (1 - ppm * 1e-6), 50e3 * (1 + ppm * 1e-6)
    got_rate, got_peak, got_q = _timing._line_search(v, fs, lo, hi)
    res = fs / n
    f = np.arange(lo, hi, res / 64)
    ref = np.abs(signal.zoom_fft(v, [f[0], f[-1]], m=len(f), fs=fs, endpoint=True)) ** 2
    i = int(np.argmax(ref))
    assert abs(got_rate - f[i]) < 0.02 * res                    # parabola on a 1/8-cell grid: 2% of a cell
    assert got_peak == pytest.approx(ref[i], rel=0.01)
    g = rate + np.arange(-64, 64.25, 0.5) * res
    side = np.abs(signal.zoom_fft(v, [g[0], g[-1]], m=len(g), fs=fs, endpoint=True)) ** 2
    ref_q = ref[i] / np.median(side[np.abs(g - rate) / res >= 8])
    assert got_q == pytest.approx(ref_q, rel=0.03)              # median of 225 points: a few % apart


def test_line_fit_matches_numpy_polyfit():
    # reference: numpy.polyfit of degree 1 (least squares)
    rng = np.random.default_rng(15)
    for n in (2, 4, 9):
        x = np.sort(rng.uniform(-5, 50, n))
        y = 0.3 * x - 2.0 + rng.standard_normal(n)
        np.testing.assert_allclose(acquire.line_fit(x, y), np.polyfit(x, y, 1), rtol=1e-10, atol=1e-12)
