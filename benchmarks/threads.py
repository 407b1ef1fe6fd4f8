"""Flux runs at 64 and 128 streams with OpenBLAS's default thread pool against one thread.

Run ``python benchmarks/threads.py`` (``--rounds N``, ``--columns N``; a few minutes on two
cores). Do not set OPENBLAS_NUM_THREADS: the point is the default pool. The case is
``run.py``'s random Henyey-Greenstein columns (seeded), 60 layers, one sun, fluxes only.
lamina limits the BLAS pool to one thread around the kernel call
(``lamina._solver.kernel_call.single_blas_thread``); the "default pool" runs switch that off
(``kernel_call.LIMIT_BLAS_THREADS = False``), which is lamina before the limit. Each round
runs both, one after the other; the printed ratio (default / limited) is the median of the
rounds' own ratios, with their range. Also printed: what one entry of the limit costs
(microseconds, median of many), against threadpoolctl's own context manager.
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

from run import SUN_ZENITH, random_atmosphere  # noqa: E402
from threadpoolctl import threadpool_info, threadpool_limits  # noqa: E402

import lamina  # noqa: E402
from lamina._solver import kernel_call  # noqa: E402


def timed(function) -> float:
    start = time.perf_counter()
    function()
    return time.perf_counter() - start


def entry_cost(count: int = 2000) -> tuple[float, float]:
    """Median microseconds of one entry and exit: lamina's limit, threadpoolctl's."""
    def ours():
        with kernel_call.single_blas_thread():
            pass

    def theirs():
        with threadpool_limits(limits=1, user_api="blas"):
            pass

    return tuple(float(np.median([timed(f) for _ in range(n)])) * 1e6
                 for f, n in ((ours, count), (theirs, count // 20)))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--rounds", type=int, default=5)
    parser.add_argument("--columns", type=int, default=4)
    parser.add_argument("--layers", type=int, default=60)
    args = parser.parse_args()
    warnings.simplefilter("ignore", lamina.LaminaWarning)   # short phase series: see run.py
    pools = [pool["num_threads"] for pool in threadpool_info() if pool["user_api"] == "blas"]
    atmosphere = random_atmosphere(args.columns, args.layers)
    load = os.getloadavg()[0]
    rows = []
    for streams in (64, 128):
        def run(limited, streams=streams):
            kernel_call.LIMIT_BLAS_THREADS = limited
            try:
                return timed(lambda: lamina.solve(atmosphere, streams=streams,
                                                  sun_zenith=SUN_ZENITH, surface_albedo=0.1))
            finally:
                kernel_call.LIMIT_BLAS_THREADS = True

        run(True)   # warm-up
        limited, default = [], []
        for _ in range(args.rounds):
            limited.append(run(True))
            default.append(run(False))
        ratios = np.asarray(default) / np.asarray(limited)
        rows.append((streams, min(limited), min(default), ratios))
    ours, theirs = entry_cost()
    print(f"fluxes, {args.columns} columns x {args.layers} layers, one sun; BLAS pools "
          f"{pools} threads by default; {args.rounds} rounds; {os.cpu_count()} cpus, load "
          f"average {load:.1f} before and {os.getloadavg()[0]:.1f} after")
    print(f"{'streams':>8}{'one thread':>12}{'default pool':>14}{'median ratio':>14}  rounds")
    for streams, one, many, ratios in rows:
        print(f"{streams:>8}{one:>11.2f}s{many:>13.2f}s{np.median(ratios):>14.2f}  "
              f"{ratios.min():.2f}-{ratios.max():.2f}")
    print(f"one entry of the limit: {ours:.0f} us (threadpoolctl's threadpool_limits: "
          f"{theirs:.0f} us)")


if __name__ == "__main__":
    main()
