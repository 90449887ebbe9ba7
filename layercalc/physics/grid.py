"""Horizontal divergence on model grids, Lambert conformal geometry and bilinear weights.

Pure numpy. Fields carry the horizontal axes LAST, as (..., y, x) with y the row (latitude)
and x the column (longitude) index; any leading axes (levels, times) broadcast. Winds in
m s^-1, lengths in m, angles in degrees at the interface, divergence in s^-1.

Edges and poles (the same rule in every function here):

- interior points: centred differences, second order;
- the first and last row or column of a grid that does not wrap: second-order one-sided
  differences (three points, as `numpy.gradient(..., edge_order=2)`);
- a latitude-longitude grid that spans 360 degrees wraps in longitude: centred differences
  across the seam, no edge in x;
- a row at a pole (|latitude| = 90 degrees), where 1 / cos(latitude) is infinite: on a
  grid that wraps, the mean divergence of the polar cap bounded by the next row (Gauss's
  theorem: the outward flux through that circle over the cap's area); on a grid that does
  not wrap, nan.

References
----------
Divergence on the sphere in spherical coordinates, with the metric term -v tan(phi) / a:
Holton, J. R. and G. J. Hakim, 2013, An Introduction to Dynamic Meteorology, 5th ed.,
Academic Press, appendix on spherical coordinates (from memory).
Map-factor form on a conformal projection, div = m^2 [d(u/m)/dx + d(v/m)/dy]:
Haltiner, G. J. and R. T. Williams, 1980, Numerical Prediction and Dynamic Meteorology,
2nd ed., Wiley, chapter 1 (map projections; from memory).
Lambert conformal conic on the sphere: Snyder, J. P., 1987, Map Projections - A Working
Manual, USGS Professional Paper 1395, chapter 15, eqs. 15-1 to 15-4 (from memory; the
tests check the projection, its scale factor and the grid's north against pyproj).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

__all__ = [
    "LambertConformal", "lambert_cone_constant", "lambert_forward", "lambert_inverse",
    "lambert_map_factor", "lambert_grid_rotation", "grid_to_earth_winds",
    "earth_to_grid_winds", "divergence_latlon", "polar_cap_divergence", "divergence_projected", "wraps_in_longitude",
    "bilinear_weights",
]

# A grid wraps in longitude when its columns, one spacing beyond the last, close the
# circle to within this fraction of a spacing [1]. Common practice, no source.
_WRAP_TOLERANCE = 1e-3


class LambertConformal(NamedTuple):
    """A Lambert conformal conic projection of a sphere.

    standard_parallel_1, standard_parallel_2 : degrees (equal for a tangent cone)
    central_meridian : longitude where the grid's y axis points to true north [deg]
    origin_latitude : latitude of the projection origin (y = 0 there) [deg]
    radius : radius of the sphere [m]
    """

    standard_parallel_1: float
    standard_parallel_2: float
    central_meridian: float
    origin_latitude: float
    radius: float


def lambert_cone_constant(projection: LambertConformal) -> float:
    """Cone constant n of a Lambert conformal projection (Snyder 1987, eq. 15-3).

    n = ln(cos phi1 / cos phi2) / ln(tan(pi/4 + phi2/2) / tan(pi/4 + phi1/2)),
    and n = sin phi1 for a tangent cone (phi1 = phi2).

    Returns
    -------
    float
        Cone constant, in (-1, 1]; positive for a cone tangent or secant in the northern
        hemisphere. [1]
    """
    phi1 = np.deg2rad(projection.standard_parallel_1)
    phi2 = np.deg2rad(projection.standard_parallel_2)
    if np.isclose(phi1, phi2, rtol=0.0, atol=1e-12):
        return float(np.sin(phi1))
    return float(np.log(np.cos(phi1) / np.cos(phi2))
                 / np.log(np.tan(np.pi / 4 + phi2 / 2) / np.tan(np.pi / 4 + phi1 / 2)))


def _lambert_terms(projection: LambertConformal):
    n = lambert_cone_constant(projection)
    phi1 = np.deg2rad(projection.standard_parallel_1)
    big_f = np.cos(phi1) * np.tan(np.pi / 4 + phi1 / 2) ** n / n
    rho0 = projection.radius * big_f / np.tan(
        np.pi / 4 + np.deg2rad(projection.origin_latitude) / 2) ** n
    return n, big_f, rho0


def _longitude_offset(longitude, central_meridian):
    """lambda - lambda0 wrapped into [-180, 180) degrees."""
    return (np.asarray(longitude, dtype=float) - central_meridian + 180.0) % 360.0 - 180.0


def lambert_forward(projection: LambertConformal, latitude, longitude):
    """Plane coordinates of points on the sphere (Snyder 1987, eqs. 15-1, 15-2).

    rho = R F / tan^n(pi/4 + phi/2),  theta = n (lambda - lambda0),
    x = rho sin(theta),  y = rho0 - rho cos(theta)

    Parameters
    ----------
    latitude, longitude : array_like
        Points on the sphere. [deg]

    Returns
    -------
    x, y : numpy.ndarray
        Plane coordinates. [m]
    """
    n, big_f, rho0 = _lambert_terms(projection)
    phi = np.deg2rad(np.asarray(latitude, dtype=float))
    rho = projection.radius * big_f / np.tan(np.pi / 4 + phi / 2) ** n
    theta = n * np.deg2rad(_longitude_offset(longitude, projection.central_meridian))
    return rho * np.sin(theta), rho0 - rho * np.cos(theta)


def lambert_inverse(projection: LambertConformal, x, y):
    """Latitude and longitude of plane points (Snyder 1987, eqs. 15-8 to 15-11).

    rho = sign(n) sqrt(x^2 + (rho0 - y)^2),  theta = atan2(sign(n) x, sign(n) (rho0 - y)),
    phi = 2 atan((R F / rho)^(1/n)) - pi/2,  lambda = lambda0 + theta / n

    Returns
    -------
    latitude, longitude : numpy.ndarray
        Longitude in [-180, 180) about nothing in particular (lambda0 + offset). [deg]
    """
    n, big_f, rho0 = _lambert_terms(projection)
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    sign = np.sign(n)
    rho = sign * np.hypot(x, rho0 - y)
    theta = np.arctan2(sign * x, sign * (rho0 - y))
    phi = 2 * np.arctan((projection.radius * big_f / rho) ** (1 / n)) - np.pi / 2
    longitude = projection.central_meridian + np.rad2deg(theta) / n
    return np.rad2deg(phi), (longitude + 180.0) % 360.0 - 180.0


def lambert_map_factor(projection: LambertConformal, latitude):
    """Scale factor m (= k = h) of a Lambert conformal projection (Snyder 1987, eq. 15-4).

    m = cos phi1 tan^n(pi/4 + phi1/2) / (cos phi tan^n(pi/4 + phi/2))

    Plane distance over distance on the sphere; 1 on the standard parallels.

    Parameters
    ----------
    latitude : array_like
        [deg]

    Returns
    -------
    numpy.ndarray
        Map factor. [1]
    """
    n = lambert_cone_constant(projection)
    phi1 = np.deg2rad(projection.standard_parallel_1)
    phi = np.deg2rad(np.asarray(latitude, dtype=float))
    return (np.cos(phi1) * np.tan(np.pi / 4 + phi1 / 2) ** n
            / (np.cos(phi) * np.tan(np.pi / 4 + phi / 2) ** n))


def lambert_grid_rotation(projection: LambertConformal, longitude):
    """Angle from the grid's y axis to true north, counter-clockwise positive.

    gamma = n (lambda - lambda0)

    Derivation: north is the direction of decreasing rho, towards the cone's apex at
    (0, rho0); from the point (rho sin theta, rho0 - rho cos theta) that is the unit
    vector (-sin theta, cos theta): the grid's y axis turned counter-clockwise by theta.

    Parameters
    ----------
    longitude : array_like
        [deg]

    Returns
    -------
    numpy.ndarray
        Rotation angle. [rad]
    """
    n = lambert_cone_constant(projection)
    return n * np.deg2rad(_longitude_offset(longitude, projection.central_meridian))


def grid_to_earth_winds(u_grid, v_grid, rotation):
    """Grid-relative wind components turned to eastward and northward components.

    u_east = u_grid cos(gamma) + v_grid sin(gamma)
    v_north = -u_grid sin(gamma) + v_grid cos(gamma)

    (east = (cos gamma, sin gamma) and north = (-sin gamma, cos gamma) in grid axes.)

    Parameters
    ----------
    u_grid, v_grid : array_like
        Components along the grid's x and y axes. [m s^-1]
    rotation : array_like
        `lambert_grid_rotation` (or the same angle of another projection). [rad]

    Returns
    -------
    u_east, v_north : numpy.ndarray
        Earth-relative components. [m s^-1]
    """
    cos, sin = np.cos(rotation), np.sin(rotation)
    u_grid = np.asarray(u_grid, dtype=float)
    v_grid = np.asarray(v_grid, dtype=float)
    return u_grid * cos + v_grid * sin, -u_grid * sin + v_grid * cos


def earth_to_grid_winds(u_east, v_north, rotation):
    """Inverse of `grid_to_earth_winds`:

    u_grid = u_east cos(gamma) - v_north sin(gamma)
    v_grid = u_east sin(gamma) + v_north cos(gamma)

    Returns
    -------
    u_grid, v_grid : numpy.ndarray
        [m s^-1]
    """
    cos, sin = np.cos(rotation), np.sin(rotation)
    u_east = np.asarray(u_east, dtype=float)
    v_north = np.asarray(v_north, dtype=float)
    return u_east * cos - v_north * sin, u_east * sin + v_north * cos


def wraps_in_longitude(longitude) -> bool:
    """True when equally spaced longitudes (degrees) close the circle: n * spacing = 360."""
    longitude = np.asarray(longitude, dtype=float)
    if longitude.ndim != 1 or longitude.size < 3:
        return False
    spacing = np.diff(longitude)
    step = spacing.mean()
    if not np.allclose(spacing, step, rtol=0, atol=abs(step) * _WRAP_TOLERANCE):
        return False
    return bool(abs(abs(step) * longitude.size - 360.0) < abs(step) * _WRAP_TOLERANCE)


def _derivative(field, coordinate, axis, periodic=False, period=None):
    """d field / d coordinate along `axis`: centred inside, second-order one-sided at the
    ends; with `periodic`, centred across the seam (the coordinate continued by `period`)."""
    if not periodic:
        return np.gradient(field, coordinate, axis=axis, edge_order=2)
    forward = np.roll(field, -1, axis=axis)
    backward = np.roll(field, 1, axis=axis)
    extended = np.concatenate([[coordinate[-1] - period], coordinate, [coordinate[0] + period]])
    span = extended[2:] - extended[:-2]
    shape = [1] * field.ndim
    shape[axis] = span.size
    return (forward - backward) / span.reshape(shape)


def divergence_latlon(u, v, latitude, longitude, radius, periodic=None, poles="cap"):
    """Horizontal divergence of earth-relative winds on a regular latitude-longitude grid.

    div = 1 / (a cos phi) du/dlambda + 1 / a dv/dphi - v tan(phi) / a

    the last term being the metric term (the meridians converge); derivatives by centred
    differences in radians (edges, the seam and the poles as in the module docstring).

    Parameters
    ----------
    u, v : array_like, shape (..., ny, nx)
        Eastward and northward wind. [m s^-1]
    latitude : array_like, shape (ny,)
        Row latitudes, either order. [deg]
    longitude : array_like, shape (nx,)
        Column longitudes, increasing or decreasing. [deg]
    radius : float
        Radius of the sphere the grid is defined on. [m]
    periodic : bool, optional
        Whether x wraps; by default when the longitudes span 360 degrees.
    poles : "cap" or "nan"
        A pole row of a wrapping grid: the polar-cap mean (`polar_cap_divergence`), or nan
        (for a piece of a grid, whose pole rows are filled from the whole row afterwards).

    Returns
    -------
    numpy.ndarray, shape (..., ny, nx)
        Divergence; at a pole row the polar-cap mean (wrapping grids) or nan. [s^-1]
    """
    u = np.asarray(u, dtype=float)
    v = np.asarray(v, dtype=float)
    latitude = np.asarray(latitude, dtype=float)
    longitude = np.asarray(longitude, dtype=float)
    if periodic is None:
        periodic = wraps_in_longitude(longitude)
    phi = np.deg2rad(latitude)[:, np.newaxis]
    lam = np.unwrap(np.deg2rad(longitude))  # a seam inside the coordinate (350, 0, 10)
    du_dlam = _derivative(u, lam, axis=-1, periodic=periodic, period=2 * np.pi * np.sign(
        lam[-1] - lam[0]))
    dv_dphi = _derivative(v, np.deg2rad(latitude), axis=-2)
    at_pole = np.isclose(np.abs(latitude), 90.0, rtol=0.0, atol=1e-9)
    cos_phi = np.where(at_pole[:, np.newaxis], np.nan, np.cos(phi))
    with np.errstate(invalid="ignore", divide="ignore"):
        div = (du_dlam / cos_phi + dv_dphi - v * np.tan(phi)) / radius
    for row in np.flatnonzero(at_pole):
        div[..., row, :] = polar_cap_divergence(v, latitude, row, radius) \
            if periodic and poles == "cap" else np.nan
    return div


def polar_cap_divergence(v, latitude, pole_row, radius):
    """Mean divergence over the cap between a pole and the next row (Gauss's theorem).

    Parameters
    ----------
    v : array_like, shape (..., ny, nx)
        Northward wind on a grid that wraps in longitude (all of the next row). [m s^-1]
    latitude : array_like, shape (ny,)
        [deg]
    pole_row : int
        Index of the row at the pole.
    radius : float
        [m]

    Returns
    -------
    numpy.ndarray, shape (..., 1)
        The cap's mean divergence, for every point of the pole row. [s^-1]

    North pole, boundary latitude phi1: outward (southward) flux -a cos(phi1) * integral of
    v dlambda = -2 pi a cos(phi1) mean(v), over the cap area 2 pi a^2 (1 - sin phi1):
    div = -cos(phi1) mean(v) / (a (1 - sin phi1)); at the south pole the sign of v flips
    and phi1 -> -phi1.
    """
    v = np.asarray(v, dtype=float)
    latitude = np.asarray(latitude, dtype=float)
    neighbour = pole_row + 1 if pole_row + 1 < latitude.size else pole_row - 1
    phi1 = np.deg2rad(latitude[neighbour])
    hemisphere = np.sign(latitude[pole_row])
    mean_v = v[..., neighbour, :].mean(axis=-1, keepdims=True)
    return (-hemisphere * np.cos(phi1) * mean_v
            / (radius * (1.0 - hemisphere * np.sin(phi1))))


def divergence_projected(u_grid, v_grid, x, y, map_factor):
    """Horizontal divergence of grid-relative winds on a conformal projection.

    div = m^2 [d(u / m)/dx + d(v / m)/dy]

    with x, y the plane coordinates and m the map factor (plane distance over true
    distance); centred differences inside, second-order one-sided at the edges.

    Parameters
    ----------
    u_grid, v_grid : array_like, shape (..., ny, nx)
        Wind components along the grid's x and y axes (turn earth-relative winds with
        `earth_to_grid_winds` first). [m s^-1]
    x : array_like, shape (nx,)
        Plane x coordinate of the columns (either order). [m]
    y : array_like, shape (ny,)
        Plane y coordinate of the rows (either order). [m]
    map_factor : array_like, shape (ny, nx)
        Map factor at each point. [1]

    Returns
    -------
    numpy.ndarray, shape (..., ny, nx)
        Divergence. [s^-1]
    """
    m = np.asarray(map_factor, dtype=float)
    d_dx = _derivative(np.asarray(u_grid, dtype=float) / m, np.asarray(x, dtype=float), -1)
    d_dy = _derivative(np.asarray(v_grid, dtype=float) / m, np.asarray(y, dtype=float), -2)
    return m * m * (d_dx + d_dy)


def bilinear_weights(row, column, shape, periodic_x=False):
    """Corner indices and weights of bilinear interpolation at fractional grid indices.

    f(r, c) = sum over the four corners (r0 or r0 + 1, c0 or c0 + 1) of
    (1 - |r - ri|) (1 - |c - ci|) f(ri, ci)

    Parameters
    ----------
    row, column : float
        Fractional row (y) and column (x) index of the point.
    shape : (ny, nx)
    periodic_x : bool
        Whether the column index wraps (a global latitude-longitude grid).

    Returns
    -------
    rows, columns : numpy.ndarray of int, shape (4,)
    weights : numpy.ndarray, shape (4,), summing to 1

    Raises
    ------
    ValueError
        If the point lies outside the grid.
    """
    ny, nx = shape
    if not (0.0 <= row <= ny - 1) or (not periodic_x and not 0.0 <= column <= nx - 1):
        raise ValueError(f"point at grid index ({row:.2f}, {column:.2f}) outside the "
                         f"{ny} x {nx} grid")
    if periodic_x:
        column = column % nx
    r0 = min(int(np.floor(row)), ny - 2)
    c0 = int(np.floor(column)) if periodic_x else min(int(np.floor(column)), nx - 2)
    fr, fc = row - r0, column - c0
    rows = np.array([r0, r0, r0 + 1, r0 + 1])
    columns = np.array([c0, c0 + 1, c0, c0 + 1]) % nx
    weights = np.array([(1 - fr) * (1 - fc), (1 - fr) * fc, fr * (1 - fc), fr * fc])
    return rows, columns, weights
