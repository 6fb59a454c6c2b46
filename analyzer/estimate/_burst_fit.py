"""The fit of one burst: moments of the branch outputs by the tone sent, the energy sums and the
branch statistics with the physical Eb/N0."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ._branch_stats import BranchStats, GroupMoments, branch_stats, group_moments, with_physical_ebn0
from ._signal_energy import EnergySums, energy_sums, physical_ebn0

__all__ = ["BurstFit", "fit_burst"]


@dataclass(frozen=True)
class BurstFit:
    """The statistics fitted on one burst."""

    moments: GroupMoments
    energy: EnergySums | None
    stats: BranchStats


def fit_burst(z: np.ndarray, sent: np.ndarray, mask: np.ndarray | None, rows: np.ndarray, tones, fs: float,
              real: bool, scale: float, rho_abs: float, data_aided: bool) -> BurstFit:
    """Fit the branch statistics of one burst.

    Parameters
    ----------
    z : ndarray (n, 4)
        Branch outputs.
    sent, mask : ndarray
        Tone index of each symbol used for the statistics, and the symbols that
        count (None: all).
    rows : ndarray (n, window)
        The symbols' samples (for the physical Eb/N0).
    tones, fs, real, scale
        Tones, sample rate, whether the samples are real, samples per symbol
        over the window.
    rho_abs : float
        ``|rho|`` of the tone templates.
    data_aided : bool
        Whether ``sent`` is known rather than decided.
    """
    mom = group_moments(z, sent, mask)
    energy = energy_sums(rows, sent, tones, fs, real=real, scale=scale, mask=mask)
    stats = with_physical_ebn0(branch_stats(mom, rho_abs, scale, data_aided), physical_ebn0(energy))
    return BurstFit(mom, energy, stats)
