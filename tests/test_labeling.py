"""Labeling schemes: bundled files, natural abundance, deuteration, user files, graph labeling and every error."""

from __future__ import annotations

import dataclasses
import re
from pathlib import Path

import networkx as nx
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

import backbone.labeling.scheme as scheme_module
from backbone.errors import BackboneError
from backbone.labeling import (
    BACKBONE_SITES,
    SITES,
    LabelingScheme,
    SiteLabel,
    apply_labeling,
    load_scheme,
    registered_schemes,
    unlabeled_sites,
)
from backbone.resources import models_dir

# Natural abundances, Harris, Becker, Cabral de Menezes, Goodfellow & Granger, Pure Appl. Chem. 73, 1795 (2001),
# Table 1 (in %): 1H 99.9885, 13C 1.07, 15N 0.368. Written out here, not taken from the package.
IUPAC_1H = 0.999885
IUPAC_13C = 0.0107
IUPAC_15N = 0.00368

BUNDLED_IDS = sorted(registered_schemes())
HYDROGEN_SITES = ("H", "HA", "HB", "HMETHYL_ILV", "HSIDE")
CARBON_SITES = ("CA", "C", "CB", "CG")


# ---------------------------------------------------------------------------------------------------------
# Helpers writing scheme files
# ---------------------------------------------------------------------------------------------------------

_PROTONATED_SITES = {
    "H": '{ isotope = "1H", fraction = 1.0 }',
    "N": '{ isotope = "15N", fraction = 0.99 }',
    "CA": '{ isotope = "13C", fraction = 0.99 }',
    "C": '{ isotope = "13C", fraction = 0.99 }',
    "CB": '{ isotope = "13C", fraction = 0.99 }',
    "CG": '{ isotope = "13C", fraction = 0.99 }',
    "HA": '{ isotope = "1H", fraction = "natural" }',
    "HB": '{ isotope = "1H", fraction = "natural" }',
    "HMETHYL_ILV": '{ isotope = "1H", fraction = "natural" }',
    "HSIDE": '{ isotope = "1H", fraction = "natural" }',
}
_DEUTERATED = '{ isotope = "1H", deuterated = true }'
_DEUTERATION = "[deuteration]\nlevel = 0.9\nrange = [0.6, 0.95]\nadjustable = true\n"


def scheme_text(*, top: str = "", deuteration: str = "", sites: dict | None = None, drop=()) -> str:
    """TOML text of a scheme; ``sites`` overrides entries (None removes one), ``drop`` removes top keys."""
    entries = dict(_PROTONATED_SITES)
    for key, value in (sites or {}).items():
        if value is None:
            entries.pop(key, None)
        else:
            entries[key] = value
    head = {"id": '"lab-test"', "name": '"test scheme"', "description": '"""\nA scheme for the tests.\n"""'}
    lines = [f"{k} = {v}" for k, v in head.items() if k not in drop]
    lines.append(top)
    lines.append(deuteration)
    if "sites" not in drop:
        lines.append("[sites]")
        lines += [f"{k} = {v}" for k, v in entries.items()]
    return "\n".join(lines) + "\n"


def write(tmp_path: Path, text: str, name: str = "scheme.toml") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def deuterated_sites(**extra):
    sites = {s: _DEUTERATED for s in ("HA", "HB", "HMETHYL_ILV", "HSIDE")}
    sites.update(extra)
    return sites


# ---------------------------------------------------------------------------------------------------------
# Bundled schemes
# ---------------------------------------------------------------------------------------------------------


def test_the_four_documented_schemes_are_bundled():
    # Scheme ids fixed by the project's architecture notes (15n, 13c15n, 2h13c15n, 2h13c15n-ilv).
    assert {"15n", "13c15n", "2h13c15n", "2h13c15n-ilv"} <= set(BUNDLED_IDS)


