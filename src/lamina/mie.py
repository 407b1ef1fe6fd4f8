"""Optical properties of log-normal size distributions of homogeneous spheres (Mie theory).

Single-sphere Mie series are summed here for many spheres at once (the recurrences of
Bohren and Huffman 1983, checked against the ``miepython`` package in the tests); this module
integrates them over a log-normal size distribution and projects the
size-averaged phase function onto Legendre polynomials, giving the inputs lamina's solver
wants: cross-sections, single-scattering albedo, asymmetry parameter and phase moments.

Definitions
-----------
Number distribution (log-normal; e.g. Hansen and Travis 1974)::

    n(r) dr = N / (sqrt(2 pi) s r) exp(-(ln r - ln r_g)^2 / (2 s^2)) dr,   s = ln(sigma_g)

with r_g the median radius (``median_radius``) and sigma_g > 1 the geometric standard
deviation. Size parameter x = 2 pi r / lambda (the surrounding medium is vacuum/air with
index 1). Refractive index m = n + i k with k >= 0 meaning absorption (the sign convention
of Bohren and Huffman 1983, used throughout this module; miepython uses n - i k).

Size averages (per particle, over the number distribution)::

    C_ext = < pi r^2 Q_ext >,      C_sca = < pi r^2 Q_sca >,
    Q_ext = C_ext / < pi r^2 >,    Q_sca = C_sca / < pi r^2 >,
    w     = C_sca / C_ext,          g = < pi r^2 Q_sca g_sphere > / C_sca,

and the phase function is the scattering-cross-section weighted mean of the unpolarised
single-sphere phase functions, ``(|S1|^2 + |S2|^2) / 2`` up to normalisation.

Method
------
Weighting by the geometric cross-section pi r^2 turns the log-normal number distribution
into another log-normal, with the same width and median r_g exp(2 s^2), and
< pi r^2 > = pi r_g^2 exp(2 s^2) exactly. Every average above is therefore an average of
Q (or of Q g, or of ``|S|^2 / x^2``) over a standard normal variable
y = (ln r - ln r_g - 2 s^2) / s, taken on y in [-c, c] (c = ``width_cutoff``, 6 by
default: the normal weight outside is 2e-9, so bounded efficiencies carry no truncation
error worth the name; only in the Rayleigh limit, Q_sca ~ x^4, does the scattering weight
shift by 4 s widths, and a wide distribution of very small particles then needs a larger
cutoff). The rule is composite Gauss-Legendre, 6 nodes per panel, with panels no wider
than 0.5 in y (to follow the normal density) and, within ``|y| <= 4``, no wider than 1 in size
parameter at the shortest wavelength (to follow the interference structure of the
efficiencies, whose period in x is about pi / (n - 1)); beyond ``|y| = 4`` the size-parameter
requirement relaxes with the normal weight. Doubling the panels then changes the averages
of absorbing spheres (k >~ 0.05) by less than about 1e-6. The narrow ripple resonances of
weakly absorbing spheres are not resolved by any such rule: they leave scatter of order
1e-4 (k ~ 1e-3 to 1e-2) up to 1e-3 (k = 0) in the averages, which more panels
(``radius_panels``) reduce only slowly.

Single spheres: the coefficients a_n, b_n (n up to Wiscombe's N = x + 4.05 x^(1/3) + 2)
come from the recurrences of Bohren and Huffman (1983, chapter 4 and appendix A), the
logarithmic derivative D_n(mx) and the ratio psi_n / psi_(n-1) run downwards (their stable
direction), chi_n upwards; the loop runs over the order n with every sphere of a block of
neighbouring size nodes in one numpy operation, each block padded only to its own longest
series. Q_ext, Q_sca and g follow from the coefficients (Bohren and Huffman eqs. 4.61, 4.62
and section 4.5), and the amplitudes
S1 = sum_n (2n+1)/(n(n+1)) (a_n pi_n + b_n tau_n), S2 likewise with pi_n and tau_n swapped,
as S1 +- S2 = sum_n (2n+1)/(n(n+1)) (a_n +- b_n)(pi_n +- tau_n): real matrix products over
all spheres of a block and all angles. The phase function of one sphere is a polynomial in
mu = cos T of degree 2 N, so the Gauss-Legendre rule in mu with
N_max + ceil(n_moments / 2) + 1 nodes (N_max the longest series at that wavelength) projects
it onto P_0 .. P_(n_moments - 1) exactly, up to round-off.

Scattering matrix
-----------------
With ``scattering_matrix=True`` the size-averaged scattering matrix is projected too. For
a sphere (Bohren and Huffman 1983, eq. 3.16 and section 4.4.4), with Stokes parameters
referred to the scattering plane::

    F11 = F22 = (|S1|^2 + |S2|^2) / 2,   F12 = (|S2|^2 - |S1|^2) / 2,
    F33 = F44 = Re(S1 S2*),              F34 = Im(S2 S1*),

(Bohren and Huffman's S11, S12, S33, S34, with their exp(-i omega t) time dependence and m
= n + i k), all divided by the same factor as F11, which then averages to 1 over the
sphere. So F12 < 0 where the scattered light is polarized perpendicular to the scattering
plane (-sin^2 T / (1 + cos^2 T) times F11 for small spheres, as Rayleigh's matrix). The
sign of F34 (and so of V) is that of this time dependence: a convention with exp(+i omega
t) flips it (equation and section numbers here from memory). Each element is a polynomial
in mu of degree at most 2 N, as the phase function is, and the same Gauss rule projects it
exactly onto the generalized spherical functions
(:func:`lamina.polarization.project_on_nodes`).

References
----------
Bohren, C. F. and Huffman, D. R. (1983), Absorption and Scattering of Light by Small
Particles, Wiley.
Hansen, J. E. and Travis, L. D. (1974), Light scattering in planetary atmospheres,
Space Sci. Rev. 16, 527-610.
Wiscombe, W. J. (1980), Improved Mie scattering algorithms, Appl. Opt. 19, 1505-1509.
Prahl, S., miepython (software), https://github.com/scottprahl/miepython.
"""

