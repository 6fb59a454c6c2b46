"""The ``tonepair`` command line: parses options and calls the pipeline.

Exit codes: 0 analysed (pass or not judged), 1 analysed but the spec failed,
2 unusable input or options (one line ``error: ...`` on stderr, no traceback
unless ``--debug``, no report files left behind).
"""

from __future__ import annotations

import sys
import traceback
from enum import Enum
from pathlib import Path
from typing import Optional

import typer

from .. import __version__
from ..errors import InputError

app = typer.Typer(add_completion=False, no_args_is_help=True, rich_markup_mode=None,
                  help="tonepair: measure two-tone FSK bursts in a capture - tones, symbol rate, "
                       "Eb/N0, bit errors against the test pattern, and loss against theory.")

_DEBUG = {"on": False}


def _plain_arguments() -> None:
    """Arguments shown in help by their metavar alone (``CAPTURE``), not ``{CAPTURE} <path>``."""
    core = getattr(typer, "core", None)
    arg = getattr(core, "TyperArgument", None)
    if arg is None:
        return
    if hasattr(arg, "display_type"):
        arg.display_type = lambda self, ctx: ""
    if hasattr(arg, "_usage_display_name"):
        arg._usage_display_name = lambda self: (self.display_name_raw if self.required
                                                else f"[{self.display_name_raw}]")


_plain_arguments()


class RawFormat(str, Enum):
    cf32 = "cf32"
    ci16 = "ci16"
    ci8 = "ci8"
    cu8 = "cu8"


def _fail(exc: BaseException) -> None:
    if _DEBUG["on"]:
        traceback.print_exc()
    if isinstance(exc, InputError):
        typer.echo(f"error: {exc.line()}", err=True)
    else:
        typer.echo(f"error: internal problem ({type(exc).__name__}: {exc}); rerun with --debug and "
                   "report it", err=True)
    raise typer.Exit(2)


def _pair(text: str | None, what: str) -> tuple[float, float] | None:
    if text is None:
        return None
    parts = [p for p in text.replace(" ", "").split(",") if p]
    try:
        vals = tuple(float(p) for p in parts)
    except ValueError:
        raise InputError(f"{what} must be two numbers separated by a comma, got {text!r}") from None
    if len(vals) != 2:
        raise InputError(f"{what} must be two numbers separated by a comma, got {text!r}")
    return vals  # type: ignore[return-value]


_FORMATS_HELP = ("Reports to write: a comma list of json, html, pdf (default json,html). --formats json writes "
                 "JSON only and draws no figures.")
_OUT_HELP = "Folder for the reports."
_DECISION_HELP = "square-law, or likelihood (weighs each envelope by its own tone energy)."
_STRICT_HELP = "Treat a SigMF checksum mismatch as an error, not a warning."
_RATE_HELP = "Sample rate of raw I/Q files, Hz (with --format)."
_FORMAT_HELP = "Sample format of raw I/Q files (little-endian interleaved I/Q): cf32, ci16, ci8 or cu8."
_REFERENCE_HELP = ("Test pattern: auto (detect an ITU-T O.150 PRBS, else HDLC frames; the default), none, frames "
                   "(HDLC traffic: the frames with a valid FCS are the reference), PN7, PN9, PN11, PN15, PN23 "
                   "(any case), or bits:FILE (text of 0/1, repeated).")


def _version(value: bool):
    if value:
        typer.echo(f"tonepair {__version__}")
        raise typer.Exit(0)


@app.callback()
def _main(debug: bool = typer.Option(False, "--debug", help="Show the full traceback of any error."),
          version: bool = typer.Option(False, "--version", callback=_version, is_eager=True,
                                       help="Print the version and exit.")):
    _DEBUG["on"] = debug


@app.command(short_help="Analyse one capture: tones, symbol rate, Eb/N0, bit errors, loss against theory; "
                        "JSON, HTML and PDF reports.")
