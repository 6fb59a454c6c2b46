"""The keying of a burst from its phase continuity: continuous-phase or a new phase per symbol."""

from __future__ import annotations

import numpy as np

__all__ = ["CONTINUOUS_PHASE_MIN", "is_continuous_phase", "keying_name"]

#: Phase continuity (see :func:`analyzer.estimate.phase_continuity`) above which a burst is
#: said to be keyed with continuous phase: near 1 when it is, about ``1/sqrt(pairs)`` when
#: each symbol starts with a new phase, so the midpoint separates them for any burst of more
#: than a few same-tone pairs (common practice).
CONTINUOUS_PHASE_MIN = 0.5


def is_continuous_phase(continuity: float) -> bool:
    """Whether a phase continuity says continuous-phase keying (False when it is NaN)."""
    return bool(np.isfinite(continuity) and continuity > CONTINUOUS_PHASE_MIN)


def keying_name(continuity: float) -> str | None:
    """``"continuous-phase"``, ``"phase-discontinuous"``, or None when the continuity is NaN."""
    if not np.isfinite(continuity):
        return None
    return "continuous-phase" if continuity > CONTINUOUS_PHASE_MIN else "phase-discontinuous"