from __future__ import annotations

import numpy as np
import xarray as xr
from numpy.typing import ArrayLike
from scipy import special

from lamina._checks import number_text
from lamina.phase import SCATTERING_MATRIX_ELEMENTS, _as_real_array, _check_count, _index_text
from lamina.polarization import ScatteringMatrix, project_on_nodes

__all__ = ["lognormal_optics"]

#: Default half-width, in log-widths, of the integration over the area-weighted log-normal.
DEFAULT_WIDTH_CUTOFF = 6.0
#: Gauss-Legendre nodes per panel of the size quadrature.
NODES_PER_PANEL = 6
#: Widest panel of the size quadrature, in log-widths (resolves the normal density).
_MAX_PANEL_WIDTH = 0.5
#: Widest panel in size parameter (the interference structure has period ~ pi / (n - 1)).
_MAX_PANEL_SIZE_PARAMETER_STEP = 1.0
#: Half-width (in log-widths) within which the size-parameter step is enforced fully.
_RESOLVED_WIDTH = 4.0


def _size_quadrature(
    top_size_parameter: float, log_width: float, cutoff: float, panels: int | None
) -> tuple[np.ndarray, np.ndarray, int]:
    """Composite Gauss-Legendre rule for a standard normal average over [-cutoff, cutoff].

    Returns the nodes y (standard normal variable), their weights (normal density times
    Gauss weights, normalised to sum 1 over the truncated range) and the number of panels.
    Panels are equally spaced in a progress variable u(y) with du/dy = 1/DY + (dx/dy)/DX,
    x(y) = top_size_parameter exp(log_width y) the size parameter at the shortest
    wavelength, DY = _MAX_PANEL_WIDTH and DX = _MAX_PANEL_SIZE_PARAMETER_STEP, so that no
    panel is wider than DY in y (resolving the normal density) or DX in x (resolving the
    interference structure of the efficiencies).
    """
    fine = np.linspace(-cutoff, cutoff, 8193)
    # du/dy: 1/DY everywhere, plus (dx/dy)/DX where the normal weight is not
    # negligible; beyond |y| = RESOLVED_WIDTH the size-parameter requirement fades with the
    # weight itself, since unresolved structure there can only err by that small weight.
    fading = np.exp(-0.5 * np.maximum(fine**2 - _RESOLVED_WIDTH**2, 0.0))
    density = (
        1.0 / _MAX_PANEL_WIDTH
        + (log_width * top_size_parameter * np.exp(log_width * fine) * fading)
        / _MAX_PANEL_SIZE_PARAMETER_STEP
    )
    progress = np.concatenate(
        [[0.0], np.cumsum(0.5 * (density[1:] + density[:-1]) * np.diff(fine))]
    )
    if panels is None:
        panels = int(np.ceil(progress[-1]))
    breaks = np.interp(np.linspace(0.0, progress[-1], panels + 1), progress, fine)
    breaks[0], breaks[-1] = -cutoff, cutoff
    unit_nodes, unit_weights = np.polynomial.legendre.leggauss(NODES_PER_PANEL)
    half = 0.5 * np.diff(breaks)[:, np.newaxis]
    nodes = (0.5 * (breaks[:-1] + breaks[1:]))[:, np.newaxis] + half * unit_nodes
    weights = half * unit_weights * np.exp(-0.5 * nodes**2)
    weights = (weights / weights.sum()).ravel()
    return nodes.ravel(), weights, panels


