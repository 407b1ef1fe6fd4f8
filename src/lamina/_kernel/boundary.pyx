# cython: language_level=3, boundscheck=False, wraparound=False, cdivision=True
# cython: initializedcheck=False
"""The boundary-value problem of one Fourier term: a banded system for the mode coefficients.

Method (Stamnes and Conklin 1984; Thomas and Stamnes 1999): the solution in each
layer is the particular solution plus a combination of the 2n homogeneous modes. Each mode
is referred to the boundary it decays away from (C_k exp(-k (t - t_top)) for the upward-
decaying half, D_k exp(-k (t_bottom - t)) for the other), so every exponential is <= 1 and
any thickness works. The conditions are: the downward radiance given at the top, continuity
of the quadrature radiances at every interface, and at the bottom the upward radiance equal
to the surface's reflection of the downward radiance plus its reflection of the direct beam
and its emission. They form a block-banded system of 2 n L equations with kl = ku = 3n - 1,
solved by banded LU (dgbtrf/dgbtrs), one factorisation for all sun angles.

The surface enters in one place only, ``surface_reflection``: for a Lambertian surface, term
0, the upward radiance at mu_i is sum_j 2 A w_j mu_j I-(mu_j), the same weights for every i
(kept as one row ``sc.refl``), and the direct beam's reflection is A mu0 F0 exp(-tau/mu0)/pi.
A bidirectional surface replaces this with a per-term n x n reflection matrix ``sc.reflm``
(and the beam's reflection with one value per quadrature cosine, ``sc.beamq``);
``bottom_rows``, ``bottom_sources`` and ``sources.view_radiances``'s surface term apply it.

The bidirectional boundary condition (derived here; the published forms are Thomas and
Stamnes 1999, the chapter on the bottom boundary, and Spurr 2004 for the Fourier terms).
With the BRDF f(mu, mu', phi - phi') in sr^-1 (phi of the reflected, phi' of the incident
propagation) the radiance leaving the surface is the rendering equation

    I+(mu, phi) = int_0^2pi int_0^1 f(mu, mu', phi - phi') I-(mu', phi') mu' dmu' dphi'
                  + mu0 S exp(-tau / mu0) f(mu, mu0, phi) + e(mu) B,

the beam propagating at phi = 0 (lamina's azimuth), e = 1 - A(mu) the directional emissivity
and B the surface's Planck radiance. The radiance is expanded as I = sum_m I^m cos(m phi)
and the BRDF as f = sum_m (2 - delta_m0) f_m cos(m phi) (``Surface.fourier_terms``). Since
int_0^2pi cos(m (phi - phi')) cos(k phi') dphi' = (1 + delta_m0) pi delta_mk cos(m phi),
and (2 - delta_m0)(1 + delta_m0) = 2 for every m, term m of the diffuse reflection is

    I+^m(mu) = 2 pi int_0^1 f_m(mu, mu') I-^m(mu') mu' dmu'
             ~ sum_j R_ij I-^m(mu_j),   R_ij = 2 pi w_j mu_j f_m(mu_i, mu_j),

(double-Gauss weights w_j summing to 1 on (0, 1)), and term m of the beam's reflection is
(2 - delta_m0) mu0 S exp(-tau / mu0) f_m(mu_i, mu0). The Lambertian case f = A / pi has
f_0 = A / pi and f_m = 0 for m > 0: R_ij = 2 A w_j mu_j and the beam's term A mu0 S
exp(-tau/mu0) / pi, exactly the Lambertian weights above. The surface term at each view
cosine mu_u uses the same sum with f_m(mu_u, mu_j) (the exact BRDF at the view cosine, no
interpolation between quadrature cosines); the beam's reflection towards the view angles is
added once per column with the exact f(mu_u, mu0, phi) (``sources.surface_beam_views``), so
a glint narrower than the Fourier series can carry is still exact there.
"""

from libc.math cimport exp
from scipy.linalg.cython_lapack cimport dgbtrf, dgbtrs

from lamina._kernel._lapack_int cimport lapack_int
from lamina._kernel.common cimport (
    PI, STATUS_BAND_FACTOR, STATUS_BAND_SOLVE, Column, Grid, Layers, Scratch, Sizes,
    particular_at, spherical_ground_beam,
)


