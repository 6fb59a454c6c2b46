"""The synthetic signal models against their textbook definitions (analyzer.synth is checked here,
never used as a reference)."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate, signal, special, stats

from analyzer import synth
from analyzer.synth import SynthParams, channel_filter_taps, synthesize

FS, RS = 80000.0, 5000.0


def _q(x):
    """Gaussian tail function Q(x) = erfc(x / sqrt 2) / 2."""
    return 0.5 * special.erfc(x / np.sqrt(2.0))


@pytest.mark.parametrize("bt", [0.5, 0.3])
def test_gaussian_pulse_is_the_gmsk_pulse(bt):
    # Reference: the GMSK frequency pulse (Murota & Hirade 1981, from memory), T = 1, B = BT:
    # g(t) = 1/(2T) [Q(2 pi B (t - T/2) / sqrt(ln 2)) - Q(2 pi B (t + T/2) / sqrt(ln 2))], area 1/2.
    # Ours has area 1 (a long run settles on the tone): compare g / 2; tolerance 1e-6.
    t = np.linspace(-4.0, 4.0, 1601)
    c = 2 * np.pi * bt / np.sqrt(np.log(2.0))
    ref = 0.5 * (_q(c * (t - 0.5)) - _q(c * (t + 0.5)))
    assert np.max(np.abs(synth.frequency_pulse(t, "gaussian", bt=bt) / 2.0 - ref)) < 1e-6


@pytest.mark.parametrize("pulse,kw", [("gaussian", {"bt": 0.3}), ("raised-cosine", {"transition": 0.6}),
                                      ("raised-cosine", {"transition": 2.0}), ("rect", {})])
def test_phase_pulse_is_the_integral_of_the_frequency_pulse(pulse, kw):
    # Reference: numerical integration of the frequency pulse (scipy.integrate.quad), tolerance 1e-9;
    # the phase pulse ends at 1 (unit area: a run of one symbol settles on the steady tone).
    for u in (-1.3, -0.5, -0.2, 0.0, 0.37, 0.5, 1.1, 2.5):
        ref = integrate.quad(lambda s: float(synth.frequency_pulse(s, pulse, **kw)), -12.0, u,
                             points=[-1.5, -0.5, 0.5, 1.5], limit=200, epsabs=1e-13)[0]
        assert abs(float(synth.phase_pulse(u, pulse, **kw)) - ref) < 1e-9
    assert abs(float(synth.phase_pulse(12.0, pulse, **kw)) - 1.0) < 1e-12


@pytest.mark.parametrize("beta", [0.4, 1.0])
def test_raised_cosine_pulse_is_rectangle_convolved_with_hann(beta):
    # Reference: the definition, a one-symbol rectangle convolved with a Hann window of length beta and
    # unit area, integrated numerically (scipy.integrate.quad); tolerance 1e-9.
    hann = lambda s: (1 + np.cos(2 * np.pi * s / beta)) / beta if abs(s) <= beta / 2 else 0.0  # noqa: E731
    for u in (-0.75, -0.5, -0.45, -0.1, 0.0, 0.3, 0.5, 0.62):
        lo, hi = max(u - 0.5, -beta / 2), min(u + 0.5, beta / 2)
        ref = integrate.quad(hann, lo, hi, epsabs=1e-13)[0] if hi > lo else 0.0
        # g(u) = int_{u-1/2}^{u+1/2} hann(s) ds  (hann centred at 0, so rect * hann)
        assert abs(float(synth.frequency_pulse(u, "raised-cosine", transition=beta)) - ref) < 1e-9


def _inst_freq(x, fs):
    """Instantaneous frequency between samples n and n+1, Hz (angle of the sample product)."""
    return np.angle(x[1:] * np.conj(x[:-1])) * fs / (2 * np.pi)


def _runs(bits, length):
    """Start indices of runs of at least ``length`` equal bits."""
    change = np.flatnonzero(np.diff(bits.astype(int)) != 0) + 1
    edges = np.concatenate(([0], change, [bits.size]))
    return [(a, b) for a, b in zip(edges[:-1], edges[1:]) if b - a >= length]


@pytest.mark.parametrize("kw", [dict(pulse="gaussian", bt=0.3), dict(pulse="raised-cosine", transition=1.0),
                                dict(pulse="gaussian", bt=0.5, continuous_phase=False)])
def test_long_run_settles_on_the_steady_tone(kw):
    # Reference: the commanded tones (nominal +- deviation, plus the offset); a run of >= 7 symbols
    # reaches them in its middle symbol (the pulse's tails are below 1e-12 three symbols out).
    # Noiseless; tolerance 0.1 Hz.
    p = SynthParams(ebn0_db=np.inf, symbols_per_burst=600, centre_offset_hz=137.0, rate_error_ppm=250.0,
                    start_offset_samples=333.7, deviation_hz=1800.0, **kw)
    res = synthesize(p)
    sps = FS / RS * (1 - 250e-6)
    f = _inst_freq(res.samples, FS)
    tones = (137.0 - 1800.0, 137.0 + 1800.0)
    runs = _runs(res.bits, 7)
    assert len(runs) >= 2
    for a, b in runs:
        mid = 333.7 + ((a + b) // 2 + 0.5) * sps               # centre of the run's middle symbol
        n = np.arange(int(mid - 0.3 * sps), int(mid + 0.3 * sps))
        assert np.max(np.abs(f[n] - tones[res.bits[a]])) < 0.1
    assert res.truth["tones_hz"] == [pytest.approx(tones[0]), pytest.approx(tones[1])]
    assert res.truth["deviation_hz"] == pytest.approx(1800.0)


def test_continuous_phase_has_no_jumps_and_random_phase_has():
    # Reference: phase step over [n, n+1] = 2 pi / fs x integral of the rectangular-keyed frequency
    # (each symbol's tone over its share of the sample interval), computed here from the bits;
    # continuous phase within 1e-9 rad, fractional start and rate error included.
    t0, ppm, n_sym = 250.35, -420.0, 400
    kw = dict(ebn0_db=np.inf, symbols_per_burst=n_sym, start_offset_samples=t0, rate_error_ppm=ppm,
              tones_hz=(-3100.0, 1900.0))
    sps = FS / RS * (1 - ppm * 1e-6)
    tones = np.array([-3100.0, 1900.0])
    n = np.arange(int(np.ceil(t0)), int(np.ceil(t0 + n_sym * sps)) - 1, dtype=float)
    edges = t0 + np.arange(n_sym + 1) * sps
    k0 = np.searchsorted(edges, n, side="right") - 1            # symbol holding n
    cut = np.minimum(edges[k0 + 1], n + 1)                      # where it ends inside [n, n+1]
    res = synthesize(SynthParams(**kw))
    bits = res.bits
    f_here = tones[bits[k0]]
    f_after = tones[bits[np.minimum(k0 + 1, n_sym - 1)]]
    expected = 2 * np.pi / FS * (f_here * (cut - n) + f_after * (n + 1 - cut))
    step = np.angle(res.samples[n.astype(int) + 1] * np.conj(res.samples[n.astype(int)]))
    err = np.angle(np.exp(1j * (step - expected)))
    assert np.max(np.abs(err)) < 1e-9
    # the same with a random phase per symbol jumps (guards the test's power to fail)
    rnd = synthesize(SynthParams(continuous_phase=False, **kw))
    step = np.angle(rnd.samples[n.astype(int) + 1] * np.conj(rnd.samples[n.astype(int)]))
    assert np.max(np.abs(np.angle(np.exp(1j * (step - expected))))) > 1.0


def test_drift_is_linear_over_the_burst():
    # Reference: f(t) = tone + drift ((t - t0)/L - 1/2); the one-sample phase step of a linear
    # frequency is exact at the interval midpoint. Noiseless; tolerance 1e-6 Hz, 0.1 Hz at run centres.
    t0, n_sym, drift = 100.0, 800, 400.0
    res = synthesize(SynthParams(ebn0_db=np.inf, symbols_per_burst=n_sym, start_offset_samples=t0,
                                 drift_hz=drift, pulse="gaussian", bt=0.5))
    sps = FS / RS
    f = _inst_freq(res.samples, FS)
    for a, b in _runs(res.bits, 7):
        n = int(t0 + ((a + b) // 2 + 0.5) * sps)
        ref = (-2500.0, 2500.0)[res.bits[a]] + drift * ((n + 0.5 - t0) / (n_sym * sps) - 0.5)
        assert abs(f[n] - ref) < 0.1


@pytest.mark.parametrize("kw", [dict(), dict(real=True, tones_hz=(1200.0, 2200.0), symbol_rate_hz=1200.0,
                                             sample_rate_hz=48000.0)])
def test_noise_density_matches_the_truth(kw):
    # Reference: white Gaussian noise of density N0: complex, 2 sum|w|^2 / N0 ~ chi2(2N); real,
    # 2 sum w^2 / N0 ~ chi2(N) (scipy.stats.chi2). Two-sided false-failure probability 1e-5.
    res = synthesize(SynthParams(ebn0_db=7.0, symbols_per_burst=200, tail_samples=200000, **kw))
    w = res.samples - res.signal
    n0 = res.truth["n0"]
    dof = (1 if kw.get("real") else 2) * w.size
    stat = 2 * np.sum(np.abs(w) ** 2) / n0
    assert stats.chi2.ppf(5e-6, dof) < stat < stats.chi2.ppf(1 - 5e-6, dof)
    # Eb of a constant-envelope tone: A^2 sps (complex) or A^2 sps / 2 (real), to 1/n_symbols
    sps = res.truth["params"]["sample_rate_hz"] / res.truth["params"]["symbol_rate_hz"]
    eb_ref = res.truth["signal_amplitude"] ** 2 * sps * (0.5 if kw.get("real") else 1.0)
    assert np.sum(np.abs(res.signal) ** 2) / res.bits.size == pytest.approx(eb_ref, rel=1.0 / 200)
    assert res.truth["ebn0_db"] == pytest.approx(7.0, abs=1e-9)
    eb = np.sum(np.abs(res.signal) ** 2) / res.bits.size
    assert 10 * np.log10(eb / n0) == pytest.approx(7.0, abs=1e-9)


@pytest.mark.parametrize("kw", [dict(pulse="gaussian", bt=0.3, channel_filter_hz=4000.0),
                                dict(real=True, tones_hz=(1200.0, 2200.0), symbol_rate_hz=1200.0,
                                     sample_rate_hz=48000.0, receiver_audio=True, tilt_db=-3.0)])
def test_ebn0_at_the_capture_after_filters(kw):
    # Eb from the noiseless samples as written over N0 as defined for coloured noise: the density of
    # white noise that puts the same noise on a unit-energy one-symbol tone template, averaged over
    # the two tones.  The reference integrates |H(f)|^2 |W(f - f_i)|^2 with W the zero-padded FFT of
    # the rectangular template (numpy.fft) and H rebuilt here: scipy.signal.butter and the
    # first-order de-emphasis formula |H| = 1/sqrt(1 + (2 pi f tau)^2) (common practice) with the
    # tilt linear in dB between the tones; the channel filter's taps through scipy.signal.freqz.
    # Tolerance 0.02 dB (the de-emphasis fit and the frequency grid).
    res = synthesize(SynthParams(ebn0_db=15.0, symbols_per_burst=300, **kw))
    t = res.truth
    p = t["params"]
    fs = p["sample_rate_hz"]
    L = int(fs // p["symbol_rate_hz"])
    nfft = 1 << 15
    f = np.fft.fftfreq(nfft, 1 / fs)
    if kw.get("real"):
        sos = signal.butter(4, (300.0, 3000.0), btype="bandpass", output="sos", fs=fs)
        _, h = signal.sosfreqz(sos, worN=np.abs(f), fs=fs)
        lo, hi = t["tones_hz"]
        tilt = np.clip((np.abs(f) - 0.5 * (lo + hi)) / (hi - lo), -0.5, 0.5) * kw["tilt_db"]
        g = np.abs(h) ** 2 / (1 + (2 * np.pi * np.abs(f) * 750e-6) ** 2) * 10 ** (tilt / 10)
        white = 2.0
    else:
        _, h = signal.freqz(channel_filter_taps(4000.0, fs), worN=f, fs=fs)
        g = np.abs(h) ** 2
        white = 1.0
    gain = []
    for fi in t["tones_hz"]:
        w = np.fft.fft(np.exp(2j * np.pi * fi * np.arange(L) / fs) / np.sqrt(L), nfft)
        gain.append(np.sum(g * np.abs(w) ** 2) / np.sum(np.abs(w) ** 2))
    n0 = white * t["noise_sigma"] ** 2 * np.mean(gain)
    eb = np.sum(np.abs(res.signal) ** 2) / res.bits.size
    assert 10 * np.log10(eb / n0) == pytest.approx(15.0, abs=0.02)
    assert t["ebn0_db"] == pytest.approx(15.0, abs=1e-9)


@pytest.mark.parametrize("fs", [48000.0, 22050.0])
@pytest.mark.parametrize("tau_us", [75.0, 750.0])
def test_deemphasis_at_2khz(tau_us, fs):
    # Reference: first-order de-emphasis |H| = 1/sqrt(1 + (2 pi f tau)^2) (common practice),
    # response from scipy.signal.freqz; tolerance 0.01 dB.
    b, a = synth.deemphasis_ba(tau_us, fs)
    _, h = signal.freqz(b, a, worN=[2000.0], fs=fs)
    ref = 1.0 / np.sqrt(1 + (2 * np.pi * 2000.0 * tau_us * 1e-6) ** 2)
    assert abs(20 * np.log10(np.abs(h[0]) / ref)) < 0.01


@pytest.mark.parametrize("bw,fs", [(6000.0, 80000.0), (25000.0, 1e6)])
def test_channel_filter_flat_and_stops(bw, fs):
    # Reference: scipy.signal.freqz of the taps; Kaiser design for 60 dB (ripple 10^(-60/20), 0.009 dB):
    # flat within 0.02 dB to the passband edge, at least 59.5 dB down from 1.25 x the edge.
    taps = synth.channel_filter_taps(bw, fs)
    assert taps.size % 2 == 1 and np.allclose(taps, taps[::-1])         # linear phase, centred delay
    _, h = signal.freqz(taps, worN=np.linspace(0.0, bw, 400), fs=fs)
    assert np.max(np.abs(20 * np.log10(np.abs(h)))) < 0.02
    _, h = signal.freqz(taps, worN=np.linspace(1.25 * bw, 0.5 * fs, 2000), fs=fs)
    assert 20 * np.log10(np.max(np.abs(h))) < -59.5


def test_receiver_chain_delay_moves_the_truth():
    # Reference: group delay of the chain at the tones from scipy.signal.group_delay (b, a form);
    # the truth's burst start is the transmitted start plus that delay, tolerance 0.05 samples.
    p = SynthParams(ebn0_db=20.0, real=True, tones_hz=(1200.0, 2200.0), symbol_rate_hz=1200.0,
                    sample_rate_hz=48000.0, symbols_per_burst=100, receiver_audio=True, deemphasis_us=75.0)
    res = synthesize(p)
    b, a = signal.sos2tf(synth.receiver_audio_sos(p))
    _, gd = signal.group_delay((b, a), w=[1200.0, 2200.0], fs=48000.0)
    assert res.truth["chain_delay_samples"] == pytest.approx(np.mean(gd), abs=0.05)
    assert res.truth["bursts"][0]["start_sample"] == pytest.approx(1000.0 + np.mean(gd), abs=0.05)


def test_bad_model_parameters_are_refused():
    for kw in (dict(pulse="square"), dict(bt=0.0), dict(deviation_hz=-1.0), dict(channel_filter_hz=50000.0),
               dict(receiver_audio=True), dict(real=True, channel_filter_hz=1000.0)):
        with pytest.raises(ValueError):
            SynthParams(**kw)
