"""Tumbling: solvent viscosity, the Stokes-Einstein-Debye core, mass-to-tau_c models and input checks."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from iapws import D2O, IAPWS95
from numpy.testing import assert_allclose
from scipy import constants as sc

import backbone.relaxation.tumbling as tumbling_module
from backbone.errors import BackboneError
from backbone.relaxation.tumbling import (
    MODELS,
    TumblingEstimate,
    calibrated_shape_factor,
    effective_radius,
    estimate_tau_c,
    given_tau_c,
    hydrodynamic_radius,
    solvent_viscosity,
    tau_c_from_mass,
    tau_c_stokes_einstein,
)

T25 = 298.15  # 25 °C in K (ITS-90: 0 °C = 273.15 K)
P_MPA = 0.101325  # one standard atmosphere in MPa (definition)


def iapws_viscosity(t_k: float, solvent: str = "H2O") -> float:
    """Viscosity straight from the iapws package, as an outside reference for the module's wrapper."""
    cls = IAPWS95 if solvent == "H2O" else D2O
    return cls(T=t_k, P=P_MPA).mu


def sed(r, t, eta):
    """Stokes-Einstein-Debye tau_c = 4 pi eta r^3 / (3 kB T) (Debye 1929; Cantor & Schimmel 1980)."""
    return 4.0 * math.pi * eta * r**3 / (3.0 * sc.k * t)


# ---------------------------------------------------------------------------------------------------------
# Solvent viscosity
# ---------------------------------------------------------------------------------------------------------


def test_water_viscosity_at_25c_is_the_handbook_value():
    # CRC Handbook of Chemistry and Physics, viscosity of water: 0.890 mPa s at 25 °C.
    assert_allclose(solvent_viscosity(T25), 0.890e-3, rtol=0.005)


@pytest.mark.parametrize(
    "t_c, eta_mpa_s",
    # CRC Handbook of Chemistry and Physics, viscosity of water at 0.1 MPa (from memory).
    [(0.0, 1.793), (10.0, 1.307), (20.0, 1.002), (40.0, 0.653), (60.0, 0.466), (80.0, 0.354)],
)
def test_water_viscosity_follows_the_handbook_table(t_c, eta_mpa_s):
    assert_allclose(solvent_viscosity(t_c + 273.15), eta_mpa_s * 1e-3, rtol=0.005)


def test_heavy_water_is_about_a_quarter_more_viscous():
    # CRC Handbook: D2O 1.095 mPa s (from memory) vs H2O 0.890 mPa s at 25 °C, ratio about 1.23.
    ratio = solvent_viscosity(T25, "D2O") / solvent_viscosity(T25, "H2O")
    assert 1.22 <= ratio <= 1.25


def test_viscosity_is_vectorized_over_temperature():
    t = np.array([[278.15, 298.15], [298.15, 310.15]])
    eta = solvent_viscosity(t)
    assert eta.shape == t.shape
    expected = np.array([[iapws_viscosity(x) for x in row] for row in t])
    assert_allclose(eta, expected, rtol=1e-12)
    assert isinstance(solvent_viscosity(T25), float)


def test_viscosity_falls_with_temperature():
    eta = solvent_viscosity(np.linspace(278.15, 350.0, 6), "D2O")
    assert np.all(np.diff(eta) < 0)


# ---------------------------------------------------------------------------------------------------------
# Stokes-Einstein-Debye core and radii
# ---------------------------------------------------------------------------------------------------------


def test_sed_core_is_the_textbook_formula():
    assert_allclose(tau_c_stokes_einstein(2.0e-9, T25, 0.89e-3), sed(2.0e-9, T25, 0.89e-3), rtol=1e-12)


def test_sed_core_broadcasts():
    r = np.array([1.5e-9, 2.0e-9, 3.0e-9])[:, None]
    t = np.array([280.0, 300.0])[None, :]
    got = tau_c_stokes_einstein(r, t, 1.0e-3)
    assert got.shape == (3, 2)
    assert_allclose(got, 4.0 * np.pi * 1.0e-3 * r**3 / (3.0 * sc.k * t), rtol=1e-12)


