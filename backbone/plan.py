"""Planning: every requested experiment walked at optimized and textbook delays, against the HSQC.

:func:`plan` orchestrates the layers below it and computes nothing of its own: rates from the relaxation engine
(:func:`backbone.relaxation.relaxation_rates`) for one condition or a grid of τc and field, each experiment model
placed on a residue (:func:`backbone.experiments.resolve`), its delays optimized and its textbook delays found
(:mod:`backbone.experiments.delays`), and the walk evaluated at both (:func:`backbone.experiments.walk`).

Definitions
-----------
* ``throughput`` — a peak's signed throughput at the optimized delays (normalization in
  :mod:`backbone.experiments.walk`: 1 is a lossless sensitivity-enhanced transfer); ``textbook_throughput`` —
  the same at the textbook delays (the objective's optimum with every rate zero), but WITH relaxation.
* ``objective`` — what the delays maximize: the model's default (``weakest`` needed peak, a named peak, or
  ``geometric-mean``) unless the caller overrides it; ``gain`` — objective at optimized over textbook delays.
* ``relative_sensitivity`` — the experiment's objective value at its optimized delays divided by that of the
  2D 1H-15N HSQC with sensitivity enhancement (the bundled ``HSQC`` model at its own optimized delays), same
  residue, labeling and conditions. The HSQC's sampling of 60 ms in 15N and the 3D experiments' shorter
  indirect sampling are part of the comparison, as they are in practice. NaN (JSON null) when the HSQC itself is
  infeasible (e.g. proline).
* ``trosy`` — False: plain versions; True: TROSY versions of every model that has one (the TROSY model itself
  always is); ``"auto"``: per condition, the version with the larger objective value.
* The condition-level plan walks the typical residue of :data:`backbone.experiments.TYPICAL_SEQUENCE` (a Lys
  preceded by a Leu); give ``sequence`` and ``residue`` for a particular residue of a protein.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType

import numpy as np

from backbone.errors import BackboneError

__all__ = ["PeakPlan", "StepPlan", "ExperimentPlan", "PlanResult", "plan", "plan_matrix"]

_REFERENCE = "HSQC"


def _json(value):
    """Float/bool/None or nested lists of them for JSON."""
    if value is None:
        return None
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    arr = np.asarray(value)
    if arr.dtype == bool:
        return bool(arr) if arr.ndim == 0 else arr.tolist()
    arr = arr.astype(float)
    if arr.ndim == 0:
        v = float(arr)
        return v if np.isfinite(v) else None
    if np.all(np.isfinite(arr)):
        return arr.tolist()
    return [_json(x) for x in arr]


@dataclass(frozen=True)
class PeakPlan:
    """A peak of a planned experiment; arrays have the condition shape."""

    label: str
    sign: int
    throughput: np.ndarray
    textbook_throughput: np.ndarray
    feasible: bool
    reason: str = ""


@dataclass(frozen=True)
class StepPlan:
    """A step of a planned experiment: atoms, delay [s] optimized and textbook, efficiency, rate [s⁻¹]."""

    name: str
    kind: str
    from_: str
    to: str
    delay_name: str | None
    delay_s: object
    textbook_delay_s: object
    efficiency: object
    rate_s: object


@dataclass(frozen=True)
class ExperimentPlan:
    """One experiment in one labeling across the condition grid (see the module docstring)."""

    name: str
    trosy: object
    sensitivity_enhanced: bool
    labeling: str
    field_mhz: np.ndarray
    tau_c_ns: np.ndarray
    residue: int
    objective: str
    objective_value: np.ndarray
    textbook_objective_value: np.ndarray
    relative_sensitivity: np.ndarray
    feasible: bool
    reason: str
    peaks: tuple[PeakPlan, ...]
    steps: tuple[StepPlan, ...]
    delays: Mapping
    textbook_delays: Mapping
    delay_methods: Mapping

    @property
    def gain(self) -> np.ndarray:
        """Objective at the optimized delays over the objective at the textbook delays."""
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(self.textbook_objective_value > 0, self.objective_value / self.textbook_objective_value, np.nan)

    def as_dict(self) -> dict:
        """The per-experiment object of the ``plan --json`` contract, plus objective, gain, delays, residue."""
        return {
            "name": self.name,
            "trosy": _json(self.trosy),
            "labeling": self.labeling,
            "field_mhz": _json(self.field_mhz),
            "tau_c_ns": _json(self.tau_c_ns),
            "relative_sensitivity": _json(self.relative_sensitivity) if self.feasible else 0.0,
            "feasible": bool(self.feasible),
            "reason": self.reason,
            "peaks": [
                {
                    "label": p.label,
                    "throughput": _json(p.throughput),
                    "textbook_throughput": _json(p.textbook_throughput),
                    "sign": int(p.sign),
                }
                for p in self.peaks
            ],
            "steps": [
                {
                    "name": s.name,
                    "from": s.from_,
                    "to": s.to,
                    "delay_s": _json(s.delay_s),
                    "textbook_delay_s": _json(s.textbook_delay_s),
                    "efficiency": _json(s.efficiency),
                    "rate_s": _json(s.rate_s),
                }
                for s in self.steps
            ],
            "objective": self.objective,
            "gain": _json(self.gain) if self.feasible else None,
            "sensitivity_enhanced": self.sensitivity_enhanced,
            "residue": self.residue,
            "delays": {
                d: {
                    "delay_s": _json(v),
                    "textbook_delay_s": _json(self.textbook_delays.get(d)),
                    "method": self.delay_methods.get(d, ""),
                }
                for d, v in self.delays.items()
            },
        }


@dataclass(frozen=True)
class PlanResult:
    """All planned experiments; :meth:`as_dict` is the ``plan --json`` object, :meth:`to_frame` a table."""

    experiments: tuple[ExperimentPlan, ...]
    shape: tuple[int, ...]

    def __getitem__(self, name: str) -> ExperimentPlan:
        for e in self.experiments:
            if e.name.lower() == str(name).lower():
                return e
        raise BackboneError(f"plan has no experiment {name!r}; it has {', '.join(e.name for e in self.experiments)}")

    def as_dict(self) -> dict:
        """``{"experiments": [...]}`` exactly as ARCHITECTURE.md's plan contract (with extra keys per experiment)."""
        return {"experiments": [e.as_dict() for e in self.experiments]}

    def to_frame(self, kind: str = "peaks"):
        """A pandas DataFrame, one row per experiment × peak (``kind="peaks"``) or × step (``"steps"``) × grid
        point; units in the column names. pandas is imported here, not at module import."""
        import pandas as pd

        if kind not in ("peaks", "steps"):
            raise BackboneError(f"to_frame: kind {kind!r} is not allowed; use 'peaks' or 'steps'")
        rows = []
        for e in self.experiments:
            n = max(1, int(np.prod(self.shape)))

            def flat(x, n=n):
                if x is None:
                    return [None] * n
                return list(np.broadcast_to(np.asarray(x), self.shape).ravel()) if self.shape else [np.asarray(x).item()]

            trosy, field, tau_c = flat(e.trosy), flat(e.field_mhz), flat(e.tau_c_ns)

            def condition(k, e=e, trosy=trosy, field=field, tau_c=tau_c):
                """The columns every row of experiment ``e`` at grid point ``k`` starts with."""
                return {
                    "experiment": e.name,
                    "trosy": bool(trosy[k]),
                    "labeling": e.labeling,
                    "field_mhz": float(field[k]),
                    "tau_c_ns": float(tau_c[k]),
                }

            def num(x, scale=1.0):
                return None if x is None else float(x) * scale

            if kind == "peaks":
                rel = flat(e.relative_sensitivity)
                for p in e.peaks:
                    tp, tb = flat(p.throughput), flat(p.textbook_throughput)
                    for k in range(n):
                        rows.append(
                            condition(k)
                            | {
                                "peak": p.label,
                                "sign": p.sign,
                                "throughput": float(tp[k]),
                                "textbook_throughput": float(tb[k]),
                                "relative_sensitivity": float(rel[k]) if e.feasible else 0.0,
                                "feasible": p.feasible,
                                "reason": p.reason,
                            }
                        )
            else:
                for s in e.steps:
                    d, tbd, eff, rate = flat(s.delay_s), flat(s.textbook_delay_s), flat(s.efficiency), flat(s.rate_s)
                    for k in range(n):
                        rows.append(
                            condition(k)
                            | {
                                "step": s.name,
                                "from": s.from_,
                                "to": s.to,
                                "delay_ms": num(d[k], 1e3),
                                "textbook_delay_ms": num(tbd[k], 1e3),
                                "efficiency": num(eff[k]),
                                "rate_per_s": num(rate[k]),
                            }
                        )
        return pd.DataFrame(rows)


