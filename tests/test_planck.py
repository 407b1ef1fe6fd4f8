"""Tests for lamina.planck against outside references.

References used here:
* ``scipy.integrate.quad`` of the Planck spectral function (a general-purpose library);
* the Stefan-Boltzmann law, integral of B over the spectrum = sigma T^4 / pi, with sigma
  and all constants from ``scipy.constants`` (CODATA via scipy);
* the Planck formula itself written out in the test with ``scipy.constants`` (CODATA).
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
import scipy.constants as const
from scipy.integrate import quad

from lamina.planck import (
    band_radiance,
    spectral_radiance_wavelength,
    spectral_radiance_wavenumber,
    total_radiance,
)

# Second radiation constant in cm K, from CODATA via scipy.
C2_CM = 100.0 * const.h * const.c / const.k

TEMPERATURES = [3.0, 30.0, 77.0, 220.0, 300.0, 1000.0, 6000.0]


def planck_wavenumber_reference(temperature: float, wavenumber_cm: float) -> float:
    """Planck's law per cm-1, written from the formula with CODATA constants (scipy)."""
    nu = 100.0 * wavenumber_cm
    x = C2_CM * wavenumber_cm / temperature
    if x > 700.0:
        return 100.0 * 2.0 * const.h * const.c**2 * nu**3 * np.exp(-x)
    return 100.0 * 2.0 * const.h * const.c**2 * nu**3 / np.expm1(x)


def quad_band(temperature: float, lo: float, hi: float) -> float:
    """Band integral by scipy.integrate.quad, split where the integrand changes scale."""
    # Break points at fixed x = c2 nu / T so the peak (x ~ 2.8) and the exponential
    # fall-off are resolved whatever the band; beyond x = 750 the integrand underflows.
    x_breaks = np.array([0.05, 0.3, 1.0, 2.8, 6.0, 12.0, 25.0, 50.0, 100.0, 200.0, 400.0, 750.0])
    nu_breaks = x_breaks * temperature / C2_CM
    top = min(hi, 750.0 * temperature / C2_CM)
    if top <= lo:
        return 0.0
    inner = nu_breaks[(nu_breaks > lo) & (nu_breaks < top)]
    edges = np.unique(np.concatenate(([lo], inner, [top])))
    total = 0.0
    for a, b in itertools.pairwise(edges):
        value, _ = quad(
            lambda nu: planck_wavenumber_reference(temperature, nu),
            a,
            b,
            epsabs=0.0,
            epsrel=1e-13,
            limit=200,
        )
        total += value
    return total


BANDS = [
    (0.0, 1e5),  # everything that matters at these temperatures
    (0.0, 10.0),  # far small-x end for hot bodies
    (10.0, 250.0),
    (250.0, 500.0),
    (500.0, 2000.0),  # wide thermal infrared
    (667.0, 667.001),  # 1e-3 cm-1 wide
    (1000.0, 1000.001),
    (2500.0, 2600.0),
    (5000.0, 20000.0),  # far tail for cold bodies
    (12000.0, 12000.001),
    (1.0, 1.001),
]


@pytest.mark.parametrize(("lo", "hi"), BANDS)
@pytest.mark.parametrize("temperature", TEMPERATURES)
def test_band_matches_quadrature(temperature: float, lo: float, hi: float) -> None:
    # Reference: scipy.integrate.quad of Planck's law (general-purpose library).
    expected = quad_band(temperature, lo, hi)
    got = band_radiance(temperature, lo, hi)
    if expected == 0.0:
        assert got < 1e-300
    else:
        np.testing.assert_allclose(got, expected, rtol=1e-10)


@pytest.mark.parametrize("temperature", [*TEMPERATURES, 0.5, 1e5])
def test_whole_spectrum_is_stefan_boltzmann(temperature: float) -> None:
    # Stefan-Boltzmann law with sigma from scipy.constants (CODATA via scipy).
    expected = const.sigma * temperature**4 / np.pi
    np.testing.assert_allclose(band_radiance(temperature, 0.0, np.inf), expected, rtol=1e-13)
    np.testing.assert_allclose(total_radiance(temperature), expected, rtol=1e-15)


