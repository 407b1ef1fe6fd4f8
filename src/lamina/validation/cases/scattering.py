"""Phase functions, single scattering, the Lambertian surface, conservation and reciprocity.

Legendre moments against projections of the closed forms (Henyey and Greenstein 1941;
Hansen and Travis 1974), thin layers against the single-scattering law (Thomas and Stamnes
1999), an absorbing layer over a Lambertian surface, energy conservation of conservative
stacks and the reciprocity principle (Chandrasekhar 1950).
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np
from scipy.special import expn

import lamina
from lamina.validation.cases._common import (
    Comparison,
    Curve,
    _composite_gauss,
    _cos,
    _henyey_greenstein_function,
    _radiance,
    _rayleigh_function,
    _scattering_cosine,
    _single_scattering,
)

# --------------------------------------------------------------------------------------
# phase functions
# --------------------------------------------------------------------------------------


def _legendre_projection(function: Callable[[np.ndarray], np.ndarray], count: int,
                         nodes: int = 16) -> np.ndarray:
    """chi_l = (1/2) int_-1^1 P(x) P_l(x) dx by Gauss-Legendre (numpy)."""
    x, w = np.polynomial.legendre.leggauss(nodes)
    table = np.polynomial.legendre.legvander(x, count - 1)
    return 0.5 * (w * function(x)) @ table


def _rayleigh_moments(settings: dict[str, Any]) -> Comparison:
    depolarizations = (0.0, 0.0279, 0.1)
    count = 6
    got = np.stack([lamina.phase.rayleigh(rho, count) for rho in depolarizations])
    # projection of the phase function: 16 Gauss nodes integrate the quadratic times
    # P_l (degree <= 7) exactly
    expected = np.stack([_legendre_projection(lambda x, rho=rho: _rayleigh_function(rho, x),
                                              count) for rho in depolarizations])
    order = np.arange(count)
    curves = tuple(Curve(f"rho = {rho:g}", order, expected[i], got[i])
                   for i, rho in enumerate(depolarizations))
    return Comparison(expected, got, curves, "Legendre degree l", "chi_l")


def _henyey_greenstein_moments(settings: dict[str, Any]) -> Comparison:
    asymmetries = (-0.5, 0.3, 0.85)
    count = 40

    def projection(g: float) -> np.ndarray:
        # the HG function has poles at cos T = (1 + g^2) / (2 g), just beyond +1 (or -1)
        # for |g| near 1: composite Gauss-Legendre on panels graded toward that end
        edges = 1.0 - np.concatenate(([2.0], np.geomspace(1.0, 1e-4, 9), [0.0]))
        x, w = _composite_gauss(tuple(edges), 40)
        if g < 0:
            x = -x
        table = np.polynomial.legendre.legvander(x, count - 1)
        return 0.5 * (w * _henyey_greenstein_function(g, x)) @ table

    expected = np.stack([projection(g) for g in asymmetries])
    got = np.stack([lamina.phase.henyey_greenstein(g, count) for g in asymmetries])
    order = np.arange(count)
    curves = tuple(Curve(f"g = {g:g}", order, expected[i], got[i])
                   for i, g in enumerate(asymmetries))
    return Comparison(expected, got, curves, "Legendre degree l", "chi_l")


# --------------------------------------------------------------------------------------
# single scattering, the surface, conservation and reciprocity
# --------------------------------------------------------------------------------------

_SS_VIEW = np.array([10.0, 35.0, 60.0, 80.0])
_SS_AZIMUTH = np.array([0.0, 30.0, 60.0, 90.0, 120.0, 150.0, 180.0])
_SS_SUN = 40.0
_SS_TAU = 1e-7


def _single_scattering_case(settings: dict[str, Any], moments: np.ndarray, albedo: float,
                            phase: Callable[[np.ndarray], np.ndarray]) -> Comparison:
    atm = lamina.make_atmosphere([_SS_TAU], [albedo], moments[None])
    out = lamina.solve(atm, sun_zenith=_SS_SUN, surface_albedo=0.0, view_zenith=_SS_VIEW,
                       view_azimuth=_SS_AZIMUTH, **settings)
    mu = _cos(_SS_VIEW)[:, None]
    mu0 = float(_cos([_SS_SUN])[0])
    azimuth = _SS_AZIMUTH[None, :]
    up = _single_scattering(phase(_scattering_cosine(mu, mu0, azimuth, True)), albedo,
                            _SS_TAU, mu, mu0, True)
    down = _single_scattering(phase(_scattering_cosine(mu, mu0, azimuth, False)), albedo,
                              _SS_TAU, mu, mu0, False)
    got_up = _radiance(out, 0, "up", "view_zenith", "view_azimuth")
    got_down = _radiance(out, 1, "down", "view_zenith", "view_azimuth")
    curves = (
        Curve("reflected, view 35 deg", _SS_AZIMUTH, up[1], got_up[1]),
        Curve("transmitted, view 35 deg", _SS_AZIMUTH, down[1], got_down[1]),
        Curve("reflected, view 80 deg", _SS_AZIMUTH, up[3], got_up[3]),
    )
    return Comparison(np.concatenate([up.ravel(), down.ravel()]),
                      np.concatenate([got_up.ravel(), got_down.ravel()]), curves,
                      "view azimuth (deg; 0 = forward side)", "radiance / S (sr-1)")


def _single_scattering_hg(settings: dict[str, Any]) -> Comparison:
    g = 0.6
    return _single_scattering_case(
        settings, lamina.phase.henyey_greenstein(g, 72), 0.8,
        lambda cosine: _henyey_greenstein_function(g, cosine))


def _single_scattering_rayleigh(settings: dict[str, Any]) -> Comparison:
    return _single_scattering_case(settings, lamina.phase.rayleigh(0.0), 1.0,
                                   lambda cosine: _rayleigh_function(0.0, cosine))


def _lambertian_surface(settings: dict[str, Any]) -> Comparison:
    # A purely absorbing layer over a Lambertian surface: the beam reaches the surface as
    # S mu0 exp(-t/mu0), is reflected isotropically with radiance A S mu0 exp(-t/mu0) / pi
    # and attenuated by exp(-t/mu) on the way up; the upward flux at the top is that times
    # 2 E3(t) (Chandrasekhar 1950; exact).
    tau, albedo, sun = 0.2, 0.3, 40.0
    view = np.array([0.0, 20.0, 40.0, 60.0, 75.0, 85.0])
    atm = lamina.make_atmosphere([tau], [0.0], np.ones((1, 1)))
    out = lamina.solve(atm, sun_zenith=sun, surface_albedo=albedo, view_zenith=view,
                       view_azimuth=[0.0, 180.0], **settings)
    mu0 = float(_cos([sun])[0])
    mu = _cos(view)
    surface = albedo * mu0 * np.exp(-tau / mu0) / np.pi
    expected_radiance = np.repeat((surface * np.exp(-tau / mu))[:, None], 2, axis=1)
    got_radiance = _radiance(out, 0, "up", "view_zenith", "view_azimuth")
    expected_flux = np.pi * surface * 2.0 * expn(3, tau)
    got_flux = float(out.flux_up.isel(level=0))
    curves = (Curve("radiance at the top", view, expected_radiance[:, 0],
                    got_radiance[:, 0]),)
    return Comparison(np.append(expected_radiance.ravel(), expected_flux),
                      np.append(got_radiance.ravel(), got_flux), curves,
                      "view zenith angle (deg)", "radiance / S (sr-1)")


_CONSERVATION_THICKNESS = np.array([0.1, 1.0, 3.0, 30.0, 100.0, 1000.0])


def _multilayer_moments() -> np.ndarray:
    return np.stack([lamina.phase.henyey_greenstein(0.85, 64),
                     lamina.phase.henyey_greenstein(0.3, 64),
                     lamina.phase.rayleigh(0.0, 64),
                     lamina.phase.henyey_greenstein(-0.2, 64)])


def _conservation(settings: dict[str, Any]) -> Comparison:
    layers = 4
    sun = np.array([0.0, 45.0, 75.0])
    tau = np.repeat(_CONSERVATION_THICKNESS[:, None] / layers, layers, axis=1)
    atm = lamina.make_atmosphere(tau, np.ones_like(tau), _multilayer_moments(),
                                 extra_dims=["column"])
    out = lamina.solve(atm, sun_zenith=sun, surface_albedo=0.0, **settings)
    mu0 = _cos(sun)
    # w = 1 everywhere, black surface: reflected + transmitted = S mu0 (exact)
    balance = ((out.flux_up.isel(level=0) + out.flux_down.isel(level=-1))
               .transpose("column", "sun_zenith").values / mu0)
    reflected = out.flux_up.isel(level=0).transpose("column", "sun_zenith").values / mu0
    curves = (
        Curve("(reflected + transmitted) / (S mu0), sun 45 deg", _CONSERVATION_THICKNESS,
              np.ones(_CONSERVATION_THICKNESS.size), balance[:, 1]),
        Curve("reflected / (S mu0), sun 45 deg (no reference)", _CONSERVATION_THICKNESS,
              np.full(_CONSERVATION_THICKNESS.size, np.nan), reflected[:, 1]),
    )
    return Comparison(np.ones(balance.size), balance, curves, "total optical thickness",
                      "flux / (S mu0)")


def _reciprocity(settings: dict[str, Any]) -> Comparison:
    angles = np.array([10.0, 35.0, 55.0, 70.0, 85.0])
    moments = np.stack([lamina.phase.rayleigh(0.0, 64),
                        lamina.phase.henyey_greenstein(0.85, 64),
                        lamina.phase.henyey_greenstein(0.2, 64)])
    atm = lamina.make_atmosphere([0.3, 1.5, 0.8], [1.0, 0.95, 0.6], moments)
    out = lamina.solve(atm, sun_zenith=angles, surface_albedo=0.25, view_zenith=angles,
                       view_azimuth=[0.0, 60.0, 120.0, 180.0], **settings)
    mu = _cos(angles)
    reflected = _radiance(out, 0, "up", "sun_zenith", "view_zenith", "view_azimuth")
    # mu0 R(mu, mu0, phi) = pi I / S symmetric in mu and mu0 (Chandrasekhar 1950): the
    # radiance divided by mu0 must not change when sun and view swap
    ratio = reflected / mu[:, None, None]
    swapped = ratio.transpose(1, 0, 2)
    upper = np.triu_indices(angles.size, 1)
    curves = (
        Curve("I(mu; mu0) / mu0 at view 70 deg, az 180", angles, swapped[:, 3, 3],
              ratio[:, 3, 3]),
    )
    return Comparison(swapped[upper].ravel(), ratio[upper].ravel(), curves,
                      "sun zenith angle (deg)", "I / (S mu0) (sr-1)")
