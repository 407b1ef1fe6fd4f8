"""The ``reflectance`` output: pi I / (mu0 S) at the top, against exact surface cases.

Without an atmosphere (optical depth 0) the radiance leaving the top is the surface's
reflection of the beam, I = f(mu, mu0, phi) mu0 S, so the bidirectional reflectance factor
is pi f: the albedo for a Lambertian surface (definition of the reflectance factor,
Nicodemus et al. 1977) and, for the Ross-thick kernel, the closed form of Roujean et al.
(1992) as written by Lucht et al. (2000), coded here from the paper's formula.
"""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

import lamina

SUN = [0.0, 35.0, 70.0]
VIEW_ZENITH = [0.0, 20.0, 60.0]
VIEW_AZIMUTH = [0.0, 90.0, 180.0]


def empty_atmosphere():
    return lamina.make_atmosphere([0.0], [0.5], lamina.phase.henyey_greenstein(0.5, 16))


def test_reflectance_of_a_bare_lambertian_surface_is_its_albedo():
    out = lamina.solve(empty_atmosphere(), streams=8, sun_zenith=SUN, surface_albedo=0.37,
                       view_zenith=VIEW_ZENITH, view_azimuth=VIEW_AZIMUTH)
    reflectance = out.reflectance
    assert reflectance.dims == ("sun_zenith", "view_zenith", "view_azimuth")
    np.testing.assert_allclose(reflectance.values, 0.37, rtol=1e-14, atol=0)
    assert reflectance.attrs["units"] == "1"
    assert "bidirectional reflectance factor" in reflectance.attrs["long_name"]


def _ross_thick(sun_zenith, view_zenith, view_azimuth):
    """K_vol of Roujean et al. (1992) in Lucht et al. (2000), eq. 38; phase angle xi with
    cos xi = cos t0 cos t + sin t0 sin t cos(phi_b), phi_b the azimuth from the
    backscattering side (lamina's view_azimuth 180 is phi_b = 0)."""
    t0, t = np.radians(sun_zenith), np.radians(view_zenith)
    phi_b = np.radians(180.0 - view_azimuth)
    cos_xi = np.cos(t0) * np.cos(t) + np.sin(t0) * np.sin(t) * np.cos(phi_b)
    xi = np.arccos(np.clip(cos_xi, -1.0, 1.0))
    return ((np.pi / 2 - xi) * np.cos(xi) + np.sin(xi)) / (np.cos(t0) + np.cos(t)) - np.pi / 4


def test_reflectance_of_a_bare_bidirectional_surface_is_pi_times_its_brdf():
    isotropic, volumetric = 0.2, 0.15
    surface = lamina.surface.ross_li(isotropic, volumetric, 0.0)
    out = lamina.solve(empty_atmosphere(), streams=8, sun_zenith=SUN, surface=surface,
                       view_zenith=VIEW_ZENITH, view_azimuth=VIEW_AZIMUTH)
    sun, zenith, azimuth = np.meshgrid(SUN, VIEW_ZENITH, VIEW_AZIMUTH, indexing="ij")
    expected = isotropic + volumetric * _ross_thick(sun, zenith, azimuth)
    got = out.reflectance.transpose("sun_zenith", "view_zenith", "view_azimuth").values
    np.testing.assert_allclose(got, expected, rtol=1e-12, atol=0)


def test_reflectance_per_pixel_and_nan_only_where_the_beam_is_zero():
    atm = lamina.make_atmosphere(xr.DataArray(np.zeros((3, 1)), dims=("pixel", "layer")),
                                 [0.5], lamina.phase.henyey_greenstein(0.5, 16))
    irradiance = xr.DataArray([1.0, 0.0, 2.5], dims="pixel")
    out = lamina.solve(atm, streams=4, sun_zenith=xr.DataArray([10.0, 20.0, 30.0], dims="pixel"),
                       sun_irradiance=irradiance, surface_albedo=0.25,
                       view_zenith=xr.DataArray([0.0, 30.0, 50.0], dims="pixel"),
                       view_azimuth=0.0)
    assert out.reflectance.dims == ("pixel",)
    values = out.reflectance.values
    np.testing.assert_allclose(values[[0, 2]], 0.25, rtol=1e-14, atol=0)
    assert np.isnan(values[1])


def test_reflectance_needs_a_beam_radiances_and_the_top():
    atm = empty_atmosphere()
    views = {"view_zenith": [0.0], "view_azimuth": [0.0]}
    assert "reflectance" not in lamina.solve(atm, streams=4, sun_zenith=30.0)
    assert "reflectance" not in lamina.solve(atm, streams=4, top_diffuse_radiance=1.0,
                                             **views)
    assert "reflectance" not in lamina.solve(atm, streams=4, sun_zenith=30.0,
                                             output_levels=[0.5, 1.0], **views)
    out = lamina.solve(atm, streams=4, sun_zenith=30.0, output_levels=[1.0, 0.0], **views)
    assert out.reflectance.dims == ("view_zenith", "view_azimuth")


@pytest.mark.parametrize("chunked", [False, True])
def test_reflectance_is_pi_radiance_over_the_beam_in_a_scattering_atmosphere(chunked):
    # the definition itself on a scattering case, eager and lazy
    atm = lamina.make_atmosphere(
        xr.DataArray([[0.3, 1.2], [0.1, 0.4]], dims=("wavelength", "layer")), [0.9, 0.95],
        lamina.phase.henyey_greenstein(0.7, 32))
    if chunked:
        atm = atm.chunk({"wavelength": 1})
    out = lamina.solve(atm, streams=8, sun_zenith=40.0, sun_irradiance=1.7,
                       surface_albedo=0.1, view_zenith=[0.0, 45.0], view_azimuth=[30.0])
    up = out.radiance.sel(level=0, direction="up")
    expected = np.pi * up / (np.cos(np.radians(40.0)) * 1.7)
    np.testing.assert_allclose(out.reflectance.values, expected.values, rtol=1e-15)
