"""Scenario files: the bundled examples, unit conversion, masses, labeling choices and every error path."""

from __future__ import annotations

import dataclasses
import json
import re
import sys
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from backbone.errors import BackboneError
from backbone.labeling import registered_schemes
from backbone.scenario import (
    SCENARIO_KEYS,
    Calibration,
    Candidates,
    Goals,
    LabelingChoice,
    Protein,
    Sample,
    Scenario,
    Spectrometer,
    load_scenario,
)

SCENARIOS_DIR = Path(__file__).resolve().parent.parent / "scenarios"
BUNDLED = sorted(SCENARIOS_DIR.glob("*.toml"))
SCHEME_IDS = sorted(registered_schemes())

# 0 °C = 273.15 K exactly (ITS-90; BIPM, SI Brochure, 9th ed., 2019).
ZERO_C_IN_K = 273.15
# Average mass of an amino-acid residue in proteins: 110 Da (rule of thumb, common practice).
RULE_OF_THUMB_RESIDUE_DA = 110.0


def _fasta_letters(path: Path) -> str:
    """One-letter sequence of a single-record FASTA file, read here without the package."""
    lines = path.read_text(encoding="utf-8").splitlines()
    return "".join(line.strip() for line in lines if line.strip() and not line.startswith(">")).upper()


# A minimal valid scenario; error tests replace one piece of it.
BASE = """\
[protein]
name = "test protein"
sequence = "MKTAYIAKQRQISFVKSHFSRQ"

[sample]
concentration_mm = 0.5
temperature_c = 25

[spectrometer]
fields_mhz = [600, 800]
probe = "cryogenic"

[spectrometer.calibration]
experiment = "HSQC"
signal_to_noise = 100
time_min = 10
field_mhz = 600
labeling = "15n"

[candidates]
labeling = ["13c15n", "2h13c15n"]
experiments = ["HNCA", "HN(CO)CA"]

[goals]
target_signal_to_noise = 10
time_budget_h = 48

[goals.resolution_hz]
N = 25
CA = 35
"""


def _edit(old: str, new: str, text: str = BASE) -> str:
    assert old in text, f"test setup: {old!r} is not in the text"
    return text.replace(old, new, 1)


def _write(tmp_path: Path, text: str, name: str = "question.toml") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def _raises(tmp_path: Path, text: str, *fragments: str) -> str:
    """Load ``text`` as a scenario, expect a one-line BackboneError naming the file and every fragment."""
    path = _write(tmp_path, text)
    with pytest.raises(BackboneError) as info:
        load_scenario(path)
    msg = str(info.value)
    assert "\n" not in msg
    assert str(path) in msg
    for fragment in fragments:
        assert fragment in msg, f"{fragment!r} not in {msg!r}"
    return msg


# ---------------------------------------------------------------------------------------------------------
# Bundled scenarios
# ---------------------------------------------------------------------------------------------------------


def test_bundled_scenarios_are_present():
    names = {p.name for p in BUNDLED}
    assert {"example-annotated.toml", "fld9-domain.toml", "hyd35-enzyme.toml", "asm80-complex.toml"} <= names


@pytest.mark.parametrize("path", BUNDLED, ids=[p.name for p in BUNDLED])
def test_bundled_scenario_loads_and_serializes(path):
    scenario = load_scenario(path)
    assert scenario.source == str(path)
    data = scenario.as_dict()
    assert json.loads(json.dumps(data)) == data
    assert set(data) == {"source", "description", "protein", "sample", "spectrometer", "candidates", "goals"}
    assert scenario.protein.mass_da > 0
    cal = scenario.spectrometer.calibration
    if cal is not None:
        assert cal.field_mhz in scenario.spectrometer.fields_mhz
        assert cal.concentration_mm is not None and cal.temperature_k is not None


WORKED = [
    ("fld9-domain.toml", "ferredoxin-like-domain.fasta", 9.0),
    ("hyd35-enzyme.toml", "hydrolase.fasta", 35.0),
    ("asm80-complex.toml", "assembly.fasta", 80.0),
]


