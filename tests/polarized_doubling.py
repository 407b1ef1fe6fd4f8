"""An independent polarized adding-doubling solver, to test lamina's vector solutions against.

A helper module for the tests (as tests/monte_carlo.py is), not a test file. It shares no
code with lamina: it takes the layers' scattering-matrix coefficients (moment, element) in
lamina's normalisation, evaluates the matrices with the scipy-Jacobi generalized spherical
functions of tests/polarized_references.py, and builds everything else from there.

Method (the adding-doubling method for polarized light: Hansen 1971; Hansen and Travis 1974,
section 3; de Haan, Bosma and Hovenier 1987; Hovenier, van der Mee and Domke 2004, ch. 5):

- Directions are the Gauss-Legendre cosines of ``quadrature_nodes`` points in (0, 1) in each
  hemisphere, plus the requested cosines with zero weight (so they are computed exactly as
  grid directions, without disturbing the integrals).
- The phase matrix Z between meridian-plane Stokes vectors (polarized_references.
  phase_matrix: the scattering matrix rotated from and to the meridian planes) depends on
  the azimuths only through their difference. It is sampled at K = 2 L + 4 azimuth
  differences (L the last moment), offset by half a step so that the forward and backward
  directions, where the rotation angles are undefined, are never met, and split into its
  complex Fourier components Z_m, m = 0 .. L, by a discrete Fourier transform: exact, since
  Z is a trigonometric polynomial of degree L in the azimuth. No cosine/sine bookkeeping and
  no symmetry relations of the Fourier components are used: each component is carried as a
  complex matrix, and the composition of two kernels over the hemisphere and the azimuth is,
  for every m, X W Y with W = 2 mu w on the grid (a convolution in azimuth is a product of
  Fourier components).
- A layer of thickness t / 2^n <= ``start_thickness`` gets its exact single-scattering
  reflection and transmission for light from above and from below (four kernels, each
  computed from Z, none from symmetry); n doublings give the layer, the adding equations
  stack the layers top down and put the atmosphere on a Lambertian, depolarizing surface.
- The reflection function R relates the reflected Stokes vector to the incident flux vector:
  I = mu0 R F / pi, with F = S (1, 0, 0, 0) for the unpolarized beam of irradiance S.

Conventions: those of tests/polarized_references.py (and lamina's): the beam propagates at
azimuth 0 with zenith cosine -mu0, and the emerging direction's azimuth ``phi`` is measured
from the beam's propagation azimuth, anticlockwise seen from above; Stokes vectors referred
to the meridian plane, r x l = direction of propagation.

References
----------
de Haan, J. F., Bosma, P. B. and Hovenier, J. W. (1987), The adding method for multiple
scattering calculations of polarized light, Astron. Astrophys. 183, 371-391.
Hansen, J. E. (1971), Multiple scattering of polarized light in planetary atmospheres. Part
I. The doubling method, J. Atmos. Sci. 28, 120-125.
Hansen, J. E. and Travis, L. D. (1974), Space Sci. Rev. 16, 527-610.
Hovenier, J. W., van der Mee, C. and Domke, H. (2004), Transfer of Polarized Light in
Planetary Atmospheres, Kluwer.

Section and equation numbers of the references are cited from memory.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.special import exprel

from polarized_references import matrix_elements, phase_matrix

STOKES = 4


@dataclass
class Operators:
    """Fourier component m of a slab's reflection and transmission (4 n x 4 n matrices).

    ``reflection`` and ``transmission`` are for light incident from above, the ``*_below``
    ones for light from below; ``direct`` is exp(-t / mu) on every (node, Stokes) index.
    """

    reflection: np.ndarray
    transmission: np.ndarray
    reflection_below: np.ndarray
    transmission_below: np.ndarray
    direct: np.ndarray

    def flipped(self) -> Operators:
        return Operators(self.reflection_below, self.transmission_below, self.reflection,
                         self.transmission, self.direct)


@dataclass
class PolarizedDoublingResult:
    """Stokes vectors (..., 4) per unit beam irradiance, and the I fluxes."""

    reflected: np.ndarray
    """Stokes vector leaving the top at (mu, phi), per sr."""
    transmitted: np.ndarray
    """Diffuse Stokes vector going down at the bottom of the atmosphere (above the surface)."""
    reflected_flux: np.ndarray
    """Upward flux at the top."""
    transmitted_flux: np.ndarray
    """Diffuse downward flux at the bottom of the atmosphere."""
    direct_flux: np.ndarray
    """mu0 exp(-total t / mu0)."""
    reflection_matrix: np.ndarray
    """R(mu, mu0, phi), (..., 4, 4): I = mu0 R F / pi for an incident flux vector F."""


def _fourier_kernels(coefficients: np.ndarray, nodes: np.ndarray) -> dict[str, np.ndarray]:
    """Z_m for (out, in) = (up, down), (down, down), (down, up), (up, up): (m, 4n, 4n)."""
    last = coefficients.shape[0] - 1
    samples = 2 * last + 4
    azimuth = 360.0 * (np.arange(samples) + 0.5) / samples

    def elements(cosine):
        return matrix_elements(coefficients, cosine)

    size = nodes.size
    kernels = {}
    for key, (out_sign, in_sign) in {"up_down": (1, -1), "down_down": (-1, -1),
                                     "down_up": (-1, 1), "up_up": (1, 1)}.items():
        z = phase_matrix(elements, out_sign * nodes[None, :, None], azimuth[:, None, None],
                         in_sign * nodes[None, None, :], 0.0)  # (azimuth, out, in, 4, 4)
        phases = np.exp(-1j * np.outer(np.arange(last + 1), np.deg2rad(azimuth))) / samples
        components = np.tensordot(phases, z, axes=([1], [0]))  # (m, out, in, 4, 4)
        kernels[key] = components.transpose(0, 1, 3, 2, 4).reshape(
            last + 1, STOKES * size, STOKES * size)
    return kernels


def _thin_layer(kernels: dict[str, np.ndarray], m: int, tau: float, albedo: float,
                nodes: np.ndarray) -> Operators:
    """Exact single scattering of a thin homogeneous layer (the neglected part is O(tau^2))."""
    inverse = np.repeat(1.0 / nodes, STOKES)
    out_in = inverse[:, None] * inverse[None, :]
    reflect = 0.25 * albedo * tau * out_in * exprel(-tau * (inverse[:, None] + inverse[None, :]))
    transmit = (0.25 * albedo * tau * out_in * np.exp(-tau * inverse)[:, None]
                * exprel(-tau * (inverse[None, :] - inverse[:, None])))
    return Operators(reflect * kernels["up_down"][m], transmit * kernels["down_down"][m],
                     reflect * kernels["down_up"][m], transmit * kernels["up_up"][m],
                     np.exp(-tau * inverse))


def _add(top: Operators, bottom: Operators, weight: np.ndarray) -> tuple[Operators, np.ndarray]:
    """Adding equations for light from above; returns the slab and the diffuse downward
    kernel D at the interface (van de Hulst 1980, ch. 4; Hansen and Travis 1974, section 3)."""
    identity = np.eye(weight.size)
    bounce = (top.reflection_below * weight) @ bottom.reflection
    down = np.linalg.solve(identity - bounce * weight,
                           top.transmission + bounce * top.direct[None, :])
    up = bottom.reflection * top.direct[None, :] + (bottom.reflection * weight) @ down
    reflection = (top.reflection + top.direct[:, None] * up
                  + (top.transmission_below * weight) @ up)
    transmission = (bottom.direct[:, None] * down + bottom.transmission * top.direct[None, :]
                    + (bottom.transmission * weight) @ down)
    return Operators(reflection, transmission, np.empty(0), np.empty(0),
                     top.direct * bottom.direct), down


def _combine(top: Operators, bottom: Operators, weight: np.ndarray) -> Operators:
    """Both sides of top on bottom: from below, the stack seen upside down."""
    above, _ = _add(top, bottom, weight)
    below, _ = _add(bottom.flipped(), top.flipped(), weight)
    return Operators(above.reflection, above.transmission, below.reflection, below.transmission,
                     above.direct)


def _layer(kernels, m, tau, albedo, nodes, weight, start_thickness) -> Operators:
    inverse = np.repeat(1.0 / nodes, STOKES)
    if not np.any(kernels["up_down"][m]) and not np.any(kernels["down_down"][m]):
        # a Fourier term beyond this layer's last moment: it only attenuates
        zero = np.zeros((inverse.size, inverse.size))
        return Operators(zero, zero, zero, zero, np.exp(-tau * inverse))
    doublings = max(0, int(np.ceil(np.log2(tau / start_thickness))))
    thickness = tau / 2.0**doublings
    layer = _thin_layer(kernels, m, thickness, albedo, nodes)
    for _ in range(doublings):
        layer = _combine(layer, layer, weight)
        thickness *= 2.0
        # exp(-t / mu) afresh: squaring exp(-t0 / mu) ~ 1 - 1e-12 n times would multiply
        # its round-off by 2^n
        layer.direct = np.exp(-thickness * inverse)
    return layer


def polarized_doubling(
    layers: list[tuple[float, float, np.ndarray]],
    surface_albedo: float,
    mu: np.ndarray,
    mu0: float,
    phi: np.ndarray,
    *,
    quadrature_nodes: int = 24,
    start_thickness: float = 1e-14,
) -> PolarizedDoublingResult:
    """Stokes vectors reflected and transmitted by layers over a Lambertian surface.

    Parameters
    ----------
    layers : list of (optical_thickness, single_scattering_albedo, coefficients)
        Top first; ``coefficients`` (moment, element) in lamina's normalisation.
    surface_albedo : float
        Lambertian (depolarizing) surface albedo.
    mu, phi : array_like
        Emerging cosines (up for reflection, down for transmission) in (0, 1] and
        azimuths (degrees, from the beam's propagation azimuth), broadcasting together.
    mu0 : float
        Cosine of the beam's zenith angle.
    """
    mu, phi = np.broadcast_arrays(np.asarray(mu, float), np.asarray(phi, float))
    grid, grid_weights = np.polynomial.legendre.leggauss(quadrature_nodes)
    grid, grid_weights = 0.5 * (grid + 1.0), 0.5 * grid_weights
    users, inverse = np.unique(np.concatenate([mu.ravel(), [mu0]]), return_inverse=True)
    nodes = np.concatenate([grid, users])
    weight = np.repeat(2.0 * nodes * np.concatenate([grid_weights, np.zeros(users.size)]),
                       STOKES)
    rows = STOKES * (grid.size + inverse[:-1])
    column = STOKES * (grid.size + inverse[-1])
    last = max(coefficients.shape[0] for _, _, coefficients in layers) - 1
    padded = [(tau, albedo, np.pad(c, ((0, last + 1 - c.shape[0]), (0, 0))))
              for tau, albedo, c in layers]
    kernels = [_fourier_kernels(c, nodes) for _, _, c in padded]
    for kernel, (_, _, c) in zip(kernels, layers, strict=True):
        # the DFT leaves round-off in terms beyond a layer's own last moment: zero them
        own = int(np.flatnonzero(np.any(c != 0.0, axis=1)).max())
        for matrix in kernel.values():
            matrix[own + 1 :] = 0.0
    size = STOKES * nodes.size
    reflected = np.zeros(mu.shape + (STOKES, STOKES))
    transmitted = np.zeros(mu.shape + (STOKES,))
    radians = np.deg2rad(phi)
    for m in range(last + 1):
        stack = None
        for (tau, albedo, _), kernel in zip(padded, kernels, strict=True):
            layer = _layer(kernel, m, tau, albedo, nodes, weight, start_thickness)
            stack = layer if stack is None else _combine(stack, layer, weight)
        surface = np.zeros((size, size))
        if m == 0:
            surface[0::STOKES, 0::STOKES] = surface_albedo  # R = A for I only: depolarizing
        ground = Operators(surface, np.zeros((size, size)), np.zeros((size, size)),
                           np.zeros((size, size)), np.zeros(size))
        total, down = _add(stack, ground, weight)
        factor = (1.0 if m == 0 else 2.0) * np.exp(1j * m * radians)[..., None, None]
        out_index = rows[:, None] + np.arange(STOKES)  # (direction, Stokes)
        block = total.reflection[out_index[:, :, None], column + np.arange(STOKES)]
        reflected += np.real(factor * block.reshape(mu.shape + (STOKES, STOKES)))
        diffuse = down[out_index, column]
        transmitted += np.real(factor[..., 0] * diffuse.reshape(mu.shape + (STOKES,)))
        if m == 0:
            flux_weight = weight[: STOKES * grid.size : STOKES]
            reflected_flux = mu0 * flux_weight @ np.real(
                total.reflection[: STOKES * grid.size : STOKES, column])
            transmitted_flux = mu0 * flux_weight @ np.real(
                down[: STOKES * grid.size : STOKES, column])
    scale = mu0 / np.pi
    tau_total = sum(tau for tau, _, _ in layers)
    return PolarizedDoublingResult(
        reflected=scale * reflected[..., :, 0], transmitted=scale * transmitted,
        reflected_flux=reflected_flux, transmitted_flux=transmitted_flux,
        direct_flux=mu0 * np.exp(-tau_total / mu0), reflection_matrix=reflected)
