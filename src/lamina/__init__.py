"""lamina: discrete-ordinates radiative transfer with labelled xarray outputs."""

__version__ = "0.1.0"
