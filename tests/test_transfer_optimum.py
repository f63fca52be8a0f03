"""Optimal delays: closed forms against textbook values, the vectorized optimizers against scipy.optimize."""

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy.linalg import expm
from scipy.optimize import minimize, minimize_scalar

from backbone.errors import BackboneError
from backbone.transfer import (
    branch_transfer,
    optimal_delay,
    optimal_delays,
    optimal_inept_delay,
    optimal_transfer_delay,
)

# Couplings [Hz], magnitudes (Sattler, Schleucher & Griesinger, Prog. NMR Spectrosc. 34, 93, 1999, from memory).
J1_NCA, J2_NCA, J_NC = 11.0, 7.0, 15.0


def _hnca_own(T, R):
    # HNCA own peak: sin(pi 1J T) cos(pi 2J T) e^(-RT) (Cavanagh, Fairbrother, Palmer, Rance & Skelton, Protein
    # NMR Spectroscopy, 2nd ed., 2007; Sattler et al. 1999).
    return np.sin(np.pi * J1_NCA * T) * np.cos(np.pi * J2_NCA * T) * np.exp(-R * T)


def _hnca_preceding(T, R):
    # HNCA preceding peak: sin(pi 2J T) cos(pi 1J T) e^(-RT) (same sources).
    return np.sin(np.pi * J2_NCA * T) * np.cos(np.pi * J1_NCA * T) * np.exp(-R * T)


def _scipy_max(f, lo, hi):
    res = minimize_scalar(lambda t: -f(t), bounds=(lo, hi), method="bounded", options={"xatol": 1e-12})
    return res.x, -res.fun


# ---------------------------------------------------------------------------------------------------------
# Closed forms
# ---------------------------------------------------------------------------------------------------------


def test_inept_optimum_without_relaxation_is_half_over_j():
    # tau* = 1/(2J) (Sørensen, Eich, Levitt, Bodenhausen & Ernst, Prog. NMR Spectrosc. 16, 163, 1983).
    j = np.array([7.0, 11.0, 15.0, 35.0, 55.0, -92.0])
    assert_allclose(optimal_inept_delay(j, 0.0), 1.0 / (2.0 * np.abs(j)), rtol=1e-15)


@pytest.mark.parametrize("j, rate", [(92.0, 10.0), (15.0, 20.0), (11.0, 60.0), (55.0, 3.0), (7.0, 400.0)])
def test_inept_optimum_with_relaxation_is_arctan_form(j, rate):
    # tau* = arctan(pi J / R)/(pi J) maximizes sin(pi J tau) e^(-R tau) (Cavanagh et al. 2007); checked by a
    # bounded scalar optimization of the textbook build-up.
    expect = math.atan(math.pi * j / rate) / (math.pi * j)
    assert_allclose(optimal_inept_delay(j, rate), expect, rtol=1e-14)
    x, _ = _scipy_max(lambda t: math.sin(math.pi * j * t) * math.exp(-rate * t), 0.0, 1.0 / (2 * j))
    assert_allclose(optimal_inept_delay(j, rate), x, rtol=1e-7)


def test_hnco_sanity_figures():
    # HNCO, N -> C' with 1J(N,C') = 15 Hz: 33.3, 28.9, 24.8 ms at R = 0, 10, 20 s^-1 (arctan form, Cavanagh
    # et al. 2007; figures of the project's physics notes, recomputed here by minimize_scalar).
    rates = np.array([0.0, 10.0, 20.0])
    got = optimal_inept_delay(J_NC, rates) * 1e3
    assert_allclose(got, [33.3, 28.9, 24.8], atol=0.05)
    for r, g in zip(rates, got):
        x, _ = _scipy_max(lambda t: math.sin(math.pi * J_NC * t) * math.exp(-r * t), 0.0, 0.04)
        assert_allclose(g * 1e-3, x, rtol=1e-7)


def _two_by_two_target(t, j, ra, rb):
    """Target amplitude from expm of [[-Ra, -pi J], [pi J, -Rb]] (Sørensen et al. 1983)."""
    return expm(np.array([[-ra, -np.pi * j], [np.pi * j, -rb]]) * t)[1, 0]


@pytest.mark.parametrize(
    "j, ra, rb",
    [
        (92.0, 5.0, 40.0),
        (15.0, 10.0, 200.0),  # overdamped
        (15.0, 200.0, 10.0),  # overdamped, reversed
        (11.0, 0.0, 2.0 * np.pi * 11.0),  # critical
        (11.0, 30.0, 30.0),  # equal rates
        (7.0, 0.0, 0.0),
    ],
)
def test_unequal_rate_optimum_matches_numerical_maximum(j, ra, rb):
    x, _ = _scipy_max(lambda t: _two_by_two_target(t, j, ra, rb), 0.0, 1.0 / (2.0 * j))
    assert_allclose(optimal_transfer_delay(j, ra, rb), x, rtol=1e-6)


