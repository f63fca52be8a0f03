"""Scenario planning: measurement time, limiting factor and duty cycle of every candidate experiment.

:func:`plan_scenario` answers a scenario file's question for each candidate labeling × field × experiment. It
computes nothing that a lower layer already does: τc from :func:`backbone.conditions.resolve_conditions`, optimal
delays, throughput and relative sensitivity from :func:`backbone.plan.plan` (one call per labeling and TROSY
mode, vectorized over the fields), the amide-1H recovery rate from the relaxation engine, and the time
arithmetic from :mod:`backbone.sensitivity`. What it adds is the bookkeeping that joins them.

How a time is computed
----------------------
With a ``[spectrometer.calibration]`` (S/N_cal in t_cal for a calibration experiment under its own labeling,
field, concentration and temperature), the experiment's S/N per √time is (:func:`backbone.sensitivity.
measurement_time`)

    S/N_cal/√t_cal · (c/c_cal) · (A/A_cal) · (B0/B0_cal)^(3/2) · P · (Q/Q_cal)

* A — throughput of the experiment's *limiting* peak: the weakest of the peaks its objective needs (every peak
  for the ``weakest`` and ``geometric-mean`` objectives, the named one otherwise; the goal's S/N applies to "the
  weakest expected peak"), at the optimized delays, with the sampling of every indirect dimension moved from
  the model's default t_max to the wanted one (below). A_cal — the calibration experiment walked by the same
  engine under the calibration's labeling, field and τc, at the model's default sampling (how the reference
  spectrum was sampled is not in the scenario). Both carry detection at their models' acquisition time and
  every relaxation loss, so a change of field enters A/A_cal through the rates and only the polarization and
  coil part through (B0/B0_cal)^(3/2), which is applied only when the calibration was at another field.
* Sampling: an indirect dimension evolving nucleus X is sampled to t_max = 1/``goals.resolution_hz.X``, or the
  model's default when the goal leaves X out. Its cost at the coherence's decay rate is the matched-filter
  factor (:func:`~backbone.transfer.evolution.real_time_factor`; semi-constant time,
  :func:`~backbone.transfer.evolution.semi_constant_time_factor`, for a shift evolved inside a transfer period;
  none for a fixed constant-time period, whose t_max cannot exceed the period). In an experiment that evolves
  Cα and Cβ in one dimension (HNCACB type) that dimension is the combined Cα/Cβ window and takes
  ``resolution_hz.CB``. Increments: ⌈t_max · SW⌉ with the spectral windows of
  :data:`backbone.sensitivity.SPECTRAL_WIDTH_PPM`.
* Q/Q_cal — steady-state 1H magnetization after the recycle delay and the acquisition's share of the scan,
  √(t_acq/t_scan), for each experiment with its own acquisition time. The recycle delay is
  ``goals.recycle_delay_s`` when given, else 1.2564/R1 − t_acq (:func:`backbone.sensitivity.recycle_delay`) with
  R1 the amide-1H recovery rate ``R1_recovery`` of the engine at the experiment's conditions; the calibration is
  assumed recorded with the same rule at its own conditions.
* P — the probe ratio; the calibration is on the scenario's probe, so P = 1.
* The time to the target S/N is t_cal·(target/S/N)²-type arithmetic (:func:`~backbone.sensitivity.
  time_to_target`); the minimum time is increments × 2 per indirect dimension (States quadrature) × the minimal
  phase cycle of 2 scans (gradient selection) × (recycle + acquisition), the pulse sequence itself (tens of ms)
  neglected. The reported time is the larger, with ``limited_by`` "sensitivity" or "sampling".

Without a calibration no absolute S/N or time is computed (nothing is invented): the rows carry relative
sensitivities, the sampling minimum time, and a note saying so.

TROSY: ``candidates.trosy`` true or false fixes the version; ``"auto"`` walks both and keeps, per labeling and
field, the one whose limiting peak (with the wanted sampling) is stronger, and says so in ``trosy_choice``. A
model without a TROSY version is walked plain. A calibration marked ``trosy = true`` on a model without a
TROSY version (an "HSQC" recorded as TROSY) is walked as the registered TROSY-only model with the same
dimensions and start (the 2D TROSY).

High-power duty cycle (per scan, along the limiting peak's pathway): the summed duration of every period that
decouples protons (a decoupled coupling whose partner of the transverse spin is a proton; the model lists these,
:attr:`backbone.experiments.Step.decoupled`), counted whatever the labeling. Band-selective carbon pulses and the
low-power 15N decoupling during acquisition are not counted (common practice). Coupling periods last their (optimized)
delay, a real-time evolution its t_max (the longest increment), a semi-constant-time evolution its excess over
the host period (counted when the host decouples). The scan here is recycle + sequence + acquisition. Compared with ``goals.high_power_duty_limit``
(default :data:`backbone.sensitivity.DEFAULT_DUTY_LIMIT`), with the caution text of
:func:`backbone.sensitivity.duty_cycle_warning`.

Sample in D2O: amide protons are exchanged for deuterons, so amide-detected experiments are infeasible.
"""

from __future__ import annotations

import dataclasses
import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from types import MappingProxyType

import numpy as np

from backbone.errors import BackboneError

__all__ = [
    "SAFETY_CAUTION",
    "DimensionSampling",
    "CalibrationPoint",
    "ExperimentTime",
    "ScenarioPlan",
    "plan_scenario",
    "scenario_plan_table",
]

#: One-line caution printed under every planning table.
SAFETY_CAUTION = (
    "Caution: strong magnetic fields, cryogens and RF heating of the sample and probe are hazards; the facility's "
    "rules and the probe maker's power and duty-cycle limits take precedence over any number here."
)

