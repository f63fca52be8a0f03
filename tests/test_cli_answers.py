"""The planning answers through the command line on every bundled scenario: `plan SCENARIO`, `compare`,
`sweep`, `draw-walk` and `fit`; outputs written whole, never over an existing file without --force, and
bad input as one line with exit status 2."""

import json
from pathlib import Path

import numpy as np
import pytest

from backbone.cli import main

SCENARIOS = sorted((Path(__file__).resolve().parent.parent / "scenarios").glob("*.toml"))


def run(capsys, *argv):
    try:
        code = main([str(a) for a in argv])
    except SystemExit as exc:  # argparse usage errors
        code = exc.code
    out, err = capsys.readouterr()
    return code, out, err


@pytest.mark.parametrize("scenario", SCENARIOS, ids=lambda p: p.stem)
def test_plan_every_bundled_scenario(capsys, scenario):
    code, out, err = run(capsys, "plan", scenario, "--experiment", "HNCO,HNCA", "--json")
    assert code == 0, err
    doc = json.loads(out)
    assert doc["experiments"] and "coverage" in doc
    # Where the walk breaks: a proline has no amide proton, so it can never carry a strip (fact of the trade).
    breaks = doc["coverage"]["breaks"]
    assert all(isinstance(b, dict) for b in breaks)


def test_plan_scenario_table_tells_time_and_breaks(capsys):
    code, out, _ = run(capsys, "plan", SCENARIOS[0].parent / "fld9-domain.toml", "--experiment", "HNCA,HN(CO)CA")
    assert code == 0
    assert "Recommended" in out and "limited by" in out and "breaks" in out
    assert "probe maker" in out  # the safety caution


def test_plan_scenario_refuses_condition_flags(capsys):
    code, out, err = run(capsys, "plan", SCENARIOS[0], "--tau-c", "10")
    assert code == 2 and out == "" and "--tau-c" in err and err.count("\n") == 1


def test_compare_with_plot(tmp_path, capsys):
    out_png = tmp_path / "compare.png"
    code, out, _ = run(capsys, "compare", SCENARIOS[0].parent / "fld9-domain.toml", "--experiment", "HNCA", "--plot", out_png)
    assert code == 0 and "HNCA" in out
    assert out_png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (PNG specification, ISO/IEC 15948)
    # A second run must not overwrite it without --force.
    code, _, err = run(capsys, "compare", SCENARIOS[0].parent / "fld9-domain.toml", "--experiment", "HNCA", "--plot", out_png)
    assert code == 2 and "exists" in err


def test_sweep_to_csv_and_refusal(tmp_path, capsys):
    out_csv = tmp_path / "sweep.csv"
    argv = ["sweep", "--tau-c", "5,20", "--field", "800", "--labeling", "13c15n", "--experiment", "HNCO", "--out", out_csv]
    code, out, err = run(capsys, *argv)
    assert code == 0, err
    lines = out_csv.read_text().splitlines()
    assert lines[0].startswith("experiment,") and len(lines) == 3
    before = out_csv.read_bytes()
    code, _, err = run(capsys, *argv)
    assert code == 2 and "exists" in err and out_csv.read_bytes() == before
    code, _, _ = run(capsys, *argv, "--force")
    assert code == 0


def test_sweep_bad_grid(capsys):
    code, out, err = run(capsys, "sweep", "--tau-c", "5:abc:3")
    assert code == 2 and out == "" and "--tau-c" in err and err.count("\n") == 1


def test_draw_walk_svg(tmp_path, capsys):
    out_svg = tmp_path / "walk.svg"
    code, _, err = run(capsys, "draw-walk", "HNCA", out_svg, "--tau-c", "12")
    assert code == 0, err
    assert b"<svg" in out_svg.read_bytes()[:2000]


def _decay_csv(path, rate=12.0):
    # Synthetic demo data from the textbook decay I0 exp(-R t) (a fixture, not a reference).
    t = np.array([0.01, 0.03, 0.05, 0.07, 0.09, 0.12, 0.16])
    rows = ["residue,delay_s,intensity,error"]
    for r in (1, 2, 3):
        rows += [f"{r},{x},{1e6 * np.exp(-rate * x):.6g},1000" for x in t]
    rows.append("4,0.01,5,1")
    path.write_text("\n".join(rows) + "\n")


def test_fit_decay_json_contract(tmp_path, capsys):
    # ARCHITECTURE.md: {"model", "residues": [{"residue", "status", <p>, <p>_err, ...}], "global"}; every input
    # residue present, statuses from the fixed list.
    data = tmp_path / "r2.csv"
    _decay_csv(data)
    code, out, _ = run(capsys, "fit", data, "--model", "decay", "--json")
    doc = json.loads(out)
    assert code == 0 and doc["model"] == "decay" and "global" in doc
    assert [r["residue"] for r in doc["residues"]] == [1, 2, 3, 4]
    assert {r["status"] for r in doc["residues"]} <= {"ok", "poorly-determined", "failed", "too-few-points", "bad-data"}
    assert doc["residues"][3]["status"] == "too-few-points"
    # The data carry 6 significant digits, so the rate comes back to about 1e-5 relative.
    assert doc["residues"][0]["rate"] == pytest.approx(12.0, rel=1e-4) and "rate_err" in doc["residues"][0]


def test_fit_writes_csv_and_plot(tmp_path, capsys):
    data = tmp_path / "r2.csv"
    _decay_csv(data)
    code, _, err = run(capsys, "fit", data, "--model", "decay", "--csv", tmp_path / "fit.csv", "--plot", tmp_path / "fit.pdf")
    assert code == 0, err
    assert (tmp_path / "fit.pdf").read_bytes()[:5] == b"%PDF-"  # PDF header (ISO 32000)
    assert (tmp_path / "fit.csv").read_text().startswith("residue")


@pytest.mark.parametrize(
    "argv, fragment",
    [
        (["fit", "/nonexistent/data.csv", "--model", "decay"], "data.csv"),
        (["fit", "{empty}", "--model", "decay"], "empty"),
        (["fit", "{data}", "--model", "buildup"], "--j"),
        (["fit", "{data}", "--model", "ratio"], "--scale"),
        (["fit", "{data}", "--model", "nonsense"], "model"),
        (["compare", "/nonexistent/scenario.toml"], "scenario.toml"),
    ],
)
def test_answers_bad_input(tmp_path, capsys, argv, fragment):
    data = tmp_path / "r2.csv"
    _decay_csv(data)
    empty = tmp_path / "empty.csv"
    empty.write_text("")
    argv = [a.format(data=data, empty=empty) for a in argv]
    code, out, err = run(capsys, *argv)
    assert code == 2 and out == ""
    assert err.count("\n") == 1 and "Traceback" not in err
    assert fragment.lower() in err.lower()
