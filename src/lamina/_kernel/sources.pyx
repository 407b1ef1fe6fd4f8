# cython: language_level=3, boundscheck=False, wraparound=False, cdivision=True
# cython: initializedcheck=False
"""Outputs of one Fourier term: fluxes at output positions and radiances at view angles.

Method (the source-function integration of Stamnes and Swanson 1981 and Thomas and Stamnes
1999; the integration of the discrete-ordinates solution goes back to Chandrasekhar 1950,
Radiative Transfer): with the mode coefficients known, the source function J(t, mu) of a
layer at a view cosine is the phase-function quadrature of the layer's solution plus the
beam (and Planck) sources, a sum of exponentials in t. The radiance at the view cosine is
then integrated analytically through each layer, I(t) = I(t_b) exp(-(t_b - t)/mu) + int J
exp(-(t' - t)/mu) dt'/mu; the removable singularities (mu = 1/k, mu = mu0) are evaluated
through ``dexp``, continuous across them. Levels are swept from the surface up and from the
top down; an output position inside a layer adds the partial integral from its level. Fluxes
and the mean intensity at output positions are the quadrature sums of the term-0 solution.

Speed: exponentials along the view directions are made once per column (``eu``, ``et``),
the beam's layer integrals once per column unless the resonance shift moves mu0; integrals
across whole layers reuse those cached exponentials where 1 - exp(-x) is not small; output
positions on a level reuse the level values.

The surface's upward radiance at the view cosines is the term's reflection of the
downward quadrature radiance (Lambertian: ``surface_radiance``; bidirectional:
``bidirectional_surface_radiance`` with the BRDF's own terms at each view cosine), and a
bidirectional surface's reflection of the direct beam is added once per column with the
exact BRDF (``surface_beam_views``; ``boundary``'s docstring derives both).

A new source term adds its coefficients to ``user_sources`` and its integral to the four
``*_partial`` / ``*_layer`` functions; Stokes components make J a vector and the phase
quadrature a matrix product; derivatives differentiate these integrals in turn.
"""

from libc.math cimport exp

from lamina._kernel.common cimport (
    C_CONSERVATIVE_GAP, PI, Column, Grid, Layers, Scratch, Sizes, column_dots, dexp, dexp_cached,
    dexp_from_zero, legendre_table, quadrature_radiance, spherical_ground_beam,
)


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


cdef void view_transmittances(Sizes *sz, Scratch *sc, Column *cl, Grid *gr) noexcept nogil:
    """Transmittances of every layer along the view directions (the same for every term)."""
    cdef Py_ssize_t layer, u
    cdef double depth, umu, inv
    for layer in range(sz.nlayer):
        depth = cl.tau[layer]
        for u in range(sz.nvz):
            umu = gr.umu[u]
            inv = 1.0 / umu
            sc.eu[layer * sz.nvz + u] = exp(-depth / umu)
            sc.et[layer * sz.nvz + u] = exp(-depth * inv)


cdef void view_sources(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Grid *gr,
                       Py_ssize_t mode) noexcept nogil:
    """Source-function coefficients of every layer at the view cosines, for term ``mode``."""
    cdef Py_ssize_t layer
    cdef double w
    legendre_table(mode, sz.nl, gr.umu, sz.nvz, sc.lu)
    for layer in range(sz.nlayer):
        w = min(cl.albedo[layer], 1.0 - C_CONSERVATIVE_GAP)
        sc.ce = sc.ceall + layer * sz.nl
        sc.co = sc.coall + layer * sz.nl
        user_sources(sz, sc, ly, layer, mode, w, gr.wq, cl.irradiance, cl.thermal)


