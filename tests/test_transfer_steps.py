"""Coherence-transfer periods checked against the product-operator rules and matrix exponentials.

Independent references used here: the textbook INEPT and HNCA transfer functions written inline, and the
relaxing product-operator equations of motion (rotation rules of Sørensen, Eich, Levitt, Bodenhausen & Ernst,
Prog. NMR Spectrosc. 16, 163, 1983, plus first-order relaxation) integrated by scipy.linalg.expm.
"""

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy.linalg import expm

from backbone.errors import BackboneError
from backbone.transfer import (
    branch_transfer,
    cacb_split,
    homonuclear_transfer,
    inept,
    multiple_quantum,
    passive_factor,
    refocused_inept,
    transfer_amplitudes,
)

TAU = np.linspace(0.0, 0.08, 41)[:, None]  # s
RATES = np.array([0.0, 3.0, 20.0, 150.0])[None, :]  # s^-1

# Typical backbone couplings [Hz] (magnitudes): Cavanagh, Fairbrother, Palmer, Rance & Skelton, Protein NMR
# Spectroscopy, 2nd ed. (2007); Sattler, Schleucher & Griesinger, Prog. NMR Spectrosc. 34, 93 (1999)
# (from memory).
J_NH, J_NC, J_NCA, J_NCA2, J_CAC, J_CACB = 92.0, 15.0, 11.0, 7.0, 55.0, 35.0


def _two_by_two(t, j, ra, rb, start=0):
    """Amplitudes from expm of d/dt[a, b] = [[-Ra, -pi J], [pi J, -Rb]][a, b] (Sørensen et al. 1983)."""
    w = np.pi * j
    gen = np.array([[-ra, -w], [w, -rb]])
    v0 = np.zeros(2)
    v0[start] = 1.0
    return expm(gen * t) @ v0


# ---------------------------------------------------------------------------------------------------------
# One active coupling
# ---------------------------------------------------------------------------------------------------------


def test_equal_rates_give_textbook_inept():
    # Equal rates: sin(pi J tau) exp(-R tau) and cos(pi J tau) exp(-R tau) (Cavanagh et al. 2007; Sørensen
    # et al. 1983).
    a, b = transfer_amplitudes(TAU, J_NH, RATES, RATES)
    assert a.shape == b.shape == (41, 4)
    assert_allclose(b, np.sin(np.pi * J_NH * TAU) * np.exp(-RATES * TAU), rtol=1e-12, atol=1e-15)
    assert_allclose(a, np.cos(np.pi * J_NH * TAU) * np.exp(-RATES * TAU), rtol=1e-12, atol=1e-15)
    assert_allclose(inept(TAU, J_NH, RATES), np.sin(np.pi * J_NH * TAU) * np.exp(-RATES * TAU), atol=1e-15)


def test_no_relaxation_optimum_is_full_transfer():
    # INEPT at tau = 1/(2J) transfers everything (Morris & Freeman, JACS 101, 760, 1979, from memory).
    assert_allclose(inept(1.0 / (2.0 * J_NH), J_NH, 0.0), 1.0, rtol=1e-14)


@pytest.mark.parametrize(
    "j, ra, rb",
    [
        (92.0, 5.0, 40.0),  # underdamped, typical 15N in-phase vs anti-phase
        (15.0, 10.0, 200.0),  # overdamped: |Ra - Rb|/2 > pi J
        (15.0, 200.0, 10.0),  # overdamped, reversed
        (11.0, 0.0, 2.0 * np.pi * 11.0),  # critical: |Ra - Rb|/2 = pi J exactly
        (7.0, 30.0, 30.0 + 2.0 * np.pi * 7.0 * (1 + 1e-9)),  # just past critical
        (7.0, 30.0, 30.0 + 2.0 * np.pi * 7.0 * (1 - 1e-9)),  # just before critical
        (0.0, 12.0, 50.0),  # no coupling
        (55.0, 0.0, 0.0),
        (35.0, 900.0, 3.0),
    ],
)
def test_unequal_rates_match_matrix_exponential(j, ra, rb):
    taus = np.linspace(0.0, 0.1, 23)
    a, b = transfer_amplitudes(taus, j, ra, rb)
    ref = np.array([_two_by_two(t, j, ra, rb) for t in taus])
    assert_allclose(a, ref[:, 0], rtol=1e-10, atol=1e-13)
    assert_allclose(b, ref[:, 1], rtol=1e-10, atol=1e-13)


