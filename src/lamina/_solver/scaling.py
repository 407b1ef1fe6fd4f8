"""Scale step: the layers the kernel sees, on whole arrays of one block.

Delta-M scaling (Wiscombe 1977) removes the forward peak that the streams cannot carry and
counts the light scattered into it as unscattered; the truncated fraction f of each layer
is kept for the corrections. Where the scaled moments would leave [-1, 1] (a backward
peak), the backward-peak rule keeps the layer unscaled with Cesaro (C, 2) means of its
truncated Legendre series. Without delta-M the moments are only cut (or zero-padded) to
the streams.
"""

from __future__ import annotations

import numpy as np

from lamina import phase
from lamina._solver.common import Layers


def scale_layers(
    tau: np.ndarray, albedo: np.ndarray, moments: np.ndarray, streams: int, delta_m: bool,
) -> Layers:
    """The kernel's layers: delta-M scaled (with the backward-peak rule), or cut to streams."""
    if delta_m:
        scaled = phase.delta_m_scale(tau, albedo, moments, streams)
        tau_s = np.ascontiguousarray(scaled.scaled_optical_depth, dtype=np.float64)
        albedo_s = np.ascontiguousarray(scaled.scaled_single_scattering_albedo)
        moments_s = np.ascontiguousarray(scaled.scaled_phase_moments)
        truncation = np.asarray(scaled.truncation_fraction, dtype=np.float64)
        _backward_peaks(tau, albedo, moments, tau_s, albedo_s, moments_s, truncation)
    else:
        ncol, nlayer, nmom = moments.shape
        truncation = np.zeros_like(tau)
        tau_s, albedo_s = np.ascontiguousarray(tau), np.ascontiguousarray(albedo)
        moments_s = np.zeros((ncol, nlayer, streams))
        used = min(nmom, streams)
        moments_s[..., :used] = moments[..., :used]
    return Layers(optical_depth=tau_s, single_scattering_albedo=albedo_s,
                  phase_moments=moments_s, truncation=truncation)


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
