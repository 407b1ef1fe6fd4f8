"""Tests for lamina.mie: log-normal Mie optics.

References: the miepython package (a general-purpose Mie library, called directly here for
single spheres), scipy.stats.lognorm for an independent definition of the log-normal
number distribution, the extinction paradox Q_ext -> 2 (van de Hulst 1957) and Legendre
projection with numpy's Gauss-Legendre nodes.
"""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr
from scipy import stats

from lamina import phase
from lamina.mie import lognormal_optics

miepython = pytest.importorskip("miepython")


def test_narrow_distribution_matches_single_sphere_from_miepython():
    # sigma_g = 1 + 1e-5: the distribution is symmetric in log radius, so it departs from
    # a single sphere of radius r_g only at second order in ln(sigma_g), (x s)^2 Q''/2,
    # about 1e-7 relative here even next to a ripple resonance.
    wavelength = np.array([0.45, 0.7, 1.6])
    index = np.array([1.50 + 0.0j, 1.45 + 0.01j, 1.40 + 0.2j])  # n + i k, k >= 0 absorbing
    radius = 0.8
    optics = lognormal_optics(wavelength, index, radius, 1.00001, n_moments=8)
    # miepython's own convention is n - i k; its `efficiencies` takes diameter and
    # wavelength in the same units.
    q_ext, q_sca, _, g = (
        np.array(values)
        for values in zip(
            *(
                miepython.efficiencies(np.conj(m), 2 * radius, lam)
                for m, lam in zip(index, wavelength, strict=True)
            ),
            strict=True,
        )
    )
    np.testing.assert_allclose(optics.extinction_efficiency, q_ext, rtol=1e-6)
    np.testing.assert_allclose(optics.scattering_efficiency, q_sca, rtol=1e-6)
    np.testing.assert_allclose(optics.asymmetry_parameter, g, rtol=1e-6)
    np.testing.assert_allclose(
        optics.extinction_cross_section, np.pi * radius**2 * q_ext, rtol=1e-6
    )
    np.testing.assert_allclose(optics.single_scattering_albedo, q_sca / q_ext, rtol=1e-6)


def test_narrow_distribution_phase_moments_match_miepython_intensities():
    # Project miepython's unpolarised phase function of the single sphere with numpy's
    # Gauss-Legendre rule (400 nodes: exact for this x = 2 pi 0.8 / 0.7 ~ 7.2 sphere, whose
    # phase function is a polynomial of degree about 2 x + 8 x^(1/3) + 4 < 40).
    m, lam, radius = 1.45 + 0.01j, 0.7, 0.8
    x = 2 * np.pi * radius / lam
    cosines, weights = np.polynomial.legendre.leggauss(400)
    intensity = miepython.i_unpolarized(np.conj(m), x, cosines, norm="one")
    legendre = np.polynomial.legendre.legvander(cosines, 23)
    expected = (weights * intensity) @ legendre / np.sum(weights * intensity)
    optics = lognormal_optics(lam, m, radius, 1.00001, n_moments=24)
    np.testing.assert_allclose(optics.phase_moments[0], expected, rtol=1e-6, atol=1e-9)


