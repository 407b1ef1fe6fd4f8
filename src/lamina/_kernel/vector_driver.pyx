# cython: language_level=3, boundscheck=False, wraparound=False, cdivision=True
# cython: initializedcheck=False
"""Stokes-vector discrete ordinates: many columns, the Fourier series, no GIL.

Method: the discrete-ordinate solution for polarized light of Siewert (1981, 2000), with
the phase matrix's Fourier decomposition of de Haan, Bosma and Hovenier (1987)
(``vector_layers``) and the banded boundary-value problem of the scalar kernel extended to
Stokes vectors (``vector_boundary``). Per column and Fourier term m = 0 .. M (M the highest
moment with a non-zero coefficient in some layer, at most nl - 1; the terms beyond it are
exactly zero over a Lambertian surface):

1. ``vector_homogeneous``: the kernels Z^m and the eigen-solution of every layer;
2. ``vector_beam_geometry`` and ``vector_particular``: the beam's particular solutions
   (and in term 0 ``vector_homogeneous`` leaves the thermal one: a Planck source linear in
   optical depth emits in I only);
3. ``vector_boundary_values``: the mode coefficients (the Lambertian surface emits
   (1 - A) B_surface in I); ``vector_levels``: the Stokes
   vectors at the quadrature cosines at every level;
4. the term is added at the requested azimuths, I and Q with cos(m phi), U and V with
   sin(m phi) (lamina's azimuth convention, DEVELOPERS.md "Polarization");
5. convergence, as in the scalar driver: the series stops after two successive terms that
   change no output (every component of every Stokes vector at the view cosines, or at the
   quadrature cosines when no view cosine is given) by more than the tolerance relative to
   its accumulated value, and after at most ``max_fourier_terms`` terms.

The albedo is capped at 1 - CONSERVATIVE_GAP as in the scalar kernel. Bidirectional
surfaces are not here yet (DEVELOPERS.md, "Polarization").
"""

from libc.math cimport cos, fabs, isfinite, sin
from scipy.linalg.cython_lapack cimport dgeev

from lamina._kernel._lapack_int cimport lapack_int
from lamina._kernel.common cimport PI
from lamina._kernel.vector_boundary cimport vector_boundary_values, vector_levels
from lamina._kernel.vector_common cimport (
    VSTATUS_NOT_FINITE, VectorColumn, VectorLayers, VectorScratch, VectorSizes,
)
from lamina._kernel.vector_layers cimport (
    vector_beam_geometry, vector_homogeneous, vector_particular,
)
from lamina._kernel.vector_sources cimport vector_view_radiances

import numpy as np

#: Failure codes of the vector kernel, written to ``status[column, 0]``.
VECTOR_STATUS_NAMES = {
    21: "eigenvalues of the reduced vector problem (dgeev)",
    22: "LU factorisation of the sum matrix A + B D (dgetrf/dgetrs): singular",
    23: "an eigenvalue k^2 of the reduced problem that is real and not positive",
    24: "the beam's particular solution (dgesv): singular system",
    25: "banded LU factorisation of the boundary-value problem (dgbtrf)",
    26: "banded solve of the boundary-value problem (dgbtrs)",
    29: "non-finite result",
}


