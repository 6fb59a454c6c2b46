"""The noncoherent quadrature receiver's kernels: symbol grid, the four correlator branch outputs per symbol, square-law and likelihood-ratio decisions."""

from ._correlate import (
    BranchOutputs, EnergyTrace, SymbolGrid, correlate, correlate_at, energy_trace, oscillator,
    sliding_sums, symbol_grid, symbol_rows, template_correlation, window_energy,
)
from ._decide import likelihood_ratio, log_i0, square_law
from ._reuse import correlate_again, outputs_on_grid

__all__ = [
    "BranchOutputs", "EnergyTrace", "SymbolGrid", "correlate", "correlate_at", "energy_trace",
    "oscillator", "sliding_sums", "symbol_grid", "symbol_rows", "template_correlation",
    "window_energy", "likelihood_ratio", "log_i0", "square_law", "correlate_again",
    "outputs_on_grid",
]
