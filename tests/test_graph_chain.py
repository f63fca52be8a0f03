"""The chain graph: template rules per residue type, coupling values, overrides, phi, helpers, errors."""

import math

import networkx as nx
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from graph_reference import GAMMA_CARBONS_BY_RESIDUE, TEXTBOOK_RANGE_HZ

from backbone.errors import BackboneError
from backbone.graph import (
    COUPLINGS,
    STANDARD_LETTERS,
    build_chain,
    coupling,
    couplings_of,
    residue_nodes,
    two_residue_subgraph,
)

# Chemical structure of the standard amino acids with PDB/IUPAC atom names (Markley et al., Pure Appl.
# Chem. 70, 117, 1998; common practice): beta protons and gamma carbons with their chemistry.
BETA_H = {aa: 2 for aa in STANDARD_LETTERS}
BETA_H.update({"G": 0, "A": 3, "I": 1, "T": 1, "V": 1})
GAMMA = {aa: g for aa, g in GAMMA_CARBONS_BY_RESIDUE.items() if g}

_ELEMENT = {"H": "H", "HA": "H", "HA2": "H", "HA3": "H", "HB": "H", "N": "N"}


def _karplus_vuister_bax(phi_deg):
    # 3J(HN,HA) = 6.51 cos^2(phi - 60) - 1.76 cos(phi - 60) + 1.60 Hz (Vuister & Bax, JACS 115, 7772, 1993)
    c = math.cos(math.radians(phi_deg - 60.0))
    return 6.51 * c * c - 1.76 * c + 1.60


def _atoms(G, r):
    return {atom for (res, atom) in G if res == r}


def _kinds(G, r):
    return sorted(d["kind"] for *_, d in G.edges(data=True) if d["residue"] == r)


# ---------------------------------------------------------------------------------------------------------
# Template rules, all 20 residue types (residue type X in the middle of A-X-A)
# ---------------------------------------------------------------------------------------------------------


@pytest.mark.parametrize("aa", list(STANDARD_LETTERS))
def test_template_of_every_residue_type(aa):
    G = build_chain(f"A{aa}A")
    atoms = _atoms(G, 2)
    expected = {"N", "CA", "C"}
    expected |= set() if aa == "P" else {"H"}  # Pro: the amide N carries no proton
    expected |= {"HA2", "HA3"} if aa == "G" else {"HA", "CB", "HB"}
    expected |= set(GAMMA.get(aa, {}))
    assert atoms == expected

    for atom in atoms:
        d = G.nodes[(2, atom)]
        assert d["residue"] == 2 and d["resname"] == aa and d["atom"] == atom
        assert d["element"] == _ELEMENT.get(atom, "C")
        assert d["label"] == f"{atom}(2)"
        assert d["terminal"] is False
    if aa != "G":
        assert G.nodes[(2, "HB")]["count"] == BETA_H[aa]
    for cg, cg_type in GAMMA.get(aa, {}).items():
        assert G.nodes[(2, cg)]["cg_type"] == cg_type
        assert G.edges[(2, "CB"), (2, cg)]["kind"] == f"1J(CB,CG)[{cg_type}]"

    expected_kinds = ["1J(N,CA)", "1J(CA,C)", "1J(N,C)", "2J(N,CA(i-1))"]
    expected_kinds += [] if aa == "P" else ["1J(N,H)"]
    expected_kinds += ["1J(CA,HA)"] * 2 if aa == "G" else ["1J(CA,HA)", "1J(CA,CB)", "1J(CB,HB)"]
    expected_kinds += [f"1J(CB,CG)[{t}]" for t in GAMMA.get(aa, {}).values()]
    assert _kinds(G, 2) == sorted(expected_kinds)
    assert G.has_edge((2, "N"), (1, "C")) and G.has_edge((2, "N"), (1, "CA"))
    assert nx.is_connected(G)


@pytest.mark.parametrize("aa", list(STANDARD_LETTERS))
def test_sites_follow_the_labeling_vocabulary(aa):
    # Sites of the interface: H, N, CA, C, CB, CG (any gamma carbon), HA (HA, HA2, HA3), HB.
    G = build_chain(aa * 2)
    site = {"HA2": "HA", "HA3": "HA", "CG1": "CG", "CG2": "CG"}
    for node, d in G.nodes(data=True):
        assert d["site"] == site.get(node[1], node[1])


def test_proline_has_no_amide_proton():
    G = build_chain("APA")
    assert (2, "H") not in G
    assert not couplings_of(G, (2, "N"), kinds="1J(N,H)")


