"""lamina.solve over bidirectional surfaces (surface=): exact limits and laws, sources named.

The BRDF models themselves are tested in test_surface.py; here their coupling to the
discrete-ordinates solution: the bottom boundary condition with the BRDF's Fourier terms,
the direct beam's exact reflection at the view angles and the directional emissivity.
"""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

import lamina

S = lamina.surface
BAND = (400.0, 700.0)
SUNS = [20.0, 50.0, 70.0]
VIEWS = dict(view_zenith=[0.0, 15.0, 33.0, 50.0, 72.0, 85.0],
             view_azimuth=[0.0, 30.0, 90.0, 150.0, 180.0])


def hg(g: float, n: int = 64) -> np.ndarray:
    return lamina.phase.henyey_greenstein(g, n)


def rpv():
    return S.rahman_pinty_verstraete(0.12, 0.75, -0.25, 0.9)


def test_lambertian_surface_equals_surface_albedo():
    # the same boundary condition two ways: f = A / pi through the Fourier-term path must
    # reproduce the Lambertian path (the boundary module docstring's special case) to
    # round-off, radiances, fluxes and thermal emission (emissivity 1 - A) included
    moments = np.stack([hg(0.7), hg(0.2)])
    atm = lamina.make_atmosphere([0.3, 1.2], [0.95, 0.7], moments,
                                 temperature=[250.0, 260.0, 280.0])
    common = dict(streams=16, sun_zenith=SUNS, wavenumber_band=BAND,
                  output_levels=[0.0, 0.4, 1.0, 2.0], **VIEWS)
    lambertian = lamina.solve(atm, surface_albedo=0.3, **common)
    bidirectional = lamina.solve(atm, surface=S.lambertian(0.3), **common)
    for name in ("radiance", "flux_up", "flux_down", "mean_intensity", "flux_net"):
        scale = float(np.abs(lambertian[name]).max())
        assert np.allclose(bidirectional[name], lambertian[name], rtol=0, atol=1e-12 * scale), \
            name
    assert bidirectional.attrs["surface"] == "lambertian(0.3)"


@pytest.mark.parametrize("surface", [
    rpv(),
    S.ross_li(0.1, 0.06, 0.02),
    S.cox_munk(4.0),
    S.hapke(0.6, -0.2, 0.8, 0.06),
    0.6 * S.cox_munk(2.0) + 0.4 * S.lambertian(0.05),
], ids=["rpv", "ross_li", "glint", "hapke", "mixture"])
def test_no_atmosphere_reflects_s_mu0_brdf_exactly(surface):
    # with optical depth 0 the only light leaving upward is the beam reflected once:
    # I(mu, phi) = S mu0 f(mu0, mu, phi) (the rendering equation, module docstring of the
    # kernel's boundary), at every view angle, quadrature cosine or not, however narrow
    # the glint: the beam's reflection at the view angles uses the exact BRDF
    atm = lamina.make_atmosphere([0.0], [0.5], hg(0.5, 8))
    out = lamina.solve(atm, streams=16, sun_zenith=SUNS, sun_irradiance=2.0,
                       surface=surface, **VIEWS)
    sun = np.array(SUNS)[:, None, None]
    zenith = np.array(VIEWS["view_zenith"])[None, :, None]
    azimuth = np.array(VIEWS["view_azimuth"])[None, None, :]
    exact = 2.0 * np.cos(np.radians(sun)) * surface.brdf(sun, zenith, azimuth)
    for level in (0, 1):
        up = out.radiance.sel(direction="up").isel(level=level).values
        assert np.allclose(up, exact, rtol=1e-12, atol=1e-15)
    assert np.all(out.radiance.sel(direction="down").values == 0.0)


