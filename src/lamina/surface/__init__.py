"""Bidirectional reflectance of the ground: published surface models and their sums.

Every surface has ``brdf(sun_zenith, view_zenith, view_azimuth)`` (sr^-1),
``directional_albedo(sun_zenith)``, ``fourier_terms(incident_cosines, reflected_cosines,
n_terms)`` (the azimuthal expansion a discrete-ordinates bottom boundary needs) and
``check_energy(sun_zenith)``. Parameters may be scalars or DataArrays along extra dims
(a spectral surface); results broadcast with xarray. Surfaces combine linearly:
``0.7 * a + 0.3 * b`` or ``weighted_sum([(0.7, a), (0.3, b)])``.

Models: `lambertian`, `rahman_pinty_verstraete`, `ross_li`, `cox_munk`, `hapke`; see each
for its published source. How to add one: DEVELOPERS.md, "Adding a surface".
"""

from lamina.surface._base import Surface, WeightedSum, weighted_sum
from lamina.surface.models import (
    cox_munk,
    cox_munk_slope_variance,
    fresnel_reflectance,
    hapke,
    hapke_h_function,
    lambertian,
    li_sparse_reciprocal_kernel,
    rahman_pinty_verstraete,
    ross_li,
    ross_thick_kernel,
)

__all__ = [
    "Surface",
    "WeightedSum",
    "cox_munk",
    "cox_munk_slope_variance",
    "fresnel_reflectance",
    "hapke",
    "hapke_h_function",
    "lambertian",
    "li_sparse_reciprocal_kernel",
    "rahman_pinty_verstraete",
    "ross_li",
    "ross_thick_kernel",
    "weighted_sum",
]
