"""Labeling and field comparison for a scenario, and the τc above which deuteration and TROSY pay off.

:func:`compare_scenario` answers two questions of a :class:`~backbone.scenario.Scenario`:

1. **The table** — every candidate labeling scheme × candidate experiment × spectrometer field at the protein's
   τc (given in the scenario, or estimated from its size at the sample's temperature and solvent): the
   experiment's relative sensitivity (against the 2D 1H-15N HSQC of the same sample and field), its objective
   throughput, the TROSY version chosen (the scenario's ``candidates.trosy``) and, when
   :func:`backbone.planning.plan_scenario` is available and the scenario has a calibration, the measurement
   time it reports.
2. **The crossovers** — per experiment and field, on a dense τc grid:

   * *deuteration*: the τc above which the perdeuterated scheme ``2h13c15n`` (default level) gives more
     signal-to-noise per square root of measurement time than ``13c15n`` (both plain versions, so TROSY does not
     mix in), times an optional margin ``deuteration_gain`` (default 1);
   * *TROSY*: the τc above which the TROSY version gives more S/N per √time than the plain version, in
     ``2h13c15n`` (margin ``trosy_gain``, default 1).

   A crossover is found where ``ln(a) − ln(gain·b)`` changes sign from negative to positive between two grid
   points (a: the candidate, b: the alternative), by linear interpolation in τc; vectorized over the grid and
   the fields (:func:`find_crossover`). It is None, with a reason, when the candidate is already ahead at the
   low end of the grid, never gets ahead, or one of the walks is infeasible.

Why per square root of time
---------------------------
Per transfer, perdeuteration never costs signal: removing 1H–13C and 1H–1H dipolar relaxation only slows
decays, so ``2h13c15n`` has the larger throughput at every τc. What it costs at the spectrometer is the recycle:
with the methyl and Hα protons replaced by deuterons, the amide protons lose their fast-relaxing spin-diffusion
partners and recover more slowly (longer 1H T1, the relaxation engine's ``R1_recovery``), so each scan must wait
longer. The quantity a spectroscopist compares is the S/N reached per unit measurement time; S/N grows with √t
(noise adds incoherently over scans; Ernst, Bodenhausen & Wokaun, Principles of NMR in One and Two Dimensions,
1987, ch. 4), so the figure of merit is (:func:`sensitivity_per_root_time`)

    S/N / √t  ∝  A · (1 − e^(−R1·t_r)) · √(t_acq / t_scan),    t_scan = t_rec + t_acq + t_seq,

with A the objective throughput (:func:`backbone.plan.plan`), R1 the amide-1H ``R1_recovery`` of the labeling at
that τc and field, 90° excitation (steady state 1 − e^(−R1 t_r), t_r = t_rec + t_acq; Ernst et al. 1987), the
recycle delay t_rec at its optimum 1.2564/R1 − t_acq (:func:`backbone.sensitivity.recycle_delay`; Ernst &
Anderson, Rev. Sci. Instrum. 37, 93, 1966, from memory), t_acq the model's direct acquisition time and t_seq the
duration of the pulse sequence at the optimized delays. The factor √t_acq is the same for every labeling and
TROSY version of one experiment, so it does not move a crossover; it is kept so that the numbers are the
acquisition part of :mod:`backbone.planning`'s Q factor (√(t_acq/t_scan) times the steady state).

Normalization: the column ``sensitivity_per_root_time`` (in the table and the curves) is this quantity divided by
the same quantity for the 2D 1H-15N HSQC of the *protonated* sample ``13c15n`` (plain, its own optimal recycle)
at the same τc and field. So 1 means "as much S/N per √time as the protonated HSQC", and values of the two
labelings of one experiment can be compared directly.

TROSY and its plain version are recorded on the same sample: R1, the optimal recycle and the steady state are
the same and cancel from their ratio; what is left is the throughput ratio and the (small) difference in
sequence length. Longitudinal-relaxation enhancement and water flip-back, which shorten the recycle of some
TROSY-type sequences in practice, are not modeled.

"Pays off" for TROSY is gain 1 (:data:`TROSY_GAIN`): the same sample gives more S/N per √time. For
perdeuteration it is a gain of 2 in S/N per √time (:data:`DEUTERATION_GAIN`), a four times shorter measurement:
the physics alone (break-even, ``deuteration_gain=1``) favours the deuterated sample already at a few ns,
because its CA and amide-1H coherences relax more slowly even there, but a perdeuterated sample costs far more
to make (expression in D2O, deuterated glucose, lower yields, amide back-exchange) and that cost is paid back
only by a large saving in time. With the margin of 2 the HNCA crossover at 800 MHz falls near 12-13 ns, about
25 kDa, where common practice places it; Cβ experiments cross earlier. Pass ``deuteration_gain=1`` for the
break-even point.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from backbone.constants import Constant
from backbone.errors import BackboneError

__all__ = [
    "DEUTERATION_GAIN",
    "TROSY_GAIN",
    "DEFAULT_TAU_C_GRID_NS",
    "PROTONATED",
    "PERDEUTERATED",
    "ComparisonRow",
    "Crossover",
    "Comparison",
    "REFERENCE_EXPERIMENT",
    "find_crossover",
    "sensitivity_per_root_time",
    "sequence_duration",
    "crossover_curves",
    "compare_scenario",
    "comparison_table",
]

#: Ratio of S/N per √time, 2h13c15n / 13c15n, at which deuteration is counted as paying off (module docstring).
DEUTERATION_GAIN = Constant(
    "S/N-per-root-time ratio at which perdeuteration pays off",
    2.0,
    "1",
    "planning convention of backbone.compare: a four times shorter measurement pays for the cost of a "
    "perdeuterated sample (common practice places the HNCA crossover near 25-30 kDa); 1 is the break-even",
)
#: Ratio of S/N per √time, TROSY / plain, at which TROSY is counted as paying off.
TROSY_GAIN = Constant(
    "S/N-per-root-time ratio at which TROSY pays off", 1.0, "1", "TROSY has no cost besides the choice"
)

#: Experiment and scheme the per-√time quantity is normalized to (module docstring).
REFERENCE_EXPERIMENT = "HSQC"

#: Default dense τc grid [ns] for the crossovers: geometric, 1–100 ns.
DEFAULT_TAU_C_GRID_NS = np.geomspace(1.0, 100.0, 97)

#: Scheme ids compared for the deuteration crossover (ARCHITECTURE.md labeling ids).
PROTONATED = "13c15n"
PERDEUTERATED = "2h13c15n"

_KINDS = ("deuteration", "trosy")


# ---------------------------------------------------------------------------------------------------------
# Crossover search (vectorized)
# ---------------------------------------------------------------------------------------------------------


def find_crossover(x, a, b, *, gain: float = 1.0):
    """First τc (along axis 0) at which ``a`` gets ahead of ``gain · b``, by sign change and linear interpolation.

    Parameters
    ----------
    x : 1-D array, increasing (length n) — e.g. τc [ns].
    a, b : arrays of shape (n, ...) — positive quantities compared (candidate and alternative); points where
        either is not positive and finite are ignored.
    gain : float > 0 — the ratio a / b that counts as "ahead".

    Returns
    -------
    (x_cross, status) : arrays of shape (...)
        ``x_cross``: interpolated x of the first upward crossing of g = ln a − ln(gain·b), NaN where there is
        none; ``status``: ``"crossing"``, ``"ahead"`` (g > 0 at the first usable point and no upward crossing),
        ``"behind"`` (g ≤ 0 at every usable point) or ``"invalid"`` (no usable point).
    """
    x = np.asarray(x, dtype=float)
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    if x.ndim != 1 or x.size < 2 or np.any(np.diff(x) <= 0):
        raise BackboneError("find_crossover: x must be a strictly increasing 1-D grid of at least two points")
    if not gain > 0:
        raise BackboneError(f"find_crossover: gain must be > 0, got {gain!r}")
    a, b = np.broadcast_arrays(a, b)
    if a.shape[0] != x.size:
        raise BackboneError(f"find_crossover: a and b need {x.size} points along the first axis, got {a.shape[0]}")
    usable = np.isfinite(a) & np.isfinite(b) & (a > 0) & (b > 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        g = np.where(usable, np.log(np.where(usable, a, 1.0)) - np.log(gain * np.where(usable, b, 1.0)), np.nan)
    g0, g1 = g[:-1], g[1:]
    up = (g0 <= 0) & (g1 > 0)  # NaN compares False: only pairs of usable neighbours
    has = up.any(axis=0)
    k = np.argmax(up, axis=0)
    g0k = np.take_along_axis(g0, k[None, ...], axis=0)[0]
    g1k = np.take_along_axis(g1, k[None, ...], axis=0)[0]
    x0, x1 = x[k], x[k + 1]
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.where(g1k > g0k, -g0k / (g1k - g0k), 0.0)
    x_cross = np.where(has, x0 + frac * (x1 - x0), np.nan)
    any_usable = usable.any(axis=0)
    first = np.argmax(usable, axis=0)
    g_first = np.take_along_axis(g, first[None, ...], axis=0)[0]
    status = np.where(
        has,
        "crossing",
        np.where(~any_usable, "invalid", np.where(g_first > 0, "ahead", "behind")),
    ).astype(object)
    return x_cross, status


# ---------------------------------------------------------------------------------------------------------
# Signal-to-noise per square root of time
# ---------------------------------------------------------------------------------------------------------


def sensitivity_per_root_time(throughput, r1_recovery, *, acquisition_s, sequence_s=0.0):
    """S/N per √(measurement time) of an experiment with the recycle delay at its optimum, up to a constant [s^-1/2].

    value = |A| · (1 − e^(−R1·t_r)) · √(t_acq / t_scan),  t_r = t_rec + t_acq,  t_scan = t_rec + t_acq + t_seq,

    with t_rec = :func:`backbone.sensitivity.recycle_delay` (1.2564/R1 − t_acq, at least 0; Ernst & Anderson
    1966, from memory) and the steady state of 90° excitation, :func:`backbone.sensitivity.steady_state_factor`
    (Ernst, Bodenhausen & Wokaun 1987). Divide two values to compare experiments or samples (module docstring).

    throughput : float or array [1] — objective throughput A (its magnitude counts); NaN passes through.
    r1_recovery : float or array [s⁻¹] — amide-1H recovery rate (``nuclei["H"]["R1_recovery"]``), > 0.
    acquisition_s : float or array [s] — direct acquisition time, > 0.
    sequence_s : float or array [s] — duration of the pulse sequence before acquisition, >= 0 (NaN passes through).
    Arrays broadcast; returns an array (a float for scalar inputs).
    """
    from backbone.sensitivity import recycle_delay, steady_state_factor

    a = np.abs(np.asarray(throughput, dtype=float))
    r1 = np.asarray(r1_recovery, dtype=float)
    acq = np.asarray(acquisition_s, dtype=float)
    seq = np.asarray(sequence_s, dtype=float)
    if np.any(~np.isnan(seq) & (seq < 0)):
        raise BackboneError(f"sensitivity_per_root_time: sequence_s must be >= 0 s, got {sequence_s!r}")
    t_rec = np.asarray(recycle_delay(r1, acquisition_s=acq), dtype=float)
    ss = np.asarray(steady_state_factor(t_rec, acq, r1), dtype=float)
    out = a * ss * np.sqrt(acq / (t_rec + acq + seq))
    return out.item() if out.ndim == 0 else out


def _step_seconds(step, delays, host_of):
    """Duration [s] of one non-detect step (array or float; NaN when its delay is unknown)."""
    if step.kind == "shift-evolution":
        if step.within:
            host = delays.get(host_of(step.within).delay)
            return np.maximum(0.0, float(step.t_max_s) - (np.nan if host is None else np.asarray(host, dtype=float)))
        if step.mode == "constant-time":
            return float(step.fixed_delay_s or 0.0)
        return float(step.t_max_s or 0.0)
    if step.delay is not None:
        value = delays.get(step.delay)
        return np.nan if value is None else np.asarray(value, dtype=float) * step.periods
    return float(step.fixed_delay_s or 0.0) * step.periods


def sequence_duration(model, delays):
    """Duration [s] of an experiment's pulse sequence before acquisition: the sum over its non-detect steps.

    A coupling period lasts its delay (``delays[step.delay]``, times the step's number of periods) or its fixed
    length; a real-time shift evolution its ``t_max_s`` (the longest increment); a constant-time evolution its
    fixed period; a semi-constant-time evolution its excess over the host period. Pulses are taken as
    instantaneous. ``model``: an experiment name or model; ``delays``: mapping delay name → value [s] (float or
    array, e.g. :attr:`backbone.plan.ExperimentPlan.delays`). NaN where a needed delay is missing or None.
    """
    from backbone.experiments import load_experiment

    model = load_experiment(model)
    total = 0.0
    for step in model.steps:
        if step.kind != "detect":
            total = total + _step_seconds(step, delays, model.step)
    return total


# ---------------------------------------------------------------------------------------------------------
# Records
# ---------------------------------------------------------------------------------------------------------


def _f(v):
    if v is None:
        return None
    v = float(v)
    return v if math.isfinite(v) else None


@dataclass(frozen=True)
class ComparisonRow:
    """One labeling × experiment × field cell at the scenario's τc.

    relative_sensitivity [1] against the HSQC of the same sample; objective_throughput [1]; trosy: the version
    used; measurement_time_h [h] from :mod:`backbone.planning` or None; sensitivity_per_root_time [1]: S/N per
    √time relative to the protonated (13c15n) HSQC at the same τc and field (module docstring), None where
    infeasible; recycle_s [s]: the optimal recycle delay it assumes; r1_recovery [s⁻¹]: the amide-1H recovery
    rate of the sample.
    """

    labeling: str
    scheme: str
    deuteration: float | None
    experiment: str
    field_mhz: float
    trosy: bool
    relative_sensitivity: float
    objective_throughput: float
    feasible: bool
    reason: str
    measurement_time_h: float | None = None
    sensitivity_per_root_time: float | None = None
    recycle_s: float | None = None
    r1_recovery: float | None = None

    def as_dict(self) -> dict:
        return {
            "labeling": self.labeling,
            "scheme": self.scheme,
            "deuteration": _f(self.deuteration),
            "experiment": self.experiment,
            "field_mhz": self.field_mhz,
            "trosy": self.trosy,
            "relative_sensitivity": _f(self.relative_sensitivity),
            "objective_throughput": _f(self.objective_throughput),
            "feasible": self.feasible,
            "reason": self.reason,
            "measurement_time_h": _f(self.measurement_time_h),
            "sensitivity_per_root_time": _f(self.sensitivity_per_root_time),
            "recycle_s": _f(self.recycle_s),
            "r1_recovery": _f(self.r1_recovery),
        }


@dataclass(frozen=True)
class Crossover:
    """τc [ns] above which ``kind`` ("deuteration" or "trosy") pays off for ``experiment`` at ``field_mhz``;
    None with ``reason`` when there is no crossover in the grid. ``gain``: the ratio of S/N per √time required
    (module docstring)."""

    kind: str
    experiment: str
    field_mhz: float
    tau_c_ns: float | None
    gain: float
    reason: str = ""

    def as_dict(self) -> dict:
        return {
            "kind": self.kind,
            "experiment": self.experiment,
            "field_mhz": self.field_mhz,
            "tau_c_ns": _f(self.tau_c_ns),
            "gain": self.gain,
            "reason": self.reason,
        }


@dataclass(frozen=True)
class Comparison:
    """Result of :func:`compare_scenario`.

    ``curves`` is the long-format frame the crossovers were found on (:func:`crossover_curves`: the columns of
    :func:`backbone.sweep.sweep` plus r1_recovery, recycle_s, acquisition_s, sequence_s and
    sensitivity_per_root_time), for plotting (:func:`backbone.plots.plot_throughput_vs_tau_c`).
    """

    scenario: str
    tau_c_ns: float
    tau_c_source: str
    fields_mhz: tuple[float, ...]
    labelings: tuple[str, ...]
    experiments: tuple[str, ...]
    trosy: object
    rows: tuple[ComparisonRow, ...]
    crossovers: tuple[Crossover, ...]
    tau_c_grid_ns: tuple[float, ...]
    curves: object = None
    times_source: str = ""

    def crossover(self, kind: str, experiment: str, field_mhz: float) -> Crossover:
        """The crossover of ``kind`` for ``experiment`` at ``field_mhz``."""
        for c in self.crossovers:
            if c.kind == kind and c.experiment.lower() == str(experiment).lower() and c.field_mhz == float(field_mhz):
                return c
        raise BackboneError(
            f"comparison has no {kind!r} crossover for {experiment!r} at {field_mhz!r} MHz; kinds {', '.join(_KINDS)}, "
            f"experiments {', '.join(self.experiments)}, fields {', '.join(f'{f:g}' for f in self.fields_mhz)} MHz"
        )

    def as_dict(self) -> dict:
        """Plain data for JSON: conditions, table rows and crossovers (None as null)."""
        return {
            "scenario": self.scenario,
            "tau_c_ns": self.tau_c_ns,
            "tau_c_source": self.tau_c_source,
            "fields_mhz": list(self.fields_mhz),
            "labelings": list(self.labelings),
            "experiments": list(self.experiments),
            "trosy": self.trosy,
            "times_source": self.times_source,
            "table": [r.as_dict() for r in self.rows],
            "crossovers": [c.as_dict() for c in self.crossovers],
            "tau_c_grid_ns": {"low": self.tau_c_grid_ns[0], "high": self.tau_c_grid_ns[-1], "points": len(self.tau_c_grid_ns)},
        }

    def to_frame(self, kind: str = "table"):
        """The table (``kind="table"``) or the crossovers (``"crossovers"``) as a pandas DataFrame."""
        import pandas as pd

        if kind == "table":
            return pd.DataFrame([r.as_dict() for r in self.rows])
        if kind == "crossovers":
            return pd.DataFrame([c.as_dict() for c in self.crossovers])
        raise BackboneError(f"to_frame: kind {kind!r} is not allowed; use 'table' or 'crossovers'")


# ---------------------------------------------------------------------------------------------------------
# Crossover curves and records
# ---------------------------------------------------------------------------------------------------------


def _grid(tau_c_grid_ns) -> np.ndarray:
    from backbone.units import TAU_C_NS

    grid = DEFAULT_TAU_C_GRID_NS if tau_c_grid_ns is None else np.asarray(tau_c_grid_ns, dtype=float)
    if grid.ndim != 1 or grid.size < 2 or np.any(np.diff(grid) <= 0):
        raise BackboneError(
            f"tau_c_grid_ns must be a strictly increasing list of at least two values [ns], got {tau_c_grid_ns!r}"
        )
    TAU_C_NS.check(grid, where="tau_c_grid_ns")
    return grid


def _recovery_rates(scheme_id, grid, fields, s2, tau_e_ns):
    """Amide-1H R1_recovery [s⁻¹] of a scheme on the grid, shape (n_tau, n_field)."""
    from backbone.labeling import load_scheme
    from backbone.relaxation import relaxation_rates

    rates = relaxation_rates(
        grid[:, None] * 1e-9, proton_mhz=np.asarray(fields, dtype=float)[None, :], labeling=load_scheme(scheme_id),
        s2=s2, tau_e=tau_e_ns * 1e-9,
    )
    return np.broadcast_to(np.asarray(rates.nuclei["H"]["R1_recovery"], dtype=float), (grid.size, len(fields)))


def _block_per_root_time(sel, r1, delay_names):
    """Un-normalized S/N per √time, recycle, acquisition and sequence [s] of one block of sweep rows."""
    from backbone.experiments import load_experiment
    from backbone.sweep import delay_columns

    model = load_experiment(sel["experiment"].iloc[0])
    delays = {d: sel[delay_columns(d)[0]].to_numpy(dtype=float) * 1e-3 for d in delay_names if delay_columns(d)[0] in sel}
    seq = np.broadcast_to(np.asarray(sequence_duration(model, delays), dtype=float), r1.shape)
    acq = float(model.steps[-1].t_max_s)
    from backbone.sensitivity import recycle_delay

    value = sensitivity_per_root_time(sel["objective_throughput"].to_numpy(dtype=float), r1, acquisition_s=acq, sequence_s=seq)
    return value, np.asarray(recycle_delay(r1, acquisition_s=acq), dtype=float), acq, seq


def crossover_curves(experiments, fields_mhz, tau_c_grid_ns=None, *, s2: float = 1.0, tau_e_ns: float = 0.0):
    """The curve sets the crossovers need on the τc grid × fields, as one long frame: 13c15n plain, 2h13c15n
    plain and 2h13c15n TROSY (TROSY rows only for experiments with a TROSY version).

    Columns: those of :func:`backbone.sweep.sweep`, plus ``r1_recovery`` [s⁻¹] (amide-1H recovery rate of the
    sample), ``recycle_s``, ``acquisition_s``, ``sequence_s`` [s] and ``sensitivity_per_root_time`` [1]: S/N per
    √time relative to the 13c15n HSQC at the same τc and field (module docstring; NaN where infeasible).
    Vectorized: one plan() per labeling and TROSY mode over the whole grid, one rate call per labeling.
    """
    import pandas as pd

    from backbone.sweep import sweep

    grid = _grid(tau_c_grid_ns)
    fields = np.atleast_1d(np.asarray(fields_mhz, dtype=float))
    common = dict(tau_c_ns=grid, field_mhz=fields, experiments=experiments, s2=s2, tau_e_ns=tau_e_ns)
    plain = sweep(labelings=[PROTONATED, PERDEUTERATED], trosy=False, **common)
    trosy = sweep(labelings=[PERDEUTERATED], trosy=True, **common)
    plain_keys = set(zip(plain["experiment"], plain["labeling"], plain["trosy"]))
    extra = trosy[[k not in plain_keys for k in zip(trosy["experiment"], trosy["labeling"], trosy["trosy"])]]
    frame = pd.concat([plain, extra], ignore_index=True)
    reference = sweep(labelings=[PROTONATED], trosy=False, **{**common, "experiments": [REFERENCE_EXPERIMENT]})

    r1 = {lab: _recovery_rates(lab, grid, fields, s2, tau_e_ns).ravel() for lab in (PROTONATED, PERDEUTERATED)}
    names = [c[len("delay_"):-len("_ms")] for c in frame.columns if c.startswith("delay_") and c.endswith("_ms")]
    ref_names = [c[len("delay_"):-len("_ms")] for c in reference.columns if c.startswith("delay_") and c.endswith("_ms")]
    ref_value, *_ = _block_per_root_time(reference, r1[PROTONATED], ref_names)

    n = grid.size * fields.size
    columns = {k: np.full(len(frame), np.nan) for k in ("r1_recovery", "recycle_s", "acquisition_s", "sequence_s", "sensitivity_per_root_time")}
    # A sweep lays out each experiment × labeling × TROSY block as n consecutive rows in C order of (τc, field).
    for start in range(0, len(frame), n):
        sel = frame.iloc[start:start + n]
        rate = r1[str(sel["labeling"].iloc[0])]
        value, recycle, acq, seq = _block_per_root_time(sel, rate, names)
        rows = slice(start, start + n)
        columns["r1_recovery"][rows] = rate
        columns["recycle_s"][rows] = recycle
        columns["acquisition_s"][rows] = acq
        columns["sequence_s"][rows] = seq
        with np.errstate(divide="ignore", invalid="ignore"):
            columns["sensitivity_per_root_time"][rows] = np.where(sel["feasible"].to_numpy(bool), value / ref_value, np.nan)
    return frame.assign(**columns)


def _curve(frame, experiment, labeling, trosy, grid, fields, column="sensitivity_per_root_time"):
    """One column (n_tau, n_field) of one experiment/labeling/TROSY mode, or None; plus feasibility."""
    sel = frame[(frame["experiment"] == experiment) & (frame["labeling"] == labeling) & (frame["trosy"] == trosy)]
    if sel.empty:
        return None, "", True
    # A sweep lays out each experiment's grid in C order of (tau_c, field).
    values = sel[column].to_numpy(dtype=float).reshape(len(grid), len(fields))
    return values, str(sel["reason"].iloc[0]), bool(sel["feasible"].iloc[0])


def _describe(status, kind, experiment, field, grid, gain, who) -> str:
    better, worse = who
    ratio = f"{gain:g}x" if gain != 1 else "more than"
    what = "the S/N per square root of time"
    if status == "ahead":
        return (
            f"{better} already gives {ratio} {what} of {worse} at {grid[0]:g} ns, the low end of the "
            f"grid: no crossover in {grid[0]:g}-{grid[-1]:g} ns"
        )
    if status == "behind":
        return f"{better} never gives {ratio} {what} of {worse} in {grid[0]:g}-{grid[-1]:g} ns"
    return f"no usable throughput of {experiment} at {field:g} MHz on the grid"


def _crossovers(frame, experiments, fields, grid, deuteration_gain, trosy_gain):
    from backbone.experiments import load_experiment

    out = []
    for name in experiments:
        model = load_experiment(name)
        a, reason_a, ok_a = _curve(frame, model.name, PERDEUTERATED, model.trosy_only, grid, fields)
        b, reason_b, ok_b = _curve(frame, model.name, PROTONATED, model.trosy_only, grid, fields)
        # Deuteration
        if not ok_a or not ok_b:
            which = [f"infeasible in {s}: {r}" for s, r, ok in ((PERDEUTERATED, reason_a, ok_a), (PROTONATED, reason_b, ok_b)) if not ok]
            out += [Crossover("deuteration", model.name, f, None, float(deuteration_gain), "; ".join(which)) for f in fields]
        else:
            xc, st = find_crossover(grid, a, b, gain=float(deuteration_gain))
            for j, f in enumerate(fields):
                reason = "" if st[j] == "crossing" else _describe(
                    st[j], "deuteration", model.name, f, grid, float(deuteration_gain), (PERDEUTERATED, PROTONATED)
                )
                out.append(Crossover("deuteration", model.name, f, _f(xc[j]), float(deuteration_gain), reason))
        # TROSY
        if model.trosy_only:
            reason = f"{model.name} is a TROSY experiment itself: there is no plain version to compare"
            out += [Crossover("trosy", model.name, f, None, float(trosy_gain), reason) for f in fields]
            continue
        if not model.trosy_capable:
            reason = f"{model.name} has no TROSY version (trosy_capable = false in its model)"
            out += [Crossover("trosy", model.name, f, None, float(trosy_gain), reason) for f in fields]
            continue
        t, reason_t, ok_t = _curve(frame, model.name, PERDEUTERATED, True, grid, fields)
        if not ok_a or t is None:
            reason = f"infeasible in {PERDEUTERATED}: {reason_a or reason_t}"
            out += [Crossover("trosy", model.name, f, None, float(trosy_gain), reason) for f in fields]
            continue
        xc, st = find_crossover(grid, t, a, gain=float(trosy_gain))
        for j, f in enumerate(fields):
            reason = "" if st[j] == "crossing" else _describe(
                st[j], "trosy", model.name, f, grid, float(trosy_gain), ("TROSY", "the plain version")
            )
            out.append(Crossover("trosy", model.name, f, _f(xc[j]), float(trosy_gain), reason))
    return out


# ---------------------------------------------------------------------------------------------------------
# Scenario
# ---------------------------------------------------------------------------------------------------------


def _scenario_tau_c(scenario) -> tuple[float, str]:
    """τc [ns] of the scenario's protein and where it came from."""
    protein, sample = scenario.protein, scenario.sample
    if protein.tau_c_ns is not None:
        return float(protein.tau_c_ns), "given"
    from backbone.conditions import resolve_conditions

    c = resolve_conditions(
        mass_kda=protein.mass_da / 1e3,
        temperature_k=sample.temperature_k,
        solvent=sample.solvent,
        where=scenario.source or "scenario",
    )
    return c.tau_c * 1e9, c.tau_c_source


def _measurement_times(scenario, experiments, fields) -> tuple[dict, str]:
    """Measurement times [h] keyed by (labeling label, field_mhz, experiment upper case) from
    :func:`backbone.planning.plan_scenario`, when that module exists and the scenario has a calibration;
    otherwise ``({}, why not)``. A thin adapter: it reads the rows' ``labeling``, ``field_mhz``, ``experiment``
    and ``time_h`` (the rows of a ScenarioPlan, or the columns of its table)."""
    if scenario.spectrometer.calibration is None:
        return {}, "no calibration in the scenario: measurement times not computed"
    try:
        from backbone.planning import plan_scenario
    except ImportError:
        return {}, "backbone.planning is not available: measurement times not computed"
    result = plan_scenario(scenario, experiments=list(experiments), fields=list(fields))
    rows = getattr(result, "rows", None)
    if rows is None and hasattr(result, "to_frame"):
        rows = [r for _, r in result.to_frame().iterrows()]
    out = {}
    for r in rows or ():
        get = (lambda k, r=r: getattr(r, k, None)) if not hasattr(r, "get") else r.get
        if get("time_h") is None and get("labeling") is None:
            continue
        value = get("time_h")
        key = (str(get("labeling")), float(get("field_mhz")), str(get("experiment")).upper())
        out[key] = None if value is None or not math.isfinite(float(value)) else float(value)
    if not out:
        return {}, "the scenario plan has no measurement times"
    return out, "measurement times from backbone.planning.plan_scenario"


def _time_for(times, choice, field, experiment):
    for key in (str(choice), choice.scheme):
        for (lab, f, name), v in times.items():
            if lab == key and math.isclose(f, float(field)) and name == experiment.upper():
                return v
    return None


def compare_scenario(
    scenario,
    *,
    tau_c_grid_ns=None,
    experiments: Sequence[str] | None = None,
    fields_mhz: Sequence[float] | None = None,
    deuteration_gain: float = DEUTERATION_GAIN.value,
    trosy_gain: float = TROSY_GAIN.value,
) -> Comparison:
    """Compare the scenario's labeling schemes, experiments and fields (module docstring).

    Parameters
    ----------
    scenario : Scenario or path
        A :class:`~backbone.scenario.Scenario` or a scenario file for :func:`~backbone.scenario.load_scenario`.
    tau_c_grid_ns : 1-D array [ns], optional
        Increasing τc grid for the crossovers; default :data:`DEFAULT_TAU_C_GRID_NS` (1–100 ns, 97 points).
    experiments, fields_mhz : optional
        Restrict to these (default the scenario's candidates and fields).
    deuteration_gain, trosy_gain : float > 0
        Ratio of S/N per √time that counts as paying off (defaults :data:`DEUTERATION_GAIN` and
        :data:`TROSY_GAIN`, both 1: the candidate gives more; larger values ask for a margin).
    """
    from backbone.plan import plan
    from backbone.scenario import Scenario, load_scenario

    if not isinstance(scenario, Scenario):
        scenario = load_scenario(scenario)
    for name, value in (("deuteration_gain", deuteration_gain), ("trosy_gain", trosy_gain)):
        if not (isinstance(value, (int, float)) and math.isfinite(value) and value > 0):
            raise BackboneError(f"compare: {name} must be a number > 0, got {value!r}")
    grid = _grid(tau_c_grid_ns)
    names = tuple(scenario.candidates.experiments if experiments is None else experiments)
    if not names:
        raise BackboneError("compare: experiments must name at least one experiment")
    fields = tuple(float(f) for f in (scenario.spectrometer.fields_mhz if fields_mhz is None else fields_mhz))
    if not fields:
        raise BackboneError("compare: fields_mhz must list at least one field")
    tau_c, tau_source = _scenario_tau_c(scenario)
    s2, tau_e = scenario.protein.s2, scenario.protein.tau_e_ns
    times, times_source = _measurement_times(scenario, names, fields)

    from backbone.experiments import load_experiment
    from backbone.relaxation import relaxation_rates
    from backbone.sensitivity import recycle_delay

    def per_root_time(e, scheme):
        """Un-normalized S/N per √time, recycle [s] and R1_recovery [s⁻¹] per field of one ExperimentPlan."""
        rates = relaxation_rates(tau_c * 1e-9, proton_mhz=np.asarray(fields), labeling=scheme, s2=s2, tau_e=tau_e * 1e-9)
        r1 = np.broadcast_to(np.asarray(rates.nuclei["H"]["R1_recovery"], dtype=float), (len(fields),))
        acq = float(load_experiment(e.name).steps[-1].t_max_s)
        seq = sequence_duration(e.name, e.delays)
        value = sensitivity_per_root_time(np.broadcast_to(e.objective_value, (len(fields),)), r1, acquisition_s=acq, sequence_s=seq)
        return np.broadcast_to(value, (len(fields),)), np.asarray(recycle_delay(r1, acquisition_s=acq)), r1

    from backbone.labeling import load_scheme

    reference_scheme = load_scheme(PROTONATED)
    ref = plan(tau_c_ns=tau_c, field_mhz=np.asarray(fields), labeling=reference_scheme, experiments=[REFERENCE_EXPERIMENT],
               trosy=False, s2=s2, tau_e_ns=tau_e).experiments[0]
    ref_value, _, _ = per_root_time(ref, reference_scheme)

    rows = []
    for choice in scenario.candidates.labeling:
        scheme = choice.load()
        result = plan(
            tau_c_ns=tau_c, field_mhz=np.asarray(fields), labeling=scheme, experiments=list(names),
            trosy=scenario.candidates.trosy, s2=s2, tau_e_ns=tau_e,
        )
        for e in result.experiments:
            trosy = np.broadcast_to(np.asarray(e.trosy), (len(fields),))
            rel = np.broadcast_to(e.relative_sensitivity, (len(fields),))
            obj = np.broadcast_to(e.objective_value, (len(fields),))
            value, recycle, r1 = per_root_time(e, scheme)
            for j, f in enumerate(fields):
                rows.append(
                    ComparisonRow(
                        labeling=str(choice),
                        scheme=choice.scheme,
                        deuteration=scheme.deuteration,
                        experiment=e.name,
                        field_mhz=f,
                        trosy=bool(trosy[j]),
                        relative_sensitivity=float(rel[j]),
                        objective_throughput=float(obj[j]),
                        feasible=bool(e.feasible),
                        reason=e.reason,
                        measurement_time_h=_time_for(times, choice, f, e.name),
                        sensitivity_per_root_time=float(value[j] / ref_value[j]) if e.feasible else None,
                        recycle_s=float(np.broadcast_to(recycle, (len(fields),))[j]),
                        r1_recovery=float(r1[j]),
                    )
                )
    curves = crossover_curves(names, np.asarray(fields), grid, s2=s2, tau_e_ns=tau_e)
    canonical = tuple(load_experiment(n).name for n in names)
    crossovers = _crossovers(curves, canonical, fields, grid, deuteration_gain, trosy_gain)
    return Comparison(
        scenario=scenario.protein.name,
        tau_c_ns=tau_c,
        tau_c_source=tau_source,
        fields_mhz=fields,
        labelings=tuple(str(c) for c in scenario.candidates.labeling),
        experiments=canonical,
        trosy=scenario.candidates.trosy,
        rows=tuple(rows),
        crossovers=tuple(crossovers),
        tau_c_grid_ns=tuple(float(x) for x in grid),
        curves=curves,
        times_source=times_source,
    )


# ---------------------------------------------------------------------------------------------------------
# Text
# ---------------------------------------------------------------------------------------------------------


def _cell(v, fmt) -> str:
    return "-" if v is None or (isinstance(v, float) and not math.isfinite(v)) else format(v, fmt)


def _render(headers, body) -> list[str]:
    widths = [max(len(h), *(len(r[i]) for r in body)) if body else len(h) for i, h in enumerate(headers)]
    line = "  ".join(h.ljust(w) for h, w in zip(headers, widths))
    out = [line, "  ".join("-" * w for w in widths)]
    out += ["  ".join(c.ljust(w) for c, w in zip(r, widths)) for r in body]
    return out


def comparison_table(c: Comparison) -> str:
    """The comparison as readable text: conditions, the labeling × experiment × field table, the crossovers."""
    lines = [
        f"{c.scenario}: tau_c {c.tau_c_ns:.3g} ns ({c.tau_c_source}); TROSY {c.trosy}; "
        f"fields {', '.join(f'{f:g}' for f in c.fields_mhz)} MHz",
        "relative sensitivity against the 2D 1H-15N HSQC of the same sample and field; per sqrt(t): S/N per square "
        f"root of time with the optimal recycle, against the {PROTONATED} HSQC at the same field",
        "",
    ]
    show_time = any(r.measurement_time_h is not None for r in c.rows)
    headers = ["labeling", "experiment", "field MHz", "TROSY", "rel. sens.", "throughput", "per sqrt(t)", "recycle s"]
    headers += ["time h"] if show_time else []
    body = []
    for r in c.rows:
        cells = [
            r.labeling,
            r.experiment,
            f"{r.field_mhz:g}",
            "yes" if r.trosy else "no",
            _cell(r.relative_sensitivity, ".3f") if r.feasible else "infeasible",
            _cell(r.objective_throughput, ".3g") if r.feasible else "-",
            _cell(r.sensitivity_per_root_time, ".3f"),
            _cell(r.recycle_s, ".2f"),
        ]
        if show_time:
            cells.append(_cell(r.measurement_time_h, ".3g"))
        body.append(cells)
    lines += _render(headers, body)
    if c.times_source and not show_time:
        lines += ["", c.times_source]
    lines += [
        "",
        f"tau_c above which it gives more S/N per sqrt(time) (grid {c.tau_c_grid_ns[0]:g}-{c.tau_c_grid_ns[-1]:g} ns; "
        f"deuteration: {PERDEUTERATED} vs {PROTONATED}, TROSY: TROSY vs plain in {PERDEUTERATED})",
    ]
    headers = ["experiment", "field MHz", "deuteration ns", "TROSY ns"]
    body, notes = [], {}
    for name in c.experiments:
        for f in c.fields_mhz:
            cells = [name, f"{f:g}"]
            for kind in _KINDS:
                x = c.crossover(kind, name, f)
                cells.append(_cell(x.tau_c_ns, ".3g") if x.tau_c_ns is not None else "none")
                if x.tau_c_ns is None and x.reason:
                    notes.setdefault((name, kind, x.reason), []).append(f"{f:g}")
            body.append(cells)
    lines += _render(headers, body)
    gains = {x.kind: x.gain for x in c.crossovers}
    if gains:
        lines.append("pays off = ratio of S/N per sqrt(time) above " + ", ".join(f"{k} {v:g}" for k, v in gains.items()))
    if notes:
        lines += ["", "no crossover:"] + [
            f"  {name} {kind} ({', '.join(fs)} MHz): {reason}" for (name, kind, reason), fs in notes.items()
        ]
    return "\n".join(lines)
