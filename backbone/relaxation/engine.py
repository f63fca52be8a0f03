"""Relaxation rates of every backbone nucleus and of the coherences the transfer steps need.

:func:`relaxation_rates` evaluates, for arrays of τc and field at once, the Redfield rates of the amide proton
(H), amide nitrogen (N), Cα (CA), Hα (HA), carbonyl C′ (C) and Cβ (CB) of a typical residue: dipolar terms of
each nucleus with all its partners (:mod:`backbone.relaxation.environment`, isotopes from the labeling scheme),
its CSA, DD/CSA cross-correlation of the amide pair, and optional exchange broadening. The algebra is that of
:mod:`backbone.relaxation.terms` (Abragam 1961; Solomon 1955; Kay, Torchia & Bax 1989; Goldman 1984), with
signed Larmor frequencies ω = γB0 so that the 15N–1H flip-flop term sits at (|γH| + |γN|)B0.

What is modeled
---------------
- One isotropic overall tumbling time and one model-free (S², τe) for every internuclear vector and CSA tensor.
- Auto-relaxation only: the rate of a coherence is the sum of the auto-relaxation contributions of each
  interaction. Cross-relaxation into other operators (e.g. Nz → Hz, 2NxHz → 2NxHz' of another proton) is left
  out, except the N–H and H–N DD/CSA cross-correlation that splits the doublet components (TROSY) and the N–H
  cross-relaxation that gives the NOE. DD/DD cross-correlation between different pairs is neglected.
- A partner population (a hydrogen site that is part 1H, part 2H; a 99 % 13C site) enters fraction-weighted:
  that is the initial decay rate of the ensemble average.
- The amide N–H pair describes the isotopomer that HN-detected experiments observe: 15N bonded to 1H. Its
  distance is ``nh_distance``; the amide proton's own 1H fraction sets how many molecules are seen (a matter of
  sensitivity), not the rates. When the amide site is mostly 2H the pair is the fraction-weighted 1H/2H mix.
- Coherences anti-phase with respect to a heteronucleus S are those of the isotopomer in which S is 13C/15N.
- Rates are in s⁻¹ at each (τc, field) point; arrays broadcast.

Nuclei whose site the scheme leaves at natural abundance or deuterated (e.g. 13C in the ``15n`` scheme, Hα in
a perdeuterated protein) are absent from the result and listed in :attr:`RateSet.unlabeled` with their fraction.

Coherences (:data:`COHERENCES`): each is documented there with the Redfield terms it includes. The β-proton
coherences use the side-chain nucleus HB (:data:`backbone.relaxation.environment.SIDE_CHAIN_NUCLEI`), whose
rates are in :attr:`RateSet.side_chain`, not :attr:`RateSet.nuclei`.

The amide proton also gets ``R1_recovery``, an effective longitudinal recovery rate for recycle-delay planning
from a documented proton-bath estimate (:class:`ProtonBath`), not a Redfield rate.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

import numpy as np

from backbone.constants import (
    BOND,
    CSA,
    GAMMA,
    Constant,
    CSATensor,
    b0_from_proton_mhz,
    dipolar_constant,
    spin_factor,
)
from backbone.errors import BackboneError
from backbone.labeling.scheme import SITE_ELEMENT
from backbone.relaxation import terms as _t
from backbone.relaxation.environment import NUCLEI, NUCLEUS_SITE, SIDE_CHAIN_NUCLEI, get_environment
from backbone.relaxation.spectral import spectral_density
from backbone.units import FIELD_MHZ, S2, TAU_C_NS, TAU_E_NS

__all__ = [
    "RateSet",
    "relaxation_rates",
    "COHERENCES",
    "NUCLEUS_RATES",
    "ProtonBath",
    "PROTON_INVENTORY",
    "METHYL_PROTON_R1",
    "WATER_EXCHANGE",
    "HB_CSA",
]

#: Every nucleus the engine computes: the backbone nuclei reported in RateSet.nuclei, then the side-chain ones
#: (HB) that only their coherences use.
_ENGINE_NUCLEI = NUCLEI + SIDE_CHAIN_NUCLEI
#: Isotope each nucleus is observed as.
_ISOTOPE = MappingProxyType(
    {"H": "1H", "N": "15N", "CA": "13C", "HA": "1H", "C": "13C", "CB": "13C", "HB": "1H"}
)
#: The magnetic isotope a labeling site is enriched in, by element.
_MAGNETIC = MappingProxyType({"H": "1H", "C": "13C", "N": "15N"})
#: CSA of the β protons (not in backbone.constants.CSA): a small aliphatic 1H CSA, taken equal to Hα's.
HB_CSA = CSATensor("1H beta", "small aliphatic 1H CSA, about 5 ppm as for HA (from memory)", delta=5e-6)
#: CSA tensor of each nucleus (N and H may be replaced through arguments).
_CSA = MappingProxyType(
    {
        "H": CSA["H"],
        "N": CSA["N"],
        "CA": CSA["CA"],
        "HA": CSA["HA"],
        "C": CSA["C"],
        "CB": CSA["CB"],
        "HB": HB_CSA,
    }
)

_NH_RANGE_M = (0.9e-10, 1.2e-10)
_MAX_CSA = 1e-3  # |Δσ| above 1000 ppm means the value was given in ppm instead of parts of one

#: Named rates of each nucleus in :attr:`RateSet.nuclei` [s⁻¹] (NOE dimensionless).
NUCLEUS_RATES = MappingProxyType(
    {
        "R1": "longitudinal rate: auto-relaxation of the spin alone for 15N/13C; for 1H the non-selective rate "
        "(every proton inverted, initial rate), ρ + σ summed over the proton partners",
        "R1_selective": "(H, HA) selective longitudinal rate ρ: only this proton inverted",
        "R1_nonselective": "(H, HA) non-selective longitudinal rate, the same as their R1",
        "R2": "in-phase transverse rate (partner spins free to flip; the Kay-Torchia-Bax R2 for N), plus Rex",
        "R2_trosy": "(H, N) slow doublet component, mean of in-phase and anti-phase rates minus |eta_xy|",
        "R2_antitrosy": "(H, N) fast doublet component, mean of in-phase and anti-phase rates plus |eta_xy|",
        "eta_xy": "(H, N) |transverse DD/CSA cross-correlation rate| of the N-H pair",
        "eta_z": "(H, N) |longitudinal DD/CSA cross-correlation rate| of the N-H pair",
        "sigma": "(N) cross-relaxation rate with the 1H spins (amide pair and remote protons)",
        "NOE": "(N) steady-state {1H}-15N NOE, every proton saturated (dimensionless)",
        "R1_recovery": "(H) effective longitudinal recovery rate of the amide proton for recycle-delay planning: "
        "the rate of the spin-diffusion-coupled proton bath (methyl sinks, exchange with water; ProtonBath), "
        "never below the amide's own non-selective R1",
    }
)

#: Coherence rates [s⁻¹] in :attr:`RateSet.coherences`: name → what it includes. "R2(X)" is the in-phase rate
#: of X with all its partners and CSA; "ρ(X)" its selective longitudinal rate; "other partners" excludes the
#: named anti-phase partner. Exchange Rex of every transverse nucleus in the coherence is added.
COHERENCES = MappingProxyType(
    {
        "Nx": "in-phase 15N: R2(N) with the N-H dipolar term including H flips (6J(wH)), N CSA, remote partners",
        "2NxHz": "15N anti-phase to HN: R2(N) with the N-H term lacking the H-flip 6J(wH), plus rho(H) from its "
        "other partners and CSA; neglects N-H DD/CSA cross-correlation (it couples 2NxHz to Nx)",
        "Nx_hdec": "15N under 1H decoupling: mean of Nx and 2NxHz (common practice; Cavanagh et al. 2007, from memory)",
        "2NzHz": "two-spin order: 3d^2/4[J(wN)+J(wH)] of the pair, plus the longitudinal rates of N and of H "
        "(rho) from their other partners and CSA; neglects DD/CSA cross-correlation with Nz, Hz",
        "2HxNx": "HN-N multiple quantum (HMQC period): mean of zero- and double-quantum rates; pair term "
        "d^2/8[J(wH-wN)+3J(wH)+3J(wN)+6J(wH+wN)], both CSAs transverse, R2 of H and of N from remote partners; "
        "the CSA/CSA cross term cancels in the mean",
        "Hx": "in-phase HN: R2(H) with the N-H term including N flips, H-H like-spin terms, H CSA",
        "2HxNz": "HN anti-phase to N: R2(H) with the N-H term lacking the N-flip 6J(wN), plus R1(N) from its "
        "other partners and CSA",
        "CAx": "in-phase CA: R2(CA) (HA, N, C', CB, HN, ... with their flips, CA CSA); HA coupled, not the "
        "1H-decoupled mean with 2CAxHAz, which in protonated samples adds about half of rho(HA) from its other "
        "protons (that is CAx_hdec)",
        "2CAxNz": "CA anti-phase to its bonded N: R2(CA) with the CA-N term lacking the N flip, plus R1(N) from "
        "its other partners (including HN) and CSA",
        "Cx": "in-phase C': R2(C) (C' CSA dominant at high field)",
        "2CxNz": "C'(i-1) anti-phase to N(i): R2(C) with the C'-N term lacking the N flip, plus R1(N) from its "
        "other partners and CSA",
        "2CAxCz": "CA anti-phase to its bonded C': R2(CA) with the like-spin CA-C' term lacking the C' flip, plus "
        "the selective R1 of C' from its other partners and CSA",
        "CBx": "in-phase CB: R2(CB)",
        "Nz": "15N longitudinal: R1(N)",
        "Cz": "C' longitudinal: selective R1(C)",
        "N_trosy": "15N TROSY component: R2_trosy(N)",
        "H_trosy": "HN TROSY component: R2_trosy(H)",
        # --- coherences of the triple-resonance walks -----------------------------------------------------
        # Anti-phase rule (Peng & Wagner, J. Magn. Reson. 98, 308, 1992, from memory): R(2IxSz) is R2(I) with
        # the I-S pair term lacking the S flip, plus the selective longitudinal rate of S from its other partners
        # and CSA. Cross-relaxation of 2IxSz into other operators and DD/DD, DD/CSA cross-correlation of the I-S
        # pair with other interactions are neglected, as for the rules above.
        "2NxCz": "15N(i) anti-phase to C'(i-1) under 1H decoupling: Nx_hdec with the N-C' term lacking the C' "
        "flip 6J(wC), plus the selective R1 of C' from its other partners (CA, HN(i+1), ...) and CSA",
        "2NxCAz": "15N(i) anti-phase to CA(i) under 1H decoupling: Nx_hdec with the N-CA term (bonded N-CA "
        "distance) lacking the CA flip, plus the selective R1 of CA from its other partners and CSA; the rate "
        "anti-phase to the 2J partner CA(i-1) is taken the same (its pair term at 2.4 A is a few % of the "
        "bonded one, its R1 that of a like CA)",
        "2NxCz_trosy": "as 2NxCz with the 15N TROSY component N_trosy in place of Nx_hdec (no 1H decoupling)",
        "2NxCAz_trosy": "as 2NxCAz with the 15N TROSY component N_trosy in place of Nx_hdec (no 1H decoupling)",
        "HAx": "in-phase HA: R2(HA) (CA, HN, HB, side-chain H, ... with their flips; HA CSA)",
        "2HAxCAz": "HA anti-phase to its CA: R2(HA) with the HA-CA term lacking the CA flip, plus the selective "
        "R1 of CA from its other partners and CSA",
        "2CAxHAz": "CA anti-phase to its HA: R2(CA) with the CA-HA term lacking the HA flip, plus rho(HA) from "
        "its other partners (like-spin, J(0)-dominated at large tau_c) and CSA",
        "HBx": "in-phase HB, one proton of the CH2 beta group: R2(HB) (its CB, the geminal HB, vicinal protons, "
        "...; HB CSA HB_CSA)",
        "2HBxCBz": "HB anti-phase to its CB: R2(HB) with the HB-CB term lacking the CB flip, plus the selective "
        "R1 of CB from its other partners (the second HB among them) and CSA",
        "2CBxHBz": "CB anti-phase to one of its two HB: R2(CB) with that CB-HB term lacking the HB flip (the "
        "other HB stays an in-phase partner), plus rho of that HB from its other partners and CSA",
        "2CAxCBz": "CA anti-phase to CB: R2(CA) with the like-spin CA-CB term lacking the CB flip, plus the "
        "selective R1 of CB from its other partners and CSA",
        "2CBxCAz": "CB anti-phase to CA: R2(CB) with the like-spin CB-CA term lacking the CA flip, plus the "
        "selective R1 of CA from its other partners and CSA",
        "2CxCAz": "C' anti-phase to its CA: R2(C) with the like-spin C'-CA term lacking the CA flip, plus the "
        "selective R1 of CA from its other partners and CSA",
        "CAx_hdec": "CA under 1H decoupling: with HA protonated the mean of CAx and 2CAxHAz (same rule as "
        "Nx_hdec; common practice, Cavanagh et al. 2007, from memory); with HA deuterated CAx itself, whose "
        "2H partners enter with their own gamma and spin (2H decoupling removes the scalar coupling; scalar "
        "relaxation of the second kind through 2H is not modeled)",
        "CBx_hdec": "CB under 1H decoupling: with HB protonated CBx + (n/2)(2CBxHBz - CBx), n the count of "
        "bonded HB in the geometry (2, CH2): each attached proton spends half the time in- and half anti-phase, "
        "so n = 1 is the Nx_hdec mean; with HB deuterated CBx itself (as for CAx_hdec)",
    }
)

#: Nuclei each coherence needs (all must be labeled for it to be present).
_COHERENCE_NUCLEI = MappingProxyType(
    {
        "Nx": ("N",),
        "2NxHz": ("N", "H"),
        "Nx_hdec": ("N", "H"),
        "2NzHz": ("N", "H"),
        "2HxNx": ("N", "H"),
        "Hx": ("H",),
        "2HxNz": ("H", "N"),
        "CAx": ("CA",),
        "2CAxNz": ("CA", "N"),
        "Cx": ("C",),
        "2CxNz": ("C", "N"),
        "2CAxCz": ("CA", "C"),
        "CBx": ("CB",),
        "Nz": ("N",),
        "Cz": ("C",),
        "N_trosy": ("N", "H"),
        "H_trosy": ("H", "N"),
        "2NxCz": ("N", "C", "H"),
        "2NxCAz": ("N", "CA", "H"),
        "2NxCz_trosy": ("N", "C", "H"),
        "2NxCAz_trosy": ("N", "CA", "H"),
        "HAx": ("HA",),
        "2HAxCAz": ("HA", "CA"),
        "2CAxHAz": ("CA", "HA"),
        "HBx": ("HB",),
        "2HBxCBz": ("HB", "CB"),
        "2CBxHBz": ("CB", "HB"),
        "2CAxCBz": ("CA", "CB"),
        "2CBxCAz": ("CB", "CA"),
        "2CxCAz": ("C", "CA"),
        "CAx_hdec": ("CA",),
        "CBx_hdec": ("CB",),
    }
)


# ---------------------------------------------------------------------------------------------------------
# Proton bath of the amide-1H recovery rate
# ---------------------------------------------------------------------------------------------------------

_COMPOSITION = (
    "average amino-acid composition of UniProtKB/Swiss-Prot (from memory; A 8.3, V 6.9, L 9.7, I 6.0, T 5.3, "
    "M 2.4, G 7.1, P 4.7 %)"
)
#: Protons per residue of an average protein by labeling site, as (all, of which methyl protons), counted from
#: the composition above: amide H on every residue but Pro; HA one (Gly two); HB two on CH2 groups, one on Ile,
#: Thr, Val, three (a methyl) on Ala; HMETHYL_ILV Ile δ1, Leu δ1/δ2, Val γ1/γ2; HSIDE every other side-chain
#: proton (exchangeable ones included), with the Ile γ2, Thr γ2 and Met ε methyls. 7.8 protons per residue.
PROTON_INVENTORY = MappingProxyType(
    {
        "H": (0.953, 0.0),
        "HA": (1.071, 0.0),
        "HB": (1.759, 0.248),
        "HMETHYL_ILV": (1.172, 1.172),
        "HSIDE": (2.868, 0.412),
    }
)
#: Default longitudinal rate of a methyl proton, the sink of the proton bath (fast methyl rotation).
METHYL_PROTON_R1 = Constant(
    "methyl-proton R1", 2.0, "s^-1", "about 1-3 s^-1 at 600-800 MHz in proteins (common practice, from memory)"
)
#: Default effective rate at which a typical amide proton exchanges magnetization with water.
WATER_EXCHANGE = Constant(
    "amide-water magnetization exchange",
    0.3,
    "s^-1",
    "estimate, not from a source: protected amides exchange slowly, surface ones at 1-10 s^-1, plus "
    "exchange-relayed NOEs with hydroxyl and bound-water protons; water held at equilibrium (flip-back)",
)
_BATH_MAX_RATE = 100.0  # s^-1; above this the value is surely not a proton R1 or an exchange rate in s^-1


@dataclass(frozen=True)
class ProtonBath:
    """Parameters of the proton bath that sets the amide-1H recovery rate ``R1_recovery`` [s⁻¹].

    Model (a documented estimate, not a published formula): in a slowly tumbling protein, 1H–1H spin diffusion
    is fast against longitudinal relaxation and couples the protons into one reservoir, which recovers at the
    population-weighted mean of the rates of its members (fast-spin-diffusion limit; the idea of relaxation
    sinks goes back to Kalk & Berendsen, J. Magn. Reson. 24, 343, 1976, from memory). Methyl protons relax
    fast (``methyl_r1``); every other proton is represented by the amide's own non-selective rate R1_ns. The
    amide also exchanges magnetization with water held at equilibrium (``water_exchange``). So

        R1_recovery = max(R1_ns, x·methyl_r1 + (1 − x)·R1_ns) + water_exchange,

    with x the methyl fraction of the protein's protons under the labeling scheme, from
    :data:`PROTON_INVENTORY` and the 1H fraction of each site, unless ``methyl_fraction`` gives it. The fast-
    diffusion limit overstates the methyl sink where the protons are dilute (deuterated samples, where the
    amide–methyl coupling is slower) and at small τc, where spin diffusion is slow and each proton relaxes at its
    own rate (then R1_ns dominates anyway). Water saturation, radiation damping and paramagnetic relaxation are
    not modeled.

    Attributes
    ----------
    methyl_r1 : float [s⁻¹], default :data:`METHYL_PROTON_R1` (2 s⁻¹)
    water_exchange : float [s⁻¹], default :data:`WATER_EXCHANGE` (0.3 s⁻¹)
    methyl_fraction : float in [0, 1] or None (default: from the labeling scheme)
    """

    methyl_r1: float = METHYL_PROTON_R1.value
    water_exchange: float = WATER_EXCHANGE.value
    methyl_fraction: float | None = None

    def __post_init__(self):
        for name in ("methyl_r1", "water_exchange"):
            value = getattr(self, name)
            try:
                v = float(value)
            except (TypeError, ValueError) as err:
                raise BackboneError(f"proton_bath.{name}: expected a rate in s^-1, got {value!r}") from err
            if not (math.isfinite(v) and 0.0 <= v <= _BATH_MAX_RATE):
                raise BackboneError(f"proton_bath.{name} = {value!r} is outside [0, {_BATH_MAX_RATE:g}] s^-1")
            object.__setattr__(self, name, v)
        if self.methyl_fraction is not None:
            try:
                x = float(self.methyl_fraction)
            except (TypeError, ValueError) as err:
                raise BackboneError(
                    f"proton_bath.methyl_fraction: expected a fraction in [0, 1] or None, got {self.methyl_fraction!r}"
                ) from err
            if not (math.isfinite(x) and 0.0 <= x <= 1.0):
                raise BackboneError(f"proton_bath.methyl_fraction = {self.methyl_fraction!r} is outside [0, 1]")
            object.__setattr__(self, "methyl_fraction", x)


def _as_bath(value) -> ProtonBath:
    if value is None:
        return ProtonBath()
    if isinstance(value, ProtonBath):
        return value
    if isinstance(value, Mapping):
        allowed = ("methyl_r1", "water_exchange", "methyl_fraction")
        unknown = [k for k in value if k not in allowed]
        if unknown:
            raise BackboneError(f"proton_bath: unknown key {unknown[0]!r}; allowed are {', '.join(allowed)}")
        return ProtonBath(**value)
    raise BackboneError(f"proton_bath: expected a ProtonBath or a mapping, got {type(value).__name__}")


def _methyl_fraction(labeling) -> float:
    """Fraction of the protein's protons that are methyl protons, 1H fractions of the scheme applied."""
    total = methyl = 0.0
    for site, (n_all, n_methyl) in PROTON_INVENTORY.items():
        f = _fraction(labeling, site)
        total += f * n_all
        methyl += f * n_methyl
    return methyl / total if total > 0.0 else 0.0


