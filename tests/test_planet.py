"""Disk-integrated reflected light: each check names its outside source."""

import numpy as np
import pytest
import xarray as xr
from scipy import integrate

import lamina
from lamina.planet import disk_nodes, phase_curve


def _clear():
    """An atmosphere of optical depth 0 (only the surface reflects)."""
    return lamina.make_atmosphere([0.0], [0.0], [1.0])


def _russell(a_deg):
    a = np.radians(a_deg)
    return (np.sin(a) + (np.pi - a) * np.cos(a)) / np.pi


PHASES = [0.0, 10.0, 45.0, 90.0, 120.0, 150.0, 170.0, 180.0]


def test_lambert_sphere():
    # Russell (1916), exact: a Lambert sphere of albedo A has the phase law
    # Phi(a) = (sin a + (pi - a) cos a) / pi, geometric albedo 2A/3, spherical albedo A
    albedo = 0.3
    out = phase_curve(_clear(), PHASES, streams=4, surface_albedo=albedo, disk_order=(32, 8))
    # at a = 0 every circle around the sub-stellar point is wholly visible: Gauss is exact
    assert float(out.geometric_albedo) == pytest.approx(2.0 * albedo / 3.0, rel=1e-12)
    # elsewhere the disk quadrature converges algebraically, about order^-2.5 (module
    # docstring; the rate is checked below): at 32 points in mu0 its error is 1.1e-5 of the
    # albedo, so 2e-5 checks it and catches any wrong weight or geometry
    np.testing.assert_allclose(out.reflectance.values, 2.0 * albedo / 3.0 * _russell(PHASES),
                               rtol=0.0, atol=2e-5 * albedo)
    assert float(out.spherical_albedo) == pytest.approx(albedo, rel=2e-5)


def test_disk_quadrature_converges_with_its_order():
    # Russell (1916) phase law of the Lambert sphere as the exact answer: the worst error over
    # the phase angles shrinks at each doubling of the order (algebraically, about 3x)
    errors = []
    for order in (4, 8, 16, 32, 64):
        out = phase_curve(_clear(), PHASES, streams=4, surface_albedo=1.0,
                          disk_order=(order, 6), phase_integral_order=1)
        errors.append(np.max(np.abs(out.reflectance.values - 2.0 / 3.0 * _russell(PHASES))))
    errors = np.array(errors)
    assert np.all(errors[1:] < errors[:-1] / 2.5)
    assert errors[-1] < 2e-6


def test_disk_quadrature_converges_for_a_scattering_atmosphere():
    # no closed form: the differences between successive orders must shrink (Cauchy test)
    atm = lamina.make_atmosphere([0.3, 2.0], [0.9, 0.99],
                                 lamina.phase.henyey_greenstein(0.6, 24))
    curves = [phase_curve(atm, [0.0, 60.0, 130.0], streams=8, surface_albedo=0.2,
                          disk_order=(order, 8), phase_integral_order=1).reflectance.values
              for order in (6, 12, 24)]
    first, second = np.abs(curves[1] - curves[0]), np.abs(curves[2] - curves[1])
    assert np.all(second < first / 2.0)
    # a = 0: a smooth integrand, geometric convergence
    assert second[0] < 1e-7 * curves[2][0]


def test_geometric_albedo_of_a_conservative_isotropic_semi_infinite_atmosphere():
    # van de Hulst (1980), from memory: p = 0.6897 for conservative isotropic scattering in a
    # semi-infinite atmosphere; the value has 4 decimals, so |p - 0.6897| <= 5e-5
    atm = lamina.make_atmosphere([1e8], [1.0], [1.0])
    out = phase_curve(atm, [0.0], streams=16, surface_albedo=0.0, disk_order=(16, 8))
    assert abs(float(out.geometric_albedo) - 0.6897) <= 5e-5
    # and nothing is absorbed: the spherical albedo is 1 (energy conservation), to the disk
    # quadrature's accuracy at order 16
    assert float(out.spherical_albedo) == pytest.approx(1.0, abs=5e-5)


