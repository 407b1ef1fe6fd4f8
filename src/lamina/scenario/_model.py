"""The validated scenario and how it builds the inputs of :func:`lamina.solve`.

:class:`Scenario` holds what a file says, in lamina's units; :meth:`Scenario.build_atmosphere`
mixes its constituents (or reads its netCDF profile) into the input Dataset and
:meth:`Scenario.solve_kwargs` gives the keyword arguments of the solver.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import numpy as np
import xarray as xr

from lamina.scenario._spectral import _mie_optics
from lamina.scenario._tables import ScenarioError


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
    #: None: no beam (a thermal run, or one lit only by the top's diffuse radiance)
    sun_zenith: float | np.ndarray | None = None
    sun_irradiance: float | np.ndarray | None = None
    #: labels the outputs (e.g. "W m-2 nm-1"); None: outputs relative to the irradiance
    irradiance_units: str | None = None
    view_zenith: np.ndarray | None = None
    view_azimuth: np.ndarray | None = None
    surface_albedo: float | np.ndarray = 0.0
    #: a bidirectional surface: the lamina.surface function's name and its arguments
    #: (numbers or one per wavelength); "lambertian" uses surface_albedo
    surface_kind: str = "lambertian"
    surface_parameters: Mapping[str, Any] = field(default_factory=dict)
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

    def _spectral_array(self, values: float | np.ndarray, name: str, units: str | None,
                        long_name: str) -> float | xr.DataArray:
        attrs = {"long_name": long_name} if units is None else {"units": units,
                                                                "long_name": long_name}
        if np.ndim(values) == 0:
            return float(values) if units is None else xr.DataArray(float(values),
                                                                    attrs=attrs)
        return xr.DataArray(np.asarray(values, dtype=float), dims=["wavelength"],
                            coords={"wavelength": self._wavelength_coord()},
                            name=name, attrs=attrs)

    def _wavelength_coord(self) -> xr.Variable:
        return xr.Variable("wavelength", np.asarray(self.wavelength, dtype=float),
                           attrs={"units": "um", "long_name": "wavelength",
                                  "standard_name": "radiation_wavelength"})

    def build_atmosphere(self, chunk_size: int | None = None) -> xr.Dataset:
        """Build the input Dataset with :func:`lamina.make_atmosphere`.

        Parameters
        ----------
        chunk_size : int, optional
            Build a spectral atmosphere lazily, as dask arrays of this many wavelengths per
            chunk, each made only when it is computed (memory bounded by the chunk, not the
            spectrum). Default: in memory. A profile file is always read into memory.

        Returns
        -------
        xarray.Dataset
            ``optical_depth``, ``single_scattering_albedo``, ``phase_moments`` (and the level
            profiles), with a ``wavelength`` dim when the scenario has a ``[spectrum]``.
        """
        import lamina

        if chunk_size is not None and self.spectral and self.profile is None:
            return _lazy_atmosphere(self, int(chunk_size))
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
        if self.sun_zenith is not None:
            kwargs["sun_zenith"] = (float(self.sun_zenith) if np.ndim(self.sun_zenith) == 0
                                    else np.asarray(self.sun_zenith, dtype=float))
            kwargs["sun_irradiance"] = self._spectral_array(
                1.0 if self.sun_irradiance is None else self.sun_irradiance,
                "sun_irradiance", self.irradiance_units,
                "stellar irradiance on a plane normal to the beam")
        if self.surface_kind == "lambertian":
            kwargs["surface_albedo"] = self._spectral_array(
                self.surface_albedo, "surface_albedo", "1", "Lambertian surface albedo")
        else:
            kwargs["surface"] = self.build_surface()
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

    def build_surface(self) -> Any:
        """The scenario's bidirectional surface (``[surface] kind``), a lamina.surface.

        Per-wavelength parameters become DataArrays along the wavelength dim; the
        ``[[surface.component]]`` tables of a weighted sum become its terms.
        """
        import lamina.surface

        try:
            if self.surface_kind != "weighted_sum":
                return self._surface_of(self.surface_kind, self.surface_parameters)
            return lamina.surface.weighted_sum(
                (self._spectral_array(part["weight"], "weight", None, "weight"),
                 self._surface_of(part["kind"], part["parameters"]))
                for part in self.surface_parameters["components"])
        except ValueError as error:
            raise ValueError(f"{self.path.name}: [surface] {error}") from None

    def _surface_of(self, kind: str, parameters: Mapping[str, Any]) -> Any:
        import lamina.surface

        arguments = {}
        for key, value in parameters.items():
            if isinstance(value, bool | str):
                arguments[key] = value
            else:
                arguments[key] = self._spectral_array(value, key, None, key.replace("_", " "))
        return getattr(lamina.surface, kind)(**arguments)

    def attributes(self) -> dict[str, str]:
        """Global attributes describing the scenario, for the output file."""
        attrs = {"scenario_file": self.path.name}
        if self.title:
            attrs["title"] = self.title
        if self.description:
            attrs["comment"] = self.description
        return attrs



def _arrays(scenario: Scenario) -> dict[str, np.ndarray]:
    atmosphere = scenario.build_atmosphere()
    return {str(name): variable.values for name, variable in atmosphere.data_vars.items()}


def _lazy_atmosphere(scenario: Scenario, step: int) -> xr.Dataset:
    """The spectral atmosphere as dask arrays, one block of ``step`` wavelengths each."""
    import dask
    import dask.array

    wavelength = np.asarray(scenario.wavelength, dtype=float)
    first = replace(scenario, wavelength=wavelength[:1]).build_atmosphere()
    parts = [replace(scenario, wavelength=wavelength[start:start + step])
             for start in range(0, wavelength.size, step)]
    pieces = [dask.delayed(_arrays, pure=True)(part) for part in parts]
    variables = {}
    for name, variable in first.data_vars.items():
        if "wavelength" not in variable.dims:
            variables[name] = variable.variable
            continue
        axis = variable.dims.index("wavelength")
        blocks = []
        for part, piece in zip(parts, pieces, strict=True):
            shape = list(variable.shape)
            shape[axis] = part.wavelength.size
            blocks.append(dask.array.from_delayed(piece[name], tuple(shape), variable.dtype))
        variables[name] = xr.Variable(variable.dims, dask.array.concatenate(blocks, axis=axis),
                                      variable.attrs)
    coords = {name: coordinate.variable for name, coordinate in first.coords.items()
              if name != "wavelength"}
    coords["wavelength"] = scenario._wavelength_coord()
    return xr.Dataset(variables, coords, first.attrs)


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
        scattering_part = ssa * tau
        scattering += scattering_part
        _add_weighted_moments(weighted, scattering_part, chi)
    with np.errstate(invalid="ignore", divide="ignore"):
        albedo = np.where(extinction > 0, scattering / extinction, 0.0)
        # in place: the moments are the largest array of a spectral run
        moments = np.divide(weighted, scattering[..., None], out=weighted,
                            where=scattering[..., None] > 0)
        moments[~(scattering > 0)] = 0.0
    # A layer that scatters nothing still needs chi_0 = 1; its phase function is irrelevant.
    moments[..., 0] = 1.0
    albedo = np.clip(albedo, 0.0, 1.0)  # round-off only: each constituent is within [0, 1]
    if not scenario.spectral:
        return extinction[0], albedo[0], moments[0]
    return extinction, albedo, moments


#: Elements of the moments mixed at a time (bounds the temporaries of a long spectrum).
_MIX_SLAB = 1 << 22


def _add_weighted_moments(weighted: np.ndarray, scattering: np.ndarray,
                          chi: np.ndarray) -> None:
    """weighted += scattering[..., None] * chi, a slab of wavelengths at a time (in place).

    ``weighted`` is (wavelength, layer, moment), ``scattering`` (wavelength, layer); ``chi``
    has a wavelength axis when it has three.
    """
    step = max(1, _MIX_SLAB // max(1, weighted[0].size))
    spectral = np.ndim(chi) == 3
    for start in range(0, weighted.shape[0], step):
        rows = slice(start, start + step)
        weighted[rows] += scattering[rows, :, None] * (chi[rows] if spectral else chi)


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

