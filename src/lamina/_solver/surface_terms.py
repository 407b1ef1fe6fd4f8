"""Check step, surface part: a bidirectional surface as the arrays the kernel's boundary takes.

``solve(..., surface=...)`` hands a :class:`lamina.surface.Surface`; this step checks it
(type, energy at the run's own sun angles) and evaluates, once over the surface's parameter
dims (not per column: columns that share a surface share its arrays through broadcasting),

- the Fourier terms f_m(mu_i, mu_j) of the BRDF on the quadrature cosines, reflected x
  incident, for every term the solver uses (``Surface.fourier_terms``' azimuth rule);
- f_m(mu_i, mu0), the terms of the direct beam's reflection into the quadrature cosines;
- f_m(mu_u, mu_j), the terms at the view cosines (the exact BRDF there, no interpolation
  between quadrature cosines);
- f(mu_u, mu0, phi), the exact BRDF of the beam's reflection at the view angles (added by
  the kernel outside the Fourier series);
- the directional emissivity 1 - A(mu) at the quadrature and view cosines (thermal runs;
  ones otherwise, and then unused).

They are DataArrays whose last dims are private core dims; the plan step appends them to
the block inputs. The kernel's ``boundary`` module docstring derives how they enter.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import xarray as xr

from lamina._solver.common import (
    QUADRATURE_DIM,
    SURFACE_CORE_DIMS,
    VIEW_DIM,
    Options,
    SurfaceArrays,
    view_cosines,
)
from lamina.quadrature import double_gauss

# Largest number of float64 elements of one block of BRDF evaluations (about 16 MB).
_BLOCK_ELEMENTS = 2_000_000


def check_surface(surface: object, surface_albedo: object) -> None:
    """TypeError for something that is not a lamina surface; ValueError for both kinds."""
    if surface is None:
        return
    from lamina.surface import Surface

    if surface_albedo is not None:
        raise ValueError("give either surface (a bidirectional lamina.surface) or "
                         "surface_albedo (a Lambertian albedo), not both")
    if not isinstance(surface, Surface):
        raise TypeError("surface must be a lamina.surface surface (e.g. "
                        "lamina.surface.cox_munk(5.0)); got "
                        f"{type(surface).__name__}")


def surface_arrays(surface: object, options: Options, thermal: bool) -> SurfaceArrays | None:
    """The kernel's arrays of a bidirectional surface for this run, or None without one."""
    if surface is None:
        return None
    if options.views.per_pixel and thermal:
        raise ValueError("surface= with one view per pixel (view_zenith or view_azimuth as "
                         "a DataArray) and thermal emission is not supported yet: give lists "
                         "of view angles, or no wavenumber_band/wavenumber")
    zenith = options.sun_zenith
    # a curved planet's sun may stand at or below the ground's horizon (planet_radius): the
    # ground then gets no beam (the kernel weights these terms by max(mu0, 0) = 0), and the
    # BRDF is evaluated at 85 degrees instead, inside every surface's checked range
    zenith = zenith.where(zenith < 90.0, 85.0)
    if options.beam and zenith.chunks is None:
        # the energy check at the run's own sun angles (the surface checked its grid)
        surface.check_energy(np.unique(np.asarray(zenith.values)))
    mu, _ = double_gauss(options.streams)
    views = options.views
    terms = options.max_fourier_terms if views.wanted else 1
    mu0 = np.cos(np.radians(zenith))
    view_mu = views.cosines if views.wanted else np.zeros(0)
    cos_phi = np.cos(views.azimuth_radians) if views.wanted else np.zeros(0)

    def quadrature(values, _):
        return surface._fourier_values(values, mu, mu, terms)

    def beam(values, cosine):
        # (N, term, quadrature, 1): the beam is the one incident direction
        return surface._fourier_values(values, mu, cosine[:, None], terms)[..., 0]

    def view(values, _):
        return surface._fourier_values(values, view_mu, mu, terms)

    def view_beam(values, cosine):
        from lamina.surface._base import Geometry

        expand = {k: v[:, None, None] for k, v in values.items()}
        geometry = Geometry(cosine[:, None, None], view_mu[None, :, None],
                            cos_phi[None, None, :])
        return np.broadcast_to(surface._evaluate(expand, geometry),
                               (cosine.size, view_mu.size, cos_phi.size))

    arrays = (
        _over_parameters(surface, None, quadrature, (terms, mu.size, mu.size),
                         SURFACE_CORE_DIMS[0]),
        _over_parameters(surface, mu0, beam, (terms, mu.size), SURFACE_CORE_DIMS[1][1:]),
        _over_parameters(surface, None, view, (terms, view_mu.size, mu.size), SURFACE_CORE_DIMS[2]),
        _over_parameters(surface, mu0, view_beam, (view_mu.size, cos_phi.size),
                         SURFACE_CORE_DIMS[3][1:]),
        _emissivity(surface, mu, QUADRATURE_DIM, thermal),
        _emissivity(surface, view_mu, VIEW_DIM, thermal),
    )
    if views.per_pixel:
        fourier, beam_views, emissivity = _pixel_view_arrays(surface, options, mu, terms, mu0,
                                                             thermal)
        arrays = (arrays[0], arrays[1], fourier, beam_views, arrays[4], emissivity)
    return SurfaceArrays(arrays=arrays, description=repr(surface))