_NO_CALIBRATION = (
    "no [spectrometer.calibration] in the scenario: absolute signal-to-noise and measurement times cannot be "
    "computed; relative sensitivities (against the HSQC) and the sampling minimum times only"
)
_PROTONS = ("H", "HA", "HB")
_CARBONS = ("C", "CA", "CB", "CG")
_COUPLING_RE = re.compile(r"^\dJ\(([A-Z]+),([A-Z]+)")
_HOUR = 3600.0


# ---------------------------------------------------------------------------------------------------------
# Result records
# ---------------------------------------------------------------------------------------------------------


def _plain(x):
    """JSON-ready scalar (float/int/bool/str/None; non-finite floats become None)."""
    if x is None or isinstance(x, (str, bool)):
        return x
    if isinstance(x, (np.bool_,)):
        return bool(x)
    if isinstance(x, (int, np.integer)):
        return int(x)
    v = float(x)
    return v if math.isfinite(v) else None


@dataclass(frozen=True)
class DimensionSampling:
    """Sampling of one indirect dimension of one experiment at one field.

    nucleus : window key ("N", "CA", "C", "CB" = combined Cα/Cβ window); steps : the model's evolution steps it
    stands for; t_max_s [s] and where it came from (``goals.resolution_hz.X`` or "model default");
    model_t_max_s [s]; spectral_width_hz [Hz]; increments (complex points); rate_s [s⁻¹] of the evolving
    coherence; sampling_factor and model_sampling_factor [1] — S/N factor at t_max and at the model's t_max.
    """

    nucleus: str
    steps: tuple[str, ...]
    t_max_s: float
    t_max_source: str
    model_t_max_s: float
    spectral_width_hz: float
    increments: int
    rate_s: float
    sampling_factor: float
    model_sampling_factor: float

    def as_dict(self) -> dict:
        return {
            "nucleus": self.nucleus,
            "steps": list(self.steps),
            "t_max_s": _plain(self.t_max_s),
            "t_max_source": self.t_max_source,
            "model_t_max_s": _plain(self.model_t_max_s),
            "spectral_width_hz": _plain(self.spectral_width_hz),
            "increments": int(self.increments),
            "rate_s": _plain(self.rate_s),
            "sampling_factor": _plain(self.sampling_factor),
            "model_sampling_factor": _plain(self.model_sampling_factor),
        }


@dataclass(frozen=True)
class CalibrationPoint:
    """The calibration as the planner used it: the measured point and its walked throughput.

    experiment : name given; model : the model walked (the TROSY-only model for a TROSY "HSQC"); trosy;
    labeling; field_mhz [MHz]; tau_c_ns [ns] at the calibration temperature; concentration_mm [mM];
    temperature_k [K]; signal_to_noise [1] in time_s [s]; throughput [1] of its objective peak; recycle_s,
    acquisition_s [s]; steady_state [1]; sensitivity_factor [1] (Q_cal of :class:`~backbone.sensitivity.
    Acquisition`).
    """

    experiment: str
    model: str
    trosy: bool
    labeling: str
    field_mhz: float
    tau_c_ns: float
    concentration_mm: float
    temperature_k: float
    signal_to_noise: float
    time_s: float
    throughput: float
    recycle_s: float
    acquisition_s: float
    sensitivity_factor: float
    acquisition: object = field(default=None, repr=False, compare=False)

    def as_dict(self) -> dict:
        return {
            k: _plain(getattr(self, k))
            for k in (
                "experiment",
                "model",
                "trosy",
                "labeling",
                "field_mhz",
                "tau_c_ns",
                "concentration_mm",
                "temperature_k",
                "signal_to_noise",
                "time_s",
                "throughput",
                "recycle_s",
                "acquisition_s",
                "sensitivity_factor",
            )
        }


