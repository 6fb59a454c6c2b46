"""The progress bar: drawn on a terminal only.

Reference: the rich/terminal rule "no bar when stdout is not a terminal" is the
product's own contract (common practice for command-line tools).
"""

from __future__ import annotations

import re

import pytest

from analyzer import capture
from analyzer.cli import _commands  # private: the progress bar has no public door
from analyzer.synth import SynthParams, synthesize


@pytest.fixture(scope="module")
def dc_capture(tmp_path_factory):
    """Three bursts, a DC offset, 16 samples per symbol: every burst straddles many 4096-sample blocks."""
    d = tmp_path_factory.mktemp("blk")
    res = synthesize(SynthParams(continuous_phase=False,
                                 n_bursts=3, symbols_per_burst=700, gap_samples=6000.0, ebn0_db=11.0,
                                 start_offset_samples=3000.5, seed=7))
    x = res.samples + (0.01 - 0.004j)
    return capture.write_sigmf(d / "dc", x, 80e3, truth=res.truth)


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
