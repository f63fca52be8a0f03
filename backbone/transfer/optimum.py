"""Optimal delays: closed forms for one coupling and vectorized numerical optima over grids of conditions.

Closed forms
------------
Maximizing the equal-rate build-up sin(πJτ)e^(−Rτ): d/dτ = 0 gives tan(πJτ) = πJ/R, so

    τ* = arctan(πJ/R)/(πJ),    R → 0: τ* = 1/(2J)

(Sørensen, Eich, Levitt, Bodenhausen & Ernst, Prog. NMR Spectrosc. 16, 163, 1983; Cavanagh, Fairbrother,
Palmer, Rance & Skelton, Protein NMR Spectroscopy, 2nd ed., 2007). For unequal rates the transferred
amplitude of :func:`backbone.transfer.steps.transfer_amplitudes` is e^(−Rm τ)·πJ·sin(Ωτ)/Ω with
Ω² = (πJ)² − δ², Rm = (Ra + Rb)/2, δ = (Ra − Rb)/2; its first maximum is at

    τ* = atan2(Ω, Rm)/Ω  (Ω² > 0),   1/Rm  (Ω = 0),   artanh(κ/Rm)/κ  (κ² = −Ω² > 0, overdamped).

Numerical optima
----------------
:func:`optimal_delay` maximizes any elementwise function of one delay over a whole array of conditions at once:
a dense grid along a new leading τ axis finds the best grid point for every condition, then a vectorized
golden-section search refines it inside the bracket of its two grid neighbours (one function call per
iteration for all conditions). :func:`optimal_delays` does the same for 2–4 tied delays with a joint grid and
vectorized quadratic-model (Newton) steps on a shrinking 3^d stencil.

Accuracy: the 1-D search stops when the golden-section bracket is below rtol·|τ| + atol for every condition
(default rtol 1e-9); the n-D search when the stencil spacing is (default rtol 1e-7; the Newton steps put the
point well inside that spacing). A smooth maximum is flat to second order, so float64 values locate it to
about √ε ≈ 1e-8 relative at best; better than 1e-6 relative in τ is tested against scipy.optimize. The grid
must resolve the global maximum: a maximum narrower than the grid spacing may be missed (raise ``n_grid``).
"""

from __future__ import annotations

import itertools
import math
from typing import Callable, NamedTuple

import numpy as np

from backbone.errors import BackboneError
from backbone.transfer.steps import _as_float, _nonneg

__all__ = [
    "Optimum",
    "JointOptimum",
    "optimal_inept_delay",
    "optimal_transfer_delay",
    "optimal_delay",
    "optimal_delays",
]

_INV_PHI = (math.sqrt(5.0) - 1.0) / 2.0
_JOINT_GRID = {1: 257, 2: 41, 3: 15, 4: 9}
_MAX_TIED = max(_JOINT_GRID)
#: Relative gain below which a move of the n-D search counts as rounding noise.
_NOISE = 8.0 * np.finfo(float).eps
#: Function values evaluated at once in the grid search (bounds memory to a few tens of MB).
_BLOCK_ELEMENTS = 1 << 21


class Optimum(NamedTuple):
    """Optimal delay ``tau`` [s] and the function value there, both arrays of the condition shape."""

    tau: np.ndarray
    value: np.ndarray


class JointOptimum(NamedTuple):
    """Optimal delays ``taus`` (a tuple, one array per delay) [s] and the function value there."""

    taus: tuple
    value: np.ndarray


# ---------------------------------------------------------------------------------------------------------
# Closed forms
# ---------------------------------------------------------------------------------------------------------


def _active_j(j_hz) -> np.ndarray:
    j = np.abs(_as_float("j_hz", j_hz, "Hz"))
    if np.any(j == 0):
        raise BackboneError("j_hz must be non-zero: a period without an active coupling has no optimal delay")
    return j


def optimal_inept_delay(j_hz, rate):
    """τ* = arctan(πJ/R)/(πJ) [s] maximizing sin(πJτ)e^(−Rτ) (module notes).

    j_hz : float or array [Hz], non-zero (|J| is used); rate : float or array [s⁻¹], ≥ 0. R = 0 gives 1/(2J).
    """
    w = np.pi * _active_j(j_hz)
    r = _nonneg("rate", rate, "s^-1")
    return np.arctan2(w, r) / w


