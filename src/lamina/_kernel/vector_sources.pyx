# cython: language_level=3, boundscheck=False, wraparound=False, cdivision=True
# cython: initializedcheck=False
"""Stokes vectors at view cosines: integration of the vector source function.

Method (the source-function integration of the discrete-ordinate method, Chandrasekhar 1950
and Stamnes and Swanson 1981 for the scalar case, applied to every Stokes component as in
Siewert 2000): the source function of term m along a view direction (cosine +-mu_u) in a
layer is

    J(t) = (w/2) sum_j w_j [Z^m(+-mu_u, mu_j) X+(t, mu_j) + Z^m(+-mu_u, -mu_j) X-(t, mu_j)]
           + (w S (2 - delta_m0) / 4 pi) T_top Z^m(+-mu_u, -mu0) e1 exp(-t / mu0),

with X the layer's solution (modes and particular solution, vector_common.pxd). Each term is
an exponential in t, so the radiance leaving the layer, int J exp(-t / mu_u) dt / mu_u up to
its top and int J exp(-(tau - t) / mu_u) dt / mu_u down to its bottom, is a sum of
exponential differences: ``dexp`` of the scalar kernel for real eigenvalues and the beam,
its complex form ``complex_dexp`` for complex pairs. Thermal emission (term 0) adds
(1 - w) B(t) e1 and the kernels applied to the thermal particular solution, linear in t,
whose integrals are closed forms (``thermal_up``, ``thermal_down``, as the scalar
kernel's). The levels follow by transmitting upward from the surface (term 0, I only: the
Lambertian surface's A / pi times the downward flux, and (1 - A) B_surface) and downward
from the top (the isotropic top radiance: term 0, I only).

The modes' part of the source is formed once per layer with two dgemm (the kernels at the
view cosines times the modes' vectors) and the beam's with two dgemv per sun angle.

References
----------
Chandrasekhar, S. (1950), Radiative Transfer, Oxford University Press.
Siewert, C. E. (2000), J. Quant. Spectrosc. Radiat. Transfer 64, 227-254.
Stamnes, K. and Swanson, R. A. (1981), J. Atmos. Sci. 38, 387-399.
"""

from libc.math cimport cos, exp, expm1, fabs, sin
from scipy.linalg.cython_blas cimport dgemm, dgemv

from lamina._kernel._lapack_int cimport lapack_int
from lamina._kernel.common cimport C_CONSERVATIVE_GAP, PI, dexp
from lamina._kernel.vector_common cimport (
    VectorColumn, VectorLayers, VectorScratch, VectorSizes, stokes_sign, thermal_value,
)
from lamina._kernel.vector_layers cimport beam_coefficients, phase_fourier, pi_table


cdef inline void complex_dexp(double ar, double ai, double br, double bi, double length,
                              double *out_r, double *out_i) noexcept nogil:
    """(exp(-a L) - exp(-b L)) / (b - a) for complex a, b (continuous at a == b).

    Written as exp(-a L) L (1 - exp(-x)) / x with x = (b - a) L, the last factor from its
    Taylor series (to x^4, error below 2e-13 relative) where |x| < 1e-2. The value is
    symmetric in a and b: a is taken as the one with the smaller real part, so that
    Re x >= 0 and neither factor overflows (a thick layer seen at a grazing view has
    exp(-a L) below the smallest double where exp(-x) would exceed the largest).
    """
    if br < ar:
        ar, br = br, ar
        ai, bi = bi, ai
    cdef double xr = (br - ar) * length, xi = (bi - ai) * length
    cdef double er = exp(-ar * length) * cos(ai * length)
    cdef double ei = -exp(-ar * length) * sin(ai * length)
    cdef double fr, fi, gr, gi, den, x2r, x2i, x3r, x3i, x4r, x4i
    if fabs(xr) + fabs(xi) < 1e-2:
        x2r = xr * xr - xi * xi
        x2i = 2.0 * xr * xi
        x3r = x2r * xr - x2i * xi
        x3i = x2r * xi + x2i * xr
        x4r = x2r * x2r - x2i * x2i
        x4i = 2.0 * x2r * x2i
        fr = 1.0 - 0.5 * xr + x2r / 6.0 - x3r / 24.0 + x4r / 120.0
        fi = -0.5 * xi + x2i / 6.0 - x3i / 24.0 + x4i / 120.0
    else:
        # 1 - exp(-x) = -expm1(-xr) cos(xi) + (1 - cos(xi)) + i exp(-xr) sin(xi)
        gr = -expm1(-xr) * cos(xi) + 2.0 * sin(0.5 * xi) * sin(0.5 * xi)
        gi = exp(-xr) * sin(xi)
        den = xr * xr + xi * xi
        fr = (gr * xr + gi * xi) / den
        fi = (gi * xr - gr * xi) / den
    out_r[0] = length * (er * fr - ei * fi)
    out_i[0] = length * (er * fi + ei * fr)


