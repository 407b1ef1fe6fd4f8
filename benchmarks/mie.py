"""Speed of :func:`lamina.mie.lognormal_optics` against the one-sphere-at-a-time approach.

Run ``python benchmarks/mie.py`` (about four minutes on two cores with the default three
rounds; ``--rounds N`` to change). The case is a broad cloud-droplet distribution (median
radius 8 um, geometric standard deviation 1.5, 64 phase moments) at two wavelengths
(0.55 um, m = 1.33 + 1e-8 i; 1.6 um, m = 1.30 + 2e-4 i), the case of issue 12 that took
over 30 s. Both sides use the same size quadrature (the same nodes and weights) and the
same exact Gauss-Legendre projection in angle; they differ only in how the single-sphere
Mie series are evaluated:

* per sphere (lamina before issue 12): ``miepython.efficiencies_mx`` and one
  ``miepython.coefficients`` call per (wavelength, size node) from Python, all spheres
  padded to the longest series, then one complex matrix product for the amplitudes;
* vectorised (now): lamina's own recurrences over the order n run on all spheres of a block
  at once, blocks padded only to their own longest series, amplitudes as real matrix
  products of S1 + S2 and S1 - S2.

Measured in rounds (per-sphere, then vectorised, one after the other so both see the same
machine); the printed ratio is the median of the rounds' own ratios, with their range, and
the times are the medians. The largest differences between the two results are printed too
(the accuracy the speed-up keeps). Prints ratios, not pass/fail timings.
"""

from __future__ import annotations

import argparse
import statistics
import time

import miepython
import numpy as np
from scipy import special

from lamina import mie

WAVELENGTHS = np.array([0.55, 1.6])
INDEX = np.array([1.33 + 1e-8j, 1.30 + 2e-4j])
MEDIAN_RADIUS, SIGMA, N_MOMENTS = 8.0, 1.5, 64


def per_sphere_optics(wavelengths, index, median_radius, sigma, n_moments):
    """The former implementation: miepython called once per sphere from Python."""
    log_width = np.log(sigma)
    area_median = median_radius * np.exp(2.0 * log_width**2)
    standard, weights, _ = mie._size_quadrature(
        2.0 * np.pi * area_median / wavelengths.min(), log_width, mie.DEFAULT_WIDTH_CUTOFF, None
    )
    radii = area_median * np.exp(log_width * standard)
    x = 2.0 * np.pi * radii[np.newaxis, :] / wavelengths[:, np.newaxis]
    m = np.ascontiguousarray(np.broadcast_to(np.conj(index)[:, np.newaxis], x.shape).ravel())
    q_ext, q_sca, _, g = (
        np.asarray(v).reshape(x.shape) for v in miepython.efficiencies_mx(m, x.ravel())
    )
    coefficients = [miepython.coefficients(mi, xi) for mi, xi in zip(m, x.ravel(), strict=True)]
    n_terms = max(pair.shape[-1] for pair in coefficients)
    a_n = np.zeros((x.size, n_terms), dtype=complex)
    b_n = np.zeros((x.size, n_terms), dtype=complex)
    for sphere, (a, b) in enumerate(coefficients):
        a_n[sphere, : a.size], b_n[sphere, : b.size] = a, b
    n_angles = n_terms + (n_moments + 1) // 2 + 1
    cosines, angle_weights = special.roots_legendre(n_angles)
    angular_pi, angular_tau = mie._angular_functions(cosines, n_terms)
    order = np.arange(1, n_terms + 1)
    scale = (2.0 * order + 1.0) / (order * (order + 1.0))
    s1 = (a_n * scale) @ angular_pi + (b_n * scale) @ angular_tau
    s2 = (a_n * scale) @ angular_tau + (b_n * scale) @ angular_pi
    intensity = (0.5 * (np.abs(s1) ** 2 + np.abs(s2) ** 2)).reshape(x.shape + (n_angles,))
    phase_function = np.einsum("wrk,r->wk", intensity / x[..., np.newaxis] ** 2, weights)
    weighted = phase_function * angle_weights
    legendre = np.polynomial.legendre.legvander(cosines, n_moments - 1)
    moments = weighted @ legendre / weighted.sum(axis=-1, keepdims=True)
    return {
        "extinction_efficiency": q_ext @ weights,
        "scattering_efficiency": q_sca @ weights,
        "asymmetry_parameter": (q_sca * g) @ weights / (q_sca @ weights),
        "phase_moments": moments,
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rounds", type=int, default=3)
    rounds = parser.parse_args().rounds
    old_times, new_times, ratios = [], [], []
    for _ in range(rounds):
        start = time.perf_counter()
        old = per_sphere_optics(WAVELENGTHS, INDEX, MEDIAN_RADIUS, SIGMA, N_MOMENTS)
        old_times.append(time.perf_counter() - start)
        start = time.perf_counter()
        new = mie.lognormal_optics(WAVELENGTHS, INDEX, MEDIAN_RADIUS, SIGMA, N_MOMENTS)
        new_times.append(time.perf_counter() - start)
        ratios.append(old_times[-1] / new_times[-1])
    print(f"size nodes per wavelength: {new.attrs['radius_nodes']}, "
          f"angle nodes (largest): {new.attrs['angle_nodes']}")
    print(f"per-sphere loop:  median {statistics.median(old_times):7.2f} s over {rounds} rounds")
    print(f"vectorised call:  median {statistics.median(new_times):7.2f} s")
    print(f"speed-up: median {statistics.median(ratios):.1f}x "
          f"(range {min(ratios):.1f} - {max(ratios):.1f}; target 20x)")
    for name, values in old.items():
        difference = np.max(np.abs(new[name].values - values) / np.maximum(np.abs(values), 1e-3))
        print(f"largest relative difference in {name}: {difference:.1e}")


if __name__ == "__main__":
    main()
