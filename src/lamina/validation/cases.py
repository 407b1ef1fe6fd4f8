"""The validation cases: lamina against published values, exact formulas and scalar-exact methods.

Each :class:`Case` names its source (paper with chapter, table or equation; "from memory"
where the value was recalled rather than read, as in the project's reference list), the
quantity compared, whether its error is relative or absolute, a tolerance that matches the
source's precision (or, for an exact result, the accuracy lamina claims at the settings
used, with the reason given in ``tolerance_note``), and the keyword arguments handed to
:func:`lamina.solve`. Its ``compare`` function runs lamina with those settings (with
``streams`` replaced in a convergence study) and returns the compared values with curves
for the report.

References used below (all methods written from the published mathematics):

Chandrasekhar, S. (1950), Radiative Transfer, Oxford University Press, chapters IV-VI.
Hopf, E. (1934), Mathematical Problems of Radiative Equilibrium, Cambridge University Press.
van de Hulst, H. C. (1980), Multiple Light Scattering, vols. 1-2, Academic Press.
Henyey, L. G. and Greenstein, J. L. (1941), Diffuse radiation in the galaxy, ApJ 93, 70-83.
Hansen, J. E. and Travis, L. D. (1974), Light scattering in planetary atmospheres, Space Sci.
Rev. 16, 527-610.
Goody, R. M. and Yung, Y. L. (1989), Atmospheric Radiation, 2nd ed., Oxford University Press.
Thomas, G. E. and Stamnes, K. (1999), Radiative Transfer in the Atmosphere and Ocean,
Cambridge University Press.
Wiscombe, W. J. (1977), The delta-M method, J. Atmos. Sci. 34, 1408-1422.
"""

from __future__ import annotations

import functools
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any, Literal

import numpy as np
import scipy.constants as constants
from scipy.integrate import quad
from scipy.special import expn

import lamina
from lamina.validation import references

__all__ = ["CASES", "Case", "Comparison", "Curve", "STUDY_STREAMS"]

#: Stream numbers of the error-against-streams studies.
STUDY_STREAMS: tuple[int, ...] = (4, 8, 16, 32, 64)

ErrorKind = Literal["relative", "absolute"]


@dataclass(frozen=True)
class Curve:
    """One reference curve and lamina's values at the same abscissae, for the figures."""

    label: str
    x: np.ndarray
    reference: np.ndarray
    computed: np.ndarray


@dataclass(frozen=True)
class Comparison:
    """What a case compares: every reference value and lamina's value beside it.

    ``reference`` and ``computed`` are flattened into 1-D arrays of equal length; the
    case's error is the largest relative (or absolute) difference between them.
    ``curves_compared`` is False when the curves show an ingredient of the compared
    quantity (the plane albedo behind a spherical albedo, say) rather than the quantity
    itself, so that the figure does not hold them to the case's tolerance.
    """

    reference: np.ndarray
    computed: np.ndarray
    curves: tuple[Curve, ...]
    x_label: str
    y_label: str
    curves_compared: bool = True

    def __post_init__(self) -> None:
        reference = np.ravel(np.asarray(self.reference, dtype=float))
        computed = np.ravel(np.asarray(self.computed, dtype=float))
        if reference.shape != computed.shape:
            raise ValueError(
                f"reference and computed must have the same size; got {reference.size} "
                f"and {computed.size}"
            )
        object.__setattr__(self, "reference", reference)
        object.__setattr__(self, "computed", computed)


@dataclass(frozen=True)
class Case:
    """A validation case (see the module docstring for the meaning of each field)."""

    name: str
    title: str
    source: str
    details: str
    quantity: str
    error_kind: ErrorKind
    tolerance: float
    tolerance_note: str
    setup: str
    settings: Mapping[str, Any]
    compare: Callable[[dict[str, Any]], Comparison]
    study_streams: tuple[int, ...] = ()
    must_converge: bool = False
    tags: tuple[str, ...] = field(default_factory=tuple)


