"""Correlator outputs reused where the tones and the symbols' whole samples stay the same."""

from __future__ import annotations

import numpy as np

from ._correlate import BranchOutputs, SymbolGrid, correlate

__all__ = ["correlate_again", "outputs_on_grid"]


def correlate_again(x: np.ndarray, x_start: int, grid: SymbolGrid, tones, fs: float,
                    prev: BranchOutputs | None) -> BranchOutputs:
    """:func:`correlate` on ``grid``, reusing ``prev`` when it was made with the same
    tones on the same whole samples (an output depends on nothing else)."""
    if (prev is not None and prev.tones_hz == tuple(tones) and prev.grid.window == grid.window
            and np.array_equal(prev.grid.first_samples, grid.first_samples)):
        return BranchOutputs(z=prev.z, tones_hz=prev.tones_hz, grid=grid)
    return correlate(x, x_start, grid, tones, fs)


def outputs_on_grid(span: BranchOutputs | None, grid: SymbolGrid, first: int, stop: int,
                    tones) -> BranchOutputs | None:
    """Symbols ``first:stop`` of the outputs ``span`` made on a longer grid, as outputs on ``grid``;
    None unless they were made with ``tones`` on the very whole samples of ``grid``."""
    if span is None or span.tones_hz != tones:
        return None
    g0 = span.grid
    if stop <= g0.n_symbols and grid.window == g0.window and np.array_equal(
            grid.first_samples, g0.first_samples[first:stop]):
        return BranchOutputs(z=span.z[np.arange(first, stop)], tones_hz=tones, grid=grid)
    return None
