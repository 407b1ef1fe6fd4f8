# cython: language_level=3
# The boundary-value problem of one Fourier term of the vector problem (see
# vector_boundary.pyx): called once per term by vector_driver.

from lamina._kernel._lapack_int cimport lapack_int
from lamina._kernel.vector_common cimport VectorColumn, VectorLayers, VectorScratch, VectorSizes


cdef int vector_boundary_values(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly,
                                VectorColumn *cl, const double *mu, const double *wq,
                                Py_ssize_t mode, lapack_int *failed_info) noexcept nogil
cdef void vector_levels(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly,
                        VectorColumn *cl) noexcept nogil