def optimal_transfer_delay(j_hz, r_from, r_to):
    """Delay [s] of the first maximum of the exact unequal-rate transfer (module notes).

    j_hz [Hz] non-zero; r_from, r_to [s⁻¹] ≥ 0, the rates of the starting and target coherence (the result is
    symmetric in them). Equal rates give :func:`optimal_inept_delay`. Passive cos factors are not included
    (they shift the optimum; use :func:`optimal_delay`).
    """
    w = np.pi * _active_j(j_hz)
    ra = _nonneg("r_from", r_from, "s^-1")
    rb = _nonneg("r_to", r_to, "s^-1")
    w, ra, rb = np.broadcast_arrays(w, ra, rb)
    rm = 0.5 * (ra + rb)
    delta = 0.5 * (ra - rb)
    q = w * w - delta * delta
    osc = q > 0
    hyp = q < 0
    omega = np.sqrt(np.where(osc, q, 1.0))
    kappa = np.sqrt(np.where(hyp, -q, 0.0))
    # Overdamped needs |δ| > w > 0, so Rm ≥ |δ| > κ ≥ 0 and the artanh argument is in [0, 1).
    rm_safe = np.where(rm > 0, rm, 1.0)
    t_osc = np.arctan2(omega, rm) / omega
    t_hyp = np.where(kappa > 0, np.arctanh(kappa / rm_safe) / np.where(kappa > 0, kappa, 1.0), 1.0 / rm_safe)
    return np.where(osc, t_osc, np.where(hyp, t_hyp, 1.0 / rm_safe))


# ---------------------------------------------------------------------------------------------------------
# Numerical optima
# ---------------------------------------------------------------------------------------------------------


def _check_bounds(name: str, bounds) -> tuple[np.ndarray, np.ndarray]:
    try:
        lo, hi = bounds
    except (TypeError, ValueError) as err:
        raise BackboneError(f"{name} must be a pair (low, high) of delays [s], got {bounds!r}") from err
    lo = _as_float(f"{name} low", lo, "s")
    hi = _as_float(f"{name} high", hi, "s")
    if np.any(np.broadcast_to(hi <= lo, np.broadcast_shapes(lo.shape, hi.shape))):
        raise BackboneError(f"{name}: the high bound must exceed the low bound, got {bounds!r}")
    return lo, hi


def _check_grid(n_grid) -> int:
    if isinstance(n_grid, bool) or not isinstance(n_grid, (int, np.integer)) or n_grid < 3:
        raise BackboneError(f"n_grid must be an integer >= 3, got {n_grid!r}")
    return int(n_grid)


def _objective(func: Callable, maximize: bool) -> Callable:
    sign = 1.0 if maximize else -1.0

    def f(*taus):
        value = sign * np.asarray(func(*taus), dtype=float)
        shape = np.broadcast_shapes(value.shape, *(np.shape(t) for t in taus))
        return np.broadcast_to(np.where(np.isnan(value), -np.inf, value), shape)

    return f


