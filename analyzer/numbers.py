"""Numbers as the reports state them, shared by the report and the spec's readings of a result."""

from __future__ import annotations

import math

__all__ = ["finite_or_none"]


def finite_or_none(x) -> float | None:
    """``x`` as a finite float, or None (for None, a non-number, NaN or an infinity)."""
    if x is None:
        return None
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None
