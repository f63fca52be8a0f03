"""Build-up fits of arrayed transfer delays through the step algebra.

External references:
* equal rates: the INEPT build-up sin(pi J t) exp(-R t), and with a passive coupling the extra factor
  cos(pi J_p t) (Cavanagh, Fairbrother, Palmer, Rance & Skelton, Protein NMR Spectroscopy, 2nd ed., 2007),
  written out inline;
* unequal rates: the definition of the transfer as the linear system d/dt [a, b] = [[-Ra, -pi J], [pi J, -Rb]]
  [a, b] (Soerensen et al., Prog. NMR Spectrosc. 16, 163, 1983, plus first-order relaxation), solved here by
  scipy.linalg.expm, an independent numerical method;
* the engines are compared with lmfit (Newville et al., LMFIT, Zenodo 10.5281/zenodo.11813, MINPACK
  leastsq) called directly here;
* coverage of 95 % intervals follows from least-squares theory (normal errors of known sigma: beta-hat +/- 1.96
  sigma_beta covers the truth with probability 0.95 to first order), checked with a binomial bound.

Synthetic curves come from seeded generators (the step algebra or the inline formulas): fixtures, not
references.
"""

import json
import math

import lmfit
import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose
from scipy import linalg, stats

from backbone.errors import BackboneError
from backbone.fitting.buildup import (
    PARAMETERS,
    BuildupModel,
    buildup,
    buildup_jacobian,
    fit_buildups,
    initial_buildup_values,
)
from backbone.fitting.series import STATUSES

J_NH = 92.0  # |1J(N,H)| in Hz, about 90-95 Hz for backbone amides (common practice)
DELAYS = np.linspace(0.5e-3, 16e-3, 14)  # up to about 1.5/J, past the maximum near 1/(2J)
SIGMA = 1.0e3


def _textbook(t, scale, rate, j, passive=()):
    """scale sin(pi J t) exp(-R t) prod cos(pi J_p t) (Cavanagh et al. 2007)."""
    out = scale * np.sin(np.pi * j * t) * np.exp(-rate * t)
    for jp in passive:
        out = out * np.cos(np.pi * jp * t)
    return out


def _long_format(y, t, *, error=SIGMA, names=None):
    n_res = y.shape[0]
    names = np.arange(1, n_res + 1) if names is None else names
    frame = {
        "residue": np.repeat(names, t.size),
        "delay_s": np.tile(t, n_res),
        "intensity": np.asarray(y).ravel(),
    }
    if error is not None:
        frame["error"] = error
    return pd.DataFrame(frame)


def _noisy(n_res, seed, *, delta=0.0, spread_j=True):
    """n_res build-ups from the step algebra with per-residue truth, plus Gaussian noise (seeded fixture)."""
    rng = np.random.default_rng(seed)
    truth = np.stack(
        [
            rng.uniform(5e4, 2e5, n_res),
            rng.uniform(10.0, 40.0, n_res),
            rng.uniform(88.0, 96.0, n_res) if spread_j else np.full(n_res, J_NH),
        ],
        axis=-1,
    )
    clean = buildup(DELAYS[None], truth[:, :1], truth[:, 1:2], truth[:, 2:3], delta)
    return clean + rng.normal(0.0, SIGMA, clean.shape), truth


# ---------------------------------------------------------------------------------------------------------
# model function
# ---------------------------------------------------------------------------------------------------------
@pytest.mark.parametrize("passive", [(), (15.0,), (15.0, 35.0)])
def test_equal_rates_give_the_textbook_buildup(passive):
    t = np.linspace(0.0, 25e-3, 51)
    assert_allclose(
        buildup(t, 3.0e4, 17.0, J_NH, passive_hz=passive), _textbook(t, 3.0e4, 17.0, J_NH, passive), rtol=1e-12,
        atol=1e-10,
    )


@pytest.mark.parametrize("rate, delta", [(12.0, 8.0), (30.0, 250.0), (50.0, -20.0), (5.0, 2 * math.pi * J_NH)])
def test_unequal_rates_solve_the_two_by_two_system(rate, delta):
    # Oscillating, overdamped (|delta|/2 > pi J), negative difference and the critical point |delta| = 2 pi J.
    t = np.linspace(0.0, 30e-3, 31)
    ra, rb = rate, rate + delta
    generator = np.array([[-ra, -np.pi * J_NH], [np.pi * J_NH, -rb]])
    expected = np.array([linalg.expm(generator * tau)[1, 0] for tau in t])
    assert_allclose(buildup(t, 1.0, rate, J_NH, delta), expected, rtol=1e-9, atol=1e-13)


