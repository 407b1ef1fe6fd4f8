"""Cost of writing a result to netCDF against the cost of computing it, and the file sizes.

One spectral result (random layers, 8 streams, two sun angles and six view directions) is
computed with ``lamina.solve``, chunked along wavelength as a resumable run's store is, and
written in several ways. Each round times the computation and every write; the ratios
(write time / compute time) are medians of the rounds' own ratios.

    python benchmarks/write.py                 # 20,000 wavelengths, 3 rounds
    python benchmarks/write.py --columns 4000 --rounds 2
"""

from __future__ import annotations

import argparse
import os
import statistics
import tempfile
import time
from pathlib import Path

import numpy as np
import xarray as xr

import lamina
from lamina import io


def _problem(columns: int) -> xr.Dataset:
    rng = np.random.default_rng(3)
    tau = rng.uniform(0.01, 2.0, (columns, 8))
    ssa = rng.uniform(0.5, 1.0, (columns, 8))
    moments = lamina.phase.henyey_greenstein(rng.uniform(0.0, 0.8, (columns, 8)), 16)
    atmosphere = lamina.make_atmosphere(tau, ssa, moments, extra_dims=("wavelength",))
    return atmosphere.assign_coords(wavelength=np.linspace(0.4, 2.4, columns))


def _variants(result: xr.Dataset) -> dict[str, dict[str, dict]]:
    floats = [name for name, v in result.variables.items()
              if v.dtype.kind == "f" and v.ndim > 0]

    def each(**encoding):
        return {name: dict(encoding) for name in floats}

    chunked = {name: {"chunksizes": io.chunk_shape(result[name].variable)} for name in floats}
    return {
        "plain (no compression)": {},
        "zlib 4, library chunks": each(zlib=True, complevel=4),
        "zlib 4, run's chunks": {n: {**chunked[n], "zlib": True, "complevel": 4}
                                 for n in floats},
        "zlib 1 + shuffle, run's chunks": {n: {**chunked[n], "zlib": True, "complevel": 1,
                                               "shuffle": True} for n in floats},
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--columns", type=int, default=20_000)
    parser.add_argument("--chunk", type=int, default=2000)
    parser.add_argument("--rounds", type=int, default=3)
    args = parser.parse_args()
    atmosphere = _problem(args.columns)
    kwargs = {"streams": 8, "sun_zenith": [30.0, 60.0], "view_zenith": [0.0, 30.0, 60.0],
              "view_azimuth": [0.0, 180.0]}
    print(f"load average at start: {os.getloadavg()[0]:.1f}; {args.columns} wavelengths, "
          f"chunks of {args.chunk}, {args.rounds} rounds")
    ratios: dict[str, list[float]] = {}
    sizes: dict[str, int] = {}
    computes = []
    with tempfile.TemporaryDirectory() as folder:
        for _ in range(args.rounds):
            start = time.perf_counter()
            result = lamina.solve(atmosphere, **kwargs)
            compute = time.perf_counter() - start
            computes.append(compute)
            result = result.chunk({"wavelength": args.chunk})
            for label, encoding in _variants(result).items():
                path = Path(folder) / "out.nc"
                start = time.perf_counter()
                result.to_netcdf(path, engine="netcdf4", encoding=encoding)
                ratios.setdefault(label, []).append((time.perf_counter() - start) / compute)
                sizes[label] = path.stat().st_size
                path.unlink()
    print(f"compute: {statistics.median(computes):.2f} s (median)")
    print(f"{'write':<34} {'write / compute':>16} {'range':>13} {'file MB':>8}")
    for label, values in ratios.items():
        print(f"{label:<34} {statistics.median(values):>16.3f} "
              f"{min(values):>6.3f}-{max(values):<6.3f} {sizes[label] / 1e6:>8.1f}")
    print(f"load average at end: {os.getloadavg()[0]:.1f}")


if __name__ == "__main__":
    main()
