"""The polarized path of :func:`lamina.solve` (``stokes=3`` or ``4``): plan, block, describe.

Everything that the Stokes-vector solve needs beyond the scalar pipeline, kept in one step
module so that the scalar path is untouched: :func:`check_polarized` refuses what the
vector kernel does not do yet, :func:`polarized_plan` adds the scattering matrix to the
blocks' inputs and the ``stokes`` dim to ``radiance``, :func:`solve_polarized` is the
block's solve step with the vector kernel (``lamina._kernel.vector_driver``: Siewert 2000;
de Haan, Bosma and Hovenier 1987; the driver runs prepare, scale, the direct beam and pack
as for the scalar path), and
:func:`describe_polarized` labels the components and adds ``degree_of_polarization`` and
``angle_of_linear_polarization``.

Delta-M scales every element by the alpha1 truncation f of the layer (the forward delta is
f times the identity matrix): alpha_i' = (alpha_i - f) / (1 - f) for alpha1 and alpha4 (all
l) and alpha2, alpha3 (l >= 2), beta_i' = beta_i / (1 - f) (DEVELOPERS.md,
"Polarization"). alpha1' is the scalar step's scaled ``phase_moments`` itself, so a layer
that the backward-peak rule keeps unscaled (f = 0, Cesaro means of alpha1) keeps its other
elements cut to the streams.

The single-scattering correction (TMS) uses the exact matrix: the singly scattered Stokes
vector of the unpolarized beam is F11 and F12 turned from the scattering plane onto each
view's meridian plane. I takes the scalar corrections in the driver (alpha1 is the scalar
phase function, so they are the same), Q and U are corrected here. The aureole
correction's light (the beam scattered several times inside the forward peak) is added to
I only, as unpolarized: near the forward direction the scattering matrix of spheres tends
to F11 times the identity (F12 -> 0, F22, F33, F44 -> F11; Hovenier, van der Mee and Domke
2004, ch. 2), so the peak leaves the unpolarized beam unpolarized (an approximation for
non-spherical particles). Thermal emission (``wavenumber_band`` or ``wavenumber``) is
unpolarized: the layers' Planck source in I (the kernel's linear-in-depth particular
solution) and the Lambertian surface's (1 - A) B_surface in I. Not yet with ``stokes`` > 1
(ValueError naming the option): a bidirectional surface. The Fourier series stops as the scalar one
does (``fourier_tolerance`` relative to every component of every output Stokes vector,
``max_fourier_terms``; fluxes alone, or no beam, take term 0 only).
"""

from __future__ import annotations

import dataclasses

import numpy as np
import xarray as xr

from lamina import _kernel
from lamina._cf import cf_encode
from lamina._kernel.vector_driver import VECTOR_STATUS_NAMES, solve_vector_columns
from lamina._solver.common import (
    Block,
    BlockSettings,
    Fields,
    Layers,
    Options,
    SolverError,
    SurfaceArrays,
    ThermalSources,
    Views,
    scattering_cosines,
)
from lamina.polarization import generalized_spherical_functions
from lamina.quadrature import double_gauss

#: Component labels of the ``stokes`` dim.
STOKES_LABELS = ("I", "Q", "U", "V")
#: Labels of the atmosphere's ``element`` dim (lamina.polarization.ELEMENTS).
_MATRIX = "scattering_matrix_moments"


def check_stokes(stokes: object) -> int:
    """``stokes`` as 1, 3 or 4."""
    if isinstance(stokes, bool) or not isinstance(stokes, int | np.integer) \
            or int(stokes) not in (1, 3, 4):
        raise ValueError(f"stokes must be 1 (I), 3 (I, Q, U) or 4 (I, Q, U, V); got {stokes!r}")
    return int(stokes)


def check_polarized(options: Options, sources: ThermalSources,
                    surface: SurfaceArrays | None, spherical: bool = False) -> None:
    """ValueError for what the vector path does not do yet (module docstring)."""
    refused = [
        (surface is not None, "a bidirectional surface", "use surface_albedo"),
        (spherical, "planet_radius (the pseudo-spherical beam)",
         "solve plane-parallel"),
        (options.views.per_pixel, "per-pixel view angles",
         "give view_zenith and view_azimuth as lists"),
    ]
    for wrong, what, hint in refused:
        if wrong:
            raise ValueError(f"stokes > 1 does not support {what} yet; {hint} (or stokes=1)")


