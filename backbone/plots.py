"""Plots: throughput and delays against τc, and an experiment's walk drawn on the two-residue backbone graph.

Every function writes one file whose format follows its extension (``.png``, ``.svg``, ``.pdf``), whole or not
at all (a temporary file in the same folder, then ``os.replace``), and refuses an existing file unless
``force=True``. matplotlib is imported inside the functions and used through its object interface with the
Agg canvas, so no global backend is switched and nothing opens a window.

* :func:`plot_throughput_vs_tau_c` — S/N per √time (or objective throughput, or relative sensitivity) against
  τc per experiment and labeling scheme, one panel per field, crossovers as markers (and in a table under the
  panels), the scenario's τc as a vertical line, the legend outside the panels;
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
from backbone.output import FIGURE_FORMATS, write_atomically
from backbone.sweep import delay_columns

__all__ = ["PLOT_FORMATS", "plot_throughput_vs_tau_c", "plot_delays_vs_tau_c", "plot_walk", "walk_layout"]

#: Plot formats by file extension (one list for every figure the package writes).
PLOT_FORMATS = FIGURE_FORMATS

_QUANTITIES = {
    "sensitivity_per_root_time": "S/N per sqrt(time), relative to the 13c15n HSQC",
    "objective_throughput": "objective throughput (1 = lossless enhanced transfer)",
    "relative_sensitivity": "sensitivity relative to the 2D 1H-15N HSQC",
}
_LINESTYLES = ("-", "--", ":", "-.")
#: Crossover kinds in the order of the table columns, their marker (shape, face; None: the curve's color).
_MARK_KINDS = ("deuteration", "trosy")
_MARK_STYLE = {"deuteration": ("o", "white"), "trosy": ("^", None)}
_MARK_LABEL = {"deuteration": "deuteration", "trosy": "TROSY"}
#: Lowest y drawn, as a fraction of the largest value: curves that fall further are cut at the bottom.
_Y_DECADES = 1e-4
_COLORS = ("#1f5fa8", "#c0392b", "#2e8b57", "#8e44ad", "#d68910", "#17a2b8", "#6d4c41", "#7f8c8d", "#b03a7a")


def _check_path(path, force: bool) -> Path:
    path = Path(path)
    if path.suffix.lower() not in PLOT_FORMATS:
        allowed = ", ".join(PLOT_FORMATS)
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
    quantity: str | None = None,
    experiments: Sequence[str] | None = None,
    crossover_table: bool = True,
    force: bool = False,
) -> Path:
    """A quantity against τc, one panel per field (log axes, shared y): one color per experiment, one line style
    per labeling/TROSY version. Crossovers are markers on the curve that pays off (no text on the axes; a circle
    for deuteration, a triangle for TROSY), ``scenario_tau_c_ns`` a vertical line; the legend sits to the right
    of the panels and, with ``crossover_table``, the crossover τc [ns] are listed in a compact table under them.

    ``frame_or_comparison``: a sweep frame (:func:`backbone.sweep.sweep`) or a
    :class:`backbone.compare.Comparison` (its curves, crossovers and τc are used unless given).
    ``quantity``: ``"sensitivity_per_root_time"`` (S/N per √time against the 13c15n HSQC, the quantity the
    crossovers are defined on; the default when the frame has it), ``"objective_throughput"`` (the default
    otherwise) or ``"relative_sensitivity"``. Returns the path written.
    """
    path = _check_path(path, force)
    fig = _throughput_figure(
        frame_or_comparison, scenario_tau_c_ns=scenario_tau_c_ns, crossovers=crossovers, quantity=quantity,
        experiments=experiments, crossover_table=crossover_table,
    )
    return _save(fig, path, force)


def _curve_at(sel, quantity, tau):
    """The quantity of one sorted curve interpolated (log-log) at τc ``tau``, or None."""
    xs, ys = sel["tau_c_ns"].to_numpy(float), sel[quantity].to_numpy(float)
    ok = np.isfinite(ys) & (ys > 0)
    if ok.sum() < 2:
        return None
    return float(np.exp(np.interp(np.log(tau), np.log(xs[ok]), np.log(ys[ok]))))


def _marked_curve(at, name, kind):
    """Rows of the curve a crossover of ``kind`` is marked on: the perdeuterated plain one (deuteration) or its
    TROSY version (TROSY)."""
    want = at[(at["experiment"] == name) & (at["labeling"].str.startswith("2h"))]
    if kind == "trosy":
        want = want[want["trosy"]]
    elif kind == "deuteration" and (~want["trosy"]).any():
        want = want[~want["trosy"]]
    if want.empty:
        return None
    (_, sel), *_ = list(want.groupby(["labeling", "trosy"], sort=False))
    return sel.sort_values("tau_c_ns")


def _crossover_rows(marks, names, fields):
    """Cell text of the crossover table: one row per experiment, a deuteration and a TROSY column per field."""
    value = {(k, n, f): t for k, n, f, t in marks}
    body = []
    for n in names:
        row = []
        for f in fields:
            for kind in _MARK_KINDS:
                t = value.get((kind, n, f))
                row.append("-" if t is None else f"{t:.3g}")
        body.append(row)
    return body


def _throughput_figure(
    frame_or_comparison, *, scenario_tau_c_ns=None, crossovers=None, quantity=None, experiments=None,
    crossover_table=True,
):
    frame = frame_or_comparison
    if hasattr(frame_or_comparison, "curves") and hasattr(frame_or_comparison, "crossovers"):
        comp = frame_or_comparison
        frame = comp.curves
        crossovers = comp.crossovers if crossovers is None else crossovers
        scenario_tau_c_ns = comp.tau_c_ns if scenario_tau_c_ns is None else scenario_tau_c_ns
    if frame is None or not hasattr(frame, "columns"):
        raise BackboneError("plot: give a sweep table (pandas DataFrame) or a Comparison")
    if quantity is None:
        quantity = "sensitivity_per_root_time" if "sensitivity_per_root_time" in frame.columns else "objective_throughput"
    if quantity not in _QUANTITIES:
        raise BackboneError(f"plot: quantity {quantity!r} is not allowed; use {', '.join(_QUANTITIES)}")
    _need_columns(frame, ("experiment", "trosy", "labeling", "field_mhz", "tau_c_ns", quantity), "plot")
    if experiments is not None:
        wanted = {e.upper() for e in experiments}
        frame = frame[frame["experiment"].str.upper().isin(wanted)]
    frame = frame[frame["feasible"]] if "feasible" in frame.columns else frame
    if frame.empty:
        raise BackboneError("plot: nothing to draw (no feasible rows for the experiments asked for)")
    fields = sorted(float(f) for f in frame["field_mhz"].unique())
    names = list(dict.fromkeys(frame["experiment"]))
    versions = list(dict.fromkeys(zip(frame["labeling"], frame["trosy"])))
    color = {n: _COLORS[k % len(_COLORS)] for k, n in enumerate(names)}
    style = {v: _LINESTYLES[k % len(_LINESTYLES)] for k, v in enumerate(versions)}
    marks = [m for m in _crossover_points(crossovers) if m[1] in color and m[2] in fields]

    from matplotlib.lines import Line2D

    table = crossover_table and bool(marks)
    n_rows = len(names) + 1
    table_h = 0.22 * n_rows + 0.3 if table else 0.0
    fig = _figure(4.2 * len(fields) + 2.6, 3.9 + table_h)
    grid = fig.add_gridspec(2 if table else 1, len(fields), height_ratios=[3.9, table_h] if table else None,
                            hspace=0.55, wspace=0.08)
    axes = [fig.add_subplot(grid[0, 0])]
    axes += [fig.add_subplot(grid[0, j], sharey=axes[0]) for j in range(1, len(fields))]
    values = frame[quantity].to_numpy(float)
    positive = values[np.isfinite(values) & (values > 0)]
    top = float(positive.max()) if positive.size else 1.0
    bottom = max(float(positive.min()) if positive.size else 1e-4, top * _Y_DECADES)
    for j, (ax, f) in enumerate(zip(axes, fields)):
        at = frame[frame["field_mhz"] == f]
        for (name, lab, trosy), sel in at.groupby(["experiment", "labeling", "trosy"], sort=False):
            sel = sel.sort_values("tau_c_ns")
            y = sel[quantity].to_numpy(dtype=float)
            ok = np.isfinite(y) & (y > 0)
            if ok.any():
                ax.plot(sel["tau_c_ns"].to_numpy(float)[ok], y[ok], color=color[name], linestyle=style[(lab, trosy)],
                        linewidth=1.4)
        for kind, name, fm, tau in marks:
            sel = _marked_curve(at, name, kind) if fm == f else None
            yv = None if sel is None else _curve_at(sel, quantity, tau)
            if yv is not None:
                marker, face = _MARK_STYLE[kind]
                ax.plot([tau], [yv], marker=marker, markersize=7, markerfacecolor=face or color[name],
                        markeredgecolor=color[name], markeredgewidth=1.4, linestyle="none", zorder=5)
        if scenario_tau_c_ns is not None:
            ax.axvline(float(scenario_tau_c_ns), color="0.3", linewidth=1.0, linestyle=(0, (5, 2, 1, 2)), zorder=1)
        ax.set_xscale("log")
        ax.set_yscale("log")
        ax.set_ylim(bottom, top * 1.6)
        ax.set_xlabel("tau_c [ns]")
        if j == 0:
            ax.set_ylabel(_QUANTITIES[quantity])
        else:
            ax.tick_params(labelleft=False)
        ax.set_title(f"{f:g} MHz (1H)", fontsize=10)
        ax.grid(True, which="major", linewidth=0.3, alpha=0.5)

    def version_label(lab, trosy):
        return f"{lab}{', TROSY' if trosy else ''}"

    handles = [Line2D([], [], color=color[n], linewidth=2.2, label=n) for n in names]
    handles.append(Line2D([], [], linestyle="none", label=" "))
    handles += [Line2D([], [], color="0.2", linestyle=style[v], linewidth=1.4, label=version_label(*v)) for v in versions]
    kinds = [k for k in _MARK_KINDS if any(m[0] == k for m in marks)]
    if kinds or scenario_tau_c_ns is not None:
        handles.append(Line2D([], [], linestyle="none", label=" "))
    for k in kinds:
        marker, face = _MARK_STYLE[k]
        handles.append(Line2D([], [], marker=marker, markersize=7, markerfacecolor=face or "0.2", markeredgecolor="0.2",
                              linestyle="none", label=f"{_MARK_LABEL[k]} crossover"))
    if scenario_tau_c_ns is not None:
        handles.append(Line2D([], [], color="0.3", linewidth=1.0, linestyle=(0, (5, 2, 1, 2)),
                              label=f"scenario tau_c {float(scenario_tau_c_ns):.3g} ns"))
    axes[-1].legend(handles=handles, fontsize=8, loc="upper left", bbox_to_anchor=(1.03, 1.0), borderaxespad=0.0,
                    frameon=False)
    if table:
        tab = fig.add_subplot(grid[1, :])
        tab.set_axis_off()
        columns = [f"{f:g} {_MARK_LABEL[k]}" for f in fields for k in _MARK_KINDS]
        width = min(0.9, 0.11 * len(columns) + 0.1)
        t = tab.table(cellText=_crossover_rows(marks, names, fields), rowLabels=names, colLabels=columns,
                      cellLoc="center", bbox=[0.5 - width / 2 + 0.05, 0.0, width, 1.0])
        t.auto_set_font_size(False)
        t.set_fontsize(8)
        tab.set_title("crossover tau_c [ns] by field [MHz] (-: none in the grid; reasons in the text output)",
                      fontsize=8.5, pad=3)
    return fig


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
    tp = ", ".join(f"{p.label} {float(np.asarray(p.throughput)):+.3g}" for p in result.peaks if p.feasible)
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