@pytest.mark.parametrize(("scenario_name", "fasta_name", "nominal_kda"), WORKED)
def test_worked_example_reads_its_fasta_and_has_its_nominal_size(scenario_name, fasta_name, nominal_kda):
    scenario = load_scenario(SCENARIOS_DIR / scenario_name)
    protein = scenario.protein
    letters = _fasta_letters(SCENARIOS_DIR / fasta_name)
    assert protein.sequence_text == letters
    assert protein.sequence_file == (SCENARIOS_DIR / fasta_name).absolute()
    assert protein.mass_source == "sequence"
    # residues x 110 Da (average residue mass rule of thumb, common practice), counted here from the FASTA
    rule_of_thumb_da = len(letters) * RULE_OF_THUMB_RESIDUE_DA
    assert_allclose(rule_of_thumb_da, nominal_kda * 1e3, rtol=0.15)
    assert_allclose(protein.mass_da, rule_of_thumb_da, rtol=0.15)
    assert_allclose(protein.mass_da, nominal_kda * 1e3, rtol=0.10)


def test_sequence_file_is_relative_to_the_scenario_folder(tmp_path, monkeypatch):
    sub = tmp_path / "lab" / "questions"
    sub.mkdir(parents=True)
    (sub / "seq.fasta").write_text(">demo\nMKTAYIAKQR\n", encoding="utf-8")
    text = _edit('sequence = "MKTAYIAKQRQISFVKSHFSRQ"', 'sequence_file = "seq.fasta"')
    path = _write(sub, text)
    monkeypatch.chdir(tmp_path)  # the current folder must not matter
    scenario = load_scenario(Path("lab/questions") / path.name)
    assert scenario.protein.sequence_text == "MKTAYIAKQR"
    assert scenario.protein.sequence_file == (sub / "seq.fasta").absolute()


def test_every_key_is_documented_and_used_in_the_annotated_example():
    readme = (SCENARIOS_DIR / "README.md").read_text(encoding="utf-8")
    example = (SCENARIOS_DIR / "example-annotated.toml").read_text(encoding="utf-8")
    for table, keys in SCENARIO_KEYS.items():
        if table not in ("", "labeling entry"):
            assert f"[{table}]" in readme and f"[{table}]" in example, table
        for key in keys:
            if (f"{table}.{key}" if table else key) in SCENARIO_KEYS:
                continue  # a sub-table, checked as [table] above
            assert f"`{key}`" in readme, f"{table}.{key} missing from README.md"
            assert re.search(rf"^\s*(#\s*)?{re.escape(key)}\s*=|[{{,]\s*{re.escape(key)}\s*=", example, re.M), (
                f"{table}.{key} missing from example-annotated.toml"
            )


def test_annotated_example_values():
    s = load_scenario(SCENARIOS_DIR / "example-annotated.toml")
    assert s.protein.tau_c_ns == 4.6
    assert s.sample.volume_ul == 300
    assert s.candidates.labeling[1] == LabelingChoice("2h13c15n", 0.9)
    assert s.candidates.trosy == "auto"
    assert dict(s.goals.resolution_hz) == {"N": 40, "C": 50, "CA": 120, "CB": 170, "HA": 40}
    assert s.goals.high_power_duty_limit == 0.1
    assert s.spectrometer.calibration.concentration_mm == 1.0


# ---------------------------------------------------------------------------------------------------------
# Values, units, defaults
# ---------------------------------------------------------------------------------------------------------


def test_defaults_and_normalization(tmp_path):
    text = _edit('probe = "cryogenic"', 'probe = "Room-Temperature"')
    text = _edit('experiments = ["HNCA", "HN(CO)CA"]', 'experiments = ["hnca", " hn(co)ca "]', text)
    text = _edit('labeling = ["13c15n", "2h13c15n"]', 'labeling = ["13C15N", { scheme = "2H13C15N" }]', text)
    s = load_scenario(_write(tmp_path, text))
    assert s.spectrometer.probe == "room-temperature"
    assert s.candidates.experiments == ("HNCA", "HN(CO)CA")
    assert [c.scheme for c in s.candidates.labeling] == ["13c15n", "2h13c15n"]
    assert s.candidates.labeling[1].deuteration is None
    assert s.candidates.trosy == "auto"
    assert s.sample.solvent == "H2O" and s.sample.volume_ul is None
    assert s.protein.tau_c_ns is None and s.protein.s2 == 1.0 and s.protein.tau_e_ns == 0.0
    assert s.goals.recycle_delay_s is None and s.goals.high_power_duty_limit is None
    assert s.spectrometer.calibration.trosy is False
    assert s.description == ""


