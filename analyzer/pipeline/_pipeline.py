"""Run the stages on one capture: the body of ``analyzer.analyze``.

survey -> regions -> starting points -> bursts (:mod:`._burst`) -> summary.
The report stage (JSON, HTML, PDF, terminal) reads the :class:`AnalysisResult`.
"""

from __future__ import annotations

import warnings
from dataclasses import replace
from pathlib import Path
from typing import Callable

import numpy as np

from .. import acquire, errorcount
from ..capture import Capture, open_capture
from ..errors import CaptureWarning, InputError
from ..parallel import keep_freed_memory
from . import _regions
from ._passes import BLOCK_SAMPLES, QUANTUM, Progress, Scanned, scan_capture, thin_spectrogram, warn_dc
from ._results import AnalysisOptions, AnalysisResult, BurstResult, Summary
from ._starts import common_rate, starting_point
from ._summary import summarise

__all__ = ["AnalysisOptions", "BurstResult", "Summary", "AnalysisResult", "BLOCK_SAMPLES", "QUANTUM", "analyze",
           "analyze_capture"]

MIN_SYMBOLS = acquire.MIN_BURST_SYMBOLS             # shortest burst analysed


def _check_hints(cap: Capture, opts: AnalysisOptions) -> None:
    fs = cap.sample_rate_hz
    if opts.symbol_rate_hz is not None:
        rs = opts.symbol_rate_hz
        if rs <= 0 or rs > fs / 2:
            raise InputError(f"symbol rate {rs:g} Hz is not between 0 and half the sample rate "
                             f"({fs / 2:g} Hz)", cap.path, "check --baud")
    if opts.tones_hz is None:
        return
    f0, f1 = opts.tones_hz
    rs = opts.symbol_rate_hz
    if not f0 < f1:
        raise InputError(f"--tones must be F0,F1 with F0 < F1, got {f0:g},{f1:g}", cap.path)
    lo, hi = (0.0, fs / 2) if cap.kind == "audio" else (-fs / 2, fs / 2)
    if f0 < lo or f1 > hi or (cap.kind == "audio" and (f0 <= lo or f1 >= hi)):
        what = "above 0 and below half the sample rate for audio" if cap.kind == "audio" else "in the sample band"
        raise InputError(f"tones {f0:g},{f1:g} Hz lie outside the sample band "
                         f"[{lo:g}, {hi:g}] Hz", cap.path, f"check --tones: they must lie {what}")
    if rs is not None and f1 - f0 < 0.25 * rs:
        raise InputError(f"tones {f0:g},{f1:g} Hz are closer than a quarter of the symbol rate",
                         cap.path, "check --tones and --baud")

def _cut_regions(spans, gap: int, margin: int, n_samples: int, power: np.ndarray, frame: int) -> list:
    """Spans merged into regions (:func:`_regions.merge_spans`), each cut into pieces of at most
    ``_regions.MAX_REGION_SAMPLES`` (:func:`_regions.split_region`)."""
    merged = _regions.merge_spans(spans, gap=gap, margin=margin, n_samples=n_samples)
    return [piece for a, b in merged for piece in _regions.split_region(a, b, power, frame,
                                                                        _regions.MAX_REGION_SAMPLES)]


def _region_tasks(regions: list, starts: list, track: np.ndarray, frame: int, noise_var: float) -> list:
    """``(a, b, (tones, rate) or None, noise variance)`` of each region: the noise floor where
    it lies (it may drift along the capture)."""
    tasks = []
    for (a, b), start in zip(regions, starts):
        if start is None:
            tasks.append((a, b, None, 0.0))
            continue
        fa, fb = a // frame, max(a // frame + 1, min(b // frame, len(track)))
        local_nv = float(np.median(track[fa:fb])) if fb > fa and len(track) else noise_var
        tasks.append((a, b, (tuple(start[0]), float(start[1])), local_nv))
    return tasks


def _bursts(ctx: _regions.RegionContext, tasks: list, workers, cb) -> list[BurstResult]:
    """Every region's bursts, numbered along the capture."""
    region_total = max(sum(b - a for a, b, _, _ in tasks), 1)
    region_done = 0
    bursts: list[BurstResult] = []
    busy = sum(t[2] is not None for t in tasks)
    for (a, b, _, _), found in zip(tasks, _regions.map_regions(_regions.region_bursts, ctx, tasks, workers, busy)):
        region_done += b - a
        first = len(bursts)          # taken before extending: the list grows while it is extended
        bursts.extend(replace(r, index=first + i) for i, r in enumerate(found))
        if cb:
            cb(region_done, region_total)
    return bursts