def _matrix(atmosphere: xr.Dataset) -> xr.DataArray:
    """The atmosphere's scattering matrix, or alpha1 = phase_moments alone (unpolarizing)."""
    if _MATRIX in atmosphere:
        return atmosphere[_MATRIX]
    moments = atmosphere["phase_moments"]
    zero = xr.zeros_like(moments)
    return xr.concat([moments] + [zero] * 5, dim="element").transpose(..., "element")


def polarized_plan(plan, atmosphere: xr.Dataset, stokes: int):
    """The scalar plan with the matrix as one more input and ``stokes`` on the radiance."""
    matrix = _matrix(atmosphere)
    core = ["layer", "moment", "element"]
    if matrix.chunks is not None:
        matrix = matrix.chunk({dim: -1 for dim in core})
    output_core_dims = [
        [*dims, "stokes"] if name == "radiance" else dims
        for name, dims in zip(plan.output_names, plan.output_core_dims, strict=True)
    ]
    return dataclasses.replace(
        plan, inputs=[*plan.inputs, matrix], input_core_dims=[*plan.input_core_dims, core],
        output_core_dims=output_core_dims, output_sizes={**plan.output_sizes, "stokes": stokes},
        settings=dataclasses.replace(plan.settings, stokes=stokes),
    )


def _scaled_matrix(matrix: np.ndarray, layers: Layers, streams: int) -> np.ndarray:
    """Delta-M of every element (module docstring), cut to ``streams`` moments."""
    ncol, nlayer = layers.optical_depth.shape
    scaled = np.zeros((ncol, nlayer, streams, 6))
    used = min(streams, matrix.shape[-2])
    scaled[:, :, :used] = matrix[:, :, :used]
    f = layers.truncation[:, :, None]
    keep = 1.0 - f
    degree = np.arange(streams)[None, None, :]
    scaled[..., 3] = (scaled[..., 3] - f) / keep
    for element in (1, 2):
        scaled[..., element] = np.where(degree >= 2, (scaled[..., element] - f) / keep, 0.0)
    scaled[..., 4:] = scaled[..., 4:] / keep[..., None]
    scaled[..., 0] = layers.phase_moments
    return np.ascontiguousarray(scaled)


def solve_polarized(block: Block, layers: Layers, matrix: np.ndarray,
                    settings: BlockSettings) -> Fields:
    """The vector kernel's fields of the (scaled) problem at the output positions.

    ``matrix`` is the block's scattering matrix as given (leading axes, layer, moment,
    element); ``layers`` the scalar scale step's output, whose truncation f scales it.
    """
    ncol, nlayer = block.optical_depth.shape
    matrix = np.broadcast_to(matrix, (*block.lead, *matrix.shape[-3:])).reshape(
        ncol, nlayer, *matrix.shape[-2:])
    scaled = _scaled_matrix(matrix, layers, settings.streams)
    fields = _solve(block, layers, scaled, settings)
    if settings.views.wanted and settings.single_scattering_correction:
        fields.radiance = fields.radiance + _single_scattering_correction(
            block, layers, matrix, scaled, settings)
    return fields


