"""Light reflected by a whole planet: phase curves and geometric, spherical and Bond albedos.

The planet is a sphere covered by a horizontally uniform plane-parallel atmosphere. Its
brightness at phase angle a is the integral of the local reflected radiance over the part of
the disk that is both lit and visible (Horak 1950; Horak and Little 1965 did this integral by
Gauss quadrature for Rayleigh atmospheres). With unit stellar irradiance and unit planet
radius the disk integral

    reflectance(a) = integral over the lit and visible hemisphere of I(mu, mu0, phi) mu dA

is the planet's brightness divided by that of a white Lambertian disk of the same radius
held normal to the star and the observer, so that reflectance(0) is the geometric albedo p.
The spherical albedo follows from the phase integral, A_s = p q with
q = 2 int_0^pi Phi(a) sin a da and Phi(a) = reflectance(a) / p (Russell 1916; van de Hulst
1980), and the Bond albedo is A_s weighted by a stellar spectrum.

The disk quadrature
-------------------
Every point of the lit hemisphere is labelled by the cosine mu0 of its stellar zenith angle
(its polar angle from the sub-stellar point) and by the angle psi around the sub-stellar
point, measured from the plane that holds the star, the observer and the planet's centre.
The area element of the unit sphere is then simply dmu0 dpsi, and spherical trigonometry
gives the rest::

    mu = mu0 cos a + sqrt(1 - mu0^2) sin a cos psi          (emergence cosine)
    cos a = mu mu0 - sqrt(1 - mu^2) sqrt(1 - mu0^2) cos phi   (phi: lamina's relative azimuth,
                                                              180 = backscattering side)

A point is visible where mu > 0, that is for ``|psi| < psi_max(mu0, a)`` with
cos psi_max = -mu0 cos a / (sqrt(1 - mu0^2) sin a) (clipped to [-1, 1]). The integral is
Gauss-Legendre in mu0 on (0, 1) and, for each mu0, Gauss-Legendre in psi on (0, psi_max)
(twice, by the mirror symmetry about the scattering plane).

Why these coordinates: the mu0 nodes are the same for every phase angle, so the whole
phase curve, the geometric albedo and the phase-integral nodes need only the mu0 points of
``disk_order`` as suns, and each node needs only the view cosines of its own points. Each
mu0 node is one :func:`lamina.solve` call with one sun and just those view cosines (with
one homogeneous solution per layer and Fourier term for all of them); a single call over
all nodes would compute the outer product sun x view, in which each node's views are a
small part of all the views (measured: 20 phase angles, 16 streams, 32 moments, 3 layers,
the default orders: 7 s and 1.1 GB on one core with one call over all nodes, 0.45 s with
one call per node, the same results to 3e-11).
The azimuth is not sampled at the needed values: the reflected radiance at fixed
(mu, mu0) is a finite cosine series in the azimuth, of degree K = max(streams, moments) - 1
(the discrete-ordinates series has at most ``streams`` terms and the exact
single-scattering correction is a polynomial of degree moments - 1 in the cosine of the
scattering angle), so K + 1 equally spaced azimuths on [0, 180] determine it exactly (a
type-I discrete cosine transform) and it is evaluated at each needed azimuth through that
series. Nothing is interpolated in mu or mu0. ``benchmarks/phase_curve.py`` measures the
whole curve against one radiance run of the local geometries it needs.

The price of the shared mu0 nodes: for 0 < a < 180 the visible part of the circle mu0 =
const changes from a full circle to an arc at mu0 = sin a, where the inner integral has a
(sin a - mu0)^(3/2) singularity, so the quadrature converges algebraically (about
mu0_points^-2.5) rather than geometrically away from a = 0 and a = 180, and crescents
(a > 150 or so) are resolved by the few mu0 points below sin a. At a = 0 (the geometric
albedo) every circle is wholly visible and the convergence is geometric.

Polarization (``stokes=3`` or ``4``)
------------------------------------
:func:`lamina.solve` refers each local Stokes vector to the meridian plane of the reflected
direction o (the plane of o and the local vertical n; Q > 0 parallel to it; DEVELOPERS.md,
"Polarization"). Before the disk sum every local vector is turned onto the planetary
scattering plane, the plane through star, planet centre and observer, which contains o
too: by the angle beta at o of the spherical triangle (o, n, s) with sides theta (view),
a (phase) and theta0 (star),

    cos beta = (mu0 - mu cos a) / (sin theta sin a)

(the spherical law of cosines), Q' = cos 2beta Q + sin 2beta U, U' = -sin 2beta Q +
cos 2beta U, V' = V. :func:`stokes_rotation` computes beta and the signed local azimuth by
vectors (its docstring) and gives both halves of the disk, psi and -psi, explicitly: the
mirror image of a point has the opposite azimuth and rotation, so the disk-integrated U and
V cancel (the planet is mirror-symmetric about the scattering plane) while Q adds. The
reflected I and Q at fixed (mu, mu0) are cosine series of degree K in the azimuth, U and V
sine series (de Haan, Bosma and Hovenier 1987); the sines vanish at 0 and 180, so the
polarized path samples the K + 1 midpoints 180 (k + 1/2) / (K + 1) instead, where both
series are fixed exactly (the type-II cosine and sine transforms). The planet's
polarization is then quoted as planetary scientists do, P = -Q/I with Q referred to the
scattering plane, so that P > 0 when the light is polarized perpendicular to it (Rayleigh
scattering near 90 degrees phase). With a thin layer (the limb-bright case: I mu does not
vanish at the limb) the disk quadrature converges only about as mu0_points^-1.5; in -Q/I
most of that error cancels.

With delta-M and the single-scattering correction (the defaults) the disk integrates the
corrected radiances, while lamina's fluxes, and so the plane albedo, stay those of the
truncated phase function: the spherical albedo here and 2 int A(mu0) mu0 dmu0 from fluxes
then differ by the truncation (about 1% for a Henyey-Greenstein g = 0.7 with 16 moments and
8 streams); they agree to the quadrature's accuracy when the moments fit the streams.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import xarray as xr

from lamina._checks import as_float_array, require_range
from lamina.atmosphere import check_atmosphere

__all__ = ["disk_nodes", "phase_curve", "stokes_rotation"]


def _gauss_unit(order: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss-Legendre nodes and weights on (0, 1)."""
    nodes, weights = np.polynomial.legendre.leggauss(order)
    return 0.5 * (nodes + 1.0), 0.5 * weights


