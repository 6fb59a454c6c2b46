"""What each command does, between the option parser (cli.py) and the stages.

Kept apart from ``cli.py`` so the command line only parses, and usable from
Python for scripted runs.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

from .errors import InputError
from .pipeline import analyze
from .report import json_report
from .report.files import check_output, write_atomic


def _progress_bar(quiet: bool):
    """A rich progress bar over all passes of the analysis, or (None, None) when quiet or not a terminal."""
    if quiet or not sys.stdout.isatty():
        return None, None
    from rich.progress import BarColumn, Progress, TextColumn, TimeRemainingColumn

    # redrawn from the callback, not by a refresh thread: the analysis may fork
    # worker processes, which must not copy a thread holding the console's lock
    prog = Progress(TextColumn("{task.description:<20}"), BarColumn(), TextColumn("{task.percentage:>3.0f}%"),
                    TimeRemainingColumn(), transient=True, auto_refresh=False)
    task = prog.add_task("reading", total=1)
    last = {"t": 0.0}

    def cb(done: int, total: int, stage: str = "reading") -> None:
        prog.update(task, total=max(total, 1), completed=done, description=stage)
        now = time.monotonic()
        if now - last["t"] >= 0.1 or done >= total:
            last["t"] = now
            prog.refresh()

    return prog, cb


def _base_name(capture: Path, name: str | None) -> str:
    if name:
        return name
    if capture.name.endswith((".sigmf-meta", ".sigmf-data")):
        return capture.name[:-len(".sigmf-meta")]
    return capture.stem


def report_paths(capture: Path, out: Path, name: str | None, json_path: Path | None,
                 html_path: Path | None, pdf_path: Path | None = None,
                 annotate: bool = False, bits_path: Path | None = None,
                 frames_path: Path | None = None) -> dict[str, Path]:
    """Where each report goes (PDF, annotated SigMF metadata, decisions and frames only when asked for)."""
    base = _base_name(capture, name)
    paths = {"json": json_path or out / f"{base}.json", "html": html_path or out / f"{base}.html"}
    if pdf_path is not None:
        paths["pdf"] = pdf_path
    if annotate:
        paths["annotated"] = out / f"{base}.annotated.sigmf-meta"
    if bits_path is not None:
        paths["bits"] = bits_path
    if frames_path is not None:
        paths["frames"] = frames_path
    return paths


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


def link_options(spec_path: Path | None, tones, baud, reference: str | None):
    """Options given on the command line win; the spec's [link] fills the rest."""
    from .spec import load_spec

    spec = load_spec(spec_path) if spec_path is not None else None
    if spec is not None:
        tones = tones if tones is not None else spec.link.tones_hz
        baud = baud if baud is not None else spec.link.symbol_rate_hz
        reference = reference if reference is not None else spec.link.reference
    return spec, tones, baud, reference or "auto"


def write_all(items: list[tuple[Path, bytes | str]]) -> list[Path]:
    """Write every (path, data) atomically; on any failure remove those already written."""
    written: list[Path] = []
    try:
        for path, data in items:
            written.append(write_atomic(path, data))
    except BaseException:
        for p in written:
            Path(p).unlink(missing_ok=True)
        raise
    return written


