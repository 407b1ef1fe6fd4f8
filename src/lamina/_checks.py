"""Input checks shared by the public functions.

Every check names the argument, states the rule and shows the first offending value with
its index, so that a message reads like "single_scattering_albedo must lie in [0, 1];
layer 3 has 1.2".
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np


def _is_complex(value: object) -> bool:
    if isinstance(value, complex | np.complexfloating):
        return True
    dtype = getattr(value, "dtype", None)
    if dtype is not None:
        return np.dtype(dtype).kind == "c"
    if isinstance(value, list | tuple):
        try:
            return np.asarray(value).dtype.kind == "c"
        except (TypeError, ValueError):  # ragged or mixed: the float conversion reports it
            return False
    return False


def as_float_array(value: object, name: str) -> np.ndarray:
    """Coerce to a C-contiguous float64 array, refusing non-numeric input."""
    if isinstance(value, str | bytes):
        raise TypeError(f"{name} must be numeric; got the string {value!r}")
    if _is_complex(value):  # numpy would drop the imaginary parts with a warning
        raise TypeError(f"{name} must be real numbers; got complex values")
    try:
        array = np.asarray(value, dtype=np.float64)
    except (TypeError, ValueError) as error:
        raise TypeError(f"{name} must be numeric; got {type(value).__name__}") from error
    # np.ascontiguousarray would turn a 0-d array into a 1-d one
    return np.require(array, requirements="C")


def number_text(value: float) -> str:
    """A bad value as it would be typed: the shortest text that reads back to the same float.

    ``repr`` of a Python float round-trips exactly, so 1.0000001 is shown as 1.0000001 (not
    as ``:g`` would, 1), and a value just outside a bound can be told from the bound; a
    whole number drops the ".0" (``90``, ``-1``).

    Examples
    --------
    >>> number_text(1.0000001), number_text(90.0), number_text(1 + 2**-52)
    ('1.0000001', '90', '1.0000000000000002')
    """
    text = repr(float(value))
    return text[:-2] if text.endswith(".0") else text


def where_text(index: tuple[int, ...], labels: Sequence[str] | None) -> str:
    """Where a bad value sits, for messages: "wavelength 3, layer 0" or "index (3, 0)"."""
    if not index:
        return "the value"
    if labels is None:
        return f"index {tuple(int(i) for i in index)}"
    parts = [f"{label} {int(i)}" for label, i in zip(labels, index, strict=False)]
    return ", ".join(parts)


def first_bad(mask: np.ndarray) -> tuple[int, ...] | None:
    """Index of the first True entry of ``mask``, or None."""
    if not np.any(mask):
        return None
    return tuple(int(i) for i in np.argwhere(mask)[0])


def require_finite(array: np.ndarray, name: str, labels: Sequence[str] | None = None) -> None:
    bad = first_bad(~np.isfinite(array))
    if bad is not None:
        raise ValueError(
            f"{name} must be finite; {where_text(bad, labels)} has {array[bad] if bad else array}"
        )


def require_range(
    array: np.ndarray,
    name: str,
    low: float | None = None,
    high: float | None = None,
    *,
    low_open: bool = False,
    high_open: bool = False,
    labels: Sequence[str] | None = None,
) -> None:
    """Values must be finite and lie in the stated interval."""
    array = np.asarray(array)
    if array.size and array.dtype.kind == "f":
        # the common case in two reductions (NaN and infinities fail it: the search below
        # finds and names the first bad value)
        lowest, highest = float(array.min()), float(array.max())
        if (np.isfinite(lowest) and np.isfinite(highest)
                and (low is None or (lowest > low if low_open else lowest >= low))
                and (high is None or (highest < high if high_open else highest <= high))):
            return
    require_finite(array, name, labels)
    bad_mask = np.zeros(array.shape, dtype=bool)
    if low is not None:
        bad_mask |= (array <= low) if low_open else (array < low)
    if high is not None:
        bad_mask |= (array >= high) if high_open else (array > high)
    bad = first_bad(bad_mask)
    if bad is not None:
        left = "(" if low_open else "["
        right = ")" if high_open else "]"
        low_text = "-inf" if low is None else f"{low:g}"
        high_text = "inf" if high is None else f"{high:g}"
        value = array[bad] if bad else array
        raise ValueError(
            f"{name} must lie in {left}{low_text}, {high_text}{right}; "
            f"{where_text(bad, labels)} has {number_text(value)}"
        )


class LaminaWarning(UserWarning):
    """A warning of lamina's: the inputs are valid but the result may not be what was meant.

    Filter lamina's warnings alone with ``warnings.simplefilter("error", lamina.LaminaWarning)``
    (or ``"ignore"``).
    """
