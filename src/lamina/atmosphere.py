"""Build and check the input Dataset that describes a stack of plane-parallel layers.

Layers are numbered from the top; levels are the ``layer + 1`` boundaries, top first. Any
dims besides ``layer``, ``level``, ``moment`` and ``element`` (``wavelength``, ``column``,
``time``, ...) broadcast through :func:`lamina.solve` and are carried to every output.
"""

from __future__ import annotations

import warnings
from collections.abc import Mapping, Sequence

import numpy as np
import xarray as xr

from lamina._checks import (
    LaminaWarning,
    as_float_array,
    first_bad,
    require_finite,
    require_range,
    where_text,
)
from lamina._units import SI_UNITS, to_si
from lamina.phase import SCATTERING_MATRIX_ELEMENTS

ArrayLike = object

#: Tolerance on chi_0 = 1 and |chi_l| <= 1 (round-off in moments computed elsewhere).
MOMENT_TOLERANCE = 1e-6

_ATTRS = {
    "optical_depth": {
        "units": "1",
        "long_name": "optical thickness of the layer",
    },
    "single_scattering_albedo": {
        "units": "1",
        "long_name": "single-scattering albedo of the layer",
        "standard_name": "single_scattering_albedo_in_air_due_to_ambient_aerosol_particles",
    },
    "phase_moments": {
        "units": "1",
        "long_name": "Legendre coefficients chi_l of the phase function, "
        "P(cos T) = sum_l (2l+1) chi_l P_l(cos T)",
    },
    "temperature": {"units": "K", "long_name": "temperature at the level",
                    "standard_name": "air_temperature"},
    "pressure": {"units": "Pa", "long_name": "pressure at the level",
                 "standard_name": "air_pressure"},
    "altitude": {"units": "m", "long_name": "altitude of the level", "standard_name": "altitude",
                 "positive": "up"},
    "layer": {"units": "1", "long_name": "layer number, counted from the top"},
    "level": {"units": "1", "long_name": "level number (layer boundary), counted from the top"},
    "moment": {"units": "1", "long_name": "Legendre degree l of the phase-function moment"},
    "scattering_matrix_moments": {
        "units": "1",
        "long_name": "coefficients of the scattering matrix in generalized spherical "
        "functions, F11 = sum_l (2l+1) alpha1_l P_l(cos T), F12 = sum_l (2l+1) beta1_l "
        "P^l_02(cos T), ... (lamina.polarization)",
    },
    "element": {"units": "1", "long_name": "expansion coefficient of the scattering matrix"},
}

#: Labels of the ``element`` dim of ``scattering_matrix_moments``.
ELEMENTS = list(SCATTERING_MATRIX_ELEMENTS)
#: Elements that start at l = 2 (P^l_22, P^l_2,-2 and P^l_02 vanish below).
_FROM_SECOND = ("alpha2", "alpha3", "beta1", "beta2")
MATRIX = "scattering_matrix_moments"
# the CF name above is for aerosol; a generic single-scattering albedo has none
del _ATTRS["single_scattering_albedo"]["standard_name"]


def _padded(value: ArrayLike, name: str) -> np.ndarray:
    """A float array from nested sequences; rows of different lengths are padded with zeros.

    Phase moments of different lengths per layer (a Rayleigh layer with 3 beside a cloud with
    128) are common; the missing higher moments of the shorter rows are zero.
    """
    if not isinstance(value, list | tuple) or not value:
        return as_float_array(value, name)
    try:
        return as_float_array(value, name)
    except TypeError:
        parts = [_padded(part, name) for part in value]
    if any(part.ndim == 0 for part in parts) or len({part.ndim for part in parts}) > 1:
        raise TypeError(f"{name} must be numbers nested to one depth; got rows of "
                        f"{sorted({part.ndim for part in parts})} dimensions")
    leading = {part.shape[:-1] for part in parts}
    if len(leading) > 1:
        raise ValueError(f"{name} rows may differ only in their last axis (the moments); "
                         f"got shapes {[part.shape for part in parts]}")
    length = max(part.shape[-1] for part in parts)
    widths = [[(0, 0)] * (part.ndim - 1) + [(0, length - part.shape[-1])] for part in parts]
    return np.stack([np.pad(part, width) for part, width in zip(parts, widths, strict=True)])