# ---------------------------------------------------------------------------------------------------------
# Orchestration
# ---------------------------------------------------------------------------------------------------------


def _variant(model, resolved, rates, scheme, G, residue, trosy, objective):
    """Optimized and textbook walks of one version (plain or TROSY) of one model."""
    from backbone.experiments import objective_value, optimize_delays, textbook_delays, walk

    choice = optimize_delays(resolved, rates, objective=objective, trosy=trosy)
    tb = textbook_delays(resolved, objective=choice.objective if objective is not None else None, trosy=trosy)
    w_opt = walk(model, G, residue, scheme, rates, delays=choice.delays, trosy=trosy, resolved=resolved)
    w_tb = walk(model, G, residue, scheme, rates, delays=tb, trosy=trosy, resolved=resolved)
    shape = tuple(rates.shape)
    if resolved.feasible:
        # The walks' signed throughputs times the declared signs are the unsigned pathway amplitudes the
        # objective is defined on (peak_amplitudes), so the objective needs no further pass over the steps.
        def amplitudes(w):
            return {p.label: p.sign * p.throughput for p in w.peaks if p.feasible}

        obj = objective_value(amplitudes(w_opt), choice.objective)
        obj_tb = objective_value(amplitudes(w_tb), choice.objective)
    else:
        obj = obj_tb = np.zeros(shape)
    return {
        "choice": choice,
        "textbook": tb,
        "opt": w_opt,
        "tb": w_tb,
        "obj": np.broadcast_to(obj, shape),
        "obj_tb": np.broadcast_to(obj_tb, shape),
    }


