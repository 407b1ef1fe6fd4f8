# cython: language_level=3, boundscheck=False, wraparound=False, cdivision=True
# cython: initializedcheck=False
"""Discrete-ordinates driver: many columns, all Fourier terms, no GIL.

Computation only. The Python wrapper (``lamina.solve``) validates every input, applies
delta-M scaling, allocates the outputs and calls :func:`solve_columns`.

Method (published; the derivations are in Stamnes and Swanson 1981 and Thomas and Stamnes
1999, the symmetric reduction in Nakajima and Tanaka 1986): radiances are expanded in
azimuth, I = sum_m I^m(t, mu) cos(m phi), phi measured from the azimuth of the beam's
propagation, and each Fourier term is solved with double-Gauss quadrature. Per column and
term the driver runs the stages of the method in order:

1. layers (``layers``): the eigen-solution of every layer and its particular solutions;
2. boundary values (``boundary``): the banded system for the mode coefficients;
3. outputs (``sources``): fluxes at the output positions (term 0), radiances at the view
   angles by integrating the source function;
4. convergence: the term is added to the radiance and the Fourier series stops once two
   successive terms change no output by more than the tolerance.

Conservative scattering: the albedo is capped at 1 - CONSERVATIVE_GAP (1e-12). The
resulting absorption is about 1e-12 times the optical thickness times a number of order one,
below 1e-9 of the incident flux up to optical thickness 100 (tested).

Speed (``benchmarks/run.py`` measures it against the bare LAPACK calls): every stage is
called once per column or per term (per layer at most), never inside an innermost loop; the
helpers those loops share are inline in ``common.pxd``. The exact Fourier convergence
measure is only evaluated when some output moved by more than the tolerance. The triangular
factors of nearly conservative layers are ill-conditioned (about 1e6), so even reordering a
sum moves the outputs by up to 1e-10 of the incident flux: a change for speed is checked
against the previous build on conservative stacks (energy conservation, the validation
suite), not only on the tests' tolerances.

The single-scattering correction (``single_scattering``) integrates the exact phase function
along each view (the TMS method of Nakajima and Tanaka 1988).
"""

from libc.math cimport cos, exp, fabs, isfinite, sqrt
from scipy.linalg.cython_lapack cimport dgesvd

from lamina._kernel._lapack_int cimport lapack_int
from lamina._kernel.boundary cimport solve_boundary_values
from lamina._kernel.common cimport (
    PI, STATUS_NOT_FINITE, Column, Grid, Layers, Scratch, Sizes, dexp, dexp_cached,
    dexp_from_zero, legendre_table,
)
from lamina._kernel.layers cimport beam_geometry, homogeneous_solutions, particular_solutions
from lamina._kernel.sources cimport (
    fluxes, surface_beam_views, view_radiances, view_sources, view_transmittances,
)

import numpy as np

CONSERVATIVE_GAP = 1e-12
RESONANCE_GAP = 1e-8

# Failure codes written to ``status[column, 0]`` (``common.pxd``); the wrapper turns them
# into messages.
STATUS_NAMES = {
    1: "Cholesky factorisation of the difference matrix (dpotrf)",
    2: "Cholesky factorisation of the sum matrix (dpotrf)",
    3: "singular value decomposition (dgesvd)",
    5: "banded LU factorisation of the boundary-value problem (dgbtrf)",
    6: "banded solve of the boundary-value problem (dgbtrs)",
    9: "non-finite result",
}


cdef inline void set_status(long long *status, long long code, Py_ssize_t layer,
                            Py_ssize_t mode, long long info) noexcept nogil:
    status[0] = code
    status[1] = layer
    status[2] = mode
    status[3] = info


def _check_shapes(ncol, n, nlayer, nsun, npos, nvz, nva, shapes, position_layer):
    """Refuse an internal call whose arrays disagree (the public wrapper never makes one)."""
    expected = {
        "single_scattering_albedo": (ncol, nlayer),
        "phase_moments": (ncol, nlayer, 2 * n),
        "sun_cosine": (ncol, nsun),
        "sun_irradiance": (ncol, nsun),
        "surface_albedo": (ncol,),
        "planck_levels": (ncol, nlayer + 1),
        "planck_surface": (ncol,),
        "top_radiance": (ncol,),
        "quadrature_weights": (n,),
        "position_fraction": (npos,),
        "flux_up": (ncol, nsun, npos),
        "flux_down": (ncol, nsun, npos),
        "mean_intensity": (ncol, nsun, npos),
        "radiance": (ncol, nsun, npos, 2, nvz, nva),
        "fourier_terms": (ncol,),
        "status": (ncol, 4),
    }
    if n < 1 or nlayer < 1:
        raise ValueError("solve_columns: need at least one layer and one quadrature cosine")
    for name, shape in expected.items():
        if tuple(shapes[name]) != shape:
            raise ValueError(
                f"solve_columns: {name} has shape {tuple(shapes[name])}, expected {shape}"
            )
    if npos and (position_layer.min() < 0 or position_layer.max() >= nlayer):
        raise ValueError("solve_columns: position_layer out of range")


