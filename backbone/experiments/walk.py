"""Walking an experiment model on the chain graph: per-step efficiency and per-peak throughput.

:func:`resolve` places a model on residue i of a chain graph (and its predecessor i−1) under a labeling
scheme: it finds the nodes each peak's pathway visits, the active and passive couplings of every period from
the graph's edges (so CB–CG is read by residue type, absent for Gly, Ala, Ser, Cys; CA–CB absent for Gly), and
decides feasibility. :func:`walk` then evaluates the amplitudes with the transfer algebra of
:mod:`backbone.transfer` and the rates of a :class:`~backbone.relaxation.RateSet`, for every condition of the
RateSet's grid at once (arrays of its shape; delays may be arrays too).

Throughput
----------
The throughput of a peak is

    start factor × isotopomer fraction × ∏ over the steps of its pathway of the step's amplitude,

signed by the peak's declared sign. Step amplitudes are those of :mod:`backbone.transfer`: exact 2×2 (one
coupling) or Kronecker (several partners, :func:`~backbone.transfer.branch_transfer`) transfer amplitudes with
the in-phase and anti-phase rates of the coherences the step names; real-time evolution and detection enter by
their matched-filter sampling factors; a constant-time evolution *within* a transfer period costs nothing as
long as the period is at least its t_max, and is sampled semi-constant-time beyond
(:func:`~backbone.transfer.semi_constant_time_factor` with the period as the coupling time).

Normalization: 1 is a lossless transfer of the amide (or carbon-bound) 1H polarization through a
*sensitivity-enhanced* sequence, so every throughput lies in [−1, 1]. A sensitivity-enhancement step therefore
contributes its extra-period transfer amplitude with gain 1, a plain (non-enhanced) version 1/√2, and the
TROSY selection (one of the two multiplet components) a further 1/2
(:data:`~backbone.transfer.TROSY_COMPONENT_FRACTION`, :data:`~backbone.transfer.SENSITIVITY_ENHANCEMENT_GAIN`,
the rule of :func:`~backbone.transfer.trosy_selection` with ``reference_enhanced=True``).

Starting amplitude: 1 for the amide proton (back-exchanged in every bundled scheme). For a carbon-bound start
(HA, HB) the 1H fraction f of the site: only molecules with 1H there contribute. CHn groups are treated as one
proton (CH): the refocused INEPT from n protons gives n·sin(πJτ)cos^(n−1)(πJτ), whose maximum is 1 for CH and
CH2 and 1.15 for CH3, so at optimal delays the CH treatment is exact for CH and CH2 and within 15 % for Ala's
β-methyl. A start proton that is mostly 2H (f ≤ 1/2, e.g. perdeuteration) makes the peak infeasible: its
relaxation is not that of a protonated site and the engine does not report it.

Isotopomer fraction: the product of the 13C/15N fractions of the distinct heavy nuclei a pathway visits (e.g.
0.99 × 0.99 for N and C′ in HNCO at 99 % enrichment). A passive coupling to a partner with magnetic fraction f
gives f·cos(πJτ) + (1 − f), the isotopomer average. The cos factors of the *other* active partners of a
branching step are taken at full enrichment.

Feasibility: a needed site not labeled (reported with its fraction, e.g. natural abundance 0.0107), a start
proton removed by deuteration, proline at i (no amide proton) in an amide-detected experiment, the N-terminal
residue (its NH3+ exchanges fast; no preceding residue), a nucleus absent from the residue (Gly has no CB)
give that peak throughput 0 with a reason — never an exception. Errors in the model or the input (an unknown
residue, a RateSet of another scheme, a coherence the engine does not compute yet) raise
:class:`~backbone.errors.BackboneError`.

Typical residue: condition-level plans use :data:`TYPICAL_SEQUENCE` ``"ALK"`` at residue 3, a Lys preceded by
a Leu: both have one aliphatic CG (so CB–CG is a passive coupling in both), neither is Gly or Pro.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from functools import lru_cache
from types import MappingProxyType

import numpy as np

from backbone.errors import BackboneError
from backbone.experiments.model import (
    ExperimentModel,
    Segment,
    coherence_for,
    known_coherences,
    load_experiment,
)
from backbone.graph.couplings import COUPLINGS
from backbone.transfer import (
    SENSITIVITY_ENHANCEMENT_GAIN,
    TROSY_COMPONENT_FRACTION,
    branch_transfer,
    constant_time_factor,
    decoupled_rate,
    detection_factor,
    homonuclear_transfer,
    multiple_quantum,
    passive_factor,
    real_time_factor,
    semi_constant_time_factor,
    transfer_amplitudes,
)
from backbone.transfer.steps import _branch_transferred_unchecked, _cos_unchecked, _transfer_unchecked

__all__ = [
    "TYPICAL_SEQUENCE",
    "TYPICAL_RESIDUE",
    "typical_chain",
    "NoRelaxation",
    "ResolvedSegment",
    "ResolvedPeak",
    "ResolvedWalk",
    "PeakResult",
    "StepResult",
    "WalkResult",
    "resolve",
    "segment_amplitude",
    "peak_amplitudes",
    "walk",
]

#: Chain and residue used when a plan is made for conditions rather than a protein (module docstring).
TYPICAL_SEQUENCE = "ALK"
TYPICAL_RESIDUE = 3

_HEAVY = {"N", "CA", "C", "CB", "CG"}


@lru_cache(maxsize=1)
def typical_chain():
    """The chain graph of :data:`TYPICAL_SEQUENCE` (built once)."""
    from backbone.graph import build_chain

    return build_chain(TYPICAL_SEQUENCE)


# ---------------------------------------------------------------------------------------------------------
# Rate sources
# ---------------------------------------------------------------------------------------------------------


class NoRelaxation:
    """A rate source with every coherence rate zero: the textbook (no-relaxation) limit.

    ``shape`` is the condition shape of the arrays returned (default scalar).
    """

    labeling = None
    unlabeled: Mapping = MappingProxyType({})

    def __init__(self, shape=()):
        self.shape = tuple(shape)

    def coherence(self, name: str) -> np.ndarray:
        if name not in known_coherences():
            raise BackboneError(f"unknown coherence {name!r}; known are {', '.join(known_coherences())}")
        return np.zeros(self.shape)


def _rate(rates, spec, where: str) -> np.ndarray:
    """Rate [s⁻¹] of a coherence name or of a decoupled pair (mean of the two, :func:`decoupled_rate`)."""
    if isinstance(spec, tuple):
        return decoupled_rate(_rate(rates, spec[0], where), _rate(rates, spec[1], where))
    try:
        return np.asarray(rates.coherence(spec), dtype=float)
    except BackboneError as err:
        raise BackboneError(f"{where}: {err}") from err


# ---------------------------------------------------------------------------------------------------------
# Resolution on the graph
# ---------------------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class ResolvedSegment:
    """One step on one peak's pathway, with its couplings read from the graph for that residue.

    ``delay``: the named delay the amplitude depends on (a step's own, or the host's for an evolution
    ``within`` it), None if fixed. ``j_active``: |J| [Hz] of the active couplings of the transverse spin in this
    period (all present partners for a branching step; one entry otherwise; 0 for a split whose partner is
    absent), ``k`` the index of this pathway's coupling among them. ``passive``: (|J| [Hz], partner magnetic
    fraction) of the passive couplings of the transverse spin, per period (one tuple per period).
    ``transverse``: the transverse atom per period, for the coherence lookups. ``stay``: for a carbon split,
    whether this pathway keeps its carbon.
    """

    segment: Segment
    delay: str | None
    j_active: tuple[float, ...] = ()
    k: int = 0
    passive: tuple[tuple[tuple[float, float], ...], ...] = ((),)
    transverse: tuple[str, ...] = ()
    stay: bool = False

    @property
    def step(self):
        return self.segment.step

    @property
    def signature(self):
        """Everything the amplitude depends on besides rates and delay values (rates are per coherence name)."""
        return (self.step.index, self.segment.pair, self.j_active, self.k, self.passive, self.transverse, self.stay)


@dataclass(frozen=True)
class ResolvedPeak:
    """A peak placed on the graph: feasibility, reason, start × isotopomer factor, resolved segments."""

    label: str
    sign: int
    feasible: bool
    reason: str
    factor: float
    segments: tuple[ResolvedSegment, ...]
    nodes: tuple


@dataclass(frozen=True)
class ResolvedWalk:
    """A model placed on residue ``residue`` of a chain under a labeling scheme (see :func:`resolve`)."""

    model: ExperimentModel
    residue: int
    resname: str
    labeling: str
    peaks: tuple[ResolvedPeak, ...]
    feasible: bool
    reason: str

    def peak(self, label: str) -> ResolvedPeak:
        for p in self.peaks:
            if p.label == label:
                return p
        self.model.peak(label)  # raises with the known labels
        raise AssertionError  # pragma: no cover

    @property
    def feasible_peaks(self) -> tuple[ResolvedPeak, ...]:
        return tuple(p for p in self.peaks if p.feasible)


def _scheme_id(scheme) -> str:
    return str(getattr(scheme, "id", type(scheme).__name__))


def _unlabeled_reason(site: str, scheme) -> str:
    from backbone.constants import NATURAL_ABUNDANCE
    from backbone.labeling.scheme import SITE_ELEMENT

    element = SITE_ELEMENT[site]
    iso = {"H": "1H", "C": "13C", "N": "15N"}[element]
    f = float(scheme.fraction(site))
    natural = abs(f - NATURAL_ABUNDANCE[iso].value) < 1e-9
    if element == "H":
        return f"needs 1H at site {site}: scheme {_scheme_id(scheme)!r} has it {100 * (1 - f):.3g} % 2H (1H fraction {f:.3g})"
    what = " (natural abundance)" if natural else ""
    return f"needs {iso} at site {site}: scheme {_scheme_id(scheme)!r} has fraction {f:.4g}{what}"


def _node(G, residue: int, atom: str):
    """Graph node of ``atom`` on ``residue`` (HA stands for HA2 of Gly), or None."""
    if (residue, atom) in G:
        return (residue, atom)
    if atom == "HA" and (residue, "HA2") in G:
        return (residue, "HA2")
    return None


def _absent_reason(G, residue: int, atom: str, target: int) -> str:
    if residue < 1 or not any(n[0] == residue for n in G):
        return f"residue {target} has no preceding residue (it is the N-terminus)"
    resname = G.nodes[(residue, "N")]["resname"]
    if atom == "H" and resname == "P":
        return f"residue {residue} is proline ({resname}{residue}): it has no amide proton"
    return f"{resname}{residue} has no {atom}"


def _passive_couplings(G, scheme, node, kinds, exclude) -> tuple[tuple[float, float], ...]:
    wanted = set()
    for entry in kinds:
        wanted.update(k for k in COUPLINGS if k == entry or k.split("[", 1)[0] == entry)
    out = []
    for partner, data in G.adj[node].items():
        if data["kind"] in wanted and partner not in exclude:
            out.append((abs(float(data["j_hz"])), float(scheme.fraction(G.nodes[partner]["site"]))))
    return tuple(sorted(out))


def _active_j(G, u, v, kind: str, where: str) -> float:
    if not G.has_edge(u, v):
        raise BackboneError(f"{where}: the chain graph has no {kind} coupling between {u} and {v}")
    data = G.edges[u, v]
    if data["kind"] != kind:
        raise BackboneError(f"{where}: the coupling between {u} and {v} is {data['kind']}, not {kind}")
    return abs(float(data["j_hz"]))


def resolve(model, G, residue: int, scheme) -> ResolvedWalk:
    """Place ``model`` (an ExperimentModel or a name/path for :func:`~backbone.experiments.load_experiment`) on
    residue ``residue`` of chain graph ``G`` under labeling ``scheme``. Pure graph and labeling work; no rates.

    Raises :class:`BackboneError` for a residue not in the chain; infeasible walks are reported, not raised.
    """
    model = load_experiment(model)
    if isinstance(residue, bool) or not isinstance(residue, (int, np.integer)):
        raise BackboneError(f"residue must be an integer residue number, got {residue!r}")
    residue = int(residue)
    if (residue, "N") not in G:
        numbers = sorted({n[0] for n in G})
        raise BackboneError(f"residue {residue} is not in the chain (residues {numbers[0]}..{numbers[-1]})")
    resname = G.nodes[(residue, "N")]["resname"]
    missing_sites = [s for s in model.needs if not scheme.is_labeled(s)]
    if missing_sites:
        reason = "; ".join(_unlabeled_reason(s, scheme) for s in missing_sites)
        peaks = tuple(ResolvedPeak(p.label, p.sign, False, reason, 0.0, (), ()) for p in model.peaks)
        return ResolvedWalk(model, residue, resname, _scheme_id(scheme), peaks, False, reason)
    peaks = tuple(_resolve_peak(model, G, residue, scheme, p) for p in model.peaks)
    feasible = any(p.feasible for p in peaks)
    if feasible:
        absent = [f"{p.label} absent: {p.reason}" for p in peaks if not p.feasible]
        reason = "; ".join(absent)
    else:
        reason = "; ".join(dict.fromkeys(p.reason for p in peaks))
    return ResolvedWalk(model, residue, resname, _scheme_id(scheme), peaks, feasible, reason)


def _resolve_peak(model: ExperimentModel, G, residue: int, scheme, peak) -> ResolvedPeak:
    segments = model.paths[peak.label]

    def fail(reason):
        return ResolvedPeak(peak.label, peak.sign, False, reason, 0.0, (), ())

    # Every node the pathway visits must exist.
    positions = [(peak.start.offset, peak.start.atom)] + [seg.after for seg in segments]
    nodes = []
    for off, atom in positions:
        node = _node(G, residue + off, atom)
        if node is None:
            return fail(_absent_reason(G, residue + off, atom, residue))
        nodes.append(node)
    start = nodes[0]
    if G.nodes[start].get("terminal"):
        return fail(f"residue {start[0]} is the N-terminus: its NH3+ protons exchange fast with water and are not observed")
    if peak.start.atom == "H":
        factor = 1.0
    else:
        site = G.nodes[start]["site"]
        factor = float(scheme.fraction(site))
        if factor <= 0.0:  # fractional deuteration scales the start; full deuteration leaves nothing to start on
            return fail(f"start proton {peak.start.label}: {_unlabeled_reason(site, scheme)}")
    for node in dict.fromkeys(nodes):
        if G.nodes[node]["site"] in _HEAVY:
            factor *= float(scheme.fraction(G.nodes[node]["site"]))
    host_delay = {s.name: s.delay for s in model.steps}

    out = []
    for seg in segments:
        step = seg.step
        where = f"{step.where}, residue {residue}"
        before = _node(G, residue + seg.before[0], seg.before[1])
        after = _node(G, residue + seg.after[0], seg.after[1])
        kind = step.kind
        if kind in ("shift-evolution", "detect"):
            delay = host_delay[step.within] if step.within else None
            passive = ((),)
            if kind == "shift-evolution" and step.passive:
                passive = (_passive_couplings(G, scheme, before, step.passive, ()),)
            out.append(ResolvedSegment(seg, delay, transverse=(step.at.atom,), passive=passive))
            continue
        if kind == "multiple-quantum":
            passive = (_passive_couplings(G, scheme, after, step.passive, {before}),)
            out.append(ResolvedSegment(seg, step.delay, transverse=(step.to[0].atom,), passive=passive))
            continue
        pairs = step.pairs
        if kind == "carbon-split":
            many_is_to = len(step.to) > 1
            one = step.from_[0] if many_is_to else step.to[0]
            other = next(a for a in (step.to if many_is_to else step.from_) if a != one)
            pair_atom = pairs[seg.pair][1] if many_is_to else pairs[seg.pair][0]
            stay = pair_atom == one
            off = seg.before[0]
            ca = _node(G, residue + off, one.atom)
            cb = _node(G, residue + off, other.atom)
            j = _active_j(G, ca, cb, step.active[0], where) if cb is not None else 0.0
            if step.periods == 2:
                first = ca if stay else cb
                passive = (
                    _passive_couplings(G, scheme, first, step.passive, {ca, cb}),
                    _passive_couplings(G, scheme, ca, step.passive, {ca, cb}),
                )
                transverse = (one.atom if stay else other.atom, one.atom)
            else:
                passive = (_passive_couplings(G, scheme, ca, step.passive, {ca, cb}),)
                transverse = (one.atom,)
            out.append(ResolvedSegment(seg, step.delay, (j,), 0, passive, transverse, stay))
            continue
        # inept / transfer / refocus / sensitivity-enhancement
        build = kind in ("inept", "transfer")
        transverse_node = before if build else after
        transverse_atom = transverse_node[1] if transverse_node[1] != "HA2" else "HA"
        if len(step.from_) == 1 and len(step.to) > 1 or len(step.to) == 1 and len(step.from_) > 1 and kind == "refocus":
            # One spin coupled to several partners at once: all present partners evolve.
            js, k = [], None
            for n, ((a, b), ckind) in enumerate(zip(pairs, step.active)):
                partner_atom = b if build else a
                fixed = seg.before if build else seg.after
                rel = fixed[0]
                poff = partner_atom.offset if partner_atom.offset is not None else rel
                partner = _node(G, residue + poff, partner_atom.atom)
                if partner is None:
                    continue
                if n == seg.pair:
                    k = len(js)
                js.append(_active_j(G, transverse_node, partner, ckind, where))
            partners = set()
            for a, b in pairs:
                pa = b if build else a
                pn = _node(G, residue + (pa.offset if pa.offset is not None else seg.before[0]), pa.atom)
                if pn is not None:
                    partners.add(pn)
            passive = (_passive_couplings(G, scheme, transverse_node, step.passive, partners),)
            out.append(ResolvedSegment(seg, step.delay, tuple(js), k, passive, (transverse_atom,)))
            continue
        partner = after if build else before
        if kind in ("refocus", "sensitivity-enhancement") and before == after:
            # Refocusing on the spin the pathway already sits on: the partner is the step's other atom.
            a, _ = pairs[seg.pair]
            partner = _node(G, residue + (a.offset if a.offset is not None else seg.before[0]), a.atom)
        if kind == "sensitivity-enhancement":
            transverse_node = after
            a, _ = pairs[seg.pair]
            partner = _node(G, residue + (a.offset if a.offset is not None else seg.before[0]), a.atom)
            transverse_atom = after[1]
        if partner is None:
            return fail(_absent_reason(G, residue, pairs[seg.pair][0].atom, residue))
        j = _active_j(G, transverse_node, partner, step.active[seg.pair], where)
        passive = (_passive_couplings(G, scheme, transverse_node, step.passive, {partner}),)
        out.append(ResolvedSegment(seg, step.delay, (j,), 0, passive, (transverse_atom,)))
    return ResolvedPeak(peak.label, peak.sign, True, "", factor, tuple(out), tuple(nodes))


# ---------------------------------------------------------------------------------------------------------
# Amplitudes
# ---------------------------------------------------------------------------------------------------------


def _passive(tau, couplings, checked: bool = True) -> np.ndarray:
    """∏ (f cos(πJτ) + 1 − f) over (|J|, f): the isotopomer average of the passive cos factors."""
    out = 1.0
    for j, f in couplings:
        c = passive_factor(tau, (j,)) if checked else _cos_unchecked(tau, j)
        out = out * (f * c + (1.0 - f))
    return np.asarray(out, dtype=float)


def _coh(step, trosy: bool, key: str, atom: str):
    spec = coherence_for(step.coherences(trosy)[key], atom)
    if spec is None:
        raise BackboneError(f"{step.where}: no {key} coherence for transverse {atom}")
    return spec


def segment_amplitude(rs: ResolvedSegment, tau, rates, *, trosy: bool = False, sensitivity_enhanced: bool = True):
    """Amplitude of one resolved segment at delay ``tau`` [s] (its named delay; ignored for fixed steps) with the
    coherence rates of ``rates`` (a RateSet or :class:`NoRelaxation`). Broadcasts ``tau`` against the rates."""
    return _segment_amplitude(rs, tau, rates, trosy, sensitivity_enhanced, True)


def _segment_amplitude(rs: ResolvedSegment, tau, rates, trosy: bool, sensitivity_enhanced: bool, checked: bool):
    """:func:`segment_amplitude`; with ``checked=False`` the coupling periods use the unchecked transfer kernels
    (same values), for the delay search whose τ lies within the delay bounds (≥ 0) and whose rates come from a
    validated RateSet."""
    if checked:
        return _segment_amplitude_checked(rs, tau, rates, trosy, sensitivity_enhanced)
    step = rs.step
    kind = step.kind
    if kind in ("inept", "transfer", "refocus"):
        where = step.where
        atom = rs.transverse[0]
        r_in = _rate(rates, _coh(step, trosy, "inphase", atom), where)
        r_anti = _rate(rates, _coh(step, trosy, "antiphase", atom), where)
        p = _passive(tau, rs.passive[0], False)
        if len(rs.j_active) > 1:
            return _branch_transferred_unchecked(tau, rs.j_active, r_in, r_anti, rs.k) * p
        if kind in ("inept", "transfer"):
            return _transfer_unchecked(tau, rs.j_active[0], r_in, r_anti)[1] * p
        return _transfer_unchecked(tau, rs.j_active[0], r_anti, r_in)[1] * p
    if kind == "carbon-split":
        where = step.where
        j = rs.j_active[0]
        first = rs.transverse[0]
        r_in = _rate(rates, _coh(step, trosy, "inphase", first), where)
        r_anti = _rate(rates, _coh(step, trosy, "antiphase", first), where)
        if step.periods == 1:
            if rs.stay:
                a = _transfer_unchecked(tau, j, r_in, r_anti)[0]
            elif len(step.to) > 1:
                a = _transfer_unchecked(tau, j, r_in, r_anti)[1]
            else:
                a = _transfer_unchecked(tau, j, r_anti, r_in)[1]
            return a * _passive(tau, rs.passive[0], False)
        second = rs.transverse[1]
        r_in2 = _rate(rates, _coh(step, trosy, "inphase", second), where)
        r_anti2 = _rate(rates, _coh(step, trosy, "antiphase", second), where)
        if rs.stay:
            p1 = _transfer_unchecked(tau, j, r_in, r_anti)[0]
            p2 = _transfer_unchecked(tau, j, r_in2, r_anti2)[0]
        else:
            p1 = _transfer_unchecked(tau, j, r_in, r_anti)[1]
            p2 = _transfer_unchecked(tau, j, r_anti2, r_in2)[1]
        return p1 * p2 * _passive(tau, rs.passive[0], False) * _passive(tau, rs.passive[1], False)
    return _segment_amplitude_checked(rs, tau, rates, trosy, sensitivity_enhanced)


def _segment_amplitude_checked(rs: ResolvedSegment, tau, rates, trosy: bool, sensitivity_enhanced: bool):
    step = rs.step
    kind = step.kind
    where = step.where
    if kind == "detect":
        return detection_factor(_rate(rates, _coh(step, trosy, "coherence", rs.transverse[0]), where), step.t_max_s)
    if kind == "shift-evolution":
        r = _rate(rates, _coh(step, trosy, "coherence", rs.transverse[0]), where)
        if step.mode == "real-time":
            return real_time_factor(r, step.t_max_s)
        if step.within:
            return semi_constant_time_factor(r, step.t_max_s, tau)
        return constant_time_factor(step.fixed_delay_s, r) * _passive(step.fixed_delay_s, rs.passive[0])
    if kind == "multiple-quantum":
        t = step.fixed_delay_s if step.delay is None else tau
        return multiple_quantum(t, _rate(rates, _coh(step, trosy, "coherence", rs.transverse[0]), where)) * _passive(
            t, rs.passive[0]
        )
    if kind == "sensitivity-enhancement":
        gain = 1.0 if sensitivity_enhanced else 1.0 / float(SENSITIVITY_ENHANCEMENT_GAIN)
        if trosy:
            gain *= float(TROSY_COMPONENT_FRACTION)
        if not sensitivity_enhanced:
            return np.broadcast_to(np.asarray(gain), np.broadcast_shapes(np.shape(tau), tuple(getattr(rates, "shape", ()))))
        r_anti = _rate(rates, _coh(step, trosy, "antiphase", rs.transverse[0]), where)
        r_in = _rate(rates, _coh(step, trosy, "inphase", rs.transverse[0]), where)
        amp = transfer_amplitudes(tau, rs.j_active[0], r_anti, r_in, direction="refocus").transferred
        return gain * amp * _passive(tau, rs.passive[0])
    if kind == "carbon-split":
        j = rs.j_active[0]
        first = rs.transverse[0]
        r_in = _rate(rates, _coh(step, trosy, "inphase", first), where)
        r_anti = _rate(rates, _coh(step, trosy, "antiphase", first), where)
        if step.periods == 1:
            many_is_to = len(step.to) > 1
            if rs.stay:
                a = homonuclear_transfer(tau, j, r_in, r_anti).remaining
            elif many_is_to:
                a = homonuclear_transfer(tau, j, r_in, r_anti).transferred
            else:
                a = homonuclear_transfer(tau, j, r_anti, r_in, direction="refocus").transferred
            return a * _passive(tau, rs.passive[0])
        second = rs.transverse[1]
        r_in2 = _rate(rates, _coh(step, trosy, "inphase", second), where)
        r_anti2 = _rate(rates, _coh(step, trosy, "antiphase", second), where)
        if rs.stay:
            p1 = homonuclear_transfer(tau, j, r_in, r_anti).remaining
            p2 = homonuclear_transfer(tau, j, r_in2, r_anti2).remaining
        else:
            p1 = homonuclear_transfer(tau, j, r_in, r_anti).transferred
            p2 = homonuclear_transfer(tau, j, r_anti2, r_in2, direction="refocus").transferred
        return p1 * p2 * _passive(tau, rs.passive[0]) * _passive(tau, rs.passive[1])
    # inept / transfer / refocus
    atom = rs.transverse[0]
    r_in = _rate(rates, _coh(step, trosy, "inphase", atom), where)
    r_anti = _rate(rates, _coh(step, trosy, "antiphase", atom), where)
    build = kind in ("inept", "transfer")
    p = _passive(tau, rs.passive[0])
    if len(rs.j_active) > 1:
        if build:
            amp = branch_transfer(tau, list(rs.j_active), r_in, r_anti, direction="build").transferred[rs.k]
        else:
            amp = branch_transfer(tau, list(rs.j_active), r_anti, r_in, direction="refocus").transferred[rs.k]
        return amp * p
    if build:
        return transfer_amplitudes(tau, rs.j_active[0], r_in, r_anti, direction="build").transferred * p
    return transfer_amplitudes(tau, rs.j_active[0], r_anti, r_in, direction="refocus").transferred * p


def segment_rate(rs: ResolvedSegment, rates, *, trosy: bool = False):
    """The rate [s⁻¹] reported for a step: the evolving coherence's, or the mean of the in-phase and
    anti-phase rates of a coupling period (first period's for a two-period split)."""
    step = rs.step
    where = step.where
    atom = rs.transverse[0] if rs.transverse else step.at.atom
    if step.kind in ("detect", "shift-evolution", "multiple-quantum"):
        return _rate(rates, _coh(step, trosy, "coherence", atom), where)
    spec_in = coherence_for(step.coherences(trosy)["inphase"], atom)
    spec_anti = coherence_for(step.coherences(trosy)["antiphase"], atom)
    return 0.5 * (_rate(rates, spec_in, where) + _rate(rates, spec_anti, where))


def _mode(model: ExperimentModel, trosy, sensitivity_enhanced) -> tuple[bool, bool]:
    if model.trosy_only:
        trosy = True
    elif trosy and not model.trosy_capable:
        raise BackboneError(f"{model.name} ({model.source}) has no TROSY version (trosy_capable = false)")
    se = model.sensitivity_enhanced if sensitivity_enhanced is None else bool(sensitivity_enhanced)
    if se and not any(s.kind == "sensitivity-enhancement" for s in model.steps):
        raise BackboneError(f"{model.name} ({model.source}) has no sensitivity-enhancement step")
    return bool(trosy), se


def _check_rates(resolved: ResolvedWalk, rates) -> None:
    labeling = getattr(rates, "labeling", None)
    if labeling is not None and labeling != resolved.labeling:
        raise BackboneError(
            f"the rates were computed for labeling scheme {labeling!r}, but the walk is under {resolved.labeling!r}"
        )


def peak_amplitudes(resolved: ResolvedWalk, rates, delays: Mapping, *, trosy=False, sensitivity_enhanced=None) -> dict:
    """Unsigned pathway amplitude (factor × ∏ segment amplitudes; the declared sign not applied) of every
    feasible peak, by label, at ``delays`` (name → value [s], float or array)."""
    trosy, se = _mode(resolved.model, trosy, sensitivity_enhanced)
    out = {}
    for p in resolved.feasible_peaks:
        amp = np.asarray(p.factor, dtype=float)
        for rs in p.segments:
            tau = delays[rs.delay] if rs.delay is not None else 0.0
            amp = amp * segment_amplitude(rs, tau, rates, trosy=trosy, sensitivity_enhanced=se)
        out[p.label] = amp
    return out


# ---------------------------------------------------------------------------------------------------------
# Results
# ---------------------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class PeakResult:
    """One peak: ``throughput`` (signed, array of the condition shape; 0 if infeasible), feasibility, reason."""

    label: str
    sign: int
    throughput: np.ndarray
    feasible: bool
    reason: str = ""


@dataclass(frozen=True)
class StepResult:
    """One step: atoms (offset notation), named delay and its value [s], efficiency on the pathway of the
    first feasible peak through it (and per peak), and the rate used [s⁻¹]. None where no feasible peak passes."""

    name: str
    kind: str
    from_: str
    to: str
    delay_name: str | None
    delay_s: object
    efficiency: object
    rate_s: object
    efficiency_by_peak: Mapping = field(default_factory=dict)


@dataclass(frozen=True)
class WalkResult:
    """A walk at given delays: per-peak throughput and per-step records (see :func:`walk`)."""

    experiment: str
    residue: int
    resname: str
    labeling: str
    trosy: bool
    sensitivity_enhanced: bool
    feasible: bool
    reason: str
    delays: Mapping
    peaks: tuple[PeakResult, ...]
    steps: tuple[StepResult, ...]

    def throughput(self, label: str) -> np.ndarray:
        for p in self.peaks:
            if p.label == label:
                return p.throughput
        raise BackboneError(f"{self.experiment}: no peak {label!r}; peaks are {', '.join(p.label for p in self.peaks)}")


def _atoms_label(atoms) -> str:
    return ", ".join(a.label for a in atoms)


def walk(
    model,
    G,
    residue: int,
    scheme,
    rates,
    *,
    delays: Mapping | None = None,
    trosy=False,
    sensitivity_enhanced=None,
    resolved: ResolvedWalk | None = None,
) -> WalkResult:
    """Walk ``model`` on residue ``residue`` (and i−1) of chain ``G`` under ``scheme`` with ``rates``.

    Parameters
    ----------
    model : ExperimentModel or str
        A model, or a name/path for :func:`~backbone.experiments.load_experiment`.
    G : networkx.Graph
        Chain graph (:func:`backbone.graph.build_chain`); :func:`typical_chain` for condition-level plans.
    residue : int
        Residue i (numbers from 1).
    scheme : LabelingScheme
    rates : RateSet or NoRelaxation
        Coherence rates at a grid of conditions (shape S); every array result has shape S (or the broadcast
        shape with array ``delays``).
    delays : mapping name → float or array [s], optional
        Values of the model's named delays; default the textbook delays (:func:`~backbone.experiments.delays.
        textbook_delays`) under the model's objective.
    trosy : bool
        Walk the TROSY version (models with ``trosy_capable``; ``trosy_only`` models always are).
    sensitivity_enhanced : bool, optional
        Override the model's default.
    resolved : ResolvedWalk, optional
        A :func:`resolve` result to reuse (must be of the same model, residue and scheme).

    Returns
    -------
    WalkResult
        Infeasible walks have feasible False, throughputs 0 and a reason.
    """
    model = load_experiment(model)
    if resolved is None:
        resolved = resolve(model, G, residue, scheme)
    _check_rates(resolved, rates)
    trosy, se = _mode(model, trosy, sensitivity_enhanced)
    shape = tuple(getattr(rates, "shape", ()))
    if delays is None:
        from backbone.experiments.delays import textbook_delays

        delays = textbook_delays(resolved, trosy=trosy, sensitivity_enhanced=se)
    missing = [d for d in model.delay_names if d not in delays]
    if missing and resolved.feasible:
        raise BackboneError(f"{model.name}: delays lack {', '.join(missing)}; the model's delays are {', '.join(model.delay_names)}")
    zeros = np.zeros(shape)
    per_step: dict[int, dict] = {}
    peaks = []
    for p in resolved.peaks:
        if not p.feasible:
            peaks.append(PeakResult(p.label, p.sign, zeros.copy(), False, p.reason))
            continue
        amp = np.asarray(p.factor, dtype=float)
        for rs in p.segments:
            tau = delays[rs.delay] if rs.delay is not None else 0.0
            a = segment_amplitude(rs, tau, rates, trosy=trosy, sensitivity_enhanced=se)
            amp = amp * a
            rec = per_step.setdefault(rs.step.index, {"eff": {}, "rate": None})
            rec["eff"][p.label] = a
            if rec["rate"] is None:
                rec["rate"] = segment_rate(rs, rates, trosy=trosy)
        peaks.append(PeakResult(p.label, p.sign, p.sign * np.broadcast_to(amp, np.broadcast_shapes(np.shape(amp), shape)), True))
    steps = []
    for s in model.steps:
        rec = per_step.get(s.index)
        if s.delay is not None:
            delay = delays.get(s.delay)
        elif s.kind in ("shift-evolution", "detect"):
            delay = s.t_max_s
        else:
            delay = s.fixed_delay_s
        if rec is None:
            steps.append(StepResult(s.name, s.kind, _atoms_label(s.from_), _atoms_label(s.to), s.delay, delay, None, None))
            continue
        first = next(iter(rec["eff"].values()))
        steps.append(
            StepResult(
                s.name,
                s.kind,
                _atoms_label(s.from_),
                _atoms_label(s.to),
                s.delay,
                delay,
                first,
                rec["rate"],
                MappingProxyType(dict(rec["eff"])),
            )
        )
    return WalkResult(
        experiment=model.name,
        residue=resolved.residue,
        resname=resolved.resname,
        labeling=resolved.labeling,
        trosy=trosy,
        sensitivity_enhanced=se,
        feasible=resolved.feasible,
        reason=resolved.reason,
        delays=MappingProxyType(dict(delays)),
        peaks=tuple(peaks),
        steps=tuple(steps),
    )