def _positive_order(value: object, name: str, minimum: int = 1) -> int:
    if isinstance(value, bool) or not isinstance(value, int | np.integer):
        raise ValueError(f"{name} must be an integer >= {minimum}; got {value!r}")
    if value < minimum:
        raise ValueError(f"{name} must be an integer >= {minimum}; got {value}")
    return int(value)


def disk_nodes(phase_angle: np.ndarray, order: int, angle_order: int | None = None
               ) -> dict[str, np.ndarray]:
    """Local geometries and weights of the disk quadrature at each phase angle.

    Parameters
    ----------
    phase_angle : numpy.ndarray, (P,)
        Phase angles in degrees, each in [0, 180].
    order : int
        Number of Gauss-Legendre points in mu0 (shared by every phase angle).
    angle_order : int, optional
        Number of Gauss-Legendre points in psi for each mu0 (default ``order``).

    Returns
    -------
    dict of numpy.ndarray
        ``sun_cosine`` (order,), the shared mu0 nodes; and per node, sorted by phase:
        ``phase_index``, ``sun_index`` (into ``sun_cosine``), ``view_cosine`` (mu),
        ``azimuth`` (lamina's relative azimuth, degrees) and ``weight``, such that
        ``sum(weight * I * view_cosine)`` over the nodes of one phase angle is the disk
        integral of I mu dA there (I for unit stellar irradiance, unit radius); ``angle``
        (psi, radians, in (0, psi_max): the weight counts the mirror point -psi too). Nodes
        whose weight vanishes (the arc is empty) are left out.

    Examples
    --------
    >>> import numpy as np
    >>> nodes = disk_nodes(np.array([0.0]), 8)
    >>> # a Lambert sphere of albedo 1: I = mu0 / pi, geometric albedo 2/3
    >>> mu0 = nodes["sun_cosine"][nodes["sun_index"]]
    >>> float(np.round(np.sum(nodes["weight"] * mu0 / np.pi * nodes["view_cosine"]), 12))
    0.666666666667
    """
    mu0, w0 = _gauss_unit(order)
    t, wt = _gauss_unit(order if angle_order is None else angle_order)
    a = np.radians(np.asarray(phase_angle, dtype=np.float64))[:, None]   # (P, 1)
    sin0 = np.sqrt(1.0 - mu0 * mu0)[None, :]                              # (1, order)
    cos_a, sin_a = np.cos(a), np.sin(a)
    # cos psi_max = -mu0 cos a / (sin0 sin a); at a = 0 or 180 the limit is -/+ infinity
    with np.errstate(divide="ignore", invalid="ignore"):
        bound = np.where(sin_a > 0.0, -mu0[None, :] * cos_a / (sin0 * sin_a),
                         -np.sign(cos_a) * np.inf)
    psi_max = np.arccos(np.clip(bound, -1.0, 1.0))                       # (P, order)
    psi = psi_max[..., None] * t                                          # (P, order, order)
    # 2: the mirror half psi < 0; psi_max: the length of the psi interval
    weight = 2.0 * w0[None, :, None] * psi_max[..., None] * wt
    mu0_3 = mu0[None, :, None]
    sin0_3 = sin0[..., None]
    mu = mu0_3 * cos_a[..., None] + sin0_3 * sin_a[..., None] * np.cos(psi)
    keep = (weight > 0.0) & (mu > 0.0)
    sin_view = np.sqrt(np.clip(1.0 - mu * mu, 0.0, None))
    with np.errstate(divide="ignore", invalid="ignore"):
        cos_phi = (mu * mu0_3 - cos_a[..., None]) / (sin_view * sin0_3)
    # at the sub-observer point (mu = 1) the azimuth does not matter; any value serves
    cos_phi = np.where(sin_view > 0.0, cos_phi, -1.0)
    azimuth = np.degrees(np.arccos(np.clip(cos_phi, -1.0, 1.0)))
    shape = mu.shape
    phase_index = np.broadcast_to(np.arange(shape[0])[:, None, None], shape)
    sun_index = np.broadcast_to(np.arange(shape[1])[None, :, None], shape)
    return {
        "sun_cosine": mu0,
        "phase_index": phase_index[keep],
        "sun_index": sun_index[keep],
        "view_cosine": mu[keep],
        "azimuth": azimuth[keep],
        "weight": weight[keep],
        "angle": np.broadcast_to(psi, shape)[keep],
    }