def _workspace_sizes(Py_ssize_t n, Py_ssize_t nlay, Py_ssize_t nsun, Py_ssize_t npos,
                     Py_ssize_t nvz, Py_ssize_t nva, Py_ssize_t ldab, double work_size):
    """Length of every array of the column workspace, in the order of the pool."""
    cdef Py_ssize_t nl = 2 * n, neq = 2 * n * nlay
    return {
        "k": nlay * n, "gp": nlay * n * n, "gm": nlay * n * n, "ss": nlay * n * n,
        "tt": nlay * n * n, "rf": n * n, "lf": n * n, "uu": n * n, "vt": n * n,
        "zp": nlay * nsun * n, "zm": nlay * nsun * n, "y0p": nlay * n, "y0m": nlay * n,
        "b0": nlay, "b1": nlay,
        "ttop": nlay * nsun, "coef": nsun * neq, "aw": nl * n, "lq": nl * n, "lu": nl * nvz,
        "l0": nl * nsun, "ceall": nlay * nl, "coall": nlay * nl,
        "tall": 2 * n * nlay * nl, "kall": 2 * n * nlay * n, "tmp": 2 * nl,
        "zz": n * n, "vec1": n, "vec2": n, "vec3": n, "ab": ldab * neq, "mu0e": nsun,
        "mu0l": nlay * nsun,
        "surfbeam": nsun, "refl": n, "pup": nvz * n, "pum": nvz * n, "hA": nlay * nvz * n,
        "hB": nlay * nvz * n, "zuA": nlay * nsun * nvz, "zuB": nlay * nsun * nvz,
        "s0A": nlay * nvz, "s0B": nlay * nvz, "iup": (nlay + 1) * nsun * nvz,
        "idn": (nlay + 1) * nsun * nvz, "radm": nsun * npos * 2 * nvz,
        "work": int(work_size) + 8 * n, "mu": n, "wq": n, "sqw": n,
        "ek": nlay * n, "eb": nlay * nsun, "e1": n, "e2": n, "ones": n, "eu": nlay * nvz,
        "et": nlay * nvz, "dA": nlay * nvz * n, "dB": nlay * nvz * n,
        "cosm": max(nva, 1), "acc": 2 * n,
        "bA": nlay * nsun * nvz, "bB": nlay * nsun * nvz, "mu0done": nsun, "beamdone": nsun,
        "reflm": n * n, "reflv": nvz * n, "beamq": nsun * n, "downq": n,
    }


cdef void point_workspace(double *base, dict at, Layers *ly, Scratch *sc, Grid *gr):
    """Point every workspace array of the structs into the pool at ``base``."""
    ly.k = base + <Py_ssize_t>at["k"]
    ly.gp = base + <Py_ssize_t>at["gp"]
    ly.gm = base + <Py_ssize_t>at["gm"]
    ly.ss = base + <Py_ssize_t>at["ss"]
    ly.tt = base + <Py_ssize_t>at["tt"]
    ly.zp = base + <Py_ssize_t>at["zp"]
    ly.zm = base + <Py_ssize_t>at["zm"]
    ly.y0p = base + <Py_ssize_t>at["y0p"]
    ly.y0m = base + <Py_ssize_t>at["y0m"]
    ly.b0 = base + <Py_ssize_t>at["b0"]
    ly.b1 = base + <Py_ssize_t>at["b1"]
    ly.ttop = base + <Py_ssize_t>at["ttop"]
    ly.coef = base + <Py_ssize_t>at["coef"]
    ly.ek = base + <Py_ssize_t>at["ek"]
    ly.eb = base + <Py_ssize_t>at["eb"]
    sc.rf = base + <Py_ssize_t>at["rf"]
    sc.lf = base + <Py_ssize_t>at["lf"]
    sc.uu = base + <Py_ssize_t>at["uu"]
    sc.vt = base + <Py_ssize_t>at["vt"]
    sc.aw = base + <Py_ssize_t>at["aw"]
    sc.lq = base + <Py_ssize_t>at["lq"]
    sc.lu = base + <Py_ssize_t>at["lu"]
    sc.l0 = base + <Py_ssize_t>at["l0"]
    sc.ceall = base + <Py_ssize_t>at["ceall"]
    sc.coall = base + <Py_ssize_t>at["coall"]
    sc.tall = base + <Py_ssize_t>at["tall"]
    sc.kall = base + <Py_ssize_t>at["kall"]
    sc.tmp = base + <Py_ssize_t>at["tmp"]
    sc.zz = base + <Py_ssize_t>at["zz"]
    sc.vec1 = base + <Py_ssize_t>at["vec1"]
    sc.vec2 = base + <Py_ssize_t>at["vec2"]
    sc.vec3 = base + <Py_ssize_t>at["vec3"]
    sc.ab = base + <Py_ssize_t>at["ab"]
    sc.mu0e = base + <Py_ssize_t>at["mu0e"]
    sc.mu0l = base + <Py_ssize_t>at["mu0l"]
    sc.surfbeam = base + <Py_ssize_t>at["surfbeam"]
    sc.refl = base + <Py_ssize_t>at["refl"]
    sc.pup = base + <Py_ssize_t>at["pup"]
    sc.pum = base + <Py_ssize_t>at["pum"]
    sc.hA = base + <Py_ssize_t>at["hA"]
    sc.hB = base + <Py_ssize_t>at["hB"]
    sc.zuA = base + <Py_ssize_t>at["zuA"]
    sc.zuB = base + <Py_ssize_t>at["zuB"]
    sc.s0A = base + <Py_ssize_t>at["s0A"]
    sc.s0B = base + <Py_ssize_t>at["s0B"]
    sc.iup = base + <Py_ssize_t>at["iup"]
    sc.idn = base + <Py_ssize_t>at["idn"]
    sc.radm = base + <Py_ssize_t>at["radm"]
    sc.work = base + <Py_ssize_t>at["work"]
    sc.e1 = base + <Py_ssize_t>at["e1"]
    sc.e2 = base + <Py_ssize_t>at["e2"]
    sc.ones = base + <Py_ssize_t>at["ones"]
    sc.eu = base + <Py_ssize_t>at["eu"]
    sc.et = base + <Py_ssize_t>at["et"]
    sc.dA = base + <Py_ssize_t>at["dA"]
    sc.dB = base + <Py_ssize_t>at["dB"]
    sc.cosm = base + <Py_ssize_t>at["cosm"]
    sc.acc = base + <Py_ssize_t>at["acc"]
    sc.bA = base + <Py_ssize_t>at["bA"]
    sc.bB = base + <Py_ssize_t>at["bB"]
    sc.mu0done = base + <Py_ssize_t>at["mu0done"]
    sc.beamdone = base + <Py_ssize_t>at["beamdone"]
    sc.reflm = base + <Py_ssize_t>at["reflm"]
    sc.reflv = base + <Py_ssize_t>at["reflv"]
    sc.beamq = base + <Py_ssize_t>at["beamq"]
    sc.downq = base + <Py_ssize_t>at["downq"]
    gr.mu = base + <Py_ssize_t>at["mu"]
    gr.wq = base + <Py_ssize_t>at["wq"]
    gr.sqw = base + <Py_ssize_t>at["sqw"]


