"""A sounding's hydrostatic profile: heights from temperatures, pressures at heights.

What the message decoders need to place levels: the height of every temperature level
(integrating the hypsometric equation from a level of known height), the pressure at a
height (for winds reported by height, as in PILOT Part B), and the standard atmosphere
as the fallback expectation of a standard surface's height. Pressures in Pa, temperatures
in K, heights in geopotential metres.
"""

import numpy as np

from layercalc.constants import G0, RD, USSA_LAYERS, USSA_SEA_LEVEL_PRESSURE
from layercalc.physics import humidity

__all__ = ["standard_atmosphere_height", "standard_atmosphere_base_pressures", "profile_virtual_temperature",
           "hydrostatic_heights", "pressure_at_height"]


def standard_atmosphere_base_pressures():
    """Pressure at the base of each layer of the U.S. Standard Atmosphere 1976 (0-47 km).

    From the sea-level pressure up, layer by layer (constants.USSA_LAYERS):
      L != 0: p1 = p0 * ((T0 + L (z1 - z0)) / T0) ** (-g0 / (Rd L))
      L == 0: p1 = p0 * exp(-g0 (z1 - z0) / (Rd T0))

    Returns
    -------
    list of float
        One base pressure per layer, the first the sea-level pressure. [Pa]

    References
    ----------
    U.S. Standard Atmosphere, 1976, NOAA/NASA/USAF, Washington DC, eqs. 33a/33b and
    table 4 (equation numbers from memory).
    """
    pressures = [USSA_SEA_LEVEL_PRESSURE]
    for (z0, t0, lapse), (z1, _, _) in zip(USSA_LAYERS[:-1], USSA_LAYERS[1:]):
        p0 = pressures[-1]
        if lapse == 0.0:
            pressures.append(p0 * np.exp(-G0 * (z1 - z0) / (RD * t0)))
        else:
            pressures.append(p0 * ((t0 + lapse * (z1 - z0)) / t0) ** (-G0 / (RD * lapse)))
    return pressures


def standard_atmosphere_height(pressure):
    """Geopotential height of a pressure in the U.S. Standard Atmosphere 1976 (0-47 km).

    Within a layer of lapse rate L from (z0, T0, p0):
      L != 0: z = z0 + T0 / L * ((p / p0) ** (-Rd L / g0) - 1)
      L == 0: z = z0 + Rd T0 / g0 * ln(p0 / p)

    Parameters
    ----------
    pressure : array_like
        Pressure, 1 Pa < p <= about 108000 Pa. [Pa]

    Returns
    -------
    numpy.ndarray
        Geopotential height. [m]

    References
    ----------
    U.S. Standard Atmosphere, 1976, NOAA/NASA/USAF, Washington DC, eqs. 33a/33b and
    table 4 (equation numbers from memory).
    """
    pressure = np.asarray(pressure, dtype=float)
    bases = standard_atmosphere_base_pressures()
    result = np.empty_like(pressure)
    for index, ((z0, t0, lapse), p0) in enumerate(zip(USSA_LAYERS, bases)):
        lower = bases[index + 1] if index + 1 < len(bases) else 0.0
        inside = (pressure <= p0) | (index == 0)
        inside &= pressure > lower
        if lapse == 0.0:
            z = z0 + RD * t0 / G0 * np.log(p0 / pressure)
        else:
            z = z0 + t0 / lapse * ((pressure / p0) ** (-RD * lapse / G0) - 1.0)
        result = np.where(inside, z, result)
    return result


