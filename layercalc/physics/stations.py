"""Divergence and vorticity from the winds at a triangle or polygon of stations.

The stations are put on a plane tangent to the Earth at their centroid (stereographic
projection), each station's wind is turned from its own (east, north) axes to the plane's
(x, y) axes, and a linear wind field is fitted by least squares; its constant gradient
gives divergence and relative vorticity. For three stations the fit is exact and equals
the line-integral (Green's theorem) value over the triangle: Bellamy's (1949) triangle
method. ``physics.line_integral.spherical_line_integral_divergence`` does the same integral on the sphere
itself, to measure what the plane costs.

Conventions: latitudes and longitudes in degrees (north and east positive); winds u
eastward and v northward in m/s, shaped (levels, stations) or (stations,); the plane's
y axis points to true north at the centroid and x to true east.
"""

from typing import NamedTuple

import numpy as np

from layercalc.constants import EARTH_MEAN_RADIUS  # GRS80 mean radius; source there
from layercalc.errors import DefinitionError
from layercalc.physics.sphere import east_north_vectors, great_circle_angles, unit_vectors

__all__ = [
    "LinearWindFit", "PolygonShape", "StationPolygonDivergence",
    "spherical_centroid", "tangent_plane_coordinates", "rotate_wind_to_plane",
    "linear_wind_fit", "polygon_shape", "shape_warnings", "station_polygon_divergence",
]

# Fewest stations that determine a linear wind field (3 unknowns per component) [1].
MINIMUM_STATIONS = 3

# Smallest interior angle below which a station polygon is flagged [deg]. Common
# practice, no source: the fitted gradient across a thin triangle is the difference of
# nearly equal winds over a short distance, so observation error is amplified roughly
# as 1/sin(smallest angle): 2.9 at 20 deg against 1.15 for an equilateral triangle.
SMALLEST_ANGLE_WARNING_DEG = 20.0

# Collinearity measure (ratio of the two singular values of the centred station
# coordinates; 1 equilateral, 0 collinear) below which a polygon is flagged [1].
# Own choice, no source: below 0.25 the gradient across the short axis carries at
# least 4x the noise of the gradient along the long axis.
COLLINEARITY_WARNING = 0.25

# Largest station separation for which a linear wind field is assumed [m]. Reasoning,
# no source: for a wave of wavelength L sampled over a distance d, a centred difference
# underestimates the gradient by the factor sin(k d / 2) / (k d / 2), k = 2 pi / L,
# about 1 - (k d)**2 / 24. For a short synoptic wave L = 3000 km that is 1.6 % at
# d = 300 km and 6.5 % at d = 600 km; beyond 600 km the linear fit is no longer a local
# value.
MAXIMUM_SEPARATION_WARNING_M = 600.0e3

# Smallest station separation below which observation error dominates [m]. Reasoning
# from memory: radiosonde wind components have random errors of roughly 2 m/s, so a
# gradient over d has an error of about sqrt(2) * 2 m/s / d = 2.8e-5 s-1 at d = 100 km,
# larger than typical synoptic-scale divergence (1e-5 s-1).
MINIMUM_SEPARATION_WARNING_M = 100.0e3


class LinearWindFit(NamedTuple):
    """Least-squares linear wind field per level; every field has shape (levels,). [SI]"""

    u_at_origin: np.ndarray   # u0, eastward (plane x) component at the plane origin [m/s]
    v_at_origin: np.ndarray   # v0 [m/s]
    du_dx: np.ndarray         # [1/s]
    du_dy: np.ndarray         # [1/s]
    dv_dx: np.ndarray         # [1/s]
    dv_dy: np.ndarray         # [1/s]
    divergence: np.ndarray    # du_dx + dv_dy [1/s]
    vorticity: np.ndarray     # dv_dx - du_dy [1/s]
    stations_used: np.ndarray  # number of stations with a wind at the level [1]


class PolygonShape(NamedTuple):
    """Shape of a station network (see ``polygon_shape``)."""

    smallest_angle_deg: float   # smallest interior angle of the polygon [deg]
    collinearity: float         # singular-value ratio, 1 equilateral .. 0 collinear [1]
    smallest_separation: float  # shortest great-circle distance between stations [m]
    largest_separation: float   # longest great-circle distance between stations [m]
    area: float                 # plane area of the polygon [m^2]


