"""Tests of the uncertainty modules of layercalc.physics: uncertainty (propagation
matrices), error_models and ensembles (Monte Carlo).

Where the expected values come from:
- "finite differences": the existing physics functions (stations, levels, kinematic) are
  linear in the winds and divergences, so a central difference with any step equals the
  derivative up to rounding; the matrices must match them to 1e-10 (relative to the
  largest entry of each row).
- "derived": a closed form worked out in the docstring or comment beside the check.
- Monte Carlo checks state their bound and how it follows from the sampling error of the
  statistic: for N members the sample standard deviation s of a variable with kurtosis
  kappa has relative standard error about sqrt((kappa - 1) / N) / 2 (delta method on
  s^2, whose relative standard error is sqrt((kappa - 1) / N)); kappa = 3 for a normal
  and 9/5 for a uniform variable (derived). Bounds are 5 standard errors; the generator
  is seeded, so the checks are reproducible.
"""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from layercalc.physics import ensembles as ens, error_models as err, kinematic, levels
from layercalc.physics import uncertainty as unc
from layercalc.physics.stations import (
    linear_wind_fit, spherical_centroid, station_polygon_divergence, tangent_plane_coordinates,
)
from layercalc.physics.winds import wind_components

# Made-up network of worked_cases/three_stations.layers (Northfield, Eastmoor, Southvale).
LATITUDES = np.array([47.10, 45.85, 44.70])
LONGITUDES = np.array([-31.70, -28.75, -32.30])
PRESSURE = np.array([1000, 925, 850, 700, 500, 400, 300, 250, 200], float) * 100.0
DIRECTION = np.array([[143, 168, 194], [180, 187, 202], [200, 202, 212], [219, 219, 222],
                      [229, 232, 229], [234, 238, 233], [239, 243, 238], [239, 243, 238],
                      [244, 248, 243]], float)
SPEED_KT = np.array([[9, 17, 12], [17, 27, 23], [23, 32, 29], [31, 38, 36], [47, 53, 50],
                     [60, 66, 60], [76, 83, 75], [84, 90, 82], [74, 78, 73]], float)
SPEED = SPEED_KT * err.KNOT


def relative_to_rows(got, want):
    """Largest |got - want| per row over the row's largest |want| (all rows); rows that
    are zero up to rounding against 1e-3 of the matrix's largest |want|."""
    got, want = np.atleast_2d(got), np.atleast_2d(want)
    scale = np.max(np.abs(want), axis=-1, keepdims=True)
    # a row that is zero up to rounding is measured against the whole matrix
    scale = np.maximum(scale, 1e-3 * np.max(np.abs(want)))
    return float(np.max(np.abs(got - want) / scale))


def central_differences(function, point, step=1.0):
    """Jacobian of function at point (flat vector) by central differences, (outputs, inputs)."""
    point = np.asarray(point, dtype=float)
    columns = []
    for i in range(point.size):
        delta = np.zeros_like(point)
        delta[i] = step
        columns.append((np.asarray(function(point + delta)) - np.asarray(function(point - delta)))
                       / (2.0 * step))
    return np.stack(columns, axis=-1)


def fit_fields(latitudes, longitudes, flat, level_count):
    """Fitted (u0, v0, du_dx, du_dy, dv_dx, dv_dy) per level from a flat wind vector."""
    winds = flat.reshape(level_count, 2, -1)
    fit = station_polygon_divergence(latitudes, longitudes, winds[:, 0], winds[:, 1]).fit
    return np.stack([getattr(fit, name) for name in unc.FIT_FIELDS], axis=-1)


