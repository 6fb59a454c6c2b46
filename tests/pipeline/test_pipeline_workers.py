"""Regions read in pieces, progress covers every pass, workers give the same numbers.

References: the single-process run is the reference for the worker check -- the
same numbers within zero tolerance; the truth of the synthetic capture (3 bursts
of 700 symbols) for the symbols counted over cut regions.  The block-size checks
of the survey pass are in tests/survey/test_survey_blocks.py.
"""

from __future__ import annotations

import json


from analyzer import pipeline, capture
from analyzer.synth import SynthParams, synthesize
from analyzer.pipeline import _regions  # private: the region limit and the reader patched (no public door)


def test_region_longer_than_limit_is_read_in_pieces(dc_capture, monkeypatch):
    """A region longer than MAX_REGION_SAMPLES is cut: no read of the bursts exceeds the limit."""
    limit = 16384
    monkeypatch.setattr(_regions, "MAX_REGION_SAMPLES", limit)
    sizes = []
    real_reader = _regions.capture_reader

    def spy(cap, dc):
        r = real_reader(cap, dc)

        def read(start, count):
            sizes.append(count)
            return r(start, count)
        return read

    monkeypatch.setattr(_regions, "capture_reader", spy)
    res = pipeline.analyze(dc_capture, tones_hz=(-2500, 2500), symbol_rate_hz=5000, block=pipeline.QUANTUM)
    region_reads = [s for s in sizes if s != pipeline.QUANTUM]
    assert region_reads and max(region_reads) <= limit                  # bound: the limit itself
    # the symbols counted stay within 2 symbols per cut of the truth's 3 x 700 (pieces lose the cut symbol)
    n_sym = sum(b.n_symbols for b in res.bursts)
    assert abs(n_sym - 3 * 700) <= 2 * len(region_reads)


def test_progress_covers_every_pass(dc_capture):
    calls = []
    pipeline.analyze(dc_capture, tones_hz=(-2500, 2500), symbol_rate_hz=5000, block=pipeline.QUANTUM,
                     progress=lambda done, total, stage: calls.append((done, total, stage)))
    stages = list(dict.fromkeys(c[2] for c in calls))
    assert stages == ["spectrum and power", "bursts"]                  # one pass over the file, then the bursts
    n = json.loads(dc_capture.read_text())  # the metadata is JSON; samples from the data file size
    n_samples = dc_capture.with_name("dc.sigmf-data").stat().st_size // 8
    assert n["global"]["core:datatype"] == "cf32_le"
    assert calls[-1][0] == calls[-1][1] == 2 * n_samples                 # reference: 2 stages x samples
    assert all(b[0] >= a[0] for a, b in zip(calls, calls[1:]))          # never goes back


_WORKER_CHECK = r"""
import json, os, sys
from analyzer import pipeline
from analyzer.pipeline import _regions   # private: the per-region step spied on (no public door)
from analyzer.errors import warn
from analyzer import report
meta, out = sys.argv[1], sys.argv[2]
kw = dict(tones_hz=(-2500, 2500), symbol_rate_hz=5000)
one = report.build_report(pipeline.analyze(meta, workers=1, block=8192, **kw))
real = _regions.region_bursts
def spy(*args):
    warn(f"pid {os.getpid()}")                  # carried back with the region's warnings
    return real(*args)
_regions.region_bursts = spy
# the survey pass too: shared by the workers for any capture longer than a block
from analyzer.survey import _pass as survey
survey.PARALLEL_MIN_SAMPLES = 1
real_task, real_merge, seen = survey._stretch_task, survey._merge, []
def stretch_spy(ctx, lo, hi):
    part = real_task(ctx, lo, hi)
    part.pid = os.getpid()
    return part
def merge_spy(parts):
    seen.extend(getattr(p, "pid", None) for p in parts)
    return real_merge(parts)
survey._stretch_task, survey._merge = stretch_spy, merge_spy
# three: the capture's core:sha512 is hashed beside the pass, which takes one core from it
two = pipeline.analyze(meta, workers=3, block=8192, **kw)
pids = sorted({m for m in two.warnings if m.startswith("pid ")})
rep = report.build_report(two)
rep["warnings"] = [m for m in rep["warnings"] if not m.startswith("pid ")]
json.dump({"parent": os.getpid(), "pids": pids, "survey_pids": seen, "one": one, "two": rep}, open(out, "w"))
"""


def test_worker_processes_give_the_same_report(tmp_path, json_numbers):
    """The survey pass and the bursts in forked workers: the same numbers as in one process (reference: the
    single-process run, zero tolerance).  Run in a fresh interpreter: this test process may hold
    other threads, and then the analysis rightly declines to fork."""
    import subprocess
    import sys

    res = synthesize(SynthParams(continuous_phase=False,
                                 n_bursts=6, symbols_per_burst=300, gap_samples=9000.0, ebn0_db=10.0, seed=3))
    meta = capture.write_sigmf(tmp_path / "six", res.samples, 80e3, truth=res.truth)
    out = tmp_path / "check.json"
    subprocess.run([sys.executable, "-c", _WORKER_CHECK, str(meta), str(out)], check=True, timeout=300)
    got = json.loads(out.read_text())
    assert got["pids"] and f"pid {got['parent']}" not in got["pids"]   # it really ran in other processes
    assert len(got["survey_pids"]) > 1 and got["parent"] not in got["survey_pids"]
    one, two = got["one"], got["two"]
    assert len(one["bursts"]) == 6
    a, b = dict(json_numbers(one)), dict(json_numbers(two))
    assert a.keys() == b.keys()
    assert {k: (a[k], b[k]) for k in a if a[k] != b[k]} == {}          # tolerance: exactly equal
