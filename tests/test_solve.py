"""The core solver against outside references (sources named beside each check)."""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

import lamina
from lamina import _kernel
from lamina.quadrature import double_gauss
from lamina.validation import references


def isotropic(nlayer: int = 1) -> np.ndarray:
    return np.ones((nlayer, 1))


def hg(g: float, n: int = 64) -> np.ndarray:
    return lamina.phase.henyey_greenstein(g, n)


# ---------------------------------------------------------------- exact published results


@pytest.mark.parametrize("albedo", [0.5, 0.9, 0.99, 1.0])
def test_semi_infinite_isotropic_reflection_matches_h_functions(albedo):
    # Chandrasekhar 1950, ch. V: I(0, mu) = w S/(4 pi) mu0/(mu + mu0) H(mu) H(mu0) for a
    # semi-infinite isotropically scattering medium. A layer of optical thickness 2000 over a
    # black surface stands in for it (its transmission is below 1e-5 even for w = 1 and
    # enters the reflection at that level only through the bottom boundary).
    view = np.array([0.0, 25.0, 45.0, 60.0, 75.0, 84.0])
    sun = np.array([0.0, 30.0, 60.0, 78.0])
    atm = lamina.make_atmosphere([2000.0 if albedo < 1 else 2e6], [albedo], isotropic())
    out = lamina.solve(atm, streams=32, sun_zenith=sun, surface_albedo=0.0,
                       view_zenith=view, view_azimuth=[0.0, 90.0])
    mu = np.cos(np.radians(view))
    mu0 = np.cos(np.radians(sun))
    expected = references.semi_infinite_isotropic_reflection(mu[None, :], mu0[:, None], albedo)
    got = out.radiance.sel(level=0, direction="up").transpose("sun_zenith", "view_zenith",
                                                              "view_azimuth")
    assert np.allclose(got[..., 0], got[..., 1], rtol=1e-12, atol=0)   # azimuth-free
    relative = np.abs(got.values[..., 0] / expected - 1.0)
    assert relative.max() < 1e-5, relative.max()


@pytest.mark.parametrize("albedo", [0.3, 0.8, 0.95])
def test_plane_albedo_matches_h_function(albedo):
    # plane albedo of a semi-infinite isotropic medium A(mu0) = 1 - H(mu0) sqrt(1 - w)
    # (Chandrasekhar 1950; van de Hulst 1980)
    sun = np.array([0.0, 40.0, 70.0, 85.0])
    atm = lamina.make_atmosphere([1000.0], [albedo], isotropic())
    out = lamina.solve(atm, streams=32, sun_zenith=sun, surface_albedo=0.0)
    mu0 = np.cos(np.radians(sun))
    expected = references.plane_albedo(mu0, albedo)
    got = out.flux_up.isel(level=0).values / mu0
    assert np.max(np.abs(got / expected - 1)) < 1e-5


def test_thin_henyey_greenstein_layer_is_single_scattering_at_every_azimuth():
    # single scattering in an optically thin layer over a black surface (textbook result,
    # e.g. Thomas and Stamnes 1999): I_up = w S/(4 pi) P(cos T) mu0/(mu + mu0)
    # [1 - exp(-t (1/mu + 1/mu0))]; transmitted analogously. This fixes the azimuth
    # convention: view_azimuth 0 is the forward side, so upward light near 180 degrees sees
    # the backscattering peak and downward light near 0 the forward peak.
    g, tau, w, sun = 0.6, 1e-7, 0.8, 40.0
    view = np.array([10.0, 35.0, 60.0, 80.0])
    azimuth = np.array([0.0, 30.0, 90.0, 150.0, 180.0])
    atm = lamina.make_atmosphere([tau], [w], hg(g, 32))
    out = lamina.solve(atm, streams=32, sun_zenith=sun, surface_albedo=0.0,
                       view_zenith=view, view_azimuth=azimuth, delta_m=False,
                       single_scattering_correction=False, fourier_tolerance=1e-10)
    mu = np.cos(np.radians(view))[:, None]
    mu0 = np.cos(np.radians(sun))
    phi = np.radians(azimuth)[None, :]
    sin_product = np.sqrt(1 - mu**2) * np.sqrt(1 - mu0**2) * np.cos(phi)

    def henyey_greenstein(cosine):   # Henyey and Greenstein 1941
        return (1 - g * g) / (1 + g * g - 2 * g * cosine) ** 1.5

    up = w / (4 * np.pi) * henyey_greenstein(-mu * mu0 + sin_product) * mu0 / (mu + mu0) \
        * -np.expm1(-tau * (1 / mu + 1 / mu0))
    down = w / (4 * np.pi) * henyey_greenstein(mu * mu0 + sin_product) * mu0 / (mu - mu0) \
        * (np.exp(-tau / mu) - np.exp(-tau / mu0))
    got_up = out.radiance.sel(level=0, direction="up").values
    got_down = out.radiance.sel(level=1, direction="down").values
    assert np.max(np.abs(got_up / up - 1)) < 1e-5
    assert np.max(np.abs(got_down / down - 1)) < 1e-5
    # the backscatter side is brighter for this forward-scattering layer seen from above
    assert got_up[1, -1] < got_up[1, 0]


