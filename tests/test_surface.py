"""Tests of lamina.surface: each check names the outside source it compares with."""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr
from scipy import integrate

from lamina import surface
from lamina.surface._base import Geometry

RNG = np.random.default_rng(20261202)


def _smooth_surfaces() -> dict[str, surface.Surface]:
    return {
        "rpv": surface.rahman_pinty_verstraete(0.12, 0.7, -0.15),
        "rpv4": surface.rahman_pinty_verstraete(0.12, 1.2, 0.1, hot_spot=0.4),
        "ross_li": surface.ross_li(0.12, 0.06, 0.02),
        "hapke": surface.hapke(0.6, -0.25, 0.8, 0.06),
    }


def _all_surfaces() -> dict[str, surface.Surface]:
    return {**_smooth_surfaces(), "cox_munk": surface.cox_munk(5.0),
            "cox_munk_unshadowed": surface.cox_munk(3.0, 1.34 + 1e-3j, shadowing=False)}


# --- Lambertian: exact ------------------------------------------------------------------

def test_lambertian_is_albedo_over_pi():
    # Lambert's law: f = A / pi and the directional albedo is A, exactly (up to round-off)
    lam = surface.lambertian(0.37)
    angles = RNG.uniform(0.0, 89.0, (3, 20))
    np.testing.assert_allclose(lam.brdf(*angles), 0.37 / np.pi, rtol=1e-15)
    np.testing.assert_allclose(lam.directional_albedo([0.0, 30.0, 60.0, 85.0]), 0.37,
                               rtol=1e-13)


def test_lambertian_spectral_broadcast():
    albedo = xr.DataArray([0.1, 0.5], dims="wavelength", coords={"wavelength": [0.5, 1.6]})
    lam = surface.lambertian(albedo)
    result = lam.brdf(30.0, np.array([0.0, 40.0, 70.0]), 180.0)
    assert result.dims == ("wavelength", "view_zenith")
    np.testing.assert_allclose(result.sel(wavelength=1.6), 0.5 / np.pi, rtol=1e-15)
    xr.testing.assert_allclose(lam.directional_albedo(45.0), albedo, rtol=1e-13)


# --- Helmholtz reciprocity --------------------------------------------------------------

@pytest.mark.parametrize("name", list(_all_surfaces()))
def test_reciprocity(name):
    # Helmholtz reciprocity f(mu, mu0, phi) = f(mu0, mu, phi); every model here is published
    # as reciprocal (Rahman et al. 1993; Wanner et al. 1995 'reciprocal' Li-sparse;
    # Cox and Munk 1954 with the Sancer 1969 shadowing; Hapke 1981)
    model = _all_surfaces()[name]
    sun, view = RNG.uniform(0.0, 88.0, (2, 200))
    azimuth = RNG.uniform(0.0, 180.0, 200)
    forward = model.brdf(sun, view, azimuth)
    backward = model.brdf(view, sun, azimuth)
    np.testing.assert_allclose(forward, backward, rtol=1e-12, atol=0.0)


# --- energy: directional albedo in [0, 1] ------------------------------------------------

def test_directional_albedo_within_one_over_parameter_grid():
    # energy conservation (a passive surface reflects at most what falls on it) over typical
    # fitted values; RPV with k near 0.5 and rho0 = 0.2 exceeds 1 at 85 degrees (its bowl
    # mu0^(k-1) diverges at the horizon), which the construction check refuses
    sun = np.array([0.0, 30.0, 60.0, 75.0, 85.0])
    models = [surface.rahman_pinty_verstraete(r, k, t)
              for r in (0.02, 0.2) for k in (0.7, 1.0, 1.5) for t in (-0.3, 0.0, 0.3)]
    # Ross-Li weights as fitted: f_geo well below f_iso (Lucht et al. 2000), else the
    # reflectance factor f_iso + f_geo K_geo (K_geo about -1.3) goes negative
    models += [surface.ross_li(i, v * i, g * i) for i in (0.05, 0.4) for v in (0.0, 1.0)
               for g in (0.0, 0.2)]
    models += [surface.cox_munk(w, shadowing=s) for w in (0.0, 2.0, 10.0, 20.0)
               for s in (True, False)]
    # Hapke's opposition term adds energy on top of the multiple scattering, and his multiple
    # scattering is that of isotropic particles whatever P is, so at w = 1 only isotropic
    # particles without the surge conserve energy (others are refused at construction)
    models += [surface.hapke(w, b, b0, h) for w in (0.2, 0.9) for b in (-0.4, 0.0, 0.4)
               for b0 in (0.0, 0.5) for h in (0.02, 0.2)]
    models += [surface.hapke(1.0)]
    for model in models:
        albedo = model.directional_albedo(sun)
        assert np.all(albedo >= 0.0) and np.all(albedo <= 1.0), (model, albedo)


