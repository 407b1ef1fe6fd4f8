# cython: language_level=3, boundscheck=False, wraparound=False, cdivision=True
# cython: initializedcheck=False
"""Layer solutions of one Fourier term: the discrete-ordinates eigen-problem and sources.

Method (Stamnes and Swanson 1981; Thomas and Stamnes 1999; the symmetric reduction of
Nakajima and Tanaka 1986):

* Radiances are expanded in azimuth, I = sum_m I^m(t, mu) cos(m phi); each Fourier term is
  solved with double-Gauss quadrature (``n`` cosines per hemisphere).
* Homogeneous problem: with sums S = I+ + I- and differences D = I+ - I- (weights folded in
  symmetrically) the 2n x 2n system becomes M D' = Dmat S, M S' = Emat D with symmetric
  Dmat = I - w K_even and Emat = I - w K_odd. With Cholesky factors Dmat = R^T R and
  Emat = L L^T, the eigenvalues k are the singular values of Z = R M^-1 L. Singular values
  carry an absolute error of eps * max(k) rather than eps * max(k)^2 (as the eigenvalues k^2
  of a product would), which keeps the slowly decaying diffusion mode of a nearly
  conservative layer accurate. K_even and K_odd of all layers come from one dgemm per term.
* Particular solutions: the beam term is expanded in the singular vectors, so that it costs
  O(n^2) and its resonance (mu0 * k = 1) is explicit (the layer's R^-1 U and L^-T V, kept
  from the eigen-solution, carry it in and out of the singular bases, so that a sun angle
  costs four matrix-vector products and no triangular solve); when mu0 * k comes within
  RESONANCE_GAP of 1 in any layer, mu0 is shifted by 2 * RESONANCE_GAP (relative) for that
  Fourier term, which bounds both the round-off amplification and the shift error by about
  1e-8. The Planck source linear in optical depth has a closed-form particular solution.

Per term and layer the unavoidable work is two dpotrf and one dgesvd of n x n matrices.
No call here may hand work to OpenBLAS's thread pool for small matrices (its dtrtrs always
does, hence dtrsm; the batched dgemm stays under the threading threshold): the kernel runs
in dask's or the caller's threads, and a nested pool only oversubscribes the cores.

A pseudo-spherical beam (Dahlback and Stamnes 1991) changes only the beam's geometry: each
layer's source has its own transmittance to the layer top (``ttop``) and its own cosine
(``mu0l``), set by ``spherical_beam_geometry``; ``beam_particular`` takes that cosine for the
attenuation and the true mu0 for the angular part. A new source term adds its particular
solution here, beside ``beam_particular``; Stokes
components would enlarge the blocks of ``layer_eigen``; derivatives with respect to layer
properties would differentiate these per-layer solutions.
"""

from libc.math cimport exp, fabs
from libc.string cimport memcpy
from scipy.linalg.cython_blas cimport dgemm, dtrmm, dtrsm, dtrsv
from scipy.linalg.cython_lapack cimport dgesvd, dpotrf

from lamina._kernel._lapack_int cimport lapack_int
from lamina._kernel.common cimport (
    C_CONSERVATIVE_GAP, C_RESONANCE_GAP, PI, STATUS_DIFFERENCE_CHOLESKY, STATUS_SINGULAR_VALUES,
    STATUS_SUM_CHOLESKY, Column, Grid, Layers, Scratch, Sizes, column_dots, legendre_table,
    planck_line,
)


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
        failed_code[0] = STATUS_DIFFERENCE_CHOLESKY
        failed_info[0] = info
        return 1
    dpotrf(&uplo_l, &ni, lf, &ni, &info)
    if info != 0:
        failed_code[0] = STATUS_SUM_CHOLESKY
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
        failed_code[0] = STATUS_SINGULAR_VALUES
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
    planck_line(w, depth, top, bottom, kmin, &ly.b0[layer], &ly.b1[layer])


cdef int homogeneous_solutions(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Grid *gr,
                               Py_ssize_t mode, Py_ssize_t *failed_layer,
                               Py_ssize_t *failed_code, lapack_int *failed_info) noexcept nogil:
    """Eigen-solutions of every layer for Fourier term ``mode``, and the thermal sources.

    Leaves the quadrature Legendre tables of the term in ``sc.lq``, ``sc.aw`` and, per layer,
    k, the mode vectors, exp(-k tau) across the layer (``ly.ek``, used by the boundary-value
    problem, the fluxes and the radiances) and, for the thermal term 0, the Planck particular
    solution. Returns 1 (and the failing layer, status code and LAPACK info) on a failure.
    """
    cdef Py_ssize_t n = sz.n, nl = sz.nl, i, l, layer
    cdef double w, depth
    legendre_table(mode, nl, gr.mu, n, sc.lq)
    for i in range(n):
        for l in range(nl):
            sc.aw[l + i * nl] = sc.lq[l + i * nl] * gr.sqw[i]
    scattering_matrices(sz, sc, mode, cl.moments)
    for layer in range(sz.nlayer):
        w = min(cl.albedo[layer], 1.0 - C_CONSERVATIVE_GAP)
        sc.ce = sc.ceall + layer * nl
        sc.co = sc.coall + layer * nl
        if layer_eigen(sz, sc, ly, layer, w, gr.mu, gr.sqw, failed_code, failed_info) != 0:
            failed_layer[0] = layer
            return 1
        depth = cl.tau[layer]
        for i in range(n):
            ly.ek[layer * n + i] = exp(-ly.k[layer * n + i] * depth)
        if cl.thermal and mode == 0:
            # while this layer's Cholesky factor is in the scratch
            thermal_slope(ly, layer, n, depth, w, cl.planck[layer], cl.planck[layer + 1])
            thermal_particular(sz, sc, ly, layer, gr.mu, gr.sqw)
    return 0