def profile_virtual_temperature(pressure, temperature, dewpoint):
    """Virtual temperature at levels; dry (Tv = T) where the dewpoint is missing.

    Tv = T (r + eps) / (eps (1 + r)), r = eps e / (p - e), e = es(Td) (Bolton 1980)

    Parameters
    ----------
    pressure, temperature, dewpoint : array_like
        [Pa], [K], [K] (NaN dewpoint: no humidity at that level).

    Returns
    -------
    numpy.ndarray
        [K], NaN where the temperature is missing.

    References
    ----------
    layercalc.physics.humidity (Bolton 1980 eq. 10; exact virtual temperature).
    """
    pressure = np.asarray(pressure, dtype=float)
    temperature = np.asarray(temperature, dtype=float)
    dewpoint = np.asarray(dewpoint, dtype=float)
    vapour = humidity.vapour_pressure_from_dewpoint(np.where(np.isfinite(dewpoint), dewpoint, 200.0))
    ratio = humidity.mixing_ratio(vapour, pressure)
    moist = humidity.virtual_temperature(temperature, ratio)
    return np.where(np.isfinite(dewpoint), moist, temperature)


def hydrostatic_heights(pressure, virtual_temperature, anchor_pressure, anchor_height):
    """Heights of all levels from one level of known height, by the hypsometric equation.

    Between consecutive levels Tv is linear in ln p, so the layer mean is the mean of the
    two levels and dz = Rd * (Tv_b + Tv_t) / 2 / g0 * ln(p_b / p_t). The anchor need not
    be one of the levels: it is inserted and the thickness to its neighbours uses Tv
    interpolated in ln p.

    Parameters
    ----------
    pressure : array_like
        Levels, strictly decreasing. [Pa]
    virtual_temperature : array_like
        Tv at the levels, all finite. [K]
    anchor_pressure, anchor_height : float
        A level of known height within [p_min, p_max]. [Pa], [m]

    Returns
    -------
    numpy.ndarray
        Geopotential height of each level. [m]

    References
    ----------
    Hypsometric equation, e.g. Wallace and Hobbs (2006), Atmospheric Science, 2nd ed.,
    section 3.2.2; layer mean in ln p as in layercalc.physics.levels.layers_from_levels.
    """
    pressure = np.asarray(pressure, dtype=float)
    tv = np.asarray(virtual_temperature, dtype=float)
    log_p = np.log(pressure)
    anchor_log = np.log(anchor_pressure)
    # Tv at the anchor, linear in ln p (np.interp needs increasing abscissae)
    anchor_tv = np.interp(anchor_log, log_p[::-1], tv[::-1])
    # thickness from the anchor to each level through the levels in between
    all_log = np.concatenate([log_p, [anchor_log]])
    all_tv = np.concatenate([tv, [anchor_tv]])
    order = np.argsort(-all_log, kind="stable")
    s, t = all_log[order], all_tv[order]
    steps = RD / G0 * 0.5 * (t[:-1] + t[1:]) * (s[:-1] - s[1:])
    z = np.concatenate([[0.0], np.cumsum(steps)])
    where_anchor = int(np.flatnonzero(order == len(log_p))[0])
    z = z - z[where_anchor] + anchor_height
    heights = np.empty(len(log_p))
    heights[order[order < len(log_p)]] = z[order < len(log_p)]
    return heights


def pressure_at_height(level_pressure, level_height, height):
    """Pressure at given heights, ln p linear in height between the profile's levels.

    ln p(z) = ln p_i + (ln p_i+1 - ln p_i) (z - z_i) / (z_i+1 - z_i); NaN outside the
    profile. Linear ln p in z is exact for an isothermal layer and within 0.1 % of the
    hypsometric value for layers of a few hundred metres.

    Parameters
    ----------
    level_pressure, level_height : array_like
        The profile, heights strictly increasing with falling pressure. [Pa], [m]
    height : array_like
        Where the pressure is wanted. [m]

    Returns
    -------
    numpy.ndarray
        [Pa], NaN outside [min height, max height].
    """
    level_height = np.asarray(level_height, dtype=float)
    log_p = np.log(np.asarray(level_pressure, dtype=float))
    order = np.argsort(level_height)
    height = np.asarray(height, dtype=float)
    inside = (height >= level_height[order[0]]) & (height <= level_height[order[-1]])
    result = np.exp(np.interp(height, level_height[order], log_p[order]))
    return np.where(inside, result, np.nan)
