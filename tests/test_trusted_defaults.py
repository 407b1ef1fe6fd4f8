"""Defaults that add no light, runs without a beam, units through solve, lamina's warnings."""

from __future__ import annotations

import warnings

import numpy as np
import pytest
import xarray as xr

import lamina


def _thermal_atmosphere(**extra) -> xr.Dataset:
    return lamina.make_atmosphere([0.5, 1.0], [0.3, 0.6], lamina.phase.henyey_greenstein(0.5, 16),
                                  temperature=[220.0, 250.0, 280.0],
                                  pressure=[2e4, 6e4, 1e5], **extra)


def test_a_thermal_run_gets_no_beam_and_no_reflector():
    # no sun named: no direct beam anywhere, no sun_zenith recorded, black surface (the
    # surface emits as a black body: flux_up at the ground is pi B(T_surface), exact)
    out = lamina.solve(_thermal_atmosphere(), streams=8, wavenumber_band=(400.0, 900.0))
    assert float(np.abs(out.flux_down_direct).max()) == 0.0
    assert "sun_zenith" not in out.coords and out.attrs["beam_source"] == 0
    emitted = np.pi * lamina.planck.band_radiance(280.0, 400.0, 900.0)
    assert float(out.flux_up.isel(level=-1)) == pytest.approx(float(emitted), rel=1e-12)


def test_without_a_beam_only_the_azimuth_averaged_term_is_solved():
    # nothing depends on azimuth without a beam: one Fourier term, and every azimuth equal
    out = lamina.solve(_thermal_atmosphere(), streams=8, wavenumber_band=(400.0, 900.0),
                       view_zenith=[0.0, 50.0], view_azimuth=[0.0, 90.0, 180.0])
    assert int(out.fourier_terms) == 1
    radiance = out.radiance.values
    assert np.all(radiance == radiance[..., :1])


def test_a_layer_whose_truncated_phase_function_breaks_term_one_solves_without_a_beam():
    # (1, 0.999, ...) cut at two streams is not a positive phase function: with a beam the
    # m = 1 term fails, but a thermal run never forms it
    moments = np.array([1.0, 0.999, 0.998, 0.997])
    atm = lamina.make_atmosphere([1.0], [0.9], moments, temperature=[250.0, 260.0])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", lamina.LaminaWarning)
        out = lamina.solve(atm, streams=2, wavenumber_band=(400.0, 900.0), delta_m=False,
                           view_zenith=[30.0], view_azimuth=[0.0])
        assert np.all(np.isfinite(out.radiance.values))
        with pytest.raises(lamina.SolverError, match="Fourier term 1"):
            lamina.solve(atm, streams=2, sun_zenith=30.0, wavenumber_band=(400.0, 900.0),
                         delta_m=False, view_zenith=[30.0], view_azimuth=[0.0])


def test_sun_irradiance_without_a_zenith_is_refused():
    atm = lamina.make_atmosphere([0.5], [0.5], [1.0])
    with pytest.raises(ValueError, match="sun_irradiance needs sun_zenith"):
        lamina.solve(atm, streams=4, sun_irradiance=1361.0)


def test_a_spectral_irradiance_labels_fluxes_radiances_and_heating_rates():
    atm = lamina.make_atmosphere([0.5, 1.0], 0.9, lamina.phase.rayleigh(),
                                 pressure=[2e4, 6e4, 1e5])
    sun = xr.DataArray(1.8, attrs={"units": "W m-2 nm-1"})
    out = lamina.solve(atm, streams=4, sun_zenith=30.0, sun_irradiance=sun,
                       view_zenith=[0.0], view_azimuth=[0.0])
    assert out.flux_net.attrs["units"] == "W m-2 nm-1"
    assert out.radiance.attrs["units"] == "W m-2 sr-1 nm-1"
    assert out.heating_rate.attrs["units"] == "K day-1 nm-1"
    assert "standard_name" not in out.heating_rate.attrs   # CF's name is for K s-1 only


def test_a_monochromatic_thermal_heating_rate_is_per_unit_wavenumber():
    out = lamina.solve(_thermal_atmosphere(), streams=4, wavenumber=700.0)
    assert out.flux_up.attrs["units"] == "W m-2 cm"
    assert out.heating_rate.attrs["units"] == "K day-1 cm"


def test_numpy_arrays_for_per_column_options_equal_dataarrays():
    atm = lamina.make_atmosphere(np.ones((3, 2)), 0.9, lamina.phase.rayleigh(),
                                 extra_dims=["wavelength"])
    albedo = np.array([0.1, 0.2, 0.3])
    plain = lamina.solve(atm, streams=4, sun_zenith=30.0, surface_albedo=albedo)
    labelled = lamina.solve(atm, streams=4, sun_zenith=30.0,
                            surface_albedo=xr.DataArray(albedo, dims="wavelength"))
    xr.testing.assert_identical(plain.flux_up, labelled.flux_up)
    with pytest.raises(ValueError, match="surface_albedo axis 0 has 2 values but the"):
        lamina.solve(atm, streams=4, sun_zenith=30.0, surface_albedo=[0.1, 0.2])


