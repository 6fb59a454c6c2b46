"""What theory says of the link: closed-form BER of noncoherent binary FSK, Marcum Q, the
likelihood-ratio rule for unequal tones, binomial intervals, implementation loss and its causes."""

from ._binomial import binomial_band, clopper_pearson
from ._burst_theory import BurstTheory, burst_theory
from ._closed_form import (
    BER_LIMIT, CORRELATION_NEGLIGIBLE, IMBALANCE_NEGLIGIBLE_DB, LinkModel, ber_correlated,
    ber_expected, ber_orthogonal, ber_square_law, blind_ber, ebn0_required_db,
)
from ._likelihood import DecisionGain, ber_likelihood, decision_gain
from ._loss import LossEstimate, LossParts, implementation_loss_db, loss_parts
from ._marcum import marcum_q1
from ._template_loss import nominal_template_loss_db

__all__ = [
    "BER_LIMIT", "CORRELATION_NEGLIGIBLE", "DecisionGain", "IMBALANCE_NEGLIGIBLE_DB", "LinkModel",
    "LossEstimate", "LossParts", "ber_correlated", "ber_expected", "ber_likelihood",
    "ber_orthogonal", "ber_square_law", "binomial_band", "blind_ber", "clopper_pearson",
    "decision_gain", "ebn0_required_db", "implementation_loss_db", "loss_parts", "marcum_q1",
    "BurstTheory", "burst_theory", "nominal_template_loss_db",
]
