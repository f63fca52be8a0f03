"""Redfield relaxation terms [s⁻¹] of dipolar and chemical-shift-anisotropy (CSA) interactions.

Every function is a pure, vectorized transcription of a published rate expression. They all take

``j`` : callable
    The spectral density J(ω) [s] as a function of angular frequency [rad s⁻¹], 2/5 factor included, e.g.
    ``lambda w: spectral_density(w, tau_c, s2=s2)`` (:mod:`backbone.relaxation.spectral`).
``omega_i``, ``omega_s`` : float or array [rad s⁻¹]
    *Signed* Larmor frequencies ω = γB0 (:func:`backbone.constants.larmor`) of the observed spin I and of its
    partner S.
``d`` : float or array [rad s⁻¹]
    Dipolar coupling constant (μ0/4π) ħ γI γS / r³ (:func:`backbone.constants.dipolar_constant`).
``c`` : float or array [rad s⁻¹]
    CSA constant ωI Δσ / √3 (:func:`csa_constant`), Δσ the (effective) anisotropy in parts of one.

Sign convention of frequencies
------------------------------
The zero- and double-quantum arguments are formed as ω_I − ω_S and ω_I + ω_S from the *signed* Larmor
frequencies. These are the transition frequencies of the flip-flop (I+S−) and flip-flip (I+S+) operators, so for
15N–1H (γN < 0) the flip-flop term sits at (|γH| + |γN|)·B0 and the flip-flip term at (|γH| − |γN|)·B0, as the
physics requires. With this convention the rigid 15N figures of Kay, Torchia & Bax (1989) at 600 MHz and
τc = 8 ns (r = 1.02 Å, Δσ = −160 ppm) come out as R1 = 1.63 s⁻¹, R2 = 11.8 s⁻¹, NOE = 0.82; with unsigned
magnitudes the NOE would be 0.90. For like spins (1H–1H, 13C–13C) ω_I − ω_S is taken as 0 (shift differences
are negligible against 1/τc) and ω_I + ω_S as 2ω.

Partners of spin S ≠ 1/2 (2H) enter the auto-relaxation of I through ``spin_factor`` = (4/3)·S(S+1)
(:func:`backbone.constants.spin_factor`; 8/3 for 2H), with the partner's own γ (in ``d``) and Larmor frequency
(Abragam, *The Principles of Nuclear Magnetism*, 1961, ch. VIII, eq. 88 and following). Coherences anti-phase with
respect to S (2IxSz, 2IzSz, multiple quantum) are defined for S = 1/2 only.

References
----------
- A. Abragam, *The Principles of Nuclear Magnetism*, Oxford 1961, ch. VIII (dipolar relaxation of unlike and like
  spins, arbitrary partner spin).
- I. Solomon, Phys. Rev. 99, 559 (1955) (two-spin longitudinal relaxation, cross relaxation, NOE).
- L. E. Kay, D. A. Torchia & A. Bax, Biochemistry 28, 8972-8979 (1989) (15N R1, R2, NOE with CSA).
- M. Goldman, J. Magn. Reson. 60, 437-452 (1984) (dipolar/CSA cross-correlation).
- K. Pervushin, R. Riek, G. Wider & K. Wüthrich, Proc. Natl. Acad. Sci. USA 94, 12366-12371 (1997) (TROSY).
- J. Cavanagh, W. J. Fairbrother, A. G. Palmer III, M. Rance & N. J. Skelton, *Protein NMR Spectroscopy*,
  2nd ed., Academic Press 2007, ch. 5 (anti-phase, two-spin-order and multiple-quantum auto-relaxation rates;
  chapter cited from memory).

The anti-phase, two-spin-order and multiple-quantum expressions were re-derived for this package from the
double-commutator (Redfield) form of the same Hamiltonians and agree with the textbook ones; the tests check
them against an independent spin-matrix computation.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "dipolar_r1",
    "dipolar_r2",
    "dipolar_sigma",
    "dipolar_r2_antiphase",
    "dipolar_two_spin_order",
    "dipolar_zero_quantum",
    "dipolar_double_quantum",
    "dipolar_multiple_quantum",
    "steady_state_noe",
    "like_spin_rho",
    "like_spin_sigma",
    "like_spin_r1_nonselective",
    "like_spin_r2",
    "like_spin_r2_antiphase",
    "csa_constant",
    "csa_r1",
    "csa_r2",
    "legendre_p2",
    "dd_csa_eta_xy",
    "dd_csa_eta_z",
    "doublet_component_rates",
]

_SQRT3 = np.sqrt(3.0)


# ---------------------------------------------------------------------------------------------------------
# Heteronuclear dipolar pair I–S (I observed)
# ---------------------------------------------------------------------------------------------------------


def dipolar_r1(j, omega_i, omega_s, d, *, spin_factor=1.0):
    """Longitudinal auto-relaxation of I by an unlike partner S [s⁻¹].

    R1 = k (d²/4) [J(ωI − ωS) + 3J(ωI) + 6J(ωI + ωS)],  k = (4/3) S(S+1)
    (Solomon 1955; Abragam 1961, ch. VIII; Kay, Torchia & Bax 1989). Signed ω, see the module docstring.
    """
    d2 = spin_factor * np.square(d)
    return d2 / 4.0 * (j(omega_i - omega_s) + 3.0 * j(omega_i) + 6.0 * j(omega_i + omega_s))


def dipolar_r2(j, omega_i, omega_s, d, *, spin_factor=1.0):
    """Transverse (in-phase Ix) auto-relaxation of I by an unlike partner S [s⁻¹].

    R2 = k (d²/8) [4J(0) + J(ωI − ωS) + 3J(ωI) + 6J(ωS) + 6J(ωI + ωS)],  k = (4/3) S(S+1)
    (Abragam 1961, ch. VIII; Kay, Torchia & Bax 1989). The 6J(ωS) term comes from longitudinal flips of S.
    """
    d2 = spin_factor * np.square(d)
    return (
        d2
        / 8.0
        * (4.0 * j(0.0) + j(omega_i - omega_s) + 3.0 * j(omega_i) + 6.0 * j(omega_s) + 6.0 * j(omega_i + omega_s))
    )


def dipolar_sigma(j, omega_i, omega_s, d):
    """Cross-relaxation rate σ between Iz and Sz of a spin-½ pair [s⁻¹] (Solomon 1955).

    σ = (d²/4) [6J(ωI + ωS) − J(ωI − ωS)]. Negative for slow tumbling of like spins (spin diffusion).
    """
    return np.square(d) / 4.0 * (6.0 * j(omega_i + omega_s) - j(omega_i - omega_s))


def dipolar_r2_antiphase(j, omega_i, omega_s, d):
    """The I–S dipolar part of the auto-relaxation of the anti-phase coherence 2IxSz [s⁻¹], S = ½.

    (d²/8) [4J(0) + J(ωI − ωS) + 3J(ωI) + 6J(ωI + ωS)]: the in-phase expression without the 6J(ωS) term,
    because a flip of S interconverts 2IxSz with Ix instead of destroying it (Cavanagh et al. 2007, ch. 5).
    The full 2IxSz rate adds the longitudinal rate of S from its other partners and CSA (done by the engine).
    """
    return np.square(d) / 8.0 * (4.0 * j(0.0) + j(omega_i - omega_s) + 3.0 * j(omega_i) + 6.0 * j(omega_i + omega_s))


def dipolar_two_spin_order(j, omega_i, omega_s, d):
    """The I–S dipolar part of the auto-relaxation of two-spin order 2IzSz [s⁻¹], S = ½.

    (3d²/4) [J(ωI) + J(ωS)] (Cavanagh et al. 2007, ch. 5): the zero- and double-quantum flips conserve 2IzSz.
    """
    return 3.0 * np.square(d) / 4.0 * (j(omega_i) + j(omega_s))


def dipolar_zero_quantum(j, omega_i, omega_s, d):
    """The I–S dipolar part of the zero-quantum coherence (I+S− + I−S+) auto-relaxation [s⁻¹], S = ½.

    (d²/8) [2J(ωI − ωS) + 3J(ωI) + 3J(ωS)] (Cavanagh et al. 2007, ch. 5): no J(0) term, the secular
    dipolar coupling commutes with the zero-quantum coherence.
    """
    return np.square(d) / 8.0 * (2.0 * j(omega_i - omega_s) + 3.0 * j(omega_i) + 3.0 * j(omega_s))


def dipolar_double_quantum(j, omega_i, omega_s, d):
    """The I–S dipolar part of the double-quantum coherence (I+S+ + I−S−) auto-relaxation [s⁻¹], S = ½.

    (d²/8) [3J(ωI) + 3J(ωS) + 12J(ωI + ωS)] (Cavanagh et al. 2007, ch. 5).
    """
    return np.square(d) / 8.0 * (3.0 * j(omega_i) + 3.0 * j(omega_s) + 12.0 * j(omega_i + omega_s))


def dipolar_multiple_quantum(j, omega_i, omega_s, d):
    """Mean of the zero- and double-quantum dipolar rates [s⁻¹]: the rate of 2IxSx in an HMQC-type period.

    (d²/8) [J(ωI − ωS) + 3J(ωI) + 3J(ωS) + 6J(ωI + ωS)]. The coherence 2IxSx is half zero- and half
    double-quantum and, in the slow-exchange limit of the two, decays at their mean rate.
    """
    return 0.5 * (dipolar_zero_quantum(j, omega_i, omega_s, d) + dipolar_double_quantum(j, omega_i, omega_s, d))


def steady_state_noe(r1, sigma, gamma_i, gamma_s):
    """Steady-state heteronuclear NOE of I with S saturated: 1 + (γS/γI) σ / R1 (Solomon 1955).

    ``r1`` and ``sigma`` [s⁻¹]; ``gamma_i``, ``gamma_s`` signed [rad s⁻¹ T⁻¹] (so 15N{1H} NOE < 1).
    """
    return 1.0 + (gamma_s / gamma_i) * np.asarray(sigma) / np.asarray(r1)


# ---------------------------------------------------------------------------------------------------------
# Like spins (both of the same isotope, distinct chemical shifts)
# ---------------------------------------------------------------------------------------------------------


def like_spin_rho(j, omega, d):
    """Selective longitudinal rate ρ of one spin of a like pair (only it inverted) [s⁻¹].

    ρ = (d²/4) [J(0) + 3J(ω) + 6J(2ω)] (Solomon 1955; Abragam 1961, ch. VIII). Dominated by J(0) at large τc.
    """
    return np.square(d) / 4.0 * (j(0.0) + 3.0 * j(omega) + 6.0 * j(2.0 * omega))


def like_spin_sigma(j, omega, d):
    """Cross-relaxation σ of a like pair [s⁻¹]: (d²/4) [6J(2ω) − J(0)] (Solomon 1955)."""
    return np.square(d) / 4.0 * (6.0 * j(2.0 * omega) - j(0.0))


def like_spin_r1_nonselective(j, omega, d):
    """Non-selective longitudinal rate ρ + σ (both spins inverted) [s⁻¹]: (3d²/4) [J(ω) + 4J(2ω)].

    Solomon 1955; Abragam 1961, ch. VIII.
    """
    return 3.0 * np.square(d) / 4.0 * (j(omega) + 4.0 * j(2.0 * omega))


def like_spin_r2(j, omega, d):
    """Transverse rate of one spin of a like pair with distinct shifts [s⁻¹].

    R2 = (d²/8) [5J(0) + 9J(ω) + 6J(2ω)] (Abragam 1961, ch. VIII): the unlike-spin expression with ωI = ωS.
    """
    return np.square(d) / 8.0 * (5.0 * j(0.0) + 9.0 * j(omega) + 6.0 * j(2.0 * omega))


def like_spin_r2_antiphase(j, omega, d):
    """The I–S dipolar part of the 2IxSz rate of a weakly coupled like pair [s⁻¹].

    (d²/8) [5J(0) + 3J(ω) + 6J(2ω)]: :func:`like_spin_r2` without the 6J(ω) flip term of S, as for unlike
    spins (:func:`dipolar_r2_antiphase`).
    """
    return np.square(d) / 8.0 * (5.0 * j(0.0) + 3.0 * j(omega) + 6.0 * j(2.0 * omega))


# ---------------------------------------------------------------------------------------------------------
# Chemical-shift anisotropy and its cross-correlation with the dipolar coupling
# ---------------------------------------------------------------------------------------------------------


def csa_constant(omega, delta_sigma):
    """CSA constant c = ω Δσ / √3 [rad s⁻¹] (Kay, Torchia & Bax 1989).

    ``omega`` signed Larmor frequency [rad s⁻¹]; ``delta_sigma`` the anisotropy, or Δσ_eff of a non-axial tensor
    (:attr:`backbone.constants.CSATensor.delta_eff`), in parts of one (ppm × 1e-6).
    """
    return np.asarray(omega, dtype=float) * np.asarray(delta_sigma, dtype=float) / _SQRT3


def csa_r1(j, omega, c):
    """Longitudinal CSA relaxation c² J(ω) [s⁻¹] (Abragam 1961; Kay, Torchia & Bax 1989)."""
    return np.square(c) * j(omega)


def csa_r2(j, omega, c):
    """Transverse CSA relaxation (c²/6) [4J(0) + 3J(ω)] [s⁻¹] (Abragam 1961; Kay, Torchia & Bax 1989)."""
    return np.square(c) / 6.0 * (4.0 * j(0.0) + 3.0 * j(omega))


def legendre_p2(cos_theta):
    """Second Legendre polynomial P2(x) = (3x² − 1)/2."""
    x = np.asarray(cos_theta, dtype=float)
    return 1.5 * x * x - 0.5


def dd_csa_eta_xy(j, omega_i, d, c, theta):
    """Transverse DD/CSA cross-correlation rate η_xy of spin I [s⁻¹] (Goldman 1984).

    η_xy = (d c P2(cos θ) / (2√3)) [4J(0) + 3J(ωI)], θ [rad] the angle of the unique CSA axis to the I–S bond.
    Signed (follows the signs of d and c); the two doublet components of I relax at R ± η_xy.
    """
    return (
        np.asarray(d) * np.asarray(c) * legendre_p2(np.cos(theta)) / (2.0 * _SQRT3) * (4.0 * j(0.0) + 3.0 * j(omega_i))
    )


def dd_csa_eta_z(j, omega_i, d, c, theta):
    """Longitudinal DD/CSA cross-correlation rate η_z (Iz ↔ 2IzSz) [s⁻¹] (Goldman 1984).

    η_z = √3 d c P2(cos θ) J(ωI) = (d c P2 / (2√3)) · 6J(ωI).
    """
    return _SQRT3 * np.asarray(d) * np.asarray(c) * legendre_p2(np.cos(theta)) * j(omega_i)


def doublet_component_rates(r_inphase, r_antiphase, eta_xy):
    """Rates (slow, fast) [s⁻¹] of the two components of I's doublet split by the coupling to S.

    In the basis (Ix, 2IxSz) the relaxation matrix is [[R_in, η], [η, R_anti]]; the components
    Ix ± 2IxSz relax at (R_in + R_anti)/2 ± η and are interconverted at (R_in − R_anti)/2 by the longitudinal
    flips of S. With the components resolved (|R_in − R_anti| ≪ 2π|J|, true for amides) the line widths are
    (R_in + R_anti)/2 ∓ |η_xy| (Goldman 1984; Pervushin et al. 1997): the slow one is the TROSY component.
    """
    mean = 0.5 * (np.asarray(r_inphase) + np.asarray(r_antiphase))
    eta = np.abs(eta_xy)
    return mean - eta, mean + eta