cdef inline void band_put(Scratch *sc, Py_ssize_t i, Py_ssize_t j, double value) noexcept nogil:
    sc.ab[sc.kl + sc.kl + i - j + j * sc.ldab] = value


cdef void surface_reflection(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Grid *gr,
                             Py_ssize_t mode) noexcept nogil:
    """The surface of term ``mode``: reflection weights ``sc.refl`` and beam ``sc.surfbeam``.

    Lambertian: only term 0 reflects, refl_j = 2 A w_j mu_j (the upward radiance is
    sum_j refl_j I-(mu_j) at every quadrature cosine) and the direct beam's reflection is
    A / pi mu0 F0 exp(-tau_total / mu0). Zero for every other term. A bidirectional surface
    fills ``sc.reflm``, ``sc.reflv`` and ``sc.beamq`` instead (``brdf_reflection``).
    """
    cdef Py_ssize_t j, s, layer
    cdef double albedo = cl.surface_albedo, total = 0.0, sec
    if cl.bidirectional:
        brdf_reflection(sz, sc, cl, gr, mode)
        return
    for j in range(sz.n):
        sc.refl[j] = 0.0
        if mode == 0 and albedo > 0.0:
            sc.refl[j] = 2.0 * albedo * gr.wq[j] * gr.mu[j]
    for layer in range(sz.nlayer):
        total = total + cl.tau[layer]
    for s in range(sz.nsun):
        sec = 1.0 / sc.mu0e[s]
        sc.surfbeam[s] = 0.0
        if mode == 0 and cl.beam_slant != NULL:
            sc.surfbeam[s] = albedo / PI * cl.irradiance[s] * spherical_ground_beam(sz, cl, s)
        elif mode == 0:
            sc.surfbeam[s] = albedo / PI * sc.mu0e[s] * cl.irradiance[s] * exp(-total * sec)


cdef void brdf_reflection(Sizes *sz, Scratch *sc, Column *cl, Grid *gr,
                          Py_ssize_t mode) noexcept nogil:
    """Term ``mode`` of a bidirectional surface (the module docstring derives it).

    R_ij = 2 pi w_j mu_j f_m(mu_i, mu_j) into ``sc.reflm`` (row i), the same at the view
    cosines into ``sc.reflv`` (row u), and the beam's reflection (2 - delta_m0) mu0 S
    exp(-tau_total / mu0) f_m(mu_i, mu0) into ``sc.beamq``. Terms beyond those given are 0.
    """
    cdef Py_ssize_t n = sz.n, i, j, u, s, layer
    cdef double total = 0.0, weight, beam
    cdef bint given = mode < cl.surface_terms
    cdef const double *fq = cl.brdf_quadrature + mode * n * n
    cdef const double *fv = cl.brdf_view + mode * sz.nvz * n
    for j in range(n):
        weight = 2.0 * PI * gr.wq[j] * gr.mu[j] if given else 0.0
        for i in range(n):
            sc.reflm[i * n + j] = weight * fq[i * n + j] if given else 0.0
        for u in range(sz.nvz):
            sc.reflv[u * n + j] = weight * fv[u * n + j] if given else 0.0
    for layer in range(sz.nlayer):
        total = total + cl.tau[layer]
    for s in range(sz.nsun):
        if cl.beam_slant != NULL:
            beam = (1.0 if mode == 0 else 2.0) * cl.irradiance[s] \
                * spherical_ground_beam(sz, cl, s)
        else:
            beam = (1.0 if mode == 0 else 2.0) * sc.mu0e[s] * cl.irradiance[s] \
                * exp(-total / sc.mu0e[s])
        for i in range(n):
            sc.beamq[s * n + i] = beam * cl.brdf_beam[(s * cl.surface_terms + mode) * n + i] \
                if given else 0.0


cdef void zero_band(Sizes *sz, Scratch *sc) noexcept nogil:
    """Zero the structural zeros of the band (the last factorisation overwrote them).

    In the columns of layer l only the rows of its top and bottom interfaces,
    [2nl - n, 2nl + 3n), carry entries, and those are all written by the assembly. The kl
    rows kept for the fill-in of the LU need not be set.
    """
    cdef Py_ssize_t n = sz.n, neq = 2 * sz.n * sz.nlayer, col, layer, row, i, j
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


