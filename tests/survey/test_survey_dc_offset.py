"""The DC-offset warning is a significance test: calibrated on clean captures, silent on them.

References (outside the project):

* the variance of the mean of a stationary series is S(0)/N, S(0) its spectral density at 0 Hz
  (Priestley, *Spectral Analysis and Time Series*, 1981, from memory), so 2N|m|^2/S(0) is
  chi-square with 2 degrees of freedom for complex samples and N m^2/S(0) with 1 for real ones;
* the spectrum here comes from scipy.signal.welch (periodic Hann, two-sided), not from the
  analyzer's own pass, and the analytic signal of audio from scipy.signal.hilbert;
* the p-values of a calibrated test are uniform: scipy.stats.kstest against U(0, 1).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from scipy import signal, stats

from analyzer import survey, capture
from analyzer.synth import SynthParams, synthesize

KS_ALPHA = 1e-5      # false-failure probability of each KS check (the level of the test itself)


def _welch(z, fs, nfft=1024):
    f, p = signal.welch(z, fs=fs, window="hann", nperseg=nfft, noverlap=0, return_onesided=False,
                        detrend=False, scaling="density")
    return np.fft.fftshift(f), np.fft.fftshift(p) * fs        # per-sample density: white noise -> sigma^2


@pytest.mark.parametrize("real", [False, True])
def test_p_values_are_uniform_on_captures_without_dc(real):
    pv = []
    for seed in range(300):
        p = SynthParams(symbols_per_burst=300, ebn0_db=8.0 + (seed % 7), centre_offset_hz=(seed % 11) * 40.0,
                        tones_hz=(1200.0, 2200.0) if real else (-2500.0, 2500.0), symbol_rate_hz=1200.0 if real
                        else 5000.0, sample_rate_hz=48000.0 if real else 80000.0, real=real, seed=seed,
                        start_offset_samples=500.0, tail_samples=500)
        x = synthesize(p).samples
        z = signal.hilbert(x) if real else x
        f, psd = _welch(z, p.sample_rate_hz)
        _, pval = survey.dc_offset_test(complex(np.mean(z)), z.size, f, psd, real=real)
        pv.append(pval)
    assert stats.kstest(pv, "uniform").pvalue > KS_ALPHA


def test_an_offset_well_above_the_mean_noise_is_found():
    p = SynthParams(symbols_per_burst=300, ebn0_db=10.0, seed=5)
    x = synthesize(p).samples
    f, psd = _welch(x, p.sample_rate_hz)
    k0 = int(np.argmin(np.abs(f)))
    sd = np.sqrt(np.mean(np.r_[psd[k0 - 4:k0 - 1], psd[k0 + 2:k0 + 5]]) / x.size)   # std of the mean
    t, pval = survey.dc_offset_test(complex(np.mean(x)) + 8 * sd, x.size, f, psd)
    # chi-square (2 dof, noncentral lambda = 2*64 = 128): the test at 1e-6 misses it with
    # probability scipy.stats.ncx2.cdf(chi2.isf(1e-6, 2), 2, 128) ~ 1e-10
    assert pval < survey.DC_FALSE_ALARM


@pytest.mark.parametrize("args", [dict(rate_error_ppm=-300.0, centre_offset_hz=300.0),
                                  dict(pattern="PN23", symbols_per_burst=300)])
def test_no_dc_warning_on_clean_captures(run_cli, tmp_path, args):
    # false-failure probability: DC_FALSE_ALARM = 1e-6 per capture
    res = synthesize(SynthParams(**args))
    meta = capture.write_sigmf(tmp_path / "c", res.samples, 80e3, truth=res.truth)
    r = run_cli("analyze", meta, "--tones", "-2500,2500", "--baud", "5000", "--out", tmp_path / "o")
    assert r.exit_code == 0, r.output
    rep = json.loads((tmp_path / "o" / "c.json").read_text())
    assert not [w for w in rep["warnings"] if "DC offset" in w]


def test_audio_dc_warning_speaks_of_the_mean_sample_value(run_cli, tmp_path):
    p = SynthParams(tones_hz=(1200.0, 2200.0), symbol_rate_hz=1200.0, sample_rate_hz=48000.0, real=True,
                    ebn0_db=14.0, symbols_per_burst=600)
    x = synthesize(p).samples + 0.05
    wav = capture.write_audio(tmp_path / "a.wav", x, 48000)
    r = run_cli("analyze", wav, "--out", tmp_path / "o")
    assert r.exit_code == 0, r.output
    warns = [w for w in json.loads((tmp_path / "o" / "a.json").read_text())["warnings"] if "DC offset" in w]
    assert len(warns) == 1
    assert f"mean sample value {np.mean(x):.4g} of full scale" in warns[0]       # numpy reference
    assert " I " not in warns[0] and "Q " not in warns[0]