def _pick(mask, a, b):
    """Elementwise a where mask else b, for arrays, None or scalars."""
    if a is None or b is None:
        return a if b is None else b
    return np.where(mask, a, b)


def plan(
    conditions=None,
    *,
    tau_c_ns=None,
    field_mhz=None,
    labeling="13c15n",
    deuteration=None,
    s2=1.0,
    tau_e_ns=0.0,
    experiments=None,
    trosy=False,
    objective=None,
    sequence=None,
    residue=None,
) -> PlanResult:
    """Plan experiments for one condition or a grid of conditions.

    Parameters
    ----------
    conditions : backbone.conditions.Conditions, optional
        Resolved conditions (τc, field, labeling, S², τe); alternatively give the keywords below.
    tau_c_ns, field_mhz : float or array
        τc [ns] and field as the 1H frequency [MHz]; arrays broadcast (e.g. ``tau_c_ns[:, None]`` against
        ``field_mhz[None, :]`` for a grid).
    labeling : str, path or LabelingScheme
        Labeling scheme (id, path, or a loaded scheme); ``deuteration`` overrides its level.
    s2, tau_e_ns : model-free order parameter and internal correlation time [ns].
    experiments : list of str, optional
        Names, file stems or paths; default every bundled model (:func:`backbone.experiments.registered_experiments`).
    trosy : False, True or "auto"
    objective : str, optional
        Override every model's default objective (a peak label only makes sense for one experiment).
    sequence, residue : str and int, optional
        A protein sequence and the residue i to walk; default the typical residue.

    Returns
    -------
    PlanResult
    """
    from backbone.experiments import load_experiment, registered_experiments, resolve, typical_chain
    from backbone.experiments.walk import TYPICAL_RESIDUE
    from backbone.labeling import LabelingScheme, load_scheme
    from backbone.relaxation import relaxation_rates

    if trosy not in (False, True, "auto"):
        raise BackboneError(f"trosy = {trosy!r} is not allowed; use false, true or 'auto'")
    if conditions is not None:
        if tau_c_ns is not None or field_mhz is not None:
            raise BackboneError("plan: give either conditions or tau_c_ns/field_mhz, not both")
        scheme = conditions.labeling
        tau_c = conditions.tau_c
        mhz = conditions.proton_mhz
        s2, tau_e = conditions.s2, conditions.tau_e
    else:
        if tau_c_ns is None or field_mhz is None:
            raise BackboneError("plan: give conditions, or both tau_c_ns and field_mhz")
        scheme = labeling if isinstance(labeling, LabelingScheme) else load_scheme(labeling, deuteration=deuteration)
        tau_c = np.asarray(tau_c_ns, dtype=float) * 1e-9
        mhz = np.asarray(field_mhz, dtype=float)
        tau_e = np.asarray(tau_e_ns, dtype=float) * 1e-9
    rates = relaxation_rates(tau_c, proton_mhz=mhz, labeling=scheme, s2=s2, tau_e=tau_e)
    shape = tuple(rates.shape)

    if sequence is not None:
        from backbone.graph import build_chain

        G = build_chain(sequence)
        if residue is None:
            raise BackboneError("plan: with a sequence, give the residue number to walk")
    else:
        if residue is not None:
            raise BackboneError("plan: a residue number needs the sequence it belongs to")
        G, residue = typical_chain(), TYPICAL_RESIDUE

    names = list(registered_experiments()) if experiments is None else list(experiments)
    if not names:
        raise BackboneError("plan: experiments must name at least one experiment")
    models = [load_experiment(n) for n in names]

    reference = load_experiment(_REFERENCE)
    ref_resolved = resolve(reference, G, residue, scheme)
    ref_variant = _variant(reference, ref_resolved, rates, scheme, G, residue, False, None)
    ref = ref_variant["obj"] if ref_resolved.feasible else None

    plans = []
    for model in models:
        resolved = resolve(model, G, residue, scheme)
        if model.trosy_only:
            modes = [True]
        elif trosy == "auto" and model.trosy_capable:
            modes = [False, True]
        else:
            modes = [bool(trosy) and model.trosy_capable]
        variants = {
            m: ref_variant
            if model is reference and m is False and objective is None
            else _variant(model, resolved, rates, scheme, G, residue, m, objective)
            for m in modes
        }
        if len(modes) == 2:
            better = variants[True]["obj"] > variants[False]["obj"]
            use_trosy = better if shape else bool(better)
        else:
            better = np.full(shape, modes[0])
            use_trosy = modes[0]
        vn = variants[modes[0]]
        vt = variants[modes[-1]]

        def pick(key_t, vt=vt, vn=vn, better=better):
            return _pick(better, key_t(vt), key_t(vn))

        peaks = []
        for k, p in enumerate(vn["opt"].peaks):
            peaks.append(
                PeakPlan(
                    label=p.label,
                    sign=p.sign,
                    throughput=pick(lambda v, k=k: v["opt"].peaks[k].throughput),
                    textbook_throughput=pick(lambda v, k=k: v["tb"].peaks[k].throughput),
                    feasible=p.feasible,
                    reason=p.reason,
                )
            )
        steps = []
        for k, s in enumerate(vn["opt"].steps):
            steps.append(
                StepPlan(
                    name=s.name,
                    kind=s.kind,
                    from_=s.from_,
                    to=s.to,
                    delay_name=s.delay_name,
                    delay_s=pick(lambda v, k=k: v["opt"].steps[k].delay_s),
                    textbook_delay_s=pick(lambda v, k=k: v["tb"].steps[k].delay_s),
                    efficiency=pick(lambda v, k=k: v["opt"].steps[k].efficiency),
                    rate_s=pick(lambda v, k=k: v["opt"].steps[k].rate_s),
                )
            )
        obj = pick(lambda v: v["obj"])
        obj_tb = pick(lambda v: v["obj_tb"])
        if ref is None:
            rel = np.full(shape, np.nan)
        else:
            with np.errstate(divide="ignore", invalid="ignore"):
                rel = np.where(ref > 0, obj / ref, np.nan)
        delays = {d: pick(lambda v, d=d: v["choice"].delays.get(d)) for d in vn["choice"].delays}
        tb_delays = {d: pick(lambda v, d=d: v["textbook"].get(d)) for d in vn["textbook"]}
        plans.append(
            ExperimentPlan(
                name=model.name,
                trosy=use_trosy,
                sensitivity_enhanced=vn["opt"].sensitivity_enhanced,
                labeling=resolved.labeling,
                field_mhz=np.asarray(rates.proton_mhz),
                tau_c_ns=np.asarray(rates.tau_c) * 1e9,
                residue=residue,
                objective=vn["choice"].objective,
                objective_value=np.asarray(obj),
                textbook_objective_value=np.asarray(obj_tb),
                relative_sensitivity=np.asarray(rel) if resolved.feasible else np.zeros(shape),
                feasible=resolved.feasible,
                reason=resolved.reason,
                peaks=tuple(peaks),
                steps=tuple(steps),
                delays=MappingProxyType(delays),
                textbook_delays=MappingProxyType(tb_delays),
                delay_methods=MappingProxyType(dict(vn["choice"].methods)),
            )
        )
    return PlanResult(tuple(plans), shape)


