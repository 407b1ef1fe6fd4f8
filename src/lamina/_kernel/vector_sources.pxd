# cython: language_level=3
# Stokes vectors at view cosines (see vector_sources.pyx): called once per term by
# vector_driver.

from lamina._kernel.vector_common cimport VectorColumn, VectorLayers, VectorScratch, VectorSizes


cdef void vector_view_radiances(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly,
                                VectorColumn *cl, Py_ssize_t mode, const double *mu,
                                const double *wq) noexcept nogil
