"""Typical geometry of the spins near each backbone nucleus: the remote dipolar partners of the engine.

A geometry (an *environment*) maps each nucleus ``"H"``, ``"N"``, ``"CA"``, ``"HA"``, ``"C"``, ``"CB"`` to a tuple
of :class:`Partner` entries ``(site, distance_m, count, label)``: ``count`` spins of labeling site ``site`` at the
effective distance ``distance_m`` [m]. Which isotope each partner is comes from the labeling scheme, through the
partner's *site*: a hydrogen site with 1H fraction f contributes f as 1H and 1 − f as 2H (its own γ and spin), a
carbon site f as 13C (12C is not magnetic), the nitrogen site f as 15N (14N is left out, see below). The partner
list does **not** include the amide N–H pair, which the engine sets from its ``nh_distance`` argument (it is also
the pair of the TROSY and anti-phase coherences); every other dipolar partner of a nucleus, bonded or not, is here.

Distances are *effective*: a partner at several positions (side-chain rotamers, a mix of secondary structure)
enters through ⟨r⁻⁶⟩^(−1/6), and ``count`` may be fractional (a partner present for a fraction of the residues).
Rates scale as count · r⁻⁶, so an entry (site, r, n) is equivalent to n spins at r.

Three geometries are bundled (:data:`ENVIRONMENTS`):

``"helix"``  α-helix, φ,ψ = −57°, −47°.
``"sheet"``  antiparallel β-sheet, φ,ψ = −139°, 135°, with the cross-strand neighbors of a paired strand.
``"typical"`` (the default, :data:`DEFAULT_ENVIRONMENT`) a protein half helix, half sheet: every entry's
           count · r⁻⁶ averaged over the two (an entry present in one structure only keeps half its weight).

Where the numbers come from
---------------------------
- Bond lengths from :data:`backbone.constants.BOND` (Engh & Huber 1991; C–H 1.09 Å; C′(i−1)···HN and
  CA···HN peptide-plane distances).
- Two-bond distances (X–Y–Z with one fixed bond angle, e.g. N···HA(i), CA···HB) are computed here from those
  bonds and the angles :data:`ANGLES` (Engh & Huber 1991, from memory; tetrahedral angle at sp3 carbons).
- Sequential and medium-range 1H–1H distances of the amide proton in α-helix and β-sheet are the standard
  values of K. Wüthrich, *NMR of Proteins and Nucleic Acids*, Wiley 1986, ch. 7 (from memory):
  d_NN(i,i+1) 2.8 / 4.3 Å, d_αN(i,i+1) 3.5 / 2.2 Å (helix / antiparallel sheet); helix d_αN(i,i+3) 3.4 Å,
  d_αN(i,i+4) 4.2 Å, d_αN(i,i+2) 4.4 Å, d_NN(i,i+2) 4.2 Å; antiparallel sheet cross-strand d_NN(i,j) 3.3 Å,
  d_αN(i,j) 3.2 Å, d_αα(i,j) 2.3 Å.
- Torsion-dependent distances Wüthrich does not tabulate (intraresidue HN···HA, HN···HB, N···HA(i−1),
  C′···HN(i), the heavy atoms near HN, ...) were computed for this package from a model chain built with the
  Engh & Huber geometry at the φ,ψ above, the HN on the external C′–N–CA bisector, and β protons r⁻⁶-averaged
  over χ1 = −60°, 180°, 60°. That model reproduces Wüthrich's d_NN and d_αN values to 0.1 Å.
- Side-chain protons other than β (site ``HSIDE``) and Ile/Leu/Val methyl protons (site ``HMETHYL_ILV``) are an
  estimate, not from a source: 4 protons at an effective 4.0 Å of each HN (own γ protons and packed neighbors),
  2 at 3.0 Å of each HA (own γ protons), 2 at 2.15 Å of each CB (geminal-like γ protons), and, for the methyls,
  one methyl (3 protons) at 4.5 Å for half of the amides (count 1.5), the typical distance of a methyl in contact
  with an amide in a packed core.
- The β proton ``"HB"`` (:data:`SIDE_CHAIN_NUCLEI`, used by the HB coherences only) is one proton of a CH2
  group, the most common β group, described per proton: its CB at the C–H bond, the geminal HB at the two-bond
  H–C–H distance (tetrahedral, 1.78 Å), CA and CG two bonds away, and the χ1-averaged HA, HN, N and C′ distances
  of the rows above read from the other side (each of those rows lists the two β protons, count 2, at one
  effective distance). The two vicinal γ protons at an effective 2.6 Å (between the gauche, about 2.5 Å, and
  anti, about 3.05 Å, H–C–C–H distances; an estimate, not from a source). Residues with a CH β group (Ile, Thr,
  Val) or a methyl (Ala) are not described separately.

Left out: 14N (quadrupolar, self-decoupled; only the 15N isotopomers are modeled), 17O, partners whose
contribution is below about 1 % of the dominant term of the nucleus, scalar relaxation of the second kind through
2H (2H is decoupled or its slow relaxation leaves the C–D coupling resolved), and methyl rotation (remote methyl
protons are treated as static at their effective distance). One S², τe applies to every vector (the engine's
``s2``, ``tau_e``).

A user geometry (same shape, every nucleus of :data:`NUCLEI` present, ``"HB"`` optional; an empty tuple means no
partners) is checked by
:func:`validate_environment`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from types import MappingProxyType
from typing import NamedTuple

from backbone.constants import BOND, Constant
from backbone.errors import BackboneError
from backbone.labeling.scheme import SITES

__all__ = [
    "NUCLEI",
    "SIDE_CHAIN_NUCLEI",
    "NUCLEUS_SITE",
    "ANGLES",
    "Partner",
    "ENVIRONMENTS",
    "DEFAULT_ENVIRONMENT",
    "validate_environment",
    "get_environment",
]

#: Nuclei the relaxation engine computes, by PDB atom name ("C" is the carbonyl C′).
NUCLEI = ("H", "N", "CA", "HA", "C", "CB")
#: Side-chain nuclei whose geometry is also given, for the coherences that need them (the β protons). They are
#: not among :data:`NUCLEI`: the engine reports their coherences, not their rates as a nucleus.
SIDE_CHAIN_NUCLEI = ("HB",)
#: Labeling site of each nucleus (of :data:`NUCLEI` and :data:`SIDE_CHAIN_NUCLEI`).
NUCLEUS_SITE = MappingProxyType({"H": "H", "N": "N", "CA": "CA", "HA": "HA", "C": "C", "CB": "CB", "HB": "HB"})
_ALL_NUCLEI = NUCLEI + SIDE_CHAIN_NUCLEI

_ENGH_ANGLES = "Engh & Huber, Acta Cryst. A47, 392-400 (1991), Table 3 (from memory)"
#: Bond angles [deg] used to compute two-bond distances.
ANGLES = MappingProxyType(
    {
        "tetrahedral": Constant(
            "tetrahedral angle at an sp3 carbon", math.degrees(math.acos(-1.0 / 3.0)), "deg", "geometry (exact)"
        ),
        "N-CA-C": Constant("N-CA-C angle", 111.2, "deg", _ENGH_ANGLES),
        "CA-C-N": Constant("CA-C-N angle", 116.2, "deg", _ENGH_ANGLES),
        "C-N-CA": Constant("C-N-CA angle", 121.7, "deg", _ENGH_ANGLES),
        "N-CA-CB": Constant("N-CA-CB angle", 110.5, "deg", _ENGH_ANGLES),
        "C-CA-CB": Constant("C-CA-CB angle", 110.1, "deg", _ENGH_ANGLES),
        "CA-CB-CG": Constant("CA-CB-CG angle", 114.1, "deg", _ENGH_ANGLES),
    }
)

# Allowed ranges of a user entry (outside them the input is almost surely in the wrong unit).
_MIN_DISTANCE_M = 0.9e-10
_MAX_DISTANCE_M = 10e-10
_MAX_COUNT = 1000.0
#: Closer than this, a site-H entry of N (or site-N entry of H) would be the amide pair counted twice.
_PAIR_GUARD_M = 1.5e-10


class Partner(NamedTuple):
    """``count`` spins of labeling site ``site`` at effective distance ``distance_m`` [m]; ``label`` says which."""

    site: str
    distance_m: float
    count: float = 1.0
    label: str = ""


def _two_bond(bond_a: str, bond_b: str, angle: str) -> float:
    """Distance [m] between the outer atoms of bonds ``bond_a``, ``bond_b`` meeting at ``angle`` (law of cosines)."""
    a, b = BOND[bond_a].value, BOND[bond_b].value
    theta = math.radians(ANGLES[angle].value)
    return math.sqrt(a * a + b * b - 2.0 * a * b * math.cos(theta))


_A = 1e-10  # one ångström [m], for the tabulated distances below

# Two-bond distances [m] X...Z along the path X-Y-Z (law of cosines on BOND lengths and ANGLES).
_R_N_C_CA = _two_bond("C-N", "CA-C", "CA-C-N")
_R_C_N_CA = _two_bond("C-N", "N-CA", "C-N-CA")
_R_CA_C_N = _two_bond("CA-C", "C-N", "CA-C-N")
_R_C_CA_CB = _two_bond("CA-C", "CA-CB", "C-CA-CB")
_R_C_CA_HA = _two_bond("CA-C", "CA-HA", "tetrahedral")
_R_CA_CB_CG = _two_bond("CA-CB", "CA-CB", "CA-CB-CG")
_R_CB_CA_HA = _two_bond("CA-CB", "CA-HA", "tetrahedral")
_R_CA_CB_HB = _two_bond("CA-CB", "CB-HB", "tetrahedral")
_R_N_CA_C = _two_bond("N-CA", "CA-C", "N-CA-C")
_R_N_CA_CB = _two_bond("N-CA", "CA-CB", "N-CA-CB")
_R_N_CA_HA = _two_bond("N-CA", "CA-HA", "tetrahedral")
_R_HB_CB_HB = _two_bond("CB-HB", "CB-HB", "tetrahedral")

# Each row: (nucleus, label, site, helix distance [m] or None, sheet distance [m] or None, count).
# "computed" = from the model chain described in the module docstring; "W86" = Wüthrich 1986 (from memory).
_TABLE = (
    # --- amide proton HN(i) (its N(i) is the explicit pair) ------------------------------------------------
    ("H", "HN(i-1)", "H", 2.8 * _A, 4.3 * _A, 1.0),  # W86 d_NN(i,i+1)
    ("H", "HN(i+1)", "H", 2.8 * _A, 4.3 * _A, 1.0),  # W86 d_NN(i,i+1)
    ("H", "HA(i)", "HA", 2.8 * _A, 3.0 * _A, 1.0),  # computed intraresidue d_αN
    ("H", "HA(i-1)", "HA", 3.5 * _A, 2.2 * _A, 1.0),  # W86 d_αN(i,i+1)
    ("H", "HB(i)", "HB", 2.7 * _A, 3.1 * _A, 2.0),  # computed, χ1-averaged
    ("H", "HB(i-1)", "HB", 2.8 * _A, 3.6 * _A, 2.0),  # computed, χ1-averaged (W86 d_βN 2.5-4.1 / 3.2-4.5)
    ("H", "HA(i-2)", "HA", 4.4 * _A, None, 1.0),  # W86 d_αN(i,i+2)
    ("H", "HA(i-3)", "HA", 3.4 * _A, None, 1.0),  # W86 d_αN(i,i+3)
    ("H", "HA(i-4)", "HA", 4.2 * _A, None, 1.0),  # W86 d_αN(i,i+4)
    ("H", "HN(i-2), HN(i+2)", "H", 4.2 * _A, None, 2.0),  # W86 d_NN(i,i+2)
    ("H", "HN(cross-strand)", "H", None, 3.3 * _A, 1.0),  # W86 d_NN(i,j)
    ("H", "HA(cross-strand)", "HA", None, 3.2 * _A, 1.0),  # W86 d_αN(i,j)
    ("H", "side-chain H", "HSIDE", 4.0 * _A, 4.0 * _A, 4.0),  # estimate
    ("H", "ILV methyl H", "HMETHYL_ILV", 4.5 * _A, 4.5 * _A, 1.5),  # estimate
    ("H", "C'(i-1)", "C", BOND["C-HN"].value, BOND["C-HN"].value, 1.0),
    ("H", "CA(i)", "CA", BOND["CA-HN"].value, BOND["CA-HN"].value, 1.0),
    ("H", "CA(i-1)", "CA", 2.54 * _A, 2.54 * _A, 1.0),  # computed (cis to HN across the peptide bond)
    ("H", "CB(i)", "CB", 2.5 * _A, 2.9 * _A, 1.0),  # computed
    # --- amide nitrogen N(i) (its HN(i) is the explicit pair) ----------------------------------------------
    ("N", "C'(i-1)", "C", BOND["C-N"].value, BOND["C-N"].value, 1.0),
    ("N", "CA(i)", "CA", BOND["N-CA"].value, BOND["N-CA"].value, 1.0),
    ("N", "CA(i-1)", "CA", _R_N_C_CA, _R_N_C_CA, 1.0),
    ("N", "C'(i)", "C", _R_N_CA_C, _R_N_CA_C, 1.0),
    ("N", "CB(i)", "CB", _R_N_CA_CB, _R_N_CA_CB, 1.0),
    ("N", "HA(i)", "HA", _R_N_CA_HA, _R_N_CA_HA, 1.0),
    ("N", "HA(i-1)", "HA", 3.3 * _A, 2.5 * _A, 1.0),  # computed
    ("N", "HN(i+1)", "H", 2.5 * _A, 3.8 * _A, 1.0),  # computed
    ("N", "HN(i-1)", "H", 3.4 * _A, 3.9 * _A, 1.0),  # computed
    ("N", "HB(i)", "HB", 2.8 * _A, 2.8 * _A, 2.0),  # computed, χ1-averaged
    # --- alpha carbon CA(i) --------------------------------------------------------------------------------
    ("CA", "HA(i)", "HA", BOND["CA-HA"].value, BOND["CA-HA"].value, 1.0),
    ("CA", "N(i)", "N", BOND["N-CA"].value, BOND["N-CA"].value, 1.0),
    ("CA", "C'(i)", "C", BOND["CA-C"].value, BOND["CA-C"].value, 1.0),
    ("CA", "CB(i)", "CB", BOND["CA-CB"].value, BOND["CA-CB"].value, 1.0),
    ("CA", "HN(i)", "H", BOND["CA-HN"].value, BOND["CA-HN"].value, 1.0),
    ("CA", "HB(i)", "HB", _R_CA_CB_HB, _R_CA_CB_HB, 2.0),
    ("CA", "HN(i+1)", "H", 2.54 * _A, 2.54 * _A, 1.0),  # computed
    ("CA", "N(i+1)", "N", _R_CA_C_N, _R_CA_C_N, 1.0),
    ("CA", "C'(i-1)", "C", _R_C_N_CA, _R_C_N_CA, 1.0),
    ("CA", "CG(i)", "CG", _R_CA_CB_CG, _R_CA_CB_CG, 1.0),
    # --- alpha proton HA(i) --------------------------------------------------------------------------------
    ("HA", "CA(i)", "CA", BOND["CA-HA"].value, BOND["CA-HA"].value, 1.0),
    ("HA", "N(i)", "N", _R_N_CA_HA, _R_N_CA_HA, 1.0),
    ("HA", "C'(i)", "C", _R_C_CA_HA, _R_C_CA_HA, 1.0),
    ("HA", "CB(i)", "CB", _R_CB_CA_HA, _R_CB_CA_HA, 1.0),
    ("HA", "HN(i)", "H", 2.8 * _A, 3.0 * _A, 1.0),  # computed intraresidue d_αN
    ("HA", "HN(i+1)", "H", 3.5 * _A, 2.2 * _A, 1.0),  # W86 d_αN(i,i+1)
    ("HA", "HB(i)", "HB", 2.6 * _A, 2.6 * _A, 2.0),  # computed, χ1-averaged
    ("HA", "HA(cross-strand)", "HA", None, 2.3 * _A, 1.0),  # W86 d_αα(i,j)
    ("HA", "side-chain H", "HSIDE", 3.0 * _A, 3.0 * _A, 2.0),  # estimate
    ("HA", "C'(i-1)", "C", 2.8 * _A, 2.5 * _A, 1.0),  # computed
    ("HA", "N(i+1)", "N", 3.3 * _A, 2.5 * _A, 1.0),  # computed
    # --- carbonyl C'(i) ------------------------------------------------------------------------------------
    ("C", "N(i+1)", "N", BOND["C-N"].value, BOND["C-N"].value, 1.0),
    ("C", "CA(i)", "CA", BOND["CA-C"].value, BOND["CA-C"].value, 1.0),
    ("C", "HN(i+1)", "H", BOND["C-HN"].value, BOND["C-HN"].value, 1.0),
    ("C", "HA(i)", "HA", _R_C_CA_HA, _R_C_CA_HA, 1.0),
    ("C", "CA(i+1)", "CA", _R_C_N_CA, _R_C_N_CA, 1.0),
    ("C", "CB(i)", "CB", _R_C_CA_CB, _R_C_CA_CB, 1.0),
    ("C", "N(i)", "N", _R_N_CA_C, _R_N_CA_C, 1.0),
    ("C", "HN(i)", "H", 3.2 * _A, 2.7 * _A, 1.0),  # computed
    ("C", "HA(i+1)", "HA", 2.8 * _A, 2.5 * _A, 1.0),  # computed
    ("C", "HB(i)", "HB", 2.85 * _A, 2.85 * _A, 2.0),  # computed, χ1-averaged
    # --- beta carbon CB(i) (a CH2 group, the most common case) ---------------------------------------------
    ("CB", "HB(i)", "HB", BOND["CB-HB"].value, BOND["CB-HB"].value, 2.0),
    ("CB", "CA(i)", "CA", BOND["CA-CB"].value, BOND["CA-CB"].value, 1.0),
    ("CB", "CG(i)", "CG", BOND["CA-CB"].value, BOND["CA-CB"].value, 1.0),  # C-C single bond, same length
    ("CB", "HA(i)", "HA", _R_CB_CA_HA, _R_CB_CA_HA, 1.0),
    ("CB", "side-chain H", "HSIDE", _R_CA_CB_HB, _R_CA_CB_HB, 2.0),  # HG: CB-CG-HG, same bonds as CA-CB-HB
    ("CB", "N(i)", "N", _R_N_CA_CB, _R_N_CA_CB, 1.0),
    ("CB", "C'(i)", "C", _R_C_CA_CB, _R_C_CA_CB, 1.0),
    ("CB", "HN(i)", "H", 2.5 * _A, 2.9 * _A, 1.0),  # computed
    ("CB", "HN(i+1)", "H", 2.9 * _A, 3.4 * _A, 1.0),  # computed
    # --- one beta proton HB(i) of a CH2 group (per proton; the reverse of the HB rows above) ---------------
    ("HB", "CB(i)", "CB", BOND["CB-HB"].value, BOND["CB-HB"].value, 1.0),
    ("HB", "geminal HB(i)", "HB", _R_HB_CB_HB, _R_HB_CB_HB, 1.0),
    ("HB", "CA(i)", "CA", _R_CA_CB_HB, _R_CA_CB_HB, 1.0),
    ("HB", "CG(i)", "CG", _R_CA_CB_HB, _R_CA_CB_HB, 1.0),  # CB-CG as long as CA-CB
    ("HB", "HA(i)", "HA", 2.6 * _A, 2.6 * _A, 1.0),  # computed, chi1-averaged (the HA row HB(i), per proton)
    ("HB", "HN(i)", "H", 2.7 * _A, 3.1 * _A, 1.0),  # computed, chi1-averaged (the H row HB(i), per proton)
    ("HB", "HN(i+1)", "H", 2.8 * _A, 3.6 * _A, 1.0),  # computed, chi1-averaged (the H row HB(i-1), per proton)
    ("HB", "N(i)", "N", 2.8 * _A, 2.8 * _A, 1.0),  # computed, chi1-averaged (the N row HB(i), per proton)
    ("HB", "C'(i)", "C", 2.85 * _A, 2.85 * _A, 1.0),  # computed, chi1-averaged (the C row HB(i), per proton)
    ("HB", "side-chain H", "HSIDE", 2.6 * _A, 2.6 * _A, 2.0),  # estimate: vicinal gamma protons
)


def _geometry(column: int) -> Mapping[str, tuple[Partner, ...]]:
    out: dict[str, list[Partner]] = {n: [] for n in _ALL_NUCLEI}
    for nucleus, label, site, *distances, count in _TABLE:
        r = distances[column]
        if r is not None:
            out[nucleus].append(Partner(site, float(r), float(count), label))
    return MappingProxyType({n: tuple(p) for n, p in out.items()})


def _blend(weights: Mapping[str, float]) -> Mapping[str, tuple[Partner, ...]]:
    """Geometry whose count·r⁻⁶ of every row is the weighted mean over the named structures."""
    column = {"helix": 0, "sheet": 1}
    out: dict[str, list[Partner]] = {n: [] for n in _ALL_NUCLEI}
    for nucleus, label, site, *distances, count in _TABLE:
        s = sum(w * distances[column[name]] ** -6 for name, w in weights.items() if distances[column[name]])
        out[nucleus].append(Partner(site, float(s ** (-1.0 / 6.0)), float(count), label))
    return MappingProxyType({n: tuple(p) for n, p in out.items()})


#: Bundled geometries by name (see the module docstring).
ENVIRONMENTS = MappingProxyType(
    {"helix": _geometry(0), "sheet": _geometry(1), "typical": _blend({"helix": 0.5, "sheet": 0.5})}
)
#: The geometry the engine uses unless told otherwise.
DEFAULT_ENVIRONMENT = ENVIRONMENTS["typical"]


def _as_partner(entry, where: str) -> Partner:
    if isinstance(entry, Partner):
        fields = tuple(entry)
    elif isinstance(entry, Mapping):
        unknown = set(entry) - set(Partner._fields)
        if unknown:
            raise BackboneError(
                f"{where}: unknown key {sorted(unknown)[0]!r}; allowed are {', '.join(Partner._fields)}"
            )
        try:
            fields = tuple(Partner(**entry))
        except TypeError as err:
            raise BackboneError(f"{where}: a partner needs at least 'site' and 'distance_m'") from err
    elif isinstance(entry, (tuple, list)) and 2 <= len(entry) <= 4:
        fields = tuple(Partner(*entry))
    else:
        raise BackboneError(
            f"{where}: a partner is (site, distance_m[, count[, label]]) or a mapping with those keys, got {entry!r}"
        )
    site, distance, count, label = fields
    if not isinstance(site, str) or site not in SITES:
        raise BackboneError(f"{where}: site {site!r} is not a labeling site; allowed are {', '.join(SITES)}")
    try:
        distance = float(distance)
        count = float(count)
    except (TypeError, ValueError) as err:
        raise BackboneError(f"{where}: distance_m and count must be numbers, got {distance!r}, {count!r}") from err
    if not (math.isfinite(distance) and _MIN_DISTANCE_M <= distance <= _MAX_DISTANCE_M):
        raise BackboneError(
            f"{where}: distance_m = {distance!r} is outside [{_MIN_DISTANCE_M:g}, {_MAX_DISTANCE_M:g}] m "
            "(distances are in metres, e.g. 2.8e-10 for 2.8 Å)"
        )
    if not (math.isfinite(count) and 0.0 <= count <= _MAX_COUNT):
        raise BackboneError(f"{where}: count = {count!r} is outside [0, {_MAX_COUNT:g}]")
    if not isinstance(label, str):
        raise BackboneError(f"{where}: label must be a string, got {label!r}")
    return Partner(site, distance, count, label)


def validate_environment(environment, *, where: str = "environment") -> Mapping[str, tuple[Partner, ...]]:
    """Check a geometry and return it as a read-only mapping nucleus → tuple of :class:`Partner`.

    ``environment`` is a bundled name (``"typical"``, ``"helix"``, ``"sheet"``) or a mapping with an entry for
    every nucleus of :data:`NUCLEI` and optionally of :data:`SIDE_CHAIN_NUCLEI` (``"HB"``; when it is left out
    the β proton keeps the partners of the bundled ``"typical"`` geometry, so geometries written for the six
    backbone nuclei keep working), each an iterable of partners given as :class:`Partner`, as tuples
    ``(site, distance_m[, count[, label]])`` or as mappings with those keys. Sites are labeling sites
    (:data:`backbone.labeling.SITES`), distances in metres within [0.9, 10] Å, counts in [0, 1000]. The amide
    N–H pair must not be listed (it is the engine's ``nh_distance``). Raises
    :class:`~backbone.errors.BackboneError` naming the offending entry.
    """
    if isinstance(environment, str):
        try:
            return ENVIRONMENTS[environment]
        except KeyError as err:
            raise BackboneError(
                f"{where}: unknown geometry {environment!r}; bundled are {', '.join(ENVIRONMENTS)}"
            ) from err
    if not isinstance(environment, Mapping):
        raise BackboneError(
            f"{where}: expected a geometry name or a mapping nucleus -> partners, got {type(environment).__name__}"
        )
    unknown = [k for k in environment if k not in _ALL_NUCLEI]
    if unknown:
        raise BackboneError(f"{where}: unknown nucleus {unknown[0]!r}; allowed are {', '.join(_ALL_NUCLEI)}")
    out = {}
    for nucleus in _ALL_NUCLEI:
        if nucleus in SIDE_CHAIN_NUCLEI and nucleus not in environment:
            out[nucleus] = DEFAULT_ENVIRONMENT[nucleus]
            continue
        if nucleus not in environment:
            raise BackboneError(
                f"{where}: missing entry for nucleus {nucleus!r} (give all of {', '.join(NUCLEI)}; "
                "an empty list means no partners)"
            )
        entries = environment[nucleus]
        if isinstance(entries, (str, bytes, Mapping)) or not hasattr(entries, "__iter__"):
            raise BackboneError(f"{where}[{nucleus!r}]: expected a list of partners, got {entries!r}")
        partners = []
        for k, entry in enumerate(entries):
            p = _as_partner(entry, f"{where}[{nucleus!r}][{k}]")
            pair_site = {"N": "H", "H": "N"}.get(nucleus)
            if p.site == pair_site and p.distance_m < _PAIR_GUARD_M:
                raise BackboneError(
                    f"{where}[{nucleus!r}][{k}]: the amide N-H pair is set by nh_distance, not by the environment"
                )
            partners.append(p)
        out[nucleus] = tuple(partners)
    return MappingProxyType(out)


def get_environment(environment=None) -> Mapping[str, tuple[Partner, ...]]:
    """The default geometry for ``None``, else :func:`validate_environment` of ``environment``."""
    if environment is None:
        return DEFAULT_ENVIRONMENT
    return validate_environment(environment)
