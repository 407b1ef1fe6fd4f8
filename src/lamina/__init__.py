"""lamina: discrete-ordinates radiative transfer with labelled xarray outputs.

>>> import lamina
>>> atm = lamina.make_atmosphere(optical_depth=[0.1, 1.0], single_scattering_albedo=[1.0, 0.9],
...                              phase_moments=lamina.phase.henyey_greenstein(0.8, 32))
>>> out = lamina.solve(atm, streams=16, sun_zenith=30.0)
"""

from lamina import phase, planck
from lamina.atmosphere import check_atmosphere, make_atmosphere
from lamina.solve import SolverError, solve

__version__ = "0.1.0"

__all__ = [
    "SolverError",
    "__version__",
    "check_atmosphere",
    "make_atmosphere",
    "phase",
    "planck",
    "solve",
]
