"""
Delta-M and the single-scattering correction
============================================

Transmitted radiance below a forward-scattering cloud (g = 0.85) in the sun's plane,
computed with 8 streams with and without delta-M scaling and the single-scattering and
aureole corrections, against 64 streams with all three. With a few streams the uncorrected
solution misses the shape of the forward peak; the corrections restore it.
"""

import matplotlib.pyplot as plt
import numpy as np

import lamina

atm = lamina.make_atmosphere([2.0], [0.999], lamina.phase.henyey_greenstein(0.85, 128))
view = np.linspace(0.0, 80.0, 41)
common = dict(sun_zenith=30.0, surface_albedo=0.0, view_zenith=view, view_azimuth=[0.0])


def transmitted(**options):
    out = lamina.solve(atm, **common, **options)
    return out.radiance.sel(level=1, direction="down", view_azimuth=0.0)


figure, ax = plt.subplots(figsize=(6, 4))
ax.plot(view, transmitted(streams=64), color="k", lw=2.5, label="64 streams, corrected")
ax.plot(view, transmitted(streams=8, delta_m=False, single_scattering_correction=False,
                          aureole_correction=False), label="8 streams, no delta-M")
ax.plot(view, transmitted(streams=8, single_scattering_correction=False,
                          aureole_correction=False), label="8 streams, delta-M only")
ax.plot(view, transmitted(streams=8), ls="--", label="8 streams, all corrections")
ax.set_yscale("log")
ax.set_xlabel("view zenith (degrees), on the forward side")
ax.set_ylabel("transmitted radiance / (S per sr)")
ax.legend()
figure.tight_layout()