def test_refocusing_matches_matrix_exponential_from_antiphase():
    # Anti-phase start: 2IySz -> Ix gets -sin (Sørensen et al. 1983); the step reports the magnitude.
    taus = np.linspace(0.0, 0.06, 13)
    r_anti, r_in = 35.0, 8.0
    got = refocused_inept(taus, J_NH, r_anti, r_in)
    ref = np.array([_two_by_two(t, J_NH, r_in, r_anti, start=1) for t in taus])
    assert_allclose(got, -ref[:, 0], rtol=1e-10, atol=1e-13)
    a, _ = transfer_amplitudes(taus, J_NH, r_anti, r_in, direction="refocus")
    assert_allclose(a, ref[:, 1], rtol=1e-10, atol=1e-13)


def test_passive_couplings_multiply_by_cosines():
    # Passive couplings commute in the weak-coupling limit: factor prod cos(pi J_p tau) (Sørensen et al. 1983).
    tau = np.linspace(0.0, 0.05, 11)
    a, b = transfer_amplitudes(tau, J_NCA, 10.0, 10.0, passive_hz=(J_NCA2, 3.0))
    cosines = np.cos(np.pi * J_NCA2 * tau) * np.cos(np.pi * 3.0 * tau)
    assert_allclose(b, np.sin(np.pi * J_NCA * tau) * np.exp(-10.0 * tau) * cosines, atol=1e-15)
    assert_allclose(a, np.cos(np.pi * J_NCA * tau) * np.exp(-10.0 * tau) * cosines, atol=1e-15)
    # A bare number is one coupling, an array is read along its first axis.
    assert_allclose(passive_factor(tau, 7.0), np.cos(np.pi * 7.0 * tau), atol=1e-15)
    assert_allclose(passive_factor(tau, np.array([7.0, 3.0])), cosines, atol=1e-15)
    assert_allclose(passive_factor(tau), 1.0)


def test_sign_of_coupling_does_not_matter():
    # Architecture convention: transfer functions use |J| (1J(N,H) is stored negative).
    assert_allclose(inept(TAU, -J_NH, RATES, 2 * RATES), inept(TAU, J_NH, RATES, 2 * RATES))


def test_broadcasting_over_grids():
    tau = np.linspace(0, 0.03, 5)[:, None, None]
    j = np.array([11.0, 15.0])[None, :, None]
    r = np.array([1.0, 10.0, 30.0])[None, None, :]
    a, b = transfer_amplitudes(tau, j, r, 2 * r, passive_hz=(np.array([7.0, 0.0])[None, :, None],))
    assert a.shape == b.shape == (5, 2, 3)


# ---------------------------------------------------------------------------------------------------------
# Several partners
# ---------------------------------------------------------------------------------------------------------


def test_hnca_branches_are_textbook_functions():
    # HNCA N -> CA(i), CA(i-1): own sin(pi 1J T) cos(pi 2J T) e^(-RT), preceding sin(pi 2J T) cos(pi 1J T)
    # e^(-RT) (Cavanagh et al. 2007; Sattler et al. 1999).
    T = np.linspace(0.0, 0.06, 31)[:, None]
    r = np.array([0.0, 10.0, 20.0])[None, :]
    res = branch_transfer(T, (J_NCA, J_NCA2), r, r)
    own = np.sin(np.pi * J_NCA * T) * np.cos(np.pi * J_NCA2 * T) * np.exp(-r * T)
    preceding = np.sin(np.pi * J_NCA2 * T) * np.cos(np.pi * J_NCA * T) * np.exp(-r * T)
    assert res.transferred.shape == (2, 31, 3)
    assert_allclose(res.transferred[0], own, atol=1e-14)
    assert_allclose(res.transferred[1], preceding, atol=1e-14)
    assert_allclose(res.remaining, np.cos(np.pi * J_NCA * T) * np.cos(np.pi * J_NCA2 * T) * np.exp(-r * T), atol=1e-14)


