"""Scenario files: a whole lamina run described in one TOML file.

A scenario names the atmosphere, the light that falls on it, where we look from, the surface,
the solver settings and what to keep, in plain TOML (read with :mod:`tomllib`).
:func:`load_scenario` reads and validates a file and returns a :class:`Scenario`, which builds
the input Dataset (through :func:`lamina.make_atmosphere`) and the keyword arguments of
:func:`lamina.solve`. Every mistake raises :class:`ScenarioError` naming the file, the key path
(``[sun] zenith``) and what was expected.

The format
----------
Units are fixed unless a quantity is written as ``{values = [...], units = "..."}``; the
accepted units are listed below. Layers are numbered from the top, levels (the ``L + 1``
layer boundaries) too.

.. code-block:: toml

    title = "Hazy sky over a dark sea"          # optional, copied to the output
    description = "..."                          # optional

    [atmosphere]
    # level quantities (optional; temperature is needed for thermal runs, pressure for
    # heating rates)
    pressure = {values = [1, 100, 300, 600, 1000], units = "hPa"}   # Pa, hPa, mbar, bar
    temperature = [200, 220, 250, 270, 288]                           # K
    altitude = {values = [40, 16, 9, 4, 0], units = "km"}             # m, km
    gravity = 9.80665            # m s-2, for heating rates (default: Earth)
    heat_capacity = 1004.0       # J kg-1 K-1, for heating rates (default: Earth air)

    # the layers: either inline (one constituent) ...
    optical_depth = [0.02, 0.05, 1.5, 0.1]
    single_scattering_albedo = [1.0, 1.0, 0.999, 0.9]   # or one number for all layers
    phase = {kind = "henyey_greenstein", asymmetry_parameter = [0.0, 0.0, 0.85, 0.7]}

    # ... or as constituents whose optical depths add up in every layer
    [[atmosphere.constituent]]
    name = "air"
    optical_depth = [0.01, 0.03, 0.05, 0.06]     # at [spectrum] reference_wavelength
    single_scattering_albedo = 1.0
    phase = {kind = "rayleigh", depolarization = 0.03}
    spectral_dependence = "rayleigh"             # optical depth ~ wavelength^-4

    [[atmosphere.constituent]]
    name = "haze"
    optical_depth = [0.1, 0.05, 0.0, 0.0]
    [atmosphere.constituent.mie]                 # albedo, phase and spectral law from Mie
    median_radius = 0.3                          # micrometres
    geometric_standard_deviation = 1.5
    refractive_index = [1.5, 0.01]               # real, imaginary (absorbing when > 0)

    # ... or read from a netCDF file (path relative to the scenario file), naming the file's
    # variables; its dims must be called layer / level / moment or be renamed with
    # `dimensions = {layer = "z", level = "zlev"}`; any other dim (wavelength, column...)
    # is carried through.
    [atmosphere.profile]
    file = "profile.nc"
    optical_depth = "tau"
    single_scattering_albedo = "ssa"
    phase_moments = "pmom"              # or phase = {kind = ...} for every layer
    temperature = "t"
    pressure = "p"

    [spectrum]                                   # optional: a wavelength dim
    wavelength = {start = 0.4, stop = 2.4, count = 30, units = "um"}   # or a list; nm, um, m
    reference_wavelength = 0.55                  # same units as wavelength (default: 0.55 um)

    [sun]                                        # optional (no sun: a purely thermal run)
    zenith = 30.0                                # degrees in [0, 90); a list adds a dim
    irradiance = 1.0                             # on a plane normal to the beam; a list per
                                                 # wavelength is allowed

    [view]                                       # optional: radiances at these angles
    zenith = [0, 30, 60]                         # degrees in [0, 90]
    azimuth = [0, 90, 180]                       # degrees, 0 = forward scattering side

    [surface]
    albedo = 0.1                                 # Lambertian, [0, 1]; or a list per wavelength
    temperature = 288.0                          # K (thermal runs; default: bottom level)

    [thermal]                                    # optional: thermal emission
    wavenumber_band = [500.0, 1500.0]            # cm-1, band-integrated Planck source
    # wavenumber = 667.0                         # or monochromatic
    top_diffuse_radiance = 0.0

    [solver]
    streams = 16                                 # even, >= 2
    delta_m = true
    single_scattering_correction = true
    fourier_tolerance = 1e-6
    phase_moments = 64                           # Legendre moments (default max(64, streams + 1))

    [output]
    levels = [0, 0.5, 1, 2, 4]                   # fractional level positions (default: all)
    variables = ["flux_up", "flux_down", "heating_rate"]   # default: everything
    chunk_size = 10                              # wavelengths per chunk of a chunked run

Phase function kinds (``phase = {kind = ...}``): ``isotropic``; ``henyey_greenstein``
(``asymmetry_parameter``, a number or one per layer); ``double_henyey_greenstein``
(``forward_asymmetry``, ``backward_asymmetry``, ``forward_fraction``); ``rayleigh``
(``depolarization``, default 0); ``tabulated`` (``angle`` in degrees and ``value`` lists);
``legendre`` (``coefficients``, chi_0 = 1 first).

Spectral dependence of a constituent's optical depth (``spectral_dependence``): ``"none"``
(default, grey), ``"rayleigh"`` (wavelength^-4, the Rayleigh law), or
``{angstrom_exponent = a}`` (wavelength^-a, Angstrom 1929). A ``mie`` constituent takes its
optical depth ratio, single-scattering albedo and phase function from Mie theory for a
lognormal size distribution (:func:`lamina.mie.lognormal_optics`).

Constituents are mixed per layer in the usual way: optical depths add, the single-scattering
albedo is the scattering-weighted mean and the phase moments are weighted by each
constituent's scattering optical depth.
"""

