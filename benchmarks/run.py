"""Speed of :func:`lamina.solve` against the bare LAPACK work of the same problem.

Run ``python benchmarks/run.py`` (about three minutes on two cores) or ``--quick`` (under a
minute: fewer repeats, fewer floor columns). Everything is measured in this one run: inputs
are built once and the measurements are made in rounds; within a round the solver and the
LAPACK floor (or one thread and two, one sun and four) run one right after the other, so that
both see the same machine. A shared virtual machine drifts in speed by tens of percent over
tens of seconds, so each ratio is the median of the rounds' own ratios (their range is
printed beside it), and each time shown is the best round (``time.perf_counter``). The
script prints ratios, not pass/fail timings; the targets beside them come from the speed
issue.

The LAPACK floor
----------------
Per Fourier term the solver cannot avoid, for every layer, the Cholesky factorisations of
the two symmetric n x n matrices I - w K (even and odd parity) and the singular value
decomposition (with both sets of singular vectors) of the n x n product R M^-1 L, and for
the whole column the banded LU factorisation of the 2 n L boundary-value system (3 n - 1
sub- and super-diagonals) and its solve for every sun angle. The floor is the time of
exactly those calls:

    L x (dpotrf(n x n, "U") + dpotrf(n x n, "L") + dgesvd(n x n, jobu = jobvt = "A"))
    + dgbtrf(2 n L, kl = ku = 3 n - 1) + dgbtrs(nrhs = number of sun angles)

through ``scipy.linalg.lapack`` (the same OpenBLAS build as the kernel's
``scipy.linalg.cython_lapack``), on the matrices the kernel itself factorises: they are
rebuilt here in numpy from the delta-M-scaled layers (Legendre tables from the kernel's test
hook, the kernel's block layout of the boundary-value system), so that the iteration counts
of the SVD and the pivoting of the LU are the real ones (checked with valgrind: the same
instruction counts inside these four routines as in the kernel, to 0.1 %). Python's per-call
overhead is removed: the time of the same wrapper on a 1 x 1 problem is subtracted from
every dpotrf and dgesvd call (this also removes LAPACK's own fixed entry cost, about 4 % of
the floor, so the floor is if anything low and the ratios high). The one dgbtrf and dgbtrs
call per term are not corrected (their overhead is under 1 % of their work); the band matrix
is copied into a work array outside the timed part. The radiance floor is the same sum over
the Fourier terms each column actually used (``out.fourier_terms``), with the matrices of
each term. The floor is measured on 40 evenly spaced columns (``--floor-columns``; the
matrices of all 200 would take 1.7 GB) and scaled per column.

Everything else the solver does (forming the matrices, particular solutions, assembling the
system, fluxes and radiances at the output levels and view angles, delta-M scaling, the
single-scattering correction, building the xarray Dataset) counts against it.
"""

from __future__ import annotations

import argparse
import os
import platform
import subprocess
import sys
import time
from collections.abc import Callable

import dask
import numpy as np
import scipy
from scipy.linalg import lapack

import lamina
from lamina import _kernel, phase
from lamina.quadrature import double_gauss

VIEW_ZENITH = [0.0, 30.0, 60.0]
VIEW_AZIMUTH = [0.0, 90.0, 180.0]
SUN_ZENITH = 30.0
FOUR_SUNS = [0.0, 30.0, 60.0, 75.0]
SURFACE_ALBEDO = 0.1
CONSERVATIVE_GAP = 1e-12   # the kernel caps the albedo at 1 - this


def best_time(function: Callable[[], object], repeats: int) -> float:
    """Best wall time of ``repeats`` calls, in seconds."""
    best = np.inf
    for _ in range(repeats):
        start = time.perf_counter()
        function()
        best = min(best, time.perf_counter() - start)
    return best


