"""Thermal emission and heating rates against exact results (sources beside each check)."""

from __future__ import annotations

import numpy as np
import pytest

import lamina

BAND = (400.0, 700.0)


def hg(g: float, n: int = 32) -> np.ndarray:
    return lamina.phase.henyey_greenstein(g, n)


def test_isothermal_enclosure_radiance_is_planck_everywhere():
    # Kirchhoff's law: a scattering, absorbing slab between a black surface and an isotropic
    # sky radiance, all at one temperature, holds the Planck radiance in every direction.
    temperature = 280.0
    planck = float(lamina.planck.band_radiance(temperature, *BAND))
    moments = np.stack([hg(0.8), hg(0.3), lamina.phase.rayleigh(0.0, 32)])
    atm = lamina.make_atmosphere([0.3, 4.0, 1.0], [0.9, 0.6, 1.0], moments,
                                 temperature=np.full(4, temperature))
    out = lamina.solve(atm, streams=16, sun_irradiance=0.0, surface_albedo=0.0,
                       wavenumber_band=BAND, top_diffuse_radiance=planck,
                       view_zenith=[0.0, 45.0, 89.0], view_azimuth=[0.0, 180.0],
                       output_levels=[0.0, 0.5, 1.0, 2.7, 3.0])
    assert np.allclose(out.radiance.values, planck, rtol=1e-10)
    assert np.allclose(out.mean_intensity.values, planck, rtol=1e-10)
    assert np.allclose(out.flux_up.values, np.pi * planck, rtol=1e-10)
    assert np.allclose(out.flux_down.values, np.pi * planck, rtol=1e-10)


def test_linear_source_radiance_is_the_exact_integral():
    # a non-scattering stack over a cold black surface; with B linear in t inside each layer
    # the emergent radiance is sum over layers of the exact integral
    # int (B0 + B1 t') exp(-t'/mu) dt'/mu (calculus), attenuated by the layers above
    temperature = np.array([200.0, 230.0, 260.0, 300.0])
    tau = np.array([0.3, 1.1, 0.6])
    atm = lamina.make_atmosphere(tau, np.zeros(3), np.ones((3, 1)), temperature=temperature)
    view = np.array([0.0, 40.0, 75.0])
    out = lamina.solve(atm, streams=8, sun_irradiance=0.0, surface_albedo=0.0,
                       surface_temperature=0.0, wavenumber_band=BAND, view_zenith=view,
                       view_azimuth=[0.0])
    levels = lamina.planck.band_radiance(temperature, *BAND)
    mu = np.cos(np.radians(view))
    above = np.concatenate([[0.0], np.cumsum(tau)[:-1]])
    expected = np.zeros_like(mu)
    for layer in range(3):   # the reference sums layers in Python on purpose
        b0 = levels[layer]
        slope = (levels[layer + 1] - levels[layer]) / tau[layer]
        x = tau[layer] / mu
        own = b0 * -np.expm1(-x) + slope * mu * (1 - np.exp(-x) * (1 + x))
        expected += own * np.exp(-above[layer] / mu)
    got = out.radiance.sel(level=0, direction="up").isel(view_azimuth=0).values
    assert np.allclose(got, expected, rtol=1e-12)


def _milne(streams: int, thickness: float = 400.0):
    # a thick conservative isotropic slab lit from below by a black surface emitting B,
    # cold above: deep inside and at the top this is the Milne problem
    atm = lamina.make_atmosphere([thickness], [1.0], np.ones((1, 1)),
                                 temperature=[0.0, 0.0])
    depths = np.array([0.0, 20.0, 30.0, 40.0]) / thickness
    return lamina.solve(atm, streams=streams, sun_irradiance=0.0, surface_albedo=0.0,
                        surface_temperature=300.0, wavenumber_band=BAND,
                        view_zenith=[0.0, 30.0, 60.0, 80.0, 90.0], view_azimuth=[0.0],
                        output_levels=depths)