@pytest.mark.parametrize(("line", "kelvin"), [("temperature_c = 25", 298.15), ("temperature_k = 310.15", 310.15)])
def test_temperature_in_celsius_or_kelvin(tmp_path, line, kelvin):
    s = load_scenario(_write(tmp_path, _edit("temperature_c = 25", line)))
    # T/K = t/°C + 273.15 (ITS-90 definition)
    assert_allclose(s.sample.temperature_k, kelvin, rtol=0, atol=1e-9)
    assert_allclose(s.sample.temperature_c, kelvin - ZERO_C_IN_K, rtol=0, atol=1e-9)


def test_calibration_defaults_to_the_sample_and_keeps_its_own(tmp_path):
    s = load_scenario(_write(tmp_path, BASE))
    cal = s.spectrometer.calibration
    assert cal.concentration_mm == 0.5
    assert_allclose(cal.temperature_k, 25 + ZERO_C_IN_K, atol=1e-9)
    text = _edit('labeling = "15n"', 'labeling = "15n"\nconcentration_mm = 1.2\ntemperature_c = 10')
    cal = load_scenario(_write(tmp_path, text)).spectrometer.calibration
    assert cal.concentration_mm == 1.2
    assert_allclose(cal.temperature_k, 10 + ZERO_C_IN_K, atol=1e-9)
    assert_allclose(cal.temperature_c, 10, atol=1e-9)


def test_mass_from_length_uses_110_da_per_residue():
    p = Protein(name="x", length=300)
    assert_allclose(p.mass_da, 300 * RULE_OF_THUMB_RESIDUE_DA, rtol=1e-12)  # rule of thumb, common practice
    assert p.mass_source == "length x 110 Da"
    assert p.sequence_text is None and p.residue_count == 300


def test_mass_given_in_kda():
    p = Protein(name="x", mass_kda=42.5)
    assert_allclose(p.mass_da, 42500.0, rtol=1e-12)
    assert p.mass_source == "mass_kda" and p.residue_count is None


def test_mass_from_sequence_matches_a_dipeptide_formula():
    # Gly-Ala is C5H10N2O3 (a dipeptide: two residues plus one water). Conventional atomic weights,
    # Meija et al., Pure Appl. Chem. 88, 265 (2016) (from memory): C 12.011, H 1.008, N 14.007, O 15.999.
    expected = 5 * 12.011 + 10 * 1.008 + 2 * 14.007 + 3 * 15.999
    p = Protein(name="dipeptide", sequence="ga")
    assert p.sequence_text == "GA"
    assert_allclose(p.mass_da, expected, rtol=1e-6)
    assert p.mass_source == "sequence" and p.residue_count == 2


def test_given_tau_c_and_model_free_parameters_are_kept():
    p = Protein(name="x", length=100, tau_c_ns=12, s2=0.8, tau_e_ns=0.1)
    assert (p.tau_c_ns, p.s2, p.tau_e_ns) == (12.0, 0.8, 0.1)
    assert p.as_dict()["tau_c_ns"] == 12.0


@pytest.mark.parametrize("scheme_id", SCHEME_IDS)
def test_every_registered_scheme_is_a_valid_candidate(tmp_path, scheme_id):
    text = _edit('labeling = ["13c15n", "2h13c15n"]', f'labeling = ["{scheme_id.upper()}"]')
    s = load_scenario(_write(tmp_path, text))
    (choice,) = s.candidates.labeling
    assert choice.scheme == scheme_id
    assert choice.load().id == scheme_id


@pytest.mark.parametrize("scheme_id", SCHEME_IDS)
def test_deuteration_level_follows_the_scheme(scheme_id):
    scheme = registered_schemes()[scheme_id]
    if scheme.deuteration_adjustable:
        low, high = scheme.deuteration_range
        level = (low + high) / 2
        choice = LabelingChoice(scheme_id, level)
        assert choice.load().deuteration == pytest.approx(level)
        with pytest.raises(BackboneError, match=r"labeling\.deuteration"):
            LabelingChoice(scheme_id, low - 0.1)
    else:
        with pytest.raises(BackboneError, match=r"labeling\.deuteration"):
            LabelingChoice(scheme_id, 0.9)


