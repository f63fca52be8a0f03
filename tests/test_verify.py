"""Checks of the step-algebra verification against textbook product-operator results.

Every expected number below is written inline from the textbook rules, never taken from backbone:
- Sørensen, Eich, Levitt, Bodenhausen & Ernst, Prog. NMR Spectrosc. 16, 163 (1983): rotations of product
  operators under a coupling (Ix -> Ix cos(pi J t) + 2IySz sin(pi J t), and for two couplings the rotations
  one after the other) and under a 180 pulse on the partner (Sz -> -Sz).
- Cavanagh, Fairbrother, Palmer, Rance & Skelton, Protein NMR Spectroscopy, 2nd ed. (2007): INEPT and
  refocused INEPT, N -> CA transfer with two couplings, the CA/CB out-and-back split, multiple-quantum and
  constant-time periods; first-order relaxation of the in-phase/anti-phase pair
  d/dt [a, b] = [[-Ra, -pi J], [pi J, -Rb]] [a, b].
- Vuister & Bax, J. Magn. Reson. 98, 428 (1992): a constant-time period T = 1/J(CA,CB) multiplies by
  cos(pi J T) = -1 (from memory).
- Bax, Griffey & Hawkins, J. Magn. Reson. 55, 301 (1983): heteronuclear multiple-quantum coherence does not
  evolve under the coupling of its own pair (from memory).
The numbers the module reports come from two implementations (the closed forms of backbone.transfer.steps /
evolution and the Liouville propagator of backbone.transfer.reference); the tests below hold both to the
inline formulas and show that a wrong algebra value fails the check.
"""

import json
from dataclasses import dataclass

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy.linalg import expm

from backbone.errors import BackboneError
from backbone.transfer import evolution, reference, steps
from backbone.transfer import verify as v

EXACT = 1e-10  # both implementations are exact for the model; only round-off of expm and sinc remains
# Typical backbone couplings [Hz], signed (Cavanagh et al. 2007, figure of backbone couplings, from memory)
J_NH, J_NCA, J_NCA2, J_CAC, J_CACB, J_CAHA = -92.0, -11.0, -7.0, 55.0, 35.0, 140.0

ALL_KINDS = [
    "inept",
    "refocus",
    "branch-own",
    "branch-preceding",
    "homonuclear",
    "carbon-split-ca",
    "carbon-split-cb",
    "multiple-quantum",
    "constant-time",
    "decoupled-period",
]


def _pair(j_hz, r_start, r_other, t):
    """[start, other] amplitudes of the in-phase/anti-phase pair from [1, 0] (Cavanagh et al. 2007; rotation
    sense of Sørensen et al. 1983), by a matrix exponential written here."""
    w = np.pi * abs(j_hz)
    return expm(np.array([[-r_start, -w], [w, -r_other]]) * t) @ np.array([1.0, 0.0])


def _row(kind, **params):
    return v.verify_kind(kind, **params)


# ---------------------------------------------------------------------------------------------------------
# Every kind passes within the 1 % requirement, with offsets
# ---------------------------------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def default_rows():
    return {r.kind: r for r in v.verify_step_kinds()}


def test_every_step_kind_is_checked_and_passes_within_one_percent(default_rows):
    rows = list(default_rows.values())
    assert [r.kind for r in rows] == ALL_KINDS
    for r in rows:
        assert r.passed is True, r
        assert r.rel_error <= 0.01
        assert r.conditions["tolerance"] == 0.01
        # realistic offsets of several hundred Hz on the spins the period refocuses (common practice)
        assert all(abs(nu) >= 300.0 for nu in r.conditions["offsets_hz"].values())


@pytest.mark.parametrize("kind", ["inept", "refocus", "branch-own", "homonuclear", "carbon-split-cb"])
def test_in_phase_and_anti_phase_rates_differ_where_the_algebra_is_exact(kind, default_rows):
    rates = default_rows[kind].conditions["rates"]
    assert len(set(rates.values())) >= 2


