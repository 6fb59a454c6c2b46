"""Receiver-model diagnostics against external references.

References: |rho| = |sinc(df T)| for rectangular tones (common practice, numpy.sinc);
the model checks are scipy.stats tests (normaltest, kstest, f_oneway) whose
false-alarm level on a clean capture must not exceed the stated 1%.
"""

from __future__ import annotations

import numpy as np
import pytest

from analyzer import pipeline
from analyzer.synth import SynthParams, synthesize

FS, RS = 80000.0, 5000.0


class _Cap:
    kind = "iq"
    sample_rate_hz = FS
    centre_hz = None
    datatype = "cf32_le"
    path = "mem"

    def __init__(self, x):
        self.x = np.asarray(x, np.complex64)
        self.n_samples = len(self.x)

    def read(self, a, n):
        return self.x[a:a + n]


def _run(params, x=None, tones=None):
    res = synthesize(params)
    xx = res.samples if x is None else x(res.samples)
    return pipeline.analyze_capture(_Cap(xx), pipeline.AnalysisOptions(tones or params.tones_hz, RS))


def test_clean_captures_are_not_flagged():
    flagged = 0
    for seed in range(10):
        out = _run(SynthParams(ebn0_db=10.0, symbols_per_burst=2000, seed=300 + seed))
        b = out.bursts[0]
        flagged += any(c.flagged for c in b.checks)
    # Family-wise level 1% (Bonferroni): P(>= 2 flagged of 10) < 0.5% (scipy.stats.binom(10, 0.01).sf(1)).
    assert flagged <= 1


def test_interferer_is_flagged():
    def add_cw(x):
        n = np.arange(len(x))
        return x + 0.08 * np.exp(2j * np.pi * 2300.0 * n / FS)   # a carrier 200 Hz from the upper tone

    out = _run(SynthParams(ebn0_db=12.0, symbols_per_burst=2000, seed=5), x=add_cw)
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

    out = _run(SynthParams(ebn0_db=12.0, symbols_per_burst=2000, seed=6), x=impulses)
    assert any(c.flagged for c in out.bursts[0].checks)


def test_tone_imbalance_3db():
    a1 = 10 ** (-3 / 20)
    out = _run(SynthParams(ebn0_db=10.0, symbols_per_burst=3000, tone_amplitudes=(1.0, a1), seed=8))
    b = out.bursts[0]
    # Reference: the generator's amplitude ratio, 20 log10(a1) = -3 dB; tolerance 0.5 dB (issue 4).
    assert abs(b.stats.imbalance_db - (-3.0)) < 0.5
    assert b.theory_model.closed_form == "unequal-energy"


@pytest.mark.parametrize("spacing", [0.8])
def test_tone_correlation_non_orthogonal(spacing):
    df = spacing * RS
    out = _run(SynthParams(ebn0_db=12.0, symbols_per_burst=3000, tones_hz=(-df / 2, df / 2), seed=10))
    b = out.bursts[0]
    # Reference: |sinc(df T)| for rectangular tones (common practice; numpy.sinc); tolerance 0.03.
    assert abs(abs(b.rho) - abs(np.sinc(spacing))) < 0.03
    assert b.theory_model.correlated