def test_milne_problem_hopf_constant():
    # J(t) = (3 F / 4 pi) (t + q(t)), q -> q(inf) = 0.710446 deep inside (Hopf 1934;
    # Chandrasekhar 1950); F is the (constant) net upward flux
    out = _milne(32)
    flux = float(-out.flux_net.isel(level=1))
    assert np.allclose(-out.flux_net.values, flux, rtol=1e-9)   # conservative: constant
    depth = out.cumulative_optical_depth.values[1:]
    q = out.mean_intensity.values[1:] * 4 * np.pi / (3 * flux) - depth
    assert np.allclose(q, 0.710446, atol=2e-5)


def test_milne_problem_emergent_shape_and_grey_limb_darkening():
    # emergent intensity proportional to H(mu) (Chandrasekhar 1950), I(0, mu) =
    # sqrt(3) F H(mu) / (4 pi); the limb-darkening ratio I(0, 0) / I(0, 1) = 1 / H(1) =
    # 0.3439 (classical grey value, from memory) and H(1) = 2.90781 (from memory)
    from lamina.validation import references

    out = _milne(32)
    flux = float(-out.flux_net.isel(level=0))
    radiance = out.radiance.sel(level=0, direction="up").isel(view_azimuth=0).values
    mu = np.cos(np.radians(out.view_zenith.values))
    h = references.chandrasekhar_h(np.maximum(mu, 0.0), 1.0)
    assert np.allclose(radiance, np.sqrt(3) * flux * h / (4 * np.pi), rtol=1e-4)
    assert radiance[-1] / radiance[0] == pytest.approx(0.3439, abs=1e-4)


def test_thermal_and_stellar_sources_add():
    moments = np.stack([hg(0.7), hg(0.2)])
    atm = lamina.make_atmosphere([0.5, 2.0], [0.8, 0.95], moments,
                                 temperature=[220.0, 250.0, 290.0])
    options = dict(streams=16, sun_zenith=50.0, surface_albedo=0.3, view_zenith=[0.0, 60.0],
                   view_azimuth=[0.0, 90.0])
    both = lamina.solve(atm, sun_irradiance=5.0, wavenumber_band=BAND, **options)
    thermal = lamina.solve(atm, sun_irradiance=0.0, wavenumber_band=BAND, **options)
    stellar = lamina.solve(atm, sun_irradiance=5.0, **options)
    for name in ("flux_up", "flux_down", "mean_intensity", "radiance"):
        assert np.allclose(both[name], thermal[name] + stellar[name], rtol=1e-12), name


def test_monochromatic_source_uses_the_spectral_planck_radiance():
    # optically thick, non-scattering, isothermal: the top sees B_nu(T) (Kirchhoff)
    atm = lamina.make_atmosphere([50.0], [0.0], np.ones((1, 1)), temperature=[260.0, 260.0])
    out = lamina.solve(atm, sun_irradiance=0.0, wavenumber=667.0, view_zenith=[0.0],
                       view_azimuth=[0.0])
    expected = lamina.planck.spectral_radiance_wavenumber(260.0, 667.0)
    assert float(out.radiance.sel(level=0, direction="up")[0, 0]) == pytest.approx(
        float(expected), rel=1e-12)
    assert out.radiance.attrs["units"] == "W m-2 sr-1 cm"


