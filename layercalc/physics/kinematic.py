"""Kinematic vertical motion: omega from layer divergence, its correction, w, p_s tendency.

Layer arrays carry the layer axis LAST, index 0 the lowest (surface) layer; any leading
axes (scenarios) broadcast. Units: divergence [s^-1], pressure depth p_bottom - p_top
[Pa] (> 0), omega = Dp/Dt [Pa s^-1] (negative for rising air).

The continuity equation in pressure coordinates, d(omega)/dp = -div_p(V), integrated
across a layer of depth dp = p_bottom - p_top with its mean divergence D gives

    omega_top = omega_bottom + D * dp.

References
----------
Holton, J. R. and G. J. Hakim, 2013: An Introduction to Dynamic Meteorology, 5th ed.,
Academic Press: continuity equation in isobaric coordinates in section 3.1, and the
kinematic method (integrating it layer by layer) in section 3.5.1 (section numbers from
memory, equation numbers not checked).
O'Brien, J. J., 1970: Alternative solutions to the classical vertical velocity problem.
J. Appl. Meteor., 9, 197-203 (divergence errors assumed to grow linearly with height;
the closed form for equal layers is derived in `divergence_adjustment_obrien`).
"""

import numpy as np

from layercalc.constants import G0, RD


def _layer_mass_flux(divergence, pressure_depth):
    """div * dp per layer [Pa s^-1]: the change of omega across each layer."""
    return np.asarray(divergence, dtype=float) * np.asarray(pressure_depth, dtype=float)


def _per_column(value):
    """A scalar or shape (...) per-column value as shape (..., 1) to broadcast over layers."""
    return np.asarray(value, dtype=float)[..., np.newaxis]


def omega_integrated_from_surface(divergence, pressure_depth, omega_at_surface):
    """Omega at every layer's surfaces, integrating continuity upward from the ground.

    omega_top[k] = omega_s + sum_{j <= k} D[j] * dp[j],   omega_bottom[k] = omega_top[k-1]

    Parameters
    ----------
    divergence : array_like, shape (..., L)
        Layer-mean horizontal divergence, surface layer first. [s^-1]
    pressure_depth : array_like, shape (..., L)
        Pressure depth p_bottom - p_top of each layer, > 0. [Pa]
    omega_at_surface : array_like, scalar or shape (...)
        Omega at the lowest surface of each column. [Pa s^-1]

    Returns
    -------
    omega_bottom, omega_top : numpy.ndarray, shape (..., L)
        Omega at each layer's lower and upper surfaces. [Pa s^-1]

    References
    ----------
    Holton and Hakim, 2013, section 3.5.1, kinematic method (from memory).
    """
    flux = _layer_mass_flux(divergence, pressure_depth)
    base = _per_column(omega_at_surface)
    omega_top = base + np.cumsum(flux, axis=-1)
    omega_bottom = np.concatenate(
        [np.broadcast_to(base, omega_top[..., :1].shape), omega_top[..., :-1]], axis=-1)
    return omega_bottom, omega_top


def omega_integrated_from_top(divergence, pressure_depth, omega_at_top):
    """Omega at every layer's surfaces, integrating continuity downward from the column top.

    omega_bottom[k] = omega_T - sum_{j >= k} D[j] * dp[j],   omega_top[k] = omega_bottom[k+1]

    Parameters
    ----------
    divergence : array_like, shape (..., L)
        Layer-mean horizontal divergence, surface layer first. [s^-1]
    pressure_depth : array_like, shape (..., L)
        Pressure depth p_bottom - p_top of each layer, > 0. [Pa]
    omega_at_top : array_like, scalar or shape (...)
        Omega at the uppermost surface of each column (often 0). [Pa s^-1]

    Returns
    -------
    omega_bottom, omega_top : numpy.ndarray, shape (..., L)
        Omega at each layer's lower and upper surfaces; omega_bottom[..., 0] is the
        surface omega. [Pa s^-1]

    References
    ----------
    Holton and Hakim, 2013, section 3.5.1, kinematic method (from memory).
    """
    flux = _layer_mass_flux(divergence, pressure_depth)
    top = _per_column(omega_at_top)
    flux_above = np.flip(np.cumsum(np.flip(flux, axis=-1), axis=-1), axis=-1)
    omega_bottom = top - flux_above
    omega_top = np.concatenate(
        [omega_bottom[..., 1:], np.broadcast_to(top, omega_bottom[..., :1].shape)], axis=-1)
    return omega_bottom, omega_top