@pytest.mark.parametrize("surface", [
    rpv(),
    S.ross_li(0.1, 0.06, 0.02),
    S.hapke(0.6, -0.2, 0.8, 0.06),
    S.cox_munk(6.0),
    0.6 * S.cox_munk(2.0) + 0.4 * S.ross_li(0.05, 0.02, 0.01),
], ids=["rpv", "ross_li", "hapke", "glint", "mixture"])
def test_reflection_function_of_atmosphere_and_surface_is_reciprocal(surface):
    # Chandrasekhar (1950), Radiative Transfer, the principle of reciprocity: the reflection
    # function rho = pi I / (mu0 S) of a plane-parallel medium over a reciprocal surface is
    # symmetric in (mu, mu0) at fixed relative azimuth. Each model is reciprocal: RPV
    # (Rahman et al. 1993), the Ross-thick and Li-sparse reciprocal kernels (Lucht et al.
    # 2000), Hapke's (Hapke 1993: H(mu) H(mu0) and a phase-angle opposition term), Cox-Munk
    # with its shadowing factor symmetric in the two directions, and sums of them. The view
    # and sun angles are the same set, none of them a quadrature cosine.
    atm = lamina.make_atmosphere([0.2, 0.5], [0.95, 0.8], np.stack([hg(0.6, 128), hg(0.1, 128)]))
    angles = [20.0, 40.0, 60.0, 75.0]
    out = lamina.solve(atm, streams=16, sun_zenith=angles, surface=surface,
                       view_zenith=angles, view_azimuth=[30.0, 120.0, 180.0])
    radiance = out.radiance.sel(direction="up").isel(level=0).values   # (sun, view, phi)
    rho = np.pi * radiance / np.cos(np.radians(angles))[:, None, None]
    assert np.allclose(rho, rho.transpose(1, 0, 2), rtol=1e-10)
    # a surface that matters: the same run over a black surface differs at the percent level
    black = lamina.solve(atm, streams=16, sun_zenith=angles, surface_albedo=0.0,
                         view_zenith=angles, view_azimuth=[30.0, 120.0, 180.0])
    assert np.abs(black.radiance.values - out.radiance.values).max() > 1e-2 * radiance.max()


@pytest.mark.parametrize("surface", [rpv(), S.cox_munk(3.0)], ids=["rpv", "glint"])
def test_isothermal_enclosure_over_a_bidirectional_surface_is_planck(surface):
    # Kirchhoff's law (Kirchhoff 1860): an enclosure at one temperature holds the Planck
    # radiance in every direction whatever the surface, if the surface emits with
    # e(mu) = 1 - A(mu). The surface's e comes from its directional albedo, its reflection
    # of the isotropic sky from the double-Gauss sum over incident cosines: the residual is
    # that sum's error of the hemispheric integral, which must shrink with the streams.
    temperature = 280.0
    planck = float(lamina.planck.band_radiance(temperature, *BAND))
    atm = lamina.make_atmosphere([0.3, 1.0], [0.9, 0.5], np.stack([hg(0.7), hg(0.2)]),
                                 temperature=np.full(3, temperature))
    errors = []
    for streams in (16, 32):
        out = lamina.solve(atm, streams=streams, surface=surface, wavenumber_band=BAND,
                           top_diffuse_radiance=planck, view_zenith=[0.0, 45.0, 80.0],
                           view_azimuth=[0.0, 180.0])
        errors.append(max(float(np.abs(out.radiance / planck - 1.0).max()),
                          float(np.abs(out.flux_up / (np.pi * planck) - 1.0).max())))
    assert errors[1] < 1e-4
    assert errors[1] < errors[0] or errors[0] < 1e-9


def test_conservative_atmosphere_energy_balance_over_a_surface():
    # energy conservation (no absorption in the atmosphere): what the top reflects plus
    # what the surface absorbs (net flux at the bottom) is the incident mu0 S
    atm = lamina.make_atmosphere([0.5, 2.0], [1.0, 1.0], np.stack([hg(0.8, 128), hg(0.3, 128)]))
    for surface in (S.ross_li(0.2, 0.1, 0.03), S.cox_munk(6.0), rpv()):
        out = lamina.solve(atm, streams=16, sun_zenith=SUNS, surface=surface)
        top = out.flux_up.isel(level=0)
        absorbed = out.flux_down.isel(level=-1) - out.flux_up.isel(level=-1)
        incident = np.cos(np.radians(SUNS))
        assert np.allclose(top + absorbed, incident, rtol=0, atol=1e-9)


def test_reflected_flux_without_atmosphere_is_the_directional_albedo():
    # definition of the directional-hemispherical reflectance (Nicodemus et al. 1977): the
    # flux leaving the surface is mu0 S A(mu0); lamina's flux is the double-Gauss sum of
    # the term-0 radiances, so this also checks the beam's Fourier term f_0(mu_i, mu0)
    atm = lamina.make_atmosphere([0.0], [0.5], hg(0.5, 8))
    surface = S.ross_li(0.1, 0.06, 0.02)
    out = lamina.solve(atm, streams=32, sun_zenith=SUNS, surface=surface)
    expected = np.cos(np.radians(SUNS)) * surface.directional_albedo(np.array(SUNS))
    assert np.allclose(out.flux_up.isel(level=0), expected, rtol=1e-3)