cdef tuple allocate(VectorSizes *sz, VectorLayers *ly, VectorScratch *sc):
    """Workspace arrays (kept alive by the returned tuple) and the pointers into them."""
    cdef Py_ssize_t nn = sz.nn, nk = sz.nk, nlay = sz.nlayer, nsun = sz.nsun
    cdef Py_ssize_t neq = 2 * nn * nlay, rows = sz.nvz * sz.ns
    cdef lapack_int ni = <lapack_int>nn, info = 0, query = -1, one_i = 1
    cdef double work_size = 0.0
    cdef double[::1] probe = np.eye(nn).ravel()
    cdef double[::1] wr = np.zeros(nn), wi = np.zeros(nn), vr = np.zeros(nn * nn)
    cdef char job_n = b'N', job_v = b'V'
    dgeev(&job_n, &job_v, &ni, &probe[0], &ni, &wr[0], &wi[0], &vr[0], &one_i, &vr[0], &ni,
          &work_size, &query, &info)
    sc.lwork = <lapack_int>max(4 * nn, int(work_size))
    sc.kl = <lapack_int>(3 * nn - 1)
    sc.ldab = <lapack_int>(3 * sc.kl + 1)
    sizes = {
        "kr": nlay * nn, "ki": nlay * nn, "ss": nlay * nn * nn, "dd": nlay * nn * nn,
        "wpp": nlay * nn * nn, "wpm": nlay * nn * nn, "zp": nlay * nsun * 2 * nn,
        "ttop": nlay * nsun, "eb": nlay * nsun, "coef": nsun * neq,
        "pp": nn * nk, "pm": nn * nk, "p0": nk, "bt": nk * nn, "btm": nk * nn, "bq": nk,
        "dtab": 3 * sz.nl, "apb": nn * nn, "amb": nn * nn, "gg": nn * nn, "tmp": nn * nn,
        "vr": nn * nn, "xs": nn * nn, "wr": nn, "wi": nn, "big": 4 * nn * nn,
        "rhs": max(2 * nn, sz.n), "cs": nn, "cp": nn, "cs2": nn, "cp2": nn, "refl": sz.n,
        "mu0e": nsun, "field": nsun * (nlay + 1) * 2 * nn, "work": sc.lwork,
        "ab": sc.ldab * neq,
        "pvu": rows * nk, "pvd": rows * nk, "zv": max(rows * nn, sz.nvz), "hup": rows * 2 * nn,
        "hdn": rows * 2 * nn, "fmat": 2 * nn * nn, "fmir": 2 * nn * nn, "hf": 4 * rows * nn,
        "hz": 2 * rows, "srcu": nlay * nsun * rows, "srcd": nlay * nsun * rows,
        "vfield": nsun * (nlay + 1) * 2 * rows,
        "pfield": nsun * sz.npos * 2 * nn, "psrcu": sz.npos * nsun * rows,
        "psrcd": sz.npos * nsun * rows, "vpos": nsun * sz.npos * 2 * rows,
        "b0": nlay, "b1": nlay, "yth": nlay * nn, "thv": 4 * rows,
    }
    arrays = {name: np.zeros(max(size, 1)) for name, size in sizes.items()}
    cdef dict at = {}
    cdef double[::1] view
    for name, array in arrays.items():
        view = array
        at[name] = <size_t>&view[0]
    ly.kr = <double *><size_t>at["kr"]
    ly.ki = <double *><size_t>at["ki"]
    ly.ss = <double *><size_t>at["ss"]
    ly.dd = <double *><size_t>at["dd"]
    ly.wpp = <double *><size_t>at["wpp"]
    ly.wpm = <double *><size_t>at["wpm"]
    ly.zp = <double *><size_t>at["zp"]
    ly.ttop = <double *><size_t>at["ttop"]
    ly.eb = <double *><size_t>at["eb"]
    ly.coef = <double *><size_t>at["coef"]
    ly.b0 = <double *><size_t>at["b0"]
    ly.b1 = <double *><size_t>at["b1"]
    ly.yth = <double *><size_t>at["yth"]
    sc.thv = <double *><size_t>at["thv"]
    sc.pp = <double *><size_t>at["pp"]
    sc.pm = <double *><size_t>at["pm"]
    sc.p0 = <double *><size_t>at["p0"]
    sc.bt = <double *><size_t>at["bt"]
    sc.btm = <double *><size_t>at["btm"]
    sc.bq = <double *><size_t>at["bq"]
    sc.dtab = <double *><size_t>at["dtab"]
    sc.apb = <double *><size_t>at["apb"]
    sc.amb = <double *><size_t>at["amb"]
    sc.gg = <double *><size_t>at["gg"]
    sc.tmp = <double *><size_t>at["tmp"]
    sc.vr = <double *><size_t>at["vr"]
    sc.xs = <double *><size_t>at["xs"]
    sc.wr = <double *><size_t>at["wr"]
    sc.wi = <double *><size_t>at["wi"]
    sc.big = <double *><size_t>at["big"]
    sc.rhs = <double *><size_t>at["rhs"]
    sc.cs = <double *><size_t>at["cs"]
    sc.cp = <double *><size_t>at["cp"]
    sc.cs2 = <double *><size_t>at["cs2"]
    sc.cp2 = <double *><size_t>at["cp2"]
    sc.refl = <double *><size_t>at["refl"]
    sc.mu0e = <double *><size_t>at["mu0e"]
    sc.field = <double *><size_t>at["field"]
    sc.work = <double *><size_t>at["work"]
    sc.ab = <double *><size_t>at["ab"]
    sc.pvu = <double *><size_t>at["pvu"]
    sc.pvd = <double *><size_t>at["pvd"]
    sc.zv = <double *><size_t>at["zv"]
    sc.hup = <double *><size_t>at["hup"]
    sc.hdn = <double *><size_t>at["hdn"]
    sc.fmat = <double *><size_t>at["fmat"]
    sc.fmir = <double *><size_t>at["fmir"]
    sc.hf = <double *><size_t>at["hf"]
    sc.hz = <double *><size_t>at["hz"]
    sc.srcu = <double *><size_t>at["srcu"]
    sc.srcd = <double *><size_t>at["srcd"]
    sc.vfield = <double *><size_t>at["vfield"]
    sc.pfield = <double *><size_t>at["pfield"]
    sc.psrcu = <double *><size_t>at["psrcu"]
    sc.psrcd = <double *><size_t>at["psrcd"]
    sc.vpos = <double *><size_t>at["vpos"]
    partner = np.zeros(max(nlay * nn, 1), dtype=np.intp)
    cdef Py_ssize_t[::1] partner_view = partner
    ly.partner = &partner_view[0]
    ipiv = np.zeros(max(neq, 2 * nn) * sizeof(lapack_int), dtype=np.uint8)
    cdef unsigned char[::1] ipiv_view = ipiv
    sc.ipiv = <lapack_int *>&ipiv_view[0]
    return arrays, partner, ipiv


