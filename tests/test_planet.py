"""Disk-integrated reflected light: each check names its outside source."""

import numpy as np
import pytest
import xarray as xr
from scipy import integrate

import lamina
from lamina.planet import disk_nodes, phase_curve, stokes_rotation


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
        if a == 0.0:
            continue
        # the Stokes rotation onto the scattering plane: the angle at the observer's vertex
        # of the spherical triangle (observer, zenith, star) with sides theta, a, theta0
        # obeys the law of cosines (exact); the mirror half has the opposite angle and
        # azimuth, and the signed azimuth's size is the node's azimuth
        both = stokes_rotation(nodes, np.array([a]))
        half = nodes["weight"].size
        mu0, mu = np.tile(mu0, 2), both["view_cosine"]
        expected = (mu0 - mu * np.cos(np.radians(a))) / (
            np.sqrt(1 - mu**2) * np.sin(np.radians(a)))
        np.testing.assert_allclose(np.cos(both["rotation"]), expected, atol=1e-12)
        np.testing.assert_allclose(both["rotation"][half:], -both["rotation"][:half])
        np.testing.assert_allclose(np.abs(both["signed_azimuth"][:half]), nodes["azimuth"],
                                   atol=1e-9)
        np.testing.assert_allclose(both["signed_azimuth"][half:],
                                   -both["signed_azimuth"][:half])
        assert np.sum(both["weight"]) == pytest.approx(np.sum(nodes["weight"]), rel=1e-14)


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
        ({"stokes": 2}, "stokes must be 1"),
        ({"stokes": True}, "stokes must be 1"),
        # the vector solve refuses a bidirectional ground by name (lamina.solve)
        ({"stokes": 3, "surface_albedo": None, "surface": lamina.surface.lambertian(0.3)},
         "stokes > 1 does not support a bidirectional surface"),
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


# --------------------------------------------------------------------------------------
# polarization (stokes=3, 4)
# --------------------------------------------------------------------------------------


def _rayleigh(optical_thickness, albedo=1.0, layers=1):
    return lamina.make_atmosphere([optical_thickness / layers] * layers, [albedo] * layers,
                                  scattering_matrix_moments=lamina.phase.rayleigh_matrix())


def test_an_unpolarizing_atmosphere_gives_the_scalar_phase_curve():
    # an atmosphere without a scattering matrix scatters without polarizing: the vector
    # solve is the scalar one (1e-11, tests/test_vector_kernel.py), so the disk-integrated I
    # must be the stokes=1 curve and Q, U, V vanish (exact: nothing polarizes the light)
    atm = lamina.make_atmosphere([0.3, 2.0], [0.9, 0.99],
                                 lamina.phase.henyey_greenstein(0.6, 24))
    options = dict(surface_albedo=0.2, disk_order=(8, 6), phase_integral_order=4)
    scalar = phase_curve(atm, PHASES, 8, **options)
    for stokes in (3, 4):
        vector = phase_curve(atm, PHASES, 8, stokes=stokes, **options)
        assert list(vector.stokes.values) == list("IQUV"[:stokes])
        intensity = vector.reflectance.sel(stokes="I")
        np.testing.assert_allclose(intensity.values, scalar.reflectance.values,
                                   rtol=1e-10, atol=1e-14)
        for name in ("geometric_albedo", "spherical_albedo"):
            assert float(vector[name]) == pytest.approx(float(scalar[name]), rel=1e-10)
        polarized = vector.reflectance.sel(stokes=list("IQUV"[1:stokes])).values
        assert np.max(np.abs(polarized)) < 1e-14
        np.testing.assert_array_less(np.abs(vector.degree_of_polarization.values), 1e-12)


def _mirror_case():
    # Rayleigh with an invented F34 (beta2 at l = 2, |F34| < F11 everywhere) so that the
    # light is circularly polarized too (V needs F34: Hovenier et al. 2004, ch. 3)
    matrix = lamina.phase.rayleigh_matrix()
    matrix = np.array(matrix)
    matrix[2, 5] = 0.1
    return lamina.make_atmosphere([0.5, 0.3], [1.0, 0.9],
                                  scattering_matrix_moments=[matrix, matrix])


