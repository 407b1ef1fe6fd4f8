# cython: language_level=3
# The vector kernel's bottom room: status codes, structs and inline helpers shared by
# ``vector_layers``, ``vector_boundary`` and ``vector_driver`` (the Stokes-vector
# discrete-ordinate solution; see vector_layers.pyx for the method). Declarations and
# ``cdef inline`` helpers only, so nothing here needs a compiled module of its own.
#
# Layout: a Fourier term's Stokes vectors at the quadrature cosines of one hemisphere are
# ``nn = n * ns`` numbers, index r = i * ns + s (cosine i, Stokes component s). Each mode j
# of a layer is kept as its sum and difference vectors S_j = X+ + D X-, Dif_j = X+ - D X-
# (D = diag(1, 1, -1, -1) on each Stokes vector): the mode decaying downward is
# F_j(t) = ((S + Dif) / 2, D (S - Dif) / 2) exp(-k t) (t the depth below the layer top),
# its mirror image F'_j = ((S - Dif) / 2, D (S + Dif) / 2) exp(-k (tau - t)) decays upward
# from the layer bottom.
#
# A real eigenvalue: the unknowns of the boundary-value problem are the coefficients of
# F_j + F'_j and F_j - F'_j (not of F_j and F'_j), built from S and Dif with
# (e + e') / 2 and (e - e') / 2, e = exp(-k t), e' = exp(-k (tau - t)), the latter through
# expm1. For the slow diffusion mode of a nearly conservative term 0 (k ~ 1e-6) F_j and F'_j
# differ by O(k) and their coefficients would be O(1 / k) and cancel, losing eps / k of the
# field (1e-2 relative in a layer of optical thickness 1e-8); in this basis no coefficient
# is large and nothing cancels.
#
# A complex pair k = kr + i ki (ki > 0) keeps Re S, Re Dif in column j and Im S, Im Dif in
# column j + 1 = partner[j] (partner[j + 1] = j), and the two real solutions
# Re(x exp(-k t)) = exp(-kr t) (Re x cos(ki t) + Im x sin(ki t)) and Im(x exp(-k t)) =
# exp(-kr t) (Im x cos(ki t) - Re x sin(ki t)) (Siewert 2000), for F_j and F'_j separately:
# every exponential is <= 1.

from libc.math cimport cos, exp, expm1, sin

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
    Py_ssize_t nvz        # view cosines (0: quadrature cosines only)
    Py_ssize_t npos       # output positions (layer, fraction of its optical thickness)


cdef struct VectorColumn:
    const double *tau          # [layer]
    const double *albedo       # [layer]
    const double *moments      # [layer][nl][6] expansion coefficients (lamina's order)
    const double *mu0          # [sun]
    const double *irradiance   # [sun]
    double surface_albedo
    double top_radiance        # isotropic unpolarized radiance falling on the top (term 0, I)
    const double *planck       # [layer + 1] Planck radiance at the levels (thermal only)
    double surface_planck      # Planck radiance of the surface's temperature
    bint thermal               # thermal emission in I of term 0 (layers and surface)


cdef struct VectorLayers:
    double *kr         # [layer][nn] real part of each mode's eigenvalue k
    double *ki         # [layer][nn] imaginary part (0 for a real eigenvalue)
    Py_ssize_t *partner    # [layer][nn] the other column of a complex pair (j if real)
    double *ss         # [layer][nn x nn] sum vector S of each mode, column j
    double *dd         # [layer][nn x nn] difference vector Dif
    double *wpp        # [layer][nn x nn] (w/2) w_j Z^m(mu_i, mu_j), 4 x 4 blocks
    double *wpm        # [layer][nn x nn] (w/2) w_j Z^m(mu_i, -mu_j)
    double *zp         # [layer][sun][2 nn] beam particular solution at the layer top
    double *ttop       # [layer][sun] beam transmittance to the layer top
    double *eb         # [layer][sun] exp(-tau / mu0) across the layer
    double *coef       # [sun][2 nn layer] boundary-value solution (C, D per layer)
    # thermal emission (term 0): the Planck source B0 + B1 t of each layer (t the depth
    # below its top) and y+ = (A + B D)^-1 (mu_i in the I rows); the particular solution
    # is (B0 + B1 t) e1 + B1 (y+, -D y+) (``thermal_value``)
    double *b0         # [layer]
    double *b1         # [layer]
    double *yth        # [layer][nn]


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
    # view cosines (vector_sources)
    const double *umu  # [nvz]
    double *pvu       # [nvz ns x nk] Pi at +mu_u
    double *pvd       # [nvz ns x nk] Pi at -mu_u
    double *zv        # [nvz ns x nn] Z^m between view and quadrature cosines (scratch)
    double *hup       # [nvz ns x 2 nn] (w/2) w_j (Z^m(mu_u, mu_j) | Z^m(mu_u, -mu_j))
    double *hdn       # [nvz ns x 2 nn] the same for the downward view -mu_u
    double *fmat      # [2 nn x nn] the modes' vectors F_j at exponent 0, column j
    double *fmir      # [2 nn x nn] their mirror images F'_j
    double *hf        # [4][nvz ns x nn] hup fmat, hup fmir, hdn fmat, hdn fmir
    double *hz        # [2][nvz ns] the beam's source at the view cosines, up and down
    double *srcu      # [layer][sun][nvz ns] a layer's source integrated to its top
    double *srcd      # [layer][sun][nvz ns] integrated to its bottom
    double *vfield    # [sun][level][2][nvz ns] the term's Stokes vectors at the views
    # output positions
    const Py_ssize_t *player   # [pos] layer of each position
    const double *pfrac        # [pos] its fraction of the layer's optical thickness
    double *pfield    # [sun][pos][2 nn] the term's Stokes vectors at the quadrature cosines
    double *psrcu     # [pos][sun][nvz ns] source integrated from the layer bottom up to it
    double *psrcd     # [pos][sun][nvz ns] from the layer top down to it
    double *vpos      # [sun][pos][2][nvz ns] the term's Stokes vectors at the views
    double *thv       # [4][nvz ns] a layer's thermal source a + c t at the views (a, c up; down)
    Py_ssize_t mode   # the Fourier term being solved
    double *work
    lapack_int lwork
    lapack_int *ipiv  # [max(2 nn, 2 nn layer)]
    double *ab        # band matrix
    lapack_int ldab
    lapack_int kl