# ---------------------------------------------------------------------------------------------------------
# Result
# ---------------------------------------------------------------------------------------------------------


def _to_json(value):
    arr = np.asarray(value, dtype=float)
    return float(arr) if arr.ndim == 0 else arr.tolist()


@dataclass(frozen=True)
class RateSet:
    """Relaxation rates [s⁻¹] at the (broadcast) grid of conditions, read-only.

    Attributes
    ----------
    tau_c : array [s]; proton_mhz : array [MHz]; s2 : array; tau_e : array [s]
        The conditions, broadcast to the common shape :attr:`shape`.
    labeling : str
        Id of the labeling scheme (or its type name if it has no ``id``).
    nuclei : mapping nucleus → mapping rate name → array
        Every labeled nucleus of ``("H", "N", "CA", "HA", "C", "CB")``; rate names in :data:`NUCLEUS_RATES`.
    coherences : mapping name → array
        The coherence rates of :data:`COHERENCES` whose nuclei are all labeled.
    unlabeled : mapping nucleus → float
        Nuclei left out because their site is not in the magnetic isotope, with the site's magnetic fraction.
    side_chain : mapping nucleus → mapping rate name → array
        The labeled side-chain nuclei the coherences need (``"HB"``, :data:`~backbone.relaxation.environment.
        SIDE_CHAIN_NUCLEI`) with ``R1`` (non-selective), ``R1_selective``, ``R1_nonselective``, ``R2``; kept out of
        :attr:`nuclei` (and of :meth:`as_dict`), which hold the backbone nuclei.
    minority : mapping nucleus → mapping rate name → array
        Carbon-bound protons (HA, HB) that a fractionally deuterated scheme keeps only as a minority (1H fraction
        above 0 but not above 1/2): the rates of the 1H-bearing molecules, so that a walk starting on those
        protons can be scaled by the fraction instead of dropped. The nucleus stays in :attr:`unlabeled`; the
        coherences that have it as their transverse spin (``HAx``, ``2HAxCAz``, ``HBx``, ``2HBxCBz``) are given.
    """

    tau_c: np.ndarray
    proton_mhz: np.ndarray
    s2: np.ndarray
    tau_e: np.ndarray
    labeling: str
    nuclei: Mapping[str, Mapping[str, np.ndarray]]
    coherences: Mapping[str, np.ndarray]
    unlabeled: Mapping[str, float]
    side_chain: Mapping[str, Mapping[str, np.ndarray]] = field(default_factory=lambda: MappingProxyType({}))
    minority: Mapping[str, Mapping[str, np.ndarray]] = field(default_factory=lambda: MappingProxyType({}))

    @property
    def shape(self) -> tuple[int, ...]:
        """Broadcast shape of the conditions and of every rate array."""
        return np.shape(self.tau_c)

    def __contains__(self, nucleus) -> bool:
        return nucleus in self.nuclei

    def __getitem__(self, nucleus: str) -> Mapping[str, np.ndarray]:
        """The named rates of ``nucleus``; :class:`BackboneError` if it is unlabeled or unknown."""
        try:
            return self.nuclei[nucleus]
        except KeyError as err:
            if nucleus in self.unlabeled:
                raise BackboneError(
                    f"nucleus {nucleus!r} is not labeled in scheme {self.labeling!r} "
                    f"(magnetic fraction {self.unlabeled[nucleus]:.4g}); labeled are {', '.join(self.nuclei)}"
                ) from err
            raise BackboneError(f"unknown nucleus {nucleus!r}; known are {', '.join(NUCLEI)}") from err

    def coherence(self, name: str) -> np.ndarray:
        """Rate [s⁻¹] of coherence ``name`` (see :data:`COHERENCES`)."""
        try:
            return self.coherences[name]
        except KeyError as err:
            if name in COHERENCES:
                missing = [n for n in _COHERENCE_NUCLEI[name] if n not in self.nuclei and n not in self.side_chain]
                raise BackboneError(
                    f"coherence {name!r} needs {', '.join(missing)}, unlabeled in scheme {self.labeling!r}"
                ) from err
            raise BackboneError(f"unknown coherence {name!r}; known are {', '.join(COHERENCES)}") from err

    def as_dict(self) -> dict:
        """JSON-ready dict: ``conditions``, ``rates`` (per nucleus), ``coherences``, ``unlabeled``.

        Scalars become floats, arrays nested lists. ``rates`` is the ``rates`` part of the JSON contract of
        ARCHITECTURE.md; the caller adds conditions it knows (temperature) to ``conditions``.
        """
        return {
            "conditions": {
                "tau_c_ns": _to_json(self.tau_c * 1e9),
                "field_mhz": _to_json(self.proton_mhz),
                "labeling": self.labeling,
                "s2": _to_json(self.s2),
                "tau_e_ns": _to_json(self.tau_e * 1e9),
            },
            "rates": {n: {k: _to_json(v) for k, v in rates.items()} for n, rates in self.nuclei.items()},
            "coherences": {k: _to_json(v) for k, v in self.coherences.items()},
            "unlabeled": {n: float(f) for n, f in self.unlabeled.items()},
        }


