"""The labelled front of the solver: options, broadcasting, dask, the output Dataset.

:func:`solve` checks everything, maps the atmosphere's extra dims (``wavelength``,
``column``, ...) through :func:`xarray.apply_ufunc` so that a dask-backed atmosphere gives a
lazy result, and hands each block of columns to the Cython kernel in one call. Delta-M
scaling (Wiscombe 1977) and the exact single-scattering correction of radiances (Nakajima
and Tanaka 1988) are applied here on whole arrays; the kernel sees scaled layers only.
"""

from __future__ import annotations

import datetime as _datetime
from collections.abc import Sequence
from typing import Any

import numpy as np
import xarray as xr

from lamina import _kernel, phase, planck
from lamina._checks import as_float_array, require_range
from lamina.atmosphere import check_atmosphere, check_moment_values
from lamina.quadrature import double_gauss

#: Cosine used for a view zenith of exactly 90 degrees (the limit mu -> 0 is taken there).
GRAZING_COSINE = 1e-9

#: Earth-air defaults for heating rates: standard gravity (CODATA / ISO 80000) and the
#: specific heat of dry air at constant pressure near 300 K (common practice).
EARTH_GRAVITY = 9.80665
DRY_AIR_HEAT_CAPACITY = 1004.0

SECONDS_PER_DAY = 86400.0

_SUN = "_sun"
_POSITION = "_position"


class SolverError(RuntimeError):
    """The kernel could not solve a column (a LAPACK failure or a non-finite result)."""


def _option_array(value: object, name: str) -> xr.DataArray:
    """A scalar or DataArray option as a DataArray (0-d for scalars)."""
    if isinstance(value, xr.DataArray):
        return value.astype(np.float64)
    array = as_float_array(value, name)
    if array.ndim != 0:
        raise ValueError(
            f"{name} must be a scalar or an xarray.DataArray along the atmosphere's extra "
            f"dims; got an array of shape {array.shape}"
        )
    return xr.DataArray(array)


def _check_option_values(array: xr.DataArray, name: str, **bounds: Any) -> None:
    if array.chunks is None:
        labels = ["sun angle" if dim == _SUN else str(dim) for dim in array.dims]
        require_range(np.asarray(array.values), name, labels=labels, **bounds)


def _sun_geometry(sun_zenith: object) -> tuple[xr.DataArray, bool]:
    """Sun zenith as a DataArray with the internal sun dim; True if the user gave a list."""
    if isinstance(sun_zenith, xr.DataArray):
        zenith = sun_zenith.astype(np.float64)
        if "sun_zenith" in zenith.dims:
            zenith = zenith.rename({"sun_zenith": _SUN}).drop_vars(_SUN, errors="ignore")
            return zenith, True
        return zenith.expand_dims({_SUN: 1}), False
    array = as_float_array(sun_zenith, "sun_zenith")
    if array.ndim == 0:
        return xr.DataArray(array[None], dims=(_SUN,)), False
    if array.ndim == 1 and array.size >= 1:
        return xr.DataArray(array, dims=(_SUN,)), True
    raise ValueError(f"sun_zenith must be a scalar, a 1-D list or a DataArray; got shape "
                     f"{array.shape}")


def _view_angles(view_zenith: object, view_azimuth: object) -> tuple[np.ndarray, np.ndarray]:
    if view_zenith is None and view_azimuth is None:
        return np.zeros(0), np.zeros(0)
    if view_zenith is None or view_azimuth is None:
        raise ValueError("view_zenith and view_azimuth must be given together (or neither, "
                         "for fluxes only)")
    zenith = np.atleast_1d(as_float_array(view_zenith, "view_zenith"))
    azimuth = np.atleast_1d(as_float_array(view_azimuth, "view_azimuth"))
    if zenith.ndim != 1 or azimuth.ndim != 1 or zenith.size == 0 or azimuth.size == 0:
        raise ValueError("view_zenith and view_azimuth must be non-empty 1-D lists of degrees")
    require_range(zenith, "view_zenith", 0.0, 90.0, labels=["view angle"])
    require_range(azimuth, "view_azimuth", labels=["view angle"])
    if np.unique(zenith).size != zenith.size:
        raise ValueError("view_zenith must not repeat a value")
    if np.unique(azimuth).size != azimuth.size:
        raise ValueError("view_azimuth must not repeat a value")
    return zenith, azimuth


