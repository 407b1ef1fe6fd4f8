# cython: language_level=3
# The kernel's bottom room: constants, status codes, the shared structs and the inline helpers.
#
# The stage modules ``layers``, ``boundary`` and ``sources`` cimport this file and nothing else
# of the kernel's, so they never import one another; ``driver`` cimports this file and the
# stages' entry points (their .pxd files). Everything here is
# ``cdef inline`` and defined in this file, so each stage compiles its own copy of the helpers
# into its innermost loops (no call across modules there). Nothing here needs a compiled
# module of its own.
#
# Methods: the continuous exponential difference ``dexp`` and its cached forms are the
# analytic layer integrals of the source function (Stamnes and Swanson 1981; Thomas and
# Stamnes 1999), written so that the removable singularities mu = 1/k and mu = mu0 cost
# nothing; ``legendre_table`` is the three-term recurrence in degree for the normalised
# associated Legendre functions, without the Condon-Shortley phase.
#

from libc.math cimport exp, expm1, fabs, sqrt

from lamina._kernel._lapack_int cimport lapack_int

cdef extern from *:
    """
    /* compile-time constants shared by every kernel module */
    #define lamina_pi 3.14159265358979323846
    #define lamina_conservative_gap 1e-12
    #define lamina_resonance_gap 1e-8
    #define lamina_cached_x 0.5
    """
    const double PI "lamina_pi"
    # the albedo is capped at 1 - CONSERVATIVE_GAP (module docstring of ``driver``)
    const double C_CONSERVATIVE_GAP "lamina_conservative_gap"
    # mu0 k is kept this far from 1 in every layer (module docstring of ``layers``)
    const double C_RESONANCE_GAP "lamina_resonance_gap"
    # Above this x, 1 - exp(-x) comes from cached exponentials instead of expm1: it is
    # >= 0.39, so the product or quotient of two exponentials (relative error 2 eps) costs
    # at most 3 eps relative, and no call to expm1.
    const double C_CACHED_X "lamina_cached_x"

# Failure codes written to ``status[column, 0]``; ``driver.STATUS_NAMES`` describes them.
cdef enum:
    STATUS_DIFFERENCE_CHOLESKY = 1
    STATUS_SUM_CHOLESKY = 2
    STATUS_SINGULAR_VALUES = 3
    STATUS_BAND_FACTOR = 5
    STATUS_BAND_SOLVE = 6
    STATUS_NOT_FINITE = 9


cdef struct Sizes:
    Py_ssize_t n          # quadrature cosines per hemisphere
    Py_ssize_t nl         # Legendre terms used (2 n)
    Py_ssize_t nlayer
    Py_ssize_t nsun
    Py_ssize_t npos
    Py_ssize_t nvz
    Py_ssize_t nva


cdef struct Column:
    # the inputs of the column being solved (rows of the caller's arrays)
    const double *tau           # [layer] optical thickness (delta-M scaled)
    const double *albedo        # [layer] single-scattering albedo
    const double *moments       # [layer][nl] phase moments chi_l
    const double *mu0           # [sun] sun cosines
    const double *irradiance    # [sun]
    const double *planck        # [layer + 1] Planck radiance at the levels
    double surface_albedo
    double surface_planck
    double top_radiance
    bint thermal
    # a bidirectional surface (boundary.surface_reflection); Lambertian when False
    bint bidirectional
    Py_ssize_t surface_terms            # Fourier terms of the BRDF given
    const double *brdf_quadrature       # [term][n reflected][n incident] f_m(mu_i, mu_j)
    const double *brdf_beam             # [sun][term][n] f_m(mu_i, mu0)
    const double *brdf_view             # [term][nvz][n] f_m(mu_u, mu_j)
    const double *brdf_view_beam        # [sun][nvz][nva] f(mu_u, mu0, phi), exact
    const double *emissivity_quadrature     # [n] 1 - directional albedo at mu_i
    const double *emissivity_view           # [nvz] at mu_u
    # a pseudo-spherical beam (layers.beam_geometry); NULL for the plane-parallel beam
    const double *beam_slant    # [sun][layer + 1] slant optical depth to each level
    const double *beam_cosine   # [sun][layer] effective beam cosine of each layer


