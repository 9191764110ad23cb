"""Test-suite set-up: one BLAS/OpenMP thread, as the sweep's workers use, so that
numbers computed in the test process and in worker processes agree to the last digit."""
import os

for _name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")