def _angular_functions(cosines: np.ndarray, n_terms: int) -> tuple[np.ndarray, np.ndarray]:
    """Mie angular functions pi_n(mu), tau_n(mu) for n = 1 .. n_terms, shape (n, angle).

    Upward recurrences of Bohren and Huffman (1983, chapter 4): pi_0 = 0, pi_1 = 1,
    pi_n = ((2n - 1) mu pi_(n-1) - n pi_(n-2)) / (n - 1), tau_n = n mu pi_n - (n + 1) pi_(n-1).
    """
    angular_pi = np.zeros((n_terms + 1, cosines.size))
    angular_pi[1] = 1.0
    for n in range(2, n_terms + 1):
        angular_pi[n] = ((2 * n - 1) * cosines * angular_pi[n - 1] - n * angular_pi[n - 2]) / (
            n - 1
        )
    order = np.arange(1, n_terms + 1)[:, np.newaxis]
    angular_tau = order * cosines * angular_pi[1:] - (order + 1) * angular_pi[:-1]
    return angular_pi[1:], angular_tau


#: How the matrix elements follow from the amplitude functions (module docstring).
SIGN_CONVENTION = (
    "F11 = (|S1|^2 + |S2|^2)/2, F12 = (|S2|^2 - |S1|^2)/2, F33 = Re(S1 S2*), "
    "F34 = Im(S2 S1*) (Bohren and Huffman 1983, eq. 3.16, exp(-i omega t) time "
    "dependence), normalised so that F11 averages to 1"
)

#: Spheres per block of the vectorised series (bounds the memory of the padded arrays).
_SPHERES_PER_BLOCK = 256


def _series_length(size_parameter: np.ndarray) -> np.ndarray:
    """Terms of the Mie series per sphere: Wiscombe's (1980) x + 4.05 x^(1/3) + 2."""
    return (size_parameter + 4.05 * np.cbrt(size_parameter) + 2.0).astype(np.int64)