def test_same_scheme_at_two_levels_is_allowed(tmp_path):
    text = _edit(
        'labeling = ["13c15n", "2h13c15n"]',
        'labeling = [{ scheme = "2h13c15n", deuteration = 0.7 }, "2h13c15n"]',
    )
    s = load_scenario(_write(tmp_path, text))
    assert [c.deuteration for c in s.candidates.labeling] == [0.7, None]


def test_trosy_values(tmp_path):
    for value, expected in (('"AUTO"', "auto"), ("true", True), ("false", False)):
        text = _edit('experiments = ["HNCA", "HN(CO)CA"]', f'experiments = ["HNCA"]\ntrosy = {value}')
        assert load_scenario(_write(tmp_path, text)).candidates.trosy == expected


def test_t_max_is_the_inverse_of_the_resolution():
    goals = Goals(target_signal_to_noise=10, time_budget_h=1, resolution_hz={"N": 25, "CA": 40})
    assert_allclose([goals.t_max_s["N"], goals.t_max_s["CA"]], [0.040, 0.025], rtol=1e-12)


def test_records_are_frozen(tmp_path):
    s = load_scenario(_write(tmp_path, BASE))
    with pytest.raises(dataclasses.FrozenInstanceError):
        s.sample.concentration_mm = 2.0
    with pytest.raises(TypeError):
        s.goals.resolution_hz["N"] = 10


def test_records_built_in_python_match_the_file(tmp_path):
    built = Scenario(
        protein=Protein(name="test protein", sequence="MKTAYIAKQRQISFVKSHFSRQ"),
        sample=Sample(concentration_mm=0.5, temperature_k=25 + ZERO_C_IN_K),
        spectrometer=Spectrometer(
            fields_mhz=[600, 800],
            probe="cryogenic",
            calibration=Calibration(experiment="HSQC", signal_to_noise=100, time_min=10, field_mhz=600, labeling="15n"),
        ),
        candidates=Candidates(labeling=["13c15n", "2h13c15n"], experiments=["HNCA", "HN(CO)CA"]),
        goals=Goals(target_signal_to_noise=10, time_budget_h=48, resolution_hz={"CA": 35, "N": 25}),
    )
    loaded = load_scenario(_write(tmp_path, BASE))
    assert built == loaded
    assert built.as_dict() | {"source": ""} == loaded.as_dict() | {"source": ""}


def test_labeling_is_not_checked_while_the_labeling_module_cannot_be_imported(monkeypatch):
    monkeypatch.setitem(sys.modules, "backbone.labeling", None)  # makes "from backbone.labeling import" fail
    assert LabelingChoice("a-lab-scheme", 0.5).scheme == "a-lab-scheme"
    with pytest.raises(BackboneError, match=r"labeling\.deuteration = 1\.5"):
        LabelingChoice("a-lab-scheme", 1.5)


@given(st.floats(min_value=0.0, max_value=20.0, allow_nan=False))
def test_concentration_range_property(c):
    if 0.0 < c <= 10.0:
        assert Sample(concentration_mm=c, temperature_k=298.15).concentration_mm == c
    else:
        with pytest.raises(BackboneError, match=r"sample\.concentration_mm = .* \(0, 10\] mM"):
            Sample(concentration_mm=c, temperature_k=298.15)


@given(st.lists(st.floats(min_value=100.0, max_value=1500.0), min_size=1, max_size=5, unique=True))
def test_fields_in_range_are_kept_in_order(fields):
    assert Spectrometer(fields_mhz=fields, probe="cryogenic").fields_mhz == tuple(fields)


# ---------------------------------------------------------------------------------------------------------
# Error paths named in the brief
# ---------------------------------------------------------------------------------------------------------


def test_unknown_key_suggests_the_closest(tmp_path):
    text = _edit("concentration_mm = 0.5", "concentraton_mm = 0.5")
    _raises(tmp_path, text, "'concentraton_mm'", "[sample]", "did you mean 'concentration_mm'")


