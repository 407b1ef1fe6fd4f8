"""Reflected radiance across the principal plane over the sea, for three wind speeds.

Runs the atmosphere of ``ocean_glint.toml`` (an invented scene) over Cox-Munk seas at 2, 6
and 12 m/s with the sun at 35 degrees and plots the radiance leaving the top of the
atmosphere against the signed view zenith: negative on the backscatter side (view azimuth
180), positive on the forward side (azimuth 0), where the glint peaks at the sun's zenith.
Writes ``examples/figures/glint_principal_plane.png``::

    python examples/glint_principal_plane.py
"""

from __future__ import annotations

from pathlib import Path

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

import lamina  # noqa: E402
from lamina.scenario import load_scenario  # noqa: E402

HERE = Path(__file__).resolve().parent
WIND_SPEEDS = (2.0, 6.0, 12.0)


def main() -> Path:
    scenario = load_scenario(HERE / "ocean_glint.toml")
    atmosphere = scenario.build_atmosphere()
    sun = float(scenario.sun_zenith)
    zenith = np.concatenate([np.arange(0.0, 80.0, 2.0), [sun - 1.0, sun + 1.0]])
    zenith = np.unique(np.round(zenith, 6))
    figure, ax = plt.subplots(figsize=(6.4, 4.2), layout="constrained")
    for wind in WIND_SPEEDS:
        out = lamina.solve(atmosphere, streams=32, sun_zenith=sun,
                           surface=lamina.surface.cox_munk(wind), view_zenith=zenith,
                           view_azimuth=[0.0, 180.0])
        up = out.radiance.sel(direction="up").isel(level=0)
        signed = np.concatenate([-zenith[::-1], zenith])
        values = np.concatenate([up.sel(view_azimuth=180.0).values[::-1],
                                 up.sel(view_azimuth=0.0).values])
        ax.plot(signed, values, label=f"{wind:g} m/s")
    ax.axvline(sun, color="0.6", lw=0.8, ls="--")
    ax.set_yscale("log")
    ax.set_xlabel("view zenith (degrees; < 0 backscatter side, > 0 forward side)")
    ax.set_ylabel("reflected radiance at the top (sr$^{-1}$ per unit irradiance)")
    ax.set_title(f"Sun glint across the principal plane, sun zenith {sun:g} degrees")
    ax.legend(title="wind speed")
    path = HERE / "figures" / "glint_principal_plane.png"
    figure.savefig(path, dpi=120)
    plt.close(figure)
    return path


if __name__ == "__main__":
    print(main())
