"""Imported before numpy by the benchmarks whose goal says "on one core": one BLAS/OpenMP thread."""

import os

for _name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_name] = "1"