cdef tuple allocate_workspace(Sizes *sz, Layers *ly, Scratch *sc, Grid *gr):
    """Allocate the column workspace and point the structs into it; returns its owners."""
    cdef Py_ssize_t n = sz.n, ldab = 3 * (3 * sz.n - 1) + 1, neq = 2 * sz.n * sz.nlayer
    cdef lapack_int info = 0, ni = <lapack_int>sz.n, lwork_query = -1
    cdef double work_size = 0.0
    cdef char job_a = b'A'
    cdef double[::1] pool_view, probe
    cdef unsigned char[::1] ipiv_view
    probe = np.zeros(n * n + n)
    dgesvd(&job_a, &job_a, &ni, &ni, &probe[0], &ni, &probe[n * n], &probe[0], &ni,
           &probe[0], &ni, &work_size, &lwork_query, &info)
    sizes = _workspace_sizes(n, sz.nlayer, sz.nsun, sz.npos, max(sz.nvz, 1), sz.nva, ldab,
                             work_size)
    offsets = {}
    total = 0
    for name, count in sizes.items():
        offsets[name] = total
        total += count
    pool = np.zeros(total)
    pool_view = pool
    point_workspace(&pool_view[0], offsets, ly, sc, gr)
    sc.lwork = <lapack_int>sizes["work"]
    ipiv_buffer = np.zeros(neq * sizeof(lapack_int), dtype=np.uint8)
    ipiv_view = ipiv_buffer
    sc.ipiv = <lapack_int *>&ipiv_view[0]
    sc.ldab = <lapack_int>ldab
    sc.kl = <lapack_int>(3 * n - 1)
    return pool, ipiv_buffer


cdef struct Outputs:
    # one column's blocks of the caller's output arrays
    double *flux_up             # [sun][pos]
    double *flux_down
    double *mean_intensity
    double *radiance            # [sun][pos][2][nvz][nva]
    long long *fourier_terms    # [1]
    long long *status           # [4]


cdef void start_column(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Grid *gr,
                       bint want_radiance, Outputs *out) noexcept nogil:
    """Clear a column's outputs and the caches that belong to the previous column."""
    cdef Py_ssize_t i, s, layer
    for i in range(4):
        out.status[i] = 0
    out.fourier_terms[0] = 0
    for i in range(sz.nsun * sz.npos):
        out.flux_up[i] = 0.0
        out.flux_down[i] = 0.0
        out.mean_intensity[i] = 0.0
    for i in range(sz.nsun * sz.npos * 2 * sz.nvz * sz.nva):
        out.radiance[i] = 0.0
    for layer in range(sz.nlayer):
        ly.b0[layer] = 0.0
        ly.b1[layer] = 0.0
    if want_radiance:
        view_transmittances(sz, sc, cl, gr)
    for s in range(sz.nsun):
        sc.mu0done[s] = -1.0      # nothing cached for this column yet
        sc.beamdone[s] = 0


