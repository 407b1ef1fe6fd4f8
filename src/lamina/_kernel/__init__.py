"""The Cython kernel: a package of stage modules behind one entry point.

``driver`` runs the method per column and Fourier term; ``layers`` (layer solutions),
``boundary`` (the boundary-value problem) and ``sources`` (source-function integration at
view angles and output positions) are its stages, ``common.pxd`` the constants, structs and
inline helpers they share. The names used by :mod:`lamina.solve`, the tests and the
benchmarks are re-exported here, so ``from lamina import _kernel`` keeps working.
"""

from lamina._kernel.driver import (
    CONSERVATIVE_GAP,
    RESONANCE_GAP,
    STATUS_NAMES,
    dexp_cached_for_tests,
    dexp_for_tests,
    legendre_for_tests,
    single_scattering,
    solve_columns,
)

__all__ = [
    "CONSERVATIVE_GAP",
    "RESONANCE_GAP",
    "STATUS_NAMES",
    "dexp_cached_for_tests",
    "dexp_for_tests",
    "legendre_for_tests",
    "single_scattering",
    "solve_columns",
]
