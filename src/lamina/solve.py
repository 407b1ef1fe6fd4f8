"""The solver's driver: :func:`solve` over the whole problem, and each block of columns.

:func:`solve` reads like the method's outline: check the options, plan the blocks, apply
the kernel's pipeline over blocks of columns with :func:`xarray.apply_ufunc` (so that a
dask-backed atmosphere gives a lazy result), describe the outputs. Each block runs
prepare -> scale -> solve -> correct -> pack on numpy arrays. Delta-M scaling (Wiscombe
1977) and the exact single-scattering correction of radiances (Nakajima and Tanaka 1988)
are applied on whole arrays; the kernel sees scaled layers only. The steps live in
:mod:`lamina._solver`, one module each (its docstring has the map).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import xarray as xr

from lamina._solver.blocks import pack_block, plan_blocks, prepare_block
from lamina._solver.common import (
    DRY_AIR_HEAT_CAPACITY,
    EARTH_GRAVITY,
    GRAZING_COSINE,
    SECONDS_PER_DAY,
    BlockSettings,
    SolverError,
)
from lamina._solver.corrections import correct_radiance, unscale_direct_beam
from lamina._solver.kernel_call import solve_block
from lamina._solver.options import check_options
from lamina._solver.outputs import assemble
from lamina._solver.phase_checks import warn_about_phase_functions
from lamina._solver.planet_geometry import level_radii
from lamina._solver.polarized import (
    check_polarized,
    check_stokes,
    describe_polarized,
    polarized_plan,
    solve_polarized,
)
from lamina._solver.scaling import scale_layers
from lamina._solver.surface_terms import check_surface, surface_arrays
from lamina._solver.thermal_sources import planck_sources
from lamina.atmosphere import check_atmosphere

__all__ = [
    "DRY_AIR_HEAT_CAPACITY",
    "EARTH_GRAVITY",
    "GRAZING_COSINE",
    "SECONDS_PER_DAY",
    "SolverError",
    "solve",
]


def solve(
    atmosphere: xr.Dataset,
    streams: int = 16,
    sun_zenith: object = None,
    sun_irradiance: object = None,
    surface_albedo: object = None,
    view_zenith: Sequence[float] | np.ndarray | None = None,
    view_azimuth: Sequence[float] | np.ndarray | None = None,
    wavenumber_band: tuple[object, object] | None = None,
    surface_temperature: object = None,
    top_diffuse_radiance: object = 0.0,
    *,
    wavenumber: object = None,
    output_levels: Sequence[float] | np.ndarray | None = None,
    delta_m: bool = True,
    single_scattering_correction: bool = True,
    aureole_correction: bool = True,
    fourier_tolerance: float = 1e-6,
    max_fourier_terms: int | None = None,
    gravity: float = EARTH_GRAVITY,
    heat_capacity: float = DRY_AIR_HEAT_CAPACITY,
    surface: object = None,
    planet_radius: object = None,
    molar_mass: float | None = None,
    stokes: int = 1,
) -> xr.Dataset:
    """Radiances, fluxes and mean intensities in a layered plane-parallel atmosphere.

    Parameters
    ----------
    atmosphere : xarray.Dataset
        From :func:`lamina.make_atmosphere`. Extra dims broadcast to every output.
    streams : int
        Total number of discrete ordinates (even, >= 2); ``streams // 2`` double-Gauss
        cosines per hemisphere.
    sun_zenith : float, list of float or DataArray, optional
        Zenith angle of the incident beam in degrees, 0 <= theta_0 < 90 (with
        ``planet_radius``: up to 180, as long as the beam reaches some level). A list becomes
        the output dim ``sun_zenith``; all its angles share one homogeneous solution. A
        DataArray along the atmosphere's extra dims gives each column its own sun. Without
        it there is no beam (no default adds a source): the run is thermal, or lit only by
        ``top_diffuse_radiance``, and only the azimuth-averaged term is solved.
    sun_irradiance : float, array or DataArray, optional
        Beam irradiance S on a plane normal to the beam (needs ``sun_zenith``; default 1
        when a zenith is given). Its ``units`` attribute, if any, labels every flux,
        radiance and heating rate (``"W m-2 nm-1"`` carries through as per nm); without
        one, outputs are relative to S (fluxes in units of S, radiances per sr of it).
    surface_albedo : float, array or DataArray, optional
        Lambertian surface albedo in [0, 1]; the surface emits with emissivity 1 - albedo.
        Default: a black surface (no default adds a reflector).
    view_zenith, view_azimuth : list of float, optional
        Directions (degrees) at which radiances are wanted: zenith angle of the line of
        propagation from the vertical (0..90, with ``direction`` up or down) and azimuth of
        propagation measured from that of the beam (0 = forward-scattering side, 180 =
        backscattering side). Without them only the azimuth-independent problem is solved.
        Lists are an outer product: every column at every (zenith, azimuth) pair, on the
        output dims ``view_zenith`` and ``view_azimuth``. One view per pixel: give either as
        a DataArray whose dims are among the atmosphere's extra dims (the other may then be
        a scalar); each column is solved at its own view only, ``radiance`` has dims
        (..., level, direction) without view axes, and the angles become coordinates
        along the pixels' dims. Satellite azimuths convert with
        :func:`lamina.geometry.relative_azimuth`. With ``sun_zenith`` a DataArray along the
        same dims each pixel has its own sun as well.
    wavenumber_band : (low, high), optional
        Band (cm-1) over which the Planck source is integrated (thermal emission). Each
        bound may be a DataArray along the atmosphere's extra dims (one band per
        wavelength, say).
    surface_temperature : float or DataArray, optional
        Surface temperature in K for thermal runs; defaults to the bottom level temperature.
    top_diffuse_radiance : float, array or DataArray
        Isotropic radiance falling on the top of the atmosphere.

        Per-column options (``sun_irradiance``, ``surface_albedo``,
        ``top_diffuse_radiance``, ``surface_temperature`` and the band bounds) are scalars,
        DataArrays along the atmosphere's extra dims, or numpy arrays whose axes are the
        atmosphere's last extra dims in order (numpy broadcasting: an axis of size 1 holds
        for the whole dim).
    wavenumber : float or DataArray, optional
        Monochromatic thermal source at this wavenumber (cm-1), radiance per cm-1.
    output_levels : list of float, optional
        Fractional level numbers at which to report, e.g. ``[0, 0.5, 3]``: 0.5 is half-way
        (in optical depth) through layer 0. Default: every level.
    delta_m : bool
        Delta-M scaling of forward-peaked phase functions (Wiscombe 1977).
    single_scattering_correction : bool
        Replace the truncated single-scattered radiance by the exact one from all moments
        (Nakajima and Tanaka 1988).
    aureole_correction : bool
        With delta-M and the single-scattering correction, add the light scattered several
        times inside the forward peak to downward radiances (a small-angle sum over all
        orders whose second-order term is the secondary correction of Nakajima and Tanaka
        1988); it matters in the aureole around the sun seen from below a cloud. Far from
        the beam, where its small-angle approximation fails, it can overshoot a small
        downward radiance; such radiances are kept at zero rather than negative.
    fourier_tolerance : float
        The azimuthal series stops after two consecutive terms that change no requested
        radiance by more than this fraction.
    max_fourier_terms : int, optional
        Cap on the number of azimuthal terms (default: ``streams``, all that the
        quadrature carries).
    gravity, heat_capacity : float
        g (m s-2) and c_p (J kg-1 K-1) for heating rates; defaults are Earth air
        (9.80665 and 1004). ``gravity`` also serves the hypsometric altitudes of a curved
        planet (``planet_radius``).
    surface : lamina.surface.Surface, optional
        A bidirectional surface (``lamina.surface.cox_munk(5.0)``,
        ``lamina.surface.ross_li(...)``, a weighted sum, ...) instead of
        ``surface_albedo`` (giving both is a ValueError). Its BRDF's Fourier terms enter the
        bottom boundary condition, the direct beam is reflected with the exact BRDF at the
        view angles, and a thermal run's surface emits with the directional emissivity
        1 - directional albedo. Its directional albedo is checked at the run's sun angles.
    planet_radius : float or DataArray, optional
        Radius of the planet's surface in m (a DataArray may carry a ``units`` attribute,
        e.g. ``"km"``). Turns on the pseudo-spherical beam (Dahlback and Stamnes 1991): the
        direct beam is attenuated along its straight path through spherical shells from the
        top of the atmosphere to each level, each layer's extinction uniform in altitude
        within its shell (:func:`lamina.spherical.air_mass_factors`), and the beam source
        of each layer decays from the slant transmittance at its top with the layer's own
        effective cosine (vertical over slant optical depth across the layer). The sun
        zenith (the same at every level of the vertical) may reach 90 degrees at the
        ground and beyond: levels the beam still reaches over the horizon are lit
        (twilight in the upper layers), those in the planet's shadow get no beam, and a lit
        level with the sun below its horizon has a negative ``flux_down_direct`` (the beam
        crosses it upward). What stays plane-parallel: the diffuse field (solved in flat
        layers), the lines of sight of radiances (straight through flat layers), the
        angular part of the beam source (the sun's zenith angle is the same in every
        layer) and the single-scattering and aureole corrections' paths along the view.
        Level altitudes come from the atmosphere's ``altitude`` or, without it, from its
        level ``pressure`` and ``temperature`` through the hypsometric equation
        (:func:`lamina.spherical.hypsometric_altitudes`, with ``molar_mass`` and
        ``gravity``).
    molar_mass : float, optional
        Mean molar mass of the gas in kg mol-1 for the hypsometric altitudes (default dry
        air, 0.0289644); only with ``planet_radius`` and an atmosphere without altitudes.
    stokes : {1, 3, 4}
        1 (default): the scalar solver. 3 solves for the Stokes components I, Q, U, 4 adds
        V, with the atmosphere's ``scattering_matrix_moments`` (a layer given only
        ``phase_moments`` scatters without polarizing): ``radiance`` gains a dim ``stokes``
        (labels "I", "Q", "U", "V"; Q and U referred to the meridian plane of the direction
        of propagation, Q > 0 parallel to it), with ``degree_of_polarization`` and
        ``angle_of_linear_polarization``; fluxes and mean intensity are those of I. The
        single-scattering correction uses the full matrix, the aureole correction adds
        unpolarized light to I, ``top_diffuse_radiance`` is unpolarized, thermal emission
        (``wavenumber_band`` or ``wavenumber``: the layers' Planck source and the surface's
        (1 - ``surface_albedo``) B) is unpolarized at its source. ``fourier_tolerance``
        applies to every Stokes component of every output, ``max_fourier_terms`` as for
        ``stokes=1``. Not yet with a bidirectional surface, ``planet_radius`` or per-pixel
        view angles (ValueError).

    Returns
    -------
    xarray.Dataset
        See the README's output table: ``flux_up``, ``flux_down_diffuse``,
        ``flux_down_direct``, ``flux_down``, ``flux_net``, ``mean_intensity``,
        ``actinic_flux``, optional ``radiance``, ``flux_divergence``, ``heating_rate``,
        ``fourier_terms``.

    Examples
    --------
    >>> import lamina
    >>> atm = lamina.make_atmosphere([0.5], [1.0], lamina.phase.henyey_greenstein(0.7, 32))
    >>> out = lamina.solve(atm, streams=8, sun_zenith=60.0, surface_albedo=0.0)
    >>> bool(abs(out.flux_up[0] + out.flux_down[-1] - 0.5) < 1e-9)
    True
    """
    # check
    check_atmosphere(atmosphere)
    check_surface(surface, surface_albedo)
    radius = level_radii(atmosphere, planet_radius, molar_mass, gravity)
    options = check_options(
        atmosphere, streams=streams, sun_zenith=sun_zenith, sun_irradiance=sun_irradiance,
        surface_albedo=surface_albedo, view_zenith=view_zenith, view_azimuth=view_azimuth,
        top_diffuse_radiance=top_diffuse_radiance, output_levels=output_levels,
        delta_m=delta_m, single_scattering_correction=single_scattering_correction,
        aureole_correction=aureole_correction, fourier_tolerance=fourier_tolerance,
        max_fourier_terms=max_fourier_terms, gravity=gravity, heat_capacity=heat_capacity,
        spherical=radius is not None,
    )
    stokes = check_stokes(stokes)
    sources = planck_sources(atmosphere, wavenumber_band, wavenumber, surface_temperature)
    bidirectional = surface_arrays(surface, options, sources.thermal)
    if stokes > 1:
        check_polarized(options, sources, bidirectional, spherical=radius is not None)
    # plan
    plan = plan_blocks(atmosphere, options, sources, bidirectional, radius)
    if stokes > 1:
        plan = polarized_plan(plan, atmosphere, stokes)
    # apply over blocks
    results = xr.apply_ufunc(
        _solve_block, *plan.inputs,
        input_core_dims=plan.input_core_dims,
        output_core_dims=plan.output_core_dims,
        kwargs={"settings": plan.settings},
        dask="parallelized",
        output_dtypes=plan.output_dtypes,
        dask_gufunc_kwargs={"output_sizes": plan.output_sizes},
        keep_attrs=False,
    )
    # describe
    out = assemble(results, plan.output_names, atmosphere, options, sources, plan.settings)
    return describe_polarized(out, stokes) if stokes > 1 else out


def _solve_block(
    tau: np.ndarray,
    albedo: np.ndarray,
    moments: np.ndarray,
    sun_zenith: np.ndarray,
    irradiance: np.ndarray,
    surface_albedo: np.ndarray,
    planck_levels: np.ndarray,
    planck_surface: np.ndarray,
    top_radiance: np.ndarray,
    *more: np.ndarray,
    settings: BlockSettings,
) -> tuple[np.ndarray, ...]:
    """Solve one block of columns (numpy in, numpy out); leading axes are columns.

    ``more``: the arrays of a bidirectional surface (``_solver.surface_terms``), if any,
    then the level radii of a curved planet (``settings.spherical``), then per-pixel view
    zenith and azimuth, if given so; with ``stokes`` > 1 the scattering matrix
    (``_solver.polarized``) comes last.
    """
    more = list(more)
    matrix = more.pop() if settings.stokes > 1 else None
    views = tuple(more[-2:]) if settings.views.per_pixel else ()
    if views:
        del more[-2:]
    radius = more.pop() if settings.spherical else None
    block = prepare_block(tau, albedo, moments, sun_zenith, irradiance, surface_albedo,
                          planck_levels, planck_surface, top_radiance, settings,
                          surface=tuple(more), radius=radius, views=views)
    warn_about_phase_functions(block, settings)
    layers = scale_layers(block.optical_depth, block.single_scattering_albedo,
                          block.phase_moments, settings.streams, settings.delta_m)
    if matrix is None:
        fields = solve_block(block, layers, settings)
    else:
        fields = solve_polarized(block, layers, matrix, settings)
    depth = unscale_direct_beam(block, layers, settings.positions, fields)
    if settings.views.wanted and matrix is None:
        fields.radiance = correct_radiance(block, layers, settings, fields.radiance)
    elif settings.views.wanted:
        # I takes the scalar corrections (alpha1 is the phase function); the polarized solve
        # step has corrected Q and U with the matrix
        fields.radiance[..., 0] = correct_radiance(block, layers, settings,
                                                   fields.radiance[..., 0])
    return pack_block(block, fields, depth, settings.views.wanted)
