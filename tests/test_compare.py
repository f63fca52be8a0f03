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
    sensitivity_per_root_time,
)
from backbone.errors import BackboneError
from backbone.experiments import load_experiment
from backbone.labeling import load_scheme
from backbone.plan import plan
from backbone.relaxation import relaxation_rates
from backbone.scenario import Candidates, Goals, Protein, Sample, Scenario, Spectrometer

GRID = np.geomspace(1.0, 60.0, 26)
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
    # "Pays off" = twice the S/N per square root of measurement time with each sample's optimal recycle (the
    # documented planning margin for the sample's cost); the window asserted is wide (5-30 ns) because the
    # rule of thumb is.
    x = comparison.crossover("deuteration", "HNCA", 800.0)
    assert x.gain == DEUTERATION_GAIN.value == 2.0
    assert x.tau_c_ns is not None, x.reason
    assert 5.0 < x.tau_c_ns < 30.0


def test_cbeta_experiments_need_deuteration_earlier():
    # Common practice: Cbeta experiments fail first as size grows, so deuteration pays off for them at a
    # smaller tau_c than for HNCA.
    c = compare_scenario(_scenario(experiments=("HNCA", "HNCACB")), tau_c_grid_ns=GRID[::2], fields_mhz=[800.0])
    hncacb = c.crossover("deuteration", "HNCACB", 800.0)
    hnca = c.crossover("deuteration", "HNCA", 800.0)
    assert hncacb.tau_c_ns is not None and hncacb.tau_c_ns < hnca.tau_c_ns


def _inline_per_root_time(tau_c_ns, field_mhz, labeling, experiment, trosy=False):
    """S/N per sqrt(time), written out from plan() and relaxation_rates() (not from backbone.compare)."""
    e = plan(tau_c_ns=tau_c_ns, field_mhz=field_mhz, labeling=labeling, experiments=[experiment], trosy=trosy).experiments[0]
    r1 = float(relaxation_rates(tau_c_ns * 1e-9, proton_mhz=field_mhz, labeling=load_scheme(labeling)).nuclei["H"]["R1_recovery"])
    t_acq = float(e.steps[-1].delay_s)  # the detect step lasts the acquisition time
    # Every period of the sequence at its optimized length; a shift evolved inside a coupling period
    # (semi-constant time, the model's `within`) adds only its excess over that period.
    model = load_experiment(experiment)
    length = {s.name: float(s.delay_s) for s in e.steps}
    t_seq = sum(
        max(0.0, length[m.name] - length[m.within]) if m.within else length[m.name] for m in model.steps[:-1]
    )
    # Optimal recovery time with 90 deg pulses: 1.26 T1 (Ernst & Anderson, Rev. Sci. Instrum. 37, 93, 1966,
    # from memory), of which the acquisition is part.
    t_rec = max(1.2564 / r1 - t_acq, 0.0)
    # Steady-state magnetization with 90 deg pulses: 1 - exp(-R1 t_r) (Ernst, Bodenhausen & Wokaun 1987, ch. 4);
    # S/N grows with the square root of time, so per scan it is weighed by 1/sqrt(t_scan); sqrt(t_acq) is the
    # acquisition's part of the S/N (the same for every labeling of one experiment).
    steady = 1.0 - np.exp(-r1 * (t_rec + t_acq))
    return abs(float(e.objective_value)) * steady * np.sqrt(t_acq / (t_rec + t_acq + t_seq)), t_rec, r1