@dataclass(frozen=True)
class ExperimentTime:
    """One candidate: an experiment under one labeling at one field (module docstring for the definitions).

    plan : the :class:`backbone.plan.ExperimentPlan` of this condition (scalar values; its ``as_dict`` is the
        ``plan --json`` object). feasible / reason : from the walk (or the solvent).
    trosy : the version used; trosy_choice : how it was chosen.
    limiting_peak, limiting_throughput : the weakest needed peak and its |throughput| with the wanted sampling.
    peak_sampling : peak label → sampling correction (wanted over model default) applied to its throughput.
    dimensions : :class:`DimensionSampling` per indirect dimension.
    recycle_s, acquisition_s, sequence_s [s] — recycle delay (and recycle_source), direct acquisition,
        pulse-sequence duration along the limiting pathway.
    time : :class:`backbone.sensitivity.MeasurementTime` or None without calibration (or when infeasible).
    minimum_time_s [s] — sampling minimum (also without calibration).
    high_power_s [s], duty_cycle [1], duty_limit [1], duty_warning (str or None).
    """

    experiment: str
    labeling: str
    labeling_choice: object
    field_mhz: float
    tau_c_ns: float
    trosy: bool
    trosy_choice: str
    plan: object
    feasible: bool
    reason: str
    relative_sensitivity: float
    needed_peaks: tuple[str, ...]
    limiting_peak: str | None
    limiting_throughput: float
    peak_sampling: Mapping[str, float]
    dimensions: tuple[DimensionSampling, ...]
    recycle_s: float
    recycle_source: str
    acquisition_s: float
    sequence_s: float
    minimum_time_s: float | None
    time: object
    high_power_s: float | None
    duty_cycle: float | None
    duty_limit: float
    duty_warning: str | None

    @property
    def delays(self) -> Mapping:
        """Optimized delays [s] by name (from the plan)."""
        return MappingProxyType({k: _plain(v) for k, v in self.plan.delays.items()})

    @property
    def time_s(self) -> float | None:
        """Reported measurement time [s], None without calibration or when infeasible."""
        return None if self.time is None else float(self.time.time_s)

    @property
    def time_h(self) -> float | None:
        return None if self.time is None else float(self.time.time_s) / _HOUR

    @property
    def sensitivity_time_s(self) -> float | None:
        return None if self.time is None else float(self.time.sensitivity_time_s)

    @property
    def limited_by(self) -> str | None:
        return None if self.time is None else str(self.time.limited_by)

    @property
    def signal_to_noise(self) -> float | None:
        """S/N of the limiting peak reached in :attr:`time_s` (at least the target)."""
        return None if self.time is None else float(self.time.signal_to_noise)

    @property
    def increments(self) -> tuple[int, ...]:
        return tuple(d.increments for d in self.dimensions)

    def as_dict(self) -> dict:
        """The plan's per-experiment object plus the scenario answers (times in s and h)."""
        out = self.plan.as_dict()
        out.update(
            {
                "labeling": self.labeling,
                "labeling_choice": self.labeling_choice.as_dict(),
                "trosy": bool(self.trosy),
                "trosy_choice": self.trosy_choice,
                "feasible": bool(self.feasible),
                "reason": self.reason,
                "relative_sensitivity": _plain(self.relative_sensitivity),
                "needed_peaks": list(self.needed_peaks),
                "limiting_peak": self.limiting_peak,
                "limiting_throughput": _plain(self.limiting_throughput),
                "peak_sampling": {k: _plain(v) for k, v in self.peak_sampling.items()},
                "dimensions": [d.as_dict() for d in self.dimensions],
                "recycle_s": _plain(self.recycle_s),
                "recycle_source": self.recycle_source,
                "acquisition_s": _plain(self.acquisition_s),
                "sequence_s": _plain(self.sequence_s),
                "time_s": _plain(self.time_s),
                "time_h": _plain(self.time_h),
                "sensitivity_time_s": _plain(self.sensitivity_time_s),
                "minimum_time_s": _plain(self.minimum_time_s),
                "limited_by": self.limited_by,
                "signal_to_noise": _plain(self.signal_to_noise),
                "factors": None if self.time is None else {k: _plain(v) for k, v in self.time.factors.items()},
                "high_power_s": _plain(self.high_power_s),
                "duty_cycle": _plain(self.duty_cycle),
                "duty_limit": _plain(self.duty_limit),
                "duty_warning": self.duty_warning,
            }
        )
        return out


@dataclass(frozen=True)
class ScenarioPlan:
    """Every candidate of a scenario (:func:`plan_scenario`).

    scenario; tau_c_ns [ns] and tau_c_source; calibration (:class:`CalibrationPoint` or None);
    rows (:class:`ExperimentTime`, ordered labeling, field, experiment); labelings, fields_mhz, experiments
    (the grid); target_signal_to_noise; time_budget_h; notes (e.g. that times cannot be computed).
    """

    scenario: object
    tau_c_ns: float
    tau_c_source: str
    calibration: CalibrationPoint | None
    rows: tuple[ExperimentTime, ...]
    labelings: tuple[str, ...]
    fields_mhz: tuple[float, ...]
    experiments: tuple[str, ...]
    target_signal_to_noise: float
    time_budget_h: float
    notes: tuple[str, ...] = ()

    @property
    def has_times(self) -> bool:
        """True when a calibration makes absolute times available."""
        return self.calibration is not None

    def get(self, experiment: str, labeling: str | None = None, field_mhz: float | None = None) -> ExperimentTime:
        """The row of ``experiment`` (case-insensitive) under ``labeling`` (label or scheme id; default the
        first) at ``field_mhz`` (default the first field)."""
        lab = self.labeling_label(labeling)
        mhz = self.fields_mhz[0] if field_mhz is None else float(field_mhz)
        if not any(math.isclose(mhz, f) for f in self.fields_mhz):
            raise BackboneError(
                f"field {mhz:g} MHz is not in this plan; fields are {', '.join(f'{f:g}' for f in self.fields_mhz)} MHz"
            )
        for r in self.rows:
            if r.experiment.lower() == str(experiment).lower() and r.labeling == lab and math.isclose(r.field_mhz, mhz):
                return r
        raise BackboneError(
            f"experiment {experiment!r} is not in this plan; experiments are {', '.join(self.experiments)}"
        )

    def labeling_label(self, labeling=None) -> str:
        """The plan's label for ``labeling`` (a label such as "2h13c15n (deuteration 0.7)", a scheme id, an
        index or a LabelingChoice); default the first."""
        if labeling is None:
            return self.labelings[0]
        if isinstance(labeling, int) and not isinstance(labeling, bool):
            if not 0 <= labeling < len(self.labelings):
                raise BackboneError(f"labeling index {labeling} is out of range 0..{len(self.labelings) - 1}")
            return self.labelings[labeling]
        text = str(labeling)
        for lab in self.labelings:
            if lab.lower() == text.lower():
                return lab
        matches = [lab for lab in self.labelings if lab.split(" (", 1)[0].lower() == text.lower()]
        if len(matches) == 1:
            return matches[0]
        if len(matches) > 1:
            raise BackboneError(
                f"labeling {text!r} is ambiguous in this plan ({'; '.join(matches)}); give the full label"
            )
        raise BackboneError(f"labeling {text!r} is not in this plan; labelings are {'; '.join(self.labelings)}")

    def rows_for(self, labeling=None) -> tuple[ExperimentTime, ...]:
        lab = self.labeling_label(labeling)
        return tuple(r for r in self.rows if r.labeling == lab)

    def as_dict(self) -> dict:
        """JSON-ready: scenario summary, τc, calibration, one object per row (:meth:`ExperimentTime.as_dict`)."""
        return {
            "scenario": {
                "source": self.scenario.source,
                "protein": self.scenario.protein.name,
                "description": self.scenario.description,
            },
            "tau_c_ns": _plain(self.tau_c_ns),
            "tau_c_source": self.tau_c_source,
            "target_signal_to_noise": _plain(self.target_signal_to_noise),
            "time_budget_h": _plain(self.time_budget_h),
            "has_times": self.has_times,
            "calibration": None if self.calibration is None else self.calibration.as_dict(),
            "labelings": list(self.labelings),
            "fields_mhz": list(self.fields_mhz),
            "experiments": [r.as_dict() for r in self.rows],
            "notes": list(self.notes),
            "caution": SAFETY_CAUTION,
        }

    def to_frame(self):
        """pandas DataFrame, one row per labeling × field × experiment; units in the column names."""
        import pandas as pd

        rows = []
        for r in self.rows:
            rows.append(
                {
                    "labeling": r.labeling,
                    "field_mhz": r.field_mhz,
                    "experiment": r.experiment,
                    "trosy": bool(r.trosy),
                    "tau_c_ns": r.tau_c_ns,
                    "feasible": bool(r.feasible),
                    "relative_sensitivity": r.relative_sensitivity,
                    "limiting_peak": r.limiting_peak,
                    "limiting_throughput": r.limiting_throughput,
                    "increments": "x".join(str(n) for n in r.increments),
                    "recycle_s": r.recycle_s,
                    "time_h": r.time_h,
                    "sensitivity_time_h": None if r.time is None else r.sensitivity_time_s / _HOUR,
                    "minimum_time_h": None if r.minimum_time_s is None else r.minimum_time_s / _HOUR,
                    "limited_by": r.limited_by,
                    "signal_to_noise": r.signal_to_noise,
                    "duty_cycle": r.duty_cycle,
                    "reason": r.reason,
                }
            )
        return pd.DataFrame(rows)