def top_mismatch(raw_omega_at_top, target_omega_at_top):
    """Error of the upward-integrated omega at the column top.

    e = omega_top_raw - omega_top_target

    Parameters
    ----------
    raw_omega_at_top : array_like
        Omega at the column top from integrating the observed divergence upward. [Pa s^-1]
    target_omega_at_top : array_like
        The value omega should have there (e.g. 0 at a tropopause or a lid). [Pa s^-1]

    Returns
    -------
    numpy.ndarray
        Mismatch to remove by adjusting the divergence. [Pa s^-1]
    """
    return np.asarray(raw_omega_at_top, dtype=float) - target_omega_at_top


def divergence_adjustment_uniform(divergence, pressure_depth, mismatch):
    """Divergence corrected by the same amount in every layer to remove a top mismatch.

    delta = -e / sum_k dp[k],   D'[k] = D[k] + delta

    so that sum_k D'[k] dp[k] = sum_k D[k] dp[k] - e: integrated upward from the same
    surface omega, the corrected divergence reaches the target omega at the top.

    Parameters
    ----------
    divergence : array_like, shape (..., L)
        Observed layer-mean divergence, surface layer first. [s^-1]
    pressure_depth : array_like, shape (..., L)
        Pressure depth of each layer, > 0. [Pa]
    mismatch : array_like, scalar or shape (...)
        Raw minus target omega at the column top (`top_mismatch`). [Pa s^-1]

    Returns
    -------
    numpy.ndarray, shape (..., L)
        Corrected divergence D + delta (not the correction alone). [s^-1]
    """
    pressure_depth = np.asarray(pressure_depth, dtype=float)
    delta = -_per_column(mismatch) / np.sum(pressure_depth, axis=-1, keepdims=True)
    return np.asarray(divergence, dtype=float) + delta


def divergence_adjustment_obrien(divergence, pressure_depth, mismatch):
    """Divergence corrected by an amount growing linearly with pressure depth above ground.

    With P[k] = sum_{j <= k} dp[j] the pressure depth from the column bottom to the top
    of layer k,

        delta[k] = c * P[k],   c = -e / sum_k (P[k] * dp[k]),   D'[k] = D[k] + delta[k],

    so sum_k delta[k] dp[k] = -e and the corrected divergence, integrated upward from the
    same surface omega, reaches the target omega at the top.

    Closed form for K layers of equal depth dp: P[k] = k dp (k = 1..K counting layers from
    the bottom), sum_k P[k] dp = dp^2 K (K + 1) / 2, so c = -2 e / (dp^2 K (K + 1)). The
    omega change at interface k (top of layer k) is

        sum_{j <= k} delta[j] dp = c dp^2 k (k + 1) / 2 = -e k (k + 1) / (K (K + 1)),

    i.e. omega'_k = omega_k - e * k (k + 1) / (K (K + 1)): the quadratic correction
    associated with O'Brien (1970), zero at the ground and -e at the top.

    Parameters
    ----------
    divergence : array_like, shape (..., L)
        Observed layer-mean divergence, surface layer first. [s^-1]
    pressure_depth : array_like, shape (..., L)
        Pressure depth of each layer, > 0. [Pa]
    mismatch : array_like, scalar or shape (...)
        Raw minus target omega at the column top (`top_mismatch`). [Pa s^-1]

    Returns
    -------
    numpy.ndarray, shape (..., L)
        Corrected divergence D + delta (not the correction alone). [s^-1]

    References
    ----------
    O'Brien, J. J., 1970, J. Appl. Meteor., 9, 197-203 (the idea of a divergence error
    growing linearly with height and the equal-layer form above; the weighting by
    pressure depth for unequal layers is this module's generalisation).
    """
    pressure_depth = np.asarray(pressure_depth, dtype=float)
    depth_below_top = np.cumsum(pressure_depth, axis=-1)
    weight = np.sum(depth_below_top * pressure_depth, axis=-1, keepdims=True)
    coefficient = -_per_column(mismatch) / weight
    return np.asarray(divergence, dtype=float) + coefficient * depth_below_top


