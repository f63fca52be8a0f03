"""Physical constants and NMR parameters, each with its value, unit and reference in one place.

Values are SI (rad s⁻¹ T⁻¹, m, dimensionless shielding in parts of one) unless the unit says otherwise.
Derived quantities (Larmor frequencies, dipolar constants) are computed from these primary values, never
re-typed. Fundamental constants come from CODATA through :mod:`scipy.constants`.

Sign conventions
----------------
Gyromagnetic ratios carry their physical sign (γ(15N) < 0). :func:`larmor` returns the signed angular
frequency ω = γ·B0, so sums and differences such as ω_H − ω_N come out with the physical magnitude
|γ_H − γ_N|·B0 (for 15N the "zero-quantum" frequency is the *sum* of the magnitudes). Spectral densities are
even in ω, so the overall sign convention (ω = −γB0 or +γB0) does not matter, only the relative sign.

CSA values are anisotropies Δσ = σ_∥ − σ_⊥ in parts of one (ppm × 1e-6) for axial tensors, or principal
components (σ11, σ22, σ33) for non-axial tensors, from which :func:`effective_csa` forms Δσ_eff.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import constants as _codata

from backbone.errors import BackboneError

__all__ = [
    "Constant",
    "CSATensor",
    "ISOTOPES",
    "MU0",
    "HBAR",
    "KB",
    "AVOGADRO",
    "GAMMA",
    "SPIN",
    "NATURAL_ABUNDANCE",
    "XI_IUPAC",
    "XI_DSS",
    "BOND",
    "CSA",
    "b0_from_proton_mhz",
    "proton_mhz_from_b0",
    "field_to_b0",
    "larmor",
    "larmor_hz",
    "dipolar_constant",
    "effective_csa",
    "spin_factor",
]


@dataclass(frozen=True)
class Constant:
    """A number with its unit and its source.

    Behaves as a float in arithmetic (``float(c)``, ``c * 2``) so physics code can use it directly.
    """

    name: str
    value: float
    unit: str
    reference: str

    def __float__(self) -> float:
        return float(self.value)

    def __mul__(self, other):
        return self.value * other

    __rmul__ = __mul__

    def __truediv__(self, other):
        return self.value / other

    def __rtruediv__(self, other):
        return other / self.value

    def __neg__(self):
        return -self.value

    def __pow__(self, other):
        return self.value**other


_CODATA = "CODATA 2018 via scipy.constants"
_HARRIS = "Harris, Becker, Cabral de Menezes, Goodfellow & Granger, Pure Appl. Chem. 73, 1795-1818 (2001), Table 1"
_MARKLEY = (
    "Markley, Bax, Arata, Hilbers, Kaptein, Sykes, Wright & Wüthrich, Pure Appl. Chem. 70, 117-142 (1998), Table 2"
)

#: Isotopes the package knows, by their usual labels.
ISOTOPES = ("1H", "2H", "13C", "15N")

MU0 = Constant("vacuum magnetic permeability", _codata.mu_0, "N A^-2", _CODATA)
HBAR = Constant("reduced Planck constant", _codata.hbar, "J s", _CODATA)
KB = Constant("Boltzmann constant", _codata.k, "J K^-1", _CODATA)
AVOGADRO = Constant("Avogadro constant", _codata.N_A, "mol^-1", _CODATA)

#: Gyromagnetic ratios [rad s⁻¹ T⁻¹], physical sign kept. Harris et al. 2001 list γ/10^7.
GAMMA = {
    "1H": Constant("gamma 1H", 26.7522128e7, "rad s^-1 T^-1", _HARRIS),
    "2H": Constant("gamma 2H", 4.10662791e7, "rad s^-1 T^-1", _HARRIS),
    "13C": Constant("gamma 13C", 6.728284e7, "rad s^-1 T^-1", _HARRIS),
    "15N": Constant("gamma 15N", -2.71261804e7, "rad s^-1 T^-1", _HARRIS),
}

#: Spin quantum numbers.
SPIN = {
    "1H": Constant("spin 1H", 0.5, "1", _HARRIS),
    "2H": Constant("spin 2H", 1.0, "1", _HARRIS),
    "13C": Constant("spin 13C", 0.5, "1", _HARRIS),
    "15N": Constant("spin 15N", 0.5, "1", _HARRIS),
}

#: Natural abundance [fraction of one] of the magnetic isotope of each element.
NATURAL_ABUNDANCE = {
    "1H": Constant("natural abundance 1H", 0.999885, "1", _HARRIS),
    "2H": Constant("natural abundance 2H", 0.000115, "1", _HARRIS),
    "13C": Constant("natural abundance 13C", 0.0107, "1", _HARRIS),
    "15N": Constant("natural abundance 15N", 0.00368, "1", _HARRIS),
}

#: Frequency ratios Ξ [fraction of one] of the IUPAC primary references (TMS for 1H/2H/13C,
#: CH3NO2 for 15N), values of Harris et al. 2001 Table 1 (given there in %).
XI_IUPAC = {
    "1H": Constant("Xi 1H (TMS)", 1.00000000, "1", _HARRIS),
    "2H": Constant("Xi 2H (TMS-d12)", 0.15350609, "1", _HARRIS),
    "13C": Constant("Xi 13C (TMS)", 0.25145020, "1", _HARRIS),
    "15N": Constant("Xi 15N (CH3NO2)", 0.10136767, "1", _HARRIS),
}

#: Frequency ratios Ξ of the indirect references used in biomolecular NMR (DSS for 1H, 2H and 13C, liquid
#: NH3 for 15N), Markley et al. 1998.
XI_DSS = {
    "1H": Constant("Xi 1H (DSS)", 1.000000000, "1", _MARKLEY),
    "2H": Constant("Xi 2H (DSS)", 0.153506088, "1", _MARKLEY),
    "13C": Constant("Xi 13C (DSS)", 0.251449530, "1", _MARKLEY),
    "15N": Constant("Xi 15N (liquid NH3)", 0.101329118, "1", _MARKLEY),
}

_ENGH = "Engh & Huber, Acta Cryst. A47, 392-400 (1991), Table 3 (backbone bond lengths)"
#: Bond lengths and through-space distances [m] used by the dipolar terms.
BOND = {
    "N-H": Constant("N-H bond", 1.02e-10, "m", "Kay, Torchia & Bax, Biochemistry 28, 8972 (1989); common practice"),
    "N-H_vib": Constant(
        "N-H effective (vibrationally averaged)",
        1.04e-10,
        "m",
        "Ottiger & Bax, J. Am. Chem. Soc. 120, 12334 (1998), r_eff 1.041 Å (from memory)",
    ),
    "CA-HA": Constant("CA-HA bond", 1.09e-10, "m", "common practice (neutron-diffraction C-H length)"),
    "CB-HB": Constant("CB-HB bond", 1.09e-10, "m", "common practice (neutron-diffraction C-H length)"),
    "N-CA": Constant("N-CA bond", 1.458e-10, "m", _ENGH),
    "CA-C": Constant("CA-C bond", 1.525e-10, "m", _ENGH),
    "C-N": Constant("C-N peptide bond", 1.329e-10, "m", _ENGH),
    "C-O": Constant("C=O bond", 1.231e-10, "m", _ENGH),
    "CA-CB": Constant("CA-CB bond", 1.530e-10, "m", _ENGH),
    "C-HN": Constant("C'(i-1) to HN(i) distance", 2.04e-10, "m", "peptide-plane geometry from Engh & Huber 1991 bonds and angles (common practice)"),
    "CA-HN": Constant("CA(i) to HN(i) distance", 2.15e-10, "m", "law of cosines on Engh & Huber 1991 N-CA 1.458 A, N-H 1.02 A, CA-N-H 119.15 deg"),
    "C-CA": Constant("C'(i) to CA(i) distance", 1.525e-10, "m", _ENGH),
}


@dataclass(frozen=True)
class CSATensor:
    """A chemical-shift tensor, given by its principal components [parts of one].

    For an axial tensor give ``delta`` (σ_∥ − σ_⊥) only; for a non-axial one give ``principal`` (σ11, σ22, σ33).
    ``angle_deg`` is the angle of the unique axis to the bond the cross-correlated dipolar term uses.
    """

    name: str
    reference: str
    delta: float | None = None
    principal: tuple[float, float, float] | None = None
    angle_deg: float = 0.0

    def __post_init__(self):
        if (self.delta is None) == (self.principal is None):
            raise BackboneError(f"CSA tensor {self.name!r}: give exactly one of delta or principal")

    @property
    def delta_eff(self) -> float:
        """Effective anisotropy Δσ_eff [parts of one]; equals Δσ for an axial tensor."""
        if self.delta is not None:
            return float(self.delta)
        return float(effective_csa(self.principal))


def effective_csa(principal) -> float:
    """Δσ_eff [same unit as input] of a tensor with principal components (σ11, σ22, σ33).

    Δσ_eff² = σ11² + σ22² + σ33² − σ11σ22 − σ11σ33 − σ22σ33, equal to Δσ² for an axial tensor
    (Kay, Torchia & Bax 1989; Abragam 1961). Invariant to the isotropic shift. Returned ≥ 0.
    """
    s11, s22, s33 = (float(x) for x in principal)
    return math.sqrt(s11**2 + s22**2 + s33**2 - s11 * s22 - s11 * s33 - s22 * s33)


_PPM = 1e-6
#: CSA tensors of the backbone nuclei.
CSA = {
    "N": CSATensor(
        "15N amide",
        "Kay, Torchia & Bax, Biochemistry 28, 8972 (1989) (-160 ppm); angle to N-H about 17 deg, "
        "Fushman, Tjandra & Cowburn, J. Am. Chem. Soc. 120, 10947 (1998) (from memory)",
        delta=-160 * _PPM,
        angle_deg=17.0,
    ),
    "N_large": CSATensor(
        "15N amide (larger site average)",
        "Kroenke, Rance & Palmer, J. Am. Chem. Soc. 121, 10119 (1999), about -172 ppm (from memory)",
        delta=-172 * _PPM,
        angle_deg=17.0,
    ),
    "C": CSATensor(
        "13C' carbonyl",
        "Teng, Iqbal & Cross, J. Am. Chem. Soc. 114, 5312 (1992): 243, 178, 91 ppm (from memory)",
        principal=(243 * _PPM, 178 * _PPM, 91 * _PPM),
    ),
    "CA": CSATensor(
        "13C alpha",
        "Tjandra & Bax, J. Am. Chem. Soc. 119, 9576 (1997), site average about 25 ppm (from memory)",
        delta=25 * _PPM,
    ),
    "CB": CSATensor("13C beta", "aliphatic carbon, about 25 ppm (from memory)", delta=25 * _PPM),
    "H": CSATensor(
        "1H amide",
        "about 15 ppm, unique axis about 10 deg from N-H; Yao, Grishaev, Cornilescu & Bax, "
        "J. Am. Chem. Soc. 132, 10866 (2010) (from memory)",
        delta=15 * _PPM,
        angle_deg=10.0,
    ),
    "HA": CSATensor("1H alpha", "small aliphatic 1H CSA, about 5 ppm (from memory)", delta=5 * _PPM),
}


# ---------------------------------------------------------------------------------------------------------
# Field and Larmor frequencies
# ---------------------------------------------------------------------------------------------------------


def b0_from_proton_mhz(proton_mhz):
    """B0 [T] of a magnet whose 1H Larmor frequency is ``proton_mhz`` [MHz] (float or array)."""
    return 2.0 * np.pi * np.asarray(proton_mhz, dtype=float) * 1e6 / GAMMA["1H"].value


def proton_mhz_from_b0(b0_t):
    """1H Larmor frequency [MHz] at field ``b0_t`` [T] (float or array)."""
    return GAMMA["1H"].value * np.asarray(b0_t, dtype=float) / (2.0 * np.pi) / 1e6


def field_to_b0(*, proton_mhz=None, b0_t=None):
    """B0 [T] from exactly one of ``proton_mhz`` [MHz] or ``b0_t`` [T]."""
    if (proton_mhz is None) == (b0_t is None):
        raise BackboneError("field: give exactly one of the 1H frequency in MHz or B0 in tesla")
    if b0_t is not None:
        return np.asarray(b0_t, dtype=float)
    return b0_from_proton_mhz(proton_mhz)


def _gamma(isotope: str) -> float:
    try:
        return GAMMA[isotope].value
    except KeyError as err:
        raise BackboneError(f"isotope {isotope!r}: known are {', '.join(ISOTOPES)}") from err


def larmor(isotope: str, *, proton_mhz=None, b0_t=None):
    """Signed Larmor angular frequency ω = γ·B0 [rad s⁻¹] of ``isotope`` (float or array).

    Give the field as ``proton_mhz`` (1H Larmor frequency [MHz]) or ``b0_t`` [T].
    """
    return _gamma(isotope) * field_to_b0(proton_mhz=proton_mhz, b0_t=b0_t)


def larmor_hz(isotope: str, *, proton_mhz=None, b0_t=None):
    """Signed Larmor frequency ν = γ·B0/2π [Hz] of ``isotope``."""
    return larmor(isotope, proton_mhz=proton_mhz, b0_t=b0_t) / (2.0 * np.pi)


def dipolar_constant(isotope_i: str, isotope_s: str, r_m):
    """Dipolar coupling constant d = (μ0/4π) ħ γI γS / r³ [rad s⁻¹], signed by γIγS.

    ``r_m`` : float or array [m]. Rate expressions use d², so the sign matters only for cross-correlation.
    """
    r = np.asarray(r_m, dtype=float)
    return MU0.value / (4.0 * np.pi) * HBAR.value * _gamma(isotope_i) * _gamma(isotope_s) / r**3


def spin_factor(isotope: str) -> float:
    """(4/3)·S(S+1) of a dipolar partner: 1 for spin 1/2, 8/3 for 2H (Abragam 1961, ch. VIII)."""
    s = SPIN[isotope].value
    return 4.0 / 3.0 * s * (s + 1.0)