def test_size_averages_match_brute_force_integration_over_scipy_lognormal():
    # Independent size average: scipy.stats.lognorm defines the number distribution
    # (shape s = ln sigma_g, scale = median radius); miepython gives the efficiencies on
    # a fine radius grid; trapezoidal rule in ln r. Absorbing spheres keep the integrand
    # smooth, so 3000 points agree with 6000 and 12000 to 1e-14.
    lam, m, median, sigma = 0.55, 1.53 + 0.05j, 0.3, 1.7
    distribution = stats.lognorm(np.log(sigma), scale=median)
    log_r = np.linspace(
        np.log(median) - 9 * np.log(sigma), np.log(median) + 9 * np.log(sigma), 3000
    )
    r = np.exp(log_r)
    number = distribution.pdf(r) * r  # per unit ln r
    q_ext, q_sca, _, g = miepython.efficiencies_mx(np.full(r.size, np.conj(m)), 2 * np.pi * r / lam)
    geometric = np.pi * r**2
    mean_geometric = np.trapezoid(number * geometric, log_r)
    c_ext = np.trapezoid(number * geometric * q_ext, log_r)
    c_sca = np.trapezoid(number * geometric * q_sca, log_r)
    g_mean = np.trapezoid(number * geometric * q_sca * g, log_r) / c_sca

    optics = lognormal_optics(lam, m, median, sigma, n_moments=4)
    assert optics.extinction_cross_section.item() == pytest.approx(c_ext, rel=1e-6)
    assert optics.scattering_cross_section.item() == pytest.approx(c_sca, rel=1e-6)
    assert optics.extinction_efficiency.item() == pytest.approx(c_ext / mean_geometric, rel=1e-6)
    assert optics.asymmetry_parameter.item() == pytest.approx(g_mean, rel=1e-6)
    # <pi r^2> = pi r_g^2 exp(2 s^2) (log-normal moment)
    assert optics.attrs["mean_geometric_cross_section"] == pytest.approx(mean_geometric, rel=1e-9)


def test_first_moment_equals_size_averaged_asymmetry_parameter():
    # chi_1 (from the amplitudes S1, S2) must equal the scattering-weighted mean of
    # miepython's single-sphere g, and chi_0 = 1, at every wavelength. The identity holds
    # for any size quadrature, so a coarse one (8 panels) keeps the test fast.
    optics = lognormal_optics(
        [0.35, 0.55, 0.9],
        [1.55 + 0.02j, 1.50 + 0.0j, 1.48 + 0.1j],
        0.2,
        1.8,
        n_moments=16,
        radius_panels=8,
    )
    np.testing.assert_allclose(
        optics.phase_moments.sel(moment=1), optics.asymmetry_parameter, rtol=1e-9
    )
    np.testing.assert_array_equal(optics.phase_moments.sel(moment=0), 1.0)
    assert np.all(np.abs(optics.phase_moments) <= 1.0)


def test_non_absorbing_spheres_have_unit_albedo():
    optics = lognormal_optics([0.4, 0.8], 1.33, 0.3, 1.3, n_moments=4)
    np.testing.assert_array_equal(optics.single_scattering_albedo, 1.0)
    # miepython's own Q_sca and Q_ext agree for k = 0 (energy conservation).
    np.testing.assert_allclose(
        optics.scattering_efficiency, optics.extinction_efficiency, rtol=1e-10
    )


def test_extinction_paradox_large_spheres():
    # Q_ext -> 2 for x >> 1 (van de Hulst 1957); the leading correction is the edge term
    # about 2 x^(-2/3) (Nussenzveig and Wiscombe 1980, from memory), so at x ~ 1000 the
    # value is 2.02 within a few 1e-3. Strongly absorbing spheres (k = 0.1) have smooth
    # efficiencies, so 4 panels of the size quadrature are ample for this narrow width.
    lam = 1.0
    optics = lognormal_optics(lam, 1.5 + 0.1j, 1000 * lam / (2 * np.pi), 1.02, 4, radius_panels=4)
    q_ext = optics.extinction_efficiency.item()
    assert abs(q_ext - 2.0) < 0.03
    assert q_ext == pytest.approx(2.0 + 2.0 * 1000.0 ** (-2.0 / 3.0), abs=5e-3)
    small = lognormal_optics(lam, 1.5 + 0.1j, 30 * lam / (2 * np.pi), 1.02, 4, radius_panels=4)
    assert abs(small.extinction_efficiency.item() - 2.0) > abs(q_ext - 2.0)


def test_size_quadrature_is_converged_for_absorbing_spheres():
    # Doubling the panels changes an absorbing distribution's averages by < 1e-6 (the
    # default rule resolves the interference structure; see the module docstring).
    args = (0.5, 1.5 + 0.05j, 0.4, 1.5, 8)
    default = lognormal_optics(*args)
    finer = lognormal_optics(*args, radius_panels=2 * default.attrs["radius_panels"])
    for name in ("extinction_efficiency", "single_scattering_albedo", "phase_moments"):
        np.testing.assert_allclose(default[name], finer[name], rtol=1e-6, atol=1e-9)


