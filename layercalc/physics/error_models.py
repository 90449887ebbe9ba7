"""Error models for the kinematic chain: input covariances, rounding, residual estimate.

Winds: a per-component standard deviation per station and level, optionally growing
linearly with pressure depth above the lowest level (the O'Brien (1970) assumption, put
on the winds), correlated between levels as rho^|k - l| (AR(1)-like in the level index),
independent between stations and components. Reported winds: uniform rounding errors of
direction and speed (``DIRECTION_STEP_DEG``, ``SPEED_STEP_KT``), sigma = step / sqrt(12).
Hand-entered divergence: a standard deviation per layer. For more than three stations
the misfit of the linear fit gives an internal estimate of the wind error
(``residual_wind_sigma``). ``rank_sensitivity`` orders inputs by their effect on one
output. The matrices that carry these covariances are in ``uncertainty``.

Units SI: winds [m/s], pressure [Pa], divergence [s^-1], directions [deg] unless a
docstring says radians. Flat wind vectors as in ``uncertainty``: (levels, 2, stations).

References
----------
O'Brien, J. J., 1970: J. Appl. Meteor., 9, 197-203 (errors growing with pressure depth).
Nash, J., 1994: Ann. Geophys., 12, 691 (typical random radiosonde wind errors of 0.5 to
2 m/s per component; cited as in the issue, not re-read).
"""

from math import sqrt
from typing import NamedTuple

import numpy as np

from layercalc.constants import G0, KNOT, RD  # KNOT in __all__: the models speak knots

from .uncertainty import gap_fill_matrix, layer_mean_matrix, plane_fit_matrix

__all__ = [
    "KNOT", "DIRECTION_STEP_DEG", "SPEED_STEP_KT", "Sensitivity", "level_correlation",
    "wind_error_sigma", "wind_error_covariance", "layer_divergence_covariance",
    "rounding_sigma", "wind_component_jacobian", "rounding_component_covariance",
    "residual_wind_sigma", "rank_sensitivity", "level_mean_error_matrix",
    "hydrostatic_difference_sigma",
]

# Resolution of a reported upper wind: direction to 5 degrees and speed to whole knots in
# the WMO TEMP code (FM 35; WMO-No. 306, from memory, not re-read). Reporting resolution
# is the floor of the wind error, never its whole.
DIRECTION_STEP_DEG = 5.0
SPEED_STEP_KT = 1.0


class Sensitivity(NamedTuple):
    """Inputs ranked by how much their error moves one output (``rank_sensitivity``)."""

    order: np.ndarray       # input indices, largest |per_sigma| first
    per_unit: np.ndarray    # d(output)/d(input), input order [output unit per input unit]
    per_sigma: np.ndarray   # per_unit * sigma of that input [output unit]
    share: np.ndarray       # per_sigma**2 / sum(per_sigma**2) (independent inputs) [1]


def level_correlation(level_count, rho):
    """Correlation rho^|k - l| between levels k and l (AR(1)-like in the level index). [1]"""
    index = np.arange(level_count)
    return float(rho) ** np.abs(index[:, None] - index[None, :])


def wind_error_sigma(pressure, sigma_at_surface, growth=0.0, surface_pressure=None):
    """Wind component error growing linearly with pressure depth above the lowest level.

    sigma(p) = sigma_s + growth (p_s - p), p_s the lowest level's pressure unless given:
    the O'Brien (1970) assumption of errors growing with height, put on the winds.

    Parameters
    ----------
    pressure : array_like, shape (L,)
        Level pressures. [Pa]
    sigma_at_surface : float or array_like
        Per-component standard deviation at p_s. [m/s]
    growth : float, optional
        Increase per pascal of depth. [m s^-1 Pa^-1]
    surface_pressure : float, optional  [Pa]

    Returns
    -------
    numpy.ndarray, shape (L,)  [m/s]
    """
    pressure = np.asarray(pressure, dtype=float)
    base = np.max(pressure) if surface_pressure is None else surface_pressure
    return np.asarray(sigma_at_surface, dtype=float) + growth * (base - pressure)


def wind_error_covariance(sigma_u, sigma_v, rho=0.0):
    """Covariance of a flat wind vector (levels, 2, stations) with level correlation.

    C[(k,c,i), (l,d,j)] = sigma_kci sigma_ldj rho^|k - l| [c == d][i == j]:
    components and stations independent, each station's error series correlated along
    the levels.

    Parameters
    ----------
    sigma_u, sigma_v : array_like, shape (L, n)
        Standard deviations of the eastward and northward errors. [m/s]
    rho : float, optional
        Correlation of adjacent levels. [1]

    Returns
    -------
    numpy.ndarray, shape (L*2*n, L*2*n)  [m^2 s^-2]
    """
    sigma = np.stack([np.asarray(sigma_u, float), np.asarray(sigma_v, float)], axis=1)
    levels, _, stations = sigma.shape
    same = np.eye(2 * stations).reshape(2, stations, 2, stations)
    corr = level_correlation(levels, rho)[:, None, None, :, None, None] * same[None, :, :, None]
    flat = sigma.reshape(-1)
    return corr.reshape(flat.size, flat.size) * np.outer(flat, flat)