def _azimuth_basis(azimuth: np.ndarray, degree: int) -> tuple[np.ndarray, np.ndarray]:
    """Sample azimuths and the matrix that evaluates a cosine series from its samples.

    A cosine series of degree K, f(phi) = sum_m c_m cos(m phi), is fixed by its values at
    phi_k = 180 k / K, k = 0..K (type-I discrete cosine transform); row n of the returned
    matrix B gives f(azimuth[n]) = B[n] @ f(phi_k) exactly (to round-off).
    """
    samples = np.linspace(0.0, 180.0, degree + 1)
    m = np.arange(degree + 1)
    transform = np.cos(np.radians(samples)[:, None] * m)          # (K+1 samples, K+1 terms)
    wanted = np.cos(np.radians(azimuth)[:, None] * m)             # (N, K+1 terms)
    basis = np.linalg.solve(transform.T, wanted.T).T
    return samples, basis


def _midpoint_bases(azimuth: np.ndarray, degree: int
                    ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Sample azimuths and the matrices that evaluate cosine and sine series from them.

    For the Stokes components: I and Q are cosine series of degree K in the azimuth, U and V
    sine series (DEVELOPERS.md, "Polarization"). The end points 0 and 180 cannot serve the
    sines (every sin(m phi) vanishes there), so the K + 1 samples are the midpoints
    phi_k = 180 (k + 1/2) / (K + 1), k = 0..K, at which cos(m phi), m = 0..K, and
    sin(m phi), m = 1..K + 1, are both invertible (the type-II cosine and sine transforms):
    ``f(azimuth[n]) = basis[n] @ f(phi_k)`` exactly (to round-off), for signed azimuths.
    """
    samples = 180.0 * (np.arange(degree + 1) + 0.5) / (degree + 1)
    radians, wanted_at = np.radians(samples)[:, None], np.radians(azimuth)[:, None]
    bases = []
    for function, m in ((np.cos, np.arange(degree + 1)), (np.sin, np.arange(1, degree + 2))):
        bases.append(np.linalg.solve(function(radians * m).T, function(wanted_at * m).T).T)
    return samples, bases[0], bases[1]


def stokes_rotation(nodes: dict[str, np.ndarray], phase_angle: np.ndarray
                    ) -> dict[str, np.ndarray]:
    """Both mirror halves of the disk nodes, with signed local azimuths and rotation angles.

    By vectors, in coordinates where the star is s = (0, 0, 1), the observer
    o = (sin a, 0, cos a) and the point n = (sin theta0 cos psi, sin theta0 sin psi, mu0).
    The local frame (lamina's conventions) has z = n, x along the beam's horizontal
    propagation, x = (mu0 n - s) / sin theta0, and y = z x x; the view's azimuth is
    phi = atan2(o.y, o.x) (for psi > 0 it is negative: phi = -``azimuth``). The local
    Stokes vector is referred to l = (mu o - n) / sin theta (e_theta of o) and r = l x o;
    the planetary scattering plane (star, centre, observer) to l_s = (cos a, 0, -sin a),
    the unit vector along do/da, which lies in it, is normal to o and stays defined at
    a = 0 and 180. The rotation angle from l toward r onto l_s is
    beta = atan2(l_s.r, l_s.l), and then, from the spherical triangle (o, n, s) with sides
    theta, a, theta0, cos beta = (mu0 - mu cos a) / (sin theta sin a) (the law of
    cosines; beta is the triangle's angle at o). Returns the nodes twice (psi and -psi,
    weights halved) with ``signed_azimuth`` (degrees) and ``rotation`` (beta, radians).
    """
    halves = {key: np.concatenate([value, value]) for key, value in nodes.items()
              if key != "sun_cosine"}
    halves["angle"][nodes["angle"].size:] *= -1.0
    halves["weight"] = 0.5 * halves["weight"]
    a = np.radians(np.asarray(phase_angle, dtype=np.float64))[halves["phase_index"]]
    mu0 = nodes["sun_cosine"][halves["sun_index"]]
    sin0, psi = np.sqrt(1.0 - mu0 * mu0), halves["angle"]
    zero = np.zeros_like(a)
    normal = np.stack([sin0 * np.cos(psi), sin0 * np.sin(psi), mu0], axis=-1)
    star = np.stack([zero, zero, zero + 1.0], axis=-1)
    observer = np.stack([np.sin(a), zero, np.cos(a)], axis=-1)
    mu = np.sum(normal * observer, axis=-1)
    east = (mu0[:, None] * normal - star) / sin0[:, None]
    north = np.cross(normal, east)
    phi = np.arctan2(np.sum(observer * north, -1), np.sum(observer * east, -1))
    sin_view = np.sqrt(np.clip(1.0 - mu * mu, 0.0, None))
    ell = (mu[:, None] * observer - normal) / np.where(sin_view > 0.0, sin_view, 1.0)[:, None]
    right = np.cross(ell, observer)
    plane = np.stack([np.cos(a), zero, -np.sin(a)], axis=-1)
    beta = np.arctan2(np.sum(plane * right, -1), np.sum(plane * ell, -1))
    halves["signed_azimuth"] = np.degrees(phi)
    halves["rotation"] = np.where(sin_view > 0.0, beta, 0.0)
    return halves


def _check_phase_angle(phase_angle: object) -> np.ndarray:
    if isinstance(phase_angle, xr.DataArray):
        phase_angle = phase_angle.values
    angles = np.atleast_1d(as_float_array(phase_angle, "phase_angle"))
    if angles.ndim != 1 or angles.size == 0:
        raise ValueError("phase_angle must be a scalar or a non-empty 1-D list of degrees; got "
                         f"shape {angles.shape}")
    require_range(angles, "phase_angle", 0.0, 180.0, labels=["phase angle"])
    return angles


def _check_stokes(stokes: object) -> int:
    if isinstance(stokes, bool) or not isinstance(stokes, int | np.integer) \
            or int(stokes) not in (1, 3, 4):
        raise ValueError("stokes must be 1 (I), 3 (I, Q, U) or 4 (I, Q, U, V); got "
                         f"{stokes!r}")
    return int(stokes)


def _check_surface(surface: object, surface_albedo: object) -> None:
    if surface is None:
        return
    from lamina.surface import Surface

    if not isinstance(surface, Surface):
        raise TypeError("surface must be a lamina.surface surface (e.g. "
                        f"lamina.surface.hapke(...)); got {type(surface).__name__}")
    if surface_albedo is not None:
        raise ValueError("surface: give either surface (a bidirectional lamina.surface) or "
                         "surface_albedo (a Lambertian albedo), not both")


def _disk_integrals(
    atmosphere: xr.Dataset,
    angles: np.ndarray,
    streams: int,
    order: tuple[int, int],
    solve_options: dict,
    stokes: int = 1,
) -> xr.DataArray:
    """The disk integral of I mu dA (and of Q, U, V) at each phase angle.

    One solve per mu0 node, with one sun and only the view cosines that node's points need,
    at the K + 1 sample azimuths of the series (see the module docstring). With stokes > 1
    the local Stokes vectors are turned onto the planetary scattering plane
    (:func:`stokes_rotation`) before they are summed, and the result has a ``stokes`` dim.
    """
    from lamina.solve import solve  # here: solve imports modules that may import this one

    nodes = disk_nodes(angles, *order)
    sun_zenith = np.degrees(np.arccos(nodes["sun_cosine"]))
    degree = max(streams, atmosphere.sizes["moment"]) - 1
    if stokes == 1:
        samples, basis = _azimuth_basis(nodes["azimuth"], degree)
        points = nodes
    else:
        points = stokes_rotation(nodes, angles)
        samples, basis, sine_basis = _midpoint_bases(points["signed_azimuth"], degree)
        turn = 2.0 * points["rotation"]
    total = None
    for sun in np.unique(points["sun_index"]):
        pick = np.flatnonzero(points["sun_index"] == sun)
        view_zenith = np.degrees(np.arccos(points["view_cosine"][pick]))
        views, view_index = np.unique(view_zenith, return_inverse=True)
        out = solve(atmosphere, streams=streams, sun_zenith=float(sun_zenith[sun]),
                    sun_irradiance=1.0, view_zenith=views, view_azimuth=samples,
                    top_diffuse_radiance=0.0, output_levels=[0], stokes=stokes,
                    **solve_options)
        radiance = out["radiance"].isel(level=0, drop=True).sel(direction="up", drop=True)
        core = ("view_zenith", "view_azimuth", "stokes")
        extra = [dim for dim in radiance.dims if dim not in core]
        radiance = radiance.transpose(*extra, *[dim for dim in core if dim in radiance.dims])
        local = np.take(radiance.values, view_index, axis=len(extra))   # (..., n, K+1[, S])
        if stokes == 1:
            brightness = np.einsum("...nk,nk->...n", local, basis[pick])
        else:
            even = np.einsum("...nks,nk->...ns", local[..., :2], basis[pick])
            odd = np.einsum("...nks,nk->...ns", local[..., 2:], sine_basis[pick])
            cos2, sin2 = np.cos(turn[pick]), np.sin(turn[pick])
            q, u = even[..., 1], odd[..., 0]
            brightness = np.stack([even[..., 0], cos2 * q + sin2 * u, -sin2 * q + cos2 * u,
                                   *np.moveaxis(odd[..., 1:], -1, 0)], axis=-1)
            brightness = np.moveaxis(brightness, -1, 0)                 # (S, ..., n)
        terms = brightness * (points["weight"][pick] * points["view_cosine"][pick])
        if total is None:
            # a phase with no node (a = 180) integrates to zero
            total = np.zeros((*terms.shape[:-1], angles.size))
            coords = {dim: radiance.coords[dim] for dim in extra if dim in radiance.coords}
        np.add.at(np.moveaxis(total, -1, 0), points["phase_index"][pick],
                  np.moveaxis(terms, -1, 0))
    if stokes == 1:
        return xr.DataArray(total, dims=(*extra, "_phase"), coords=coords)
    return xr.DataArray(np.moveaxis(total, 0, -1), dims=(*extra, "_phase", "stokes"),
                        coords={**coords, "stokes": list("IQUV"[:stokes])})


def _polarization(reflectance: xr.DataArray) -> dict[str, xr.DataArray]:
    """The signed degree of linear polarization -Q / I (0 where I = 0) and labels."""
    reflectance["stokes"].attrs = {
        "long_name": "Stokes component: Q and U referred to the planetary scattering plane "
                     "(star, planet centre, observer), Q > 0 parallel to it"}
    intensity = reflectance.sel(stokes="I", drop=True)
    safe = xr.where(intensity > 0.0, intensity, 1.0)
    degree = xr.where(intensity > 0.0, -reflectance.sel(stokes="Q", drop=True) / safe, 0.0)
    degree.attrs = {"long_name": "signed degree of linear polarization -Q/I of the whole "
                    "planet, Q referred to the scattering plane: > 0 perpendicular to it "
                    "(0 where I = 0)", "units": "1"}
    return {"degree_of_polarization": degree.transpose("phase_angle", ...)}


def _bond_albedo(spherical: xr.DataArray, stellar_spectrum: object) -> xr.DataArray:
    """Spherical albedo weighted by the stellar spectrum over its (one) spectral dim."""
    if not isinstance(stellar_spectrum, xr.DataArray) or stellar_spectrum.ndim != 1:
        raise ValueError("stellar_spectrum must be a 1-D xarray.DataArray over a spectral dim "
                         "of the atmosphere (e.g. wavelength)")
    dim = stellar_spectrum.dims[0]
    if dim not in spherical.dims:
        raise ValueError(f"stellar_spectrum is over {dim!r}, which is not a dim of the "
                         f"atmosphere (its extra dims: {list(spherical.dims)})")
    if dim not in stellar_spectrum.coords and dim not in spherical.coords:
        raise ValueError(f"stellar_spectrum: the spectral dim {dim!r} needs a coordinate "
                         "(the spectral grid) to integrate over")
    if stellar_spectrum.sizes[dim] < 2:
        raise ValueError(f"stellar_spectrum needs at least 2 points along {dim!r}")
    values = np.asarray(stellar_spectrum.values, dtype=np.float64)
    require_range(values, "stellar_spectrum", 0.0, labels=[str(dim)])
    if not np.any(values > 0.0):
        raise ValueError("stellar_spectrum must be positive somewhere")
    spectrum = stellar_spectrum.astype(np.float64)
    if dim not in spectrum.coords:
        spectrum = spectrum.assign_coords({dim: spherical.coords[dim]})
    spectrum, spherical = xr.align(spectrum, spherical, join="exact")
    return (spherical * spectrum).integrate(dim) / spectrum.integrate(dim)


def phase_curve(
    atmosphere: xr.Dataset,
    phase_angle: float | Sequence[float] | np.ndarray,
    streams: int,
    surface_albedo: object = None,
    surface: object = None,
    stokes: int = 1,
    *,
    planet_radius: object = None,
    stellar_spectrum: xr.DataArray | None = None,
    disk_order: int | tuple[int, int] = (16, 8),
    phase_integral_order: int = 12,
    delta_m: bool = True,
    single_scattering_correction: bool = True,
    fourier_tolerance: float = 1e-6,
) -> xr.Dataset:
    """Reflected light of a planet covered by a horizontally uniform atmosphere.

    The local radiance reflected at the top of ``atmosphere`` is integrated over the lit and
    visible part of the disk (Horak 1950; Horak and Little 1965; see the module docstring
    for the quadrature) with one :func:`lamina.solve` call per mu0 node.

    Parameters
    ----------
    atmosphere : xarray.Dataset
        From :func:`lamina.make_atmosphere`; extra dims (``wavelength``, ...) broadcast.
    phase_angle : float or list of float
        Star-planet-observer angles in degrees, each in [0, 180].
    streams : int
        Discrete ordinates of the local solutions (even, >= 2).
    surface_albedo : float or DataArray, optional
        Lambertian albedo of the ground under the atmosphere, in [0, 1] (default: black).
    surface : lamina.surface.Surface, optional
        A bidirectional ground instead (:func:`lamina.solve`'s ``surface=``; not together
        with ``surface_albedo``).
    stokes : int
        1 (scalar radiance), 3 (I, Q, U) or 4 (I, Q, U, V): the local Stokes vectors of the
        vector solve turned onto the scattering plane (module docstring). Not yet with
        ``surface`` or ``planet_radius`` (the vector solve refuses them by name).
    planet_radius : float or DataArray, optional
        Passed to :func:`lamina.solve`: each local column then has the pseudo-spherical
        beam (needs level altitudes, or pressures and temperatures, in the atmosphere).
        The disk's geometry is the sphere's either way; only the local beam changes.
    stellar_spectrum : xarray.DataArray, optional
        Stellar irradiance over one spectral dim of the atmosphere (with its coordinate):
        adds ``bond_albedo``, the spherical albedo weighted by it (trapezoidal rule).
    disk_order : int or (int, int)
        Gauss-Legendre points in mu0 and in the angle psi around the sub-stellar point (one
        int: the same for both). The error falls about as mu0_points^-2.5 away from phase 0
        (a Lambert sphere: 5e-5 of p at 16, 1e-5 at 32, 1e-6 at 64; see the module
        docstring); the angle converges geometrically. The radiances computed number
        mu0_points^2 x psi_points x (phase angles + phase_integral_order + 1) x (K + 1) x 2,
        K = max(streams, moments) - 1, per column of the atmosphere's extra dims.
    phase_integral_order : int
        Gauss-Legendre points in the phase angle for the phase integral.
    delta_m, single_scattering_correction, fourier_tolerance
        Passed to :func:`lamina.solve`.

    Returns
    -------
    xarray.Dataset
        ``reflectance`` (phase_angle, ...): brightness over that of a white Lambertian disk
        of the same size normal to star and observer (at phase 0 the geometric albedo);
        ``geometric_albedo``; ``spherical_albedo`` = 2 int_0^pi reflectance(a) sin a da
        (= p q); ``bond_albedo`` with ``stellar_spectrum``. With ``stokes`` > 1,
        ``reflectance`` has a last dim ``stokes`` ("I", "Q", "U"(, "V")), Q and U referred
        to the planetary scattering plane (Q > 0 parallel to it; U and V vanish by
        symmetry), the albedos are those of I, and ``degree_of_polarization``
        (phase_angle, ...) is the signed degree of linear polarization -Q/I: positive
        when the light is polarized perpendicular to the scattering plane (0 where I = 0,
        as at phase 180).

    Examples
    --------
    >>> import lamina
    >>> from lamina.planet import phase_curve
    >>> clear = lamina.make_atmosphere([0.0], [0.0], [1.0])
    >>> out = phase_curve(clear, [0.0, 90.0], streams=8, surface_albedo=1.0)
    >>> round(float(out.geometric_albedo), 6)   # the Lambert sphere: 2/3
    0.666667
    """
    stokes = _check_stokes(stokes)
    _check_surface(surface, surface_albedo)
    check_atmosphere(atmosphere)
    angles = _check_phase_angle(phase_angle)
    if isinstance(streams, bool) or not isinstance(streams, int | np.integer) \
            or streams < 2 or streams % 2:
        raise ValueError(f"streams must be an even integer >= 2; got {streams!r}")
    if isinstance(disk_order, tuple | list) and len(disk_order) == 2:
        order = (_positive_order(disk_order[0], "disk_order"),
                 _positive_order(disk_order[1], "disk_order"))
    else:
        order = (_positive_order(disk_order, "disk_order"),) * 2
    integral_order = _positive_order(phase_integral_order, "phase_integral_order")
    nodes, weights = _gauss_unit(integral_order)
    integral_angles = 180.0 * nodes
    everything = np.concatenate([[0.0], integral_angles, angles])
    options = {"delta_m": delta_m, "single_scattering_correction": single_scattering_correction,
               "fourier_tolerance": fourier_tolerance, "surface_albedo": surface_albedo,
               "surface": surface, "planet_radius": planet_radius}
    disk = _disk_integrals(atmosphere, everything, int(streams), order, options, stokes)
    intensity = disk if stokes == 1 else disk.sel(stokes="I", drop=True)
    geometric = intensity.isel(_phase=0, drop=True)
    integral_part = intensity.isel(_phase=slice(1, 1 + integral_order))
    # da = pi d(node); 2 int reflectance sin a da
    factor = xr.DataArray(2.0 * np.pi * weights * np.sin(np.radians(integral_angles)),
                          dims=("_phase",))
    spherical = (integral_part * factor).sum("_phase")
    reflectance = disk.isel(_phase=slice(1 + integral_order, None)).rename(
        _phase="phase_angle").assign_coords(phase_angle=angles)
    reflectance = reflectance.transpose("phase_angle", ...)
    reflectance.attrs = {"long_name": "disk-integrated reflectance (brightness relative to a "
                         "white Lambertian disk of the same radius normal to star and "
                         "observer)", "units": "1"}
    geometric.attrs = {"long_name": "geometric albedo", "units": "1"}
    spherical.attrs = {"long_name": "spherical albedo (geometric albedo times the phase "
                       "integral)", "units": "1"}
    data = {"reflectance": reflectance, "geometric_albedo": geometric,
            "spherical_albedo": spherical}
    if stokes > 1:
        data.update(_polarization(reflectance))
    if stellar_spectrum is not None:
        bond = _bond_albedo(spherical, stellar_spectrum)
        bond.attrs = {"long_name": "Bond albedo (spherical albedo weighted by the stellar "
                      "spectrum)", "units": "1"}
        data["bond_albedo"] = bond
    result = xr.Dataset(data)
    result["phase_angle"].attrs = {"long_name": "phase angle (star-planet-observer)",
                                   "units": "degree"}
    result.attrs = {"title": "lamina disk-integrated reflected light",
                    "streams": int(streams), "disk_order": list(order),
                    "phase_integral_order": integral_order,
                    "disk_quadrature": "Gauss-Legendre in mu0 and in the angle around the "
                                       "sub-stellar point; azimuth through the exact cosine "
                                       "series"}
    return result
