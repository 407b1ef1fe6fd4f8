"""Phase functions as Legendre coefficients, and delta-M scaling.

A phase function P of the cosine of the scattering angle T is stored as its Legendre
coefficients ("moments") chi_l,

    P(cos T) = sum_l (2 l + 1) chi_l P_l(cos T),        chi_0 = 1,  chi_1 = g,

normalised so that P averages to 1 over the sphere (its integral over 4 pi sr is 4 pi).
Every function here works on whole arrays: parameters broadcast against each other and
the moments run along the LAST axis.

Methods
-------
- Henyey-Greenstein phase function, chi_l = g**l (Henyey and Greenstein 1941).
- Rayleigh scattering with depolarization factor rho: gamma = rho / (2 - rho),
  P = 3 / (4 (1 + 2 gamma)) [(1 + 3 gamma) + (1 - gamma) cos^2 T], hence
  chi_2 = (1 - gamma) / (10 (1 + 2 gamma)) (Hansen and Travis 1974).
- The Rayleigh scattering matrix with depolarization as expansion coefficients in
  generalized spherical functions (Hansen and Travis 1974; de Rooij and van der Stap 1984);
  see :mod:`lamina.polarization` for the expansion.
- Projection of tabulated phase functions by composite Gauss-Legendre quadrature.
- Delta-M scaling of forward-peaked phase functions (Wiscombe 1977).

References
----------
Henyey, L. G. and Greenstein, J. L. (1941), Diffuse radiation in the galaxy,
Astrophys. J. 93, 70-83.
Hansen, J. E. and Travis, L. D. (1974), Light scattering in planetary atmospheres,
Space Sci. Rev. 16, 527-610.
de Rooij, W. A. and van der Stap, C. C. A. H. (1984), Expansion of Mie scattering matrices
in generalized spherical functions, Astron. Astrophys. 131, 237-248.
Wiscombe, W. J. (1977), The delta-M method: rapid yet accurate radiative flux
calculations for strongly asymmetric phase functions, J. Atmos. Sci. 34, 1408-1422.
"""

from __future__ import annotations

from typing import Literal, NamedTuple

import numpy as np
from numpy.typing import ArrayLike, NDArray

__all__ = [
    "DeltaMScaling",
    "delta_m_scale",
    "double_henyey_greenstein",
    "evaluate",
    "from_tabulated",
    "henyey_greenstein",
    "SCATTERING_MATRIX_ELEMENTS",
    "rayleigh",
    "rayleigh_matrix",
]

#: Order of the scattering-matrix expansion coefficients on the ``element`` axis (de Rooij
#: and van der Stap 1984; Hovenier, van der Mee and Domke 2004).
SCATTERING_MATRIX_ELEMENTS = ("alpha1", "alpha2", "alpha3", "alpha4", "beta1", "beta2")

#: Default relative tolerance on the normalisation of a tabulated phase function.
TABULATED_NORMALIZATION_TOLERANCE = 1e-2

#: Round-off accepted on the end angles 0 and 180 of a table, degrees.
_ANGLE_END_TOLERANCE = 1e-9

#: Tolerance on chi_0 = 1 accepted by :func:`delta_m_scale`.
_ZEROTH_MOMENT_TOLERANCE = 1e-6


# --------------------------------------------------------------------------------------
# validation helpers (shared with lamina.mie)
# --------------------------------------------------------------------------------------


def _index_text(array: np.ndarray, bad: np.ndarray) -> tuple[float | complex, str]:
    """Return the first offending value and a " at index (...)" suffix (empty for 0-d)."""
    if array.ndim == 0:
        return array.item(), ""
    index = tuple(int(i) for i in np.argwhere(bad)[0])
    shown = index[0] if len(index) == 1 else index
    return array[index].item(), f" at index {shown}"


def _as_real_array(name: str, value: ArrayLike) -> np.ndarray:
    """Coerce to a float64 array, rejecting non-numbers (TypeError) and non-finite values."""
    try:
        array = np.asarray(value, dtype=np.float64)
    except (TypeError, ValueError) as error:
        raise TypeError(f"{name} must be a real number or an array of real numbers") from error
    finite = np.isfinite(array)
    if not np.all(finite):
        bad_value, where = _index_text(array, ~finite)
        raise ValueError(f"{name} must be finite; got {bad_value}{where}")
    return array


