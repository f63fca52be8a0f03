"""Timing of the full planning matrix: every bundled experiment × 4 labeling schemes × 5 fields × τc grid.

Run: python tests/benchmarks/bench_matrix.py [--tau-c-points 200,20000] [--loop-sample 12]
(prints timings; not collected by pytest).

Three figures:
* plan_matrix over the grid, once per number of τc points (default 200 and 20000, i.e. 100× the conditions);
* a straightforward per-point loop, plan() for one condition at a time, timed on ``--loop-sample`` random
  conditions per labeling of the 200-point grid and EXTRAPOLATED linearly to the whole 200-point grid
  (the loop over every point would take minutes); the ratio loop / plan_matrix is printed.
Issue target: the 200-point matrix in about a second on two cores; 100× the τc points at most about 5× that.
"""

from __future__ import annotations

import argparse
import time

import numpy as np

FIELDS_MHZ = np.array([600.0, 700.0, 800.0, 900.0, 1000.0])


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--tau-c-points", default="200,20000", help="comma-separated numbers of tau_c values")
    ap.add_argument("--loop-sample", type=int, default=12, help="conditions per labeling timed in the per-point loop")
    args = ap.parse_args()
    counts = [int(x) for x in args.tau_c_points.split(",")]

    t0 = time.perf_counter()
    from backbone.experiments import registered_experiments
    from backbone.labeling import registered_schemes
    from backbone.plan import plan, plan_matrix

    schemes = sorted(registered_schemes())
    n_exp = len(registered_experiments())
    plan(tau_c_ns=15.0, field_mhz=800.0)  # imports, model loading, textbook delays remembered
    print(f"{'imports, models, first plan':<62s} {time.perf_counter() - t0:9.2f} s")

    timings = {}
    for n in counts:
        tau_c = np.linspace(2.0, 60.0, n)
        t0 = time.perf_counter()
        table = plan_matrix(tau_c_ns=tau_c, field_mhz=FIELDS_MHZ, labelings=schemes)
        timings[n] = time.perf_counter() - t0
        label = f"plan_matrix: {n_exp} exp x {len(schemes)} schemes x {FIELDS_MHZ.size} fields x {n} tau_c"
        print(f"{label:<62s} {timings[n]:9.2f} s   ({len(table)} rows)")
    if len(counts) > 1:
        a, b = counts[0], counts[-1]
        print(f"{f'cost of {b // a}x the tau_c points':<62s} {timings[b] / timings[a]:9.1f} x")

    n = counts[0]
    tau_c = np.linspace(2.0, 60.0, n)
    rng = np.random.default_rng(1)
    k = args.loop_sample
    t0 = time.perf_counter()
    for lab in schemes:
        for _ in range(k):
            plan(tau_c_ns=float(rng.choice(tau_c)), field_mhz=float(rng.choice(FIELDS_MHZ)), labeling=lab)
    per_point = (time.perf_counter() - t0) / (k * len(schemes))
    total = per_point * n * FIELDS_MHZ.size * len(schemes)
    print(f"{'per-point loop over plan(): one condition':<62s} {per_point * 1e3:9.1f} ms")
    print(f"{f'per-point loop, extrapolated to the {n}-point grid':<62s} {total:9.1f} s")
    print(f"{'ratio per-point loop / plan_matrix':<62s} {total / timings[n]:9.1f} x")


if __name__ == "__main__":
    main()
