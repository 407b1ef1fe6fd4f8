"""Tests of the Stokes-vector kernel (lamina._kernel.vector and the vector_* stage modules).

Outside sources named at each check: the Wigner d-functions through scipy's Jacobi
polynomials and the rotated phase matrix of tests/polarized_references.py (Hovenier, van der
Mee and Domke 2004, section 2.3), the independent polarized adding-doubling of
tests/polarized_doubling.py at the same double-Gauss quadrature (de Haan, Bosma and Hovenier
1987), the exact single-scattering formulas (Chandrasekhar 1950), lamina's scalar kernel
(the unpolarized limit) and energy conservation.
"""

from __future__ import annotations

import numpy as np
import pytest

import lamina
from lamina._kernel.vector import (
    phase_fourier_for_tests,
    vector_quadrature_radiance,
    wigner_d_for_tests,
)
from lamina.mie import lognormal_optics
from lamina.phase import rayleigh_matrix
from polarized_doubling import polarized_doubling
from polarized_references import (
    matrix_elements,
    phase_matrix,
    rayleigh_single_scattering,
    wigner_d,
)

MU0 = 0.6
PHI = np.array([0.0, 30.0, 90.0, 160.0, 250.0])
D = np.diag([1.0, 1.0, -1.0, -1.0])


def _aerosol(n_moments: int = 8) -> np.ndarray:
    """Mie coefficients (moment, element) of absorbing spheres, all six elements non-zero."""
    optics = lognormal_optics(0.55, 1.45 + 0.001j, 0.2, 1.6, n_moments=n_moments,
                              scattering_matrix=True)
    return optics.scattering_matrix_moments.values[0]


def _random_coefficients(rng, n_moments: int) -> np.ndarray:
    coefficients = np.zeros((n_moments, 6))
    coefficients[:, 0] = rng.uniform(-0.3, 0.3, n_moments)
    coefficients[0, 0] = 1.0
    coefficients[2:, 1:] = rng.uniform(-0.3, 0.3, (n_moments - 2, 5))
    return coefficients


@pytest.mark.parametrize("m", range(6))
@pytest.mark.parametrize("n", [0, 2, -2])
def test_wigner_d_matches_jacobi_polynomials(m, n):
    # the kernel's recurrence against Wigner's d through scipy's Jacobi polynomials
    # (Varshalovich et al. 1988, section 4.3.1, in tests/polarized_references.py)
    x = np.linspace(-1.0, 1.0, 23)
    got = wigner_d_for_tests(m, n, 12, x)
    expected = np.stack([wigner_d(degree, m, n, x) for degree in range(12)], axis=-1)
    np.testing.assert_allclose(got, expected, rtol=0, atol=2e-14)