def _no_bursts(cap: Capture, read, trace, sc: Scanned, opts: AnalysisOptions, sps: float, margin: int,
               noise_var: float, floor_dbfs: float) -> InputError:
    """The error for a capture with no burst analysed: were there bursts, only too short?
    Segment again, keeping runs of 2 symbols or more."""
    fs, frame = cap.sample_rate_hz, sc.spec.frame
    short = _cut_regions(acquire.find_bursts(trace, 2 * sps)[0], int(4 * sps), margin, cap.n_samples,
                         trace.power, frame)
    longest = 0
    for a, b in short:
        x = read(a, b - a).astype(np.complex128)
        start = starting_point(x, fs, sc.band, opts, cap.path, a)
        if start is None:
            continue
        for _, first, stop, _ in acquire.bursts_in_span(x, a, fs, start[0], start[1], noise_var, min_symbols=2):
            longest = max(longest, stop - first)
    if 0 < longest < MIN_SYMBOLS:
        return InputError(f"bursts shorter than {MIN_SYMBOLS} symbols (the longest found is about "
                          f"{longest:.0f} symbols)", cap.path,
                          f"tonepair needs bursts of at least {MIN_SYMBOLS} symbols; check --baud")
    return InputError(f"no tone bursts found above the noise floor ({floor_dbfs:.1f} dBFS "
                      f"per sample)", cap.path,
                      "check --tones/--baud, or that the capture holds a transmission")


def _analyze_capture(cap: Capture, opts: AnalysisOptions, bits_text, progress, prior_warnings, block,
                     workers, strict=False) -> AnalysisResult:
    fs = cap.sample_rate_hz
    # the passes: the survey (with the power trace when the band is known from the hints),
    # the power trace (blind only), then the bursts; progress counts samples over all of them
    steps = Progress(progress, cap.n_samples, 2 if opts.tones_hz is not None else 3)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", CaptureWarning)
        rs = opts.symbol_rate_hz
        sc = scan_capture(cap, opts, block, workers, strict, steps)
        scan, band, trace, frame = sc.scan, sc.band, sc.trace, sc.spec.frame
        read = _regions.capture_reader(cap, scan.mean)
        power, bins = trace.power, trace.bins
        sps_min = fs / rs if rs is not None else max(2.0, fs / (band[1] - band[0]))
        # the noise floor frame by frame, from the out-of-band noise (NaN without it)
        oob_track = acquire.floor_track(trace, float("nan"))
        spans, floor = acquire.find_bursts(trace, MIN_SYMBOLS * sps_min, track=oob_track)
        noise_var = floor * frame / max(bins, 1)       # complex noise variance per sample
        full_scale = 1.0
        floor_dbfs = float(10 * np.log10(noise_var)) if noise_var > 0 else float("-inf")
        if not np.any(power > 0):
            raise InputError("the capture holds no signal (every sample has the same value)", cap.path,
                             "check the recording chain")
        warn_dc(cap, scan)
        margin = 8 * frame + 4 * int(np.ceil(sps_min if rs is None else fs / rs))
        # close spans are joined: a weak burst can dip under the threshold for a
        # while, and the symbol-level segmentation splits real gaps precisely
        # (gaps up to twice the longest moving average of the burst search)
        regions = _cut_regions(spans, int(2 * acquire.smoothing_frames(bins) * frame), margin, cap.n_samples,
                               power, frame)
        burst_cb = steps.stage("bursts")
        ctx = _regions.RegionContext(read, cap.kind, fs, opts, bits_text, full_scale, cap.path)
        if opts.tones_hz is not None and opts.symbol_rate_hz is not None:
            # hints give every region its starting point: no need to read the regions twice
            starts = [(tuple(opts.tones_hz), float(opts.symbol_rate_hz), float("inf"))] * len(regions)
        else:
            starts = common_rate(list(_regions.map_regions(_regions.region_start, ctx,
                                                           [(a, b, band) for a, b in regions], workers,
                                                           len(regions))))
        track = (oob_track if np.all(np.isfinite(oob_track)) else np.full(len(power), floor)) * frame / max(bins, 1)
        bursts = _bursts(ctx, _region_tasks(regions, starts, track, frame, noise_var), workers, burst_cb)
        if not bursts:
            raise _no_bursts(cap, read, trace, sc, opts, sps_min, margin, noise_var, floor_dbfs)
        summary = summarise(bursts)
    messages = tuple(prior_warnings) + tuple(str(w.message) for w in caught
                                             if issubclass(w.category, CaptureWarning))
    spec_db = 10 * np.log10(np.maximum(scan.psd, 1e-30))
    return AnalysisResult(capture=cap, options=opts, bursts=tuple(bursts), summary=summary,
                          noise_floor_dbfs=floor_dbfs, spectrum_hz=scan.freqs, spectrum_db=spec_db,
                          spectrogram=thin_spectrogram(scan.spectrogram), spectrogram_frame=sc.nfft_psd,
                          band_hz=band, warnings=messages, dc_offset=complex(scan.mean),
                          clipped_fraction=sc.clipped_fraction)


