"""Redfield rate expressions against textbook limits and an independent spin-matrix computation.

The spin-matrix reference (``_redfield_rate``) evaluates the semiclassical Redfield double commutator
R(B) = 3 b_a b_b P2(cos theta_ab) sum_m sum_p J(w_p) <B|[A_mp^+, [A_mp, B]]>/<B|B> for interactions written as
H = b sqrt(6) sum_m (-1)^m T_2m C_2,-m(Omega) with isotropic <C_2m(0) C_2m*(t)> = (1/5) P2 exp(-t/tc)
(Abragam 1961, ch. VIII; Goldman, J. Magn. Reson. 60, 437, 1984). T_2m are the standard irreducible spherical
tensor operators, A_mp their pieces at a single Zeeman frequency w_p. The prefactor 3 = 6 (from sqrt(6)^2)
times 1/2 (the one-sided time integral of the correlation function against J, its two-sided transform). Nothing
here is fitted to the functions under test.
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import constants as sc

from backbone.relaxation import terms as t

# Illustrative but realistic values: 600 MHz 1H, 15N partner, tau_c 8 ns.
TAU_C = 8e-9
W_H = 2 * np.pi * 600.13e6
W_N = -2 * np.pi * 60.82e6  # signed: gamma(15N) < 0
W_D = 2 * np.pi * 92.12e6


def j_rigid(w):
    # (2/5) tau/(1 + w^2 tau^2), written out (Abragam 1961).
    return 0.4 * TAU_C / (1 + (np.asarray(w) * TAU_C) ** 2)


def j_flat(w):
    # Extreme narrowing: J independent of frequency (w tau << 1).
    return 0.4 * 1e-12 * np.ones_like(np.asarray(w, dtype=float))


# --------------------------------------------------------------------------------------------------------
# Spin-matrix Redfield reference
# --------------------------------------------------------------------------------------------------------


def _spin(s):
    m = np.arange(s, -s - 1, -1)
    plus = np.zeros((m.size, m.size))
    for k in range(1, m.size):
        plus[k - 1, k] = np.sqrt(s * (s + 1) - m[k] * (m[k] + 1))
    return np.diag(m).astype(complex), plus.astype(complex), plus.T.astype(complex)


def _pair_ops(s_i, s_s):
    zi, pi_, mi = _spin(s_i)
    zs, ps, ms = _spin(s_s)
    ei, es = np.eye(zi.shape[0]), np.eye(zs.shape[0])
    return {
        "Iz": np.kron(zi, es), "Ip": np.kron(pi_, es), "Im": np.kron(mi, es),
        "Sz": np.kron(ei, zs), "Sp": np.kron(ei, ps), "Sm": np.kron(ei, ms),
    }  # fmt: skip


def _dipolar_pieces(o, wi, ws):
    """(m, frequency, operator) pieces of the rank-2 tensor T_2m(I, S)."""
    iz, ip, im, sz, sp, sm = (o[k] for k in ("Iz", "Ip", "Im", "Sz", "Sp", "Sm"))
    r6 = 1 / np.sqrt(6)
    return [
        (0, 0.0, r6 * 2 * iz @ sz),
        (0, wi - ws, -r6 * 0.5 * ip @ sm),
        (0, ws - wi, -r6 * 0.5 * im @ sp),
        (1, wi, -0.5 * ip @ sz),
        (1, ws, -0.5 * iz @ sp),
        (-1, -wi, 0.5 * im @ sz),
        (-1, -ws, 0.5 * iz @ sm),
        (2, wi + ws, 0.5 * ip @ sp),
        (-2, -wi - ws, 0.5 * im @ sm),
    ]


def _csa_pieces(o, spin, w):
    """Pieces of T_2m(I, B0 direction): the CSA of ``spin`` ("I" or "S")."""
    z, p, m = o[spin + "z"], o[spin + "p"], o[spin + "m"]
    return [(0, 0.0, 2 / np.sqrt(6) * z), (1, w, -0.5 * p), (-1, -w, 0.5 * m)]


def _comm(a, b):
    return a @ b - b @ a


def _redfield_rate(b_op, c_op, interactions, j):
    """Relaxation matrix element <B|Gamma|C>/sqrt(<B|B><C|C>) from a list of (b, pieces, axis) interactions."""
    norm = np.sqrt(np.trace(b_op.conj().T @ b_op).real * np.trace(c_op.conj().T @ c_op).real)
    total = 0.0
    for b1, pieces1, axis1 in interactions:
        for b2, pieces2, axis2 in interactions:
            p2 = 1.5 * np.dot(axis1, axis2) ** 2 - 0.5
            for m1, w1, a1 in pieces1:
                for m2, w2, a2 in pieces2:
                    if m1 != m2 or not np.isclose(w1, w2, rtol=0, atol=1.0):
                        continue
                    dc = np.trace(b_op.conj().T @ _comm(a2.conj().T, _comm(a1, c_op))).real / norm
                    total += 3.0 * b1 * b2 * p2 * float(j(w1)) * dc
    return total


@pytest.fixture(scope="module")
def nh_pair():
    o = _pair_ops(0.5, 0.5)
    ix = (o["Ip"] + o["Im"]) / 2
    sx = (o["Sp"] + o["Sm"]) / 2
    ops = {
        "Iz": o["Iz"], "Sz": o["Sz"], "Ix": ix, "2IxSz": 2 * ix @ o["Sz"], "2IzSz": 2 * o["Iz"] @ o["Sz"],
        "ZQ": o["Ip"] @ o["Sm"] + o["Im"] @ o["Sp"], "DQ": o["Ip"] @ o["Sp"] + o["Im"] @ o["Sm"],
        "2IxSx": 2 * ix @ sx,
    }  # fmt: skip
    return o, ops


D = 2.3e4  # rad/s, any dipolar constant
C = 1.1e4  # rad/s, any CSA constant c = w dsigma / sqrt(3)
# The axial CSA Hamiltonian is (w dsigma/3)[3(I.n)(n.z) - I.z]: the dipolar form with S -> z and
# b = w dsigma/3 = c/sqrt(3) (Abragam 1961, ch. VI/VIII).
B_CSA = C / np.sqrt(3)


def _dd(o, wi=W_N, ws=W_H):
    return (D, _dipolar_pieces(o, wi, ws), np.array([0.0, 0.0, 1.0]))


def test_reference_reproduces_solomon_r1(nh_pair):
    # Guard on the reference itself: Solomon (1955) R1 = (d^2/4)[J(wI-wS) + 3J(wI) + 6J(wI+wS)], written out.
    o, ops = nh_pair
    ref = _redfield_rate(ops["Iz"], ops["Iz"], [_dd(o)], j_rigid)
    assert_allclose(ref, D**2 / 4 * (j_rigid(W_N - W_H) + 3 * j_rigid(W_N) + 6 * j_rigid(W_N + W_H)), rtol=1e-12)


@pytest.mark.parametrize(
    "operator,function",
    [
        ("Iz", lambda: t.dipolar_r1(j_rigid, W_N, W_H, D)),
        ("Ix", lambda: t.dipolar_r2(j_rigid, W_N, W_H, D)),
        ("2IxSz", lambda: t.dipolar_r2_antiphase(j_rigid, W_N, W_H, D)),
        ("2IzSz", lambda: t.dipolar_two_spin_order(j_rigid, W_N, W_H, D)),
        ("ZQ", lambda: t.dipolar_zero_quantum(j_rigid, W_N, W_H, D)),
        ("DQ", lambda: t.dipolar_double_quantum(j_rigid, W_N, W_H, D)),
        ("2IxSx", lambda: t.dipolar_multiple_quantum(j_rigid, W_N, W_H, D)),
    ],
)
def test_dipolar_auto_rates_match_spin_matrix_redfield(nh_pair, operator, function):
    # Abragam 1961 ch. VIII; anti-phase, two-spin-order and multiple-quantum forms as in Cavanagh et al.,
    # Protein NMR Spectroscopy, 2007, ch. 5 (from memory) - checked here from first principles.
    o, ops = nh_pair
    b = ops[operator]
    assert_allclose(function(), _redfield_rate(b, b, [_dd(o)], j_rigid), rtol=1e-10)


def test_cross_relaxation_matches_spin_matrix(nh_pair):
    # sigma = <Iz|Gamma|Sz> (Solomon 1955).
    o, ops = nh_pair
    ref = _redfield_rate(ops["Iz"], ops["Sz"], [_dd(o)], j_rigid)
    assert_allclose(t.dipolar_sigma(j_rigid, W_N, W_H, D), ref, rtol=1e-10)


@pytest.mark.parametrize("operator", ["Iz", "Ix", "2IxSz", "2IzSz", "2IxSx"])
def test_csa_of_observed_spin_matches_spin_matrix(nh_pair, operator):
    # CSA of I: longitudinal c^2 J(wI) and transverse (c^2/6)[4J(0)+3J(wI)] (Abragam 1961; Kay, Torchia & Bax 1989).
    o, ops = nh_pair
    b = ops[operator]
    ref = _redfield_rate(b, b, [(B_CSA, _csa_pieces(o, "I", W_N), np.array([0.0, 0.0, 1.0]))], j_rigid)
    expected = t.csa_r1(j_rigid, W_N, C) if operator in ("Iz", "2IzSz") else t.csa_r2(j_rigid, W_N, C)
    assert_allclose(expected, ref, rtol=1e-10)


def test_csa_of_passive_spin_enters_antiphase_as_its_r1(nh_pair):
    # The engine adds the longitudinal CSA rate of S to 2IxSz; check that is what Redfield gives.
    o, ops = nh_pair
    b = ops["2IxSz"]
    ref = _redfield_rate(b, b, [(B_CSA, _csa_pieces(o, "S", W_H), np.array([0.0, 0.0, 1.0]))], j_rigid)
    assert_allclose(t.csa_r1(j_rigid, W_H, C), ref, rtol=1e-10)


@pytest.mark.parametrize("theta_deg", [0.0, 17.0, 40.0])
def test_dd_csa_cross_correlation_matches_spin_matrix(nh_pair, theta_deg):
    # eta_xy couples Ix and 2IxSz, eta_z couples Iz and 2IzSz (Goldman 1984); only cross terms DD x CSA
    # contribute to these off-diagonal elements. Signs depend on conventions; magnitudes are compared.
    o, ops = nh_pair
    th = np.radians(theta_deg)
    axis_csa = np.array([np.sin(th), 0.0, np.cos(th)])
    inter = [_dd(o), (B_CSA, _csa_pieces(o, "I", W_N), axis_csa)]
    ref_xy = _redfield_rate(ops["Ix"], ops["2IxSz"], inter, j_rigid)
    ref_z = _redfield_rate(ops["Iz"], ops["2IzSz"], inter, j_rigid)
    assert_allclose(abs(t.dd_csa_eta_xy(j_rigid, W_N, D, C, th)), abs(ref_xy), rtol=1e-10)
    assert_allclose(abs(t.dd_csa_eta_z(j_rigid, W_N, D, C, th)), abs(ref_z), rtol=1e-10)


def test_eta_xy_formula_written_out():
    # eta_xy = d c P2(cos theta)/(2 sqrt 3) [4J(0) + 3J(wN)] (Goldman 1984; Pervushin et al., PNAS 94, 12366, 1997).
    th = np.radians(17.0)
    p2 = (3 * np.cos(th) ** 2 - 1) / 2
    expected = D * C * p2 / (2 * np.sqrt(3)) * (4 * j_rigid(0) + 3 * j_rigid(W_N))
    assert_allclose(t.dd_csa_eta_xy(j_rigid, W_N, D, C, th), expected, rtol=1e-14)


def test_like_spin_rates_match_spin_matrix():
    # Two protons with (nearly) equal Larmor frequency: Solomon 1955, Abragam 1961 ch. VIII.
    o = _pair_ops(0.5, 0.5)
    ix = (o["Ip"] + o["Im"]) / 2
    inter = [(D, _dipolar_pieces(o, W_H, W_H), np.array([0.0, 0.0, 1.0]))]
    rho = _redfield_rate(o["Iz"], o["Iz"], inter, j_rigid)
    sigma = _redfield_rate(o["Iz"], o["Sz"], inter, j_rigid)
    r2 = _redfield_rate(ix, ix, inter, j_rigid)
    r2_anti = _redfield_rate(2 * ix @ o["Sz"], 2 * ix @ o["Sz"], inter, j_rigid)
    assert_allclose(t.like_spin_rho(j_rigid, W_H, D), rho, rtol=1e-10)
    assert_allclose(t.like_spin_sigma(j_rigid, W_H, D), sigma, rtol=1e-10)
    assert_allclose(t.like_spin_r1_nonselective(j_rigid, W_H, D), rho + sigma, rtol=1e-10)
    assert_allclose(t.like_spin_r2(j_rigid, W_H, D), r2, rtol=1e-10)
    assert_allclose(t.like_spin_r2_antiphase(j_rigid, W_H, D), r2_anti, rtol=1e-10)


def test_like_spin_formulas_written_out():
    # Solomon 1955; Abragam 1961: rho = (d^2/4)[J0 + 3J(w) + 6J(2w)], sigma = (d^2/4)[6J(2w) - J0],
    # R1ns = (3d^2/4)[J(w) + 4J(2w)], R2 = (d^2/8)[5J0 + 9J(w) + 6J(2w)].
    j0, j1, j2 = j_rigid(0), j_rigid(W_H), j_rigid(2 * W_H)
    assert_allclose(t.like_spin_rho(j_rigid, W_H, D), D**2 / 4 * (j0 + 3 * j1 + 6 * j2), rtol=1e-14)
    assert_allclose(t.like_spin_sigma(j_rigid, W_H, D), D**2 / 4 * (6 * j2 - j0), rtol=1e-14)
    assert_allclose(t.like_spin_r1_nonselective(j_rigid, W_H, D), 3 * D**2 / 4 * (j1 + 4 * j2), rtol=1e-14)
    assert_allclose(t.like_spin_r2(j_rigid, W_H, D), D**2 / 8 * (5 * j0 + 9 * j1 + 6 * j2), rtol=1e-14)


def test_spin_one_partner_matches_spin_matrix():
    # A deuteron partner (S = 1): Abragam 1961 ch. VIII, the (4/3) S(S+1) factor.
    o = _pair_ops(0.5, 1.0)
    ix = (o["Ip"] + o["Im"]) / 2
    inter = [(D, _dipolar_pieces(o, W_H, W_D), np.array([0.0, 0.0, 1.0]))]
    assert_allclose(
        t.dipolar_r1(j_rigid, W_H, W_D, D, spin_factor=8 / 3),
        _redfield_rate(o["Iz"], o["Iz"], inter, j_rigid),
        rtol=1e-10,
    )
    assert_allclose(
        t.dipolar_r2(j_rigid, W_H, W_D, D, spin_factor=8 / 3), _redfield_rate(ix, ix, inter, j_rigid), rtol=1e-10
    )


def test_deuteron_replacing_proton_scales_by_one_in_15_9():
    # 2H for 1H multiplies a dipolar term by (gD/gH)^2 * 8/3 ~ 1/15.9 (Abragam 1961); in extreme narrowing the
    # J's are frequency independent so the ratio is exact. gD/gH from CODATA: gamma = mu/(I hbar), so
    # gD/gH = (mu_d / 1)/(mu_p / (1/2)) = mu_d/(2 mu_p).
    ratio_gamma = sc.physical_constants["deuteron-proton mag. mom. ratio"][0] / 2
    from backbone.constants import dipolar_constant, spin_factor

    r = 2.5e-10
    d_h = dipolar_constant("1H", "1H", r)
    d_d = dipolar_constant("1H", "2H", r)
    for fn in (t.dipolar_r1, t.dipolar_r2):
        ratio = fn(j_flat, W_H, W_D, d_d, spin_factor=spin_factor("2H")) / fn(j_flat, W_H, W_H * 1.0001, d_h)
        assert_allclose(ratio, ratio_gamma**2 * 8 / 3, rtol=2e-6)
        assert_allclose(1 / ratio, 15.9, rtol=5e-3)


@pytest.mark.parametrize("pair", [(W_N, W_H), (W_H, 2 * np.pi * 150.9e6)])
def test_extreme_narrowing_r1_equals_r2(pair):
    # Pure dipolar pair in extreme narrowing: T1 = T2 (Abragam 1961, ch. VIII): both are (d^2/4)*10 J.
    wi, ws = pair
    r1 = t.dipolar_r1(j_flat, wi, ws, D)
    r2 = t.dipolar_r2(j_flat, wi, ws, D)
    assert_allclose(r1, r2, rtol=1e-14)
    assert_allclose(r1, D**2 / 4 * 10 * j_flat(0.0), rtol=1e-14)
    # Like spins with distinct shifts: selective rho and transverse R2 are both (d^2/4)*10 J.
    assert_allclose(t.like_spin_rho(j_flat, W_H, D), t.like_spin_r2(j_flat, W_H, D), rtol=1e-14)


def test_csa_formulas_and_constant():
    # c = w dsigma/sqrt(3); R1 = c^2 J(w), R2 = (c^2/6)[4J(0)+3J(w)] (Kay, Torchia & Bax, Biochemistry 28, 8972, 1989).
    c = t.csa_constant(W_N, -160e-6)
    assert_allclose(c, W_N * -160e-6 / np.sqrt(3), rtol=1e-15)
    assert_allclose(t.csa_r1(j_rigid, W_N, c), c**2 * j_rigid(W_N), rtol=1e-15)
    assert_allclose(t.csa_r2(j_rigid, W_N, c), c**2 / 6 * (4 * j_rigid(0) + 3 * j_rigid(W_N)), rtol=1e-15)
    # Extreme narrowing: CSA R2/R1 = 7/6 (same formulas with equal J's).
    assert_allclose(t.csa_r2(j_flat, W_N, c) / t.csa_r1(j_flat, W_N, c), 7 / 6, rtol=1e-14)


def test_p2_vanishes_at_magic_angle():
    # P2(cos theta_m) = 0 at theta_m = arccos(1/sqrt 3) = 54.7356 deg (textbook).
    assert abs(t.legendre_p2(np.cos(np.arccos(1 / np.sqrt(3))))) < 1e-15
    assert t.dd_csa_eta_xy(j_rigid, W_N, D, C, np.arccos(1 / np.sqrt(3))) == pytest.approx(0.0, abs=1e-12)


def test_noe_formula():
    # NOE = 1 + (gS/gI) sigma/R1 (Solomon 1955); for 15N{1H} in extreme narrowing NOE = 1 + (gH/gN)/2 = -3.93
    # (textbook value for the maximum 15N NOE, e.g. Cavanagh et al. 2007, about -3.9, from memory).
    from backbone.constants import GAMMA

    r1 = t.dipolar_r1(j_flat, W_N, W_H, D)
    sigma = t.dipolar_sigma(j_flat, W_N, W_H, D)
    noe = t.steady_state_noe(r1, sigma, GAMMA["15N"].value, GAMMA["1H"].value)
    assert_allclose(noe, 1 + 0.5 * GAMMA["1H"].value / GAMMA["15N"].value, rtol=1e-14)
    assert noe == pytest.approx(-3.93, abs=0.01)


def test_doublet_components_straddle_the_mean():
    slow, fast = t.doublet_component_rates(10.0, 14.0, -3.0)
    assert (slow, fast) == (9.0, 15.0)