# --------------------------------------------------------------------------------------
# helpers
# --------------------------------------------------------------------------------------


def _gauss(count: int, low: float = 0.0, high: float = 1.0) -> tuple[np.ndarray, np.ndarray]:
    """Gauss-Legendre nodes and weights on [low, high]."""
    x, w = np.polynomial.legendre.leggauss(count)
    return low + 0.5 * (high - low) * (x + 1.0), 0.5 * (high - low) * w


def _composite_gauss(edges: tuple[float, ...], count: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss-Legendre with ``count`` nodes on each panel between consecutive ``edges``.

    Used for integrals over mu of functions that behave like mu log mu at 0 (H-functions,
    reflection functions), where a single Gauss rule converges slowly.
    """
    parts = [_gauss(count, a, b) for a, b in zip(edges[:-1], edges[1:], strict=True)]
    return np.concatenate([p[0] for p in parts]), np.concatenate([p[1] for p in parts])


def _zenith(cosine: np.ndarray) -> np.ndarray:
    return np.degrees(np.arccos(cosine))


def _cos(degrees: np.ndarray | list[float]) -> np.ndarray:
    return np.cos(np.radians(np.asarray(degrees, dtype=float)))


def _radiance(out: Any, level: int, direction: str, *dims: str) -> np.ndarray:
    """Radiance at one level and direction, axes in the order ``dims``."""
    return out.radiance.sel(level=level, direction=direction).transpose(*dims).values


def _henyey_greenstein_function(g: float, cosine: np.ndarray) -> np.ndarray:
    """Henyey and Greenstein (1941) phase function, averaging 1 over the sphere."""
    return (1.0 - g * g) / (1.0 + g * g - 2.0 * g * cosine) ** 1.5


def _rayleigh_function(depolarization: float, cosine: np.ndarray) -> np.ndarray:
    """Scalar Rayleigh phase function with depolarization (Hansen and Travis 1974):
    3 / (4 (1 + 2 gamma)) [(1 + 3 gamma) + (1 - gamma) cos^2], gamma = rho / (2 - rho)."""
    gamma = depolarization / (2.0 - depolarization)
    return 0.75 / (1.0 + 2.0 * gamma) * ((1.0 + 3.0 * gamma) + (1.0 - gamma) * cosine**2)


def _scattering_cosine(mu: np.ndarray, mu0: float, azimuth: np.ndarray, upward: bool
                       ) -> np.ndarray:
    """Cosine of the angle between the beam (going down at mu0) and a view direction."""
    sign = 1.0 if upward else -1.0
    return -sign * mu * mu0 + np.sqrt(1.0 - mu**2) * np.sqrt(1.0 - mu0**2) * np.cos(
        np.radians(azimuth))


def _single_scattering(phase: np.ndarray, albedo: float, tau: float, mu: np.ndarray,
                       mu0: float, upward: bool) -> np.ndarray:
    """Singly scattered radiance per unit beam irradiance of a layer over a black surface.

    Thomas and Stamnes (1999): reflected w P/(4 pi) mu0/(mu + mu0) [1 - exp(-t/mu - t/mu0)],
    transmitted w P/(4 pi) mu0/(mu - mu0) [exp(-t/mu) - exp(-t/mu0)].
    """
    if upward:
        return albedo / (4 * np.pi) * phase * mu0 / (mu + mu0) * -np.expm1(
            -tau * (1 / mu + 1 / mu0))
    return albedo / (4 * np.pi) * phase * mu0 / (mu - mu0) * (
        np.exp(-tau / mu) - np.exp(-tau / mu0))


# --------------------------------------------------------------------------------------
# semi-infinite isotropic scattering (Chandrasekhar's H-functions)
# --------------------------------------------------------------------------------------

# Thickness standing in for a semi-infinite medium: for w < 1 the diffuse field decays at
# least like exp(-0.17 t) (w = 0.99), so 2000 hides the bottom completely; for w = 1 the
# transmission falls only like 4 / (3 t), so the layer is 2e6 thick (transmission < 1e-6).
_THICK = 2000.0
_THICK_CONSERVATIVE = 2e6


def _thick(albedo: float) -> float:
    return _THICK_CONSERVATIVE if albedo == 1.0 else _THICK


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


# --------------------------------------------------------------------------------------
# the registry
# --------------------------------------------------------------------------------------

_ISOTROPIC_SETUP = ("one isotropically scattering layer over a black surface, 2000 thick "
                    "(2e6 for w = 1) standing in for a semi-infinite medium")
_SEMI_INFINITE_NOTE = (
    "The reference is exact to ~1e-14; 1e-5 is the accuracy claimed for radiances at 32 "
    "streams. For w = 1 the solver's conservative gap (w capped at 1 - 1e-12) lowers the "
    "reflection of a semi-infinite medium by about H sqrt(1e-12) ~ 3e-6."
)
_DOUBLING_NOTE = (
    "Adding-doubling (references.doubling_reflection_transmission, 48 Gauss nodes, 1e-10 "
    "starting layer) agrees with itself at 64 nodes to ~1e-9; 1e-5 is the accuracy claimed "
    "for radiances at 32 streams."
)

CASES: tuple[Case, ...] = (
    Case(
        name="isotropic_semi_infinite_reflection",
        title="Semi-infinite isotropic reflection (H-functions)",
        source="Chandrasekhar 1950, ch. V (H-function, exact)",
        details="I(0, mu) = w S / (4 pi) mu0 / (mu + mu0) H(mu) H(mu0), H from its integral "
                "equation (references.chandrasekhar_h, agrees with the exact integral "
                "representation to 1e-14). Grid: w in {0.5, 0.9, 0.99, 1}, view zenith "
                "0-84 deg, sun zenith 0-78 deg, azimuths 0 and 90 deg (azimuth-free).",
        quantity="reflected radiance",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note=_SEMI_INFINITE_NOTE,
        setup=_ISOTROPIC_SETUP,
        settings={"streams": 32},
        compare=_isotropic_semi_infinite,
        study_streams=STUDY_STREAMS,
    ),
    Case(
        name="isotropic_plane_albedo",
        title="Plane albedo of a semi-infinite isotropic medium",
        source="Chandrasekhar 1950, ch. V; van de Hulst 1980 (exact)",
        details="A(mu0) = 1 - H(mu0) sqrt(1 - w) for w in {0.3, 0.8, 0.95, 0.99} and sun "
                "zenith 0-85 deg; lamina's upward flux at the top divided by S mu0.",
        quantity="plane albedo (flux)",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note="The reference is exact to ~1e-14; 1e-5 is the accuracy claimed for "
                       "fluxes at 32 streams up to a sun zenith of 85 deg (reached: ~7e-8). "
                       "Closer to the horizon it degrades: at 89 deg 32 streams give 1.4e-5 "
                       "(64 streams 4e-9).",
        setup="one isotropically scattering layer, 2000 thick, black surface",
        settings={"streams": 32},
        compare=_isotropic_plane_albedo,
        study_streams=STUDY_STREAMS,
        tags=("fast",),
    ),
    Case(
        name="isotropic_spherical_albedo",
        title="Spherical albedo of a semi-infinite isotropic medium",
        source="van de Hulst 1980 (exact, 1 - 2 alpha_1 sqrt(1 - w))",
        details="Spherical albedo 2 int A(mu0) mu0 dmu0, with lamina's plane albedo at 36 "
                "composite-Gauss sun cosines (one call, a list of sun_zenith), against "
                "1 - 2 alpha_1 sqrt(1 - w), alpha_1 the first moment of H "
                "(Chandrasekhar 1950). w in {0.5, 0.9, 0.99}.",
        quantity="spherical albedo",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note="The quadrature over mu0 reproduces the exact value to < 1e-8 with "
                       "the exact plane albedo; 1e-5 is the flux accuracy claimed at 32 "
                       "streams.",
        setup="one isotropically scattering layer, 2000 thick, black surface; 36 sun angles",
        settings={"streams": 32},
        compare=_isotropic_spherical_albedo,
        study_streams=STUDY_STREAMS,
    ),
    Case(
        name="isotropic_geometric_albedo",
        title="Geometric albedo of a conservative isotropic sphere",
        source="van de Hulst 1980 (0.6897, from memory)",
        details="p = 2 int R(mu, mu, backscatter) mu^2 dmu with R = pi I / (S mu0), "
                "from lamina's backscattered radiance at 40 Gauss cosines (sun = view, one "
                "call), against 0.6897 (van de Hulst 1980, from memory). The figure also "
                "shows the exact H-function reflection along the backscatter diagonal.",
        quantity="geometric albedo",
        error_kind="absolute",
        tolerance=1e-4,
        tolerance_note="The value has 4 decimals and is recalled, not read: 1e-4 absolute.",
        setup="one conservative isotropic layer, 2e6 thick, black surface; 40 sun and view "
              "angles, azimuth 180",
        settings={"streams": 32},
        compare=functools.partial(_geometric_albedo, rayleigh=False),
        study_streams=STUDY_STREAMS,
    ),
    Case(
        name="milne_hopf_constant",
        title="Milne problem: Hopf's q(t)",
        source="Hopf 1934; Chandrasekhar 1950 (q(inf) = 0.710446, from memory)",
        details="A conservative isotropic slab 400 thick lit from below (black surface "
                "emitting, cold above). J(t) = (3 F / 4 pi)(t + q(t)); q(0) = 1/sqrt(3) "
                "exactly and q(t) -> 0.710446 at depths 20, 30, 40. (The reference H "
                "moments give alpha_2/alpha_1 = 0.7104461.)",
        quantity="Hopf function q at the top and deep inside",
        error_kind="absolute",
        tolerance=5e-7,
        tolerance_note="Half a unit in the 6th decimal of the published 0.710446.",
        setup="one conservative isotropic layer, 400 thick, cold top, black surface at 300 K, "
              "band 400-700 cm-1",
        settings={"streams": 32},
        compare=_milne_hopf,
        study_streams=STUDY_STREAMS,
        tags=("fast",),
    ),
    Case(
        name="grey_limb_darkening_law",
        title="Grey limb darkening: I(0, mu) / I(0, 1) = H(mu) / H(1)",
        source="Chandrasekhar 1950, ch. V (exact H, w = 1)",
        details="The emergent intensity of the Milne problem is proportional to H(mu) "
                "(conservative isotropic H-function); view zenith 0-90 deg.",
        quantity="limb-darkening profile",
        error_kind="relative",
        tolerance=1e-6,
        tolerance_note="Exact reference (1e-14); 1e-6 is the claimed accuracy at 32 streams "
                       "for this smooth emergent field (reached: ~2e-7).",
        setup="the Milne slab of milne_hopf_constant",
        settings={"streams": 32},
        compare=_limb_darkening_law,
        study_streams=STUDY_STREAMS,
        tags=("fast",),
    ),
    Case(
        name="grey_limb_darkening_ratio",
        title="Grey limb darkening at the limb: 1 / H(1) = 0.3439",
        source="Chandrasekhar 1950 (1/H(1) = 0.3439, from memory)",
        details="Ratio of the emergent intensity at the limb (mu = 0) to that at disk "
                "centre in the Milne problem, against the classical 0.3439.",
        quantity="I(0, 0) / I(0, 1)",
        error_kind="absolute",
        tolerance=5e-5,
        tolerance_note="Half a unit in the 4th decimal of 0.3439.",
        setup="the Milne slab of milne_hopf_constant",
        settings={"streams": 32},
        compare=_limb_darkening_ratio,
        study_streams=STUDY_STREAMS,
        tags=("fast",),
    ),
    Case(
        name="isothermal_slab_flux",
        title="Isothermal non-scattering slab: flux emissivity",
        source="Chandrasekhar 1950; Goody and Yung 1989 (1 - 2 E3(t), exact)",
        details="Emergent flux / (pi B) of isothermal non-scattering slabs, t = 0.05-10, "
                "over a black surface at 0 K, against 1 - 2 E3(t) (scipy.special.expn).",
        quantity="flux emissivity",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note="Exact reference; the flux is a double-Gauss sum over 16 cosines of "
                       "an integrand with an exp(-t/mu) layer near mu = 0, which limits the "
                       "thinnest slab to ~7e-6 at 32 streams.",
        setup="7 columns of one non-scattering layer at 250 K, band 500-800 cm-1",
        settings={"streams": 32},
        compare=_isothermal_slab_flux,
        study_streams=STUDY_STREAMS,
        tags=("fast",),
    ),
    Case(
        name="isothermal_slab_radiance",
        title="Isothermal non-scattering slab: emergent radiance",
        source="Chandrasekhar 1950; Goody and Yung 1989 (B (1 - exp(-t/mu)), exact)",
        details="Emergent radiance / B at view zenith 0-87 deg for the slabs of "
                "isothermal_slab_flux.",
        quantity="emergent radiance",
        error_kind="relative",
        tolerance=1e-10,
        tolerance_note="Radiances at user angles integrate the exact linear source "
                       "analytically: only rounding remains.",
        setup="as isothermal_slab_flux",
        settings={"streams": 8},
        compare=_isothermal_slab_radiance,
        tags=("fast",),
    ),
    Case(
        name="isothermal_enclosure",
        title="Isothermal enclosure: I = B everywhere",
        source="Kirchhoff's law (exact)",
        details="Three scattering, absorbing layers (HG 0.85, HG 0.3, Rayleigh; w = 0.9, "
                "0.6, 1) at 280 K between a black surface at 280 K and an isotropic sky "
                "radiance B(280 K): radiance at every depth, direction and azimuth, mean "
                "intensity, and the up and down fluxes / pi all equal B.",
        quantity="radiance, mean intensity, fluxes / pi",
        error_kind="relative",
        tolerance=1e-10,
        tolerance_note="Exact at any number of streams: only rounding remains.",
        setup="3 layers (t = 0.3, 4, 1), band 400-700 cm-1",
        settings={"streams": 16},
        compare=_isothermal_enclosure,
        tags=("fast",),
    ),
    Case(
        name="single_scattering_henyey_greenstein",
        title="Single scattering, Henyey-Greenstein, thin layer",
        source="Thomas and Stamnes 1999 (single-scattering law); Henyey and Greenstein 1941",
        details="A layer of t = 1e-7, w = 0.8, HG g = 0.6 (72 moments) over a black "
                "surface, sun at 40 deg: reflected and transmitted radiance at 4 view "
                "zeniths and 7 azimuths 0-180 deg against w S/(4 pi) P(cos T) mu0/(mu +- mu0) "
                "[...], which fixes the azimuth convention (0 = forward side). Default "
                "settings: delta-M and the single-scattering correction.",
        quantity="reflected and transmitted radiance",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note="Multiple scattering, left out of the reference, is ~1e-6 of the "
                       "radiance for t = 1e-7 (the log of grazing paths included).",
        setup="one layer t = 1e-7, w = 0.8, HG g = 0.6",
        settings={"streams": 16},
        compare=_single_scattering_hg,
        tags=("fast",),
    ),
    Case(
        name="single_scattering_rayleigh",
        title="Single scattering, Rayleigh, thin layer",
        source="Thomas and Stamnes 1999 (single-scattering law); Chandrasekhar 1950 "
               "(Rayleigh phase function)",
        details="As single_scattering_henyey_greenstein with the scalar Rayleigh phase "
                "function (3/4)(1 + cos^2 T), w = 1.",
        quantity="reflected and transmitted radiance",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note="As for the Henyey-Greenstein case.",
        setup="one layer t = 1e-7, w = 1, Rayleigh",
        settings={"streams": 8},
        compare=_single_scattering_rayleigh,
        tags=("fast",),
    ),
    Case(
        name="lambertian_surface",
        title="Lambertian surface under an absorbing layer",
        source="Chandrasekhar 1950 (exact attenuation and Lambert reflection)",
        details="A purely absorbing layer (t = 0.2) over a Lambertian surface of albedo "
                "0.3, sun at 40 deg: upward radiance at the top A S mu0 exp(-t/mu0) "
                "exp(-t/mu) / pi at 6 view angles and 2 azimuths, and the upward flux "
                "A S mu0 exp(-t/mu0) 2 E3(t).",
        quantity="upward radiance and flux at the top",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note="Radiances are exact to rounding; the flux is a 16-cosine double-Gauss "
                       "sum of exp(-t/mu) (error ~3e-7 here).",
        setup="one layer t = 0.2, w = 0, surface albedo 0.3",
        settings={"streams": 32},
        compare=_lambertian_surface,
        tags=("fast",),
    ),
    Case(
        name="conservation_multilayer",
        title="Energy conservation, anisotropic multi-layer, up to t = 1000",
        source="exact (w = 1, black surface: reflected + transmitted = S mu0)",
        details="Four conservative layers (HG 0.85, HG 0.3, Rayleigh, HG -0.2) of equal "
                "thickness, total 0.1 to 1000, sun at 0, 45, 75 deg.",
        quantity="(reflected + transmitted flux) / (S mu0)",
        error_kind="relative",
        tolerance=1e-8,
        tolerance_note="The solver caps w at 1 - 1e-12; the absorption this causes is about "
                       "1e-12 times the optical thickness, < 1e-8 up to t = 1000 "
                       "(reached: ~3e-9 at t = 1000).",
        setup="4 conservative layers, 6 total thicknesses as columns",
        settings={"streams": 16},
        compare=_conservation,
        tags=("fast",),
    ),
    Case(
        name="reciprocity_multilayer",
        title="Reciprocity of reflection, anisotropic multi-layer",
        source="Chandrasekhar 1950 (reciprocity principle, exact)",
        details="mu0 R(mu, mu0, phi) is symmetric in mu and mu0: I(mu; mu0) / mu0 = "
                "I(mu0; mu) / mu for 5 angles (10-85 deg, as sun and as view) and 4 "
                "azimuths, three layers (Rayleigh w = 1; HG 0.85 w = 0.95; HG 0.2 w = 0.6) "
                "over a Lambertian surface of albedo 0.25; delta-M and the single-scattering "
                "correction on.",
        quantity="reflected radiance / mu0 under sun-view exchange",
        error_kind="relative",
        tolerance=1e-8,
        tolerance_note="Exact law; delta-M and the correction keep it. All Fourier terms "
                       "are summed (tolerance 1e-12), leaving rounding (reached: ~2e-10).",
        setup="3 layers t = 0.3, 1.5, 0.8; surface albedo 0.25",
        settings={"streams": 16, "fourier_tolerance": 1e-12},
        compare=_reciprocity,
        tags=("fast",),
    ),
    Case(
        name="planck_band_integrals",
        title="Planck band integrals",
        source="Planck's law with CODATA constants (scipy.constants), integrated by "
               "scipy quad",
        details="lamina.planck.band_radiance for 8 bands (10-20000 cm-1, one 0.01 cm-1 "
                "wide) and 5 temperatures (150-5800 K) against scipy.integrate.quad of "
                "2 h c^2 nu^3 / (exp(h c nu / k T) - 1).",
        quantity="band-integrated Planck radiance",
        error_kind="relative",
        tolerance=1e-10,
        tolerance_note="quad is asked for 1e-13; the series are accurate to ~1e-13.",
        setup="no solver call",
        settings={},
        compare=_planck_band_integrals,
        tags=("fast",),
    ),
    Case(
        name="planck_total_radiance",
        title="Planck radiance over the whole spectrum: sigma T^4 / pi",
        source="Stefan-Boltzmann law, CODATA sigma (scipy.constants)",
        details="lamina.planck.band_radiance(T, 0, inf) and the emergent flux / pi of "
                "opaque (t = 1000) isothermal non-scattering slabs solved with "
                "wavenumber_band=(0, inf), T = 50-5772 K.",
        quantity="total Planck radiance",
        error_kind="relative",
        tolerance=1e-12,
        tolerance_note="Exact; only rounding remains.",
        setup="5 columns of one opaque non-scattering layer",
        settings={"streams": 8},
        compare=_planck_total,
        tags=("fast",),
    ),
    Case(
        name="rayleigh_phase_moments",
        title="Rayleigh phase-function moments with depolarization",
        source="Hansen and Travis 1974 (Rayleigh phase function with depolarization)",
        details="lamina.phase.rayleigh(rho) against the Legendre projection (16-point "
                "Gauss, exact here) of 3 / (4 (1 + 2 gamma)) [(1 + 3 gamma) + (1 - gamma) "
                "cos^2 T], "
                "gamma = rho / (2 - rho), for rho = 0, 0.0279 (dry air, Young 1980, from "
                "memory) and 0.1.",
        quantity="Legendre moments chi_0..chi_5",
        error_kind="absolute",
        tolerance=1e-14,
        tolerance_note="The projection of a quadratic is exact; only rounding remains.",
        setup="no solver call",
        settings={},
        compare=_rayleigh_moments,
        tags=("fast",),
    ),
    Case(
        name="henyey_greenstein_moments",
        title="Henyey-Greenstein phase-function moments",
        source="Henyey and Greenstein 1941 (phase function; chi_l = g^l)",
        details="lamina.phase.henyey_greenstein(g, 40) against the Legendre projection of "
                "the HG function by composite Gauss-Legendre quadrature (10 panels of 40 "
                "nodes graded toward the forward peak), for g = -0.5, 0.3, 0.85.",
        quantity="Legendre moments chi_0..chi_39",
        error_kind="absolute",
        tolerance=1e-12,
        tolerance_note="The quadrature is converged to rounding (~1e-15) on integrands up to "
                       "~100; 1e-12 leaves room for that rounding.",
        setup="no solver call",
        settings={},
        compare=_henyey_greenstein_moments,
    ),
    Case(
        name="rayleigh_semi_infinite_reflection",
        title="Semi-infinite Rayleigh reflection (scalar)",
        source="Ambartsumian 1943; Chandrasekhar 1950 (scalar, per Fourier term)",
        details="Reflected radiance of a semi-infinite medium with the scalar Rayleigh phase "
                "function, w = 1 and 0.9, against references.rayleigh_semi_infinite_"
                "reflection (Ambartsumian's nonlinear equation solved per Fourier term, "
                "accurate to ~1e-13); view zenith 0-85, sun 0-80, azimuth 0-180 deg. "
                "Scalar only: polarized tables differ (see the report's notes).",
        quantity="reflected radiance",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note=_SEMI_INFINITE_NOTE,
        setup="one Rayleigh layer, 2e6 thick (w = 1) or 2000 (w = 0.9), black surface",
        settings={"streams": 32, "fourier_tolerance": 1e-10},
        compare=_rayleigh_semi_infinite,
        study_streams=STUDY_STREAMS,
    ),
    Case(
        name="rayleigh_finite_layers",
        title="Finite Rayleigh layers (scalar) against adding-doubling",
        source="Adding-doubling (van de Hulst 1980; Hansen and Travis 1974)",
        details="Rayleigh layers t = 0.1, 0.5, 1 (w = 1) and t = 0.5 (w = 0.8) over a black "
                "surface, sun at 40 deg: reflected and diffusely transmitted radiance "
                "(6 view zeniths x 5 azimuths) and fluxes against "
                "references.doubling_reflection_transmission.",
        quantity="reflected/transmitted radiance and flux",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note=_DOUBLING_NOTE + " The thin layer's grazing radiances limit lamina to "
                                        "~5e-6 at 32 streams.",
        setup="4 columns of one Rayleigh layer, black surface",
        settings={"streams": 32, "fourier_tolerance": 1e-10},
        compare=_rayleigh_finite,
        study_streams=STUDY_STREAMS,
        tags=("fast",),
    ),
    Case(
        name="rayleigh_geometric_albedo",
        title="Geometric albedo of a conservative Rayleigh sphere (scalar)",
        source="Ambartsumian 1943 reflection (references), integrated as in van de Hulst "
               "1980",
        details="p = 2 int R(mu, mu, backscatter) mu^2 dmu from lamina's backscattered "
                "radiance at 40 Gauss cosines against the same integral of the scalar "
                "Ambartsumian reflection function (0.75176). Not compared with the "
                "polarized literature value (see the notes).",
        quantity="geometric albedo",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note=_SEMI_INFINITE_NOTE,
        setup="one conservative Rayleigh layer, 2e6 thick; 40 sun and view angles, "
              "azimuth 180",
        settings={"streams": 32, "fourier_tolerance": 1e-10},
        compare=functools.partial(_geometric_albedo, rayleigh=True),
        study_streams=STUDY_STREAMS,
    ),
    Case(
        name="henyey_greenstein_finite_layers",
        title="Finite Henyey-Greenstein layers against adding-doubling",
        source="Adding-doubling (van de Hulst 1980); Henyey and Greenstein 1941",
        details="HG layers (t, w, g) = (0.5, 0.9, 0.5), (2, 0.99, 0.75), (8, 1, 0.5) over "
                "a black surface, sun at 40 deg, all moments down to g^l < 1e-13: "
                "radiances and fluxes against references.doubling_reflection_transmission. "
                "Default settings (delta-M, single-scattering correction).",
        quantity="reflected/transmitted radiance and flux",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note=_DOUBLING_NOTE,
        setup="3 columns of one HG layer, black surface",
        settings={"streams": 32, "fourier_tolerance": 1e-10},
        compare=_hg_finite,
        study_streams=STUDY_STREAMS,
    ),
    Case(
        name="delta_m_cloud_radiance",
        title="Delta-M and single-scattering correction: g = 0.85 cloud radiances",
        source="Wiscombe 1977 (delta-M); reference by adding-doubling (van de Hulst 1980)",
        details="A cloud t = 4, w = 0.999, HG g = 0.85 (130 moments, g^130 < 1e-9), sun at "
                "30 deg, black surface: reflected and transmitted radiance at 6 view "
                "zeniths x 5 azimuths (including near-forward directions) against doubling "
                "with 64 nodes. Error at 16 streams; the error must shrink at every step "
                "4 -> 8 -> 16 -> 32 -> 64 streams.",
        quantity="reflected and transmitted radiance",
        error_kind="relative",
        tolerance=0.02,
        tolerance_note="The forward-scattering accuracy target: 2 % at 16 streams with "
                       "delta-M and the correction. Doubling is accurate to ~1e-9.",
        setup="one HG cloud layer, black surface",
        settings={"streams": 16, "fourier_tolerance": 1e-8},
        compare=_delta_m_radiance,
        study_streams=STUDY_STREAMS,
        must_converge=True,
    ),
    Case(
        name="delta_m_cloud_flux",
        title="Delta-M: g = 0.85 cloud fluxes",
        source="Wiscombe 1977 (delta-M); reference by adding-doubling (van de Hulst 1980)",
        details="Reflected and diffusely transmitted flux of the cloud of "
                "delta_m_cloud_radiance. Error at 8 streams; it must shrink at every step "
                "4 -> 64 streams.",
        quantity="reflected and diffuse transmitted flux",
        error_kind="relative",
        tolerance=0.02,
        tolerance_note="The forward-scattering accuracy target: fluxes within 2 % at 8 "
                       "streams with delta-M.",
        setup="one HG cloud layer, black surface",
        settings={"streams": 8},
        compare=_delta_m_flux,
        study_streams=STUDY_STREAMS,
        must_converge=True,
    ),
)
