"""Exponential decay and recovery models: pure numpy functions, their Jacobians, and lmfit wrappers.

The model functions are vectorized numpy expressions (any broadcastable shapes), in SI units: delays ``t``
in s, rates in s⁻¹; amplitudes, plateaus and offsets in the unit of the intensities.

=================  =====================================  ==========================
model id           function                               parameters
=================  =====================================  ==========================
``decay``          ``amplitude * exp(-rate t)``           amplitude, rate
``decay-offset``   ``amplitude * exp(-rate t) + offset``  amplitude, rate, offset
``recovery``       ``plateau * (1 - exp(-rate t))``       plateau, rate
``two-point``      rate from two delays (closed form)     amplitude, rate
=================  =====================================  ==========================

``recovery`` is the saturation-recovery form: the offset decay with ``amplitude = -offset``. It is also the
model ``y = b1 (1 - exp(-b2 x))`` of the NIST StRD problems Misra1a and BoxBOD, which the tests reproduce.

Starting values (:func:`initial_values`) come from a variable-projection scan: for each rate on a
logarithmic grid spanning six decades around the inverse delay span, the linear parameters (amplitude,
plateau, offset) have a closed-form weighted least-squares solution, and the grid rate with the smallest
residual sum of squares is kept. Unlike a log-linear regression this needs no positive intensities and
handles an offset; it works on many rows at once. The lmfit :class:`~lmfit.Model` subclasses use it in their
``guess`` method, in lmfit's own style.

lmfit's ``leastsq`` differentiates numerically with a forward step of ``sqrt(epsfcn)`` (lmfit's default
``epsfcn`` is 1e-10, a relative step of 1e-5), which limits the covariance matrix to about five digits.
:data:`LEASTSQ_PRECISE` holds the settings used throughout the package for fits whose uncertainties are
reported (steps of sqrt(machine epsilon), tight tolerances).
"""

from __future__ import annotations

import lmfit
import numpy as np
from lmfit.models import update_param_vals

from backbone.errors import BackboneError

__all__ = [
    "MODEL_IDS",
    "PARAMETERS",
    "LEASTSQ_PRECISE",
    "exp_decay",
    "exp_decay_offset",
    "recovery",
    "two_point_rate",
    "evaluate",
    "jacobian",
    "initial_values",
    "ExpDecayModel",
    "ExpDecayOffsetModel",
    "RecoveryModel",
    "lmfit_model",
]

#: Model ids accepted by the fitting layer, in the order they are documented.
MODEL_IDS = ("decay", "decay-offset", "recovery", "two-point")

#: Parameter names of each model, in the order of the parameter vectors used by :func:`evaluate`.
PARAMETERS = {
    "decay": ("amplitude", "rate"),
    "decay-offset": ("amplitude", "rate", "offset"),
    "recovery": ("plateau", "rate"),
    "two-point": ("amplitude", "rate"),
}

#: Keyword arguments for lmfit's ``leastsq`` (MINPACK lmdif) that make the numerical Jacobian, and with it
#: the covariance matrix, accurate to about eight digits: forward steps of sqrt(machine epsilon) relative
#: to each parameter, and relative tolerances on the sum of squares and on the step of 1e-14. MINPACK may
#: then stop with "tolerance too small" (ier 6-8) at a converged point; it reports no covariance there.
LEASTSQ_PRECISE = {"epsfcn": float(np.finfo(float).eps), "ftol": 1e-14, "xtol": 1e-14}

# Rate grid of the starting-value scan: rate × (delay span) from 1e-3 to 1e3, 121 points (factor 1.122
# between neighbours, so the start is within 6 % of the best grid rate).
_GRID_DECADES = (-3.0, 3.0)
_GRID_POINTS = 121


# ---------------------------------------------------------------------------------------------------------
# model functions
# ---------------------------------------------------------------------------------------------------------
def exp_decay(t, amplitude=1.0, rate=1.0):
    """Single-exponential decay ``amplitude * exp(-rate * t)``.

    Parameters
    ----------
    t : float or array [s]
        Relaxation delay.
    amplitude : float or array [intensity]
        Intensity at ``t = 0``.
    rate : float or array [s^-1]
        Decay rate (R1, R2, ...).

    Returns
    -------
    float or array [intensity], broadcast over the inputs.
    """
    return amplitude * np.exp(-rate * np.asarray(t, dtype=float))