def _check_interval(
    name: str,
    array: np.ndarray,
    low: float,
    high: float,
    *,
    closed_low: bool,
    closed_high: bool,
) -> None:
    """Raise ValueError naming ``name`` unless every element lies in the interval."""
    above = array >= low if closed_low else array > low
    below = array <= high if closed_high else array < high
    inside = above & below
    if not np.all(inside):
        bad_value, where = _index_text(array, ~inside)
        interval = f"{'[' if closed_low else '('}{low:g}, {high:g}{']' if closed_high else ')'}"
        raise ValueError(f"{name} must lie in {interval}; got {bad_value:g}{where}")


def _check_count(name: str, value: object, minimum: int) -> int:
    """Return ``value`` as an int, requiring an integer >= ``minimum``."""
    if isinstance(value, bool) or not isinstance(value, int | np.integer):
        raise TypeError(f"{name} must be an integer; got {value!r}")
    if value < minimum:
        raise ValueError(f"{name} must be an integer >= {minimum}; got {value}")
    return int(value)


def legendre_polynomials(cosines: np.ndarray, n_moments: int) -> np.ndarray:
    """Legendre polynomials P_0..P_{n-1} at ``cosines``, stacked on a new last axis.

    Used by the solver's radiance corrections to tabulate P_l once per set of angles.

    The upward three-term recurrence is stable for |x| <= 1 because |P_l| <= 1 there.
    """
    # built degree by degree in contiguous rows (each step reads and writes whole arrays),
    # then moved to the last axis: the same arithmetic as on the last axis, in a fraction
    # of the time for large tables
    rows = np.empty((n_moments, *np.shape(cosines)))
    rows[0] = 1.0
    if n_moments > 1:
        rows[1] = cosines
    for degree in range(1, n_moments - 1):
        rows[degree + 1] = (
            (2 * degree + 1) * cosines * rows[degree] - degree * rows[degree - 1]
        ) / (degree + 1)
    return np.ascontiguousarray(np.moveaxis(rows, 0, -1))


# --------------------------------------------------------------------------------------
# analytic phase functions
# --------------------------------------------------------------------------------------


def henyey_greenstein(asymmetry_parameter: ArrayLike, n_moments: int) -> NDArray[np.float64]:
    """Legendre moments of the Henyey-Greenstein phase function.

    Parameters
    ----------
    asymmetry_parameter : array_like
        The asymmetry parameter g, in (-1, 1). Any shape.
    n_moments : int
        Number of moments to return (l = 0 .. n_moments - 1), at least 1.

    Returns
    -------
    numpy.ndarray
        chi_l = g**l, shape ``np.shape(asymmetry_parameter) + (n_moments,)``.

    Raises
    ------
    ValueError
        If any ``|g| >= 1`` or ``n_moments < 1``.

    References
    ----------
    Henyey and Greenstein (1941), Astrophys. J. 93, 70.

    Examples
    --------
    >>> henyey_greenstein(0.5, 4)
    array([1.   , 0.5  , 0.25 , 0.125])
    >>> henyey_greenstein([0.0, 0.8], 3).shape
    (2, 3)
    """
    n_moments = _check_count("n_moments", n_moments, 1)
    g = _as_real_array("asymmetry_parameter", asymmetry_parameter)
    _check_interval("asymmetry_parameter", g, -1.0, 1.0, closed_low=False, closed_high=False)
    # 0.0 ** 0 is 1 in numpy, so g = 0 gives the isotropic [1, 0, 0, ...].
    return g[..., np.newaxis] ** np.arange(n_moments)


