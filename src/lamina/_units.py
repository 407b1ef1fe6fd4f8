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
        hint = ""
        for spelling in _SPELLINGS.get(name, ()):
            if spelling.lower() == unit.strip().lower():
                hint = f" (did you mean {spelling!r}?)"
        raise ValueError(f"{name} has units {unit!r}, which are not a known unit"
                         f"{hint}") from error


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


# the common spellings, for a did-you-mean on a miscapitalised unit
_SPELLINGS = {
    "pressure": ("Pa", "hPa", "mbar", "mb", "kPa", "bar", "atm"),
    "temperature": ("K", "degC"),
    "altitude": ("m", "km", "ft"),
    "sun_irradiance": (),
}

_EXAMPLES = {
    "pressure": "Pa, hPa, mbar, mb, kPa, bar or atm",
    "temperature": "K or degC",
    "altitude": "m or km",
}


class OutputUnits:
    """The units of lamina's outputs, as they follow from the sources a run was given.

    Attributes
    ----------
    flux, radiance, heating_rate : str
        UDUNITS strings (valid CF units) for fluxes, radiances and mean intensity, and
        heating rates.
    note : str or None
        How to read them, when they are relative to an input without units.
    """

    def __init__(self, flux: str, note: str | None = None):
        self.flux = flux
        self.note = note
        self.radiance = _per_steradian(flux)
        self.heating_rate = _heating(flux)

    def __repr__(self) -> str:
        return (f"OutputUnits(flux={self.flux!r}, radiance={self.radiance!r}, "
                f"heating_rate={self.heating_rate!r})")


def _per_steradian(flux: str) -> str:
    if flux == "1":
        return "sr-1"
    if flux == "sr":
        return "1"
    if flux.startswith("W m-2"):
        return "W m-2 sr-1" + flux[len("W m-2"):]
    return f"{flux} sr-1"


def _heating(flux: str) -> str:
    # dT/dt = (g / c_p) dF/dp: K day-1 for fluxes in W m-2, times whatever else F carries
    # (per nm, per cm-1, or per unit of an irradiance without units)
    if flux.startswith("W m-2"):
        return "K day-1" + flux[len("W m-2"):]
    if flux == "1":
        return "K day-1 m2 W-1"
    return f"K day-1 m2 W-1 {flux}"


def _strip_per_steradian(unit: str) -> str | None:
    unit = unit.strip()
    for suffix in (" sr-1", " sr^-1", "/sr"):
        if unit.endswith(suffix):
            return unit[: -len(suffix)].strip()
    return None


def output_units(beam: bool, irradiance_units: str | None, thermal_flux_units: str | None,
                 top_radiance_units: str | None = None) -> OutputUnits:
    """Units of the fluxes, radiances and heating rates of one run.

    Parameters
    ----------
    beam : bool
        Whether the run has a stellar beam.
    irradiance_units : str or None
        The ``units`` attribute of ``sun_irradiance``, if it has one.
    thermal_flux_units : str or None
        "W m-2" for a band-integrated thermal source, "W m-2 cm" for a monochromatic one
        (per cm-1), None without thermal emission.
    top_radiance_units : str or None
        The ``units`` attribute of ``top_diffuse_radiance``, if it has one.

    Returns
    -------
    OutputUnits
        Fluxes in the irradiance's units (or in units of the irradiance, "1", when it has
        none); with thermal emission, in the thermal source's units, which an irradiance
        with units must then share.
    """
    if thermal_flux_units is not None:
        if beam and irradiance_units is not None and not _same(irradiance_units,
                                                               thermal_flux_units):
            raise ValueError(
                f"sun_irradiance is in {irradiance_units!r} but the thermal source gives "
                f"fluxes in {thermal_flux_units!r}: both sources must be in the same units")
        note = None
        if beam and irradiance_units is None:
            note = (f"sun_irradiance has no units attribute and is taken to be in "
                    f"{thermal_flux_units}, the units of the thermal source")
        return OutputUnits(thermal_flux_units, note)
    if beam:
        if irradiance_units is not None:
            return OutputUnits(irradiance_units.strip())
        return OutputUnits("1", "fluxes relative to sun_irradiance (flux per unit of "
                                "irradiance normal to the beam), radiances per sr of it")
    if top_radiance_units is not None:
        flux = _strip_per_steradian(top_radiance_units)
        if flux is not None:
            return OutputUnits(flux)
    return OutputUnits("sr", "fluxes relative to top_diffuse_radiance (flux per unit of "
                             "radiance), radiances relative to it")


def _same(first: str, second: str) -> bool:
    if first.strip() == second.strip():
        return True
    try:
        ratio = (_registry().Quantity(1.0, _parse(first, "sun_irradiance"))
                 / _registry().Quantity(1.0, _parse(second, "sun_irradiance")))
        return bool(ratio.dimensionless and abs(ratio.to("").magnitude - 1.0) < 1e-12)
    except Exception:
        return False
