"""Tests of layercalc.physics.winds and layercalc.physics.stations.

Wind fields used here and where their expected values come from:
- "plane-linear": u = u0 + a x + b y, v = v0 + c x + d y in the tangent plane's own
  components; divergence a + d and vorticity c - b exactly, by construction. The station
  winds are turned back to (east, north) with the module's own rotation, so these tests
  check the fit and the pipeline, not the projection.
- "solid body": V = W x r on the sphere, evaluated in 3-D and dotted with each station's
  east and north vectors, independently of the projection code. Exact on the sphere:
  divergence 0 everywhere, relative vorticity 2 W . r_hat (curl(W x r) = 2 W).
- "potential": V = grad(A p . r_hat) on the sphere of radius R, i.e.
  V = (A / R) (p - (p . r_hat) r_hat); irrotational, divergence -2 A (p . r_hat) / R**2
  (p . r_hat is a degree-1 spherical harmonic, eigenvalue -2 / R**2 of the Laplacian).
"""

import numpy as np
import pyproj
import pytest
from hypothesis import given, strategies as st
from numpy.testing import assert_allclose

from layercalc.physics import stations
from layercalc.physics.line_integral import spherical_line_integral_divergence
from layercalc.physics.stations import (
    EARTH_MEAN_RADIUS, linear_wind_fit, polygon_shape, rotate_wind_to_plane,
    spherical_centroid, station_polygon_divergence,
    tangent_plane_coordinates,
)
from layercalc.physics.winds import wind_components, wind_direction_and_speed

R = EARTH_MEAN_RADIUS


# --- helpers, independent of the code under test ------------------------------------

def destination(latitude, longitude, bearing_deg, distance_m):
    """Point at a great-circle distance and initial bearing (spherical trigonometry,
    direct problem on the sphere; formula from memory)."""
    phi1, lam1 = np.deg2rad(latitude), np.deg2rad(longitude)
    theta, delta = np.deg2rad(bearing_deg), np.asarray(distance_m, dtype=float) / R
    phi2 = np.arcsin(np.sin(phi1) * np.cos(delta)
                     + np.cos(phi1) * np.sin(delta) * np.cos(theta))
    lam2 = lam1 + np.arctan2(np.sin(theta) * np.sin(delta) * np.cos(phi1),
                             np.cos(delta) - np.sin(phi1) * np.sin(phi2))
    return np.rad2deg(phi2), np.rad2deg(lam2)


def unit_vector(latitude, longitude):
    phi, lam = np.deg2rad(latitude), np.deg2rad(longitude)
    return np.stack([np.cos(phi) * np.cos(lam), np.cos(phi) * np.sin(lam), np.sin(phi)], -1)


def east_north(latitude, longitude):
    phi, lam = np.deg2rad(latitude), np.deg2rad(longitude)
    east = np.stack([-np.sin(lam), np.cos(lam), np.zeros_like(lam)], -1)
    north = np.stack([-np.sin(phi) * np.cos(lam), -np.sin(phi) * np.sin(lam), np.cos(phi)], -1)
    return east, north


def to_east_north(latitude, longitude, vector):
    east, north = east_north(latitude, longitude)
    return np.sum(vector * east, -1), np.sum(vector * north, -1)


def solid_body_wind(latitude, longitude, rotation_vector):
    return to_east_north(latitude, longitude,
                         np.cross(rotation_vector, R * unit_vector(latitude, longitude)))


def potential_wind(latitude, longitude, amplitude, direction):
    r_hat = unit_vector(latitude, longitude)
    vector = amplitude / R * (direction - (r_hat @ direction)[..., None] * r_hat)
    return to_east_north(latitude, longitude, vector)


def triangle(latitude, longitude, first_bearing, side_m=300e3):
    """Equilateral-looking triangle: vertices at side / sqrt(3) from the centre."""
    bearings = first_bearing + np.array([0.0, 120.0, 240.0])
    return destination(latitude, longitude, bearings, side_m / np.sqrt(3.0))


