"""Isotropic scattering against Chandrasekhar's H-functions; the Milne problem.

Semi-infinite isotropic reflection, the plane, spherical and geometric albedos, Hopf's q(t)
and grey limb darkening (Chandrasekhar 1950, ch. V; Hopf 1934; van de Hulst 1980). The
geometric albedo is shared with the Rayleigh case of the same name (``rayleigh=True``).
"""

from __future__ import annotations

import functools
from typing import Any

import numpy as np

import lamina
from lamina.validation import references
from lamina.validation.cases._common import (
    _THICK,
    _THICK_CONSERVATIVE,
    Comparison,
    Curve,
    _composite_gauss,
    _cos,
    _gauss,
    _radiance,
    _thick,
    _zenith,
)

# --------------------------------------------------------------------------------------
# semi-infinite isotropic scattering (Chandrasekhar's H-functions)
# --------------------------------------------------------------------------------------


def _isotropic_semi_infinite(settings: dict[str, Any]) -> Comparison:
    albedos = np.array([0.5, 0.9, 0.99, 1.0])
    view = np.array([0.0, 25.0, 45.0, 60.0, 75.0, 84.0])
    sun = np.array([0.0, 30.0, 60.0, 78.0])
    atm = lamina.make_atmosphere([[_thick(w)] for w in albedos], albedos[:, None],
                                 np.ones((1, 1)), extra_dims=["column"])
    out = lamina.solve(atm, sun_zenith=sun, surface_albedo=0.0, view_zenith=view,
                       view_azimuth=[0.0, 90.0], **settings)
    got = _radiance(out, 0, "up", "column", "sun_zenith", "view_zenith", "view_azimuth")
    mu, mu0 = _cos(view), _cos(sun)
    expected = np.stack([
        references.semi_infinite_isotropic_reflection(mu[None, :], mu0[:, None], w)
        for w in albedos
    ])[..., None] * np.ones(2)
    curves = tuple(
        Curve(f"w = {w:g}, sun 30 deg", view, expected[i, 1, :, 0], got[i, 1, :, 0])
        for i, w in enumerate(albedos)
    )
    return Comparison(expected, got, curves, "view zenith angle (deg)",
                      "reflected radiance / S (sr-1)")


def _isotropic_plane_albedo(settings: dict[str, Any]) -> Comparison:
    albedos = np.array([0.3, 0.8, 0.95, 0.99])
    sun = np.array([0.0, 20.0, 40.0, 60.0, 70.0, 80.0, 85.0])
    atm = lamina.make_atmosphere(np.full((albedos.size, 1), _THICK), albedos[:, None],
                                 np.ones((1, 1)), extra_dims=["column"])
    out = lamina.solve(atm, sun_zenith=sun, surface_albedo=0.0, **settings)
    mu0 = _cos(sun)
    got = out.flux_up.isel(level=0).transpose("column", "sun_zenith").values / mu0
    expected = np.stack([references.plane_albedo(mu0, w) for w in albedos])
    curves = tuple(Curve(f"w = {w:g}", sun, expected[i], got[i])
                   for i, w in enumerate(albedos))
    return Comparison(expected, got, curves, "sun zenith angle (deg)", "plane albedo")


# Sun cosines for the spherical albedo: composite Gauss, panels graded toward mu0 = 0 where
# the plane albedo varies like mu0 log mu0. With the exact plane albedo these 3 x 12 nodes
# reproduce 1 - 2 alpha_1 sqrt(1 - w) to better than 1e-8.
_SPHERICAL_EDGES = (0.0, 0.02, 0.2, 1.0)
_SPHERICAL_NODES = 12


def _isotropic_spherical_albedo(settings: dict[str, Any]) -> Comparison:
    albedos = np.array([0.5, 0.9, 0.99])
    mu0, weight = _composite_gauss(_SPHERICAL_EDGES, _SPHERICAL_NODES)
    atm = lamina.make_atmosphere(np.full((albedos.size, 1), _THICK), albedos[:, None],
                                 np.ones((1, 1)), extra_dims=["column"])
    out = lamina.solve(atm, sun_zenith=_zenith(mu0), surface_albedo=0.0, **settings)
    plane = out.flux_up.isel(level=0).transpose("column", "sun_zenith").values / mu0
    # spherical albedo = 2 int_0^1 A(mu0) mu0 dmu0 (van de Hulst 1980, definition)
    got = 2.0 * plane @ (weight * mu0)
    expected = np.array([references.spherical_albedo(w) for w in albedos])
    curves = tuple(Curve(f"plane albedo, w = {w:g}", mu0, references.plane_albedo(mu0, w),
                         plane[i]) for i, w in enumerate(albedos))
    return Comparison(expected, got, curves, "cosine of sun zenith angle", "plane albedo",
                      curves_compared=False)


_GEOMETRIC_NODES = 40


def _geometric_albedo_integral(reflection: np.ndarray, mu: np.ndarray, weight: np.ndarray
                               ) -> float:
    """p = 2 int_0^1 R(mu, mu, backscatter) mu^2 dmu with R = pi I / (S mu0), mu0 = mu.

    The geometric albedo of a sphere covered by a plane-parallel medium (van de Hulst
    1980: the disk integral at zero phase angle).
    """
    return float(2.0 * np.sum(weight * np.pi * reflection * mu))


