"""plan(): the ``plan --json`` contract of ARCHITECTURE.md, grids, TROSY choice, tables and errors."""

from __future__ import annotations

import json

import numpy as np
import pytest
from numpy.testing import assert_allclose

from backbone.conditions import resolve_conditions
from backbone.errors import BackboneError
from backbone.experiments import registered_experiments
from backbone.plan import plan

# Keys of the plan contract (ARCHITECTURE.md, "Machine-readable output").
EXPERIMENT_KEYS = {"name", "trosy", "labeling", "field_mhz", "tau_c_ns", "relative_sensitivity", "feasible", "reason", "peaks", "steps"}
PEAK_KEYS = {"label", "throughput", "textbook_throughput", "sign"}
STEP_KEYS = {"name", "from", "to", "delay_s", "textbook_delay_s", "efficiency", "rate_s"}


@pytest.fixture(scope="module")
def one():
    return plan(tau_c_ns=12.0, field_mhz=700.0, labeling="13c15n")


def test_contract_keys_and_json(one):
    d = json.loads(json.dumps(one.as_dict()))
    assert set(d) == {"experiments"}
    assert [e["name"] for e in d["experiments"]] == list(registered_experiments())
    for e in d["experiments"]:
        assert EXPERIMENT_KEYS <= set(e)
        assert isinstance(e["trosy"], bool) and isinstance(e["feasible"], bool) and isinstance(e["reason"], str)
        assert e["labeling"] == "13c15n"
        assert_allclose(e["field_mhz"], 700.0)
        assert_allclose(e["tau_c_ns"], 12.0, rtol=1e-12)
        for p in e["peaks"]:
            assert set(p) == PEAK_KEYS and p["sign"] in (1, -1)
            assert abs(p["throughput"]) <= 1.0 and abs(p["textbook_throughput"]) <= 1.0
        for s in e["steps"]:
            assert set(s) == STEP_KEYS


def test_hsqc_is_the_reference(one):
    # relative_sensitivity is against the sensitivity-enhanced 2D 1H-15N HSQC in the same conditions.
    assert_allclose(one["HSQC"].relative_sensitivity, 1.0, rtol=1e-12)


def test_gain_at_least_one(one):
    for e in one.experiments:
        assert e.feasible
        assert np.all(e.gain >= 1.0 - 1e-9)


def test_relative_sensitivity_below_hsqc_for_triple_resonance(one):
    # Common practice: every 3D triple-resonance experiment is less sensitive than the 2D HSQC (extra transfers).
    for e in one.experiments:
        if e.name not in ("HSQC", "TROSY"):
            assert 0.0 < float(e.relative_sensitivity) < 1.0


def test_natural_abundance_carbon_makes_triple_resonance_infeasible():
    d = plan(tau_c_ns=8.0, field_mhz=600.0, labeling="15n").as_dict()
    for e in d["experiments"]:
        if e["name"] in ("HSQC", "TROSY"):
            assert e["feasible"]
        else:
            assert not e["feasible"] and "natural abundance" in e["reason"]
            assert e["relative_sensitivity"] == 0.0
            assert all(p["throughput"] == 0.0 for p in e["peaks"])


def test_grid_shapes_and_auto_trosy():
    tc = np.array([5.0, 20.0, 40.0])
    r = plan(tau_c_ns=tc[:, None], field_mhz=np.array([600.0, 900.0])[None, :], labeling="2h13c15n",
             experiments=["HSQC", "HNCO"], trosy="auto")
    hnco = r["HNCO"]
    assert np.shape(hnco.trosy) == (3, 2) and hnco.peaks[0].throughput.shape == (3, 2)
    # TROSY is chosen for the large protein at high field (Salzmann, Pervushin, Wider, Senn & Wuthrich, PNAS 95,
    # 13585, 1998: TROSY-HNCO gains for large deuterated proteins).
    assert bool(hnco.trosy[2, 1])
    d = r.as_dict()["experiments"][1]
    assert np.shape(d["peaks"][0]["throughput"]) == (3, 2) and np.shape(d["trosy"]) == (3, 2)


def test_auto_picks_the_better_version():
    both = {t: plan(tau_c_ns=30.0, field_mhz=900.0, labeling="2h13c15n", experiments=["HNCA"], trosy=t)["HNCA"] for t in (False, True)}
    auto = plan(tau_c_ns=30.0, field_mhz=900.0, labeling="2h13c15n", experiments=["HNCA"], trosy="auto")["HNCA"]
    assert_allclose(auto.objective_value, max(float(both[False].objective_value), float(both[True].objective_value)))


def test_conditions_object_and_residue():
    cond = resolve_conditions(tau_c_ns=10.0, proton_mhz=600.0, labeling="13c15n")
    r = plan(cond, experiments=["HNCACB"], sequence="MKGLP", residue=3)
    e = r["HNCACB"]
    assert e.feasible and "CB(i) absent" in e.reason
    pro = plan(cond, experiments=["HSQC", "HNCA"], sequence="MKGLP", residue=5)
    assert not pro["HNCA"].feasible and "proline" in pro["HNCA"].reason
    assert pro.as_dict()["experiments"][1]["relative_sensitivity"] == 0.0


def test_data_frame_view(one):
    df = one.to_frame()
    assert {"experiment", "peak", "throughput", "textbook_throughput", "field_mhz", "tau_c_ns"} <= set(df.columns)
    assert len(df) == sum(len(e.peaks) for e in one.experiments)
    steps = one.to_frame("steps")
    assert {"delay_ms", "textbook_delay_ms", "rate_per_s", "efficiency"} <= set(steps.columns)


def test_plan_errors():
    with pytest.raises(BackboneError, match="trosy"):
        plan(tau_c_ns=10, field_mhz=600, trosy="maybe")
    with pytest.raises(BackboneError, match="tau_c_ns and field_mhz"):
        plan(tau_c_ns=10)
    cond = resolve_conditions(tau_c_ns=10.0, proton_mhz=600.0)
    with pytest.raises(BackboneError, match="not both"):
        plan(cond, tau_c_ns=10, field_mhz=600)
    with pytest.raises(BackboneError, match="needs the sequence"):
        plan(tau_c_ns=10, field_mhz=600, residue=3)
    with pytest.raises(BackboneError, match="residue number"):
        plan(tau_c_ns=10, field_mhz=600, sequence="MKL")
    with pytest.raises(BackboneError, match="unknown experiment"):
        plan(tau_c_ns=10, field_mhz=600, experiments=["HNCQ"])
    with pytest.raises(BackboneError, match="at least one"):
        plan(tau_c_ns=10, field_mhz=600, experiments=[])
    with pytest.raises(BackboneError, match="kind"):
        plan(tau_c_ns=10, field_mhz=600, experiments=["HSQC"]).to_frame("delays")
    with pytest.raises(BackboneError, match="no experiment"):
        plan(tau_c_ns=10, field_mhz=600, experiments=["HSQC"])["HNCA"]
