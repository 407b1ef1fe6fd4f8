"""The floor of the solver's steps: what several of them share.

The error type, the option constants, the private dim names, the records that one step hands
to the next, and the geometry helpers (cosines of the beam, of the view directions and of the
scattering angle; optical depth at the output positions). Every step module imports from
here and from library modules only, never from another step, so that the steps can change
(or be added) independently; see :mod:`lamina._solver`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import xarray as xr

from lamina._checks import as_float_array, require_range

#: Cosine used for a view zenith of exactly 90 degrees (the limit mu -> 0 is taken there).
GRAZING_COSINE = 1e-9

#: Earth-air defaults for heating rates: standard gravity (CODATA / ISO 80000) and the
#: specific heat of dry air at constant pressure near 300 K (common practice).
EARTH_GRAVITY = 9.80665
DRY_AIR_HEAT_CAPACITY = 1004.0

SECONDS_PER_DAY = 86400.0

#: Private core dims of the blocks: sun angles and output positions (renamed or dropped in
#: the output Dataset).
SUN_DIM = "_sun"
POSITION_DIM = "_position"

#: Private core dims of a bidirectional surface's block inputs (``surface_terms``)
TERM_DIM = "_term"
QUADRATURE_DIM = "_quadrature"
INCIDENT_DIM = "_incident"
VIEW_DIM = "_view"
VIEW_AZIMUTH_DIM = "_view_azimuth"

#: Core dims of the surface's block inputs, in the order of SurfaceArrays.arrays
#: (and of the kernel's keywords).
SURFACE_CORE_DIMS = (
    [TERM_DIM, QUADRATURE_DIM, INCIDENT_DIM],
    [SUN_DIM, TERM_DIM, QUADRATURE_DIM],
    [TERM_DIM, VIEW_DIM, INCIDENT_DIM],
    [SUN_DIM, VIEW_DIM, VIEW_AZIMUTH_DIM],
    [QUADRATURE_DIM],
    [VIEW_DIM],
)

#: The kernel's keyword for each array, in the same order.
SURFACE_KEYWORDS = ("surface_fourier", "surface_beam_fourier", "surface_view_fourier",
                    "surface_view_beam", "surface_emissivity", "surface_view_emissivity")


class SolverError(RuntimeError):
    """The kernel could not solve a column (a LAPACK failure or a non-finite result)."""


# the public home of the error (tracebacks and pickles name lamina.solve.SolverError, as
# before the solver was split into steps)
SolverError.__module__ = "lamina.solve"


# ------------------------------------------------------------------ records between steps


@dataclass(frozen=True, eq=False)
class Positions:
    """Output positions: fractional level numbers, and the layer and fraction of each."""

    levels: np.ndarray
    layer: np.ndarray
    fraction: np.ndarray


@dataclass(frozen=True, eq=False)
class Views:
    """View directions: degrees (the output coordinates) and what the kernel takes."""

    zenith: np.ndarray
    azimuth: np.ndarray
    cosines: np.ndarray
    azimuth_radians: np.ndarray
    #: True for one view per pixel (``view_zenith``/``view_azimuth`` given as DataArrays
    #: along the atmosphere's extra dims): each column has its own view (block inputs),
    #: and the arrays above are one placeholder angle that sets the kernel's sizes
    per_pixel: bool = False

    @property
    def wanted(self) -> bool:
        """True if radiances are asked for (else only the azimuth-independent problem)."""
        return bool(self.zenith.size and self.azimuth.size)


@dataclass(frozen=True, eq=False)
class Options:
    """Every option of :func:`lamina.solve`, checked (output of the check step)."""

    streams: int
    delta_m: bool
    single_scattering_correction: bool
    aureole_correction: bool
    fourier_tolerance: float
    max_fourier_terms: int
    #: as given (checked positive); they only scale the heating rate
    gravity: Any
    heat_capacity: Any
    #: True if the user gave a sun (a zenith angle, with or without an irradiance)
    beam: bool
    #: sun zenith (degrees) with the private sun dim; True if the user gave a list of suns
    sun_zenith: xr.DataArray
    sun_list: bool
    sun_irradiance: xr.DataArray
    surface_albedo: xr.DataArray
    top_diffuse_radiance: xr.DataArray
    #: the ``units`` attributes of sun_irradiance and top_diffuse_radiance, where given
    irradiance_units: str | None
    top_radiance_units: str | None
    views: Views
    positions: Positions
    #: True when outputs are on every level (no output_levels given)
    on_levels: bool
    #: per-pixel views (``views.per_pixel``): zenith and azimuth in degrees as DataArrays
    #: along the atmosphere's extra dims
    pixel_views: tuple[xr.DataArray, xr.DataArray] | None = None


@dataclass(frozen=True, eq=False)
class ThermalSources:
    """Planck radiance at the levels and at the surface (zeros without thermal emission)."""

    levels: xr.DataArray
    surface: xr.DataArray
    #: units of the Planck radiance, None without thermal emission
    units: str | None

    @property
    def thermal(self) -> bool:
        """True if there is thermal emission."""
        return self.units is not None


@dataclass(frozen=True, eq=False)
class SurfaceArrays:
    """A bidirectional surface's block inputs (see ``surface_terms``) and its description."""

    arrays: tuple[xr.DataArray, ...]
    description: str


