"""The kernel's cost in instructions, counted by valgrind: the same numbers on any load.

Run ``python benchmarks/instructions.py`` (about three minutes on two cores; needs
``valgrind``). Timings on a shared virtual machine drift by tens of percent within a minute
(see ``run.py``); instruction counts do not: callgrind gives the same count for the same
binary and input whatever else the machine is doing. They are not times (a division or an
exponential costs more cycles than an addition, LAPACK's vectorised loops fewer), so this
script complements ``run.py`` and does not replace it.

Each configuration runs ``lamina.solve`` once in a child process under
``valgrind --tool=callgrind``, counting only inside the kernel's ``solve_columns``
(``--toggle-collect``), on the benchmark's random Henyey-Greenstein columns (16 streams).
The LAPACK floor is the part of that count spent inside the calls the floor of ``run.py``
contains (dpotrf, dgesvd, dgbtrf, dgbtrs), read from the same profile, so the ratio is
exact for the kernel; the Python front end is not counted here.
"""

from __future__ import annotations

import argparse
import os
import re
import shutil
import subprocess
import sys
import tempfile
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
FLOOR_ROUTINES = ("dpotrf", "dgesvd", "dgbtrf", "dgbtrs")

CHILD = """
import sys
sys.path.insert(0, {here!r})
import lamina
from run import FOUR_SUNS, SURFACE_ALBEDO, SUN_ZENITH, VIEW_AZIMUTH, VIEW_ZENITH, random_atmosphere
atmosphere = random_atmosphere({columns}, {layers})
views = dict(view_zenith=VIEW_ZENITH, view_azimuth=VIEW_AZIMUTH) if {radiance} else {{}}
lamina.solve(atmosphere, streams=16, sun_zenith=FOUR_SUNS if {four} else SUN_ZENITH,
             surface_albedo=SURFACE_ALBEDO, **views)
"""


def count(columns: int, layers: int, radiance: bool, four: bool) -> dict[str, int]:
    """Instructions inside solve_columns, and inside each floor routine, for one solve."""
    with tempfile.TemporaryDirectory() as folder:
        out = Path(folder) / "callgrind.out"
        script = CHILD.format(here=str(HERE), columns=columns, layers=layers,
                              radiance=radiance, four=four)
        environment = dict(os.environ, OPENBLAS_NUM_THREADS="1")
        subprocess.run(
            ["valgrind", "--tool=callgrind", f"--callgrind-out-file={out}",
             # the Python-facing wrapper only (in lamina/_kernel/driver.pyx): a pattern that
             # also matched the function it calls would toggle counting off again on entering it
             "--toggle-collect=__pyx_pw_*lamina_7_kernel_6driver_*solve_columns",
             sys.executable,
             "-c", script],
            check=True, env=environment, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        report = subprocess.run(
            ["callgrind_annotate", "--inclusive=yes", "--threshold=100", str(out)],
            check=True, capture_output=True, text=True).stdout
    counts = {"total": _inclusive(report, r"lamina_7_kernel_6driver_\d+solve_columns")}
    for routine in FLOOR_ROUTINES:
        counts[routine] = _inclusive(report, rf"cython_lapack_{routine}\b")
    return counts


def _inclusive(report: str, pattern: str) -> int:
    """The largest inclusive count of a function whose name matches ``pattern``."""
    best = 0
    for line in report.splitlines():
        match = re.match(r"^\s*([\d,]+)\s+\([^)]*\)\s+(\S+)", line)
        if match and re.search(pattern, match.group(2)):
            best = max(best, int(match.group(1).replace(",", "")))
    if best == 0:
        raise RuntimeError(f"no function matching {pattern!r} in the callgrind report")
    return best


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--columns", type=int, default=10, help="columns per solve")
    args = parser.parse_args()
    if shutil.which("valgrind") is None or shutil.which("callgrind_annotate") is None:
        sys.exit("instructions.py needs valgrind (with callgrind_annotate) on the PATH")
    columns = args.columns
    layer_sizes = [20, 60, 180]
    jobs = {
        ("fluxes", 1): (columns, 60, False, False),
        ("fluxes", 4): (columns, 60, False, True),
        ("radiances", 1): (columns, 60, True, False),
        ("radiances", 4): (columns, 60, True, True),
    }
    for size in layer_sizes:
        jobs["layers", size] = (columns, size, True, False)
    with ThreadPoolExecutor(max_workers=os.cpu_count() or 1) as pool:
        futures = {key: pool.submit(count, *job) for key, job in jobs.items()}
        counts = {key: future.result() for key, future in futures.items()}

    def floor(key):
        return sum(counts[key][routine] for routine in FLOOR_ROUTINES)

    print(f"kernel instructions (valgrind callgrind), {columns} columns, 16 streams, "
          "60 Henyey-Greenstein layers unless stated")
    print(f"{'quantity':<40}{'measured':>10}  {'target':>8}")
    for kind in ("fluxes", "radiances"):
        ratio = counts[kind, 1]["total"] / floor((kind, 1))
        print(f"{kind + ': kernel / LAPACK floor':<40}{ratio:>10.3f}  {'<= 1.5':>8}")
    for kind in ("fluxes", "radiances"):
        ratio = counts[kind, 4]["total"] / counts[kind, 1]["total"]
        print(f"{kind + ': 4 sun angles / 1':<40}{ratio:>10.3f}  {'< 1.3':>8}")
    totals = [counts["layers", size]["total"] for size in layer_sizes]
    exponent = float(np.polyfit(np.log(layer_sizes), np.log(totals), 1)[0])
    print(f"{'radiances: cost ~ layers^p':<40}{'p = ' + format(exponent, '.3f'):>10}  "
          f"{'1 +- 0.1':>8}")
    print("per column (millions of instructions): kernel, of which LAPACK floor")
    for key in jobs:
        name = f"{key[0]} {key[1]}" + (" sun(s)" if key[0] != "layers" else " layers")
        print(f"  {name:<22}{counts[key]['total'] / columns / 1e6:9.2f}"
              f"{floor(key) / columns / 1e6:9.2f}")


if __name__ == "__main__":
    main()
