"""The measured pulse, its template loss, and the leakage, against their definitions and quadrature.

References: the Cauchy-Schwarz mismatch loss and the leakage of a shaped pulse integrated with
scipy.integrate.quad; |rho| = |sinc(df T)| for rectangular tones (common practice, numpy.sinc);
numpy's complex matmul and numpy.exp for the kernels.
"""

from __future__ import annotations


import numpy as np
import pytest
from scipy import integrate

from analyzer import branches, diagnostics, estimate, pipeline
from analyzer.capture import ArrayCapture
from analyzer.synth import SynthParams, synthesize
from analyzer.diagnostics import _pulse  # private kernels, tested directly

FS, RS = 80000.0, 5000.0


def _run(params, x=None, tones=None):
    res = synthesize(params)
    xx = res.samples if x is None else x(res.samples)
    return pipeline.analyze_capture(ArrayCapture(xx, FS), pipeline.AnalysisOptions(tones or params.tones_hz, RS))


@pytest.mark.parametrize("spacing", [0.8])
def test_tone_correlation_non_orthogonal(spacing):
    df = spacing * RS
    out = _run(SynthParams(continuous_phase=False,
                           ebn0_db=12.0, symbols_per_burst=3000, tones_hz=(-df / 2, df / 2), seed=10))
    b = out.bursts[0]
    # Reference: |sinc(df T)| for rectangular tones (common practice; numpy.sinc); tolerance 0.03.
    assert abs(abs(b.rho) - abs(np.sinc(spacing))) < 0.03
    assert b.theory_model.correlated
    # The leakage measured on the idle branch is the same |sinc(df T)| for rectangular pulses; 0.03.
    assert abs(b.leakage.ratio_mean - abs(np.sinc(spacing))) < 0.03


def test_nominal_template_loss_is_sinc_squared():
    off = 0.15 * RS
    out = _run(SynthParams(continuous_phase=False, ebn0_db=12.0, symbols_per_burst=2000, centre_offset_hz=off, seed=12),
               tones=(-2500.0, 2500.0))
    b = out.bursts[0]
    loss = b.nominal_template_loss_db                        # templates at the --tones hints
    # Reference: -10 log10 sinc^2(df T) for a rectangular symbol (common practice; numpy.sinc); 0.05 dB.
    assert abs(loss - (-10 * np.log10(np.sinc(0.15) ** 2))) < 0.05


def _ramp_pulse(t, a):
    """sin^2 amplitude ramp of length a at both edges of a unit symbol (the synth's symbol_ramp)."""
    d = np.minimum(t, 1 - t)
    return np.sin(0.5 * np.pi * np.clip(d / a, 0, 1)) ** 2


@pytest.mark.parametrize("ramp", [0.0, 0.25])
def test_measured_pulse_loss(ramp):
    p = SynthParams(continuous_phase=False, ebn0_db=20.0, symbols_per_burst=2000, symbol_ramp=ramp, seed=21)
    res = synthesize(p)
    tr = res.truth["bursts"][0]
    sps = FS / RS
    grid = branches.symbol_grid(tr["start_sample"], sps, tr["n_symbols"])     # exact timing (hand-built)
    x = res.samples
    out = branches.correlate(x, 0, grid, p.tones_hz, FS)
    rows = branches.symbol_rows(x, 0, grid)
    idx = grid.first_samples[:, None] + np.arange(grid.window)[None, :]      # the (n, L) index form
    sent = res.bits
    nv = np.full(2, res.truth["noise_sigma"] ** 2)
    pulse = diagnostics.measured_pulse(rows, idx, sent, p.tones_hz, FS, nv)
    # Reference: Cauchy-Schwarz loss of the rectangular template, -10 log10((int p)^2 / (T int p^2)),
    # integrated with scipy.integrate.quad (0 dB for ramp 0); tolerance 0.05 dB.
    if ramp > 0:
        s1 = integrate.quad(_ramp_pulse, 0, 1, args=(ramp,), points=[ramp, 1 - ramp])[0]
        s2 = integrate.quad(lambda t: _ramp_pulse(t, ramp) ** 2, 0, 1, points=[ramp, 1 - ramp])[0]
        ref = -10 * np.log10(s1 ** 2 / s2)
    else:
        ref = 0.0
    assert abs(pulse.template_loss_db_mean - ref) < 0.05
    # The noise left after removing the measured pulse is the generator's noise: sigma^2 per sample
    # (the generator's input, 3%).
    assert pulse.noise_per_sample == pytest.approx(res.truth["noise_sigma"] ** 2, rel=0.03)
    # Leakage of the shaped pulse into the orthogonal template, |int p e^{j 2 pi t}| / |int p|
    # (scipy.integrate.quad; df T = 1 here); tolerance 0.02.
    from analyzer import estimate
    mom = estimate.group_moments(out.z, sent)
    leak = diagnostics.leakage(mom, pulse.noise_per_sample)
    if ramp > 0:
        re = integrate.quad(lambda t: _ramp_pulse(t, ramp) * np.cos(2 * np.pi * t), 0, 1, points=[ramp, 1 - ramp])[0]
        im = integrate.quad(lambda t: _ramp_pulse(t, ramp) * np.sin(2 * np.pi * t), 0, 1, points=[ramp, 1 - ramp])[0]
        ref_leak = np.hypot(re, im) / s1
    else:
        ref_leak = 0.0
    assert abs(leak.ratio_mean - ref_leak) < 0.02


def test_shaped_pulse_is_flagged():
    out = _run(SynthParams(continuous_phase=False, ebn0_db=14.0, symbols_per_burst=2000, symbol_ramp=0.25, seed=22))
    names = {c.name for c in out.bursts[0].checks if c.flagged}
    # the idle branch holds the shaped pulse's leakage: rejected at the 1% level (scipy.stats.norm)
    assert "idle-branch power" in names


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


@pytest.mark.parametrize("n, L, c", [(4000, 20, 4), (700, 16, 1), (3, 5, 2)])
def test_real_form_products_match_complex_matmul(n, L, c):
    # private kernel: measured_pulse's own test has too few symbols for the products to be formed in
    # blocks (2^15 matrix entries at a time); the blocked path shows only here
    rng = np.random.default_rng(n + L + c)
    m = rng.standard_normal((n, L)) + 1j * rng.standard_normal((n, L))
    v = rng.standard_normal((L, c)) + 1j * rng.standard_normal((L, c))
    w = rng.standard_normal((c, n)) + 1j * rng.standard_normal((c, n))
    # reference: numpy's complex matmul; tolerance: rounding of L (resp. n) complex multiply-adds,
    # relative to the sum of the magnitudes of the terms
    got = _pulse._rows_times(m, v)
    assert got.shape == (n, c)
    np.testing.assert_array_less(np.abs(got - m @ v), 8 * L * 1.2e-16 * (np.abs(m) @ np.abs(v)) + 1e-300)
    got = _pulse._times_rows(w, m)
    assert got.shape == (c, L)
    np.testing.assert_array_less(np.abs(got - w @ m), 8 * n * 1.2e-16 * (np.abs(w) @ np.abs(m)) + 1e-300)
