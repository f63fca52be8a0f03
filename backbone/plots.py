"""Plots: throughput and delays against τc, and an experiment's walk drawn on the two-residue backbone graph.

Every function writes one file whose format follows its extension (``.png``, ``.svg``, ``.pdf``), whole or not
at all (a temporary file in the same folder, then ``os.replace``), and refuses an existing file unless
``force=True``. matplotlib is imported inside the functions and used through its object interface with the
Agg canvas, so no global backend is switched and nothing opens a window.

* :func:`plot_throughput_vs_tau_c` — objective throughput (or relative sensitivity) against τc per experiment
  and labeling scheme, one panel per field, with crossovers marked and the scenario's τc as a vertical line;
* :func:`plot_delays_vs_tau_c` — each named delay at its optimum against τc beside its textbook value;
* :func:`plot_walk` — the nuclei of residues i−1 and i with their couplings, the edges an experiment's steps use
  highlighted and labelled with each step's efficiency at the given conditions.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from pathlib import Path

import numpy as np

from backbone.errors import BackboneError
from backbone.output import write_atomically
from backbone.sweep import delay_columns

__all__ = ["PLOT_FORMATS", "plot_throughput_vs_tau_c", "plot_delays_vs_tau_c", "plot_walk", "walk_layout"]

#: Plot formats by file extension.
PLOT_FORMATS = {".png": "PNG", ".svg": "SVG", ".pdf": "PDF"}

_QUANTITIES = {
    "objective_throughput": "objective throughput (1 = lossless enhanced transfer)",
    "relative_sensitivity": "sensitivity relative to the 2D 1H-15N HSQC",
}
_LINESTYLES = ("-", "--", ":", "-.")
_COLORS = ("#1f5fa8", "#c0392b", "#2e8b57", "#8e44ad", "#d68910", "#17a2b8", "#6d4c41", "#7f8c8d", "#b03a7a")


def _check_path(path, force: bool) -> Path:
    path = Path(path)
    if path.suffix.lower() not in PLOT_FORMATS:
        allowed = ", ".join(f"{e} ({d})" for e, d in PLOT_FORMATS.items())
        raise BackboneError(f"plot file {str(path)!r}: extension {path.suffix or '(none)'!r} is not allowed; use {allowed}")
    if path.exists() and not force:
        raise BackboneError(f"plot file {str(path)!r} exists; not overwriting it (pass force=True / --force to replace it)")
    return path


def _save(fig, path: Path, force: bool) -> Path:
    fmt = path.suffix.lower().lstrip(".")

    def write(tmp):
        fig.savefig(tmp, format=fmt, dpi=150, bbox_inches="tight")

    return write_atomically(path, write, force=force, formats=PLOT_FORMATS, what="plot file")


def _figure(width, height):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width, height))
    FigureCanvasAgg(fig)
    return fig


def _need_columns(frame, columns, what):
    missing = [c for c in columns if c not in frame.columns]
    if missing:
        raise BackboneError(f"{what}: the table lacks columns {', '.join(missing)}; give a frame from backbone.sweep.sweep")


# ---------------------------------------------------------------------------------------------------------
# Throughput against tau_c
# ---------------------------------------------------------------------------------------------------------


def _crossover_points(crossovers):
    """(kind, experiment, field_mhz, tau_c_ns) of every crossover given as Crossover records or mappings."""
    out = []
    for c in crossovers or ():
        get = c.get if isinstance(c, dict) else (lambda k, c=c: getattr(c, k, None))
        tau = get("tau_c_ns")
        if tau is None or not math.isfinite(float(tau)):
            continue
        out.append((get("kind") or "", str(get("experiment")), float(get("field_mhz")), float(tau)))
    return out


def plot_throughput_vs_tau_c(
    frame_or_comparison,
    path,
    *,
    scenario_tau_c_ns=None,
    crossovers=None,
    quantity: str = "objective_throughput",
    experiments: Sequence[str] | None = None,
    force: bool = False,
) -> Path:
    """Throughput against τc, one panel per field: a line per experiment (color) and labeling/TROSY version
    (line style), log axes. Crossovers [ns] are marked on the candidate's curve (×, labelled with their kind),
    ``scenario_tau_c_ns`` is a vertical line.

    ``frame_or_comparison``: a sweep frame (:func:`backbone.sweep.sweep`) or a
    :class:`backbone.compare.Comparison` (its curves, crossovers and τc are used unless given).
    ``quantity``: ``"objective_throughput"`` or ``"relative_sensitivity"``. Returns the path written.
    """
    path = _check_path(path, force)
    if quantity not in _QUANTITIES:
        raise BackboneError(f"plot: quantity {quantity!r} is not allowed; use {', '.join(_QUANTITIES)}")
    frame = frame_or_comparison
    if hasattr(frame_or_comparison, "curves") and hasattr(frame_or_comparison, "crossovers"):
        comp = frame_or_comparison
        frame = comp.curves
        crossovers = comp.crossovers if crossovers is None else crossovers
        scenario_tau_c_ns = comp.tau_c_ns if scenario_tau_c_ns is None else scenario_tau_c_ns
    if frame is None or not hasattr(frame, "columns"):
        raise BackboneError("plot: give a sweep table (pandas DataFrame) or a Comparison")
    _need_columns(frame, ("experiment", "trosy", "labeling", "field_mhz", "tau_c_ns", quantity), "plot")
    if experiments is not None:
        wanted = {e.upper() for e in experiments}
        frame = frame[frame["experiment"].str.upper().isin(wanted)]
    frame = frame[frame["feasible"]] if "feasible" in frame.columns else frame
    if frame.empty:
        raise BackboneError("plot: nothing to draw (no feasible rows for the experiments asked for)")
    fields = sorted(frame["field_mhz"].unique())
    names = list(dict.fromkeys(frame["experiment"]))
    versions = list(dict.fromkeys(zip(frame["labeling"], frame["trosy"])))
    color = {n: _COLORS[k % len(_COLORS)] for k, n in enumerate(names)}
    style = {v: _LINESTYLES[k % len(_LINESTYLES)] for k, v in enumerate(versions)}
    marks = _crossover_points(crossovers)

    fig = _figure(5.0 * len(fields), 4.2)
    axes = fig.subplots(1, len(fields), squeeze=False)[0]
    for ax, f in zip(axes, fields):
        at = frame[frame["field_mhz"] == f]
        for (name, lab, trosy), sel in at.groupby(["experiment", "labeling", "trosy"], sort=False):
            sel = sel.sort_values("tau_c_ns")
            y = sel[quantity].to_numpy(dtype=float)
            x = sel["tau_c_ns"].to_numpy(dtype=float)
            ok = y > 0
            if not ok.any():
                continue
            label = f"{name}, {lab}{' TROSY' if trosy else ''}"
            ax.plot(x[ok], y[ok], color=color[name], linestyle=style[(lab, trosy)], linewidth=1.5, label=label)
        for kind, name, fm, tau in marks:
            if fm != f or name not in color:
                continue
            # Mark on the curve that pays off: the perdeuterated plain one (deuteration) or its TROSY one.
            want = at[(at["experiment"] == name) & (at["labeling"].str.startswith("2h"))]
            if kind == "trosy":
                want = want[want["trosy"]]
            elif kind == "deuteration":
                want = want[~want["trosy"]] if (~want["trosy"]).any() else want
            if want.empty:
                continue
            (_, sel), *_ = list(want.groupby(["labeling", "trosy"]))
            sel = sel.sort_values("tau_c_ns")
            xs, ys = sel["tau_c_ns"].to_numpy(float), sel[quantity].to_numpy(float)
            ok = ys > 0
            if ok.sum() < 2:
                continue
            yv = float(np.exp(np.interp(np.log(tau), np.log(xs[ok]), np.log(ys[ok]))))
            ax.plot([tau], [yv], marker="x", markersize=9, markeredgewidth=2, color=color[name], linestyle="none")
            ax.annotate(f"{kind} {tau:.3g} ns", (tau, yv), textcoords="offset points", xytext=(4, 6), fontsize=7, color=color[name])
        if scenario_tau_c_ns is not None:
            ax.axvline(float(scenario_tau_c_ns), color="0.35", linewidth=1.0, linestyle="--",
                       label=f"scenario tau_c {float(scenario_tau_c_ns):.3g} ns")
        ax.set_xscale("log")
        ax.set_yscale("log")
        ax.set_xlabel("rotational correlation time tau_c [ns]")
        ax.set_ylabel(_QUANTITIES[quantity])
        ax.set_title(f"{f:g} MHz (1H)")
        ax.grid(True, which="major", linewidth=0.3, alpha=0.5)
    axes[-1].legend(fontsize=7, loc="best")
    return _save(fig, path, force)


# ---------------------------------------------------------------------------------------------------------
# Delays against tau_c
# ---------------------------------------------------------------------------------------------------------


def plot_delays_vs_tau_c(
    frame,
    path,
    *,
    experiments: Sequence[str] | None = None,
    labeling: str | None = None,
    field_mhz: float | None = None,
    trosy: bool | None = None,
    force: bool = False,
) -> Path:
    """Each named delay [ms] at its optimum (solid, markers) against τc beside its textbook value (dashed), one
    panel per experiment, for one labeling scheme and field (default the first in the frame) of a sweep frame.
    Returns the path written."""
    path = _check_path(path, force)
    if not hasattr(frame, "columns"):
        raise BackboneError("plot: give a sweep table (pandas DataFrame from backbone.sweep.sweep)")
    _need_columns(frame, ("experiment", "trosy", "labeling", "field_mhz", "tau_c_ns"), "plot")
    if frame.empty:
        raise BackboneError("plot: the table is empty")
    labeling = frame["labeling"].iloc[0] if labeling is None else labeling
    field_mhz = float(frame["field_mhz"].iloc[0]) if field_mhz is None else float(field_mhz)
    sel = frame[(frame["labeling"] == labeling) & (frame["field_mhz"] == field_mhz)]
    if "feasible" in sel.columns:
        sel = sel[sel["feasible"]]
    if trosy is not None:
        sel = sel[sel["trosy"] == bool(trosy)]
    if experiments is not None:
        sel = sel[sel["experiment"].str.upper().isin({e.upper() for e in experiments})]
    if sel.empty:
        raise BackboneError(
            f"plot: no feasible rows for labeling {labeling!r} at {field_mhz:g} MHz"
            + (f" for {', '.join(experiments)}" if experiments else "")
        )
    delays = [c[len("delay_"):-len("_ms")] for c in sel.columns if c.startswith("delay_") and c.endswith("_ms")]
    groups = list(sel.groupby(["experiment", "trosy"], sort=False))
    fig = _figure(5.0 * len(groups), 4.0)
    axes = fig.subplots(1, len(groups), squeeze=False)[0]
    for ax, ((name, tr), g) in zip(axes, groups):
        g = g.sort_values("tau_c_ns")
        x = g["tau_c_ns"].to_numpy(float)
        k = 0
        for d in delays:
            opt, tb = delay_columns(d)
            y = g[opt].to_numpy(float)
            if not np.isfinite(y).any():
                continue
            c = _COLORS[k % len(_COLORS)]
            k += 1
            ax.plot(x, y, color=c, marker="o", markersize=3, linewidth=1.5, label=f"{d} optimal")
            ax.plot(x, g[tb].to_numpy(float), color=c, linestyle="--", linewidth=1.0, label=f"{d} textbook")
        ax.set_xscale("log")
        ax.set_xlabel("rotational correlation time tau_c [ns]")
        ax.set_ylabel("delay [ms]")
        ax.set_title(f"{name}{' TROSY' if tr else ''} - {labeling}, {field_mhz:g} MHz", fontsize=9)
        ax.grid(True, which="major", linewidth=0.3, alpha=0.5)
        ax.legend(fontsize=7, loc="best")
    return _save(fig, path, force)


# ---------------------------------------------------------------------------------------------------------
# The walk on the graph
# ---------------------------------------------------------------------------------------------------------

# Position of each atom relative to its residue's origin: backbone N, CA, C' along y = 0; protons above,
# side-chain carbons and their protons below.
_OFFSETS = {
    "N": (0.0, 0.0),
    "CA": (1.0, 0.0),
    "C": (2.0, 0.0),
    "H": (0.0, 1.0),
    "HA": (1.0, 1.0),
    "HA2": (0.75, 1.0),
    "HA3": (1.25, 1.0),
    "CB": (1.0, -1.0),
    "HB": (1.55, -1.6),
    "CG": (0.45, -1.9),
    "CG1": (0.25, -1.9),
    "CG2": (0.85, -2.1),
}
_RESIDUE_SPACING = 3.0
_ARC_RAD = 0.3


def walk_layout(G, residue: int) -> dict:
    """Fixed positions (x, y) of the nodes of residues ``residue - 1`` and ``residue`` of a chain graph: the
    backbone N, CA, C' of i−1 then i along a line, protons above, CB/HB/CG below (:data:`_OFFSETS`)."""
    pos = {}
    for node in G.nodes:
        r, atom = node
        if atom not in _OFFSETS:
            raise BackboneError(f"walk layout: no position for atom {atom!r} of residue {r}")
        dx, dy = _OFFSETS[atom]
        pos[node] = ((r - (residue - 1)) * _RESIDUE_SPACING + dx, dy)
    return pos


