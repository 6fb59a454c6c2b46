"""Receiver-model diagnostics against external references.

References: |rho| = |sinc(df T)| for rectangular tones (common practice, numpy.sinc);
the model checks are scipy.stats tests (normaltest, kstest, f_oneway) whose
false-alarm level on a clean capture must not exceed the stated 1%; noncoherent
BFSK error rates from Proakis & Salehi, *Digital Communications* (from memory),
written out in the tests; Monte Carlo draws from scipy.stats.rice / rayleigh;
binomial bands from scipy.stats.binom; the Cauchy-Schwarz mismatch loss
integrated with scipy.integrate.quad.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate, special, stats

from analyzer import branches, diagnostics, pipeline, theory
from analyzer.capture import ArrayCapture
from analyzer.report import json_report
from analyzer.synth import SynthParams, synthesize

FS, RS = 80000.0, 5000.0


def _run(params, x=None, tones=None):
    res = synthesize(params)
    xx = res.samples if x is None else x(res.samples)
    return pipeline.analyze_capture(ArrayCapture(xx, FS), pipeline.AnalysisOptions(tones or params.tones_hz, RS))


def test_clean_captures_are_not_flagged():
    flagged = 0
    for seed in range(10):
        out = _run(SynthParams(continuous_phase=False, ebn0_db=10.0, symbols_per_burst=2000, seed=300 + seed))
        b = out.bursts[0]
        flagged += any(c.flagged for c in b.checks)
    # Family-wise level 1% (Bonferroni): P(>= 2 flagged of 10) < 0.5% (scipy.stats.binom(10, 0.01).sf(1)).
    assert flagged <= 1


def test_interferer_is_flagged():
    def add_cw(x):
        n = np.arange(len(x))
        return x + 0.08 * np.exp(2j * np.pi * 2300.0 * n / FS)   # a carrier 200 Hz from the upper tone

    out = _run(SynthParams(continuous_phase=False, ebn0_db=12.0, symbols_per_burst=2000, seed=5), x=add_cw)
    names = {c.name for c in out.bursts[0].checks if c.flagged}
    # The idle-branch law (Rayleigh, scipy.stats.rayleigh) must be rejected at the 1% level.
    assert "Rayleigh fit, tone not sent" in names


def test_impulsive_noise_is_flagged():
    def impulses(x):
        rng = np.random.default_rng(9)
        y = x.copy()
        idx = rng.choice(len(x), size=len(x) // 400, replace=False)
        y[idx] += 3.0 * np.exp(2j * np.pi * rng.uniform(size=idx.size))
        return y

    out = _run(SynthParams(continuous_phase=False, ebn0_db=12.0, symbols_per_burst=2000, seed=6), x=impulses)
    assert any(c.flagged for c in out.bursts[0].checks)


def test_tone_imbalance_3db():
    a1 = 10 ** (-3 / 20)
    out = _run(SynthParams(continuous_phase=False,
                           ebn0_db=10.0, symbols_per_burst=3000, tone_amplitudes=(1.0, a1), seed=8))
    b = out.bursts[0]
    # Reference: the generator's amplitude ratio, 20 log10(a1) = -3 dB; tolerance 0.5 dB (issue 4).
    assert abs(b.stats.imbalance_db - (-3.0)) < 0.5
    assert b.theory_model.closed_form == "unequal-energy"
    # Square-law BER with unequal energies, Pb = 1/2 sum_i 1/2 exp(-E_i/2N0) (Proakis & Salehi, from
    # memory), at the generator's operating point: Eb/N0 = 10 dB average, E_high/E_low = a1^2.
    eb = 10 ** (10.0 / 10)
    e_lo, e_hi = 2 * eb / (1 + a1 ** 2), 2 * eb * a1 ** 2 / (1 + a1 ** 2)
    pb = 0.25 * (np.exp(-e_lo / 2) + np.exp(-e_hi / 2))
    lo, hi = stats.binom.ppf(5e-6, b.ber.bits, pb), stats.binom.isf(5e-6, b.ber.bits, pb)
    assert lo <= b.ber.errors <= hi          # binomial band of probability 1 - 1e-5 (false failure 1e-5) (scipy.stats.binom)
    # the likelihood-ratio rule gains about 1 dB here (see test_likelihood_ber_monte_carlo)
    assert 0.5 < b.decision_gain.gain_db < 1.5


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


# --------------------------------------------------------------------------- likelihood-ratio rule
def test_likelihood_rule_equal_energies_is_square_law():
    # Equal energies: the likelihood rule is the square-law rule, Pb = 1/2 exp(-Eb/2N0)
    # (Proakis & Salehi, from memory); relative tolerance 1e-5, gain within 0.01 dB of 0.
    for x in (2.0, 10.0, 30.0):
        assert theory.ber_likelihood(x, x) == pytest.approx(0.5 * np.exp(-x / 2), rel=1e-5)
    assert abs(theory.decision_gain(10.0, 0.0).gain_db) < 0.01


def test_likelihood_ber_monte_carlo():
    # Monte Carlo of the rule on envelopes drawn from scipy.stats.rice (sent) and rayleigh (not sent),
    # one real output of unit variance, g = sqrt(2 E/N0): E0/N0 = 13.3, E1/N0 = 6.67 (3 dB imbalance).
    e0, e1 = 40 / 3, 20 / 3
    g = np.sqrt(2 * np.array([e0, e1]))
    n = 200_000
    rng = np.random.default_rng(2)

    def lam(gi, r):   # ln I0(g r) - g^2/2
        return np.log(special.i0e(gi * r)) + gi * r - gi * gi / 2

    errs = 0
    for s in (0, 1):
        o = 1 - s
        rs = stats.rice.rvs(g[s], size=n, random_state=rng)
        ro = stats.rayleigh.rvs(size=n, random_state=rng)
        errs += np.count_nonzero(lam(g[o], ro) > lam(g[s], rs))
    pb = theory.ber_likelihood(e0, e1)
    lo, hi = stats.binom.ppf(5e-6, 2 * n, pb), stats.binom.isf(5e-6, 2 * n, pb)
    assert lo <= errs <= hi                  # binomial band of probability 1 - 1e-5 (false failure 1e-5) (scipy.stats.binom)
    # and the square-law rule at the same point, 1/4 (exp(-E0/2N0) + exp(-E1/2N0)) (Proakis & Salehi,
    # from memory), is worse by a margin far outside the Monte Carlo spread
    assert 0.25 * (np.exp(-e0 / 2) + np.exp(-e1 / 2)) > 2 * hi / (2 * n)


# --------------------------------------------------------------------------- template mismatch
def test_nominal_template_loss_is_sinc_squared():
    off = 0.15 * RS
    out = _run(SynthParams(continuous_phase=False, ebn0_db=12.0, symbols_per_burst=2000, centre_offset_hz=off, seed=12),
               tones=(-2500.0, 2500.0))
    b = out.bursts[0]
    loss = json_report.nominal_template_loss_db(b.tones_hz, (-2500.0, 2500.0), FS, b.grid.window)
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


# --------------------------------------------------------------------------- noise correlation
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


# --------------------------------------------------------------------------- blind BER
BLIND_ALPHA = 1e-5


def _blind_band(b):
    """Error counts consistent with the blind BER: the blind estimate's 95% interval stretched
    (log-normal reading) to the 1 - BLIND_ALPHA level, then the binomial band of the counted bits
    at each end (scipy.stats.binom) at BLIND_ALPHA / 2 per side.  False-failure probability at
    most 2 * BLIND_ALPHA (union bound over the two stretches; the count and the blind estimate
    come from the same symbols, which only makes the band wider than needed)."""
    blind, (lo, hi) = b.blind_ber
    s = (np.log(hi) - np.log(lo)) / (2 * stats.norm.isf(0.025))
    k = stats.norm.isf(BLIND_ALPHA / 2)
    p_lo, p_hi = blind * np.exp(-k * s), blind * np.exp(k * s)
    n = b.ber.bits
    return stats.binom.ppf(BLIND_ALPHA / 2, n, p_lo), stats.binom.isf(BLIND_ALPHA / 2, n, p_hi)


@pytest.mark.parametrize("ebn0_db", [5.0, 6.5, 8.0])
def test_blind_ber_matches_counted(ebn0_db):
    n_sym = 20000
    out = _run(SynthParams(continuous_phase=False,
                           ebn0_db=ebn0_db, symbols_per_burst=n_sym, seed=40 + int(ebn0_db * 2)))
    b = out.bursts[0]
    lo, hi = _blind_band(b)
    # the band is tighter than a factor 1.5 either way (8 dB: about 0.69 ... 1.36 of the blind count)
    assert hi < 1.4 * b.blind_ber[0] * b.ber.bits and lo > b.blind_ber[0] * b.ber.bits / 1.5
    assert lo <= b.ber.errors <= hi


@pytest.mark.parametrize("ebn0_db,n_sym", [(10.9, 60000), (12.0, 300000)])
def test_blind_ber_matches_counted_low_ber(ebn0_db, n_sym):
    """The low end of the range: BER ~1e-3 (handbook: 10.9 dB for 1e-3, standard textbook curves,
    from memory) and ~2e-4 at 12 dB (about 55 errors in 300k bits)."""
    out = _run(SynthParams(continuous_phase=False, ebn0_db=ebn0_db, symbols_per_burst=n_sym, seed=70 + int(ebn0_db)))
    b = out.bursts[0]
    lo, hi = _blind_band(b)
    assert lo <= b.ber.errors <= hi
