"""Decay models, the batched fitter against lmfit, and the statistics of the reported uncertainties.

External references:
* the model formulas are written out inline with :mod:`math` (textbook exponentials);
* derivatives are checked by central finite differences, not by the package's own Jacobian;
* the batched Levenberg-Marquardt engine is compared with lmfit (Newville et al., LMFIT, Zenodo
  10.5281/zenodo.11813, MINPACK leastsq) called directly here, to 1e-6 relative;
* coverage of 95 % intervals follows from least-squares theory (normal errors, known σ: β̂ ± 1.96 σ_β;
  σ from the residuals: Student t with n − p degrees of freedom), checked with a binomial tolerance.

Synthetic decays come from seeded generators: they are test fixtures, not references.
"""

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy import stats

from backbone.errors import BackboneError
from backbone.fitting.decay import (
    LEASTSQ_PRECISE,
    MODEL_IDS,
    PARAMETERS,
    ExpDecayModel,
    ExpDecayOffsetModel,
    RecoveryModel,
    evaluate,
    exp_decay,
    exp_decay_offset,
    initial_values,
    jacobian,
    lmfit_model,
    recovery,
    two_point_rate,
)
from backbone.fitting.series import fit_batch, fit_decays

FITTED = ("decay", "decay-offset", "recovery")
TRUE = {"decay": [1.0e5, 12.0], "decay-offset": [8.0e4, 6.0, 1.0e4], "recovery": [9.0e4, 1.5]}
DELAYS = {
    "decay": np.array([0.005, 0.02, 0.04, 0.06, 0.08, 0.10, 0.13, 0.16, 0.20, 0.25]),
    "decay-offset": np.array([0.0, 0.04, 0.08, 0.12, 0.18, 0.25, 0.35, 0.5, 0.7, 1.0]),
    "recovery": np.array([0.02, 0.1, 0.2, 0.35, 0.5, 0.75, 1.0, 1.5, 2.0, 3.0]),
}
SIGMA = 1.5e3


def _synthetic(model, n_res, seed, *, sigma=SIGMA, spread=True):
    """Long-format frame of n_res noisy decays with per-residue true parameters (seeded fixture)."""
    rng = np.random.default_rng(seed)
    base = np.array(TRUE[model])
    factors = rng.uniform(0.8, 1.25, size=(n_res, base.size)) if spread else np.ones((n_res, base.size))
    truth = base * factors
    t = DELAYS[model]
    clean = evaluate(model, t, truth)
    noisy = clean + rng.normal(0.0, sigma, size=clean.shape)
    frame = pd.DataFrame(
        {
            "residue": np.repeat(np.arange(1, n_res + 1), t.size),
            "delay_s": np.tile(t, n_res),
            "intensity": noisy.ravel(),
            "error": sigma,
        }
    )
    return frame, truth


# ---------------------------------------------------------------------------------------------------------
# model functions
# ---------------------------------------------------------------------------------------------------------
def test_model_functions_match_the_formulas():
    for t in (0.0, 0.01, 0.37, 2.5):
        assert_allclose(exp_decay(t, 2.0e4, 11.0), 2.0e4 * math.exp(-11.0 * t), rtol=1e-15)
        assert_allclose(
            exp_decay_offset(t, -3.0e4, 1.7, 2.9e4), -3.0e4 * math.exp(-1.7 * t) + 2.9e4, rtol=1e-14
        )
        assert_allclose(recovery(t, 5.0e4, 1.2), 5.0e4 * (1 - math.exp(-1.2 * t)), rtol=1e-14, atol=1e-12)
    # Broadcasting over delays and parameter arrays.
    out = exp_decay(np.array([0.0, 0.1])[:, None], np.array([1.0, 2.0]), 10.0)
    assert out.shape == (2, 2)
    assert_allclose(out[1], [math.exp(-1.0), 2 * math.exp(-1.0)], rtol=1e-15)


def test_recovery_keeps_precision_for_small_rate_times_delay():
    # 1 - exp(-x) = x - x²/2 + x³/6 - ... (Taylor series); x = 1e-10 would lose 6 digits without expm1.
    x = 1e-10
    assert_allclose(recovery(1.0, 1.0, x), x - x**2 / 2 + x**3 / 6, rtol=1e-15)