def _geometric_albedo(settings: dict[str, Any], rayleigh: bool) -> Comparison:
    mu, weight = _gauss(_GEOMETRIC_NODES)
    moments = references.rayleigh_phase_moments() if rayleigh else np.ones(1)
    atm = lamina.make_atmosphere([_THICK_CONSERVATIVE], [1.0], moments)
    zenith = _zenith(mu)
    out = lamina.solve(atm, sun_zenith=zenith, surface_albedo=0.0, view_zenith=zenith,
                       view_azimuth=[180.0], **settings)
    field_ = _radiance(out, 0, "up", "sun_zenith", "view_zenith", "view_azimuth")[..., 0]
    got = np.diagonal(field_).copy()   # view = sun: backscattering (zero phase angle)
    if rayleigh:
        expected_curve = references.rayleigh_semi_infinite_reflection(mu, mu, 180.0)
    else:
        expected_curve = references.semi_infinite_isotropic_reflection(mu, mu, 1.0)
    p_lamina = _geometric_albedo_integral(got, mu, weight)
    if rayleigh:
        # scalar-exact: the same integral over Ambartsumian's reflection function
        p_reference = _geometric_albedo_integral(expected_curve, mu, weight)
    else:
        p_reference = 0.6897    # van de Hulst 1980 (from memory)
    curves = (Curve("backscattered radiance, view = sun", zenith, expected_curve, got),)
    return Comparison(np.array([p_reference]), np.array([p_lamina]), curves,
                      "sun (= view) zenith angle (deg)", "reflected radiance / S (sr-1)",
                      curves_compared=False)


# --------------------------------------------------------------------------------------
# the Milne problem and grey limb darkening
# --------------------------------------------------------------------------------------

_MILNE_THICKNESS = 400.0
_MILNE_DEPTHS = np.array([0.0, 0.1, 0.25, 0.5, 1.0, 1.5, 2.0, 3.0, 5.0, 8.0, 12.0, 20.0, 30.0,
                          40.0])
_MILNE_DEEP = _MILNE_DEPTHS >= 20.0
_LIMB_VIEW = np.array([0.0, 15.0, 30.0, 45.0, 60.0, 70.0, 80.0, 85.0, 88.0, 90.0])
_HOPF_CONSTANT = 0.710446   # Hopf 1934; Chandrasekhar 1950 (from memory)


@functools.lru_cache(maxsize=8)
def _milne(streams: int, frozen_settings: tuple[tuple[str, Any], ...]) -> tuple[Any, ...]:
    """A thick conservative isotropic slab lit from below by a black surface emitting B,
    cold above: far from the bottom this is the Milne problem (Chandrasekhar 1950).
    Returns the net upward flux, the depths, the mean intensities and the top radiances."""
    settings = dict(frozen_settings)
    settings["streams"] = streams
    atm = lamina.make_atmosphere([_MILNE_THICKNESS], [1.0], np.ones((1, 1)),
                                 temperature=[0.0, 0.0])
    out = lamina.solve(atm, sun_irradiance=0.0, surface_albedo=0.0, surface_temperature=300.0,
                       wavenumber_band=(400.0, 700.0), view_zenith=_LIMB_VIEW,
                       view_azimuth=[0.0], output_levels=_MILNE_DEPTHS / _MILNE_THICKNESS,
                       **settings)
    flux = float(-out.flux_net.isel(level=0))
    radiance = out.radiance.sel(level=0.0, direction="up").isel(view_azimuth=0).values
    return (flux, out.cumulative_optical_depth.values, out.mean_intensity.values, radiance)


def _milne_run(settings: dict[str, Any]) -> tuple[Any, ...]:
    rest = tuple(sorted((k, v) for k, v in settings.items() if k != "streams"))
    return _milne(int(settings["streams"]), rest)


def _milne_hopf(settings: dict[str, Any]) -> Comparison:
    flux, depth, mean_intensity, _ = _milne_run(settings)
    # J(t) = (3 F / 4 pi) (t + q(t)) (Chandrasekhar 1950), F the net flux
    q = mean_intensity * 4.0 * np.pi / (3.0 * flux) - depth
    # q(0) = 1 / sqrt(3) exactly (J(0) = sqrt(3) F / (4 pi), Chandrasekhar 1950);
    # q(t) -> q(inf) = 0.710446 deep inside (Hopf 1934)
    compared = np.concatenate(([0], np.flatnonzero(_MILNE_DEEP)))
    expected = np.where(depth[compared] == 0.0, 1.0 / np.sqrt(3.0), _HOPF_CONSTANT)
    reference_curve = np.where(depth == 0.0, 1.0 / np.sqrt(3.0), np.nan)
    reference_curve[_MILNE_DEEP] = _HOPF_CONSTANT
    curves = (Curve("Hopf function q(t)", depth, reference_curve, q),)
    return Comparison(expected, q[compared], curves, "optical depth t", "q(t)")


def _limb_darkening_law(settings: dict[str, Any]) -> Comparison:
    _, _, _, radiance = _milne_run(settings)
    mu = np.maximum(_cos(_LIMB_VIEW), 0.0)
    h = references.chandrasekhar_h(mu, 1.0)
    expected = h / h[0]
    got = radiance / radiance[0]
    curves = (Curve("I(0, mu) / I(0, 1)", mu, expected, got),)
    return Comparison(expected, got, curves, "cosine of view zenith angle mu",
                      "I(0, mu) / I(0, 1)")


def _limb_darkening_ratio(settings: dict[str, Any]) -> Comparison:
    _, _, _, radiance = _milne_run(settings)
    mu = np.maximum(_cos(_LIMB_VIEW), 0.0)
    h = references.chandrasekhar_h(mu, 1.0)
    curves = (Curve("I(0, mu) / I(0, 1)", mu, h / h[0], radiance / radiance[0]),)
    # 1 / H(1) = 0.3439 (Chandrasekhar 1950, grey limb darkening; from memory)
    return Comparison(np.array([0.3439]), np.array([radiance[-1] / radiance[0]]), curves,
                      "cosine of view zenith angle mu", "I(0, mu) / I(0, 1)",
                      curves_compared=False)