def test_albedo_above_one_is_refused_naming_the_angle():
    # RPV at rho0 = 0.5, k = 0.5 reflects more than it receives (its bowl diverges towards
    # the horizon and the amplitude is large)
    with pytest.raises(ValueError, match=r"directional albedo must lie in \[0, 1\]; at sun "
                                         r"zenith \d+ degrees"):
        surface.rahman_pinty_verstraete(0.5, 0.5, -0.3)
    # Hapke's 1981 H-function is a few percent high at w = 1 (Hapke 2002, sec. 2)
    with pytest.raises(ValueError, match="at sun zenith 0 degrees it is 1.0"):
        surface.hapke(1.0, h_approximation="hapke1981")


def test_check_energy_at_other_angles():
    # the construction check stops at 85 degrees; RPV with k < 1 diverges as mu0 -> 0
    # (the factor mu0^(k-1) of Rahman et al. 1993), so nearer the horizon it fails
    model = surface.rahman_pinty_verstraete(0.1, 0.5, 0.0)
    model.check_energy([60.0, 85.0])
    with pytest.raises(ValueError, match="at sun zenith 89 degrees"):
        model.check_energy([60.0, 89.0])


# --- Fresnel and the glint --------------------------------------------------------------

def test_fresnel_normal_incidence():
    # Fresnel: R(0) = ((n - 1) / (n + 1))^2 = 0.020490... for n = 1.334 (Born and Wolf 1.5)
    expected = ((1.334 - 1.0) / (1.334 + 1.0)) ** 2
    assert abs(expected - 0.0205) < 1e-4
    np.testing.assert_allclose(surface.fresnel_reflectance(1.0, 1.334), expected, rtol=1e-14)
    n = 1.5 + 0.2j
    np.testing.assert_allclose(surface.fresnel_reflectance(1.0, n),
                               abs((n - 1) / (n + 1)) ** 2, rtol=1e-14)


def test_fresnel_brewster_and_grazing():
    # Brewster: r_p = 0 at tan(i) = n, so R = |r_s|^2 / 2 with r_s = cos(i - t) ... written
    # via Snell: r_s = -sin(i - t) / sin(i + t) (Born and Wolf 1.5, eq. 21); R -> 1 at grazing
    n = 1.334
    i = np.arctan(n)
    t = np.arcsin(np.sin(i) / n)
    r_s = -np.sin(i - t) / np.sin(i + t)
    np.testing.assert_allclose(surface.fresnel_reflectance(np.cos(i), n), 0.5 * r_s ** 2,
                               rtol=1e-13)
    np.testing.assert_allclose(surface.fresnel_reflectance(0.0, n), 1.0, rtol=1e-14)


@pytest.mark.parametrize("wind", [0.0, 1.0])
def test_glint_albedo_is_fresnel_at_low_wind(wind):
    # Cox and Munk (1954): a sea of small slopes reflects like a flat Fresnel surface, the
    # directional albedo tending to R_F(theta0) as the mean square slope sigma^2 -> 0. The
    # first-order tilt effect cancels by the symmetry of the slope distribution, so the
    # relative difference is O(sigma^2) times a coefficient that grows with tan^2 theta0
    # (measured about 3 at 60 degrees); 5 sigma^2 for theta0 <= 60 degrees allows that and
    # still fails for a wrong normalisation, a wrong Fresnel or a missing 1/(4 mu mu0 mu_n^4).
    sun = np.array([0.0, 20.0, 40.0, 60.0])
    variance = surface.cox_munk_slope_variance(wind)
    albedo = surface.cox_munk(wind).directional_albedo(sun)
    fresnel = surface.fresnel_reflectance(np.cos(np.deg2rad(sun)), 1.334)
    np.testing.assert_allclose(albedo, fresnel, rtol=5.0 * variance)


