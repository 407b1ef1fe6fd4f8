"""The sections around the atmosphere: ``[solver]``, ``[sun]``, ``[view]``, ``[surface]``,
``[thermal]`` and ``[output]``.

Each reader takes the top-level table and the dictionary of :class:`Scenario` fields being
filled, checks its section (and the checks that tie it to sections read before it) and adds
its fields.
"""

from __future__ import annotations

import difflib
from collections.abc import Mapping
from typing import Any

import numpy as np

from lamina.scenario._spectral import _spectral_or_scalar
from lamina.scenario._tables import _REQUIRED as _REQUIRED_VALUE
from lamina.scenario._tables import ScenarioError, _Table

#: Output variables a scenario's ``[output] variables`` may name (lamina.solve's outputs).
OUTPUT_VARIABLES = (
    "flux_up",
    "flux_down_diffuse",
    "flux_down_direct",
    "flux_down",
    "flux_net",
    "mean_intensity",
    "actinic_flux",
    "radiance",
    "flux_divergence",
    "heating_rate",
    "fourier_terms",
)


def _section(root: _Table, name: str) -> _Table:
    """The table ``[name]`` of the file (empty when the file has none)."""
    data = root.sub(name).data if root.has(name) else {}
    return _Table(root.file, f"[{name}]", data)


def _parse_solver(root: _Table, scenario: dict[str, Any]) -> None:
    """``[solver]``; read before ``[atmosphere]``, whose phase moments depend on the streams."""
    solver = _section(root, "solver")
    solver.check_keys(["streams", "delta_m", "single_scattering_correction",
                       "fourier_tolerance", "phase_moments"])
    streams = solver.integer("streams", 16, minimum=2, even=True)
    scenario["solver"] = {
        "streams": streams,
        "delta_m": solver.boolean("delta_m", True),
        "single_scattering_correction": solver.boolean("single_scattering_correction", True),
        "fourier_tolerance": float(solver.numbers(
            "fourier_tolerance", np.asarray(1e-6), what="a tolerance", low=0.0, low_open=True,
            vector=False)),
    }
    scenario["phase_moments"] = solver.integer("phase_moments", max(64, streams + 1),
                                               minimum=streams + 1)


def _parse_sun_and_view(root: _Table, scenario: dict[str, Any],
                        n_wavelengths: int | None) -> None:
    """``[sun]`` (zenith angles and irradiance) and ``[view]`` (radiance directions)."""
    if root.has("sun"):
        sun = _section(root, "sun")
        sun.check_keys(["zenith", "irradiance", "irradiance_units"])
        zenith = sun.numbers("zenith", what="degrees", low=0.0, high=90.0, high_open=True)
        scenario["sun_zenith"] = float(zenith) if zenith.ndim == 0 else zenith
        scenario["sun_irradiance"] = _spectral_or_scalar(
            sun, "irradiance", np.asarray(1.0), n_wavelengths, what="an irradiance", low=0.0)
        if sun.has("irradiance_units"):
            scenario["irradiance_units"] = sun.string("irradiance_units")
    if root.has("view"):
        view = _section(root, "view")
        view.check_keys(["zenith", "azimuth"])
        scenario["view_zenith"] = np.atleast_1d(view.numbers(
            "zenith", what="degrees", low=0.0, high=90.0))
        scenario["view_azimuth"] = np.atleast_1d(view.numbers(
            "azimuth", np.asarray([0.0]), what="degrees", low=0.0, high=360.0))


#: ``[surface] kind`` -> the lamina.surface factory and its keys: numeric parameters (a
#: number, or one per wavelength), switches and strings; the names are the functions'.
SURFACE_KINDS: dict[str, dict[str, tuple[str, ...]]] = {
    "lambertian": {"numbers": ("albedo",), "required": ()},
    "rahman_pinty_verstraete": {"numbers": ("amplitude", "bowl_exponent", "asymmetry",
                                            "hot_spot"),
                                "required": ("amplitude", "bowl_exponent", "asymmetry")},
    "ross_li": {"numbers": ("isotropic_weight", "volumetric_weight", "geometric_weight"),
                "required": ("isotropic_weight", "volumetric_weight", "geometric_weight")},
    "cox_munk": {"numbers": ("wind_speed", "refractive_index"), "switches": ("shadowing",),
                 "required": ("wind_speed",)},
    "hapke": {"numbers": ("single_scattering_albedo", "asymmetry", "opposition_amplitude",
                          "opposition_width"), "strings": ("h_approximation",),
              "required": ("single_scattering_albedo",)},
}