def test_unknown_key_in_nested_and_inline_tables(tmp_path):
    _raises(tmp_path, _edit("time_min = 10", "time_mins = 10"), "'time_mins'", "[spectrometer.calibration]",
            "did you mean 'time_min'")
    _raises(tmp_path, _edit("CA = 35", "Ca = 35"), "'Ca'", "[goals.resolution_hz]", "did you mean 'CA'")
    text = _edit('"2h13c15n"]', '{ scheme = "2h13c15n", deuteraton = 0.9 }]')
    _raises(tmp_path, text, "'deuteraton'", "candidates.labeling[2]", "did you mean 'deuteration'")


def test_unknown_top_level_table_suggests_the_closest(tmp_path):
    _raises(tmp_path, _edit("[goals]\n", "[gaols]\n"), "'gaols'", "top level", "did you mean 'goals'")


def test_key_in_the_wrong_table_names_its_table(tmp_path):
    text = _edit("temperature_c = 25", "temperature_c = 25\ntau_c_ns = 10")
    _raises(tmp_path, text, "'tau_c_ns'", "[sample]", "belongs in [protein]")


def test_sequence_with_unknown_letter_names_its_position(tmp_path):
    text = _edit('sequence = "MKTAYIAKQRQISFVKSHFSRQ"', 'sequence = "MKTAY1AKQJRQ"')
    _raises(tmp_path, text, "protein.sequence", "'J'", "residue 9")


def test_sequence_file_with_unknown_letter_names_the_sequence_file(tmp_path):
    (tmp_path / "bad.fasta").write_text(">demo\nMKTAY\nAKQBR\n", encoding="utf-8")
    text = _edit('sequence = "MKTAYIAKQRQISFVKSHFSRQ"', 'sequence_file = "bad.fasta"')
    _raises(tmp_path, text, "bad.fasta", "protein.sequence_file", "'B'", "residue 9", "line 3")


def test_negative_concentration(tmp_path):
    _raises(tmp_path, _edit("concentration_mm = 0.5", "concentration_mm = -0.5"),
            "sample.concentration_mm = -0.5", "(0, 10] mM")


def test_calibration_at_a_field_not_listed(tmp_path):
    _raises(tmp_path, _edit("field_mhz = 600", "field_mhz = 700"),
            "spectrometer.calibration.field_mhz = 700", "spectrometer.fields_mhz", "600, 800")


def test_time_budget_of_zero(tmp_path):
    _raises(tmp_path, _edit("time_budget_h = 48", "time_budget_h = 0"), "goals.time_budget_h = 0", "> 0")


def test_bad_toml_syntax_names_line_and_column(tmp_path):
    msg = _raises(tmp_path, _edit("[sample]", "[sample"), "not valid TOML")
    assert re.search(r"line 5, column \d+", msg), msg


def test_missing_sequence_file(tmp_path):
    text = _edit('sequence = "MKTAYIAKQRQISFVKSHFSRQ"', 'sequence_file = "absent.fasta"')
    _raises(tmp_path, text, "protein.sequence_file", str(tmp_path / "absent.fasta"), "cannot read")


@pytest.mark.parametrize(
    ("extra", "named"),
    [
        ("length = 22", "protein.sequence and protein.length"),
        ("mass_kda = 2.6", "protein.sequence and protein.mass_kda"),
        ('sequence_file = "x.fasta"', "protein.sequence and protein.sequence_file"),
    ],
)
def test_two_sizes_given(tmp_path, extra, named):
    text = _edit('sequence = "MKTAYIAKQRQISFVKSHFSRQ"', f'sequence = "MKTAYIAKQRQISFVKSHFSRQ"\n{extra}')
    _raises(tmp_path, text, "[protein] needs exactly one of", named)


def test_no_size_given(tmp_path):
    _raises(tmp_path, _edit('sequence = "MKTAYIAKQRQISFVKSHFSRQ"\n', ""), "[protein] needs exactly one of",
            "none is given")


# ---------------------------------------------------------------------------------------------------------
# Further error paths
# ---------------------------------------------------------------------------------------------------------


def test_unreadable_scenario_file(tmp_path):
    path = tmp_path / "nowhere.toml"
    with pytest.raises(BackboneError, match=r"nowhere\.toml: cannot read scenario file"):
        load_scenario(path)