@pytest.mark.parametrize("model", FITTED)
def test_jacobian_matches_central_differences(model):
    t = DELAYS[model]
    p = np.array(TRUE[model], dtype=float)
    _, jac = jacobian(model, t[None], p[None])
    for j in range(p.size):
        h = 1e-6 * abs(p[j])
        up, down = p.copy(), p.copy()
        up[j] += h
        down[j] -= h
        numeric = (evaluate(model, t, up) - evaluate(model, t, down)) / (2 * h)
        assert_allclose(jac[0, :, j], numeric, rtol=1e-7, atol=1e-9 * np.max(np.abs(numeric)))


def test_two_point_rate_exact_and_error_propagation():
    # Noise-free A exp(-R t) at two delays gives R exactly.
    r_true, a = 15.0, 3.0e4
    t1, t2 = 0.01, 0.09
    i1, i2 = a * math.exp(-r_true * t1), a * math.exp(-r_true * t2)
    rate, err = two_point_rate(t1, i1, t2, i2)
    assert_allclose(rate, r_true, rtol=1e-13)
    assert math.isnan(err)
    # First-order propagation checked by sampling (seeded fixture): small relative errors, so first order
    # holds; 20000 draws estimate a standard deviation to about 0.5 %.
    e1, e2 = 0.01 * i1, 0.015 * i2
    _, err = two_point_rate(t1, i1, t2, i2, e1, e2)
    rng = np.random.default_rng(11)
    draws, _ = two_point_rate(t1, i1 + rng.normal(0, e1, 20000), t2, i2 + rng.normal(0, e2, 20000))
    assert_allclose(err, np.std(draws, ddof=1), rtol=0.03)
    # Arrays, and unusable inputs as NaN rather than exceptions.
    rates, _ = two_point_rate(np.array([t1, t1, t1]), np.array([i1, -1.0, i1]), np.array([t2, t2, t1]), i2)
    assert_allclose(rates[0], r_true, rtol=1e-13)
    assert np.isnan(rates[1]) and np.isnan(rates[2])


@settings(max_examples=60, deadline=None)
@given(
    amplitude=st.floats(1e-3, 1e9),
    rate=st.floats(-50.0, 500.0),
    t1=st.floats(0.0, 1.0),
    gap=st.floats(1e-3, 1.0),
)
def test_two_point_rate_inverts_any_noise_free_decay(amplitude, rate, t1, gap):
    t2 = t1 + gap
    assume(abs(rate) * t2 < 200)  # intensities stay normal floats (exp(-700) is subnormal)
    rate_back, _ = two_point_rate(t1, amplitude * math.exp(-rate * t1), t2, amplitude * math.exp(-rate * t2))
    assert_allclose(rate_back, rate, rtol=1e-9, atol=1e-9 / gap)


@settings(max_examples=60, deadline=None)
@given(plateau=st.floats(-1e6, 1e6), rate=st.floats(1e-3, 1e3), t=st.floats(0.0, 10.0))
def test_recovery_is_the_offset_decay_with_amplitude_minus_offset(plateau, rate, t):
    # P (1 - e^{-kt}) = (-P) e^{-kt} + P: the saturation-recovery form of the offset decay.
    assert_allclose(
        recovery(t, plateau, rate), exp_decay_offset(t, -plateau, rate, plateau), atol=1e-9 * abs(plateau)
    )


@pytest.mark.parametrize("model", FITTED)
def test_initial_values_land_near_the_truth(model):
    t = DELAYS[model]
    p = np.array(TRUE[model])
    start = initial_values(model, t, evaluate(model, t, p))[0]
    # The rate grid has neighbours a factor 10^(6/120) = 1.122 apart.
    assert abs(math.log(start[1] / p[1])) <= math.log(10 ** (6 / 120)) / 2 + 1e-12
    assert np.all(np.isnan(initial_values(model, [0.1], [5.0])))  # one point: no estimate


