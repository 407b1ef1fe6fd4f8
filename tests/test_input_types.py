"""Bad input types through the Python API (issue 17's list): each is a TypeError or a ValueError
that names the argument and what was expected, never a silent coercion or a raw library error.

Several of the list are covered where they live (tests/test_inputs.py,
tests/test_trusted_defaults.py); they are repeated here in one place, with the cases that
were still open: complex optical depth, inputs on mismatched coordinates, a surface albedo
with a layer dim or on other coordinates, and a very large max_fourier_terms.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
import xarray as xr

import lamina

MOMENTS = lamina.phase.henyey_greenstein(0.5, 8)


def _atmosphere(**kwargs) -> xr.Dataset:
    return lamina.make_atmosphere([0.5, 1.0], [0.9, 0.8], MOMENTS, **kwargs)


def _spectral(wavelength=(0.4, 0.5)) -> xr.DataArray:
    return xr.DataArray(np.ones((2, 2)), dims=("wavelength", "layer"),
                        coords={"wavelength": list(wavelength)})


def _solve(atmosphere, **kwargs):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", lamina.LaminaWarning)
        return lamina.solve(atmosphere, **{"streams": 4, "sun_zenith": 30.0, **kwargs})


def test_complex_values_are_refused_not_cut_to_their_real_part():
    with pytest.raises(TypeError, match="optical_depth must be real numbers; got complex"):
        lamina.make_atmosphere(np.array([0.5 + 1j, 1.0]), [0.9, 0.8], MOMENTS)
    with pytest.raises(TypeError, match="optical_depth must be real numbers"):
        lamina.make_atmosphere(xr.DataArray([0.5 + 1j, 1.0], dims="layer"), [0.9, 0.8],
                               MOMENTS)
    with pytest.raises(TypeError, match="sun_zenith must be"):
        _solve(_atmosphere(), sun_zenith=30 + 2j)
    with pytest.raises(TypeError, match="surface_albedo must be real numbers"):
        _solve(_atmosphere(), surface_albedo=np.array([0.1 + 0.1j]))


def test_extra_dims_as_a_string_is_not_read_as_letters():
    with pytest.raises(TypeError, match="extra_dims must be a sequence of dim names .* got "
                                        "the string 'wavelength'"):
        lamina.make_atmosphere(np.ones((3, 2)), np.full((3, 2), 0.9), MOMENTS,
                               extra_dims="wavelength")


@pytest.mark.parametrize("value", ["no", "False", 0.0, None])
def test_flags_take_booleans_only(value):
    with pytest.raises(TypeError, match="delta_m must be True or False"):
        _solve(_atmosphere(), delta_m=value)


@pytest.mark.parametrize("value", ["3", 2.7, True])
def test_max_fourier_terms_must_be_an_integer(value):
    with pytest.raises(TypeError, match="max_fourier_terms must be an integer >= 1 or None"):
        _solve(_atmosphere(), max_fourier_terms=value)


def test_a_huge_max_fourier_terms_is_no_overflow():
    # more terms than the solver can use is the same as no limit (a 2N-stream solution has
    # at most 2N azimuthal Fourier terms: from the method, docs/guide/method.md)
    huge = _solve(_atmosphere(), max_fourier_terms=10**30, view_zenith=[0.0, 60.0],
                  view_azimuth=[0.0, 90.0])
    unlimited = _solve(_atmosphere(), max_fourier_terms=None, view_zenith=[0.0, 60.0],
                       view_azimuth=[0.0, 90.0])
    xr.testing.assert_identical(huge.drop_attrs(), unlimited.drop_attrs())


def test_inputs_on_different_coordinates_are_refused():
    ssa = _spectral((0.6, 0.7)) * 0.9
    with pytest.raises(ValueError, match="single_scattering_albedo and optical_depth have "
                                         "different 'wavelength' coordinates"):
        lamina.make_atmosphere(_spectral(), ssa, MOMENTS)


def test_surface_albedo_with_a_layer_dim_or_other_coordinates():
    with pytest.raises(ValueError, match="surface_albedo must not have the atmosphere's "
                                         "'layer' dim"):
        _solve(_atmosphere(), surface_albedo=xr.DataArray([0.1, 0.2], dims="layer"))
    atmosphere = lamina.make_atmosphere(_spectral(), 0.9, MOMENTS)
    other = xr.DataArray([0.1, 0.2], dims="wavelength", coords={"wavelength": [0.6, 0.7]})
    with pytest.raises(ValueError, match="surface_albedo has other 'wavelength' coordinates "
                                         "than the atmosphere"):
        _solve(atmosphere, surface_albedo=other)
    with pytest.raises(ValueError, match="sun_irradiance has other 'wavelength' coordinates"):
        _solve(atmosphere, sun_irradiance=other)
    # the same values on the atmosphere's coordinates are fine
    same = other.assign_coords(wavelength=[0.4, 0.5])
    assert _solve(atmosphere, surface_albedo=same).sizes["wavelength"] == 2


def test_a_band_mixing_a_dataarray_bound_with_a_scalar_is_the_same_as_two_dataarrays():
    # issue 17: "a wavenumber band mixing a DataArray bound with a scalar fails with numpy's
    # shape error although documented" (solve's docstring: "Each bound may be a DataArray");
    # the cross-check is the same band given as two DataArrays, and each wavelength's band
    # given as a plain pair of scalars (a second path through the Planck source)
    atmosphere = lamina.make_atmosphere(_spectral(), 0.5, MOMENTS,
                                        temperature=[220.0, 250.0, 280.0])
    low = xr.DataArray([400.0, 600.0], dims="wavelength", coords={"wavelength": [0.4, 0.5]})
    high = 900.0
    kwargs = {"streams": 4, "view_zenith": [0.0, 60.0], "view_azimuth": [0.0]}
    mixed = lamina.solve(atmosphere, wavenumber_band=(low, high), **kwargs)
    both = lamina.solve(atmosphere, wavenumber_band=(low, xr.full_like(low, high)), **kwargs)
    flipped = lamina.solve(atmosphere, wavenumber_band=(300.0, low + 500.0), **kwargs)
    flipped_both = lamina.solve(
        atmosphere, wavenumber_band=(xr.full_like(low, 300.0), low + 500.0), **kwargs)
    for name in ("flux_up", "flux_down", "radiance"):
        xr.testing.assert_identical(mixed[name], both[name])
        xr.testing.assert_identical(flipped[name], flipped_both[name])
        for index, bound in enumerate(low.values):
            alone = lamina.solve(atmosphere.isel(wavelength=index),
                                 wavenumber_band=(float(bound), high), **kwargs)
            np.testing.assert_allclose(mixed[name].isel(wavelength=index), alone[name],
                                       rtol=1e-12, atol=0.0)
    assert float(mixed["flux_up"].isel(level=0, wavelength=0)) > float(
        mixed["flux_up"].isel(level=0, wavelength=1))     # a wider band emits more
