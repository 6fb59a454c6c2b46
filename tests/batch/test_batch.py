"""tonepair batch: many captures, one summary; local pool and Dask cluster agree.

References: each capture's numbers in the summary are checked against the
``tonepair analyze`` JSON of the same capture (the batch runs the same
analysis, DESIGN.md); the CSV is parsed with Python's ``csv`` module and the
HTML with ``html.parser`` (standard library); the exit codes are DESIGN.md's
contract (2 unusable input, 1 spec failed); the spec limit is the reference
for pass/fail.  The Dask run uses ``dask.distributed.LocalCluster`` on the
loopback address only.
"""

from __future__ import annotations

import csv
import json
from html.parser import HTMLParser
from pathlib import Path

import pytest

from analyzer import capture
from analyzer.synth import SynthParams, synthesize

NUMBERS = ("ebn0_db", "ber", "errors", "bits", "n_bursts")


@pytest.fixture(scope="module")
def captures(tmp_path_factory):
    d = tmp_path_factory.mktemp("batch")
    for i, ebn0 in enumerate((9.0, 11.0, 14.0)):
        res = synthesize(SynthParams(continuous_phase=False, symbols_per_burst=700, ebn0_db=ebn0, seed=10 + i))
        capture.write_sigmf(d / f"cap{i}", res.samples, 80e3, truth=res.truth)
    (d / "broken.sigmf-meta").write_text('{"global": ')
    return d


class _Links(HTMLParser):
    def __init__(self):
        super().__init__()
        self.links = []

    def handle_starttag(self, tag, attrs):
        if tag == "a":
            self.links.append(dict(attrs)["href"])


def test_batch_lists_broken_file_and_analyses_the_others(captures, tmp_path, run_cli):
    out = tmp_path / "out"
    res = run_cli("batch", captures, "--tones", "-2500,2500", "--baud", "5000", "--out", out, "--workers", "2",
                  "--quiet")
    assert res.exit_code == 2, res.output                                # DESIGN.md: unusable input -> 2
    summary = json.loads((out / "batch.json").read_text())
    entries = {Path(e["path"]).name: e for e in summary["captures"]}
    assert sorted(entries) == ["broken.sigmf-meta", "cap0.sigmf-meta", "cap1.sigmf-meta", "cap2.sigmf-meta"]
    assert entries["broken.sigmf-meta"]["verdict"] == "error"
    assert entries["broken.sigmf-meta"]["error"].count("broken.sigmf-meta") >= 1
    # each capture against its own single-capture analysis (exact: same analysis, same numbers)
    for i in range(3):
        one = tmp_path / f"one{i}"
        r = run_cli("analyze", captures / f"cap{i}.sigmf-meta", "--tones", "-2500,2500", "--baud", "5000",
                    "--out", one, "--quiet")
        assert r.exit_code == 0
        rep = json.loads((one / f"cap{i}.json").read_text())
        e = entries[f"cap{i}.sigmf-meta"]
        ref = {"ebn0_db": rep["summary"]["ebn0_db"], "ber": rep["summary"]["ber"]["rate"],
               "errors": rep["summary"]["ber"]["errors"], "bits": rep["summary"]["ber"]["bits"],
               "n_bursts": rep["summary"]["n_bursts"]}
        assert {k: e[k] for k in NUMBERS} == ref
        assert json.loads(Path(e["reports"]["json"]).read_text())["summary"] == rep["summary"]
    # CSV (csv module) carries the same numbers; the HTML links every analysed capture's report
    rows = {Path(r["path"]).name: r for r in csv.DictReader((out / "batch.csv").open())}
    assert len(rows) == 4
    for name, e in entries.items():
        if e["ebn0_db"] is not None:
            assert abs(float(rows[name]["ebn0_db"]) - e["ebn0_db"]) <= 1e-12 * abs(e["ebn0_db"])
    assert rows["broken.sigmf-meta"]["verdict"] == "error" and rows["broken.sigmf-meta"]["error"] != ""
    parser = _Links()
    parser.feed((out / "batch.html").read_text())
    html_links = sorted(link for link in parser.links if link.endswith(".html"))
    assert html_links == ["cap0.html", "cap1.html", "cap2.html"]
    assert all((out / link).is_file() for link in parser.links)


def test_batch_spec_failure_exits_1(captures, tmp_path, run_cli):
    spec = tmp_path / "link.spec.toml"
    limit = 12.0
    spec.write_text(f'[link]\ntones_hz = [-2500.0, 2500.0]\nsymbol_rate_hz = 5000.0\nreference = "PN9"\n'
                    f"[limits]\nmin_ebn0_db = {limit}\n")
    out = tmp_path / "out"
    res = run_cli("batch", str(captures / "cap*.sigmf-meta"), "--spec", spec, "--out", out, "--workers", "1",
                  "--quiet")
    assert res.exit_code == 1, res.output                                # DESIGN.md: spec failed -> 1
    summary = json.loads((out / "batch.json").read_text())
    assert len(summary["captures"]) == 3
    for e in summary["captures"]:
        # reference: the spec's own limit; Eb/N0 within 0.6 dB of the limit would be judged on its interval
        if abs(e["ebn0_db"] - limit) > 0.6:
            assert e["verdict"] == ("pass" if e["ebn0_db"] >= limit else "fail")
    assert sum(e["verdict"] == "fail" for e in summary["captures"]) >= 1
    # a failed capture names its failed check (the spec's one limit, by its readable name)
    for e in summary["captures"]:
        assert e["failed_checks"] == (["Eb/N0"] if e["verdict"] == "fail" else [])
    # the summary names its schema and holds to it (jsonschema, a general-purpose validator)
    import jsonschema
    from importlib.resources import files

    schema = json.loads(files("analyzer").joinpath("report/batch.schema.json").read_text())
    assert summary["$schema"] == schema["$id"]
    jsonschema.validate(summary, schema)


def test_dask_local_cluster_gives_the_process_pool_numbers(captures, tmp_path):
    distributed = pytest.importorskip("dask.distributed")
    from analyzer.batch import BatchOptions, run_batch

    items = [str(captures / "cap*.sigmf-meta")]
    opts = BatchOptions(tones=(-2500.0, 2500.0), baud=5000.0, out=str(tmp_path / "pool"))
    code_pool, pool = run_batch(items, opts, workers=2, quiet=True)
    with distributed.LocalCluster(n_workers=2, processes=True, threads_per_worker=1, host="127.0.0.1",
                                  dashboard_address=None) as cluster:
        assert cluster.scheduler_address.startswith("tcp://127.0.0.1:")    # loopback only
        code_dask, dask_summary = run_batch(items, BatchOptions(tones=(-2500.0, 2500.0), baud=5000.0,
                                                                out=str(tmp_path / "dask")),
                                            cluster=cluster.scheduler_address, quiet=True)
    assert code_pool == code_dask == 0
    a = [{k: e[k] for k in NUMBERS + ("path", "verdict")} for e in pool["captures"]]
    b = [{k: e[k] for k in NUMBERS + ("path", "verdict")} for e in dask_summary["captures"]]
    assert len(a) == 3 and a == b                                        # tolerance: exactly equal
