"""Solve step: one call of the Cython kernel for a block, and its errors in words.

The kernel (:func:`lamina._kernel.solve_columns`) solves every column, sun angle and Fourier
term of the block in one call without the GIL and fills preallocated outputs; it raises
nothing, but reports each column's failure in ``status`` (code, layer, Fourier term, LAPACK
info). :func:`solve_block` allocates the outputs, makes every input the C-contiguous
float64 array the kernel's signature states, and turns a failure into a
:class:`~lamina.SolverError` that names the column, the layer, the Fourier term and the
LAPACK routine. Double-Gauss quadrature: Sykes (1951).

The kernel runs with one BLAS thread (:func:`single_blas_thread`): its LAPACK calls are
small (n x n and banded), and OpenBLAS's thread pool, which it would otherwise start at 64
and more streams, made flux runs several times slower (``benchmarks/threads.py``).
"""

from __future__ import annotations

import contextlib
import functools
import threading
from collections.abc import Iterator

import numpy as np
from threadpoolctl import ThreadpoolController

from lamina import _kernel
from lamina._solver.common import (
    Block,
    BlockSettings,
    Fields,
    Layers,
    SolverError,
    spherical_beam,
)
from lamina.quadrature import double_gauss

#: The kernel's status code for a non-finite result; codes 1 and 2 are the Cholesky
#: factorisations of the layer matrices (a truncated phase function that is not positive).
_NON_FINITE = 9
_CHOLESKY = (1, 2)

#: False only to measure the default thread pool (benchmarks/threads.py).
LIMIT_BLAS_THREADS = True

# OpenBLAS's thread count (pthreads builds) is process-wide: blocks solved at the same time
# (dask threads) share one limit, set by the first to enter and restored by the last to
# leave, under lamina's own lock. threadpoolctl's context manager inspects the loaded
# libraries at every entry (about 2 ms); the controller is made once, and setting a count
# costs microseconds. threadpoolctl lets only one Python thread (the first to limit, while
# it lives) change a process-wide pool and silently ignores the others (a dask worker's
# limit would then do nothing), so the limit is set through the library's own setter; an
# OpenMP build's limit is per thread and is set in each thread that enters.
_POOL_LOCK = threading.Lock()
_pool = {"users": 0, "restore": [], "libraries": None}


def _blas_libraries() -> tuple[list, list]:
    """(process-wide, per-thread) BLAS library controllers, found once."""
    if _pool["libraries"] is None:
        found = ThreadpoolController().select(user_api="blas").lib_controllers
        _pool["libraries"] = (
            [library for library in found if library.threading_layer != "openmp"],
            [library for library in found if library.threading_layer == "openmp"])
    return _pool["libraries"]


def _limit(libraries: list) -> list:
    """Set each library to one thread; the (library, previous count) pairs to restore."""
    previous = [(library, library.num_threads) for library in libraries]
    _set_threads([(library, 1) for library, threads in previous if threads != 1])
    return [(library, threads) for library, threads in previous if threads != 1]


def _set_threads(counts: list) -> None:
    for library, threads in counts:
        getattr(library, "_real_set_num_threads", library.set_num_threads)(threads)


@contextlib.contextmanager
def single_blas_thread() -> Iterator[None]:
    """One BLAS thread while inside (nested and concurrent entries share one limit)."""
    if not LIMIT_BLAS_THREADS:
        yield
        return
    shared, own = _blas_libraries()
    with _POOL_LOCK:
        if _pool["users"] == 0:
            _pool["restore"] = _limit(shared)
        _pool["users"] += 1
    restore_own = _limit(own)
    try:
        yield
    finally:
        _set_threads(restore_own)
        with _POOL_LOCK:
            _pool["users"] -= 1
            if _pool["users"] == 0:
                _set_threads(_pool["restore"])