@pytest.mark.parametrize("labeling", ["13c15n", "2h13c15n"])
@pytest.mark.parametrize("field", FIELDS)
def test_sensitivity_per_root_time_recomputed_inline(comparison, labeling, field):
    value, t_rec, r1 = _inline_per_root_time(18.0, field, labeling, "HNCA")
    reference, _, _ = _inline_per_root_time(18.0, field, "13c15n", "HSQC")  # normalization: protonated HSQC
    (row,) = [r for r in comparison.rows if r.labeling == labeling and r.field_mhz == field]
    assert_allclose(row.sensitivity_per_root_time, value / reference, rtol=1e-9)
    assert_allclose(row.recycle_s, t_rec, rtol=1e-12)
    assert_allclose(row.r1_recovery, r1, rtol=1e-12)
    # The same quantity on the crossover grid, at a grid point.
    tau = float(GRID[13])
    frame = comparison.curves
    sel = frame[(frame["labeling"] == labeling) & (frame["field_mhz"] == field) & ~frame["trosy"] & (frame["tau_c_ns"] == tau)]
    value, _, _ = _inline_per_root_time(tau, field, labeling, "HNCA")
    reference, _, _ = _inline_per_root_time(tau, field, "13c15n", "HSQC")
    assert_allclose(sel["sensitivity_per_root_time"].item(), value / reference, rtol=1e-9)


def test_perdeuterated_amide_protons_recover_more_slowly(comparison):
    # Perdeuteration removes the methyl and aliphatic protons that relax the amide protons by spin diffusion,
    # so amide-1H T1 is longer and the optimal recycle delay too (Kalk & Berendsen, J. Magn. Reson. 24, 343,
    # 1976, from memory; common practice). TROSY and plain share the sample: the same recycle.
    f = comparison.curves
    prot = f[(f["labeling"] == "13c15n") & ~f["trosy"]]
    deut = f[(f["labeling"] == "2h13c15n") & ~f["trosy"]]
    trosy = f[(f["labeling"] == "2h13c15n") & f["trosy"]]
    assert np.all(deut["recycle_s"].to_numpy() > prot["recycle_s"].to_numpy())
    assert_allclose(trosy["recycle_s"].to_numpy(), deut["recycle_s"].to_numpy(), rtol=0)


def test_a_margin_moves_the_deuteration_crossover_up(comparison):
    # The documented margin (2 in S/N per sqrt(time)) lies above the break-even (gain 1): a margin can only push
    # the crossover to larger tau_c.
    f = comparison.curves
    x = np.unique(f["tau_c_ns"])

    def curve(lab):
        sel = f[(f["labeling"] == lab) & ~f["trosy"] & (f["field_mhz"] == 800.0)]
        return sel["sensitivity_per_root_time"].to_numpy()

    at_1, _ = find_crossover(x, curve("2h13c15n"), curve("13c15n"))
    at_margin, _ = find_crossover(x, curve("2h13c15n"), curve("13c15n"), gain=2.0)
    assert_allclose(at_margin, comparison.crossover("deuteration", "HNCA", 800.0).tau_c_ns, rtol=1e-12)
    assert at_margin > at_1


def test_sensitivity_per_root_time_errors():
    with pytest.raises(BackboneError, match="sequence_s"):
        sensitivity_per_root_time(0.1, 1.0, acquisition_s=0.08, sequence_s=-0.01)
    with pytest.raises(BackboneError, match="r1"):
        sensitivity_per_root_time(0.1, 0.0, acquisition_s=0.08)


@pytest.mark.parametrize("field", FIELDS)
def test_trosy_pays_off_for_the_perdeuterated_sample_at_high_field(comparison, field):
    # Pervushin, Riek, Wider & Wuthrich, PNAS 94, 12366 (1997): TROSY gains for large perdeuterated proteins
    # at 750 MHz and above; assert that it pays off below 50 ns at 800-900 MHz. Per sqrt(time), as the
    # deuteration crossover; the recycle is the same for both versions (one sample) and cancels.
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
        assert r.sensitivity_per_root_time > 0.0 and r.recycle_s > 0.0
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
    assert set(comparison.to_frame().columns) >= {
        "labeling", "experiment", "field_mhz", "relative_sensitivity", "sensitivity_per_root_time", "recycle_s"
    }
    assert "sensitivity_per_root_time" in comparison.curves.columns
    assert len(comparison.to_frame("crossovers")) == 2 * len(FIELDS)
    text = comparison_table(comparison)
    assert "HNCA" in text and "2h13c15n" in text and "deuteration ns" in text and "per sqrt(t)" in text
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
