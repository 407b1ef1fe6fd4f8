"""Tests of the independent polarized references (tests/polarized_references.py and
tests/polarized_doubling.py), which the vector solver is to be tested against.

Outside sources named at each check: Chandrasekhar (1950), Hovenier (1969), Hovenier, van der
Mee and Domke (2004), Hansen and Travis (1974), and the scalar adding-doubling of
lamina.validation.references (itself tested against Chandrasekhar's H-functions).
Section and equation numbers of the references are cited from memory.
"""

from __future__ import annotations

import numpy as np
import pytest

from lamina.mie import lognormal_optics
from lamina.phase import henyey_greenstein, rayleigh_matrix
from lamina.validation.references import doubling_reflection_transmission
from polarized_doubling import polarized_doubling
from polarized_references import (
    direction,
    meridian_basis,
    phase_matrix,
    rayleigh_elements,
    rayleigh_phase_matrix_from_dipole,
    rayleigh_single_scattering,
)

MU = np.array([0.15, 0.4, 0.7, 0.95])
PHI = np.array([0.0, 30.0, 90.0, 135.0, 180.0, 250.0])
MU0 = 0.6
DELTA3 = np.diag([1.0, 1.0, -1.0, 1.0])


def _aerosol() -> np.ndarray:
    """Mie coefficients of small absorbing spheres (x about 1): 16 moments, all six elements."""
    optics = lognormal_optics(0.55, 1.45 + 0.001j, 0.1, 1.5, n_moments=16,
                              scattering_matrix=True)
    return optics.scattering_matrix_moments.values[0]


def _scattering_cosine(mu, phi, sign):
    """cos T between the beam (-mu0, 0) and the direction (sign mu, phi)."""
    return np.sum(direction(-MU0, 0.0) * direction(sign * mu, phi), axis=-1)


def test_rotated_phase_matrix_equals_dipole_scattering():
    # Z = L(pi - sigma2) F L(-sigma1) (Hovenier et al. 2004, section 2.3) for the Rayleigh
    # matrix (Hansen and Travis 1974) against Z = 3/2 M(J) of the dipole field
    # (1 - k k^T) E (Chandrasekhar 1950, section 15): no rotation angles in the latter
    rng = np.random.default_rng(7)
    u_out, u_in = rng.uniform(-1, 1, (2, 400))
    phi_out, phi_in = rng.uniform(0, 360, (2, 400))
    rotated = phase_matrix(rayleigh_elements, u_out, phi_out, u_in, phi_in)
    dipole = rayleigh_phase_matrix_from_dipole(u_out, phi_out, u_in, phi_in)
    np.testing.assert_allclose(rotated, dipole, rtol=0, atol=1e-14)


@pytest.mark.parametrize("sign", [1, -1])
def test_single_scattering_degree_of_polarization(sign):
    # single-scattered Rayleigh light of an unpolarized beam: P = sin^2 T / (1 + cos^2 T)
    # (Chandrasekhar 1950, section 15), at every direction
    mu, phi = np.meshgrid(MU, PHI, indexing="ij")
    reflected, transmitted = rayleigh_single_scattering(0.01, mu, MU0, phi)
    stokes = reflected if sign == 1 else transmitted
    x = _scattering_cosine(mu, phi, sign)
    degree = np.hypot(stokes[..., 1], stokes[..., 2]) / stokes[..., 0]
    np.testing.assert_allclose(degree, (1 - x**2) / (1 + x**2), rtol=1e-13, atol=1e-15)
    np.testing.assert_allclose(stokes[..., 3], 0.0, atol=1e-18)


def test_single_scattering_principal_plane_and_polarization_direction():
    # in the principal plane (phi = 0, 180) the light is polarized perpendicular to the
    # scattering plane, which is the meridian plane: Q < 0, U = 0 (Chandrasekhar 1950;
    # Hovenier et al. 2004, with Q > 0 parallel to the meridian plane)
    mu, phi = np.meshgrid(MU, [0.0, 180.0], indexing="ij")
    for stokes in rayleigh_single_scattering(0.01, mu, MU0, phi):
        assert np.all(stokes[..., 1] < 0.0)
        np.testing.assert_allclose(stokes[..., 2], 0.0, atol=1e-17)
    # everywhere, the electric vector cos(chi) l + sin(chi) r, chi = atan2(U, Q) / 2, is
    # normal to the scattering plane (Rayleigh: the dipole radiates no field along the
    # incident E; Chandrasekhar 1950, section 15): this fixes the sign of U
    mu, phi = np.meshgrid(MU, PHI[1:4], indexing="ij")
    for sign, stokes in zip((1, -1), rayleigh_single_scattering(0.01, mu, MU0, phi),
                            strict=True):
        chi = 0.5 * np.arctan2(stokes[..., 2], stokes[..., 1])
        ell, r = meridian_basis(sign * mu, phi)
        field = np.cos(chi)[..., None] * ell + np.sin(chi)[..., None] * r
        normal = np.cross(direction(-MU0, 0.0), direction(sign * mu, phi))
        normal /= np.linalg.norm(normal, axis=-1, keepdims=True)
        np.testing.assert_allclose(np.abs(np.sum(field * normal, axis=-1)), 1.0, atol=1e-13)


def test_single_scattering_mirror_symmetry():
    # U and V change sign, I and Q do not, under phi -> -phi (Hovenier 1969)
    up, down = rayleigh_single_scattering(0.01, MU[:, None], MU0, PHI[None, :])
    up_m, down_m = rayleigh_single_scattering(0.01, MU[:, None], MU0, -PHI[None, :])
    for plus, minus in ((up, up_m), (down, down_m)):
        np.testing.assert_allclose(minus * [1, 1, -1, -1], plus, rtol=1e-13, atol=1e-18)


