"""The ``lamina`` command: run scenarios, draw results, run the demo and the validation suite.

::

    lamina run SCENARIO.toml --output OUT.nc [--chunk-size N] [--resume] [--wait SECONDS]
               [--scheduler ADDRESS] [--no-progress]
    lamina plot RESULT.nc [--output DIR]
    lamina demo --output DIR [--no-progress]
    lamina validate [--report FILE.md] [--case NAME] [--no-progress]

Mistakes in the input (a bad scenario, an unwritable output path, an invalid option) are
reported as one line on standard error with exit status 2, without a traceback.
"""

from __future__ import annotations

import argparse
import errno
import hashlib
import sys
import time
from collections.abc import Sequence
from importlib import resources
from pathlib import Path

import numpy as np
import xarray as xr

__all__ = ["main"]

EXIT_OK = 0
EXIT_FAILURE = 1
EXIT_USAGE = 2
EXIT_INTERRUPTED = 130


class _Parser(argparse.ArgumentParser):
    """An ArgumentParser whose usage errors read like the command's other errors."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        raise _UsageError(f"{self.prog}: {message}")


class _UsageError(Exception):
    pass


def _positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a positive integer; got {text!r}") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"expected a positive integer; got {value}")
    return value


def _seconds(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number of seconds; got {text!r}") from None
    if not np.isfinite(value) or value < 0:
        raise argparse.ArgumentTypeError(f"expected a number of seconds >= 0; got {text}")
    return value


def _build_parser() -> _Parser:
    parser = _Parser(
        prog="lamina",
        description="Discrete-ordinates radiative transfer in plane-parallel atmospheres.",
        epilog="Run 'lamina COMMAND --help' for the options of each command.",
    )
    from lamina import __version__

    parser.add_argument("--version", action="version", version=f"lamina {__version__}")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    commands.required = True

    run = commands.add_parser(
        "run", help="solve a scenario file and write a netCDF result",
        description="Solve the scenario described in a TOML file (format: see the module "
                    "lamina.scenario and examples/) and write the result as netCDF. Spectral "
                    "runs can be split into chunks that are kept on disk as they finish, so "
                    "that an interrupted run continues with --resume.")
    run.add_argument("scenario", type=Path, metavar="SCENARIO.toml", help="scenario file")
    run.add_argument("--output", "-o", type=Path, required=True, metavar="OUT.nc",
                     help="netCDF file to write (its folder must exist)")
    run.add_argument("--chunk-size", type=_positive_int, metavar="N",
                     help="spectral points per chunk (default: [output] chunk_size of the "
                          "scenario, else all at once)")
    run.add_argument("--resume", action="store_true",
                     help="continue an interrupted run of the same inputs, skipping the chunks "
                          "already written (a run of changed inputs starts afresh)")
    run.add_argument("--wait", type=_seconds, default=0.0, metavar="SECONDS",
                     help="wait this long for another run on the same output to finish "
                          "(default: refuse at once)")
    run.add_argument("--scheduler", metavar="ADDRESS",
                     help="run the chunks on the dask.distributed scheduler at ADDRESS (e.g. "
                          "tcp://host:8786); the output's folder must be shared with the "
                          "workers")
    run.add_argument("--no-progress", action="store_true", help="draw no progress bar")
    run.set_defaults(handler=_run)

    plot = commands.add_parser(
        "plot", help="draw the figures of a result file",
        description="Draw flux and mean-intensity profiles, radiances, spectra and heating "
                    "rates (whichever the result holds) as PNG files.")
    plot.add_argument("result", type=Path, metavar="RESULT.nc", help="a lamina result file")
    plot.add_argument("--output", "-o", type=Path, metavar="DIR",
                      help="folder for the PNG files (default: the result's folder)")
    plot.set_defaults(handler=_plot)

    demo = commands.add_parser(
        "demo", help="run the built-in demo scenario end to end",
        description="Solve an invented hazy, cloud-capped atmosphere of a fictional planet "
                    "from the visible to the near infrared, write demo.nc and its figures "
                    "into DIR, then the whole planet's phase curves and albedo spectra "
                    "(planet.nc, phase_curve.png, albedo_spectrum.png), and print a summary.")
    demo.add_argument("--output", "-o", type=Path, required=True, metavar="DIR",
                      help="folder for demo.nc and the figures (created if its parent exists)")
    demo.add_argument("--no-progress", action="store_true", help="draw no progress bar")
    demo.set_defaults(handler=_demo)

    validate = commands.add_parser(
        "validate", help="run the validation suite against published results",
        description="Compare lamina with published and exact results and write a report.")
    validate.add_argument("--report", type=Path, metavar="FILE.md",
                          help="write the report (markdown) to this file")
    validate.add_argument("--case", action="append", metavar="NAME",
                          help="run only this case (may be repeated)")
    validate.add_argument("--no-progress", action="store_true", help="draw no progress bar")
    validate.set_defaults(handler=_validate)
    return parser


# --------------------------------------------------------------------------------------------
# Commands
# --------------------------------------------------------------------------------------------


def _scenario_hash(scenario: object, path: Path) -> str:
    """SHA-256 of the scenario file, the profile file it reads, and lamina's version."""
    from lamina import __version__

    digest = hashlib.sha256(path.read_bytes())
    profile = getattr(scenario, "profile", None)
    if profile is not None:
        with open(profile["file"], "rb") as handle:
            for block in iter(lambda: handle.read(1 << 20), b""):
                digest.update(block)
    digest.update(f"lamina {__version__}".encode())
    return digest.hexdigest()