@pytest.mark.parametrize("scheme_id", BUNDLED_IDS)
def test_every_bundled_scheme_loads_and_is_complete(scheme_id):
    scheme = load_scheme(scheme_id)
    assert scheme.id == scheme_id
    assert Path(scheme.source).name == f"{scheme_id}.toml"
    assert Path(scheme.source).is_file()
    assert tuple(scheme.sites) == SITES
    assert scheme.name.strip() and scheme.description.strip()
    for site in SITES:
        f = scheme.fraction(site)
        assert 0.0 <= f <= 1.0
        assert scheme.isotope(site) in {"1H", "2H", "13C", "12C", "15N", "14N"}
    # Every bundled scheme labels the amide 15N and keeps the amide proton (back-exchanged if deuterated):
    # the 1H-15N correlation is the entry point of every backbone experiment (common practice).
    assert scheme.is_labeled("N") and scheme.is_labeled("H")
    assert scheme.fraction("H") == 1.0
    with pytest.raises(dataclasses.FrozenInstanceError):
        scheme.id = "other"  # type: ignore[misc]
    with pytest.raises(TypeError):
        scheme.sites["CA"] = SiteLabel("13C", 0.5)  # type: ignore[index]


@pytest.mark.parametrize("scheme_id", BUNDLED_IDS)
def test_bundled_scheme_loads_by_path_too(scheme_id):
    by_path = load_scheme(models_dir("labeling") / f"{scheme_id}.toml")
    assert by_path == load_scheme(scheme_id)


@pytest.mark.parametrize("scheme_id", BUNDLED_IDS)
def test_as_dict_reports_every_site(scheme_id):
    scheme = load_scheme(scheme_id)
    d = scheme.as_dict()
    assert d["id"] == scheme_id and set(d["sites"]) == set(SITES)
    for site in SITES:
        assert d["sites"][site]["fraction"] == scheme.fraction(site)
        assert d["sites"][site]["isotope"] == scheme.isotope(site)


def test_15n_leaves_carbons_at_iupac_natural_abundance():
    scheme = load_scheme("15n")
    for site in CARBON_SITES:
        # Harris et al. 2001, Table 1: 13C 1.07 %.
        assert_allclose(scheme.fraction(site), IUPAC_13C, rtol=0, atol=1e-12)
        assert scheme.isotope(site) == "12C"
    for site in ("HA", "HB", "HMETHYL_ILV", "HSIDE"):
        # Harris et al. 2001, Table 1: 1H 99.9885 %.
        assert_allclose(scheme.fraction(site), IUPAC_1H, rtol=0, atol=1e-12)
    # A 15N-only sample has no 13C label on the backbone (fact of the trade).
    assert unlabeled_sites(scheme) == ("CA", "C", "CB")


def test_13c15n_labels_every_backbone_site():
    scheme = load_scheme("13c15n")
    assert unlabeled_sites(scheme) == ()
    # Uniform labeling from 98-99 % enriched precursors (common practice).
    for site in ("N",) + CARBON_SITES:
        assert 0.97 <= scheme.fraction(site) <= 1.0


def test_perdeuterated_scheme_defaults():
    scheme = load_scheme("2h13c15n")
    # 97-99 % deuteration of carbon-bound sites from D2O growth with deuterated glucose (common practice);
    # the project's interface fixes the default at 0.98.
    assert scheme.deuteration == 0.98
    assert scheme.deuteration_adjustable
    for site in ("HA", "HB", "HMETHYL_ILV", "HSIDE"):
        assert_allclose(scheme.fraction(site), 1 - 0.98, rtol=0, atol=1e-12)
        assert scheme.isotope(site) == "2H"
        assert not scheme.is_labeled(site)
    # Amide protons are back-exchanged in H2O buffer (common practice).
    assert scheme.fraction("H") == 1.0
    assert unlabeled_sites(scheme) == ("HA",)


def test_ilv_scheme_protonates_only_the_ilv_methyls():
    scheme = load_scheme("2h13c15n-ilv")
    # Precursor-based methyl protonation of Ile delta1, Leu and Val (Goto, Gardner, Mueller, Willis & Kay,
    # J. Biomol. NMR 13, 369 (1999), from memory): about 95-100 % 1H at those methyls (common practice).
    assert 0.95 <= scheme.fraction("HMETHYL_ILV") <= 1.0
    assert scheme.isotope("HMETHYL_ILV") == "1H"
    for site in ("HA", "HB", "HSIDE"):
        assert_allclose(scheme.fraction(site), 1 - scheme.deuteration, rtol=0, atol=1e-12)
    # The methyl fraction does not follow the deuteration level.
    assert load_scheme("2h13c15n-ilv", deuteration=0.7).fraction("HMETHYL_ILV") == scheme.fraction("HMETHYL_ILV")


