"""
A reflectance spectrum with a dask-chunked run
==============================================

A Rayleigh atmosphere (optical depth proportional to wavelength to the -4) above a thin
haze: the reflected flux falls from blue to red. The atmosphere is chunked along
``wavelength``, so :func:`lamina.solve` returns a lazy result that dask computes chunk by
chunk.
"""

import matplotlib.pyplot as plt
import numpy as np
import xarray as xr

import lamina

wavelength = np.linspace(0.35, 1.0, 27)
rayleigh = 0.0973 * (wavelength / 0.55) ** -4.0  # about the sea-level value at 550 nm
haze = 0.2 * (wavelength / 0.55) ** -1.3          # an Angstrom law
tau = xr.DataArray(np.stack([rayleigh, haze], axis=-1), dims=("wavelength", "layer"),
                   coords={"wavelength": wavelength})
moments = xr.DataArray(np.stack([lamina.phase.rayleigh(0.03, 16),
                                 lamina.phase.henyey_greenstein(0.7, 16)]),
                       dims=("layer", "moment"))
atm = lamina.make_atmosphere(tau, [1.0, 0.95], moments)
lazy = lamina.solve(atm.chunk({"wavelength": 9}), streams=8, sun_zenith=30.0,
                    surface_albedo=0.05)
out = lazy.compute()

albedo = out.flux_up.sel(level=0) / out.flux_down.sel(level=0)
figure, ax = plt.subplots(figsize=(6, 3.8))
ax.plot(wavelength, albedo, marker="o")
ax.set_xlabel("wavelength (micrometres)")
ax.set_ylabel("planetary albedo (flux up / flux down at the top)")
figure.tight_layout()
