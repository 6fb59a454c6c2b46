"""HDLC frames as the reference through the analysis: synthetic traffic, reports, the real recording (the frame
kernels themselves are checked in tests/errorcount/test_hdlc.py).

References used below (outside the project):

* ISO/IEC 13239 framing with the CRC-16 of ITU-T X.25 (from memory): a frame found
  is valid when its FCS checks.
* Tone error rate of noncoherent BFSK, 1/2 exp(-Eb/2N0) (Proakis, from memory).
* The real recording in ``tests/data`` (provenance in ``tests/data/README.md``)
  and the two frames its provenance lists.
"""

from __future__ import annotations

import json
from pathlib import Path

import jsonschema
import numpy as np

from analyzer import errorcount, pipeline, capture
from analyzer import report
from analyzer.synth import SynthParams, synthesize

DATA = Path(__file__).parents[1] / "data"
REAL = DATA / "afsk1200_satellite_downlink.wav"
# the two frames listed in tests/data/README.md (bytes without flags and FCS)
REAL_FRAMES = [
    "82a088a6a8686ca6a46ca682a86cae92888a624062ae92888a64406303f03d45523b4d4e3b31323336383b31353430373b31303b"
    "3130353b313438313b33333b3432333700",
    "82a088a6a8686ca6a46ca682a86cae92888a624062ae92888a64406303f03d4d313b5354533b3030303030303030303030303030"
    "30303131313131303030303030303130303000",
]


# --------------------------------------------------------------------------- through the analysis
def test_synth_framed_round_trip(tmp_path):
    params = SynthParams(framing="hdlc", frame_bytes=24, n_bursts=2, symbols_per_burst=2500, ebn0_db=16.0,
                         seed=4)
    res = synthesize(params)
    meta = capture.write_sigmf(tmp_path / "fr", res.samples, params.sample_rate_hz, truth=res.truth)
    for ref in ("frames", "auto"):
        out = pipeline.analyze(meta, tones_hz=params.tones_hz, symbol_rate_hz=params.symbol_rate_hz, reference=ref,
                               workers=1)
        assert len(out.bursts) == 2
        for b, truth in zip(out.bursts, res.truth["bursts"]):
            sent = [f["hex"] for f in truth["frames"]]
            # 16 dB: tone error rate 1/2 exp(-Eb/2N0) = 1.1e-9 (Proakis, from memory), so a frame of
            # 24 bytes fails with probability < 1e-6: every frame is found intact
            assert [f.data.hex() for f in b.frames.frames] == sent
            assert b.frames.valid == len(sent) >= 8
            assert b.stats.data_aided
            assert b.frames.known_symbols > 0.9 * b.n_symbols
            # data-aided Eb/N0 against the setting, within 1 dB (the interval is about +-0.3 dB here)
            assert abs(b.stats.ebn0_db - 16.0) < 1.0
        rep = report.build_report(out)
        jsonschema.validate(rep, json.loads(report.SCHEMA_PATH.read_text()))
        assert rep["summary"]["frames"]["valid"] == rep["summary"]["frames"]["found"]
        assert rep["bursts"][0]["frames"]["frames"][0]["fcs_valid"]


def test_prbs_traffic_keeps_the_pattern_under_auto(tmp_path):
    params = SynthParams(symbols_per_burst=2000, ebn0_db=12.0)
    res = synthesize(params)
    meta = capture.write_sigmf(tmp_path / "pn", res.samples, params.sample_rate_hz, truth=res.truth)
    out = pipeline.analyze(meta, tones_hz=params.tones_hz, symbol_rate_hz=params.symbol_rate_hz, workers=1)
    # a PN9 pattern (ITU-T O.150) syncs: frames are not the reference, and no random stretch passes for one
    assert out.bursts[0].ber is not None and out.bursts[0].frames is None
    assert out.summary.frames is None


def test_cli_bits_and_frames_files(tmp_path, run_cli):
    cap = tmp_path / "f.sigmf-meta"
    r = run_cli("synth", cap, "--framing", "hdlc", "--frame-bytes", "20", "--symbols", "1500", "--ebn0", "16")
    assert r.exit_code == 0, r.output
    bits, fr = tmp_path / "f.bits", tmp_path / "f.frames"
    args = ("analyze", cap, "--tones", "-2500,2500", "--baud", "5000", "--out", tmp_path, "--bits", bits,
            "--frames-out", fr, "--quiet", "--workers", "1")
    r = run_cli(*args)
    assert r.exit_code == 0, r.output
    lines = bits.read_text().splitlines()
    assert lines[0].startswith("# burst 0") and set(lines[1]) <= {"0", "1"}
    truth = json.loads(cap.read_text())["global"]["tonepair:truth"]["bursts"][0]
    tones = np.frombuffer(lines[1].encode(), np.uint8) - ord("0")
    assert [f.data.hex() for f in errorcount.find_frames(tones) if f.fcs_valid] == [f["hex"] for f in truth["frames"]]
    assert fr.read_text().split() == [f["hex"] for f in truth["frames"]]
    # not overwritten without --overwrite
    r = run_cli(*args)
    assert r.exit_code == 2 and "exists" in r.output


# --------------------------------------------------------------------------- the real recording
def test_real_recording_bits_give_both_frames(tmp_path, run_cli):
    """The real 1200 Bd downlink (tests/data/README.md): the decisions that --bits writes hold both
    listed frames with a valid FCS."""
    bits = tmp_path / "sat.bits"
    r = run_cli("analyze", REAL, "--tones", "1200,2200", "--baud", "1200", "--out", tmp_path, "--bits", bits,
                "--quiet", "--workers", "1")
    assert r.exit_code == 0, r.output
    lines = bits.read_text().splitlines()
    found = []
    for head, row in zip(lines[::2], lines[1::2]):
        assert head.startswith("#")
        tones = np.frombuffer(row.encode(), np.uint8) - ord("0")
        found += [f.data.hex() for f in errorcount.find_frames(tones) if f.fcs_valid]
    assert found == REAL_FRAMES
