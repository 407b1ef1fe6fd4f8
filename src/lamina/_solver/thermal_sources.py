"""Check step, thermal part: the Planck radiance at the levels and at the surface.

Thermal emission is asked for by a wavenumber band (band-integrated Planck radiance) or a
single wavenumber (monochromatic, per cm-1); the kernel takes the Planck radiance at every
level, linear in optical depth within each layer, and at the surface (emissivity 1 -
albedo). Without thermal emission the sources are zeros. The radiances are computed with
:func:`xarray.apply_ufunc`, so that dask-backed temperatures or bands stay lazy.

A new source term enters here: it returns its level and surface values as DataArrays, and the
plan (:func:`lamina._solver.blocks.plan_blocks`) hands them to the blocks.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import xarray as xr

from lamina import planck
from lamina._solver.common import (
    ThermalSources,
    check_option_values,
    extra_dims,
    option_array,
)


def planck_sources(
    atmosphere: xr.Dataset,
    wavenumber_band: object,
    wavenumber: object,
    surface_temperature: object,
) -> ThermalSources:
    """Planck radiance at the levels and at the surface, or zeros without thermal emission."""
    thermal = wavenumber_band is not None or wavenumber is not None
    if not thermal:
        if surface_temperature is not None:
            raise ValueError("surface_temperature needs a thermal source: give wavenumber_band "
                             "or wavenumber")
        return ThermalSources(
            levels=xr.DataArray(np.zeros(atmosphere.sizes["layer"] + 1), dims=("level",)),
            surface=xr.DataArray(0.0), units=None)
    if wavenumber_band is not None and wavenumber is not None:
        raise ValueError("give either wavenumber_band (band-integrated) or wavenumber "
                         "(monochromatic), not both")
    if "temperature" not in atmosphere:
        raise ValueError("thermal emission (wavenumber_band or wavenumber) needs level "
                         "temperatures: pass temperature= to make_atmosphere")
    temperature = atmosphere["temperature"]
    extra = extra_dims(atmosphere)
    if surface_temperature is None:
        surface = temperature.isel(level=-1, drop=True)
    else:
        surface = option_array(surface_temperature, "surface_temperature", extra)
        check_option_values(surface, "surface_temperature", low=0.0)
    if wavenumber_band is not None:
        spectral, function, units = _band(wavenumber_band, extra)
    else:
        spectral, function, units = _monochromatic(wavenumber, extra)
    levels = xr.apply_ufunc(function, temperature, *spectral, dask="parallelized",
                            output_dtypes=[np.float64])
    bottom = xr.apply_ufunc(function, surface, *spectral, dask="parallelized",
                            output_dtypes=[np.float64])
    return ThermalSources(levels=levels, surface=bottom, units=units)


def _band(wavenumber_band: object,
          extra: dict[str, int]) -> tuple[tuple[xr.DataArray, ...], Callable, str]:
    """The band's bounds, checked, with the band-integrated Planck function and its units."""
    # a pair is a tuple, a list or an array of two; its bounds may be of different kinds (a
    # DataArray beside a scalar), so no numpy array is made of the pair itself
    pair = (isinstance(wavenumber_band, tuple | list) and len(wavenumber_band) == 2) or (
        isinstance(wavenumber_band, np.ndarray) and wavenumber_band.shape == (2,))
    if not pair:
        raise ValueError("wavenumber_band must be a pair (low, high) in cm-1 (scalars "
                         "or DataArrays along the atmosphere's extra dims)")
    low = option_array(wavenumber_band[0], "wavenumber_band", extra)
    high = option_array(wavenumber_band[1], "wavenumber_band", extra)
    if low.chunks is None and high.chunks is None:
        low_values, high_values = (array.values for array in xr.broadcast(low, high))
        bad = ~(np.isfinite(low_values) & (low_values >= 0.0) & (high_values > low_values))
        if np.any(bad):
            index = tuple(np.argwhere(bad)[0]) if bad.ndim else ()
            raise ValueError(
                "wavenumber_band must satisfy 0 <= low < high (cm-1); got "
                f"({float(low_values[index]):g}, {float(high_values[index]):g})"
            )
    return (low, high), planck.band_radiance, "W m-2 sr-1"


def _monochromatic(wavenumber: object,
                   extra: dict[str, int]) -> tuple[tuple[xr.DataArray, ...], Callable, str]:
    """The wavenumber, checked, with the spectral Planck function and its units."""
    nu = option_array(wavenumber, "wavenumber", extra)
    if nu.chunks is None:
        values = np.asarray(nu.values)
        if not np.all(np.isfinite(values) & (values > 0.0)):
            raise ValueError("wavenumber must be positive and finite (cm-1); got "
                             f"{float(values[~(np.isfinite(values) & (values > 0))][0]):g}")
    return (nu,), planck.spectral_radiance_wavenumber, "W m-2 sr-1 cm"
