"""The validation cases: lamina against published values, exact formulas and scalar-exact methods.

Each :class:`Case` names its source (paper with chapter, table or equation; "from memory"
where the value was recalled rather than read, as in the project's reference list), the
quantity compared, whether its error is relative or absolute, a tolerance that matches the
source's precision (or, for an exact result, the accuracy lamina claims at the settings
used, with the reason given in ``tolerance_note``), and the keyword arguments handed to
:func:`lamina.solve`. Its ``compare`` function runs lamina with those settings (with
``streams`` replaced in a convergence study) and returns the compared values with curves
for the report.

The cases are written by topic, in modules that import only from the bottom module
``_common`` (the :class:`Case`, :class:`Comparison` and :class:`Curve` types, quadratures and
geometry helpers): ``isotropic`` (H-functions, the Milne problem, limb darkening),
``thermal`` (isothermal slab and enclosure, Planck integrals), ``scattering`` (phase-function
moments, single scattering, the Lambertian surface, conservation, reciprocity) and ``layers``
(Rayleigh and Henyey-Greenstein layers against Ambartsumian's equation and adding-doubling,
delta-M). :data:`CASES`, below, registers them in the order the suite runs them.

References used by the cases (all methods written from the published mathematics):

Chandrasekhar, S. (1950), Radiative Transfer, Oxford University Press, chapters IV-VI.
Hopf, E. (1934), Mathematical Problems of Radiative Equilibrium, Cambridge University Press.
van de Hulst, H. C. (1980), Multiple Light Scattering, vols. 1-2, Academic Press.
Henyey, L. G. and Greenstein, J. L. (1941), Diffuse radiation in the galaxy, ApJ 93, 70-83.
Hansen, J. E. and Travis, L. D. (1974), Light scattering in planetary atmospheres, Space Sci.
Rev. 16, 527-610.
Goody, R. M. and Yung, Y. L. (1989), Atmospheric Radiation, 2nd ed., Oxford University Press.
Thomas, G. E. and Stamnes, K. (1999), Radiative Transfer in the Atmosphere and Ocean,
Cambridge University Press.
Wiscombe, W. J. (1977), The delta-M method, J. Atmos. Sci. 34, 1408-1422.
"""

from __future__ import annotations

import functools

from lamina.validation.cases._common import STUDY_STREAMS, Case, Comparison, Curve
from lamina.validation.cases.isotropic import (
    _geometric_albedo,
    _isotropic_plane_albedo,
    _isotropic_semi_infinite,
    _isotropic_spherical_albedo,
    _limb_darkening_law,
    _limb_darkening_ratio,
    _milne_hopf,
)
from lamina.validation.cases.layers import (
    _delta_m_flux,
    _delta_m_radiance,
    _hg_finite,
    _rayleigh_finite,
    _rayleigh_semi_infinite,
)
from lamina.validation.cases.scattering import (
    _conservation,
    _henyey_greenstein_moments,
    _lambertian_surface,
    _rayleigh_moments,
    _reciprocity,
    _single_scattering_hg,
    _single_scattering_rayleigh,
)
from lamina.validation.cases.thermal import (
    _isothermal_enclosure,
    _isothermal_slab_flux,
    _isothermal_slab_radiance,
    _planck_band_integrals,
    _planck_total,
)

__all__ = ["CASES", "Case", "Comparison", "Curve", "STUDY_STREAMS"]


# --------------------------------------------------------------------------------------
# the registry
# --------------------------------------------------------------------------------------

_ISOTROPIC_SETUP = ("one isotropically scattering layer over a black surface, 2000 thick "
                    "(2e6 for w = 1) standing in for a semi-infinite medium")
