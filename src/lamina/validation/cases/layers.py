"""Rayleigh and Henyey-Greenstein layers against Ambartsumian's equation and doubling; delta-M.

Semi-infinite scalar Rayleigh reflection (Ambartsumian 1943; Chandrasekhar 1950), finite
Rayleigh and Henyey-Greenstein layers and a forward-scattering cloud (Wiscombe 1977, delta-M)
against adding-doubling (van de Hulst 1980), all from :mod:`lamina.validation.references`.
"""

from __future__ import annotations

import functools
from collections.abc import Callable
from typing import Any

import numpy as np

import lamina
from lamina.validation import references
from lamina.validation.cases._common import (
    Comparison,
    Curve,
    _cos,
    _radiance,
    _thick,
)

# --------------------------------------------------------------------------------------
# Rayleigh and Henyey-Greenstein layers against Ambartsumian's equation and doubling
# --------------------------------------------------------------------------------------

_LAYER_VIEW = np.array([0.0, 20.0, 40.0, 60.0, 75.0, 85.0])
_LAYER_AZIMUTH = np.array([0.0, 45.0, 90.0, 135.0, 180.0])
_LAYER_SUN = 40.0


def _rayleigh_semi_infinite(settings: dict[str, Any]) -> Comparison:
    albedos = np.array([1.0, 0.9])
    sun = np.array([0.0, 30.0, 60.0, 80.0])
    mu, mu0 = _cos(_LAYER_VIEW), _cos(sun)
    atm = lamina.make_atmosphere([[_thick(w)] for w in albedos], albedos[:, None],
                                 references.rayleigh_phase_moments(), extra_dims=["column"])
    out = lamina.solve(atm, sun_zenith=sun, surface_albedo=0.0, view_zenith=_LAYER_VIEW,
                       view_azimuth=_LAYER_AZIMUTH, **settings)
    got = _radiance(out, 0, "up", "column", "sun_zenith", "view_zenith", "view_azimuth")
    expected = np.stack([
        references.rayleigh_semi_infinite_reflection(
            mu[None, :, None], mu0[:, None, None], _LAYER_AZIMUTH[None, None, :],
            single_scattering_albedo=w)
        for w in albedos
    ])
    curves = tuple(
        Curve(f"w = {w:g}, sun 30 deg, azimuth {a:g}", _LAYER_VIEW, expected[i, 1, :, j],
              got[i, 1, :, j])
        for i, w in enumerate(albedos) for j, a in enumerate(_LAYER_AZIMUTH) if a in (0, 180)
    )
    return Comparison(expected, got, curves, "view zenith angle (deg)",
                      "reflected radiance / S (sr-1)")


@functools.lru_cache(maxsize=16)
def _doubling(tau: float, albedo: float, moments: tuple[float, ...], sun: float,
              nodes: int = 48) -> references.DoublingResult:
    mu = _cos(_LAYER_VIEW)[:, None]
    mu0 = float(_cos([sun])[0])
    # a 1e-10 starting layer: its neglected double scattering (~t 1e-10) is far below the
    # tolerances here and saves a dozen doublings per Fourier term
    return references.doubling_reflection_transmission(
        tau, albedo, np.array(moments), mu, mu0, _LAYER_AZIMUTH[None, :],
        quadrature_nodes=nodes, start_thickness=1e-10)


def _finite_layers(settings: dict[str, Any], layers: tuple[tuple[float, float, str], ...],
                   moments_of: Callable[[str], np.ndarray], sun: float, view: np.ndarray,
                   nodes: int = 48) -> Comparison:
    """Homogeneous layers over a black surface: radiances and fluxes against doubling."""
    reference_values, computed_values, curves = [], [], []
    tau = np.array([[t] for t, _, _ in layers])
    albedo = np.array([[w] for _, w, _ in layers])
    moments = [moments_of(kind) for _, _, kind in layers]
    width = max(m.size for m in moments)
    table = np.zeros((len(layers), 1, width))
    for i, m in enumerate(moments):
        table[i, 0, : m.size] = m
    atm = lamina.make_atmosphere(tau, albedo, table, extra_dims=["column"])
    out = lamina.solve(atm, sun_zenith=sun, surface_albedo=0.0, view_zenith=view,
                       view_azimuth=_LAYER_AZIMUTH, **settings)
    up = _radiance(out, 0, "up", "column", "view_zenith", "view_azimuth")
    down = _radiance(out, 1, "down", "column", "view_zenith", "view_azimuth")
    flux_up = out.flux_up.isel(level=0).values
    flux_down = out.flux_down_diffuse.isel(level=1).values
    for i, (t, w, kind) in enumerate(layers):
        ref = _doubling(float(t), float(w), tuple(float(c) for c in moments[i]), sun, nodes)
        reference_values += [ref.reflected_radiance.ravel(), ref.transmitted_radiance.ravel(),
                             np.atleast_1d(ref.reflected_flux),
                             np.atleast_1d(ref.transmitted_flux)]
        computed_values += [up[i].ravel(), down[i].ravel(), [flux_up[i]], [flux_down[i]]]
        label = f"{kind}, t = {t:g}, w = {w:g}"
        curves.append(Curve(f"{label}: reflected, az 180", view, ref.reflected_radiance[:, -1],
                            up[i, :, -1]))
        curves.append(Curve(f"{label}: transmitted, az 0", view,
                            ref.transmitted_radiance[:, 0], down[i, :, 0]))
    return Comparison(np.concatenate(reference_values), np.concatenate(computed_values),
                      tuple(curves), "view zenith angle (deg)", "radiance / S (sr-1)")


