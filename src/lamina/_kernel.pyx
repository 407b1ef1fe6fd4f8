# cython: language_level=3, boundscheck=False, wraparound=False, cdivision=True
# cython: initializedcheck=False
"""Discrete-ordinates core: many columns, all Fourier terms, no GIL.

Computation only. The Python wrapper (``lamina.solve``) validates every input, applies
delta-M scaling, allocates the outputs and calls :func:`solve_columns`.

Method (published; the derivations are in Stamnes and Swanson 1981 and Thomas and Stamnes
1999, the symmetric reduction in Nakajima and Tanaka 1986):

* Radiances are expanded in azimuth, I = sum_m I^m(t, mu) cos(m phi), phi measured from the
  azimuth of the beam's propagation. Each Fourier term is solved with double-Gauss quadrature
  (``n`` cosines per hemisphere).
* Homogeneous problem: with sums S = I+ + I- and differences D = I+ - I- (weights folded in
  symmetrically) the 2n x 2n system becomes M D' = Dmat S, M S' = Emat D with symmetric
  Dmat = I - w K_even and Emat = I - w K_odd. With Cholesky factors Dmat = R^T R and
  Emat = L L^T, the eigenvalues k are the singular values of Z = R M^-1 L. Singular values
  carry an absolute error of eps * max(k) rather than eps * max(k)^2 (as the eigenvalues k^2
  of a product would), which keeps the slowly decaying diffusion mode of a nearly
  conservative layer accurate.
* Conservative scattering: the albedo is capped at 1 - CONSERVATIVE_GAP (1e-12). The
  resulting absorption is about 1e-12 times the optical thickness times a number of order
  one, below 1e-9 of the incident flux up to optical thickness 100 (tested).
* Particular solutions: the beam term is expanded in the singular vectors, so that it costs
  O(n^2) and its resonance (mu0 * k = 1) is explicit (the layer's R^-1 U and L^-T V, kept
  from the eigen-solution, carry it in and out of the singular bases, so that a sun angle
  costs four matrix-vector products and no triangular solve); when mu0 * k comes within
  RESONANCE_GAP of 1 in any layer, mu0 is shifted by 2 * RESONANCE_GAP (relative) for that
  Fourier term, which bounds both the round-off amplification and the shift error by about
  1e-8. The Planck source linear in optical depth has a closed-form particular solution.
* Boundary-value problem: each homogeneous term is referred to the boundary it decays away
  from, so every exponential is <= 1 and any thickness works; the block-banded system is
  solved by banded LU (dgbtrf/dgbtrs), one factorisation for all sun angles.
* Radiances at arbitrary angles come from integrating the source function analytically
  through each layer; the removable singularities (mu = 1/k, mu = mu0) are evaluated through
  ``dexp`` which is continuous across them.

Speed (``benchmarks/run.py`` measures it against the bare LAPACK calls): per Fourier term
and layer the unavoidable work is two dpotrf and one dgesvd of n x n matrices, and per term
one dgbtrf of the 2 n L system. Everything else is kept small beside it: K_even and K_odd
of all layers come from one dgemm per term; every exponential of a mode or of the beam
across a layer is computed once per term (``ek``, ``eb``) and those along the view
directions once per column (``eu``, ``et``), the beam's layer integrals once per column
unless the resonance shift moves mu0; integrals across whole layers reuse those cached
exponentials where 1 - exp(-x) is not small; output positions on a level reuse the level
values; the exact Fourier convergence measure is only evaluated when some output moved by
more than the tolerance. No call here may hand work to OpenBLAS's thread pool for small
matrices (its dtrtrs always does, hence dtrsm; the batched dgemm stays under the threading
threshold): the kernel runs in dask's or the caller's threads, and a nested pool only
oversubscribes the cores. The triangular factors of nearly conservative layers are
ill-conditioned (about 1e6), so even reordering a sum moves the outputs by up to 1e-10 of
the incident flux: a change for speed is checked against the previous build on
conservative stacks (energy conservation, the validation suite), not only on the tests'
tolerances.
"""

from libc.math cimport cos, exp, expm1, fabs, isfinite, sqrt
from libc.string cimport memcpy
from scipy.linalg.cython_blas cimport dgemm, dtrmm, dtrsm, dtrsv
from scipy.linalg.cython_lapack cimport dgbtrf, dgbtrs, dgesvd, dpotrf

from lamina._lapack_int cimport lapack_int

import numpy as np

cdef double PI = 3.14159265358979323846
CONSERVATIVE_GAP = 1e-12
RESONANCE_GAP = 1e-8
cdef double C_CONSERVATIVE_GAP = 1e-12
cdef double C_RESONANCE_GAP = 1e-8

# Failure codes written to ``status[column, 0]``; the wrapper turns them into messages.
STATUS_NAMES = {
    1: "Cholesky factorisation of the difference matrix (dpotrf)",
    2: "Cholesky factorisation of the sum matrix (dpotrf)",
    3: "singular value decomposition (dgesvd)",
    5: "banded LU factorisation of the boundary-value problem (dgbtrf)",
    6: "banded solve of the boundary-value problem (dgbtrs)",
    9: "non-finite result",
}


cdef inline double dexp(double a, double b, double length) noexcept nogil:
    """(exp(-a L) - exp(-b L)) / (b - a) for a, b >= 0, continuous at a == b (L exp(-a L))."""
    cdef double low = a if a < b else b
    cdef double x = fabs(b - a) * length
    cdef double ratio = 1.0
    if x > 0.0:
        ratio = -expm1(-x) / x
    return exp(-low * length) * length * ratio


# Above this x, 1 - exp(-x) comes from cached exponentials instead of expm1: it is >= 0.39,
# so the product or quotient of two exponentials (relative error 2 eps) costs at most
# 3 eps relative, and no call to expm1.
cdef double C_CACHED_X = 0.5


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


