# cython: language_level=3
# Layer solutions of one Fourier term (see layers.pyx): called once per term by the driver.

from lamina._kernel._lapack_int cimport lapack_int
from lamina._kernel.common cimport Column, Grid, Layers, Scratch, Sizes


cdef int homogeneous_solutions(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Grid *gr,
                               Py_ssize_t mode, Py_ssize_t *failed_layer,
                               Py_ssize_t *failed_code, lapack_int *failed_info) noexcept nogil
cdef void beam_geometry(Sizes *sz, Scratch *sc, Layers *ly, Column *cl,
                        Py_ssize_t mode) noexcept nogil
cdef void particular_solutions(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Grid *gr,
                               Py_ssize_t mode) noexcept nogil