def analyze(
    capture: Path = typer.Argument(..., metavar="CAPTURE", show_default=False, help="Capture file: .sigmf-meta/.sigmf-data, raw I/Q (with --rate and "
                                              "--format), or .wav/.flac (2 channels = I/Q, 1 = audio)."),
    tones: Optional[str] = typer.Option(None, "--tones", metavar="F0,F1",
                                        help="Nominal tones in Hz: baseband from the capture centre for I/Q, "
                                             "audio Hz for audio. Example: --tones -2500,2500. Omit to "
                                             "find the tones blind."),
    baud: Optional[float] = typer.Option(None, "--baud", metavar="R",
                                         help="Nominal symbol rate in Hz. Omit to measure it blind."),
    rate: Optional[float] = typer.Option(None, "--rate", metavar="HZ", help=_RATE_HELP),
    fmt: Optional[RawFormat] = typer.Option(None, "--format", metavar="FORMAT", help=_FORMAT_HELP),
    reference: Optional[str] = typer.Option(None, "--reference", metavar="REF", help=_REFERENCE_HELP),
    decision: str = typer.Option("square-law", "--decision", metavar="RULE", help=_DECISION_HELP),
    spec: Optional[Path] = typer.Option(None, "--spec", metavar="SPEC.toml",
                                        help="Judge against this spec (exit 1 if a limit fails). Its [link] "
                                             "supplies --tones/--baud/--reference when those are not given."),
    out: Path = typer.Option(Path("reports"), "--out", metavar="DIR", help=_OUT_HELP),
    name: Optional[str] = typer.Option(None, "--name", metavar="NAME", help="Base name of the report files "
                                                                            "(default: the capture's name)."),
    formats: Optional[str] = typer.Option(None, "--formats", metavar="LIST", help=_FORMATS_HELP),
    json_path: Optional[Path] = typer.Option(None, "--json", metavar="FILE",
                                             help="Write the JSON report here instead of OUT/NAME.json."),
    html_path: Optional[Path] = typer.Option(None, "--html", metavar="FILE",
                                             help="Write the HTML report here instead of OUT/NAME.html."),
    pdf_path: Optional[Path] = typer.Option(None, "--pdf", metavar="FILE",
                                            help="Write a PDF report here (--formats json,html,pdf writes it to "
                                                 "OUT/NAME.pdf)."),
    annotate: bool = typer.Option(False, "--annotate",
                                  help="SigMF captures: write OUT/NAME.annotated.sigmf-meta, a copy of the "
                                       "metadata with one annotation per burst (the input is not changed)."),
    bits: Optional[Path] = typer.Option(None, "--bits", metavar="FILE",
                                        help="Write the decisions: for every burst a header line starting with "
                                             "# (burst index, start sample, symbol rate, tones), then one line "
                                             "of 0/1, the decided tone of each symbol (0 = lower tone, 1 = upper "
                                             "tone), for a frame decoder of your own."),
    frames_out: Optional[Path] = typer.Option(None, "--frames-out", metavar="FILE",
                                              help="Write the HDLC frames with a valid FCS found in the "
                                                   "decisions: the content without flags and FCS, one frame a "
                                                   "line, in hex."),
    overwrite: bool = typer.Option(False, "--overwrite", help="Replace report files that exist."),
    quiet: bool = typer.Option(False, "--quiet", help="No summary or progress on the terminal."),
    strict: bool = typer.Option(False, "--strict", help=_STRICT_HELP),
    workers: Optional[int] = typer.Option(None, "--workers", min=1, metavar="N",
                                          help="Processes that share the reading of a long capture and the "
                                               "burst analysis (default: every core; 1 = one process). Results "
                                               "are the same either way."),
):
    """Analyse one capture; write JSON and HTML reports (PDF and SigMF annotations when asked).

    \b
    Examples:
      tonepair analyze sample_captures/beacon_demo.sigmf-meta --tones -2500,2500 --baud 5000
      tonepair analyze receiver.wav        (no hints: bursts, tones and rate found blind)
    """
    from ._commands import run_analyze

    try:
        code = run_analyze(capture=capture, tones=_pair(tones, "--tones"), baud=baud, rate=rate,
                           fmt=fmt.value if fmt else None, reference=reference, decision=decision, out=out,
                           name=name, json_path=json_path, html_path=html_path, overwrite=overwrite, quiet=quiet,
                           spec_path=spec, pdf_path=pdf_path, annotate=annotate, strict=strict,
                           workers=workers, bits_path=bits, frames_path=frames_out, formats=formats)
    except typer.Exit:
        raise
    except Exception as exc:  # noqa: BLE001 - every failure becomes one error line
        _fail(exc)
    raise typer.Exit(code)


