"""Tests of ``lamina.solve(..., stokes=3 | 4)`` (the polarized path, lamina._solver.polarized).

Outside sources named at each check: the independent polarized adding-doubling of
tests/polarized_doubling.py at the same double-Gauss quadrature (de Haan, Bosma and
Hovenier 1987), the degree of polarization of single-scattered Rayleigh light
(Chandrasekhar 1950), the scalar solver (the unpolarized limit) and delta-M's scaled
coefficients as published (the forward delta is f times the identity matrix: Hovenier, van
der Mee and Domke 2004; DEVELOPERS.md, "Polarization").
"""

from __future__ import annotations

import numpy as np
import pytest

import lamina
from lamina.mie import lognormal_optics
from lamina.phase import rayleigh_matrix
from polarized_doubling import polarized_doubling
from polarized_references import matrix_elements, phase_matrix

SUN = [30.0, 60.0]
VIEW = np.array([10.0, 40.0, 70.0])
AZIMUTH = np.array([0.0, 45.0, 120.0, 180.0, 300.0])
OFF = {"single_scattering_correction": False, "aureole_correction": False}


def _aerosol(n_moments: int = 24) -> np.ndarray:
    optics = lognormal_optics(0.55, 1.45 + 0.001j, 0.2, 1.6, n_moments=n_moments,
                              scattering_matrix=True)
    return optics.scattering_matrix_moments.values[0]