@dataclass(frozen=True, eq=False)
class BlockSettings:
    """What every block of columns needs, the same for all blocks."""

    streams: int
    delta_m: bool
    single_scattering_correction: bool
    aureole_correction: bool
    fourier_tolerance: float
    max_fourier_terms: int
    thermal: bool
    positions: Positions
    views: Views
    #: True if any input is dask-backed (error messages then say an index is in a chunk)
    lazy: bool
    #: True if check_atmosphere has seen the values of the optical properties
    optics_checked: bool
    #: the bidirectional surface's description (None: the Lambertian surface_albedo)
    surface: str | None = None
    #: True for a pseudo-spherical beam (solve(planet_radius=)): the level radii are the
    #: last block input
    spherical: bool = False
    #: Stokes components solved (1: the scalar kernel; 3, 4: ``polarized``)
    stokes: int = 1


@dataclass(frozen=True, eq=False)
class Block:
    """One block of columns, flattened to a leading column axis and checked.

    ``lead`` is the block's broadcast shape of leading axes (restored by the pack step).
    ``phase_moments`` have their tail below 1e-15 trimmed; ``beam_cosines`` are mu0 of every
    column and sun.
    """

    lead: tuple[int, ...]
    optical_depth: np.ndarray
    single_scattering_albedo: np.ndarray
    phase_moments: np.ndarray
    beam_cosines: np.ndarray
    sun_irradiance: np.ndarray
    surface_albedo: np.ndarray
    planck_levels: np.ndarray
    planck_surface: np.ndarray
    top_diffuse_radiance: np.ndarray
    #: the kernel's arrays of a bidirectional surface by keyword, (column, ...); None for
    #: the Lambertian surface_albedo
    surface: dict[str, np.ndarray] | None = None
    #: the pseudo-spherical beam's air-mass factors (column, sun, level, layer) and where
    #: it reaches a level (column, sun, level); None for the plane-parallel beam
    air_mass_factors: np.ndarray | None = None
    beam_reaches: np.ndarray | None = None
    #: per-pixel views: cosines and azimuths (radians) of each column's view, (column, 1);
    #: None for views shared by every column
    view_cosines: np.ndarray | None = None
    view_azimuths: np.ndarray | None = None


@dataclass(frozen=True, eq=False)
class Layers:
    """The layers the kernel sees (delta-M scaled, or not), and the truncated fraction f."""

    optical_depth: np.ndarray
    single_scattering_albedo: np.ndarray
    phase_moments: np.ndarray
    truncation: np.ndarray


@dataclass(eq=False)
class Fields:
    """The radiation field of one block, (column, sun, position, ...); filled step by step.

    The kernel gives every field of the scaled problem; the corrections then report the
    direct beam unscaled (``flux_down_direct``) and correct the radiances.
    """

    flux_up: np.ndarray
    flux_down_diffuse: np.ndarray
    mean_intensity: np.ndarray
    radiance: np.ndarray
    fourier_terms: np.ndarray
    flux_down_direct: np.ndarray | None = None


# ------------------------------------------------------------------ option arrays


