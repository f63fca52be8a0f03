"""Build-up curves of coherence-transfer periods: fits of arrayed transfer delays through the step algebra.

Measuring a peak while the delay of one transfer period is arrayed gives a build-up curve: the amplitude the
active coupling moves into the target coherence, times whatever the rest of the sequence contributes. This
module fits

    intensity(τ) = scale · b(τ; J, rate, rate + rate_difference) · ∏ cos(π J_p τ)

where ``b`` is the transferred amplitude of :func:`backbone.transfer.steps.transfer_amplitudes` — the exact
solution of the in-phase/anti-phase 2×2 system d/dt [a, b] = [[−Ra, −πJ], [πJ, −Rb]] [a, b] with a = 1, b = 0
at τ = 0 — and J_p are passive couplings of the active spin that evolve during the period. For equal rates
it is the textbook INEPT build-up sin(πJτ)·e^(−Rτ) (Cavanagh, Fairbrother, Palmer, Rance & Skelton, Protein
NMR Spectroscopy, 2nd ed., 2007).

Parameters
----------
``scale`` [intensity]
    Everything outside the period: starting magnetization, the other steps, receiver gain.
``rate`` [s⁻¹]
    Transverse rate of the coherence the period starts from (Ra; for an in-phase → anti-phase build-up the
    in-phase rate). Bounded below by 0 (and by −rate_difference, so that the target rate is ≥ 0 too).
``j_hz`` [Hz]
    The active coupling. Fixed at the value the user gives unless ``fit_j=True``; then that value is the
    starting point and |J| is fitted (the curve is even in J).
``rate_difference`` [s⁻¹], fixed, default 0
    Rb − Ra: the target coherence relaxes at ``rate + rate_difference``. An anti-phase coherence 2IySz relaxes
    faster than in-phase Ix by about the selective longitudinal rate of S (Cavanagh et al. 2007), so a
    positive value is usual; 0 is the equal-rate textbook model. The transferred amplitude depends on the two
    rates only through their mean and the square of their half-difference (the 2×2 algebra), so a build-up
    curve cannot tell the two rates apart: with the difference fixed, it determines ``rate``. The same curve
    therefore describes a refocusing period (anti-phase → in-phase) with ``rate`` the anti-phase rate.

Delays are the total evolution time of the active coupling (the package convention: the optimum without
relaxation is 1/(2J)). Intensities may be negative (noise near τ = 0, a passive coupling past 1/(2J_p)) and are
kept; points flagged for any other reason (missing, negative delay, duplicate delay, bad error) are excluded.

Fitting, uncertainties and statuses
-----------------------------------
:func:`fit_buildups` mirrors :func:`backbone.fitting.series.fit_decays` and returns its
:class:`~backbone.fitting.series.FitResult` (same table layout and ``as_dict``): one row per input (series,
residue). Starting values come from vectorized variable-projection scans (``scale`` is linear, so for each
trial rate and J it has a closed-form weighted least-squares value): the rate on a logarithmic grid, then,
when J is free, J on a grid of 0.5–1.5 × ``j_hz`` and the rate once more. The default engine fits all
residues at once with the batched Levenberg–Marquardt iteration of :func:`backbone.fitting.series.fit_batch`
(Marquardt 1963, J. SIAM 11, 431; bounds by projection) through :func:`buildup_batch_model`
(central-difference derivatives of the vectorized model), and refits those it does not converge one by one
with lmfit (:class:`BuildupModel`, MINPACK ``leastsq``); ``engine="lmfit"`` fits every residue with lmfit.

Errors are the square roots of the diagonal of (JᵀWJ)⁻¹ at the optimum, J the derivatives of the weighted
model (the given σ taken as absolute; without an error column scaled by χ²/(n − p)), for either engine, or
Monte Carlo / residual-bootstrap standard deviations of ``n_draws`` refits, as in ``fit_decays``. The status
rules are those of ``fit_decays`` (one implementation, :mod:`backbone.fitting._shared`):
``too-few-points`` / ``bad-data`` below p + 1 usable points (without / with excluded points); ``failed`` for a
constant series, no convergence or a singular covariance (parameters NaN); ``poorly-determined`` for a
relative error above 50 % of ``scale``, ``rate`` or a free ``j_hz``, a rate at its lower bound, or most
resampling refits failed; ``ok`` otherwise. A build-up that stays far below 1/(2J) hardly separates the rate
from the scale: ``poorly-determined`` rates are the honest outcome of such arrays.
"""

