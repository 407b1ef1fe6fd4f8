"""Plan step and the two ends of a block: how the work is cut and each block made ready.

:func:`plan_blocks` lists the DataArrays that every block receives, with their core dims
(which :func:`xarray.apply_ufunc` keeps whole in each block; the atmosphere's extra dims,
``wavelength``, ``column``, ..., are the block's leading axes), and the block outputs with
theirs. :func:`prepare_block` turns one block's numpy arrays into a :class:`Block`:
broadcast and flattened to one column axis, the values of lazily given inputs checked, the
negligible tail of the phase moments trimmed. :func:`pack_block` gives the block's outputs
their leading axes back, in the order of :attr:`BlockPlan.output_names`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import xarray as xr

from lamina._checks import require_range
from lamina._solver.common import (
    POSITION_DIM,
    SUN_DIM,
    SURFACE_CORE_DIMS,
    SURFACE_KEYWORDS,
    Block,
    BlockSettings,
    Fields,
    Options,
    SurfaceArrays,
    ThermalSources,
    beam_cosines,
    view_cosines,
)
from lamina.atmosphere import check_moment_values
from lamina.spherical import air_mass_factors

#: Core dims of the block inputs, in the order of the block function's arguments.
INPUT_CORE_DIMS = (["layer"], ["layer"], ["layer", "moment"], [SUN_DIM], [SUN_DIM], [],
                   ["level"], [], [])

#: Phase moments below this magnitude add nothing to any output.
NEGLIGIBLE_MOMENT = 1e-15


@dataclass(frozen=True, eq=False)
class BlockPlan:
    """Everything :func:`xarray.apply_ufunc` needs to run the blocks."""

    inputs: list[xr.DataArray]
    input_core_dims: list[list[str]]
    output_names: list[str]
    output_core_dims: list[list[str]]
    output_dtypes: list[type]
    output_sizes: dict[str, int]
    settings: BlockSettings


def plan_blocks(atmosphere: xr.Dataset, options: Options, sources: ThermalSources,
                surface: SurfaceArrays | None = None,
                radius: xr.DataArray | None = None) -> BlockPlan:
    """The inputs of every block, their core dims, and the outputs' names and dims.

    A bidirectional ``surface`` appends its arrays to the inputs (after the nine of
    ``INPUT_CORE_DIMS``, with the core dims of ``common.SURFACE_CORE_DIMS``); the level
    ``radius`` of a curved planet (pseudo-spherical beam) comes next (core dim level), and
    per-pixel views (``options.pixel_views``) append their zenith and azimuth last (no core
    dims; the radiance then has no view axes).
    """
    optics = [atmosphere[name] for name in
              ("optical_depth", "single_scattering_albedo", "phase_moments")]
    inputs = [*optics, options.sun_zenith, options.sun_irradiance, options.surface_albedo,
              sources.levels, sources.surface, options.top_diffuse_radiance]
    views = options.views
    settings = BlockSettings(
        streams=options.streams, delta_m=options.delta_m,
        single_scattering_correction=options.single_scattering_correction,
        aureole_correction=options.aureole_correction,
        fourier_tolerance=options.fourier_tolerance,
        max_fourier_terms=options.max_fourier_terms,
        thermal=sources.thermal, positions=options.positions, views=views,
        lazy=any(array.chunks is not None for array in inputs),
        # check_atmosphere has checked the values of optical properties held in memory
        optics_checked=all(array.chunks is None for array in optics),
        surface=None if surface is None else surface.description,
        spherical=radius is not None,
    )
    core_in = [list(core) for core in INPUT_CORE_DIMS]
    if surface is not None:
        inputs += list(surface.arrays)
        core_in += [list(core) for core in SURFACE_CORE_DIMS]
    if radius is not None:
        inputs.append(radius)
        core_in.append(["level"])
    if views.per_pixel:
        inputs += list(options.pixel_views)
        core_in += [[], []]
    # a core dim must be one dask chunk
    inputs = [
        array.chunk({dim: -1 for dim in core}) if array.chunks is not None else array
        for array, core in zip(inputs, core_in, strict=True)
    ]
    names = ["flux_up", "flux_down_diffuse", "flux_down_direct", "mean_intensity"]
    core_out = [[SUN_DIM, POSITION_DIM]] * 4
    sizes = {POSITION_DIM: options.positions.levels.size}
    if views.per_pixel:
        names.append("radiance")
        core_out.append([SUN_DIM, POSITION_DIM, "direction"])
        sizes.update(direction=2)
    elif views.wanted:
        names.append("radiance")
        core_out.append([SUN_DIM, POSITION_DIM, "direction", "view_zenith", "view_azimuth"])
        sizes.update(direction=2, view_zenith=views.zenith.size,
                     view_azimuth=views.azimuth.size)
    names += ["fourier_terms", "cumulative_optical_depth"]
    core_out += [[], [POSITION_DIM]]
    return BlockPlan(
        inputs=inputs, input_core_dims=core_in,
        output_names=names, output_core_dims=core_out,
        output_dtypes=[np.float64] * (len(core_out) - 2) + [np.int64, np.float64],
        output_sizes=sizes, settings=settings,
    )


def prepare_block(
    tau: np.ndarray,
    albedo: np.ndarray,
    moments: np.ndarray,
    sun_zenith: np.ndarray,
    irradiance: np.ndarray,
    surface_albedo: np.ndarray,
    planck_levels: np.ndarray,
    planck_surface: np.ndarray,
    top_radiance: np.ndarray,
    settings: BlockSettings,
    surface: tuple[np.ndarray, ...] = (),
    radius: np.ndarray | None = None,
    views: tuple[np.ndarray, ...] = (),
) -> Block:
    """One block's inputs broadcast to (column, ...), checked, with moments trimmed.

    ``surface``: a bidirectional surface's arrays (core dims last), broadcast to the
    block's columns for the kernel (empty for the Lambertian ``surface_albedo``).
    ``radius``: the level radii of a curved planet (..., level), for the pseudo-spherical
    beam's air-mass factors.
    ``views``: per-pixel view zenith and azimuth in degrees (empty for shared views).
    """
    lead = np.broadcast_shapes(
        tau.shape[:-1], albedo.shape[:-1], moments.shape[:-2], sun_zenith.shape[:-1],
        irradiance.shape[:-1], surface_albedo.shape, planck_levels.shape[:-1],
        planck_surface.shape, top_radiance.shape,
        *(array.shape[:array.ndim - len(core)]
          for array, core in zip(surface, SURFACE_CORE_DIMS, strict=False)),
        *(() if radius is None else (radius.shape[:-1],)),
        *(array.shape for array in views),
    )
    nlayer = tau.shape[-1]
    nsun = sun_zenith.shape[-1]
    nmom = moments.shape[-1]
    ncol = int(np.prod(lead, dtype=np.int64))
    tau = np.broadcast_to(tau, (*lead, nlayer)).reshape(ncol, nlayer)
    albedo = np.broadcast_to(albedo, (*lead, nlayer)).reshape(ncol, nlayer)
    moments = np.broadcast_to(moments, (*lead, nlayer, nmom)).reshape(ncol, nlayer, nmom)
    zenith = np.broadcast_to(sun_zenith, (*lead, nsun)).reshape(ncol, nsun)
    irradiance = np.broadcast_to(irradiance, (*lead, nsun)).reshape(ncol, nsun)
    surface_albedo = np.broadcast_to(surface_albedo, lead).reshape(ncol)
    planck_levels = np.broadcast_to(planck_levels, (*lead, nlayer + 1)).reshape(ncol, -1)
    planck_surface = np.broadcast_to(planck_surface, lead).reshape(ncol)
    top_radiance = np.broadcast_to(top_radiance, lead).reshape(ncol)
    # values of lazily given inputs are checked here, chunk by chunk
    try:
        if not settings.optics_checked:
            require_range(tau, "optical_depth", 0.0)
            require_range(albedo, "single_scattering_albedo", 0.0, 1.0)
            check_moment_values(moments)
        require_range(zenith, "sun_zenith", 0.0, 180.0 if settings.spherical else 90.0,
                      high_open=True)
        require_range(irradiance, "sun_irradiance", 0.0)
        require_range(surface_albedo, "surface_albedo", 0.0, 1.0)
        require_range(planck_levels, "temperature (as Planck radiance)", 0.0)
        require_range(top_radiance, "top_diffuse_radiance", 0.0)
        pixel_views = _view_columns(views, lead, ncol)
    except ValueError as error:
        if settings.lazy:
            raise ValueError(f"{error} (the index counts within one dask chunk)") from None
        raise
    factors = reaches = None
    if radius is not None:
        radius = np.broadcast_to(radius, (*lead, nlayer + 1)).reshape(ncol, 1, nlayer + 1)
        factors, reaches = _beam_paths(radius, zenith)
    return Block(
        air_mass_factors=factors, beam_reaches=reaches,
        lead=lead, optical_depth=tau, single_scattering_albedo=albedo,
        phase_moments=_trim_moments(moments), beam_cosines=beam_cosines(zenith),
        sun_irradiance=irradiance, surface_albedo=surface_albedo,
        planck_levels=planck_levels, planck_surface=planck_surface,
        top_diffuse_radiance=top_radiance,
        surface=_surface_columns(surface, lead, ncol),
        view_cosines=pixel_views[0], view_azimuths=pixel_views[1],
    )


def _beam_paths(radius: np.ndarray, zenith: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Air-mass factors (column, sun, level, layer) and where the beam reaches a level.

    Computed once per distinct pair of level radii and sun angles (the wavelengths of a
    spectrum share them) and broadcast to the block's columns (read-only views).
    """
    keys = np.concatenate([radius[:, 0, :], zenith], axis=1)
    distinct, inverse = np.unique(keys, axis=0, return_inverse=True)
    inverse = np.reshape(inverse, -1)
    nlevel = radius.shape[-1]
    try:
        factors, reaches = air_mass_factors(distinct[:, None, :nlevel], distinct[:, nlevel:])
    except ValueError as error:   # lazily given altitudes are first seen here
        raise ValueError(f"altitude (as planet_radius + altitude): {error}") from None
    if distinct.shape[0] == 1:
        factors = np.broadcast_to(factors, (zenith.shape[0], *factors.shape[1:]))
        reaches = np.broadcast_to(reaches, (zenith.shape[0], *reaches.shape[1:]))
    else:
        factors, reaches = factors[inverse], reaches[inverse]
    dark = ~np.any(reaches, axis=-1)
    if np.any(dark):
        column, sun = np.argwhere(dark)[0]
        raise ValueError(
            f"sun_zenith: the sun is below the horizon at every level (column {column}, sun "
            f"angle {sun}: {zenith[column, sun]:g} degrees); the beam reaches no level")
    return factors, reaches


