"""Degree of linear polarization across the sky of a Rayleigh atmosphere.

A clear sky (optical depth 0.25 of Rayleigh scattering, depolarization 0.03) over a dark
Lambertian ground (albedo 0.05), the sun at 60 degrees, seen from the ground. The polar
plot shows the degree of polarization of the downward radiance over the whole sky (radius:
view zenith; angle: view azimuth, 0 toward the sun's azimuth). The band of strong
polarization lies about 90 degrees from the sun; the points of zero polarization near the
sun (Babinet about 20 degrees above it, Brewster about 20 degrees below it) are where the
plotted degree falls to 0 (white contours at 0.02 and 0.1); the Arago point, above the
antisolar point, lies at the horizon for this sun. Writes
``examples/figures/sky_polarization.png``::

    python examples/sky_polarization.py
"""

from __future__ import annotations

from pathlib import Path

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

import lamina  # noqa: E402

HERE = Path(__file__).resolve().parent
SUN_ZENITH = 60.0


def main() -> Path:
    matrix = lamina.phase.rayleigh_matrix(depolarization=0.03)
    atmosphere = lamina.make_atmosphere([0.25], [1.0], scattering_matrix_moments=matrix)
    zenith = np.linspace(0.0, 88.0, 45)
    azimuth = np.linspace(0.0, 360.0, 73)
    out = lamina.solve(atmosphere, streams=16, sun_zenith=SUN_ZENITH, surface_albedo=0.05,
                       view_zenith=zenith, view_azimuth=azimuth, stokes=3)
    degree = out.degree_of_polarization.isel(level=-1).sel(direction="down")
    figure, ax = plt.subplots(subplot_kw={"projection": "polar"}, figsize=(5.6, 5.0))
    # view_azimuth 0 is downward light propagating in the beam's azimuth: light from the
    # sun's side of the sky, so the sun stands at azimuth 0 of the plot
    mesh = ax.pcolormesh(np.radians(azimuth), zenith,
                         degree.transpose("view_zenith", "view_azimuth").values,
                         cmap="viridis", vmin=0.0, vmax=1.0, shading="gouraud")
    ax.contour(np.radians(azimuth), zenith,
               degree.transpose("view_zenith", "view_azimuth").values,
               levels=[0.02, 0.1], colors="white", linewidths=0.8)
    ax.plot([0.0], [SUN_ZENITH], marker="*", color="orange", markersize=14, label="sun")
    ax.set_rmax(90.0)
    ax.set_rticks([30, 60, 90])
    ax.set_title(f"Degree of polarization of skylight, Rayleigh sky (optical depth 0.25),\n"
                 f"sun at {SUN_ZENITH:g} degrees zenith (radius: zenith angle)", fontsize=9)
    figure.colorbar(mesh, ax=ax, label="degree of linear polarization", shrink=0.8)
    ax.legend(loc="lower left", bbox_to_anchor=(-0.1, -0.1), fontsize=8)
    path = HERE / "figures" / "sky_polarization.png"
    figure.savefig(path, dpi=110, bbox_inches="tight")
    plt.close(figure)
    return path


if __name__ == "__main__":
    print(main())