def test_registered_schemes_returns_a_fresh_dict():
    a = registered_schemes()
    a.pop("15n")
    assert "15n" in registered_schemes()


# ---------------------------------------------------------------------------------------------------------
# Deuteration level
# ---------------------------------------------------------------------------------------------------------


def test_with_deuteration_returns_a_new_scheme():
    base = load_scheme("2h13c15n")
    lighter = base.with_deuteration(0.9)
    assert lighter.deuteration == 0.9 and base.deuteration == 0.98
    for site in ("HA", "HB", "HMETHYL_ILV", "HSIDE"):
        # A hydrogen site holds 1H with 1 - (2H fraction).
        assert_allclose(lighter.fraction(site), 0.1, rtol=0, atol=1e-12)
    for site in ("H", "N") + CARBON_SITES:
        assert lighter.fraction(site) == base.fraction(site)
    assert load_scheme("2h13c15n", deuteration=0.9) == lighter


@settings(max_examples=50, deadline=None)
@given(level=st.floats(min_value=0.5, max_value=1.0))
def test_any_level_in_range_gives_complementary_1h_fraction(level):
    scheme = load_scheme("2h13c15n").with_deuteration(level)
    assert_allclose(scheme.fraction("HA") + level, 1.0, rtol=0, atol=1e-12)
    assert scheme.is_labeled("HA") == (1.0 - level > 0.5)


@pytest.mark.parametrize("level", [0.3, 0.49, 1.01, -0.1])
def test_with_deuteration_rejects_levels_outside_range(level):
    with pytest.raises(BackboneError, match=r"outside the allowed range \[0\.5, 1\].*2h13c15n"):
        load_scheme("2h13c15n").with_deuteration(level)


@pytest.mark.parametrize("level", ["high", True, float("nan"), None])
def test_with_deuteration_rejects_non_numbers(level):
    with pytest.raises(BackboneError, match=r"must be a number in \[0\.5, 1\]"):
        load_scheme("2h13c15n").with_deuteration(level)


@pytest.mark.parametrize("scheme_id", ["15n", "13c15n"])
def test_protonated_schemes_refuse_a_deuteration_level(scheme_id):
    with pytest.raises(BackboneError, match=rf"{scheme_id}.*protonated.*can be set: .*2h13c15n"):
        load_scheme(scheme_id, deuteration=0.9)


def test_fixed_deuteration_cannot_be_changed(tmp_path):
    path = write(tmp_path, scheme_text(deuteration="[deuteration]\nlevel = 0.9\n", sites=deuterated_sites()))
    scheme = load_scheme(path)
    assert scheme.deuteration == 0.9 and scheme.deuteration_range == (0.9, 0.9)
    with pytest.raises(BackboneError, match="fixed deuteration level"):
        scheme.with_deuteration(0.95)


# ---------------------------------------------------------------------------------------------------------
# User files
# ---------------------------------------------------------------------------------------------------------


def test_user_file_loads_from_a_path(tmp_path):
    path = write(tmp_path, scheme_text(deuteration=_DEUTERATION, sites=deuterated_sites()))
    scheme = load_scheme(str(path))
    assert scheme.id == "lab-test" and scheme.source == str(path)
    assert scheme.description == "A scheme for the tests."
    assert_allclose(scheme.fraction("HB"), 0.1, rtol=0, atol=1e-12)
    assert_allclose(load_scheme(path, deuteration=0.6).fraction("HB"), 0.4, rtol=0, atol=1e-12)


def test_fraction_may_name_the_other_isotope(tmp_path):
    sites = {
        "HA": '{ isotope = "2H", fraction = 0.9 }',
        "CB": '{ isotope = "12C", fraction = "natural" }',
        "N": '{ isotope = "14N", fraction = 0.25 }',
    }
    scheme = load_scheme(write(tmp_path, scheme_text(sites=sites)))
    assert_allclose(scheme.fraction("HA"), 0.1, rtol=0, atol=1e-12)
    assert scheme.isotope("HA") == "2H"
    # Harris et al. 2001: 13C 1.07 %, so natural 12C leaves 0.0107 of 13C.
    assert_allclose(scheme.fraction("CB"), IUPAC_13C, rtol=0, atol=1e-12)
    assert_allclose(scheme.fraction("N"), 0.75, rtol=0, atol=1e-12)