from __future__ import annotations

import math
import warnings

import lmfit
import numpy as np
from lmfit.models import update_param_vals

from backbone.errors import BackboneError
from backbone.fitting._shared import (
    STATUSES,
    Progress,
    as_decay_data,
    check_fit_options,
    note_exclusions,
    pad_groups,
    postfit_statuses,
    prefit_statuses,
    resampling_noise,
    result_table,
    uncertainty_text,
    usable_mask,
)
from backbone.fitting.data import FLAG_NONPOSITIVE_INTENSITY
from backbone.fitting.decay import LEASTSQ_PRECISE
from backbone.fitting.series import BatchModel, FitResult, covariance_errors, fit_batch
from backbone.transfer.steps import transfer_amplitudes

__all__ = [
    "MODEL_ID",
    "PARAMETERS",
    "buildup",
    "buildup_jacobian",
    "initial_buildup_values",
    "buildup_batch_model",
    "BuildupModel",
    "fit_buildups",
]

#: Model id of build-up fits (``model`` of the ``backbone fit --json`` output).
MODEL_ID = "buildup"
#: Parameter names, in the order of the parameter vectors used here.
PARAMETERS = ("scale", "rate", "j_hz")
_UNITS = {"scale": "intensity", "rate": "s^-1", "j_hz": "Hz", "t": "s"}
_FUNCTION = (
    "scale * transferred amplitude of the in-phase/anti-phase 2x2 transfer with rates (rate, "
    "rate + rate_difference) and coupling j_hz, times prod cos(pi J_p t) over passive couplings; "
    "sin(pi j_hz t) exp(-rate t) for equal rates"
)

# Starting-value grids: rate x (longest delay) from 1e-3 to 10**2.5 (101 points, neighbours 13 % apart), J from
# 0.5 to 1.5 x the given value (41 points, 2.5 % apart) when J is free.
_RATE_GRID = (-3.0, 2.5, 101)
_J_GRID = (0.5, 1.5, 41)
# Largest number of grid values (rows x J x rates x delays) evaluated at once in the starting-value scan.
_SCAN_CHUNK = 2_000_000
# Relative step of the central-difference derivatives (optimal for a smooth double-precision function is
# about eps**(1/3) ~ 6e-6).
_REL_STEP = 6e-6
# Largest number of rows (residues x draws) fitted in one batch during resampling.
_DRAW_BATCH_ROWS = 20_000


# ---------------------------------------------------------------------------------------------------------
# model function
# ---------------------------------------------------------------------------------------------------------
def buildup(t, scale, rate, j_hz, rate_difference=0.0, passive_hz=()):
    """Build-up of a transfer period: ``scale`` times the transferred amplitude of the step algebra.

    Parameters
    ----------
    t : float or array [s]
        Transfer delay: total evolution time of the active coupling (≥ 0).
    scale : float or array [intensity]
        Intensity a complete, loss-free transfer would give.
    rate : float or array [s⁻¹]
        Rate of the starting coherence (≥ 0).
    j_hz : float or array [Hz]
        Active coupling (its sign does not matter).
    rate_difference : float or array [s⁻¹]
        Target rate minus starting rate; ``rate + rate_difference`` must be ≥ 0.
    passive_hz : sequence of couplings [Hz]
        Passive couplings of the active spin (see :mod:`backbone.transfer.steps`).

    Returns
    -------
    float or array [intensity], broadcast over the inputs: ``scale * transfer_amplitudes(t, j_hz, rate,
    rate + rate_difference, passive_hz=passive_hz).transferred``.

    Raises
    ------
    BackboneError
        Negative delay or rate, a target rate below 0, non-finite input (from the step algebra).
    """
    rate = np.asarray(rate, dtype=float)
    amplitude = transfer_amplitudes(t, j_hz, rate, rate + rate_difference, passive_hz=passive_hz).transferred
    return np.asarray(scale, dtype=float) * amplitude


