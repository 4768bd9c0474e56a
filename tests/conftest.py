"""Shared test settings: headless plotting and single-threaded BLAS.

The matrices here are small (N ≲ 400); OpenBLAS threads only add hand-off cost, and on a
busy 2-core machine they slow eigh by orders of magnitude (measured: 0.9 s vs 3 ms at N = 300).
"""

import os

os.environ.setdefault("MPLBACKEND", "Agg")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

from threadpoolctl import threadpool_limits  # a declared dependency: no fallback

threadpool_limits(limits=1, user_api="blas")
