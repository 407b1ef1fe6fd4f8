# cython: language_level=3, boundscheck=False, wraparound=False, cdivision=True
# cython: initializedcheck=False
"""Layer solutions of one Fourier term of the Stokes-vector discrete-ordinate problem.

Method (the discrete-ordinate solution for polarized light of Siewert 1981 and 2000, with
the Fourier decomposition of the phase matrix of de Haan, Bosma and Hovenier 1987 and the
complex-eigenvalue treatment of Siewert 2000; Garcia and Siewert 1989 for the reduction to a
problem of half the order):

* Fourier decomposition. With lamina's azimuth and Stokes conventions (DEVELOPERS.md,
  "Polarization") the (I, Q) components are cosine series and (U, V) sine series in the
  azimuth, X(t, mu, phi) = sum_m [I^m cos, Q^m cos, U^m sin, V^m sin](m phi), and term m
  obeys a transfer equation with the real 4 x 4 kernel

      Z^m(x, x') = sum_l (2l+1) Pi^m_l(x) B_l Pi^m_l(x'),
      Pi^m_l = [[d^l_m0, 0, 0, 0], [0, R, T, 0], [0, T, R, 0], [0, 0, 0, d^l_m0]],
      R, T = (d^l_m2 +- d^l_m,-2) / 2,
      B_l = [[a1, -b1, 0, 0], [-b1, a2, 0, 0], [0, 0, a3, -b2], [0, 0, b2, a4]] (moment l),

  d^l_mn the Wigner d-functions (the real form of the generalized spherical functions,
  P^l_mn = i^(n-m) d^l_mn) and a1 .. b2 lamina's expansion coefficients
  (lamina.polarization). It is Z = C^m + S^m D' with C^m, S^m the cosine and sine parts of
  the phase matrix, Z(phi) = sum_m (2 - delta_m0) (C^m cos m phi + S^m sin m phi),
  D' = diag(-1, -1, 1, 1) (tests/test_vector_kernel.py checks this against the Fourier
  transform of the rotated phase matrix). The beam's source of term m is
  (w / 4 pi) (2 - delta_m0) Z^m(mu, -mu0) (S, 0, 0, 0) exp(-t / mu0).
* Homogeneous solutions. With A = I - W(+,+), B = W(+,-) (W = (w/2) w_j Z^m at the
  double-Gauss cosines) and D = diag(1, 1, -1, -1) per cosine, Z^m(-x, -x') = D Z^m(x, x') D
  makes the downward half the mirror image of the upward one, and sums S = X+ + D X- and
  differences Dif = X+ - D X- obey M S' = (A + B D) Dif, M Dif' = (A - B D) S. The
  eigenvalues k^2 of the real non-symmetric M^-1 (A + B D) M^-1 (A - B D) (dgeev) give the
  modes exp(-+k t); Dif = -k (A + B D)^-1 M S. Taking Dif from (A + B D), which stays
  well conditioned, rather than from the nearly singular A - B D of a nearly conservative
  term 0, keeps each computed mode an exact mode of a problem that differs from the given
  one by round-off in its absorption (the slowest mode's k, about 1e-6 for
  w = 1 - 1e-12, is wrong by about 1e-2 of itself, which is harmless), and the
  sum-and-difference unknowns of vector_common.pxd keep the mode and its mirror image from
  cancelling. Complex conjugate pairs k^2 (they occur for non-Rayleigh matrices, Siewert
  2000) give two real solutions each, the real and imaginary parts (vector_common.pxd).
* Thermal emission (term 0): the source (1 - w) B(t) e1 with B = B0 + B1 t linear in the
  depth t below the layer top has the particular solution (B0 + B1 t) e1 + B1 (y+, -D y+),
  (A + B D) y+ = (mu_i in the I rows): Z^0 scatters the isotropic unpolarized e1 into w e1
  exactly at the double-Gauss cosines (only l = 0 survives the integral, and beta1_0 = 0),
  so the constant part balances (1 - w) B e1, and the slope's mu dX/dt = mu B1 e1 gives
  the two halves (A y+ - B y- = mu e1 with y- = -D y+ is the same equation downward). The
  scalar kernel's closed form (layers.pyx) with D = 1; y+ from the LU factors of A + B D
  that the modes use. A slope that round-off cannot resolve is replaced by the layer's
  mean, by the scalar kernel's rule (``thermal_slope``).
* Beam particular solution: the 2 nn x 2 nn system for the vector z exp(-t / mu0),
  solved with dgesv. When mu0 k comes within RESONANCE_GAP of 1 for a real k in some
  layer, mu0 is shifted by 2 * RESONANCE_GAP (relative) for that term, as in the scalar
  kernel (layers.pyx).

Per term and layer: two dgemm for the kernel, one for the eigen-matrix, dgeev, dgetrf and
one dgetrs with nn right-hand sides; per sun angle one dgesv of order 2 nn.

References
----------
de Haan, J. F., Bosma, P. B. and Hovenier, J. W. (1987), Astron. Astrophys. 183, 371-391.
Garcia, R. D. M. and Siewert, C. E. (1989), J. Quant. Spectrosc. Radiat. Transfer 41,
117-145.
Siewert, C. E. (1981), Astrophys. J. 245, 1080-1086.
Siewert, C. E. (2000), J. Quant. Spectrosc. Radiat. Transfer 64, 227-254.
(Equation numbers from memory; the signs above are lamina's and are fixed by the tests.)
"""