def _parse_surface(root: _Table, scenario: dict[str, Any], n_wavelengths: int | None) -> None:
    """``[surface]``: its kind and parameters, and (thermal runs) the surface temperature.

    ``kind = "lambertian"`` (the default) keeps ``albedo`` as ``surface_albedo``; any other
    kind becomes ``surface_kind`` and ``surface_parameters``, from which
    :meth:`Scenario.solve_kwargs` builds the lamina.surface object (whose own checks name
    a parameter out of its published range). ``[[surface.component]]`` tables, each a
    ``weight`` and a kind with its keys, make the weighted sum of those surfaces
    (``surface_kind = "weighted_sum"``).
    """
    surface = _section(root, "surface")
    if surface.has("temperature"):
        scenario["surface_temperature"] = float(surface.numbers(
            "temperature", what="a temperature in K", low=0.0, low_open=True, vector=False,
            quantity="temperature"))
    if surface.has("component"):
        surface.check_keys(["component", "temperature"])
        scenario["surface_kind"] = "weighted_sum"
        scenario["surface_parameters"] = {
            "components": _surface_components(surface, n_wavelengths)}
        return
    kind, parameters = _surface_kind(surface, n_wavelengths, extra_keys=("temperature",))
    if kind == "lambertian":
        scenario["surface_albedo"] = parameters["albedo"]
        return
    scenario["surface_kind"] = kind
    scenario["surface_parameters"] = parameters


def _surface_kind(table: _Table, n_wavelengths: int | None,
                  extra_keys: tuple[str, ...] = ()) -> tuple[str, dict[str, Any]]:
    """A table's surface ``kind`` and the arguments of its lamina.surface function."""
    kind = table.string("kind", "lambertian", choices=tuple(SURFACE_KINDS))
    keys = SURFACE_KINDS[kind]
    numbers = keys["numbers"]
    switches = keys.get("switches", ())
    strings = keys.get("strings", ())
    table.check_keys(["kind", *numbers, *switches, *strings, *extra_keys])
    if kind == "lambertian":
        return kind, {"albedo": _spectral_or_scalar(
            table, "albedo", np.asarray(0.0), n_wavelengths, what="an albedo", low=0.0,
            high=1.0)}
    parameters: dict[str, Any] = {}
    for key in numbers:
        if table.has(key) or key in keys["required"]:
            parameters[key] = _spectral_or_scalar(table, key, _REQUIRED_VALUE, n_wavelengths,
                                                  what=f"the {kind} {key.replace('_', ' ')}")
    for key in switches:
        if table.has(key):
            parameters[key] = table.boolean(key)
    for key in strings:
        if table.has(key):
            parameters[key] = table.string(key)
    return kind, parameters


def _surface_components(surface: _Table, n_wavelengths: int | None) -> tuple[dict, ...]:
    """``[[surface.component]]``: (weight, kind, parameters) of each term of a weighted sum."""
    items = surface.raw("component")
    if not isinstance(items, list) or not items or not all(
            isinstance(item, Mapping) for item in items):
        raise surface.error("component", "one or more [[surface.component]] tables", items)
    components = []
    for number, item in enumerate(items, start=1):
        table = _Table(surface.file, f"[surface.component #{number}]",
                       {key: value for key, value in item.items() if key != "weight"})
        weight = _spectral_or_scalar(_Table(surface.file, table.label, item), "weight",
                                     _REQUIRED_VALUE, n_wavelengths,
                                     what="a non-negative weight", low=0.0)
        kind, parameters = _surface_kind(table, n_wavelengths)
        components.append({"weight": weight, "kind": kind, "parameters": parameters})
    return tuple(components)