def test_three_partners_equal_rates():
    # Each branch: sin(pi J_k T) prod_{m != k} cos(pi J_m T) (Sørensen et al. 1983).
    T = np.linspace(0.0, 0.04, 9)
    js = (11.0, 7.0, 4.0)
    res = branch_transfer(T, js, 5.0, 5.0)
    for k in range(3):
        expect = np.sin(np.pi * js[k] * T) * np.exp(-5.0 * T)
        for m in range(3):
            if m != k:
                expect = expect * np.cos(np.pi * js[m] * T)
        assert_allclose(res.transferred[k], expect, atol=1e-14)


def _four_state_generator(w1, w2, r0, r1, r2, r12):
    """Generator on {Nx, 2NyCz1, 2NyCz2, 4NxCz1Cz2} from the product-operator rules (Sørensen et al. 1983).

    Under J1: Nx -> Nx c + 2NyCz1 s and 2NyCz2 -> 2NyCz2 c - 4NxCz1Cz2 s; under J2 likewise with 1 <-> 2.
    """
    return np.array(
        [
            [-r0, -w1, -w2, 0.0],
            [w1, -r1, 0.0, w2],
            [w2, 0.0, -r2, w1],
            [0.0, -w2, -w1, -r12],
        ]
    )


@pytest.mark.parametrize(
    "r0, r1, r2",
    [(8.0, 8.0, 8.0), (6.0, 25.0, 14.0), (40.0, 5.0, 90.0), (2.0, 60.0, 60.0), (20.0, 12.0, 15.0), (1.0, 700.0, 3.0)],
)
def test_two_partners_unequal_rates_match_four_state_expm(r0, r1, r2):
    # Additive model: the doubly anti-phase state relaxes at r1 + r2 - r0.
    T = np.linspace(0.0, 0.07, 15)
    w1, w2 = np.pi * J_NCA, np.pi * J_NCA2
    gen = _four_state_generator(w1, w2, r0, r1, r2, r1 + r2 - r0)
    ref_build = np.array([expm(gen * t)[:, 0] for t in T])
    res = branch_transfer(T, (J_NCA, J_NCA2), r0, (r1, r2))
    assert_allclose(res.remaining, ref_build[:, 0], rtol=1e-10, atol=1e-13)
    assert_allclose(res.transferred[0], ref_build[:, 1], rtol=1e-10, atol=1e-13)
    assert_allclose(res.transferred[1], ref_build[:, 2], rtol=1e-10, atol=1e-13)
    # Refocusing from each branch back to Nx: -sin-type sign in the product-operator rules; magnitudes here.
    back = branch_transfer(T, (J_NCA, J_NCA2), (r1, r2), r0, direction="refocus")
    for k, col in ((0, 1), (1, 2)):
        ref = np.array([expm(gen * t)[:, col] for t in T])
        assert_allclose(back.transferred[k], -ref[:, 0], rtol=1e-10, atol=1e-13)
        assert_allclose(back.remaining[k], ref[:, col], rtol=1e-10, atol=1e-13)


def test_shared_antiphase_rate_and_passive_couplings():
    T = np.linspace(0.0, 0.05, 6)
    res = branch_transfer(T, (J_NCA, J_NCA2), 5.0, 20.0, passive_hz=(3.0,))
    gen = _four_state_generator(np.pi * J_NCA, np.pi * J_NCA2, 5.0, 20.0, 20.0, 35.0)
    ref = np.array([expm(gen * t)[1, 0] * np.cos(np.pi * 3.0 * t) for t in T])
    assert_allclose(res.transferred[0], ref, rtol=1e-10, atol=1e-13)


# ---------------------------------------------------------------------------------------------------------
# Carbon transfers and multiple quantum
# ---------------------------------------------------------------------------------------------------------