def test_jacobian_matches_finite_differences_of_the_textbook_formula():
    t = DELAYS
    p = np.array([[1.2e5, 21.0, 93.0]])
    _, jac = buildup_jacobian(t, p)
    h = np.array([1.0, 1e-4, 1e-4])
    for j in range(3):
        up, down = p[0].copy(), p[0].copy()
        up[j] += h[j]
        down[j] -= h[j]
        fd = (_textbook(t, *up) - _textbook(t, *down)) / (2 * h[j])
        assert_allclose(jac[0, :, j], fd, rtol=1e-6, atol=1e-6 * np.abs(fd).max())


def test_negative_rate_is_an_error_of_the_step_algebra():
    with pytest.raises(BackboneError, match="r_to must be >= 0"):
        buildup(DELAYS, 1.0, 5.0, J_NH, rate_difference=-10.0)


# ---------------------------------------------------------------------------------------------------------
# lmfit model
# ---------------------------------------------------------------------------------------------------------
def test_lmfit_model_recovers_textbook_parameters():
    model = BuildupModel()
    assert set(model.param_names) == {"scale", "rate", "j_hz", "rate_difference"}
    y = _textbook(DELAYS, 1.5e5, 24.0, 91.0)
    params = model.guess(y, DELAYS, j_hz=95.0, fit_j=True)
    assert not params["rate_difference"].vary
    result = model.fit(y, params, t=DELAYS)
    assert_allclose([result.params[k].value for k in ("scale", "rate", "j_hz")], [1.5e5, 24.0, 91.0], rtol=1e-6)


def test_lmfit_model_with_passive_coupling():
    model = BuildupModel(passive_hz=(15.0,))
    y = _textbook(DELAYS, 1.0e5, 18.0, J_NH, (15.0,))
    params = model.guess(y, DELAYS, j_hz=J_NH)
    assert not params["j_hz"].vary
    result = model.fit(y, params, t=DELAYS)
    assert_allclose(result.params["rate"].value, 18.0, rtol=1e-6)


def test_guess_needs_two_points():
    with pytest.raises(BackboneError, match="cannot estimate starting values"):
        BuildupModel().guess(np.array([1.0]), np.array([0.005]), j_hz=J_NH)


def test_starting_values_are_near_the_truth():
    y = _textbook(DELAYS[None], np.array([[1e5], [2e5]]), np.array([[15.0], [35.0]]), np.array([[90.0], [95.0]]))
    start = initial_buildup_values(DELAYS, y, j_hz=J_NH, fit_j=True)
    # Grid spacing: 13 % in the rate, 2.5 % in J (module constants) - the start is within a few grid steps.
    assert_allclose(start[:, 1], [15.0, 35.0], rtol=0.3)
    assert_allclose(start[:, 2], [90.0, 95.0], rtol=0.05)


# ---------------------------------------------------------------------------------------------------------
# fits
# ---------------------------------------------------------------------------------------------------------
def test_noise_free_textbook_curves_are_recovered_exactly():
    truth = np.array([[1.0e5, 12.0, 90.0], [2.0e5, 33.0, 94.0], [5.0e4, 60.0, 92.5]])
    y = _textbook(DELAYS[None], truth[:, :1], truth[:, 1:2], truth[:, 2:3])
    result = fit_buildups(_long_format(y, DELAYS), j_hz=J_NH, fit_j=True)
    table = result.table
    assert (table["status"] == "ok").all()
    assert_allclose(table[list(PARAMETERS)].to_numpy(), truth, rtol=1e-7)


def test_fit_recovers_rate_and_j_with_unequal_rates_within_errors():
    delta = 6.0  # anti-phase faster by about the partner's selective R1 (Cavanagh et al. 2007)
    y, truth = _noisy(60, seed=11, delta=delta)
    result = fit_buildups(_long_format(y, DELAYS), j_hz=J_NH, fit_j=True, rate_difference=delta)
    table = result.table
    assert (table["status"] == "ok").all()
    for j, name in enumerate(PARAMETERS):
        pulls = (table[name].to_numpy() - truth[:, j]) / table[f"{name}_err"].to_numpy()
        assert np.all(np.abs(pulls) < 4.5)  # 4.5 sigma: P < 1e-4 over 180 values
        # Unit spread of the pulls: chi-square bound on the sample variance of 60 normal values (99.9 %).
        lo, hi = stats.chi2.ppf([0.0005, 0.9995], 59) / 59
        assert lo < np.var(pulls, ddof=1) < hi


def test_covariance_intervals_cover_the_rate_at_95_percent():
    y, truth = _noisy(400, seed=5, spread_j=False)
    table = fit_buildups(_long_format(y, DELAYS), j_hz=J_NH).table
    inside = np.abs(table["rate"] - truth[:, 1]) <= 1.96 * table["rate_err"]
    # Binomial(400, 0.95): central 99.9 % range.
    lo, hi = stats.binom.ppf([0.0005, 0.9995], 400, 0.95)
    assert lo <= inside.sum() <= hi


