"""Tests of the lamina command, end to end in a temporary folder."""

from __future__ import annotations

import io
import os
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import lamina
from lamina.cli import main

REPO = Path(__file__).resolve().parents[1]

SCENARIO = """
title = "cli test"
[spectrum]
wavelength = [0.45, 0.55, 0.65, 0.75, 0.85]
[atmosphere]
pressure = [1e3, 3e4, 1e5]
[[atmosphere.constituent]]
name = "air"
optical_depth = [0.02, 0.08]
single_scattering_albedo = 1.0
phase = {kind = "rayleigh"}
spectral_dependence = "rayleigh"
[[atmosphere.constituent]]
name = "cloud"
optical_depth = [0.0, 4.0]
single_scattering_albedo = 0.99
phase = {kind = "henyey_greenstein", asymmetry_parameter = 0.8}
[sun]
zenith = 40
[view]
zenith = [0, 45]
azimuth = [0, 180]
[surface]
albedo = 0.1
[solver]
streams = 8
"""


def scenario_file(tmp_path: Path, text: str = SCENARIO) -> Path:
    path = tmp_path / "scenario.toml"
    path.write_text(textwrap.dedent(text))
    return path


def test_run_writes_the_solver_result(tmp_path, capsys):
    path = scenario_file(tmp_path)
    output = tmp_path / "out.nc"
    assert main(["run", str(path), "--output", str(output), "--chunk-size", "2",
                 "--no-progress"]) == 0
    assert capsys.readouterr().out.startswith(f"wrote {output} (")
    from lamina.scenario import load_scenario

    scenario = load_scenario(path)
    expected = lamina.solve(scenario.build_atmosphere(), **scenario.solve_kwargs())
    with xr.open_dataset(output) as result:
        result.load()
    xr.testing.assert_allclose(result, expected)
    assert result.attrs["title"] == "cli test"
    assert result.attrs["scenario_file"] == "scenario.toml"
    assert result["wavelength"].attrs["units"] == "um"
    # the run's lock stays behind as an empty hidden file (a lock file must not be removed)
    assert sorted(p.name for p in tmp_path.iterdir()) == [".out.nc.lock", "out.nc",
                                                          "scenario.toml"]


def test_run_resume_after_interruption(tmp_path, capsys, monkeypatch):
    path = scenario_file(tmp_path)
    output = tmp_path / "out.nc"
    real_solve = lamina.solve
    calls = []

    def interrupted_on_second_chunk(atmosphere, **kwargs):
        calls.append(atmosphere["wavelength"].values.tolist())
        if len(calls) == 2:
            raise KeyboardInterrupt
        return real_solve(atmosphere, **kwargs)

    monkeypatch.setattr(lamina, "solve", interrupted_on_second_chunk)
    assert main(["run", str(path), "-o", str(output), "--chunk-size", "2",
                 "--no-progress"]) == 130
    assert capsys.readouterr().err == ("lamina run: interrupted; finished chunks are kept: "
                                       "rerun with --resume to continue\n")
    assert main(["run", str(path), "-o", str(output), "--chunk-size", "2"]) == 2
    assert "holds an unfinished earlier run" in capsys.readouterr().err
    monkeypatch.setattr(lamina, "solve", real_solve)
    assert main(["run", str(path), "-o", str(output), "--chunk-size", "2", "--resume",
                 "--no-progress"]) == 0
    with xr.open_dataset(output) as result:
        assert result.sizes["wavelength"] == 5


