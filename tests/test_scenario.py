"""Tests of lamina.scenario: parsing, building the inputs, and every kind of error message."""

from __future__ import annotations

import re
import textwrap
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import lamina
from lamina.scenario import OUTPUT_VARIABLES, ScenarioError, load_scenario

REPO = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((REPO / "examples").glob("*.toml"))
DEMO = REPO / "src" / "lamina" / "data" / "demo.toml"

SIMPLE = """
title = "test sky"
[atmosphere]
optical_depth = [0.1, 2.0, 0.3]
single_scattering_albedo = [1.0, 0.99, 0.9]
phase = {kind = "henyey_greenstein", asymmetry_parameter = [0.0, 0.85, 0.7]}
[sun]
zenith = 30
"""


def write(tmp_path: Path, text: str, name: str = "scenario.toml") -> Path:
    path = tmp_path / name
    path.write_text(textwrap.dedent(text))
    return path


def error_for(tmp_path: Path, text: str) -> str:
    path = write(tmp_path, text)
    with pytest.raises(ScenarioError) as info:
        load_scenario(path)
    message = str(info.value)
    assert message.startswith(f"{path}: "), message  # every message names the file
    return message[len(f"{path}: "):]


# --------------------------------------------------------------------------------------------
# Parsing and building
# --------------------------------------------------------------------------------------------


def test_inline_layers(tmp_path):
    scenario = load_scenario(write(tmp_path, SIMPLE))
    assert scenario.title == "test sky"
    atmosphere = scenario.build_atmosphere()
    np.testing.assert_array_equal(atmosphere["optical_depth"], [0.1, 2.0, 0.3])
    np.testing.assert_allclose(atmosphere["single_scattering_albedo"], [1.0, 0.99, 0.9],
                               rtol=1e-15)
    moments = atmosphere["phase_moments"].values
    assert moments.shape == (3, 64)
    # Henyey-Greenstein: chi_l = g^l (Henyey and Greenstein 1941)
    np.testing.assert_allclose(moments[1, :5], 0.85 ** np.arange(5))
    np.testing.assert_allclose(moments[0, :3], [1.0, 0.0, 0.0])
    kwargs = scenario.solve_kwargs()
    assert kwargs["sun_zenith"] == 30.0 and kwargs["sun_irradiance"] == 1.0
    assert kwargs["surface_albedo"] == 0.0
    assert kwargs["streams"] == 16 and kwargs["delta_m"] is True
    assert "view_zenith" not in kwargs and "wavenumber_band" not in kwargs