def _solve_scenario(scenario_path: Path, output: Path, chunk_size: int | None, resume: bool,
                    progress: bool, loaded: list | None = None, *, wait: float = 0.0,
                    scheduler: str | None = None) -> xr.Dataset:
    """Solve a scenario file into ``output``; ``loaded`` (a list) receives the scenario and
    its (lazy) atmosphere."""
    from lamina._chunked import check_memory, stored_chunk_size
    from lamina.io import check_writable, run_chunked
    from lamina.scenario import load_scenario

    check_writable(output)  # before reading and computing anything
    scenario = load_scenario(scenario_path)
    if chunk_size is None:
        chunk_size = scenario.chunk_size
    # the atmosphere is built lazily, a chunk at a time, in the run's own chunks
    step = chunk_size if chunk_size is not None else stored_chunk_size(output)
    atmosphere = scenario.build_atmosphere(chunk_size=step)
    kwargs = scenario.solve_kwargs()
    check_memory(atmosphere, kwargs, step)  # an oversized request is refused before it starts
    if loaded is not None:
        loaded.extend([scenario, atmosphere])
    return run_chunked(
        atmosphere, kwargs, output, chunk_size, resume=resume, progress=progress,
        variables=scenario.variables, attributes=scenario.attributes(), scheduler=scheduler,
        lock_timeout=wait, inputs_hash=_scenario_hash(scenario, scenario_path))


def _run(args: argparse.Namespace) -> int:
    start = time.monotonic()
    result = _solve_scenario(args.scenario, args.output, args.chunk_size, args.resume,
                             not args.no_progress, wait=args.wait, scheduler=args.scheduler)
    sizes = " x ".join(f"{size} {dim}" for dim, size in result.sizes.items())
    print(f"wrote {args.output} ({sizes}) in {time.monotonic() - start:.1f} s")
    return EXIT_OK


def _ensure_folder(folder: Path, what: str) -> None:
    """Make ``folder`` (one level) or say clearly why it cannot be used."""
    if folder.exists() and not folder.is_dir():
        raise ValueError(f"cannot write {what} to {folder}: it is a file, expected a folder")
    if not folder.exists():
        if not folder.parent.is_dir():
            raise ValueError(f"cannot write {what} to {folder}: its folder {folder.parent} "
                             "does not exist")
        folder.mkdir()


def _plot(args: argparse.Namespace) -> int:
    from lamina.plotting import plot_result

    if not args.result.is_file():
        raise ValueError(f"{args.result}: no such result file")
    folder = args.output if args.output is not None else args.result.parent
    _ensure_folder(folder, "plots")
    try:
        result = xr.open_dataset(args.result)
    except (OSError, ValueError) as error:
        raise ValueError(f"{args.result}: cannot read it as netCDF ({error})") from None
    with result:
        result.load()
    if "lamina_version" not in result.attrs:
        # lamina.solve and lamina.io stamp every result; without the stamp the variables
        # the figures need (and their meaning) cannot be trusted to be there
        raise ValueError(f"{args.result}: not a lamina result file (it has no lamina_version "
                         "attribute); lamina plot draws files written by lamina run, lamina "
                         "demo or lamina.io.write_netcdf")
    written = plot_result(result, folder, prefix=f"{args.result.stem}_")
    for path in written:
        print(f"wrote {path}")
    return EXIT_OK


