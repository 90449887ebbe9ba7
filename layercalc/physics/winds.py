"""Wind direction and speed <-> eastward and northward components.

Meteorological convention, as used in WMO observation codes and radiosonde reports: the
direction is the one the wind blows FROM, in degrees clockwise from true north; u is the
component towards the east and v the component towards the north.

References
----------
WMO, Manual on Codes, WMO-No. 306, Volume I.1 (code table 0877 for dd: direction from
which the wind is blowing, 36 = north, 00 = calm; from memory, not re-read while writing)
and WMO, Guide to Instruments and Methods of Observation, WMO-No. 8, chapter on surface
wind (direction "from which the wind blows", clockwise from true north; from memory).
"""

import numpy as np

__all__ = ["wind_components", "wind_direction_and_speed"]

# Direction reported for a wind from true north [deg]. WMO code table 0877 codes north
# as 36 (360 deg) and keeps 00 for calm, so a non-calm wind never gets 0 (from memory).
NORTH_DIRECTION_DEG = 360.0

# Direction reported for a calm wind [deg]: 0, WMO code table 0877 "00 = calm".
CALM_DIRECTION_DEG = 0.0


def wind_components(direction_from, speed):
    """Eastward and northward wind components from direction (from which) and speed.

    u = -speed * sin(direction_from)
    v = -speed * cos(direction_from)

    Parameters
    ----------
    direction_from : array_like
        Direction the wind blows FROM, clockwise from true north (0 or 360 = from
        north, 90 = from east). [deg]
    speed : array_like
        Wind speed, >= 0. [m/s]

    Returns
    -------
    u, v : numpy.ndarray
        Eastward and northward components, broadcast shape of the inputs. [m/s]

    References
    ----------
    WMO-No. 306 (Manual on Codes) and WMO-No. 8 wind direction convention; see the
    module docstring.
    """
    direction_rad = np.deg2rad(np.asarray(direction_from, dtype=float))
    speed = np.asarray(speed, dtype=float)
    u = -speed * np.sin(direction_rad)
    v = -speed * np.cos(direction_rad)
    return u, v


def wind_direction_and_speed(u, v, calm_speed=0.0, calm_direction=CALM_DIRECTION_DEG):
    """Direction (from which) and speed from eastward and northward components.

    speed = sqrt(u**2 + v**2)
    direction_from = atan2(-u, -v) in degrees, mapped into (0, 360]

    A wind from true north is returned as 360, never 0, and a calm wind (speed <=
    calm_speed) gets ``calm_direction``: 0 by default, as in WMO code table 0877
    (36 = north, 00 = calm). Pass ``calm_direction=numpy.nan`` for a direction that is
    undefined when calm.

    Parameters
    ----------
    u, v : array_like
        Eastward and northward components. [m/s]
    calm_speed : float, optional
        Speeds at or below this are calm; 0 means only an exactly zero vector. [m/s]
    calm_direction : float, optional
        Direction given to calm winds; 0 (default) or numpy.nan. [deg]

    Returns
    -------
    direction_from, speed : numpy.ndarray
        Direction the wind blows FROM, clockwise from true north, in (0, 360] or
        ``calm_direction`` [deg]; speed >= 0 [m/s].

    References
    ----------
    Inverse of ``wind_components``; WMO-No. 306 code table 0877 for north = 360 and
    calm = 0 (from memory).
    """
    u = np.asarray(u, dtype=float)
    v = np.asarray(v, dtype=float)
    speed = np.hypot(u, v)
    direction_from = np.mod(np.rad2deg(np.arctan2(-u, -v)), 360.0)
    direction_from = np.where(direction_from == 0.0, NORTH_DIRECTION_DEG, direction_from)
    direction_from = np.where(speed <= calm_speed, calm_direction, direction_from)
    return direction_from, speed