def pentagon(latitude, longitude, first_bearing):
    bearings = first_bearing + np.array([0.0, 65.0, 150.0, 215.0, 290.0])
    return destination(latitude, longitude, bearings, np.array([180, 240, 150, 210, 260]) * 1e3)


def plane_linear_winds(latitudes, longitudes, gradients, origin_wind):
    """True (east, north) winds of a plane-linear field; gradients (levels, 4) = a, b, c, d."""
    centre = spherical_centroid(latitudes, longitudes)
    x, y, north_angle = tangent_plane_coordinates(latitudes, longitudes, *centre)
    a, b, c, d = (gradients[:, i:i + 1] for i in range(4))
    u_plane = origin_wind[0] + a * x + b * y
    v_plane = origin_wind[1] + c * x + d * y
    return rotate_wind_to_plane(u_plane, v_plane, -north_angle)


# --- winds ---------------------------------------------------------------------------

# WMO convention (WMO-No. 306 / WMO-No. 8, direction the wind blows FROM, clockwise from
# true north; from memory): the sign table below follows from that definition.
@pytest.mark.parametrize("direction, speed, want_u, want_v", [
    (0.0, 10.0, 0.0, -10.0),      # from north: blows towards south, v < 0
    (90.0, 10.0, -10.0, 0.0),     # from east: u < 0
    (180.0, 10.0, 0.0, 10.0),     # from south: v > 0
    (270.0, 10.0, 10.0, 0.0),     # from west: u > 0
    (45.0, 10.0, -10.0 / np.sqrt(2.0), -10.0 / np.sqrt(2.0)),  # from north-east
    (360.0, 4.0, 0.0, -4.0),      # 360 is north too
])
def test_wind_components_follow_wmo_convention(direction, speed, want_u, want_v):
    u, v = wind_components(direction, speed)
    assert_allclose([u, v], [want_u, want_v], atol=1e-12)  # WMO convention, from memory


@pytest.mark.parametrize("u, v, want_direction", [
    (0.0, -10.0, 360.0),   # from north is 360, not 0 (WMO code table 0877, from memory)
    (-10.0, 0.0, 90.0),
    (0.0, 10.0, 180.0),
    (10.0, 0.0, 270.0),
    (5.0, 5.0, 225.0),     # blowing towards north-east: from south-west
])
def test_wind_direction_table(u, v, want_direction):
    direction, speed = wind_direction_and_speed(u, v)
    assert_allclose(direction, want_direction, atol=1e-9)  # WMO convention, from memory
    assert_allclose(speed, np.hypot(u, v), rtol=1e-15)     # Pythagoras, exact


def test_calm_wind_direction_is_zero_or_nan():
    direction, speed = wind_direction_and_speed(0.0, 0.0)
    assert direction == 0.0 and speed == 0.0        # WMO code table 0877: 00 = calm (memory)
    direction, _ = wind_direction_and_speed([0.0, 3.0], [0.0, 0.0], calm_direction=np.nan)
    assert np.isnan(direction[0]) and direction[1] == 270.0  # 3 m/s eastward: from west


@given(st.floats(0.0, 360.0), st.floats(0.1, 120.0))
def test_wind_round_trip(direction, speed):
    u, v = wind_components(direction, speed)
    back_direction, back_speed = wind_direction_and_speed(u, v)
    # inverse functions: exact up to rounding; north comes back as 360 (convention above)
    difference = (back_direction - direction + 180.0) % 360.0 - 180.0
    assert abs(difference) < 1e-9 and 0.0 < back_direction <= 360.0
    assert_allclose(back_speed, speed, rtol=1e-12)


# --- projection and rotation ------------------------------------------------------------