class StationPolygonDivergence(NamedTuple):
    """Result of ``station_polygon_divergence``."""

    divergence: np.ndarray      # (levels,) [1/s]
    vorticity: np.ndarray       # (levels,) [1/s]
    fit: LinearWindFit
    area: float                 # [m^2]
    centroid_latitude: float    # [deg]
    centroid_longitude: float   # [deg]
    shape: PolygonShape
    warnings: list              # plain-English strings


def spherical_centroid(latitudes, longitudes):
    """Centroid of points on the sphere: the normalised mean of their unit vectors.

    c = sum(r_i) / |sum(r_i)|,  latitude = asin(c_z), longitude = atan2(c_y, c_x)

    Parameters
    ----------
    latitudes, longitudes : array_like
        Station positions, shape (stations,). [deg]

    Returns
    -------
    latitude, longitude : float
        Centroid. [deg]
    """
    mean_vector = unit_vectors(latitudes, longitudes).sum(axis=0)
    mean_vector = mean_vector / np.linalg.norm(mean_vector)
    latitude = np.rad2deg(np.arcsin(np.clip(mean_vector[2], -1.0, 1.0)))
    longitude = np.rad2deg(np.arctan2(mean_vector[1], mean_vector[0]))
    return float(latitude), float(longitude)


def tangent_plane_coordinates(latitude_deg, longitude_deg, centre_latitude,
                              centre_longitude, radius=EARTH_MEAN_RADIUS):
    """Stereographic plane coordinates about a centre, and each point's north angle.

    Oblique stereographic projection of the sphere, true scale at the centre (k0 = 1):

    k = 2 / (1 + sin(phi0) sin(phi) + cos(phi0) cos(phi) cos(lam - lam0))
    x = R k cos(phi) sin(lam - lam0)
    y = R k (cos(phi0) sin(phi) - sin(phi0) cos(phi) cos(lam - lam0))

    Chosen because it is conformal: at every point the images of local east and north
    stay perpendicular and equally scaled, so one rotation per station carries a wind
    from (east, north) to (x, y) axes. The scale k = 2 / (1 + cos c) = 1 + c**2 / 4 + ...
    at angular distance c from the centre: 1.0002 at 170 km.

    The north angle gamma is the bearing, clockwise from the plane's +y axis, of the
    image of local north at the point (the meridian convergence). It is computed by
    parallel transport of the local north vector n along the great circle from the point
    P to the centre C, which for a conformal azimuthal projection is the image direction:
    T n = n - (C . n) / (1 + P . C) (P + C), gamma = atan2(T n . e0, T n . n0),
    with e0, n0 the east and north vectors at the centre. Near the centre
    gamma ~ -(lam - lam0) sin(phi0): negative east of the centre in the northern
    hemisphere, where meridians lean towards the pole.

    Parameters
    ----------
    latitude_deg, longitude_deg : array_like
        Points to project. [deg]
    centre_latitude, centre_longitude : float
        Centre of the plane (e.g. ``spherical_centroid``). [deg]
    radius : float, optional
        Radius of the sphere, default the GRS80 mean radius. [m]

    Returns
    -------
    x, y : numpy.ndarray
        Plane coordinates, x towards east and y towards north at the centre. [m]
    north_angle : numpy.ndarray
        Bearing of local north on the plane, clockwise from +y. [rad]

    References
    ----------
    Snyder, J. P., 1987: Map Projections - A Working Manual. USGS Professional Paper
    1395, stereographic projection for the sphere, eqs. (21-2) to (21-4) (equation
    numbers from memory).
    """
    phi = np.deg2rad(np.asarray(latitude_deg, dtype=float))
    dlam = np.deg2rad(np.asarray(longitude_deg, dtype=float) - centre_longitude)
    phi0 = np.deg2rad(centre_latitude)
    cos_c = np.sin(phi0) * np.sin(phi) + np.cos(phi0) * np.cos(phi) * np.cos(dlam)
    k = 2.0 / (1.0 + cos_c)
    x = radius * k * np.cos(phi) * np.sin(dlam)
    y = radius * k * (np.cos(phi0) * np.sin(phi) - np.sin(phi0) * np.cos(phi) * np.cos(dlam))

    point = unit_vectors(latitude_deg, longitude_deg)
    centre = unit_vectors(centre_latitude, centre_longitude)
    _, north = east_north_vectors(latitude_deg, longitude_deg)
    east0, north0 = east_north_vectors(centre_latitude, centre_longitude)
    c_dot_n = np.sum(north * centre, axis=-1)
    p_dot_c = np.sum(point * centre, axis=-1)
    transported = north - (c_dot_n / (1.0 + p_dot_c))[..., None] * (point + centre)
    north_angle = np.arctan2(np.sum(transported * east0, axis=-1),
                             np.sum(transported * north0, axis=-1))
    return x, y, north_angle