def test_spherical_albedo_is_twice_the_mu0_moment_of_the_plane_albedo():
    # exact (e.g. van de Hulst 1980): A_s = 2 int_0^1 A(mu0) mu0 dmu0, the plane albedo from
    # lamina's fluxes by Gauss-Legendre in mu0, against the phase integral of the disk. The
    # phase function has fewer moments than streams, so that delta-M and the single-
    # scattering correction change nothing: with them the corrected radiances and the
    # truncated fluxes differ by the truncation itself (1% for g = 0.7, 16 moments, 8 streams)
    atm = lamina.make_atmosphere([0.2, 1.5], [0.95, 0.8],
                                 lamina.phase.henyey_greenstein(0.5, 8))
    nodes, weights = np.polynomial.legendre.leggauss(24)
    mu0, w = 0.5 * (nodes + 1.0), 0.5 * weights
    fluxes = lamina.solve(atm, streams=16, sun_zenith=list(np.degrees(np.arccos(mu0))),
                          sun_irradiance=1.0, surface_albedo=0.15)
    plane_albedo = fluxes.flux_up.isel(level=0).values / mu0
    expected = 2.0 * np.sum(w * plane_albedo * mu0)
    out = phase_curve(atm, [0.0], streams=16, surface_albedo=0.15, disk_order=(32, 8))
    # the disk quadrature at order 32 (5e-6 here) and the 12-point phase integral
    assert float(out.spherical_albedo) == pytest.approx(expected, rel=3e-5)


def test_single_scattering_phase_curve_follows_the_phase_function():
    # single scattering in a semi-infinite atmosphere: I = (w / 4 pi) P(pi - a) mu0 / (mu0 + mu)
    # at every point of the disk (Lommel-Seeliger law; Chandrasekhar 1960), its disk integral
    # done here by scipy in the latitude-longitude coordinates of Horak (1950); a test of the
    # local azimuths (the scattering angle is pi - a everywhere) and of the cosine series
    w, g = 1e-4, 0.5
    atm = lamina.make_atmosphere([1e4], [w], lamina.phase.henyey_greenstein(g, 32))
    phases = np.array([0.0, 30.0, 75.0, 120.0])
    out = phase_curve(atm, phases, streams=8, surface_albedo=0.0, disk_order=(32, 8),
                      phase_integral_order=1)
    for a_deg, value in zip(phases, out.reflectance.values, strict=True):
        a = np.radians(a_deg)

        def integrand(latitude, longitude, a=a):
            mu = np.cos(latitude) * np.cos(longitude)
            mu0 = np.cos(latitude) * np.cos(longitude - a)
            return mu * mu0 / (mu0 + mu) * np.cos(latitude)

        disk, _ = integrate.dblquad(integrand, a - np.pi / 2, np.pi / 2, -np.pi / 2,
                                    np.pi / 2, epsabs=1e-12, epsrel=1e-10)
        cos_scattering = -np.cos(a)
        henyey = (1 - g * g) / (1 + g * g - 2 * g * cos_scattering) ** 1.5
        expected = w / (4 * np.pi) * henyey * disk
        # multiple scattering adds a fraction of order w = 1e-4, the disk quadrature 1e-4
        assert value == pytest.approx(expected, rel=3e-4)


def test_extra_dims_broadcast_and_bond_albedo():
    # the Lambert sphere per wavelength (Russell 1916, exact) and the Bond albedo as the
    # spectrum-weighted spherical albedo (its definition; numpy's trapezoidal rule)
    wavelength = xr.DataArray([0.4, 0.6, 0.8, 1.0], dims="wavelength",
                              coords={"wavelength": [0.4, 0.6, 0.8, 1.0]})
    albedo = xr.DataArray([0.1, 0.5, 0.7, 0.2], dims="wavelength", coords=wavelength.coords)
    spectrum = xr.DataArray([1.0, 2.0, 1.5, 0.5], dims="wavelength", coords=wavelength.coords)
    atm = lamina.make_atmosphere(
        xr.DataArray(np.zeros((4, 1)), dims=("wavelength", "layer"),
                     coords={"wavelength": wavelength.values}),
        xr.DataArray(np.zeros((4, 1)), dims=("wavelength", "layer"),
                     coords={"wavelength": wavelength.values}),
        [1.0])
    out = phase_curve(atm, [0.0, 90.0], streams=4, surface_albedo=albedo,
                      stellar_spectrum=spectrum, disk_order=(32, 6))
    assert out.reflectance.dims[0] == "phase_angle"
    assert set(out.reflectance.dims) == {"phase_angle", "wavelength"}
    np.testing.assert_allclose(out.geometric_albedo.values, 2.0 * albedo.values / 3.0,
                               rtol=1e-12)
    np.testing.assert_allclose(out.spherical_albedo.values, albedo.values, rtol=2e-5)
    x = wavelength.values
    expected = (np.trapezoid(albedo.values * spectrum.values, x)
                / np.trapezoid(spectrum.values, x))
    assert float(out.bond_albedo) == pytest.approx(expected, rel=2e-5)
    for name in ("reflectance", "geometric_albedo", "spherical_albedo", "bond_albedo"):
        assert out[name].attrs["units"] == "1"
        assert out[name].attrs["long_name"]
    assert out.phase_angle.attrs["units"] == "degree"