@pytest.mark.parametrize("centre_latitude", [10.0, 45.0, 70.0, -35.0])
def test_north_angle_is_the_image_of_local_north(centre_latitude):
    """The returned angle equals the bearing of a small northward step on the plane
    (finite difference of the projection itself; error O(step), step 1e-6 deg)."""
    latitudes, longitudes = pentagon(centre_latitude, 20.0, 10.0)
    x, y, north_angle = tangent_plane_coordinates(latitudes, longitudes, centre_latitude, 20.0)
    x2, y2, _ = tangent_plane_coordinates(latitudes + 1e-6, longitudes, centre_latitude, 20.0)
    assert_allclose(north_angle, np.arctan2(x2 - x, y2 - y), atol=1e-7)  # finite difference
    # first-order meridian convergence -(lam - lam0) sin(phi0) (spherical trigonometry,
    # from memory); the neglected terms are O(c) relative, c <= 260 km / R = 0.04
    first_order = -np.deg2rad(longitudes - 20.0) * np.sin(np.deg2rad(centre_latitude))
    assert_allclose(north_angle, first_order, rtol=0.1, atol=1e-4)


def test_stereographic_scale_and_centre():
    """Conformal with scale k = 2 / (1 + cos c): the plane distance from the centre is
    2 R tan(c / 2) (Snyder 1987, stereographic, from memory)."""
    latitudes, longitudes = pentagon(45.0, 10.0, 0.0)
    x, y, _ = tangent_plane_coordinates(latitudes, longitudes, 45.0, 10.0)
    angle = np.arccos(unit_vector(latitudes, longitudes) @ unit_vector(45.0, 10.0))
    assert_allclose(np.hypot(x, y), 2.0 * R * np.tan(angle / 2.0), rtol=1e-12)
    assert_allclose(tangent_plane_coordinates(45.0, 10.0, 45.0, 10.0), 0.0, atol=1e-9)


# --- plane-linear fields: exact by construction --------------------------------------

GRADIENTS = np.array([[2e-5, -1e-5, 3e-5, -0.5e-5],    # levels x (a, b, c, d) [1/s]
                      [-4e-6, 7e-6, -2e-6, 1.1e-5],
                      [0.0, 0.0, 0.0, 0.0]])


@pytest.mark.parametrize("centre_latitude", [10.0, 45.0, 70.0, -35.0])
@pytest.mark.parametrize("first_bearing", [0.0, 37.0, 110.0])
@pytest.mark.parametrize("network", ["triangle", "pentagon"])
def test_linear_field_recovered(centre_latitude, first_bearing, network):
    make = triangle if network == "triangle" else pentagon
    latitudes, longitudes = make(centre_latitude, -70.0, first_bearing)
    u, v = plane_linear_winds(latitudes, longitudes, GRADIENTS, (12.0, -4.0))
    result = station_polygon_divergence(latitudes, longitudes, u, v)
    # exact by construction: divergence a + d, vorticity c - b; rounding only
    assert_allclose(result.divergence, GRADIENTS[:, 0] + GRADIENTS[:, 3], rtol=0, atol=1e-17)
    assert_allclose(result.vorticity, GRADIENTS[:, 2] - GRADIENTS[:, 1], rtol=0, atol=1e-17)
    assert_allclose(result.fit.u_at_origin, 12.0, atol=1e-10)   # by construction
    assert_allclose(result.fit.v_at_origin, -4.0, atol=1e-10)   # by construction
    assert result.divergence.shape == (3,)
    assert result.warnings == []


