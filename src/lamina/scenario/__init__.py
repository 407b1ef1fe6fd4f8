"""Scenario files: a whole lamina run described in one TOML file.

A scenario names the atmosphere, the light that falls on it, where we look from, the surface,
the solver settings and what to keep, in plain TOML (read with :mod:`tomllib`).
:func:`load_scenario` reads and validates a file and returns a :class:`Scenario`, which builds
the input Dataset (through :func:`lamina.make_atmosphere`) and the keyword arguments of
:func:`lamina.solve`. Every mistake raises :class:`ScenarioError` naming the file, the key path
(``[sun] zenith``) and what was expected.

The format
----------
Units are fixed unless a quantity is written as ``{values = [...], units = "..."}``; the
accepted units are listed below. Layers are numbered from the top, levels (the ``L + 1``
layer boundaries) too.

.. code-block:: toml

    title = "Hazy sky over a dark sea"          # optional, copied to the output
    description = "..."                          # optional

    [atmosphere]
    # level quantities (optional; temperature is needed for thermal runs, pressure for
    # heating rates)
    pressure = {values = [1, 100, 300, 600, 1000], units = "hPa"}   # Pa, hPa, mbar, mb, kPa,
                                                                      # bar, atm
    temperature = [200, 220, 250, 270, 288]                           # K (or degC)
    altitude = {values = [40, 16, 9, 4, 0], units = "km"}             # m, km, ft
    gravity = 9.80665            # m s-2, for heating rates (default: Earth)
    heat_capacity = 1004.0       # J kg-1 K-1, for heating rates (default: Earth air)

    # the layers: either inline (one constituent) ...
    optical_depth = [0.02, 0.05, 1.5, 0.1]
    single_scattering_albedo = [1.0, 1.0, 0.999, 0.9]   # or one number for all layers
    phase = {kind = "henyey_greenstein", asymmetry_parameter = [0.0, 0.0, 0.85, 0.7]}

    # ... or as constituents whose optical depths add up in every layer
    [[atmosphere.constituent]]
    name = "air"
    optical_depth = [0.01, 0.03, 0.05, 0.06]     # at [spectrum] reference_wavelength
    single_scattering_albedo = 1.0
    phase = {kind = "rayleigh", depolarization = 0.03}
    spectral_dependence = "rayleigh"             # optical depth ~ wavelength^-4

    [[atmosphere.constituent]]
    name = "haze"
    optical_depth = [0.1, 0.05, 0.0, 0.0]
    [atmosphere.constituent.mie]                 # albedo, phase and spectral law from Mie
    median_radius = 0.3                          # micrometres
    geometric_standard_deviation = 1.5
    refractive_index = [1.5, 0.01]               # real, imaginary (absorbing when > 0)

    # ... or read from a netCDF file (path relative to the scenario file), naming the file's
    # variables; its dims must be called layer / level / moment or be renamed with
    # `dimensions = {layer = "z", level = "zlev"}`; any other dim (wavelength, column...)
    # is carried through.
    [atmosphere.profile]
    file = "profile.nc"
    optical_depth = "tau"
    single_scattering_albedo = "ssa"
    phase_moments = "pmom"              # or phase = {kind = ...} for every layer
    temperature = "t"
    pressure = "p"

    [spectrum]                                   # optional: a wavelength dim
    wavelength = {start = 0.4, stop = 2.4, count = 30, units = "um"}   # or a list; nm, um, m
    reference_wavelength = 0.55                  # same units as wavelength (default: 0.55 um)

    [sun]                                        # optional (no sun: no beam at all)
    zenith = 30.0                                # degrees in [0, 90); a list adds a dim
    irradiance = 1.0                             # on a plane normal to the beam (default 1);
                                                 # a list per wavelength is allowed
    irradiance_units = "W m-2 nm-1"              # optional: labels every flux and radiance
                                                 # (without it they are relative to it)

    [view]                                       # optional: radiances at these angles
    zenith = [0, 30, 60]                         # degrees in [0, 90]
    azimuth = [0, 90, 180]                       # degrees, 0 = forward scattering side

    [surface]
    albedo = 0.1                                 # Lambertian, [0, 1]; or a list per wavelength
                                                 # (default 0: a black surface)
    temperature = 288.0                          # K (thermal runs; default: bottom level)
    # kind = "cox_munk"                          # or a bidirectional surface (see below)
    # wind_speed = 6.0

    [thermal]                                    # optional: thermal emission
    wavenumber_band = [500.0, 1500.0]            # cm-1, band-integrated Planck source
    # wavenumber = 667.0                         # or monochromatic
    top_diffuse_radiance = 0.0

    [solver]
    streams = 16                                 # even, >= 2
    delta_m = true
    single_scattering_correction = true
    fourier_tolerance = 1e-6
    phase_moments = 64                           # Legendre moments (default max(64, streams + 1))

    [output]
    levels = [0, 0.5, 1, 2, 4]                   # fractional level positions (default: all)
    variables = ["flux_up", "flux_down", "heating_rate"]   # default: everything
    chunk_size = 10                              # wavelengths per chunk of a chunked run

Phase function kinds (``phase = {kind = ...}``): ``isotropic``; ``henyey_greenstein``
(``asymmetry_parameter``, a number or one per layer); ``double_henyey_greenstein``
(``forward_asymmetry``, ``backward_asymmetry``, ``forward_fraction``); ``rayleigh``
(``depolarization``, default 0); ``tabulated`` (``angle`` in degrees and ``value`` lists);
``legendre`` (``coefficients``, chi_0 = 1 first).

Surface kinds (``[surface] kind = ...``, default ``"lambertian"`` with ``albedo``), the
functions of :mod:`lamina.surface` with their argument names as keys; every number may be a
list with one value per wavelength: ``rahman_pinty_verstraete`` (``amplitude``,
``bowl_exponent``, ``asymmetry``, optional ``hot_spot``); ``ross_li`` (``isotropic_weight``,
``volumetric_weight``, ``geometric_weight``); ``cox_munk`` (``wind_speed``, optional
``refractive_index`` (real) and ``shadowing``, true or false); ``hapke``
(``single_scattering_albedo``, optional ``asymmetry``, ``opposition_amplitude``,
``opposition_width``, ``h_approximation``). A bidirectional surface emits with its
directional emissivity in thermal runs. A weighted sum of surfaces (an areal mixture, say a
coastal pixel) is given as ``[[surface.component]]`` tables, each with a ``weight`` (a
number, or one per wavelength) and a ``kind`` with that kind's keys; it is
:func:`lamina.surface.weighted_sum` of them::

    [[surface.component]]
    weight = 0.7
    kind = "cox_munk"
    wind_speed = 5.0

    [[surface.component]]
    weight = 0.3
    kind = "lambertian"
    albedo = 0.2

Spectral dependence of a constituent's optical depth (``spectral_dependence``): ``"none"``
(default, grey), ``"rayleigh"`` (wavelength^-4, the Rayleigh law), or
``{angstrom_exponent = a}`` (wavelength^-a, Angstrom 1929). A ``mie`` constituent takes its
optical depth ratio, single-scattering albedo and phase function from Mie theory for a
lognormal size distribution (:func:`lamina.mie.lognormal_optics`).

Constituents are mixed per layer in the usual way: optical depths add, the single-scattering
albedo is the scattering-weighted mean and the phase moments are weighted by each
constituent's scattering optical depth.
"""

