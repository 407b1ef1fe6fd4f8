"""Tests for lamina.phase: phase-function moments and delta-M scaling.

Every accuracy check names its outside source: the closed-form phase functions of
Henyey and Greenstein (1941) and Hansen and Travis (1974), projected here independently
with scipy.integrate.quad and scipy.special.eval_legendre, and the delta-M formulas of
Wiscombe (1977).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate, special

from lamina import phase


def henyey_greenstein_function(g: float, cosine: np.ndarray) -> np.ndarray:
    """Closed-form HG phase function, mean 1 over the sphere (Henyey and Greenstein 1941)."""
    return (1.0 - g * g) / (1.0 + g * g - 2.0 * g * cosine) ** 1.5


def rayleigh_function(depolarization: float, cosine: np.ndarray) -> np.ndarray:
    """Rayleigh phase function with depolarization (Hansen and Travis 1974)."""
    gamma = depolarization / (2.0 - depolarization)
    return 0.75 / (1.0 + 2.0 * gamma) * ((1.0 + 3.0 * gamma) + (1.0 - gamma) * cosine**2)


def project_with_quad(function, order: int) -> float:
    """chi_l = (1/2) int_{-1}^{1} P(mu) P_l(mu) dmu by adaptive quadrature (scipy)."""
    value, _ = integrate.quad(
        lambda mu: function(mu) * special.eval_legendre(order, mu),
        -1.0,
        1.0,
        limit=400,
        epsabs=1e-13,
        epsrel=1e-12,
    )
    return 0.5 * value


# ---------------------------------------------------------------------------------------
# Henyey-Greenstein
# ---------------------------------------------------------------------------------------


@pytest.mark.parametrize("g", [-0.6, 0.0, 0.3, 0.85])
def test_henyey_greenstein_moments_are_powers_of_g(g):
    # chi_l = g**l (Henyey and Greenstein 1941).
    moments = phase.henyey_greenstein(g, 12)
    np.testing.assert_allclose(moments, g ** np.arange(12), rtol=0, atol=1e-15)


@pytest.mark.parametrize("g", [0.3, 0.7])
def test_henyey_greenstein_moments_match_projection_of_closed_form(g):
    # Independent projection of the closed-form function (Henyey and Greenstein 1941).
    moments = phase.henyey_greenstein(g, 6)
    expected = [
        project_with_quad(lambda mu: henyey_greenstein_function(g, mu), order) for order in range(6)
    ]
    np.testing.assert_allclose(moments, expected, rtol=0, atol=1e-10)


def test_henyey_greenstein_broadcasts_over_arrays():
    g = np.array([[0.1, 0.2, 0.3], [0.4, 0.5, 0.6]])
    moments = phase.henyey_greenstein(g, 5)
    assert moments.shape == (2, 3, 5)
    np.testing.assert_allclose(moments[1, 2], 0.6 ** np.arange(5))


def test_double_henyey_greenstein_is_weighted_sum_of_closed_forms():
    # P = b P_HG(g_f) + (1 - b) P_HG(g_b), closed forms of Henyey and Greenstein (1941).
    forward, backward, fraction = 0.8, -0.4, 0.9
    moments = phase.double_henyey_greenstein(forward, backward, fraction, 400)
    angle = np.linspace(0.0, 180.0, 37)
    cosine = np.cos(np.deg2rad(angle))
    expected = fraction * henyey_greenstein_function(forward, cosine) + (
        1.0 - fraction
    ) * henyey_greenstein_function(backward, cosine)
    np.testing.assert_allclose(phase.evaluate(moments, angle), expected, rtol=1e-10)


def test_double_henyey_greenstein_broadcasts():
    moments = phase.double_henyey_greenstein([0.7, 0.8], -0.3, [[0.5], [1.0]], 4)
    assert moments.shape == (2, 2, 4)
    np.testing.assert_allclose(moments[1, 0], 0.7 ** np.arange(4), atol=1e-15)


# ---------------------------------------------------------------------------------------
# Rayleigh
# ---------------------------------------------------------------------------------------


def test_rayleigh_without_depolarization():
    # chi = [1, 0, 0.1] (Chandrasekhar 1950).
    np.testing.assert_allclose(phase.rayleigh(), [1.0, 0.0, 0.1], atol=1e-15)
    np.testing.assert_allclose(phase.rayleigh(0.0, 6), [1.0, 0.0, 0.1, 0.0, 0.0, 0.0])


@pytest.mark.parametrize("depolarization", [0.0279, 0.1, 0.5])
def test_rayleigh_with_depolarization(depolarization):
    # gamma = rho / (2 - rho), chi_2 = 0.1 (1 - gamma) / (1 + 2 gamma) (Hansen and Travis
    # 1974); rho = 0.0279 is dry air (Young 1980, from memory). Checked both against the
    # published formula and against a projection of the published phase function.
    gamma = depolarization / (2.0 - depolarization)
    moments = phase.rayleigh(depolarization, 5)
    np.testing.assert_allclose(
        moments, [1.0, 0.0, 0.1 * (1 - gamma) / (1 + 2 * gamma), 0.0, 0.0], atol=1e-15
    )
    projected = [
        project_with_quad(lambda mu: rayleigh_function(depolarization, mu), order)
        for order in range(5)
    ]
    np.testing.assert_allclose(moments, projected, rtol=0, atol=1e-12)


def test_rayleigh_broadcasts():
    moments = phase.rayleigh(np.array([0.0, 0.0279]), 3)
    assert moments.shape == (2, 3)
    assert moments[0, 2] == 0.1


# ---------------------------------------------------------------------------------------
# evaluate
# ---------------------------------------------------------------------------------------


@pytest.mark.parametrize("g", [-0.5, 0.2, 0.85])
def test_evaluate_henyey_greenstein_moments_against_closed_form(g):
    # 400 moments: the series remainder is of order g**400, far below round-off.
    angle = np.linspace(0.0, 180.0, 181)
    values = phase.evaluate(phase.henyey_greenstein(g, 400), angle)
    expected = henyey_greenstein_function(g, np.cos(np.deg2rad(angle)))
    np.testing.assert_allclose(values, expected, rtol=1e-11)


def test_evaluate_rayleigh_against_closed_form():
    angle = np.array([0.0, 30.0, 90.0, 150.0, 180.0])
    values = phase.evaluate(phase.rayleigh(0.0279), angle)
    expected = rayleigh_function(0.0279, np.cos(np.deg2rad(angle)))
    np.testing.assert_allclose(values, expected, rtol=1e-13)


def test_evaluate_shapes_every_phase_function_at_every_angle():
    moments = phase.henyey_greenstein(np.array([[0.1, 0.5], [0.2, 0.9]]), 7)
    angle = np.zeros((4, 3))
    assert phase.evaluate(moments, angle).shape == (2, 2, 4, 3)
    assert phase.evaluate(moments[0, 0], 10.0).shape == ()


def test_evaluated_phase_function_has_unit_mean_over_sphere():
    # (1/2) int P dmu = chi_0 = 1 by orthogonality of Legendre polynomials; Gauss-Legendre
    # with 300 nodes integrates the degree-199 polynomial exactly (numpy.polynomial).
    nodes, weights = np.polynomial.legendre.leggauss(300)
    angle = np.rad2deg(np.arccos(nodes))
    values = phase.evaluate(phase.henyey_greenstein(0.8, 200), angle)
    assert 0.5 * np.sum(weights * values) == pytest.approx(1.0, abs=1e-12)


# ---------------------------------------------------------------------------------------
# from_tabulated
# ---------------------------------------------------------------------------------------


@pytest.mark.parametrize("interpolation", ["log", "linear"])
def test_tabulated_round_trip_henyey_greenstein(interpolation):
    # Tabulate the closed-form HG function with g = 0.7 every 0.1 degree (Henyey and
    # Greenstein 1941) and project: chi_l = g**l. Piecewise-linear interpolation of a
    # smooth table errs by about h**2 P''/8 between nodes; integrated, that leaves
    # below 1e-6 on the moments at this spacing, so 2e-6 is a bound, not a fudge.
    angle = np.linspace(0.0, 180.0, 1801)
    table = henyey_greenstein_function(0.7, np.cos(np.deg2rad(angle)))
    moments = phase.from_tabulated(angle, table, 40, interpolation=interpolation)
    np.testing.assert_allclose(moments, 0.7 ** np.arange(40), rtol=0, atol=2e-6)
    assert moments[0] == 1.0


def test_tabulated_rayleigh_on_a_coarse_table():
    # On a 1-degree table, linear interpolation in angle errs by at most h**2 max|P''|/8
    # (standard interpolation bound); with P'' = -2 b cos(2 theta), b = 0.75 (1 - gamma) /
    # (1 + 2 gamma) < 0.75, that is < 5.8e-5, and |P_l| <= 1 carries the bound to the
    # moments (Rayleigh moments: Hansen and Travis 1974).
    angle = np.linspace(0.0, 180.0, 181)
    table = rayleigh_function(0.0279, np.cos(np.deg2rad(angle)))
    moments = phase.from_tabulated(angle, table, 6, interpolation="linear")
    bound = np.deg2rad(1.0) ** 2 * 1.5 / 8
    np.testing.assert_allclose(moments, phase.rayleigh(0.0279, 6), rtol=0, atol=bound)


def test_tabulated_quadrature_is_exact_for_exactly_interpolated_tables():
    # A table that its interpolant represents exactly isolates the quadrature: P linear in
    # angle ("linear") and P exponential in angle ("log") on a coarse 10-degree table give
    # the moments of the continuous function, here projected independently with scipy quad.
    angle = np.linspace(0.0, 180.0, 19)
    theta = np.deg2rad(angle)

    def linear_in_angle(mu):
        return (2.0 / 3.0) * (1.0 + np.arccos(mu) / np.pi)  # mean 1 over the sphere

    moments = phase.from_tabulated(
        angle, linear_in_angle(np.cos(theta)), 30, interpolation="linear"
    )
    expected = [project_with_quad(linear_in_angle, order) for order in range(30)]
    np.testing.assert_allclose(moments, expected, rtol=0, atol=1e-12)

    def exponential_in_angle(mu):
        return np.exp(-3.0 * np.arccos(mu))

    norm = project_with_quad(exponential_in_angle, 0)
    moments = phase.from_tabulated(
        angle, exponential_in_angle(np.cos(theta)), 30, interpolation="log", normalize=True
    )
    expected = [project_with_quad(exponential_in_angle, order) / norm for order in range(30)]
    np.testing.assert_allclose(moments, expected, rtol=0, atol=1e-12)


def test_tabulated_accepts_end_angles_off_by_round_off():
    # Angles converted from radians miss 180 by an ulp or so; they are taken as exact.
    angle = np.rad2deg(np.linspace(0.0, np.pi, 1801))
    angle[-1] = 180.0 * (1 - 1e-15)
    table = henyey_greenstein_function(0.7, np.cos(np.deg2rad(angle)))
    moments = phase.from_tabulated(angle, table, 4)
    np.testing.assert_allclose(moments, 0.7 ** np.arange(4), atol=2e-6)


def test_tabulated_vectorised_over_leading_axes():
    angle = np.linspace(0.0, 180.0, 1801)
    cosine = np.cos(np.deg2rad(angle))
    table = np.stack([henyey_greenstein_function(g, cosine) for g in (0.2, 0.5, 0.7)]).reshape(
        3, 1, -1
    )
    moments = phase.from_tabulated(angle, table, 5)
    assert moments.shape == (3, 1, 5)
    np.testing.assert_allclose(moments[:, 0, 1], [0.2, 0.5, 0.7], atol=2e-6)


def test_tabulated_normalisation_is_checked_and_can_be_rescaled():
    angle = np.linspace(0.0, 180.0, 1801)
    table = henyey_greenstein_function(0.5, np.cos(np.deg2rad(angle)))
    with pytest.raises(ValueError, match=r"values must have mean 1 over the sphere .* got mean 2"):
        phase.from_tabulated(angle, 2.0 * table, 4)
    rescaled = phase.from_tabulated(angle, 2.0 * table, 4, normalize=True)
    np.testing.assert_allclose(rescaled, phase.from_tabulated(angle, table, 4), rtol=1e-14)
    # Within the documented 1 % tolerance the table is accepted (and normalised).
    accepted = phase.from_tabulated(angle, 1.005 * table, 4)
    np.testing.assert_allclose(accepted, 0.5 ** np.arange(4), atol=1e-6)
    with pytest.raises(ValueError, match="within 0.001; got mean 1.005"):
        phase.from_tabulated(angle, 1.005 * table, 4, normalization_tolerance=1e-3)


def test_tabulated_accepts_zeros_in_log_mode():
    # A table linear in angle that vanishes in the backward half: "linear" reproduces the
    # quad projection exactly; "log" falls back to linear next to the zeros and otherwise
    # adds its interpolation error: a geometric mean under-reads a linear function that
    # falls to zero (by up to ~10 % on the interval before the zero here), which moves the
    # moments by a few 1e-4 on this 2-degree table. The check is that zeros are handled
    # without NaN and the result stays within that interpolation error.
    angle = np.linspace(0.0, 180.0, 91)

    def forward_wedge(mu):
        theta = np.arccos(mu)
        return np.where(theta < 0.5 * np.pi, (0.5 * np.pi - theta) / (0.25 * np.pi - 0.5), 0.0)

    table = forward_wedge(np.cos(np.deg2rad(angle)))
    expected = [project_with_quad(forward_wedge, order) for order in range(4)]
    assert expected[0] == pytest.approx(1.0, abs=1e-12)  # the wedge has mean 1
    linear = phase.from_tabulated(angle, table, 4, interpolation="linear")
    np.testing.assert_allclose(linear, expected, rtol=0, atol=1e-12)
    logarithmic = phase.from_tabulated(angle, table, 4)
    np.testing.assert_allclose(logarithmic, expected, rtol=0, atol=1e-3)


# ---------------------------------------------------------------------------------------
# delta-M
# ---------------------------------------------------------------------------------------


def test_delta_m_against_published_formulas():
    # f = chi_M (M = total streams), chi_l' = (chi_l - f)/(1 - f), w' = w(1-f)/(1-wf),
    # t' = t(1-wf) (Wiscombe 1977).
    g, albedo, tau, streams = 0.85, 0.9, 2.0, 8
    moments = phase.henyey_greenstein(g, 30)
    scaled = phase.delta_m_scale([tau], [albedo], moments[np.newaxis], streams)
    f = g**streams
    assert scaled.truncation_fraction[0] == pytest.approx(f, rel=1e-15)
    np.testing.assert_allclose(
        scaled.scaled_phase_moments[0], (g ** np.arange(streams) - f) / (1 - f), rtol=1e-14
    )
    assert scaled.scaled_phase_moments.shape == (1, streams)
    assert scaled.scaled_single_scattering_albedo[0] == pytest.approx(
        albedo * (1 - f) / (1 - albedo * f), rel=1e-14
    )
    assert scaled.scaled_optical_depth[0] == pytest.approx(tau * (1 - albedo * f), rel=1e-14)
    assert scaled.scaled_phase_moments[0, 0] == 1.0


def test_delta_m_invariants_on_stacked_layers():
    # Conserved by construction (Wiscombe 1977): the scattering optical depth outside the
    # peak w t (1 - f) = w' t', and the absorption optical depth (1 - w) t = (1 - w') t'.
    rng = np.random.default_rng(20240611)
    tau = rng.uniform(0.0, 10.0, size=(3, 5))
    albedo = rng.uniform(0.0, 1.0, size=(3, 5))
    g = rng.uniform(-0.9, 0.95, size=(3, 5))
    moments = phase.henyey_greenstein(g, 64)
    scaled_tau, scaled_albedo, scaled_moments, f = phase.delta_m_scale(tau, albedo, moments, 16)
    assert scaled_moments.shape == (3, 5, 16)
    np.testing.assert_allclose(scaled_albedo * scaled_tau, albedo * tau * (1 - f), rtol=1e-13)
    np.testing.assert_allclose(
        (1 - scaled_albedo) * scaled_tau, (1 - albedo) * tau, rtol=1e-12, atol=1e-14
    )
    np.testing.assert_allclose(f, g**16, rtol=1e-13)


def test_delta_m_keeps_conservative_layers_exactly_conservative():
    moments = phase.henyey_greenstein(np.array([0.3, 0.85, 0.99]), 40)
    scaled = phase.delta_m_scale([1.0, 4.0, 2.0], [1.0, 1.0, 1.0], moments, 4)
    assert np.all(scaled.scaled_single_scattering_albedo == 1.0)
    # t' = t (1 - f) when w = 1 (Wiscombe 1977), f = g**4 for HG with 4 streams.
    f = np.array([0.3, 0.85, 0.99]) ** 4
    np.testing.assert_allclose(scaled.scaled_optical_depth, [1.0, 4.0, 2.0] * (1 - f), rtol=1e-14)


def test_delta_m_zero_pads_short_moment_arrays():
    # Rayleigh has three moments: with 8 streams f = chi_8 = 0, nothing is scaled.
    scaled = phase.delta_m_scale([[0.5]], [[1.0]], phase.rayleigh()[np.newaxis, np.newaxis], 8)
    assert scaled.truncation_fraction[0, 0] == 0.0
    np.testing.assert_array_equal(
        scaled.scaled_phase_moments[0, 0], [1.0, 0.0, 0.1, 0.0, 0.0, 0.0, 0.0, 0.0]
    )
    assert scaled.scaled_optical_depth[0, 0] == 0.5


def test_delta_m_broadcasts_layer_inputs_against_moments():
    moments = phase.henyey_greenstein(np.full((4, 2), 0.7), 10)  # (wavelength, layer, moment)
    scaled = phase.delta_m_scale([1.0, 2.0], 0.5, moments, 2)
    assert scaled.scaled_optical_depth.shape == (4, 2)
    assert scaled.scaled_phase_moments.shape == (4, 2, 2)
    np.testing.assert_allclose(scaled.scaled_optical_depth[:, 1], 2.0 * (1 - 0.5 * 0.49))


def test_delta_m_forward_delta_is_guarded():
    # chi_l = 1 for every l is a pure forward peak: all scattering goes into the beam.
    moments = np.ones((2, 9))
    scaled = phase.delta_m_scale([1.0, 1.0], [0.5, 1.0], moments, 8)
    assert np.all(np.isfinite(scaled.scaled_phase_moments))
    np.testing.assert_array_equal(scaled.scaled_single_scattering_albedo, [0.0, 1.0])
    np.testing.assert_allclose(scaled.scaled_optical_depth, [0.5, 0.0])


# ---------------------------------------------------------------------------------------
# error messages
# ---------------------------------------------------------------------------------------


def test_henyey_greenstein_errors():
    with pytest.raises(ValueError, match=r"asymmetry_parameter must lie in \(-1, 1\); got 1.2"):
        phase.henyey_greenstein(1.2, 4)
    with pytest.raises(
        ValueError, match=r"asymmetry_parameter must lie in \(-1, 1\); got -1 at index 1"
    ):
        phase.henyey_greenstein([0.5, -1.0], 4)
    with pytest.raises(ValueError, match="asymmetry_parameter must be finite; got nan"):
        phase.henyey_greenstein(np.nan, 4)
    with pytest.raises(ValueError, match="n_moments must be an integer >= 1; got 0"):
        phase.henyey_greenstein(0.5, 0)
    with pytest.raises(TypeError, match="n_moments must be an integer; got 2.5"):
        phase.henyey_greenstein(0.5, 2.5)
    with pytest.raises(TypeError, match="asymmetry_parameter must be a real number"):
        phase.henyey_greenstein("big", 3)


def test_double_henyey_greenstein_errors():
    with pytest.raises(ValueError, match=r"forward_asymmetry must lie in \(-1, 1\); got 1"):
        phase.double_henyey_greenstein(1.0, -0.2, 0.5, 3)
    with pytest.raises(ValueError, match=r"backward_asymmetry must lie in \(-1, 1\); got -1.5"):
        phase.double_henyey_greenstein(0.8, -1.5, 0.5, 3)
    with pytest.raises(ValueError, match=r"forward_fraction must lie in \[0, 1\]; got 1.1"):
        phase.double_henyey_greenstein(0.8, -0.2, 1.1, 3)
    with pytest.raises(ValueError, match="must broadcast together"):
        phase.double_henyey_greenstein([0.8, 0.7], [-0.2, -0.3, -0.1], 0.5, 3)


def test_rayleigh_errors():
    with pytest.raises(ValueError, match=r"depolarization must lie in \[0, 1\); got 1"):
        phase.rayleigh(1.0)
    with pytest.raises(ValueError, match=r"depolarization must lie in \[0, 1\); got -0.1"):
        phase.rayleigh(-0.1)
    with pytest.raises(ValueError, match="n_moments must be an integer >= 3; got 2"):
        phase.rayleigh(0.0, 2)


def test_from_tabulated_errors():
    angle = np.linspace(0.0, 180.0, 19)
    ones = np.ones(19)
    with pytest.raises(ValueError, match="angle_deg must be a 1-D array of at least 2 angles"):
        phase.from_tabulated([[0.0, 180.0]], [[1.0, 1.0]], 2)
    with pytest.raises(ValueError, match=r"angle_deg must be strictly increasing; angle_deg\[2\]"):
        phase.from_tabulated([0.0, 90.0, 90.0, 180.0], np.ones(4), 2)
    with pytest.raises(ValueError, match="angle_deg must span 0 to 180 degrees exactly; got 1"):
        phase.from_tabulated(np.linspace(1.0, 180.0, 19), ones, 2)
    with pytest.raises(ValueError, match="to 170"):
        phase.from_tabulated(np.linspace(0.0, 170.0, 19), ones, 2)
    with pytest.raises(ValueError, match="values must have 19 entries on its last axis"):
        phase.from_tabulated(angle, np.ones(18), 2)
    with pytest.raises(ValueError, match="values must be >= 0; got -1 at index 3"):
        phase.from_tabulated(angle, np.where(np.arange(19) == 3, -1.0, 1.0), 2)
    with pytest.raises(ValueError, match="values must be finite; got inf at index 0"):
        phase.from_tabulated(angle, np.where(np.arange(19) == 0, np.inf, 1.0), 2)
    with pytest.raises(ValueError, match="values must not be all zero"):
        phase.from_tabulated(angle, np.zeros(19), 2, normalize=True)
    with pytest.raises(ValueError, match="interpolation must be 'log' or 'linear'; got 'cubic'"):
        phase.from_tabulated(angle, ones, 2, interpolation="cubic")
    with pytest.raises(ValueError, match="normalization_tolerance must be > 0; got 0"):
        phase.from_tabulated(angle, ones, 2, normalization_tolerance=0.0)


def test_evaluate_errors():
    with pytest.raises(
        ValueError, match=r"scattering_angle_deg must lie in \[0, 180\]; got 181 at index 1"
    ):
        phase.evaluate([1.0, 0.5], [0.0, 181.0])
    with pytest.raises(ValueError, match="phase_moments must have at least one moment"):
        phase.evaluate(np.ones((2, 0)), 0.0)


def test_delta_m_errors():
    moments = phase.henyey_greenstein([0.5, 0.6], 10)
    with pytest.raises(ValueError, match="streams must be an even integer >= 2; got 7"):
        phase.delta_m_scale([1.0, 1.0], [0.5, 0.5], moments, 7)
    with pytest.raises(ValueError, match="streams must be an integer >= 2; got 0"):
        phase.delta_m_scale([1.0, 1.0], [0.5, 0.5], moments, 0)
    with pytest.raises(ValueError, match="optical_depth must be >= 0; got -1 at index 1"):
        phase.delta_m_scale([1.0, -1.0], [0.5, 0.5], moments, 4)
    with pytest.raises(
        ValueError, match=r"single_scattering_albedo must lie in \[0, 1\]; got 1.5 at index 0"
    ):
        phase.delta_m_scale([1.0, 1.0], [1.5, 0.5], moments, 4)
    bad_zeroth = moments.copy()
    bad_zeroth[1, 0] = 0.9
    with pytest.raises(ValueError, match=r"phase_moments\[..., 0\] must be 1; got 0.9 at index 1"):
        phase.delta_m_scale([1.0, 1.0], [0.5, 0.5], bad_zeroth, 4)
    bad_moment = moments.copy()
    bad_moment[0, 3] = 1.2
    with pytest.raises(
        ValueError, match=r"phase_moments must satisfy \|chi_l\| <= 1; got 1.2 at index \(0, 3\)"
    ):
        phase.delta_m_scale([1.0, 1.0], [0.5, 0.5], bad_moment, 4)
    with pytest.raises(ValueError, match="must broadcast; got shapes"):
        phase.delta_m_scale([1.0, 1.0, 1.0], [0.5, 0.5], moments, 4)
    with pytest.raises(ValueError, match=r"phase_moments must have shape \(..., layer, moment\)"):
        phase.delta_m_scale([1.0], [0.5], [1.0, 0.5], 4)
