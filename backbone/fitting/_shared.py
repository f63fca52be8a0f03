"""Pieces the per-residue fitting drivers share (decays in :mod:`~backbone.fitting.series`, build-ups in
:mod:`~backbone.fitting.buildup`): option checks, the padded per-residue arrays, the status rules, resampling
noise, the results table, the covariance of a weighted Jacobian and JSON conversion.

Status rules (one place, used by both drivers)
----------------------------------------------
Before the fit, per (series, residue): fewer usable points than needed → ``too-few-points`` (no point
excluded) or ``bad-data`` (points were excluded); all usable intensities equal → ``failed`` (nothing to fit).
After the fit: not converged → ``failed``; with covariance errors a singular covariance (a judged parameter's
error not finite) → ``failed``; parameters and errors of failed residues are NaN. A relative error above
:data:`MAX_RELATIVE_ERROR` of a judged parameter, a model-specific note (a negative rate, a rate at its bound),
or most resampling refits failed → ``poorly-determined``. ``ok`` otherwise. Excluded points are named in the
reason whatever the status.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from backbone.errors import BackboneError

__all__ = [
    "STATUSES",
    "ERROR_METHODS",
    "ENGINES",
    "N_DRAWS_RANGE",
    "MAX_RELATIVE_ERROR",
    "Groups",
    "covariance",
    "json_value",
    "check_fit_options",
    "as_decay_data",
    "usable_mask",
    "pad_groups",
    "prefit_statuses",
    "postfit_statuses",
    "note_exclusions",
    "result_table",
    "resampling_noise",
    "uncertainty_text",
    "Progress",
]

#: Status values of a fitted residue (the ``backbone fit --json`` contract).
STATUSES = ("ok", "poorly-determined", "failed", "too-few-points", "bad-data")
#: Uncertainty methods.
ERROR_METHODS = ("covariance", "monte-carlo", "bootstrap")
#: Fitting engines: ``auto`` (batched, lmfit for the residues it cannot converge), ``batched``, ``lmfit``.
ENGINES = ("auto", "batched", "lmfit")
#: Allowed number of Monte Carlo / bootstrap draws per residue (inclusive).
N_DRAWS_RANGE = (10, 10000)
#: Relative error above which a parameter is poorly determined (common practice).
MAX_RELATIVE_ERROR = 0.5


def covariance(jw: np.ndarray) -> np.ndarray:
    """(JᵀJ)⁻¹ per row of a weighted Jacobian ``jw`` (B, n, p); NaN where singular.

    Computed from an eigen-decomposition of the diagonally scaled matrix (so parameters of very different size
    do not spoil the condition number); a smallest scaled eigenvalue below 1e-13 of the largest counts as
    singular.
    """
    a = np.swapaxes(jw, -1, -2) @ jw
    d = np.sqrt(np.diagonal(a, axis1=-2, axis2=-1))
    ok = np.all(d > 0, axis=-1) & np.all(np.isfinite(a), axis=(-2, -1))
    d_safe = np.where(ok[:, None], d, 1.0)
    s = a / (d_safe[:, :, None] * d_safe[:, None, :])
    s = np.where(ok[:, None, None], s, np.eye(a.shape[-1]))
    lam, vec = np.linalg.eigh(s)
    ok &= lam[:, 0] > 1e-13 * lam[:, -1]
    inv = np.einsum("bik,bk,bjk->bij", vec, 1.0 / np.where(lam > 0, lam, np.inf), vec)
    cov = inv / (d_safe[:, :, None] * d_safe[:, None, :])
    cov[~ok] = np.nan
    return cov


def json_value(value):
    """Plain JSON data: dicts and sequences recursively, numpy scalars as Python numbers, NaN/inf as None."""
    if isinstance(value, dict):
        return {str(k): json_value(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_value(v) for v in value]
    if isinstance(value, np.ndarray):
        return json_value(value.tolist())
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        return float(value) if math.isfinite(value) else None
    return value


def check_fit_options(errors, n_draws, engine) -> None:
    """Raise BackboneError for an unknown error method or engine, or ``n_draws`` not an int in range."""
    if errors not in ERROR_METHODS:
        raise BackboneError(f"unknown error method {errors!r}; allowed: {', '.join(ERROR_METHODS)}")
    if engine not in ENGINES:
        raise BackboneError(f"unknown fitting engine {engine!r}; allowed: {', '.join(ENGINES)}")
    if isinstance(n_draws, bool) or not isinstance(n_draws, (int, np.integer)):
        raise BackboneError(f"n_draws must be an integer, got {n_draws!r}")
    lo, hi = N_DRAWS_RANGE
    if not lo <= n_draws <= hi:
        raise BackboneError(f"n_draws = {n_draws} is outside the allowed range [{lo}, {hi}]")


def as_decay_data(data, who: str):
    """DecayData from DecayData, a DataFrame or a path; anything else is a BackboneError naming ``who``."""
    from backbone.fitting.data import DecayData, decays_from_frame, read_decays

    if isinstance(data, DecayData):
        return data
    if isinstance(data, pd.DataFrame):
        return decays_from_frame(data)
    if isinstance(data, (str, Path)):
        return read_decays(data)
    raise BackboneError(f"{who} needs DecayData, a DataFrame or a file path, got {type(data).__name__}")


def usable_mask(flags: np.ndarray, ignorable=frozenset()) -> np.ndarray:
    """Points with no flag, or only flags in ``ignorable``."""
    out = np.ones(len(flags), dtype=bool)
    for i, flag in enumerate(flags):
        if flag and set(flag.split("; ")) - set(ignorable):
            out[i] = False
    return out


@dataclass
class Groups:
    """The usable points of every (series, residue), padded to one row each in delay order.

    ``t``, ``y``, ``e`` (errors, 1 without an error column), ``w`` (1/e, 0 in the padding) and ``used`` have
    shape (G, width); ``counts`` the usable points per group, ``excluded`` the notes of the excluded points.
    """

    uniques: list
    counts: np.ndarray
    t: np.ndarray
    y: np.ndarray
    e: np.ndarray
    w: np.ndarray
    used: np.ndarray
    excluded: list

    @property
    def n(self) -> int:
        return len(self.uniques)

    @property
    def n_excluded(self) -> np.ndarray:
        return np.array([len(notes) for notes in self.excluded], dtype=int)


def pad_groups(data, usable: np.ndarray) -> Groups:
    """Group the points of ``data`` (DecayData) by (series, residue) in input order and pad them."""
    points = data.points
    keys = list(zip(points["series"], points["residue"]))
    codes, uniques = pd.factorize(pd.Series(keys, dtype=object), sort=False)
    n_groups = len(uniques)
    order = np.lexsort((points["delay_s"].to_numpy(), codes))
    order = order[usable[order]]
    g_codes = codes[order]
    counts = np.bincount(g_codes, minlength=n_groups)
    width = max(int(counts.max()) if counts.size else 0, 1)
    starts = np.concatenate([[0], np.cumsum(counts)[:-1]])
    pos = np.arange(order.size) - starts[g_codes]
    t_pad = np.zeros((n_groups, width))
    y_pad = np.zeros((n_groups, width))
    e_pad = np.ones((n_groups, width))
    used = np.zeros((n_groups, width), dtype=bool)
    t_pad[g_codes, pos] = points["delay_s"].to_numpy()[order]
    y_pad[g_codes, pos] = points["intensity"].to_numpy()[order]
    if data.has_errors:
        e_pad[g_codes, pos] = points["error"].to_numpy()[order]
    used[g_codes, pos] = True
    excluded = [[] for _ in range(n_groups)]
    lines = points["line"].to_numpy()
    flags = points["flag"].to_numpy(dtype=object)
    for i in np.flatnonzero(~usable):
        excluded[codes[i]].append(f"line {lines[i]} {flags[i]}")
    return Groups(
        uniques=list(uniques),
        counts=counts,
        t=t_pad,
        y=y_pad,
        e=e_pad,
        w=np.where(used, 1.0 / e_pad, 0.0),
        used=used,
        excluded=excluded,
    )


def prefit_statuses(groups: Groups, need: int, model_text: str, curve_noun: str):
    """(status, reasons, to_fit) before fitting: too few points, bad data, a constant series."""
    n = groups.n
    status = np.array(["ok"] * n, dtype=object)
    reasons: list[list[str]] = [[] for _ in range(n)]
    n_excluded = groups.n_excluded
    used, y = groups.used, groups.y
    with np.errstate(invalid="ignore"):
        y_max = np.where(used, np.abs(y), 0.0).max(axis=1)
        y_range = np.where(used, y, -np.inf).max(axis=1) - np.where(used, y, np.inf).min(axis=1)
    to_fit = np.zeros(n, dtype=bool)
    for g in range(n):
        c = groups.counts[g]
        if c < need:
            status[g] = "bad-data" if n_excluded[g] else "too-few-points"
            reasons[g].append(f"{c} usable point{'s' if c != 1 else ''}; {model_text} needs at least {need}")
        elif not y_range[g] > 1e-12 * y_max[g]:
            status[g] = "failed"
            reasons[g].append(
                f"all {c} usable intensities are equal ({y[g, 0]:g}): a constant series has no {curve_noun} to fit"
            )
        else:
            to_fit[g] = True
    return status, reasons, to_fit


def postfit_statuses(
    status,
    reasons,
    values,
    errs,
    *,
    to_fit,
    converged,
    messages,
    errors,
    n_draws,
    draws_failed,
    judged,
    names,
    check_covariance=True,
    extra_notes=None,
):
    """Apply the post-fit status rules (module docstring) in place.

    ``judged`` are the parameter indices whose relative error is judged (and whose covariance must be finite);
    ``extra_notes(g)`` returns model-specific notes that make a residue poorly determined.
    """
    for g in np.flatnonzero(to_fit):
        if not converged[g]:
            status[g] = "failed"
            why = messages.get(g)
            reasons[g].append(f"the fit did not converge{': ' + why if why else ''}")
            values[g] = np.nan
            errs[g] = np.nan
            continue
        if errors == "covariance" and check_covariance and not np.all(np.isfinite(errs[g, list(judged)])):
            status[g] = "failed"
            reasons[g].append("the parameters are not determined (singular covariance at the optimum)")
            values[g] = np.nan
            errs[g] = np.nan
            continue
        notes = []
        if errors != "covariance" and draws_failed[g] > n_draws // 2:
            notes.append(f"only {n_draws - draws_failed[g]} of {n_draws} {errors} refits converged")
        for j in judged:
            v, e = values[g, j], errs[g, j]
            if np.isfinite(e) and (v == 0 or e / abs(v) > MAX_RELATIVE_ERROR):
                ratio = math.inf if v == 0 else e / abs(v)
                rel = f"{100 * ratio:.0f}%" if ratio <= 10 else "above 1000%"
                notes.append(f"relative error of {names[j]} is {rel} (> {100 * MAX_RELATIVE_ERROR:.0f}%)")
        if extra_notes is not None:
            notes.extend(extra_notes(g))
        if notes:
            status[g] = "poorly-determined"
            reasons[g] = notes + reasons[g]
        if errors != "covariance" and 0 < draws_failed[g] <= n_draws // 2:
            reasons[g].append(f"{draws_failed[g]} of {n_draws} {errors} refits did not converge and were left out")


def note_exclusions(groups: Groups, reasons) -> None:
    """Append the excluded points of each group to its reasons."""
    for g, notes in enumerate(groups.excluded):
        if notes:
            k = len(notes)
            reasons[g].append(f"{k} point{'s' if k != 1 else ''} excluded ({'; '.join(notes)})")


def result_table(groups: Groups, has_series, status, reasons, names, values, errs, chi2, n_par) -> pd.DataFrame:
    """The per-residue table of a FitResult (column order of the JSON contract)."""
    dof = groups.counts - n_par
    with np.errstate(divide="ignore", invalid="ignore"):
        reduced = np.where((dof > 0) & np.isfinite(chi2), chi2 / dof, np.nan)
    table = pd.DataFrame({"residue": pd.Series([k[1] for k in groups.uniques], dtype=object)})
    if has_series:
        table["series"] = [k[0] for k in groups.uniques]
    table["status"] = status
    table["reason"] = ["; ".join(r) for r in reasons]
    for j, name in enumerate(names):
        table[name] = values[:, j]
        table[f"{name}_err"] = errs[:, j]
    table["reduced_chi2"] = reduced
    table["n_points"] = groups.counts
    table["n_excluded"] = groups.n_excluded
    return table


def resampling_noise(method, rng, y, curve, e, w, n_free, n_draws, has_errors) -> np.ndarray:
    """Noise (n_draws, n) added to the best-fit ``curve`` for one residue's refits.

    ``monte-carlo``: Gaussian with the given errors ``e`` (or the residual RMS sqrt(RSS/(n − p)));
    ``bootstrap``: the centred, sqrt(n/(n − p))-inflated weighted residuals resampled with replacement
    (Efron & Tibshirani 1993, An Introduction to the Bootstrap, ch. 9), divided by the weights ``w``.
    """
    n = y.size
    if method == "monte-carlo":
        if has_errors:
            sigma = e
        else:
            resid = y - curve
            sigma = np.full(n, math.sqrt(np.sum(resid**2) / (n - n_free)) if n > n_free else math.nan)
        return rng.standard_normal((n_draws, n)) * sigma
    r = w * (y - curve)
    r = (r - r.mean()) * math.sqrt(n / (n - n_free))
    return r[rng.integers(0, n, size=(n_draws, n))] / w


def uncertainty_text(errors, n_draws, has_errors) -> str:
    """How the reported errors were obtained, in words."""
    if errors == "covariance":
        if has_errors:
            return "covariance of the weighted fit, given errors taken as absolute"
        return "covariance scaled by the reduced chi-square (no error column: noise estimated from the residuals)"
    noise = "the given errors" if has_errors else "the residual RMS sqrt(RSS/(n-p))"
    if errors == "monte-carlo":
        return f"standard deviation of {n_draws} refits of the best fit plus Gaussian noise of {noise}"
    return f"standard deviation of {n_draws} refits of the best fit plus resampled residuals (bootstrap)"


class Progress:
    """Calls ``callback(done, total)`` with a non-decreasing ``done``; a None callback does nothing.

    The library never prints: the caller (the CLI) draws the bar. A callback that is not callable is a
    BackboneError.
    """

    def __init__(self, callback, total: int):
        if callback is not None and not callable(callback):
            raise BackboneError(f"progress must be a callable (done, total) or None, got {type(callback).__name__}")
        self._callback = callback
        self.total = int(total)
        self.done = 0

    def advance(self, k: int = 1) -> None:
        self.set(self.done + int(k))

    def set(self, done: int) -> None:
        done = min(max(int(done), self.done), self.total)
        if self._callback is not None and (done != self.done or done == 0):
            self._callback(done, self.total)
        self.done = done

    def finish(self) -> None:
        if self._callback is not None and self.done < self.total:
            self._callback(self.total, self.total)
        self.done = self.total