def _view_columns(views: tuple[np.ndarray, ...], lead: tuple[int, ...],
                  ncol: int) -> tuple[np.ndarray | None, np.ndarray | None]:
    """Per-pixel views as the kernel's (column, 1) cosines and azimuths (radians), checked."""
    if not views:
        return None, None
    zenith, azimuth = (np.broadcast_to(array, lead).reshape(ncol, 1) for array in views)
    require_range(zenith, "view_zenith", 0.0, 90.0)
    require_range(azimuth, "view_azimuth")
    return (np.ascontiguousarray(view_cosines(zenith)),
            np.ascontiguousarray(np.radians(azimuth)))


def _surface_columns(surface: tuple[np.ndarray, ...], lead: tuple[int, ...],
                     ncol: int) -> dict[str, np.ndarray] | None:
    """A bidirectional surface's arrays as (column, core...) float64, by kernel keyword."""
    if not surface:
        return None
    columns = {}
    for name, array, core in zip(SURFACE_KEYWORDS, surface, SURFACE_CORE_DIMS, strict=True):
        tail = array.shape[array.ndim - len(core):]
        columns[name] = np.ascontiguousarray(
            np.broadcast_to(array, (*lead, *tail)).reshape(ncol, *tail), dtype=np.float64)
    return columns


