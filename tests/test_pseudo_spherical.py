"""solve(planet_radius=): the pseudo-spherical beam (Dahlback and Stamnes 1991).

References outside lamina: the slant optical depth as the integral of the extinction along
the straight ray from each level to the sun, done here by scipy's quad in the ray's own
parameter (r(s)^2 = r^2 + s^2 + 2 r s cos z), not by lamina's chords; the Chapman function
of an exponential atmosphere (Chapman 1931) by the same quad of exp(-(r(s) - R)/H), and at
90 degrees its asymptotic value sqrt(pi x / 2) (1 + 1/(8x)) (from memory of the Chapman
series, e.g. Huestis 2001); the shadow height R (1/sin z - 1) of a sun z > 90 degrees
(elementary geometry); the isothermal scale height H = R T / (M g) of the hypsometric
equation; energy: in a conservative layer the diffuse field gains exactly what the beam's
source puts in, S integral of the beam transmittance over the layer's optical depth (the
flux equation of the radiative transfer equation; Chandrasekhar 1950).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad

import lamina

EARTH_RADIUS = 6.371e6


def ray_slant_depth(radii: np.ndarray, tau: np.ndarray, zenith: float, level: int) -> float:
    """Optical depth along the straight ray from ``level`` to the sun (scipy quad).

    Extinction tau_j / (r_j - r_j+1) is uniform inside shell j. inf where the ray meets the
    ground. The crossings of the shell radii are given to quad as break points.
    """
    r0, ground, top = radii[level], radii[-1], radii[0]
    mu = np.cos(np.radians(zenith))
    sin2 = 1.0 - mu * mu
    if mu < 0.0 and r0 * np.sqrt(sin2) < ground:
        return np.inf
    exit_distance = -r0 * mu + np.sqrt(top * top - r0 * r0 * sin2)
    if exit_distance <= 0.0:
        return 0.0
    extinction = tau / (radii[:-1] - radii[1:])

    def beta(s: float) -> float:
        r = np.sqrt(r0 * r0 + s * s + 2.0 * r0 * s * mu)
        shell = np.searchsorted(-radii, -r, side="right") - 1
        return float(extinction[min(max(shell, 0), tau.size - 1)])

    points = []
    for rb in radii:
        disc = rb * rb - r0 * r0 * sin2
        if disc < 0.0:
            continue
        for s in (-r0 * mu - np.sqrt(disc), -r0 * mu + np.sqrt(disc)):
            if 0.0 < s < exit_distance:
                points.append(s)
    value, _ = quad(beta, 0.0, exit_distance, points=sorted(points) or None, limit=400,
                    epsabs=0.0, epsrel=1e-12)
    return value


def chapman(x: float, zenith: float) -> float:
    """Chapman's grazing-incidence function Ch(x, z) by quad along the ray (units of H)."""
    mu = np.cos(np.radians(zenith))
    top = x + 60.0
    exit_distance = -x * mu + np.sqrt(top * top - x * x * (1.0 - mu * mu))
    value, _ = quad(lambda s: np.exp(x - np.sqrt(x * x + s * s + 2.0 * x * s * mu)), 0.0,
                    exit_distance, points=[min(50.0, exit_distance / 2)], limit=1000,
                    epsabs=0.0, epsrel=1e-13)
    return value


def layered(tau, albedo, altitude, g=0.0, moments=16, **kwargs):
    phase = lamina.phase.henyey_greenstein(g, moments)
    return lamina.make_atmosphere(tau, albedo, phase, altitude=altitude, **kwargs)


# a column whose extinction falls with height and a haze layer aloft
ALTITUDE = np.array([60e3, 40e3, 25e3, 15e3, 8e3, 3e3, 0.0])
TAU = np.array([0.01, 0.05, 0.08, 0.15, 0.25, 0.4])
ALBEDO = np.array([0.99, 0.95, 0.9, 0.8, 0.85, 0.7])