# ---------------------------------------------------------------------------------------------------------
# Internals
# ---------------------------------------------------------------------------------------------------------


class _SpectralCache:
    """J(ω) at the grid points, memoized by frequency.

    Every frequency the engine forms is a linear combination of γ's times the same B0 array, ω = k·B0, so the
    ratio k identifies it; J is even, so |k| does.
    """

    def __init__(self, tau_c, s2, tau_e, b0):
        self._tau_c, self._s2, self._tau_e = tau_c, s2, tau_e
        self._b0_first = float(np.ravel(b0)[0])
        self._memo: dict[float, np.ndarray] = {}

    def __call__(self, omega):
        omega = np.asarray(omega, dtype=float)
        k = abs(float(np.ravel(omega)[0]) / self._b0_first) if omega.size else 0.0
        key = float(f"{k:.9e}")
        hit = self._memo.get(key)
        if hit is None:
            hit = spectral_density(omega, self._tau_c, s2=self._s2, tau_e=self._tau_e)
            self._memo[key] = hit
        return hit


class _PairUnits:
    """Rates of one pair of isotopes per unit r⁻⁶ [s⁻¹ m⁶], computed once per grid and reused."""

    def __init__(self, j, omega):
        self._j, self._omega = j, omega
        self._memo: dict[tuple[str, str], dict[str, np.ndarray]] = {}

    def __call__(self, iso_i: str, iso_s: str) -> dict[str, np.ndarray]:
        hit = self._memo.get((iso_i, iso_s))
        if hit is not None:
            return hit
        j, wi, ws = self._j, self._omega[iso_i], self._omega[iso_s]
        d = dipolar_constant(iso_i, iso_s, 1.0)  # r = 1 m: multiply by r⁻⁶ [m⁻⁶] below
        if iso_i == iso_s:
            hit = {
                "r1_sel": _t.like_spin_rho(j, wi, d),
                "r1_ns": _t.like_spin_r1_nonselective(j, wi, d),
                "r2": _t.like_spin_r2(j, wi, d),
                "r2_anti": _t.like_spin_r2_antiphase(j, wi, d),
                "sigma": _t.like_spin_sigma(j, wi, d),
            }
        else:
            k = spin_factor(iso_s)
            r1 = _t.dipolar_r1(j, wi, ws, d, spin_factor=k)
            hit = {"r1_sel": r1, "r1_ns": r1, "r2": _t.dipolar_r2(j, wi, ws, d, spin_factor=k)}
            if k == 1.0:
                hit["r2_anti"] = _t.dipolar_r2_antiphase(j, wi, ws, d)
                hit["sigma"] = _t.dipolar_sigma(j, wi, ws, d)
                hit["two_spin"] = _t.dipolar_two_spin_order(j, wi, ws, d)
                hit["mq"] = _t.dipolar_multiple_quantum(j, wi, ws, d)
        self._memo[(iso_i, iso_s)] = hit
        return hit


