"""Inputs that make_atmosphere accepts: ragged moments, scalars for all layers, units, coords."""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

import lamina


def test_moments_of_different_lengths_per_layer_are_padded_with_zeros():
    rayleigh = lamina.phase.rayleigh(n_moments=3)
    cloud = lamina.phase.henyey_greenstein(0.85, 128)
    for moments in ([rayleigh, cloud], [list(rayleigh), list(cloud)]):
        atm = lamina.make_atmosphere([0.1, 2.0], [1.0, 0.99], moments)
        assert atm.sizes["moment"] == 128
        np.testing.assert_array_equal(atm.phase_moments.values[0, :3], rayleigh)
        np.testing.assert_array_equal(atm.phase_moments.values[0, 3:], 0.0)
        np.testing.assert_array_equal(atm.phase_moments.values[1], cloud)


def test_padded_moments_give_the_same_solution_as_explicit_zeros():
    # the missing moments of a short row are zero: padding by hand must agree exactly
    rayleigh = lamina.phase.rayleigh(n_moments=3)
    cloud = lamina.phase.henyey_greenstein(0.85, 64)
    explicit = np.zeros((2, 64))
    explicit[0, :3] = rayleigh
    explicit[1] = cloud
    kwargs = dict(streams=8, sun_zenith=30.0, sun_irradiance=1.0, surface_albedo=0.1,
                  view_zenith=[0.0, 50.0], view_azimuth=[0.0, 180.0])
    ragged = lamina.solve(lamina.make_atmosphere([0.1, 2.0], [1.0, 0.99], [rayleigh, cloud]),
                          **kwargs)
    padded = lamina.solve(lamina.make_atmosphere([0.1, 2.0], [1.0, 0.99], explicit), **kwargs)
    xr.testing.assert_equal(ragged.radiance, padded.radiance)


def test_ragged_moments_with_mismatched_leading_axes_are_refused():
    with pytest.raises(ValueError, match="phase_moments rows may differ only in their last"):
        lamina.make_atmosphere([0.1, 2.0], [1.0, 0.99],
                               [np.ones((2, 3)), np.ones((3, 5))])


def test_ragged_moments_with_text_are_a_type_error():
    with pytest.raises(TypeError, match="phase_moments must be numeric"):
        lamina.make_atmosphere([0.1, 2.0], [1.0, 0.99], [[1.0, 0.1], [1.0, "a", 0.2]])


def test_a_scalar_albedo_holds_for_every_layer():
    atm = lamina.make_atmosphere([0.1, 2.0, 0.5], 0.9, lamina.phase.rayleigh())
    np.testing.assert_array_equal(atm.single_scattering_albedo.values, [0.9, 0.9, 0.9])
    assert atm.single_scattering_albedo.dims == ("layer",)


def test_a_scalar_albedo_broadcasts_along_extra_dims():
    atm = lamina.make_atmosphere(np.ones((4, 2)), 0.5, lamina.phase.rayleigh(),
                                 extra_dims=["wavelength"])
    assert atm.single_scattering_albedo.dims == ("wavelength", "layer")
    assert np.all(atm.single_scattering_albedo.values == 0.5)


def test_a_scalar_albedo_out_of_range_is_refused_naming_the_argument():
    with pytest.raises(ValueError, match="single_scattering_albedo must lie in"):
        lamina.make_atmosphere([0.1, 2.0], 1.5, lamina.phase.rayleigh())


def test_extra_dims_as_a_mapping_attaches_coordinates():
    wavelength = [0.4, 0.5, 0.6]
    atm = lamina.make_atmosphere(np.ones((3, 2)), np.full((3, 2), 0.9), lamina.phase.rayleigh(),
                                 extra_dims={"wavelength": wavelength})
    np.testing.assert_array_equal(atm.wavelength.values, wavelength)


def test_extra_dims_coordinates_of_the_wrong_length_are_refused():
    with pytest.raises(ValueError, match=r"extra_dims\['wavelength'\] must have one value per"):
        lamina.make_atmosphere(np.ones((3, 2)), 0.9, lamina.phase.rayleigh(),
                               extra_dims={"wavelength": [0.4, 0.5]})


def test_extra_dims_given_as_one_string_is_a_type_error():
    # a string is a sequence of letters: reading it as dim names would be a silent mistake
    with pytest.raises(TypeError, match="extra_dims must be a sequence of dim names"):
        lamina.make_atmosphere(np.ones((3, 2)), 0.9, lamina.phase.rayleigh(),
                               extra_dims="wavelength")