# ---------------------------------------------------------------------------------------------------------
# Planning matrix with interpolated delays
# ---------------------------------------------------------------------------------------------------------

#: τc nodes (log-spaced over the requested range) at which the interpolated matrix optimizes the delays exactly.
_INTERPOLATION_NODES = 96
_DELAY_MODES = ("exact", "interpolated")
#: Threads over the labeling schemes in the interpolated matrix, for grids of at least _THREADED_CONDITIONS
#: fields × τc: numpy releases the GIL in large array operations, but on small grids the Python-bound delay
#: search dominates and two threads were measured slower than one (2.2 s against 2.8 s for 5 × 200 conditions,
#: 6–7 s against 8–9 s for 5 × 20000).
_WORKERS = 2
_THREADED_CONDITIONS = 50_000


def _amplitudes_cached(resolved, rates, delays, trosy, se, cache, tag):
    """Unsigned amplitude of every feasible peak (as :func:`backbone.experiments.walk.peak_amplitudes`), each
    segment evaluated once: segments with no named delay are shared by every call with the same ``cache``, the
    others are keyed by ``tag`` (one per set of delays)."""
    from backbone.experiments.walk import segment_amplitude

    out = {}
    for p in resolved.feasible_peaks:
        amp = np.asarray(p.factor, dtype=float)
        for rs in p.segments:
            key = (rs.signature, rs.delay, None if rs.delay is None else tag)
            value = cache.get(key)
            if value is None:
                tau = delays[rs.delay] if rs.delay is not None else 0.0
                value = cache[key] = segment_amplitude(rs, tau, rates, trosy=trosy, sensitivity_enhanced=se)
            amp = amp * value
        out[p.label] = amp
    return out