def random_atmosphere(columns: int, layers: int, seed: int = 20240601):
    """Henyey-Greenstein layers with random optical properties, one column per wavelength."""
    rng = np.random.default_rng(seed)
    optical_depth = 10.0 ** rng.uniform(-3.0, 0.5, (columns, layers))
    albedo = rng.uniform(0.5, 1.0, (columns, layers))
    asymmetry = rng.uniform(0.0, 0.9, (columns, layers))
    moments = phase.henyey_greenstein(asymmetry, 32)
    return lamina.make_atmosphere(optical_depth, albedo, moments,
                                  extra_dims=("wavelength",))


def progress(message: str) -> None:
    print(f"[{time.strftime('%H:%M:%S')}] {message}", file=sys.stderr, flush=True)


def fit_exponent(sizes: list[int], times: list[float]) -> float:
    """Slope of log(time) against log(size) by least squares."""
    return float(np.polyfit(np.log(sizes), np.log(times), 1)[0])


# ------------------------------------------------------------------ the LAPACK floor


def term_matrices(optical_depth, albedo, moments, streams, mode, surface_albedo):
    """The matrices the kernel factorises for one column and one Fourier term.

    Returns the difference and sum matrices (layer, n, n) for dpotrf, the products
    R M^-1 L (layer, n, n) for dgesvd and the boundary-value system in LAPACK band storage
    (3 kl + 1, 2 n L) for dgbtrf, following the kernel's construction step by step.
    """
    n = streams // 2
    nl = 2 * n
    nlayer = optical_depth.size
    mu, weights = double_gauss(streams)
    sqw = np.sqrt(weights)
    table = _kernel.legendre_for_tests(mode, nl, np.ascontiguousarray(mu))   # (n, nl)
    aw = (table * sqw[:, None]).T                                            # (nl, n)
    degree = np.arange(nl)
    coefficient = (2.0 * degree + 1.0) * moments * (degree >= mode)          # (L, nl)
    even = coefficient * ((degree + mode) % 2 == 0)
    odd = coefficient * ((degree + mode) % 2 == 1)
    w = np.minimum(albedo, 1.0 - CONSERVATIVE_GAP)[:, None, None]
    eye = np.eye(n)
    difference = eye - w * np.einsum("li,kl,lj->kij", aw, even, aw)
    total = eye - w * np.einsum("li,kl,lj->kij", aw, odd, aw)
    upper = np.swapaxes(np.linalg.cholesky(difference), -1, -2)              # R^T R
    lower = np.linalg.cholesky(total)                                        # L L^T
    product = upper @ (lower / mu[None, :, None])
    left, k, right_t = np.linalg.svd(product)
    sums = np.linalg.solve(upper, left)
    differences = -np.linalg.solve(np.swapaxes(lower, -1, -2), np.swapaxes(right_t, -1, -2))
    gp = 0.5 * (sums + differences) / sqw[None, :, None]
    gm = 0.5 * (sums - differences) / sqw[None, :, None]
    scale = np.maximum(np.abs(gp).max(axis=1), np.abs(gm).max(axis=1))[:, None, :]
    gp, gm = gp / scale, gm / scale
    decay = np.exp(-k * optical_depth[:, None])                              # (L, n)

    kl = 3 * n - 1
    size = 2 * n * nlayer
    dense = np.zeros((size, size))
    dense[:n, :n] = gm[0]
    dense[:n, n:2 * n] = gp[0] * decay[0]
    for layer in range(nlayer - 1):   # benchmark set-up only: not timed
        row, col = n + 2 * n * layer, 2 * n * layer
        dense[row:row + n, col:col + n] = gp[layer] * decay[layer]
        dense[row + n:row + 2 * n, col:col + n] = gm[layer] * decay[layer]
        dense[row:row + n, col + n:col + 2 * n] = gm[layer]
        dense[row + n:row + 2 * n, col + n:col + 2 * n] = gp[layer]
        dense[row:row + n, col + 2 * n:col + 3 * n] = -gp[layer + 1]
        dense[row + n:row + 2 * n, col + 2 * n:col + 3 * n] = -gm[layer + 1]
        dense[row:row + n, col + 3 * n:col + 4 * n] = -gm[layer + 1] * decay[layer + 1]
        dense[row + n:row + 2 * n, col + 3 * n:col + 4 * n] = -gp[layer + 1] * decay[layer + 1]
    reflect = 2.0 * surface_albedo * weights * mu if mode == 0 else np.zeros(n)
    row, col = size - n, size - 2 * n
    dense[row:, col:col + n] = (gp[-1] - (reflect @ gm[-1])[None, :]) * decay[-1]
    dense[row:, col + n:] = gm[-1] - (reflect @ gp[-1])[None, :]
    band = np.zeros((3 * kl + 1, size), order="F")
    rows, cols = np.nonzero(dense)
    keep = np.abs(rows - cols) <= kl
    band[2 * kl + rows[keep] - cols[keep], cols[keep]] = dense[rows[keep], cols[keep]]
    return difference, total, product, band, kl