def test_glint_radiances_converge_with_streams():
    # the BRDF's Fourier series and the quadrature of the diffuse reflection converge as the
    # streams grow (discrete ordinates, Chandrasekhar 1950): each doubling must shrink the
    # difference from 128 streams, down to below 1e-6 of the largest radiance at 64
    atm = lamina.make_atmosphere([0.1], [0.9], hg(0.7, 256))
    views = dict(view_zenith=[0.0, 25.0, 35.0, 60.0], view_azimuth=[0.0, 90.0, 180.0])
    results = {}
    for streams in (8, 16, 32, 64, 128):
        out = lamina.solve(atm, streams=streams, sun_zenith=30.0, surface=S.cox_munk(5.0),
                           **views)
        results[streams] = out.radiance.sel(direction="up").isel(level=0).values
    reference = results[128]
    errors = [np.abs(results[s] - reference).max() / np.abs(reference).max()
              for s in (8, 16, 32, 64)]
    assert all(later < earlier for earlier, later in zip(errors, errors[1:], strict=False))
    assert errors[-1] < 1e-6


def test_spectral_surface_broadcasts_along_the_atmosphere_dims():
    # a surface whose parameter is a DataArray along the atmosphere's wavelength dim gives
    # each wavelength the run of that scalar surface (broadcasting by dim name)
    import xarray as xr

    wavelength = xr.DataArray([0.5, 0.8], dims="wavelength")
    tau = xr.DataArray([[0.2], [0.1]], dims=("wavelength", "layer"))
    atm = lamina.make_atmosphere(tau, 0.9, hg(0.6))
    amplitude = xr.DataArray([0.05, 0.3], dims="wavelength", coords={"wavelength": wavelength})
    out = lamina.solve(atm, streams=8, sun_zenith=40.0, **VIEWS,
                       surface=S.rahman_pinty_verstraete(amplitude, 0.8, -0.1))
    for index, value in enumerate([0.05, 0.3]):
        single = lamina.solve(atm.isel(wavelength=index), streams=8, sun_zenith=40.0,
                              surface=S.rahman_pinty_verstraete(value, 0.8, -0.1), **VIEWS)
        assert np.allclose(out.radiance.isel(wavelength=index), single.radiance,
                           rtol=1e-12, atol=0)


def test_bad_surface_input():
    atm = lamina.make_atmosphere([0.1], [0.9], hg(0.5, 8))
    with pytest.raises(ValueError, match="surface.*surface_albedo.*not both"):
        lamina.solve(atm, sun_zenith=30.0, surface=S.lambertian(0.2), surface_albedo=0.2)
    with pytest.raises(TypeError, match="surface must be a lamina.surface"):
        lamina.solve(atm, sun_zenith=30.0, surface=0.3)
    # RPV with a bowl exponent below 1 diverges towards the horizon: allowed on the
    # surface's own check grid (up to 85 degrees) but refused at the run's sun angle
    bowl = S.rahman_pinty_verstraete(0.15, 0.5, 0.0)
    with pytest.raises(ValueError, match="sun zenith 88 degrees"):
        lamina.solve(atm, sun_zenith=88.0, surface=bowl)