def _dim_names(extra_dims: object) -> list[str] | None:
    """The names in ``extra_dims`` (a sequence of names, or a mapping of names to values)."""
    if extra_dims is None:
        return None
    if isinstance(extra_dims, str | bytes):
        raise TypeError(f"extra_dims must be a sequence of dim names or a mapping of names to "
                        f"coordinate values; got the string {extra_dims!r} "
                        f"(write [{extra_dims!r}])")
    if not isinstance(extra_dims, Mapping | Sequence):
        raise TypeError("extra_dims must be a sequence of dim names or a mapping of names to "
                        f"coordinate values; got {type(extra_dims).__name__}")
    names = list(extra_dims)
    for dim in names:
        if not isinstance(dim, str):
            raise TypeError(f"extra_dims must name dims with strings; got {dim!r}")
    return names


def _as_dataarray(
    value: ArrayLike, name: str, core: Sequence[str], extra_dims: Sequence[str] | None
) -> xr.DataArray:
    """Label an array: the trailing axes are ``core``, leading ones ``extra_dims``."""
    if isinstance(value, xr.DataArray):
        missing = [dim for dim in core if dim not in value.dims]
        if missing:
            raise ValueError(
                f"{name} must have the dims {tuple(core)}; it has {value.dims} "
                f"(missing {tuple(missing)})"
            )
        if value.dtype.kind not in "biuf":
            raise TypeError(f"{name} must be real numbers; got values of dtype {value.dtype}")
        data = value.astype(np.float64)
        return data.transpose(..., *core)
    array = _padded(value, name)
    if array.ndim < len(core):
        raise ValueError(
            f"{name} must have at least {len(core)} dimension(s) {tuple(core)}; "
            f"got shape {array.shape}"
        )
    leading = array.ndim - len(core)
    if extra_dims is None:
        names = ["column"] if leading == 1 else [f"dim_{i}" for i in range(leading)]
    else:
        names = list(extra_dims)[-leading:] if leading else []
        if len(names) != leading:
            raise ValueError(
                f"extra_dims names {len(tuple(extra_dims))} dims but {name} has {leading} "
                "leading dims"
            )
    return xr.DataArray(array, dims=(*names, *core))


def _level_variable(value: ArrayLike, name: str, extra_dims: Sequence[str] | None,
                    units: Mapping[str, str]) -> xr.DataArray:
    """A level quantity converted to lamina's SI unit (K, Pa, m) from the units it came in."""
    array = _as_dataarray(value, name, ["level"], extra_dims)
    given = units.get(name)
    carried = value.attrs.get("units") if isinstance(value, xr.DataArray) else None
    if given is not None and carried is not None and given != carried:
        raise ValueError(f"{name} carries the units attribute {carried!r} but units gives "
                         f"{given!r}; give one of them")
    unit = given if given is not None else carried
    if unit is not None:
        if array.chunks is not None:
            array = xr.apply_ufunc(to_si, array, kwargs={"unit": unit, "name": name},
                                   dask="parallelized", output_dtypes=[np.float64])
        else:
            array = array.copy(data=to_si(array.values, unit, name))
    array.attrs = {}
    return array


def _units_mapping(units: object) -> Mapping[str, str]:
    if units is None:
        return {}
    if not isinstance(units, Mapping):
        raise TypeError(f"units must be a mapping such as {{'pressure': 'hPa'}}; got "
                        f"{type(units).__name__}")
    unknown = sorted(set(units) - set(SI_UNITS))
    if unknown:
        raise ValueError(f"units may give the units of {sorted(SI_UNITS)}; got {unknown}")
    return units