def _interpolated_variant(model, resolved, rates, node_rates, log_nodes, log_tc, trosy, objective):
    """Objective at delays optimized exactly on the τc nodes and interpolated (PCHIP in log τc) to every
    requested τc, the objective at the textbook delays, and the interpolated delays; arrays of ``rates.shape``
    (fields × τc)."""
    from scipy.interpolate import PchipInterpolator

    from backbone.experiments import objective_value, optimize_delays, textbook_delays
    from backbone.experiments.walk import _mode

    shape = tuple(rates.shape)
    node_shape = tuple(node_rates.shape)
    choice = optimize_delays(resolved, node_rates, objective=objective, trosy=trosy)
    tb = textbook_delays(resolved, objective=choice.objective if objective is not None else None, trosy=trosy)
    delays = {}
    for d, v in choice.delays.items():
        v = np.broadcast_to(np.asarray(v, dtype=float), node_shape)
        delays[d] = PchipInterpolator(log_nodes, v, axis=1)(log_tc)
    if not resolved.feasible:
        zeros = np.zeros(shape)
        return {"delays": delays, "objective": choice.objective, "obj": zeros, "obj_tb": zeros}
    mode, se = _mode(model, trosy, None)
    cache: dict = {}
    amp = _amplitudes_cached(resolved, rates, delays, mode, se, cache, "interpolated")
    amp_tb = _amplitudes_cached(resolved, rates, tb, mode, se, cache, "textbook")
    return {
        "delays": delays,
        "objective": choice.objective,
        "obj": np.broadcast_to(objective_value(amp, choice.objective), shape),
        "obj_tb": np.broadcast_to(objective_value(amp_tb, choice.objective), shape),
    }