# This docstring is the reference of the format; keep it whole here. The reader is split by
# topic into private modules that import downward only: _tables (the TOML table reader and
# its did-you-mean errors; the bottom), _spectral ([spectrum], Mie constituents, spectral
# laws), _model (the Scenario and how it builds the atmosphere and the solver's arguments),
# _atmosphere (the [atmosphere] section and phase tables) and _sections ([solver], [sun],
# [view], [surface], [thermal], [output]); this module reads a file through them.

from __future__ import annotations

import tomllib
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from lamina.scenario._atmosphere import _parse_atmosphere
from lamina.scenario._model import Constituent as Constituent  # importable from here as before
from lamina.scenario._model import Scenario
from lamina.scenario._sections import OUTPUT_VARIABLES as _OUTPUT_VARIABLES
from lamina.scenario._sections import (
    _parse_output,
    _parse_solver,
    _parse_sun_and_view,
    _parse_surface,
    _parse_thermal,
)
from lamina.scenario._spectral import _parse_spectrum
from lamina.scenario._tables import ScenarioError, _Table

__all__ = ["Scenario", "ScenarioError", "load_scenario", "OUTPUT_VARIABLES"]

# Bound here with its doc comment so that the reference of lamina.scenario lists it (the
# [output] reader in _sections checks names against the same tuple).
#: Output variables a scenario's ``[output] variables`` may name (lamina.solve's outputs).
OUTPUT_VARIABLES = _OUTPUT_VARIABLES