@app.command(short_help="Write a synthetic capture of FSK bursts in noise, with its truth (demo data, tests).")
def synth(
    out: Path = typer.Argument(..., metavar="OUT", help="Output: NAME.sigmf-meta (or NAME for SigMF), NAME.wav or "
                                                        "NAME.flac."),
    tones: str = typer.Option("-2500,2500", "--tones", metavar="F0,F1",
                              help="Nominal tones, Hz (the steady tones a long run of one symbol settles to)."),
    baud: float = typer.Option(5000.0, "--baud", metavar="R", help="Symbol rate, Hz."),
    rate: float = typer.Option(80000.0, "--rate", metavar="HZ", help="Sample rate, Hz."),
    ebn0: float = typer.Option(10.0, "--ebn0", metavar="DB", help="Eb/N0 at the capture in dB: signal energy per bit as "
                                                    "written (after any filter) over the noise density N0 "
                                                    "(for coloured noise, the noise a one-symbol tone template sees at the two tones)."),
    offset: float = typer.Option(0.0, "--offset", metavar="HZ", help="Transmitter frequency error added to both tones, Hz."),
    continuous_phase: bool = typer.Option(True, "--continuous-phase/--random-phase",
                                          help="Continuous phase (a VCO or DDS modulator; the default), or an "
                                               "independent random phase jump at every symbol boundary."),
    pulse: str = typer.Option("rect", "--pulse", metavar="SHAPE",
                              help="Frequency pulse: rect (hard keying), gaussian (with --bt; GMSK-style) or "
                                   "raised-cosine (with --transition). Example: --pulse gaussian --bt 0.3"),
    bt: float = typer.Option(0.5, "--bt", metavar="BT", help="Bandwidth-time product of the Gaussian pulse (0.5, 0.3 ...)."),
    transition: float = typer.Option(0.5, "--transition", metavar="SYMBOLS",
                                     help="Length of each raised-cosine change of tone, in symbols (1 = the "
                                          "whole symbol; at most 1 keeps the tone steady mid-symbol)."),
    deviation: Optional[float] = typer.Option(None, "--deviation", metavar="HZ",
                                              help="Deviation (half the tone spacing), Hz; the tones become the "
                                                   "midpoint of --tones -/+ HZ. Example: --tones 1200,2200 "
                                                   "--deviation 400 sends 1300 and 2100 Hz."),
    index: Optional[float] = typer.Option(None, "--index", metavar="H",
                                          help="Modulation index h = tone spacing / symbol rate, instead of "
                                               "--deviation (h = 0.5: minimum-shift spacing)."),
    drift: float = typer.Option(0.0, "--drift", metavar="HZ",
                                help="Linear frequency drift of both tones over each burst, Hz (centred: the "
                                     "steady tones hold at the burst middle)."),
    channel_filter: float = typer.Option(0.0, "--channel-filter", metavar="HZ",
                                         help="I/Q: low-pass channel filter passing |f| <= HZ (as an SDR's "
                                              "decimation filter), on signal and noise; 0 = none."),
    receiver_audio: bool = typer.Option(False, "--receiver-audio",
                                        help="Audio: pass signal and noise through an FM receiver's audio chain "
                                             "(voice-band band-pass --band, de-emphasis --deemphasis)."),
    band: str = typer.Option("300,3000", "--band", metavar="LO,HI",
                             help="Band-pass edges of --receiver-audio, Hz."),
    deemphasis: float = typer.Option(750.0, "--deemphasis", metavar="US",
                                     help="De-emphasis time constant of --receiver-audio, microseconds (750 for "
                                          "narrow-band FM, 75 or 50 for broadcast; 0 = off)."),
    tilt: float = typer.Option(0.0, "--tilt", metavar="DB",
                               help="Audio: level of the upper tone over the lower one, dB, on signal and noise "
                                    "(negative: upper weaker). Example: --receiver-audio --tilt -4"),
    start: float = typer.Option(1000.0, "--start", metavar="SAMPLE",
                                help="Fractional sample where the first symbol begins."),
    baud_error: float = typer.Option(0.0, "--baud-error", metavar="PPM",
                                     help="Symbol-rate error of the transmitter, ppm."),
    rate_error: Optional[float] = typer.Option(None, "--rate-error", hidden=True,
                                               help="Old name of --baud-error."),
    bursts: int = typer.Option(1, "--bursts", metavar="N", help="Number of bursts."),
    symbols: int = typer.Option(2000, "--symbols", metavar="N", help="Symbols per burst."),
    gap: float = typer.Option(4000.0, "--gap", metavar="SAMPLES", help="Samples of noise between bursts."),
    pattern: str = typer.Option("PN9", "--reference", "--pattern", metavar="REF",
                                help="Test pattern sent, ITU-T O.150: PN7, PN9, PN11, PN15, PN23 (any case; as "
                                     "analyze --reference; --pattern is the old name)."),
    framing: str = typer.Option("none", "--framing", metavar="FRAMING", help="none (the --reference), or hdlc: HDLC frames of random "
                                                          "payloads (NRZI, zero-bit insertion, X.25 FCS), flags "
                                                          "before, between and after them."),
    frame_bytes: int = typer.Option(32, "--frame-bytes", metavar="N", help="With --framing hdlc: payload bytes "
                                                                           "of each frame (the FCS is added)."),
    invert_pattern: bool = typer.Option(False, "--invert-pattern",
                                        help="Send the complement of the pattern as O.150 defines it "
                                             "(for PN15/PN23: the raw register output)."),
    one_tone: str = typer.Option("high", "--one-tone", metavar="high|low",
                                 help="Which tone a ONE of the pattern sends."),
    amplitudes: str = typer.Option("1,1", "--amplitudes", metavar="A0,A1", help="Relative tone amplitudes."),
    ramp: float = typer.Option(0.0, "--ramp", metavar="SYMBOLS", help="Power ramp at each burst edge, symbols."),
    sample_format: str = typer.Option("cf32", "--format", metavar="FORMAT",
                                      help="Sample format of a SigMF capture: cf32 or ci16 (little-endian I/Q, "
                                           "as analyze --format)."),
    datatype: Optional[str] = typer.Option(None, "--datatype", hidden=True, help="Old name of --format."),
    audio: bool = typer.Option(False, "--audio", help="Write mono real audio (tones in audio Hz)."),
    centre: Optional[float] = typer.Option(None, "--centre", metavar="HZ", help="RF centre frequency to record, Hz."),
    seed: int = typer.Option(1, "--seed", metavar="N", help="Random seed."),
    overwrite: bool = typer.Option(False, "--overwrite", help="Replace files that exist."),
):
    """Write a synthetic capture of FSK bursts in noise, with its truth (demo data and tests).

    \b
    Examples:
      tonepair synth gmsk.sigmf-meta --pulse gaussian --bt 0.5 --ebn0 20
      tonepair synth link.sigmf-meta --index 1 --channel-filter 6000 --drift 200
      tonepair synth radio.wav --audio --tones 1200,2200 --baud 1200 --rate 48000 --receiver-audio --tilt -3
      tonepair synth old.sigmf-meta --random-phase     (switched oscillators)
    """
    from ._commands import run_synth

    try:
        if deviation is not None and index is not None:
            raise InputError("give --deviation or --index, not both", None, "--index H means deviation H*baud/2")
        fmt = (datatype or sample_format).strip().lower().removesuffix("_le")
        if fmt not in ("cf32", "ci16"):
            raise InputError(f"unknown sample format {datatype or sample_format!r}", None,
                             "--format takes cf32 or ci16 (see tonepair synth --help)")
        if one_tone not in ("high", "low"):
            raise InputError(f"--one-tone must be high or low, got {one_tone!r}")
        path = run_synth(out=out, tones=_pair(tones, "--tones"), baud=baud, rate=rate, ebn0=ebn0, offset=offset,
                         continuous_phase=continuous_phase, start=start,
                         rate_error=baud_error if rate_error is None else rate_error, bursts=bursts,
                         symbols=symbols, gap=gap, pattern=pattern.strip().upper(),
                         amplitudes=_pair(amplitudes, "--amplitudes"), ramp=ramp, datatype=f"{fmt}_le", audio=audio, centre=centre, seed=seed, overwrite=overwrite,
                         framing=framing, frame_bytes=frame_bytes,
                         pulse=pulse, bt=bt, transition=transition,
                         deviation=(0.5 * index * baud if index is not None else deviation), drift=drift,
                         channel_filter=channel_filter, receiver_audio=receiver_audio,
                         band=_pair(band, "--band"), deemphasis=deemphasis, tilt=tilt,
                         pattern_inverted=invert_pattern, one_on_low_tone=one_tone == "low")
    except Exception as exc:  # noqa: BLE001
        _fail(exc)
    typer.echo(f"wrote {path}")


