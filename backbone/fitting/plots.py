"""Figures of fit results: data and fitted curves per residue, and the τc evidence.

* :func:`plot_fits` — a grid of panels, one per (series, residue) of a decay, recovery or build-up fit: the
  measured points (with error bars when given; excluded points as open markers), the fitted curve, and in the
  title the residue, its rate ± error and, for residues with problems, the status; a problem residue's panel has
  a coloured frame. Problem residues come first; beyond ``max_panels`` the remaining residues are summarized in
  a last panel (fitted rate against residue, coloured by status).
* :func:`plot_tau_c` — for a global τc from R2/R1 (:class:`~backbone.fitting.tumbling_fit.TauCFit`): R2/R1 per
  residue with the screening marked (used / screened out / bad) and the engine's R2/R1 at the fitted τc, and the
  residues' closed-form τc with the fitted and expected τc; for a ratio fit
  (:class:`~backbone.fitting.ratio.RatioFit`): the measured ratio per residue with the predicted ratio at the
  fitted and expected τc, and the forward model against τc.
* :func:`plot_result` — whichever of the two fits the result.

Files: the format follows the extension (``.png``, ``.svg``, ``.pdf``); the figure is written to a temporary file
in the same folder and moved into place, so a file is written whole or not at all; an existing file is not
overwritten unless ``force=True``. matplotlib is imported inside the functions with the non-interactive Agg
backend, so importing this module costs nothing.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from backbone.errors import BackboneError
from backbone.output import FIGURE_FORMATS, write_atomically

__all__ = ["FORMATS", "STATUS_COLORS", "plot_fits", "plot_tau_c", "plot_result"]

#: File extensions and the matplotlib format written for each (:data:`backbone.output.FIGURE_FORMATS`).
FORMATS = FIGURE_FORMATS
#: Frame/marker colour per status (problems stand out; ``ok`` panels keep the default frame).
STATUS_COLORS = {
    "ok": "tab:blue",
    "poorly-determined": "tab:orange",
    "failed": "tab:red",
    "too-few-points": "tab:gray",
    "bad-data": "tab:purple",
}
_PROBLEM_ORDER = {"failed": 0, "bad-data": 1, "too-few-points": 2, "poorly-determined": 3, "ok": 4}


def _target(path, force) -> tuple[Path, str]:
    p = Path(path)
    fmt = FORMATS.get(p.suffix.lower())
    if fmt is None:
        raise BackboneError(f"{p}: unknown figure format {p.suffix!r}; allowed extensions: {', '.join(FORMATS)}")
    return p, fmt


def _save(fig, path: Path, fmt: str, force: bool) -> Path:
    """Write whole or not at all, never over an existing file without ``force`` (:mod:`backbone.output`)."""
    import matplotlib.pyplot as plt

    try:
        return write_atomically(path, lambda tmp: fig.savefig(tmp, format=fmt, dpi=150), force=force, what="figure")
    finally:
        plt.close(fig)


def _pyplot():
    import matplotlib

    matplotlib.use("Agg", force=True)
    import matplotlib.pyplot as plt

    return plt


def _curve_function(result):
    """f(t, row) for the model of a FitResult."""
    from backbone.fitting.buildup import MODEL_ID as BUILDUP, buildup
    from backbone.fitting.decay import PARAMETERS, evaluate

    if result.model == BUILDUP:
        g = result.global_info
        delta, passive = g.get("rate_difference", 0.0), tuple(g.get("passive_hz", ()))

        def f(t, row):
            return buildup(t, row["scale"], max(row["rate"], 0.0), row["j_hz"], delta, passive)

        return f
    if result.model in PARAMETERS:
        names = PARAMETERS[result.model]

        def f(t, row):
            return evaluate(result.model, t, np.array([row[n] for n in names]))

        return f
    raise BackboneError(f"plot_fits draws decay, recovery and build-up fits, not {result.model!r}")


def plot_fits(result, data=None, path=None, *, force: bool = False, max_panels: int = 24, columns: int = 4) -> Path:
    """Multi-panel figure of measured points and fitted curves, residues with problems marked.

    Parameters
    ----------
    result : FitResult
        Of :func:`~backbone.fitting.series.fit_decays` or :func:`~backbone.fitting.buildup.fit_buildups`.
    data : DecayData, DataFrame or path, optional
        The fitted data; default the data the result carries.
    path : str or Path
        Output file (``.png``, ``.svg`` or ``.pdf``).
    force : bool
        Overwrite an existing file.
    max_panels : int
        Largest number of residue panels (1–200); with more residues the rest are summarized in one panel.
    columns : int
        Panels per row.

    Returns
    -------
    Path of the written file.

    Raises
    ------
    BackboneError
        Unknown extension, an existing file without ``force``, a missing folder, a result of another kind, no
        data, bad ``max_panels``.
    """
    from backbone.fitting._shared import as_decay_data

    if path is None:
        raise BackboneError("plot_fits: give the output path")
    target, fmt = _target(path, force)
    if isinstance(max_panels, bool) or not isinstance(max_panels, int) or not 1 <= max_panels <= 200:
        raise BackboneError(f"max_panels must be an integer in [1, 200], got {max_panels!r}")
    f = _curve_function(result)
    data = getattr(result, "data", None) if data is None else as_decay_data(data, "plot_fits")
    if data is None:
        raise BackboneError("plot_fits: the result carries no data; pass the data that were fitted")
    table = result.table.reset_index(drop=True)
    series_col = "series" in table.columns
    order = sorted(range(len(table)), key=lambda i: (_PROBLEM_ORDER.get(table["status"][i], 5), i))
    shown = order[:max_panels] if len(order) <= max_panels else order[: max_panels - 1]
    rest = [i for i in order if i not in set(shown)]
    n_panels = len(shown) + (1 if rest else 0)
    columns = max(1, min(int(columns), n_panels))
    n_rows = math.ceil(n_panels / columns)

    plt = _pyplot()
    fig, axes = plt.subplots(n_rows, columns, figsize=(3.2 * columns, 2.6 * n_rows), squeeze=False)
    points = data.points
    for k, i in enumerate(shown):
        ax = axes.flat[k]
        row = table.iloc[i]
        sel = points["residue"].astype(str) == str(row["residue"])
        if series_col:
            sel &= points["series"].astype(str) == str(row["series"])
        pts = points[sel]
        good = pts["flag"] == ""
        if result.model in ("decay-offset", "recovery", "buildup"):
            good = good | (pts["flag"] == "non-positive intensity")
        if data.has_errors:
            ax.errorbar(pts["delay_s"][good] * 1e3, pts["intensity"][good], yerr=pts["error"][good], fmt="o",
                        ms=3, color="black", lw=0.8)
        else:
            ax.plot(pts["delay_s"][good] * 1e3, pts["intensity"][good], "o", ms=3, color="black")
        if (~good).any():
            ax.plot(pts["delay_s"][~good] * 1e3, pts["intensity"][~good], "o", ms=4, mfc="none", color="tab:gray",
                    label="excluded")
        status = row["status"]
        if np.all(np.isfinite([row[c] for c in result.global_info.get("parameters", [])])) and good.any():
            t_max = float(np.nanmax(pts["delay_s"])) if len(pts) else 1.0
            t = np.linspace(0.0, t_max * 1.05, 200)
            ax.plot(t * 1e3, f(t, row), "-", color=STATUS_COLORS.get(status, "tab:blue"), lw=1.2)
        title = f"{row['residue']}" + (f" [{row['series']}]" if series_col and row["series"] else "")
        if np.isfinite(row.get("rate", np.nan)):
            err = row.get("rate_err", np.nan)
            title += f"  R = {row['rate']:.3g}" + (f" ± {err:.2g}" if np.isfinite(err) else "") + " s⁻¹"
        if status != "ok":
            title += f"\n{status}"
            for spine in ax.spines.values():
                spine.set_edgecolor(STATUS_COLORS.get(status, "tab:red"))
                spine.set_linewidth(2.0)
        ax.set_title(title, fontsize=8, color="black" if status == "ok" else STATUS_COLORS.get(status, "tab:red"))
        ax.tick_params(labelsize=7)
        ax.set_xlabel("delay [ms]", fontsize=7)
    if rest:
        ax = axes.flat[len(shown)]
        sub = table.iloc[rest]
        x = np.arange(len(sub))
        for status, color in STATUS_COLORS.items():
            m = (sub["status"] == status).to_numpy()
            if m.any() and "rate" in sub.columns:
                ax.errorbar(x[m], sub["rate"].to_numpy()[m], yerr=sub["rate_err"].to_numpy()[m], fmt="o", ms=2,
                            color=color, lw=0.6, label=f"{status} ({int(m.sum())})")
        ax.set_title(f"{len(rest)} more residues: fitted rates", fontsize=8)
        ax.set_xlabel("residue (input order)", fontsize=7)
        ax.set_ylabel("rate [s⁻¹]", fontsize=7)
        ax.tick_params(labelsize=7)
        ax.legend(fontsize=6)
    for ax in list(axes.flat)[n_panels:]:
        ax.set_visible(False)
    counts = result.global_info.get("status_counts", {})
    summary = ", ".join(f"{k} {v}" for k, v in counts.items() if v)
    fig.suptitle(f"{result.model} fit of {result.global_info.get('source', '')}: {summary}", fontsize=9)
    fig.tight_layout()
    return _save(fig, target, fmt, force)


def plot_tau_c(result, path, *, force: bool = False) -> Path:
    """The τc evidence of a TauCFit (R2/R1 per residue, screening, fitted/expected τc) or of a RatioFit.

    Parameters
    ----------
    result : TauCFit or RatioFit
    path : str or Path
        Output file (``.png``, ``.svg`` or ``.pdf``).
    force : bool
        Overwrite an existing file.

    Returns
    -------
    Path of the written file.

    Raises
    ------
    BackboneError
        Unknown extension, an existing file without ``force``, a missing folder, a result of another kind.
    """
    from backbone.fitting.ratio import RatioFit
    from backbone.fitting.tumbling_fit import TauCFit

    if not isinstance(result, (TauCFit, RatioFit)):
        raise BackboneError(f"plot_tau_c draws tau-c and ratio fits, not {type(result).__name__}")
    target, fmt = _target(path, force)
    plt = _pyplot()
    fig, (top, bottom) = plt.subplots(2, 1, figsize=(8.0, 6.4))
    g = result.global_info
    if isinstance(result, TauCFit):
        _tau_c_panels(result, top, bottom)
    else:
        _ratio_panels(result, top, bottom)
    message = g.get("verdict") or ""
    tau = g.get("tau_c_ns")
    head = f"tau_c {tau:.2f} ± {g.get('tau_c_err_ns', float('nan')):.2f} ns" if tau is not None and np.isfinite(tau) else "no tau_c"
    fig.suptitle(f"{head}" + (f": {message}" if message else ""), fontsize=9)
    fig.tight_layout()
    return _save(fig, target, fmt, force)


def _tau_c_panels(result, top, bottom):
    t = result.table.reset_index(drop=True)
    x = np.arange(len(t))
    used = t["used"].to_numpy(dtype=bool)
    bad = t["status"].isin(["bad-data", "failed"]).to_numpy()
    out = ~used & ~bad
    ratio = t["ratio"].to_numpy(dtype=float)
    groups = [(used, "o", "tab:blue", "used"), (out, "s", "tab:orange", "screened out"), (bad, "x", "tab:red", "bad data / no solution")]
    for mask, marker, color, label in groups:
        if mask.any():
            top.plot(x[mask], ratio[mask], marker, ms=4, color=color, ls="none", label=f"{label} ({int(mask.sum())})")
    if "R2_fit" in t.columns:
        with np.errstate(divide="ignore", invalid="ignore"):
            fit_ratio = t["R2_fit"].to_numpy(float) / t["R1_fit"].to_numpy(float)
        for f in np.unique(t["field_mhz"]):
            m = (t["field_mhz"] == f).to_numpy()
            top.plot(x[m], fit_ratio[m], "-", color="black", lw=1, label=f"engine at fitted tau_c, {f:g} MHz")
    top.set_ylabel("R2/R1")
    top.set_xticks(x[:: max(1, len(x) // 20)])
    top.set_xticklabels(t["residue"].astype(str).to_numpy()[:: max(1, len(x) // 20)], fontsize=7, rotation=90)
    top.legend(fontsize=7)
    tau = t["tau_c_ratio_ns"].to_numpy(float)
    err = t["tau_c_ratio_ns_err"].to_numpy(float)
    for mask, marker, color, label in groups[:2]:
        if mask.any():
            bottom.errorbar(x[mask], tau[mask], yerr=np.where(np.isfinite(err[mask]), err[mask], 0.0), fmt=marker,
                            ms=3, color=color, lw=0.6, label=label)
    _tau_lines(bottom, result.global_info)
    bottom.set_ylabel("closed-form tau_c [ns]")
    bottom.set_xlabel("residue (input order)")
    bottom.legend(fontsize=7)


def _ratio_panels(result, top, bottom):
    t = result.table.reset_index(drop=True)
    g = result.global_info
    x = np.arange(len(t))
    used = t["used"].to_numpy(dtype=bool)
    bad = ~np.isfinite(t["log_ratio"].to_numpy(float))
    out = ~used & ~bad
    scaled = np.exp(t["log_ratio"].to_numpy(float))
    err = t["ratio_err"].to_numpy(float) / g["scale"]
    for mask, marker, color, label in ((used, "o", "tab:blue", "used"), (out, "s", "tab:orange", "left out")):
        if mask.any():
            top.errorbar(x[mask], scaled[mask], yerr=np.where(np.isfinite(err[mask]), err[mask], 0.0), fmt=marker,
                         ms=3, color=color, lw=0.6, label=f"{label} ({int(mask.sum())})")
    pred = result.prediction
    if np.isfinite(g.get("mean_log_ratio", np.nan)):
        top.axhline(math.exp(g["mean_log_ratio"]), color="black", lw=1, label="mean (fitted tau_c)")
    if g.get("expected_ratio") is not None and np.isfinite(g["expected_ratio"]):
        top.axhline(g["expected_ratio"], color="tab:green", lw=1, ls="--", label="predicted at expected tau_c")
    top.set_ylabel(f"{g['numerator']}/{g['denominator']} / scale")
    top.set_xlabel("residue (input order)")
    top.legend(fontsize=7)
    bottom.semilogx(pred.tau_c_ns, pred.ratio, "-", color="black", lw=1, label="forward model")
    _tau_lines(bottom, g)
    bottom.set_xlabel("tau_c [ns]")
    bottom.set_ylabel("predicted ratio")
    bottom.legend(fontsize=7)


def _tau_lines(ax, g):
    tau = g.get("tau_c_ns")
    err = g.get("tau_c_err_ns")
    vertical = ax.get_xscale() == "log"
    line = ax.axvline if vertical else ax.axhline
    span = ax.axvspan if vertical else ax.axhspan
    if tau is not None and np.isfinite(tau):
        line(tau, color="tab:blue", lw=1.2, label=f"fitted tau_c {tau:.2f} ns")
        if err is not None and np.isfinite(err):
            span(tau - err, tau + err, color="tab:blue", alpha=0.15)
    expected = g.get("expected_tau_c_ns")
    if expected is not None and np.isfinite(expected):
        line(expected, color="tab:green", lw=1.2, ls="--", label=f"expected tau_c {expected:.2f} ns")


def plot_result(result, path, *, data=None, force: bool = False, max_panels: int = 24) -> Path:
    """:func:`plot_tau_c` for τc and ratio fits, :func:`plot_fits` for the per-residue curve fits."""
    from backbone.fitting.ratio import RatioFit
    from backbone.fitting.tumbling_fit import TauCFit

    if isinstance(result, (TauCFit, RatioFit)):
        return plot_tau_c(result, path, force=force)
    return plot_fits(result, data, path, force=force, max_panels=max_panels)
