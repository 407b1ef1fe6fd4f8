"""Describe step: the blocks' arrays as the output Dataset.

Names and coordinates (the private sun and position dims become ``sun_zenith`` and
``level``, or are dropped for a single sun), the derived outputs (total and net flux,
actinic flux, flux divergence and heating rate), and the units, long names, CF standard
names and solver settings of every variable (CF-1.10). A new output (a Stokes component, a
derivative) gets its name, dims and description here.
"""

from __future__ import annotations

import datetime as _datetime

import numpy as np
import xarray as xr

from lamina._cf import cf_encode
from lamina._solver.common import (
    POSITION_DIM,
    SECONDS_PER_DAY,
    SUN_DIM,
    BlockSettings,
    Options,
    ThermalSources,
)
from lamina._units import OutputUnits, output_units


def assemble(
    results: tuple[xr.DataArray, ...],
    names: list[str],
    atmosphere: xr.Dataset,
    options: Options,
    sources: ThermalSources,
    settings: BlockSettings,
) -> xr.Dataset:
    """The output Dataset from the blocks' outputs (named in the plan's order)."""
    out = _labelled(results, names, atmosphere, options)
    out = _derived(out, atmosphere, options)
    _reflectance(out, options)
    thermal = None if sources.units is None else sources.units.replace(" sr-1", "")
    units = output_units(options.beam, options.irradiance_units, thermal,
                         options.top_radiance_units)
    _describe(out, units, settings, options.beam)
    return cf_encode(out)


def _labelled(results, names, atmosphere: xr.Dataset, options: Options) -> xr.Dataset:
    """The blocks' outputs with the public dims and coordinates."""
    out = xr.Dataset(dict(zip(names, results, strict=True)))
    out = out.rename({POSITION_DIM: "level"})
    depth = out["cumulative_optical_depth"]
    out = out.drop_vars("cumulative_optical_depth").assign_coords(
        level=(options.positions.levels if not options.on_levels
               else np.arange(atmosphere.sizes["layer"] + 1)),
        cumulative_optical_depth=depth,
    )
    views = options.views
    if views.per_pixel:
        # one view per pixel: the angles are coordinates along the pixels' dims
        view_zenith, view_azimuth = (array.drop_vars(list(array.coords))
                                     for array in options.pixel_views)
        out = out.assign_coords(direction=["up", "down"], view_zenith=view_zenith,
                                view_azimuth=view_azimuth)
    elif views.wanted:
        out = out.assign_coords(direction=["up", "down"], view_zenith=views.zenith,
                                view_azimuth=views.azimuth)
    zenith = options.sun_zenith
    if not options.beam:
        out = out.isel({SUN_DIM: 0}, drop=True)
    elif options.sun_list:
        out = out.rename({SUN_DIM: "sun_zenith"})
        if "sun_zenith" not in out.coords and zenith.ndim == 1:
            out = out.assign_coords(sun_zenith=zenith.values)
    else:
        out = out.isel({SUN_DIM: 0}, drop=True)
        if zenith.ndim == 1:
            out = out.assign_coords(sun_zenith=float(zenith.values[0]))
    for name, coordinate in atmosphere.coords.items():
        if name in out.coords and name not in ("level", "layer") and coordinate.attrs:
            out[name].attrs = dict(coordinate.attrs)
    return out


def _derived(out: xr.Dataset, atmosphere: xr.Dataset, options: Options) -> xr.Dataset:
    """Total, net and actinic flux; on every level also flux divergence and heating rate."""
    on_levels = options.on_levels
    out["flux_down"] = out["flux_down_diffuse"] + out["flux_down_direct"]
    out["flux_net"] = out["flux_down"] - out["flux_up"]
    out["actinic_flux"] = 4.0 * np.pi * out["mean_intensity"]
    for name in ("pressure", "altitude"):
        if name in atmosphere and on_levels:
            # a profile may vary along the extra dims (one per column)
            out = out.assign_coords({name: atmosphere[name].drop_vars("level")})
    if on_levels:
        net = out["flux_net"]
        top = net.isel(level=slice(None, -1)).drop_vars(
            ["level", "cumulative_optical_depth", "pressure", "altitude"], errors="ignore")
        bottom = net.isel(level=slice(1, None)).drop_vars(
            ["level", "cumulative_optical_depth", "pressure", "altitude"], errors="ignore")
        divergence = (top - bottom).rename({"level": "layer"})
        out["flux_divergence"] = divergence.assign_coords(
            layer=np.arange(atmosphere.sizes["layer"]))
        if "pressure" in atmosphere:
            pressure = atmosphere["pressure"].drop_vars("level")
            thickness = (pressure.isel(level=slice(1, None))
                         - pressure.isel(level=slice(None, -1))).rename({"level": "layer"})
            out["heating_rate"] = (options.gravity / options.heat_capacity
                                   * out["flux_divergence"] / thickness * SECONDS_PER_DAY)
    return out


