"""The test session's own environment: BLAS limited to one thread (see conftest.py).

Reference: threadpoolctl (a general library that inspects the thread pools of loaded native
libraries), which reports each BLAS library's current thread count.
"""

from __future__ import annotations

import scipy.linalg
from threadpoolctl import threadpool_info

import lamina


def test_blas_pools_are_limited_to_one_thread_in_the_test_session():
    # the kernel calls scipy's LAPACK (scipy.linalg.cython_lapack): its BLAS must be among
    # the pools found, so that the check is not vacuous
    assert lamina.solve is not None and scipy.linalg.lapack is not None
    blas = [pool for pool in threadpool_info() if pool["user_api"] == "blas"]
    assert blas, "threadpoolctl finds no BLAS library in the test process"
    assert any("scipy" in pool["filepath"] for pool in blas), blas
    assert all(pool["num_threads"] == 1 for pool in blas), blas