cdef double add_term(Sizes *sz, Scratch *sc, Grid *gr, Py_ssize_t mode, double tolerance,
                     double *radiance) noexcept nogil:
    """Add term ``mode`` (``sc.radm``) times cos(m phi) to the column's radiance.

    Returns the change max |term| / max(|sum|, 1e-14 max |sum|) over every output (0 for
    term 0). The exact value needs a second pass (the floor needs the new maximum); it is
    only made when the first pass finds an output with |term| > tolerance |sum|, since
    otherwise the change cannot exceed the tolerance. (radm holds (sun, position, direction,
    view cosine) in the order of the output's leading axes; the column's outputs are one
    contiguous block.)
    """
    cdef Py_ssize_t a, q, nq = sz.nsun * sz.npos * 2 * sz.nvz
    cdef double change = 0.0, biggest = 0.0, value, cm, size, floor_value
    cdef bint unsettled = False
    for a in range(sz.nva):
        sc.cosm[a] = cos(mode * gr.phi[a])
    for q in range(nq):
        value = sc.radm[q]
        for a in range(sz.nva):
            cm = sc.cosm[a] * value
            radiance[q * sz.nva + a] += cm
            size = fabs(radiance[q * sz.nva + a])
            biggest = max(biggest, size)
            if fabs(cm) > tolerance * size:
                unsettled = True
    if mode > 0 and unsettled:
        floor_value = 1e-300 + 1e-14 * biggest
        for q in range(nq):
            value = fabs(sc.radm[q])
            for a in range(sz.nva):
                size = fabs(radiance[q * sz.nva + a])
                change = max(change, fabs(sc.cosm[a]) * value / max(size, floor_value))
    return change


cdef int solve_column(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Grid *gr,
                      Py_ssize_t nmodes, double tolerance, bint want_radiance,
                      Outputs *out) noexcept nogil:
    """All Fourier terms of one column: layers -> boundary values -> outputs -> convergence.

    Returns 0, or 1 after writing a failure to ``status``.
    """
    cdef Py_ssize_t mode, small_run = 0, failed_layer = 0, failed_code = 0
    cdef lapack_int failed_info = 0
    cdef int code
    for mode in range(nmodes):
        if homogeneous_solutions(sz, sc, ly, cl, gr, mode, &failed_layer, &failed_code,
                                 &failed_info) != 0:
            set_status(out.status, failed_code, failed_layer, mode, failed_info)
            return 1
        beam_geometry(sz, sc, ly, cl, mode)
        particular_solutions(sz, sc, ly, cl, gr, mode)
        if want_radiance:
            view_sources(sz, sc, ly, cl, gr, mode)
        code = solve_boundary_values(sz, sc, ly, cl, gr, mode, &failed_info)
        if code != 0:
            set_status(out.status, code, 0, mode, failed_info)
            return 1
        out.fourier_terms[0] = mode + 1
        if mode == 0:
            fluxes(sz, sc, ly, cl, gr, out.flux_up, out.flux_down, out.mean_intensity)
        if not want_radiance:
            continue
        view_radiances(sz, sc, ly, cl, gr, mode)
        if mode > 0:
            if add_term(sz, sc, gr, mode, tolerance, out.radiance) <= tolerance:
                small_run = small_run + 1
            else:
                small_run = 0
            if small_run >= 2:
                break
        else:
            add_term(sz, sc, gr, mode, tolerance, out.radiance)
    return 0


cdef void check_finite(Sizes *sz, Outputs *out) noexcept nogil:
    """Nothing leaves the kernel as NaN or infinity without a status."""
    cdef Py_ssize_t i
    for i in range(sz.nsun * sz.npos):
        if not (isfinite(out.flux_up[i]) and isfinite(out.flux_down[i])
                and isfinite(out.mean_intensity[i])):
            set_status(out.status, STATUS_NOT_FINITE, 0, 0, 0)
    for i in range(sz.nsun * sz.npos * 2 * sz.nvz * sz.nva):
        if not isfinite(out.radiance[i]):
            set_status(out.status, STATUS_NOT_FINITE, 0, 0, 0)


