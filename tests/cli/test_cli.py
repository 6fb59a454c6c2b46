"""The command line: exit codes, error lines and files (DESIGN.md's contract).

References: the exit-code rules and the one-line ``error:`` format are the
product's own contract (DESIGN.md); JSON is checked with the ``json`` module
and the report schema with ``jsonschema``; file integrity with ``hashlib``.
"""

from __future__ import annotations

import hashlib
import json

import numpy as np
import pytest
from typer.testing import CliRunner

from analyzer.cli import app

runner = CliRunner()


def _sha(p):
    return hashlib.sha256(p.read_bytes()).hexdigest()


@pytest.fixture(scope="module")
def capture(tmp_path_factory):
    d = tmp_path_factory.mktemp("cap")
    r = runner.invoke(app, ["synth", str(d / "link.sigmf-meta"), "--random-phase", "--ebn0", "9", "--symbols", "2000",
                            "--offset", "250", "--seed", "4"])
    assert r.exit_code == 0, r.output
    return d / "link.sigmf-meta"


def test_analyze_writes_reports_and_keeps_input(capture, tmp_path):
    data = capture.with_name("link.sigmf-data")
    before = (_sha(capture), _sha(data))
    r = runner.invoke(app, ["analyze", str(capture), "--tones", "-2500,2500", "--baud", "5000",
                            "--out", str(tmp_path)])
    assert r.exit_code == 0, r.output
    rep = json.loads((tmp_path / "link.json").read_text())
    # Reference: the generator's settings (9 dB, 250 Hz offset); 0.3 dB and 1% of R_s.
    assert abs(rep["summary"]["ebn0_db"] - 9.0) < 0.3
    assert abs(rep["bursts"][0]["centre_offset_hz"] - 250.0) < 50.0
    assert rep["verdict"] == "not-judged"
    html = (tmp_path / "link.html").read_text()
    assert html.count("data:image/png;base64,") >= 3
    # Inputs never modified (sha256 before and after).
    assert (_sha(capture), _sha(data)) == before
    # A second run without --overwrite refuses and leaves the files as they were.
    stamp = _sha(tmp_path / "link.json")
    r2 = runner.invoke(app, ["analyze", str(capture), "--tones", "-2500,2500", "--baud", "5000",
                             "--out", str(tmp_path)])
    assert r2.exit_code == 2
    assert "--overwrite" in r2.stderr
    assert _sha(tmp_path / "link.json") == stamp


@pytest.mark.parametrize("args,needle", [
    (["missing.sigmf-meta", "--tones", "-2500,2500", "--baud", "5000"], "missing.sigmf-meta"),
    (["{raw}", "--tones", "-2500,2500", "--baud", "5000"], "--rate"),
    (["{odd}", "--tones", "-2500,2500", "--baud", "5000"], "odd.xyz"),
    (["{cap}", "--tones", "2500,-2500", "--baud", "5000"], "F0 < F1"),
    (["{cap}", "--tones", "-2500,2500", "--baud", "60000"], "half the sample rate"),
    (["{cap}", "--tones", "-2500,2500", "--baud", "5000", "--reference", "PN8"], "unknown reference"),
])
def test_bad_input_exits_2_with_one_line(capture, tmp_path, args, needle):
    raw = tmp_path / "samples.cf32"
    np.zeros(64, np.complex64).tofile(raw)
    odd = tmp_path / "odd.xyz"
    odd.write_bytes(b"not a capture")
    args = [a.format(raw=raw, odd=odd, cap=capture) for a in args]
    out = tmp_path / "rep"
    r = runner.invoke(app, ["analyze", *args, "--out", str(out)])
    assert r.exit_code == 2
    lines = [ln for ln in r.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("error: ")
    assert needle in lines[0]
    assert "Traceback" not in r.output + r.stderr
    assert not out.exists() or not any(out.iterdir())


def test_output_equal_to_input_is_refused(capture, tmp_path):
    r = runner.invoke(app, ["analyze", str(capture), "--tones", "-2500,2500", "--baud", "5000",
                            "--json", str(capture)])
    assert r.exit_code == 2
    assert "same file as an input" in r.stderr


def test_reports_and_captures_respect_the_umask(tmp_path, run_cli):
    # POSIX open(2): a new file gets mode 0666 & ~umask (a temporary file's private 0600 must not leak)
    import os
    import stat

    old = os.umask(0o027)
    try:
        res = run_cli("synth", tmp_path / "u.sigmf-meta", "--symbols", "400")
        assert res.exit_code == 0, res.output
        res = run_cli("analyze", tmp_path / "u.sigmf-meta", "--out", tmp_path / "o", "--quiet")
        assert res.exit_code == 0, res.output
    finally:
        os.umask(old)
    for p in [tmp_path / "u.sigmf-meta", tmp_path / "u.sigmf-data", *sorted((tmp_path / "o").iterdir())]:
        assert stat.S_IMODE(p.stat().st_mode) == 0o640, p


def test_synth_option_names_match_analyze(tmp_path, run_cli):
    # SigMF core:datatype names (SigMF specification): ci16_le is little-endian 16-bit complex integers
    import json

    res = run_cli("synth", tmp_path / "a.sigmf-meta", "--reference", "pn11", "--format", "ci16", "--baud-error",
                  "40", "--symbols", "300")
    assert res.exit_code == 0, res.output
    meta = json.loads((tmp_path / "a.sigmf-meta").read_text())
    assert meta["global"]["core:datatype"] == "ci16_le"
    # the old names still work
    res = run_cli("synth", tmp_path / "b.sigmf-meta", "--pattern", "PN7", "--datatype", "cf32_le", "--rate-error",
                  "20", "--symbols", "300")
    assert res.exit_code == 0, res.output
    assert json.loads((tmp_path / "b.sigmf-meta").read_text())["global"]["core:datatype"] == "cf32_le"
    # analyze takes the pattern name in any case and finds the pattern synth sent
    res = run_cli("analyze", tmp_path / "a.sigmf-meta", "--reference", "pn11", "--out", tmp_path / "o",
                  "--formats", "json", "--quiet")
    assert res.exit_code == 0, res.output
    rep = json.loads((tmp_path / "o" / "a.json").read_text())
    assert rep["summary"]["ber"]["reference"] == "PN11"