def _per_layer(value: ArrayLike, name: str, like: xr.DataArray,
               extra_dims: Sequence[str] | None) -> xr.DataArray:
    """A per-layer quantity; a scalar, or a DataArray without ``layer``, holds for all layers."""
    if isinstance(value, xr.DataArray) and "layer" not in value.dims:
        if value.dtype.kind not in "biuf":
            raise TypeError(f"{name} must be real numbers; got values of dtype {value.dtype}")
        return value.astype(np.float64).broadcast_like(like["layer"]).transpose(..., "layer")
    if not isinstance(value, xr.DataArray) and np.ndim(value) == 0:
        number = as_float_array(value, name)
        return xr.full_like(like, float(number))
    return _as_dataarray(value, name, ["layer"], extra_dims)


def _padded_matrix(value: ArrayLike) -> np.ndarray | list[np.ndarray | None]:
    """Scattering-matrix coefficients from nested sequences, per-layer rows padded.

    A list with one (moment, element) array per layer may have rows of different lengths
    (zeros pad the higher moments, as for ``phase_moments``) and None for a layer that is
    to scatter without polarizing; such a list comes back as a list of rows, anything else
    as one array.
    """
    name = MATRIX
    if not isinstance(value, list | tuple) or not value:
        return as_float_array(value, name)
    if not any(part is None for part in value):
        try:
            return as_float_array(value, name)
        except (TypeError, ValueError):
            pass
    rows = [None if part is None else as_float_array(part, name) for part in value]
    for layer, row in enumerate(rows):
        if row is not None and (row.ndim != 2 or row.shape[-1] != len(ELEMENTS)):
            raise ValueError(f"{name} rows must be (moment, element) arrays with "
                             f"{len(ELEMENTS)} elements {tuple(ELEMENTS)}; layer {layer} has "
                             f"shape {row.shape}")
    return rows


def _matrix_dataarray(value: ArrayLike, extra_dims: Sequence[str] | None,
                      moments: xr.DataArray | None, nlayer: int) -> xr.DataArray:
    """``scattering_matrix_moments`` as (..., layer, moment, element) with element labels.

    None rows of a per-layer list take alpha1 from ``moments`` (and zeros elsewhere).
    """
    name = MATRIX
    if isinstance(value, xr.DataArray):
        missing = [dim for dim in ("moment", "element") if dim not in value.dims]
        if missing:
            raise ValueError(f"{name} must have the dims ('layer', 'moment', 'element') (or "
                             f"('moment', 'element') for every layer); it has {value.dims}")
        if value.dtype.kind not in "biuf":
            raise TypeError(f"{name} must be real numbers; got values of dtype {value.dtype}")
        _check_element_dim(value)
        matrix = value.astype(np.float64)
        if "element" in matrix.coords:
            matrix = matrix.sel(element=ELEMENTS)
        if "layer" not in matrix.dims:
            matrix = matrix.expand_dims(layer=nlayer)
        return matrix.transpose(..., "layer", "moment", "element").drop_vars(
            ["element", "moment", "layer"], errors="ignore")
    array = _padded_matrix(value)
    if isinstance(array, list):
        if len(array) != nlayer:
            raise ValueError(f"{name} has {len(array)} layers but optical_depth has {nlayer}")
        if any(row is None for row in array) and (moments is None or moments.ndim != 2):
            raise ValueError(f"{name} may give None for a layer (scattering without "
                             "polarizing) only beside phase_moments of dims (layer, moment)")
        length = max(moments.sizes["moment"] if moments is not None else 1,
                     *(row.shape[0] for row in array if row is not None))
        rows = []
        for layer, row in enumerate(array):
            padded = np.zeros((length, len(ELEMENTS)))
            if row is None:
                alpha1 = moments.values[layer]
                padded[: alpha1.size, 0] = alpha1
            else:
                padded[: row.shape[0]] = row
            rows.append(padded)
        return xr.DataArray(np.stack(rows), dims=("layer", "moment", "element"))
    if array.ndim < 2 or array.shape[-1] != len(ELEMENTS):
        raise ValueError(f"{name} must have shape (..., layer, moment, element) or (moment, "
                         f"element) with {len(ELEMENTS)} elements {tuple(ELEMENTS)}; got shape "
                         f"{array.shape}")
    if array.ndim == 2:
        return xr.DataArray(np.broadcast_to(array, (nlayer, *array.shape)).copy(),
                            dims=("layer", "moment", "element"))
    leading = array.ndim - 3
    if extra_dims is None:
        names = ["column"] if leading == 1 else [f"dim_{i}" for i in range(leading)]
    else:
        names = list(extra_dims)[-leading:] if leading else []
        if len(names) != leading:
            raise ValueError(f"extra_dims names {len(tuple(extra_dims))} dims but {name} has "
                             f"{leading} leading dims")
    return xr.DataArray(array, dims=(*names, "layer", "moment", "element"))