def _demo_scenario() -> Path:
    return Path(str(resources.files("lamina") / "data" / "demo.toml"))


def _summary(result: xr.Dataset) -> list[str]:
    """A few numbers a person checks first: albedo range, fluxes at the top and bottom."""
    top, bottom = result.isel(level=0), result.isel(level=-1)
    # one sun angle (and column...) for the summary: the first
    first = {d: 0 for d in top["flux_up"].dims if d != "wavelength"}
    top, bottom = top.isel(first), bottom.isel(first)
    where = ", ".join(f"{d.replace('_', ' ')} {result[d].values[0]:g}" for d in first
                      if d in result.coords)
    lines = [f"  at {where}:"] if where else []
    units = result["flux_up"].attrs.get("units", "")
    if units == "1":   # no units on the irradiance: fluxes are fractions of it
        units = "(in units of the stellar irradiance)"
    if "wavelength" in top.dims:
        albedo = (top["flux_up"] / top["flux_down"]).values
        wavelength = result["wavelength"].values
        low, high = int(np.argmin(albedo)), int(np.argmax(albedo))
        lines.append(f"    albedo at the top: {albedo[low]:.3f} at {wavelength[low]:.3g} um "
                     f"to {albedo[high]:.3f} at {wavelength[high]:.3g} um")
        top, bottom = top.mean("wavelength"), bottom.mean("wavelength")
        units = f"{units} (mean over wavelength)"
    lines.append(f"    top: down {float(top['flux_down']):.4g}, up {float(top['flux_up']):.4g}; "
                 f"surface: down {float(bottom['flux_down']):.4g} of which direct "
                 f"{float(bottom['flux_down_direct']):.3g}, up {float(bottom['flux_up']):.4g}"
                 f" {units}")
    return lines


#: The demo planet's invented radius (m) and its star's invented temperature (K).
DEMO_PLANET_RADIUS = 4.1e6
DEMO_STAR_TEMPERATURE = 5200.0


def _demo_planet(scenario, atmosphere: xr.Dataset, folder: Path) -> tuple[list[Path], list[str]]:
    """The demo planet seen whole: phase curves, geometric and spherical albedo spectra.

    A sphere of radius DEMO_PLANET_RADIUS covered by the demo's atmosphere, each local
    column with the pseudo-spherical beam; modest orders keep the demo quick.
    """
    from lamina.io import write_netcdf
    from lamina.planck import spectral_radiance_wavelength
    from lamina.planet import phase_curve
    from lamina.plotting import albedo_spectrum, phase_curves

    surface = {key: value for key, value in scenario.solve_kwargs().items()
               if key in ("surface_albedo", "surface")}
    wavelength = atmosphere["wavelength"]
    star = xr.DataArray(spectral_radiance_wavelength(DEMO_STAR_TEMPERATURE, wavelength.values),
                        dims="wavelength", coords={"wavelength": wavelength})
    curve = phase_curve(atmosphere, np.arange(0.0, 171.0, 10.0), 8, **surface,
                        planet_radius=DEMO_PLANET_RADIUS, stellar_spectrum=star,
                        disk_order=(12, 6), phase_integral_order=8)
    curve.attrs["planet"] = (f"{scenario.attributes().get('title', 'demo planet')}, seen whole "
                             f"(radius {DEMO_PLANET_RADIUS / 1e3:g} km)")
    output = folder / "planet.nc"
    write_netcdf(curve, output)
    figures = [folder / "phase_curve.png", folder / "albedo_spectrum.png"]
    phase_curves(curve, path=figures[0])
    albedo_spectrum(curve, path=figures[1])
    p = curve["geometric_albedo"].values
    lines = [f"  wrote {output}: the planet seen whole (radius {DEMO_PLANET_RADIUS / 1e3:g} "
             f"km): geometric albedo {p.min():.3f} to {p.max():.3f}, Bond albedo "
             f"{float(curve['bond_albedo']):.3f} (a {DEMO_STAR_TEMPERATURE:g} K star)"]
    return figures, lines


