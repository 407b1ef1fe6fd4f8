"""Checks of the test-suite Monte Carlo (tests/monte_carlo.py) against exact results.

The Monte Carlo is an independent cross-check for lamina (references.md, "Independent
methods"); before it may judge the solver it must itself reproduce exact results:
Beer-Lambert transmission, energy conservation, the single-scattering reflection formula
(Thomas and Stamnes 1999) and the Henyey-Greenstein moments chi_l = g**l (Henyey and
Greenstein 1941). Statistical checks allow 4 standard errors; seeds are fixed, so the
outcome is deterministic.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate, special, stats

from monte_carlo import run_monte_carlo, sample_henyey_greenstein

SIGMAS = 4.0


def assert_within_errors(value, error, expected, sigmas=SIGMAS):
    value, error, expected = np.asarray(value), np.asarray(error), np.asarray(expected)
    assert np.all(error > 0.0), error
    assert np.all(np.abs(value - expected) <= sigmas * error), (value, error, expected)


def test_purely_absorbing_layers_follow_beer_lambert():
    # w = 0: only the unscattered beam crosses, exp(-t/mu0) at every level (exact).
    mu0 = 0.6
    tau = np.array([0.3, 0.7])
    result = run_monte_carlo(tau, [0.0, 0.0], [0.0, 0.5], mu0, n_photons=200_000, seed=1)
    expected = np.exp(-np.concatenate([[0.0], np.cumsum(tau)]) / mu0)
    assert_within_errors(result.transmitted_direct, result.transmitted_direct_error, expected[-1])
    assert_within_errors(
        result.flux_down_direct[1:], result.flux_down_direct_error[1:], expected[1:]
    )
    assert result.flux_down_direct[0] == 1.0
    assert result.reflected == 0.0
    assert result.transmitted_diffuse == 0.0
    assert np.all(result.flux_up == 0.0)
    assert result.absorbed + result.transmitted == pytest.approx(1.0, abs=1e-12)


def test_conservative_layers_conserve_energy_exactly():
    # w = 1 over a black surface: every photon leaves at the top or the bottom, R + T = 1
    # (exact). The net flux F_down - F_up is then the same at every level (exact: each
    # photon crosses every level once more downwards than upwards, or equally often).
    result = run_monte_carlo(
        [0.5, 3.0, 1.0], [1.0, 1.0, 1.0], [0.0, 0.85, -0.3], 0.5, n_photons=100_000, seed=2
    )
    assert result.reflected + result.transmitted == pytest.approx(1.0, abs=1e-12)
    assert result.absorbed == 0.0
    net = result.flux_down_direct + result.flux_down_diffuse - result.flux_up
    np.testing.assert_allclose(net, result.transmitted, rtol=0, atol=1e-12)
    assert result.flux_up[0] == pytest.approx(result.reflected, abs=1e-15)
    assert result.flux_down_diffuse[-1] == pytest.approx(result.transmitted_diffuse, abs=1e-15)
    # The direct beam is exp(-tau/mu0) (exact), as a statistical check of the free paths.
    levels = np.array([0.0, 0.5, 3.5, 4.5])
    assert_within_errors(
        result.flux_down_direct[1:], result.flux_down_direct_error[1:], np.exp(-levels[1:] / 0.5)
    )


def test_absorbing_layers_over_a_reflecting_surface_conserve_energy():
    # Reflected + absorbed in the atmosphere + absorbed by the surface = 1 (exact).
    result = run_monte_carlo(
        [1.0, 2.0], [0.9, 0.99], [0.5, 0.85], 0.7, surface_albedo=0.4, n_photons=100_000, seed=3
    )
    total = result.reflected + result.absorbed + result.absorbed_surface
    assert total == pytest.approx(1.0, abs=1e-12)
    # The surface absorbs (1 - albedo) of what reaches it (exact per photon).
    assert result.absorbed_surface == pytest.approx(0.6 * result.transmitted, rel=1e-12)
    # Net flux at the bottom level equals what the surface absorbs (exact).
    net_bottom = result.flux_down_direct[-1] + result.flux_down_diffuse[-1] - result.flux_up[-1]
    assert net_bottom == pytest.approx(result.absorbed_surface, abs=1e-12)


def single_scattering_reflection(tau, albedo, g, mu0):
    """Singly scattered reflected flux / (S mu0) over a black surface.

    Integrates the textbook single-scattering radiance (Thomas and Stamnes 1999)
    I(mu, phi) = w S / (4 pi) P(cos T) mu0 / (mu + mu0) [1 - exp(-t (1/mu + 1/mu0))]
    over the upper hemisphere, F = int I mu dOmega, with the Henyey-Greenstein P and
    cos T = -mu mu0 + sqrt(1 - mu^2) sqrt(1 - mu0^2) cos(phi) (scipy dblquad).
    """

    def integrand(phi, mu):
        cosine = -mu * mu0 + np.sqrt((1 - mu * mu) * (1 - mu0 * mu0)) * np.cos(phi)
        phase = (1 - g * g) / (1 + g * g - 2 * g * cosine) ** 1.5
        radiance = albedo / (4 * np.pi) * phase * mu0 / (mu + mu0)
        radiance *= -np.expm1(-tau * (1 / mu + 1 / mu0))
        return radiance * mu

    flux, _ = integrate.dblquad(integrand, 0.0, 1.0, 0.0, 2 * np.pi, epsabs=1e-12, epsrel=1e-10)
    return flux / mu0


@pytest.mark.parametrize(
    ("tau", "albedo", "g", "mu0"),
    [(0.1, 1.0, 0.0, 0.5), (0.3, 0.8, 0.0, 0.9), (0.2, 1.0, 0.5, 0.6), (0.5, 0.9, -0.4, 0.3)],
)
def test_singly_scattered_reflection_matches_the_single_scattering_formula(tau, albedo, g, mu0):
    # The order-1 tally is exactly the single-scattering term, at any optical thickness.
    result = run_monte_carlo([tau], [albedo], [g], mu0, n_photons=300_000, seed=4)
    expected = single_scattering_reflection(tau, albedo, g, mu0)
    assert_within_errors(result.reflected_single, result.reflected_single_error, expected)


def test_thin_isotropic_layer_reflection_is_single_scattering():
    # For t = 0.005 multiple scattering adds only O(t^2) ~ 3e-5 to the reflection, below the
    # standard error of 400 000 photons, so the total reflection must match the textbook
    # single-scattering formula (Thomas and Stamnes 1999).
    result = run_monte_carlo([0.005], [1.0], [0.0], 0.5, n_photons=400_000, seed=5)
    expected = single_scattering_reflection(0.005, 1.0, 0.0, 0.5)
    assert_within_errors(result.reflected, result.reflected_error, expected)


@pytest.mark.parametrize("g", [-0.5, 0.0, 0.3, 0.85, 0.99])
def test_henyey_greenstein_sampling_moments(g):
    # Sample means of P_l(cos T) estimate chi_l = g**l (Henyey and Greenstein 1941).
    rng = np.random.default_rng(6)
    cosine = sample_henyey_greenstein(np.full(400_000, g), rng.random(400_000))
    for order in (1, 2, 3):
        values = special.eval_legendre(order, cosine)
        error = values.std(ddof=1) / np.sqrt(values.size)
        assert_within_errors(values.mean(), error, g**order)


@pytest.mark.parametrize("g", [-0.3, 0.6, 0.9])
def test_henyey_greenstein_sampling_distribution(g):
    # Kolmogorov-Smirnov test against the closed-form cumulative distribution of the HG
    # phase function, C(mu) = (1 - g^2)/(2 g) [(1 + g^2 - 2 g mu)^(-1/2) - 1/(1 + g)]
    # (integral of P_HG / 2 from -1 to mu; Henyey and Greenstein 1941).
    def cumulative(mu):
        return (1 - g * g) / (2 * g) * (1 / np.sqrt(1 + g * g - 2 * g * mu) - 1 / (1 + g))

    rng = np.random.default_rng(7)
    cosine = sample_henyey_greenstein(np.full(50_000, g), rng.random(50_000))
    assert stats.kstest(cosine, cumulative).pvalue > 1e-3