class LapackFloor:
    """Bare LAPACK time of the sampled columns, per Fourier term."""

    def __init__(self, atmosphere, streams, columns, terms, suns):
        scaled = phase.delta_m_scale(atmosphere["optical_depth"].values,
                                     atmosphere["single_scattering_albedo"].values,
                                     atmosphere["phase_moments"].values, streams)
        self.n = streams // 2
        self.suns = suns
        self.terms = terms     # Fourier terms per sampled column (1 for fluxes)
        self.columns = columns
        self.work = []         # per column, per term: (matrices for dpotrf, dgesvd, band)
        for col, used in zip(columns, terms, strict=True):
            per_term = []
            for mode in range(used):
                difference, total, product, band, kl = term_matrices(
                    scaled.scaled_optical_depth[col], scaled.scaled_single_scattering_albedo[col],
                    scaled.scaled_phase_moments[col], streams, mode, SURFACE_ALBEDO)
                # the kernel factorises the difference matrix as R^T R, the sum as L L^T
                spd = [(np.asfortranarray(d), np.asfortranarray(t))
                       for d, t in zip(difference, total, strict=True)]
                svd_in = [np.asfortranarray(m) for m in product]
                per_term.append((spd, svd_in, band, kl))
            self.work.append(per_term)
        n = self.n
        self.lwork = int(lapack.dgesvd_lwork(n, n, compute_uv=1, full_matrices=1)[0])
        self.rhs = np.asfortranarray(np.ones((2 * n * atmosphere.sizes["layer"], suns)))
        self.one = np.ones((1, 1), order="F")
        self.calls_potrf = sum(2 * len(t[0]) for per in self.work for t in per)
        self.calls_gesvd = sum(len(t[1]) for per in self.work for t in per)

    def run(self) -> float:
        """All the LAPACK calls of the sampled columns, once; their time in seconds.

        The band matrix is copied into a work array outside the timed part (the kernel
        assembles it in place; dgbtrf overwrites it).
        """
        potrf, gesvd, gbtrf, gbtrs = lapack.dpotrf, lapack.dgesvd, lapack.dgbtrf, lapack.dgbtrs
        clock = time.perf_counter
        lwork = self.lwork
        elapsed = 0.0
        for per_term in self.work:
            for spd, svd_in, band, kl in per_term:
                work = band.copy(order="F")
                rhs = self.rhs.copy(order="F")
                start = clock()
                for difference, total in spd:
                    potrf(difference, lower=0, clean=0)
                    potrf(total, lower=1, clean=0)
                for matrix in svd_in:
                    gesvd(matrix, compute_uv=1, full_matrices=1, lwork=lwork)
                lu, ipiv, info = gbtrf(work, kl, kl, overwrite_ab=1)
                gbtrs(lu, kl, kl, rhs, ipiv, overwrite_b=1)
                elapsed += clock() - start
                if info != 0:
                    raise RuntimeError(f"dgbtrf failed on the benchmark matrix (info {info})")
        return elapsed

    def overhead(self) -> float:
        """The same number of wrapper calls on 1 x 1 problems (Python and f2py cost), s."""
        potrf, gesvd, one = lapack.dpotrf, lapack.dgesvd, self.one
        start = time.perf_counter()
        for _ in range(self.calls_potrf):
            potrf(one, lower=0, clean=0)
        for _ in range(self.calls_gesvd):
            gesvd(one, compute_uv=1, full_matrices=1)
        return time.perf_counter() - start


