"""Extreme but valid inputs: one test each, finite and physical, exact where possible.

Every test asserts that the outputs are finite and physical (non-negative within
ACCURACY of the incident energy, reflection bounded by the incident flux) and, where an
exact statement exists, asserts it with its source named beside it.
"""

from __future__ import annotations

import numpy as np
import pytest

import lamina
from lamina.quadrature import double_gauss
from lamina.validation import references

#: Absolute accuracy asked of every output as a fraction of the incident energy: the
#: kernel documents conservation to 1e-9 of the incident flux (see tests/test_properties.py).
ACCURACY = 1e-9
DIFFUSE = ("flux_up", "flux_down_diffuse", "mean_intensity")


def hg(g: float, n: int = 64) -> np.ndarray:
    return lamina.phase.henyey_greenstein(g, n)


def assert_physical(out, incident: float, *, bounded: bool = True) -> None:
    """Finite; non-negative within ACCURACY x incident; reflection <= incident (stellar)."""
    margin = ACCURACY * incident
    for name in ("flux_up", "flux_down_diffuse", "flux_down_direct", "flux_down",
                 "mean_intensity", "actinic_flux", "radiance"):
        if name not in out:
            continue
        values = out[name].values
        assert np.all(np.isfinite(values)), f"{name} is not finite"
        assert values.min() >= -margin, f"{name} goes negative: {values.min():.3e}"
    if "flux_divergence" in out:
        assert np.all(np.isfinite(out.flux_divergence.values))
    if bounded:
        assert float(out.flux_up.isel(level=0).max()) <= incident + margin


def stellar_balance(out, surface_albedo: float) -> np.ndarray:
    """Reflected + absorbed by the layers + absorbed by the surface (= incident, exact)."""
    return (out.flux_up.isel(level=0) + out.flux_divergence.sum("layer")
            + (1 - surface_albedo) * out.flux_down.isel(level=-1)).values


# ------------------------------------------------------------------ optical thickness


@pytest.mark.parametrize("albedo", [0.0, 0.6, 1.0])
def test_optical_thickness_zero_gives_only_the_surface_reflection(albedo):
    # No matter in the way (exact): the direct beam reaches the Lambertian surface, which
    # sends up A mu0 S isotropically (radiance A mu0 S / pi); nothing comes down diffusely;
    # J = S / (4 pi) from the beam plus half the isotropic upward radiance.
    sun, surface, irradiance = 35.0, 0.4, 2.0
    atm = lamina.make_atmosphere([0.0, 0.0], [albedo, albedo], np.stack([hg(0.8), hg(-0.3)]))
    out = lamina.solve(atm, streams=16, sun_zenith=sun, sun_irradiance=irradiance,
                       surface_albedo=surface, view_zenith=[0.0, 35.0, 70.0],
                       view_azimuth=[0.0, 180.0])
    mu0 = np.cos(np.radians(sun))
    incident = irradiance * mu0
    assert_physical(out, incident)
    atol = ACCURACY * incident
    up = surface * incident
    assert np.allclose(out.flux_up, up, rtol=0, atol=atol)
    assert np.allclose(out.flux_down_diffuse, 0.0, rtol=0, atol=atol)
    assert np.allclose(out.flux_down_direct, incident, rtol=1e-15, atol=0)
    assert np.allclose(out.radiance.sel(direction="up"), up / np.pi, rtol=0, atol=atol)
    assert np.allclose(out.radiance.sel(direction="down"), 0.0, rtol=0, atol=atol)
    expected_j = irradiance / (4 * np.pi) + up / (2 * np.pi)
    assert np.allclose(out.mean_intensity, expected_j, rtol=0, atol=atol)


