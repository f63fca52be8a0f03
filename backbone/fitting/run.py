"""One entry point for every fit the command line offers, and the text table of a result.

:func:`run_fit` takes the data file and the model id and calls the one library function that fits it:

==================================================  =========================================================
model                                               function (options are its keyword arguments)
==================================================  =========================================================
``decay``, ``decay-offset``, ``recovery``,          :func:`backbone.fitting.series.fit_decays`
``two-point``
``buildup``                                         :func:`backbone.fitting.buildup.fit_buildups` (``j_hz``)
``tau-c``                                           :func:`backbone.fitting.tumbling_fit.fit_tau_c` (a rate
                                                    table, or an NMR-STAR file ending .str/.star/.nmrstar)
``ratio``                                           :func:`backbone.fitting.ratio.fit_ratio` (``field_mhz``,
                                                    ``labeling``, ``scale``)
==================================================  =========================================================

Every result has ``.as_dict()`` (the ``backbone fit --json`` object) and ``.table`` (pandas, one row per input
residue). :func:`fit_table_text` renders a result as a plain text table plus a few summary lines. Neither prints;
the per-residue fits take ``progress=callable(done, total)`` for a progress bar the caller draws.
"""

from __future__ import annotations

import inspect
import math
from pathlib import Path

import numpy as np

from backbone.errors import BackboneError

__all__ = ["RUN_MODELS", "run_fit", "fit_table_text"]

#: Model ids :func:`run_fit` accepts.
RUN_MODELS = ("decay", "decay-offset", "recovery", "two-point", "buildup", "tau-c", "ratio")
_NMRSTAR_SUFFIXES = (".str", ".star", ".nmrstar")


def _target(model):
    from backbone.fitting.buildup import fit_buildups
    from backbone.fitting.ratio import fit_ratio
    from backbone.fitting.series import fit_decays
    from backbone.fitting.tumbling_fit import fit_tau_c

    if model in ("decay", "decay-offset", "recovery", "two-point"):
        return fit_decays
    return {"buildup": fit_buildups, "tau-c": fit_tau_c, "ratio": fit_ratio}[model]


def run_fit(path, *, model: str = "decay", **options):
    """Fit the data in ``path`` with ``model``; ``options`` are the keyword arguments of the fitting function.

    Parameters
    ----------
    path : str, Path (or, for ``ratio``, a pair of peak-list paths)
        Data file: decay/build-up points, a rate table or NMR-STAR file (``tau-c``), intensities (``ratio``).
    model : str
        One of :data:`RUN_MODELS`.
    **options
        Passed on (e.g. ``errors``, ``n_draws``, ``seed``, ``engine``, ``progress`` for the curve fits;
        ``j_hz`` for build-ups; ``proton_mhz``, ``labeling``, ``sequence``, ``temperature_k`` for ``tau-c``;
        ``field_mhz``, ``labeling``, ``scale``, ``experiments`` for ``ratio``). For ``tau-c`` from an NMR-STAR
        file, ``atom`` and ``star_field_mhz`` select the list (:func:`~backbone.fitting.data.read_nmrstar`).

    Returns
    -------
    FitResult, TauCFit or RatioFit

    Raises
    ------
    BackboneError
        Unknown model or option (the message lists the allowed ones), and whatever the fit raises.
    """
    if model not in RUN_MODELS:
        raise BackboneError(f"unknown fit model {model!r}; allowed: {', '.join(RUN_MODELS)}")
    fn = _target(model)
    options = dict(options)
    data = path
    if model == "tau-c" and isinstance(path, (str, Path)) and Path(path).suffix.lower() in _NMRSTAR_SUFFIXES:
        from backbone.fitting.data import read_nmrstar

        data = read_nmrstar(path, atom=options.pop("atom", "N"), field_mhz=options.pop("star_field_mhz", None))
    allowed = [name for name, p in inspect.signature(fn).parameters.items() if p.kind is p.KEYWORD_ONLY]
    if model in ("decay", "decay-offset", "recovery", "two-point"):
        allowed.remove("model")
        options["model"] = model
    if model in ("tau-c", "ratio"):
        allowed.append("progress")
    unknown = [k for k in options if k not in allowed and k != "model"]
    if unknown:
        raise BackboneError(f"option {unknown[0]!r} is not known for the {model!r} fit; allowed: {', '.join(allowed)}")
    progress = options.pop("progress", None) if model in ("tau-c", "ratio") else None
    if progress is None:
        return fn(data, **options)
    # A global fit is one step: the hook hears its start and its end.
    from backbone.fitting._shared import Progress

    bar = Progress(progress, 1)
    bar.set(0)
    result = fn(data, **options)
    bar.finish()
    return result