cdef Py_ssize_t last_term(VectorSizes *sz, VectorColumn *cl) noexcept nogil:
    """The highest moment with a non-zero coefficient in some layer (0 if none)."""
    cdef Py_ssize_t layer, l, e, top = 0
    for layer in range(sz.nlayer):
        for l in range(sz.nl):
            for e in range(6):
                if cl.moments[(layer * sz.nl + l) * 6 + e] != 0.0 and l > top:
                    top = l
    return top


cdef double add_term(VectorSizes *sz, VectorScratch *sc, Py_ssize_t mode, const double *mu,
                     const double *wq, const double *phi, Py_ssize_t nva, double tolerance,
                     double *radiance, double *flux_up, double *flux_down,
                     double *mean) noexcept nogil:
    """Add term ``mode`` at the azimuths: radiance [sun][level][2][n][va][ns].

    Returns the term's change of the quadrature Stokes vectors (``term_change``).
    """
    cdef Py_ssize_t nn = sz.nn, nlev = sz.nlayer + 1
    if mode == 0:
        add_fluxes(sz, sc, mu, wq, flux_up, flux_down, mean)
    return term_change(sz, sc.field, sz.nsun * nlev * 2, nn, sz.n, mode, phi, nva, tolerance,
                       radiance)


cdef double add_view_term(VectorSizes *sz, VectorScratch *sc, Py_ssize_t mode,
                          const double *phi, Py_ssize_t nva, double tolerance,
                          double *radiance) noexcept nogil:
    """Add term ``mode`` at the view cosines: radiance [sun][position][2][vz][va][ns].

    Returns the term's change of these Stokes vectors (``term_change``).
    """
    cdef Py_ssize_t rows = sz.nvz * sz.ns
    return term_change(sz, sc.vpos, sz.nsun * sz.npos * 2, rows, sz.nvz, mode, phi, nva,
                       tolerance, radiance)


