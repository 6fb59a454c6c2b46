"""The per-burst warnings: a timing that is not one regular grid, a measurement at the edge of
what its hint allows, a blind symbol rate that fits better than the hinted one."""

from __future__ import annotations

import numpy as np

from .. import acquire
from ..errors import warn
from ._results import AnalysisOptions

__all__ = ["GRID_FIT_MIN_EBN0_DB", "HINT_CHECK_BER", "check_grid_fit", "check_hints_fit", "check_blind_rate"]


#: Share of changes of tone near half a symbol off the grid above which a burst's
#: timing is said not to fit one regular grid (a few per cent when it fits, at
#: 10 dB or more, 7% for a Gaussian pulse of BT 0.3 at 10 dB; 50 Bd start-stop characters
#: with 1.5 stop bits timed on a 50 Bd grid put 12% there).
GRID_OFF_SHARE = 0.10
#: The grid fit is judged on bursts of at least this Eb/N0 (the change points scatter below).
GRID_FIT_MIN_EBN0_DB = 10.0
#: Share of runs of an even number of symbols above which the rate may be twice the true one
#: (a third for random data or a PRBS; all of them when every symbol is doubled; about
#: three quarters for start-stop characters with 1.5 stop bits timed at twice their rate).
EVEN_RUN_SHARE = 0.6


#: A measured tone this share of the tone search's reach (0.45 of the smaller of
#: the nominal spacing and the symbol rate) or more from its hint, or a rate this
#: share of the rate search's reach (3000 ppm) or more from its hint, is said to
#: sit at the edge of what the hint allows.
HINT_EDGE_SHARE = 0.5


def check_hints_fit(opts: AnalysisOptions, grid, tones, fs: float, line_quality: float) -> None:
    """Warn when a measurement sits at the edge of the range its hint allows, or the hinted
    rate shows no symbol-rate line: a hint is a starting point, and a wrong one is obeyed only
    as far as the search around it reaches."""
    where = f"the burst at sample {grid.first_start:.0f}"
    rate = fs / grid.samples_per_symbol
    if opts.tones_hz is not None:
        f0, f1 = (float(v) for v in opts.tones_hz)
        reach = 0.45 * min(abs(f1 - f0), rate)
        moved = max(abs(tones[0] - f0), abs(tones[1] - f1))
        if moved >= HINT_EDGE_SHARE * reach:
            warn(f"{where}: the measured tones {tones[0]:.0f} / {tones[1]:.0f} Hz lie up to {moved:.0f} Hz from "
                 f"--tones {f0:g},{f1:g} (the search around a hint reaches about {reach:.0f} Hz): the hint may be "
                 "wrong; run without --tones to measure the tones blind")
    if opts.symbol_rate_hz is not None:
        ppm = (rate / float(opts.symbol_rate_hz) - 1) * 1e6
        if abs(ppm) >= HINT_EDGE_SHARE * HINT_RATE_SEARCH_PPM:
            warn(f"{where}: the measured symbol rate {rate:.6g} Bd lies {ppm:+.0f} ppm from --baud "
                 f"{float(opts.symbol_rate_hz):g}, at the edge of the +-{HINT_RATE_SEARCH_PPM:g} ppm searched: the "
                 "rate may lie beyond it; run without --baud to measure it blind")
        elif line_quality < acquire.BLIND_MIN_LINE_QUALITY:
            warn(f"{where}: at --baud {float(opts.symbol_rate_hz):g} the burst shows no clear symbol-rate line "
                 f"(quality {line_quality:.1f}, below {acquire.BLIND_MIN_LINE_QUALITY:g}): the hinted rate may be wrong; "
                 "run without --baud to measure it blind")


#: The symbol-rate search around a --baud hint (acquire.symbol_timing's default).
HINT_RATE_SEARCH_PPM = 3000.0
#: A burst analysed at a hinted rate whose error count is above this, slips, or is
#: not counted at all has its rate measured blind as well, to compare.
HINT_CHECK_BER = 0.01


def check_blind_rate(x, x_start, fs: float, grid, tones, line_quality: float) -> None:
    """Warn when the blind symbol rate of a burst differs from the one measured at the hinted
    rate and shows a clearly stronger timing line (a --baud that is off by more than the search)."""
    lo = max(int(np.floor(grid.first_start)) - x_start, 0)
    hi = min(int(np.ceil(grid.stop)) - x_start, len(x))
    if hi - lo < 32 * grid.window:
        return
    got = acquire.blind_rate(x[lo:hi], fs, tones)
    if got is None:
        return
    blind_rs, quality = got
    rate = fs / grid.samples_per_symbol
    if abs(blind_rs / rate - 1) > 1e-3 and quality > 1.5 * line_quality:
        warn(f"the burst at sample {grid.first_start:.0f}: measured blind, its symbol rate is {blind_rs:.6g} Bd "
             f"with a clearer timing line (quality {quality:.0f} against {line_quality:.0f} at {rate:.6g} Bd "
             "near --baud): the hint may be wrong; run without --baud to measure it blind")


def check_grid_fit(x, x_start, fs, grid, tones, dec) -> None:
    """Warn when the changes of tone do not fall on one regular symbol grid."""
    m = int(max(1, round(grid.samples_per_symbol / 2)))
    lo = max(int(np.floor(grid.first_start)) - x_start - grid.window, 0)
    hi = min(int(np.ceil(grid.stop)) - x_start + grid.window, len(x))
    if hi - lo < 4 * m:
        return
    d = acquire.tone_difference(x[lo:hi], fs, tones, m)
    off, even = acquire.grid_fit(dec, d, x_start + lo, grid)
    rate = fs / grid.samples_per_symbol
    where = f"the burst at sample {grid.first_start:.0f}"
    if off > GRID_OFF_SHARE:
        warn(f"{where}: {100 * off:.0f}% of its changes of tone lie about half a symbol off one regular "
             f"grid at {rate:.6g} Bd: the timing is not one regular grid (start-stop characters, e.g. with "
             "1.5 stop bits?); symbol-level figures assume it is")
    elif even > EVEN_RUN_SHARE:
        warn(f"{where}: {100 * even:.0f}% of its runs of one tone last an even number of symbols at "
             f"{rate:.6g} Bd: the symbol rate may be {rate / 2:.6g} Bd with half-symbol steps (start-stop "
             "characters with 1.5 stop bits fit a grid of half symbols); give --baud to choose")