def test_glycine_alpha_protons_and_no_cb():
    G = build_chain("AGA")
    assert {(2, "HA2"), (2, "HA3")} <= set(G) and (2, "HA") not in G
    assert (2, "CB") not in G and (2, "HB") not in G


@pytest.mark.parametrize("aa", ["A", "S", "C", "G"])
def test_no_cb_cg_coupling_without_gamma_carbon(aa):
    G = build_chain(f"A{aa}A")
    assert not any(k.startswith("1J(CB,CG)") for k in _kinds(G, 2))


def test_aspartate_carbonyl_and_phenylalanine_aromatic():
    G = build_chain("DF")
    assert G.nodes[(1, "CG")]["cg_type"] == "carbonyl"
    assert G.nodes[(2, "CG")]["cg_type"] == "aromatic"


def test_two_gamma_carbons_for_ile_and_val_one_for_thr():
    G = build_chain("IVT")
    assert len(couplings_of(G, (1, "CB"), kinds="1J(CB,CG)[aliphatic]")) == 2
    assert len(couplings_of(G, (2, "CB"), kinds="1J(CB,CG)[aliphatic]")) == 2
    assert [p for p, _ in couplings_of(G, (3, "CB"), kinds="1J(CB,CG)[aliphatic]")] == [(3, "CG2")]


def test_n_terminal_amide_proton_is_marked():
    # The N-terminal NH3+ exchanges fast with water and is not observed (common practice).
    G = build_chain("MKV")
    assert G.nodes[(1, "H")]["terminal"] is True
    assert G.nodes[(1, "H")]["count"] == 3
    assert G.nodes[(2, "H")]["terminal"] is False
    assert not couplings_of(G, (1, "N"), kinds=["1J(N,C)", "2J(N,CA(i-1))"])


def test_hand_counted_dipeptide():
    # Gly: H N CA HA2 HA3 C (6 nodes; N-H N-CA CA-HA2 CA-HA3 CA-C); Pro: N CA HA CB HB CG C (7 nodes;
    # N-CA CA-HA CA-CB CB-HB CB-CG CA-C); peptide link N(2)-C(1) and N(2)-CA(1). Counted by hand.
    G = build_chain("GP")
    assert G.number_of_nodes() == 13
    assert G.number_of_edges() == 13
    assert G.graph["sequence"] == "GP"


@pytest.mark.parametrize("kind", sorted(TEXTBOOK_RANGE_HZ))
def test_edge_values_within_textbook_ranges(kind):
    G = build_chain("MDFGKIPTVWSNH", phi_deg=-65.0)
    edges = [d for *_, d in G.edges(data=True) if d["kind"] == kind]
    assert edges, kind
    lo, hi = TEXTBOOK_RANGE_HZ[kind]
    for d in edges:
        assert lo <= d["j_hz"] <= hi
        assert d["j_range_hz"][0] <= d["j_hz"] <= d["j_range_hz"][1]
        assert d["nbonds"] == int(kind[0])
        assert d["source"]


def test_coupling_signs():
    # Couplings to 15N are negative (gamma(15N) < 0), C-C and C-H positive (Sattler et al. 1999, from memory).
    G = build_chain("MKDF", phi_deg=-120.0)
    for u, v, d in G.edges(data=True):
        has_n = "N" in (G.nodes[u]["element"], G.nodes[v]["element"])
        assert (d["j_hz"] < 0) == has_n


# ---------------------------------------------------------------------------------------------------------
# phi and 3J(H,HA)
# ---------------------------------------------------------------------------------------------------------


def test_scalar_phi_gives_karplus_values():
    G = build_chain("MKLE", phi_deg=-57.0)
    for r in (2, 3, 4):
        d = G.edges[(r, "H"), (r, "HA")]
        assert d["kind"] == "3J(H,HA)" and d["nbonds"] == 3 and d["phi_deg"] == -57.0
        assert_allclose(d["j_hz"], _karplus_vuister_bax(-57.0), rtol=1e-12)
    assert not G.has_edge((1, "H"), (1, "HA"))  # residue 1 has no phi