def exp_decay_offset(t, amplitude=1.0, rate=1.0, offset=0.0):
    """Single-exponential decay towards a baseline, ``amplitude * exp(-rate * t) + offset``.

    Parameters
    ----------
    t : float or array [s]
        Relaxation delay.
    amplitude : float or array [intensity]
        Decaying part at ``t = 0`` (negative for an inversion-recovery curve).
    rate : float or array [s^-1]
        Decay rate.
    offset : float or array [intensity]
        Limit for ``t → ∞``.

    Returns
    -------
    float or array [intensity], broadcast over the inputs.
    """
    return amplitude * np.exp(-rate * np.asarray(t, dtype=float)) + offset


def recovery(t, plateau=1.0, rate=1.0):
    """Saturation recovery ``plateau * (1 - exp(-rate * t))``.

    Written with ``expm1`` so that ``rate * t ≪ 1`` keeps full relative precision. It equals
    :func:`exp_decay_offset` with ``amplitude = -offset = -plateau``.

    Parameters
    ----------
    t : float or array [s]
        Recovery delay.
    plateau : float or array [intensity]
        Limit for ``t → ∞``.
    rate : float or array [s^-1]
        Recovery rate (R1).

    Returns
    -------
    float or array [intensity], broadcast over the inputs.
    """
    return -plateau * np.expm1(-rate * np.asarray(t, dtype=float))


def two_point_rate(t1, i1, t2, i2, err1=None, err2=None):
    """Decay rate from intensities at two delays, with first-order error propagation.

    For ``I(t) = A exp(-R t)``: ``R = ln(i1 / i2) / (t2 - t1)``. Propagating independent intensity errors
    to first order (``d ln I = dI / I``)::

        σ_R = sqrt((err1 / i1)² + (err2 / i2)²) / |t2 - t1|

    Parameters
    ----------
    t1, t2 : float or array [s]
        The two delays (must differ).
    i1, i2 : float or array [intensity]
        Intensities at ``t1`` and ``t2`` (must be positive).
    err1, err2 : float or array [intensity], optional
        Standard errors of ``i1`` and ``i2``. Without them the returned error is NaN.

    Returns
    -------
    (rate, rate_err) : tuple of float or array [s^-1]
        Non-positive intensities or equal delays give NaN (no exception), so arrays of residues can be
        processed at once; the fitting driver reports such residues with a status.
    """
    t1, i1, t2, i2 = (np.asarray(v, dtype=float) for v in (t1, i1, t2, i2))
    with np.errstate(divide="ignore", invalid="ignore"):
        valid = (i1 > 0) & (i2 > 0) & (t1 != t2)
        dt = np.where(valid, t2 - t1, np.nan)
        rate = np.log(np.where(valid, i1 / np.where(valid, i2, 1.0), np.nan)) / dt
        if err1 is None or err2 is None:
            rate_err = np.full_like(rate, np.nan)
        else:
            rel1 = np.asarray(err1, dtype=float) / i1
            rel2 = np.asarray(err2, dtype=float) / i2
            rate_err = np.sqrt(rel1**2 + rel2**2) / np.abs(dt)
    if rate.ndim == 0:
        return float(rate), float(rate_err)
    return rate, rate_err


# ---------------------------------------------------------------------------------------------------------
# vectorized evaluation over parameter vectors (used by the batched fitter)
# ---------------------------------------------------------------------------------------------------------
def _check_model(model: str, *, allow_two_point: bool = True) -> str:
    allowed = MODEL_IDS if allow_two_point else MODEL_IDS[:3]
    if model not in allowed:
        raise BackboneError(f"unknown decay model {model!r}; allowed: {', '.join(allowed)}")
    return model


def evaluate(model, t, params):
    """Model values for parameter vectors.

    Parameters
    ----------
    model : str
        ``decay``, ``decay-offset`` or ``recovery`` (``two-point`` evaluates as ``decay``).
    t : array [s], shape (..., n)
        Delays.
    params : array, shape (..., p)
        Parameters in the order of :data:`PARAMETERS`, broadcast against ``t`` over the leading axes.

    Returns
    -------
    array [intensity], shape (..., n)
    """
    _check_model(model)
    t = np.asarray(t, dtype=float)
    p = np.asarray(params, dtype=float)[..., None, :]
    if model in ("decay", "two-point"):
        return exp_decay(t, p[..., 0], p[..., 1])
    if model == "decay-offset":
        return exp_decay_offset(t, p[..., 0], p[..., 1], p[..., 2])
    return recovery(t, p[..., 0], p[..., 1])