from __future__ import annotations

import difflib
import tomllib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import xarray as xr

__all__ = ["Scenario", "ScenarioError", "load_scenario", "OUTPUT_VARIABLES"]

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

# Conversion factors to lamina's internal units (micrometre, Pa, m).
_UNITS: dict[str, dict[str, float]] = {
    "wavelength": {"nm": 1e-3, "um": 1.0, "micrometre": 1.0, "micrometer": 1.0, "m": 1e6},
    "pressure": {"Pa": 1.0, "hPa": 100.0, "mbar": 100.0, "bar": 1e5},
    "altitude": {"m": 1.0, "km": 1e3},
    "temperature": {"K": 1.0},
}

_PHASE_KEYS = {
    "isotropic": (),
    "henyey_greenstein": ("asymmetry_parameter",),
    "double_henyey_greenstein": ("forward_asymmetry", "backward_asymmetry", "forward_fraction"),
    "rayleigh": ("depolarization",),
    "tabulated": ("angle", "value", "normalize"),
    "legendre": ("coefficients",),
}

_REQUIRED = object()


class ScenarioError(ValueError):
    """A scenario file that cannot be read or does not describe a valid run.

    The message names the file, the key path (e.g. ``[sun] zenith``) and what was expected.
    """


# --------------------------------------------------------------------------------------------
# Validation helpers
# --------------------------------------------------------------------------------------------


def _describe(value: Any) -> str:
    """Short description of a TOML value for error messages."""
    if isinstance(value, bool):
        return f"{str(value).lower()} (a boolean)"
    if isinstance(value, str):
        return f"{value!r} (a string)"
    if isinstance(value, Mapping):
        return "a table"
    if isinstance(value, list):
        text = repr(value)
        return text if len(text) <= 60 else text[:57] + "..."
    return repr(value)


def _is_number(value: Any) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool)


