"""SigMF annotations: checked with the sigmf package's validator and reader (SigMF 1.x,
an open standard) and hashlib; annotation numbers must equal the JSON report's."""

from __future__ import annotations

import hashlib
import json
import warnings

import pytest
from sigmf import sigmffile, validate

from analyzer import capture
from analyzer.synth import SynthParams, synthesize

CENTRE = 868.3e6


def _sha(p):
    return hashlib.sha256(p.read_bytes()).hexdigest()


def test_annotated_copy_validates_and_original_unchanged(tmp_path, make_capture, run_cli):
    cap = make_capture(centre_hz=CENTRE, n_bursts=2, symbols_per_burst=1200, gap_samples=8000.0, seed=11)
    data = cap.with_name(cap.name[:-4] + "data")
    before = (_sha(cap), _sha(data))
    out = tmp_path / "out"
    res = run_cli("analyze", cap, "--tones", "-2500,2500", "--baud", "5000", "--out", out, "--annotate", "--quiet")
    assert res.exit_code == 0, res.output
    assert (_sha(cap), _sha(data)) == before                     # inputs never modified (hashlib)
    ann_path = out / "cap.annotated.sigmf-meta"
    doc = json.loads(ann_path.read_text())
    with warnings.catch_warnings():
        warnings.simplefilter("error")                           # undeclared namespace would warn
        validate.validate(doc)                                   # reference: sigmf validator
    assert doc["global"]["tonepair:source_data"] == data.name
    assert any(e["name"] == "tonepair" for e in doc["global"]["core:extensions"])
    anns = doc["annotations"]
    assert len(anns) == 2
    rep = json.loads((out / "cap.json").read_text())
    for a, b in zip(anns, rep["bursts"]):
        # whole samples covering the fractional burst span of the report (within 1 sample)
        assert a["core:sample_start"] == pytest.approx(b["start_sample"], abs=1.0)
        assert a["core:sample_count"] == pytest.approx(b["stop_sample"] - b["start_sample"], abs=2.0)
        # absolute edges (SigMF: absolute Hz): centre + measured tone -/+ one symbol rate, to 1e-6 Hz
        assert a["core:freq_lower_edge"] == pytest.approx(CENTRE + b["tones_hz"][0] - b["symbol_rate_hz"], abs=1e-6)
        assert a["core:freq_upper_edge"] == pytest.approx(CENTRE + b["tones_hz"][1] + b["symbol_rate_hz"], abs=1e-6)
        assert a["tonepair:ebn0_db"] == pytest.approx(b["ebn0_db"], abs=1e-12)
    # with the dataset beside it under the matching name, the sigmf reader opens it
    link = out / "cap.annotated.sigmf-data"
    link.symlink_to(data)
    rec = sigmffile.fromfile(str(ann_path))
    assert len(rec.get_annotations()) == 2


def test_annotate_refuses_audio(tmp_path, run_cli):
    res = synthesize(SynthParams(continuous_phase=False, symbols_per_burst=300, real=True, tones_hz=(1200.0, 2200.0),
                                 symbol_rate_hz=1000.0, sample_rate_hz=16000.0))
    wav = capture.write_audio(tmp_path / "a.wav", res.samples, 16000)
    r = run_cli("analyze", wav, "--tones", "1200,2200", "--baud", "1000", "--out", tmp_path / "o", "--annotate")
    assert r.exit_code == 2
    assert "SigMF" in r.output
    assert not (tmp_path / "o").exists()
