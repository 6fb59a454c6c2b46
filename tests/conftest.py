"""Shared helpers: synthetic captures written into a test's tmp_path (inputs, never references)."""

from __future__ import annotations

import pytest
from typer.testing import CliRunner

from analyzer import capture, pipeline
from analyzer.capture import ArrayCapture
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


@pytest.fixture(scope="session")
def dc_capture(tmp_path_factory):
    """Three bursts, a DC offset, 16 samples per symbol: every burst straddles many 4096-sample blocks."""
    d = tmp_path_factory.mktemp("blk")
    res = synthesize(SynthParams(continuous_phase=False,
                                 n_bursts=3, symbols_per_burst=700, gap_samples=6000.0, ebn0_db=11.0,
                                 start_offset_samples=3000.5, seed=7))
    x = res.samples + (0.01 - 0.004j)
    return capture.write_sigmf(d / "dc", x, 80e3, truth=res.truth)


def _json_numbers(obj, path=""):
    """Every number in a JSON document with its key path."""
    if isinstance(obj, dict):
        for k, v in obj.items():
            if k != "path":
                yield from _json_numbers(v, f"{path}/{k}")
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield from _json_numbers(v, f"{path}/{i}")
    elif isinstance(obj, (int, float)) and not isinstance(obj, bool):
        yield path, float(obj)


@pytest.fixture
def json_numbers():
    """``json_numbers(doc)``: every number in a JSON document with its key path (``path`` keys skipped)."""
    return _json_numbers


def _analyse_synth(params, x=None, tones=None):
    res = synthesize(params)
    xx = res.samples if x is None else x(res.samples)
    return pipeline.analyze_capture(ArrayCapture(xx, params.sample_rate_hz),
                                    pipeline.AnalysisOptions(tones or params.tones_hz, params.symbol_rate_hz))


@pytest.fixture
def analyse_synth():
    """``analyse_synth(params, x=None, tones=None)``: synthesise ``params``, pass the samples through
    ``x`` if given, analyse them in memory with the tones (default the synth's) and rate as hints."""
    return _analyse_synth
