"""CF-1.10 encoding of lamina's output Datasets (how they are written, not their values).

* Float coordinates carry no ``_FillValue``: CF forbids it on coordinate variables, and
  xarray adds NaN as the fill value of every float variable unless told not to.
* ``direction`` ("up", "down") is written as a fixed-length character array (a CF string
  label, section 6.1); a variable-length string coordinate breaks CF checkers. xarray reads
  it back as strings.
* ``level`` and ``layer`` are the vertical axis (``axis = "Z"``), numbered downward
  (``positive = "down"``).

The encodings ride on the variables' ``encoding``, so ``Dataset.to_netcdf`` and
:func:`lamina.io.write_netcdf` both honour them.
"""

from __future__ import annotations

import xarray as xr

VERTICAL = {"axis": "Z", "positive": "down"}


def cf_encode(dataset: xr.Dataset) -> xr.Dataset:
    """Set the CF encodings and vertical-axis attributes of an output Dataset (in place)."""
    for name, coordinate in dataset.coords.items():
        if coordinate.dtype.kind == "f":
            coordinate.encoding["_FillValue"] = None
        elif coordinate.dtype.kind in "US" or coordinate.dtype == object:
            coordinate.encoding["dtype"] = "S1"
        if name in ("level", "layer") and name in dataset.dims:
            coordinate.attrs.update(VERTICAL)
    return dataset
