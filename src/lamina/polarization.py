"""Scattering matrices as expansions in generalized spherical functions.

The scattering matrix of a macroscopically isotropic, mirror-symmetric medium, in the
Stokes parameters (I, Q, U, V) referred to the scattering plane, has six independent
elements, functions of the cosine x of the scattering angle T::

    F = [[F11, F12,   0,   0],
         [F12, F22,   0,   0],
         [  0,   0, F33, F34],
         [  0,   0, -F34, F44]].

lamina stores it as the expansion coefficients of de Rooij and van der Stap (1984) and
Hovenier, van der Mee and Domke (2004, ch. 2), on an ``element`` axis in the order
:data:`ELEMENTS` = ("alpha1", "alpha2", "alpha3", "alpha4", "beta1", "beta2")::

    F11       = sum_l (2l+1) alpha1_l P^l_00(x),
    F22 + F33 = sum_l (2l+1) (alpha2_l + alpha3_l) P^l_22(x),
    F22 - F33 = sum_l (2l+1) (alpha2_l - alpha3_l) P^l_2,-2(x),
    F44       = sum_l (2l+1) alpha4_l P^l_00(x),
    F12       = sum_l (2l+1) beta1_l P^l_02(x),
    F34       = sum_l (2l+1) beta2_l P^l_02(x).

The factor 2l + 1 is taken out of the published coefficients so that alpha1 is the scalar
``phase_moments`` chi_l of :mod:`lamina.phase` (alpha1_0 = 1, F11 averages to 1 over the
sphere). alpha2, alpha3, beta1 and beta2 start at l = 2 (P^l_22, P^l_2,-2 and P^l_02 vanish
for l < 2).

Generalized spherical functions
-------------------------------
P^l_mn(x) (Gelfand and Shapiro 1956, in the form of Hovenier et al. 2004, ch. 2) are
computed by the three-term recurrence in l (de Rooij and van der Stap 1984; Hovenier et
al. 2004)::

    l sqrt((l+1)^2 - m^2) sqrt((l+1)^2 - n^2) P^(l+1)_mn
        = (2l+1) (l (l+1) x - m n) P^l_mn - (l+1) sqrt(l^2 - m^2) sqrt(l^2 - n^2) P^(l-1)_mn,

started from P^(l0-1)_mn = 0 and P^l0_mn = c_mn ``(1 - x)^(|m-n|/2) (1 + x)^(|m+n|/2)`` at
l0 = ``max(|m|, |n|)``, with c_mn from the Rodrigues-type formula::

    P^l_mn(x) = A (1-x)^(-(n-m)/2) (1+x)^(-(n+m)/2) d^(l-n)/dx^(l-n) [(1-x)^(l-m) (1+x)^(l+m)],
    A = (-1)^(l-m) i^(n-m) / (2^l (l-m)!) sqrt((l-m)! (l+n)! / ((l+m)! (l-n)!)).

For m - n even (all that the expansion needs) the functions are real; P^l_00 = P_l (the
Legendre polynomials), P^l_02 = -sqrt((l-2)!/(l+2)!) P^2_l (associated Legendre function),
P^2_22 = (1 + x)^2 / 4, P^2_2,-2 = (1 - x)^2 / 4, and they are orthogonal,
``int_-1^1 P^l_mn P^k_mn dx = 2 / (2l+1) delta_lk``. ``|P^l_mn| <= 1`` on [-1, 1], so the upward
recurrence is stable there.

References
----------
de Rooij, W. A. and van der Stap, C. C. A. H. (1984), Expansion of Mie scattering matrices
in generalized spherical functions, Astron. Astrophys. 131, 237-248.
Gelfand, I. M. and Shapiro, Z. Ya. (1956), Representations of the group of rotations of
3-dimensional space and their applications, Amer. Math. Soc. Transl. 2, 207-316.
Hovenier, J. W., van der Mee, C. and Domke, H. (2004), Transfer of Polarized Light in
Planetary Atmospheres: Basic Concepts and Practical Methods, Kluwer (Springer).

Section and equation numbers of the references are cited from memory.
"""

from __future__ import annotations

from math import factorial
from typing import Literal, NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

from lamina.phase import (
    SCATTERING_MATRIX_ELEMENTS,
    TABULATED_NORMALIZATION_TOLERANCE,
    _as_real_array,
    _check_angles,
    _check_count,
    _check_interval,
    _index_text,
    _interval_nodes,
)

__all__ = [
    "ELEMENTS",
    "MATRIX_ELEMENTS",
    "ScatteringMatrix",
    "expansion_from_matrix",
    "generalized_spherical_functions",
    "matrix_from_expansion",
    "polarized_excess",
    "project_on_nodes",
]