def _trim_moments(moments: np.ndarray) -> np.ndarray:
    """Moments with the negligible tail of each layer zeroed and the common tail dropped.

    The tail is set to zero per layer (so that no result depends on which other columns share
    a dask chunk) and dropped where every layer of the block has ended. Where every zeroed
    value is already +0.0 (the tails of most phase functions), the kept moments are returned
    as they are, without a copy (a view of the block's input when nothing is dropped).
    """
    nmom = moments.shape[-1]
    significant = (moments > NEGLIGIBLE_MOMENT) | (moments < -NEGLIGIBLE_MOMENT)
    last = nmom - 1 - np.argmax(significant[..., ::-1], axis=-1)   # (col, layer)
    last = np.where(significant.any(axis=-1), last, 0)
    del significant
    keep = int(last.max()) + 1
    if _zero_tails(moments, last, keep):
        kept = moments[..., :keep]
        return kept if keep == nmom else np.ascontiguousarray(kept)
    return np.where(np.arange(keep) <= last[..., None], moments[..., :keep], 0.0)


#: Elements of the moments looked at together by _zero_tails (bounds its temporaries).
_TAIL_SLAB = 1 << 22


def _zero_tails(moments: np.ndarray, last: np.ndarray, keep: int) -> bool:
    """True if every moment after ``last`` (up to ``keep``) is +0.0 bit for bit."""
    if keep == 1 or not moments.size:
        return True
    bits = moments[..., :keep].view(np.int64) if moments.dtype == np.float64 else None
    if bits is None:
        return False
    ncol = moments.shape[0]
    step = max(1, _TAIL_SLAB // max(1, moments[0, ..., :keep].size))
    degree = np.arange(keep)
    for start in range(0, ncol, step):
        tail = degree > last[start:start + step, ..., None]
        if np.any(bits[start:start + step][tail]):
            return False
    return True


def pack_block(block: Block, fields: Fields, depth: np.ndarray,
               radiance: bool) -> tuple[np.ndarray, ...]:
    """The block's outputs with their leading axes back, in the plan's order of names."""
    outputs = [fields.flux_up, fields.flux_down_diffuse, fields.flux_down_direct,
               fields.mean_intensity]
    if radiance:
        # per-pixel views: the kernel's one view axis pair goes
        outputs.append(fields.radiance[..., 0, 0] if block.view_cosines is not None
                       else fields.radiance)
    lead = block.lead
    outputs = [array.reshape(*lead, *array.shape[1:]) for array in outputs]
    outputs.append(fields.fourier_terms.reshape(lead))
    outputs.append(depth.reshape(*lead, depth.shape[-1]))
    return tuple(outputs)
