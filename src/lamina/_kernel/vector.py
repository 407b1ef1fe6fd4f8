"""Python entry point of the Stokes-vector kernel: Stokes vectors at the quadrature cosines.

:func:`vector_quadrature_radiance` checks its inputs, calls
``vector_driver.solve_vector_columns`` (Siewert 1981, 2000; de Haan, Bosma and Hovenier
1987; see ``vector_layers.pyx``) for one column and returns the Stokes vectors of every level
at lamina's double-Gauss cosines (and, by integrating the source function, at any view
cosines) and the requested azimuths. It is the kernel's own
interface, without delta-M scaling or xarray (``lamina.solve`` does not call
it yet: DEVELOPERS.md, "Polarization").
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from numpy.typing import ArrayLike

from lamina._kernel.vector_driver import VECTOR_STATUS_NAMES, solve_vector_columns
from lamina._kernel.vector_layers import phase_fourier_for_tests, wigner_d_for_tests

__all__ = [
    "VECTOR_STATUS_NAMES",
    "VectorRadiance",
    "phase_fourier_for_tests",
    "vector_quadrature_radiance",
    "wigner_d_for_tests",
]

STOKES_LABELS = ("I", "Q", "U", "V")


class VectorRadiance(NamedTuple):
    """Stokes vectors of one column at the quadrature cosines, per unit of ``sun_irradiance``.

    Directions: 0 upward (cosine +mu), 1 downward (cosine -mu); levels from the top (level
    l is the top of layer l, the last level the bottom of the atmosphere).
    """

    cosines: np.ndarray
    """Quadrature cosines mu_i on (0, 1), ascending (streams / 2)."""
    weights: np.ndarray
    """Their weights (summing to 1)."""
    radiance: np.ndarray
    """(sun, level, direction, cosine, azimuth, stokes): diffuse I, Q, U (, V)."""
    flux_up: np.ndarray
    """(sun, level): upward I flux 2 pi sum w mu I."""
    flux_down_diffuse: np.ndarray
    """(sun, level): diffuse downward I flux."""
    mean_intensity_diffuse: np.ndarray
    """(sun, level): the diffuse I averaged over all directions."""
    flux_direct: np.ndarray
    """(sun, level): the direct beam's flux mu0 S exp(-tau / mu0)."""
    view_radiance: np.ndarray
    """(sun, level, direction, view cosine, azimuth, stokes) at the ``view_cosine`` given
    (source-function integration; empty along the view cosine when none is given)."""


def _real(name: str, value: ArrayLike, ndim: int) -> np.ndarray:
    array = np.asarray(value)
    if array.dtype.kind not in "biuf" or array.dtype.kind == "b":
        raise TypeError(f"{name} must be real numbers; got dtype {array.dtype}")
    array = np.ascontiguousarray(array, dtype=float)
    if array.ndim != ndim:
        raise ValueError(f"{name} must have {ndim} dimension(s); got shape {array.shape}")
    if not np.all(np.isfinite(array)):
        raise ValueError(f"{name} must be finite")
    return array


def _check_inputs(tau, albedo, moments, mu0, surface_albedo, streams, stokes):
    if isinstance(streams, bool) or not isinstance(streams, int | np.integer) or streams < 2 \
            or streams % 2:
        raise ValueError(f"streams must be an even integer >= 2; got {streams!r}")
    if isinstance(stokes, bool) or stokes not in (1, 3, 4):
        raise ValueError(f"stokes must be 1, 3 or 4; got {stokes!r}")
    if tau.size == 0 or albedo.shape != tau.shape or np.any(tau < 0.0):
        raise ValueError("optical_thickness must be >= 0, one per layer (at least one), and "
                         "single_scattering_albedo must have its shape; got shapes "
                         f"{tau.shape} and {albedo.shape}")
    if np.any((albedo < 0.0) | (albedo > 1.0)):
        raise ValueError("single_scattering_albedo must be in [0, 1]")
    if moments.shape[0] != tau.size or moments.shape[2] != 6 or moments.shape[1] == 0:
        raise ValueError("scattering_matrix_moments must be (layer, moment, 6) with one row "
                         f"per layer; got shape {moments.shape}")
    if np.any(moments[:, 0, 0] != 1.0):
        raise ValueError("scattering_matrix_moments: alpha1_0 must be 1 in every layer")
    if np.any((mu0 <= 0.0) | (mu0 > 1.0)):
        raise ValueError("sun_cosine must be in (0, 1]")
    if not 0.0 <= surface_albedo <= 1.0:
        raise ValueError(f"surface_albedo must be in [0, 1]; got {surface_albedo!r}")