# ----------------------------------------------------------------- the fit matrix
@pytest.mark.parametrize("latitudes, longitudes", [
    (LATITUDES, LONGITUDES),
    (np.array([60.0, 61.5, 59.2, 60.4, 62.0]), np.array([10.0, 12.5, 13.0, 8.9, 10.7])),
    (np.array([-35.0, -33.1, -36.2, -34.4]), np.array([150.0, 151.8, 152.2, 149.1])),
])
def test_station_fit_matrix_equals_finite_differences_of_the_fit(latitudes, longitudes):
    # source: finite differences of stations.station_polygon_divergence (linear in winds)
    rng = np.random.default_rng(4)
    flat = rng.normal(0.0, 20.0, size=2 * latitudes.size)
    want = central_differences(lambda w: fit_fields(latitudes, longitudes, w, 1)[0], flat)
    got = unc.station_fit_matrix(latitudes, longitudes)
    assert relative_to_rows(got, want) < 1e-10
    # and the matrix reproduces the fitted values themselves (linear, no offset)
    assert relative_to_rows(got @ flat, fit_fields(latitudes, longitudes, flat, 1)[0]) < 1e-10


def test_fit_matrix_with_a_missing_station_matches_the_fit_without_it():
    # source: finite differences of stations.station_polygon_divergence with one NaN wind
    latitudes = np.array([60.0, 61.5, 59.2, 60.4, 62.0])
    longitudes = np.array([10.0, 12.5, 13.0, 8.9, 10.7])
    valid = np.array([True, True, False, True, True])
    flat = np.random.default_rng(5).normal(0.0, 15.0, size=10)

    def fitted(w):
        w = w.copy()
        w[[2, 7]] = np.nan
        return fit_fields(latitudes, longitudes, w, 1)[0]

    want = central_differences(fitted, flat)
    want[:, [2, 7]] = 0.0   # the NaN station does not enter (difference is NaN - NaN)
    got = unc.station_fit_matrix(latitudes, longitudes, valid=valid)
    assert relative_to_rows(got, want) < 1e-10
    # too few stations: NaN rows, as the fit gives NaN (stations.linear_wind_fit)
    assert np.isnan(unc.station_fit_matrix(latitudes, longitudes,
                                           valid=[True, True, False, False, False])).all()


def test_divergence_rows_are_the_fit_gradient_sums():
    # source: definitions divergence = du_dx + dv_dy, vorticity = dv_dx - du_dy
    matrix = unc.station_fit_matrix(LATITUDES, LONGITUDES)
    rows = unc.divergence_vorticity_matrix(matrix)
    flat = np.concatenate(wind_components(DIRECTION[6], SPEED[6]))
    result = station_polygon_divergence(LATITUDES, LONGITUDES, *wind_components(DIRECTION[6],
                                                                                 SPEED[6]))
    assert_allclose(rows @ flat, [result.divergence, result.vorticity], rtol=1e-10)


# ----------------------------------------------------------------- Davies-Jones forms
def test_triangle_divergence_error_formula_equals_exact_propagation():
    # source: derived (docstring of divergence_variance_factor); the form
    # sigma sqrt(L1^2 + L2^2 + L3^2) / (2 A) is the one Davies-Jones (1993, MWR 121, 713)
    # gives, as cited in the issue (paper not re-read)
    sigma = 1.5
    centre = spherical_centroid(LATITUDES, LONGITUDES)
    x, y, _ = tangent_plane_coordinates(LATITUDES, LONGITUDES, *centre)
    sides = np.hypot(np.roll(x, -1) - x, np.roll(y, -1) - y)
    area = 0.5 * abs(np.sum(x * np.roll(y, -1) - np.roll(x, -1) * y))
    formula = sigma * np.sqrt(np.sum(sides**2)) / (2.0 * area)
    rows = unc.divergence_vorticity_matrix(unc.station_fit_matrix(LATITUDES, LONGITUDES))
    covariance = unc.propagate_covariance(rows, sigma**2 * np.eye(6))
    assert_allclose(np.sqrt(np.diag(covariance)), [formula, formula], rtol=1e-12)
    assert_allclose(sigma * np.sqrt(unc.divergence_variance_factor(x, y)), formula, rtol=1e-12)
    # about 1.2e-5 s^-1 for this network at 1.5 m/s: larger than a typical divergence
    assert 1.0e-5 < formula < 1.4e-5