@dataclass
class _Table:
    """A TOML table being validated: knows the file and its own key path."""

    file: Path
    label: str  # e.g. "[sun]" or '[atmosphere.constituent #2 "haze"]'
    data: Mapping[str, Any]
    prefix: str = ""  # for inline tables: "phase."

    def where(self, key: str) -> str:
        return f"{self.file}: {self.label} {self.prefix}{key}"

    def error(self, key: str, expected: str, got: Any = _REQUIRED) -> ScenarioError:
        text = f"{self.where(key)}: expected {expected}"
        if got is not _REQUIRED:
            text += f"; got {_describe(got)}"
        return ScenarioError(text)

    def check_keys(self, allowed: Sequence[str]) -> None:
        for key in self.data:
            if key not in allowed:
                close = difflib.get_close_matches(key, allowed, n=1, cutoff=0.6)
                hint = f"; did you mean {close[0]!r}?" if close else ""
                raise ScenarioError(
                    f"{self.file}: {self.label} unknown key '{self.prefix}{key}'{hint} "
                    f"(valid keys: {', '.join(allowed)})"
                )

    def has(self, key: str) -> bool:
        return key in self.data

    def raw(self, key: str, default: Any = _REQUIRED, expected: str = "a value") -> Any:
        if key in self.data:
            return self.data[key]
        if default is _REQUIRED:
            raise ScenarioError(f"{self.file}: {self.label} missing required key "
                                f"'{self.prefix}{key}' (expected {expected})")
        return default

    def sub(self, key: str, expected: str = "a table") -> _Table:
        value = self.raw(key, expected=expected)
        if not isinstance(value, Mapping):
            raise self.error(key, expected, value)
        return _Table(self.file, self.label, value, prefix=f"{self.prefix}{key}.")

    def boolean(self, key: str, default: Any = _REQUIRED) -> bool:
        value = self.raw(key, default, "true or false")
        if not isinstance(value, bool):
            raise self.error(key, "true or false", value)
        return value

    def string(self, key: str, default: Any = _REQUIRED, choices: Sequence[str] = ()) -> str:
        expected = f"one of {', '.join(map(repr, choices))}" if choices else "a string"
        value = self.raw(key, default, expected)
        if key not in self.data:
            return value
        if not isinstance(value, str):
            raise self.error(key, expected, value)
        if choices and value not in choices:
            close = difflib.get_close_matches(value, choices, n=1, cutoff=0.6)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            raise ScenarioError(f"{self.where(key)}: expected {expected}; got {value!r}{hint}")
        return value

    def integer(self, key: str, default: Any = _REQUIRED, minimum: int = 0,
                even: bool = False) -> int:
        expected = f"{'an even' if even else 'an'} integer >= {minimum}"
        value = self.raw(key, default, expected)
        if (not isinstance(value, int) or isinstance(value, bool) or value < minimum
                or (even and value % 2)):
            raise self.error(key, expected, value)
        return value

    def numbers(self, key: str, default: Any = _REQUIRED, *, what: str = "a number",
                low: float | None = None, high: float | None = None,
                low_open: bool = False, high_open: bool = False,
                scalar: bool = True, vector: bool = True, length: int | None = None,
                length_of: str = "", quantity: str | None = None) -> np.ndarray:
        """A number or list of numbers, range-checked, optionally with a ``units`` table.

        Returns a float64 array (0-d for a scalar).
        """
        rng = ""
        if low is not None or high is not None:
            lo = "-inf" if low is None else f"{low:g}"
            hi = "inf" if high is None else f"{high:g}"
            rng = f" in {'(' if low_open else '['}{lo}, {hi}{')' if high_open else ']'}"
        forms = []
        if scalar:
            forms.append("a number")
        if vector:
            forms.append(f"a list of {length} numbers{length_of}" if length is not None
                         else "a list of numbers")
        expected = f"{what}{rng} as {' or '.join(forms)}"
        value = self.raw(key, default, expected)
        if value is default and default is not _REQUIRED:
            return value
        factor = 1.0
        if quantity is not None and isinstance(value, Mapping):
            table = self.sub(key)
            table.check_keys(["values", "units"])
            units = table.string("units", choices=tuple(_UNITS[quantity]))
            factor = _UNITS[quantity][units]
            value = table.raw("values", expected=expected)
        if _is_number(value) and scalar:
            array = np.asarray(float(value))
        elif (isinstance(value, list) and vector and value
              and all(_is_number(item) for item in value)):
            array = np.asarray(value, dtype=float)
            if length is not None and array.size != length:
                raise ScenarioError(f"{self.where(key)}: expected {expected}; got "
                                    f"{array.size} number{'s' if array.size != 1 else ''}")
        else:
            raise self.error(key, expected, value)
        array = array * factor
        bad = ~np.isfinite(array)
        if low is not None:
            bad |= (array <= low) if low_open else (array < low)
        if high is not None:
            bad |= (array >= high) if high_open else (array > high)
        if np.any(bad):
            first = float(np.ravel(array)[np.flatnonzero(np.ravel(bad))[0]]) / factor
            raise ScenarioError(f"{self.where(key)}: expected {expected}; got {first:g}")
        return array