def test_full_scenario_with_units_and_constituents(tmp_path):
    scenario = load_scenario(write(tmp_path, """
        [atmosphere]
        pressure = {values = [1, 100, 500, 1000], units = "hPa"}
        altitude = {values = [40, 16, 5, 0], units = "km"}
        temperature = [200, 220, 260, 290]
        gravity = 3.7
        [[atmosphere.constituent]]
        name = "air"
        optical_depth = [0.01, 0.05, 0.1]
        single_scattering_albedo = 1.0
        phase = {kind = "rayleigh", depolarization = 0.03}
        spectral_dependence = "rayleigh"
        [[atmosphere.constituent]]
        name = "haze"
        optical_depth = [0.2, 0.1, 0.0]
        single_scattering_albedo = 0.9
        phase = {kind = "henyey_greenstein", asymmetry_parameter = 0.7}
        spectral_dependence = {angstrom_exponent = 1.3}
        [[atmosphere.constituent]]
        name = "cloud"
        optical_depth = [0, 0, 5]
        single_scattering_albedo = 0.999
        [atmosphere.constituent.phase]
        kind = "double_henyey_greenstein"
        forward_asymmetry = 0.9
        backward_asymmetry = -0.4
        forward_fraction = 0.95
        [spectrum]
        wavelength = {start = 400, stop = 900, count = 6, units = "nm"}
        reference_wavelength = 550
        [sun]
        zenith = [30, 60]
        irradiance = [1, 2, 3, 4, 5, 6]
        [view]
        zenith = [0, 30]
        azimuth = [0, 180]
        [surface]
        albedo = [0.1, 0.1, 0.2, 0.3, 0.4, 0.4]
        [solver]
        streams = 8
        phase_moments = 20
        [output]
        variables = ["flux_up", "radiance"]
        chunk_size = 2
        """))
    np.testing.assert_allclose(scenario.wavelength, np.linspace(0.4, 0.9, 6))
    assert scenario.reference_wavelength == pytest.approx(0.55)
    np.testing.assert_allclose(scenario.pressure, [100, 1e4, 5e4, 1e5])
    np.testing.assert_allclose(scenario.altitude, [4e4, 1.6e4, 5e3, 0])
    assert scenario.chunk_size == 2 and scenario.variables == ("flux_up", "radiance")

    atmosphere = scenario.build_atmosphere()
    assert atmosphere["optical_depth"].dims == ("wavelength", "layer")
    assert atmosphere["wavelength"].attrs["units"] == "um"
    np.testing.assert_allclose(atmosphere["pressure"], scenario.pressure)
    # The mixing rule, written out (common practice): optical depths add, the albedo is the
    # scattering-weighted mean and moments are weighted by scattering optical depth.
    ratio = np.linspace(0.4, 0.9, 6)[:, None] / 0.55
    tau = np.stack([np.array([0.01, 0.05, 0.1]) * ratio ** -4.0,  # Rayleigh law
                    np.array([0.2, 0.1, 0.0]) * ratio ** -1.3,  # Angstrom (1929)
                    np.broadcast_to([0.0, 0.0, 5.0], (6, 3))])
    ssa = np.array([1.0, 0.9, 0.999])[:, None, None]
    gamma = 0.03 / (2 - 0.03)  # Hansen and Travis (1974)
    chi2 = np.array([0.1 * (1 - gamma) / (1 + 2 * gamma), 0.7**2, 0.95 * 0.81 + 0.05 * 0.16])
    chi1 = np.array([0.0, 0.7, 0.95 * 0.9 - 0.05 * 0.4])
    scattering = ssa * tau
    np.testing.assert_allclose(atmosphere["optical_depth"], tau.sum(0))
    np.testing.assert_allclose(atmosphere["single_scattering_albedo"],
                               scattering.sum(0) / tau.sum(0))
    expected_g = (scattering * chi1[:, None, None]).sum(0) / scattering.sum(0)
    np.testing.assert_allclose(atmosphere["phase_moments"][..., 1], expected_g)
    expected_chi2 = (scattering * chi2[:, None, None]).sum(0) / scattering.sum(0)
    np.testing.assert_allclose(atmosphere["phase_moments"][..., 2], expected_chi2)
    assert atmosphere.sizes["moment"] == 20

    kwargs = scenario.solve_kwargs()
    np.testing.assert_array_equal(kwargs["sun_zenith"], [30, 60])
    assert kwargs["sun_irradiance"].dims == ("wavelength",)
    np.testing.assert_array_equal(kwargs["surface_albedo"], [0.1, 0.1, 0.2, 0.3, 0.4, 0.4])
    np.testing.assert_array_equal(kwargs["view_zenith"], [0, 30])
    np.testing.assert_array_equal(kwargs["view_azimuth"], [0, 180])
    assert kwargs["streams"] == 8 and kwargs["gravity"] == 3.7


def test_thermal_scenario(tmp_path):
    scenario = load_scenario(write(tmp_path, """
        [atmosphere]
        optical_depth = [0.5, 1.0]
        single_scattering_albedo = 0.0
        temperature = [220, 250, 280]
        pressure = [1e4, 5e4, 1e5]
        [thermal]
        wavenumber_band = [500, 1500]
        """))
    kwargs = scenario.solve_kwargs()
    assert kwargs["wavenumber_band"] == (500.0, 1500.0)
    assert "surface_temperature" not in kwargs  # lamina.solve takes the bottom level
    # no [sun]: no beam at all (no default adds a source)
    assert "sun_irradiance" not in kwargs and "sun_zenith" not in kwargs
    assert kwargs["top_diffuse_radiance"] == 0.0
    atmosphere = scenario.build_atmosphere()
    np.testing.assert_array_equal(atmosphere["temperature"], [220, 250, 280])