@pytest.mark.parametrize(
    "offsets",
    [
        {"H": 0.0, "N": 0.0, "CA": 0.0, "CA(i-1)": 0.0, "C": 0.0, "CB": 0.0, "HA": 0.0},
        {"H": -3200.0, "N": 1500.0, "CA": -2400.0, "CA(i-1)": 2600.0, "C": -900.0, "CB": 2200.0, "HA": 1200.0},
    ],
    ids=["on-resonance", "far-off-resonance"],
)
def test_checks_pass_on_and_far_off_resonance(offsets):
    # The echoes refocus the offsets (Sørensen et al. 1983: a 180 on the spin reverses its shift evolution).
    for r in v.verify_step_kinds(offsets_hz=offsets):
        assert r.passed, r


# ---------------------------------------------------------------------------------------------------------
# Each row against the textbook formula, written inline
# ---------------------------------------------------------------------------------------------------------


def test_inept_row_matches_the_unequal_rate_pair():
    tau = 1.0 / (2 * abs(J_NH))  # 1/(2J), Cavanagh et al. 2007
    expected = _pair(J_NH, 12.0, 22.0, tau)[1]
    r = _row("inept")
    assert_allclose([r.algebra, r.reference], expected, rtol=EXACT)
    assert r.conditions["delay_s"] == pytest.approx(tau)


def test_inept_equal_rates_give_sin_times_exp():
    tau = 1.0 / (2 * abs(J_NH))
    r = _row("inept", rates={"Nx": 20.0, "2NyHz": 20.0})
    # sin(pi J tau) exp(-R tau), the textbook INEPT build-up (Cavanagh et al. 2007)
    assert_allclose([r.algebra, r.reference], np.sin(np.pi * abs(J_NH) * tau) * np.exp(-20.0 * tau), rtol=EXACT)


def test_inept_row_values_come_from_the_two_implementations():
    tau = 0.0045
    r = _row("inept", delay_s=tau)
    assert_allclose(r.algebra, steps.inept(tau, J_NH, 12.0, 22.0), rtol=1e-15)
    ref = reference.reference_inept(
        J_NH, tau, r_inphase=12.0, r_antiphase=22.0, offset_hz=420.0, partner_offset_hz=1800.0
    )
    # negative J gives a negative anti-phase amplitude in the reference; the algebra uses |J|
    assert_allclose(r.reference, -ref.antiphase, rtol=1e-15)


def test_refocus_row_is_build_up_times_refocusing():
    tau = 1.0 / (2 * abs(J_NH))
    # H: Hx (25) -> 2HyNz (27); N: 2HzNy (22) -> Nx (12); each the pair solution (Cavanagh et al. 2007)
    expected = _pair(J_NH, 25.0, 27.0, tau)[1] * _pair(J_NH, 22.0, 12.0, tau)[1]
    r = _row("refocus")
    assert_allclose([r.algebra, r.reference], expected, rtol=EXACT)
    r2 = _row("refocus", delay_s=0.005, second_delay_s=0.0025)
    expected2 = _pair(J_NH, 25.0, 27.0, 0.005)[1] * _pair(J_NH, 22.0, 12.0, 0.0025)[1]
    assert_allclose([r2.algebra, r2.reference], expected2, rtol=EXACT)


def _two_coupling_amplitudes(j1, j2, r0, r1, r2, t):
    """Nx under two active couplings, basis [Nx, 2NyS1z, 2NyS2z, 4NxS1zS2z] (Sørensen et al. 1983 rotations:
    Nx -> 2NyS1z, 2NyS1z -> -4NxS1zS2z under J2, 2NyS2z -> -4NxS1zS2z under J1), additive relaxation of the
    doubly anti-phase term."""
    w1, w2 = np.pi * abs(j1), np.pi * abs(j2)
    rb = r1 + r2 - r0
    gen = np.array(
        [
            [-r0, -w1, -w2, 0.0],
            [w1, -r1, 0.0, -w2],
            [w2, 0.0, -r2, -w1],
            [0.0, w2, w1, -rb],
        ]
    )
    return expm(gen * t) @ np.array([1.0, 0.0, 0.0, 0.0])


