"""Scenario planning: measurement times, limiting factor, TROSY choice, duty cycle and their error paths.

Checks are against textbook formulas written out here (Ernst, Bodenhausen & Wokaun 1987; States, Haberkorn &
Ruben 1982; Ernst & Anderson 1966; Markley et al. 1998) and facts of the trade, never against the planner's
own output.
"""

import dataclasses
import json
import math
from functools import lru_cache
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

from backbone.errors import BackboneError
from backbone.planning import SAFETY_CAUTION, ScenarioPlan, plan_scenario, scenario_plan_table
from backbone.scenario import Calibration, Candidates, Goals, LabelingChoice, load_scenario

SCENARIOS = Path(__file__).resolve().parents[1] / "scenarios"

# Markley et al., Pure Appl. Chem. 70, 117 (1998): frequency ratios to 1H of DSS (15N to liquid NH3).
XI_15N = 0.101329118
XI_13C = 0.251449530


@lru_cache(maxsize=None)
def _scenario(name):
    return load_scenario(SCENARIOS / f"{name}.toml")


#: Experiments planned per bundled scenario in these tests: every candidate where the plan is quick, a subset
#: of the mid-sized enzyme's (all its labelings, fields and the TROSY choice are kept) to keep the suite fast.
_EXPERIMENTS = {"hyd35-enzyme": ("HNCO", "HNCA")}


@lru_cache(maxsize=None)
def _plan(name):
    return plan_scenario(_scenario(name), experiments=_EXPERIMENTS.get(name))


def _fld9(**goals):
    """FLD9 with HNCA only (fast), goals replaced as given."""
    s = _scenario("fld9-domain")
    if goals:
        s = dataclasses.replace(s, goals=dataclasses.replace(s.goals, **goals))
    return s


# ---------------------------------------------------------------------------------------------------------
# Every bundled scenario plans
# ---------------------------------------------------------------------------------------------------------


@pytest.mark.parametrize("name", ["fld9-domain", "hyd35-enzyme", "asm80-complex"])
def test_every_bundled_scenario_plans(name):
    s = _scenario(name)
    p = _plan(name)
    assert isinstance(p, ScenarioPlan)
    n_exp = len(_EXPERIMENTS.get(name, s.candidates.experiments))
    n = len(s.candidates.labeling) * len(s.spectrometer.fields_mhz) * n_exp
    assert len(p.rows) == n
    for r in p.rows:
        if r.feasible:
            assert r.relative_sensitivity > 0 and math.isfinite(r.relative_sensitivity)
            assert r.limiting_peak in r.needed_peaks
            assert r.minimum_time_s > 0
            if p.has_times:
                assert r.time_s >= max(r.sensitivity_time_s, r.minimum_time_s) * (1 - 1e-12)
                assert r.limited_by in ("sensitivity", "sampling")
                assert r.signal_to_noise >= s.goals.target_signal_to_noise * (1 - 1e-9)
    data = p.as_dict()
    json.dumps(data)
    # The plan's contract keys are kept inside each row (ARCHITECTURE.md, `backbone plan --json`).
    for key in ("name", "trosy", "labeling", "field_mhz", "tau_c_ns", "relative_sensitivity", "feasible", "reason",
                "peaks", "steps"):
        assert key in data["experiments"][0]
    text = scenario_plan_table(p)
    assert SAFETY_CAUTION in text and s.protein.name in text
    frame = p.to_frame()
    assert len(frame) == n and {"time_h", "minimum_time_h", "recycle_s", "field_mhz", "tau_c_ns"} <= set(frame.columns)


def test_annotated_example_plans():
    p = plan_scenario(_scenario("example-annotated"), experiments=["HNCO"], fields=[600])
    assert p.tau_c_source.startswith("given") and math.isclose(p.tau_c_ns, 4.6)
    assert p.rows[0].time_s > 0


def test_tau_c_given_wins_and_estimate_otherwise():
    # asm80 gives tau_c = 38 ns: it is used as given. FLD9 gives none: estimated from the sequence's mass.
    assert math.isclose(_plan("asm80-complex").tau_c_ns, 38.0)
    p = _plan("fld9-domain")
    assert "estimated" in p.tau_c_source
    # A 9 kDa protein at 25 °C tumbles in a few ns (about 0.6 ns per kDa in water, common practice).
    assert 3.0 < p.tau_c_ns < 8.0


