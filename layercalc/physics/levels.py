"""From a table of levels (a sounding at standard levels) to layers, and its hydrostatic check.

A sounding gives values at pressure levels; layercalc works on layers between consecutive
levels, surface first. Between two levels every quantity is taken linear in ln p, the
usual assumption for reported soundings; the layer mean is then the mean of the two
endpoint values (derivation in ``layers_from_levels``).

Pressures are in Pa, temperatures in K, heights in geopotential metres.
"""

from typing import NamedTuple

import numpy as np

from layercalc.constants import G0, RD
from layercalc.errors import DefinitionError

__all__ = [
    "HydrostaticCheck", "layers_from_levels", "layer_mean_wind", "hydrostatic_consistency",
    "diagnose_hydrostatic_flags", "checkable_levels",
]

# Default allowed |observed - hypsometric| thickness of one layer [m]. Common practice,
# no source: 10 m is 0.5 K of layer-mean virtual temperature over 1000-500 hPa
# (Rd / g0 * ln 2 = 20.3 m/K) and covers heights reported to the metre. It is too tight
# for heights reported in decametres (TEMP standard levels at and above 500 hPa) and
# for a layer that straddles the tropopause, where T is not linear in ln p: the U.S.
# Standard Atmosphere 1976 300-200 hPa layer is 22 m off for that reason alone.
HYDROSTATIC_TOLERANCE_M = 10.0

# Two adjacent flagged layers count as "of similar size and opposite sign" when
# |d1 + d2| <= PAIR_SIMILARITY * max(|d1|, |d2|) [1]. Own choice, no source: a height
# error e at the shared level gives d1 = +e and d2 = -e exactly, plus each layer's own
# small discrepancy; 0.5 accepts discrepancies up to a quarter of e in each layer.
PAIR_SIMILARITY = 0.5


class HydrostaticCheck(NamedTuple):
    """Result of ``hydrostatic_consistency``; every field has the layers' shape."""

    hypsometric_thickness: np.ndarray         # Rd Tv / g0 ln(pb / pt) [m]
    difference: np.ndarray                    # observed - hypsometric [m]
    flagged: np.ndarray                       # |difference| > tolerance [bool]
    implied_virtual_temperature: np.ndarray   # g0 dz_obs / (Rd ln(pb / pt)) [K]


def layers_from_levels(pressure, *level_quantities):
    """Consecutive levels become layers; layer means with every quantity linear in ln p.

    Levels are first sorted by pressure, descending (surface first), so the table may
    come top-first or surface-first. Layer k lies between sorted levels k and k + 1:
    p_bottom = p[k], p_top = p[k + 1].

    Layer mean of a quantity T linear in s = ln p between s_b = ln p_bottom and
    s_t = ln p_top, T(s) = T_b + (T_t - T_b) (s - s_b) / (s_t - s_b):

    mean = (1 / (s_t - s_b)) * integral from s_b to s_t of T(s) ds
         = T_b + (T_t - T_b) * (1 / (s_t - s_b)**2) * integral of (s - s_b) ds
         = T_b + (T_t - T_b) / 2 = (T_b + T_t) / 2,

    the arithmetic mean of the endpoints. It is the ln p-weighted mean that the
    hypsometric equation needs: dz = (Rd / g0) * integral of Tv d(ln p)
    = (Rd / g0) * (Tv_b + Tv_t) / 2 * ln(p_bottom / p_top).

    Parameters
    ----------
    pressure : array_like
        Level pressures, shape (levels,), all distinct and > 0. [Pa]
    *level_quantities : array_like
        Values at the levels, level axis first: shape (levels,) or (levels, ...).
        [any unit]

    Returns
    -------
    tuple of numpy.ndarray
        (pressure_bottom, pressure_top, mean_1, mean_2, ...): pressures of shape
        (levels - 1,) [Pa], then one layer mean per quantity, shape (levels - 1, ...),
        in the quantity's unit, surface first.

    Raises
    ------
    DefinitionError
        Fewer than two levels, a repeated or non-positive pressure, or a quantity whose
        first axis is not the level axis.
    """
    pressure = np.asarray(pressure, dtype=float)
    if pressure.ndim != 1 or pressure.size < 2:
        raise DefinitionError(
            f"a level table needs at least 2 pressures in one column, got shape "
            f"{pressure.shape}")
    if not np.all(np.isfinite(pressure) & (pressure > 0.0)):
        raise DefinitionError("level pressures must be finite and > 0 Pa",
                              hint=f"found {pressure[~(np.isfinite(pressure) & (pressure > 0))]}")
    order = np.argsort(-pressure, kind="stable")
    sorted_pressure = pressure[order]
    repeated = sorted_pressure[:-1][np.diff(sorted_pressure) == 0.0]
    if repeated.size:
        raise DefinitionError(
            "level pressures must be distinct; repeated: "
            + ", ".join(f"{p / 100.0:g} hPa" for p in np.unique(repeated)),
            hint="merge or remove the duplicate levels")
    means = []
    for number, quantity in enumerate(level_quantities, start=1):
        quantity = np.asarray(quantity, dtype=float)
        if quantity.ndim == 0 or quantity.shape[0] != pressure.size:
            raise DefinitionError(
                f"level quantity {number} has shape {quantity.shape}, expected "
                f"{pressure.size} values along its first axis (one per pressure)")
        quantity = quantity[order]
        means.append(0.5 * (quantity[:-1] + quantity[1:]))
    return (sorted_pressure[:-1], sorted_pressure[1:], *means)