def test_disk_integrated_u_and_v_vanish_by_mirror_symmetry():
    # the lit and visible disk is symmetric about the scattering plane; a mirror reflection
    # changes the signs of U and V (Hovenier et al. 2004, ch. 3; exact), so the whole
    # planet has U = V = 0 while each local point has U and V (checked here with solve)
    atm = _mirror_case()
    local = lamina.solve(atm, streams=8, sun_zenith=50.0, view_zenith=40.0,
                         view_azimuth=70.0, stokes=4, surface_albedo=0.1)
    stokes_vector = local.radiance.sel(level=0, direction="up").squeeze().values
    assert abs(stokes_vector[2]) > 1e-3 * stokes_vector[0]
    assert abs(stokes_vector[3]) > 1e-6 * stokes_vector[0]
    out = phase_curve(atm, [20.0, 70.0, 110.0, 160.0], 8, surface_albedo=0.1, stokes=4,
                      disk_order=(8, 6), phase_integral_order=2)
    intensity = out.reflectance.sel(stokes="I").values
    for label in ("U", "V"):
        assert np.all(np.abs(out.reflectance.sel(stokes=label).values) < 1e-13 * intensity)
    # (the crescent at 160 degrees is nearly unpolarized here: Q only 6e-3 of I)
    assert np.all(np.abs(out.reflectance.sel(stokes="Q").values[:3]) > 1e-2 * intensity[:3])


def test_linear_polarization_vanishes_at_phase_angles_0_and_180():
    # at a = 0 the lit disk is symmetric about the line of sight (every reference plane is
    # equivalent), so Q integrates to 0 (exact); at a = 180 nothing lit is visible. At a = 0
    # the local Q is the same all round each circle mu0 = const and the rotation turns it by
    # 2 psi, so the psi rule must integrate cos 2 psi over (0, pi): Gauss-Legendre with 12
    # points does so to 3e-16 (with 8: 9e-11)
    out = phase_curve(_rayleigh(0.5, 0.95), [0.0, 90.0, 180.0], 8, surface_albedo=0.1,
                      stokes=3, disk_order=(16, 12), phase_integral_order=2)
    reflectance = out.reflectance
    assert abs(float(reflectance.sel(stokes="Q", phase_angle=0.0))) \
        < 1e-14 * float(reflectance.sel(stokes="I", phase_angle=0.0))
    assert abs(float(out.degree_of_polarization.sel(phase_angle=0.0))) < 1e-14
    assert np.all(reflectance.sel(phase_angle=180.0).values == 0.0)
    assert float(out.degree_of_polarization.sel(phase_angle=180.0)) == 0.0
    assert float(out.degree_of_polarization.sel(phase_angle=90.0)) > 0.1


def _single_scattering_disk(phase_deg, optical_thickness, order=200):
    """Disk-integrated (I, Q) of a thin Rayleigh layer over a black ground, independently.

    Single scattering from tests/polarized_references.rayleigh_single_scattering (lamina's
    local meridian frame), turned onto the scattering plane by vectors built here, and
    integrated with a Gauss-Legendre product rule in Horak's (1950) latitude b and
    longitude l, in which the lit and visible region is the rectangle |b| < 90,
    a - 90 < l < 90 (the observer along x, the star at longitude a).
    """
    from scipy.special import roots_legendre

    from polarized_references import meridian_basis, rayleigh_single_scattering, rotation

    a = np.radians(phase_deg)
    x, w = roots_legendre(order)
    latitude, w_lat = 0.5 * np.pi * x, 0.5 * np.pi * w
    longitude = (a - np.pi / 2) + 0.5 * (np.pi - a) * (x + 1.0)
    w_lon = 0.5 * (np.pi - a) * w
    b, lon = (v.ravel() for v in np.meshgrid(latitude, longitude, indexing="ij"))
    weight = np.outer(w_lat, w_lon).ravel() * np.cos(b)
    normal = np.stack([np.cos(b) * np.cos(lon), np.cos(b) * np.sin(lon), np.sin(b)], -1)
    observer, star = np.array([1.0, 0.0, 0.0]), np.array([np.cos(a), np.sin(a), 0.0])
    mu, mu0 = normal @ observer, normal @ star
    forward = -star + mu0[:, None] * normal           # horizontal part of the beam's path
    forward /= np.linalg.norm(forward, axis=-1, keepdims=True)
    side = np.cross(normal, forward)
    phi = np.degrees(np.arctan2(side @ observer, forward @ observer))
    reflected, _ = rayleigh_single_scattering(optical_thickness, mu, mu0, phi)
    ell_local, r_local = meridian_basis(mu, phi)      # in (forward, side, normal) components
    frame = np.stack([forward, side, normal], axis=-2)
    ell = np.einsum("ni,nij->nj", ell_local, frame)
    right = np.einsum("ni,nij->nj", r_local, frame)
    plane_normal = np.cross(star, observer)
    plane_normal /= np.linalg.norm(plane_normal)
    plane_ell = np.cross(observer, plane_normal)      # r_s x l_s = observer
    angle = np.arctan2(right @ plane_ell, ell @ plane_ell)
    turned = np.einsum("nij,nj->ni", rotation(angle), reflected)
    return np.sum((weight * mu)[:, None] * turned, axis=0)