@pytest.mark.parametrize("side", [100e3, 265e3, 600e3])
def test_equilateral_triangle_gives_two_sigma_over_side(side):
    # source: derived (2 sigma / L; Davies-Jones 1993 as cited in the issue)
    angles = np.deg2rad([90.0, 210.0, 330.0]) + 0.3
    x, y = side / np.sqrt(3.0) * np.cos(angles), side / np.sqrt(3.0) * np.sin(angles)
    rows = unc.divergence_vorticity_matrix(unc.plane_fit_matrix(x, y, north_angle=[0.1, -0.2,
                                                                                     0.05]))
    sigma = 2.0
    got = np.sqrt(np.diag(unc.propagate_covariance(rows, sigma**2 * np.eye(6))))
    assert_allclose(got, 2.0 * sigma / side, rtol=1e-12)


@pytest.mark.parametrize("height", [260e3, 50e3, 10e3])
def test_triangle_formula_holds_for_thin_triangles(height):
    # source: derived, sqrt(L1^2 + L2^2 + L3^2) / (2 A) against trace(S^-1) and the matrix
    x, y = np.array([0.0, 300e3, 120e3]), np.array([0.0, 0.0, height])
    sides = np.hypot(np.roll(x, -1) - x, np.roll(y, -1) - y)
    formula = np.sqrt(np.sum(sides**2)) / (2.0 * 0.5 * 300e3 * height)
    assert_allclose(np.sqrt(unc.divergence_variance_factor(x, y)), formula, rtol=1e-12)
    rows = unc.divergence_vorticity_matrix(unc.plane_fit_matrix(x, y))
    assert_allclose(np.sqrt(np.sum(rows**2, axis=-1)), formula, rtol=1e-12)


# ----------------------------------------------------------------- Monte Carlo
def test_monte_carlo_sigma_of_divergence_matches_propagation_with_level_correlation():
    # source: derived (exact propagation); bound 5 standard errors of a normal sample's
    # standard deviation at N = 20000: 5 * sqrt(2 / N) / 2 = 2.5 %
    members, rho = 20000, 0.5
    level_count = PRESSURE.size
    sigma = err.wind_error_sigma(PRESSURE, 1.0, growth=1.0 / 80000.0)  # 1 -> 2 m/s at 200 hPa
    sigma_grid = np.broadcast_to(sigma[:, None, None], (level_count, 2, 3))
    rng = np.random.default_rng(14)
    errors = ens.draw_correlated_gaussian(rng, members, sigma_grid, rho)
    assert errors.shape == (members, level_count, 2, 3)
    u, v = wind_components(DIRECTION, SPEED)
    perturbed = np.stack([u, v], axis=1) + errors
    fit = station_polygon_divergence(LATITUDES, LONGITUDES,
                                     perturbed[:, :, 0].reshape(-1, 3),
                                     perturbed[:, :, 1].reshape(-1, 3))
    divergence = fit.divergence.reshape(members, level_count)
    rows = unc.divergence_vorticity_matrix(unc.station_fit_matrix(LATITUDES, LONGITUDES))
    chain = unc.block_diagonal(rows[None, 0:1].repeat(level_count, axis=0))
    covariance = unc.propagate_covariance(
        chain, err.wind_error_covariance(sigma_grid[:, 0], sigma_grid[:, 1], rho))
    bound = 5.0 * np.sqrt(2.0 / members) / 2.0
    assert_allclose(np.std(divergence, axis=0, ddof=1), np.sqrt(np.diag(covariance)),
                    rtol=bound)
    # adjacent-level correlation of divergence: rho again (same geometry at every level;
    # derived); standard error of a correlation about (1 - rho^2) / sqrt(N), 5 of them
    got = np.corrcoef(divergence[:, 3], divergence[:, 4])[0, 1]
    assert abs(got - rho) < 5.0 * (1.0 - rho**2) / np.sqrt(members)