def test_branch_rows_match_the_two_coupling_evolution():
    t = 0.024
    amps = _two_coupling_amplitudes(J_NCA, J_NCA2, 12.0, 14.0, 13.5, t)
    own, preceding = _row("branch-own"), _row("branch-preceding")
    assert_allclose([own.algebra, own.reference], amps[1], rtol=EXACT)
    assert_allclose([preceding.algebra, preceding.reference], amps[2], rtol=EXACT)


def test_branch_without_relaxation_is_sin_cos():
    # HNCA: own sin(pi 1J T) cos(pi 2J T), preceding cos(pi 1J T) sin(pi 2J T) (Cavanagh et al. 2007)
    t = 0.0314
    no_relax = {"Nx": 0.0, "2NyCAz": 0.0, "2NyCA(i-1)z": 0.0}
    own = _row("branch-own", rates=no_relax, delay_s=t)
    pre = _row("branch-preceding", rates=no_relax, delay_s=t)
    s1, c1 = np.sin(np.pi * 11.0 * t), np.cos(np.pi * 11.0 * t)
    s2, c2 = np.sin(np.pi * 7.0 * t), np.cos(np.pi * 7.0 * t)
    assert_allclose([own.algebra, own.reference], s1 * c2, rtol=EXACT)
    assert_allclose([pre.algebra, pre.reference], c1 * s2, rtol=EXACT)


def test_homonuclear_row_is_active_pair_times_passive_cosine():
    tau = 0.007
    # active CA-C' pair with rates 30/32, passive CA-CB evolving: cos(pi Jp tau) (Sørensen et al. 1983)
    expected = _pair(J_CAC, 30.0, 32.0, tau)[1] * np.cos(np.pi * J_CACB * tau)
    r = _row("homonuclear", delay_s=tau)
    assert_allclose([r.algebra, r.reference], expected, rtol=EXACT)


def test_homonuclear_default_delay_maximizes_sin_cos():
    # without relaxation the transfer is sin(pi Ja tau) cos(pi Jp tau) (Cavanagh et al. 2007); its first
    # maximum found here on a dense grid
    grid = np.linspace(1e-5, 1.0 / (2 * J_CAC), 400001)
    best = grid[np.argmax(np.sin(np.pi * J_CAC * grid) * np.cos(np.pi * J_CACB * grid))]
    r = _row("homonuclear")
    assert r.conditions["delay_s"] == pytest.approx(best, abs=2e-8)
    assert r.passed


def test_homonuclear_passive_cosine_needs_equal_passive_anti_phase_rate():
    # With the term anti-phase to CB relaxing faster than the in-phase one, the passive factor is no longer
    # cos(pi Jp tau): it becomes the in-phase amplitude of the (Jp; 0, extra) pair (Cavanagh et al. 2007).
    tau = 0.007
    r = _row("homonuclear", r_passive_antiphase=60.0, delay_s=tau)
    expected = _pair(J_CAC, 30.0, 32.0, tau)[1] * _pair(J_CACB, 0.0, 30.0, tau)[0]
    assert_allclose(r.reference, expected, rtol=EXACT)
    assert r.passed is False


def test_carbon_split_rows_are_cos_squared_and_minus_sin_squared():
    tau = 1.0 / (4 * J_CACB)  # equal CA and CB pathways without relaxation (common practice)
    a, b = _pair(J_CACB, 30.0, 33.0, tau)
    ca, cb = _row("carbon-split-ca"), _row("carbon-split-cb")
    assert_allclose(ca.algebra, a * a, rtol=EXACT)
    assert_allclose(cb.algebra, -(b * b), rtol=EXACT)
    # the reference also carries the refocused CA-C' coupling, whose anti-phase term relaxes 2 s^-1 faster
    # during the echoes: a small extra loss the algebra neglects
    assert_allclose(ca.reference, a * a, rtol=5e-3)
    assert_allclose(cb.reference, -(b * b), rtol=5e-3)
    assert cb.reference < 0 < ca.reference


