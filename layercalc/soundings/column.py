"""Soundings -> the layers a sheet works on: a `levels` table and/or `station` blocks.

Called by the checker when a file has no `layers` table. What it does, in order:

- Each table is read level by level (`p` required; `T`, `Td`/`RH`/`r`, `z`, wind as `dir`
  and `speed` or as `u` and `v`; any other column is carried along) and sorted surface
  first; top-first, surface-first or mixed row order give the same layers.
- The column's levels: the top-level `levels` table when there is one; otherwise the mean
  over the stations at each level (a station's '-' leaves it out of that level's mean).
  Consecutive levels become layers (physics.levels.layers_from_levels): every quantity is
  linear in ln p between levels, so a layer's value is the mean of its two levels.
  A value missing at an inner level is interpolated linearly in ln p from the nearest
  levels that have it (a notice says so); missing at the lowest or highest level is an
  error: nothing is extrapolated.
- Hydrostatic check of every sounding with `T` and `z` (the levels table and each station):
  observed thickness against the hypsometric thickness from the levels' virtual
  temperature (a missing humidity counts as dry), tolerance 10 m per layer unless the sheet
  says `cell hydrostatic_tolerance = 15 m`; each flag is a notice at the row of the level
  the diagnosis names (physics.levels.diagnose_hydrostatic_flags).
- Stations (three or more, all at the same levels): the winds of each level give
  divergence and vorticity (physics.stations.station_polygon_divergence); the layer's
  `div` is the mean of its two levels' divergences (linear in ln p). A level where fewer
  than three stations have a wind has no fitted divergence: it is interpolated in ln p
  from the levels above and below (a notice says so), an error at the lowest or highest
  level. With a top-level table too, that table gives T/Td/z and the stations only the
  winds, at the same levels.

Display units of the built columns: p_bottom, p_top [hPa]; T, Td, Tv [degC]; div
[1e-5 s^-1]; RH [%]; r [g/kg]; any other column its header's unit. Details for the
outputs (per-level divergence and vorticity, the network's centroid and area, hydrostatic
tables, layer-mean winds) are soundings.details dataclasses, in SI.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from layercalc.language import units as U
from layercalc.language.inputs import InputColumn
from layercalc.language.unit_text import parse_unit_string
from layercalc.errors import DefinitionError, Notice
from layercalc.soundings.details import (
    LayerWind, Network, NetworkLevels, NetworkStation, SoundingDetails,
)
from layercalc.soundings.levels import (
    LEVEL_ONLY, WIND_NAMES, Sounding, cell_definition, constant_cell, fill_gaps, hpa,
    hydrostatic_check, length_cell, level_notices, mean_over_soundings, read_sounding,
)
from layercalc.language.nodes import Station, Table
from layercalc.physics import levels as level_physics, stations as station_physics

DISPLAY_UNITS = {"p_bottom": "hPa", "p_top": "hPa", "T": "degC", "Td": "degC", "Tv": "degC",
                 "RH": "%", "r": "g/kg", "div": "1e-5 s^-1"}
TOLERANCE_CELL = "hydrostatic_tolerance"


@dataclass
class SoundingLayers:
    """What the checker takes from here (see checking.tables.TableChecker.layer_table)."""

    columns: dict[str, InputColumn]
    layer_count: int
    notices: list[Notice] = field(default_factory=list)
    details: SoundingDetails | None = None


def _column_levels(main, network, notices, counts) -> tuple[dict, dict, str]:
    """The column's quantities at its levels (SI), their units, and where they came from;
    ``counts`` receives, per quantity, how many soundings report it at each level."""
    if main is not None:
        names = [n for n in main.values if n not in LEVEL_ONLY]
        counts.update({n: np.isfinite(main.values[n]).astype(int) for n in names})
        levels = {n: fill_gaps(main.pressure, main.values[n], n, main.name,
                               lambda k, n=n: main.entry_span(n, k), notices) for n in names}
        return levels, {n: main.units[n] for n in names}, "the levels table"
    soundings = network.soundings
    names = list(dict.fromkeys(n for s in soundings for n in s.values if n not in LEVEL_ONLY))
    levels, units = {}, {}
    for name in names:  # mean over the stations that have a value, level by level
        having = [s for s in soundings if name in s.values]
        for s in soundings:
            if name not in s.values:
                notices.append(Notice(f"{s.name} gives no {name}: the column's {name} is the "
                                      f"mean of the {len(having)} stations that do",
                                      s.table.span))
        stack = np.array([s.values[name] for s in having])
        counts[name] = np.isfinite(stack).sum(axis=0)
        for s in having:
            for k in np.flatnonzero(~np.isfinite(s.values[name])):
                if np.isfinite(stack[:, k]).any():
                    notices.append(Notice(
                        f"{s.name} has no {name} at {hpa(s.pressure[k])}: the column's value "
                        f"there is the mean of the other stations", s.entry_span(name, k)))
        levels[name] = fill_gaps(network.pressure, mean_over_soundings(stack), name, "the station mean",
                                 lambda k: network.soundings[0].row_span(k), notices)
        units[name] = having[0].units[name]
    return levels, units, "the mean over the stations"


def _display(name: str, fallback: U.Unit) -> U.Unit:
    return parse_unit_string(DISPLAY_UNITS[name]) if name in DISPLAY_UNITS else fallback


def _columns(pressure, levels, units, spans) -> dict[str, InputColumn]:
    """Layer columns (SI, surface first) from level values; each column points at its header."""
    names = list(levels)
    p_bottom, p_top, *means = level_physics.layers_from_levels(pressure,
                                                               *(levels[n] for n in names))
    columns = {name: InputColumn(name, parse_unit_string("hPa"), values, spans["p"])
               for name, values in (("p_bottom", p_bottom), ("p_top", p_top))}
    for name, mean in zip(names, means):
        columns[name] = InputColumn(name, _display(name, units[name]), mean, spans[name])
    return columns


# ---------------------------------------------------------------- stations
@dataclass
class _Network:
    stations: list[Station]
    soundings: list[Sounding]
    pressure: np.ndarray
    latitudes: np.ndarray
    longitudes: np.ndarray


def _read_network(checker, stations: list[Station]) -> _Network:
    names = [st.name for st in stations]
    if len(stations) < station_physics.MINIMUM_STATIONS:
        quoted = ", ".join(f'"{name}"' for name in names)
        raise DefinitionError(
            f"{len(stations)} station{'s' if len(stations) != 1 else ''} given "
            f"({quoted}); divergence from winds needs at least "
            f"{station_physics.MINIMUM_STATIONS}", stations[0].span,
            hint="add stations around the place of interest, or give div in a layers table")
    for i, st in enumerate(stations):
        if st.name in names[:i]:
            raise DefinitionError(f'station "{st.name}" appears twice', st.span,
                                  hint="give each station its own name")
        if not (-90.0 <= st.latitude <= 90.0 and -180.0 <= st.longitude <= 360.0):
            wrong = st.latitude_span if not -90.0 <= st.latitude <= 90.0 else st.longitude_span
            raise DefinitionError(
                f'station "{st.name}" is at latitude {st.latitude:g}, longitude '
                f"{st.longitude:g}", wrong or st.span,
                hint="latitude from -90 to 90 (north positive), longitude from -180 to 360 "
                     "(east positive), in degrees")
        for other in stations[:i]:
            if (other.latitude, other.longitude) == (st.latitude, st.longitude):
                raise DefinitionError(f'stations "{other.name}" and "{st.name}" are at the '
                                      "same place", st.span)
    soundings = [read_sounding(checker, st.table, f'station "{st.name}"') for st in stations]
    first = soundings[0]
    for st, s in zip(stations, soundings):
        if s.wind() is None:
            raise DefinitionError(f"{s.name} has no wind", s.table.headings[0].span,
                                  hint="add the columns dir [deg] and speed [kt] (or u, v)")
        for k, p in enumerate(s.pressure):
            if p not in first.pressure:
                raise DefinitionError(
                    f"{s.name} reports {hpa(p)}, which {first.name} does not", s.row_span(k),
                    hint="every station reports the same levels; write '-' for a missing "
                         "value")
        for k, p in enumerate(first.pressure):
            if p not in s.pressure:
                raise DefinitionError(
                    f"{s.name} has no row for {hpa(p)}, which {first.name} reports",
                    st.span, hint="every station reports the same levels; add the row "
                                       "with '-' for the missing values")
    return _Network(stations, soundings, first.pressure,
                    np.array([st.latitude for st in stations]),
                    np.array([st.longitude for st in stations]))


# Beyond this latitude (deg) meridians converge so fast that a reported direction from
# "north" changes meaning over a few km: a warning (our choice, no source).
POLAR_LATITUDE = 85.0


def _divergence(network: _Network, notices: list[Notice]) -> tuple[np.ndarray, Network]:
    """Divergence per level (inner gaps interpolated in ln p) and the details of the fit."""
    winds = [s.wind() for s in network.soundings]
    u = np.stack([w[0] for w in winds], axis=-1)  # (levels, stations)
    v = np.stack([w[1] for w in winds], axis=-1)
    result = station_physics.station_polygon_divergence(network.latitudes, network.longitudes,
                                                        u, v)
    span = network.stations[0].span
    for text in station_physics.shape_warnings(result.shape):
        notices.append(Notice(f"station network: {text}", span))
    for st in network.stations:
        if abs(st.latitude) > POLAR_LATITUDE:
            notices.append(Notice(
                f'station "{st.name}" is within {90 - POLAR_LATITUDE:g} degrees of a pole, '
                "where a wind direction from north is ill-defined; check its winds", st.span))
    divergence = np.array(result.divergence, dtype=float)
    if not np.isfinite(divergence).any():
        raise DefinitionError("no level has a usable wind field: fewer than three stations "
                              "with winds, or stations in a line, at every level", span,
                              hint="check the winds and the station positions")
    present = np.isfinite(u) & np.isfinite(v)
    pressure = network.pressure
    for k in np.flatnonzero(~present.all(axis=1)):
        lacking = [s for s, ok in zip(network.soundings, present[k]) if not ok]
        text = ", ".join(s.name for s in lacking)
        where = f"no wind at {hpa(pressure[k])} from {text}"
        if np.isfinite(divergence[k]):
            notices.append(Notice(f"{where}: divergence there is fitted from the other "
                                  f"{int(present[k].sum())} stations", lacking[0].row_span(k)))
            continue
        unfitted = (f"{where}: fewer than {station_physics.MINIMUM_STATIONS} stations (not "
                    "in a line) have one, so the divergence there cannot be fitted")
        if k in (0, pressure.size - 1):
            raise DefinitionError(
                f"{unfitted}; it is the {'lowest' if k == 0 else 'highest'} level",
                lacking[0].row_span(k),
                hint=f"give the wind there, or remove the {hpa(pressure[k])} row from every "
                     "table: divergence is interpolated between levels, never extrapolated")
        fitted = np.isfinite(divergence)
        below, above = pressure[:k][fitted[:k]][-1], pressure[k + 1:][fitted[k + 1:]][0]
        notices.append(Notice(f"{unfitted}: interpolated linearly in ln p between "
                              f"{hpa(below)} and {hpa(above)}", lacking[0].row_span(k)))
    filled = fill_gaps(pressure, divergence, "divergence", "station network",
                       lambda k: network.soundings[0].row_span(k), [])  # said above
    centre = (result.centroid_latitude, result.centroid_longitude)
    x, y, _ = station_physics.tangent_plane_coordinates(network.latitudes, network.longitudes,
                                                        *centre)
    shape = result.shape
    levels = NetworkLevels(pressure, filled, ~np.isfinite(divergence),
                           np.asarray(result.vorticity, dtype=float),
                           np.atleast_1d(result.fit.stations_used).astype(int),
                           np.asarray(result.fit.u_at_origin, dtype=float),
                           np.asarray(result.fit.v_at_origin, dtype=float))
    stations = tuple(NetworkStation(st.name, st.latitude, st.longitude, float(x[i]), float(y[i]),
                                    u[:, i], v[:, i],
                                    "direction and speed" if "dir" in network.soundings[i].values
                                    else "components")
                     for i, st in enumerate(network.stations))
    layer_divergence = level_physics.layers_from_levels(pressure, filled)[2]
    return filled, Network(float(centre[0]), float(centre[1]), float(result.area),
                           float(shape.smallest_angle_deg), float(shape.collinearity),
                           float(shape.smallest_separation), float(shape.largest_separation),
                           stations, levels, layer_divergence)


# ---------------------------------------------------------------- the entry point
def layers_from_soundings(checker, level_tables: list[Table],
                          stations: list[Station]) -> SoundingLayers:
    """Layers, notices and details from a sheet's `levels` table and/or `station` blocks.

    The semantics are listed in the module docstring. Raises DefinitionError or UnitError,
    with the position of the offending table, row, entry or station, for bad input.
    """
    notices: list[Notice] = []
    if len(level_tables) > 1:
        raise DefinitionError("a sheet has one top-level levels table; this is a second one",
                              level_tables[1].span,
                              hint="each station's levels go inside its station block")
    given = length_cell(checker, TOLERANCE_CELL)
    tolerance = level_physics.HYDROSTATIC_TOLERANCE_M if given is None else given[0]
    if tolerance <= 0:
        raise DefinitionError(f"{TOLERANCE_CELL} must be above 0 m", given[1])
    main = read_sounding(checker, level_tables[0], "the levels table") if level_tables else None
    network = _read_network(checker, stations) if stations else None
    soundings = ([main] if main else []) + (network.soundings if network else [])
    for s in soundings:
        level_notices(s, notices)
    counts: dict = {}
    levels, units, source = _column_levels(main, network, notices, counts)
    pressure = main.pressure if main is not None else network.pressure
    span_of = {}
    for s in reversed(soundings):
        span_of.update({h.name: h.span for h in s.table.headings})
    heights = [s.values["z"] for s in ([main] if main else soundings) if "z" in s.values]
    if heights:  # observed heights at the column's levels (station mean), for the report
        heights = mean_over_soundings(heights)
    column_levels = {"pressure": pressure, **levels,
                     "z": heights if len(heights) else np.array([])}
    network_details = layer_wind = None
    if main is not None and network is not None:
        if main.pressure.size != network.pressure.size or not np.array_equal(
                main.pressure, network.pressure):
            extra = [k for k, p in enumerate(main.pressure) if p not in network.pressure]
            where = main.row_span(extra[0]) if extra else main.table.span
            raise DefinitionError(
                "the levels table and the stations must give the same levels",
                where, hint="the stations report " + ", ".join(
                    hpa(p) for p in network.pressure))
        ignored = sorted({n for s in network.soundings for n in s.values if n not in
                          ("p", *WIND_NAMES)})
        if ignored:
            notices.append(Notice(
                "the levels table gives the column's " + ", ".join(ignored) + "; the "
                "stations' values of these are used only for their hydrostatic check",
                network.stations[0].span))
    if network is not None:
        if "div" in levels:
            raise DefinitionError("div is given in a table and also comes from the station "
                                  "winds", span_of["div"],
                                  hint="remove the div column, or the stations' winds")
        levels["div"], network_details = _divergence(network, notices)
        units["div"] = parse_unit_string("1e-5 s^-1")
        span_of["div"] = network.stations[0].span
    if main is not None and main.wind() is not None:
        p_bottom, p_top, u, v = level_physics.layer_mean_wind(main.pressure, *main.wind())
        layer_wind = LayerWind(p_bottom, p_top, u, v)
    hydrostatic = tuple(hydrostatic_check(s, tolerance, notices) for s in soundings
                        if "z" in s.values and "T" in s.values)
    lowest_level = pressure[0]
    pressure, levels, column_levels = _cut_at_surface(checker, pressure, levels,
                                                      column_levels, notices)
    at_surface = None  # a cut column: the height of its new bottom, interpolated in ln p
    if pressure[0] != lowest_level and len(column_levels["z"]):
        at_surface = float(column_levels["z"][0])
    _surface_height_notice(checker, main if main is not None else network.soundings,
                           tolerance, notices, at_surface)
    columns = _columns(pressure, levels, units, span_of)
    details = SoundingDetails(source, tolerance, column_levels, network_details, layer_wind,
                              hydrostatic, counts, main,
                              tuple(network.soundings) if network is not None else (),
                              None if pressure[0] == lowest_level else float(pressure[0]))
    return SoundingLayers(columns, pressure.size - 1, notices, details)


def _cut_at_surface(checker, pressure, levels, column_levels, notices):
    """Levels below a `surface_pressure` higher up than the lowest levels are dropped, and
    the layer that straddles the surface is cut at it: a level at surface_pressure with
    every quantity interpolated linearly in ln p between its neighbours (as between any
    two levels, physics.levels). Returns pressure, levels and column_levels, cut."""
    given = constant_cell(checker, "surface_pressure", "pressure", "960 hPa", quiet=True)
    if given is None or not given[0] < pressure[0]:
        return pressure, levels, column_levels
    surface, span = given
    if not surface > pressure[-1]:
        raise DefinitionError(f"surface_pressure {hpa(surface)} is at or above the highest "
                              f"level, {hpa(pressure[-1])}: no layer is left above the "
                              "ground", span, hint="check surface_pressure and its unit")
    below = int(np.count_nonzero(pressure > surface))  # levels under the ground
    exact = pressure[below] == surface
    s = -np.log(pressure)

    def cut(values):
        values = np.asarray(values, dtype=float)
        if values.size != pressure.size:
            return values
        kept = values[below:]
        if exact:
            return kept
        at_surface = np.interp(-np.log(surface), s[below - 1:below + 1],
                               values[below - 1:below + 1])
        return np.concatenate(([at_surface], kept))

    new_pressure = pressure[below:] if exact else np.concatenate(([surface], pressure[below:]))
    dropped = ", ".join(hpa(p) for p in pressure[:below])
    text = (f"surface_pressure is {hpa(surface)}: the level{'s' if below > 1 else ''} "
            f"{dropped} below the surface {'are' if below > 1 else 'is'} dropped")
    if not exact:
        text += (f", and the layer {hpa(pressure[below - 1])} to {hpa(pressure[below])} is "
                 f"cut at {hpa(surface)} (values there interpolated linearly in ln p)")
    notices.append(Notice(text, span))
    new_levels = {name: cut(values) for name, values in levels.items()}
    new_column_levels = {name: (new_pressure if name == "pressure" else cut(values))
                         for name, values in column_levels.items()}
    return new_pressure, new_levels, new_column_levels


def _surface_height_notice(checker, soundings, tolerance, notices,
                           at_surface: float | None = None) -> None:
    """Heights start at surface_height: say so when the lowest observed height differs
    (or, for a column cut at surface_pressure, the observed heights there: `at_surface`)."""
    soundings = soundings if isinstance(soundings, list) else [soundings]
    observed = [s.values["z"][0] for s in soundings if "z" in s.values]
    observed = [z for z in observed if np.isfinite(z)]
    if not observed:
        return
    lowest = float(np.mean(observed))
    if at_surface is not None and np.isfinite(at_surface):
        given = length_cell(checker, "surface_height", quiet=True)
        if given is None or abs(given[0] - at_surface) > tolerance:
            text = (f"surface_height is {given[0]:.0f} m but" if given is not None else
                    "surface_height is not given, so computed heights start at 0 m; but")
            notices.append(Notice(
                f"{text} the observed heights put surface_pressure at about "
                f"{at_surface:.0f} m (interpolated linearly in ln p)",
                given[1] if given is not None else soundings[0].row_span(0)))
        return
    given = length_cell(checker, "surface_height", quiet=True)
    where = soundings[0].row_span(0)
    if given is None and cell_definition(checker, "surface_height") is None:
        notices.append(Notice(
            f"surface_height is not given, so computed heights start at 0 m; the lowest level "
            f"({hpa(soundings[0].pressure[0])}) is observed at {lowest:.0f} m"
            f"{' (mean of the stations)' if len(observed) > 1 else ''}: add 'cell "
            f"surface_height = {lowest:.0f} m'", where))
    elif given is not None and abs(given[0] - lowest) > tolerance:
        notices.append(Notice(
            f"surface_height is {given[0]:.0f} m but the lowest level is observed at "
            f"{lowest:.0f} m", given[1]))