def jacobian(model, t, params):
    """Analytic derivatives of the model with respect to its parameters.

    Parameters
    ----------
    model : str
        ``decay``, ``decay-offset`` or ``recovery``.
    t : array [s], shape (..., n)
    params : array, shape (..., p)

    Returns
    -------
    (values, jac) : arrays of shape (..., n) and (..., n, p)
        Model values and ∂f/∂p_j (amplitude-like derivatives dimensionless, rate derivatives in
        intensity × s).
    """
    _check_model(model)
    t = np.asarray(t, dtype=float)
    p = np.asarray(params, dtype=float)[..., None, :]
    e = np.exp(-p[..., 1] * t)
    shape = np.broadcast_shapes(t.shape, e.shape)
    if model in ("decay", "two-point"):
        a = p[..., 0] * e
        jac = np.stack([np.broadcast_to(e, shape), -t * a], axis=-1)
        return a, jac
    if model == "decay-offset":
        a = p[..., 0] * e
        jac = np.stack([np.broadcast_to(e, shape), -t * a, np.ones(shape)], axis=-1)
        return a + p[..., 2], jac
    h = -np.expm1(-p[..., 1] * t)
    jac = np.stack([np.broadcast_to(h, shape), t * p[..., 0] * e], axis=-1)
    return p[..., 0] * h, jac


# ---------------------------------------------------------------------------------------------------------
# starting values
# ---------------------------------------------------------------------------------------------------------
def initial_values(model, t, y, weights=None):
    """Starting values for many series at once by a variable-projection scan over the rate.

    For each row and each rate ``k`` of a logarithmic grid (``k × span`` from 1e-3 to 1e3, where ``span`` is
    the row's delay span), the linear parameters are solved by weighted least squares in closed form; the
    rate with the smallest residual sum of squares wins.

    Parameters
    ----------
    model : str
        ``decay``, ``decay-offset`` or ``recovery`` (``two-point`` is treated as ``decay``).
    t : array [s], shape (n,) or (B, n)
        Delays.
    y : array [intensity], same shape
        Intensities.
    weights : array, same shape, optional
        Residual weights (1/σ); zero removes a point (used for padding ragged rows). Default all ones.

    Returns
    -------
    array, shape (B, p)
        Starting parameters in the order of :data:`PARAMETERS`; NaN for rows with fewer than two points or
        no usable delay span.
    """
    _check_model(model)
    t = np.atleast_2d(np.asarray(t, dtype=float))
    y = np.atleast_2d(np.asarray(y, dtype=float))
    w = np.ones_like(y) if weights is None else np.atleast_2d(np.asarray(weights, dtype=float))
    t, y, w = np.broadcast_arrays(t, y, w)
    used = w > 0
    w2 = np.where(used, w * w, 0.0)
    t = np.where(used, t, 0.0)
    y = np.where(used, y, 0.0)
    n_used = used.sum(axis=-1)
    with np.errstate(invalid="ignore"):
        t_hi = np.where(used, t, -np.inf).max(axis=-1)
        t_lo = np.where(used, t, np.inf).min(axis=-1)
    span = t_hi - t_lo
    if model == "recovery":
        span = np.where(used, t, 0.0).max(axis=-1)  # recovery starts at t = 0, not at the first delay
    bad = (n_used < 2) | ~(span > 0)
    span = np.where(bad, 1.0, span)

    k = np.logspace(*_GRID_DECADES, _GRID_POINTS)[None, :] / span[:, None]  # (B, G)
    tg = t[:, None, :]
    yg = y[:, None, :]
    wg = w2[:, None, :]
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if model == "recovery":
            g = -np.expm1(-k[..., None] * tg)
        else:
            g = np.exp(-k[..., None] * tg)
        s_gg = (wg * g * g).sum(-1)
        s_gy = (wg * g * yg).sum(-1)
        s_yy = (wg * yg * yg).sum(-1)
        if model == "decay-offset":
            s_g = (wg * g).sum(-1)
            s_1 = wg.sum(-1)
            s_y = (wg * yg).sum(-1)
            det = s_gg * s_1 - s_g * s_g
            ok = det > 1e-10 * s_gg * s_1
            det = np.where(ok, det, 1.0)
            lin_a = (s_gy * s_1 - s_g * s_y) / det
            lin_c = (s_gg * s_y - s_g * s_gy) / det
            rss = s_yy - lin_a * s_gy - lin_c * s_y
            rss = np.where(ok, rss, np.inf)
        else:
            ok = s_gg > 0
            lin_a = np.where(ok, s_gy / np.where(ok, s_gg, 1.0), 0.0)
            lin_c = np.zeros_like(lin_a)
            rss = np.where(ok, s_yy - lin_a * s_gy, np.inf)
    rss = np.where(np.isfinite(rss), rss, np.inf)
    best = np.argmin(rss, axis=-1)
    rows = np.arange(t.shape[0])
    start = [lin_a[rows, best], k[rows, best]]
    if model == "decay-offset":
        start.append(lin_c[rows, best])
    out = np.stack(start, axis=-1)
    out[bad] = np.nan
    return out