def test_homonuclear_transfer_is_the_weak_coupling_algebra():
    # C' -> CA with band-selective pulses behaves as a heteronuclear pair (Sattler et al. 1999).
    taus = np.linspace(0.0, 0.02, 9)
    a, b = homonuclear_transfer(taus, J_CAC, 4.0, 25.0, passive_hz=(J_CACB,))
    ref = np.array([_two_by_two(t, J_CAC, 4.0, 25.0) * np.cos(np.pi * J_CACB * t) for t in taus])
    assert_allclose(np.stack([a, b], axis=1), ref, rtol=1e-10, atol=1e-13)


def test_cacb_split_cos2_sin2():
    # HNCACB out-and-back: CA with cos^2(pi J tau), CB with -sin^2(pi J tau) (Sattler et al. 1999;
    # Wittekind & Mueller, J. Magn. Reson. B 101, 201, 1993, from memory).
    tau = np.linspace(0.0, 0.014, 15)
    ca, cb = cacb_split(tau, J_CACB, 0.0)
    assert_allclose(ca, np.cos(np.pi * J_CACB * tau) ** 2, atol=1e-15)
    assert_allclose(cb, -np.sin(np.pi * J_CACB * tau) ** 2, atol=1e-15)
    # At tau = 1/(4J) the split is even: 1/2 each.
    ca, cb = cacb_split(1.0 / (4.0 * J_CACB), J_CACB, 0.0)
    assert_allclose([ca, cb], [0.5, -0.5], rtol=1e-14)
    # Equal relaxation over both periods: e^(-2 R tau); a passive coupling enters squared.
    ca, cb = cacb_split(tau, J_CACB, 30.0, passive_hz=(J_CAC,))
    common = np.exp(-60.0 * tau) * np.cos(np.pi * J_CAC * tau) ** 2
    assert_allclose(ca, np.cos(np.pi * J_CACB * tau) ** 2 * common, atol=1e-15)
    assert_allclose(cb, -np.sin(np.pi * J_CACB * tau) ** 2 * common, atol=1e-15)
    # One period only: cos and sin.
    ca1, cb1 = cacb_split(tau, J_CACB, 0.0, out_and_back=False)
    assert_allclose([ca1, cb1], [np.cos(np.pi * J_CACB * tau), np.sin(np.pi * J_CACB * tau)], atol=1e-15)


def test_cacb_split_unequal_rates_match_expm():
    tau = np.linspace(0.0, 0.01, 6)
    ca, cb = cacb_split(tau, J_CACB, 20.0, 45.0)
    ref = np.array([_two_by_two(t, J_CACB, 20.0, 45.0) for t in tau])
    assert_allclose(ca, ref[:, 0] ** 2, rtol=1e-10, atol=1e-14)
    assert_allclose(cb, -ref[:, 1] ** 2, rtol=1e-10, atol=1e-14)


def test_multiple_quantum_period():
    # Heteronuclear MQ coherence does not evolve under its own coupling (Bax, Griffey & Hawkins,
    # J. Magn. Reson. 55, 301, 1983, from memory): e^(-R_MQ tau) times passive cosines.
    tau = np.linspace(0.0, 0.03, 7)
    assert_allclose(multiple_quantum(tau, 18.0), np.exp(-18.0 * tau), atol=1e-15)
    assert_allclose(
        multiple_quantum(tau, 18.0, passive_hz=(J_CAC, J_CACB)),
        np.exp(-18.0 * tau) * np.cos(np.pi * J_CAC * tau) * np.cos(np.pi * J_CACB * tau),
        atol=1e-15,
    )


# ---------------------------------------------------------------------------------------------------------
# Properties
# ---------------------------------------------------------------------------------------------------------

_rate = st.floats(0.0, 2000.0)
_j = st.floats(-200.0, 200.0)
_tau = st.floats(0.0, 1.0)


@settings(max_examples=200, deadline=None)
@given(_tau, _j, _rate, _rate, st.lists(_j, max_size=3))
def test_amplitudes_bounded_by_one(tau, j, ra, rb, passive):
    # -diag(R) + antisymmetric coupling part: the propagator is a contraction for R >= 0, so a^2 + b^2 <= 1.
    a, b = transfer_amplitudes(tau, j, ra, rb, passive_hz=tuple(passive))
    assert abs(a) <= 1.0 + 1e-12 and abs(b) <= 1.0 + 1e-12
    assert a * a + b * b <= 1.0 + 1e-12


