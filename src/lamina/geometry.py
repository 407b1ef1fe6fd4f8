"""Sun and sensor geometry of satellite products in lamina's terms.

Satellite products (level-1 and level-2 files of imagers and spectrometers) give, per pixel,
the solar and the viewing zenith and azimuth angles. Their azimuths are compass azimuths,
measured at the pixel clockwise from north seen from above (north 0, east 90), and they
point *away from the pixel*: the solar azimuth is the direction from the pixel to the sun,
the sensor (viewing) azimuth the direction from the pixel to the sensor. Products differ on
the second one (some give the line of sight from the sensor to the pixel, 180 degrees
away): check the product's documentation and add 180 to such an azimuth first.

lamina's ``view_azimuth`` is the azimuth of the propagation direction measured from the
azimuth of the incident beam's propagation, anticlockwise seen from above (0 the forward-
scattering side, 180 the backscattering side; see the conventions page of the guide). The
beam propagates away from the sun (compass azimuth a_sun + 180), the light a sensor sees
propagates from the pixel to the sensor (compass azimuth a_sensor), and a compass azimuth
runs clockwise, hence

    view_azimuth = (a_sun + 180 - a_sensor) mod 360

A sensor on the sun's side (a_sensor = a_sun) looks at the backscattering side (180); with
equal zeniths it sees the hot spot. Scalar radiances depend on cos(view_azimuth) only, so
the sense matters only for the signs of the Stokes parameters U and V.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from lamina._checks import as_float_array, require_finite

__all__ = ["relative_azimuth"]


def relative_azimuth(sun_azimuth: object, view_azimuth: object) -> object:
    """lamina's relative azimuth from the solar and sensor azimuths of a satellite product.

    Parameters
    ----------
    sun_azimuth : float, array or DataArray
        Compass azimuth (degrees, clockwise from north) of the direction from the pixel to
        the sun.
    view_azimuth : float, array or DataArray
        Compass azimuth (degrees, clockwise from north) of the direction from the pixel to
        the sensor (not the sensor's line of sight to the pixel, which is 180 degrees
        away).

    Returns
    -------
    float, numpy.ndarray or xarray.DataArray
        ``(sun_azimuth + 180 - view_azimuth) mod 360`` in [0, 360): the azimuth of the light
        reaching the sensor, measured anticlockwise from that of the beam's propagation
        (0 forward-scattering side, 180 backscattering), as :func:`lamina.solve` takes it
        in ``view_azimuth`` (with ``direction="up"`` at the top for a sensor above). Arrays
        broadcast (DataArrays by dim name); a DataArray result is one view per pixel for
        ``solve``.

    Examples
    --------
    The sun in the south-east (135) and the sensor to the west (270) of the pixel:

    >>> from lamina.geometry import relative_azimuth
    >>> float(relative_azimuth(135.0, 270.0))
    45.0
    >>> float(relative_azimuth(200.0, 200.0))   # sensor on the sun's side: backscatter
    180.0
    """
    given = []
    for name, value in (("sun_azimuth", sun_azimuth), ("view_azimuth", view_azimuth)):
        if isinstance(value, xr.DataArray):
            if value.dtype.kind not in "biuf":
                raise TypeError(f"{name} must be real numbers (degrees); got dtype "
                                f"{value.dtype}")
            if value.chunks is None:
                require_finite(np.asarray(value.values), name)
            given.append(value.astype(np.float64))
        else:
            array = as_float_array(value, name)
            require_finite(array, name)
            given.append(array)
    sun, view = given
    relative = (sun + 180.0 - view) % 360.0
    # a tiny negative difference gives exactly 360.0 in floating point
    relative = relative - 360.0 * (relative >= 360.0)
    if isinstance(relative, xr.DataArray):
        relative.attrs = {"long_name": "azimuth of propagation from that of the incident "
                                       "beam (0 = forward side)", "units": "degree"}
        return relative
    return relative[()] if np.ndim(relative) == 0 else relative