def test_dataset_layout_and_attributes():
    optics = lognormal_optics(0.55, 1.45 + 0.001j, 0.2, 1.6, n_moments=6)
    assert optics.sizes == {"wavelength": 1, "moment": 6}
    assert optics.phase_moments.dims == ("wavelength", "moment")
    expected_units = {
        "extinction_cross_section": "um2",
        "scattering_cross_section": "um2",
        "extinction_efficiency": "1",
        "scattering_efficiency": "1",
        "single_scattering_albedo": "1",
        "asymmetry_parameter": "1",
        "phase_moments": "1",
    }
    for name, units in expected_units.items():
        assert optics[name].attrs["units"] == units
        assert optics[name].attrs["long_name"]
    assert optics.wavelength.attrs["units"] == "um"
    assert optics.attrs["refractive_index_convention"] == "m = n + i k, k >= 0 absorbing"
    assert isinstance(optics, xr.Dataset)
    # Usable as solver input: the moments describe a valid phase function.
    values = phase.evaluate(optics.phase_moments.values[0], [0.0, 90.0, 180.0])
    assert values[0] > values[1] > 0.0


def test_errors():
    with pytest.raises(
        ValueError, match=r"wavelength must be > 0 \(micrometres\); got -0.5 at index 1"
    ):
        lognormal_optics([0.5, -0.5], 1.5, 0.3, 1.5)
    with pytest.raises(ValueError, match="wavelength must be a scalar or 1-D"):
        lognormal_optics([[0.5]], 1.5, 0.3, 1.5)
    with pytest.raises(ValueError, match="wavelength must be finite; got nan"):
        lognormal_optics(np.nan, 1.5, 0.3, 1.5)
    with pytest.raises(
        ValueError, match=r"median_radius must be a number > 0 \(micrometres\); got 0"
    ):
        lognormal_optics(0.5, 1.5, 0.0, 1.5)
    with pytest.raises(
        ValueError, match="geometric_standard_deviation must be a number > 1; got 1"
    ):
        lognormal_optics(0.5, 1.5, 0.3, 1.0)
    with pytest.raises(
        ValueError, match=r"refractive_index must have an imaginary part >= 0 \(m = n \+ i k"
    ):
        lognormal_optics(0.5, 1.5 - 0.01j, 0.3, 1.5)
    with pytest.raises(ValueError, match="refractive_index must have a real part > 0"):
        lognormal_optics(0.5, -1.5 + 0.01j, 0.3, 1.5)
    with pytest.raises(
        ValueError,
        match=r"refractive_index must be a scalar or have one value per wavelength \(shape",
    ):
        lognormal_optics([0.5, 0.6], [1.5, 1.5, 1.5], 0.3, 1.5)
    with pytest.raises(ValueError, match="n_moments must be an integer >= 1; got 0"):
        lognormal_optics(0.5, 1.5, 0.3, 1.5, n_moments=0)
    with pytest.raises(ValueError, match="radius_panels must be an integer >= 1; got 0"):
        lognormal_optics(0.5, 1.5, 0.3, 1.5, radius_panels=0)
    with pytest.raises(ValueError, match="width_cutoff must be a number > 0; got -1"):
        lognormal_optics(0.5, 1.5, 0.3, 1.5, width_cutoff=-1.0)


