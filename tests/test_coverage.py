"""Walk coverage per residue and the recommended set of experiments.

Facts of the trade checked here: proline has no amide proton and breaks amide-detected walks; glycine has no
Cbeta; the N-terminal NH3+ is not observed; a small domain is walked with HNCA/HN(CO)CA or HNCACB in a day
(common practice). Coverage fractions are recomputed inline from the sequence.
"""

import dataclasses
import json
import math
from functools import lru_cache
from pathlib import Path

import pytest
from numpy.testing import assert_allclose

from backbone.coverage import (
    Coverage,
    Recommendation,
    coverage_table,
    recommend,
    recommendation_text,
    walk_coverage,
)
from backbone.errors import BackboneError
from backbone.planning import plan_scenario
from backbone.scenario import Protein, load_scenario

SCENARIOS = Path(__file__).resolve().parents[1] / "scenarios"
#: An invented test sequence: Pro at 4, Gly at 6.
SHORT = "MKLPEGAKV"


@lru_cache(maxsize=None)
def _scenario(name):
    return load_scenario(SCENARIOS / f"{name}.toml")


@lru_cache(maxsize=None)
def _fld9_plan():
    """FLD9 at common-practice sampling (the models' default t_max: no resolution goals)."""
    s = _scenario("fld9-domain")
    s = dataclasses.replace(s, goals=dataclasses.replace(s.goals, resolution_hz={}))
    return plan_scenario(s, experiments=["HNCA", "HN(CO)CA", "HNCACB", "HNCO"])


@lru_cache(maxsize=None)
def _short_plan():
    s = _scenario("fld9-domain")
    s = dataclasses.replace(s, protein=Protein(name="short test peptide", sequence=SHORT, tau_c_ns=4.0))
    return plan_scenario(s, experiments=["HNCA", "HNCACB"])


def _walkable_fraction(seq: str) -> float:
    """Links (i-1, i) not touching a proline or the N-terminal residue, over n - 1 (facts of the trade)."""
    links = [(i - 1, i) for i in range(2, len(seq) + 1)]
    ok = [1 for a, b in links if a != 1 and seq[a - 1] != "P" and seq[b - 1] != "P"]
    return len(ok) / len(links)


def test_small_domain_walked_in_a_day_with_hnca_pair_or_hncacb():
    # Common practice: a ~9 kDa 13C,15N domain is walked with HNCA + HN(CO)CA, or with HNCACB, in a day.
    p = _fld9_plan()
    seq = p.scenario.protein.sequence_text
    for names in (["HNCA", "HN(CO)CA"], ["HNCACB"]):
        cov = walk_coverage(p, experiments=names)
        assert sum(r.time_h for r in cov.experiments) < 24.0
        assert_allclose(cov.fraction, _walkable_fraction(seq), rtol=1e-12)
        assert {link.category for link in cov.breaks} <= {"Pro", "N-terminus"}


def test_proline_breaks_links_and_coverage_fraction_inline():
    cov = walk_coverage(_short_plan())
    # Links of MKLPEGAKV: 1-2 N-terminus, 3-4 and 4-5 proline, the other five made: 5/8.
    assert_allclose(cov.fraction, 5 / 8, rtol=1e-12)
    assert_allclose(cov.fraction, _walkable_fraction(SHORT), rtol=1e-12)
    cats = {(link.previous, link.residue): link.category for link in cov.breaks}
    assert cats == {(1, 2): "N-terminus", (3, 4): "Pro", (4, 5): "Pro"}
    strip = cov.residues[3]  # P4: no amide proton, no peaks
    assert strip.resname == "P"
    assert not any(p.detectable for ps in strip.peaks.values() for p in ps)
    assert "proline" in strip.peak("HNCA", "CA(i)").reason


def test_glycine_has_no_cbeta_link():
    cov = walk_coverage(_short_plan())
    by_pair = {(link.previous, link.residue): link for link in cov.links}
    # G6 -> A7: made by CA only, G6 has no CB; A7 -> K8 is made by CA and CB (HNCACB).
    assert by_pair[(6, 7)].detectable and "CB" not in by_pair[(6, 7)].nuclei
    assert set(by_pair[(7, 8)].nuclei) == {"CA", "CB"}
    assert "has no CB" in cov.residues[5].peak("HNCACB", "CB(i)").reason


def test_per_residue_throughput_matches_the_walk():
    # The pair cache must give what walk() gives for every residue of a short chain at the planned delays.
    from backbone.experiments import walk
    from backbone.graph import build_chain
    from backbone.relaxation import relaxation_rates

    p = _short_plan()
    cov = walk_coverage(p, experiments=["HNCACB"])
    row = cov.experiments[0]
    scheme = row.labeling_choice.load()
    rates = relaxation_rates(p.tau_c_ns * 1e-9, proton_mhz=row.field_mhz, labeling=scheme)
    G = build_chain(SHORT)
    for i in range(1, len(SHORT) + 1):
        w = walk("HNCACB", G, i, scheme, rates, delays=dict(row.plan.delays), trosy=row.trosy)
        for peak in w.peaks:
            got = cov.residues[i - 1].peak("HNCACB", peak.label).throughput
            assert_allclose(got, abs(float(peak.throughput)) * row.peak_sampling[peak.label], rtol=1e-12, atol=1e-15)