def test_three_station_fit_equals_plane_line_integral():
    """Bellamy (1949): for three stations the fitted divergence and vorticity equal the
    line integrals (Green's theorem) around the triangle with winds linear along each side.
    Computed here independently: sum over sides of length x mean normal (tangential)
    wind, over the shoelace area. Arbitrary winds; agreement to rounding (exact theory)."""
    rng = np.random.default_rng(1949)
    x = np.array([-120e3, 150e3, 10e3])
    y = np.array([-80e3, -40e3, 170e3])       # anticlockwise
    u = rng.normal(10.0, 8.0, size=(4, 3))
    v = rng.normal(0.0, 8.0, size=(4, 3))
    xn, yn = np.roll(x, -1), np.roll(y, -1)
    side_x, side_y = xn - x, yn - y
    area = 0.5 * np.sum(x * yn - xn * y)
    u_mean, v_mean = 0.5 * (u + np.roll(u, -1, axis=1)), 0.5 * (v + np.roll(v, -1, axis=1))
    flux = np.sum(u_mean * side_y - v_mean * side_x, axis=1)        # outward normal (dy, -dx)
    circulation = np.sum(u_mean * side_x + v_mean * side_y, axis=1)
    fit = linear_wind_fit(x, y, u, v)
    assert_allclose(fit.divergence, flux / area, rtol=1e-10)        # Green's theorem, exact
    assert_allclose(fit.vorticity, circulation / area, rtol=1e-10)  # Stokes, exact


def test_fit_with_more_stations_is_least_squares():
    """Five stations, non-linear winds: the fit equals numpy.linalg.lstsq (numpy 2.x)."""
    rng = np.random.default_rng(5)
    x = rng.uniform(-2e5, 2e5, 5)
    y = rng.uniform(-2e5, 2e5, 5)
    u, v = rng.normal(size=5) * 5, rng.normal(size=5) * 5
    design = np.stack([np.ones(5), x, y], axis=1)
    cu = np.linalg.lstsq(design, u, rcond=None)[0]
    cv = np.linalg.lstsq(design, v, rcond=None)[0]
    fit = linear_wind_fit(x, y, u, v)
    assert_allclose([fit.u_at_origin, fit.du_dx, fit.du_dy], cu, rtol=1e-9)  # numpy lstsq
    assert_allclose(fit.divergence, cu[1] + cv[2], rtol=1e-9)               # numpy lstsq


# --- rotation matters: solid body at 60 N --------------------------------------------

def centre_angle(latitudes, longitudes):
    """Largest angular distance c of a station from the centroid. [rad]"""
    centre = unit_vector(*spherical_centroid(latitudes, longitudes))
    return float(np.max(np.arccos(np.clip(unit_vector(latitudes, longitudes) @ centre, -1, 1))))


def test_meridian_convergence_rotation_matters_at_60n():
    """Solid-body field at 60 N: 20 m/s towards the north-east at the centroid plus a
    vortex of relative vorticity 1e-5 s-1 there; divergence 0 (exact on the sphere).

    Measured (stations 300 km apart): with rotation vorticity 0.99982e-5, divergence
    ~1e-20; without rotation vorticity 6.17e-6 (38 % low) and divergence 3.76e-6 s-1.
    First-order estimate of the unrotated errors, from gamma ~ -x tan(phi0) / R:
    vorticity -u0 tan(phi0) / R = -3.84e-6, divergence +v0 tan(phi0) / R = +3.84e-6.
    """
    latitudes, longitudes = triangle(60.0, 10.0, 10.0)
    centre = spherical_centroid(latitudes, longitudes)
    r_centre = unit_vector(*centre)
    east0, north0 = east_north(*centre)
    speed, vorticity = 20.0, 1e-5
    heading = np.sin(np.pi / 4) * east0 + np.cos(np.pi / 4) * north0
    rotation_vector = speed / R * np.cross(r_centre, heading) + 0.5 * vorticity * r_centre
    u, v = solid_body_wind(latitudes, longitudes, rotation_vector)
    assert_allclose(to_east_north(*centre, np.cross(rotation_vector, R * r_centre)),
                    [speed / np.sqrt(2.0)] * 2, rtol=1e-12)       # construction check

    rotated = station_polygon_divergence(latitudes, longitudes, u, v)
    c = centre_angle(latitudes, longitudes)
    # exact on the sphere: vorticity 2 W . r = 1e-5, divergence 0; the plane's error is
    # second order, the stereographic scale k = 1 + c**2 / 4 (derived): allow c**2 / 2
    assert abs(rotated.vorticity - vorticity) <= 0.5 * c**2 * vorticity
    assert abs(rotated.divergence) <= 0.5 * c**2 * speed / (R * c)

    x, y, _ = tangent_plane_coordinates(latitudes, longitudes, *centre)
    unrotated = linear_wind_fit(x, y, u, v)
    tangent = np.tan(np.deg2rad(centre[0]))
    u0 = v0 = speed / np.sqrt(2.0)
    # first-order estimate (derived above); neglected terms are O(c tan(phi0)) ~ 5 %
    assert_allclose(unrotated.vorticity - vorticity, -u0 * tangent / R, rtol=0.1)
    assert_allclose(unrotated.divergence, v0 * tangent / R, rtol=0.1)
    assert abs(unrotated.vorticity - vorticity) > 0.3 * vorticity  # "large fraction"