def _check_element_dim(matrix: xr.DataArray | xr.Dataset) -> None:
    """The element dim must have the six labelled coefficients (labels optional on input)."""
    size = matrix.sizes["element"]
    if size != len(ELEMENTS):
        raise ValueError(f"{MATRIX} must have {len(ELEMENTS)} elements {tuple(ELEMENTS)} on "
                         f"its dim 'element'; got {size}")
    if "element" in matrix.coords:
        labels = [str(label) for label in matrix["element"].values]
        if sorted(labels) != sorted(ELEMENTS):
            raise ValueError(f"{MATRIX} must label its elements {tuple(ELEMENTS)}; got "
                             f"{tuple(labels)}")


def _pad_moments(array: xr.DataArray, length: int) -> xr.DataArray:
    extra = length - array.sizes["moment"]
    return array.pad(moment=(0, extra), constant_values=0.0) if extra > 0 else array


def _with_matrix(moments: xr.DataArray | None,
                 matrix: xr.DataArray) -> tuple[xr.DataArray, xr.DataArray]:
    """phase_moments (from alpha1 when not given) and the matrix, padded to one length."""
    if moments is None:  # a copy: editing one variable must not change the other
        return matrix.isel(element=0).copy(deep=True), matrix
    length = max(moments.sizes["moment"], matrix.sizes["moment"])
    moments, matrix = _pad_moments(moments, length), _pad_moments(matrix, length)
    alpha1 = matrix.isel(element=0)
    if moments.chunks is None and alpha1.chunks is None:
        given, implied = xr.broadcast(moments, alpha1)
        labels = _labels(given)
        difference = np.abs(np.asarray(given.values) - np.asarray(implied.values))
        bad = first_bad(~(difference <= MOMENT_TOLERANCE))
        if bad is not None:
            raise ValueError(
                f"phase_moments must equal the alpha1 of {MATRIX} (or be omitted); "
                f"{where_text(bad, labels)} has {given.values[bad]:g} against "
                f"{implied.values[bad]:g}")
    return moments, matrix


def check_matrix_values(values: np.ndarray, labels: list[str] | None = None) -> None:
    """Scattering-matrix coefficients (..., moment, element) must be finite, alpha1_0 = 1,
    |alpha1_l| <= 1, and alpha2, alpha3, beta1, beta2 zero at l = 0 and 1."""
    require_finite(values, MATRIX, labels)
    alpha1 = values[..., 0]
    bad = first_bad(np.abs(alpha1[..., 0] - 1.0) > MOMENT_TOLERANCE)
    if bad is not None:
        place = where_text(bad, labels) if bad else "the matrix"
        raise ValueError(f"{MATRIX} must start with alpha1_0 = 1 (F11 averaging to 1); {place} "
                         f"has alpha1_0 = {alpha1[..., 0][bad]:g}")
    bad = first_bad(np.abs(alpha1) > 1.0 + MOMENT_TOLERANCE)
    if bad is not None:
        raise ValueError(f"{MATRIX} must satisfy |alpha1_l| <= 1; {where_text(bad, labels)} "
                         f"has {alpha1[bad]:g}")
    low = values[..., :2, [1, 2, 4, 5]]  # alpha2, alpha3, beta1, beta2 at l = 0, 1
    bad = first_bad(np.abs(low) > MOMENT_TOLERANCE)
    if bad is not None:
        element = _FROM_SECOND[bad[-1]]
        place = where_text(bad[:-1], labels)
        raise ValueError(f"{MATRIX} must have {element} = 0 at moments 0 and 1 (the "
                         f"generalized spherical functions of {', '.join(_FROM_SECOND)} start "
                         f"at l = 2); {place} has {low[bad]:g}")


