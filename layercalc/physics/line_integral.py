"""The exact reference for a station triangle: divergence and vorticity from line
integrals along its great-circle sides (used to state the plane fit's error)."""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from layercalc.constants import EARTH_MEAN_RADIUS  # GRS80 mean radius; source there
from layercalc.errors import DefinitionError

from layercalc.physics.sphere import east_north_vectors, great_circle_angles, unit_vectors


class SphericalLineIntegral(NamedTuple):
    """Result of ``spherical_line_integral_divergence``."""

    divergence: np.ndarray      # (levels,) [1/s]
    vorticity: np.ndarray       # (levels,) [1/s]
    area: float                 # spherical triangle area [m^2]


def spherical_line_integral_divergence(latitudes, longitudes, u, v, radius=EARTH_MEAN_RADIUS):
    """Divergence and vorticity of a spherical triangle from its boundary integrals.

    divergence = (1 / A) sum over sides of L_s (V_i . n_s + V_j . n_s) / 2
    vorticity  = (1 / A) sum over sides of L_s (V_i . t_i + V_j . t_j) / 2

    Each side is the great-circle arc between vertices i and j, of length
    L_s = R * angle(r_i, r_j). Its outward normal n_s is the same 3-D vector all along
    the arc (the arc's pole), so the flux is exact under the stated assumption: the
    wind component across a side, and the one along it (t, the direction of
    anticlockwise travel at the vertex), vary linearly with arc length between the two
    vertices. A = R**2 * E with the spherical excess from
    tan(E / 2) = |r1 . (r2 x r3)| / (1 + r1 . r2 + r2 . r3 + r3 . r1).
    No projection is involved; comparing with ``station_polygon_divergence`` measures
    the error of the tangent plane.

    Parameters
    ----------
    latitudes, longitudes : array_like
        The three vertices, any orientation. [deg]
    u, v : array_like
        Eastward and northward winds, shape (levels, 3) or (3,). [m/s]
    radius : float, optional
        Sphere radius. [m]

    Returns
    -------
    SphericalLineIntegral
        divergence and vorticity (levels,) [1/s], spherical triangle area [m^2].

    References
    ----------
    Divergence theorem on the sphere, as in Bellamy (1949) for the plane. Triangle
    solid angle: Van Oosterom, A. and Strackee, J., 1983: The solid angle of a plane
    triangle. IEEE Trans. Biomed. Eng., BME-30, 125-126 (from memory).
    """
    latitudes = np.asarray(latitudes, dtype=float)
    longitudes = np.asarray(longitudes, dtype=float)
    if latitudes.shape != (3,) or longitudes.shape != (3,):
        raise DefinitionError(
            f"a spherical triangle needs 3 vertices, got {latitudes.shape} and "
            f"{longitudes.shape}")
    u = np.asarray(u, dtype=float)
    v = np.asarray(v, dtype=float)
    points = unit_vectors(latitudes, longitudes)
    east, north = east_north_vectors(latitudes, longitudes)
    wind = u[..., None] * east + v[..., None] * north          # (..., 3 vertices, 3)
    triple = float(np.dot(points[0], np.cross(points[1], points[2])))
    orientation = np.sign(triple)
    excess = 2.0 * np.arctan2(abs(triple), 1.0 + np.sum(points * np.roll(points, -1, axis=0)))
    area = radius**2 * excess
    following = np.roll(points, -1, axis=0)
    pole = np.cross(points, following)
    pole = pole / np.linalg.norm(pole, axis=-1, keepdims=True)  # left of travel i -> j
    side_length = radius * great_circle_angles(points, following)
    outward = -orientation * pole
    tangent_start = orientation * np.cross(pole, points)
    tangent_end = orientation * np.cross(pole, following)
    wind_following = np.roll(wind, -1, axis=-2)
    flux = side_length * 0.5 * (np.sum(wind * outward, axis=-1)
                                + np.sum(wind_following * outward, axis=-1))
    circulation = side_length * 0.5 * (np.sum(wind * tangent_start, axis=-1)
                                       + np.sum(wind_following * tangent_end, axis=-1))
    return SphericalLineIntegral(flux.sum(axis=-1) / area, circulation.sum(axis=-1) / area,
                                 float(area))
