"""Speed of a phase curve against one radiance run of the local geometries it needs.

Run ``python benchmarks/phase_curve.py`` (about a minute on two cores; ``--rounds N``,
``--wavelengths N``). The case is the one of ``lamina.planet``'s docstring: 3 layers of
Henyey-Greenstein haze over a Lambertian ground, 32 moments, 16 streams, 20 phase angles,
the default disk orders (16 mu0 points, 8 angles). Each round times, one after the other so
that all see the same machine:

- ``phase_curve``: the whole result (the 20 phase angles, the geometric albedo and the 12
  phase-integral angles; one solve per mu0 node at the K + 1 = 32 sample azimuths of the
  cosine series);
- the radiance run: every local geometry (mu0, mu) of the 20 asked phase angles once, at
  one azimuth, as one ``lamina.solve`` per mu0 node with exactly that node's view cosines:
  the least radiance work those geometries take with lamina's solve.

Printed: the median over rounds of each round's ratio (phase curve / radiance run) and its
range, with the load average. The target (issue 19) is 3. Prints ratios, not pass/fail
timings.
"""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

import numpy as np

import lamina
from lamina.planet import disk_nodes

sys.path.insert(0, str(Path(__file__).resolve().parent))
from run import interleaved, wall  # noqa: E402


def atmosphere(wavelengths: int):
    tau = np.array([0.05, 0.3, 1.0])
    albedo = np.array([0.999, 0.99, 0.95])
    phase = lamina.phase.henyey_greenstein(np.array([0.0, 0.6, 0.75]), 32)
    if wavelengths == 1:
        return lamina.make_atmosphere(tau, albedo, phase)
    scale = np.linspace(0.5, 1.5, wavelengths)[:, None]
    return lamina.make_atmosphere(scale * tau, albedo, phase, extra_dims=["wavelength"])


def radiance_run(atm, angles: np.ndarray, streams: int) -> None:
    nodes = disk_nodes(angles, 16, 8)
    sun_zenith = np.degrees(np.arccos(nodes["sun_cosine"]))
    for sun in np.unique(nodes["sun_index"]):
        pick = nodes["sun_index"] == sun
        views = np.unique(np.degrees(np.arccos(nodes["view_cosine"][pick])))
        lamina.solve(atm, streams=streams, sun_zenith=float(sun_zenith[sun]),
                     surface_albedo=0.2, view_zenith=views, view_azimuth=[0.0],
                     output_levels=[0])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--rounds", type=int, default=5)
    parser.add_argument("--wavelengths", type=int, default=1)
    args = parser.parse_args()
    atm = atmosphere(args.wavelengths)
    angles = np.linspace(0.0, 171.0, 20)
    streams = 16
    runs = {
        "phase_curve": lambda: lamina.planet.phase_curve(atm, angles, streams,
                                                         surface_albedo=0.2),
        "radiance run": lambda: radiance_run(atm, angles, streams),
    }
    for run in runs.values():   # warm-up (imports, caches)
        run()
    times = interleaved({name: wall(run) for name, run in runs.items()}, args.rounds)
    ratios = np.asarray(times["phase_curve"]) / np.asarray(times["radiance run"])
    print(f"phase curve / radiance run of its local geometries: 20 phase angles, 3 layers, "
          f"32 moments, {streams} streams, {args.wavelengths} wavelength(s), {args.rounds} "
          f"rounds, load average {os.getloadavg()[0]:.1f}")
    for name in runs:
        print(f"{name:<14}best {min(times[name]):.3f}s  median {np.median(times[name]):.3f}s")
    print(f"median ratio {np.median(ratios):.2f} (range {ratios.min():.2f}-{ratios.max():.2f}),"
          " target <= 3")


if __name__ == "__main__":
    main()