def _interpolated_columns(tc, mhz, lab, names, trosy, objective, s2, tau_e_ns, n_nodes):
    """Per experiment, the plan_matrix columns of one labeling with interpolated delays (see plan_matrix)."""
    from backbone.experiments import load_experiment, registered_experiments, resolve, typical_chain
    from backbone.experiments.walk import TYPICAL_RESIDUE
    from backbone.labeling import LabelingScheme, load_scheme
    from backbone.relaxation import relaxation_rates

    scheme = lab if isinstance(lab, LabelingScheme) else load_scheme(lab)
    nodes = np.geomspace(tc.min(), tc.max(), n_nodes)
    tau_e = float(tau_e_ns) * 1e-9
    rates = relaxation_rates(tc[None, :] * 1e-9, proton_mhz=mhz[:, None], labeling=scheme, s2=s2, tau_e=tau_e)
    node_rates = relaxation_rates(nodes[None, :] * 1e-9, proton_mhz=mhz[:, None], labeling=scheme, s2=s2, tau_e=tau_e)
    log_nodes, log_tc = np.log(nodes), np.log(tc)
    G, residue = typical_chain(), TYPICAL_RESIDUE
    shape = tuple(rates.shape)

    names = list(registered_experiments()) if names is None else list(names)
    if not names:
        raise BackboneError("plan: experiments must name at least one experiment")
    models = [load_experiment(n) for n in names]
    reference = load_experiment(_REFERENCE)
    done: dict = {}

    def variant(model, resolved, m, obj):
        key = (id(model), m, obj)
        if key not in done:
            done[key] = _interpolated_variant(model, resolved, rates, node_rates, log_nodes, log_tc, m, obj)
        return done[key]

    ref_resolved = resolve(reference, G, residue, scheme)
    ref = variant(reference, ref_resolved, False, None)["obj"] if ref_resolved.feasible else None
    out = []
    for model in models:
        resolved = resolve(model, G, residue, scheme)
        if model.trosy_only:
            modes = [True]
        elif trosy == "auto" and model.trosy_capable:
            modes = [False, True]
        else:
            modes = [bool(trosy) and model.trosy_capable]
        obj_key = None if (model is reference and objective is None) else objective
        variants = {m: variant(model, resolved, m, obj_key) for m in modes}
        vn, vt = variants[modes[0]], variants[modes[-1]]
        better = vt["obj"] > vn["obj"] if len(modes) == 2 else np.full(shape, modes[0])
        obj = np.where(better, vt["obj"], vn["obj"])
        obj_tb = np.where(better, vt["obj_tb"], vn["obj_tb"])
        feasible = bool(resolved.feasible)
        with np.errstate(divide="ignore", invalid="ignore"):
            gain = np.where(obj_tb > 0, obj / obj_tb, np.nan) if feasible else np.full(shape, np.nan)
            if not feasible:
                rel = np.zeros(shape)
            elif ref is None:
                rel = np.full(shape, np.nan)
            else:
                rel = np.where(ref > 0, obj / ref, np.nan)
        delays = {d: np.where(better, vt["delays"][d], vn["delays"][d]) for d in vn["delays"]}
        out.append(
            {
                "labeling": scheme.id if isinstance(lab, LabelingScheme) else resolved.labeling,
                "experiment": model.name,
                "trosy": better,
                "feasible": feasible,
                "objective": vn["objective"],
                "objective_throughput": obj,
                "textbook_objective_throughput": obj_tb,
                "gain": gain,
                "relative_sensitivity": rel,
                "delays": delays,
            }
        )
    return out