def test_batched_engine_agrees_with_lmfit():
    y, _ = _noisy(12, seed=3)
    frame = _long_format(y, DELAYS)
    batched = fit_buildups(frame, j_hz=J_NH, fit_j=True, engine="batched").table
    direct = []
    for k in range(12):
        model = lmfit.Model(
            lambda t, scale, rate, j_hz: _textbook(t, scale, rate, j_hz), independent_vars=["t"]
        )
        params = model.make_params(scale=batched["scale"][k] * 1.1, rate=batched["rate"][k] * 0.8, j_hz=J_NH)
        fit = model.fit(y[k], params, t=DELAYS, weights=np.full(DELAYS.size, 1 / SIGMA), scale_covar=False)
        direct.append([fit.params[n].value for n in ("scale", "rate", "j_hz")] + [fit.params["rate"].stderr])
    direct = np.array(direct)
    assert_allclose(batched[list(PARAMETERS)].to_numpy(), direct[:, :3], rtol=1e-6)
    assert_allclose(batched["rate_err"], direct[:, 3], rtol=1e-3)  # lmfit's forward-difference covariance
    lm = fit_buildups(frame, j_hz=J_NH, fit_j=True, engine="lmfit")
    assert lm.global_info["engine"] == "lmfit"
    assert_allclose(lm.table[list(PARAMETERS)].to_numpy(), direct[:, :3], rtol=1e-6)


def test_passive_coupling_is_modeled():
    truth = (1.2e5, 20.0, J_NH)
    y = _textbook(DELAYS, *truth, (15.0,))[None] + np.random.default_rng(2).normal(0, 200.0, (1, DELAYS.size))
    with_passive = fit_buildups(_long_format(y, DELAYS, error=200.0), j_hz=J_NH, passive_hz=(15.0,)).table
    assert abs(with_passive["rate"][0] - 20.0) < 4 * with_passive["rate_err"][0]
    assert with_passive["reduced_chi2"][0] < 3.0
    without = fit_buildups(_long_format(y, DELAYS, error=200.0), j_hz=J_NH).table
    assert without["reduced_chi2"][0] > 10.0  # the cos(pi J_p t) factor is not optional


@pytest.mark.parametrize("method", ["monte-carlo", "bootstrap"])
def test_resampled_errors_agree_with_covariance(method):
    y, _ = _noisy(12, seed=8)
    frame = _long_format(y, DELAYS)
    cov = fit_buildups(frame, j_hz=J_NH, fit_j=True).table
    res = fit_buildups(frame, j_hz=J_NH, fit_j=True, errors=method, n_draws=100, seed=4)
    again = fit_buildups(frame.iloc[: 2 * DELAYS.size], j_hz=J_NH, fit_j=True, errors=method, n_draws=100, seed=4)
    # Seeded, one generator per residue: the first residues' errors do not depend on the others.
    assert_allclose(res.table["rate_err"][:2], again.table["rate_err"], rtol=0)
    assert res.global_info["seed"] == 4 and res.global_info["n_draws"] == 100
    # The standard deviation of 100 normal draws scatters by about 1/sqrt(2*99) = 7 %; the bootstrap of 14
    # residuals more. Median ratio over 12 residues within 15 % (common practice for resampling checks).
    ratio = np.median(res.table["rate_err"] / cov["rate_err"])
    assert 0.85 < ratio < 1.15


def test_well_below_the_maximum_the_rate_is_poorly_determined():
    t = np.linspace(0.2e-3, 2.0e-3, 6)  # far below 1/(2J) = 5.4 ms: sin x e^(-Rt) ~ x(1 - Rt)
    y = _textbook(t, 1e5, 15.0, J_NH)[None] + np.random.default_rng(1).normal(0, 500.0, (1, t.size))
    table = fit_buildups(_long_format(y, t, error=500.0), j_hz=J_NH).table
    assert table["status"][0] == "poorly-determined"
    assert "relative error of rate" in table["reason"][0] or "lower bound" in table["reason"][0]


