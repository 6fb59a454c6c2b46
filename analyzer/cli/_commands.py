"""What each command does, between the option parser (cli.py) and the stages.

Kept apart from ``cli.py`` so the command line only parses, and usable from
Python for scripted runs.
"""

from __future__ import annotations

import sys
from pathlib import Path

from ..errors import InputError
from ..pipeline import analyze
from ..report import json_report
from ..report.files import check_output, write_atomic


def _progress_bar(quiet: bool):
    """Our progress bar over all passes of the analysis and the reports, or (None, None) when quiet
    or not a terminal; the bar itself is the callback ``cb(done, total, stage)``."""
    if quiet or not sys.stdout.isatty():
        return None, None
    from ..report.terminal import Progress

    prog = Progress()
    return prog, prog


def _base_name(capture: Path, name: str | None) -> str:
    if name:
        return name
    if capture.name.endswith((".sigmf-meta", ".sigmf-data")):
        return capture.name[:-len(".sigmf-meta")]
    return capture.stem


#: The report formats every command can write; the default set.
FORMATS = ("json", "html", "pdf")
DEFAULT_FORMATS = ("json", "html")


def parse_formats(text: str | None, overrides: dict[str, Path | None] | None = None) -> tuple[str, ...]:
    """The formats of ``--formats json,html,pdf`` (default json,html), plus any named by --json/--html/--pdf."""
    if text is None:
        chosen = list(DEFAULT_FORMATS)
    else:
        chosen = [t.strip().lower() for t in text.split(",") if t.strip()]
        bad = [t for t in chosen if t not in FORMATS]
        if bad or not chosen:
            raise InputError(f"unknown report format {', '.join(bad) or repr(text)}", None,
                             "--formats takes a comma list of json, html, pdf (for example --formats json)")
    for k, v in (overrides or {}).items():
        if v is not None and k not in chosen:
            chosen.append(k)
    return tuple(k for k in FORMATS if k in chosen)


def output_paths(out: Path, base: str, formats: tuple[str, ...],
                 overrides: dict[str, Path | None] | None = None) -> dict[str, Path]:
    """OUT/BASE.EXT for each format, unless --json/--html/--pdf names the file."""
    ov = overrides or {}
    return {k: (ov.get(k) or Path(out) / f"{base}.{k}") for k in formats}


def report_paths(capture: Path, out: Path, name: str | None, json_path: Path | None,
                 html_path: Path | None, pdf_path: Path | None = None,
                 annotate: bool = False, formats: tuple[str, ...] | None = None, bits_path: Path | None = None,
                 frames_path: Path | None = None) -> dict[str, Path]:
    """Where each report of one capture goes (annotated SigMF metadata, decisions and frames only when asked for)."""
    overrides = {"json": json_path, "html": html_path, "pdf": pdf_path}
    formats = parse_formats(None, overrides) if formats is None else formats
    paths = output_paths(out, _base_name(capture, name), formats, overrides)
    if annotate:
        paths["annotated"] = Path(out) / f"{_base_name(capture, name)}.annotated.sigmf-meta"
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
    from ..spec import load_spec

    spec = load_spec(spec_path) if spec_path is not None else None
    if spec is not None:
        tones = tones if tones is not None else spec.link.tones_hz
        baud = baud if baud is not None else spec.link.symbol_rate_hz
        reference = reference if reference is not None else spec.link.reference
    return spec, tones, baud, normal_reference(reference)


