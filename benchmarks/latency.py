"""One column at a time: the total time of a one-column call against its share of a batch.

Run ``python benchmarks/latency.py`` (``--rounds N``; a minute or two on two cores). The
case is ``run.py``'s random Henyey-Greenstein columns (seeded): 60 layers, 16 streams, one
sun at 30 degrees, fluxes alone and with radiances at 3 x 3 views. Each round times a
200-column call (its share: time / 200) and, right after, one-column calls on the first
column (the median of ``--calls`` calls), for ``lamina.solve`` and for ``lamina.Solver``
(prepared once, called with numpy arrays). The printed ratios (one-column time / share of
the 200-column ``solve`` call) are medians of the rounds' own ratios, with their range; the
target (issue 16) is 1.5. Prints ratios, not pass/fail timings.
"""

from __future__ import annotations

import argparse
import os
import sys
import time
import warnings
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))

from run import SUN_ZENITH, VIEW_AZIMUTH, VIEW_ZENITH, random_atmosphere  # noqa: E402

import lamina  # noqa: E402


def timed(function) -> float:
    start = time.perf_counter()
    function()
    return time.perf_counter() - start


def measure(atmosphere, views: dict, rounds: int, calls: int) -> dict[str, np.ndarray]:
    """Per round: the 200-column share and the one-column times (solve, Solver)."""
    columns = atmosphere.sizes["wavelength"]
    one = atmosphere.isel(wavelength=slice(0, 1))
    common = dict(streams=16, sun_zenith=SUN_ZENITH, **views)
    solver = lamina.Solver(**common)
    arrays = [atmosphere[name].values for name in
              ("optical_depth", "single_scattering_albedo", "phase_moments")]
    first = [array[0] for array in arrays]
    runs = {
        "solve, 200 columns": lambda: lamina.solve(atmosphere, surface_albedo=0.1, **common),
        "solve, one column": lambda: lamina.solve(one, surface_albedo=0.1, **common),
        "Solver, 200 columns": lambda: solver(*arrays, surface_albedo=0.1),
        "Solver, one column": lambda: solver(*first, surface_albedo=0.1),
    }
    for run in runs.values():   # warm-up (imports, caches)
        run()
    times = {name: [] for name in runs}
    for _ in range(rounds):
        for name, run in runs.items():
            if "200" in name:
                times[name].append(timed(run) / columns)
            else:
                times[name].append(float(np.median([timed(run) for _ in range(calls)])))
    return {name: np.asarray(values) for name, values in times.items()}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--rounds", type=int, default=5)
    parser.add_argument("--calls", type=int, default=15)
    parser.add_argument("--columns", type=int, default=200)
    parser.add_argument("--layers", type=int, default=60)
    args = parser.parse_args()
    warnings.simplefilter("ignore", lamina.LaminaWarning)   # short phase series: see run.py
    atmosphere = random_atmosphere(args.columns, args.layers)
    load = os.getloadavg()[0]
    cases = {"fluxes": {}, "radiances": dict(view_zenith=VIEW_ZENITH,
                                             view_azimuth=VIEW_AZIMUTH)}
    results = {case: measure(atmosphere, views, args.rounds, args.calls)
               for case, views in cases.items()}
    print(f"one column against its share of a {args.columns}-column solve call: "
          f"{args.layers} layers, 16 streams, one sun, {args.rounds} rounds of "
          f"{args.calls} one-column calls; {os.cpu_count()} cpus, load average {load:.1f} "
          f"before and {os.getloadavg()[0]:.1f} after; times: medians, ms")
    print(f"{'case':<11}{'call':<22}{'time':>8}  {'ratio to the share':>18}  rounds  target")
    for case, times in results.items():
        share = times["solve, 200 columns"]
        for name, values in times.items():
            ratios = values / share
            target = "<= 1.5" if "one column" in name else ""
            print(f"{case:<11}{name:<22}{np.median(values) * 1e3:>8.2f}  "
                  f"{np.median(ratios):>18.2f}  {ratios.min():.2f}-{ratios.max():.2f}  "
                  f"{target}")


if __name__ == "__main__":
    main()
