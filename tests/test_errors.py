"""The wording of every error the public API raises, pinned in tables.

Each ValueError names the offending argument, states the rule and shows the bad value
(design.md, style.md). The tables below were enumerated from the ``raise`` statements of
lamina.atmosphere, lamina.solve, lamina._checks, lamina.phase, lamina.planck and lamina.mie;
a change of wording must change a line here. The kernel's own precondition checks are
exercised in a child process, so that a missing check that reads out of bounds fails one
test instead of crashing the run; and lamina.SolverError is provoked through LAPACK.
"""

from __future__ import annotations

import json
import re
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import lamina
from lamina import phase, planck


def exact(message: str) -> str:
    """A pattern that matches the whole message and nothing else."""
    return "^" + re.escape(message) + "$"


def hg(g: float, n: int = 8) -> np.ndarray:
    return phase.henyey_greenstein(g, n)


def good() -> xr.Dataset:
    return lamina.make_atmosphere([1.0, 2.0], [0.5, 0.9], hg(0.5))


def warm() -> xr.Dataset:
    return lamina.make_atmosphere([1.0, 2.0], [0.5, 0.9], hg(0.5),
                                  temperature=[200.0, 250.0, 300.0])


def changed(**variables) -> xr.Dataset:
    """The good atmosphere with variables replaced (None drops one)."""
    ds = good()
    for name, value in variables.items():
        ds = ds.drop_vars(name) if value is None else ds.assign({name: value})
    return ds


# ------------------------------------------------------------------ make_atmosphere

ATMOSPHERE_ERRORS = [
    pytest.param(
        lambda: lamina.make_atmosphere(xr.DataArray([1.0], dims="x"), [0.5], hg(0.5)),
        exact("optical_depth must have the dims ('layer',); it has ('x',) "
              "(missing ('layer',))"), id="dataarray-without-layer"),
    pytest.param(
        lambda: lamina.make_atmosphere(1.0, [0.5], hg(0.5)),
        exact("optical_depth must have at least 1 dimension(s) ('layer',); got shape ()"),
        id="scalar-optical-depth"),
    pytest.param(
        lambda: lamina.make_atmosphere(np.ones((2, 3, 1)), np.full((2, 3, 1), 0.5), hg(0.5),
                                       extra_dims=["wavelength"]),
        exact("extra_dims names 1 dims but optical_depth has 2 leading dims"),
        id="too-few-extra-dims"),
    pytest.param(
        lambda: lamina.make_atmosphere([1.0, 2.0], [0.5], hg(0.5)),
        exact("single_scattering_albedo has 1 layers but optical_depth has 2"),
        id="albedo-layers"),
    pytest.param(
        lambda: lamina.make_atmosphere([1.0, 2.0], [0.5, 0.5], np.ones((3, 2))),
        exact("phase_moments has 3 layers but optical_depth has 2"), id="moment-layers"),
    pytest.param(
        lambda: lamina.make_atmosphere(np.ones((2, 1)), np.full((3, 1), 0.5), hg(0.5),
                                       extra_dims=["wavelength"]),
        "^" + re.escape("the atmosphere's arrays have conflicting dims: "),
        id="conflicting-extra-dims"),
    pytest.param(
        lambda: lamina.make_atmosphere([], [], hg(0.5)),
        exact("atmosphere must have at least one layer"), id="no-layers"),
    pytest.param(
        lambda: lamina.make_atmosphere([1.0], [0.5], hg(0.5), temperature=[250.0]),
        exact("temperature must have one value per level (layers + 1 = 2); got 1"),
        id="temperature-levels"),
    pytest.param(
        lambda: lamina.make_atmosphere([1.0], [0.5], hg(0.5), pressure=[1e4, 5e4, 1e5]),
        exact("pressure must have one value per level (layers + 1 = 2); got 3"),
        id="pressure-levels"),
    pytest.param(
        lambda: lamina.make_atmosphere([1.0, -1.0], [0.5, 0.5], hg(0.5)),
        exact("optical_depth must lie in [0, inf]; layer 1 has -1"), id="negative-depth"),
    pytest.param(
        lambda: lamina.make_atmosphere([[1.0, 1.0], [1.0, -2.0]], [0.5, 0.5], hg(0.5)),
        exact("optical_depth must lie in [0, inf]; column 1, layer 1 has -2"),
        id="negative-depth-in-a-column"),
    pytest.param(
        lambda: lamina.make_atmosphere([1.0, np.nan], [0.5, 0.5], hg(0.5)),
        exact("optical_depth must be finite; layer 1 has nan"), id="nan-depth"),
    pytest.param(
        lambda: lamina.make_atmosphere([np.inf], [0.5], hg(0.5)),
        exact("optical_depth must be finite; layer 0 has inf"), id="infinite-depth"),
    pytest.param(
        lambda: lamina.make_atmosphere([1.0, 1.0], [0.5, 1.2], hg(0.5)),
        exact("single_scattering_albedo must lie in [0, 1]; layer 1 has 1.2"),
        id="albedo-above-one"),
    pytest.param(
        # shown with all the digits that make it differ from the bound (shortest text that
        # reads back to the same float, as Python's repr), not rounded to 1 as by :g
        lambda: lamina.make_atmosphere([1.0, 1.0], [0.5, 1.0000001], hg(0.5)),
        exact("single_scattering_albedo must lie in [0, 1]; layer 1 has 1.0000001"),
        id="albedo-just-above-one"),
    pytest.param(
        lambda: lamina.make_atmosphere([1.0], [np.nextafter(1.0, 2.0)], hg(0.5)),
        exact("single_scattering_albedo must lie in [0, 1]; layer 0 has 1.0000000000000002"),
        id="albedo-one-ulp-above-one"),
    pytest.param(
        lambda: lamina.make_atmosphere([1.0, 1.0], [-0.1, 0.5], hg(0.5)),
        exact("single_scattering_albedo must lie in [0, 1]; layer 0 has -0.1"),
        id="albedo-below-zero"),
    pytest.param(
        lambda: lamina.make_atmosphere([1.0], [0.5], [1.0, np.nan]),
        exact("phase_moments must be finite; layer 0, moment 1 has nan"), id="nan-moment"),
    pytest.param(
        lambda: lamina.make_atmosphere([1.0], [0.5], np.ones((1, 0))),
        exact("phase_moments must have at least one moment (chi_0 = 1)"), id="no-moments"),
    pytest.param(
        lambda: lamina.make_atmosphere([1.0], [0.5], [0.5, 0.1]),
        exact("phase_moments must start with chi_0 = 1; layer 0 has chi_0 = 0.5"),
        id="chi-0"),
    pytest.param(
        lambda: lamina.make_atmosphere([1.0, 1.0], [0.5, 0.5],
                                       [[1.0, 0.1, 0.0], [1.0, 0.2, 1.5]]),
        exact("phase_moments must satisfy |chi_l| <= 1; layer 1, moment 2 has 1.5"),
        id="chi-above-one"),
    pytest.param(
        lambda: lamina.make_atmosphere([1.0], [0.5], hg(0.5), temperature=[200.0, -1.0]),
        exact("temperature must lie in [0, inf]; level 1 has -1"), id="negative-temperature"),
    pytest.param(
        lambda: lamina.make_atmosphere([1.0], [0.5], hg(0.5), pressure=[-1.0, 1e5]),
        exact("pressure must lie in [0, inf]; level 0 has -1"), id="negative-pressure"),
    pytest.param(
        lambda: lamina.make_atmosphere([1.0, 1.0], [0.5, 0.5], hg(0.5),
                                       pressure=[1e4, 1e5, 5e4]),
        exact("pressure must increase downward (levels are numbered from the top); level 2 "
              "has 50000 Pa after 100000 Pa"), id="pressure-order"),
    pytest.param(
        lambda: lamina.make_atmosphere([1.0], [0.5], hg(0.5), altitude=[1e3, np.nan]),
        exact("altitude must be finite; level 1 has nan"), id="nan-altitude"),
    # check_atmosphere on Datasets built by hand
    pytest.param(
        lambda: lamina.check_atmosphere(changed(optical_depth=None)),
        exact("atmosphere lacks the variable 'optical_depth' (dims ('layer',))"),
        id="missing-variable"),
    pytest.param(
        lambda: lamina.check_atmosphere(changed(
            single_scattering_albedo=xr.DataArray([0.5, 0.5], dims="x"))),
        exact("atmosphere variable single_scattering_albedo must have dims ('layer',); "
              "it has ('x',)"), id="variable-dims"),
    pytest.param(
        lambda: lamina.check_atmosphere(changed(
            temperature=xr.DataArray([200.0, 250.0], dims="layer"))),
        exact("atmosphere variable temperature must have the dim 'level'"),
        id="temperature-without-level"),
]


