"""Textbook and optimal delays of an experiment model, under an objective over its peaks.

Objectives
----------
An objective turns the peaks' pathway amplitudes (sign removed, so the expected sign counts as positive and a
sign flip as a loss) into one number to maximize:

* a peak label, e.g. ``"CA(i)"``: that peak;
* ``"weakest"``: the smallest of the feasible peaks — what limits a sequential walk that needs them all;
* ``"geometric-mean"``: (∏ max(a_k, 0))^(1/n) over the feasible peaks, a balance that does not sacrifice
  any one peak entirely.

Each model file names its default and why (``objective``, ``objective_reason``). If the named peak is absent
for a residue (Gly has no CB), the weakest of the present peaks is used and the reported objective says so.

How the delays are found
------------------------
A peak's amplitude is a product of one factor per named delay (the steps using it, with the evolutions
``within`` them) and fixed factors. So a named-peak or geometric-mean objective separates: every delay is
optimized alone. Under ``"weakest"`` a delay whose factor is the same for every peak (same steps, couplings and
coherences on every pathway, e.g. the H→N INEPT delay shared with the N→H refocus) multiplies all peaks alike
and is optimized alone; the delays that treat peaks differently (branches: HNCA's N→CA period, HNCACB's
N→CA and CA→CB periods together) are optimized jointly on min_k(fixed_k × ∏_d f_k,d(τ_d)).

One delay with one active coupling in every step that uses it, the same pair of rates, no passive coupling and
no evolution inside it has the closed form of :func:`~backbone.transfer.optimal_transfer_delay` (equal rates:
:func:`~backbone.transfer.optimal_inept_delay`, arctan(πJ/R)/(πJ)); the others use the vectorized optimizers
:func:`~backbone.transfer.optimal_delays` (joint) and, for single delays, the log-concave search of
:mod:`backbone.transfer.optimum` (safeguarded Newton on log f from the closed form of the delay's first coupling
period, golden section at kinks; no global grid). That is valid because every single-delay objective is
log-concave on its search range: each factor (sin(πJτ)e^(−Rτ), the exact 2×2 amplitudes, cos(πJτ), e^(−Rτ)) is
on the first lobe, and products, minima (weakest peak) and geometric means of log-concave functions are
log-concave (Boyd & Vandenberghe, Convex Optimization, 2004, sec. 3.5); tests check it numerically for every
bundled model. Accuracy: delays to about 1e-8 relative (within the 1e-7 of the former grid + golden search),
objective values at the optimum to about 1e-9 relative. A delay optimized alone with the same segments, rates
and options in several experiments (τ_NH) is solved once and remembered. The search runs over
(0, τ_max], τ_max the first sign change of any coupling factor using the delay (sin(πJτ) of a pathway's own
coupling at 1/J, cos(πJτ) of other partners and passive couplings at 1/(2J)): the first lobe, which is what a
sequence is set to (later lobes can be as high without relaxation but are never used).

Textbook delays are the same optimum with every rate zero (:func:`textbook_delays`): 1/(2J) for an INEPT,
33.3 ms for N→C′ with 15 Hz, 31.4 ms for the own peak of N→CA with 11/7 Hz. Everything is vectorized over the
condition grid of the rates (a loop over delays and steps, none over grid points).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType

import numpy as np

from backbone.errors import BackboneError
from backbone.experiments.model import OBJECTIVES
from backbone.experiments.walk import NoRelaxation, ResolvedWalk, _mode, _rate, _segment_amplitude
from backbone.transfer import optimal_inept_delay, optimal_transfer_delay
from backbone.transfer.optimum import _log_concave_maximum, _weakest_product_optimum

__all__ = ["DelayChoice", "objective_value", "check_objective", "delay_bounds", "optimize_delays", "textbook_delays"]

_MAX_JOINT = 4
#: Points per delay of the joint grid that starts the weakest-peak joint search; None: the default of
#: optimal_delays. (A 9-point start was tried: CBCA(CO)NH's tau_CH/tau_CC ridge then ends elsewhere by up to
#: 6e-4 in the objective, either way, so the joint objective is not treated as unimodal.)
_JOINT_START_GRID = None


@dataclass(frozen=True)
class DelayChoice:
    """Chosen delays: ``delays`` name → array [s] (condition shape), the ``objective`` used, and per delay how
    it was found (``methods``: "closed form", "alone", "joint with …")."""

    delays: Mapping
    objective: str
    methods: Mapping


def objective_value(amplitudes: Mapping, objective: str) -> np.ndarray:
    """Value of ``objective`` over ``amplitudes`` (label → unsigned pathway amplitude array, feasible peaks)."""
    if not amplitudes:
        raise BackboneError("objective: no feasible peak to evaluate")
    if objective == "weakest":
        vals = list(amplitudes.values())
        out = vals[0]
        for v in vals[1:]:
            out = np.minimum(out, v)
        return np.asarray(out)
    if objective == "geometric-mean":
        vals = [np.maximum(np.asarray(v), 0.0) for v in amplitudes.values()]
        out = 1.0
        for v in vals:
            out = out * v
        return np.asarray(out) ** (1.0 / len(vals))
    try:
        return np.asarray(amplitudes[objective])
    except KeyError as err:
        raise BackboneError(
            f"objective {objective!r}: not a feasible peak; peaks are {', '.join(amplitudes)}, or use "
            f"{' / '.join(OBJECTIVES)}"
        ) from err


def check_objective(resolved: ResolvedWalk, objective: str | None) -> str:
    """The objective in effect: the model default if None; an absent named peak falls back to 'weakest'."""
    model = resolved.model
    obj = model.objective if objective is None else objective
    labels = [p.label for p in model.peaks]
    if obj not in OBJECTIVES and obj not in labels:
        allowed = list(OBJECTIVES) + labels
        raise BackboneError(f"{model.name}: objective {obj!r} is not allowed; allowed are {', '.join(allowed)}")
    if obj in labels and not resolved.peak(obj).feasible:
        return "weakest"
    return obj


def _first_zero(rs) -> float | None:
    """End [s] of the first interval on which every coupling factor of a segment keeps its sign, or None.

    The pathway's own active coupling J_k gives sin(πJ_kτ), positive up to 1/J_k; the other active partners and
    the passive couplings give cos(πJτ), positive up to 1/(2J); a split's staying pathway cos(πJτ) likewise.
    """
    if not rs.j_active or rs.step.delay != rs.delay:
        return None
    ends = []
    for n, j in enumerate(rs.j_active):
        if j > 0:
            own = n == rs.k and not (rs.step.kind == "carbon-split" and rs.stay)
            ends.append(1.0 / j if own else 0.5 / j)
    ends += [0.5 / j for period in rs.passive for j, f in period if j > 0 and f > 0]
    return min(ends) if ends else None


def delay_bounds(resolved: ResolvedWalk, name: str) -> tuple[float, float]:
    """Search interval (0, τ_max] [s] of delay ``name``: up to the first sign change of any coupling factor of
    any pathway using it (the first lobe; later lobes are not what a sequence is set to)."""
    ends = [
        e
        for p in resolved.feasible_peaks
        for rs in p.segments
        if rs.delay == name
        for e in (_first_zero(rs),)
        if e is not None
    ]
    if not ends:
        raise BackboneError(f"{resolved.model.name}: delay {name!r} has no active coupling to set it")
    return 0.0, min(ends)


def _closed_form(segments, rates, trosy):
    """τ* of a delay whose every use is one coupling with the same rates and nothing else, else None."""
    keys = set()
    for rs in segments:
        step = rs.step
        if step.kind not in ("inept", "refocus") or len(rs.j_active) != 1 or any(rs.passive) or step.delay != rs.delay:
            return None
        atom = rs.transverse[0]
        c = step.coherences(trosy)
        from backbone.experiments.model import coherence_for

        pair = frozenset((coherence_for(c["inphase"], atom), coherence_for(c["antiphase"], atom)))
        keys.add((rs.j_active[0], pair))
    if len(keys) != 1:
        return None
    j, pair = keys.pop()
    names = sorted(pair, key=str)
    where = segments[0].step.where
    if len(names) == 1:
        return optimal_inept_delay(j, _rate(rates, names[0], where)), "closed form (optimal_inept_delay)"
    return (
        optimal_transfer_delay(j, _rate(rates, names[0], where), _rate(rates, names[1], where)),
        "closed form (optimal_transfer_delay)",
    )


#: Delays optimized alone, remembered by everything their objective depends on, so that the same problem in
#: several experiments (the H→N INEPT/refocus delay of every amide-detected model) is solved once per rates.
#: Entries keep their RateSet, so a key's id(rates) cannot be reused by another object while it is stored.
_SHARED: dict = {}
_SHARED_SIZE = 64


def _segment_content(rs, trosy):
    """Everything a segment's amplitude depends on besides rates and the delay value, across models (the
    segment signature holds the step index, which is model-specific)."""
    st = rs.step
    try:
        coh = repr(st.coherences(trosy))
    except BackboneError:
        coh = None
    return (
        st.kind, st.periods, st.mode, st.within, st.t_max_s, st.fixed_delay_s, len(st.to), coh,
        st.delay == rs.delay, rs.segment.pair, rs.j_active, rs.k, rs.passive, rs.transverse, rs.stay,
    )


def _shared_key(rates, d, mode, users, bounds, trosy, se):
    per_peak = tuple(sorted({tuple(_segment_content(rs, trosy) for rs in p.segments if rs.delay == d) for p in users}))
    return (id(rates), mode if len(per_peak) > 1 else "common", per_peak, len(users), tuple(bounds), trosy, se)


def _start(segments, rates, trosy, bounds):
    """Starting delay [s] for the Newton search: the closed-form optimum of the first coupling period using the
    delay (its own coupling and rates; passive couplings and other uses shift the true optimum a little),
    inside the bounds; None (mid-interval) if the delay has no such period."""
    from backbone.experiments.model import coherence_for

    for rs in segments:
        st = rs.step
        if st.kind not in ("inept", "transfer", "refocus", "sensitivity-enhancement", "carbon-split"):
            continue
        if not rs.j_active or st.delay != rs.delay:
            continue
        try:
            c = st.coherences(trosy)
            atom = rs.transverse[0]
            r_in = _rate(rates, coherence_for(c["inphase"], atom), st.where)
            r_anti = _rate(rates, coherence_for(c["antiphase"], atom), st.where)
        except (BackboneError, KeyError, IndexError, TypeError):
            continue
        j = rs.j_active[rs.k] if rs.k < len(rs.j_active) else rs.j_active[0]
        if j == 0:
            continue
        if st.kind == "carbon-split" and rs.stay:
            return None
        t = optimal_transfer_delay(j, r_in, r_anti)
        lo, hi = bounds
        return np.clip(t, lo + 0.01 * (hi - lo), hi - 0.01 * (hi - lo))
    return None


class _RateSubset:
    """The coherence rates of the conditions at the flat indices ``idx`` of a RateSet's shape, as a 1-D condition
    grid (what the walk's segment amplitudes read: ``coherence`` and ``shape``); for the joint delay search."""

    def __init__(self, rates, idx):
        self._rates = rates
        self._idx = idx
        self._full = tuple(rates.shape)
        self.shape = (idx.size,)
        self._memo: dict = {}

    def coherence(self, name):
        value = self._memo.get(name)
        if value is None:
            full = np.broadcast_to(np.asarray(self._rates.coherence(name), dtype=float), self._full)
            value = self._memo[name] = full.reshape(-1)[self._idx]
        return value


def optimize_delays(
    resolved: ResolvedWalk, rates, *, objective: str | None = None, trosy=False, sensitivity_enhanced=None
) -> DelayChoice:
    """Optimal value of every named delay of ``resolved.model`` under ``objective`` with ``rates`` (a RateSet or
    :class:`~backbone.experiments.walk.NoRelaxation`), vectorized over the rates' condition grid (module notes).

    An infeasible walk gives no delays (an empty mapping).
    """
    model = resolved.model
    trosy, se = _mode(model, trosy, sensitivity_enhanced)
    obj = check_objective(resolved, objective)
    peaks = resolved.feasible_peaks
    shape = tuple(getattr(rates, "shape", ()))
    if not peaks:
        return DelayChoice(MappingProxyType({}), obj, MappingProxyType({}))
    targets = [resolved.peak(obj)] if obj not in OBJECTIVES else list(peaks)

    def amp(rs, tau, r=rates):
        return _segment_amplitude(rs, tau, r, trosy, se, False)

    # Pathways of different peaks often pass the same segment (same step, pair and couplings): within one
    # evaluation of an objective its amplitude is computed once (``cache``, keyed by segment and delay).
    def factor(p, d, tau, cache=None, r=rates):
        cache = {} if cache is None else cache
        out = 1.0
        for rs in p.segments:
            if rs.delay == d:
                key = (rs.signature, d)
                value = cache.get(key)
                if value is None:
                    value = cache[key] = amp(rs, tau, r)
                out = out * value
        return out

    fixed = {}
    for p in peaks:
        f = np.asarray(p.factor, dtype=float)
        for rs in p.segments:
            if rs.delay is None:
                f = f * amp(rs, 0.0)
        fixed[p.label] = f

    delays: dict[str, np.ndarray] = {}
    methods: dict[str, str] = {}
    joint: list[tuple[str, list]] = []
    for d in model.delay_names:
        users = [p for p in targets if any(rs.delay == d for rs in p.segments)]
        mode = obj
        if not users:
            users = [p for p in peaks if any(rs.delay == d for rs in p.segments)]
            mode = "weakest"
        if not users:
            continue
        sigs = {tuple(rs.signature for rs in p.segments if rs.delay == d) for p in users}
        common = len(sigs) == 1
        bounds = delay_bounds(resolved, d)
        if mode == "weakest" and not common:
            joint.append((d, users))
            continue
        segs = [rs for rs in users[0].segments if rs.delay == d]
        closed = _closed_form(segs, rates, trosy) if common else None
        if closed is not None:
            delays[d], methods[d] = closed
            continue
        key = _shared_key(rates, d, mode, users, bounds, trosy, se)
        hit = _SHARED.get(key)
        if hit is not None and hit[0] is rates:
            delays[d], methods[d] = hit[1], "alone (numerical)"
            continue
        if common or mode not in ("geometric-mean",):
            p0 = users[0]

            def func(tau, p0=p0, d=d, r=rates):
                return factor(p0, d, tau, None, r)

        else:

            def func(tau, users=users, d=d, r=rates):
                out, cache = 1.0, {}
                for p in users:
                    out = out * np.maximum(factor(p, d, tau, cache, r), 0.0)
                return out ** (1.0 / len(users))

        def subset(idx, cond_shape, func=func):
            if tuple(cond_shape) != shape:
                return None
            sub = _RateSubset(rates, idx)
            return lambda tau: func(tau, r=sub)

        delays[d] = _log_concave_maximum(
            func, *bounds, start=_start(segs, rates, trosy, bounds), subset=subset if shape else None
        ).tau
        methods[d] = "alone (numerical)"
        if len(_SHARED) >= _SHARED_SIZE:
            _SHARED.clear()
        _SHARED[key] = (rates, delays[d])

    if joint:
        names = [d for d, _ in joint]
        users = list({p.label: p for _, us in joint for p in us}.values())
        if len(names) > _MAX_JOINT:
            raise BackboneError(
                f"{model.name}: {len(names)} delays ({', '.join(names)}) would have to be optimized jointly; at most "
                f"{_MAX_JOINT} are supported"
            )

        def joint_func(*taus, r=rates, fixed=fixed):
            out, cache = None, {}
            for p in users:
                v = fixed[p.label]
                for d, tau in zip(names, taus):
                    v = v * factor(p, d, tau, cache, r)
                out = v if out is None else np.minimum(out, v)
            return out

        bounds = [delay_bounds(resolved, d) for d in names]
        if len(names) == 1:
            segs = [rs for rs in users[0].segments if rs.delay == names[0]]
            start = _start(segs, rates, trosy, bounds[0])

            def joint_subset(idx, cond_shape):
                if tuple(cond_shape) != shape:
                    return None
                sub = _RateSubset(rates, idx)
                sub_fixed = {
                    k: np.broadcast_to(np.asarray(v, dtype=float), shape).reshape(-1)[idx] for k, v in fixed.items()
                }
                return lambda tau: joint_func(tau, r=sub, fixed=sub_fixed)

            delays[names[0]] = _log_concave_maximum(
                joint_func, *bounds[0], start=start, subset=joint_subset if shape else None
            ).tau
            methods[names[0]] = "alone (numerical, weakest peak)"
        else:
            # The objective is min_k(fixed_k × ∏_d factor_k,d(τ_d)): the separable form of optimal_delays
            # gives the same result with each factor evaluated per delay, not at every joint point.
            def axis_factors(a, tau):
                cache: dict = {}
                return [factor(p, names[a], tau, cache) for p in users]

            subsets: dict = {}

            def subset_factors(a, tau, idx):
                key = (idx.size, idx.tobytes())
                sub = subsets.get(key)
                if sub is None:
                    subsets.clear()
                    sub = subsets[key] = _RateSubset(rates, idx)
                cache: dict = {}
                return [factor(p, names[a], tau, cache, sub) for p in users]

            res = _weakest_product_optimum(
                axis_factors,
                [fixed[p.label] for p in users],
                bounds,
                shape,
                n_grid=_JOINT_START_GRID,
                subset_factors=subset_factors,
            )
            for d, tau in zip(names, res.taus):
                delays[d] = tau
                methods[d] = "joint with " + ", ".join(n for n in names if n != d) + " (numerical, weakest peak)"
    out = {d: np.broadcast_to(np.asarray(delays[d], dtype=float), shape) for d in model.delay_names if d in delays}
    return DelayChoice(MappingProxyType(out), obj, MappingProxyType({d: methods[d] for d in out}))


_TEXTBOOK_CACHE: dict = {}
_TEXTBOOK_CACHE_SIZE = 512


def _textbook_key(resolved: ResolvedWalk, objective, trosy, sensitivity_enhanced):
    """Everything zero-rate delays depend on: the model's structure, couplings per pathway and the options."""
    model = resolved.model
    structure = tuple((s.kind, s.periods, s.mode, s.delay, s.within, s.t_max_s, s.fixed_delay_s) for s in model.steps)
    pathways = tuple(
        (p.label, p.feasible, p.factor, tuple((rs.signature, rs.delay) for rs in p.segments)) for p in resolved.peaks
    )
    return (id(model), model.source, structure, pathways, objective, bool(trosy), sensitivity_enhanced)


def textbook_delays(resolved: ResolvedWalk, *, objective: str | None = None, trosy=False, sensitivity_enhanced=None) -> dict:
    """Delays [s, floats] maximizing the objective with every rate zero (1/(2J)-type values); {} if infeasible.

    They depend on the model and the residue's couplings only, so they are remembered (keyed by both)."""
    key = _textbook_key(resolved, objective, trosy, sensitivity_enhanced)
    hit = _TEXTBOOK_CACHE.get(key)
    if hit is None:
        choice = optimize_delays(
            resolved, NoRelaxation(), objective=objective, trosy=trosy, sensitivity_enhanced=sensitivity_enhanced
        )
        hit = {d: float(v) for d, v in choice.delays.items()}
        if len(_TEXTBOOK_CACHE) >= _TEXTBOOK_CACHE_SIZE:
            _TEXTBOOK_CACHE.clear()
        _TEXTBOOK_CACHE[key] = hit
    return dict(hit)