@settings(max_examples=50, deadline=None)
@given(
    r=st.floats(1e-10, 1e-8),
    scale=st.floats(0.5, 2.0),
    eta=st.floats(3e-4, 2e-3),
    t=st.floats(273.15, 353.15),
)
def test_sed_scales_as_r_cubed_and_eta_over_t(r, scale, eta, t):
    base = tau_c_stokes_einstein(r, t, eta)
    assert_allclose(tau_c_stokes_einstein(r * scale, t, eta), base * scale**3, rtol=1e-10)
    assert_allclose(tau_c_stokes_einstein(r, t * scale, eta * scale), base, rtol=1e-10)


@pytest.mark.parametrize("mass_da", [5e3, 8.6e3, 42e3, 100e3])
def test_hydrodynamic_radius_is_dry_sphere_plus_shell(mass_da):
    # Dry volume from the partial specific volume 0.73 cm^3/g (common practice): V = M v / N_A.
    volume_m3 = mass_da * 0.73 / sc.N_A * 1e-6
    r_dry = (3.0 * volume_m3 / (4.0 * math.pi)) ** (1.0 / 3.0)
    assert_allclose(hydrodynamic_radius(mass_da), r_dry + 3.2e-10, rtol=1e-9)
    assert_allclose(hydrodynamic_radius(mass_da, hydration_shell_m=0.0), r_dry, rtol=1e-9)


def test_hydrated_sphere_model_is_pure_sed():
    masses = np.array([5e3, 8.6e3, 50e3])
    for t in (283.15, T25, 310.15):
        for solvent in ("H2O", "D2O"):
            r = (3.0 * masses * 0.73e-6 / sc.N_A / (4.0 * math.pi)) ** (1.0 / 3.0) + 3.2e-10
            got = tau_c_from_mass(masses, t, solvent=solvent, model="hydrated-sphere")
            assert_allclose(got, sed(r, t, iapws_viscosity(t, solvent)), rtol=1e-9)


def test_hydrated_sphere_gives_about_4_ns_for_8_6_kda():
    # An 8.6 kDa globular domain tumbles with tau_c of about 4 ns at 25-27 °C in water (Tjandra, Feller,
    # Pastor & Bax, J. Am. Chem. Soc. 117, 12562 (1995), about 4.1 ns; from memory).
    assert_allclose(tau_c_from_mass(8.6e3, T25, model="hydrated-sphere"), 4.0e-9, rtol=0.15)


# ---------------------------------------------------------------------------------------------------------
# The effective model
# ---------------------------------------------------------------------------------------------------------


def test_effective_model_definition():
    # tau_c = F eta m (v + delta v_w) / (kB T) with F set by 0.5 ns/kDa at 25 °C in water, so
    # tau_c = 0.5 ns/kDa * M * (eta/T) / (eta_25/298.15).
    eta25 = iapws_viscosity(T25)
    for t, solvent in [(T25, "H2O"), (283.15, "H2O"), (310.15, "D2O")]:
        expected = 0.5e-12 * 20e3 * (iapws_viscosity(t, solvent) / t) / (eta25 / T25)
        assert_allclose(tau_c_from_mass(20e3, t, solvent=solvent), expected, rtol=1e-9)


def test_calibrated_shape_factor_recomputed():
    # F = (tau_c/m) kB T / (eta (v + delta v_w) m_u) with 0.5 ns/kDa, v = 0.73 cm^3/g, delta = 0.35 g/g.
    f = 0.5e-12 * sc.k * T25 / (iapws_viscosity(T25) * (0.73e-3 + 0.35e-3 * 1.0) * sc.m_u)
    assert_allclose(calibrated_shape_factor(), f, rtol=1e-12)
    # The factor describes moderate asphericity and roughness, not a gross error: between 1 and 2.
    assert 1.0 < calibrated_shape_factor() < 2.0


def test_effective_radius_matches_its_volume():
    f = calibrated_shape_factor()
    volume = f * 30e3 * sc.m_u * (0.73e-3 + 0.35e-3)
    assert_allclose(effective_radius(30e3), (3.0 * volume / (4.0 * math.pi)) ** (1.0 / 3.0), rtol=1e-12)
    assert_allclose(effective_radius(30e3, shape_factor=1.0), (3.0 * volume / f / (4.0 * math.pi)) ** (1 / 3), rtol=1e-12)