def rotate_wind_to_plane(u, v, angle):
    """Turn (east, north) wind components into plane (x, y) components.

    u' = u cos(gamma) + v sin(gamma)
    v' = -u sin(gamma) + v cos(gamma)

    where gamma is the bearing of local north on the plane (``tangent_plane_coordinates``):
    north maps to (sin gamma, cos gamma) and east to (cos gamma, -sin gamma).
    ``rotate_wind_to_plane(u', v', -gamma)`` turns plane components back.

    Parameters
    ----------
    u, v : array_like
        Eastward and northward components; the last axis is the station. [m/s]
    angle : array_like
        North angle gamma per station, broadcast against the last axis. [rad]

    Returns
    -------
    u_plane, v_plane : numpy.ndarray
        Components along the plane's x and y axes. [m/s]
    """
    u = np.asarray(u, dtype=float)
    v = np.asarray(v, dtype=float)
    cos_gamma, sin_gamma = np.cos(angle), np.sin(angle)
    return u * cos_gamma + v * sin_gamma, -u * sin_gamma + v * cos_gamma


def linear_wind_fit(x, y, u, v):
    """Least-squares linear wind field through N >= 3 stations, per level.

    u = u0 + du_dx x + du_dy y,   v = v0 + dv_dx x + dv_dy y
    divergence = du_dx + dv_dy,   relative vorticity = dv_dx - du_dy

    Each level is fitted with the stations that have both components there (NaN marks
    a missing wind); a level with fewer than three such stations, or with those stations
    in a line, gets NaN. With three stations the plane through the three winds is exact,
    and by Green's theorem its gradient equals the line integral around the triangle
    with the wind linear along each side: divergence = (1/A) sum over sides of
    (mean normal wind x side length), the triangle method of Bellamy (1949).

    Parameters
    ----------
    x, y : array_like
        Station plane coordinates, shape (stations,). [m]
    u, v : array_like
        Plane wind components, shape (levels, stations) or (stations,). [m/s]

    Returns
    -------
    LinearWindFit
        Fields of shape (levels,), or 0-d arrays for 1-D winds. [m/s], [1/s]

    References
    ----------
    Bellamy, J. C., 1949: Objective calculations of divergence, vertical velocity and
    vorticity. Bull. Amer. Meteor. Soc., 30, 45-49.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    u = np.asarray(u, dtype=float)
    v = np.asarray(v, dtype=float)
    one_level = u.ndim == 1
    u2, v2 = np.atleast_2d(u), np.atleast_2d(v)
    if x.shape != y.shape or x.ndim != 1 or u2.shape != v2.shape or u2.shape[-1] != x.size:
        raise DefinitionError(
            f"station coordinates {x.shape}, {y.shape} and winds {u.shape}, {v.shape} "
            "do not match", hint="give x, y as (stations,) and u, v as (levels, stations)")
    # Scale the coordinates to order one so that the normal equations are well conditioned.
    length_scale = max(float(np.sqrt(np.mean(x**2 + y**2))), 1.0)
    design = np.stack([np.ones_like(x), x / length_scale, y / length_scale], axis=-1)
    valid = np.isfinite(u2) & np.isfinite(v2)
    weight = valid.astype(float)
    normal_matrix = np.einsum("ln,ni,nj->lij", weight, design, design)
    right_u = np.einsum("ln,ni->li", weight * np.where(valid, u2, 0.0), design)
    right_v = np.einsum("ln,ni->li", weight * np.where(valid, v2, 0.0), design)
    stations_used = valid.sum(axis=-1)
    solvable = (stations_used >= MINIMUM_STATIONS) & (np.linalg.cond(normal_matrix) < 1e10)
    normal_matrix[~solvable] = np.eye(3)
    coefficients_u = np.linalg.solve(normal_matrix, right_u[..., None])[..., 0]
    coefficients_v = np.linalg.solve(normal_matrix, right_v[..., None])[..., 0]
    coefficients_u[~solvable] = np.nan
    coefficients_v[~solvable] = np.nan
    du_dx, du_dy = coefficients_u[:, 1] / length_scale, coefficients_u[:, 2] / length_scale
    dv_dx, dv_dy = coefficients_v[:, 1] / length_scale, coefficients_v[:, 2] / length_scale
    fields = (coefficients_u[:, 0], coefficients_v[:, 0], du_dx, du_dy, dv_dx, dv_dy,
              du_dx + dv_dy, dv_dx - du_dy, stations_used)
    if one_level:
        fields = tuple(np.asarray(field[0]) for field in fields)
    return LinearWindFit(*fields)


def polygon_shape(latitudes, longitudes, x, y, radius=EARTH_MEAN_RADIUS):
    """Shape diagnostics of a station network.

    The polygon joins the stations in order of bearing from their plane mean position
    (the convex hull when every station is a corner of it, the usual network).
    smallest interior angle: min over corners of pi - (turning angle of the sides)
    collinearity: s_min / s_max, the singular values of the centred (x, y) matrix
    separations: great-circle distances R * angle(r_i, r_j) over all pairs
    area: shoelace formula 0.5 * |sum(x_i y_(i+1) - x_(i+1) y_i)| on the plane

    Parameters
    ----------
    latitudes, longitudes : array_like
        Station positions, shape (stations,). [deg]
    x, y : array_like
        Their plane coordinates (``tangent_plane_coordinates``). [m]
    radius : float, optional
        Sphere radius for separations. [m]

    Returns
    -------
    PolygonShape
        Smallest angle [deg], collinearity [1], smallest and largest separation [m],
        area [m^2].
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    order = np.argsort(np.arctan2(y - y.mean(), x - x.mean()))
    xo, yo = x[order], y[order]
    side_x, side_y = np.roll(xo, -1) - xo, np.roll(yo, -1) - yo
    next_x, next_y = np.roll(side_x, -1), np.roll(side_y, -1)
    turning = np.arctan2(side_x * next_y - side_y * next_x, side_x * next_x + side_y * next_y)
    smallest_angle = float(np.rad2deg(np.min(np.pi - turning)))
    area = 0.5 * abs(float(np.sum(xo * np.roll(yo, -1) - np.roll(xo, -1) * yo)))
    centred = np.stack([x - x.mean(), y - y.mean()], axis=-1)
    singular_values = np.linalg.svd(centred, compute_uv=False)
    collinearity = float(singular_values[-1] / singular_values[0])
    units = unit_vectors(latitudes, longitudes)
    distances = radius * great_circle_angles(units[:, None, :], units[None, :, :])
    pairs = np.triu_indices(x.size, k=1)
    return PolygonShape(smallest_angle, collinearity, float(distances[pairs].min()),
                        float(distances[pairs].max()), area)