def extra_dims(atmosphere: xr.Dataset) -> dict[str, int]:
    """The atmosphere's extra dims (besides layer, level and moment), in their order."""
    dims = {}
    for name in ("optical_depth", "single_scattering_albedo", "phase_moments"):
        for dim in atmosphere[name].dims:
            if dim not in ("layer", "level", "moment"):
                dims.setdefault(str(dim), atmosphere.sizes[dim])
    return dims


def option_array(value: object, name: str, extra: dict[str, int] | None = None) -> xr.DataArray:
    """A per-column option as a DataArray (0-d for scalars).

    A numpy array (or nested list) labels the atmosphere's extra dims ``extra`` as numpy
    broadcasting would: its last axis is the last extra dim, and so on leftward; each axis
    has that dim's size or 1.
    """
    if isinstance(value, xr.DataArray):
        if value.dtype.kind not in "biuf":
            raise TypeError(f"{name} must be real numbers; got values of dtype {value.dtype}")
        return value.astype(np.float64)
    array = as_float_array(value, name)
    if array.ndim == 0:
        return xr.DataArray(array)
    names = list(extra or {})
    if array.ndim > len(names):
        which = f"{len(names)} extra dims {tuple(names)}" if names else "no extra dims"
        raise ValueError(
            f"{name} has {array.ndim} axes but the atmosphere has {which}: give a scalar, an "
            "array whose axes are the atmosphere's last extra dims, or a DataArray"
        )
    dims = names[len(names) - array.ndim:]
    for axis, dim in enumerate(dims):
        if array.shape[axis] not in (1, extra[dim]):
            raise ValueError(
                f"{name} axis {axis} has {array.shape[axis]} values but the atmosphere's "
                f"dim {dim!r} has {extra[dim]}"
            )
    squeezed = [axis for axis in range(array.ndim) if array.shape[axis] == 1]
    return xr.DataArray(np.squeeze(array, axis=tuple(squeezed)),
                        dims=[dim for axis, dim in enumerate(dims) if axis not in squeezed])


def check_option_coordinates(array: xr.DataArray, name: str, atmosphere: xr.Dataset) -> None:
    """An option DataArray has no layer/level/moment dim and the atmosphere's coordinates."""
    wrong = [dim for dim in array.dims if dim in ("layer", "level", "moment", "element")]
    if wrong:
        raise ValueError(f"{name} must not have the atmosphere's {wrong[0]!r} dim (one value "
                         "per column: a scalar or an array along the atmosphere's extra dims)")
    for dim in array.dims:
        if (dim in array.indexes and dim in atmosphere.indexes
                and not array.indexes[dim].equals(atmosphere.indexes[dim])):
            raise ValueError(f"{name} has other {dim!r} coordinates than the atmosphere; give "
                             f"it the atmosphere's {dim} values")


def check_option_values(array: xr.DataArray, name: str, **bounds: Any) -> None:
    """Range check of an option's values held in memory (lazy ones: in each block)."""
    if array.chunks is None:
        labels = ["sun angle" if dim == SUN_DIM else str(dim) for dim in array.dims]
        require_range(np.asarray(array.values), name, labels=labels, **bounds)


# ------------------------------------------------------------------ geometry


def beam_cosines(sun_zenith: np.ndarray) -> np.ndarray:
    """mu0 = cos(theta_0) of sun zenith angles in degrees, C-contiguous."""
    return np.ascontiguousarray(np.cos(np.radians(sun_zenith)))


def view_cosines(view_zenith: np.ndarray) -> np.ndarray:
    """cos of view zenith angles in degrees; 90 degrees becomes GRAZING_COSINE."""
    return np.maximum(np.cos(np.radians(view_zenith)), GRAZING_COSINE)


def scattering_cosines(mu0: np.ndarray, views: Views, block: Block | None = None) -> np.ndarray:
    """cos of the scattering angle from the beam into each view direction.

    The beam propagates along -mu0; the view directions are up (+mu) and down (-mu) at each
    relative azimuth. Returns (column, sun, direction, view_zenith, view_azimuth), direction
    0 up and 1 down. Per-pixel views (``views.per_pixel``) are the ``block``'s own.
    """
    sin0 = np.sqrt(1.0 - mu0**2)[:, :, None, None, None]
    cos0 = mu0[:, :, None, None, None]
    sign = np.array([1.0, -1.0])[None, None, :, None, None]
    if views.per_pixel:
        muv = block.view_cosines[:, None, None, :, None]
        azimuth = np.cos(block.view_azimuths)[:, None, None, None, :]
    else:
        muv = views.cosines[None, None, None, :, None]
        azimuth = np.cos(views.azimuth_radians)[None, None, None, None, :]
    sinv = np.sqrt(1.0 - muv**2)
    cosine = -sign * muv * cos0 + sinv * sin0 * azimuth
    return np.clip(cosine, -1.0, 1.0)