@pytest.mark.parametrize(("call", "message"), ATMOSPHERE_ERRORS)
def test_atmosphere_errors(call, message):
    with pytest.raises(ValueError, match=message):
        call()


# ------------------------------------------------------------------ solve

SOLVE_ERRORS = [
    pytest.param(dict(streams=3), exact("streams must be an even integer >= 2; got 3"),
                 id="odd-streams"),
    pytest.param(dict(streams=0), exact("streams must be an even integer >= 2; got 0"),
                 id="zero-streams"),
    pytest.param(dict(streams=4.0), exact("streams must be an even integer >= 2; got 4.0"),
                 id="float-streams"),
    pytest.param(dict(streams=True), exact("streams must be an even integer >= 2; got True"),
                 id="bool-streams"),
    pytest.param(dict(fourier_tolerance=0.0), exact("fourier_tolerance must be positive; got 0"),
                 id="zero-tolerance"),
    pytest.param(dict(fourier_tolerance=np.nan),
                 exact("fourier_tolerance must be positive; got nan"), id="nan-tolerance"),
    pytest.param(dict(max_fourier_terms=0), exact("max_fourier_terms must be >= 1; got 0"),
                 id="no-fourier-terms"),
    pytest.param(dict(gravity=-9.8), exact("gravity must be positive; got -9.8"),
                 id="gravity"),
    pytest.param(dict(heat_capacity=np.inf), exact("heat_capacity must be positive; got inf"),
                 id="heat-capacity"),
    pytest.param(dict(sun_zenith=[[10.0, 20.0]]),
                 exact("sun_zenith must be a scalar, a 1-D list or a DataArray; got shape "
                       "(1, 2)"), id="sun-2d"),
    pytest.param(dict(sun_zenith=[]),
                 exact("sun_zenith must be a scalar, a 1-D list or a DataArray; got shape "
                       "(0,)"), id="sun-empty"),
    pytest.param(dict(sun_zenith=90.0), exact("sun_zenith must lie in [0, 90); sun angle 0 has 90"),
                 id="sun-90"),
    pytest.param(dict(sun_zenith=[10.0, -5.0]),
                 exact("sun_zenith must lie in [0, 90); sun angle 1 has -5"), id="sun-list"),
    pytest.param(dict(sun_zenith=xr.DataArray([10.0, 95.0], dims="wavelength")),
                 exact("sun_zenith must lie in [0, 90); sun angle 0, wavelength 1 has 95"),
                 id="sun-dataarray"),
    pytest.param(dict(sun_zenith=np.nan), exact("sun_zenith must be finite; sun angle 0 has nan"),
                 id="sun-nan"),
    pytest.param(dict(sun_zenith=30.0, sun_irradiance=-1.0),
                 exact("sun_irradiance must lie in [0, inf]; the value has -1"),
                 id="negative-irradiance"),
    pytest.param(dict(sun_zenith=30.0, sun_irradiance=[1.0, 2.0]),
                 exact("sun_irradiance has 1 axes but the atmosphere has no extra dims: give "
                       "a scalar, an array whose axes are the atmosphere's last extra dims, "
                       "or a DataArray"),
                 id="irradiance-array"),
    pytest.param(dict(surface_albedo=1.5),
                 exact("surface_albedo must lie in [0, 1]; the value has 1.5"),
                 id="surface-albedo"),
    pytest.param(dict(surface_albedo=xr.DataArray([0.1, 1.5], dims="wavelength")),
                 exact("surface_albedo must lie in [0, 1]; wavelength 1 has 1.5"),
                 id="surface-albedo-dataarray"),
    pytest.param(dict(top_diffuse_radiance=-1.0),
                 exact("top_diffuse_radiance must lie in [0, inf]; the value has -1"),
                 id="top-radiance"),
    pytest.param(dict(view_zenith=[10.0]),
                 exact("view_zenith and view_azimuth must be given together (or neither, for "
                       "fluxes only)"), id="view-zenith-alone"),
    pytest.param(dict(view_azimuth=[10.0]),
                 exact("view_zenith and view_azimuth must be given together (or neither, for "
                       "fluxes only)"), id="view-azimuth-alone"),
    pytest.param(dict(view_zenith=[], view_azimuth=[0.0]),
                 exact("view_zenith and view_azimuth must be non-empty 1-D lists of degrees"),
                 id="view-empty"),
    pytest.param(dict(view_zenith=[[10.0]], view_azimuth=[0.0]),
                 exact("view_zenith and view_azimuth must be non-empty 1-D lists of degrees"),
                 id="view-2d"),
    pytest.param(dict(view_zenith=[10.0, 95.0], view_azimuth=[0.0]),
                 exact("view_zenith must lie in [0, 90]; view angle 1 has 95"),
                 id="view-zenith-range"),
    pytest.param(dict(view_zenith=[10.0], view_azimuth=[0.0, np.nan]),
                 exact("view_azimuth must be finite; view angle 1 has nan"),
                 id="view-azimuth-nan"),
    pytest.param(dict(view_zenith=[10.0, 10.0], view_azimuth=[0.0]),
                 exact("view_zenith must not repeat a value"), id="view-zenith-repeat"),
    pytest.param(dict(view_zenith=[10.0], view_azimuth=[0.0, 0.0]),
                 exact("view_azimuth must not repeat a value"), id="view-azimuth-repeat"),
    pytest.param(dict(output_levels=[]),
                 exact("output_levels must be a non-empty 1-D list of fractional level "
                       "numbers"), id="levels-empty"),
    pytest.param(dict(output_levels=[[0.0]]),
                 exact("output_levels must be a non-empty 1-D list of fractional level "
                       "numbers"), id="levels-2d"),
    pytest.param(dict(output_levels=[0.0, 2.5]),
                 exact("output_levels must lie in [0, 2]; position 1 has 2.5"),
                 id="levels-range"),
    pytest.param(dict(surface_temperature=300.0),
                 exact("surface_temperature needs a thermal source: give wavenumber_band or "
                       "wavenumber"), id="surface-temperature-without-source"),
    pytest.param(dict(wavenumber_band=(1.0, 2.0)),
                 exact("thermal emission (wavenumber_band or wavenumber) needs level "
                       "temperatures: pass temperature= to make_atmosphere"),
                 id="thermal-without-temperature"),
]