def solve_columns(
    const double[:, ::1] optical_depth,
    const double[:, ::1] single_scattering_albedo,
    const double[:, :, ::1] phase_moments,
    const double[:, ::1] sun_cosine,
    const double[:, ::1] sun_irradiance,
    const double[::1] surface_albedo,
    const double[:, ::1] planck_levels,
    const double[::1] planck_surface,
    const double[::1] top_radiance,
    const double[::1] quadrature_cosines,
    const double[::1] quadrature_weights,
    const Py_ssize_t[::1] position_layer,
    const double[::1] position_fraction,
    const double[::1] view_cosines,
    const double[::1] view_azimuths,
    Py_ssize_t max_fourier_terms,
    double fourier_tolerance,
    bint thermal,
    double[:, :, ::1] flux_up,
    double[:, :, ::1] flux_down,
    double[:, :, ::1] mean_intensity,
    double[:, :, :, :, :, ::1] radiance,
    long long[::1] fourier_terms,
    long long[:, ::1] status,
    *,
    const double[:, :, :, ::1] surface_fourier=None,
    const double[:, :, :, ::1] surface_beam_fourier=None,
    const double[:, :, :, ::1] surface_view_fourier=None,
    const double[:, :, :, ::1] surface_view_beam=None,
    const double[:, ::1] surface_emissivity=None,
    const double[:, ::1] surface_view_emissivity=None,
    const double[:, :, ::1] beam_slant_optical_depth=None,
    const double[:, :, ::1] beam_layer_cosine=None,
    const double[:, ::1] column_view_cosines=None,
    const double[:, ::1] column_view_azimuths=None,
):
    """Solve many columns (see the module docstring for the method).

    Shapes: optical_depth, single_scattering_albedo (column, layer); phase_moments
    (column, layer, 2n) already delta-M scaled and truncated; sun_cosine, sun_irradiance
    (column, sun); planck_levels (column, layer + 1); quadrature (n,); positions (pos,) as a
    layer index and a fraction of that layer's optical thickness; view_cosines (vz,) > 0;
    view_azimuths (va,) in radians. Outputs: flux_up, flux_down (diffuse), mean_intensity
    (diffuse) (column, sun, pos); radiance (column, sun, pos, 2, vz, va), direction 0 up,
    1 down; fourier_terms (column,); status (column, 4) = (code, layer, term, info), code 0
    on success. Every output is overwritten.

    A bidirectional surface (all six keywords, or none for the Lambertian
    ``surface_albedo``): surface_fourier (column, term, n, n) the BRDF's Fourier terms
    f_m(mu_i, mu_j), reflected x incident, on the quadrature cosines; surface_beam_fourier
    (column, sun, term, n) f_m(mu_i, mu0); surface_view_fourier (column, term, vz, n)
    f_m(mu_u, mu_j); surface_view_beam (column, sun, vz, va) the exact f(mu_u, mu0, phi);
    surface_emissivity (column, n) and surface_view_emissivity (column, vz), 1 - the
    directional albedo. ``surface_albedo`` is then ignored.

    A pseudo-spherical beam (both keywords, or neither for the plane-parallel beam):
    beam_slant_optical_depth (column, sun, layer + 1) the (scaled) optical depth along the
    beam's path from the top of the atmosphere to each level (inf where the planet blocks
    it); beam_layer_cosine (column, sun, layer) > 0, each layer's effective beam cosine
    (vertical over slant optical depth across the layer). The beam source of layer j is
    then S exp(-slant_j) exp(-(t - t_j) / cosine_j) with the angular part of the true
    sun_cosine, which may be <= 0 there (twilight), and the ground receives
    max(mu0, 0) S exp(-slant at the ground).

    Views of each column's own (both keywords, or none for the views shared by every
    column): column_view_cosines (column, vz) and column_view_azimuths (column, va) replace
    ``view_cosines`` and ``view_azimuths`` (whose lengths still give vz and va) in each
    column; the radiance of column c is at its own row's angles.
    """
    cdef Sizes sz
    cdef Scratch sc
    cdef Layers ly
    cdef Column cl
    cdef Grid gr
    cdef Outputs out
    cdef Py_ssize_t ncol = optical_depth.shape[0]
    cdef Py_ssize_t n = quadrature_cosines.shape[0]
    cdef Py_ssize_t col, i, nmodes
    cdef bint want_radiance, bidirectional, spherical, own_views

    sz.n = n
    sz.nl = 2 * n
    sz.nlayer = optical_depth.shape[1]
    sz.nsun = sun_cosine.shape[1]
    sz.npos = position_layer.shape[0]
    sz.nvz = view_cosines.shape[0]
    sz.nva = view_azimuths.shape[0]
    want_radiance = sz.nvz > 0 and sz.nva > 0

    # The wrapper checks every argument; these checks only keep a wrong internal call from
    # reading out of bounds.
    _check_shapes(
        ncol, n, sz.nlayer, sz.nsun, sz.npos, sz.nvz, sz.nva,
        {
            "single_scattering_albedo": (single_scattering_albedo.shape[0],
                                         single_scattering_albedo.shape[1]),
            "phase_moments": (phase_moments.shape[0], phase_moments.shape[1],
                              phase_moments.shape[2]),
            "sun_cosine": (sun_cosine.shape[0], sun_cosine.shape[1]),
            "sun_irradiance": (sun_irradiance.shape[0], sun_irradiance.shape[1]),
            "surface_albedo": (surface_albedo.shape[0],),
            "planck_levels": (planck_levels.shape[0], planck_levels.shape[1]),
            "planck_surface": (planck_surface.shape[0],),
            "top_radiance": (top_radiance.shape[0],),
            "quadrature_weights": (quadrature_weights.shape[0],),
            "position_fraction": (position_fraction.shape[0],),
            "flux_up": (flux_up.shape[0], flux_up.shape[1], flux_up.shape[2]),
            "flux_down": (flux_down.shape[0], flux_down.shape[1], flux_down.shape[2]),
            "mean_intensity": (mean_intensity.shape[0], mean_intensity.shape[1],
                               mean_intensity.shape[2]),
            "radiance": (radiance.shape[0], radiance.shape[1], radiance.shape[2],
                         radiance.shape[3], radiance.shape[4], radiance.shape[5]),
            "fourier_terms": (fourier_terms.shape[0],),
            "status": (status.shape[0], status.shape[1]),
        },
        np.asarray(position_layer),
    )
    nmodes = min(max(1, max_fourier_terms), sz.nl) if want_radiance else 1
    bidirectional = _check_surface(
        ncol, n, sz.nsun, sz.nvz, sz.nva,
        (surface_fourier, surface_beam_fourier, surface_view_fourier, surface_view_beam,
         surface_emissivity, surface_view_emissivity))
    cl.bidirectional = bidirectional
    own_views = _check_column_views(ncol, sz.nvz, sz.nva, column_view_cosines,
                                    column_view_azimuths)
    cl.surface_terms = surface_fourier.shape[1] if bidirectional else 0
    spherical = _check_spherical(ncol, sz.nsun, sz.nlayer, beam_slant_optical_depth,
                                 beam_layer_cosine)
    cl.beam_slant = NULL
    cl.beam_cosine = NULL

    # one pool of workspace for a column, reused by every column (kept alive here)
    _workspace = allocate_workspace(&sz, &ly, &sc, &gr)
    for i in range(n):
        gr.mu[i] = quadrature_cosines[i]
        gr.wq[i] = quadrature_weights[i]
        gr.sqw[i] = sqrt(quadrature_weights[i])
        sc.ones[i] = 1.0
    gr.umu = &view_cosines[0] if sz.nvz > 0 else NULL
    gr.phi = &view_azimuths[0] if sz.nva > 0 else NULL
    gr.position_layer = &position_layer[0] if sz.npos > 0 else NULL
    gr.position_fraction = &position_fraction[0] if sz.npos > 0 else NULL
    cl.thermal = thermal

    with nogil:
        for col in range(ncol):
            cl.tau = &optical_depth[col, 0]
            cl.albedo = &single_scattering_albedo[col, 0]
            cl.moments = &phase_moments[col, 0, 0]
            cl.mu0 = &sun_cosine[col, 0]
            cl.irradiance = &sun_irradiance[col, 0]
            cl.planck = &planck_levels[col, 0]
            cl.surface_albedo = surface_albedo[col]
            cl.surface_planck = planck_surface[col]
            cl.top_radiance = top_radiance[col]
            if spherical:
                cl.beam_slant = &beam_slant_optical_depth[col, 0, 0]
                cl.beam_cosine = &beam_layer_cosine[col, 0, 0]
            if bidirectional:
                point_surface(&cl, col, sz.nvz, sz.nva, surface_fourier, surface_beam_fourier,
                              surface_view_fourier, surface_view_beam, surface_emissivity,
                              surface_view_emissivity)
            out.flux_up = &flux_up[col, 0, 0]
            out.flux_down = &flux_down[col, 0, 0]
            out.mean_intensity = &mean_intensity[col, 0, 0]
            out.radiance = &radiance[col, 0, 0, 0, 0, 0]
            out.fourier_terms = &fourier_terms[col]
            out.status = &status[col, 0]
            if own_views and want_radiance:
                gr.umu = &column_view_cosines[col, 0]
                gr.phi = &column_view_azimuths[col, 0]
            start_column(&sz, &sc, &ly, &cl, &gr, want_radiance, &out)
            if bidirectional and want_radiance:
                surface_beam_views(&sz, &cl, &gr, out.radiance)
            if solve_column(&sz, &sc, &ly, &cl, &gr, nmodes, fourier_tolerance,
                            want_radiance, &out) == 0:
                check_finite(&sz, &out)
    return None


