"""Tests of lamina.plotting: every figure draws the result's own numbers, top of the atmosphere
at the top, and saves as PNG without a screen."""

from __future__ import annotations

import re

import numpy as np
import pytest
import xarray as xr
from matplotlib.figure import Figure

import lamina
from lamina import plotting

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


@pytest.fixture(scope="module")
def spectral_result() -> xr.Dataset:
    """A small real run: 4 wavelengths, 2 sun zeniths, radiances, pressures."""
    wavelength = np.array([0.4, 0.6, 0.8, 1.0])
    tau = np.array([0.05, 0.2, 3.0]) * (wavelength[:, None] / 0.55) ** -1.0
    atmosphere = lamina.make_atmosphere(
        tau, np.full((4, 3), 0.95), lamina.phase.henyey_greenstein(np.full((4, 3), 0.7), 16),
        pressure=[1e3, 1e4, 5e4, 1e5], extra_dims=("wavelength",))
    atmosphere = atmosphere.assign_coords(
        wavelength=("wavelength", wavelength, {"units": "um"}))
    result = lamina.solve(atmosphere, streams=8, sun_zenith=[30.0, 60.0], surface_albedo=0.2,
                          view_zenith=[0, 30, 60, 85], view_azimuth=[0, 90, 180])
    result.attrs["title"] = "plot test"
    # lamina.solve leaves input coordinates without attributes (lamina.io.run_chunked gives
    # them back); a result read from a lamina file has them
    result["wavelength"].attrs["units"] = "um"
    return result


@pytest.fixture(scope="module")
def plain_result() -> xr.Dataset:
    """One column, no extra dims, no pressures: the vertical axis is optical depth."""
    atmosphere = lamina.make_atmosphere([0.1, 1.0], [1.0, 0.9],
                                        lamina.phase.henyey_greenstein([0.0, 0.8], 8))
    return lamina.solve(atmosphere, streams=4, sun_zenith=40.0)


def _is_png(path) -> bool:
    return path.read_bytes()[:8] == PNG_SIGNATURE and path.stat().st_size > 5000


def test_flux_profiles_draw_the_fluxes_top_up(spectral_result, tmp_path):
    path = tmp_path / "flux.png"
    figure = plotting.flux_profiles(spectral_result, path=path)
    assert isinstance(figure, Figure) and _is_png(path)
    axes = figure.axes
    assert [ax.get_title(loc="left") for ax in axes] == [
        "upward", "downward, diffuse", "downward, direct beam", "net (down minus up)"]
    # pressure on a log axis, increasing downwards: the top of the atmosphere is at the top
    assert axes[0].get_yscale() == "log" and axes[0].yaxis_inverted()
    # the first line of the first panel is flux_up at the first wavelength and sun zenith
    x, y = axes[0].lines[0].get_data()
    expected = spectral_result["flux_up"].isel(wavelength=0, sun_zenith=0)
    np.testing.assert_array_equal(x, expected.values)
    np.testing.assert_allclose(y, spectral_result["pressure"].values / 100.0)
    assert len(axes[0].lines) == 4  # one per wavelength
    labels = [text.get_text() for text in figure.legends[0].get_texts()]
    assert labels[0] == "wavelength 0.4 µm"
    assert "sun zenith 30°" in figure.get_suptitle()


def test_profiles_against_optical_depth_without_pressure(plain_result):
    figure = plotting.flux_profiles(plain_result)
    ax = figure.axes[0]
    assert ax.get_ylabel() == "cumulative optical depth" and ax.yaxis_inverted()
    x, y = ax.lines[0].get_data()
    np.testing.assert_array_equal(y, plain_result["cumulative_optical_depth"].values)
    np.testing.assert_array_equal(x, plain_result["flux_up"].values)
    with pytest.raises(ValueError, match="vertical='pressure' but the result has no pressure"):
        plotting.flux_profiles(plain_result, vertical="pressure")
    with pytest.raises(ValueError, match="vertical must be 'auto' or one of pressure"):
        plotting.flux_profiles(plain_result, vertical="height")


def test_mean_intensity_and_heating(spectral_result, tmp_path):
    figure = plotting.mean_intensity_profile(spectral_result, path=tmp_path / "j.png")
    assert _is_png(tmp_path / "j.png")
    x, _ = figure.axes[0].lines[-1].get_data()
    np.testing.assert_array_equal(
        x, spectral_result["mean_intensity"].isel(wavelength=-1, sun_zenith=0).values)
    figure = plotting.heating_rate_profile(spectral_result, path=tmp_path / "h.png")
    assert _is_png(tmp_path / "h.png")
    x, y = figure.axes[0].lines[0].get_data()
    np.testing.assert_array_equal(
        x, spectral_result["heating_rate"].isel(wavelength=0, sun_zenith=0).values)
    pressure = spectral_result["pressure"].values
    np.testing.assert_allclose(y, np.sqrt(pressure[:-1] * pressure[1:]) / 100.0)  # mid-layer