def test_natural_15n_is_the_iupac_value(tmp_path):
    scheme = load_scheme(write(tmp_path, scheme_text(sites={"N": '{ isotope = "15N", fraction = "natural" }'})))
    # Harris et al. 2001, Table 1: 15N 0.368 %.
    assert_allclose(scheme.fraction("N"), IUPAC_15N, rtol=0, atol=1e-12)
    assert "N" in unlabeled_sites(scheme)


def test_readme_example_loads(tmp_path):
    readme = (models_dir("labeling") / "README.md").read_text(encoding="utf-8")
    blocks = re.findall(r"```toml\n(.*?)```", readme, flags=re.S)
    assert blocks, "the schema README shows a complete example"
    scheme = load_scheme(write(tmp_path, blocks[0], "my-fractional.toml"), deuteration=0.6)
    assert scheme.deuteration == 0.6
    assert_allclose(scheme.fraction("HMETHYL_ILV"), 0.4, rtol=0, atol=1e-12)


# ---------------------------------------------------------------------------------------------------------
# Graph labeling and unlabeled sites
# ---------------------------------------------------------------------------------------------------------


def _hand_graph() -> nx.Graph:
    G = nx.Graph()
    for atom, site, element in [("H", "H", "H"), ("N", "N", "N"), ("CA", "CA", "C"), ("HA", "HA", "H"),
                                ("C", "C", "C"), ("CB", "CB", "C")]:
        G.add_node((1, atom), residue=1, resname="A", atom=atom, element=element, site=site, label=f"{atom}(1)")
    G.add_edges_from([((1, "H"), (1, "N")), ((1, "N"), (1, "CA")), ((1, "CA"), (1, "HA")),
                      ((1, "CA"), (1, "C")), ((1, "CA"), (1, "CB"))])
    return G


def test_apply_labeling_annotates_a_copy():
    G = _hand_graph()
    labeled = apply_labeling(G, load_scheme("15n"))
    assert "isotope" not in G.nodes[(1, "CA")]
    assert labeled.nodes[(1, "CA")]["isotope"] == "12C"
    assert_allclose(labeled.nodes[(1, "CA")]["fraction"], IUPAC_13C, rtol=0, atol=1e-12)  # Harris et al. 2001
    assert labeled.nodes[(1, "N")]["isotope"] == "15N"
    assert labeled.nodes[(1, "HA")]["site"] == "HA" and labeled.nodes[(1, "HA")]["label"] == "HA(1)"
    assert set(labeled.edges) == set(G.edges)


def test_apply_labeling_accepts_an_id():
    labeled = apply_labeling(_hand_graph(), "2h13c15n")
    assert labeled.nodes[(1, "HA")]["isotope"] == "2H"
    assert_allclose(labeled.nodes[(1, "HA")]["fraction"], 0.02, rtol=0, atol=1e-12)


def test_apply_labeling_needs_a_site_attribute():
    G = _hand_graph()
    G.add_node((2, "N"))
    with pytest.raises(BackboneError, match=r"node \(2, 'N'\) has no 'site' attribute"):
        apply_labeling(G, load_scheme("15n"))


def test_apply_labeling_rejects_unknown_sites():
    G = _hand_graph()
    G.add_node((2, "OD1"), site="OD")
    with pytest.raises(BackboneError, match=r"unknown site 'OD'; known sites are H, N, CA"):
        apply_labeling(G, load_scheme("15n"))


def test_unlabeled_sites_are_backbone_sites():
    assert set(BACKBONE_SITES) == {"N", "CA", "C", "CB", "H", "HA"}
    for scheme in registered_schemes().values():
        assert set(unlabeled_sites(scheme)) <= set(BACKBONE_SITES)


def test_fraction_of_unknown_site():
    with pytest.raises(BackboneError, match="unknown site 'HN'; known sites are"):
        load_scheme("15n").fraction("HN")


