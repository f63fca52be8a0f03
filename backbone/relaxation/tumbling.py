"""Overall tumbling: the rotational correlation time τc from protein size, temperature and solvent.

Physical core
-------------
Stokes–Einstein–Debye (SED) for a sphere of radius r in a solvent of viscosity η at temperature T,
τc = 1/(6 D_rot) = 4π η r³ / (3 kB T) (Debye, *Polar Molecules*, 1929; Cantor & Schimmel, *Biophysical
Chemistry* II, 1980). Viscosities of H2O and D2O come from the IAPWS formulations through the ``iapws``
package (IAPWS 2008 viscosity of ordinary water with IAPWS-95; IAPWS 2020 viscosity of heavy water), at
atmospheric pressure. τc therefore scales with η/T, so D2O (η about 1.23× that of H2O at 25 °C) and cold
samples tumble slower.

Two ways from mass to radius (``model=``)
-----------------------------------------
``"hydrated-sphere"`` — purely physical: a sphere of the dry protein volume (partial specific volume
0.73 cm³/g, common practice) plus one hydration layer of 3.2 Å (common practice). It gives about 4.3 ns for
8.6 kDa at 25 °C, close to what small globular domains show, but a layer of constant thickness adds
proportionally less to large proteins, so it falls to about 0.35 ns/kDa at 100 kDa, well below the rule of
thumb of 0.5–0.6 ns per kDa at 25 °C (common practice) that measured proteins follow.

``"effective"`` (default) — an effective hydrodynamic volume proportional to mass:
V_eff = F · m · (v̄ + δ·v_w), with v̄ = 0.73 cm³/g, hydration δ = 0.35 g water per g protein
(Kuntz & Kauzmann, Adv. Protein Chem. 28, 239 (1974), 0.3–0.4 g/g, from memory) at v_w = 1 cm³/g, and a
shape/roughness factor F for the larger rotational friction of real, non-spherical, rough proteins compared
with the equal-volume sphere (Halle & Davidovic, PNAS 100, 12135 (2003), from memory, discuss hydration and
roughness in rotational diffusion). **F is calibrated against the rule of thumb (common practice)**: it is
chosen so that τc = 0.5 ns per kDa in H2O at 25 °C, the lower end of the rule, which also meets the ≈ 4 ns
of an 8.6 kDa domain (4.3 ns). F comes out ≈ 1.29 (:func:`calibrated_shape_factor`). At 25 °C in water the
model reproduces its calibration by construction; what it adds is the η/T scaling to other temperatures and
to D2O through the SED core, and an equivalent radius that output can report. v̄, δ and F are taken as
independent of temperature.

Both models estimate a rigid, monomeric, roughly globular protein; flexible tails, oligomers, elongated
multi-domain proteins, crowding and high concentration all make the real τc longer. When τc has been
measured, give it (:func:`given_tau_c`) instead; :class:`TumblingEstimate` records which it was, so output
can say "estimated from mass" or "given".

Public API
----------
``solvent_viscosity``, ``tau_c_stokes_einstein``, ``hydrodynamic_radius``, ``effective_radius``,
``calibrated_shape_factor``, ``tau_c_from_mass``, ``estimate_tau_c``, ``given_tau_c``, ``TumblingEstimate``,
and the constants below.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
from iapws import D2O as _IapwsD2O
from iapws import IAPWS95 as _IapwsH2O
from scipy import constants as _codata

from backbone.constants import KB, Constant
from backbone.errors import BackboneError
from backbone.units import TAU_C_NS, TEMPERATURE_C, ValidRange, kelvin_to_celsius

__all__ = [
    "SOLVENTS",
    "MODELS",
    "DALTON",
    "ATMOSPHERIC_PRESSURE",
    "PARTIAL_SPECIFIC_VOLUME",
    "HYDRATION_SHELL",
    "HYDRATION_MASS_RATIO",
    "WATER_SPECIFIC_VOLUME",
    "TAU_C_PER_MASS_25C",
    "CALIBRATION_TEMPERATURE",
    "MASS_DA",
    "TumblingEstimate",
    "solvent_viscosity",
    "tau_c_stokes_einstein",
    "hydrodynamic_radius",
    "effective_radius",
    "calibrated_shape_factor",
    "tau_c_from_mass",
    "estimate_tau_c",
    "given_tau_c",
]

#: Solvents whose viscosity is known (IAPWS formulations).
SOLVENTS = ("H2O", "D2O")
#: Mass → radius models of :func:`tau_c_from_mass`; the first is the default.
MODELS = ("effective", "hydrated-sphere")

_CODATA = "CODATA 2018 via scipy.constants"
DALTON = Constant("dalton (unified atomic mass unit)", _codata.m_u, "kg", _CODATA)
ATMOSPHERIC_PRESSURE = Constant("standard atmosphere", _codata.atm, "Pa", _CODATA)
PARTIAL_SPECIFIC_VOLUME = Constant(
    "partial specific volume of proteins", 0.73e-3, "m^3 kg^-1", "0.73 cm^3/g, common practice"
)
HYDRATION_SHELL = Constant(
    "hydration shell thickness (one water layer)", 3.2e-10, "m", "about one water diameter, common practice"
)
HYDRATION_MASS_RATIO = Constant(
    "hydration of proteins",
    0.35,
    "kg water per kg protein",
    "Kuntz & Kauzmann, Adv. Protein Chem. 28, 239 (1974): 0.3-0.4 g/g (from memory)",
)
WATER_SPECIFIC_VOLUME = Constant("specific volume of hydration water", 1.0e-3, "m^3 kg^-1", "common practice")
TAU_C_PER_MASS_25C = Constant(
    "tau_c per protein mass in H2O at 25 degC (calibration target of the effective model)",
    0.5e-9 / 1000.0,
    "s Da^-1",
    "rule of thumb 0.5-0.6 ns per kDa at 25 degC, lower end (common practice)",
)
CALIBRATION_TEMPERATURE = Constant("calibration temperature (25 degC)", 298.15, "K", "common practice")

#: Valid protein masses [Da] (a single residue up to a large assembly).
MASS_DA = ValidRange("protein mass", 0.0, 1e7, "Da", low_inclusive=False)

_REFERENCES = {
    "hydrated-sphere": "Stokes-Einstein-Debye sphere of the dry volume (0.73 cm^3/g) plus a 3.2 A hydration shell",
    "effective": (
        "Stokes-Einstein-Debye with an effective volume F*(v + delta*v_w)*m; F calibrated to 0.5 ns/kDa "
        "at 25 degC in H2O (rule of thumb, common practice)"
    ),
}


# ---------------------------------------------------------------------------------------------------------
# Input checks
# ---------------------------------------------------------------------------------------------------------


def _check_solvent(solvent) -> str:
    if solvent not in SOLVENTS:
        raise BackboneError(f"solvent {solvent!r} is not known; allowed are {', '.join(SOLVENTS)}")
    return solvent


def _check_temperature(temperature_k, solvent: str, where: str) -> np.ndarray:
    t = np.asarray(temperature_k, dtype=float)
    if not np.all(np.isfinite(t)):
        raise BackboneError(f"{where}: temperature must be a finite number of kelvin, got {temperature_k!r}")
    TEMPERATURE_C.check(kelvin_to_celsius(t), where=where)
    if solvent == "D2O" and np.any(t < _IapwsD2O.Tt):
        low = kelvin_to_celsius(float(np.min(t)))
        raise BackboneError(
            f"{where}: D2O freezes at {kelvin_to_celsius(_IapwsD2O.Tt):.2f} °C (triple point, IAPWS); "
            f"temperature {low:g} °C is not allowed for D2O, use {kelvin_to_celsius(_IapwsD2O.Tt):.2f}-"
            f"{TEMPERATURE_C.high:g} °C"
        )
    return t


def _check_positive(value, name: str, unit: str) -> np.ndarray:
    a = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(a)) or np.any(a <= 0.0):
        raise BackboneError(f"{name} must be a positive finite number [{unit}], got {value!r}")
    return a


def _check_mass(mass_da) -> np.ndarray:
    try:
        a = np.asarray(mass_da, dtype=float)
    except (TypeError, ValueError) as err:
        raise BackboneError(f"protein mass must be a number of daltons, got {mass_da!r}") from err
    MASS_DA.check(a, where="protein mass")
    return a


def _out(x):
    """Plain float for 0-d results, array otherwise."""
    x = np.asarray(x, dtype=float)
    return float(x) if x.ndim == 0 else x


# ---------------------------------------------------------------------------------------------------------
# Solvent
# ---------------------------------------------------------------------------------------------------------


@functools.lru_cache(maxsize=256)
def _viscosity_scalar(temperature_k: float, solvent: str) -> float:
    cls = _IapwsH2O if solvent == "H2O" else _IapwsD2O
    state = cls(T=temperature_k, P=ATMOSPHERIC_PRESSURE.value * 1e-6)  # iapws takes MPa
    mu = getattr(state, "mu", None)
    if not state.status or mu is None or not math.isfinite(mu) or state.phase != "Liquid":
        raise BackboneError(
            f"no liquid {solvent} viscosity at {temperature_k:g} K and atmospheric pressure (iapws phase "
            f"{getattr(state, 'phase', None)!r})"
        )
    return float(mu)


def solvent_viscosity(temperature_k, solvent: str = "H2O"):
    """Dynamic viscosity η [Pa s] of liquid ``solvent`` (``"H2O"`` or ``"D2O"``) at atmospheric pressure.

    ``temperature_k`` : float or array [K], 0–80 °C (D2O from its triple point, 3.82 °C).
    IAPWS 2008 (H2O, with IAPWS-95 density) and IAPWS 2020 (D2O) formulations via the ``iapws`` package;
    evaluated once per distinct temperature (temperature arrays are small).
    """
    solvent = _check_solvent(solvent)
    t = _check_temperature(temperature_k, solvent, "solvent viscosity")
    unique, inverse = np.unique(t, return_inverse=True)
    mu = np.array([_viscosity_scalar(float(x), solvent) for x in unique])
    return _out(mu[inverse].reshape(t.shape))


# ---------------------------------------------------------------------------------------------------------
# Physical core and radii
# ---------------------------------------------------------------------------------------------------------


def tau_c_stokes_einstein(radius_m, temperature_k, viscosity_pa_s):
    """Rotational correlation time τc = 4π η r³ / (3 kB T) [s] of a sphere (Stokes–Einstein–Debye).

    ``radius_m`` : float or array [m]; ``temperature_k`` : float or array [K]; ``viscosity_pa_s`` : float or
    array [Pa s]; all positive, broadcast together. τc = 1/(6 D_rot) is the correlation time of the
    second-rank orientation function that enters the spectral density.
    """
    r = _check_positive(radius_m, "radius", "m")
    t = _check_positive(temperature_k, "temperature", "K")
    eta = _check_positive(viscosity_pa_s, "viscosity", "Pa s")
    return _out(4.0 * np.pi * eta * r**3 / (3.0 * KB.value * t))


def _sphere_radius(volume_m3):
    return (3.0 * volume_m3 / (4.0 * np.pi)) ** (1.0 / 3.0)


def hydrodynamic_radius(
    mass_da,
    *,
    partial_specific_volume: float = PARTIAL_SPECIFIC_VOLUME.value,
    hydration_shell_m: float = HYDRATION_SHELL.value,
):
    """Radius [m] of the dry protein sphere plus a hydration shell (the ``"hydrated-sphere"`` model).

    ``mass_da`` : float or array [Da]; ``partial_specific_volume`` [m³ kg⁻¹] (0.73e-3, common practice);
    ``hydration_shell_m`` [m] (3.2e-10, one water layer, common practice). r = (3 v̄ m / 4π)^(1/3) + shell.
    """
    m = _check_mass(mass_da) * DALTON.value
    v = _check_positive(partial_specific_volume, "partial specific volume", "m^3 kg^-1")
    shell = np.asarray(hydration_shell_m, dtype=float)
    if not np.all(np.isfinite(shell)) or np.any(shell < 0.0):
        raise BackboneError(f"hydration shell thickness must be >= 0 [m], got {hydration_shell_m!r}")
    return _out(_sphere_radius(v * m) + shell)


def _hydrated_specific_volume(partial_specific_volume: float, hydration: float) -> float:
    return float(partial_specific_volume) + float(hydration) * WATER_SPECIFIC_VOLUME.value


@functools.lru_cache(maxsize=16)
def calibrated_shape_factor(
    *,
    partial_specific_volume: float = PARTIAL_SPECIFIC_VOLUME.value,
    hydration: float = HYDRATION_MASS_RATIO.value,
) -> float:
    """Shape/roughness factor F of the ``"effective"`` model [dimensionless], about 1.29 with the defaults.

    Calibrated against the rule of thumb (common practice): the F for which the SED sphere of volume
    F·m·(v̄ + δ·v_w) gives :data:`TAU_C_PER_MASS_25C` (0.5 ns per kDa) in H2O at 25 °C, i.e.
    F = (τc/m)·kB·T / (η·(v̄ + δ·v_w)·1 Da).
    """
    v_h = _hydrated_specific_volume(
        float(_check_positive(partial_specific_volume, "partial specific volume", "m^3 kg^-1")),
        float(hydration),
    )
    t0 = CALIBRATION_TEMPERATURE.value
    eta0 = solvent_viscosity(t0, "H2O")
    return float(TAU_C_PER_MASS_25C.value * KB.value * t0 / (eta0 * v_h * DALTON.value))


def effective_radius(
    mass_da,
    *,
    partial_specific_volume: float = PARTIAL_SPECIFIC_VOLUME.value,
    hydration: float = HYDRATION_MASS_RATIO.value,
    shape_factor: float | None = None,
):
    """Equivalent-sphere radius [m] of the ``"effective"`` model: V = F·m·(v̄ + δ·v_w).

    ``mass_da`` : float or array [Da]; ``partial_specific_volume`` v̄ [m³ kg⁻¹]; ``hydration`` δ [kg water per
    kg protein]; ``shape_factor`` F [1], default :func:`calibrated_shape_factor` for these v̄ and δ.
    """
    m = _check_mass(mass_da) * DALTON.value
    _check_positive(partial_specific_volume, "partial specific volume", "m^3 kg^-1")
    if not (isinstance(hydration, (int, float)) and math.isfinite(hydration) and hydration >= 0.0):
        raise BackboneError(f"hydration must be >= 0 [kg water per kg protein], got {hydration!r}")
    if shape_factor is None:
        shape_factor = calibrated_shape_factor(
            partial_specific_volume=float(partial_specific_volume), hydration=float(hydration)
        )
    f = float(_check_positive(shape_factor, "shape factor", "1"))
    v_h = _hydrated_specific_volume(partial_specific_volume, hydration)
    return _out(_sphere_radius(f * v_h * m))


# ---------------------------------------------------------------------------------------------------------
# From mass, or given
# ---------------------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class TumblingEstimate:
    """How τc was obtained, for output: "estimated from mass" (with model and inputs) or "given".

    ``tau_c_s`` [s]; ``radius_m`` [m], ``viscosity_pa_s`` [Pa s], ``mass_da`` [Da] are None when τc was given;
    ``temperature_k`` [K] and ``solvent`` may be None when not known. Array fields broadcast together.
    """

    tau_c_s: float | np.ndarray
    origin: str
    model: str | None = None
    mass_da: float | np.ndarray | None = None
    radius_m: float | np.ndarray | None = None
    viscosity_pa_s: float | np.ndarray | None = None
    temperature_k: float | np.ndarray | None = None
    solvent: str | None = None
    reference: str = ""

    def as_dict(self) -> dict:
        """Plain-data record (floats or lists) with τc also in ns, for JSON output."""

        def plain(x):
            if x is None or isinstance(x, str):
                return x
            a = np.asarray(x, dtype=float)
            return float(a) if a.ndim == 0 else a.tolist()

        return {
            "tau_c_s": plain(self.tau_c_s),
            "tau_c_ns": plain(np.asarray(self.tau_c_s) * 1e9),
            "origin": self.origin,
            "model": self.model,
            "mass_da": plain(self.mass_da),
            "radius_m": plain(self.radius_m),
            "viscosity_pa_s": plain(self.viscosity_pa_s),
            "temperature_k": plain(self.temperature_k),
            "solvent": self.solvent,
            "reference": self.reference,
        }

    def describe(self) -> str:
        """One line for reports, e.g. ``tau_c 4.30 ns, estimated from mass 8.6 kDa (effective model, ...)``."""

        def span(x, scale, fmt):
            a = np.asarray(x, dtype=float).ravel() * scale
            lo, hi = float(a.min()), float(a.max())
            return format(lo, fmt) if lo == hi else f"{format(lo, fmt)}-{format(hi, fmt)}"

        text = f"tau_c {span(self.tau_c_s, 1e9, '.3g')} ns, {self.origin}"
        if self.origin == "given":
            return text
        return (
            f"{text} {span(self.mass_da, 1e-3, '.4g')} kDa ({self.model} model: r = "
            f"{span(self.radius_m, 1e9, '.3g')} nm, viscosity {span(self.viscosity_pa_s, 1e3, '.4g')} mPa s, "
            f"{span(self.temperature_k, 1.0, '.2f')} K, {self.solvent})"
        )


def estimate_tau_c(mass_da, temperature_k, *, solvent: str = "H2O", model: str = "effective") -> TumblingEstimate:
    """τc estimated from protein mass, with the record of how (see the module docstring for the models).

    ``mass_da`` : float or array [Da], 0 < m ≤ 1e7; ``temperature_k`` : float or array [K], 0–80 °C;
    ``solvent`` ``"H2O"`` or ``"D2O"``; ``model`` one of :data:`MODELS`. Mass and temperature broadcast.
    """
    if model not in MODELS:
        raise BackboneError(f"tumbling model {model!r} is not known; allowed are {', '.join(MODELS)}")
    solvent = _check_solvent(solvent)
    mass = _check_mass(mass_da)
    _check_temperature(temperature_k, solvent, "tau_c from mass")
    eta = solvent_viscosity(temperature_k, solvent)
    radius = hydrodynamic_radius(mass) if model == "hydrated-sphere" else effective_radius(mass)
    tau = tau_c_stokes_einstein(radius, temperature_k, eta)
    return TumblingEstimate(
        tau_c_s=tau,
        origin="estimated from mass",
        model=model,
        mass_da=_out(mass),
        radius_m=radius,
        viscosity_pa_s=eta,
        temperature_k=_out(temperature_k),
        solvent=solvent,
        reference=_REFERENCES[model],
    )


def tau_c_from_mass(mass_da, temperature_k, *, solvent: str = "H2O", model: str = "effective"):
    """Rotational correlation time τc [s] (float or array) of a protein of ``mass_da`` [Da].

    Shorthand for ``estimate_tau_c(...).tau_c_s``; same arguments and checks.
    """
    return estimate_tau_c(mass_da, temperature_k, solvent=solvent, model=model).tau_c_s


def given_tau_c(tau_c_s, *, temperature_k=None, solvent: str | None = None) -> TumblingEstimate:
    """Record for a τc [s] the user gave (checked against 0.1–500 ns); temperature and solvent optional."""
    try:
        tau = np.asarray(tau_c_s, dtype=float)
    except (TypeError, ValueError) as err:
        raise BackboneError(f"tau_c must be a number of seconds, got {tau_c_s!r}") from err
    TAU_C_NS.check(tau * 1e9, where="given tau_c")
    if solvent is not None:
        _check_solvent(solvent)
    if temperature_k is not None:
        _check_temperature(temperature_k, solvent or "H2O", "given tau_c")
    return TumblingEstimate(
        tau_c_s=_out(tau),
        origin="given",
        temperature_k=None if temperature_k is None else _out(temperature_k),
        solvent=solvent,
        reference="given by the user",
    )
