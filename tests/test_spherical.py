"""Spherical-shell geometry of the pseudo-spherical beam: each check names its outside source."""

import numpy as np
import pytest
from scipy import integrate, optimize

from lamina.spherical import (
    DRY_AIR_MOLAR_MASS,
    MOLAR_GAS_CONSTANT,
    STANDARD_GRAVITY,
    air_mass_factors,
    hypsometric_altitudes,
    slant_path_lengths,
)

EARTH_RADIUS = 6371.0  # km, only a plausible scale


def _ray_radius(r0, zenith_deg, s):
    """Distance from the centre after a straight path s from radius r0 towards the star."""
    cos_z = np.cos(np.radians(zenith_deg))
    return np.sqrt(r0 * r0 + s * s + 2.0 * r0 * s * cos_z)


def _path_to_top(r0, zenith_deg, r_top):
    cos_z = np.cos(np.radians(zenith_deg))
    return -r0 * cos_z + np.sqrt(r_top**2 - (r0 * np.sin(np.radians(zenith_deg)))**2)


RADII = EARTH_RADIUS + np.array([100.0, 60.0, 35.0, 20.0, 8.0, 3.0, 0.0])


@pytest.mark.parametrize("zenith", [0.0, 37.0, 80.0, 89.5, 90.0, 91.0, 94.0])
def test_slant_path_against_integration_along_the_ray(zenith):
    # exact geometry by direct numerical integration with scipy: the length of the ray inside
    # layer j is the integral of the layer's indicator along s from the level to the top
    path, reaches = slant_path_lengths(RADII, zenith)
    for level in range(len(RADII)):
        r0 = RADII[level]
        if not reaches[level]:
            # the ray dips below the ground: its tangent radius is below the bottom level
            assert r0 * np.sin(np.radians(zenith)) < RADII[-1]
            continue
        length = _path_to_top(r0, zenith, RADII[0])
        # where the ray crosses each shell boundary, by scipy root finding on a fine grid
        grid = np.linspace(0.0, length, 20001)
        crossings = []
        for boundary in RADII:
            gap = _ray_radius(r0, zenith, grid) - boundary
            for k in np.flatnonzero(np.sign(gap[:-1]) * np.sign(gap[1:]) < 0):
                crossings.append(optimize.brentq(
                    lambda s, b=boundary, r0=r0: _ray_radius(r0, zenith, s) - b,
                    grid[k], grid[k + 1], xtol=1e-13))
        for layer in range(len(RADII) - 1):
            top, bottom = RADII[layer], RADII[layer + 1]

            def inside(s, top=top, bottom=bottom, r0=r0):
                r = _ray_radius(r0, zenith, s)
                return 1.0 if bottom <= r <= top else 0.0

            reference, _ = integrate.quad(inside, 0.0, length, points=crossings or None,
                                          limit=400, epsabs=1e-10)
            assert path[level, layer] == pytest.approx(reference, abs=1e-8 * length + 1e-9)


def test_below_the_horizon_the_upper_levels_stay_lit():
    # exact geometry: a ray with tangent radius r sin z above the ground reaches the level
    path, reaches = slant_path_lengths(RADII, 95.0)
    tangent = RADII * np.sin(np.radians(95.0))
    np.testing.assert_array_equal(reaches, tangent >= RADII[-1])
    assert reaches[0] and not reaches[-1]
    assert np.all(path[~reaches] == 0.0)


def _chapman_air_mass(layers, zenith, level_fraction, scale_height=8.0, top=100.0):
    """Layer sum and scipy quadrature of the air mass of an exponential atmosphere."""
    edges = EARTH_RADIUS + np.linspace(top, 0.0, layers + 1)

    def density(r):
        return np.exp(-(r - EARTH_RADIUS) / scale_height)

    # each layer's optical depth: the exact integral of the density over its thickness
    tau = scale_height * (density(edges[1:]) - density(edges[:-1]))
    level = round(level_fraction * layers)
    factors, reaches = air_mass_factors(edges, zenith)
    assert reaches[level]
    slant = factors[level] @ tau
    r0 = edges[level]
    length = _path_to_top(r0, zenith, edges[0])
    reference, _ = integrate.quad(lambda s: density(_ray_radius(r0, zenith, s)), 0.0, length,
                                  limit=500, epsabs=0.0, epsrel=1e-11)
    return slant, reference


@pytest.mark.parametrize("zenith", [0.0, 60.0, 80.0, 85.0])
def test_chapman_function_for_an_exponential_atmosphere(zenith):
    # Chapman (1931): the air mass of an exponential atmosphere along the straight ray, by
    # scipy quadrature of the density along the ray; against the layer sum with extinction
    # uniform within each of many thin shells (Dahlback and Stamnes 1991). Away from grazing
    # the shell approximation is second order in the layer thickness (0.05 km here, scale
    # height 8 km): 1e-6 is far above its error and far below a wrong path.
    slant, reference = _chapman_air_mass(2000, zenith, 1.0)
    assert slant == pytest.approx(reference, rel=1e-6)