cdef inline double stokes_sign(Py_ssize_t s) noexcept nogil:
    """D = diag(1, 1, -1, -1): the sign of component s under mu -> -mu."""
    return -1.0 if s >= 2 else 1.0


cdef inline double thermal_value(VectorSizes *sz, VectorLayers *ly, Py_ssize_t layer,
                                 Py_ssize_t c, double t) noexcept nogil:
    """Component c (0 .. 2 nn - 1, up then down) of a layer's thermal particular solution.

    (B0 + B1 t) e1 + B1 (y+, -D y+) at depth t below the layer top (see VectorLayers).
    """
    cdef Py_ssize_t r = c if c < sz.nn else c - sz.nn
    cdef double b1 = ly.b1[layer], y = ly.yth[layer * sz.nn + r]
    cdef double value = b1 * y if c < sz.nn else -stokes_sign(r % sz.ns) * b1 * y
    if r % sz.ns == 0:
        value = value + ly.b0[layer] + b1 * t
    return value


cdef inline void mode_factors(VectorSizes *sz, VectorLayers *ly, Py_ssize_t layer, double t,
                              double tau, double *cs, double *cp, double *cs2,
                              double *cp2) noexcept nogil:
    """Factors of the modes at depth t of a layer of thickness tau (see the header).

    Real mode j: cs = (e + e') / 2, cp = (e - e') / 2. Complex: (cs, cp) the factors of
    column j and of its partner in F_j(t), (cs2, cp2) the same in F'_j (at tau - t).
    """
    cdef Py_ssize_t nn = sz.nn, j
    cdef const double *kr = ly.kr + layer * nn
    cdef const double *ki = ly.ki + layer * nn
    cdef const Py_ssize_t *partner = ly.partner + layer * nn
    cdef double e, e2, half_gap
    for j in range(nn):
        e = exp(-kr[j] * t)
        e2 = exp(-kr[j] * (tau - t))
        if ki[j] == 0.0:
            # e - e2 without cancellation
            if t <= tau - t:
                half_gap = -0.5 * e * expm1(-kr[j] * (tau - 2.0 * t))
            else:
                half_gap = 0.5 * e2 * expm1(-kr[j] * (2.0 * t - tau))
            cs[j] = 0.5 * (e + e2)
            cp[j] = half_gap
            cs2[j] = 0.0
            cp2[j] = 0.0
        else:
            cs[j] = e * cos(ki[j] * t)
            cp[j] = e * sin(ki[j] * t)
            cs2[j] = e2 * cos(ki[j] * (tau - t))
            cp2[j] = e2 * sin(ki[j] * (tau - t))
            if partner[j] < j:
                cp[j] = -cp[j]
                cp2[j] = -cp2[j]


cdef inline double basis_value(VectorSizes *sz, VectorLayers *ly, Py_ssize_t layer,
                               Py_ssize_t c, Py_ssize_t j, bint second, const double *cs,
                               const double *cp, const double *cs2,
                               const double *cp2) noexcept nogil:
    """Component c (0 .. 2 nn - 1, up then down) of unknown j's (``second``: nn + j's) column.

    Real mode: F_j + F'_j, or F_j - F'_j when ``second``; complex: F_j, or F'_j. The
    factors come from ``mode_factors`` at the same depth.
    """
    cdef Py_ssize_t nn = sz.nn, p = ly.partner[layer * nn + j], r = c if c < nn else c - nn
    cdef const double *ss = ly.ss + layer * nn * nn
    cdef const double *dd = ly.dd + layer * nn * nn
    cdef double sign = stokes_sign(r % sz.ns), s_j = ss[r + j * nn], d_j = dd[r + j * nn]
    cdef double plus, minus
    if ly.ki[layer * nn + j] == 0.0:
        if not second:
            return s_j * cs[j] + d_j * cp[j] if c < nn else sign * (s_j * cs[j] - d_j * cp[j])
        return s_j * cp[j] + d_j * cs[j] if c < nn else sign * (s_j * cp[j] - d_j * cs[j])
    if not second:
        plus = (s_j + d_j) * cs[j] + (ss[r + p * nn] + dd[r + p * nn]) * cp[j]
        minus = (s_j - d_j) * cs[j] + (ss[r + p * nn] - dd[r + p * nn]) * cp[j]
        return 0.5 * plus if c < nn else 0.5 * sign * minus
    minus = (s_j - d_j) * cs2[j] + (ss[r + p * nn] - dd[r + p * nn]) * cp2[j]
    plus = (s_j + d_j) * cs2[j] + (ss[r + p * nn] + dd[r + p * nn]) * cp2[j]
    return 0.5 * minus if c < nn else 0.5 * sign * plus
