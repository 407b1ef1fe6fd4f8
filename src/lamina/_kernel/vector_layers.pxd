# cython: language_level=3
# Layer solutions of one Fourier term of the vector problem (see vector_layers.pyx): called
# once per term by vector_driver.

from lamina._kernel._lapack_int cimport lapack_int
from lamina._kernel.vector_common cimport VectorColumn, VectorLayers, VectorScratch, VectorSizes


cdef int vector_homogeneous(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly,
                            VectorColumn *cl, const double *mu, const double *wq,
                            Py_ssize_t mode, Py_ssize_t *failed_layer,
                            lapack_int *failed_info) noexcept nogil
cdef void vector_beam_geometry(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly,
                               VectorColumn *cl) noexcept nogil
cdef int vector_particular(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly,
                           VectorColumn *cl, const double *mu, Py_ssize_t mode,
                           Py_ssize_t *failed_layer, lapack_int *failed_info) noexcept nogil
cdef void pi_table(VectorSizes *sz, Py_ssize_t m, const double *x, Py_ssize_t nx,
                   Py_ssize_t ld, double *dtab, double *out) noexcept nogil
cdef void phase_fourier(VectorSizes *sz, const double *moments, Py_ssize_t mode,
                        const double *table_out, Py_ssize_t rows_out, const double *table_in,
                        Py_ssize_t rows_in, double *bt, double *out) noexcept nogil
cdef double beam_coefficients(VectorSizes *sz, VectorScratch *sc, VectorLayers *ly,
                              VectorColumn *cl, Py_ssize_t layer, Py_ssize_t sun,
                              Py_ssize_t mode) noexcept nogil