def _parse(file: Path, data: Mapping[str, Any]) -> Scenario:
    """Validate the parsed TOML of ``file``, section by section, into a :class:`Scenario`."""
    root = _Table(file, "[top level]", data)
    root.check_keys(["title", "description", "atmosphere", "spectrum", "sun", "view",
                     "surface", "thermal", "solver", "output"])
    scenario: dict[str, Any] = {"path": file, "title": root.string("title", ""),
                                "description": root.string("description", "")}
    spectrum = _parse_spectrum(root)
    n_wavelengths = None
    if spectrum is not None:
        scenario["wavelength"], scenario["reference_wavelength"] = spectrum
        n_wavelengths = spectrum[0].size
    # [solver] first: the number of phase moments depends on the streams
    _parse_solver(root, scenario)
    if not root.has("atmosphere"):
        raise ScenarioError(f"{file}: missing required section [atmosphere]")
    _parse_atmosphere(root, scenario, spectrum is not None)
    _parse_sun_and_view(root, scenario, n_wavelengths)
    _parse_surface(root, scenario, n_wavelengths)
    _parse_thermal(root, scenario, spectrum is not None)
    _parse_output(root, scenario)
    return Scenario(**scenario)


def load_scenario(path: str | Path) -> Scenario:
    """Read and validate a scenario file.

    Parameters
    ----------
    path : str or Path
        A TOML scenario file (the format is described in :mod:`lamina.scenario`).

    Returns
    -------
    Scenario
        The validated scenario; ``build_atmosphere()`` and ``solve_kwargs()`` give the
        inputs of :func:`lamina.solve`.

    Raises
    ------
    ScenarioError
        When the file is missing, is not valid TOML (the message gives line and column) or
        does not describe a valid run (the message gives the key path and what was expected).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (folder / "sky.toml").write_text('''
    ... [atmosphere]
    ... optical_depth = [0.1, 2.0]
    ... single_scattering_albedo = [1.0, 0.99]
    ... phase = {kind = "isotropic"}
    ... [sun]
    ... zenith = 30
    ... ''')
    >>> scenario = load_scenario(folder / "sky.toml")
    >>> scenario.solve_kwargs()["sun_zenith"]
    30.0
    """
    file = Path(path)
    try:
        text = file.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ScenarioError(f"{file}: no such scenario file") from None
    except (OSError, UnicodeDecodeError) as error:
        raise ScenarioError(f"{file}: cannot read the scenario file ({error})") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        where = ""
        line, column = getattr(error, "lineno", None), getattr(error, "colno", None)
        message = getattr(error, "msg", str(error))
        if line is not None and "line" not in message:
            where = f" (at line {line}, column {column})"
        raise ScenarioError(f"{file}: TOML syntax error: {message}{where}") from None
    return _parse(file, data)