def test_isothermal_non_scattering_slab():
    # flux emissivity 1 - 2 E3(t) and radiance B (1 - exp(-t/mu)) of an isothermal,
    # non-scattering slab (Chandrasekhar 1950; Goody and Yung 1989)
    from scipy.special import expn

    tau = np.array([0.05, 0.5, 2.0, 10.0])
    atm = lamina.make_atmosphere(tau[:, None], np.zeros((4, 1)), isotropic(),
                                 temperature=np.full((4, 2), 250.0), extra_dims=["column"])
    band = (500.0, 800.0)
    out = lamina.solve(atm, streams=64, sun_irradiance=0.0, surface_albedo=0.0,
                       surface_temperature=0.0, wavenumber_band=band,
                       view_zenith=[0.0, 50.0, 80.0], view_azimuth=[0.0])
    planck = lamina.planck.band_radiance(250.0, *band)
    emissivity = out.flux_up.isel(level=0) / (np.pi * planck)
    # 32 Gauss cosines integrate the exponential integral to about 1e-6 for t >= 0.05
    assert np.allclose(emissivity, 1 - 2 * expn(3, tau), rtol=2e-5)
    mu = np.cos(np.radians([0.0, 50.0, 80.0]))
    radiance = out.radiance.sel(level=0, direction="up").isel(view_azimuth=0)
    assert np.allclose(radiance, planck * -np.expm1(-tau[:, None] / mu), rtol=1e-12)


# ---------------------------------------------------------------- exact conservation laws


@pytest.mark.parametrize("thickness", [0.1, 3.0, 30.0, 100.0])
def test_conservative_scattering_conserves_energy(thickness):
    # w = 1 everywhere over a black surface: reflected + transmitted = S mu0 (exact).
    # Several anisotropic layers, the sun at two angles; required to 1e-8.
    nlayer = 4
    moments = np.stack([hg(0.85), hg(0.3), lamina.phase.rayleigh(0.0, 64), hg(-0.2)])
    atm = lamina.make_atmosphere(np.full(nlayer, thickness / nlayer), np.ones(nlayer), moments)
    out = lamina.solve(atm, streams=16, sun_zenith=[0.0, 75.0], surface_albedo=0.0)
    mu0 = np.cos(np.radians(out.sun_zenith))
    balance = (out.flux_up.isel(level=0) + out.flux_down.isel(level=-1)) / mu0
    assert np.max(np.abs(balance - 1)) < 1e-8
    # the net flux is the same at every level (no absorption anywhere)
    assert np.ptp(out.flux_net.values, axis=-1).max() < 1e-8