cdef void view_kernels(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly,
                       VectorColumn *cl, Py_ssize_t layer, Py_ssize_t mode,
                       const double *wq) noexcept nogil:
    """The view-cosine kernels ``hup``, ``hdn`` of a layer and their products ``hf``."""
    cdef Py_ssize_t nn = sz.nn, ns = sz.ns, rows = sz.nvz * sz.ns, n2 = 2 * nn, i, j, r
    cdef lapack_int ri = <lapack_int>rows, nni = <lapack_int>nn, n2i = <lapack_int>n2
    cdef double w = min(cl.albedo[layer], 1.0 - C_CONSERVATIVE_GAP), f, one = 1.0, zero = 0.0
    cdef const double *moments = cl.moments + layer * sz.nl * 6
    cdef const double *ss = ly.ss + layer * nn * nn
    cdef const double *dd = ly.dd + layer * nn * nn
    cdef double *target
    cdef const double *table
    cdef const double *quadrature
    cdef Py_ssize_t half, side
    cdef char trans_n = b'N'
    for side in range(2):           # 0: view upward (+mu_u), 1: downward (-mu_u)
        table = sc.pvu if side == 0 else sc.pvd
        target = sc.hup if side == 0 else sc.hdn
        for half in range(2):       # quadrature cosines +mu_j, then -mu_j
            quadrature = sc.pp if half == 0 else sc.pm
            phase_fourier(sz, moments, mode, table, rows, quadrature, nn, sc.bt, sc.zv)
            for j in range(nn):
                f = 0.5 * w * wq[j // ns]
                for r in range(rows):
                    target[r + (half * nn + j) * rows] = f * sc.zv[r + j * rows]
    # the modes' vectors F_j = ((S + Dif) / 2, D (S - Dif) / 2) and F'_j (mirror image)
    for j in range(nn):
        for i in range(nn):
            f = stokes_sign(i % ns)
            sc.fmat[i + j * n2] = 0.5 * (ss[i + j * nn] + dd[i + j * nn])
            sc.fmat[nn + i + j * n2] = 0.5 * f * (ss[i + j * nn] - dd[i + j * nn])
            sc.fmir[i + j * n2] = 0.5 * (ss[i + j * nn] - dd[i + j * nn])
            sc.fmir[nn + i + j * n2] = 0.5 * f * (ss[i + j * nn] + dd[i + j * nn])
    for side in range(2):
        for half in range(2):
            dgemm(&trans_n, &trans_n, &ri, &nni, &n2i, &one, sc.hup if side == 0 else sc.hdn,
                  &ri, sc.fmat if half == 0 else sc.fmir, &n2i, &zero,
                  sc.hf + (2 * side + half) * rows * nn, &ri)


cdef inline double mode_integral(const double *hf, const double *hfm, Py_ssize_t rows,
                                 Py_ssize_t q, Py_ssize_t j, Py_ssize_t p, double ki,
                                 bint second, double er, double ei, double mr,
                                 double mi) noexcept nogil:
    """Integrated source of unknown j (``second``: nn + j) at view row q.

    (er, ei) integrates F_j's exponential and (mr, mi) F'_j's (imaginary parts 0 for a
    real eigenvalue); hf, hfm are the kernel times F and F' (vector_common.pxd).
    """
    if ki == 0.0:
        if not second:
            return hf[q + j * rows] * er + hfm[q + j * rows] * mr
        return hf[q + j * rows] * er - hfm[q + j * rows] * mr
    if p > j:       # the real part of the pair
        if not second:
            return hf[q + j * rows] * er - hf[q + p * rows] * ei
        return hfm[q + j * rows] * mr - hfm[q + p * rows] * mi
    if not second:  # the imaginary part
        return hf[q + j * rows] * er + hf[q + p * rows] * ei
    return hfm[q + j * rows] * mr + hfm[q + p * rows] * mi


cdef inline void times_exponential(double kr, double ki, double t, double *re,
                                   double *im) noexcept nogil:
    """(re + i im) times exp(-(kr + i ki) t), in place."""
    cdef double e = exp(-kr * t), c = e * cos(ki * t), d = -e * sin(ki * t), x = re[0]
    re[0] = c * x - d * im[0]
    im[0] = c * im[0] + d * x


cdef void view_integrals(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly,
                         VectorColumn *cl, Py_ssize_t layer, Py_ssize_t mode, double t_up,
                         double t_down, double *dest_up, double *dest_down) noexcept nogil:
    """A layer's source integrated along every view row (after view_kernels).

    Upward from the layer bottom to depth ``t_up``, int_t^tau J exp(-(t' - t) / mu) dt' / mu,
    into ``dest_up[s rows + q]``; downward from the layer top to ``t_down``,
    int_0^t J exp(-(t - t') / mu) dt' / mu, into ``dest_down``. Each exponential of J
    integrates in closed form: exp(-k t') over [t, tau] is exp(-k t) dexp(0, k + 1/mu,
    tau - t), exp(-k (tau - t')) gives dexp(1/mu, k, tau - t), and over [0, t] the two
    trade places.
    """
    cdef Py_ssize_t nn = sz.nn, ns = sz.ns, rows = sz.nvz * sz.ns, n2 = 2 * nn
    cdef Py_ssize_t s, u, q, j, p, neq = 2 * nn * sz.nlayer
    cdef lapack_int ri = <lapack_int>rows, n2i = <lapack_int>n2, nki = <lapack_int>sz.nk
    cdef lapack_int one_i = 1
    cdef double tau = cl.tau[layer], inv, sec, kr, ki, amplitude, one = 1.0, zero = 0.0
    cdef double lu = tau - t_up, ld = t_down
    cdef double er, ei, mr, mi, dr, di, nr, ni, up, down
    cdef const double *coef
    cdef const Py_ssize_t *partner = ly.partner + layer * nn
    cdef const double *hf_up = sc.hf
    cdef const double *hfm_up = sc.hf + rows * nn
    cdef const double *hf_dn = sc.hf + 2 * rows * nn
    cdef const double *hfm_dn = sc.hf + 3 * rows * nn
    cdef char trans_n = b'N'
    cdef bint thermal = cl.thermal and mode == 0
    if thermal:
        thermal_source(sz, sc, ly, cl, layer)
    for s in range(sz.nsun):
        coef = ly.coef + s * neq + 2 * nn * layer
        sec = 1.0 / sc.mu0e[s]
        dgemv(&trans_n, &ri, &n2i, &one, sc.hup, &ri, ly.zp + (layer * sz.nsun + s) * n2,
              &one_i, &zero, sc.hz, &one_i)
        dgemv(&trans_n, &ri, &n2i, &one, sc.hdn, &ri, ly.zp + (layer * sz.nsun + s) * n2,
              &one_i, &zero, sc.hz + rows, &one_i)
        amplitude = beam_coefficients(sz, sc, ly, cl, layer, s, mode)
        if amplitude != 0.0:
            dgemv(&trans_n, &ri, &nki, &amplitude, sc.pvu, &ri, sc.bq, &one_i, &one, sc.hz,
                  &one_i)
            dgemv(&trans_n, &ri, &nki, &amplitude, sc.pvd, &ri, sc.bq, &one_i, &one,
                  sc.hz + rows, &one_i)
        for u in range(sz.nvz):
            inv = 1.0 / sc.umu[u]
            for q in range(u * ns, (u + 1) * ns):
                up = sc.hz[q] * exp(-t_up * sec) * dexp(0.0, sec + inv, lu) * inv
                down = sc.hz[rows + q] * dexp(inv, sec, ld) * inv
                for j in range(nn):
                    kr = ly.kr[layer * nn + j]
                    ki = ly.ki[layer * nn + j]
                    p = partner[j]
                    if ki == 0.0:
                        er = exp(-kr * t_up) * dexp(0.0, kr + inv, lu) * inv
                        mr = dexp(inv, kr, lu) * inv
                        dr = dexp(inv, kr, ld) * inv
                        nr = exp(-kr * (tau - t_down)) * dexp(0.0, kr + inv, ld) * inv
                        ei = 0.0
                        mi = 0.0
                        di = 0.0
                        ni = 0.0
                    else:
                        complex_dexp(0.0, 0.0, kr + inv, ki, lu, &er, &ei)
                        times_exponential(kr, ki, t_up, &er, &ei)
                        complex_dexp(inv, 0.0, kr, ki, lu, &mr, &mi)
                        complex_dexp(inv, 0.0, kr, ki, ld, &dr, &di)
                        complex_dexp(0.0, 0.0, kr + inv, ki, ld, &nr, &ni)
                        times_exponential(kr, ki, tau - t_down, &nr, &ni)
                        er, ei, mr, mi = er * inv, ei * inv, mr * inv, mi * inv
                        dr, di, nr, ni = dr * inv, di * inv, nr * inv, ni * inv
                    up = up + coef[j] * mode_integral(hf_up, hfm_up, rows, q, j, p, ki,
                                                      False, er, ei, mr, mi) \
                        + coef[nn + j] * mode_integral(hf_up, hfm_up, rows, q, j, p, ki,
                                                       True, er, ei, mr, mi)
                    down = down + coef[j] * mode_integral(hf_dn, hfm_dn, rows, q, j, p, ki,
                                                          False, dr, di, nr, ni) \
                        + coef[nn + j] * mode_integral(hf_dn, hfm_dn, rows, q, j, p, ki,
                                                       True, dr, di, nr, ni)
                if thermal:
                    up = up + thermal_up(sc, rows, q, sc.umu[u], t_up, tau)
                    down = down + thermal_down(sc, rows, q, sc.umu[u], t_down)
                dest_up[s * rows + q] = up
                dest_down[s * rows + q] = down


cdef void thermal_source(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly,
                         VectorColumn *cl, Py_ssize_t layer) noexcept nogil:
    """A layer's thermal source J = a + c t at the view rows (after view_kernels).

    J = (1 - w) (B0 + B1 t) e1 plus the kernels at the view cosines applied to the thermal
    particular solution (vector_common.thermal_value, linear in t), up (``thv[0]``,
    ``thv[1]``) and down (``thv[2]``, ``thv[3]``).
    """
    cdef Py_ssize_t nn = sz.nn, ns = sz.ns, rows = sz.nvz * sz.ns, q, c, side
    cdef double w = min(cl.albedo[layer], 1.0 - C_CONSERVATIVE_GAP), a, slope, v0, v1
    cdef const double *kernel
    for side in range(2):
        kernel = sc.hup if side == 0 else sc.hdn
        for q in range(rows):
            a = (1.0 - w) * ly.b0[layer] if q % ns == 0 else 0.0
            slope = (1.0 - w) * ly.b1[layer] if q % ns == 0 else 0.0
            for c in range(2 * nn):
                v0 = thermal_value(sz, ly, layer, c, 0.0)
                v1 = ly.b1[layer] if c % ns == 0 else 0.0   # nn is a multiple of ns
                a = a + kernel[q + c * rows] * v0
                slope = slope + kernel[q + c * rows] * v1
            sc.thv[2 * side * rows + q] = a
            sc.thv[(2 * side + 1) * rows + q] = slope


cdef inline double thermal_up(VectorScratch *sc, Py_ssize_t rows, Py_ssize_t q, double umu,
                              double t, double tau) noexcept nogil:
    """int_t^tau (a + c t') exp(-(t' - t) / mu) dt' / mu for the upward view row q."""
    cdef double a = sc.thv[q], c = sc.thv[rows + q]
    return (a + c * t + c * umu) - (a + c * tau + c * umu) * exp(-(tau - t) / umu)


cdef inline double thermal_down(VectorScratch *sc, Py_ssize_t rows, Py_ssize_t q,
                                double umu, double t) noexcept nogil:
    """int_0^t (a + c t') exp(-(t - t') / mu) dt' / mu for the downward view row q."""
    cdef double a = sc.thv[2 * rows + q], c = sc.thv[3 * rows + q]
    return (a + c * t - c * umu) - (a - c * umu) * exp(-t / umu)


cdef void vector_view_radiances(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly,
                                VectorColumn *cl, Py_ssize_t mode, const double *mu,
                                const double *wq) noexcept nogil:
    """The term's Stokes vectors at the view cosines at every level and position.

    vfield[sun][level][direction][u ns + s] and vpos[sun][pos][direction][u ns + s]; needs
    ``vector_levels``'s ``sc.field`` (the downward flux onto the surface) and the solved
    coefficients. A position inside a layer takes the level below (up) or above (down),
    transmitted to it, plus the source of the part of the layer in between.
    """
    cdef Py_ssize_t nn = sz.nn, ns = sz.ns, rows = sz.nvz * sz.ns, nlev = sz.nlayer + 1
    cdef Py_ssize_t layer, s, u, q, i, level, p
    cdef double flux, total = 0.0, t, depth
    cdef double *out
    cdef const double *below
    if sz.nvz == 0:
        return
    pi_table(sz, mode, sc.umu, sz.nvz, rows, sc.dtab, sc.pvu)
    for u in range(sz.nvz):
        sc.zv[u] = -sc.umu[u]
    pi_table(sz, mode, sc.zv, sz.nvz, rows, sc.dtab, sc.pvd)
    for layer in range(sz.nlayer):
        total = total + cl.tau[layer]
        view_kernels(sz, sc, ly, cl, layer, mode, wq)
        view_integrals(sz, sc, ly, cl, layer, mode, 0.0, cl.tau[layer],
                       sc.srcu + layer * sz.nsun * rows, sc.srcd + layer * sz.nsun * rows)
        for p in range(sz.npos):
            if sc.player[p] == layer:
                t = sc.pfrac[p] * cl.tau[layer]
                view_integrals(sz, sc, ly, cl, layer, mode, t, t,
                               sc.psrcu + p * sz.nsun * rows, sc.psrcd + p * sz.nsun * rows)
    for s in range(sz.nsun):
        # the surface: term 0 reflects A / pi times the downward I flux, unpolarized
        out = sc.vfield + ((s * nlev + sz.nlayer) * 2) * rows
        flux = 0.0
        if mode == 0 and cl.surface_albedo > 0.0:
            below = sc.field + (s * nlev + sz.nlayer) * 2 * nn
            for i in range(sz.n):
                flux = flux + 2.0 * PI * wq[i] * mu[i] * below[nn + i * ns]
            flux = flux + sc.mu0e[s] * cl.irradiance[s] * exp(-total / sc.mu0e[s])
        for q in range(rows):
            out[q] = cl.surface_albedo / PI * flux if q % ns == 0 else 0.0
        if cl.thermal and mode == 0:
            for u in range(sz.nvz):
                out[u * ns] = out[u * ns] + (1.0 - cl.surface_albedo) * cl.surface_planck
        for layer in range(sz.nlayer - 1, -1, -1):
            out = sc.vfield + ((s * nlev + layer) * 2) * rows
            for q in range(rows):
                t = exp(-cl.tau[layer] / sc.umu[q // ns])
                out[q] = out[2 * rows + q] * t + sc.srcu[(layer * sz.nsun + s) * rows + q]
        out = sc.vfield + ((s * nlev) * 2 + 1) * rows
        for q in range(rows):
            out[q] = cl.top_radiance if mode == 0 and q % ns == 0 else 0.0
        for level in range(1, nlev):
            layer = level - 1
            out = sc.vfield + ((s * nlev + level) * 2 + 1) * rows
            for q in range(rows):
                t = exp(-cl.tau[layer] / sc.umu[q // ns])
                out[q] = out[q - 2 * rows] * t + sc.srcd[(layer * sz.nsun + s) * rows + q]
        for p in range(sz.npos):
            layer = sc.player[p]
            depth = sc.pfrac[p] * cl.tau[layer]
            out = sc.vpos + ((s * sz.npos + p) * 2) * rows
            below = sc.vfield + ((s * nlev + layer + 1) * 2) * rows
            for q in range(rows):
                out[q] = below[q] * exp(-(cl.tau[layer] - depth) / sc.umu[q // ns]) \
                    + sc.psrcu[(p * sz.nsun + s) * rows + q]
            below = sc.vfield + ((s * nlev + layer) * 2 + 1) * rows
            for q in range(rows):
                out[rows + q] = below[q] * exp(-depth / sc.umu[q // ns]) \
                    + sc.psrcd[(p * sz.nsun + s) * rows + q]