def test_rounding_errors_have_width_over_root_twelve():
    # source: derived, Var = w^2 / 12 for a uniform error on [-w/2, w/2]; bound 5 standard
    # errors of s for a uniform variable (kappa = 9/5): 5 * sqrt(0.8 / N) / 2 = 1.6 %
    members = 20000
    rng = np.random.default_rng(7)
    truth = rng.uniform(0.0, 360.0, members)
    rounded = 5.0 * np.round(truth / 5.0)
    bound = 5.0 * np.sqrt(0.8 / members) / 2.0
    assert_allclose(np.std(rounded - truth, ddof=1), 5.0 / np.sqrt(12.0), rtol=bound)
    drawn = ens.draw_uniform(rng, members, [5.0, err.KNOT])
    assert drawn.shape == (members, 2)
    assert_allclose(np.std(drawn, axis=0, ddof=1), err.rounding_sigma([5.0, err.KNOT]),
                    rtol=bound)
    assert np.all(np.abs(drawn) <= np.array([2.5, err.KNOT / 2.0]))
    assert_allclose(err.rounding_sigma(5.0), 1.4433756729740643, rtol=1e-15)  # 5/sqrt(12)


def test_rounding_component_covariance_matches_perturbed_reports():
    # source: derived (linearisation J diag(sd^2, ss^2) J^T); Monte Carlo of the exact
    # components; a u or v component is a sum of two independent uniform terms, kappa
    # between 2.4 and 3, so 5 * sqrt(2 / N) / 2 = 2.5 % bounds both; the second-order
    # term of a 1.4 deg error is below 0.1 % (derived: sd^2 / 2 = 3e-4)
    members = 20000
    direction, speed = np.array([243.0, 143.0]), np.array([83.0, 9.0]) * err.KNOT
    u, v = ens.perturb_reported_winds(np.random.default_rng(3), members, direction, speed)
    assert u.shape == (members, 2)
    want = err.rounding_component_covariance(direction, speed)
    for station in range(2):
        got = np.cov(u[:, station], v[:, station])
        assert_allclose(np.sqrt(np.diag(got)), np.sqrt(np.diag(want[station])), rtol=0.025)


# ----------------------------------------------------------------- layers and omega
def test_layer_mean_and_gap_fill_matrices():
    # source: finite differences of levels.layers_from_levels; gap fill against numpy.interp
    # in ln p (independent)
    values = np.random.default_rng(1).normal(size=PRESSURE.size)
    want = central_differences(lambda d: levels.layers_from_levels(PRESSURE, d)[2], values)
    assert relative_to_rows(unc.layer_mean_matrix(PRESSURE.size), want) < 1e-10
    fitted = np.array([True, True, False, False, True, True, False, True, True])
    filled = unc.gap_fill_matrix(PRESSURE, fitted) @ np.where(fitted, values, 0.0)
    log_p = np.log(PRESSURE)
    expected = np.interp(-log_p, -log_p[fitted], values[fitted])
    assert_allclose(filled, expected, rtol=1e-12)
    assert np.isnan(unc.gap_fill_matrix(PRESSURE, ~np.eye(9, dtype=bool)[0])[0]).all()


DEPTHS = np.array([7500.0, 7500.0, 15000.0, 20000.0, 10000.0, 10000.0, 5000.0, 5000.0])


@pytest.mark.parametrize("integrate, adjust", [
    ("from_top", "none"), ("from_surface", "none"), ("from_surface", "uniform"),
    ("from_surface", "obrien"),
])
def test_omega_matrix_equals_finite_differences_of_kinematic(integrate, adjust):
    # source: finite differences of physics.kinematic (omega integration, top_mismatch and
    # the adjustments), with nonzero boundary values so that the offsets are exercised
    omega_top, omega_surface = -0.05, 0.02
    adjust_function = {"uniform": kinematic.divergence_adjustment_uniform,
                       "obrien": kinematic.divergence_adjustment_obrien}.get(adjust)

    def interfaces(divergence):
        if integrate == "from_top":
            bottom, top = kinematic.omega_integrated_from_top(divergence, DEPTHS, omega_top)
        else:
            if adjust_function is not None:
                raw_top = omega_surface + np.sum(divergence * DEPTHS)
                mismatch = kinematic.top_mismatch(raw_top, omega_top)
                divergence = adjust_function(divergence, DEPTHS, mismatch)
            bottom, top = kinematic.omega_integrated_from_surface(divergence, DEPTHS,
                                                                  omega_surface)
        return np.concatenate([bottom[:1], top])

    divergence = np.random.default_rng(2).normal(0.0, 1e-5, DEPTHS.size)
    want = central_differences(interfaces, divergence, step=1e-5)
    got = unc.omega_matrix(DEPTHS, integrate, adjust)
    assert got.shape == (DEPTHS.size + 1, DEPTHS.size)
    assert relative_to_rows(got, want) < 1e-10
    assert_allclose(unc.tendency_row(DEPTHS, integrate, adjust), got[0], rtol=0, atol=0)
    if integrate == "from_surface" and adjust != "none":
        # the adjusted column always closes at the top: the top row carries no divergence
        # error (derived: sum of adjusted D dp = target - omega_s)
        assert np.max(np.abs(got[-1])) < 1e-10 * np.max(np.abs(got))


