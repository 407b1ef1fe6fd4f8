"""Speed of radiances over a bidirectional surface against the same run over a Lambertian one.

Run ``python benchmarks/surface.py`` (about a minute on two cores; ``--rounds N``,
``--columns N``). The case is ``run.py``'s: random Henyey-Greenstein columns (seeded), 60
layers, 16 streams, one sun at 30 degrees, radiances at its 3 x 3 view directions. Each
round runs ``lamina.solve`` over the Lambertian ``surface_albedo`` and then over each
bidirectional surface (Rahman-Pinty-Verstraete, Ross-Li, Cox-Munk glint at 5 m/s, Hapke),
one after the other so that all see the same machine; each printed ratio is the median of
the rounds' own ratios (bidirectional / Lambertian), with their range. The bidirectional
runs do more: the BRDF's Fourier terms on the quadrature and view cosines (in Python, once
per run for a surface shared by every column), an n x n reflection matrix per term in the
boundary condition and the exact reflected beam at the view angles. Prints ratios, not
pass/fail timings; the target (issue 14) is 1.15.
"""

from __future__ import annotations

import argparse
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

SURFACES = {
    "rahman_pinty_verstraete": lambda: lamina.surface.rahman_pinty_verstraete(0.1, 0.7, -0.2),
    "ross_li": lambda: lamina.surface.ross_li(0.1, 0.05, 0.02),
    "cox_munk (5 m/s)": lambda: lamina.surface.cox_munk(5.0),
    "hapke": lambda: lamina.surface.hapke(0.5, -0.2, 0.8, 0.06),
}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--rounds", type=int, default=7)
    parser.add_argument("--columns", type=int, default=200)
    parser.add_argument("--layers", type=int, default=60)
    args = parser.parse_args()
    atmosphere = random_atmosphere(args.columns, args.layers)
    common = dict(streams=16, sun_zenith=SUN_ZENITH, view_zenith=VIEW_ZENITH,
                  view_azimuth=VIEW_AZIMUTH)
    surfaces = {name: make() for name, make in SURFACES.items()}
    runs = {"lambertian": lambda: lamina.solve(atmosphere, surface_albedo=0.1, **common)}
    for name, surface in surfaces.items():
        runs[name] = (lambda s: lambda: lamina.solve(atmosphere, surface=s, **common))(surface)
    for run in runs.values():   # warm-up (imports, caches)
        run()
    times = interleaved({name: wall(run) for name, run in runs.items()}, args.rounds)
    base = np.asarray(times["lambertian"])
    print(f"radiances over a bidirectional surface / over a Lambertian one: {args.columns} "
          f"columns, {args.layers} layers, 16 streams, {len(VIEW_ZENITH)} x "
          f"{len(VIEW_AZIMUTH)} views, {args.rounds} rounds")
    print(f"{'surface':<28}{'best time':>10}  {'median ratio':>12}  rounds     target")
    print(f"{'lambertian (surface_albedo)':<28}{base.min():>9.3f}s")
    for name in surfaces:
        ratios = np.asarray(times[name]) / base
        print(f"{name:<28}{min(times[name]):>9.3f}s  {np.median(ratios):>12.3f}  "
              f"{ratios.min():.2f}-{ratios.max():.2f}  <= 1.15")


if __name__ == "__main__":
    main()