def test_thin_rayleigh_planet_against_single_scattering_integrated_independently():
    # an optically thin Rayleigh layer (t = 1e-4) over a black ground is single scattering
    # (multiple scattering adds of order t); its disk integral from
    # tests/polarized_references.py with a fine quadrature of its own (independent of
    # planet.py's nodes). Each point's singly scattered light, referred to the plane of the
    # beam and the view, is (F11, F12, 0, 0), and that plane is the planet's scattering
    # plane, so the whole planet has -Q/I = sin^2 a / (1 + cos^2 a) (Rayleigh's law,
    # Chandrasekhar 1950): a check of the reference's own rotation first
    tau = 1e-4
    phases = np.array([30.0, 60.0, 90.0, 120.0, 150.0])
    out = phase_curve(_rayleigh(tau), phases, 8, surface_albedo=0.0, stokes=3,
                      disk_order=(64, 8), phase_integral_order=1)
    for a_deg in phases:
        reference = _single_scattering_disk(a_deg, tau)
        a = np.radians(a_deg)
        rayleigh_law = np.sin(a) ** 2 / (1.0 + np.cos(a) ** 2)
        assert -reference[1] / reference[0] == pytest.approx(rayleigh_law, rel=1e-12)
        assert abs(reference[2]) < 1e-12 * reference[0]
        value = out.reflectance.sel(phase_angle=a_deg).values
        # planet.py's disk quadrature: a thin layer is limb-bright (I mu = t F11 / 4 pi does
        # not vanish at the limb), so its error falls only about as order^-1.5, not
        # order^-2.5 as for the Lambert sphere (measured at 64 mu0 points: 1.4e-4 of I at
        # 30 degrees, 5e-4 at 90, 1.9e-3 at 150); multiple scattering adds of order t
        np.testing.assert_allclose(value[:2], reference[:2], rtol=2.5e-3)
        # in -Q/I the quadrature cancels (Q/I is the same at every point): what is left is
        # multiple scattering (measured 2e-5 at 30 degrees, 2e-4 at 150)
        assert float(out.degree_of_polarization.sel(phase_angle=a_deg)) == pytest.approx(
            rayleigh_law, rel=3e-4)


def test_a_rayleigh_planet_is_polarized_perpendicular_to_the_scattering_plane():
    # common practice (e.g. the Rayleigh-planet curves of Buenzli and Schmid 2009, from
    # memory): near 90 degrees a Rayleigh-scattering planet is polarized perpendicular to the
    # scattering plane (P = -Q/I > 0), below the single-scattering value 1 of Rayleigh's
    # law, and multiple scattering depolarizes: less absorption, lower P (their curves for
    # decreasing single-scattering albedo rise toward the single-scattering law)
    # (t = 10 in layers of 2: the vector kernel fails today on a layer with t / mu > 700 or
    # so, and the limb views here reach mu = 3e-3)
    phases = [60.0, 90.0, 120.0]
    options = dict(surface_albedo=0.0, disk_order=(16, 8), phase_integral_order=2)
    degrees = {}
    for albedo in (1.0, 0.5):
        out = phase_curve(_rayleigh(10.0, albedo, 5), phases, 16, stokes=3, **options)
        degrees[albedo] = out.degree_of_polarization.values
    # (measured: P = 0.236, 0.364, 0.267 at 60, 90, 120 degrees for w = 1; 0.527, 0.850,
    # 0.518 for w = 0.5)
    assert np.all(degrees[1.0] > 0.0)
    assert np.all(degrees[0.5] < 1.0)
    assert np.all(degrees[1.0] < degrees[0.5])
    # the largest of the three near 90 degrees (Rayleigh's law peaks at 90)
    assert np.argmax(degrees[1.0]) == 1 and np.argmax(degrees[0.5]) == 1
    # the scalar approximation misses the polarization's share in multiple scattering:
    # its I differs from the vector I by a few percent for a conservative Rayleigh
    # atmosphere (Mishchenko, Lacis and Travis 1994, from memory) but not by more than 10%
    scalar = phase_curve(_rayleigh(10.0, 1.0, 5), phases, 16, **options).reflectance.values
    vector = phase_curve(_rayleigh(10.0, 1.0, 5), phases, 16, stokes=3,
                         **options).reflectance.sel(stokes="I").values
    difference = np.abs(vector / scalar - 1.0)   # measured: 1.8%, 4.9%, 0.45%
    assert np.all(difference > 1e-3) and np.all(difference < 0.1)