# ---------------------------------------------------------------------------------------------------------
# Errors in files
# ---------------------------------------------------------------------------------------------------------


FILE_ERRORS = {
    "unknown top key": (
        scheme_text(top='colour = "blue"'),
        r"scheme\.toml: unknown key 'colour'; allowed keys are id, name, description, deuteration, sites",
    ),
    "unknown site key": (
        scheme_text(sites={"CA": '{ isotope = "13C", fraction = 0.99, shift = 56.0 }'}),
        r"unknown key in sites\.CA: 'shift'; allowed keys are isotope, fraction, deuterated",
    ),
    "unknown deuteration key": (
        scheme_text(deuteration=_DEUTERATION + "source = 'D2O'\n", sites=deuterated_sites()),
        r"unknown key in deuteration: 'source'; allowed keys are level, range, adjustable",
    ),
    "unknown site": (
        scheme_text(sites={"HG": '{ isotope = "1H", fraction = 1.0 }'}),
        r"unknown key 'sites\.HG'; known sites are H, N, CA, C, CB, CG, HA, HB, HMETHYL_ILV, HSIDE",
    ),
    "missing site": (
        scheme_text(sites={"CG": None}),
        r"\[sites\] lacks CG; a scheme gives every site: H, N, CA",
    ),
    "missing id": (scheme_text(drop=("id",)), r"missing key 'id'; a labeling scheme needs id, name, description, sites"),
    "missing sites": (scheme_text(drop=("sites",)), r"missing key 'sites'"),
    "fraction above one": (
        scheme_text(sites={"CA": '{ isotope = "13C", fraction = 1.2 }'}),
        r"sites\.CA\.fraction = 1\.2 is not allowed; give a number in \[0, 1\] or \"natural\"",
    ),
    "fraction below zero": (
        scheme_text(sites={"N": '{ isotope = "15N", fraction = -0.1 }'}),
        r"sites\.N\.fraction = -0\.1 is not allowed",
    ),
    "fraction word": (
        scheme_text(sites={"N": '{ isotope = "15N", fraction = "full" }'}),
        r"sites\.N\.fraction = 'full' is not allowed",
    ),
    "fraction boolean": (
        scheme_text(sites={"N": '{ isotope = "15N", fraction = true }'}),
        r"sites\.N\.fraction = True is not allowed",
    ),
    "isotope of other element": (
        scheme_text(sites={"CA": '{ isotope = "1H", fraction = 0.99 }'}),
        r"sites\.CA\.isotope = '1H' does not fit a carbon site; allowed are 13C or 12C",
    ),
    "unknown isotope": (
        scheme_text(sites={"N": '{ isotope = "13N", fraction = 0.99 }'}),
        r"sites\.N\.isotope = '13N' does not fit a nitrogen site; allowed are 15N or 14N",
    ),
    "site not a table": (scheme_text(sites={"CA": "0.99"}), r"sites\.CA must be a table such as"),
    "missing isotope": (
        scheme_text(sites={"CA": "{ fraction = 0.99 }"}),
        r"sites\.CA lacks isotope; allowed are 13C or 12C",
    ),
    "missing fraction": (
        scheme_text(sites={"CA": '{ isotope = "13C" }'}),
        r"sites\.CA lacks fraction; give a number in \[0, 1\] or \"natural\"",
    ),
    "deuterated carbon": (
        scheme_text(deuteration=_DEUTERATION, sites=deuterated_sites(CB='{ isotope = "13C", deuterated = true }')),
        r"sites\.CB\.deuterated = true is allowed only for hydrogen sites \(H, HA, HB, HMETHYL_ILV, HSIDE\)",
    ),
    "deuterated with fraction": (
        scheme_text(
            deuteration=_DEUTERATION,
            sites=deuterated_sites(HA='{ isotope = "1H", fraction = 0.1, deuterated = true }'),
        ),
        r"sites\.HA gives both fraction and deuterated = true",
    ),
    "deuterated not boolean": (
        scheme_text(sites={"HA": '{ isotope = "1H", fraction = 0.1, deuterated = "yes" }'}),
        r"sites\.HA\.deuterated must be true or false",
    ),
    "deuterated without level": (
        scheme_text(sites=deuterated_sites()),
        r"sites\.HA\.deuterated = true needs a \[deuteration\] table",
    ),
    "level outside range": (
        scheme_text(deuteration="[deuteration]\nlevel = 0.99\nrange = [0.6, 0.95]\nadjustable = true\n",
                    sites=deuterated_sites()),
        r"deuteration\.level = 0\.99 is outside the allowed range \[0\.6, 0\.95\]",
    ),
    "level above one": (
        scheme_text(deuteration="[deuteration]\nlevel = 1.5\n", sites=deuterated_sites()),
        r"deuteration\.level = 1\.5 must be a number in \[0, 1\]",
    ),
    "level missing": (
        scheme_text(deuteration="[deuteration]\nadjustable = false\n", sites=deuterated_sites()),
        r"\[deuteration\] lacks level",
    ),
    "range malformed": (
        scheme_text(deuteration="[deuteration]\nlevel = 0.9\nrange = [0.6]\nadjustable = true\n",
                    sites=deuterated_sites()),
        r"deuteration\.range must be two numbers \[low, high\]",
    ),
    "range reversed": (
        scheme_text(deuteration="[deuteration]\nlevel = 0.9\nrange = [0.95, 0.6]\nadjustable = true\n",
                    sites=deuterated_sites()),
        r"deuteration\.range must be two numbers \[low, high\] with 0 <= low <= high <= 1",
    ),
    "adjustable without range": (
        scheme_text(deuteration="[deuteration]\nlevel = 0.9\nadjustable = true\n", sites=deuterated_sites()),
        r"deuteration\.adjustable = true needs range = \[low, high\]",
    ),
    "adjustable not boolean": (
        scheme_text(deuteration="[deuteration]\nlevel = 0.9\nadjustable = 1\n", sites=deuterated_sites()),
        r"deuteration\.adjustable must be true or false",
    ),
    "deuteration not a table": (
        scheme_text(top="deuteration = 0.98", sites=deuterated_sites()),
        r"deuteration must be a table with keys level, range, adjustable",
    ),
    "level without deuterated site": (
        scheme_text(deuteration=_DEUTERATION),
        r"\[deuteration\] is given but no site follows it",
    ),
    "sites not a table": (
        scheme_text(top='sites = "all"', drop=("sites",)),
        r"sites must be a table \[sites\]",
    ),
    "name not a string": (
        scheme_text(drop=("name",), top="name = 3"),
        r"name must be a string, got 3",
    ),
    "empty name": (scheme_text(drop=("name",), top='name = "  "'), r"name must not be empty"),
    "bad id": (
        scheme_text(drop=("id",), top='id = "my scheme"'),
        r"id 'my scheme' must start with a letter or digit and contain only letters, digits and \. _ \+ -",
    ),
    "not toml": ('id = "x"\nname = \n', r"scheme\.toml: not valid TOML"),
}


