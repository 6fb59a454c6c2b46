"""Pattern polarity and tone mapping: all four combinations of what was sent are reported as one pair.

References (outside the project):

* ITU-T O.150 (from memory; PN7 common practice): the patterns, their polynomials and which of
  them O.150 defines as the inverted register output (PN15, PN23);
* scipy.signal.max_len_seq: an independent maximal-length sequence generator, to check that the
  bits synth sends for "--invert-pattern" are the raw register (the complement of O.150's form
  for PN15/PN23, O.150's form itself complemented for PN7..PN11).

What is checked is physical: which tone a ONE of the O.150 pattern rides on.  The report must
name the pattern as O.150 defines it and the tone that carries its ONE; for a sent pattern that
is the complement of O.150's, "ONE = high" and "ONE = low" swap, since the complement of the
pattern with ONE on one tone is the pattern with ONE on the other.
"""

from __future__ import annotations

import json
import re

import numpy as np
import pytest
from scipy.signal import max_len_seq

from analyzer import pipeline
from analyzer.capture import ArrayCapture
from analyzer.errorcount import PATTERNS, prbs_sequence
from analyzer.synth import SynthParams, synthesize


def _raw_register(name, n_bits):
    """The register output from scipy (no O.150 inversion), in transmission order.

    scipy.signal.max_len_seq(n) with its default taps and all-ones start runs the register in the
    other direction: max_len_seq(n)[i] == raw[(n - 1 - i) mod P] (see tests/errorcount/test_prbs.py)."""
    n = PATTERNS[name].order
    seq = max_len_seq(n)[0].astype(np.uint8)
    period = seq.size
    raw = seq[(n - 1 - np.arange(period)) % period]
    return np.resize(raw, n_bits)


@pytest.mark.parametrize("name", list(PATTERNS))
def test_synth_inverted_pattern_is_the_complement_of_o150(name):
    n_bits = 600
    res = synthesize(SynthParams(pattern=name, pattern_inverted=True, symbols_per_burst=n_bits,
                                 ebn0_db=float("inf")))
    # O.150 (from memory): PN15 and PN23 are the inverted register output, the others not.
    o150 = _raw_register(name, n_bits) ^ np.uint8(name in ("PN15", "PN23"))
    np.testing.assert_array_equal(res.bits, o150 ^ np.uint8(1))


def _tone_of_first_bits(res, p):
    """Which tone (0 low, 1 high) each of the first symbols was sent on, read from the samples."""
    sps = int(p.sample_rate_hz / p.symbol_rate_hz)
    start = int(np.ceil(p.start_offset_samples))
    x = res.samples[start:start + 50 * sps].reshape(50, sps)
    n = np.arange(sps)
    e = [np.abs((x * np.exp(-2j * np.pi * f * n / p.sample_rate_hz)).sum(axis=1)) for f in p.tones_hz]
    return (e[1] > e[0]).astype(np.uint8)


@pytest.mark.parametrize("name", list(PATTERNS))
@pytest.mark.parametrize("inverted", [False, True])
@pytest.mark.parametrize("low", [False, True])
def test_reported_pattern_and_mapping_describe_what_was_sent(name, inverted, low):
    p = SynthParams(pattern=name, pattern_inverted=inverted, one_on_low_tone=low, symbols_per_burst=1500,
                    ebn0_db=12.0, seed=7)
    res = synthesize(p)
    # What was sent, from the samples alone (noise-free copy): the tone of each symbol against
    # the O.150 pattern (scipy register, O.150 polarity) -- the sender's physical truth.
    clean = synthesize(SynthParams(**{**p.__dict__, "ebn0_db": float("inf")}))
    o150 = _raw_register(name, 50) ^ np.uint8(name in ("PN15", "PN23"))
    tones = _tone_of_first_bits(clean, p)
    one_is_high = bool(np.all(tones == o150))
    assert one_is_high or np.all(tones == o150 ^ np.uint8(1))     # the synth sent one of the two
    assert one_is_high == (inverted == low)

    for reference in ("auto", name):
        out = pipeline.analyze_capture(ArrayCapture(res.samples, p.sample_rate_hz),
                                       pipeline.AnalysisOptions(p.tones_hz, p.symbol_rate_hz,
                                                                reference=reference))
        ber = out.summary.ber
        assert ber is not None
        assert ber.reference == name                              # the pattern as O.150 defines it
        assert ber.tone_for_one == ("high" if one_is_high else "low")
        # at 12 dB, Pb = 1/2 exp(-Eb/2N0) = 2.5e-4 (Proakis & Salehi, from memory): a wrong
        # pairing would count about half of the bits as errors.
        assert ber.rate < 0.01


def test_command_line_makes_and_reports_the_mapping(run_cli, tmp_path):
    cap = tmp_path / "low.sigmf-meta"
    r = run_cli("synth", cap, "--pattern", "PN15", "--invert-pattern", "--one-tone", "low", "--symbols", "1500",
                "--ebn0", "12")
    assert r.exit_code == 0, r.output
    r = run_cli("analyze", cap, "--tones", "-2500,2500", "--baud", "5000", "--out", tmp_path / "rep")
    assert r.exit_code == 0, r.output
    ber = json.loads((tmp_path / "rep" / "low.json").read_text())["bursts"][0]["ber"]
    # the raw PN15 register (complement of O.150's PN15) with its ONE on the low tone is O.150's
    # PN15 with its ONE on the high tone
    assert (ber["reference"], ber["tone_for_one"]) == ("PN15", "high")
    assert re.search(r"pattern\s+\S?\s*PN15\s+\S?\s*ONE on the high tone", r.output), r.output
    r = run_cli("synth", tmp_path / "x.sigmf-meta", "--one-tone", "middle")
    assert r.exit_code == 2 and r.stderr.startswith("error: ") and "--one-tone" in r.stderr