@functools.lru_cache(maxsize=16)
def _quadrature(streams: int) -> tuple[np.ndarray, np.ndarray]:
    """Double-Gauss cosines and weights, computed once per stream count (read-only)."""
    mu, weights = double_gauss(streams)
    mu.flags.writeable = False
    weights.flags.writeable = False
    return mu, weights


def solve_block(block: Block, layers: Layers, settings: BlockSettings) -> Fields:
    """The kernel's fields of the (scaled) problem for every column of a block."""
    mu, weights = _quadrature(settings.streams)
    positions, views = settings.positions, settings.views
    ncol, nsun = block.beam_cosines.shape
    npos, nvz, nva = positions.levels.size, views.cosines.size, views.azimuth_radians.size
    flux_up = np.empty((ncol, nsun, npos))
    flux_down = np.empty((ncol, nsun, npos))
    mean_intensity = np.empty((ncol, nsun, npos))
    radiance = np.empty((ncol, nsun, npos, 2, nvz, nva))
    terms = np.empty(ncol, dtype=np.int64)
    status = np.empty((ncol, 4), dtype=np.int64)
    with single_blas_thread():
        _call_kernel(block, layers, settings, mu, weights,
                     (flux_up, flux_down, mean_intensity, radiance, terms, status))
    _raise_failure(status)
    return Fields(flux_up=flux_up, flux_down_diffuse=flux_down,
                  mean_intensity=mean_intensity, radiance=radiance, fourier_terms=terms)


def _call_kernel(block: Block, layers: Layers, settings: BlockSettings, mu: np.ndarray,
                 weights: np.ndarray, outputs: tuple[np.ndarray, ...]) -> None:
    positions, views = settings.positions, settings.views
    _kernel.solve_columns(
        layers.optical_depth, np.ascontiguousarray(layers.single_scattering_albedo),
        layers.phase_moments, block.beam_cosines,
        np.ascontiguousarray(block.sun_irradiance, dtype=np.float64),
        np.ascontiguousarray(block.surface_albedo, dtype=np.float64),
        np.ascontiguousarray(block.planck_levels, dtype=np.float64),
        np.ascontiguousarray(block.planck_surface, dtype=np.float64),
        np.ascontiguousarray(block.top_diffuse_radiance, dtype=np.float64),
        mu, weights, positions.layer, positions.fraction,
        np.ascontiguousarray(views.cosines), np.ascontiguousarray(views.azimuth_radians),
        settings.max_fourier_terms, settings.fourier_tolerance, settings.thermal,
        *outputs,
        **(block.surface or {}),
        **_spherical_keywords(block, layers),
        **({} if block.view_cosines is None else {
            "column_view_cosines": block.view_cosines,
            "column_view_azimuths": block.view_azimuths}),
    )


def _spherical_keywords(block: Block, layers: Layers) -> dict[str, np.ndarray]:
    """The pseudo-spherical beam of the scaled layers for the kernel (none: plane-parallel)."""
    if block.air_mass_factors is None:
        return {}
    slant, cosine = spherical_beam(block.air_mass_factors, block.beam_reaches,
                                   layers.optical_depth)
    return {"beam_slant_optical_depth": slant, "beam_layer_cosine": cosine}


def _raise_failure(status: np.ndarray) -> None:
    """SolverError for the first column of the block that failed, if any."""
    failed = np.flatnonzero(status[:, 0])
    if not failed.size:
        return
    code, layer, term, info = status[failed[0]]
    if code == _NON_FINITE:
        raise SolverError(
            f"the solver produced a non-finite result in column {failed[0]} of this block "
            "(are the inputs, e.g. sun_irradiance, too large for double precision?)"
        )
    hint = ""
    if code in _CHOLESKY:
        hint = ("; the phase function truncated to the streams in use is not a valid "
                "(non-negative) phase function there: use delta_m=True or more streams")
    raise SolverError(
        f"the solver failed in column {failed[0]} of this block (layer {layer}, Fourier "
        f"term {term}): {_kernel.STATUS_NAMES.get(int(code), 'unknown failure')}"
        f" (LAPACK info {info}){hint}"
    )