@pytest.mark.parametrize("which", ["random", "aerosol"])
def test_phase_matrix_fourier_terms_match_transform_of_rotated_matrix(which):
    # Z^m of the kernel against the discrete Fourier transform of the rotated phase matrix
    # Z = L F L (Hovenier et al. 2004, section 2.3; polarized_references.phase_matrix), exact
    # at 2L + 4 azimuths: Z(phi) = sum_m (2 - delta_m0) (C^m cos m phi + S^m sin m phi), and
    # the kernel's Z^m = C^m + S^m D' with D' = diag(-1, -1, 1, 1), i.e. C^m = (Z^m + D Z^m D)/2,
    # S^m = -D (Z^m - D Z^m D) / 2
    rng = np.random.default_rng(3)
    coefficients = _random_coefficients(rng, 7) if which == "random" else _aerosol(10)
    last = coefficients.shape[0] - 1
    x_out = np.array([0.3, -0.7, 0.9, -0.2, 0.05])
    x_in = np.array([-0.55, 0.4, -0.95, 0.8])
    samples = 2 * last + 4
    azimuth = 360.0 * (np.arange(samples) + 0.5) / samples
    z = phase_matrix(lambda c: matrix_elements(coefficients, c), x_out[None, :, None],
                     azimuth[:, None, None], x_in[None, None, :], 0.0)
    phases = np.exp(-1j * np.outer(np.arange(last + 1), np.deg2rad(azimuth))) / samples
    components = np.tensordot(phases, z, axes=([1], [0]))  # (m, out, in, 4, 4)
    for m in range(last + 1):
        kernel = phase_fourier_for_tests(m, coefficients, x_out, x_in, 4)
        kernel = kernel.reshape(x_out.size, 4, x_in.size, 4).transpose(0, 2, 1, 3)
        cosine = 0.5 * (kernel + D @ kernel @ D)
        sine = -D @ (0.5 * (kernel - D @ kernel @ D))
        np.testing.assert_allclose(cosine, components[m].real, rtol=0, atol=1e-13)
        np.testing.assert_allclose(sine, -components[m].imag, rtol=0, atol=1e-13)
        # stokes = 3 keeps the leading 3 x 3 blocks, stokes = 1 the (1, 1) element
        three = phase_fourier_for_tests(m, coefficients, x_out, x_in, 3)
        three = three.reshape(x_out.size, 3, x_in.size, 3).transpose(0, 2, 1, 3)
        np.testing.assert_allclose(three, kernel[..., :3, :3], rtol=0, atol=1e-15)
        one = phase_fourier_for_tests(m, coefficients, x_out, x_in, 1)
        np.testing.assert_allclose(one, kernel[..., 0, 0], rtol=0, atol=1e-15)