def test_tabulated_and_legendre_phase(tmp_path):
    angle = np.linspace(0, 180, 181)
    isotropic = ", ".join(["1.0"] * angle.size)
    angles = ", ".join(map(str, angle))
    scenario = load_scenario(write(tmp_path, f"""
        [[atmosphere.constituent]]
        optical_depth = [1.0]
        single_scattering_albedo = 1.0
        phase = {{kind = "tabulated", angle = [{angles}], value = [{isotropic}]}}
        [[atmosphere.constituent]]
        optical_depth = [1.0]
        single_scattering_albedo = 1.0
        phase = {{kind = "legendre", coefficients = [1.0, 0.5, 0.2]}}
        [sun]
        zenith = 0
        [solver]
        streams = 4
        phase_moments = 6
        """))
    moments = scenario.build_atmosphere()["phase_moments"].values[0]
    # an isotropic table has chi = [1, 0, ...]; mixed half and half with [1, 0.5, 0.2]
    np.testing.assert_allclose(moments, [1.0, 0.25, 0.1, 0, 0, 0], atol=1e-10)


def test_profile_file(tmp_path):
    profile = xr.Dataset(
        {"tau": (("column", "z"), [[0.1, 1.0], [0.2, 2.0]]),
         "ssa": (("column", "z"), [[1.0, 0.9], [1.0, 0.8]]),
         "t": ("zlev", [200.0, 250.0, 290.0])},
        coords={"column": [1, 2]})
    profile.to_netcdf(tmp_path / "profile.nc")
    scenario = load_scenario(write(tmp_path, """
        [atmosphere]
        [atmosphere.profile]
        file = "profile.nc"
        optical_depth = "tau"
        single_scattering_albedo = "ssa"
        temperature = "t"
        phase = {kind = "henyey_greenstein", asymmetry_parameter = 0.5}
        dimensions = {layer = "z", level = "zlev"}
        [sun]
        zenith = 10
        """))
    atmosphere = scenario.build_atmosphere()
    np.testing.assert_array_equal(atmosphere["optical_depth"].transpose("column", "layer"),
                                  [[0.1, 1.0], [0.2, 2.0]])
    np.testing.assert_array_equal(atmosphere["temperature"], [200, 250, 290])
    np.testing.assert_allclose(atmosphere["phase_moments"][..., :3].broadcast_like(
        atmosphere["optical_depth"]).isel(column=0, layer=0), [1, 0.5, 0.25])


@pytest.mark.parametrize("path", [*EXAMPLES, DEMO], ids=lambda p: p.name)
def test_shipped_scenarios_load_and_build(path):
    scenario = load_scenario(path)
    atmosphere = scenario.build_atmosphere()
    assert atmosphere.sizes["layer"] >= 1
    assert scenario.solve_kwargs()["streams"] >= 2


def test_examples_exist():
    names = {path.stem for path in EXAMPLES}
    assert {"cloudy_sky", "spectral", "thermal_infrared"} <= names


# --------------------------------------------------------------------------------------------
# Errors: every kind, message pinned
# --------------------------------------------------------------------------------------------


def test_missing_file(tmp_path):
    with pytest.raises(ScenarioError, match=r"nothing.toml: no such scenario file"):
        load_scenario(tmp_path / "nothing.toml")


def test_toml_syntax_error_gives_line_and_column(tmp_path):
    message = error_for(tmp_path, """\
        [sun]
        zenith = 30
        irradiance 1.0
        """)
    assert re.fullmatch(r"TOML syntax error: .*\(at line 3, column \d+\)", message), message


def test_unknown_key_suggests_the_nearest(tmp_path):
    message = error_for(tmp_path, SIMPLE.replace("zenith = 30", "zenit = 30"))
    assert message == ("[sun] unknown key 'zenit'; did you mean 'zenith'? "
                       "(valid keys: zenith, irradiance, irradiance_units)")


def test_unknown_section_suggests_the_nearest(tmp_path):
    message = error_for(tmp_path, SIMPLE + "[surfce]\nalbedo = 0.1\n")
    assert message.startswith("[top level] unknown key 'surfce'; did you mean 'surface'?")


def test_unknown_key_in_inline_table(tmp_path):
    message = error_for(tmp_path, SIMPLE.replace("asymmetry_parameter", "asymetry_parameter"))
    assert message.startswith("[atmosphere] unknown key 'phase.asymetry_parameter'; did you "
                              "mean 'asymmetry_parameter'?")


def test_unknown_key_in_a_constituent(tmp_path):
    message = error_for(tmp_path, """
        [[atmosphere.constituent]]
        name = "haze"
        optical_depth = [1.0]
        single_scatering_albedo = 0.9
        [sun]
        zenith = 0
        """)
    assert message.startswith("[atmosphere.constituent #1 'haze'] unknown key "
                              "'single_scatering_albedo'; did you mean "
                              "'single_scattering_albedo'?")