def _cell(value, digits=4) -> str:
    if value is None:
        return "-"
    if isinstance(value, (bool, np.bool_)):
        return "yes" if value else "no"
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    if isinstance(value, (float, np.floating)):
        return "-" if not math.isfinite(value) else f"{value:.{digits}g}"
    return str(value)


def _columns(result):
    t = result.table
    model = getattr(result, "model", None) or result.as_dict()["model"]
    if model == "tau-c":
        cols = ["residue", "field_mhz", "status", "used", "R1", "R2", "NOE", "ratio", "tau_c_ratio_ns", "tau_c_ratio_ns_err"]
    elif model == "ratio":
        cols = ["residue", "status", "used", "numerator", "denominator", "ratio", "tau_c_ns", "tau_c_ns_err"]
    else:
        params = result.global_info.get("parameters", [])
        cols = ["residue"] + (["series"] if "series" in t.columns else []) + ["status"]
        for p in params:
            cols += [p, f"{p}_err"]
        cols += ["reduced_chi2", "n_points"]
    return model, [c for c in cols if c in t.columns]


def fit_table_text(result, *, reasons: bool = True) -> str:
    """A plain text table of a fit result (one line per residue) and summary lines; no trailing spaces.

    Parameters
    ----------
    result : FitResult, TauCFit or RatioFit
    reasons : bool
        Append each residue's reason (when not empty) on an indented line below it.
    """
    model, cols = _columns(result)
    t = result.table
    cells = [[_cell(v) for v in row] for row in t[cols].itertuples(index=False)]
    widths = [max([len(c)] + [len(r[k]) for r in cells]) for k, c in enumerate(cols)]
    lines = ["  ".join(c.ljust(w) for c, w in zip(cols, widths)).rstrip()]
    lines.append("  ".join("-" * w for w in widths))
    reason_col = t["reason"].tolist() if "reason" in t.columns else [""] * len(t)
    for row, why in zip(cells, reason_col):
        lines.append("  ".join(c.ljust(w) for c, w in zip(row, widths)).rstrip())
        if reasons and why:
            lines.append(f"    {why}")
    g = result.global_info
    lines.append("")
    counts = g.get("status_counts", {})
    lines.append(f"model {model}: {len(t)} residues (" + ", ".join(f"{k} {v}" for k, v in counts.items() if v) + ")")
    if model in ("tau-c", "ratio"):
        tau, err = g.get("tau_c_ns"), g.get("tau_c_err_ns")
        if tau is not None and math.isfinite(tau):
            lines.append(f"tau_c = {tau:.3g} +/- {_cell(err, 2)} ns from {g.get('n_used')} residues")
        else:
            lines.append("tau_c: not determined")
        if g.get("expected_tau_c_ns") is not None:
            lines.append(f"expected from the sequence: {g['expected_tau_c_ns']:.3g} ns")
        lines.append(f"verdict: {g.get('verdict_message')}")
        for note in g.get("notes", []):
            lines.append(f"note: {note}")
    else:
        lines.append(f"uncertainty: {g.get('uncertainty')}")
    for problem in g.get("problems", [])[:20]:
        lines.append(f"data: {problem}")
    more = len(g.get("problems", [])) - 20
    if more > 0:
        lines.append(f"data: ... and {more} more flagged points")
    return "\n".join(lines) + "\n"
