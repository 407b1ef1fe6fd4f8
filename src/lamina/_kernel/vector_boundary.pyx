# cython: language_level=3, boundscheck=False, wraparound=False, cdivision=True
# cython: initializedcheck=False
"""The boundary-value problem of one Fourier term of the Stokes-vector problem.

Method (Stamnes and Conklin 1984 for the scalar case, which this follows component by
component; Siewert 2000 and Garcia and Siewert 1989 for the vector problem): in every layer
the Fourier term is the particular solution plus the 2 nn modes of vector_layers, each
referred to the boundary it decays away from, so that every exponential is <= 1
(vector_common.pxd). The conditions are: the diffuse light entering at the top (an
isotropic unpolarized radiance: I of term 0), continuity of all Stokes components at every
quadrature cosine at every interface, and at the bottom a Lambertian depolarizing surface:
in term 0 the upward I at mu_i is sum_j 2 A w_j mu_j I-(mu_j) plus
A mu0 S exp(-tau / mu0) / pi (and with thermal emission (1 - A) B_surface), and the
surface reflects neither Q, U, V nor any term m > 0. The layers' thermal particular
solutions (term 0, vector_layers) enter every condition as the beam's do.
The system has 2 nn L equations with kl = ku = 3 nn - 1 (nn = n * stokes), solved by banded
LU (dgbtrf/dgbtrs), one factorisation for all sun angles. ``vector_levels`` then evaluates
the term's Stokes vectors at the quadrature cosines at every level.

References
----------
Garcia, R. D. M. and Siewert, C. E. (1989), J. Quant. Spectrosc. Radiat. Transfer 41, 117.
Siewert, C. E. (2000), J. Quant. Spectrosc. Radiat. Transfer 64, 227-254.
Stamnes, K. and Conklin, P. (1984), J. Quant. Spectrosc. Radiat. Transfer 31, 273-282.
"""

from libc.math cimport exp
from libc.string cimport memset
from scipy.linalg.cython_lapack cimport dgbtrf, dgbtrs

from lamina._kernel._lapack_int cimport lapack_int
from lamina._kernel.common cimport PI
from lamina._kernel.vector_common cimport (
    VSTATUS_BAND_FACTOR, VSTATUS_BAND_SOLVE, VectorColumn, VectorLayers, VectorScratch,
    VectorSizes, basis_value, mode_factors, thermal_value,
)


cdef inline void band_put(VectorScratch *sc, Py_ssize_t i, Py_ssize_t j,
                          double value) noexcept nogil:
    sc.ab[sc.kl + sc.kl + i - j + j * sc.ldab] = value


cdef inline double column_value(VectorSizes *sz, VectorLayers *ly, VectorScratch *sc,
                                Py_ssize_t layer, Py_ssize_t c, Py_ssize_t j,
                                bint second) noexcept nogil:
    """``basis_value`` with the factors in ``sc.cs``, ``sc.cp``, ``sc.cs2``, ``sc.cp2``."""
    return basis_value(sz, ly, layer, c, j, second, sc.cs, sc.cp, sc.cs2, sc.cp2)


cdef void put_block(VectorSizes *sz, VectorLayers *ly, VectorScratch *sc, Py_ssize_t layer,
                    double t, double tau, Py_ssize_t row0, Py_ssize_t comp0,
                    Py_ssize_t count, double factor) noexcept nogil:
    """Rows row0 .. row0 + count - 1: components comp0 .. of a layer's modes at depth t."""
    cdef Py_ssize_t nn = sz.nn, j, a, col0 = 2 * nn * layer
    mode_factors(sz, ly, layer, t, tau, sc.cs, sc.cp, sc.cs2, sc.cp2)
    for j in range(nn):
        for a in range(count):
            band_put(sc, row0 + a, col0 + j,
                     factor * column_value(sz, ly, sc, layer, comp0 + a, j, False))
        for a in range(count):
            band_put(sc, row0 + a, col0 + nn + j,
                     factor * column_value(sz, ly, sc, layer, comp0 + a, j, True))