def test_plane_parallel_limit_for_a_huge_radius():
    # as the radius grows the shells flatten: every output tends to the plane-parallel one
    # (the chords differ from dz / cos z by O(dz / R)); corrections on, positions inside
    # layers, several suns
    atm = layered(TAU, ALBEDO, ALTITUDE, g=0.75, moments=48)
    options = dict(streams=8, sun_zenith=[0.0, 40.0, 75.0], surface_albedo=0.3,
                   view_zenith=[0.0, 30.0, 70.0], view_azimuth=[0.0, 60.0, 180.0],
                   output_levels=[0, 0.5, 2, 3.25, 6])
    flat = lamina.solve(atm, **options)
    round_ = lamina.solve(atm, planet_radius=1e15, **options)
    for name in ("flux_up", "flux_down_diffuse", "flux_down_direct", "mean_intensity",
                 "radiance"):
        scale = float(np.abs(flat[name]).max())
        assert float(np.abs(round_[name] - flat[name]).max()) <= 1e-6 * scale, name


@pytest.mark.parametrize("zenith", [0.0, 60.0, 85.0, 89.5, 90.0])
def test_direct_flux_is_the_beam_along_the_straight_ray(zenith):
    # S mu0 exp(-slant depth) at every level, the slant depth from quad along the ray;
    # delta-M on: the direct beam is reported unscaled
    atm = layered(TAU, ALBEDO, ALTITUDE, g=0.8, moments=32)
    out = lamina.solve(atm, streams=6, sun_zenith=zenith, sun_irradiance=2.0,
                       surface_albedo=0.1, planet_radius=EARTH_RADIUS)
    radii = EARTH_RADIUS + ALTITUDE
    mu0 = np.cos(np.radians(zenith))
    expected = [2.0 * mu0 * np.exp(-ray_slant_depth(radii, TAU, zenith, level))
                for level in range(ALTITUDE.size)]
    np.testing.assert_allclose(out.flux_down_direct.values, expected, rtol=1e-9, atol=1e-15)


def test_direct_flux_inside_layers_and_with_extra_dims():
    # two columns with different altitudes (a column dim on altitude), positions on levels
    # and inside layers: on levels the ray's own depth; the flux falls monotonically
    altitude = np.stack([ALTITUDE, 0.5 * ALTITUDE])
    atm = lamina.make_atmosphere(TAU, ALBEDO, lamina.phase.henyey_greenstein(0.5, 16),
                                 altitude=altitude, extra_dims=["column"])
    out = lamina.solve(atm, streams=4, sun_zenith=80.0, planet_radius=EARTH_RADIUS,
                       output_levels=[0, 1.5, 3, 4.5, 6])
    mu0 = np.cos(np.radians(80.0))
    for column in range(2):
        radii = EARTH_RADIUS + altitude[column]
        direct = out.flux_down_direct.isel(column=column).values
        for position, level in ((0, 0), (2, 3), (4, 6)):
            expected = mu0 * np.exp(-ray_slant_depth(radii, TAU, 80.0, level))
            assert direct[position] == pytest.approx(expected, rel=1e-9)
        assert np.all(np.diff(direct) < 0.0)


@pytest.mark.parametrize("zenith, tolerance", [(85.0, 2e-5), (89.0, 2e-4), (90.0, 2e-3)])
def test_chapman_function_of_an_exponential_atmosphere(zenith, tolerance):
    # thin layers of an exponential atmosphere (scale height H, each layer's optical depth
    # the exact integral of its extinction): the slant depth to the ground tends to
    # tau_vertical Ch(R / H, z) as the layers thin (uniform extinction per shell is second
    # order in dz / H away from the horizon)
    scale_height = 8e3
    x = EARTH_RADIUS / scale_height
    reference = chapman(x, zenith)
    errors = []
    for layers in (200, 800):
        z = np.linspace(25 * scale_height, 0.0, layers + 1)
        tau = np.exp(-z[1:] / scale_height) - np.exp(-z[:-1] / scale_height)
        atm = lamina.make_atmosphere(tau, np.zeros(layers), [1.0], altitude=z)
        out = lamina.solve(atm, streams=2, sun_zenith=zenith, planet_radius=EARTH_RADIUS)
        # without scattering the mean intensity is the beam's, S T / (4 pi), also at 90
        # degrees where the direct flux is 0
        slant = -np.log(4.0 * np.pi * float(out.mean_intensity.isel(level=-1)))
        errors.append(abs(slant / (tau.sum() * reference) - 1.0))
    assert errors[1] < tolerance
    assert errors[1] < errors[0] / 3.0