def test_omega_sigma_for_independent_equal_layers_grows_as_root_k():
    # source: derived: omega_s = omega_T - dp sum of k independent D, sigma = sigma_D dp sqrt(k)
    k, dp, sigma_d = 8, 10000.0, 0.3e-5
    matrix = unc.omega_matrix(np.full(k, dp))
    sigma = np.sqrt(np.diag(unc.propagate_covariance(
        matrix, err.layer_divergence_covariance(np.full(k, sigma_d)))))
    assert_allclose(sigma[0], sigma_d * dp * np.sqrt(k), rtol=1e-12)
    assert_allclose(sigma, sigma_d * dp * np.sqrt(k - np.arange(k + 1)), rtol=1e-12, atol=0)
    # fully correlated layers (rho = 1) add linearly instead: k sigma_D dp (derived)
    correlated = unc.propagate_covariance(
        matrix[:1], err.layer_divergence_covariance(np.full(k, sigma_d), rho=1.0))
    assert_allclose(np.sqrt(correlated[0, 0]), k * sigma_d * dp, rtol=1e-12)


def test_adjustment_and_omega_matrices_broadcast_over_leading_axes():
    # source: the per-column matrices stacked (vectorised shapes)
    depths = np.stack([DEPTHS, DEPTHS[::-1], 2.0 * DEPTHS])
    stacked = unc.omega_matrix(depths, "from_surface", "obrien")
    assert stacked.shape == (3, 9, 8)
    for i in range(3):
        assert_allclose(stacked[i], unc.omega_matrix(depths[i], "from_surface", "obrien"),
                        rtol=1e-15)


# ----------------------------------------------------------------- the whole chain
def tendency_from_winds(flat):
    """The surface tendency [Pa/s] from flat winds (levels, 2, stations), from the top."""
    winds = flat.reshape(PRESSURE.size, 2, 3)
    divergence = station_polygon_divergence(LATITUDES, LONGITUDES, winds[:, 0],
                                            winds[:, 1]).divergence
    p_bottom, p_top, layer_divergence = levels.layers_from_levels(PRESSURE, divergence)
    return kinematic.omega_integrated_from_top(layer_divergence, p_bottom - p_top, 0.0)[0][0]


def chain_row():
    rows = unc.divergence_vorticity_matrix(unc.station_fit_matrix(LATITUDES, LONGITUDES))
    per_level = unc.block_diagonal(np.repeat(rows[None, 0:1], PRESSURE.size, axis=0))
    depths = PRESSURE[:-1] - PRESSURE[1:]
    return unc.tendency_row(depths) @ unc.layer_mean_matrix(PRESSURE.size) @ per_level


def test_tendency_row_of_the_whole_chain_equals_finite_differences():
    # source: finite differences of stations -> levels -> kinematic (all linear)
    u, v = wind_components(DIRECTION, SPEED)
    flat = np.stack([u, v], axis=1).reshape(-1)
    want = central_differences(tendency_from_winds, flat)
    assert relative_to_rows(chain_row(), want) < 1e-10
    assert_allclose(chain_row() @ flat, tendency_from_winds(flat), rtol=1e-10)