# ---------------------------------------------------------------------------------------------------------
# Inputs
# ---------------------------------------------------------------------------------------------------------


def _labeling_choices(scenario, labelings):
    from backbone.scenario import LabelingChoice

    if labelings is None:
        return tuple(scenario.candidates.labeling)
    if isinstance(labelings, (str, LabelingChoice)) or not isinstance(labelings, Sequence) or not labelings:
        raise BackboneError(
            f"labelings = {labelings!r} is not allowed; give a non-empty list of scheme ids or LabelingChoice"
        )
    out = []
    for i, v in enumerate(labelings, start=1):
        choice = v if isinstance(v, LabelingChoice) else LabelingChoice(v, key=f"labelings[{i}]")
        if choice in out:
            raise BackboneError(f"labelings[{i}] repeats {str(choice)!r}; list each once")
        out.append(choice)
    return tuple(out)


def _experiment_models(scenario, experiments):
    from backbone.experiments import load_experiment, registered_experiments

    names = scenario.candidates.experiments if experiments is None else experiments
    if isinstance(names, str) or not isinstance(names, Sequence) or not names:
        raise BackboneError(f"experiments = {names!r} is not allowed; give a non-empty list of experiment names")
    models = []
    for i, n in enumerate(names, start=1):
        try:
            m = load_experiment(n)
        except BackboneError as err:
            key = "candidates.experiments" if experiments is None else "experiments"
            raise BackboneError(
                f"{key}[{i}] = {n!r} is not an experiment model; registered: {', '.join(registered_experiments())} "
                f"({err})"
            ) from err
        if any(m.name == x.name for x in models):
            raise BackboneError(f"experiments[{i}] repeats {m.name!r}; list each once")
        models.append(m)
    return models


def _fields(scenario, fields):
    from backbone.units import FIELD_MHZ

    values = scenario.spectrometer.fields_mhz if fields is None else fields
    if isinstance(values, (int, float)) and not isinstance(values, bool):
        values = [values]
    if isinstance(values, str) or not isinstance(values, Sequence) or not values:
        raise BackboneError(f"fields = {values!r} is not allowed; give a non-empty list of 1H frequencies [MHz]")
    out = []
    for i, v in enumerate(values, start=1):
        if isinstance(v, bool) or not isinstance(v, (int, float, np.floating, np.integer)):
            raise BackboneError(f"fields[{i}] = {v!r} is not a number; give the 1H frequency in MHz")
        FIELD_MHZ.check(float(v), where=f"fields[{i}]")
        if any(math.isclose(float(v), f) for f in out):
            raise BackboneError(f"fields[{i}] repeats {float(v):g} MHz; list each field once")
        out.append(float(v))
    return tuple(out)


def _tau_c(scenario, temperature_k: float):
    """(τc [ns], source) at ``temperature_k``; a given τc (at the sample temperature) wins, scaled to another
    temperature by the ratio of the Stokes-Einstein-Debye estimates (η/T) when one is needed."""
    from backbone.conditions import resolve_conditions

    p, smp = scenario.protein, scenario.sample
    where = scenario.source or "scenario"

    def estimate(t_k):
        c = resolve_conditions(
            mass_kda=p.mass_da / 1e3, temperature_k=t_k, solvent=smp.solvent, s2=p.s2, tau_e_ns=p.tau_e_ns, where=where
        )
        return c.tau_c * 1e9, c.tau_c_source

    if p.tau_c_ns is not None:
        given = resolve_conditions(tau_c_ns=p.tau_c_ns, s2=p.s2, tau_e_ns=p.tau_e_ns, where=where).tau_c * 1e9
        if math.isclose(temperature_k, smp.temperature_k):
            return given, "given (protein.tau_c_ns)"
        ratio = estimate(temperature_k)[0] / estimate(smp.temperature_k)[0]
        return given * ratio, (
            f"given (protein.tau_c_ns at {smp.temperature_k:.2f} K), scaled to {temperature_k:.2f} K by eta/T "
            f"(Stokes-Einstein-Debye)"
        )
    return estimate(temperature_k)


