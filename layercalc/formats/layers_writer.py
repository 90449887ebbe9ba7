"""Decoded soundings written as a readable, editable `.layers` text.

One sounding becomes a `levels` block; several become `station "ID" latitude .. longitude
..` blocks, each with its own `levels` table at the pressures all of them report (as the
network divergence wants). Comments name the source (file, format, parts, stations,
times) and every choice made while writing: which levels were left out and why, where
the surface height comes from. Values are written as decoded, not rounded (`repr`-exact
to ten significant digits, which removes only binary noise such as 13.600000000000023):
pressure in hPa, temperatures in degC, heights in m, wind in degrees and in the unit the
message used (kt or m/s).
"""

from __future__ import annotations

import numpy as np

from layercalc.constants import KNOT, T_ZERO_CELSIUS
from layercalc.errors import MessageError

from .decoded import DecodedSounding

__all__ = ["layers_text"]


def _number(value: float) -> str:
    if not np.isfinite(value):
        return "-"
    text = f"{value:.10g}"
    return "0" if text == "-0" else text


def _speed_unit(sounding: DecodedSounding) -> tuple[str, float]:
    if any("knots" in remark for remark in sounding.remarks):
        return "kt", KNOT
    return "m/s", 1.0


def _quote(text: str) -> str:
    return text.replace('"', "'")


def _table(sounding: DecodedSounding, rows: np.ndarray, indent: str, with_wind: bool,
           with_dewpoint: bool = True) -> list[str]:
    unit, factor = _speed_unit(sounding)
    columns = [("p [hPa]", sounding.pressure / 100.0), ("T [degC]", sounding.temperature - T_ZERO_CELSIUS)]
    if with_dewpoint and np.isfinite(sounding.dewpoint[rows]).any():
        columns.append(("Td [degC]", sounding.dewpoint - T_ZERO_CELSIUS))
    if np.isfinite(sounding.height[rows]).any():
        columns.append(("z [m]", sounding.height))
    if with_wind:
        columns += [("dir [deg]", sounding.wind_direction), (f"speed [{unit}]", sounding.wind_speed / factor)]
    cells = [[name for name, _ in columns]] + [[_number(values[k]) for _, values in columns] for k in rows]
    widths = [max(len(row[i]) for row in cells) for i in range(len(columns))]
    lines = [indent + "levels"]
    for row in cells:
        lines.append(indent + "  " + "  ".join(cell.rjust(width) for cell, width in zip(row, widths)).rstrip())
    lines.append(indent + "end")
    return lines


# Highest pressure the column may end at when levels without a dewpoint are cut from its
# top [Pa]. Own choice, no source: the divergence aloft that omega integrates is mostly
# below 300 hPa... and above; a column ending lower loses too much of it, so the dewpoint
# is dropped instead (the column is then dry: Tv = T, a few tenths of a K at most where
# the dewpoint is unknown, but 1-3 K near a moist surface).
HUMIDITY_CUT_LIMIT_PA = 30000.0


def _humidity_plan(pressure, has_td: list[bool], station: str, comments: list[str]):
    """(first, last) index range to keep and whether to write Td, for a table whose ends
    must carry every written column (a levels table interpolates only inner gaps)."""
    n = len(has_td)
    if not any(has_td) or (has_td[0] and has_td[-1]):
        return 0, n - 1, any(has_td)
    first = has_td.index(True)
    last = n - 1 - has_td[::-1].index(True)
    if pressure[last] <= HUMIDITY_CUT_LIMIT_PA:
        cut = [pressure[k] for k in range(n) if k < first or k > last]
        comments.append(
            f"# {station}: levels without a dewpoint at the ends ("
            + ", ".join(_number(p / 100) for p in cut) + " hPa) are left out: a levels table "
            "interpolates only inner gaps. Remove the Td column to keep them (the column is "
            "then taken dry).")
        return first, last, True
    comments.append(
        f"# {station}: the dewpoint is left out: it is reported only from "
        f"{_number(pressure[first] / 100)} to {_number(pressure[last] / 100)} hPa, and cutting "
        "the column there would lose the levels above; the column is taken dry (Tv = T).")
    return 0, n - 1, False


def _surface_height(sounding: DecodedSounding, rows: list[int], comments: list[str]):
    """(height, text saying where it comes from) of the table's lowest level, and rows."""
    bottom = rows[0]
    if np.isfinite(sounding.height[bottom]):
        if (sounding.elevation is not None and sounding.surface_pressure is not None
                and sounding.pressure[bottom] == sounding.surface_pressure):
            return rows, sounding.height[bottom], f"the station elevation ({sounding.position_source or 'the report'})"
        return rows, sounding.height[bottom], (
            f"the reported height of the lowest level, {_number(sounding.pressure[bottom] / 100)} hPa")
    with_height = [k for k in rows if np.isfinite(sounding.height[k])]
    if not with_height:
        return rows, None, "no height reported: computed heights start at 0 m"
    first = with_height[0]
    dropped = [k for k in rows if k < first]
    if dropped:
        comments.append(
            f"# {sounding.station}: no station elevation is known, so the table starts at the "
            f"lowest reported height ({_number(sounding.pressure[first] / 100)} hPa); the levels "
            "below (" + ", ".join(_number(sounding.pressure[k] / 100) for k in dropped)
            + " hPa) are left out. Give a station table (--station-table) to keep them.")
    return [k for k in rows if k >= first], sounding.height[first], (
        f"the lowest reported height, {_number(sounding.pressure[first] / 100)} hPa")