def normal_reference(reference: str | None) -> str:
    """``pn9`` reads as ``PN9``, ``AUTO`` as ``auto``: pattern names are not case-sensitive (a bits:FILE is)."""
    if not reference:
        return "auto"
    if reference[:5].lower() == "bits:":
        return "bits:" + reference[5:]
    low = reference.strip().lower()
    return low if low in ("auto", "none", "frames") else low.upper()


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
                formats: str | None = None, bits_path: Path | None = None, frames_path: Path | None = None) -> int:
    """Analyse, judge against the spec, write the reports, print the summary; return the exit code."""
    from ..report.terminal import print_summary

    spec, tones, baud, reference = link_options(spec_path, tones, baud, reference)
    capture = Path(capture)
    if annotate and not capture.name.endswith((".sigmf-meta", ".sigmf-data")):
        raise InputError("--annotate needs a SigMF capture (.sigmf-meta/.sigmf-data)", capture,
                         "annotations are written into a copy of the SigMF metadata; other formats have none")
    chosen = parse_formats(formats, {"json": json_path, "html": html_path, "pdf": pdf_path})
    paths = report_paths(capture, Path(out), name, json_path, html_path, pdf_path, annotate, chosen, bits_path,
                         frames_path)
    inputs = _inputs(capture)
    if reference.startswith("bits:"):
        inputs.append(Path(reference[5:]))
    if spec_path is not None:
        inputs.append(Path(spec_path))
    resolved = [p.resolve() for p in paths.values()]
    if len(set(resolved)) < len(resolved):
        raise InputError("two of the reports would be the same file", next(iter(paths.values())),
                         "give --json, --html, --pdf, --bits and --frames-out different names")
    for p in paths.values():
        check_output(p, inputs, overwrite)
    prog, cb = _progress_bar(quiet)
    if prog:
        with prog:
            result = analyze(capture, tones_hz=tones, symbol_rate_hz=baud, sample_rate_hz=rate, fmt=fmt,
                             reference=reference, decision=decision, progress=cb, strict=strict, workers=workers)
            report, items = _analysis_reports(result, spec, paths, workers, cb)
            written = write_all(items)
    else:
        result = analyze(capture, tones_hz=tones, symbol_rate_hz=baud, sample_rate_hz=rate, fmt=fmt,
                         reference=reference, decision=decision, strict=strict, workers=workers)
        report, items = _analysis_reports(result, spec, paths, workers, None)
        written = write_all(items)
    for w in result.warnings:
        print(f"warning: {w}", file=sys.stderr)
    if not quiet:
        print_summary({**report, "warnings": []}, written=[str(p) for p in written])
    return 1 if report["verdict"] == "fail" else 0


def _analysis_reports(result, spec, paths: dict[str, Path], workers, cb) -> tuple[dict, list]:
    """The JSON-ready report and every (path, bytes) to write; figures drawn once for HTML and PDF."""
    # the files actually read (a SigMF core:dataset may name another data file)
    opened = [Path(result.capture.path), Path(result.capture.data_path)]
    for p in paths.values():
        check_output(p, opened, overwrite=True)
    report = json_report.build_report(result)
    if spec is not None:
        from ..spec import judge

        checks, verdict = judge(report, spec)
        report = json_report.build_report(result, checks, verdict)
    stages = [k for k in ("html", "pdf", "annotated") if k in paths]
    step = {"n": 0}

    def stage(name: str) -> None:
        if cb is not None:
            cb(step["n"], len(stages) + 1, name)
        step["n"] += 1

    # render everything before writing anything, so a failure leaves no partial set
    items: list[tuple[Path, bytes | str]] = []
    if "json" in paths:
        items.append((paths["json"], json_report.dumps(report)))
    pics = None
    if "html" in paths or "pdf" in paths:
        from ..report import figures

        stage("figures")
        pics = figures.render_all(result, workers)
    if "html" in paths:
        from ..report.html import render_html

        stage("HTML report")
        items.append((paths["html"], render_html(result, report, pics)))
    if "pdf" in paths:
        from ..report.pdf import render_pdf

        stage("PDF report")
        items.append((paths["pdf"], render_pdf(result, report, pics)))
    if "annotated" in paths:
        from ..report.annotate import annotated_metadata

        items.append((paths["annotated"], annotated_metadata(result, report)))
    if "bits" in paths or "frames" in paths:
        from ..report.bits import decisions_text, valid_frames_text

        if "bits" in paths:
            items.append((paths["bits"], decisions_text(result)))
        if "frames" in paths:
            items.append((paths["frames"], valid_frames_text(result)))
    if cb is not None:
        cb(1, 1, "writing")
    return report, items