def vector_quadrature_radiance(
    optical_thickness: ArrayLike,
    single_scattering_albedo: ArrayLike,
    scattering_matrix_moments: ArrayLike,
    sun_cosine: ArrayLike,
    surface_albedo: float,
    streams: int,
    view_azimuth: ArrayLike,
    *,
    stokes: int = 4,
    sun_irradiance: float = 1.0,
    view_cosine: ArrayLike = (),
) -> VectorRadiance:
    """Stokes vectors of a stack of layers over a Lambertian surface, at quadrature cosines.

    Parameters
    ----------
    optical_thickness, single_scattering_albedo : array_like
        One value per layer, top first (no delta-M scaling is applied).
    scattering_matrix_moments : array_like
        (layer, moment, element), the elements in the order of
        :data:`lamina.polarization.ELEMENTS`, alpha1_0 = 1; moments beyond ``streams`` are
        dropped, missing ones are zero.
    sun_cosine : array_like
        Scalar or 1-D, in (0, 1]; an unpolarized beam at azimuth 0.
    surface_albedo : float
        Lambertian, depolarizing surface.
    streams : int
        Even; ``streams / 2`` double-Gauss cosines per hemisphere.
    view_azimuth : array_like
        1-D azimuths in degrees, from the beam's propagation azimuth (lamina's convention).
    stokes : {1, 3, 4}, optional
        Components solved: I alone, I Q U, or I Q U V.
    sun_irradiance : float, optional
        Beam irradiance normal to the beam.
    view_cosine : array_like, optional
        1-D cosines in (0, 1] of extra view directions (each up and down), where the
        source function is integrated (``view_radiance``).

    Returns
    -------
    VectorRadiance

    Raises
    ------
    ValueError
        For bad inputs.
    RuntimeError
        When the kernel fails (the message names the layer, the Fourier term and the routine).
    """
    tau = _real("optical_thickness", optical_thickness, 1)
    albedo = _real("single_scattering_albedo", single_scattering_albedo, 1)
    moments = _real("scattering_matrix_moments", scattering_matrix_moments, 3)
    mu0 = np.atleast_1d(_real("sun_cosine", np.ravel(sun_cosine), 1))
    phi = _real("view_azimuth", np.atleast_1d(view_azimuth), 1)
    views = _real("view_cosine", np.atleast_1d(np.asarray(view_cosine, dtype=float)), 1)
    if np.any((views <= 0.0) | (views > 1.0)):
        raise ValueError("view_cosine must be in (0, 1]")
    surface = float(surface_albedo)
    _check_inputs(tau, albedo, moments, mu0, surface, streams, stokes)
    nl = int(streams)
    used = np.zeros((tau.size, nl, 6))
    keep = min(nl, moments.shape[1])
    used[:, :keep] = moments[:, :keep]
    nodes, weights = np.polynomial.legendre.leggauss(nl // 2)
    mu, wq = 0.5 * (nodes + 1.0), 0.5 * weights
    nsun, nlev, n = mu0.size, tau.size + 1, nl // 2
    radiance = np.zeros((1, nsun, nlev, 2, n, phi.size, stokes))
    view_radiance = np.zeros((1, nsun, nlev, 2, views.size, phi.size, stokes))
    # the levels as output positions: the top of every layer and the bottom of the last
    position_layer = np.minimum(np.arange(nlev), tau.size - 1).astype(np.intp)
    position_fraction = np.where(np.arange(nlev) < tau.size, 0.0, 1.0)
    flux_up = np.zeros((1, nsun, nlev))
    flux_down = np.zeros((1, nsun, nlev))
    mean = np.zeros((1, nsun, nlev))
    status = np.zeros((1, 4), dtype=np.int64)
    terms = np.zeros(1, dtype=np.int64)
    irradiance = np.full((1, nsun), float(sun_irradiance))
    solve_vector_columns(tau[None], albedo[None], used[None], mu0[None].copy(), irradiance,
                         np.array([surface]), np.zeros(1), np.zeros((1, nlev)), np.zeros(1),
                         False, mu, wq, np.deg2rad(phi), views,
                         position_layer, position_fraction, stokes, nl, 0.0, radiance,
                         view_radiance, flux_up, flux_down, mean, terms, status)
    code, layer, term, info = (int(v) for v in status[0])
    if code:
        raise RuntimeError(
            f"the vector kernel failed (layer {layer}, Fourier term {term}, LAPACK info "
            f"{info}): {VECTOR_STATUS_NAMES.get(code, 'unknown failure')}")
    depth = np.concatenate([[0.0], np.cumsum(tau)])
    direct = float(sun_irradiance) * mu0[:, None] * np.exp(-depth[None, :] / mu0[:, None])
    return VectorRadiance(mu, wq, radiance[0], flux_up[0], flux_down[0], mean[0], direct,
                          view_radiance[0])
