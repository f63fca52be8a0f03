"""Scalar couplings of the protein backbone and the beta/gamma side-chain carbons, with their sources.

Every coupling kind has a typical value, the range it spans in proteins and a published source. Values are
signed: the reduced coupling constant of directly bonded nuclei (and of the two-bond N–CA(i−1) pair) is
positive, so J carries the sign of γAγB. Couplings to 15N (γ < 0) are negative; C–C and C–H couplings are
positive. Transfer functions that only depend on |J| say so.

Kind names
----------
``nJ(A,B)`` with PDB atom names; ``(i-1)`` marks a partner in the preceding residue. The one-bond N–C′
coupling ``1J(N,C)`` always joins N(i) to the carbonyl C(i−1) (the peptide bond). The CB–CG coupling has one
kind per chemical type of the gamma carbon, because an sp² partner couples more strongly:
``1J(CB,CG)[aliphatic]``, ``1J(CB,CG)[aromatic]``, ``1J(CB,CG)[carbonyl]`` (see :data:`GAMMA_CARBONS`).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType

from backbone.errors import BackboneError
from backbone.graph.karplus import DEFAULT_KARPLUS, KARPLUS_HN_HA, three_j_hn_ha_extrema

__all__ = [
    "Coupling",
    "COUPLINGS",
    "CG_TYPES",
    "CB_CG_KIND",
    "GAMMA_CARBONS",
    "coupling_info",
]


@dataclass(frozen=True)
class Coupling:
    """One scalar-coupling kind.

    kind : name, e.g. ``"1J(N,CA)"``
    typical_hz : typical signed value [Hz]
    range_hz : (low, high) signed range seen in proteins [Hz], low <= typical <= high
    source : citation of the value
    nbonds : number of bonds between the coupled nuclei (1, 2 or 3)
    """

    kind: str
    typical_hz: float
    range_hz: tuple[float, float]
    source: str
    nbonds: int

    def __post_init__(self):
        low, high = self.range_hz
        if not low <= self.typical_hz <= high:
            raise BackboneError(
                f"coupling {self.kind}: typical {self.typical_hz} Hz lies outside its range [{low}, {high}] Hz"
            )
        if self.nbonds not in (1, 2, 3) or not self.kind.startswith(f"{self.nbonds}J("):
            raise BackboneError(f"coupling {self.kind}: nbonds {self.nbonds} does not match the kind name")


_CAVANAGH = (
    "Cavanagh, Fairbrother, Palmer, Rance & Skelton, Protein NMR Spectroscopy, 2nd ed., Academic Press "
    "(2007), figure of backbone scalar couplings (from memory)"
)
_SATTLER = (
    "Sattler, Schleucher & Griesinger, Prog. Nucl. Magn. Reson. Spectrosc. 34, 93-158 (1999), Fig. 1 "
    "(from memory)"
)
_DELAGLIO = "Delaglio, Torchia & Bax, J. Biomol. NMR 1, 439-446 (1991) (from memory)"
_VUISTER_1992 = (
    "Vuister, Delaglio & Bax, J. Am. Chem. Soc. 114, 9674-9675 (1992), 1J(CA,HA) against backbone "
    "conformation (from memory)"
)
_KRIVDIN = (
    "Krivdin & Kalabin, Prog. Nucl. Magn. Reson. Spectrosc. 21, 293-448 (1989), review of one-bond "
    "13C-13C couplings (from memory)"
)

_3J_LOW, _3J_HIGH = three_j_hn_ha_extrema(DEFAULT_KARPLUS)

_TABLE = (
    Coupling("1J(N,H)", -92.0, (-95.0, -89.0), f"{_CAVANAGH}; {_SATTLER}", 1),
    Coupling("1J(N,C)", -15.0, (-17.0, -13.0), f"{_CAVANAGH}; {_SATTLER}", 1),
    Coupling("1J(N,CA)", -11.0, (-13.0, -7.0), f"{_DELAGLIO}; {_CAVANAGH}", 1),
    Coupling("2J(N,CA(i-1))", -7.0, (-9.0, -4.0), f"{_DELAGLIO}; {_CAVANAGH}", 2),
    Coupling("1J(CA,C)", 55.0, (51.0, 57.0), f"{_CAVANAGH}; {_SATTLER}", 1),
    Coupling("1J(CA,CB)", 35.0, (32.0, 40.0), f"{_CAVANAGH}; {_SATTLER}", 1),
    Coupling("1J(CA,HA)", 140.0, (130.0, 150.0), f"{_CAVANAGH}; {_VUISTER_1992}", 1),
    Coupling("1J(CB,HB)", 130.0, (120.0, 150.0), f"{_CAVANAGH} (aliphatic C-H; higher next to O in Ser/Thr)", 1),
    Coupling(
        "1J(CB,CG)[aliphatic]",
        35.0,
        (32.0, 38.0),
        f"sp3-sp3 carbon pair, ethane 34.6 Hz; {_KRIVDIN}",
        1,
    ),
    Coupling(
        "1J(CB,CG)[aromatic]",
        46.0,
        (42.0, 52.0),
        f"sp3 carbon to aromatic ring carbon, toluene CH3-C(ipso) about 44 Hz; {_KRIVDIN}",
        1,
    ),
    Coupling(
        "1J(CB,CG)[carbonyl]",
        52.0,
        (49.0, 56.0),
        f"sp3 carbon to carboxyl/carboxamide carbon, acetate/acetic acid about 52-57 Hz; {_KRIVDIN}",
        1,
    ),
    Coupling(
        "3J(H,HA)",
        7.0,
        (_3J_LOW, _3J_HIGH),
        "typical 7 Hz of an unstructured chain (common practice, from memory); range = extremes of the Karplus "
        f"curve of {KARPLUS_HN_HA[DEFAULT_KARPLUS].source}; per-residue values come from phi",
        3,
    ),
)

#: Coupling kinds by name.
COUPLINGS: Mapping[str, Coupling] = MappingProxyType({c.kind: c for c in _TABLE})

#: Chemical types of a gamma carbon, as far as the CB–CG coupling is concerned.
CG_TYPES = ("aliphatic", "aromatic", "carbonyl")

#: Coupling kind of the CB–CG pair, by gamma-carbon type.
CB_CG_KIND: Mapping[str, str] = MappingProxyType({t: f"1J(CB,CG)[{t}]" for t in CG_TYPES})

_ALI, _ARO, _CO = CG_TYPES
#: Gamma carbons of each residue type (one-letter code): tuple of (PDB atom name, type). Only carbons count:
#: Thr has CG2 (its OG1 is an oxygen), Ile and Val have two gamma carbons; Ala, Ser, Cys and Gly none.
GAMMA_CARBONS: Mapping[str, tuple[tuple[str, str], ...]] = MappingProxyType(
    {
        "A": (),
        "C": (),
        "G": (),
        "S": (),
        "R": (("CG", _ALI),),
        "Q": (("CG", _ALI),),
        "E": (("CG", _ALI),),
        "L": (("CG", _ALI),),
        "K": (("CG", _ALI),),
        "M": (("CG", _ALI),),
        "P": (("CG", _ALI),),
        "I": (("CG1", _ALI), ("CG2", _ALI)),
        "V": (("CG1", _ALI), ("CG2", _ALI)),
        "T": (("CG2", _ALI),),
        "F": (("CG", _ARO),),
        "Y": (("CG", _ARO),),
        "W": (("CG", _ARO),),
        "H": (("CG", _ARO),),
        "D": (("CG", _CO),),
        "N": (("CG", _CO),),
    }
)


def coupling_info(kind: str) -> Coupling:
    """The :class:`Coupling` of ``kind``; an unknown kind raises :class:`BackboneError` listing the known ones."""
    try:
        return COUPLINGS[kind]
    except (KeyError, TypeError) as err:
        raise BackboneError(f"coupling kind {kind!r} is unknown; known kinds: {', '.join(COUPLINGS)}") from err
