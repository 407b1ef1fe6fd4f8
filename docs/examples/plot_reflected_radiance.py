"""
Reflected radiance in and out of the sun's plane
================================================

Radiance leaving the top of a cloud layer against view zenith angle, on the
forward-scattering side (view azimuth 0), across it (90) and on the backscattering side
(180). The forward side is the brightest, more so at grazing angles: the forward-peaked
phase function sends light on in the direction it was going. Radiance is in units of
the beam's irradiance per steradian; :func:`lamina.plotting.radiance_by_view_zenith` draws
the same figure in one call.
"""

import matplotlib.pyplot as plt
import numpy as np

import lamina

atm = lamina.make_atmosphere([2.0], [0.999], lamina.phase.henyey_greenstein(0.8, 64))
view = np.linspace(0.0, 85.0, 35)
out = lamina.solve(atm, streams=16, sun_zenith=40.0, surface_albedo=0.05, view_zenith=view,
                   view_azimuth=[0.0, 90.0, 180.0])

reflected = out.radiance.sel(level=0, direction="up")
figure, ax = plt.subplots(figsize=(6, 4))
for azimuth in reflected.view_azimuth.values:
    ax.plot(view, reflected.sel(view_azimuth=azimuth), label=f"view azimuth {azimuth:.0f}")
ax.axvline(40.0, color="0.6", ls=":", label="sun zenith")
ax.set_xlabel("view zenith (degrees)")
ax.set_ylabel("reflected radiance / (S per sr)")
ax.legend()
ax.set_title(f"{int(out.fourier_terms)} Fourier terms summed")
figure.tight_layout()
