"""Moisture variables: saturation vapour pressure, dewpoint, mixing ratio, virtual temperature.

All functions are pure numpy and elementwise: they accept arrays of any shape
(broadcasting like numpy ufuncs) and return float arrays in SI units.
"""

import numpy as np

from layercalc.constants import (
    BOLTON_EXPONENT_COEFFICIENT,
    BOLTON_SATURATION_VAPOUR_PRESSURE_AT_0C,
    BOLTON_TEMPERATURE_OFFSET,
    EPSILON,
    T_ZERO_CELSIUS,
)

_BOLTON_REFERENCE = (
    "Bolton, D., 1980: The computation of equivalent potential temperature. "
    "Mon. Wea. Rev., 108, 1046-1053"
)


def saturation_vapour_pressure(temperature):
    """Saturation vapour pressure over a plane surface of liquid water (Bolton 1980, eq. 10).

    es = 611.2 Pa * exp(17.67 * t / (t + 243.5 K)),  t = T - 273.15 K

    (equivalently exp(17.67 * (T - 273.15) / (T - 29.65)) with T in K).

    Parameters
    ----------
    temperature : array_like
        Air temperature. [K]

    Returns
    -------
    numpy.ndarray
        Saturation vapour pressure over liquid water. [Pa]

    Notes
    -----
    Bolton states that eq. 10 is accurate to 0.1 % for -30 degC <= t <= 35 degC; below
    0 degC it is the value over supercooled water, not over ice. The test suite checks
    the 0.1 % against the IAPWS saturation-pressure equation of Wagner and Pruss (2002)
    over 0.01..35 degC.

    References
    ----------
    Bolton, D., 1980, Mon. Wea. Rev., 108, 1046-1053, eq. 10 (form and coefficients
    from memory; verified here only through the tests against later formulations).
    """
    celsius = np.asarray(temperature, dtype=float) - T_ZERO_CELSIUS
    return BOLTON_SATURATION_VAPOUR_PRESSURE_AT_0C * np.exp(
        BOLTON_EXPONENT_COEFFICIENT * celsius / (celsius + BOLTON_TEMPERATURE_OFFSET)
    )


def vapour_pressure_from_dewpoint(dewpoint):
    """Vapour pressure from the dewpoint: the saturation vapour pressure at the dewpoint.

    e = es(Td), with es from Bolton (1980, eq. 10), see `saturation_vapour_pressure`.

    Parameters
    ----------
    dewpoint : array_like
        Dewpoint temperature (over liquid water). [K]

    Returns
    -------
    numpy.ndarray
        Water vapour partial pressure. [Pa]

    References
    ----------
    Bolton, D., 1980, Mon. Wea. Rev., 108, 1046-1053, eq. 10.
    """
    return saturation_vapour_pressure(dewpoint)


def dewpoint_from_vapour_pressure(vapour_pressure):
    """Dewpoint from the vapour pressure: the inverse of Bolton (1980) eq. 10.

    With x = ln(e / 611.2 Pa), solving x = 17.67 t / (t + 243.5 K) for t gives

        t = 243.5 K * x / (17.67 - x),   Td = t + 273.15 K

    (this is Bolton's eq. 11, there written with e in mb).

    Parameters
    ----------
    vapour_pressure : array_like
        Water vapour partial pressure, > 0. [Pa]

    Returns
    -------
    numpy.ndarray
        Dewpoint temperature over liquid water. [K]

    References
    ----------
    Bolton, D., 1980, Mon. Wea. Rev., 108, 1046-1053, eqs. 10 and 11 (derived here
    algebraically from eq. 10; the round trip is tested).
    """
    x = np.log(np.asarray(vapour_pressure, dtype=float) / BOLTON_SATURATION_VAPOUR_PRESSURE_AT_0C)
    celsius = BOLTON_TEMPERATURE_OFFSET * x / (BOLTON_EXPONENT_COEFFICIENT - x)
    return celsius + T_ZERO_CELSIUS


