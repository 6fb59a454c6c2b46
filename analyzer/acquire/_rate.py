"""A burst's measured symbol rate and its 95% interval: a line through the timing of its parts."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..branches import EnergyTrace, SymbolGrid, symbol_grid
from ._timing import _block_best_shifts, _search_span, line_fit

__all__ = ["RATE_BLOCKS", "RATE_BLOCK_MIN_SYMBOLS", "RateEstimate", "measured_rate", "slope_interval"]


def _covered_symbols(grid: SymbolGrid, span: float, x_start: int, n_samples: int) -> SymbolGrid:
    """The grid without the first and last symbols whose windows, shifted by up to ``span``, would
    leave the samples ``x_start .. x_start + n_samples - 1``."""
    starts = grid.starts
    ok = (np.ceil(starts - span - 1e-9) >= x_start) & (np.ceil(starts + span - 1e-9) + grid.window <= x_start + n_samples)
    idx = np.flatnonzero(ok)
    if idx.size == 0:
        return symbol_grid(grid.first_start, grid.samples_per_symbol, 0)
    first, last = int(idx[0]), int(idx[-1])
    return symbol_grid(float(starts[first]), grid.samples_per_symbol, last - first + 1)


#: Parts of the burst whose timing the symbol-rate measurement fits a line through,
#: and the fewest symbols a part may hold (shorter bursts use fewer parts, at least 4).
RATE_BLOCKS = 16
RATE_BLOCK_MIN_SYMBOLS = 16


@dataclass(frozen=True)
class RateEstimate:
    """A burst's measured symbol rate with its 95% interval.

    Attributes
    ----------
    symbol_rate_hz : float
        Sample rate over the fitted symbol period.
    ci95_hz : tuple of float
        95% interval of the rate (Student t on the line fit's residuals).
    blocks : int
        Parts of the burst the timing line was fitted through.
    """

    symbol_rate_hz: float
    ci95_hz: tuple[float, float]
    blocks: int


def slope_interval(x: np.ndarray, y: np.ndarray, floor_var: float = 0.0,
                   level: float = 0.95) -> tuple[float, float]:
    """Least-squares slope of ``y`` on ``x`` and the half-width of its ``level`` interval.

    The residual variance ``s^2 = sum r^2 / (m - 2)`` (at least ``floor_var``,
    e.g. the variance a quantised ``y`` carries however good the data) gives
    the slope's standard error ``s / sqrt(sum (x - mean x)^2)``; the half-width
    is that times the Student t quantile with ``m - 2`` degrees of freedom.

    References
    ----------
    .. [1] N. R. Draper and H. Smith, *Applied Regression Analysis*, 3rd ed.,
       Wiley, 1998, sec. 1.4 (from memory).
    """
    from scipy import stats

    x = np.asarray(x, float)
    y = np.asarray(y, float)
    m = len(x)
    if m < 3:
        raise ValueError("a slope interval needs at least 3 points")
    slope, icpt = line_fit(x, y)
    dx = x - x.mean()
    r = y - (slope * x + icpt)
    var = max(float(r @ r) / (m - 2), floor_var)
    se = np.sqrt(var / float(dx @ dx))
    return slope, float(stats.t.ppf(0.5 + level / 2, m - 2) * se)


def measured_rate(x: np.ndarray, x_start: int, grid: SymbolGrid, tones_hz, sample_rate_hz: float,
                  metric: str = "energy", energy: EnergyTrace | None = None) -> RateEstimate | None:
    """The symbol rate of a timed burst and its 95% interval, from the timing of its parts.

    The burst's final grid is cut into up to :data:`RATE_BLOCKS` parts (at
    least :data:`RATE_BLOCK_MIN_SYMBOLS` symbols each, at least 4 parts); each
    part's best timing shift is found as in :func:`refine_timing` (same
    metric, reach and step), and a straight line through the shifts gives the
    correction of the symbol period and, from its residuals, the interval.
    The shifts are quantised to half a search step, so their variance is taken
    as at least ``step^2 / 12``.  More parts than the timing refinement's four
    make the residuals, and so the interval, meaningful; the rate is that of
    this fit (period ``T + slope``).

    A burst that begins or ends within a search reach of the samples' ends
    (a capture started during the transmission) is measured without the
    symbols the shifted windows would leave the samples on; the slope per
    symbol is the same.

    Returns
    -------
    RateEstimate or None
        None when the burst is too short for 4 parts.
    """
    span, step = _search_span(grid, None, None)
    inner = _covered_symbols(grid, span, x_start, len(x))
    blocks = min(RATE_BLOCKS, inner.n_symbols // RATE_BLOCK_MIN_SYMBOLS)
    if blocks < 4:
        return None
    got = _block_best_shifts(x, x_start, inner, tones_hz, sample_rate_hz, blocks, span, step, energy, metric)
    if got is None:
        return None
    slope, half = slope_interval(*got, floor_var=step ** 2 / 12)
    sps = grid.samples_per_symbol
    fs = float(sample_rate_hz)
    lo_sps, hi_sps = sps + slope - half, sps + slope + half
    ci = (fs / hi_sps, fs / lo_sps if lo_sps > 0 else float("inf"))
    return RateEstimate(symbol_rate_hz=fs / (sps + slope), ci95_hz=ci, blocks=blocks)