@pytest.mark.parametrize("mass_kda", [5, 6.5, 8.6, 10, 14, 20, 30, 42, 50, 60, 80, 100])
def test_rule_of_thumb_across_5_to_100_kda(mass_kda):
    # Rule of thumb tau_c [ns] = 0.6 x mass [kDa] in water at 25 °C (common practice), to within 30 %.
    tau_ns = tau_c_from_mass(mass_kda * 1e3, T25) * 1e9
    assert_allclose(tau_ns, 0.6 * mass_kda, rtol=0.30)


def test_effective_model_near_4_ns_for_8_6_kda():
    # Tjandra, Feller, Pastor & Bax 1995 (from memory): about 4.1 ns for an 8.6 kDa domain.
    assert_allclose(tau_c_from_mass(8.6e3, T25), 4.0e-9, rtol=0.10)


@pytest.mark.parametrize("model", MODELS)
def test_tau_c_scales_with_eta_over_t(model):
    # Stokes-Einstein-Debye: at fixed size tau_c is proportional to eta/T.
    t1, t2 = 283.15, 318.15
    ratio = tau_c_from_mass(25e3, t1, model=model) / tau_c_from_mass(25e3, t2, model=model)
    assert_allclose(ratio, (iapws_viscosity(t1) / t1) / (iapws_viscosity(t2) / t2), rtol=1e-9)


@pytest.mark.parametrize("model", MODELS)
def test_heavy_water_tumbles_slower(model):
    h2o = tau_c_from_mass(25e3, T25, model=model)
    d2o = tau_c_from_mass(25e3, T25, solvent="D2O", model=model)
    # CRC Handbook viscosities at 25 °C (0.890 and about 1.095 mPa s, the latter from memory): about 1.23x.
    assert 1.22 <= d2o / h2o <= 1.25


def test_cold_samples_tumble_slower():
    tau = tau_c_from_mass(25e3, np.array([278.15, 298.15, 310.15]))
    assert tau[0] > tau[1] > tau[2]
    # CRC Handbook viscosity of water: 1.519 mPa s at 5 °C (from memory), 0.890 at 25 °C.
    assert_allclose(tau[0] / tau[1], (1.519 / 278.15) / (0.890 / 298.15), rtol=0.01)


def test_mass_and_temperature_broadcast():
    masses = np.array([10e3, 20e3, 40e3])[:, None]
    temps = np.array([288.15, 298.15])[None, :]
    tau = tau_c_from_mass(masses, temps)
    assert tau.shape == (3, 2)
    eta = np.array([iapws_viscosity(t) for t in temps.ravel()])[None, :]
    assert_allclose(tau, 0.5e-12 * masses * (eta / temps) / (iapws_viscosity(T25) / T25), rtol=1e-9)
    assert isinstance(tau_c_from_mass(10e3, T25), float)


# ---------------------------------------------------------------------------------------------------------
# Records
# ---------------------------------------------------------------------------------------------------------


def test_estimate_records_how_tau_c_was_obtained():
    est = estimate_tau_c(8.6e3, T25, solvent="H2O", model="hydrated-sphere")
    assert isinstance(est, TumblingEstimate)
    assert est.origin == "estimated from mass" and est.model == "hydrated-sphere" and est.solvent == "H2O"
    assert_allclose(est.viscosity_pa_s, iapws_viscosity(T25), rtol=1e-12)
    assert_allclose(est.tau_c_s, sed(est.radius_m, T25, est.viscosity_pa_s), rtol=1e-12)
    d = est.as_dict()
    assert d["origin"] == "estimated from mass" and d["mass_da"] == 8.6e3
    assert_allclose(d["tau_c_ns"], est.tau_c_s * 1e9, rtol=1e-12)
    text = est.describe()
    assert "estimated from mass" in text and "8.6 kDa" in text and "hydrated-sphere" in text


def test_estimate_with_arrays_describes_ranges():
    est = estimate_tau_c([10e3, 20e3], [288.15, 298.15])
    assert est.as_dict()["mass_da"] == [10e3, 20e3]
    assert "10-20 kDa" in est.describe()


