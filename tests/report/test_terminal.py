"""The terminal summary reads at a glance: verdict and failing checks first, bursts capped,
one number format per quantity, and nothing wraps at 160 columns.

References: the JSON report of the same run (the numbers shown are its numbers);
ECMA-48 for the SGR colour codes (ESC [ ... m), which must not appear when piped.
"""

from __future__ import annotations

import copy
import io
import json
import re
from pathlib import Path

import pytest
from typer.testing import CliRunner

from analyzer.cli import app
from analyzer.report import print_summary
# private: the output device (tty, width) and the row cap have no public door
from analyzer.report._terminal import MAX_BURST_ROWS, Out

ROOT = Path(__file__).resolve().parents[2]
TIGHT = """
[link]
tones_hz = [-2500.0, 2500.0]
symbol_rate_hz = 5000.0
reference = "PN9"
[limits]
max_ber = 1e-9
min_ebn0_db = 3.0
max_tone_imbalance_db = 0.01
"""


@pytest.fixture(scope="module")
def judged(tmp_path_factory):
    d = tmp_path_factory.mktemp("term")
    (d / "tight.toml").write_text(TIGHT)
    res = CliRunner().invoke(app, ["analyze", str(ROOT / "sample_captures/beacon_demo.sigmf-meta"), "--spec",
                                   str(d / "tight.toml"), "--out", str(d), "--formats", "json", "--quiet"])
    assert res.exit_code == 1, res.output
    return json.loads((d / "beacon_demo.json").read_text())


def _print(report, tty=False, width=160):
    buf = io.StringIO()
    print_summary(report, out=Out(buf, tty=tty, width=width))
    return buf.getvalue()


def test_verdict_and_failing_checks_lead(judged):
    text = _print(judged)
    lines = text.splitlines()
    assert lines[0].startswith("verdict: FAIL")
    first_result = next(i for i, ln in enumerate(lines) if ln.startswith("Result"))
    fails = [i for i, ln in enumerate(lines) if ln.strip().startswith("FAIL")]
    assert len(fails) == 2 and max(fails) < first_result            # BER and imbalance fail, before the result
    assert "\x1b[" not in text                                       # piped: no SGR codes (ECMA-48)
    assert all(ch not in text for ch in "─│┌┐└┘")                    # piped: no box art
    assert max(len(ln) for ln in lines) <= 160                       # nothing wraps at 160 columns
    # the imbalance reads as in the bursts table: signed, two decimals, from the worst burst
    worst = max(judged["bursts"], key=lambda b: abs(b["tone_imbalance_db"]))
    shown = f"{worst['tone_imbalance_db']:+.2f}"
    assert f"tone imbalance: {shown} dB (burst {worst['index']}" in text
    row = next(ln for ln in lines if re.match(rf"\s+{worst['index']}\s+[\d,]+\.\d", ln))
    assert shown in row.split()
    # a BER is shown in one format, measured and limit alike
    assert "bit error rate: 1.26e-03 per bit, limit <= 1.00e-09 per bit" in text


def test_colour_on_a_terminal_only(judged):
    assert "\x1b[31;1mFAIL" in _print(judged, tty=True)             # ECMA-48 SGR 31 (red), 1 (bold)


def test_bursts_table_is_capped_and_says_how_many_more(judged):
    rep = copy.deepcopy(judged)
    rep["bursts"] = [dict(rep["bursts"][k % 2], index=k) for k in range(20)]
    text = _print(rep)
    rows = [ln for ln in text.splitlines() if re.match(r"\s+\d+\s+[\d,]+\.\d\s", ln)]
    assert len(rows) == MAX_BURST_ROWS
    assert f"… and {20 - MAX_BURST_ROWS} more bursts" in text


def test_loss_without_errors_is_an_upper_bound(judged):
    rep = copy.deepcopy(judged)
    s = rep["summary"]
    s["ber"] = dict(s["ber"], errors=0, rate=0.0)
    s["implementation_loss_db"], s["implementation_loss_db_ci95"] = None, [None, 9.23]
    text = _print(rep)
    assert re.search(r"implementation loss\s+<= 9\.23 dB\s+upper bound", text)