cdef struct Grid:
    # quadrature, view angles and output positions (the same for every column)
    double *mu                  # [n] quadrature cosines
    double *wq                  # [n] weights
    double *sqw                 # [n] their square roots
    const double *umu           # [nvz] view cosines (NULL when there are none)
    const double *phi           # [nva] view azimuths
    const Py_ssize_t *position_layer      # [pos]
    const double *position_fraction       # [pos]


cdef struct Layers:
    # eigen-solution of one Fourier term, all layers (column-major n x n blocks)
    double *k          # [layer][n]
    double *gp         # [layer][n x n] upward part of each mode, column = mode
    double *gm         # [layer][n x n] downward part
    double *ss         # [layer][n x n] R^-1 U: sum vectors, one column per mode
    double *tt         # [layer][n x n] L^-T V: minus the difference vectors (T T^T = Emat^-1)
    double *zp         # [layer][sun][n] beam particular solution at the layer top, up
    double *zm         # [layer][sun][n] down
    double *y0p        # [layer][n] thermal particular solution at the layer top, up
    double *y0m        # [layer][n] down
    double *b0         # [layer] Planck radiance at the layer top
    double *b1         # [layer] its slope in (scaled) optical depth
    double *ttop       # [layer][sun] beam transmittance to the layer top
    double *ek         # [layer][n] exp(-k tau) of each mode across its layer
    double *eb         # [layer][sun] exp(-tau / mu0), the beam across each layer
    double *coef       # [sun][2 n layer] boundary-value solution (C_k, D_k per layer)


cdef struct Scratch:
    double *aw        # [nl x n] Legendre table at quadrature, times sqrt(weight)
    double *lq        # [nl x n] Legendre table at quadrature
    double *lu        # [nl x nvz] Legendre table at user cosines
    double *l0        # [nl x nsun] Legendre table at sun cosines
    double *ce        # [nl] even-parity phase coefficients of a layer (points into ceall)
    double *co        # [nl] odd-parity (into coall)
    double *ceall     # [layer][nl] even-parity coefficients of every layer
    double *coall     # [layer][nl]
    double *tall      # [layer][2 n][nl] diag(c) Aw of every layer, even then odd
    double *kall      # [layer][2 n][n] K_even and K_odd of every layer
    double *tmp       # [2 nl] scratch of user_sources
    double *rf        # [n x n] upper Cholesky factor of Dmat (of the layer being solved)
    double *lf        # [n x n] lower Cholesky factor of Emat
    double *uu        # [n x n] left singular vectors of Z
    double *vt        # [n x n] right singular vectors of Z, transposed
    double *zz        # [n x n]
    double *vec1      # [n]
    double *vec2      # [n]
    double *vec3      # [n]
    double *work      # LAPACK work
    lapack_int lwork
    double *ab        # band matrix
    lapack_int *ipiv
    lapack_int ldab
    lapack_int kl
    double *mu0e      # [sun] mu0 used for this Fourier term (resonance shift)
    # [layer][sun] the beam's cosine in each layer for this term (the attenuation rate of its
    # source: mu0e, or the pseudo-spherical layer's own)
    double *mu0l
    double *surfbeam  # [sun] the surface's reflection of the direct beam, this term
    double *refl      # [n] surface reflection weights of this term (boundary.surface_reflection)
    # a bidirectional surface, this term (boundary.surface_reflection)
    double *reflm     # [n x n] R_ij = 2 pi w_j mu_j f_m(mu_i, mu_j), row i
    double *reflv     # [nvz x n] the same at the view cosines, row u
    double *beamq     # [sun][n] the direct beam's reflection into mu_i
    double *downq     # [n] downward quadrature radiance at the surface
    # user angles
    double *pup       # [nvz x n] (w/2) w_j p(mu_u, mu_j)
    double *pum       # [nvz x n] (w/2) w_j p(mu_u, -mu_j)
    double *hA        # [layer][nvz x n]
    double *hB        # [layer][nvz x n]
    double *zuA       # [layer][sun][nvz]
    double *zuB       # [layer][sun][nvz]
    double *s0A       # [layer][nvz]
    double *s0B       # [layer][nvz]
    double *iup       # [layer + 1][sun][nvz] upward user radiance at levels
    double *idn       # [layer + 1][sun][nvz]
    double *radm      # [sun][pos][2][nvz] radiance of this Fourier term
    double *e1        # [n] exp(-k dt1) at one output position
    double *e2        # [n] exp(-k dt2)
    double *ones      # [n] all 1.0 (exp(-k 0))
    double *eu        # [layer][nvz] exp(-tau / mu), a layer's transmittance along a view
    double *et        # [layer][nvz] exp(-tau * (1 / mu)), the same as the thermal term has it
    double *dA        # [layer][nvz][n] dexp(0, k + 1/mu, tau) (shared by up and down)
    double *dB        # [layer][nvz][n] dexp(1/mu, k, tau)
    double *cosm      # [nva] cos(m phi) of this Fourier term
    double *acc       # [2 n] partial sums
    double *bA        # [layer][sun][nvz] dexp(0, 1/mu0 + 1/mu, tau)
    double *bB        # [layer][sun][nvz] dexp(1/mu, 1/mu0, tau)
    double *mu0done   # [sun] the mu0 that ttop, eb (and bA, bB if beamdone) were made with
    double *beamdone  # [sun] 1 when bA, bB hold