def test_carbon_split_refocused_coupling_costs_nothing_when_its_anti_phase_rate_equals_in_phase():
    tau = 1.0 / (4 * J_CACB)
    a, b = _pair(J_CACB, 30.0, 33.0, tau)
    ca = _row("carbon-split-ca", rates={"2CAyCz": 30.0})
    cb = _row("carbon-split-cb", rates={"2CAyCz": 30.0})
    assert_allclose([ca.reference, cb.reference], [a * a, -(b * b)], rtol=EXACT)


def test_multiple_quantum_row_is_exp_times_passive_cosine():
    t = 0.010
    # MQ does not evolve under its own 1J(CA,HA); the passive CA-CB gives cos(pi J t) (Bax et al. 1983)
    expected = np.exp(-40.0 * t) * np.cos(np.pi * J_CACB * t)
    r = _row("multiple-quantum")
    assert_allclose([r.algebra, r.reference], expected, rtol=EXACT)
    assert r.conditions["j_hz"]["1J(CA,HA)"] == J_CAHA


def test_constant_time_row_is_minus_exp_at_one_over_j():
    total = 1.0 / J_CACB
    # cos(pi J T) = -1 at T = 1/J (Vuister & Bax 1992), decay exp(-R T) independent of t1
    expected = -np.exp(-30.0 * total)
    for t1 in (0.0, total / 3.0, total):
        r = _row("constant-time", evolution_s=t1)
        assert_allclose([r.algebra, r.reference], expected, rtol=EXACT)


def _proton_pulse_train(j_hz, r_in, r_anti, t, n):
    """Nx after n segments (d/2 - 180(H) - d/2), d = t/n, in the basis [Nx, 2NyHz]; the 180 on H inverts Hz,
    i.e. diag(1, -1) (Sørensen et al. 1983). N offsets commute with all of it and are left out."""
    w = np.pi * j_hz
    half = expm(np.array([[-r_in, -w], [w, -r_anti]]) * (t / n / 2.0))
    segment = half @ np.diag([1.0, -1.0]) @ half
    return (np.linalg.matrix_power(segment, n) @ np.array([1.0, 0.0]))[0]


def test_decoupled_period_with_pulses_every_one_over_j_decays_at_the_mean_rate():
    t = 2.0 / abs(J_NH)
    r = _row("decoupled-period")
    assert r.conditions["n_pulses"] == 2
    assert r.conditions["pulse_spacing_s"] == pytest.approx(1.0 / abs(J_NH))
    # the algebra's rule: exp(-t (R_in + R_anti)/2) (common practice; Cavanagh et al. 2007, from memory)
    assert_allclose(r.algebra, np.exp(-t * (12.0 + 22.0) / 2.0), rtol=EXACT)
    assert_allclose(r.reference, _proton_pulse_train(J_NH, 12.0, 22.0, t, 2), rtol=EXACT)
    assert r.rel_error < 1e-4


def test_dense_proton_pulses_keep_the_coherence_in_phase():
    # Pulses much closer than 1/J suppress the coupling: Nx stays in-phase and decays at R(Nx), not at the
    # mean (Sørensen et al. 1983 rotations; the limit of ideal decoupling). The check shows the difference.
    t = 2.0 / abs(J_NH)
    r = _row("decoupled-period", n_pulses=64)
    assert_allclose(r.reference, _proton_pulse_train(J_NH, 12.0, 22.0, t, 64), rtol=EXACT)
    assert_allclose(r.reference, np.exp(-12.0 * t), rtol=1e-3)
    assert r.passed is False


