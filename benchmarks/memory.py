"""Peak memory of resumable spectral runs against their length (``lamina run`` in a subprocess).

Each run is a fresh Python process that calls ``lamina.cli.main(["run", ...])`` on an invented
scenario (two constituents on four layers, 4 streams, 32 phase moments, fluxes only) with a
fixed chunk size, and reports its own peak resident set size (``resource.getrusage``,
``ru_maxrss``). With memory bounded by the chunk, the peak is flat in the run's length; the
last column is the peak against the shortest run's.

    python benchmarks/memory.py                      # 20k, 60k, 200k wavelengths
    python benchmarks/memory.py --sizes 2000 20000   # quicker
    python benchmarks/memory.py --eager              # also one eager lamina.solve per size
    python benchmarks/memory.py --eager --views      # the eager solves with radiances

With ``--eager`` each size also runs ``lamina.solve`` on the whole atmosphere in memory (a
fresh process): the atmosphere's size (its data variables, MB), the peak RSS once the
scenario has built it, the peak of the whole run, and that peak against the inputs' size.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

SCENARIO = """
title = "memory benchmark"
[spectrum]
wavelength = {{start = 0.4, stop = 2.4, count = {count}}}
[atmosphere]
pressure = [1e3, 2e4, 5e4, 8e4, 1e5]
[[atmosphere.constituent]]
name = "air"
optical_depth = [0.01, 0.02, 0.03, 0.04]
single_scattering_albedo = 1.0
phase = {{kind = "rayleigh"}}
spectral_dependence = "rayleigh"
[[atmosphere.constituent]]
name = "cloud"
optical_depth = [0.0, 2.0, 1.0, 0.0]
single_scattering_albedo = 0.99
phase = {{kind = "henyey_greenstein", asymmetry_parameter = 0.8}}
[sun]
zenith = 40
[surface]
albedo = 0.1
[solver]
streams = 4
phase_moments = 32
[output]
variables = ["flux_up", "flux_down"]
"""

CHILD = """
import resource, sys
from lamina.cli import main
status = main(sys.argv[1:])
print("PEAK", resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, status)
"""

EAGER = """
import resource, sys
import lamina
from lamina.scenario import load_scenario
scenario = load_scenario(sys.argv[1])
atmosphere = scenario.build_atmosphere()
inputs = sum(array.nbytes for array in atmosphere.data_vars.values())
built = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
views = {"view_zenith": [0.0, 30.0, 60.0], "view_azimuth": [0.0, 90.0, 180.0]}
result = lamina.solve(atmosphere, **scenario.solve_kwargs(), **(views if sys.argv[2:] else {}))
print("BUILT", built, inputs)
print("PEAK", resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, 0)
"""


def _child(code: str, arguments: list[str]) -> tuple[float, float, list[str]]:
    """Peak RSS (MB) and seconds of one fresh process, and its printed lines."""
    environment = {**os.environ, "OPENBLAS_NUM_THREADS": "1"}
    start = time.perf_counter()
    completed = subprocess.run([sys.executable, "-c", code, *arguments], capture_output=True,
                               text=True, env=environment, check=False)
    seconds = time.perf_counter() - start
    lines = [line for line in completed.stdout.splitlines() if line.startswith("PEAK")]
    if completed.returncode != 0 or not lines:
        raise SystemExit(f"run failed: {completed.stderr.strip()[-2000:]}")
    # ru_maxrss is in kB on Linux
    return int(lines[-1].split()[1]) / 1024, seconds, completed.stdout.splitlines()


def _eager(scenario: Path, views: bool) -> str:
    """Eager columns: input MB, peak after building the atmosphere, peak of the run, ratio."""
    peak, _, lines = _child(EAGER, [str(scenario), *(["views"] if views else [])])
    built, inputs = next(line.split()[1:] for line in lines if line.startswith("BUILT"))
    inputs_mb = int(inputs) / 1e6
    return (f" {inputs_mb:>9.0f} {int(built) / 1024:>9.0f} {peak:>10.0f}"
            f" {peak / inputs_mb:>8.2f}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=int, nargs="+", default=[20_000, 60_000, 200_000])
    parser.add_argument("--chunk-size", type=int, default=5000)
    parser.add_argument("--eager", action="store_true")
    parser.add_argument("--views", action="store_true",
                        help="the eager solves also ask for radiances at 3 x 3 views")
    args = parser.parse_args()
    print(f"load average at start: {os.getloadavg()[0]:.1f}; chunk size {args.chunk_size}")
    print(f"{'wavelengths':>12} {'run peak MB':>12} {'seconds':>8} {'ratio':>6}"
          + (f" {'inputs MB':>9} {'built MB':>9} {'eager peak':>10} {'/inputs':>8}"
             if args.eager else ""))
    first = None
    with tempfile.TemporaryDirectory() as folder:
        for count in args.sizes:
            scenario = Path(folder) / f"s{count}.toml"
            scenario.write_text(SCENARIO.format(count=count))
            output = Path(folder) / f"out{count}.nc"
            peak, seconds, _ = _child(CHILD, ["run", str(scenario), "-o", str(output),
                                           "--chunk-size", str(args.chunk_size),
                                           "--no-progress"])
            first = first or peak
            line = f"{count:>12} {peak:>12.0f} {seconds:>8.1f} {peak / first:>6.2f}"
            if args.eager:
                line += _eager(scenario, args.views)
            print(line, flush=True)
    print(f"load average at end: {os.getloadavg()[0]:.1f}")


if __name__ == "__main__":
    main()