def test_unknown_phase_kind_suggests(tmp_path):
    message = error_for(tmp_path, SIMPLE.replace('"henyey_greenstein"', '"henyey-greenstein"'))
    assert message.startswith("[atmosphere] phase.kind: expected one of 'isotropic', "
                              "'henyey_greenstein'")
    assert message.endswith("got 'henyey-greenstein' (did you mean 'henyey_greenstein'?)")


def test_missing_required_key(tmp_path):
    message = error_for(tmp_path, SIMPLE.replace(
        "single_scattering_albedo = [1.0, 0.99, 0.9]\n", ""))
    assert message == ("[atmosphere] missing required key 'single_scattering_albedo' (expected "
                       "a single-scattering albedo in [0, 1] as a number or a list of 3 numbers "
                       "(one per layer))")


def test_missing_atmosphere_and_missing_source(tmp_path):
    assert error_for(tmp_path, "[sun]\nzenith = 1\n") == "missing required section [atmosphere]"
    message = error_for(tmp_path, SIMPLE.replace("[sun]\nzenith = 30\n", ""))
    assert message == "expected a [sun] or a [thermal] section (a source of light); got neither"


@pytest.mark.parametrize(("old", "new", "expected"), [
    ("zenith = 30", 'zenith = "thirty"',
     "[sun] zenith: expected degrees in [0, 90) as a number or a list of numbers; got 'thirty' "
     "(a string)"),
    ("zenith = 30", "zenith = 95",
     "[sun] zenith: expected degrees in [0, 90) as a number or a list of numbers; got 95"),
    ("zenith = 30", "zenith = true",
     "[sun] zenith: expected degrees in [0, 90) as a number or a list of numbers; got true "
     "(a boolean)"),
    ("[0.1, 2.0, 0.3]", "[0.1, -2.0, 0.3]",
     "[atmosphere] optical_depth: expected layer optical depths (top first) in [0, inf] as a "
     "list of numbers; got -2"),
    ("[1.0, 0.99, 0.9]", "[1.0, 0.99]",
     "[atmosphere] single_scattering_albedo: expected a single-scattering albedo in [0, 1] as a "
     "number or a list of 3 numbers (one per layer); got 2 numbers"),
    ("[0.0, 0.85, 0.7]", "[0.0, 1.2, 0.7]",
     "[atmosphere] phase.asymmetry_parameter: expected an asymmetry parameter in (-1, 1) as a "
     "number or a list of 3 numbers (one per layer); got 1.2"),
    ("zenith = 30", "zenith = 30\n[solver]\nstreams = 7",
     "[solver] streams: expected an even integer >= 2; got 7"),
    ("zenith = 30", "zenith = 30\n[solver]\ndelta_m = 1",
     "[solver] delta_m: expected true or false; got 1"),
    ("zenith = 30", "zenith = 30\n[view]\nzenith = [0, 100]",
     "[view] zenith: expected degrees in [0, 90] as a number or a list of numbers; got 100"),
    ("zenith = 30", "zenith = 30\n[surface]\nalbedo = [0.1, 0.2]",
     "[surface] albedo: expected an albedo in [0, 1] as a number; got [0.1, 0.2]"),
])
def test_wrong_types_and_ranges(tmp_path, old, new, expected):
    assert error_for(tmp_path, SIMPLE.replace(old, new)) == expected


def test_wrong_units(tmp_path):
    message = error_for(tmp_path, SIMPLE.replace(
        "[sun]", 'pressure = {values = [1, 10, 100, 1000], units = "hpa"}\n[sun]'))
    assert message == ("[atmosphere] pressure.units: pressure has units 'hpa', which are not a "
                       "known unit (did you mean 'hPa'?)")
    message = error_for(tmp_path, SIMPLE.replace(
        "[sun]", 'temperature = {values = [1, 10, 100, 1000], units = "C"}\n[sun]'))
    # "C" is the coulomb, not a temperature: refused rather than read as Celsius
    assert message == ("[atmosphere] temperature.units: temperature has units 'C', which are "
                       "not a temperature unit (expected a unit convertible to K, such as K "
                       "or degC)")


