"""The band-power trace against a double-precision DFT (numpy.fft), Parseval and the Gamma law (scipy.special)."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import special

from analyzer import survey


def test_trace_noise_estimate_is_unbiased_and_ignores_an_interferer():
    rng = np.random.default_rng(11)
    fs, frame, n = 1e6, 64, 64 * 40000
    sigma2 = 0.3
    x = np.sqrt(sigma2 / 2) * (rng.standard_normal(n) + 1j * rng.standard_normal(n))
    band, noise_bands = (-1e5, 1e5), [(-5e5, -1.5e5), (1.5e5, 5e5)]
    bins = survey.band_bins(fs, band, frame)
    expected = sigma2 * bins / frame            # white noise: in-band power = variance x bins/frame (Parseval)
    tf = survey.band_power_frames(x, fs, band, frame, noise_bands)
    power, nd = tf.power, tf.noise
    # the trace itself and the out-of-band estimate both average to it (40000 frames of 13 bins:
    # 1% is 7 sd of the mean)
    assert np.mean(power) == pytest.approx(expected, rel=0.01)
    assert np.mean(nd) == pytest.approx(expected, rel=0.02)          # median-to-mean correction, Gamma law
    # a strong tone centred on a bin of the noise band (rectangular frames: no leakage to other
    # bins, so one group of bins is hit) leaves the estimate within 10%
    t = np.arange(n)
    nd_i = survey.band_power_frames(x + 3.0 * np.exp(2j * np.pi * 3.125e5 * t / fs), fs, band, frame,
                                     noise_bands).noise
    assert np.median(nd_i) == pytest.approx(np.median(nd), rel=0.10)


def test_trace_frames_match_a_double_precision_dft():
    # reference: numpy.fft in double precision on each frame; Parseval for the energy (common practice)
    rng = np.random.default_rng(12)
    fs, frame, n_frames = 1e6, 64, 3000
    x = (0.3 * (rng.standard_normal(frame * n_frames + 17) + 1j * rng.standard_normal(frame * n_frames + 17))
         + 0.1 - 0.2j).astype(np.complex64)
    band, noise_bands = (-1e5, 1e5), [(-5e5, -1.5e5), (1.5e5, 5e5)]
    tf = survey.band_power_frames(x, fs, band, frame, noise_bands)
    frames = x[:frame * n_frames].astype(np.complex128).reshape(n_frames, frame)
    spec = np.abs(np.fft.fft(frames, axis=1)) ** 2
    f = np.fft.fftfreq(frame, 1 / fs)
    inband = (f >= band[0]) & (f <= band[1])
    np.testing.assert_allclose(tf.power, spec[:, inband].sum(axis=1) / frame**2, rtol=1e-5)   # float32 FFT
    np.testing.assert_allclose(tf.energy, np.sum(np.abs(frames) ** 2, axis=1), rtol=1e-5)
    np.testing.assert_allclose(tf.dc_bin, frames.sum(axis=1), rtol=1e-5, atol=1e-4)
    # the noise estimate: numpy.median over the groups' mean bin powers, Gamma-law correction
    noise = np.zeros(frame, bool)
    for lo, hi in noise_bands:
        noise |= (f >= lo) & (f <= hi)
    noise[0] = False
    groups = np.array_split(np.flatnonzero(noise & ~inband), survey.NOISE_GROUPS)
    means = np.stack([spec[:, g].mean(axis=1) for g in groups], axis=1)
    k = np.count_nonzero(noise & ~inband) / len(groups)
    ref = np.median(means, axis=1) * k / special.gammaincinv(k, 0.5) * np.count_nonzero(inband) / frame**2
    np.testing.assert_allclose(tf.noise, ref, rtol=1e-5)
    # each frame's figures do not depend on where the block starts
    later = survey.band_power_frames(x[5 * frame:], fs, band, frame, noise_bands)
    for a, b in ((tf.power, later.power), (tf.noise, later.noise), (tf.energy, later.energy)):
        np.testing.assert_array_equal(a[5:], b)


def test_dc_correction_of_the_trace_matches_the_dft_without_the_offset():
    # reference: numpy.fft in double precision on each frame of x - d (the DFT is linear: common practice)
    rng = np.random.default_rng(13)
    fs, frame, n_frames, d = 1e6, 64, 2000, 0.1 - 0.2j
    x = (0.3 * (rng.standard_normal(frame * n_frames) + 1j * rng.standard_normal(frame * n_frames)) + d)
    band = (-1e5, 1e5)
    tf = survey.band_power_frames(x.astype(np.complex64), fs, band, frame)
    got = survey.remove_dc(tf.power, tf.dc_bin, d, fs, band, frame)
    spec = np.abs(np.fft.fft((x - d).reshape(n_frames, frame), axis=1)) ** 2
    f = np.fft.fftfreq(frame, 1 / fs)
    inband = (f >= band[0]) & (f <= band[1])
    ref = spec[:, inband].sum(axis=1) / frame**2
    # float32 FFT of samples of magnitude about 0.5: absolute error of a few 1e-7 of the frame power
    np.testing.assert_allclose(got, ref, rtol=1e-5, atol=2e-6 * np.mean(ref))
    # a band that leaves out 0 Hz is not changed
    above = (1e5, 3e5)
    tf2 = survey.band_power_frames(x.astype(np.complex64), fs, above, frame)
    np.testing.assert_array_equal(survey.remove_dc(tf2.power, tf2.dc_bin, d, fs, above, frame), tf2.power)
