"""
Fluxes and mean intensity in a cloudy sky
=========================================

A clear Rayleigh layer over a Henyey-Greenstein cloud and an absorbing haze, the sun at 30
degrees, over a surface of albedo 0.1. Outputs are asked for at fractional level positions
inside the cloud as well as at the levels, so that the profiles are smooth.
"""

import matplotlib.pyplot as plt
import numpy as np

import lamina

atm = lamina.make_atmosphere(
    optical_depth=[0.1, 4.0, 0.5],
    single_scattering_albedo=[1.0, 0.999, 0.9],
    phase_moments=np.stack([lamina.phase.rayleigh(n_moments=64),
                            lamina.phase.henyey_greenstein(0.85, 64),
                            lamina.phase.henyey_greenstein(0.7, 64)]),
)
positions = np.concatenate([[0.0], np.linspace(1.0, 2.0, 21), [3.0]])
out = lamina.solve(atm, streams=16, sun_zenith=30.0, surface_albedo=0.1,
                   output_levels=positions)

depth = out.cumulative_optical_depth
figure, (left, right) = plt.subplots(1, 2, figsize=(7.5, 4.5), sharey=True)
left.plot(out.flux_up, depth, label="up (diffuse)")
left.plot(out.flux_down_diffuse, depth, label="down (diffuse)")
left.plot(out.flux_down_direct, depth, label="down (direct beam)")
left.set_xlabel("flux / S")
left.set_ylabel("cumulative optical depth")
left.legend()
right.plot(out.actinic_flux, depth, color="k")
right.set_xlabel(r"actinic flux $4\pi J$ / S")
left.invert_yaxis()
figure.suptitle("a cloudy sky, sun at 30 degrees")
figure.tight_layout()
