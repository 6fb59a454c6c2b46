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
    rows = re.findall(r"^\s+(\d+)\s+[0-9.,]+\s+600\s", r.output, flags=re.M)
    assert rows == ["0", "1", "2"]
    html = (out / "three.html").read_text()
    assert re.findall(r"<tr><td>(\d+)</td><td>[0-9.,]+</td><td>600</td>", html) == ["0", "1", "2"]
    assert re.findall(r"<h3>Burst (\d+)</h3>", html) == ["0", "1", "2"]
    meta = json.loads((out / "three.annotated.sigmf-meta").read_text())
    assert [a["core:label"] for a in meta["annotations"]] == ["burst 0", "burst 1", "burst 2"]


def _validate(rep):
    import jsonschema

    from analyzer.report import json_report
    jsonschema.validate(rep, json.loads(json_report.SCHEMA_PATH.read_text()))   # reference: jsonschema


@pytest.mark.parametrize("pattern,symbols,reference,reason", [
    # PN23 with the default 184-bit window needs 2 * 184 + 23 = 391 bits to sync (analyzer.prbs)
    ("PN23", 300, "PN23", "PN23: the burst is too short to sync (300 bits; PN23 needs at least 391)"),
    ("PN15", 1500, "PN9", "PN9 not found; the bits follow PN15"),
    ("PN23", 300, "auto", "PN23: the burst is too short to sync (300 bits; PN23 needs at least 391)"),
])
def test_a_pattern_not_counted_says_why(run_cli, make_capture, tmp_path, pattern, symbols, reference, reason):
    cap = make_capture("p", pattern=pattern, symbols_per_burst=symbols, ebn0_db=12.0)
    spec = tmp_path / "s.toml"
    spec.write_text("[limits]\nmax_ber = 1e-3\nmax_implementation_loss_db = 2.0\n")
    out = tmp_path / "rep"
    r = run_cli("analyze", cap, "--tones", "-2500,2500", "--baud", "5000", "--reference", reference,
                "--spec", spec, "--out", out)
    assert r.exit_code == 1, r.output                     # a limit that cannot be checked does not pass
    rep = json.loads((out / "p.json").read_text())
    _validate(rep)
    assert rep["summary"]["ber"] is None
    assert rep["summary"]["ber_reason"] == reason
    assert [b["ber_reason"] for b in rep["bursts"]] == [reason]
    assert f"not counted: {reason}" in r.output
    html = (out / "p.html").read_text()
    assert f"not counted: {reason}" in html
    checks = {c["name"]: c for c in rep["checks"]}
    assert reason in checks["max_ber"]["note"] and not checks["max_ber"]["pass"]
    assert reason in checks["max_implementation_loss_db"]["note"]


@pytest.mark.parametrize("name", ["PN7", "PN9", "PN15", "PN23"])
def test_sync_bits_needed_is_where_the_count_starts_to_sync(name):
    # the count's own acceptance rule (2W bits judged after the order-bit seed), checked on
    # error-free O.150 bits (ITU-T O.150 patterns) one bit either side of the stated length
    from analyzer.prbs import Reference, count_errors, prbs_sequence, sync_bits_needed
    ref = Reference.prbs(name)
    need = sync_bits_needed(ref)
    seq = prbs_sequence(name, need + 40)
    assert not count_errors(seq[17:17 + need - 1], ref).synced
    assert count_errors(seq[17:17 + need], ref).synced
