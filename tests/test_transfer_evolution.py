"""Evolution periods, detection and the decoupled/TROSY rate rules, checked against their defining integrals
and published facts."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy.integrate import quad
from scipy.optimize import minimize_scalar

from backbone.errors import BackboneError
from backbone.transfer import (
    SENSITIVITY_ENHANCEMENT_GAIN,
    TROSY_COMPONENT_FRACTION,
    constant_time_factor,
    decoupled_rate,
    detection_factor,
    real_time_factor,
    semi_constant_time_factor,
    semi_constant_time_rate,
    trosy_selection,
)

CASES = [(0.0, 0.05), (5.0, 0.0), (12.0, 0.025), (40.0, 0.06), (400.0, 0.1), (1e-9, 0.01)]  # (R [s^-1], t_max [s])


@pytest.mark.parametrize("rate, t_max", CASES)
def test_matched_filter_factor_is_the_defining_integral(rate, t_max):
    # Matched-filter S/N of e^(-Rt) sampled to t_max, against a non-decaying signal:
    # sqrt((1/t_max) * integral_0^t_max e^(-2Rt) dt) (Ernst, Bodenhausen & Wokaun, Principles of NMR in One and
    # Two Dimensions, 1987, ch. 4, from memory). Evaluated here by numerical quadrature.
    expect = 1.0 if t_max == 0 else math.sqrt(quad(lambda t: math.exp(-2 * rate * t), 0, t_max)[0] / t_max)
    assert_allclose(real_time_factor(rate, t_max), expect, rtol=1e-10)
    assert_allclose(detection_factor(rate, t_max), expect, rtol=1e-10)


@pytest.mark.parametrize("rate, t_max", CASES)
def test_unweighted_factor_is_the_mean_signal(rate, t_max):
    # Mean of e^(-Rt) over the sampled window relative to its first point (Ernst et al. 1987).
    expect = 1.0 if t_max == 0 else quad(lambda t: math.exp(-rate * t), 0, t_max)[0] / t_max
    assert_allclose(real_time_factor(rate, t_max, weighting="none"), expect, rtol=1e-10)


def test_matched_filter_of_sampled_points():
    # Discrete matched filter: S/N = sqrt(sum e^(-2 R t_n))/sigma against sqrt(N)/sigma (Ernst et al. 1987);
    # the continuum factor is its limit for many points.
    rate, t_max, n = 25.0, 0.04, 20001
    t = np.linspace(0.0, t_max, n)
    signal = np.exp(-rate * t)
    snr_matched = np.sum(signal * signal) / np.sqrt(np.sum(signal * signal))
    assert_allclose(real_time_factor(rate, t_max), snr_matched / np.sqrt(n), rtol=1e-4)


def test_optimal_unweighted_sampling_time_is_1_26_t2():
    # Without weighting, S/N at a fixed time per point grows as (1 - e^(-x))/sqrt(x), x = t_max/T2, largest at
    # x = 1.256 (root of 2x e^(-x) = 1 - e^(-x); Rovnyak, Hoch, Stern & Wagner, J. Biomol. NMR 30, 1, 2004,
    # from memory: "1.26 T2").
    rate = 30.0
    res = minimize_scalar(
        lambda tm: -real_time_factor(rate, tm, weighting="none") * math.sqrt(tm),
        bounds=(1e-4, 0.2),
        method="bounded",
        options={"xatol": 1e-10},
    )
    assert_allclose(res.x * rate, 1.2564, atol=2e-4)


@settings(max_examples=100, deadline=None)
@given(st.floats(0.0, 1e3), st.floats(0.0, 1.0))
def test_matched_filter_beats_no_weighting(rate, t_max):
    # Cauchy-Schwarz: the matched filter is the best linear weighting; both factors lie in (0, 1].
    m = real_time_factor(rate, t_max)
    u = real_time_factor(rate, t_max, weighting="none")
    assert 0.0 < u <= m * (1 + 1e-12) <= 1.0 + 1e-12


def test_broadcast_shape():
    r = np.array([1.0, 10.0, 30.0])[:, None]
    tm = np.array([0.01, 0.05])[None, :]
    assert real_time_factor(r, tm).shape == (3, 2)
    assert semi_constant_time_factor(r, tm, 0.02).shape == (3, 2)


def test_constant_time_factor():
    # Constant time: e^(-RT) and a cos(pi J T) per coupling that evolves over T; T = 1/J inverts the sign
    # (Vuister & Bax, J. Magn. Reson. 98, 428, 1992, from memory).
    T = np.array([0.0, 0.0133, 0.0266, 1.0 / 35.0])
    assert_allclose(constant_time_factor(T, 25.0), np.exp(-25.0 * T), rtol=1e-14)
    assert_allclose(
        constant_time_factor(T, 25.0, passive_hz=(35.0,)), np.exp(-25.0 * T) * np.cos(np.pi * 35.0 * T), atol=1e-15
    )
    assert_allclose(constant_time_factor(1.0 / 35.0, 0.0, passive_hz=(35.0,)), -1.0, rtol=1e-14)
    # Sampling fits in the period: no error; a longer t_max does not fit.
    constant_time_factor(0.0266, 25.0, t_max=0.0266)
    with pytest.raises(BackboneError, match="does not fit in the constant-time period"):
        constant_time_factor(0.0266, 25.0, t_max=0.03)


def test_semi_constant_time():
    # Semi-constant time: t1-dependent decay at R(1 - T/t_max), constant time for T >= t_max, real time for
    # T = 0 (Grzesiek & Bax, J. Biomol. NMR 3, 185, 1993, from memory).
    rate, t_max = 30.0, 0.02
    T = np.array([0.0, 0.005, 0.011, 0.02, 0.03])
    expect_rate = rate * np.clip(1.0 - T / t_max, 0.0, None)
    assert_allclose(semi_constant_time_rate(rate, t_max, T), expect_rate, rtol=1e-14)
    x = expect_rate * t_max
    with np.errstate(invalid="ignore", divide="ignore"):
        expect = np.where(x > 0, np.sqrt((1.0 - np.exp(-2.0 * x)) / (2.0 * x)), 1.0)
    assert_allclose(semi_constant_time_factor(rate, t_max, T), expect, rtol=1e-12)
    assert_allclose(semi_constant_time_factor(rate, 0.0, 0.01), 1.0)


def test_decoupled_rate_is_the_mean():
    # Under 1H decoupling 15N spends half its time in-phase, half anti-phase (common practice; Cavanagh,
    # Fairbrother, Palmer, Rance & Skelton, Protein NMR Spectroscopy, 2nd ed., 2007, from memory).
    assert_allclose(decoupled_rate(12.0, 20.0), 16.0)
    assert_allclose(decoupled_rate(np.array([1.0, 5.0]), 3.0), [2.0, 4.0])


def test_trosy_selection():
    # Slow doublet component at (R_in + R_anti)/2 - |eta_xy| (Pervushin, Riek, Wider & Wüthrich, PNAS 94, 12366,
    # 1997); one component of two: 1/2; sensitivity enhancement sqrt(2) (Pervushin, Wider & Wüthrich,
    # J. Biomol. NMR 12, 345, 1998; Kay, Keifer & Saarinen, JACS 114, 10663, 1992; from memory).
    rate, factor = trosy_selection(20.0, 26.0, -9.0, sensitivity_enhanced=False)
    assert_allclose(rate, 23.0 - 9.0)
    assert_allclose(factor, 0.5)
    _, factor = trosy_selection(20.0, 26.0, 9.0)
    assert_allclose(factor, 1.0 / math.sqrt(2.0), rtol=1e-15)
    _, factor = trosy_selection(20.0, 26.0, 9.0, reference_enhanced=True)
    assert_allclose(factor, 0.5, rtol=1e-15)
    _, factor = trosy_selection(20.0, 26.0, 9.0, sensitivity_enhanced=False, reference_enhanced=True)
    assert_allclose(factor, 0.5 / math.sqrt(2.0), rtol=1e-15)
    assert float(TROSY_COMPONENT_FRACTION) == 0.5
    assert_allclose(float(SENSITIVITY_ENHANCEMENT_GAIN), math.sqrt(2.0))
    rates, factors = trosy_selection(np.array([10.0, 30.0]), np.array([14.0, 40.0]), np.array([3.0, 20.0]))
    assert_allclose(rates, [9.0, 15.0])
    assert factors.shape == (2,)


def test_errors():
    with pytest.raises(BackboneError, match="weighting 'hann'"):
        real_time_factor(10.0, 0.02, weighting="hann")
    with pytest.raises(BackboneError, match="weighting 'exp'"):
        detection_factor(10.0, 0.02, weighting="exp")
    with pytest.raises(BackboneError, match="rate must be >= 0"):
        real_time_factor(-1.0, 0.02)
    with pytest.raises(BackboneError, match="t_acq must be >= 0"):
        detection_factor(10.0, -0.1)
    with pytest.raises(BackboneError, match="coupling_time must be >= 0"):
        semi_constant_time_rate(10.0, 0.02, -0.01)
    with pytest.raises(BackboneError, match="total_time must be >= 0"):
        constant_time_factor(-0.02, 10.0)
    with pytest.raises(BackboneError, match="r_antiphase must be finite"):
        decoupled_rate(10.0, np.nan)
    with pytest.raises(BackboneError, match="eta_xy: .*exceeds the mean"):
        trosy_selection(10.0, 12.0, 15.0)
    with pytest.raises(BackboneError, match="eta_xy must be finite"):
        trosy_selection(10.0, 12.0, np.inf)