@pytest.mark.parametrize(
    "model,cls",
    [("decay", ExpDecayModel), ("decay-offset", ExpDecayOffsetModel), ("recovery", RecoveryModel)],
)
def test_lmfit_models_guess_and_fit_noise_free_data(model, cls):
    t = DELAYS[model]
    p = TRUE[model]
    y = evaluate(model, t, p)
    lm = cls()
    assert isinstance(lmfit_model(model), cls)
    assert list(lm.param_names) == list(PARAMETERS[model])
    result = lm.fit(y, lm.guess(y, t=t), t=t, fit_kws=dict(LEASTSQ_PRECISE))
    assert_allclose([result.params[name].value for name in PARAMETERS[model]], p, rtol=1e-8)
    # lmfit convention: keyword values override the guess.
    assert lm.guess(y, t=t, rate=3.0)["rate"].value == 3.0
    with pytest.raises(BackboneError, match="cannot estimate starting values"):
        lm.guess([1.0], t=[0.1])


def test_unknown_model_names():
    with pytest.raises(BackboneError, match="unknown decay model 'biexponential'; allowed: decay"):
        evaluate("biexponential", [0.0], [1.0, 1.0])
    with pytest.raises(BackboneError, match="allowed: decay, decay-offset, recovery$"):
        lmfit_model("two-point")


# ---------------------------------------------------------------------------------------------------------
# batched engine against lmfit
# ---------------------------------------------------------------------------------------------------------
@pytest.mark.parametrize("weighted", [True, False], ids=["weighted", "unweighted"])
@pytest.mark.parametrize("model", FITTED)
def test_batched_engine_agrees_with_lmfit(model, weighted):
    frame, _ = _synthetic(model, 12, seed=100 + FITTED.index(model))
    if not weighted:
        frame = frame.drop(columns="error")
    table = fit_decays(frame, model=model, engine="batched").table
    assert (table["status"] == "ok").all()
    lm = lmfit_model(model)
    t = DELAYS[model]
    for i, (_, group) in enumerate(frame.groupby("residue", sort=False)):
        y = group["intensity"].to_numpy()
        w = 1.0 / group["error"].to_numpy() if weighted else None
        # lmfit called directly: weights 1/σ with σ absolute (scale_covar False), or unweighted with the
        # covariance scaled by the reduced chi-square (lmfit's default).
        result = lm.fit(
            y, lm.guess(y, t=t), t=t, weights=w, scale_covar=not weighted, fit_kws=dict(LEASTSQ_PRECISE)
        )
        for name in PARAMETERS[model]:
            assert_allclose(table[name].iloc[i], result.params[name].value, rtol=1e-6)
            assert_allclose(table[f"{name}_err"].iloc[i], result.params[name].stderr, rtol=1e-6)
        assert_allclose(table["reduced_chi2"].iloc[i], result.redchi, rtol=1e-6)


@pytest.mark.parametrize("model", FITTED)
def test_lmfit_engine_gives_the_same_table(model):
    frame, _ = _synthetic(model, 5, seed=7)
    a = fit_decays(frame, model=model, engine="batched").table
    b = fit_decays(frame, model=model, engine="lmfit").table
    for name in PARAMETERS[model]:
        assert_allclose(a[name], b[name], rtol=1e-6)
        assert_allclose(a[f"{name}_err"], b[f"{name}_err"], rtol=1e-6)
    assert a["status"].tolist() == b["status"].tolist()


# ---------------------------------------------------------------------------------------------------------
# round trip and coverage
# ---------------------------------------------------------------------------------------------------------
@pytest.mark.parametrize("model", FITTED)
def test_round_trip_within_reported_uncertainty(model):
    frame, truth = _synthetic(model, 20, seed=3)
    table = fit_decays(frame, model=model).table
    assert (table["status"] == "ok").all()
    for j, name in enumerate(PARAMETERS[model]):
        z = (table[name].to_numpy() - truth[:, j]) / table[f"{name}_err"].to_numpy()
        # 20 residues × |z| < 4: the chance of any exceedance for a correct σ is below 0.2 %.
        assert np.all(np.abs(z) < 4.0), (name, z)