def test_adjacent_bands_add_up() -> None:
    # Additivity of the integral (exact): split points straddle the series switch (x = 2)
    # and the narrow-band rule (width < 1 in x).
    rng = np.random.default_rng(7)
    temperature = rng.uniform(3.0, 6000.0, size=200)
    cuts = np.sort(rng.uniform(0.0, 12.0, size=(200, 4)), axis=1) * temperature[:, None] / C2_CM
    # Add some extremely narrow and adjacent pieces.
    cuts[:50, 2] = cuts[:50, 1] * (1 + 1e-7)
    pieces = sum(
        band_radiance(temperature, cuts[:, k], cuts[:, k + 1]) for k in range(cuts.shape[1] - 1)
    )
    whole = band_radiance(temperature, cuts[:, 0], cuts[:, -1])
    np.testing.assert_allclose(pieces, whole, rtol=1e-13)
    # 0 .. cut .. inf adds up to sigma T^4 / pi (CODATA via scipy).
    split = cuts[:, 2]
    halves = band_radiance(temperature, 0.0, split) + band_radiance(temperature, split, np.inf)
    np.testing.assert_allclose(halves, const.sigma * temperature**4 / np.pi, rtol=1e-13)


def test_band_broadcasts_and_is_vectorised() -> None:
    temperature = np.array([[200.0], [300.0], [0.0]])
    lo = np.array([0.0, 500.0, 1000.0])
    hi = np.array([500.0, 1000.0, np.inf])
    got = band_radiance(temperature, lo, hi)
    assert got.shape == (3, 3)
    # Element by element equals the scalar calls (exact).
    for i, j in itertools.product(range(3), range(3)):
        assert got[i, j] == band_radiance(temperature[i, 0], lo[j], hi[j])
    # T = 0 K radiates nothing (exact), including the band starting at 0.
    np.testing.assert_array_equal(got[2], 0.0)
    assert band_radiance(0.0, 0.0, np.inf) == 0.0


def test_narrow_band_is_width_times_spectral_value() -> None:
    # Midpoint rule error is O(width^3): for a 1e-6 cm-1 band it is far below 1e-12
    # (exact calculus), so band / width equals Planck's law at the centre.
    lo, hi = 900.0, 900.000001
    centre, width = 0.5 * (lo + hi), hi - lo  # the width of the bands as stored (exact)
    got = band_radiance(250.0, lo, hi) / width
    np.testing.assert_allclose(got, planck_wavenumber_reference(250.0, centre), rtol=1e-9)


def test_spectral_wavenumber_matches_planck_law() -> None:
    # Planck's law written from the formula, CODATA constants via scipy.
    for temperature, nu in itertools.product(TEMPERATURES, [0.01, 1.0, 100.0, 1000.0, 3000.0]):
        np.testing.assert_allclose(
            spectral_radiance_wavenumber(temperature, nu),
            planck_wavenumber_reference(temperature, nu),
            rtol=1e-13,
        )


def test_spectral_wavelength_matches_planck_law() -> None:
    # B_lambda = 2 h c^2 / lambda^5 / (exp(h c / (lambda k T)) - 1), CODATA via scipy,
    # and B_lambda d lambda = B_nu d nu with nu = 1e4 / lambda (exact change of variable).
    wavelength_um = np.array([0.3, 0.5, 1.0, 10.0, 15.0, 100.0])
    temperature = 5772.0
    lam = wavelength_um * 1e-6
    x = const.h * const.c / (lam * const.k * temperature)
    expected = 2 * const.h * const.c**2 / lam**5 / np.expm1(x) * 1e-6
    got = spectral_radiance_wavelength(temperature, wavelength_um)
    np.testing.assert_allclose(got, expected, rtol=1e-13)
    nu = 1e4 / wavelength_um
    np.testing.assert_allclose(
        got, spectral_radiance_wavenumber(temperature, nu) * nu**2 / 1e4, rtol=1e-13
    )