@settings(max_examples=15, deadline=None)
@given(
    r_in=st.floats(5.0, 60.0),
    r_anti=st.floats(5.0, 60.0),
    nu_n=st.floats(-3000.0, 3000.0),
    nu_h=st.floats(-4000.0, 4000.0),
    tau=st.floats(0.002, 0.008),
)
def test_inept_and_refocus_agree_for_any_rates_and_offsets(r_in, r_anti, nu_n, nu_h, tau):
    # Over the rate range of proteins (5-60 s^-1) the algebra is exact for the pair (Cavanagh et al. 2007).
    rates = {"Nx": r_in, "2NyHz": r_anti, "Hx": r_anti, "2HyNz": r_in}
    offsets = {"N": nu_n, "H": nu_h}
    for kind in ("inept", "refocus"):
        r = _row(kind, rates=rates, offsets_hz=offsets, delay_s=tau, tolerance=1e-9)
        assert r.passed, r


# ---------------------------------------------------------------------------------------------------------
# The check can fail
# ---------------------------------------------------------------------------------------------------------


def test_equal_rate_inept_used_for_unequal_rates_fails(monkeypatch):
    def equal_rate_inept(tau, j_hz, r_inphase, r_antiphase=None, *, passive_hz=()):
        return np.sin(np.pi * abs(j_hz) * tau) * np.exp(-r_inphase * tau)  # ignores the anti-phase rate

    monkeypatch.setattr(steps, "inept", equal_rate_inept)
    r = _row("inept", rates={"Nx": 5.0, "2NyHz": 60.0})
    assert r.passed is False
    tau = 1.0 / (2 * abs(J_NH))
    assert_allclose(r.reference, _pair(J_NH, 5.0, 60.0, tau)[1], rtol=EXACT)  # the reference is untouched
    assert r.rel_error > 0.1


def test_a_missing_passive_factor_fails(monkeypatch):
    original = steps.homonuclear_transfer

    def without_passive(tau, j, r_from, r_to, *, passive_hz=(), direction="build"):
        return original(tau, j, r_from, r_to, direction=direction)

    monkeypatch.setattr(steps, "homonuclear_transfer", without_passive)
    assert _row("homonuclear").passed is False


def test_in_phase_rate_rule_for_the_pulse_train_of_the_default_period_fails(monkeypatch):
    monkeypatch.setattr(evolution, "decoupled_rate", lambda r_in, r_anti: r_in)
    assert _row("decoupled-period").passed is False


def test_tolerance_decides():
    r = _row("carbon-split-ca")
    assert _row("carbon-split-ca", tolerance=r.rel_error * 0.5).passed is False
    assert _row("carbon-split-ca", tolerance=r.rel_error * 2.0).passed is True


# ---------------------------------------------------------------------------------------------------------
# Overrides
# ---------------------------------------------------------------------------------------------------------


def test_overrides_reach_the_check():
    r = _row("inept", j={"1J(N,H)": -94.0}, offsets_hz={"N": -800.0}, rates={"Nx": 8.0})
    assert r.conditions["j_hz"] == {"1J(N,H)": -94.0}
    assert r.conditions["delay_s"] == pytest.approx(1.0 / 188.0)  # default 1/(2|J|) follows J
    assert r.conditions["offsets_hz"]["N"] == -800.0
    assert_allclose(r.reference, _pair(94.0, 8.0, 22.0, 1.0 / 188.0)[1], rtol=EXACT)


def test_verify_step_kinds_passes_overrides_to_every_check():
    rows = v.verify_step_kinds(j={"1J(CA,CB)": 38.0}, tolerance=0.02)
    by_kind = {r.kind: r for r in rows}
    for kind in ("homonuclear", "carbon-split-ca", "multiple-quantum", "constant-time"):
        assert by_kind[kind].conditions["j_hz"]["1J(CA,CB)"] == 38.0
        assert by_kind[kind].conditions["tolerance"] == 0.02