@pytest.mark.parametrize(("zenith", "level_fraction"), [(90.0, 1.0), (90.0, 0.5), (93.0, 0.5)])
def test_chapman_function_at_grazing_and_twilight_converges(zenith, level_fraction):
    # Chapman (1931) by scipy quadrature, as above, for a horizontal ray and one from below
    # the horizon (twilight at 50 km). Near the tangent point the ray runs along the bottom
    # of its shell, where the density is higher than the shell's mean, so the uniform-shell
    # error there falls only as thickness^1.5. Its size: the tangent shell of thickness d
    # holds a fraction about sqrt(d / (pi H)) of the air mass, misweighted by about d / (2 H),
    # 1.4e-4 for d = 0.05 km; check that size and the rate (4x thinner layers, error at least
    # 5x smaller).
    slant, reference = _chapman_air_mass(500, zenith, level_fraction)
    coarse = slant / reference - 1.0
    slant, reference = _chapman_air_mass(2000, zenith, level_fraction)
    fine = slant / reference - 1.0
    assert abs(fine) < 3e-4
    assert abs(fine) * 5.0 < abs(coarse)


def test_plane_parallel_limit_for_a_huge_radius():
    # the plane-parallel slant path: each layer above the level contributes 1 / cos z; the
    # curvature correction is of order (h / R) / cos^2 z, below 1e-11 here
    radius = 1e15 + np.array([3.0, 2.0, 0.5, 0.0])
    for zenith in (0.0, 30.0, 75.0, 88.0):
        factors, reaches = air_mass_factors(radius, zenith)
        assert np.all(reaches)
        expected = np.tril(np.ones((4, 3)), -1) / np.cos(np.radians(zenith))
        np.testing.assert_allclose(factors, expected, rtol=1e-9, atol=1e-12)


def test_broadcasting_over_leading_axes():
    # the same geometry per column as the 1-D call (exact: the rows are independent)
    radii = np.stack([RADII, RADII + 10.0])
    zenith = np.array([30.0, 92.0])
    path, reaches = slant_path_lengths(radii, zenith)
    for column in range(2):
        one, one_reaches = slant_path_lengths(radii[column], zenith[column])
        np.testing.assert_array_equal(path[column], one)
        np.testing.assert_array_equal(reaches[column], one_reaches)


def test_hypsometric_equation_against_scipy_integration():
    # hydrostatic balance with the ideal gas: dz = -(R T / (M g)) dp / p, integrated by scipy
    # for a temperature linear in log pressure between the levels
    pressure = np.array([1.0, 10.0, 100.0, 300.0, 700.0, 1013.25])
    temperature = np.array([270.0, 230.0, 215.0, 240.0, 275.0, 290.0])
    molar_mass, gravity = 0.044, 3.71     # a thin CO2 atmosphere, Mars-like gravity
    z = hypsometric_altitudes(pressure, temperature, molar_mass, gravity, surface_altitude=50.0)

    def temperature_at(p):
        return np.interp(np.log(p), np.log(pressure), temperature)

    for level in range(len(pressure)):
        reference, _ = integrate.quad(
            lambda p: MOLAR_GAS_CONSTANT * temperature_at(p) / (molar_mass * gravity * p),
            pressure[level], pressure[-1], points=pressure[level:], limit=200, epsrel=1e-12)
        assert z[level] == pytest.approx(50.0 + reference, rel=1e-10, abs=1e-9)


def test_hypsometric_defaults_are_earth_dry_air():
    # U.S. Standard Atmosphere 1976 molar mass; standard gravity (3rd CGPM 1901)
    assert DRY_AIR_MOLAR_MASS == 0.0289644
    assert STANDARD_GRAVITY == 9.80665
    z = hypsometric_altitudes([500.0, 1000.0], [250.0, 250.0])
    scale = MOLAR_GAS_CONSTANT * 250.0 / (0.0289644 * 9.80665)
    assert z[0] == pytest.approx(scale * np.log(2.0), rel=1e-12)
    assert z[1] == 0.0


@pytest.mark.parametrize(
    ("call", "match"),
    [
        (lambda: slant_path_lengths([10.0, 11.0], 0.0), "radius must decrease"),
        (lambda: slant_path_lengths([10.0, -1.0], 0.0), "radius must lie"),
        (lambda: slant_path_lengths([11.0, 10.0], 181.0), "zenith_angle must lie"),
        (lambda: slant_path_lengths([11.0, 10.0], [1.0, 2.0, 3.0]), "zenith_angle per level"),
        (lambda: hypsometric_altitudes([10.0, 5.0], [250.0, 250.0]), "pressure must increase"),
        (lambda: hypsometric_altitudes([5.0, 10.0], [250.0, 0.0]), "temperature must lie"),
        (lambda: hypsometric_altitudes([5.0, 10.0], [250.0, 250.0], molar_mass=-1.0),
         "molar_mass must be positive"),
        (lambda: hypsometric_altitudes([5.0, 10.0], [250.0, 250.0], gravity=np.inf),
         "gravity must be positive"),
    ],
)
def test_bad_input_names_the_argument(call, match):
    with pytest.raises(ValueError, match=match):
        call()