def test_level_quantities_need_one_value_per_level(tmp_path):
    message = error_for(tmp_path, SIMPLE.replace("[sun]", "temperature = [200, 250]\n[sun]"))
    assert message == ("[atmosphere] temperature: expected temperatures in K in (0, inf] as a "
                       "list of 4 numbers (one per level, top first); got 2 numbers")
    message = error_for(tmp_path, SIMPLE.replace("[sun]", "pressure = [4, 3, 2, 1]\n[sun]"))
    assert message.startswith("[atmosphere] pressure: expected pressures increasing downwards")


def test_constituents_must_agree_on_layers(tmp_path):
    message = error_for(tmp_path, """
        [[atmosphere.constituent]]
        optical_depth = [1.0, 2.0]
        single_scattering_albedo = 0.0
        [[atmosphere.constituent]]
        name = "cloud"
        optical_depth = [1.0]
        single_scattering_albedo = 0.0
        [sun]
        zenith = 0
        """)
    assert message == ("[atmosphere.constituent #2 'cloud'] optical_depth: expected layer "
                       "optical depths (top first) in [0, inf] as a list of 2 numbers (one per "
                       "layer); got 1 number")


def test_atmosphere_needs_exactly_one_form(tmp_path):
    message = error_for(tmp_path, SIMPLE.replace(
        "[sun]", '[atmosphere.profile]\nfile = "x.nc"\n[sun]'))
    assert message == ("[atmosphere] expected exactly one of 'optical_depth' (inline layers), "
                       "[[atmosphere.constituent]] or 'profile'; got optical_depth and profile")


def test_spectral_law_needs_a_spectrum(tmp_path):
    message = error_for(tmp_path, SIMPLE.replace("[sun]", 'spectral_dependence = "rayleigh"\n'
                                                         "[sun]"))
    assert message == ("[atmosphere] spectral_dependence: expected no spectral law without a "
                       "[spectrum] section")


def test_thermal_needs_temperature(tmp_path):
    message = error_for(tmp_path, SIMPLE + "[thermal]\nwavenumber_band = [100, 200]\n")
    assert message == ("[atmosphere] missing required key 'temperature' (expected level "
                       "temperatures in K: [thermal] needs them)")
    message = error_for(tmp_path, SIMPLE + "[thermal]\nwavenumber_band = [300, 200]\n")
    assert message == ("[thermal] wavenumber_band: expected a band [low, high] in cm-1 with "
                       "low < high; got [300.0, 200.0]")


def test_surface_temperature_needs_thermal(tmp_path):
    message = error_for(tmp_path, SIMPLE + "[surface]\ntemperature = 280\n")
    assert message == ("[surface] temperature: expected only with a [thermal] section (the "
                       "surface emits only in thermal runs)")


def test_unknown_output_variable_suggests(tmp_path):
    message = error_for(tmp_path, SIMPLE + '[output]\nvariables = ["flux_upp"]\n')
    assert message.startswith("[output] variables: unknown output variable 'flux_upp' (did you "
                              "mean 'flux_up'?)")
    message = error_for(tmp_path, SIMPLE + '[output]\nvariables = ["radiance"]\n')
    assert message == "[output] variables: expected 'radiance' only with a [view] section"
    message = error_for(tmp_path, SIMPLE + '[output]\nvariables = ["heating_rate"]\n')
    assert message == ("[output] variables: expected 'heating_rate' only with level pressures "
                       "([atmosphere] pressure)")
    assert "radiance" in OUTPUT_VARIABLES


def test_profile_lacking_a_variable(tmp_path):
    xr.Dataset({"tau": ("layer", [1.0, 2.0]), "w": ("layer", [0.5, 0.5])}).to_netcdf(
        tmp_path / "p.nc")
    path = write(tmp_path, """
        [atmosphere]
        [atmosphere.profile]
        file = "p.nc"
        optical_depth = "tau"
        single_scattering_albedo = "ssa"
        phase = {kind = "isotropic"}
        [sun]
        zenith = 0
        """)
    with pytest.raises(ScenarioError, match=re.escape(
            f"{path}: [atmosphere] profile.single_scattering_albedo: variable 'ssa' not found "
            f"in {tmp_path / 'p.nc'} (it has: tau, w)")):
        load_scenario(path)


def test_profile_file_missing(tmp_path):
    message = error_for(tmp_path, """
        [atmosphere]
        profile = {file = "absent.nc", optical_depth = "a", single_scattering_albedo = "b"}
        [sun]
        zenith = 0
        """)
    assert message == (f"[atmosphere] profile.file: expected an existing netCDF file; "
                       f"{tmp_path / 'absent.nc'} does not exist")