@pytest.mark.parametrize(("arguments", "message"), [
    (["run", "{scenario}", "-o", "{tmp}/missing/out.nc"],
     "lamina run: error: cannot write {tmp}/missing/out.nc: its folder {tmp}/missing does not "
     "exist\n"),
    (["run", "{tmp}/absent.toml", "-o", "{tmp}/out.nc"],
     "lamina run: error: {tmp}/absent.toml: no such scenario file\n"),
    (["run", "{broken}", "-o", "{tmp}/out.nc"],
     "lamina run: error: {broken}: [sun] unknown key 'zenit'; did you mean 'zenith'? (valid "
     "keys: zenith, irradiance, irradiance_units)\n"),
    (["plot", "{tmp}/absent.nc"], "lamina plot: error: {tmp}/absent.nc: no such result file\n"),
])
def test_errors_are_one_clean_line(tmp_path, capsys, arguments, message):
    scenario = scenario_file(tmp_path)
    broken = tmp_path / "broken.toml"
    broken.write_text(SCENARIO.replace("zenith = 40", "zenit = 40"))
    fill = {"scenario": scenario, "tmp": tmp_path, "broken": broken}
    assert main([a.format(**fill) for a in arguments]) == 2
    captured = capsys.readouterr()
    assert captured.err == message.format(**fill)
    assert captured.out == ""


def test_usage_errors(capsys):
    assert main(["run", "x.toml"]) == 2
    assert "the following arguments are required: --output" in capsys.readouterr().err
    assert main(["run", "x.toml", "-o", "y.nc", "--chunk-size", "0"]) == 2
    assert "expected a positive integer; got 0" in capsys.readouterr().err
    assert main([]) == 2
    assert main(["frobnicate"]) == 2


@pytest.mark.parametrize("command", [[], ["run"], ["plot"], ["demo"], ["validate"]])
def test_help_on_every_command(command, capsys):
    assert main([*command, "--help"]) == 0
    assert "usage: lamina" in capsys.readouterr().out


def test_help_in_a_subprocess():
    # the child imports the same lamina as this process (installed, or the source tree)
    environment = dict(os.environ)
    environment["PYTHONPATH"] = os.pathsep.join(
        [str(Path(lamina.__file__).parents[1]), *filter(None, [environment.get("PYTHONPATH")])])
    completed = subprocess.run([sys.executable, "-m", "lamina.cli", "run", "--help"],
                               capture_output=True, text=True, env=environment, timeout=120,
                               check=False)
    assert completed.returncode == 0, completed.stderr
    assert "--resume" in completed.stdout and "--chunk-size" in completed.stdout
    completed = subprocess.run([sys.executable, "-m", "lamina.cli", "plot", "nothing.nc"],
                               capture_output=True, text=True, env=environment, timeout=120,
                               check=False)
    assert completed.returncode == 2
    assert completed.stderr == "lamina plot: error: nothing.nc: no such result file\n"


def test_demo_then_plot(tmp_path, capsys):
    folder = tmp_path / "demo"
    assert main(["demo", "--output", str(folder), "--no-progress"]) == 0
    out = capsys.readouterr().out
    assert out.startswith("lamina demo: Tessaly (fictional planet)")
    assert "albedo at the top:" in out and "surface: down" in out
    assert sorted(p.name for p in folder.iterdir() if p.suffix != ".lock") == [
        "albedo_spectrum.png", "demo.nc", "flux_profiles.png", "heating_rate.png",
        "mean_intensity.png", "phase_curve.png", "planet.nc", "radiance.png", "spectrum.png"]
    assert "the planet seen whole" in out and "Bond albedo" in out
    with xr.open_dataset(folder / "planet.nc") as planet:
        planet.load()
    # the disk-integrated reflectance at phase 0 is the geometric albedo (by definition),
    # and every albedo of a reflecting planet lies in (0, 1)
    np.testing.assert_allclose(planet.reflectance.sel(phase_angle=0.0),
                               planet.geometric_albedo, rtol=1e-12)
    for name in ("geometric_albedo", "spherical_albedo", "bond_albedo"):
        assert 0.0 < float(planet[name].min()) and float(planet[name].max()) < 1.0
    assert planet.reflectance.sizes["wavelength"] == result_sizes(folder)["wavelength"]
    with xr.open_dataset(folder / "demo.nc") as result:
        result.load()
    assert {"wavelength", "sun_zenith", "view_zenith", "view_azimuth"} <= set(result.dims)
    # energy: what the top reflects plus what the column and the ground absorb is what came in
    # (exact bookkeeping of the fluxes lamina wrote)
    top, bottom = result.isel(level=0), result.isel(level=-1)
    absorbed = (top["flux_down"] - top["flux_up"]) - (bottom["flux_down"] - bottom["flux_up"])
    np.testing.assert_allclose(absorbed, result["flux_divergence"].sum("layer"), atol=1e-12)
    albedo = top["flux_up"] / top["flux_down"]
    assert float(albedo.min()) > 0 and float(albedo.max()) < 1

    assert main(["plot", str(folder / "demo.nc"), "--output", str(tmp_path)]) == 0
    assert sorted(p.name for p in tmp_path.glob("*.png")) == [
        "demo_flux_profiles.png", "demo_heating_rate.png", "demo_mean_intensity.png",
        "demo_radiance.png", "demo_spectrum.png"]


