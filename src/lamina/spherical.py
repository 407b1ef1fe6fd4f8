"""Geometry of a spherical atmosphere for the pseudo-spherical direct beam.

In the pseudo-spherical approximation (Dahlback and Stamnes 1991) the diffuse field is
solved in plane-parallel layers, but the direct beam that feeds it is attenuated along its
true straight path through spherical shells from the top of the atmosphere to each level.
These pure functions give that path:

- :func:`slant_path_lengths`: the length of the path to each level inside each layer;
- :func:`air_mass_factors`: those lengths over the layers' vertical thicknesses, the matrix
  that multiplies each layer's optical depth when extinction is uniform in altitude within
  its shell, so that the slant optical depth to level i is ``factors[i] @ optical_depth``;
- :func:`hypsometric_altitudes`: level altitudes from level pressures and temperatures.

All take numpy arrays with the level (and layer) axis last and broadcast over any leading
axes; levels are numbered from the top, as everywhere in lamina.
"""

from __future__ import annotations

import numpy as np

from lamina._checks import as_float_array, require_range

__all__ = [
    "DRY_AIR_MOLAR_MASS",
    "MOLAR_GAS_CONSTANT",
    "STANDARD_GRAVITY",
    "air_mass_factors",
    "hypsometric_altitudes",
    "slant_path_lengths",
]

#: Molar gas constant, J mol-1 K-1 (exact in the SI since 2019; CODATA 2018).
MOLAR_GAS_CONSTANT = 8.314462618

#: Mean molar mass of dry air, kg mol-1 (U.S. Standard Atmosphere 1976).
DRY_AIR_MOLAR_MASS = 0.0289644

#: Standard acceleration of gravity, m s-2 (3rd CGPM 1901; ISO 80000-3).
STANDARD_GRAVITY = 9.80665


def _check_radii(radius: object) -> np.ndarray:
    r = as_float_array(radius, "radius")
    if r.ndim < 1 or r.shape[-1] < 2:
        raise ValueError("radius must have a level axis (last) with at least 2 levels")
    require_range(r, "radius", 0.0, low_open=True)
    if np.any(np.diff(r, axis=-1) >= 0.0):
        raise ValueError("radius must decrease strictly downward (levels are numbered from "
                         "the top)")
    return r


def slant_path_lengths(radius: object, zenith_angle: object) -> tuple[np.ndarray, np.ndarray]:
    """Straight-line path of the stellar beam through each layer to each level.

    Parameters
    ----------
    radius : array_like, (..., level)
        Distance of each level from the planet's centre (planet radius plus altitude), top
        first, strictly decreasing. The bottom level is the ground: rays below it are
        blocked.
    zenith_angle : array_like, (...) or (..., level)
        Zenith angle of the star in degrees, in [0, 180], at each level (one value serves
        a vertical column: the local vertical is the same radial line at every level).

    Returns
    -------
    path : numpy.ndarray, (..., level, layer)
        ``path[..., i, j]``: length (units of ``radius``) of the ray from the top of the
        atmosphere to level i inside layer j. With impact parameter p = r_i sin z, a layer
        between radii r_b < r_t is crossed once if it lies above level i, where its length
        is sqrt(r_t^2 - p^2) - sqrt(r_b^2 - p^2); for z > 90 the ray reaches level i from
        below its horizon after passing a tangent point at radius p < r_i, so the layers
        between p and r_i are crossed twice (2 [sqrt(r_t^2 - p^2) - sqrt(max(r_b, p)^2 -
        p^2)]). Zero where the ray does not pass, and in every layer where it is blocked.
    reaches : numpy.ndarray of bool, (..., level)
        False where the ray to the level would pass below the ground (z > 90 with
        p < bottom radius).

    Examples
    --------
    >>> path, reaches = slant_path_lengths([6471.0, 6421.0, 6371.0], 0.0)
    >>> path.tolist()
    [[0.0, 0.0], [50.0, 0.0], [50.0, 50.0]]
    """
    r = _check_radii(radius)
    z = as_float_array(zenith_angle, "zenith_angle")
    require_range(z, "zenith_angle", 0.0, 180.0)
    if z.ndim == r.ndim:
        if z.shape[-1] != r.shape[-1]:
            raise ValueError("zenith_angle per level must have as many levels as radius")
    else:
        z = z[..., None]
    r, z = np.broadcast_arrays(r, z)
    sin_z = np.sin(np.radians(z))
    below_horizon = z > 90.0
    impact = r * sin_z                                            # (..., level)
    top = r[..., None, :-1]                                       # layer j's top, (..., 1, L)
    bottom = r[..., None, 1:]
    p = impact[..., :, None]                                      # (..., level, 1)

    def chord(radius_of: np.ndarray) -> np.ndarray:
        # half-chord from the tangent point out to radius_of; zero inside the tangent circle;
        # (r - p)(r + p) rather than r^2 - p^2 keeps the digits when r is huge
        return np.sqrt(np.clip((radius_of - p) * (radius_of + p), 0.0, None))

    inner = np.maximum(bottom, p)
    outer_chord, inner_chord = chord(top), chord(inner)
    # chord(t) - chord(b) = (t - b)(t + b) / (chord(t) + chord(b)), without the cancellation
    # of two nearly equal chords (thin shells, huge radii); zero where the ray misses the shell
    total = outer_chord + inner_chord
    with np.errstate(divide="ignore", invalid="ignore"):
        single = np.where(total > 0.0, (top - inner) * (top + inner) / total, 0.0)
    single = np.clip(single, 0.0, None)
    nlevel = r.shape[-1]
    # layer j lies between levels j and j + 1: above level i when j < i
    above = np.arange(nlevel - 1)[None, :] < np.arange(nlevel)[:, None]   # (level, layer)
    below = ~above & below_horizon[..., :, None]
    path = np.where(above, single, 0.0) + np.where(below, 2.0 * single, 0.0)
    reaches = ~(below_horizon & (impact < r[..., -1:]))
    path = np.where(reaches[..., :, None], path, 0.0)
    return path, reaches


