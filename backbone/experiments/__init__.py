"""Experiment models walked on the backbone graph: per-peak throughput and optimal delays.

* :mod:`~backbone.experiments.model` – the declarative model (TOML in ``models/experiments/``, schema in its
  README), validated into frozen records; :func:`load_experiment`, :func:`registered_experiments`;
* :mod:`~backbone.experiments.walk` – a model placed on a residue of the chain graph under a labeling scheme
  (:func:`resolve`) and evaluated with a RateSet (:func:`walk`), vectorized over conditions;
* :mod:`~backbone.experiments.delays` – textbook and optimal delays under an objective (a peak, the weakest
  peak, the geometric mean).
"""

from backbone.experiments.delays import (
    DelayChoice,
    check_objective,
    delay_bounds,
    objective_value,
    optimize_delays,
    textbook_delays,
)
from backbone.experiments.model import (
    EVOLUTION_MODES,
    OBJECTIVES,
    STEP_KINDS,
    WALKS,
    Atom,
    ExperimentModel,
    Peak,
    Step,
    experiment_from_dict,
    known_coherences,
    load_experiment,
    registered_experiments,
)
from backbone.experiments.walk import (
    TYPICAL_RESIDUE,
    TYPICAL_SEQUENCE,
    NoRelaxation,
    PeakResult,
    ResolvedWalk,
    StepResult,
    WalkResult,
    peak_amplitudes,
    resolve,
    typical_chain,
    walk,
)

__all__ = [
    # model
    "STEP_KINDS",
    "EVOLUTION_MODES",
    "WALKS",
    "OBJECTIVES",
    "known_coherences",
    "Atom",
    "Step",
    "Peak",
    "ExperimentModel",
    "experiment_from_dict",
    "load_experiment",
    "registered_experiments",
    # walk
    "TYPICAL_SEQUENCE",
    "TYPICAL_RESIDUE",
    "typical_chain",
    "NoRelaxation",
    "ResolvedWalk",
    "PeakResult",
    "StepResult",
    "WalkResult",
    "resolve",
    "peak_amplitudes",
    "walk",
    # delays
    "DelayChoice",
    "objective_value",
    "check_objective",
    "delay_bounds",
    "optimize_delays",
    "textbook_delays",
]
