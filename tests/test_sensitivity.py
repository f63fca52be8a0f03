"""S/N scaling, sampling cost and measurement time, checked against textbook laws recomputed inline."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy.optimize import minimize_scalar
from scipy.stats import cauchy

from backbone import sensitivity as sens
from backbone.constants import Constant
from backbone.errors import BackboneError
from backbone.sensitivity import (
    Acquisition,
    IndirectDimension,
    duty_cycle_warning,
    ernst_angle,
    high_power_duty_cycle,
    increments_for,
    measurement_time,
    minimum_time,
    probe_factor,
    recycle_delay,
    scale_signal_to_noise,
    spectral_width_hz,
    steady_state_factor,
    time_to_target,
)

# Frequency ratios of Markley, Bax, Arata, Hilbers, Kaptein, Sykes, Wright & Wüthrich, Pure Appl. Chem. 70, 117
# (1998), Table 2, typed here from the paper: 15N (liquid NH3) and 13C (DSS) to 1H of DSS.
XI_15N = 0.101329118
XI_13C = 0.251449530


def _matched(rate, t):
    # Matched-filter S/N factor of e^(-Rt) sampled to t against a non-decaying signal:
    # sqrt((1 - e^(-2Rt))/(2Rt)) (Ernst, Bodenhausen & Wokaun, Principles of NMR in One and Two Dimensions,
    # 1987, ch. 4, from memory).
    x = 2.0 * rate * t
    return math.sqrt(-math.expm1(-x) / x) if x > 0 else 1.0


# ---------------------------------------------------------------------------------------------------------
# Scaling laws
# ---------------------------------------------------------------------------------------------------------


@pytest.mark.parametrize("mhz, mhz_ref", [(900.0, 600.0), (600.0, 800.0), (1200.0, 500.0)])
def test_signal_to_noise_grows_as_b0_to_the_three_halves(mhz, mhz_ref):
    # S/N proportional to B0^(3/2) at fixed linewidth (Ernst, Bodenhausen & Wokaun 1987, ch. 4).
    assert_allclose(scale_signal_to_noise(20.0, field_ratio=mhz / mhz_ref), 20.0 * (mhz / mhz_ref) ** 1.5, rtol=1e-12)
    # No field ratio: the calibration was measured at this field.
    assert scale_signal_to_noise(20.0) == 20.0


@pytest.mark.parametrize("time_ratio", [0.25, 2.0, 9.0, 100.0])
def test_signal_to_noise_grows_as_root_time(time_ratio):
    # S/N proportional to sqrt(measurement time) (Ernst, Bodenhausen & Wokaun 1987, ch. 4).
    assert_allclose(scale_signal_to_noise(12.0, time_ratio=time_ratio), 12.0 * math.sqrt(time_ratio), rtol=1e-12)


def test_doubling_concentration_quarters_the_time():
    # S/N proportional to the number of molecules and to sqrt(t), so twice the concentration reaches the same
    # S/N in a quarter of the time (Ernst, Bodenhausen & Wokaun 1987).
    sn, t, target = 15.0, 1800.0, 40.0
    sn2 = scale_signal_to_noise(sn, concentration_ratio=2.0)
    assert_allclose(time_to_target(sn2, t, target), t * (target / sn) ** 2 / 4.0, rtol=1e-12)


def test_peak_height_is_inversely_proportional_to_linewidth():
    # A Lorentzian of unit integral and full width w has height 1/(pi w/2) (the Cauchy density at its centre,
    # scipy.stats.cauchy with scale = half width); at fixed noise the S/N of the height follows it.
    w = 8.0
    ratio = cauchy.pdf(0.0, scale=2 * w / 2) / cauchy.pdf(0.0, scale=w / 2)
    assert_allclose(scale_signal_to_noise(30.0, linewidth_ratio=2.0), 30.0 * ratio, rtol=1e-12)


def test_time_to_target_is_the_square_law():
    # t_target = t (target/sn)^2 from S/N proportional to sqrt(t) (Ernst, Bodenhausen & Wokaun 1987).
    assert_allclose(time_to_target(10.0, 600.0, 30.0), 600.0 * 9.0, rtol=1e-12)
    got = time_to_target(np.array([5.0, 20.0]), 100.0, 10.0)
    assert_allclose(got, [400.0, 25.0], rtol=1e-12)


@settings(max_examples=60, deadline=None)
@given(st.floats(0.1, 1e4), st.floats(1.0, 1e6), st.floats(0.1, 1e4))
def test_scaling_by_the_time_to_target_reaches_the_target(sn, t, target):
    # Property of the sqrt(t) law: S/N after the predicted time equals the target.
    t_new = time_to_target(sn, t, target)
    assert_allclose(scale_signal_to_noise(sn, time_ratio=t_new / t), target, rtol=1e-9)


def test_cryogenic_probe_gain():
    # A cryogenic probe gives about 3-4x the S/N of a room-temperature probe at low salt (common practice).
    gain = probe_factor("cryogenic", "room-temperature")
    assert 3.0 <= gain <= 4.0
    assert_allclose(probe_factor("room-temperature", "cryogenic"), 1.0 / gain, rtol=1e-12)
    assert probe_factor("cryogenic", "cryogenic") == 1.0
    assert probe_factor("cryogenic", "room-temperature", cryogenic_gain=3.5) == 3.5


# ---------------------------------------------------------------------------------------------------------
# Spectral widths, increments, minimum time
# ---------------------------------------------------------------------------------------------------------


def test_spectral_width_15n_at_600():
    # 32 ppm of 15N at 600 MHz: 32e-6 * Xi(15N) * 600e6 Hz (Markley et al. 1998).
    assert_allclose(spectral_width_hz("N", 600.0, ppm=32.0), 32e-6 * XI_15N * 600e6, rtol=1e-12)
    assert_allclose(spectral_width_hz("CA", [600.0, 800.0], ppm=30.0), np.array([600e6, 800e6]) * 30e-6 * XI_13C)


def test_default_windows_are_the_usual_protein_windows():
    # Common practice: 15N about 30-35 ppm, 13CA about 30 ppm, 13C' 12-15 ppm, 13CA/CB 60-70 ppm.
    windows = {"N": (30, 35), "CA": (25, 35), "C": (12, 15), "CB": (60, 70)}
    for nucleus, (low, high) in windows.items():
        assert low <= sens.SPECTRAL_WIDTH_PPM[nucleus].value <= high
        assert sens.SPECTRAL_WIDTH_PPM[nucleus].reference


def test_increments_worked_case():
    # 15N, 32 ppm at 600 MHz, t_max 40 ms: ceil(0.040 s * 1945.52 Hz) = 78 complex points (inline arithmetic).
    sw = 32e-6 * XI_15N * 600e6
    assert increments_for(0.040, sw) == math.ceil(0.040 * sw) == 78
    # t_max = 1/resolution: 25 Hz resolution is the same 40 ms.
    assert increments_for(1 / 25.0, sw) == 78
    # A whole-number product is not rounded up by floating-point error; t_max 0 is the single first point.
    assert increments_for(0.05, 2000.0) == 100
    assert increments_for(0.0, 2000.0) == 1
    assert_allclose(increments_for(np.array([0.01, 0.02]), 1000.0), [10, 20])


def test_minimum_time_worked_cases():
    # Inline arithmetic: increments x quadrature (2 per indirect dimension) x minimal cycle x (recycle + acq).
    # 2D 15N HSQC, 78 points, 2 scans, 1.0 s + 0.1 s: 78 * 2 * 2 * 1.1 s.
    assert_allclose(minimum_time([78], recycle_s=1.0, acquisition_s=0.1, scans_min=2), 78 * 2 * 2 * 1.1, rtol=1e-12)
    # 3D HNCA at 600 MHz: CA 30 ppm to 8 ms, N 32 ppm to 20 ms.
    n_ca = math.ceil(0.008 * 30e-6 * XI_13C * 600e6)
    n_n = math.ceil(0.020 * 32e-6 * XI_15N * 600e6)
    assert (n_ca, n_n) == (37, 39)
    expect = (n_ca * 2) * (n_n * 2) * 2 * (1.0 + 0.1)
    got = minimum_time([n_ca, n_n], recycle_s=1.0, acquisition_s=0.1, scans_min=2)
    assert_allclose(got, expect, rtol=1e-12)
    # The pulse sequence's own duration adds to every scan; a phase-cycled experiment needs 4 scans.
    got = minimum_time([n_ca, n_n], recycle_s=1.0, acquisition_s=0.1, sequence_s=0.05, scans_min=4)
    assert_allclose(got, (n_ca * 2) * (n_n * 2) * 4 * 1.15, rtol=1e-12)
    # A 1D experiment: the cycle alone.
    assert_allclose(minimum_time([], recycle_s=1.0, acquisition_s=0.1, scans_min=8), 8 * 1.1, rtol=1e-12)


@pytest.mark.parametrize("dims", [1, 2, 3])
def test_quadrature_doubles_each_indirect_dimension(dims):
    # States quadrature records a cosine and a sine data set per increment: two FIDs per indirect dimension
    # (States, Haberkorn & Ruben, J. Magn. Reson. 48, 286, 1982, from memory).
    n = [40] * dims
    real = minimum_time(n, recycle_s=1.0, acquisition_s=0.1, quadrature_factor=1)
    states = minimum_time(n, recycle_s=1.0, acquisition_s=0.1)
    assert_allclose(states / real, 2.0**dims, rtol=1e-12)
    assert sens.QUADRATURE_FACTOR.value == 2.0
    if dims == 2:
        mixed = minimum_time(n, recycle_s=1.0, acquisition_s=0.1, quadrature_factor=[2, 1])
        assert_allclose(mixed / real, 2.0, rtol=1e-12)


def test_minimum_time_broadcasts_over_increments_and_scan_times():
    got = minimum_time([np.array([10, 20])], recycle_s=np.array([[1.0], [2.0]]), acquisition_s=0.1, scans_min=1)
    assert_allclose(got, np.array([[10, 20], [10, 20]]) * 2 * np.array([[1.1], [2.1]]), rtol=1e-12)


# ---------------------------------------------------------------------------------------------------------
# Recycle delay and steady state
# ---------------------------------------------------------------------------------------------------------


@pytest.mark.parametrize("r1", [0.5, 1.3, 4.0])
def test_optimum_recycle_is_1_256_t1(r1):
    # S/N per sqrt(time) with 90 degree pulses, (1 - e^(-t/T1))/sqrt(t), is largest at t = 1.256 T1
    # (Ernst & Anderson, Rev. Sci. Instrum. 37, 93, 1966, from memory). Found numerically here.
    t1 = 1.0 / r1
    res = minimize_scalar(
        lambda t: -(1 - math.exp(-t / t1)) / math.sqrt(t), bounds=(0.01 * t1, 10 * t1), method="bounded",
        options={"xatol": 1e-10},
    )
    assert_allclose(res.x / t1, 1.256, atol=1e-3)
    assert_allclose(recycle_delay(r1), res.x, rtol=1e-4)
    # The recovery time includes the acquisition: recycle delay + acquisition is the optimum.
    assert_allclose(recycle_delay(r1, acquisition_s=0.1) + 0.1, res.x, rtol=1e-4)
    # When the acquisition alone is longer, no delay.
    assert recycle_delay(r1, acquisition_s=10 * t1) == 0.0


def test_acquisition_sensitivity_peaks_at_the_optimum_recovery():
    # The S/N per sqrt(time) of a recorded experiment (steady state x sqrt(t_acq/t_scan)) is largest when the
    # recovery time is 1.256 T1 (Ernst & Anderson 1966, from memory).
    r1, acq = 1.5, 0.05
    res = minimize_scalar(
        lambda d: -float(Acquisition(acq, d, recovery_rate=r1).sensitivity_factor),
        bounds=(0.0, 5.0), method="bounded", options={"xatol": 1e-10},
    )
    assert_allclose((res.x + acq) * r1, 1.256, atol=1e-3)


def test_steady_state_factor_matches_the_ernst_anderson_formula():
    # Steady-state signal (1 - E1) sin(a)/(1 - E1 cos(a)), E1 = exp(-R1 t_r); 1 - E1 at 90 degrees
    # (Ernst & Anderson 1966, from memory).
    r1, rec, acq = 1.7, 0.9, 0.1
    e1 = math.exp(-r1 * (rec + acq))
    assert_allclose(steady_state_factor(rec, acq, r1), 1 - e1, rtol=1e-12)
    for a in (5.0, 30.0, 60.0, 120.0, 180.0):
        ar = math.radians(a)
        expect = (1 - e1) * math.sin(ar) / (1 - e1 * math.cos(ar))
        assert_allclose(steady_state_factor(rec, acq, r1, flip_deg=a), expect, rtol=1e-10, atol=1e-15)


def test_ernst_angle_maximizes_the_steady_state_signal():
    # cos(a_E) = E1 (Ernst & Anderson 1966, from memory); here the inline formula is maximized numerically.
    r1, rec, acq = 2.0, 0.2, 0.05
    e1 = math.exp(-r1 * (rec + acq))
    res = minimize_scalar(
        lambda a: -(1 - e1) * math.sin(a) / (1 - e1 * math.cos(a)), bounds=(1e-3, math.pi), method="bounded",
        options={"xatol": 1e-12},
    )
    assert_allclose(ernst_angle(rec, acq, r1), math.degrees(res.x), rtol=1e-5)


# ---------------------------------------------------------------------------------------------------------
# Measurement time
# ---------------------------------------------------------------------------------------------------------


def _hsqc(rate_n=8.0, r2_h=25.0):
    return Acquisition(
        0.1, 1.0, [IndirectDimension(0.05, 2000.0, rate=rate_n)], detection_rate=r2_h, recovery_rate=1.5
    )


def test_repeating_the_calibration_takes_the_calibration_time():
    # Same experiment, same sample: the calibration S/N is reached in the calibration time (sqrt(t) law).
    cal = _hsqc()
    got = measurement_time(40.0, 1200.0, 40.0, cal, cal)
    assert_allclose(got.sensitivity_time_s, 1200.0, rtol=1e-12)
    assert got.limited_by == "sensitivity"
    assert got.time_s == got.sensitivity_time_s
    assert_allclose(got.signal_to_noise, 40.0, rtol=1e-12)
    # Twice the concentration: a quarter of the time (Ernst, Bodenhausen & Wokaun 1987).
    got = measurement_time(40.0, 1200.0, 40.0, cal, cal, concentration_ratio=2.0)
    assert_allclose(got.sensitivity_time_s, 300.0, rtol=1e-12)


def test_sampling_limits_a_strong_sample():
    # A strong calibration needs less time for the S/N than the increments need: the minimum time is reported
    # (inline arithmetic: 100 increments x 2 (States) x 2 scans x 1.1 s) and the S/N then exceeds the target.
    cal = _hsqc()
    got = measurement_time(500.0, 60.0, 10.0, cal, cal)
    assert increments_for(0.05, 2000.0) == 100
    assert_allclose(got.minimum_time_s, 100 * 2 * 2 * 1.1, rtol=1e-12)
    assert got.limited_by == "sampling"
    assert got.time_s == got.minimum_time_s
    assert_allclose(got.signal_to_noise, 500.0 * math.sqrt(got.time_s / 60.0), rtol=1e-12)
    assert got.signal_to_noise > 10.0


def test_measurement_time_over_a_grid_is_the_model_recomputed_inline():
    # 3D experiment against a 2D HSQC calibration, over a grid of throughput ratios and fields. The expected
    # time is rebuilt from the textbook factors: sqrt(t) and concentration (Ernst, Bodenhausen & Wokaun 1987),
    # B0^(3/2), matched-filter sampling factors, steady state 1 - exp(-R1 t_r) (Ernst & Anderson 1966),
    # sqrt(t_acq/t_scan) duty of acquisition.
    r1, rec, acq = 1.5, 1.0, 0.1
    cal = Acquisition(acq, rec, [IndirectDimension(0.05, 2000.0, rate=8.0)], detection_rate=25.0, recovery_rate=r1)
    dims = [IndirectDimension(0.008, 4500.0, rate=40.0), IndirectDimension(0.02, 2000.0, rate=10.0)]
    exp3d = Acquisition(acq, rec, dims, detection_rate=30.0, recovery_rate=r1, sequence_s=0.06)
    throughput = np.array([0.5, 0.2, 0.05])
    field = np.array([[1.0], [800 / 600]])
    got = measurement_time(
        60.0, 600.0, 15.0, exp3d, cal, concentration_ratio=0.5, throughput_ratio=throughput, field_ratio=field,
        probe_ratio=1.0,
    )
    q_cal = _matched(8.0, 0.05) * _matched(25.0, acq) * (1 - math.exp(-r1 * (rec + acq))) * math.sqrt(acq / (rec + acq))
    q_exp = (
        _matched(40.0, 0.008) * _matched(10.0, 0.02) * _matched(30.0, acq)
        * (1 - math.exp(-r1 * (rec + acq))) * math.sqrt(acq / (rec + acq + 0.06))
    )
    per_root = 60.0 / math.sqrt(600.0) * 0.5 * throughput * field**1.5 * q_exp / q_cal
    assert_allclose(got.sn_per_root_s, per_root, rtol=1e-10)
    assert_allclose(got.sensitivity_time_s, (15.0 / per_root) ** 2, rtol=1e-10)
    t_min = (math.ceil(0.008 * 4500.0) * 2) * (math.ceil(0.02 * 2000.0) * 2) * 2 * (rec + acq + 0.06)
    assert_allclose(got.minimum_time_s, np.full((2, 3), t_min), rtol=1e-12)
    assert_allclose(got.time_s, np.maximum((15.0 / per_root) ** 2, t_min), rtol=1e-10)
    expect_limit = np.where((15.0 / per_root) ** 2 >= t_min, "sensitivity", "sampling")
    assert (got.limited_by == expect_limit).all()
    assert {"sensitivity", "sampling"} == set(got.limited_by.ravel())
    assert got.increments == (36, 40)
    assert set(got.factors) == {"concentration", "throughput", "field", "probe", "acquisition"}
    data = got.as_dict()
    assert np.shape(data["time_s"]) == (2, 3) and data["increments"] == [36, 40]


def test_constant_time_dimension_costs_its_fixed_decay():
    # A constant-time period of length T decays by e^(-RT) whatever t1, and a passive coupling evolves as
    # cos(pi J T) (Vuister & Bax, J. Magn. Reson. 98, 428, 1992, from memory); an inverted peak keeps its S/N.
    rate, t_ct, t_max, j = 20.0, 0.028, 0.012, 35.0
    ct = IndirectDimension(t_max, 4500.0, rate=rate, constant_time_s=t_ct, passive_hz=(j,))
    expect = math.exp(-rate * t_ct) * abs(math.cos(math.pi * j * t_ct))
    assert_allclose(ct.sampling_factor, expect, rtol=1e-12)
    real = IndirectDimension(t_max, 4500.0, rate=rate)
    assert_allclose(real.sampling_factor, _matched(rate, t_max), rtol=1e-12)


# ---------------------------------------------------------------------------------------------------------
# Duty cycle
# ---------------------------------------------------------------------------------------------------------


def test_duty_cycle_and_warning():
    # Duty cycle = high-power time per scan over scan time (inline arithmetic). The default limit lies in the
    # 10-20 % kept for cryogenic probes (common practice).
    assert_allclose(high_power_duty_cycle(0.06, 1.2), 0.05, rtol=1e-12)
    assert_allclose(high_power_duty_cycle([0.06, 0.24], 1.2), [0.05, 0.2], rtol=1e-12)
    assert 0.10 <= sens.DEFAULT_DUTY_LIMIT.value <= 0.20
    assert duty_cycle_warning(0.05) is None
    message = duty_cycle_warning(np.array([0.05, 0.15]))
    assert "15.0%" in message and "facility" in message and "probe maker" in message
    assert duty_cycle_warning(0.15, limit=0.2) is None


# ---------------------------------------------------------------------------------------------------------
# Error paths
# ---------------------------------------------------------------------------------------------------------


ERRORS = {
    "zero sn": lambda: time_to_target(0.0, 10.0, 5.0),
    "negative time": lambda: time_to_target(5.0, -1.0, 5.0),
    "zero target": lambda: time_to_target(5.0, 1.0, 0.0),
    "non-numeric sn": lambda: time_to_target("lots", 1.0, 5.0),
    "infinite time": lambda: time_to_target(5.0, math.inf, 5.0),
    "zero sn_ref": lambda: scale_signal_to_noise(0.0),
    "negative concentration": lambda: scale_signal_to_noise(10.0, concentration_ratio=-1.0),
    "zero throughput": lambda: scale_signal_to_noise(10.0, throughput_ratio=0.0),
    "zero field ratio": lambda: scale_signal_to_noise(10.0, field_ratio=0.0),
    "zero probe ratio": lambda: scale_signal_to_noise(10.0, probe_ratio=0.0),
    "zero linewidth": lambda: scale_signal_to_noise(10.0, linewidth_ratio=0.0),
    "negative time ratio": lambda: scale_signal_to_noise(10.0, time_ratio=-2.0),
    "unknown probe": lambda: probe_factor("cold", "room-temperature"),
    "unknown reference probe": lambda: probe_factor("cryogenic", "warm"),
    "zero probe gain": lambda: probe_factor("cryogenic", "room-temperature", cryogenic_gain=0.0),
    "unknown nucleus": lambda: spectral_width_hz("HA", 600.0),
    "field out of range": lambda: spectral_width_hz("N", 50.0),
    "negative ppm": lambda: spectral_width_hz("N", 600.0, ppm=-3.0),
    "negative t_max": lambda: increments_for(-0.01, 2000.0),
    "zero spectral width": lambda: increments_for(0.01, 0.0),
    "increments not a sequence": lambda: minimum_time(78, recycle_s=1.0, acquisition_s=0.1),
    "fractional increments": lambda: minimum_time([7.5], recycle_s=1.0, acquisition_s=0.1),
    "zero increments": lambda: minimum_time([0], recycle_s=1.0, acquisition_s=0.1),
    "zero scans": lambda: minimum_time([10], recycle_s=1.0, acquisition_s=0.1, scans_min=0),
    "fractional scans": lambda: minimum_time([10], recycle_s=1.0, acquisition_s=0.1, scans_min=1.5),
    "zero quadrature": lambda: minimum_time([10], recycle_s=1.0, acquisition_s=0.1, quadrature_factor=0),
    "quadrature per dimension mismatch": lambda: minimum_time(
        [10, 10], recycle_s=1.0, acquisition_s=0.1, quadrature_factor=[2]
    ),
    "negative recycle": lambda: minimum_time([10], recycle_s=-1.0, acquisition_s=0.1),
    "zero acquisition": lambda: minimum_time([10], recycle_s=1.0, acquisition_s=0.0),
    "negative sequence": lambda: minimum_time([10], recycle_s=1.0, acquisition_s=0.1, sequence_s=-0.1),
    "zero r1 recycle": lambda: recycle_delay(0.0),
    "negative acquisition recycle": lambda: recycle_delay(1.0, acquisition_s=-0.1),
    "zero factor": lambda: recycle_delay(1.0, factor=0.0),
    "zero recovery time": lambda: steady_state_factor(0.0, 0.0, 1.0),
    "negative recycle steady": lambda: steady_state_factor(-1.0, 0.1, 1.0),
    "zero r1 steady": lambda: steady_state_factor(1.0, 0.1, 0.0),
    "zero flip": lambda: steady_state_factor(1.0, 0.1, 1.0, flip_deg=0.0),
    "flip above 180": lambda: steady_state_factor(1.0, 0.1, 1.0, flip_deg=200.0),
    "zero r1 ernst": lambda: ernst_angle(1.0, 0.1, 0.0),
    "dimension negative t_max": lambda: IndirectDimension(-0.01, 2000.0),
    "dimension zero width": lambda: IndirectDimension(0.01, 0.0),
    "dimension negative rate": lambda: IndirectDimension(0.01, 2000.0, rate=-1.0),
    "dimension t_max beyond constant time": lambda: IndirectDimension(0.03, 2000.0, constant_time_s=0.02),
    "dimension bad weighting": lambda: IndirectDimension(0.01, 2000.0, weighting="cosine"),
    "acquisition dimensions not a sequence": lambda: Acquisition(0.1, 1.0, IndirectDimension(0.01, 2000.0)),
    "acquisition dimension wrong type": lambda: Acquisition(0.1, 1.0, [(0.01, 2000.0)]),
    "acquisition zero time": lambda: Acquisition(0.0, 1.0),
    "acquisition negative recycle": lambda: Acquisition(0.1, -1.0),
    "acquisition negative detection rate": lambda: Acquisition(0.1, 1.0, detection_rate=-5.0),
    "acquisition zero recovery rate": lambda: Acquisition(0.1, 1.0, recovery_rate=0.0),
    "measurement zero calibration sn": lambda: measurement_time(0.0, 60.0, 10.0, _hsqc(), _hsqc()),
    "measurement negative calibration time": lambda: measurement_time(10.0, -60.0, 10.0, _hsqc(), _hsqc()),
    "measurement zero target": lambda: measurement_time(10.0, 60.0, 0.0, _hsqc(), _hsqc()),
    "measurement experiment wrong type": lambda: measurement_time(10.0, 60.0, 10.0, "HNCA", _hsqc()),
    "measurement calibration wrong type": lambda: measurement_time(10.0, 60.0, 10.0, _hsqc(), None),
    "measurement zero throughput": lambda: measurement_time(10.0, 60.0, 10.0, _hsqc(), _hsqc(), throughput_ratio=0.0),
    "measurement null constant-time factor": lambda: measurement_time(
        10.0, 60.0, 10.0,
        Acquisition(0.1, 1.0, [IndirectDimension(0.01, 2000.0, rate=1e5, constant_time_s=0.02)]),
        _hsqc(),
    ),
    "measurement null calibration factor": lambda: measurement_time(
        10.0, 60.0, 10.0, _hsqc(),
        Acquisition(0.1, 1.0, [IndirectDimension(0.01, 2000.0, rate=1e5, constant_time_s=0.02)]),
    ),
    "negative high-power time": lambda: high_power_duty_cycle(-0.1, 1.0),
    "zero scan time": lambda: high_power_duty_cycle(0.1, 0.0),
    "high power longer than scan": lambda: high_power_duty_cycle(2.0, 1.0),
    "duty above one": lambda: duty_cycle_warning(1.5),
    "negative duty": lambda: duty_cycle_warning(-0.1),
    "zero limit": lambda: duty_cycle_warning(0.1, limit=0.0),
    "limit above one": lambda: duty_cycle_warning(0.1, limit=1.5),
}


@pytest.mark.parametrize("case", list(ERRORS))
def test_error_paths_raise_backbone_error(case):
    with pytest.raises(BackboneError):
        ERRORS[case]()


def test_error_messages_name_the_entry():
    with pytest.raises(BackboneError, match="time_s must be > 0 s, got -1 s"):
        time_to_target(5.0, -1.0, 5.0)
    with pytest.raises(BackboneError, match=r"scans_min must be whole numbers >= 1, got 1.5"):
        minimum_time([10], recycle_s=1.0, acquisition_s=0.1, scans_min=1.5)
    with pytest.raises(BackboneError, match="'HA' has no spectral width; known are N, CA, C, CB"):
        spectral_width_hz("HA", 600.0)


def test_constants_carry_their_sources():
    for name in sens.__all__:
        obj = getattr(sens, name)
        if isinstance(obj, Constant):
            assert obj.reference and obj.unit
    # Ernst & Anderson 1966 (from memory): the optimum is the root of e^x = 1 + 2x.
    x = sens.OPTIMUM_RECOVERY_FACTOR.value
    assert_allclose(math.exp(x), 1 + 2 * x, rtol=1e-4)
