"""The TOML table reader of scenario files: typed, range-checked values and did-you-mean errors.

The bottom module of :mod:`lamina.scenario`: every other part reads its section through a
:class:`_Table`, which knows the file and the key path and raises :class:`ScenarioError` with
both in the message. Nothing here knows what a scenario means.
"""

from __future__ import annotations

import difflib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from lamina._units import SI_UNITS, to_si

# Conversion factors of wavelengths to micrometres. Pressures, temperatures and altitudes
# are converted to Pa, K and m by lamina._units (the pint library), as in make_atmosphere.
_UNITS: dict[str, dict[str, float]] = {
    "wavelength": {"nm": 1e-3, "um": 1.0, "micrometre": 1.0, "micrometer": 1.0, "m": 1e6},
}

_REQUIRED = object()


class ScenarioError(ValueError):
    """A scenario file that cannot be read or does not describe a valid run.

    The message names the file, the key path (e.g. ``[sun] zenith``) and what was expected.
    """


def _describe(value: Any) -> str:
    """Short description of a TOML value for error messages."""
    if isinstance(value, bool):
        return f"{str(value).lower()} (a boolean)"
    if isinstance(value, str):
        return f"{value!r} (a string)"
    if isinstance(value, Mapping):
        return "a table"
    if isinstance(value, list):
        text = repr(value)
        return text if len(text) <= 60 else text[:57] + "..."
    return repr(value)


def _is_number(value: Any) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool)


@dataclass
class _Table:
    """A TOML table being validated: knows the file and its own key path."""

    file: Path
    label: str  # e.g. "[sun]" or '[atmosphere.constituent #2 "haze"]'
    data: Mapping[str, Any]
    prefix: str = ""  # for inline tables: "phase."

    def where(self, key: str) -> str:
        return f"{self.file}: {self.label} {self.prefix}{key}"

    def error(self, key: str, expected: str, got: Any = _REQUIRED) -> ScenarioError:
        text = f"{self.where(key)}: expected {expected}"
        if got is not _REQUIRED:
            text += f"; got {_describe(got)}"
        return ScenarioError(text)

    def check_keys(self, allowed: Sequence[str]) -> None:
        for key in self.data:
            if key not in allowed:
                close = difflib.get_close_matches(key, allowed, n=1, cutoff=0.6)
                hint = f"; did you mean {close[0]!r}?" if close else ""
                raise ScenarioError(
                    f"{self.file}: {self.label} unknown key '{self.prefix}{key}'{hint} "
                    f"(valid keys: {', '.join(allowed)})"
                )

    def has(self, key: str) -> bool:
        return key in self.data

    def raw(self, key: str, default: Any = _REQUIRED, expected: str = "a value") -> Any:
        if key in self.data:
            return self.data[key]
        if default is _REQUIRED:
            raise ScenarioError(f"{self.file}: {self.label} missing required key "
                                f"'{self.prefix}{key}' (expected {expected})")
        return default

    def sub(self, key: str, expected: str = "a table") -> _Table:
        value = self.raw(key, expected=expected)
        if not isinstance(value, Mapping):
            raise self.error(key, expected, value)
        return _Table(self.file, self.label, value, prefix=f"{self.prefix}{key}.")

    def boolean(self, key: str, default: Any = _REQUIRED) -> bool:
        value = self.raw(key, default, "true or false")
        if not isinstance(value, bool):
            raise self.error(key, "true or false", value)
        return value

    def string(self, key: str, default: Any = _REQUIRED, choices: Sequence[str] = ()) -> str:
        expected = f"one of {', '.join(map(repr, choices))}" if choices else "a string"
        value = self.raw(key, default, expected)
        if key not in self.data:
            return value
        if not isinstance(value, str):
            raise self.error(key, expected, value)
        if choices and value not in choices:
            close = difflib.get_close_matches(value, choices, n=1, cutoff=0.6)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            raise ScenarioError(f"{self.where(key)}: expected {expected}; got {value!r}{hint}")
        return value

    def integer(self, key: str, default: Any = _REQUIRED, minimum: int = 0,
                even: bool = False) -> int:
        expected = f"{'an even' if even else 'an'} integer >= {minimum}"
        value = self.raw(key, default, expected)
        if (not isinstance(value, int) or isinstance(value, bool) or value < minimum
                or (even and value % 2)):
            raise self.error(key, expected, value)
        return value

    def numbers(self, key: str, default: Any = _REQUIRED, *, what: str = "a number",
                low: float | None = None, high: float | None = None,
                low_open: bool = False, high_open: bool = False,
                scalar: bool = True, vector: bool = True, length: int | None = None,
                length_of: str = "", quantity: str | None = None) -> np.ndarray:
        """A number or list of numbers, range-checked, optionally with a ``units`` table.

        Returns a float64 array (0-d for a scalar).
        """
        rng = ""
        if low is not None or high is not None:
            lo = "-inf" if low is None else f"{low:g}"
            hi = "inf" if high is None else f"{high:g}"
            rng = f" in {'(' if low_open else '['}{lo}, {hi}{')' if high_open else ']'}"
        forms = []
        if scalar:
            forms.append("a number")
        if vector:
            forms.append(f"a list of {length} numbers{length_of}" if length is not None
                         else "a list of numbers")
        expected = f"{what}{rng} as {' or '.join(forms)}"
        value = self.raw(key, default, expected)
        if value is default and default is not _REQUIRED:
            return value
        factor, units = 1.0, None
        if quantity is not None and isinstance(value, Mapping):
            table = self.sub(key)
            table.check_keys(["values", "units"])
            if quantity in SI_UNITS:
                units = table.string("units")
            else:
                units = table.string("units", choices=tuple(_UNITS[quantity]))
                factor = _UNITS[quantity][units]
            value = table.raw("values", expected=expected)
        if _is_number(value) and scalar:
            array = np.asarray(float(value))
        elif (isinstance(value, list) and vector and value
              and all(_is_number(item) for item in value)):
            array = np.asarray(value, dtype=float)
            if length is not None and array.size != length:
                raise ScenarioError(f"{self.where(key)}: expected {expected}; got "
                                    f"{array.size} number{'s' if array.size != 1 else ''}")
        else:
            raise self.error(key, expected, value)
        given = array
        if quantity in SI_UNITS and units is not None:
            try:
                array = to_si(array, units, quantity)
            except ValueError as error:
                raise ScenarioError(f"{self.where(key)}.units: {error}") from None
        else:
            array = array * factor
        bad = ~np.isfinite(array)
        if low is not None:
            bad |= (array <= low) if low_open else (array < low)
        if high is not None:
            bad |= (array >= high) if high_open else (array > high)
        if np.any(bad):
            first = float(np.ravel(given)[np.flatnonzero(np.ravel(bad))[0]])
            raise ScenarioError(f"{self.where(key)}: expected {expected}; got {first:g}")
        return array


def _per_layer(table: _Table, key: str, n_layers: int, default: Any = _REQUIRED,
               **kwargs: Any) -> np.ndarray:
    """A number (the same in every layer) or one number per layer."""
    values = table.numbers(key, default, length=n_layers, length_of=" (one per layer)",
                           **kwargs)
    return np.broadcast_to(values, (n_layers,)).astype(float)