cdef double term_change(VectorSizes *sz, const double *term, Py_ssize_t nblock,
                        Py_ssize_t stride, Py_ssize_t ncos, Py_ssize_t mode,
                        const double *phi, Py_ssize_t nva, double tolerance,
                        double *radiance) noexcept nogil:
    """Add a term's Stokes vectors to ``radiance`` [block][cosine][va][ns]; its change.

    ``term[b * stride + i * ns + c]`` is component c at cosine i of block b; I and Q take
    cos(m phi), U and V sin(m phi). The change is the scalar driver's measure, max |term| /
    max(|sum|, 1e-14 max |sum|) over every output and component (0 for term 0), made
    exactly only when some output moved by more than ``tolerance`` of itself.
    """
    cdef Py_ssize_t ns = sz.ns, b, i, a, c
    cdef double cm, sm, value, size, biggest = 0.0, change = 0.0, floor_value
    cdef bint unsettled = False
    cdef const double *f
    cdef double *out
    for a in range(nva):
        cm = cos(mode * phi[a])
        sm = sin(mode * phi[a])
        for b in range(nblock):
            f = term + b * stride
            for i in range(ncos):
                out = radiance + ((b * ncos + i) * nva + a) * ns
                for c in range(ns):
                    value = f[i * ns + c] * (cm if c < 2 else sm)
                    out[c] = out[c] + value
                    size = fabs(out[c])
                    biggest = max(biggest, size)
                    if fabs(value) > tolerance * size:
                        unsettled = True
    if mode == 0 or not unsettled:
        return 0.0
    floor_value = 1e-300 + 1e-14 * biggest
    for a in range(nva):
        cm = cos(mode * phi[a])
        sm = sin(mode * phi[a])
        for b in range(nblock):
            f = term + b * stride
            for i in range(ncos):
                out = radiance + ((b * ncos + i) * nva + a) * ns
                for c in range(ns):
                    value = fabs(f[i * ns + c] * (cm if c < 2 else sm))
                    change = max(change, value / max(fabs(out[c]), floor_value))
    return change


cdef void add_fluxes(VectorSizes *sz, VectorScratch *sc, const double *mu, const double *wq,
                     double *flux_up, double *flux_down, double *mean) noexcept nogil:
    """The diffuse I fluxes and mean intensity (1/2) sum w (I+ + I-) of term 0 at positions."""
    cdef Py_ssize_t nn = sz.nn, ns = sz.ns, n = sz.n, nlev = sz.npos, s, level, i
    cdef double up, down, both
    cdef const double *f
    for s in range(sz.nsun):
        for level in range(nlev):
            f = sc.pfield + (s * nlev + level) * 2 * nn
            up = 0.0
            down = 0.0
            both = 0.0
            for i in range(n):
                up = up + wq[i] * mu[i] * f[i * ns]
                down = down + wq[i] * mu[i] * f[nn + i * ns]
                both = both + wq[i] * (f[i * ns] + f[nn + i * ns])
            flux_up[s * nlev + level] = 2.0 * PI * up
            flux_down[s * nlev + level] = 2.0 * PI * down
            mean[s * nlev + level] = 0.5 * both