def test_disk_nodes_cover_the_lit_and_visible_disk():
    # exact geometry: the lit part of the disk seen by the observer has projected area
    # int mu dA = (pi / 2) (1 + cos a) (the illuminated fraction of the disk, (1 + cos a) / 2)
    for a in (0.0, 40.0, 90.0, 135.0):
        nodes = disk_nodes(np.array([a]), 48, 8)
        area = np.sum(nodes["weight"] * nodes["view_cosine"])
        # (algebraic convergence in mu0: 4.5e-5 at 135 degrees with 48 points)
        assert area == pytest.approx(np.pi / 2 * (1 + np.cos(np.radians(a))), rel=1e-4)
        assert np.all(nodes["view_cosine"] > 0.0)
        # the local azimuth obeys the spherical law of cosines with the phase angle
        mu0 = nodes["sun_cosine"][nodes["sun_index"]]
        mu = nodes["view_cosine"]
        phi = np.radians(nodes["azimuth"])
        cos_a = mu * mu0 - np.sqrt(1 - mu**2) * np.sqrt(1 - mu0**2) * np.cos(phi)
        np.testing.assert_allclose(cos_a, np.cos(np.radians(a)), atol=1e-12)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"phase_angle": [0.0, 190.0]}, "phase_angle must lie in"),
        ({"phase_angle": -1.0}, "phase_angle must lie in"),
        ({"phase_angle": [[0.0]]}, "phase_angle must be"),
        ({"streams": 0}, "streams must be"),
        ({"streams": 5}, "streams must be"),
        ({"streams": -2}, "streams must be"),
        ({"disk_order": 0}, "disk_order must be"),
        ({"phase_integral_order": 1.5}, "phase_integral_order must be"),
        ({"surface": lamina.surface.lambertian(0.3)}, "surface: give either surface"),
        ({"stokes": 3}, "stokes: polarized phase curves need the vector kernel"),
        ({"stellar_spectrum": xr.DataArray([1.0, 2.0], dims="frequency")},
         "stellar_spectrum is over 'frequency'"),
        ({"surface_albedo": 1.5}, "surface_albedo"),
    ],
)
def test_bad_input_names_the_argument(kwargs, match):
    arguments = {"atmosphere": _clear(), "phase_angle": [0.0], "streams": 4,
                 "surface_albedo": 0.2, "disk_order": 4}
    arguments.update(kwargs)
    with pytest.raises(ValueError, match=match):
        phase_curve(**arguments)
    with pytest.raises(TypeError, match="surface must be a lamina.surface surface"):
        phase_curve(_clear(), [0.0], 4, surface="brdf")


def test_a_lambertian_surface_object_equals_the_surface_albedo():
    # solve(surface=) through its bidirectional path (BRDF Fourier terms, exact BRDF for the
    # beam at the views) against the Lambertian surface_albedo: the same planet
    atm = lamina.make_atmosphere([0.1, 0.4], [0.9, 0.99],
                                 lamina.phase.henyey_greenstein(0.5, 16))
    options = dict(disk_order=(8, 6), phase_integral_order=6)
    lambert = phase_curve(atm, [0.0, 70.0, 140.0], 8, surface_albedo=0.3, **options)
    surface = phase_curve(atm, [0.0, 70.0, 140.0], 8,
                          surface=lamina.surface.lambertian(0.3), **options)
    for name in ("reflectance", "geometric_albedo", "spherical_albedo"):
        np.testing.assert_allclose(surface[name].values, lambert[name].values, rtol=1e-10)


def test_planet_radius_reaches_the_local_solves():
    # a curved planet's local beam (pseudo-spherical): for a radius far larger than the
    # atmosphere the curve is the plane-parallel one (to 1e-6); a small planet under a
    # thick atmosphere (100 km on 1000 km) changes the grazing suns' columns, and the curve
    atm = lamina.make_atmosphere([0.2, 0.5], [0.95, 0.9], lamina.phase.henyey_greenstein(
        0.6, 16), altitude=[100e3, 50e3, 0.0])
    options = dict(disk_order=(8, 6), phase_integral_order=6, surface_albedo=0.1)
    flat = phase_curve(atm, [0.0, 90.0], 8, **options)
    huge = phase_curve(atm, [0.0, 90.0], 8, planet_radius=1e15, **options)
    small = phase_curve(atm, [0.0, 90.0], 8, planet_radius=1e6, **options)
    np.testing.assert_allclose(huge.reflectance.values, flat.reflectance.values, rtol=1e-6)
    assert not np.allclose(small.reflectance.values, flat.reflectance.values, rtol=1e-3)
