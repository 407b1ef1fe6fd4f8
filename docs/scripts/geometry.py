"""The geometry of lamina's conventions, drawn at documentation build time.

Left: a side view of the layer stack (layers numbered from the top, levels are their
boundaries, fractional output positions inside a layer), the incident beam at zenith angle
theta_0 and an upward view direction at zenith angle theta. Right: seen from above, the
azimuth of a propagation direction measured from that of the incident beam.
"""

import matplotlib.pyplot as plt
import numpy as np

figure, (side, top) = plt.subplots(1, 2, figsize=(9.5, 4.2), width_ratios=[1.35, 1.0])

# --- side view -----------------------------------------------------------------------------
levels = [0.0, -1.0, -2.2, -3.0]  # drawing heights of levels 0..3 (top first)
for index, height in enumerate(levels):
    side.hlines(height, 0.0, 4.0, color="0.3", lw=1.0)
    side.text(-0.15, height, f"level {index}", ha="right", va="center", fontsize=9)
for index in range(len(levels) - 1):
    middle = 0.5 * (levels[index] + levels[index + 1])
    side.text(4.15, middle, f"layer {index}", ha="left", va="center", fontsize=9, color="0.25")
side.fill_between([0, 4], levels[-1], levels[-1] - 0.25, color="0.8")
side.text(2.0, levels[-1] - 0.42, "surface (albedo, temperature)", ha="center", fontsize=8)
# a fractional output position: level 1.5 is half-way, in optical depth, through layer 1
half = 0.5 * (levels[1] + levels[2])
side.hlines(half, 0.0, 4.0, color="tab:green", lw=1.0, ls="--")
side.text(-0.15, half, "output level 1.5", ha="right", va="center", fontsize=9,
          color="tab:green")

theta0 = np.radians(35.0)
start = np.array([0.6, 0.9])
end = start + 2.2 * np.array([np.sin(theta0), -np.cos(theta0)])
side.annotate("", xy=end, xytext=start,
              arrowprops={"arrowstyle": "-|>", "color": "tab:orange", "lw": 2.0})
side.plot([start[0], start[0]], [start[1], start[1] - 1.1], color="tab:orange", lw=0.8, ls=":")
side.text(start[0] + 0.1, start[1] - 0.45, r"$\theta_0$", color="tab:orange", fontsize=11)
side.text(start[0] - 0.4, start[1] + 0.12, r"beam, irradiance $S$ normal to it",
          color="tab:orange", fontsize=9, ha="left", va="bottom")

theta = np.radians(30.0)
foot = np.array([3.2, levels[0]])
tip = foot + 1.0 * np.array([np.sin(theta), np.cos(theta)])
side.annotate("", xy=tip, xytext=foot,
              arrowprops={"arrowstyle": "-|>", "color": "tab:blue", "lw": 2.0})
side.plot([foot[0], foot[0]], [foot[1], foot[1] + 0.9], color="tab:blue", lw=0.8, ls=":")
side.text(foot[0] + 0.05, foot[1] + 0.95, r"$\theta$", color="tab:blue", fontsize=11)
side.text(foot[0] + 0.6, foot[1] + 0.35, 'direction "up",\nview_zenith $\\theta$',
          color="tab:blue", fontsize=8)

side.annotate("", xy=(4.9, levels[-1]), xytext=(4.9, levels[0]),
              arrowprops={"arrowstyle": "-|>", "color": "0.4"})
side.text(5.0, -1.5, "optical depth\ngrows downward", rotation=90, va="center", fontsize=8,
          color="0.4")
side.set_xlim(-1.9, 5.4)
side.set_ylim(-3.6, 2.0)
side.set_axis_off()
side.set_title("layers, levels and zenith angles", fontsize=10)

# --- top view ------------------------------------------------------------------------------
circle = plt.Circle((0, 0), 1.0, fill=False, color="0.5")
top.add_patch(circle)
top.annotate("", xy=(1.15, 0), xytext=(0, 0),
             arrowprops={"arrowstyle": "-|>", "color": "tab:orange", "lw": 2.0})
top.text(1.18, 0.08, "azimuth of the beam's\npropagation: view_azimuth 0\n(forward side)",
         fontsize=8, color="tab:orange", va="bottom")
top.text(-1.2, 0.08, "view_azimuth 180\n(backscattering side)", fontsize=8, ha="right",
         va="bottom")
top.plot([-1.0], [0.0], "o", color="0.3")
phi = np.radians(60.0)
top.annotate("", xy=(np.cos(phi), np.sin(phi)), xytext=(0, 0),
             arrowprops={"arrowstyle": "-|>", "color": "tab:blue", "lw": 2.0})
arc = np.linspace(0, phi, 30)
top.plot(0.35 * np.cos(arc), 0.35 * np.sin(arc), color="tab:blue", lw=1.0)
top.text(0.42, 0.2, r"$\phi$", color="tab:blue", fontsize=11)
top.text(np.cos(phi) + 0.05, np.sin(phi) + 0.05, "view direction (propagation)",
         fontsize=8, color="tab:blue")
top.set_xlim(-2.3, 2.3)
top.set_ylim(-1.4, 1.5)
top.set_aspect("equal")
top.set_axis_off()
top.set_title("azimuths, seen from above", fontsize=10)
figure.tight_layout()
