"""Many captures at once: a local process pool, or a Dask cluster, and one summary.

Each capture is analysed exactly as ``tonepair analyze`` would (same options,
its own JSON and HTML reports in the output folder); a capture that cannot be
analysed is listed with its error line and the batch goes on.  The summary is
written as JSON, CSV and an HTML table with links to each capture's reports.

Exit code: 2 if any capture could not be analysed, else 1 if any failed its
spec, else 0.
"""

from __future__ import annotations

import glob
import os
import warnings
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass
from pathlib import Path

from ..errors import CaptureWarning, InputError

__all__ = ["BatchOptions", "find_captures", "analyze_one", "run_batch", "summary_report"]

_CAPTURE_SUFFIXES = (".sigmf-meta", ".wav", ".flac")


@dataclass(frozen=True)
class BatchOptions:
    """The analysis options shared by every capture of a batch (see ``tonepair analyze``)."""

    tones: tuple[float, float] | None = None
    baud: float | None = None
    reference: str | None = None
    spec_path: str | None = None
    out: str = "reports"
    overwrite: bool = False
    block: int | None = None
    rate: float | None = None
    fmt: str | None = None
    decision: str = "square-law"
    strict: bool = False
    formats: tuple[str, ...] = ("json", "html")


def find_captures(items: list[str]) -> list[Path]:
    """Captures named by folders (their .sigmf-meta/.wav/.flac files), glob patterns or paths, in order."""
    out: list[Path] = []
    for item in items:
        p = Path(item)
        if p.is_dir():
            found = sorted(q for q in p.iterdir() if q.is_file() and q.name.endswith(_CAPTURE_SUFFIXES))
        elif glob.has_magic(str(item)):
            found = sorted(Path(q) for q in glob.glob(str(item)) if Path(q).is_file())
        else:
            found = [p]
        if not found:
            raise InputError("no captures found", p, "name a folder of .sigmf-meta/.wav/.flac files, a glob "
                             "pattern or capture files")
        out += found
    seen: set[Path] = set()
    unique = []
    for p in out:
        r = p.resolve()
        if r not in seen:
            seen.add(r)
            unique.append(p)
    return unique


def _report_names(paths: list[Path]) -> list[str]:
    """Base names of each capture's reports, made unique within the batch."""
    from ..report import base_name

    names, used = [], set()
    for p in paths:
        base = base_name(p)
        name, k = base, 2
        while name in used:
            name, k = f"{base}-{k}", k + 1
        used.add(name)
        names.append(name)
    return names


def analyze_one(path: str, name: str, opts: BatchOptions) -> dict:
    """Analyse one capture, write its reports, and return its summary entry (never raises).

    Runs in a worker process (local pool or Dask worker); everything it needs
    comes in its arguments.
    """
    import numpy as np

    from .. import report as rp
    from ..pipeline import analyze
    from ..spec import link_options

    entry = {"path": str(path), "name": name, "verdict": None, "ebn0_db": None, "ber": None, "errors": None,
             "bits": None, "n_bursts": None, "failed_checks": [], "reports": {}, "warnings": [], "error": None}
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", CaptureWarning)
            spec, tones, baud, reference = link_options(Path(opts.spec_path) if opts.spec_path else None,
                                                        opts.tones, opts.baud, opts.reference)
            capture = Path(path)
            paths = rp.report_paths(capture, Path(opts.out), name, None, None, formats=tuple(opts.formats))
            inputs = rp.input_files(capture) + ([Path(opts.spec_path)] if opts.spec_path else [])
            for p in paths.values():
                rp.check_output(p, inputs, opts.overwrite)
            with np.errstate(all="ignore"):
                # one capture per worker already keeps the cores busy: no workers within
                result = analyze(capture, tones_hz=tones, symbol_rate_hz=baud, sample_rate_hz=opts.rate,
                                 fmt=opts.fmt, reference=reference, decision=opts.decision, strict=opts.strict,
                                 block=opts.block, workers=1)
                report, items = rp.analysis_files(result, spec, paths, 1, None)
            rp.write_all(items)
        s = report["summary"]
        ber = s["ber"]
        entry.update(verdict=report["verdict"], ebn0_db=s["ebn0_db"], n_bursts=s["n_bursts"],
                     ber=None if ber is None else ber["rate"], errors=None if ber is None else ber["errors"],
                     bits=None if ber is None else ber["bits"],
                     failed_checks=rp.failed_check_names(report["checks"]),
                     reports={k: str(v) for k, v in paths.items()},
                     warnings=list(report["warnings"]))
    except InputError as exc:
        entry.update(verdict="error", error=exc.line())
    except Exception as exc:  # noqa: BLE001 - a bad capture must not stop the batch
        entry.update(verdict="error", error=f"{path}: internal problem ({type(exc).__name__}: {exc})")
    return entry


