# cython: language_level=3
# Outputs of one Fourier term (see sources.pyx): called once per column or per term.

from lamina._kernel.common cimport Column, Grid, Layers, Scratch, Sizes


cdef void view_transmittances(Sizes *sz, Scratch *sc, Column *cl, Grid *gr) noexcept nogil
cdef void view_sources(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Grid *gr,
                       Py_ssize_t mode) noexcept nogil
cdef void fluxes(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Grid *gr, double *flux_up,
                 double *flux_down, double *mean_intensity) noexcept nogil
cdef void view_radiances(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Grid *gr,
                         Py_ssize_t mode) noexcept nogil
cdef void surface_beam_views(Sizes *sz, Column *cl, Grid *gr, double *radiance) noexcept nogil
