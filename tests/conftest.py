"""Test-session settings shared by every test module."""

import os

# The suite makes many tiny matrix exponentials (the reference propagator); multithreaded BLAS only adds
# thread start-up to each of them on a small machine. Set before numpy is imported by any test module.
for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")
