"""sweep(): long-format table over tau_c x field x labeling, equal to plan() point by point; write_table; parse_grid."""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose

from backbone.errors import BackboneError
from backbone.plan import plan
from backbone.sweep import SWEEP_COLUMNS, delay_columns, parse_grid, sweep, write_table
from backbone.units import TAU_C_NS

TAU = np.array([5.0, 15.0])
FIELD = np.array([800.0])


@pytest.fixture(scope="module")
def calls():
    return []


@pytest.fixture(scope="module")
def frame(calls):
    return sweep(
        tau_c_ns=TAU,
        field_mhz=FIELD,
        labelings=["13c15n"],
        experiments=["HNCA", "HNCACB", "HSQC"],
        trosy="both",
        progress=lambda done, total: calls.append((done, total)),
    )


def test_columns_and_rows(frame, calls):
    assert tuple(frame.columns[: len(SWEEP_COLUMNS)]) == SWEEP_COLUMNS
    for d in ("tau_NH", "T_NCA"):
        assert set(delay_columns(d)) <= set(frame.columns)
    assert all(c.endswith("_ms") for c in frame.columns[len(SWEEP_COLUMNS):])
    # trosy="both": plain and TROSY rows for the TROSY-capable HNCA and HNCACB, one version of the HSQC.
    versions = frame.groupby("experiment")["trosy"].apply(lambda s: sorted(set(s)))
    assert versions["HNCA"] == [False, True] and versions["HNCACB"] == [False, True] and versions["HSQC"] == [False]
    assert len(frame) == (2 + 2 + 1) * TAU.size * FIELD.size
    assert calls == [(1, 2), (2, 2)]


@pytest.mark.parametrize("trosy", [False, True])
def test_values_equal_plan_at_a_point(frame, trosy):
    # Independent recomputation: plan() called for the single condition, compared with the sweep's row.
    ref = plan(tau_c_ns=15.0, field_mhz=800.0, labeling="13c15n", experiments=["HNCA"], trosy=trosy)["HNCA"]
    row = frame[(frame["experiment"] == "HNCA") & (frame["trosy"] == trosy) & (frame["tau_c_ns"].round(9) == 15.0)]
    assert len(row) == 1
    row = row.iloc[0]
    assert_allclose(row["objective_throughput"], float(ref.objective_value), rtol=1e-10)
    assert_allclose(row["textbook_objective_throughput"], float(ref.textbook_objective_value), rtol=1e-10)
    assert_allclose(row["relative_sensitivity"], float(ref.relative_sensitivity), rtol=1e-10)
    for d, v in ref.delays.items():
        opt, tb = delay_columns(d)
        assert_allclose(row[opt], float(v) * 1e3, rtol=1e-10)
        assert_allclose(row[tb], float(ref.textbook_delays[d]) * 1e3, rtol=1e-10)
    assert row["feasible"] and row["labeling"] == "13c15n" and row["objective"] == ref.objective
    assert math.isnan(row["deuteration"])


def test_cbeta_experiment_loses_more_with_tau_c_than_hnca(frame):
    # Common practice: experiments through CB (HNCACB) fail first as proteins grow, so their throughput falls
    # faster with tau_c than the HNCA's (the review of Sattler, Schleucher & Griesinger, Prog. NMR Spectrosc.
    # 34, 93, 1999, discusses it; from memory). Compare d ln(throughput) / d tau_c over 5-15 ns.
    plain = frame[~frame["trosy"]]

    def slope(name):
        y = plain[plain["experiment"] == name].sort_values("tau_c_ns")["objective_throughput"].to_numpy()
        return (np.log(y[1]) - np.log(y[0])) / (TAU[1] - TAU[0])

    assert slope("HNCACB") < slope("HNCA") < 0


def test_sweep_errors():
    with pytest.raises(BackboneError, match="trosy"):
        sweep(tau_c_ns=[5.0], field_mhz=[800.0], trosy="sometimes")
    with pytest.raises(BackboneError, match="labelings"):
        sweep(tau_c_ns=[5.0], field_mhz=[800.0], labelings=[])
    with pytest.raises(BackboneError, match="labelings\\[0\\]"):
        sweep(tau_c_ns=[5.0], field_mhz=[800.0], labelings=[3.5])
    with pytest.raises(BackboneError, match="tau_c"):
        sweep(tau_c_ns=[5.0, 900.0], field_mhz=[800.0])
    with pytest.raises(BackboneError, match="field_mhz"):
        sweep(tau_c_ns=[5.0], field_mhz=[[800.0]])
    with pytest.raises(BackboneError, match="progress"):
        sweep(tau_c_ns=[5.0], field_mhz=[800.0], progress=3)


