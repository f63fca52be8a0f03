"""Coupling table, gamma-carbon rules and the Karplus relation, checked against published values."""

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from graph_reference import GAMMA_CARBONS_BY_RESIDUE, TEXTBOOK_RANGE_HZ

from backbone.constants import GAMMA
from backbone.errors import BackboneError
from backbone.graph import (
    CB_CG_KIND,
    CG_TYPES,
    COUPLINGS,
    DEFAULT_KARPLUS,
    GAMMA_CARBONS,
    KARPLUS_HN_HA,
    Coupling,
    KarplusSet,
    coupling_info,
    karplus_set,
    three_j_hn_ha,
    three_j_hn_ha_extrema,
)

# Nuclei of each kind, for the sign rule below (PDB atom -> isotope).
_ISOTOPE = {"H": "1H", "HA": "1H", "HB": "1H", "N": "15N", "C": "13C", "CA": "13C", "CB": "13C", "CG": "13C"}
_NUCLEI = {
    "1J(N,H)": ("N", "H"),
    "1J(N,C)": ("N", "C"),
    "1J(N,CA)": ("N", "CA"),
    "2J(N,CA(i-1))": ("N", "CA"),
    "1J(CA,C)": ("CA", "C"),
    "1J(CA,CB)": ("CA", "CB"),
    "1J(CA,HA)": ("CA", "HA"),
    "1J(CB,HB)": ("CB", "HB"),
    "1J(CB,CG)[aliphatic]": ("CB", "CG"),
    "1J(CB,CG)[aromatic]": ("CB", "CG"),
    "1J(CB,CG)[carbonyl]": ("CB", "CG"),
    "3J(H,HA)": ("H", "HA"),
}


def test_table_has_every_kind_of_the_brief():
    assert set(COUPLINGS) == set(TEXTBOOK_RANGE_HZ)


@pytest.mark.parametrize("kind", sorted(TEXTBOOK_RANGE_HZ))
def test_typical_value_and_range_inside_textbook_range(kind):
    c = COUPLINGS[kind]
    lo, hi = TEXTBOOK_RANGE_HZ[kind]
    assert lo <= c.typical_hz <= hi
    assert lo - 1e-9 <= c.range_hz[0] <= c.typical_hz <= c.range_hz[1] <= hi + 1e-9
    assert c.kind == kind
    assert c.source


@pytest.mark.parametrize("kind", sorted(_NUCLEI))
def test_sign_follows_gyromagnetic_ratios(kind):
    # One- and two-bond backbone couplings have a positive reduced coupling constant, so J has the sign of
    # gamma_A * gamma_B: negative to 15N, positive for C-C and C-H (Sattler et al. 1999, Fig. 1, from memory;
    # common practice). Gyromagnetic ratios: Harris et al., Pure Appl. Chem. 73, 1795 (2001).
    a, b = _NUCLEI[kind]
    sign = math.copysign(1.0, GAMMA[_ISOTOPE[a]].value * GAMMA[_ISOTOPE[b]].value)
    c = COUPLINGS[kind]
    assert math.copysign(1.0, c.typical_hz) == sign
    assert all(math.copysign(1.0, x) == sign for x in c.range_hz)


@pytest.mark.parametrize("kind", sorted(COUPLINGS))
def test_nbonds_matches_the_coupling_path(kind):
    # Number of bonds on the path: N-CA(i-1) goes N(i)-C(i-1)-CA(i-1); H-N-CA-HA is three bonds (common practice).
    expected = {"2J(N,CA(i-1))": 2, "3J(H,HA)": 3}.get(kind, 1)
    assert COUPLINGS[kind].nbonds == expected


def test_cb_cg_kinds_exist_for_every_gamma_type():
    assert set(CB_CG_KIND) == set(CG_TYPES) == {"aliphatic", "aromatic", "carbonyl"}
    assert all(kind in COUPLINGS for kind in CB_CG_KIND.values())
    # An sp2 gamma carbon couples more strongly to CB than an sp3 one (Krivdin & Kalabin 1989, from memory).
    ali, aro, co = (COUPLINGS[CB_CG_KIND[t]].typical_hz for t in ("aliphatic", "aromatic", "carbonyl"))
    assert ali < aro and ali < co


EXPECTED_GAMMA = GAMMA_CARBONS_BY_RESIDUE


@pytest.mark.parametrize("aa", sorted(EXPECTED_GAMMA))
def test_gamma_carbon_rule_table(aa):
    assert dict(GAMMA_CARBONS[aa]) == EXPECTED_GAMMA[aa]


def test_coupling_info_and_unknown_kind():
    assert coupling_info("1J(N,CA)") is COUPLINGS["1J(N,CA)"]
    with pytest.raises(BackboneError, match=r"'1J\(N,CX\)' is unknown.*1J\(N,H\)"):
        coupling_info("1J(N,CX)")
    with pytest.raises(BackboneError, match="unknown"):
        coupling_info(["1J(N,CA)"])


