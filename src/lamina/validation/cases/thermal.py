"""Thermal emission: the isothermal slab, the isothermal enclosure and Planck integrals.

Against 1 - 2 E3(t) and B (1 - exp(-t/mu)) (Chandrasekhar 1950; Goody and Yung 1989),
Kirchhoff's law, Planck's law integrated by scipy and the Stefan-Boltzmann law (CODATA
constants from scipy.constants).
"""

from __future__ import annotations

from typing import Any

import numpy as np
import scipy.constants as constants
from scipy.integrate import quad
from scipy.special import expn

import lamina
from lamina.validation import references
from lamina.validation.cases._common import (
    Comparison,
    Curve,
    _cos,
    _radiance,
)

# --------------------------------------------------------------------------------------
# thermal emission: isothermal slab, isothermal enclosure, Planck integrals
# --------------------------------------------------------------------------------------

_SLAB_TAU = np.array([0.05, 0.2, 0.5, 1.0, 2.0, 5.0, 10.0])
_SLAB_VIEW = np.array([0.0, 30.0, 50.0, 65.0, 80.0, 87.0])
_SLAB_BAND = (500.0, 800.0)
_SLAB_TEMPERATURE = 250.0


def _isothermal_slab(settings: dict[str, Any]) -> tuple[Any, float]:
    atm = lamina.make_atmosphere(_SLAB_TAU[:, None], np.zeros((_SLAB_TAU.size, 1)),
                                 np.ones((1, 1)),
                                 temperature=np.full((_SLAB_TAU.size, 2), _SLAB_TEMPERATURE),
                                 extra_dims=["column"])
    out = lamina.solve(atm, sun_irradiance=0.0, surface_albedo=0.0, surface_temperature=0.0,
                       wavenumber_band=_SLAB_BAND, view_zenith=_SLAB_VIEW,
                       view_azimuth=[0.0], **settings)
    return out, float(lamina.planck.band_radiance(_SLAB_TEMPERATURE, *_SLAB_BAND))


def _isothermal_slab_flux(settings: dict[str, Any]) -> Comparison:
    out, planck = _isothermal_slab(settings)
    got = out.flux_up.isel(level=0).values / (np.pi * planck)
    # flux emissivity 1 - 2 E3(t) (Chandrasekhar 1950; Goody and Yung 1989)
    expected = references.isothermal_slab_flux_emissivity(_SLAB_TAU)
    check = 1.0 - 2.0 * expn(3, _SLAB_TAU)
    if not np.allclose(expected, check, rtol=1e-14):
        raise RuntimeError("reference flux emissivity disagrees with 1 - 2 E3(t)")
    curves = (Curve("flux emissivity", _SLAB_TAU, expected, got),)
    return Comparison(expected, got, curves, "optical thickness t", "flux emissivity")


def _isothermal_slab_radiance(settings: dict[str, Any]) -> Comparison:
    out, planck = _isothermal_slab(settings)
    got = _radiance(out, 0, "up", "column", "view_zenith", "view_azimuth")[..., 0] / planck
    mu = _cos(_SLAB_VIEW)
    # B (1 - exp(-t / mu)) (Chandrasekhar 1950; Goody and Yung 1989)
    expected = -np.expm1(-_SLAB_TAU[:, None] / mu[None, :])
    curves = tuple(Curve(f"t = {t:g}", _SLAB_VIEW, expected[i], got[i])
                   for i, t in enumerate(_SLAB_TAU) if t in (0.05, 0.5, 2.0))
    return Comparison(expected, got, curves, "view zenith angle (deg)", "I / B")