def test_reciprocity_of_reflection():
    # mu0 R(mu, mu0, phi) is symmetric in mu and mu0 (Chandrasekhar 1950, reciprocity
    # principle): I(mu; mu0) / mu0 = I(mu0; mu) / mu for unit irradiance.
    angles = np.array([10.0, 35.0, 55.0, 70.0])
    moments = np.stack([lamina.phase.rayleigh(0.0, 64), hg(0.7), hg(0.2)])
    atm = lamina.make_atmosphere([0.3, 1.5, 0.8], [1.0, 0.95, 0.6], moments)
    out = lamina.solve(atm, streams=32, sun_zenith=angles, surface_albedo=0.25,
                       view_zenith=angles, view_azimuth=[0.0, 60.0, 180.0],
                       fourier_tolerance=1e-10)
    mu = np.cos(np.radians(angles))
    reflected = out.radiance.sel(level=0, direction="up").transpose(
        "sun_zenith", "view_zenith", "view_azimuth").values
    ratio = reflected / mu[:, None, None]
    # delta-M and the exact single-scattering term keep reciprocity; so must the sum
    assert np.allclose(ratio, ratio.transpose(1, 0, 2), rtol=1e-6, atol=0)


def test_mean_intensity_is_the_angular_mean_of_radiance():
    # J = (1/4 pi) integral of I over the sphere, including the direct beam S e^{-t/mu0}
    # (definition). The radiance is integrated here on a fine Gauss grid at interior depths.
    moments = np.stack([hg(0.5, 16), lamina.phase.rayleigh(0.0, 16)])
    atm = lamina.make_atmosphere([0.7, 1.2], [0.9, 1.0], moments)
    nodes, weights = np.polynomial.legendre.leggauss(48)
    view = np.degrees(np.arccos(0.5 * (nodes + 1)))
    azimuth = np.linspace(0.0, 180.0, 25)
    out = lamina.solve(atm, streams=16, sun_zenith=35.0, surface_albedo=0.3,
                       view_zenith=view, view_azimuth=azimuth, delta_m=False,
                       single_scattering_correction=False, fourier_tolerance=1e-12,
                       output_levels=[0.0, 0.5, 1.25, 2.0])
    # trapezoid in azimuth over [0, pi] (the field is even in azimuth), Gauss in mu
    azimuth_weights = np.full(azimuth.size, np.pi / (azimuth.size - 1))
    azimuth_weights[[0, -1]] /= 2
    integral = np.einsum("ldza,z,a->l", out.radiance.values, 0.5 * weights, azimuth_weights)
    mu0 = np.cos(np.radians(35.0))
    direct = np.exp(-out.cumulative_optical_depth.values / mu0)
    mean = (2 * integral + direct) / (4 * np.pi)
    assert np.allclose(out.mean_intensity.values, mean, rtol=2e-4)


def test_fluxes_converge_as_streams_grow():
    # reference: the plane albedo of a semi-infinite isotropic medium (Chandrasekhar 1950)
    atm = lamina.make_atmosphere([3000.0], [0.95], isotropic())
    mu0 = np.cos(np.radians(60.0))
    expected = references.plane_albedo(np.array([mu0]), 0.95)[0]
    errors = []
    for streams in (2, 4, 8, 16, 32):
        out = lamina.solve(atm, streams=streams, sun_zenith=60.0, surface_albedo=0.0)
        errors.append(abs(float(out.flux_up[0]) / mu0 - expected))
    assert all(later < earlier for earlier, later in zip(errors, errors[1:], strict=False))
    assert errors[-1] < 1e-6


# ---------------------------------------------------------------- extreme but valid input


@pytest.mark.parametrize("thickness", [1e4, 1e5])
def test_very_thick_layers_stay_finite(thickness):
    atm = lamina.make_atmosphere([0.5, thickness, 0.5], [0.9, 0.999, 1.0],
                                 np.stack([hg(0.8), hg(0.5), hg(0.0)]))
    out = lamina.solve(atm, streams=16, sun_zenith=45.0, surface_albedo=0.2,
                       view_zenith=[0.0, 60.0], view_azimuth=[0.0, 180.0])
    for name in ("flux_up", "flux_down_diffuse", "mean_intensity", "radiance"):
        assert np.all(np.isfinite(out[name].values)), name
    assert float(out.flux_down.isel(level=-1)) < 1e-30


