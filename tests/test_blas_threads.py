"""The kernel runs with one BLAS thread, whatever the pool outside it (issue 16).

threadpoolctl (a general library that inspects and sets the thread pools of loaded native
libraries) reports the BLAS pools' sizes from inside a stand-in for the kernel call. The
suite itself runs at one thread (``conftest.py``), so each test first widens the pool.
"""

from __future__ import annotations

import numpy as np
import pytest
from threadpoolctl import threadpool_info, threadpool_limits

import lamina
from lamina import _kernel
from lamina._solver import kernel_call


def _blas_threads() -> list[int]:
    return [pool["num_threads"] for pool in threadpool_info() if pool["user_api"] == "blas"]


@pytest.fixture
def recorded(monkeypatch):
    """The BLAS pool sizes seen inside every kernel call."""
    seen = []
    original = _kernel.solve_columns

    def spy(*args, **kwargs):
        seen.append(_blas_threads())
        return original(*args, **kwargs)

    monkeypatch.setattr(_kernel, "solve_columns", spy)
    return seen


def _atmosphere(columns: int = 4):
    rng = np.random.default_rng(3)
    import xarray as xr

    tau = xr.DataArray(rng.uniform(0.1, 2.0, (columns, 3)), dims=("wavelength", "layer"))
    return lamina.make_atmosphere(tau, [0.9, 0.8, 0.99], lamina.phase.henyey_greenstein(0.6, 32))


def test_the_pool_is_one_thread_inside_the_kernel_and_restored_after(recorded):
    with threadpool_limits(limits=2, user_api="blas"):
        before = _blas_threads()
        assert max(before) == 2, "the machine's BLAS pools cannot be widened to 2 threads"
        lamina.solve(_atmosphere(), streams=16, sun_zenith=30.0, view_zenith=[0.0],
                     view_azimuth=[0.0])
        assert _blas_threads() == before
    assert recorded and all(threads == [1] * len(threads) for threads in recorded)


def test_concurrent_dask_blocks_share_one_limit(recorded):
    # dask's threads solve blocks at the same time; the pool stays limited until the last
    # block leaves and is restored then
    with threadpool_limits(limits=2, user_api="blas"):
        before = _blas_threads()
        out = lamina.solve(_atmosphere(8).chunk({"wavelength": 1}), streams=8,
                           sun_zenith=30.0)
        out.flux_up.compute(scheduler="threads", num_workers=4)
        assert _blas_threads() == before
    assert len(recorded) == 8
    assert all(threads == [1] * len(threads) for threads in recorded)


def test_nested_entries_restore_only_at_the_last_exit():
    with threadpool_limits(limits=2, user_api="blas"):
        before = _blas_threads()
        with kernel_call.single_blas_thread():
            with kernel_call.single_blas_thread():
                assert max(_blas_threads()) == 1
            assert max(_blas_threads()) == 1       # the outer entry still holds
        assert _blas_threads() == before
