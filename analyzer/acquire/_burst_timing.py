"""Timing of the bursts in a span: the span's timing and segmentation, each burst's own grid,
and retiming that reuses the window energies while the tones stay put."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import branches
from ._bursts import segment_symbols
from ._rate import RateEstimate, measured_rate
from ._timing import TimingEstimate, grid_for_span, refine_timing, symbol_timing

__all__ = ["MIN_BURST_SYMBOLS", "ENERGY_REUSE_TONE_SHIFT", "SpanTiming", "bursts_in_span", "burst_timing",
           "retime_burst", "burst_rate"]

MIN_BURST_SYMBOLS = 16             # shortest burst analysed
#: Tones that moved by less than this fraction of the symbol rate keep the
#: window energies computed before the move: a tone error scales the energy
#: of every window alike (by about 1 - (pi * 0.01)^2 / 3, 3e-4 at most), so
#: the timing metric's peak does not move.
ENERGY_REUSE_TONE_SHIFT = 0.01


@dataclass(frozen=True)
class SpanTiming:
    """What the timing search of a span leaves for its bursts to reuse."""

    timing: TimingEstimate
    energy: branches.EnergyTrace
    single: bool              # the span holds one burst only
    outputs: branches.BranchOutputs | None = None     # on the span's grid, with the span's tones


def bursts_in_span(x: np.ndarray, x_start: int, fs: float, tones, rs: float,
                   noise_var: float, min_symbols: int = MIN_BURST_SYMBOLS):
    """Timing on the span, then symbol-level segmentation into bursts.

    Returns a list of ``(grid, first, stop, span)``: the span's grid, the burst's
    symbols ``first:stop`` on it and the :class:`SpanTiming` they share.
    """
    tones = tuple(float(f) for f in tones)
    rs = float(rs)
    et = branches.energy_trace(x, x_start, int(np.floor(fs / rs)), tones, fs)
    tm = symbol_timing(x, x_start, fs, tones, rs, energy=et)
    grid = grid_for_span(tm.phase_sample, tm.symbol_rate_hz, fs, x_start, x_start + len(x) - 1)
    if grid.n_symbols < 1:
        return []
    # each branch's energy, so that a run of the weaker of two unequal tones is not taken for a gap
    out = branches.correlate(x, x_start, grid, tones, fs)
    branch_energy = out.z.real ** 2 + out.z.imag ** 2
    segs = segment_symbols(branch_energy.sum(axis=1), 2.0 * noise_var, min_symbols=min_symbols,
                           branch_energies=branch_energy)
    span = SpanTiming(tm, et, len(segs) == 1, out)
    return [(grid, f, s, span) for f, s in segs]


def burst_timing(x: np.ndarray, x_start: int, fs: float, grid: branches.SymbolGrid, tones, rate_hint: float,
                 span: SpanTiming | None) -> tuple[TimingEstimate, branches.SymbolGrid]:
    """Timing and rate of one burst alone (the span may have held several), and its grid.

    A span holding one burst gives its own timing.  The grid keeps the burst's
    symbols at the measured rate and phase when those fit in the samples,
    otherwise it stays ``grid``.
    """
    sps = grid.samples_per_symbol
    lo = max(0, int(np.floor(grid.first_start)) - x_start - int(sps))
    hi = min(len(x), int(np.ceil(grid.stop)) - x_start + int(sps))
    if span is not None and span.single:
        tm = span.timing
    else:
        tm = symbol_timing(x[lo:hi], x_start + lo, fs, tones, rate_hint,
                           energy=span.energy if span is not None else None)
    sps2 = fs / tm.symbol_rate_hz
    k = np.round((grid.first_start - tm.phase_sample) / sps2)
    cand = branches.symbol_grid(tm.phase_sample + k * sps2, sps2, grid.n_symbols)
    if cand.first_samples[0] >= x_start and cand.first_samples[-1] + cand.window <= x_start + len(x):
        grid = cand
    return tm, grid


def retime_burst(x: np.ndarray, x_start: int, grid: branches.SymbolGrid, tones, fs: float, continuous: bool,
                 energy: branches.EnergyTrace | None) -> tuple[branches.SymbolGrid, branches.EnergyTrace | None]:
    """The burst's timing refined on ``grid``; returns the grid and the window energies to keep.

    Keying: a continuous-phase transmitter keeps the phase across symbols, and
    its timing comes from the instants the tone changes (``metric="contrast"``:
    a whole-symbol energy metric flattens there); with a new phase per symbol
    the receiver's own energy metric is the sharper one.  Its window energies
    ``energy`` are reused while the tones moved by less than
    :data:`ENERGY_REUSE_TONE_SHIFT` of the symbol rate and the window is the same.
    """
    if continuous:
        return refine_timing(x, x_start, grid, tones, fs, metric="contrast"), energy
    energy = _energy_for(x, x_start, grid, tones, fs, energy)
    return refine_timing(x, x_start, grid, tones, fs, energy=energy), energy


def _energy_for(x: np.ndarray, x_start: int, grid: branches.SymbolGrid, tones, fs: float,
                energy: branches.EnergyTrace | None) -> branches.EnergyTrace:
    """``energy`` while the tones moved by less than :data:`ENERGY_REUSE_TONE_SHIFT` of the symbol rate
    and the window is the same; else the window energies for these tones and grid."""
    if (energy is None or energy.window != grid.window
            or max(abs(a - b) for a, b in zip(tones, energy.tones_hz))
            > ENERGY_REUSE_TONE_SHIFT * fs / grid.samples_per_symbol):
        energy = branches.energy_trace(x, x_start, grid.window, tones, fs)
    return energy


def burst_rate(x: np.ndarray, x_start: int, grid: branches.SymbolGrid, tones, fs: float, continuous: bool,
               energy: branches.EnergyTrace | None) -> RateEstimate | None:
    """The burst's symbol rate and its 95% interval on its final grid (:func:`measured_rate`), with
    the timing metric of its keying (see :func:`retime_burst`)."""
    if continuous:
        return measured_rate(x, x_start, grid, tones, fs, metric="contrast")
    return measured_rate(x, x_start, grid, tones, fs, energy=_energy_for(x, x_start, grid, tones, fs, energy))