def result_sizes(folder):
    with xr.open_dataset(folder / "demo.nc") as result:
        return dict(result.sizes)


def test_demo_refuses_a_missing_parent(tmp_path, capsys):
    assert main(["demo", "-o", str(tmp_path / "a" / "b")]) == 2
    assert capsys.readouterr().err == (f"lamina demo: error: cannot write the demo to "
                                       f"{tmp_path / 'a' / 'b'}: its folder {tmp_path / 'a'} "
                                       "does not exist\n")


@pytest.mark.parametrize("example", sorted((REPO / "examples").glob("*.toml")),
                         ids=lambda p: p.stem)
def test_examples_run(example, tmp_path, capsys):
    output = tmp_path / f"{example.stem}.nc"
    assert main(["run", str(example), "-o", str(output), "--no-progress"]) == 0
    with xr.open_dataset(output) as result:
        result.load()
    if example.stem == "thermal_infrared":
        assert "heating_rate" in result and result["heating_rate"].attrs["units"] == "K day-1"
        # Second law: with a black sky above, the outgoing band flux cannot exceed that of a
        # black body at the warmest temperature of the scenario (the 295 K surface), and it
        # must exceed the surface's emission seen through the column's absorption alone.
        outgoing = float(result["flux_up"].isel(level=0))
        assert 0.05 * _black_body_band_flux(295.0, 800.0, 1250.0) < outgoing
        assert outgoing < _black_body_band_flux(295.0, 800.0, 1250.0)


def _black_body_band_flux(temperature: float, low: float, high: float) -> float:
    """pi times the Planck radiance integrated over a wavenumber band in cm-1 (W m-2).

    Planck's law with CODATA constants from scipy.constants, integrated by scipy.integrate.quad.
    """
    from scipy import constants, integrate

    h, c, k = constants.h, constants.c, constants.k

    def radiance(wavenumber_cm: float) -> float:  # W m-2 sr-1 per cm-1
        nu = 100.0 * wavenumber_cm  # m-1
        return 100.0 * 2 * h * c**2 * nu**3 / np.expm1(h * c * nu / (k * temperature))

    return float(np.pi * integrate.quad(radiance, low, high)[0])


def test_validate_runs_the_named_cases(tmp_path, capsys):
    assert main(["validate", "--case", "isothermal_enclosure", "--case",
                 "planck_total_radiance"]) == 0
    out = capsys.readouterr().out
    assert out.split()[:6] == ["case", "source", "error", "kind", "tolerance", "result"]
    assert "isothermal_enclosure" in out and out.endswith("\n2 of 2 cases passed\n")