cdef int solve_vector_column(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly,
                             VectorColumn *cl, const double *mu, const double *wq,
                             const double *phi, Py_ssize_t nva, Py_ssize_t max_terms,
                             double tolerance, double *radiance, double *view_radiance,
                             double *flux_up, double *flux_down, double *mean,
                             long long *terms, long long *status) noexcept nogil:
    """The Fourier terms of one column; 0, or a status code (with layer, term, info).

    Terms up to the last non-zero moment and at most ``max_terms``; the series stops after
    two successive terms that each change every output (the view Stokes vectors, or the
    quadrature ones when there are no view cosines) by at most ``tolerance`` of its
    accumulated value (the scalar driver's criterion). ``terms[0]``: the terms summed.
    """
    cdef Py_ssize_t mode, top = last_term(sz, cl), layer = -1, small_run = 0
    cdef lapack_int info = 0
    cdef int code
    cdef double change
    terms[0] = 0
    for mode in range(min(min(top, sz.nl - 1) + 1, max(max_terms, 1))):
        sc.mode = mode
        code = vector_homogeneous(sz, sc, ly, cl, mu, wq, mode, &layer, &info)
        if code == 0:
            vector_beam_geometry(sz, sc, ly, cl)
            code = vector_particular(sz, sc, ly, cl, mu, mode, &layer, &info)
        if code == 0:
            layer = -1
            code = vector_boundary_values(sz, sc, ly, cl, mu, wq, mode, &info)
        if code != 0:
            status[0] = code
            status[1] = layer
            status[2] = mode
            status[3] = info
            return code
        vector_levels(sz, sc, ly, cl)
        terms[0] = mode + 1
        change = add_term(sz, sc, mode, mu, wq, phi, nva, tolerance, radiance, flux_up,
                          flux_down, mean)
        if sz.nvz > 0:
            vector_view_radiances(sz, sc, ly, cl, mode, mu, wq)
            change = add_view_term(sz, sc, mode, phi, nva, tolerance, view_radiance)
        if mode > 0:
            small_run = small_run + 1 if change <= tolerance else 0
            if small_run >= 2:
                break
    return 0


