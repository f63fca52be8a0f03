"""Timing of the full planning matrix: every bundled experiment × 4 labeling schemes × 5 fields × τc grid.

Run: python tests/benchmarks/bench_matrix.py [--tau-c-points 200] [--loop-sample 12] [--skip-exact-10x]
(prints timings; not collected by pytest).

Figures:
* plan_matrix with ``delays="exact"`` (every condition optimized on its own) for the base grid (default 200 τc
  values) and 10× the τc values;
* plan_matrix with ``delays="interpolated"`` for the base grid, 10× and 100× the τc values (grids of at least
  50000 conditions run the schemes on two threads), and 100× once more on one thread;
* the worst relative shortfall / excess of the interpolated objective against the exact one, on the base and
  the 10× grid (every row with a positive exact objective);
* a straightforward per-point loop, plan() for one condition at a time, timed on ``--loop-sample`` random
  conditions per labeling of the base grid and EXTRAPOLATED linearly to the whole base grid (the loop over
  every point would take minutes); its ratio to both plan_matrix modes.
Issue target: the 200-point matrix in about a second on two cores; 100× the τc points at most about 5× that.
"""

from __future__ import annotations

import argparse
import time

import numpy as np

FIELDS_MHZ = np.array([600.0, 700.0, 800.0, 900.0, 1000.0])


def _line(label, value, unit, extra=""):
    print(f"{label:<72s} {value:9.2f} {unit}{extra}")


def _error(exact, interp):
    ok = (exact.objective_throughput > 0).to_numpy()
    r = interp.objective_throughput.to_numpy()[ok] / exact.objective_throughput.to_numpy()[ok] - 1.0
    return r.min(), r.max(), float(np.mean(np.abs(r) > 1e-6))


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--tau-c-points", type=int, default=200, help="number of tau_c values of the base grid")
    ap.add_argument("--loop-sample", type=int, default=12, help="conditions per labeling timed in the per-point loop")
    ap.add_argument("--skip-exact-10x", action="store_true", help="do not time the exact mode on 10x the tau_c values")
    args = ap.parse_args()
    base = args.tau_c_points

    t0 = time.perf_counter()
    import pandas  # noqa: F401  (imported on first use by plan_matrix, about 0.3 s)
    import scipy.interpolate  # noqa: F401  (imported on first use by the interpolated mode)

    import backbone.plan as plan_module
    from backbone.experiments import registered_experiments
    from backbone.labeling import registered_schemes
    from backbone.plan import plan, plan_matrix

    schemes = sorted(registered_schemes())
    n_exp = len(registered_experiments())
    plan(tau_c_ns=15.0, field_mhz=800.0)  # imports, model loading, textbook delays remembered
    _line("imports, models, first plan", time.perf_counter() - t0, "s")

    def timed(n, mode):
        tau_c = np.linspace(2.0, 60.0, n)
        t0 = time.perf_counter()
        table = plan_matrix(tau_c_ns=tau_c, field_mhz=FIELDS_MHZ, labelings=schemes, delays=mode)
        return time.perf_counter() - t0, table

    grid = f"{n_exp} exp x {len(schemes)} schemes x {FIELDS_MHZ.size} fields"
    t_exact, exact = timed(base, "exact")
    _line(f"exact:        {grid} x {base} tau_c", t_exact, "s", f"   ({len(exact)} rows)")
    t_exact10 = exact10 = None
    if not args.skip_exact_10x:
        t_exact10, exact10 = timed(10 * base, "exact")
        _line(f"exact:        {grid} x {10 * base} tau_c", t_exact10, "s")
    t_int, interp = timed(base, "interpolated")
    _line(f"interpolated: {grid} x {base} tau_c", t_int, "s")
    t_int10, interp10 = timed(10 * base, "interpolated")
    _line(f"interpolated: {grid} x {10 * base} tau_c", t_int10, "s")
    t_int100, _ = timed(100 * base, "interpolated")
    threads = "two threads" if FIELDS_MHZ.size * 100 * base >= plan_module._THREADED_CONDITIONS else "one thread"
    _line(f"interpolated: {grid} x {100 * base} tau_c ({threads})", t_int100, "s")
    saved = plan_module._WORKERS
    plan_module._WORKERS = 1
    try:
        t_int100_1, _ = timed(100 * base, "interpolated")
    finally:
        plan_module._WORKERS = saved
    _line(f"interpolated: {grid} x {100 * base} tau_c (one thread)", t_int100_1, "s")
    if t_exact10 is not None:
        _line("exact: cost of 10x the tau_c points", t_exact10 / t_exact, "x")
    _line("interpolated: cost of 10x the tau_c points", t_int10 / t_int, "x")
    _line("interpolated: cost of 100x the tau_c points", t_int100 / t_int, "x")

    lo, hi, frac = _error(exact, interp)
    print(f"{f'interpolated vs exact objective, {base} tau_c: worst shortfall / excess':<72s} {-lo:9.2e} / {hi:.2e}"
          f"   ({100 * frac:.1f} % of rows beyond 1e-6)")
    if exact10 is not None:
        lo, hi, frac = _error(exact10, interp10)
        print(f"{f'interpolated vs exact objective, {10 * base} tau_c: worst shortfall / excess':<72s} {-lo:9.2e} / "
              f"{hi:.2e}   ({100 * frac:.1f} % of rows beyond 1e-6)")

    tau_c = np.linspace(2.0, 60.0, base)
    rng = np.random.default_rng(1)
    k = args.loop_sample
    t0 = time.perf_counter()
    for lab in schemes:
        for _ in range(k):
            plan(tau_c_ns=float(rng.choice(tau_c)), field_mhz=float(rng.choice(FIELDS_MHZ)), labeling=lab)
    per_point = (time.perf_counter() - t0) / (k * len(schemes))
    total = per_point * base * FIELDS_MHZ.size * len(schemes)
    _line("per-point loop over plan(): one condition", per_point * 1e3, "ms")
    _line(f"per-point loop, extrapolated to the {base}-point grid", total, "s")
    _line("ratio per-point loop / plan_matrix exact", total / t_exact, "x")
    _line("ratio per-point loop / plan_matrix interpolated", total / t_int, "x")


if __name__ == "__main__":
    main()
