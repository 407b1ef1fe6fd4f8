"""Thermal emission with ``lamina.solve(..., stokes=3 | 4)`` (the vector kernel's Planck source).

Outside sources named at each check: Kirchhoff's law for an isothermal enclosure (radiation
in equilibrium with matter at one temperature is isotropic, unpolarized and equal to the
Planck radiance B, whatever the scattering: Chandrasekhar 1950, ch. 1; Hovenier, van der Mee
and Domke 2004, for its polarized form), with the independent polarized adding-doubling of
tests/polarized_doubling.py for the emission of an isothermal slab, the scalar solver (the
unpolarized limit) and an exact identity of the problem (a layer split in two at a level
whose Planck radiance is the linear interpolation of the layer's is the same layer).
"""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr
from scipy.optimize import brentq

import lamina
from lamina.mie import lognormal_optics
from lamina.phase import rayleigh_matrix
from polarized_doubling import polarized_doubling

BAND = (900.0, 1000.0)
VIEW = np.array([0.0, 35.0, 70.0, 89.0])
AZIMUTH = np.array([0.0, 60.0, 180.0, 290.0])
LEVELS = [0.0, 0.2, 1.0, 1.5, 2.5, 3.0]


def _aerosol() -> np.ndarray:
    optics = lognormal_optics(0.55, 1.45 + 0.001j, 0.2, 1.6, n_moments=24,
                              scattering_matrix=True)
    return optics.scattering_matrix_moments.values[0]


def _polarizing(temperature) -> xr.Dataset:
    return lamina.make_atmosphere(
        [0.4, 3.0, 0.01], [0.5, 0.9, 0.99],
        scattering_matrix_moments=[rayleigh_matrix(), _aerosol(), rayleigh_matrix()],
        temperature=temperature)


@pytest.mark.parametrize("stokes", [3, 4])
@pytest.mark.parametrize("sun", [None, [40.0]])
def test_isothermal_enclosure_is_unpolarized_planck_radiance(stokes, sun):
    # Kirchhoff: Rayleigh and Mie layers (polarizing, with complex eigenvalues in the Mie
    # layer) at 260 K between a surface at 260 K and an isotropic top radiance B: I = B,
    # Q = U = V = 0 at every level, inside layers and at every view; fluxes pi B, mean
    # intensity B (exact; measured 1.6e-15 of B). With a beam of zero irradiance the other
    # Fourier terms are formed and must add nothing.
    planck = float(lamina.planck.band_radiance(260.0, *BAND))
    out = lamina.solve(_polarizing([260.0] * 4), streams=16, surface_albedo=0.3,
                       wavenumber_band=BAND, top_diffuse_radiance=planck, view_zenith=VIEW,
                       view_azimuth=AZIMUTH, output_levels=LEVELS, stokes=stokes,
                       sun_zenith=sun, sun_irradiance=None if sun is None else 0.0)
    radiance = out.radiance
    np.testing.assert_allclose(radiance.sel(stokes="I"), planck, rtol=1e-13, atol=0)
    assert float(np.abs(radiance.isel(stokes=slice(1, None))).max()) < 1e-14 * planck
    np.testing.assert_allclose(out.flux_up, np.pi * planck, rtol=1e-13)
    np.testing.assert_allclose(out.flux_down_diffuse, np.pi * planck, rtol=1e-13)
    np.testing.assert_allclose(out.mean_intensity, planck, rtol=1e-13)