# --- write_table -------------------------------------------------------------------------------------------


def test_write_table_round_trips(frame, tmp_path):
    small = frame[frame["experiment"] == "HNCA"]
    csv = write_table(small, tmp_path / "sweep.csv")
    back = pd.read_csv(csv, keep_default_na=False, na_values=[""])
    assert list(back.columns) == list(small.columns)
    assert_allclose(back["objective_throughput"], small["objective_throughput"], rtol=1e-12)
    assert list(back["experiment"]) == list(small["experiment"]) and list(back["trosy"]) == list(small["trosy"])
    js = write_table(small, tmp_path / "sweep.json")
    data = json.loads(js.read_text())
    assert data["columns"] == list(small.columns)
    assert len(data["rows"]) == len(small)
    assert_allclose([r["tau_c_ns"] for r in data["rows"]], small["tau_c_ns"], rtol=1e-12)
    assert all(r["deuteration"] is None for r in data["rows"])  # NaN is written as null
    assert sorted(p.name for p in tmp_path.iterdir()) == ["sweep.csv", "sweep.json"]  # no temporary files left


def test_write_table_refuses_to_overwrite(frame, tmp_path):
    target = tmp_path / "t.csv"
    target.write_text("keep me\n")
    with pytest.raises(BackboneError, match="t.csv"):
        write_table(frame, target)
    assert target.read_text() == "keep me\n"
    write_table(frame, target, force=True)
    assert target.read_text().startswith("experiment,")


def test_write_table_writes_nothing_on_error(frame, tmp_path, monkeypatch):
    with pytest.raises(BackboneError, match="does not exist"):
        write_table(frame, tmp_path / "missing" / "t.csv")
    not_a_folder = tmp_path / "file"
    not_a_folder.write_text("")
    with pytest.raises(BackboneError, match="t.csv"):
        write_table(frame, not_a_folder / "t.csv")

    def broken(*args, **kwargs):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(pd.DataFrame, "to_csv", broken)
    with pytest.raises(BackboneError, match="could not be written"):
        write_table(frame, tmp_path / "t.csv")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["file"]


def test_write_table_unknown_extension(frame, tmp_path):
    with pytest.raises(BackboneError, match=r"\.csv.*\.json"):
        write_table(frame, tmp_path / "t.xlsx")
    assert not list(tmp_path.iterdir())


# --- parse_grid --------------------------------------------------------------------------------------------


def test_parse_grid_forms():
    # start:stop:count includes both ends, as numpy's linspace; log: geometric spacing (ratio constant).
    assert_allclose(parse_grid("5:50:10"), 5.0 + 5.0 * np.arange(10), rtol=1e-12)
    g = parse_grid("log:1:100:5")
    assert_allclose(g, [1.0, 10 ** 0.5, 10.0, 10 ** 1.5, 100.0], rtol=1e-12)
    assert_allclose(parse_grid("600, 800,900"), [600.0, 800.0, 900.0])
    assert_allclose(parse_grid("12.5"), [12.5])
    assert_allclose(parse_grid("7:7:1"), [7.0])


@pytest.mark.parametrize(
    "spec, match",
    [
        ("", "give a grid"),
        ("5:50", "start:stop:count"),
        ("log:1:100", "log:start:stop:count"),
        ("5:x:10", "'x'.*not a number"),
        ("5:50:ten", "not a whole number"),
        ("5:50:0", "at least 1"),
        ("5:5:3", "equal"),
        ("log:0:100:5", "> 0"),
        ("600,,800", "empty entry"),
        ("600,abc", "not a number"),
        ("nan", "finite"),
    ],
)
def test_parse_grid_errors(spec, match):
    with pytest.raises(BackboneError, match=match) as info:
        parse_grid(spec, option="--tau-c")
    assert "--tau-c" in str(info.value)


def test_parse_grid_range_check():
    with pytest.raises(BackboneError, match="--tau-c.*outside"):
        parse_grid("0.01:10:3", option="--tau-c", rng=TAU_C_NS)
