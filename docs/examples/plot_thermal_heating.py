"""
Thermal infrared: fluxes and heating rates
==========================================

Thermal emission only (no sun) in a band of 500 to 1500 cm-1 through an absorbing profile
with level temperatures and pressures; :func:`lamina.solve` returns the band fluxes and the
heating rate of every layer in K per day.
"""

import matplotlib.pyplot as plt
import numpy as np

import lamina

pressure = np.geomspace(100.0, 100000.0, 11)              # Pa, top first
temperature = 288.0 - 70.0 * (1 - (pressure / 1e5) ** 0.19)  # an invented profile, K
tau = 2.0 * np.diff(pressure / 1e5) ** 1.0 * 3.0          # absorption grows with pressure
atm = lamina.make_atmosphere(tau, np.zeros_like(tau), [1.0], temperature=temperature,
                             pressure=pressure)
out = lamina.solve(atm, streams=8, sun_irradiance=0.0, surface_albedo=0.0,
                   wavenumber_band=(500.0, 1500.0))

figure, (left, right) = plt.subplots(1, 2, figsize=(7.5, 4.5), sharey=True)
left.plot(out.flux_up, pressure / 100, label="up")
left.plot(out.flux_down, pressure / 100, label="down")
left.set_xlabel("band flux (W m-2)")
left.set_ylabel("pressure (hPa)")
left.set_yscale("log")
left.invert_yaxis()
left.legend()
middle = np.sqrt(pressure[:-1] * pressure[1:]) / 100
right.step(out.heating_rate, middle, where="mid")
right.axvline(0.0, color="0.6", lw=0.8)
right.set_xlabel("heating rate (K/day)")
figure.tight_layout()