@settings(max_examples=100, deadline=None)
@given(_tau, st.lists(_j, min_size=1, max_size=3), _rate, st.lists(_rate, min_size=3, max_size=3))
def test_branch_amplitudes_bounded_by_one(tau, js, r_in, r_anti):
    rates = r_anti[: len(js)]
    assume(r_in + sum(min(0.0, r - r_in) for r in rates) >= 0.0)  # every additive rate >= 0
    res = branch_transfer(tau, tuple(js), r_in, tuple(rates))
    total = res.remaining**2 + np.sum(res.transferred**2)
    assert np.all(np.abs(res.transferred) <= 1.0 + 1e-12)
    assert total <= 1.0 + 1e-12


def test_extreme_rates_stay_finite_without_floating_point_warnings():
    # Long periods with fast relaxation and strongly unequal rates: decaying exponentials only, no overflow.
    tau = np.array([0.0, 1e-6, 0.3, 1.0, 5.0])
    with np.errstate(over="raise", invalid="raise", divide="raise"):
        a, b = transfer_amplitudes(tau, 7.0, 2000.0, 0.5)
        res = branch_transfer(tau, (11.0, 7.0, 3.0), 2000.0, (1200.0, 1300.0, 1900.0))
        back = branch_transfer(tau, (11.0, 7.0), (0.0, 2000.0), 1.0, direction="refocus")
    for arr in (a, b, res.remaining, res.transferred, back.remaining, back.transferred):
        assert np.all(np.isfinite(arr)) and np.all(np.abs(arr) <= 1.0)
    ref = np.array([_two_by_two(t, 7.0, 2000.0, 0.5) for t in tau])
    assert_allclose(np.stack([a, b], axis=1), ref, rtol=1e-9, atol=1e-300)


# ---------------------------------------------------------------------------------------------------------
# Errors a user can cause
# ---------------------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "kwargs, match",
    [
        (dict(tau=-0.01), "tau must be >= 0"),
        (dict(r_from=-1.0), "r_from must be >= 0"),
        (dict(r_to=np.array([1.0, -2.0])), "r_to must be >= 0"),
        (dict(j_active_hz=np.nan), "j_active_hz must be finite"),
        (dict(j_active_hz="eleven"), "j_active_hz must be a number"),
        (dict(passive_hz=(7.0, np.inf)), r"passive_hz\[1\] must be finite"),
        (dict(direction="forward"), "direction 'forward'"),
    ],
)
def test_transfer_amplitudes_errors(kwargs, match):
    args = dict(tau=0.01, j_active_hz=15.0, r_from=1.0, r_to=2.0)
    args.update(kwargs)
    direction = args.pop("direction", "build")
    passive = args.pop("passive_hz", ())
    with pytest.raises(BackboneError, match=match):
        transfer_amplitudes(**args, passive_hz=passive, direction=direction)


def test_branch_transfer_errors():
    with pytest.raises(BackboneError, match="2 anti-phase rates for 3 active couplings"):
        branch_transfer(0.02, (11.0, 7.0, 3.0), 5.0, (10.0, 12.0))
    with pytest.raises(BackboneError, match="at least one active coupling"):
        branch_transfer(0.02, (), 5.0, 5.0)
    with pytest.raises(BackboneError, match=r"r_from\[1\] must be >= 0"):
        branch_transfer(0.02, (11.0, 7.0), (3.0, -1.0), 5.0, direction="refocus")
    with pytest.raises(BackboneError, match="direction 'both'"):
        branch_transfer(0.02, (11.0, 7.0), 5.0, 5.0, direction="both")
    with pytest.raises(BackboneError, match="negative rate"):
        # 4NxCz1Cz2 would relax at 10 + 10 - 30 < 0 s^-1.
        branch_transfer(0.02, (11.0, 7.0), 30.0, (10.0, 10.0))
    with pytest.raises(BackboneError, match="r_mq must be >= 0"):
        multiple_quantum(0.01, -3.0)