def air_mass_factors(radius: object, zenith_angle: object) -> tuple[np.ndarray, np.ndarray]:
    """Slant path per unit vertical path in each layer, for each level.

    Parameters
    ----------
    radius, zenith_angle
        As for :func:`slant_path_lengths`.

    Returns
    -------
    factors : numpy.ndarray, (..., level, layer)
        ``path / (r_top - r_bottom)``: with extinction uniform in altitude within each shell
        (Dahlback and Stamnes 1991) the optical depth of the beam's path to level i is
        ``sum_j factors[..., i, j] * optical_depth[..., j]``. In a plane-parallel limit
        (radius much larger than the atmosphere) every layer above the level has 1 / cos z.
    reaches : numpy.ndarray of bool, (..., level)
        As for :func:`slant_path_lengths`; the beam does not reach levels where it is False.

    Examples
    --------
    >>> factors, _ = air_mass_factors([1e9 + 2.0, 1e9 + 1.0, 1e9], 60.0)
    >>> [round(float(f), 6) for f in factors[2]]
    [2.0, 2.0]
    """
    path, reaches = slant_path_lengths(radius, zenith_angle)
    r = np.asarray(radius, dtype=np.float64)
    thickness = (r[..., :-1] - r[..., 1:])[..., None, :]
    return path / thickness, reaches


def hypsometric_altitudes(
    pressure: object,
    temperature: object,
    molar_mass: float = DRY_AIR_MOLAR_MASS,
    gravity: float = STANDARD_GRAVITY,
    surface_altitude: float = 0.0,
) -> np.ndarray:
    """Level altitudes from level pressures and temperatures (the hypsometric equation).

    Hydrostatic balance and the ideal gas give dz = -(R T / (M g)) dp / p. With the
    temperature linear in log pressure between adjacent levels the thickness of a layer is
    exactly (R / (M g)) (T_top + T_bottom) / 2 ln(p_bottom / p_top).

    Parameters
    ----------
    pressure : array_like, (..., level)
        Level pressures (any unit), top first, strictly increasing downward, positive.
    temperature : array_like, (..., level)
        Level temperatures in K, positive.
    molar_mass : float
        Mean molar mass of the gas in kg mol-1; default dry air, 0.0289644 (U.S. Standard
        Atmosphere 1976).
    gravity : float
        Acceleration of gravity in m s-2, taken constant with height; default the standard
        9.80665 (3rd CGPM 1901).
    surface_altitude : float
        Altitude of the bottom level in m.

    Returns
    -------
    numpy.ndarray, (..., level)
        Altitudes in m, top first (decreasing downward).

    Examples
    --------
    >>> z = hypsometric_altitudes([500.0, 1000.0], [250.0, 250.0])
    >>> round(float(z[0]))
    5072
    """
    p = as_float_array(pressure, "pressure")
    t = as_float_array(temperature, "temperature")
    if p.ndim < 1 or p.shape[-1] < 2:
        raise ValueError("pressure must have a level axis (last) with at least 2 levels")
    require_range(p, "pressure", 0.0, low_open=True)
    require_range(t, "temperature", 0.0, low_open=True)
    if np.any(np.diff(p, axis=-1) <= 0.0):
        raise ValueError("pressure must increase strictly downward (levels are numbered from "
                         "the top)")
    for name, value in (("molar_mass", molar_mass), ("gravity", gravity)):
        number = float(as_float_array(value, name))
        if not (np.isfinite(number) and number > 0.0):
            raise ValueError(f"{name} must be positive and finite; got {number:g}")
    base = float(as_float_array(surface_altitude, "surface_altitude"))
    if not np.isfinite(base):
        raise ValueError(f"surface_altitude must be finite; got {base:g}")
    p, t = np.broadcast_arrays(p, t)
    scale = MOLAR_GAS_CONSTANT / (float(molar_mass) * float(gravity))
    thickness = scale * 0.5 * (t[..., :-1] + t[..., 1:]) * np.log(p[..., 1:] / p[..., :-1])
    # accumulate from the ground up
    above_ground = np.cumsum(thickness[..., ::-1], axis=-1)[..., ::-1]
    zeros = np.zeros((*above_ground.shape[:-1], 1))
    return base + np.concatenate([above_ground, zeros], axis=-1)
