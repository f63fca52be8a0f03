"""Model-free spectral density against the Lipari-Szabo formula and its textbook limits."""

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import integrate

from backbone.errors import BackboneError
from backbone.relaxation.spectral import rigid_spectral_density, spectral_density

TAU_C = np.array([0.5e-9, 4e-9, 8e-9, 30e-9, 200e-9])
OMEGA = 2 * np.pi * np.array([0.0, 60.8e6, 150.9e6, 600e6, 1.2e9])


def test_zero_frequency_is_two_fifths_tau_c():
    # J(0) = (2/5) tau_c for a rigid isotropic rotor (Abragam 1961, ch. VIII; Lipari & Szabo, JACS 104, 4546, 1982).
    assert_allclose(spectral_density(0.0, TAU_C), 0.4 * TAU_C, rtol=1e-15)


@pytest.mark.parametrize("tau_e", [0.0, 20e-12, 1e-9])
def test_order_parameter_one_is_rigid(tau_e):
    # S^2 = 1: the internal term drops out and J is the rigid-rotor Lorentzian (2/5) tau/(1 + w^2 tau^2)
    # (Lipari & Szabo 1982, eq. 35), written out here.
    w, tc = np.meshgrid(OMEGA, TAU_C)
    expected = 0.4 * tc / (1 + (w * tc) ** 2)
    assert_allclose(spectral_density(w, tc, s2=1.0, tau_e=tau_e), expected, rtol=1e-14)
    assert_allclose(rigid_spectral_density(w, tc), expected, rtol=1e-14)


def test_lipari_szabo_formula():
    # J(w) = (2/5)[S2 tc/(1+w^2 tc^2) + (1-S2) t/(1+w^2 t^2)], 1/t = 1/tc + 1/te (Lipari & Szabo 1982, eq. 35).
    s2, te = 0.82, 45e-12
    w, tc = np.meshgrid(OMEGA, TAU_C)
    t = 1.0 / (1.0 / tc + 1.0 / te)
    expected = 0.4 * (s2 * tc / (1 + (w * tc) ** 2) + (1 - s2) * t / (1 + (w * t) ** 2))
    assert_allclose(spectral_density(w, tc, s2=s2, tau_e=te), expected, rtol=1e-14)


def test_zero_internal_time_scales_by_order_parameter():
    # tau_e -> 0: the internal correlation function decays instantly, J = (2/5) S2 tc/(1+w^2 tc^2)
    # (Lipari & Szabo 1982, the "extreme narrowing of internal motion" limit).
    w, tc = np.meshgrid(OMEGA, TAU_C)
    assert_allclose(spectral_density(w, tc, s2=0.7, tau_e=0.0), 0.7 * 0.4 * tc / (1 + (w * tc) ** 2), rtol=1e-14)


@pytest.mark.parametrize("s2,tau_e", [(1.0, 0.0), (0.6, 100e-12), (0.3, 2e-9)])
def test_area_is_correlation_at_time_zero(s2, tau_e):
    # The rank-2 orientational correlation function starts at C(0) = 1/5 whatever the motion (Abragam 1961,
    # ch. VIII; Lipari & Szabo 1982: C(0) = S2/5 + (1-S2)/5). J is its two-sided Fourier transform, so
    # (1/2pi) * integral of J over all w = C(0): the integral over w >= 0 is pi/5. Integrated in ln(w) to cover
    # both Lorentzian widths; below 1 rad/s the integrand adds less than 1e-8 of the total.
    tc = 5e-9

    def integrand(u):
        w = np.exp(u)
        return spectral_density(w, tc, s2=s2, tau_e=tau_e) * w

    area, _ = integrate.quad(integrand, 0.0, np.log(1e16), limit=500)
    assert_allclose(area, np.pi / 5, rtol=1e-6)


def test_even_in_omega_and_broadcasts():
    tc = TAU_C[:, None]
    w = OMEGA[None, :]
    j = spectral_density(w, tc, s2=np.array([0.9]), tau_e=20e-12)
    assert j.shape == (TAU_C.size, OMEGA.size)
    assert_allclose(spectral_density(-w, tc, s2=0.9, tau_e=20e-12), j, rtol=0)


@pytest.mark.parametrize("kwargs", [{"s2": 1.2}, {"s2": -0.1}, {"s2": np.nan}, {"tau_e": -1e-12}, {"tau_e": np.inf}])
def test_invalid_model_free_parameters(kwargs):
    with pytest.raises(BackboneError, match=r"s2|tau_e"):
        spectral_density(0.0, 1e-9, **kwargs)