def _per_layer(table: _Table, key: str, n_layers: int, default: Any = _REQUIRED,
               **kwargs: Any) -> np.ndarray:
    """A number (the same in every layer) or one number per layer."""
    values = table.numbers(key, default, length=n_layers, length_of=" (one per layer)",
                           **kwargs)
    return np.broadcast_to(values, (n_layers,)).astype(float)


# --------------------------------------------------------------------------------------------
# The validated scenario
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Constituent:
    """One optically active constituent, validated (optical depths at the reference)."""

    name: str
    optical_depth: np.ndarray  # (layer,)
    single_scattering_albedo: np.ndarray | None = None  # (layer,); None for Mie
    phase_moments: np.ndarray | None = None  # (layer, moment); None for Mie
    angstrom_exponent: float = 0.0  # optical depth ~ (wavelength / reference)^-exponent
    mie: Mapping[str, Any] | None = None


@dataclass(frozen=True)
class Scenario:
    """A validated scenario; build its inputs with :meth:`build_atmosphere`/:meth:`solve_kwargs`.

    Attributes mirror the file's sections; arrays are in lamina's units (micrometres, Pa, m,
    K, degrees, cm-1).
    """

    path: Path
    title: str = ""
    description: str = ""
    constituents: tuple[Constituent, ...] = ()
    profile: Mapping[str, Any] | None = None
    temperature: np.ndarray | None = None
    pressure: np.ndarray | None = None
    altitude: np.ndarray | None = None
    gravity: float | None = None
    heat_capacity: float | None = None
    wavelength: np.ndarray | None = None
    reference_wavelength: float = 0.55
    sun_zenith: float | np.ndarray = 0.0
    sun_irradiance: float | np.ndarray = 0.0
    view_zenith: np.ndarray | None = None
    view_azimuth: np.ndarray | None = None
    surface_albedo: float | np.ndarray = 0.0
    surface_temperature: float | None = None
    wavenumber_band: tuple[float, float] | None = None
    wavenumber: float | None = None
    top_diffuse_radiance: float = 0.0
    solver: Mapping[str, Any] = field(default_factory=dict)
    phase_moments: int = 64
    output_levels: np.ndarray | None = None
    variables: tuple[str, ...] | None = None
    chunk_size: int | None = None

    # ---- building the inputs -----------------------------------------------------------

    @property
    def spectral(self) -> bool:
        """True when the scenario has a wavelength dimension."""
        return self.wavelength is not None

    def _spectral_array(self, values: float | np.ndarray, name: str, units: str,
                        long_name: str) -> float | xr.DataArray:
        if np.ndim(values) == 0:
            return float(values)
        return xr.DataArray(np.asarray(values, dtype=float), dims=["wavelength"],
                            coords={"wavelength": self._wavelength_coord()},
                            name=name, attrs={"units": units, "long_name": long_name})

    def _wavelength_coord(self) -> xr.Variable:
        return xr.Variable("wavelength", np.asarray(self.wavelength, dtype=float),
                           attrs={"units": "um", "long_name": "wavelength",
                                  "standard_name": "radiation_wavelength"})

    def build_atmosphere(self) -> xr.Dataset:
        """Build the input Dataset with :func:`lamina.make_atmosphere`.

        Returns
        -------
        xarray.Dataset
            ``optical_depth``, ``single_scattering_albedo``, ``phase_moments`` (and the level
            profiles), with a ``wavelength`` dim when the scenario has a ``[spectrum]``.
        """
        import lamina

        if self.profile is not None:
            return _read_profile(self)
        tau, ssa, moments = _mix(self)
        extra = ("wavelength",) if self.spectral else None
        atmosphere = lamina.make_atmosphere(
            tau, ssa, moments, temperature=self.temperature, pressure=self.pressure,
            altitude=self.altitude, extra_dims=extra,
        )
        if self.spectral:
            atmosphere = atmosphere.assign_coords(wavelength=self._wavelength_coord())
        return atmosphere

    def solve_kwargs(self) -> dict[str, Any]:
        """Keyword arguments of :func:`lamina.solve` for this scenario."""
        kwargs: dict[str, Any] = dict(self.solver)
        kwargs["sun_zenith"] = (float(self.sun_zenith) if np.ndim(self.sun_zenith) == 0
                                else np.asarray(self.sun_zenith, dtype=float))
        kwargs["sun_irradiance"] = self._spectral_array(
            self.sun_irradiance, "sun_irradiance", "W m-2",
            "stellar irradiance on a plane normal to the beam")
        kwargs["surface_albedo"] = self._spectral_array(
            self.surface_albedo, "surface_albedo", "1", "Lambertian surface albedo")
        if self.view_zenith is not None:
            kwargs["view_zenith"] = self.view_zenith
            kwargs["view_azimuth"] = self.view_azimuth
        if self.wavenumber_band is not None:
            kwargs["wavenumber_band"] = self.wavenumber_band
        if self.wavenumber is not None:
            kwargs["wavenumber"] = self.wavenumber
        if self.wavenumber_band is not None or self.wavenumber is not None:
            if self.surface_temperature is not None:  # else lamina.solve takes the bottom level
                kwargs["surface_temperature"] = self.surface_temperature
            kwargs["top_diffuse_radiance"] = self.top_diffuse_radiance
        if self.output_levels is not None:
            kwargs["output_levels"] = self.output_levels
        if self.gravity is not None:
            kwargs["gravity"] = self.gravity
        if self.heat_capacity is not None:
            kwargs["heat_capacity"] = self.heat_capacity
        return kwargs

    def attributes(self) -> dict[str, str]:
        """Global attributes describing the scenario, for the output file."""
        attrs = {"scenario_file": self.path.name}
        if self.title:
            attrs["title"] = self.title
        if self.description:
            attrs["comment"] = self.description
        return attrs