def test_spectral_functions_are_safe_at_extremes() -> None:
    # Huge x must give 0 quietly (warnings are errors in this suite), T = 0 gives 0.
    assert spectral_radiance_wavenumber(1.0, 1e6) == 0.0
    assert spectral_radiance_wavelength(1.0, 1e-3) == 0.0
    assert spectral_radiance_wavenumber(0.0, 500.0) == 0.0
    assert spectral_radiance_wavelength(0.0, 10.0) == 0.0
    assert band_radiance(1.0, 1e6, np.inf) == 0.0
    assert band_radiance(1e-300, 1.0, 2.0) == 0.0
    # Rayleigh-Jeans limit at tiny x: B ~ 2 c k T nu^2 (exact limit of Planck's law).
    nu, temperature = 1e-3, 6000.0
    rayleigh_jeans = 100.0 * 2.0 * const.c * const.k * temperature * (100.0 * nu) ** 2
    np.testing.assert_allclose(
        spectral_radiance_wavenumber(temperature, nu), rayleigh_jeans, rtol=1e-6
    )


@pytest.mark.parametrize(
    ("call", "match"),
    [
        (lambda: band_radiance(-1.0, 0.0, 1.0), r"must be finite and >= 0 K; got -1\.0"),
        (lambda: band_radiance(np.nan, 0.0, 1.0), "temperature must be finite"),
        (lambda: band_radiance([300.0, np.inf], 0.0, 1.0), r"temperature .* at index \(1,\)"),
        (lambda: band_radiance(300.0, 2.0, 1.0), "wavenumber_high must exceed wavenumber_low"),
        (lambda: band_radiance(300.0, 1.0, 1.0), "wavenumber_high must exceed wavenumber_low"),
        (lambda: band_radiance(300.0, 1.0, np.nan), "wavenumber_high must exceed"),
        (lambda: band_radiance(300.0, -1.0, 1.0), r"wavenumber_low must be finite and >= 0"),
        (lambda: band_radiance(300.0, np.inf, np.inf), "wavenumber_low must be finite"),
        (lambda: spectral_radiance_wavenumber(300.0, 0.0), r"wavenumber must be finite and > 0"),
        (lambda: spectral_radiance_wavenumber(-5.0, 10.0), "temperature must be"),
        (lambda: spectral_radiance_wavelength(300.0, -1.0), "wavelength_um must be finite and > 0"),
        (lambda: total_radiance(-2.0), "temperature must be finite and >= 0"),
    ],
)
def test_bad_input_raises(call, match: str) -> None:
    with pytest.raises(ValueError, match=match):
        call()


@pytest.mark.parametrize("temperature", [5e-324, 1e-310, 1e-30])
def test_near_zero_temperature_gives_zero_without_warnings(temperature):
    # B -> 0 as T -> 0 for any band (Planck's law); warnings are errors in this suite. A band
    # from 0 holds the whole spectrum at such temperatures: sigma T^4 / pi (CODATA)
    assert band_radiance(temperature, 0.0, 1.0) == pytest.approx(total_radiance(temperature),
                                                                  rel=1e-12, abs=0.0)
    assert band_radiance(temperature, 400.0, 700.0) == 0.0
    assert spectral_radiance_wavenumber(temperature, 1.0) == 0.0
    assert spectral_radiance_wavelength(temperature, 1.0) == 0.0


def test_non_numeric_temperature_is_a_type_error():
    # the project's rule: TypeError for types, ValueError for values
    with pytest.raises(TypeError, match="temperature must be numeric; got the string 'hot'"):
        band_radiance("hot", 0.0, 1.0)