from libc.math cimport exp, fabs, sqrt
from scipy.linalg.cython_blas cimport dgemm, dgemv
from scipy.linalg.cython_lapack cimport dgeev, dgesv, dgetrf, dgetrs

from lamina._kernel._lapack_int cimport lapack_int
from lamina._kernel.common cimport C_CONSERVATIVE_GAP, C_RESONANCE_GAP, PI, planck_line
from lamina._kernel.vector_common cimport (
    VSTATUS_EIGEN, VSTATUS_EIGENVALUE, VSTATUS_PARTICULAR, VSTATUS_SUM_FACTOR, VectorColumn,
    VectorLayers, VectorScratch, VectorSizes, stokes_sign,
)

import numpy as np


cdef void wigner_d(Py_ssize_t m, Py_ssize_t n, Py_ssize_t nl, double x,
                   double *out) noexcept nogil:
    """Wigner's d^l_mn(arccos x) for l = 0 .. nl - 1 (m >= 0, n in {0, 2, -2}).

    Started at l0 = max(m, |n|) from the closed forms d^m_mn = (-1)^(m-n) sqrt(C(2m, m+n))
    c^(m+n) s^(m-n) (m >= |n|) and, for m < 2, d^2_m2 = sqrt(24 / ((2+m)! (2-m)!))
    c^(2+m) s^(2-m), d^2_m,-2 = (-1)^m sqrt(24 / ((2+m)! (2-m)!)) c^(2-m) s^(2+m), with
    c = cos(beta/2), s = sin(beta/2) (Varshalovich, Moskalev and Khersonskii 1988, section
    4.3; from memory), then the three-term recurrence in l of lamina.polarization.
    """
    cdef Py_ssize_t l, top, i, _i, a, b
    cdef double c = sqrt(max(0.0, 0.5 * (1.0 + x))), s = sqrt(max(0.0, 0.5 * (1.0 - x)))
    cdef double start = 1.0, lower, upper, mm = <double>m, nm = <double>n
    for l in range(nl):
        out[l] = 0.0
    if m >= (n if n >= 0 else -n):
        top = m
        a = m + n
        b = m - n
        # sqrt(C(a + b, a)) c^a s^b with the factors interleaved (no overflow)
        for i in range(1, max(a, b) + 1):
            if i <= b:
                start = start * sqrt((a + i) / <double>i) * s
            if i <= a:
                start = start * c
        if b % 2:
            start = -start
    else:
        top = 2
        start = 2.0 if m == 1 else sqrt(6.0)    # sqrt(24 / ((2+m)! (2-m)!))
        if n == 2:
            for _i in range(2 + m):
                start = start * c
            for _i in range(2 - m):
                start = start * s
        else:
            for _i in range(2 - m):
                start = start * c
            for _i in range(2 + m):
                start = start * s
            if m % 2:
                start = -start
    if top >= nl:
        return
    out[top] = start
    for l in range(top, nl - 1):
        if l == 0:
            out[1] = x  # m = n = 0: the recurrence is degenerate at l = 0
            continue
        lower = sqrt(max(l * l - mm * mm, 0.0) * max(l * l - nm * nm, 0.0))
        upper = l * sqrt(((l + 1.0) * (l + 1.0) - mm * mm) * ((l + 1.0) * (l + 1.0) - nm * nm))
        out[l + 1] = ((2.0 * l + 1.0) * (l * (l + 1.0) * x - mm * nm) * out[l]
                      - (l + 1.0) * lower * out[l - 1]) / upper