cdef void top_and_interface_rows(Sizes *sz, Scratch *sc, Layers *ly) noexcept nogil:
    """Rows of the top condition and of the continuity at every interface.

    (Every block is written column by column: band storage keeps a column contiguous.)
    """
    cdef Py_ssize_t n = sz.n, i, kk, layer, row, col
    cdef double e
    cdef double *gp = ly.gp
    cdef double *gm = ly.gm
    cdef double *gp2
    cdef double *gm2
    cdef double *kv
    cdef double *kv2
    # top: downward radiance given
    for kk in range(n):
        e = ly.ek[kk]
        for i in range(n):
            band_put(sc, i, kk, gm[i + kk * n])
            band_put(sc, i, n + kk, gp[i + kk * n] * e)
    for layer in range(sz.nlayer - 1):
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


cdef void bottom_rows(Sizes *sz, Scratch *sc, Layers *ly, Column *cl,
                      bint reflects) noexcept nogil:
    """Rows of the bottom condition: upward radiance minus the surface's reflection of it."""
    cdef Py_ssize_t n = sz.n, i, j, kk
    cdef Py_ssize_t layer = sz.nlayer - 1, row = 2 * n * sz.nlayer - n, col = 2 * n * layer
    cdef double e, rp, rm
    cdef double *gp = ly.gp + layer * n * n
    cdef double *gm = ly.gm + layer * n * n
    cdef double *kv = ly.ek + layer * n
    if cl.bidirectional:
        bidirectional_rows(sz, sc, ly, row, col)
        return
    for kk in range(n):
        rp = 0.0
        rm = 0.0
        if reflects:
            for j in range(n):
                rm = rm + sc.refl[j] * gm[j + kk * n]
                rp = rp + sc.refl[j] * gp[j + kk * n]
        e = kv[kk]
        for i in range(n):
            band_put(sc, row + i, col + kk, (gp[i + kk * n] - rm) * e)
            band_put(sc, row + i, col + n + kk, gm[i + kk * n] - rp)


cdef void bidirectional_rows(Sizes *sz, Scratch *sc, Layers *ly, Py_ssize_t row,
                             Py_ssize_t col) noexcept nogil:
    """``bottom_rows`` with the reflection matrix R_ij of a bidirectional surface."""
    cdef Py_ssize_t n = sz.n, i, j, kk, layer = sz.nlayer - 1
    cdef double e, rp, rm
    cdef double *gp = ly.gp + layer * n * n
    cdef double *gm = ly.gm + layer * n * n
    cdef double *kv = ly.ek + layer * n
    cdef double *r
    for kk in range(n):
        e = kv[kk]
        for i in range(n):
            r = sc.reflm + i * n
            rp = 0.0
            rm = 0.0
            for j in range(n):
                rm = rm + r[j] * gm[j + kk * n]
                rp = rp + r[j] * gp[j + kk * n]
            band_put(sc, row + i, col + kk, (gp[i + kk * n] - rm) * e)
            band_put(sc, row + i, col + n + kk, gm[i + kk * n] - rp)


cdef void bottom_sources(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Py_ssize_t sun,
                         bint reflects, bint iso, bint thermal) noexcept nogil:
    """Right-hand side of the bottom condition for one sun angle."""
    cdef Py_ssize_t n = sz.n, i, j, neq = 2 * sz.n * sz.nlayer
    cdef Py_ssize_t layer = sz.nlayer - 1, row = 2 * n * sz.nlayer - n
    cdef double refl = 0.0, pa, pb
    cdef double depth = cl.tau[layer], beam = ly.eb[layer * sz.nsun + sun]
    cdef double emission = cl.surface_planck * (1.0 - cl.surface_albedo) if cl.thermal else 0.0
    if cl.bidirectional:
        bidirectional_sources(sz, sc, ly, cl, sun, iso, thermal)
        return
    if reflects:
        for j in range(n):
            refl = refl + sc.refl[j] \
                * particular_at(sz, ly, layer, sun, j, False, depth, beam, thermal)
    for i in range(n):
        pa = particular_at(sz, ly, layer, sun, i, True, depth, beam, thermal)
        pb = sc.surfbeam[sun] + (emission if iso else 0.0)
        ly.coef[sun * neq + row + i] = pb - (pa - refl)


