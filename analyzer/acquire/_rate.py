"""A burst's measured symbol rate and its 95% interval: a line through the timing of its parts."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..branches import EnergyTrace, SymbolGrid, symbol_grid
from ._timing import _block_best_shifts, _search_span

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


#: Asymptotic efficiency of the median absolute deviation as a scale estimate of normal data
#: (Huber, *Robust Statistics*, 1981, from memory): the Student t quantile of the interval uses this
#: share of the residual degrees of freedom.
MAD_EFFICIENCY = 0.37


def slope_interval(x: np.ndarray, y: np.ndarray, floor_var: float = 0.0,
                   level: float = 0.95) -> tuple[float, float]:
    """Robust slope of ``y`` on ``x`` and the half-width of its ``level`` interval.

    The slope is Theil and Sen's, the median of the slopes between all pairs
    of points (``scipy.stats.theilslopes``): a part of a burst whose timing
    locked on a wrong plateau moves it little, where it would pull a
    least-squares line.  The residual scale is the normal-consistent median
    absolute deviation of the residuals from that line, at least
    ``sqrt(floor_var)`` (the spread a quantised ``y`` keeps however good the
    data); the slope's standard error ``scale / sqrt(sum (x - mean x)^2)``
    times the Student t quantile gives the half-width, with
    :data:`MAD_EFFICIENCY` of the ``m - 2`` residual degrees of freedom (the
    median deviation is a less precise scale than the standard deviation).

    References
    ----------
    .. [1] P. K. Sen, "Estimates of the regression coefficient based on
       Kendall's tau," *J. Amer. Statist. Assoc.*, vol. 63, pp. 1379-1389,
       1968 (from memory).
    .. [2] N. R. Draper and H. Smith, *Applied Regression Analysis*, 3rd ed.,
       Wiley, 1998, sec. 1.4: the standard error of a slope (from memory).
    """
    from scipy import stats

    x = np.asarray(x, float)
    y = np.asarray(y, float)
    m = len(x)
    if m < 3:
        raise ValueError("a slope interval needs at least 3 points")
    slope, icpt, _, _ = stats.theilslopes(y, x)
    dx = x - x.mean()
    r = y - (slope * x + icpt)
    scale = float(stats.median_abs_deviation(r, scale="normal"))
    var = max(scale ** 2, floor_var)
    se = np.sqrt(var / float(dx @ dx))
    dof = max(2, round(MAD_EFFICIENCY * (m - 2)))
    return slope, float(stats.t.ppf(0.5 + level / 2, dof) * se)


def measured_rate(x: np.ndarray, x_start: int, grid: SymbolGrid, tones_hz, sample_rate_hz: float,
                  metric: str = "energy", energy: EnergyTrace | None = None) -> RateEstimate | None:
    """The symbol rate of a timed burst and its 95% interval, from the timing of its parts.

    The burst's final grid is cut into up to :data:`RATE_BLOCKS` parts (at
    least :data:`RATE_BLOCK_MIN_SYMBOLS` symbols each, at least 4 parts); each
    part's best timing shift is found as in :func:`refine_timing` (same
    metric, reach and step), and a robust line through the shifts (:func:`slope_interval`) gives the
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
