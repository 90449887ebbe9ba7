"""Tests of layercalc.physics.grid: divergence on the sphere and on a Lambert grid.

Where the expected values come from:
- "analytic": fields whose divergence is known in closed form on the sphere. A velocity
  potential chi gives V = grad(chi) and div V = laplacian(chi); for the spherical harmonics
  used here laplacian(Y_l^m) = -l (l + 1) Y_l^m / a^2 (derived). Solid-body rotation about
  any axis has zero divergence (Williamson et al., 1992, J. Comput. Phys. 102, 211-224,
  test case 1 wind field; form from memory, its zero divergence derived).
- "second order": centred differences have an error proportional to the squared spacing,
  so halving the spacing divides the error by about 4 (common practice, no source); the
  checks require a factor above 3.5.
- "pyproj 3.7.2": an independent implementation of the projection (PROJ), pinned in the
  test extra.
- metpy 1.7.1 (`metpy.calc.divergence`) on real GFS winds: tests/formats/test_grid.py.
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from layercalc.physics import grid

RADIUS = 6371229.0          # the sphere NCEP grids are defined on (GRIB shape of Earth 6)
POTENTIAL = 1.0e7           # amplitude C of the velocity potential [m^2 s^-1]; made up
NAM = grid.LambertConformal(25.0, 25.0, 265.0, 25.0, RADIUS)  # NCEP grid 211 (its GRIB)


def global_grid(step):
    latitude = np.arange(90.0, -90.0 - step / 2, -step)
    longitude = np.arange(0.0, 360.0, step)
    return latitude, longitude


def potential_flow_22(latitude, longitude):
    """chi = C cos^2(phi) cos(2 lambda) (Y_2^2): u = -2 C cos(phi) sin(2 lambda) / a,
    v = -2 C cos(phi) sin(phi) cos(2 lambda) / a, div = -6 chi / a^2 (derived)."""
    phi, lam = np.deg2rad(latitude), np.deg2rad(longitude)
    u = -2 * POTENTIAL * np.cos(phi) * np.sin(2 * lam) / RADIUS
    v = -2 * POTENTIAL * np.cos(phi) * np.sin(phi) * np.cos(2 * lam) / RADIUS
    div = -6 * POTENTIAL * np.cos(phi) ** 2 * np.cos(2 * lam) / RADIUS ** 2
    return u, v, div


def solid_body(latitude, longitude, tilt_deg=40.0, speed=30.0):
    """Williamson et al. (1992) case 1 wind, axis tilted by alpha from the pole."""
    phi, lam, alpha = np.deg2rad(latitude), np.deg2rad(longitude), np.deg2rad(tilt_deg)
    u = speed * (np.cos(phi) * np.cos(alpha) + np.sin(phi) * np.cos(lam) * np.sin(alpha))
    v = -speed * np.sin(lam) * np.sin(alpha)
    return u, v


def latlon_error(step, field):
    latitude, longitude = global_grid(step)
    lat2, lon2 = np.meshgrid(latitude, longitude, indexing="ij")
    u, v, want = field(lat2, lon2)
    got = grid.divergence_latlon(u, v, latitude, longitude, RADIUS)
    inner = np.abs(latitude) < 90
    return np.abs(got - want)[inner].max(), np.abs(want).max(), got, want


def test_potential_flow_on_the_sphere_second_order():
    # analytic; second order
    error_coarse, scale, _, _ = latlon_error(2.5, potential_flow_22)
    error_fine, _, _, _ = latlon_error(1.25, potential_flow_22)
    assert error_coarse / scale < 2e-3          # measured 1.27e-3 of the field's maximum
    assert error_coarse / error_fine > 3.5


def test_solid_body_rotation_has_no_divergence():
    # analytic (Williamson et al. 1992 case 1); second order. The truncation error of
    # du/dlambda / (a cos phi) grows as tan(phi): at 2.5 degrees measured 3.5e-4 speed/a
    # within 60 degrees of the equator and 4.7e-3 at 87.5 degrees (derived: the centred
    # difference of sin(lambda) is sin(lambda) (1 - dlambda^2 / 6), times tan(phi)).
    errors = []
    speed_over_radius = 30.0 / RADIUS
    for step in (2.5, 1.25):
        latitude, longitude = global_grid(step)
        lat2, lon2 = np.meshgrid(latitude, longitude, indexing="ij")
        u, v = solid_body(lat2, lon2)
        div = grid.divergence_latlon(u, v, latitude, longitude, RADIUS)
        errors.append(np.abs(div[np.abs(latitude) <= 60]).max())
        assert errors[-1] < 1e-3 * speed_over_radius
        assert np.abs(div).max() < 1e-2 * speed_over_radius
    assert errors[0] / errors[1] > 3.5


def test_polar_cap_mean_is_exact_for_y10():
    # chi = C sin(phi): v = C cos(phi) / a, div = -2 C sin(phi) / a^2; the cap mean of
    # sin(phi) between the pole and phi1 is (1 + sin phi1) / 2, so the cap's mean
    # divergence is -C (1 + sin phi1) / a^2 (derived); the module's flux formula gives it
    # exactly.
    latitude, longitude = global_grid(2.5)
    lat2 = np.broadcast_to(latitude[:, None], (latitude.size, longitude.size))
    v = POTENTIAL * np.cos(np.deg2rad(lat2)) / RADIUS
    div = grid.divergence_latlon(np.zeros_like(v), v, latitude, longitude, RADIUS)
    phi1 = np.deg2rad(latitude[1])
    assert_allclose(div[0], -POTENTIAL * (1 + np.sin(phi1)) / RADIUS ** 2, rtol=1e-12)
    assert_allclose(div[-1], +POTENTIAL * (1 + np.sin(phi1)) / RADIUS ** 2, rtol=1e-12)
    # on a grid that does not wrap the pole rows are nan (module docstring)
    part = grid.divergence_latlon(np.zeros_like(v)[:, :40], v[:, :40], latitude,
                                  longitude[:40], RADIUS)
    assert np.isnan(part[0]).all() and np.isfinite(part[1:-1]).all()


def test_the_seam_is_not_an_edge():
    # rolling a global field in longitude rolls its divergence (derived: the formula has
    # no preferred meridian), including the columns next to the seam
    latitude, longitude = global_grid(2.5)
    lat2, lon2 = np.meshgrid(latitude, longitude, indexing="ij")
    u, v, _ = potential_flow_22(lat2, lon2 + 17.0)
    div = grid.divergence_latlon(u, v, latitude, longitude, RADIUS)
    shifted = grid.divergence_latlon(np.roll(u, 50, -1), np.roll(v, 50, -1), latitude,
                                     (longitude + 125.0) % 360.0 - 0.0, RADIUS,
                                     periodic=True)
    assert_allclose(np.roll(div, 50, -1)[1:-1], shifted[1:-1], rtol=1e-9, atol=1e-20)


def test_lambert_projection_against_pyproj():
    pyproj = pytest.importorskip("pyproj")
    proj = pyproj.Proj(proj="lcc", lat_1=25, lat_2=25, lat_0=25, lon_0=265, R=RADIUS)
    latitude = np.array([12.19, 25.0, 40.0, 57.3, 30.0])
    longitude = np.array([226.541, 265.0, 300.0, 310.0, 200.0])
    x, y = grid.lambert_forward(NAM, latitude, longitude)
    want_x, want_y = proj(longitude, latitude)
    assert_allclose(x, want_x, atol=1e-3)      # pyproj 3.7.2, millimetres
    assert_allclose(y, want_y, atol=1e-3)
    back_lat, back_lon = grid.lambert_inverse(NAM, x, y)
    assert_allclose(back_lat, latitude, atol=1e-9)
    assert_allclose((back_lon - longitude + 180) % 360 - 180, 0, atol=1e-9)
    factors = proj.get_factors(longitude, latitude)
    assert_allclose(grid.lambert_map_factor(NAM, latitude), factors.meridional_scale,
                    rtol=1e-9)                  # pyproj 3.7.2
    # the grid's y axis against true north: the direction of a small step north, projected
    # by pyproj, measured counter-clockwise from the y axis
    rotation = np.rad2deg(grid.lambert_grid_rotation(NAM, longitude))
    north_x, north_y = proj(longitude, latitude + 1e-5)
    direction = np.rad2deg(np.arctan2(-(north_x - want_x), north_y - want_y))
    assert_allclose(rotation, direction, atol=1e-5)
    # pyproj 3.7.2's meridian convergence is the same angle, same sign
    assert_allclose(rotation, factors.meridian_convergence, atol=1e-9)


def test_secant_lambert_against_pyproj():
    pyproj = pytest.importorskip("pyproj")
    projection = grid.LambertConformal(33.0, 45.0, -97.0, 40.0, RADIUS)
    proj = pyproj.Proj(proj="lcc", lat_1=33, lat_2=45, lat_0=40, lon_0=-97, R=RADIUS)
    latitude, longitude = np.array([20.0, 33.0, 50.0]), np.array([-120.0, -97.0, -70.0])
    x, y = grid.lambert_forward(projection, latitude, longitude)
    assert_allclose(np.stack([x, y]), np.stack(proj(longitude, latitude)), atol=1e-3)
    assert_allclose(grid.lambert_map_factor(projection, latitude),
                    proj.get_factors(longitude, latitude).meridional_scale, rtol=1e-9)


def test_wind_rotation_round_trip_and_direction():
    # a wind blowing to true north, seen on the grid east of the central meridian, has a
    # negative x component (north is turned counter-clockwise there; derived in
    # lambert_grid_rotation)
    rotation = grid.lambert_grid_rotation(NAM, np.array([300.0]))
    u_grid, v_grid = grid.earth_to_grid_winds(0.0, 10.0, rotation)
    assert u_grid[0] < 0 and v_grid[0] > 0
    back = grid.grid_to_earth_winds(u_grid, v_grid, rotation)
    assert_allclose(back, [[0.0], [10.0]], atol=1e-12)


def nam_plane():
    x0, y0 = grid.lambert_forward(NAM, 12.19, 226.541)   # first point of grid 211 (GRIB)
    x = x0 + 81271.0 * np.arange(93)
    y = y0 + 81271.0 * np.arange(65)
    latitude, longitude = grid.lambert_inverse(NAM, *np.meshgrid(x, y))
    return x, y, latitude, longitude


def test_projected_divergence_of_a_potential_flow():
    # analytic field sampled on grid 211 (81 km): the map-factor form reproduces it
    x, y, latitude, longitude = nam_plane()
    u, v, want = potential_flow_22(latitude, longitude)
    u_grid, v_grid = grid.earth_to_grid_winds(u, v, grid.lambert_grid_rotation(NAM, longitude))
    got = grid.divergence_projected(u_grid, v_grid, x, y, grid.lambert_map_factor(NAM, latitude))
    inner = (slice(1, -1), slice(1, -1))
    assert np.abs(got - want)[inner].max() < 1e-3 * np.abs(want).max()  # measured 1.5e-4
    # without the map factor the error is of the order of m^2 - 1 (measured 0.057)
    plain = grid.divergence_projected(u_grid, v_grid, x, y, np.ones_like(latitude))
    assert np.abs(plain - want)[inner].max() > 0.03 * np.abs(want).max()
    # edges: second-order one-sided, still close (measured 2.3e-4)
    assert np.abs(got - want).max() < 1e-3 * np.abs(want).max()


def test_solid_body_rotation_on_the_lambert_grid():
    x, y, latitude, longitude = nam_plane()
    u, v = solid_body(latitude, longitude)
    u_grid, v_grid = grid.earth_to_grid_winds(u, v, grid.lambert_grid_rotation(NAM, longitude))
    div = grid.divergence_projected(u_grid, v_grid, x, y, grid.lambert_map_factor(NAM, latitude))
    assert np.abs(div).max() < 1e-3 * 30.0 / RADIUS    # analytic: zero (measured 1.4e-4)


def test_bilinear_weights_reproduce_a_linear_field():
    # bilinear interpolation is exact for f = a + b r + c s (derived)
    rows, columns, weights = grid.bilinear_weights(2.3, 5.75, (10, 12))
    values = 1.5 + 2.0 * rows + 3.0 * columns
    assert_allclose(np.sum(weights * values), 1.5 + 2.0 * 2.3 + 3.0 * 5.75)
    assert_allclose(weights.sum(), 1.0)
    rows, columns, weights = grid.bilinear_weights(1.0, 11.5, (3, 12), periodic_x=True)
    assert sorted(set(columns.tolist())) == [0, 11]
    with pytest.raises(ValueError):
        grid.bilinear_weights(-0.5, 1.0, (3, 4))