# --- projection error against the exact spherical line integral ----------------------

def combined_field(latitudes, longitudes, centre):
    """Solid body (20 m/s towards 60 deg, vorticity 1e-5) plus potential (divergence
    1e-5 at the centre); both exact on the sphere (module docstring)."""
    r_centre = unit_vector(*centre)
    east0, north0 = east_north(*centre)
    heading = np.sin(np.deg2rad(60)) * east0 + np.cos(np.deg2rad(60)) * north0
    rotation_vector = 20.0 / R * np.cross(r_centre, heading) + 0.5e-5 * r_centre
    u1, v1 = solid_body_wind(latitudes, longitudes, rotation_vector)
    # divergence -2 A (p . r) / R**2 = 1e-5 at the centre for p = r_centre:
    u2, v2 = potential_wind(latitudes, longitudes, -0.5e-5 * R**2, r_centre)
    return u1 + u2, v1 + v2


def test_projection_error_against_spherical_line_integral_45n():
    """Triangle of ~300 km sides at 45 N. Measured: plane fit 0.999815e-5, spherical
    line integral 0.999908e-5 for both divergence and vorticity (exact 1e-5): relative
    difference 9.2e-5 = c**2 / 8 with c = 0.0272 (vertex distance from the centroid).
    Bound (derived): both errors are second order in c and the larger, the plane's, is
    the stereographic scale c**2 / 4 = 1.85e-4; assert the difference is below c**2 / 4."""
    latitudes, longitudes = triangle(45.0, 10.0, 25.0)
    centre = spherical_centroid(latitudes, longitudes)
    u, v = combined_field(latitudes, longitudes, centre)
    plane = station_polygon_divergence(latitudes, longitudes, u, v)
    sphere = spherical_line_integral_divergence(latitudes, longitudes, u, v)
    c = centre_angle(latitudes, longitudes)
    assert_allclose(c, 300e3 / np.sqrt(3) / R, rtol=1e-3)   # construction check
    bound = c**2 / 4.0
    assert abs(plane.divergence / sphere.divergence - 1.0) < bound
    assert abs(plane.vorticity / sphere.vorticity - 1.0) < bound
    # both against the exact centre values 1e-5 (module docstring), same second-order bound
    assert abs(sphere.divergence / 1e-5 - 1.0) < bound
    assert abs(plane.divergence / 1e-5 - 1.0) < 2.0 * bound
    # spherical area vs plane area: stereographic area scale k**2 ~ 1 + c**2 / 2 at most
    assert abs(plane.area / sphere.area - 1.0) < c**2 / 2.0


