"""Many captures: batch runs and level sweeps (one implementation loss fitted across captures)."""

from ._batch import BatchOptions, run_batch
from ._sweep import SweepPoint, fit_loss

__all__ = ["BatchOptions", "run_batch", "SweepPoint", "fit_loss"]