@app.command(short_help="Fit one implementation loss across captures of one link at several levels.")
def sweep(
    captures: list[Path] = typer.Argument(..., metavar="CAPTURE...", show_default=False, help="Captures of one link at several levels."),
    tones: Optional[str] = typer.Option(None, "--tones", metavar="F0,F1", help="Nominal tones, Hz."),
    baud: Optional[float] = typer.Option(None, "--baud", metavar="R", help="Nominal symbol rate, Hz."),
    rate: Optional[float] = typer.Option(None, "--rate", metavar="HZ", help=_RATE_HELP),
    fmt: Optional[RawFormat] = typer.Option(None, "--format", metavar="FORMAT", help=_FORMAT_HELP),
    reference: Optional[str] = typer.Option(None, "--reference", metavar="REF",
                                            help=_REFERENCE_HELP + " none is of no use here."),
    decision: str = typer.Option("square-law", "--decision", metavar="RULE", help=_DECISION_HELP),
    spec: Optional[Path] = typer.Option(None, "--spec", metavar="SPEC.toml",
                                        help="Take --tones/--baud/--reference from the spec's [link]."),
    out: Path = typer.Option(Path("reports"), "--out", metavar="DIR", help=_OUT_HELP),
    name: str = typer.Option("sweep", "--name", metavar="NAME", help="Base name of the report files."),
    formats: Optional[str] = typer.Option(None, "--formats", metavar="LIST", help=_FORMATS_HELP),
    json_path: Optional[Path] = typer.Option(None, "--json", metavar="FILE",
                                             help="Write the JSON report here instead of OUT/NAME.json."),
    html_path: Optional[Path] = typer.Option(None, "--html", metavar="FILE",
                                             help="Write the HTML report here instead of OUT/NAME.html."),
    pdf_path: Optional[Path] = typer.Option(None, "--pdf", metavar="FILE", help="Write a PDF report here."),
    target_ber: float = typer.Option(1e-3, "--target-ber", metavar="BER",
                                     help="BER at which to state the Eb/N0 needed."),
    overwrite: bool = typer.Option(False, "--overwrite", help="Replace report files that exist."),
    quiet: bool = typer.Option(False, "--quiet", help="No summary on the terminal."),
    strict: bool = typer.Option(False, "--strict", help=_STRICT_HELP),
    workers: Optional[int] = typer.Option(None, "--workers", min=1, metavar="N",
                                          help="Processes that share each capture's analysis (default: every "
                                               "core; 1 = one process). Results are the same either way."),
):
    """Fit one implementation loss across captures at several levels; write JSON and HTML (PDF when asked).

    \b
    Example:
      tonepair sweep levels/*.sigmf-meta --reference PN9 --formats json,html,pdf
    """
    from ._commands import run_sweep

    try:
        code = run_sweep(captures=captures, tones=_pair(tones, "--tones"), baud=baud, reference=reference,
                         spec_path=spec, out=out, name=name, target_ber=target_ber, overwrite=overwrite,
                         quiet=quiet, rate=rate, fmt=fmt.value if fmt else None, decision=decision, strict=strict,
                         workers=workers, formats=formats, json_path=json_path, html_path=html_path,
                         pdf_path=pdf_path)
    except typer.Exit:
        raise
    except Exception as exc:  # noqa: BLE001
        _fail(exc)
    raise typer.Exit(code)