cdef void bottom_block(VectorSizes *sz, VectorLayers *ly, VectorScratch *sc,
                       VectorColumn *cl, bint reflects) noexcept nogil:
    """Rows of the bottom condition: upward Stokes vector minus the surface's reflection."""
    cdef Py_ssize_t nn = sz.nn, ns = sz.ns, n = sz.n, layer = sz.nlayer - 1
    cdef Py_ssize_t row0 = 2 * nn * sz.nlayer - nn, col0 = 2 * nn * layer, j, a, i, half
    cdef double tau = cl.tau[layer], reflected, value
    cdef bint second
    mode_factors(sz, ly, layer, tau, tau, sc.cs, sc.cp, sc.cs2, sc.cp2)
    for half in range(2):
        second = half == 1
        for j in range(nn):
            reflected = 0.0
            if reflects:
                for i in range(n):
                    reflected = reflected + sc.refl[i] \
                        * column_value(sz, ly, sc, layer, nn + i * ns, j, second)
            for a in range(nn):
                value = column_value(sz, ly, sc, layer, a, j, second)
                if a % ns == 0:
                    value = value - reflected
                band_put(sc, row0 + a, col0 + half * nn + j, value)


cdef void sources(VectorSizes *sz, VectorLayers *ly, VectorScratch *sc, VectorColumn *cl,
                  Py_ssize_t sun, Py_ssize_t mode, bint reflects) noexcept nogil:
    """Right-hand sides of all conditions for one sun angle (into ``ly.coef``)."""
    cdef Py_ssize_t nn = sz.nn, ns = sz.ns, nsun = sz.nsun, neq = 2 * nn * sz.nlayer
    cdef Py_ssize_t layer, c, i, row, last = sz.nlayer - 1
    cdef double *coef = ly.coef + sun * neq
    cdef const double *z = ly.zp + sun * 2 * nn
    cdef const double *z2
    cdef double eb, reflected = 0.0, beam = 0.0, total = 0.0, emission = 0.0
    cdef bint thermal = cl.thermal and mode == 0
    for c in range(nn):
        coef[c] = -z[nn + c]
        if mode == 0 and c % ns == 0:
            coef[c] = coef[c] + cl.top_radiance
        if thermal:
            coef[c] = coef[c] - thermal_value(sz, ly, 0, nn + c, 0.0)
    for layer in range(sz.nlayer - 1):
        z = ly.zp + (layer * nsun + sun) * 2 * nn
        z2 = ly.zp + ((layer + 1) * nsun + sun) * 2 * nn
        eb = ly.eb[layer * nsun + sun]
        row = nn + 2 * nn * layer
        for c in range(2 * nn):
            coef[row + c] = z2[c] - z[c] * eb
            if thermal:
                coef[row + c] = coef[row + c] + thermal_value(sz, ly, layer + 1, c, 0.0) \
                    - thermal_value(sz, ly, layer, c, cl.tau[layer])
    z = ly.zp + (last * nsun + sun) * 2 * nn
    eb = ly.eb[last * nsun + sun]
    if reflects:
        for i in range(sz.n):
            reflected = reflected + sc.refl[i] * z[nn + i * ns] * eb
            if thermal:
                reflected = reflected + sc.refl[i] \
                    * thermal_value(sz, ly, last, nn + i * ns, cl.tau[last])
    if mode == 0:
        for layer in range(sz.nlayer):
            total = total + cl.tau[layer]
        beam = cl.surface_albedo / PI * sc.mu0e[sun] * cl.irradiance[sun] \
            * exp(-total / sc.mu0e[sun])
    if thermal:
        emission = (1.0 - cl.surface_albedo) * cl.surface_planck
    row = neq - nn
    for c in range(nn):
        coef[row + c] = -z[c] * eb
        if thermal:
            coef[row + c] = coef[row + c] - thermal_value(sz, ly, last, c, cl.tau[last])
        if c % ns == 0:
            coef[row + c] = coef[row + c] + beam + emission + reflected


