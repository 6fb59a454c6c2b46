"""The BER predicted from the branch statistics alone against the counted errors.

References: standard noncoherent BFSK curves (from memory, as stated beside each check);
binomial bands from scipy.stats.binom and normal quantiles from scipy.stats.norm.
"""

from __future__ import annotations


import numpy as np
import pytest
from scipy import stats

from analyzer import pipeline
from analyzer.capture import ArrayCapture
from analyzer.synth import SynthParams, synthesize

FS, RS = 80000.0, 5000.0


def _run(params, x=None, tones=None):
    res = synthesize(params)
    xx = res.samples if x is None else x(res.samples)
    return pipeline.analyze_capture(ArrayCapture(xx, FS), pipeline.AnalysisOptions(tones or params.tones_hz, RS))

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
