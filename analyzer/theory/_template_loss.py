"""The loss of tone templates fixed at the nominal tones instead of the measured ones."""

from __future__ import annotations

import numpy as np

from ..branches import template_correlation

__all__ = ["nominal_template_loss_db"]


def nominal_template_loss_db(tones_hz, nominal_hz, sample_rate_hz: float, window: int) -> float:
    """Loss of templates fixed at the nominal tones against templates at the measured tones.

    For a rectangular pulse at ``f`` and a template at ``f_nom`` this is
    ``-10 log10 |D(f - f_nom)|^2``, ``D`` the normalised Dirichlet kernel over
    the L samples of the window (-> sinc^2(df T)); the two tones are averaged
    in energy.  Issue-level detail (measured pulse shapes) lives in the
    diagnostics.
    """
    g = [abs(template_correlation((nominal_hz[i], tones_hz[i]), sample_rate_hz, window)) ** 2
         for i in (0, 1)]
    m = float(np.mean(g))
    return float(-10 * np.log10(m)) if m > 0 else float("inf")