def test_optical_thickness_1e_10_is_single_scattering():
    # Single scattering in an optically thin isotropic layer over a black surface, to first
    # order in t (Thomas and Stamnes 1999; any textbook): I = w S / (4 pi) t / mu both up at
    # the top and down at the bottom; the diffuse fluxes are w S t / 2 each (2 pi times the
    # integral of mu I over a hemisphere). The O(t) corrections are 1e-10 relative.
    t, w, sun = 1e-10, 0.8, 50.0
    atm = lamina.make_atmosphere([t], [w], np.ones((1, 1)))
    view = np.array([0.0, 30.0, 60.0, 80.0])
    out = lamina.solve(atm, streams=16, sun_zenith=sun, surface_albedo=0.0,
                       view_zenith=view, view_azimuth=[0.0, 90.0])
    mu0 = np.cos(np.radians(sun))
    assert_physical(out, mu0)
    mu = np.cos(np.radians(view))[:, None]
    thin = w / (4 * np.pi) * t / mu * np.ones((1, 2))
    # the radiances are 1e-11 of the beam; 1e-6 relative is 1e-17 absolute
    assert np.allclose(out.radiance.sel(level=0, direction="up"), thin, rtol=1e-6, atol=0)
    assert np.allclose(out.radiance.sel(level=1, direction="down"), thin, rtol=1e-6, atol=0)
    assert float(out.flux_up[0]) == pytest.approx(w * t / 2, rel=1e-6)
    assert float(out.flux_down_diffuse[1]) == pytest.approx(w * t / 2, rel=1e-6)
    assert float(out.flux_down_direct[1]) == pytest.approx(mu0 * np.exp(-t / mu0), rel=1e-15)


def test_optical_thickness_1e5_is_semi_infinite():
    # An absorbing layer of optical thickness 1e5 is semi-infinite: its plane albedo is
    # 1 - H(mu0) sqrt(1 - w) (Chandrasekhar 1950, ch. V; H from lamina.validation, which
    # shares no code with the solver) and nothing reaches the bottom. A conservative one
    # conserves energy: reflected + transmitted = S mu0 (exact), up to the kernel's albedo
    # cap 1 - 1e-12, which absorbs about 1e-12 times the thickness (its docstring).
    sun = np.array([0.0, 40.0, 75.0])
    mu0 = np.cos(np.radians(sun))
    absorbing = lamina.make_atmosphere([1e5], [0.9], np.ones((1, 1)))
    out = lamina.solve(absorbing, streams=32, sun_zenith=sun, surface_albedo=0.5,
                       view_zenith=[0.0, 60.0], view_azimuth=[0.0])
    assert_physical(out, 1.0)
    albedo = out.flux_up.isel(level=0).values / mu0
    assert np.allclose(albedo, references.plane_albedo(mu0, 0.9), rtol=1e-5)
    assert float(out.flux_down.isel(level=-1).max()) < 1e-30
    conservative = lamina.make_atmosphere([1e5], [1.0], hg(0.7)[None])
    out = lamina.solve(conservative, streams=32, sun_zenith=sun, surface_albedo=0.0)
    assert_physical(out, 1.0)
    balance = (out.flux_up.isel(level=0) + out.flux_down.isel(level=-1)).values / mu0
    assert np.allclose(balance, 1.0, rtol=0, atol=1e-12 * 1e5 * 10)
    transmitted = out.flux_down.isel(level=-1).values
    # a conservative slab transmits about 4 / (3 (1 - g) t) of the flux (diffusion
    # theory, common practice): positive, and small
    assert np.all(transmitted > 0) and np.all(transmitted < 1e-3)


# ------------------------------------------------------------------ single-scattering albedo


def test_albedo_zero_gives_no_diffuse_light_without_a_surface():
    # Nothing scatters and the surface is black (exact): no diffuse light anywhere; the
    # mean intensity is the beam's, S exp(-t / mu0) / (4 pi).
    sun = 25.0
    atm = lamina.make_atmosphere([0.3, 2.0, 0.01], [0.0, 0.0, 0.0],
                                 np.stack([hg(0.9), lamina.phase.rayleigh(0.03, 64), hg(-0.5)]))
    out = lamina.solve(atm, streams=16, sun_zenith=sun, surface_albedo=0.0,
                       view_zenith=[0.0, 25.0, 89.0], view_azimuth=[0.0, 180.0])
    mu0 = np.cos(np.radians(sun))
    assert_physical(out, mu0)
    for name in ("flux_up", "flux_down_diffuse", "radiance"):
        assert np.abs(out[name].values).max() <= 1e-15, name
    beam = np.exp(-out.cumulative_optical_depth.values / mu0)
    assert np.allclose(out.mean_intensity, beam / (4 * np.pi), rtol=1e-14, atol=0)


