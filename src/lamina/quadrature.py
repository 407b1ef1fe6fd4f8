"""Double-Gauss quadrature (Sykes 1951).

Gauss-Legendre nodes are placed separately on each hemisphere, mu in (0, 1), so that the
half-range integrals that give fluxes and the Lambertian surface are exact for polynomials
up to degree 2n - 1, and the isotropic source is conserved exactly.
"""

from __future__ import annotations

import numpy as np


def double_gauss(streams: int) -> tuple[np.ndarray, np.ndarray]:
    """Cosines and weights on (0, 1) for ``streams`` total streams (``streams // 2`` per
    hemisphere).

    The weights sum to 1, so the mean intensity of a hemisphere is ``sum(w * I)``.

    Examples
    --------
    >>> mu, w = double_gauss(4)
    >>> float(round(w.sum(), 12))
    1.0
    """
    half = streams // 2
    nodes, weights = np.polynomial.legendre.leggauss(half)
    # ascending cosines: index 0 is the most grazing stream
    return 0.5 * (nodes + 1.0), 0.5 * weights