def test_statuses_and_json_contract():
    good = _textbook(DELAYS, 1e5, 20.0, J_NH)
    rows = [("A1", t, v) for t, v in zip(DELAYS, good)]
    rows += [("B2", 0.004, 100.0), ("B2", 0.008, 120.0)]  # two points for two parameters
    rows += [("C3", t, 500.0) for t in DELAYS[:5]]  # constant
    rows += [("D4", t, v) for t, v in zip(DELAYS[:2], good[:2])] + [("D4", -0.001, 10.0)]  # flagged delay
    rows += [("E5", t, v - 5000.0) for t, v in zip(DELAYS, good)][:1] + [
        ("E5", t, v) for t, v in zip(DELAYS[1:], good[1:])
    ]  # a negative intensity near t = 0 is kept
    frame = pd.DataFrame(rows, columns=["residue", "delay_s", "intensity"])
    result = fit_buildups(frame, j_hz=J_NH)
    status = dict(zip(result.table["residue"], result.table["status"]))
    assert status == {"A1": "ok", "B2": "too-few-points", "C3": "failed", "D4": "bad-data", "E5": "ok"}
    table = result.table.set_index("residue")
    assert table.loc["E5", "n_points"] == DELAYS.size and table.loc["E5", "n_excluded"] == 0
    assert "negative delay" in table.loc["D4", "reason"]
    assert math.isnan(table.loc["C3", "rate"])
    out = json.loads(json.dumps(result.as_dict()))
    assert out["model"] == "buildup"
    assert [r["residue"] for r in out["residues"]] == ["A1", "B2", "C3", "D4", "E5"]
    assert all(r["status"] in STATUSES for r in out["residues"])
    for r in out["residues"]:
        for name in PARAMETERS:
            assert name in r and f"{name}_err" in r
    assert out["residues"][0]["j_hz"] == J_NH and out["residues"][0]["j_hz_err"] is None  # fixed J
    g = out["global"]
    assert g["parameters"] == ["scale", "rate"] and g["fit_j"] is False and g["j_hz"] == J_NH
    assert sum(g["status_counts"].values()) == 5 and g["weighted"] is False


def test_series_are_fitted_separately():
    y = np.vstack([_textbook(DELAYS, 1e5, 15.0, J_NH), _textbook(DELAYS, 1e5, 45.0, J_NH)])
    frame = _long_format(y, DELAYS, error=None, names=np.array([7, 7]))
    frame["series"] = np.repeat(["600", "900"], DELAYS.size)
    table = fit_buildups(frame, j_hz=J_NH).table
    assert table["series"].tolist() == ["600", "900"]
    assert_allclose(table["rate"], [15.0, 45.0], rtol=1e-6)


def test_reading_from_a_file(tmp_path):
    y = _textbook(DELAYS, 1e5, 25.0, J_NH)
    lines = ["residue,delay_ms,intensity"] + [f"K9,{t * 1e3:.6f},{v:.6f}" for t, v in zip(DELAYS, y)]
    path = tmp_path / "buildup.csv"
    path.write_text("\n".join(lines) + "\n")
    table = fit_buildups(path, j_hz=J_NH).table
    assert_allclose(table["rate"][0], 25.0, rtol=1e-5)


# ---------------------------------------------------------------------------------------------------------
# error paths
# ---------------------------------------------------------------------------------------------------------
@pytest.mark.parametrize(
    "kwargs, fragment",
    [
        ({"j_hz": 0.0}, "j_hz must be non-zero"),
        ({"j_hz": "ninety"}, "j_hz must be a number"),
        ({"j_hz": True}, "j_hz must be a number"),
        ({"j_hz": math.inf}, "j_hz must be finite"),
        ({"j_hz": J_NH, "rate_difference": math.nan}, "rate_difference must be finite"),
        ({"j_hz": J_NH, "passive_hz": ("x",)}, "passive_hz must be a sequence"),
        ({"j_hz": J_NH, "passive_hz": [[1.0, 2.0]]}, "flat sequence"),
        ({"j_hz": J_NH, "errors": "jackknife"}, "unknown error method 'jackknife'"),
        ({"j_hz": J_NH, "engine": "fast"}, "unknown fitting engine 'fast'"),
        ({"j_hz": J_NH, "n_draws": 5}, r"outside the allowed range \[10, 10000\]"),
        ({"j_hz": J_NH, "n_draws": 20.5}, "n_draws must be an integer"),
    ],
)
def test_invalid_options_raise(kwargs, fragment):
    frame = _long_format(_textbook(DELAYS, 1e5, 20.0, J_NH)[None], DELAYS)
    with pytest.raises(BackboneError, match=fragment):
        fit_buildups(frame, **kwargs)


def test_invalid_data_raise(tmp_path):
    with pytest.raises(BackboneError, match="fit_buildups needs DecayData"):
        fit_buildups([1, 2, 3], j_hz=J_NH)
    with pytest.raises(BackboneError, match="no such file"):
        fit_buildups(tmp_path / "missing.csv", j_hz=J_NH)
    with pytest.raises(BackboneError, match="unknown column 'tau'"):
        fit_buildups(pd.DataFrame({"residue": [1], "tau": [0.01], "intensity": [1.0]}), j_hz=J_NH)