def _doubling(layers, albedo, sun, streams):
    return polarized_doubling(layers, albedo, np.cos(np.radians(VIEW))[:, None],
                              np.cos(np.radians(sun)), AZIMUTH[None, :],
                              quadrature_nodes=streams // 2)


@pytest.mark.parametrize("stokes", [3, 4])
def test_rayleigh_atmosphere_matches_polarized_doubling(stokes):
    # two Rayleigh layers over a Lambertian surface, two suns: reflected and transmitted
    # I, Q, U (, V) against the adding-doubling at the same quadrature (measured 1.5e-11)
    matrix = rayleigh_matrix()
    atmosphere = lamina.make_atmosphere([0.1, 0.4], [1.0, 0.95],
                                        scattering_matrix_moments=[matrix, matrix])
    out = lamina.solve(atmosphere, streams=16, sun_zenith=SUN, surface_albedo=0.3,
                       view_zenith=VIEW, view_azimuth=AZIMUTH, stokes=stokes, **OFF)
    assert list(out.stokes.values) == ["I", "Q", "U", "V"][:stokes]
    for sun in SUN:
        reference = _doubling([(0.1, 1.0, matrix), (0.4, 0.95, matrix)], 0.3, sun, 16)
        up = out.radiance.sel(sun_zenith=sun, level=0, direction="up").values
        down = out.radiance.sel(sun_zenith=sun, level=2, direction="down").values
        for got, expected in ((up, reference.reflected), (down, reference.transmitted)):
            scale = np.abs(expected[..., 0]).max()
            np.testing.assert_allclose(got, expected[..., :stokes], rtol=0, atol=1e-9 * scale)
        flux = out.flux_up.sel(sun_zenith=sun, level=0).values
        np.testing.assert_allclose(flux, reference.reflected_flux, rtol=1e-9)


def test_delta_m_scales_every_element():
    # an aerosol layer whose 24 moments exceed 8 streams: the solve with delta-M equals the
    # adding-doubling of the scaled problem, t' = (1 - w f) t, w' = (1 - f) w / (1 - w f),
    # alpha_i' = (alpha_i - f) / (1 - f) (alpha1, alpha4; alpha2, alpha3 from l = 2),
    # beta_i' = beta_i / (1 - f), f = alpha1_8 (Wiscombe 1977 for the scalar part; the
    # forward delta is f times the identity matrix; measured 6e-14)
    coefficients = _aerosol()
    tau, albedo, streams = 0.6, 0.9, 8
    atmosphere = lamina.make_atmosphere([tau], [albedo], scattering_matrix_moments=[coefficients])
    out = lamina.solve(atmosphere, streams=streams, sun_zenith=[40.0], surface_albedo=0.1,
                       view_zenith=VIEW, view_azimuth=AZIMUTH, stokes=4, **OFF)
    f = coefficients[streams, 0]
    scaled = coefficients[:streams].copy()
    scaled[:, [0, 3]] = (scaled[:, [0, 3]] - f) / (1.0 - f)
    scaled[2:, [1, 2]] = (scaled[2:, [1, 2]] - f) / (1.0 - f)
    scaled[:, 4:] /= 1.0 - f
    layer = (tau * (1.0 - albedo * f), albedo * (1.0 - f) / (1.0 - albedo * f), scaled)
    reference = _doubling([layer], 0.1, 40.0, streams)
    up = out.radiance.sel(sun_zenith=40.0, level=0, direction="up").values
    scale = np.abs(reference.reflected[..., 0]).max()
    np.testing.assert_allclose(up, reference.reflected, rtol=0, atol=1e-9 * scale)
    assert np.abs(up[..., 3]).max() > 1e-6 * scale  # V from beta2, not trivially zero


def test_thin_rayleigh_layer_polarization_is_single_scattering():
    # Chandrasekhar (1950): single-scattered Rayleigh light of an unpolarized beam has the
    # degree of polarization sin^2 T / (1 + cos^2 T); a layer of t = 1e-4 scatters once to
    # O(t)
    atmosphere = lamina.make_atmosphere([1e-4], [1.0],
                                        scattering_matrix_moments=[rayleigh_matrix()])
    out = lamina.solve(atmosphere, streams=16, sun_zenith=[50.0], view_zenith=VIEW,
                       view_azimuth=AZIMUTH, stokes=3, **OFF)
    degree = out.degree_of_polarization.sel(sun_zenith=50.0, level=0, direction="up").values
    mu, mu0 = np.cos(np.radians(VIEW))[:, None], np.cos(np.radians(50.0))
    cosine = -mu * mu0 + np.sqrt(1 - mu**2) * np.sqrt(1 - mu0**2) * np.cos(
        np.radians(AZIMUTH))[None, :]
    expected = (1.0 - cosine**2) / (1.0 + cosine**2)
    np.testing.assert_allclose(degree, expected, rtol=0, atol=2e-3)
    assert out.degree_of_polarization.attrs["units"] == "1"
    assert out.angle_of_linear_polarization.attrs["units"] == "degree"


@pytest.mark.parametrize("stokes", [3, 4])
def test_single_scattering_correction_restores_the_full_matrix(stokes):
    # a thin aerosol layer (t = 1e-4) whose 24 moments are cut to 8 streams by delta-M: with
    # the correction (Nakajima and Tanaka 1988) the Stokes vectors are the exact single
    # scattering of the full matrix, w mu0 / (4 pi (mu + mu0)) (1 - exp(-t (1/mu + 1/mu0)))
    # Z e1 reflected and w mu0 / (4 pi (mu0 - mu)) (exp(-t/mu0) - exp(-t/mu)) Z e1
    # transmitted (Chandrasekhar 1950), Z the rotated phase matrix of
    # tests/polarized_references.py (Hovenier et al. 2004, section 2.3), to O(t) (measured
    # 5e-4 of the largest I, 5e-5 at t = 1e-5; without the correction 11 %)
    coefficients = _aerosol()
    tau, albedo, sun = 1e-4, 0.95, 50.0
    atmosphere = lamina.make_atmosphere([tau], [albedo], scattering_matrix_moments=[coefficients])
    kwargs = dict(streams=8, sun_zenith=[sun], view_zenith=VIEW, view_azimuth=AZIMUTH,
                  stokes=stokes)
    out = lamina.solve(atmosphere, **kwargs)
    plain = lamina.solve(atmosphere, single_scattering_correction=False, **kwargs)
    mu, mu0 = np.cos(np.radians(VIEW))[:, None], np.cos(np.radians(sun))

    def elements(x):
        return matrix_elements(coefficients, x)

    z_up = phase_matrix(elements, mu, AZIMUTH[None, :], -mu0, 0.0)[..., :stokes, 0]
    z_down = phase_matrix(elements, -mu, AZIMUTH[None, :], -mu0, 0.0)[..., :stokes, 0]
    up = albedo * mu0 / (4 * np.pi * (mu + mu0)) * -np.expm1(-tau * (1 / mu + 1 / mu0))
    down = albedo * mu0 / (4 * np.pi * (mu0 - mu)) * (np.exp(-tau / mu0) - np.exp(-tau / mu))
    for direction, expected in (("up", up[..., None] * z_up), ("down", down[..., None] * z_down)):
        level = 0 if direction == "up" else 1
        got = out.radiance.sel(sun_zenith=sun, level=level, direction=direction).values
        uncorrected = plain.radiance.sel(sun_zenith=sun, level=level,
                                         direction=direction).values
        scale = np.abs(expected[..., 0]).max()
        np.testing.assert_allclose(got, expected, rtol=0, atol=1e-3 * scale)
        assert np.abs(uncorrected - expected).max() > 0.05 * scale  # the cut matrix is off


def test_default_corrections_on_an_unpolarizing_cloud_give_the_scalar_solve():
    # with delta-M, the single-scattering and the aureole corrections (the defaults) a
    # forward-peaked layer that does not polarize (phase_moments only) gives the scalar
    # solve's I (the aureole light is unpolarized) and Q = U = 0 (to round-off: delta-M's
    # alpha2' = alpha3' = -f / (1 - f) couple Q and U, but nothing excites them; measured:
    # I to 1.3e-14)
    atmosphere = lamina.make_atmosphere([4.0], [0.999], lamina.phase.henyey_greenstein(0.85, 64))
    kwargs = dict(streams=8, sun_zenith=[30.0], surface_albedo=0.1, view_zenith=VIEW,
                  view_azimuth=AZIMUTH)
    scalar = lamina.solve(atmosphere, fourier_tolerance=1e-300, **kwargs)
    vector = lamina.solve(atmosphere, stokes=3, **kwargs)
    intensity = vector.radiance.sel(stokes="I")
    assert float(np.abs(intensity - scalar.radiance).max()) < 1e-10 * float(
        scalar.radiance.max())
    assert float(np.abs(vector.radiance.sel(stokes=["Q", "U"])).max()) < 1e-14 * float(
        scalar.radiance.max())


@pytest.mark.parametrize("corrected", [False, True])
def test_positions_inside_a_layer_equal_the_levels_of_the_split_layer(corrected):
    # output_levels=[1.3] inside a layer of optical thickness 1 equals level 2 of the same
    # atmosphere with that layer split in two (0.3 and 0.7): the same problem (an exact
    # identity), fluxes, mean intensity and radiances at the view cosines, every component,
    # without delta-M and corrections and with all of them (measured 1e-15, 3e-15)
    aerosol = _aerosol()
    options = {} if corrected else dict(delta_m=False, **OFF)
    kwargs = dict(streams=8, sun_zenith=SUN, surface_albedo=0.2, view_zenith=VIEW,
                  view_azimuth=AZIMUTH, stokes=4, **options)
    whole = lamina.make_atmosphere([0.4, 1.0], [1.0, 0.9],
                                   scattering_matrix_moments=[rayleigh_matrix(), aerosol])
    split = lamina.make_atmosphere([0.4, 0.3, 0.7], [1.0, 0.9, 0.9],
                                   scattering_matrix_moments=[rayleigh_matrix(), aerosol,
                                                              aerosol])
    inside = lamina.solve(whole, output_levels=[0.0, 1.3, 2.0], **kwargs)
    levels = lamina.solve(split, **kwargs)
    for name in ("flux_up", "flux_down_diffuse", "mean_intensity", "radiance"):
        got = inside[name].values
        expected = levels[name].isel(level=[0, 2, 3]).values
        np.testing.assert_allclose(got, expected, rtol=0, atol=1e-12 * np.abs(expected).max())


@pytest.mark.parametrize("sun", [None, [30.0]])
def test_top_diffuse_radiance_is_the_scalar_one_for_an_unpolarizing_atmosphere(sun):
    # an isotropic unpolarized radiance falling on the top (alone or with a beam) enters I
    # of term 0: over an unpolarizing atmosphere the scalar solve's I, Q = U = V = 0
    atmosphere = lamina.make_atmosphere([0.3, 1.0], [0.9, 0.99],
                                        lamina.phase.henyey_greenstein(0.6, 8))
    kwargs = dict(streams=8, sun_zenith=sun, surface_albedo=0.2, view_zenith=VIEW,
                  view_azimuth=AZIMUTH, top_diffuse_radiance=0.25, delta_m=False,
                  fourier_tolerance=1e-300, **OFF)
    scalar = lamina.solve(atmosphere, **kwargs)
    vector = lamina.solve(atmosphere, stokes=4, **kwargs)
    intensity = vector.radiance.sel(stokes="I")
    assert float(np.abs(intensity - scalar.radiance).max()) < 1e-12 * float(
        scalar.radiance.max())
    assert float(np.abs(vector.radiance.sel(stokes=["Q", "U", "V"])).max()) == 0.0
    for name in ("flux_up", "flux_down_diffuse", "mean_intensity"):
        np.testing.assert_allclose(vector[name], scalar[name], rtol=1e-12, atol=1e-15)


def test_unpolarizing_atmosphere_gives_the_scalar_solve():
    # a layer given only phase_moments scatters without polarizing: I equals the scalar
    # solve (no corrections), Q = U = V = 0, the fluxes too
    atmosphere = lamina.make_atmosphere([0.3, 1.0], [0.9, 0.99],
                                        lamina.phase.henyey_greenstein(0.6, 8))
    kwargs = dict(streams=8, sun_zenith=SUN, surface_albedo=0.2, view_zenith=VIEW,
                  view_azimuth=AZIMUTH, delta_m=False, fourier_tolerance=1e-300, **OFF)
    scalar = lamina.solve(atmosphere, **kwargs)
    vector = lamina.solve(atmosphere, stokes=4, **kwargs)
    intensity = vector.radiance.sel(stokes="I")
    assert float(np.abs(intensity - scalar.radiance).max()) < 1e-12 * float(
        scalar.radiance.max())
    assert float(np.abs(vector.radiance.sel(stokes=["Q", "U", "V"])).max()) == 0.0
    for name in ("flux_up", "flux_down", "mean_intensity"):
        np.testing.assert_allclose(vector[name], scalar[name], rtol=1e-12, atol=1e-15)
    assert "stokes" not in scalar.dims


@pytest.mark.parametrize(
    ("change", "message"),
    [
        ({"stokes": 2}, "stokes"),
        ({"stokes": True}, "stokes"),
        ({"stokes": 3, "surface": lamina.surface.cox_munk(5.0), "surface_albedo": None},
         "bidirectional"),
    ],
)
def test_bad_polarized_options_name_the_argument(change, message):
    atmosphere = lamina.make_atmosphere([0.3], [0.9],
                                        scattering_matrix_moments=[rayleigh_matrix()])
    arguments = dict(streams=8, sun_zenith=30.0, view_zenith=[20.0], view_azimuth=[0.0],
                     single_scattering_correction=False, aureole_correction=False)
    arguments.update(change)
    with pytest.raises(ValueError, match=message):
        lamina.solve(atmosphere, **arguments)


def test_what_the_polarized_path_does_not_do_yet_is_refused_by_name():
    # the pseudo-spherical beam and per-pixel views exist for stokes=1 only: stokes > 1
    # refuses them naming the option rather than solving another problem
    import xarray as xr

    atm = lamina.make_atmosphere([0.1, 0.2], [1.0, 1.0],
                                 scattering_matrix_moments=rayleigh_matrix(),
                                 altitude=[20e3, 5e3, 0.0])
    common = dict(streams=8, sun_zenith=40.0, stokes=3, view_azimuth=0.0)
    with pytest.raises(ValueError, match="stokes > 1 does not support planet_radius"):
        lamina.solve(atm, planet_radius=6.371e6, view_zenith=[0.0], **common)
    pixels = lamina.make_atmosphere(np.full((2, 2), 0.1), [1.0, 1.0],
                                    scattering_matrix_moments=rayleigh_matrix(),
                                    extra_dims={"pixel": [0, 1]})
    with pytest.raises(ValueError, match="stokes > 1 does not support per-pixel view angles"):
        lamina.solve(pixels, view_zenith=xr.DataArray([10.0, 20.0], dims="pixel"),
                     **common)


# ---------------------------------------------------------------- the Fourier series


def _hazy_atmosphere():
    return lamina.make_atmosphere([0.2, 0.8], [1.0, 0.95],
                                  scattering_matrix_moments=[rayleigh_matrix(), _aerosol(24)])


@pytest.mark.parametrize("tolerance", [1e-2, 1e-4])
def test_fourier_tolerance_stops_the_series_to_about_the_tolerance(tolerance):
    # the scalar criterion (two successive terms changing every component of every output
    # by at most the tolerance of itself) on a Mie aerosol's forward peak: fewer terms than
    # the moments carry, and the result within a few times the tolerance of the all-terms
    # sum (common practice: the tail after two small terms is of the order of the last one)
    kwargs = dict(streams=24, sun_zenith=[40.0], surface_albedo=0.1, view_zenith=VIEW,
                  view_azimuth=AZIMUTH, stokes=4, delta_m=False, **OFF)
    every = lamina.solve(_hazy_atmosphere(), fourier_tolerance=1e-300, **kwargs)
    early = lamina.solve(_hazy_atmosphere(), fourier_tolerance=tolerance, **kwargs)
    assert int(every.fourier_terms) == 24
    assert 3 < int(early.fourier_terms) < 24
    difference = np.abs(early.radiance - every.radiance)
    scale = float(np.abs(every.radiance.sel(stokes="I")).max())
    assert float(difference.max()) < 3.0 * tolerance * scale
    # and not an artefact of a loose measure: a tighter tolerance sums more terms
    tighter = lamina.solve(_hazy_atmosphere(), fourier_tolerance=tolerance / 100, **kwargs)
    assert int(tighter.fourier_terms) > int(early.fourier_terms)


def test_one_fourier_term_is_the_azimuthal_average():
    # max_fourier_terms=1: I and Q are the average over azimuth of the full solution (the
    # mean of a trigonometric polynomial of degree < 32 over 32 equally spaced azimuths is
    # exact), U and V average to zero (sine series)
    azimuths = np.arange(32) * 360.0 / 32
    kwargs = dict(streams=16, sun_zenith=[40.0], surface_albedo=0.1, view_zenith=VIEW,
                  stokes=4, delta_m=False, fourier_tolerance=1e-300, **OFF)
    every = lamina.solve(_hazy_atmosphere(), view_azimuth=azimuths, **kwargs)
    first = lamina.solve(_hazy_atmosphere(), view_azimuth=[0.0, 77.0], max_fourier_terms=1,
                         **kwargs)
    assert int(first.fourier_terms) == 1
    average = every.radiance.mean("view_azimuth")
    scale = float(np.abs(average.sel(stokes="I")).max())
    for azimuth in (0.0, 77.0):
        got = first.radiance.sel(view_azimuth=azimuth)
        np.testing.assert_allclose(got.sel(stokes=["I", "Q"]), average.sel(stokes=["I", "Q"]),
                                   rtol=0, atol=1e-13 * scale)
        assert float(np.abs(got.sel(stokes=["U", "V"])).max()) == 0.0


@pytest.mark.parametrize("views", [True, False])
def test_without_a_beam_one_fourier_term_is_solved(views):
    # an isotropic radiance on the top is azimuth-independent: term 0 is the whole
    # solution; with a beam the Rayleigh matrix's three terms (l <= 2) are summed when
    # radiances are wanted, one for fluxes alone
    atmosphere = lamina.make_atmosphere([0.5], [1.0],
                                        scattering_matrix_moments=[rayleigh_matrix()])
    kwargs = dict(streams=8, stokes=3, **OFF)
    if views:
        kwargs.update(view_zenith=VIEW, view_azimuth=AZIMUTH)
    diffuse = lamina.solve(atmosphere, top_diffuse_radiance=1.0, **kwargs)
    assert int(diffuse.fourier_terms) == 1
    beam = lamina.solve(atmosphere, sun_zenith=30.0, **kwargs)
    assert int(beam.fourier_terms) == (3 if views else 1)


def test_a_thick_layer_seen_at_grazing_views_is_finite_and_matches_the_doubling():
    # t / mu up to 1500 (t = 30, mu down to 0.02): the view integrals of complex-conjugate
    # mode pairs once multiplied an underflowed exp(-t / mu) by an overflowed exp(+t / mu)
    # (a non-finite SolverError below mu of about 0.035); against the adding-doubling at the
    # same quadrature
    matrix = rayleigh_matrix()
    atmosphere = lamina.make_atmosphere([30.0], [0.95], scattering_matrix_moments=matrix)
    grazing = np.degrees(np.arccos([0.02, 0.035, 0.3]))
    out = lamina.solve(atmosphere, streams=8, sun_zenith=30.0, surface_albedo=0.1,
                       view_zenith=grazing, view_azimuth=[0.0, 90.0], stokes=3, **OFF)
    reference = polarized_doubling([(30.0, 0.95, matrix)], 0.1,
                                   np.cos(np.radians(grazing))[:, None],
                                   np.cos(np.radians(30.0)), np.array([0.0, 90.0])[None, :],
                                   quadrature_nodes=4)
    up = out.radiance.sel(level=0, direction="up").values
    scale = np.abs(reference.reflected[..., 0]).max()
    np.testing.assert_allclose(up, reference.reflected[..., :3], rtol=0, atol=1e-9 * scale)


def test_limb_polarization_of_the_milne_problem():
    # Chandrasekhar (1950), Radiative Transfer, section 70 (from memory): light emerging from
    # a conservative semi-infinite Rayleigh atmosphere fed from great depth (the Milne
    # problem) is polarized perpendicular to the meridian plane, 11.713 % at the limb. Deep
    # inside a thick conservative slab the field forgets how it was lit: the diffuse light
    # that a slab of optical thickness 16 lets through from an isotropic, unpolarized sky
    # leaves its bottom (over a black ground) with the Milne problem's angular law. The limb
    # value is the degree of polarization extrapolated linearly to mu = 0 from mu = 1.7e-5
    # and 1.7e-4.
    atmosphere = lamina.make_atmosphere([16.0], [1.0], scattering_matrix_moments=rayleigh_matrix())
    zenith = np.array([89.999, 89.99])
    out = lamina.solve(atmosphere, streams=16, top_diffuse_radiance=1.0, view_zenith=zenith,
                       view_azimuth=[0.0], stokes=3)
    bottom = out.isel(level=-1).sel(direction="down")
    degree = bottom.degree_of_polarization.values.ravel()
    mu = np.cos(np.radians(zenith))
    limb = degree[0] - mu[0] * (degree[1] - degree[0]) / (mu[1] - mu[0])
    assert abs(limb - 0.11713) < 1e-4
    assert np.all(bottom.radiance.sel(stokes="Q").values < 0.0)   # perpendicular
