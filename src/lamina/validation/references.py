"""Independent reference solutions for testing and validating lamina.

Everything here is written from the published mathematics with numpy and scipy, and
shares no code with lamina's discrete-ordinates solver, so that agreement between the two
means something. Conventions follow lamina's design notes:

* a collimated beam of irradiance ``S`` on a plane normal to it falls on the top of the
  medium with zenith cosine ``mu0``; radiances are returned in units of ``S`` per sr;
* ``mu`` is the cosine of the zenith angle of the line of propagation of the emerging
  radiance (upward for reflection, downward for transmission);
* ``phi`` (degrees) is the azimuth of the propagation direction measured from the azimuth of
  the beam's propagation, so 0 is the forward-scattering side and 180 the backscattering
  side (lamina's ``view_azimuth``);
* phase functions are given by Legendre moments chi_l, ``P(cos T) = sum_l (2l+1) chi_l
  P_l(cos T)``, averaging to 1 over the sphere.

The reflection function ``R`` used inside is that of van de Hulst (1980): the reflected
radiance is ``I = mu0 R S / pi``, and ``R(mu, mu0, phi)`` is symmetric in ``mu`` and ``mu0``
(reciprocity). Its azimuthal Fourier terms are ``R = sum_m (2 - delta_m0) R^m cos(m phi)``.

References
----------
Ambartsumian, V. A. (1943), Diffuse reflection of light by a foggy medium, Dokl. Akad. Nauk
SSSR 38, 229-232.
Chandrasekhar, S. (1950), Radiative Transfer, Oxford University Press (Dover 1960),
chapters IV-VI.
van de Hulst, H. C. (1980), Multiple Light Scattering, vols. 1-2, Academic Press.
Hansen, J. E. and Travis, L. D. (1974), Light scattering in planetary atmospheres, Space Sci.
Rev. 16, 527-610 (adding-doubling, section 3; Rayleigh depolarization).
de Haan, J. F., Bosma, P. B. and Hovenier, J. W. (1987), The adding method for multiple
scattering calculations of polarized light, Astron. Astrophys. 183, 371-391.
Goody, R. M. and Yung, Y. L. (1989), Atmospheric Radiation, 2nd ed., Oxford University Press.
"""

from __future__ import annotations

import functools
from collections.abc import Callable
from typing import NamedTuple

import numpy as np
import numpy.typing as npt
from scipy.special import expn, exprel

__all__ = [
    "DoublingResult",
    "chandrasekhar_h",
    "doubling_reflection_transmission",
    "h_function",
    "h_moments",
    "isothermal_slab_flux_emissivity",
    "isothermal_slab_radiance",
    "plane_albedo",
    "rayleigh_phase_moments",
    "rayleigh_semi_infinite_reflection",
    "semi_infinite_isotropic_reflection",
    "spherical_albedo",
]

ArrayLike = npt.ArrayLike

# --------------------------------------------------------------------------------------
# validation helpers
# --------------------------------------------------------------------------------------


def _as_array(value: ArrayLike, name: str) -> np.ndarray:
    try:
        array = np.asarray(value, dtype=float)
    except (TypeError, ValueError) as error:
        raise ValueError(f"{name} must be a real number or array of them; got {value!r}") from error
    if not np.all(np.isfinite(array)):
        raise ValueError(f"{name} must be finite; got {_first(array, ~np.isfinite(array))}")
    return array


def _first(array: np.ndarray, bad: np.ndarray) -> str:
    index = tuple(int(i) for i in np.argwhere(bad)[0])
    text = repr(float(array[index]))
    return f"{text} at index {index}" if index else text


def _check_interval(
    value: ArrayLike, name: str, low: float, high: float, closed_low: bool, closed_high: bool
) -> np.ndarray:
    array = _as_array(value, name)
    bad = (array < low) | (array > high)
    if not closed_low:
        bad |= array == low
    if not closed_high:
        bad |= array == high
    if np.any(bad):
        interval = f"{'[' if closed_low else '('}{low:g}, {high:g}{']' if closed_high else ')'}"
        raise ValueError(f"{name} must lie in {interval}; got {_first(array, bad)}")
    return array


def _check_albedo(value: ArrayLike, allow_zero: bool = False) -> float:
    array = _check_interval(value, "single_scattering_albedo", 0.0, 1.0, allow_zero, True)
    if array.ndim != 0:
        raise ValueError(
            f"single_scattering_albedo must be a scalar here; got an array of shape {array.shape}"
        )
    return float(array)


# --------------------------------------------------------------------------------------
# quadrature and Legendre functions
# --------------------------------------------------------------------------------------