def _header(soundings, source: str, fmt: str) -> list[str]:
    lines = [f"# Soundings read from {source} ({fmt}) by layercalc import.",
             "# Values as decoded, not rounded: p [hPa], T and Td [degC], z [m] (geopotential),",
             "# wind direction [deg, from which it blows] and speed in the message's unit."]
    for s in soundings:
        where = (f"latitude {s.latitude:g} longitude {s.longitude:g}" if s.latitude is not None
                 else "position unknown")
        elevation = f", elevation {s.elevation:g} m" if s.elevation is not None else ""
        source_of = f" (from {s.position_source})" if s.position_source else ""
        lines.append(f"# station {s.station}, {s.time}: {where}{elevation}{source_of}; "
                     + ", ".join(s.parts))
        for remark in s.remarks:
            lines.append(f"#   {remark}")
    return lines


def layers_text(soundings, source: str, fmt: str) -> str:
    """A `.layers` text for one sounding (a levels block) or several (station blocks)."""
    soundings = list(soundings)
    if not soundings:
        raise MessageError(f"no sounding to write from {source}", location=source)
    lines = _header(soundings, source, fmt)
    if len(soundings) == 1:
        return "\n".join(lines + _single(soundings[0])) + "\n"
    return "\n".join(lines + _network(soundings)) + "\n"


def _single(s: DecodedSounding) -> list[str]:
    comments: list[str] = []
    rows = [k for k in range(s.level_count) if np.isfinite(s.temperature[k])]
    wind_only = s.level_count - len(rows)
    if len(rows) < 2:
        raise MessageError(f"{s.station} {s.time} has {len(rows)} level(s) with a temperature; "
                           "a levels table needs two or more", location=s.source)
    if wind_only:
        comments.append(f"# {wind_only} levels with a wind but no temperature are left out "
                        "(a single station gives no divergence; winds are kept for reference).")
    first, last, with_dewpoint = _humidity_plan(
        s.pressure[rows], [bool(np.isfinite(s.dewpoint[k])) for k in rows], s.station, comments)
    rows = rows[first:last + 1]
    rows, height, how = _surface_height(s, rows, comments)
    with_wind = bool(np.isfinite(s.wind_speed[rows[0]]) and np.isfinite(s.wind_speed[rows[-1]]))
    out = ["", f'title "Sounding {_quote(s.station)}, {s.time}"',
           f'note "Decoded from {_quote(s.source)}: {", ".join(s.parts)}"', ""] + comments
    if height is not None:
        out += [f"# surface height: {how}", f"cell surface_height = {_number(height)} m"]
    else:
        out.append(f"# surface height: {how}")
    out += [""] + _table(s, np.array(rows), "", with_wind, with_dewpoint)
    return out


def _network(soundings: list[DecodedSounding]) -> list[str]:
    for s in soundings:
        if s.latitude is None or s.longitude is None:
            raise MessageError(
                f"station {s.station} ({', '.join(s.parts)}) has no position; a station network "
                "needs each station's latitude and longitude", location=s.source,
                hint="give a station table: --station-table FILE with id,latitude,longitude,elevation")
    usable = [set(np.round(s.pressure[np.isfinite(s.temperature) & np.isfinite(s.wind_speed)], 3))
              for s in soundings]
    common = sorted(set.intersection(*usable), reverse=True)
    comments = [f"# Levels: the {len(common)} pressures at which every station reports a "
                "temperature and a wind (the network fits the winds level by level)."]
    def any_td(p):
        return any(np.isfinite(s.dewpoint[np.flatnonzero(np.round(s.pressure, 3) == p)[0]])
                   for s in soundings)
    first, last, with_dewpoint = _humidity_plan(
        np.array(common), [any_td(p) for p in common], "the stations", comments)
    common = common[first:last + 1]
    if len(common) < 2:
        raise MessageError("the stations share fewer than two levels with temperature and wind: "
                           + ", ".join(s.station for s in soundings), location=soundings[0].source)
    heights = []
    for s in soundings:
        k = np.flatnonzero(np.round(s.pressure, 3) == common[0])[0]
        heights.append(s.height[k])
    out = ["", f'title "{len(soundings)} soundings: divergence from the station network"',
           f'note "Decoded from {_quote(soundings[0].source)}; stations '
           + ", ".join(s.station for s in soundings) + '"', ""] + comments
    if all(np.isfinite(heights)):
        out += [f"# surface height: the mean of the stations' reported heights at "
                f"{_number(common[0] / 100)} hPa (" + ", ".join(_number(h) for h in heights) + " m)",
                f"cell surface_height = {_number(float(np.mean(heights)))} m"]
    else:
        out.append(f"# surface height: not every station reports a height at {_number(common[0] / 100)} "
                   "hPa; computed heights start at 0 m (add cell surface_height = ... m)")
    for s in soundings:
        rows = np.array([np.flatnonzero(np.round(s.pressure, 3) == p)[0] for p in common])
        out += ["", f'station "{_quote(s.station)}" latitude {_number(s.latitude)} longitude {_number(s.longitude)}']
        out += _table(s, rows, "  ", True, with_dewpoint)
        out.append("end")
    return out