def warn_about_polarized_excess(matrix: xr.DataArray) -> None:
    """LaminaWarning naming the layer and the angle where an element exceeds F11."""
    from lamina.polarization import polarized_excess

    if matrix.chunks is not None:
        return
    found = polarized_excess(np.asarray(matrix.values))
    if found is None:
        return
    index, element, angle, value, f11 = found
    place = where_text(index, [str(dim) for dim in matrix.dims[:-2]])
    warnings.warn(
        f"{MATRIX} of {place} give |{element}| > F11 at a scattering angle of {angle:g} "
        f"degrees ({element} = {value:.4g}, F11 = {f11:.4g}): not a physical scattering matrix "
        "(every |F_ij| <= F11), or a series cut too short", LaminaWarning, stacklevel=3)


def _phase_moments_input(phase_moments: ArrayLike, dims: Sequence[str] | None) -> xr.DataArray:
    if isinstance(phase_moments, xr.DataArray) and "layer" not in phase_moments.dims:
        return _as_dataarray(phase_moments, "phase_moments", ["moment"], dims)
    if not isinstance(phase_moments, xr.DataArray) and np.ndim(_padded(
            phase_moments, "phase_moments")) == 1:
        return _as_dataarray(phase_moments, "phase_moments", ["moment"], None)
    return _as_dataarray(phase_moments, "phase_moments", ["layer", "moment"], dims)