def solve_vector_columns(
    const double[:, ::1] optical_thickness,
    const double[:, ::1] single_scattering_albedo,
    const double[:, :, :, ::1] scattering_matrix_moments,
    const double[:, ::1] sun_cosine,
    const double[:, ::1] sun_irradiance,
    const double[::1] surface_albedo,
    const double[::1] top_radiance,
    const double[:, ::1] planck_levels,
    const double[::1] planck_surface,
    bint thermal,
    const double[::1] quadrature_cosines,
    const double[::1] quadrature_weights,
    const double[::1] view_azimuth_radians,
    const double[::1] view_cosines,
    const Py_ssize_t[::1] position_layer,
    const double[::1] position_fraction,
    Py_ssize_t stokes,
    Py_ssize_t max_fourier_terms,
    double fourier_tolerance,
    double[:, :, :, :, :, :, ::1] radiance,
    double[:, :, :, :, :, :, ::1] view_radiance,
    double[:, :, ::1] flux_up,
    double[:, :, ::1] flux_down,
    double[:, :, ::1] mean_intensity,
    long long[::1] fourier_terms,
    long long[:, ::1] status,
):
    """Fill the Stokes vectors at the quadrature cosines of a block of columns.

    Inputs are checked by the callers (``vector.vector_quadrature_radiance``,
    ``lamina._solver.polarized``); moments are (column, layer, nl, 6), the Planck radiance
    (column, level) and (column,) of the surface (used when ``thermal``), view cosines in
    (0, 1] (may be empty), output positions as (layer, fraction of its optical thickness).
    Outputs: radiance at the quadrature cosines (column, sun, level, direction (0 up,
    1 down), cosine, azimuth, stokes), at the view cosines (column, sun, position,
    direction, view cosine, azimuth, stokes), the diffuse I fluxes and mean intensity
    (column, sun, position), the Fourier terms summed (column; at most
    ``max_fourier_terms``, fewer when the series converged to ``fourier_tolerance``: module
    docstring) and status (column, 4): code, layer, Fourier term, LAPACK info (0 where the
    column was solved).
    """
    cdef VectorSizes sz
    cdef VectorLayers ly
    cdef VectorScratch sc
    cdef VectorColumn cl
    cdef Py_ssize_t ncol = optical_thickness.shape[0], col, i, total, nva, total_view
    cdef double *view_out = NULL
    sz.n = quadrature_cosines.shape[0]
    sz.ns = stokes
    sz.nn = sz.n * stokes
    sz.nl = scattering_matrix_moments.shape[2]
    sz.nk = sz.nl * stokes
    sz.nlayer = optical_thickness.shape[1]
    sz.nsun = sun_cosine.shape[1]
    nva = view_azimuth_radians.shape[0]
    sz.nvz = view_cosines.shape[0]
    sc.umu = &view_cosines[0] if sz.nvz > 0 else NULL
    sz.npos = position_layer.shape[0]
    if (sz.npos < 1 or position_fraction.shape[0] != sz.npos
            or np.min(position_layer) < 0 or np.max(position_layer) >= sz.nlayer
            or not (np.min(position_fraction) >= 0.0 and np.max(position_fraction) <= 1.0)):
        raise ValueError("solve_vector_columns: positions out of range")
    sc.player = &position_layer[0]
    sc.pfrac = &position_fraction[0]
    if (stokes not in (1, 3, 4) or sz.nlayer < 1 or sz.n < 1 or nva < 1
            or single_scattering_albedo.shape[0] != ncol
            or single_scattering_albedo.shape[1] != sz.nlayer
            or tuple(np.shape(scattering_matrix_moments)[:2]) != (ncol, sz.nlayer)
            or scattering_matrix_moments.shape[3] != 6
            or sun_irradiance.shape[0] != ncol or sun_irradiance.shape[1] != sz.nsun
            or sun_cosine.shape[0] != ncol or surface_albedo.shape[0] != ncol
            or top_radiance.shape[0] != ncol
            or planck_levels.shape[0] != ncol or planck_levels.shape[1] != sz.nlayer + 1
            or planck_surface.shape[0] != ncol
            or quadrature_weights.shape[0] != sz.n
            or tuple(np.shape(radiance)) != (ncol, sz.nsun, sz.nlayer + 1, 2, sz.n, nva,
                                             stokes)
            or tuple(np.shape(flux_up)) != (ncol, sz.nsun, sz.npos)
            or tuple(np.shape(flux_down)) != (ncol, sz.nsun, sz.npos)
            or tuple(np.shape(mean_intensity)) != (ncol, sz.nsun, sz.npos)
            or fourier_terms.shape[0] != ncol
            or status.shape[0] != ncol or status.shape[1] != 4):
        raise ValueError("solve_vector_columns: arrays disagree in shape")
    workspace = allocate(&sz, &ly, &sc)
    total = sz.nsun * (sz.nlayer + 1) * 2 * sz.n * nva * stokes
    total_view = sz.nsun * sz.npos * 2 * sz.nvz * nva * stokes
    with nogil:
        for col in range(ncol):
            for i in range(4):
                status[col, i] = 0
            cl.tau = &optical_thickness[col, 0]
            cl.albedo = &single_scattering_albedo[col, 0]
            cl.moments = &scattering_matrix_moments[col, 0, 0, 0]
            cl.mu0 = &sun_cosine[col, 0]
            cl.irradiance = &sun_irradiance[col, 0]
            cl.surface_albedo = surface_albedo[col]
            cl.top_radiance = top_radiance[col]
            cl.planck = &planck_levels[col, 0]
            cl.surface_planck = planck_surface[col]
            cl.thermal = thermal
            for i in range(total):
                (&radiance[col, 0, 0, 0, 0, 0, 0])[i] = 0.0
            if sz.nvz > 0:
                view_out = &view_radiance[col, 0, 0, 0, 0, 0, 0]
                for i in range(total_view):
                    view_out[i] = 0.0
            if solve_vector_column(&sz, &sc, &ly, &cl, &quadrature_cosines[0],
                                   &quadrature_weights[0], &view_azimuth_radians[0], nva,
                                   max_fourier_terms, fourier_tolerance,
                                   &radiance[col, 0, 0, 0, 0, 0, 0], view_out,
                                   &flux_up[col, 0, 0], &flux_down[col, 0, 0],
                                   &mean_intensity[col, 0, 0], &fourier_terms[col],
                                   &status[col, 0]) != 0:
                continue
            for i in range(total + total_view):
                if not isfinite((&radiance[col, 0, 0, 0, 0, 0, 0])[i] if i < total
                                else view_out[i - total]):
                    status[col, 0] = VSTATUS_NOT_FINITE
                    status[col, 1] = -1
                    status[col, 2] = -1
                    break
    del workspace
    return None