def test_spherical_line_integral_orientation_and_levels():
    """Vertex order must not matter (outward normal from the orientation); levels are
    vectorised. Solid body: divergence 0 exactly on the sphere, vorticity 2 W . r."""
    latitudes, longitudes = triangle(-35.0, 150.0, 5.0)
    centre = spherical_centroid(latitudes, longitudes)
    r_centre = unit_vector(*centre)
    winds = [solid_body_wind(latitudes, longitudes, scale * 0.5e-5 * r_centre)
             for scale in (1.0, -2.0)]
    u = np.stack([w[0] for w in winds])
    v = np.stack([w[1] for w in winds])
    forward = spherical_line_integral_divergence(latitudes, longitudes, u, v)
    backward = spherical_line_integral_divergence(latitudes[::-1], longitudes[::-1],
                                                  u[:, ::-1], v[:, ::-1])
    assert_allclose(forward.vorticity, backward.vorticity, rtol=1e-12)  # same triangle
    c = centre_angle(latitudes, longitudes)
    # vorticity 2 W . r_hat varies as cos(angle) over the triangle: second order in c
    assert_allclose(forward.vorticity, [1e-5, -2e-5], rtol=c**2)
    assert_allclose(forward.divergence, 0.0, atol=1e-18)   # solid body: exactly 0
    # triangle area against the planar equilateral value sqrt(3)/4 s**2 (second order)
    assert_allclose(forward.area, np.sqrt(3) / 4 * (300e3) ** 2, rtol=c**2)


# --- metpy 1.7.1 gridded divergence -----------------------------------------------------

def test_fit_agrees_with_metpy_gridded_divergence():
    """metpy 1.7.1 metpy.calc.divergence / vorticity on a 0.1 deg latitude-longitude grid
    (spherical map factors from a pyproj sphere of our radius) of the same plane-linear
    field, at the grid point on the centroid. The field's divergence on the sphere equals
    the plane's a + d at the centre (conformal map, scale stationary there). metpy uses
    second-order centred differences: relative truncation error ~ (grid step / R)**2
    times O(1) factors, (0.1 deg in rad)**2 = 3.0e-6; tolerance 10x that. Measured:
    divergence 1.8e-6, vorticity 7.6e-8 relative; the error falls 4x from 0.2 to 0.1 deg."""
    import metpy.calc as mpcalc
    from metpy.units import units

    latitudes, longitudes = triangle(45.0, 10.0, 0.0)
    clat, clon = spherical_centroid(latitudes, longitudes)
    gradients = GRADIENTS[:1]
    u, v = plane_linear_winds(latitudes, longitudes, gradients, (15.0, 5.0))
    ours = station_polygon_divergence(latitudes, longitudes, u, v)
    sphere = pyproj.CRS(f"+proj=longlat +R={R} +no_defs")

    def metpy_at_centre(step_deg):
        grid_lat = clat + step_deg * np.arange(-5, 6)
        grid_lon = clon + step_deg * np.arange(-5, 6)
        lon2, lat2 = np.meshgrid(grid_lon, grid_lat)
        x, y, north_angle = tangent_plane_coordinates(lat2, lon2, clat, clon)
        a, b, c, d = gradients[0]
        ut, vt = rotate_wind_to_plane(15.0 + a * x + b * y, 5.0 + c * x + d * y, -north_angle)
        grid = dict(latitude=grid_lat * units.degree, longitude=grid_lon * units.degree,
                    crs=sphere)
        div = mpcalc.divergence(ut * units("m/s"), vt * units("m/s"), **grid)
        vor = mpcalc.vorticity(ut * units("m/s"), vt * units("m/s"), **grid)
        return div[5, 5].m_as("1/s"), vor[5, 5].m_as("1/s")

    step = 0.1
    tolerance = 10.0 * np.deg2rad(step) ** 2
    div_metpy, vor_metpy = metpy_at_centre(step)
    assert_allclose(ours.divergence[0], div_metpy, rtol=tolerance)   # metpy 1.7.1
    assert_allclose(ours.vorticity[0], vor_metpy, rtol=tolerance)    # metpy 1.7.1
    coarse_error = abs(metpy_at_centre(2 * step)[0] / ours.divergence[0] - 1.0)
    fine_error = abs(div_metpy / ours.divergence[0] - 1.0)
    assert 3.0 < coarse_error / fine_error < 5.0   # second-order differences: ratio 4


# --- shape diagnostics and warnings ----------------------------------------------------

