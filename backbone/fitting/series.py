"""Per-residue fits of decay series, with statuses and uncertainties.

:func:`fit_decays` fits every (series, residue) of a :class:`~backbone.fitting.data.DecayData` with one of the
models of :mod:`backbone.fitting.decay` and returns a :class:`FitResult`: a table with one row per input
residue (status, reason, parameters and their errors, reduced chi-square, point counts) and its JSON form
for ``backbone fit --json``.

Engines
-------
Exponential fits of hundreds of residues are small and alike, so the default engine fits them all at once:
:func:`fit_batch` is a Levenberg–Marquardt iteration (Marquardt's diagonal scaling; Levenberg 1944, Quart.
Appl. Math. 2, 164; Marquardt 1963, J. SIAM 11, 431) vectorized over residues with numpy, with analytic
Jacobians from :func:`backbone.fitting.decay.jacobian` and the covariance ``(JᵀWJ)⁻¹`` at the optimum. It
fits any :class:`BatchModel` (model values and Jacobian for many parameter vectors, starting values, bounds):
the build-up fits of :mod:`backbone.fitting.buildup` use the same engine.
Residues it cannot converge (or leaves at a degenerate point) are refitted one by one with lmfit (MINPACK
``leastsq``), the general path; ``engine="lmfit"`` fits everything that way. Both find the same
least-squares optimum; the tests check agreement with lmfit to 1e-6 relative.

Uncertainties
-------------
* ``covariance``: with an error column the fit is weighted (weights 1/σ) and the errors are the square roots
  of the diagonal of ``(JᵀWJ)⁻¹`` (the given σ taken as absolute). Without one, that covariance is scaled by
  the reduced chi-square, i.e. the noise is estimated from the residuals (as NIST StRD certifies its
  standard errors).
* ``monte-carlo``: the best-fit curve plus Gaussian noise (the given σ, or the residual RMS
  ``sqrt(RSS / (n - p))``) is refitted ``n_draws`` times; errors are the standard deviations of the refits.
* ``bootstrap``: residual bootstrap (Efron & Tibshirani 1993, An Introduction to the Bootstrap, ch. 9): the
  centred, ``sqrt(n / (n - p))``-inflated (weighted) residuals are resampled with replacement onto the
  best-fit curve and refitted ``n_draws`` times.

Progress: ``progress=callable(done, total)`` is called as residues are finished (the library never prints).

Draws use a :class:`numpy.random.Generator` per residue, spawned from one ``SeedSequence(seed)`` in input
order, so a residue's draws do not depend on the other residues; the seed used is reported in ``global``.

Statuses
--------
The rules are shared with the build-up fits (:mod:`backbone.fitting._shared`).
``too-few-points``: fewer usable points than parameters + 1 (the two-point model needs 2) and none excluded.
``bad-data``: the same after excluding flagged points. ``failed``: the fit did not converge, ended at a
degenerate point where the parameters are not determined (singular covariance, e.g. a rate run off to
infinity), or the series is constant; its parameters are reported as NaN. ``poorly-determined``: a relative
error above 50 % of the amplitude/plateau or of the rate (the offset is not judged: it is naturally near
zero), a negative rate, or most resampling refits failed. ``ok`` otherwise. Excluded points are named (line
and reason) in ``reason`` whatever the status.

Non-positive intensities are excluded for ``decay`` and ``two-point`` (a pure decay is positive, and the
two-point rate takes logarithms), but kept for ``decay-offset`` and ``recovery``, whose curves pass through
zero.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from backbone.errors import BackboneError
from backbone.fitting._shared import (
    ENGINES,
    ERROR_METHODS,
    MAX_RELATIVE_ERROR,
    N_DRAWS_RANGE,
    STATUSES,
    Progress,
    as_decay_data,
    check_fit_options,
    covariance,
    json_value,
    note_exclusions,
    pad_groups,
    postfit_statuses,
    prefit_statuses,
    resampling_noise,
    result_table,
    uncertainty_text,
    usable_mask,
)
from backbone.fitting.data import FLAG_NONPOSITIVE_INTENSITY, DecayData
from backbone.fitting.decay import (
    LEASTSQ_PRECISE,
    MODEL_IDS,
    PARAMETERS,
    evaluate,
    initial_values,
    jacobian,
    lmfit_model,
    two_point_rate,
)

__all__ = [
    "STATUSES",
    "ERROR_METHODS",
    "ENGINES",
    "N_DRAWS_RANGE",
    "MAX_RELATIVE_ERROR",
    "BatchModel",
    "BatchFit",
    "FitResult",
    "decay_batch_model",
    "fit_batch",
    "covariance_errors",
    "fit_decays",
]

_FUNCTIONS = {
    "decay": "amplitude * exp(-rate * t)",
    "decay-offset": "amplitude * exp(-rate * t) + offset",
    "recovery": "plateau * (1 - exp(-rate * t))",
    "two-point": "amplitude * exp(-rate * t) through two delays",
}
# Parameters whose relative error is judged (an offset is naturally near zero).
_JUDGED = {"decay": (0, 1), "decay-offset": (0, 1), "recovery": (0, 1), "two-point": (1,)}
# Largest number of rows (residues × draws) fitted in one batch during resampling.
_DRAW_BATCH_ROWS = 50_000


# ---------------------------------------------------------------------------------------------------------
# batched Levenberg–Marquardt
# ---------------------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class BatchModel:
    """A model :func:`fit_batch` can fit to many rows at once.

    Attributes
    ----------
    parameters : tuple of str
        Names of the fitted parameters, in the order of the parameter vectors.
    jacobian : callable
        ``jacobian(t, params) -> (values, jac)`` for ``t`` (B, n) [s] and ``params`` (B, p): model values
        (B, n) and derivatives (B, n, p).
    initial_values : callable or None
        ``initial_values(t, y, w) -> (B, p)`` starting values (NaN rows where none can be found); used when no
        ``p0`` is given and for restarts.
    lower, upper : array (p,) or None
        Bounds; steps are projected onto them. None: unbounded.
    """

    parameters: tuple
    jacobian: Callable
    initial_values: Callable | None = None
    lower: np.ndarray | None = None
    upper: np.ndarray | None = None


def decay_batch_model(model: str) -> BatchModel:
    """The :class:`BatchModel` of a decay model id (``decay``, ``decay-offset``, ``recovery``)."""
    if model not in MODEL_IDS[:3]:
        raise BackboneError(f"unknown batch model {model!r}; allowed: {', '.join(MODEL_IDS[:3])} or a BatchModel")
    return BatchModel(
        parameters=PARAMETERS[model],
        jacobian=lambda t, p: jacobian(model, t, p),
        initial_values=lambda t, y, w: initial_values(model, t, y, w),
    )


def _as_batch_model(model) -> BatchModel:
    if isinstance(model, BatchModel):
        return model
    if isinstance(model, str):
        return decay_batch_model(model)
    raise BackboneError(f"fit_batch: model must be a decay model id or a BatchModel, got {type(model).__name__}")


@dataclass(frozen=True)
class BatchFit:
    """Result of :func:`fit_batch` for B rows.

    Attributes
    ----------
    params : array (B, p)
        Best-fit parameters, order of the model's parameters.
    covariance : array (B, p, p)
        ``(JᵀWJ)⁻¹`` at the optimum (weights taken as absolute); NaN where singular.
    chi2 : array (B,)
        Weighted residual sum of squares.
    n_points : array (B,)
        Points with non-zero weight.
    converged : array (B,) of bool
    n_iter : array (B,)
        Iterations used.
    """

    params: np.ndarray
    covariance: np.ndarray
    chi2: np.ndarray
    n_points: np.ndarray
    converged: np.ndarray
    n_iter: np.ndarray

    @property
    def dof(self) -> np.ndarray:
        """Degrees of freedom ``n_points - p``."""
        return self.n_points - self.params.shape[-1]

    def errors(self, *, scale: bool) -> np.ndarray:
        """Standard errors (B, p); ``scale=True`` multiplies the covariance by ``chi2 / dof``."""
        var = np.diagonal(self.covariance, axis1=-2, axis2=-1).copy()
        if scale:
            with np.errstate(divide="ignore", invalid="ignore"):
                var = var * np.where(self.dof > 0, self.chi2 / self.dof, np.nan)[:, None]
        with np.errstate(invalid="ignore"):
            return np.sqrt(var)


def _solve_symmetric(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    try:
        return np.linalg.solve(a, b[..., None])[..., 0]
    except np.linalg.LinAlgError:
        out = np.full(b.shape, np.nan)
        for i in range(a.shape[0]):
            try:
                out[i] = np.linalg.solve(a[i], b[i])
            except np.linalg.LinAlgError:
                pass
        return out


def fit_batch(model, t, y, weights=None, p0=None, *, max_iter: int = 200, restart: bool = True) -> BatchFit:
    """Weighted least-squares fits of one model to many rows at once (Levenberg–Marquardt).

    Minimizes ``sum(w² (y - f(t; p))²)`` per row, steps projected onto the model's bounds. Convergence: the
    largest cosine between the residual vector and a Jacobian column below 1e-10 (MINPACK's gtol test), or an
    accepted step whose extrapolated remaining distance (linear convergence estimated from successive steps)
    is below 1e-10 of each parameter (or of its σ-like scale ``|r| / |J_j|`` when that is larger), or an
    undamped step whose predicted chi-square reduction is below 1e-15 of the chi-square (round-off: no further
    step could be verified), or a step the bounds reduce to nothing. A row whose damping grows past 1e12
    without any of these is converged only if that cosine is below 1e-6.

    Parameters
    ----------
    model : str or BatchModel
        ``decay``, ``decay-offset``, ``recovery`` (:func:`decay_batch_model`), or any :class:`BatchModel`.
    t : array [s], shape (n,) or (B, n)
    y : array [intensity], shape (B, n) or (n,)
    weights : array, optional, broadcastable to (B, n)
        1/σ per point; 0 removes a point (padding of ragged rows). Default 1.
    p0 : array (B, p) or (p,), optional
        Starting values; default the model's ``initial_values``.
    max_iter : int
        Iteration limit per row.
    restart : bool
        With ``p0`` given, rows that do not converge or end at a degenerate point (singular ``JᵀWJ``, as when
        the rate runs off to infinity and its Jacobian column vanishes) are refitted from the model's
        ``initial_values``; the result with the smaller chi-square is kept.

    Returns
    -------
    BatchFit
    """
    bm = _as_batch_model(model)
    y = np.atleast_2d(np.asarray(y, dtype=float))
    t = np.broadcast_to(np.asarray(t, dtype=float), y.shape)
    w = np.ones_like(y) if weights is None else np.broadcast_to(np.asarray(weights, dtype=float), y.shape)
    w = np.where(np.isfinite(w) & (w > 0), w, 0.0)
    y = np.where(w > 0, y, 0.0)
    t = np.where(w > 0, t, 0.0)
    n_par = len(bm.parameters)
    lower = np.full(n_par, -np.inf) if bm.lower is None else np.asarray(bm.lower, dtype=float)
    upper = np.full(n_par, np.inf) if bm.upper is None else np.asarray(bm.upper, dtype=float)
    if p0 is None:
        if bm.initial_values is None:
            raise BackboneError("fit_batch: the model has no initial_values; give p0")
        p = np.array(bm.initial_values(t, y, w), dtype=float)
    else:
        p = np.array(np.broadcast_to(np.asarray(p0, dtype=float), (y.shape[0], n_par)))
    n_rows = y.shape[0]
    n_points = (w > 0).sum(axis=-1)

    converged = np.zeros(n_rows, dtype=bool)
    n_iter = np.zeros(n_rows, dtype=int)
    lam = np.full(n_rows, 1e-3)
    u_prev = np.full(n_rows, np.nan)
    active = np.flatnonzero(np.all(np.isfinite(p), axis=-1) & (n_points >= n_par))

    def state(rows, params):
        f, jac = bm.jacobian(t[rows], params)
        r = w[rows] * (y[rows] - f)
        jw = w[rows][..., None] * jac
        return r, jw, (r * r).sum(axis=-1)

    with np.errstate(over="ignore", invalid="ignore", divide="ignore", under="ignore"):
        chi2 = np.full(n_rows, np.nan)
        res = np.zeros_like(y)
        jws = np.zeros(y.shape + (n_par,))
        if active.size:
            res[active], jws[active], chi2[active] = state(active, p[active])
        for _ in range(max_iter):
            if active.size == 0:
                break
            n_iter[active] += 1
            jw_a, r_a, p_a, c_a = jws[active], res[active], p[active], chi2[active]
            jw_t = np.swapaxes(jw_a, -1, -2)
            a = jw_t @ jw_a
            g = (jw_t @ r_a[..., None])[..., 0]
            diag = np.diagonal(a, axis1=-2, axis2=-1)
            norm_r = np.sqrt(c_a)
            col = np.sqrt(diag)
            scale_g = col * norm_r[:, None]
            cosine = np.max(np.abs(g) / np.where(scale_g > 0, scale_g, np.inf), axis=-1)
            done = (cosine <= 1e-10) | (c_a == 0)
            damping = np.where(diag > 0, diag, 1.0) * lam[active][:, None]
            m = a + damping[:, :, None] * np.eye(n_par)
            p_new = np.clip(p_a + _solve_symmetric(m, g), lower, upper)
            step = p_new - p_a
            finite = np.all(np.isfinite(p_new), axis=-1)
            r_new = np.zeros_like(r_a)
            jw_new = np.zeros_like(jw_a)
            c_new = np.full(active.size, np.inf)
            if finite.any():
                r_new[finite], jw_new[finite], c_new[finite] = state(active[finite], p_new[finite])
            accept = finite & np.isfinite(c_new) & (c_new <= c_a) & ~done
            # Step size in units of max(|p_j|, σ-like scale |r|/|J_j|); Gauss-Newton converges linearly near
            # the optimum, so the distance left after an accepted step is about u ρ/(1 - ρ), with ρ the ratio
            # of successive step sizes.
            den = np.abs(p_a) + norm_r[:, None] / np.where(col > 0, col, np.inf)
            u = np.max(
                np.where(
                    den > 0, np.abs(step) / np.where(den > 0, den, 1.0), np.where(step == 0, 0.0, np.inf)
                ),
                axis=-1,
            )
            ratio = np.where(np.isfinite(u_prev[active]), u / u_prev[active], 0.5)
            ratio = np.clip(ratio, 0.0, 0.99)
            done |= accept & (u <= 1e-6) & (u * ratio / (1.0 - ratio) <= 1e-10)
            # So does a step whose predicted chi-square reduction (linear model, MINPACK's ftol test) is below
            # the round-off of the chi-square itself: no further step could be verified.
            predicted = 2.0 * np.sum(step * g, axis=-1) - np.einsum("bi,bij,bj->b", step, a, step)
            done |= (predicted <= 1e-15 * c_a) & finite & (lam[active] <= 1e-3)
            # A step the bounds reduce to nothing: the row sits on a bound with nowhere to go.
            done |= finite & np.all(step == 0.0, axis=-1)
            u_prev[active[accept]] = u[accept]
            stalled = ~accept & ~done & (lam[active] > 1e12)
            rows_acc = active[accept]
            p[rows_acc] = p_new[accept]
            chi2[rows_acc] = c_new[accept]
            res[rows_acc] = r_new[accept]
            jws[rows_acc] = jw_new[accept]
            lam[rows_acc] = np.maximum(lam[rows_acc] * 0.1, 1e-15)
            rows_rej = active[~accept & ~done]
            lam[rows_rej] *= 10.0
            converged[active[done]] = True
            converged[active[stalled]] = cosine[stalled] <= 1e-6
            active = active[~done & ~stalled]

        cov = np.full((n_rows, n_par, n_par), np.nan)
        if restart and p0 is not None and bm.initial_values is not None:
            # Rows that did not converge, or ran to a degenerate point (e.g. rate → ∞, where a Jacobian
            # column vanishes), are restarted from the data-driven starting values.
            ok_rows = np.flatnonzero(np.all(np.isfinite(p), axis=-1))
            degenerate = ~converged.copy()
            if ok_rows.size:
                _, jw_end, _ = state(ok_rows, p[ok_rows])
                degenerate[ok_rows] |= np.any(np.isnan(covariance(jw_end)), axis=(-2, -1))
            again = np.flatnonzero(degenerate & (n_points >= n_par))
            if again.size:
                second = fit_batch(bm, t[again], y[again], w[again], None, max_iter=max_iter, restart=False)
                better = second.converged & (
                    ~converged[again] | (second.chi2 < chi2[again]) | ~np.isfinite(chi2[again])
                )
                rows_b = again[better]
                p[rows_b] = second.params[better]
                converged[rows_b] = True
                n_iter[rows_b] += second.n_iter[better]
        fitted = np.flatnonzero(np.all(np.isfinite(p), axis=-1) & (n_points >= n_par))
        if fitted.size:
            _, jw_f, c_f = state(fitted, p[fitted])
            cov[fitted] = covariance(jw_f)
            chi2[fitted] = c_f
    converged &= np.all(np.isfinite(p), axis=-1)
    return BatchFit(
        params=p, covariance=cov, chi2=chi2, n_points=n_points, converged=converged, n_iter=n_iter
    )


def covariance_errors(model, t, y, w, params, *, scale: bool) -> tuple[np.ndarray, np.ndarray]:
    """Standard errors (B, p) from ``(JᵀWJ)⁻¹`` at ``params`` and the weighted χ² (B,), for any rows.

    ``scale=True`` multiplies the covariance by χ²/(n − p) (noise estimated from the residuals). NaN errors
    where the covariance is singular.
    """
    bm = _as_batch_model(model)
    t, y, w, params = (np.atleast_2d(np.asarray(a, dtype=float)) for a in (t, y, w, params))
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        f, jac = bm.jacobian(t, params)
        r = w * (y - f)
        chi2 = (r * r).sum(-1)
        var = np.diagonal(covariance(w[..., None] * jac), axis1=-2, axis2=-1).copy()
        if scale:
            dof = (w > 0).sum(-1) - params.shape[-1]
            var = var * np.where(dof > 0, chi2 / dof, np.nan)[:, None]
        return np.sqrt(var), chi2


# ---------------------------------------------------------------------------------------------------------
# lmfit path
# ---------------------------------------------------------------------------------------------------------
def _fit_lmfit(model, t, y, w, scale):
    """One series with lmfit; returns (params, errors, chi2, converged, message)."""
    lm = lmfit_model(model)
    n_par = len(PARAMETERS[model])
    try:
        params = lm.guess(y, t=t, weights=w)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            result = lm.fit(
                y, params, t=t, weights=w, method="leastsq", scale_covar=scale, fit_kws=dict(LEASTSQ_PRECISE)
            )
    except (ValueError, ArithmeticError, np.linalg.LinAlgError) as err:
        return np.full(n_par, np.nan), np.full(n_par, np.nan), math.nan, False, str(err)
    names = PARAMETERS[model]
    values = np.array([result.params[name].value for name in names])
    converged = result.ier in (1, 2, 3, 4, 6, 7, 8) and bool(np.all(np.isfinite(values)))
    chi2 = float(result.chisqr)
    if result.covar is not None:
        stderr = [result.params[name].stderr for name in names]
        errs = np.array([math.nan if e is None else e for e in stderr], dtype=float)
    else:
        # MINPACK stopped on its tolerance floor (ier 6-8) and returned no covariance: use the analytic one.
        _, jac = jacobian(model, t[None], values[None])
        cov = covariance(w[None, :, None] * jac)[0]
        dof = len(y) - n_par
        factor = chi2 / dof if scale and dof > 0 else 1.0
        with np.errstate(invalid="ignore"):
            errs = np.sqrt(np.diagonal(cov) * factor)
    return values, errs, chi2, converged, result.message




# ---------------------------------------------------------------------------------------------------------
# driver
# ---------------------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class FitResult:
    """Per-residue fit results.

    Attributes
    ----------
    model : str
        Model id.
    table : pandas.DataFrame
        One row per input (series, residue), in input order: ``residue``, ``series`` (if the data had one),
        ``status``, ``reason``, each parameter and ``<parameter>_err`` (rates in s⁻¹), ``reduced_chi2``
        (weighted χ²/(n − p), or the residual variance RSS/(n − p) without errors), ``n_points`` (used),
        ``n_excluded`` (flagged points left out).
    global_info : dict
        Model, method, seed and counts (the ``global`` object of the JSON output).
    problems : tuple of str
        The data problems (flagged points) of the input.
    data : DecayData or None
        The data that were fitted (for plots); not part of :meth:`as_dict`.
    """

    model: str
    table: pd.DataFrame
    global_info: dict = field(default_factory=dict)
    problems: tuple[str, ...] = ()
    data: DecayData | None = field(default=None, repr=False, compare=False)

    def as_dict(self) -> dict:
        """JSON-ready ``{"model", "residues": [...], "global": {...}}`` (NaN written as ``None``)."""
        residues = [
            {key: json_value(value) for key, value in row.items()} for row in self.table.to_dict(orient="records")
        ]
        return {"model": self.model, "residues": residues, "global": json_value(self.global_info)}


def _check_options(model, errors, n_draws, engine):
    if model not in MODEL_IDS:
        raise BackboneError(f"unknown fit model {model!r}; allowed: {', '.join(MODEL_IDS)}")
    check_fit_options(errors, n_draws, engine)
    if model == "two-point" and errors == "bootstrap":
        raise BackboneError(
            "errors='bootstrap' needs residuals, and a two-point rate has none; use 'covariance' or 'monte-carlo'"
        )


def fit_decays(
    data,
    *,
    model: str = "decay",
    errors: str = "covariance",
    n_draws: int = 200,
    seed: int | None = None,
    engine: str = "auto",
    progress=None,
) -> FitResult:
    """Fit every residue's decay series and report statuses and uncertainties.

    Parameters
    ----------
    data : DecayData, pandas.DataFrame or path
        Decay points (see :func:`backbone.fitting.data.read_decays`).
    model : str
        ``decay``, ``decay-offset``, ``recovery`` or ``two-point`` (see :mod:`backbone.fitting.decay`).
    errors : str
        ``covariance``, ``monte-carlo`` or ``bootstrap`` (see the module docstring).
    n_draws : int
        Draws per residue for ``monte-carlo`` / ``bootstrap``, 10 to 10000.
    seed : int, optional
        Seed of the draws; None draws fresh entropy, reported in ``global_info["seed"]``.
    engine : str
        ``auto`` (default), ``batched`` or ``lmfit``.
    progress : callable, optional
        ``progress(done, total)``, called with the number of residues finished (total: the input residues).

    Returns
    -------
    FitResult
        One row per input (series, residue), statuses per the module docstring; never raises for a residue
        that cannot be fitted.

    Raises
    ------
    BackboneError
        Unknown model/method/engine, ``n_draws`` out of range, bootstrap with the two-point model, a progress
        hook that is not callable, or unreadable data.
    """
    _check_options(model, errors, n_draws, engine)
    data = as_decay_data(data, "fit_decays")
    names = PARAMETERS[model]
    n_par = len(names)
    need = 2 if model == "two-point" else n_par + 1
    scale = not data.has_errors
    ignorable = {FLAG_NONPOSITIVE_INTENSITY} if model in ("decay-offset", "recovery") else set()
    groups = pad_groups(data, usable_mask(data.points["flag"].to_numpy(dtype=object), ignorable))
    n_groups = groups.n
    bar = Progress(progress, n_groups)
    bar.set(0)
    t_pad, y_pad, e_pad, w_pad, used, counts = groups.t, groups.y, groups.e, groups.w, groups.used, groups.counts

    values = np.full((n_groups, n_par), np.nan)
    errs = np.full((n_groups, n_par), np.nan)
    chi2 = np.full(n_groups, np.nan)
    status, reasons, to_fit = prefit_statuses(groups, need, f"the {model!r} model", "decay")
    resampling = errors != "covariance"
    if not resampling:
        bar.set(int(np.sum(~to_fit)))

    engine_used = engine
    if model == "two-point":
        engine_used = "closed-form"
        rows = np.flatnonzero(to_fit)
        last = counts[rows] - 1
        t1, i1, e1 = t_pad[rows, 0], y_pad[rows, 0], e_pad[rows, 0]
        t2, i2, e2 = t_pad[rows, last], y_pad[rows, last], e_pad[rows, last]
        have = data.has_errors
        rate, rate_err = two_point_rate(t1, i1, t2, i2, e1 if have else None, e2 if have else None)
        amplitude, amplitude_err = _two_point_amplitude(t1, i1, e1, t2, i2, e2, rate, have)
        values[rows] = np.stack([amplitude, rate], axis=-1)
        errs[rows] = np.stack([amplitude_err, rate_err], axis=-1)
        for g, n in zip(rows, counts[rows]):
            if n > 2:
                reasons[g].append(
                    f"rate from the shortest and longest delays ({t_pad[g, 0]:g} s, {t_pad[g, n - 1]:g} s); "
                    f"{n - 2} other point{'s' if n > 3 else ''} not used"
                )
            if not have:
                reasons[g].append("no intensity errors given: the two-point rate error is unknown")
        converged = np.zeros(n_groups, dtype=bool)
        converged[rows] = np.isfinite(rate)
        messages = {}
    else:
        converged, messages, engine_used = _fit_groups(
            model, engine, to_fit, groups, scale, values, errs, chi2, None if resampling else bar
        )

    # Resampled errors.
    draws_failed = np.zeros(n_groups, dtype=int)
    seed_used = seed
    if resampling:
        bar.set(int(np.sum(~(to_fit & converged))))
        seed_seq = np.random.SeedSequence(seed)
        seed_used = seed if seed is not None else int(seed_seq.entropy)
        children = seed_seq.spawn(n_groups)
        rows = np.flatnonzero(to_fit & converged)
        if model == "two-point" and not data.has_errors:
            rows = rows[:0]  # nothing to draw from: no errors given and no residuals
        new_errs, draws_failed_rows = _resampled_errors(
            model, errors, n_draws, children, rows, groups, values, data.has_errors, bar
        )
        errs[rows] = new_errs
        draws_failed[rows] = draws_failed_rows

    def negative_rate(g):
        return [f"fitted rate is negative ({values[g, 1]:.4g} s^-1)"] if values[g, 1] < 0 else []

    postfit_statuses(
        status,
        reasons,
        values,
        errs,
        to_fit=to_fit,
        converged=converged,
        messages=messages,
        errors=errors,
        n_draws=n_draws,
        draws_failed=draws_failed,
        judged=_JUDGED[model],
        names=names,
        check_covariance=model != "two-point",
        extra_notes=negative_rate,
    )
    note_exclusions(groups, reasons)
    table = result_table(groups, data.has_series, status, reasons, names, values, errs, chi2, n_par)
    problems = tuple(data.problems())
    global_info = {
        "source": data.source,
        "function": _FUNCTIONS[model],
        "parameters": list(names),
        "units": {name: ("s^-1" if name == "rate" else "intensity") for name in names} | {"t": "s"},
        "errors": errors,
        "uncertainty": _uncertainty_text(model, errors, n_draws, data.has_errors),
        "weighted": bool(data.has_errors),
        "engine": engine_used,
        "n_draws": int(n_draws) if errors != "covariance" else None,
        "seed": seed_used,
        "n_residues": int(n_groups),
        "status_counts": {s: int(np.sum(status == s)) for s in STATUSES},
        "n_points_excluded": int(groups.n_excluded.sum()),
        "problems": list(problems),
    }
    bar.finish()
    return FitResult(model=model, table=table, global_info=global_info, problems=problems, data=data)


def _two_point_amplitude(t1, i1, e1, t2, i2, e2, rate, have_errors):
    """A = i1 exp(R t1); ln A = (t2 ln i1 − t1 ln i2)/(t2 − t1), errors propagated to first order."""
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        amplitude = i1 * np.exp(rate * t1)
        if not have_errors:
            return amplitude, np.full_like(amplitude, np.nan)
        dt = t2 - t1
        sigma_ln = np.sqrt((t2 / dt * e1 / i1) ** 2 + (t1 / dt * e2 / i2) ** 2)
        return amplitude, amplitude * sigma_ln


def _fit_groups(model, engine, to_fit, groups, scale, values, errs, chi2, bar):
    """Fit the selected groups in place; returns (converged, messages, engine description)."""
    t_pad, y_pad, w_pad, used = groups.t, groups.y, groups.w, groups.used
    n_groups = t_pad.shape[0]
    converged = np.zeros(n_groups, dtype=bool)
    messages: dict[int, str] = {}
    rows = np.flatnonzero(to_fit)
    retry = rows
    used_lmfit = 0
    if engine in ("auto", "batched") and rows.size:
        fit = fit_batch(model, t_pad[rows], y_pad[rows], w_pad[rows])
        e = fit.errors(scale=scale)
        determined = fit.converged & np.all(np.isfinite(e), axis=-1)
        ok = fit.converged
        values[rows[ok]] = fit.params[ok]
        errs[rows[ok]] = e[ok]
        chi2[rows[ok]] = fit.chi2[ok]
        converged[rows[ok]] = True
        # lmfit gets the rows the batch did not converge, and those it left at a degenerate point.
        retry = rows[~determined] if engine == "auto" else rows[:0]
        for g, n in zip(rows[~ok], fit.n_iter[~ok]):
            messages[g] = f"Levenberg-Marquardt stopped after {n} iterations"
        if bar is not None:
            bar.advance(rows.size - retry.size)
    if engine in ("auto", "lmfit"):
        for g in retry:
            m = used[g]
            v, e, c, conv, message = _fit_lmfit(model, t_pad[g, m], y_pad[g, m], w_pad[g, m], scale)
            used_lmfit += 1
            if conv and (not converged[g] or np.all(np.isfinite(e))):
                values[g], errs[g], chi2[g], converged[g] = v, e, c, True
                messages.pop(g, None)
            elif not converged[g]:
                messages[g] = message
            if bar is not None:
                bar.advance()
    if engine == "auto":
        description = "batched" + (f" (+ lmfit for {used_lmfit} residues)" if used_lmfit else "")
    else:
        description = engine
    return converged, messages, description


def _resampled_errors(model, method, n_draws, children, rows, groups, values, has_errors, bar):
    """Standard deviations of refits to synthetic data for the given groups: (errors, failed draws)."""
    t_pad, y_pad, e_pad, used, counts = groups.t, groups.y, groups.e, groups.used, groups.counts
    n_par = values.shape[1]
    out = np.full((rows.size, n_par), np.nan)
    failed = np.zeros(rows.size, dtype=int)
    if rows.size == 0:
        return out, failed
    width = t_pad.shape[1]
    # Build the synthetic data group by group (each with its own generator), fit in large batches.
    per_chunk = max(1, _DRAW_BATCH_ROWS // n_draws)
    for start in range(0, rows.size, per_chunk):
        chunk = rows[start : start + per_chunk]
        k = chunk.size
        t_c = np.repeat(t_pad[chunk], n_draws, axis=0).reshape(k, n_draws, width)
        w_c = np.where(used[chunk], 1.0 / e_pad[chunk], 0.0) if has_errors else used[chunk].astype(float)
        curve = evaluate("decay" if model == "two-point" else model, t_pad[chunk], values[chunk])
        synthetic = np.zeros((k, n_draws, width))
        for i, g in enumerate(chunk):
            rng = np.random.default_rng(children[g])
            m = used[g]
            noise = resampling_noise(
                method, rng, y_pad[g, m], curve[i, m], e_pad[g, m], w_c[i, m], n_par, n_draws, has_errors
            )
            synthetic[i, :, : counts[g]] = curve[i, m] + noise
        if model == "two-point":
            last = counts[chunk] - 1
            i1 = synthetic[:, :, 0]
            i2 = np.take_along_axis(synthetic, last[:, None, None].repeat(n_draws, axis=1), axis=2)[..., 0]
            t1 = t_pad[chunk, 0][:, None]
            t2 = t_pad[chunk, last][:, None]
            rate, _ = two_point_rate(t1, i1, t2, i2)
            amp = i1 * np.exp(rate * t1)
            draws = np.stack([amp, rate], axis=-1)
            ok = np.all(np.isfinite(draws), axis=-1)
        else:
            fit = fit_batch(
                model,
                t_c.reshape(k * n_draws, width),
                synthetic.reshape(k * n_draws, width),
                np.repeat(w_c, n_draws, axis=0),
                np.repeat(values[chunk], n_draws, axis=0),
            )
            draws = fit.params.reshape(k, n_draws, n_par)
            ok = fit.converged.reshape(k, n_draws)
        for i in range(k):
            good = draws[i][ok[i]]
            failed[start + i] = n_draws - good.shape[0]
            if good.shape[0] >= 2:
                out[start + i] = good.std(axis=0, ddof=1)
        bar.advance(k)
    return out, failed


def _uncertainty_text(model, errors, n_draws, has_errors):
    if model == "two-point" and errors == "covariance":
        return (
            "first-order propagation of the given intensity errors"
            if has_errors
            else "none: no intensity errors given and a two-point rate has no residuals"
        )
    return uncertainty_text(errors, n_draws, has_errors)