THERMAL_ERRORS = [
    pytest.param(dict(wavenumber_band=(1.0, 2.0), wavenumber=5.0),
                 exact("give either wavenumber_band (band-integrated) or wavenumber "
                       "(monochromatic), not both"), id="band-and-wavenumber"),
    pytest.param(dict(wavenumber_band=(1.0, 2.0), surface_temperature=-3.0),
                 exact("surface_temperature must lie in [0, inf]; the value has -3"),
                 id="surface-temperature"),
    pytest.param(dict(wavenumber_band=(1.0, 2.0, 3.0)),
                 exact("wavenumber_band must be a pair (low, high) in cm-1 (scalars or "
                       "DataArrays along the atmosphere's extra dims)"), id="band-shape"),
    pytest.param(dict(wavenumber_band=(5.0, 1.0)),
                 exact("wavenumber_band must satisfy 0 <= low < high (cm-1); got (5, 1)"),
                 id="band-order"),
    pytest.param(dict(wavenumber_band=(-5.0, 1.0)),
                 exact("wavenumber_band must satisfy 0 <= low < high (cm-1); got (-5, 1)"),
                 id="band-negative"),
    pytest.param(dict(wavenumber_band=(np.nan, 1.0)),
                 exact("wavenumber_band must satisfy 0 <= low < high (cm-1); got (nan, 1)"),
                 id="band-nan"),
    pytest.param(dict(wavenumber=-1.0),
                 exact("wavenumber must be positive and finite (cm-1); got -1"),
                 id="negative-wavenumber"),
    pytest.param(dict(wavenumber=np.inf),
                 exact("wavenumber must be positive and finite (cm-1); got inf"),
                 id="infinite-wavenumber"),
]


@pytest.mark.parametrize(("options", "message"), SOLVE_ERRORS)
def test_solve_errors(options, message):
    with pytest.raises(ValueError, match=message):
        lamina.solve(good(), **options)


@pytest.mark.parametrize(("options", "message"), THERMAL_ERRORS)
def test_solve_thermal_errors(options, message):
    with pytest.raises(ValueError, match=message):
        lamina.solve(warm(), **options)