def _node_of(G, residue: int, rel):
    off, atom = rel
    for a in (atom, "HA2") if atom == "HA" else (atom,):
        if (residue + off, a) in G:
            return (residue + off, a)
    return None


def _walk_edges(resolved, result, G):
    """Edges used by the walk → list of (step name, peak label, efficiency); node → evolution-step notes."""
    edges: dict = {}
    nodes: dict = {}
    by_index = {s.name: s for s in result.steps}
    for p in resolved.feasible_peaks:
        for rs in p.segments:
            step = rs.step
            eff = by_index[step.name].efficiency_by_peak.get(p.label)
            eff = float(np.asarray(eff)) if eff is not None else math.nan
            u = _node_of(G, resolved.residue, rs.segment.before)
            v = _node_of(G, resolved.residue, rs.segment.after)
            if u is None or v is None:
                continue
            if u == v or not G.has_edge(u, v):
                if step.kind in ("shift-evolution", "detect", "multiple-quantum"):
                    nodes.setdefault(u, {})[(step.name, round(eff, 6))] = (step.name, p.label, eff)
                    continue
                if u == v:
                    # A refocusing period on the spin the pathway sits on: draw it on the step's coupled pair.
                    a, b = step.pairs[rs.segment.pair]
                    ua = _node_of(G, resolved.residue, (a.offset if a.offset is not None else rs.segment.before[0], a.atom))
                    vb = _node_of(G, resolved.residue, (b.offset if b.offset is not None else rs.segment.before[0], b.atom))
                    if ua is None or vb is None or not G.has_edge(ua, vb):
                        continue
                    u, v = ua, vb
                else:
                    continue
            key = frozenset((u, v))
            edges.setdefault(key, {})[(step.name, round(eff, 6))] = (step.name, p.label, eff)
    return edges, nodes