def _parse_thermal(root: _Table, scenario: dict[str, Any], spectral: bool) -> None:
    """``[thermal]``, and the checks that a run has a source of light."""
    file = root.file
    if root.has("thermal"):
        thermal = _section(root, "thermal")
        thermal.check_keys(["wavenumber_band", "wavenumber", "top_diffuse_radiance"])
        if thermal.has("wavenumber_band") == thermal.has("wavenumber"):
            raise ScenarioError(f"{file}: [thermal] expected exactly one of 'wavenumber_band' "
                                "([low, high] in cm-1) or 'wavenumber' (cm-1)")
        if thermal.has("wavenumber_band"):
            band = thermal.numbers("wavenumber_band", what="a band [low, high] in cm-1",
                                   low=0.0, scalar=False, length=2)
            if band[1] <= band[0]:
                raise thermal.error("wavenumber_band", "a band [low, high] in cm-1 with "
                                    "low < high", band.tolist())
            scenario["wavenumber_band"] = (float(band[0]), float(band[1]))
        else:
            scenario["wavenumber"] = float(thermal.numbers(
                "wavenumber", what="a wavenumber in cm-1", low=0.0, low_open=True,
                vector=False))
        scenario["top_diffuse_radiance"] = float(thermal.numbers(
            "top_diffuse_radiance", np.asarray(0.0), what="a radiance", low=0.0, vector=False))
        if spectral:
            raise ScenarioError(f"{file}: [thermal] cannot be combined with [spectrum] (one "
                                "thermal band per run); split the run into one scenario per "
                                "band")
        temperature = scenario.get("temperature")
        if temperature is None and (scenario.get("profile") or {}).get("temperature") is None:
            raise ScenarioError(f"{file}: [atmosphere] missing required key 'temperature' "
                                "(expected level temperatures in K: [thermal] needs them)")
    elif "surface_temperature" in scenario:
        raise ScenarioError(f"{file}: [surface] temperature: expected only with a [thermal] "
                            "section (the surface emits only in thermal runs)")
    if not root.has("thermal") and not root.has("sun"):
        raise ScenarioError(f"{file}: expected a [sun] or a [thermal] section (a source of "
                            "light); got neither")


def _parse_output(root: _Table, scenario: dict[str, Any]) -> None:
    """``[output]``: output positions, the variables to keep and the chunk size."""
    if not root.has("output"):
        return
    output = _section(root, "output")
    output.check_keys(["levels", "variables", "chunk_size"])
    if output.has("levels"):
        levels = output.numbers("levels", what="fractional level positions", low=0.0,
                                scalar=False)
        n_layers = (scenario["constituents"][0].optical_depth.size
                    if "constituents" in scenario else None)
        if n_layers is not None and np.any(levels > n_layers):
            raise output.error("levels", f"fractional level positions in [0, {n_layers}]",
                               levels.tolist())
        scenario["output_levels"] = levels
    if output.has("variables"):
        names = output.raw("variables")
        if not isinstance(names, list) or not all(isinstance(n, str) for n in names):
            raise output.error("variables", "a list of output variable names", names)
        for name in names:
            if name not in OUTPUT_VARIABLES:
                close = difflib.get_close_matches(name, OUTPUT_VARIABLES, n=1)
                hint = f" (did you mean {close[0]!r}?)" if close else ""
                raise ScenarioError(f"{output.where('variables')}: unknown output "
                                    f"variable {name!r}{hint}; expected some of "
                                    f"{', '.join(OUTPUT_VARIABLES)}")
        if "radiance" in names and "view_zenith" not in scenario:
            raise output.error("variables", "'radiance' only with a [view] section")
        if "heating_rate" in names and "pressure" not in scenario and (
                scenario.get("profile") or {}).get("pressure") is None:
            raise output.error("variables", "'heating_rate' only with level pressures "
                               "([atmosphere] pressure)")
        scenario["variables"] = tuple(names)
    if output.has("chunk_size"):
        scenario["chunk_size"] = output.integer("chunk_size", minimum=1)