cdef void bidirectional_sources(Sizes *sz, Scratch *sc, Layers *ly, Column *cl,
                                Py_ssize_t sun, bint iso, bint thermal) noexcept nogil:
    """``bottom_sources`` of a bidirectional surface: R_ij, the beam per mu_i, e(mu_i) B."""
    cdef Py_ssize_t n = sz.n, i, j, neq = 2 * sz.n * sz.nlayer
    cdef Py_ssize_t layer = sz.nlayer - 1, row = 2 * n * sz.nlayer - n
    cdef double refl, pa, pb
    cdef double depth = cl.tau[layer], beam = ly.eb[layer * sz.nsun + sun]
    cdef bint emits = cl.thermal and iso
    for j in range(n):
        sc.downq[j] = particular_at(sz, ly, layer, sun, j, False, depth, beam, thermal)
    for i in range(n):
        refl = 0.0
        for j in range(n):
            refl = refl + sc.reflm[i * n + j] * sc.downq[j]
        pa = particular_at(sz, ly, layer, sun, i, True, depth, beam, thermal)
        pb = sc.beamq[sun * n + i]
        if emits:
            pb = pb + cl.emissivity_quadrature[i] * cl.surface_planck
        ly.coef[sun * neq + row + i] = pb - (pa - refl)


cdef void top_and_interface_sources(Sizes *sz, Layers *ly, Column *cl, Py_ssize_t sun,
                                    bint iso, bint thermal) noexcept nogil:
    """Right-hand sides of the top and interface conditions for one sun angle."""
    cdef Py_ssize_t n = sz.n, nsun = sz.nsun, i, layer, row, neq = 2 * sz.n * sz.nlayer
    cdef double *coef = ly.coef + sun * neq
    for i in range(n):
        coef[i] = (cl.top_radiance if iso else 0.0) \
            - particular_at(sz, ly, 0, sun, i, False, 0.0, 1.0, thermal)
    for layer in range(sz.nlayer - 1):
        row = n + 2 * n * layer
        for i in range(n):
            coef[row + i] = \
                particular_at(sz, ly, layer + 1, sun, i, True, 0.0, 1.0, thermal) \
                - particular_at(sz, ly, layer, sun, i, True, cl.tau[layer],
                                ly.eb[layer * nsun + sun], thermal)
            coef[row + n + i] = \
                particular_at(sz, ly, layer + 1, sun, i, False, 0.0, 1.0, thermal) \
                - particular_at(sz, ly, layer, sun, i, False, cl.tau[layer],
                                ly.eb[layer * nsun + sun], thermal)


cdef int solve_boundary_values(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Grid *gr,
                               Py_ssize_t mode, lapack_int *failed_info) noexcept nogil:
    """Assemble and solve the banded boundary-value problem of term ``mode``, all suns.

    Leaves the mode coefficients in ``ly.coef`` and the surface of the term in ``sc.refl``
    and ``sc.surfbeam``. Returns 0, or the status code of the failing LAPACK routine.
    """
    cdef lapack_int neqi = <lapack_int>(2 * sz.n * sz.nlayer), nsi = <lapack_int>sz.nsun
    cdef lapack_int info = 0
    cdef Py_ssize_t s
    cdef bint reflects = (mode == 0 and cl.surface_albedo > 0.0)
    cdef bint iso = (mode == 0)
    cdef bint thermal = cl.thermal and mode == 0
    cdef char trans_n = b'N'
    surface_reflection(sz, sc, ly, cl, gr, mode)
    zero_band(sz, sc)
    top_and_interface_rows(sz, sc, ly)
    bottom_rows(sz, sc, ly, cl, reflects)
    dgbtrf(&neqi, &neqi, &sc.kl, &sc.kl, sc.ab, &sc.ldab, sc.ipiv, &info)
    if info != 0:
        failed_info[0] = info
        return STATUS_BAND_FACTOR
    for s in range(sz.nsun):
        top_and_interface_sources(sz, ly, cl, s, iso, thermal)
        bottom_sources(sz, sc, ly, cl, s, reflects, iso, thermal)
    dgbtrs(&trans_n, &neqi, &sc.kl, &sc.kl, &nsi, sc.ab, &sc.ldab, sc.ipiv, ly.coef, &neqi,
           &info)
    if info != 0:
        failed_info[0] = info
        return STATUS_BAND_SOLVE
    return 0