# Binomial tolerance for 300 trials at a true coverage of 0.95: accept 273-294 hits (0.91-0.98);
# P(outside) = P(X ≤ 272) + P(X ≥ 295) = 0.0013 + 0.0023 = 0.0036 for X ~ Binomial(300, 0.95)
# (scipy.stats.binom; evaluated in the test below too).
N_TRIALS = 300
LOW, HIGH = 273, 294


def test_binomial_tolerance_is_as_stated():
    assert stats.binom.cdf(LOW - 1, N_TRIALS, 0.95) + stats.binom.sf(HIGH, N_TRIALS, 0.95) < 0.005


@pytest.mark.parametrize("model", FITTED)
def test_coverage_of_95_percent_intervals_known_sigma(model):
    frame, truth = _synthetic(model, N_TRIALS, seed=1000 + FITTED.index(model), spread=False)
    table = fit_decays(frame, model=model).table
    hits = (
        np.abs(table["rate"].to_numpy() - truth[:, 1]) <= stats.norm.ppf(0.975) * table["rate_err"].to_numpy()
    )
    assert LOW <= hits.sum() <= HIGH


def test_coverage_of_95_percent_intervals_sigma_from_residuals():
    model = "decay"
    frame, truth = _synthetic(model, N_TRIALS, seed=2000, spread=False)
    table = fit_decays(frame.drop(columns="error"), model=model).table
    quantile = stats.t.ppf(0.975, df=DELAYS[model].size - 2)
    hits = np.abs(table["rate"].to_numpy() - truth[:, 1]) <= quantile * table["rate_err"].to_numpy()
    assert LOW <= hits.sum() <= HIGH


# ---------------------------------------------------------------------------------------------------------
# Monte Carlo and bootstrap
# ---------------------------------------------------------------------------------------------------------
def test_monte_carlo_errors_agree_with_covariance_for_well_determined_fits():
    # For small noise the linearized covariance is the distribution of the refits (least-squares theory);
    # 100 draws estimate a standard deviation to about 7 %, averaged over 40 residues to about 1 %.
    frame, _ = _synthetic("decay", 40, seed=5, sigma=300.0)
    cov = fit_decays(frame, model="decay").table
    mc = fit_decays(frame, model="decay", errors="monte-carlo", n_draws=100, seed=1).table
    ratio = mc["rate_err"] / cov["rate_err"]
    assert abs(ratio.mean() - 1.0) < 0.05
    assert (mc["status"] == "ok").all()
    assert_allclose(mc["rate"], cov["rate"], rtol=0)  # best-fit values are not replaced by draw means


def test_bootstrap_errors_are_of_the_right_size():
    # Residual bootstrap on 10 points: a rougher estimate than Monte Carlo, so a looser band (±15 % on the
    # mean ratio over 40 residues).
    frame, _ = _synthetic("decay", 40, seed=6, sigma=300.0)
    cov = fit_decays(frame.drop(columns="error"), model="decay").table
    boot = fit_decays(
        frame.drop(columns="error"), model="decay", errors="bootstrap", n_draws=100, seed=2
    ).table
    ratio = boot["rate_err"] / cov["rate_err"]
    assert abs(ratio.mean() - 1.0) < 0.15


def test_draws_are_reproducible_and_independent_of_other_residues():
    frame, _ = _synthetic("decay", 6, seed=8)
    a = fit_decays(frame, errors="monte-carlo", n_draws=50, seed=42)
    b = fit_decays(frame, errors="monte-carlo", n_draws=50, seed=42)
    assert_allclose(a.table["rate_err"], b.table["rate_err"], rtol=0)
    assert a.global_info["seed"] == 42
    # Dropping a residue further down does not change the draws of the ones before it.
    c = fit_decays(frame[frame["residue"] != 6], errors="monte-carlo", n_draws=50, seed=42)
    assert_allclose(c.table["rate_err"], a.table["rate_err"].iloc[:5], rtol=0)
    fresh = fit_decays(frame, errors="monte-carlo", n_draws=10)
    assert isinstance(fresh.global_info["seed"], int)


