"""The spectral parts of a scenario: the ``[spectrum]`` grid, Mie constituents, spectral laws.

Everything that depends on wavelength: the wavelength grid and reference wavelength of
``[spectrum]``, a constituent's ``spectral_dependence`` (grey, Rayleigh or Angstrom 1929),
the ``mie`` table of a constituent and its optics from Mie theory for a lognormal size
distribution (:func:`lamina.mie.lognormal_optics`), and the quantities that may be given
once or once per wavelength (irradiance, albedo).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from lamina.scenario._tables import _UNITS, _Table


def _parse_spectrum(root: _Table) -> tuple[np.ndarray, float] | None:
    """``[spectrum]``: the wavelengths (micrometres) and the reference wavelength, or None."""
    if not root.has("spectrum"):
        return None
    table = _Table(root.file, "[spectrum]", root.sub("spectrum").data)
    table.check_keys(["wavelength", "reference_wavelength"])
    grid = table.raw("wavelength", expected="a list of wavelengths or {start, stop, count}")
    units_factor = 1.0
    if isinstance(grid, Mapping) and "start" in grid:
        spec = table.sub("wavelength")
        spec.check_keys(["start", "stop", "count", "units"])
        units = spec.string("units", "um", choices=tuple(_UNITS["wavelength"]))
        units_factor = _UNITS["wavelength"][units]
        start = float(spec.numbers("start", what="a wavelength", low=0, low_open=True,
                                   vector=False))
        stop = float(spec.numbers("stop", what="a wavelength larger than start", low=start,
                                  low_open=True, vector=False))
        count = spec.integer("count", minimum=1)
        wavelength = np.linspace(start, stop, count) * units_factor
    else:
        wavelength = table.numbers("wavelength", what="wavelengths (um unless units are "
                                   "given)", low=0.0, low_open=True, quantity="wavelength")
        if isinstance(grid, Mapping):
            units_factor = _UNITS["wavelength"][grid["units"]]
        wavelength = np.atleast_1d(wavelength)
        if np.any(np.diff(wavelength) <= 0):
            raise table.error("wavelength", "strictly increasing wavelengths",
                              wavelength.tolist())
    reference = float(table.numbers("reference_wavelength", np.asarray(0.55 / units_factor),
                                    what="a wavelength in the units of [spectrum] wavelength",
                                    low=0.0, low_open=True, vector=False)) * units_factor
    return wavelength, reference


def _spectral_or_scalar(table: _Table, key: str, default: Any, n_wavelengths: int | None,
                        **kwargs: Any) -> float | np.ndarray:
    """A number, or one number per wavelength when the scenario has a ``[spectrum]``."""
    values = table.numbers(key, default, vector=n_wavelengths is not None,
                           length=n_wavelengths, length_of=" (one per wavelength)", **kwargs)
    return float(values) if np.ndim(values) == 0 else values



def _parse_spectral_dependence(table: _Table) -> float:
    """The Angstrom exponent of a constituent's optical depth (0: grey, 4: Rayleigh)."""
    expected = ('"none", "rayleigh" or a table {angstrom_exponent = ...}')
    value = table.raw("spectral_dependence", "none", expected)
    if isinstance(value, str):
        law = table.string("spectral_dependence", "none", choices=("none", "rayleigh"))
        return 4.0 if law == "rayleigh" else 0.0
    if isinstance(value, Mapping):
        law_table = table.sub("spectral_dependence")
        law_table.check_keys(["angstrom_exponent"])
        return float(law_table.numbers("angstrom_exponent", what="an Angstrom exponent",
                                       vector=False))
    raise table.error("spectral_dependence", expected, value)



def _parse_mie(table: _Table, spectral: bool) -> dict[str, Any]:
    """The ``mie`` table of a constituent: median radius, spread and refractive index."""
    if not spectral:
        raise table.error("mie", "a [spectrum] section to go with Mie optics "
                                 "(they depend on wavelength)")
    mie = table.sub("mie")
    mie.check_keys(["median_radius", "geometric_standard_deviation", "refractive_index"])
    index = mie.numbers("refractive_index", what="a refractive index [real, imaginary]",
                        scalar=False, length=2)
    if index[0] <= 0 or index[1] < 0:
        raise mie.error("refractive_index",
                        "[real > 0, imaginary >= 0] (absorption is a positive imaginary "
                        "part)", index.tolist())
    return {"median_radius": float(mie.numbers(
                "median_radius", what="a radius in micrometres", low=0, low_open=True,
                vector=False)),
            "geometric_standard_deviation": float(mie.numbers(
                "geometric_standard_deviation", what="a geometric standard deviation",
                low=1.0, low_open=True, vector=False)),
            "refractive_index": complex(index[0], index[1])}


def _mie_optics(mie: Mapping[str, Any], wavelength: np.ndarray,
                n_moments: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Extinction (relative), single-scattering albedo and moments at the given wavelengths."""
    from lamina import mie as mie_theory

    optics = mie_theory.lognormal_optics(
        wavelength=wavelength,
        median_radius=mie["median_radius"],
        geometric_standard_deviation=mie["geometric_standard_deviation"],
        refractive_index=mie["refractive_index"],
        n_moments=n_moments,
    )
    return (np.asarray(optics["extinction_cross_section"], dtype=float),
            np.asarray(optics["single_scattering_albedo"], dtype=float),
            np.asarray(optics["phase_moments"], dtype=float))