@pytest.mark.parametrize("unit, factor", [("Pa", 1.0), ("hPa", 100.0), ("mbar", 100.0),
                                          ("mb", 100.0), ("kPa", 1000.0), ("bar", 1e5),
                                          ("atm", 101325.0)])
def test_pressure_units_are_converted_to_pascal(unit, factor):
    # conversion factors: the SI definitions of the units (the standard atmosphere is
    # 101325 Pa exactly by definition); "mb" is the meteorological millibar
    values = np.array([1.0, 10.0, 100.0])
    atm = lamina.make_atmosphere([0.1, 0.2], 0.5, [1.0], pressure=values, units={"pressure": unit})
    np.testing.assert_allclose(atm.pressure.values, values * factor, rtol=1e-15)
    assert atm.pressure.attrs["units"] == "Pa"


def test_a_units_attribute_on_a_dataarray_is_honoured():
    pressure = xr.DataArray([100.0, 500.0, 1000.0], dims="level", attrs={"units": "hPa"})
    altitude = xr.DataArray([10.0, 5.0, 0.0], dims="level", attrs={"units": "km"})
    temperature = xr.DataArray([-50.0, -20.0, 15.0], dims="level", attrs={"units": "degC"})
    atm = lamina.make_atmosphere([0.1, 0.2], 0.5, [1.0], temperature, pressure=pressure,
                                 altitude=altitude)
    np.testing.assert_allclose(atm.pressure.values, [1e4, 5e4, 1e5])
    np.testing.assert_allclose(atm.altitude.values, [1e4, 5e3, 0.0])
    # 0 degC is 273.15 K by the definition of the Celsius scale
    np.testing.assert_allclose(atm.temperature.values, [223.15, 253.15, 288.15])


def test_hectopascal_pressures_give_the_heating_rates_of_pascals():
    # the same profile in Pa and in hPa must give identical heating rates (they differed by
    # a factor of 100 when the units were ignored)
    kwargs = dict(streams=4, sun_zenith=30.0, sun_irradiance=1.0, surface_albedo=0.1)
    in_pa = lamina.make_atmosphere([0.1, 0.2], 0.5, [1.0], pressure=[1e4, 5e4, 1e5])
    in_hpa = lamina.make_atmosphere([0.1, 0.2], 0.5, [1.0], pressure=[100.0, 500.0, 1000.0],
                                    units={"pressure": "hPa"})
    np.testing.assert_allclose(lamina.solve(in_hpa, **kwargs).heating_rate,
                               lamina.solve(in_pa, **kwargs).heating_rate, rtol=1e-14)


@pytest.mark.parametrize("unit", ["m", "C", "parsec_per_fortnight"])
def test_a_pressure_unit_of_the_wrong_kind_is_refused(unit):
    with pytest.raises(ValueError, match="pressure has units"):
        lamina.make_atmosphere([0.1, 0.2], 0.5, [1.0], pressure=[1.0, 2.0, 3.0],
                               units={"pressure": unit})


def test_conflicting_units_attribute_and_argument_are_refused():
    pressure = xr.DataArray([100.0, 500.0, 1000.0], dims="level", attrs={"units": "hPa"})
    with pytest.raises(ValueError, match="pressure carries the units attribute 'hPa'"):
        lamina.make_atmosphere([0.1, 0.2], 0.5, [1.0], pressure=pressure,
                               units={"pressure": "Pa"})


def test_units_for_an_unknown_quantity_are_refused():
    with pytest.raises(ValueError, match="units may give the units of"):
        lamina.make_atmosphere([0.1, 0.2], 0.5, [1.0], units={"optical_depth": "m"})


def test_level_profiles_may_vary_along_extra_dims():
    pressure = np.array([[1e4, 5e4, 1e5], [2e4, 6e4, 1.1e5]])
    atm = lamina.make_atmosphere(np.ones((2, 2)), 0.5, [1.0], pressure=pressure,
                                 extra_dims=["column"])
    assert atm.pressure.dims == ("column", "level")


def test_layer_level_and_moment_coordinates_have_units_and_long_names():
    atm = lamina.make_atmosphere([0.1, 0.2], 0.5, [1.0])
    for name in ("layer", "level", "moment"):
        assert atm[name].attrs["units"] == "1"
        assert atm[name].attrs["long_name"]
