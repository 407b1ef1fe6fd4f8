"""Check step: the solver's options and geometry, before any work is planned.

Scalar options (streams, the Fourier series controls, the heating-rate constants), the sun
geometry (one angle or a list of suns sharing one homogeneous solution), the beam, surface
and top-boundary options as DataArrays along the atmosphere's extra dims, the view
directions and the output positions (fractional level numbers). Values held in memory are
checked here; values of dask-backed options are checked block by block
(:func:`lamina._solver.blocks.prepare_block`). The checks run in the order of the
arguments of :func:`lamina.solve`, so that the first bad argument is the one reported.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from lamina._checks import as_float_array, require_range
from lamina._solver.common import (
    SUN_DIM,
    Options,
    Positions,
    Views,
    check_option_coordinates,
    check_option_values,
    extra_dims,
    option_array,
    view_cosines,
)


def check_options(
    atmosphere: xr.Dataset,
    *,
    streams: object,
    sun_zenith: object,
    sun_irradiance: object,
    surface_albedo: object,
    view_zenith: object,
    view_azimuth: object,
    top_diffuse_radiance: object,
    output_levels: object,
    delta_m: object,
    single_scattering_correction: object,
    aureole_correction: object,
    fourier_tolerance: object,
    max_fourier_terms: object,
    gravity: object,
    heat_capacity: object,
    spherical: bool = False,
) -> Options:
    """Every option of :func:`lamina.solve` except the thermal source, checked.

    ``spherical``: a curved planet's pseudo-spherical beam, whose sun may stand up to 180
    degrees from the zenith (the beam must reach some level: checked with the geometry).
    """
    streams = _check_streams(streams)
    tolerance = float(as_float_array(fourier_tolerance, "fourier_tolerance"))
    if not (np.isfinite(tolerance) and tolerance > 0.0):
        raise ValueError(f"fourier_tolerance must be positive; got {tolerance:g}")
    max_terms = _check_max_terms(max_fourier_terms, streams)
    flags = {name: _check_flag(value, name) for name, value in (
        ("delta_m", delta_m), ("single_scattering_correction", single_scattering_correction),
        ("aureole_correction", aureole_correction))}
    for name, value in (("gravity", gravity), ("heat_capacity", heat_capacity)):
        number = float(as_float_array(value, name))
        if not (np.isfinite(number) and number > 0.0):
            raise ValueError(f"{name} must be positive; got {number:g}")

    # no default adds light: a beam only when a sun is given, a black surface by default
    beam = sun_zenith is not None
    if sun_irradiance is not None and sun_zenith is None:
        given = option_array(sun_irradiance, "sun_irradiance", extra_dims(atmosphere))
        if given.chunks is not None or np.any(given.values != 0.0):
            raise ValueError("sun_irradiance needs sun_zenith: give the zenith angle of the "
                             "beam (degrees)")
        sun_irradiance = None   # a sun of zero irradiance is no sun
    zenith, sun_list = sun_geometry(0.0 if sun_zenith is None else sun_zenith)
    check_option_values(zenith, "sun_zenith", low=0.0, high=180.0 if spherical else 90.0,
                        high_open=True)
    extra = extra_dims(atmosphere)
    irradiance = option_array(_default(sun_irradiance, 1.0 if beam else 0.0),
                              "sun_irradiance", extra)
    check_option_coordinates(irradiance, "sun_irradiance", atmosphere)
    check_option_values(irradiance, "sun_irradiance", low=0.0)
    if SUN_DIM not in irradiance.dims:
        irradiance = irradiance.expand_dims({SUN_DIM: zenith.sizes[SUN_DIM]})
    albedo = option_array(_default(surface_albedo, 0.0), "surface_albedo", extra)
    check_option_coordinates(albedo, "surface_albedo", atmosphere)
    check_option_values(albedo, "surface_albedo", low=0.0, high=1.0)
    top = option_array(top_diffuse_radiance, "top_diffuse_radiance", extra)
    check_option_values(top, "top_diffuse_radiance", low=0.0)
    pixel = pixel_view_angles(view_zenith, view_azimuth, extra)
    if not beam or (irradiance.chunks is None and not np.any(irradiance.values)):
        # without a beam nothing depends on azimuth: the azimuth-averaged term is the whole
        # solution (and terms m > 0 of layers whose truncated phase function is not
        # positive are never formed)
        max_terms = 1
    return Options(
        streams=streams, delta_m=flags["delta_m"],
        single_scattering_correction=flags["single_scattering_correction"],
        aureole_correction=flags["aureole_correction"],
        fourier_tolerance=tolerance, max_fourier_terms=max_terms,
        gravity=gravity, heat_capacity=heat_capacity,
        beam=beam, sun_zenith=zenith, sun_list=sun_list, sun_irradiance=irradiance,
        surface_albedo=albedo, top_diffuse_radiance=top,
        irradiance_units=_units_attribute(sun_irradiance, "sun_irradiance"),
        top_radiance_units=_units_attribute(top_diffuse_radiance, "top_diffuse_radiance"),
        views=view_angles(view_zenith, view_azimuth) if pixel is None else pixel[0],
        positions=output_positions(output_levels, atmosphere.sizes["layer"]),
        on_levels=output_levels is None,
        pixel_views=None if pixel is None else pixel[1],
    )


def _units_attribute(value: object, name: str) -> str | None:
    if not isinstance(value, xr.DataArray) or "units" not in value.attrs:
        return None
    units = value.attrs["units"]
    if not isinstance(units, str):
        raise TypeError(f"the units attribute of {name} must be a string; got {units!r}")
    return units


def _default(value: object, default: float) -> object:
    return default if value is None else value


def _check_flag(value: object, name: str) -> bool:
    """A switch must be a bool: "no" or 0 must not be read as a choice."""
    if not isinstance(value, bool | np.bool_):
        raise TypeError(f"{name} must be True or False; got {value!r}")
    return bool(value)


def _check_max_terms(value: object, streams: int) -> int:
    """The cap on the azimuthal terms: an integer >= 1 (more than ``streams`` means none)."""
    if value is None:
        return streams
    if isinstance(value, bool) or not isinstance(value, int | np.integer):
        raise TypeError(f"max_fourier_terms must be an integer >= 1 or None; got {value!r}")
    if value < 1:
        raise ValueError(f"max_fourier_terms must be >= 1; got {value}")
    return int(min(value, streams))


def _check_streams(streams: object) -> int:
    if isinstance(streams, bool) or not isinstance(streams, int | np.integer):
        raise ValueError(f"streams must be an even integer >= 2; got {streams!r}")
    if streams < 2 or streams % 2:
        raise ValueError(f"streams must be an even integer >= 2; got {streams}")
    return int(streams)


def sun_geometry(sun_zenith: object) -> tuple[xr.DataArray, bool]:
    """Sun zenith as a DataArray with the private sun dim; True if the user gave a list."""
    if isinstance(sun_zenith, xr.DataArray):
        zenith = sun_zenith.astype(np.float64)
        if "sun_zenith" in zenith.dims:
            zenith = zenith.rename({"sun_zenith": SUN_DIM}).drop_vars(SUN_DIM, errors="ignore")
            return zenith, True
        return zenith.expand_dims({SUN_DIM: 1}), False
    array = as_float_array(sun_zenith, "sun_zenith")
    if array.ndim == 0:
        return xr.DataArray(array[None], dims=(SUN_DIM,)), False
    if array.ndim == 1 and array.size >= 1:
        return xr.DataArray(array, dims=(SUN_DIM,)), True
    raise ValueError(f"sun_zenith must be a scalar, a 1-D list or a DataArray; got shape "
                     f"{array.shape}")


def view_angles(view_zenith: object, view_azimuth: object) -> Views:
    """The view directions (none: fluxes only), checked."""
    if view_zenith is None and view_azimuth is None:
        zenith, azimuth = np.zeros(0), np.zeros(0)
    else:
        if view_zenith is None or view_azimuth is None:
            raise ValueError("view_zenith and view_azimuth must be given together (or "
                             "neither, for fluxes only)")
        zenith = np.atleast_1d(as_float_array(view_zenith, "view_zenith"))
        azimuth = np.atleast_1d(as_float_array(view_azimuth, "view_azimuth"))
        if zenith.ndim != 1 or azimuth.ndim != 1 or zenith.size == 0 or azimuth.size == 0:
            raise ValueError("view_zenith and view_azimuth must be non-empty 1-D lists of "
                             "degrees")
        require_range(zenith, "view_zenith", 0.0, 90.0, labels=["view angle"])
        require_range(azimuth, "view_azimuth", labels=["view angle"])
        if np.unique(zenith).size != zenith.size:
            raise ValueError("view_zenith must not repeat a value")
        if np.unique(azimuth).size != azimuth.size:
            raise ValueError("view_azimuth must not repeat a value")
    return Views(zenith=zenith, azimuth=azimuth, cosines=view_cosines(zenith),
                 azimuth_radians=np.radians(azimuth))


def pixel_view_angles(
    view_zenith: object, view_azimuth: object, extra: dict[str, int],
) -> tuple[Views, tuple[xr.DataArray, xr.DataArray]] | None:
    """One view per pixel: DataArray view angles along the atmosphere's extra dims.

    None unless one of the two is a DataArray; the other may then be a scalar (shared by
    every pixel). Returns placeholder Views (one angle: the kernel's sizes) and the two
    DataArrays in degrees, checked where held in memory.
    """
    given = {"view_zenith": view_zenith, "view_azimuth": view_azimuth}
    if not any(isinstance(value, xr.DataArray) for value in given.values()):
        return None
    arrays = []
    for name, value in given.items():
        if value is None:
            raise ValueError("view_zenith and view_azimuth must be given together (or "
                             "neither, for fluxes only)")
        if isinstance(value, xr.DataArray):
            outside = [str(dim) for dim in value.dims if dim not in extra]
            if outside:
                raise ValueError(
                    f"{name} is a DataArray with dims {tuple(map(str, value.dims))}, but one "
                    f"view per pixel needs dims among the atmosphere's extra dims "
                    f"{tuple(extra)} ({outside} is not one); for views shared by every "
                    "pixel give a list of degrees")
            for dim in value.dims:
                if value.sizes[dim] != extra[dim]:
                    raise ValueError(f"{name} has {value.sizes[dim]} values along {dim!r} "
                                     f"but the atmosphere has {extra[dim]}")
            array = option_array(value, name)
        else:
            number = as_float_array(value, name)
            if number.ndim != 0:
                raise ValueError(
                    f"{name} must be a scalar or a DataArray along the atmosphere's extra "
                    f"dims when the other view angle is given per pixel; got shape "
                    f"{number.shape}")
            array = xr.DataArray(number)
        arrays.append(array)
    zenith, azimuth = arrays
    check_option_values(zenith, "view_zenith", low=0.0, high=90.0)
    check_option_values(azimuth, "view_azimuth")
    placeholder = np.zeros(1)
    views = Views(zenith=placeholder, azimuth=placeholder, cosines=np.ones(1),
                  azimuth_radians=placeholder, per_pixel=True)
    return views, (zenith, azimuth)


def output_positions(output_levels: object, nlayer: int) -> Positions:
    """Layer index and fraction of each output position (fractional level numbers)."""
    if output_levels is None:
        levels = np.arange(nlayer + 1, dtype=np.float64)
    else:
        levels = np.atleast_1d(as_float_array(output_levels, "output_levels"))
        if levels.ndim != 1 or levels.size == 0:
            raise ValueError("output_levels must be a non-empty 1-D list of fractional level "
                             "numbers")
        require_range(levels, "output_levels", 0.0, float(nlayer), labels=["position"])
    layer = np.minimum(np.floor(levels), nlayer - 1).astype(np.intp)
    fraction = levels - layer
    return Positions(levels=levels, layer=np.ascontiguousarray(layer),
                     fraction=np.ascontiguousarray(fraction))
