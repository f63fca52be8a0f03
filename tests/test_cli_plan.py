"""`backbone plan`, `backbone experiments` and `backbone verify` through the command line: the plan JSON
contract of ARCHITECTURE.md for every bundled model, and bad input as one line with exit status 2."""

import json

import pytest

from backbone.cli import main
from backbone.experiments import registered_experiments

PEAK_KEYS = {"label", "throughput", "textbook_throughput", "sign"}
STEP_KEYS = {"name", "from", "to", "delay_s", "textbook_delay_s", "efficiency", "rate_s"}
EXPERIMENT_KEYS = {
    "name", "trosy", "labeling", "field_mhz", "tau_c_ns", "relative_sensitivity", "feasible", "reason", "peaks", "steps",
}


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


@pytest.mark.parametrize("name", [m.name for m in registered_experiments().values()])
def test_plan_json_contract_for_every_bundled_model(capsys, name):
    code, out, err = run(
        capsys, "plan", "--tau-c", "15", "--field", "800", "--labeling", "13c15n", "--experiment", name, "--json"
    )
    assert code == 0 and err == ""
    doc = json.loads(out)
    (e,) = doc["experiments"]
    assert EXPERIMENT_KEYS <= set(e)
    assert e["name"] == name and e["labeling"] == "13c15n"
    assert e["field_mhz"] == pytest.approx(800.0) and e["tau_c_ns"] == pytest.approx(15.0)
    # Every bundled walk is feasible for a protonated 13C/15N sample (CBCA(CO)NH starts on the carbon-bound
    # protons, which 13c15n keeps; Grzesiek & Bax 1992).
    assert e["feasible"] and e["reason"] == ""
    for p in e["peaks"]:
        assert PEAK_KEYS <= set(p)
        assert 0 < abs(p["throughput"]) <= 1 and p["sign"] in (-1, 1)
    for s in e["steps"]:
        assert STEP_KEYS <= set(s)
        assert s["delay_s"] >= 0 and 0 <= s["efficiency"] <= 1.5  # SE step may carry its sqrt(2) gain


def test_plan_infeasible_walk_is_reported_not_raised(capsys):
    # Perdeuteration removes the carbon-bound protons CBCA(CO)NH starts from (common practice); at full
    # deuteration the walk has nothing to start on.
    code, out, _ = run(
        capsys, "plan", "--tau-c", "30", "--labeling", "2h13c15n", "--deuteration", "1.0", "--experiment", "CBCA(CO)NH", "--json"
    )
    (e,) = json.loads(out)["experiments"]
    assert code == 0
    assert e["feasible"] is False and e["reason"]
    assert all(p["throughput"] == 0 for p in e["peaks"])


def test_plan_table_has_caution(capsys):
    code, out, _ = run(capsys, "plan", "--tau-c", "10", "--experiment", "HNCO")
    assert code == 0
    assert "HNCO" in out and "textbook ms" in out
    assert "facility" in out and "probe maker" in out


def test_plan_trosy_flag(capsys):
    _, out, _ = run(capsys, "plan", "--tau-c", "25", "--field", "900", "--labeling", "2h13c15n", "--experiment", "HNCA", "--trosy", "--json")
    assert json.loads(out)["experiments"][0]["trosy"] is True


def test_experiments_lists_every_model(capsys):
    code, out, _ = run(capsys, "experiments", "--json")
    names = {m["name"] for m in json.loads(out)["experiments"]}
    assert code == 0 and names == {m.name for m in registered_experiments().values()}


def test_verify_every_step_kind_passes(capsys):
    # The fast algebra against the Liouville-space propagator within 1 % (issue requirement).
    code, out, _ = run(capsys, "verify", "--json")
    doc = json.loads(out)
    assert code == 0 and doc["passed"]
    assert all(r["passed"] is not False for r in doc["rows"])


@pytest.mark.parametrize("name", [m.name for m in registered_experiments().values()])
def test_verify_every_bundled_model(capsys, name):
    code, out, _ = run(capsys, "verify", name, "--json")
    assert code == 0 and json.loads(out)["passed"]


@pytest.mark.parametrize(
    "argv, fragment",
    [
        (["plan", "--tau-c", "15", "--experiment", "HNCX"], "HNCX"),
        (["plan", "--tau-c", "15", "--experiment", ","], "experiment"),
        (["plan", "--tau-c", "15", "--residue", "3"], "--sequence"),
        (["plan", "--tau-c", "15", "--trosy", "maybe"], "trosy"),
        (["plan", "--tau-c", "15", "--objective", "CZ(i)", "--experiment", "HNCA"], "CZ(i)"),
        (["verify", "NOPE"], "NOPE"),
    ],
)
def test_plan_bad_input(capsys, argv, fragment):
    try:
        code = main(argv)
    except SystemExit as exc:  # argparse choices
        code = exc.code
    out, err = capsys.readouterr()
    assert code == 2 and out == ""
    assert err.count("\n") == 1 and "Traceback" not in err
    assert fragment.lower() in err.lower()
