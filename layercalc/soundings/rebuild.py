"""Layers rebuilt from changed level values: what a scenario that changes a station's wind
or a levels table's values (`scale speed by 1.2 at "Eastmoor"`) computes instead of the
base sheet's layer columns.

The steps are those of soundings/column.py, with every level value carrying a trailing
variant axis (a scenario, or each variant of a sweep), so that many variants are one pass:

- the column's quantities at its levels: the levels table's, or the mean over the
  stations that report the quantity (levels.mean_over_soundings); inner gaps filled
  linearly in ln p;
- the stations' winds -> u, v (physics.winds.wind_components) -> the least-squares
  linear fit per level (physics.stations.station_polygon_divergence: the fit of unit
  winds gives each level's weights, since the fit is linear in the winds, and the
  weights are applied to every variant's winds in one sum) -> divergence per level,
  inner gaps filled in ln p;
- the cut at surface_pressure, when the base column was cut (a value at the surface
  interpolated linearly in ln p between its neighbours);
- consecutive levels -> layer means (physics.levels.layers_from_levels).

A change never fills a missing value ('-' stays missing), so the gaps are those of the
base sheet, already reported there.
"""

from __future__ import annotations

import numpy as np

from layercalc.physics import levels as level_physics, stations as station_physics
from layercalc.physics.winds import wind_components
from layercalc.soundings.levels import LEVEL_ONLY, WIND_NAMES, mean_over_soundings


def depends_on(name: str) -> str:
    """The layer column a level quantity feeds: a wind feeds div, T feeds T."""
    return "div" if name in WIND_NAMES else name


def rebuild_layers(details, values: list[dict], wanted: set[str]) -> dict[str, np.ndarray]:
    """Layer columns (variants, layers) in SI for the columns named in `wanted`.

    `details` is the base sheet's SoundingDetails; `values` gives, for each sounding in the
    order levels table (if any) then stations, name -> level values (levels, variants)
    in SI (base values as (levels, 1) where unchanged).
    """
    main = details.levels_table
    stations = list(details.station_soundings)
    station_values = values[1:] if main is not None else values
    pressure = main.pressure if main is not None else stations[0].pressure
    levels: dict[str, np.ndarray] = {}
    from_winds = "div" in wanted and bool(stations)
    for name in wanted - ({"div"} if from_winds else set()):
        if main is not None:
            levels[name] = fill_in_ln_p(pressure, values[0][name])
            continue
        having = [v[name] for s, v in zip(stations, station_values) if name in s.values]
        stack = np.stack(np.broadcast_arrays(*having))
        levels[name] = fill_in_ln_p(pressure, mean_over_soundings(stack))
    if from_winds:
        levels["div"] = _divergence(details, stations, station_values, pressure)
    pressure, levels = _cut(pressure, levels, details.surface_cut)
    names = list(levels)
    _, _, *means = level_physics.layers_from_levels(pressure, *(levels[n] for n in names))
    return {name: np.ascontiguousarray(mean.T) for name, mean in zip(names, means)}


def layer_columns_of(details) -> set[str]:
    """The layer columns the soundings give (besides p_bottom, p_top)."""
    main = details.levels_table
    sources = [main] if main is not None else list(details.station_soundings)
    found = {n for s in sources for n in s.values if n not in LEVEL_ONLY}
    return found | ({"div"} if details.station_soundings else set())


def station_winds(stations, station_values) -> tuple[np.ndarray, np.ndarray]:
    """Each station's wind, east and north, from its (changed) values: arrays (stations,
    levels, variants) in m/s (soundings.levels.Sounding.wind for each variant)."""
    winds = []
    for s, v in zip(stations, station_values):
        if "dir" in s.values:
            winds.append(wind_components(np.rad2deg(v["dir"]), v["speed"]))
        else:
            winds.append((v["u"], v["v"]))
    u = np.stack(np.broadcast_arrays(*(w[0] for w in winds), *(w[1] for w in winds)))
    return u[:len(stations)], u[len(stations):]


def _divergence(details, stations, station_values, pressure) -> np.ndarray:
    """Divergence per level and variant from the stations' (changed) winds.

    The fit is linear in the winds for a given set of stations with a wind at a level (a
    change never fills or empties one), so each level's divergence is a weighted sum of
    its winds: the weights are the fit of unit winds (station_polygon_divergence over one
    wind component at a time, 2n rows per level), then applied to every variant at once
    (no fit per variant: a sweep of a million variants is one sum)."""
    u, v = station_winds(stations, station_values)  # (stations, levels, variants) each
    count, n_levels = u.shape[0], u.shape[1]
    valid = np.isfinite(u).all(axis=-1) & np.isfinite(v).all(axis=-1)  # (stations, levels)
    basis = np.broadcast_to(np.eye(2 * count), (n_levels, 2 * count, 2 * count)).copy()
    for part in (0, count):  # a station without a wind at a level stays out of its fit
        basis[:, :, part:part + count] = np.where(valid.T[:, None, :], basis[:, :, part:part + count],
                                                  np.nan)
    latitudes = np.array([st.latitude for st in details.network.stations])
    longitudes = np.array([st.longitude for st in details.network.stations])
    unit = station_physics.station_polygon_divergence(
        latitudes, longitudes, basis[..., :count].reshape(-1, count),
        basis[..., count:].reshape(-1, count))
    weights = np.asarray(unit.divergence, dtype=float).reshape(n_levels, 2 * count)
    u = np.where(valid[..., None], u, 0.0)
    v = np.where(valid[..., None], v, 0.0)
    divergence = (np.einsum("li,ils->ls", weights[:, :count], u)
                  + np.einsum("li,ils->ls", weights[:, count:], v))
    return fill_in_ln_p(pressure, divergence)


def fill_in_ln_p(pressure, values) -> np.ndarray:
    """Levels missing in every variant filled linearly in ln p from the nearest levels that
    have a value, as levels.fill_gaps does for one sounding (the base sheet has already
    refused a gap at an end and reported the inner ones); values (levels, variants)."""
    values = np.asarray(values, dtype=float)
    missing = ~np.isfinite(values).any(axis=tuple(range(1, values.ndim)))
    if not missing.any():
        return values
    s = -np.log(pressure)
    known = np.flatnonzero(~missing)
    filled = values.copy()
    for k in np.flatnonzero(missing):
        lower = known[known < k][-1]
        upper = known[known > k][0]
        slope = (values[upper] - values[lower]) / (s[upper] - s[lower])
        filled[k] = slope * (s[k] - s[lower]) + values[lower]
    return filled


def _cut(pressure, levels: dict, surface: float | None):
    """The column cut at `surface` (as column._cut_at_surface cuts the base column)."""
    if surface is None:
        return pressure, levels
    below = int(np.count_nonzero(pressure > surface))
    if pressure[below] == surface:
        return pressure[below:], {n: v[below:] for n, v in levels.items()}
    s = -np.log(pressure)
    lower, upper = below - 1, below
    weight = (-np.log(surface) - s[lower]) / (s[upper] - s[lower])
    cut = {}
    for name, values in levels.items():
        slope = values[upper] - values[lower]
        at_surface = slope * weight + values[lower]
        cut[name] = np.concatenate((at_surface[None], values[below:]))
    return np.concatenate(([surface], pressure[below:])), cut
