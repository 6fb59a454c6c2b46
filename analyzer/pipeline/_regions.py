"""Burst regions: the power trace's spans merged and cut into regions read alone, the samples the
correlators see, and the analysis of a region (its starting point, its bursts) in forked workers."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from .. import acquire, survey
from ..capture import Capture
from ..parallel import fork_map, fork_workers
from ._burst import analyse_burst
from ._results import AnalysisOptions, BurstResult
from ._starts import starting_point

__all__ = ["MAX_REGION_SAMPLES", "PARALLEL_MIN_REGIONS", "RegionContext", "capture_reader", "trace_frame",
           "split_region", "merge_spans", "receiver_input", "region_bursts", "region_start", "map_regions"]

#: Longest stretch of the capture read at once for burst analysis.  A region
#: of the power trace longer than this is analysed in consecutive pieces of at
#: most this many samples, cut where the trace is quietest (and, inside one
#: unbroken burst, at a piece edge: such a burst is then reported as several
#: consecutive bursts).  8 Msamples is 128 MB as complex128.
MAX_REGION_SAMPLES = 1 << 23
#: Fewest busy regions for which worker processes pay for themselves (forking
#: two workers costs a few tens of milliseconds, a region of a few thousand
#: symbols about as much).
PARALLEL_MIN_REGIONS = 4


def _noise_bands(cap: Capture, band: tuple[float, float], guard: float) -> list[tuple[float, float]]:
    fs = cap.sample_rate_hz
    lo_edge = guard if cap.kind == "audio" else -fs / 2
    out = []
    if band[0] - guard > lo_edge:
        out.append((lo_edge, band[0] - guard))
    if band[1] + guard < fs / 2:
        out.append((band[1] + guard, fs / 2))
    return out


def capture_reader(cap: Capture, dc: complex) -> Callable[[int, int], np.ndarray]:
    """``read(start, count)`` on the capture with the DC offset removed."""
    if dc == 0:
        return cap.read
    d = np.complex64(dc)

    def read(start: int, count: int) -> np.ndarray:
        # a new array: the capture's own buffer (a view, for in-memory sources) is never changed
        return cap.read(start, count) - d

    return read


def trace_frame(cap: Capture, band: tuple[float, float], rs: float | None) -> tuple[int, list]:
    """Power-trace frame and noise bands for ``band`` (frame from the symbol rate when known)."""
    fs = cap.sample_rate_hz
    if rs is not None:
        frame = survey.frame_length(fs, rs)
        guard_hz = rs
    else:
        bw = band[1] - band[0]
        frame = int(2 ** np.ceil(np.log2(max(16.0, 16.0 * fs / bw))))
        guard_hz = 0.25 * bw
    return frame, _noise_bands(cap, band, guard_hz)


def split_region(a: int, b: int, power: np.ndarray, frame: int, limit: int) -> list[tuple[int, int]]:
    """Cut ``[a, b)`` into pieces of at most ``limit`` samples at the quietest frame edges."""
    out = []
    while b - a > limit:
        lo_f = (a + limit // 2) // frame
        hi_f = (a + limit) // frame
        seg = power[lo_f:hi_f]
        cut = (lo_f + int(np.argmin(seg))) * frame if seg.size else a + limit
        cut = min(max(cut, a + 1), a + limit)
        out.append((a, cut))
        a = cut
    out.append((a, b))
    return out


def merge_spans(spans, gap: int, margin: int, n_samples: int) -> list[tuple[int, int]]:
    out: list[list[int]] = []
    for s in spans:
        a, b = max(0, s.start - margin), min(n_samples, s.stop + margin)
        if out and a - out[-1][1] < gap:
            out[-1][1] = max(out[-1][1], b)
        else:
            out.append([a, b])
    return [(a, b) for a, b in out]


def receiver_input(x: np.ndarray, kind: str) -> np.ndarray:
    """The samples the correlators see.

    For real audio the capture delivers the analytic signal ``x + j H{x}``
    (right for spectra and for finding the tones), but the Hilbert transform
    smears every phase step of a switched-oscillator transmitter over the
    neighbouring samples, which costs a noncoherent correlator about half a dB.
    The correlators therefore take ``2 Re`` of it -- the recording itself,
    scaled so a tone has the analytic amplitude and the noise the analytic
    variance; the image of each tone at the negative frequency that this lets
    through is down by the Dirichlet kernel at twice the tone frequency
    (-22 dB for 2200 Hz at 1200 Bd).
    """
    x = np.asarray(x)
    if kind == "audio":
        return (2.0 * x.real).astype(np.complex128)
    return x.astype(np.complex128)


@dataclass(frozen=True)
class RegionContext:
    """What the analysis of any region needs besides the region itself."""

    read: Callable[[int, int], np.ndarray]
    kind: str
    fs: float
    opts: AnalysisOptions
    bits_text: str | None
    full_scale: float
    path: object = None


def region_bursts(ctx: RegionContext, a: int, b: int, start, noise_var: float) -> list[BurstResult]:
    """Every burst in the capture region ``[a, b)`` (indices numbered from 0 within the region)."""
    if start is None:
        return []
    x = receiver_input(ctx.read(a, b - a), ctx.kind)
    tones0, rs0 = start
    out: list[BurstResult] = []
    for grid0, first, stop, span in acquire.bursts_in_span(x, a, ctx.fs, tones0, rs0, noise_var):
        out.append(analyse_burst(len(out), x, a, ctx.fs, grid0, first, stop, ctx.opts, ctx.bits_text,
                                  ctx.full_scale, tones0, rs0, span))
    return out


def region_start(ctx: RegionContext, a: int, b: int, band):
    """Blind starting point (tones, rate, line quality) of the region ``[a, b)``, or None."""
    return starting_point(ctx.read(a, b - a).astype(np.complex128), ctx.fs, band, ctx.opts, ctx.path, a,
                           ctx.kind)




def map_regions(fn, ctx: RegionContext, tasks: list, workers: int | None, busy: int):
    """``fn(ctx, *task)`` for each task in order, in forked workers once ``busy`` (the tasks
    with real work) reaches :data:`PARALLEL_MIN_REGIONS` (see :func:`analyzer.workers.fork_map`)."""
    n = fork_workers(workers) if busy >= PARALLEL_MIN_REGIONS else 1
    return fork_map(fn, ctx, tasks, n)