@pytest.mark.parametrize("case", list(FILE_ERRORS), ids=list(FILE_ERRORS))
def test_file_errors_name_file_key_and_allowed_values(tmp_path, case):
    text, message = FILE_ERRORS[case]
    path = write(tmp_path, text)
    with pytest.raises(BackboneError, match=message) as info:
        load_scheme(path)
    assert str(path) in str(info.value)


def test_missing_file(tmp_path):
    path = tmp_path / "absent.toml"
    with pytest.raises(BackboneError, match=r"absent\.toml: cannot read labeling scheme file"):
        load_scheme(path)


def test_file_not_utf8(tmp_path):
    path = tmp_path / "latin.toml"
    path.write_bytes('name = "\u00e9"\n'.encode("latin-1"))
    with pytest.raises(BackboneError, match=r"latin\.toml: labeling scheme file is not UTF-8 text"):
        load_scheme(path)


def test_unknown_id_lists_known_ids():
    with pytest.raises(BackboneError, match=r"unknown labeling scheme '13c'; known are ") as info:
        load_scheme("13c")
    for scheme_id in BUNDLED_IDS:
        assert scheme_id in str(info.value)
    assert "path of a TOML file" in str(info.value)


def test_id_or_path_of_wrong_type():
    with pytest.raises(BackboneError, match="must be an id or a file path, got 15"):
        load_scheme(15)  # type: ignore[arg-type]