# ---------------------------------------------------------------------------------------------------------
# Experiment models (duck-typed stand-in)
# ---------------------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class _Step:
    """Stand-in with the attribute names of backbone.experiments.model.Step that verify reads."""

    kind: str
    name: str
    active: tuple = ()
    passive: tuple = ()
    decoupled: tuple = ()
    delay_s: float | None = None
    mode: str | None = None
    t_max_s: float | None = None


@dataclass(frozen=True)
class _Model:
    steps: tuple


@dataclass(frozen=True)
class _Coupling:
    j_hz: float


_STAND_IN = _Model(
    (
        _Step("inept", "H to N", ("1J(N,H)",), ("3J(H,HA)",), delay_s=0.0054),
        _Step("transfer", "N to CA", (-11.5, -7.5), decoupled=("1J(N,H)",), delay_s=0.022),
        _Step("shift-evolution", "CA t1", mode="real-time", t_max_s=0.008),
        _Step("shift-evolution", "CA constant time", passive=(_Coupling(36.0),), delay_s=0.0278, mode="constant-time"),
        _Step("transfer", "CA to C'", ("1J(CA,C)",), ("1J(CA,CB)",), delay_s=0.0065),
        _Step("transfer", "N to C'", ("1J(N,C)",), delay_s=0.030),
        _Step("inept", "HA and HB to CA and CB", ("1J(CA,HA)", "1J(CB,HB)")),
        _Step("carbon-split", "CA to CB", ("1J(CA,CB)",), delay_s=0.0071),
        _Step("multiple-quantum", "CA-HA MQ", (140.0,), (35.0,), delay_s=0.008),
        _Step("refocus", "N to H", ("1J(N,H)",), ("3J(H,HA)",), delay_s=0.0054),
        _Step("sensitivity-enhancement", "second component"),
        _Step("detect", "HN acquisition"),
        _Step("spin-lock", "something new"),
    )
)


@pytest.fixture(scope="module")
def stand_in_rows():
    return v.verify_experiment(_STAND_IN)


def test_verify_experiment_maps_every_step_kind(stand_in_rows):
    rows = stand_in_rows
    assert [r.kind for r in rows] == [
        "homonuclear",
        "branch-own",
        "branch-preceding",
        "decoupled-period",
        "shift-evolution",
        "constant-time",
        "homonuclear",
        "inept",
        "inept",
        "inept",
        "carbon-split-ca",
        "carbon-split-cb",
        "multiple-quantum",
        "refocus",
        "sensitivity-enhancement",
        "detect",
        "spin-lock",
    ]
    unchecked = [r for r in rows if r.passed is None]
    assert [r.conditions["step"] for r in unchecked] == ["CA t1", "second component", "HN acquisition", "something new"]
    for r in unchecked[:3]:
        assert r.conditions["reason"] == "no propagator check: closed-form sampling factor"
        assert np.isnan(r.algebra) and np.isnan(r.reference)
    assert "spin-lock" in unchecked[3].conditions["reason"]
    assert all(r.passed for r in rows if r.passed is not None)