@functools.lru_cache(maxsize=4)
def _graded_gauss_grid(
    ratio: float = 10.0, smallest: float = 1e-9, accuracy: float = 1e-13, min_nodes: int = 3
) -> tuple[np.ndarray, np.ndarray]:
    """Composite Gauss-Legendre nodes and weights on [0, 1], graded geometrically to 0.

    The functions integrated against ``1 / (mu + mu')`` here (H-functions, reflection
    functions) behave like ``mu log mu`` at 0 and have a pole at ``mu' = -mu``: a single
    Gauss rule converges slowly for them. Panels ``[a, ratio a]`` keep every such
    singularity at least one panel-start away, so on each panel the Gauss error falls like
    ``rho^(-2n)`` with ``rho = z + sqrt(z^2 - 1)``, ``z = (ratio + 1) / (ratio - 1)``
    (Bernstein-ellipse bound). Each panel gets the fewest nodes that make its absolute
    contribution accurate to ``accuracy`` (the bound is pessimistic); the first panel
    [0, smallest] contributes O(smallest). With at least 3 nodes a panel integrates
    polynomials of degree 5 exactly, so the Rayleigh phase kernel (degree 4) is integrated
    exactly and the discrete conservative problem conserves energy. The defaults give 165
    nodes and reproduce the exact integral representation of H to about 1e-15.
    """
    panels = int(np.ceil(np.log(1.0 / smallest) / np.log(ratio)))
    edges = np.concatenate(([0.0], ratio ** -np.arange(panels, -1, -1.0)))
    z = (ratio + 1.0) / (ratio - 1.0)
    rho = z + np.sqrt(z * z - 1.0)
    nodes, weights = [], []
    for a, b in zip(edges[:-1], edges[1:], strict=True):
        count = int(np.clip(np.ceil(np.log(b / accuracy) / (2.0 * np.log(rho))) + 1, min_nodes, 24))
        x, w = np.polynomial.legendre.leggauss(count)
        nodes.append(a + 0.5 * (b - a) * (x + 1.0))
        weights.append(0.5 * (b - a) * w)
    mu, weight = np.concatenate(nodes), np.concatenate(weights)
    mu.setflags(write=False)
    weight.setflags(write=False)
    return mu, weight


def _normalized_legendre(m: int, lmax: int, x: np.ndarray) -> np.ndarray:
    """sqrt((l-m)!/(l+m)!) P_l^m(x) for l = 0..lmax (zero for l < m), shape (lmax+1, x.size).

    Standard three-term recurrence in l for the normalised functions, started from
    ``sqrt((2m)!) / (2^m m!) (1 - x^2)^(m/2)``; stable for any degree. The Condon-Shortley
    sign is dropped: only products of two such functions with the same m are used.
    """
    x = np.asarray(x, dtype=float).ravel()
    out = np.zeros((lmax + 1, x.size))
    if m > lmax:
        return out
    sine = np.sqrt(np.clip(1.0 - x * x, 0.0, None))
    start = np.ones_like(x)
    for k in range(1, m + 1):
        start = start * np.sqrt((2.0 * k - 1.0) / (2.0 * k)) * sine
    out[m] = start
    if m + 1 <= lmax:
        out[m + 1] = x * np.sqrt(2.0 * m + 1.0) * start
    for degree in range(m + 2, lmax + 1):
        out[degree] = (
            (2.0 * degree - 1.0) * x * out[degree - 1]
            - np.sqrt((degree - 1.0) ** 2 - m * m) * out[degree - 2]
        ) / np.sqrt(degree * degree - m * m)
    return out