def test_albedo_1e_12_is_first_order_single_scattering():
    # For w -> 0 the field is single scattering, linear in w with O(w^2) corrections
    # (1e-12 relative here). Isotropic layer over a black surface (textbook, e.g. Thomas
    # and Stamnes 1999): I_up(0) = w S / (4 pi) mu0 / (mu + mu0) (1 - exp(-t (1/mu + 1/mu0))).
    w, t, sun = 1e-12, 1.5, 30.0
    atm = lamina.make_atmosphere([t], [w], np.ones((1, 1)))
    view = np.array([0.0, 45.0, 75.0])
    out = lamina.solve(atm, streams=16, sun_zenith=sun, surface_albedo=0.0,
                       view_zenith=view, view_azimuth=[0.0])
    mu0 = np.cos(np.radians(sun))
    assert_physical(out, mu0)
    mu = np.cos(np.radians(view))
    expected = w / (4 * np.pi) * mu0 / (mu + mu0) * -np.expm1(-t * (1 / mu + 1 / mu0))
    assert np.allclose(out.radiance.sel(level=0, direction="up").values[:, 0], expected,
                       rtol=1e-8, atol=0)
    assert 0 < float(out.flux_up[0]) < 1e-11


def test_albedo_one_minus_1e_12_matches_conservative_scattering():
    # Continuity in w (exact: the solution is analytic in w up to 1): w = 1 - 1e-12 and
    # w = 1 agree, conserve energy, and absorb nothing measurable in any layer.
    moments = np.stack([hg(0.85), lamina.phase.rayleigh(0.0, 64)])
    options = dict(streams=16, sun_zenith=60.0, surface_albedo=0.0,
                   view_zenith=[0.0, 70.0], view_azimuth=[0.0, 180.0])
    near = lamina.solve(lamina.make_atmosphere([3.0, 0.5], [1 - 1e-12] * 2, moments),
                        **options)
    exact = lamina.solve(lamina.make_atmosphere([3.0, 0.5], [1.0, 1.0], moments), **options)
    mu0 = 0.5
    assert_physical(near, mu0)
    for name in (*DIFFUSE, "radiance"):
        assert np.allclose(near[name], exact[name], rtol=0, atol=ACCURACY * mu0), name
    assert float(stellar_balance(near, 0.0)) == pytest.approx(mu0, abs=ACCURACY * mu0)
    assert np.abs(near.flux_divergence.values).max() <= ACCURACY * mu0


def test_albedo_one_conserves_and_a_white_surface_returns_everything():
    # w = 1 everywhere over a white surface (exact): every photon leaves through the top,
    # flux_up(0) = S mu0, and the net flux vanishes at every level.
    # 128 moments: g = 0.9 cut at 64 has a negative series (lamina warns)
    moments = np.stack([hg(0.9, 128), lamina.phase.rayleigh(0.0, 128), hg(0.2, 128)])
    atm = lamina.make_atmosphere([0.2, 4.0, 1.0], [1.0, 1.0, 1.0], moments)
    out = lamina.solve(atm, streams=16, sun_zenith=[0.0, 70.0], surface_albedo=1.0,
                       view_zenith=[0.0, 70.0], view_azimuth=[0.0, 180.0])
    mu0 = np.cos(np.radians(out.sun_zenith.values))
    assert_physical(out, 1.0)
    assert np.allclose(out.flux_up.isel(level=0).values, mu0, rtol=0, atol=ACCURACY)
    assert np.abs(out.flux_net.values).max() <= ACCURACY


@pytest.mark.parametrize("thickness", [2e-6, 1e-3, 1.0])
def test_albedo_one_emits_nothing(thickness):
    # Kirchhoff's law: a layer that does not absorb (w = 1) does not emit, whatever its
    # temperatures. Over a black surface at 0 K, with no beam and no sky, every output
    # vanishes (to the kernel's albedo cap 1 - 1e-12: emission < 1e-12 pi B).
    band = (0.0, 3000.0)
    planck = float(lamina.planck.band_radiance(300.0, *band))
    atm = lamina.make_atmosphere([thickness], [1.0], hg(0.0, 16)[None],
                                 temperature=[0.0, 300.0])
    out = lamina.solve(atm, streams=8, sun_irradiance=0.0, surface_albedo=0.0,
                       surface_temperature=0.0, wavenumber_band=band,
                       view_zenith=[0.0, 60.0], view_azimuth=[0.0])
    assert_physical(out, np.pi * planck, bounded=False)
    for name in (*DIFFUSE, "radiance"):
        worst = np.abs(out[name].values).max() / planck
        assert worst <= ACCURACY, f"{name} is {worst:.2e} B at thickness {thickness:g}"