cdef int vector_boundary_values(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly,
                                VectorColumn *cl, const double *mu, const double *wq,
                                Py_ssize_t mode, lapack_int *failed_info) noexcept nogil:
    """Assemble and solve the banded problem of term ``mode`` for all suns (``ly.coef``).

    Returns 0, or the status code of the failing LAPACK routine.
    """
    cdef Py_ssize_t nn = sz.nn, layer, i, s, row
    cdef lapack_int neqi = <lapack_int>(2 * nn * sz.nlayer), nsi = <lapack_int>sz.nsun
    cdef lapack_int info = 0
    cdef bint reflects = mode == 0 and cl.surface_albedo > 0.0
    cdef char trans_n = b'N'
    for i in range(sz.n):
        sc.refl[i] = 2.0 * cl.surface_albedo * wq[i] * mu[i] if reflects else 0.0
    memset(sc.ab, 0, sc.ldab * neqi * sizeof(double))
    put_block(sz, ly, sc, 0, 0.0, cl.tau[0], 0, nn, nn, 1.0)
    for layer in range(sz.nlayer - 1):
        row = nn + 2 * nn * layer
        put_block(sz, ly, sc, layer, cl.tau[layer], cl.tau[layer], row, 0, 2 * nn, 1.0)
        put_block(sz, ly, sc, layer + 1, 0.0, cl.tau[layer + 1], row, 0, 2 * nn, -1.0)
    bottom_block(sz, ly, sc, cl, reflects)
    dgbtrf(&neqi, &neqi, &sc.kl, &sc.kl, sc.ab, &sc.ldab, sc.ipiv, &info)
    if info != 0:
        failed_info[0] = info
        return VSTATUS_BAND_FACTOR
    for s in range(sz.nsun):
        sources(sz, ly, sc, cl, s, mode, reflects)
    dgbtrs(&trans_n, &neqi, &sc.kl, &sc.kl, &nsi, sc.ab, &sc.ldab, sc.ipiv, ly.coef, &neqi,
           &info)
    if info != 0:
        failed_info[0] = info
        return VSTATUS_BAND_SOLVE
    return 0


cdef void field_at(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly, VectorColumn *cl,
                   Py_ssize_t layer, double t, double *out, Py_ssize_t stride) noexcept nogil:
    """The term's 2 nn quadrature Stokes vectors at depth t in a layer, every sun.

    ``out + s * stride`` receives sun s (up then down); at the top of the atmosphere the
    downward part is the boundary value exactly (the top radiance in I of term 0, else 0).
    """
    cdef Py_ssize_t nn = sz.nn, n2 = 2 * nn, nsun = sz.nsun, s, c, j
    cdef Py_ssize_t neq = 2 * nn * sz.nlayer
    cdef double tau = cl.tau[layer], beam, value
    cdef double *target
    cdef const double *coef
    cdef const double *z
    mode_factors(sz, ly, layer, t, tau, sc.cs, sc.cp, sc.cs2, sc.cp2)
    for s in range(nsun):
        target = out + s * stride
        coef = ly.coef + s * neq + 2 * nn * layer
        z = ly.zp + (layer * nsun + s) * n2
        if t == 0.0:
            beam = 1.0
        elif t == tau:
            beam = ly.eb[layer * nsun + s]
        else:
            beam = exp(-t / sc.mu0e[s])
        for c in range(n2):
            value = z[c] * beam
            if cl.thermal and sc.mode == 0:
                value = value + thermal_value(sz, ly, layer, c, t)
            for j in range(nn):
                value = value + coef[j] * column_value(sz, ly, sc, layer, c, j, False) \
                    + coef[nn + j] * column_value(sz, ly, sc, layer, c, j, True)
            target[c] = value
        if layer == 0 and t == 0.0:
            for c in range(nn, n2):
                target[c] = cl.top_radiance if sc.mode == 0 and c % sz.ns == 0 else 0.0


cdef void vector_levels(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly,
                        VectorColumn *cl) noexcept nogil:
    """The term's Stokes vectors at the quadrature cosines at every level and position.

    field[sun][level][c], c = i ns + s for upward cosine i, nn + i ns + s downward; level l
    is the top of layer l, level L the bottom of the last layer; pfield[sun][pos][c] the
    same at the output positions.
    """
    cdef Py_ssize_t n2 = 2 * sz.nn, nlev = sz.nlayer + 1, level, layer, p
    for level in range(nlev):
        layer = level if level < sz.nlayer else sz.nlayer - 1
        field_at(sz, sc, ly, cl, layer, 0.0 if level < sz.nlayer else cl.tau[layer],
                 sc.field + level * n2, nlev * n2)
    for p in range(sz.npos):
        layer = sc.player[p]
        field_at(sz, sc, ly, cl, layer, sc.pfrac[p] * cl.tau[layer], sc.pfield + p * n2,
                 sz.npos * n2)
