"""Independent polarized single-scattering references, used to test lamina's polarization.

A helper module for the tests (as tests/monte_carlo.py is), not a test file. It shares no
code with lamina: the generalized spherical functions come from scipy's Jacobi polynomials,
the geometry from plain vectors.

Conventions (the ones lamina fixes for its Stokes vectors; DEVELOPERS.md, "Polarization")
-----------------------------------------------------------------------------------------
* The z axis points up (to the zenith); x points along the horizontal direction in which the
  sun's beam propagates, y = z cross x. A direction of propagation with zenith cosine u
  (u > 0 up, u < 0 down) and azimuth phi (degrees, from x toward y, i.e. anticlockwise
  seen from above) is k = (sqrt(1 - u^2) cos phi, sqrt(1 - u^2) sin phi, u). The beam
  itself propagates along (sin theta0, 0, -mu0): lamina's ``view_azimuth`` is measured
  from the beam's propagation azimuth, so phi = 0 is the forward-scattering side.
* The Stokes vector (I, Q, U, V) of light travelling along k is referred to the meridian
  plane (the plane through k and the vertical): with unit vectors l (in the meridian plane)
  and r (horizontal) such that r x l = k (Chandrasekhar 1950; Hovenier, van der Mee and
  Domke 2004), l = e_theta = (cos theta cos phi, cos theta sin phi, -sin theta) (theta the
  polar angle of k from the zenith) and r = -e_phi = (sin phi, -cos phi, 0). For a field
  E = E_l l + E_r r: I = |E_l|^2 + |E_r|^2, Q = |E_l|^2 - |E_r|^2 (Q > 0 parallel to the
  meridian plane), U = 2 Re(E_l E_r*), V = -2 Im(E_l E_r*) = i (E_l E_r* - E_r E_l*).
  Light linearly polarized at an angle chi from l toward r has Q = I cos 2chi,
  U = I sin 2chi.
* The scattering matrix F(T) refers (I, Q, U, V) to the scattering plane (the plane of the
  incident and scattered directions) in the same way, r normal to that plane.

References
----------
Chandrasekhar, S. (1950), Radiative Transfer, Oxford University Press (Dover 1960).
Hovenier, J. W., van der Mee, C. and Domke, H. (2004), Transfer of Polarized Light in
Planetary Atmospheres, Kluwer: the phase matrix Z = L(pi - sigma2) F(T) L(-sigma1) with the
rotation matrices L of section 2.3.
Varshalovich, D. A., Moskalev, A. N. and Khersonskii, V. K. (1988), Quantum Theory of Angular
Momentum, World Scientific, section 4.3 (Wigner d-functions through Jacobi polynomials).

Section and equation numbers of the references are cited from memory.
"""

from __future__ import annotations

import numpy as np
from scipy.special import binom, eval_jacobi

#: Maps the coherency products (E_l E_l*, E_l E_r*, E_r E_l*, E_r E_r*) to (I, Q, U, V).
_STOKES_FROM_COHERENCY = np.array(
    [[1, 0, 0, 1], [1, 0, 0, -1], [0, 1, 1, 0], [0, 1j, -1j, 0]], dtype=complex
)


def wigner_d(j: int, m1: int, m2: int, x: np.ndarray) -> np.ndarray:
    """Wigner's d^j_{m1 m2}(beta) at x = cos(beta), through a Jacobi polynomial.

    The general formula with k = min(j+m2, j-m2, j+m1, j-m1) (Varshalovich et al. 1988,
    section 4.3.1; from memory), evaluated with scipy.special.eval_jacobi.
    """
    x = np.asarray(x, dtype=float)
    if j < max(abs(m1), abs(m2)):
        return np.zeros_like(x)
    k = min(j + m2, j - m2, j + m1, j - m1)
    if k == j + m2:
        a, sign_power = m1 - m2, m1 - m2
    elif k == j - m2:
        a, sign_power = m2 - m1, 0
    elif k == j + m1:
        a, sign_power = m2 - m1, 0
    else:
        a, sign_power = m1 - m2, m1 - m2
    b = 2 * j - 2 * k - a
    half_sin = np.sqrt(np.clip(0.5 * (1.0 - x), 0.0, None))
    half_cos = np.sqrt(np.clip(0.5 * (1.0 + x), 0.0, None))
    return (
        (-1.0) ** sign_power
        * np.sqrt(binom(2 * j - k, k + a) / binom(k + b, b))
        * half_sin**a
        * half_cos**b
        * eval_jacobi(k, a, b, x)
    )