def test_lazy_inputs_are_checked_when_computed():
    # a dask-backed option cannot be checked up front; its block is checked on compute
    atm = good().expand_dims(wavelength=2).chunk({"wavelength": 1})
    sun = xr.DataArray([10.0, 95.0], dims="wavelength").chunk({"wavelength": 1})
    out = lamina.solve(atm, sun_zenith=sun, view_zenith=[0.0], view_azimuth=[0.0])
    with pytest.raises(ValueError, match=exact("sun_zenith must lie in [0, 90); index (0, 0) "
                                               "has 95 (the index counts within one dask "
                                               "chunk)")):
        out.compute()


@pytest.mark.parametrize(("variable", "value", "message"), [
    ("optical_depth", -1.0, "optical_depth must lie in [0, inf]; index (0, 0) has -1"),
    ("single_scattering_albedo", 1.5,
     "single_scattering_albedo must lie in [0, 1]; index (0, 0) has 1.5"),
    ("phase_moments", 2.0, "phase_moments must satisfy |chi_l| <= 1; index (0, 0, 1) has 2"),
])
@pytest.mark.parametrize("delta_m", [True, False])
def test_lazy_atmosphere_is_checked_when_computed(variable, value, message, delta_m):
    # a lazy atmosphere is not computed up front (it may be larger than memory); each block
    # is checked when the solver computes it
    atm = good().expand_dims(wavelength=2).copy(deep=True)
    if variable == "phase_moments":
        atm[variable][1, 0, 1] = value
    else:
        atm[variable][1, 0] = value
    lazy = atm.chunk({"wavelength": 1})
    lamina.check_atmosphere(lazy)
    out = lamina.solve(lazy, delta_m=delta_m)
    with pytest.raises(ValueError, match=exact(f"{message} (the index counts within one dask "
                                               "chunk)")):
        out.compute()


def test_check_atmosphere_does_not_compute_lazy_values():
    import dask
    import dask.array as da

    def refuse(block):
        raise AssertionError("check_atmosphere computed a lazy variable")

    atm = good().expand_dims(wavelength=4)
    lazy = atm.chunk({"wavelength": 2})
    for name in ("optical_depth", "single_scattering_albedo", "phase_moments"):
        data = lazy[name].data
        lazy[name] = (lazy[name].dims, da.map_blocks(refuse, data, dtype=data.dtype))
    with dask.config.set(scheduler="synchronous"):
        lamina.check_atmosphere(lazy)


TYPE_ERRORS = [
    pytest.param(lambda: lamina.make_atmosphere("abc", [0.5], hg(0.5)),
                 exact("optical_depth must be numeric; got the string 'abc'"),
                 id="string-optical-depth"),
    pytest.param(lambda: lamina.check_atmosphere({"optical_depth": 1.0}),
                 exact("atmosphere must be an xarray.Dataset; got dict"), id="not-a-dataset"),
    pytest.param(lambda: phase.henyey_greenstein(0.5, 2.0),
                 exact("n_moments must be an integer; got 2.0"), id="float-n-moments"),
    pytest.param(lambda: phase.henyey_greenstein("a", 4),
                 exact("asymmetry_parameter must be a real number or an array of real "
                       "numbers"), id="string-asymmetry"),
    pytest.param(lambda: planck.band_radiance("warm", 1.0, 2.0),
                 exact("temperature must be numeric; got the string 'warm'"),
                 id="band-temperature-string"),
]


@pytest.mark.parametrize(("call", "message"), TYPE_ERRORS)
def test_type_errors(call, message):
    with pytest.raises(TypeError, match=message):
        call()


# ------------------------------------------------------------------ phase

ANGLE = np.linspace(0.0, 180.0, 19)
FLAT = np.ones(19)

