"""compare_scenario(): labeling x experiment x field table and the tau_c above which deuteration and TROSY pay off."""

from __future__ import annotations

import json

import numpy as np
import pytest
from numpy.testing import assert_allclose

from backbone.compare import (
    DEUTERATION_GAIN,
    Comparison,
    compare_scenario,
    comparison_table,
    find_crossover,
)
from backbone.errors import BackboneError
from backbone.scenario import Candidates, Goals, Protein, Sample, Scenario, Spectrometer

GRID = np.geomspace(2.0, 60.0, 24)
FIELDS = (800.0, 900.0)


def _scenario(experiments=("HNCA",), labeling=("13c15n", "2h13c15n"), tau_c_ns=18.0):
    # An invented protein for the planning question (demo data, not a check).
    return Scenario(
        protein=Protein(name="invented 30 kDa domain", mass_kda=30.0, tau_c_ns=tau_c_ns),
        sample=Sample(concentration_mm=0.5, temperature_k=298.15),
        spectrometer=Spectrometer(fields_mhz=FIELDS, probe="cryogenic"),
        candidates=Candidates(labeling=list(labeling), experiments=list(experiments), trosy=False),
        goals=Goals(target_signal_to_noise=10.0, time_budget_h=48.0),
    )


@pytest.fixture(scope="module")
def comparison() -> Comparison:
    return compare_scenario(_scenario(), tau_c_grid_ns=GRID)


def test_deuteration_crossover_for_hnca_at_800_mhz(comparison):
    # Broad common-practice check: perdeuteration pays off for HNCA-type experiments above about 25-30 kDa,
    # i.e. tau_c roughly 12-20 ns at 25 C with the rule of thumb of 0.5-0.6 ns per kDa (common practice).
    # "Pays off" here is a throughput gain of DEUTERATION_GAIN (module docstring), so only a wide window is
    # asserted: 5-30 ns.
    x = comparison.crossover("deuteration", "HNCA", 800.0)
    assert x.tau_c_ns is not None, x.reason
    assert 5.0 < x.tau_c_ns < 30.0
    assert x.gain == DEUTERATION_GAIN.value


@pytest.mark.parametrize("field", FIELDS)
def test_trosy_pays_off_for_the_perdeuterated_sample_at_high_field(comparison, field):
    # Pervushin, Riek, Wider & Wuthrich, PNAS 94, 12366 (1997): TROSY gains for large perdeuterated proteins
    # at 750 MHz and above; assert that it pays off below 50 ns at 800-900 MHz.
    x = comparison.crossover("trosy", "HNCA", field)
    assert x.tau_c_ns is not None, x.reason
    assert GRID[0] < x.tau_c_ns < 50.0


def test_table_rows(comparison):
    assert {(r.labeling, r.experiment, r.field_mhz) for r in comparison.rows} == {
        (lab, "HNCA", f) for lab in ("13c15n", "2h13c15n") for f in FIELDS
    }
    assert comparison.tau_c_ns == 18.0 and comparison.tau_c_source == "given"
    for r in comparison.rows:
        assert r.feasible and 0.0 < r.relative_sensitivity < 1.0 and r.trosy is False
        assert r.measurement_time_h is None  # no calibration in this scenario
    # The table at the scenario's tau_c lies on the crossover curves at the same point (same plan() physics).
    frame = comparison.curves
    for r in comparison.rows:
        sel = frame[(frame["labeling"] == r.scheme) & (frame["field_mhz"] == r.field_mhz) & ~frame["trosy"]]
        y = np.interp(np.log(18.0), np.log(sel["tau_c_ns"]), np.log(sel["objective_throughput"]))
        assert_allclose(np.exp(y), r.objective_throughput, rtol=0.05)


def test_as_dict_json_frames_and_text(comparison):
    d = json.loads(json.dumps(comparison.as_dict()))
    assert {"table", "crossovers", "tau_c_ns", "fields_mhz", "labelings", "experiments"} <= set(d)
    assert len(d["crossovers"]) == 2 * len(FIELDS)
    assert set(comparison.to_frame().columns) >= {"labeling", "experiment", "field_mhz", "relative_sensitivity"}
    assert len(comparison.to_frame("crossovers")) == 2 * len(FIELDS)
    text = comparison_table(comparison)
    assert "HNCA" in text and "2h13c15n" in text and "deuteration ns" in text
    with pytest.raises(BackboneError, match="kind"):
        comparison.to_frame("peaks")
    with pytest.raises(BackboneError, match="no 'trosy' crossover for 'HNCO'"):
        comparison.crossover("trosy", "HNCO", 800.0)


def test_no_crossover_has_a_reason():
    # The 2D TROSY has no plain version; the HSQC has no TROSY version.
    c = compare_scenario(_scenario(experiments=("HSQC",), labeling=("13c15n",)), tau_c_grid_ns=GRID[::4], fields_mhz=[800.0])
    x = c.crossover("trosy", "HSQC", 800.0)
    assert x.tau_c_ns is None and "no TROSY version" in x.reason


def test_find_crossover_against_exponentials():
    # a = exp(-k1 x), b = c exp(-k2 x): ln a - ln(gain b) = (k2 - k1) x - ln(c gain) is linear in x, so the
    # interpolated crossing is exact: x* = ln(c gain) / (k2 - k1).
    x = np.linspace(1.0, 40.0, 14)
    k1, k2 = np.array([0.1, 0.1]), np.array([0.3, 0.2])
    c, gain = 1.5, 2.0
    a = np.exp(-k1 * x[:, None])
    b = c * np.exp(-k2 * x[:, None])
    xc, status = find_crossover(x, a, b, gain=gain)
    assert_allclose(xc, np.log(c * gain) / (k2 - k1), rtol=1e-10)
    assert list(status) == ["crossing", "crossing"]
    # Ahead from the start, never ahead, nothing usable.
    xc, status = find_crossover(x, 2 * np.ones_like(x), np.ones_like(x))
    assert np.isnan(xc) and status == "ahead"
    xc, status = find_crossover(x, np.ones_like(x), 2 * np.ones_like(x))
    assert np.isnan(xc) and status == "behind"
    xc, status = find_crossover(x, np.zeros_like(x), np.ones_like(x))
    assert np.isnan(xc) and status == "invalid"


def test_find_crossover_errors():
    x = np.array([1.0, 2.0, 3.0])
    with pytest.raises(BackboneError, match="increasing"):
        find_crossover(x[::-1], x, x)
    with pytest.raises(BackboneError, match="gain"):
        find_crossover(x, x, x, gain=0.0)
    with pytest.raises(BackboneError, match="3 points"):
        find_crossover(x, np.ones(4), np.ones(4))


def test_compare_errors():
    s = _scenario()
    with pytest.raises(BackboneError, match="tau_c_grid_ns"):
        compare_scenario(s, tau_c_grid_ns=[10.0, 5.0])
    with pytest.raises(BackboneError, match="tau_c_grid_ns.*outside"):
        compare_scenario(s, tau_c_grid_ns=[10.0, 900.0])
    with pytest.raises(BackboneError, match="deuteration_gain"):
        compare_scenario(s, deuteration_gain=-1.0)
    with pytest.raises(BackboneError, match="experiments"):
        compare_scenario(s, experiments=[])
    with pytest.raises(BackboneError, match="fields_mhz"):
        compare_scenario(s, fields_mhz=[])