def test_phi_per_residue_with_unknowns_and_excluded_types():
    phi = [-60.0, -120.0, np.nan, -70.0, -80.0, -140.0]
    G = build_chain("MKLPGA", phi_deg=phi)
    assert_allclose(coupling(G, (2, "H"), (2, "HA")), _karplus_vuister_bax(-120.0), rtol=1e-12)
    assert not G.has_edge((3, "H"), (3, "HA"))  # NaN = unknown
    assert (4, "H") not in G  # Pro: no amide proton, so no 3J(H,HA)
    assert not any(d["kind"] == "3J(H,HA)" for *_, d in G.edges([(5, "H")], data=True))  # Gly: not modeled
    assert_allclose(coupling(G, (6, "H"), (6, "HA")), _karplus_vuister_bax(-140.0), rtol=1e-12)


def test_other_karplus_set():
    # Pardi, Billeter & Wüthrich, J. Mol. Biol. 180, 741 (1984): 6.4 cos^2 - 1.4 cos + 1.9 (from memory).
    G = build_chain("MK", phi_deg=-100.0, karplus="pardi-1984")
    c = math.cos(math.radians(-160.0))
    assert_allclose(coupling(G, (2, "H"), (2, "HA")), 6.4 * c * c - 1.4 * c + 1.9, rtol=1e-12)
    assert "Pardi" in G.edges[(2, "H"), (2, "HA")]["source"]


def test_no_phi_no_three_bond_edges():
    G = build_chain("MKLE")
    assert not any(d["kind"] == "3J(H,HA)" for *_, d in G.edges(data=True))


@pytest.mark.parametrize(
    "phi, message",
    [
        ([-60.0, -60.0], r"got 2 values.*give one number or 3"),
        (np.zeros((3, 1)), r"shape \(3, 1\)"),
        ([-60.0, np.inf, -60.0], "residue 2 has an infinite angle"),
        ("helix", "expected a number or one number per residue"),
    ],
)
def test_bad_phi(phi, message):
    with pytest.raises(BackboneError, match=message):
        build_chain("MKL", phi_deg=phi)


def test_unknown_karplus_set_in_build_chain():
    with pytest.raises(BackboneError, match="Karplus coefficients 'nope'"):
        build_chain("MK", phi_deg=-60.0, karplus="nope")


# ---------------------------------------------------------------------------------------------------------
# overrides
# ---------------------------------------------------------------------------------------------------------


def test_global_override():
    G = build_chain("MKLE", overrides={"1J(N,CA)": -10.5})
    values = {d["j_hz"] for *_, d in G.edges(data=True) if d["kind"] == "1J(N,CA)"}
    assert values == {-10.5}
    assert "override" in G.edges[(3, "N"), (3, "CA")]["source"]
    assert coupling(G, (3, "N"), (2, "CA")) == COUPLINGS["2J(N,CA(i-1))"].typical_hz


def test_per_residue_override_wins_over_global():
    G = build_chain("MKLEV", overrides={"1J(N,CA)": -10.5, 5: {"1J(N,CA)": -9.0}})
    assert coupling(G, (5, "N"), (5, "CA")) == -9.0
    assert coupling(G, (4, "N"), (4, "CA")) == -10.5
    assert G.edges[(5, "N"), (5, "CA")]["source"] == "user override (residue 5)"


def test_inter_residue_override_is_keyed_by_later_residue():
    G = build_chain("MKLE", overrides={3: {"2J(N,CA(i-1))": -8.0, "1J(N,C)": -14.0}})
    assert coupling(G, (3, "N"), (2, "CA")) == -8.0
    assert coupling(G, (3, "N"), (2, "C")) == -14.0
    assert coupling(G, (4, "N"), (3, "CA")) == COUPLINGS["2J(N,CA(i-1))"].typical_hz
    assert G.edges[(3, "N"), (2, "CA")]["residue"] == 3


def test_three_bond_override_creates_the_edge():
    G = build_chain("MKLE", overrides={3: {"3J(H,HA)": 8.2}})
    assert coupling(G, (3, "H"), (3, "HA")) == 8.2
    assert not G.has_edge((2, "H"), (2, "HA"))
    G = build_chain("MKLE", overrides={"3J(H,HA)": 6.0}, phi_deg=-120.0)
    assert {coupling(G, (r, "H"), (r, "HA")) for r in (2, 3, 4)} == {6.0}


def test_numpy_numbers_in_overrides():
    G = build_chain("MKL", overrides={np.int64(2): {"1J(N,H)": np.float64(-93.0)}})
    assert coupling(G, (2, "N"), (2, "H")) == -93.0