def _rayleigh_finite(settings: dict[str, Any]) -> Comparison:
    layers = ((0.1, 1.0, "Rayleigh"), (0.5, 1.0, "Rayleigh"), (1.0, 1.0, "Rayleigh"),
              (0.5, 0.8, "Rayleigh"))
    return _finite_layers(settings, layers, lambda _: references.rayleigh_phase_moments(),
                          _LAYER_SUN, _LAYER_VIEW)


def _hg_moments(kind: str) -> np.ndarray:
    g = float(kind.split("=")[1])
    # Henyey-Greenstein moments g^l (Henyey and Greenstein 1941), down to g^l < 1e-13
    count = int(np.ceil(np.log(1e-13) / np.log(g)))
    return lamina.phase.henyey_greenstein(g, count)


def _hg_finite(settings: dict[str, Any]) -> Comparison:
    layers = ((0.5, 0.9, "HG g=0.5"), (2.0, 0.99, "HG g=0.75"), (8.0, 1.0, "HG g=0.5"))
    return _finite_layers(settings, layers, _hg_moments, _LAYER_SUN, _LAYER_VIEW)


# A forward-scattering cloud: Henyey-Greenstein g = 0.85 down to g^l < 1e-9 (130 moments).
_CLOUD = (4.0, 0.999, 0.85)
_CLOUD_SUN = 30.0
_CLOUD_MOMENTS = 130
_CLOUD_NODES = 64   # doubling nodes; 96 nodes change the result by < 1e-9


def _cloud_reference() -> tuple[np.ndarray, references.DoublingResult]:
    tau, albedo, g = _CLOUD
    moments = g ** np.arange(_CLOUD_MOMENTS)
    return moments, _doubling(tau, albedo, tuple(float(c) for c in moments), _CLOUD_SUN,
                              _CLOUD_NODES)


def _cloud_solution(settings: dict[str, Any]) -> tuple[Any, references.DoublingResult]:
    moments, reference = _cloud_reference()
    tau, albedo, _ = _CLOUD
    atm = lamina.make_atmosphere([tau], [albedo], moments[None])
    out = lamina.solve(atm, sun_zenith=_CLOUD_SUN, surface_albedo=0.0, view_zenith=_LAYER_VIEW,
                       view_azimuth=_LAYER_AZIMUTH, **settings)
    return out, reference


def _delta_m_radiance(settings: dict[str, Any]) -> Comparison:
    out, ref = _cloud_solution(settings)
    up = _radiance(out, 0, "up", "view_zenith", "view_azimuth")
    down = _radiance(out, 1, "down", "view_zenith", "view_azimuth")
    curves = (
        Curve("reflected, az 180", _LAYER_VIEW, ref.reflected_radiance[:, -1], up[:, -1]),
        Curve("reflected, az 0", _LAYER_VIEW, ref.reflected_radiance[:, 0], up[:, 0]),
        Curve("transmitted, az 0", _LAYER_VIEW, ref.transmitted_radiance[:, 0], down[:, 0]),
        Curve("transmitted, az 180", _LAYER_VIEW, ref.transmitted_radiance[:, -1],
              down[:, -1]),
    )
    return Comparison(np.concatenate([ref.reflected_radiance.ravel(),
                                      ref.transmitted_radiance.ravel()]),
                      np.concatenate([up.ravel(), down.ravel()]), curves,
                      "view zenith angle (deg)", "radiance / S (sr-1)")


def _delta_m_flux(settings: dict[str, Any]) -> Comparison:
    out, ref = _cloud_solution(settings)
    got = np.array([float(out.flux_up.isel(level=0)),
                    float(out.flux_down_diffuse.isel(level=1))])
    expected = np.array([float(ref.reflected_flux), float(ref.transmitted_flux)])
    curves = (Curve("reflected, diffuse transmitted", np.array([0.0, 1.0]), expected, got),)
    return Comparison(expected, got, curves, "0: reflected, 1: diffuse transmitted",
                      "flux / S")
