"""Shared helpers: synthetic captures written into a test's tmp_path (inputs, never references)."""

from __future__ import annotations

import pytest
from typer.testing import CliRunner

from analyzer import capture
from analyzer.cli import app
from analyzer.synth import SynthParams, synthesize


@pytest.fixture
def make_capture(tmp_path):
    """Write a small SigMF capture (80 kHz, 5 kBd, PN9) and return its .sigmf-meta path."""

    def make(name="cap", centre_hz=433.92e6, **kw):
        kw.setdefault("symbols_per_burst", 2000)
        kw.setdefault("ebn0_db", 12.0)
        res = synthesize(SynthParams(**{"continuous_phase": False, **kw}))
        return capture.write_sigmf(tmp_path / name, res.samples, 80e3, centre_hz=centre_hz, truth=res.truth)

    return make


@pytest.fixture
def run_cli():
    """Invoke the tonepair command line in-process; returns the click Result."""
    runner = CliRunner()

    def run(*args):
        return runner.invoke(app, [str(a) for a in args])

    return run
