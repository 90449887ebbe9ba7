"""Points and directions on the sphere, shared by the station network and its exact reference.

Conventions: latitudes and longitudes in degrees (north and east positive); vectors are
Earth-centred and dimensionless (unit length), shaped (..., 3).
"""

import numpy as np

__all__ = ["unit_vectors", "east_north_vectors", "great_circle_angles"]


def unit_vectors(latitude_deg, longitude_deg):
    """Earth-centred unit vectors (..., 3) of points given in degrees."""
    latitude = np.deg2rad(np.asarray(latitude_deg, dtype=float))
    longitude = np.deg2rad(np.asarray(longitude_deg, dtype=float))
    return np.stack([np.cos(latitude) * np.cos(longitude),
                     np.cos(latitude) * np.sin(longitude),
                     np.sin(latitude)], axis=-1)


def east_north_vectors(latitude_deg, longitude_deg):
    """Local east and north unit vectors (..., 3) at points given in degrees."""
    latitude = np.deg2rad(np.asarray(latitude_deg, dtype=float))
    longitude = np.deg2rad(np.asarray(longitude_deg, dtype=float))
    east = np.stack([-np.sin(longitude), np.cos(longitude), np.zeros_like(longitude)], axis=-1)
    north = np.stack([-np.sin(latitude) * np.cos(longitude),
                      -np.sin(latitude) * np.sin(longitude),
                      np.cos(latitude)], axis=-1)
    return east, north


def great_circle_angles(unit_a, unit_b):
    """Central angle between unit vectors, numerically safe at all separations. [rad]"""
    return np.arctan2(np.linalg.norm(np.cross(unit_a, unit_b), axis=-1),
                      np.sum(unit_a * unit_b, axis=-1))
