"""Hypsometric equation: layer thickness, interface heights, heights of pressure surfaces.

Layer arrays carry the layer axis LAST, index 0 the lowest (surface) layer; any leading
axes (scenarios) broadcast. Heights are geopotential heights in geopotential metres:
the thickness uses the standard gravity g0, as the U.S. Standard Atmosphere 1976 does.

Reference for the hypsometric equation: Wallace, J. M. and P. V. Hobbs, 2006:
Atmospheric Science, An Introductory Survey, 2nd ed., Academic Press, section 3.2.2,
eq. 3.29, Z2 - Z1 = Rd * Tv_mean / g0 * ln(p1 / p2) (section and equation number from
memory, not re-checked against the book).
"""

import numpy as np

from layercalc.constants import G0, RD


def hypsometric_thickness(virtual_temperature, pressure_bottom, pressure_top):
    """Thickness of a layer between two pressure surfaces (hypsometric equation).

    dz = Rd * Tv / g0 * ln(p_bottom / p_top)

    Parameters
    ----------
    virtual_temperature : array_like
        Layer-mean virtual temperature, the mean over ln p. [K]
    pressure_bottom, pressure_top : array_like
        Pressures at the layer's lower and upper surfaces, p_bottom > p_top > 0. [Pa]

    Returns
    -------
    numpy.ndarray
        Geopotential thickness. [m] (geopotential metres)

    References
    ----------
    Wallace and Hobbs, 2006, Atmospheric Science, 2nd ed., section 3.2.2, eq. 3.29
    (from memory).
    """
    # the pressure factor first: one pass over a sweep's (variants x layers) Tv
    factor = RD / G0 * np.log(np.asarray(pressure_bottom, dtype=float) / pressure_top)
    return np.asarray(virtual_temperature, dtype=float) * factor


def virtual_temperature_from_thickness(thickness, pressure_bottom, pressure_top):
    """Layer-mean virtual temperature implied by a thickness (inverse hypsometric equation).

    Tv = g0 * dz / (Rd * ln(p_bottom / p_top))

    Parameters
    ----------
    thickness : array_like
        Geopotential thickness of the layer. [m]
    pressure_bottom, pressure_top : array_like
        Pressures at the layer's lower and upper surfaces, p_bottom > p_top > 0. [Pa]

    Returns
    -------
    numpy.ndarray
        Layer-mean (over ln p) virtual temperature. [K]

    References
    ----------
    Algebraic inverse of the hypsometric equation (Wallace and Hobbs, 2006, eq. 3.29,
    from memory).
    """
    return (G0 * np.asarray(thickness, dtype=float)
            / (RD * np.log(np.asarray(pressure_bottom, dtype=float) / pressure_top)))


def interface_heights(thickness, surface_height):
    """Heights of each layer's lower and upper surfaces by stacking thicknesses.

    z_top[k] = z_s + sum_{j <= k} dz[j],   z_bottom[k] = z_top[k] - dz[k]
    (z_bottom[0] = z_s, z_bottom[k] = z_top[k-1])

    Parameters
    ----------
    thickness : array_like, shape (..., L)
        Layer thicknesses, surface layer first. [m]
    surface_height : array_like, scalar or shape (...)
        Height of the column's lowest surface, one per column. [m]

    Returns
    -------
    z_bottom, z_top : numpy.ndarray, shape (..., L)
        Heights of each layer's lower and upper surfaces. [m]
    """
    thickness = np.asarray(thickness, dtype=float)
    base = np.asarray(surface_height, dtype=float)[..., np.newaxis]
    z_top = base + np.cumsum(thickness, axis=-1)
    z_bottom = np.concatenate(
        [np.broadcast_to(base, z_top[..., :1].shape), z_top[..., :-1]], axis=-1)
    return z_bottom, z_top


def thickness_change_for_warming(warming, pressure_bottom, pressure_top):
    """Change of a layer's thickness when its mean virtual temperature changes.

    d(dz) = Rd * dTv / g0 * ln(p_bottom / p_top)

    Parameters
    ----------
    warming : array_like
        Change of the layer-mean virtual temperature (a temperature difference;
        negative for cooling). [K]
    pressure_bottom, pressure_top : array_like
        Pressures at the layer's lower and upper surfaces, p_bottom > p_top > 0. [Pa]

    Returns
    -------
    numpy.ndarray
        Change of geopotential thickness. [m]

    References
    ----------
    The hypsometric equation is linear in Tv (Wallace and Hobbs, 2006, eq. 3.29, from
    memory), so the change follows by differencing.
    """
    return hypsometric_thickness(warming, pressure_bottom, pressure_top)