def _mie_coefficients(
    index: np.ndarray, size_parameter: np.ndarray, n_terms: int
) -> tuple[np.ndarray, np.ndarray]:
    """Mie coefficients a_n, b_n (n = 1 .. n_terms) of many spheres in one vectorised pass.

    ``index`` is m = n + i k (k >= 0 absorbing, Bohren and Huffman's convention) and
    ``size_parameter`` x, both of shape (sphere,); returns complex arrays (sphere, n_terms)
    with the terms beyond each sphere's own series length (Wiscombe 1980) set to 0. The
    recurrences of Bohren and Huffman (1983, chapter 4 and appendix A) run over the order n
    for all spheres at once: the logarithmic derivative D_n(mx) and the ratio
    psi_n(x) / psi_(n-1)(x) downwards (both stable that way, started from 0 far enough up,
    as Miller's method), psi_n as products of the ratios from whichever of psi_0, psi_1 is
    larger, and chi_n upwards (its stable direction); xi_n = psi_n - i chi_n.
    """
    x = size_parameter[:, np.newaxis]
    mx = index * size_parameter
    # Start the downward recurrences well above both n_terms and |mx| (BHMIE uses + 15).
    n_start = int(max(n_terms, np.abs(mx).max()) + 16 + 1.5 * np.sqrt(np.abs(mx).max()))
    order = np.arange(1, n_terms + 1)
    log_derivative = np.zeros((size_parameter.size, n_terms), dtype=np.complex128)
    ratio = np.zeros((size_parameter.size, n_terms))
    d_next = np.zeros(size_parameter.size, dtype=np.complex128)
    r_next = np.zeros(size_parameter.size)
    # The loop runs over the order n (the recurrence direction); every step works on
    # all spheres at once.
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        for n in range(n_start, 0, -1):
            d_next = n / mx - 1.0 / (d_next + n / mx)  # D_(n-1) from D_n
            r_next = 1.0 / ((2 * n + 1) / size_parameter - r_next)  # psi_n / psi_(n-1)
            if 2 <= n <= n_terms + 1:
                log_derivative[:, n - 2] = d_next  # column j holds D_(j+1)
            if n <= n_terms:
                ratio[:, n - 1] = r_next  # column j holds psi_(j+1) / psi_j
    sin_x, cos_x = np.sin(size_parameter), np.cos(size_parameter)
    psi_one_direct = sin_x / size_parameter - cos_x
    use_zero = np.abs(sin_x) >= np.abs(psi_one_direct)
    psi_one = np.where(use_zero, ratio[:, 0] * sin_x, psi_one_direct)
    psi = np.empty((size_parameter.size, n_terms + 1))
    psi[:, 0] = sin_x
    psi[:, 1] = psi_one
    if n_terms > 1:
        psi[:, 2:] = psi_one[:, np.newaxis] * np.cumprod(ratio[:, 1:], axis=1)
    chi = np.empty((size_parameter.size, n_terms + 1))
    chi[:, 0] = cos_x
    chi_previous = -sin_x  # chi_(-1)
    with np.errstate(over="ignore", invalid="ignore"):
        for n in range(1, n_terms + 1):
            chi[:, n] = (2 * n - 1) / size_parameter * chi[:, n - 1] - chi_previous
            chi_previous = chi[:, n - 1]
        xi = psi - 1j * chi
        m = index[:, np.newaxis]
        term_a = log_derivative / m + order / x
        term_b = log_derivative * m + order / x
        a_n = (term_a * psi[:, 1:] - psi[:, :-1]) / (term_a * xi[:, 1:] - xi[:, :-1])
        b_n = (term_b * psi[:, 1:] - psi[:, :-1]) / (term_b * xi[:, 1:] - xi[:, :-1])
    inside = order <= _series_length(size_parameter)[:, np.newaxis]
    return np.where(inside, a_n, 0.0), np.where(inside, b_n, 0.0)


