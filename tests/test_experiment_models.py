"""Experiment model files: every bundled model builds, lookups, the README example, and every validation error."""

from __future__ import annotations

import re
import tomllib
from pathlib import Path

import pytest

from backbone.errors import BackboneError
from backbone.experiments import (
    ExperimentModel,
    experiment_from_dict,
    known_coherences,
    load_experiment,
    registered_experiments,
)
from backbone.relaxation import COHERENCES
from backbone.resources import models_dir

BUNDLED = list(registered_experiments())

# Published spellings (ARCHITECTURE.md; Sattler, Schleucher & Griesinger, Prog. NMR Spectrosc. 34, 93, 1999).
PUBLISHED = {"HSQC", "TROSY", "HNCO", "HNCA", "HN(CO)CA", "HN(CA)CO", "HNCACB", "HN(CO)CACB", "CBCA(CO)NH"}

MINIMAL = '''
name = "Test HSQC"
description = "a user's HSQC"
walk = "out-and-back"
dimensions = ["H", "N"]
needs = ["H", "N"]
start = "H(i)"
objective = "N(i)"
objective_reason = "one peak"

[[steps]]
name = "H to N"
kind = "inept"
from = "H(i)"
to = "N(i)"
active = ["1J(N,H)"]
delay = "tau_NH"
inphase = "Hx"
antiphase = "2HxNz"

[[steps]]
name = "N shift"
kind = "shift-evolution"
at = "N(i)"
mode = "real-time"
t_max_ms = 50.0
coherence = "Nx_hdec"

[[steps]]
name = "N to H"
kind = "refocus"
from = "N(i)"
to = "H(i)"
active = ["1J(N,H)"]
delay = "tau_NH"
antiphase = "2HxNz"
inphase = "Hx"

[[steps]]
name = "acquisition"
kind = "detect"
at = "H(i)"
t_acq_ms = 80.0
coherence = ["Hx", "2HxNz"]

[[peaks]]
label = "N(i)"
'''


def _write(tmp_path: Path, text: str, name: str = "mine.toml") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


@pytest.mark.parametrize("name", BUNDLED)
def test_every_bundled_model_builds_and_is_frozen(name):
    model = registered_experiments()[name]
    assert isinstance(model, ExperimentModel)
    assert model.peaks and model.steps and model.steps[-1].kind == "detect"
    with pytest.raises(AttributeError):
        model.name = "other"  # frozen dataclass


def test_bundled_names_are_the_published_spellings():
    # The nine experiments named in ARCHITECTURE.md with their published spelling.
    assert set(BUNDLED) == PUBLISHED


@pytest.mark.parametrize("name", BUNDLED)
def test_lookup_by_name_case_insensitive_and_by_stem(name):
    model = registered_experiments()[name]
    assert load_experiment(name.lower()) is model
    assert load_experiment(name.upper()) is model
    assert load_experiment(Path(model.source).stem) is model


def test_lookup_examples():
    assert load_experiment("hnca").name == "HNCA"
    assert load_experiment("HN(CO)CA").name == "HN(CO)CA"
    assert load_experiment("hn-co-ca").name == "HN(CO)CA"


def test_hncacb_signs_and_branches():
    # HNCACB: CA peaks positive, CB peaks negative (Wittekind & Mueller, J. Magn. Reson. B 101, 201, 1993).
    m = load_experiment("HNCACB")
    signs = {p.label: p.sign for p in m.peaks}
    assert signs == {"CA(i)": 1, "CB(i)": -1, "CA(i-1)": 1, "CB(i-1)": -1}
    assert m.step("N to CA").branching and m.step("CA to CB").branching


def test_tied_delays_share_names():
    # Out and back N->CA share T_NCA; the H->N INEPT and the N->H refocus share tau_NH (design contract).
    m = load_experiment("HNCA")
    assert m.step("N to CA").delay == m.step("CA to N").delay == "T_NCA"
    assert m.step("H to N").delay == m.step("N to H").delay == "tau_NH"


@pytest.mark.parametrize("name", BUNDLED)
def test_every_coherence_is_known_to_the_engine(name):
    # The engine now computes every coherence the bundled models use.
    m = registered_experiments()[name]
    used = set()
    for s in m.steps:
        for spec in list(s.coherences(False).values()) + list(s.coherences(True).values()):
            if spec is None:
                continue
            values = spec.values() if hasattr(spec, "values") else [spec]
            for v in values:
                used.update(v if isinstance(v, tuple) else (v,))
    assert used <= set(COHERENCES)


def test_known_coherences_are_the_engines():
    assert set(known_coherences()) == set(COHERENCES)


def test_readme_example_is_a_valid_model():
    text = (models_dir("experiments") / "README.md").read_text(encoding="utf-8")
    block = re.search(r"```toml\n(.*?)```", text, re.S).group(1)
    model = experiment_from_dict(tomllib.loads(block), "README example")
    assert model.name == "HNCA" and [p.label for p in model.peaks] == ["CA(i)", "CA(i-1)"]


def test_user_file_by_path(tmp_path):
    model = load_experiment(str(_write(tmp_path, MINIMAL)))
    assert model.name == "Test HSQC" and model.delay_names == ("tau_NH",)


# ---------------------------------------------------------------------------------------------------------
# Error paths: message names the file, the step and the key
# ---------------------------------------------------------------------------------------------------------


def _fails(tmp_path, text, *fragments):
    path = _write(tmp_path, text)
    with pytest.raises(BackboneError) as info:
        load_experiment(str(path))
    msg = str(info.value)
    assert str(path) in msg
    for f in fragments:
        assert f in msg, msg
    return msg