def test_unequal_rate_optimum_reduces_to_arctan_form():
    j = np.array([11.0, 15.0, 92.0])[:, None]
    r = np.array([0.0, 5.0, 50.0])[None, :]
    assert_allclose(optimal_transfer_delay(j, r, r), np.arctan2(np.pi * j, r) / (np.pi * j), rtol=1e-14)


# ---------------------------------------------------------------------------------------------------------
# HNCA sanity figures through the vectorized optimizer
# ---------------------------------------------------------------------------------------------------------


def test_hnca_sanity_figures():
    # 1J = 11 Hz, 2J = 7 Hz: R = 0 -> own optimum 31.4 ms; R = 20 s^-1 -> 23.6 ms (own, value 0.394) and
    # 19.6 ms (preceding, value 0.220) (project physics notes; functions of Cavanagh et al. 2007 and
    # Sattler et al. 1999, cross-checked by minimize_scalar below).
    rates = np.array([0.0, 20.0])
    own = optimal_delay(lambda T: _hnca_own(T, rates), (0.0, 0.06))
    pre = optimal_delay(lambda T: _hnca_preceding(T, rates), (0.0, 0.06))
    assert_allclose(own.tau[0] * 1e3, 31.4, atol=0.05)
    assert_allclose(own.tau[1] * 1e3, 23.6, atol=0.05)
    assert_allclose(own.value[1], 0.394, atol=5e-4)
    assert_allclose(pre.tau[1] * 1e3, 19.6, atol=0.05)
    assert_allclose(pre.value[1], 0.220, atol=5e-4)
    for k, r in enumerate(rates):
        x, v = _scipy_max(lambda t: _hnca_own(t, r), 0.0, 0.06)
        assert_allclose([own.tau[k], own.value[k]], [x, v], rtol=1e-6)
        x, v = _scipy_max(lambda t: _hnca_preceding(t, r), 0.0, 0.045)
        assert_allclose([pre.tau[k], pre.value[k]], [x, v], rtol=1e-6)


def test_hnca_optimum_through_branch_transfer():
    # The same optimum from the step algebra (equal rates): own branch is branch 0.
    res = optimal_delay(lambda T: branch_transfer(T, (J1_NCA, J2_NCA), 20.0, 20.0).transferred[0], (0.0, 0.06))
    x, v = _scipy_max(lambda t: _hnca_own(t, 20.0), 0.0, 0.06)
    assert_allclose([res.tau, res.value], [x, v], rtol=1e-6)


# ---------------------------------------------------------------------------------------------------------
# Vectorized optimizers against scipy, point by point
# ---------------------------------------------------------------------------------------------------------


def test_optimal_delay_matches_minimize_scalar_per_point():
    rates = np.array([0.0, 4.0, 15.0, 35.0, 80.0])[:, None]
    j1 = np.array([9.0, 11.0, 13.0])[None, :]
    res = optimal_delay(
        lambda T: np.sin(np.pi * j1 * T) * np.cos(np.pi * J2_NCA * T) * np.exp(-rates * T), (0.0, 0.05)
    )
    assert res.tau.shape == (5, 3)
    for i, r in enumerate(rates[:, 0]):
        for k, j in enumerate(j1[0]):
            x, v = _scipy_max(
                lambda t: math.sin(math.pi * j * t) * math.cos(math.pi * J2_NCA * t) * math.exp(-r * t), 0.0, 0.05
            )
            assert_allclose(res.tau[i, k], x, rtol=1e-6)
            assert_allclose(res.value[i, k], v, rtol=1e-10)


def test_optimal_delay_with_array_bounds_and_minimize():
    # Bounds per condition; minimizing the negative gives the same point.
    j = np.array([11.0, 15.0, 55.0])
    hi = 1.0 / (2.0 * j)
    res = optimal_delay(lambda t: -np.sin(np.pi * j * t) * np.exp(-12.0 * t), (0.0, hi), maximize=False)
    assert_allclose(res.tau, np.arctan2(np.pi * j, 12.0) / (np.pi * j), rtol=1e-7)
    assert np.all(res.value < 0)


def test_optimum_at_the_bound():
    # sin(pi J t) rises monotonically on [0, 1/(4J)]: the optimum is the upper bound.
    res = optimal_delay(lambda t: np.sin(np.pi * 15.0 * t), (0.0, 1.0 / 60.0))
    assert_allclose(res.tau, 1.0 / 60.0, rtol=1e-8)
    res = optimal_delays(lambda t: np.sin(np.pi * 15.0 * t), [(0.0, 1.0 / 60.0)])
    assert_allclose(res.taus[0], 1.0 / 60.0, rtol=1e-7)