def test_radiance_by_view_zenith(spectral_result, tmp_path):
    figure = plotting.radiance_by_view_zenith(spectral_result, path=tmp_path / "r.png")
    assert _is_png(tmp_path / "r.png")
    up, down = figure.axes
    assert up.get_title(loc="left") == "upward, leaving level 0"
    assert down.get_title(loc="left") == "downward, reaching level 3"
    assert len(up.lines) == 3  # one per azimuth
    x, y = up.lines[2].get_data()
    expected = spectral_result["radiance"].isel(wavelength=2, sun_zenith=0, level=0).sel(
        direction="up", view_azimuth=180.0)
    np.testing.assert_array_equal(x, [0, 30, 60, 85])
    np.testing.assert_array_equal(y, expected.values)
    assert "wavelength 0.8 µm" in figure.get_suptitle()
    with pytest.raises(ValueError, match="the result has no radiance"):
        plotting.radiance_by_view_zenith(spectral_result.drop_vars("radiance"))


def test_spectrum_fractions(spectral_result, tmp_path):
    figure = plotting.spectrum(spectral_result, path=tmp_path / "s.png")
    assert _is_png(tmp_path / "s.png")
    ax = figure.axes[0]
    top = spectral_result.isel(level=0, sun_zenith=1)
    x, y = ax.lines[1].get_data()  # reflected fraction, second sun zenith
    np.testing.assert_array_equal(x, [0.4, 0.6, 0.8, 1.0])
    np.testing.assert_allclose(y, top["flux_up"] / top["flux_down"])
    with pytest.raises(ValueError, match="the result has no spectral dim"):
        plotting.spectrum(spectral_result.isel(wavelength=0))


def test_spectrum_is_a_budget_whose_parts_add_up_to_one(spectral_result):
    # A demo-like run (haze over a thick cloud, reflecting surface, no emission): energy
    # conservation (first law; common practice in any radiation budget) splits the light
    # entering at the top into reflected + absorbed in the atmosphere + absorbed at the
    # surface, so the three plotted parts must add up to 1 within round-off.
    figure = plotting.spectrum(spectral_result)
    ax = figure.axes[0]
    labels = [handle.get_label() for handle in ax.figure.legends[0].legend_handles][:3]
    assert labels == ["reflected at the top", "absorbed in the atmosphere",
                      "absorbed at the surface"]
    for sun in range(2):  # lines: part 0 suns 0, 1; part 1 suns 0, 1; part 2 suns 0, 1
        reflected, atmosphere, surface = (ax.lines[2 * part + sun].get_data()[1]
                                          for part in range(3))
        np.testing.assert_allclose(reflected + atmosphere + surface, 1.0, rtol=0, atol=1e-12)
        # each part is the flux its name says: net flux into the surface over the incident
        bottom = spectral_result.isel(level=-1, sun_zenith=sun)
        incident = spectral_result.isel(level=0, sun_zenith=sun)["flux_down"]
        np.testing.assert_allclose(surface, (bottom["flux_down"] - bottom["flux_up"]) / incident,
                                   rtol=1e-12)
        assert np.all(surface > 0) and np.all(atmosphere > 0)


def _figure_texts(figure) -> list[str]:
    """Every text drawn in a figure: titles, axis labels, tick labels, legends."""
    return [text.get_text() for text in figure.findobj(match=lambda a: hasattr(a, "get_text"))
            if text.get_text()]


def test_one_spelling_of_micrometre_in_every_figure(spectral_result):
    # Every figure that names the wavelength writes its unit as "µm" (U+00B5), never "um",
    # "micrometre", "micron" or with the Greek mu (U+03BC).
    result = spectral_result.copy()
    result["wavelength"].attrs["units"] = "micrometre"
    seen = 0
    for draw in (plotting.flux_profiles, plotting.mean_intensity_profile,
                 plotting.heating_rate_profile, plotting.radiance_by_view_zenith,
                 plotting.spectrum):
        for data in (spectral_result, result):
            texts = " | ".join(_figure_texts(draw(data)))
            assert not re.search(r"\bum\b|micromet|micron|\u03bcm", texts), texts
            seen += texts.count("µm")
    assert seen >= 10  # the unit is shown (legends, titles or the spectrum's axis)


def test_radiance_figure_names_its_sun_angle_and_wavelength(spectral_result, plain_result):
    heading = plotting.radiance_by_view_zenith(spectral_result).get_suptitle()
    assert "sun zenith 30°" in heading and "wavelength 0.8 µm" in heading
    # one scalar sun angle and one wavelength as scalar coordinates: still named
    single = spectral_result.isel(sun_zenith=1, wavelength=0)
    heading = plotting.radiance_by_view_zenith(single).get_suptitle()
    assert "sun zenith 60°" in heading and "wavelength 0.4 µm" in heading
    with pytest.raises(ValueError, match="no radiance"):
        plotting.radiance_by_view_zenith(plain_result)


def test_plot_result_writes_what_applies(spectral_result, plain_result, tmp_path):
    written = plotting.plot_result(spectral_result, tmp_path, prefix="a_")
    assert sorted(p.name for p in written) == [
        "a_flux_profiles.png", "a_heating_rate.png", "a_mean_intensity.png", "a_radiance.png",
        "a_spectrum.png"]
    assert all(_is_png(p) for p in written)
    written = plotting.plot_result(plain_result, tmp_path, prefix="b_")
    assert {p.name for p in written} == {"b_flux_profiles.png", "b_mean_intensity.png",
                                         "b_heating_rate.png"}
    with pytest.raises(ValueError, match="cannot write plots to .*missing: not an existing"):
        plotting.plot_result(plain_result, tmp_path / "missing")