def shape_warnings(shape):
    """Plain-English warnings for a ``PolygonShape`` against the module thresholds.

    Parameters
    ----------
    shape : PolygonShape

    Returns
    -------
    list of str
        One sentence per threshold crossed; empty when the network is well shaped.
    """
    warnings = []
    if shape.smallest_angle_deg < SMALLEST_ANGLE_WARNING_DEG:
        warnings.append(
            f"smallest interior angle is {shape.smallest_angle_deg:.1f} deg, below "
            f"{SMALLEST_ANGLE_WARNING_DEG:.0f} deg: the gradient across the thin side "
            "amplifies wind errors; choose a rounder set of stations")
    if shape.collinearity < COLLINEARITY_WARNING:
        warnings.append(
            f"stations are nearly in a line (collinearity measure {shape.collinearity:.2f}, "
            f"below {COLLINEARITY_WARNING}): the gradient across the line is poorly known")
    if shape.largest_separation > MAXIMUM_SEPARATION_WARNING_M:
        warnings.append(
            f"stations are up to {shape.largest_separation / 1e3:.0f} km apart, more than "
            f"{MAXIMUM_SEPARATION_WARNING_M / 1e3:.0f} km: a linear wind field is a poor "
            "model over that distance")
    if shape.smallest_separation < MINIMUM_SEPARATION_WARNING_M:
        warnings.append(
            f"two stations are only {shape.smallest_separation / 1e3:.0f} km apart, less "
            f"than {MINIMUM_SEPARATION_WARNING_M / 1e3:.0f} km: wind observation errors "
            "dominate the gradient between them")
    return warnings