def test_equilateral_triangle_shape():
    latitudes, longitudes = triangle(45.0, 10.0, 0.0)
    centre = spherical_centroid(latitudes, longitudes)
    x, y, _ = tangent_plane_coordinates(latitudes, longitudes, *centre)
    shape = polygon_shape(latitudes, longitudes, x, y)
    # equilateral: 60 deg angles and collinearity 1 (geometry, exact in the plane);
    # the projected triangle deviates at second order in c (0.1 deg, 1e-3 allowed)
    assert_allclose(shape.smallest_angle_deg, 60.0, atol=0.1)
    assert_allclose(shape.collinearity, 1.0, atol=1e-3)
    # great-circle sides of the construction: 300 km to second order (rtol c**2)
    assert_allclose([shape.smallest_separation, shape.largest_separation], 300e3, rtol=1e-3)


def test_thin_triangle_and_far_stations_warn():
    latitudes = np.array([50.0, 50.0, 50.6])
    longitudes = np.array([0.0, 12.0, 6.0])          # ~860 km base, ~67 km high
    result = station_polygon_divergence(latitudes, longitudes, [1.0, 2.0, 3.0], [0, 0, 1.0])
    text = " ".join(result.warnings)
    assert "smallest interior angle" in text         # thresholds of the module
    assert "nearly in a line" in text
    assert f"more than {stations.MAXIMUM_SEPARATION_WARNING_M / 1e3:.0f} km" in text
    assert result.shape.smallest_angle_deg < stations.SMALLEST_ANGLE_WARNING_DEG


def test_close_stations_warn():
    latitudes, longitudes = triangle(45.0, 10.0, 0.0, side_m=60e3)
    result = station_polygon_divergence(latitudes, longitudes, [1.0, 2.0, 3.0], [0, 0, 1.0])
    assert len(result.warnings) == 1 and "only 60 km apart" in result.warnings[0]


def test_missing_levels_are_fitted_from_remaining_stations_or_nan():
    latitudes, longitudes = pentagon(45.0, 10.0, 0.0)
    u, v = plane_linear_winds(latitudes, longitudes, GRADIENTS, (12.0, -4.0))
    u[1, 2] = np.nan                  # level 1: one station missing, four remain
    v[2, :3] = np.nan                 # level 2: two stations remain
    result = station_polygon_divergence(latitudes, longitudes, u, v)
    # exact by construction for the levels that keep >= 3 stations
    assert_allclose(result.divergence[:2], GRADIENTS[:2, 0] + GRADIENTS[:2, 3], atol=1e-17)
    assert np.isnan(result.divergence[2]) and np.isnan(result.vorticity[2])
    assert list(result.fit.stations_used) == [5, 4, 2]
    assert any("levels 1 (0-based)" in w and "remaining" in w for w in result.warnings)
    assert any("levels 2 (0-based)" in w and "NaN" in w for w in result.warnings)


def test_too_few_stations_is_our_error():
    from layercalc.errors import LayercalcError
    with pytest.raises(LayercalcError, match="at least 3"):
        station_polygon_divergence([45.0, 46.0], [10.0, 11.0], [1.0, 2.0], [0.0, 0.0])


# --- the fit against the true field: first order in the network size --------------------