def _reflectance(out: xr.Dataset, options: Options) -> None:
    """``reflectance`` = pi I / (mu0 S) of the upward radiance at the top (in place).

    Only with a beam, radiances and the top among the output positions; NaN in a column
    whose beam has S = 0 (no beam there, so no reflectance factor).
    """
    top = np.flatnonzero(options.positions.levels == 0.0)
    if not (options.beam and options.views.wanted and top.size):
        return
    upward = out["radiance"].isel(level=int(top[0])).sel(direction="up")
    beam = np.cos(np.radians(options.sun_zenith)) * options.sun_irradiance
    if options.sun_list:
        beam = beam.rename({SUN_DIM: "sun_zenith"})
    else:
        beam = beam.isel({SUN_DIM: 0}, drop=True)
    beam = beam.drop_vars([name for name in beam.coords if name in upward.coords
                           or name == "sun_zenith"])
    reflectance = np.pi * upward / beam.where(beam > 0.0)
    out["reflectance"] = reflectance.drop_vars(
        ["level", "direction", "cumulative_optical_depth", "pressure", "altitude"],
        errors="ignore")


def _variables(units: OutputUnits) -> dict[str, tuple[str, str, str | None]]:
    """Name -> (long name, units, CF standard name or None) of every output variable.

    The CF standard-name table has no name for a flux or a radiance that is neither spectral
    nor split into short and long wave, so those carry none; the heating rate's name holds
    only when its units are a temperature tendency.
    """
    flux, radiance = units.flux, units.radiance
    heating_name = ("tendency_of_air_temperature_due_to_radiative_heating"
                    if units.heating_rate == "K day-1" else None)
    return {
        "flux_up": ("upward diffuse flux on a horizontal plane", flux, None),
        "flux_down_diffuse": ("downward diffuse flux on a horizontal plane", flux, None),
        "flux_down_direct": ("downward flux of the attenuated direct beam", flux, None),
        "flux_down": ("total downward flux (diffuse + direct)", flux, None),
        "flux_net": ("net downward flux (down minus up)", flux, None),
        "mean_intensity": ("mean intensity J, the radiance averaged over all directions "
                           "including the direct beam", radiance, None),
        "actinic_flux": ("actinic flux 4 pi J", flux, None),
        "radiance": ("radiance at the view angles", radiance, None),
        "reflectance": ("bidirectional reflectance factor pi I / (mu0 S) of the upward "
                        "radiance at the top (NaN where S = 0; with stokes > 1 per Stokes "
                        "component, pi Q / (mu0 S) the polarized reflectance and so on)", "1",
                        None),
        "flux_divergence": ("radiative energy absorbed per layer: net downward flux at its "
                            "top minus at its bottom", flux, None),
        "heating_rate": ("radiative heating rate (g / c_p) (F_net,top - F_net,bottom) / "
                         "(p_bottom - p_top)", units.heating_rate, heating_name),
        "fourier_terms": ("number of azimuthal Fourier terms summed", "1", None),
    }


#: Attributes of the coordinates the output may carry, by the coordinate whose presence
#: brings them (the view directions come together).
_COORDINATES = {
    "view_zenith": {
        "view_zenith": {"long_name": "zenith angle of the propagation direction from the "
                                     "vertical", "units": "degree"},
        "view_azimuth": {"long_name": "azimuth of propagation from that of the incident "
                                      "beam (0 = forward side)", "units": "degree"},
        "direction": {"long_name": "up: propagating upward; down: downward"},
    },
    "sun_zenith": {"sun_zenith": {"long_name": "solar zenith angle", "units": "degree",
                                  "standard_name": "solar_zenith_angle"}},
    "pressure": {"pressure": {"long_name": "pressure at the level", "units": "Pa",
                              "standard_name": "air_pressure"}},
    "altitude": {"altitude": {"long_name": "altitude of the level", "units": "m",
                              "standard_name": "altitude", "positive": "up"}},
}


def _describe(out: xr.Dataset, units: OutputUnits, settings: BlockSettings,
              beam: bool) -> None:
    """Units, long names and solver settings on the output Dataset."""
    for name, (long_name, label, standard) in _variables(units).items():
        if name in out:
            out[name].attrs = {"long_name": long_name, "units": label}
            if standard:
                out[name].attrs["standard_name"] = standard
            if units.note and name not in ("fourier_terms", "reflectance"):
                out[name].attrs["comment"] = units.note
    out["cumulative_optical_depth"].attrs = {
        "long_name": "optical depth from the top of the atmosphere (unscaled)", "units": "1"}
    out["level"].attrs = {"long_name": "level number from the top (fractional: position "
                                       "inside a layer, in optical depth)", "units": "1"}
    if "layer" in out.coords:
        out["layer"].attrs = {"long_name": "layer number from the top", "units": "1"}
    for trigger, coordinates in _COORDINATES.items():
        if trigger in out.coords:
            for name, attributes in coordinates.items():
                out[name].attrs = dict(attributes)
    from lamina import __version__

    out.attrs = {
        "title": "lamina discrete-ordinates radiative transfer",
        "Conventions": "CF-1.10",
        "lamina_version": __version__,
        "history": f"{_datetime.datetime.now(_datetime.UTC).isoformat(timespec='seconds')} "
                   "computed by lamina.solve",
        "streams": settings.streams,
        "delta_m": int(settings.delta_m),
        "single_scattering_correction": int(settings.single_scattering_correction),
        "aureole_correction": int(settings.aureole_correction),
        "fourier_tolerance": settings.fourier_tolerance,
        "max_fourier_terms": settings.max_fourier_terms,
        "beam_source": int(beam),
        "thermal_source": int(settings.thermal),
        "surface": settings.surface or "lambertian (surface_albedo)",
        "azimuth_convention": "view_azimuth is measured from the azimuth of the beam's "
                              "propagation: 0 forward-scattering side, 180 backscattering",
    }
