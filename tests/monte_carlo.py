"""An independent Monte Carlo solver for plane-parallel layers, used to cross-check lamina.

This is a helper module for the tests, not a test file. It follows photons from a
collimated beam through a stack of homogeneous layers (optical thickness, single-scattering
albedo, Henyey-Greenstein asymmetry parameter) above a Lambertian surface, the textbook
"analog transport with survival biasing" scheme (e.g. Marchuk et al. 1980, The Monte Carlo
Methods in Atmospheric Optics; common practice):

- positions are kept in vertical optical depth tau, measured from the top, and directions
  in mu = cos(zenith of propagation), positive downwards. In these coordinates every layer
  has unit extinction per unit tau, so a free path of optical length s moves a photon by
  s * mu in tau, whatever layers it crosses.
- free paths are drawn from exp(-s); at a collision the photon's weight is multiplied by the
  layer's single-scattering albedo (the rest is tallied as absorbed) instead of being killed,
  and a new direction is drawn from the Henyey-Greenstein distribution, exactly (by inverting
  its cumulative distribution; Henyey and Greenstein 1941) with a uniform azimuth.
- at the surface the weight is multiplied by the albedo (the rest is tallied as absorbed by
  the surface) and the photon leaves upwards with a cosine-weighted (Lambertian) direction.
- a photon stops when it leaves the top or when its weight falls below ``weight_cutoff``;
  the remaining weight is then tallied as absorbed where it is, which biases the other
  tallies by less than ``weight_cutoff`` per photon and keeps energy conservation exact.

All photons of a chunk advance together as numpy arrays. Tallies are kept per photon, so
the standard error of each mean is the plain sample standard deviation over sqrt(N).
Every fraction is relative to the incident flux on a horizontal plane, S mu0.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike

__all__ = ["MonteCarloResult", "run_monte_carlo", "sample_henyey_greenstein"]


@dataclass(frozen=True)
class MonteCarloResult:
    """Fractions of the incident flux S mu0, each with its standard error (``*_error``).

    Level arrays run over the L + 1 layer boundaries, top first; the diffuse fluxes count
    every crossing of a level by a photon that has been scattered or surface-reflected.
    """

    n_photons: int
    reflected: float
    reflected_error: float
    reflected_single: float
    """Part of ``reflected`` from photons scattered exactly once (no surface contact)."""
    reflected_single_error: float
    transmitted_direct: float
    transmitted_direct_error: float
    transmitted_diffuse: float
    transmitted_diffuse_error: float
    transmitted: float
    """Total downward flux at the surface, direct plus diffuse."""
    transmitted_error: float
    absorbed: float
    """Absorbed in the atmosphere."""
    absorbed_error: float
    absorbed_surface: float
    absorbed_surface_error: float
    flux_up: np.ndarray
    flux_up_error: np.ndarray
    flux_down_diffuse: np.ndarray
    flux_down_diffuse_error: np.ndarray
    flux_down_direct: np.ndarray
    """Analog count of unscattered photons crossing each level (exact: exp(-tau/mu0))."""
    flux_down_direct_error: np.ndarray


def sample_henyey_greenstein(asymmetry_parameter: np.ndarray, uniform: np.ndarray) -> np.ndarray:
    """Cosines of scattering angles drawn from the Henyey-Greenstein phase function.

    Inverts the cumulative distribution of P_HG(mu) / 2 on [-1, 1] (Henyey and Greenstein
    1941): mu = (1 + g^2 - ((1 - g^2) / (1 - g + 2 g u))^2) / (2 g), and mu = 2 u - 1 for
    g = 0 (where that expression is 0/0).
    """
    g = np.asarray(asymmetry_parameter, dtype=float)
    u = np.asarray(uniform, dtype=float)
    isotropic = np.abs(g) < 1e-8
    safe_g = np.where(isotropic, 1.0, g)
    ratio = (1.0 - safe_g * safe_g) / (1.0 - safe_g + 2.0 * safe_g * u)
    cosine = (1.0 + safe_g * safe_g - ratio * ratio) / (2.0 * safe_g)
    return np.clip(np.where(isotropic, 2.0 * u - 1.0, cosine), -1.0, 1.0)


class _Tally:
    """Running sums of per-photon tallies and of their squares."""

    def __init__(self, shape: tuple[int, ...] = ()) -> None:
        self.total = np.zeros(shape)
        self.total_squares = np.zeros(shape)
        self.count = 0

    def add(self, per_photon: np.ndarray) -> None:
        self.total += per_photon.sum(axis=0)
        self.total_squares += (per_photon * per_photon).sum(axis=0)
        self.count += per_photon.shape[0]

    def mean_and_error(self) -> tuple[np.ndarray, np.ndarray]:
        mean = self.total / self.count
        variance = np.maximum(self.total_squares / self.count - mean * mean, 0.0)
        return mean, np.sqrt(variance / max(self.count - 1, 1))


def run_monte_carlo(
    optical_depth: ArrayLike,
    single_scattering_albedo: ArrayLike,
    asymmetry_parameter: ArrayLike,
    mu0: float,
    surface_albedo: float = 0.0,
    n_photons: int = 100_000,
    seed: int = 0,
    *,
    chunk_size: int = 250_000,
    weight_cutoff: float = 1e-9,
) -> MonteCarloResult:
    """Fluxes of a multi-layer plane-parallel atmosphere by Monte Carlo.

    Parameters
    ----------
    optical_depth, single_scattering_albedo, asymmetry_parameter : array_like
        One value per layer, top layer first (Henyey-Greenstein phase functions).
    mu0 : float
        Cosine of the solar zenith angle, in (0, 1].
    surface_albedo : float
        Lambertian surface albedo in [0, 1].
    n_photons : int
        Number of photons.
    seed : int
        Seed of ``numpy.random.default_rng``.
    chunk_size : int
        Photons traced together (bounds memory).
    weight_cutoff : float
        Weight below which a photon is stopped (its weight counted as absorbed).
    """
    tau_layer = np.atleast_1d(np.asarray(optical_depth, dtype=float))
    albedo_layer = np.atleast_1d(np.asarray(single_scattering_albedo, dtype=float))
    g_layer = np.atleast_1d(np.asarray(asymmetry_parameter, dtype=float))
    if not (tau_layer.shape == albedo_layer.shape == g_layer.shape) or tau_layer.ndim != 1:
        raise ValueError("layer inputs must be 1-D arrays of equal length")
    if np.any(tau_layer < 0) or np.any((albedo_layer < 0) | (albedo_layer > 1)):
        raise ValueError("need optical_depth >= 0 and single_scattering_albedo in [0, 1]")
    if np.any(np.abs(g_layer) >= 1):
        raise ValueError("asymmetry_parameter must lie in (-1, 1)")
    if not 0.0 < mu0 <= 1.0 or not 0.0 <= surface_albedo <= 1.0:
        raise ValueError("need mu0 in (0, 1] and surface_albedo in [0, 1]")

    levels = np.concatenate([[0.0], np.cumsum(tau_layer)])
    n_levels = levels.size
    rng = np.random.default_rng(seed)

    scalar_names = (
        "reflected",
        "reflected_single",
        "transmitted_direct",
        "transmitted_diffuse",
        "transmitted",
        "absorbed",
        "absorbed_surface",
    )
    tallies = {name: _Tally() for name in scalar_names}
    tallies["flux_up"] = _Tally((n_levels,))
    tallies["flux_down_diffuse"] = _Tally((n_levels,))
    tallies["flux_down_direct"] = _Tally((n_levels,))

    remaining = n_photons
    while remaining > 0:
        size = min(chunk_size, remaining)
        remaining -= size
        chunk = _trace_chunk(
            size,
            levels,
            albedo_layer,
            g_layer,
            mu0,
            surface_albedo,
            weight_cutoff,
            rng,
        )
        chunk["transmitted"] = chunk["transmitted_direct"] + chunk["transmitted_diffuse"]
        for name, tally in tallies.items():
            tally.add(chunk[name])

    fields: dict[str, object] = {"n_photons": n_photons}
    for name, tally in tallies.items():
        mean, error = tally.mean_and_error()
        if mean.ndim == 0:
            mean, error = float(mean), float(error)
        fields[name] = mean
        fields[f"{name}_error"] = error
    return MonteCarloResult(**fields)


def _trace_chunk(
    size: int,
    levels: np.ndarray,
    albedo_layer: np.ndarray,
    g_layer: np.ndarray,
    mu0: float,
    surface_albedo: float,
    weight_cutoff: float,
    rng: np.random.Generator,
) -> dict[str, np.ndarray]:
    """Trace ``size`` photons to the end; return per-photon tallies."""
    n_levels = levels.size
    n_layers = n_levels - 1
    total_tau = levels[-1]
    out = {
        name: np.zeros(size)
        for name in (
            "reflected",
            "reflected_single",
            "transmitted_direct",
            "transmitted_diffuse",
            "absorbed",
            "absorbed_surface",
        )
    }
    flux_up = np.zeros((size, n_levels))
    flux_down = np.zeros((size, n_levels))
    flux_direct = np.zeros((size, n_levels))

    # State of the photons still in flight; ``ids`` maps them to their tallies.
    ids = np.arange(size)
    tau = np.zeros(size)
    mu = np.full(size, mu0)
    weight = np.ones(size)
    diffuse = np.zeros(size, dtype=bool)  # scattered or surface-reflected at least once
    collisions = np.zeros(size, dtype=np.int64)
    touched_surface = np.zeros(size, dtype=bool)

    while ids.size:
        new_tau = tau + rng.standard_exponential(ids.size) * mu

        # Level crossings. A downward flight crosses levels in (tau, new_tau], an upward one
        # those in [new_tau, tau]; new_tau is not clipped, so leaving the top counts level 0
        # and arriving at the surface (or leaving it) counts level L. Unscattered photons
        # start at tau = 0 and so count level 0 only through the incident beam (below).
        going_down = (mu > 0.0)[:, np.newaxis]
        start, end = tau[:, np.newaxis], new_tau[:, np.newaxis]
        crosses_down = going_down & (start < levels) & (levels <= end)
        crosses_up = ~going_down & (end <= levels) & (levels <= start)
        weighted = weight[:, np.newaxis]
        is_diffuse = diffuse[:, np.newaxis]
        flux_down[ids] += (crosses_down & is_diffuse) * weighted
        flux_direct[ids] += (crosses_down & ~is_diffuse) * weighted
        flux_up[ids] += crosses_up * weighted

        escaped = new_tau < 0.0
        at_surface = new_tau > total_tau
        collided = ~(escaped | at_surface)

        # Leaving the top.
        escaped_ids = ids[escaped]
        out["reflected"][escaped_ids] += weight[escaped]
        single = escaped & (collisions == 1) & ~touched_surface
        out["reflected_single"][ids[single]] += weight[single]

        # Reaching the Lambertian surface.
        surface_ids = ids[at_surface]
        first_arrival = at_surface & ~diffuse
        out["transmitted_direct"][ids[first_arrival]] += weight[first_arrival]
        later_arrival = at_surface & diffuse
        out["transmitted_diffuse"][ids[later_arrival]] += weight[later_arrival]
        out["absorbed_surface"][surface_ids] += weight[at_surface] * (1.0 - surface_albedo)
        weight[at_surface] *= surface_albedo
        # Lambertian reflection: the cosine of the upward direction has density 2 mu.
        mu[at_surface] = -np.sqrt(rng.random(surface_ids.size))
        tau[at_surface] = total_tau
        diffuse[at_surface] = True
        touched_surface[at_surface] = True

        # Collisions inside the atmosphere: survival biasing, then a new direction.
        n_collided = int(collided.sum())
        if n_collided:
            where = new_tau[collided]
            layer = np.clip(np.searchsorted(levels, where, side="right") - 1, 0, n_layers - 1)
            albedo = albedo_layer[layer]
            out["absorbed"][ids[collided]] += weight[collided] * (1.0 - albedo)
            weight[collided] *= albedo
            cosine = sample_henyey_greenstein(g_layer[layer], rng.random(n_collided))
            azimuth = 2.0 * np.pi * rng.random(n_collided)
            old_mu = mu[collided]
            sine_product = np.sqrt(
                np.maximum(1.0 - old_mu * old_mu, 0.0) * np.maximum(1.0 - cosine * cosine, 0.0)
            )
            mu[collided] = np.clip(old_mu * cosine + sine_product * np.cos(azimuth), -1.0, 1.0)
            tau[collided] = where
            diffuse[collided] = True
            collisions[collided] += 1

        # Stop photons that left, or whose weight no longer matters.
        faded = ~escaped & (weight < weight_cutoff)
        out["absorbed"][ids[faded]] += weight[faded]
        keep = ~(escaped | faded)
        ids, tau, mu, weight = ids[keep], tau[keep], mu[keep], weight[keep]
        diffuse, collisions = diffuse[keep], collisions[keep]
        touched_surface = touched_surface[keep]

    out["flux_up"] = flux_up
    out["flux_down_diffuse"] = flux_down
    flux_direct[:, 0] = 1.0  # the incident beam itself, S mu0 at the top
    out["flux_down_direct"] = flux_direct
    return out
