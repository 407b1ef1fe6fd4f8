"""Unit conversion of input quantities, through the pint library.

lamina computes in SI: pressures in Pa, temperatures in K, altitudes in m. Inputs may come in
any unit pint knows for the right physical dimension (hPa, mbar, kPa, bar, atm; degC; km, ft)
and are converted once, here, before any check or computation. A unit of the wrong dimension,
or one pint does not know, is refused with a ValueError that names the argument.

One spelling is read differently from pint's default: "mb" is the millibar of meteorology
(pint would read it as a millibarn, an area).
"""

from __future__ import annotations

import functools

import numpy as np

#: The unit lamina computes in, per input quantity, and the dimension it must have.
SI_UNITS = {"pressure": "Pa", "temperature": "K", "altitude": "m"}

# spellings that mean something else to pint than to an atmosphere modeller
_ALIASES = {"mb": "mbar", "millibars": "mbar", "Celsius": "degC", "celsius": "degC"}


@functools.cache
def _registry():
    # importing pint and building its registry takes a noticeable fraction of a second:
    # only runs that give units pay for it
    import pint

    return pint.UnitRegistry()


def _parse(unit: str, name: str):
    registry = _registry()
    try:
        return registry.Unit(_ALIASES.get(unit.strip(), unit.strip()))
    except Exception as error:   # pint raises several error types for unknown or bad text
        raise ValueError(f"{name} has units {unit!r}, which are not a known unit") from error


def to_si(values: np.ndarray, unit: object, name: str) -> np.ndarray:
    """Convert ``values`` of the quantity ``name`` from ``unit`` to lamina's SI unit.

    ``unit`` None means the values are already in the SI unit.
    """
    target = SI_UNITS[name]
    if unit is None:
        return values
    if not isinstance(unit, str):
        raise TypeError(f"the units of {name} must be a string such as {target!r}; "
                        f"got {type(unit).__name__}")
    if unit.strip() == target:
        return values
    source = _parse(unit, name)
    wanted = _registry().Unit(target)
    if source.dimensionality != wanted.dimensionality:
        raise ValueError(
            f"{name} has units {unit!r}, which are not a {name} unit (expected a unit "
            f"convertible to {target}, such as {_EXAMPLES[name]})"
        )
    quantity = _registry().Quantity(np.asarray(values, dtype=np.float64), source)
    return np.asarray(quantity.to(wanted).magnitude, dtype=np.float64)


_EXAMPLES = {
    "pressure": "Pa, hPa, mbar, mb, kPa, bar or atm",
    "temperature": "K or degC",
    "altitude": "m or km",
}