def test_zero_thickness_layers_change_nothing():
    base = lamina.make_atmosphere([0.4, 1.0], [0.9, 0.7], np.stack([hg(0.6), hg(0.2)]))
    split = lamina.make_atmosphere([0.0, 0.4, 0.0, 1.0, 0.0], [0.5, 0.9, 1.0, 0.7, 0.0],
                                   np.stack([hg(0.1), hg(0.6), hg(0.9), hg(0.2), hg(0.0)]))
    options = dict(streams=16, sun_zenith=30.0, surface_albedo=0.3, view_zenith=[20.0, 70.0],
                   view_azimuth=[0.0, 120.0])
    one = lamina.solve(base, **options)
    two = lamina.solve(split, **options).isel(level=[0, 2, 5])
    for name in ("flux_up", "flux_down", "mean_intensity", "radiance"):
        assert np.allclose(one[name].values, two[name].values, rtol=1e-10, atol=1e-14), name


def test_splitting_a_layer_changes_nothing():
    one = lamina.make_atmosphere([2.0], [0.9], hg(0.7)[None])
    two = lamina.make_atmosphere([0.6, 1.4], [0.9, 0.9], np.stack([hg(0.7), hg(0.7)]))
    options = dict(streams=16, sun_zenith=50.0, surface_albedo=0.1, view_zenith=[0.0, 45.0],
                   view_azimuth=[0.0, 90.0, 180.0])
    a = lamina.solve(one, output_levels=[0.0, 0.3, 1.0], **options)
    b = lamina.solve(two, output_levels=[0.0, 1.0, 2.0], **options)
    for name in ("flux_up", "flux_down", "mean_intensity", "radiance"):
        assert np.allclose(a[name].values, b[name].values, rtol=1e-9, atol=1e-14), name


def test_sun_on_a_quadrature_angle_is_continuous():
    # in a nearly non-scattering layer an eigenvalue sits at 1/mu_i for every quadrature
    # cosine: the sun exactly there must give the limit of nearby angles
    mu, _ = double_gauss(8)
    atm = lamina.make_atmosphere([0.8, 0.5], [1e-6, 0.3], np.stack([hg(0.5), hg(0.5)]))
    zenith = np.degrees(np.arccos(mu[2]))
    angles = zenith + np.array([-1e-5, 0.0, 1e-5])
    out = lamina.solve(atm, streams=8, sun_zenith=angles, surface_albedo=0.2,
                       view_zenith=[zenith, 30.0], view_azimuth=[0.0, 180.0])
    for name in ("flux_up", "flux_down_diffuse", "radiance"):
        values = out[name].transpose("sun_zenith", ...).values
        assert np.all(np.isfinite(values))
        middle = 0.5 * (values[0] + values[2])
        assert np.allclose(values[1], middle, rtol=1e-6, atol=1e-12), name


def test_view_along_the_beam_is_continuous():
    # downward radiance in the direction of the beam: the (exp(-t/mu0) - exp(-t/mu)) /
    # (1/mu0 - 1/mu) factor has a removable singularity there
    atm = lamina.make_atmosphere([0.3, 2.0], [0.9, 0.5], np.stack([hg(0.7), hg(0.1)]))
    out = lamina.solve(atm, streams=16, sun_zenith=40.0, surface_albedo=0.1,
                       view_zenith=[40.0 - 1e-6, 40.0, 40.0 + 1e-6], view_azimuth=[0.0])
    values = out.radiance.sel(direction="down").values[..., 0]
    assert np.all(np.isfinite(values))
    assert np.allclose(values[:, 1], 0.5 * (values[:, 0] + values[:, 2]), rtol=1e-7)


def test_many_streams_and_grazing_views_are_finite_and_physical():
    atm = lamina.make_atmosphere([0.2, 5.0], [1.0, 1.0],
                                 np.stack([hg(0.9, 300), hg(0.75, 300)]))
    out = lamina.solve(atm, streams=128, sun_zenith=0.0, surface_albedo=1.0,
                       view_zenith=[0.0, 89.9, 90.0], view_azimuth=[0.0, 180.0])
    assert np.all(np.isfinite(out.radiance.values))
    assert float(out.radiance.min()) > -1e-9
    # conservative layers over a white surface: all the light comes back up (exact)
    assert float(out.flux_up.isel(level=0)) == pytest.approx(1.0, abs=1e-8)