def _compare_with_doubling(layers, surface_albedo, streams):
    """Largest differences of reflected and transmitted Stokes vectors, relative to max I."""
    moments = max(c.shape[0] for _, _, c in layers)
    padded = [np.pad(c, ((0, moments - c.shape[0]), (0, 0))) for _, _, c in layers]
    out = vector_quadrature_radiance([t for t, _, _ in layers], [w for _, w, _ in layers],
                                     padded, MU0, surface_albedo, streams, PHI)
    reference = polarized_doubling(layers, surface_albedo, out.cosines[:, None], MU0,
                                   PHI[None, :], quadrature_nodes=streams // 2)
    reflected, transmitted = out.radiance[0, 0, 0], out.radiance[0, -1, 1]
    return (
        np.abs(reflected - reference.reflected).max() / np.abs(reference.reflected[..., 0]).max(),
        np.abs(transmitted - reference.transmitted).max()
        / np.abs(reference.transmitted[..., 0]).max(),
        out, reference,
    )


@pytest.mark.parametrize("optical_thickness", [0.1, 1.0])
@pytest.mark.parametrize("surface_albedo", [0.0, 0.25])
def test_rayleigh_slab_matches_polarized_doubling(optical_thickness, surface_albedo):
    # the independent polarized adding-doubling (tests/polarized_doubling.py) at the same
    # double-Gauss quadrature: I, Q, U (and V = 0) reflected and transmitted at 8 streams
    # (measured: 3e-12 of the largest I)
    reflected, transmitted, out, reference = _compare_with_doubling(
        [(optical_thickness, 1.0, rayleigh_matrix())], surface_albedo, 8)
    assert reflected < 1e-8 and transmitted < 1e-8, (reflected, transmitted)
    assert np.abs(out.radiance[0, 0, 0, :, :, 1]).max() > 1e-3  # Q is not trivially zero
    np.testing.assert_allclose(out.flux_up[0, 0], reference.reflected_flux, rtol=1e-9)


def test_aerosol_and_rayleigh_layers_match_polarized_doubling():
    # three layers, the middle one Mie spheres with all six elements (its reduced
    # eigenproblem has complex-conjugate eigenvalue pairs, Siewert 2000), over a Lambertian
    # surface, against the polarized adding-doubling (measured: 2e-12 of the largest I)
    layers = [(0.3, 1.0, rayleigh_matrix()), (0.5, 0.95, _aerosol()),
              (0.2, 0.9, rayleigh_matrix())]
    reflected, transmitted, out, reference = _compare_with_doubling(layers, 0.2, 8)
    assert reflected < 1e-8 and transmitted < 1e-8, (reflected, transmitted)
    assert np.abs(out.radiance[0, 0, 0, :, :, 3]).max() > 1e-6  # V from beta2
    np.testing.assert_allclose(out.flux_up[0, 0], reference.reflected_flux, rtol=1e-9)
    np.testing.assert_allclose(out.flux_down_diffuse[0, -1], reference.transmitted_flux,
                               rtol=1e-9)


def test_thin_rayleigh_layer_is_single_scattering():
    # Chandrasekhar (1950): a layer of optical thickness 1e-4 scatters once; the exact
    # singly scattered Stokes vectors (polarized_references.rayleigh_single_scattering) at
    # the quadrature cosines, up to the multiple scattering, O(t / mu) relative (measured
    # 2e-4 of the largest I; the sign conventions of Q and U would fail by 100 %)
    tau = 1e-4
    out = vector_quadrature_radiance([tau], [1.0], [rayleigh_matrix()], MU0, 0.0, 8, PHI)
    up, down = rayleigh_single_scattering(tau, out.cosines[:, None], MU0, PHI[None, :])
    for got, expected in ((out.radiance[0, 0, 0], up), (out.radiance[0, -1, 1], down)):
        scale = np.abs(expected[..., 0]).max()
        np.testing.assert_allclose(got, expected, rtol=0, atol=4.0 * tau * scale)
        assert np.abs(expected[..., 1:3]).max() > 0.1 * scale


@pytest.mark.parametrize("tau", [1e-6, 1e-8])
def test_thin_conservative_layer_keeps_its_precision(tau):
    # Chandrasekhar (1950): single scattering of an isotropic conservative layer,
    # w mu0 / (4 pi (mu + mu0)) (1 - exp(-t (1/mu + 1/mu0))), to O(t) relative. The slow
    # diffusion mode (k ~ 1e-6 at w = 1 - 1e-12) and its mirror image differ by O(k); with
    # them as separate unknowns the coefficients were O(1 / k) and the reflection of a layer
    # of t = 1e-8 lost 1e-2 to cancellation (vector_common.pxd)
    isotropic = np.zeros((1, 6))
    isotropic[0, 0] = 1.0
    out = vector_quadrature_radiance([tau], [1.0], [isotropic], MU0, 0.0, 8, [0.0])
    mu = out.cosines
    up = MU0 / (4.0 * np.pi * (mu + MU0)) * -np.expm1(-tau * (1.0 / mu + 1.0 / MU0))
    relative = np.abs(out.radiance[0, 0, 0, :, 0, 0] / up - 1.0).max()
    assert relative < 3.0 * tau + 1e-6, relative  # measured 2.1e-6 and 8e-8


@pytest.mark.parametrize("stokes", [1, 3, 4])
@pytest.mark.parametrize("albedo", [(0.9, 0.95), (0.9, 1.0)])
def test_unpolarized_limit_equals_scalar_kernel(stokes, albedo):
    # with alpha1 alone the I component is the scalar problem: lamina.solve without delta-M
    # and corrections, at view cosines equal to the quadrature cosines (where the
    # source-function integration returns the discrete-ordinate solution), all Fourier
    # terms; Q, U, V stay zero. Conservative layers leave both solvers at their round-off
    # floor of about 1e-10 (DEVELOPERS.md, "The kernel"; measured 1.3e-11 here)
    ray = rayleigh_matrix()
    alpha1 = np.zeros_like(ray)
    alpha1[:, 0] = ray[:, 0]
    tau = [0.3, 1.2]
    out = vector_quadrature_radiance(tau, list(albedo), [alpha1, alpha1], MU0, 0.25, 8, PHI,
                                     stokes=stokes)
    atmosphere = lamina.make_atmosphere(tau, list(albedo), [ray[:, 0], ray[:, 0]])
    scalar = lamina.solve(atmosphere, streams=8, sun_zenith=np.degrees(np.arccos(MU0)),
                          surface_albedo=0.25, view_zenith=np.degrees(np.arccos(out.cosines)),
                          view_azimuth=PHI, delta_m=False, single_scattering_correction=False,
                          aureole_correction=False, fourier_tolerance=1e-300)
    up = scalar.radiance.sel(level=0, direction="up").values
    tolerance = 1e-9 if max(albedo) == 1.0 else 1e-13
    got = out.radiance[0, 0, 0, :, :, 0]
    assert np.abs(got - up).max() < tolerance * np.abs(up).max()
    assert np.all(out.radiance[..., 1:] == 0.0)
    np.testing.assert_allclose(out.flux_up[0], scalar.flux_up.values.ravel(), rtol=tolerance)
    # the scalar's mean intensity includes the direct beam, S exp(-t / mu0) / (4 pi)
    depth = np.concatenate([[0.0], np.cumsum(tau)])
    direct = np.exp(-depth / MU0) / (4.0 * np.pi)
    np.testing.assert_allclose(out.mean_intensity_diffuse[0] + direct,
                               scalar.mean_intensity.values.ravel(), rtol=tolerance)


@pytest.mark.parametrize("surface_albedo", [0.0, 0.25])
def test_conservative_slab_conserves_energy(surface_albedo):
    # a conservative slab absorbs nothing: what the surface does not reflect it absorbs,
    # F_up(top) + (1 - A) (F_diffuse + F_direct)(bottom) = mu0 S
    rayleigh = np.pad(rayleigh_matrix(), ((0, 5), (0, 0)))
    out = vector_quadrature_radiance([0.4, 1.5], [1.0, 1.0], [rayleigh, _aerosol()], MU0,
                                     surface_albedo, 12, PHI)
    bottom = out.flux_down_diffuse[0, -1] + out.flux_direct[0, -1]
    budget = out.flux_up[0, 0] + (1.0 - surface_albedo) * bottom
    assert abs(budget - MU0) < 1e-9
    # the net flux is the same at every level
    net = out.flux_down_diffuse[0] + out.flux_direct[0] - out.flux_up[0]
    np.testing.assert_allclose(net, net[-1], rtol=0, atol=1e-9)


def test_stokes_three_is_exact_for_rayleigh():
    # V decouples from I, Q, U when beta2 = 0 (Rayleigh, Hansen and Travis 1974): stokes = 3
    # gives the same I, Q, U as stokes = 4, and V = 0 (to round-off)
    args = ([0.5], [0.99], [rayleigh_matrix()], [MU0, 0.3], 0.1, 10, PHI)
    three = vector_quadrature_radiance(*args, stokes=3)
    four = vector_quadrature_radiance(*args, stokes=4)
    np.testing.assert_allclose(three.radiance, four.radiance[..., :3], rtol=0, atol=1e-14)
    assert np.abs(four.radiance[..., 3]).max() < 1e-15 * np.abs(four.radiance[..., 0]).max()


@pytest.mark.parametrize(
    ("change", "message"),
    [
        ({"streams": 7}, "streams"),
        ({"stokes": 2}, "stokes"),
        ({"sun_cosine": 0.0}, "sun_cosine"),
        ({"surface_albedo": 1.5}, "surface_albedo"),
        ({"single_scattering_albedo": [1.2]}, "single_scattering_albedo"),
        ({"scattering_matrix_moments": [np.zeros((3, 6))]}, "alpha1_0"),
        ({"scattering_matrix_moments": [np.zeros((3, 5))]}, "scattering_matrix_moments"),
        ({"optical_thickness": [np.nan]}, "optical_thickness"),
    ],
)
def test_bad_input_names_the_argument(change, message):
    arguments = {"optical_thickness": [0.5], "single_scattering_albedo": [0.9],
                 "scattering_matrix_moments": [rayleigh_matrix()], "sun_cosine": MU0,
                 "surface_albedo": 0.1, "streams": 8, "view_azimuth": PHI}
    arguments.update(change)
    with pytest.raises(ValueError, match=message):
        vector_quadrature_radiance(**arguments)


def _stack():
    rayleigh = np.pad(rayleigh_matrix(), ((0, 5), (0, 0)))
    return [(0.3, 1.0, rayleigh), (0.5, 0.95, _aerosol()), (0.2, 0.9, rayleigh)]


@pytest.mark.parametrize("surface_albedo", [0.0, 0.2])
def test_view_radiances_match_polarized_doubling(surface_albedo):
    # source-function integration at view cosines that are not quadrature cosines, against
    # the polarized adding-doubling, which computes those directions exactly (zero-weight
    # grid directions) at the same quadrature (measured: 3e-11 of the largest I)
    layers = _stack()
    views = np.array([0.2, 0.5, 0.99])
    out = vector_quadrature_radiance([t for t, _, _ in layers], [w for _, w, _ in layers],
                                     [c for _, _, c in layers], MU0, surface_albedo, 8, PHI,
                                     view_cosine=views)
    reference = polarized_doubling(layers, surface_albedo, views[:, None], MU0, PHI[None, :],
                                   quadrature_nodes=4)
    for got, expected in ((out.view_radiance[0, 0, 0], reference.reflected),
                          (out.view_radiance[0, -1, 1], reference.transmitted)):
        scale = np.abs(expected[..., 0]).max()
        np.testing.assert_allclose(got, expected, rtol=0, atol=1e-9 * scale)


def test_view_radiances_at_quadrature_cosines_are_the_discrete_solution():
    # integrating the source function along a quadrature direction returns the
    # discrete-ordinate solution itself (common practice: Stamnes and Swanson 1981), at every
    # level, up and down (measured: 8e-12 of the largest I)
    layers = _stack()
    args = ([t for t, _, _ in layers], [w for _, w, _ in layers], [c for _, _, c in layers],
            [MU0, 0.35], 0.2, 8, PHI)
    out = vector_quadrature_radiance(*args, view_cosine=vector_quadrature_radiance(
        *args).cosines)
    scale = np.abs(out.radiance[..., 0]).max()
    np.testing.assert_allclose(out.view_radiance, out.radiance, rtol=0, atol=1e-10 * scale)


def test_unpolarized_view_radiances_equal_scalar_kernel():
    # alpha1 alone at view cosines that are not quadrature cosines: lamina.solve without
    # delta-M and corrections integrates the same source function
    ray = rayleigh_matrix()
    alpha1 = np.zeros_like(ray)
    alpha1[:, 0] = ray[:, 0]
    tau, albedo, views = [0.3, 1.2], [0.9, 0.95], np.array([0.15, 0.5, 0.87])
    out = vector_quadrature_radiance(tau, albedo, [alpha1, alpha1], MU0, 0.25, 8, PHI,
                                     view_cosine=views, stokes=3)
    atmosphere = lamina.make_atmosphere(tau, albedo, [ray[:, 0], ray[:, 0]])
    scalar = lamina.solve(atmosphere, streams=8, sun_zenith=np.degrees(np.arccos(MU0)),
                          surface_albedo=0.25, view_zenith=np.degrees(np.arccos(views)),
                          view_azimuth=PHI, delta_m=False, single_scattering_correction=False,
                          aureole_correction=False, fourier_tolerance=1e-300)
    for level in range(3):
        for index, direction in enumerate(("up", "down")):
            expected = scalar.radiance.sel(level=level, direction=direction).values
            got = out.view_radiance[0, level, index, :, :, 0]
            assert np.abs(got - expected).max() < 1e-13 * np.abs(expected).max() + 1e-300
    assert np.all(out.view_radiance[..., 1:] == 0.0)
