"""What each command does, between the option parser (`_app.py`) and the stages.

Kept apart from ``_app.py`` so the command line only parses, and usable from
Python for scripted runs.
"""

from __future__ import annotations

import sys
from pathlib import Path

from .. import report
from ..errors import InputError
from ..pipeline import analyze
from ..spec import link_options


def _progress_bar(quiet: bool):
    """Our progress bar over all passes of the analysis and the reports, or (None, None) when quiet
    or not a terminal; the bar itself is the callback ``cb(done, total, stage)``."""
    if quiet or not sys.stdout.isatty():
        return None, None
    prog = report.Progress()
    return prog, prog


def run_analyze(capture: Path, tones, baud, rate, fmt, reference: str | None, decision: str, out: Path,
                name: str | None, json_path: Path | None, html_path: Path | None, overwrite: bool,
                quiet: bool, spec_path: Path | None = None, pdf_path: Path | None = None,
                annotate: bool = False, strict: bool = False, workers: int | None = None,
                formats: str | None = None, bits_path: Path | None = None, frames_path: Path | None = None) -> int:
    """Analyse, judge against the spec, write the reports, print the summary; return the exit code."""
    spec, tones, baud, reference = link_options(spec_path, tones, baud, reference)
    capture = Path(capture)
    if annotate and not capture.name.endswith((".sigmf-meta", ".sigmf-data")):
        raise InputError("--annotate needs a SigMF capture (.sigmf-meta/.sigmf-data)", capture,
                         "annotations are written into a copy of the SigMF metadata; other formats have none")
    chosen = report.parse_formats(formats, {"json": json_path, "html": html_path, "pdf": pdf_path})
    paths = report.report_paths(capture, Path(out), name, json_path, html_path, pdf_path, annotate, chosen,
                                bits_path, frames_path)
    inputs = report.input_files(capture)
    if reference.startswith("bits:"):
        inputs.append(Path(reference[5:]))
    if spec_path is not None:
        inputs.append(Path(spec_path))
    resolved = [p.resolve() for p in paths.values()]
    if len(set(resolved)) < len(resolved):
        raise InputError("two of the reports would be the same file", next(iter(paths.values())),
                         "give --json, --html, --pdf, --bits and --frames-out different names")
    for p in paths.values():
        report.check_output(p, inputs, overwrite)
    prog, cb = _progress_bar(quiet)
    if prog:
        with prog:
            result = analyze(capture, tones_hz=tones, symbol_rate_hz=baud, sample_rate_hz=rate, fmt=fmt,
                             reference=reference, decision=decision, progress=cb, strict=strict, workers=workers)
            rep, items = report.analysis_files(result, spec, paths, workers, cb)
            written = report.write_all(items)
    else:
        result = analyze(capture, tones_hz=tones, symbol_rate_hz=baud, sample_rate_hz=rate, fmt=fmt,
                         reference=reference, decision=decision, strict=strict, workers=workers)
        rep, items = report.analysis_files(result, spec, paths, workers, None)
        written = report.write_all(items)
    for w in result.warnings:
        print(f"warning: {w}", file=sys.stderr)
    if not quiet:
        report.print_summary({**rep, "warnings": []}, written=[str(p) for p in written])
    return 1 if rep["verdict"] == "fail" else 0


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


def run_sweep(captures: list[Path], tones, baud, reference: str | None, spec_path: Path | None, out: Path,
              name: str | None, target_ber: float, overwrite: bool, quiet: bool, rate=None, fmt=None,
              decision: str = "square-law", strict: bool = False, workers: int | None = None,
              formats: str | None = None, json_path: Path | None = None, html_path: Path | None = None,
              pdf_path: Path | None = None) -> int:
    """Analyse each capture of a level sweep, fit one implementation loss, write the reports asked for."""
    from ..batch import SweepPoint, fit_loss

    if not captures:
        raise InputError("sweep needs at least one capture", None, "give CAPTURE...")
    _spec, tones, baud, reference = link_options(spec_path, tones, baud, reference)
    overrides = {"json": json_path, "html": html_path, "pdf": pdf_path}
    paths = report.output_paths(Path(out), name or "sweep", report.parse_formats(formats, overrides), overrides)
    inputs = [q for c in captures for q in report.input_files(Path(c))]
    if spec_path is not None:
        inputs.append(Path(spec_path))
    for p in paths.values():
        report.check_output(p, inputs, overwrite)
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
    sweep = report.sweep_report(points, fit)
    written = report.write_all(report.sweep_files(sweep, paths))
    if not quiet:
        report.print_sweep_summary(sweep, written)
    return 0