cdef inline void planck_line(double w, double depth, double top, double bottom, double kmin,
                             double *b0, double *b1) noexcept nogil:
    """The Planck source B0 + B1 t of a layer, or its mean where the slope is unresolvable.

    The linear part of the particular solution is cancelled through the layer's slowest mode
    (decay rate ``kmin``), with a round-off error of about eps |B1| / k_min; replacing the
    source by its mean changes the emission by about (1 - w) |B1| depth^2 / 12. The mean is
    used where it is the smaller error, (1 - w) depth^2 k_min < 12 eps.
    """
    if (1.0 - w) * depth * depth * kmin < 12.0 * 2.220446049250313e-16:
        b0[0] = 0.5 * (top + bottom)
        b1[0] = 0.0
    else:
        b0[0] = top
        b1[0] = (bottom - top) / depth


cdef inline double dexp(double a, double b, double length) noexcept nogil:
    """(exp(-a L) - exp(-b L)) / (b - a) for a, b >= 0, continuous at a == b (L exp(-a L))."""
    cdef double low = a if a < b else b
    cdef double x = fabs(b - a) * length
    cdef double ratio = 1.0
    if x > 0.0:
        ratio = -expm1(-x) / x
    return exp(-low * length) * length * ratio


cdef inline double dexp_from_zero(double b, double length, double exp_bl) noexcept nogil:
    """dexp(0, b, length) for b > 0, given exp_bl = exp(-b length) to a few ulp."""
    cdef double x = b * length
    if x > C_CACHED_X:
        return (1.0 - exp_bl) / b
    if x > 0.0:
        return length * (-expm1(-x) / x)
    return length


cdef inline double dexp_cached(double a, double b, double length, double exp_a,
                               double exp_b) noexcept nogil:
    """dexp(a, b, length) given exp(-a length) and exp(-b length)."""
    cdef double x = fabs(b - a) * length
    cdef double low = exp_a if a < b else exp_b
    cdef double high = exp_b if a < b else exp_a
    if x > C_CACHED_X and low > 1e-200:
        return (low - high) / fabs(b - a)
    if x > 0.0:
        return low * length * (-expm1(-x) / x)
    return low * length


cdef inline void column_dots(const double *a, Py_ssize_t step_sum, Py_ssize_t step_out,
                             const double *x, Py_ssize_t count, Py_ssize_t nout,
                             double *out) noexcept nogil:
    """out[j] = sum_i a[i step_sum + j step_out] x[i], i = 0 .. count - 1, j < nout.

    Each sum runs in order of i, exactly as a plain loop would (the same rounding), but four
    sums advance side by side so that they do not wait on one another's additions.
    ``out`` must not overlap ``a`` or ``x``.
    """
    cdef Py_ssize_t i, j = 0
    cdef double s0, s1, s2, s3, xi
    cdef const double *a0
    while j + 4 <= nout:
        s0 = 0.0
        s1 = 0.0
        s2 = 0.0
        s3 = 0.0
        a0 = a + j * step_out
        for i in range(count):
            xi = x[i]
            s0 = s0 + a0[i * step_sum] * xi
            s1 = s1 + a0[i * step_sum + step_out] * xi
            s2 = s2 + a0[i * step_sum + 2 * step_out] * xi
            s3 = s3 + a0[i * step_sum + 3 * step_out] * xi
        out[j] = s0
        out[j + 1] = s1
        out[j + 2] = s2
        out[j + 3] = s3
        j = j + 4
    while j < nout:
        s0 = 0.0
        a0 = a + j * step_out
        for i in range(count):
            s0 = s0 + a0[i * step_sum] * x[i]
        out[j] = s0
        j = j + 1