#: Order of the expansion coefficients on the ``element`` axis.
ELEMENTS = SCATTERING_MATRIX_ELEMENTS
#: The six independent elements of the scattering matrix, in :class:`ScatteringMatrix` order.
MATRIX_ELEMENTS = ("F11", "F12", "F22", "F33", "F34", "F44")


class ScatteringMatrix(NamedTuple):
    """The six independent elements of a scattering matrix, each of shape (..., angle)."""

    f11: NDArray[np.float64]
    f12: NDArray[np.float64]
    f22: NDArray[np.float64]
    f33: NDArray[np.float64]
    f34: NDArray[np.float64]
    f44: NDArray[np.float64]


def _starting_constant(m: int, n: int) -> float:
    """c_mn of P^l0_mn = c_mn (1-x)^(|m-n|/2) (1+x)^(|m+n|/2), from the Rodrigues formula."""
    top = max(abs(m), abs(n))
    # the bracket (1-x)^(l-m) (1+x)^(l+m), differentiated l - n times, at x = 0 (where the
    # factors (1 -+ x)^(...) are 1, so the value there is the constant itself)
    bracket = np.polynomial.Polynomial([1.0, -1.0]) ** (top - m) * np.polynomial.Polynomial(
        [1.0, 1.0]
    ) ** (top + m)
    derivative = bracket.deriv(top - n)(0.0) if top - n > 0 else bracket(0.0)
    phase = (-1.0) ** (top - m) * (-1.0) ** ((n - m) // 2)  # i^(n-m) for even n - m
    norm = np.sqrt(
        factorial(top - m) * factorial(top + n) / (factorial(top + m) * factorial(top - n))
    )
    return float(phase * norm * derivative / (2.0**top * factorial(top - m)))


def generalized_spherical_functions(
    m: int, n: int, cosines: ArrayLike, n_moments: int
) -> NDArray[np.float64]:
    """Generalized spherical functions P^l_mn(x) for l = 0 .. n_moments - 1.

    Parameters
    ----------
    m, n : int
        The two indices; m - n must be even (the functions are then real).
    cosines : array_like
        x in [-1, 1], any shape.
    n_moments : int
        Number of degrees l = 0 .. n_moments - 1 to return (at least 1).

    Returns
    -------
    numpy.ndarray
        Shape ``np.shape(cosines) + (n_moments,)``; zero for l < ``max(|m|, |n|)``.

    Raises
    ------
    ValueError
        For m - n odd, x outside [-1, 1] or n_moments < 1.

    Notes
    -----
    The three-term recurrence of the module docstring, over whole arrays of x.

    Examples
    --------
    >>> generalized_spherical_functions(0, 0, 0.5, 3)  # the Legendre polynomials
    array([ 1.   ,  0.5  , -0.125])
    >>> generalized_spherical_functions(2, 2, 0.0, 3)
    array([0.  , 0.  , 0.25])
    """
    for name, value in (("m", m), ("n", n)):
        if isinstance(value, bool) or not isinstance(value, int | np.integer):
            raise TypeError(f"{name} must be an integer; got {value!r}")
    m, n = int(m), int(n)
    if (m - n) % 2:
        raise ValueError(f"m - n must be even (real functions); got m = {m}, n = {n}")
    n_moments = _check_count("n_moments", n_moments, 1)
    x = _as_real_array("cosines", cosines)
    _check_interval("cosines", x, -1.0, 1.0, closed_low=True, closed_high=True)
    table = np.zeros(x.shape + (n_moments,))
    top = max(abs(m), abs(n))
    if top >= n_moments:
        return table
    start = _starting_constant(m, n)
    table[..., top] = (
        start * (1.0 - x) ** (abs(m - n) / 2.0) * (1.0 + x) ** (abs(m + n) / 2.0)
    )
    if top == 0 and n_moments > 1:
        table[..., 1] = x  # the recurrence is degenerate at l = 0 (m = n = 0 only)
    first = max(top, 1)
    for degree in range(first, n_moments - 1):
        lower = np.sqrt(max(degree**2 - m**2, 0) * max(degree**2 - n**2, 0))
        upper = degree * np.sqrt(((degree + 1) ** 2 - m**2) * ((degree + 1) ** 2 - n**2))
        table[..., degree + 1] = (
            (2 * degree + 1) * (degree * (degree + 1) * x - m * n) * table[..., degree]
            - (degree + 1) * lower * table[..., degree - 1]
        ) / upper
    return table


def _function_tables(cosines: np.ndarray, n_moments: int) -> tuple[np.ndarray, ...]:
    """P^l_00, P^l_02, P^l_22 and P^l_2,-2 at ``cosines``, each (..., moment)."""
    return tuple(
        generalized_spherical_functions(m, n, cosines, n_moments)
        for m, n in ((0, 0), (0, 2), (2, 2), (2, -2))
    )


def project_on_nodes(
    matrix: ScatteringMatrix, cosines: np.ndarray, weights: np.ndarray, n_moments: int
) -> NDArray[np.float64]:
    """Expansion coefficients from matrix values at quadrature nodes (not normalised).

    ``matrix`` holds the elements at the nodes, each (..., node); ``weights`` integrate
    over x in [-1, 1] with the factor 1/2 included (they sum to 1), so that
    alpha1_l = sum_k weights_k F11(x_k) P_l(x_k). Returns (..., n_moments, 6).
    """
    legendre, zero_two, two_two, two_minus_two = _function_tables(cosines, n_moments)
    weighted = [element * weights for element in matrix]
    f11, f12, f22, f33, f34, f44 = weighted
    plus = (f22 + f33) @ two_two
    minus = (f22 - f33) @ two_minus_two
    return np.stack(
        [
            f11 @ legendre,
            0.5 * (plus + minus),
            0.5 * (plus - minus),
            f44 @ legendre,
            f12 @ zero_two,
            f34 @ zero_two,
        ],
        axis=-1,
    )


def _check_coefficients(coefficients: ArrayLike, name: str = "coefficients") -> np.ndarray:
    array = _as_real_array(name, coefficients)
    if array.ndim < 2 or array.shape[-1] != len(ELEMENTS) or array.shape[-2] == 0:
        raise ValueError(
            f"{name} must have shape (..., moment, element) with {len(ELEMENTS)} elements "
            f"{ELEMENTS} and at least one moment; got shape {array.shape}"
        )
    return array


def matrix_from_expansion(
    coefficients: ArrayLike, angle_deg: ArrayLike
) -> ScatteringMatrix:
    """Evaluate the scattering matrix from its expansion coefficients.

    Parameters
    ----------
    coefficients : array_like
        Shape (..., moment, element), elements in the order of :data:`ELEMENTS`.
    angle_deg : array_like
        Scattering angles in degrees, in [0, 180], any shape.

    Returns
    -------
    ScatteringMatrix
        F11, F12, F22, F33, F34, F44, each of shape
        ``coefficients.shape[:-2] + np.shape(angle_deg)``.

    Examples
    --------
    >>> from lamina.phase import rayleigh_matrix
    >>> matrix = matrix_from_expansion(rayleigh_matrix(), [0.0, 90.0])
    >>> matrix.f11, matrix.f12
    (array([1.5 , 0.75]), array([ 0.  , -0.75]))
    """
    array = _check_coefficients(coefficients)
    angle = _as_real_array("angle_deg", angle_deg)
    _check_interval("angle_deg", angle, 0.0, 180.0, closed_low=True, closed_high=True)
    n_moments = array.shape[-2]
    scaled = array * (2.0 * np.arange(n_moments) + 1.0)[:, np.newaxis]
    legendre, zero_two, two_two, two_minus_two = _function_tables(
        np.cos(np.deg2rad(angle)), n_moments
    )

    def series(table: np.ndarray, column: np.ndarray) -> np.ndarray:
        # (angle..., moment) x (..., moment) -> (..., angle...)
        return np.tensordot(column, table, axes=([-1], [-1]))

    alpha1, alpha2, alpha3, alpha4, beta1, beta2 = np.moveaxis(scaled, -1, 0)
    plus = series(two_two, alpha2 + alpha3)
    minus = series(two_minus_two, alpha2 - alpha3)
    return ScatteringMatrix(
        f11=series(legendre, alpha1),
        f12=series(zero_two, beta1),
        f22=0.5 * (plus + minus),
        f33=0.5 * (plus - minus),
        f34=series(zero_two, beta2),
        f44=series(legendre, alpha4),
    )


def _interpolated(
    tables: list[np.ndarray], fraction: np.ndarray, interpolation: str
) -> list[np.ndarray]:
    """Every element between the table angles, (..., interval, node).

    "linear" interpolates each element linearly in angle. "log" interpolates F11 linearly
    in log(F11) and the other elements as ratios F_ij / F11 linearly, which follows a
    forward peak and keeps ``|F_ij| <= F11`` wherever the table has it; intervals with F11 = 0
    at an end fall back to linear.
    """

    def linear(table: np.ndarray) -> np.ndarray:
        lower, upper = table[..., :-1, np.newaxis], table[..., 1:, np.newaxis]
        return lower + (upper - lower) * fraction

    plain = [linear(table) for table in tables]
    if interpolation == "linear":
        return plain
    f11 = tables[0]
    lower, upper = f11[..., :-1, np.newaxis], f11[..., 1:, np.newaxis]
    positive = (lower > 0.0) & (upper > 0.0)
    safe_lower, safe_upper = np.where(positive, lower, 1.0), np.where(positive, upper, 1.0)
    log_f11 = np.exp(np.log(safe_lower) + (np.log(safe_upper) - np.log(safe_lower)) * fraction)
    result = [np.where(positive, log_f11, plain[0])]
    safe_f11 = np.where(f11 > 0.0, f11, 1.0)
    for table, fallback in zip(tables[1:], plain[1:], strict=True):
        ratio = linear(table / safe_f11)
        result.append(np.where(positive, log_f11 * ratio, fallback))
    return result


def expansion_from_matrix(
    angle_deg: ArrayLike,
    f11: ArrayLike,
    f12: ArrayLike,
    f22: ArrayLike,
    f33: ArrayLike,
    f34: ArrayLike,
    f44: ArrayLike,
    n_moments: int,
    *,
    normalize: bool = False,
    interpolation: Literal["log", "linear"] = "log",
    normalization_tolerance: float = TABULATED_NORMALIZATION_TOLERANCE,
) -> NDArray[np.float64]:
    """Expansion coefficients of a scattering matrix given as a table against angle.

    The matrix counterpart of :func:`lamina.phase.from_tabulated`.

    Parameters
    ----------
    angle_deg : array_like
        Scattering angles in degrees, 1-D, strictly increasing, from 0 to 180.
    f11, f12, f22, f33, f34, f44 : array_like
        The elements at those angles, each of shape (..., n_angle) (broadcasting together);
        leading axes are separate matrices. F11 >= 0, averaging to 1 over the sphere, and
        the elements referred to the scattering plane as in the module docstring.
    n_moments : int
        Number of moments l = 0 .. n_moments - 1 to return, at least 1.
    normalize : bool, optional
        If True, divide every element by the mean of F11 over the sphere instead of
        checking that it is 1.
    interpolation : {"log", "linear"}, optional
        How the table is read between its angles: "log" (default) takes log(F11) and the
        ratios F_ij / F11 linear in angle, "linear" every element linear in angle.
    normalization_tolerance : float, optional
        Largest accepted relative departure of the mean of F11 from 1 (default 1e-2).

    Returns
    -------
    numpy.ndarray
        Coefficients (..., n_moments, 6) in the order of :data:`ELEMENTS`, alpha1_0 = 1
        exactly.

    Raises
    ------
    ValueError
        For a bad angle table, elements of the wrong length, negative or all-zero F11, or a
        normalisation off by more than the tolerance.

    Notes
    -----
    One Gauss-Legendre rule per table interval, in angle, with as many nodes as
    :func:`lamina.phase.from_tabulated` takes (12 + ceil((n_moments + 1) w / 2), w the widest
    interval in radians), so the coefficients are those of the interpolant to about
    round-off. Each coefficient is (1/2) int F P^l_mn dx with the pairing of the module
    docstring (orthogonality of the generalized spherical functions).

    Examples
    --------
    >>> from lamina.phase import rayleigh_matrix
    >>> angle = np.linspace(0.0, 180.0, 181)
    >>> table = matrix_from_expansion(rayleigh_matrix(), angle)
    >>> coefficients = expansion_from_matrix(angle, *table, n_moments=3)
    >>> bool(np.allclose(coefficients, rayleigh_matrix(), atol=1e-4))
    True
    """
    n_moments = _check_count("n_moments", n_moments, 1)
    if interpolation not in ("log", "linear"):
        raise ValueError(f"interpolation must be 'log' or 'linear'; got {interpolation!r}")
    tolerance = float(_as_real_array("normalization_tolerance", normalization_tolerance))
    if not tolerance > 0.0:
        raise ValueError(f"normalization_tolerance must be > 0; got {tolerance:g}")
    angle = _check_angles(angle_deg)
    names = ("f11", "f12", "f22", "f33", "f34", "f44")
    tables = [_as_real_array(name, value) for name, value in zip(
        names, (f11, f12, f22, f33, f34, f44), strict=True)]
    for name, table in zip(names, tables, strict=True):
        if table.ndim == 0 or table.shape[-1] != angle.size:
            raise ValueError(
                f"{name} must have {angle.size} entries on its last axis (one per angle_deg); "
                f"got shape {table.shape}"
            )
    try:
        tables = list(np.broadcast_arrays(*tables))
    except ValueError as error:
        raise ValueError(
            "f11 ... f44 must broadcast together; got shapes "
            f"{[table.shape for table in tables]}"
        ) from error
    negative = tables[0] < 0.0
    if np.any(negative):
        bad_value, where = _index_text(tables[0], negative)
        raise ValueError(f"f11 must be >= 0; got {bad_value:g}{where}")

    theta_edges = np.deg2rad(angle)
    widths = np.diff(theta_edges)
    unit_nodes, unit_weights = np.polynomial.legendre.leggauss(
        _interval_nodes(float(widths.max()), n_moments)
    )
    fraction = 0.5 * (unit_nodes + 1.0)
    theta = theta_edges[:-1, np.newaxis] + widths[:, np.newaxis] * fraction
    weights = (0.25 * widths[:, np.newaxis] * unit_weights * np.sin(theta)).ravel()
    shape = tables[0].shape[:-1] + (-1,)
    nodes = [values.reshape(shape) for values in _interpolated(tables, fraction, interpolation)]
    mean = nodes[0] @ weights
    if np.any(mean <= 0.0):
        _, where = _index_text(mean, mean <= 0.0)
        raise ValueError(f"f11 must not be all zero{where}")
    if not normalize:
        off = np.abs(mean - 1.0) > tolerance
        if np.any(off):
            bad_mean, where = _index_text(mean, off)
            raise ValueError(
                "f11 must have mean 1 over the sphere (integral 4 pi over 4 pi sr) to within "
                f"{tolerance:g}; got mean {bad_mean:.6g}{where}; pass normalize=True to rescale"
            )
    coefficients = project_on_nodes(
        ScatteringMatrix(*nodes), np.cos(theta).ravel(), weights, n_moments
    )
    coefficients = coefficients / mean[..., np.newaxis, np.newaxis]
    coefficients[..., 0, 0] = 1.0
    return coefficients


#: Default tolerance of :func:`polarized_excess`, relative to the largest F11.
EXCESS_TOLERANCE = 1e-3
#: Scattering angles (degrees) at which :func:`polarized_excess` compares the elements.
EXCESS_CHECK_ANGLES = np.linspace(0.0, 180.0, 721)


def polarized_excess(
    coefficients: ArrayLike, tolerance: float = EXCESS_TOLERANCE
) -> tuple[tuple[int, ...], str, float, float, float] | None:
    """The first matrix whose polarized elements exceed F11 somewhere, or None.

    Every element of a physical scattering matrix satisfies ``|F_ij| <= F11`` (Hovenier, van
    der Mee and Domke 2004, section 3.2). The matrices (..., moment, element) are evaluated
    every 0.25 degrees; an element counts as exceeding F11 where
    ``|F_ij| > F11 + tolerance * max(F11)``. The default tolerance, 1e-3, lets through the
    truncation error of series cut where the scalar phase function is still positive: for
    spheres ``F22 = F11`` and ``|F33| = |F44| = F11`` at 0 and 180 degrees exactly, so their cut
    series cross F11 by about the size of the last terms (1e-5 to 1e-3 of max(F11) for Mie
    distributions given 12 to 128 moments); a matrix with a wrong sign or normalisation
    exceeds F11 by far more.

    Returns
    -------
    tuple or None
        ``(index, element, angle_deg, value, f11)`` of the largest excess of the first
        offending matrix (``index`` over the leading axes), or None if there is none.
    """
    matrix = matrix_from_expansion(coefficients, EXCESS_CHECK_ANGLES)
    f11 = matrix.f11
    allowance = tolerance * np.max(np.abs(f11), axis=-1, keepdims=True)
    others = np.stack([np.abs(element) for element in matrix[1:]])  # (element, ..., angle)
    excess = others - f11 - allowance
    flagged = np.any(excess > 0.0, axis=(0, -1))
    if not np.any(flagged):
        return None
    index = tuple(int(i) for i in np.argwhere(flagged)[0]) if flagged.ndim else ()
    local = excess[(slice(None), *index)]
    element, angle = np.unravel_index(int(np.argmax(local)), local.shape)
    value = np.stack(matrix[1:])[(element, *index, angle)]
    return (index, MATRIX_ELEMENTS[element + 1], float(EXCESS_CHECK_ANGLES[angle]),
            float(value), float(f11[(*index, angle)]))
