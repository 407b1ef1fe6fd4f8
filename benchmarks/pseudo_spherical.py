"""Cost of the pseudo-spherical beam: solve(planet_radius=) against the plane-parallel run.

Run ``python benchmarks/pseudo_spherical.py`` (under a minute on two cores; ``--rounds N``,
``--columns N``). The case is ``run.py``'s: random Henyey-Greenstein columns (seeded), 60
layers 1 km thick, 16 streams, one sun at 30 degrees; radiances at its 3 x 3 view
directions, and fluxes alone. Each round runs the plane-parallel solve and then the same
solve with an Earth-sized planet, one after the other; each printed ratio is the median of
the rounds' own ratios (curved / flat), with their range. The extra work is numpy on whole
arrays: the air-mass factors per block (column, sun, level, layer), the slant depths and
layer cosines of the scaled and unscaled layers, and the corrections' sums along them.
"""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))

from run import (  # noqa: E402
    SUN_ZENITH,
    VIEW_AZIMUTH,
    VIEW_ZENITH,
    interleaved,
    random_atmosphere,
    wall,
)

import lamina  # noqa: E402


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--rounds", type=int, default=5)
    parser.add_argument("--columns", type=int, default=100)
    args = parser.parse_args()
    layers = 60
    atm = random_atmosphere(args.columns, layers)
    atm = atm.assign(altitude=("level", np.linspace(1e3 * layers, 0.0, layers + 1)))
    radiances = dict(streams=16, sun_zenith=SUN_ZENITH, surface_albedo=0.1,
                     view_zenith=VIEW_ZENITH, view_azimuth=VIEW_AZIMUTH)
    fluxes = dict(streams=16, sun_zenith=SUN_ZENITH, surface_albedo=0.1)
    cases = {"radiances": radiances, "fluxes only": fluxes}
    runs = {}
    for name, options in cases.items():
        runs[name, "flat"] = (lambda o: lambda: lamina.solve(atm, **o))(options)
        runs[name, "curved"] = (lambda o: lambda: lamina.solve(atm, planet_radius=6.371e6,
                                                               **o))(options)
    for run in runs.values():   # warm-up (imports, caches)
        run()
    times = interleaved({name: wall(run) for name, run in runs.items()}, args.rounds)
    print(f"pseudo-spherical / plane-parallel beam: {args.columns} columns, {layers} layers, "
          f"16 streams, {args.rounds} rounds, load average {os.getloadavg()[0]:.1f}")
    for name in cases:
        ratios = np.asarray(times[name, "curved"]) / np.asarray(times[name, "flat"])
        print(f"{name:<12} flat best {min(times[name, 'flat']):.3f}s  median ratio "
              f"{np.median(ratios):.3f} (rounds {ratios.min():.2f}-{ratios.max():.2f})")


if __name__ == "__main__":
    main()