cdef void fluxes(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Grid *gr, double *flux_up,
                 double *flux_down, double *mean_intensity) noexcept nogil:
    """Diffuse fluxes and mean intensity at the output positions from the term-0 solution.

    The outputs are the column's blocks, indexed [sun][position]. At the ground the upward
    radiance is likewise the Lambertian surface's boundary condition applied to the downward
    radiance there. At the top of the
    atmosphere the downward diffuse radiance is the boundary condition itself (the sky's
    isotropic radiance): it is used there exactly, not as the solution's value, which meets
    it only to the round-off of the boundary-value problem (1e-12 of the incident flux in
    thick conservative stacks), so that the downward diffuse flux at the top is exactly
    pi times the sky radiance, and 0 under a black sky.
    """
    cdef Py_ssize_t n = sz.n, p, s, i, layer
    cdef double dt1, dt2, sec, x, fu, fd, jm, up, down, reflected
    cdef bint at_top, at_bottom
    for p in range(sz.npos):
        layer = gr.position_layer[p]
        dt1 = gr.position_fraction[p] * cl.tau[layer]
        dt2 = cl.tau[layer] - dt1
        at_top = layer == 0 and gr.position_fraction[p] == 0.0
        # (the Lambertian surface's condition; a bidirectional one keeps the solution's value)
        at_bottom = (layer == sz.nlayer - 1 and gr.position_fraction[p] == 1.0
                     and not cl.bidirectional)
        for i in range(n):
            sc.e1[i] = exp(-ly.k[layer * n + i] * dt1)
            sc.e2[i] = exp(-ly.k[layer * n + i] * dt2)
        for s in range(sz.nsun):
            sec = 1.0 / sc.mu0l[layer * sz.nsun + s]
            x = exp(-dt1 * sec)
            fu = 0.0
            fd = 0.0
            jm = 0.0
            if at_bottom:
                # at the ground the upward radiance is the surface's boundary condition,
                # taken exactly from the downward radiance there (a black, cold surface
                # sends up exactly nothing)
                reflected = sc.surfbeam[s]
                if cl.thermal:
                    reflected = reflected + (1.0 - cl.surface_albedo) * cl.surface_planck
                for i in range(n):
                    reflected = reflected + sc.refl[i] * quadrature_radiance(
                        sz, ly, layer, s, i, False, dt1, x, sc.e1, sc.e2, cl.thermal)
            for i in range(n):
                if at_bottom:
                    up = reflected
                else:
                    up = quadrature_radiance(sz, ly, layer, s, i, True, dt1, x, sc.e1, sc.e2,
                                             cl.thermal)
                if at_top:
                    down = cl.top_radiance
                else:
                    down = quadrature_radiance(sz, ly, layer, s, i, False, dt1, x, sc.e1,
                                               sc.e2, cl.thermal)
                fu = fu + gr.wq[i] * gr.mu[i] * up
                fd = fd + gr.wq[i] * gr.mu[i] * down
                jm = jm + 0.5 * gr.wq[i] * (up + down)
            flux_up[s * sz.npos + p] = 2.0 * PI * fu
            # the double-Gauss weights integrate mu over a hemisphere to 1/2 up to round-off
            flux_down[s * sz.npos + p] = PI * cl.top_radiance if at_top else 2.0 * PI * fd
            mean_intensity[s * sz.npos + p] = jm


cdef void layer_integrals(Sizes *sz, Scratch *sc, Layers *ly, Column *cl,
                          Grid *gr) noexcept nogil:
    """The modes' integrals across whole layers along each view (no sun or direction)."""
    cdef Py_ssize_t n = sz.n, layer, u, i
    cdef double depth, inv
    for layer in range(sz.nlayer):
        depth = cl.tau[layer]
        for u in range(sz.nvz):
            inv = 1.0 / gr.umu[u]
            for i in range(n):
                sc.dA[(layer * sz.nvz + u) * n + i] = dexp_from_zero(
                    ly.k[layer * n + i] + inv, depth,
                    ly.ek[layer * n + i] * sc.et[layer * sz.nvz + u])
                sc.dB[(layer * sz.nvz + u) * n + i] = dexp_cached(
                    inv, ly.k[layer * n + i], depth,
                    sc.et[layer * sz.nvz + u], ly.ek[layer * n + i])


cdef void beam_integrals(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Grid *gr,
                         Py_ssize_t s) noexcept nogil:
    """The beam's integrals across each layer along each view, unless they still hold.

    They change only when the resonance shift changes mu0 (``beamdone``).
    """
    cdef Py_ssize_t layer, u
    cdef double depth, inv, sec
    if sc.beamdone[s]:
        return
    sc.beamdone[s] = 1
    for layer in range(sz.nlayer):
        sec = 1.0 / sc.mu0l[layer * sz.nsun + s]
        depth = cl.tau[layer]
        for u in range(sz.nvz):
            inv = 1.0 / gr.umu[u]
            sc.bA[(layer * sz.nsun + s) * sz.nvz + u] = dexp_from_zero(
                sec + inv, depth, ly.eb[layer * sz.nsun + s] * sc.et[layer * sz.nvz + u])
            sc.bB[(layer * sz.nsun + s) * sz.nvz + u] = dexp_cached(
                inv, sec, depth, sc.et[layer * sz.nvz + u], ly.eb[layer * sz.nsun + s])