def _positions(output_levels: object, nlayer: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Layer index and fraction of each output position (fractional level numbers)."""
    if output_levels is None:
        levels = np.arange(nlayer + 1, dtype=np.float64)
    else:
        levels = np.atleast_1d(as_float_array(output_levels, "output_levels"))
        if levels.ndim != 1 or levels.size == 0:
            raise ValueError("output_levels must be a non-empty 1-D list of fractional level "
                             "numbers")
        require_range(levels, "output_levels", 0.0, float(nlayer), labels=["position"])
    layer = np.minimum(np.floor(levels), nlayer - 1).astype(np.intp)
    fraction = levels - layer
    return levels, np.ascontiguousarray(layer), np.ascontiguousarray(fraction)


def _planck_sources(
    atmosphere: xr.Dataset,
    wavenumber_band: object,
    wavenumber: object,
    surface_temperature: object,
) -> tuple[xr.DataArray, xr.DataArray, str | None]:
    """Planck radiance at the levels and at the surface, or zeros without thermal emission."""
    thermal = wavenumber_band is not None or wavenumber is not None
    if not thermal:
        if surface_temperature is not None:
            raise ValueError("surface_temperature needs a thermal source: give wavenumber_band "
                             "or wavenumber")
        return xr.DataArray(np.zeros(atmosphere.sizes["layer"] + 1), dims=("level",)), \
            xr.DataArray(0.0), None
    if wavenumber_band is not None and wavenumber is not None:
        raise ValueError("give either wavenumber_band (band-integrated) or wavenumber "
                         "(monochromatic), not both")
    if "temperature" not in atmosphere:
        raise ValueError("thermal emission (wavenumber_band or wavenumber) needs level "
                         "temperatures: pass temperature= to make_atmosphere")
    temperature = atmosphere["temperature"]
    if surface_temperature is None:
        surface = temperature.isel(level=-1, drop=True)
    else:
        surface = _option_array(surface_temperature, "surface_temperature")
        _check_option_values(surface, "surface_temperature", low=0.0)
    if wavenumber_band is not None:
        if isinstance(wavenumber_band, xr.DataArray) or np.shape(wavenumber_band) != (2,):
            if not (isinstance(wavenumber_band, tuple | list) and len(wavenumber_band) == 2):
                raise ValueError("wavenumber_band must be a pair (low, high) in cm-1 (scalars "
                                 "or DataArrays along the atmosphere's extra dims)")
        low = _option_array(wavenumber_band[0], "wavenumber_band")
        high = _option_array(wavenumber_band[1], "wavenumber_band")
        if low.chunks is None and high.chunks is None:
            low_values, high_values = np.broadcast_arrays(low.values, high.values)
            bad = ~(np.isfinite(low_values) & (low_values >= 0.0) & (high_values > low_values))
            if np.any(bad):
                index = tuple(np.argwhere(bad)[0]) if bad.ndim else ()
                raise ValueError(
                    "wavenumber_band must satisfy 0 <= low < high (cm-1); got "
                    f"({float(low_values[index]):g}, {float(high_values[index]):g})"
                )
        spectral = (low, high)
        function = planck.band_radiance
        units = "W m-2 sr-1"
    else:
        nu = _option_array(wavenumber, "wavenumber")
        if nu.chunks is None:
            values = np.asarray(nu.values)
            if not np.all(np.isfinite(values) & (values > 0.0)):
                raise ValueError("wavenumber must be positive and finite (cm-1); got "
                                 f"{float(values[~(np.isfinite(values) & (values > 0))][0]):g}")
        spectral = (nu,)
        function = planck.spectral_radiance_wavenumber
        units = "W m-2 sr-1 cm"
    levels = xr.apply_ufunc(function, temperature, *spectral, dask="parallelized",
                            output_dtypes=[np.float64])
    bottom = xr.apply_ufunc(function, surface, *spectral, dask="parallelized",
                            output_dtypes=[np.float64])
    return levels, bottom, units


def _block(
    tau: np.ndarray,
    albedo: np.ndarray,
    moments: np.ndarray,
    sun_zenith: np.ndarray,
    irradiance: np.ndarray,
    surface_albedo: np.ndarray,
    planck_levels: np.ndarray,
    planck_surface: np.ndarray,
    top_radiance: np.ndarray,
    *,
    settings: dict,
) -> tuple[np.ndarray, ...]:
    """Solve one block of columns (numpy in, numpy out); leading axes are columns."""
    lead = np.broadcast_shapes(
        tau.shape[:-1], albedo.shape[:-1], moments.shape[:-2], sun_zenith.shape[:-1],
        irradiance.shape[:-1], surface_albedo.shape, planck_levels.shape[:-1],
        planck_surface.shape, top_radiance.shape,
    )
    nlayer = tau.shape[-1]
    nsun = sun_zenith.shape[-1]
    nmom = moments.shape[-1]
    ncol = int(np.prod(lead, dtype=np.int64))
    tau = np.broadcast_to(tau, (*lead, nlayer)).reshape(ncol, nlayer)
    albedo = np.broadcast_to(albedo, (*lead, nlayer)).reshape(ncol, nlayer)
    moments = np.broadcast_to(moments, (*lead, nlayer, nmom)).reshape(ncol, nlayer, nmom)
    zenith = np.broadcast_to(sun_zenith, (*lead, nsun)).reshape(ncol, nsun)
    irradiance = np.broadcast_to(irradiance, (*lead, nsun)).reshape(ncol, nsun)
    surface_albedo = np.broadcast_to(surface_albedo, lead).reshape(ncol)
    planck_levels = np.broadcast_to(planck_levels, (*lead, nlayer + 1)).reshape(ncol, -1)
    planck_surface = np.broadcast_to(planck_surface, lead).reshape(ncol)
    top_radiance = np.broadcast_to(top_radiance, lead).reshape(ncol)
    # values of lazily given inputs are checked here, chunk by chunk
    try:
        if not settings["optics_checked"]:
            require_range(tau, "optical_depth", 0.0)
            require_range(albedo, "single_scattering_albedo", 0.0, 1.0)
            check_moment_values(moments)
        require_range(zenith, "sun_zenith", 0.0, 90.0, high_open=True)
        require_range(irradiance, "sun_irradiance", 0.0)
        require_range(surface_albedo, "surface_albedo", 0.0, 1.0)
        require_range(planck_levels, "temperature (as Planck radiance)", 0.0)
        require_range(top_radiance, "top_diffuse_radiance", 0.0)
    except ValueError as error:
        if settings["lazy"]:
            raise ValueError(f"{error} (the index counts within one dask chunk)") from None
        raise

    # the tail of each phase function below 1e-15 adds nothing; it is set to zero per layer
    # (so that no result depends on which other columns share a dask chunk) and dropped
    # where every layer of the block has ended
    significant = np.abs(moments) > 1e-15
    last = nmom - 1 - np.argmax(significant[..., ::-1], axis=-1)   # (col, layer)
    last = np.where(significant.any(axis=-1), last, 0)
    keep = int(last.max()) + 1
    moments = np.where(np.arange(keep) <= last[..., None], moments[..., :keep], 0.0)
    nmom = keep
    streams = settings["streams"]
    n = streams // 2
    mu, weights = double_gauss(streams)
    if settings["delta_m"]:
        scaled = phase.delta_m_scale(tau, albedo, moments, streams)
        tau_s = np.ascontiguousarray(scaled.scaled_optical_depth, dtype=np.float64)
        albedo_s = np.ascontiguousarray(scaled.scaled_single_scattering_albedo)
        moments_s = np.ascontiguousarray(scaled.scaled_phase_moments)
        truncation = np.asarray(scaled.truncation_fraction, dtype=np.float64)
        _backward_peaks(tau, albedo, moments, tau_s, albedo_s, moments_s, truncation)
    else:
        truncation = np.zeros_like(tau)
        tau_s, albedo_s = np.ascontiguousarray(tau), np.ascontiguousarray(albedo)
        moments_s = np.zeros((ncol, nlayer, 2 * n))
        used = min(nmom, 2 * n)
        moments_s[..., :used] = moments[..., :used]
    mu0 = np.ascontiguousarray(np.cos(np.radians(zenith)))
    levels, position_layer, position_fraction = settings["positions"]
    view_cosines = np.maximum(np.cos(np.radians(settings["view_zenith"])), GRAZING_COSINE)
    view_azimuths = np.radians(settings["view_azimuth"])
    npos, nvz, nva = levels.size, view_cosines.size, view_azimuths.size

    flux_up = np.empty((ncol, nsun, npos))
    flux_down = np.empty((ncol, nsun, npos))
    mean_intensity = np.empty((ncol, nsun, npos))
    radiance = np.empty((ncol, nsun, npos, 2, nvz, nva))
    terms = np.empty(ncol, dtype=np.int64)
    status = np.empty((ncol, 4), dtype=np.int64)
    _kernel.solve_columns(
        tau_s, np.ascontiguousarray(albedo_s), moments_s, mu0,
        np.ascontiguousarray(irradiance, dtype=np.float64),
        np.ascontiguousarray(surface_albedo, dtype=np.float64),
        np.ascontiguousarray(planck_levels, dtype=np.float64),
        np.ascontiguousarray(planck_surface, dtype=np.float64),
        np.ascontiguousarray(top_radiance, dtype=np.float64),
        mu, weights, position_layer, position_fraction,
        np.ascontiguousarray(view_cosines), np.ascontiguousarray(view_azimuths),
        settings["max_fourier_terms"], settings["fourier_tolerance"], settings["thermal"],
        flux_up, flux_down, mean_intensity, radiance, terms, status,
    )
    failed = np.flatnonzero(status[:, 0])
    if failed.size:
        code, layer, term, info = status[failed[0]]
        if code == 9:
            raise SolverError(
                f"the solver produced a non-finite result in column {failed[0]} of this block "
                "(are the inputs, e.g. sun_irradiance, too large for double precision?)"
            )
        hint = ""
        if code in (1, 2):
            hint = ("; the phase function truncated to the streams in use is not a valid "
                    "(non-negative) phase function there: use delta_m=True or more streams")
        raise SolverError(
            f"the solver failed in column {failed[0]} of this block (layer {layer}, Fourier "
            f"term {term}): {_kernel.STATUS_NAMES.get(int(code), 'unknown failure')}"
            f" (LAPACK info {info}){hint}"
        )

    # depths at the output positions, unscaled (the outputs' coordinate) and scaled
    top_unscaled = np.concatenate([np.zeros((ncol, 1)), np.cumsum(tau, axis=1)], axis=1)
    top_scaled = np.concatenate([np.zeros((ncol, 1)), np.cumsum(tau_s, axis=1)], axis=1)
    depth = top_unscaled[:, position_layer] + position_fraction * tau[:, position_layer]
    depth_s = top_scaled[:, position_layer] + position_fraction * tau_s[:, position_layer]
    # the direct beam is reported unscaled; light that delta-M moved into the forward
    # peak belongs to the diffuse field
    s = irradiance[:, :, None]
    cos0 = mu0[:, :, None]
    direct = s * cos0 * np.exp(-depth[:, None, :] / cos0)
    direct_scaled = s * cos0 * np.exp(-depth_s[:, None, :] / cos0)
    flux_down = flux_down + direct_scaled - direct
    mean_intensity = mean_intensity + direct_scaled / (4.0 * np.pi * cos0)

    outputs = [flux_up, flux_down, direct, mean_intensity]
    if nvz and nva:
        if settings["single_scattering_correction"]:
            radiance = radiance + _single_scattering_correction(
                tau, albedo, moments, tau_s, albedo_s, moments_s, truncation, mu0, irradiance,
                position_layer, position_fraction, view_cosines, view_azimuths,
            )
            if settings["aureole_correction"] and np.any(truncation > 0.0):
                radiance[:, :, :, 1] += _aureole_correction(
                    tau, albedo, moments, truncation, mu0, irradiance, position_layer,
                    position_fraction, view_cosines, view_azimuths, streams,
                )
                # the correction is a small-angle approximation (slant path t / mu0 for
                # every path) written as a truncated Legendre series: far from the beam,
                # where it does not hold, its ringing can exceed a small radiance (found:
                # a thick absorbing layer under a cloud, 4 streams, 69 deg from the beam,
                # -2.5e-5 against 1.8e-5). A radiance is kept non-negative.
                np.maximum(radiance[:, :, :, 1], 0.0, out=radiance[:, :, :, 1])
        outputs.append(radiance)
    outputs = [array.reshape(*lead, *array.shape[1:]) for array in outputs]
    outputs.append(terms.reshape(lead))
    outputs.append(depth.reshape(*lead, npos))
    return tuple(outputs)


def _backward_peaks(tau, albedo, moments, tau_s, albedo_s, moments_s, truncation) -> None:
    """Replace delta-M where it does not apply: backward-peaked phase functions (in place).

    Delta-M removes a forward peak (Wiscombe 1977). For a backward peak, chi_2n is also
    large and positive, but the "scaled" moments leave [-1, 1]. Such layers keep their
    unscaled optical properties and use the Cesaro (C, 2) means of the truncated Legendre
    series, whose phase function is non-negative (positive summability of Legendre series
    by Cesaro means of order 2), so that the discrete problem stays physical. The
    single-scattering correction then restores the exact single scattering.
    """
    invalid = np.any(np.abs(moments_s) > 1.0 + 1e-12, axis=-1)
    if not np.any(invalid):
        return
    terms = moments_s.shape[-1]
    degree = np.arange(terms)
    weights = (terms - degree) * (terms - degree + 1.0) / (terms * (terms + 1.0))
    given = min(terms, moments.shape[-1])
    damped = np.zeros(moments_s.shape)
    damped[..., :given] = moments[..., :given] * weights[:given]
    tau_s[invalid] = tau[invalid]
    albedo_s[invalid] = albedo[invalid]
    moments_s[invalid] = damped[invalid]
    truncation[invalid] = 0.0


def _single_scattering_correction(
    tau, albedo, moments, tau_s, albedo_s, moments_s, truncation, mu0, irradiance,
    position_layer, position_fraction, view_cosines, view_azimuths,
) -> np.ndarray:
    """Exact minus truncated single-scattered radiance (TMS, Nakajima and Tanaka 1988).

    In the delta-M problem light scattered into the forward peak counts as unscattered, so
    "singly scattered" light is light scattered once outside the peak, attenuated along the
    scaled optical depth. Its exact value uses the full phase function (every supplied
    moment) with the scaled optical depth and the albedo w / (1 - w f); the truncated value,
    which the discrete-ordinates solution already holds, uses the scaled albedo and the
    truncated, scaled phase function. Single scattering is linear in w P of each layer, so
    the kernel integrates their difference once.
    """
    ncol, nsun = mu0.shape
    # cos of the scattering angle between the beam (direction -mu0) and each view
    # direction: up (+mu) and down (-mu), at each relative azimuth
    sin0 = np.sqrt(1.0 - mu0**2)[:, :, None, None, None]
    cos0 = mu0[:, :, None, None, None]
    sign = np.array([1.0, -1.0])[None, None, :, None, None]
    muv = view_cosines[None, None, None, :, None]
    sinv = np.sqrt(1.0 - muv**2)
    cosine = -sign * muv * cos0 + sinv * sin0 * np.cos(view_azimuths)[None, None, None, None, :]
    cosine = np.clip(cosine, -1.0, 1.0)                       # (col, sun, 2, vz, va)
    shape = cosine.shape[1:]
    flat = cosine.reshape(ncol, 1, -1)
    # the correction is linear in w P of each layer: one contraction of the difference of
    # the weighted moments, w_exact chi_l (every moment) - w' chi'_l (the truncated ones)
    remaining = 1.0 - albedo * truncation
    # where w f = 1 the scaled layer is empty (t' = 0) and scatters nothing
    albedo_exact = np.divide(albedo, remaining, out=np.zeros_like(albedo),
                             where=remaining > 0.0)
    terms = max(moments.shape[-1], moments_s.shape[-1])
    difference = np.zeros((ncol, moments.shape[1], terms))
    difference[..., :moments.shape[-1]] = albedo_exact[..., None] * moments
    difference[..., :moments_s.shape[-1]] -= albedo_s[..., None] * moments_s
    table = phase.legendre_polynomials(flat[:, 0, :], terms)
    weighted_phase = _contract(difference, table).reshape(ncol, moments.shape[1], *shape)
    correction = np.zeros((ncol, nsun, position_layer.size, 2, *shape[2:]))
    _kernel.single_scattering(
        tau_s, np.ones_like(tau_s), np.ascontiguousarray(weighted_phase), mu0,
        np.ascontiguousarray(irradiance, dtype=np.float64), position_layer, position_fraction,
        view_cosines, 1.0, correction)
    return correction


def _aureole_correction(
    tau, albedo, moments, truncation, mu0, irradiance, position_layer, position_fraction,
    view_cosines, view_azimuths, streams,
) -> np.ndarray:
    """Multiple scattering inside the forward peak, for downward radiance (small angles).

    Delta-M counts light scattered into the forward peak as unscattered (a delta function
    that no radiance sees), and the single-scattering correction adds one peak-shaped lobe
    of weight x e^x. In the small-angle approximation (every near-forward path has the slant
    depth t/mu0), k scatterings in the peak give the angular convolution P_peak^(k) with
    weight x^k/k!, x = sum over the layers above of w f dt / mu0, and the convolutions
    multiply Legendre moments. With r_l the peak's moments (1 below the truncation order,
    chi_l / f beyond it) and R_l = sum over layers of w f dt r_l, the missing radiance is

        S/(4 pi) exp(-t/mu0) sum_l (2l+1) [expm1(R_l/mu0) - (R_l/mu0) e^(A/mu0)] P_l(cos T)

    with A = R_0. Its second-order term, x^2 (r^2/2 - r), is the secondary correction of
    Nakajima and Tanaka (1988); summing all orders keeps it accurate when x is not small.
    Returns (column, sun, position, view_zenith, view_azimuth).
    """
    ncol, nlayer = tau.shape
    nmom = moments.shape[-1]
    peak = np.ones((ncol, nlayer, max(nmom, streams)))
    safe = np.where(truncation > 0.0, truncation, 1.0)[..., None]
    peak[..., streams:nmom] = np.where(truncation[..., None] > 0.0,
                                       moments[..., streams:] / safe, 0.0)
    peak[..., nmom:] = 0.0
    weight = albedo * truncation * tau                                    # (col, layer)
    above = np.concatenate([np.zeros((ncol, 1, peak.shape[-1])),
                            np.cumsum(weight[..., None] * peak, axis=1)], axis=1)
    partial = (position_fraction * weight[:, position_layer])[..., None] \
        * peak[:, position_layer]
    cumulative = above[:, position_layer] + partial                      # (col, pos, l)
    depth = np.concatenate([np.zeros((ncol, 1)), np.cumsum(tau, axis=1)], axis=1)
    depth = depth[:, position_layer] + position_fraction * tau[:, position_layer]
    cos0 = mu0[:, :, None, None]                                          # (col, sun, 1, 1)
    x = cumulative[:, None] / cos0                                        # (col, sun, pos, l)
    total = x[..., :1]
    attenuation = depth[:, None, :, None] / cos0
    coefficients = (np.exp(x - attenuation) - np.exp(-attenuation)
                    - x * np.exp(total - attenuation))
    coefficients *= irradiance[:, :, None, None] / (4.0 * np.pi)
    # scattering angle of each downward view direction from the beam
    sin0 = np.sqrt(1.0 - mu0**2)[:, :, None, None]
    muv = view_cosines[None, None, :, None]
    cosine = muv * mu0[:, :, None, None] + np.sqrt(1.0 - muv**2) * sin0 * np.cos(
        view_azimuths)[None, None, None, :]
    cosine = np.clip(cosine, -1.0, 1.0)                                  # (col, sun, vz, va)
    terms = coefficients.shape[-1]
    table = phase.legendre_polynomials(cosine.reshape(*cosine.shape[:2], -1), terms)
    weighted = coefficients * (2.0 * np.arange(terms) + 1.0)
    summed = np.einsum("cspl,cskl->cspk", weighted, table, optimize=False)
    return summed.reshape(*summed.shape[:3], *cosine.shape[2:])


def _contract(moments: np.ndarray, table: np.ndarray) -> np.ndarray:
    """sum_l (2l+1) moments[c, layer, l] P_l[c, k, l] -> (c, layer, k).

    einsum's own loop (no BLAS) adds the terms in order of l for every output, so that
    trailing zero moments change nothing and a chunked run equals an eager one bit for bit.
    """
    terms = moments.shape[-1]
    weighted = moments * (2.0 * np.arange(terms) + 1.0)
    return np.einsum("cln,ckn->clk", weighted, table[..., :terms], optimize=False)


def solve(
    atmosphere: xr.Dataset,
    streams: int = 16,
    sun_zenith: object = 30.0,
    sun_irradiance: object = 1.0,
    surface_albedo: object = 0.1,
    view_zenith: Sequence[float] | np.ndarray | None = None,
    view_azimuth: Sequence[float] | np.ndarray | None = None,
    wavenumber_band: tuple[object, object] | None = None,
    surface_temperature: object = None,
    top_diffuse_radiance: object = 0.0,
    *,
    wavenumber: object = None,
    output_levels: Sequence[float] | np.ndarray | None = None,
    delta_m: bool = True,
    single_scattering_correction: bool = True,
    aureole_correction: bool = True,
    fourier_tolerance: float = 1e-6,
    max_fourier_terms: int | None = None,
    gravity: float = EARTH_GRAVITY,
    heat_capacity: float = DRY_AIR_HEAT_CAPACITY,
) -> xr.Dataset:
    """Radiances, fluxes and mean intensities in a layered plane-parallel atmosphere.

    Parameters
    ----------
    atmosphere : xarray.Dataset
        From :func:`lamina.make_atmosphere`. Extra dims broadcast to every output.
    streams : int
        Total number of discrete ordinates (even, >= 2); ``streams // 2`` double-Gauss
        cosines per hemisphere.
    sun_zenith : float, list of float or DataArray
        Zenith angle of the incident beam in degrees, 0 <= theta_0 < 90. A list becomes the
        output dim ``sun_zenith``; all its angles share one homogeneous solution.
    sun_irradiance : float or DataArray
        Beam irradiance S on a plane normal to the beam. Radiances are in units of S per sr.
    surface_albedo : float or DataArray
        Lambertian surface albedo in [0, 1]; the surface emits with emissivity 1 - albedo.
    view_zenith, view_azimuth : list of float, optional
        Directions (degrees) at which radiances are wanted: zenith angle of the line of
        propagation from the vertical (0..90, with ``direction`` up or down) and azimuth of
        propagation measured from that of the beam (0 = forward-scattering side, 180 =
        backscattering side). Without them only the azimuth-independent problem is solved.
    wavenumber_band : (low, high), optional
        Band (cm-1) over which the Planck source is integrated (thermal emission). Each
        bound may be a DataArray along the atmosphere's extra dims (one band per
        wavelength, say).
    surface_temperature : float or DataArray, optional
        Surface temperature in K for thermal runs; defaults to the bottom level temperature.
    top_diffuse_radiance : float or DataArray
        Isotropic radiance falling on the top of the atmosphere.
    wavenumber : float or DataArray, optional
        Monochromatic thermal source at this wavenumber (cm-1), radiance per cm-1.
    output_levels : list of float, optional
        Fractional level numbers at which to report, e.g. ``[0, 0.5, 3]``: 0.5 is half-way
        (in optical depth) through layer 0. Default: every level.
    delta_m : bool
        Delta-M scaling of forward-peaked phase functions (Wiscombe 1977).
    single_scattering_correction : bool
        Replace the truncated single-scattered radiance by the exact one from all moments
        (Nakajima and Tanaka 1988).
    aureole_correction : bool
        With delta-M and the single-scattering correction, add the light scattered several
        times inside the forward peak to downward radiances (a small-angle sum over all
        orders whose second-order term is the secondary correction of Nakajima and Tanaka
        1988); it matters in the aureole around the sun seen from below a cloud. Far from
        the beam, where its small-angle approximation fails, it can overshoot a small
        downward radiance; such radiances are kept at zero rather than negative.
    fourier_tolerance : float
        The azimuthal series stops after two consecutive terms that change no requested
        radiance by more than this fraction.
    max_fourier_terms : int, optional
        Cap on the number of azimuthal terms (default: ``streams``, all that the
        quadrature carries).
    gravity, heat_capacity : float
        g (m s-2) and c_p (J kg-1 K-1) for heating rates; defaults are Earth air
        (9.80665 and 1004).

    Returns
    -------
    xarray.Dataset
        See the README's output table: ``flux_up``, ``flux_down_diffuse``,
        ``flux_down_direct``, ``flux_down``, ``flux_net``, ``mean_intensity``,
        ``actinic_flux``, optional ``radiance``, ``flux_divergence``, ``heating_rate``,
        ``fourier_terms``.

    Examples
    --------
    >>> import lamina
    >>> atm = lamina.make_atmosphere([0.5], [1.0], lamina.phase.henyey_greenstein(0.7, 32))
    >>> out = lamina.solve(atm, streams=8, sun_zenith=60.0, surface_albedo=0.0)
    >>> bool(abs(out.flux_up[0] + out.flux_down[-1] - 0.5) < 1e-9)
    True
    """
    check_atmosphere(atmosphere)
    if isinstance(streams, bool) or not isinstance(streams, int | np.integer):
        raise ValueError(f"streams must be an even integer >= 2; got {streams!r}")
    if streams < 2 or streams % 2:
        raise ValueError(f"streams must be an even integer >= 2; got {streams}")
    streams = int(streams)
    tolerance = float(as_float_array(fourier_tolerance, "fourier_tolerance"))
    if not (np.isfinite(tolerance) and tolerance > 0.0):
        raise ValueError(f"fourier_tolerance must be positive; got {tolerance:g}")
    if max_fourier_terms is None:
        max_terms = streams
    else:
        max_terms = int(max_fourier_terms)
        if max_terms < 1:
            raise ValueError(f"max_fourier_terms must be >= 1; got {max_fourier_terms}")
    for name, value in (("gravity", gravity), ("heat_capacity", heat_capacity)):
        number = float(as_float_array(value, name))
        if not (np.isfinite(number) and number > 0.0):
            raise ValueError(f"{name} must be positive; got {number:g}")

    zenith, sun_list = _sun_geometry(sun_zenith)
    _check_option_values(zenith, "sun_zenith", low=0.0, high=90.0, high_open=True)
    irradiance = _option_array(sun_irradiance, "sun_irradiance")
    _check_option_values(irradiance, "sun_irradiance", low=0.0)
    if _SUN not in irradiance.dims:
        irradiance = irradiance.expand_dims({_SUN: zenith.sizes[_SUN]})
    albedo = _option_array(surface_albedo, "surface_albedo")
    _check_option_values(albedo, "surface_albedo", low=0.0, high=1.0)
    top = _option_array(top_diffuse_radiance, "top_diffuse_radiance")
    _check_option_values(top, "top_diffuse_radiance", low=0.0)
    view_z, view_a = _view_angles(view_zenith, view_azimuth)
    nlayer = atmosphere.sizes["layer"]
    positions = _positions(output_levels, nlayer)
    planck_levels, planck_surface, thermal_units = _planck_sources(
        atmosphere, wavenumber_band, wavenumber, surface_temperature
    )
    thermal = thermal_units is not None
    want_radiance = view_z.size > 0

    settings = {
        "streams": streams, "delta_m": bool(delta_m),
        "single_scattering_correction": bool(single_scattering_correction),
        "aureole_correction": bool(aureole_correction),
        "fourier_tolerance": tolerance, "max_fourier_terms": max_terms,
        "thermal": thermal, "positions": positions, "view_zenith": view_z,
        "view_azimuth": view_a,
        # check_atmosphere has checked the values of optical properties held in memory
        "lazy": any(array.chunks is not None for array in (
            atmosphere["optical_depth"], atmosphere["single_scattering_albedo"],
            atmosphere["phase_moments"], zenith, irradiance, albedo, planck_levels,
            planck_surface, top)),
        "optics_checked": all(atmosphere[name].chunks is None for name in (
            "optical_depth", "single_scattering_albedo", "phase_moments")),
    }
    core_in = [["layer"], ["layer"], ["layer", "moment"], [_SUN], [_SUN], [], ["level"], [], []]
    inputs = [
        atmosphere["optical_depth"], atmosphere["single_scattering_albedo"],
        atmosphere["phase_moments"], zenith, irradiance, albedo, planck_levels,
        planck_surface, top,
    ]
    inputs = [
        array.chunk({dim: -1 for dim in core}) if array.chunks is not None else array
        for array, core in zip(inputs, core_in, strict=True)
    ]
    flux_core = [_SUN, _POSITION]
    core_out = [flux_core] * 4
    if want_radiance:
        core_out.append([_SUN, _POSITION, "direction", "view_zenith", "view_azimuth"])
    core_out += [[], [_POSITION]]
    sizes = {_POSITION: positions[0].size}
    if want_radiance:
        sizes.update(direction=2, view_zenith=view_z.size, view_azimuth=view_a.size)
    results = xr.apply_ufunc(
        _block, *inputs,
        input_core_dims=core_in,
        output_core_dims=core_out,
        kwargs={"settings": settings},
        dask="parallelized",
        output_dtypes=[np.float64] * (len(core_out) - 2) + [np.int64, np.float64],
        dask_gufunc_kwargs={"output_sizes": sizes},
        keep_attrs=False,
    )
    names = ["flux_up", "flux_down_diffuse", "flux_down_direct", "mean_intensity"]
    if want_radiance:
        names.append("radiance")
    names += ["fourier_terms", "cumulative_optical_depth"]
    out = xr.Dataset(dict(zip(names, results, strict=True)))
    out = out.rename({_POSITION: "level"})
    depth = out["cumulative_optical_depth"]
    out = out.drop_vars("cumulative_optical_depth").assign_coords(
        level=positions[0] if output_levels is not None else np.arange(nlayer + 1),
        cumulative_optical_depth=depth,
    )
    if want_radiance:
        out = out.assign_coords(direction=["up", "down"], view_zenith=view_z,
                                view_azimuth=view_a)
    if sun_list:
        out = out.rename({_SUN: "sun_zenith"})
        if "sun_zenith" not in out.coords and zenith.ndim == 1:
            out = out.assign_coords(sun_zenith=zenith.values)
    else:
        out = out.isel({_SUN: 0}, drop=True)
        if zenith.ndim == 1:
            out = out.assign_coords(sun_zenith=float(zenith.values[0]))
    for name, coordinate in atmosphere.coords.items():
        if name in out.coords and name not in ("level", "layer") and coordinate.attrs:
            out[name].attrs = dict(coordinate.attrs)
    out = _derived(out, atmosphere, positions, output_levels is None, gravity, heat_capacity)
    _describe(out, thermal_units, settings)
    return out


def _derived(out, atmosphere, positions, on_levels, gravity, heat_capacity):
    out["flux_down"] = out["flux_down_diffuse"] + out["flux_down_direct"]
    out["flux_net"] = out["flux_down"] - out["flux_up"]
    out["actinic_flux"] = 4.0 * np.pi * out["mean_intensity"]
    for name in ("pressure", "altitude"):
        if name in atmosphere and on_levels:
            out = out.assign_coords({name: ("level", np.asarray(atmosphere[name].values))})
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
            pressure = np.asarray(atmosphere["pressure"].values, dtype=np.float64)
            thickness = xr.DataArray(np.diff(pressure), dims=("layer",))
            out["heating_rate"] = (gravity / heat_capacity * out["flux_divergence"]
                                   / thickness * SECONDS_PER_DAY)
    return out


def _describe(out: xr.Dataset, thermal_units: str | None, settings: dict) -> None:
    """Units, long names and solver settings on the output Dataset."""
    if thermal_units is None:
        flux_units = "W m-2"
        note = "in the units of sun_irradiance (W m-2 when that is W m-2)"
    else:
        flux_units = "W m-2" if thermal_units == "W m-2 sr-1" else "W m-2 cm"
        note = "sun_irradiance must be in the same units"
    radiance_units = flux_units + " sr-1" if flux_units == "W m-2" else "W m-2 sr-1 cm"
    described = {
        "flux_up": ("upward diffuse flux on a horizontal plane", flux_units,
                    "upwelling_radiative_flux_in_air"),
        "flux_down_diffuse": ("downward diffuse flux on a horizontal plane", flux_units,
                              "downwelling_diffuse_radiative_flux_in_air"),
        "flux_down_direct": ("downward flux of the attenuated direct beam", flux_units,
                             "downwelling_direct_radiative_flux_in_air"),
        "flux_down": ("total downward flux (diffuse + direct)", flux_units,
                      "downwelling_radiative_flux_in_air"),
        "flux_net": ("net downward flux (down minus up)", flux_units,
                     "net_downward_radiative_flux_in_air"),
        "mean_intensity": ("mean intensity J, the radiance averaged over all directions "
                           "including the direct beam", radiance_units, None),
        "actinic_flux": ("actinic flux 4 pi J", flux_units, None),
        "radiance": ("radiance at the view angles", radiance_units, None),
        "flux_divergence": ("radiative energy absorbed per layer: net downward flux at its "
                            "top minus at its bottom", flux_units, None),
        "heating_rate": ("radiative heating rate (g / c_p) (F_net,top - F_net,bottom) / "
                         "(p_bottom - p_top)", "K day-1",
                         "tendency_of_air_temperature_due_to_radiative_heating"),
        "fourier_terms": ("number of azimuthal Fourier terms summed", "1", None),
    }
    for name, (long_name, units, standard) in described.items():
        if name in out:
            out[name].attrs = {"long_name": long_name, "units": units}
            if standard:
                out[name].attrs["standard_name"] = standard
    out["cumulative_optical_depth"].attrs = {
        "long_name": "optical depth from the top of the atmosphere (unscaled)", "units": "1"}
    out["level"].attrs = {"long_name": "level number from the top (fractional: position "
                                       "inside a layer, in optical depth)", "units": "1"}
    if "view_zenith" in out.coords:
        out["view_zenith"].attrs = {"long_name": "zenith angle of the propagation direction "
                                                 "from the vertical", "units": "degree"}
        out["view_azimuth"].attrs = {"long_name": "azimuth of propagation from that of the "
                                                  "incident beam (0 = forward side)",
                                     "units": "degree"}
        out["direction"].attrs = {"long_name": "up: propagating upward; down: downward"}
    if "sun_zenith" in out.coords:
        out["sun_zenith"].attrs = {"long_name": "solar zenith angle", "units": "degree",
                                   "standard_name": "solar_zenith_angle"}
    if "pressure" in out.coords:
        out["pressure"].attrs = {"long_name": "pressure at the level", "units": "Pa",
                                 "standard_name": "air_pressure"}
    if "altitude" in out.coords:
        out["altitude"].attrs = {"long_name": "altitude of the level", "units": "m",
                                 "standard_name": "altitude"}
    from lamina import __version__

    out.attrs = {
        "title": "lamina discrete-ordinates radiative transfer",
        "Conventions": "CF-1.10",
        "lamina_version": __version__,
        "history": f"{_datetime.datetime.now(_datetime.UTC).isoformat(timespec='seconds')} "
                   "computed by lamina.solve",
        "streams": settings["streams"],
        "delta_m": int(settings["delta_m"]),
        "single_scattering_correction": int(settings["single_scattering_correction"]),
        "aureole_correction": int(settings["aureole_correction"]),
        "fourier_tolerance": settings["fourier_tolerance"],
        "max_fourier_terms": settings["max_fourier_terms"],
        "thermal_source": int(settings["thermal"]),
        "flux_units_note": note,
        "azimuth_convention": "view_azimuth is measured from the azimuth of the beam's "
                              "propagation: 0 forward-scattering side, 180 backscattering",
    }