def layer_divergence_covariance(sigma, rho=0.0):
    """Covariance of hand-entered layer divergences: sigma_k sigma_l rho^|k - l|.

    Parameters
    ----------
    sigma : array_like, shape (L,)  [s^-1]
    rho : float, optional  [1]

    Returns
    -------
    numpy.ndarray, shape (L, L)  [s^-2]
    """
    sigma = np.asarray(sigma, dtype=float)
    return level_correlation(sigma.size, rho) * np.outer(sigma, sigma)


def rounding_sigma(step):
    """Standard deviation of a rounding error, uniform on [-step/2, step/2]: step / sqrt(12).

    Var = (1/step) integral_{-step/2}^{step/2} e^2 de = step^2 / 12 (derived).
    """
    return np.asarray(step, dtype=float) / sqrt(12.0)


def wind_component_jacobian(direction_from, speed):
    """Derivatives of (u, v) = (-s sin d, -s cos d) by direction [rad] and speed.

    du/dd = -s cos d = v,   du/ds = -sin d,   dv/dd = s sin d = -u,   dv/ds = -cos d

    Returns
    -------
    numpy.ndarray, shape (..., 2, 2)
        [[du/dd, du/ds], [dv/dd, dv/ds]] [m s^-1 rad^-1, 1].
    """
    d = np.deg2rad(np.asarray(direction_from, dtype=float))
    s = np.asarray(speed, dtype=float)
    return np.stack([np.stack([-s * np.cos(d), -np.sin(d)], -1),
                     np.stack([s * np.sin(d), -np.cos(d)], -1)], -2)


def rounding_component_covariance(direction_from, speed, direction_step=DIRECTION_STEP_DEG,
                                  speed_step=SPEED_STEP_KT * KNOT):
    """Linearised (u, v) covariance from rounding of reported direction and speed.

    C = J diag(sigma_d^2, sigma_s^2) J^T, sigma = step / sqrt(12), J from
    ``wind_component_jacobian``; direction and speed errors independent.

    Parameters
    ----------
    direction_from : array_like  [deg]
    speed : array_like  [m/s]
    direction_step : float, optional  [deg]
    speed_step : float, optional  [m/s]

    Returns
    -------
    numpy.ndarray, shape (..., 2, 2)  [m^2 s^-2]
    """
    jacobian = wind_component_jacobian(direction_from, speed)
    variances = np.stack(np.broadcast_arrays(
        rounding_sigma(np.deg2rad(direction_step)) ** 2, rounding_sigma(speed_step) ** 2), -1)
    return (jacobian * variances[..., None, :]) @ np.swapaxes(jacobian, -1, -2)
def level_mean_error_matrix(pressure, counts):
    """Layer errors per unit error of each reported value of a sounding quantity (T, Td).

    A level's value is the mean of the ``count_k`` soundings that report it, so with
    independent errors of sigma per reported value its error is sigma / sqrt(count_k);
    a level no sounding reports is interpolated linearly in ln p from the nearest reported
    ones (``uncertainty.gap_fill_matrix``); a layer's value is the mean of its two levels
    (``uncertainty.layer_mean_matrix``). So the layer errors are sigma B z with z standard
    normal per level and

        B = (layer means) (gap fill) diag(1 / sqrt(count)),   Cov = sigma^2 B B^T.

    Parameters
    ----------
    pressure : array_like, shape (levels,)
        Level pressures, surface first. [Pa]
    counts : array_like of int, shape (levels,)
        Soundings reporting the quantity at each level (0: interpolated).

    Returns
    -------
    numpy.ndarray, shape (levels - 1, levels)  [1]
    """
    counts = np.asarray(counts, dtype=float)
    reported = counts > 0
    scale = np.where(reported, 1.0 / np.sqrt(np.maximum(counts, 1.0)), 0.0)
    fill = np.nan_to_num(gap_fill_matrix(pressure, reported))
    return layer_mean_matrix(counts.size) @ (fill * scale[None, :])


