"""lamina.Solver equals lamina.solve exactly (the same steps without the labelling).

The reference is lamina.solve on the same columns, an independent path through xarray's
apply_ufunc and the Dataset assembly: every output the Solver returns must equal the
Dataset's variable of the same name bit for bit (np.testing.assert_array_equal).
"""

from __future__ import annotations

import numpy as np
import pytest

import lamina


def columns(count: int = 3, layers: int = 5, seed: int = 2):
    rng = np.random.default_rng(seed)
    tau = 10.0 ** rng.uniform(-2.0, 0.7, (count, layers))
    albedo = rng.uniform(0.5, 1.0, (count, layers))
    moments = lamina.phase.henyey_greenstein(rng.uniform(0.0, 0.9, (count, layers)), 40)
    return lamina.make_atmosphere(tau, albedo, moments, extra_dims=("wavelength",))


def _arrays(atm):
    return [atm[name].values for name in
            ("optical_depth", "single_scattering_albedo", "phase_moments")]


def _assert_equal(result, dataset):
    for name, values in result.items():
        np.testing.assert_array_equal(values, dataset[name].values, err_msg=name)
    expected = {"flux_up", "flux_down_diffuse", "flux_down_direct", "flux_down", "flux_net",
                "mean_intensity", "actinic_flux", "fourier_terms", "radiance",
                "reflectance", "flux_divergence"} & set(dataset.data_vars)
    assert set(result) == expected


CASES = {
    "fluxes": dict(streams=16, sun_zenith=30.0),
    "radiances": dict(streams=8, sun_zenith=50.0, view_zenith=[0.0, 35.0, 90.0],
                      view_azimuth=[0.0, 100.0, 180.0]),
    "suns": dict(streams=8, sun_zenith=[0.0, 40.0, 75.0], view_zenith=[20.0],
                 view_azimuth=[45.0, 270.0]),
    "positions": dict(streams=6, sun_zenith=20.0, view_zenith=[10.0], view_azimuth=[0.0],
                      output_levels=[0.0, 0.25, 3.5, 5.0]),
    "no corrections": dict(streams=8, sun_zenith=60.0, view_zenith=[30.0],
                           view_azimuth=[0.0], delta_m=False,
                           single_scattering_correction=False),
    "no beam": dict(streams=8, view_zenith=[30.0], view_azimuth=[0.0]),
}


@pytest.mark.parametrize("case", sorted(CASES))
def test_solver_equals_solve_bit_for_bit(case):
    options = CASES[case]
    atm = columns()
    per_call = dict(surface_albedo=np.array([0.0, 0.3, 1.0]))
    if "sun_zenith" in options:
        per_call["sun_irradiance"] = np.array([1.0, 2.5, 0.7])
    else:
        per_call["top_diffuse_radiance"] = 0.4
    result = lamina.Solver(**options)(*_arrays(atm), **per_call)
    _assert_equal(result, lamina.solve(atm, **options, **per_call))


def test_one_column_without_a_column_axis_and_a_shared_phase_function():
    atm = columns(count=1).isel(wavelength=0)
    options = CASES["radiances"]
    solver = lamina.Solver(**options)
    result = solver(*_arrays(atm), surface_albedo=0.2)
    _assert_equal(result, lamina.solve(atm, surface_albedo=0.2, **options))
    assert result["radiance"].shape == (6, 2, 3, 3)
    # a (moment,) vector for every layer, as make_atmosphere takes it
    moments = lamina.phase.henyey_greenstein(0.6, 24)
    shared = lamina.make_atmosphere(atm.optical_depth.values, 0.9, moments)
    result = solver(shared.optical_depth.values, np.full(5, 0.9), moments)
    _assert_equal(result, lamina.solve(shared, **options))


def test_a_zero_beam_solves_like_solve_and_gives_no_reflectance_factor():
    atm = columns()
    options = CASES["radiances"]
    solver = lamina.Solver(**options)
    for irradiance in (0.0, np.array([0.0, 1.0, 0.0])):
        result = solver(*_arrays(atm), sun_irradiance=irradiance)
        _assert_equal(result, lamina.solve(atm, sun_irradiance=irradiance, **options))
    assert np.isnan(result["reflectance"][0]).all()
    assert np.isfinite(result["reflectance"][1]).all()


def test_solver_refuses_what_needs_solve_and_names_bad_arguments():
    with pytest.raises(ValueError, match="does not take surface"):
        lamina.Solver(8, 30.0, surface=lamina.surface.lambertian(0.3))
    with pytest.raises(ValueError, match="does not take wavenumber_band"):
        lamina.Solver(8, wavenumber_band=(500.0, 600.0))
    import xarray as xr

    with pytest.raises(ValueError, match="per-pixel geometry"):
        lamina.Solver(8, 30.0, view_zenith=xr.DataArray([0.0, 10.0], dims="pixel"),
                      view_azimuth=0.0)
    with pytest.raises(ValueError, match="streams must be an even integer"):
        lamina.Solver(7, 30.0)
    with pytest.raises(ValueError, match="sun_zenith must lie in"):
        lamina.Solver(8, 95.0)
    with pytest.raises(ValueError, match="output_levels must lie in"):
        lamina.Solver(8, 30.0, output_levels=[0.0, 9.0])(*_arrays(columns()))
    solver = lamina.Solver(8, 30.0)
    tau, albedo, moments = _arrays(columns())
    with pytest.raises(ValueError, match="optical_depth must lie in"):
        solver(-tau, albedo, moments)
    with pytest.raises(ValueError, match="single_scattering_albedo has 4 layers"):
        solver(tau, albedo[:, :4], moments)
    with pytest.raises(ValueError, match="surface_albedo must lie in"):
        solver(tau, albedo, moments, surface_albedo=1.5)
    with pytest.raises(ValueError, match="sun_irradiance needs sun_zenith"):
        lamina.Solver(8)(tau, albedo, moments, sun_irradiance=1.0)