def _check_surface(ncol, n, nsun, nvz, nva, arrays):
    """True for a bidirectional surface; refuse a partial or mis-shaped set of its arrays."""
    names = ("surface_fourier", "surface_beam_fourier", "surface_view_fourier",
             "surface_view_beam", "surface_emissivity", "surface_view_emissivity")
    given = [array is not None for array in arrays]
    if not any(given):
        return False
    if not all(given):
        raise ValueError("solve_columns: give all of " + ", ".join(names) + " or none")
    shapes = [tuple(np.asarray(array).shape) for array in arrays]
    terms = shapes[0][1]
    expected = [(ncol, terms, n, n), (ncol, nsun, terms, n), (ncol, terms, nvz, n),
                (ncol, nsun, nvz, nva), (ncol, n), (ncol, nvz)]
    if terms < 1:
        raise ValueError("solve_columns: surface_fourier needs at least one term")
    for name, shape, want in zip(names, shapes, expected):
        if shape != want:
            raise ValueError(f"solve_columns: {name} has shape {shape}, expected {want}")
    return True


def _keyword_group(names, arrays, expected):
    """True if every array of an optional keyword group is given, False if none is; refuse
    a partial group or a mis-shaped array (``expected``: the shapes, in order)."""
    given = [array is not None for array in arrays]
    if not any(given):
        return False
    if not all(given):
        raise ValueError("solve_columns: give " + " and ".join(names) + " together or neither")
    for name, array, want in zip(names, arrays, expected):
        shape = tuple(np.asarray(array).shape)
        if shape != want:
            raise ValueError(f"solve_columns: {name} has shape {shape}, expected {want}")
    return True


