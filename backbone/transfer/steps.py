"""Coherence-transfer periods: exact product-operator amplitudes with relaxation.

During a transfer period one scalar coupling (the *active* one) turns a coherence into its partner
(in-phase Ix ⇄ anti-phase 2IySz) while both relax with their own rates. With a = amplitude of the starting
coherence and b = amplitude of the target one, the product-operator rules (Sørensen, Eich, Levitt,
Bodenhausen & Ernst, Prog. NMR Spectrosc. 16, 163, 1983) plus first-order relaxation give the 2×2 system

    d/dt [a, b] = [[−Ra, −πJ], [πJ, −Rb]] [a, b],     a(0) = 1, b(0) = 0.

Write Rm = (Ra + Rb)/2, δ = (Ra − Rb)/2 and q = (πJ)² − δ². The generator is −Rm·1 + K with K² = −q·1, so

    exp(M t) = e^(−Rm t) [C(t)·1 + S(t)·K],   C = cos(√q t),  S = sin(√q t)/√q            (q ≥ 0)
                                              C = cosh(√−q t), S = sinh(√−q t)/√−q        (q < 0)

and a = e^(−Rm t)(C − δS), b = e^(−Rm t) πJ S. ``S`` is evaluated as t·sinc or as t·(1 − e^(−y))/y so the
critical point q = 0, the equal-rate case δ = 0 and J = 0 need no division by zero, and the overdamped branch
(|Ra − Rb|/2 > π|J|) is written with decaying exponentials only. Equal rates give a = cos(πJt)e^(−Rt),
b = sin(πJt)e^(−Rt), the textbook INEPT build-up (Cavanagh, Fairbrother, Palmer, Rance & Skelton, Protein NMR
Spectroscopy, 2nd ed., 2007).

Couplings that are not decoupled but not wanted either (*passive* couplings of the active spin) commute with
everything else in the weak-coupling limit and multiply every amplitude by cos(πJ_p τ). Decoupled couplings are
simply not passed.

Conventions
-----------
* ``tau`` is the total time during which the active coupling evolves (echo halves are τ/2 each); with no
  relaxation the build-up is sin(πJτ) and its optimum τ = 1/(2J).
* Couplings in Hz, rates in s⁻¹, times in s. All arguments broadcast against each other.
* The sign of J only sets the sign of the anti-phase operator, which the refocusing step by the same coupling
  undoes (sin·sin is even in J); cos is even. All functions use |J|.
* Transferred amplitudes carry the sign of the build-up sin-type term (positive for 0 < π|J|τ < π) in both
  directions; which phase the anti-phase operator has (2IySz or −2IxSz, and −sin for 2IySz → Ix in the
  rotation rules) is fixed by the pulse phases of the sequence, not by this algebra. Sign changes the algebra
  does decide (cos of a passive coupling past 1/(2J), the −sin² CB pathway) are kept.
* A *sequence of couplings* (``passive_hz``, the partners of :func:`branch_transfer`) is a tuple or list whose
  entries each broadcast; a bare number is one coupling; a NumPy array is read along its first axis (wrap a
  grid of values of one coupling in a tuple: ``passive_hz=(j_grid,)``).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from backbone.errors import BackboneError

__all__ = [
    "Amplitudes",
    "BranchAmplitudes",
    "passive_factor",
    "transfer_amplitudes",
    "inept",
    "refocused_inept",
    "branch_transfer",
    "homonuclear_transfer",
    "cacb_split",
    "multiple_quantum",
]

_DIRECTIONS = ("build", "refocus")


class Amplitudes(NamedTuple):
    """Amplitudes after a transfer period, both with the broadcast shape of the inputs.

    ``remaining``: amplitude left in the starting coherence; ``transferred``: amplitude in the target.
    """

    remaining: np.ndarray
    transferred: np.ndarray


class BranchAmplitudes(NamedTuple):
    """Amplitudes after a period with several active couplings.

    ``remaining`` and ``transferred`` are documented by :func:`branch_transfer`; ``transferred`` always has a
    leading axis over the partners.
    """

    remaining: np.ndarray
    transferred: np.ndarray


# ---------------------------------------------------------------------------------------------------------
# Validation (shared with the sibling modules of this package)
# ---------------------------------------------------------------------------------------------------------


def _as_float(name: str, value, unit: str) -> np.ndarray:
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError) as err:
        raise BackboneError(f"{name} must be a number or an array of numbers [{unit}], got {value!r}") from err
    if not np.all(np.isfinite(arr)):
        raise BackboneError(f"{name} must be finite [{unit}], got {value!r}")
    return arr


def _nonneg(name: str, value, unit: str) -> np.ndarray:
    arr = _as_float(name, value, unit)
    if np.any(arr < 0):
        bad = arr[arr < 0].ravel()[0]
        raise BackboneError(f"{name} must be >= 0 {unit}, got {bad:g} {unit}")
    return arr


def _coupling_list(name: str, value) -> list[np.ndarray]:
    if isinstance(value, (list, tuple)):
        items = list(value)
    elif isinstance(value, np.ndarray) and value.ndim >= 1:
        items = list(value)
    else:
        items = [value]
    return [np.abs(_as_float(f"{name}[{k}]", v, "Hz")) for k, v in enumerate(items)]


def _check_direction(direction: str) -> str:
    if direction not in _DIRECTIONS:
        raise BackboneError(f"direction {direction!r}: allowed are {', '.join(map(repr, _DIRECTIONS))}")
    return direction


# ---------------------------------------------------------------------------------------------------------
# The 2×2 kernel
# ---------------------------------------------------------------------------------------------------------


def _one_minus_exp_ratio(y):
    """(1 − e^(−y))/y for y ≥ 0, equal to 1 at y = 0, without cancellation for small y."""
    y = np.asarray(y, dtype=float)
    zero = y == 0.0
    y_safe = np.where(zero, 1.0, y)
    return np.where(zero, 1.0, -np.expm1(-y_safe) / y_safe)


def _kernel_scaled(t, w, ra, rb):
    """First column of exp(t [[−ra, −w], [w, −rb]]) for real rates of any sign and w ≥ 0, as mantissas.

    Returns (a_m, b_m, log_scale) with a = a_m·e^log_scale (amplitude left in the start) and
    b = b_m·e^log_scale (amplitude in the target). ``log_scale`` is t times the real part of the slower
    eigenvalue, and |a_m|, |b_m| ≤ 1 + |δ|t, so products of several factors can be formed without overflow.
    """
    t, w, ra, rb = (np.asarray(x, dtype=float) for x in (t, w, ra, rb))
    rm = 0.5 * (ra + rb)
    delta = 0.5 * (ra - rb)
    q = w * w - delta * delta
    if q.min(initial=0.0) >= 0.0:
        # Oscillatory everywhere (the usual case): no broadcasting of the inputs, no masked branch.
        x = np.sqrt(q) * t
        s = t * np.sinc(x / np.pi)
        a_m = np.cos(x) - delta * s
        log_scale = -rm * t
        if log_scale.shape != a_m.shape:
            log_scale = log_scale + np.zeros(a_m.shape)
        return a_m, w * s, log_scale
    t, w, ra, rb = np.broadcast_arrays(t, w, ra, rb)
    rm = 0.5 * (ra + rb)
    delta = 0.5 * (ra - rb)
    q = w * w - delta * delta
    osc = q >= 0.0
    omega = np.sqrt(np.where(osc, q, 0.0))
    # Oscillatory branch: e^(−Rm t) [cos(Ωt), t sinc(Ωt)].
    c = np.cos(omega * t)
    s = t * np.sinc(omega * t / np.pi)
    log_scale = -rm * t
    hyp = ~osc
    if np.any(hyp):
        # Overdamped branch, relative to e^((κ − Rm) t): cosh(κt) e^(−κt) = (1 + e^(−2κt))/2 and
        # sinh(κt) e^(−κt)/κ = t (1 − e^(−2κt))/(2κt); decaying exponentials only. Evaluated only where
        # it applies (elementwise, so the values are those of the whole-array formula).
        kappa = np.sqrt(-q[hyp])
        th = t[hyp]
        c = np.array(c, copy=True)
        s = np.array(s, copy=True)
        log_scale = np.array(log_scale, copy=True)
        c[hyp] = 0.5 * (1.0 + np.exp(-2.0 * kappa * th))
        s[hyp] = th * _one_minus_exp_ratio(2.0 * kappa * th)
        log_scale[hyp] = (kappa - rm[hyp]) * th
    return c - delta * s, w * s, log_scale


def _kernel(t, w, ra, rb):
    """(a, b) of :func:`_kernel_scaled` with the scale applied; for rates ≥ 0 the scale is ≤ 1."""
    a_m, b_m, log_scale = _kernel_scaled(t, w, ra, rb)
    scale = np.exp(log_scale)
    return a_m * scale, b_m * scale


def passive_factor(tau, passive_hz=()):
    """Product of cos(π J_p τ) over the passive couplings (1 when there are none).

    tau : float or array [s]; passive_hz : sequence of couplings [Hz] (see the module notes). The result has
    the broadcast shape of ``tau`` and the couplings and may be negative (a coupling evolving past 1/(2J)).
    """
    tau = _nonneg("tau", tau, "s")
    out = np.ones_like(tau)
    for j in _coupling_list("passive_hz", passive_hz):
        out = out * np.cos(np.pi * j * tau)
    return out


# ---------------------------------------------------------------------------------------------------------
# One active coupling
# ---------------------------------------------------------------------------------------------------------


def transfer_amplitudes(tau, j_active_hz, r_from, r_to, *, passive_hz=(), direction="build"):
    """Exact amplitudes after a period with one active coupling and unequal rates.

    Solves d/dt [a, b] = [[−Ra, −πJ], [πJ, −Rb]] [a, b] from a = 1, b = 0 (module notes) and multiplies both
    amplitudes by the passive factor ∏ cos(πJ_p τ).

    Parameters
    ----------
    tau : float or array [s]
        Total evolution time of the active coupling (≥ 0).
    j_active_hz : float or array [Hz]
        The active coupling; its sign does not matter (|J| is used).
    r_from, r_to : float or array [s⁻¹]
        Relaxation rates (≥ 0) of the starting and the target coherence.
    passive_hz : sequence of couplings [Hz]
        Couplings of the active spin that evolve but are not wanted.
    direction : ``"build"`` or ``"refocus"``
        ``"build"``: in-phase → anti-phase (``r_from`` is the in-phase rate); ``"refocus"``: anti-phase →
        in-phase (``r_from`` is the anti-phase rate). The 2×2 propagator of the reverse process is the
        transpose of the forward one, so the amplitudes depend only on which rate belongs to the start; the
        argument states the intent and is checked.

    Returns
    -------
    Amplitudes
        ``(remaining, transferred)``, numpy arrays of the broadcast shape. Their squares sum to at most 1.
    """
    _check_direction(direction)
    tau = _nonneg("tau", tau, "s")
    j = np.abs(_as_float("j_active_hz", j_active_hz, "Hz"))
    ra = _nonneg("r_from", r_from, "s^-1")
    rb = _nonneg("r_to", r_to, "s^-1")
    a, b = _kernel(tau, np.pi * j, ra, rb)
    p = passive_factor(tau, passive_hz)
    return Amplitudes(a * p, b * p)


def inept(tau, j_hz, r_inphase, r_antiphase=None, *, passive_hz=()):
    """INEPT build-up in-phase Ix → anti-phase 2IySz (Morris & Freeman, JACS 101, 760, 1979, from memory).

    tau [s], j_hz [Hz], r_inphase and r_antiphase [s⁻¹] (``r_antiphase`` defaults to ``r_inphase``),
    passive_hz a sequence of couplings [Hz]. Returns the anti-phase amplitude, sin(πJτ)e^(−Rτ) for equal
    rates, exact for unequal ones (:func:`transfer_amplitudes`).
    """
    r_to = r_inphase if r_antiphase is None else r_antiphase
    return transfer_amplitudes(tau, j_hz, r_inphase, r_to, passive_hz=passive_hz, direction="build").transferred


def refocused_inept(tau, j_hz, r_antiphase, r_inphase=None, *, passive_hz=()):
    """Refocusing anti-phase 2IySz → in-phase Ix (Burum & Ernst, J. Magn. Reson. 39, 163, 1980, from memory).

    tau [s], j_hz [Hz], r_antiphase and r_inphase [s⁻¹] (``r_inphase`` defaults to ``r_antiphase``),
    passive_hz a sequence of couplings [Hz]. Returns the in-phase amplitude.
    """
    r_to = r_antiphase if r_inphase is None else r_inphase
    return transfer_amplitudes(
        tau, j_hz, r_antiphase, r_to, passive_hz=passive_hz, direction="refocus"
    ).transferred


# ---------------------------------------------------------------------------------------------------------
# Several active couplings
# ---------------------------------------------------------------------------------------------------------


def branch_transfer(tau, j_hz, r_from, r_to, *, passive_hz=(), direction="build"):
    """Simultaneous transfer of one coherence to (or back from) several coupling partners.

    With K active couplings J_k of spin I to partners S_k the closed product-operator subspace is spanned by
    Ix, 2IySz_k, 4IxSz_kSz_m, … (2^K states). In the basis {Ix, 2IySz_1, 2IySz_2, −4IxSz_1Sz_2, …} the
    coupling part of the generator is exactly the Kronecker sum of the K one-coupling 2×2 generators. The
    relaxation part is taken **additive**: a state anti-phase with respect to the set P of partners relaxes
    with R_in + Σ_{k∈P} (R_anti,k − R_in), i.e. each partner's longitudinal operator Sz_k adds its own
    longitudinal relaxation to the in-phase rate. Then the whole generator is a Kronecker sum and the
    propagator the Kronecker product of 2×2 solutions, so the result is exact for that relaxation model:

        branch k:   e^(−R_in τ) · b_k · ∏_{m≠k} a_m,   (a_k, b_k) = 2×2 solution with rates (0, R_anti,k − R_in)

    With equal rates this is sin(πJ_kτ) ∏_{m≠k} cos(πJ_mτ) e^(−Rτ) (HNCA: Kay, Ikura, Tschudin & Bax,
    J. Magn. Reson. 89, 496, 1990, from memory; Sattler, Schleucher & Griesinger, Prog. NMR Spectrosc. 34,
    93, 1999). Neglected: relaxation that is not additive over the partners (S_k–S_m dipolar cross relaxation
    of the longitudinal order Sz_kSz_m, cross-correlated relaxation between the S_k terms); use the Liouville
    reference propagator of this package when those matter. Anti-phase rates below the in-phase rate are
    allowed as long as every state keeps a rate ≥ 0, i.e. R_in + Σ_k min(0, R_anti,k − R_in) ≥ 0; beyond
    that the additive model describes growth and a :class:`~backbone.errors.BackboneError` is raised.

    Parameters
    ----------
    tau : float or array [s]
        Evolution time of the active couplings.
    j_hz : sequence of couplings [Hz]
        The active couplings, one per partner (|J| is used).
    r_from, r_to : float, array or sequence [s⁻¹]
        ``"build"``: ``r_from`` is the in-phase rate (one value or array) and ``r_to`` the anti-phase rate of
        each partner's branch — a tuple/list with one entry per partner, or one value/array shared by all.
        ``"refocus"``: ``r_from`` holds the anti-phase rates (per partner or shared) and ``r_to`` the in-phase
        rate.
    passive_hz : sequence of couplings [Hz]
        Further couplings of spin I that evolve; they multiply every amplitude by cos(πJ_pτ).
    direction : ``"build"`` or ``"refocus"``

    Returns
    -------
    BranchAmplitudes
        ``"build"``: ``remaining`` is the in-phase amplitude (broadcast shape), ``transferred[k]`` the
        amplitude in 2IySz_k (shape (K, …)). ``"refocus"``: ``remaining[k]`` is the amplitude left in
        2IySz_k when starting there and ``transferred[k]`` the in-phase amplitude refocused from it (both
        shape (K, …)). The rest sits in multiply anti-phase states that the next step does not observe.
    """
    _check_direction(direction)
    tau = _nonneg("tau", tau, "s")
    couplings = _coupling_list("j_hz", j_hz)
    n = len(couplings)
    if n == 0:
        raise BackboneError("j_hz: give at least one active coupling")
    inphase_name, anti_name = ("r_from", "r_to") if direction == "build" else ("r_to", "r_from")
    inphase_value, anti_value = (r_from, r_to) if direction == "build" else (r_to, r_from)
    r_in = _nonneg(inphase_name, inphase_value, "s^-1")
    if isinstance(anti_value, (list, tuple)):
        if len(anti_value) != n:
            raise BackboneError(
                f"{anti_name}: {len(anti_value)} anti-phase rates for {n} active couplings; give one per "
                "coupling or a single shared value"
            )
        r_anti = [_nonneg(f"{anti_name}[{k}]", r, "s^-1") for k, r in enumerate(anti_value)]
    else:
        r_anti = [_nonneg(anti_name, anti_value, "s^-1")] * n

    # Every state's rate must stay >= 0 under the additive model, otherwise it describes growth.
    floor = r_in + sum(np.minimum(r - r_in, 0.0) for r in r_anti)
    if np.any(floor < 0):
        raise BackboneError(
            f"{anti_name}: with anti-phase rates this far below the in-phase rate ({inphase_name}) the additive "
            "relaxation model gives a multiply anti-phase state a negative rate; it needs "
            "R_in + sum_k min(0, R_anti,k - R_in) >= 0"
        )

    # Kronecker factors: 2×2 solutions with the in-phase rate taken out (it joins the common scale).
    # For "refocus" the transferred amplitude of factor k is the same (b is symmetric in the two rates);
    # what stays in the anti-phase start is the 2×2 with the rates swapped (same scale).
    zero = np.zeros(())
    factors = [_kernel_scaled(tau, np.pi * j, zero, r - r_in) for j, r in zip(couplings, r_anti)]
    # The summed log-scale is t times the real part of an eigenvalue of the full generator, hence <= 0.
    log_total = -r_in * tau
    for _, _, log_k in factors:
        log_total = log_total + log_k
    base = np.exp(log_total) * passive_factor(tau, passive_hz)
    keep = [a_m for a_m, _, _ in factors]
    shape = np.broadcast_shapes(base.shape, *(a.shape for a in keep))
    transferred = np.empty((n, *shape))
    remaining = np.empty((n, *shape)) if direction == "refocus" else None
    for k in range(n):
        others = base
        for m in range(n):
            if m != k:
                others = others * keep[m]
        transferred[k] = others * factors[k][1]
        if remaining is not None:
            a_back, _, _ = _kernel_scaled(tau, np.pi * couplings[k], r_anti[k] - r_in, zero)
            remaining[k] = others * a_back
    if remaining is None:
        all_keep = base
        for a in keep:
            all_keep = all_keep * a
        remaining = np.broadcast_to(all_keep, shape).copy()
    return BranchAmplitudes(remaining, transferred)


# ---------------------------------------------------------------------------------------------------------
# Carbon–carbon transfers
# ---------------------------------------------------------------------------------------------------------


def homonuclear_transfer(tau, j_active_hz, r_from, r_to, *, passive_hz=(), direction="build"):
    """Carbon–carbon transfer (C′ → CA, CA → CB) with band-selective pulses.

    Band-selective pulses on the two carbon regions make the homonuclear coupling act like a heteronuclear
    one: in the weak-coupling limit (shift difference ≫ J; C′–CA about 120 ppm, CA–CB usually several ppm
    against 35–55 Hz) the algebra is that of :func:`transfer_amplitudes` with the carbon–carbon coupling
    active (Sattler, Schleucher & Griesinger, Prog. NMR Spectrosc. 34, 93, 1999). Couplings refocused by the
    selective pulses (e.g. CA–C′ during a CA–CB period) are not passed; those that evolve go in
    ``passive_hz``. Strongly coupled pairs (nearly equal CA and CB shifts) are outside this model.

    Arguments, units and returns as :func:`transfer_amplitudes`.
    """
    return transfer_amplitudes(tau, j_active_hz, r_from, r_to, passive_hz=passive_hz, direction=direction)


def cacb_split(tau, j_cacb_hz, r_inphase, r_antiphase=None, *, passive_hz=(), out_and_back=True):
    """The CA → CB split of HNCACB-type experiments.

    During one CA–CB period of length τ the CA coherence stays in-phase with amplitude a ≈ cos(πJτ) and
    becomes anti-phase with respect to CB with amplitude b ≈ sin(πJτ) (exactly: the 2×2 solution with the
    in-phase and anti-phase rates, times the passive factor); the anti-phase part is moved to CB by the
    following pulses. After the CB (or CA) evolution the same period runs backwards, so over the out-and-back
    the CA pathway carries a² = cos²(πJτ) and the CB pathway −b² = −sin²(πJτ): CA and CB peaks of opposite
    sign (Wittekind & Mueller, J. Magn. Reson. B 101, 201, 1993, from memory; Sattler, Schleucher &
    Griesinger, Prog. NMR Spectrosc. 34, 93, 1999).

    Parameters
    ----------
    tau : float or array [s]
        Length of one CA–CB period (total evolution time of J(CA,CB) in it).
    j_cacb_hz : float or array [Hz]
    r_inphase, r_antiphase : float or array [s⁻¹]
        Rates of in-phase CA and of CA anti-phase to CB (``r_antiphase`` defaults to ``r_inphase``); the same
        rates are used on the way back.
    passive_hz : sequence of couplings [Hz]
        Couplings of CA that evolve during each period (applied in both periods).
    out_and_back : bool
        ``True``: the two-period result (a², −b²). ``False``: one period, (a, b).

    Returns
    -------
    tuple of arrays
        ``(ca, cb)`` amplitudes of the CA and CB pathways.
    """
    r_to = r_inphase if r_antiphase is None else r_antiphase
    a, b = homonuclear_transfer(tau, j_cacb_hz, r_inphase, r_to, passive_hz=passive_hz)
    if out_and_back:
        return a * a, -(b * b)
    return a, b


# ---------------------------------------------------------------------------------------------------------
# Multiple-quantum periods
# ---------------------------------------------------------------------------------------------------------


def multiple_quantum(tau, r_mq, *, passive_hz=()):
    """Amplitude after a heteronuclear multiple-quantum period of length τ.

    Zero- and double-quantum coherence of a coupled pair I–S does not evolve under their own coupling
    (2IzSz commutes with it), so only relaxation at the multiple-quantum rate and the couplings of I or S to
    further spins act (Bax, Griffey & Hawkins, J. Magn. Reson. 55, 301, 1983, from memory; Cavanagh et al.
    2007): e^(−R_MQ τ) ∏ cos(πJ_p τ).

    tau [s]; r_mq [s⁻¹] (mean of the zero- and double-quantum rates when both are present, the caller's
    choice); passive_hz a sequence of couplings [Hz] of either spin to other spins.
    """
    tau = _nonneg("tau", tau, "s")
    r = _nonneg("r_mq", r_mq, "s^-1")
    return np.exp(-r * tau) * passive_factor(tau, passive_hz)


# ---------------------------------------------------------------------------------------------------------
# Unchecked kernels for callers that validated their inputs once (the experiment walk's delay search)
# ---------------------------------------------------------------------------------------------------------


def _transfer_unchecked(tau, j_hz, r_from, r_to):
    """(remaining, transferred) of :func:`transfer_amplitudes` with no passive couplings, without validation.

    For callers whose τ [s] ≥ 0 and rates [s⁻¹] ≥ 0 are finite by construction (|J| [Hz] is a float); the
    values are those of :func:`transfer_amplitudes` operation for operation."""
    return _kernel(tau, np.pi * abs(float(j_hz)), r_from, r_to)


def _branch_transferred_unchecked(tau, j_hz, r_in, r_anti, k: int):
    """``branch_transfer(...).transferred[k]`` for one anti-phase rate shared by every partner, without the
    per-argument validation (τ [s] ≥ 0, rates [s⁻¹] ≥ 0 finite, couplings [Hz] floats; the caller's duty). The
    additive model's floor is still checked. Same values as :func:`branch_transfer`, operation for operation;
    the transferred amplitude is the same for ``"build"`` (``r_in`` in-phase start) and ``"refocus"``."""
    n = len(j_hz)
    floor = r_in + n * np.minimum(r_anti - r_in, 0.0)
    if np.any(floor < 0):
        raise BackboneError(
            "anti-phase rates this far below the in-phase rate give a multiply anti-phase state a negative rate "
            "under the additive relaxation model; it needs R_in + sum_k min(0, R_anti,k - R_in) >= 0"
        )
    zero = np.zeros(())
    diff = r_anti - r_in
    factors = [_kernel_scaled(tau, np.pi * abs(float(j)), zero, diff) for j in j_hz]
    log_total = -r_in * tau
    for _, _, log_m in factors:
        log_total = log_total + log_m
    others = np.exp(log_total)
    for m in range(n):
        if m != k:
            others = others * factors[m][0]
    return others * factors[k][1]


def _cos_unchecked(tau, j_hz):
    """cos(πJτ) of :func:`passive_factor` for one coupling [Hz], without validation (τ [s] finite, ≥ 0)."""
    return np.cos(np.pi * abs(float(j_hz)) * tau)