def rise_of_surfaces_above(thickness_change):
    """Rise of each layer's upper pressure surface caused by thickness changes below it.

    rise[k] = sum_{j <= k} d(dz)[j]   (surface height held fixed)

    Parameters
    ----------
    thickness_change : array_like, shape (..., L)
        Thickness change of each layer, surface layer first. [m]

    Returns
    -------
    numpy.ndarray, shape (..., L)
        Height change of the upper surface of each layer. [m]
    """
    return np.cumsum(np.asarray(thickness_change, dtype=float), axis=-1)


def height_at_pressure(interface_pressures, interface_heights, pressure):
    """Height of a pressure surface, interpolating height linearly in ln p between interfaces.

    For p_k >= p >= p_{k+1}:
        z = z_k + (z_{k+1} - z_k) * ln(p_k / p) / ln(p_k / p_{k+1})

    which is exact for an isothermal layer (there z is linear in ln p).

    Parameters
    ----------
    interface_pressures : array_like, shape (..., N)
        Pressures of the N = L + 1 layer interfaces, surface first, strictly decreasing. [Pa]
    interface_heights : array_like, shape (..., N)
        Heights of the same interfaces. [m]
    pressure : array_like
        Pressure(s) wanted; broadcast against the leading axes (...) of the columns.
        To ask M pressures of each of S columns, pass columns of shape (S, 1, N) and
        pressures of shape (S, M) or (M,). [Pa]

    Returns
    -------
    numpy.ndarray, shape broadcast((...), shape(pressure))
        Height of each wanted pressure; nan outside [p_top, p_surface] of its column. [m]
    """
    interface_pressures = np.asarray(interface_pressures, dtype=float)
    interface_heights = np.asarray(interface_heights, dtype=float)
    pressure = np.asarray(pressure, dtype=float)
    shape = np.broadcast_shapes(interface_pressures.shape[:-1], interface_heights.shape[:-1],
                                pressure.shape)
    levels = interface_pressures.shape[-1]
    p_levels = np.broadcast_to(interface_pressures, shape + (levels,))
    z_levels = np.broadcast_to(interface_heights, shape + (levels,))
    wanted = np.broadcast_to(pressure, shape)[..., np.newaxis]

    # Index of the interface at the bottom of the layer holding each wanted pressure.
    below = np.clip(np.sum(p_levels >= wanted, axis=-1, keepdims=True) - 1, 0, levels - 2)
    p_bottom = np.take_along_axis(p_levels, below, axis=-1)
    p_top = np.take_along_axis(p_levels, below + 1, axis=-1)
    z_bottom = np.take_along_axis(z_levels, below, axis=-1)
    z_top = np.take_along_axis(z_levels, below + 1, axis=-1)

    fraction = np.log(p_bottom / wanted) / np.log(p_bottom / p_top)
    height = z_bottom + (z_top - z_bottom) * fraction
    inside = (wanted <= p_levels[..., :1]) & (wanted >= p_levels[..., -1:])
    return np.where(inside, height, np.nan)[..., 0]


def log_pressure_midpoint(pressure_bottom, pressure_top):
    """Pressure half-way between two surfaces in ln p (the geometric mean).

    p_mid = sqrt(p_bottom * p_top),  i.e. ln p_mid = (ln p_bottom + ln p_top) / 2

    Parameters
    ----------
    pressure_bottom, pressure_top : array_like
        Pressures of the layer's lower and upper surfaces, > 0. [Pa]

    Returns
    -------
    numpy.ndarray
        Midpoint pressure in ln p; for an isothermal layer its height is the mid-height. [Pa]
    """
    return np.sqrt(np.asarray(pressure_bottom, dtype=float) * pressure_top)


def layer_mean_temperature_log_linear(temperature_bottom, temperature_top):
    """Mean over ln p of a temperature that is linear in ln p across the layer.

    With x = ln p, x_b = ln p_bottom, x_t = ln p_top and
    T(x) = T_b + (T_t - T_b) * (x - x_b) / (x_t - x_b), the ln p-weighted mean is

        T_mean = 1 / (x_t - x_b) * integral_{x_b}^{x_t} T(x) dx
               = T_b + (T_t - T_b) / (x_t - x_b)^2 * integral_{x_b}^{x_t} (x - x_b) dx
               = T_b + (T_t - T_b) / (x_t - x_b)^2 * (x_t - x_b)^2 / 2
               = (T_b + T_t) / 2,

    the arithmetic mean of the endpoint values, whatever the two pressures. This is the
    mean the hypsometric equation needs (dz = Rd / g0 * integral T d ln p); the same holds
    for virtual temperature.

    Parameters
    ----------
    temperature_bottom, temperature_top : array_like
        (Virtual) temperatures at the layer's lower and upper surfaces. [K]

    Returns
    -------
    numpy.ndarray
        Layer mean over ln p. [K]
    """
    return (np.asarray(temperature_bottom, dtype=float) + temperature_top) / 2.0
