"""The ``[atmosphere]`` section: inline layers, constituents, a netCDF profile, phase tables.

An atmosphere is given in exactly one of three forms (inline layers of one constituent,
``[[atmosphere.constituent]]`` tables whose optical depths add up, or a netCDF
``profile``), plus optional level quantities (temperature, pressure, altitude) and the
constants of heating rates. Phase functions are read from ``phase = {kind = ...}`` tables
into Legendre moments.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np
import xarray as xr

from lamina.scenario._model import Constituent
from lamina.scenario._spectral import _parse_mie, _parse_spectral_dependence
from lamina.scenario._tables import _REQUIRED, ScenarioError, _describe, _per_layer, _Table

_PHASE_KEYS = {
    "isotropic": (),
    "henyey_greenstein": ("asymmetry_parameter",),
    "double_henyey_greenstein": ("forward_asymmetry", "backward_asymmetry", "forward_fraction"),
    "rayleigh": ("depolarization",),
    "tabulated": ("angle", "value", "normalize"),
    "legendre": ("coefficients",),
}


def _parse_phase(table: _Table, key: str, n_layers: int, n_moments: int) -> np.ndarray:
    """Legendre moments (layer, moment) of a ``phase = {kind = ...}`` table."""
    from lamina import phase as phase_functions

    phase = table.sub(key, "a table such as {kind = \"henyey_greenstein\", "
                           "asymmetry_parameter = 0.85}")
    kind = phase.string("kind", choices=tuple(_PHASE_KEYS))
    phase.check_keys(["kind", *_PHASE_KEYS[kind]])
    if kind == "isotropic":
        chi = np.zeros(n_moments)
        chi[0] = 1.0
    elif kind == "henyey_greenstein":
        chi = phase_functions.henyey_greenstein(_per_layer(
            phase, "asymmetry_parameter", n_layers, what="an asymmetry parameter",
            low=-1.0, high=1.0, low_open=True, high_open=True), n_moments)
    elif kind == "double_henyey_greenstein":
        chi = phase_functions.double_henyey_greenstein(
            _per_layer(phase, "forward_asymmetry", n_layers, what="an asymmetry parameter",
                       low=-1, high=1, low_open=True, high_open=True),
            _per_layer(phase, "backward_asymmetry", n_layers, what="an asymmetry parameter",
                       low=-1, high=1, low_open=True, high_open=True),
            _per_layer(phase, "forward_fraction", n_layers, what="a fraction", low=0, high=1),
            n_moments)
    elif kind == "rayleigh":
        chi = phase_functions.rayleigh(_per_layer(
            phase, "depolarization", n_layers, np.asarray(0.0),
            what="a depolarization factor", low=0.0, high=1.0, high_open=True), n_moments)
    elif kind == "tabulated":
        angle = phase.numbers("angle", what="scattering angles in degrees from 0 to 180",
                              low=0.0, high=180.0, scalar=False)
        value = phase.numbers("value", what="phase function values", low=0.0, scalar=False,
                              length=angle.size, length_of=" (one per angle)")
        normalize = phase.boolean("normalize", False)
        try:
            chi = phase_functions.from_tabulated(angle, value, n_moments, normalize=normalize)
        except ValueError as error:
            raise ScenarioError(f"{phase.where('value')}: {error}") from None
    else:  # legendre
        coefficients = phase.numbers("coefficients", what="Legendre coefficients",
                                     scalar=False)
        if coefficients[0] != 1.0:
            raise phase.error("coefficients", "Legendre coefficients starting with chi_0 = 1",
                              coefficients.tolist())
        chi = np.zeros(n_moments)
        count = min(n_moments, coefficients.size)
        chi[:count] = coefficients[:count]
    return np.broadcast_to(np.asarray(chi, dtype=float), (n_layers, n_moments)).copy()



def _parse_constituent(table: _Table, n_layers: int | None, spectral: bool,
                       n_moments: int) -> Constituent:
    """One constituent (or the inline layers of ``[atmosphere]``); depths at the reference."""
    is_mie = table.has("mie")
    keys = ["name", "optical_depth"]
    keys += ["mie"] if is_mie else ["single_scattering_albedo", "phase", "spectral_dependence"]
    if table.label == "[atmosphere]":
        keys = [k for k in keys if k != "name"]
    else:
        table.check_keys(keys)
    name = table.string("name", "") if "name" in keys else ""
    tau = table.numbers("optical_depth", what="layer optical depths (top first)", low=0.0,
                        scalar=False, length=n_layers, length_of=" (one per layer)")
    n_layers = tau.size
    if is_mie:
        return Constituent(name=name, optical_depth=tau, mie=_parse_mie(table, spectral))
    ssa = _per_layer(table, "single_scattering_albedo", n_layers,
                     what="a single-scattering albedo", low=0.0, high=1.0)
    if table.has("phase"):
        phase = _parse_phase(table, "phase", n_layers, n_moments)
    elif not np.any(ssa):
        phase = np.zeros((n_layers, n_moments))  # nothing scatters: the phase plays no part
        phase[:, 0] = 1.0
    else:
        raise ScenarioError(f"{table.file}: {table.label} missing required key 'phase' "
                            '(expected a table such as {kind = "rayleigh"})')
    exponent = _parse_spectral_dependence(table)
    if exponent and not spectral:
        raise table.error("spectral_dependence", "no spectral law without a [spectrum] "
                          "section")
    return Constituent(name=name, optical_depth=tau, single_scattering_albedo=ssa,
                       phase_moments=phase, angstrom_exponent=exponent)


def _parse_profile(table: _Table, base: Path, n_moments: int) -> dict[str, Any]:
    """``[atmosphere.profile]``: the netCDF file, its variable names and dim renames."""
    names = ("optical_depth", "single_scattering_albedo", "phase_moments", "temperature",
             "pressure", "altitude")
    profile = table.sub("profile")
    profile.check_keys(["file", *names, "phase", "dimensions"])
    file = base / profile.string("file")
    if not file.is_file():
        raise ScenarioError(f"{profile.where('file')}: expected an existing netCDF file; "
                            f"{file} does not exist")
    spec: dict[str, Any] = {"file": file}
    for name in names:
        required = _REQUIRED if name in ("optical_depth", "single_scattering_albedo") else None
        spec[name] = profile.string(name, required)
    if spec["phase_moments"] is None:
        if not profile.has("phase"):
            raise ScenarioError(f"{table.file}: [atmosphere] missing required key "
                                "'profile.phase_moments' or 'profile.phase' (expected a "
                                "variable name or a phase table)")
        # one phase function for every layer of the file
        spec["phase"] = _parse_phase(profile, "phase", 1, n_moments)[0]
    try:
        with xr.open_dataset(file) as source:
            available = [str(name) for name in source.variables]
    except (OSError, ValueError) as error:
        raise ScenarioError(f"{profile.where('file')}: cannot read {file} as netCDF "
                            f"({error})") from None
    for name in names:
        if spec[name] is not None and spec[name] not in available:
            raise ScenarioError(f"{profile.where(name)}: variable {spec[name]!r} not found in "
                                f"{file} (it has: {', '.join(available) or 'nothing'})")
    dims = profile.sub("dimensions").data if profile.has("dimensions") else {}
    for new, old in dims.items():
        if new not in ("layer", "level", "moment") or not isinstance(old, str):
            raise ScenarioError(f"{profile.where('dimensions')}: expected a table mapping "
                                "layer/level/moment to the file's dim names; got "
                                f"{new} = {_describe(old)}")
    spec["dimensions"] = dict(dims)
    return spec


def _parse_atmosphere(root: _Table, scenario: dict[str, Any], spectral: bool) -> None:
    """``[atmosphere]``: the layers in one of the three forms, then the level quantities."""
    n_moments = scenario["phase_moments"]
    table = root.sub("atmosphere", "an [atmosphere] table")
    table = _Table(root.file, "[atmosphere]", table.data)
    level_keys = ["pressure", "temperature", "altitude", "gravity", "heat_capacity"]
    inline_keys = ["optical_depth", "single_scattering_albedo", "phase", "spectral_dependence",
                   "mie"]
    table.check_keys([*level_keys, *inline_keys, "constituent", "profile"])
    forms = [key for key in ("optical_depth", "constituent", "profile") if table.has(key)]
    if len(forms) != 1:
        detail = f"got {' and '.join(forms)}" if forms else "got none of them"
        raise ScenarioError(f"{table.file}: [atmosphere] expected exactly one of "
                            f"'optical_depth' (inline layers), [[atmosphere.constituent]] or "
                            f"'profile'; {detail}")
    if forms[0] != "optical_depth":
        stray = [key for key in inline_keys if table.has(key)]
        if stray:
            raise ScenarioError(f"{table.file}: [atmosphere] {stray[0]}: belongs inside each "
                                f"[[atmosphere.constituent]] (or use inline layers only)")
    n_layers: int | None = None
    if forms[0] == "profile":
        scenario["profile"] = _parse_profile(table, root.file.parent, n_moments)
    elif forms[0] == "optical_depth":
        scenario["constituents"] = (_parse_constituent(table, None, spectral, n_moments),)
        n_layers = scenario["constituents"][0].optical_depth.size
    else:
        items = table.raw("constituent")
        if not isinstance(items, list) or not items or not all(
                isinstance(item, Mapping) for item in items):
            raise table.error("constituent", "one or more [[atmosphere.constituent]] tables",
                              items)
        constituents = []
        for number, item in enumerate(items, start=1):
            name = item.get("name")
            label = f"[atmosphere.constituent #{number}" + (
                f" {name!r}]" if isinstance(name, str) else "]")
            constituents.append(_parse_constituent(_Table(root.file, label, item), n_layers,
                                                   spectral, n_moments))
            n_layers = constituents[0].optical_depth.size
        scenario["constituents"] = tuple(constituents)
    n_levels = None if n_layers is None else n_layers + 1
    level = {"length": n_levels, "length_of": " (one per level, top first)", "scalar": False}
    if table.has("temperature"):
        scenario["temperature"] = table.numbers("temperature", what="temperatures in K",
                                                low=0.0, low_open=True, quantity="temperature",
                                                **level)
    if table.has("pressure"):
        pressure = table.numbers("pressure", what="pressures (Pa unless units are given)",
                                 low=0.0, quantity="pressure", **level)
        if np.any(np.diff(pressure) <= 0):
            raise table.error("pressure", "pressures increasing downwards (top first)",
                              pressure.tolist())
        scenario["pressure"] = pressure
    if table.has("altitude"):
        altitude = table.numbers("altitude", what="altitudes (m unless units are given)",
                                 quantity="altitude", **level)
        if np.any(np.diff(altitude) >= 0):
            raise table.error("altitude", "altitudes decreasing downwards (top first)",
                              altitude.tolist())
        scenario["altitude"] = altitude
    if table.has("gravity"):
        scenario["gravity"] = float(table.numbers("gravity", what="gravity in m s-2", low=0,
                                                  low_open=True, vector=False))
    if table.has("heat_capacity"):
        scenario["heat_capacity"] = float(table.numbers(
            "heat_capacity", what="a heat capacity in J kg-1 K-1", low=0, low_open=True,
            vector=False))