def test_pressure_profiles_per_column_give_each_column_its_heating_rate():
    tau = np.array([[0.5, 1.0], [0.2, 2.0]])
    pressure = np.array([[2e4, 6e4, 1e5], [1e4, 5e4, 9e4]])
    both = lamina.solve(lamina.make_atmosphere(tau, 0.8, lamina.phase.rayleigh(),
                                               pressure=pressure, extra_dims=["column"]),
                        streams=4, sun_zenith=30.0)
    for column in range(2):
        alone = lamina.solve(lamina.make_atmosphere(tau[column], 0.8, lamina.phase.rayleigh(),
                                                    pressure=pressure[column]),
                             streams=4, sun_zenith=30.0)
        np.testing.assert_array_equal(both.heating_rate.isel(column=column).values,
                                      alone.heating_rate.values)


def test_a_band_may_mix_a_dataarray_bound_and_a_scalar():
    atm = lamina.make_atmosphere(np.ones((2, 1)), 0.0, [1.0], temperature=np.full((2, 2), 250.0),
                                 extra_dims=["wavelength"])
    low = xr.DataArray([400.0, 500.0], dims="wavelength")
    out = lamina.solve(atm, streams=4, wavenumber_band=(low, 900.0))
    expected = np.pi * lamina.planck.band_radiance(250.0, low.values, 900.0)
    np.testing.assert_allclose(out.flux_up.isel(level=-1).values, expected, rtol=1e-12)


@pytest.mark.parametrize("name, value", [("delta_m", "no"), ("aureole_correction", 1),
                                         ("single_scattering_correction", None)])
def test_switches_must_be_booleans(name, value):
    atm = lamina.make_atmosphere([0.5], [0.5], [1.0])
    with pytest.raises(TypeError, match=f"{name} must be True or False"):
        lamina.solve(atm, streams=4, sun_zenith=30.0, **{name: value})


@pytest.mark.parametrize("value", ["3", 2.7, True])
def test_max_fourier_terms_must_be_an_integer(value):
    atm = lamina.make_atmosphere([0.5], [0.5], [1.0])
    with pytest.raises(TypeError, match="max_fourier_terms must be an integer"):
        lamina.solve(atm, streams=4, sun_zenith=30.0, max_fourier_terms=value)


def test_a_huge_max_fourier_terms_means_no_cap():
    atm = lamina.make_atmosphere([0.5], [0.5], lamina.phase.henyey_greenstein(0.5, 16))
    kwargs = dict(streams=4, sun_zenith=30.0, view_zenith=[20.0], view_azimuth=[0.0, 90.0])
    xr.testing.assert_identical(lamina.solve(atm, max_fourier_terms=10**30, **kwargs).radiance,
                                lamina.solve(atm, **kwargs).radiance)


# ---------------------------------------------------------------- lamina's warnings


def _radiance_run(moments, streams=16):
    atm = lamina.make_atmosphere([1.0], [0.99], moments)
    return lamina.solve(atm, streams=streams, sun_zenith=30.0, view_zenith=[0.0, 60.0],
                        view_azimuth=[0.0, 180.0])


def test_a_negative_phase_function_warns_naming_the_layer_value_and_angle():
    # Henyey-Greenstein g = 0.85 cut at 32 moments: its Legendre series is about -0.15 at
    # backscatter (evaluated independently below with numpy's Legendre series)
    moments = lamina.phase.henyey_greenstein(0.85, 32)
    series = np.polynomial.legendre.legval(-1.0, (2 * np.arange(32) + 1) * moments)
    assert series < -0.1
    with pytest.warns(lamina.LaminaWarning, match=r"layer 0 give a phase function that is "
                      r"negative at some scattering angles \(-0\.147 at 180 degrees\)"):
        _radiance_run(moments)


def test_a_forward_peak_cut_before_the_delta_m_moment_warns():
    moments = lamina.phase.henyey_greenstein(0.85, 8)
    with pytest.warns(lamina.LaminaWarning, match="layer 0 stop at chi_7, before chi_16, "
                      "which delta-M scaling with 16 streams needs"):
        lamina.solve(lamina.make_atmosphere([1.0], [0.99], moments), streams=16,
                     sun_zenith=30.0)


@pytest.mark.parametrize("moments", [
    lamina.phase.rayleigh(0.03),                        # complete with three moments
    lamina.phase.henyey_greenstein(0.85, 128),          # enough moments
    lamina.phase.henyey_greenstein(0.3, 6),             # smooth and short, still positive
    np.array([1.0]),                                    # isotropic
])
def test_valid_non_negative_phase_functions_never_warn(moments):
    with warnings.catch_warnings():
        warnings.simplefilter("error", lamina.LaminaWarning)
        _radiance_run(moments)