def _wavelength_averages(
    index: complex,
    size_parameter: np.ndarray,
    area_weights: np.ndarray,
    n_moments: int,
    matrix: bool = False,
) -> tuple[float, float, float, np.ndarray, int, np.ndarray | None]:
    """Size averages of Q_ext, Q_sca, Q_sca g and the phase moments at one wavelength.

    ``size_parameter`` holds the size nodes in increasing order; they are processed in
    blocks of neighbours, each block padded only to its own longest series. Returns the
    three averages, the moments chi_0 .. chi_(n_moments - 1), the number of angle nodes and,
    if ``matrix``, the scattering-matrix coefficients (moment, element) (else None).
    """
    n_terms = int(_series_length(size_parameter).max())
    # Gauss-Legendre rule in mu exact for the projection (see module docstring).
    n_angles = n_terms + (n_moments + 1) // 2 + 1
    cosines, angle_weights = special.roots_legendre(n_angles)  # O(n), unlike numpy
    angular_pi, angular_tau = _angular_functions(cosines, n_terms)
    order = np.arange(1, n_terms + 1)
    scale = ((2.0 * order + 1.0) / (order * (order + 1.0)))[:, np.newaxis]
    # S1 +- S2 = sum_n (2n+1)/(n(n+1)) (a_n +- b_n)(pi_n +- tau_n) (Bohren and Huffman
    # 1983, chapter 4), and |S1|^2 + |S2|^2 = (|S1 + S2|^2 + |S1 - S2|^2) / 2: two real
    # matrix products per block instead of four complex ones.
    plus, minus = scale * (angular_pi + angular_tau), scale * (angular_pi - angular_tau)
    sums = np.zeros(3)
    phase_function = np.zeros(n_angles)
    # F12, F33, F34 of the size average (section "Scattering matrix" of the module docstring)
    polarized = np.zeros((3, n_angles))
    for start in range(0, size_parameter.size, _SPHERES_PER_BLOCK):
        x = size_parameter[start : start + _SPHERES_PER_BLOCK]
        weights = area_weights[start : start + _SPHERES_PER_BLOCK]
        terms = int(_series_length(x).max())
        a_n, b_n = _mie_coefficients(np.full(x.size, index), x, terms)
        degree = order[:terms]
        # Bohren and Huffman (1983) eqs. 4.61, 4.62 and the asymmetry sum of section 4.5.
        q_ext = 2.0 / x**2 * ((2 * degree + 1) * (a_n + b_n).real).sum(axis=1)
        q_sca = 2.0 / x**2 * ((2 * degree + 1) * (np.abs(a_n) ** 2 + np.abs(b_n) ** 2)).sum(1)
        neighbours = (a_n[:, :-1] * np.conj(a_n[:, 1:]) + b_n[:, :-1] * np.conj(b_n[:, 1:])).real
        q_sca_g = 4.0 / x**2 * (
            (degree[:-1] * (degree[:-1] + 2.0) / (degree[:-1] + 1.0) * neighbours).sum(axis=1)
            + ((2.0 * degree + 1.0) / (degree * (degree + 1.0)) * (a_n * np.conj(b_n)).real).sum(1)
        )
        sums += np.stack([q_ext, q_sca, q_sca_g]) @ weights
        amplitudes = []  # S1 + S2 and S1 - S2, each as (real, imaginary), (sphere, angle)
        for pair, functions in ((a_n + b_n, plus), (a_n - b_n, minus)):
            amplitude = np.concatenate([pair.real, pair.imag]) @ functions[:terms]
            amplitudes.append((amplitude[: x.size], amplitude[x.size :]))
        (sum_re, sum_im), (diff_re, diff_im) = amplitudes
        intensity = sum_re**2 + sum_im**2 + diff_re**2 + diff_im**2
        # Unnormalised amplitudes: int_{-1}^{1} intensity dmu = x^2 Q_sca / 2, so dividing
        # by x^2 and weighting by the area weights gives the cross-section weighted mean.
        size_weights = 0.25 * weights / x**2
        phase_function += size_weights @ intensity
        if matrix:
            # with A = S1 + S2, B = S1 - S2: |S2|^2 - |S1|^2 = -Re(A B*),
            # Re(S1 S2*) = (|A|^2 - |B|^2) / 4 and Im(S2 S1*) = Im(A B*) / 2
            cross_re = sum_re * diff_re + sum_im * diff_im
            cross_im = sum_im * diff_re - sum_re * diff_im
            # (the factor 0.25 of size_weights maps |A|^2 + |B|^2 = 2 (|S1|^2 + |S2|^2) to F11)
            polarized += size_weights @ np.stack([
                -2.0 * cross_re,
                sum_re**2 + sum_im**2 - diff_re**2 - diff_im**2,
                2.0 * cross_im,
            ])
    weighted = phase_function * angle_weights
    legendre = np.empty((n_angles, n_moments))
    legendre[:, 0] = 1.0
    if n_moments > 1:
        legendre[:, 1] = cosines
    for degree in range(1, n_moments - 1):
        legendre[:, degree + 1] = (
            (2 * degree + 1) * cosines * legendre[:, degree] - degree * legendre[:, degree - 1]
        ) / (degree + 1)
    moments = (weighted @ legendre) / weighted.sum()
    moments[0] = 1.0
    coefficients = None
    if matrix:
        f12, f33, f34 = polarized
        # spheres: F22 = F11 and F44 = F33 (Bohren and Huffman 1983, section 4.4.4)
        elements = ScatteringMatrix(phase_function, f12, phase_function, f33, f34, f33)
        coefficients = project_on_nodes(elements, cosines, angle_weights, n_moments)
        coefficients /= coefficients[0, 0]
    return sums[0], sums[1], sums[2], moments, n_angles, coefficients