cdef inline void legendre_table(Py_ssize_t m, Py_ssize_t nl, const double *x, Py_ssize_t nx,
                                double *out) noexcept nogil:
    """Normalised associated Legendre functions sqrt((l-m)!/(l+m)!) P_l^m(x).

    ``out[l + i * nl]`` for l in [0, nl), point i; zero for l < m. No Condon-Shortley phase
    (only products of two functions of the same order appear).
    """
    cdef Py_ssize_t i, l
    cdef double xi, s, pmm, p0, p1, p2
    for i in range(nx):
        xi = x[i]
        for l in range(nl):
            out[l + i * nl] = 0.0
        if m >= nl:
            continue
        s = sqrt(max(0.0, (1.0 - xi) * (1.0 + xi)))
        pmm = 1.0
        for l in range(1, m + 1):
            pmm = pmm * sqrt((2.0 * l - 1.0) / (2.0 * l)) * s
        out[m + i * nl] = pmm
        if m + 1 < nl:
            p0 = pmm
            p1 = sqrt(2.0 * m + 1.0) * xi * pmm
            out[m + 1 + i * nl] = p1
            for l in range(m + 2, nl):
                p2 = ((2.0 * l - 1.0) * xi * p1
                      - sqrt((l - 1.0) * (l - 1.0) - m * m) * p0) / sqrt(l * l - <double>(m * m))
                out[l + i * nl] = p2
                p0 = p1
                p1 = p2


cdef inline double spherical_ground_beam(Sizes *sz, Column *cl, Py_ssize_t sun) noexcept nogil:
    """Pseudo-spherical beam: mu0 exp(-slant optical depth to the ground), 0 below the horizon.

    (The plane-parallel callers keep their own mu0 exp(-tau_total / mu0).)
    """
    return max(cl.mu0[sun], 0.0) * exp(-cl.beam_slant[sun * (sz.nlayer + 1) + sz.nlayer])


cdef inline double particular_at(Sizes *sz, Layers *ly, Py_ssize_t layer, Py_ssize_t sun,
                                 Py_ssize_t i, bint up, double dt, double beam,
                                 bint thermal) noexcept nogil:
    """Particular (beam + thermal) quadrature radiance at depth dt below a layer's top.

    ``beam`` = exp(-dt / mu0), the beam's attenuation from the layer top (computed once by
    the caller for all quadrature cosines).
    """
    cdef Py_ssize_t n = sz.n
    cdef double value
    if up:
        value = ly.zp[(layer * sz.nsun + sun) * n + i] * beam
        if thermal:
            value = value + ly.y0p[layer * n + i] + ly.b1[layer] * dt
    else:
        value = ly.zm[(layer * sz.nsun + sun) * n + i] * beam
        if thermal:
            value = value + ly.y0m[layer * n + i] + ly.b1[layer] * dt
    return value


cdef inline double quadrature_radiance(Sizes *sz, Layers *ly, Py_ssize_t layer,
                                       Py_ssize_t sun, Py_ssize_t i, bint up, double dt1,
                                       double beam, const double *e1, const double *e2,
                                       bint thermal) noexcept nogil:
    """Quadrature radiance of the solved Fourier term at depth dt1 below the layer top.

    The exponentials are the caller's, computed once per position: ``beam`` = exp(-dt1/mu0),
    ``e1[k]`` = exp(-k dt1), ``e2[k]`` = exp(-k dt2) with dt2 the height above the bottom.
    """
    cdef Py_ssize_t n = sz.n, kk
    cdef double *gp = ly.gp + layer * n * n
    cdef double *gm = ly.gm + layer * n * n
    cdef double *coef = ly.coef + sun * 2 * n * sz.nlayer + 2 * n * layer
    cdef double value = particular_at(sz, ly, layer, sun, i, up, dt1, beam, thermal)
    if up:
        for kk in range(n):
            value = value + coef[kk] * gp[i + kk * n] * e1[kk] \
                + coef[n + kk] * gm[i + kk * n] * e2[kk]
    else:
        for kk in range(n):
            value = value + coef[kk] * gm[i + kk * n] * e1[kk] \
                + coef[n + kk] * gp[i + kk * n] * e2[kk]
    return value