def make_atmosphere(
    optical_depth: ArrayLike,
    single_scattering_albedo: ArrayLike,
    phase_moments: ArrayLike | None = None,
    temperature: ArrayLike | None = None,
    *,
    pressure: ArrayLike | None = None,
    altitude: ArrayLike | None = None,
    extra_dims: Sequence[str] | Mapping[str, ArrayLike] | None = None,
    units: Mapping[str, str] | None = None,
    scattering_matrix_moments: ArrayLike | None = None,
) -> xr.Dataset:
    """Build the input Dataset of a layered atmosphere.

    Parameters
    ----------
    optical_depth : array_like or DataArray, (..., layer)
        Optical thickness of each layer, >= 0, top layer first.
    single_scattering_albedo : float, array_like or DataArray, (..., layer)
        In [0, 1]. A scalar (or a DataArray without a ``layer`` dim) holds for every layer.
    phase_moments : array_like or DataArray, (..., layer, moment) or (moment,)
        Legendre coefficients chi_l with chi_0 = 1 and ``|chi_l| <= 1``; a single (moment,)
        vector applies to every layer. Any length: the solver uses the terms it needs and
        the single-scattering correction uses them all. Rows of different lengths (nested
        lists, or a list of arrays, one per layer) are padded with zeros. May be omitted
        when ``scattering_matrix_moments`` is given (it is then its alpha1), and must equal
        that alpha1 when both are given.
    temperature : array_like or DataArray, (..., level), optional
        Level temperatures (layer + 1 values, top first), for thermal emission; K unless
        ``units`` or the DataArray's ``units`` attribute says otherwise.
    pressure, altitude : array_like or DataArray, (..., level), optional
        Level pressures (increasing downward) and altitudes; pressures give heating rates.
        Pa and m unless ``units`` or a DataArray's ``units`` attribute says otherwise. They
        may vary along the extra dims (one profile per column).
    extra_dims : sequence of str, or mapping of str to array_like, optional
        Names of the leading dims of plain arrays, e.g. ``["wavelength"]``. A mapping also
        gives each dim its coordinate values, e.g. ``{"wavelength": [0.4, 0.5, 0.6]}``, or a
        DataArray whose attributes (units, long_name) the coordinate keeps (or attach them
        later with ``atmosphere.assign_coords(wavelength=...)``).
    units : mapping, optional
        Units of the level inputs given as plain arrays, e.g. ``{"pressure": "hPa"}``.
        Any unit of the right dimension that the pint library knows (Pa, hPa, mbar, mb,
        kPa, bar, atm; K, degC; m, km) is converted to Pa, K and m; anything else is a
        ValueError.
    scattering_matrix_moments : array_like or DataArray, (..., layer, moment, element), optional
        Expansion coefficients of each layer's scattering matrix in generalized spherical
        functions, elements "alpha1", "alpha2", "alpha3", "alpha4", "beta1", "beta2" (a
        DataArray's ``element`` coordinate may give them in any order), normalised so that
        alpha1 is the layer's ``phase_moments`` (alpha1_0 = 1); see :mod:`lamina.polarization`,
        :func:`lamina.phase.rayleigh_matrix` and ``lamina.mie.lognormal_optics(...,
        scattering_matrix=True)``. A (moment, element) array holds for every layer; a list
        of per-layer (moment, element) arrays may differ in length (zeros pad them) and give
        None for a layer that scatters without polarizing (alpha1 from ``phase_moments``,
        the other elements zero). A matrix with an element larger than F11 somewhere
        (``|F12| > F11``, ...) gives a :class:`lamina.LaminaWarning` naming the layer and the
        scattering angle. The scalar solver uses alpha1 (= ``phase_moments``) only.

    Returns
    -------
    xarray.Dataset
        Variables ``optical_depth``, ``single_scattering_albedo``, ``phase_moments`` and the
        optional level variables (in K, Pa and m), with ``units`` and ``long_name``
        attributes.

    Examples
    --------
    >>> import lamina
    >>> atm = lamina.make_atmosphere([0.1, 2.0], [1.0, 0.9], lamina.phase.rayleigh())
    >>> dict(atm.sizes)
    {'layer': 2, 'moment': 3, 'level': 3}
    >>> atm = lamina.make_atmosphere([0.1, 2.0], 0.9, [[1.0, 0.0, 0.1], [1.0, 0.8]],
    ...                              pressure=[100.0, 500.0, 1000.0], units={"pressure": "hPa"})
    >>> atm.pressure.values.tolist(), atm.phase_moments.values[1].tolist()
    ([10000.0, 50000.0, 100000.0], [1.0, 0.8, 0.0])
    """
    dims = _dim_names(extra_dims)
    level_units = _units_mapping(units)
    tau = _as_dataarray(optical_depth, "optical_depth", ["layer"], dims)
    albedo = _per_layer(single_scattering_albedo, "single_scattering_albedo", tau, dims)
    nlayer = tau.sizes["layer"]
    if phase_moments is None and scattering_matrix_moments is None:
        raise TypeError("make_atmosphere needs phase_moments or scattering_matrix_moments")
    moments = None
    if phase_moments is not None:
        moments = _phase_moments_input(phase_moments, dims)
        if "layer" not in moments.dims:
            moments = moments.expand_dims(layer=nlayer).transpose(..., "layer", "moment")
    for name, array in (("single_scattering_albedo", albedo), ("phase_moments", moments)):
        if array is not None and "layer" in array.dims and array.sizes["layer"] != nlayer:
            raise ValueError(
                f"{name} has {array.sizes['layer']} layers but optical_depth has {nlayer}"
            )
    matrix = None
    if scattering_matrix_moments is not None:
        matrix = _matrix_dataarray(scattering_matrix_moments, dims, moments, nlayer)
        if matrix.sizes["layer"] != nlayer:
            raise ValueError(f"{MATRIX} has {matrix.sizes['layer']} layers but optical_depth "
                             f"has {nlayer}")
        moments, matrix = _with_matrix(moments, matrix)
    data = {"optical_depth": tau, "single_scattering_albedo": albedo, "phase_moments": moments}
    if matrix is not None:
        data[MATRIX] = matrix
    for name, value in (("temperature", temperature), ("pressure", pressure),
                        ("altitude", altitude)):
        if value is not None:
            data[name] = _level_variable(value, name, dims, level_units)
    for name in ("temperature", "pressure", "altitude"):
        if name in data and data[name].sizes["level"] != nlayer + 1:
            raise ValueError(
                f"{name} must have one value per level (layers + 1 = {nlayer + 1}); "
                f"got {data[name].sizes['level']}"
            )
    _check_same_coordinates(data)
    try:
        ds = xr.Dataset(data)
    except ValueError as error:
        raise ValueError(f"the atmosphere's arrays have conflicting dims: {error}") from error
    ds = ds.assign_coords(layer=np.arange(nlayer), level=np.arange(nlayer + 1),
                          moment=np.arange(ds.sizes["moment"]))
    if MATRIX in ds:
        ds = ds.assign_coords(element=ELEMENTS)
    ds = _with_extra_coordinates(ds, extra_dims)
    for name in ds.data_vars:
        ds[name].attrs.update(_ATTRS[name])
    for name in ("layer", "level", "moment", "element"):
        if name in ds.coords:
            ds[name].attrs.update(_ATTRS[name])
    ds.attrs["title"] = "lamina atmosphere: layers numbered from the top"
    check_atmosphere(ds)
    if MATRIX in ds:
        warn_about_polarized_excess(ds[MATRIX])
    return ds