def test_glint_at_the_specular_point():
    # Cox and Munk (1954): at the specular direction the reflecting facet is level
    # (tan theta_n = 0, mu_n = 1, chi = theta0), so f = R_F(theta0) / (4 pi sigma^2 mu0^2)
    # without shadowing; with it, times S = 1 / (1 + 2 Lambda(nu0)) where Smith's (1967)
    # Lambda is by definition int_{cot}^inf (z - cot) p(z) dz / cot over the one-dimensional
    # Gaussian slope density of variance sigma^2 / 2 (integrated here by scipy quad)
    wind, sun = 5.0, 80.0  # near grazing, where Lambda is of order 0.1
    variance = surface.cox_munk_slope_variance(wind)
    mu0 = np.cos(np.deg2rad(sun))
    flat = surface.fresnel_reflectance(mu0, 1.334) / (4 * np.pi * variance * mu0 ** 2)
    np.testing.assert_allclose(surface.cox_munk(wind, shadowing=False).brdf(sun, sun, 0.0),
                               flat, rtol=1e-14)
    cot = mu0 / np.sqrt(1 - mu0 ** 2)
    s1 = np.sqrt(variance / 2)

    def density(z):
        return np.exp(-z * z / (2 * s1 * s1)) / np.sqrt(2 * np.pi * s1 * s1)

    lam, _ = integrate.quad(lambda z: (z - cot) * density(z), cot, np.inf, epsabs=1e-15)
    lam /= cot
    np.testing.assert_allclose(surface.cox_munk(wind).brdf(sun, sun, 0.0),
                               flat / (1 + 2 * lam), rtol=1e-9)


def test_glint_slope_distribution_normalised():
    # the isotropic Gaussian of Cox and Munk (1954) integrates to 1 over the slopes: check
    # by integrating the model's BRDF with R_F = 1 and no shadowing in slope space
    # (d omega = 4 cos(chi) mu_n^3 dzx dzy is the Jacobian of the reflection)
    variance = surface.cox_munk_slope_variance(4.0)

    def integrand(zy, zx):
        return np.exp(-(zx * zx + zy * zy) / variance) / (np.pi * variance)

    total, _ = integrate.dblquad(integrand, -1.0, 1.0, -1.0, 1.0)
    assert abs(total - 1.0) < 1e-10


def test_glint_directional_albedo_by_independent_quadrature():
    # scipy's adaptive dblquad over (theta, phi) as an independent quadrature of the same f
    model = surface.cox_munk(5.0)
    sun = 35.0

    def integrand(phi, theta):
        f = model.brdf(sun, np.rad2deg(theta), np.rad2deg(phi))
        return 2.0 * f * np.cos(theta) * np.sin(theta)

    reference, _ = integrate.dblquad(integrand, 0.0, 0.5 * np.pi, 0.0, np.pi,
                                     epsabs=1e-12, epsrel=1e-10)
    assert abs(model.directional_albedo(sun) - reference) < 1e-9


# --- Ross-Li ---------------------------------------------------------------------------

def test_ross_li_kernels_vanish_at_nadir():
    # Lucht, Schaaf and Strahler (2000): both kernels are normalised to 0 for sun and view at
    # nadir, so f_iso is the nadir reflectance factor
    g = Geometry(np.array(1.0), np.array(1.0), np.array(0.0))
    assert abs(surface.ross_thick_kernel(g)) < 1e-15
    assert abs(surface.li_sparse_reciprocal_kernel(g)) < 1e-15
    np.testing.assert_allclose(surface.ross_li(0.2, 0.3, 0.1).brdf(0.0, 0.0, 0.0) * np.pi,
                               0.2, rtol=1e-14)


def test_ross_li_kernels_at_the_hot_spot():
    # at the hot spot (view = sun, phase angle 0) the published formulas reduce to
    # K_vol = pi / (4 mu) - pi / 4 (xi = 0) and, with b/r = 1 and D = 0 so t = pi / 2,
    # K_geo = sec - 2 sec + sec^2 = sec^2 - sec (Wanner et al. 1995; Lucht et al. 2000 eq. 39-44)
    mu = np.cos(np.deg2rad(np.array([10.0, 35.0, 60.0])))
    g = Geometry(mu, mu, np.array(-1.0))
    np.testing.assert_allclose(surface.ross_thick_kernel(g), np.pi / (4 * mu) - np.pi / 4,
                               rtol=1e-13)
    np.testing.assert_allclose(surface.li_sparse_reciprocal_kernel(g), 1 / mu ** 2 - 1 / mu,
                               rtol=1e-12)


