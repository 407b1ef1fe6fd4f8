"""
Mie phase functions of cloud droplets and haze
==============================================

Phase functions of two lognormal size distributions of water spheres at 0.55 micrometres
from :func:`lamina.mie.lognormal_optics`, evaluated from their Legendre moments with
:func:`lamina.phase.evaluate`, beside the Henyey-Greenstein function of the same asymmetry
parameter.
"""

import matplotlib.pyplot as plt
import numpy as np

import lamina
from lamina.mie import lognormal_optics

angle = np.linspace(0.0, 180.0, 361)
figure, ax = plt.subplots(figsize=(6, 4))
for radius, label in ((0.1, "haze, r_g = 0.1 um"), (2.0, "droplets, r_g = 2 um")):
    optics = lognormal_optics([0.55], 1.33, radius, 1.5, n_moments=128)
    moments = optics.phase_moments.isel(wavelength=0).values
    g = float(optics.asymmetry_parameter[0])
    (line,) = ax.plot(angle, lamina.phase.evaluate(moments, angle), label=f"{label}, g = {g:.2f}")
    ax.plot(angle, lamina.phase.evaluate(lamina.phase.henyey_greenstein(g, 128), angle),
            color=line.get_color(), ls=":", lw=1.0)
ax.set_yscale("log")
ax.set_xlabel("scattering angle (degrees)")
ax.set_ylabel("phase function (mean 1 over the sphere)")
ax.legend(title="dotted: Henyey-Greenstein, same g")
figure.tight_layout()