def _check_spherical(ncol, nsun, nlayer, slant, cosine):
    """True for a pseudo-spherical beam; refuse half of it or mis-shaped arrays."""
    if not _keyword_group(("beam_slant_optical_depth", "beam_layer_cosine"), (slant, cosine),
                          ((ncol, nsun, nlayer + 1), (ncol, nsun, nlayer))):
        return False
    if not np.all(np.asarray(cosine) > 0.0):
        raise ValueError("solve_columns: beam_layer_cosine must be positive")
    return True


def _check_column_views(ncol, nvz, nva, cosines, azimuths):
    """True for views of each column's own; refuse one without the other or a bad shape."""
    return _keyword_group(("column_view_cosines", "column_view_azimuths"),
                          (cosines, azimuths), ((ncol, nvz), (ncol, nva)))


cdef void point_surface(Column *cl, Py_ssize_t col, Py_ssize_t nvz, Py_ssize_t nva,
                        const double[:, :, :, ::1] fq, const double[:, :, :, ::1] fb,
                        const double[:, :, :, ::1] fv, const double[:, :, :, ::1] fvb,
                        const double[:, ::1] eq, const double[:, ::1] ev) noexcept nogil:
    """Point the column's surface arrays at row ``col`` (views may be empty)."""
    cl.brdf_quadrature = &fq[col, 0, 0, 0]
    cl.brdf_beam = &fb[col, 0, 0, 0]
    cl.emissivity_quadrature = &eq[col, 0]
    cl.brdf_view = &fv[col, 0, 0, 0] if nvz > 0 else NULL
    cl.brdf_view_beam = &fvb[col, 0, 0, 0] if nvz > 0 and nva > 0 else NULL
    cl.emissivity_view = &ev[col, 0] if nvz > 0 else NULL


def dexp_for_tests(double a, double b, double length):
    """Test hook for the continuous exponential difference used in the angular integrals."""
    return dexp(a, b, length)


def dexp_cached_for_tests(double a, double b, double length):
    """Test hook: dexp_cached and dexp_from_zero (a = 0) from the exponentials they are given."""
    if a == 0.0:
        return dexp_from_zero(b, length, exp(-b * length))
    return dexp_cached(a, b, length, exp(-a * length), exp(-b * length))


def legendre_for_tests(Py_ssize_t m, Py_ssize_t nl, const double[::1] x):
    """Test hook: normalised associated Legendre table, shape (len(x), nl)."""
    out = np.zeros(x.shape[0] * nl)
    cdef double[::1] view = out
    if x.shape[0] > 0:
        legendre_table(m, nl, &x[0], x.shape[0], &view[0])
    return out.reshape(x.shape[0], nl)


