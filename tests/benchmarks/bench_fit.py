"""Timing of the fitting layer: 500 residues × 10-point decays (target: covariance errors in a few seconds).

Run: /tmp/venv/bin/python tests/benchmarks/bench_fit.py
Prints wall-clock times (best of a few repeats) for reading the CSV, the batched engine with covariance
errors (with and without a progress hook), run_fit from the file, the lmfit engine, Monte Carlo / bootstrap
errors with 200 draws per residue, 500 build-ups through the same batched engine, and a 500-residue
TROSY/HSQC ratio fit through the planner.
"""

from __future__ import annotations

import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

from backbone.fitting import buildup, fit_buildups, fit_ratio, run_fit
from backbone.fitting.data import read_decays
from backbone.fitting.decay import exp_decay
from backbone.fitting.series import fit_decays

N_RESIDUES = 500
DELAYS = np.array([0.005, 0.02, 0.04, 0.06, 0.08, 0.10, 0.13, 0.16, 0.20, 0.25])


def _frame(seed: int = 1) -> pd.DataFrame:
    """Synthetic R2-like decays of an invented 500-residue protein (seeded)."""
    rng = np.random.default_rng(seed)
    rate = rng.uniform(5.0, 30.0, N_RESIDUES)
    amplitude = rng.uniform(0.5e6, 2.0e6, N_RESIDUES)
    sigma = 1.0e4
    y = exp_decay(DELAYS[None, :], amplitude[:, None], rate[:, None]) + rng.normal(
        0, sigma, (N_RESIDUES, DELAYS.size)
    )
    return pd.DataFrame(
        {
            "residue": np.repeat([f"R{i + 1}" for i in range(N_RESIDUES)], DELAYS.size),
            "delay_s": np.tile(DELAYS, N_RESIDUES),
            "intensity": y.ravel(),
            "error": sigma,
        }
    )


def _best(fn, repeats: int) -> tuple[float, object]:
    best, out = float("inf"), None
    for _ in range(repeats):
        start = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - start)
    return best, out


def main() -> None:
    frame = _frame()
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "decays.csv"
        frame.to_csv(path, index=False)
        t_read, data = _best(lambda: read_decays(path), 3)
        t_run, _ = _best(lambda: run_fit(path, model="decay"), 3)
    print(f"{N_RESIDUES} residues x {DELAYS.size} points")
    print(f"  read + validate CSV                 {t_read * 1e3:8.1f} ms")
    print(f"  run_fit from the file (covariance)  {t_run * 1e3:8.1f} ms")
    cases = [
        ("batched, covariance errors", dict(engine="batched"), 5),
        ("auto (default), covariance errors", dict(), 5),
        ("auto, with a progress hook", dict(progress=lambda done, total: None), 5),
        ("lmfit engine, covariance errors", dict(engine="lmfit"), 1),
        ("monte-carlo, 200 draws", dict(errors="monte-carlo", n_draws=200, seed=1), 1),
        ("bootstrap, 200 draws", dict(errors="bootstrap", n_draws=200, seed=1), 1),
    ]
    for label, kwargs, repeats in cases:
        elapsed, result = _best(lambda kw=kwargs: fit_decays(data, **kw), repeats)
        counts = {k: v for k, v in result.global_info["status_counts"].items() if v}
        print(f"  {label:<35} {elapsed * 1e3:8.1f} ms   {counts}")

    t = np.linspace(0.5e-3, 16e-3, 10)
    rng = np.random.default_rng(2)
    rates = rng.uniform(10.0, 40.0, N_RESIDUES)
    y = buildup(t[None, :], 1e5, rates[:, None], 92.0) + rng.normal(0, 1e3, (N_RESIDUES, t.size))
    frame = pd.DataFrame(
        {"residue": np.repeat(np.arange(N_RESIDUES), t.size), "delay_s": np.tile(t, N_RESIDUES), "intensity": y.ravel()}
    )
    elapsed, result = _best(lambda: fit_buildups(frame, j_hz=92.0), 3)
    counts = {k: v for k, v in result.global_info["status_counts"].items() if v}
    print(f"  {'build-ups, fixed J, covariance':<35} {elapsed * 1e3:8.1f} ms   {counts}")

    hsqc = rng.uniform(1e5, 1e6, N_RESIDUES)
    trosy = hsqc * 1.3 * np.exp(rng.normal(0, 0.1, N_RESIDUES))
    ratios = pd.DataFrame(
        {
            "residue": np.r_[np.arange(N_RESIDUES), np.arange(N_RESIDUES)],
            "experiment": ["TROSY"] * N_RESIDUES + ["HSQC"] * N_RESIDUES,
            "intensity": np.r_[trosy, hsqc],
        }
    )
    elapsed, result = _best(lambda: fit_ratio(ratios, field_mhz=800.0, labeling="2h13c15n", scale=1.0), 3)
    print(f"  {'TROSY/HSQC ratio fit (planner)':<35} {elapsed * 1e3:8.1f} ms   tau_c {result.global_info['tau_c_ns']:.2f} ns")


if __name__ == "__main__":
    main()
