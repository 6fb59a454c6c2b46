"""Closed-form error rates of noncoherent binary FSK, Marcum Q, Clopper-Pearson bounds, implementation loss."""

from ._ber import (
    BER_LIMIT, CORRELATION_NEGLIGIBLE, IMBALANCE_NEGLIGIBLE_DB, LinkModel, LossEstimate,
    ber_correlated, ber_expected, ber_orthogonal, ber_square_law, binomial_band,
    clopper_pearson, ebn0_required_db, implementation_loss_db, marcum_q1,
)

__all__ = [
    "BER_LIMIT", "CORRELATION_NEGLIGIBLE", "IMBALANCE_NEGLIGIBLE_DB", "LinkModel",
    "LossEstimate", "ber_correlated", "ber_expected", "ber_orthogonal", "ber_square_law",
    "binomial_band", "clopper_pearson", "ebn0_required_db", "implementation_loss_db",
    "marcum_q1",
]