def test_verify_experiment_uses_the_step_couplings_and_delays(stand_in_rows):
    rows = {r.conditions["step"] + "/" + r.kind: r for r in stand_in_rows}
    own = rows["N to CA/branch-own"]
    assert own.conditions["j_hz"] == {"1J(N,CA)": -11.5, "2J(N,CA(i-1))": -7.5}
    assert own.conditions["delay_s"] == 0.022
    assert own.description.startswith("N to CA: ")
    ct = rows["CA constant time/constant-time"]
    # exp(-R T) cos(pi J T) at the step's values (Vuister & Bax 1992)
    assert_allclose(ct.reference, np.exp(-30.0 * 0.0278) * np.cos(np.pi * 36.0 * 0.0278), rtol=EXACT)
    # 1J(N,C) = -15 Hz (typical value of the coupling table; Cavanagh et al. 2007) over the step's 30 ms
    nc = rows["N to C'/inept"]
    assert nc.conditions["j_hz"] == {"1J(N,C)": -15.0}
    assert_allclose(nc.reference, _pair(15.0, 12.0, 22.0, 0.030)[1], rtol=EXACT)
    homo = rows["CA to C'/homonuclear"]
    assert_allclose(homo.reference, _pair(55.0, 30.0, 32.0, 0.0065)[1] * np.cos(np.pi * 35.0 * 0.0065), rtol=EXACT)
    # an INEPT with a passive coupling goes to the passive-coupling check: 3J(H,HA) about 7 Hz (common
    # practice, from memory) gives cos(pi 3J tau) on the H -> N build-up (Sørensen et al. 1983)
    hn = rows["H to N/homonuclear"]
    assert hn.conditions["j_hz"] == {"1J(N,H)": -92.0, "3J(H,HA)": 7.0}
    expected = _pair(92.0, 30.0, 32.0, 0.0054)[1] * np.cos(np.pi * 7.0 * 0.0054)
    assert_allclose(hn.reference, expected, rtol=EXACT)
    refocus = rows["N to H/refocus"]
    assert refocus.conditions["couplings_not_in_check"] == ["3J(H,HA)"]


def test_element_wise_couplings_are_checked_one_by_one(stand_in_rows):
    rows = [r for r in stand_in_rows if r.conditions["step"] == "HA and HB to CA and CB"]
    assert [r.conditions["j_hz"] for r in rows] == [{"1J(CA,HA)": 140.0}, {"1J(CB,HB)": 130.0}]
    for r, j in zip(rows, (140.0, 130.0)):
        assert_allclose(r.reference, _pair(j, 12.0, 22.0, 1.0 / (2 * j))[1], rtol=EXACT)


try:  # the bundled experiment models, when their package is importable
    from backbone.experiments.model import registered_experiments

    _REGISTERED = registered_experiments()
except (ImportError, BackboneError):  # pragma: no cover - the models are developed alongside
    _REGISTERED = {}


@pytest.mark.parametrize("name", sorted(_REGISTERED))
def test_every_registered_experiment_verifies(name):
    model = _REGISTERED[name]
    rows = v.verify_experiment(model)
    assert {r.conditions["step"] for r in rows} == {s.name for s in model.steps}
    checked = [r for r in rows if r.passed is not None]
    assert checked and all(r.passed for r in checked)
    for r in rows:
        if r.passed is None:
            assert r.conditions["reason"] == "no propagator check: closed-form sampling factor"


def test_verify_experiment_errors_name_the_step():
    with pytest.raises(BackboneError, match="no iterable 'steps'"):
        v.verify_experiment(object())
    bad = _Model((_Step("inept", "broken INEPT", (-92.0,), delay_s=-0.001),))
    with pytest.raises(BackboneError, match="broken INEPT"):
        v.verify_experiment(bad)
    with pytest.raises(BackboneError, match="tolerance"):
        v.verify_experiment(_STAND_IN, tolerance=0.0)
    unknown = _Model((_Step("transfer", "odd transfer", ("1J(N,X)",)),))
    with pytest.raises(BackboneError, match="odd transfer.*coupling '1J\\(N,X\\)' is unknown"):
        v.verify_experiment(unknown)
    not_a_number = _Model((_Step("inept", "typo", ("fast",)),))
    with pytest.raises(BackboneError, match="typo"):
        v.verify_experiment(not_a_number)


# ---------------------------------------------------------------------------------------------------------
# Table
# ---------------------------------------------------------------------------------------------------------