def test_heating_rate_checked_by_hand_from_the_fluxes():
    # dT/dt = (g / c_p) (F_net,top - F_net,bottom) / (p_bottom - p_top), in K/day
    pressure = [100.0, 5000.0, 30000.0, 101325.0]
    atm = lamina.make_atmosphere([0.2, 0.8, 2.5], [0.0, 0.3, 0.5],
                                 np.stack([hg(0.0), hg(0.5), hg(0.8)]),
                                 temperature=[210.0, 230.0, 260.0, 288.0], pressure=pressure)
    out = lamina.solve(atm, streams=8, sun_zenith=30.0, sun_irradiance=1360.0,
                       surface_albedo=0.2, wavenumber_band=(10.0, 3000.0))
    net = (out.flux_down - out.flux_up).values
    by_hand = 9.80665 / 1004.0 * (net[:-1] - net[1:]) / np.diff(pressure) * 86400.0
    assert np.allclose(out.heating_rate.values, by_hand, rtol=1e-12)
    # and with Mars-like g and c_p given explicitly
    mars = lamina.solve(atm, streams=8, sun_zenith=30.0, sun_irradiance=590.0,
                        surface_albedo=0.2, wavenumber_band=(10.0, 3000.0), gravity=3.71,
                        heat_capacity=770.0)
    net = (mars.flux_down - mars.flux_up).values
    by_hand = 3.71 / 770.0 * (net[:-1] - net[1:]) / np.diff(pressure) * 86400.0
    assert np.allclose(mars.heating_rate.values, by_hand, rtol=1e-12)


@pytest.mark.parametrize(
    ("change", "message"),
    [
        (dict(temperature=[250.0, -1.0]), "temperature must lie in"),
        (dict(temperature=[250.0, np.nan]), "temperature must be finite"),
        (dict(temperature=[250.0, 260.0, 270.0]), "temperature must have one value per level"),
        (dict(pressure=[1000.0, 500.0]), "pressure must increase downward"),
    ],
)
def test_bad_thermal_atmospheres(change, message):
    arguments = dict(optical_depth=[1.0], single_scattering_albedo=[0.5],
                     phase_moments=hg(0.5), temperature=[250.0, 260.0])
    arguments.update(change)
    with pytest.raises(ValueError, match=message):
        lamina.make_atmosphere(**arguments)


@pytest.mark.parametrize(
    ("options", "message"),
    [
        (dict(wavenumber_band=(700.0, 400.0)), r"wavenumber_band must satisfy 0 <= low < high"),
        (dict(wavenumber_band=(-5.0, 400.0)), r"wavenumber_band must satisfy 0 <= low < high"),
        (dict(wavenumber_band=(1.0, 2.0, 3.0)), "wavenumber_band must be a pair"),
        (dict(wavenumber=-3.0), "wavenumber must be positive"),
        (dict(wavenumber=500.0, wavenumber_band=BAND), "either wavenumber_band"),
        (dict(surface_temperature=300.0), "surface_temperature needs a thermal source"),
        (dict(wavenumber_band=BAND, surface_temperature=-2.0), "surface_temperature must lie"),
    ],
)
def test_bad_thermal_options(options, message):
    atm = lamina.make_atmosphere([1.0], [0.5], hg(0.5), temperature=[250.0, 260.0])
    with pytest.raises(ValueError, match=message):
        lamina.solve(atm, **options)


def test_thermal_options_need_temperatures():
    atm = lamina.make_atmosphere([1.0], [0.5], hg(0.5))
    with pytest.raises(ValueError, match="needs level temperatures"):
        lamina.solve(atm, wavenumber_band=BAND)


def test_band_per_wavelength_equals_separate_runs():
    import xarray as xr

    atm = lamina.make_atmosphere(np.array([[0.5, 1.0], [2.0, 0.3]]), np.full((2, 2), 0.4),
                                 hg(0.3), temperature=np.array([[210.0, 240.0, 280.0]] * 2),
                                 extra_dims=["wavenumber_bin"])
    low = xr.DataArray([500.0, 900.0], dims="wavenumber_bin")
    high = xr.DataArray([600.0, 1000.0], dims="wavenumber_bin")
    both = lamina.solve(atm, sun_irradiance=0.0, wavenumber_band=(low, high))
    for i, band in enumerate([(500.0, 600.0), (900.0, 1000.0)]):
        alone = lamina.solve(atm.isel(wavenumber_bin=i), sun_irradiance=0.0,
                             wavenumber_band=band)
        assert np.allclose(both.flux_up.isel(wavenumber_bin=i), alone.flux_up, rtol=1e-13)