def test_given_tau_c_record():
    rec = given_tau_c(12e-9, temperature_k=T25, solvent="D2O")
    assert rec.origin == "given" and rec.tau_c_s == 12e-9 and rec.model is None and rec.radius_m is None
    assert rec.describe() == "tau_c 12 ns, given"
    assert rec.as_dict()["tau_c_ns"] == pytest.approx(12.0)


# ---------------------------------------------------------------------------------------------------------
# Errors
# ---------------------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "call, message",
    [
        (lambda: solvent_viscosity(T25, "CH3OH"), r"solvent 'CH3OH' is not known; allowed are H2O, D2O"),
        (lambda: solvent_viscosity(363.15), r"temperature = 90 °C is outside the allowed range \[0, 80\] °C"),
        (lambda: solvent_viscosity(268.15), r"temperature = -5 °C is outside the allowed range \[0, 80\] °C"),
        (lambda: solvent_viscosity(float("nan")), r"temperature must be a finite number"),
        (lambda: solvent_viscosity(275.15, "D2O"), r"D2O freezes at 3\.82 °C .* use 3\.82-80 °C"),
        (lambda: tau_c_from_mass(0.0, T25), r"protein mass = 0 Da is outside the allowed range \(0, 1e\+07\] Da"),
        (lambda: tau_c_from_mass(-5e3, T25), r"protein mass = -5000 Da is outside"),
        (lambda: tau_c_from_mass(2e7, T25), r"protein mass = 2e\+07 Da is outside"),
        (lambda: tau_c_from_mass("big", T25), r"protein mass must be a number of daltons, got 'big'"),
        (lambda: tau_c_from_mass(2e4, 373.15), r"tau_c from mass: temperature = 100 °C is outside"),
        (lambda: tau_c_from_mass(2e4, T25, solvent="DMSO"), r"solvent 'DMSO' is not known; allowed are H2O, D2O"),
        (lambda: tau_c_from_mass(2e4, T25, model="ellipsoid"),
         r"tumbling model 'ellipsoid' is not known; allowed are effective, hydrated-sphere"),
        (lambda: tau_c_stokes_einstein(-1e-9, T25, 1e-3), r"radius must be a positive finite number \[m\]"),
        (lambda: tau_c_stokes_einstein(1e-9, 0.0, 1e-3), r"temperature must be a positive finite number \[K\]"),
        (lambda: tau_c_stokes_einstein(1e-9, T25, -1e-3), r"viscosity must be a positive finite number \[Pa s\]"),
        (lambda: hydrodynamic_radius(1e4, hydration_shell_m=-1e-10), r"hydration shell thickness must be >= 0"),
        (lambda: hydrodynamic_radius(1e4, partial_specific_volume=0.0), r"partial specific volume must be a positive"),
        (lambda: effective_radius(1e4, hydration=-0.1), r"hydration must be >= 0 \[kg water per kg protein\]"),
        (lambda: effective_radius(1e4, shape_factor=0.0), r"shape factor must be a positive finite number"),
        (lambda: effective_radius(1e4, partial_specific_volume=-1.0), r"partial specific volume must be a positive"),
        (lambda: given_tau_c(1e-3), r"given tau_c: tau_c = 1e\+06 ns is outside the allowed range \[0\.1, 500\] ns"),
        (lambda: given_tau_c("slow"), r"tau_c must be a number of seconds, got 'slow'"),
        (lambda: given_tau_c(8e-9, solvent="glycerol"), r"solvent 'glycerol' is not known"),
        (lambda: given_tau_c(8e-9, temperature_k=400.0), r"given tau_c: temperature = 126\.85 °C is outside"),
    ],
)
def test_errors_name_value_and_allowed(call, message):
    with pytest.raises(BackboneError, match=message):
        call()


def test_no_liquid_state_is_an_error(monkeypatch):
    class _Frozen:
        def __init__(self, T, P):
            self.status, self.phase, self.mu = 1, "Solid", None

    monkeypatch.setattr(tumbling_module, "_IapwsH2O", _Frozen)
    tumbling_module._viscosity_scalar.cache_clear()
    try:
        with pytest.raises(BackboneError, match=r"no liquid H2O viscosity at 300 K .*'Solid'"):
            solvent_viscosity(300.0)
    finally:
        tumbling_module._viscosity_scalar.cache_clear()
