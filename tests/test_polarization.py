"""Tests of lamina.polarization and lamina.phase.rayleigh_matrix against outside sources.

Section and equation numbers of the references are cited from memory.
"""

from __future__ import annotations

import numpy as np
import pytest
import sympy
from scipy.special import eval_legendre, gammaln, lpmv, roots_legendre

from lamina import phase, polarization
from polarized_references import generalized_spherical, matrix_elements, rayleigh_elements

PAIRS = [(0, 0), (0, 2), (2, 2), (2, -2), (2, 0), (-2, 2), (-2, -2)]
COSINES = np.linspace(-1.0, 1.0, 41)


def test_p00_is_legendre():
    # P^l_00 = P_l (Hovenier, van der Mee and Domke 2004, ch. 2); scipy's Legendre polynomials
    table = polarization.generalized_spherical_functions(0, 0, COSINES, 60)
    expected = np.stack([eval_legendre(degree, COSINES) for degree in range(60)], axis=-1)
    np.testing.assert_allclose(table, expected, rtol=0, atol=1e-13)


def test_p02_is_associated_legendre():
    # P^l_02 = -sqrt((l-2)!/(l+2)!) P^2_l (Hovenier et al. 2004, from the Rodrigues formula
    # of their ch. 2; from memory); scipy's lpmv carries the Condon-Shortley phase
    # (-1)^m, which is 1 for m = 2
    table = polarization.generalized_spherical_functions(0, 2, COSINES, 60)
    for degree in range(2, 60):
        norm = np.exp(0.5 * (gammaln(degree - 1) - gammaln(degree + 3)))
        np.testing.assert_allclose(
            table[:, degree], -norm * lpmv(2, degree, COSINES), rtol=0, atol=1e-12
        )
    np.testing.assert_array_equal(table[:, :2], 0.0)


def test_low_degree_closed_forms():
    # P^2_02 = -sqrt(6)/4 (1 - x^2), P^2_22 = (1 + x)^2 / 4, P^2_2,-2 = (1 - x)^2 / 4
    # (Hovenier et al. 2004, closed forms of the generalized spherical functions at l = 2)
    x = COSINES
    cases = {(0, 2): -np.sqrt(6.0) / 4.0 * (1.0 - x**2), (2, 2): (1.0 + x) ** 2 / 4.0,
             (2, -2): (1.0 - x) ** 2 / 4.0}
    for (m, n), expected in cases.items():
        table = polarization.generalized_spherical_functions(m, n, x, 3)
        np.testing.assert_allclose(table[:, 2], expected, rtol=0, atol=1e-15)


def _rodrigues(l_degree: int, m: int, n: int, x: np.ndarray) -> np.ndarray:
    """The Rodrigues-type formula of Hovenier et al. (2004, ch. 2), symbolically (sympy)."""
    s = sympy.Symbol("x")
    a = ((-1) ** (l_degree - m) * sympy.I ** (n - m)
         / (2**l_degree * sympy.factorial(l_degree - m))
         * sympy.sqrt(sympy.factorial(l_degree - m) * sympy.factorial(l_degree + n)
                      / (sympy.factorial(l_degree + m) * sympy.factorial(l_degree - n))))
    bracket = (1 - s) ** (l_degree - m) * (1 + s) ** (l_degree + m)
    expression = sympy.simplify(
        a * (1 - s) ** sympy.Rational(-(n - m), 2) * (1 + s) ** sympy.Rational(-(n + m), 2)
        * sympy.diff(bracket, s, l_degree - n))
    function = sympy.lambdify(s, sympy.re(sympy.expand(expression)), "numpy")
    return np.broadcast_to(np.asarray(function(x), dtype=float), x.shape)


@pytest.mark.parametrize(("m", "n"), [(0, 2), (2, 2), (2, -2)])
def test_rodrigues_formula_low_degrees(m, n):
    # the recurrence against the Rodrigues-type formula itself, l = 2 .. 6, at inner points
    x = np.linspace(-0.95, 0.95, 9)
    table = polarization.generalized_spherical_functions(m, n, x, 7)
    for degree in range(2, 7):
        np.testing.assert_allclose(table[:, degree], _rodrigues(degree, m, n, x), atol=1e-13)


@pytest.mark.parametrize(("m", "n"), PAIRS)
def test_against_wigner_d_through_jacobi(m, n):
    # P^l_mn = i^(n-m) d^l_mn (Hovenier et al. 2004, ch. 2), d from scipy's Jacobi polynomials
    # (Varshalovich et al. 1988, section 4.3.1)
    table = polarization.generalized_spherical_functions(m, n, COSINES, 80)
    for degree in range(80):
        np.testing.assert_allclose(
            table[:, degree], generalized_spherical(degree, m, n, COSINES), atol=1e-12
        )


@pytest.mark.parametrize(("m", "n"), PAIRS)
def test_orthogonality(m, n):
    # int_-1^1 P^l_mn P^k_mn dx = 2/(2l+1) delta_lk (Hovenier et al. 2004, ch. 2), by scipy's
    # Gauss-Legendre rule (exact here: the products are polynomials of degree < 2 * 64)
    x, w = roots_legendre(64)
    table = polarization.generalized_spherical_functions(m, n, x, 50)
    gram = (table * w[:, None]).T @ table
    start = max(abs(m), abs(n))
    expected = np.diag(np.where(np.arange(50) >= start, 2.0 / (2 * np.arange(50) + 1), 0.0))
    np.testing.assert_allclose(gram, expected, rtol=0, atol=1e-13)


def test_bounded_by_one():
    # |P^l_mn| <= 1 on [-1, 1]: they are matrix elements of a unitary representation
    for m, n in PAIRS:
        assert np.abs(polarization.generalized_spherical_functions(m, n, COSINES, 200)).max() <= (
            1.0 + 1e-12)