def test_scenario_file_not_utf8(tmp_path):
    path = tmp_path / "latin1.toml"
    path.write_bytes(BASE.replace("test protein", "prot\xe9ine").encode("latin-1"))
    with pytest.raises(BackboneError, match=r"latin1\.toml: scenario file is not UTF-8"):
        load_scenario(path)


def test_sequence_file_is_a_folder(tmp_path):
    (tmp_path / "folder").mkdir()
    _raises(tmp_path, _edit('sequence = "MKTAYIAKQRQISFVKSHFSRQ"', 'sequence_file = "folder"'),
            "protein.sequence_file", "cannot read")


def test_sequence_file_not_utf8(tmp_path):
    (tmp_path / "seq.fasta").write_bytes(b">d\xe9mo\nMKT\n")
    _raises(tmp_path, _edit('sequence = "MKTAYIAKQRQISFVKSHFSRQ"', 'sequence_file = "seq.fasta"'),
            "protein.sequence_file", "not UTF-8")


@pytest.mark.parametrize("table", ["protein", "sample", "spectrometer", "candidates", "goals"])
def test_missing_table(tmp_path, table):
    lines = BASE.split("\n\n")
    kept = [block for block in lines if not block.startswith(f"[{table}]") and not block.startswith(f"[{table}.")]
    _raises(tmp_path, "\n\n".join(kept), f"missing table [{table}]")


@pytest.mark.parametrize(
    ("old", "table", "key"),
    [
        ('name = "test protein"\n', "protein", "name"),
        ("concentration_mm = 0.5\n", "sample", "concentration_mm"),
        ('probe = "cryogenic"\n', "spectrometer", "probe"),
        ("fields_mhz = [600, 800]\n", "spectrometer", "fields_mhz"),
        ("signal_to_noise = 100\n", "spectrometer.calibration", "signal_to_noise"),
        ('labeling = "15n"\n', "spectrometer.calibration", "labeling"),
        ('experiments = ["HNCA", "HN(CO)CA"]\n', "candidates", "experiments"),
        ("target_signal_to_noise = 10\n", "goals", "target_signal_to_noise"),
    ],
)
def test_missing_required_key(tmp_path, old, table, key):
    _raises(tmp_path, _edit(old, ""), f"missing key '{key}' in [{table}]")


def test_missing_temperature(tmp_path):
    _raises(tmp_path, _edit("temperature_c = 25\n", ""), "missing key 'temperature_c'", "[sample]")


def test_missing_scheme_in_inline_labeling(tmp_path):
    _raises(tmp_path, _edit('"2h13c15n"]', "{ deuteration = 0.9 }]"), "missing key 'scheme'",
            "candidates.labeling[2]")


def test_both_temperatures(tmp_path):
    _raises(tmp_path, _edit("temperature_c = 25", "temperature_c = 25\ntemperature_k = 298.15"),
            "[sample] gives both temperature_c and temperature_k")
    text = _edit('labeling = "15n"', 'labeling = "15n"\ntemperature_c = 25\ntemperature_k = 298.15')
    _raises(tmp_path, text, "[spectrometer.calibration] gives both")


def test_table_given_as_a_value(tmp_path):
    text = 'description = "x"\nprotein = "a protein"\n' + BASE.split("\n\n", 1)[1]
    _raises(tmp_path, text, "protein = 'a protein'", "must be a table [protein]")