#: Parameter names of the synthesiser -> the synth options a user types.
_SYNTH_OPTIONS = (("tones_hz must be (f0, f1) with f0 < f1", "--tones F0,F1 needs F0 < F1"),
                  ("symbol_rate_hz", "--baud"), ("sample_rate_hz", "--rate"), ("symbol_ramp", "--ramp"),
                  ("channel_filter_hz", "--channel-filter"), ("audio_band_hz", "--band"),
                  ("deemphasis_us", "--deemphasis"), ("deviation_hz", "--deviation"),
                  ("bt (Gaussian", "--bt (Gaussian"), ("transition (raised", "--transition (raised"),
                  ("pulse must", "--pulse must"), ("unknown pattern", "unknown --reference"),
                  ("unknown framing", "unknown --framing"), ("(real=True)", "(--audio)"),
                  (" and audio_order at least 1", ""), ("tone amplitudes", "--amplitudes"),
                  ("offsets, gaps and tails", "--offset, --gap and --start"))


def synth_problem(text: str) -> str:
    """A synthesiser's complaint in the words of the synth options."""
    for internal, option in _SYNTH_OPTIONS:
        text = text.replace(internal, option)
    return text


def run_synth(out: Path, tones, baud, rate, ebn0, offset, continuous_phase, start, rate_error, bursts, symbols,
              gap, pattern, amplitudes, ramp, datatype, audio, centre, seed, overwrite, framing: str = "none",
              frame_bytes: int = 32, pulse="rect", bt=0.5,
              transition=0.5, deviation=None, drift=0.0, channel_filter=0.0, receiver_audio=False,
              band=(300.0, 3000.0), deemphasis=750.0, tilt=0.0, pattern_inverted=False,
              one_on_low_tone=False) -> Path:
    """Synthesise a capture and write it with its truth."""
    from ..synth import SynthParams, synthesize
    from .. import capture

    try:
        params = SynthParams(tones_hz=tuple(tones), symbol_rate_hz=baud, sample_rate_hz=rate, ebn0_db=ebn0,
                             centre_offset_hz=offset, continuous_phase=continuous_phase,
                             start_offset_samples=start, rate_error_ppm=rate_error, n_bursts=bursts,
                             symbols_per_burst=symbols, gap_samples=gap, pattern=pattern,
                             tone_amplitudes=tuple(amplitudes), ramp_symbols=ramp, real=audio, seed=seed,
                             framing=framing, frame_bytes=frame_bytes,
                             pulse=pulse, bt=bt, transition=transition, deviation_hz=deviation, drift_hz=drift,
                             channel_filter_hz=channel_filter, receiver_audio=receiver_audio,
                             audio_band_hz=tuple(band), deemphasis_us=deemphasis, tilt_db=tilt,
                             pattern_inverted=pattern_inverted, one_on_low_tone=one_on_low_tone)
    except ValueError as exc:
        raise InputError(synth_problem(str(exc)), None, "see tonepair synth --help") from None
    res = synthesize(params)
    out = Path(out)
    suffix = out.suffix.lower()
    if suffix in (".wav", ".flac"):
        return capture.write_audio(out, res.samples, int(round(rate)), truth=res.truth, overwrite=overwrite)
    if audio:
        raise InputError("mono audio goes to a .wav or .flac file", out)
    base = Path(str(out).removesuffix(".sigmf-meta").removesuffix(".sigmf-data").removesuffix(".sigmf"))
    return capture.write_sigmf(base, res.samples, rate, datatype=datatype, centre_hz=centre, truth=res.truth,
                               description="tonepair synthetic FSK bursts", overwrite=overwrite)


SWEEP_METHOD = ("Implementation loss L minimises the sum of w_i (Eb/N0_i - L - R(BER_i))^2, R the Eb/N0 ideal "
                "noncoherent orthogonal BFSK needs (1/2 exp(-Eb/2N0)); weights from the 95% intervals of Eb/N0 and "
                "BER; interval widened when the points scatter more than their intervals. Points with no bit "
                "errors are left out of the fit (they only bound L from above).")


SWEEP_SCHEMA_ID = "https://tonepair.invalid/schema/sweep-1.json"