def double_henyey_greenstein(
    forward_asymmetry: ArrayLike,
    backward_asymmetry: ArrayLike,
    forward_fraction: ArrayLike,
    n_moments: int,
) -> NDArray[np.float64]:
    """Legendre moments of a weighted sum of two Henyey-Greenstein phase functions.

    P = b P_HG(g_f) + (1 - b) P_HG(g_b), so chi_l = b g_f**l + (1 - b) g_b**l.

    Parameters
    ----------
    forward_asymmetry : array_like
        g_f of the forward lobe, in (-1, 1) (usually positive).
    backward_asymmetry : array_like
        g_b of the backward lobe, in (-1, 1) (usually negative).
    forward_fraction : array_like
        Weight b of the forward lobe, in [0, 1].
    n_moments : int
        Number of moments to return, at least 1.

    Returns
    -------
    numpy.ndarray
        Moments of shape ``broadcast(shapes of the three parameters) + (n_moments,)``.

    Raises
    ------
    ValueError
        If a parameter is outside its range or the parameters do not broadcast.

    Examples
    --------
    >>> double_henyey_greenstein(0.8, -0.5, 0.9, 3)
    array([1.   , 0.67 , 0.601])
    """
    n_moments = _check_count("n_moments", n_moments, 1)
    forward = _as_real_array("forward_asymmetry", forward_asymmetry)
    backward = _as_real_array("backward_asymmetry", backward_asymmetry)
    fraction = _as_real_array("forward_fraction", forward_fraction)
    for name, array in (("forward_asymmetry", forward), ("backward_asymmetry", backward)):
        _check_interval(name, array, -1.0, 1.0, closed_low=False, closed_high=False)
    _check_interval("forward_fraction", fraction, 0.0, 1.0, closed_low=True, closed_high=True)
    try:
        forward, backward, fraction = np.broadcast_arrays(forward, backward, fraction)
    except ValueError as error:
        raise ValueError(
            "forward_asymmetry, backward_asymmetry and forward_fraction must broadcast "
            f"together; got shapes {forward.shape}, {backward.shape}, {fraction.shape}"
        ) from error
    orders = np.arange(n_moments)
    fraction = fraction[..., np.newaxis]
    return fraction * forward[..., np.newaxis] ** orders + (1.0 - fraction) * (
        backward[..., np.newaxis] ** orders
    )


def rayleigh(depolarization: ArrayLike = 0.0, n_moments: int = 3) -> NDArray[np.float64]:
    """Legendre moments of the Rayleigh phase function, with depolarization.

    With gamma = rho / (2 - rho), the phase function is
    3 / (4 (1 + 2 gamma)) [(1 + 3 gamma) + (1 - gamma) cos^2 T], whose moments are
    [1, 0, (1 - gamma) / (10 (1 + 2 gamma)), 0, 0, ...].

    Parameters
    ----------
    depolarization : array_like, optional
        Depolarization factor rho in [0, 1) (about 0.028 for dry air). Any shape.
    n_moments : int, optional
        Number of moments (at least 3, since the phase function has a second moment);
        moments beyond l = 2 are zero.

    Returns
    -------
    numpy.ndarray
        Shape ``np.shape(depolarization) + (n_moments,)``.

    References
    ----------
    Hansen and Travis (1974), Space Sci. Rev. 16, 527.

    Examples
    --------
    >>> rayleigh()
    array([1. , 0. , 0.1])
    >>> rayleigh(0.0, n_moments=5)
    array([1. , 0. , 0.1, 0. , 0. ])
    """
    n_moments = _check_count("n_moments", n_moments, 3)
    rho = _as_real_array("depolarization", depolarization)
    _check_interval("depolarization", rho, 0.0, 1.0, closed_low=True, closed_high=False)
    gamma = rho / (2.0 - rho)
    moments = np.zeros(rho.shape + (n_moments,))
    moments[..., 0] = 1.0
    moments[..., 2] = 0.1 * (1.0 - gamma) / (1.0 + 2.0 * gamma)
    return moments