# ------------------------------------------------------------------ angles


def _neighbour_check(values: np.ndarray, axis: int, rtol: float) -> None:
    """Entries 1::3 along ``axis`` equal the mean of their +-delta neighbours."""
    before = np.take(values, np.arange(0, values.shape[axis], 3), axis=axis)
    middle = np.take(values, np.arange(1, values.shape[axis], 3), axis=axis)
    after = np.take(values, np.arange(2, values.shape[axis], 3), axis=axis)
    mean = 0.5 * (before + after)
    scale = np.abs(values).max()
    assert np.allclose(middle, mean, rtol=rtol, atol=1e-12 * scale)


def test_sun_and_view_on_every_quadrature_angle_and_on_each_other():
    # With w -> 0 a layer's eigenvalues sit at 1 / mu_i, so a sun (or view) exactly on a
    # quadrature cosine hits the removable singularities of the particular solution and of
    # the angular integrals; the sun on the view angle does the same for the beam's own
    # term. Each must give the limit of its +-1e-6 degree neighbours (continuity).
    streams = 8
    mu, _ = double_gauss(streams)
    quadrature = np.degrees(np.arccos(mu))
    delta = 1e-6
    angles = (quadrature[:, None] + np.array([-delta, 0.0, delta])).ravel()
    atm = lamina.make_atmosphere([0.6, 0.4, 1.0], [0.0, 1e-6, 0.7],
                                 np.stack([hg(0.5), hg(0.3), hg(0.6)]))
    out = lamina.solve(atm, streams=streams, sun_zenith=angles, surface_albedo=0.2,
                       view_zenith=angles, view_azimuth=[0.0, 180.0])
    assert_physical(out, 1.0)
    radiance = out.radiance.transpose("sun_zenith", "view_zenith", ...).values
    _neighbour_check(radiance, axis=0, rtol=1e-6)   # the sun across each quadrature angle
    _neighbour_check(radiance, axis=1, rtol=1e-6)   # the view across each, sun on each
    for name in ("flux_up", "flux_down_diffuse", "mean_intensity"):
        _neighbour_check(out[name].transpose("sun_zenith", ...).values, axis=0, rtol=1e-6)


def test_view_zenith_zero_and_ninety():
    # View zenith 0 is one direction whatever the azimuth (exact). At 90 degrees the
    # radiance is the local source function at mu = 0, which is the same for the up and
    # down directions strictly inside a layer (P_l^m(0) vanishes for odd l + m, so the
    # phase function cannot tell +0 from -0; exact; at a layer boundary the two come from
    # different layers and differ), is the limit of nearby angles, and at the
    # top of a non-scattering slab is the Planck radiance of the top level (the path
    # integral of B over a grazing ray is B(t = 0); exact).
    atm = lamina.make_atmosphere([0.5, 1.0], [0.8, 0.95], np.stack([hg(0.7), hg(0.2)]))
    azimuth = [0.0, 45.0, 180.0]
    out = lamina.solve(atm, streams=16, sun_zenith=30.0, surface_albedo=0.3,
                       view_zenith=[0.0, 90.0 - 1e-6, 90.0], view_azimuth=azimuth,
                       output_levels=[0.0, 0.5, 1.0, 1.7, 2.0])
    assert_physical(out, 1.0)
    nadir = out.radiance.sel(view_zenith=0.0).values
    assert np.allclose(nadir, nadir[..., :1], rtol=1e-12, atol=0)
    grazing = out.radiance.sel(view_zenith=90.0)
    near = out.radiance.sel(view_zenith=90.0 - 1e-6)
    assert np.allclose(grazing, near, rtol=1e-5, atol=1e-12)
    inside = grazing.sel(level=[0.5, 1.7])
    assert np.allclose(inside.sel(direction="up"), inside.sel(direction="down"), rtol=1e-6)
    assert np.allclose(grazing.sel(level=0.0, direction="down"), 0.0, atol=1e-15)
    # thermal: grazing emission from the top of a non-scattering slab is B(T_top)
    band = (600.0, 700.0)
    slab = lamina.make_atmosphere([0.3, 2.0], [0.0, 0.0], np.ones((2, 1)),
                                  temperature=[220.0, 250.0, 290.0])
    out = lamina.solve(slab, streams=8, sun_irradiance=0.0, surface_albedo=0.0,
                       wavenumber_band=band, view_zenith=[0.0, 90.0], view_azimuth=[0.0])
    planck_top = float(lamina.planck.band_radiance(220.0, *band))
    assert_physical(out, np.pi * float(lamina.planck.band_radiance(290.0, *band)),
                    bounded=False)
    up = out.radiance.sel(level=0, direction="up", view_azimuth=0.0)
    assert float(up.sel(view_zenith=90.0)) == pytest.approx(planck_top, rel=1e-6)