def analyze_capture(cap: Capture, opts: AnalysisOptions, bits_text: str | None = None,
                    progress: Callable[[int, int, str], None] | None = None,
                    prior_warnings: tuple[str, ...] = (), block: int | None = None,
                    workers: int | None = None, strict: bool = False) -> AnalysisResult:
    """Analyse an opened capture (see :func:`analyze`).

    ``prior_warnings`` (from opening the capture) are put first in the result's warnings.
    ``block`` is the number of samples read at a time in the passes over the
    capture (default :data:`BLOCK_SAMPLES`); it changes memory use, not results.
    ``workers`` is the number of processes that share the pass over the capture
    and the burst regions (default :func:`analyzer.workers.default_workers`; 1
    keeps everything in this process); it changes speed, not results.
    A SigMF checksum still to be checked (``cap.sha512_unchecked``, from
    ``open_capture(..., verify=False)``) is checked in the first pass over
    the file; ``strict`` makes a mismatch an error instead of a warning.
    """
    _check_hints(cap, opts)
    keep_freed_memory()
    # The matrices here are small (a burst's symbols by a few columns): a
    # multi-threaded BLAS spends more time waking and spinning its threads
    # than computing, and its idle threads take the core from worker processes.
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1, user_api="blas"):
        return _analyze_capture(cap, opts, bits_text, progress, prior_warnings, block, workers, strict)

def analyze(path: str | Path, tones_hz=None, symbol_rate_hz: float | None = None,
            sample_rate_hz: float | None = None, fmt: str | None = None, reference: str = "auto",
            decision: str = "square-law",
            progress: Callable[[int, int, str], None] | None = None, strict: bool = False,
            block: int | None = None, workers: int | None = None) -> AnalysisResult:
    """Analyse a capture of two-tone FSK bursts.

    Parameters
    ----------
    path : str or Path
        SigMF (.sigmf-meta/.sigmf-data), raw I/Q, or WAV/FLAC file.
    tones_hz : (float, float)
        Nominal tones: baseband Hz for I/Q, audio Hz for audio.
    symbol_rate_hz : float
        Nominal symbol rate.
    sample_rate_hz, fmt : optional
        For raw files: sample rate and ``cf32|ci16|ci8|cu8``.
    reference : str
        ``auto`` (detect an O.150 pattern, else HDLC frames), ``none``, ``frames``
        (HDLC frames with a valid FCS), ``PN7`` ... ``PN23`` or ``bits:FILE`` (a
        text file of 0/1 characters, repeated cyclically).
    decision : str
        ``square-law`` or ``likelihood``.
    progress : callable, optional
        Called as ``progress(done, total, stage)`` as the analysis goes: ``done``
        of ``total`` work units (samples, counted once per pass over the capture
        and once for the burst regions) and the name of the current stage.
    strict : bool
        A SigMF checksum mismatch is an error instead of a warning.
    block : int, optional
        Samples read at a time in the passes over the capture (default
        :data:`BLOCK_SAMPLES`, rounded up to whole frames); results do not
        depend on it.
    workers : int, optional
        Processes that share the pass over the capture and the burst regions
        (default: the cores available; 1 = all in this process).  Results do not depend on
        it.  Workers are forked, so this applies where the platform can fork
        and no other thread is running; elsewhere the analysis stays in this
        process.

    Returns
    -------
    AnalysisResult

    Raises
    ------
    InputError
        For any unusable input or option.
    """
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", CaptureWarning)
        # the checksum is checked in the analysis's own pass over the file (read once)
        cap = open_capture(path, rate=sample_rate_hz, fmt=fmt, strict=strict, verify=False)
    opened = tuple(str(w.message) for w in caught if issubclass(w.category, CaptureWarning))
    bits_text = None
    if reference.startswith("bits:"):
        bpath = Path(reference[5:])
        try:
            bits_text = bpath.read_text()
        except OSError as exc:
            raise InputError(f"cannot read the bits file ({exc.strerror or exc})", bpath,
                             "give --reference bits:FILE with a text file of 0/1 characters") from None
    elif reference not in ("auto", "none", "frames") and reference not in errorcount.PATTERNS:
        raise InputError(f"unknown reference {reference!r}", None,
                         "use auto, none, frames, " + ", ".join(errorcount.PATTERNS) + " or bits:FILE")
    if decision not in ("square-law", "likelihood"):
        raise InputError(f"unknown decision rule {decision!r}", None, "use square-law or likelihood")
    opts = AnalysisOptions(tones_hz=None if tones_hz is None else (float(tones_hz[0]), float(tones_hz[1])),
                           symbol_rate_hz=None if symbol_rate_hz is None else float(symbol_rate_hz),
                           reference=reference, decision=decision)
    return analyze_capture(cap, opts, bits_text=bits_text, progress=progress, prior_warnings=opened, block=block,
                           workers=workers, strict=strict)