@pytest.mark.parametrize(
    "overrides, message",
    [
        ({"1J(N,CX)": -10.0}, r"coupling kind '1J\(N,CX\)' is unknown"),
        ({2: {"2J(N,HX)": -10.0}}, r"coupling kind '2J\(N,HX\)' is unknown"),
        ({0: {"1J(N,CA)": -10.0}}, r"residue 0 is outside the chain \(residues 1..3\)"),
        ({4: {"1J(N,CA)": -10.0}}, r"residue 4 is outside the chain"),
        ({2: -10.0}, "residue 2 needs a mapping"),
        ({2.0: {"1J(N,CA)": -10.0}}, "key 2.0 is neither a coupling kind"),
        ({True: {"1J(N,CA)": -10.0}}, "key True is neither"),
        ([("1J(N,CA)", -10.0)], "overrides: expected a mapping"),
        ({"1J(N,CA)": "eleven"}, "1J\\(N,CA\\) must be a finite number"),
        ({"1J(N,CA)": float("nan")}, "must be a finite number"),
        ({"1J(N,CA)": True}, "must be a finite number"),
        ({"1J(N,CA)": 11.0}, r"wrong sign; couplings to 15N are negative"),
        ({2: {"1J(CA,C)": -55.0}}, r"residue 2: 1J\(CA,C\) = -55 Hz has the wrong sign; this coupling is positive"),
        ({1: {"2J(N,CA(i-1))": -7.0}}, r"residue 1 \(M\): it has no 2J\(N,CA\(i-1\)\) coupling"),
        ({1: {"3J(H,HA)": 7.0}}, r"residue 1 \(M\): it has no 3J\(H,HA\)"),
        ({2: {"1J(N,H)": -92.0}}, r"residue 2 \(P\): it has no 1J\(N,H\) coupling; its kinds: 1J\(N,C\)"),
        ({3: {"1J(CB,CG)[aromatic]": 46.0}}, r"residue 3 \(A\): it has no 1J\(CB,CG\)\[aromatic\]"),
    ],
)
def test_bad_overrides(overrides, message):
    with pytest.raises(BackboneError, match=message):
        build_chain("MPA", overrides=overrides)


def test_glycine_three_bond_override_is_refused():
    with pytest.raises(BackboneError, match=r"residue 2 \(G\): it has no 3J\(H,HA\)"):
        build_chain("MGA", overrides={2: {"3J(H,HA)": 6.0}})


def test_global_override_of_absent_kind_is_harmless():
    # a global value is a rule for every edge of that kind; a chain without aromatic residues has none
    G = build_chain("MKL", overrides={"1J(CB,CG)[aromatic]": 47.0})
    assert not any(d["kind"] == "1J(CB,CG)[aromatic]" for *_, d in G.edges(data=True))


def test_bad_sequence_in_build_chain():
    with pytest.raises(BackboneError, match=r"^build_chain: letter 'X' at residue 3"):
        build_chain("MKXL")


def test_fasta_input():
    G = build_chain(">invented demo protein\nMK\nLE\n")
    assert G.graph["sequence"] == "MKLE"
    assert residue_nodes(G, 4)[0] == (4, "H")


# ---------------------------------------------------------------------------------------------------------
# helpers
# ---------------------------------------------------------------------------------------------------------


def test_couplings_of():
    G = build_chain("MKL")
    partners = {p: d["kind"] for p, d in couplings_of(G, (2, "N"))}
    assert partners == {
        (2, "H"): "1J(N,H)",
        (2, "CA"): "1J(N,CA)",
        (1, "C"): "1J(N,C)",
        (1, "CA"): "2J(N,CA(i-1))",
    }
    only = couplings_of(G, (2, "N"), kinds=["1J(N,CA)", "2J(N,CA(i-1))"])
    assert sorted(p for p, _ in only) == [(1, "CA"), (2, "CA")]
    assert [p for p, _ in couplings_of(G, (2, "N"), kinds="1J(N,H)")] == [(2, "H")]


def test_couplings_of_errors():
    G = build_chain("MKL")
    with pytest.raises(BackboneError, match=r"node CA\(9\) is not in the chain graph"):
        couplings_of(G, (9, "CA"))
    with pytest.raises(BackboneError, match="not in the chain graph"):
        couplings_of(G, [2, "CA"])
    with pytest.raises(BackboneError, match=r"'1J\(N,X\)' is unknown"):
        couplings_of(G, (2, "N"), kinds="1J(N,X)")


