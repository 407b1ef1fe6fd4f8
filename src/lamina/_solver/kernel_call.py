"""Solve step: one call of the Cython kernel for a block, and its errors in words.

The kernel (:func:`lamina._kernel.solve_columns`) solves every column, sun angle and Fourier
term of the block in one call without the GIL and fills preallocated outputs; it raises
nothing, but reports each column's failure in ``status`` (code, layer, Fourier term, LAPACK
info). :func:`solve_block` allocates the outputs, makes every input the C-contiguous
float64 array the kernel's signature states, and turns a failure into a
:class:`~lamina.SolverError` that names the column, the layer, the Fourier term and the
LAPACK routine. Double-Gauss quadrature: Sykes (1951).
"""

from __future__ import annotations

import numpy as np

from lamina import _kernel
from lamina._solver.common import Block, BlockSettings, Fields, Layers, SolverError
from lamina.quadrature import double_gauss

#: The kernel's status code for a non-finite result; codes 1 and 2 are the Cholesky
#: factorisations of the layer matrices (a truncated phase function that is not positive).
_NON_FINITE = 9
_CHOLESKY = (1, 2)


def solve_block(block: Block, layers: Layers, settings: BlockSettings) -> Fields:
    """The kernel's fields of the (scaled) problem for every column of a block."""
    mu, weights = double_gauss(settings.streams)
    positions, views = settings.positions, settings.views
    ncol, nsun = block.beam_cosines.shape
    npos, nvz, nva = positions.levels.size, views.cosines.size, views.azimuth_radians.size
    flux_up = np.empty((ncol, nsun, npos))
    flux_down = np.empty((ncol, nsun, npos))
    mean_intensity = np.empty((ncol, nsun, npos))
    radiance = np.empty((ncol, nsun, npos, 2, nvz, nva))
    terms = np.empty(ncol, dtype=np.int64)
    status = np.empty((ncol, 4), dtype=np.int64)
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
        flux_up, flux_down, mean_intensity, radiance, terms, status,
        **(block.surface or {}),
        **({} if block.view_cosines is None else {
            "column_view_cosines": block.view_cosines,
            "column_view_azimuths": block.view_azimuths}),
    )
    _raise_failure(status)
    return Fields(flux_up=flux_up, flux_down_diffuse=flux_down,
                  mean_intensity=mean_intensity, radiance=radiance, fourier_terms=terms)


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
