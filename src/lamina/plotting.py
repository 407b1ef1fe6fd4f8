"""Figures of a lamina result: flux and mean-intensity profiles, radiances, spectra, heating.

Every function takes the Dataset returned by :func:`lamina.solve` (or read back from its
netCDF file), returns a :class:`matplotlib.figure.Figure` and, given ``path``, saves it as PNG.
Figures are built on matplotlib's object interface with the Agg renderer, so nothing needs a
screen and no global pyplot state is touched.

Layout conventions: the vertical axis of a profile runs with the atmosphere, top at the top
(pressure on a log scale when the result has level pressures, else altitude, else cumulative
optical depth); when the result has a spectral or sun-angle dim a few of its values are drawn
as a family of lines from one colour map; further dims are fixed at their first value and
named in the title.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from pathlib import Path

import numpy as np
import xarray as xr
from matplotlib import colormaps
from matplotlib.axes import Axes
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.ticker import FuncFormatter, LogLocator, NullFormatter

__all__ = [
    "albedo_spectrum",
    "flux_profiles",
    "heating_rate_profile",
    "mean_intensity_profile",
    "phase_curves",
    "plot_result",
    "radiance_by_view_zenith",
    "spectrum",
]

_CORE_DIMS = {"level", "layer", "direction", "view_zenith", "view_azimuth", "moment"}
_SERIES_PREFERENCE = ("wavelength", "wavenumber", "frequency", "sun_zenith", "column")
_SPECTRAL_DIMS = ("wavelength", "wavenumber", "frequency")
_COLOURMAP = "plasma"
_MAX_LINES = 6


def _figure(ncols: int, width: float = 3.4, height: float = 4.6) -> tuple[Figure, list[Axes]]:
    figure = Figure(figsize=(0.6 + width * ncols, height), layout="constrained")
    FigureCanvasAgg(figure)
    axes = figure.subplots(1, ncols, sharey=True, squeeze=False)[0]
    for ax in axes:
        ax.grid(True, color="0.88", linewidth=0.6)
        ax.set_axisbelow(True)
        for side in ("top", "right"):
            ax.spines[side].set_visible(False)
    return figure, list(axes)


def _save(figure: Figure, path: str | os.PathLike[str] | None) -> Figure:
    if path is not None:
        figure.savefig(Path(path), dpi=110, format="png")
    return figure


#: How units are written in figure texts. Every spelling of the micrometre becomes "µm"
#: (one spelling on every axis, legend and title).
_UNIT_TEXT = {"degree": "°", "degrees": "°", "nm": " nm", "cm-1": " cm⁻¹", "1": ""}
_UNIT_TEXT.update(dict.fromkeys(
    ("um", "µm", "μm", "micrometre", "micrometres", "micrometer", "micrometers", "micron",
     "microns", "1e-6 m"), " µm"))


def _format_value(result: xr.Dataset | xr.DataArray, dim: str, value: object) -> str:
    """``wavelength 0.55 µm``, ``sun zenith 30°``: a dim value with its units."""
    units = result[dim].attrs.get("units", "") if dim in result.coords else ""
    suffix = _UNIT_TEXT.get(units, f" {units}" if units else "")
    number = f"{value:.4g}" if isinstance(value, float | np.floating) else f"{value}"
    return f"{dim.replace('_', ' ')} {number}{suffix}"


def _units(array: xr.DataArray) -> str:
    units = str(array.attrs.get("units", ""))
    units = _UNIT_TEXT.get(units, units).strip()
    return f" [{units}]" if units not in ("", "1") else ""


def _split_dims(array: xr.DataArray, keep: Sequence[str] = ()) -> tuple[str | None, list[str]]:
    """The dim drawn as a family of lines, and the other extra dims (fixed at index 0)."""
    extra = [str(d) for d in array.dims if d not in _CORE_DIMS and d not in keep]
    series = next((d for d in _SERIES_PREFERENCE if d in extra), extra[0] if extra else None)
    return series, [d for d in extra if d != series]


def _fix_others(array: xr.DataArray, others: Sequence[str]) -> tuple[xr.DataArray, str]:
    note = ", ".join(_format_value(array, d, array[d].values[0] if d in array.coords else 0)
                     for d in others)
    return array.isel({d: 0 for d in others}), note


def _series_indices(size: int) -> np.ndarray:
    return np.unique(np.linspace(0, size - 1, min(size, _MAX_LINES)).round().astype(int))


def _vertical(result: xr.Dataset, vertical: str) -> str:
    options = ("pressure", "altitude", "cumulative_optical_depth")
    if vertical == "auto":
        return next(name for name in options if name in result.coords or name == options[-1])
    if vertical not in options:
        raise ValueError(f"vertical must be 'auto' or one of {', '.join(options)}; "
                         f"got {vertical!r}")
    if vertical not in result.coords:
        raise ValueError(f"vertical={vertical!r} but the result has no {vertical} coordinate")
    return vertical


def _set_vertical_axis(ax: Axes, vertical: str) -> None:
    if vertical == "pressure":
        ax.set_yscale("log")
        # plain numbers at 1-2-5 steps read better than powers of ten for pressures
        ax.yaxis.set_major_locator(LogLocator(subs=(1.0, 2.0, 5.0)))
        ax.yaxis.set_major_formatter(FuncFormatter(lambda value, _: f"{value:g}"))
        ax.yaxis.set_minor_formatter(NullFormatter())
        ax.set_ylabel("pressure [hPa]")
        ax.yaxis.set_inverted(True)
    elif vertical == "altitude":
        ax.set_ylabel("altitude [km]")
    else:
        ax.set_ylabel("cumulative optical depth")
        ax.yaxis.set_inverted(True)


def _vertical_values(result: xr.Dataset, vertical: str, selection: dict[str, int],
                     dim: str = "level") -> np.ndarray:
    if vertical in ("pressure", "altitude"):
        values = result[vertical]
        if dim == "layer" and "level" in values.dims:
            # layer mid-points; geometric mean for pressure, which spans decades
            upper, lower = values.values[:-1], values.values[1:]
            values = xr.DataArray(np.sqrt(np.maximum(upper, 1e-30) * lower)
                                  if vertical == "pressure" else 0.5 * (upper + lower),
                                  dims=["layer"])
        scale = 0.01 if vertical == "pressure" else 1e-3  # Pa -> hPa, m -> km
        return np.asarray(values, dtype=float) * scale
    depth = result["cumulative_optical_depth"]
    depth = depth.isel({d: i for d, i in selection.items() if d in depth.dims})
    depth = depth.isel({d: 0 for d in depth.dims if d != "level"})
    values = np.asarray(depth, dtype=float)
    if dim == "layer":
        values = 0.5 * (values[:-1] + values[1:])
    return values


def _profile_panels(result: xr.Dataset, names: Sequence[str], titles: Sequence[str],
                    quantity: Sequence[str], vertical: str, dim: str = "level",
                    path: str | os.PathLike[str] | None = None) -> Figure:
    axis_names = dict(zip(names, quantity, strict=True))
    present = [(n, t) for n, t in zip(names, titles, strict=True) if n in result.data_vars]
    if not present:
        raise ValueError(f"the result has none of {', '.join(names)}")
    # an identically zero panel (the direct beam of a thermal run) says nothing: leave it out
    drawn = [(n, t) for n, t in present if np.any(np.asarray(result[n]) != 0)]
    present = drawn or present[:1]
    vertical = _vertical(result, vertical)
    figure, axes = _figure(len(present))
    first = result[present[0][0]]
    series, others = _split_dims(first)
    note = ""
    indices = _series_indices(first.sizes[series]) if series is not None else np.zeros(0, int)
    colours = colormaps[_COLOURMAP](np.linspace(0.05, 0.85, indices.size))
    for ax, (name, title) in zip(axes, present, strict=True):
        array, note = _fix_others(result[name], [d for d in others if d in result[name].dims])
        fixed = {d: 0 for d in others}
        if series is None or series not in array.dims:
            y = _vertical_values(result, vertical, fixed, dim)
            ax.plot(np.asarray(array.transpose(dim, ...)).reshape(array.sizes[dim], -1)[:, 0],
                    y, color="#1b4f72", marker="o", markersize=2.5, linewidth=1.4)
        else:
            for colour, index in zip(colours, indices, strict=True):
                line = array.isel({series: index})
                y = _vertical_values(result, vertical, {**fixed, series: int(index)}, dim)
                value = result[series].values[index] if series in result.coords else index
                ax.plot(np.asarray(line.transpose(dim, ...)).reshape(line.sizes[dim], -1)[:, 0],
                        y, color=colour, linewidth=1.4, marker="o", markersize=2,
                        label=_format_value(result, series, value))
        ax.set_title(title, fontsize=10, loc="left")
        ax.set_xlabel(f"{axis_names[name]}{_units(array)}", fontsize=9)
    _set_vertical_axis(axes[0], vertical)
    if series is not None:
        figure.legend(*axes[0].get_legend_handles_labels(), loc="outside right center",
                      fontsize=8, frameon=False)
    heading = str(result.attrs.get("title", ""))
    if note:
        heading = f"{heading} ({note})" if heading else note
    if heading:
        figure.suptitle(heading, fontsize=10)
    return _save(figure, path)


def flux_profiles(result: xr.Dataset, *, vertical: str = "auto",
                  path: str | os.PathLike[str] | None = None) -> Figure:
    """Upward, diffuse downward, direct downward and net flux against height.

    Parameters
    ----------
    result : xarray.Dataset
        Output of :func:`lamina.solve`.
    vertical : {"auto", "pressure", "altitude", "cumulative_optical_depth"}
        The vertical coordinate; "auto" takes pressure, else altitude, else optical depth.
    path : path-like, optional
        Save the figure there as PNG.

    Returns
    -------
    matplotlib.figure.Figure
    """
    return _profile_panels(
        result, ["flux_up", "flux_down_diffuse", "flux_down_direct", "flux_net"],
        ["upward", "downward, diffuse", "downward, direct beam", "net (down minus up)"],
        ["flux"] * 4, vertical, path=path)


def mean_intensity_profile(result: xr.Dataset, *, vertical: str = "auto",
                           path: str | os.PathLike[str] | None = None) -> Figure:
    """Mean intensity (and actinic flux when present) against height; see :func:`flux_profiles`."""
    return _profile_panels(result, ["mean_intensity", "actinic_flux"],
                           ["mean intensity J", "actinic flux 4πJ"],
                           ["mean intensity", "actinic flux"], vertical, path=path)


def heating_rate_profile(result: xr.Dataset, *, vertical: str = "auto",
                         path: str | os.PathLike[str] | None = None) -> Figure:
    """Heating rate (and flux divergence) of each layer against height."""
    figure = _profile_panels(result, ["heating_rate", "flux_divergence"],
                             ["heating rate of each layer", "energy absorbed in each layer"],
                             ["heating rate", "absorbed flux"], vertical, dim="layer",
                             path=None)
    for ax in figure.axes:
        ax.axvline(0.0, color="0.5", linewidth=0.8)
    return _save(figure, path)


def _radiance_conditions(result: xr.Dataset, radiance: xr.DataArray,
                          fixed: dict[str, int]) -> str:
    """The sun angle and spectral point a radiance figure shows, when not already a dim."""
    parts = []
    if "sun_zenith" not in fixed:
        if "sun_zenith" in radiance.coords and radiance["sun_zenith"].size == 1:
            parts.append(_format_value(result, "sun_zenith", radiance["sun_zenith"].item()))
        elif "sun_zenith" not in result.coords:
            parts.append("no solar beam")
    for dim in _SPECTRAL_DIMS:
        if dim not in fixed and dim in radiance.coords and radiance[dim].size == 1:
            parts.append(_format_value(result, dim, radiance[dim].item()))
    return ", ".join(parts)


def radiance_by_view_zenith(result: xr.Dataset, *, top_level: int = 0,
                            bottom_level: int = -1, azimuths: Sequence[float] | None = None,
                            path: str | os.PathLike[str] | None = None) -> Figure:
    """Radiance leaving the top (upward) and reaching the bottom (downward) against view zenith.

    Parameters
    ----------
    result : xarray.Dataset
        Output of :func:`lamina.solve` computed with view angles.
    top_level, bottom_level : int
        Index along ``level`` of the upward and of the downward panel (default: the top and
        the bottom output levels).
    azimuths : sequence of float, optional
        View azimuths to draw (default: up to four of those computed).
    path : path-like, optional
        Save the figure there as PNG.

    Returns
    -------
    matplotlib.figure.Figure
    """
    if "radiance" not in result.data_vars:
        raise ValueError("the result has no radiance; solve with view_zenith and view_azimuth")
    radiance = result["radiance"]
    series, others = _split_dims(radiance)
    # One spectral point or sun angle per figure: the middle one of the series dim.
    fixed = {d: 0 for d in others}
    if series is not None:
        fixed[series] = radiance.sizes[series] // 2
    note = ", ".join(_format_value(radiance, d, radiance[d].values[i]
                                   if d in radiance.coords else i) for d, i in fixed.items())
    radiance = radiance.isel(fixed)
    note = ", ".join(part for part in (_radiance_conditions(result, radiance, fixed), note)
                     if part)
    all_azimuths = np.asarray(radiance["view_azimuth"].values, dtype=float)
    if azimuths is None:
        chosen = all_azimuths[_series_indices(all_azimuths.size)[:4]]
    else:
        chosen = np.asarray(azimuths, dtype=float)
    figure, axes = _figure(2, width=4.2, height=3.8)
    styles = ["-", "--", "-.", ":"]
    colours = colormaps["viridis"](np.linspace(0.0, 0.8, max(chosen.size, 1)))
    panels = (("up", top_level, "upward, leaving level {}"),
              ("down", bottom_level, "downward, reaching level {}"))
    for ax, (direction, level, title) in zip(axes, panels, strict=True):
        level_value = radiance["level"].values[level]
        for number, azimuth in enumerate(chosen):
            line = radiance.sel(direction=direction).sel(
                view_azimuth=azimuth, method="nearest").isel(level=level)
            ax.plot(line["view_zenith"], line, styles[number % len(styles)],
                    color=colours[number], marker="o", markersize=3,
                    label=f"azimuth {azimuth:g}°")
        ax.set_title(title.format(f"{level_value:g}" if isinstance(
            level_value, float | np.floating) else level_value), fontsize=10, loc="left")
        ax.set_xlabel("view zenith [degrees]", fontsize=9)
        ax.set_xlim(0, 90)
        ax.set_xticks([0, 15, 30, 45, 60, 75, 90])
    axes[0].set_ylabel(f"radiance{_units(result['radiance'])}", fontsize=9)
    axes[0].legend(fontsize=8, frameon=False)
    heading = str(result.attrs.get("title", ""))
    heading = f"{heading} ({note})" if heading and note else heading or note
    if heading:
        figure.suptitle(heading, fontsize=10)
    return _save(figure, path)


def _spectral_dim(result: xr.Dataset) -> str | None:
    return next((d for d in _SPECTRAL_DIMS if d in result.dims), None)


def spectrum(result: xr.Dataset, *, path: str | os.PathLike[str] | None = None) -> Figure:
    """The budget of the incident flux against wavelength: reflected, absorbed, absorbed below.

    Three fractions of the downward flux at the top level F_down(top): reflected at the top,
    F_up(top) / F_down(top); absorbed in the atmosphere, the net flux lost between the top
    and the bottom level, (F_net(top) - F_net(bottom)) / F_down(top); absorbed at the surface,
    the net flux into it, F_net(bottom) / F_down(top) (F_net = down minus up). The three add
    up to 1 at every wavelength (to round-off). Without thermal emission this is the budget
    of the incident light; with emission the upward flux at the top includes emitted light
    and the absorbed parts are net gains. One line style per sun zenith (up to three).

    Parameters
    ----------
    result : xarray.Dataset
        Output of :func:`lamina.solve` with a spectral dim (``wavelength``, ``wavenumber`` or
        ``frequency``).
    path : path-like, optional
        Save the figure there as PNG.

    Returns
    -------
    matplotlib.figure.Figure
    """
    dim = _spectral_dim(result)
    if dim is None:
        raise ValueError("the result has no spectral dim (wavelength, wavenumber or frequency)")
    top = result.isel(level=0)
    bottom = result.isel(level=-1)
    incident = top["flux_down"] if "flux_down" in result else (
        top["flux_down_diffuse"] + top["flux_down_direct"])
    down_bottom = bottom["flux_down"] if "flux_down" in result else (
        bottom["flux_down_diffuse"] + bottom["flux_down_direct"])
    net_top = incident - top["flux_up"]
    net_bottom = down_bottom - bottom["flux_up"]
    with np.errstate(invalid="ignore", divide="ignore"):
        fractions = {
            "reflected at the top": top["flux_up"] / incident,
            "absorbed in the atmosphere": (net_top - net_bottom) / incident,
            "absorbed at the surface": net_bottom / incident,
        }
    figure, axes = _figure(1, width=6.0, height=4.0)
    ax = axes[0]
    colours = ["#b03a2e", "#1f618d", "#7d6608"]
    sample = fractions["reflected at the top"]
    series, others = _split_dims(sample, keep=(dim,))
    fixed = {d: 0 for d in others}
    styles = ["-", "--", ":"]
    count = min(sample.sizes[series], 3) if series is not None else 1
    x = np.asarray(result[dim].values, dtype=float)
    handles = []
    for (name, fraction), colour in zip(fractions.items(), colours, strict=True):
        fraction = fraction.isel(fixed)
        for number in range(count):
            line = fraction.isel({series: number}) if series is not None else fraction
            ax.plot(x, np.asarray(line.transpose(dim, ...)).reshape(x.size, -1)[:, 0],
                    styles[number], color=colour, linewidth=1.5)
        handles.append(Line2D([], [], color=colour, linewidth=1.5, label=name))
    if series is not None and count > 1:  # line styles tell the series values apart
        for number in range(count):
            value = result[series].values[number] if series in result.coords else number
            handles.append(Line2D([], [], linestyle=styles[number], color="0.3",
                                  label=_format_value(result, series, value)))
    ax.set_xlabel(f"{dim}{_units(result[dim])}", fontsize=9)
    ax.set_ylabel("fraction of the downward flux at the top (parts add up to 1)", fontsize=9)
    low, high = ax.get_ylim()
    ax.set_ylim(min(0.0, low), max(1.0, high))
    figure.legend(handles=handles, loc="outside right center", fontsize=8, frameon=False)
    heading = str(result.attrs.get("title", ""))
    if heading:
        figure.suptitle(heading, fontsize=10)
    return _save(figure, path)


def phase_curves(curve: xr.Dataset, *, path: str | os.PathLike[str] | None = None) -> Figure:
    """A planet's disk-integrated reflectance against phase angle, a few wavelengths.

    Parameters
    ----------
    curve : xarray.Dataset
        Output of :func:`lamina.planet.phase_curve` (``reflectance`` over ``phase_angle``);
        a spectral dim gives a family of lines, further dims are fixed at their first value.
    path : path-like, optional
        Save the figure there as PNG.

    Returns
    -------
    matplotlib.figure.Figure
    """
    reflectance = curve["reflectance"]
    series, others = _split_dims(reflectance, keep=("phase_angle",))
    reflectance, fixed = _fix_others(reflectance, others)
    figure, axes = _figure(1, width=5.6, height=4.0)
    ax = axes[0]
    angle = np.asarray(curve["phase_angle"].values, dtype=float)
    if series is None:
        ax.plot(angle, reflectance.values, color="#1f618d", linewidth=1.5)
    else:
        picks = _series_indices(reflectance.sizes[series])
        colours = colormaps[_COLOURMAP](np.linspace(0.0, 0.85, picks.size))
        for number, colour in zip(picks, colours, strict=True):
            value = curve[series].values[number] if series in curve.coords else number
            ax.plot(angle, reflectance.isel({series: number}).transpose("phase_angle").values,
                    color=colour, linewidth=1.5, label=_format_value(curve, series, value))
        ax.legend(fontsize=8, frameon=False)
    ax.set_xlabel("phase angle (°)", fontsize=9)
    ax.set_ylabel("reflectance (geometric albedo at phase 0)", fontsize=9)
    ax.set_xlim(0.0, 180.0)
    ax.set_ylim(bottom=0.0)
    heading = str(curve.attrs.get("planet", "")) or "disk-integrated reflected light"
    figure.suptitle(heading + (f" ({fixed})" if fixed else ""), fontsize=10)
    return _save(figure, path)


def albedo_spectrum(curve: xr.Dataset, *,
                    path: str | os.PathLike[str] | None = None) -> Figure:
    """A planet's geometric and spherical albedos against wavelength.

    Parameters
    ----------
    curve : xarray.Dataset
        Output of :func:`lamina.planet.phase_curve` over a spectral dim.
    path : path-like, optional
        Save the figure there as PNG.

    Returns
    -------
    matplotlib.figure.Figure
    """
    dim = _spectral_dim(curve)
    if dim is None:
        raise ValueError("the phase curve has no spectral dim (wavelength, wavenumber or "
                         "frequency)")
    figure, axes = _figure(1, width=5.6, height=4.0)
    ax = axes[0]
    x = np.asarray(curve[dim].values, dtype=float)
    for name, label, colour in (("geometric_albedo", "geometric albedo", "#b03a2e"),
                                ("spherical_albedo", "spherical albedo", "#1f618d")):
        values, _ = _fix_others(curve[name], [d for d in curve[name].dims if d != dim])
        ax.plot(x, values.transpose(dim).values, color=colour, linewidth=1.5, label=label)
    if "bond_albedo" in curve:
        ax.axhline(float(curve["bond_albedo"].values.ravel()[0]), color="0.4",
                   linestyle="--", linewidth=1.0, label="Bond albedo")
    ax.set_xlabel(f"{dim}{_units(curve[dim])}", fontsize=9)
    ax.set_ylabel("albedo", fontsize=9)
    ax.set_ylim(0.0, 1.0)
    ax.legend(fontsize=8, frameon=False)
    heading = str(curve.attrs.get("planet", "")) or "disk-integrated albedos"
    figure.suptitle(heading, fontsize=10)
    return _save(figure, path)


def plot_result(result: xr.Dataset, folder: str | os.PathLike[str],
                prefix: str = "") -> list[Path]:
    """Draw every figure that applies to ``result`` and save them as PNG files in ``folder``.

    Returns
    -------
    list of Path
        The files written: ``<prefix>flux_profiles.png``, ``<prefix>mean_intensity.png`` and,
        when the result allows, ``<prefix>radiance.png``, ``<prefix>spectrum.png``,
        ``<prefix>heating_rate.png``.
    """
    folder = Path(folder)
    if not folder.is_dir():
        raise ValueError(f"cannot write plots to {folder}: not an existing folder")
    written = []
    jobs = [("flux_profiles", flux_profiles, "flux_up" in result),
            ("mean_intensity", mean_intensity_profile, "mean_intensity" in result),
            ("radiance", radiance_by_view_zenith, "radiance" in result),
            ("spectrum", spectrum, _spectral_dim(result) is not None and "flux_up" in result),
            ("heating_rate", heating_rate_profile,
             "heating_rate" in result or "flux_divergence" in result)]
    for name, function, applies in jobs:
        if applies:
            path = folder / f"{prefix}{name}.png"
            function(result, path=path)
            written.append(path)
    return written