# ---------------------------------------------------------------------------------------------------------
# Per-model bookkeeping
# ---------------------------------------------------------------------------------------------------------


def _at(x, k):
    """Element k of an array over fields (or the scalar itself)."""
    if x is None:
        return None
    a = np.asarray(x)
    return a.item() if a.ndim == 0 else a.reshape(-1)[k].item()


def _slice_plan(ep, k):
    """The ExperimentPlan ``ep`` (arrays over the field grid) at field index k, as scalars."""
    peaks = tuple(
        dataclasses.replace(p, throughput=np.asarray(_at(p.throughput, k)), textbook_throughput=np.asarray(_at(p.textbook_throughput, k)))
        for p in ep.peaks
    )
    steps = tuple(
        dataclasses.replace(
            s,
            delay_s=_at(s.delay_s, k),
            textbook_delay_s=_at(s.textbook_delay_s, k),
            efficiency=_at(s.efficiency, k),
            rate_s=_at(s.rate_s, k),
        )
        for s in ep.steps
    )
    return dataclasses.replace(
        ep,
        trosy=bool(_at(ep.trosy, k)),
        field_mhz=np.asarray(_at(ep.field_mhz, k)),
        tau_c_ns=np.asarray(_at(ep.tau_c_ns, k)),
        objective_value=np.asarray(_at(ep.objective_value, k)),
        textbook_objective_value=np.asarray(_at(ep.textbook_objective_value, k)),
        relative_sensitivity=np.asarray(_at(ep.relative_sensitivity, k)),
        peaks=peaks,
        steps=steps,
        delays=MappingProxyType({d: _at(v, k) for d, v in ep.delays.items()}),
        textbook_delays=MappingProxyType({d: _at(v, k) for d, v in ep.textbook_delays.items()}),
    )


def _window(model, step) -> str:
    """Spectral-window key of an evolution step: the combined CA/CB window in a Cα/Cβ experiment."""
    atom = step.at.atom
    if atom in ("CA", "CB") and "CB" in model.dimensions:
        return "CB"
    return atom


def _needed(model, objective: str) -> tuple[str, ...]:
    labels = tuple(p.label for p in model.peaks)
    return (objective,) if objective in labels else labels


def _transverse(step) -> set[str]:
    if step.kind in ("inept", "transfer"):
        return {a.atom for a in step.from_}
    if step.kind in ("refocus",):
        return {a.atom for a in step.to}
    return {a.atom for a in step.from_} | {a.atom for a in step.to}


def _decouples_h_or_c(step) -> bool:
    """True when a period decouples protons (broadband 1H decoupling, the high-power part of these sequences).

    Carbon couplings removed by band-selective 180° pulses and the low-power 15N decoupling during acquisition
    (about 1 kHz, common practice) are not counted as high-power time.
    """
    if not step.decoupled or step.kind == "detect":
        return False
    transverse = _transverse(step)
    for kind in step.decoupled:
        m = _COUPLING_RE.match(kind)
        if m is None:
            continue
        partners = {m.group(1), m.group(2)} - transverse
        if partners & set(_PROTONS):
            return True
    return False


class _Evaluated:
    """Sampling, limiting peak and duty of one model variant at one field (plain data, internal)."""

    __slots__ = ("dims", "peak_sampling", "limiting", "limiting_amp", "sequence_s", "high_power_s", "acq_s")


def _evaluate(model, ep, field_mhz: float, goals) -> _Evaluated:
    """Sampling corrections, dimensions, limiting peak and high-power time of a scalar ExperimentPlan."""
    from backbone.sensitivity import increments_for, spectral_width_hz
    from backbone.transfer.evolution import real_time_factor, semi_constant_time_factor

    out = _Evaluated()
    steps_by_name = {s.name: s for s in ep.steps}
    detect = model.steps[-1]
    out.acq_s = float(detect.t_max_s)
    wanted = goals.t_max_s

    def t_max(step):
        key = _window(model, step)
        if key in wanted:
            return float(wanted[key]), f"goals.resolution_hz.{key}"
        return float(step.t_max_s), "model default"

    def factor(step, t):
        rate = steps_by_name[step.name].rate_s
        rate = 0.0 if rate is None else float(rate)
        if step.mode == "real-time":
            return rate, float(real_time_factor(rate, t))
        if step.within:
            host = model.step(step.within)
            return rate, float(semi_constant_time_factor(rate, t, float(ep.delays[host.delay])))
        return rate, 1.0  # fixed constant time: the period's decay belongs to the step, sampling costs nothing

    peak_sampling = {}
    dims_by_peak = {}
    for p in ep.peaks:
        corr, dims = 1.0, []
        for seg in model.paths[p.label]:
            s = seg.step
            if s.kind != "shift-evolution":
                continue
            t, src = t_max(s)
            if s.mode == "constant-time" and not s.within and t > s.fixed_delay_s:
                t, src = float(s.fixed_delay_s), "constant-time period (resolution limited by it)"
            rate, f_goal = factor(s, t)
            _, f_model = factor(s, float(s.t_max_s))
            corr *= f_goal / f_model if f_model > 0 else 0.0
            key = _window(model, s)
            sw = float(spectral_width_hz(key, field_mhz))
            dims.append(
                DimensionSampling(key, (s.name,), t, src, float(s.t_max_s), sw, int(increments_for(t, sw)), rate, f_goal, f_model)
            )
        peak_sampling[p.label] = corr
        dims_by_peak[p.label] = dims
    out.peak_sampling = MappingProxyType(peak_sampling)

    needed = [p for p in ep.peaks if p.label in _needed(model, ep.objective) and p.feasible]
    if needed and ep.feasible:
        amps = [abs(float(p.throughput)) * peak_sampling[p.label] for p in needed]
        i = int(np.argmin(amps))
        out.limiting, out.limiting_amp = needed[i].label, amps[i]
    else:
        out.limiting, out.limiting_amp = None, 0.0
    # Dimensions: those of the limiting peak; steps of other peaks evolving in the same window are listed too.
    ref_label = out.limiting or model.peaks[0].label
    merged = []
    for d in dims_by_peak[ref_label]:
        names = tuple(
            dict.fromkeys(x for dl in dims_by_peak.values() for dd in dl if dd.nucleus == d.nucleus for x in dd.steps)
        )
        merged.append(dataclasses.replace(d, steps=names))
    out.dims = tuple(merged)

    # Durations along the limiting pathway.
    seq = hp = 0.0
    seen = set()
    for seg in model.paths[ref_label]:
        s = seg.step
        if s.index in seen:
            continue
        seen.add(s.index)
        if s.kind == "detect":
            duration = float(s.t_max_s)
        elif s.kind == "shift-evolution":
            t = next((d.t_max_s for d in out.dims if s.name in d.steps), float(s.t_max_s))
            if s.within:
                duration = max(0.0, t - float(ep.delays[model.step(s.within).delay]))
            elif s.mode == "constant-time":
                duration = float(s.fixed_delay_s)
            else:
                duration = t
        elif s.delay is not None:
            value = ep.delays.get(s.delay)
            duration = 0.0 if value is None else float(value)
        else:
            duration = float(s.fixed_delay_s or 0.0)
        if s.kind != "detect":
            seq += duration
        # An evolution inside a transfer period (semi-constant time) lengthens that period, decoupling included.
        if _decouples_h_or_c(model.step(s.within) if s.within else s):
            hp += duration
    out.sequence_s, out.high_power_s = seq, hp
    return out