cdef void pi_table(VectorSizes *sz, Py_ssize_t m, const double *x, Py_ssize_t nx,
                   Py_ssize_t ld, double *dtab, double *out) noexcept nogil:
    """Pi^m_l(x_i) of every point and moment: out[(i ns + s) + (l ns + t) ld] = Pi[s, t]."""
    cdef Py_ssize_t ns = sz.ns, nl = sz.nl, i, l, s, t
    cdef double *p = dtab
    cdef double *a = dtab + nl
    cdef double *b = dtab + 2 * nl
    for i in range(nx):
        wigner_d(m, 0, nl, x[i], p)
        if ns >= 3:
            wigner_d(m, 2, nl, x[i], a)
            wigner_d(m, -2, nl, x[i], b)
        for l in range(nl):
            for t in range(ns):
                for s in range(ns):
                    out[(i * ns + s) + (l * ns + t) * ld] = 0.0
            out[i * ns + l * ns * ld] = p[l]
            if ns >= 3:
                out[(i * ns + 1) + (l * ns + 1) * ld] = 0.5 * (a[l] + b[l])
                out[(i * ns + 2) + (l * ns + 2) * ld] = 0.5 * (a[l] + b[l])
                out[(i * ns + 1) + (l * ns + 2) * ld] = 0.5 * (a[l] - b[l])
                out[(i * ns + 2) + (l * ns + 1) * ld] = 0.5 * (a[l] - b[l])
            if ns == 4:
                out[(i * ns + 3) + (l * ns + 3) * ld] = p[l]


cdef inline double expansion_entry(const double *moments, Py_ssize_t l, Py_ssize_t t,
                                   Py_ssize_t u) noexcept nogil:
    """B_l[t, u] (module docstring) with the factor 2l + 1; moments [l][6]."""
    cdef const double *c = moments + 6 * l
    cdef double f = 2.0 * l + 1.0
    if t == u:
        return f * c[t]        # alpha1 .. alpha4
    if (t == 0 and u == 1) or (t == 1 and u == 0):
        return -f * c[4]       # -beta1
    if t == 2 and u == 3:
        return -f * c[5]       # -beta2
    if t == 3 and u == 2:
        return f * c[5]
    return 0.0


cdef void apply_expansion(VectorSizes *sz, const double *moments, const double *table,
                          Py_ssize_t nrow, Py_ssize_t ld, Py_ssize_t mode,
                          double *out) noexcept nogil:
    """out = B table^T: out[(l ns + t) + c nk] = sum_u B_l[t, u] table[c, (l ns + u)]."""
    cdef Py_ssize_t ns = sz.ns, nk = sz.nk, l, t, u, c
    cdef double acc
    for c in range(nrow):
        for l in range(sz.nl):
            for t in range(ns):
                acc = 0.0
                if l >= mode:
                    for u in range(ns):
                        acc = acc + expansion_entry(moments, l, t, u) \
                            * table[c + (l * ns + u) * ld]
                out[(l * ns + t) + c * nk] = acc


cdef void phase_fourier(VectorSizes *sz, const double *moments, Py_ssize_t mode,
                        const double *table_out, Py_ssize_t rows_out, const double *table_in,
                        Py_ssize_t rows_in, double *bt, double *out) noexcept nogil:
    """Z^m between two sets of points: out (rows_out x rows_in) = Pi_out B Pi_in^T."""
    cdef lapack_int ro = <lapack_int>rows_out, ri = <lapack_int>rows_in
    cdef lapack_int nki = <lapack_int>sz.nk
    cdef double one = 1.0, zero = 0.0
    cdef char trans_n = b'N'
    apply_expansion(sz, moments, table_in, rows_in, rows_in, mode, bt)
    dgemm(&trans_n, &trans_n, &ro, &ri, &nki, &one, <double *>table_out, &ro, bt, &nki,
          &zero, out, &ro)


