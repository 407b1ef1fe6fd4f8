"""lamina.geometry.relative_azimuth against vector geometry worked out independently.

The reference builds the directions as unit vectors in an east-north-up frame (x east, y
north, z up; a compass azimuth A clockwise from north is the math angle 90 - A), with no
azimuth arithmetic shared with the function: the scattering angle is the angle between the
beam's propagation vector and the vector from the pixel to the sensor, and lamina's azimuth
is the anticlockwise angle (seen from above) from the horizontal part of the first to that
of the second (atan2 of their cross and dot products). Spherical trigonometry (common
practice) gives the scattering angle from the relative azimuth as
cos(Theta) = -mu mu0 + sin(theta) sin(theta0) cos(phi) for upward light, lamina's formula.
"""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

import lamina
from lamina.geometry import relative_azimuth


def _unit(zenith_degrees, compass_azimuth_degrees):
    """Unit vector (east, north, up) at a zenith angle and a compass azimuth."""
    zenith, azimuth = np.radians(zenith_degrees), np.radians(compass_azimuth_degrees)
    return np.stack([np.sin(zenith) * np.sin(azimuth), np.sin(zenith) * np.cos(azimuth),
                     np.cos(zenith)], axis=-1)


def _reference(sun_zenith, sun_azimuth, view_zenith, view_azimuth):
    """(scattering angle, anticlockwise azimuth of the view from the beam) by vectors."""
    beam = -_unit(sun_zenith, sun_azimuth)           # propagates away from the sun
    seen = _unit(view_zenith, view_azimuth)          # from the pixel to the sensor
    scattering = np.degrees(np.arccos(np.clip(np.sum(beam * seen, axis=-1), -1.0, 1.0)))
    cross = beam[..., 0] * seen[..., 1] - beam[..., 1] * seen[..., 0]
    dot = beam[..., 0] * seen[..., 0] + beam[..., 1] * seen[..., 1]
    return scattering, np.degrees(np.arctan2(cross, dot)) % 360.0


def test_worked_case_the_sensor_on_the_suns_side_sees_the_hot_spot():
    # the sun at zenith 30 due south (azimuth 180), the sensor at zenith 30 due south too:
    # it looks back along the beam, the scattering angle is exactly 180 degrees
    # (backscatter, the hot spot), and lamina's convention puts that side at azimuth 180
    scattering, _ = _reference(30.0, 180.0, 30.0, 180.0)
    assert scattering == pytest.approx(180.0, abs=1e-6)
    assert relative_azimuth(180.0, 180.0) == 180.0
    # the sensor opposite the sun (north, 0) is on the forward side: glint geometry
    scattering, _ = _reference(30.0, 180.0, 30.0, 0.0)
    assert scattering == pytest.approx(120.0, abs=1e-9)   # 180 - 2 x 30
    assert relative_azimuth(180.0, 0.0) == 0.0


def test_relative_azimuth_agrees_with_vector_geometry_everywhere():
    rng = np.random.default_rng(7)
    sun_zenith = rng.uniform(0.0, 85.0, 500)
    view_zenith = rng.uniform(1.0, 80.0, 500)
    sun_azimuth = rng.uniform(-360.0, 720.0, 500)
    view_azimuth = rng.uniform(0.0, 360.0, 500)
    relative = relative_azimuth(sun_azimuth, view_azimuth)
    assert np.all((relative >= 0.0) & (relative < 360.0))
    scattering, anticlockwise = _reference(sun_zenith, sun_azimuth, view_zenith, view_azimuth)
    # the sense: anticlockwise from the beam's propagation, seen from above
    difference = (relative - anticlockwise + 180.0) % 360.0 - 180.0
    np.testing.assert_allclose(difference, 0.0, atol=1e-9)
    # the scattering angle through lamina's formula for upward light
    mu0, mu = np.cos(np.radians(sun_zenith)), np.cos(np.radians(view_zenith))
    cosine = -mu * mu0 + np.sqrt((1 - mu**2) * (1 - mu0**2)) * np.cos(np.radians(relative))
    np.testing.assert_allclose(np.degrees(np.arccos(cosine)), scattering, atol=1e-6)


def test_solve_sees_the_single_scattering_of_the_geometric_scattering_angle():
    # a thin Henyey-Greenstein layer over a black surface reflects single scattering
    # S w P(Theta) mu0 / (4 pi (mu + mu0)) t / (mu mu0) to first order in t (Chandrasekhar
    # 1950); with the azimuth from relative_azimuth the phase function is the one at the
    # vector geometry's scattering angle
    g, tau, albedo = 0.6, 1e-6, 1.0
    atm = lamina.make_atmosphere([tau], [albedo], lamina.phase.henyey_greenstein(g, 64))
    sun_zenith, sun_azimuth, view_zenith, view_azimuth = 40.0, 135.0, 35.0, 250.0
    out = lamina.solve(atm, streams=16, sun_zenith=sun_zenith, surface_albedo=0.0,
                       view_zenith=[view_zenith],
                       view_azimuth=[float(relative_azimuth(sun_azimuth, view_azimuth))])
    scattering, _ = _reference(sun_zenith, sun_azimuth, view_zenith, view_azimuth)
    cosine = np.cos(np.radians(scattering))
    phase = (1 - g**2) / (1 + g**2 - 2 * g * cosine) ** 1.5
    mu = np.cos(np.radians(view_zenith))
    expected = albedo * phase / (4 * np.pi) * tau / mu
    got = float(out.radiance.sel(level=0, direction="up").squeeze())
    assert got == pytest.approx(expected, rel=1e-5)


def test_dataarrays_broadcast_by_name_and_bad_input_is_named():
    sun = xr.DataArray([10.0, 200.0], dims="pixel")
    view = xr.DataArray([190.0, 20.0, 200.0], dims="scan")
    relative = relative_azimuth(sun, view)
    assert relative.dims == ("pixel", "scan")
    assert relative.attrs["units"] == "degree"
    assert float(relative.sel(pixel=1, scan=2)) == 180.0
    assert relative_azimuth(0.0, 1e-14) < 360.0   # never 360 by round-off
    with pytest.raises(TypeError, match="view_azimuth must be numeric"):
        relative_azimuth(10.0, "north")
    with pytest.raises(ValueError, match="sun_azimuth must be finite"):
        relative_azimuth([10.0, np.nan], 0.0)