def test_residue_nodes_order_and_errors():
    G = build_chain("MIG")
    assert residue_nodes(G, 2) == [
        (2, "H"),
        (2, "N"),
        (2, "CA"),
        (2, "HA"),
        (2, "CB"),
        (2, "HB"),
        (2, "CG1"),
        (2, "CG2"),
        (2, "C"),
    ]
    assert residue_nodes(G, 3) == [(3, "H"), (3, "N"), (3, "CA"), (3, "HA2"), (3, "HA3"), (3, "C")]
    with pytest.raises(BackboneError, match=r"residue 4 is not in the chain graph \(residues 1..3\)"):
        residue_nodes(G, 4)
    with pytest.raises(BackboneError, match="must be an integer"):
        residue_nodes(G, "2")


def test_coupling_value_and_errors():
    G = build_chain("MK")
    assert coupling(G, (2, "N"), (2, "H")) == COUPLINGS["1J(N,H)"].typical_hz
    assert coupling(G, (1, "C"), (2, "N")) == coupling(G, (2, "N"), (1, "C"))
    with pytest.raises(BackboneError, match=r"no scalar coupling between CA\(1\) and HB\(2\)"):
        coupling(G, (1, "CA"), (2, "HB"))
    with pytest.raises(BackboneError, match=r"node CX\(1\) is not in the chain graph"):
        coupling(G, (1, "CX"), (1, "CA"))


def test_two_residue_subgraph():
    G = build_chain("MKLE")
    S = two_residue_subgraph(G, 3)
    assert set(S) == set(residue_nodes(G, 2)) | set(residue_nodes(G, 3))
    assert S.has_edge((3, "N"), (2, "C")) and S.has_edge((3, "N"), (2, "CA"))
    assert not S.has_edge((2, "N"), (1, "C"))
    assert S.number_of_edges() == G.subgraph(S.nodes).number_of_edges()
    assert list(S)[:2] == [(2, "H"), (2, "N")]
    S.edges[(3, "N"), (2, "C")]["j_hz"] = 0.0  # an independent copy
    assert coupling(G, (3, "N"), (2, "C")) == COUPLINGS["1J(N,C)"].typical_hz


def test_two_residue_subgraph_errors():
    G = build_chain("MKL")
    with pytest.raises(BackboneError, match="residue 1 has no preceding residue"):
        two_residue_subgraph(G, 1)
    with pytest.raises(BackboneError, match="residue 7 is not in the chain graph"):
        two_residue_subgraph(G, 7)


# ---------------------------------------------------------------------------------------------------------
# properties of any chain
# ---------------------------------------------------------------------------------------------------------


@settings(max_examples=40, deadline=None)
@given(st.text(alphabet=STANDARD_LETTERS, min_size=1, max_size=40))
def test_any_chain_is_consistent(seq):
    G = build_chain(seq)
    assert nx.is_connected(G)
    for (r, atom), d in G.nodes(data=True):
        assert d["residue"] == r and d["atom"] == atom and d["resname"] == seq[r - 1]
    for u, v, d in G.edges(data=True):
        c = COUPLINGS[d["kind"]]
        assert d["j_hz"] == c.typical_hz and d["j_range_hz"] == c.range_hz
        assert d["residue"] == max(u[0], v[0])
    # a peptide bond and a two-bond N-CA(i-1) coupling between each pair of neighbours
    assert sum(d["kind"] == "1J(N,C)" for *_, d in G.edges(data=True)) == len(seq) - 1
    amide_h = sum(aa != "P" for aa in seq)
    assert sum(d["kind"] == "1J(N,H)" for *_, d in G.edges(data=True)) == amide_h


def test_long_chain_builds():
    seq = STANDARD_LETTERS * 50
    G = build_chain(seq, phi_deg=-65.0)
    # Counted by hand over the 20 types: N, CA, C each (60); H except Pro (19); HA, or HA2 + HA3 for Gly
    # (21); CB + HB except Gly (38); gamma carbons (18: two each for Ile and Val) -> 156 nodes per block.
    # Each residue's nodes form a tree (nodes - 1 edges), plus two links per peptide bond, plus one 3J(H,HA)
    # for each residue with phi that is neither Pro nor Gly (18 per block, minus residue 1).
    assert G.number_of_nodes() == 156 * 50
    assert G.number_of_edges() == (156 * 50 - 1000) + 2 * 999 + (18 * 50 - 1)
    assert residue_nodes(G, 1000)[-1] == (1000, "C")


def test_public_api_resolves():
    import backbone.graph

    for name in backbone.graph.__all__:
        assert getattr(backbone.graph, name) is not None
    with pytest.raises(AttributeError, match="no attribute 'no_such_name'"):
        backbone.graph.no_such_name  # noqa: B018