def rayleigh_matrix(
    depolarization: ArrayLike = 0.0, n_moments: int = 3
) -> NDArray[np.float64]:
    """Expansion coefficients of the Rayleigh scattering matrix, with depolarization.

    With Delta = (1 - rho) / (1 + rho / 2) and Delta' = (1 - 2 rho) / (1 - rho), the Rayleigh
    matrix (Hansen and Travis 1974, eqs. 2.15-2.16, numbers from memory) is, with x = cos T,
    F11 = 3/4 Delta (1 + x^2) + 1 - Delta, F12 = -3/4 Delta (1 - x^2),
    F22 = 3/4 Delta (1 + x^2), F33 = 3/2 Delta x, F44 = 3/2 Delta Delta' x, F34 = 0.
    Its coefficients in generalized spherical functions, in lamina's normalisation (the
    published ones divided by 2l + 1, so that alpha1 equals :func:`rayleigh`), are
    alpha1 = [1, 0, Delta/10], alpha2 = [0, 0, 3 Delta/5], alpha4 = [0, Delta Delta'/2, 0],
    beta1 = [0, 0, sqrt(6) Delta/10], alpha3 = beta2 = 0 (de Rooij and van der Stap 1984;
    Hovenier, van der Mee and Domke 2004, table of the Rayleigh coefficients).

    Parameters
    ----------
    depolarization : array_like, optional
        Depolarization factor rho in [0, 1) (about 0.028 for dry air). Any shape.
    n_moments : int, optional
        Number of moments (at least 3); moments beyond l = 2 are zero.

    Returns
    -------
    numpy.ndarray
        Shape ``np.shape(depolarization) + (n_moments, 6)``: (moment, element), the
        elements in the order of :data:`SCATTERING_MATRIX_ELEMENTS` ("alpha1", "alpha2",
        "alpha3", "alpha4", "beta1", "beta2"). :func:`lamina.polarization.matrix_from_expansion`
        evaluates the matrix.

    References
    ----------
    Hansen and Travis (1974), Space Sci. Rev. 16, 527; de Rooij and van der Stap (1984),
    Astron. Astrophys. 131, 237.

    Examples
    --------
    >>> rayleigh_matrix()[2].round(4).tolist()
    [0.1, 0.6, 0.0, 0.0, 0.2449, 0.0]
    >>> rayleigh_matrix(0.03, n_moments=8).shape
    (8, 6)
    """
    n_moments = _check_count("n_moments", n_moments, 3)
    rho = _as_real_array("depolarization", depolarization)
    _check_interval("depolarization", rho, 0.0, 1.0, closed_low=True, closed_high=False)
    delta = (1.0 - rho) / (1.0 + 0.5 * rho)
    delta_prime = (1.0 - 2.0 * rho) / (1.0 - rho)
    coefficients = np.zeros(rho.shape + (n_moments, 6))
    # 0.1 Delta is rayleigh()'s chi_2, 0.1 (1 - gamma) / (1 + 2 gamma), in other words; take
    # that one, so that alpha1 and the scalar moments agree to the last bit
    coefficients[..., 0] = rayleigh(rho, n_moments)
    coefficients[..., 2, 1] = 0.6 * delta
    coefficients[..., 1, 3] = 0.5 * delta * delta_prime
    coefficients[..., 2, 4] = 0.1 * np.sqrt(6.0) * delta
    return coefficients


# --------------------------------------------------------------------------------------
# tabulated phase functions
# --------------------------------------------------------------------------------------


def _interval_nodes(n_intervals_width: float, n_moments: int) -> int:
    """Gauss nodes per table interval for the projection (see ``from_tabulated`` Notes)."""
    # P_l(cos theta) sin(theta) is a trigonometric polynomial of frequency <= l + 1, and over
    # an interval of width w it goes through about (l + 1) w / pi half-waves. A K-point
    # Gauss rule integrates such an oscillation to round-off once K exceeds roughly
    # (l + 1) w / 2 plus a margin for the smooth interpolant; the margin of 12 nodes also
    # covers a log-linear segment whose logarithm changes by several units.
    return 12 + int(np.ceil(0.5 * (n_moments + 1) * n_intervals_width))