def _grid_search(f, lo, hi, n):
    """Best point of the joint grid of n points per delay, for every condition.

    lo, hi : arrays (d, *shape). Evaluates the n^d grid points in blocks of at most about
    ``_BLOCK_ELEMENTS`` values, so memory stays bounded for large condition grids. Returns
    (flat grid index, value), arrays of the condition shape.
    """
    d, shape = lo.shape[0], lo.shape[1:]
    size = max(1, math.prod(shape))
    total = n**d
    block = max(1, min(total, _BLOCK_ELEMENTS // size))
    u = np.linspace(0.0, 1.0, n)
    pad = (1,) * len(shape)
    best_val = np.full(shape, -np.inf)
    best_idx = np.zeros(shape, dtype=np.intp)
    any_finite = np.zeros(shape, dtype=bool)
    for start in range(0, total, block):
        flat = np.arange(start, min(start + block, total))
        idx = np.unravel_index(flat, (n,) * d)
        taus = [lo[k] + (hi[k] - lo[k]) * u[idx[k]].reshape(flat.shape + pad) for k in range(d)]
        vals = f(*taus)
        any_finite |= np.any(np.isfinite(vals), axis=0)
        j = np.argmax(vals, axis=0)
        v = np.take_along_axis(vals, j[None], 0)[0]
        better = v > best_val
        best_val = np.where(better, v, best_val)
        best_idx = np.where(better, flat[j], best_idx)
    if not np.all(any_finite):
        raise BackboneError("func returned no finite value anywhere within the bounds for some condition")
    return best_idx, best_val


def optimal_delay(func, bounds, *, n_grid=257, rtol=1e-9, atol=1e-12, maximize=True, max_iter=200):
    """Maximize (or minimize) a function of one delay for a whole array of conditions at once.

    Parameters
    ----------
    func : callable
        ``func(tau)`` → values, elementwise in ``tau`` [s] and broadcasting ``tau`` against the condition
        arrays it closes over. It is called with ``tau`` of the condition shape and, for the grid search,
        with a leading block axis, shape (k, *condition shape). NaN counts as the worst value, so it can
        exclude part of the interval.
    bounds : (low, high)
        Search interval [s]; each bound may be an array broadcasting with the conditions.
    n_grid : int
        Grid points over the interval for the global search.
    rtol, atol : float
        Stop when the golden-section bracket is below rtol·|τ| + atol [s] everywhere (module notes on
        accuracy; with the defaults τ is found to about 1e-8 relative).
    maximize : bool
        ``False`` minimizes.
    max_iter : int
        Cap on golden-section iterations.

    Returns
    -------
    Optimum
        ``(tau, value)``, arrays of the condition shape.
    """
    lo, hi = _check_bounds("bounds", bounds)
    n = _check_grid(n_grid)
    f = _objective(func, maximize)
    shape = np.broadcast_shapes(f(0.5 * (lo + hi)).shape, lo.shape, hi.shape)
    lo = np.broadcast_to(lo, shape)
    hi = np.broadcast_to(hi, shape)
    i, _ = _grid_search(f, lo[None], hi[None], n)
    step = (hi - lo) / (n - 1)
    a = lo + step * np.maximum(i - 1, 0)
    b = np.where(i + 1 >= n - 1, hi, lo + step * np.minimum(i + 1, n - 1))
    tau, best = _golden(f, a, b, rtol, atol, max_iter)
    return Optimum(tau, best if maximize else -best)


def _golden(f, a, b, rtol, atol, max_iter, active=None):
    """Vectorized golden-section maximization of f inside [a, b] (arrays of the condition shape) until the
    bracket is below rtol·|τ| + atol; conditions with ``active`` False are left as they are (their result is
    then meaningless, the caller ignores it). Returns (tau, value)."""
    frozen = None if active is None else ~active
    c = b - _INV_PHI * (b - a)
    d = a + _INV_PHI * (b - a)
    fc, fd = f(c), f(d)
    for _ in range(int(max_iter)):
        # Conditions whose bracket is small enough stay as they are, so every condition's result is the one
        # it would have alone, whatever else is in the batch.
        active = b - a > rtol * np.maximum(np.abs(a), np.abs(b)) + atol
        if frozen is not None:
            active &= ~frozen
        if not np.any(active):
            break
        left = fc >= fd  # the maximum lies in [a, d]
        a1 = np.where(left, a, c)
        b1 = np.where(left, d, b)
        new = np.where(left, b1 - _INV_PHI * (b1 - a1), a1 + _INV_PHI * (b1 - a1))
        f_new = f(new)
        c1, d1 = np.where(left, new, d), np.where(left, c, new)
        fc1, fd1 = np.where(left, f_new, fd), np.where(left, fc, f_new)
        a, b = np.where(active, a1, a), np.where(active, b1, b)
        c, d = np.where(active, c1, c), np.where(active, d1, d)
        fc, fd = np.where(active, fc1, fc), np.where(active, fd1, fd)
    pick_c = fc >= fd
    return np.where(pick_c, c, d), np.where(pick_c, fc, fd)


def optimal_delays(func, bounds, *, n_grid=None, rtol=1e-7, atol=1e-12, maximize=True, max_iter=100):
    """Joint optimum of 1–4 tied delays for a whole array of conditions at once.

    A joint grid (``n_grid`` points per delay; default 65, 17, 9 for 2, 3, 4 delays) gives the best grid
    point per condition; then each iteration evaluates a 3^d stencil of spacing h around it, fits the
    quadratic model (central differences for gradient and Hessian), takes the Newton step where the model is
    concave (limited to 2h), keeps the best of current point, stencil points and Newton point, and halves h
    unless the optimum was found to lie further out. Stops when h ≤ rtol·|τ| + atol [s] for every delay and
    condition (module notes on accuracy).

    Delays tied by a constraint (e.g. a fixed total) are best written with fewer free delays. Excluding a
    region by returning NaN works, but next to such a region the optimum is only found to about the grid
    spacing: the stencil cannot follow a boundary that is not parallel to its axes or diagonals.

    Parameters
    ----------
    func : callable
        ``func(tau_1, …, tau_d)`` → values, elementwise and broadcasting (see :func:`optimal_delay`).
    bounds : sequence of (low, high)
        One interval [s] per delay; bounds may be arrays broadcasting with the conditions.
    n_grid, rtol, atol, maximize, max_iter
        As in :func:`optimal_delay` (``n_grid`` per delay).

    Returns
    -------
    JointOptimum
        ``(taus, value)``: a tuple of d arrays of the condition shape and the value there.
    """
    if not isinstance(bounds, (list, tuple)) or not 1 <= len(bounds) <= _MAX_TIED:
        raise BackboneError(f"bounds must be a list of 1 to {_MAX_TIED} (low, high) pairs, got {bounds!r}")
    d = len(bounds)
    pairs = [_check_bounds(f"bounds[{k}]", b) for k, b in enumerate(bounds)]
    n = _JOINT_GRID[d] if n_grid is None else _check_grid(n_grid)
    f = _objective(func, maximize)
    shape = np.broadcast_shapes(
        f(*(0.5 * (lo + hi) for lo, hi in pairs)).shape, *(lo.shape for lo, _ in pairs), *(hi.shape for _, hi in pairs)
    )
    lo = np.stack([np.broadcast_to(p[0], shape) for p in pairs]).astype(float)
    hi = np.stack([np.broadcast_to(p[1], shape) for p in pairs]).astype(float)

    def stencil(c, hc, off_b):
        pts = c[None] + off_b * hc[None]
        return f(*(pts[:, k] for k in range(d)))

    x, fx = _joint_search(lambda lo, hi, n: _grid_search(f, lo, hi, n), stencil, lambda x: f(*x), lo, hi, n, rtol, atol, max_iter)
    return JointOptimum(tuple(x[k] for k in range(d)), fx if maximize else -fx)


#: The joint search goes on with only the conditions still active once they are at most this fraction of the
#: batch (``compact`` evaluators): a condition's iterations do not depend on the others, so the results are the
#: same, and the last iterations, where a few conditions follow a ridge, cost what those few cost.
_COMPACT_FRACTION = 0.5


def _joint_search(grid, stencil, point, lo, hi, n, rtol, atol, max_iter, compact=None):
    """The n-D search of :func:`optimal_delays` on (d, *shape) bounds, the objective given as three evaluators:
    ``grid(lo, hi, n)`` → (flat grid index, value) like :func:`_grid_search`, ``stencil(c, hc, off_b)`` → values
    at ``c + off_b·hc`` (3^d, *shape), ``point(x)`` → values at x (d, *shape). Maximizes; returns (x, value).
    ``compact(idx)``, optional, returns (stencil, point) evaluators for the conditions at the flat indices
    ``idx`` of ``shape`` only (condition shape (len(idx),)).

    A condition whose stencil spacing is small enough keeps its point and spacing while others go on, so its
    result is the one it would have alone.
    """
    d, shape = lo.shape[0], lo.shape[1:]

    # Joint grid search.
    flat, fx = grid(lo, hi, n)
    h = (hi - lo) / (n - 1)
    x = lo + h * np.stack(np.unravel_index(flat, (n,) * d)).reshape((d,) + shape)
    return _joint_iterate(stencil, point, lo, hi, x, fx, h, rtol, atol, int(max_iter), compact)


def _joint_iterate(stencil, point, lo, hi, x, fx, h, rtol, atol, max_iter, compact):
    """The stencil/Newton iterations of :func:`_joint_search` from the grid optimum x (d, *shape), value fx and
    spacing h; returns (x, fx)."""
    d, shape = lo.shape[0], lo.shape[1:]
    nd = len(shape)

    # Stencil bookkeeping: offsets in {-1, 0, 1}^d and the indices the finite differences need.
    offsets = np.array(list(itertools.product((-1.0, 0.0, 1.0), repeat=d)))
    index = {tuple(int(v) for v in o): j for j, o in enumerate(offsets)}
    center = index[(0,) * d]

    def at(*moves):
        """Stencil index of the point offset by (axis, ±1) for each given move."""
        key = [0] * d
        for axis, sign in moves:
            key[axis] = sign
        return index[tuple(key)]

    eye = np.eye(d)
    off_b = offsets.reshape(offsets.shape + (1,) * nd)
    for it in range(max_iter):
        active = ~np.all(h <= rtol * np.abs(x) + atol, axis=0)
        n_active = int(np.count_nonzero(active))
        if n_active == 0:
            break
        if compact is not None and nd >= 1 and n_active <= _COMPACT_FRACTION * active.size:
            # Conditions that stopped never move again (x, fx and h stay), so the rest goes on alone.
            idx = np.flatnonzero(active)
            sub_stencil, sub_point = compact(idx)

            def sub(a, idx=idx):
                return a.reshape(a.shape[: a.ndim - nd] + (-1,))[..., idx]

            xs, fs = _joint_iterate(
                sub_stencil, sub_point, sub(lo), sub(hi), sub(x), sub(fx), sub(h), rtol, atol, max_iter - it,
                lambda j, idx=idx: compact(idx[j]),
            )
            x = x.reshape((d, -1)).copy()
            fx = fx.reshape(-1).copy()
            x[:, idx] = xs
            fx[idx] = fs
            return x.reshape((d,) + shape), fx.reshape(shape)
        hc = np.minimum(h, 0.5 * (hi - lo))
        c = np.clip(x, lo + hc, hi - hc)
        fv = stencil(c, hc, off_b)
        f0 = fv[center]
        grad = np.empty((d,) + shape)
        hess = np.empty((d, d) + shape)
        # Points where func gave NaN (now -inf) spoil the quadratic model there; those conditions take no
        # Newton step this iteration.
        with np.errstate(invalid="ignore"):
            for k in range(d):
                fp, fm = fv[at((k, 1))], fv[at((k, -1))]
                grad[k] = (fp - fm) / (2.0 * hc[k])
                hess[k, k] = (fp - 2.0 * f0 + fm) / hc[k] ** 2
                for m in range(k + 1, d):
                    mixed = fv[at((k, 1), (m, 1))] - fv[at((k, 1), (m, -1))]
                    mixed = mixed - fv[at((k, -1), (m, 1))] + fv[at((k, -1), (m, -1))]
                    hess[k, m] = hess[m, k] = mixed / (4.0 * hc[k] * hc[m])
            hm = np.moveaxis(hess, (0, 1), (-2, -1))
            gm = np.moveaxis(grad, 0, -1)
            finite = np.all(np.isfinite(hm), axis=(-2, -1)) & np.all(np.isfinite(gm), axis=-1)
            hm = np.where(finite[..., None, None], hm, -eye)
            gm = np.where(finite[..., None], gm, 0.0)
            concave = finite & (np.linalg.eigvalsh(hm)[..., -1] < 0)
            hm = np.where(concave[..., None, None], hm, -eye)
            newton = -np.linalg.solve(hm, gm[..., None])[..., 0]
        newton = np.where(concave[None], np.moveaxis(newton, -1, 0), 0.0)
        reach = np.max(np.abs(newton) / hc, axis=0)
        scale = np.where(reach > 2.0, 2.0 / np.where(reach > 2.0, reach, 1.0), 1.0)
        xn = np.clip(c + newton * scale, lo, hi)
        fn = point(xn)
        j = np.argmax(fv, axis=0)
        fs = np.take_along_axis(fv, j[None], 0)[0]
        xs = c + np.moveaxis(offsets[j], -1, 0) * hc
        cand_f = np.stack([fx, fs, fn])
        choice = np.argmax(cand_f, axis=0)  # ties keep the current point
        cand_x = np.stack([x, xs, xn])
        x_new = np.take_along_axis(cand_x, choice[None, None], 0)[0]
        f_new = np.take_along_axis(cand_f, choice[None], 0)[0]
        # Keep h where the optimum may lie beyond the stencil: an outer stencil point or a truncated Newton
        # step won, moved the point by more than h/2 and gained more than rounding noise. Otherwise the
        # optimum is bracketed by the stencil and h halves.
        gained = f_new - fx > _NOISE * np.abs(fx)
        jumped = np.any(np.abs(x_new - x) > 0.5 * hc, axis=0)
        outward = ((choice == 1) & (j != center)) | ((choice == 2) & (scale < 1.0))
        further = outward & jumped & gained
        x = np.where(active[None], x_new, x)
        fx = np.where(active, f_new, fx)
        h = np.where(active[None], np.where(further[None], hc, 0.5 * hc), h)
    return x, fx


def _weakest_product_optimum(
    axis_factors, fixed, bounds, shape, *, n_grid=None, rtol=1e-7, atol=1e-12, max_iter=100, subset_factors=None
):
    """:func:`optimal_delays` (default grid, maximizing) of the weakest of products of per-delay factors.

    The objective is min over k of ``fixed[k] · ∏_d axis_factors(d, τ_d)[k]`` (products in that order, the
    minimum taken over k in order), the form of a "weakest peak" objective whose peak amplitudes are products of
    one factor per delay. ``axis_factors(d, tau)`` returns the list over k of the factors of delay d at ``tau``
    (any leading axes before the condition shape ``shape``). Because the objective separates, the joint grid
    and every stencil need each factor only at n (grid) or 3 (stencil) values per delay instead of at all n^d
    or 3^d points; the values, and therefore the result, are those of :func:`optimal_delays` with the same
    objective written as one function. For callers that validated their inputs (bounds as given, no checks).

    ``n_grid`` overrides the joint grid: an objective known to be jointly log-concave (hence unimodal; the
    walk's weakest-peak objectives, :mod:`backbone.experiments.delays`) needs the grid only as a start.
    ``subset_factors(d, tau, idx)``, optional, gives the factors of the conditions at the flat indices ``idx``
    of ``shape`` only (``tau`` of shape (…, len(idx))); with it the last iterations run on the conditions still
    searching (:data:`_COMPACT_FRACTION`), same values.
    """
    d = len(bounds)
    n = _JOINT_GRID[d] if n_grid is None else int(n_grid)
    lo = np.stack([np.broadcast_to(np.asarray(b[0], dtype=float), shape) for b in bounds]).astype(float)
    hi = np.stack([np.broadcast_to(np.asarray(b[1], dtype=float), shape) for b in bounds]).astype(float)
    grid, stencil, point = _product_evaluators(axis_factors, fixed, d, tuple(shape))
    compact = None
    if subset_factors is not None and len(shape) >= 1:
        flat_fixed = [np.broadcast_to(np.asarray(f, dtype=float), shape).reshape(-1) for f in fixed]

        def compact(idx):
            def factors(a, tau):
                return subset_factors(a, tau, idx)

            _, sub_stencil, sub_point = _product_evaluators(factors, [f[idx] for f in flat_fixed], d, (idx.size,))
            return sub_stencil, sub_point

    x, fx = _joint_search(grid, stencil, point, lo, hi, n, rtol, atol, max_iter, compact)
    return JointOptimum(tuple(x[k] for k in range(d)), fx)


def _product_evaluators(axis_factors, fixed, d, shape):
    """(grid, stencil, point) evaluators of :func:`_joint_search` for the objective of
    :func:`_weakest_product_optimum` on the condition shape ``shape``."""
    nd = len(shape)
    pad = (1,) * nd

    def combine(per_axis, sizes):
        """Objective on the outer grid of the per-delay values, flattened in C order: (∏ sizes, *shape);
        per_axis[a][k] has shape (sizes[a], *shape) or broadcasts to it."""
        out = None
        for k in range(len(fixed)):
            v = np.asarray(fixed[k], dtype=float)
            for a in range(d):
                g = np.broadcast_to(per_axis[a][k], (sizes[a],) + shape)
                v = v * g.reshape((1,) * a + (sizes[a],) + (1,) * (d - 1 - a) + shape)
            out = v if out is None else np.minimum(out, v)
        out = np.broadcast_to(out, tuple(sizes) + shape).reshape((math.prod(sizes),) + shape)
        return np.where(np.isnan(out), -np.inf, out)

    def grid(lo, hi, n):
        u = np.linspace(0.0, 1.0, n).reshape((n,) + pad)
        per_axis = [axis_factors(a, lo[a] + (hi[a] - lo[a]) * u) for a in range(d)]
        # Blocks of rows of the first delay bound the memory for large condition grids (as _grid_search).
        rest = n ** (d - 1)
        rows = max(1, _BLOCK_ELEMENTS // (rest * max(1, math.prod(shape))))
        best_val = np.full(shape, -np.inf)
        best_idx = np.zeros(shape, dtype=np.intp)
        any_finite = np.zeros(shape, dtype=bool)
        for start in range(0, n, rows):
            stop = min(n, start + rows)
            first = [np.broadcast_to(g, (n,) + shape)[start:stop] for g in per_axis[0]]
            vals = combine([first] + per_axis[1:], (stop - start,) + (n,) * (d - 1))
            any_finite |= np.any(np.isfinite(vals), axis=0)
            j = np.argmax(vals, axis=0)
            v = np.take_along_axis(vals, j[None], 0)[0]
            better = v > best_val
            best_val = np.where(better, v, best_val)
            best_idx = np.where(better, start * rest + j, best_idx)
        if not np.all(any_finite):
            raise BackboneError("func returned no finite value anywhere within the bounds for some condition")
        return best_idx, best_val

    steps = np.array([-1.0, 0.0, 1.0]).reshape((3,) + pad)

    def stencil(c, hc, off_b):
        return combine([axis_factors(a, c[a][None] + steps * hc[a][None]) for a in range(d)], (3,) * d)

    def point(x):
        per_axis = [[np.asarray(v)[None] for v in axis_factors(a, x[a])] for a in range(d)]
        return combine(per_axis, (1,) * d)[0]

    return grid, stencil, point


#: Relative finite-difference step of the Newton search of :func:`_log_concave_maximum`.
_FD_STEP = 1e-5
#: Largest |d² log f/dτ²|·τ² the Newton search trusts as a smooth maximum (the objectives of the walk have
#: O(1–10) there; a kink of a "weakest" objective inside the stencil gives ~1/_FD_STEP).
_SMOOTH_CURVATURE = 1e3


def _log_concave_maximum(func, lo, hi, *, start=None, rtol=1e-9, atol=1e-12, newton_iter=8, max_iter=200, subset=None):
    """Maximum of a function of one delay that is log-concave (hence unimodal) on [lo, hi], for an array of
    conditions: no global grid, a safeguarded Newton search on log f from ``start`` with golden-section
    fallback. For the walk's objectives, whose log-concavity on the first lobe is shown in
    :mod:`backbone.experiments.delays`; arbitrary functions go through :func:`optimal_delay`.

    Each iteration evaluates log f at τ−h, τ, τ+h (h = 1e-5·τ; one call with a leading axis of 3), narrows the
    bracket [a, b] by unimodality (f(τ+h) > f(τ) puts the maximum right of τ, and so on) and takes the Newton
    step of the three-point parabola where it is concave, falls inside the bracket and looks smooth
    (|curvature|·τ² ≤ 1e3); otherwise it bisects the bracket. A condition is done when the Newton step is below
    rtol·|τ| + atol [s] (the criterion of :func:`optimal_delay`'s golden section) or the bracket is; conditions
    not done after ``newton_iter`` iterations (kinks of a "weakest" objective, where the maximum is a crossing
    of two peaks) finish by golden section inside their bracket. Every condition's result is the one it would
    have alone. Accuracy as :func:`optimal_delay`: τ to about 1e-9 relative for smooth maxima (the central
    differences bias the Newton root by ~h²·|L'''/L''| ≈ 1e-10 relative), the bracket criterion at kinks.

    func : callable, elementwise, broadcasting a leading axis of ``tau`` like :func:`optimal_delay`'s; NaN and
    values ≤ 0 count as the worst. lo, hi : arrays or floats [s]; start : array [s] or None (mid-interval).
    subset : optional, ``subset(idx, shape)`` → ``func`` for the conditions at the flat indices ``idx`` of the
    condition shape ``shape`` only (1-D), or None when it cannot; with it the golden section runs on the
    conditions that need it alone (same values).
    No argument checks (for callers that validated their inputs). Returns :class:`Optimum` (maximizing).
    """
    f = _objective(func, True)
    shape = np.broadcast_shapes(f(0.5 * (np.asarray(lo) + np.asarray(hi))).shape, np.shape(lo), np.shape(hi))
    lo = np.broadcast_to(np.asarray(lo, dtype=float), shape)
    hi = np.broadcast_to(np.asarray(hi, dtype=float), shape)
    a, b = lo.copy(), hi.copy()
    x = 0.5 * (a + b) if start is None else np.broadcast_to(np.asarray(start, dtype=float), shape).copy()
    margin = 1e-6 * (hi - lo)
    x = np.clip(x, lo + margin, hi - margin)
    done = np.zeros(shape, dtype=bool)
    pending = np.zeros(shape, dtype=bool)
    offsets = np.array([-1.0, 0.0, 1.0]).reshape((3,) + (1,) * len(shape))

    def log_f(t):
        v = f(t)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(v > 0, np.log(np.where(v > 0, v, 1.0)), -np.inf)

    for _ in range(int(newton_iter)):
        active = ~done
        if not np.any(active):
            break
        h = np.minimum(_FD_STEP * np.abs(x) + atol, 0.5 * np.minimum(x - lo, hi - x))
        h = np.where(h > 0, h, atol)
        lm, l0, lp = log_f(x[None] + offsets * h[None])
        # Unimodality narrows the bracket whatever the step.
        right = lp > l0
        left = lm > l0
        centre = ~right & ~left & np.isfinite(l0)
        a = np.where(active & right, np.maximum(a, x), a)
        b = np.where(active & left & ~right, np.minimum(b, x), b)
        a = np.where(active & centre, np.maximum(a, x - h), a)
        b = np.where(active & centre, np.minimum(b, x + h), b)
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            g = (lp - lm) / (2.0 * h)
            curv = (lp - 2.0 * l0 + lm) / (h * h)
            step = -g / curv
            xn = x + step
            smooth = np.isfinite(step) & (curv < 0) & (-curv * x * x <= _SMOOTH_CURVATURE)
        inside = smooth & (xn > a) & (xn < b)
        tol = rtol * np.abs(x) + atol
        converged = inside & (np.abs(step) <= tol)
        # A maximum inside the stencil that does not look smooth is a kink: the golden section finishes it
        # inside the bracket [τ−h, τ+h] already found.
        kink = active & centre & np.isfinite(l0) & ~smooth
        x_next = np.where(inside, xn, 0.5 * (a + b))
        tight = b - a <= rtol * np.maximum(np.abs(a), np.abs(b)) + atol
        x = np.where(active, np.where(tight & ~inside, 0.5 * (a + b), x_next), x)
        done |= active & (converged | tight)
        pending |= kink & ~done
        done |= pending
    done &= ~pending
    if not np.all(done):
        # Golden section inside the narrowed bracket for the rest.
        rest = ~done
        n_rest = int(np.count_nonzero(rest))
        idx = np.flatnonzero(rest)
        f_sub = None
        if subset is not None and len(shape) >= 1 and n_rest <= _COMPACT_FRACTION * rest.size:
            f_sub = subset(idx, shape)
        if f_sub is not None:
            # Every condition's golden section is its own, so the few that need one run alone.
            a_sub = a.reshape(-1)[idx]
            b_sub = b.reshape(-1)[idx]
            tg, _ = _golden(_objective(f_sub, True), a_sub, b_sub, rtol, atol, max_iter)
            x = x.reshape(-1).copy()
            x[idx] = tg
            x = x.reshape(shape)
        else:
            tg, _ = _golden(f, a, b, rtol, atol, max_iter, active=rest)
            x = np.where(done, x, tg)
    return Optimum(x, np.broadcast_to(f(x), shape).copy())