def test_two_point_model():
    r_true, a = 12.0, 5.0e4
    t = [0.01, 0.08]
    rows = [(1, ti, a * math.exp(-r_true * ti), 100.0) for ti in t]
    rows += [(2, ti, a * math.exp(-r_true * ti), 100.0) for ti in [0.01, 0.04, 0.08]]
    rows += [(3, 0.01, 1000.0, 100.0)]
    frame = pd.DataFrame(rows, columns=["residue", "delay_s", "intensity", "error"])
    table = fit_decays(frame, model="two-point").table.set_index("residue")
    assert table.loc[1, "status"] == "ok"
    assert_allclose(table.loc[1, "rate"], r_true, rtol=1e-12)
    assert_allclose(table.loc[1, "amplitude"], a, rtol=1e-12)
    i1, i2 = a * math.exp(-r_true * t[0]), a * math.exp(-r_true * t[1])
    expected = math.sqrt((100.0 / i1) ** 2 + (100.0 / i2) ** 2) / (t[1] - t[0])
    assert_allclose(table.loc[1, "rate_err"], expected, rtol=1e-12)
    assert "1 other point not used" in table.loc[2, "reason"]
    assert table.loc[3, "status"] == "too-few-points"
    mc = fit_decays(frame, model="two-point", errors="monte-carlo", n_draws=2000, seed=3).table
    assert_allclose(mc["rate_err"].iloc[0], expected, rtol=0.1)
    no_err = fit_decays(frame.drop(columns="error"), model="two-point").table
    assert no_err["status"].iloc[0] == "ok" and math.isnan(no_err["rate_err"].iloc[0])
    assert "error is unknown" in no_err["reason"].iloc[0]


def test_failed_fit_is_reported_not_raised():
    # Intensities that grow and then collapse: no single exponential fits; whatever the optimizer does,
    # the driver returns a status for the residue instead of raising.
    rows = [("x", t, v) for t, v in zip([0.0, 0.01, 0.02, 0.03, 0.04], [1.0, 1e6, 1.0, 1e6, 1.0])]
    table = fit_decays(pd.DataFrame(rows, columns=["residue", "delay_s", "intensity"])).table
    assert table["status"].iloc[0] in ("failed", "poorly-determined")
    assert table["reason"].iloc[0]


@pytest.mark.parametrize(
    "kwargs,fragment",
    [
        ({"model": "biexponential"}, "unknown fit model 'biexponential'; allowed: decay, decay-offset"),
        ({"errors": "jackknife"}, "unknown error method 'jackknife'; allowed: covariance"),
        ({"engine": "gpu"}, "unknown fitting engine 'gpu'"),
        ({"errors": "monte-carlo", "n_draws": 5}, r"n_draws = 5 is outside the allowed range \[10, 10000\]"),
        ({"errors": "monte-carlo", "n_draws": 20000}, "outside the allowed range"),
        ({"n_draws": 2.5}, "n_draws must be an integer"),
        ({"model": "two-point", "errors": "bootstrap"}, "bootstrap' needs residuals"),
    ],
)
def test_option_errors(kwargs, fragment):
    frame, _ = _synthetic("decay", 1, seed=0)
    with pytest.raises(BackboneError, match=fragment):
        fit_decays(frame, **kwargs)


def test_data_argument_errors(tmp_path):
    with pytest.raises(BackboneError, match="fit_decays needs DecayData"):
        fit_decays([1, 2, 3])
    with pytest.raises(BackboneError, match="no such file"):
        fit_decays(tmp_path / "absent.csv")


def test_fit_batch_handles_ragged_rows_and_reports_convergence():
    t = DELAYS["decay"]
    p = np.array(TRUE["decay"])
    y = np.vstack([evaluate("decay", t, p), evaluate("decay", t, p * [1.0, 2.0])])
    w = np.ones_like(y)
    w[1, 6:] = 0.0  # second row uses 6 points only
    fit = fit_batch("decay", t, y, w)
    assert fit.converged.all()
    assert fit.n_points.tolist() == [10, 6]
    assert_allclose(fit.params, [p, p * [1.0, 2.0]], rtol=1e-9)
    assert set(MODEL_IDS) == {"decay", "decay-offset", "recovery", "two-point"}
