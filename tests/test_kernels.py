"""The fast numerical kernels against general-purpose reference implementations.

Each kernel replaces a slower general routine on the hot path; here it is held
to that routine: numpy.exp for the block oscillator, scipy.signal.zoom_fft for
the narrow-band spectrum, scipy.stats.kstest / scipy.stats.rice for the
envelope checks, and a direct per-window sum for the window energies.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import signal, stats

from analyzer import acquire, branches, diagnostics


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


def test_window_energy_matches_direct_sums():
    rng = np.random.default_rng(7)
    fs, tones, L = 80000.0, (-4000.0, 6000.0), 16
    x = rng.standard_normal(700) + 1j * rng.standard_normal(700)
    got = branches.window_energy(x, 100, 150, 400, L, tones, fs)
    n = np.arange(150, 400)[:, None] + np.arange(L)[None, :]       # capture index of each window sample
    ref = sum(np.abs(np.sum(x[n - 100] * np.exp(-2j * np.pi * f * n / fs), axis=1)) ** 2 for f in tones) / L
    np.testing.assert_allclose(got, ref, rtol=1e-9)               # direct definition, rounding only


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


def test_trace_noise_estimate_is_unbiased_and_ignores_an_interferer():
    rng = np.random.default_rng(11)
    fs, frame, n = 1e6, 64, 64 * 40000
    sigma2 = 0.3
    x = np.sqrt(sigma2 / 2) * (rng.standard_normal(n) + 1j * rng.standard_normal(n))
    band, noise_bands = (-1e5, 1e5), [(-5e5, -1.5e5), (1.5e5, 5e5)]
    bins = acquire.band_bins(fs, band, frame)
    expected = sigma2 * bins / frame            # white noise: in-band power = variance x bins/frame (Parseval)
    power, nd, _ = acquire.band_power_frames(x, fs, band, frame, noise_bands)
    # the trace itself and the out-of-band estimate both average to it (40000 frames of 13 bins:
    # 1% is 7 sd of the mean)
    assert np.mean(power) == pytest.approx(expected, rel=0.01)
    assert np.mean(nd) == pytest.approx(expected, rel=0.02)          # median-to-mean correction, Gamma law
    # a strong tone centred on a bin of the noise band (rectangular frames: no leakage to other
    # bins, so one group of bins is hit) leaves the estimate within 10%
    t = np.arange(n)
    _, nd_i, _ = acquire.band_power_frames(x + 3.0 * np.exp(2j * np.pi * 3.125e5 * t / fs), fs, band, frame,
                                           noise_bands)
    assert np.median(nd_i) == pytest.approx(np.median(nd), rel=0.10)


def test_dc_removed_after_the_pass_equals_dc_removed_before():
    from analyzer import survey

    rng = np.random.default_rng(5)
    fs, n = 1e6, 1024 * 40
    x = (0.2 * (rng.standard_normal(n) + 1j * rng.standard_normal(n))
         + 0.5 * np.exp(2j * np.pi * 2e4 * np.arange(n) / fs)).astype(np.complex64)
    d = np.complex64(0.05 - 0.03j)
    spec = survey.TraceSpec((-5e4, 5e4), 64, [(-5e5, -1e5), (1e5, 5e5)])

    def run(samples):
        return survey.survey(lambda a, c: samples[a:a + c], n, fs, 8192, 1024, trace=spec)

    raw, clean = run(x + d), run(x)
    # reference: the same pass over samples with the offset already subtracted (numpy arithmetic)
    assert raw.mean - clean.mean == pytest.approx(complex(d), abs=1e-7)
    np.testing.assert_allclose(raw.trace.power, clean.trace.power, rtol=1e-4, atol=1e-9)
    np.testing.assert_allclose(raw.spectrogram, clean.spectrogram, rtol=1e-3, atol=1e-9)
    np.testing.assert_allclose(raw.psd, clean.psd, rtol=1e-3, atol=1e-12)


def test_lag_products_match_their_definition():
    rng = np.random.default_rng(2)
    r = rng.standard_normal((50, 12)) + 1j * rng.standard_normal((50, 12))
    # reference: the defining double sum R[l] = sum_k sum_m r[k, m+l] conj(r[k, m]), written out
    ref = np.array([sum(np.sum(r[k, l:] * np.conj(r[k, :12 - l])) for k in range(50)) for l in range(12)])
    np.testing.assert_allclose(acquire.lag_products(r), ref, rtol=1e-12, atol=1e-9)