# ---------------------------------------------------------------------------------------------------------
# Time arithmetic
# ---------------------------------------------------------------------------------------------------------


def test_time_scales_with_target_squared_and_inverse_concentration_squared():
    # S/N ∝ c·√t (Ernst, Bodenhausen & Wokaun 1987, ch. 4): t ∝ (target S/N)² / c².
    base = plan_scenario(_fld9(), experiments=["HNCA"]).rows[0]
    twice_target = plan_scenario(_fld9(target_signal_to_noise=20), experiments=["HNCA"]).rows[0]
    s = _scenario("fld9-domain")
    twice_conc = dataclasses.replace(s, sample=dataclasses.replace(s.sample, concentration_mm=2.0))
    twice_c = plan_scenario(twice_conc, experiments=["HNCA"]).rows[0]
    assert_allclose(twice_target.sensitivity_time_s / base.sensitivity_time_s, 2.0**2, rtol=1e-9)
    assert_allclose(twice_c.sensitivity_time_s / base.sensitivity_time_s, 1.0 / 2.0**2, rtol=1e-9)


def test_minimum_time_is_increments_times_quadrature_times_scans_times_scan():
    # t_min = N_CA·N_N · 2^d (States, Haberkorn & Ruben 1982: cosine and sine FIDs per increment) · 2 scans
    # (gradient selection with a two-step cycle, common practice) · (recycle + acquisition).
    row = _plan("fld9-domain").get("HNCA")
    mhz, recycle, acq = 600.0, 1.2, 0.080  # scenario recycle_delay_s; HNCA model t_acq_ms = 80
    n_ca = math.ceil(round((1 / 120) * 30.0 * XI_13C * mhz, 9))  # CA: 120 Hz -> t_max 1/120 s; 30 ppm window
    n_n = math.ceil(round((1 / 40) * 32.0 * XI_15N * mhz, 9))  # N: 40 Hz; 32 ppm window
    assert sorted(row.increments) == sorted([n_ca, n_n])
    assert_allclose(row.minimum_time_s, n_ca * n_n * 2**2 * 2 * (recycle + acq), rtol=1e-12)
    assert row.limited_by == ("sampling" if row.minimum_time_s >= row.sensitivity_time_s else "sensitivity")


def test_recycle_from_amide_proton_recovery():
    # Without goals.recycle_delay_s: 1.26 T1 of the amide 1H recovery minus the acquisition (Ernst & Anderson,
    # Rev. Sci. Instrum. 37, 93, 1966, from memory: optimum recovery time 1.2564 T1 with 90° pulses).
    from backbone.relaxation import relaxation_rates

    p = _plan("hyd35-enzyme")
    row = p.get("HNCO", "13c15n", 800)
    rates = relaxation_rates(p.tau_c_ns * 1e-9, proton_mhz=800.0, labeling=row.labeling_choice.load())
    r1 = float(rates.nuclei["H"]["R1_recovery"])
    assert_allclose(row.recycle_s, 1.2564 / r1 - 0.080, rtol=1e-3)
    assert row.recycle_source.startswith("1.26 T1")


def test_field_and_concentration_factors_against_calibration():
    # hyd35 is calibrated at 800 MHz with 0.3 mM; the sample is 0.4 mM. Field factor (B0/B0_cal)^(3/2) at fixed
    # linewidth, only where the field differs (Ernst et al. 1987); concentration factor c/c_cal.
    p = _plan("hyd35-enzyme")
    at600 = p.get("HNCA", "13c15n", 600).time.factors
    at800 = p.get("HNCA", "13c15n", 800).time.factors
    assert_allclose(at600["field"], (600 / 800) ** 1.5, rtol=1e-12)
    assert_allclose(at800["field"], 1.0)
    assert_allclose(at800["concentration"], 0.4 / 0.3, rtol=1e-12)
    assert p.calibration.model == "TROSY"  # the HSQC recorded as TROSY is the 2D TROSY model