@pytest.mark.parametrize(
    ("old", "new", "fragments"),
    [
        ("concentration_mm = 0.5", 'concentration_mm = "0.5"',
         ("sample.concentration_mm = '0.5'", "not a number", "(0, 10] mM")),
        ("concentration_mm = 0.5", "concentration_mm = true", ("sample.concentration_mm = True", "not a number")),
        ("concentration_mm = 0.5", "concentration_mm = nan", ("sample.concentration_mm = nan", "not a finite number")),
        ("concentration_mm = 0.5", "concentration_mm = 12", ("sample.concentration_mm = 12", "(0, 10] mM")),
        ("temperature_c = 25", "temperature_c = 95", ("sample.temperature_c = 95", "[0, 80] °C")),
        ("temperature_c = 25", "temperature_k = 25", ("sample.temperature_k = 25", "[273.15, 353.15] K")),
        ("temperature_c = 25", 'temperature_c = 25\nsolvent = "heavy water"',
         ("sample.solvent = 'heavy water'", "'H2O', 'D2O'")),
        ("temperature_c = 25", "temperature_c = 25\nvolume_ul = 0", ("sample.volume_ul = 0", "(0, 5000] µL")),
        ('name = "test protein"', 'name = ""', ("protein.name = ''", "non-empty")),
        ('name = "test protein"', 'name = "test protein"\ntau_c_ns = 0.01',
         ("protein.tau_c_ns = 0.01", "[0.1, 500] ns")),
        ('name = "test protein"', 'name = "test protein"\ns2 = 1.2', ("protein.s2 = 1.2", "[0, 1]")),
        ('name = "test protein"', 'name = "test protein"\ntau_e_ns = -1', ("protein.tau_e_ns = -1", "[0, 10] ns")),
        ('sequence = "MKTAYIAKQRQISFVKSHFSRQ"', "length = 0", ("protein.length = 0", "[1, 10000] residues")),
        ('sequence = "MKTAYIAKQRQISFVKSHFSRQ"', "length = 80.5", ("protein.length = 80.5", "whole number")),
        ('sequence = "MKTAYIAKQRQISFVKSHFSRQ"', "mass_kda = 0", ("protein.mass_kda = 0", "(0, 1100] kDa")),
        ('sequence = "MKTAYIAKQRQISFVKSHFSRQ"', "sequence = 42", ("protein.sequence = 42", "as text")),
        ('sequence = "MKTAYIAKQRQISFVKSHFSRQ"', 'sequence = "  "', ("protein.sequence", "empty")),
        ('sequence = "MKTAYIAKQRQISFVKSHFSRQ"', "sequence_file = 3", ("protein.sequence_file = 3",)),
        ("fields_mhz = [600, 800]", "fields_mhz = [600, 2000]", ("spectrometer.fields_mhz = 2000", "[100, 1500] MHz")),
        ("fields_mhz = [600, 800]", "fields_mhz = []", ("spectrometer.fields_mhz = []", "non-empty list")),
        ("fields_mhz = [600, 800]", "fields_mhz = 600", ("spectrometer.fields_mhz = 600", "non-empty list")),
        ("fields_mhz = [600, 800]", "fields_mhz = [600, 800, 600]",
         ("spectrometer.fields_mhz lists 600 MHz more than once",)),
        ('probe = "cryogenic"', 'probe = "cryo"', ("spectrometer.probe = 'cryo'", "did you mean 'cryogenic'")),
        ('experiment = "HSQC"', 'experiment = ""', ("spectrometer.calibration.experiment = ''",)),
        ("signal_to_noise = 100", "signal_to_noise = -3", ("spectrometer.calibration.signal_to_noise = -3", "> 0")),
        ("time_min = 10", "time_min = 0", ("spectrometer.calibration.time_min = 0", "> 0")),
        ('labeling = "15n"', 'labeling = "15n"\ntrosy = "yes"',
         ("spectrometer.calibration.trosy = 'yes'", "true or false")),
        ('labeling = "15n"', 'labeling = "15n"\nconcentration_mm = 0',
         ("spectrometer.calibration.concentration_mm = 0",)),
        ('labeling = "15n"', 'labeling = "15n"\ntemperature_c = -5',
         ("spectrometer.calibration.temperature_c = -5", "[0, 80] °C")),
        ('labeling = "15n"', "labeling = 15", ("spectrometer.calibration.labeling = 15", "scheme id")),
        ('labeling = "15n"', 'labeling = "15nn"',
         ("spectrometer.calibration.labeling = '15nn'", "did you mean '15n'", "registered:")),
        ('"2h13c15n"]', '"2h13c15m"]', ("candidates.labeling[2] = '2h13c15m'", "did you mean '2h13c15n'")),
        ('"2h13c15n"]', '"13c15n"]', ("candidates.labeling[2] repeats '13c15n'",)),
        ('"2h13c15n"]', '{ scheme = "2h13c15n", deuteration = 0.2 }]',
         ("candidates.labeling[2].deuteration = 0.2", "[0.5, 1]")),
        ('"2h13c15n"]', '{ scheme = "2h13c15n", deuteration = 2 }]',
         ("candidates.labeling[2].deuteration = 2", "[0, 1]")),
        ('["13c15n", "2h13c15n"]', '[{ scheme = "13c15n", deuteration = 0.9 }]',
         ("candidates.labeling[1].deuteration = 0.9", "protonated")),
        ('["13c15n", "2h13c15n"]', "[]", ("candidates.labeling = []", "non-empty list")),
        ('["13c15n", "2h13c15n"]', '"13c15n"', ("candidates.labeling = '13c15n'", "non-empty list")),
        ('["HNCA", "HN(CO)CA"]', "[]", ("candidates.experiments = []", "non-empty list")),
        ('["HNCA", "HN(CO)CA"]', '["HNCA", "hnca"]', ("candidates.experiments[2] repeats 'HNCA'", "ignoring case")),
        ('["HNCA", "HN(CO)CA"]', '["HNCA", 7]', ("candidates.experiments[2] = 7",)),
        ('["HNCA", "HN(CO)CA"]', '["HNCA"]\ntrosy = "maybe"', ("candidates.trosy = 'maybe'", '"auto", true, false')),
        ("target_signal_to_noise = 10", "target_signal_to_noise = 0", ("goals.target_signal_to_noise = 0", "> 0")),
        ("time_budget_h = 48", "time_budget_h = inf", ("goals.time_budget_h = inf", "not a finite number")),
        ("time_budget_h = 48", "time_budget_h = 48\nrecycle_delay_s = -1", ("goals.recycle_delay_s = -1", "(0, 10] s")),
        ("time_budget_h = 48", "time_budget_h = 48\nhigh_power_duty_limit = 1.5",
         ("goals.high_power_duty_limit = 1.5", "(0, 1]")),
        ("CA = 35", "CA = 0.5", ("goals.resolution_hz.CA = 0.5", "[1, 1000] Hz")),
        ("[goals.resolution_hz]\nN = 25\nCA = 35", "resolution_hz = 25",
         ("goals.resolution_hz = 25", "must be a table")),
    ],
)
def test_wrong_type_or_range_names_file_key_value_and_range(tmp_path, old, new, fragments):
    _raises(tmp_path, _edit(old, new), *fragments)


