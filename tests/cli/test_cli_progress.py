"""The progress bar: drawn on a terminal only.

Reference: the rich/terminal rule "no bar when stdout is not a terminal" is the
product's own contract (common practice for command-line tools).
"""

from __future__ import annotations

import re


from analyzer.cli import _commands  # private: the progress bar has no public door


def test_no_progress_bar_when_not_a_terminal(dc_capture, tmp_path, run_cli):
    res = run_cli("analyze", dc_capture, "--tones", "-2500,2500", "--baud", "5000", "--out", tmp_path)
    assert res.exit_code == 0, res.output
    # the bar draws its segments with these glyphs (the summary never uses them),
    # and the bar line carries the stage name and a percentage
    assert sum(res.output.count(ch) for ch in "█·\r") == 0
    assert len(re.findall(r"[█·]\s*\d{1,3}%", res.output)) == 0   # a bar followed by its percentage
    assert res.output.count("spectrum and power") == 0                  # the first stage's name
    quiet = run_cli("analyze", dc_capture, "--tones", "-2500,2500", "--baud", "5000", "--out", tmp_path / "q",
                    "--quiet")
    assert quiet.exit_code == 0 and len(quiet.stdout) == 0              # --quiet: nothing on stdout


def test_progress_bar_only_on_a_terminal(monkeypatch):

    class Tty:
        def isatty(self):
            return True

    assert _commands._progress_bar(quiet=False) == (None, None)          # pytest's stdout is no terminal
    monkeypatch.setattr(_commands.sys, "stdout", Tty())
    prog, cb = _commands._progress_bar(quiet=False)
    assert prog is not None and callable(cb)
    cb(5, 20, "spectrum")
    assert (prog.done, prog.total, prog.stage) == (5, 20, "spectrum")   # exact
    assert _commands._progress_bar(quiet=True) == (None, None)
