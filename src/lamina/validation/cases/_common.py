"""What every validation case shares: the case and comparison types, quadratures, geometry.

The bottom module of :mod:`lamina.validation.cases`: the topic modules (``isotropic``,
``thermal``, ``scattering``, ``layers``) import from here and from nothing beside it.
:class:`Case` holds a case's name, its source (paper with chapter, table or equation; "from
memory" where the value was recalled rather than read), the quantity compared, whether its
error is relative or absolute, a tolerance that matches the source's precision (or, for an
exact result, the accuracy lamina claims at the settings used, with the reason given in
``tolerance_note``), and the keyword arguments handed to :func:`lamina.solve`. Its
``compare`` function runs lamina with those settings (with ``streams`` replaced in a
convergence study) and returns a :class:`Comparison`, the compared values with curves for
the report.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any, Literal

import numpy as np

__all__ = ["Case", "Comparison", "Curve", "STUDY_STREAMS"]

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


# Thickness standing in for a semi-infinite medium: for w < 1 the diffuse field decays at
# least like exp(-0.17 t) (w = 0.99), so 2000 hides the bottom completely; for w = 1 the
# transmission falls only like 4 / (3 t), so the layer is 2e6 thick (transmission < 1e-6).
_THICK = 2000.0
_THICK_CONSERVATIVE = 2e6


def _thick(albedo: float) -> float:
    return _THICK_CONSERVATIVE if albedo == 1.0 else _THICK