def test_joint_optimum_separable_is_arctan_per_delay():
    # Product of two INEPT build-ups: each delay at its own arctan optimum (Cavanagh et al. 2007).
    rates = np.array([0.0, 10.0, 40.0])
    res = optimal_delays(
        lambda a, b: np.sin(np.pi * 15.0 * a) * np.exp(-rates * a) * np.sin(np.pi * 92.0 * b) * np.exp(-3 * rates * b),
        [(0.0, 0.05), (0.0, 0.01)],
    )
    assert_allclose(res.taus[0], np.arctan2(np.pi * 15.0, rates) / (np.pi * 15.0), rtol=1e-6)
    assert_allclose(res.taus[1], np.arctan2(np.pi * 92.0, 3 * rates) / (np.pi * 92.0), rtol=1e-6)


def test_joint_optimum_three_delays_separable():
    r = np.array([5.0, 25.0])
    js = (15.0, 35.0, 92.0)

    def build_ups(a, b, c):
        out = 1.0
        for j, t in zip(js, (a, b, c)):
            out = out * np.sin(np.pi * j * t) * np.exp(-r * t)
        return out

    res = optimal_delays(build_ups, [(0.0, 0.04), (0.0, 0.02), (0.0, 0.008)])
    for j, t in zip(js, res.taus):
        assert_allclose(t, np.arctan2(np.pi * j, r) / (np.pi * j), rtol=1e-6)


def _coupled(a, b, r):
    # Two transfer delays sharing a passive coupling and relaxation over their sum: not separable.
    return (
        np.sin(np.pi * 15.0 * a)
        * np.sin(np.pi * 35.0 * b)
        * np.cos(np.pi * 7.0 * (a + b))
        * np.exp(-r * (a + b))
    )


def test_joint_optimum_non_separable_matches_scipy_minimize():
    rates = np.array([0.0, 8.0, 30.0])
    res = optimal_delays(lambda a, b: _coupled(a, b, rates), [(0.0, 0.04), (0.0, 0.02)])
    for k, r in enumerate(rates):
        start = [res.taus[0][k] * 1.05, res.taus[1][k] * 0.95]
        ref = minimize(
            lambda x: -_coupled(x[0], x[1], r),
            start,
            method="Nelder-Mead",
            options={"xatol": 1e-12, "fatol": 1e-16, "maxiter": 20000},
        )
        assert_allclose([res.taus[0][k], res.taus[1][k]], ref.x, rtol=1e-6)
        assert_allclose(res.value[k], -ref.fun, rtol=1e-10)


# ---------------------------------------------------------------------------------------------------------
# Errors a user can cause
# ---------------------------------------------------------------------------------------------------------


def test_errors():
    with pytest.raises(BackboneError, match="j_hz must be non-zero"):
        optimal_inept_delay(0.0, 10.0)
    with pytest.raises(BackboneError, match="rate must be >= 0"):
        optimal_inept_delay(15.0, -1.0)
    with pytest.raises(BackboneError, match="r_to must be >= 0"):
        optimal_transfer_delay(15.0, 1.0, -1.0)
    f = lambda t: np.sin(np.pi * 15.0 * t)  # noqa: E731
    with pytest.raises(BackboneError, match="high bound must exceed the low bound"):
        optimal_delay(f, (0.03, 0.01))
    with pytest.raises(BackboneError, match="must be a pair"):
        optimal_delay(f, 0.03)
    with pytest.raises(BackboneError, match="bounds low must be finite"):
        optimal_delay(f, (np.nan, 0.01))
    with pytest.raises(BackboneError, match="n_grid must be an integer >= 3"):
        optimal_delay(f, (0.0, 0.03), n_grid=2)
    with pytest.raises(BackboneError, match="no finite value"):
        optimal_delay(lambda t: np.full(np.shape(t), np.nan), (0.0, 0.03))
    with pytest.raises(BackboneError, match="list of 1 to 4"):
        optimal_delays(lambda *t: t[0], [(0.0, 1.0)] * 5)
    with pytest.raises(BackboneError, match=r"bounds\[0\] must be a pair"):
        optimal_delays(f, (0.0, 0.03))
    with pytest.raises(BackboneError, match=r"bounds\[1\]: the high bound"):
        optimal_delays(lambda a, b: a * b, [(0.0, 1.0), (1.0, 1.0)])


# ---------------------------------------------------------------------------------------------------------
# The log-concave search of the walk's delay objectives
# ---------------------------------------------------------------------------------------------------------


