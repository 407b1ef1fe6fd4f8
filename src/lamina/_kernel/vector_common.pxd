# cython: language_level=3
# The vector kernel's bottom room: status codes, structs and inline helpers shared by
# ``vector_layers``, ``vector_boundary`` and ``vector_driver`` (the Stokes-vector
# discrete-ordinate solution; see vector_layers.pyx for the method). Declarations and
# ``cdef inline`` helpers only, so nothing here needs a compiled module of its own.
#
# Layout: a Fourier term's Stokes vectors at the quadrature cosines of one hemisphere are
# ``nn = n * ns`` numbers, index r = i * ns + s (cosine i, Stokes component s). A layer's
# solution is sum_j C_j F_j(t) + sum_j D_j F'_j(tau - t) + z exp(-t / mu0), t the depth
# below the layer top: F_j are the modes that decay downward (upward part ``xp``, downward
# part ``xm``, column j), F'_j their mirror images D (xm, xp) that decay upward from the
# layer bottom (D = diag(1, 1, -1, -1) on each Stokes vector). A real eigenvalue gives
# F_j(t) = x_j exp(-k_j t); a complex pair k = kr + i ki (ki > 0) keeps Re x in column j
# and Im x in column j + 1 = partner[j] (partner[j + 1] = j), and the two real solutions
# Re(x exp(-k t)) = exp(-kr t) (Re x cos(ki t) + Im x sin(ki t)) and Im(x exp(-k t)) =
# exp(-kr t) (Im x cos(ki t) - Re x sin(ki t)) (Siewert 2000): every exponential is <= 1.

from libc.math cimport cos, exp, sin

from lamina._kernel._lapack_int cimport lapack_int

# Failure codes written to ``status[column, 0]``; ``vector_driver.VECTOR_STATUS_NAMES``
# describes them.
cdef enum:
    VSTATUS_EIGEN = 21
    VSTATUS_SUM_FACTOR = 22
    VSTATUS_EIGENVALUE = 23
    VSTATUS_PARTICULAR = 24
    VSTATUS_BAND_FACTOR = 25
    VSTATUS_BAND_SOLVE = 26
    VSTATUS_NOT_FINITE = 29


cdef struct VectorSizes:
    Py_ssize_t n          # quadrature cosines per hemisphere
    Py_ssize_t ns         # Stokes components (1, 3 or 4)
    Py_ssize_t nn         # n * ns: unknowns per hemisphere
    Py_ssize_t nl         # moments used (l = 0 .. nl - 1)
    Py_ssize_t nk         # nl * ns: columns of a generalized-spherical-function table
    Py_ssize_t nlayer
    Py_ssize_t nsun


cdef struct VectorColumn:
    const double *tau          # [layer]
    const double *albedo       # [layer]
    const double *moments      # [layer][nl][6] expansion coefficients (lamina's order)
    const double *mu0          # [sun]
    const double *irradiance   # [sun]
    double surface_albedo


cdef struct VectorLayers:
    double *kr         # [layer][nn] real part of each mode's eigenvalue k
    double *ki         # [layer][nn] imaginary part (0 for a real eigenvalue)
    Py_ssize_t *partner    # [layer][nn] the other column of a complex pair (j if real)
    double *xp         # [layer][nn x nn] upward part of each mode, column j
    double *xm         # [layer][nn x nn] downward part
    double *wpp        # [layer][nn x nn] (w/2) w_j Z^m(mu_i, mu_j), 4 x 4 blocks
    double *wpm        # [layer][nn x nn] (w/2) w_j Z^m(mu_i, -mu_j)
    double *zp         # [layer][sun][2 nn] beam particular solution at the layer top
    double *ttop       # [layer][sun] beam transmittance to the layer top
    double *eb         # [layer][sun] exp(-tau / mu0) across the layer
    double *coef       # [sun][2 nn layer] boundary-value solution (C, D per layer)


cdef struct VectorScratch:
    double *pp        # [nn x nk] generalized spherical functions at +mu (see pi_table)
    double *pm        # [nn x nk] at -mu
    double *p0        # [nk] at -mu0 (one sun at a time)
    double *bt        # [nk x nn] B Pi(+mu)^T
    double *btm       # [nk x nn] B Pi(-mu)^T
    double *bq        # [nk] B Pi(-mu0) e1
    double *dtab      # [3 nl] d^l_m0, d^l_m2, d^l_m,-2 at one cosine
    double *apb       # [nn x nn] A + B D, LU-factored
    double *amb       # [nn x nn] A - B D
    double *gg        # [nn x nn] the reduced eigen-matrix
    double *tmp       # [nn x nn]
    double *vr        # [nn x nn] its eigenvectors
    double *xs        # [nn x nn] (A + B D)^-1 M vr
    double *wr        # [nn]
    double *wi        # [nn]
    double *big       # [2 nn x 2 nn] the particular solution's system
    double *rhs       # [2 nn]
    double *cs        # [nn] mode factor of the column itself (mode_factors)
    double *cp        # [nn] mode factor of its partner
    double *cs2       # [nn] the same at a second depth
    double *cp2       # [nn]
    double *refl      # [n] Lambertian reflection weights 2 A w_j mu_j (term 0)
    double *mu0e      # [sun] the sun cosines used by this term (resonance shift)
    double *field     # [sun][layer + 1][2 nn] the term's Stokes vectors at the levels
    double *work
    lapack_int lwork
    lapack_int *ipiv  # [max(2 nn, 2 nn layer)]
    double *ab        # band matrix
    lapack_int ldab
    lapack_int kl


cdef inline double stokes_sign(Py_ssize_t s) noexcept nogil:
    """D = diag(1, 1, -1, -1): the sign of component s under mu -> -mu."""
    return -1.0 if s >= 2 else 1.0


cdef inline void mode_factors(VectorSizes *sz, VectorLayers *ly, Py_ssize_t layer, double t,
                              double *cs, double *cp) noexcept nogil:
    """Factors of column j and of its partner in F_j(t) (vector_common's header)."""
    cdef Py_ssize_t nn = sz.nn, j
    cdef const double *kr = ly.kr + layer * nn
    cdef const double *ki = ly.ki + layer * nn
    cdef const Py_ssize_t *partner = ly.partner + layer * nn
    cdef double e
    for j in range(nn):
        e = exp(-kr[j] * t)
        if ki[j] == 0.0:
            cs[j] = e
            cp[j] = 0.0
        else:
            cs[j] = e * cos(ki[j] * t)
            cp[j] = e * sin(ki[j] * t)
            if partner[j] < j:
                cp[j] = -cp[j]


cdef inline double mode_value(const double *x, Py_ssize_t nn, Py_ssize_t r, Py_ssize_t j,
                              Py_ssize_t p, double cs, double cp) noexcept nogil:
    """Component r of column j's mode: cs x[r, j] + cp x[r, p] (p its partner)."""
    return cs * x[r + j * nn] + cp * x[r + p * nn]