def _independent_zonal_fit(latitude, side_m, first_bearing, speed=20.0):
    """A uniform zonal wind fitted on an equilateral triangle, written apart from the
    package: vertices on great circles from (latitude, 10 E), centroid the normalised mean
    of the unit vectors, oblique stereographic plane x, y = 2R (r.e, r.n) / (1 + r.c), each
    station's wind turned to the image of its east direction (central difference of the
    projection), and the exact 3-point linear solve. Returns (vorticity / true - 1,
    divergence); true vorticity u tan(phi) / R at the centroid, true divergence 0."""
    def unit(lat, lon):
        la, lo = np.radians(lat), np.radians(lon)
        return np.array([np.cos(la) * np.cos(lo), np.cos(la) * np.sin(lo), np.sin(la)])

    def east_north(r):
        e = np.cross([0.0, 0.0, 1.0], r)
        e /= np.linalg.norm(e)
        return e, np.cross(r, e)

    def move(r, direction, angle):
        return np.cos(angle) * r + np.sin(angle) * direction

    c0 = unit(latitude, 10.0)
    e0, n0 = east_north(c0)
    points = np.array([move(c0, np.sin(b) * e0 + np.cos(b) * n0, side_m / np.sqrt(3) / R)
                       for b in np.radians(first_bearing + np.array([0.0, 120.0, 240.0]))])
    c = points.sum(axis=0) / np.linalg.norm(points.sum(axis=0))
    e, n = east_north(c)

    def project(r):
        return 2.0 * R * np.array([r @ e, r @ n]) / (1.0 + r @ c)

    xy = np.array([project(p) for p in points])
    winds = []
    for p in points:
        east = east_north(p)[0]
        image = project(move(p, east, 1e-7)) - project(move(p, east, -1e-7))
        winds.append(speed * image / np.linalg.norm(image))
    winds = np.array(winds)
    matrix = np.column_stack([np.ones(3), xy])
    cu, cv = np.linalg.solve(matrix, winds[:, 0]), np.linalg.solve(matrix, winds[:, 1])
    true = speed * (c[2] / np.sqrt(1.0 - c[2] ** 2)) / R
    return (cv[1] - cu[2]) / true - 1.0, cu[1] + cv[2]


# Figures quoted in README ("Against the true field"): a uniform 20 m/s zonal wind, first
# vertex at bearing 17 deg from the centre. Source: computed, the package against the
# independent fit above (agreeing to 1e-10 relative), both to the digits quoted.
@pytest.mark.parametrize("latitude, side_m, vorticity_error, divergence", [
    (45.0, 300e3, -0.017, 6.6e-8),
    (60.0, 600e3, -0.048, 3.3e-7),
])
def test_plane_fit_error_against_the_true_field(latitude, side_m, vorticity_error, divergence):
    latitudes, longitudes = triangle(latitude, 10.0, 17.0, side_m)
    fit = station_polygon_divergence(latitudes, longitudes, np.full(3, 20.0), np.zeros(3))
    centre = spherical_centroid(latitudes, longitudes)
    true_vorticity = 20.0 * np.tan(np.radians(centre[0])) / R   # u tan(phi) / R, v = 0
    got = (float(fit.vorticity) / true_vorticity - 1.0, float(fit.divergence))
    independent = _independent_zonal_fit(latitude, side_m, 17.0)
    assert_allclose(got, independent, rtol=1e-6)
    assert_allclose(got[0], vorticity_error, atol=0.0005)     # as README quotes
    assert_allclose(got[1], divergence, rtol=0.01)


def test_plane_fit_error_is_first_order_in_the_network_size():
    """Halving the triangle halves both errors (first order; derived: a linear fit of a
    field with curvature misses by the curvature times the station offsets), and it turns
    with the triangle as cos 3 theta and sin 3 theta (the only harmonic an equilateral
    triangle's fit of a quadratic field has; derived), so 0 deg gives the largest
    vorticity error and no divergence, 30 deg the reverse."""
    errors = np.array([_independent_zonal_fit(45.0, side, 17.0) for side in (150e3, 300e3)])
    assert_allclose(errors[1] / errors[0], [2.0, 2.0], rtol=0.02)
    for bearing, largest in ((0.0, 0), (30.0, 1)):
        latitudes, longitudes = triangle(45.0, 10.0, bearing)
        fit = station_polygon_divergence(latitudes, longitudes, np.full(3, 20.0), np.zeros(3))
        centre = spherical_centroid(latitudes, longitudes)
        relative = float(fit.vorticity) / (20.0 * np.tan(np.radians(centre[0])) / R) - 1.0
        scaled = np.abs([relative, float(fit.divergence) * R / 20.0])  # both relative to u/R
        assert scaled[largest] > 50 * scaled[1 - largest]