def _validate_refractive_index(refractive_index: ArrayLike, shape: tuple[int, ...]) -> np.ndarray:
    try:
        index = np.asarray(refractive_index, dtype=np.complex128)
    except (TypeError, ValueError) as error:
        raise TypeError("refractive_index must be a complex number or array") from error
    finite = np.isfinite(index)
    if not np.all(finite):
        bad_value, where = _index_text(index, ~finite)
        raise ValueError(f"refractive_index must be finite; got {bad_value}{where}")
    if index.ndim > 1 or (index.ndim == 1 and index.shape != shape):
        raise ValueError(
            "refractive_index must be a scalar or have one value per wavelength "
            f"(shape {shape}); got shape {index.shape}"
        )
    index = np.broadcast_to(index, shape)
    not_positive = index.real <= 0.0
    if np.any(not_positive):
        bad_value, where = _index_text(index, not_positive)
        raise ValueError(f"refractive_index must have a real part > 0; got {bad_value}{where}")
    emitting = index.imag < 0.0
    if np.any(emitting):
        bad_value, where = _index_text(index, emitting)
        raise ValueError(
            "refractive_index must have an imaginary part >= 0 (m = n + i k, k >= 0 "
            f"absorbing); got {bad_value}{where}"
        )
    return index


def _checked_inputs(n_moments, wavelength, refractive_index, median_radius,
                    geometric_standard_deviation, width_cutoff, radius_panels,
                    scattering_matrix):
    """The arguments of :func:`lognormal_optics`, checked (ValueErrors name them)."""
    n_moments = _check_count("n_moments", n_moments, 1)
    wavelengths = _as_real_array("wavelength", wavelength)
    if wavelengths.ndim > 1:
        raise ValueError(f"wavelength must be a scalar or 1-D; got shape {wavelengths.shape}")
    wavelengths = np.atleast_1d(wavelengths)
    if wavelengths.size == 0:
        raise ValueError("wavelength must hold at least one value")
    not_positive = wavelengths <= 0.0
    if np.any(not_positive):
        bad_value, where = _index_text(wavelengths, not_positive)
        raise ValueError(
            f"wavelength must be > 0 (micrometres); got {number_text(bad_value)}{where}"
        )
    index = _validate_refractive_index(refractive_index, wavelengths.shape)
    radius = _as_real_array("median_radius", median_radius)
    if radius.ndim != 0 or not radius > 0.0:
        raise ValueError(f"median_radius must be a number > 0 (micrometres); got {radius}")
    sigma = _as_real_array("geometric_standard_deviation", geometric_standard_deviation)
    if sigma.ndim != 0 or not sigma > 1.0:
        raise ValueError(f"geometric_standard_deviation must be a number > 1; got {sigma}")
    cutoff = _as_real_array("width_cutoff", width_cutoff)
    if cutoff.ndim != 0 or not cutoff > 0.0:
        raise ValueError(f"width_cutoff must be a number > 0; got {cutoff}")
    if radius_panels is not None:
        radius_panels = _check_count("radius_panels", radius_panels, 1)
    if not isinstance(scattering_matrix, bool | np.bool_):
        raise TypeError(f"scattering_matrix must be True or False; got {scattering_matrix!r}")
    return n_moments, wavelengths, index, radius, sigma, cutoff, radius_panels


def _variable(dims, values, units, long_name, **extra):
    return xr.Variable(dims, values, {"units": units, "long_name": long_name, **extra})