def _meridian_rotation(mu0: np.ndarray, views: Views) -> tuple[np.ndarray, np.ndarray]:
    """cos 2 alpha, sin 2 alpha that turn the scattering plane onto each view's meridian plane.

    With the beam k_in = (sin theta0, 0, -mu0) and the view k_out (up and down), the
    scattering plane's r is n = k_in x k_out / |k_in x k_out| and its l is k_out x n; alpha
    is the angle from the meridian plane's l = e_theta toward r = -e_phi to it (Hovenier, van
    der Mee and Domke 2004, section 2.3, in the vector form of
    tests/polarized_references.phase_matrix). Where k_out is parallel to k_in the plane is
    undefined and F12 = 0 there; alpha = 0 is taken. Shapes (column, sun, 2, vz, va).
    """
    sin0 = np.sqrt(1.0 - mu0**2)[:, :, None, None, None]
    k_in = np.stack(np.broadcast_arrays(sin0, 0.0 * sin0, -mu0[:, :, None, None, None]), -1)
    sign = np.array([1.0, -1.0])[None, None, :, None, None]
    u = sign * views.cosines[None, None, None, :, None]
    s = np.sqrt(np.clip(1.0 - u**2, 0.0, None))
    phi = views.azimuth_radians[None, None, None, None, :]
    k_out = np.stack(np.broadcast_arrays(s * np.cos(phi), s * np.sin(phi), u), -1)
    ell = np.stack(np.broadcast_arrays(u * np.cos(phi), u * np.sin(phi), -s), -1)
    k_in, k_out, ell = np.broadcast_arrays(k_in, k_out, ell)
    normal = np.cross(k_in, k_out)
    size = np.linalg.norm(normal, axis=-1, keepdims=True)
    normal = np.divide(normal, size, out=np.zeros_like(normal), where=size > 1e-12)
    ell_plane = np.cross(k_out, normal)
    alpha = np.arctan2(np.sum(ell * normal, -1), np.sum(ell * ell_plane, -1))
    alpha = np.where(size[..., 0] > 1e-12, alpha, 0.0)
    return np.cos(2.0 * alpha), np.sin(2.0 * alpha)


def _single_scattering_correction(block: Block, layers: Layers, matrix: np.ndarray,
                                  scaled: np.ndarray, settings: BlockSettings) -> np.ndarray:
    """Exact minus truncated singly scattered Q and U (TMS, Nakajima and Tanaka 1988).

    The scalar step's correction (``corrections``) for the polarized components: an
    unpolarized beam scattered once is Z e1 = L(alpha) (F11, F12, 0, 0) = (F11, cos 2a F12,
    -sin 2a F12, 0), so Q and U take w F12 turned by the meridian rotation, V nothing (I,
    w F11, is the scalar correction's, made by the driver). The exact value uses every
    moment with the scaled optical depth and the albedo w / (1 - w f), the truncated one
    (already in the discrete-ordinates solution) the scaled albedo and matrix. Returns
    (column, sun, position, direction, vz, va, stokes), 0 for I and V.
    """
    views, positions = settings.views, settings.positions
    albedo, albedo_s = block.single_scattering_albedo, layers.single_scattering_albedo
    mu0 = block.beam_cosines
    ncol, nsun = mu0.shape
    cosine = scattering_cosines(mu0, views)                      # (col, sun, 2, vz, va)
    remaining = 1.0 - albedo * layers.truncation
    albedo_exact = np.divide(albedo, remaining, out=np.zeros_like(albedo),
                             where=remaining > 0.0)
    terms = max(matrix.shape[-2], scaled.shape[-2])
    weight = 2.0 * np.arange(terms) + 1.0
    difference = np.zeros((ncol, albedo.shape[1], terms))
    difference[..., :matrix.shape[-2]] = albedo_exact[..., None] * matrix[..., 4]
    difference[..., :scaled.shape[-2]] -= albedo_s[..., None] * scaled[..., 4]
    # lamina's expansion is in P^l_mn = i^(n-m) d^l_mn: F12 = sum (2l+1) beta1 P^l_02
    table = generalized_spherical_functions(0, 2, cosine.reshape(ncol, -1), terms)
    f12 = np.einsum("cln,ckn->clk", difference * weight, table,
                    optimize=False).reshape(ncol, -1, *cosine.shape[1:])
    cos2, sin2 = _meridian_rotation(mu0, views)
    parts = {1: cos2[:, None] * f12, 2: -sin2[:, None] * f12}
    correction = np.zeros((ncol, nsun, positions.layer.size, 2, views.cosines.size,
                           views.azimuth.size, settings.stokes))
    tau_s = layers.optical_depth
    for component, weighted in parts.items():
        out = np.zeros(correction.shape[:-1])
        _kernel.single_scattering(
            tau_s, np.ones_like(tau_s), np.ascontiguousarray(weighted), mu0,
            np.ascontiguousarray(block.sun_irradiance, dtype=np.float64), positions.layer,
            positions.fraction, np.ascontiguousarray(views.cosines), 1.0, out)
        correction[..., component] = out
    return correction