def layer_mean_wind(pressure, u, v):
    """Layer-mean wind components between consecutive levels.

    u_mean = (u_b + u_t) / 2,   v_mean = (v_b + v_t) / 2

    Each component is taken linear in ln p across the layer, so its ln p-weighted mean
    is the mean of the two endpoints (derivation in ``layers_from_levels``). This is the
    mean vector: its speed is not the mean of the two speeds (it is smaller when the
    wind turns across the layer).

    Parameters
    ----------
    pressure : array_like
        Level pressures, shape (levels,), any order. [Pa]
    u, v : array_like
        Eastward and northward components at the levels, level axis first. [m/s]

    Returns
    -------
    pressure_bottom, pressure_top : numpy.ndarray
        Shape (levels - 1,), surface first. [Pa]
    u_mean, v_mean : numpy.ndarray
        Layer means, shape (levels - 1, ...). [m/s]
    """
    return layers_from_levels(pressure, u, v)


def hydrostatic_consistency(pressure_bottom, pressure_top, observed_thickness,
                            virtual_temperature, tolerance=HYDROSTATIC_TOLERANCE_M):
    """Compare reported layer thickness with the hypsometric thickness.

    dz_hyp = Rd * Tv / g0 * ln(p_bottom / p_top)
    difference = dz_obs - dz_hyp,  flagged = |difference| > tolerance
    Tv_implied = g0 * dz_obs / (Rd * ln(p_bottom / p_top))

    Parameters
    ----------
    pressure_bottom, pressure_top : array_like
        Layer bounding pressures, p_bottom > p_top > 0. [Pa]
    observed_thickness : array_like
        Reported geopotential height at the top minus that at the bottom. [m]
    virtual_temperature : array_like
        Layer-mean virtual temperature (``layers_from_levels``). [K]
    tolerance : float, optional
        Allowed |difference|; default 10 m (see ``HYDROSTATIC_TOLERANCE_M``). [m]

    Returns
    -------
    HydrostaticCheck
        hypsometric_thickness [m], difference [m], flagged [bool] (False where the
        difference is NaN), implied_virtual_temperature [K].

    References
    ----------
    Hypsometric equation, e.g. Wallace, J. M. and Hobbs, P. V., 2006: Atmospheric
    Science, 2nd ed., Academic Press, section 3.2.2, eq. (3.29) (equation number from
    memory). Rd and g0 from layercalc.constants (U.S. Standard Atmosphere 1976 values).
    """
    pressure_bottom = np.asarray(pressure_bottom, dtype=float)
    pressure_top = np.asarray(pressure_top, dtype=float)
    observed_thickness = np.asarray(observed_thickness, dtype=float)
    log_pressure_ratio = np.log(pressure_bottom / pressure_top)
    hypsometric = RD * np.asarray(virtual_temperature, dtype=float) / G0 * log_pressure_ratio
    difference = observed_thickness - hypsometric
    flagged = np.abs(difference) > tolerance
    implied = G0 * observed_thickness / (RD * log_pressure_ratio)
    return HydrostaticCheck(hypsometric, difference, flagged, implied)


def checkable_levels(virtual_temperature, height):
    """Indices of the levels the hydrostatic check can use, and the layers it checks.

    A level counts only where both its virtual temperature and its reported height are
    given (finite). The check then runs over the layers between consecutive usable levels:
    where an inner level lacks a value, the two layers beside it are not checked one by
    one but as one layer spanning both. With Tv linear in ln p this is the same
    hypsometric thickness as the sum of the two layers' with the missing Tv interpolated
    (the trapezoid rule is exact for a linear function), so nothing is invented; only
    the level in between cannot be tested.

    Parameters
    ----------
    virtual_temperature, height : array_like, shape (levels,)
        At the levels, surface first; NaN where not reported. [K], [m]

    Returns
    -------
    numpy.ndarray of int
        Indices of the usable levels, increasing (consecutive pairs are the checked layers).
    """
    usable = np.isfinite(np.asarray(virtual_temperature, dtype=float)) & np.isfinite(
        np.asarray(height, dtype=float))
    return np.flatnonzero(usable)