def vertical_velocity(omega, pressure, virtual_temperature):
    """Vertical velocity from omega, hydrostatic approximation.

    w = -omega / (rho * g0),   rho = p / (Rd * Tv)

    Parameters
    ----------
    omega : array_like
        Pressure vertical velocity Dp/Dt. [Pa s^-1]
    pressure : array_like
        Pressure where omega is given. [Pa]
    virtual_temperature : array_like
        Virtual temperature there. [K]

    Returns
    -------
    numpy.ndarray
        Vertical velocity, positive upward. [m s^-1]

    References
    ----------
    Holton and Hakim, 2013, section 3.5 (omega ~ -rho g w for synoptic-scale motion;
    from memory).
    """
    # w = omega * (-Rd / (g0 p)) * Tv: the same formula with the pressure factor first,
    # so that a sweep's (variants x layers) arrays are passed twice, not five times
    factor = -RD / (G0 * np.asarray(pressure, dtype=float))
    return np.asarray(omega, dtype=float) * factor * np.asarray(virtual_temperature,
                                                                 dtype=float)


def column_mean_divergence(divergence, pressure_depth):
    """Mass-weighted (pressure-depth-weighted) mean divergence of the column.

    D_mean = sum_k D[k] dp[k] / sum_k dp[k]

    Parameters
    ----------
    divergence : array_like, shape (..., L)
        Layer-mean divergence. [s^-1]
    pressure_depth : array_like, shape (..., L)
        Pressure depth of each layer, > 0. [Pa]

    Returns
    -------
    numpy.ndarray, shape (...)
        Column-mean divergence. [s^-1]
    """
    pressure_depth = np.asarray(pressure_depth, dtype=float)
    return (np.sum(_layer_mass_flux(divergence, pressure_depth), axis=-1)
            / np.sum(pressure_depth, axis=-1))


def dines_ratio(divergence, pressure_depth):
    """How far divergence and convergence in the column fail to compensate.

    ratio = |sum_k D[k] dp[k]| / sum_k |D[k]| dp[k]

    0 when convergence and divergence cancel exactly (Dines compensation), 1 when all
    layers diverge or all converge; 0 when every divergence is 0 (nothing to cancel; the
    sheet's default uses the same convention).

    Parameters
    ----------
    divergence : array_like, shape (..., L)
        Layer-mean divergence. [s^-1]
    pressure_depth : array_like, shape (..., L)
        Pressure depth of each layer, > 0. [Pa]

    Returns
    -------
    numpy.ndarray, shape (...)
        Ratio in [0, 1]. [1]

    References
    ----------
    The ratio is defined here as a diagnostic; no published source is claimed for it.
    """
    divergence = np.asarray(divergence, dtype=float)
    pressure_depth = np.asarray(pressure_depth, dtype=float)
    net = np.abs(np.sum(divergence * pressure_depth, axis=-1))
    gross = np.sum(np.abs(divergence) * pressure_depth, axis=-1)
    return np.divide(net, gross, out=np.zeros(np.shape(gross)), where=gross > 0)


