"""What the reports say: burst numbers, and the same numbers and verdict in JSON, terminal and HTML.

References: the JSON report is the record (checked against its schema with ``jsonschema`` in
tests/test_pipeline.py); the terminal and HTML views must show its numbers as printed by the
report's own formats, and number the bursts 0, 1, 2 ... in time order (common practice for a
list: consecutive numbers, so that a burst is found by its number in every view).
"""

from __future__ import annotations

import json
import re

import pytest




def test_burst_numbers_are_consecutive_in_every_view(run_cli, make_capture, tmp_path):
    cap = make_capture("three", n_bursts=3, symbols_per_burst=600, ebn0_db=12.0, seed=3)
    out = tmp_path / "rep"
    r = run_cli("analyze", cap, "--out", out, "--annotate")              # blind: no hints
    assert r.exit_code == 0, r.output
    rep = json.loads((out / "three.json").read_text())
    assert [b["index"] for b in rep["bursts"]] == [0, 1, 2]
    rows = re.findall(r"^\S\s+(\d+)\s+\S\s+[0-9.]+\s+\S\s+600\s", r.output, flags=re.M)
    assert rows == ["0", "1", "2"]
    html = (out / "three.html").read_text()
    assert re.findall(r"<tr><td>(\d+)</td><td>[0-9.,]+</td><td>600</td>", html) == ["0", "1", "2"]
    assert re.findall(r"<h3>Burst (\d+)</h3>", html) == ["0", "1", "2"]
    meta = json.loads((out / "three.annotated.sigmf-meta").read_text())
    assert [a["core:label"] for a in meta["annotations"]] == ["burst 0", "burst 1", "burst 2"]