def plot_walk(
    model,
    path,
    *,
    residue: int | None = None,
    sequence: str | None = None,
    labeling="13c15n",
    deuteration: float | None = None,
    tau_c_ns: float | None = None,
    field_mhz: float | None = None,
    conditions=None,
    trosy: bool = False,
    delays: str = "optimal",
    force: bool = False,
) -> Path:
    """Draw the nuclei of residues i−1 and i (:func:`backbone.graph.two_residue_subgraph`) with every scalar
    coupling as an edge, and the walk of ``model`` on them: the edges its steps use are highlighted and labelled
    with each step's efficiency (per peak where the branches differ) at the given conditions and delays;
    evolution and detection factors are written beside their nucleus.

    ``model``: an experiment name, path or model. ``sequence``/``residue``: the protein and residue i (default
    the typical residue). Conditions: ``conditions`` (:class:`backbone.conditions.Conditions`) or ``tau_c_ns``
    [ns] and ``field_mhz`` [MHz] with ``labeling``/``deuteration``. ``delays``: ``"optimal"`` or ``"textbook"``.
    Returns the path written.
    """
    from backbone.experiments import (
        TYPICAL_RESIDUE,
        load_experiment,
        optimize_delays,
        resolve,
        textbook_delays,
        typical_chain,
        walk,
    )
    from backbone.graph import build_chain, two_residue_subgraph
    from backbone.labeling import LabelingScheme, load_scheme
    from backbone.relaxation import relaxation_rates
    from backbone.units import FIELD_MHZ, TAU_C_NS

    path = _check_path(path, force)
    if delays not in ("optimal", "textbook"):
        raise BackboneError(f"plot_walk: delays = {delays!r} is not allowed; use 'optimal' or 'textbook'")
    model = load_experiment(model)
    if conditions is not None:
        if tau_c_ns is not None or field_mhz is not None:
            raise BackboneError("plot_walk: give either conditions or tau_c_ns/field_mhz, not both")
        scheme, tau_c, mhz = conditions.labeling, conditions.tau_c, conditions.proton_mhz
        s2, tau_e = conditions.s2, conditions.tau_e
    else:
        if tau_c_ns is None or field_mhz is None:
            raise BackboneError("plot_walk: give conditions, or both tau_c_ns [ns] and field_mhz [MHz]")
        TAU_C_NS.check(tau_c_ns, where="plot_walk")
        FIELD_MHZ.check(field_mhz, where="plot_walk")
        scheme = labeling if isinstance(labeling, LabelingScheme) else load_scheme(labeling, deuteration=deuteration)
        tau_c, mhz, s2, tau_e = float(tau_c_ns) * 1e-9, float(field_mhz), 1.0, 0.0
    if sequence is None:
        if residue is not None and residue != TYPICAL_RESIDUE:
            raise BackboneError("plot_walk: a residue number needs the sequence it belongs to")
        G, residue = typical_chain(), TYPICAL_RESIDUE
    else:
        if residue is None:
            raise BackboneError("plot_walk: with a sequence, give the residue number to draw")
        G = build_chain(sequence)
    resolved = resolve(model, G, residue, scheme)
    if not resolved.feasible:
        raise BackboneError(f"plot_walk: {model.name} is infeasible at residue {residue} under {resolved.labeling}: {resolved.reason}")
    rates = relaxation_rates(tau_c, proton_mhz=mhz, labeling=scheme, s2=s2, tau_e=tau_e)
    trosy = bool(trosy) or model.trosy_only
    if delays == "optimal":
        values = optimize_delays(resolved, rates, trosy=trosy).delays
    else:
        values = textbook_delays(resolved, trosy=trosy)
    result = walk(model, G, residue, scheme, rates, delays=values, trosy=trosy, resolved=resolved)
    H = two_residue_subgraph(G, residue)
    pos = walk_layout(H, residue)
    used, notes = _walk_edges(resolved, result, H)

    import networkx as nx

    fig = _figure(9.0, 5.6)
    ax = fig.add_subplot(1, 1, 1)
    heavy = [n for n in H.nodes if H.nodes[n]["element"] != "H"]
    protons = [n for n in H.nodes if H.nodes[n]["element"] == "H"]
    visited = {n for k in used for n in k} | set(notes)
    # Edges along the backbone line that skip a nucleus (2J(N,CA(i-1)) passes C'(i-1)) are drawn as arcs below it.
    def skips(u, v):
        (x1, y1), (x2, y2) = pos[u], pos[v]
        return y1 == y2 == 0.0 and abs(x1 - x2) > 1.01

    def ordered(e):
        u, v = tuple(e)
        return (u, v) if pos[u][0] <= pos[v][0] else (v, u)

    all_edges = [ordered(e) for e in H.edges]
    hot = [ordered(k) for k in used]
    for edgelist, color, width in ((all_edges, "0.75", 1.0), (hot, "#c0392b", 3.2)):
        straight = [e for e in edgelist if not skips(*e)]
        arcs = [e for e in edgelist if skips(*e)]
        nx.draw_networkx_edges(H, pos, ax=ax, edgelist=straight, edge_color=color, width=width)
        if arcs:
            nx.draw_networkx_edges(H, pos, ax=ax, edgelist=arcs, edge_color=color, width=width, arrows=True,
                                   arrowstyle="-", connectionstyle=f"arc3,rad={_ARC_RAD}", node_size=900)
    for nodes, shape, size in ((heavy, "o", 900), (protons, "s", 520)):
        face = ["#f5b7b1" if n in visited else "#eaf2f8" for n in nodes]
        nx.draw_networkx_nodes(H, pos, ax=ax, nodelist=nodes, node_shape=shape, node_size=size, node_color=face,
                               edgecolors="0.2", linewidths=1.0)
    labels = {}
    for n in H.nodes:
        r, atom = n
        rel = r - residue
        labels[n] = f"{'C′' if atom == 'C' else atom}\n{'i' if rel == 0 else f'i{rel:+d}'}"
    nx.draw_networkx_labels(H, pos, labels=labels, ax=ax, font_size=7)

    def text(entries):
        names = [e[0] for e in entries.values()]
        out = []
        for name, peak, eff in entries.values():
            tag = f"{name} [{peak}]" if names.count(name) > 1 else name
            out.append(f"{tag}: {eff:.2f}")
        return "\n".join(out)

    for key, entries in used.items():
        u, v = ordered(key)
        (x1, y1), (x2, y2) = pos[u], pos[v]
        # An arc3 curve peaks at half the control-point offset, rad x length, on the right of u -> v (below).
        sag = 0.5 * _ARC_RAD * (x2 - x1) if skips(u, v) else 0.0
        ax.annotate(text(entries), ((x1 + x2) / 2, (y1 + y2) / 2 - sag), fontsize=6.5, color="#7b241c", ha="center",
                    va="center", bbox={"boxstyle": "round,pad=0.2", "fc": "white", "ec": "#c0392b", "lw": 0.6, "alpha": 0.9})
    for node, entries in notes.items():
        x, y = pos[node]
        ax.annotate(text(entries), (x, y), xytext=(0, -26 if y <= 0 else 22), textcoords="offset points",
                    fontsize=6.5, color="#1a5276", ha="center", va="center")
    tp = ", ".join(f"{p.label} {float(np.asarray(p.throughput)):+.3f}" for p in result.peaks if p.feasible)
    ax.set_title(
        f"{model.name}{' TROSY' if trosy else ''} on {resolved.resname}{residue} (and residue {residue - 1}), "
        f"{resolved.labeling}, tau_c {tau_c * 1e9:.3g} ns, {mhz:g} MHz, {delays} delays\nthroughput: {tp}",
        fontsize=9,
    )
    from matplotlib.lines import Line2D

    ax.legend(
        handles=[
            Line2D([0], [0], color="#c0392b", lw=3.2, label="coupling used by a step (label: step efficiency)"),
            Line2D([0], [0], color="0.75", lw=1.0, label="other scalar coupling"),
            Line2D([0], [0], marker="o", color="w", markerfacecolor="#eaf2f8", markeredgecolor="0.2", markersize=9, label="heavy nucleus"),
            Line2D([0], [0], marker="s", color="w", markerfacecolor="#eaf2f8", markeredgecolor="0.2", markersize=8, label="proton"),
        ],
        fontsize=7,
        loc="upper center",
        bbox_to_anchor=(0.5, 0.0),
        ncol=2,
        frameon=False,
    )
    ax.set_aspect("equal")
    ax.set_axis_off()
    ax.margins(0.08)
    return _save(fig, path, force)