def hydrostatic_difference_sigma(pressure_bottom, pressure_top, tv_per_temperature,
                                 tv_per_dewpoint, temperature_error=0.0, dewpoint_error=0.0,
                                 height_error=0.0):
    """One sigma of a hydrostatic check's difference, observed minus hypsometric thickness.

    d = (z_top - z_bottom) - Rd / g0 * (Tv_b + Tv_t) / 2 * ln(p_b / p_t), linearised:

        Var(d) = 2 sigma_z^2 + (Rd / g0 * ln(p_b / p_t) / 2)^2 * (a_b^2 + a_t^2),
        a_k^2 = (dTv/dT)_k^2 sigma_T^2 + (dTv/dTd)_k^2 sigma_Td^2,

    for independent errors of each reported height, temperature and dewpoint (the two
    heights of a layer independent). Adjacent layers share a level, so their differences
    are correlated; this is the sigma of each layer alone.

    Parameters
    ----------
    pressure_bottom, pressure_top : array_like, shape (L,)  [Pa]
    tv_per_temperature, tv_per_dewpoint : array_like, shape (L + 1,)
        dTv/dT and dTv/dTd at the levels (0 where there is no dewpoint). [1]
    temperature_error, dewpoint_error : float, optional  [K]
    height_error : float, optional  [m]

    Returns
    -------
    numpy.ndarray, shape (L,)  [m]

    References
    ----------
    Hypsometric equation (``levels.hydrostatic_consistency``); linear propagation of
    independent errors, common practice.
    """
    a2 = (np.asarray(tv_per_temperature, float) * temperature_error) ** 2 \
        + (np.asarray(tv_per_dewpoint, float) * dewpoint_error) ** 2
    factor = RD / G0 * np.log(np.asarray(pressure_bottom, float)
                              / np.asarray(pressure_top, float)) / 2.0
    return np.sqrt(2.0 * height_error**2 + factor**2 * (a2[:-1] + a2[1:]))


def residual_wind_sigma(x, y, u, v):
    """Wind component error estimated from the misfit of the linear fit (n > 3 stations).

    sigma_hat^2 = RSS / (2n - 6),  RSS = sum_i (u_i - u_fit,i)^2 + (v_i - v_fit,i)^2

    Each component's fit has 3 parameters, so for independent errors of variance sigma^2
    and a truly linear wind E[RSS] = sigma^2 (2n - 6) (derived: the residual is the
    projection onto an (n - 3)-dimensional space, per component). Curvature of the real
    wind field counts as error too, so this estimates observation plus representativeness
    error. Give plane components (``stations.rotate_wind_to_plane``); the residual norm
    is the same in any per-station orthogonal frame for that fit.

    Parameters
    ----------
    x, y : array_like, shape (n,)  [m]
    u, v : array_like, shape (..., n)
        Plane wind components; NaN marks a missing wind. [m/s]

    Returns
    -------
    sigma_hat : numpy.ndarray, shape (...)
        NaN where fewer than 4 stations have a wind. [m/s]
    """
    u = np.asarray(u, dtype=float)
    v = np.asarray(v, dtype=float)
    valid = np.isfinite(u) & np.isfinite(v)
    matrix = plane_fit_matrix(x, y, None, valid)   # (..., 6, 2n)
    winds = np.concatenate([np.where(valid, u, 0.0), np.where(valid, v, 0.0)], -1)
    coefficients = np.einsum("...fk,...k->...f", matrix, winds)
    x, y = np.asarray(x, float), np.asarray(y, float)
    fit_u = coefficients[..., 0:1] + coefficients[..., 2:3] * x + coefficients[..., 3:4] * y
    fit_v = coefficients[..., 1:2] + coefficients[..., 4:5] * x + coefficients[..., 5:6] * y
    squares = np.where(valid, (u - fit_u) ** 2 + (v - fit_v) ** 2, 0.0)
    freedom = 2.0 * valid.sum(axis=-1) - 6.0
    return np.sqrt(np.divide(squares.sum(axis=-1), freedom,
                             out=np.full(freedom.shape, np.nan), where=freedom > 0))
def rank_sensitivity(row, sigma):
    """Which input moves an output most per unit error, and per its own error.

    per_unit = d(output)/d(input_i) (a row of the chain matrix), per_sigma = per_unit *
    sigma_i; for independent inputs Var(output) = sum per_sigma^2, so share_i is the
    fraction of the variance from input i.

    Parameters
    ----------
    row : array_like, shape (k,)
    sigma : array_like, shape (k,)  (broadcast)

    Returns
    -------
    Sensitivity
    """
    per_unit = np.asarray(row, dtype=float)
    per_sigma = per_unit * np.broadcast_to(np.asarray(sigma, dtype=float), per_unit.shape)
    total = np.sum(per_sigma**2)
    share = per_sigma**2 / total if total > 0 else np.zeros_like(per_sigma)
    order = np.argsort(-np.abs(per_sigma), kind="stable")
    return Sensitivity(order, per_unit, per_sigma, share)