def _check_same_coordinates(data: Mapping[str, xr.DataArray | None]) -> None:
    """Refuse inputs labelled with different coordinates (xarray would fill the gaps with NaN)."""
    arrays = {name: array for name, array in data.items() if array is not None}
    first: dict[str, tuple[str, xr.DataArray]] = {}
    for name, array in arrays.items():
        for dim in array.dims:
            if dim not in array.indexes:
                continue
            if dim not in first:
                first[dim] = (name, array[dim])
            elif not array[dim].equals(first[dim][1]):
                raise ValueError(f"{name} and {first[dim][0]} have different {dim!r} "
                                 f"coordinates; give both the same {dim} values")


def _with_extra_coordinates(ds: xr.Dataset, extra_dims: object) -> xr.Dataset:
    if not isinstance(extra_dims, Mapping):
        return ds
    coords = {}
    for dim, values in extra_dims.items():
        if values is None:
            continue
        if dim not in ds.dims:
            raise ValueError(f"extra_dims gives coordinates for {dim!r}, which no input has")
        attrs = dict(values.attrs) if isinstance(values, xr.DataArray | xr.Variable) else {}
        values = np.asarray(values)
        if values.shape != (ds.sizes[dim],):
            raise ValueError(f"extra_dims[{dim!r}] must have one value per {dim} "
                             f"({ds.sizes[dim]}); got shape {values.shape}")
        coords[dim] = (dim, values, attrs)
    return ds.assign_coords(coords)


def check_moment_values(values: np.ndarray, labels: list[str] | None = None) -> None:
    """Phase moments (..., moment) must be finite, start with chi_0 = 1, and |chi_l| <= 1.

    ``labels`` name the axes in messages (the dims of the variable); without them an
    index tuple is given.
    """
    require_range(values, "phase_moments", labels=labels)
    bad = first_bad(np.abs(values[..., 0] - 1.0) > MOMENT_TOLERANCE)
    if bad is not None:
        place = where_text(bad, labels) if bad else "the phase function"
        raise ValueError(f"phase_moments must start with chi_0 = 1; {place} has "
                         f"chi_0 = {values[..., 0][bad]:g}")
    # the two extremes first: no temporary of the moments' size in the common case
    bound = 1.0 + MOMENT_TOLERANCE
    outside = values.size and (values.min() < -bound or values.max() > bound)
    bad = first_bad(np.abs(values) > bound) if outside else None
    if bad is not None:
        raise ValueError(f"phase_moments must satisfy |chi_l| <= 1; {where_text(bad, labels)} "
                         f"has {values[bad]:g}")


def _labels(array: xr.DataArray) -> list[str]:
    return [str(dim) for dim in array.dims]