def test_ross_li_white_sky_kernel_integrals():
    # Lucht, Schaaf and Strahler (2000), Table 1 (from memory): white-sky (bihemispherical)
    # integrals of the kernels, iso 1, Ross-thick 0.189184, Li-sparse-R -1.377622, given to
    # 6 digits. The Li-sparse integrand has a t^3 onset where the crowns' shadows begin to
    # overlap, which limits our quadrature to about 1e-5 there
    cosines, weights = np.polynomial.legendre.leggauss(48)
    mu0 = 0.5 * (cosines + 1.0)
    sun = np.rad2deg(np.arccos(mu0))
    for weights_in, expected, tolerance in (((0, 1, 0), 0.189184, 5e-6),
                                           ((0, 0, 1), -1.377622, 1e-4)):
        model = surface.models.RossLi.__new__(surface.models.RossLi)
        model._parameters = {name: xr.DataArray(float(value)) for name, value in zip(
            ("isotropic_weight", "volumetric_weight", "geometric_weight"), weights_in,
            strict=True)}
        black_sky = model.directional_albedo(sun, zenith_panels=24, azimuth_panels=32)
        white_sky = np.sum(weights * mu0 * black_sky)  # 2 int A mu0 d mu0
        assert abs(white_sky - expected) < tolerance


def test_ross_li_with_only_isotropic_weight_is_lambertian():
    # R = f_iso is a Lambertian reflectance factor (Lucht et al. 2000)
    angles = RNG.uniform(0.0, 85.0, (3, 30))
    np.testing.assert_allclose(surface.ross_li(0.25, 0.0, 0.0).brdf(*angles),
                               surface.lambertian(0.25).brdf(*angles), rtol=1e-15)


# --- RPV -------------------------------------------------------------------------------

def test_rpv_reduces_to_lambertian():
    # Rahman et al. (1993): k = 1 removes the bowl, Theta = 0 makes F = 1 and rho_c = 1 turns
    # off the hot spot, leaving R = rho0
    angles = RNG.uniform(0.0, 85.0, (3, 30))
    model = surface.rahman_pinty_verstraete(0.3, 1.0, 0.0, hot_spot=1.0)
    np.testing.assert_allclose(model.brdf(*angles) * np.pi, 0.3, rtol=1e-14)


def test_rpv_hot_spot_is_at_backscatter():
    # the hot-spot factor 1 + (1 - rho0) / (1 + G) peaks at G = 0: view = sun on the
    # backscatter side (lamina's view_azimuth 180); there it equals 2 - rho0
    model = surface.rahman_pinty_verstraete(0.2, 1.0, 0.0)
    np.testing.assert_allclose(model.brdf(40.0, 40.0, 180.0) * np.pi, 0.2 * (2.0 - 0.2),
                               rtol=1e-14)
    assert model.brdf(40.0, 40.0, 180.0) > model.brdf(40.0, 40.0, 0.0)


# --- Hapke -----------------------------------------------------------------------------

def test_hapke_isotropic_closed_form():
    # Hapke (1981), eq. (16) with P = 1 and B = 0: r = (w / 4 pi) mu0 / (mu0 + mu) H(mu0) H(mu),
    # f = r / mu0, H(x) = (1 + 2x) / (1 + 2 sqrt(1 - w) x) (eq. 17)
    w = 0.7
    sun, view = RNG.uniform(0.0, 88.0, (2, 40))
    azimuth = RNG.uniform(0.0, 180.0, 40)
    mu0, mu = np.cos(np.deg2rad(sun)), np.cos(np.deg2rad(view))
    gamma = np.sqrt(1.0 - w)

    def h_1981(x):
        return (1 + 2 * x) / (1 + 2 * gamma * x)

    expected = w / (4 * np.pi) * h_1981(mu0) * h_1981(mu) / (mu0 + mu)
    model = surface.hapke(w, 0.0, 0.0, h_approximation="hapke1981")
    np.testing.assert_allclose(model.brdf(sun, view, azimuth), expected, rtol=1e-13)