def _check_angles(angle_deg: ArrayLike) -> np.ndarray:
    """A 1-D strictly increasing table of angles from 0 to 180 degrees (ends snapped).

    Ends that miss 0 or 180 by round-off (e.g. converted from radians) are snapped.
    """
    angle = _as_real_array("angle_deg", angle_deg)
    if angle.ndim != 1 or angle.size < 2:
        raise ValueError(
            f"angle_deg must be a 1-D array of at least 2 angles; got shape {angle.shape}"
        )
    steps = np.diff(angle)
    if not np.all(steps > 0.0):
        index = int(np.argmax(steps <= 0.0)) + 1
        raise ValueError(
            f"angle_deg must be strictly increasing; angle_deg[{index}] = {angle[index]:g} "
            f"follows {angle[index - 1]:g}"
        )
    if abs(angle[0]) > _ANGLE_END_TOLERANCE or abs(angle[-1] - 180.0) > _ANGLE_END_TOLERANCE:
        raise ValueError(
            f"angle_deg must span 0 to 180 degrees exactly; got {angle[0]:g} to {angle[-1]:g}"
        )
    angle = angle.copy()
    angle[0], angle[-1] = 0.0, 180.0
    return angle


def from_tabulated(
    angle_deg: ArrayLike,
    values: ArrayLike,
    n_moments: int,
    *,
    normalize: bool = False,
    interpolation: Literal["log", "linear"] = "log",
    normalization_tolerance: float = TABULATED_NORMALIZATION_TOLERANCE,
) -> NDArray[np.float64]:
    """Legendre moments of a phase function given as a table of values against angle.

    Parameters
    ----------
    angle_deg : array_like
        Scattering angles in degrees, 1-D, strictly increasing, from 0 to 180 (ends
        within 1e-9 degrees of 0 and 180 are taken as exact).
    values : array_like
        Phase function values at those angles, shape ``(..., n_angle)``; any leading axes
        are separate phase functions. Must be >= 0, normalised so that the mean over the
        sphere is 1 (integral over 4 pi sr equal to 4 pi).
    n_moments : int
        Number of moments to return, at least 1.
    normalize : bool, optional
        If True, rescale the table to unit mean instead of checking its normalisation.
    interpolation : {"log", "linear"}, optional
        How the table is read between its angles. "log" (default) is linear in angle of
        log(values), which follows the near-exponential fall of forward peaks; on an
        interval where either end value is zero it falls back to linear in angle.
        "linear" is linear in angle of the values.
    normalization_tolerance : float, optional
        Largest accepted relative departure of the table's mean over the sphere from 1
        (default 1e-2) when ``normalize`` is False.

    Returns
    -------
    numpy.ndarray
        Moments, shape ``values.shape[:-1] + (n_moments,)``, with chi_0 = 1 exactly.

    Raises
    ------
    ValueError
        For angles that are not 1-D, not strictly increasing, or do not span 0..180
        degrees; negative, non-finite or all-zero values; a mismatch between the two
        lengths; or a table whose normalisation is off by more than the tolerance.

    Notes
    -----
    chi_l = (1/2) int_0^pi P(theta) P_l(cos theta) sin(theta) d theta. The interpolant is
    smooth between table angles but has kinks at them, so the integral is done by a
    composite Gauss-Legendre rule: one K-point rule per table interval, in angle. (In
    cos(angle) the interpolant would also carry square-root singularities at 0 and 180
    degrees, which slow Gauss rules down.) K = 12 + ceil((n_moments + 1) w / 2), with w
    the widest interval in radians, resolves the oscillation of P_l on each interval, so
    the moments are those of the interpolant to about round-off; the remaining error is
    that of the table and its interpolation.

    Examples
    --------
    A Henyey-Greenstein table with g = 0.5 gives back chi_l = 0.5**l:

    >>> angle = np.linspace(0.0, 180.0, 1801)
    >>> cosine = np.cos(np.deg2rad(angle))
    >>> table = 0.75 / (1.25 - cosine) ** 1.5
    >>> np.round(from_tabulated(angle, table, 4), 5)
    array([1.   , 0.5  , 0.25 , 0.125])
    """
    n_moments = _check_count("n_moments", n_moments, 1)
    if interpolation not in ("log", "linear"):
        raise ValueError(f"interpolation must be 'log' or 'linear'; got {interpolation!r}")
    tolerance = float(_as_real_array("normalization_tolerance", normalization_tolerance))
    if not tolerance > 0.0:
        raise ValueError(f"normalization_tolerance must be > 0; got {tolerance:g}")

    angle = _check_angles(angle_deg)
    table = _as_real_array("values", values)
    if table.ndim == 0 or table.shape[-1] != angle.size:
        raise ValueError(
            f"values must have {angle.size} entries on its last axis (one per angle_deg); "
            f"got shape {table.shape}"
        )
    negative = table < 0.0
    if np.any(negative):
        bad_value, where = _index_text(table, negative)
        raise ValueError(f"values must be >= 0; got {bad_value:g}{where}")

    # Gauss-Legendre nodes on every table interval, in angle (radians).
    theta_edges = np.deg2rad(angle)
    widths = np.diff(theta_edges)
    n_nodes = _interval_nodes(float(widths.max()), n_moments)
    unit_nodes, unit_weights = np.polynomial.legendre.leggauss(n_nodes)
    fraction = 0.5 * (unit_nodes + 1.0)  # position within each interval, in (0, 1)
    theta = theta_edges[:-1, np.newaxis] + widths[:, np.newaxis] * fraction  # (interval, K)
    # Weights of (1/2) int ... sin(theta) d theta, flattened over (interval, K).
    weights = (0.25 * widths[:, np.newaxis] * unit_weights * np.sin(theta)).ravel()
    cosines = np.cos(theta).ravel()

    lower = table[..., :-1, np.newaxis]
    upper = table[..., 1:, np.newaxis]
    linear = lower + (upper - lower) * fraction
    if interpolation == "log":
        positive = (lower > 0.0) & (upper > 0.0)
        with np.errstate(divide="ignore"):
            log_lower = np.log(np.where(positive, lower, 1.0))
            log_upper = np.log(np.where(positive, upper, 1.0))
        interpolated = np.where(
            positive, np.exp(log_lower + (log_upper - log_lower) * fraction), linear
        )
    else:
        interpolated = linear
    weighted = interpolated.reshape(table.shape[:-1] + (-1,)) * weights

    mean = weighted.sum(axis=-1)  # mean of P over the sphere, (1/4 pi) int P d Omega
    if np.any(mean <= 0.0):
        _, where = _index_text(mean, mean <= 0.0)
        raise ValueError(f"values must not be all zero{where}")
    if not normalize:
        off = np.abs(mean - 1.0) > tolerance
        if np.any(off):
            bad_mean, where = _index_text(mean, off)
            raise ValueError(
                "values must have mean 1 over the sphere (integral 4 pi over 4 pi sr) to "
                f"within {tolerance:g}; got mean {bad_mean:.6g}{where}; pass normalize=True "
                "to rescale"
            )

    moments = np.empty(table.shape[:-1] + (n_moments,))
    moments[..., 0] = 1.0
    # Loop over the (few hundred at most) Legendre orders, not over data: each step is a
    # whole-array contraction, and only two polynomial rows are kept in memory.
    previous, current = np.ones_like(cosines), cosines
    for degree in range(1, n_moments):
        moments[..., degree] = (weighted @ current) / mean
        previous, current = (
            current,
            ((2 * degree + 1) * cosines * current - degree * previous) / (degree + 1),
        )
    return moments


