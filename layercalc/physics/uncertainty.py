"""How far to trust the answer: the kinematic chain as matrices, for error propagation.

The chain from station winds to the surface pressure tendency is linear in the winds:

    winds (levels, 2, stations) --fit--> divergence per level --gap fill, layer means-->
    layer divergence --adjustment--> adjusted divergence --integration--> omega at the
    interfaces; the tendency is omega at the surface (plus terms that do not depend on
    the winds).

Each step is written here as a matrix M, so an input covariance C propagates exactly as
C_out = M C M^T (``propagate_covariance``). Error models (the covariances C, the
residual estimate, the ranking of inputs) are in ``error_models``; what is not linear
(rounding of reported direction and speed, the level of non-divergence, the Dines ratio,
w through Tv) is left to the Monte Carlo helpers in ``ensembles``.

Conventions (as in ``stations`` and ``kinematic``): layers and levels surface first;
winds u eastward, v northward [m/s]; divergence [s^-1]; pressure [Pa]; omega [Pa s^-1].
A flat wind vector is the array (levels, 2, stations) in C order: level, then component
(0 = u, 1 = v), then station; for one level (2, stations) -> u_1..u_n, v_1..v_n.

References
----------
Davies-Jones, R., 1993: Useful formulas for computing divergence, vorticity, and their
errors from three or more stations. Mon. Wea. Rev., 121, 713-725 (the error of a
divergence from a linear fit; cited as in the issue, the formula derived again in
``divergence_variance_factor``, the paper not re-read).
"""

import numpy as np

from .stations import spherical_centroid, tangent_plane_coordinates

__all__ = [
    "FIT_FIELDS", "plane_fit_matrix", "station_fit_matrix", "divergence_vorticity_matrix",
    "divergence_variance_factor", "block_diagonal", "propagate_covariance",
    "gap_fill_matrix", "layer_mean_matrix", "omega_matrix", "adjustment_matrix",
    "tendency_row",
]

# Rows of ``plane_fit_matrix`` / ``station_fit_matrix``.
FIT_FIELDS = ("u_at_origin", "v_at_origin", "du_dx", "du_dy", "dv_dx", "dv_dy")


