"""Fixed solver cases whose outputs are stored, to guard reorganisations of the code.

These are not accuracy checks (those compare with outside references elsewhere): they pin
every output of a reorganised solver to what the build before the reorganisation computed,
on cases that reach every branch of the kernel and the front end: several sun angles, output
positions inside layers, conservative stacks, thermal runs with heating rates, the radiance
corrections on and off, 2 to 64 streams.

Every argument that has a default is given explicitly, so that a change of a default does not
change these cases. Regenerate the stored file only when an output is meant to change, and
say why in the commit: ``python tests/fixed_cases.py``.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import numpy as np
import xarray as xr

import lamina

STORE = Path(__file__).parent / "data" / "fixed_case_outputs.npz"


def _stack() -> xr.Dataset:
    moments = np.zeros((3, 65))
    moments[0, :3] = lamina.phase.rayleigh(n_moments=3)
    moments[1] = lamina.phase.henyey_greenstein(0.85, 65)
    moments[2] = lamina.phase.henyey_greenstein(0.6, 65)
    return lamina.make_atmosphere([0.1, 2.0, 0.5], [1.0, 0.999, 0.9], moments)


def _conservative() -> xr.Dataset:
    moments = np.stack([lamina.phase.henyey_greenstein(g, 40) for g in (0.0, 0.5, 0.8, 0.3)])
    return lamina.make_atmosphere([0.3, 5.0, 30.0, 1.0], [1.0, 1.0, 1.0, 1.0], moments)


def _thermal() -> xr.Dataset:
    moments = np.stack([lamina.phase.henyey_greenstein(g, 20) for g in (0.0, 0.4, 0.7)])
    return lamina.make_atmosphere(
        [0.2, 1.5, 3.0], [0.0, 0.5, 0.95], moments,
        temperature=[210.0, 230.0, 260.0, 290.0],
        pressure=[1.0e4, 3.0e4, 6.0e4, 1.0e5],
    )


_VIEW = dict(view_zenith=[0.0, 30.0, 60.0, 85.0], view_azimuth=[0.0, 45.0, 135.0, 180.0])
_SOLAR = dict(sun_irradiance=1.0, surface_albedo=0.2, wavenumber_band=None,
              surface_temperature=None, top_diffuse_radiance=0.0)
_CORRECTIONS = dict(delta_m=True, single_scattering_correction=True, aureole_correction=True,
                    fourier_tolerance=1e-6, max_fourier_terms=None)
_NO_CORRECTIONS = dict(_CORRECTIONS, single_scattering_correction=False,
                       aureole_correction=False)


def cases() -> dict[str, Callable[[], xr.Dataset]]:
    """Name -> a function that runs the case."""
    return {
        "stack_suns_positions_16": lambda: lamina.solve(
            _stack(), streams=16, sun_zenith=[0.0, 30.0, 63.0, 84.0], **_SOLAR, **_VIEW,
            output_levels=[0.0, 0.25, 1.0, 1.5, 2.7, 3.0], **_CORRECTIONS),
        "stack_no_corrections_8": lambda: lamina.solve(
            _stack(), streams=8, sun_zenith=40.0, **_SOLAR, **_VIEW, output_levels=None,
            **_NO_CORRECTIONS),
        "stack_no_delta_m_64": lambda: lamina.solve(
            _stack(), streams=64, sun_zenith=[20.0, 70.0], **_SOLAR, **_VIEW,
            output_levels=None, **dict(_NO_CORRECTIONS, delta_m=False)),
        "conservative_flux_32": lambda: lamina.solve(
            _conservative(), streams=32, sun_zenith=[10.0, 50.0, 80.0],
            **dict(_SOLAR, surface_albedo=0.0), view_zenith=None, view_azimuth=None,
            output_levels=[0.0, 1.5, 2.25, 4.0], **_CORRECTIONS),
        "conservative_radiance_4": lambda: lamina.solve(
            _conservative(), streams=4, sun_zenith=35.0, **_SOLAR, **_VIEW,
            output_levels=None, **_CORRECTIONS),
        "two_streams": lambda: lamina.solve(
            _stack(), streams=2, sun_zenith=60.0, **_SOLAR, view_zenith=None,
            view_azimuth=None, output_levels=None, **_CORRECTIONS),
        "thermal_heating_16": lambda: lamina.solve(
            _thermal(), streams=16, sun_zenith=45.0, sun_irradiance=0.0, surface_albedo=0.1,
            view_zenith=[0.0, 50.0], view_azimuth=[0.0], wavenumber_band=(400.0, 900.0),
            surface_temperature=295.0, top_diffuse_radiance=0.5, output_levels=None,
            **_CORRECTIONS),
        "thermal_and_solar_12": lambda: lamina.solve(
            _thermal(), streams=12, sun_zenith=[25.0, 75.0], sun_irradiance=3.0,
            surface_albedo=0.3, view_zenith=[10.0, 70.0], view_azimuth=[0.0, 90.0, 180.0],
            wavenumber_band=None, wavenumber=700.0, surface_temperature=None,
            top_diffuse_radiance=0.0, output_levels=[0.0, 0.5, 2.0, 2.9, 3.0],
            **_CORRECTIONS),
    }


#: Outputs added after the store was written, derived from stored ones and checked in their
#: own tests (reflectance = pi I / (mu0 S): tests/test_reflectance.py); not pinned here.
LATER_OUTPUTS = frozenset({"reflectance"})


def outputs(dataset: xr.Dataset) -> dict[str, np.ndarray]:
    """Every numeric data variable and coordinate, transposed to sorted dims."""
    arrays = {}
    for name in sorted(set(dataset.data_vars) | set(dataset.coords)):
        array = dataset[name]
        if array.dtype.kind not in "fiu" or name in LATER_OUTPUTS:
            continue
        arrays[name] = array.transpose(*sorted(array.dims)).values.astype(float)
    return arrays


def write() -> None:
    stored = {}
    for case, run in cases().items():
        for name, values in outputs(run()).items():
            stored[f"{case}/{name}"] = values
    STORE.parent.mkdir(exist_ok=True)
    np.savez_compressed(STORE, **stored)


if __name__ == "__main__":
    write()
