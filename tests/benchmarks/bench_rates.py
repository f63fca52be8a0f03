"""Time the relaxation engine: every rate for 1e5 (tau_c, field) points in one call, per labeling scheme.

Run: python tests/benchmarks/bench_rates.py   (target: well under a second per call)
"""

import time

import numpy as np

from backbone.labeling import registered_schemes
from backbone.relaxation import relaxation_rates

N_POINTS = 100_000
REPEATS = 3


def main() -> None:
    rng = np.random.default_rng(20240601)
    tau_c = np.exp(rng.uniform(np.log(0.1e-9), np.log(500e-9), N_POINTS))  # [s]
    proton_mhz = rng.uniform(100.0, 1500.0, N_POINTS)
    for scheme_id, scheme in sorted(registered_schemes().items()):
        best = np.inf
        for _ in range(REPEATS):
            start = time.perf_counter()
            rates = relaxation_rates(tau_c, proton_mhz=proton_mhz, labeling=scheme)
            best = min(best, time.perf_counter() - start)
        n_arrays = sum(len(r) for r in rates.nuclei.values()) + len(rates.coherences)
        print(f"{scheme_id:14s} {N_POINTS} points, {n_arrays} rate arrays: {best * 1e3:7.1f} ms (best of {REPEATS})")
    # A 2-D grid (tau_c x field) broadcast from two axes.
    tau_axis = np.geomspace(0.1e-9, 500e-9, 400)[:, None]
    field_axis = np.linspace(100.0, 1500.0, 250)[None, :]
    start = time.perf_counter()
    rates = relaxation_rates(tau_axis, proton_mhz=field_axis, labeling=registered_schemes()["13c15n"])
    print(f"13c15n grid {rates.shape}: {(time.perf_counter() - start) * 1e3:7.1f} ms")


if __name__ == "__main__":
    main()
