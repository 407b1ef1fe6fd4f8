"""lamina: discrete-ordinates radiative transfer with labelled xarray outputs.

``import lamina`` makes every public module available as an attribute: ``lamina.phase``,
``lamina.planck``, ``lamina.io``, ``lamina.mie``, ``lamina.scenario``, ``lamina.surface``,
``lamina.planet``, ``lamina.polarization``, ``lamina.spherical``, ``lamina.geometry``,
``lamina.progress`` and ``lamina.quadrature`` are imported with the package;
``lamina.plotting`` (which loads matplotlib) and ``lamina.validation`` are imported on first
use.

>>> import lamina
>>> atm = lamina.make_atmosphere(optical_depth=[0.1, 1.0], single_scattering_albedo=[1.0, 0.9],
...                              phase_moments=lamina.phase.henyey_greenstein(0.8, 32))
>>> out = lamina.solve(atm, streams=16, sun_zenith=30.0)
"""

import importlib as _importlib

# io, mie and scenario import lamina.solve only inside their functions, so the order of
# these imports cannot make a cycle
from lamina import (
    geometry,
    io,
    mie,
    phase,
    planck,
    planet,
    polarization,
    progress,
    quadrature,
    scenario,
    spherical,
    surface,
)
from lamina._checks import LaminaWarning
from lamina.atmosphere import check_atmosphere, make_atmosphere
from lamina.prepared import Solver
from lamina.solve import SolverError, solve

__version__ = "0.1.0"

#: Modules imported on first access (heavy imports that a solver run does not need).
_LAZY_MODULES = ("plotting", "validation")

__all__ = [
    "LaminaWarning",
    "Solver",
    "SolverError",
    "__version__",
    "check_atmosphere",
    "geometry",
    "io",
    "make_atmosphere",
    "mie",
    "phase",
    "planck",
    "planet",
    "plotting",
    "polarization",
    "progress",
    "quadrature",
    "scenario",
    "solve",
    "spherical",
    "surface",
    "validation",
]


def __getattr__(name: str) -> object:
    # PEP 562: import lamina.plotting / lamina.validation when first named
    if name in _LAZY_MODULES:
        return _importlib.import_module(f"lamina.{name}")
    raise AttributeError(f"module 'lamina' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