def nondivergence_levels(pressure_midpoint, divergence):
    """Pressures where a 1-D divergence profile changes sign (levels of nondivergence).

    Between consecutive layers k, k+1 whose divergences have strictly opposite signs, the
    divergence is taken linear in ln p between the layer midpoints, giving

        ln p0 = ln p_k + (ln p_{k+1} - ln p_k) * D_k / (D_k - D_{k+1}).

    A layer whose divergence is exactly 0 contributes its own midpoint pressure, once
    (its neighbours' pairs with it are not sign changes).

    Parameters
    ----------
    pressure_midpoint : array_like, shape (L,)
        Midpoint pressure of each layer, surface layer first. [Pa]
    divergence : array_like, shape (L,)
        Layer-mean divergence. [s^-1]

    Returns
    -------
    list of float
        Pressures of nondivergence, from the surface upward. [Pa]

    Raises
    ------
    ValueError
        If the inputs are not two 1-D arrays of the same length (one column only).
    """
    pressure_midpoint = np.asarray(pressure_midpoint, dtype=float)
    divergence = np.asarray(divergence, dtype=float)
    if pressure_midpoint.ndim != 1 or pressure_midpoint.shape != divergence.shape:
        raise ValueError(
            f"nondivergence_levels takes one column: two 1-D arrays of equal length, "
            f"got shapes {pressure_midpoint.shape} and {divergence.shape}")
    log_p = np.log(pressure_midpoint)
    lower, upper = divergence[:-1], divergence[1:]
    crossing = np.flatnonzero(lower * upper < 0)
    fraction = lower[crossing] / (lower[crossing] - upper[crossing])
    crossing_log_p = log_p[crossing] + (log_p[crossing + 1] - log_p[crossing]) * fraction
    zero = np.flatnonzero(divergence == 0)

    # Order all levels from the surface upward: a crossing sits between layers k and k+1.
    position = np.concatenate([crossing + 0.5, zero.astype(float)])
    level_log_p = np.concatenate([crossing_log_p, log_p[zero]])
    return np.exp(level_log_p[np.argsort(position, kind="stable")]).tolist()


def terrain_vertical_velocity(surface_wind_speed, terrain_slope_along_wind):
    """Vertical velocity forced by flow along sloping ground.

    w_s = V . grad(z_s) = |V| * slope

    Parameters
    ----------
    surface_wind_speed : array_like
        Surface wind speed. [m s^-1]
    terrain_slope_along_wind : array_like
        dz_s/ds along the wind direction, positive when the wind blows uphill. [1]

    Returns
    -------
    numpy.ndarray
        Vertical velocity at the ground, positive for upslope flow. [m s^-1]
    """
    return np.asarray(surface_wind_speed, dtype=float) * terrain_slope_along_wind


def terrain_tendency_term(surface_density, surface_vertical_velocity):
    """Terrain term of the surface pressure tendency.

    rho_s * g0 * w_s

    Parameters
    ----------
    surface_density : array_like
        Air density at the ground. [kg m^-3]
    surface_vertical_velocity : array_like
        Vertical velocity at the ground, e.g. from `terrain_vertical_velocity`. [m s^-1]

    Returns
    -------
    numpy.ndarray
        Term to add to the surface pressure tendency. [Pa s^-1]
    """
    return np.asarray(surface_density, dtype=float) * G0 * surface_vertical_velocity


def surface_pressure_tendency(omega_surface, advection=0.0, terrain_term=0.0):
    """Local surface pressure tendency from surface omega, advection and terrain.

    dp_s/dt = omega_s - V . grad_z(p) + rho_s g0 w_s

    Derivation: the surface pressure p_s(x, y, t) = p(x, y, z_s(x, y), t) and a parcel on
    the ground has omega_s = dp_s/dt + V . grad(p_s). The gradient along the ground is
    grad(p_s) = grad_z(p) + (dp/dz) grad(z_s) = grad_z(p) - rho_s g0 grad(z_s), and
    V . grad(z_s) = w_s, which gives the equation above.

    Signs: omega_s < 0 (rising air at the ground) lowers p_s; advection > 0 (wind blowing
    toward higher pressure, i.e. bringing lower pressure) lowers p_s; upslope flow
    (w_s > 0) raises p_s for a given omega_s.

    Parameters
    ----------
    omega_surface : array_like
        Omega at the ground, e.g. ``omega_integrated_from_top(...)[0][..., 0]``. [Pa s^-1]
    advection : array_like, optional
        V . grad_z(p): the wind times the horizontal pressure gradient at constant height
        (e.g. from a sea-level-reduced pressure map). If it is computed from the actual
        surface-pressure map, it already contains the terrain effect; then leave
        terrain_term at 0. [Pa s^-1]
    terrain_term : array_like, optional
        rho_s g0 w_s, see `terrain_tendency_term`. [Pa s^-1]

    Returns
    -------
    numpy.ndarray
        Local tendency of surface pressure dp_s/dt. [Pa s^-1]

    References
    ----------
    Derived above from the definition of omega; no published equation is claimed.
    """
    return (np.asarray(omega_surface, dtype=float) - np.asarray(advection, dtype=float)
            + np.asarray(terrain_term, dtype=float))