# ---------------------------------------------------------------------------------------------------------
# lmfit models
# ---------------------------------------------------------------------------------------------------------
_INIT_DOC = """
    Parameters
    ----------
    independent_vars : sequence of str, optional
        Name of the independent variable (default ``('t',)``, delays in s).
    prefix : str, optional
        String prepended to the parameter names (to combine models).
    nan_policy : {'raise', 'propagate', 'omit'}, optional
        lmfit's handling of NaN in the data (default ``'raise'``).
    **kwargs : optional
        Passed on to :class:`lmfit.Model`.
    """


class _DecayModelBase(lmfit.Model):
    _model_id = "decay"
    _function = staticmethod(exp_decay)

    def __init__(self, independent_vars=("t",), prefix="", nan_policy="raise", **kwargs):
        kwargs.update(
            {"prefix": prefix, "nan_policy": nan_policy, "independent_vars": list(independent_vars)}
        )
        super().__init__(self._function, **kwargs)

    def guess(self, data, t, weights=None, **kwargs):
        """Estimate starting values from the data by the variable-projection rate scan.

        Parameters
        ----------
        data : array [intensity]
            Measured intensities.
        t : array [s]
            Delays.
        weights : array, optional
            Residual weights (1/σ) as passed to :meth:`fit`.
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
        start = initial_values(self._model_id, t[finite], data[finite], None if w is None else w[finite])[0]
        if not np.all(np.isfinite(start)):
            raise BackboneError(
                f"cannot estimate starting values for the {self._model_id!r} model: "
                "it needs at least two finite points at different delays"
            )
        names = PARAMETERS[self._model_id]
        pars = self.make_params(**{name: float(v) for name, v in zip(names, start)})
        return update_param_vals(pars, self.prefix, **kwargs)

    __init__.__doc__ = _INIT_DOC


class ExpDecayModel(_DecayModelBase):
    """lmfit model of :func:`exp_decay`: parameters ``amplitude`` and ``rate`` [s⁻¹], variable ``t`` [s]."""

    _model_id = "decay"
    _function = staticmethod(exp_decay)


class ExpDecayOffsetModel(_DecayModelBase):
    """lmfit model of :func:`exp_decay_offset`: ``amplitude``, ``rate`` [s⁻¹], ``offset``; variable ``t``."""

    _model_id = "decay-offset"
    _function = staticmethod(exp_decay_offset)


class RecoveryModel(_DecayModelBase):
    """lmfit model of :func:`recovery`: ``plateau`` and ``rate`` [s⁻¹], variable ``t`` [s]."""

    _model_id = "recovery"
    _function = staticmethod(recovery)


_LMFIT_MODELS = {"decay": ExpDecayModel, "decay-offset": ExpDecayOffsetModel, "recovery": RecoveryModel}


def lmfit_model(model, **kwargs):
    """The lmfit model for a model id (``decay``, ``decay-offset``, ``recovery``).

    ``two-point`` has a closed form (:func:`two_point_rate`) and no lmfit model.
    """
    _check_model(model, allow_two_point=False)
    return _LMFIT_MODELS[model](**kwargs)
