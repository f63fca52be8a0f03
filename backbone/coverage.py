"""Sequence-aware walk coverage, and the set of experiments that walks the most of the chain in the budget.

Per residue
-----------
Every planned experiment (a :class:`backbone.planning.ExperimentTime`: one labeling, field and TROSY choice,
at its optimized delays — one set of delays for the whole protein, as recorded) is placed on every residue of
the sequence by :func:`backbone.experiments.walk.resolve`, which reads the chain graph: proline has no amide
proton, the N-terminal NH3+ is not observed, glycine has no Cβ, and the Cβ passive couplings (CB–CG) depend on
the residue type. The amplitudes are those of :func:`backbone.experiments.walk.walk` (factor × product of
:func:`~backbone.experiments.walk.segment_amplitude` over the pathway) with the rates of the planned conditions.
The walk of residue i depends on the types of i−1 and i only, so it is resolved once per
(type(i−1), type(i)) pair (and once more for the pair that starts at the N-terminal residue); segment
amplitudes are shared between pairs whose couplings are the same.

A peak's predicted S/N is the S/N its experiment reaches in its planned time (the limiting peak of the typical
residue at the target or above) scaled by the peak's throughput over the limiting throughput, both with the
wanted sampling. Without a calibration no S/N is predicted: a peak counts as detectable when its walk is
feasible, and the coverage says so.

Walk coverage
-------------
The sequential walk links residue i−1 to i when a shift of i−1 is found in both strips: in strip i as the
sequential peak X(i−1) and in strip i−1 as its intra-residue peak X(i), for X = CA (HNCA, HNCACB, HN(CO)CA,
HN(CO)CACB, CBCA(CO)NH give CA(i−1); HNCA and HNCACB give CA(i)), CB (likewise) or C′ (HNCO and HN(CA)CO give
C(i−1), HN(CA)CO gives C(i)). A link counts when both peaks it needs are detectable (at or above the target
S/N) in some experiment of the set. Coverage = detectable links / (n − 1) consecutive pairs. A link confirmed
by two or more nuclei is reported as such: matching on one nucleus alone is often ambiguous (common practice).

Recommendation
--------------
:func:`recommend` takes, per labeling, each experiment at its fastest field and evaluates every subset of the
experiments (the candidate set is small): the set with the most links within the budget wins; ties go to the
set with more links confirmed by a second nucleus, then to the shorter one. The shortest set with the same
coverage is reported too, and each experiment left out is given a reason (infeasible, over budget, adds no
coverage). This coverage does not count the value of an experiment that only tells i from i−1 peaks apart
(HN(CO)CA beside an HNCA): its peaks duplicate links the set already has.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from types import MappingProxyType

import numpy as np

from backbone.errors import BackboneError

__all__ = [
    "LINK_NUCLEI",
    "PeakSignal",
    "ResidueStrip",
    "Link",
    "Coverage",
    "ChosenExperiment",
    "Rejected",
    "Recommendation",
    "walk_coverage",
    "coverage_table",
    "recommend",
    "recommendation_text",
]

#: Nuclei whose shifts link strips, in the order they are tried.
LINK_NUCLEI = ("CA", "CB", "C")
_HOUR = 3600.0
_NO_ABSOLUTE = (
    "no calibration: signal-to-noise cannot be predicted, so peaks count as detectable when their walk is feasible"
)


# ---------------------------------------------------------------------------------------------------------
# Records
# ---------------------------------------------------------------------------------------------------------


def _f(x):
    if x is None:
        return None
    v = float(x)
    return v if math.isfinite(v) else None


@dataclass(frozen=True)
class PeakSignal:
    """One peak of one experiment in one residue's strip.

    label (e.g. ``CA(i-1)``); throughput [1] — |throughput| with the wanted sampling (0 if absent);
    signal_to_noise [1] or None without calibration; detectable — at or above the target (without
    calibration: present); reason — why absent or weak ("" otherwise).
    """

    label: str
    throughput: float
    signal_to_noise: float | None
    detectable: bool
    reason: str = ""

    def as_dict(self) -> dict:
        return {
            "label": self.label,
            "throughput": _f(self.throughput),
            "signal_to_noise": _f(self.signal_to_noise),
            "detectable": bool(self.detectable),
            "reason": self.reason,
        }


@dataclass(frozen=True)
class ResidueStrip:
    """The peaks every experiment gives in the strip of residue ``residue`` (its amide), by experiment name."""

    residue: int
    resname: str
    peaks: Mapping[str, tuple[PeakSignal, ...]]

    def peak(self, experiment: str, label: str) -> PeakSignal:
        for p in self.peaks.get(experiment, ()):
            if p.label == label:
                return p
        raise BackboneError(f"residue {self.residue}: experiment {experiment!r} has no peak {label!r}")

    def as_dict(self) -> dict:
        return {
            "residue": self.residue,
            "resname": self.resname,
            "peaks": {e: [p.as_dict() for p in ps] for e, ps in self.peaks.items()},
        }


@dataclass(frozen=True)
class Link:
    """The sequential link from residue ``previous`` (i−1) to ``residue`` (i).

    detectable; nuclei — the nuclei (of LINK_NUCLEI) that make it; category — for a broken link one of
    "N-terminus", "Pro", "no amide H", "Gly lacking CB", "peak below target", "infeasible", "no experiment";
    reason — a sentence.
    """

    previous: int
    residue: int
    detectable: bool
    nuclei: tuple[str, ...]
    category: str
    reason: str

    def as_dict(self) -> dict:
        return {
            "previous": self.previous,
            "residue": self.residue,
            "detectable": bool(self.detectable),
            "nuclei": list(self.nuclei),
            "category": self.category,
            "reason": self.reason,
        }


@dataclass(frozen=True)
class Coverage:
    """Walk coverage of a sequence by a set of planned experiments (module docstring).

    labeling; experiments — the :class:`~backbone.planning.ExperimentTime` rows used; target_signal_to_noise;
    absolute — True when S/N values are predicted (a calibration exists); residues (:class:`ResidueStrip`);
    links (:class:`Link`, n − 1 of them); notes.
    """

    labeling: str
    experiments: tuple
    target_signal_to_noise: float
    absolute: bool
    sequence: str
    residues: tuple[ResidueStrip, ...]
    links: tuple[Link, ...]
    notes: tuple[str, ...] = ()

    @property
    def fraction(self) -> float:
        """Detectable links over consecutive pairs; NaN for a one-residue sequence."""
        if not self.links:
            return math.nan
        return sum(link.detectable for link in self.links) / len(self.links)

    @property
    def confirmed(self) -> int:
        """Links made by two or more nuclei."""
        return sum(len(link.nuclei) >= 2 for link in self.links)

    @property
    def breaks(self) -> tuple[Link, ...]:
        """The links that cannot be made, in sequence order."""
        return tuple(link for link in self.links if not link.detectable)

    def as_dict(self) -> dict:
        return {
            "labeling": self.labeling,
            "experiments": [
                {"name": r.experiment, "field_mhz": r.field_mhz, "trosy": bool(r.trosy), "time_h": _f(r.time_h)}
                for r in self.experiments
            ],
            "target_signal_to_noise": self.target_signal_to_noise,
            "absolute": self.absolute,
            "fraction": _f(self.fraction),
            "links_detectable": sum(link.detectable for link in self.links),
            "links_total": len(self.links),
            "links_confirmed": self.confirmed,
            "breaks": [link.as_dict() for link in self.breaks],
            "residues": [r.as_dict() for r in self.residues],
            "notes": list(self.notes),
        }

    def to_frame(self):
        """pandas DataFrame, one row per residue × experiment × peak (S/N dimensionless)."""
        import pandas as pd

        rows = []
        for strip in self.residues:
            for exp, peaks in strip.peaks.items():
                for p in peaks:
                    rows.append(
                        {
                            "residue": strip.residue,
                            "resname": strip.resname,
                            "experiment": exp,
                            "peak": p.label,
                            "throughput": p.throughput,
                            "signal_to_noise": p.signal_to_noise,
                            "detectable": p.detectable,
                            "reason": p.reason,
                        }
                    )
        return pd.DataFrame(rows)


@dataclass(frozen=True)
class ChosenExperiment:
    """An experiment of a recommendation: field [MHz], TROSY, optimal delays [s], time [h] and its limit."""

    experiment: str
    field_mhz: float
    trosy: bool
    time_h: float
    limited_by: str
    delays: Mapping[str, float]
    row: object

    def as_dict(self) -> dict:
        return {
            "experiment": self.experiment,
            "field_mhz": self.field_mhz,
            "trosy": bool(self.trosy),
            "time_h": _f(self.time_h),
            "limited_by": self.limited_by,
            "delays_s": {k: _f(v) for k, v in self.delays.items()},
        }


@dataclass(frozen=True)
class Rejected:
    """An alternative not taken: an experiment (or a labeling, experiment "") and why.

    category: "infeasible", "over budget", "adds no coverage" or, for a labeling, "lower coverage",
    "fewer confirmed links", "longer".
    """

    labeling: str
    experiment: str
    category: str
    why: str

    def as_dict(self) -> dict:
        return {"labeling": self.labeling, "experiment": self.experiment, "category": self.category, "why": self.why}


@dataclass(frozen=True)
class Recommendation:
    """The recommended set (:func:`recommend`)."""

    labeling: str
    budget_h: float
    chosen: tuple[ChosenExperiment, ...]
    coverage: Coverage
    minimal: tuple[str, ...]
    minimal_time_h: float
    reason: str
    rejected: tuple[Rejected, ...]

    @property
    def total_time_h(self) -> float:
        return float(sum(c.time_h for c in self.chosen))

    def as_dict(self) -> dict:
        return {
            "labeling": self.labeling,
            "budget_h": self.budget_h,
            "total_time_h": self.total_time_h,
            "chosen": [c.as_dict() for c in self.chosen],
            "coverage": _f(self.coverage.fraction),
            "links_detectable": sum(link.detectable for link in self.coverage.links),
            "links_total": len(self.coverage.links),
            "links_confirmed": self.coverage.confirmed,
            "breaks": [link.as_dict() for link in self.coverage.breaks],
            "minimal_set": list(self.minimal),
            "minimal_time_h": _f(self.minimal_time_h),
            "reason": self.reason,
            "rejected": [r.as_dict() for r in self.rejected],
        }


# ---------------------------------------------------------------------------------------------------------
# Per-residue signals
# ---------------------------------------------------------------------------------------------------------


def _sequence(scenario_plan, sequence) -> str:
    from backbone.graph import parse_sequence

    if sequence is not None:
        return parse_sequence(sequence, where="sequence")
    text = scenario_plan.scenario.protein.sequence_text
    if not text:
        raise BackboneError(
            "walk coverage needs the protein's sequence: give protein.sequence or protein.sequence_file in the "
            "scenario (a length or mass alone does not say where the prolines and glycines are)"
        )
    return text


class _Chain:
    """Chain graph, sequence and the rates per (labeling, field), shared by every experiment of a coverage."""

    def __init__(self, scenario_plan, seq: str):
        from backbone.graph import build_chain

        self.plan = scenario_plan
        self.seq = seq
        self.G = build_chain(seq)
        self._rates = {}
        self._schemes = {}

    def scheme(self, row):
        key = row.labeling
        if key not in self._schemes:
            self._schemes[key] = row.labeling_choice.load()
        return self._schemes[key]

    def rates(self, row):
        from backbone.relaxation import relaxation_rates

        key = (row.labeling, row.field_mhz)
        if key not in self._rates:
            p = self.plan.scenario.protein
            self._rates[key] = relaxation_rates(
                self.plan.tau_c_ns * 1e-9,
                proton_mhz=row.field_mhz,
                labeling=self.scheme(row),
                s2=p.s2,
                tau_e=p.tau_e_ns * 1e-9,
            )
        return self._rates[key]


def _signals(chain: _Chain, row, target: float, absolute: bool) -> list[tuple[PeakSignal, ...]]:
    """Peaks of ``row``'s experiment in every residue's strip (index residue − 1)."""
    from backbone.experiments import load_experiment, resolve
    from backbone.experiments.walk import segment_amplitude

    model = load_experiment(row.experiment)
    labels = [p.label for p in model.peaks]
    seq = chain.seq
    if not row.feasible:
        absent = tuple(PeakSignal(lab, 0.0, None if not absolute else 0.0, False, row.reason) for lab in labels)
        return [absent] * len(seq)
    scheme, rates = chain.scheme(row), chain.rates(row)
    delays = row.plan.delays
    se = bool(row.plan.sensitivity_enhanced)
    scale = row.signal_to_noise / row.limiting_throughput if absolute and row.limiting_throughput > 0 else None
    segment_cache: dict = {}
    pair_cache: dict = {}
    out = []
    for i in range(1, len(seq) + 1):
        key = (seq[i - 2] if i > 1 else None, seq[i - 1], i == 2)
        if key not in pair_cache:
            resolved = resolve(model, chain.G, i, scheme)
            peaks = []
            for p in resolved.peaks:
                if not p.feasible:
                    peaks.append(PeakSignal(p.label, 0.0, 0.0 if absolute else None, False, p.reason))
                    continue
                amp = float(p.factor)
                for rs in p.segments:
                    sig = rs.signature
                    if sig not in segment_cache:
                        tau = delays[rs.delay] if rs.delay is not None else 0.0
                        segment_cache[sig] = float(
                            segment_amplitude(rs, tau, rates, trosy=bool(row.trosy), sensitivity_enhanced=se)
                        )
                    amp *= segment_cache[sig]
                amp = abs(amp) * float(row.peak_sampling.get(p.label, 1.0))
                if scale is None:
                    peaks.append(PeakSignal(p.label, amp, None, amp > 0, "" if amp > 0 else "zero throughput"))
                else:
                    sn = scale * amp
                    ok = sn >= target * (1.0 - 1e-9)
                    why = "" if ok else f"S/N {sn:.3g} below the target {target:g}"
                    peaks.append(PeakSignal(p.label, amp, sn, ok, why))
            pair_cache[key] = tuple(peaks)
        out.append(pair_cache[key])
    return out


def _split(label: str):
    """("CA", -1) for "CA(i-1)", ("CA", 0) for "CA(i)", else None."""
    if label.endswith("(i-1)"):
        return label[:-5], -1
    if label.endswith("(i)"):
        return label[:-3], 0
    return None


class _Table:
    """Detectability of each link side per experiment, as boolean arrays over the links (internal)."""

    def __init__(self, seq: str, d2o: bool, rows, signals):
        n = len(seq)
        self.n_links = max(n - 1, 0)
        self.seq = seq
        self.d2o = d2o
        self.rows = rows
        self.signals = signals  # experiment -> list over residues of PeakSignal tuples
        # side[exp][X] = (sequential in strip i, intra in strip i-1), arrays over links i = 2..n
        self.side = {}
        for r in rows:
            sig = signals[r.experiment]
            per = {}
            for X in LINK_NUCLEI:
                s = np.zeros(self.n_links, dtype=bool)
                t = np.zeros(self.n_links, dtype=bool)
                has_s = has_t = False
                for k in range(self.n_links):
                    strip_i, strip_prev = sig[k + 1], sig[k]
                    for p in strip_i:
                        if _split(p.label) == (X, -1):
                            has_s = True
                            s[k] |= p.detectable
                    for p in strip_prev:
                        if _split(p.label) == (X, 0):
                            has_t = True
                            t[k] |= p.detectable
                per[X] = (s if has_s else None, t if has_t else None)
            self.side[r.experiment] = per

    def evaluate(self, names):
        """(detectable bool array, nucleus count array) of the links for the experiments ``names``."""
        count = np.zeros(self.n_links, dtype=int)
        for X in LINK_NUCLEI:
            s = np.zeros(self.n_links, dtype=bool)
            t = np.zeros(self.n_links, dtype=bool)
            for e in names:
                a, b = self.side[e][X]
                if a is not None:
                    s |= a
                if b is not None:
                    t |= b
            count += s & t
        return count > 0, count

    def links(self, names, target: float) -> tuple[Link, ...]:
        out = []
        seq = self.seq
        for k in range(self.n_links):
            prev, res = k + 1, k + 2
            nuclei = []
            for X in LINK_NUCLEI:
                s_ok = any(self.side[e][X][0] is not None and self.side[e][X][0][k] for e in names)
                t_ok = any(self.side[e][X][1] is not None and self.side[e][X][1][k] for e in names)
                if s_ok and t_ok:
                    nuclei.append(X)
            if nuclei:
                out.append(Link(prev, res, True, tuple(nuclei), "", f"matched by {', '.join(_NAME[x] for x in nuclei)}"))
                continue
            category, reason = self._why(prev, res, names, target)
            out.append(Link(prev, res, False, (), category, reason))
        return tuple(out)

    def _why(self, prev: int, res: int, names, target: float) -> tuple[str, str]:
        seq = self.seq
        if prev == 1:
            return "N-terminus", f"residue 1 is the N-terminus: its NH3+ gives no strip to match {seq[1]}{res} against"
        for r in (res, prev):
            if seq[r - 1] == "P":
                return "Pro", f"P{r} is proline: no amide proton, no strip"
        if self.d2o:
            return "no amide H", "the sample is in D2O: no amide protons, no strips"
        if not names:
            return "no experiment", "no experiment in the set"
        parts, categories = [], []
        for X in LINK_NUCLEI:
            seq_peaks = [(e, p) for e in names for p in self.signals[e][res - 1] if _split(p.label) == (X, -1)]
            intra = [(e, p) for e in names for p in self.signals[e][prev - 1] if _split(p.label) == (X, 0)]
            if not seq_peaks or not intra:
                continue
            if X == "CB" and seq[prev - 1] == "G":
                parts.append(f"G{prev} has no CB")
                categories.append("Gly lacking CB")
                continue
            for side, peaks, strip in (("sequential", seq_peaks, res), ("intra-residue", intra, prev)):
                if any(p.detectable for _, p in peaks):
                    continue
                e, best = max(peaks, key=lambda ep: ep[1].throughput)
                label = best.label.replace("(i-1)", f"({prev})").replace("(i)", f"({prev})")
                if best.throughput > 0:
                    parts.append(f"{label} in strip {seq[strip - 1]}{strip} ({e}): {best.reason}")
                    categories.append("peak below target")
                else:
                    parts.append(f"{label} in strip {seq[strip - 1]}{strip} ({e}) absent: {best.reason}")
                    categories.append("infeasible")
                break
        if not parts:
            return "no experiment", "no experiment in the set gives both peaks of a CA, CB or C' link"
        order = ("peak below target", "infeasible", "Gly lacking CB")
        category = next(c for c in order if c in categories)
        return category, "; ".join(parts)


_NAME = {"CA": "CA", "CB": "CB", "C": "C'"}


def _pick_rows(scenario_plan, labeling, field_mhz, experiments):
    """One row per experiment under ``labeling``: at ``field_mhz``, or at the fastest field."""
    lab = scenario_plan.labeling_label(labeling)
    names = scenario_plan.experiments if experiments is None else experiments
    if isinstance(names, str) or not isinstance(names, Sequence):
        raise BackboneError(f"experiments = {names!r} is not allowed; give a list of experiment names")
    rows = []
    for n in names:
        if field_mhz is not None:
            rows.append(scenario_plan.get(n, lab, field_mhz))
            continue
        candidates = [scenario_plan.get(n, lab, f) for f in scenario_plan.fields_mhz]
        rows.append(_fastest(candidates))
    return lab, rows


def _fastest(candidates):
    """The feasible row with the shortest time (largest limiting throughput without times), else the first."""
    feasible = [r for r in candidates if r.feasible]
    if not feasible:
        return candidates[0]
    if all(r.time is not None for r in feasible):
        return min(feasible, key=lambda r: r.time_s)
    return max(feasible, key=lambda r: r.limiting_throughput)


def _build(chain, scenario_plan, rows):
    absolute = scenario_plan.has_times
    target = scenario_plan.target_signal_to_noise
    signals = {r.experiment: _signals(chain, r, target, absolute) for r in rows}
    d2o = scenario_plan.scenario.sample.solvent == "D2O"
    return _Table(chain.seq, d2o, rows, signals)


def _coverage(chain, scenario_plan, lab, rows, table, names) -> Coverage:
    seq = chain.seq
    residues = tuple(
        ResidueStrip(i + 1, seq[i], MappingProxyType({e: table.signals[e][i] for e in names})) for i in range(len(seq))
    )
    notes = () if scenario_plan.has_times else (_NO_ABSOLUTE,)
    return Coverage(
        labeling=lab,
        experiments=tuple(r for r in rows if r.experiment in names),
        target_signal_to_noise=scenario_plan.target_signal_to_noise,
        absolute=scenario_plan.has_times,
        sequence=seq,
        residues=residues,
        links=table.links(list(names), scenario_plan.target_signal_to_noise),
        notes=notes,
    )


def walk_coverage(scenario_plan, *, labeling=None, field_mhz=None, experiments=None, sequence=None) -> Coverage:
    """Walk coverage of the protein's sequence by planned experiments (module docstring).

    scenario_plan : :class:`backbone.planning.ScenarioPlan`
    labeling : label, scheme id or index in the plan; default the first.
    field_mhz : float [MHz], optional — every experiment at this field; default each at its fastest field.
    experiments : list of str, optional — a subset of the planned experiments; default all.
    sequence : str, optional — another one-letter sequence (default the scenario's).

    Raises BackboneError for a plan without a sequence, an unknown labeling, field or experiment.
    """
    from backbone.planning import ScenarioPlan

    if not isinstance(scenario_plan, ScenarioPlan):
        raise BackboneError(f"walk_coverage needs a ScenarioPlan (backbone.planning.plan_scenario), got {scenario_plan!r}")
    seq = _sequence(scenario_plan, sequence)
    lab, rows = _pick_rows(scenario_plan, labeling, field_mhz, experiments)
    chain = _Chain(scenario_plan, seq)
    table = _build(chain, scenario_plan, rows)
    return _coverage(chain, scenario_plan, lab, rows, table, [r.experiment for r in rows])


def coverage_table(coverage: Coverage) -> str:
    """Readable text: the coverage, the experiments it used, and every break of the walk with its reason."""
    if not isinstance(coverage, Coverage):
        raise BackboneError(f"coverage_table needs a Coverage, got {coverage!r}")
    n_ok = sum(link.detectable for link in coverage.links)
    exps = ", ".join(
        f"{r.experiment} ({r.field_mhz:g} MHz{', TROSY' if r.trosy else ''}"
        + (f", {r.time_h:.1f} h)" if r.time_h is not None else ")")
        for r in coverage.experiments
    )
    frac = coverage.fraction
    lines = [
        f"Walk coverage under {coverage.labeling}: {n_ok}/{len(coverage.links)} links"
        + (f" ({frac:.0%})" if math.isfinite(frac) else "")
        + f", {coverage.confirmed} confirmed by a second nucleus; target S/N {coverage.target_signal_to_noise:g}",
        f"experiments: {exps}",
    ]
    if coverage.breaks:
        lines.append("breaks:")
        for link in coverage.breaks:
            s = coverage.sequence
            lines.append(
                f"  {s[link.previous - 1]}{link.previous}-{s[link.residue - 1]}{link.residue}: "
                f"[{link.category}] {link.reason}"
            )
    for n in coverage.notes:
        lines.append(f"Note: {n}")
    return "\n".join(lines)


# ---------------------------------------------------------------------------------------------------------
# Recommendation
# ---------------------------------------------------------------------------------------------------------


def recommend(scenario_plan, *, labelings=None, fields=None, budget_h=None, sequence=None) -> Recommendation:
    """The set of experiments that maximizes walk coverage within the time budget (module docstring).

    scenario_plan : :class:`backbone.planning.ScenarioPlan` with a calibration (times are needed).
    labelings : labels or scheme ids to consider (default every labeling of the plan).
    fields : fields [MHz] an experiment may be run at (default every field of the plan).
    budget_h : float [h], > 0 — default ``goals.time_budget_h``.
    sequence : str, optional — default the scenario's sequence.

    Raises BackboneError without a calibration (no absolute times), for a bad budget, an unknown labeling or
    field, or a scenario without a sequence.
    """
    from backbone.planning import ScenarioPlan

    if not isinstance(scenario_plan, ScenarioPlan):
        raise BackboneError(f"recommend needs a ScenarioPlan (backbone.planning.plan_scenario), got {scenario_plan!r}")
    if not scenario_plan.has_times:
        raise BackboneError(
            "recommend needs measurement times, and the scenario has no [spectrometer.calibration]: only relative "
            "sensitivities are known; add a calibration (an HSQC's S/N in a known time) to choose within a budget"
        )
    budget = scenario_plan.time_budget_h if budget_h is None else budget_h
    if isinstance(budget, bool) or not isinstance(budget, (int, float)) or not math.isfinite(budget) or budget <= 0:
        raise BackboneError(f"budget_h = {budget_h!r} is not allowed; give a number of hours > 0")
    budget = float(budget)
    labs = scenario_plan.labelings if labelings is None else [scenario_plan.labeling_label(x) for x in labelings]
    if fields is None:
        allowed = scenario_plan.fields_mhz
    else:
        allowed = []
        for f in fields:
            match = [g for g in scenario_plan.fields_mhz if isinstance(f, (int, float)) and math.isclose(float(f), g)]
            if not match:
                raise BackboneError(
                    f"field {f!r} is not in this plan; fields are {', '.join(f'{g:g}' for g in scenario_plan.fields_mhz)} MHz"
                )
            allowed.append(match[0])
    seq = _sequence(scenario_plan, sequence)
    chain = _Chain(scenario_plan, seq)

    results = []
    for lab in labs:
        rows, rejected = [], []
        for name in scenario_plan.experiments:
            cands = [scenario_plan.get(name, lab, f) for f in allowed]
            best = _fastest(cands)
            if not best.feasible:
                rejected.append(Rejected(lab, name, "infeasible", f"infeasible under {lab}: {best.reason}"))
                continue
            rows.append(best)
        table = _build(chain, scenario_plan, rows) if rows else _Table(seq, False, [], {})
        times = {r.experiment: r.time_h for r in rows}
        best_key, best_set, minimal = None, (), None
        names = [r.experiment for r in rows]
        for k in range(len(names) + 1):
            for subset in itertools.combinations(names, k):
                total = sum(times[e] for e in subset)
                if total > budget:
                    continue
                ok, count = table.evaluate(subset)
                links, confirmed = int(ok.sum()), int((count >= 2).sum())
                key = (links, confirmed, -total, -k)
                if best_key is None or key > best_key:
                    best_key, best_set = key, subset
                mkey = (links, -total, -k)
                if minimal is None or mkey > minimal[0]:
                    minimal = (mkey, subset)
        results.append((lab, rows, rejected, table, best_key, best_set, minimal[1]))

    results.sort(key=lambda r: r[4], reverse=True)
    lab, rows, rejected, table, key, chosen_names, minimal = results[0]
    links, confirmed, neg_total, _ = key
    total = -neg_total
    by_name = {r.experiment: r for r in rows}
    chosen = tuple(
        ChosenExperiment(
            e,
            by_name[e].field_mhz,
            bool(by_name[e].trosy),
            float(by_name[e].time_h),
            str(by_name[e].limited_by),
            by_name[e].delays,
            by_name[e],
        )
        for e in chosen_names
    )
    base_ok, base_count = table.evaluate(chosen_names)
    for r in rows:
        if r.experiment in chosen_names:
            continue
        if r.time_h > budget:
            rejected.append(
                Rejected(lab, r.experiment, "over budget", f"{r.time_h:.1f} h alone exceeds the budget of {budget:g} h")
            )
            continue
        ok, count = table.evaluate((*chosen_names, r.experiment))
        adds = int(ok.sum()) > int(base_ok.sum()) or int((count >= 2).sum()) > int((base_count >= 2).sum())
        if adds and total + r.time_h > budget:
            rejected.append(
                Rejected(
                    lab,
                    r.experiment,
                    "over budget",
                    f"adding it ({r.time_h:.1f} h) would bring the total to {total + r.time_h:.1f} h > {budget:g} h",
                )
            )
        elif adds:  # pragma: no cover - the exhaustive search would have taken it
            rejected.append(Rejected(lab, r.experiment, "over budget", "does not fit with the chosen set"))
        else:
            rejected.append(
                Rejected(
                    lab,
                    r.experiment,
                    "adds no coverage",
                    "no new link and no link confirmed by a further nucleus; its peaks duplicate the chosen set's",
                )
            )
    for other in results[1:]:
        o_lab, _, _, _, o_key, o_set, _ = other
        if o_key[0] < links:
            cat, why = "lower coverage", f"best set ({', '.join(o_set) or 'none'}) makes {o_key[0]} links vs {links}"
        elif o_key[1] < confirmed:
            cat, why = "fewer confirmed links", f"same coverage, {o_key[1]} links confirmed by a second nucleus vs {confirmed}"
        else:
            cat, why = "longer", f"same coverage, {-o_key[2]:.1f} h vs {total:.1f} h"
        rejected.append(Rejected(o_lab, "", cat, why))

    coverage = _coverage(chain, scenario_plan, lab, rows, table, list(chosen_names))
    n_links = table.n_links
    minimal_time = float(sum(by_name[e].time_h for e in minimal))
    if not chosen:
        reason = f"no experiment under {lab} fits the budget of {budget:g} h with a link it can make"
    else:
        reason = (
            f"under {lab}, {', '.join(chosen_names)} make {links} of {n_links} links "
            f"({links / n_links:.0%}), {confirmed} confirmed by a second nucleus, in {total:.1f} h of {budget:g} h"
            if n_links
            else f"under {lab}, {', '.join(chosen_names)} in {total:.1f} h"
        )
        if set(minimal) != set(chosen_names):
            reason += f"; the shortest set with the same coverage is {', '.join(minimal)} ({minimal_time:.1f} h)"
    return Recommendation(
        labeling=lab,
        budget_h=budget,
        chosen=chosen,
        coverage=coverage,
        minimal=tuple(minimal),
        minimal_time_h=minimal_time,
        reason=reason,
        rejected=tuple(rejected),
    )


def recommendation_text(rec: Recommendation) -> str:
    """Readable text of a :class:`Recommendation`: the set with field, TROSY, delays and time; the reason; the
    alternatives rejected and why; the breaks of the walk."""
    if not isinstance(rec, Recommendation):
        raise BackboneError(f"recommendation_text needs a Recommendation, got {rec!r}")
    lines = [f"Recommended under {rec.labeling} (budget {rec.budget_h:g} h, total {rec.total_time_h:.1f} h):"]
    for c in rec.chosen:
        delays = ", ".join(f"{k} {v * 1e3:.2f} ms" for k, v in c.delays.items() if v is not None)
        lines.append(
            f"  {c.experiment:<12} {c.field_mhz:g} MHz{' TROSY' if c.trosy else ''}  {c.time_h:.1f} h "
            f"({c.limited_by}-limited)  delays: {delays}"
        )
    lines.append(f"Why: {rec.reason}")
    if rec.rejected:
        lines.append("Not chosen:")
        for r in rec.rejected:
            what = r.experiment or f"labeling {r.labeling}"
            lines.append(f"  {what}: [{r.category}] {r.why}")
    lines.append(coverage_table(rec.coverage))
    return "\n".join(lines)