def check_atmosphere(ds: xr.Dataset) -> None:
    """Check an atmosphere Dataset; raise ValueError naming the variable and the rule.

    The values of dask-backed optical properties and temperatures are not computed here
    (a spectral run larger than memory must stream through in chunks): the solver checks
    them block by block when it computes them, with the same rules. Dims and sizes are
    always checked here.
    """
    if not isinstance(ds, xr.Dataset):
        raise TypeError(f"atmosphere must be an xarray.Dataset; got {type(ds).__name__}")
    for name, dims in (
        ("optical_depth", ("layer",)),
        ("single_scattering_albedo", ("layer",)),
        ("phase_moments", ("layer", "moment")),
    ):
        if name not in ds:
            raise ValueError(f"atmosphere lacks the variable {name!r} (dims {dims})")
        missing = [dim for dim in dims if dim not in ds[name].dims]
        if missing:
            raise ValueError(f"atmosphere variable {name} must have dims {dims}; "
                             f"it has {ds[name].dims}")
    if ds.sizes["layer"] < 1:
        raise ValueError("atmosphere must have at least one layer")
    if ds.sizes["moment"] < 1:
        raise ValueError("phase_moments must have at least one moment (chi_0 = 1)")
    nlevel = ds.sizes["layer"] + 1
    for name in ("temperature", "pressure", "altitude"):
        if name in ds:
            if "level" not in ds[name].dims:
                raise ValueError(f"atmosphere variable {name} must have the dim 'level'")
            if ds[name].sizes["level"] != nlevel:
                raise ValueError(
                    f"{name} must have one value per level (layers + 1 = {nlevel}); "
                    f"got {ds[name].sizes['level']}"
                )
    tau = ds["optical_depth"]
    if tau.chunks is None:
        require_range(np.asarray(tau.values), "optical_depth", 0.0, labels=_labels(tau))
    albedo = ds["single_scattering_albedo"]
    if albedo.chunks is None:
        require_range(np.asarray(albedo.values), "single_scattering_albedo", 0.0, 1.0,
                      labels=_labels(albedo))
    if MATRIX in ds:  # before phase_moments, which usually come from its alpha1
        _check_matrix_variable(ds)
    moments = ds["phase_moments"].transpose(..., "moment")
    if moments.chunks is None:
        check_moment_values(np.asarray(moments.values), _labels(moments))
    if "temperature" in ds and ds["temperature"].chunks is None:
        temp = ds["temperature"]
        require_range(np.asarray(temp.values), "temperature", 0.0, labels=_labels(temp))
    if "pressure" in ds:
        pressure = np.asarray(ds["pressure"].values)
        require_range(pressure, "pressure", 0.0, labels=_labels(ds["pressure"]))
        steps = np.diff(pressure, axis=-1)
        bad = first_bad(steps <= 0)
        if bad is not None:
            raise ValueError(
                "pressure must increase downward (levels are numbered from the top); "
                f"level {bad[-1] + 1} has {pressure[..., bad[-1] + 1].ravel()[0]:g} Pa after "
                f"{pressure[..., bad[-1]].ravel()[0]:g} Pa"
            )
    if "altitude" in ds:
        require_range(np.asarray(ds["altitude"].values), "altitude",
                      labels=_labels(ds["altitude"]))


def _check_matrix_variable(ds: xr.Dataset) -> None:
    """Dims, labels and (in memory) values of ``scattering_matrix_moments``, and alpha1 equal
    to ``phase_moments``."""
    matrix = ds[MATRIX]
    dims = ("layer", "moment", "element")
    if any(dim not in matrix.dims for dim in dims):
        raise ValueError(f"atmosphere variable {MATRIX} must have dims {dims}; it has "
                         f"{matrix.dims}")
    _check_element_dim(matrix)
    if "element" in matrix.coords:
        matrix = matrix.sel(element=ELEMENTS)
    matrix = matrix.transpose(..., "moment", "element")
    if matrix.chunks is not None:
        return
    check_matrix_values(np.asarray(matrix.values), _labels(matrix))
    moments = ds["phase_moments"]
    if moments.chunks is None:
        given, implied = xr.broadcast(moments, matrix.isel(element=0, drop=True))
        given = given.transpose(*implied.dims)
        difference = np.abs(np.asarray(given.values) - np.asarray(implied.values))
        bad = first_bad(~(difference <= MOMENT_TOLERANCE))
        if bad is not None:
            raise ValueError(f"phase_moments must equal the alpha1 of {MATRIX}; "
                             f"{where_text(bad, _labels(implied))} has {given.values[bad]:g} "
                             f"against {implied.values[bad]:g}")