def buildup_jacobian(t, params, *, rate_difference=0.0, passive_hz=(), lower_rate=0.0, rel_step=_REL_STEP):
    """Model values and derivatives with respect to (scale, rate, j_hz) for many parameter vectors at once.

    ∂/∂scale is exact (the model is linear in it); ∂/∂rate and ∂/∂j_hz are central differences with steps of
    ``rel_step`` × (|value| + a typical size: 1/(longest delay) for the rate, 1 Hz for J), one-sided forward for
    a rate within a step of ``lower_rate``.

    Parameters
    ----------
    t : array [s], shape (B, n) or (n,)
    params : array, shape (B, 3)
        (scale [intensity], rate [s⁻¹], j_hz [Hz]) per row.
    rate_difference : float [s⁻¹]; passive_hz : sequence [Hz]
        As :func:`buildup`.
    lower_rate : float [s⁻¹]
        Smallest allowed rate (the derivative never evaluates below it).

    Returns
    -------
    (values, jac) : arrays (B, n) and (B, n, 3)
    """
    p = np.atleast_2d(np.asarray(params, dtype=float))
    t = np.broadcast_to(np.asarray(t, dtype=float), (p.shape[0], np.shape(t)[-1]))
    scale, rate, j = p[:, 0:1], p[:, 1:2], p[:, 2:3]
    span = np.max(t, axis=-1, keepdims=True)
    h_rate = rel_step * (np.abs(rate) + 1.0 / np.where(span > 0, span, 1.0))
    h_j = rel_step * (np.abs(j) + 1.0)
    forward = rate - h_rate < lower_rate
    # One vectorized call: unit-scale curves at (rate, J), rate ± h, J ± h (forward rate steps where bounded).
    rates = np.stack([rate, rate + h_rate, np.where(forward, rate, rate - h_rate), rate, rate])
    js = np.stack([j, j, j, j + h_j, j - h_j])
    g = buildup(t[None], 1.0, rates, js, rate_difference, passive_hz)
    d_rate = (g[1] - g[2]) / np.where(forward, h_rate, 2.0 * h_rate)
    d_j = (g[3] - g[4]) / (2.0 * h_j)
    jac = np.stack([g[0], scale * d_rate, scale * d_j], axis=-1)
    return scale * g[0], jac


# ---------------------------------------------------------------------------------------------------------
# starting values
# ---------------------------------------------------------------------------------------------------------
def initial_buildup_values(t, y, weights=None, *, j_hz, fit_j=False, rate_difference=0.0, passive_hz=()):
    """Starting values (scale, rate, j_hz) for many build-ups at once by variable-projection scans.

    The scale has the closed-form weighted least-squares value Σw²gy/Σw²g² for any curve g of unit scale, so
    only the rate (and J) need scanning: the rate over a logarithmic grid (rate × longest delay from 1e-3 to
    10^2.5, shifted up by max(0, −rate_difference)) at ``j_hz``; with ``fit_j`` then J over 0.5–1.5 ×
    ``j_hz`` at that rate, and the rate once more at the best J. Each scan keeps the grid point with the
    smallest weighted residual sum of squares.

    Parameters
    ----------
    t, y : arrays [s], [intensity], shape (B, n) or (n,)
    weights : array, same shape, optional
        1/σ per point; 0 removes a point (padding of ragged rows). Default 1.
    j_hz : float [Hz]
        The coupling (fixed value, or centre of the J grid).
    fit_j : bool
    rate_difference : float [s⁻¹]; passive_hz : sequence [Hz]
        As :func:`buildup`.

    Returns
    -------
    array (B, 3)
        NaN rows where fewer than two points are usable, no delay is positive, or the curve is zero at every
        usable delay.
    """
    y = np.atleast_2d(np.asarray(y, dtype=float))
    t = np.broadcast_to(np.asarray(t, dtype=float), y.shape)
    w = np.ones_like(y) if weights is None else np.broadcast_to(np.asarray(weights, dtype=float), y.shape)
    used = np.isfinite(w) & (w > 0)
    w2 = np.where(used, w * w, 0.0)
    t = np.where(used, t, 0.0)
    y = np.where(used, y, 0.0)
    span = t.max(axis=-1)
    bad = (used.sum(axis=-1) < 2) | ~(span > 0)
    span = np.where(bad, 1.0, span)
    lower = max(0.0, -float(rate_difference))
    rate_grid = lower + np.logspace(*_RATE_GRID)[None, :] / span[:, None]  # (B, G)
    j0 = np.full((y.shape[0], 1), abs(float(j_hz)))
    ctx = (t, y, w2, rate_difference, passive_hz)
    a, k, _ = _scan(ctx, rate_grid, j0)
    if fit_j:
        _, _, j = _scan(ctx, k[:, None], j0 * np.linspace(*_J_GRID)[None, :])
        a, k, _ = _scan(ctx, rate_grid, j[:, None])
        j0 = j[:, None]
    out = np.stack([a, k, j0[:, 0]], axis=-1)
    out[bad] = np.nan
    out[~np.all(np.isfinite(out), axis=-1)] = np.nan
    return out


