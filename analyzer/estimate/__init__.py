"""Estimates from the branch outputs: branch statistics (gains, noise), physical Eb/N0, 95% intervals."""

from ._branch_stats import (
    BranchStats, GroupMoments, branch_stats, group_moments, phase_continuity, pool_moments,
    with_physical_ebn0,
)
from ._burst_fit import BurstFit, fit_burst
from ._intervals import burst_intervals
from ._keying import CONTINUOUS_PHASE_MIN, is_continuous_phase, keying_name
from ._signal_energy import EnergySums, energy_sums, physical_ebn0, pool_energy

__all__ = [
    "BranchStats", "GroupMoments", "branch_stats", "group_moments", "phase_continuity",
    "pool_moments", "with_physical_ebn0", "burst_intervals", "EnergySums", "energy_sums",
    "physical_ebn0", "pool_energy", "BurstFit", "fit_burst", "CONTINUOUS_PHASE_MIN",
    "is_continuous_phase", "keying_name",
]