# ------------------------------------------------------------------ measurements


def solver(atmosphere, streams=16, radiance=False, sun_zenith=SUN_ZENITH):
    """A call of lamina.solve with the benchmark's settings, ready to time."""
    keywords = {"view_zenith": VIEW_ZENITH, "view_azimuth": VIEW_AZIMUTH} if radiance else {}
    return lambda: lamina.solve(atmosphere, streams=streams, sun_zenith=sun_zenith,
                                surface_albedo=SURFACE_ALBEDO, **keywords)


class KernelClock:
    """Time spent inside the kernel's solve_columns during the timed calls (wraps it)."""

    def __init__(self):
        self.elapsed = 0.0
        self.original = _kernel.solve_columns

    def __enter__(self):
        def timed(*args, **kwargs):
            start = time.perf_counter()
            try:
                return self.original(*args, **kwargs)
            finally:
                self.elapsed += time.perf_counter() - start

        _kernel.solve_columns = timed
        return self

    def __exit__(self, *exc):
        _kernel.solve_columns = self.original


def timed_with_kernel(function: Callable[[], object]) -> tuple[float, float]:
    """(wall time of one call, the part of it spent in the kernel), seconds."""
    with KernelClock() as clock:
        start = time.perf_counter()
        function()
        total = time.perf_counter() - start
    return total, clock.elapsed


def interleaved(functions: dict[str, Callable[[], float]], repeats: int) -> dict:
    """``repeats`` times of each function (name -> array), taking turns within each round.

    The machine's speed drifts by tens of percent over tens of seconds on a shared virtual
    machine; the functions of one round run within a few seconds of each other, so the
    ratio of two times of the same round is far steadier than the ratio of two best times.
    """
    times = {name: [] for name in functions}
    for _ in range(repeats):
        for name, function in functions.items():
            times[name].append(function())
    return {name: np.asarray(values) for name, values in times.items()}


def paired(ratios: np.ndarray) -> tuple[float, float, float]:
    """Median, lowest and highest of the per-round ratios."""
    return float(np.median(ratios)), float(ratios.min()), float(ratios.max())


def spread(low: float, high: float, digits: int = 2) -> str:
    return f"(rounds {low:.{digits}f} to {high:.{digits}f})"


def wall(function: Callable[[], object]) -> Callable[[], float]:
    return lambda: best_time(function, 1)


def yes(condition: bool) -> str:
    return "yes" if condition else "NO"