def test_scenario_surface_kinds(tmp_path):
    # the example scenarios name their surfaces by kind; the surface built from the file is
    # the one the Python function gives for the same arguments (the same BRDF values)
    from pathlib import Path

    from lamina.scenario import ScenarioError, load_scenario

    examples = Path(__file__).resolve().parents[1] / "examples"
    glint = load_scenario(examples / "ocean_glint.toml").solve_kwargs()["surface"]
    expected = S.cox_munk(6.0, 1.334, True)
    assert np.allclose(glint.brdf(35.0, [20.0, 35.0], 0.0), expected.brdf(35.0, [20.0, 35.0], 0.0),
                       rtol=1e-15)
    land = load_scenario(examples / "vegetated_land.toml")
    surface = land.solve_kwargs()["surface"]
    brdf = surface.brdf(40.0, 30.0, 180.0)
    assert brdf.dims == ("wavelength",)
    nir = S.ross_li(0.35, 0.20, 0.03).brdf(40.0, 30.0, 180.0)
    assert np.isclose(float(brdf.isel(wavelength=2)), float(nir), rtol=1e-15)
    file = tmp_path / "bad.toml"
    text = ('[atmosphere]\noptical_depth = [0.1]\nsingle_scattering_albedo = 0.9\n'
            'phase = {kind = "isotropic"}\n[sun]\nzenith = 30.0\n[surface]\n')
    file.write_text(text + 'kind = "cox_munk"\nalbedo = 0.1\n')
    with pytest.raises(ScenarioError, match="albedo"):
        load_scenario(file)
    file.write_text(text + 'kind = "glossy"\n')
    with pytest.raises(ScenarioError, match="kind"):
        load_scenario(file)
    file.write_text(text + 'kind = "cox_munk"\nwind_speed = -1.0\n')
    with pytest.raises(ValueError, match="wind_speed"):
        load_scenario(file).solve_kwargs()


def test_scenario_weighted_sum_of_surfaces(tmp_path):
    # [[surface.component]] tables give lamina.surface.weighted_sum of their surfaces: the
    # BRDF built from the file equals the Python sum of the same models (per wavelength
    # weights allowed), and the solve over it equals the solve over the Python sum
    from lamina.scenario import ScenarioError, load_scenario

    head = ('[spectrum]\nwavelength = {values = [0.55, 0.86], units = "um"}\n'
            '[atmosphere]\noptical_depth = [0.1]\nsingle_scattering_albedo = 0.9\n'
            'phase = {kind = "isotropic"}\n[sun]\nzenith = 30.0\n'
            '[view]\nzenith = [0, 40]\nazimuth = [0, 180]\n[surface]\n')
    coast = ('[[surface.component]]\nweight = [0.7, 0.6]\nkind = "cox_munk"\nwind_speed = 5.0\n'
             '[[surface.component]]\nweight = [0.3, 0.4]\nkind = "lambertian"\n'
             'albedo = [0.1, 0.3]\n')
    file = tmp_path / "coast.toml"
    file.write_text(head + coast)
    scenario = load_scenario(file)
    surface = scenario.solve_kwargs()["surface"]
    for index, (weight_sea, weight_land, albedo) in enumerate([(0.7, 0.3, 0.1),
                                                                (0.6, 0.4, 0.3)]):
        python_sum = weight_sea * S.cox_munk(5.0) + weight_land * S.lambertian(albedo)
        assert np.allclose(surface.brdf(30.0, [0.0, 40.0], 180.0).isel(wavelength=index),
                           python_sum.brdf(30.0, [0.0, 40.0], 180.0), rtol=1e-14)
    kwargs = scenario.solve_kwargs()
    from_file = lamina.solve(scenario.build_atmosphere(), **kwargs)
    wavelength = from_file.wavelength
    weights = [xr.DataArray(w, dims="wavelength", coords={"wavelength": wavelength})
               for w in ([0.7, 0.6], [0.3, 0.4])]
    albedo = xr.DataArray([0.1, 0.3], dims="wavelength", coords={"wavelength": wavelength})
    kwargs["surface"] = S.weighted_sum([(weights[0], S.cox_munk(5.0)),
                                        (weights[1], S.lambertian(albedo))])
    by_hand = lamina.solve(scenario.build_atmosphere(), **kwargs)
    np.testing.assert_allclose(from_file.radiance, by_hand.radiance, rtol=1e-13, atol=0)
    # errors name the component and the key
    file.write_text(head + '[[surface.component]]\nkind = "cox_munk"\nwind_speed = 5.0\n')
    with pytest.raises(ScenarioError, match=r"component #1\] missing required key 'weight'"):
        load_scenario(file)
    file.write_text(head + '[[surface.component]]\nweight = -0.5\nkind = "lambertian"\n'
                    'albedo = 0.2\n')
    with pytest.raises(ScenarioError, match=r"component #1\] weight: expected a non-negative"):
        load_scenario(file)
    file.write_text(head + 'kind = "cox_munk"\nwind_speed = 5.0\n[[surface.component]]\n'
                    'weight = 1.0\nkind = "lambertian"\n')
    with pytest.raises(ScenarioError, match="unknown key 'kind'"):
        load_scenario(file)