def test_description_must_be_text(tmp_path):
    _raises(tmp_path, "description = 5\n" + BASE, "description = 5")


def test_too_long_sequence():
    with pytest.raises(BackboneError, match=r"protein\.sequence: the sequence has 10001 residues; at most 10000"):
        Protein(name="x", sequence="A" * 10001)


def test_records_built_in_python_are_validated():
    with pytest.raises(BackboneError, match=r"^protein\.length = 0 "):
        Protein(name="x", length=0)
    with pytest.raises(BackboneError, match=r"sample\.temperature_k = 400 .*\[273\.15, 353\.15\] K"):
        Sample(concentration_mm=1, temperature_k=400)
    with pytest.raises(BackboneError, match=r"spectrometer\.calibration must be a Calibration"):
        Spectrometer(fields_mhz=[600], probe="cryogenic", calibration={"field_mhz": 600})
    with pytest.raises(BackboneError, match=r"goals\.resolution_hz = \[25\]"):
        Goals(target_signal_to_noise=1, time_budget_h=1, resolution_hz=[25])
    with pytest.raises(BackboneError, match=r"unknown key 'NH' in \[goals\.resolution_hz\]"):
        Goals(target_signal_to_noise=1, time_budget_h=1, resolution_hz={"NH": 25})
    with pytest.raises(BackboneError, match=r"candidates\.labeling\[1\] = 3"):
        Candidates(labeling=[3], experiments=["HNCA"])
    good = dict(
        protein=Protein(name="x", length=50),
        sample=Sample(concentration_mm=1, temperature_k=298.15),
        spectrometer=Spectrometer(fields_mhz=[600], probe="cryogenic"),
        candidates=Candidates(labeling=["15n"], experiments=["HSQC"]),
        goals=Goals(target_signal_to_noise=1, time_budget_h=1),
    )
    assert Scenario(**good).spectrometer.calibration is None
    with pytest.raises(BackboneError, match=r"sample must be a Sample"):
        Scenario(**(good | {"sample": {"concentration_mm": 1}}))