# ------------------------------------------------------------------ phase functions


@pytest.mark.parametrize("g", [0.999, -0.999])
def test_nearly_delta_phase_functions_with_delta_m(g):
    # |g| -> 1 with delta-M (Wiscombe 1977): a conservative layer over a black surface
    # still conserves energy (exact) and every output stays non-negative. The moments run
    # far enough (g**l < 1e-13) that the supplied phase function itself is positive.
    moments = hg(g, 30000)
    atm = lamina.make_atmosphere([1.0, 0.5], [1.0, 0.9], np.stack([moments, hg(0.5, moments.size)]))
    sun = 30.0
    out = lamina.solve(atm, streams=16, sun_zenith=sun, surface_albedo=0.0,
                       view_zenith=[0.0, 45.0, 80.0], view_azimuth=[0.0, 90.0, 180.0])
    mu0 = np.cos(np.radians(sun))
    assert_physical(out, mu0)
    conservative = lamina.solve(lamina.make_atmosphere([1.0], [1.0], moments[None]),
                                streams=16, sun_zenith=sun, surface_albedo=0.0)
    assert float(stellar_balance(conservative, 0.0)) == pytest.approx(mu0, abs=ACCURACY)
    assert float(conservative.flux_divergence.sum()) == pytest.approx(0.0, abs=ACCURACY)


# ------------------------------------------------------------------ streams


@pytest.mark.parametrize("streams", [2, 256])
def test_fewest_and_many_streams(streams):
    # Exact at any number of streams: conservation (w = 1, black surface: reflected +
    # transmitted = S mu0) and Kirchhoff's isothermal enclosure (I = B everywhere). With
    # 256 streams the plane albedo of a semi-infinite isotropic medium must also match
    # 1 - H(mu0) sqrt(1 - w) (Chandrasekhar 1950) closely: the discrete-ordinates error
    # falls fast with the number of streams (test_solve checks 1e-5 at 32).
    sun = 50.0
    mu0 = np.cos(np.radians(sun))
    atm = lamina.make_atmosphere([0.4, 3.0], [1.0, 1.0], np.stack([hg(0.6), hg(0.1)]))
    out = lamina.solve(atm, streams=streams, sun_zenith=sun, surface_albedo=0.0,
                       view_zenith=[0.0, 60.0], view_azimuth=[0.0, 180.0],
                       max_fourier_terms=4)
    assert_physical(out, mu0)
    assert float(stellar_balance(out, 0.0)) == pytest.approx(mu0, abs=ACCURACY)
    band = (900.0, 1000.0)
    planck = float(lamina.planck.band_radiance(260.0, *band))
    warm = lamina.make_atmosphere([0.4, 3.0], [0.5, 0.9], np.stack([hg(0.6), hg(0.1)]),
                                  temperature=[260.0] * 3)
    out = lamina.solve(warm, streams=streams, sun_irradiance=0.0, surface_albedo=0.3,
                       wavenumber_band=band, top_diffuse_radiance=planck,
                       view_zenith=[0.0, 60.0], view_azimuth=[0.0])
    assert np.allclose(out.radiance, planck, rtol=1e-9, atol=0)
    assert np.allclose(out.flux_up, np.pi * planck, rtol=1e-9, atol=0)
    if streams == 256:
        thick = lamina.make_atmosphere([1e3], [0.9], np.ones((1, 1)))
        out = lamina.solve(thick, streams=streams, sun_zenith=sun, surface_albedo=0.0)
        albedo = float(out.flux_up[0]) / mu0
        assert albedo == pytest.approx(float(references.plane_albedo(mu0, 0.9)), rel=1e-7)