cdef int layer_modes(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly, Py_ssize_t layer,
                     double w, const double *moments, Py_ssize_t mode, const double *mu,
                     const double *wq, double *thermal,
                     lapack_int *failed_info) noexcept nogil:
    """Eigen-solution of one layer and term (after the tables ``sc.pp``, ``sc.pm``).

    Leaves the weighted kernels ``wpp``, ``wpm`` (for the particular solution), the
    eigenvalues and the normalised modes, and (``thermal`` not NULL) the thermal particular
    solution's y+ there (module docstring). Returns 0 or a status code.
    """
    cdef Py_ssize_t nn = sz.nn, ns = sz.ns, i, j
    cdef lapack_int ni = <lapack_int>nn, info = 0, one_i = 1
    cdef double one = 1.0, zero = 0.0, f, f2
    cdef double *wpp = ly.wpp + layer * nn * nn
    cdef double *wpm = ly.wpm + layer * nn * nn
    cdef char trans_n = b'N', job_n = b'N', job_v = b'V'
    phase_fourier(sz, moments, mode, sc.pp, nn, sc.pp, nn, sc.bt, wpp)
    phase_fourier(sz, moments, mode, sc.pp, nn, sc.pm, nn, sc.btm, wpm)
    for j in range(nn):
        f = 0.5 * w * wq[j // ns]
        for i in range(nn):
            wpp[i + j * nn] = f * wpp[i + j * nn]
            wpm[i + j * nn] = f * wpm[i + j * nn]
            f2 = wpm[i + j * nn] * stokes_sign(j % ns)
            sc.apb[i + j * nn] = -wpp[i + j * nn] + f2
            sc.amb[i + j * nn] = -wpp[i + j * nn] - f2
        sc.apb[j + j * nn] += 1.0
        sc.amb[j + j * nn] += 1.0
    # the reduced eigen-matrix M^-1 (A + B D) M^-1 (A - B D)
    for j in range(nn):
        for i in range(nn):
            sc.tmp[i + j * nn] = sc.apb[i + j * nn] / mu[i // ns]
            sc.vr[i + j * nn] = sc.amb[i + j * nn] / mu[i // ns]
    dgemm(&trans_n, &trans_n, &ni, &ni, &ni, &one, sc.tmp, &ni, sc.vr, &ni, &zero, sc.gg, &ni)
    dgeev(&job_n, &job_v, &ni, sc.gg, &ni, sc.wr, sc.wi, sc.tmp, &one_i, sc.vr, &ni, sc.work,
          &sc.lwork, &info)
    if info != 0:
        failed_info[0] = info
        return VSTATUS_EIGEN
    dgetrf(&ni, &ni, sc.apb, &ni, sc.ipiv, &info)
    if info != 0:
        failed_info[0] = info
        return VSTATUS_SUM_FACTOR
    for j in range(nn):
        for i in range(nn):
            sc.xs[i + j * nn] = mu[i // ns] * sc.vr[i + j * nn]
    dgetrs(&trans_n, &ni, &ni, sc.apb, &ni, sc.ipiv, sc.xs, &ni, &info)
    if info != 0:
        failed_info[0] = info
        return VSTATUS_SUM_FACTOR
    if thermal != NULL:
        # the thermal particular solution's y+ = (A + B D)^-1 (mu_i in the I rows)
        for i in range(nn):
            thermal[i] = mu[i // ns] if i % ns == 0 else 0.0
        dgetrs(&trans_n, &ni, &one_i, sc.apb, &ni, sc.ipiv, thermal, &ni, &info)
        if info != 0:
            failed_info[0] = info
            return VSTATUS_SUM_FACTOR
    return store_modes(sz, sc, ly, layer, failed_info)


cdef int store_modes(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly, Py_ssize_t layer,
                     lapack_int *failed_info) noexcept nogil:
    """k, S and Dif of every mode from dgeev's (wr, wi, vr) and xs = (A + B D)^-1 M vr.

    A real k^2 <= 0 (no decaying mode) is status VSTATUS_EIGENVALUE; each mode (a complex
    pair by one common factor) is scaled to a largest component of 1.
    """
    cdef Py_ssize_t nn = sz.nn, i, j, r
    cdef double lam, kr, ki, big, sr, si, xr, xi, dr, di
    cdef double *ss = ly.ss + layer * nn * nn
    cdef double *dd = ly.dd + layer * nn * nn
    cdef double *krv = ly.kr + layer * nn
    cdef double *kiv = ly.ki + layer * nn
    cdef Py_ssize_t *partner = ly.partner + layer * nn
    j = 0
    while j < nn:
        if sc.wi[j] == 0.0:
            lam = sc.wr[j]
            if not lam > 0.0:
                failed_info[0] = <lapack_int>j
                return VSTATUS_EIGENVALUE
            kr = sqrt(lam)
            krv[j] = kr
            kiv[j] = 0.0
            partner[j] = j
            for r in range(nn):
                sr = sc.vr[r + j * nn]
                dr = -kr * sc.xs[r + j * nn]
                ss[r + j * nn] = sr
                dd[r + j * nn] = dr
            j = j + 1
            continue
        # a complex pair: principal square root of wr + i wi (wi > 0 comes first)
        lam = sqrt(sc.wr[j] * sc.wr[j] + sc.wi[j] * sc.wi[j])
        kr = sqrt(0.5 * (lam + sc.wr[j]))
        if not kr > 0.0 or j + 1 >= nn:
            failed_info[0] = <lapack_int>j
            return VSTATUS_EIGENVALUE
        ki = 0.5 * sc.wi[j] / kr
        krv[j] = kr
        krv[j + 1] = kr
        kiv[j] = ki
        kiv[j + 1] = ki
        partner[j] = j + 1
        partner[j + 1] = j
        for r in range(nn):
            sr = sc.vr[r + j * nn]
            si = sc.vr[r + (j + 1) * nn]
            xr = sc.xs[r + j * nn]
            xi = sc.xs[r + (j + 1) * nn]
            dr = -(kr * xr - ki * xi)
            di = -(kr * xi + ki * xr)
            ss[r + j * nn] = sr
            ss[r + (j + 1) * nn] = si
            dd[r + j * nn] = dr
            dd[r + (j + 1) * nn] = di
        j = j + 2
    # normalise each mode (a pair by one common factor)
    j = 0
    while j < nn:
        big = 0.0
        for i in range(j, partner[j] + 1 if partner[j] > j else j + 1):
            for r in range(nn):
                big = max(big, max(fabs(ss[r + i * nn]), fabs(dd[r + i * nn])))
        if big > 0.0:
            for i in range(j, partner[j] + 1 if partner[j] > j else j + 1):
                for r in range(nn):
                    ss[r + i * nn] /= big
                    dd[r + i * nn] /= big
        j = partner[j] + 1 if partner[j] > j else j + 1
    return 0


cdef int vector_homogeneous(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly,
                            VectorColumn *cl, const double *mu, const double *wq,
                            Py_ssize_t mode, Py_ssize_t *failed_layer,
                            lapack_int *failed_info) noexcept nogil:
    """Tables of term ``mode`` at +-mu and the eigen-solution of every layer."""
    cdef Py_ssize_t layer, i, nn = sz.nn
    cdef int code
    cdef double w
    pi_table(sz, mode, mu, sz.n, nn, sc.dtab, sc.pp)
    for i in range(sz.n):
        sc.rhs[i] = -mu[i]
    pi_table(sz, mode, sc.rhs, sz.n, nn, sc.dtab, sc.pm)
    cdef bint thermal = cl.thermal and mode == 0
    for layer in range(sz.nlayer):
        w = min(cl.albedo[layer], 1.0 - C_CONSERVATIVE_GAP)
        code = layer_modes(sz, sc, ly, layer, w, cl.moments + layer * sz.nl * 6, mode, mu, wq,
                           ly.yth + layer * nn if thermal else NULL, failed_info)
        if code != 0:
            failed_layer[0] = layer
            return code
        if thermal:
            thermal_slope(sz, ly, layer, cl.tau[layer], w, cl.planck[layer],
                          cl.planck[layer + 1])
    return 0


cdef void thermal_slope(VectorSizes *sz, VectorLayers *ly, Py_ssize_t layer, double depth,
                        double w, double top, double bottom) noexcept nogil:
    """The Planck source B0 + B1 t of a layer, or its mean where the slope is unresolvable.

    The scalar kernel's rule (layers.pyx, ``thermal_slope``): the linear part of the
    particular solution is cancelled through the slowest mode (decay rate k_min), with a
    round-off error of about eps |B1| / k_min, while the mean changes the emission by about
    (1 - w) |B1| depth^2 / 12: the mean where (1 - w) depth^2 k_min < 12 eps.
    """
    cdef Py_ssize_t j, nn = sz.nn
    cdef double kmin = ly.kr[layer * nn]
    for j in range(1, nn):
        kmin = min(kmin, ly.kr[layer * nn + j])
    planck_line(w, depth, top, bottom, kmin, &ly.b0[layer], &ly.b1[layer])


cdef void vector_beam_geometry(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly,
                               VectorColumn *cl) noexcept nogil:
    """Sun cosines of this term (kept RESONANCE_GAP from 1 / k) and beam transmittances."""
    cdef Py_ssize_t s, i, layer, _attempt
    cdef double closest, x, sumtau
    for s in range(sz.nsun):
        sc.mu0e[s] = cl.mu0[s]
        for _attempt in range(8):
            closest = 1.0
            for i in range(sz.nlayer * sz.nn):
                if ly.ki[i] == 0.0:
                    x = fabs(sc.mu0e[s] * ly.kr[i] - 1.0)
                    if x < closest:
                        closest = x
            if closest >= C_RESONANCE_GAP:
                break
            sc.mu0e[s] = sc.mu0e[s] * (1.0 + 2.0 * C_RESONANCE_GAP)
        sumtau = 0.0
        for layer in range(sz.nlayer):
            ly.ttop[layer * sz.nsun + s] = exp(-sumtau / sc.mu0e[s])
            ly.eb[layer * sz.nsun + s] = exp(-cl.tau[layer] / sc.mu0e[s])
            sumtau = sumtau + cl.tau[layer]


cdef double beam_coefficients(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly,
                              VectorColumn *cl, Py_ssize_t layer, Py_ssize_t sun,
                              Py_ssize_t mode) noexcept nogil:
    """B Pi(-mu0) e1 of a layer into ``sc.bq``; returns the beam's amplitude in the layer.

    The amplitude is w S (2 - delta_m0) / (4 pi) T_top, so that the source at the points of a
    table Pi is amplitude * Pi bq (0 where the layer does not scatter or the beam is gone).
    """
    cdef Py_ssize_t ns = sz.ns, nl = sz.nl, l, t
    cdef double w = min(cl.albedo[layer], 1.0 - C_CONSERVATIVE_GAP)
    cdef const double *moments = cl.moments + layer * nl * 6
    wigner_d(mode, 0, nl, -sc.mu0e[sun], sc.dtab)
    for l in range(nl):
        for t in range(ns):
            sc.bq[l * ns + t] = expansion_entry(moments, l, t, 0) * sc.dtab[l] \
                if l >= mode else 0.0
    return w * cl.irradiance[sun] * (1.0 if mode == 0 else 2.0) / (4.0 * PI) \
        * ly.ttop[layer * sz.nsun + sun]


cdef int vector_particular(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly,
                           VectorColumn *cl, const double *mu, Py_ssize_t mode,
                           Py_ssize_t *failed_layer, lapack_int *failed_info) noexcept nogil:
    """Beam particular solutions z of every layer and sun (after vector_beam_geometry).

    z solves [[A + M / mu0, -B], [-D B D, D A D - M / mu0]] z = (q+, q-), the source
    q = (w S (2 - delta_m0) / 4 pi) T_top Z^m(+-mu_i, -mu0) e1 (module docstring).
    """
    cdef Py_ssize_t nn = sz.nn, ns = sz.ns, s, layer, i, j
    cdef Py_ssize_t n2 = 2 * nn
    cdef lapack_int ni = <lapack_int>nn, nk = <lapack_int>sz.nk, n2i = <lapack_int>n2
    cdef lapack_int one_i = 1, info = 0
    cdef double zero = 0.0, amplitude, inv0, sign
    cdef double *wpp
    cdef double *wpm
    cdef double *zp
    cdef char trans_n = b'N'
    for s in range(sz.nsun):
        inv0 = 1.0 / sc.mu0e[s]
        for layer in range(sz.nlayer):
            zp = ly.zp + (layer * sz.nsun + s) * n2
            amplitude = beam_coefficients(sz, sc, ly, cl, layer, s, mode)
            if amplitude == 0.0:
                for i in range(n2):
                    zp[i] = 0.0
                continue
            dgemv(&trans_n, &ni, &nk, &amplitude, sc.pp, &ni, sc.bq, &one_i, &zero, zp,
                  &one_i)
            dgemv(&trans_n, &ni, &nk, &amplitude, sc.pm, &ni, sc.bq, &one_i, &zero, zp + nn,
                  &one_i)
            wpp = ly.wpp + layer * nn * nn
            wpm = ly.wpm + layer * nn * nn
            for j in range(nn):
                for i in range(nn):
                    sign = stokes_sign(i % ns) * stokes_sign(j % ns)
                    sc.big[i + j * n2] = -wpp[i + j * nn]
                    sc.big[i + (nn + j) * n2] = -wpm[i + j * nn]
                    sc.big[nn + i + j * n2] = -sign * wpm[i + j * nn]
                    sc.big[nn + i + (nn + j) * n2] = -sign * wpp[i + j * nn]
                sc.big[j + j * n2] += 1.0 + mu[j // ns] * inv0
                sc.big[nn + j + (nn + j) * n2] += 1.0 - mu[j // ns] * inv0
            dgesv(&n2i, &one_i, sc.big, &n2i, sc.ipiv, zp, &n2i, &info)
            if info != 0:
                failed_layer[0] = layer
                failed_info[0] = info
                return VSTATUS_PARTICULAR
    return 0


def wigner_d_for_tests(Py_ssize_t m, Py_ssize_t n, Py_ssize_t nl, const double[::1] x):
    """d^l_mn(arccos x) (x.size, nl) from the kernel's recurrence (a test hook)."""
    if m < 0 or n not in (0, 2, -2) or nl < 1:
        raise ValueError("wigner_d_for_tests: m >= 0, n in (0, 2, -2), nl >= 1")
    out = np.zeros((x.shape[0], nl))
    cdef double[:, ::1] view = out
    cdef Py_ssize_t i
    for i in range(x.shape[0]):
        wigner_d(m, n, nl, x[i], &view[i, 0])
    return out


def phase_fourier_for_tests(Py_ssize_t mode, const double[:, ::1] moments,
                            const double[::1] x_out, const double[::1] x_in, Py_ssize_t ns):
    """Z^m(x_out, x_in) (x_out.size * ns, x_in.size * ns) of the kernel (a test hook).

    ``moments`` (moment, 6) in lamina's order; rows and columns are (cosine, Stokes).
    """
    if moments.shape[1] != 6 or ns not in (1, 3, 4) or mode < 0:
        raise ValueError("phase_fourier_for_tests: moments (moment, 6), ns in (1, 3, 4)")
    cdef VectorSizes sz
    sz.ns = ns
    sz.nl = moments.shape[0]
    sz.nk = sz.nl * ns
    cdef Py_ssize_t ro = x_out.shape[0] * ns, ri = x_in.shape[0] * ns
    cdef double[::1] tout = np.zeros(ro * sz.nk), tin = np.zeros(ri * sz.nk)
    cdef double[::1] bt = np.zeros(ri * sz.nk), dtab = np.zeros(3 * sz.nl)
    out = np.zeros((ri, ro))
    cdef double[:, ::1] view = out
    pi_table(&sz, mode, &x_out[0], x_out.shape[0], ro, &dtab[0], &tout[0])
    pi_table(&sz, mode, &x_in[0], x_in.shape[0], ri, &dtab[0], &tin[0])
    phase_fourier(&sz, &moments[0, 0], mode, &tout[0], ro, &tin[0], ri, &bt[0], &view[0, 0])
    return out.T.copy()  # column-major (ro x ri) as a C array (ri, ro) -> transpose