def test_vectorised_series_match_miepython_one_sphere_at_a_time_on_a_broad_distribution():
    # The fast path sums the Mie series of all spheres at once with lamina's own recurrences;
    # here every size node is instead given to miepython (an independent Mie library) one
    # sphere per call, on the same size quadrature (lamina.mie._size_quadrature, 16 panels),
    # and the size averages are formed directly: Q by the area weights, the phase moments as
    # the mean of each sphere's own Legendre projection weighted by its Q_sca (cross-section
    # weighted mean; Hansen and Travis 1974). A broad cloud-droplet distribution (sigma_g 1.8:
    # size parameters from 0.09 to about 370) at two wavelengths, one weakly absorbing.
    wavelength = np.array([0.55, 2.2])
    index = np.array([1.333 + 1e-8j, 1.29 + 4e-4j])
    median, sigma, n_moments, panels = 0.5, 1.8, 16, 16
    optics = lognormal_optics(wavelength, index, median, sigma, n_moments=n_moments,
                              radius_panels=panels)
    from lamina.mie import DEFAULT_WIDTH_CUTOFF, _size_quadrature

    log_width = np.log(sigma)
    area_median = median * np.exp(2 * log_width**2)
    nodes, weights, _ = _size_quadrature(2 * np.pi * area_median / wavelength.min(), log_width,
                                         DEFAULT_WIDTH_CUTOFF, panels)
    radii = area_median * np.exp(log_width * nodes)
    for column, (lam, m) in enumerate(zip(wavelength, index, strict=True)):
        x = 2 * np.pi * radii / lam
        q_ext, q_sca, g = np.array([
            np.asarray(miepython.efficiencies_mx(np.conj(m), xi))[[0, 1, 3]] for xi in x]).T
        cosines, gauss = np.polynomial.legendre.leggauss(int(x.max()) + 60)  # > degree 2N
        legendre = np.polynomial.legendre.legvander(cosines, n_moments - 1)
        moments = np.zeros(n_moments)
        for xi, wi, qi in zip(x, weights, q_sca, strict=True):
            intensity = miepython.i_unpolarized(np.conj(m), xi, cosines, norm="one")
            moments += wi * qi * (gauss * intensity) @ legendre / np.sum(gauss * intensity)
        moments /= weights @ q_sca
        here = optics.isel(wavelength=column)
        np.testing.assert_allclose(here.extinction_efficiency, weights @ q_ext, rtol=1e-9)
        np.testing.assert_allclose(here.scattering_efficiency, weights @ q_sca, rtol=1e-9)
        np.testing.assert_allclose(here.asymmetry_parameter,
                                   weights @ (q_sca * g) / (weights @ q_sca), rtol=1e-9)
        np.testing.assert_allclose(here.phase_moments, moments, rtol=0, atol=1e-9)


# --------------------------------------------------------------------------------------
# scattering matrices (polarization)
# --------------------------------------------------------------------------------------


def _sphere_matrix_coefficients(m, x, n_moments):
    """Coefficients of one sphere's scattering matrix from miepython's amplitudes S1, S2.

    Bohren and Huffman (1983) eq. 3.16: F11 = (|S1|^2 + |S2|^2)/2, F12 = (|S2|^2 - |S1|^2)/2,
    F33 = Re(S1 S2*), F34 = Im(S2 S1*); F22 = F11, F44 = F33 for spheres. miepython works
    with m = n - i k and exp(+i omega t): its S1, S2 are the complex conjugates of Bohren and
    Huffman's (checked against the series of their section 4.4 by hand). Projected with
    numpy's Gauss-Legendre rule and the tests' scipy-Jacobi generalized spherical functions.
    """
    from polarized_references import generalized_spherical

    cosines, weights = np.polynomial.legendre.leggauss(200)
    s1, s2 = np.conj(miepython.S1_S2(np.conj(m), x, cosines, norm="wiscombe"))
    f11 = 0.5 * (np.abs(s1) ** 2 + np.abs(s2) ** 2)
    f12 = 0.5 * (np.abs(s2) ** 2 - np.abs(s1) ** 2)
    f33 = (s1 * np.conj(s2)).real
    f34 = (s2 * np.conj(s1)).imag
    table = np.zeros((n_moments, 6))
    for degree in range(n_moments):
        p00 = generalized_spherical(degree, 0, 0, cosines)
        p02 = generalized_spherical(degree, 0, 2, cosines)
        plus = weights @ ((f11 + f33) * generalized_spherical(degree, 2, 2, cosines))
        minus = weights @ ((f11 - f33) * generalized_spherical(degree, 2, -2, cosines))
        table[degree] = [weights @ (f11 * p00), 0.5 * (plus + minus), 0.5 * (plus - minus),
                         weights @ (f33 * p00), weights @ (f12 * p02), weights @ (f34 * p02)]
    return table / table[0, 0]