def test_fourier_terms_stop_early_for_isotropic_layers():
    atm = lamina.make_atmosphere([1.0], [0.9], isotropic())
    out = lamina.solve(atm, streams=16, view_zenith=[30.0], view_azimuth=[0.0, 90.0])
    assert int(out.fourier_terms) <= 3


# ---------------------------------------------------------------- labelled front end


def test_extra_dims_broadcast_and_equal_separate_runs():
    rng = np.random.default_rng(7)
    tau = rng.uniform(0.1, 2.0, (3, 4))
    albedo = rng.uniform(0.5, 1.0, (3, 4))
    atm = lamina.make_atmosphere(tau, albedo, hg(0.7), extra_dims=["wavelength"])
    atm = atm.assign_coords(wavelength=("wavelength", [0.4, 0.6, 0.8], {"units": "um"}))
    surface = xr.DataArray([0.1, 0.2, 0.3], dims="wavelength")
    options = dict(streams=8, sun_zenith=[20.0, 60.0], view_zenith=[0.0, 50.0],
                   view_azimuth=[0.0, 180.0])
    together = lamina.solve(atm, surface_albedo=surface, **options)
    assert together.wavelength.attrs["units"] == "um"
    assert together.radiance.dims == ("wavelength", "sun_zenith", "level", "direction",
                                      "view_zenith", "view_azimuth")
    for i in range(3):
        alone = lamina.solve(atm.isel(wavelength=i), surface_albedo=float(surface[i]),
                             **options)
        xr.testing.assert_allclose(together.isel(wavelength=i).radiance, alone.radiance,
                                   rtol=1e-13)


def test_dask_result_is_lazy_and_equals_eager():
    rng = np.random.default_rng(3)
    atm = lamina.make_atmosphere(rng.uniform(0.1, 3, (6, 5)), rng.uniform(0.3, 1, (6, 5)),
                                 hg(0.6), extra_dims=["wavelength"])
    options = dict(streams=8, sun_zenith=30.0, view_zenith=[10.0], view_azimuth=[0.0])
    eager = lamina.solve(atm, **options)
    lazy = lamina.solve(atm.chunk({"wavelength": 2}), **options)
    assert lazy.radiance.chunks is not None   # nothing computed yet
    xr.testing.assert_equal(lazy.compute(), eager)


def test_every_output_has_units_and_long_name():
    atm = lamina.make_atmosphere([1.0], [0.9], hg(0.5), pressure=[1e4, 1e5])
    sun = xr.DataArray(1361.0, attrs={"units": "W m-2"})
    out = lamina.solve(atm, sun_zenith=30.0, sun_irradiance=sun, view_zenith=[0.0],
                       view_azimuth=[0.0])
    for name in out.data_vars:
        assert "units" in out[name].attrs and "long_name" in out[name].attrs, name
    assert out.heating_rate.attrs["units"] == "K day-1"
    assert out.flux_up.attrs["units"] == "W m-2"
    assert out.radiance.attrs["units"] == "W m-2 sr-1"


# ---------------------------------------------------------------- kernel test hooks


def test_dexp_hook_matches_the_direct_formula_and_its_limit():
    # (exp(-a L) - exp(-b L)) / (b - a), limit L exp(-a L) at a == b (calculus)
    for a, b, length in [(1.0, 3.0, 0.7), (5.0, 0.2, 2.0), (0.0, 4.0, 1e-3)]:
        direct = (np.exp(-a * length) - np.exp(-b * length)) / (b - a)
        assert _kernel.dexp_for_tests(a, b, length) == pytest.approx(direct, rel=1e-13)
    assert _kernel.dexp_for_tests(2.0, 2.0, 0.5) == pytest.approx(0.5 * np.exp(-1.0))
    assert _kernel.dexp_for_tests(2.0, 2.0 + 1e-12, 0.5) == pytest.approx(0.5 * np.exp(-1.0))