def _trosy_counterpart(model):
    """The registered TROSY-only model with the same dimensions and start as ``model`` (the 2D TROSY for the
    HSQC), for a calibration recorded as TROSY on a model without a TROSY version."""
    from backbone.experiments import registered_experiments

    for m in registered_experiments().values():
        if m.trosy_only and m.dimensions == model.dimensions and m.start == model.start:
            return m
    raise BackboneError(
        f"spectrometer.calibration: trosy = true, but {model.name} has no TROSY version and no TROSY-only model "
        f"with dimensions {list(model.dimensions)} is registered; set trosy = false or name a TROSY model"
    )


def _plan_call(choice, tau_c_ns, fields, names, trosy, protein):
    from backbone.plan import plan

    return plan(
        tau_c_ns=tau_c_ns,
        field_mhz=np.asarray(fields, dtype=float),
        labeling=choice.scheme,
        deuteration=choice.deuteration,
        s2=protein.s2,
        tau_e_ns=protein.tau_e_ns,
        experiments=names,
        trosy=trosy,
    )


def _recovery_rate(choice, tau_c_ns, fields, protein):
    """Amide-1H recovery rate R1_recovery [s⁻¹] per field."""
    from backbone.relaxation import relaxation_rates

    rates = relaxation_rates(
        tau_c_ns * 1e-9,
        proton_mhz=np.asarray(fields, dtype=float),
        labeling=choice.load(),
        s2=protein.s2,
        tau_e=protein.tau_e_ns * 1e-9,
    )
    return np.broadcast_to(np.asarray(rates.nuclei["H"]["R1_recovery"], dtype=float), (len(fields),))


def _recycle(goals, r1, acq_s):
    from backbone.sensitivity import recycle_delay

    if goals.recycle_delay_s is not None:
        return float(goals.recycle_delay_s), "goals.recycle_delay_s"
    return float(recycle_delay(r1, acquisition_s=acq_s)), "1.26 T1 of the amide 1H recovery, minus the acquisition"


def _acquisition(dims, acq_s, recycle_s, r1):
    """Acquisition record for the time arithmetic: decay already in the throughput (dimension rates 0)."""
    from backbone.sensitivity import Acquisition, IndirectDimension

    return Acquisition(
        acquisition_s=acq_s,
        recycle_s=recycle_s,
        dimensions=tuple(IndirectDimension(d.t_max_s, d.spectral_width_hz, 0.0) for d in dims),
        detection_rate=0.0,
        recovery_rate=r1,
    )