def test_format_verify_table_lists_every_row_and_a_summary(capsys, stand_in_rows):
    rows = stand_in_rows + [_row("decoupled-period", n_pulses=64)]
    text = v.format_verify_table(rows)
    assert capsys.readouterr().out == ""  # a pure string function
    lines = text.splitlines()
    assert lines[0].split()[:5] == ["kind", "algebra", "reference", "rel.", "error"]
    body = lines[2:-2]
    assert len(body) == len(rows)
    for line, r in zip(body, rows):
        assert line.startswith(r.kind)
        assert ("n/a" if r.passed is None else "pass" if r.passed else "FAIL") in line
    assert lines[-1] == "13 of 14 checks passed, 1 failed; 4 step(s) without a propagator check"


def test_conditions_are_json_ready(default_rows, stand_in_rows):
    # the CLI's --json output carries them unchanged (project output contract)
    rows = list(default_rows.values()) + stand_in_rows
    decoded = json.loads(json.dumps([r.conditions for r in rows]))
    assert decoded[0]["j_hz"] == {"1J(N,H)": J_NH}


# ---------------------------------------------------------------------------------------------------------
# Errors a user can cause
# ---------------------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("kind", "params", "match"),
    [
        ("hsqc", {}, "step kind 'hsqc' is unknown"),
        (None, {}, "unknown"),
        ("inept", {"j": {"1J(N,Q)": 5.0}}, "coupling '1J\\(N,Q\\)' is unknown"),
        ("inept", {"j": {"1J(N,H)": "x"}}, "must be a number"),
        ("inept", {"j": {"1J(N,H)": 0.0}}, "non-zero coupling"),
        ("carbon-split-ca", {"j": {"1J(CA,CB)": 0.0}}, "non-zero coupling"),
        ("constant-time", {"j": {"1J(CA,CB)": 0.0}}, "non-zero coupling"),
        ("inept", {"rates": {"Nz": 1.0}}, "rate 'Nz' is unknown"),
        ("inept", {"rates": {"Nx": -1.0}}, "must be >= 0"),
        ("inept", {"rates": {"Nx": float("nan")}}, "must be finite"),
        ("inept", {"rates": [("Nx", 1.0)]}, "must be a mapping"),
        ("inept", {"offsets_hz": {"Q": 1.0}}, "offset of spin 'Q' is unknown"),
        ("inept", {"delay_s": 0.0}, "delay_s = 0 s: must be > 0"),
        ("inept", {"delay_s": -1e-3}, "must be > 0"),
        ("inept", {"tolerance": 0.0}, "tolerance"),
        ("inept", {"tolerance": float("nan")}, "tolerance"),
        ("inept", {"n_pulses": 4}, "unknown parameter 'n_pulses'.*takes none"),
        ("refocus", {"evolution_s": 0.01}, "options of 'refocus' are second_delay_s"),
        ("refocus", {"second_delay_s": -0.001}, "second_delay_s"),
        ("decoupled-period", {"n_pulses": 0}, "n_pulses must be an integer >= 1"),
        ("decoupled-period", {"n_pulses": 2.5}, "n_pulses must be an integer >= 1"),
        ("decoupled-period", {"n_pulses": True}, "n_pulses must be an integer >= 1"),
        ("constant-time", {"evolution_s": 0.05}, "must lie in \\[0, T\\]"),
        ("constant-time", {"evolution_s": "soon"}, "evolution_s"),
        ("homonuclear", {"r_passive_antiphase": -2.0}, "r_passive_antiphase"),
        ("multiple-quantum", {"r_passive_antiphase": "fast"}, "r_passive_antiphase"),
    ],
)
def test_bad_parameters_raise(kind, params, match):
    with pytest.raises(BackboneError, match=match):
        v.verify_kind(kind, **params)


def test_rates_the_additive_model_cannot_take_raise():
    # anti-phase rates far below the in-phase rate make the additive doubly anti-phase rate negative
    with pytest.raises(BackboneError, match="must be >= 0"):
        v.verify_kind("carbon-split-cb", rates={"CAx": 30.0, "2CAyCBz": 0.0, "2CAyCz": 0.0})