def measure_floor(atmosphere, streams: int, repeats: int, floor_columns: int) -> dict:
    """Flux and radiance runs against the LAPACK floor of the same columns and terms."""
    columns = atmosphere.sizes["wavelength"]
    flux_run = solver(atmosphere)
    radiance_run = solver(atmosphere, radiance=True)
    terms = np.asarray(radiance_run().fourier_terms.values)
    sample = np.linspace(0, columns - 1, floor_columns).round().astype(int)
    flux_floor = LapackFloor(atmosphere, streams, sample, [1] * sample.size, 1)
    radiance_floor = LapackFloor(atmosphere, streams, sample, terms[sample], 1)

    progress("timing the solver and the LAPACK floor")
    kernel_share = {"flux": np.inf, "radiance": np.inf}

    def with_kernel(name, function):
        def go():
            total, inside = timed_with_kernel(function)
            kernel_share[name] = min(kernel_share[name], inside)
            return total
        return go

    times = interleaved({
        "flux": with_kernel("flux", flux_run),
        "flux_floor": flux_floor.run,
        "flux_overhead": flux_floor.overhead,
        "radiance": with_kernel("radiance", radiance_run),
        "radiance_floor": radiance_floor.run,
        "radiance_overhead": radiance_floor.overhead,
    }, repeats)
    flux_floor_times = (times["flux_floor"] - times["flux_overhead"]) / sample.size
    # the floor of the sampled columns per term, times the mean number of terms of all
    radiance_floor_times = ((times["radiance_floor"] - times["radiance_overhead"])
                            / terms[sample].sum() * terms.mean())
    return {
        "terms": terms,
        "flux_time": times["flux"].min() / columns,
        "radiance_time": times["radiance"].min() / columns,
        "flux_kernel": kernel_share["flux"] / columns,
        "radiance_kernel": kernel_share["radiance"] / columns,
        "flux_floor_time": flux_floor_times.min(),
        "radiance_floor_time": radiance_floor_times.min(),
        "flux_raw": times["flux_floor"].min() / sample.size,
        # each round's solver time over the same round's floor
        "flux_ratio": paired(times["flux"] / columns / flux_floor_times),
        "radiance_ratio": paired(times["radiance"] / columns / radiance_floor_times),
    }


LAYER_SIZES = [10, 20, 50, 100, 200]
STREAM_SIZES = [4, 8, 16, 32, 64]


def measure_growth(columns: int, layers: int, repeats: int, few: int, quick: bool) -> dict:
    """Cost per column against the number of layers and of streams (fitted exponents)."""
    # all 200 columns for the fluxes, so that the per-call cost of the Python front end
    # (about 10 ms) does not flatten the fit; fewer for the slower radiances and streams
    grow_columns = 20 if quick else 40
    # in rounds, each round timing every size once: the exponent is the median of the
    # rounds' own fits (a drift of the machine's speed between rounds does not bend them)
    grown = {size: random_atmosphere(columns, size, seed=size) for size in LAYER_SIZES}
    flux_calls = {size: solver(grown[size]) for size in LAYER_SIZES}
    radiance_calls = {
        size: solver(grown[size].isel(wavelength=slice(0, grow_columns)), radiance=True)
        for size in LAYER_SIZES}
    stream_atmosphere = random_atmosphere(grow_columns, layers, seed=7)
    stream_calls = {size: solver(stream_atmosphere, streams=size) for size in STREAM_SIZES}
    layer_times = interleaved(
        {("flux", size): wall(flux_calls[size]) for size in LAYER_SIZES}
        | {("radiance", size): wall(radiance_calls[size]) for size in LAYER_SIZES}, repeats)
    stream_times = interleaved({size: wall(stream_calls[size]) for size in STREAM_SIZES}, few)

    def growth(times, sizes, per):
        table = np.array([times[size] for size in sizes]) / per      # (size, round)
        exponent = np.median([fit_exponent(sizes, table[:, r]) for r in range(table.shape[1])])
        return list(table.min(axis=1)), float(exponent)

    return {
        "layer_flux": growth({size: layer_times["flux", size] for size in LAYER_SIZES},
                             LAYER_SIZES, columns),
        "layer_radiance": growth({size: layer_times["radiance", size] for size in LAYER_SIZES},
                                 LAYER_SIZES, grow_columns),
        "stream_flux": growth(stream_times, STREAM_SIZES, grow_columns),
    }


def _threaded(atmosphere, workers: int, radiance: bool) -> Callable[[], float]:
    run = solver(atmosphere, radiance=radiance)

    def go():
        with dask.config.set(scheduler="threads", num_workers=workers):
            start = time.perf_counter()
            run().compute()
            return time.perf_counter() - start
    return go