@app.command(short_help="Analyse many captures in parallel; one summary as JSON, CSV and HTML.")
def batch(
    captures: list[str] = typer.Argument(..., metavar="DIR|GLOB|CAPTURE...",
                                         help="Folders (their .sigmf-meta/.wav/.flac files), glob patterns or "
                                              "capture files."),
    tones: Optional[str] = typer.Option(None, "--tones", metavar="F0,F1", help="Nominal tones, Hz."),
    baud: Optional[float] = typer.Option(None, "--baud", metavar="R", help="Nominal symbol rate, Hz."),
    rate: Optional[float] = typer.Option(None, "--rate", metavar="HZ", help=_RATE_HELP),
    fmt: Optional[RawFormat] = typer.Option(None, "--format", metavar="FORMAT", help=_FORMAT_HELP),
    reference: Optional[str] = typer.Option(None, "--reference", metavar="REF", help=_REFERENCE_HELP),
    decision: str = typer.Option("square-law", "--decision", metavar="RULE", help=_DECISION_HELP),
    spec: Optional[Path] = typer.Option(None, "--spec", metavar="SPEC.toml",
                                        help="Judge every capture against this spec."),
    out: Path = typer.Option(Path("reports"), "--out", metavar="DIR",
                             help="Folder for each capture's reports and the summary."),
    name: str = typer.Option("batch", "--name", metavar="NAME",
                             help="Base name of the summary files (the CSV is always written)."),
    formats: Optional[str] = typer.Option(None, "--formats", metavar="LIST",
                                          help=_FORMATS_HELP + " Applies to each capture's reports and the summary."),
    json_path: Optional[Path] = typer.Option(None, "--json", metavar="FILE",
                                             help="Write the summary JSON here instead of OUT/NAME.json."),
    html_path: Optional[Path] = typer.Option(None, "--html", metavar="FILE",
                                             help="Write the summary HTML here instead of OUT/NAME.html."),
    pdf_path: Optional[Path] = typer.Option(None, "--pdf", metavar="FILE",
                                            help="Write a summary PDF here (and a PDF for each capture)."),
    workers: Optional[int] = typer.Option(None, "--workers", min=1, metavar="N",
                                          help="Processes of the local pool (default: the number of CPUs)."),
    cluster: Optional[str] = typer.Option(None, "--cluster", metavar="ADDRESS",
                                          help="Run on this Dask scheduler instead of a local pool "
                                               "(needs the 'cluster' extra)."),
    overwrite: bool = typer.Option(False, "--overwrite", help="Replace report files that exist."),
    quiet: bool = typer.Option(False, "--quiet", help="No per-capture lines on the terminal."),
    strict: bool = typer.Option(False, "--strict", help=_STRICT_HELP),
):
    """Analyse many captures in parallel; one summary as JSON, CSV and HTML.

    Exit code 2 if any capture could not be analysed, else 1 if any failed its spec, else 0.
    """
    from ..batch import BatchOptions, run_batch
    from ..report import parse_formats

    try:
        overrides = {"json": json_path, "html": html_path, "pdf": pdf_path}
        opts = BatchOptions(tones=_pair(tones, "--tones"), baud=baud, reference=reference,
                            spec_path=str(spec) if spec else None, out=str(out), overwrite=overwrite,
                            rate=rate, fmt=fmt.value if fmt else None, decision=decision, strict=strict,
                            formats=parse_formats(formats, overrides))
        code, _ = run_batch(captures, opts, name=name, workers=workers, cluster=cluster, quiet=quiet,
                            summary_paths={k: v for k, v in overrides.items() if v is not None})
    except typer.Exit:
        raise
    except Exception as exc:  # noqa: BLE001
        _fail(exc)
    raise typer.Exit(code)


def main() -> None:
    """Console-script entry point.

    Numerical warnings of the libraries (numpy's "invalid value encountered",
    scipy's) are not shown: every figure that can be undefined is reported as
    such in the summary and the reports, and what the user must know arrives as
    a ``warning:`` line of our own.
    """
    import warnings

    warnings.filterwarnings("ignore", category=RuntimeWarning)
    try:
        app()
    except KeyboardInterrupt:
        typer.echo("error: interrupted", err=True)
        sys.exit(2)
