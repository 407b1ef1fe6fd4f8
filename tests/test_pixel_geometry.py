"""One sun and view geometry per pixel: equal to separate runs, bit for bit.

The reference is lamina run pixel by pixel, each with its own scalar sun and one view
direction (the outer-product path the per-pixel path must reproduce exactly: the kernel
solves each column on its own, so sharing a call with other pixels may change no bit).
"""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

import lamina

PIXELS = 5
LAYERS = 4


def swath(wavelengths: int = 0) -> xr.Dataset:
    """An invented swath: every pixel (and wavelength) with its own optics."""
    rng = np.random.default_rng(16)
    dims = ("wavelength", "pixel", "layer") if wavelengths else ("pixel", "layer")
    shape = (wavelengths, PIXELS, LAYERS) if wavelengths else (PIXELS, LAYERS)
    tau = xr.DataArray(rng.uniform(0.05, 3.0, shape), dims=dims)
    albedo = xr.DataArray(rng.uniform(0.3, 0.999, shape), dims=dims)
    g = xr.DataArray(rng.uniform(0.0, 0.85, shape), dims=dims)
    moments = xr.apply_ufunc(lamina.phase.henyey_greenstein, g, 48,
                             output_core_dims=[["moment"]])
    temperature = xr.DataArray(np.linspace(220.0, 290.0, LAYERS + 1), dims="level")
    return lamina.make_atmosphere(tau, albedo, moments, temperature=temperature)


GEOMETRY = {
    "sun_zenith": xr.DataArray([0.0, 25.0, 48.0, 66.0, 81.0], dims="pixel"),
    "view_zenith": xr.DataArray([0.0, 12.0, 55.0, 90.0, 73.0], dims="pixel"),
    "view_azimuth": xr.DataArray([0.0, 45.0, 180.0, 300.0, 97.0], dims="pixel"),
}


def _separate(atm, index, **options):
    """The pixel alone, with its geometry as scalars and one-angle view lists."""
    pixel = atm.isel(pixel=index)
    geometry = {name: float(array[index]) for name, array in GEOMETRY.items()}
    return lamina.solve(pixel, sun_zenith=geometry["sun_zenith"],
                        view_zenith=[geometry["view_zenith"]],
                        view_azimuth=[geometry["view_azimuth"]], **options)


OUTPUTS = ("flux_up", "flux_down_diffuse", "flux_down_direct", "mean_intensity",
           "fourier_terms")


@pytest.mark.parametrize("options", [
    {"streams": 8, "surface_albedo": 0.3},
    {"streams": 16, "surface_albedo": 0.1, "output_levels": [0.0, 1.5, 4.0]},
    {"streams": 6, "delta_m": False, "single_scattering_correction": False},
    {"streams": 8, "wavenumber_band": (600.0, 700.0), "surface_albedo": 0.05},
], ids=["lambertian", "positions", "uncorrected", "thermal"])
def test_per_pixel_geometry_equals_separate_runs_bit_for_bit(options):
    atm = swath()
    together = lamina.solve(atm, **GEOMETRY, **options)
    assert together.radiance.dims == ("pixel", "level", "direction")
    for index in range(PIXELS):
        alone = _separate(atm, index, **options)
        np.testing.assert_array_equal(
            together.radiance.isel(pixel=index).values,
            alone.radiance.isel(view_zenith=0, view_azimuth=0).values)
        for name in OUTPUTS:
            np.testing.assert_array_equal(together[name].isel(pixel=index).values,
                                          alone[name].values)


def test_per_pixel_views_along_one_of_two_extra_dims_and_in_dask_chunks():
    # views along pixel only, a second extra dim (wavelength) broadcast; chunked by pixel
    # and wavelength (dask) it is the same, bit for bit
    atm = swath(wavelengths=3)
    options = {"streams": 8, "surface_albedo": 0.2, **GEOMETRY}
    eager = lamina.solve(atm, **options)
    assert eager.radiance.dims == ("wavelength", "pixel", "level", "direction")
    lazy = lamina.solve(atm.chunk({"pixel": 2, "wavelength": 1}), **options)
    assert lazy.radiance.chunks is not None
    np.testing.assert_array_equal(lazy.radiance.values, eager.radiance.values)
    for wavelength in range(3):
        for index in (0, 3):
            alone = _separate(atm.isel(wavelength=wavelength), index, streams=8,
                              surface_albedo=0.2)
            np.testing.assert_array_equal(
                eager.radiance.isel(wavelength=wavelength, pixel=index).values,
                alone.radiance.isel(view_zenith=0, view_azimuth=0).values)


def test_a_scalar_view_azimuth_holds_for_every_pixel_and_angles_become_coordinates():
    atm = swath()
    out = lamina.solve(atm, streams=8, sun_zenith=30.0, surface_albedo=0.2,
                       view_zenith=GEOMETRY["view_zenith"], view_azimuth=120.0)
    assert out.view_zenith.dims == ("pixel",)
    np.testing.assert_array_equal(out.view_zenith.values, GEOMETRY["view_zenith"].values)
    assert float(out.view_azimuth) == 120.0
    alone = lamina.solve(atm.isel(pixel=2), streams=8, sun_zenith=30.0, surface_albedo=0.2,
                         view_zenith=[55.0], view_azimuth=[120.0])
    np.testing.assert_array_equal(out.radiance.isel(pixel=2).values,
                                  alone.radiance.isel(view_zenith=0, view_azimuth=0).values)


