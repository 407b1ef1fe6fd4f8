"""Correct step: what the scaled discrete-ordinates solution misses, on whole arrays.

The kernel solves the delta-M-scaled problem. Three corrections turn its fields into those
of the problem the user gave:

- the direct beam is reported unscaled; light that delta-M moved into the forward peak
  belongs to the diffuse field (:func:`unscale_direct_beam`);
- the exact single-scattering correction of radiances (the TMS method of Nakajima and
  Tanaka 1988): exact minus truncated singly scattered radiance;
- the aureole correction: multiple scattering inside the forward peak in the small-angle
  approximation, summed over all orders, whose second-order term is the secondary correction
  of Nakajima and Tanaka (1988).

The last two are :func:`correct_radiance`.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from lamina import _kernel, phase
from lamina._solver.common import (
    Block,
    BlockSettings,
    Fields,
    Layers,
    Positions,
    Views,
    depth_at_positions,
    scattering_cosines,
    slant_at_positions,
    spherical_beam,
)


def unscale_direct_beam(block: Block, layers: Layers, positions: Positions,
                        fields: Fields) -> np.ndarray:
    """Report the direct beam unscaled (fields in place); the unscaled depth at positions.

    Returns the optical depth from the top at each output position, (column, position): the
    outputs' coordinate ``cumulative_optical_depth``.
    """
    depth = depth_at_positions(block.optical_depth, positions)
    if block.air_mass_factors is not None:
        _unscale_spherical_beam(block, layers, positions, fields)
        return depth
    depth_s = depth_at_positions(layers.optical_depth, positions)
    s = block.sun_irradiance[:, :, None]
    cos0 = block.beam_cosines[:, :, None]
    direct = s * cos0 * np.exp(-depth[:, None, :] / cos0)
    direct_scaled = s * cos0 * np.exp(-depth_s[:, None, :] / cos0)
    # the difference first: at the top it is exactly 0, and the diffuse flux there stays
    # exactly the sky's (the kernel's boundary value)
    fields.flux_down_diffuse = fields.flux_down_diffuse + (direct_scaled - direct)
    fields.mean_intensity = fields.mean_intensity + direct_scaled / (4.0 * np.pi * cos0)
    fields.flux_down_direct = direct
    return depth


def _unscale_spherical_beam(block: Block, layers: Layers, positions: Positions,
                            fields: Fields) -> None:
    """unscale_direct_beam for the pseudo-spherical beam: slant depths, the true mu0.

    Beyond 90 degrees the beam crosses a lit level upward: mu0 S T is then negative (the
    direct beam adds to the net upward flux); the mean intensity gets S T / (4 pi).
    """
    slant = _slant_depths(block, block.optical_depth, positions)
    slant_s = _slant_depths(block, layers.optical_depth, positions)
    s = block.sun_irradiance[:, :, None]
    cos0 = block.beam_cosines[:, :, None]
    beam, beam_scaled = s * np.exp(-slant), s * np.exp(-slant_s)
    fields.flux_down_diffuse = fields.flux_down_diffuse + cos0 * (beam_scaled - beam)
    fields.mean_intensity = fields.mean_intensity + beam_scaled / (4.0 * np.pi)
    fields.flux_down_direct = cos0 * beam + 0.0     # (+ 0: no -0.0 in the shadow)


def _slant_depths(block: Block, optical_depth: np.ndarray, positions: Positions
                  ) -> np.ndarray:
    """The beam's slant optical depth to each output position (column, sun, position)."""
    slant, cosine = spherical_beam(block.air_mass_factors, block.beam_reaches, optical_depth)
    return slant_at_positions(slant, cosine, optical_depth, positions)


#: Elements of one temporary of the corrections (about 16 MB): a block of more columns is
#: corrected a slab of columns at a time (each column's correction is its own).
_SLAB_ELEMENTS = 1 << 21


