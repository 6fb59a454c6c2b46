"""The README's worked example is what the command it quotes prints.

Reference: the README itself (its block after the marker comment is the
expected output); the command is the one `make demo` runs, with the reports
written to a temporary folder and JSON only (the summary does not depend on
the report formats).
"""

from __future__ import annotations

import re
from pathlib import Path

from typer.testing import CliRunner

from analyzer.cli import app

ROOT = Path(__file__).resolve().parents[2]
MARKER = "<!-- the output of the command above; tests/cli/test_readme.py checks that it still is -->"


def test_readme_worked_example_matches_a_real_run(tmp_path, monkeypatch):
    text = (ROOT / "README.md").read_text()
    block = re.search(re.escape(MARKER) + r"\n```\n(.*?)\n```", text, re.S)
    assert block is not None, "the README lost its worked-example marker"
    monkeypatch.chdir(ROOT)
    res = CliRunner().invoke(app, ["analyze", "sample_captures/beacon_demo.sigmf-meta", "--spec",
                                   "sample_captures/beacon_demo.spec.toml", "--out", str(tmp_path), "--name",
                                   "demo", "--formats", "json"])
    assert res.exit_code == 0, res.output
    printed = "\n".join(ln.rstrip() for ln in res.stdout.splitlines() if not ln.startswith("wrote ")).strip("\n")
    # exact: on a mismatch, paste the printed text into the README block
    assert printed == block.group(1).strip("\n"), "README worked example is out of date; it now reads:\n" + printed