def test_views_not_along_the_atmospheres_extra_dims_are_refused():
    atm = swath()
    wrong = xr.DataArray([10.0, 20.0], dims="scan")
    with pytest.raises(ValueError, match="view_zenith is a DataArray with dims \\('scan',\\)"):
        lamina.solve(atm, streams=4, sun_zenith=30.0, view_zenith=wrong, view_azimuth=0.0)
    with pytest.raises(ValueError, match="view_azimuth has 2 values along 'pixel'"):
        lamina.solve(atm, streams=4, sun_zenith=30.0, view_zenith=GEOMETRY["view_zenith"],
                     view_azimuth=xr.DataArray([0.0, 1.0], dims="pixel"))
    with pytest.raises(ValueError, match="view_azimuth must be a scalar or a DataArray"):
        lamina.solve(atm, streams=4, sun_zenith=30.0, view_zenith=GEOMETRY["view_zenith"],
                     view_azimuth=[0.0, 90.0])
    with pytest.raises(ValueError, match="given together"):
        lamina.solve(atm, streams=4, sun_zenith=30.0, view_zenith=GEOMETRY["view_zenith"])
    with pytest.raises(ValueError, match="view_zenith must lie in"):
        lamina.solve(atm, streams=4, sun_zenith=30.0, view_azimuth=0.0,
                     view_zenith=xr.DataArray([0.0, 1.0, 2.0, 3.0, 95.0], dims="pixel"))


def test_lazy_per_pixel_views_are_checked_in_their_block():
    atm = swath()
    bad = xr.DataArray([0.0, 1.0, 2.0, 3.0, -1.0], dims="pixel").chunk({"pixel": 2})
    out = lamina.solve(atm.chunk({"pixel": 2}), streams=4, sun_zenith=30.0,
                       view_zenith=bad, view_azimuth=0.0)
    with pytest.raises(ValueError, match="view_zenith must lie in .*dask chunk"):
        out.radiance.compute()


def test_a_bidirectional_surface_with_per_pixel_views_equals_separate_runs():
    # the surface's view arrays are evaluated at each pixel's own view; a surface parameter
    # along the pixel dim as well
    atm = swath()
    amplitudes = [0.05, 0.1, 0.2, 0.15, 0.3]
    surface = lamina.surface.rahman_pinty_verstraete(
        xr.DataArray(amplitudes, dims="pixel"), 0.7, -0.2)
    options = {"streams": 8, "surface": surface}
    together = lamina.solve(atm, **GEOMETRY, **options)
    for index in range(PIXELS):
        alone = _separate(atm, index, streams=8, surface=lamina.surface.rahman_pinty_verstraete(
            amplitudes[index], 0.7, -0.2))
        np.testing.assert_array_equal(
            together.radiance.isel(pixel=index).values,
            alone.radiance.isel(view_zenith=0, view_azimuth=0).values)
        for name in OUTPUTS:
            np.testing.assert_array_equal(together[name].isel(pixel=index).values,
                                          alone[name].values)


def test_a_bidirectional_surface_with_per_pixel_views_and_thermal_emission_is_refused():
    with pytest.raises(ValueError, match="one view per pixel .* and thermal emission"):
        lamina.solve(swath(), streams=4, sun_zenith=30.0, wavenumber_band=(600.0, 700.0),
                     surface=lamina.surface.lambertian(0.2),
                     view_zenith=GEOMETRY["view_zenith"], view_azimuth=0.0)


def test_per_pixel_geometry_with_a_pseudo_spherical_beam_equals_separate_runs():
    # the two per-column extensions together (one sun and one view per pixel on a curved
    # planet) solve each pixel exactly as a run of that pixel alone (bit for bit)
    atm = lamina.make_atmosphere(np.array([[0.1, 0.5, 0.3]] * 3), [0.9, 0.95, 0.8],
                                 lamina.phase.henyey_greenstein(0.6, 16),
                                 extra_dims={"pixel": [0, 1, 2]},
                                 altitude=[30e3, 10e3, 3e3, 0.0])
    sun = xr.DataArray([30.0, 60.0, 85.0], dims="pixel")
    zenith = xr.DataArray([10.0, 40.0, 70.0], dims="pixel")
    azimuth = xr.DataArray([0.0, 90.0, 180.0], dims="pixel")
    out = lamina.solve(atm, streams=8, sun_zenith=sun, view_zenith=zenith,
                       view_azimuth=azimuth, planet_radius=6.371e6)
    for pixel in range(3):
        alone = lamina.solve(atm.isel(pixel=[pixel]), streams=8, sun_zenith=float(sun[pixel]),
                             view_zenith=float(zenith[pixel]),
                             view_azimuth=float(azimuth[pixel]), planet_radius=6.371e6)
        np.testing.assert_array_equal(out.radiance.isel(pixel=pixel).values.ravel(),
                                      alone.radiance.values.ravel())
        np.testing.assert_array_equal(out.flux_up.isel(pixel=pixel).values.ravel(),
                                      alone.flux_up.values.ravel())
