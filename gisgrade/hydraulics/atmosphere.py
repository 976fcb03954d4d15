"""Atmospheric pressure at the pipe, to turn gauge pressure into absolute.

Gauge pressure (what the grade lines give, p = rho g (HGL - z)) is relative
to the atmosphere around the pipe; absolute pressure is gauge plus that
atmospheric pressure. Water boils (the column separates) where the absolute
pressure falls to the water's vapour pressure.

References
----------
.. [1] ISO 2533:1975, "Standard Atmosphere" (troposphere: temperature
   288.15 K at sea level falling 6.5 K/km, sea-level pressure 101 325 Pa).
.. [2] NOAA, NASA, USAF, "U.S. Standard Atmosphere, 1976", NOAA-S/T 76-1562,
   Washington, D.C., 1976 (identical to [1] below 32 km).
"""

from __future__ import annotations

import numpy as np

from gisgrade.hydraulics.friction import _out

#: Sea-level standard pressure [Pa] [1][2].
P0 = 101325.0
#: Temperature lapse rate over sea-level temperature, 0.0065 K/m / 288.15 K [1/m].
_LAPSE_OVER_T0 = 2.25577e-5
#: g0 M / (R L) of the troposphere, 9.80665 x 0.0289644 / (8.31432 x 0.0065) [-].
_EXPONENT = 5.25588


def atmospheric_pressure(elevation):
    """Standard-atmosphere pressure at an elevation, ISO 2533 [1] / US 1976 [2].

    p = 101325 (1 - 2.25577e-5 z)^5.25588 Pa, the troposphere (z up to
    11 km) of the standard atmosphere. Elevations of a project's DEM are
    taken as heights above mean sea level; the weather moves the real
    pressure by a few percent around this value.

    Parameters
    ----------
    elevation : float or array
        Elevation above mean sea level [m], below 11 000 m.

    Returns
    -------
    p : float or array
        Atmospheric pressure [Pa].

    Examples
    --------
    >>> float(atmospheric_pressure(0.0))
    101325.0
    >>> round(float(atmospheric_pressure(1000.0)))
    89875
    """
    z = np.asarray(elevation, dtype=float)
    return _out(P0 * (1.0 - _LAPSE_OVER_T0 * z) ** _EXPONENT)


def vapour_floor(elevation, temperature):
    """The lowest gauge pressure water can hold at an elevation [Pa]: the
    vapour pressure of water at ``temperature`` less the standard
    atmosphere there [1][2]. Below it the water boils and the column
    separates, so a computed gauge pressure under this floor is not a
    pressure the line can have (the grade line there is not reachable).

    Parameters
    ----------
    elevation : float or array
        Elevation above mean sea level [m].
    temperature : float
        Water temperature [K].

    Returns
    -------
    p : float or array
        Gauge pressure [Pa], negative.

    Examples
    --------
    >>> round(float(vapour_floor(0.0, 288.15)))
    -99619
    """
    from .water import vapour_pressure

    return _out(float(vapour_pressure(temperature)) - atmospheric_pressure(elevation))
