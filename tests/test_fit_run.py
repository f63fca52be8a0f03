"""run_fit over every model, the text table, the progress hook, bad data, and rate tables with a field column.

Sources: single-exponential decay I = A exp(-R t) and its build-up sin(pi J t) exp(-R t) (Cavanagh, Fairbrother,
Palmer, Rance & Skelton, Protein NMR Spectroscopy, 2nd ed., 2007); tau_c = sqrt(6 R2/R1 - 7) / (4 pi nu_N)
(Kay, Torchia & Bax, Biochemistry 28, 8972, 1989); gamma_N from scipy.constants (CODATA). A progress hook reports
a non-decreasing count that ends at the total (common practice).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose
from scipy import constants as sc

from backbone.errors import BackboneError
from backbone.fitting import RUN_MODELS, STATUSES, fit_decays, fit_table_text, read_rates, run_fit, screen_residues

DELAYS = np.array([0.0, 0.02, 0.04, 0.07, 0.1, 0.14, 0.2])


def _write(tmp_path, name, text):
    path = tmp_path / name
    path.write_text(text)
    return path


def _decay_file(tmp_path, rate=12.0, recovery=False):
    if recovery:
        y = 1e5 * (1 - np.exp(-rate * (DELAYS + 0.01)))
    else:
        y = 1e5 * np.exp(-rate * DELAYS)  # Cavanagh et al. 2007
    lines = ["residue,delay_s,intensity"] + [f"7,{t + (0.01 if recovery else 0.0):.4f},{v:.6f}" for t, v in zip(DELAYS, y)]
    return _write(tmp_path, "decay.csv", "\n".join(lines) + "\n")


@pytest.mark.parametrize("model", ["decay", "decay-offset", "two-point"])
def test_run_fit_decay_models_recover_the_textbook_rate(tmp_path, model):
    result = run_fit(_decay_file(tmp_path), model=model)
    assert result.table["status"][0] in ("ok", "poorly-determined")
    assert_allclose(result.table["rate"][0], 12.0, rtol=1e-6)
    out = json.loads(json.dumps(result.as_dict()))
    assert out["model"] == model
    text = fit_table_text(result)
    assert "rate" in text.splitlines()[0] and "12" in text


def test_run_fit_recovery_and_buildup(tmp_path):
    rec = run_fit(_decay_file(tmp_path, rate=3.0, recovery=True), model="recovery")
    assert_allclose(rec.table["rate"][0], 3.0, rtol=1e-6)
    t = np.linspace(0.5e-3, 16e-3, 12)
    y = 1e5 * np.sin(np.pi * 92.0 * t) * np.exp(-20.0 * t)  # Cavanagh et al. 2007
    path = _write(tmp_path, "bu.csv", "residue,delay_s,intensity\n" + "".join(f"3,{a:.6g},{b:.10g}\n" for a, b in zip(t, y)))
    bu = run_fit(path, model="buildup", j_hz=92.0)
    assert_allclose(bu.table["rate"][0], 20.0, rtol=1e-5)


def _kay_rates(tau_s, mhz):
    """R1, R2 that give tau_s in the Kay-Torchia-Bax closed form (ratio only; R1 = 1.5 s^-1 invented)."""
    gamma_n = -27.1261804e6  # 15N gyromagnetic ratio, rad s^-1 T^-1 (Harris et al., Pure Appl. Chem. 73, 1795, 2001, Table 1)
    gamma_h = sc.physical_constants["proton gyromag. ratio"][0]
    b0 = mhz * 1e6 * 2 * math.pi / gamma_h
    nu_n = abs(gamma_n) * b0 / (2 * math.pi)
    rho = ((4 * math.pi * nu_n * tau_s) ** 2 + 7) / 6
    return 1.5, 1.5 * rho


def test_run_fit_tau_c_with_a_field_column(tmp_path):
    lines = ["residue,R1,R2,field_mhz"]
    for mhz in (600.0, 800.0):
        r1, r2 = _kay_rates(8e-9, mhz)
        lines += [f"{i},{r1:.8f},{r2 * (1 + 0.01 * (i % 3 - 1)):.8f},{mhz:g}" for i in range(1, 9)]
    path = _write(tmp_path, "rates.csv", "\n".join(lines) + "\n")
    table = read_rates(path)
    assert table.fields_mhz == (600.0, 800.0) and table.field_mhz is None
    screening = screen_residues(path, ratio_sd=None)
    middle = screening.table[(screening.table["residue"] % 3) == 1]
    assert_allclose(middle["tau_c_ratio_ns"], 8.0, rtol=2e-3)  # closed form inverts the Kay-Torchia-Bax ratio
    result = run_fit(path, model="tau-c", labeling="15n", ratio_sd=None)
    assert result.global_info["fields_mhz"] == [600.0, 800.0]
    assert "tau_c =" in fit_table_text(result)
    dup = _write(tmp_path, "dup.csv", "residue,R1,R2,field_mhz\n1,1.5,10,600\n1,1.5,11,600.2\n1,1.4,12,800\n")
    flags = read_rates(dup).table["flag"].tolist()
    assert flags[0].startswith("residue listed more than once") and flags[2] == ""
    with pytest.raises(BackboneError, match="field_mhz"):
        read_rates(_write(tmp_path, "bad.csv", "residue,R1,R2,field_mhz\n1,1.5,10,5\n"))


def test_run_fit_ratio(tmp_path):
    path = _write(tmp_path, "ratio.csv", "residue,experiment,intensity\n1,TROSY,120\n1,HSQC,100\n2,TROSY,126\n2,HSQC,100\n")
    result = run_fit(path, model="ratio", field_mhz=800.0, labeling="2h13c15n", scale=1.0, progress=lambda d, t: None)
    assert result.as_dict()["model"] == "ratio" and math.isfinite(result.tau_c)
    assert "verdict" in fit_table_text(result)


def test_progress_hook_counts_up_to_the_total():
    rng = np.random.default_rng(0)
    rows = [(r, t, 1e5 * math.exp(-15 * t) + rng.normal(0, 300)) for r in range(40) for t in DELAYS]
    frame = pd.DataFrame(rows, columns=["residue", "delay_s", "intensity"])
    for kwargs in ({}, {"engine": "lmfit"}, {"errors": "monte-carlo", "n_draws": 20, "seed": 1}):
        calls = []
        fit_decays(frame, progress=lambda done, total: calls.append((done, total)), **kwargs)
        done = [c[0] for c in calls]
        assert calls[-1] == (40, 40) and done == sorted(done) and all(t == 40 for _, t in calls)
    with pytest.raises(BackboneError, match="progress must be a callable"):
        fit_decays(frame, progress=5)


@pytest.mark.parametrize(
    "text, status",
    [
        ("residue,delay_s,intensity\n1,0.01,nan\n1,0.02,nan\n1,0.03,nan\n", "bad-data"),
        ("residue,delay_s,intensity\n1,0.01,-3\n1,0.02,0\n1,0.03,5\n", "bad-data"),
        ("residue,delay_s,intensity\n1,0.01,10\n", "too-few-points"),
        ("residue,delay_s,intensity\n1,0.01,10\n1,0.01,9\n1,0.02,8\n", "bad-data"),
        ("residue,delay_s,intensity\n1,0.01,10\n1,0.02,10\n1,0.03,10\n", "failed"),
    ],
)
def test_bad_data_gives_statuses(tmp_path, text, status):
    result = run_fit(_write(tmp_path, "d.csv", text), model="decay")
    assert result.table["status"][0] == status and result.table["status"][0] in STATUSES


def test_errors_are_one_clear_message(tmp_path):
    with pytest.raises(BackboneError, match="the file is empty"):
        run_fit(_write(tmp_path, "empty.csv", ""), model="decay")
    with pytest.raises(BackboneError, match="unknown fit model 'gaussian'"):
        run_fit(_decay_file(tmp_path), model="gaussian")
    with pytest.raises(BackboneError, match="option 'j_hz' is not known for the 'decay' fit"):
        run_fit(_decay_file(tmp_path), model="decay", j_hz=90.0)
    assert set(RUN_MODELS) == {"decay", "decay-offset", "recovery", "two-point", "buildup", "tau-c", "ratio"}
