"""Optical properties of log-normal size distributions of homogeneous spheres (Mie theory).

Single-sphere efficiencies and scattering amplitudes come from the ``miepython`` package;
this module integrates them over a log-normal size distribution and projects the
size-averaged phase function onto Legendre polynomials, giving the inputs lamina's solver
wants: cross-sections, single-scattering albedo, asymmetry parameter and phase moments.

Definitions
-----------
Number distribution (log-normal; e.g. Hansen and Travis 1974)::

    n(r) dr = N / (sqrt(2 pi) s r) exp(-(ln r - ln r_g)^2 / (2 s^2)) dr,   s = ln(sigma_g)

with r_g the median radius (``median_radius``) and sigma_g > 1 the geometric standard
deviation. Size parameter x = 2 pi r / lambda (the surrounding medium is vacuum/air with
index 1). Refractive index m = n + i k with k >= 0 meaning absorption (the sign convention
of Bohren and Huffman 1983); miepython uses n - i k, and the conversion happens here.

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

Single spheres: miepython gives Q_ext, Q_sca and g (``efficiencies_mx``) and the series
coefficients a_n, b_n (``coefficients``); the amplitudes
S1 = sum_n (2n+1)/(n(n+1)) (a_n pi_n + b_n tau_n), S2 likewise with pi_n and tau_n swapped
(Bohren and Huffman 1983, chapter 4) are summed here for all spheres at once as
matrix products. The phase function of one sphere is a polynomial in mu = cos T of degree
2 N, N the number of terms of its series (Wiscombe 1980: about x + 4.05 x^(1/3) + 2), so
the Gauss-Legendre rule in mu with N_max + ceil(n_moments / 2) + 1 nodes projects it onto
P_0 .. P_(n_moments - 1) exactly, up to round-off.

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

from lamina.phase import _as_real_array, _check_count, _index_text

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


def lognormal_optics(
    wavelength: ArrayLike,
    refractive_index: ArrayLike,
    median_radius: float,
    geometric_standard_deviation: float,
    n_moments: int = 32,
    *,
    radius_panels: int | None = None,
    width_cutoff: float = DEFAULT_WIDTH_CUTOFF,
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
    import miepython  # slow import (numba may be loaded); keep it out of `import lamina`

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
        raise ValueError(f"wavelength must be > 0 (micrometres); got {bad_value:g}{where}")
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

    log_width = float(np.log(sigma))
    # Radii of the area-weighted log-normal: median r_g exp(2 s^2), same log-width.
    area_median = float(radius) * np.exp(2.0 * log_width**2)
    standard, area_weights, radius_panels = _size_quadrature(
        2.0 * np.pi * area_median / wavelengths.min(), log_width, float(cutoff), radius_panels
    )
    radii = area_median * np.exp(log_width * standard)  # (node,)
    mean_geometric = np.pi * float(radius) ** 2 * np.exp(2.0 * log_width**2)

    size_parameter = 2.0 * np.pi * radii[np.newaxis, :] / wavelengths[:, np.newaxis]
    mie_index = np.broadcast_to(np.conj(index)[:, np.newaxis], size_parameter.shape)
    flat_x = size_parameter.ravel()
    flat_m = np.ascontiguousarray(mie_index.ravel())

    # Efficiencies of every (wavelength, radius) sphere; miepython takes the arrays.
    q_ext, q_sca, _, g_sphere = (
        np.asarray(value, dtype=np.float64).reshape(size_parameter.shape)
        for value in miepython.efficiencies_mx(flat_m, flat_x)
    )
    extinction_efficiency = q_ext @ area_weights
    scattering_efficiency = q_sca @ area_weights
    asymmetry = (q_sca * g_sphere) @ area_weights / scattering_efficiency
    albedo = scattering_efficiency / extinction_efficiency
    # k = 0 conserves energy exactly; do not let round-off in Q_sca/Q_ext leave w != 1,
    # and never let it exceed 1.
    albedo = np.where(index.imag == 0.0, 1.0, np.minimum(albedo, 1.0))

    # Mie coefficients a_n, b_n of every sphere from miepython, zero-padded to a common
    # length. miepython computes one sphere per call: this comprehension runs over
    # particles (wavelength x radius node), the granularity of its API.
    coefficients = [miepython.coefficients(m, x) for m, x in zip(flat_m, flat_x, strict=True)]
    n_terms = max(pair.shape[-1] for pair in coefficients)
    a_n = np.zeros((flat_x.size, n_terms), dtype=np.complex128)
    b_n = np.zeros((flat_x.size, n_terms), dtype=np.complex128)
    for sphere, (a_sphere, b_sphere) in enumerate(coefficients):
        a_n[sphere, : a_sphere.size] = a_sphere
        b_n[sphere, : b_sphere.size] = b_sphere

    # Size-averaged phase function on a Gauss-Legendre rule in mu that is exact for the
    # projection (see module docstring).
    n_angles = n_terms + (n_moments + 1) // 2 + 1
    cosines, angle_weights = special.roots_legendre(n_angles)  # O(n), unlike numpy
    angular_pi, angular_tau = _angular_functions(cosines, n_terms)
    order = np.arange(1, n_terms + 1)
    scale = (2.0 * order + 1.0) / (order * (order + 1.0))
    # S1 = sum_n (2n+1)/(n(n+1)) (a_n pi_n + b_n tau_n), S2 with pi and tau swapped
    # (Bohren and Huffman 1983, chapter 4): one matrix product for all spheres and angles.
    s1 = (a_n * scale) @ angular_pi + (b_n * scale) @ angular_tau
    s2 = (a_n * scale) @ angular_tau + (b_n * scale) @ angular_pi
    intensity = 0.5 * (np.abs(s1) ** 2 + np.abs(s2) ** 2)
    intensity = intensity.reshape(size_parameter.shape + (n_angles,))
    # Unnormalised amplitudes: int_{-1}^{1} intensity dmu = x^2 Q_sca / 2, so dividing by
    # x^2 and weighting by the area weights gives the cross-section weighted mean.
    phase_function = np.einsum(
        "wrk,r->wk", intensity / size_parameter[..., np.newaxis] ** 2, area_weights
    )
    weighted = phase_function * angle_weights
    norm = weighted.sum(axis=-1)
    legendre = np.empty((n_angles, n_moments))
    legendre[:, 0] = 1.0
    if n_moments > 1:
        legendre[:, 1] = cosines
    for degree in range(1, n_moments - 1):
        legendre[:, degree + 1] = (
            (2 * degree + 1) * cosines * legendre[:, degree] - degree * legendre[:, degree - 1]
        ) / (degree + 1)
    moments = (weighted @ legendre) / norm[:, np.newaxis]
    moments[:, 0] = 1.0

    def variable(dims, values, units, long_name, **extra):
        return xr.Variable(dims, values, {"units": units, "long_name": long_name, **extra})

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
    attrs = {
        "size_distribution": "log-normal number distribution",
        "median_radius": float(radius),
        "median_radius_units": "um",
        "geometric_standard_deviation": float(sigma),
        "mean_geometric_cross_section": float(mean_geometric),
        "mean_geometric_cross_section_units": "um2",
        "refractive_index_convention": "m = n + i k, k >= 0 absorbing",
        "method": (
            "Mie theory (miepython), averaged by composite Gauss-Legendre quadrature in log radius"
        ),
        "radius_panels": radius_panels,
        "radius_nodes": int(standard.size),
        "width_cutoff": float(cutoff),
        "angle_nodes": n_angles,
        "miepython_version": miepython.__version__,
    }
    return xr.Dataset(data, coords=coords, attrs=attrs)
