"""The surface object, its quadratures and weighted sums.

A surface holds its parameters as DataArrays (0-d for scalars) and a vectorised numpy
evaluation ``_evaluate(values, geometry)``. Everything else (the public ``brdf``, the
directional albedo, the azimuthal Fourier expansion and the energy check) is built here once
from that evaluation, so a new model only provides its formula and its parameter checks.

Angles follow lamina's convention: ``view_azimuth`` is the azimuth of the reflected
propagation direction measured from that of the incident beam's propagation, so 0 is the
forward (specular) side and 180 the backscatter side, where the hot spot is.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

import numpy as np
import xarray as xr

from lamina._checks import as_float_array

# Sun zeniths (degrees) at which every new surface is checked for 0 <= albedo <= 1.
# The grid stops at 85 degrees because models with a bowl exponent below 1 (RPV) diverge
# as the sun reaches the horizon; check other angles with ``check_energy``.
CHECK_SUN_ZENITH = np.array([0.0, 10.0, 20.0, 30.0, 40.0, 50.0, 60.0, 70.0, 75.0, 80.0, 85.0])

# Largest number of float64 elements in one block of quadrature work (about 16 MB).
_BLOCK_ELEMENTS = 2_000_000


def _gauss_panels(low: float, edges: np.ndarray, nodes: int) -> tuple[np.ndarray, np.ndarray]:
    """Composite Gauss-Legendre nodes and weights on the panels between ``edges``."""
    x, w = np.polynomial.legendre.leggauss(nodes)
    left, right = edges[:-1, None], edges[1:, None]
    half = 0.5 * (right - left)
    return (left + half * (x + 1.0)).ravel(), (half * w).ravel()


def zenith_quadrature(panels: int, sun_zenith: np.ndarray | None = None,
                      nodes: int = 8) -> tuple[np.ndarray, np.ndarray]:
    """Cosines and weights in mu for integrals over the view hemisphere.

    Composite Gauss-Legendre in the zenith angle theta on ``panels`` equal panels, the last
    panel refined geometrically towards the horizon (factor 1/2, eight times) because the
    integrand mu^k of a bowl-shaped model is singular there; the weights include
    d mu = sin(theta) d theta. With ``sun_zenith`` (radians, 1-d) the rule is made per sun
    angle (leading axis) with a panel edge at the sun's zenith, where the hot spot's cusp and
    the glint's peak sit.
    """
    edges = np.linspace(0.0, 0.5 * np.pi, panels + 1)
    last = edges[-2]
    graded = 0.5 * np.pi - (0.5 * np.pi - last) * 0.5 ** np.arange(9)
    edges = np.concatenate([edges[:-2], graded, [0.5 * np.pi]])
    if sun_zenith is None:
        theta, weight = _gauss_panels(0.0, edges, nodes)
        return np.cos(theta), weight * np.sin(theta)
    # one more edge per sun angle; an edge that coincides makes a panel of zero weight
    all_edges = np.sort(np.concatenate(
        [np.broadcast_to(edges, (sun_zenith.size, edges.size)), sun_zenith[:, None]], axis=1),
        axis=1)
    x, w = np.polynomial.legendre.leggauss(nodes)
    left, right = all_edges[:, :-1, None], all_edges[:, 1:, None]
    half = 0.5 * (right - left)
    theta = (left + half * (x + 1.0)).reshape(sun_zenith.size, -1)
    weight = (half * w).reshape(sun_zenith.size, -1)
    return np.cos(theta), weight * np.sin(theta)


def azimuth_quadrature(panels: int, nodes: int = 8) -> tuple[np.ndarray, np.ndarray]:
    """Azimuths (radians) on [0, pi] and weights of a composite Gauss-Legendre rule.

    Gauss-Legendre rather than the trapezoid rule: the models are even in azimuth, and at
    the hot spot they have a cusp at 180 degrees as periodic functions (|cos(phi / 2)|
    behaviour) which on the closed interval [0, pi] is smooth, so Gauss converges
    exponentially there where the periodic trapezoid rule converges only algebraically.
    """
    return _gauss_panels(0.0, np.linspace(0.0, np.pi, panels + 1), nodes)


class Geometry:
    """Cosines of one set of directions, broadcast numpy arrays; derived values on demand.

    ``mu0`` is the cosine of the sun zenith, ``mu`` that of the view zenith and ``cos_phi``
    the cosine of lamina's view azimuth (0 forward, pi backscatter).
    """

    def __init__(self, mu0: np.ndarray, mu: np.ndarray, cos_phi: np.ndarray) -> None:
        self.mu0, self.mu, self.cos_phi = mu0, mu, cos_phi
        self.sin0 = np.sqrt(np.maximum(1.0 - mu0 * mu0, 0.0))
        self.sin = np.sqrt(np.maximum(1.0 - mu * mu, 0.0))
        self.sin_phi_sq = np.maximum(1.0 - cos_phi * cos_phi, 0.0)

    @property
    def cos_phase(self) -> np.ndarray:
        """Cosine of the phase angle g between the directions to the sun and to the viewer
        (g = 0 at the hot spot)."""
        return np.clip(self.mu0 * self.mu - self.sin0 * self.sin * self.cos_phi, -1.0, 1.0)


def _as_parameter(value: object, name: str, complex_ok: bool = False) -> xr.DataArray:
    """A parameter as a DataArray (0-d for scalars); TypeError for non-numeric input."""
    if isinstance(value, xr.DataArray):
        data = value.data
        if not (np.issubdtype(data.dtype, np.number) and not np.issubdtype(data.dtype, np.bool_)):
            raise TypeError(f"{name} must be numeric; got dtype {data.dtype}")
        if np.iscomplexobj(data) and not complex_ok:
            raise TypeError(f"{name} must be real; got dtype {data.dtype}")
        dtype = np.complex128 if np.iscomplexobj(data) else np.float64
        return value.astype(dtype)
    if isinstance(value, bool | np.bool_):
        raise TypeError(f"{name} must be numeric; got bool")
    if complex_ok and np.iscomplexobj(value):
        return xr.DataArray(np.asarray(value, dtype=np.complex128))
    array = as_float_array(value, name)
    if array.ndim:
        raise TypeError(
            f"{name} must be a scalar or an xarray.DataArray (its dims name the spectral or "
            f"other extra axes); got an array of shape {array.shape}"
        )
    return xr.DataArray(array)


def _check_range(
    array: xr.DataArray,
    name: str,
    low: float | None = None,
    high: float | None = None,
    low_open: bool = False,
    high_open: bool = False,
    rule: str | None = None,
) -> None:
    """ValueError naming the argument and the first value outside the interval."""
    values = np.real(np.asarray(array.values))
    bad = ~np.isfinite(np.asarray(array.values))
    if low is not None:
        bad |= values <= low if low_open else values < low
    if high is not None:
        bad |= values >= high if high_open else values > high
    if np.any(bad):
        index = tuple(int(i) for i in np.argwhere(bad)[0]) if values.ndim else ()
        where = ", ".join(f"{d} {i}" for d, i in zip(array.dims, index, strict=True))
        if rule is None:
            left, right = "(" if low_open else "[", ")" if high_open else "]"
            low_text = "-inf" if low is None else f"{low:g}"
            high_text = "inf" if high is None else f"{high:g}"
            rule = f"lie in {left}{low_text}, {high_text}{right}"
        bad_value = np.asarray(array.values)[index] if index else array.values
        raise ValueError(f"{name} must {rule}; {where or 'the value'} is {bad_value}")


class Surface:
    """Base class: a bidirectional reflectance distribution function (BRDF).

    Subclasses set ``_parameters`` (a dict of DataArrays) and implement ``_evaluate``.
    ``_zenith_panels`` and ``_azimuth_panels`` set the default quadratures; a narrow glint
    needs more panels than a smooth kernel.
    """

    _zenith_panels = 12
    _azimuth_panels = 8
    _parameters: dict[str, xr.DataArray]

    # --- what a model provides -------------------------------------------------------
    def _evaluate(self, values: dict[str, np.ndarray], geometry: Geometry) -> np.ndarray:
        raise NotImplementedError

    # --- the public face -------------------------------------------------------------
    def brdf(self, sun_zenith: Any, view_zenith: Any, view_azimuth: Any) -> Any:
        """The BRDF f (sr^-1) for the given angles (degrees).

        Parameters
        ----------
        sun_zenith, view_zenith : scalar, array or DataArray
            Zenith angles of the sun and of the view, in [0, 90) degrees (at 90 several
            models have infinite secants).
        view_azimuth : scalar, array or DataArray
            Azimuth of the reflected propagation direction from that of the incident beam's
            propagation (degrees): 0 is the specular side, 180 the backscatter (hot spot).

        Returns
        -------
        numpy.ndarray or xarray.DataArray
            With scalar parameters and no DataArray angle: a numpy array of the angles'
            broadcast shape. Otherwise a DataArray broadcast by dimension name; a 1-d numpy
            angle then takes its argument's name as its dim.
        """
        angles = {"sun_zenith": sun_zenith, "view_zenith": view_zenith,
                  "view_azimuth": view_azimuth}
        arrays = {name: _angle(value, name) for name, value in angles.items()}
        _check_angles(arrays)
        labelled = any(isinstance(v, xr.DataArray) for v in angles.values()) or any(
            p.ndim for p in self._parameters.values())
        if not labelled:
            mu0, mu, phi = np.broadcast_arrays(*(np.asarray(a) for a in arrays.values()))
            values = {k: p.values for k, p in self._parameters.items()}
            return self._evaluate(values, _geometry(mu0, mu, phi))
        named = []
        for name, value in arrays.items():
            if isinstance(value, xr.DataArray):
                named.append(value)
            elif np.ndim(value) == 0:
                named.append(xr.DataArray(float(value)))
            elif np.ndim(value) == 1:
                named.append(xr.DataArray(value, dims=(name,), coords={name: value}))
            else:
                raise ValueError(f"{name} must be a scalar, 1-d or a DataArray when the "
                                 f"surface's parameters have dims; got shape {np.shape(value)}")
        keys = list(self._parameters)
        everything = xr.broadcast(*self._parameters.values(), *named)
        values = {k: a.values for k, a in zip(keys, everything, strict=False)}
        mu0, mu, phi = (a.values for a in everything[len(keys):])
        result = self._evaluate(values, _geometry(mu0, mu, phi))
        return everything[-1].copy(data=result).rename("brdf").assign_attrs(
            units="sr-1", long_name="bidirectional reflectance distribution function")

    def directional_albedo(self, sun_zenith: Any, zenith_panels: int | None = None,
                           azimuth_panels: int | None = None) -> Any:
        """Directional-hemispherical reflectance A(mu0) = int f mu d(omega) at ``sun_zenith``.

        Composite Gauss-Legendre in view zenith (8 nodes a panel, refined towards the
        horizon, with a panel edge at the sun's zenith) and in azimuth on [0, pi] (doubled by
        symmetry). Measured against twice the panels, for sun zeniths up to 70 degrees:
        about 1e-8 absolute for RPV, Hapke and Ross-Li (the hot spot's cusp limits the
        convergence) and 1e-11 for the glint; at 85 degrees 1e-6 (Ross-Li, glint at 3 m/s)
        and 1e-4 (glint at 0 m/s).

        Returns a numpy array of ``sun_zenith``'s shape for scalar parameters and a numpy
        sun angle, else a DataArray (parameter dims, then the sun angle's dims; a 1-d numpy
        ``sun_zenith`` becomes dim ``sun_zenith``).
        """
        phi, wphi = azimuth_quadrature(azimuth_panels or self._azimuth_panels)
        return self._integrate_over_views(sun_zenith, zenith_panels or self._zenith_panels,
                                          np.cos(phi), 2.0 * wphi)

    def directional_emissivity(self, view_zenith: Any) -> Any:
        """Emissivity towards ``view_zenith``: 1 - A(mu), Kirchhoff's law for a surface in
        thermal equilibrium, with A the directional albedo at the same angle (by Helmholtz
        reciprocity the hemispherical-directional reflectance into mu equals A(mu) for a
        reciprocal BRDF). Same return types as `directional_albedo`."""
        albedo = self.directional_albedo(view_zenith)
        emissivity = 1.0 - albedo
        if isinstance(emissivity, xr.DataArray):
            emissivity = emissivity.rename("directional_emissivity").assign_attrs(
                units="1", long_name="directional emissivity")
        return emissivity

    def fourier_terms(self, incident_cosines: Any, reflected_cosines: Any, n_terms: int,
                      azimuth_panels: int | None = None) -> xr.DataArray:
        """Azimuthal Fourier expansion of the BRDF on given cosines.

        f(mu, mu', phi) = sum_m (2 - delta_m0) f_m(mu, mu') cos(m phi), with phi lamina's
        view azimuth (0 forward); f_m = (1 / pi) int_0^pi f cos(m phi) d phi by composite
        Gauss-Legendre (8 nodes a panel; by default 32 panels, 48 for the glint, and at least
        ``n_terms / 2 + 4`` so that cos(m phi) is resolved). Measured against four times the
        panels: RPV and Hapke converge to 1e-13 relative, the glint to 1e-12 at 5 m/s and
        3e-6 at 0 m/s, Ross-Li to 1e-6 (the Li-sparse overlap function starts as t^3 where
        the crowns' shadows begin to overlap, a kink that limits any fixed rule). A kernel
        that measures azimuth from the backscatter side multiplies term m by (-1)^m.

        The glint needs many terms: at 5 m/s 64 terms rebuild f to 1e-4 of its peak, at
        0 m/s not even to 100 percent (the peak is a few degrees wide), so the solver should
        add the direct beam's reflection with the exact BRDF, not its truncated series.

        Parameters
        ----------
        incident_cosines, reflected_cosines : 1-d array_like
            Cosines mu' of the incident and mu of the reflected directions, in (0, 1].
        n_terms : int
            Number of terms m = 0 .. n_terms - 1.

        Returns
        -------
        xarray.DataArray
            Dims (parameter dims..., ``fourier_term``, ``reflected``, ``incident``): the last
            three axes of ``.values`` are (term, reflected, incident) for the kernel.
        """
        if isinstance(n_terms, bool) or not isinstance(n_terms, int | np.integer):
            raise TypeError(f"n_terms must be an integer; got {type(n_terms).__name__}")
        if n_terms < 1:
            raise ValueError(f"n_terms must be at least 1; got {n_terms}")
        mu_in = _cosines(incident_cosines, "incident_cosines")
        mu_out = _cosines(reflected_cosines, "reflected_cosines")
        panels = self._fourier_panels(n_terms, azimuth_panels)

        def work(values: dict[str, np.ndarray]) -> np.ndarray:
            return self._fourier_values(values, mu_out, mu_in, n_terms, azimuth_panels)

        size = mu_in.size * mu_out.size * panels * 8
        dims = ("fourier_term", "reflected", "incident")
        coords = {"reflected": mu_out, "incident": mu_in}
        return self._blocked(work, size, dims, (n_terms, mu_out.size, mu_in.size), coords)

    def _fourier_panels(self, n_terms: int, azimuth_panels: int | None = None) -> int:
        # 32 panels converge the smooth models' terms to about 1e-13 (measured)
        return max(azimuth_panels or max(self._azimuth_panels, 32), n_terms // 2 + 4)

    def _fourier_values(self, values: dict[str, np.ndarray], reflected: np.ndarray,
                        incident: np.ndarray, n_terms: int,
                        azimuth_panels: int | None = None) -> np.ndarray:
        """Fourier terms f_m as numpy, (..., term, reflected, incident).

        ``values`` are parameter arrays of shape (...); ``reflected`` (..., R) and
        ``incident`` (..., I) cosines broadcast against them (a 1-d array serves every
        point). The rule of `fourier_terms`; the solver calls this on its own cosines.
        """
        phi, wphi = azimuth_quadrature(self._fourier_panels(n_terms, azimuth_panels))
        basis = np.cos(np.arange(n_terms)[:, None] * phi[None, :]) * wphi / np.pi  # (m, phi)
        expand = {k: v[..., None, None, None] for k, v in values.items()}
        geometry = Geometry(incident[..., None, :, None], reflected[..., :, None, None],
                            np.cos(phi))
        f = self._evaluate(expand, geometry)  # (..., out, in, phi)
        return np.einsum("...oip,mp->...moi", f, basis)

    def check_energy(self, sun_zenith: Any = CHECK_SUN_ZENITH) -> None:
        """Raise ValueError if the directional albedo leaves [0, 1] at some sun zenith."""
        sun = as_float_array(sun_zenith, "sun_zenith").ravel()
        albedo = np.asarray(xr.DataArray(self.directional_albedo(sun)).values)
        self._report_albedo(albedo, sun)

    # --- shared machinery ------------------------------------------------------------
    def _report_albedo(self, albedo: np.ndarray, sun: np.ndarray) -> None:
        # round-off of the quadrature is far below 1e-9
        bad = (albedo > 1.0 + 1e-9) | (albedo < -1e-9) | ~np.isfinite(albedo)
        if np.any(bad):
            index = tuple(int(i) for i in np.argwhere(bad)[0])
            dims = [d for d in self._dims()] + ["sun"]
            where = ", ".join(f"{d} {i}" for d, i in zip(dims[:-1], index[:-1], strict=True))
            raise ValueError(
                f"{type(self).__name__} surface: directional albedo must lie in [0, 1]; at "
                f"sun zenith {sun[index[-1]]:g} degrees{' (' + where + ')' if where else ''} "
                f"it is {albedo[index]:.6g}"
            )

    def _dims(self) -> tuple[str, ...]:
        return tuple(xr.broadcast(*self._parameters.values())[0].dims) if self._parameters \
            else ()

    def _integrate_over_views(self, sun_zenith: Any, zenith_panels: int, cos_phi: np.ndarray,
                              azimuth_weights: np.ndarray) -> Any:
        sun = _angle(sun_zenith, "sun_zenith")
        _check_angles({"sun_zenith": sun})
        sun_values = np.asarray(sun.values if isinstance(sun, xr.DataArray) else sun)
        theta0 = np.deg2rad(sun_values).ravel()
        mu0 = np.cos(theta0)
        mu, wmu = zenith_quadrature(zenith_panels, theta0)  # (sun, zenith)
        weights = (wmu * mu)[:, :, None] * azimuth_weights[None, None, :]
        geometry = (mu0[:, None, None], mu[:, :, None], cos_phi[None, None, :])

        def work(values: dict[str, np.ndarray]) -> np.ndarray:
            expand = {k: v[..., None, None, None] for k, v in values.items()}
            f = self._evaluate(expand, Geometry(*geometry))
            return np.einsum("...szp,szp->...s", f, weights)

        size = mu0.size * weights.size
        result = self._blocked(work, size, ("sun",), (mu0.size,), {})
        shape = result.shape[:-1] + sun_values.shape
        if not isinstance(sun, xr.DataArray) and result.ndim == 1:
            return result.values.reshape(shape)
        if isinstance(sun, xr.DataArray):
            out = xr.DataArray(result.values.reshape(shape), dims=result.dims[:-1] + sun.dims,
                               coords={**result.coords, **sun.coords})
        elif sun_values.ndim == 0:
            out = result.isel(sun=0, drop=True)
        else:
            out = result.rename(sun="sun_zenith").assign_coords(sun_zenith=sun_values.ravel())
        return out.rename("directional_albedo").assign_attrs(
            units="1", long_name="directional-hemispherical reflectance")

    def _blocked(self, work: Any, size: int, dims: tuple[str, ...], shape: tuple[int, ...],
                 coords: dict[str, Any]) -> xr.DataArray:
        """Run ``work`` over the flattened parameter broadcast in blocks of bounded memory."""
        keys = list(self._parameters)
        arrays = xr.broadcast(*self._parameters.values()) if keys else []
        template = arrays[0] if keys else xr.DataArray(0.0)
        flat = {k: np.asarray(a.values).reshape(-1) for k, a in zip(keys, arrays, strict=True)}
        count = template.size
        step = max(1, _BLOCK_ELEMENTS // max(size, 1))
        pieces = [work({k: v[start:start + step] for k, v in flat.items()})
                  for start in range(0, count, step)]
        data = np.concatenate(pieces, axis=0).reshape(template.shape + shape)
        return xr.DataArray(data, dims=template.dims + dims,
                            coords={**template.coords, **coords})

    # --- weighted sums ---------------------------------------------------------------
    # numpy scalars and arrays hand ``weight * surface`` to __rmul__ instead of making an
    # object array; a DataArray weight must come second (``surface * weight``) or go
    # through `weighted_sum`, because xarray's own __mul__ takes the first turn
    __array_ufunc__ = None

    def __mul__(self, weight: Any) -> Surface:
        return WeightedSum([(weight, self)])

    __rmul__ = __mul__

    def __add__(self, other: Any) -> Surface:
        if not isinstance(other, Surface):
            return NotImplemented
        return WeightedSum(_terms(self) + _terms(other))

    __radd__ = __add__


def _terms(surface: Surface) -> list[tuple[Any, Surface]]:
    if isinstance(surface, WeightedSum):
        return list(surface.terms)
    return [(1.0, surface)]


class WeightedSum(Surface):
    """f = sum_i w_i f_i: an areal mixture of surface types, or a kernel-driven sum.

    Weights must be non-negative (a negative weight is not a mixture and can make the BRDF
    negative). They need not sum to 1: for an areal mixture they are the fractions and sum to
    1; a scaled surface (``0.5 * s``) is a darker surface of the same shape. What physics
    requires is checked on the result: its directional albedo must lie in [0, 1] on the
    check grid of sun zeniths, else ValueError naming the angle.
    """

    def __init__(self, terms: Iterable[tuple[Any, Surface]]) -> None:
        self.terms: list[tuple[xr.DataArray, Surface]] = []
        for position, (weight, surface) in enumerate(terms):
            if not isinstance(surface, Surface):
                raise TypeError(f"weighted_sum term {position} must be a surface; got "
                                f"{type(surface).__name__}")
            weight_array = _as_parameter(weight, f"weight {position}")
            _check_range(weight_array, f"weight {position}", low=0.0)
            for inner_weight, inner in _terms(surface):
                self.terms.append((weight_array * inner_weight, inner))
        if not self.terms:
            raise ValueError("weighted_sum needs at least one (weight, surface) term")
        self._parameters = {}
        for index, (weight, surface) in enumerate(self.terms):
            self._parameters[f"{index}:weight"] = weight
            for key, value in surface._parameters.items():
                self._parameters[f"{index}:{key}"] = value
        self._zenith_panels = max(s._zenith_panels for _, s in self.terms)
        self._azimuth_panels = max(s._azimuth_panels for _, s in self.terms)
        self.check_energy()

    def _evaluate(self, values: dict[str, np.ndarray], geometry: Geometry) -> np.ndarray:
        total = 0.0
        for index, (_, surface) in enumerate(self.terms):
            prefix = f"{index}:"
            inner = {k[len(prefix):]: v for k, v in values.items()
                     if k.startswith(prefix) and k != f"{prefix}weight"}
            total = total + values[f"{prefix}weight"] * surface._evaluate(inner, geometry)
        return total

    def __repr__(self) -> str:
        return " + ".join(f"{w.values if w.ndim == 0 else 'w'} * {s!r}" for w, s in self.terms)


def weighted_sum(terms: Iterable[tuple[Any, Surface]]) -> Surface:
    """The surface sum_i w_i f_i from ``[(w_1, f_1), (w_2, f_2), ...]``.

    Weights are non-negative scalars or DataArrays; see `WeightedSum` for what they may sum
    to. ``weighted_sum([(0.7, a), (0.3, b)])`` equals ``0.7 * a + 0.3 * b``.
    """
    return WeightedSum(list(terms))


def _angle(value: Any, name: str) -> Any:
    if isinstance(value, xr.DataArray):
        if not np.issubdtype(value.dtype, np.number) or value.dtype == bool:
            raise TypeError(f"{name} must be numeric; got dtype {value.dtype}")
        return value.astype(np.float64)
    if isinstance(value, bool | np.bool_):
        raise TypeError(f"{name} must be numeric; got bool")
    return as_float_array(value, name)


def _check_angles(arrays: dict[str, Any]) -> None:
    limits = {"sun_zenith": (0.0, 90.0, True), "view_zenith": (0.0, 90.0, True),
              "view_azimuth": (-360.0, 360.0, False)}
    for name, value in arrays.items():
        low, high, high_open = limits[name]
        data = value if isinstance(value, xr.DataArray) else xr.DataArray(value)
        _check_range(data, name, low=low, high=high, high_open=high_open)


def _geometry(sun: np.ndarray, view: np.ndarray, azimuth: np.ndarray) -> Geometry:
    """Geometry from angles in degrees."""
    return Geometry(np.cos(np.deg2rad(sun)), np.cos(np.deg2rad(view)),
                    np.cos(np.deg2rad(azimuth)))


def _cosines(value: Any, name: str) -> np.ndarray:
    array = as_float_array(value, name)
    if array.ndim != 1:
        raise ValueError(f"{name} must be 1-d; got shape {array.shape}")
    _check_range(xr.DataArray(array, dims=("cosine",)), name, low=0.0, high=1.0, low_open=True)
    return array
