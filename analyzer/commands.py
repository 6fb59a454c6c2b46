"""What each command does, between the option parser (cli.py) and the stages.

Kept apart from ``cli.py`` so the command line only parses, and usable from
Python for scripted runs.
"""

from __future__ import annotations

import sys
from pathlib import Path

from .errors import InputError
from .pipeline import analyze
from .report import json_report
from .report.files import check_output, write_atomic


def _progress_bar(quiet: bool):
    """A rich progress callback for the first pass, or None when quiet or not a terminal."""
    if quiet or not sys.stdout.isatty():
        return None, None
    from rich.progress import BarColumn, Progress, TextColumn, TimeRemainingColumn

    prog = Progress(TextColumn("reading"), BarColumn(), TextColumn("{task.percentage:>3.0f}%"),
                    TimeRemainingColumn(), transient=True)
    task = prog.add_task("read", total=1)

    def cb(done: int, total: int) -> None:
        prog.update(task, total=max(total, 1), completed=done)

    return prog, cb


def report_paths(capture: Path, out: Path, name: str | None, json_path: Path | None,
                 html_path: Path | None) -> dict[str, Path]:
    """Where each report goes."""
    if name:
        base = name
    elif capture.name.endswith((".sigmf-meta", ".sigmf-data")):
        base = capture.name[:-len(".sigmf-meta")]
    else:
        base = capture.stem
    return {"json": json_path or out / f"{base}.json", "html": html_path or out / f"{base}.html"}


def _inputs(capture: Path) -> list[Path]:
    p = Path(capture)
    out = [p]
    if p.name.endswith(".sigmf-meta"):
        out.append(p.with_name(p.name[:-len("meta")] + "data"))
    elif p.name.endswith(".sigmf-data"):
        out.append(p.with_name(p.name[:-len("data")] + "meta"))
    elif not p.exists():                       # the base name of a SigMF recording
        out += [p.with_name(p.name + ".sigmf-meta"), p.with_name(p.name + ".sigmf-data")]
    return out


def run_analyze(capture: Path, tones, baud, rate, fmt, reference: str, decision: str, out: Path,
                name: str | None, json_path: Path | None, html_path: Path | None, overwrite: bool,
                quiet: bool, strict: bool = False) -> int:
    """Analyse, write the reports, print the summary; return the exit code."""
    from .report.html import render_html
    from .report.terminal import print_summary

    paths = report_paths(Path(capture), Path(out), name, json_path, html_path)
    inputs = _inputs(Path(capture))
    if reference.startswith("bits:"):
        inputs.append(Path(reference[5:]))
    if paths["json"] == paths["html"] or (paths["json"].resolve() == paths["html"].resolve()):
        raise InputError("the JSON and HTML reports would be the same file", paths["json"],
                         "give --json and --html different names")
    for p in paths.values():
        check_output(p, inputs, overwrite)
    prog, cb = _progress_bar(quiet)
    if prog:
        with prog:
            result = analyze(capture, tones_hz=tones, symbol_rate_hz=baud, sample_rate_hz=rate, fmt=fmt,
                             reference=reference, decision=decision, progress=cb, strict=strict)
    else:
        result = analyze(capture, tones_hz=tones, symbol_rate_hz=baud, sample_rate_hz=rate, fmt=fmt,
                         reference=reference, decision=decision, strict=strict)
    # the files actually read (a SigMF core:dataset may name another data file)
    opened = [Path(result.capture.path), Path(result.capture.data_path)]
    for p in paths.values():
        check_output(p, inputs + opened, overwrite=True)
    report = json_report.build_report(result)
    # render everything before writing anything, so a failure leaves no partial set
    html = render_html(result, report)
    text = json_report.dumps(report)
    written = []
    try:
        written.append(write_atomic(paths["json"], text))
        written.append(write_atomic(paths["html"], html))
    except BaseException:
        for p in written:
            Path(p).unlink(missing_ok=True)
        raise
    for w in result.warnings:
        print(f"warning: {w}", file=sys.stderr)
    if not quiet:
        print_summary({**report, "warnings": []}, written=[str(p) for p in written])
    return 1 if report["verdict"] == "fail" else 0


def run_synth(out: Path, tones, baud, rate, ebn0, offset, continuous_phase, start, rate_error, bursts, symbols,
              gap, pattern, amplitudes, ramp, datatype, audio, centre, seed, overwrite) -> Path:
    """Synthesise a capture and write it with its truth."""
    from .synth import SynthParams, synthesize
    from . import writers

    try:
        params = SynthParams(tones_hz=tuple(tones), symbol_rate_hz=baud, sample_rate_hz=rate, ebn0_db=ebn0,
                             centre_offset_hz=offset, continuous_phase=continuous_phase,
                             start_offset_samples=start, rate_error_ppm=rate_error, n_bursts=bursts,
                             symbols_per_burst=symbols, gap_samples=gap, pattern=pattern,
                             tone_amplitudes=tuple(amplitudes), ramp_symbols=ramp, real=audio, seed=seed)
    except ValueError as exc:
        raise InputError(str(exc), None, "see tonepair synth --help") from None
    res = synthesize(params)
    out = Path(out)
    suffix = out.suffix.lower()
    if suffix in (".wav", ".flac"):
        return writers.write_audio(out, res.samples, int(round(rate)), truth=res.truth, overwrite=overwrite)
    if audio:
        raise InputError("mono audio goes to a .wav or .flac file", out)
    base = Path(str(out).removesuffix(".sigmf-meta").removesuffix(".sigmf-data").removesuffix(".sigmf"))
    return writers.write_sigmf(base, res.samples, rate, datatype=datatype, centre_hz=centre, truth=res.truth,
                               description="tonepair synthetic FSK bursts", overwrite=overwrite)