PHASE_ERRORS = [
    pytest.param(lambda: phase.henyey_greenstein(0.5, 0),
                 exact("n_moments must be an integer >= 1; got 0"), id="hg-n-moments"),
    pytest.param(lambda: phase.henyey_greenstein(1.0, 4),
                 exact("asymmetry_parameter must lie in (-1, 1); got 1"), id="hg-g-one"),
    pytest.param(lambda: phase.henyey_greenstein([0.1, -1.2], 4),
                 exact("asymmetry_parameter must lie in (-1, 1); got -1.2 at index 1"),
                 id="hg-g-array"),
    pytest.param(lambda: phase.henyey_greenstein(np.nan, 4),
                 exact("asymmetry_parameter must be finite; got nan"), id="hg-g-nan"),
    pytest.param(lambda: phase.double_henyey_greenstein(1.0, -0.5, 0.5, 4),
                 exact("forward_asymmetry must lie in (-1, 1); got 1"), id="dhg-forward"),
    pytest.param(lambda: phase.double_henyey_greenstein(0.8, -1.5, 0.5, 4),
                 exact("backward_asymmetry must lie in (-1, 1); got -1.5"), id="dhg-backward"),
    pytest.param(lambda: phase.double_henyey_greenstein(0.8, -0.5, 1.5, 4),
                 exact("forward_fraction must lie in [0, 1]; got 1.5"), id="dhg-fraction"),
    pytest.param(lambda: phase.double_henyey_greenstein([0.8, 0.7], -0.5, [0.5] * 3, 4),
                 exact("forward_asymmetry, backward_asymmetry and forward_fraction must "
                       "broadcast together; got shapes (2,), (), (3,)"), id="dhg-broadcast"),
    pytest.param(lambda: phase.double_henyey_greenstein(0.8, -0.5, 0.5, 0),
                 exact("n_moments must be an integer >= 1; got 0"), id="dhg-n-moments"),
    pytest.param(lambda: phase.rayleigh(0.0, 2),
                 exact("n_moments must be an integer >= 3; got 2"), id="rayleigh-n-moments"),
    pytest.param(lambda: phase.rayleigh(1.0),
                 exact("depolarization must lie in [0, 1); got 1"), id="rayleigh-one"),
    pytest.param(lambda: phase.rayleigh(-0.1),
                 exact("depolarization must lie in [0, 1); got -0.1"), id="rayleigh-negative"),
    pytest.param(lambda: phase.from_tabulated(ANGLE, FLAT, 0),
                 exact("n_moments must be an integer >= 1; got 0"), id="table-n-moments"),
    pytest.param(lambda: phase.from_tabulated(ANGLE, FLAT, 4, interpolation="cubic"),
                 exact("interpolation must be 'log' or 'linear'; got 'cubic'"),
                 id="table-interpolation"),
    pytest.param(lambda: phase.from_tabulated(ANGLE, FLAT, 4, normalization_tolerance=0.0),
                 exact("normalization_tolerance must be > 0; got 0"), id="table-tolerance"),
    pytest.param(lambda: phase.from_tabulated(ANGLE[None], FLAT, 4),
                 exact("angle_deg must be a 1-D array of at least 2 angles; got shape "
                       "(1, 19)"), id="table-angle-2d"),
    pytest.param(lambda: phase.from_tabulated([0.0], [1.0], 4),
                 exact("angle_deg must be a 1-D array of at least 2 angles; got shape (1,)"),
                 id="table-one-angle"),
    pytest.param(lambda: phase.from_tabulated([0.0, 90.0, 90.0, 180.0], [1.0] * 4, 4),
                 exact("angle_deg must be strictly increasing; angle_deg[2] = 90 follows 90"),
                 id="table-increasing"),
    pytest.param(lambda: phase.from_tabulated([0.0, 90.0, 170.0], [1.0] * 3, 4),
                 exact("angle_deg must span 0 to 180 degrees exactly; got 0 to 170"),
                 id="table-span"),
    pytest.param(lambda: phase.from_tabulated(np.r_[ANGLE[:-1], np.nan], FLAT, 4),
                 exact("angle_deg must be finite; got nan at index 18"), id="table-angle-nan"),
    pytest.param(lambda: phase.from_tabulated(ANGLE, np.ones(18), 4),
                 exact("values must have 19 entries on its last axis (one per angle_deg); "
                       "got shape (18,)"), id="table-values-length"),
    pytest.param(lambda: phase.from_tabulated(ANGLE, np.r_[np.ones(18), -1.0], 4),
                 exact("values must be >= 0; got -1 at index 18"), id="table-negative"),
    pytest.param(lambda: phase.from_tabulated(ANGLE, np.r_[np.ones(18), np.nan], 4),
                 exact("values must be finite; got nan at index 18"), id="table-nan"),
    pytest.param(lambda: phase.from_tabulated(ANGLE, np.zeros(19), 4),
                 exact("values must not be all zero"), id="table-zero"),
    pytest.param(lambda: phase.from_tabulated(ANGLE, 2 * FLAT, 4),
                 exact("values must have mean 1 over the sphere (integral 4 pi over 4 pi sr) "
                       "to within 0.01; got mean 2; pass normalize=True to rescale"),
                 id="table-normalisation"),
    pytest.param(lambda: phase.evaluate(np.ones((2, 0)), 10.0),
                 exact("phase_moments must have at least one moment on its last axis; got "
                       "shape (2, 0)"), id="evaluate-no-moments"),
    pytest.param(lambda: phase.evaluate(1.0, 10.0),
                 exact("phase_moments must have at least one moment on its last axis; got "
                       "shape ()"), id="evaluate-scalar"),
    pytest.param(lambda: phase.evaluate([1.0, np.nan], 10.0),
                 exact("phase_moments must be finite; got nan at index 1"),
                 id="evaluate-nan"),
    pytest.param(lambda: phase.evaluate([1.0, 0.5], [10.0, 190.0]),
                 exact("scattering_angle_deg must lie in [0, 180]; got 190 at index 1"),
                 id="evaluate-angle"),
    pytest.param(lambda: phase.delta_m_scale([1.0], [0.5], [[1.0, 0.5]], 3),
                 exact("streams must be an even integer >= 2; got 3"), id="delta-m-odd"),
    pytest.param(lambda: phase.delta_m_scale([1.0], [0.5], [[1.0, 0.5]], 0),
                 exact("streams must be an integer >= 2; got 0"), id="delta-m-zero"),
    pytest.param(lambda: phase.delta_m_scale([1.0], [0.5], [1.0, 0.5], 2),
                 exact("phase_moments must have shape (..., layer, moment) with at least one "
                       "moment; got shape (2,)"), id="delta-m-shape"),
    pytest.param(lambda: phase.delta_m_scale([np.nan], [0.5], [[1.0, 0.5]], 2),
                 exact("optical_depth must be finite; got nan at index 0"), id="delta-m-nan"),
    pytest.param(lambda: phase.delta_m_scale([-1.0], [0.5], [[1.0, 0.5]], 2),
                 exact("optical_depth must be >= 0; got -1 at index 0"), id="delta-m-depth"),
    pytest.param(lambda: phase.delta_m_scale([1.0], [1.5], [[1.0, 0.5]], 2),
                 exact("single_scattering_albedo must lie in [0, 1]; got 1.5 at index 0"),
                 id="delta-m-albedo"),
    pytest.param(lambda: phase.delta_m_scale([1.0], [0.5], [[0.9, 0.5]], 2),
                 exact("phase_moments[..., 0] must be 1; got 0.9 at index 0"),
                 id="delta-m-chi-0"),
    pytest.param(lambda: phase.delta_m_scale([1.0], [0.5], [[1.0, 1.5]], 2),
                 exact("phase_moments must satisfy |chi_l| <= 1; got 1.5 at index (0, 1)"),
                 id="delta-m-chi-l"),
    pytest.param(lambda: phase.delta_m_scale([1.0, 2.0, 3.0], [0.5, 0.5], [[1.0, 0.5]], 2),
                 exact("optical_depth (..., layer), single_scattering_albedo (..., layer) and "
                       "phase_moments (..., layer, moment) must broadcast; got shapes (3,), "
                       "(2,), (1, 2)"), id="delta-m-broadcast"),
]