# --------------------------------------------------------------------------------------
# evaluation
# --------------------------------------------------------------------------------------


def evaluate(phase_moments: ArrayLike, scattering_angle_deg: ArrayLike) -> NDArray[np.float64]:
    """Phase function values from Legendre moments.

    Parameters
    ----------
    phase_moments : array_like
        Moments chi_l, shape ``(..., n_moments)``.
    scattering_angle_deg : array_like
        Scattering angles in degrees, in [0, 180], any shape.

    Returns
    -------
    numpy.ndarray
        P(cos T) = sum_l (2 l + 1) chi_l P_l(cos T), shape
        ``phase_moments.shape[:-1] + np.shape(scattering_angle_deg)`` (every phase
        function at every angle).

    Notes
    -----
    The series is summed by Clenshaw's recurrence (numpy.polynomial.legendre.legval),
    which is stable for ``|cos T| <= 1``.

    Examples
    --------
    >>> evaluate(rayleigh(), [0.0, 90.0])
    array([1.5 , 0.75])
    """
    moments = _as_real_array("phase_moments", phase_moments)
    if moments.ndim == 0 or moments.shape[-1] == 0:
        raise ValueError(
            f"phase_moments must have at least one moment on its last axis; "
            f"got shape {moments.shape}"
        )
    angle = _as_real_array("scattering_angle_deg", scattering_angle_deg)
    _check_interval("scattering_angle_deg", angle, 0.0, 180.0, closed_low=True, closed_high=True)
    coefficients = moments * (2.0 * np.arange(moments.shape[-1]) + 1.0)
    return np.polynomial.legendre.legval(
        np.cos(np.deg2rad(angle)), np.moveaxis(coefficients, -1, 0), tensor=True
    )