def test_hapke_albedo_against_chandrasekhar():
    # Chandrasekhar (1960), Radiative Transfer, eq. (IV.52): for isotropic scatterers the
    # directional albedo of a semi-infinite medium is 1 - sqrt(1 - w) H(mu0), with H the exact
    # H-function (solved here from its integral equation by iteration, scipy-free). The 2002
    # approximation is published as good to about 1 percent in H (Hapke 2002), so the albedo
    # must agree to 2 percent
    w = 0.9
    x, wx = np.polynomial.legendre.leggauss(200)
    x, wx = 0.5 * (x + 1.0), 0.5 * wx
    h = np.ones_like(x)
    for _ in range(500):
        # 1 / H(mu) = sqrt(1 - w) + (w / 2) int x H(x) / (mu + x) dx  (Chandrasekhar IV.55)
        h = 1.0 / (np.sqrt(1 - w) + 0.5 * w * (x * wx * h)[None, :].dot(
            1.0 / (x[None, :] + x[:, None])).ravel())
    sun = np.array([0.0, 40.0, 70.0])
    mu0 = np.cos(np.deg2rad(sun))
    h_mu0 = 1.0 / (np.sqrt(1 - w) + 0.5 * w * np.sum(x * wx * h / (mu0[:, None] + x), axis=1))
    exact = 1.0 - np.sqrt(1.0 - w) * h_mu0
    albedo = surface.hapke(w).directional_albedo(sun)
    np.testing.assert_allclose(albedo, exact, rtol=0.02)


def test_hapke_opposition_surge():
    # Hapke (1986): B(0) = B0, so at the hot spot (g = 0) the single-scattering term is
    # multiplied by 1 + B0
    w, b0 = 0.5, 0.8
    bright = surface.hapke(w, 0.0, b0, 0.05)
    plain = surface.hapke(w, 0.0, 0.0, 0.05)
    mu = np.cos(np.deg2rad(30.0))
    single = w / (4 * np.pi) / (2 * mu)  # P = 1 at any g
    np.testing.assert_allclose(bright.brdf(30.0, 30.0, 180.0) - plain.brdf(30.0, 30.0, 180.0),
                               b0 * single, rtol=1e-12)


# --- quadrature and Fourier terms ------------------------------------------------------

@pytest.mark.parametrize("name", list(_all_surfaces()))
def test_directional_albedo_converged(name):
    # doubling the panels changes the default quadrature by less than the accuracy stated in
    # the docstring (1e-8 absolute up to 70 degrees; the hot spot's cusp limits it)
    model = _all_surfaces()[name]
    sun = np.array([0.0, 35.0, 70.0])
    default = model.directional_albedo(sun)
    fine = model.directional_albedo(sun, 2 * model._zenith_panels, 2 * model._azimuth_panels)
    np.testing.assert_allclose(default, fine, rtol=0.0, atol=5e-8)


@pytest.mark.parametrize("name", list(_smooth_surfaces()) + ["cox_munk"])
def test_fourier_terms_reconstruct_brdf(name):
    # f = sum_m (2 - delta_m0) f_m cos(m phi): the cosine series of an even function; off
    # the hot-spot diagonal (mu != mu0) the smooth models converge fast in m. Checked at
    # azimuths that are not quadrature nodes
    model = _all_surfaces()[name]
    incident = np.array([0.3, 0.55, 0.8])
    reflected = np.array([0.2, 0.5, 0.9])
    terms = 64
    f_m = model.fourier_terms(incident, reflected, terms)
    assert f_m.dims == ("fourier_term", "reflected", "incident")
    azimuth = np.array([5.0, 13.7, 77.1, 151.3, 179.0])
    m = np.arange(terms)
    basis = (2 - (m == 0))[:, None] * np.cos(np.outer(m, np.deg2rad(azimuth)))
    rebuilt = np.einsum("moi,mp->oip", f_m.values, basis)
    exact = model.brdf(np.rad2deg(np.arccos(incident))[None, :, None],
                       np.rad2deg(np.arccos(reflected))[:, None, None], azimuth[None, None, :])
    tolerance = {"ross_li": 2e-4, "hapke": 1e-4, "cox_munk": 1e-3}.get(name, 1e-6)
    np.testing.assert_allclose(rebuilt, exact, rtol=0.0, atol=tolerance * np.abs(exact).max())


@pytest.mark.parametrize(("name", "tolerance"), [
    ("rpv", 1e-12), ("rpv4", 1e-12), ("hapke", 1e-12), ("cox_munk", 1e-11), ("ross_li", 1e-5)])
def test_fourier_quadrature_converged(name, tolerance):
    # the azimuth quadrature of each f_m against four times the panels: 1e-12 relative for
    # the smooth models and the glint at 5 m/s; the Li-sparse overlap onset limits Ross-Li
    model = _all_surfaces()[name]
    incident, reflected = np.array([0.3, 0.8]), np.array([0.2, 0.8, 0.95])
    a = model.fourier_terms(incident, reflected, 24).values
    b = model.fourier_terms(incident, reflected, 24, azimuth_panels=128).values
    assert np.abs(a - b).max() < tolerance * np.abs(b).max()


