"""Theory for one measured burst: the link model of its tones, the BER it should have, and the
implementation loss of the BER it had."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ._closed_form import LinkModel, ber_expected
from ._loss import LossEstimate, implementation_loss_db

__all__ = ["BurstTheory", "burst_theory"]


@dataclass(frozen=True)
class BurstTheory:
    """The closed-form expectations for one burst."""

    model: LinkModel
    ber: float                      # expected BER at the measured Eb/N0 (NaN when not measured)
    loss: LossEstimate | None       # None without a bit-error count or a finite Eb/N0


def burst_theory(ebn0: float, ebn0_db: float, ebn0_db_ci95: tuple[float, float], imbalance_db: float,
                 rho_abs: float, counted: tuple[int, int] | None) -> BurstTheory:
    """The link model, expected BER and implementation loss of one burst.

    Parameters
    ----------
    ebn0, ebn0_db, ebn0_db_ci95
        Measured Eb/N0 (linear and dB) and its 95% interval, dB.
    imbalance_db : float
        Measured tone imbalance (NaN: taken as 0 dB).
    rho_abs : float
        ``|rho|`` of the tone templates (held below 0.999).
    counted : (errors, bits) or None
        The bit-error count, when there is one.
    """
    model = LinkModel(tone_correlation=float(min(rho_abs, 0.999)),
                      imbalance_db=float(imbalance_db) if np.isfinite(imbalance_db) else 0.0)
    ber = float(ber_expected(ebn0, model)) if np.isfinite(ebn0) else float("nan")
    loss = None
    if counted is not None and np.isfinite(ebn0_db):
        loss = implementation_loss_db(ebn0_db, ebn0_db_ci95, counted[0], counted[1])
    return BurstTheory(model, ber, loss)