def _fraction(labeling, site: str) -> float:
    try:
        f = float(labeling.fraction(site))
    except AttributeError as err:
        raise BackboneError(
            "labeling: expected a labeling scheme with .fraction(site) and .isotope(site) "
            f"(backbone.labeling.load_scheme), got {type(labeling).__name__}"
        ) from err
    except (TypeError, ValueError) as err:
        raise BackboneError(f"labeling: fraction of site {site!r} is not a number") from err
    if not (math.isfinite(f) and 0.0 <= f <= 1.0):
        raise BackboneError(f"labeling: fraction of site {site!r} = {f!r} is outside [0, 1]")
    return f


def _mix(labeling, site: str) -> tuple[tuple[str, float], ...]:
    """(isotope, fraction) of the magnetic isotopes at ``site``: 1H and 2H, 13C, or 15N."""
    f = _fraction(labeling, site)
    element = SITE_ELEMENT[site]
    if element == "H":
        return (("1H", f), ("2H", 1.0 - f))
    return ((_MAGNETIC[element], f),)


#: Carbon-bound protons whose 1H-bearing minority is kept under fractional deuteration (RateSet.minority).
_MINORITY_PROTONS = ("HA", "HB")


def _is_present(labeling, nucleus: str) -> bool:
    try:
        return labeling.isotope(NUCLEUS_SITE[nucleus]) == _ISOTOPE[nucleus]
    except AttributeError as err:
        raise BackboneError(
            "labeling: expected a labeling scheme with .fraction(site) and .isotope(site) "
            f"(backbone.labeling.load_scheme), got {type(labeling).__name__}"
        ) from err