def test_coupling_rejects_typical_outside_range():
    with pytest.raises(BackboneError, match="outside its range"):
        Coupling("1J(N,CA)", -20.0, (-13.0, -7.0), "test", 1)


def test_coupling_rejects_nbonds_not_matching_kind():
    with pytest.raises(BackboneError, match="nbonds"):
        Coupling("2J(N,CA(i-1))", -7.0, (-9.0, -4.0), "test", 1)
    with pytest.raises(BackboneError, match="nbonds"):
        Coupling("4J(H,H)", 1.0, (0.0, 2.0), "test", 4)


# ---------------------------------------------------------------------------------------------------------
# Karplus relation
# ---------------------------------------------------------------------------------------------------------


def _karplus_inline(phi_deg, a, b, c):
    # 3J = A cos^2(theta) + B cos(theta) + C, theta = phi - 60 deg (Vuister & Bax, JACS 115, 7772, 1993).
    theta = np.radians(np.asarray(phi_deg, dtype=float) - 60.0)
    return a * np.cos(theta) ** 2 + b * np.cos(theta) + c


def test_default_set_is_vuister_bax():
    # Vuister & Bax, J. Am. Chem. Soc. 115, 7772 (1993): A 6.51, B -1.76, C 1.60 Hz (from memory).
    k = KARPLUS_HN_HA[DEFAULT_KARPLUS]
    assert (k.a_hz, k.b_hz, k.c_hz, k.phase_deg) == (6.51, -1.76, 1.60, -60.0)


def test_vuister_bax_against_inline_formula():
    phi = np.linspace(-180.0, 180.0, 73)
    assert_allclose(three_j_hn_ha(phi), _karplus_inline(phi, 6.51, -1.76, 1.60), rtol=1e-12, atol=1e-12)


def test_pardi_set_against_inline_formula():
    # Pardi, Billeter & Wüthrich, J. Mol. Biol. 180, 741 (1984): A 6.4, B -1.4, C 1.9 Hz (from memory).
    phi = np.array([-160.0, -120.0, -65.0, -57.0, 60.0])
    assert_allclose(
        three_j_hn_ha(phi, coefficients="pardi-1984"), _karplus_inline(phi, 6.4, -1.4, 1.9), rtol=1e-12
    )


def test_secondary_structure_values():
    # alpha helix (phi about -57 deg) gives about 4 Hz; beta strand (phi about -120 deg) gives about 9 Hz;
    # helices < 5 Hz and strands > 8 Hz (Wüthrich, NMR of Proteins and Nucleic Acids, 1986; common practice).
    helix = three_j_hn_ha(-57.0)
    strand = three_j_hn_ha(-120.0)
    assert isinstance(helix, float)
    assert_allclose(helix, 4.0, atol=0.5)
    assert helix < 5.0
    assert_allclose(strand, 9.0, atol=1.0)
    assert strand > 8.0


def test_shape_and_nan_are_kept():
    phi = np.array([[-60.0, np.nan], [-120.0, 50.0]])
    j = three_j_hn_ha(phi)
    assert j.shape == (2, 2)
    assert np.isnan(j[0, 1]) and np.isfinite(j[0, 0])


@given(st.floats(min_value=-720.0, max_value=720.0, allow_nan=False))
def test_periodic_in_phi(phi):
    # A dihedral-angle function is 360-degree periodic (Karplus, J. Chem. Phys. 30, 11, 1959).
    assert_allclose(three_j_hn_ha(phi + 360.0), three_j_hn_ha(phi), atol=1e-9)


@pytest.mark.parametrize("name", sorted(KARPLUS_HN_HA))
def test_extrema_against_dense_grid(name):
    k = KARPLUS_HN_HA[name]
    grid = _karplus_inline(np.linspace(-180.0, 180.0, 360001), k.a_hz, k.b_hz, k.c_hz)
    lo, hi = three_j_hn_ha_extrema(name)
    assert_allclose((lo, hi), (grid.min(), grid.max()), atol=1e-6)


def test_three_j_range_in_table_is_the_curve_range():
    grid = _karplus_inline(np.linspace(-180.0, 180.0, 360001), 6.51, -1.76, 1.60)
    assert_allclose(COUPLINGS["3J(H,HA)"].range_hz, (grid.min(), grid.max()), atol=1e-6)


def test_custom_karplus_set_and_extrema_without_vertex():
    # A pure cos(theta) curve (A = 0) has its extremes at theta = 0 and 180 deg: C - |B| and C + |B|.
    k = KarplusSet("linear", 0.0, 2.0, 5.0, -60.0, "test curve")
    assert karplus_set(k) is k
    assert_allclose(three_j_hn_ha(60.0, coefficients=k), 7.0)
    assert_allclose(three_j_hn_ha_extrema(k), (3.0, 7.0))


def test_unknown_karplus_set():
    with pytest.raises(BackboneError, match=r"'no-such-set' are unknown.*vuister-bax-1993"):
        three_j_hn_ha(-60.0, coefficients="no-such-set")
    with pytest.raises(BackboneError, match="unknown"):
        karplus_set(None)