def test_sensitivity_ranks_the_upper_winds_and_matches_the_worked_case_note():
    # source: linearisation (derived) against the exact non-linear change; the sizes
    # "about 7 hPa/3h for 5 deg and 1.3 hPa/3h for one knot at 300 hPa at Eastmoor" are
    # from the header of worked_cases/three_stations.layers (computed by its author with
    # the full program), checked here to the rounding given there
    u, v = wind_components(DIRECTION, SPEED)
    flat = np.stack([u, v], axis=1).reshape(-1)
    row = chain_row().reshape(PRESSURE.size, 2, 3)
    jacobian = err.wind_component_jacobian(DIRECTION, SPEED)   # (levels, stations, 2, 2)
    per_direction = np.einsum("lcs,lscj->lsj", row, jacobian)[..., 0] * np.deg2rad(5.0)
    per_knot = np.einsum("lcs,lscj->lsj", row, jacobian)[..., 1] * err.KNOT
    to_hpa_3h = 3.0 * 3600.0 / 100.0

    def change(direction_step, speed_step):
        turned, faster = DIRECTION.copy(), SPEED.copy()
        turned[6, 1] += direction_step
        faster[6, 1] += speed_step
        return (tendency_from_winds(np.stack(wind_components(turned, faster), 1).reshape(-1))
                - tendency_from_winds(flat))

    # a central difference of the exact function cancels the second-order term, leaving
    # delta^2 / 6 = 0.13 % at 5 deg (derived); 1 % allowed
    central = 0.5 * (change(5.0, 0.0) - change(-5.0, 0.0))
    assert_allclose(per_direction[6, 1], central, rtol=0.01)
    assert_allclose(per_knot[6, 1], change(0.0, err.KNOT), rtol=1e-9)  # linear in speed
    # one-sided, as the worked case's header states it (243 -> 248 deg, 83 -> 84 kt)
    assert round(abs(change(5.0, 0.0)) * to_hpa_3h) == 7
    assert round(abs(per_knot[6, 1]) * to_hpa_3h, 1) == 1.3
    ranked = err.rank_sensitivity(per_direction.reshape(-1), 1.0)
    # the 500 hPa winds lead per 5 deg: the level's weight in the tendency is half the
    # depth of the two layers it bounds (derived: layer means, then -sum D dp), largest
    # at 700 and 500 hPa, times a speed twice that at 700 hPa
    weight = unc.tendency_row(PRESSURE[:-1] - PRESSURE[1:]) @ unc.layer_mean_matrix(9)
    depth = np.concatenate([[0.0], PRESSURE[:-1] - PRESSURE[1:], [0.0]])
    assert_allclose(weight, -0.5 * (depth[:-1] + depth[1:]), rtol=1e-15)
    assert PRESSURE[np.unravel_index(ranked.order[0], per_direction.shape)[0]] == 50000.0
    assert_allclose(ranked.share.sum(), 1.0, rtol=1e-12)
    assert np.all(np.diff(np.abs(ranked.per_sigma[ranked.order])) <= 0)


# ----------------------------------------------------------------- residual estimate
def test_residual_estimate_recovers_an_imposed_sigma_on_six_stations():
    # source: derived, E[RSS] = sigma^2 (2n - 6); RSS / sigma^2 is chi-square with 6
    # degrees of freedom for n = 6, so the mean of N estimates of sigma^2 has relative
    # standard error sqrt(2 / 6 / N) = 0.41 % at N = 20000; bound 5 of them (2 %)
    realisations, sigma = 20000, 1.5
    rng = np.random.default_rng(11)
    angles = np.deg2rad(np.arange(6) * 60.0 + 10.0)
    x = 200e3 * np.cos(angles) + np.array([0, 30e3, -20e3, 10e3, 0, -40e3])
    y = 200e3 * np.sin(angles) + np.array([10e3, 0, 0, -30e3, 25e3, 0])
    u_true = 12.0 + 2e-5 * x - 1e-5 * y
    v_true = -3.0 + 0.5e-5 * x + 1.5e-5 * y
    u = u_true + rng.normal(0.0, sigma, (realisations, 6))
    v = v_true + rng.normal(0.0, sigma, (realisations, 6))
    estimate = err.residual_wind_sigma(x, y, u, v)
    assert estimate.shape == (realisations,)
    bound = 5.0 * np.sqrt(2.0 / 6.0 / realisations)
    assert_allclose(np.mean(estimate**2), sigma**2, rtol=bound)
    # a noiseless linear field has no residual; three stations cannot estimate anything
    assert_allclose(err.residual_wind_sigma(x, y, u_true, v_true), 0.0, atol=1e-12)
    assert np.isnan(err.residual_wind_sigma(x[:3], y[:3], u_true[:3], v_true[:3]))
    # the residuals are those of stations.linear_wind_fit (same fit)
    fit = linear_wind_fit(x, y, u[:5], v[:5])
    residual = ((u[:5] - fit.u_at_origin[:, None] - fit.du_dx[:, None] * x
                 - fit.du_dy[:, None] * y) ** 2
                + (v[:5] - fit.v_at_origin[:, None] - fit.dv_dx[:, None] * x
                   - fit.dv_dy[:, None] * y) ** 2)
    assert_allclose(estimate[:5] ** 2, residual.sum(axis=-1) / 6.0, rtol=1e-9)