def _csa_parameters(value, name: str, default: CSATensor) -> tuple[float, float]:
    """(Δσ_eff [parts of one], angle [rad]) of a CSATensor or a bare anisotropy."""
    if isinstance(value, CSATensor):
        delta, angle_deg = value.delta_eff, value.angle_deg
    else:
        try:
            delta, angle_deg = float(value), default.angle_deg
        except (TypeError, ValueError) as err:
            raise BackboneError(
                f"{name}: expected a CSATensor or an anisotropy in parts of one, got {value!r}"
            ) from err
    if not (math.isfinite(delta) and abs(delta) <= _MAX_CSA):
        raise BackboneError(
            f"{name}: anisotropy {delta!r} is outside [-{_MAX_CSA:g}, {_MAX_CSA:g}]; give it in parts of one "
            "(ppm x 1e-6, e.g. -160e-6)"
        )
    if not math.isfinite(angle_deg):
        raise BackboneError(f"{name}: angle_deg must be finite, got {angle_deg!r}")
    return delta, math.radians(angle_deg)


def _check_rex(rex, shape) -> dict[str, np.ndarray]:
    if rex is None:
        return {}
    if not isinstance(rex, Mapping):
        raise BackboneError(f"rex: expected a mapping nucleus -> exchange rate [s^-1], got {type(rex).__name__}")
    out = {}
    for nucleus, value in rex.items():
        if nucleus not in _ENGINE_NUCLEI:
            raise BackboneError(f"rex: unknown nucleus {nucleus!r}; allowed are {', '.join(_ENGINE_NUCLEI)}")
        try:
            arr = np.asarray(value, dtype=float)
            np.broadcast_to(arr, shape)
        except (TypeError, ValueError) as err:
            raise BackboneError(f"rex[{nucleus!r}]: expected a number or an array broadcastable to {shape}") from err
        if not np.all(np.isfinite(arr)) or np.any(arr < 0.0):
            raise BackboneError(f"rex[{nucleus!r}]: exchange rates must be finite and >= 0 s^-1, got {value!r}")
        out[nucleus] = arr
    return out