# ----------------------------------------------------------------- the wind fit
def plane_fit_matrix(x, y, north_angle=None, valid=None):
    """Linear map from station winds to the least-squares linear wind field.

    The fit of ``stations.linear_wind_fit``, u' = u0 + du_dx x + du_dy y (same for v'),
    has coefficients P u' with P = (A^T A)^-1 A^T, A = [1, x, y]. With centred positions
    r_i = (x_i - xbar, y_i - ybar) and the scatter matrix S = sum_i r_i r_i^T,

        (du_dx, du_dy) = S^-1 sum_i r_i u'_i,
        u0 = mean(u') - (du_dx, du_dy) . (xbar, ybar).

    The plane components come from the east/north ones by each station's rotation
    (``stations.rotate_wind_to_plane``): u' = u cos g + v sin g, v' = -u sin g + v cos g.

    Parameters
    ----------
    x, y : array_like, shape (n,)
        Station plane coordinates. [m]
    north_angle : array_like, shape (n,), optional
        Bearing of local north on the plane per station; None means winds already in
        plane components. [rad]
    valid : array_like of bool, shape (..., n), optional
        Stations with a wind at each level; a missing station gets zero weight, as in
        ``linear_wind_fit``. Fewer than 3 valid (or collinear) stations give NaN rows.

    Returns
    -------
    numpy.ndarray, shape (..., 6, 2n)
        Rows ``FIT_FIELDS`` [m/s per m/s, s^-1 per m/s]; columns u_1..u_n, v_1..v_n.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    n = x.size
    weight = np.ones(n) if valid is None else np.asarray(valid, dtype=float)
    count = weight.sum(axis=-1, keepdims=True)
    mean_x = np.sum(weight * x, axis=-1, keepdims=True) / np.maximum(count, 1.0)
    mean_y = np.sum(weight * y, axis=-1, keepdims=True) / np.maximum(count, 1.0)
    rx, ry = (x - mean_x) * weight, (y - mean_y) * weight
    sxx, syy, sxy = np.sum(rx * rx, -1), np.sum(ry * ry, -1), np.sum(rx * ry, -1)
    determinant = sxx * syy - sxy**2
    scale = np.maximum(sxx + syy, np.finfo(float).tiny)
    usable = (count[..., 0] >= 3) & (determinant > 1e-10 * scale**2)
    determinant = np.where(usable, determinant, np.nan)
    gradient_x = (syy[..., None] * rx - sxy[..., None] * ry) / determinant[..., None]
    gradient_y = (sxx[..., None] * ry - sxy[..., None] * rx) / determinant[..., None]
    value = weight / np.maximum(count, 1.0) - gradient_x * mean_x - gradient_y * mean_y
    zero = np.zeros_like(value)
    rows_u = np.stack([value, zero, gradient_x, gradient_y, zero, zero], axis=-2)
    rows_v = np.stack([zero, value, zero, zero, gradient_x, gradient_y], axis=-2)
    if north_angle is None:
        return np.concatenate([rows_u, rows_v], axis=-1)
    # d u'/d u = cos g, d u'/d v = sin g, d v'/d u = -sin g, d v'/d v = cos g
    cos_g, sin_g = np.cos(north_angle), np.sin(north_angle)
    return np.concatenate([rows_u * cos_g - rows_v * sin_g,
                           rows_u * sin_g + rows_v * cos_g], axis=-1)


def station_fit_matrix(latitudes, longitudes, valid=None, radius=None):
    """``plane_fit_matrix`` for stations on the sphere, as ``station_polygon_divergence``.

    Same centroid (``stations.spherical_centroid``), stereographic plane and wind
    rotation (``stations.tangent_plane_coordinates``), so M @ [u; v] equals the fitted
    fields of ``station_polygon_divergence`` for east/north winds u, v.

    Parameters
    ----------
    latitudes, longitudes : array_like, shape (n,)
        Station positions. [deg]
    valid : array_like of bool, shape (..., n), optional
        See ``plane_fit_matrix``.
    radius : float, optional
        Sphere radius, default that of ``tangent_plane_coordinates``. [m]

    Returns
    -------
    numpy.ndarray, shape (..., 6, 2n)
    """
    centre = spherical_centroid(latitudes, longitudes)
    extra = {} if radius is None else {"radius": radius}
    x, y, north_angle = tangent_plane_coordinates(latitudes, longitudes, *centre, **extra)
    return plane_fit_matrix(x, y, north_angle, valid)


def divergence_vorticity_matrix(fit_matrix):
    """Rows (divergence, vorticity) from a fit matrix: du_dx + dv_dy and dv_dx - du_dy.

    Parameters
    ----------
    fit_matrix : array_like, shape (..., 6, k)

    Returns
    -------
    numpy.ndarray, shape (..., 2, k)  [s^-1 per input unit]
    """
    m = np.asarray(fit_matrix, dtype=float)
    return np.stack([m[..., 2, :] + m[..., 5, :], m[..., 4, :] - m[..., 3, :]], axis=-2)


def divergence_variance_factor(x, y):
    """trace(S^-1): Var(divergence) = sigma^2 trace(S^-1) for independent equal errors.

    Derivation: D = sum_i a_i u'_i + b_i v'_i with (a_i, b_i) = S^-1 r_i; for errors of
    variance sigma^2 in every component, independent, Var(D) = sigma^2 sum_i (a_i^2 +
    b_i^2) = sigma^2 [(S^-1 S S^-1)_xx + (...)_yy] = sigma^2 trace(S^-1); the rotation
    to plane axes keeps such errors independent and equal. The same holds for vorticity.
    For a triangle, trace(S) = (L1^2 + L2^2 + L3^2) / 3 and det(S) = 4 A^2 / 3
    (Cauchy-Binet: det S = sum_{i<j} (r_i x r_j)^2, each cross product 2A/3), so
    sigma_D = sigma sqrt(L1^2 + L2^2 + L3^2) / (2 A), and 2 sigma / L for an equilateral
    triangle of side L, the forms given by Davies-Jones (1993).

    Parameters
    ----------
    x, y : array_like, shape (n,)
        Station plane coordinates. [m]

    Returns
    -------
    float
        trace(S^-1). [m^-2]
    """
    r = np.stack([np.asarray(x, float), np.asarray(y, float)], axis=-1)
    r = r - r.mean(axis=0)
    return float(np.trace(np.linalg.inv(r.T @ r)))
# ----------------------------------------------------------------- propagation
def block_diagonal(matrices):
    """Block-diagonal matrix of per-level blocks: (levels, m, k) -> (levels*m, levels*k)."""
    blocks = np.asarray(matrices, dtype=float)
    levels, m, k = blocks.shape
    out = np.zeros((levels, m, levels, k))
    index = np.arange(levels)
    out[index, :, index, :] = blocks
    return out.reshape(levels * m, levels * k)


def propagate_covariance(matrix, covariance):
    """Covariance of M x for x of covariance C (linear error propagation).

    C_out = M C M^T

    Parameters
    ----------
    matrix : array_like, shape (..., m, k)
    covariance : array_like, shape (..., k, k)
        Leading axes broadcast.

    Returns
    -------
    numpy.ndarray, shape (..., m, m)
    """
    m = np.asarray(matrix, dtype=float)
    return m @ np.asarray(covariance, dtype=float) @ np.swapaxes(m, -1, -2)


def gap_fill_matrix(pressure, fitted):
    """Levels without a fitted value take the ln p interpolation of the nearest fitted ones.

    value_k = w value_below + (1 - w) value_above,  w = ln(p_k / p_above) / ln(p_below /
    p_above), as ``level_tables.fill_gaps``; fitted levels map to themselves. Missing
    values at the lowest or highest level stay NaN (nothing is extrapolated).

    Parameters
    ----------
    pressure : array_like, shape (L,)
        Level pressures, surface first (descending). [Pa]
    fitted : array_like of bool, shape (L,)

    Returns
    -------
    numpy.ndarray, shape (L, L)  [1]
    """
    log_p = np.log(np.asarray(pressure, dtype=float))
    fitted = np.asarray(fitted, dtype=bool)
    size = log_p.size
    out = np.zeros((size, size))
    known = np.flatnonzero(fitted)
    for k in range(size):
        if fitted[k]:
            out[k, k] = 1.0
            continue
        below, above = known[known < k], known[known > k]
        if below.size == 0 or above.size == 0:
            out[k, :] = np.nan
            continue
        b, a = below[-1], above[0]
        weight = (log_p[k] - log_p[a]) / (log_p[b] - log_p[a])
        out[k, b], out[k, a] = weight, 1.0 - weight
    return out


def layer_mean_matrix(level_count):
    """Layer means of consecutive levels, (x_k + x_{k+1}) / 2 (``levels.layers_from_levels``).

    Returns
    -------
    numpy.ndarray, shape (level_count - 1, level_count)  [1]
    """
    out = np.zeros((level_count - 1, level_count))
    index = np.arange(level_count - 1)
    out[index, index] = 0.5
    out[index, index + 1] = 0.5
    return out


def adjustment_matrix(pressure_depth, adjust="none"):
    """Divergence after the top-mismatch adjustment, as a matrix of the layer divergence.

    With the mismatch e = omega_s + sum_j D_j dp_j - omega_T (``kinematic.top_mismatch``):
    none: D' = D; uniform: D'_k = D_k - e / sum(dp); obrien: D'_k = D_k - e P_k /
    sum_j P_j dp_j, P_k = sum_{j <= k} dp_j (``kinematic.divergence_adjustment_*``).
    The divergence part of e is sum_j D_j dp_j, so D' = (I - c dp^T) D + (terms in the
    boundary values, which carry no divergence error), c = 1 / sum(dp) or P / sum(P dp).

    Parameters
    ----------
    pressure_depth : array_like, shape (..., L)
        Layer depths, surface first. [Pa]
    adjust : {"none", "uniform", "obrien"}

    Returns
    -------
    numpy.ndarray, shape (..., L, L)  [1]
    """
    dp = np.asarray(pressure_depth, dtype=float)
    identity = np.broadcast_to(np.eye(dp.shape[-1]), dp.shape[:-1] + (dp.shape[-1],) * 2)
    if adjust == "none":
        return identity.copy()
    if adjust == "uniform":
        spread = np.ones_like(dp) / np.sum(dp, axis=-1, keepdims=True)
    elif adjust == "obrien":
        depth = np.cumsum(dp, axis=-1)
        spread = depth / np.sum(depth * dp, axis=-1, keepdims=True)
    else:
        raise ValueError(f"adjust must be none, uniform or obrien, got {adjust!r}")
    return identity - spread[..., :, None] * dp[..., None, :]


def omega_matrix(pressure_depth, integrate="from_top", adjust="none"):
    """Omega at the L + 1 interfaces (surface first) as a matrix of the layer divergence.

    from_top: omega_i = omega_T - sum_{j >= i} D_j dp_j, so M[i, j] = -dp_j for j >= i;
    from_surface: omega_i = omega_s + sum_{j < i} D'_j dp_j, so M[i, j] = dp_j for
    j < i, times ``adjustment_matrix`` (the adjustment applies only from the surface,
    as in the sheet's defaults). The boundary values enter as constants.

    Parameters
    ----------
    pressure_depth : array_like, shape (..., L)
        Layer depths, surface first. [Pa]
    integrate : {"from_top", "from_surface"}
    adjust : {"none", "uniform", "obrien"}

    Returns
    -------
    numpy.ndarray, shape (..., L + 1, L)  [Pa s^-1 per s^-1 = Pa]
    """
    dp = np.asarray(pressure_depth, dtype=float)
    size = dp.shape[-1]
    interface = np.arange(size + 1)[:, None]
    layer = np.arange(size)[None, :]
    if integrate == "from_top":
        return np.where(layer >= interface, -dp[..., None, :], 0.0)
    if integrate != "from_surface":
        raise ValueError(f"integrate must be from_top or from_surface, got {integrate!r}")
    raw = np.where(layer < interface, dp[..., None, :], 0.0)
    return raw @ adjustment_matrix(dp, adjust)


def tendency_row(pressure_depth, integrate="from_top", adjust="none"):
    """d(surface pressure tendency)/d(layer divergence): the surface row of ``omega_matrix``.

    The tendency is omega_s plus terrain and advection terms that do not depend on the
    divergence: -dp from the top, 0 from the surface (omega_s is then an input).

    Returns
    -------
    numpy.ndarray, shape (..., L)  [Pa]
    """
    return omega_matrix(pressure_depth, integrate, adjust)[..., 0, :]