def test_cached_exponential_differences_match_expm1():
    # the whole-layer integrals take 1 - exp(-x) from cached exponentials when x > 0.5 and
    # from expm1 below: both branches and the switch against (e^-aL - e^-bL)/(b - a) in
    # extended precision (numpy longdouble, 64-bit mantissa; common practice)
    rng = np.random.default_rng(3)
    for _ in range(400):
        a = 0.0 if rng.random() < 0.3 else 10.0 ** rng.uniform(-3, 2)
        b = a + 10.0 ** rng.uniform(-6, 2) * rng.choice([-1.0, 1.0]) if a > 0 else \
            10.0 ** rng.uniform(-3, 2)
        b = abs(b)
        length = 10.0 ** rng.uniform(-4, 1.5)
        la, lb, ll = np.longdouble(a), np.longdouble(b), np.longdouble(length)
        if a == b:
            continue
        # e^-aL - e^-bL cancels for a close to b even in extended precision: use the
        # identity (e^-aL - e^-bL)/(b - a) = e^(-min(a,b) L) L (1 - e^-x)/x, x = |b - a| L
        x = abs(lb - la) * ll
        exact = np.exp(-min(la, lb) * ll) * ll * (-np.expm1(-x) / x)
        got = _kernel.dexp_cached_for_tests(a, b, length)
        if exact == 0.0:
            assert got == 0.0
            continue
        # a few ulp, plus exp's argument rounding (relative error of e^-aL is up to aL eps,
        # amplified at most 4.1 times by the difference in the cached branch, x > 0.5)
        eps = np.finfo(float).eps
        allowed = 16 * eps + 6 * eps * max(a, b) * length
        assert abs(got - float(exact)) <= allowed * abs(float(exact)), (a, b, length)


def test_legendre_hook_matches_scipy():
    # normalised associated Legendre functions sqrt((l-m)!/(l+m)!) |P_l^m| vs scipy.special
    from scipy.special import factorial, lpmv

    x = np.array([-0.9, -0.2, 0.0, 0.4, 0.99])
    for m in (0, 1, 3, 6):
        table = _kernel.legendre_for_tests(m, 12, x)
        for degree in range(m, 12):
            norm = np.sqrt(factorial(degree - m) / factorial(degree + m))
            expected = norm * lpmv(m, degree, x) * (-1) ** m   # no Condon-Shortley phase
            assert np.allclose(table[:, degree], expected, rtol=1e-10, atol=1e-14)
        assert np.all(table[:, :m] == 0)


def test_chunks_with_different_phase_function_lengths_equal_eager():
    # short (g = 0.01) and long (g = 0.9) moment tails in one atmosphere: how columns are
    # grouped into dask chunks must not change a single bit of any column's result
    g = np.array([0.01, 0.9, 0.3, 0.6])[:, None]
    moments = lamina.phase.henyey_greenstein(np.broadcast_to(g, (4, 2)), 400)
    atm = lamina.make_atmosphere(np.full((4, 2), 0.8), np.full((4, 2), 0.95), moments,
                                 extra_dims=["wavelength"])
    options = dict(streams=8, sun_zenith=20.0, view_zenith=[0.0, 20.0, 40.0],
                   view_azimuth=[0.0, 180.0])
    eager = lamina.solve(atm, **options)
    for size in (1, 3):
        lazy = lamina.solve(atm.chunk({"wavelength": size}), **options)
        xr.testing.assert_equal(lazy.compute(), eager)


# ---------------------------------------------------------------- layout of the front end


def test_solver_steps_import_downward_only():
    # The layout rule of DEVELOPERS.md ("The front end"): a step module of lamina._solver
    # imports lamina._solver.common and library modules, never another step, so that the
    # steps can change side by side; only lamina.solve (the driver) imports the steps.
    import ast
    from pathlib import Path

    import lamina._solver

    folder = Path(lamina._solver.__file__).parent
    for path in sorted(folder.glob("*.py")):
        imported = set()
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, ast.ImportFrom) and node.module:
                imported.add(node.module)
            elif isinstance(node, ast.Import):
                imported.update(alias.name for alias in node.names)
        steps = {name for name in imported if name.startswith("lamina._solver")}
        allowed = set() if path.stem in ("common", "__init__") else {"lamina._solver.common"}
        assert steps <= allowed, (path.name, sorted(steps - allowed))
        assert "lamina.solve" not in imported, path.name