def test_chapman_reference_against_its_known_values():
    # the quad reference itself: sec z far from the horizon (plane-parallel), Chapman's
    # asymptotic sqrt(pi x / 2) (1 + 1 / (8 x)) at the horizon
    x = EARTH_RADIUS / 8e3
    assert chapman(x, 0.0) == pytest.approx(1.0, rel=1e-12)
    assert chapman(x, 60.0) == pytest.approx(2.0, rel=5e-3)
    assert chapman(x, 90.0) == pytest.approx(np.sqrt(np.pi * x / 2) * (1 + 1 / (8 * x)),
                                             rel=1e-3)


def test_twilight_beam_only_above_the_shadow():
    # sun 96 degrees from the zenith: levels above the shadow height R (1/sin z - 1)
    # (about 35 km) are lit by a beam rising through them, those below get none; every
    # output stays finite and the sky below is lit by light scattered from above
    altitude = np.array([100e3, 80e3, 60e3, 45e3, 30e3, 20e3, 10e3, 0.0])
    tau = np.array([1e-4, 5e-4, 2e-3, 8e-3, 0.02, 0.05, 0.1])
    atm = layered(tau, np.full(7, 0.999), altitude, g=0.0, moments=2)
    zenith = 96.0
    out = lamina.solve(atm, streams=8, sun_zenith=zenith, surface_albedo=0.2,
                       planet_radius=EARTH_RADIUS, view_zenith=[0.0, 60.0],
                       view_azimuth=[0.0, 180.0])
    shadow = EARTH_RADIUS * (1.0 / np.sin(np.radians(zenith)) - 1.0)
    lit = altitude > shadow
    assert lit.any() and not lit.all()
    direct = out.flux_down_direct.values
    assert np.all(direct[~lit] == 0.0)
    assert np.all(direct[lit] < 0.0)            # the beam crosses these levels upward
    mu0 = np.cos(np.radians(zenith))
    radii = EARTH_RADIUS + altitude
    for level in np.flatnonzero(lit):
        expected = mu0 * np.exp(-ray_slant_depth(radii, tau, zenith, level))
        assert direct[level] == pytest.approx(expected, rel=1e-9)
    for name in ("flux_up", "flux_down_diffuse", "mean_intensity", "radiance"):
        assert np.all(np.isfinite(out[name].values)), name
        assert np.all(out[name].values >= 0.0), name
    assert np.all(out.flux_down_diffuse.values[1:] > 0.0)
    assert np.all(out.mean_intensity.values > 0.0)


def test_without_scattering_the_layers_absorb_the_beam_extinction():
    # w = 0: no diffuse field, and each layer absorbs exactly what the direct beam loses
    # between its levels (the slant depths from quad)
    atm = layered(TAU, np.zeros(6), ALTITUDE, pressure=np.linspace(1e4, 1e5, 7))
    zenith = 87.0
    out = lamina.solve(atm, streams=4, sun_zenith=zenith, planet_radius=EARTH_RADIUS)
    radii = EARTH_RADIUS + ALTITUDE
    mu0 = np.cos(np.radians(zenith))
    direct = np.array([mu0 * np.exp(-ray_slant_depth(radii, TAU, zenith, level))
                       for level in range(7)])
    assert np.all(out.flux_up.values == 0.0)
    assert np.all(np.abs(out.flux_down_diffuse.values) < 1e-15)
    np.testing.assert_allclose(out.flux_divergence.values, direct[:-1] - direct[1:],
                               rtol=1e-9)


def test_conservative_layers_pass_the_beam_source_to_the_diffuse_field():
    # w = 1, isotropic (the quadrature integrates the phase function exactly): in each layer
    # the net diffuse flux grows by S integral of T(t) dt over the layer, S mu_j (T_top -
    # T_bottom) with the layer's cosine mu_j = tau_j / (slant_bottom - slant_top) from quad.
    # (The net total flux is not constant: mu_j is not mu0 in pseudo-spherical geometry.)
    atm = layered(TAU, np.ones(6), ALTITUDE, g=0.0, moments=1)
    zenith = 86.0
    out = lamina.solve(atm, streams=8, sun_zenith=zenith, planet_radius=EARTH_RADIUS,
                       delta_m=False)
    radii = EARTH_RADIUS + ALTITUDE
    slant = np.array([ray_slant_depth(radii, TAU, zenith, level) for level in range(7)])
    cosine = TAU / np.diff(slant)
    gained = cosine * (np.exp(-slant[:-1]) - np.exp(-slant[1:]))
    net_diffuse = (out.flux_down_diffuse - out.flux_up).values
    np.testing.assert_allclose(np.diff(net_diffuse), gained, rtol=0, atol=1e-9)
    # the plane-parallel beam would hand on mu0 (T_top - T_bottom) instead: far off here
    mu0 = np.cos(np.radians(zenith))
    assert np.max(np.abs(gained - mu0 * (np.exp(-slant[:-1]) - np.exp(-slant[1:])))) > 1e-3