cdef double surface_radiance(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Grid *gr,
                             Py_ssize_t mode, Py_ssize_t s) noexcept nogil:
    """Upward radiance leaving the surface (the same at every view cosine for term 0).

    The reflection of the diffuse downward radiance uses the term's weights ``sc.refl``
    from ``boundary.surface_reflection`` and its reflection of the beam ``sc.surfbeam``.
    """
    cdef Py_ssize_t n = sz.n, i, layer = sz.nlayer - 1
    cdef double x = 0.0
    if mode != 0:
        return 0.0
    for i in range(n):
        x = x + sc.refl[i] * quadrature_radiance(sz, ly, layer, s, i, False, cl.tau[layer],
                                                 ly.eb[layer * sz.nsun + s], &ly.ek[layer * n],
                                                 sc.ones, cl.thermal)
    x = x + sc.surfbeam[s]
    if cl.thermal:
        x = x + (1.0 - cl.surface_albedo) * cl.surface_planck
    return x


cdef void level_sweeps(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Grid *gr,
                       Py_ssize_t mode, Py_ssize_t s, Py_ssize_t u, double surface) noexcept nogil:
    """Radiance at every level along view ``u``: up from the surface, down from the top."""
    cdef Py_ssize_t layer, nsun = sz.nsun, nvz = sz.nvz
    cdef double umu = gr.umu[u]
    cdef bint thermal = cl.thermal and mode == 0
    sc.iup[(sz.nlayer * nsun + s) * nvz + u] = surface
    for layer in range(sz.nlayer - 1, -1, -1):
        sc.iup[(layer * nsun + s) * nvz + u] = \
            sc.iup[((layer + 1) * nsun + s) * nvz + u] * sc.eu[layer * nvz + u] \
            + upward_layer(sz, sc, ly, layer, s, u, umu, cl.tau[layer], thermal)
    sc.idn[s * nvz + u] = cl.top_radiance if mode == 0 else 0.0
    for layer in range(sz.nlayer):
        sc.idn[((layer + 1) * nsun + s) * nvz + u] = \
            sc.idn[(layer * nsun + s) * nvz + u] * sc.eu[layer * nvz + u] \
            + downward_layer(sz, sc, ly, layer, s, u, umu, cl.tau[layer], thermal)


cdef void position_radiances(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Grid *gr,
                             Py_ssize_t mode, Py_ssize_t s, Py_ssize_t u) noexcept nogil:
    """Radiance of the term at every output position along view ``u`` into ``sc.radm``."""
    cdef Py_ssize_t p, layer, nsun = sz.nsun, nvz = sz.nvz
    cdef double umu = gr.umu[u], sec, dt1, dt2
    cdef bint thermal = cl.thermal and mode == 0
    cdef double *up
    cdef double *down
    for p in range(sz.npos):
        layer = gr.position_layer[p]
        up = sc.radm + ((s * sz.npos + p) * 2 + 0) * nvz + u
        down = sc.radm + ((s * sz.npos + p) * 2 + 1) * nvz + u
        # on a level the value is already known
        if gr.position_fraction[p] == 0.0:
            up[0] = sc.iup[(layer * nsun + s) * nvz + u]
            down[0] = sc.idn[(layer * nsun + s) * nvz + u]
            continue
        if gr.position_fraction[p] == 1.0:
            up[0] = sc.iup[((layer + 1) * nsun + s) * nvz + u]
            down[0] = sc.idn[((layer + 1) * nsun + s) * nvz + u]
            continue
        dt1 = gr.position_fraction[p] * cl.tau[layer]
        dt2 = cl.tau[layer] - dt1
        sec = 1.0 / sc.mu0l[layer * nsun + s]
        up[0] = sc.iup[((layer + 1) * nsun + s) * nvz + u] * exp(-dt2 / umu) \
            + upward_partial(sz, sc, ly, layer, s, u, umu, dt1, dt2, sec, thermal)
        down[0] = sc.idn[(layer * nsun + s) * nvz + u] * exp(-dt1 / umu) \
            + downward_partial(sz, sc, ly, layer, s, u, umu, dt1, dt2, sec, thermal)