@pytest.mark.parametrize("rho", [0.0, 0.0279, 0.1, 0.5])
def test_rayleigh_matrix_against_hansen_travis(rho):
    # Hansen and Travis (1974) eqs. 2.15-2.16: the closed form in Delta, Delta'
    angle = np.linspace(0.0, 180.0, 361)
    rebuilt = polarization.matrix_from_expansion(phase.rayleigh_matrix(rho), angle)
    expected = rayleigh_elements(np.cos(np.deg2rad(angle)), rho)
    for value, reference in zip(rebuilt, expected, strict=True):
        np.testing.assert_allclose(value, reference, rtol=0, atol=1e-14)
    # the same with the independent scipy-Jacobi expansion of the tests
    for value, reference in zip(matrix_elements(phase.rayleigh_matrix(rho),
                                                np.cos(np.deg2rad(angle))), expected,
                                strict=True):
        np.testing.assert_allclose(value, reference, rtol=0, atol=1e-14)
    # alpha1 is the scalar phase function's moments
    np.testing.assert_allclose(phase.rayleigh_matrix(rho, 6)[:, 0], phase.rayleigh(rho, 6),
                               rtol=0, atol=1e-16)


def test_rayleigh_matrix_shapes_and_errors():
    assert phase.rayleigh_matrix([0.0, 0.03], 5).shape == (2, 5, 6)
    with pytest.raises(ValueError, match="depolarization must lie in"):
        phase.rayleigh_matrix(1.0)
    with pytest.raises(ValueError, match="n_moments must be an integer >= 3"):
        phase.rayleigh_matrix(0.0, 2)


def _smooth_matrix(x, g=0.5):
    """A Henyey-Greenstein F11 (Henyey and Greenstein 1941) with Rayleigh-like polarization."""
    f11 = (1.0 - g**2) / (1.0 + g**2 - 2.0 * g * x) ** 1.5
    ratio = 1.0 + x**2
    return (f11, -0.5 * f11 * (1.0 - x**2) / ratio, 0.9 * f11, f11 * 1.8 * x / ratio,
            0.2 * f11 * (1.0 - x**2) / ratio, 0.8 * f11 * 2.0 * x / ratio)


def test_round_trip_smooth_matrix():
    angle = np.linspace(0.0, 180.0, 3601)
    table = _smooth_matrix(np.cos(np.deg2rad(angle)))
    coefficients = polarization.expansion_from_matrix(angle, *table, 64, interpolation="linear")
    # alpha1 of Henyey-Greenstein is g^l (Henyey and Greenstein 1941); the table is linear
    # between 0.05-degree steps, an error of order 1e-6 near the forward peak
    np.testing.assert_allclose(coefficients[:, 0], 0.5 ** np.arange(64), rtol=0, atol=2e-6)
    check = np.linspace(0.0, 180.0, 97)
    rebuilt = polarization.matrix_from_expansion(coefficients, check)
    for value, reference in zip(rebuilt, _smooth_matrix(np.cos(np.deg2rad(check))),
                                strict=True):
        np.testing.assert_allclose(value, reference, rtol=0, atol=2e-5)


@pytest.mark.parametrize("interpolation", ["log", "linear"])
def test_round_trip_rayleigh(interpolation):
    angle = np.linspace(0.0, 180.0, 1801)
    table = rayleigh_elements(np.cos(np.deg2rad(angle)), 0.03)  # Hansen and Travis (1974)
    coefficients = polarization.expansion_from_matrix(angle, *table, 6,
                                                      interpolation=interpolation)
    expected = np.zeros((6, 6))
    expected[:3] = phase.rayleigh_matrix(0.03)
    np.testing.assert_allclose(coefficients, expected, rtol=0, atol=1e-6)


def test_expansion_normalisation_and_errors():
    angle = np.linspace(0.0, 180.0, 181)
    table = list(rayleigh_elements(np.cos(np.deg2rad(angle))))
    doubled = [2.0 * value for value in table]
    with pytest.raises(ValueError, match="f11 must have mean 1"):
        polarization.expansion_from_matrix(angle, *doubled, 3)
    np.testing.assert_allclose(
        polarization.expansion_from_matrix(angle, *doubled, 3, normalize=True),
        polarization.expansion_from_matrix(angle, *table, 3), rtol=0, atol=1e-15)
    with pytest.raises(ValueError, match="f12 must have 181 entries"):
        polarization.expansion_from_matrix(angle, table[0], table[1][:-1], *table[2:], 3)
    with pytest.raises(ValueError, match="angle_deg must span 0 to 180"):
        polarization.expansion_from_matrix(angle[:-1], *[t[:-1] for t in table], 3)
    negative = [-table[0], *table[1:]]
    with pytest.raises(ValueError, match="f11 must be >= 0"):
        polarization.expansion_from_matrix(angle, *negative, 3)
    with pytest.raises(ValueError, match="m - n must be even"):
        polarization.generalized_spherical_functions(0, 1, 0.5, 3)
    with pytest.raises(ValueError, match="coefficients must have shape"):
        polarization.matrix_from_expansion(np.zeros((3, 4)), [0.0])


def test_polarized_excess():
    assert polarization.polarized_excess(phase.rayleigh_matrix()) is None
    too_polarized = phase.rayleigh_matrix()
    too_polarized[2, 4] *= 1.5  # |F12| = 1.125 > F11 = 0.75 at 90 degrees
    index, element, angle, value, f11 = polarization.polarized_excess(too_polarized)
    assert (index, element, angle) == ((), "F12", 90.0)
    assert value == pytest.approx(-1.125) and f11 == pytest.approx(0.75)