def _pixel_view_arrays(surface, options: Options, mu: np.ndarray, terms: int,
                       mu0: xr.DataArray, thermal: bool) -> tuple[xr.DataArray, ...]:
    """The view arrays for one view per pixel: f_m(mu_u, mu_j), the exact beam BRDF and
    the view emissivity of each pixel's own view (a view axis of length 1)."""
    zenith, azimuth = options.pixel_views
    view_mu = xr.apply_ufunc(view_cosines, zenith)
    cos_phi = np.cos(np.radians(azimuth))

    def view(values, cosines):
        return surface._fourier_values(values, cosines[0][:, None], mu, terms)

    def view_beam(values, cosines):
        from lamina.surface._base import Geometry

        expand = {k: v[:, None, None] for k, v in values.items()}
        geometry = Geometry(*(cosine[:, None, None] for cosine in cosines))
        return np.broadcast_to(surface._evaluate(expand, geometry), (cosines[0].size, 1, 1))

    fourier = _over_parameters(surface, (view_mu,), view, (terms, 1, mu.size),
                               SURFACE_CORE_DIMS[2])
    beam = _over_parameters(surface, (mu0, view_mu, cos_phi), view_beam, (1, 1),
                            SURFACE_CORE_DIMS[3][1:])
    # thermal runs are refused in surface_arrays: directional_emissivity evaluates the
    # angles as an outer axis, not pixel by pixel
    emissivity = xr.DataArray(np.ones(1), dims=(VIEW_DIM,))
    return fourier, beam, emissivity


def _over_parameters(surface, cosine: xr.DataArray | None, compute: Callable,
                     trailing: tuple[int, ...], dims: list[str]) -> xr.DataArray:
    """``compute(values, cosines)`` over the broadcast of the surface's parameters (and the
    beam cosines, if given), flattened and in blocks of bounded memory."""
    keys = list(surface._parameters)
    several = isinstance(cosine, tuple)   # then compute gets a tuple of flat cosines
    others = list(cosine) if several else [cosine] if cosine is not None else []
    everything = xr.broadcast(*surface._parameters.values(), *others) if keys or others \
        else []
    template = everything[0] if everything else xr.DataArray(0.0)
    flat = [np.asarray(a.values).reshape(-1) for a in everything]
    count = template.size
    step = max(1, _BLOCK_ELEMENTS // max(int(np.prod(trailing)) * 512, 1))
    pieces = []
    for start in range(0, count, step):
        values = {k: v[start:start + step] for k, v in zip(keys, flat, strict=False)}
        if several:
            cosines = tuple(c[start:start + step] for c in flat[len(flat) - len(others):])
        else:
            cosines = flat[-1][start:start + step] if cosine is not None else None
        piece = compute(values, cosines)
        pieces.append(np.broadcast_to(piece, (min(step, count - start), *trailing)))
    data = np.concatenate(pieces, axis=0).reshape(template.shape + trailing)
    return xr.DataArray(data, dims=template.dims + tuple(dims))


def _emissivity(surface, cosines: np.ndarray, dim: str, thermal: bool) -> xr.DataArray:
    """1 - A(mu) at the cosines (thermal runs); ones (unused) otherwise or with none."""
    if not thermal or cosines.size == 0:
        return xr.DataArray(np.ones(cosines.size), dims=(dim,))
    zenith = xr.DataArray(np.degrees(np.arccos(cosines)), dims=(dim,))
    return xr.DataArray(surface.directional_emissivity(zenith)).astype(np.float64)