def _demo(args: argparse.Namespace) -> int:
    from lamina.plotting import plot_result

    start = time.monotonic()
    folder: Path = args.output
    _ensure_folder(folder, "the demo")
    output = folder / "demo.nc"
    loaded: list = []
    result = _solve_scenario(_demo_scenario(), output, None, False, not args.no_progress,
                             loaded)
    written = plot_result(result, folder)
    planet_figures, planet_lines = _demo_planet(*loaded, folder)
    written += planet_figures
    print(f"lamina demo: {result.attrs.get('title', 'demo')}")
    print(f"  wrote {output} ({', '.join(f'{n} {d}' for d, n in result.sizes.items())})")
    for line in _summary(result) + planet_lines:
        print(line)
    print(f"  figures: {', '.join(path.name for path in written)}")
    print(f"  took {time.monotonic() - start:.1f} s")
    return EXIT_OK


def _validate(args: argparse.Namespace) -> int:
    from lamina.progress import ProgressBar
    from lamina.validation import format_table, list_cases, run_suite, write_report
    from lamina.validation.suite import SuiteResult

    if args.report is not None:
        from lamina.io import check_writable

        check_writable(args.report)
    names = list_cases() if args.case is None else list(dict.fromkeys(args.case))
    unknown = [name for name in names if name not in list_cases()]
    if unknown:
        run_suite(unknown)  # raises the suite's own message naming the case and the known ones
    results = SuiteResult()
    # one case at a time, so that the bar moves as cases finish; the study against the
    # number of streams only feeds the report's figures
    with ProgressBar(len(names), "lamina: validation cases",
                     enabled=False if args.no_progress else None) as bar:
        for name in names:
            results.extend(run_suite([name], streams_study=args.report is not None))
            bar.advance()
    if args.report is not None:
        write_report(results, args.report)
    print(format_table(results))  # ends with the count of passed cases and any failures
    if args.report is not None:
        print(f"wrote {args.report}")
    return EXIT_OK if results.passed else EXIT_FAILURE


# --------------------------------------------------------------------------------------------
# Entry point
# --------------------------------------------------------------------------------------------


def main(argv: Sequence[str] | None = None) -> int:
    """Run the ``lamina`` command with ``argv`` (default: ``sys.argv[1:]``).

    Returns
    -------
    int
        Exit status: 0 on success, 1 on a failed computation or validation, 2 on a mistake
        in the input (printed as one line on standard error), 130 when interrupted.
    """
    parser = _build_parser()
    try:
        args = parser.parse_args(argv)
    except _UsageError as error:
        print(f"{error}", file=sys.stderr)
        return EXIT_USAGE
    except SystemExit as exit_:  # --help and --version
        return int(exit_.code or 0)
    try:
        return int(args.handler(args))
    except ValueError as error:  # includes ScenarioError
        print(f"lamina {args.command}: error: {error}", file=sys.stderr)
        return EXIT_USAGE
    except OSError as error:
        if error.errno in (errno.ENOSPC, errno.EDQUOT):
            where = f" writing {error.filename}" if error.filename else ""
            hint = "; rerun with --resume to continue" if args.command == "run" else ""
            print(f"lamina {args.command}: error: the disk is full (no space left{where}); "
                  f"free some space{hint}", file=sys.stderr)
            return EXIT_FAILURE
        print(f"lamina {args.command}: error: {error}", file=sys.stderr)
        return EXIT_FAILURE
    except RuntimeError as error:  # lamina.SolverError: the solver could not finish
        print(f"lamina {args.command}: solver failed: {error}", file=sys.stderr)
        return EXIT_FAILURE
    except KeyboardInterrupt:
        hint = ""
        if args.command == "run":
            hint = "; finished chunks are kept: rerun with --resume to continue"
        print(f"lamina {args.command}: interrupted{hint}", file=sys.stderr)
        return EXIT_INTERRUPTED


if __name__ == "__main__":
    raise SystemExit(main())