cdef void beam_geometry(Sizes *sz, Scratch *sc, Layers *ly, Column *cl,
                        Py_ssize_t mode) noexcept nogil:
    """The sun cosines of term ``mode`` (resonance shift) and the beam's layer transmittances.

    Keeps mu0 * k at least RESONANCE_GAP away from 1 in every layer, tabulates the Legendre
    functions at the (shifted) sun cosines and, when mu0 differs from the last term's,
    recomputes the transmittance to each layer top (``ttop``) and across each layer (``eb``)
    and marks the beam's view-angle integrals stale (``beamdone``). The cosine of every
    layer (``mu0l``) is the shifted mu0; a pseudo-spherical beam has its own per layer
    (``spherical_beam_geometry``).
    """
    cdef Py_ssize_t n = sz.n, s, i, layer, _attempt
    cdef double closest, x, sumtau, sec
    if cl.beam_slant != NULL:
        spherical_beam_geometry(sz, sc, ly, cl, mode)
        return
    for s in range(sz.nsun):
        sc.mu0e[s] = cl.mu0[s]
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
            sc.mu0l[layer * sz.nsun + s] = sc.mu0e[s]
            ly.ttop[layer * sz.nsun + s] = exp(-sumtau / sc.mu0e[s])
            ly.eb[layer * sz.nsun + s] = exp(-cl.tau[layer] * sec)
            sumtau = sumtau + cl.tau[layer]


cdef void spherical_beam_geometry(Sizes *sz, Scratch *sc, Layers *ly, Column *cl,
                                  Py_ssize_t mode) noexcept nogil:
    """The pseudo-spherical beam of term ``mode`` (Dahlback and Stamnes 1991).

    Each layer's beam source is S exp(-slant optical depth to its top) exp(-(t - t_top) /
    mu_layer): ``ttop`` from the slant depth to the top level, ``eb`` and the particular
    solution from the layer's effective cosine (the wrapper's vertical over slant optical
    depth of the layer), which alone is kept RESONANCE_GAP away from 1 / k of its own
    layer. The angular part of the source is the true sun cosine's (the Legendre table at
    mu0, which may be <= 0 where the beam reaches the level from below its horizon).
    """
    cdef Py_ssize_t n = sz.n, s, i, layer, _attempt, nlevel = sz.nlayer + 1
    cdef double closest, x, cosine
    cdef bint changed
    for s in range(sz.nsun):
        sc.mu0e[s] = cl.mu0[s]
        legendre_table(mode, sz.nl, &cl.mu0[s], 1, sc.l0 + s * sz.nl)
        changed = sc.mu0done[s] < 0.0
        for layer in range(sz.nlayer):
            cosine = cl.beam_cosine[s * sz.nlayer + layer]
            for _attempt in range(8):
                closest = 1.0
                for i in range(n):
                    x = fabs(cosine * ly.k[layer * n + i] - 1.0)
                    if x < closest:
                        closest = x
                if closest >= C_RESONANCE_GAP:
                    break
                cosine = cosine * (1.0 + 2.0 * C_RESONANCE_GAP)
            if changed or cosine != sc.mu0l[layer * sz.nsun + s]:
                changed = True
            sc.mu0l[layer * sz.nsun + s] = cosine
        if not changed:
            continue    # the beam's exponentials of the last term still hold
        sc.mu0done[s] = 1.0
        sc.beamdone[s] = 0
        for layer in range(sz.nlayer):
            ly.ttop[layer * sz.nsun + s] = exp(-cl.beam_slant[s * nlevel + layer])
            ly.eb[layer * sz.nsun + s] = exp(-cl.tau[layer] / sc.mu0l[layer * sz.nsun + s])


cdef void particular_solutions(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Grid *gr,
                               Py_ssize_t mode) noexcept nogil:
    """Beam particular solutions of every layer and sun angle for term ``mode``."""
    cdef Py_ssize_t layer, s
    cdef double w, amplitude
    for layer in range(sz.nlayer):
        w = min(cl.albedo[layer], 1.0 - C_CONSERVATIVE_GAP)
        for s in range(sz.nsun):
            amplitude = w * cl.irradiance[s] * (1.0 if mode == 0 else 2.0) \
                / (4.0 * PI) * ly.ttop[layer * sz.nsun + s]
            beam_particular(sz, sc, ly, layer, mode, s, amplitude,
                            sc.mu0l[layer * sz.nsun + s], gr.sqw)