def depth_at_positions(optical_depth: np.ndarray, positions: Positions) -> np.ndarray:
    """Optical depth from the top at each output position, (column, position)."""
    ncol = optical_depth.shape[0]
    top = np.concatenate([np.zeros((ncol, 1)), np.cumsum(optical_depth, axis=1)], axis=1)
    layer = positions.layer
    return top[:, layer] + positions.fraction * optical_depth[:, layer]


# ------------------------------------------------------------------ pseudo-spherical beam

#: Smallest effective secant of a layer in the pseudo-spherical beam. Across a layer the
#: slant optical depth can grow by less than the vertical one (near the horizon the ray to a
#: lower level crosses the upper shells more steeply), and in twilight it can even shrink;
#: the layer's beam source, an exponential in the vertical depth, then decays no faster
#: than exp(-1e-6 t), i.e. it is held at its top value.
SPHERICAL_SECANT_FLOOR = 1e-6


def spherical_beam(factors: np.ndarray, reaches: np.ndarray,
                   optical_depth: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Slant optical depth to each level and effective cosine of each layer.

    The pseudo-spherical beam (Dahlback and Stamnes 1991): ``factors`` (column, sun, level,
    layer) are :func:`lamina.spherical.air_mass_factors`, ``reaches`` (column, sun, level)
    where the beam reaches a level, ``optical_depth`` (column, layer). Returns the slant
    depth (column, sun, level), inf where the planet blocks the beam, and each layer's
    cosine (column, sun, layer), its vertical over its slant optical depth (the secant at
    least SPHERICAL_SECANT_FLOOR). The layer in which the shadow falls (top lit, bottom
    dark) keeps the cosine of the layer above it (the top layer: its depth over the slant
    depth to the top level); dark layers and empty ones get 1 (their source is zero or
    empty).
    """
    slant = np.einsum("csij,cj->csi", factors, optical_depth, optimize=False)
    slant = np.where(reaches, slant, np.inf)
    tau = np.broadcast_to(optical_depth[:, None, :], slant[..., 1:].shape)
    safe = np.where(tau > 0.0, tau, 1.0)
    with np.errstate(invalid="ignore"):
        step = slant[..., 1:] - slant[..., :-1]           # inf - inf: nan in dark layers
    finite = np.isfinite(step)
    secant = np.where(finite & (tau > 0.0),
                      np.maximum(np.where(finite, step, 0.0) / safe, SPHERICAL_SECANT_FLOOR),
                      1.0)
    top = slant[..., :1]
    first = np.where((tau[..., :1] > 0.0) & np.isfinite(top),
                     np.maximum(np.where(np.isfinite(top), top, 0.0) / safe[..., :1],
                                SPHERICAL_SECANT_FLOOR), 1.0)
    above = np.concatenate([first, secant[..., :-1]], axis=-1)
    partial = np.isfinite(slant[..., :-1]) & ~np.isfinite(slant[..., 1:])
    secant = np.where(partial, above, secant)
    return np.ascontiguousarray(slant), np.ascontiguousarray(1.0 / secant)


def slant_at_positions(slant: np.ndarray, cosine: np.ndarray, optical_depth: np.ndarray,
                       positions: Positions) -> np.ndarray:
    """Slant optical depth of the beam to each output position, (column, sun, position).

    On a level it is that level's; inside a layer the beam decays from the layer's top with
    the layer's cosine, as its source does in the kernel.
    """
    layer, fraction = positions.layer, positions.fraction
    inside = slant[:, :, layer] + fraction * optical_depth[:, None, layer] / cosine[:, :, layer]
    return np.where(fraction == 1.0, slant[:, :, np.minimum(layer + 1, slant.shape[-1] - 1)],
                    np.where(fraction == 0.0, slant[:, :, layer], inside))