def run_analyze(capture: Path, tones, baud, rate, fmt, reference: str | None, decision: str, out: Path,
                name: str | None, json_path: Path | None, html_path: Path | None, overwrite: bool,
                quiet: bool, spec_path: Path | None = None, pdf_path: Path | None = None,
                annotate: bool = False, strict: bool = False, workers: int | None = None,
                bits_path: Path | None = None, frames_path: Path | None = None) -> int:
    """Analyse, judge against the spec, write the reports, print the summary; return the exit code."""
    from .report.html import render_html
    from .report.terminal import print_summary

    spec, tones, baud, reference = link_options(spec_path, tones, baud, reference)
    capture = Path(capture)
    if annotate and not capture.name.endswith((".sigmf-meta", ".sigmf-data")):
        raise InputError("--annotate needs a SigMF capture (.sigmf-meta/.sigmf-data)", capture,
                         "annotations are written into a copy of the SigMF metadata; other formats have none")
    paths = report_paths(capture, Path(out), name, json_path, html_path, pdf_path, annotate, bits_path, frames_path)
    inputs = _inputs(capture)
    if reference.startswith("bits:"):
        inputs.append(Path(reference[5:]))
    if spec_path is not None:
        inputs.append(Path(spec_path))
    resolved = [p.resolve() for p in paths.values()]
    if len(set(resolved)) < len(resolved):
        raise InputError("two of the reports would be the same file", paths["json"],
                         "give --json, --html, --pdf, --bits and --frames-out different names")
    for p in paths.values():
        check_output(p, inputs, overwrite)
    prog, cb = _progress_bar(quiet)
    if prog:
        with prog:
            result = analyze(capture, tones_hz=tones, symbol_rate_hz=baud, sample_rate_hz=rate, fmt=fmt,
                             reference=reference, decision=decision, progress=cb, strict=strict, workers=workers)
    else:
        result = analyze(capture, tones_hz=tones, symbol_rate_hz=baud, sample_rate_hz=rate, fmt=fmt,
                         reference=reference, decision=decision, strict=strict, workers=workers)
    # the files actually read (a SigMF core:dataset may name another data file)
    opened = [Path(result.capture.path), Path(result.capture.data_path)]
    for p in paths.values():
        check_output(p, inputs + opened, overwrite=True)
    report = json_report.build_report(result)
    if spec is not None:
        from .spec import judge

        checks, verdict = judge(report, spec)
        report = json_report.build_report(result, checks, verdict)
    # render everything before writing anything, so a failure leaves no partial set
    items: list[tuple[Path, bytes | str]] = [(paths["json"], json_report.dumps(report)),
                                             (paths["html"], render_html(result, report))]
    if "pdf" in paths:
        from .report.pdf import render_pdf

        items.append((paths["pdf"], render_pdf(result, report)))
    if "annotated" in paths:
        from .report.annotate import annotated_metadata

        items.append((paths["annotated"], annotated_metadata(result, report)))
    if "bits" in paths or "frames" in paths:
        from .report.bits import decisions_text, valid_frames_text

        if "bits" in paths:
            items.append((paths["bits"], decisions_text(result)))
        if "frames" in paths:
            items.append((paths["frames"], valid_frames_text(result)))
    written = write_all(items)
    for w in result.warnings:
        print(f"warning: {w}", file=sys.stderr)
    if not quiet:
        print_summary({**report, "warnings": []}, written=[str(p) for p in written])
    return 1 if report["verdict"] == "fail" else 0


def run_synth(out: Path, tones, baud, rate, ebn0, offset, continuous_phase, start, rate_error, bursts, symbols,
              gap, pattern, amplitudes, ramp, datatype, audio, centre, seed, overwrite, framing: str = "none",
              frame_bytes: int = 32, pulse="rect", bt=0.5,
              transition=0.5, deviation=None, drift=0.0, channel_filter=0.0, receiver_audio=False,
              band=(300.0, 3000.0), deemphasis=750.0, tilt=0.0) -> Path:
    """Synthesise a capture and write it with its truth."""
    from .synth import SynthParams, synthesize
    from . import writers

    try:
        params = SynthParams(tones_hz=tuple(tones), symbol_rate_hz=baud, sample_rate_hz=rate, ebn0_db=ebn0,
                             centre_offset_hz=offset, continuous_phase=continuous_phase,
                             start_offset_samples=start, rate_error_ppm=rate_error, n_bursts=bursts,
                             symbols_per_burst=symbols, gap_samples=gap, pattern=pattern,
                             tone_amplitudes=tuple(amplitudes), ramp_symbols=ramp, real=audio, seed=seed,
                             framing=framing, frame_bytes=frame_bytes,
                             pulse=pulse, bt=bt, transition=transition, deviation_hz=deviation, drift_hz=drift,
                             channel_filter_hz=channel_filter, receiver_audio=receiver_audio,
                             audio_band_hz=tuple(band), deemphasis_us=deemphasis, tilt_db=tilt)
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


SWEEP_METHOD = ("Implementation loss L minimises the sum of w_i (Eb/N0_i - L - R(BER_i))^2, R the Eb/N0 ideal "
                "noncoherent orthogonal BFSK needs (1/2 exp(-Eb/2N0)); weights from the 95% intervals of Eb/N0 and "
                "BER; interval widened when the points scatter more than their intervals. Points with no bit "
                "errors are left out of the fit (they only bound L from above).")