def _optics_variables(wavelengths, n_moments, index, mean_geometric, extinction_efficiency,
                      scattering_efficiency, albedo, asymmetry, moments, averages,
                      scattering_matrix):
    """The coordinates and variables of the optics Dataset, with units and long names."""
    variable = _variable
    coords = {
        "wavelength": variable(("wavelength",), wavelengths, "um", "wavelength in vacuum"),
        "moment": variable(("moment",), np.arange(n_moments), "1", "Legendre order"),
    }
    data = {
        "extinction_cross_section": variable(
            ("wavelength",),
            mean_geometric * extinction_efficiency,
            "um2",
            "mean extinction cross-section per particle",
        ),
        "scattering_cross_section": variable(
            ("wavelength",),
            mean_geometric * scattering_efficiency,
            "um2",
            "mean scattering cross-section per particle",
        ),
        "extinction_efficiency": variable(
            ("wavelength",),
            extinction_efficiency,
            "1",
            "extinction efficiency (mean cross-section over mean geometric cross-section)",
        ),
        "scattering_efficiency": variable(
            ("wavelength",),
            scattering_efficiency,
            "1",
            "scattering efficiency (mean cross-section over mean geometric cross-section)",
        ),
        "single_scattering_albedo": variable(
            ("wavelength",), albedo, "1", "single-scattering albedo"
        ),
        "asymmetry_parameter": variable(
            ("wavelength",), asymmetry, "1", "asymmetry parameter (mean cosine of scattering)"
        ),
        "phase_moments": variable(
            ("wavelength", "moment"),
            moments,
            "1",
            "Legendre moments chi_l of the phase function, P = sum (2l+1) chi_l P_l",
        ),
        "refractive_index_real": variable(
            ("wavelength",), index.real.copy(), "1", "real part n of refractive index"
        ),
        "refractive_index_imaginary": variable(
            ("wavelength",),
            index.imag.copy(),
            "1",
            "imaginary part k of refractive index (m = n + i k, k >= 0 absorbing)",
        ),
    }
    if scattering_matrix:
        coords["element"] = variable(("element",), list(SCATTERING_MATRIX_ELEMENTS), "1",
                                     "expansion coefficient of the scattering matrix")
        data["scattering_matrix_moments"] = variable(
            ("wavelength", "moment", "element"),
            np.stack([value[5] for value in averages]),
            "1",
            "coefficients of the scattering matrix in generalized spherical functions, "
            "F11 = sum (2l+1) alpha1_l P_l, F12 = sum (2l+1) beta1_l P^l_02, ...",
            stokes_convention=SIGN_CONVENTION,
        )
    return coords, data