@pytest.mark.parametrize(("call", "message"), PHASE_ERRORS)
def test_phase_errors(call, message):
    with pytest.raises(ValueError, match=message):
        call()


# ------------------------------------------------------------------ planck

PLANCK_ERRORS = [
    pytest.param(lambda: planck.band_radiance(-1.0, 1.0, 2.0),
                 exact("temperature must be finite and >= 0 K; got -1.0"),
                 id="band-temperature"),
    pytest.param(lambda: planck.band_radiance([200.0, np.nan], 1.0, 2.0),
                 exact("temperature must be finite and >= 0 K; got nan at index (1,)"),
                 id="band-temperature-nan"),
    pytest.param(lambda: planck.band_radiance(200.0, -1.0, 2.0),
                 exact("wavenumber_low must be finite and >= 0 cm-1; got -1.0"),
                 id="band-low"),
    pytest.param(lambda: planck.band_radiance(200.0, 3.0, 2.0),
                 exact("wavenumber_high must exceed wavenumber_low (a band lo < hi, in cm-1); "
                       "got lo = 3.0, hi = 2.0"), id="band-order"),
    pytest.param(lambda: planck.band_radiance(200.0, [1.0, 3.0], [2.0, 3.0]),
                 exact("wavenumber_high must exceed wavenumber_low (a band lo < hi, in cm-1); "
                       "got lo = 3.0, hi = 3.0 at index (1,)"), id="band-order-array"),
    pytest.param(lambda: planck.spectral_radiance_wavenumber(200.0, 0.0),
                 exact("wavenumber must be finite and > 0 cm-1; got 0.0"),
                 id="spectral-wavenumber"),
    pytest.param(lambda: planck.spectral_radiance_wavenumber(-2.0, 100.0),
                 exact("temperature must be finite and >= 0 K; got -2.0"),
                 id="spectral-wavenumber-temperature"),
    pytest.param(lambda: planck.spectral_radiance_wavelength(200.0, -1.0),
                 exact("wavelength_um must be finite and > 0 um; got -1.0"),
                 id="spectral-wavelength"),
    pytest.param(lambda: planck.spectral_radiance_wavelength(np.inf, 1.0),
                 exact("temperature must be finite and >= 0 K; got inf"),
                 id="spectral-wavelength-temperature"),
    pytest.param(lambda: planck.total_radiance(-5.0),
                 exact("temperature must be finite and >= 0 K; got -5.0"), id="total"),
]


@pytest.mark.parametrize(("call", "message"), PLANCK_ERRORS)
def test_planck_errors(call, message):
    with pytest.raises(ValueError, match=message):
        call()


# ------------------------------------------------------------------ mie (when present)


def _mie(*args, **kwargs):
    mie = pytest.importorskip("lamina.mie")
    return mie.lognormal_optics(*args, **kwargs)


MIE_ERRORS = [
    pytest.param(dict(args=(0.5, 1.33, 0.1, 1.5), n_moments=0),
                 exact("n_moments must be an integer >= 1; got 0"), id="n-moments"),
    pytest.param(dict(args=([[0.5]], 1.33, 0.1, 1.5)),
                 exact("wavelength must be a scalar or 1-D; got shape (1, 1)"), id="wavelength-2d"),
    pytest.param(dict(args=([], 1.33, 0.1, 1.5)),
                 exact("wavelength must hold at least one value"), id="wavelength-empty"),
    pytest.param(dict(args=([0.5, -0.5], 1.33, 0.1, 1.5)),
                 exact("wavelength must be > 0 (micrometres); got -0.5 at index 1"),
                 id="wavelength-negative"),
    pytest.param(dict(args=([0.5, np.nan], 1.33, 0.1, 1.5)),
                 exact("wavelength must be finite; got nan at index 1"), id="wavelength-nan"),
    pytest.param(dict(args=(0.5, complex(np.nan, 0.0), 0.1, 1.5)),
                 exact("refractive_index must be finite; got (nan+0j)"), id="index-nan"),
    pytest.param(dict(args=([0.5, 0.6], [1.33] * 3, 0.1, 1.5)),
                 exact("refractive_index must be a scalar or have one value per wavelength "
                       "(shape (2,)); got shape (3,)"), id="index-shape"),
    pytest.param(dict(args=(0.5, -1.33, 0.1, 1.5)),
                 exact("refractive_index must have a real part > 0; got (-1.33+0j) at index 0"),
                 id="index-real"),
    pytest.param(dict(args=(0.5, 1.33 - 0.1j, 0.1, 1.5)),
                 exact("refractive_index must have an imaginary part >= 0 (m = n + i k, k >= 0 "
                       "absorbing); got (1.33-0.1j) at index 0"), id="index-imaginary"),
    pytest.param(dict(args=(0.5, 1.33, 0.0, 1.5)),
                 exact("median_radius must be a number > 0 (micrometres); got 0.0"),
                 id="radius"),
    pytest.param(dict(args=(0.5, 1.33, np.nan, 1.5)),
                 exact("median_radius must be finite; got nan"), id="radius-nan"),
    pytest.param(dict(args=(0.5, 1.33, 0.1, 1.0)),
                 exact("geometric_standard_deviation must be a number > 1; got 1.0"),
                 id="width"),
    pytest.param(dict(args=(0.5, 1.33, 0.1, 1.5), width_cutoff=0.0),
                 exact("width_cutoff must be a number > 0; got 0.0"), id="cutoff"),
    pytest.param(dict(args=(0.5, 1.33, 0.1, 1.5), radius_panels=0),
                 exact("radius_panels must be an integer >= 1; got 0"), id="panels"),
]


