"""The kernel's optional keyword groups refuse half a group and mis-shaped arrays.

The front end always gives a group whole (tested through ``solve`` elsewhere); these
tests reach the kernel's own checks by editing the keywords of a real call on its way in.
"""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

import lamina
from lamina import _kernel

_SOLVE_COLUMNS = _kernel.solve_columns


def _solve_with_edited_keywords(monkeypatch, edit, **options):
    def edited(*args, **kwargs):
        edit(kwargs)
        return _SOLVE_COLUMNS(*args, **kwargs)

    monkeypatch.setattr(_kernel, "solve_columns", edited)
    atm = lamina.make_atmosphere(np.full((2, 2), 0.2), [0.9, 0.8],
                                 lamina.phase.henyey_greenstein(0.5, 8),
                                 extra_dims={"pixel": [0, 1]}, altitude=[10e3, 3e3, 0.0])
    return lamina.solve(atm, streams=4, sun_zenith=30.0, **options)


def test_half_a_group_is_refused(monkeypatch):
    views = dict(view_zenith=xr.DataArray([10.0, 20.0], dims="pixel"), view_azimuth=0.0)
    with pytest.raises(ValueError, match="give column_view_cosines and column_view_azimuths "
                                         "together or neither"):
        _solve_with_edited_keywords(monkeypatch, lambda k: k.pop("column_view_azimuths"),
                                    **views)
    with pytest.raises(ValueError, match="give beam_slant_optical_depth and beam_layer_cosine"):
        _solve_with_edited_keywords(monkeypatch, lambda k: k.pop("beam_layer_cosine"),
                                    planet_radius=6.371e6)


def test_a_mis_shaped_array_is_refused(monkeypatch):
    def cut(kwargs):
        kwargs["beam_layer_cosine"] = np.ascontiguousarray(kwargs["beam_layer_cosine"][:, :, :1])

    with pytest.raises(ValueError, match=r"beam_layer_cosine has shape \(2, 1, 1\), "
                                         r"expected \(2, 1, 2\)"):
        _solve_with_edited_keywords(monkeypatch, cut, planet_radius=6.371e6)