def lognormal_optics(
    wavelength: ArrayLike,
    refractive_index: ArrayLike,
    median_radius: float,
    geometric_standard_deviation: float,
    n_moments: int = 32,
    *,
    radius_panels: int | None = None,
    width_cutoff: float = DEFAULT_WIDTH_CUTOFF,
    scattering_matrix: bool = False,
) -> xr.Dataset:
    """Mie optical properties of a log-normal distribution of homogeneous spheres.

    Parameters
    ----------
    wavelength : array_like
        Wavelengths in micrometres (> 0), scalar or 1-D.
    refractive_index : array_like
        Complex refractive index m = n + i k of the spheres relative to the surrounding
        medium, with k >= 0 for absorption; a scalar or one value per wavelength.
    median_radius : float
        Median radius r_g of the number distribution, micrometres (> 0).
    geometric_standard_deviation : float
        sigma_g > 1; the log-width is s = ln(sigma_g).
    n_moments : int, optional
        Number of Legendre moments of the phase function (l = 0 .. n_moments - 1).
    radius_panels : int, optional
        Number of panels of the composite size quadrature (each with
        ``NODES_PER_PANEL`` Gauss-Legendre nodes). By default chosen so that no panel is
        wider than 0.5 log-widths or (near the centre) 1 in size parameter; see the module
        docstring.
    width_cutoff : float, optional
        The size integral covers +-``width_cutoff`` log-widths of the area-weighted
        distribution (default 6).
    scattering_matrix : bool, optional
        If True, also return ``scattering_matrix_moments`` (wavelength, moment, element):
        the expansion coefficients of the size-averaged scattering matrix in generalized
        spherical functions (see :mod:`lamina.polarization`), ready for
        ``lamina.make_atmosphere(scattering_matrix_moments=...)``. Their alpha1 is
        ``phase_moments``.

    Returns
    -------
    xarray.Dataset
        Over dim ``wavelength`` (and ``moment``): ``extinction_cross_section`` and
        ``scattering_cross_section`` (um2 per particle), ``extinction_efficiency`` and
        ``scattering_efficiency`` (cross-sections over the mean geometric cross-section),
        ``single_scattering_albedo``, ``asymmetry_parameter``, ``phase_moments``
        (wavelength, moment; chi_0 = 1), and the ``refractive_index_real`` /
        ``refractive_index_imaginary`` used. Attributes record the distribution and the
        numerical settings.

    Raises
    ------
    ValueError
        For non-positive wavelengths or radius, sigma_g <= 1, a refractive index with a
        negative imaginary part or a non-positive real part, or mismatched shapes.

    Notes
    -----
    See the module docstring for definitions and the quadratures. The work grows with
    (number of wavelengths) x (number of size nodes) x (largest size parameter), the
    number of size nodes itself growing with the spread of size parameters covered.
    A non-absorbing sphere (k = 0) has single-scattering albedo exactly 1.

    Examples
    --------
    >>> optics = lognormal_optics([0.55, 1.0], 1.33, 0.5, 1.5, n_moments=4)
    >>> optics.phase_moments.sizes["moment"]
    4
    >>> bool((optics.single_scattering_albedo == 1.0).all())
    True
    """
    n_moments, wavelengths, index, radius, sigma, cutoff, radius_panels = _checked_inputs(
        n_moments, wavelength, refractive_index, median_radius, geometric_standard_deviation,
        width_cutoff, radius_panels, scattering_matrix)

    log_width = float(np.log(sigma))
    # Radii of the area-weighted log-normal: median r_g exp(2 s^2), same log-width.
    area_median = float(radius) * np.exp(2.0 * log_width**2)
    standard, area_weights, radius_panels = _size_quadrature(
        2.0 * np.pi * area_median / wavelengths.min(), log_width, float(cutoff), radius_panels
    )
    radii = area_median * np.exp(log_width * standard)  # (node,)
    mean_geometric = np.pi * float(radius) ** 2 * np.exp(2.0 * log_width**2)

    size_parameter = 2.0 * np.pi * radii[np.newaxis, :] / wavelengths[:, np.newaxis]
    # One vectorised pass over all size nodes per wavelength (the series recurrences run
    # over the order n, the products over spheres and angles as matrix products).
    averages = [
        _wavelength_averages(complex(m), x, area_weights, n_moments, bool(scattering_matrix))
        for m, x in zip(index, size_parameter, strict=True)
    ]
    extinction_efficiency = np.array([value[0] for value in averages])
    scattering_efficiency = np.array([value[1] for value in averages])
    asymmetry = np.array([value[2] for value in averages]) / scattering_efficiency
    moments = np.stack([value[3] for value in averages])
    n_angles = max(value[4] for value in averages)
    albedo = scattering_efficiency / extinction_efficiency
    # k = 0 conserves energy exactly; do not let round-off in Q_sca/Q_ext leave w != 1,
    # and never let it exceed 1.
    albedo = np.where(index.imag == 0.0, 1.0, np.minimum(albedo, 1.0))

    coords, data = _optics_variables(wavelengths, n_moments, index, mean_geometric,
                                     extinction_efficiency, scattering_efficiency, albedo,
                                     asymmetry, moments, averages, bool(scattering_matrix))
    attrs = {
        "size_distribution": "log-normal number distribution",
        "median_radius": float(radius),
        "median_radius_units": "um",
        "geometric_standard_deviation": float(sigma),
        "mean_geometric_cross_section": float(mean_geometric),
        "mean_geometric_cross_section_units": "um2",
        "refractive_index_convention": "m = n + i k, k >= 0 absorbing",
        "method": (
            "Mie theory (series of Bohren and Huffman 1983), averaged by composite "
            "Gauss-Legendre quadrature in log radius"
        ),
        "radius_panels": radius_panels,
        "radius_nodes": int(standard.size),
        "width_cutoff": float(cutoff),
        "angle_nodes": n_angles,
    }
    return xr.Dataset(data, coords=coords, attrs=attrs)