def test_single_scattering_correction_follows_the_spherical_beam():
    # a forward-peaked haze under a low sun: 16 streams with delta-M and the corrections
    # against 64 streams without truncation (a second solution of the same problem); the
    # plane-parallel answer differs from both by far more than their difference. (With the
    # correction's single scattering along the plane-parallel beam instead, the error
    # measured 5% of the largest radiance, against 1% here.)
    tau = np.array([0.02, 0.05, 0.1, 0.2])
    altitude = np.array([40e3, 25e3, 12e3, 4e3, 0.0])
    atm = layered(tau, np.full(4, 0.95), altitude, g=0.85, moments=64)
    options = dict(sun_zenith=88.0, surface_albedo=0.1, view_zenith=[20.0, 60.0, 80.0],
                   view_azimuth=[0.0, 30.0, 180.0], planet_radius=EARTH_RADIUS)
    corrected = lamina.solve(atm, streams=16, **options).radiance
    reference = lamina.solve(atm, streams=64, delta_m=False, **options).radiance
    flat = lamina.solve(atm, streams=16, **{**options, "sun_zenith": 88.0,
                                            "planet_radius": None}).radiance
    error = float(np.abs(corrected - reference).max())
    assert error <= 0.02 * float(np.abs(reference).max())
    assert float(np.abs(flat - reference).max()) > 5 * error


def test_hypsometric_altitudes_of_an_isothermal_atmosphere():
    # without altitudes they follow from pressure and temperature: isothermal, z = H ln(p0/p)
    # with H = R T / (M g) exactly (here a CO2 atmosphere on a Mars-sized planet)
    pressure = np.array([10.0, 60.0, 200.0, 400.0, 610.0])
    temperature = np.full(5, 210.0)
    molar_mass, gravity = 0.04401, 3.71
    height = 8.314462618 * 210.0 / (molar_mass * gravity)
    altitude = height * np.log(pressure[-1] / pressure)
    tau = np.array([0.05, 0.1, 0.2, 0.3])
    phase = lamina.phase.henyey_greenstein(0.6, 16)
    given = lamina.make_atmosphere(tau, np.full(4, 0.9), phase, temperature, altitude=altitude)
    derived = lamina.make_atmosphere(tau, np.full(4, 0.9), phase, temperature,
                                     pressure=pressure)
    options = dict(streams=8, sun_zenith=[70.0, 89.0], planet_radius=3.3895e6)
    a = lamina.solve(given, **options)
    b = lamina.solve(derived, molar_mass=molar_mass, gravity=gravity, **options)
    for name in ("flux_up", "flux_down_direct", "flux_down_diffuse"):
        np.testing.assert_allclose(b[name].values, a[name].values, rtol=1e-10, atol=1e-15)
    # dry air and Earth gravity by default: another (thinner) atmosphere, another beam
    c = lamina.solve(derived, **options)
    assert not np.allclose(c.flux_down_direct.values, a.flux_down_direct.values, rtol=1e-3)


def test_planet_radius_with_units_and_per_column():
    import xarray as xr

    atm = layered(TAU, ALBEDO, ALTITUDE)
    in_km = xr.DataArray(EARTH_RADIUS / 1e3, attrs={"units": "km"})
    a = lamina.solve(atm, streams=4, sun_zenith=85.0, planet_radius=EARTH_RADIUS)
    b = lamina.solve(atm, streams=4, sun_zenith=85.0, planet_radius=in_km)
    np.testing.assert_array_equal(a.flux_down_direct.values, b.flux_down_direct.values)
    # one radius per column: each column as if solved alone
    columns = lamina.make_atmosphere(np.stack([TAU, TAU]), np.stack([ALBEDO, ALBEDO]), [1.0],
                                     altitude=ALTITUDE, extra_dims=["column"])
    radii = xr.DataArray([EARTH_RADIUS, 3.3895e6], dims="column")
    both = lamina.solve(columns, streams=4, sun_zenith=85.0, planet_radius=radii)
    for column in range(2):
        alone = lamina.solve(columns.isel(column=column), streams=4, sun_zenith=85.0,
                             planet_radius=float(radii[column]))
        np.testing.assert_array_equal(both.flux_down_direct.isel(column=column).values,
                                      alone.flux_down_direct.values)
    assert not np.allclose(both.flux_down_direct.isel(column=0),
                           both.flux_down_direct.isel(column=1))