# --------------------------------------------------------------------------------------------
# Optics
# --------------------------------------------------------------------------------------------


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


def _mix(scenario: Scenario) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Mix the constituents into layer optical depth, albedo and phase moments.

    Optical depths add; the single-scattering albedo is the ratio of the summed scattering
    optical depths to the total; moments are weighted by scattering optical depth. Arrays have
    a leading wavelength axis when the scenario is spectral.
    """
    n_moments = scenario.phase_moments
    if scenario.spectral:
        wavelength = np.asarray(scenario.wavelength, dtype=float)
        ratio = wavelength / scenario.reference_wavelength
    else:
        wavelength = ratio = np.ones(1)
    n_layers = scenario.constituents[0].optical_depth.size
    shape = (wavelength.size, n_layers)
    extinction = np.zeros(shape)
    scattering = np.zeros(shape)
    weighted = np.zeros((*shape, n_moments))
    for constituent in scenario.constituents:  # a handful of constituents, not layers
        if constituent.mie is not None:
            both = np.append(wavelength, scenario.reference_wavelength)
            cross_section, ssa, chi = _mie_optics(constituent.mie, both, n_moments)
            scale = cross_section[:-1] / cross_section[-1]
            tau = constituent.optical_depth * scale[:, None]
            ssa = ssa[:-1, None]
            chi = chi[:-1, None, :]
        else:
            tau = constituent.optical_depth * ratio[:, None] ** -constituent.angstrom_exponent
            ssa = constituent.single_scattering_albedo
            chi = constituent.phase_moments
        extinction += tau
        scattering += ssa * tau
        weighted += (ssa * tau)[..., None] * chi
    with np.errstate(invalid="ignore", divide="ignore"):
        albedo = np.where(extinction > 0, scattering / extinction, 0.0)
        moments = np.where(scattering[..., None] > 0, weighted / scattering[..., None], 0.0)
    # A layer that scatters nothing still needs chi_0 = 1; its phase function is irrelevant.
    moments[..., 0] = 1.0
    albedo = np.clip(albedo, 0.0, 1.0)  # round-off only: each constituent is within [0, 1]
    if not scenario.spectral:
        return extinction[0], albedo[0], moments[0]
    return extinction, albedo, moments


def _read_profile(scenario: Scenario) -> xr.Dataset:
    """Read the atmosphere from a netCDF profile file named in ``[atmosphere] profile``."""
    import lamina

    spec = scenario.profile
    assert spec is not None
    file = spec["file"]
    label = f"{scenario.path}: [atmosphere] profile"
    try:
        source = xr.open_dataset(file)
    except (OSError, ValueError) as error:
        raise ScenarioError(f"{label}.file: cannot read {file} as netCDF ({error})") from None
    with source:
        arrays: dict[str, xr.DataArray | None] = {}
        for name in ("optical_depth", "single_scattering_albedo", "phase_moments",
                     "temperature", "pressure", "altitude"):
            variable = spec.get(name)
            if variable is None:
                arrays[name] = None
                continue
            if variable not in source.variables:
                available = ", ".join(map(str, source.variables)) or "nothing"
                raise ScenarioError(
                    f"{label}.{name}: variable {variable!r} not found in {file} "
                    f"(it has: {available})")
            array = source[variable].load()
            renames = {old: new for new, old in spec["dimensions"].items()
                       if old in array.dims}
            arrays[name] = array.rename(renames) if renames else array
    if arrays["phase_moments"] is None:
        n_layers = arrays["optical_depth"].sizes.get("layer")
        if n_layers is None:
            raise ScenarioError(f"{label}.optical_depth: variable {spec['optical_depth']!r} "
                                f"has no 'layer' dim (dims: {arrays['optical_depth'].dims}); "
                                "rename it with `dimensions = {layer = \"...\"}`")
        chi = np.broadcast_to(spec["phase"], (n_layers, spec["phase"].size))
        arrays["phase_moments"] = xr.DataArray(chi, dims=["layer", "moment"])
    for name in ("optical_depth", "single_scattering_albedo", "phase_moments", "temperature",
                 "pressure", "altitude"):
        array = arrays[name]
        inline = (getattr(scenario, name) if name in ("temperature", "pressure", "altitude")
                  else None)
        if array is None and inline is not None:  # given in [atmosphere] itself
            arrays[name] = xr.DataArray(inline, dims=["level"])
        elif array is not None:
            # keep the file's coordinates for extra dims only; lamina numbers layers itself
            arrays[name] = array.drop_vars(
                [c for c in array.coords if c in ("layer", "level", "moment")])
    try:
        return lamina.make_atmosphere(
            arrays["optical_depth"], arrays["single_scattering_albedo"],
            arrays["phase_moments"], temperature=arrays["temperature"],
            pressure=arrays["pressure"], altitude=arrays["altitude"])
    except ValueError as error:
        raise ScenarioError(f"{label}: {file}: {error}") from None


# --------------------------------------------------------------------------------------------
# Parsing
# --------------------------------------------------------------------------------------------


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


def _parse_constituent(table: _Table, n_layers: int | None, spectral: bool,
                       n_moments: int) -> Constituent:
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
        return Constituent(
            name=name, optical_depth=tau,
            mie={"median_radius": float(mie.numbers(
                     "median_radius", what="a radius in micrometres", low=0, low_open=True,
                     vector=False)),
                 "geometric_standard_deviation": float(mie.numbers(
                     "geometric_standard_deviation", what="a geometric standard deviation",
                     low=1.0, low_open=True, vector=False)),
                 "refractive_index": complex(index[0], index[1])})
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


def _parse_spectrum(root: _Table) -> tuple[np.ndarray, float] | None:
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
    values = table.numbers(key, default, vector=n_wavelengths is not None,
                           length=n_wavelengths, length_of=" (one per wavelength)", **kwargs)
    return float(values) if np.ndim(values) == 0 else values


def _parse(file: Path, data: Mapping[str, Any]) -> Scenario:
    root = _Table(file, "[top level]", data)
    root.check_keys(["title", "description", "atmosphere", "spectrum", "sun", "view",
                     "surface", "thermal", "solver", "output"])
    scenario: dict[str, Any] = {"path": file, "title": root.string("title", ""),
                                "description": root.string("description", "")}
    spectrum = _parse_spectrum(root)
    n_wavelengths = None
    if spectrum is not None:
        scenario["wavelength"], scenario["reference_wavelength"] = spectrum
        n_wavelengths = spectrum[0].size

    # [solver] first: the number of phase moments depends on the streams
    solver = (_Table(file, "[solver]", root.sub("solver").data) if root.has("solver")
              else _Table(file, "[solver]", {}))
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

    if not root.has("atmosphere"):
        raise ScenarioError(f"{file}: missing required section [atmosphere]")
    _parse_atmosphere(root, scenario, spectrum is not None)

    if root.has("sun"):
        sun = _Table(file, "[sun]", root.sub("sun").data)
        sun.check_keys(["zenith", "irradiance"])
        zenith = sun.numbers("zenith", what="degrees", low=0.0, high=90.0, high_open=True)
        scenario["sun_zenith"] = float(zenith) if zenith.ndim == 0 else zenith
        scenario["sun_irradiance"] = _spectral_or_scalar(
            sun, "irradiance", np.asarray(1.0), n_wavelengths, what="an irradiance", low=0.0)
    if root.has("view"):
        view = _Table(file, "[view]", root.sub("view").data)
        view.check_keys(["zenith", "azimuth"])
        scenario["view_zenith"] = np.atleast_1d(view.numbers(
            "zenith", what="degrees", low=0.0, high=90.0))
        scenario["view_azimuth"] = np.atleast_1d(view.numbers(
            "azimuth", np.asarray([0.0]), what="degrees", low=0.0, high=360.0))

    surface = (_Table(file, "[surface]", root.sub("surface").data) if root.has("surface")
               else _Table(file, "[surface]", {}))
    surface.check_keys(["albedo", "temperature"])
    scenario["surface_albedo"] = _spectral_or_scalar(
        surface, "albedo", np.asarray(0.0), n_wavelengths, what="an albedo", low=0.0, high=1.0)
    if surface.has("temperature"):
        scenario["surface_temperature"] = float(surface.numbers(
            "temperature", what="a temperature in K", low=0.0, low_open=True, vector=False,
            quantity="temperature"))

    if root.has("thermal"):
        thermal = _Table(file, "[thermal]", root.sub("thermal").data)
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
        if spectrum is not None:
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
    if not root.has("sun"):
        scenario["sun_irradiance"] = 0.0

    if root.has("output"):
        output = _Table(file, "[output]", root.sub("output").data)
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
    return Scenario(**scenario)


def load_scenario(path: str | Path) -> Scenario:
    """Read and validate a scenario file.

    Parameters
    ----------
    path : str or Path
        A TOML scenario file (the format is described in :mod:`lamina.scenario`).

    Returns
    -------
    Scenario
        The validated scenario; ``build_atmosphere()`` and ``solve_kwargs()`` give the
        inputs of :func:`lamina.solve`.

    Raises
    ------
    ScenarioError
        When the file is missing, is not valid TOML (the message gives line and column) or
        does not describe a valid run (the message gives the key path and what was expected).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (folder / "sky.toml").write_text('''
    ... [atmosphere]
    ... optical_depth = [0.1, 2.0]
    ... single_scattering_albedo = [1.0, 0.99]
    ... phase = {kind = "isotropic"}
    ... [sun]
    ... zenith = 30
    ... ''')
    >>> scenario = load_scenario(folder / "sky.toml")
    >>> scenario.solve_kwargs()["sun_zenith"]
    30.0
    """
    file = Path(path)
    try:
        text = file.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ScenarioError(f"{file}: no such scenario file") from None
    except (OSError, UnicodeDecodeError) as error:
        raise ScenarioError(f"{file}: cannot read the scenario file ({error})") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        where = ""
        line, column = getattr(error, "lineno", None), getattr(error, "colno", None)
        message = getattr(error, "msg", str(error))
        if line is not None and "line" not in message:
            where = f" (at line {line}, column {column})"
        raise ScenarioError(f"{file}: TOML syntax error: {message}{where}") from None
    return _parse(file, data)