cdef void legendre_table(Py_ssize_t m, Py_ssize_t nl, const double *x, Py_ssize_t nx,
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


cdef struct Sizes:
    Py_ssize_t n          # quadrature cosines per hemisphere
    Py_ssize_t nl         # Legendre terms used (2 n)
    Py_ssize_t nlayer
    Py_ssize_t nsun
    Py_ssize_t npos
    Py_ssize_t nvz
    Py_ssize_t nva


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
    double *surfbeam  # [sun]
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


cdef inline void set_status(long long[:, ::1] status, Py_ssize_t col, long long code,
                            Py_ssize_t layer, Py_ssize_t mode, long long info) noexcept nogil:
    status[col, 0] = code
    status[col, 1] = layer
    status[col, 2] = mode
    status[col, 3] = info


cdef void scattering_matrices(Sizes *sz, Scratch *sc, Py_ssize_t mode,
                              const double *moments) noexcept nogil:
    """Phase coefficients of every layer by parity, and K_even, K_odd of all layers at once.

    ``moments`` [layer][nl]. (2l + 1) chi_l for l >= m goes to ``ceall`` when l + m is even
    and to ``coall`` when odd; K = Aw^T diag(c) Aw of every layer comes from one dgemm
    (per-call overhead dominates 8 x 8 products) into ``kall`` [layer][even | odd][n x n].
    """
    cdef Py_ssize_t n = sz.n, nl = sz.nl, layer, j, l, group
    cdef lapack_int ni = <lapack_int>n, ldi = <lapack_int>nl, nli, ncols
    cdef double one = 1.0, zero = 0.0
    cdef double *ce
    cdef double *co
    cdef char trans_n = b'N', trans_t = b'T'
    for layer in range(sz.nlayer):
        ce = sc.ceall + layer * nl
        co = sc.coall + layer * nl
        for l in range(nl):
            ce[l] = 0.0
            co[l] = 0.0
            if l >= mode:
                if (l + mode) % 2 == 0:
                    ce[l] = (2.0 * l + 1.0) * moments[layer * nl + l]
                else:
                    co[l] = (2.0 * l + 1.0) * moments[layer * nl + l]
        for j in range(n):
            for l in range(mode, nl):
                sc.tall[l + (2 * n * layer + j) * nl] = ce[l] * sc.aw[l + j * nl]
                sc.tall[l + (2 * n * layer + n + j) * nl] = co[l] * sc.aw[l + j * nl]
    # P_l^m vanishes for l < m: the sums start at l = m. In groups of layers small enough
    # (m n k <= 2^16) that OpenBLAS keeps the product on the calling thread: its thread pool
    # would only add hand-off cost here and compete with dask's worker threads.
    nli = <lapack_int>(nl - mode)
    group = max(1, 65536 // (2 * n * n * nl))
    layer = 0
    while layer < sz.nlayer:
        ncols = <lapack_int>(2 * n * min(group, sz.nlayer - layer))
        dgemm(&trans_t, &trans_n, &ni, &ncols, &nli, &one, sc.aw + mode, &ldi,
              sc.tall + 2 * n * nl * layer + mode, &ldi, &zero, sc.kall + 2 * n * n * layer,
              &ni)
        layer = layer + group


cdef int layer_eigen(Sizes *sz, Scratch *sc, Layers *ly, Py_ssize_t layer, double w,
                     const double *mu, const double *sqw, Py_ssize_t *failed_code,
                     lapack_int *failed_info) noexcept nogil:
    """Eigen-solution of one layer and Fourier term (after scattering_matrices).

    Leaves k, the normalised mode vectors gp, gm and, for the particular solutions, the
    unnormalised S = R^-1 U and T = L^-T V of the layer.
    """
    cdef Py_ssize_t n = sz.n, i, j, kk
    cdef lapack_int ni = <lapack_int>n, info = 0
    cdef double one = 1.0, big, s, d
    cdef double *kall = sc.kall + 2 * n * n * layer
    cdef double *rf = sc.rf
    cdef double *lf = sc.lf
    cdef double *uu = sc.uu
    cdef double *vt = sc.vt
    cdef double *ss = ly.ss + layer * n * n
    cdef double *tt = ly.tt + layer * n * n
    cdef double *gp = ly.gp + layer * n * n
    cdef double *gm = ly.gm + layer * n * n
    cdef double *kv = ly.k + layer * n
    cdef char uplo_u = b'U', uplo_l = b'L', trans_n = b'N', trans_t = b'T', diag_n = b'N'
    cdef char side_l = b'L', job_a = b'A'

    # K_even = Aw^T diag(ce) Aw and K_odd, from scattering_matrices
    for j in range(n):
        for i in range(n):
            rf[i + j * n] = -w * kall[i + j * n]
            lf[i + j * n] = -w * kall[i + (n + j) * n]
        rf[j + j * n] = rf[j + j * n] + 1.0
        lf[j + j * n] = lf[j + j * n] + 1.0
    dpotrf(&uplo_u, &ni, rf, &ni, &info)
    if info != 0:
        failed_code[0] = 1
        failed_info[0] = info
        return 1
    dpotrf(&uplo_l, &ni, lf, &ni, &info)
    if info != 0:
        failed_code[0] = 2
        failed_info[0] = info
        return 1
    # Z = R M^-1 L (dtrmm reads only the upper triangle of R; L's upper part is zeroed)
    for j in range(n):
        for i in range(j):
            sc.zz[i + j * n] = 0.0
        for i in range(j, n):
            sc.zz[i + j * n] = lf[i + j * n] / mu[i]
    dtrmm(&side_l, &uplo_u, &trans_n, &diag_n, &ni, &ni, &one, rf, &ni, sc.zz, &ni)
    dgesvd(&job_a, &job_a, &ni, &ni, sc.zz, &ni, kv, uu, &ni, vt, &ni, sc.work, &sc.lwork,
           &info)
    if info != 0:
        failed_code[0] = 3
        failed_info[0] = info
        return 1
    # sums S = R^-1 U and differences D = -L^-T V. BLAS dtrsm rather than LAPACK dtrtrs:
    # OpenBLAS runs its own dtrtrs on its thread pool even for 8 x 8 systems, and the
    # hand-off costs far more than the solve (and oversubscribes dask worker threads). The
    # factors come from a successful dpotrf, so their diagonals are positive (dtrtrs's only
    # extra is a check for an exactly zero diagonal). dtrsm reads only the triangle named.
    memcpy(ss, uu, n * n * sizeof(double))
    dtrsm(&side_l, &uplo_u, &trans_n, &diag_n, &ni, &ni, &one, rf, &ni, ss, &ni)
    for j in range(n):
        for i in range(n):
            tt[i + j * n] = vt[j + i * n]
    dtrsm(&side_l, &uplo_l, &trans_t, &diag_n, &ni, &ni, &one, lf, &ni, tt, &ni)
    for kk in range(n):
        big = 0.0
        for i in range(n):
            s = ss[i + kk * n]
            d = -tt[i + kk * n]
            gp[i + kk * n] = 0.5 * (s + d) / sqw[i]
            gm[i + kk * n] = 0.5 * (s - d) / sqw[i]
            big = max(big, max(fabs(gp[i + kk * n]), fabs(gm[i + kk * n])))
        # (divisions, not products with reciprocals: a zero-thickness layer must pass the
        # field on exactly, and a reciprocal's rounding spoils that by up to 1e-9 of the
        # flux in conservative stacks next to a steep Planck slope, found by the long
        # hypothesis profile)
        if big > 0.0:
            for i in range(n):
                gp[i + kk * n] /= big
                gm[i + kk * n] /= big
    return 0


cdef void beam_particular(Sizes *sz, Scratch *sc, Layers *ly, Py_ssize_t layer,
                          Py_ssize_t mode, Py_ssize_t sun, double amplitude, double mu0,
                          const double *sqw) noexcept nogil:
    """Particular solution Z e^{-(t - t_top)/mu0} for the beam source of one layer.

    ``amplitude`` = w S (2 - delta_m0) / (4 pi) times the beam transmittance to the top.
    With the symmetrised source a (sums) and b (differences), the solution's coordinates in
    the singular bases are alpha = U^T R^-T a = S^T a and beta = V^T L^-1 b = T^T b, and it
    returns through R^-1 U = S and L^-T V = T: four products with the layer's S and T, no
    triangular solve (those were the dominant cost per sun angle).
    """
    cdef Py_ssize_t n = sz.n, nl = sz.nl, i, j, l
    cdef Py_ssize_t neven = (nl - mode + 1) // 2, nodd = (nl - mode) // 2
    cdef double *ss = ly.ss + layer * n * n
    cdef double *tt = ly.tt + layer * n * n
    cdef double *kv = ly.k + layer * n
    cdef double *zp = ly.zp + (layer * sz.nsun + sun) * n
    cdef double *zm = ly.zm + (layer * sz.nsun + sun) * n
    cdef double *l0 = sc.l0 + sun * nl
    cdef double x, alpha, beta, den
    cdef double *acc1 = sc.acc
    cdef double *acc2 = sc.acc + n
    cdef double *ce_aw = sc.tall + 2 * n * nl * layer
    if amplitude == 0.0:
        for i in range(n):
            zp[i] = 0.0
            zm[i] = 0.0
        return
    # sum_l c_l P_l^m(mu_i) sqrt(w_i) P_l^m(mu0) with diag(c) Aw from scattering_matrices
    # (P_l^m vanishes for l < m; the even part has c_l = 0 where l + m is odd and the odd
    # part where it is even, so each sum runs over its own parity only)
    for l in range(neven):
        sc.tmp[l] = l0[mode + 2 * l]
    for l in range(nodd):
        sc.tmp[nl + l] = l0[mode + 2 * l + 1]
    column_dots(ce_aw + mode, 2, nl, sc.tmp, neven, n, acc1)
    column_dots(ce_aw + n * nl + mode + 1, 2, nl, sc.tmp + nl, nodd, n, acc2)
    for i in range(n):
        sc.vec1[i] = 2.0 * amplitude * acc1[i]      # symmetrised Q+ + Q-
        sc.vec2[i] = -2.0 * amplitude * acc2[i]     # symmetrised Q+ - Q-
    # coordinates in the singular bases: alpha = S^T a1, beta = T^T b1
    column_dots(ss, 1, n, sc.vec1, n, n, acc1)
    column_dots(tt, 1, n, sc.vec2, n, n, acc2)
    for j in range(n):
        alpha = acc1[j]
        beta = acc2[j]
        x = mu0 * kv[j]
        den = x * x - 1.0
        sc.vec3[j] = x * (alpha * x - beta) / den       # p-hat
        sc.zz[j] = x * (beta * x - alpha) / den         # q-hat (zz as scratch)
    column_dots(ss, n, 1, sc.vec3, n, n, sc.vec1)
    column_dots(tt, n, 1, sc.zz, n, n, sc.vec2)
    for i in range(n):
        zp[i] = 0.5 * (sc.vec1[i] + sc.vec2[i]) / sqw[i]
        zm[i] = 0.5 * (sc.vec1[i] - sc.vec2[i]) / sqw[i]


cdef void thermal_particular(Sizes *sz, Scratch *sc, Layers *ly, Py_ssize_t layer,
                             const double *mu, const double *sqw) noexcept nogil:
    """Particular solution B0 + B1 (t - t_top) +- B1 (a + b)^-1 M 1 of the linear Planck source.

    The symmetrised (a + b)^-1 is Emat^-1 = L^-T L^-1, applied by two triangular solves with
    the layer's Cholesky factor, which ``layer_eigen`` has just left in ``sc.lf``. (Not as
    T T^T from the singular vectors: B1 of a thin layer can be ~1e8 B, and T T^T differs
    from the identity by round-off even where Emat is exactly I, e.g. w = 0.)
    """
    cdef Py_ssize_t n = sz.n, i
    cdef lapack_int ni = <lapack_int>n, one_i = 1
    cdef double b1 = ly.b1[layer], b0 = ly.b0[layer]
    cdef char uplo_l = b'L', trans_n = b'N', trans_t = b'T', diag_n = b'N'
    for i in range(n):
        sc.vec1[i] = sqw[i] * mu[i]
    dtrsv(&uplo_l, &trans_n, &diag_n, &ni, sc.lf, &ni, sc.vec1, &one_i)
    dtrsv(&uplo_l, &trans_t, &diag_n, &ni, sc.lf, &ni, sc.vec1, &one_i)
    for i in range(n):
        ly.y0p[layer * n + i] = b0 + b1 * sc.vec1[i] / sqw[i]
        ly.y0m[layer * n + i] = b0 - b1 * sc.vec1[i] / sqw[i]


cdef void thermal_slope(Layers *ly, Py_ssize_t layer, Py_ssize_t n, double depth, double w,
                        double top, double bottom) noexcept nogil:
    """Planck source B0 + B1 (t - t_top) of a layer, or its mean where the slope is unresolvable.

    The linear part of the particular solution is cancelled through the layer's slowest
    homogeneous mode k_min, with a round-off error of about eps |B1| / k_min; replacing the
    source by its mean changes the emission by about (1 - w) |B1| depth^2 / 12. The mean is
    used where it is the smaller error, (1 - w) depth^2 k_min < 12 eps: thin, nearly
    conservative layers (which hardly emit) and layers so thin that B1 would overflow.
    """
    cdef Py_ssize_t j
    cdef double kmin = ly.k[layer * n]
    for j in range(1, n):
        kmin = min(kmin, ly.k[layer * n + j])
    if (1.0 - w) * depth * depth * kmin < 12.0 * 2.220446049250313e-16:
        ly.b0[layer] = 0.5 * (top + bottom)
        ly.b1[layer] = 0.0
    else:
        ly.b0[layer] = top
        ly.b1[layer] = (bottom - top) / depth


cdef inline void band_put(Scratch *sc, Py_ssize_t i, Py_ssize_t j, double value) noexcept nogil:
    sc.ab[sc.kl + sc.kl + i - j + j * sc.ldab] = value


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


cdef int solve_boundary_values(Sizes *sz, Scratch *sc, Layers *ly, Py_ssize_t mode,
                               const double *tau, const double *mu, const double *wq,
                               double albedo, double top_radiance, double surface_emission,
                               const double *irradiance, bint thermal,
                               lapack_int *failed_info) noexcept nogil:
    """Assemble and solve the banded boundary-value problem of one Fourier term."""
    cdef Py_ssize_t n = sz.n, nlay = sz.nlayer, nsun = sz.nsun
    cdef Py_ssize_t neq = 2 * n * nlay, i, j, kk, layer, row, col, s
    cdef lapack_int neqi = <lapack_int>neq, nsi = <lapack_int>nsun, info = 0
    cdef double e, refl, rp, rm, pa, pb, sec, total = 0.0
    cdef double *eb = ly.eb
    cdef double *gp
    cdef double *gm
    cdef double *gp2
    cdef double *gm2
    cdef double *kv
    cdef double *kv2
    cdef bint lambert = (mode == 0 and albedo > 0.0)
    cdef bint iso = (mode == 0)
    cdef char trans_n = b'N'
    # Zero the structural zeros of the band (the last factorisation overwrote them): in the
    # columns of layer l only the rows of its top and bottom interfaces, [2nl - n, 2nl + 3n),
    # carry entries, and those are all written below. The kl rows kept for the fill-in of the
    # LU need not be set.
    for col in range(neq):
        layer = col // (2 * n)
        row = max(0, 2 * n * layer - n)          # first row with an entry
        i = max(0, col - (3 * n - 1))            # first row inside the band
        while i < row:
            band_put(sc, i, col, 0.0)
            i = i + 1
        row = min(neq, 2 * n * layer + 3 * n)    # one past the last row with an entry
        j = min(neq, col + 3 * n)                # one past the last row inside the band
        while row < j:
            band_put(sc, row, col, 0.0)
            row = row + 1
    for layer in range(nlay):
        total = total + tau[layer]
    # top: downward radiance given
    # (every block is written column by column: band storage keeps a column contiguous)
    gp = ly.gp
    gm = ly.gm
    for kk in range(n):
        e = ly.ek[kk]
        for i in range(n):
            band_put(sc, i, kk, gm[i + kk * n])
            band_put(sc, i, n + kk, gp[i + kk * n] * e)
    # interfaces
    for layer in range(nlay - 1):
        gp = ly.gp + layer * n * n
        gm = ly.gm + layer * n * n
        kv = ly.ek + layer * n
        gp2 = ly.gp + (layer + 1) * n * n
        gm2 = ly.gm + (layer + 1) * n * n
        kv2 = ly.ek + (layer + 1) * n
        row = n + 2 * n * layer
        col = 2 * n * layer
        for kk in range(n):
            e = kv[kk]
            for i in range(n):
                band_put(sc, row + i, col + kk, gp[i + kk * n] * e)
                band_put(sc, row + n + i, col + kk, gm[i + kk * n] * e)
            for i in range(n):
                band_put(sc, row + i, col + n + kk, gm[i + kk * n])
                band_put(sc, row + n + i, col + n + kk, gp[i + kk * n])
            e = kv2[kk]
            for i in range(n):
                band_put(sc, row + i, col + 2 * n + kk, -gp2[i + kk * n])
                band_put(sc, row + n + i, col + 2 * n + kk, -gm2[i + kk * n])
            for i in range(n):
                band_put(sc, row + i, col + 3 * n + kk, -gm2[i + kk * n] * e)
                band_put(sc, row + n + i, col + 3 * n + kk, -gp2[i + kk * n] * e)
    # bottom: upward radiance = Lambertian reflection of the downward radiance + sources
    layer = nlay - 1
    gp = ly.gp + layer * n * n
    gm = ly.gm + layer * n * n
    kv = ly.ek + layer * n
    row = 2 * n * nlay - n
    col = 2 * n * layer
    for kk in range(n):
        rp = 0.0
        rm = 0.0
        if lambert:
            for j in range(n):
                rm = rm + 2.0 * albedo * wq[j] * mu[j] * gm[j + kk * n]
                rp = rp + 2.0 * albedo * wq[j] * mu[j] * gp[j + kk * n]
        e = kv[kk]
        for i in range(n):
            band_put(sc, row + i, col + kk, (gp[i + kk * n] - rm) * e)
            band_put(sc, row + i, col + n + kk, gm[i + kk * n] - rp)
    dgbtrf(&neqi, &neqi, &sc.kl, &sc.kl, sc.ab, &sc.ldab, sc.ipiv, &info)
    if info != 0:
        failed_info[0] = info
        return 5
    # right-hand sides, one per sun angle
    for s in range(nsun):
        sec = 1.0 / sc.mu0e[s]
        for i in range(n):
            ly.coef[s * neq + i] = (top_radiance if iso else 0.0) \
                - particular_at(sz, ly, 0, s, i, False, 0.0, 1.0, thermal)
        for layer in range(nlay - 1):
            row = n + 2 * n * layer
            for i in range(n):
                ly.coef[s * neq + row + i] = \
                    particular_at(sz, ly, layer + 1, s, i, True, 0.0, 1.0, thermal) \
                    - particular_at(sz, ly, layer, s, i, True, tau[layer],
                                    eb[layer * nsun + s], thermal)
                ly.coef[s * neq + row + n + i] = \
                    particular_at(sz, ly, layer + 1, s, i, False, 0.0, 1.0, thermal) \
                    - particular_at(sz, ly, layer, s, i, False, tau[layer],
                                    eb[layer * nsun + s], thermal)
        layer = nlay - 1
        row = 2 * n * nlay - n
        refl = 0.0
        if lambert:
            for j in range(n):
                refl = refl + 2.0 * albedo * wq[j] * mu[j] \
                    * particular_at(sz, ly, layer, s, j, False, tau[layer],
                                    eb[layer * nsun + s], thermal)
        sc.surfbeam[s] = 0.0
        if iso:
            sc.surfbeam[s] = albedo / PI * sc.mu0e[s] * irradiance[s] * exp(-total * sec)
        for i in range(n):
            pa = particular_at(sz, ly, layer, s, i, True, tau[layer], eb[layer * nsun + s],
                               thermal)
            pb = sc.surfbeam[s] + (surface_emission if iso else 0.0)
            ly.coef[s * neq + row + i] = pb - (pa - refl)
    dgbtrs(&trans_n, &neqi, &sc.kl, &sc.kl, &nsi, sc.ab, &sc.ldab, sc.ipiv, ly.coef, &neqi,
           &info)
    if info != 0:
        failed_info[0] = info
        return 6
    return 0


cdef void user_sources(Sizes *sz, Scratch *sc, Layers *ly, Py_ssize_t layer, Py_ssize_t mode,
                       double w, const double *wq, const double *irradiance,
                       bint thermal) noexcept nogil:
    """Source-function coefficients of one layer at the user cosines (up and down)."""
    cdef Py_ssize_t n = sz.n, nl = sz.nl, nvz = sz.nvz, nsun = sz.nsun, u, j, l, kk, s
    cdef double sp, sm, a, b, amp, gpj, gmj, pu, pm, c1, c2
    cdef Py_ssize_t k2
    cdef double *acc1 = sc.acc
    cdef double *acc2 = sc.acc + n
    cdef double *gp = ly.gp + layer * n * n
    cdef double *gm = ly.gm + layer * n * n
    cdef double *hA = sc.hA + layer * nvz * n
    cdef double *hB = sc.hB + layer * nvz * n
    cdef double *even = sc.tmp            # [nl / 2] c_l P_l^m(mu_u), l + m even
    cdef double *odd = sc.tmp + sz.nl     # [nl / 2] the same, l + m odd
    cdef Py_ssize_t neven = (nl - mode + 1) // 2, nodd = (nl - mode) // 2
    cdef double *zp
    cdef double *zm
    cdef double *l0
    # p(mu_u, +-mu_j) = sum_l c_l P_l^m(mu_u) P_l^m(mu_j) (+-1)^(l+m) = E_j +- O_j, the sums
    # over even and odd l + m; the coefficient is folded into the user-angle factor once per
    # angle, out of the j loop
    for u in range(nvz):
        for l in range(neven):
            even[l] = sc.ce[mode + 2 * l] * sc.lu[mode + 2 * l + u * nl]
        for l in range(nodd):
            odd[l] = sc.co[mode + 2 * l + 1] * sc.lu[mode + 2 * l + 1 + u * nl]
        column_dots(sc.lq + mode, 2, nl, even, neven, n, acc1)
        column_dots(sc.lq + mode + 1, 2, nl, odd, nodd, n, acc2)
        for j in range(n):
            sc.pup[u + j * nvz] = 0.5 * w * wq[j] * (acc1[j] + acc2[j])
            sc.pum[u + j * nvz] = 0.5 * w * wq[j] * (acc1[j] - acc2[j])
        for s in range(nsun):
            l0 = sc.l0 + s * nl
            sp = 0.0
            sm = 0.0
            for l in range(neven):
                sp = sp + even[l] * l0[mode + 2 * l]
            for l in range(nodd):
                sm = sm + odd[l] * l0[mode + 2 * l + 1]
            sc.zuA[(layer * nsun + s) * nvz + u] = sp - sm      # completed below
            sc.zuB[(layer * nsun + s) * nvz + u] = sp + sm
    # hA = pup gp + pum gm, hB = pup gm + pum gp; two modes at a time (independent sums)
    for u in range(nvz):
        kk = 0
        while kk < n:
            a = 0.0
            b = 0.0
            c1 = 0.0
            c2 = 0.0
            k2 = kk + 1 if kk + 1 < n else kk
            for j in range(n):
                pu = sc.pup[u + j * nvz]
                pm = sc.pum[u + j * nvz]
                gpj = gp[j + kk * n]
                gmj = gm[j + kk * n]
                a = a + pu * gpj + pm * gmj
                b = b + pu * gmj + pm * gpj
                gpj = gp[j + k2 * n]
                gmj = gm[j + k2 * n]
                c1 = c1 + pu * gpj + pm * gmj
                c2 = c2 + pu * gmj + pm * gpj
            hA[u + kk * nvz] = a
            hB[u + kk * nvz] = b
            hA[u + k2 * nvz] = c1
            hB[u + k2 * nvz] = c2
            kk = kk + 2
    for s in range(nsun):
        amp = w * irradiance[s] * (1.0 if mode == 0 else 2.0) / (4.0 * PI) \
            * ly.ttop[layer * nsun + s]
        zp = ly.zp + (layer * nsun + s) * n
        zm = ly.zm + (layer * nsun + s) * n
        for u in range(nvz):
            a = 0.0
            b = 0.0
            for j in range(n):
                a = a + sc.pup[u + j * nvz] * zp[j] + sc.pum[u + j * nvz] * zm[j]
                b = b + sc.pup[u + j * nvz] * zm[j] + sc.pum[u + j * nvz] * zp[j]
            # up (mu_u, from -mu0) uses the parity-weighted sum; down uses the plain one
            sc.zuA[(layer * nsun + s) * nvz + u] = a + amp * sc.zuA[(layer * nsun + s) * nvz + u]
            sc.zuB[(layer * nsun + s) * nvz + u] = b + amp * sc.zuB[(layer * nsun + s) * nvz + u]
    for u in range(nvz):
        a = 0.0
        b = 0.0
        if thermal and mode == 0:
            a = (1.0 - w) * ly.b0[layer]
            b = a
            for j in range(n):
                a = a + sc.pup[u + j * nvz] * ly.y0p[layer * n + j] \
                    + sc.pum[u + j * nvz] * ly.y0m[layer * n + j]
                b = b + sc.pup[u + j * nvz] * ly.y0m[layer * n + j] \
                    + sc.pum[u + j * nvz] * ly.y0p[layer * n + j]
        sc.s0A[layer * nvz + u] = a
        sc.s0B[layer * nvz + u] = b


cdef inline double upward_partial(Sizes *sz, Scratch *sc, Layers *ly, Py_ssize_t layer,
                                  Py_ssize_t sun, Py_ssize_t u, double umu, double dt1,
                                  double dt2, double secant, bint thermal) noexcept nogil:
    """Upward user radiance produced between depth dt1 below the top and the layer bottom."""
    cdef Py_ssize_t n = sz.n, nvz = sz.nvz, kk
    cdef double *coef = ly.coef + sun * 2 * n * sz.nlayer + 2 * n * layer
    cdef double *kv = ly.k + layer * n
    cdef double inv = 1.0 / umu, value = 0.0, b1, s0
    if dt2 <= 0.0:
        return 0.0
    for kk in range(n):
        value = value + coef[kk] * sc.hA[layer * nvz * n + u + kk * nvz] \
            * exp(-kv[kk] * dt1) * dexp(0.0, kv[kk] + inv, dt2) \
            + coef[n + kk] * sc.hB[layer * nvz * n + u + kk * nvz] * dexp(inv, kv[kk], dt2)
    value = value + sc.zuA[(layer * sz.nsun + sun) * nvz + u] * exp(-dt1 * secant) \
        * dexp(0.0, secant + inv, dt2)
    value = value * inv
    if thermal:
        b1 = ly.b1[layer]
        s0 = sc.s0A[layer * nvz + u]
        value = value + (s0 + b1 * dt1 + umu * b1) \
            - (s0 + b1 * (dt1 + dt2) + umu * b1) * exp(-dt2 * inv)
    return value


cdef inline double downward_partial(Sizes *sz, Scratch *sc, Layers *ly, Py_ssize_t layer,
                                    Py_ssize_t sun, Py_ssize_t u, double umu, double dt1,
                                    double dt2, double secant, bint thermal) noexcept nogil:
    """Downward user radiance produced between the layer top and depth dt1 below it."""
    cdef Py_ssize_t n = sz.n, nvz = sz.nvz, kk
    cdef double *coef = ly.coef + sun * 2 * n * sz.nlayer + 2 * n * layer
    cdef double *kv = ly.k + layer * n
    cdef double inv = 1.0 / umu, value = 0.0, b1, s0
    if dt1 <= 0.0:
        return 0.0
    for kk in range(n):
        value = value + coef[kk] * sc.hB[layer * nvz * n + u + kk * nvz] \
            * dexp(inv, kv[kk], dt1) \
            + coef[n + kk] * sc.hA[layer * nvz * n + u + kk * nvz] * exp(-kv[kk] * dt2) \
            * dexp(0.0, kv[kk] + inv, dt1)
    value = value + sc.zuB[(layer * sz.nsun + sun) * nvz + u] * dexp(inv, secant, dt1)
    value = value * inv
    if thermal:
        b1 = ly.b1[layer]
        s0 = sc.s0B[layer * nvz + u]
        value = value + (s0 + b1 * dt1 - umu * b1) - (s0 - umu * b1) * exp(-dt1 * inv)
    return value


cdef inline double upward_layer(Sizes *sz, Scratch *sc, Layers *ly, Py_ssize_t layer,
                                Py_ssize_t sun, Py_ssize_t u, double umu, double depth,
                                bint thermal) noexcept nogil:
    """upward_partial across a whole layer (dt1 = 0, dt2 = depth) from the cached integrals."""
    cdef Py_ssize_t n = sz.n, nvz = sz.nvz, kk
    cdef double *coef = ly.coef + sun * 2 * n * sz.nlayer + 2 * n * layer
    cdef double *hA = sc.hA + layer * nvz * n
    cdef double *hB = sc.hB + layer * nvz * n
    cdef double *dA = sc.dA + (layer * nvz + u) * n
    cdef double *dB = sc.dB + (layer * nvz + u) * n
    cdef double inv = 1.0 / umu, value = 0.0, b1, s0
    if depth <= 0.0:
        return 0.0
    for kk in range(n):
        value = value + coef[kk] * hA[u + kk * nvz] * dA[kk] \
            + coef[n + kk] * hB[u + kk * nvz] * dB[kk]
    value = value + sc.zuA[(layer * sz.nsun + sun) * nvz + u] \
        * sc.bA[(layer * sz.nsun + sun) * nvz + u]
    value = value * inv
    if thermal:
        b1 = ly.b1[layer]
        s0 = sc.s0A[layer * nvz + u]
        value = value + (s0 + umu * b1) - (s0 + b1 * depth + umu * b1) * sc.et[layer * nvz + u]
    return value


cdef inline double downward_layer(Sizes *sz, Scratch *sc, Layers *ly, Py_ssize_t layer,
                                  Py_ssize_t sun, Py_ssize_t u, double umu, double depth,
                                  bint thermal) noexcept nogil:
    """downward_partial across a whole layer (dt1 = depth, dt2 = 0) from the cached integrals."""
    cdef Py_ssize_t n = sz.n, nvz = sz.nvz, kk
    cdef double *coef = ly.coef + sun * 2 * n * sz.nlayer + 2 * n * layer
    cdef double *hA = sc.hA + layer * nvz * n
    cdef double *hB = sc.hB + layer * nvz * n
    cdef double *dA = sc.dA + (layer * nvz + u) * n
    cdef double *dB = sc.dB + (layer * nvz + u) * n
    cdef double inv = 1.0 / umu, value = 0.0, b1, s0
    if depth <= 0.0:
        return 0.0
    for kk in range(n):
        value = value + coef[kk] * hB[u + kk * nvz] * dB[kk] \
            + coef[n + kk] * hA[u + kk * nvz] * dA[kk]
    value = value + sc.zuB[(layer * sz.nsun + sun) * nvz + u] \
        * sc.bB[(layer * sz.nsun + sun) * nvz + u]
    value = value * inv
    if thermal:
        b1 = ly.b1[layer]
        s0 = sc.s0B[layer * nvz + u]
        value = value + (s0 + b1 * depth - umu * b1) \
            - (s0 - umu * b1) * sc.et[layer * nvz + u]
    return value


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
    """
    cdef Sizes sz
    cdef Scratch sc
    cdef Layers ly
    cdef Py_ssize_t ncol = optical_depth.shape[0]
    cdef Py_ssize_t n = quadrature_cosines.shape[0]
    cdef Py_ssize_t nl, nlay, nsun, nvz, ldab, neq
    cdef Py_ssize_t col, layer, mode, s, p, i, l, u, a, q, _attempt, nmodes, small_run
    cdef Py_ssize_t failed_code = 0
    cdef lapack_int failed_info = 0, info = 0, ni, lwork_query = -1
    cdef double w, dt1, dt2, sec, fu, fd, jm, x, closest, change, size, floor_value, cm
    cdef double depth, sumtau, umu, inv, value, biggest, work_size = 0.0
    cdef int code
    cdef bint want_radiance, unsettled
    cdef char job_a = b'A'
    cdef double[::1] pool_view, probe
    cdef double *base
    cdef double *total_out
    cdef double *mu
    cdef double *wq
    cdef double *sqw
    cdef unsigned char[::1] ipiv_view

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

    # One pool of workspace for a column, reused by every column.
    nl = sz.nl
    nlay = sz.nlayer
    nsun = sz.nsun
    nvz = max(sz.nvz, 1)
    ldab = 3 * (3 * n - 1) + 1
    neq = 2 * n * nlay
    ni = <lapack_int>n
    probe = np.zeros(n * n + n)
    dgesvd(&job_a, &job_a, &ni, &ni, &probe[0], &ni, &probe[n * n], &probe[0], &ni,
           &probe[0], &ni, &work_size, &lwork_query, &info)
    sizes = {
        "k": nlay * n, "gp": nlay * n * n, "gm": nlay * n * n, "ss": nlay * n * n,
        "tt": nlay * n * n, "rf": n * n, "lf": n * n, "uu": n * n, "vt": n * n,
        "zp": nlay * nsun * n, "zm": nlay * nsun * n, "y0p": nlay * n, "y0m": nlay * n,
        "b0": nlay, "b1": nlay,
        "ttop": nlay * nsun, "coef": nsun * neq, "aw": nl * n, "lq": nl * n, "lu": nl * nvz,
        "l0": nl * nsun, "ceall": nlay * nl, "coall": nlay * nl,
        "tall": 2 * n * nlay * nl, "kall": 2 * n * nlay * n, "tmp": 2 * nl,
        "zz": n * n, "vec1": n, "vec2": n, "vec3": n, "ab": ldab * neq, "mu0e": nsun,
        "surfbeam": nsun, "pup": nvz * n, "pum": nvz * n, "hA": nlay * nvz * n,
        "hB": nlay * nvz * n, "zuA": nlay * nsun * nvz, "zuB": nlay * nsun * nvz,
        "s0A": nlay * nvz, "s0B": nlay * nvz, "iup": (nlay + 1) * nsun * nvz,
        "idn": (nlay + 1) * nsun * nvz, "radm": nsun * sz.npos * 2 * nvz,
        "work": int(work_size) + 8 * n, "mu": n, "wq": n, "sqw": n,
        "ek": nlay * n, "eb": nlay * nsun, "e1": n, "e2": n, "ones": n, "eu": nlay * nvz,
        "et": nlay * nvz, "dA": nlay * nvz * n, "dB": nlay * nvz * n,
        "cosm": max(sz.nva, 1), "acc": 2 * n,
        "bA": nlay * nsun * nvz, "bB": nlay * nsun * nvz, "mu0done": nsun, "beamdone": nsun,
    }
    offsets = {}
    total = 0
    for name, count in sizes.items():
        offsets[name] = total
        total += count
    pool = np.zeros(total)
    pool_view = pool
    base = &pool_view[0]
    ly.k = base + <Py_ssize_t>offsets["k"]
    ly.gp = base + <Py_ssize_t>offsets["gp"]
    ly.gm = base + <Py_ssize_t>offsets["gm"]
    ly.ss = base + <Py_ssize_t>offsets["ss"]
    ly.tt = base + <Py_ssize_t>offsets["tt"]
    sc.rf = base + <Py_ssize_t>offsets["rf"]
    sc.lf = base + <Py_ssize_t>offsets["lf"]
    sc.uu = base + <Py_ssize_t>offsets["uu"]
    sc.vt = base + <Py_ssize_t>offsets["vt"]
    ly.zp = base + <Py_ssize_t>offsets["zp"]
    ly.zm = base + <Py_ssize_t>offsets["zm"]
    ly.y0p = base + <Py_ssize_t>offsets["y0p"]
    ly.y0m = base + <Py_ssize_t>offsets["y0m"]
    ly.b0 = base + <Py_ssize_t>offsets["b0"]
    ly.b1 = base + <Py_ssize_t>offsets["b1"]
    ly.ttop = base + <Py_ssize_t>offsets["ttop"]
    ly.coef = base + <Py_ssize_t>offsets["coef"]
    sc.aw = base + <Py_ssize_t>offsets["aw"]
    sc.lq = base + <Py_ssize_t>offsets["lq"]
    sc.lu = base + <Py_ssize_t>offsets["lu"]
    sc.l0 = base + <Py_ssize_t>offsets["l0"]
    sc.ceall = base + <Py_ssize_t>offsets["ceall"]
    sc.coall = base + <Py_ssize_t>offsets["coall"]
    sc.tall = base + <Py_ssize_t>offsets["tall"]
    sc.kall = base + <Py_ssize_t>offsets["kall"]
    sc.tmp = base + <Py_ssize_t>offsets["tmp"]
    sc.zz = base + <Py_ssize_t>offsets["zz"]
    sc.vec1 = base + <Py_ssize_t>offsets["vec1"]
    sc.vec2 = base + <Py_ssize_t>offsets["vec2"]
    sc.vec3 = base + <Py_ssize_t>offsets["vec3"]
    sc.ab = base + <Py_ssize_t>offsets["ab"]
    sc.mu0e = base + <Py_ssize_t>offsets["mu0e"]
    sc.surfbeam = base + <Py_ssize_t>offsets["surfbeam"]
    sc.pup = base + <Py_ssize_t>offsets["pup"]
    sc.pum = base + <Py_ssize_t>offsets["pum"]
    sc.hA = base + <Py_ssize_t>offsets["hA"]
    sc.hB = base + <Py_ssize_t>offsets["hB"]
    sc.zuA = base + <Py_ssize_t>offsets["zuA"]
    sc.zuB = base + <Py_ssize_t>offsets["zuB"]
    sc.s0A = base + <Py_ssize_t>offsets["s0A"]
    sc.s0B = base + <Py_ssize_t>offsets["s0B"]
    sc.iup = base + <Py_ssize_t>offsets["iup"]
    sc.idn = base + <Py_ssize_t>offsets["idn"]
    sc.radm = base + <Py_ssize_t>offsets["radm"]
    sc.work = base + <Py_ssize_t>offsets["work"]
    ly.ek = base + <Py_ssize_t>offsets["ek"]
    ly.eb = base + <Py_ssize_t>offsets["eb"]
    sc.e1 = base + <Py_ssize_t>offsets["e1"]
    sc.e2 = base + <Py_ssize_t>offsets["e2"]
    sc.ones = base + <Py_ssize_t>offsets["ones"]
    sc.eu = base + <Py_ssize_t>offsets["eu"]
    sc.et = base + <Py_ssize_t>offsets["et"]
    sc.dA = base + <Py_ssize_t>offsets["dA"]
    sc.dB = base + <Py_ssize_t>offsets["dB"]
    sc.cosm = base + <Py_ssize_t>offsets["cosm"]
    sc.acc = base + <Py_ssize_t>offsets["acc"]
    sc.bA = base + <Py_ssize_t>offsets["bA"]
    sc.bB = base + <Py_ssize_t>offsets["bB"]
    sc.mu0done = base + <Py_ssize_t>offsets["mu0done"]
    sc.beamdone = base + <Py_ssize_t>offsets["beamdone"]
    sc.lwork = <lapack_int>sizes["work"]
    mu = base + <Py_ssize_t>offsets["mu"]
    wq = base + <Py_ssize_t>offsets["wq"]
    sqw = base + <Py_ssize_t>offsets["sqw"]
    for i in range(n):
        mu[i] = quadrature_cosines[i]
        wq[i] = quadrature_weights[i]
        sqw[i] = sqrt(quadrature_weights[i])
        sc.ones[i] = 1.0
    ipiv_buffer = np.zeros(neq * sizeof(lapack_int), dtype=np.uint8)
    ipiv_view = ipiv_buffer
    sc.ipiv = <lapack_int *>&ipiv_view[0]
    sc.ldab = <lapack_int>ldab
    sc.kl = <lapack_int>(3 * n - 1)

    with nogil:
        for col in range(ncol):
            status[col, 0] = 0
            status[col, 1] = 0
            status[col, 2] = 0
            status[col, 3] = 0
            fourier_terms[col] = 0
            for s in range(sz.nsun):
                for p in range(sz.npos):
                    flux_up[col, s, p] = 0.0
                    flux_down[col, s, p] = 0.0
                    mean_intensity[col, s, p] = 0.0
                    for i in range(2):
                        for u in range(sz.nvz):
                            for a in range(sz.nva):
                                radiance[col, s, p, i, u, a] = 0.0
            for layer in range(sz.nlayer):
                ly.b0[layer] = 0.0
                ly.b1[layer] = 0.0
            # transmittances along the view directions (the same for every Fourier term)
            if want_radiance:
                for layer in range(sz.nlayer):
                    depth = optical_depth[col, layer]
                    for u in range(sz.nvz):
                        umu = view_cosines[u]
                        inv = 1.0 / umu
                        sc.eu[layer * sz.nvz + u] = exp(-depth / umu)
                        sc.et[layer * sz.nvz + u] = exp(-depth * inv)
            for s in range(sz.nsun):
                sc.mu0done[s] = -1.0      # nothing cached for this column yet
                sc.beamdone[s] = 0
            small_run = 0
            code = 0
            for mode in range(nmodes):
                legendre_table(mode, sz.nl, mu, n, sc.lq)
                for i in range(n):
                    for l in range(sz.nl):
                        sc.aw[l + i * sz.nl] = sc.lq[l + i * sz.nl] * sqw[i]
                if want_radiance:
                    legendre_table(mode, sz.nl, &view_cosines[0], sz.nvz, sc.lu)
                for s in range(sz.nsun):
                    sc.mu0e[s] = sun_cosine[col, s]
                # homogeneous solutions
                scattering_matrices(&sz, &sc, mode, &phase_moments[col, 0, 0])
                for layer in range(sz.nlayer):
                    w = min(single_scattering_albedo[col, layer], 1.0 - C_CONSERVATIVE_GAP)
                    sc.ce = sc.ceall + layer * sz.nl
                    sc.co = sc.coall + layer * sz.nl
                    if layer_eigen(&sz, &sc, &ly, layer, w, mu, sqw, &failed_code,
                                   &failed_info) != 0:
                        set_status(status, col, failed_code, layer, mode, failed_info)
                        code = 1
                        break
                    # each mode across its layer, once for the boundary-value problem,
                    # the fluxes and the radiances
                    depth = optical_depth[col, layer]
                    for i in range(n):
                        ly.ek[layer * n + i] = exp(-ly.k[layer * n + i] * depth)
                    if thermal and mode == 0:
                        # while this layer's Cholesky factor is in the scratch
                        thermal_slope(&ly, layer, n, depth, w, planck_levels[col, layer],
                                      planck_levels[col, layer + 1])
                        thermal_particular(&sz, &sc, &ly, layer, mu, sqw)
                if code != 0:
                    break
                # resonance: keep mu0 * k away from 1 in every layer
                for s in range(sz.nsun):
                    for _attempt in range(8):
                        closest = 1.0
                        for i in range(sz.nlayer * n):
                            x = fabs(sc.mu0e[s] * ly.k[i] - 1.0)
                            if x < closest:
                                closest = x
                        if closest >= C_RESONANCE_GAP:
                            break
                        sc.mu0e[s] = sc.mu0e[s] * (1.0 + 2.0 * C_RESONANCE_GAP)
                    legendre_table(mode, sz.nl, &sc.mu0e[s], 1, sc.l0 + s * sz.nl)
                    if sc.mu0e[s] == sc.mu0done[s]:
                        continue    # the beam's exponentials of the last term still hold
                    sc.mu0done[s] = sc.mu0e[s]
                    sc.beamdone[s] = 0
                    sumtau = 0.0
                    sec = 1.0 / sc.mu0e[s]
                    for layer in range(sz.nlayer):
                        ly.ttop[layer * sz.nsun + s] = exp(-sumtau / sc.mu0e[s])
                        ly.eb[layer * sz.nsun + s] = exp(-optical_depth[col, layer] * sec)
                        sumtau = sumtau + optical_depth[col, layer]
                # particular solutions
                for layer in range(sz.nlayer):
                    w = min(single_scattering_albedo[col, layer], 1.0 - C_CONSERVATIVE_GAP)
                    sc.ce = sc.ceall + layer * sz.nl
                    sc.co = sc.coall + layer * sz.nl
                    for s in range(sz.nsun):
                        x = w * sun_irradiance[col, s] * (1.0 if mode == 0 else 2.0) \
                            / (4.0 * PI) * ly.ttop[layer * sz.nsun + s]
                        beam_particular(&sz, &sc, &ly, layer, mode, s, x, sc.mu0e[s], sqw)
                    if want_radiance:
                        user_sources(&sz, &sc, &ly, layer, mode, w, wq,
                                     &sun_irradiance[col, 0], thermal)
                code = solve_boundary_values(
                    &sz, &sc, &ly, mode, &optical_depth[col, 0], mu, wq,
                    surface_albedo[col], top_radiance[col], planck_surface[col] * (
                        1.0 - surface_albedo[col]) if thermal else 0.0,
                    &sun_irradiance[col, 0], thermal and mode == 0, &failed_info)
                if code != 0:
                    set_status(status, col, code, 0, mode, failed_info)
                    break
                fourier_terms[col] = mode + 1
                # fluxes and mean intensity (azimuth-independent term)
                if mode == 0:
                    for p in range(sz.npos):
                        layer = position_layer[p]
                        dt1 = position_fraction[p] * optical_depth[col, layer]
                        dt2 = optical_depth[col, layer] - dt1
                        for i in range(n):
                            sc.e1[i] = exp(-ly.k[layer * n + i] * dt1)
                            sc.e2[i] = exp(-ly.k[layer * n + i] * dt2)
                        for s in range(sz.nsun):
                            sec = 1.0 / sc.mu0e[s]
                            x = exp(-dt1 * sec)
                            fu = 0.0
                            fd = 0.0
                            jm = 0.0
                            for i in range(n):
                                value = quadrature_radiance(&sz, &ly, layer, s, i, True, dt1,
                                                            x, sc.e1, sc.e2, thermal)
                                size = quadrature_radiance(&sz, &ly, layer, s, i, False, dt1,
                                                           x, sc.e1, sc.e2, thermal)
                                fu = fu + wq[i] * mu[i] * value
                                fd = fd + wq[i] * mu[i] * size
                                jm = jm + 0.5 * wq[i] * (value + size)
                            flux_up[col, s, p] = 2.0 * PI * fu
                            flux_down[col, s, p] = 2.0 * PI * fd
                            mean_intensity[col, s, p] = jm
                if not want_radiance:
                    continue
                # radiance at the user angles for this Fourier term: first the integrals
                # across whole layers that no sun angle or direction changes
                for layer in range(sz.nlayer):
                    depth = optical_depth[col, layer]
                    for u in range(sz.nvz):
                        inv = 1.0 / view_cosines[u]
                        for i in range(n):
                            sc.dA[(layer * sz.nvz + u) * n + i] = dexp_from_zero(
                                ly.k[layer * n + i] + inv, depth,
                                ly.ek[layer * n + i] * sc.et[layer * sz.nvz + u])
                            sc.dB[(layer * sz.nvz + u) * n + i] = dexp_cached(
                                inv, ly.k[layer * n + i], depth,
                                sc.et[layer * sz.nvz + u], ly.ek[layer * n + i])
                for s in range(sz.nsun):
                    sec = 1.0 / sc.mu0e[s]
                    if not sc.beamdone[s]:
                        # the beam's integrals across each layer along each view (they
                        # change only when the resonance shift changes mu0)
                        sc.beamdone[s] = 1
                        for layer in range(sz.nlayer):
                            depth = optical_depth[col, layer]
                            for u in range(sz.nvz):
                                inv = 1.0 / view_cosines[u]
                                sc.bA[(layer * sz.nsun + s) * sz.nvz + u] = dexp_from_zero(
                                    sec + inv, depth,
                                    ly.eb[layer * sz.nsun + s] * sc.et[layer * sz.nvz + u])
                                sc.bB[(layer * sz.nsun + s) * sz.nvz + u] = dexp_cached(
                                    inv, sec, depth, sc.et[layer * sz.nvz + u],
                                    ly.eb[layer * sz.nsun + s])
                    layer = sz.nlayer - 1
                    x = 0.0
                    if mode == 0:
                        for i in range(n):
                            x = x + 2.0 * surface_albedo[col] * wq[i] * mu[i] \
                                * quadrature_radiance(&sz, &ly, layer, s, i, False,
                                                      optical_depth[col, layer],
                                                      ly.eb[layer * sz.nsun + s],
                                                      &ly.ek[layer * n], sc.ones, thermal)
                        x = x + sc.surfbeam[s]
                        if thermal:
                            x = x + (1.0 - surface_albedo[col]) * planck_surface[col]
                    for u in range(sz.nvz):
                        umu = view_cosines[u]
                        sc.iup[(sz.nlayer * sz.nsun + s) * sz.nvz + u] = x
                        for layer in range(sz.nlayer - 1, -1, -1):
                            sc.iup[(layer * sz.nsun + s) * sz.nvz + u] = \
                                sc.iup[((layer + 1) * sz.nsun + s) * sz.nvz + u] \
                                * sc.eu[layer * sz.nvz + u] \
                                + upward_layer(&sz, &sc, &ly, layer, s, u, umu,
                                               optical_depth[col, layer],
                                               thermal and mode == 0)
                        sc.idn[s * sz.nvz + u] = top_radiance[col] if mode == 0 else 0.0
                        for layer in range(sz.nlayer):
                            sc.idn[((layer + 1) * sz.nsun + s) * sz.nvz + u] = \
                                sc.idn[(layer * sz.nsun + s) * sz.nvz + u] \
                                * sc.eu[layer * sz.nvz + u] \
                                + downward_layer(&sz, &sc, &ly, layer, s, u, umu,
                                                 optical_depth[col, layer],
                                                 thermal and mode == 0)
                        for p in range(sz.npos):
                            layer = position_layer[p]
                            # on a level the value is already known
                            if position_fraction[p] == 0.0:
                                sc.radm[((s * sz.npos + p) * 2 + 0) * sz.nvz + u] = \
                                    sc.iup[(layer * sz.nsun + s) * sz.nvz + u]
                                sc.radm[((s * sz.npos + p) * 2 + 1) * sz.nvz + u] = \
                                    sc.idn[(layer * sz.nsun + s) * sz.nvz + u]
                                continue
                            if position_fraction[p] == 1.0:
                                sc.radm[((s * sz.npos + p) * 2 + 0) * sz.nvz + u] = \
                                    sc.iup[((layer + 1) * sz.nsun + s) * sz.nvz + u]
                                sc.radm[((s * sz.npos + p) * 2 + 1) * sz.nvz + u] = \
                                    sc.idn[((layer + 1) * sz.nsun + s) * sz.nvz + u]
                                continue
                            dt1 = position_fraction[p] * optical_depth[col, layer]
                            dt2 = optical_depth[col, layer] - dt1
                            sc.radm[((s * sz.npos + p) * 2 + 0) * sz.nvz + u] = \
                                sc.iup[((layer + 1) * sz.nsun + s) * sz.nvz + u] \
                                * exp(-dt2 / umu) + upward_partial(
                                    &sz, &sc, &ly, layer, s, u, umu, dt1, dt2, sec,
                                    thermal and mode == 0)
                            sc.radm[((s * sz.npos + p) * 2 + 1) * sz.nvz + u] = \
                                sc.idn[(layer * sz.nsun + s) * sz.nvz + u] \
                                * exp(-dt1 / umu) + downward_partial(
                                    &sz, &sc, &ly, layer, s, u, umu, dt1, dt2, sec,
                                    thermal and mode == 0)
                # add this term and test convergence of the Fourier series: the change is
                # max |term| / max(|sum|, 1e-14 max |sum|) over every output. The exact value
                # needs a second pass (the floor needs the new maximum); it is only made when
                # the first pass finds an output with |term| > tolerance |sum|, since
                # otherwise the change cannot exceed the tolerance.
                # (radm holds (sun, position, direction, view cosine) in the order of the
                # output's leading axes; the column's outputs are one contiguous block)
                change = 0.0
                biggest = 0.0
                unsettled = False
                for a in range(sz.nva):
                    sc.cosm[a] = cos(mode * view_azimuths[a])
                total_out = &radiance[col, 0, 0, 0, 0, 0]
                for q in range(sz.nsun * sz.npos * 2 * sz.nvz):
                    value = sc.radm[q]
                    for a in range(sz.nva):
                        cm = sc.cosm[a] * value
                        total_out[q * sz.nva + a] += cm
                        size = fabs(total_out[q * sz.nva + a])
                        biggest = max(biggest, size)
                        if fabs(cm) > fourier_tolerance * size:
                            unsettled = True
                if mode > 0 and unsettled:
                    floor_value = 1e-300 + 1e-14 * biggest
                    for q in range(sz.nsun * sz.npos * 2 * sz.nvz):
                        value = fabs(sc.radm[q])
                        for a in range(sz.nva):
                            size = fabs(total_out[q * sz.nva + a])
                            change = max(change, fabs(sc.cosm[a]) * value
                                         / max(size, floor_value))
                if mode > 0:
                    if change <= fourier_tolerance:
                        small_run = small_run + 1
                    else:
                        small_run = 0
                    if small_run >= 2:
                        break
            if code != 0:
                continue
            # nothing leaves the kernel as NaN or infinity without a status
            for s in range(sz.nsun):
                for p in range(sz.npos):
                    if not (isfinite(flux_up[col, s, p]) and isfinite(flux_down[col, s, p])
                            and isfinite(mean_intensity[col, s, p])):
                        set_status(status, col, 9, 0, 0, 0)
                    for i in range(2):
                        for u in range(sz.nvz):
                            for a in range(sz.nva):
                                if not isfinite(radiance[col, s, p, i, u, a]):
                                    set_status(status, col, 9, 0, 0, 0)
    return None


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
):
    """Add ``sign`` times the singly scattered beam radiance to ``radiance``.

    phase_function (column, layer, sun, 2, vz, va) holds P(cos T) of each layer for each
    view direction (0 up, 1 down); radiance is (column, sun, pos, 2, vz, va). No surface
    term: the surface-reflected beam is identical in the exact and truncated problems.
    """
    cdef Py_ssize_t ncol = optical_depth.shape[0], nlay = optical_depth.shape[1]
    cdef Py_ssize_t nsun = sun_cosine.shape[1], npos = position_layer.shape[0]
    cdef Py_ssize_t nvz = view_cosines.shape[0], nva = radiance.shape[5]
    cdef Py_ssize_t col, s, u, a, layer, p
    cdef double mu0, sec, inv, beam, dt1, dt2, up, down
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
                for u in range(nvz):
                    inv = 1.0 / view_cosines[u]
                    for layer in range(nlay):
                        beam = sun_irradiance[col, s] / (4.0 * PI) \
                            * single_scattering_albedo[col, layer] \
                            * exp(-tops[layer] * sec) * inv
                        across[layer] = exp(-optical_depth[col, layer] * inv)
                        source_up[layer] = beam * dexp(0.0, sec + inv, optical_depth[col, layer])
                        source_down[layer] = beam * dexp(inv, sec, optical_depth[col, layer])
                    for p in range(npos):
                        layer = position_layer[p]
                        dt1 = position_fraction[p] * optical_depth[col, layer]
                        dt2 = optical_depth[col, layer] - dt1
                        beam = sun_irradiance[col, s] / (4.0 * PI) \
                            * single_scattering_albedo[col, layer] * inv
                        below[p] = exp(-dt2 * inv)
                        part_up[p] = beam * exp(-(tops[layer] + dt1) * sec) \
                            * dexp(0.0, sec + inv, dt2)
                        above[p] = exp(-dt1 * inv)
                        part_down[p] = beam * exp(-tops[layer] * sec) * dexp(inv, sec, dt1)
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