def _missing_level_warnings(fit, station_count):
    """Warnings naming levels (0-based indices) with missing winds."""
    used = np.atleast_1d(fit.stations_used)
    divergence = np.atleast_1d(fit.divergence)
    warnings = []
    partial = np.flatnonzero((used < station_count) & np.isfinite(divergence))
    if partial.size:
        warnings.append(
            "levels " + ", ".join(str(i) for i in partial) + " (0-based) miss the wind at "
            "one or more stations: fitted from the remaining stations")
    failed = np.flatnonzero(~np.isfinite(divergence))
    if failed.size:
        warnings.append(
            "levels " + ", ".join(str(i) for i in failed) + " (0-based) have fewer than "
            f"{MINIMUM_STATIONS} usable stations (or only collinear ones): divergence and "
            "vorticity are NaN there")
    return warnings


def station_polygon_divergence(latitudes, longitudes, u, v, radius=EARTH_MEAN_RADIUS):
    """Divergence and vorticity per level from the winds at three or more stations.

    Steps: centroid (``spherical_centroid``); stereographic plane about it
    (``tangent_plane_coordinates``); winds turned to plane axes by each station's north
    angle (``rotate_wind_to_plane``); least-squares linear fit (``linear_wind_fit``),
    whose value applies at the centroid.

    Parameters
    ----------
    latitudes, longitudes : array_like
        Station positions, shape (stations,). [deg]
    u, v : array_like
        Eastward and northward winds, shape (levels, stations) or (stations,); NaN for
        a missing wind. [m/s]
    radius : float, optional
        Sphere radius. [m]

    Returns
    -------
    StationPolygonDivergence
        divergence and vorticity (levels,) [1/s], the full fit, plane area [m^2],
        centroid latitude and longitude [deg], shape diagnostics and warnings.

    References
    ----------
    Bellamy (1949), see ``linear_wind_fit``.
    """
    latitudes = np.asarray(latitudes, dtype=float)
    longitudes = np.asarray(longitudes, dtype=float)
    if latitudes.ndim != 1 or latitudes.shape != longitudes.shape:
        raise DefinitionError(
            f"latitudes {latitudes.shape} and longitudes {longitudes.shape} must be "
            "1-D and of equal length")
    if latitudes.size < MINIMUM_STATIONS:
        raise DefinitionError(
            f"{latitudes.size} stations given, at least {MINIMUM_STATIONS} are needed "
            "to fit a linear wind field")
    centre_latitude, centre_longitude = spherical_centroid(latitudes, longitudes)
    x, y, north_angle = tangent_plane_coordinates(latitudes, longitudes, centre_latitude,
                                                  centre_longitude, radius)
    u_plane, v_plane = rotate_wind_to_plane(u, v, north_angle)
    fit = linear_wind_fit(x, y, u_plane, v_plane)
    shape = polygon_shape(latitudes, longitudes, x, y, radius)
    warnings = shape_warnings(shape) + _missing_level_warnings(fit, latitudes.size)
    return StationPolygonDivergence(fit.divergence, fit.vorticity, fit, shape.area,
                                    centre_latitude, centre_longitude, shape, warnings)
