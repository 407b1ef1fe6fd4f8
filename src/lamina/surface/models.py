"""Published surface reflection models, written from their mathematics.

Each model is a `Surface` (see ``_base.py``): parameters as DataArrays, checked against their
published ranges at construction, and a vectorised formula for the BRDF f in sr^-1. Models
published as a bidirectional reflectance factor R (1 for a white Lambertian surface) are
divided by pi: f = R / pi.

In the formulas, mu0 and mu are the cosines of the sun and view zeniths, phi is lamina's view
azimuth (0 on the specular side) and g is the phase angle between the directions to the sun
and to the viewer, cos g = mu0 mu - sin(theta0) sin(theta) cos(phi); g = 0 at the hot spot.
Papers that measure the relative azimuth from the backscatter side use phi_paper = pi - phi.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from scipy.special import erfc

from lamina.surface._base import Geometry, Surface, _as_parameter, _check_range


def _errstate() -> Any:
    # grazing views (mu = 0) give infinite secants in some models: that is the formula's
    # value there, not a fault; quadrature nodes never sit at mu = 0
    return np.errstate(divide="ignore", invalid="ignore", over="ignore")


def _henyey_greenstein_of_phase(asymmetry: np.ndarray, cos_phase: np.ndarray) -> np.ndarray:
    """Henyey-Greenstein phase function (normalised to 1 over 4 pi / (4 pi)) at phase angle g:
    scattering angle pi - g, so positive asymmetry scatters forward, away from the hot spot."""
    b = asymmetry
    return (1.0 - b * b) / (1.0 + b * b + 2.0 * b * cos_phase) ** 1.5


class Lambertian(Surface):
    """f = albedo / pi (Lambert 1760)."""

    def __init__(self, albedo: Any) -> None:
        albedo = _as_parameter(albedo, "albedo")
        _check_range(albedo, "albedo", 0.0, 1.0)
        self._parameters = {"albedo": albedo}

    def _evaluate(self, values: dict[str, np.ndarray], geometry: Geometry) -> np.ndarray:
        shape = np.broadcast_shapes(geometry.mu0.shape, geometry.mu.shape,
                                    geometry.cos_phi.shape, values["albedo"].shape)
        return np.broadcast_to(values["albedo"] / np.pi, shape).copy()

    def __repr__(self) -> str:
        return f"lambertian({self._parameters['albedo'].values})"


def lambertian(albedo: Any) -> Surface:
    """A Lambertian surface, f = albedo / pi; albedo in [0, 1] (scalar or DataArray).

    Its directional albedo is ``albedo`` at every sun angle.

    Examples
    --------
    >>> import numpy as np
    >>> float(np.round(lambertian(0.3).brdf(30.0, 45.0, 180.0) * np.pi, 12))
    0.3
    """
    return Lambertian(albedo)


class RahmanPintyVerstraete(Surface):
    """Rahman, Pinty and Verstraete (1993) reflectance factor, f = R / pi with

    R = amplitude [mu0 mu (mu0 + mu)]^(k - 1) F(g) [1 + (1 - hot_spot) / (1 + G)],
    F(g) = (1 - Theta^2) / (1 + Theta^2 + 2 Theta cos g)^(3/2),
    G = [tan^2 theta0 + tan^2 theta - 2 tan theta0 tan theta cos phi_paper]^(1/2),

    with k the bowl exponent, Theta the asymmetry (negative: backscattering) and
    phi_paper = pi - phi. In the published three-parameter form the hot-spot factor uses the
    amplitude itself (hot_spot = amplitude).

    References
    ----------
    H. Rahman, B. Pinty and M. M. Verstraete, "Coupled surface-atmosphere reflectance (CSAR)
    model 2. Semiempirical surface model usable with NOAA Advanced Very High Resolution
    Radiometer data", J. Geophys. Res. 98 (D11), 20791-20801 (1993), eqs. (4)-(7).
    """

    def __init__(self, amplitude: Any, bowl_exponent: Any, asymmetry: Any,
                 hot_spot: Any = None) -> None:
        amplitude = _as_parameter(amplitude, "amplitude")
        bowl_exponent = _as_parameter(bowl_exponent, "bowl_exponent")
        asymmetry = _as_parameter(asymmetry, "asymmetry")
        _check_range(amplitude, "amplitude", low=0.0)
        _check_range(bowl_exponent, "bowl_exponent", low=0.0, low_open=True)
        _check_range(asymmetry, "asymmetry", -1.0, 1.0, low_open=True, high_open=True)
        if hot_spot is None:
            hot_spot_array = amplitude
            hot_name = "amplitude (the hot-spot parameter of the three-parameter form)"
        else:
            hot_spot_array = _as_parameter(hot_spot, "hot_spot")
            hot_name = "hot_spot"
        # 1 + (1 - hot_spot) / (1 + G) >= 0 at G = 0 needs hot_spot <= 2
        _check_range(hot_spot_array, hot_name, 0.0, 2.0)
        self._parameters = {"amplitude": amplitude, "bowl_exponent": bowl_exponent,
                            "asymmetry": asymmetry, "hot_spot": hot_spot_array}
        self.check_energy()

    def _evaluate(self, values: dict[str, np.ndarray], geometry: Geometry) -> np.ndarray:
        mu0, mu = geometry.mu0, geometry.mu
        k = values["bowl_exponent"]
        with _errstate():
            bowl = (mu0 * mu * (mu0 + mu)) ** (k - 1.0)
            tan0, tan = geometry.sin0 / mu0, geometry.sin / mu
            # cos(phi_paper) = -cos(phi)
            g_sq = tan0 * tan0 + tan * tan + 2.0 * tan0 * tan * geometry.cos_phi
            big_g = np.sqrt(np.maximum(g_sq, 0.0))
            hot = 1.0 + (1.0 - values["hot_spot"]) / (1.0 + big_g)
        phase = _henyey_greenstein_of_phase(values["asymmetry"], geometry.cos_phase)
        return values["amplitude"] * bowl * phase * hot / np.pi

    def __repr__(self) -> str:
        p = self._parameters
        return (f"rahman_pinty_verstraete({p['amplitude'].values}, {p['bowl_exponent'].values},"
                f" {p['asymmetry'].values}, hot_spot={p['hot_spot'].values})")


def rahman_pinty_verstraete(amplitude: Any, bowl_exponent: Any, asymmetry: Any,
                            hot_spot: Any = None) -> Surface:
    """The Rahman-Pinty-Verstraete (RPV) surface (Rahman et al. 1993).

    Parameters
    ----------
    amplitude : float or DataArray
        rho0 of the paper, >= 0: the reflectance-factor level.
    bowl_exponent : float or DataArray
        k, > 0: below 1 a bowl (brighter at grazing angles), above 1 a bell.
    asymmetry : float or DataArray
        Theta, in (-1, 1): Henyey-Greenstein asymmetry in the scattering-angle sense
        (negative for the backscattering typical of vegetation and soils).
    hot_spot : float or DataArray, optional
        rho_c of the four-parameter form, in [0, 2]; None uses the published three-parameter
        form, in which the hot-spot factor is 1 + (1 - amplitude) / (1 + G).

    See `RahmanPintyVerstraete` for the formula. Raises ValueError if the directional albedo
    leaves [0, 1] at a sun zenith of the check grid (0 to 85 degrees).
    """
    return RahmanPintyVerstraete(amplitude, bowl_exponent, asymmetry, hot_spot)


# Crown shape of the Li-sparse kernel as used for the MODIS BRDF/albedo product
# (Lucht, Schaaf and Strahler 2000): crown centre height over vertical radius h/b = 2 and
# vertical over horizontal radius b/r = 1 (spherical crowns).
CROWN_HEIGHT_RATIO = 2.0
CROWN_SHAPE_RATIO = 1.0


def ross_thick_kernel(geometry: Geometry) -> np.ndarray:
    """Ross-thick volumetric kernel (Roujean et al. 1992; Wanner, Li and Strahler 1995):
    K = [(pi/2 - xi) cos xi + sin xi] / (mu0 + mu) - pi/4, xi the phase angle."""
    cos_xi = geometry.cos_phase
    xi = np.arccos(cos_xi)
    with _errstate():
        return ((0.5 * np.pi - xi) * cos_xi + np.sin(xi)) / (geometry.mu0 + geometry.mu) \
            - 0.25 * np.pi


def li_sparse_reciprocal_kernel(geometry: Geometry) -> np.ndarray:
    """Li-sparse reciprocal geometric kernel (Wanner, Li and Strahler 1995; Lucht, Schaaf and
    Strahler 2000, eqs. (39)-(44)):

    K = O - sec theta0' - sec theta' + (1 + cos xi') sec theta0' sec theta' / 2,
    O = (t - sin t cos t)(sec theta0' + sec theta') / pi,
    cos t = (h/b) [D^2 + (tan theta0' tan theta' sin phi)^2]^(1/2) / (sec theta0' + sec theta'),
    D = [tan^2 theta0' + tan^2 theta' - 2 tan theta0' tan theta' cos phi_paper]^(1/2),
    theta' = arctan((b/r) tan theta), with h/b = 2 and b/r = 1.
    """
    with _errstate():
        tan0 = CROWN_SHAPE_RATIO * geometry.sin0 / geometry.mu0
        tan = CROWN_SHAPE_RATIO * geometry.sin / geometry.mu
        mu0p = 1.0 / np.sqrt(1.0 + tan0 * tan0)
        mup = 1.0 / np.sqrt(1.0 + tan * tan)
        sec0, sec = 1.0 / mu0p, 1.0 / mup
        # cos(phi_paper) = -cos(phi); sin^2 is the same in both conventions
        d_sq = np.maximum(tan0 * tan0 + tan * tan + 2.0 * tan0 * tan * geometry.cos_phi, 0.0)
        cross = tan0 * tan * tan0 * tan * geometry.sin_phi_sq
        cos_t = np.clip(CROWN_HEIGHT_RATIO * np.sqrt(d_sq + cross) / (sec0 + sec), -1.0, 1.0)
        t = np.arccos(cos_t)
        overlap = (t - np.sin(t) * cos_t) * (sec0 + sec) / np.pi
        sin0p, sinp = tan0 * mu0p, tan * mup
        cos_xi = mu0p * mup - sin0p * sinp * geometry.cos_phi
        return overlap - sec0 - sec + 0.5 * (1.0 + cos_xi) * sec0 * sec


class RossLi(Surface):
    """Kernel-driven reflectance factor R = f_iso + f_vol K_vol + f_geo K_geo, f = R / pi,
    with the Ross-thick and Li-sparse reciprocal kernels (see their functions)."""

    def __init__(self, isotropic_weight: Any, volumetric_weight: Any,
                 geometric_weight: Any) -> None:
        self._parameters = {}
        for name, value in (("isotropic_weight", isotropic_weight),
                            ("volumetric_weight", volumetric_weight),
                            ("geometric_weight", geometric_weight)):
            array = _as_parameter(value, name)
            # negative weights are outside the model's physical meaning (Lucht et al. 2000)
            _check_range(array, name, low=0.0)
            self._parameters[name] = array
        self.check_energy()

    def _evaluate(self, values: dict[str, np.ndarray], geometry: Geometry) -> np.ndarray:
        return (values["isotropic_weight"]
                + values["volumetric_weight"] * ross_thick_kernel(geometry)
                + values["geometric_weight"] * li_sparse_reciprocal_kernel(geometry)) / np.pi

    def __repr__(self) -> str:
        p = self._parameters
        return (f"ross_li({p['isotropic_weight'].values}, {p['volumetric_weight'].values}, "
                f"{p['geometric_weight'].values})")


def ross_li(isotropic_weight: Any, volumetric_weight: Any, geometric_weight: Any) -> Surface:
    """Ross-thick / Li-sparse reciprocal kernel-driven surface (the MODIS BRDF model).

    R = f_iso + f_vol K_RossThick + f_geo K_LiSparseR, and f = R / pi. The weights are in
    reflectance-factor units, non-negative. The Li-sparse crown shape is h/b = 2, b/r = 1
    (``CROWN_HEIGHT_RATIO``, ``CROWN_SHAPE_RATIO``). Both kernels vanish for sun and view at
    nadir, so f_iso is the nadir reflectance factor there. K_geo falls like -sec(theta)
    towards the horizon, so with f_geo > 0 the BRDF turns negative at views or suns close
    enough to grazing (a property of the model); the energy check is on the directional
    albedo, which must stay in [0, 1].

    References
    ----------
    J.-L. Roujean, M. Leroy and P.-Y. Deschamps, J. Geophys. Res. 97, 20455-20468 (1992);
    W. Wanner, X. Li and A. H. Strahler, "On the derivation of kernels for kernel-driven
    models of bidirectional reflectance", J. Geophys. Res. 100, 21077-21089 (1995);
    W. Lucht, C. B. Schaaf and A. H. Strahler, "An algorithm for the retrieval of albedo from
    space using semiempirical BRDF models", IEEE Trans. Geosci. Remote Sens. 38, 977-998
    (2000).
    """
    return RossLi(isotropic_weight, volumetric_weight, geometric_weight)


def fresnel_reflectance(cos_incidence: Any, refractive_index: Any) -> np.ndarray:
    """Fresnel reflectance of unpolarized light from air onto a medium of index n.

    The refractive index may be complex: ``R = (|r_s|^2 + |r_p|^2) / 2`` with
    ``r_s = (cos i - n cos t) / (cos i + n cos t)``,
    ``r_p = (n cos i - cos t) / (n cos i + cos t)`` and
    ``cos t = (1 - sin^2 i / n^2)^(1/2)`` (Born and Wolf, Principles of Optics, sec. 1.5).
    At normal incidence ``R = |(n - 1) / (n + 1)|^2``.
    """
    c = np.asarray(cos_incidence, dtype=np.float64)
    n = np.asarray(refractive_index)
    n = n.astype(np.complex128) if np.iscomplexobj(n) else n.astype(np.float64)
    cos_t = np.sqrt((1.0 - (1.0 - c * c) / (n * n)).astype(np.complex128))
    r_s = (c - n * cos_t) / (c + n * cos_t)
    r_p = (n * c - cos_t) / (n * c + cos_t)
    return 0.5 * (np.abs(r_s) ** 2 + np.abs(r_p) ** 2)


def cox_munk_slope_variance(wind_speed: Any) -> Any:
    """Mean square slope of a clean sea, sigma^2 = 0.003 + 0.00512 W (W in m s^-1 at 12.5 m;
    Cox and Munk 1954, eq. (4), isotropic fit)."""
    return 0.003 + 0.00512 * wind_speed


def _smith_lambda(cot_over_sigma: np.ndarray) -> np.ndarray:
    """Smith's (1967) shadowing function Lambda(nu) = [exp(-nu^2) / (nu sqrt(pi)) - erfc(nu)] / 2
    for a Gaussian surface; nu = cot(theta) / sigma with sigma^2 the total mean square slope."""
    nu = cot_over_sigma
    with _errstate():
        value = 0.5 * (np.exp(-nu * nu) / (nu * np.sqrt(np.pi)) - erfc(nu))
    return np.where(np.isinf(nu), 0.0, value)


class CoxMunk(Surface):
    """Sun glint on a sea of isotropic Gaussian slopes (Cox and Munk 1954):

    f = R_F(chi) p(z_x, z_y) S / (4 mu0 mu mu_n^4),   p = exp(-tan^2 theta_n / sigma^2) /
    (pi sigma^2),

    with theta_n the tilt of the facet that reflects the sun into the view (the half-way
    vector), chi the local incidence angle (cos 2 chi = cos g), R_F the Fresnel reflectance and
    S the bidirectional shadowing factor S = 1 / (1 + Lambda(nu0) + Lambda(nu)) of Smith (1967)
    in the reciprocal form of Sancer (1969) (see also Tsang, Kong and Shin 1985, ch. 2).
    """

    _zenith_panels = 48
    _azimuth_panels = 48

    def __init__(self, wind_speed: Any, refractive_index: Any = 1.334,
                 shadowing: bool = True) -> None:
        wind = _as_parameter(wind_speed, "wind_speed")
        _check_range(wind, "wind_speed", low=0.0)
        index = _as_parameter(refractive_index, "refractive_index", complex_ok=True)
        _check_range(index, "refractive_index", low=1.0, low_open=True,
                     rule="have a real part > 1")
        _check_range(xr_imag(index), "refractive_index", low=0.0,
                     rule="have an imaginary part >= 0 (absorption)")
        if not isinstance(shadowing, bool | np.bool_):
            raise TypeError(f"shadowing must be True or False; got {type(shadowing).__name__}")
        self.shadowing = bool(shadowing)
        self._parameters = {"slope_variance": cox_munk_slope_variance(wind),
                            "refractive_index": index}
        self._wind = wind
        self.check_energy()

    def _evaluate(self, values: dict[str, np.ndarray], geometry: Geometry) -> np.ndarray:
        mu0, mu = geometry.mu0, geometry.mu
        variance = values["slope_variance"]
        cos_chi = np.sqrt(0.5 * (1.0 + geometry.cos_phase))
        with _errstate():
            mu_n = (mu0 + mu) / (2.0 * cos_chi)
            tan_sq = np.maximum(1.0 / (mu_n * mu_n) - 1.0, 0.0)
            slopes = np.exp(-tan_sq / variance) / (np.pi * variance)
            f = fresnel_reflectance(cos_chi, values["refractive_index"]) * slopes \
                / (4.0 * mu0 * mu * mu_n ** 4)
            if self.shadowing:
                sigma = np.sqrt(variance)
                lam0 = _smith_lambda(mu0 / (sigma * geometry.sin0))
                lam = _smith_lambda(mu / (sigma * geometry.sin))
                f = f / (1.0 + lam0 + lam)
        return f

    def __repr__(self) -> str:
        return (f"cox_munk({self._wind.values}, {self._parameters['refractive_index'].values}, "
                f"shadowing={self.shadowing})")


def xr_imag(array: Any) -> Any:
    """Imaginary part of a DataArray, keeping its dims."""
    return array.copy(data=np.imag(array.values))


def cox_munk(wind_speed: Any, refractive_index: Any = 1.334, shadowing: bool = True) -> Surface:
    """Ocean sun glint (Cox and Munk 1954) with Fresnel reflection and shadowing.

    Parameters
    ----------
    wind_speed : float or DataArray
        W (m s^-1, at 12.5 m above the sea), >= 0; mean square slope 0.003 + 0.00512 W.
    refractive_index : float, complex or DataArray
        Of sea water, real part > 1, imaginary part >= 0 (1.334 in the visible).
    shadowing : bool
        Apply the Smith-Sancer bidirectional shadowing factor (default True).

    Notes
    -----
    Only the glint: no whitecaps, no water-leaving radiance (add them as a weighted sum with
    a Lambertian term). Without shadowing the model puts more than the incident energy into
    the upper hemisphere at grazing sun at high wind; the construction check says so.

    References
    ----------
    C. Cox and W. Munk, "Measurement of the roughness of the sea surface from photographs of
    the sun's glitter", J. Opt. Soc. Am. 44, 838-850 (1954);
    B. G. Smith, "Geometrical shadowing of a random rough surface", IEEE Trans. Antennas
    Propag. 15, 668-671 (1967);
    M. I. Sancer, "Shadow-corrected electromagnetic scattering from a randomly rough surface",
    IEEE Trans. Antennas Propag. 17, 577-585 (1969);
    L. Tsang, J. A. Kong and R. T. Shin, Theory of Microwave Remote Sensing, Wiley (1985).
    """
    return CoxMunk(wind_speed, refractive_index, shadowing)


def hapke_h_function(x: Any, single_scattering_albedo: Any,
                     approximation: str = "hapke2002") -> np.ndarray:
    """Hapke's approximations to Chandrasekhar's H-function for isotropic scatterers.

    ``"hapke1981"``: H(x) = (1 + 2x) / (1 + 2 gamma x), gamma = (1 - w)^(1/2) (Hapke 1981,
    eq. (17); a few percent high near w = 1). ``"hapke2002"``: H(x) = {1 - w x [r0 + (1 - 2 r0 x)
    ln((1 + x) / x) / 2]}^(-1), r0 = (1 - gamma) / (1 + gamma) (Hapke 2002, eq. (13); within
    about 1 percent).
    """
    w = np.asarray(single_scattering_albedo, dtype=np.float64)
    gamma = np.sqrt(1.0 - w)
    x = np.asarray(x, dtype=np.float64)
    if approximation == "hapke1981":
        return (1.0 + 2.0 * x) / (1.0 + 2.0 * gamma * x)
    if approximation != "hapke2002":
        raise ValueError(f"approximation must be 'hapke1981' or 'hapke2002'; got "
                         f"{approximation!r}")
    r0 = (1.0 - gamma) / (1.0 + gamma)
    with _errstate():
        # x ln((1 + x) / x) -> 0 as x -> 0
        x_log = np.where(x > 0.0, x * np.log((1.0 + x) / x), 0.0)
    return 1.0 / (1.0 - w * (r0 * x + 0.5 * (1.0 - 2.0 * r0 * x) * x_log))


class Hapke(Surface):
    """Hapke's bidirectional reflectance of a particulate surface, f = r / mu0 with

    r = (w / 4 pi) mu0 / (mu0 + mu) {[1 + B(g)] P(g) + H(mu0) H(mu) - 1},
    B(g) = B0 / (1 + tan(g / 2) / h),

    w the single-scattering albedo, P a Henyey-Greenstein particle phase function of the
    given asymmetry, B0 and h the opposition-effect amplitude and width, and H Hapke's
    approximation `hapke_h_function` (1981 or 2002).
    """

    def __init__(self, single_scattering_albedo: Any, asymmetry: Any = 0.0,
                 opposition_amplitude: Any = 0.0, opposition_width: Any = 0.05,
                 h_approximation: str = "hapke2002") -> None:
        if h_approximation not in ("hapke1981", "hapke2002"):
            raise ValueError(f"h_approximation must be 'hapke1981' or 'hapke2002'; got "
                             f"{h_approximation!r}")
        self.h_approximation = h_approximation
        albedo = _as_parameter(single_scattering_albedo, "single_scattering_albedo")
        _check_range(albedo, "single_scattering_albedo", 0.0, 1.0)
        asymmetry = _as_parameter(asymmetry, "asymmetry")
        _check_range(asymmetry, "asymmetry", -1.0, 1.0, low_open=True, high_open=True)
        amplitude = _as_parameter(opposition_amplitude, "opposition_amplitude")
        _check_range(amplitude, "opposition_amplitude", 0.0, 1.0)
        width = _as_parameter(opposition_width, "opposition_width")
        _check_range(width, "opposition_width", low=0.0, low_open=True)
        self._parameters = {"single_scattering_albedo": albedo, "asymmetry": asymmetry,
                            "opposition_amplitude": amplitude, "opposition_width": width}
        self.check_energy()

    def _evaluate(self, values: dict[str, np.ndarray], geometry: Geometry) -> np.ndarray:
        w = values["single_scattering_albedo"]
        cos_g = geometry.cos_phase
        with _errstate():
            tan_half = np.sqrt(np.maximum(1.0 - cos_g, 0.0) / (1.0 + cos_g))
            opposition = values["opposition_amplitude"] / (
                1.0 + tan_half / values["opposition_width"])
        opposition = np.where(np.isnan(opposition), 0.0, opposition)  # g = pi: tan = inf
        phase = _henyey_greenstein_of_phase(values["asymmetry"], cos_g)
        h = self.h_approximation
        multiple = hapke_h_function(geometry.mu0, w, h) * hapke_h_function(geometry.mu, w, h) \
            - 1.0
        return w / (4.0 * np.pi) * ((1.0 + opposition) * phase + multiple) \
            / (geometry.mu0 + geometry.mu)

    def __repr__(self) -> str:
        p = self._parameters
        return (f"hapke({p['single_scattering_albedo'].values}, {p['asymmetry'].values}, "
                f"{p['opposition_amplitude'].values}, {p['opposition_width'].values})")


def hapke(single_scattering_albedo: Any, asymmetry: Any = 0.0, opposition_amplitude: Any = 0.0,
          opposition_width: Any = 0.05, h_approximation: str = "hapke2002") -> Surface:
    """Hapke's regolith reflectance with the shadow-hiding opposition effect.

    Parameters
    ----------
    single_scattering_albedo : float or DataArray
        w of the particles, in [0, 1].
    asymmetry : float or DataArray
        Of the one-parameter Henyey-Greenstein particle phase function, in (-1, 1), in the
        scattering-angle sense (negative: backscattering particles). 0: isotropic.
    opposition_amplitude : float or DataArray
        B0, in [0, 1] (Hapke 1993: the shadow-hiding amplitude cannot exceed 1). 0: no
        opposition effect.
    opposition_width : float or DataArray
        h, > 0: the half-width of the surge in tan(g/2) (Hapke 1986).
    h_approximation : {"hapke2002", "hapke1981"}
        The H-function approximation of the multiple-scattering term (`hapke_h_function`).

    Notes
    -----
    f = r / mu0 is reciprocal. With w = 1 and isotropic particles the exact H-function would
    give a directional albedo of exactly 1; the 2002 approximation gives about 0.986, the 1981
    one about 1.04, which the energy check refuses (so w near 1 needs the default). The
    multiple-scattering term is that of isotropic particles whatever the asymmetry, and the
    opposition surge adds to the single scattering, so at w = 1 a backscattering phase
    function or a surge puts more than the incident energy into the upper hemisphere (1.12 at
    asymmetry -0.4): the check refuses those too.

    References
    ----------
    B. Hapke, "Bidirectional reflectance spectroscopy 1. Theory", J. Geophys. Res. 86,
    3039-3054 (1981); B. Hapke, "Bidirectional reflectance spectroscopy 4. The extinction
    coefficient and the opposition effect", Icarus 67, 264-280 (1986); B. Hapke, Theory of
    Reflectance and Emittance Spectroscopy, Cambridge University Press (1993), ch. 8 and 10;
    B. Hapke, "Bidirectional reflectance spectroscopy 5. The coherent backscatter opposition
    effect and anisotropic scattering", Icarus 157, 523-534 (2002).
    """
    return Hapke(single_scattering_albedo, asymmetry, opposition_amplitude, opposition_width,
                 h_approximation)