def sweep_report(points, fit) -> dict:
    """JSON-ready report of a level sweep."""
    from . import __version__, theory
    from .report.json_report import _num, _pair

    out = []
    for p, used, res, ub in zip(points, fit.used, fit.residuals_db, fit.upper_bounds_db):
        out.append({"path": p.path, "ebn0_db": _num(p.ebn0_db), "ebn0_db_ci95": _pair(p.ebn0_db_ci95),
                    "ber": _num(p.ber), "ber_ci95": _pair(p.ber_ci95), "errors": int(p.errors),
                    "bits": int(p.bits), "used": bool(used), "residual_db": _num(res),
                    "loss_upper_bound_db": _num(ub)})
    return {"tool": {"name": "tonepair", "version": __version__},
            "implementation_loss_db": _num(fit.loss_db), "implementation_loss_db_ci95": _pair(fit.loss_db_ci95),
            "target_ber": fit.target_ber, "ebn0_at_target_db": _num(fit.ebn0_at_target_db),
            "ebn0_at_target_db_ci95": _pair(fit.ebn0_at_target_db_ci95),
            "ebn0_ideal_at_target_db": _num(theory.ebn0_required_db(fit.target_ber)),
            "chi2": _num(fit.chi2), "method": SWEEP_METHOD, "points": out}


def run_sweep(captures: list[Path], tones, baud, reference: str | None, spec_path: Path | None, out: Path,
              name: str, target_ber: float, overwrite: bool, quiet: bool) -> int:
    """Analyse each capture of a level sweep, fit one implementation loss, write JSON/HTML/PDF."""
    import datetime as _dt

    from jinja2 import Environment, PackageLoader, select_autoescape

    from .report import figures
    from .report.html import fmt_num, fmt_sci
    from .report.pdf import render_sweep_pdf
    from .sweep import SweepPoint, fit_loss

    if not captures:
        raise InputError("sweep needs at least one capture", None, "give CAPTURE...")
    _spec, tones, baud, reference = link_options(spec_path, tones, baud, reference)
    out = Path(out)
    paths = {k: out / f"{name}.{k}" for k in ("json", "html", "pdf")}
    inputs = [q for c in captures for q in _inputs(Path(c))]
    if spec_path is not None:
        inputs.append(Path(spec_path))
    for p in paths.values():
        check_output(p, inputs, overwrite)
    points = []
    for c in captures:
        res = analyze(c, tones_hz=tones, symbol_rate_hz=baud, reference=reference)
        s = res.summary
        if s.ber is None:
            raise InputError("no bit errors could be counted (no reference pattern found)", c,
                             "give --reference (e.g. PN9) or a spec with [link] reference")
        st = s.stats
        points.append(SweepPoint(path=str(c), ebn0_db=float(st.ebn0_db),
                                 ebn0_db_ci95=(float(st.ebn0_db_ci95[0]), float(st.ebn0_db_ci95[1])),
                                 errors=int(s.ber.errors), bits=int(s.ber.bits)))
        for w in res.warnings:
            print(f"warning: {w}", file=sys.stderr)
    fit = fit_loss(points, target_ber)
    report = sweep_report(points, fit)
    env = Environment(loader=PackageLoader("analyzer", "report/templates"),
                      autoescape=select_autoescape(["html", "j2"]), trim_blocks=True, lstrip_blocks=True)
    env.filters["f"] = fmt_num
    env.filters["sci"] = fmt_sci
    html = env.get_template("sweep.html.j2").render(
        r=report, fig=figures.to_png_base64(figures.waterfall(report)),
        generated=_dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC"))
    written = write_all([(paths["json"], json_report.dumps(report)), (paths["html"], html),
                         (paths["pdf"], render_sweep_pdf(report))])
    if not quiet:
        ci = report["implementation_loss_db_ci95"]
        print(f"implementation loss {fmt_num(report['implementation_loss_db'], 2, 'dB')} "
              f"(95% {fmt_num(ci[0], 2)} … {fmt_num(ci[1], 2)} dB); Eb/N0 for BER {fmt_sci(target_ber)}: "
              f"{fmt_num(report['ebn0_at_target_db'], 2, 'dB')}")
        for p in written:
            print(f"wrote {p}")
    return 0