def _isothermal_enclosure(settings: dict[str, Any]) -> Comparison:
    temperature, band = 280.0, (400.0, 700.0)
    planck = float(lamina.planck.band_radiance(temperature, *band))
    moments = np.stack([lamina.phase.henyey_greenstein(0.85, 64),
                        lamina.phase.henyey_greenstein(0.3, 64),
                        lamina.phase.rayleigh(0.0, 64)])
    atm = lamina.make_atmosphere([0.3, 4.0, 1.0], [0.9, 0.6, 1.0], moments,
                                 temperature=np.full(4, temperature))
    levels = np.array([0.0, 0.5, 1.0, 1.7, 2.0, 2.5, 3.0])
    view = np.array([0.0, 30.0, 60.0, 80.0, 89.0])
    out = lamina.solve(atm, sun_irradiance=0.0, surface_albedo=0.0, wavenumber_band=band,
                       top_diffuse_radiance=planck, view_zenith=view,
                       view_azimuth=[0.0, 90.0, 180.0], output_levels=levels, **settings)
    # Kirchhoff: I = B in every direction at every depth, so J = B and F_up = F_down = pi B
    got = np.concatenate([out.radiance.values.ravel(), out.mean_intensity.values,
                          out.flux_up.values / np.pi, out.flux_down.values / np.pi])
    depth = out.cumulative_optical_depth.values
    curves = (
        Curve("mean intensity J / B", depth, np.ones_like(depth),
              out.mean_intensity.values / planck),
        Curve("up radiance at 60 deg, az 180 / B", depth, np.ones_like(depth),
              out.radiance.sel(direction="up", view_zenith=60.0, view_azimuth=180.0).values
              / planck),
    )
    return Comparison(np.full(got.size, planck), got, curves, "optical depth t",
                      "radiance / B")


# Planck's law per unit wavenumber, written here from scipy.constants (CODATA):
# B(nu) = 2 h c^2 nu^3 / (exp(h c nu / k T) - 1), nu in m-1, radiance per m-1.
def _planck_per_wavenumber(nu_cm: float, temperature: float) -> float:
    nu = 100.0 * nu_cm
    x = constants.h * constants.c * nu / (constants.k * temperature)
    return 2.0 * constants.h * constants.c**2 * nu**3 / np.expm1(x) * 100.0


_PLANCK_BANDS = ((10.0, 250.0), (250.0, 500.0), (500.0, 800.0), (800.0, 1250.0),
                 (1250.0, 2500.0), (2500.0, 5000.0), (5000.0, 20000.0), (667.0, 667.01))
_PLANCK_TEMPERATURES = (150.0, 250.0, 300.0, 1000.0, 5800.0)


def _planck_band_integrals(settings: dict[str, Any]) -> Comparison:
    expected = np.array([
        [quad(_planck_per_wavenumber, lo, hi, args=(t,), epsabs=0.0, epsrel=1e-13,
              limit=200)[0] for lo, hi in _PLANCK_BANDS]
        for t in _PLANCK_TEMPERATURES
    ])
    low = np.array([b[0] for b in _PLANCK_BANDS])
    high = np.array([b[1] for b in _PLANCK_BANDS])
    got = lamina.planck.band_radiance(np.array(_PLANCK_TEMPERATURES)[:, None], low, high)
    centre = 0.5 * (low + high)
    curves = tuple(Curve(f"T = {t:g} K", centre, expected[i] / (high - low),
                         got[i] / (high - low))
                   for i, t in enumerate(_PLANCK_TEMPERATURES) if t in (250.0, 1000.0))
    return Comparison(expected, got, curves, "band centre (cm-1)",
                      "band mean radiance (W m-2 sr-1 / cm-1)")


def _planck_total(settings: dict[str, Any]) -> Comparison:
    temperature = np.array([50.0, 150.0, 288.0, 1000.0, 5772.0])
    expected = constants.sigma * temperature**4 / np.pi
    direct = lamina.planck.band_radiance(temperature, 0.0, np.inf)
    # through the solver: an opaque isothermal non-scattering slab emits pi B (the
    # double-Gauss weights integrate mu exactly, so no quadrature error enters)
    atm = lamina.make_atmosphere(np.full((temperature.size, 1), 1e3),
                                 np.zeros((temperature.size, 1)), np.ones((1, 1)),
                                 temperature=np.repeat(temperature[:, None], 2, axis=1),
                                 extra_dims=["column"])
    out = lamina.solve(atm, sun_irradiance=0.0, surface_albedo=0.0,
                       wavenumber_band=(0.0, np.inf), **settings)
    solved = out.flux_up.isel(level=0).values / np.pi
    curves = (Curve("planck.band_radiance(T, 0, inf)", temperature, expected, direct),
              Curve("emergent flux / pi of an opaque slab", temperature, expected, solved))
    return Comparison(np.concatenate([expected, expected]), np.concatenate([direct, solved]),
                      curves, "temperature (K)", "radiance (W m-2 sr-1)")
