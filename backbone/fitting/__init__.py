"""Fits of measured NMR data: relaxation decays, transfer build-ups, overall tumbling, intensity ratios.

This subpackage imports pandas and lmfit; ``import backbone`` does not import it, so the physics layers stay
light. matplotlib is imported only when a figure is drawn.

* :mod:`~backbone.fitting.data` — readers and validation: decay series, rate tables (one or several fields),
  NMR-STAR relaxation lists, intensity tables of recorded experiments;
* :mod:`~backbone.fitting.decay` — exponential decay / recovery model functions, Jacobians, starting values and
  lmfit models;
* :mod:`~backbone.fitting.series` — the batched Levenberg–Marquardt engine :func:`fit_batch` (any
  :class:`BatchModel`) and the per-residue decay driver :func:`fit_decays`;
* :mod:`~backbone.fitting.buildup` — build-up curves of transfer periods through the step algebra,
  :func:`fit_buildups`;
* :mod:`~backbone.fitting.tumbling_fit` — τc from R2/R1: closed form, screening, the global fit
  :func:`fit_tau_c` and :func:`tumbling_verdict`;
* :mod:`~backbone.fitting.ratio` — τc from intensity ratios of two experiments through the planner,
  :func:`fit_ratio`;
* :mod:`~backbone.fitting.plots` — figures :func:`plot_fits`, :func:`plot_tau_c`, :func:`plot_result`;
* :mod:`~backbone.fitting.run` — :func:`run_fit`, one entry point per command-line model, and
  :func:`fit_table_text`.

The status rules and helpers shared by the per-residue drivers live in the private ``_shared`` module.
"""

from backbone.fitting._shared import ERROR_METHODS, ENGINES, MAX_RELATIVE_ERROR, N_DRAWS_RANGE, STATUSES
from backbone.fitting.buildup import (
    BuildupModel,
    buildup,
    buildup_batch_model,
    buildup_jacobian,
    fit_buildups,
    initial_buildup_values,
)
from backbone.fitting.data import (
    DecayData,
    IntensityTable,
    RateTable,
    decays_from_frame,
    field_groups,
    intensities_from_frame,
    rates_from_frame,
    read_decays,
    read_intensities,
    read_nmrstar,
    read_peak_lists,
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
from backbone.fitting.plots import plot_fits, plot_result, plot_tau_c
from backbone.fitting.ratio import RatioFit, RatioPrediction, fit_ratio, predicted_ratio, read_ratio_data
from backbone.fitting.run import RUN_MODELS, fit_table_text, run_fit
from backbone.fitting.series import (
    BatchFit,
    BatchModel,
    FitResult,
    covariance_errors,
    decay_batch_model,
    fit_batch,
    fit_decays,
)
from backbone.fitting.tumbling_fit import (
    Screening,
    TauCFit,
    TumblingVerdict,
    expected_estimate,
    fit_tau_c,
    screen_residues,
    tau_c_from_ratio,
    tumbling_verdict,
)

__all__ = [
    # constants
    "MODEL_IDS",
    "PARAMETERS",
    "STATUSES",
    "ERROR_METHODS",
    "ENGINES",
    "N_DRAWS_RANGE",
    "MAX_RELATIVE_ERROR",
    "RUN_MODELS",
    # data
    "DecayData",
    "RateTable",
    "IntensityTable",
    "read_decays",
    "decays_from_frame",
    "read_rates",
    "rates_from_frame",
    "read_nmrstar",
    "read_intensities",
    "intensities_from_frame",
    "read_peak_lists",
    "field_groups",
    # decay models
    "ExpDecayModel",
    "ExpDecayOffsetModel",
    "RecoveryModel",
    "exp_decay",
    "exp_decay_offset",
    "recovery",
    "two_point_rate",
    # engine and drivers
    "BatchModel",
    "BatchFit",
    "FitResult",
    "decay_batch_model",
    "fit_batch",
    "covariance_errors",
    "fit_decays",
    "BuildupModel",
    "buildup",
    "buildup_jacobian",
    "buildup_batch_model",
    "initial_buildup_values",
    "fit_buildups",
    # tumbling
    "Screening",
    "TauCFit",
    "TumblingVerdict",
    "tau_c_from_ratio",
    "screen_residues",
    "fit_tau_c",
    "tumbling_verdict",
    "expected_estimate",
    "RatioPrediction",
    "RatioFit",
    "read_ratio_data",
    "predicted_ratio",
    "fit_ratio",
    # faces
    "plot_fits",
    "plot_tau_c",
    "plot_result",
    "run_fit",
    "fit_table_text",
]