def test_log_concave_search_matches_scipy_on_hnca_own_peak():
    # Private fast path of the walk: the HNCA own-peak build-up (Cavanagh et al. 2007) is a product of
    # log-concave factors on the first lobe (0, 1/(2 x 7 Hz)]; checked against scipy's bounded search.
    from backbone.transfer.optimum import _log_concave_maximum

    rates = np.array([0.0, 5.0, 20.0, 60.0, 150.0])
    got = _log_concave_maximum(lambda t: _hnca_own(t, rates), 0.0, 0.5 / J2_NCA, start=np.full(5, 0.01))
    for r, t in zip(rates, got.tau):
        x, _ = _scipy_max(lambda s: _hnca_own(s, r), 0.0, 0.5 / J2_NCA)
        assert_allclose(t, x, rtol=1e-7)


def test_log_concave_search_finds_a_weakest_peak_crossing():
    # min of two log-concave build-ups is log-concave with a kink at the crossing (Boyd & Vandenberghe,
    # Convex Optimization, 2004, sec. 3.5); the maximum of the HNCA weakest peak at R = 5 s^-1 is where own
    # and preceding peak are equal: recomputed by scipy's root finder on their difference.
    from scipy.optimize import brentq

    from backbone.transfer.optimum import _log_concave_maximum

    r = 5.0
    got = _log_concave_maximum(
        lambda t: np.minimum(_hnca_own(t, r), _hnca_preceding(t, r)), 0.0, 0.5 / J1_NCA, start=0.02
    )
    x, _ = _scipy_max(lambda s: min(_hnca_own(s, r), _hnca_preceding(s, r)), 0.0, 0.5 / J1_NCA)
    assert_allclose(got.tau, x, rtol=1e-7)
    if abs(_hnca_own(x, r) - _hnca_preceding(x, r)) < 1e-6:
        cross = brentq(lambda s: _hnca_own(s, r) - _hnca_preceding(s, r), 0.2 * x, 0.5 / J1_NCA)
        assert_allclose(got.tau, cross, rtol=1e-8)


def _alone_delays():
    from backbone.experiments import registered_experiments, resolve, typical_chain
    from backbone.experiments.walk import TYPICAL_RESIDUE
    from backbone.labeling import load_scheme, registered_schemes
    from backbone.experiments import load_experiment

    cases = []
    for lab in sorted(registered_schemes()):
        scheme = load_scheme(lab)
        for name in registered_experiments():
            model = load_experiment(name)
            resolved = resolve(model, typical_chain(), TYPICAL_RESIDUE, scheme)
            if resolved.feasible:
                cases.append(pytest.param(model, resolved, scheme, id=f"{lab}-{name}"))
    return cases


@pytest.mark.parametrize("model, resolved, scheme", _alone_delays())
def test_walk_delay_objectives_are_log_concave_on_the_first_lobe(model, resolved, scheme):
    # The walk's single-delay searches rely on log-concavity (Boyd & Vandenberghe 2004, sec. 3.5: products and
    # minima of log-concave functions are log-concave; sin(pi J t) e^(-R t), cos(pi J t) and e^(-R t) are on
    # their first lobe). Checked numerically: second differences of log(objective) along each delay, the other
    # delays at their optimum, on a grid of conditions, are <= 0 up to rounding (relative 1e-9 of the values).
    from backbone.experiments import optimize_delays
    from backbone.experiments.delays import delay_bounds, objective_value
    from backbone.experiments.walk import peak_amplitudes
    from backbone.relaxation import relaxation_rates

    rates = relaxation_rates(np.array([3.0, 15.0, 45.0])[:, None] * 1e-9, proton_mhz=np.array([600.0, 950.0]), labeling=scheme)
    choice = optimize_delays(resolved, rates)
    for d, method in choice.methods.items():
        if not method.startswith("alone"):
            continue  # closed forms need no search; joint delays use the grid-started n-D search
        lo, hi = delay_bounds(resolved, d)
        taus = np.linspace(lo, hi, 402)[1:-1].reshape((-1, 1, 1))
        delays = dict(choice.delays)
        delays[d] = taus
        amps = peak_amplitudes(resolved, rates, delays)
        obj = objective_value(amps, choice.objective)
        with np.errstate(divide="ignore"):
            log_obj = np.log(np.where(obj > 0, obj, np.nan))
        second = log_obj[2:] - 2.0 * log_obj[1:-1] + log_obj[:-2]
        ok = np.isfinite(second)
        assert np.all(second[ok] <= 1e-9 * np.abs(log_obj[1:-1][ok]) + 1e-12), f"{model.name} {d}"