def _calibration_point(scenario) -> CalibrationPoint | None:
    from backbone.experiments import load_experiment, registered_experiments
    from backbone.plan import plan

    cal = scenario.spectrometer.calibration
    if cal is None:
        return None
    try:
        model = load_experiment(cal.experiment)
    except BackboneError as err:
        raise BackboneError(
            f"spectrometer.calibration.experiment = {cal.experiment!r} is not an experiment model; registered: "
            f"{', '.join(registered_experiments())}"
        ) from err
    trosy = bool(cal.trosy)
    if trosy and not model.trosy_capable:
        model = _trosy_counterpart(model)
    tau_c_ns, _ = _tau_c(scenario, cal.temperature_k)
    result = plan(
        tau_c_ns=tau_c_ns,
        field_mhz=cal.field_mhz,
        labeling=cal.labeling.scheme,
        deuteration=cal.labeling.deuteration,
        s2=scenario.protein.s2,
        tau_e_ns=scenario.protein.tau_e_ns,
        experiments=[model.name],
        trosy=trosy,
    ).experiments[0]
    throughput = abs(float(result.objective_value))
    if scenario.sample.solvent == "D2O" and model.amide_detected:
        result = dataclasses.replace(result, feasible=False, reason="the sample is in D2O: no amide protons")
    if not result.feasible or not throughput > 0:
        raise BackboneError(
            f"spectrometer.calibration: {model.name} gives no signal under {cal.labeling} at {cal.field_mhz:g} MHz "
            f"({result.reason or 'zero throughput'}); it cannot anchor the sensitivity"
        )
    r1 = float(_recovery_rate(cal.labeling, tau_c_ns, [cal.field_mhz], scenario.protein)[0])
    acq_s = float(model.steps[-1].t_max_s)
    recycle_s, _ = _recycle(scenario.goals, r1, acq_s)
    ev = _evaluate(model, _slice_plan(result, 0), cal.field_mhz, _NoGoals())
    acquisition = _acquisition(ev.dims, acq_s, recycle_s, r1)
    return CalibrationPoint(
        experiment=cal.experiment,
        model=model.name,
        trosy=trosy,
        labeling=str(cal.labeling),
        field_mhz=float(cal.field_mhz),
        tau_c_ns=float(tau_c_ns),
        concentration_mm=float(cal.concentration_mm),
        temperature_k=float(cal.temperature_k),
        signal_to_noise=float(cal.signal_to_noise),
        time_s=float(cal.time_min) * 60.0,
        throughput=throughput,
        recycle_s=recycle_s,
        acquisition_s=acq_s,
        sensitivity_factor=float(acquisition.sensitivity_factor),
        acquisition=acquisition,
    )


class _NoGoals:
    """Goals without resolution wishes: the calibration is taken at its model's default sampling."""

    t_max_s: Mapping = MappingProxyType({})


# ---------------------------------------------------------------------------------------------------------
# The planner
# ---------------------------------------------------------------------------------------------------------


def plan_scenario(scenario, *, experiments=None, labelings=None, fields=None) -> ScenarioPlan:
    """Plan every candidate labeling × field × experiment of ``scenario`` (module docstring).

    Parameters
    ----------
    scenario : backbone.scenario.Scenario
        From :func:`backbone.scenario.load_scenario` (or built in Python).
    experiments : list of str, optional
        Experiment names (or model paths) instead of ``candidates.experiments``.
    labelings : list of str or LabelingChoice, optional
        Labeling choices instead of ``candidates.labeling``.
    fields : list of float [MHz], optional
        1H frequencies instead of ``spectrometer.fields_mhz``.

    Returns
    -------
    ScenarioPlan

    Raises
    ------
    BackboneError
        An unknown experiment or labeling, a field outside the allowed range, a calibration experiment that is
        not a registered model or gives no signal, a τc estimate outside the model's range.
    """
    from backbone.scenario import Scenario
    from backbone.sensitivity import DEFAULT_DUTY_LIMIT, duty_cycle_warning, measurement_time, minimum_time, probe_factor

    if not isinstance(scenario, Scenario):
        raise BackboneError(f"plan_scenario needs a Scenario (backbone.scenario.load_scenario), got {scenario!r}")
    choices = _labeling_choices(scenario, labelings)
    models = _experiment_models(scenario, experiments)
    mhz = _fields(scenario, fields)
    goals = scenario.goals
    tau_c_ns, tau_c_source = _tau_c(scenario, scenario.sample.temperature_k)
    calibration = _calibration_point(scenario)
    cal = scenario.spectrometer.calibration
    duty_limit = float(goals.high_power_duty_limit if goals.high_power_duty_limit is not None else DEFAULT_DUTY_LIMIT.value)
    probe = probe_factor(scenario.spectrometer.probe, scenario.spectrometer.probe)
    d2o = scenario.sample.solvent == "D2O"
    names = [m.name for m in models]
    mode = scenario.candidates.trosy
    modes = (False, True) if mode == "auto" else (bool(mode),)

    rows = []
    for choice in choices:
        plans = {m: _plan_call(choice, tau_c_ns, mhz, names, m, scenario.protein) for m in modes}
        r1 = _recovery_rate(choice, tau_c_ns, mhz, scenario.protein)
        for k, f in enumerate(mhz):
            for j, model in enumerate(models):
                variants = []
                for m in modes:
                    ep = _slice_plan(plans[m].experiments[j], k)
                    if d2o and model.amide_detected:
                        ep = dataclasses.replace(ep, feasible=False, reason="the sample is in D2O: amide protons are exchanged for deuterons (no amide H)")
                    variants.append((ep, _evaluate(model, ep, f, goals)))
                if len(variants) == 2 and model.trosy_capable and not model.trosy_only:
                    (ep_p, ev_p), (ep_t, ev_t) = variants
                    use_t = ev_t.limiting_amp > ev_p.limiting_amp
                    ep, ev = (ep_t, ev_t) if use_t else (ep_p, ev_p)
                    if ev_p.limiting_amp > 0 and ev_t.limiting_amp > 0:
                        ratio = ev_t.limiting_amp / ev_p.limiting_amp
                        trosy_choice = (
                            f"auto: {'TROSY' if use_t else 'plain'} (TROSY/plain limiting throughput {ratio:.2f})"
                        )
                    else:
                        trosy_choice = f"auto: {'TROSY' if use_t else 'plain'} (other version infeasible)"
                else:
                    ep, ev = variants[0]
                    if model.trosy_only:
                        trosy_choice = "TROSY-only model"
                    elif not model.trosy_capable:
                        trosy_choice = "plain (the model has no TROSY version)"
                    else:
                        trosy_choice = f"fixed by candidates.trosy = {str(bool(mode)).lower()}"
                feasible = bool(ep.feasible) and ev.limiting is not None
                recycle_s, recycle_source = _recycle(goals, float(r1[k]), ev.acq_s)
                acquisition = _acquisition(ev.dims, ev.acq_s, recycle_s, float(r1[k]))
                t_min = float(
                    minimum_time([d.increments for d in ev.dims], recycle_s=recycle_s, acquisition_s=ev.acq_s)
                )
                time = None
                if calibration is not None and feasible:
                    field_ratio = None if math.isclose(f, cal.field_mhz) else f / cal.field_mhz
                    time = measurement_time(
                        calibration.signal_to_noise,
                        calibration.time_s,
                        goals.target_signal_to_noise,
                        acquisition,
                        calibration.acquisition,
                        concentration_ratio=scenario.sample.concentration_mm / calibration.concentration_mm,
                        throughput_ratio=ev.limiting_amp / calibration.throughput,
                        field_ratio=field_ratio,
                        probe_ratio=probe,
                    )
                scan_s = recycle_s + ev.sequence_s + ev.acq_s
                duty = ev.high_power_s / scan_s if feasible else None
                rows.append(
                    ExperimentTime(
                        experiment=model.name,
                        labeling=str(choice),
                        labeling_choice=choice,
                        field_mhz=f,
                        tau_c_ns=float(tau_c_ns),
                        trosy=bool(ep.trosy),
                        trosy_choice=trosy_choice,
                        plan=ep,
                        feasible=feasible,
                        reason=ep.reason if ep.reason or feasible else "no needed peak is observable",
                        relative_sensitivity=float(ep.relative_sensitivity) if feasible else 0.0,
                        needed_peaks=_needed(model, ep.objective),
                        limiting_peak=ev.limiting,
                        limiting_throughput=float(ev.limiting_amp),
                        peak_sampling=ev.peak_sampling,
                        dimensions=ev.dims,
                        recycle_s=recycle_s,
                        recycle_source=recycle_source,
                        acquisition_s=ev.acq_s,
                        sequence_s=ev.sequence_s,
                        minimum_time_s=t_min,
                        time=time,
                        high_power_s=ev.high_power_s if feasible else None,
                        duty_cycle=duty,
                        duty_limit=duty_limit,
                        duty_warning=None if duty is None else duty_cycle_warning(duty, duty_limit),
                    )
                )
    notes = [] if calibration is not None else [_NO_CALIBRATION]
    return ScenarioPlan(
        scenario=scenario,
        tau_c_ns=float(tau_c_ns),
        tau_c_source=tau_c_source,
        calibration=calibration,
        rows=tuple(rows),
        labelings=tuple(str(c) for c in choices),
        fields_mhz=mhz,
        experiments=tuple(names),
        target_signal_to_noise=float(goals.target_signal_to_noise),
        time_budget_h=float(goals.time_budget_h),
        notes=tuple(notes),
    )