_SEMI_INFINITE_NOTE = (
    "The reference is exact to ~1e-14; 1e-5 is the accuracy claimed for radiances at 32 "
    "streams. For w = 1 the solver's conservative gap (w capped at 1 - 1e-12) lowers the "
    "reflection of a semi-infinite medium by about H sqrt(1e-12) ~ 3e-6."
)
_DOUBLING_NOTE = (
    "Adding-doubling (references.doubling_reflection_transmission, 48 Gauss nodes, 1e-10 "
    "starting layer) agrees with itself at 64 nodes to ~1e-9; 1e-5 is the accuracy claimed "
    "for radiances at 32 streams."
)

CASES: tuple[Case, ...] = (
    Case(
        name="isotropic_semi_infinite_reflection",
        title="Semi-infinite isotropic reflection (H-functions)",
        source="Chandrasekhar 1950, ch. V (H-function, exact)",
        details="I(0, mu) = w S / (4 pi) mu0 / (mu + mu0) H(mu) H(mu0), H from its integral "
                "equation (references.chandrasekhar_h, agrees with the exact integral "
                "representation to 1e-14). Grid: w in {0.5, 0.9, 0.99, 1}, view zenith "
                "0-84 deg, sun zenith 0-78 deg, azimuths 0 and 90 deg (azimuth-free).",
        quantity="reflected radiance",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note=_SEMI_INFINITE_NOTE,
        setup=_ISOTROPIC_SETUP,
        settings={"streams": 32},
        compare=_isotropic_semi_infinite,
        study_streams=STUDY_STREAMS,
    ),
    Case(
        name="isotropic_plane_albedo",
        title="Plane albedo of a semi-infinite isotropic medium",
        source="Chandrasekhar 1950, ch. V; van de Hulst 1980 (exact)",
        details="A(mu0) = 1 - H(mu0) sqrt(1 - w) for w in {0.3, 0.8, 0.95, 0.99} and sun "
                "zenith 0-85 deg; lamina's upward flux at the top divided by S mu0.",
        quantity="plane albedo (flux)",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note="The reference is exact to ~1e-14; 1e-5 is the accuracy claimed for "
                       "fluxes at 32 streams up to a sun zenith of 85 deg (reached: ~7e-8). "
                       "Closer to the horizon it degrades: at 89 deg 32 streams give 1.4e-5 "
                       "(64 streams 4e-9).",
        setup="one isotropically scattering layer, 2000 thick, black surface",
        settings={"streams": 32},
        compare=_isotropic_plane_albedo,
        study_streams=STUDY_STREAMS,
        tags=("fast",),
    ),
    Case(
        name="isotropic_spherical_albedo",
        title="Spherical albedo of a semi-infinite isotropic medium",
        source="van de Hulst 1980 (exact, 1 - 2 alpha_1 sqrt(1 - w))",
        details="Spherical albedo 2 int A(mu0) mu0 dmu0, with lamina's plane albedo at 36 "
                "composite-Gauss sun cosines (one call, a list of sun_zenith), against "
                "1 - 2 alpha_1 sqrt(1 - w), alpha_1 the first moment of H "
                "(Chandrasekhar 1950). w in {0.5, 0.9, 0.99}.",
        quantity="spherical albedo",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note="The quadrature over mu0 reproduces the exact value to < 1e-8 with "
                       "the exact plane albedo; 1e-5 is the flux accuracy claimed at 32 "
                       "streams.",
        setup="one isotropically scattering layer, 2000 thick, black surface; 36 sun angles",
        settings={"streams": 32},
        compare=_isotropic_spherical_albedo,
        study_streams=STUDY_STREAMS,
    ),
    Case(
        name="isotropic_geometric_albedo",
        title="Geometric albedo of a conservative isotropic sphere",
        source="van de Hulst 1980 (0.6897, from memory)",
        details="p = 2 int R(mu, mu, backscatter) mu^2 dmu with R = pi I / (S mu0), "
                "from lamina's backscattered radiance at 40 Gauss cosines (sun = view, one "
                "call), against 0.6897 (van de Hulst 1980, from memory). The figure also "
                "shows the exact H-function reflection along the backscatter diagonal.",
        quantity="geometric albedo",
        error_kind="absolute",
        tolerance=1e-4,
        tolerance_note="The value has 4 decimals and is recalled, not read: 1e-4 absolute.",
        setup="one conservative isotropic layer, 2e6 thick, black surface; 40 sun and view "
              "angles, azimuth 180",
        settings={"streams": 32},
        compare=functools.partial(_geometric_albedo, rayleigh=False),
        study_streams=STUDY_STREAMS,
    ),
    Case(
        name="milne_hopf_constant",
        title="Milne problem: Hopf's q(t)",
        source="Hopf 1934; Chandrasekhar 1950 (q(inf) = 0.710446, from memory)",
        details="A conservative isotropic slab 400 thick lit from below (black surface "
                "emitting, cold above). J(t) = (3 F / 4 pi)(t + q(t)); q(0) = 1/sqrt(3) "
                "exactly and q(t) -> 0.710446 at depths 20, 30, 40. (The reference H "
                "moments give alpha_2/alpha_1 = 0.7104461.)",
        quantity="Hopf function q at the top and deep inside",
        error_kind="absolute",
        tolerance=5e-7,
        tolerance_note="Half a unit in the 6th decimal of the published 0.710446.",
        setup="one conservative isotropic layer, 400 thick, cold top, black surface at 300 K, "
              "band 400-700 cm-1",
        settings={"streams": 32},
        compare=_milne_hopf,
        study_streams=STUDY_STREAMS,
        tags=("fast",),
    ),
    Case(
        name="grey_limb_darkening_law",
        title="Grey limb darkening: I(0, mu) / I(0, 1) = H(mu) / H(1)",
        source="Chandrasekhar 1950, ch. V (exact H, w = 1)",
        details="The emergent intensity of the Milne problem is proportional to H(mu) "
                "(conservative isotropic H-function); view zenith 0-90 deg.",
        quantity="limb-darkening profile",
        error_kind="relative",
        tolerance=1e-6,
        tolerance_note="Exact reference (1e-14); 1e-6 is the claimed accuracy at 32 streams "
                       "for this smooth emergent field (reached: ~2e-7).",
        setup="the Milne slab of milne_hopf_constant",
        settings={"streams": 32},
        compare=_limb_darkening_law,
        study_streams=STUDY_STREAMS,
        tags=("fast",),
    ),
    Case(
        name="grey_limb_darkening_ratio",
        title="Grey limb darkening at the limb: 1 / H(1) = 0.3439",
        source="Chandrasekhar 1950 (1/H(1) = 0.3439, from memory)",
        details="Ratio of the emergent intensity at the limb (mu = 0) to that at disk "
                "centre in the Milne problem, against the classical 0.3439.",
        quantity="I(0, 0) / I(0, 1)",
        error_kind="absolute",
        tolerance=5e-5,
        tolerance_note="Half a unit in the 4th decimal of 0.3439.",
        setup="the Milne slab of milne_hopf_constant",
        settings={"streams": 32},
        compare=_limb_darkening_ratio,
        study_streams=STUDY_STREAMS,
        tags=("fast",),
    ),
    Case(
        name="isothermal_slab_flux",
        title="Isothermal non-scattering slab: flux emissivity",
        source="Chandrasekhar 1950; Goody and Yung 1989 (1 - 2 E3(t), exact)",
        details="Emergent flux / (pi B) of isothermal non-scattering slabs, t = 0.05-10, "
                "over a black surface at 0 K, against 1 - 2 E3(t) (scipy.special.expn).",
        quantity="flux emissivity",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note="Exact reference; the flux is a double-Gauss sum over 16 cosines of "
                       "an integrand with an exp(-t/mu) layer near mu = 0, which limits the "
                       "thinnest slab to ~7e-6 at 32 streams.",
        setup="7 columns of one non-scattering layer at 250 K, band 500-800 cm-1",
        settings={"streams": 32},
        compare=_isothermal_slab_flux,
        study_streams=STUDY_STREAMS,
        tags=("fast",),
    ),
    Case(
        name="isothermal_slab_radiance",
        title="Isothermal non-scattering slab: emergent radiance",
        source="Chandrasekhar 1950; Goody and Yung 1989 (B (1 - exp(-t/mu)), exact)",
        details="Emergent radiance / B at view zenith 0-87 deg for the slabs of "
                "isothermal_slab_flux.",
        quantity="emergent radiance",
        error_kind="relative",
        tolerance=1e-10,
        tolerance_note="Radiances at user angles integrate the exact linear source "
                       "analytically: only rounding remains.",
        setup="as isothermal_slab_flux",
        settings={"streams": 8},
        compare=_isothermal_slab_radiance,
        tags=("fast",),
    ),
    Case(
        name="isothermal_enclosure",
        title="Isothermal enclosure: I = B everywhere",
        source="Kirchhoff's law (exact)",
        details="Three scattering, absorbing layers (HG 0.85, HG 0.3, Rayleigh; w = 0.9, "
                "0.6, 1) at 280 K between a black surface at 280 K and an isotropic sky "
                "radiance B(280 K): radiance at every depth, direction and azimuth, mean "
                "intensity, and the up and down fluxes / pi all equal B.",
        quantity="radiance, mean intensity, fluxes / pi",
        error_kind="relative",
        tolerance=1e-10,
        tolerance_note="Exact at any number of streams: only rounding remains.",
        setup="3 layers (t = 0.3, 4, 1), band 400-700 cm-1",
        settings={"streams": 16},
        compare=_isothermal_enclosure,
        tags=("fast",),
    ),
    Case(
        name="single_scattering_henyey_greenstein",
        title="Single scattering, Henyey-Greenstein, thin layer",
        source="Thomas and Stamnes 1999 (single-scattering law); Henyey and Greenstein 1941",
        details="A layer of t = 1e-7, w = 0.8, HG g = 0.6 (72 moments) over a black "
                "surface, sun at 40 deg: reflected and transmitted radiance at 4 view "
                "zeniths and 7 azimuths 0-180 deg against w S/(4 pi) P(cos T) mu0/(mu +- mu0) "
                "[...], which fixes the azimuth convention (0 = forward side). Default "
                "settings: delta-M and the single-scattering correction.",
        quantity="reflected and transmitted radiance",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note="Multiple scattering, left out of the reference, is ~1e-6 of the "
                       "radiance for t = 1e-7 (the log of grazing paths included).",
        setup="one layer t = 1e-7, w = 0.8, HG g = 0.6",
        settings={"streams": 16},
        compare=_single_scattering_hg,
        tags=("fast",),
    ),
    Case(
        name="single_scattering_rayleigh",
        title="Single scattering, Rayleigh, thin layer",
        source="Thomas and Stamnes 1999 (single-scattering law); Chandrasekhar 1950 "
               "(Rayleigh phase function)",
        details="As single_scattering_henyey_greenstein with the scalar Rayleigh phase "
                "function (3/4)(1 + cos^2 T), w = 1.",
        quantity="reflected and transmitted radiance",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note="As for the Henyey-Greenstein case.",
        setup="one layer t = 1e-7, w = 1, Rayleigh",
        settings={"streams": 8},
        compare=_single_scattering_rayleigh,
        tags=("fast",),
    ),
    Case(
        name="lambertian_surface",
        title="Lambertian surface under an absorbing layer",
        source="Chandrasekhar 1950 (exact attenuation and Lambert reflection)",
        details="A purely absorbing layer (t = 0.2) over a Lambertian surface of albedo "
                "0.3, sun at 40 deg: upward radiance at the top A S mu0 exp(-t/mu0) "
                "exp(-t/mu) / pi at 6 view angles and 2 azimuths, and the upward flux "
                "A S mu0 exp(-t/mu0) 2 E3(t).",
        quantity="upward radiance and flux at the top",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note="Radiances are exact to rounding; the flux is a 16-cosine double-Gauss "
                       "sum of exp(-t/mu) (error ~3e-7 here).",
        setup="one layer t = 0.2, w = 0, surface albedo 0.3",
        settings={"streams": 32},
        compare=_lambertian_surface,
        tags=("fast",),
    ),
    Case(
        name="conservation_multilayer",
        title="Energy conservation, anisotropic multi-layer, up to t = 1000",
        source="exact (w = 1, black surface: reflected + transmitted = S mu0)",
        details="Four conservative layers (HG 0.85, HG 0.3, Rayleigh, HG -0.2) of equal "
                "thickness, total 0.1 to 1000, sun at 0, 45, 75 deg.",
        quantity="(reflected + transmitted flux) / (S mu0)",
        error_kind="relative",
        tolerance=1e-8,
        tolerance_note="The solver caps w at 1 - 1e-12; the absorption this causes is about "
                       "1e-12 times the optical thickness, < 1e-8 up to t = 1000 "
                       "(reached: ~3e-9 at t = 1000).",
        setup="4 conservative layers, 6 total thicknesses as columns",
        settings={"streams": 16},
        compare=_conservation,
        tags=("fast",),
    ),
    Case(
        name="reciprocity_multilayer",
        title="Reciprocity of reflection, anisotropic multi-layer",
        source="Chandrasekhar 1950 (reciprocity principle, exact)",
        details="mu0 R(mu, mu0, phi) is symmetric in mu and mu0: I(mu; mu0) / mu0 = "
                "I(mu0; mu) / mu for 5 angles (10-85 deg, as sun and as view) and 4 "
                "azimuths, three layers (Rayleigh w = 1; HG 0.85 w = 0.95; HG 0.2 w = 0.6) "
                "over a Lambertian surface of albedo 0.25; delta-M and the single-scattering "
                "correction on.",
        quantity="reflected radiance / mu0 under sun-view exchange",
        error_kind="relative",
        tolerance=1e-8,
        tolerance_note="Exact law; delta-M and the correction keep it. All Fourier terms "
                       "are summed (tolerance 1e-12), leaving rounding (reached: ~2e-10).",
        setup="3 layers t = 0.3, 1.5, 0.8; surface albedo 0.25",
        settings={"streams": 16, "fourier_tolerance": 1e-12},
        compare=_reciprocity,
        tags=("fast",),
    ),
    Case(
        name="planck_band_integrals",
        title="Planck band integrals",
        source="Planck's law with CODATA constants (scipy.constants), integrated by "
               "scipy quad",
        details="lamina.planck.band_radiance for 8 bands (10-20000 cm-1, one 0.01 cm-1 "
                "wide) and 5 temperatures (150-5800 K) against scipy.integrate.quad of "
                "2 h c^2 nu^3 / (exp(h c nu / k T) - 1).",
        quantity="band-integrated Planck radiance",
        error_kind="relative",
        tolerance=1e-10,
        tolerance_note="quad is asked for 1e-13; the series are accurate to ~1e-13.",
        setup="no solver call",
        settings={},
        compare=_planck_band_integrals,
        tags=("fast",),
    ),
    Case(
        name="planck_total_radiance",
        title="Planck radiance over the whole spectrum: sigma T^4 / pi",
        source="Stefan-Boltzmann law, CODATA sigma (scipy.constants)",
        details="lamina.planck.band_radiance(T, 0, inf) and the emergent flux / pi of "
                "opaque (t = 1000) isothermal non-scattering slabs solved with "
                "wavenumber_band=(0, inf), T = 50-5772 K.",
        quantity="total Planck radiance",
        error_kind="relative",
        tolerance=1e-12,
        tolerance_note="Exact; only rounding remains.",
        setup="5 columns of one opaque non-scattering layer",
        settings={"streams": 8},
        compare=_planck_total,
        tags=("fast",),
    ),
    Case(
        name="rayleigh_phase_moments",
        title="Rayleigh phase-function moments with depolarization",
        source="Hansen and Travis 1974 (Rayleigh phase function with depolarization)",
        details="lamina.phase.rayleigh(rho) against the Legendre projection (16-point "
                "Gauss, exact here) of 3 / (4 (1 + 2 gamma)) [(1 + 3 gamma) + (1 - gamma) "
                "cos^2 T], "
                "gamma = rho / (2 - rho), for rho = 0, 0.0279 (dry air, Young 1980, from "
                "memory) and 0.1.",
        quantity="Legendre moments chi_0..chi_5",
        error_kind="absolute",
        tolerance=1e-14,
        tolerance_note="The projection of a quadratic is exact; only rounding remains.",
        setup="no solver call",
        settings={},
        compare=_rayleigh_moments,
        tags=("fast",),
    ),
    Case(
        name="henyey_greenstein_moments",
        title="Henyey-Greenstein phase-function moments",
        source="Henyey and Greenstein 1941 (phase function; chi_l = g^l)",
        details="lamina.phase.henyey_greenstein(g, 40) against the Legendre projection of "
                "the HG function by composite Gauss-Legendre quadrature (10 panels of 40 "
                "nodes graded toward the forward peak), for g = -0.5, 0.3, 0.85.",
        quantity="Legendre moments chi_0..chi_39",
        error_kind="absolute",
        tolerance=1e-12,
        tolerance_note="The quadrature is converged to rounding (~1e-15) on integrands up to "
                       "~100; 1e-12 leaves room for that rounding.",
        setup="no solver call",
        settings={},
        compare=_henyey_greenstein_moments,
    ),
    Case(
        name="rayleigh_semi_infinite_reflection",
        title="Semi-infinite Rayleigh reflection (scalar)",
        source="Ambartsumian 1943; Chandrasekhar 1950 (scalar, per Fourier term)",
        details="Reflected radiance of a semi-infinite medium with the scalar Rayleigh phase "
                "function, w = 1 and 0.9, against references.rayleigh_semi_infinite_"
                "reflection (Ambartsumian's nonlinear equation solved per Fourier term, "
                "accurate to ~1e-13); view zenith 0-85, sun 0-80, azimuth 0-180 deg. "
                "Scalar only: polarized tables differ (see the report's notes).",
        quantity="reflected radiance",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note=_SEMI_INFINITE_NOTE,
        setup="one Rayleigh layer, 2e6 thick (w = 1) or 2000 (w = 0.9), black surface",
        settings={"streams": 32, "fourier_tolerance": 1e-10},
        compare=_rayleigh_semi_infinite,
        study_streams=STUDY_STREAMS,
    ),
    Case(
        name="rayleigh_finite_layers",
        title="Finite Rayleigh layers (scalar) against adding-doubling",
        source="Adding-doubling (van de Hulst 1980; Hansen and Travis 1974)",
        details="Rayleigh layers t = 0.1, 0.5, 1 (w = 1) and t = 0.5 (w = 0.8) over a black "
                "surface, sun at 40 deg: reflected and diffusely transmitted radiance "
                "(6 view zeniths x 5 azimuths) and fluxes against "
                "references.doubling_reflection_transmission.",
        quantity="reflected/transmitted radiance and flux",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note=_DOUBLING_NOTE + " The thin layer's grazing radiances limit lamina to "
                                        "~5e-6 at 32 streams.",
        setup="4 columns of one Rayleigh layer, black surface",
        settings={"streams": 32, "fourier_tolerance": 1e-10},
        compare=_rayleigh_finite,
        study_streams=STUDY_STREAMS,
        tags=("fast",),
    ),
    Case(
        name="rayleigh_geometric_albedo",
        title="Geometric albedo of a conservative Rayleigh sphere (scalar)",
        source="Ambartsumian 1943 reflection (references), integrated as in van de Hulst "
               "1980",
        details="p = 2 int R(mu, mu, backscatter) mu^2 dmu from lamina's backscattered "
                "radiance at 40 Gauss cosines against the same integral of the scalar "
                "Ambartsumian reflection function (0.75176). Not compared with the "
                "polarized literature value (see the notes).",
        quantity="geometric albedo",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note=_SEMI_INFINITE_NOTE,
        setup="one conservative Rayleigh layer, 2e6 thick; 40 sun and view angles, "
              "azimuth 180",
        settings={"streams": 32, "fourier_tolerance": 1e-10},
        compare=functools.partial(_geometric_albedo, rayleigh=True),
        study_streams=STUDY_STREAMS,
    ),
    Case(
        name="henyey_greenstein_finite_layers",
        title="Finite Henyey-Greenstein layers against adding-doubling",
        source="Adding-doubling (van de Hulst 1980); Henyey and Greenstein 1941",
        details="HG layers (t, w, g) = (0.5, 0.9, 0.5), (2, 0.99, 0.75), (8, 1, 0.5) over "
                "a black surface, sun at 40 deg, all moments down to g^l < 1e-13: "
                "radiances and fluxes against references.doubling_reflection_transmission. "
                "Default settings (delta-M, single-scattering correction).",
        quantity="reflected/transmitted radiance and flux",
        error_kind="relative",
        tolerance=1e-5,
        tolerance_note=_DOUBLING_NOTE,
        setup="3 columns of one HG layer, black surface",
        settings={"streams": 32, "fourier_tolerance": 1e-10},
        compare=_hg_finite,
        study_streams=STUDY_STREAMS,
    ),
    Case(
        name="delta_m_cloud_radiance",
        title="Delta-M and single-scattering correction: g = 0.85 cloud radiances",
        source="Wiscombe 1977 (delta-M); reference by adding-doubling (van de Hulst 1980)",
        details="A cloud t = 4, w = 0.999, HG g = 0.85 (130 moments, g^130 < 1e-9), sun at "
                "30 deg, black surface: reflected and transmitted radiance at 6 view "
                "zeniths x 5 azimuths (including near-forward directions) against doubling "
                "with 64 nodes. Error at 16 streams; the error must shrink at every step "
                "4 -> 8 -> 16 -> 32 -> 64 streams.",
        quantity="reflected and transmitted radiance",
        error_kind="relative",
        tolerance=0.02,
        tolerance_note="The forward-scattering accuracy target: 2 % at 16 streams with "
                       "delta-M and the correction. Doubling is accurate to ~1e-9.",
        setup="one HG cloud layer, black surface",
        settings={"streams": 16, "fourier_tolerance": 1e-8},
        compare=_delta_m_radiance,
        study_streams=STUDY_STREAMS,
        must_converge=True,
    ),
    Case(
        name="delta_m_cloud_flux",
        title="Delta-M: g = 0.85 cloud fluxes",
        source="Wiscombe 1977 (delta-M); reference by adding-doubling (van de Hulst 1980)",
        details="Reflected and diffusely transmitted flux of the cloud of "
                "delta_m_cloud_radiance. Error at 8 streams; it must shrink at every step "
                "4 -> 64 streams.",
        quantity="reflected and diffuse transmitted flux",
        error_kind="relative",
        tolerance=0.02,
        tolerance_note="The forward-scattering accuracy target: fluxes within 2 % at 8 "
                       "streams with delta-M.",
        setup="one HG cloud layer, black surface",
        settings={"streams": 8},
        compare=_delta_m_flux,
        study_streams=STUDY_STREAMS,
        must_converge=True,
    ),
)