def mixing_ratio(vapour_pressure, pressure):
    """Water vapour mass mixing ratio from vapour pressure and total pressure.

    r = epsilon * e / (p - e),   epsilon = Rd / Rv

    Parameters
    ----------
    vapour_pressure : array_like
        Water vapour partial pressure, 0 <= e < p. [Pa]
    pressure : array_like
        Total air pressure. [Pa]

    Returns
    -------
    numpy.ndarray
        Mass of water vapour per mass of dry air. [kg kg^-1]

    References
    ----------
    Follows from Dalton's law and the ideal gas law for dry air and vapour; e.g.
    Wallace and Hobbs, Atmospheric Science, 2nd ed., 2006, section 3.5.1 (section
    number from memory).
    """
    vapour_pressure = np.asarray(vapour_pressure, dtype=float)
    return EPSILON * vapour_pressure / (np.asarray(pressure, dtype=float) - vapour_pressure)


def vapour_pressure_from_mixing_ratio(mixing_ratio, pressure):
    """Vapour pressure from the mixing ratio: the inverse of `mixing_ratio`.

    e = r * p / (epsilon + r)

    Parameters
    ----------
    mixing_ratio : array_like
        Water vapour mass mixing ratio, >= 0. [kg kg^-1]
    pressure : array_like
        Total air pressure. [Pa]

    Returns
    -------
    numpy.ndarray
        Water vapour partial pressure. [Pa]

    References
    ----------
    Algebraic inverse of r = epsilon * e / (p - e) (see `mixing_ratio`).
    """
    mixing_ratio = np.asarray(mixing_ratio, dtype=float)
    return mixing_ratio * np.asarray(pressure, dtype=float) / (EPSILON + mixing_ratio)


def vapour_pressure_from_relative_humidity(relative_humidity, temperature):
    """Vapour pressure from relative humidity defined over liquid water as e / es.

    e = RH * es(T), with es from Bolton (1980, eq. 10)

    Parameters
    ----------
    relative_humidity : array_like
        Relative humidity as a fraction, 0..1 (not percent). [1]
    temperature : array_like
        Air temperature. [K]

    Returns
    -------
    numpy.ndarray
        Water vapour partial pressure. [Pa]

    Notes
    -----
    This is the vapour-pressure definition RH = e / es. The WMO definition uses the
    ratio of mixing ratios r / rs; the two differ by the factor (p - es) / (p - e),
    less than 1 % for es < 0.01 p.

    References
    ----------
    Bolton, D., 1980, Mon. Wea. Rev., 108, 1046-1053, eq. 10 for es.
    """
    return np.asarray(relative_humidity, dtype=float) * saturation_vapour_pressure(temperature)


def virtual_temperature(temperature, mixing_ratio):
    """Virtual temperature of moist air, exact form in the mixing ratio.

    Tv = T * (r + epsilon) / (epsilon * (1 + r))

    Parameters
    ----------
    temperature : array_like
        Air temperature. [K]
    mixing_ratio : array_like
        Water vapour mass mixing ratio. [kg kg^-1]

    Returns
    -------
    numpy.ndarray
        Virtual temperature: the temperature dry air would need to have the same density
        at the same pressure. [K]

    Notes
    -----
    From p = rho * Rd * Tv with rho = rho_d (1 + r) and p = rho_d Rd T (1 + r / epsilon).
    To first order in r this is Tv = T (1 + 0.61 r).

    References
    ----------
    Wallace and Hobbs, Atmospheric Science, 2nd ed., 2006, section 3.1.1 (derivation of
    the virtual temperature; section number from memory).
    """
    mixing_ratio = np.asarray(mixing_ratio, dtype=float)
    # the moisture factor first: one pass over a sweep's (variants x layers) T
    return np.asarray(temperature, dtype=float) * ((mixing_ratio + EPSILON)
                                                   / (EPSILON * (1.0 + mixing_ratio)))