def test_validate_unknown_case_is_a_clean_error(capsys):
    assert main(["validate", "--case", "no_such_case"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("lamina validate: error: ") and "no_such_case" in err
    assert err.count("\n") == 1


def test_validate_wiring(tmp_path, monkeypatch, capsys):
    import lamina.validation

    calls, reports = [], []

    class Case:
        passed = False

    def fake_suite(names=None, report=None, streams_study=True, *, cases=None):
        calls.append((names, report, streams_study))
        return [Case()]

    monkeypatch.setattr(lamina.validation, "run_suite", fake_suite)
    monkeypatch.setattr(lamina.validation, "list_cases", lambda: ["a", "b", "c"])
    monkeypatch.setattr(lamina.validation, "write_report",
                        lambda results, path: reports.append((len(results), path)))
    monkeypatch.setattr(lamina.validation, "format_table", lambda results: "table")
    report = tmp_path / "report.md"
    assert main(["validate", "--report", str(report), "--case", "a", "--case", "b",
                 "--no-progress"]) == 1
    # one case per call (so that progress can be shown), one report of all of them
    assert calls == [(["a"], None, True), (["b"], None, True)]
    assert reports == [(2, report)]
    assert capsys.readouterr().out == f"table\nwrote {report}\n"
    assert main(["validate", "--report", str(tmp_path / "no" / "r.md")]) == 2
    assert "cannot write" in capsys.readouterr().err
    assert len(calls) == 2  # the report path is checked before the suite runs


class _Terminal(io.StringIO):
    """A text stream that says it is a terminal, as an interactive stderr would."""

    def isatty(self) -> bool:
        return True


def test_validate_shows_progress_on_stderr(monkeypatch, capsys):
    terminal = _Terminal()
    monkeypatch.setattr(sys, "stderr", terminal)
    assert main(["validate", "--case", "planck_total_radiance", "--case",
                 "isothermal_enclosure"]) == 0
    drawn = terminal.getvalue()
    # lamina.progress.ProgressBar's line, redrawn as each case finishes
    assert "lamina: validation cases 1/2" in drawn and "2/2" in drawn and "100 %" in drawn
    assert "2 of 2 cases passed" in capsys.readouterr().out
    terminal.truncate(0)
    assert main(["validate", "--case", "planck_total_radiance", "--no-progress"]) == 0
    assert terminal.getvalue() == ""


def test_plot_refuses_a_netcdf_file_lamina_did_not_write(tmp_path, capsys):
    # a foreign file, written by xarray itself: plausible names, no lamina stamp
    foreign = tmp_path / "foreign.nc"
    xr.Dataset({"flux_up": ("level", np.ones(3), {"units": "W m-2", "long_name": "up"})},
               attrs={"title": "someone else's"}).to_netcdf(foreign)
    assert main(["plot", str(foreign), "--output", str(tmp_path)]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"lamina plot: error: {foreign}: not a lamina result file")
    assert err.count("\n") == 1
    assert not list(tmp_path.glob("*.png"))


def _interrupt_on_call(monkeypatch, number: int, error: BaseException) -> list:
    real_solve = lamina.solve
    calls: list = []

    def solve(atmosphere, **kwargs):
        calls.append(atmosphere["wavelength"].values.tolist())
        if len(calls) == number:
            raise error
        return real_solve(atmosphere, **kwargs)

    monkeypatch.setattr(lamina, "solve", solve)
    return calls


def test_resume_without_the_chunk_size(tmp_path, capsys, monkeypatch):
    path = scenario_file(tmp_path)
    output = tmp_path / "out.nc"
    _interrupt_on_call(monkeypatch, 2, KeyboardInterrupt())
    assert main(["run", str(path), "-o", str(output), "--chunk-size", "2",
                 "--no-progress"]) == 130
    capsys.readouterr()
    calls = _interrupt_on_call(monkeypatch, 0, KeyboardInterrupt())
    assert main(["run", str(path), "-o", str(output), "--resume", "--no-progress"]) == 0
    assert calls == [[0.65, 0.75], [0.85]]  # the chunks of 2 on disk, not one of 5
    assert capsys.readouterr().err == ""


def test_corrected_rerun_after_a_failure_starts_afresh(tmp_path, capsys, monkeypatch):
    path = scenario_file(tmp_path)
    output = tmp_path / "out.nc"
    _interrupt_on_call(monkeypatch, 2, RuntimeError("solver gave up"))
    assert main(["run", str(path), "-o", str(output), "--chunk-size", "2",
                 "--no-progress"]) == 1
    assert capsys.readouterr().err == "lamina run: solver failed: solver gave up\n"
    path.write_text(textwrap.dedent(SCENARIO.replace("zenith = 40", "zenith = 30")))
    calls = _interrupt_on_call(monkeypatch, 0, KeyboardInterrupt())
    for arguments in ([], ["--resume"]):  # the corrected run starts afresh either way
        assert main(["run", str(path), "-o", str(output), "--chunk-size", "2",
                     "--no-progress", *arguments]) == 0
    assert len(calls) == 3 + 3  # first run: all three chunks; its rerun: all three again
    assert "starting afresh" in capsys.readouterr().err
    with xr.open_dataset(output) as result:
        assert float(result["sun_zenith"]) == 30.0


def test_two_runs_on_one_output(tmp_path, capsys):
    from lamina import _chunked

    path = scenario_file(tmp_path)
    output = tmp_path / "out.nc"
    holder = subprocess.Popen(
        [sys.executable, "-c", "import sys, filelock\nwith filelock.FileLock(sys.argv[1]):\n"
         "    print('held', flush=True); sys.stdin.read()", str(_chunked.lock_path(output))],
        stdin=subprocess.PIPE, stdout=subprocess.PIPE, text=True)
    try:
        assert holder.stdout.readline() == "held\n"
        assert main(["run", str(path), "-o", str(output), "--no-progress"]) == 2
        err = capsys.readouterr().err
        assert err.startswith(f"lamina run: error: another lamina run is writing {output} (")
        assert err.count("\n") == 1 and not output.exists()
        assert main(["run", str(path), "-o", str(output), "--wait", "0.1",
                     "--no-progress"]) == 2
        assert "after waiting 0.1 s" in capsys.readouterr().err
    finally:
        holder.communicate("")
    assert main(["run", str(path), "-o", str(output), "--wait", "10", "--no-progress"]) == 0


def test_oversized_request_is_refused_before_it_starts(tmp_path, capsys, monkeypatch):
    from lamina import _chunked

    path = scenario_file(tmp_path)
    calls = _interrupt_on_call(monkeypatch, 0, KeyboardInterrupt())
    monkeypatch.setattr(_chunked, "_available_memory", lambda: 1000)
    assert main(["run", str(path), "-o", str(tmp_path / "out.nc"), "--no-progress"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("lamina run: error: the run needs about ")
    assert "GB of memory available; a chunk size of about " in err and err.count("\n") == 1
    assert calls == []


def test_a_full_disk_is_said_in_words(tmp_path, capsys, monkeypatch):
    import errno

    path = scenario_file(tmp_path)
    _interrupt_on_call(monkeypatch, 2, OSError(errno.ENOSPC, "No space left on device",
                                                 str(tmp_path / "out.nc.zarr")))
    assert main(["run", str(path), "-o", str(tmp_path / "out.nc"), "--chunk-size", "2",
                 "--no-progress"]) == 1
    assert capsys.readouterr().err == (
        f"lamina run: error: the disk is full (no space left writing {tmp_path}/out.nc.zarr); "
        "free some space; rerun with --resume to continue\n")


@pytest.mark.parametrize(("option", "value"), [("--wait", "-1"), ("--wait", "soon"),
                                                ("--chunk-size", "2.5")])
def test_bad_run_options_are_one_line(option, value, capsys):
    assert main(["run", "x.toml", "-o", "y.nc", option, value]) == 2
    err = capsys.readouterr().err.splitlines()
    assert err[-1].startswith(f"lamina run: argument {option}: expected ")
