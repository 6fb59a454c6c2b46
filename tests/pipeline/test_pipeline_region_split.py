"""A burst longer than the region limit is analysed in pieces that really are cut.

References: the truth of what was sent is the O.150 PN9 pattern (ITU-T O.150, from memory);
the bit error probability of noncoherent orthogonal BFSK, Pb = 1/2 exp(-Eb/2N0) (Proakis &
Salehi, from memory), with its binomial band from scipy.stats.binom.
"""

from __future__ import annotations

import numpy as np
from scipy import stats

from analyzer import pipeline, capture
from analyzer.synth import SynthParams, synthesize
from analyzer.pipeline import _regions  # private: the region limit and the cut patched (no public door)


def test_one_long_burst_is_split_into_pieces_and_still_counted(tmp_path, monkeypatch):
    limit = 16384                                          # samples: about 1000 symbols at 16 per symbol
    n_sym, ebn0 = 4000, 9.0
    res = synthesize(SynthParams(symbols_per_burst=n_sym, ebn0_db=ebn0, seed=31))
    meta = capture.write_sigmf(tmp_path / "long", res.samples, 80e3, truth=res.truth)
    monkeypatch.setattr(_regions, "MAX_REGION_SAMPLES", limit)
    pieces = []
    real_split = _regions.split_region

    def spy(a, b, power, frame, lim):
        out = real_split(a, b, power, frame, lim)
        pieces.append(out)
        return out

    monkeypatch.setattr(_regions, "split_region", spy)
    out = pipeline.analyze(meta, tones_hz=(-2500, 2500), symbol_rate_hz=5000)
    cut = [p for p in pieces if len(p) > 1]
    assert cut, "the region was never split"
    longest = max(len(p) for p in cut)
    assert longest >= n_sym * 16 // limit                  # 64000 samples in pieces of <= 16384: >= 4
    assert all(b - a <= limit for p in cut for a, b in p)
    # every piece is analysed: the symbols add up to the burst (a symbol or two lost per cut)
    assert len(out.bursts) == longest
    assert abs(sum(b.n_symbols for b in out.bursts) - n_sym) <= 2 * longest
    # the error count over the pieces follows the closed-form BER (band at 1e-5 two-sided)
    ber = out.summary.ber
    pb = 0.5 * np.exp(-10 ** (ebn0 / 10) / 2)
    assert stats.binom.ppf(5e-6, ber.bits, pb) <= ber.errors <= stats.binom.isf(5e-6, ber.bits, pb)
    assert ber.bits >= n_sym - 40 * longest