def _solve(block: Block, layers: Layers, matrix: np.ndarray, settings: BlockSettings) -> Fields:
    """The kernel's fields at the output positions."""
    mu, weights = double_gauss(settings.streams)
    views, stokes = settings.views, settings.stokes
    ncol, nsun = block.beam_cosines.shape
    nlev, n = layers.optical_depth.shape[1] + 1, settings.streams // 2
    positions = settings.positions
    npos = positions.layer.size
    cosines = np.ascontiguousarray(views.cosines) if views.wanted else np.zeros(0)
    azimuth = np.ascontiguousarray(views.azimuth_radians) if views.wanted else np.zeros(1)
    quadrature = np.empty((ncol, nsun, nlev, 2, n, azimuth.size, stokes))
    radiance = np.empty((ncol, nsun, npos, 2, cosines.size, azimuth.size, stokes))
    flux_up, flux_down, mean = (np.empty((ncol, nsun, npos)) for _ in range(3))
    status = np.empty((ncol, 4), dtype=np.int64)
    terms = np.empty(ncol, dtype=np.int64)
    # fluxes alone need the azimuthal average only (as in the scalar kernel)
    max_terms = settings.max_fourier_terms if views.wanted else 1
    solve_vector_columns(
        layers.optical_depth, np.ascontiguousarray(layers.single_scattering_albedo), matrix,
        block.beam_cosines, np.ascontiguousarray(block.sun_irradiance, dtype=np.float64),
        np.ascontiguousarray(block.surface_albedo, dtype=np.float64),
        np.ascontiguousarray(block.top_diffuse_radiance, dtype=np.float64),
        np.ascontiguousarray(block.planck_levels, dtype=np.float64),
        np.ascontiguousarray(block.planck_surface, dtype=np.float64), settings.thermal,
        mu, weights,
        azimuth, cosines, np.ascontiguousarray(positions.layer, dtype=np.intp),
        np.ascontiguousarray(positions.fraction, dtype=np.float64), stokes, max_terms,
        settings.fourier_tolerance, quadrature, radiance, flux_up, flux_down, mean, terms,
        status)
    failed = np.flatnonzero(status[:, 0])
    if failed.size:
        code, layer, term, info = status[failed[0]]
        raise SolverError(
            f"the vector solver failed in column {failed[0]} of this block (layer {layer}, "
            f"Fourier term {term}): {VECTOR_STATUS_NAMES.get(int(code), 'unknown failure')}"
            f" (LAPACK info {info})")
    return Fields(flux_up=flux_up, flux_down_diffuse=flux_down, mean_intensity=mean,
                  radiance=radiance, fourier_terms=terms)


def describe_polarized(out: xr.Dataset, stokes: int) -> xr.Dataset:
    """Component labels, degree and angle of polarization, and their descriptions."""
    out.attrs["stokes"] = stokes
    if "radiance" not in out:
        return cf_encode(out)
    out = out.assign_coords(stokes=list(STOKES_LABELS[:stokes]))
    out["stokes"].attrs = {
        "long_name": "Stokes component: Q and U referred to the meridian plane of the "
                     "direction of propagation, Q > 0 parallel to it (DEVELOPERS.md, "
                     "Polarization)"}
    radiance = out["radiance"]
    intensity = radiance.sel(stokes="I", drop=True)
    polarized = sum(radiance.sel(stokes=label, drop=True) ** 2
                    for label in STOKES_LABELS[1:stokes])
    safe = xr.where(intensity > 0.0, intensity, 1.0)
    out["degree_of_polarization"] = xr.where(intensity > 0.0, np.sqrt(polarized) / safe, 0.0)
    out["degree_of_polarization"].attrs = {
        "long_name": "degree of polarization sqrt(Q^2 + U^2 (+ V^2)) / I (0 where I = 0)",
        "units": "1"}
    angle = 0.5 * np.degrees(np.arctan2(radiance.sel(stokes="U", drop=True),
                                        radiance.sel(stokes="Q", drop=True)))
    out["angle_of_linear_polarization"] = angle
    out["angle_of_linear_polarization"].attrs = {
        "long_name": "angle of linear polarization (1/2) atan2(U, Q) from the meridian "
                     "plane toward r = -e_phi", "units": "degree"}
    return cf_encode(out)