# --------------------------------------------------------------------------------------
# delta-M scaling
# --------------------------------------------------------------------------------------


class DeltaMScaling(NamedTuple):
    """Result of :func:`delta_m_scale` (unpacks as a 4-tuple)."""

    scaled_optical_depth: NDArray[np.float64]
    """t' = t (1 - w f), shape (..., layer)."""
    scaled_single_scattering_albedo: NDArray[np.float64]
    """w' = w (1 - f) / (1 - w f), shape (..., layer); exactly 1 where w is 1."""
    scaled_phase_moments: NDArray[np.float64]
    """chi_l' = (chi_l - f) / (1 - f) for l = 0 .. streams - 1, shape (..., layer, streams)."""
    truncation_fraction: NDArray[np.float64]
    """f = chi_streams, the forward-peak fraction moved into the direct beam."""


def delta_m_scale(
    optical_depth: ArrayLike,
    single_scattering_albedo: ArrayLike,
    phase_moments: ArrayLike,
    streams: int,
) -> DeltaMScaling:
    """Delta-M scaling of layers with forward-peaked phase functions (Wiscombe 1977).

    The part f of the phase function that the streams cannot represent is treated as
    unscattered light: with f = chi_M, M = ``streams`` (the total number of streams,
    2N; chi_M is the first moment an M-stream quadrature cannot carry),

        chi_l' = (chi_l - f) / (1 - f)   for l = 0 .. M - 1,
        w'     = w (1 - f) / (1 - w f),
        t'     = t (1 - w f).

    These keep the absorption optical depth (1 - w) t and the scattering optical depth
    outside the peak, w t (1 - f), unchanged.

    Parameters
    ----------
    optical_depth : array_like
        Layer optical thickness t >= 0, shape (..., layer).
    single_scattering_albedo : array_like
        w in [0, 1], shape (..., layer).
    phase_moments : array_like
        Moments chi_l with chi_0 = 1 and ``|chi_l| <= 1``, shape (..., layer, moment). If
        there are fewer than M + 1 moments, the missing ones are zero (then f = 0 and
        the moments are only zero-padded to M).
    streams : int
        Total number of streams M (even, >= 2).

    Returns
    -------
    DeltaMScaling
        ``(scaled_optical_depth, scaled_single_scattering_albedo, scaled_phase_moments,
        truncation_fraction)``; the first, second and fourth have the broadcast shape
        (..., layer) of the inputs, the moments (..., layer, M).

    Raises
    ------
    ValueError
        For out-of-range inputs, shapes that do not broadcast, or an odd ``streams``.

    Notes
    -----
    Where w = 1 the scaled albedo is set to exactly 1 (energy conservation must survive
    the scaling). f = 1 (a pure forward delta) would divide by zero; there the scattering
    is entirely moved into the beam, w' = 0 (or 1 if w = 1, where then t' = 0) and the
    scaled moments are set to the isotropic [1, 0, ...], which no longer matter.

    References
    ----------
    Wiscombe (1977), J. Atmos. Sci. 34, 1408.

    Examples
    --------
    >>> scaled = delta_m_scale([1.0], [0.9], henyey_greenstein([0.8], 8), streams=4)
    >>> float(np.round(scaled.truncation_fraction[0], 4))
    0.4096
    >>> scaled.scaled_phase_moments.shape
    (1, 4)
    """
    streams = _check_count("streams", streams, 2)
    if streams % 2:
        raise ValueError(f"streams must be an even integer >= 2; got {streams}")
    tau = _as_real_array("optical_depth", optical_depth)
    albedo = _as_real_array("single_scattering_albedo", single_scattering_albedo)
    moments = _as_real_array("phase_moments", phase_moments)
    if moments.ndim < 2 or moments.shape[-1] == 0:
        raise ValueError(
            "phase_moments must have shape (..., layer, moment) with at least one moment; "
            f"got shape {moments.shape}"
        )
    negative = tau < 0.0
    if np.any(negative):
        bad_value, where = _index_text(tau, negative)
        raise ValueError(f"optical_depth must be >= 0; got {bad_value:g}{where}")
    _check_interval("single_scattering_albedo", albedo, 0.0, 1.0, closed_low=True, closed_high=True)
    zeroth_off = np.abs(moments[..., 0] - 1.0) > _ZEROTH_MOMENT_TOLERANCE
    if np.any(zeroth_off):
        bad_value, where = _index_text(moments[..., 0], zeroth_off)
        raise ValueError(f"phase_moments[..., 0] must be 1; got {bad_value:g}{where}")
    # the two extremes first: no temporary of the moments' size in the common case
    if moments.size and (moments.min() < -(1.0 + 1e-12) or moments.max() > 1.0 + 1e-12):
        too_large = np.abs(moments) > 1.0 + 1e-12
        bad_value, where = _index_text(moments, too_large)
        raise ValueError(f"phase_moments must satisfy |chi_l| <= 1; got {bad_value:g}{where}")

    try:
        layer_shape = np.broadcast_shapes(tau.shape, albedo.shape, moments.shape[:-1])
    except ValueError as error:
        raise ValueError(
            "optical_depth (..., layer), single_scattering_albedo (..., layer) and "
            "phase_moments (..., layer, moment) must broadcast; got shapes "
            f"{tau.shape}, {albedo.shape}, {moments.shape}"
        ) from error
    tau = np.broadcast_to(tau, layer_shape)
    albedo = np.broadcast_to(albedo, layer_shape)

    n_given = moments.shape[-1]
    if n_given > streams:
        truncation = np.broadcast_to(moments[..., streams], layer_shape).copy()
    else:
        truncation = np.zeros(layer_shape)
    kept = np.zeros(moments.shape[:-1] + (streams,))
    kept[..., : min(n_given, streams)] = moments[..., :streams]
    kept = np.broadcast_to(kept, layer_shape + (streams,))

    # f == 1 only for a forward delta; guard the divisions there (see Notes).
    delta_only = truncation >= 1.0
    remaining = np.where(delta_only, 1.0, 1.0 - truncation)
    scaled_moments = (kept - truncation[..., np.newaxis]) / remaining[..., np.newaxis]
    isotropic = np.zeros(streams)
    isotropic[0] = 1.0
    scaled_moments = np.where(delta_only[..., np.newaxis], isotropic, scaled_moments)

    lost = albedo * truncation
    denominator = 1.0 - lost
    conservative = albedo == 1.0
    safe_denominator = np.where(denominator > 0.0, denominator, 1.0)
    scaled_albedo = albedo * (1.0 - truncation) / safe_denominator
    scaled_albedo = np.where(delta_only, 0.0, scaled_albedo)
    # w' <= 1 holds exactly in arithmetic; clip the last-bit rounding, and make w = 1
    # come out as exactly 1 so that a conservative layer stays conservative.
    scaled_albedo = np.where(conservative, 1.0, np.clip(scaled_albedo, 0.0, 1.0))
    scaled_tau = tau * denominator
    return DeltaMScaling(scaled_tau, scaled_albedo, scaled_moments, truncation)