def test_auto_trosy_is_reported_and_wins_for_perdeuterated_protein_at_high_field():
    # TROSY gains most for perdeuterated proteins at high field (Pervushin, Riek, Wider & Wüthrich, PNAS 94,
    # 12366, 1997).
    row = _plan("hyd35-enzyme").get("HNCA", "2h13c15n", 950)
    assert row.trosy is True and row.trosy_choice.startswith("auto: TROSY")


def test_large_complex_cbeta_fails_first_and_perdeuteration_trosy_recovers_hnca():
    # Common practice: above about 25-30 kDa perdeuteration with TROSY makes the HNCA walk possible where the
    # protonated sample fails; Cbeta experiments fail first as size grows. Times to the target S/N are compared
    # as ratios, which do not depend on the calibration's numbers.
    s = _scenario("asm80-complex")
    cal = Calibration(experiment="HSQC", signal_to_noise=50, time_min=10, field_mhz=800, labeling="2h13c15n")
    s = dataclasses.replace(
        s,
        candidates=Candidates(labeling=["13c15n", "2h13c15n"], experiments=["HNCA", "HNCACB"], trosy="auto"),
        spectrometer=dataclasses.replace(s.spectrometer, calibration=cal),
    )
    p = plan_scenario(s, fields=[800])
    t = {(r.labeling, r.experiment): r.sensitivity_time_s for r in p.rows}
    assert t[("13c15n", "HNCACB")] > 10 * t[("13c15n", "HNCA")]  # Cbeta fails first
    assert t[("13c15n", "HNCA")] > 10 * t[("2h13c15n", "HNCA")]  # perdeuteration + TROSY recovers HNCA
    assert p.get("HNCA", "2h13c15n", 800).trosy


def test_cbeta_falls_behind_calpha_as_size_grows():
    # Common practice: the HNCACB-type transfer loses faster than the HNCA's as tau_c grows.
    from backbone.plan import plan

    tau = np.array([5.0, 15.0, 40.0])
    res = plan(tau_c_ns=tau, field_mhz=800.0, labeling="13c15n", experiments=["HNCA", "HNCACB"])
    ratio = np.asarray(res["HNCACB"].relative_sensitivity) / np.asarray(res["HNCA"].relative_sensitivity)
    assert np.all(np.diff(ratio) < 0)


def test_duty_cycle_counts_decoupled_periods_and_warns():
    # Counted (module docstring): periods under broadband 1H decoupling at their delays and the
    # semi-constant-time excess of an evolution inside such a period; not band-selective carbon pulses nor the
    # low-power 15N decoupling of the acquisition (common practice). Scan = recycle + sequence + acquisition.
    # HNCO (models/experiments/hnco.toml): N->C' and C'->N decouple 1J(N,H); the C' shift decouples carbons only.
    from backbone.sensitivity import duty_cycle_warning

    row = _plan("fld9-domain").get("HNCO")
    t_nc = row.plan.delays["T_NC"]
    t_n, acq = 1 / _scenario("fld9-domain").goals.resolution_hz["N"], 0.080  # N t_max from the scenario's resolution, acquisition 80 ms
    hp = 2 * t_nc + max(0.0, t_n - t_nc)  # N->C', C'->N, N excess
    assert_allclose(row.high_power_s, hp, rtol=1e-9)
    assert_allclose(row.duty_cycle, hp / (1.2 + row.sequence_s + acq), rtol=1e-9)
    assert row.duty_warning == duty_cycle_warning(row.duty_cycle, 0.10)


def test_without_calibration_no_absolute_times_and_says_so():
    p = _plan("asm80-complex")
    assert not p.has_times and p.calibration is None
    assert all(r.time is None and r.time_s is None and r.signal_to_noise is None for r in p.rows)
    assert any("cannot be computed" in n for n in p.notes)
    assert "cannot be computed" in scenario_plan_table(p)
    d = p.as_dict()
    assert d["calibration"] is None and all(e["time_s"] is None for e in d["experiments"])