@pytest.mark.parametrize(("options", "message"), MIE_ERRORS)
def test_mie_errors(options, message):
    options = dict(options)
    args = options.pop("args")
    with pytest.raises(ValueError, match=message):
        _mie(*args, **options)


# ------------------------------------------------------------------ the kernel's own checks


def kernel_arguments(ncol=3, nlayer=2, n=2, nsun=1, npos=3, nvz=1, nva=1) -> dict:
    """A consistent set of solve_columns arguments (a small valid problem)."""
    from lamina.quadrature import double_gauss

    mu, weights = double_gauss(2 * n)
    moments = 0.3 ** np.arange(2 * n)
    return dict(
        optical_depth=np.full((ncol, nlayer), 0.5),
        single_scattering_albedo=np.full((ncol, nlayer), 0.5),
        phase_moments=np.tile(moments, (ncol, nlayer, 1)),
        sun_cosine=np.full((ncol, nsun), 0.8),
        sun_irradiance=np.ones((ncol, nsun)),
        surface_albedo=np.full(ncol, 0.1),
        planck_levels=np.zeros((ncol, nlayer + 1)),
        planck_surface=np.zeros(ncol),
        top_radiance=np.zeros(ncol),
        quadrature_cosines=mu,
        quadrature_weights=weights,
        position_layer=np.array([0, 1, 1], dtype=np.intp)[:npos],
        position_fraction=np.array([0.0, 0.0, 1.0])[:npos],
        view_cosines=np.full(nvz, 0.7),
        view_azimuths=np.zeros(nva),
        max_fourier_terms=4,
        fourier_tolerance=1e-6,
        thermal=False,
        flux_up=np.empty((ncol, nsun, npos)),
        flux_down=np.empty((ncol, nsun, npos)),
        mean_intensity=np.empty((ncol, nsun, npos)),
        radiance=np.empty((ncol, nsun, npos, 2, nvz, nva)),
        fourier_terms=np.empty(ncol, dtype=np.int64),
        status=np.empty((ncol, 4), dtype=np.int64),
    )


def scattering_arguments(ncol=2, nlayer=2, nsun=1, npos=3, nvz=2, nva=1) -> dict:
    """A consistent set of single_scattering arguments."""
    return dict(
        optical_depth=np.full((ncol, nlayer), 0.5),
        single_scattering_albedo=np.full((ncol, nlayer), 0.5),
        phase_function=np.ones((ncol, nlayer, nsun, 2, nvz, nva)),
        sun_cosine=np.full((ncol, nsun), 0.8),
        sun_irradiance=np.ones((ncol, nsun)),
        position_layer=np.array([0, 1, 1], dtype=np.intp)[:npos],
        position_fraction=np.array([0.0, 0.5, 1.0])[:npos],
        view_cosines=np.full(nvz, 0.7),
        sign=1.0,
        radiance=np.zeros((ncol, nsun, npos, 2, nvz, nva)),
    )


def _grown(value: np.ndarray, axis: int, step: int) -> np.ndarray:
    shape = list(value.shape)
    shape[axis] += step
    return np.resize(value, shape).astype(value.dtype)


def kernel_cases() -> dict:
    """name -> (function name, arguments, expected message pattern)."""
    cases = {}
    shape_message = r"^solve_columns: \w+ has shape \([\d, ]*\), expected \([\d, ]*\)$"
    for name, value in kernel_arguments().items():
        if not isinstance(value, np.ndarray):
            continue
        for axis in range(value.ndim):
            for step in (1, -1):
                if value.shape[axis] + step < 1:
                    continue
                arguments = kernel_arguments()
                arguments[name] = _grown(value, axis, step)
                cases[f"solve_columns-{name}-axis{axis}{step:+d}"] = (
                    "solve_columns", arguments, shape_message)
    arguments = kernel_arguments()
    arguments["optical_depth"] = arguments["optical_depth"][0]
    cases["solve_columns-wrong-ndim"] = (
        "solve_columns", arguments, r"^Buffer has wrong number of dimensions")
    arguments = kernel_arguments()
    arguments["single_scattering_albedo"] = arguments["single_scattering_albedo"].astype(
        np.float32)
    cases["solve_columns-wrong-dtype"] = ("solve_columns", arguments, r"^Buffer dtype mismatch")
    arguments = kernel_arguments()
    arguments["radiance"] = np.asfortranarray(arguments["radiance"])
    cases["solve_columns-not-contiguous"] = (
        "solve_columns", arguments, r"^ndarray is not C-contiguous$")
    arguments = kernel_arguments()
    arguments["position_layer"] = np.array([0, 1, 2], dtype=np.intp)
    cases["solve_columns-position-out-of-range"] = (
        "solve_columns", arguments, exact("solve_columns: position_layer out of range"))
    cases["solve_columns-no-layers"] = (
        "solve_columns", kernel_arguments(nlayer=0, npos=0),
        exact("solve_columns: need at least one layer and one quadrature cosine"))
    scattering_message = exact("single_scattering: arrays disagree in shape")
    for name, value in scattering_arguments().items():
        if not isinstance(value, np.ndarray) or name in ("position_layer", "view_cosines"):
            continue
        for axis in range(value.ndim):
            arguments = scattering_arguments()
            arguments[name] = _grown(value, axis, 1)
            cases[f"single_scattering-{name}-axis{axis}+1"] = (
                "single_scattering", arguments, scattering_message)
    for name in ("position_layer", "view_cosines"):
        arguments = scattering_arguments()
        arguments[name] = _grown(arguments[name], 0, 1)
        cases[f"single_scattering-{name}-axis0+1"] = (
            "single_scattering", arguments, scattering_message)
    arguments = scattering_arguments()
    arguments["position_layer"] = np.array([0, 1, 5], dtype=np.intp)
    cases["single_scattering-position-out-of-range"] = (
        "single_scattering", arguments, exact("single_scattering: position_layer out of range"))
    return cases