@pytest.mark.parametrize("radius", [0.0, -1.0, np.inf, np.nan])
def test_bad_planet_radius(radius):
    atm = layered(TAU, ALBEDO, ALTITUDE)
    with pytest.raises(ValueError, match="planet_radius must be positive and finite"):
        lamina.solve(atm, streams=4, sun_zenith=30.0, planet_radius=radius)


def test_bad_altitudes():
    atm = layered(TAU, ALBEDO, ALTITUDE[::-1])
    with pytest.raises(ValueError, match="altitude must decrease strictly downward"):
        lamina.solve(atm, streams=4, sun_zenith=30.0, planet_radius=EARTH_RADIUS)
    # lazily given altitudes are checked when the blocks are prepared
    lazy = atm.chunk({"level": -1})
    with pytest.raises(ValueError, match="altitude .as planet_radius . altitude.: radius "
                                         "must decrease strictly downward"):
        lamina.solve(lazy, streams=4, sun_zenith=30.0, planet_radius=EARTH_RADIUS).compute()
    flat = lamina.make_atmosphere(TAU, ALBEDO, [1.0])
    with pytest.raises(ValueError, match="altitude: planet_radius needs level altitudes"):
        lamina.solve(flat, streams=4, sun_zenith=30.0, planet_radius=EARTH_RADIUS)
    with pytest.raises(ValueError, match="molar_mass only serves planet_radius"):
        lamina.solve(flat, streams=4, sun_zenith=30.0, molar_mass=0.029)
    with pytest.raises(ValueError, match="molar_mass: the atmosphere gives level altitudes"):
        lamina.solve(layered(TAU, ALBEDO, ALTITUDE), streams=4, sun_zenith=30.0,
                     planet_radius=EARTH_RADIUS, molar_mass=0.029)


def test_sun_below_the_horizon_everywhere():
    atm = layered(TAU, ALBEDO, ALTITUDE)
    # shadow height at 100 degrees: about 98 km, above the top (60 km)
    with pytest.raises(ValueError, match="sun_zenith: the sun is below the horizon at "
                                         "every level"):
        lamina.solve(atm, streams=4, sun_zenith=[80.0, 100.0], planet_radius=EARTH_RADIUS)
    with pytest.raises(ValueError, match="sun_zenith"):
        lamina.solve(atm, streams=4, sun_zenith=180.0, planet_radius=EARTH_RADIUS)
    # without a planet the sun must stand above the horizon
    with pytest.raises(ValueError, match="sun_zenith"):
        lamina.solve(atm, streams=4, sun_zenith=95.0)


def test_a_bidirectional_ground_at_and_beyond_the_horizon():
    # at 90 degrees and beyond the ground is unlit: a bidirectional surface reflects only
    # diffuse light, and a Lambertian surface_albedo equal to its (constant) albedo gives
    # the same field (lamina.surface.lambertian's BRDF is A / pi)
    atm = layered(TAU, ALBEDO, ALTITUDE, g=0.5)
    options = dict(streams=8, sun_zenith=[88.0, 90.0, 93.0], planet_radius=EARTH_RADIUS,
                   view_zenith=[0.0, 50.0], view_azimuth=[0.0, 180.0])
    brdf = lamina.solve(atm, surface=lamina.surface.lambertian(0.3), **options)
    lambert = lamina.solve(atm, surface_albedo=0.3, **options)
    for name in ("flux_up", "flux_down_diffuse", "radiance"):
        np.testing.assert_allclose(brdf[name].values, lambert[name].values, rtol=1e-9,
                                   atol=1e-14)
    # (cos 90 degrees is 6e-17 in floating point)
    assert np.all(np.abs(brdf.flux_down_direct.isel(level=-1).values[1:]) < 1e-30)