def test_scenario_error_is_a_value_error():
    assert issubclass(ScenarioError, ValueError)


def test_mie_constituent_follows_mie_theory(tmp_path):
    """A nearly monodisperse haze against single-sphere Mie efficiencies from miepython.

    With a geometric standard deviation of 1.01 the radii spread by about 1 %, so the
    distribution's optics stay within about 1 % of one sphere at the median radius; the
    tolerance below allows 2 %.
    """
    miepython = pytest.importorskip("miepython")
    scenario = load_scenario(write(tmp_path, """
        [spectrum]
        wavelength = [0.5, 0.8]
        reference_wavelength = 0.65
        [[atmosphere.constituent]]
        optical_depth = [0.3]
        [atmosphere.constituent.mie]
        median_radius = 0.4
        geometric_standard_deviation = 1.01
        refractive_index = [1.45, 0.01]
        [sun]
        zenith = 0
        [solver]
        streams = 4
        phase_moments = 8
        """))
    atmosphere = scenario.build_atmosphere()

    def sphere(wavelength):  # miepython wants the diameter; absorption has imaginary < 0
        qext, qsca, _, g = miepython.efficiencies(complex(1.45, -0.01), 0.8, wavelength)
        return float(qext), float(qsca), float(g)

    reference = sphere(0.65)
    for index, wavelength in enumerate([0.5, 0.8]):
        qext, qsca, g = sphere(wavelength)
        layer = atmosphere.isel(wavelength=index, layer=0)
        np.testing.assert_allclose(layer["optical_depth"], 0.3 * qext / reference[0], rtol=0.02)
        np.testing.assert_allclose(layer["single_scattering_albedo"], qsca / qext, rtol=0.02)
        np.testing.assert_allclose(layer["phase_moments"][1], g, rtol=0.02)


def test_mie_needs_a_spectrum(tmp_path):
    message = error_for(tmp_path, """
        [[atmosphere.constituent]]
        optical_depth = [0.3]
        mie = {median_radius = 0.4, geometric_standard_deviation = 1.5, refractive_index = [1.5, 0]}
        [sun]
        zenith = 0
        """)
    assert message == ("[atmosphere.constituent #1] mie: expected a [spectrum] section to go "
                       "with Mie optics (they depend on wavelength)")


def test_scenario_pressures_in_any_common_unit_agree_with_the_api(tmp_path):
    # the scenario format and make_atmosphere convert through the same units library
    for unit, factor in (("mb", 100.0), ("kPa", 1000.0), ("atm", 101325.0)):
        path = tmp_path / f"{unit}.toml"
        path.write_text(SIMPLE.replace(
            "[sun]", f'pressure = {{values = [1, 10, 100, 1000], units = "{unit}"}}\n[sun]'))
        atm = load_scenario(path).build_atmosphere()
        np.testing.assert_allclose(atm.pressure.values,
                                   np.array([1.0, 10.0, 100.0, 1000.0]) * factor)


def test_irradiance_units_label_the_outputs(tmp_path):
    path = tmp_path / "units.toml"
    path.write_text(SIMPLE.replace("[sun]", '[sun]\nirradiance_units = "W m-2 um-1"')
                    + "[view]\nzenith = [0, 60]\n")
    scenario = load_scenario(path)
    out = lamina.solve(scenario.build_atmosphere(), **scenario.solve_kwargs())
    assert out.flux_up.attrs["units"] == "W m-2 um-1"
    assert out.radiance.attrs["units"] == "W m-2 sr-1 um-1"


def test_a_scenario_without_a_sun_records_no_sun_and_has_a_black_surface(tmp_path):
    # no default adds a source or a reflector, in the scenario format as in the API
    path = tmp_path / "thermal.toml"
    path.write_text(SIMPLE.replace("[sun]\nzenith = 30\n", "")
                    .replace("[atmosphere]", "[atmosphere]\ntemperature = [200, 220, 250, 280]")
                    + "[thermal]\nwavenumber_band = [500, 800]\n")
    scenario = load_scenario(path)
    kwargs = scenario.solve_kwargs()
    out = lamina.solve(scenario.build_atmosphere(), **kwargs)
    assert "sun_zenith" not in out.coords and out.attrs["beam_source"] == 0
    assert float(np.max(np.abs(out.flux_down_direct))) == 0.0
    assert np.all(np.asarray(kwargs.get("surface_albedo", 0.0)) == 0.0)
