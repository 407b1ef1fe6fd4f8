"""Output files pass a CF checker, and every standard name is in the CF table.

Outside references: the IOOS compliance checker (its CF-1.10 suite) and the CF standard-name
table it ships (compliance_checker/data/cf-standard-name-table.xml).
"""

from __future__ import annotations

import json
import xml.etree.ElementTree as ElementTree
from pathlib import Path

import compliance_checker
import numpy as np
import pytest
import xarray as xr
from compliance_checker.runner import CheckSuite, ComplianceChecker

import lamina

TABLE = Path(compliance_checker.__file__).parent / "data" / "cf-standard-name-table.xml"


def _runs() -> dict[str, xr.Dataset]:
    moments = np.stack([lamina.phase.rayleigh(n_moments=64),
                        lamina.phase.henyey_greenstein(0.8, 64)])
    atm = lamina.make_atmosphere([0.1, 2.0], [1.0, 0.9], moments,
                                 temperature=[220.0, 250.0, 290.0],
                                 pressure=[1e4, 5e4, 1e5], altitude=[2e4, 8e3, 0.0])
    sun = xr.DataArray(1361.0, attrs={"units": "W m-2"})
    spectral = lamina.make_atmosphere(np.ones((3, 2)), 0.9, lamina.phase.rayleigh(),
                                      extra_dims={"wavelength": xr.DataArray(
                                          [0.4, 0.5, 0.6], dims="wavelength",
                                          attrs={"units": "um", "long_name": "wavelength"})},
                                      pressure=[1e4, 5e4, 1e5])
    return {
        "solar": lamina.solve(atm, streams=8, sun_zenith=[20.0, 60.0], sun_irradiance=sun,
                              surface_albedo=0.1, view_zenith=[0.0, 60.0],
                              view_azimuth=[0.0, 180.0]),
        "thermal": lamina.solve(atm, streams=8, wavenumber_band=(400.0, 900.0),
                                view_zenith=[0.0, 45.0], view_azimuth=[0.0]),
        "relative_spectral": lamina.solve(spectral, streams=4, sun_zenith=30.0,
                                          output_levels=[0.0, 0.5, 2.0]),
    }


def _standard_names() -> set[str]:
    root = ElementTree.parse(TABLE).getroot()
    names = {entry.get("id") for entry in root.iter("entry")}
    names |= {alias.get("id") for alias in root.iter("alias")}
    return names


@pytest.mark.parametrize("name", sorted(_runs()))
def test_every_standard_name_is_in_the_cf_table(name):
    table = _standard_names()
    dataset = _runs()[name]
    for variable in dataset.variables.values():
        if "standard_name" in variable.attrs:
            assert variable.attrs["standard_name"] in table, variable.attrs["standard_name"]


def test_the_atmosphere_standard_names_are_in_the_cf_table():
    table = _standard_names()
    atm = lamina.make_atmosphere([0.1], [0.5], [1.0], temperature=[200.0, 210.0],
                                 pressure=[1e4, 2e4], altitude=[1e3, 0.0])
    for variable in atm.variables.values():
        if "standard_name" in variable.attrs:
            assert variable.attrs["standard_name"] in table


@pytest.mark.parametrize("writer", ["to_netcdf", "write_netcdf"])
@pytest.mark.parametrize("name", sorted(_runs()))
def test_output_files_pass_the_cf_checker(name, writer, tmp_path):
    dataset = _runs()[name]
    path = tmp_path / f"{name}.nc"
    if writer == "to_netcdf":
        dataset.to_netcdf(path)
    else:
        lamina.io.write_netcdf(dataset, path)
    report = tmp_path / "report.json"
    suite = CheckSuite()
    suite.load_all_available_checkers()
    ComplianceChecker.run_checker(str(path), ["cf:1.10"], verbose=0, criteria="normal",
                                  output_filename=str(report), output_format="json")
    result = json.loads(report.read_text())["cf:1.10"]
    # every required (high) and recommended (medium) check passes, but the recommended
    # order of dims (T, Z, Y, X rightmost): lamina's documented order puts the view
    # directions after the level, as its users index them
    errors = [(item["name"], item["msgs"]) for item in result["high_priorities"]
              + result["medium_priorities"] if item["value"][0] < item["value"][1]
              and item["name"] != "§2.4 Dimensions"]
    assert errors == [], errors
    with xr.open_dataset(path) as back:   # the direction labels read back as strings
        if "direction" in back.coords:
            assert list(back.direction.values) == ["up", "down"]