def test_unknown_top_key_suggests(tmp_path):
    _fails(tmp_path, MINIMAL.replace('walk = "out-and-back"', 'walk = "out-and-back"\nobjectve = "x"'), "'objectve'", "'objective'")


def test_unknown_step_key_suggests(tmp_path):
    text = MINIMAL.replace('t_max_ms = 50.0', 't_maxms = 50.0')
    _fails(tmp_path, text, "step 2 ('N shift')", "'t_maxms'", "'t_max_ms'")


def test_unknown_peak_key(tmp_path):
    _fails(tmp_path, MINIMAL + 'sgn = 1\n', "peak 1", "'sgn'", "'sign'")


def test_unknown_step_kind(tmp_path):
    _fails(tmp_path, MINIMAL.replace('kind = "inept"', 'kind = "inpet"'), "step 1 ('H to N')", "'inpet'", "'inept'")


def test_unknown_coupling(tmp_path):
    _fails(tmp_path, MINIMAL.replace('active = ["1J(N,H)"]\ndelay', 'active = ["1J(N,HN)"]\ndelay', 1), "step 1 ('H to N')", "1J(N,HN)", "1J(N,H)")


def test_unknown_passive_coupling(tmp_path):
    text = MINIMAL.replace('delay = "tau_NH"\ninphase', 'passive = ["3J(H,HB)"]\ndelay = "tau_NH"\ninphase', 1)
    _fails(tmp_path, text, "step 1 ('H to N')", "passive", "3J(H,HB)")


def test_coupling_must_join_the_step_atoms(tmp_path):
    _fails(tmp_path, MINIMAL.replace('active = ["1J(N,H)"]\ndelay', 'active = ["1J(N,CA)"]\ndelay', 1), "step 1 ('H to N')", "joins N and CA")


def test_unknown_coherence(tmp_path):
    _fails(tmp_path, MINIMAL.replace('antiphase = "2HxNz"', 'antiphase = "2HxNy"', 1), "step 1 ('H to N')", "antiphase", "2HxNy", "2HxNz")


def test_coherence_of_the_wrong_spin(tmp_path):
    _fails(tmp_path, MINIMAL.replace('inphase = "Hx"', 'inphase = "Nx"', 1), "step 1 ('H to N')", "inphase", "coherence of N")


def test_peak_with_missing_branch(tmp_path):
    text = load_experiment("HNCA")
    raw = Path(text.source).read_text(encoding="utf-8").replace('path = { "N to CA" = "CA(i-1)" }', 'path = { "N to CA" = "CB(i-1)" }')
    _fails(tmp_path, raw, "peak 'CA(i-1)'", "step 2 ('N to CA')", "path", "CB(i-1)")


def test_peak_without_branch_choice(tmp_path):
    raw = Path(load_experiment("HNCA").source).read_text(encoding="utf-8").replace('path = { "N to CA" = "CA(i-1)" }\n', "")
    _fails(tmp_path, raw, "peak 'CA(i-1)'", "'N to CA'", "path")


def test_peak_path_names_unknown_step(tmp_path):
    raw = Path(load_experiment("HNCA").source).read_text(encoding="utf-8").replace('path = { "N to CA" = "CA(i-1)" }', 'path = { "N to C" = "CA(i-1)" }')
    _fails(tmp_path, raw, "peak 'CA(i-1)'", "path", "'N to C'")


def test_peak_label_must_be_evolved(tmp_path):
    text = MINIMAL.replace('label = "N(i)"', 'label = "CA(i)"').replace('objective = "N(i)"', 'objective = "weakest"')
    _fails(tmp_path, text, "peak 'CA(i)'", "label")


def test_dimensions_must_match(tmp_path):
    _fails(tmp_path, MINIMAL.replace('dimensions = ["H", "N"]', 'dimensions = ["H", "N", "CA"]'), "dimensions")


def test_missing_required_key(tmp_path):
    _fails(tmp_path, MINIMAL.replace('objective_reason = "one peak"\n', ""), "'objective_reason'")


def test_real_time_evolution_takes_no_passive(tmp_path):
    text = MINIMAL.replace('coherence = "Nx_hdec"', 'coherence = "Nx_hdec"\npassive = ["1J(N,CA)"]')
    _fails(tmp_path, text, "step 2 ('N shift')", "passive")


def test_within_must_name_a_step(tmp_path):
    text = MINIMAL.replace('mode = "real-time"', 'mode = "constant-time"\nwithin = "N to Q"')
    _fails(tmp_path, text, "step 2 ('N shift')", "within", "'N to Q'")


def test_bad_objective(tmp_path):
    _fails(tmp_path, MINIMAL.replace('objective = "N(i)"', 'objective = "weakst"'), "objective", "'weakest'")


def test_duplicate_step_name(tmp_path):
    _fails(tmp_path, MINIMAL.replace('name = "N to H"', 'name = "H to N"'), "'H to N'", "twice")


def test_bad_toml_and_missing_file(tmp_path):
    path = _write(tmp_path, "name = \n")
    with pytest.raises(BackboneError, match="not valid TOML"):
        load_experiment(str(path))
    with pytest.raises(BackboneError, match="cannot read"):
        load_experiment(str(tmp_path / "absent.toml"))


def test_unknown_experiment_name():
    with pytest.raises(BackboneError, match="unknown experiment 'HNCAA'.*HNCA"):
        load_experiment("HNCAA")


def test_bad_atom_offset(tmp_path):
    _fails(tmp_path, MINIMAL.replace('to = "N(i)"', 'to = "N(i-2)"', 1), "step 1 ('H to N')", "offset")