def test_fourier_term_zero_is_azimuthal_mean_and_gives_albedo():
    # the m = 0 term integrated over mu with weight 2 pi mu is the directional albedo
    model = surface.rahman_pinty_verstraete(0.12, 0.7, -0.15)
    nodes, weights = np.polynomial.legendre.leggauss(40)
    mu, weights = 0.5 * (nodes + 1), 0.5 * weights
    f0 = model.fourier_terms([np.cos(np.deg2rad(30.0))], mu, 1).values[0, :, 0]
    # k = 0.7: the integrand mu^0.7 limits Gauss to about 1e-5 at 40 nodes
    np.testing.assert_allclose(2 * np.pi * np.sum(weights * mu * f0),
                               model.directional_albedo(30.0), rtol=1e-4)


def test_spectral_parameters_broadcast():
    wavelength = xr.DataArray([0.45, 0.65, 0.86], dims="wavelength")
    rho0 = xr.DataArray([0.03, 0.05, 0.3], dims="wavelength", coords={"wavelength": wavelength})
    model = surface.rahman_pinty_verstraete(rho0, 0.8, -0.1)
    values = model.brdf(30.0, 20.0, xr.DataArray([0.0, 90.0, 180.0], dims="view_azimuth"))
    assert values.dims == ("wavelength", "view_azimuth")
    one = surface.rahman_pinty_verstraete(0.05, 0.8, -0.1).brdf(30.0, 20.0, 90.0)
    np.testing.assert_allclose(values.isel(wavelength=1, view_azimuth=1), one, rtol=1e-14)
    f_m = model.fourier_terms([0.5], [0.4, 0.9], 4)
    assert f_m.dims == ("wavelength", "fourier_term", "reflected", "incident")


@pytest.mark.parametrize("name", list(_all_surfaces()))
def test_brdf_finite_up_to_grazing(name):
    # no silent NaN: every model is finite at nadir, at exact backscatter and forward
    # azimuths and at views a hair from the horizon (where secants are 1e7)
    angles = np.array([0.0, 1e-9, 1e-3, 30.0, 89.9, 89.99999])
    sun, view, azimuth = np.meshgrid(angles, angles, [0.0, 1e-9, 90.0, 180.0 - 1e-9, 180.0],
                                     indexing="ij")
    assert np.all(np.isfinite(_all_surfaces()[name].brdf(sun, view, azimuth)))


def test_directional_emissivity_is_one_minus_albedo():
    # Kirchhoff's law (e.g. Siegel and Howell, Thermal Radiation Heat Transfer): in
    # equilibrium the directional emissivity is 1 minus the directional albedo; for a
    # Lambertian surface exactly 1 - A
    np.testing.assert_allclose(surface.lambertian(0.3).directional_emissivity([0.0, 60.0]),
                               0.7, rtol=1e-13)
    model = surface.cox_munk(5.0)
    np.testing.assert_allclose(model.directional_emissivity(50.0),
                               1.0 - model.directional_albedo(50.0), rtol=1e-15)


def test_hemispherical_directional_equals_directional_hemispherical():
    # Helmholtz reciprocity: the reflectance of diffuse light into mu (integral over the
    # incident directions) equals the directional albedo A(mu); integrated by scipy dblquad
    # (pointwise reciprocity with the surge is tested above; without it dblquad is quick)
    model = surface.rahman_pinty_verstraete(0.12, 1.2, 0.1, hot_spot=1.0)
    view = 50.0

    def integrand(phi, theta):
        f = model.brdf(np.rad2deg(theta), view, np.rad2deg(phi))
        return 2.0 * f * np.cos(theta) * np.sin(theta)

    incoming, _ = integrate.dblquad(integrand, 0.0, 0.5 * np.pi, 0.0, np.pi,
                                    epsabs=1e-11, epsrel=1e-9)
    assert abs(incoming - model.directional_albedo(view)) < 1e-7


# --- weighted sums ---------------------------------------------------------------------

