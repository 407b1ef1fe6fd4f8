"""Check step of a curved planet: the radius of every level for the pseudo-spherical beam.

With ``solve(..., planet_radius=)`` the direct beam is attenuated along its straight path
through spherical shells (Dahlback and Stamnes 1991). That path needs the distance of each
level from the planet's centre: ``planet_radius`` plus the level ``altitude`` of the
atmosphere or, without one, the altitudes of the hypsometric equation from the level
``pressure`` and ``temperature`` (:func:`lamina.spherical.hypsometric_altitudes`, with the
``molar_mass`` and ``gravity`` given). The geometry itself is computed block by block
(``blocks.prepare_block``, :func:`lamina.spherical.air_mass_factors`).
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from lamina._checks import as_float_array
from lamina._solver.common import extra_dims, option_array
from lamina._units import to_si
from lamina.spherical import DRY_AIR_MOLAR_MASS, hypsometric_altitudes


def level_radii(atmosphere: xr.Dataset, planet_radius: object, molar_mass: object,
                gravity: object) -> xr.DataArray | None:
    """Distance of every level from the planet's centre in m, (..., level); None without a
    planet (the plane-parallel beam)."""
    if planet_radius is None:
        if molar_mass is not None:
            raise ValueError("molar_mass only serves planet_radius (altitudes from the "
                             "hypsometric equation); give planet_radius or leave it out")
        return None
    radius = _planet_radius(planet_radius, atmosphere)
    altitude = _altitudes(atmosphere, molar_mass, gravity)
    radii = (radius + altitude).transpose(..., "level")
    if radii.chunks is None and not np.all(radii.values > 0.0):
        raise ValueError("altitude: every level must lie above the planet's centre "
                         "(planet_radius + altitude > 0)")
    return radii


def _planet_radius(value: object, atmosphere: xr.Dataset) -> xr.DataArray:
    unit = value.attrs.get("units") if isinstance(value, xr.DataArray) else None
    radius = option_array(value, "planet_radius", extra_dims(atmosphere))
    if unit is not None:
        try:
            radius = radius.copy(data=to_si(np.asarray(radius.values), unit, "altitude"))
        except ValueError as error:
            raise ValueError(f"planet_radius: {error} (a length, e.g. 'km')") from None
    if radius.chunks is None:
        values = np.asarray(radius.values)
        if not np.all(np.isfinite(values) & (values > 0.0)):
            bad = values[~(np.isfinite(values) & (values > 0.0))].ravel()[0]
            raise ValueError(f"planet_radius must be positive and finite (m); got {bad:g}")
    return radius


def _altitudes(atmosphere: xr.Dataset, molar_mass: object, gravity: object) -> xr.DataArray:
    """The level altitudes (m): given, or from the hypsometric equation."""
    if molar_mass is not None:
        number = float(as_float_array(molar_mass, "molar_mass"))
        if not (np.isfinite(number) and number > 0.0):
            raise ValueError(f"molar_mass must be positive and finite (kg mol-1); got "
                             f"{number:g}")
    if "altitude" in atmosphere:
        if molar_mass is not None:
            raise ValueError("molar_mass: the atmosphere gives level altitudes, which need "
                             "no molar mass (it only serves the hypsometric equation)")
        altitude = atmosphere["altitude"]
    elif "pressure" in atmosphere and "temperature" in atmosphere:
        mass = DRY_AIR_MOLAR_MASS if molar_mass is None else float(molar_mass)
        altitude = xr.apply_ufunc(
            hypsometric_altitudes, atmosphere["pressure"], atmosphere["temperature"],
            input_core_dims=[["level"], ["level"]], output_core_dims=[["level"]],
            kwargs={"molar_mass": mass, "gravity": float(gravity)}, dask="parallelized",
            output_dtypes=[np.float64])
    else:
        raise ValueError("altitude: planet_radius needs level altitudes; give "
                         "make_atmosphere(..., altitude=) or level pressure and temperature "
                         "(the hypsometric equation)")
    altitude = altitude.transpose(..., "level")
    if altitude.chunks is None:
        values = np.asarray(altitude.values)
        if not np.all(np.isfinite(values)):
            raise ValueError("altitude must be finite at every level")
        steps = np.diff(values, axis=-1)
        if np.any(steps >= 0.0):
            level = int(np.argwhere(steps >= 0.0)[0][-1]) + 1
            raise ValueError(
                "altitude must decrease strictly downward (levels are numbered from the "
                f"top); level {level} has {values[..., level].ravel()[0]:g} m after "
                f"{values[..., level - 1].ravel()[0]:g} m")
    return altitude
