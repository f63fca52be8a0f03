"""Checks of the exact Liouville-space reference propagator against textbook product-operator results.

Sources (cited beside each check):
- Sørensen, Eich, Levitt, Bodenhausen & Ernst, Prog. NMR Spectrosc. 16, 163 (1983): product-operator basis,
  its normalization and the evolution rules under offsets, couplings and pulses.
- Levitt, Spin Dynamics, 2nd ed. (Wiley 2008): rotation sense, Liouville-von Neumann solution
  rho(t) = exp(-iHt) rho exp(iHt).
- Cavanagh, Fairbrother, Palmer, Rance & Skelton, Protein NMR Spectroscopy, 2nd ed. (2007): INEPT,
  refocused INEPT, N -> CA transfer with two couplings, constant-time and multiple-quantum periods.
- Solomon, Phys. Rev. 99, 559 (1955): coupled longitudinal relaxation (cross-relaxation).
- Goldman, J. Magn. Reson. 60, 437 (1984): DD/CSA cross-correlation, doublet lines relax at R +/- eta.
The expected values are recomputed inline (closed forms, 2x2 generators, Hilbert-space matrices built here
with numpy.kron), never taken from the module under test.
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy.linalg import expm

from backbone.errors import BackboneError
from backbone.transfer import reference as ref
from backbone.transfer.reference import Delay, Pulse, SpinSystem

ATOL = 1e-10  # exact propagation: only round-off of the matrix exponential remains

# Spin-1/2 operators written out here, independently of the module (Levitt 2008, ch. 12).
_E = np.eye(2, dtype=complex)
_X = np.array([[0, 1], [1, 0]], dtype=complex) / 2
_Y = np.array([[0, -1j], [1j, 0]], dtype=complex) / 2
_Z = np.array([[1, 0], [0, -1]], dtype=complex) / 2
_ONE = {"E": _E, "x": _X, "y": _Y, "z": _Z}


def _kron_product(factors):
    """Product operator 2^(q-1) * kron(factors) (Sørensen et al. 1983 normalization); factors in 'Exyz'."""
    out = np.ones((1, 1), dtype=complex)
    for f in factors:
        out = np.kron(out, _ONE[f])
    q = sum(1 for f in factors if f != "E")
    return out * 2.0 ** (q - 1)


def _inline_amplitude(b, rho, n):
    """Coefficient of the product operator b in rho: Tr(b rho) / 2^(n-2) (Sørensen et al. 1983)."""
    return float(np.trace(b @ rho).real / 2.0 ** (n - 2))


def _two_by_two(j_hz, r_a, r_b, t):
    """In-phase/anti-phase pair d/dt [a, b] = [[-Ra, -pi J], [pi J, -Rb]] [a, b] from [1, 0] (physics notes,
    Cavanagh et al. 2007 sign convention matching Sørensen et al. 1983: Ix -> Ix cos + 2IySz sin)."""
    gen = np.array([[-r_a, -np.pi * j_hz], [np.pi * j_hz, -r_b]])
    return expm(gen * t) @ np.array([1.0, 0.0])


# ---------------------------------------------------------------------------------------------------------
# Basis, names, operators
# ---------------------------------------------------------------------------------------------------------


def test_operator_matrices_match_kronecker_products():
    # Sørensen et al. 1983: 2IySz = 2 Iy (x) Sz, 4IxSzPz = 4 Ix (x) Sz (x) Pz, Ix = Ix (x) 1.
    system = SpinSystem(("I", "S", "P"))
    assert_allclose(ref.operator(system, "2IySz"), 2 * np.kron(np.kron(_Y, _Z), _E), atol=ATOL)
    assert_allclose(ref.operator(system, "4IxSzPz"), 4 * np.kron(np.kron(_X, _Z), _Z), atol=ATOL)
    assert_allclose(ref.operator(system, "Ix"), np.kron(np.kron(_X, _E), _E), atol=ATOL)
    assert_allclose(ref.operator(system, "E"), np.eye(8) / 2, atol=ATOL)


def test_hamiltonian_is_offsets_plus_weak_couplings():
    # H = 2 pi nu_I Iz + 2 pi nu_S Sz + 2 pi J IzSz [rad/s] (Sørensen et al. 1983; weak coupling).
    system = SpinSystem(("I", "S"), {("S", "I"): 15.0}, {"I": 100.0, "S": -40.0})
    expected = 2 * np.pi * (100.0 * np.kron(_Z, _E) - 40.0 * np.kron(_E, _Z) + 15.0 * np.kron(_Z, _Z))
    assert_allclose(ref.hamiltonian(system), expected, atol=1e-9)
    assert system.coupling("I", "S") == system.coupling("S", "I") == 15.0


def test_factor_order_in_names_does_not_matter():
    system = SpinSystem(("N", "H"))
    assert_allclose(ref.operator(system, "2HzNx"), ref.operator(system, "2NxHz"), atol=0)


@pytest.mark.parametrize("n", [1, 2, 3, 4])
def test_basis_is_orthogonal_with_common_norm(n):
    # Sørensen et al. 1983: the 4^n Cartesian product operators are orthogonal, Tr(B_j B_k) = 2^(n-2) delta_jk.
    system = SpinSystem(tuple("ABCD"[:n]))
    mats = np.array([ref.operator(system, name) for name in system.basis_names])
    gram = np.einsum("jab,kba->jk", mats, mats).real
    assert_allclose(gram, 2.0 ** (n - 2) * np.eye(4**n), atol=1e-12)
    assert len(set(system.basis_names)) == 4**n


def test_density_matrix_round_trip():
    system = SpinSystem(("N", "H"))
    rho = 0.3 * np.kron(_X, _E) + 0.7 * 2 * np.kron(_Y, _Z)  # 0.3 Nx + 0.7 2NyHz
    vec = ref.state_from_density_matrix(system, rho)
    assert ref.amplitudes(system, vec) == pytest.approx({"Nx": 0.3, "2NyHz": 0.7})
    assert_allclose(ref.density_matrix(system, vec), rho, atol=1e-12)


def test_spin_names_with_residue_offsets_and_overlap():
    # Names such as CA(i-1) and spins whose names are prefixes of others (C, CA) parse unambiguously.
    system = SpinSystem(("C", "CA", "CA(i-1)"))
    assert_allclose(
        ref.operator(system, "4CAxCzCA(i-1)z"), 4 * np.kron(np.kron(_Z, _X), _Z), atol=ATOL
    )


# ---------------------------------------------------------------------------------------------------------
# Free precession and pulses (sign conventions)
# ---------------------------------------------------------------------------------------------------------


@pytest.mark.parametrize("nu_hz, t_s", [(100.0, 1e-3), (-250.0, 3.1e-3), (1234.5, 0.77e-3), (0.0, 5e-3)])
def test_free_precession_of_an_offset(nu_hz, t_s):
    # Levitt 2008 (rotation sandwich), Sørensen et al. 1983: under 2 pi nu Iz,
    # Ix -> Ix cos(2 pi nu t) + Iy sin(2 pi nu t) and Iy -> Iy cos - Ix sin.
    system = SpinSystem(("I", "S"), offsets={"I": nu_hz})
    angle = 2 * np.pi * nu_hz * t_s
    out = ref.propagate(system, {"Ix": 1.0, "Iy": 0.5}, [Delay(t_s)])
    assert_allclose(ref.amplitude(system, out, "Ix"), np.cos(angle) - 0.5 * np.sin(angle), atol=ATOL)
    assert_allclose(ref.amplitude(system, out, "Iy"), np.sin(angle) + 0.5 * np.cos(angle), atol=ATOL)


@pytest.mark.parametrize(
    "start, pulse, expected",
    [
        # Sørensen et al. 1983 / Levitt 2008 with U = exp(-i beta I_phi): 90x on Iz gives -Iy.
        ("Iz", Pulse("I", 90.0, 0.0), {"Iy": -1.0}),
        ("Iz", Pulse("I", 90.0, 90.0), {"Ix": 1.0}),
        ("Iz", Pulse("I", 90.0, 180.0), {"Iy": 1.0}),
        ("Iy", Pulse("I", 90.0, 0.0), {"Iz": 1.0}),
        ("Iy", Pulse("I", 180.0, 0.0), {"Iy": -1.0}),
        ("Ix", Pulse("I", 180.0, 90.0), {"Ix": -1.0}),
        ("Iz", Pulse("I", 180.0, 0.0), {"Iz": -1.0}),
        ("Iz", Pulse("S", 90.0, 0.0), {"Iz": 1.0}),  # a pulse on S leaves I alone
        ("2IzSz", Pulse("I", 90.0, 0.0), {"2IySz": -1.0}),
        ("2IySz", Pulse(("I", "S"), 90.0, 0.0), {"2IzSy": -1.0}),  # the refocused-INEPT transfer step
    ],
)
def test_pulse_rotations(start, pulse, expected):
    system = SpinSystem(("I", "S"))
    out = ref.propagate(system, {start: 1.0}, [pulse])
    assert ref.amplitudes(system, out, atol=1e-12) == pytest.approx(expected, abs=1e-12)


@settings(max_examples=30, deadline=None)
@given(beta=st.floats(-360, 360), phi=st.floats(-360, 360))
def test_pulse_on_iz_is_a_rotation_about_the_phase_axis(beta, phi):
    # Rotating vector (0, 0, 1) about the axis n = (cos phi, sin phi, 0) by beta (Rodrigues' formula;
    # Levitt 2008, the rotation sense of exp(-i beta I_n)) gives z cos b + sin b (sin phi x - cos phi y).
    system = SpinSystem(("I",))
    out = ref.propagate(system, {"Iz": 1.0}, [Pulse("I", beta, phi)])
    b, p = np.deg2rad(beta), np.deg2rad(phi)
    assert_allclose(ref.amplitude(system, out, "Iz"), np.cos(b), atol=1e-10)
    assert_allclose(ref.amplitude(system, out, "Ix"), np.sin(b) * np.sin(p), atol=1e-10)
    assert_allclose(ref.amplitude(system, out, "Iy"), -np.sin(b) * np.cos(p), atol=1e-10)


_NAMES3 = ("Ix", "Iy", "Iz", "Sx", "2IySz", "2IxSz", "2IzSz", "4IxSzPz", "2IxSy", "4IySyPz", "Pz", "2SxPz")


@settings(max_examples=20, deadline=None)
@given(
    j_is=st.floats(-100, 100),
    j_ip=st.floats(-60, 60),
    j_sp=st.floats(-60, 60),
    offsets=st.tuples(*[st.floats(-500, 500)] * 3),
    elements=st.lists(
        st.one_of(
            st.builds(lambda t: ("delay", t), st.floats(0, 0.02)),
            st.builds(
                lambda spins, a, p: ("pulse", spins, a, p),
                st.sets(st.sampled_from("ISP"), min_size=1),
                st.floats(-270, 270),
                st.floats(0, 360),
            ),
        ),
        min_size=1,
        max_size=5,
    ),
    start=st.sampled_from(["Ix", "Iz", "2IySz", "Sy"]),
)
def test_liouville_propagation_matches_hilbert_space(j_is, j_ip, j_sp, offsets, elements, start):
    # Without relaxation, rho(t) = U rho U^dagger with U = exp(-iHt) and H = sum 2 pi nu Iz + sum 2 pi J IzSz
    # (Levitt 2008); pulses U = exp(-i beta (cos phi Ix + sin phi Iy)). Built here from numpy.kron.
    spins = ("I", "S", "P")
    system = SpinSystem(spins, {("I", "S"): j_is, ("I", "P"): j_ip, ("S", "P"): j_sp}, dict(zip(spins, offsets)))

    iz = [_kron_product(["z" if m == k else "E" for m in range(3)]) for k in range(3)]
    ix = [_kron_product(["x" if m == k else "E" for m in range(3)]) for k in range(3)]
    iy = [_kron_product(["y" if m == k else "E" for m in range(3)]) for k in range(3)]
    h = sum(2 * np.pi * nu * iz[k] for k, nu in enumerate(offsets))
    for (a, b), j in (((0, 1), j_is), ((0, 2), j_ip), ((1, 2), j_sp)):
        h = h + 2 * np.pi * j * iz[a] @ iz[b]

    factors = {"Ix": "xEE", "Iz": "zEE", "2IySz": "yzE", "Sy": "EyE"}[start]
    rho = _kron_product(list(factors))
    sequence = []
    for element in elements:
        if element[0] == "delay":
            u = expm(-1j * h * element[1])
            sequence.append(Delay(element[1]))
        else:
            _, chosen, beta, phi = element
            b, p = np.deg2rad(beta), np.deg2rad(phi)
            gen = sum(np.cos(p) * ix[spins.index(s)] + np.sin(p) * iy[spins.index(s)] for s in chosen)
            u = expm(-1j * b * gen)
            sequence.append(Pulse(tuple(sorted(chosen)), beta, phi))
        rho = u @ rho @ u.conj().T

    out = ref.propagate(system, {start: 1.0}, sequence)
    lookup = {"I": 0, "S": 1, "P": 2}
    for name in _NAMES3:
        body = name.lstrip("0123456789")
        fac = ["E"] * 3
        for k in range(0, len(body), 2):
            fac[lookup[body[k]]] = body[k + 1]
        expected = _inline_amplitude(_kron_product(fac), rho, 3)
        assert_allclose(ref.amplitude(system, out, name), expected, atol=1e-9)


# ---------------------------------------------------------------------------------------------------------
# INEPT, echoes and relaxation
# ---------------------------------------------------------------------------------------------------------


@pytest.mark.parametrize("j_hz", [-92.0, 92.0, 15.0, 55.0])
@pytest.mark.parametrize("tau_fraction", [0.1, 0.5, 1.0, 1.7])
def test_inept_without_relaxation(j_hz, tau_fraction):
    # Sørensen et al. 1983, coupling rule: Ix --(pi J t 2IzSz)--> Ix cos(pi J t) + 2IySz sin(pi J t); the 180s on
    # both spins keep the coupling active for the whole tau (Cavanagh et al. 2007). tau = 1/(2|J|) gives full
    # anti-phase.
    tau = tau_fraction / (2 * abs(j_hz))
    system = SpinSystem(("H", "N"), {("H", "N"): j_hz})
    out = ref.propagate(system, {"Hx": 1.0}, ref.inept_period(tau, "H", "N"))
    expected = {"Hx": np.cos(np.pi * j_hz * tau), "2HyNz": np.sin(np.pi * j_hz * tau)}
    got = ref.amplitudes(system, out, atol=1e-12)
    assert set(got) <= set(expected)
    for name, value in expected.items():
        assert_allclose(ref.amplitude(system, out, name), value, atol=ATOL)
    result = ref.reference_inept(j_hz, tau)
    assert_allclose(result.antiphase, np.sin(np.pi * j_hz * tau), atol=ATOL)
    assert_allclose(result.inphase, np.cos(np.pi * j_hz * tau), atol=ATOL)


def test_echo_refocuses_offsets():
    # Sørensen et al. 1983: the 180 on both spins in the middle of tau refocuses the chemical shifts, so the
    # result equals the zero-offset result: Ix cos(pi J tau) + 2IySz sin(pi J tau) e^(-R tau), also with relaxation.
    j, tau = 92.0, 4.1e-3
    for r_in, r_anti in [(0.0, 0.0), (12.0, 12.0), (8.0, 30.0)]:
        expected = _two_by_two(j, r_in, r_anti, tau)
        for offsets in [(0.0, 0.0), (731.0, -155.0), (-2000.0, 40.0)]:
            result = ref.reference_inept(
                j, tau, r_inphase=r_in, r_antiphase=r_anti, offset_hz=offsets[0], partner_offset_hz=offsets[1]
            )
            assert_allclose(result, expected, atol=ATOL)


def test_offsets_are_not_refocused_without_the_echo():
    # Control for the test above (Sørensen et al. 1983): a plain delay with an offset rotates the in-phase term.
    j, tau, nu = 92.0, 4.1e-3, 731.0
    system = SpinSystem(("I", "S"), {("I", "S"): j}, {"I": nu})
    out = ref.propagate(system, {"Ix": 1.0}, [Delay(tau)])
    assert_allclose(
        ref.amplitude(system, out, "Ix"), np.cos(np.pi * j * tau) * np.cos(2 * np.pi * nu * tau), atol=ATOL
    )


@pytest.mark.parametrize("rate", [0.0, 5.0, 40.0])
def test_inept_with_equal_rates(rate):
    # Equal in-phase and anti-phase rates: sin(pi J tau) exp(-R tau) (Cavanagh et al. 2007).
    j = 92.0
    for tau in [1e-3, 2.7e-3, 5.4e-3]:
        result = ref.reference_inept(j, tau, r_inphase=rate, r_antiphase=rate)
        assert_allclose(result.antiphase, np.sin(np.pi * j * tau) * np.exp(-rate * tau), atol=ATOL)
        assert_allclose(result.inphase, np.cos(np.pi * j * tau) * np.exp(-rate * tau), atol=ATOL)


@pytest.mark.parametrize("r_in, r_anti", [(10.0, 40.0), (60.0, 5.0), (0.0, 300.0), (2 * np.pi * 15.0, 0.0)])
def test_inept_with_unequal_rates_matches_two_by_two_generator(r_in, r_anti):
    # d/dt [a, b] = [[-Ra, -pi J], [pi J, -Rb]] [a, b] (Cavanagh et al. 2007), solved here with expm.
    # The last case has |Ra - Rb| = 2 pi J (critically damped, defective generator).
    j = 15.0
    for tau in [5e-3, 33e-3, 80e-3]:
        result = ref.reference_inept(j, tau, r_inphase=r_in, r_antiphase=r_anti)
        assert_allclose(result, _two_by_two(j, r_in, r_anti, tau), atol=ATOL)


def test_additive_rule_sets_in_phase_and_anti_phase_rates():
    # The documented rule: R(Ix) = R2_I, R(2IySz) = R2_I + extra_S, R(Sz) = R1_S, R(2IzSz) = extra_I + extra_S,
    # R(2IxSx) = R2_I + R2_S. With no couplings or offsets each operator decays as exp(-R t) (Bloch 1946).
    system = SpinSystem(("I", "S"))
    rule = ref.additive_rates(
        system,
        transverse={"I": 10.0, "S": 3.0},
        longitudinal={"I": 1.0, "S": 2.0},
        antiphase_extra={"I": 5.0, "S": 4.0},
    )
    gamma = ref.relaxation_superoperator(system, default=rule)
    t = 0.05
    expected = {"Ix": 10.0, "Iy": 10.0, "2IySz": 14.0, "Sz": 2.0, "Iz": 1.0, "2IzSz": 9.0, "2IxSx": 13.0}
    for name, rate in expected.items():
        out = ref.propagate(system, {name: 1.0}, [Delay(t)], gamma)
        assert_allclose(ref.amplitude(system, out, name), np.exp(-rate * t), atol=ATOL)
    # antiphase_extra defaults to the longitudinal rates
    rule = ref.additive_rates(system, transverse={"I": 10.0}, longitudinal={"S": 2.0})
    default_extra = ref.relaxation_superoperator(system, default=rule)
    out = ref.propagate(system, {"2IySz": 1.0}, [Delay(t)], default_extra)
    assert_allclose(ref.amplitude(system, out, "2IySz"), np.exp(-12.0 * t), atol=ATOL)


def test_explicit_rates_override_the_rule_for_every_phase():
    system = SpinSystem(("I", "S"))
    rule = ref.additive_rates(system, transverse={"I": 10.0})
    gamma = ref.relaxation_superoperator(system, {"2IySz": 25.0}, default=rule)
    t = 0.03
    for name in ("2IySz", "2IxSz"):
        out = ref.propagate(system, {name: 1.0}, [Delay(t)], gamma)
        assert_allclose(ref.amplitude(system, out, name), np.exp(-25.0 * t), atol=ATOL)
    assert ref.coherence_pattern(system, "2IxSz") == ref.CoherencePattern(frozenset({"I"}), frozenset({"S"}))


def test_uniform_relaxation_scales_the_unitary_result():
    # A rate common to all non-unit operators commutes with -i[H, .]: rho(t) = exp(-R t) U rho U^dagger.
    system = SpinSystem(("N", "H", "C"), {("N", "H"): -92.0, ("N", "C"): -15.0}, {"N": 300.0, "H": -90.0})
    sequence = [Pulse("H", 90.0), Delay(2.7e-3), Pulse(("H", "N"), 180.0), Delay(2.7e-3), Pulse(("H", "N"), 90.0, 90.0)]
    free = ref.propagate(system, {"Hz": 1.0}, sequence)
    damped = ref.propagate(system, {"Hz": 1.0}, sequence, ref.relaxation_superoperator(system, default=17.0))
    assert_allclose(damped, free * np.exp(-17.0 * 5.4e-3), atol=ATOL)


def test_cross_relaxation_follows_solomon_equations():
    # Solomon 1955: d/dt [Iz, Sz] = -[[rho_I, sigma], [sigma, rho_S]] [Iz, Sz] (deviations from equilibrium).
    system = SpinSystem(("I", "S"))
    rho_i, rho_s, sigma = 3.0, 1.5, -1.2
    gamma = ref.relaxation_superoperator(system, {"Iz": rho_i, "Sz": rho_s}, cross={("Iz", "Sz"): sigma})
    t = 0.4
    expected = expm(-np.array([[rho_i, sigma], [sigma, rho_s]]) * t) @ np.array([1.0, 0.0])
    out = ref.propagate(system, {"Iz": 1.0}, [Delay(t)], gamma)
    assert_allclose([ref.amplitude(system, out, "Iz"), ref.amplitude(system, out, "Sz")], expected, atol=ATOL)


def test_cross_correlation_makes_doublet_lines_relax_at_r_plus_minus_eta():
    # Goldman 1984: with DD/CSA cross-correlation eta the doublet lines Ix S^alpha = (Ix + 2IxSz)/2 and
    # Ix S^beta relax at R + eta and R - eta and precess at +pi J and -pi J. From Ix at zero offset:
    # Ix (Da + Db)/2 cos, 2IxSz (Da - Db)/2 cos, Iy (Da - Db)/2 sin, 2IySz (Da + Db)/2 sin, Da,b = e^(-(R +/- eta)t).
    system = SpinSystem(("N", "H"), {("N", "H"): -92.0})
    r, eta = 25.0, 18.0
    gamma = ref.relaxation_superoperator(system, {"Nx": r, "2NxHz": r}, cross={("Nx", "2NxHz"): eta})
    for t in [2e-3, 11e-3, 40e-3]:
        out = ref.propagate(system, {"Nx": 1.0}, [Delay(t)], gamma)
        da, db = np.exp(-(r + eta) * t), np.exp(-(r - eta) * t)
        c, s = np.cos(np.pi * -92.0 * t), np.sin(np.pi * -92.0 * t)
        expected = {
            "Nx": (da + db) / 2 * c,
            "2NxHz": (da - db) / 2 * c,
            "Ny": (da - db) / 2 * s,
            "2NyHz": (da + db) / 2 * s,
        }
        for name, value in expected.items():
            assert_allclose(ref.amplitude(system, out, name), value, atol=ATOL)


def test_zero_and_double_quantum_rates_through_cross_terms():
    # ZQx = (2IxSx + 2IySy)/2 and DQx = (2IxSx - 2IySy)/2 (Sørensen et al. 1983) relax at R_zq and R_dq when
    # R(2IxSx) = (R_zq + R_dq)/2 and the cross term is (R_zq - R_dq)/2; ZQy = 2IySx - 2IxSy gets the opposite sign.
    system = SpinSystem(("I", "S"))
    r_zq, r_dq, t = 4.0, 30.0, 0.05
    gamma = ref.relaxation_superoperator(
        system, {"2IxSx": (r_zq + r_dq) / 2}, cross={("2IxSx", "2IySy"): (r_zq - r_dq) / 2}
    )
    pairs = [
        ({"2IxSx": 0.5, "2IySy": 0.5}, {"2IxSx": 0.5, "2IySy": -0.5}),  # ZQx, DQx
        ({"2IySx": 0.5, "2IxSy": -0.5}, {"2IySx": 0.5, "2IxSy": 0.5}),  # ZQy, DQy
    ]
    for zq, dq in pairs:
        for start, rate in ((zq, r_zq), (dq, r_dq)):
            out = ref.propagate(system, start, [Delay(t)], gamma)
            assert_allclose(out, ref.state_vector(system, start) * np.exp(-rate * t), atol=ATOL)


# ---------------------------------------------------------------------------------------------------------
# Scenarios for each step kind
# ---------------------------------------------------------------------------------------------------------


@pytest.mark.parametrize("rate", [0.0, 20.0])
def test_branch_transfer_to_two_carbons(rate):
    # Cavanagh et al. 2007 (HNCA): N -> CA(i) by 1J = 11 Hz and CA(i-1) by 2J = 7 Hz over T gives
    # sin(pi J1 T) cos(pi J2 T) (own) and sin(pi J2 T) cos(pi J1 T) (preceding), times exp(-R T) for one common
    # rate; Sørensen et al. 1983 rules also give Nx cos cos and 4NxC1zC2z -sin sin.
    j1, j2 = 11.0, 7.0
    for t in [10e-3, 23.6e-3, 31.4e-3]:
        out = ref.reference_branch_transfer(j1, j2, t, r_inphase=rate, r_first=rate, offset_hz=410.0)
        a, b, decay = np.pi * j1 * t, np.pi * j2 * t, np.exp(-rate * t)
        assert_allclose(out.first, np.sin(a) * np.cos(b) * decay, atol=ATOL)
        assert_allclose(out.second, np.sin(b) * np.cos(a) * decay, atol=ATOL)
        assert_allclose(out.inphase, np.cos(a) * np.cos(b) * decay, atol=ATOL)
        assert_allclose(out.both, -np.sin(a) * np.sin(b) * decay, atol=ATOL)


def test_four_spin_branch_with_a_refocused_proton():
    # Sørensen et al. 1983: a coupling between a pulsed and an unpulsed spin is refocused by the echo. N coupled
    # to H (-92 Hz, not pulsed), CA(i) (1J) and CA(i-1) (2J): the two carbon terms follow the three-spin
    # formulas of Cavanagh et al. 2007 whatever the N-H coupling and the offsets.
    spins = ("N", "H", "CA(i)", "CA(i-1)")
    couplings = {("N", "H"): -92.0, ("N", "CA(i)"): -11.0, ("N", "CA(i-1)"): -7.0}
    system = SpinSystem(spins, couplings, {"N": 250.0, "H": 1900.0, "CA(i)": -300.0})
    t = 24e-3
    out = ref.propagate(system, {"Nx": 1.0}, ref.echo(t, ("N", "CA(i)", "CA(i-1)")))
    a, b = np.pi * -11.0 * t, np.pi * -7.0 * t
    assert_allclose(ref.amplitude(system, out, "2NyCA(i)z"), np.sin(a) * np.cos(b), atol=ATOL)
    assert_allclose(ref.amplitude(system, out, "2NyCA(i-1)z"), np.sin(b) * np.cos(a), atol=ATOL)
    assert all("H" not in name for name in ref.amplitudes(system, out, atol=1e-12))


def test_branch_transfer_with_one_coupling_reduces_to_the_two_by_two_generator():
    # With J2 = 0 only Nx <-> 2NyC1z take part: the 2x2 generator of Cavanagh et al. 2007 again.
    out = ref.reference_branch_transfer(11.0, 0.0, 27e-3, r_inphase=12.0, r_first=31.0, r_second=50.0)
    assert_allclose([out.inphase, out.first], _two_by_two(11.0, 12.0, 31.0, 27e-3), atol=ATOL)


def test_refocused_inept_is_two_consecutive_transfers():
    # Cavanagh et al. 2007: Ix -> 2IySz (tau1), 90x(I,S) -> -2IzSy, -> Sx (tau2); with no relaxation
    # Sx = sin(pi J tau1) sin(pi J tau2). With rates, each period is the 2x2 generator of its own spin
    # (the 90 pulses map the anti-phase term exactly), so Sx = b1(tau1) * b2(tau2).
    j = -92.0
    out = ref.reference_refocused_inept(j, 5.4e-3, 3.0e-3, source_offset_hz=-480.0, target_offset_hz=900.0)
    assert_allclose(out.inphase, np.sin(np.pi * j * 5.4e-3) * np.sin(np.pi * j * 3.0e-3), atol=ATOL)
    assert_allclose(out.antiphase, -np.sin(np.pi * j * 5.4e-3) * np.cos(np.pi * j * 3.0e-3), atol=ATOL)
    rates = dict(r_source_inphase=20.0, r_source_antiphase=28.0, r_target_antiphase=14.0, r_target_inphase=9.0)
    out = ref.reference_refocused_inept(j, 5.4e-3, 3.0e-3, **rates)
    first = _two_by_two(j, 20.0, 28.0, 5.4e-3)[1]  # 2IySz after tau1, becomes -2IzSy
    # Sørensen et al. 1983: Sx -> Sx cos + 2IzSy sin and 2IzSy -> 2IzSy cos - Sx sin, so the pair
    # [Sx, 2IzSy] obeys the same generator [[-R_in, -pi J], [pi J, -R_anti]], here started from [0, -first].
    gen = np.array([[-9.0, -np.pi * j], [np.pi * j, -14.0]])
    sx, anti = expm(gen * 3.0e-3) @ np.array([0.0, -first])
    assert_allclose([out.inphase, out.antiphase], [sx, anti], atol=ATOL)


@pytest.mark.parametrize("rate", [0.0, 15.0])
def test_homonuclear_transfer_with_passive_coupling(rate):
    # Cavanagh et al. 2007: CA -> C' by 1J(CA,C') = 55 Hz while CB (1J(CA,CB) = 35 Hz) is inverted by the same
    # band-selective pulse gives sin(pi Ja tau) cos(pi Jp tau); a passive spin left alone is refocused.
    ja, jp = 55.0, 35.0
    for tau in [4.5e-3, 9.1e-3]:
        decay = np.exp(-rate * tau)
        out = ref.reference_homonuclear(ja, jp, tau, r_inphase=rate, r_antiphase=rate, offset_hz=-1500.0)
        assert_allclose(out.first, np.sin(np.pi * ja * tau) * np.cos(np.pi * jp * tau) * decay, atol=ATOL)
        out = ref.reference_homonuclear(ja, jp, tau, r_inphase=rate, r_antiphase=rate, passive_inverted=False)
        assert_allclose(out.first, np.sin(np.pi * ja * tau) * decay, atol=ATOL)
        assert_allclose(out.second, 0.0, atol=ATOL)


def test_passive_coupling_factor_with_additive_rates():
    # With additive rates R = R2 + e_S [S z] + e_P [P z] the generator on {Ix, 2IySz, 2IyPz, 4IxSzPz} is a
    # Kronecker sum of the two 2x2 in-phase/anti-phase generators (derivation: the factors S and P evolve
    # independently in the single-transition picture, Sørensen et al. 1983), so the active anti-phase term is
    # b(J_a; R2, R2 + e_S) * a(J_p; 0, e_P). The passive factor is cos(pi J_p tau) only when e_P = 0.
    ja, jp, tau, r2, e_s, e_p = 55.0, 35.0, 9e-3, 20.0, 8.0, 5.0
    active = _two_by_two(ja, r2, r2 + e_s, tau)[1]
    out = ref.reference_homonuclear(ja, jp, tau, r_inphase=r2, r_antiphase=r2 + e_s, r_passive_antiphase=r2 + e_p)
    assert_allclose(out.first, active * _two_by_two(jp, 0.0, e_p, tau)[0], atol=ATOL)
    out = ref.reference_homonuclear(ja, jp, tau, r_inphase=r2, r_antiphase=r2 + e_s, r_passive_antiphase=r2)
    assert_allclose(out.first, active * np.cos(np.pi * jp * tau), atol=ATOL)


@pytest.mark.parametrize("j_active", [0.0, -92.0, 140.0])
def test_mq_period_is_immune_to_the_active_coupling(j_active):
    # Sørensen et al. 1983 / Cavanagh et al. 2007: 2IxSy commutes with 2IzSz, so the I-S coupling does not act on
    # the MQ coherence; a passive coupling of I to an inverted P gives cos(pi Jp t); the MQ rate gives exp(-R t).
    jp, r = 20.0, 12.0
    for t in [3e-3, 17e-3]:
        out = ref.reference_mq(
            t, j_active_hz=j_active, j_passive_hz=jp, r_mq=r, offset_hz=300.0, partner_offset_hz=-80.0
        )
        assert_allclose(out.antiphase, np.cos(np.pi * jp * t) * np.exp(-r * t), atol=ATOL)
        assert_allclose(out.passive_antiphase, np.sin(np.pi * jp * t) * np.exp(-r * t), atol=ATOL)
        out = ref.reference_mq(t, j_active_hz=j_active, j_passive_hz=jp, r_mq=r, passive_inverted=False)
        assert_allclose(out.antiphase, np.exp(-r * t), atol=ATOL)


@pytest.mark.parametrize("partner_inverted", [True, False])
def test_constant_time_period(partner_inverted):
    # Cavanagh et al. 2007: in a constant-time period T the shift evolves for t while the coupling to an inverted
    # partner evolves for the fixed T (to a partner not inverted: for t); relaxation exp(-R T) does not depend on t.
    # Product-operator rules (Sørensen et al. 1983): Ix cos(theta) cos(phi), Iy cos(theta) sin(phi),
    # 2IySz sin(theta) cos(phi), 2IxSz -sin(theta) sin(phi), theta = pi J T (or pi J t), phi = 2 pi nu t.
    total, j, nu, r = 28e-3, 35.0, 140.0, 9.0
    for t in [0.0, 4e-3, 13e-3, 28e-3]:
        out = ref.reference_constant_time(
            total, t, j_hz=j, offset_hz=nu, r_inphase=r, r_antiphase=r, partner_inverted=partner_inverted
        )
        theta = np.pi * j * (total if partner_inverted else t)
        phi = 2 * np.pi * nu * t
        decay = np.exp(-r * total)
        expected = [
            np.cos(theta) * np.cos(phi),
            np.cos(theta) * np.sin(phi),
            np.sin(theta) * np.cos(phi),
            -np.sin(theta) * np.sin(phi),
        ]
        assert_allclose(out, np.array(expected) * decay, atol=ATOL)


def test_constant_time_with_unequal_rates_at_zero_offset():
    # With both spins inverted the pair Ix/2IySz follows the 2x2 generator for the whole T, wherever the 180 sits.
    for t in [0.0, 10e-3]:
        out = ref.reference_constant_time(28e-3, t, j_hz=35.0, r_inphase=6.0, r_antiphase=19.0)
        assert_allclose([out.inphase, out.antiphase], _two_by_two(35.0, 6.0, 19.0, 28e-3), atol=ATOL)


def test_helpers_follow_the_delay_convention():
    # Project convention (ARCHITECTURE.md): a step delay tau is the total evolution time; echo halves are tau/2.
    seq = ref.inept_period(5.4e-3, "H", "N")
    assert [type(e) for e in seq] == [Delay, Pulse, Delay]
    assert sum(e.duration_s for e in seq if isinstance(e, Delay)) == pytest.approx(5.4e-3)
    assert seq[1].spins == ("H", "N") and seq[1].angle_deg == 180.0
    ct = ref.constant_time_period(28e-3, 6e-3, "C", also_pulsed=("CB",))
    assert [e.duration_s for e in ct if isinstance(e, Delay)] == pytest.approx([11e-3, 17e-3])


# ---------------------------------------------------------------------------------------------------------
# Errors a user can cause
# ---------------------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "kwargs, match",
    [
        (dict(spins=()), "1 to 4 spins"),
        (dict(spins=("A", "B", "C", "D", "F")), "1 to 4 spins"),
        (dict(spins=("N", "h")), "spin name 'h'"),
        (dict(spins=("N", "E")), "reserved"),
        (dict(spins=("N", "2H")), "spin name '2H'"),
        (dict(spins=("N", "Hx")), "other than x, y, z"),
        (dict(spins=("N", "N")), "unique"),
        (dict(spins=("N", "H"), couplings={("N", "X"): 1.0}), "unknown spin 'X'"),
        (dict(spins=("N", "H"), couplings={("N", "N"): 1.0}), "itself"),
        (dict(spins=("N", "H"), couplings={("N", "H"): 1.0, ("H", "N"): 2.0}), "twice"),
        (dict(spins=("N", "H"), couplings={("N", "H"): float("nan")}), "finite"),
        (dict(spins=("N", "H"), couplings={("N", "H"): "a lot"}), "number"),
        (dict(spins=("N", "H"), couplings={"NH": 1.0}), "pair of spin names"),
        (dict(spins=("N", "H"), offsets={"C": 1.0}), "unknown spin"),
        (dict(spins=("N", "H"), offsets={"N": float("inf")}), "finite"),
    ],
)
def test_spin_system_errors(kwargs, match):
    with pytest.raises(BackboneError, match=match):
        SpinSystem(**kwargs)


@pytest.mark.parametrize(
    "name, match",
    [
        ("Cx", "unknown spin 'C'"),
        ("2NxCz", "unknown spin 'C'"),
        ("Nq", "cannot be read"),
        ("", "cannot be read"),
        ("NxHz", "write '2NxHz'"),
        ("4NxHz", "write '2NxHz'"),
        ("2Nx", "write 'Nx'"),
        ("2NxNz", "appears twice"),
        (3, "must be a name"),
    ],
)
def test_operator_name_errors(name, match):
    with pytest.raises(BackboneError, match=match):
        ref.operator(SpinSystem(("N", "H")), name)


@pytest.mark.parametrize(
    "rates, kwargs, match",
    [
        ({"Nx": -1.0}, {}, ">= 0"),
        ({"Nx": float("nan")}, {}, "finite"),
        ({"E": 1.0}, {}, "unit operator"),
        ({"Nx": 1.0, "Ny": 2.0}, {}, "share one rate"),
        ({}, dict(default=-3.0), ">= 0"),
        ({}, dict(default=lambda pattern: -1.0), ">= 0"),
        ({}, dict(cross={("Nx", "Hx"): 1.0}), "same transverse spins"),
        ({}, dict(cross={("Nx", "Nx"): 1.0}), "two different operators"),
        ({}, dict(cross={("E", "Nz"): 1.0}), "unit operator"),
        ({}, dict(cross={("Nx", "Ny"): 1.0}), "not invariant"),
        ({}, dict(cross={"Nz": 1.0}), "pair of product-operator names"),
        ({"Nz": 1.0, "Hz": 1.0}, dict(cross={("Nz", "Hz"): 2.0}), "positive semi-definite"),
    ],
)
def test_relaxation_errors(rates, kwargs, match):
    with pytest.raises(BackboneError, match=match):
        ref.relaxation_superoperator(SpinSystem(("N", "H")), rates, **kwargs)


def test_additive_rates_errors():
    system = SpinSystem(("N", "H"))
    with pytest.raises(BackboneError, match="spin 'C'"):
        ref.additive_rates(system, transverse={"C": 1.0})
    with pytest.raises(BackboneError, match="finite"):
        ref.additive_rates(system, longitudinal={"H": float("nan")})


def test_sequence_and_state_errors():
    system = SpinSystem(("N", "H"))
    with pytest.raises(BackboneError, match=">= 0"):
        Delay(-1e-3)
    with pytest.raises(BackboneError, match="at least one spin"):
        Pulse((), 90.0)
    with pytest.raises(BackboneError, match="twice"):
        Pulse(("N", "N"), 90.0)
    with pytest.raises(BackboneError, match="finite"):
        Pulse("N", float("inf"))
    with pytest.raises(BackboneError, match="unknown"):
        ref.propagate(system, {"Nx": 1.0}, [Pulse("C", 90.0)])
    with pytest.raises(BackboneError, match="Delay or a Pulse"):
        ref.propagate(system, {"Nx": 1.0}, ["wait"])
    with pytest.raises(BackboneError, match="length 16"):
        ref.propagate(system, np.zeros(4), [Delay(1e-3)])
    with pytest.raises(BackboneError, match="relaxation matrix"):
        ref.propagate(system, {"Nx": 1.0}, [Delay(1e-3)], np.zeros((4, 4)))
    with pytest.raises(BackboneError, match="amplitude"):
        ref.state_vector(system, {"Nx": "big"})
    with pytest.raises(BackboneError, match="shape"):
        ref.state_from_density_matrix(system, np.eye(2))
    with pytest.raises(BackboneError, match="Hermitian"):
        ref.state_from_density_matrix(system, np.triu(np.ones((4, 4))))
    with pytest.raises(BackboneError, match="must lie in"):
        ref.constant_time_period(10e-3, 12e-3, "N")
    with pytest.raises(BackboneError, match="unknown"):
        system.coupling("N", "C")


def test_scenario_errors():
    with pytest.raises(BackboneError, match="r_inphase"):
        ref.reference_inept(92.0, 5e-3, r_inphase=-1.0)
    with pytest.raises(BackboneError, match=">= 0"):
        ref.reference_inept(92.0, -5e-3)
    with pytest.raises(BackboneError, match="r_both"):
        ref.reference_branch_transfer(11.0, 7.0, 20e-3, r_inphase=30.0, r_first=5.0)
    with pytest.raises(BackboneError, match="r_mq"):
        ref.reference_mq(10e-3, r_mq=-2.0)
    with pytest.raises(BackboneError, match="must lie in"):
        ref.reference_constant_time(10e-3, 20e-3)
