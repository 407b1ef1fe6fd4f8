"""Print the accuracy table of delta-M and the single-scattering correction.

A Henyey-Greenstein cloud (g = 0.85, optical thickness 4, single-scattering albedo 0.999,
black surface, sun at 30 degrees) is solved with 8, 16 and 32 streams: without delta-M or
correction, with delta-M only, and with delta-M and the Nakajima-Tanaka (1988) single-
scattering correction. The reference is 128 streams without either (chi_128 = 0.85**128 ~
1e-9, so nothing is truncated). The last method adds the aureole correction (multiple
scattering inside the forward peak, see lamina.solve). Radiance errors are the largest
relative errors over view zenith 0..75 degrees and azimuths 0..180, away from the peaks:
reflected light with scattering angles below 170 degrees, transmitted light with
scattering angles above 20 degrees; "aureole" is transmitted light within 20 degrees of
the beam.

Run: python validation/forward_peak_table.py
"""

import numpy as np

import lamina

SUN = 30.0
VIEW = np.array([0.0, 10.0, 20.0, 30.0, 40.0, 50.0, 60.0, 75.0])
AZIMUTH = np.array([0.0, 15.0, 45.0, 90.0, 135.0, 180.0])


def scattering_angle(sign: float) -> np.ndarray:
    mu = np.cos(np.radians(VIEW))[:, None]
    mu0 = np.cos(np.radians(SUN))
    cosine = -sign * mu * mu0 + np.sqrt(1 - mu**2) * np.sqrt(1 - mu0**2) * np.cos(
        np.radians(AZIMUTH))[None, :]
    return np.degrees(np.arccos(np.clip(cosine, -1, 1)))


def main() -> None:
    atm = lamina.make_atmosphere([4.0], [0.999], lamina.phase.henyey_greenstein(0.85, 400))
    options = dict(sun_zenith=SUN, surface_albedo=0.0, view_zenith=VIEW,
                   view_azimuth=AZIMUTH, fourier_tolerance=1e-8)
    reference = lamina.solve(atm, streams=128, delta_m=False,
                             single_scattering_correction=False, **options)
    up_angle, down_angle = scattering_angle(1.0), scattering_angle(-1.0)
    rows = []
    methods = [("no delta-M, no correction", False, False, False),
               ("delta-M only", True, False, False),
               ("delta-M + single scattering", True, True, False),
               ("delta-M + single scattering + aureole", True, True, True)]
    for label, delta_m, correction, aureole in methods:
        for streams in (8, 16, 32):
            out = lamina.solve(atm, streams=streams, delta_m=delta_m,
                               single_scattering_correction=correction,
                               aureole_correction=aureole, **options)
            up = np.abs(out.radiance.sel(level=0, direction="up")
                        / reference.radiance.sel(level=0, direction="up") - 1).values
            down = np.abs(out.radiance.sel(level=1, direction="down")
                          / reference.radiance.sel(level=1, direction="down") - 1).values
            flux = max(abs(float(out[name][i] / reference[name][i]) - 1)
                       for name, i in (("flux_up", 0), ("flux_down", -1)))
            rows.append((label, streams, 100 * up[up_angle < 170].max(),
                         100 * down[down_angle > 20].max(), 100 * down[down_angle <= 20].max(),
                         100 * flux))
    print("| method | streams | reflected | transmitted | aureole (< 20 deg) | fluxes |")
    print("|---|---|---|---|---|---|")
    for label, streams, up, down, aureole, flux in rows:
        print(f"| {label} | {streams} | {up:.2f} % | {down:.2f} % | {aureole:.2f} % | "
              f"{flux:.3f} % |")


if __name__ == "__main__":
    main()
