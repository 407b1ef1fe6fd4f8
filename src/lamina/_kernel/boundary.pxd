# cython: language_level=3
# The boundary-value problem of one Fourier term (see boundary.pyx): called once per term.

from lamina._kernel._lapack_int cimport lapack_int
from lamina._kernel.common cimport Column, Grid, Layers, Scratch, Sizes


cdef int solve_boundary_values(Sizes *sz, Scratch *sc, Layers *ly, Column *cl, Grid *gr,
                               Py_ssize_t mode, lapack_int *failed_info) noexcept nogil