def _temperature_error(difference, log_pressure_ratio):
    """Error of ONE endpoint temperature that explains a thickness difference. [K]

    One endpoint off by dT moves the layer mean by dT / 2 and dz_hyp by
    Rd / g0 * dT / 2 * ln(pb / pt); difference = -that, so dT = -2 g0 d / (Rd ln(pb / pt)).
    """
    return -2.0 * G0 * difference / (RD * log_pressure_ratio)


class HydrostaticFlag(NamedTuple):
    """One suspected error behind hydrostatic flags (``diagnose_hydrostatic_flags``).

    cause: "height" (the height at `level` is off by about `height_error`), "temperature"
    (the temperature at `level` is off: `temperature_errors` from the layer below and above),
    or "layer" (one layer off: a temperature at one of its levels by `temperature_errors[0]`,
    or, at the column's ends, a height). Pressures in Pa, differences in m, errors in K.
    """

    cause: str
    level: float | None                  # the shared level (height, temperature) [Pa]
    pressure_bottom: float               # the (lower) flagged layer's bottom [Pa]
    pressure_top: float                  # the (upper) flagged layer's top [Pa]
    differences: tuple                   # observed minus hypsometric, per flagged layer [m]
    height_error: float | None = None    # for "height": how far the height is off [m]
    temperature_errors: tuple = ()       # for "temperature" and "layer" [K]
    lowest: bool = False                 # "layer": it is the lowest layer
    highest: bool = False                # "layer": it is the highest layer


def diagnose_hydrostatic_flags(pressure_bottom, pressure_top, difference, flagged):
    """The likely cause of hydrostatic flags on consecutive layers.

    Layers are taken in the given order, consecutive and surface first (as from
    ``layers_from_levels``), with difference = observed - hypsometric thickness.

    - Two adjacent flagged layers with opposite-signed differences of similar size
      (|d1 + d2| <= 0.5 max(|d1|, |d2|)): the height at their shared level is off by
      about d1 (too high if d1 > 0), since that height ends one layer and starts the
      next.
    - Two adjacent flagged layers with differences of the same sign: the temperature
      at their shared level is off; each layer gives dT = -2 g0 d / (Rd ln(pb / pt)).
    - A single flagged layer: a temperature at one of its two levels (the same
      formula), or, for the lowest or highest layer, the height at the column's end.

    Parameters
    ----------
    pressure_bottom, pressure_top : array_like
        Layer bounding pressures, shape (layers,). [Pa]
    difference : array_like
        Observed minus hypsometric thickness. [m]
    flagged : array_like of bool
        Flags from ``hydrostatic_consistency``.

    Returns
    -------
    list of HydrostaticFlag
        One per suspected error; empty when nothing is flagged.
    """
    pressure_bottom = np.asarray(pressure_bottom, dtype=float)
    pressure_top = np.asarray(pressure_top, dtype=float)
    difference = np.asarray(difference, dtype=float)
    flagged = np.asarray(flagged, dtype=bool)
    log_ratio = np.log(pressure_bottom / pressure_top)
    layer_count = flagged.size
    found = []
    layer = 0
    while layer < layer_count:
        if not flagged[layer]:
            layer += 1
            continue
        d1 = float(difference[layer])
        nxt = layer + 1
        if (nxt < layer_count and flagged[nxt]
                and pressure_top[layer] == pressure_bottom[nxt]):
            d2 = float(difference[nxt])
            shared = float(pressure_top[layer])
            pair = (float(pressure_bottom[layer]), float(pressure_top[nxt]), (d1, d2))
            if np.sign(d1) != np.sign(d2) and abs(d1 + d2) <= PAIR_SIMILARITY * max(abs(d1), abs(d2)):
                found.append(HydrostaticFlag("height", shared, *pair, height_error=d1))
                layer += 2
                continue
            if np.sign(d1) == np.sign(d2):
                errors = (float(_temperature_error(d1, log_ratio[layer])),
                          float(_temperature_error(d2, log_ratio[nxt])))
                found.append(HydrostaticFlag("temperature", shared, *pair,
                                             temperature_errors=errors))
                layer += 2
                continue
        found.append(HydrostaticFlag(
            "layer", None, float(pressure_bottom[layer]), float(pressure_top[layer]), (d1,),
            temperature_errors=(float(_temperature_error(d1, log_ratio[layer])),),
            lowest=layer == 0, highest=layer == layer_count - 1))
        layer += 1
    return found