@pytest.mark.parametrize(("particles", "streams"), [("rayleigh", 16), ("mie", 12)])
def test_emission_of_an_isothermal_slab_matches_kirchhoff_with_the_doubling(particles,
                                                                            streams):
    # a homogeneous isothermal slab over a black surface at 0 K: by Kirchhoff (the slab
    # inside an enclosure at its temperature sees B e1 everywhere) and linearity, its
    # emission leaving the top is B e1 minus the reflected part of an isotropic
    # unpolarized B from above and the transmitted part (direct and diffuse) of one from
    # below, which for a homogeneous slab equals the diffuse transmission of one from above
    # in I and Q (the mirror z -> -z keeps I, Q). The reflection and transmission come
    # from the adding-doubling at the same quadrature, integrated over the incident cosines
    # with its Gauss weights and averaged over 2 L + 2 azimuths (exact for the azimuthal
    # average); measured 3e-14 (Rayleigh) and 5e-14 (Mie) of B. Polarized emission: Q of
    # up to 8 % of I.
    tau, albedo = (1.0, 0.9) if particles == "rayleigh" else (0.7, 0.8)
    matrix = rayleigh_matrix() if particles == "rayleigh" else _aerosol()
    view = np.array([10.0, 40.0, 70.0])
    mu = np.cos(np.radians(view))
    azimuths = np.arange(2 * streams + 2) * 360.0 / (2 * streams + 2)
    nodes, weights = np.polynomial.legendre.leggauss(streams // 2)
    reflected = np.zeros((mu.size, 4))
    transmitted = np.zeros((mu.size, 4))
    for node, weight in zip(0.5 * (nodes + 1.0), 0.5 * weights, strict=True):
        doubling = polarized_doubling([(tau, albedo, matrix[:streams])], 0.0, mu[:, None],
                                      node, azimuths[None, :], quadrature_nodes=streams // 2)
        reflected += weight * doubling.reflected.mean(axis=1)
        transmitted += weight * doubling.transmitted.mean(axis=1)
    planck = float(lamina.planck.band_radiance(260.0, *BAND))
    unpolarized = np.array([1.0, 0.0, 0.0, 0.0])
    expected = planck * (unpolarized - 2.0 * np.pi * (reflected + transmitted)
                         - np.exp(-tau / mu)[:, None] * unpolarized)
    atmosphere = lamina.make_atmosphere([tau], [albedo], scattering_matrix_moments=[matrix],
                                        temperature=[260.0, 260.0])
    out = lamina.solve(atmosphere, streams=streams, wavenumber_band=BAND,
                       surface_temperature=0.0, view_zenith=view, view_azimuth=[0.0, 90.0],
                       stokes=4, delta_m=False)
    emitted = out.radiance.sel(level=0, direction="up").transpose("view_zenith",
                                                                  "view_azimuth", "stokes")
    assert float(np.abs(emitted.sel(stokes="Q")).max()) > 1e-5 * planck
    np.testing.assert_allclose(emitted.values, np.broadcast_to(expected[:, None], emitted.shape),
                               rtol=0, atol=1e-12 * planck)


def test_emission_of_an_unpolarizing_atmosphere_is_the_scalar_one():
    # layers given only phase_moments scatter without polarizing: thermal emission (a
    # temperature gradient, a warmer reflecting surface) gives the scalar solve's I and
    # fluxes, and no Q, U, V (measured: I 6e-14 of the largest, Q = U = V = 0 exactly)
    atmosphere = lamina.make_atmosphere([0.4, 3.0, 0.01], [0.5, 0.9, 0.99],
                                        lamina.phase.henyey_greenstein(0.6, 16),
                                        temperature=[200.0, 230.0, 260.0, 290.0])
    kwargs = dict(streams=16, surface_albedo=0.3, wavenumber_band=BAND, view_zenith=VIEW,
                  view_azimuth=AZIMUTH, output_levels=LEVELS, surface_temperature=300.0)
    scalar = lamina.solve(atmosphere, **kwargs)
    vector = lamina.solve(atmosphere, stokes=4, **kwargs)
    scale = float(scalar.radiance.max())
    np.testing.assert_allclose(vector.radiance.sel(stokes="I"), scalar.radiance, rtol=0,
                               atol=1e-12 * scale)
    assert float(np.abs(vector.radiance.sel(stokes=["Q", "U", "V"])).max()) == 0.0
    for name in ("flux_up", "flux_down", "mean_intensity"):
        np.testing.assert_allclose(vector[name], scalar[name], rtol=1e-12)


def test_emission_with_a_beam_of_an_unpolarizing_layer_adds_no_polarization():
    # a sun and thermal emission together over a layer that does not polarize: the
    # scalar solve's I at every azimuth, and Q = U = V = 0 (thermal emission is
    # unpolarized at its source, and such a layer never polarizes)
    atmosphere = lamina.make_atmosphere([1.2], [0.8], lamina.phase.henyey_greenstein(0.5, 8),
                                        temperature=[250.0, 280.0])
    kwargs = dict(streams=8, sun_zenith=[50.0], sun_irradiance=2.0, surface_albedo=0.1,
                  wavenumber_band=BAND, view_zenith=VIEW, view_azimuth=AZIMUTH,
                  delta_m=False, single_scattering_correction=False,
                  aureole_correction=False, fourier_tolerance=1e-300)
    scalar = lamina.solve(atmosphere, **kwargs)
    vector = lamina.solve(atmosphere, stokes=3, **kwargs)
    np.testing.assert_allclose(vector.radiance.sel(stokes="I"), scalar.radiance, rtol=0,
                               atol=1e-12 * float(scalar.radiance.max()))
    assert float(np.abs(vector.radiance.sel(stokes=["Q", "U"])).max()) == 0.0


def test_polarized_emission_inside_a_layer_equals_the_split_layer():
    # an output position 0.3 into a Mie layer of a polarizing atmosphere with a temperature
    # gradient equals the level of the same layer split there, when the split level's
    # temperature has the linearly interpolated Planck radiance (the source is linear in
    # optical depth): the same problem, every Stokes component (an exact identity)
    top, bottom = 220.0, 280.0
    low, high = (float(lamina.planck.band_radiance(t, *BAND)) for t in (top, bottom))
    target = low + 0.3 * (high - low)
    middle = brentq(lambda t: float(lamina.planck.band_radiance(t, *BAND)) - target,
                    top, bottom, xtol=1e-13)
    rayleigh, aerosol = rayleigh_matrix(), _aerosol()
    kwargs = dict(streams=8, surface_albedo=0.2, wavenumber_band=BAND, view_zenith=VIEW[:3],
                  view_azimuth=AZIMUTH, stokes=4, surface_temperature=290.0)
    whole = lamina.make_atmosphere([0.4, 1.0], [1.0, 0.9],
                                   scattering_matrix_moments=[rayleigh, aerosol],
                                   temperature=[200.0, top, bottom])
    split = lamina.make_atmosphere([0.4, 0.3, 0.7], [1.0, 0.9, 0.9],
                                   scattering_matrix_moments=[rayleigh, aerosol, aerosol],
                                   temperature=[200.0, top, middle, bottom])
    inside = lamina.solve(whole, output_levels=[0.0, 1.3, 2.0], **kwargs)
    levels = lamina.solve(split, **kwargs)
    for name in ("flux_up", "flux_down_diffuse", "mean_intensity", "radiance"):
        expected = levels[name].isel(level=[0, 2, 3]).values
        np.testing.assert_allclose(inside[name].values, expected, rtol=0,
                                   atol=1e-11 * np.abs(expected).max())


def test_a_polarizing_atmosphere_polarizes_its_own_emission():
    # not a reference value: the check that the emission reaches Q at all. Rayleigh layers
    # with a temperature gradient over a cold black surface: the emitted light is
    # polarized by scattering (nonzero Q), I differs from the scalar solve by the
    # polarization's share of the multiply scattered light, and U = 0 (no azimuth)
    atmosphere = lamina.make_atmosphere([0.5, 2.0], [0.9, 0.9],
                                        scattering_matrix_moments=[rayleigh_matrix()] * 2,
                                        temperature=[200.0, 250.0, 300.0])
    kwargs = dict(streams=16, wavenumber_band=BAND, view_zenith=VIEW[1:3],
                  view_azimuth=AZIMUTH, surface_temperature=0.0)
    vector = lamina.solve(atmosphere, stokes=3, **kwargs)
    scalar = lamina.solve(atmosphere, **kwargs)
    intensity = float(scalar.radiance.max())
    assert float(np.abs(vector.radiance.sel(stokes="Q")).max()) > 1e-3 * intensity
    assert float(np.abs(vector.radiance.sel(stokes="U")).max()) == 0.0
    difference = float(np.abs(vector.radiance.sel(stokes="I") - scalar.radiance).max())
    assert 1e-6 * intensity < difference < 0.05 * intensity