# ------------------------------------------------------------------ extreme values elsewhere


def test_tiny_temperature_emits_nothing_quietly():
    # B(T) -> 0 as T -> 0 (Planck). A temperature of 1e-310 K (valid: finite and >= 0; any
    # T below about c2 nu / 1.8e308, ~1e-305 K, makes c2 nu / T overflow) gives zero
    # radiance without a floating-point warning (the project treats warnings as errors),
    # alone and inside a thermal run
    assert float(lamina.planck.band_radiance(1e-310, 100.0, 200.0)) == 0.0
    atm = lamina.make_atmosphere([1.0], [0.5], hg(0.3)[None], temperature=[1e-310, 250.0])
    out = lamina.solve(atm, streams=8, sun_irradiance=0.0, wavenumber_band=(100.0, 200.0))
    assert_physical(out, np.pi * float(lamina.planck.band_radiance(250.0, 100.0, 200.0)),
                    bounded=False)


def test_lazy_atmosphere_without_view_angles():
    # the fast path (fluxes only) on a dask-backed atmosphere equals the eager result
    rng = np.random.default_rng(11)
    atm = lamina.make_atmosphere(rng.uniform(0.1, 2.0, (4, 3)), rng.uniform(0.3, 1.0, (4, 3)),
                                 hg(0.6), extra_dims=["wavelength"])
    eager = lamina.solve(atm, streams=8)
    lazy = lamina.solve(atm.chunk({"wavelength": 2}), streams=8)
    assert lazy.flux_up.chunks is not None
    for name in ("flux_up", "flux_down", "mean_intensity"):
        assert np.array_equal(lazy[name].values, eager[name].values), name


@pytest.mark.parametrize("top_radiance", [0.0, 0.3, 2.5, 1e-9])
@pytest.mark.parametrize("streams", [4, 16])
def test_the_top_boundary_is_exact(top_radiance, streams):
    # the boundary condition at the top (exact by definition): the downward diffuse radiance
    # entering is the sky's isotropic radiance R, so the downward diffuse flux there is
    # exactly pi R (0 under a black sky), in conservative slabs where the boundary-value
    # problem meets it only to round-off
    moments = np.stack([hg(0.8, 128), lamina.phase.rayleigh(0.0, 128)])
    for thickness in ([1.0, 30.0], [0.01, 0.02], [200.0, 5.0]):
        atm = lamina.make_atmosphere(thickness, [1.0, 1.0], moments)
        out = lamina.solve(atm, streams=streams, sun_zenith=[0.0, 60.0, 85.0],
                           top_diffuse_radiance=top_radiance, view_zenith=[0.0, 45.0],
                           view_azimuth=[0.0, 180.0])
        top = out.isel(level=0)
        assert np.all(top.flux_down_diffuse.values == np.pi * top_radiance)
        assert np.all(top.radiance.sel(direction="down").values == top_radiance)


def test_no_flux_is_negative_beyond_round_off():
    # every flux is a sum of non-negative radiances (exact): negative values may come only
    # from round-off, below 1e-12 of the incident flux
    moments = np.stack([hg(0.85, 128), hg(0.0, 128), lamina.phase.rayleigh(0.03, 128)])
    for albedo in ([1.0, 1.0, 1.0], [0.999, 0.5, 1.0]):
        atm = lamina.make_atmosphere([0.3, 12.0, 1e-6], albedo, moments)
        for surface in (0.0, 0.7):
            out = lamina.solve(atm, streams=16, sun_zenith=[0.0, 70.0, 89.0],
                               surface_albedo=surface, output_levels=[0, 0.5, 1, 1.01, 2, 3])
            incident = np.cos(np.radians(out.sun_zenith))
            for name in ("flux_up", "flux_down_diffuse", "flux_down_direct",
                         "mean_intensity"):
                assert float((out[name] / incident).min()) >= -1e-12, name