def plan_matrix(
    *,
    tau_c_ns,
    field_mhz,
    labelings=None,
    experiments=None,
    trosy=False,
    objective=None,
    s2=1.0,
    tau_e_ns=0.0,
    delays="exact",
):
    """The planning matrix: every experiment × labeling scheme × field × τc, as one tidy table.

    Each labeling is planned once over the whole field × τc grid (:func:`plan`, vectorized), so the result of
    every row is the one :func:`plan` gives for that single condition. ``field_mhz`` and ``tau_c_ns`` hold the
    values given, exactly, so rows can be selected by them.

    Parameters
    ----------
    tau_c_ns : 1-D array [ns]
        Rotational correlation times.
    field_mhz : 1-D array [MHz]
        Fields as the 1H Larmor frequency.
    labelings : sequence of scheme ids, paths or LabelingScheme, optional
        Default every registered scheme (:func:`backbone.labeling.registered_schemes`).
    experiments, trosy, objective, s2, tau_e_ns
        As in :func:`plan` (with ``delays="interpolated"``, ``s2`` and ``tau_e_ns`` must be single numbers).
    delays : "exact" or "interpolated"
        ``"exact"`` (default): every condition's delays optimized on their own, as :func:`plan` does.
        ``"interpolated"``: per labeling, field, experiment and TROSY version the named delays are optimized
        exactly at 96 τc nodes log-spaced over the requested range, each optimal delay is interpolated in
        log τc (monotone cubic, :class:`scipy.interpolate.PchipInterpolator`), and the walk is evaluated once
        at every requested condition at those delays: throughputs, gains and relative sensitivities are exact
        for the delays reported, the delays themselves near-optimal. Where the optimal delay is a smooth
        function of τc the objective is within about 1e-8 relative of the exact optimum (the objective is flat
        there); where it has a kink — the weakest peak changes (HNCACB, HN(CO)CACB, CBCA(CO)NH) or a delay
        reaches the constant-time limit it cannot go below (HNCO, HNCA, HN(CO)CA, HN(CA)CO) — the
        interpolation rounds the corner over one node interval and the objective falls short by up to
        7.0e-4 relative (measured: every bundled experiment × 4 schemes × 600–1000 MHz × 2000 τc values in
        2–60 ns; about 98 % of the rows within 1e-6). For CBCA(CO)NH the interpolated delays can also come out
        up to 1.1e-4 ABOVE the exact search, whose joint τ_CH/τ_CC ridge search does not always end at the
        global optimum (see :mod:`backbone.experiments.delays`). Requests with no more distinct τc values
        than nodes are computed exactly. On large grids the labeling schemes run on two threads. Cost: about 1.1 s for
        the 200-τc matrix (exact mode about 1.5 s) and about 4.5× that for 100× the τc values
        (tests/benchmarks/bench_matrix.py).

    Returns
    -------
    pandas.DataFrame
        One row per (labeling, experiment, field, τc), τc fastest. Columns: ``labeling``, ``experiment``,
        ``trosy`` (the version used at that condition), ``field_mhz``, ``tau_c_ns``, ``feasible``, ``objective``
        (what the delays maximize), ``objective_throughput`` and ``textbook_objective_throughput`` (the objective
        at the optimized and at the textbook delays; 0 when infeasible), ``gain`` (their ratio; NaN when
        infeasible), ``relative_sensitivity`` (against the HSQC, 0 when infeasible, NaN when the HSQC is),
        then one column ``delay_<name>_s`` [s] per named delay of any planned experiment, holding the optimized
        delay (NaN for experiments without that delay or when infeasible). Per-peak and per-step detail is in
        :meth:`PlanResult.to_frame` of a :func:`plan` for the condition of interest. pandas is imported here.
    """
    import pandas as pd

    from backbone.labeling import LabelingScheme, registered_schemes

    tc = np.asarray(tau_c_ns, dtype=float)
    mhz = np.asarray(field_mhz, dtype=float)
    for name, arr in (("tau_c_ns", tc), ("field_mhz", mhz)):
        if arr.ndim != 1 or arr.size == 0:
            raise BackboneError(f"plan_matrix: {name} must be a non-empty 1-D array, got shape {arr.shape}")
    schemes = list(registered_schemes()) if labelings is None else list(labelings)
    if not schemes:
        raise BackboneError("plan_matrix: labelings must name at least one labeling scheme")
    if delays not in _DELAY_MODES:
        raise BackboneError(f"plan_matrix: delays = {delays!r} is not allowed; use 'exact' or 'interpolated'")
    if trosy not in (False, True, "auto"):
        raise BackboneError(f"trosy = {trosy!r} is not allowed; use false, true or 'auto'")
    shape = (mhz.size, tc.size)
    n = mhz.size * tc.size
    frames = []
    delay_columns: dict[str, None] = {}
    interpolate = delays == "interpolated" and np.unique(tc).size > _INTERPOLATION_NODES and bool(np.all(tc > 0))
    if delays == "interpolated":
        for name, value in (("s2", s2), ("tau_e_ns", tau_e_ns)):
            if np.ndim(value) != 0:
                raise BackboneError(
                    f"plan_matrix: with interpolated delays {name} must be one number, got shape {np.shape(value)}"
                )

    def flat(x, dtype=float):
        return np.broadcast_to(np.asarray(x, dtype=dtype), shape).ravel()

    def interpolated(lab):
        return _interpolated_columns(tc, mhz, lab, experiments, trosy, objective, s2, tau_e_ns, _INTERPOLATION_NODES)

    if interpolate:
        if _WORKERS > 1 and len(schemes) > 1 and n >= _THREADED_CONDITIONS:
            from concurrent.futures import ThreadPoolExecutor

            with ThreadPoolExecutor(max_workers=_WORKERS) as pool:
                per_scheme = list(pool.map(interpolated, schemes))
        else:
            per_scheme = [interpolated(lab) for lab in schemes]
        rows = [c for columns in per_scheme for c in columns]
        for c in rows:
            for d in c["delays"]:
                delay_columns[f"delay_{d}_s"] = None

        def stacked(key, dtype=float):
            return np.concatenate([flat(c[key], dtype) for c in rows])

        def repeated(key):
            return np.repeat(np.array([c[key] for c in rows], dtype=object), n)

        nan = np.full(n, np.nan)
        cols = {
            "labeling": repeated("labeling"),
            "experiment": repeated("experiment"),
            "trosy": stacked("trosy", bool),
            "field_mhz": np.tile(flat(mhz[:, None]), len(rows)),
            "tau_c_ns": np.tile(flat(tc[None, :]), len(rows)),
            "feasible": np.repeat(np.array([c["feasible"] for c in rows], dtype=bool), n),
            "objective": repeated("objective"),
            "objective_throughput": stacked("objective_throughput"),
            "textbook_objective_throughput": stacked("textbook_objective_throughput"),
            "gain": stacked("gain"),
            "relative_sensitivity": stacked("relative_sensitivity"),
        }
        for column in delay_columns:
            d = column[len("delay_") : -len("_s")]
            cols[column] = np.concatenate([flat(c["delays"][d]) if d in c["delays"] else nan for c in rows])
        frames.append(pd.DataFrame(cols))
    for lab in schemes if not interpolate else ():
        result = plan(
            tau_c_ns=tc[None, :],
            field_mhz=mhz[:, None],
            labeling=lab,
            experiments=experiments,
            trosy=trosy,
            objective=objective,
            s2=s2,
            tau_e_ns=tau_e_ns,
        )
        lab_id = lab.id if isinstance(lab, LabelingScheme) else None
        for e in result.experiments:
            cols = {
                "labeling": np.full(n, lab_id or e.labeling, dtype=object),
                "experiment": np.full(n, e.name, dtype=object),
                "trosy": flat(e.trosy, bool),
                "field_mhz": flat(mhz[:, None]),
                "tau_c_ns": flat(tc[None, :]),
                "feasible": np.full(n, bool(e.feasible)),
                "objective": np.full(n, e.objective, dtype=object),
                "objective_throughput": flat(e.objective_value),
                "textbook_objective_throughput": flat(e.textbook_objective_value),
                "gain": flat(e.gain) if e.feasible else np.full(n, np.nan),
                "relative_sensitivity": flat(e.relative_sensitivity) if e.feasible else np.zeros(n),
            }
            for d, v in e.delays.items():
                column = f"delay_{d}_s"
                delay_columns[column] = None
                cols[column] = flat(v)
            frames.append(pd.DataFrame(cols))
    table = pd.concat(frames, ignore_index=True)
    for column in delay_columns:
        if column not in table:
            table[column] = np.nan
    fixed = [c for c in table.columns if not c.startswith("delay_")]
    return table[fixed + list(delay_columns)]
