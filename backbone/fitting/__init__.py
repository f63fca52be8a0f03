"""Fits of measured relaxation data.

This subpackage imports pandas and lmfit; ``import backbone`` does not import it, so the physics layers stay
light. First half of the fitting layer:

* :mod:`backbone.fitting.decay` — exponential decay / recovery model functions (pure numpy), their
  Jacobians and starting values, and lmfit :class:`~lmfit.Model` wrappers;
* :mod:`backbone.fitting.data` — readers and validation of decay series, rate tables and NMR-STAR
  relaxation lists;
* :mod:`backbone.fitting.series` — the per-residue fitting driver :func:`fit_decays` with statuses and
  uncertainties, and the batched Levenberg–Marquardt engine :func:`fit_batch`.
"""

from backbone.fitting.data import (
    DecayData,
    RateTable,
    decays_from_frame,
    rates_from_frame,
    read_decays,
    read_nmrstar,
    read_rates,
)
from backbone.fitting.decay import (
    MODEL_IDS,
    PARAMETERS,
    ExpDecayModel,
    ExpDecayOffsetModel,
    RecoveryModel,
    exp_decay,
    exp_decay_offset,
    recovery,
    two_point_rate,
)
from backbone.fitting.series import STATUSES, BatchFit, FitResult, fit_batch, fit_decays

__all__ = [
    "MODEL_IDS",
    "PARAMETERS",
    "STATUSES",
    "DecayData",
    "RateTable",
    "BatchFit",
    "FitResult",
    "ExpDecayModel",
    "ExpDecayOffsetModel",
    "RecoveryModel",
    "exp_decay",
    "exp_decay_offset",
    "recovery",
    "two_point_rate",
    "read_decays",
    "decays_from_frame",
    "read_rates",
    "rates_from_frame",
    "read_nmrstar",
    "fit_batch",
    "fit_decays",
]