def test_bundled_file_id_must_match_file_name(tmp_path, monkeypatch):
    write(tmp_path, scheme_text(), name="other-name.toml")
    monkeypatch.setattr(scheme_module, "models_dir", lambda kind: tmp_path)
    scheme_module._bundled.cache_clear()
    try:
        with pytest.raises(BackboneError, match=r"other-name\.toml: id 'lab-test' must equal the file name 'other-name'"):
            load_scheme("other-name")
    finally:
        scheme_module._bundled.cache_clear()


# ---------------------------------------------------------------------------------------------------------
# Errors of the dataclasses themselves
# ---------------------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "args, message",
    [
        (("2H", 0.5), r"isotope '2H': a site label stores the spin-1/2 isotope, one of 1H, 13C, 15N"),
        (("14C", 0.5), r"isotope '14C'"),
        ((13, 0.5), r"isotope 13"),
        (("13C", 1.5), r"fraction 1\.5 is outside the allowed range \[0, 1\]"),
        (("13C", "0.5"), r"fraction '0\.5' must be a number in \[0, 1\]"),
        (("13C", float("inf")), r"fraction inf must be a number"),
        (("13C", 0.5, True), r"only hydrogen sites can follow the deuteration level, not 13C"),
        (("1H", 0.5, "yes"), r"follows_deuteration 'yes' must be true or false"),
    ],
)
def test_site_label_validates_itself(args, message):
    with pytest.raises(BackboneError, match=message):
        SiteLabel(*args)


def _sites(**override):
    base = {s: SiteLabel("1H", 1.0) for s in HYDROGEN_SITES}
    base |= {s: SiteLabel("13C", 0.99) for s in CARBON_SITES}
    base["N"] = SiteLabel("15N", 0.99)
    base.update(override)
    return base


def _scheme(**kw):
    args = dict(id="direct", name="direct", description="", source="<test>", sites=_sites())
    args.update(kw)
    return LabelingScheme(**args)


@pytest.mark.parametrize(
    "kw, message",
    [
        ({"sites": _sites(CA=SiteLabel("1H", 0.5))}, r"<test>: sites\.CA: isotope 1H does not fit a carbon site"),
        ({"sites": _sites(CA=0.99)}, r"<test>: sites\.CA must be a SiteLabel, got 0\.99"),
        ({"sites": [("CA", SiteLabel("13C", 0.99))]}, r"sites must be a mapping"),
        ({"sites": _sites(OG=SiteLabel("1H", 1.0))}, r"unknown site 'OG' in \[sites\]"),
        ({"description": None}, r"description must be a string, got None"),
        ({"deuteration": 0.9}, r"no site follows it"),
        ({"deuteration_adjustable": True}, r"a deuteration range or adjustable flag needs a deuteration level"),
        ({"deuteration": "0.9", "sites": _sites(HA=SiteLabel("1H", 0.1, True))}, r"deuteration\.level must be a number"),
        (
            {"deuteration": 0.9, "deuteration_range": (0.5, 2.0), "sites": _sites(HA=SiteLabel("1H", 0.1, True))},
            r"deuteration\.range must be two numbers",
        ),
        (
            {"deuteration": 0.9, "deuteration_adjustable": "no", "sites": _sites(HA=SiteLabel("1H", 0.1, True))},
            r"deuteration\.adjustable must be true or false, got 'no'",
        ),
        (
            {"deuteration": 0.9, "sites": _sites(HA=SiteLabel("1H", 0.2, True))},
            r"sites\.HA follows the deuteration level 0\.9, so its 1H fraction must be 0\.1, not 0\.2",
        ),
        ({"sites": _sites(HA=SiteLabel("1H", 0.1, True))}, r"sites\.HA is marked deuterated but the scheme has no"),
    ],
)
def test_labeling_scheme_validates_itself(kw, message):
    with pytest.raises(BackboneError, match=message):
        _scheme(**kw)


def test_direct_construction_freezes_sites_in_canonical_order():
    reversed_sites = dict(reversed(list(_sites().items())))
    scheme = _scheme(sites=reversed_sites)
    assert tuple(scheme.sites) == SITES
    assert unlabeled_sites(scheme) == ()