def _run_kernel_cases(names: list[str]) -> None:
    """Child process: call the kernel for each case; print one JSON line per outcome."""
    from lamina import _kernel

    cases = kernel_cases()
    for name in names:
        print(json.dumps({"case": name, "outcome": "started"}), flush=True)
        function, arguments, _ = cases[name]
        try:
            getattr(_kernel, function)(*arguments.values())
        except Exception as error:  # report every kind; the parent judges
            outcome = {"type": type(error).__name__, "message": str(error)}
        else:
            outcome = {"type": None, "message": ""}
        print(json.dumps({"case": name, "outcome": outcome}), flush=True)


@pytest.fixture(scope="module")
def kernel_outcomes() -> dict:
    names = list(kernel_cases())
    completed = subprocess.run(
        [sys.executable, str(Path(__file__).resolve()), *names],
        capture_output=True, text=True, timeout=300,
    )
    outcomes = {}
    for line in completed.stdout.splitlines():
        record = json.loads(line)
        outcomes[record["case"]] = record["outcome"]
    # a case that started and never finished crashed the child
    crashed = [name for name, outcome in outcomes.items() if outcome == "started"]
    for name in crashed:
        outcomes[name] = {"type": "crash", "message": f"exit status {completed.returncode}: "
                                                      f"{completed.stderr[-500:]}"}
    return outcomes


@pytest.mark.parametrize("case", list(kernel_cases()))
def test_kernel_refuses_wrong_arrays_with_a_value_error(case, kernel_outcomes):
    # the public wrapper never makes such a call; the kernel must still refuse it rather
    # than read out of bounds (its boundscheck is off)
    assert case in kernel_outcomes, "the child process died before this case"
    outcome = kernel_outcomes[case]
    pattern = kernel_cases()[case][2]
    assert outcome["type"] == "ValueError", f"{case}: {outcome}"
    assert re.search(pattern, outcome["message"]), outcome["message"]


# ------------------------------------------------------------------ SolverError


# the moments are made to break the kernel, and their series is negative (as lamina warns)
@pytest.mark.filterwarnings("ignore::lamina.LaminaWarning")
def test_solver_error_names_the_layer_and_the_fourier_term():
    # chi = [1, 0, 0, 1] (|chi_l| <= 1, accepted) is no phase function: its scattering
    # matrix for the m = 1 term has an eigenvalue above 1, so without delta-M the
    # Cholesky factorisation of I - w K fails in that layer and term
    moments = np.stack([hg(0.3, 4), hg(0.3, 4), np.array([1.0, 0.0, 0.0, 1.0])])
    atm = lamina.make_atmosphere([1.0, 0.5, 2.0], [0.5, 0.8, 1.0], moments)
    message = ("the solver failed in column 0 of this block (layer 2, Fourier term 1): "
               "Cholesky factorisation of the difference matrix (dpotrf) (LAPACK info 2)"
               "; the phase function truncated to the streams in use is not a valid (non-negative) "
               "phase function there: use delta_m=True or more streams")
    with pytest.raises(lamina.SolverError, match=exact(message)):
        lamina.solve(atm, streams=4, sun_zenith=30.0, delta_m=False, view_zenith=[10.0],
                     view_azimuth=[0.0])


def test_solver_error_in_the_azimuth_independent_term_and_its_column():
    # the truncated forward delta chi = [1, 1, 1, 1] fails in term 0 (the sum matrix); the
    # column is the position along the extra dims
    moments = np.stack([hg(0.3, 4), np.ones(4), hg(0.3, 4)])
    good_column = np.stack([hg(0.3, 4)] * 3)
    atm = lamina.make_atmosphere(np.ones((2, 3)), np.ones((2, 3)),
                                 np.stack([good_column, moments]), extra_dims=["wavelength"])
    message = ("the solver failed in column 1 of this block (layer 1, Fourier term 0): "
               "Cholesky factorisation of the sum matrix (dpotrf) (LAPACK info 2)"
               "; the phase function truncated to the streams in use is not a valid (non-negative) "
               "phase function there: use delta_m=True or more streams")
    with pytest.raises(lamina.SolverError, match=exact(message)):
        lamina.solve(atm, streams=4, delta_m=False)


def test_solver_error_for_a_result_that_overflows():
    # a finite but enormous irradiance overflows the fluxes: refused, never returned as inf
    atm = lamina.make_atmosphere([1.0], [0.9], hg(0.5)[None])
    message = ("the solver produced a non-finite result in column 0 of this block (are the "
               "inputs, e.g. sun_irradiance, too large for double precision?)")
    with pytest.raises(lamina.SolverError, match=exact(message)):
        lamina.solve(atm, sun_zenith=30.0, sun_irradiance=1.7e308, view_zenith=[0.0],
                     view_azimuth=[0.0])


def test_every_kernel_status_code_has_a_description():
    from lamina import _kernel

    # the wrapper turns a status code into "<what failed> (LAPACK info <info>)": each
    # LAPACK failure names its routine, and code 9 is the non-finite result
    assert _kernel.STATUS_NAMES[9] == "non-finite result"
    for code, name in _kernel.STATUS_NAMES.items():
        assert isinstance(code, int) and code > 0
        assert code == 9 or re.search(r"\(d[a-z]{4,5}\)$", name), (code, name)


if __name__ == "__main__":
    _run_kernel_cases(sys.argv[1:])