cdef void view_radiances(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Grid *gr,
                         Py_ssize_t mode) noexcept nogil:
    """Radiance of term ``mode`` at every sun, position, direction and view cosine (``radm``).

    Needs ``view_sources`` of the term and the solved boundary-value problem.
    """
    cdef Py_ssize_t s, u
    cdef double surface = 0.0
    layer_integrals(sz, sc, ly, cl, gr)
    for s in range(sz.nsun):
        beam_integrals(sz, sc, ly, cl, gr, s)
        if cl.bidirectional:
            surface_downward(sz, sc, ly, cl, s)
        else:
            surface = surface_radiance(sz, sc, ly, cl, gr, mode, s)
        for u in range(sz.nvz):
            if cl.bidirectional:
                surface = bidirectional_surface_radiance(sz, sc, cl, mode, u)
            level_sweeps(sz, sc, ly, cl, gr, mode, s, u, surface)
            position_radiances(sz, sc, ly, cl, gr, mode, s, u)


cdef void surface_downward(Sizes *sz, Scratch *sc, Layers *ly, Column *cl,
                           Py_ssize_t s) noexcept nogil:
    """Downward quadrature radiance of the term at the surface into ``sc.downq``."""
    cdef Py_ssize_t n = sz.n, i, layer = sz.nlayer - 1
    for i in range(n):
        sc.downq[i] = quadrature_radiance(sz, ly, layer, s, i, False, cl.tau[layer],
                                          ly.eb[layer * sz.nsun + s], &ly.ek[layer * n],
                                          sc.ones, cl.thermal)


cdef inline double bidirectional_surface_radiance(Sizes *sz, Scratch *sc, Column *cl,
                                                  Py_ssize_t mode, Py_ssize_t u) noexcept nogil:
    """Term ``mode`` of the radiance leaving a bidirectional surface towards view cosine u.

    sum_j 2 pi w_j mu_j f_m(mu_u, mu_j) I-^m(mu_j) with the BRDF's own terms at mu_u
    (``sc.reflv``, from ``boundary.surface_reflection``), plus e(mu_u) B in term 0 of a
    thermal run. The direct beam's reflection is not here: ``surface_beam_views`` adds it
    with the exact BRDF, outside the Fourier series.
    """
    cdef Py_ssize_t n = sz.n, j
    cdef double x = 0.0
    for j in range(n):
        x = x + sc.reflv[u * n + j] * sc.downq[j]
    if cl.thermal and mode == 0:
        x = x + cl.emissivity_view[u] * cl.surface_planck
    return x


cdef void surface_beam_views(Sizes *sz, Column *cl, Grid *gr, double *radiance) noexcept nogil:
    """Add the direct beam's reflection by the exact BRDF to the upward view radiances.

    mu0 S exp(-tau_total / mu0) f(mu_u, mu0, phi) at the surface, attenuated by
    exp(-(tau_total - tau_p) / mu_u) up to each output position p; once per column, since
    the exact BRDF is no single Fourier term. ``radiance`` is the column's block
    [sun][pos][2][nvz][nva].
    """
    cdef Py_ssize_t s, p, u, a, layer, nvz = sz.nvz, nva = sz.nva
    cdef double total = 0.0, depth, beam, path
    cdef const double *f
    cdef double *out
    for layer in range(sz.nlayer):
        total = total + cl.tau[layer]
    for s in range(sz.nsun):
        if cl.beam_slant != NULL:
            beam = cl.irradiance[s] * spherical_ground_beam(sz, cl, s)
        else:
            beam = cl.mu0[s] * cl.irradiance[s] * exp(-total / cl.mu0[s])
        for p in range(sz.npos):
            depth = 0.0
            for layer in range(gr.position_layer[p]):
                depth = depth + cl.tau[layer]
            depth = depth + gr.position_fraction[p] * cl.tau[gr.position_layer[p]]
            for u in range(nvz):
                path = beam * exp(-max(total - depth, 0.0) / gr.umu[u])
                f = cl.brdf_view_beam + (s * nvz + u) * nva
                out = radiance + ((s * sz.npos + p) * 2 * nvz + u) * nva
                for a in range(nva):
                    out[a] = out[a] + path * f[a]