def generalized_spherical(l_degree: int, m: int, n: int, x: np.ndarray) -> np.ndarray:
    """P^l_mn(x) = i^(n-m) d^l_mn(arccos x) for even m - n (Hovenier et al. 2004, ch. 2)."""
    if (m - n) % 2:
        raise ValueError("m - n must be even")
    return (-1.0) ** ((n - m) // 2) * wigner_d(l_degree, m, n, x)


def matrix_elements(coefficients: np.ndarray, x: np.ndarray) -> tuple[np.ndarray, ...]:
    """F11, F12, F22, F33, F34, F44 at cosines x from coefficients (moment, element).

    The expansion of de Rooij and van der Stap (1984) with lamina's factor 2l + 1 (see
    lamina.polarization), summed term by term with :func:`generalized_spherical`.
    """
    x = np.asarray(x, dtype=float)
    f = [np.zeros_like(x) for _ in range(6)]
    plus, minus = np.zeros_like(x), np.zeros_like(x)
    for degree, (a1, a2, a3, a4, b1, b2) in enumerate(np.asarray(coefficients, dtype=float)):
        weight = 2 * degree + 1
        p00 = generalized_spherical(degree, 0, 0, x)
        p02 = generalized_spherical(degree, 0, 2, x)
        f[0] += weight * a1 * p00
        f[5] += weight * a4 * p00
        f[1] += weight * b1 * p02
        f[4] += weight * b2 * p02
        plus += weight * (a2 + a3) * generalized_spherical(degree, 2, 2, x)
        minus += weight * (a2 - a3) * generalized_spherical(degree, 2, -2, x)
    f[2], f[3] = 0.5 * (plus + minus), 0.5 * (plus - minus)
    return tuple(f)


def rayleigh_elements(x: np.ndarray, depolarization: float = 0.0) -> tuple[np.ndarray, ...]:
    """The closed-form Rayleigh matrix (Hansen and Travis 1974, eqs. 2.15-2.16), mean F11 = 1.

    Delta = (1 - rho) / (1 + rho/2), Delta' = (1 - 2 rho) / (1 - rho); the depolarized part
    (1 - Delta) scatters isotropically and unpolarized.
    """
    x = np.asarray(x, dtype=float)
    delta = (1.0 - depolarization) / (1.0 + 0.5 * depolarization)
    delta_prime = (1.0 - 2.0 * depolarization) / (1.0 - depolarization)
    return (
        0.75 * delta * (1.0 + x**2) + 1.0 - delta,
        -0.75 * delta * (1.0 - x**2),
        0.75 * delta * (1.0 + x**2),
        1.5 * delta * x,
        np.zeros_like(x),
        1.5 * delta * delta_prime * x,
    )


# --------------------------------------------------------------------------------------
# geometry
# --------------------------------------------------------------------------------------


def direction(u: np.ndarray, phi_deg: np.ndarray) -> np.ndarray:
    """Unit vectors k (..., 3) of propagation with zenith cosine u and azimuth phi."""
    u, phi = np.broadcast_arrays(np.asarray(u, float), np.deg2rad(np.asarray(phi_deg, float)))
    s = np.sqrt(np.clip(1.0 - u**2, 0.0, None))
    return np.stack([s * np.cos(phi), s * np.sin(phi), u], axis=-1)


def meridian_basis(u: np.ndarray, phi_deg: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(l, r) of the meridian plane of direction (u, phi): l = e_theta, r = -e_phi."""
    u, phi = np.broadcast_arrays(np.asarray(u, float), np.deg2rad(np.asarray(phi_deg, float)))
    s = np.sqrt(np.clip(1.0 - u**2, 0.0, None))
    ell = np.stack([u * np.cos(phi), u * np.sin(phi), -s], axis=-1)
    r = np.stack([np.sin(phi), -np.cos(phi), np.zeros_like(u)], axis=-1)
    return ell, r


def _dot(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    return np.sum(a * b, axis=-1)


def mueller_from_jones(jones: np.ndarray) -> np.ndarray:
    """The Mueller matrix (..., 4, 4) of a Jones matrix (..., 2, 2), in the Stokes
    definitions of the module docstring: M = A (J kron J*) A^-1."""
    kron = np.einsum("...ij,...kl->...ikjl", jones, np.conj(jones)).reshape(
        jones.shape[:-2] + (4, 4)
    )
    forward = _STOKES_FROM_COHERENCY
    return np.real(forward @ kron @ np.linalg.inv(forward))


def rotation(angle: np.ndarray) -> np.ndarray:
    """L(alpha) (..., 4, 4): the Stokes vector in a basis turned by alpha from l toward r
    (Hovenier et al. 2004, section 2.3; Q' = cos2a Q + sin2a U, U' = -sin2a Q + cos2a U)."""
    c, s = np.cos(2.0 * angle), np.sin(2.0 * angle)
    out = np.zeros(np.shape(angle) + (4, 4))
    out[..., 0, 0] = out[..., 3, 3] = 1.0
    out[..., 1, 1] = out[..., 2, 2] = c
    out[..., 1, 2] = s
    out[..., 2, 1] = -s
    return out


def scattering_matrix_4x4(elements: tuple[np.ndarray, ...]) -> np.ndarray:
    """The 4x4 matrix (..., 4, 4) from (F11, F12, F22, F33, F34, F44)."""
    f11, f12, f22, f33, f34, f44 = np.broadcast_arrays(*elements)
    out = np.zeros(f11.shape + (4, 4))
    out[..., 0, 0], out[..., 0, 1], out[..., 1, 0], out[..., 1, 1] = f11, f12, f12, f22
    out[..., 2, 2], out[..., 2, 3], out[..., 3, 2], out[..., 3, 3] = f33, f34, -f34, f44
    return out


def phase_matrix(
    elements_at, u_out: np.ndarray, phi_out: np.ndarray, u_in: np.ndarray, phi_in: np.ndarray
) -> np.ndarray:
    """Phase matrix Z (..., 4, 4) between meridian-plane Stokes vectors of two directions.

    Z = L(alpha_out) F(T) L(alpha_in) (Hovenier et al. 2004, section 2.3, in their form
    L(pi - sigma2) F L(-sigma1)): L(alpha_in) turns the incident meridian basis onto the
    scattering plane, F scatters, L(alpha_out) turns the scattering plane onto the
    emerging meridian plane. The angles come from the vectors: the scattering plane's r is
    n = k_in x k_out / |k_in x k_out| and its l is k x n (so that r x l = k).
    ``elements_at(x)`` returns (F11, ..., F44) at the cosines x of the scattering angle.
    Directions must not be parallel (the scattering plane is undefined there).
    """
    k_in, k_out = direction(u_in, phi_in), direction(u_out, phi_out)
    k_in, k_out = np.broadcast_arrays(k_in, k_out)
    normal = np.cross(k_in, k_out)
    normal /= np.linalg.norm(normal, axis=-1, keepdims=True)
    l_in_s, l_out_s = np.cross(k_in, normal), np.cross(k_out, normal)
    l_in, r_in = meridian_basis(u_in, phi_in)
    l_out, r_out = meridian_basis(u_out, phi_out)
    # basis turned by alpha from (l, r): l' = cos a l + sin a r
    alpha_in = np.arctan2(_dot(l_in_s, r_in), _dot(l_in_s, l_in))
    alpha_out = np.arctan2(_dot(l_out, normal), _dot(l_out, l_out_s))
    cosine = np.clip(_dot(k_in, k_out), -1.0, 1.0)
    f = scattering_matrix_4x4(elements_at(cosine))
    return rotation(alpha_out) @ f @ rotation(alpha_in)


def rayleigh_phase_matrix_from_dipole(
    u_out: np.ndarray, phi_out: np.ndarray, u_in: np.ndarray, phi_in: np.ndarray
) -> np.ndarray:
    """Rayleigh's phase matrix (no depolarization) straight from dipole scattering.

    The dipole radiates E_out = (1 - k_out k_out^T) E_in (Chandrasekhar 1950, section 15; van
    de Hulst 1957, ch. 6), so the Jones matrix between the two meridian bases is made of the
    dot products of the basis vectors, and Z = (3/2) M(J) (the factor makes the mean of Z11
    over the sphere 1). No rotation angles, no scattering matrix: an independent check of
    :func:`phase_matrix`.
    """
    l_in, r_in = meridian_basis(u_in, phi_in)
    l_out, r_out = meridian_basis(u_out, phi_out)
    l_in, r_in, l_out, r_out = np.broadcast_arrays(l_in, r_in, l_out, r_out)
    jones = np.stack(
        [
            np.stack([_dot(l_out, l_in), _dot(l_out, r_in)], axis=-1),
            np.stack([_dot(r_out, l_in), _dot(r_out, r_in)], axis=-1),
        ],
        axis=-2,
    )
    return 1.5 * mueller_from_jones(jones)


def rayleigh_single_scattering(
    optical_thickness: float,
    mu: np.ndarray,
    mu0: float,
    phi_deg: np.ndarray,
    *,
    single_scattering_albedo: float = 1.0,
    depolarization: float = 0.0,
) -> tuple[np.ndarray, np.ndarray]:
    """Singly scattered Stokes vectors of a Rayleigh layer lit by an unpolarized beam.

    The exact single-scattering formulas (Chandrasekhar 1950, ch. I; Hovenier et al. 2004,
    ch. 3) for a homogeneous layer over a black surface, per unit beam irradiance:

        reflected   (u = +mu): w mu0 / (4 pi (mu + mu0)) (1 - exp(-t (1/mu + 1/mu0))) Z e1,
        transmitted (u = -mu): w mu0 / (4 pi (mu0 - mu)) (exp(-t/mu0) - exp(-t/mu)) Z e1,

    (the latter w t exp(-t/mu0) / (4 pi mu0) Z e1 at mu = mu0), with e1 = (1, 0, 0, 0),
    Z = :func:`phase_matrix` of the Rayleigh matrix and the beam along (u, phi) =
    (-mu0, 0). Returns the (reflected, transmitted) Stokes vectors, shape (..., 4).
    """
    mu, phi = np.broadcast_arrays(np.asarray(mu, float), np.asarray(phi_deg, float))

    def elements(x):
        return rayleigh_elements(x, depolarization)

    omega, tau = single_scattering_albedo, optical_thickness
    z_up = phase_matrix(elements, mu, phi, -mu0, 0.0)[..., :, 0]
    z_down = phase_matrix(elements, -mu, phi, -mu0, 0.0)[..., :, 0]
    up = omega * mu0 / (4.0 * np.pi * (mu + mu0)) * -np.expm1(-tau * (1.0 / mu + 1.0 / mu0))
    same = np.isclose(mu, mu0, rtol=0.0, atol=1e-13)
    safe = np.where(same, mu0 + 1.0, mu)
    down = np.where(
        same,
        omega * tau * np.exp(-tau / mu0) / (4.0 * np.pi * mu0),
        omega * mu0 / (4.0 * np.pi * (mu0 - safe)) * (np.exp(-tau / mu0) - np.exp(-tau / safe)),
    )
    return up[..., None] * z_up, down[..., None] * z_down