def test_scattering_matrix_of_a_narrow_distribution_matches_miepython_amplitudes():
    m, lam, radius = 1.45 + 0.01j, 0.7, 0.8
    x = 2 * np.pi * radius / lam
    optics = lognormal_optics(lam, m, radius, 1.00001, n_moments=24, scattering_matrix=True)
    expected = _sphere_matrix_coefficients(m, x, 24)
    np.testing.assert_allclose(optics.scattering_matrix_moments[0], expected, rtol=1e-6,
                               atol=1e-9)
    assert optics.scattering_matrix_moments.dims == ("wavelength", "moment", "element")
    assert list(optics.element.values) == ["alpha1", "alpha2", "alpha3", "alpha4", "beta1",
                                           "beta2"]


def test_alpha1_is_the_phase_moments():
    # the (1,1) element of the matrix is the scalar phase function (Hovenier et al. 2004)
    optics = lognormal_optics([0.55, 1.6], [1.5 + 0.001j, 1.4 + 0.1j], 0.4, 1.7, n_moments=48,
                              scattering_matrix=True)
    np.testing.assert_allclose(optics.scattering_matrix_moments[..., 0], optics.phase_moments,
                               rtol=0, atol=1e-10)
    plain = lognormal_optics([0.55, 1.6], [1.5 + 0.001j, 1.4 + 0.1j], 0.4, 1.7, n_moments=48)
    assert "scattering_matrix_moments" not in plain
    np.testing.assert_array_equal(plain.phase_moments, optics.phase_moments)


def test_small_spheres_scatter_as_rayleigh():
    # x = 0.01: F12/F11 = -sin^2 T / (1 + cos^2 T) (Rayleigh; Bohren and Huffman 1983, section
    # 5.2), errors of order x^2; the coefficients tend to Hansen and Travis's (1974) rho = 0
    from lamina import polarization

    lam = 0.55
    optics = lognormal_optics(lam, 1.5 + 0.01j, 0.01 * lam / (2 * np.pi), 1.0001, n_moments=8,
                              scattering_matrix=True)
    coefficients = optics.scattering_matrix_moments.values[0]
    angle = np.linspace(0.0, 180.0, 181)
    matrix = polarization.matrix_from_expansion(coefficients, angle)
    x = np.cos(np.deg2rad(angle))
    np.testing.assert_allclose(matrix.f12 / matrix.f11, -(1 - x**2) / (1 + x**2), rtol=0,
                               atol=1e-4)
    np.testing.assert_allclose(matrix.f33 / matrix.f11, 2 * x / (1 + x**2), rtol=0, atol=1e-4)
    expected = np.zeros((8, 6))
    expected[:3] = phase.rayleigh_matrix()
    np.testing.assert_allclose(coefficients, expected, rtol=0, atol=1e-4)


def test_matrix_of_a_broad_distribution_is_physical():
    # |F_ij| <= F11 for every element (Hovenier et al. 2004, section 3.2), F22 = F11 and
    # F33 = F44 for spheres (Bohren and Huffman 1983, section 4.4.4). 128 moments leave a
    # tail of order 1e-9 here; at backscatter F33 = -F11 exactly for spheres (S1 = -S2), so
    # the check allows 1e-6 of F11's maximum
    from lamina import polarization

    optics = lognormal_optics([0.55, 1.0], [1.45 + 0.01j, 1.33], 0.3, 1.6, n_moments=128,
                              scattering_matrix=True)
    coefficients = optics.scattering_matrix_moments.values
    assert polarization.polarized_excess(coefficients, tolerance=1e-6) is None
    matrix = polarization.matrix_from_expansion(coefficients, np.linspace(0.0, 180.0, 721))
    np.testing.assert_allclose(matrix.f22, matrix.f11, rtol=0, atol=1e-7 * matrix.f11.max())
    np.testing.assert_allclose(matrix.f44, matrix.f33, rtol=0, atol=1e-7 * matrix.f11.max())
    assert np.all(matrix.f11 >= np.abs(matrix.f12))
    with pytest.raises(TypeError, match="scattering_matrix must be True or False"):
        lognormal_optics(0.55, 1.5, 0.3, 1.6, scattering_matrix="yes")