def test_doubling_thin_layer_is_single_scattering():
    # a layer of t = 1e-6: multiple scattering adds a part of order t (Chandrasekhar 1950)
    mu, phi = np.meshgrid(MU, PHI, indexing="ij")
    out = polarized_doubling([(1e-6, 1.0, rayleigh_matrix())], 0.0, mu, MU0, phi,
                             quadrature_nodes=8)
    up, down = rayleigh_single_scattering(1e-6, mu, MU0, phi)
    scale = up[..., :1]
    np.testing.assert_allclose(out.reflected, up, rtol=0, atol=1e-5 * scale.max())
    np.testing.assert_allclose(out.transmitted, down, rtol=0, atol=1e-5 * down[..., 0].max())


def test_doubling_conserves_energy():
    # conservative layers over a black surface: reflected + transmitted + direct = mu0, and
    # over a white Lambertian surface everything leaves the top (energy conservation; the
    # discrete sums conserve it exactly, Hansen and Travis 1974, section 3)
    aerosol = _aerosol()
    layers = [(0.1, 1.0, rayleigh_matrix(0.03)), (0.5, 1.0, aerosol), (0.3, 1.0, rayleigh_matrix())]
    out = polarized_doubling(layers, 0.0, MU, MU0, 0.0, quadrature_nodes=12)
    total = out.reflected_flux + out.transmitted_flux + out.direct_flux
    assert total == pytest.approx(MU0, rel=1e-12)
    white = polarized_doubling(layers, 1.0, MU, MU0, 0.0, quadrature_nodes=12)
    assert white.reflected_flux == pytest.approx(MU0, rel=1e-11)


def test_doubling_unpolarized_limit_is_the_scalar_doubling():
    # only alpha1: I is the scalar adding-doubling of lamina.validation.references (tested
    # against Chandrasekhar's H-functions), Q = U = V = 0
    coefficients = np.zeros((16, 6))
    coefficients[:, 0] = henyey_greenstein(0.7, 16)
    mu, phi = np.meshgrid(MU, PHI, indexing="ij")
    out = polarized_doubling([(1.5, 0.9, coefficients)], 0.0, mu, MU0, phi,
                             quadrature_nodes=16)
    scalar = doubling_reflection_transmission(1.5, 0.9, coefficients[:, 0], mu, MU0, phi,
                                              quadrature_nodes=16)
    np.testing.assert_allclose(out.reflected[..., 0], scalar.reflected_radiance, rtol=1e-12)
    np.testing.assert_allclose(out.transmitted[..., 0], scalar.transmitted_radiance,
                               rtol=1e-12)
    np.testing.assert_allclose(out.reflected[..., 1:], 0.0, atol=1e-16)
    assert out.reflected_flux == pytest.approx(float(scalar.reflected_flux), rel=1e-12)


def test_doubling_reciprocity():
    # R(n, n0) = D3 R^T(-n0, -n) D3, D3 = diag(1, 1, -1, 1) (Hovenier 1969), for Rayleigh and
    # aerosol layers over a Lambertian surface. Reversing the path turns the beam direction
    # (-mu0, 0) into the emerging one and (mu, phi) into the incident one, (-mu, phi + 180):
    # with azimuths measured from the beam's propagation azimuth the reversed geometry has
    # the azimuth -phi, so R(mu, mu0, phi) = D3 R^T(mu0, mu, -phi) D3 here
    layers = [(0.2, 1.0, rayleigh_matrix(0.03)), (0.4, 0.95, _aerosol())]
    pairs = [(0.3, 0.8, 40.0), (0.55, 0.25, 130.0)]
    for mu_a, mu_b, phi in pairs:
        forward = polarized_doubling(layers, 0.2, mu_a, mu_b, phi, quadrature_nodes=10)
        backward = polarized_doubling(layers, 0.2, mu_b, mu_a, -phi, quadrature_nodes=10)
        np.testing.assert_allclose(forward.reflection_matrix,
                                   DELTA3 @ backward.reflection_matrix.T @ DELTA3,
                                   rtol=0, atol=1e-12)


def test_doubling_mirror_symmetry():
    # I, Q even and U, V odd in the azimuth (Hovenier 1969; Hovenier et al. 2004)
    layers = [(0.3, 1.0, rayleigh_matrix()), (0.4, 0.95, _aerosol())]
    plus = polarized_doubling(layers, 0.1, MU, MU0, 70.0, quadrature_nodes=10)
    minus = polarized_doubling(layers, 0.1, MU, MU0, -70.0, quadrature_nodes=10)
    np.testing.assert_allclose(minus.reflected * [1, 1, -1, -1], plus.reflected, rtol=0,
                               atol=1e-14)


def test_milne_problem_limb_polarization():
    # light through a thick conservative Rayleigh slab leaves the far side with the angular
    # pattern of the Milne problem (van de Hulst 1980, ch. 14), whose polarization at the limb
    # is 11.713 %, perpendicular to the meridian plane (Chandrasekhar 1950, section 70)
    out = polarized_doubling([(16.0, 1.0, rayleigh_matrix())], 0.0, np.array([1e-6]), 0.8,
                             0.0, quadrature_nodes=16)
    stokes = out.transmitted[0]
    assert stokes[1] < 0.0
    assert -stokes[1] / stokes[0] == pytest.approx(0.11713, abs=1e-5)
    assert abs(stokes[2]) < 1e-14 * stokes[0]