# ---------------------------------------------------------------------------------------------------------
# Text
# ---------------------------------------------------------------------------------------------------------


def _hours(seconds) -> str:
    if seconds is None:
        return "-"
    h = seconds / _HOUR
    return f"{h * 60:.0f} min" if h < 1 else f"{h:.1f} h"


def scenario_plan_table(plan: ScenarioPlan) -> str:
    """Readable text: per labeling and field, each experiment with its relative sensitivity, time, what limits
    it and feasibility; then notes, duty-cycle warnings and the safety caution. Pure (returns the string)."""
    if not isinstance(plan, ScenarioPlan):
        raise BackboneError(f"scenario_plan_table needs a ScenarioPlan, got {plan!r}")
    sc = plan.scenario
    lines = [
        f"{sc.protein.name}: tau_c {plan.tau_c_ns:.1f} ns ({plan.tau_c_source}); target S/N "
        f"{plan.target_signal_to_noise:g}; budget {plan.time_budget_h:g} h",
    ]
    if plan.calibration is not None:
        c = plan.calibration
        lines.append(
            f"calibration: {c.model}{' (TROSY)' if c.trosy else ''}, {c.labeling}, {c.field_mhz:g} MHz, "
            f"{c.concentration_mm:g} mM: S/N {c.signal_to_noise:g} in {c.time_s / 60:g} min"
        )
    header = f"  {'experiment':<12} {'TROSY':<5} {'rel. sens.':>10} {'time':>9} {'minimum':>9}  {'limited by':<11} {'duty':>6}  feasibility"
    warnings = []
    for lab in plan.labelings:
        for f in plan.fields_mhz:
            lines.append("")
            lines.append(f"{lab} at {f:g} MHz")
            lines.append(header)
            for r in plan.rows:
                if r.labeling != lab or not math.isclose(r.field_mhz, f):
                    continue
                rel = f"{r.relative_sensitivity:.3f}" if r.feasible and math.isfinite(r.relative_sensitivity) else "-"
                duty = "-" if r.duty_cycle is None else f"{r.duty_cycle:.1%}"
                status = "ok" if r.feasible else f"infeasible: {r.reason}"
                if r.feasible and r.reason:
                    status = f"ok ({r.reason})"
                lines.append(
                    f"  {r.experiment:<12} {'yes' if r.trosy else 'no':<5} {rel:>10} {_hours(r.time_s):>9} "
                    f"{_hours(r.minimum_time_s if r.feasible else None):>9}  {r.limited_by or '-':<11} {duty:>6}  {status}"
                )
                if r.duty_warning:
                    warnings.append(r)
    lines.append("")
    for n in plan.notes:
        lines.append(f"Note: {n}")
    if warnings:
        from backbone.sensitivity import duty_cycle_warning

        worst = max(warnings, key=lambda r: r.duty_cycle)
        listed = "; ".join(f"{r.experiment} ({r.labeling}, {r.field_mhz:g} MHz)" for r in warnings)
        lines.append(f"Warning: {duty_cycle_warning(worst.duty_cycle, worst.duty_limit)}. Above the limit: {listed}")
    lines.append(SAFETY_CAUTION)
    return "\n".join(lines)