# ----------------------------------------------------------------- summaries
def test_ensemble_summary_and_probabilities():
    # source: standard normal table values from memory: Phi(1) = 0.8413447460685429,
    # Phi^-1(0.95) = 1.6448536269514722; Monte Carlo bounds: 5 standard errors of a
    # proportion, 5 sqrt(p (1 - p) / N)
    assert_allclose(ens.normal_probability_below(-1.0, 1.0), 0.8413447460685429, rtol=1e-14)
    assert_allclose(ens.normal_probability_below(ens.NORMAL_QUANTILE_95, 1.0), 0.05,
                    rtol=1e-12)
    assert np.isnan(ens.normal_probability_below(1.0, 0.0))
    members = 20000
    samples = -0.5 + 2.0 * np.random.default_rng(9).standard_normal((members, 1))
    summary = ens.ensemble_summary(samples)
    assert summary.sigma.shape == (1,)
    falling = ens.probability_below(samples)[0]
    p = ens.normal_probability_below(-0.5, 2.0)
    assert abs(falling - p) < 5.0 * np.sqrt(p * (1 - p) / members)
    # the 95 % point: 5 standard errors of a quantile, sqrt(q (1 - q) / N) / density
    density = np.exp(-0.5 * ens.NORMAL_QUANTILE_95**2) / np.sqrt(2.0 * np.pi) / 2.0
    assert abs(summary.p95[0] - (-0.5 + 2.0 * ens.NORMAL_QUANTILE_95)) < (
        5.0 * np.sqrt(0.05 * 0.95 / members) / density)


def test_wind_error_models():
    # source: derived from the definitions in the docstrings
    sigma = err.wind_error_sigma(PRESSURE, 1.5, growth=1.0 / 50000.0)
    assert_allclose(sigma[[0, 4, 8]], [1.5, 2.5, 3.1], rtol=1e-12)  # +1 m/s per 500 hPa
    covariance = err.wind_error_covariance(np.ones((3, 2)), 2.0 * np.ones((3, 2)), rho=0.4)
    grid = covariance.reshape(3, 2, 2, 3, 2, 2)
    assert_allclose(grid[0, 1, 1, 1, 1, 1], 2.0 * 2.0 * 0.4, rtol=1e-15)  # v, level 0 vs 1
    assert_allclose(grid[0, 0, 0, 2, 0, 0], 0.4**2, rtol=1e-15)           # u, 0 vs 2
    assert grid[0, 0, 0, 0, 1, 0] == 0.0 and grid[0, 0, 0, 0, 0, 1] == 0.0
    assert np.all(np.linalg.eigvalsh(covariance) > 0)


@pytest.mark.parametrize("shape, axis", [((10000,), 0), ((36, 10000), 1), ((10000, 8), 0),
                                         ((7,), 0), ((1,), 0), ((200, 3), 0)])
def test_percentiles_equal_numpy_percentile_to_the_last_bit(shape, axis):
    # source: numpy (independent library, the version in the venv, 2.x)
    # numpy.percentile(method="linear"); ours partitions at the needed order statistics only
    from layercalc.physics.ensembles import percentiles

    samples = np.random.default_rng(2).standard_normal(shape) * 1e-3
    q = [5.0, 50.0, 95.0]
    assert np.array_equal(percentiles(samples, q, axis=axis),
                          np.percentile(samples, q, axis=axis))