def _run_local(paths: list[Path], names: list[str], opts: BatchOptions, workers: int) -> list[dict]:
    import multiprocessing

    if workers <= 1 or len(paths) <= 1:
        return [analyze_one(str(p), n, opts) for p, n in zip(paths, names)]
    ctx = multiprocessing.get_context("spawn")     # no fork of a process holding BLAS threads
    with ProcessPoolExecutor(max_workers=min(workers, len(paths)), mp_context=ctx) as pool:
        return list(pool.map(analyze_one, [str(p) for p in paths], names, [opts] * len(paths)))


def _run_cluster(paths: list[Path], names: list[str], opts: BatchOptions, address: str) -> list[dict]:
    try:
        from dask.distributed import Client
    except ImportError:
        raise InputError("--cluster needs dask.distributed", None,
                         "install the optional extra: pip install 'tonepair[cluster]'") from None
    try:
        client = Client(address, timeout=30)
    except (OSError, TimeoutError, ValueError) as exc:
        raise InputError(f"cannot reach the Dask scheduler at {address} ({exc})", None,
                         "check --cluster ADDRESS (for example tcp://127.0.0.1:8786)") from None
    with client:
        futures = client.map(analyze_one, [str(p) for p in paths], names, [opts] * len(paths), pure=False)
        return client.gather(futures)


def summary_report(entries: list[dict], opts: BatchOptions) -> dict:
    """The batch summary (JSON-ready)."""
    from .. import __version__

    counts = {k: sum(e["verdict"] == k for e in entries) for k in ("pass", "fail", "not-judged", "error")}
    return {"$schema": SCHEMA_ID, "tool": {"name": "tonepair", "version": __version__},
            "options": {"tones_hz": None if opts.tones is None else list(opts.tones), "symbol_rate_hz": opts.baud,
                        "reference": opts.reference, "spec": opts.spec_path, "decision": opts.decision},
            "counts": counts, "captures": entries}


SCHEMA_ID = "https://tonepair.invalid/schema/batch-1.json"


def exit_code(entries: list[dict]) -> int:
    """2 if any capture could not be analysed, else 1 if any failed its spec, else 0."""
    if any(e["verdict"] == "error" for e in entries):
        return 2
    return 1 if any(e["verdict"] == "fail" for e in entries) else 0


def run_batch(items: list[str], opts: BatchOptions, name: str = "batch", workers: int | None = None,
              cluster: str | None = None, quiet: bool = False,
              summary_paths: dict[str, Path] | None = None) -> tuple[int, dict]:
    """Analyse every capture, write the summary ``OUT/NAME.json|.csv|.html|.pdf`` (as ``opts.formats``
    asks; the CSV always, beside the JSON or in OUT); return the exit code and the summary."""
    import sys

    from .. import report as rp
    from ..spec import link_options

    link_options(Path(opts.spec_path) if opts.spec_path else None, opts.tones, opts.baud, opts.reference)
    paths = find_captures(items)
    out = Path(opts.out)
    spaths = rp.output_paths(out, name, tuple(opts.formats), summary_paths)
    spaths["csv"] = out / f"{name}.csv"
    inputs = [q for p in paths for q in rp.input_files(p)]
    for p in spaths.values():
        rp.check_output(p, inputs, opts.overwrite)
    names = _report_names(paths)
    if cluster:
        entries = _run_cluster(paths, names, opts, cluster)
    else:
        entries = _run_local(paths, names, opts, workers or os.cpu_count() or 1)
    summary = summary_report(entries, opts)
    written = rp.write_all(rp.batch_files(summary, spaths))
    for e in entries:
        if e["error"]:
            print(f"error: {e['error']}", file=sys.stderr)
    if not quiet:
        rp.print_batch_summary(summary, written)
    return exit_code(entries), summary