def sweep_report(points, fit) -> dict:
    """JSON-ready report of a level sweep; points listed by Eb/N0 (lowest first)."""
    from .. import __version__, theory
    from ..report.json_report import _num, _pair

    out = []
    for p, used, res, ub in zip(points, fit.used, fit.residuals_db, fit.upper_bounds_db):
        out.append({"path": p.path, "ebn0_db": _num(p.ebn0_db), "ebn0_db_ci95": _pair(p.ebn0_db_ci95),
                    "ber": _num(p.ber), "ber_ci95": _pair(p.ber_ci95), "errors": int(p.errors),
                    "bits": int(p.bits), "used": bool(used), "residual_db": _num(res),
                    "loss_upper_bound_db": _num(ub)})
    out.sort(key=lambda q: (q["ebn0_db"] is None, q["ebn0_db"] if q["ebn0_db"] is not None else 0.0))
    return {"$schema": SWEEP_SCHEMA_ID, "tool": {"name": "tonepair", "version": __version__},
            "implementation_loss_db": _num(fit.loss_db), "implementation_loss_db_ci95": _pair(fit.loss_db_ci95),
            "target_ber": fit.target_ber, "ebn0_at_target_db": _num(fit.ebn0_at_target_db),
            "ebn0_at_target_db_ci95": _pair(fit.ebn0_at_target_db_ci95),
            "ebn0_ideal_at_target_db": _num(theory.ebn0_required_db(fit.target_ber)),
            "chi2": _num(fit.chi2), "method": SWEEP_METHOD, "points": out}


def run_sweep(captures: list[Path], tones, baud, reference: str | None, spec_path: Path | None, out: Path,
              name: str | None, target_ber: float, overwrite: bool, quiet: bool, rate=None, fmt=None,
              decision: str = "square-law", strict: bool = False, workers: int | None = None,
              formats: str | None = None, json_path: Path | None = None, html_path: Path | None = None,
              pdf_path: Path | None = None) -> int:
    """Analyse each capture of a level sweep, fit one implementation loss, write the reports asked for."""
    from ..report import figures, style
    from ..report.html import env, generated_at
    from ..batch import SweepPoint, fit_loss

    if not captures:
        raise InputError("sweep needs at least one capture", None, "give CAPTURE...")
    _spec, tones, baud, reference = link_options(spec_path, tones, baud, reference)
    overrides = {"json": json_path, "html": html_path, "pdf": pdf_path}
    paths = output_paths(Path(out), name or "sweep", parse_formats(formats, overrides), overrides)
    inputs = [q for c in captures for q in _inputs(Path(c))]
    if spec_path is not None:
        inputs.append(Path(spec_path))
    for p in paths.values():
        check_output(p, inputs, overwrite)
    points = []
    for c in captures:
        res = analyze(c, tones_hz=tones, symbol_rate_hz=baud, sample_rate_hz=rate, fmt=fmt, reference=reference,
                      decision=decision, strict=strict, workers=workers)
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
    items: list[tuple[Path, bytes | str]] = []
    if "json" in paths:
        items.append((paths["json"], json_report.dumps(report)))
    pic = figures.render(figures.waterfall(report)) if ("html" in paths or "pdf" in paths) else None
    if "html" in paths:
        items.append((paths["html"], env().get_template("sweep.html.j2").render(
            r=report, fig=pic.base64(), generated=generated_at())))
    if "pdf" in paths:
        from ..report.pdf import render_sweep_pdf

        items.append((paths["pdf"], render_sweep_pdf(report, pic)))
    written = write_all(items)
    if not quiet:
        ci = report["implementation_loss_db_ci95"]
        print(f"implementation loss {style.fixed(report['implementation_loss_db'], 2, 'dB')} "
              f"(95% {style.fixed(ci[0])} … {style.fixed(ci[1])} dB); Eb/N0 for BER {style.sci(target_ber)}: "
              f"{style.fixed(report['ebn0_at_target_db'], 2, 'dB')}")
        for p in written:
            print(f"wrote {p}")
    return 0
