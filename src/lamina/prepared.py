"""A solver prepared once for many calls on numpy arrays: the fast path of retrievals.

:class:`Solver` checks the options of :func:`lamina.solve` once and then solves columns
given as numpy arrays, with the same block steps as ``solve`` (prepare -> scale -> solve ->
correct, :mod:`lamina._solver`) but without labelling: no Dataset is built and nothing goes
through :func:`xarray.apply_ufunc`, whose bookkeeping is most of the time of a one-column
``solve`` (``benchmarks/latency.py``). It returns the same quantities under the same names,
equal to ``solve``'s bit for bit (tested).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence

import numpy as np
import xarray as xr

from lamina._checks import as_float_array
from lamina._solver.blocks import plan_blocks, prepare_block
from lamina._solver.common import BlockSettings, Options, ThermalSources
from lamina._solver.corrections import correct_radiance, unscale_direct_beam
from lamina._solver.kernel_call import solve_block
from lamina._solver.options import check_options
from lamina._solver.phase_checks import warn_about_phase_functions
from lamina._solver.scaling import scale_layers

__all__ = ["Solver"]


class Solver:
    """:func:`lamina.solve` prepared once, called with numpy arrays.

    Parameters
    ----------
    streams, sun_zenith, view_zenith, view_azimuth
        As for :func:`lamina.solve` (``sun_zenith`` a scalar or a list, views as lists;
        without ``sun_zenith`` there is no beam). Checked here, once.
    output_levels, delta_m, single_scattering_correction, aureole_correction
        As for :func:`lamina.solve`.
    fourier_tolerance, max_fourier_terms
        As for :func:`lamina.solve`.
    surface, wavenumber_band, wavenumber : not supported
        Bidirectional surfaces and thermal emission need :func:`lamina.solve`; giving them
        here is a ValueError.

    Notes
    -----
    Call the solver with the optics of one column, ``optical_depth`` (layer,),
    ``single_scattering_albedo`` (layer,) and ``phase_moments`` (layer, moment) or
    (moment,), or of many columns with leading axes broadcast as numpy does (e.g.
    (column, layer)); ``sun_irradiance`` (default 1 with a sun), ``surface_albedo``
    (default 0) and ``top_diffuse_radiance`` (default 0) are scalars or arrays of the
    leading shape. It returns a dict of numpy arrays named as ``solve``'s variables:
    ``flux_up``, ``flux_down_diffuse``, ``flux_down_direct``, ``flux_down``, ``flux_net``,
    ``mean_intensity``, ``actinic_flux`` (leading axes, then ``sun_zenith`` for a list of
    suns, then level), ``radiance`` (..., level, direction, view_zenith, view_azimuth),
    ``reflectance`` (as in ``solve``: with a beam, views and the top among the positions;
    NaN where S = 0), ``flux_divergence`` (..., layer; on every level) and
    ``fourier_terms`` (leading axes). Values are checked at every call (ValueError naming
    the argument). Per-pixel geometry, units, heating rates and dask need ``solve``.

    Examples
    --------
    >>> import numpy as np, lamina
    >>> solver = lamina.Solver(streams=8, sun_zenith=30.0, view_zenith=[0.0],
    ...                        view_azimuth=[0.0])
    >>> out = solver(np.array([0.5]), np.array([1.0]),
    ...              lamina.phase.henyey_greenstein(0.7, 32), surface_albedo=0.0)
    >>> out["radiance"].shape    # level, direction, view_zenith, view_azimuth
    (2, 2, 1, 1)
    >>> bool(abs(out["flux_up"][0] + out["flux_down"][-1] - np.cos(np.radians(30))) < 1e-9)
    True
    """

    def __init__(
        self,
        streams: int = 16,
        sun_zenith: object = None,
        view_zenith: Sequence[float] | np.ndarray | None = None,
        view_azimuth: Sequence[float] | np.ndarray | None = None,
        *,
        output_levels: Sequence[float] | np.ndarray | None = None,
        delta_m: bool = True,
        single_scattering_correction: bool = True,
        aureole_correction: bool = True,
        fourier_tolerance: float = 1e-6,
        max_fourier_terms: int | None = None,
        surface: object = None,
        wavenumber_band: object = None,
        wavenumber: object = None,
    ) -> None:
        for name, value in (("surface", surface), ("wavenumber_band", wavenumber_band),
                            ("wavenumber", wavenumber)):
            if value is not None:
                raise ValueError(f"lamina.Solver does not take {name} (bidirectional "
                                 "surfaces and thermal emission): use lamina.solve")
        if isinstance(sun_zenith, xr.DataArray) or isinstance(view_zenith, xr.DataArray) \
                or isinstance(view_azimuth, xr.DataArray):
            raise ValueError("lamina.Solver takes sun_zenith and view angles as scalars or "
                             "lists; per-pixel geometry (DataArrays) needs lamina.solve")
        self._keywords = dict(
            streams=streams, sun_zenith=sun_zenith, view_zenith=view_zenith,
            view_azimuth=view_azimuth, output_levels=output_levels, delta_m=delta_m,
            single_scattering_correction=single_scattering_correction,
            aureole_correction=aureole_correction, fourier_tolerance=fourier_tolerance,
            max_fourier_terms=max_fourier_terms)
        self._prepared: dict[tuple[int, bool], tuple[Options, BlockSettings]] = {}
        # the checks of every option now (for one layer; positions are checked again per
        # layer count, at the first call with it)
        levels = (np.zeros(0) if output_levels is None
                  else np.atleast_1d(as_float_array(output_levels, "output_levels")))
        usable = levels.size and np.all(np.isfinite(levels))
        self._prepare(max(1, int(np.ceil(levels.max()))) if usable else 1, True)

    def _prepare(self, nlayer: int, beam_shines: bool) -> tuple[Options, BlockSettings]:
        """Options and block settings for ``nlayer`` layers (cached)."""
        key = (nlayer, beam_shines)
        if key not in self._prepared:
            placeholder = xr.Dataset({
                "optical_depth": ("layer", np.zeros(nlayer)),
                "single_scattering_albedo": ("layer", np.zeros(nlayer)),
                "phase_moments": (("layer", "moment"), np.ones((nlayer, 1))),
            })
            keywords = dict(self._keywords)
            given_sun = keywords["sun_zenith"] is not None
            options = check_options(
                placeholder, sun_irradiance=None if beam_shines or not given_sun else 0.0,
                surface_albedo=None, top_diffuse_radiance=0.0, gravity=1.0,
                heat_capacity=1.0, **keywords)
            sources = ThermalSources(
                levels=xr.DataArray(np.zeros(nlayer + 1), dims=("level",)),
                surface=xr.DataArray(0.0), units=None)
            settings = plan_blocks(placeholder, options, sources).settings
            # the optics come at each call: prepare_block checks their values
            settings = dataclasses.replace(settings, optics_checked=False)
            self._prepared[key] = (options, settings)
        return self._prepared[key]

    def __call__(
        self,
        optical_depth: np.ndarray,
        single_scattering_albedo: np.ndarray,
        phase_moments: np.ndarray,
        *,
        sun_irradiance: object = None,
        surface_albedo: object = 0.0,
        top_diffuse_radiance: object = 0.0,
    ) -> dict[str, np.ndarray]:
        """Solve the columns; see the class docstring for shapes and outputs."""
        tau = _array(optical_depth, "optical_depth", 1)
        albedo = _array(single_scattering_albedo, "single_scattering_albedo", 1)
        moments = _array(phase_moments, "phase_moments", 1)
        if moments.ndim == 1:
            moments = moments[None, :]
        nlayer = tau.shape[-1]
        if albedo.shape[-1] != nlayer:
            raise ValueError(f"single_scattering_albedo has {albedo.shape[-1]} layers on its "
                             f"last axis but optical_depth has {nlayer}")
        if moments.shape[-2] not in (1, nlayer):
            raise ValueError(f"phase_moments has {moments.shape[-2]} layers on its "
                             f"second-to-last axis but optical_depth has {nlayer}")
        if moments.shape[-2] == 1 and nlayer != 1:
            moments = np.broadcast_to(moments, (*moments.shape[:-2], nlayer, moments.shape[-1]))
        beam = self._keywords["sun_zenith"] is not None
        if sun_irradiance is not None and not beam:
            raise ValueError("sun_irradiance needs sun_zenith: give it to lamina.Solver")
        irradiance = as_float_array(1.0 if sun_irradiance is None else sun_irradiance,
                                    "sun_irradiance") if beam else np.zeros(())
        shines = beam and bool(np.any(irradiance != 0.0))
        options, settings = self._prepare(nlayer, shines or not beam)
        zenith = np.asarray(options.sun_zenith.values)
        block = prepare_block(
            tau, albedo, moments, zenith, irradiance[..., None], as_float_array(
                surface_albedo, "surface_albedo"), np.zeros(nlayer + 1), np.zeros(()),
            as_float_array(top_diffuse_radiance, "top_diffuse_radiance"), settings)
        return self._solve(block, options, settings)

    def _solve(self, block, options: Options, settings: BlockSettings) -> dict[str, np.ndarray]:
        """The block steps of ``solve`` and the derived outputs, on numpy arrays."""
        warn_about_phase_functions(block, settings)
        layers = scale_layers(block.optical_depth, block.single_scattering_albedo,
                              block.phase_moments, settings.streams, settings.delta_m)
        fields = solve_block(block, layers, settings)
        unscale_direct_beam(block, layers, settings.positions, fields)
        views = settings.views
        if views.wanted:
            fields.radiance = correct_radiance(block, layers, settings, fields.radiance)
        lead = block.lead
        many_suns = options.sun_list

        def shaped(array: np.ndarray) -> np.ndarray:
            array = array.reshape(*lead, *array.shape[1:])
            return array if many_suns else np.take(array, 0, axis=len(lead))

        out = {"flux_up": shaped(fields.flux_up),
               "flux_down_diffuse": shaped(fields.flux_down_diffuse),
               "flux_down_direct": shaped(fields.flux_down_direct),
               "mean_intensity": shaped(fields.mean_intensity)}
        if views.wanted:
            out["radiance"] = shaped(fields.radiance)
        out["fourier_terms"] = fields.fourier_terms.reshape(lead)
        out["flux_down"] = out["flux_down_diffuse"] + out["flux_down_direct"]
        out["flux_net"] = out["flux_down"] - out["flux_up"]
        out["actinic_flux"] = 4.0 * np.pi * out["mean_intensity"]
        if options.on_levels:
            out["flux_divergence"] = out["flux_net"][..., :-1] - out["flux_net"][..., 1:]
        top = np.flatnonzero(settings.positions.levels == 0.0)
        if options.beam and views.wanted and top.size:
            cosines = block.beam_cosines.reshape(*lead, -1)
            strength = cosines * block.sun_irradiance.reshape(*lead, -1)
            if not many_suns:
                strength = strength[..., 0]
            upward = out["radiance"][..., int(top[0]), 0, :, :]
            strength = strength[..., None, None]
            out["reflectance"] = np.pi * upward / np.where(strength > 0.0, strength, np.nan)
        return out


def _array(value: object, name: str, ndim: int) -> np.ndarray:
    array = as_float_array(value, name)
    if array.ndim < ndim:
        raise ValueError(f"{name} must have a layer axis (at least {ndim} axis); got a scalar")
    return array