def _readonly(arr) -> np.ndarray:
    arr = np.array(arr, dtype=float)  # own copy
    arr.flags.writeable = False
    return arr


# ---------------------------------------------------------------------------------------------------------
# Engine
# ---------------------------------------------------------------------------------------------------------


def relaxation_rates(
    tau_c,
    *,
    proton_mhz,
    labeling,
    s2=1.0,
    tau_e=0.0,
    rex=None,
    environment=None,
    nh_distance=BOND["N-H"].value,
    n_csa=CSA["N"],
    h_csa=CSA["H"],
    proton_bath=None,
) -> RateSet:
    """Relaxation rates of the backbone nuclei and coherences at every (τc, field) point.

    Parameters
    ----------
    tau_c : float or array [s]
        Overall rotational correlation time, 0.1–500 ns (:data:`backbone.units.TAU_C_NS`).
    proton_mhz : float or array [MHz]
        Field as the 1H Larmor frequency, 100–1500 MHz (:data:`backbone.units.FIELD_MHZ`).
    labeling : labeling scheme
        Anything with ``fraction(site)`` and ``isotope(site)`` (:func:`backbone.labeling.load_scheme`).
    s2, tau_e : float or array, optional
        Model-free order parameter in [0, 1] and internal correlation time [s] in 0–10 ns, applied to every
        interaction (Lipari & Szabo 1982).
    rex : mapping nucleus → float or array [s⁻¹], optional
        Exchange broadening added, as given, to the transverse rates of that nucleus and to every coherence in
        which it is transverse (for the multiple-quantum 2HxNx the sum of H and N, the fast-exchange ZQ/DQ mean).
    environment : str or mapping, optional
        Geometry of the remote dipolar partners: a bundled name (``"typical"`` – the default –, ``"helix"``,
        ``"sheet"``) or a mapping of the same shape (:func:`backbone.relaxation.environment.validate_environment`).
    nh_distance : float [m], optional
        Amide N–H distance, 0.9–1.2 Å; default 1.02 Å (:data:`backbone.constants.BOND` ``"N-H"``, the value of
        Kay, Torchia & Bax 1989; 1.04 Å is the vibrationally averaged alternative ``"N-H_vib"``).
    n_csa, h_csa : CSATensor or float, optional
        15N and 1HN chemical-shift tensors (Δσ_eff and the angle of the unique axis to N–H); a float is Δσ in
        parts of one with the default angle. Defaults :data:`backbone.constants.CSA` ``"N"`` (−160 ppm, 17°) and
        ``"H"`` (15 ppm, 10°).
    proton_bath : ProtonBath or mapping, optional
        Parameters of the amide-1H recovery rate ``R1_recovery`` (:class:`ProtonBath`: ``methyl_r1`` [s⁻¹],
        default 2; ``water_exchange`` [s⁻¹], default 0.3; ``methyl_fraction``, default from the labeling scheme).

    All array arguments broadcast (numpy rules) to one grid; every rate has that shape.

    Returns
    -------
    RateSet
        Per labeled nucleus the rates of :data:`NUCLEUS_RATES`, the coherence rates of :data:`COHERENCES`, the
        unlabeled nuclei.

    Raises
    ------
    BackboneError
        A value outside its valid range, an invalid labeling, environment, rex or CSA argument.

    Notes
    -----
    R2_trosy ≤ ``Nx_hdec`` (the 1H-decoupled rate) ≤ R2_antitrosy always. Against the in-phase R2 the TROSY
    component is slower only where the cross-correlation outweighs the partner's spin flips: for τc ≥ 2 ns,
    fields ≥ 500 MHz, CSA angles 0–30° and S² 0.5–1 it is, for every bundled scheme and geometry (tested). Below
    that – fast tumbling, or a protonated protein under about 450 MHz – the amide proton's flips (1H–1H spin
    diffusion, like-spin ρ) make both doublet components relax faster than the in-phase coherence and TROSY
    brings no gain, as the physics says.
    """
    TAU_C_NS.check(np.asarray(tau_c, dtype=float) * 1e9, where="relaxation_rates")
    FIELD_MHZ.check(proton_mhz, where="relaxation_rates")
    S2.check(s2, where="relaxation_rates")
    TAU_E_NS.check(np.asarray(tau_e, dtype=float) * 1e9, where="relaxation_rates")
    try:
        nh = float(nh_distance)
    except (TypeError, ValueError) as err:
        raise BackboneError(f"nh_distance: expected a distance in metres, got {nh_distance!r}") from err
    if not (math.isfinite(nh) and _NH_RANGE_M[0] <= nh <= _NH_RANGE_M[1]):
        raise BackboneError(
            f"nh_distance = {nh_distance!r} m is outside [{_NH_RANGE_M[0]:g}, {_NH_RANGE_M[1]:g}] m "
            "(metres, e.g. 1.02e-10)"
        )
    csa = {n: _csa_parameters(t, n, t) for n, t in _CSA.items()}
    csa["N"] = _csa_parameters(n_csa, "n_csa", _CSA["N"])
    csa["H"] = _csa_parameters(h_csa, "h_csa", _CSA["H"])
    env = get_environment(environment)
    bath = _as_bath(proton_bath)

    try:
        grid = np.broadcast(*(np.asarray(x, dtype=float) for x in (tau_c, proton_mhz, s2, tau_e)))
    except ValueError as err:
        raise BackboneError("relaxation_rates: tau_c, proton_mhz, s2 and tau_e do not broadcast together") from err
    shape = grid.shape
    if grid.size == 0:
        raise BackboneError("relaxation_rates: tau_c and proton_mhz must hold at least one value")
    tau_c_a, mhz_a, s2_a, tau_e_a = (
        np.broadcast_to(np.asarray(x, dtype=float), shape) for x in (tau_c, proton_mhz, s2, tau_e)
    )
    rex_a = _check_rex(rex, shape)

    present = {n: _is_present(labeling, n) for n in _ENGINE_NUCLEI}
    unlabeled = {n: _fraction(labeling, NUCLEUS_SITE[n]) for n in NUCLEI if not present[n]}
    # Carbon-bound protons kept by a fractionally deuterated scheme: rates of the 1H-bearing minority.
    minority = {
        n: not present[n] and _ISOTOPE[n] == "1H" and n in _MINORITY_PROTONS and _fraction(labeling, NUCLEUS_SITE[n]) > 0
        for n in _ENGINE_NUCLEI
    }

    b0 = b0_from_proton_mhz(mhz_a)
    omega = {iso: GAMMA[iso].value * b0 for iso in ("1H", "2H", "13C", "15N")}
    j = _SpectralCache(tau_c_a, s2_a, tau_e_a, b0)
    unit = _PairUnits(j, omega)

    # Isotopes of the amide N–H pair as seen from each side (module docstring).
    h_side_mix = (("1H", 1.0),) if present["H"] else _mix(labeling, "H")
    n_side_mix = (("15N", 1.0),) if present["N"] else _mix(labeling, "N")
    nh_r6 = nh**-6

    auto: dict[str, dict[str, np.ndarray]] = {}
    for nucleus in _ENGINE_NUCLEI:
        if not (present[nucleus] or minority[nucleus]):
            continue
        iso = _ISOTOPE[nucleus]
        weights: dict[str, float] = {}  # Σ count·fraction·r⁻⁶ [m⁻⁶] per partner isotope
        for partner in env[nucleus]:
            for p_iso, f in _mix(labeling, partner.site):
                weights[p_iso] = weights.get(p_iso, 0.0) + partner.count * f * partner.distance_m**-6
        pair_mix = {"N": h_side_mix, "H": n_side_mix}.get(nucleus, ())
        for p_iso, f in pair_mix:
            weights[p_iso] = weights.get(p_iso, 0.0) + f * nh_r6
        r1_sel = r1_ns = r2 = 0.0
        sigma_h = 0.0
        for p_iso, w in weights.items():
            if w == 0.0:
                continue
            u = unit(iso, p_iso)
            r1_sel = r1_sel + w * u["r1_sel"]
            r1_ns = r1_ns + w * u["r1_ns"]
            r2 = r2 + w * u["r2"]
            if p_iso == "1H" and "sigma" in u:
                sigma_h = sigma_h + w * u["sigma"]
        delta, _angle = csa[nucleus]
        c = _t.csa_constant(omega[iso], delta)
        r1_csa, r2_csa = _t.csa_r1(j, omega[iso], c), _t.csa_r2(j, omega[iso], c)
        auto[nucleus] = {
            "r1_sel": r1_sel + r1_csa,
            "r1_ns": r1_ns + r1_csa,
            "r2": r2 + r2_csa,
            "sigma_h": sigma_h,
        }

    def rex_of(nucleus):
        return rex_a.get(nucleus, 0.0)

    def nearest(nucleus: str, site: str):
        entries = [p for p in env[nucleus] if p.site == site]
        return min(entries, key=lambda p: p.distance_m) if entries else None

    def bonded_pair(i: str, s: str) -> dict[str, np.ndarray]:
        """For I anti-phase to S (both heteronuclei, S bonded): the pieces the anti-phase rate needs."""
        iso_i, iso_s = _ISOTOPE[i], _ISOTOPE[s]
        zero = np.zeros(shape)
        out = {"r2_pair_weighted": zero, "r2_anti_pair": zero, "r1_s_pair_weighted": zero}
        p_is = nearest(i, NUCLEUS_SITE[s])
        if p_is is not None:
            f_s = _fraction(labeling, NUCLEUS_SITE[s])
            r6 = p_is.distance_m**-6
            u = unit(iso_i, iso_s)
            out["r2_pair_weighted"] = min(p_is.count, 1.0) * f_s * r6 * u["r2"]
            out["r2_anti_pair"] = r6 * u["r2_anti"]
        p_si = nearest(s, NUCLEUS_SITE[i])
        if p_si is not None:
            f_i = _fraction(labeling, NUCLEUS_SITE[i])
            out["r1_s_pair_weighted"] = min(p_si.count, 1.0) * f_i * p_si.distance_m**-6 * unit(iso_s, iso_i)["r1_sel"]
        return out

    def anti_phase(i: str, s: str) -> np.ndarray:
        p = bonded_pair(i, s)
        return (
            auto[i]["r2"]
            - p["r2_pair_weighted"]
            + p["r2_anti_pair"]
            + auto[s]["r1_sel"]
            - p["r1_s_pair_weighted"]
            + rex_of(i)
        )

    def anti_phase_from(base: np.ndarray, i: str, s: str) -> np.ndarray:
        """``base`` (a rate of I that contains the weighted in-phase I–S term) made anti-phase to S."""
        p = bonded_pair(i, s)
        return base - p["r2_pair_weighted"] + p["r2_anti_pair"] + auto[s]["r1_sel"] - p["r1_s_pair_weighted"]

    def decoupled(i: str, h: str, in_phase: np.ndarray) -> np.ndarray:
        """I under decoupling of its bonded protons h: each spends half the time in- and half anti-phase."""
        if not present[h]:
            return in_phase  # h is 2H: its terms are in R2(I) already
        p_ih = nearest(i, NUCLEUS_SITE[h])
        n = p_ih.count if p_ih is not None else 0.0
        return in_phase + 0.5 * n * (anti_phase(i, h) - in_phase)

    nuclei_out: dict[str, dict[str, np.ndarray]] = {}
    side_out: dict[str, dict[str, np.ndarray]] = {}
    minority_out: dict[str, dict[str, np.ndarray]] = {}
    for nucleus, a in auto.items():
        rates = {"R1": a["r1_ns"] if _ISOTOPE[nucleus] == "1H" else a["r1_sel"], "R2": a["r2"] + rex_of(nucleus)}
        if _ISOTOPE[nucleus] == "1H":
            rates["R1_selective"] = a["r1_sel"]
            rates["R1_nonselective"] = a["r1_ns"]
        if minority[nucleus]:
            minority_out[nucleus] = rates
        else:
            (nuclei_out if nucleus in NUCLEI else side_out)[nucleus] = rates
    if present["H"]:
        x = _methyl_fraction(labeling) if bath.methyl_fraction is None else bath.methyl_fraction
        r1_ns = auto["H"]["r1_ns"]
        pooled = x * bath.methyl_r1 + (1.0 - x) * r1_ns
        nuclei_out["H"]["R1_recovery"] = np.maximum(r1_ns, pooled) + bath.water_exchange

    coh: dict[str, np.ndarray] = {}
    if present["N"]:
        coh["Nx"] = nuclei_out["N"]["R2"]
        coh["Nz"] = auto["N"]["r1_sel"]
        sigma = auto["N"]["sigma_h"]
        nuclei_out["N"]["sigma"] = sigma
        nuclei_out["N"]["NOE"] = _t.steady_state_noe(auto["N"]["r1_sel"], sigma, GAMMA["15N"].value, GAMMA["1H"].value)
    if present["H"]:
        coh["Hx"] = nuclei_out["H"]["R2"]
    if present["N"] and present["H"]:
        u_nh, u_hn = unit("15N", "1H"), unit("1H", "15N")
        # The pair's weighted contributions inside the auto rates (weights 1: both present).
        r2_n_pair, r1_n_pair = nh_r6 * u_nh["r2"], nh_r6 * u_nh["r1_sel"]
        r2_h_pair, r1_h_pair = nh_r6 * u_hn["r2"], nh_r6 * u_hn["r1_sel"]
        rho_h_other = auto["H"]["r1_sel"] - r1_h_pair  # H's selective rate from its other partners and CSA
        r1_n_other = auto["N"]["r1_sel"] - r1_n_pair  # N's R1 from its other partners and CSA
        coh["2NxHz"] = auto["N"]["r2"] - r2_n_pair + nh_r6 * u_nh["r2_anti"] + rho_h_other + rex_of("N")
        coh["2HxNz"] = auto["H"]["r2"] - r2_h_pair + nh_r6 * u_hn["r2_anti"] + r1_n_other + rex_of("H")
        coh["Nx_hdec"] = 0.5 * (coh["Nx"] + coh["2NxHz"])
        coh["2NzHz"] = nh_r6 * u_nh["two_spin"] + r1_n_other + rho_h_other
        coh["2HxNx"] = (
            nh_r6 * u_nh["mq"]
            + (auto["N"]["r2"] - r2_n_pair)
            + (auto["H"]["r2"] - r2_h_pair)
            + rex_of("N")
            + rex_of("H")
        )
        d_nh = dipolar_constant("15N", "1H", nh)
        for side, iso, partner_coh in (("N", "15N", "2NxHz"), ("H", "1H", "2HxNz")):
            delta, angle = csa[side]
            c = _t.csa_constant(omega[iso], delta)
            eta_xy = np.abs(_t.dd_csa_eta_xy(j, omega[iso], d_nh, c, angle))
            eta_z = np.abs(_t.dd_csa_eta_z(j, omega[iso], d_nh, c, angle))
            in_phase = coh["Nx" if side == "N" else "Hx"]
            slow, fast = _t.doublet_component_rates(in_phase, coh[partner_coh], eta_xy)
            nuclei_out[side].update({"R2_trosy": slow, "R2_antitrosy": fast, "eta_xy": eta_xy, "eta_z": eta_z})
            coh[f"{side}_trosy"] = slow
    if present["CA"]:
        coh["CAx"] = nuclei_out["CA"]["R2"]
        if present["N"]:
            coh["2CAxNz"] = anti_phase("CA", "N")
        if present["C"]:
            coh["2CAxCz"] = anti_phase("CA", "C")
    if present["C"]:
        coh["Cx"] = nuclei_out["C"]["R2"]
        coh["Cz"] = auto["C"]["r1_sel"]
        if present["N"]:
            coh["2CxNz"] = anti_phase("C", "N")
    if present["CB"]:
        coh["CBx"] = nuclei_out["CB"]["R2"]
    # Coherences of the triple-resonance walks (COHERENCES).
    for name, (i, s) in {"2NxCz": ("N", "C"), "2NxCAz": ("N", "CA")}.items():
        if present[s] and "Nx_hdec" in coh:
            coh[name] = anti_phase_from(coh["Nx_hdec"], i, s)
            coh[name + "_trosy"] = anti_phase_from(coh["N_trosy"], i, s)
    for h in ("HA", "HB"):
        if present[h] or minority[h]:
            coh[h + "x"] = (nuclei_out.get(h) or side_out.get(h) or minority_out[h])["R2"]
    for name, (i, s) in {
        "2HAxCAz": ("HA", "CA"),
        "2CAxHAz": ("CA", "HA"),
        "2HBxCBz": ("HB", "CB"),
        "2CBxHBz": ("CB", "HB"),
        "2CAxCBz": ("CA", "CB"),
        "2CBxCAz": ("CB", "CA"),
        "2CxCAz": ("C", "CA"),
    }.items():
        if (present[i] or (minority[i] and i in ("HA", "HB"))) and present[s]:
            coh[name] = anti_phase(i, s)
    if present["CA"]:
        coh["CAx_hdec"] = decoupled("CA", "HA", coh["CAx"])
    if present["CB"]:
        coh["CBx_hdec"] = decoupled("CB", "HB", coh["CBx"])

    def freeze(d):
        return MappingProxyType({k: _readonly(np.broadcast_to(v, shape)) for k, v in d.items()})

    ordered_coh = {name: coh[name] for name in COHERENCES if name in coh}
    return RateSet(
        tau_c=_readonly(tau_c_a),
        proton_mhz=_readonly(mhz_a),
        s2=_readonly(s2_a),
        tau_e=_readonly(tau_e_a),
        labeling=str(getattr(labeling, "id", type(labeling).__name__)),
        nuclei=MappingProxyType({n: freeze(r) for n, r in nuclei_out.items()}),
        coherences=freeze(ordered_coh),
        unlabeled=MappingProxyType(unlabeled),
        side_chain=MappingProxyType({n: freeze(r) for n, r in side_out.items()}),
        minority=MappingProxyType({n: freeze(r) for n, r in minority_out.items()}),
    )