def _scan(ctx, rates, js):
    """Best (scale, rate, J) per row over the rate grid ``rates`` (B, G) × the J grid ``js`` (B, GJ)."""
    t, y, w2, rate_difference, passive_hz = ctx
    n_rows, n = y.shape
    per_row = rates.shape[1] * js.shape[1] * n
    chunk = max(1, _SCAN_CHUNK // max(per_row, 1))
    out = np.full((3, n_rows), np.nan)
    for start in range(0, n_rows, chunk):
        rows = slice(start, start + chunk)
        tg = t[rows, None, None, :]
        g = buildup(tg, 1.0, rates[rows, None, :, None], js[rows, :, None, None], rate_difference, passive_hz)
        # g: unit-scale curves, shape (b, GJ, G, n)
        wg = w2[rows, None, None, :]
        yg = y[rows, None, None, :]
        s_gg = (wg * g * g).sum(-1)
        s_gy = (wg * g * yg).sum(-1)
        with np.errstate(divide="ignore", invalid="ignore"):
            a = np.where(s_gg > 0, s_gy / np.where(s_gg > 0, s_gg, 1.0), 0.0)
            rss = np.where(s_gg > 0, (wg * yg * yg).sum(-1) - a * s_gy, np.inf)
        flat = rss.reshape(rss.shape[0], -1)
        best = np.argmin(flat, axis=-1)
        ij, ik = np.unravel_index(best, rss.shape[1:])
        b = np.arange(flat.shape[0])
        finite = np.isfinite(flat[b, best])
        out[0, rows] = np.where(finite, a[b, ij, ik], np.nan)
        out[1, rows] = np.where(finite, rates[rows][b, ik], np.nan)
        out[2, rows] = np.where(finite, js[rows][b, ij], np.nan)
    return out[0], out[1], out[2]


# ---------------------------------------------------------------------------------------------------------
# lmfit model
# ---------------------------------------------------------------------------------------------------------
class BuildupModel(lmfit.Model):
    """lmfit model of :func:`buildup`: parameters ``scale``, ``rate`` [s⁻¹], ``j_hz`` [Hz] and
    ``rate_difference`` [s⁻¹] (fixed at 0 unless told otherwise); independent variable ``t`` [s].

    Parameters
    ----------
    passive_hz : sequence of couplings [Hz], optional
        Passive couplings, passed to the model function on every evaluation.
    independent_vars : sequence of str, optional
        Name of the independent variable (default ``('t',)``, delays in s).
    prefix : str, optional
        String prepended to the parameter names (to combine models).
    nan_policy : {'raise', 'propagate', 'omit'}, optional
        lmfit's handling of NaN in the data (default ``'raise'``).
    **kwargs : optional
        Passed on to :class:`lmfit.Model`.

    Parameter hints: ``rate`` ≥ 0, ``j_hz`` ≥ 0 (the curve is even in J), ``rate_difference`` fixed at 0. For a
    negative ``rate_difference`` also bound ``rate`` below by its negative.
    """

    def __init__(self, passive_hz=(), independent_vars=("t",), prefix="", nan_policy="raise", **kwargs):
        kwargs.update(
            {
                "prefix": prefix,
                "nan_policy": nan_policy,
                "independent_vars": list(independent_vars),
                "passive_hz": tuple(np.atleast_1d(np.asarray(passive_hz, dtype=float)).tolist()),
            }
        )
        super().__init__(buildup, **kwargs)
        self.set_param_hint("rate", min=0.0)
        self.set_param_hint("j_hz", min=0.0)
        self.set_param_hint("rate_difference", value=0.0, vary=False)

    def guess(self, data, t, weights=None, *, j_hz, fit_j=False, rate_difference=0.0, **kwargs):
        """Starting values by the variable-projection scan of :func:`initial_buildup_values`.

        Parameters
        ----------
        data : array [intensity]
        t : array [s]
        weights : array, optional
            Residual weights (1/σ) as passed to :meth:`fit`.
        j_hz : float [Hz]
            Value of the coupling (fixed unless ``fit_j``).
        fit_j : bool
            Let ``j_hz`` vary.
        rate_difference : float [s⁻¹]
            Fixed target-minus-start rate difference.
        **kwargs : optional
            Parameter values that override the estimates (lmfit convention).

        Returns
        -------
        lmfit.Parameters
        """
        data = np.asarray(data, dtype=float).ravel()
        t = np.broadcast_to(np.asarray(t, dtype=float), data.shape)
        w = None if weights is None else np.broadcast_to(np.asarray(weights, dtype=float), data.shape)
        finite = np.isfinite(data) & np.isfinite(t)
        if w is not None:
            finite &= np.isfinite(w)
        start = initial_buildup_values(
            t[finite],
            data[finite],
            None if w is None else w[finite],
            j_hz=j_hz,
            fit_j=fit_j,
            rate_difference=rate_difference,
            passive_hz=self.opts["passive_hz"],
        )[0]
        if not np.all(np.isfinite(start)):
            raise BackboneError(
                "cannot estimate starting values for the build-up model: it needs at least two finite points, "
                "one of them at a positive delay"
            )
        pars = self.make_params()
        p = self.prefix
        pars[f"{p}scale"].set(value=float(start[0]))
        pars[f"{p}rate"].set(value=float(start[1]), min=max(0.0, -float(rate_difference)))
        pars[f"{p}j_hz"].set(value=float(start[2]), vary=bool(fit_j))
        pars[f"{p}rate_difference"].set(value=float(rate_difference), vary=False)
        return update_param_vals(pars, self.prefix, **kwargs)


# ---------------------------------------------------------------------------------------------------------
# the model for the batched engine
# ---------------------------------------------------------------------------------------------------------
def buildup_batch_model(*, j_hz, fit_j=False, rate_difference=0.0, passive_hz=()) -> BatchModel:
    """The build-up model for :func:`backbone.fitting.series.fit_batch`.

    Parameters are (scale, rate) with J fixed at ``j_hz``, or (scale, rate, j_hz) with ``fit_j``; the rate is
    bounded below by max(0, −rate_difference) and J by 0. Values and derivatives from :func:`buildup_jacobian`;
    starting values from :func:`initial_buildup_values`.
    """
    j0 = abs(float(j_hz))
    delta = float(rate_difference)
    passive = tuple(passive_hz)
    lower_rate = max(0.0, -delta)
    idx = [0, 1, 2] if fit_j else [0, 1]

    def jac(t, p):
        p = np.atleast_2d(p)
        full = p if fit_j else np.concatenate([p, np.full((p.shape[0], 1), j0)], axis=-1)
        f, d = buildup_jacobian(t, full, rate_difference=delta, passive_hz=passive, lower_rate=lower_rate)
        return f, d[..., idx]

    def start(t, y, w):
        out = initial_buildup_values(t, y, w, j_hz=j0, fit_j=fit_j, rate_difference=delta, passive_hz=passive)
        return out[:, idx]

    return BatchModel(
        parameters=tuple(PARAMETERS[i] for i in idx),
        jacobian=jac,
        initial_values=start,
        lower=np.array([-np.inf, lower_rate, 0.0][: len(idx)]),
    )


def _fit_lmfit(t, y, w, start, fit_j, rate_difference, passive_hz):
    """One build-up with lmfit; returns (params (3,), converged, message)."""
    model = BuildupModel(passive_hz=passive_hz)
    try:
        params = model.make_params()
        params["scale"].set(value=float(start[0]))
        params["rate"].set(value=float(start[1]), min=max(0.0, -rate_difference))
        params["j_hz"].set(value=float(start[2]), vary=bool(fit_j))
        params["rate_difference"].set(value=float(rate_difference), vary=False)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            result = model.fit(y, params, t=t, weights=w, method="leastsq", fit_kws=dict(LEASTSQ_PRECISE))
    except (ValueError, ArithmeticError, np.linalg.LinAlgError) as err:
        return np.full(3, np.nan), False, str(err)
    values = np.array([result.params[name].value for name in PARAMETERS])
    converged = result.ier in (1, 2, 3, 4, 6, 7, 8) and bool(np.all(np.isfinite(values)))
    return values, converged, result.message


def _check_number(name, value, unit, *, positive=False):
    if isinstance(value, bool):
        raise BackboneError(f"{name} must be a number [{unit}], got {value!r}")
    try:
        x = float(value)
    except (TypeError, ValueError) as err:
        raise BackboneError(f"{name} must be a number [{unit}], got {value!r}") from err
    if not math.isfinite(x):
        raise BackboneError(f"{name} must be finite [{unit}], got {value!r}")
    if positive and x == 0.0:
        raise BackboneError(f"{name} must be non-zero [{unit}]: a zero coupling transfers nothing")
    return x


def _check_passive(passive_hz) -> tuple[float, ...]:
    try:
        values = np.atleast_1d(np.asarray(passive_hz, dtype=float))
    except (TypeError, ValueError) as err:
        raise BackboneError(f"passive_hz must be a sequence of couplings in Hz, got {passive_hz!r}") from err
    if values.ndim != 1 or not np.all(np.isfinite(values)):
        raise BackboneError(f"passive_hz must be a flat sequence of finite couplings in Hz, got {passive_hz!r}")
    return tuple(float(v) for v in values)


# ---------------------------------------------------------------------------------------------------------
# driver
# ---------------------------------------------------------------------------------------------------------
def fit_buildups(
    data,
    *,
    j_hz,
    fit_j: bool = False,
    rate_difference: float = 0.0,
    passive_hz=(),
    errors: str = "covariance",
    n_draws: int = 200,
    seed: int | None = None,
    engine: str = "auto",
    progress=None,
) -> FitResult:
    """Fit every residue's build-up curve (intensity against transfer delay) through the step algebra.

    Parameters
    ----------
    data : DecayData, pandas.DataFrame or path
        Long format ``residue,delay_s,intensity[,error][,series]`` (:func:`backbone.fitting.data.read_decays`);
        ``delay_s`` is the transfer delay τ [s].
    j_hz : float [Hz]
        The active coupling: fixed value, or the starting value with ``fit_j`` (sign ignored, non-zero).
    fit_j : bool
        Fit |J| as well (needs delays on both sides of the maximum near 1/(2J) to be well determined).
    rate_difference : float [s⁻¹]
        Fixed difference target rate − starting rate (module docstring); default 0, equal rates.
    passive_hz : sequence of couplings [Hz]
        Passive couplings that evolve during the period (fixed).
    errors : str
        ``covariance``, ``monte-carlo`` or ``bootstrap`` (as :func:`~backbone.fitting.series.fit_decays`).
    n_draws : int
        Draws per residue for ``monte-carlo`` / ``bootstrap``, 10 to 10000.
    seed : int, optional
        Seed of the draws; None draws fresh entropy, reported in ``global_info["seed"]``.
    engine : str
        ``auto`` (batched, lmfit for the residues it does not converge), ``batched`` or ``lmfit``.
    progress : callable, optional
        ``progress(done, total)``, called with the number of residues finished.

    Returns
    -------
    FitResult
        ``model`` ``"buildup"``; one row per input (series, residue) with ``scale``, ``rate``, ``j_hz`` (the
        fixed value when J is not fitted; its ``_err`` then NaN), their errors, ``reduced_chi2``, ``n_points``,
        ``n_excluded``; statuses per the module docstring. Never raises for a residue that cannot be fitted.

    Raises
    ------
    BackboneError
        Unknown error method or engine, ``n_draws`` out of range, a non-numeric or zero ``j_hz``, a
        non-numeric ``rate_difference`` or ``passive_hz``, a progress hook that is not callable, unreadable
        data.
    """
    check_fit_options(errors, n_draws, engine)
    j0 = abs(_check_number("j_hz", j_hz, "Hz", positive=True))
    delta = _check_number("rate_difference", rate_difference, "s^-1")
    passive = _check_passive(passive_hz)
    fit_j = bool(fit_j)
    data = as_decay_data(data, "fit_buildups")
    bm = buildup_batch_model(j_hz=j0, fit_j=fit_j, rate_difference=delta, passive_hz=passive)
    idx = np.array([0, 1, 2] if fit_j else [0, 1])
    n_par = idx.size
    lower_rate = max(0.0, -delta)
    scale_by_chi2 = not data.has_errors

    # Intensities may be negative (a build-up passes through zero): only other flags exclude a point.
    groups = pad_groups(data, usable_mask(data.points["flag"].to_numpy(dtype=object), {FLAG_NONPOSITIVE_INTENSITY}))
    n_groups = groups.n
    bar = Progress(progress, n_groups)
    bar.set(0)
    t_pad, y_pad, w_pad, used = groups.t, groups.y, groups.w, groups.used
    values = np.full((n_groups, 3), np.nan)
    errs = np.full((n_groups, 3), np.nan)
    chi2 = np.full(n_groups, np.nan)
    status, reasons, to_fit = prefit_statuses(
        groups, n_par + 1, f"the build-up model with {n_par} free parameters", "build-up"
    )

    # Starting values, then the fits.
    rows = np.flatnonzero(to_fit)
    start = np.full((n_groups, n_par), np.nan)
    if rows.size:
        start[rows] = bm.initial_values(t_pad[rows], y_pad[rows], w_pad[rows])
    for g in rows[~np.all(np.isfinite(start[rows]), axis=-1)]:
        status[g] = "failed"
        reasons[g].append("no starting values: the model curve is zero at every usable delay")
        to_fit[g] = False
    resampling = errors != "covariance"
    if not resampling:
        bar.set(int(np.sum(~to_fit)))
    rows = np.flatnonzero(to_fit)
    converged = np.zeros(n_groups, dtype=bool)
    messages: dict[int, str] = {}
    retry = rows
    used_lmfit = 0
    if engine in ("auto", "batched") and rows.size:
        fit = fit_batch(bm, t_pad[rows], y_pad[rows], w_pad[rows], start[rows], restart=False)
        conv = fit.converged
        values[rows[conv][:, None], idx] = fit.params[conv]
        converged[rows[conv]] = True
        retry = rows[~conv] if engine == "auto" else rows[:0]
        for g in rows[~conv]:
            messages[g] = "Levenberg-Marquardt did not converge"
        if not resampling:
            bar.advance(rows.size - retry.size)
    if engine in ("auto", "lmfit"):
        for g in retry:
            m = used[g]
            full_start = np.append(start[g], j0) if not fit_j else start[g]
            v, conv, message = _fit_lmfit(t_pad[g, m], y_pad[g, m], w_pad[g, m], full_start, fit_j, delta, passive)
            used_lmfit += 1
            if conv:
                values[g], converged[g] = v, True
                messages.pop(g, None)
            else:
                messages[g] = message
            if not resampling:
                bar.advance()
    if engine == "auto":
        engine_used = "batched" + (f" (+ lmfit for {used_lmfit} residues)" if used_lmfit else "")
    else:
        engine_used = engine
    fitted = np.flatnonzero(converged)
    if fitted.size:
        e, c = covariance_errors(
            bm, t_pad[fitted], y_pad[fitted], w_pad[fitted], values[fitted][:, idx], scale=scale_by_chi2
        )
        errs[fitted[:, None], idx] = e
        chi2[fitted] = c

    # Resampled errors.
    draws_failed = np.zeros(n_groups, dtype=int)
    seed_used = seed
    if resampling:
        bar.set(int(np.sum(~(to_fit & converged))))
        seed_seq = np.random.SeedSequence(seed)
        seed_used = seed if seed is not None else int(seed_seq.entropy)
        children = seed_seq.spawn(n_groups)
        rows_rs = np.flatnonzero(to_fit & converged)
        new_errs, failed_rs = _resampled_errors(
            bm, idx, errors, n_draws, children, rows_rs, groups, values, data.has_errors, bar
        )
        errs[rows_rs] = new_errs
        draws_failed[rows_rs] = failed_rs

    def at_bound(g):
        if values[g, 1] <= lower_rate:
            return [f"fitted rate is at its lower bound ({lower_rate:g} s^-1): the data do not determine it"]
        return []

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
        judged=tuple(int(i) for i in idx),
        names=PARAMETERS,
        extra_notes=at_bound,
    )
    if not fit_j:
        values[:, 2] = np.where(np.isnan(values[:, 0]), np.nan, j0)
        errs[:, 2] = np.nan
    note_exclusions(groups, reasons)
    table = result_table(groups, data.has_series, status, reasons, PARAMETERS, values, errs, chi2, n_par)

    problems = tuple(data.problems())
    global_info = {
        "source": data.source,
        "function": _FUNCTION,
        "parameters": [PARAMETERS[j] for j in idx],
        "units": dict(_UNITS),
        "j_hz": j0,
        "fit_j": fit_j,
        "rate_difference": delta,
        "passive_hz": list(passive),
        "errors": errors,
        "uncertainty": uncertainty_text(errors, n_draws, data.has_errors),
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
    return FitResult(model=MODEL_ID, table=table, global_info=global_info, problems=problems, data=data)


def _resampled_errors(bm, idx, method, n_draws, children, rows, groups, values, has_errors, bar):
    """Standard deviations of refits to synthetic data for the given groups: (errors (k, 3), failed draws)."""
    t_pad, y_pad, e_pad, used, counts = groups.t, groups.y, groups.e, groups.used, groups.counts
    out = np.full((rows.size, 3), np.nan)
    failed = np.zeros(rows.size, dtype=int)
    if rows.size == 0:
        return out, failed
    n_free = idx.size
    width = t_pad.shape[1]
    per_chunk = max(1, _DRAW_BATCH_ROWS // n_draws)
    for start in range(0, rows.size, per_chunk):
        chunk = rows[start : start + per_chunk]
        k = chunk.size
        w_c = np.where(used[chunk], 1.0 / e_pad[chunk], 0.0) if has_errors else used[chunk].astype(float)
        best = values[chunk][:, idx]
        curve, _ = bm.jacobian(t_pad[chunk], best)
        synthetic = np.zeros((k, n_draws, width))
        for i, g in enumerate(chunk):
            rng = np.random.default_rng(children[g])
            m = used[g]
            noise = resampling_noise(
                method, rng, y_pad[g, m], curve[i, m], e_pad[g, m], w_c[i, m], n_free, n_draws, has_errors
            )
            synthetic[i, :, : counts[g]] = curve[i, m] + noise
        fit = fit_batch(
            bm,
            np.repeat(t_pad[chunk], n_draws, axis=0),
            synthetic.reshape(k * n_draws, width),
            np.repeat(w_c, n_draws, axis=0),
            np.repeat(best, n_draws, axis=0),
            restart=False,
        )
        draws = fit.params.reshape(k, n_draws, n_free)
        ok = fit.converged.reshape(k, n_draws)
        for i in range(k):
            good = draws[i][ok[i]]
            failed[start + i] = n_draws - good.shape[0]
            if good.shape[0] >= 2:
                out[start + i, idx] = good.std(axis=0, ddof=1)
        bar.advance(k)
    return out, failed