def _phase_fourier_kernel(m: int, moments: np.ndarray, x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """P^m(x, y) = sum_{l>=m} (2l+1) chi_l (l-m)!/(l+m)! P_l^m(x) P_l^m(y).

    With it, the phase function between directions of cosines x and y (signed, upward
    positive) and azimuth difference phi is ``sum_m (2 - delta_m0) P^m(x, y) cos(m phi)``
    (addition theorem of spherical harmonics).
    """
    lmax = moments.size - 1
    lx = _normalized_legendre(m, lmax, x)
    ly = _normalized_legendre(m, lmax, y)
    coefficient = (2.0 * np.arange(lmax + 1) + 1.0) * moments
    return (lx * coefficient[:, None]).T @ ly


def _check_moments(phase_moments: ArrayLike) -> np.ndarray:
    moments = _as_array(phase_moments, "phase_moments")
    if moments.ndim != 1 or moments.size < 1:
        raise ValueError(
            f"phase_moments must be a 1-D array [chi_0, chi_1, ...]; got shape {moments.shape}"
        )
    if abs(moments[0] - 1.0) > 1e-12:
        raise ValueError(f"phase_moments must start with chi_0 = 1; got {moments[0]!r}")
    bad = np.abs(moments) > 1.0 + 1e-12
    if np.any(bad):
        raise ValueError(f"phase_moments must satisfy |chi_l| <= 1; got {_first(moments, bad)}")
    return moments


# --------------------------------------------------------------------------------------
# Chandrasekhar's H-functions
# --------------------------------------------------------------------------------------


def _solve_h_on_grid(
    psi: np.ndarray, root: float, nodes: np.ndarray, weights: np.ndarray
) -> np.ndarray:
    """Newton iteration for 1/H(mu) = root + int_0^1 mu' Psi(mu') H(mu') / (mu + mu') dmu'.

    ``root = sqrt(1 - 2 int Psi)``. This form of the H-equation (Chandrasekhar 1950,
    ch. V, eq. 11 of section 39) stays well conditioned at ``root = 0`` (conservative
    scattering), where Newton's method on the other form loses quadratic convergence.
    """
    kernel = (weights * nodes * psi)[None, :] / (nodes[:, None] + nodes[None, :])
    h = np.ones_like(nodes)
    for _ in range(60):
        residual = 1.0 / h - root - kernel @ h
        jacobian = -np.diag(1.0 / h**2) - kernel
        step = np.linalg.solve(jacobian, -residual)
        h = h + step
        if np.max(np.abs(step) / h) < 1e-15:
            break
    else:  # pragma: no cover - Newton converges in < 10 steps for every admissible Psi
        raise RuntimeError("H-function iteration did not converge")
    return h


def _evaluate_h(
    mu: np.ndarray,
    root: float,
    psi: np.ndarray,
    h: np.ndarray,
    nodes: np.ndarray,
    weights: np.ndarray,
) -> np.ndarray:
    """H at arbitrary mu in [0, 1] from the same equation, with the grid solution inside."""
    flat = mu.ravel()
    integrand = (weights * nodes * psi * h)[None, :] / (flat[:, None] + nodes[None, :])
    return (1.0 / (root + integrand.sum(axis=1))).reshape(mu.shape)


def h_function(
    mu: ArrayLike,
    characteristic_function: Callable[[np.ndarray], np.ndarray],
    zeroth_moment: float | None = None,
) -> np.ndarray:
    """Chandrasekhar's H-function for an arbitrary characteristic function.

    Solves ``H(mu) = 1 + mu H(mu) int_0^1 Psi(mu') H(mu') / (mu + mu') dmu'`` in the
    equivalent form ``1/H(mu) = sqrt(1 - 2 Psi_0) + int_0^1 mu' Psi(mu') H(mu') /
    (mu + mu') dmu'`` with ``Psi_0 = int_0^1 Psi`` (Chandrasekhar 1950, ch. V), by Newton's
    method on a graded composite Gauss grid of 165 nodes, then evaluates the same
    equation at the requested ``mu``. Accurate to about 1e-14 for smooth ``Psi``.

    Parameters
    ----------
    mu : array_like
        Cosines in [0, 1].
    characteristic_function : callable
        ``Psi(mu)`` for an array of cosines; non-negative with ``int_0^1 Psi <= 1/2``.
    zeroth_moment : float, optional
        The exact value of ``int_0^1 Psi``. Give it when it is 1/2 (conservative
        scattering): computed by quadrature it carries a rounding error ``e`` that becomes
        ``sqrt(e)`` in H.

    Returns
    -------
    numpy.ndarray
        H at ``mu``, same shape.

    Examples
    --------
    >>> from lamina.validation.references import h_function
    >>> round(float(h_function(1.0, lambda m: 0.5 + 0 * m, zeroth_moment=0.5)), 5)
    2.90781
    """
    cosines = _check_interval(mu, "mu", 0.0, 1.0, True, True)
    nodes, weights = _graded_gauss_grid()
    psi = np.asarray(characteristic_function(nodes), dtype=float)
    if psi.shape != nodes.shape or not np.all(np.isfinite(psi)) or np.any(psi < 0.0):
        raise ValueError(
            "characteristic_function must return finite values >= 0 with the shape of its input"
        )
    psi_0 = float(weights @ psi) if zeroth_moment is None else float(zeroth_moment)
    if not 0.0 <= psi_0 <= 0.5 + 1e-12:
        raise ValueError(
            "characteristic_function must integrate to a value in [0, 1/2] over [0, 1]; "
            f"got {psi_0!r}"
        )
    root = float(np.sqrt(max(1.0 - 2.0 * psi_0, 0.0)))
    h = _solve_h_on_grid(psi, root, nodes, weights)
    return _evaluate_h(cosines, root, psi, h, nodes, weights)


@functools.lru_cache(maxsize=32)
def _isotropic_h_grid(albedo: float) -> np.ndarray:
    nodes, weights = _graded_gauss_grid()
    psi = np.full_like(nodes, 0.5 * albedo)
    h = _solve_h_on_grid(psi, np.sqrt(1.0 - albedo), nodes, weights)
    h.setflags(write=False)
    return h


def chandrasekhar_h(mu: ArrayLike, single_scattering_albedo: float) -> np.ndarray:
    """Chandrasekhar's H-function for isotropic scattering (characteristic function w/2).

    Solves ``1/H(mu) = sqrt(1 - w) + (w/2) int_0^1 mu' H(mu') / (mu + mu') dmu'``
    (Chandrasekhar 1950, ch. V) by Newton's method on a graded composite Gauss grid and
    evaluates the same equation at ``mu``. The form with ``sqrt(1 - w)`` is well
    conditioned up to and including ``w = 1``; the result agrees with Chandrasekhar's exact
    integral representation ``ln H(mu) = -(mu/pi) int_0^(pi/2) ln(1 - w theta cot theta) /
    (cos^2 theta + mu^2 sin^2 theta) dtheta`` to about 1e-14.

    Parameters
    ----------
    mu : array_like
        Cosines in [0, 1].
    single_scattering_albedo : float
        ``w`` in (0, 1].

    Returns
    -------
    numpy.ndarray
        H(mu), same shape as ``mu``.

    Examples
    --------
    >>> from lamina.validation.references import chandrasekhar_h
    >>> [round(float(v), 5) for v in chandrasekhar_h([0.1, 1.0], 1.0)]
    [1.24735, 2.90781]
    """
    albedo = _check_albedo(single_scattering_albedo)
    cosines = _check_interval(mu, "mu", 0.0, 1.0, True, True)
    nodes, weights = _graded_gauss_grid()
    psi = np.full_like(nodes, 0.5 * albedo)
    return _evaluate_h(
        cosines, np.sqrt(1.0 - albedo), psi, _isotropic_h_grid(albedo), nodes, weights
    )


def h_moments(single_scattering_albedo: float, highest: int = 1) -> tuple[float, ...]:
    """Moments ``alpha_n = int_0^1 H(mu) mu^n dmu`` of the isotropic H-function.

    Returns ``(alpha_0, alpha_1)`` by default, up to ``alpha_highest`` otherwise. Exact
    relations for checking: ``alpha_0 = (2/w) (1 - sqrt(1 - w))`` and, for ``w = 1``,
    ``alpha_1 = 2 / sqrt(3)``; Hopf's constant of the Milne problem is
    ``q(inf) = alpha_2 / alpha_1 = 0.710446`` (Chandrasekhar 1950, ch. V).

    Examples
    --------
    >>> from lamina.validation.references import h_moments
    >>> [round(v, 6) for v in h_moments(1.0)]
    [2.0, 1.154701]
    """
    albedo = _check_albedo(single_scattering_albedo)
    if int(highest) != highest or highest < 0:
        raise ValueError(f"highest must be an integer >= 0; got {highest!r}")
    nodes, weights = _graded_gauss_grid()
    h = _isotropic_h_grid(albedo)
    return tuple(float(weights @ (nodes**n * h)) for n in range(int(highest) + 1))


def semi_infinite_isotropic_reflection(
    mu: ArrayLike, mu0: ArrayLike, single_scattering_albedo: float
) -> np.ndarray:
    """Radiance reflected by a semi-infinite isotropically scattering medium.

    ``I(0, mu) / S = (w / (4 pi)) mu0 / (mu + mu0) H(mu) H(mu0)`` (Chandrasekhar 1950,
    ch. IV-V), independent of azimuth; in units of S per sr.

    Parameters
    ----------
    mu, mu0 : array_like
        Cosines of the emerging direction and of the beam, in (0, 1]; broadcast together.
    single_scattering_albedo : float
        ``w`` in (0, 1].
    """
    albedo = _check_albedo(single_scattering_albedo)
    view = _check_interval(mu, "mu", 0.0, 1.0, False, True)
    sun = _check_interval(mu0, "mu0", 0.0, 1.0, False, True)
    return (
        albedo
        / (4.0 * np.pi)
        * sun
        / (view + sun)
        * chandrasekhar_h(view, albedo)
        * chandrasekhar_h(sun, albedo)
    )


def plane_albedo(mu0: ArrayLike, single_scattering_albedo: float) -> np.ndarray:
    """Plane albedo of a semi-infinite isotropic medium, ``1 - H(mu0) sqrt(1 - w)``.

    Chandrasekhar (1950), ch. V; van de Hulst (1980). Equals 1 for ``w = 1``.
    """
    albedo = _check_albedo(single_scattering_albedo)
    sun = _check_interval(mu0, "mu0", 0.0, 1.0, True, True)
    return 1.0 - chandrasekhar_h(sun, albedo) * np.sqrt(1.0 - albedo)


def spherical_albedo(single_scattering_albedo: float) -> float:
    """Spherical albedo of a semi-infinite isotropic medium, ``1 - 2 alpha_1 sqrt(1 - w)``.

    van de Hulst (1980); ``alpha_1`` is the first moment of H (:func:`h_moments`).
    """
    albedo = _check_albedo(single_scattering_albedo)
    return 1.0 - 2.0 * h_moments(albedo)[1] * np.sqrt(1.0 - albedo)


# --------------------------------------------------------------------------------------
# isothermal non-scattering slab
# --------------------------------------------------------------------------------------


def isothermal_slab_flux_emissivity(optical_thickness: ArrayLike) -> np.ndarray:
    """Flux emissivity of an isothermal non-scattering slab, ``1 - 2 E3(t)``.

    The emergent flux is ``pi B (1 - 2 E3(t))`` (Chandrasekhar 1950; Goody and Yung 1989),
    with ``E3`` the exponential integral (``scipy.special.expn``).
    """
    tau = _check_interval(optical_thickness, "optical_thickness", 0.0, np.inf, True, False)
    return 1.0 - 2.0 * expn(3, tau)


def isothermal_slab_radiance(
    optical_thickness: ArrayLike, mu: ArrayLike, planck_radiance: ArrayLike = 1.0
) -> np.ndarray:
    """Radiance emerging from an isothermal non-scattering slab, ``B (1 - exp(-t/mu))``.

    Chandrasekhar (1950); Goody and Yung (1989). ``mu`` in (0, 1], broadcast with the
    thickness and ``planck_radiance`` (any units; the result has the same).
    """
    tau = _check_interval(optical_thickness, "optical_thickness", 0.0, np.inf, True, False)
    cosine = _check_interval(mu, "mu", 0.0, 1.0, False, True)
    source = _as_array(planck_radiance, "planck_radiance")
    return -source * np.expm1(-tau / cosine)


# --------------------------------------------------------------------------------------
# Rayleigh scattering, semi-infinite: Ambartsumian's nonlinear integral equation
# --------------------------------------------------------------------------------------


def rayleigh_phase_moments(depolarization: float = 0.0) -> np.ndarray:
    """Legendre moments [1, 0, chi_2] of the scalar Rayleigh phase function.

    ``gamma = rho / (2 - rho)``, ``chi_2 = (1 - gamma) / (10 (1 + 2 gamma))`` (Hansen and
    Travis 1974); ``chi_2 = 0.1`` without depolarization (Chandrasekhar 1950).
    """
    rho = float(_check_interval(depolarization, "depolarization", 0.0, 1.0, True, False))
    gamma = rho / (2.0 - rho)
    return np.array([1.0, 0.0, (1.0 - gamma) / (10.0 * (1.0 + 2.0 * gamma))])


class _PsiSolution(NamedTuple):
    """Chandrasekhar's psi-functions of one Fourier term on the graded grid."""

    degrees: np.ndarray  # l with a nonzero coefficient, shape (r,)
    signed: np.ndarray  # a_l s_l = (2l+1) chi_l (-1)^(l+m), shape (r,)
    psi: np.ndarray  # psi_l at the grid nodes, shape (r, N)


@functools.lru_cache(maxsize=64)
def _semi_infinite_psi(m: int, albedo: float, moments: tuple[float, ...]) -> _PsiSolution:
    """Solve Ambartsumian's equation for Fourier term m of a semi-infinite medium.

    Ambartsumian's principle of invariance for a semi-infinite medium gives, per Fourier
    term (van de Hulst 1980, ch. 8; Chandrasekhar 1950, ch. IV), with ``A = P^m(mu, mu')``
    and ``B = P^m(mu, -mu')``,

        (mu + mu0) R^m(mu, mu0) = (w/4) [ B(mu, mu0) + 2 mu int R^m(mu, v) A(v, mu0) dv
                                  + 2 mu0 int A(mu, v) R^m(v, mu0) dv
                                  + 4 mu mu0 int int R^m(mu, v) B(v, u) R^m(u, mu0) du dv ],

    integrals over (0, 1]. Writing ``P^m(x, y) = sum_l a_l L_l(x) L_l(y)`` (``a_l =
    (2l+1) chi_l``, ``L_l`` the normalised associated Legendre functions, parity
    ``s_l = (-1)^(l+m)``), the bracket factorises and

        (mu + mu0) R^m(mu, mu0) = (w/4) sum_l a_l s_l psi_l(mu) psi_l(mu0),
        psi_l(mu) = L_l(mu) + (w/2) s_l mu sum_k a_k s_k psi_k(mu)
                    int_0^1 psi_k(v) L_l(v) / (mu + v) dv,

    Chandrasekhar's psi-functions (for isotropic scattering psi_0 = H). These few nonlinear
    equations are solved by Newton's method on the graded grid. In the conservative m = 0
    case the Jacobian is singular at the solution (two solutions merge at w = 1), where
    Newton would converge only linearly and to about the square root of the rounding
    level; there w is made an unknown and the exact condition "spherical albedo = 1" is
    added (the standard bordered system for a fold), which converges quadratically.
    """
    chi = np.asarray(moments)
    nodes, weights = _graded_gauss_grid()
    degrees = np.arange(m, chi.size)
    amplitude = (2.0 * degrees + 1.0) * chi[m:]
    keep = amplitude != 0.0
    degrees, amplitude = degrees[keep], amplitude[keep]
    parity = (-1.0) ** (degrees + m)
    signed = amplitude * parity
    size, rank = nodes.size, degrees.size
    if rank == 0:
        return _PsiSolution(degrees, signed, np.zeros((0, size)))
    legendre = _normalized_legendre(m, int(degrees.max()), nodes)[degrees]  # (r, N)
    kernel = weights[None, :] / (nodes[:, None] + nodes[None, :])  # (N, N)
    psi = legendre.copy()
    identity = np.eye(rank * size)
    conservative = m == 0 and albedo == 1.0
    # V[p, j] = 2 c_p mu_p / (mu_p + mu_j): the plane albedo at node j is
    # (w/4) sum_k a_k s_k psi_k(j) sum_p V[p, j] psi_k(p).
    albedo_kernel = (2.0 * weights * nodes)[:, None] / (nodes[:, None] + nodes[None, :])
    flux_weight = 2.0 * weights * nodes
    w = albedo
    for _ in range(100):
        # integral[k, l, i] = int psi_k(v) L_l(v) / (mu_i + v) dv
        integral = np.einsum("ij,kj,lj->kli", kernel, psi, legendre, optimize=True)
        coupling = np.einsum("k,ki,kli->li", signed, psi, integral)
        factor = 0.5 * w * parity[:, None] * nodes[None, :]  # (l, i)
        residual = (psi - legendre - factor * coupling).ravel()
        # d coupling[l, i] / d psi[k, j]
        derivative = np.einsum("k,kli,ij->likj", signed, integral, np.eye(size)) + np.einsum(
            "k,ki,ij,lj->likj", signed, psi, kernel, legendre, optimize=True
        )
        jacobian = identity - (factor[:, :, None, None] * derivative).reshape(
            rank * size, rank * size
        )
        if conservative:
            # The conservative m = 0 problem has a singular Jacobian at its solution (a
            # fold: two solutions merge at w = 1), where Newton converges only linearly
            # and to about the square root of the rounding level. Standard remedy for a
            # fold: let w float and add the exact condition that the spherical albedo
            # 2 int A(mu0) mu0 dmu0 is 1; the bordered Jacobian is regular there, Newton
            # converges quadratically, and w returns to 1 up to rounding.
            moment = psi @ albedo_kernel  # (k, j)
            plane = 0.25 * w * (signed[:, None] * psi * moment).sum(axis=0)  # albedo at j
            spherical_residual = flux_weight @ plane - 1.0
            # d plane[j] / d psi[k, p] = (w/4) a_k s_k (V[p, j] psi_k(j) + delta_jp moment[k, j])
            gradient = (
                0.25
                * w
                * signed[:, None]
                * ((albedo_kernel * psi[:, None, :]) @ flux_weight + moment * flux_weight)
            )
            bordered = np.zeros((rank * size + 1, rank * size + 1))
            bordered[:-1, :-1] = jacobian
            bordered[:-1, -1] = -(factor / w * coupling).ravel()
            bordered[-1, :-1] = gradient.ravel()
            bordered[-1, -1] = (flux_weight @ plane) / w
            step_all = np.linalg.solve(bordered, -np.concatenate((residual, [spherical_residual])))
            step = step_all[:-1].reshape(rank, size)
            w += step_all[-1]
        else:
            step = np.linalg.solve(jacobian, -residual).reshape(rank, size)
        psi = psi + step
        if np.max(np.abs(step)) < 1e-14 * np.max(np.abs(psi)):
            break
    else:  # pragma: no cover - converges in fewer than ten steps
        raise RuntimeError(f"Ambartsumian iteration for Fourier term {m} did not converge")
    psi.setflags(write=False)
    return _PsiSolution(degrees, signed, psi)


def _psi_at(m: int, albedo: float, solution: _PsiSolution, mu: np.ndarray) -> np.ndarray:
    """psi_l at arbitrary cosines from the grid solution, shape (r, mu.size).

    At a fixed mu the psi-equations are linear in the r values psi_l(mu) once the
    integrals are taken over the grid solution: an r x r solve per cosine.
    """
    nodes, weights = _graded_gauss_grid()
    rank = solution.degrees.size
    lmax = int(solution.degrees.max())
    legendre_grid = _normalized_legendre(m, lmax, nodes)[solution.degrees]
    legendre = _normalized_legendre(m, lmax, mu)[solution.degrees]
    kernel = weights[None, :] / (mu[:, None] + nodes[None, :])  # (n, N)
    # integral[i, l, k] = int psi_k(v) L_l(v) / (mu_i + v) dv
    integral = np.einsum("ij,kj,lj->ilk", kernel, solution.psi, legendre_grid, optimize=True)
    parity = (-1.0) ** (solution.degrees + m)
    # matrix[i, l, k] = delta_lk - (w/2) s_l mu_i a_k s_k integral[i, l, k]
    coefficient = parity[None, :, None] * mu[:, None, None] * solution.signed[None, None, :]
    matrix = np.eye(rank)[None] - 0.5 * albedo * coefficient * integral
    return np.linalg.solve(matrix, legendre.T[:, :, None])[:, :, 0].T


def _semi_infinite_reflection_term(
    m: int, albedo: float, moments: np.ndarray, mu: np.ndarray, mu0: np.ndarray
) -> np.ndarray:
    """R^m(mu, mu0) of a semi-infinite medium for paired 1-D arrays mu, mu0."""
    solution = _semi_infinite_psi(m, albedo, tuple(float(c) for c in moments))
    if solution.degrees.size == 0:
        return np.zeros(mu.size)
    psi_view = _psi_at(m, albedo, solution, mu)
    psi_sun = _psi_at(m, albedo, solution, mu0)
    numerator = 0.25 * albedo * (solution.signed[:, None] * psi_view * psi_sun).sum(axis=0)
    return numerator / (mu + mu0)


def rayleigh_semi_infinite_reflection(
    mu: ArrayLike,
    mu0: ArrayLike,
    phi: ArrayLike,
    depolarization: float = 0.0,
    single_scattering_albedo: float = 1.0,
) -> np.ndarray:
    """Radiance reflected by a semi-infinite Rayleigh-scattering medium (scalar).

    The Rayleigh phase function without polarization (moments from
    :func:`rayleigh_phase_moments`) in a semi-infinite medium, by default conservative.
    The reflection function is found from Ambartsumian's nonlinear integral equation, one
    Fourier term at a time (m = 0, 1, 2), reduced to Chandrasekhar's psi-functions and
    solved by Newton's method on a graded composite Gauss grid of 165 cosines (see
    ``_semi_infinite_psi`` for the equations); the requested cosines are then evaluated
    from the same equations. Accuracy about 1e-13 (checked against H-functions for the
    rank-one terms m = 1, 2, against the exact isotropic solution and against doubling).

    Parameters
    ----------
    mu : array_like
        Cosine of the reflected direction, in (0, 1].
    mu0 : array_like
        Cosine of the incident beam's zenith angle, in (0, 1].
    phi : array_like
        Azimuth of the reflected propagation direction from the beam's propagation
        azimuth, degrees (0 = forward side, 180 = backscattering side).
    depolarization : float
        Depolarization factor rho in [0, 1).
    single_scattering_albedo : float
        ``w`` in (0, 1].

    Returns
    -------
    numpy.ndarray
        Reflected radiance in units of S per sr (S the beam's irradiance normal to it),
        with the broadcast shape of ``mu``, ``mu0`` and ``phi``.

    Examples
    --------
    >>> from lamina.validation.references import rayleigh_semi_infinite_reflection
    >>> float(rayleigh_semi_infinite_reflection(0.5, 0.5, 180.0)) > 0
    True
    """
    albedo = _check_albedo(single_scattering_albedo)
    moments = rayleigh_phase_moments(depolarization)
    view = _check_interval(mu, "mu", 0.0, 1.0, False, True)
    sun = _check_interval(mu0, "mu0", 0.0, 1.0, False, True)
    azimuth = _as_array(phi, "phi")
    view, sun, azimuth = np.broadcast_arrays(view, sun, azimuth)
    # Work on the distinct (mu, mu0) pairs only; the azimuth enters through cos(m phi).
    pairs, inverse = np.unique(
        np.stack((view.ravel(), sun.ravel()), axis=1), axis=0, return_inverse=True
    )
    inverse = inverse.ravel()
    radians = np.deg2rad(azimuth.ravel())
    reflection = np.zeros(view.size)
    for m in range(moments.size):
        term = _semi_infinite_reflection_term(m, albedo, moments, pairs[:, 0], pairs[:, 1])
        reflection += (1.0 if m == 0 else 2.0) * term[inverse] * np.cos(m * radians)
    return (sun.ravel() * reflection / np.pi).reshape(view.shape)


# --------------------------------------------------------------------------------------
# adding-doubling for a finite homogeneous layer over a black surface
# --------------------------------------------------------------------------------------


class DoublingResult(NamedTuple):
    """Output of :func:`doubling_reflection_transmission` (all per unit beam irradiance S).

    Attributes
    ----------
    reflected_radiance : numpy.ndarray
        Radiance leaving the top, per sr, at the requested (mu, mu0, phi).
    transmitted_radiance : numpy.ndarray
        Diffuse radiance leaving the bottom (direct beam excluded), per sr.
    reflected_flux : numpy.ndarray
        Upward flux at the top, shape of ``mu0``.
    transmitted_flux : numpy.ndarray
        Diffuse downward flux at the bottom, shape of ``mu0``.
    direct_flux : numpy.ndarray
        Direct-beam flux at the bottom, ``mu0 exp(-t/mu0)``, shape of ``mu0``.
    """

    reflected_radiance: np.ndarray
    transmitted_radiance: np.ndarray
    reflected_flux: np.ndarray
    transmitted_flux: np.ndarray
    direct_flux: np.ndarray


def _double_fourier_term(
    m: int,
    optical_thickness: float,
    albedo: float,
    moments: np.ndarray,
    nodes: np.ndarray,
    weights: np.ndarray,
    start_thickness: float,
) -> tuple[np.ndarray, np.ndarray]:
    """R^m and T^m (diffuse) kernels of a homogeneous layer on all nodes, by doubling."""
    doublings = max(0, int(np.ceil(np.log2(optical_thickness / start_thickness))))
    tau = optical_thickness / 2.0**doublings
    same = _phase_fourier_kernel(m, moments, nodes, nodes)
    opposite = _phase_fourier_kernel(m, moments, nodes, -nodes)
    inverse = 1.0 / nodes
    out_in = inverse[:, None] * inverse[None, :]
    # Exact single scattering in the thin starting layer (the neglected double scattering
    # is O(tau^2)); exprel(-z) = (1 - exp(-z)) / z keeps mu = mu0 regular.
    reflection = (
        0.25
        * albedo
        * opposite
        * tau
        * out_in
        * exprel(-tau * (inverse[:, None] + inverse[None, :]))
    )
    transmission = (
        0.25
        * albedo
        * same
        * tau
        * out_in
        * np.exp(-tau * inverse)[:, None]
        * exprel(-tau * (inverse[None, :] - inverse[:, None]))
    )
    # Kernels compose as (X * Y)(mu, mu0) = 2 int X(mu, mu') Y(mu', mu0) mu' dmu' for every
    # Fourier term; zero-weight (user) nodes take no part in the integrals.
    weight = 2.0 * nodes * weights
    identity = np.eye(nodes.size)
    for _ in range(doublings):
        direct = np.exp(-tau * inverse)
        rw = reflection * weight
        # Multiple reflections between the two halves: S = Q + Q W S with Q = R W R.
        bounce = rw @ reflection
        series = np.linalg.solve(identity - bounce * weight, bounce)
        down = transmission + series * direct[None, :] + (series * weight) @ transmission
        up = reflection * direct[None, :] + rw @ down
        reflection = reflection + direct[:, None] * up + (transmission * weight) @ up
        transmission = (
            direct[:, None] * down + transmission * direct[None, :] + (transmission * weight) @ down
        )
        tau *= 2.0
    return reflection, transmission


def doubling_reflection_transmission(
    optical_thickness: float,
    single_scattering_albedo: float,
    phase_moments: ArrayLike,
    mu: ArrayLike,
    mu0: ArrayLike,
    phi: ArrayLike,
    *,
    quadrature_nodes: int = 48,
    start_thickness: float = 1e-14,
) -> DoublingResult:
    """Reflection and transmission of a homogeneous layer over a black surface by doubling.

    The adding-doubling method (van de Hulst 1980, ch. 4; Hansen and Travis 1974; de Haan
    et al. 1987): a layer of thickness ``t / 2^n <= start_thickness`` is given its exact
    single-scattering reflection and transmission, and ``n`` doublings, each combining two
    identical layers with all their inter-reflections, build the layer of thickness ``t``.
    Each azimuthal Fourier term m = 0 .. L (L the last phase moment; the series ends
    there exactly) is doubled separately on a Gauss-Legendre grid of ``quadrature_nodes``
    cosines in (0, 1); the requested cosines join the grid with zero weight, so they are
    computed exactly as the grid directions without disturbing the integrals. Fluxes are
    integrated over the grid.

    Parameters
    ----------
    optical_thickness : float
        Layer optical thickness, > 0.
    single_scattering_albedo : float
        In [0, 1].
    phase_moments : array_like
        Legendre moments [1, chi_1, ..., chi_L].
    mu : array_like
        Cosine of the emerging direction (up for reflection, down for transmission),
        in (0, 1].
    mu0 : array_like
        Cosine of the beam's zenith angle, in (0, 1].
    phi : array_like
        Azimuth from the beam's propagation azimuth, degrees (0 = forward side).
    quadrature_nodes : int
        Gauss-Legendre nodes in (0, 1) per hemisphere. The discrete scheme conserves
        energy to rounding when ``2 * quadrature_nodes > L``.
    start_thickness : float
        Upper bound on the thickness of the starting layer; the error of the
        single-scattering start is of order ``t * start_thickness`` in R and T.

    Returns
    -------
    DoublingResult
        Radiances with the broadcast shape of ``mu``, ``mu0``, ``phi``; fluxes with the
        shape of ``mu0``.

    Examples
    --------
    >>> from lamina.validation.references import doubling_reflection_transmission
    >>> out = doubling_reflection_transmission(1.0, 1.0, [1.0, 0.0, 0.1], 0.5, 0.5, 0.0)
    >>> round(float(out.reflected_flux + out.transmitted_flux + out.direct_flux), 10)
    0.5
    """
    tau = float(_check_interval(optical_thickness, "optical_thickness", 0.0, np.inf, False, False))
    albedo = _check_albedo(single_scattering_albedo, allow_zero=True)
    moments = _check_moments(phase_moments)
    view = _check_interval(mu, "mu", 0.0, 1.0, False, True)
    sun = _check_interval(mu0, "mu0", 0.0, 1.0, False, True)
    azimuth = _as_array(phi, "phi")
    if int(quadrature_nodes) != quadrature_nodes or quadrature_nodes < 2:
        raise ValueError(f"quadrature_nodes must be an integer >= 2; got {quadrature_nodes!r}")
    start = float(_check_interval(start_thickness, "start_thickness", 0.0, 1.0, False, True))
    sun_shape = sun.shape
    view, sun_b, azimuth = np.broadcast_arrays(view, sun, azimuth)
    x, w = np.polynomial.legendre.leggauss(int(quadrature_nodes))
    grid, grid_weights = 0.5 * (x + 1.0), 0.5 * w
    users, inverse = np.unique(
        np.concatenate((view.ravel(), sun_b.ravel(), sun.ravel())), return_inverse=True
    )
    nodes = np.concatenate((grid, users))
    weights = np.concatenate((grid_weights, np.zeros(users.size)))
    n_view = view.size
    row = grid.size + inverse[:n_view]
    column = grid.size + inverse[n_view : 2 * n_view]
    flux_column = grid.size + inverse[2 * n_view :]
    radians = np.deg2rad(azimuth.ravel())
    reflected = np.zeros(n_view)
    transmitted = np.zeros(n_view)
    reflected_flux = np.zeros(sun.size)
    transmitted_flux = np.zeros(sun.size)
    for m in range(moments.size):
        if albedo == 0.0:
            break
        reflection, transmission = _double_fourier_term(
            m, tau, albedo, moments, nodes, weights, start
        )
        cosine = (1.0 if m == 0 else 2.0) * np.cos(m * radians)
        reflected += cosine * reflection[row, column]
        transmitted += cosine * transmission[row, column]
        if m == 0:
            # F / (S mu0) = 2 int R^0(mu, mu0) mu dmu over the grid.
            flux_weight = 2.0 * grid * grid_weights
            reflected_flux = flux_weight @ reflection[: grid.size, flux_column]
            transmitted_flux = flux_weight @ transmission[: grid.size, flux_column]
    sun_flat = sun.ravel()
    scale = sun_b.ravel() / np.pi
    return DoublingResult(
        reflected_radiance=(scale * reflected).reshape(view.shape),
        transmitted_radiance=(scale * transmitted).reshape(view.shape),
        reflected_flux=(sun_flat * reflected_flux).reshape(sun_shape),
        transmitted_flux=(sun_flat * transmitted_flux).reshape(sun_shape),
        direct_flux=(sun_flat * np.exp(-tau / sun_flat)).reshape(sun_shape),
    )