def test_weighted_sum_is_linear():
    # a mixture's BRDF and albedo are the weighted sums of its parts (linearity of the
    # reflected radiance in the BRDF)
    a, b = surface.ross_li(0.1, 0.05, 0.02), surface.cox_munk(6.0)
    mixed = 0.7 * a + 0.3 * b
    same = surface.weighted_sum([(0.7, a), (0.3, b)])
    angles = RNG.uniform(0.0, 85.0, (3, 25))
    expected = 0.7 * a.brdf(*angles) + 0.3 * b.brdf(*angles)
    np.testing.assert_allclose(mixed.brdf(*angles), expected, rtol=1e-14)
    np.testing.assert_allclose(same.brdf(*angles), expected, rtol=1e-14)
    # the sum integrates with the glint's finer quadrature; the parts' defaults differ by
    # their stated accuracy (1e-8)
    np.testing.assert_allclose(mixed.directional_albedo(40.0),
                               0.7 * a.directional_albedo(40.0)
                               + 0.3 * b.directional_albedo(40.0), rtol=0.0, atol=3e-8)


def test_weighted_sum_refuses_negative_weight_and_excess():
    a = surface.lambertian(0.6)
    with pytest.raises(ValueError, match="weight 0 must lie in"):
        (-0.5) * a
    with pytest.raises(ValueError, match="directional albedo must lie in"):
        a + a


# --- bad input -------------------------------------------------------------------------

@pytest.mark.parametrize(("call", "message"), [
    (lambda: surface.lambertian(1.2), "albedo must lie in"),
    (lambda: surface.rahman_pinty_verstraete(-0.1, 0.8, 0.0), "amplitude must lie in"),
    (lambda: surface.rahman_pinty_verstraete(0.1, 0.0, 0.0), "bowl_exponent must lie in"),
    (lambda: surface.rahman_pinty_verstraete(0.1, 0.8, 1.0), "asymmetry must lie in"),
    (lambda: surface.rahman_pinty_verstraete(0.1, 0.8, 0.0, hot_spot=3.0), "hot_spot must"),
    (lambda: surface.ross_li(0.1, -0.1, 0.0), "volumetric_weight must lie in"),
    (lambda: surface.cox_munk(-1.0), "wind_speed must lie in"),
    (lambda: surface.cox_munk(5.0, 1.0), "refractive_index must have a real part > 1"),
    (lambda: surface.cox_munk(5.0, 1.33 - 0.1j), "imaginary part >= 0"),
    (lambda: surface.hapke(1.1), "single_scattering_albedo must lie in"),
    (lambda: surface.hapke(-0.1), "single_scattering_albedo must lie in"),
    (lambda: surface.hapke(0.5, opposition_width=0.0), "opposition_width must lie in"),
    (lambda: surface.hapke(0.5, h_approximation="exact"), "h_approximation must be"),
    (lambda: surface.lambertian(0.3).brdf(95.0, 0.0, 0.0), "sun_zenith must lie in"),
    (lambda: surface.lambertian(0.3).brdf(30.0, 90.0, 0.0), r"view_zenith must lie in \[0, 90\)"),
    (lambda: surface.lambertian(0.3).brdf(30.0, np.nan, 0.0), "view_zenith must lie in"),
    (lambda: surface.lambertian(0.3).fourier_terms([0.0], [0.5], 2), "incident_cosines"),
    (lambda: surface.lambertian(0.3).fourier_terms([0.5], [0.5], 0), "n_terms must be"),
])
def test_value_errors_name_the_argument(call, message):
    with pytest.raises(ValueError, match=message):
        call()


def test_spectral_value_error_names_the_position():
    albedo = xr.DataArray([0.2, 1.5], dims="wavelength")
    with pytest.raises(ValueError, match="albedo must lie in .*wavelength 1 is 1.5"):
        surface.lambertian(albedo)


@pytest.mark.parametrize(("call", "message"), [
    (lambda: surface.lambertian("0.3"), "albedo must be numeric"),
    (lambda: surface.cox_munk(True), "wind_speed must be numeric"),
    (lambda: surface.cox_munk(5.0, shadowing="yes"), "shadowing must be True or False"),
    (lambda: surface.hapke(xr.DataArray(["a"])), "single_scattering_albedo must be numeric"),
    (lambda: surface.weighted_sum([(0.5, "grass")]), "term 0 must be a surface"),
    (lambda: surface.lambertian(0.3).fourier_terms([0.5], [0.5], 2.0), "n_terms must be an"),
])
def test_type_errors(call, message):
    with pytest.raises(TypeError, match=message):
        call()