def single_scattering(
    const double[:, ::1] optical_depth,
    const double[:, ::1] single_scattering_albedo,
    const double[:, :, :, :, :, ::1] phase_function,
    const double[:, ::1] sun_cosine,
    const double[:, ::1] sun_irradiance,
    const Py_ssize_t[::1] position_layer,
    const double[::1] position_fraction,
    const double[::1] view_cosines,
    double sign,
    double[:, :, :, :, :, ::1] radiance,
    *,
    const double[:, :, ::1] beam_slant_optical_depth=None,
    const double[:, :, ::1] beam_layer_cosine=None,
    const double[:, ::1] column_view_cosines=None,
):
    """Add ``sign`` times the singly scattered beam radiance to ``radiance``.

    phase_function (column, layer, sun, 2, vz, va) holds P(cos T) of each layer for each
    view direction (0 up, 1 down); radiance is (column, sun, pos, 2, vz, va). No surface
    term: the surface-reflected beam is identical in the exact and truncated problems.
    A pseudo-spherical beam: the two keywords as for :func:`solve_columns` (the beam
    reaches layer j's top attenuated by its slant depth and decays inside with the
    layer's cosine; sun_cosine then only enters through phase_function).
    column_view_cosines (column, vz), if given, replaces view_cosines in each column.
    """
    cdef Py_ssize_t ncol = optical_depth.shape[0], nlay = optical_depth.shape[1]
    cdef Py_ssize_t nsun = sun_cosine.shape[1], npos = position_layer.shape[0]
    cdef Py_ssize_t nvz = view_cosines.shape[0], nva = radiance.shape[5]
    cdef Py_ssize_t col, s, u, a, layer, p
    cdef double mu0, sec, inv, beam, dt1, dt2, up, down
    cdef bint spherical = _check_spherical(ncol, nsun, nlay, beam_slant_optical_depth,
                                           beam_layer_cosine)
    cdef double[::1] secants = np.zeros(nlay), top_beam = np.zeros(nlay)
    cdef bint own_views = column_view_cosines is not None
    cdef double[::1] up_levels = np.zeros(nlay + 1), down_levels = np.zeros(nlay + 1)
    cdef double[::1] tops = np.zeros(nlay + 1)
    # per layer and view cosine, the same for every azimuth: transmittance along the view and
    # the beam's source integrated across the layer (up, down) per unit w P
    cdef double[::1] across = np.zeros(nlay), source_up = np.zeros(nlay)
    cdef double[::1] source_down = np.zeros(nlay)
    # the same for the part of a layer between an output position and the layer's bottom
    # (up) or top (down)
    cdef double[::1] below = np.zeros(npos), above = np.zeros(npos)
    cdef double[::1] part_up = np.zeros(npos), part_down = np.zeros(npos)
    if (single_scattering_albedo.shape[0] != ncol or single_scattering_albedo.shape[1] != nlay
            or phase_function.shape[0] != ncol or phase_function.shape[1] != nlay
            or phase_function.shape[2] != nsun or phase_function.shape[3] != 2
            or phase_function.shape[4] != nvz or phase_function.shape[5] != nva
            or sun_irradiance.shape[0] != ncol or sun_irradiance.shape[1] != nsun
            or radiance.shape[0] != ncol or radiance.shape[1] != nsun
            or radiance.shape[2] != npos or radiance.shape[3] != 2 or radiance.shape[4] != nvz
            or position_fraction.shape[0] != npos or sun_cosine.shape[0] != ncol):
        raise ValueError("single_scattering: arrays disagree in shape")
    if own_views and (column_view_cosines.shape[0] != ncol
                      or column_view_cosines.shape[1] != nvz):
        raise ValueError("single_scattering: column_view_cosines must be (column, vz)")
    if npos and (np.asarray(position_layer).min() < 0
                 or np.asarray(position_layer).max() >= nlay):
        raise ValueError("single_scattering: position_layer out of range")
    with nogil:
        for col in range(ncol):
            tops[0] = 0.0
            for layer in range(nlay):
                tops[layer + 1] = tops[layer] + optical_depth[col, layer]
            for s in range(nsun):
                mu0 = sun_cosine[col, s]
                sec = 1.0 / mu0
                for layer in range(nlay):
                    if spherical:
                        secants[layer] = 1.0 / beam_layer_cosine[col, s, layer]
                        top_beam[layer] = exp(-beam_slant_optical_depth[col, s, layer])
                    else:
                        secants[layer] = sec
                        top_beam[layer] = exp(-tops[layer] * sec)
                for u in range(nvz):
                    if own_views:
                        inv = 1.0 / column_view_cosines[col, u]
                    else:
                        inv = 1.0 / view_cosines[u]
                    for layer in range(nlay):
                        sec = secants[layer]
                        beam = sun_irradiance[col, s] / (4.0 * PI) \
                            * single_scattering_albedo[col, layer] \
                            * top_beam[layer] * inv
                        across[layer] = exp(-optical_depth[col, layer] * inv)
                        source_up[layer] = beam * dexp(0.0, sec + inv, optical_depth[col, layer])
                        source_down[layer] = beam * dexp(inv, sec, optical_depth[col, layer])
                    for p in range(npos):
                        layer = position_layer[p]
                        sec = secants[layer]
                        dt1 = position_fraction[p] * optical_depth[col, layer]
                        dt2 = optical_depth[col, layer] - dt1
                        beam = sun_irradiance[col, s] / (4.0 * PI) \
                            * single_scattering_albedo[col, layer] * inv
                        below[p] = exp(-dt2 * inv)
                        if spherical:
                            part_up[p] = beam * top_beam[layer] * exp(-dt1 * sec) \
                                * dexp(0.0, sec + inv, dt2)
                        else:
                            part_up[p] = beam * exp(-(tops[layer] + dt1) * sec) \
                                * dexp(0.0, sec + inv, dt2)
                        above[p] = exp(-dt1 * inv)
                        part_down[p] = beam * top_beam[layer] * dexp(inv, sec, dt1)
                    for a in range(nva):
                        # upward, from the bottom (no surface contribution)
                        up_levels[nlay] = 0.0
                        for layer in range(nlay - 1, -1, -1):
                            up_levels[layer] = up_levels[layer + 1] * across[layer] \
                                + phase_function[col, layer, s, 0, u, a] * source_up[layer]
                        down_levels[0] = 0.0
                        for layer in range(nlay):
                            down_levels[layer + 1] = down_levels[layer] * across[layer] \
                                + phase_function[col, layer, s, 1, u, a] * source_down[layer]
                        for p in range(npos):
                            layer = position_layer[p]
                            up = up_levels[layer + 1] * below[p] \
                                + phase_function[col, layer, s, 0, u, a] * part_up[p]
                            down = down_levels[layer] * above[p] \
                                + phase_function[col, layer, s, 1, u, a] * part_down[p]
                            radiance[col, s, p, 0, u, a] += sign * up
                            radiance[col, s, p, 1, u, a] += sign * down
    return None
