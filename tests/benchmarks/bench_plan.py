"""Timing of plan(): all bundled experiments with delay optimization, one condition and a 200 x 5 grid.

Run: python tests/benchmarks/bench_plan.py   (prints timings; not collected by pytest)
Target: one condition well under a second after imports.
"""

from __future__ import annotations

import time

import numpy as np


def _time(label, func, repeat=3):
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        func()
        best = min(best, time.perf_counter() - t0)
    print(f"{label:<58s} {best * 1e3:9.1f} ms")


def main():
    t0 = time.perf_counter()
    from backbone.experiments import registered_experiments
    from backbone.plan import plan

    registered_experiments()
    print(f"{'imports and loading the bundled models':<58s} {(time.perf_counter() - t0) * 1e3:9.1f} ms")
    t0 = time.perf_counter()
    plan(tau_c_ns=15.0, field_mhz=800.0, labeling="13c15n")
    print(f"{'first plan (textbook delays computed and remembered)':<58s} {(time.perf_counter() - t0) * 1e3:9.1f} ms")
    _time("one condition, all experiments (13c15n, 15 ns, 800 MHz)", lambda: plan(tau_c_ns=15.0, field_mhz=800.0))
    _time("one condition, all experiments, trosy='auto' (2h13c15n)",
          lambda: plan(tau_c_ns=30.0, field_mhz=900.0, labeling="2h13c15n", trosy="auto"))
    tc = np.linspace(2.0, 60.0, 200)[:, None]
    mhz = np.array([500.0, 600.0, 700.0, 800.0, 900.0])[None, :]
    _time("200 tau_c x 5 fields, all experiments (13c15n)", lambda: plan(tau_c_ns=tc, field_mhz=mhz), repeat=1)


if __name__ == "__main__":
    main()