def test_d2o_sample_has_no_amide_detected_experiments():
    s = _scenario("asm80-complex")
    s = dataclasses.replace(s, sample=dataclasses.replace(s.sample, solvent="D2O"))
    p = plan_scenario(s, experiments=["HNCO"], labelings=["2h13c15n"], fields=[800])
    assert not p.rows[0].feasible and "D2O" in p.rows[0].reason


# ---------------------------------------------------------------------------------------------------------
# Error paths
# ---------------------------------------------------------------------------------------------------------


def test_error_calibration_experiment_unknown():
    s = _scenario("fld9-domain")
    cal = dataclasses.replace(s.spectrometer.calibration, experiment="NOPE")
    s = dataclasses.replace(s, spectrometer=dataclasses.replace(s.spectrometer, calibration=cal))
    with pytest.raises(BackboneError, match="calibration.experiment = 'NOPE'"):
        plan_scenario(s, experiments=["HNCA"])


def test_error_calibration_trosy_without_counterpart(monkeypatch):
    import backbone.experiments as ex

    s = _scenario("hyd35-enzyme")
    monkeypatch.setattr(ex, "registered_experiments", lambda: {})
    with pytest.raises(BackboneError, match="no TROSY version"):
        plan_scenario(s, experiments=["HNCO"], labelings=["13c15n"], fields=[800])


def test_error_calibration_gives_no_signal():
    s = _scenario("fld9-domain")
    s = dataclasses.replace(s, sample=dataclasses.replace(s.sample, solvent="D2O"))
    with pytest.raises(BackboneError, match="gives no signal"):
        plan_scenario(s, experiments=["HNCA"])


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"experiments": ["HNXYZ"]}, "experiments\\[1\\] = 'HNXYZ'"),
        ({"experiments": []}, "non-empty list"),
        ({"experiments": ["HNCA", "hnca"]}, "repeats"),
        ({"labelings": ["13c99n"]}, "not a registered labeling scheme"),
        ({"labelings": "13c15n"}, "non-empty list"),
        ({"labelings": ["13c15n", "13c15n"]}, "repeats"),
        ({"fields": [50.0]}, "fields\\[1\\]"),
        ({"fields": ["600"]}, "not a number"),
        ({"fields": [600, 600]}, "repeats"),
        ({"fields": []}, "non-empty list"),
    ],
)
def test_error_bad_arguments(kwargs, match):
    with pytest.raises(BackboneError, match=match):
        plan_scenario(_scenario("fld9-domain"), **kwargs)


def test_error_not_a_scenario_and_not_a_plan():
    with pytest.raises(BackboneError, match="needs a Scenario"):
        plan_scenario("scenarios/fld9-domain.toml")
    with pytest.raises(BackboneError, match="needs a ScenarioPlan"):
        scenario_plan_table({})


def test_error_lookups_in_a_plan():
    p = _plan("hyd35-enzyme")
    with pytest.raises(BackboneError, match="not in this plan"):
        p.get("HNCO", "13c15n", 700)
    with pytest.raises(BackboneError, match="experiment 'TROSY' is not in this plan"):
        p.get("TROSY", "13c15n", 800)
    two = plan_scenario(
        _scenario("hyd35-enzyme"),
        experiments=["HNCO"],
        labelings=[LabelingChoice("2h13c15n", 0.7), LabelingChoice("2h13c15n", 0.9)],
        fields=[800],
    )
    with pytest.raises(BackboneError, match="ambiguous"):
        two.labeling_label("2h13c15n")  # a scheme id that names two labels
    with pytest.raises(BackboneError, match="is not in this plan"):
        p.labeling_label("15n")
    with pytest.raises(BackboneError, match="out of range"):
        p.labeling_label(7)
    assert p.labeling_label("2h13c15n") == "2h13c15n"  # the exact label wins over the scheme id


def test_error_tau_c_estimate_out_of_range():
    s = _scenario("fld9-domain")
    s = dataclasses.replace(s, goals=Goals(target_signal_to_noise=10, time_budget_h=10))
    from backbone.scenario import Protein

    huge = Protein(name="huge", mass_kda=1000.0)
    with pytest.raises(BackboneError, match="outside"):
        plan_scenario(dataclasses.replace(s, protein=huge), experiments=["HNCA"])