def _processes(parallel: bool) -> Callable[[], float]:
    """Two busy Python processes side by side, or one after the other."""
    busy = [sys.executable, "-c", "s = 0\nfor i in range(5_000_000): s += i"]

    def go():
        start = time.perf_counter()
        if parallel:
            running = [subprocess.Popen(busy) for _ in range(2)]
            for process in running:
                process.wait()
        else:
            for _ in range(2):
                subprocess.run(busy, check=True)
        return time.perf_counter() - start
    return go


THREAD_KINDS = ("fluxes", "fluxes, 2000 columns", "radiances")


def measure_threads(atmosphere, layers: int, rounds: int) -> dict:
    """Two dask threads against one, beside what two processes give the machine now."""
    columns = atmosphere.sizes["wavelength"]
    # 8 chunks of the benchmark's 200 columns, and a ten times longer spectral run of fluxes
    # (10 chunks of 200): a dask call has a fixed cost (building, optimising and ordering the
    # graph, about 30 to 60 ms here) that a 0.2 s flux run cannot hide
    chunked = atmosphere.chunk({"wavelength": columns // 8})
    long_run = random_atmosphere(10 * columns, layers, seed=11).chunk({"wavelength": columns})
    speedup = {}
    for kind, radiance, run_atmosphere in zip(THREAD_KINDS, (False, False, True),
                                              (chunked, long_run, chunked), strict=True):
        # what two cores give this machine right now (other users' load shows up here too)
        got = interleaved({"one": _threaded(run_atmosphere, 1, radiance),
                           "two": _threaded(run_atmosphere, 2, radiance),
                           "serial": _processes(False), "parallel": _processes(True)},
                          rounds)
        speedup[kind] = paired(got["one"] / got["two"])
        speedup[kind, "machine"] = paired(got["serial"] / got["parallel"])
    return speedup


def measure_suns(atmosphere, few: int) -> dict:
    """Four sun angles against one, fluxes (False) and radiances (True)."""
    suns = {}
    for kind in (False, True):
        got = interleaved({
            "one": wall(solver(atmosphere, radiance=kind)),
            "four": wall(solver(atmosphere, radiance=kind, sun_zenith=FOUR_SUNS)),
        }, few)
        suns[kind] = paired(got["four"] / got["one"])
    return suns


def report_rows(floor: dict, grown: dict, speedup: dict, suns: dict) -> list[tuple]:
    """The table's rows: quantity, measured, target, met."""
    flux_ratio, flux_low, flux_high = floor["flux_ratio"]
    radiance_ratio, radiance_low, radiance_high = floor["radiance_ratio"]
    layer_flux_p = grown["layer_flux"][1]
    layer_radiance_p = grown["layer_radiance"][1]
    rows = [
        ("fluxes: time per column", f"{floor['flux_time'] * 1e3:.3f} ms", "", ""),
        ("  of which in the kernel", f"{floor['flux_kernel'] * 1e3:.3f} ms", "", ""),
        ("  LAPACK floor per column", f"{floor['flux_floor_time'] * 1e3:.3f} ms", "",
         f"(with Python call overhead {floor['flux_raw'] * 1e3:.3f} ms)"),
        ("  fluxes / floor", f"{flux_ratio:.2f}", "<= 1.5",
         f"{yes(flux_ratio <= 1.5)} {spread(flux_low, flux_high)}"),
        ("radiances: time per column", f"{floor['radiance_time'] * 1e3:.2f} ms", "",
         f"({len(VIEW_ZENITH)} x {len(VIEW_AZIMUTH)} views, {floor['terms'].mean():.2f} "
         "Fourier terms on average)"),
        ("  of which in the kernel", f"{floor['radiance_kernel'] * 1e3:.2f} ms", "", ""),
        ("  LAPACK floor of the terms used", f"{floor['radiance_floor_time'] * 1e3:.2f} ms",
         "", ""),
        ("  radiances / floor", f"{radiance_ratio:.2f}", "<= 1.5",
         f"{yes(radiance_ratio <= 1.5)} {spread(radiance_low, radiance_high)}"),
        ("cost ~ layers^p, fluxes", f"p = {layer_flux_p:.2f}", "1 +- 0.1",
         yes(abs(layer_flux_p - 1) <= 0.1)),
        ("cost ~ layers^p, radiances", f"p = {layer_radiance_p:.2f}", "1 +- 0.1",
         yes(abs(layer_radiance_p - 1) <= 0.1)),
        ("cost ~ streams^p, fluxes", f"p = {grown['stream_flux'][1]:.2f}", "",
         "(report only)"),
    ]
    for kind in THREAD_KINDS:
        rows.append((f"2 dask threads / 1, {kind}", f"{speedup[kind][0]:.2f}x", ">= 1.8",
                     f"{yes(speedup[kind][0] >= 1.8)} {spread(*speedup[kind][1:])}, machine "
                     f"{speedup[kind, 'machine'][0]:.2f}x"))
    for kind, label in ((False, "fluxes"), (True, "radiances")):
        rows.append((f"4 sun angles / 1, {label}", f"{suns[kind][0]:.2f}", "< 1.3",
                     f"{yes(suns[kind][0] < 1.3)} {spread(*suns[kind][1:])}"))
    return rows


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--quick", action="store_true", help="fewer repeats and sizes")
    parser.add_argument("--repeats", type=int, default=None, help="repeats of each timing")
    parser.add_argument("--floor-columns", type=int, default=None,
                        help="columns sampled for the LAPACK floor")
    args = parser.parse_args()
    quick = args.quick
    columns, layers, streams = 200, 60, 16
    repeats = args.repeats or (2 if quick else 7)
    few = max(2, repeats // 2)
    thread_rounds = max(few, 5)
    load_before = os.getloadavg()[0]

    progress("building inputs and the floor matrices")
    atmosphere = random_atmosphere(columns, layers)
    floor = measure_floor(atmosphere, streams, repeats,
                          args.floor_columns or (5 if quick else 40))
    progress("growth with layers and streams")
    grown = measure_growth(columns, layers, repeats, few, quick)
    progress("dask threads")
    speedup = measure_threads(atmosphere, layers, thread_rounds)
    progress("sun angles")
    suns = measure_suns(atmosphere, few)

    rows = report_rows(floor, grown, speedup, suns)
    print(f"lamina {lamina.__version__}: {streams} streams, {layers} Henyey-Greenstein "
          f"layers, {columns} columns (wavelengths) per call, sun at {SUN_ZENITH:g} deg; "
          f"{repeats} rounds (streams, suns: {few}; threads: {thread_rounds}); times are the "
          "best round, ratios the median of the rounds' own ratios")
    print(f"python {platform.python_version()}, numpy {np.__version__}, scipy "
          f"{scipy.__version__}, dask {dask.__version__}; {os.cpu_count()} cpus, load average "
          f"{load_before:.1f} before and {os.getloadavg()[0]:.1f} after")
    width = max(len(row[0]) for row in rows) + 2
    print(f"{'quantity':<{width}}{'measured':>12}  {'target':>8}  met")
    for name, value, target, met in rows:
        print(f"{name:<{width}}{value:>12}  {target:>8}  {met}")
    print("growth (ms per column):")
    print("  layers          " + "".join(f"{s:>9d}" for s in LAYER_SIZES))
    print("  fluxes          " + "".join(f"{t * 1e3:9.3f}" for t in grown["layer_flux"][0]))
    print("  radiances       " + "".join(f"{t * 1e3:9.2f}" for t in grown["layer_radiance"][0]))
    print("  streams         " + "".join(f"{s:>9d}" for s in STREAM_SIZES))
    print("  fluxes (60 lay.)" + "".join(f"{t * 1e3:9.3f}" for t in grown["stream_flux"][0]))


if __name__ == "__main__":
    main()