def correct_radiance(block: Block, layers: Layers, settings: BlockSettings,
                     radiance: np.ndarray) -> np.ndarray:
    """Radiances with the corrections that the settings ask for."""
    if not settings.single_scattering_correction:
        return radiance
    # decided for the whole block, so that no result depends on the slabs
    aureole = settings.aureole_correction and bool(np.any(layers.truncation > 0.0))
    ncol, nsun = block.beam_cosines.shape
    nlayer, nmom = block.phase_moments.shape[1:]
    per_column = nsun * (radiance.shape[2] + nlayer) * (max(nmom, settings.streams)
                                                         + radiance[0, 0].size)
    step = max(1, _SLAB_ELEMENTS // per_column)
    if step >= ncol:
        return _corrected(block, layers, settings, radiance, aureole)
    corrected = np.empty_like(radiance)
    for start in range(0, ncol, step):
        rows = slice(start, start + step)
        corrected[rows] = _corrected(_columns(block, rows, ncol), _columns(layers, rows, ncol),
                                     settings, radiance[rows], aureole)
    return corrected


def _columns(record, rows: slice, ncol: int):
    """A Block or Layers of the columns ``rows`` (views of the record's arrays)."""
    def part(value):
        if isinstance(value, np.ndarray) and value.ndim and value.shape[0] == ncol:
            return value[rows]
        if isinstance(value, dict):
            return {name: part(array) for name, array in value.items()}
        return value
    return dataclasses.replace(record, **{field.name: part(getattr(record, field.name))
                                          for field in dataclasses.fields(record)})


def _corrected(block: Block, layers: Layers, settings: BlockSettings, radiance: np.ndarray,
               aureole: bool) -> np.ndarray:
    positions, views = settings.positions, settings.views
    radiance = radiance + _single_scattering_correction(block, layers, positions, views)
    if aureole:
        radiance[:, :, :, 1] += _aureole_correction(block, layers.truncation, positions,
                                                    views, settings.streams)
        # the correction is a small-angle approximation (slant path t / mu0 for every
        # path) written as a truncated Legendre series: far from the beam, where it does
        # not hold, its ringing can exceed a small radiance (found: a thick absorbing
        # layer under a cloud, 4 streams, 69 deg from the beam, -2.5e-5 against 1.8e-5).
        # A radiance is kept non-negative.
        np.maximum(radiance[:, :, :, 1], 0.0, out=radiance[:, :, :, 1])
    return radiance


def _single_scattering_correction(block: Block, layers: Layers, positions: Positions,
                                  views: Views) -> np.ndarray:
    """Exact minus truncated single-scattered radiance (TMS, Nakajima and Tanaka 1988).

    In the delta-M problem light scattered into the forward peak counts as unscattered, so
    "singly scattered" light is light scattered once outside the peak, attenuated along the
    scaled optical depth. Its exact value uses the full phase function (every supplied
    moment) with the scaled optical depth and the albedo w / (1 - w f); the truncated value,
    which the discrete-ordinates solution already holds, uses the scaled albedo and the
    truncated, scaled phase function. Single scattering is linear in w P of each layer, so
    the kernel integrates their difference once.
    """
    albedo, moments = block.single_scattering_albedo, block.phase_moments
    albedo_s, moments_s = layers.single_scattering_albedo, layers.phase_moments
    mu0 = block.beam_cosines
    ncol, nsun = mu0.shape
    shape = (nsun, 2, views.cosines.size, views.azimuth_radians.size)
    # the correction is linear in w P of each layer: one contraction of the difference of
    # the weighted moments, w_exact chi_l (every moment) - w' chi'_l (the truncated ones)
    remaining = 1.0 - albedo * layers.truncation
    # where w f = 1 the scaled layer is empty (t' = 0) and scatters nothing
    albedo_exact = np.divide(albedo, remaining, out=np.zeros_like(albedo),
                             where=remaining > 0.0)
    terms = max(moments.shape[-1], moments_s.shape[-1])
    difference = np.zeros((ncol, moments.shape[1], terms))
    difference[..., :moments.shape[-1]] = albedo_exact[..., None] * moments
    difference[..., :moments_s.shape[-1]] -= albedo_s[..., None] * moments_s
    table = _scattering_legendre(mu0, views, block, terms)
    weighted_phase = _contract(difference, table).reshape(ncol, moments.shape[1], *shape)
    correction = np.zeros((ncol, nsun, positions.layer.size, 2, *shape[2:]))
    tau_s = layers.optical_depth
    spherical = {}
    if block.air_mass_factors is not None:
        slant, cosine = spherical_beam(block.air_mass_factors, block.beam_reaches, tau_s)
        spherical = {"beam_slant_optical_depth": slant, "beam_layer_cosine": cosine}
    _kernel.single_scattering(
        tau_s, np.ones_like(tau_s), np.ascontiguousarray(weighted_phase), mu0,
        np.ascontiguousarray(block.sun_irradiance, dtype=np.float64), positions.layer,
        positions.fraction, views.cosines, 1.0, correction, **spherical,
        **({} if block.view_cosines is None else {"column_view_cosines": block.view_cosines}))
    return correction


def _aureole_correction(block: Block, truncation: np.ndarray, positions: Positions,
                        views: Views, streams: int) -> np.ndarray:
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
    tau, albedo, moments = (block.optical_depth, block.single_scattering_albedo,
                            block.phase_moments)
    mu0, irradiance = block.beam_cosines, block.sun_irradiance
    layer, fraction = positions.layer, positions.fraction
    ncol, nlayer = tau.shape
    nmom = moments.shape[-1]
    peak = np.ones((ncol, nlayer, max(nmom, streams)))
    safe = np.where(truncation > 0.0, truncation, 1.0)[..., None]
    peak[..., streams:nmom] = np.where(truncation[..., None] > 0.0,
                                       moments[..., streams:] / safe, 0.0)
    peak[..., nmom:] = 0.0
    weight = albedo * truncation * tau                                    # (col, layer)
    if block.air_mass_factors is not None:
        x, attenuation = _spherical_peak_paths(block, weight[..., None] * peak, positions)
    else:
        above = np.concatenate([np.zeros((ncol, 1, peak.shape[-1])),
                                np.cumsum(weight[..., None] * peak, axis=1)], axis=1)
        partial = (fraction * weight[:, layer])[..., None] * peak[:, layer]
        cumulative = above[:, layer] + partial                           # (col, pos, l)
        depth = depth_at_positions(tau, positions)
        cos0 = mu0[:, :, None, None]                                      # (col, sun, 1, 1)
        x = cumulative[:, None] / cos0                                    # (col, sun, pos, l)
        attenuation = depth[:, None, :, None] / cos0
    total = x[..., :1]
    coefficients = (np.exp(x - attenuation) - np.exp(-attenuation)
                    - x * np.exp(total - attenuation))
    coefficients *= irradiance[:, :, None, None] / (4.0 * np.pi)
    # scattering angle of each downward view direction from the beam
    terms = coefficients.shape[-1]
    table = _scattering_legendre(mu0, views, block, terms, down_only=True)
    weighted = coefficients * (2.0 * np.arange(terms) + 1.0)
    summed = np.einsum("cspl,cskl->cspk", weighted, table, optimize=False)
    return summed.reshape(*summed.shape[:3], views.cosines.size, views.azimuth_radians.size)


def _spherical_peak_paths(block: Block, weighted_peak: np.ndarray, positions: Positions
                          ) -> tuple[np.ndarray, np.ndarray]:
    """The aureole's x_l and slant depth along the pseudo-spherical beam's path.

    ``weighted_peak`` (col, layer, l) is w f dt r_l of each layer; along the beam's path
    to level i it adds up with the air-mass factors, sum_j factors[i, j] w_j f_j dt_j r_jl,
    and inside a layer with the layer's secant. Returns (col, sun, pos, l) and
    (col, sun, pos, 1); dark positions get x = 0 and an infinite depth.
    """
    tau = block.optical_depth
    slant, cosine = spherical_beam(block.air_mass_factors, block.beam_reaches, tau)
    levels = np.einsum("csij,cjl->csil", block.air_mass_factors, weighted_peak,
                       optimize=False)
    layer, fraction = positions.layer, positions.fraction
    x = levels[:, :, layer] + (fraction[:, None] * weighted_peak[:, None, layer]
                               / cosine[:, :, layer, None])
    x = np.where((fraction == 1.0)[:, None], levels[:, :, np.minimum(layer + 1, tau.shape[1])],
                 x)
    depth = slant_at_positions(slant, cosine, tau, positions)[..., None]
    x = np.where(np.isfinite(depth), x, 0.0)
    return x, depth


def _scattering_legendre(mu0: np.ndarray, views: Views, block: Block, terms: int,
                         down_only: bool = False) -> np.ndarray:
    """P_l of the scattering angle from the beam into each view direction.

    (column, sun * 2 * vz * va, l), or with ``down_only`` (column, sun, vz * va, l) for the
    downward views. Shared views: once per distinct set of sun angles; per-pixel views
    (each column its own) directly.
    """
    def table(cos0: np.ndarray, own: Block | None = None) -> np.ndarray:
        cosine = scattering_cosines(cos0, views, own)
        if down_only:
            return phase.legendre_polynomials(cosine[:, :, 1].reshape(*cos0.shape, -1), terms)
        return phase.legendre_polynomials(cosine.reshape(cos0.shape[0], -1), terms)

    if views.per_pixel:
        return table(mu0, block)
    return _per_distinct_suns(mu0, table)


def _per_distinct_suns(mu0: np.ndarray, table) -> np.ndarray:
    """``table(mu0)`` computed once per distinct row of mu0 (column, sun), then gathered.

    Columns that share their sun angles (the wavelengths of a spectrum) share every table
    of the scattering angle; the values are those of the direct computation.
    """
    distinct, inverse = np.unique(mu0, axis=0, return_inverse=True)
    if distinct.shape[0] == mu0.shape[0]:
        return table(mu0)
    values = table(distinct)
    if distinct.shape[0] == 1:      # a read-only view: no copy per column
        return np.broadcast_to(values, (mu0.shape[0], *values.shape[1:]))
    return values[np.reshape(inverse, -1)]


def _contract(moments: np.ndarray, table: np.ndarray) -> np.ndarray:
    """sum_l (2l+1) moments[c, layer, l] P_l[c, k, l] -> (c, layer, k).

    einsum's own loop (no BLAS) adds the terms in order of l for every output, so that
    trailing zero moments change nothing and a chunked run equals an eager one bit for bit.
    """
    terms = moments.shape[-1]
    weighted = moments * (2.0 * np.arange(terms) + 1.0)
    return np.einsum("cln,ckn->clk", weighted, table[..., :terms], optimize=False)