def test_signal_to_noise_scales_with_throughput():
    # At fixed time, S/N is proportional to the throughput (Ernst, Bodenhausen & Wokaun 1987).
    cov = walk_coverage(_short_plan(), experiments=["HNCA"])
    row = cov.experiments[0]
    for strip in cov.residues:
        for p in strip.peaks["HNCA"]:
            assert_allclose(p.signal_to_noise, row.signal_to_noise * p.throughput / row.limiting_throughput, rtol=1e-12)
            assert p.detectable == (p.signal_to_noise >= cov.target_signal_to_noise * (1 - 1e-9))


@pytest.mark.parametrize("budget", [0.5, 3.0, 8.0, 20.0, 1000.0])
def test_recommendation_never_exceeds_budget(budget):
    rec = recommend(_fld9_plan(), budget_h=budget)
    assert isinstance(rec, Recommendation)
    assert rec.total_time_h <= budget
    assert rec.minimal_time_h <= rec.total_time_h + 1e-12
    times = {r.experiment: r.time_h for r in _fld9_plan().rows}
    chosen = {c.experiment for c in rec.chosen}
    for r in rec.rejected:
        assert r.category in ("infeasible", "over budget", "adds no coverage", "lower coverage",
                              "fewer confirmed links", "longer")
        if r.category == "adds no coverage":
            assert r.experiment not in chosen
    # Anything that would fit alongside the chosen set and is left out adds nothing.
    for name, t in times.items():
        if name not in chosen and rec.total_time_h + t <= budget:
            assert any(r.experiment == name and r.category == "adds no coverage" for r in rec.rejected)
    json.dumps(rec.as_dict())
    text = recommendation_text(rec)
    assert "Recommended under" in text


def test_recommendation_reaches_the_walkable_fraction_with_a_day():
    rec = recommend(_fld9_plan(), budget_h=24.0)
    assert_allclose(rec.coverage.fraction, _walkable_fraction(_fld9_plan().scenario.protein.sequence_text))
    assert rec.chosen and all(c.delays for c in rec.chosen)


def test_without_calibration_recommend_refuses_and_coverage_says_so():
    s = _scenario("asm80-complex")
    s = dataclasses.replace(s, protein=dataclasses.replace(s.protein, sequence=SHORT, sequence_file=None))
    p = plan_scenario(s, experiments=["HNCA"], labelings=["2h13c15n"], fields=[800])
    with pytest.raises(BackboneError, match="no \\[spectrometer.calibration\\]"):
        recommend(p)
    cov = walk_coverage(p)
    assert not cov.absolute and cov.notes and "no calibration" in cov.notes[0]
    assert all(pk.signal_to_noise is None for strip in cov.residues for ps in strip.peaks.values() for pk in ps)
    assert "no calibration" in coverage_table(cov)


def test_outputs_are_json_and_frames():
    cov = walk_coverage(_short_plan())
    assert isinstance(cov, Coverage)
    d = cov.as_dict()
    json.dumps(d)
    assert d["links_total"] == len(SHORT) - 1
    frame = cov.to_frame()
    assert {"residue", "experiment", "peak", "signal_to_noise", "detectable"} <= set(frame.columns)
    assert "breaks:" in coverage_table(cov)


# ---------------------------------------------------------------------------------------------------------
# Error paths
# ---------------------------------------------------------------------------------------------------------


def test_error_no_sequence():
    s = _scenario("fld9-domain")
    s = dataclasses.replace(s, protein=Protein(name="by length", length=80))
    p = plan_scenario(s, experiments=["HNCA"])
    with pytest.raises(BackboneError, match="needs the protein's sequence"):
        walk_coverage(p)
    with pytest.raises(BackboneError, match="needs the protein's sequence"):
        recommend(p)


def test_error_bad_arguments():
    p = _short_plan()
    with pytest.raises(BackboneError, match="not in this plan"):
        walk_coverage(p, labeling="15n")
    with pytest.raises(BackboneError, match="not in this plan"):
        walk_coverage(p, field_mhz=900)
    with pytest.raises(BackboneError, match="not in this plan"):
        walk_coverage(p, experiments=["HNCO"])
    with pytest.raises(BackboneError, match="list of experiment names"):
        walk_coverage(p, experiments="HNCA")
    with pytest.raises(BackboneError, match="not a standard amino acid|not allowed|letter"):
        walk_coverage(p, sequence="MKBX")
    with pytest.raises(BackboneError, match="budget_h"):
        recommend(p, budget_h=0)
    with pytest.raises(BackboneError, match="budget_h"):
        recommend(p, budget_h=math.inf)
    with pytest.raises(BackboneError, match="field 900"):
        recommend(p, fields=[900])
    with pytest.raises(BackboneError, match="needs a ScenarioPlan"):
        walk_coverage({})
    with pytest.raises(BackboneError, match="needs a ScenarioPlan"):
        recommend({})
    with pytest.raises(BackboneError, match="needs a Coverage"):
        coverage_table({})
    with pytest.raises(BackboneError, match="needs a Recommendation"):
        recommendation_text({})
    with pytest.raises(BackboneError, match="no peak"):
        walk_coverage(p).residues[1].peak("HNCA", "C(i)")
