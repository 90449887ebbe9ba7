"""Coded upper-air messages, FM 35 TEMP and FM 32 PILOT (with FM 36/37/38 ship, drop and
mobile stations): bulletins in, one `DecodedSounding` per station and time out.

    decoded = parse_temp(text, "bulletin.txt")      # or read_temp(path)
    decoded.soundings, decoded.all_notices, decoded.problems

What is decoded (rules from WMO-No. 306, Manual on Codes, Vol. I.1, Part A, FM 32 and
FM 35; ALL FROM MEMORY, the Manual was not at hand; see temp_code.py and temp_parts.py):
section 1 of every part (land, ship, drop, mobile identification, YY + 50 for knots, Id
and a4); TEMP Part A (99PPP surface, standard surfaces 1000-100 hPa, 88 tropopause, 77/66
maximum wind), Part B (significant temperature levels, 21212 significant winds), Parts C
and D (the same above 100 hPa, pressures in tenths of hPa); PILOT Parts A/C (44nP1P1 winds
at standard surfaces) and B/D (9tnu1u2u3 winds by altitude, converted to pressure through
the hydrostatic profile of the TEMP temperature levels of the same station and time).
Read past, not decoded: 31313 (only the launch time is kept), 41414 clouds, the 4vbvbvava
shear group. Not decoded: regional and national sections (51515 ... 59595, 61616 ...,
101AdfAdf), code table 0265 (a4), Marsden squares, FM 35 section 10 and everything of
FM 94 BUFR-in-text.

Parts of the same station and time are merged (TEMP and PILOT alike); a part that
arrives twice is taken from the later report (a correction), with a warning. Levels below
the surface (standard surfaces with extrapolated heights and no data) are dropped and
said. Heights of standard surfaces with dropped thousands are chosen by the hydrostatic
check against the temperatures below; after merging, every layer between levels of known
height is checked again, and a disagreement is a warning at the group in the message.
"""

from __future__ import annotations

import math

import numpy as np

from layercalc.constants import T_ZERO_CELSIUS
from layercalc.errors import InputError, LayercalcError, MessageError, Notice
from layercalc.physics import sounding_profile as profile
from layercalc.source import Source, read_source

from . import hydrostatic, temp_code as code
from .bulletin import split_bulletin
from .decoded import Decoded, DecodedSounding, sort_levels
from .temp_parts import PILOT_HEIGHT_UNIT, Entry, Part, decode_report

__all__ = ["parse_temp", "read_temp"]

_ROLE_ORDER = {"standard": 0, "surface": 1, "significant": 2, "tropopause": 3, "wind": 4,
               "max wind": 5, "wind by altitude": 6}
_TOLERANCES = {"temperature": 0.05, "dewpoint": 0.05, "wind_direction": 0.5,
               "wind_speed": 0.05, "height": 0.5}
_FIELDS = ("height", "temperature", "dewpoint", "wind_direction", "wind_speed")


def read_temp(path, pilot_height_unit: float = PILOT_HEIGHT_UNIT, station_table=None) -> Decoded:
    """Read a file of TEMP/PILOT bulletins (text) and decode it; see `parse_temp`."""
    source = read_source(path)
    return parse_source(source, pilot_height_unit, station_table)


def parse_temp(text: str, name: str = "<text>", pilot_height_unit: float = PILOT_HEIGHT_UNIT,
               station_table=None) -> Decoded:
    """Decode the TEMP and PILOT reports in `text`, named `name` in messages.

    Reports that cannot be decoded are in `.problems` (MessageError, positioned at the
    group), never silently dropped; warnings are in `.notices`. `station_table` maps a
    land station's index to (latitude, longitude, elevation or None, where it comes from),
    as `soundings_input.read_station_table` returns it.
    """
    return parse_source(Source(name, text.replace("\r\n", "\n").replace("\r", "\n")),
                        pilot_height_unit, station_table)


def parse_source(source: Source, pilot_height_unit: float = PILOT_HEIGHT_UNIT,
                 station_table=None) -> Decoded:
    reports, notices = split_bulletin(source)
    if not reports:
        raise InputError(
            f"{source.name} holds no TEMP or PILOT report",
            hint="a report starts with its identifier (TTAA, TTBB, TTCC, TTDD, PPBB, UUAA, "
                 "XXAA, IIAA, ...) and ends with '='")
    parts: list[Part] = []
    problems: list[LayercalcError] = []
    for report in reports:
        try:
            part = decode_report(report, pilot_height_unit)
        except MessageError as error:
            problems.append(error)
            continue
        if part is None:
            notices.append(Notice(f"{report.identifier} report at line {report.line} is NIL "
                                  "(no data)", report.groups[0].span))
            continue
        parts.append(part)
    soundings = []
    for key, group in _by_station_and_time(parts, notices).items():
        entry = (station_table or {}).get(key[0])
        if entry is not None and group[0].kind == "land":
            for part in group:
                part.latitude, part.longitude, part.elevation = entry[0], entry[1], entry[2]
        try:
            soundings.append(merge_parts(group, source.name,
                                         entry[3] if entry is not None else None))
        except MessageError as error:
            problems.append(error)
    return Decoded(tuple(soundings), tuple(notices), tuple(problems), source.name,
                   "TEMP/PILOT text")


def _by_station_and_time(parts: list[Part], notices: list) -> dict:
    """Parts grouped by (station, day, hour); a repeated part keeps the later report."""
    grouped: dict = {}
    for part in parts:
        key = (part.station, part.day, part.hour)
        slot = grouped.setdefault(key, {})
        name = part.identifier
        if name in slot:
            earlier = slot[name]
            why = f" ({part.report.correction})" if part.report.correction else ""
            notices.append(Notice(
                f"{part.label} is given again{why}; the report at line {part.report.line} "
                f"replaces the one at line {earlier.report.line}", part.report.groups[0].span))
        slot[name] = part
    return {key: list(slot.values()) for key, slot in grouped.items()}


def merge_parts(parts: list[Part], source_name: str,
                position_source: str | None = None) -> DecodedSounding:
    """One sounding from the parts of one station and time."""
    first = parts[0]
    notices = [n for part in parts for n in part.notices]
    remarks: list[str] = []
    for part in parts:
        remarks.extend(f"{part.identifier}: {text}" for text in part.remarks)
        if part.knots:
            remarks.append(f"{part.identifier}: winds in knots (day + 50)")
    entries = [(part, entry) for part in parts for entry in part.entries]
    entries.sort(key=lambda item: _ROLE_ORDER[item[1].role])
    levels: dict[int, dict] = {}
    by_altitude: list = []
    surface_pressure = None
    for part, entry in entries:
        if entry.role == "surface":
            if surface_pressure is None:
                surface_pressure = entry.pressure
            elif abs(surface_pressure - entry.pressure) > 0.05:
                notices.append(Notice(
                    f"{part.label}: surface pressure {entry.pressure:g} hPa differs from "
                    f"{surface_pressure:g} hPa of the other part; the first is kept",
                    entry.spans["pressure"]))
                continue
        if entry.role == "wind by altitude":
            by_altitude.append((part, entry))
            continue
        _add_level(levels, part, entry, notices)
    pressures = sorted(levels, reverse=True)
    latitude, longitude, elevation = first.latitude, first.longitude, first.elevation
    surface_key = round(surface_pressure * 10) if surface_pressure is not None else None
    if elevation is not None and surface_key in levels:
        levels[surface_key]["values"]["height"] = elevation
        levels[surface_key]["height_resolution"] = 1.0
    if surface_pressure is not None:
        below = [p for p in pressures if p > round(surface_pressure * 10)]
        if below:
            remarks.append(
                "levels below the surface (" + ", ".join(f"{p / 10:g}" for p in below)
                + f" hPa; the surface is at {surface_pressure:g} hPa) are dropped: their "
                "heights are extrapolated and they carry no observations")
            _choose_heights(levels, pressures, remarks)  # their heights anchor those above
            for p in below:
                del levels[p]
            pressures = [p for p in pressures if p not in below]
    _choose_heights(levels, pressures, remarks)
    pressure, columns, positions = _arrays(levels)
    if by_altitude:
        pressure, columns, positions = _winds_by_altitude(
            by_altitude, pressure, columns, positions, surface_pressure, notices, remarks)
    if pressure.size == 0:
        raise MessageError("no level with data after merging the parts "
                           + ", ".join(p.identifier for p in parts),
                           parts[0].report.groups[0].span, report=first.label)
    _hydrostatic_check(pressure, columns, positions, levels, notices, first.label)
    station_parts = tuple(f"{p.identifier} (line {p.report.line})" for p in parts)
    if position_source is None:
        position_source = "the report" if latitude is not None else ""
    elif elevation is not None and surface_key in levels:
        remarks.append(f"surface height = station elevation {elevation:g} m ({position_source})")
    return DecodedSounding(
        station=first.station, kind=first.kind, time=f"day {first.day:02d} {first.hour:02d} UTC",
        latitude=latitude, longitude=longitude, elevation=elevation,
        position_source=position_source, pressure=pressure,
        height=columns["height"], temperature=columns["temperature"],
        dewpoint=columns["dewpoint"], wind_direction=columns["wind_direction"],
        wind_speed=columns["wind_speed"], source=source_name, parts=station_parts,
        remarks=tuple(remarks),
        surface_pressure=surface_pressure * 100.0 if surface_pressure is not None else None,
        positions=positions, notices=tuple(notices))


def _add_level(levels: dict, part: Part, entry: Entry, notices: list) -> None:
    key = round(entry.pressure * 10)  # tenths of hPa: exact for every code
    level = levels.setdefault(key, {"values": {}, "spans": {}, "role": entry.role,
                                    "height_code": None, "height_text": "",
                                    "height_resolution": math.nan, "label": part.label})
    values = dict(entry.values)
    for name, value in values.items():
        if not np.isfinite(value):
            continue
        if name in level["values"] and np.isfinite(level["values"][name]):
            old = level["values"][name]
            if abs(old - value) > _TOLERANCES[name]:
                notices.append(Notice(
                    f"{part.label}: {name.replace('_', ' ')} at {entry.pressure:g} hPa is "
                    f"{value:g} here but {old:g} in {level['label']}; the latter is kept",
                    entry.spans.get(name)))
            continue
        level["values"][name] = value
        level["spans"][name] = entry.spans.get(name)
    if entry.height_code is not None and level["height_code"] is None:
        level["height_code"] = entry.height_code
        level["height_text"] = entry.height_text
        level["spans"]["height"] = entry.spans.get("height")
        level["height_resolution"] = 10.0 if entry.height_code[1] == 10000.0 else 1.0
    level["spans"].setdefault("pressure", entry.spans.get("pressure"))


def _profile(levels: dict, keys) -> tuple[np.ndarray, np.ndarray]:
    """(pressure [Pa], Tv [K]) of the levels with a temperature, pressure falling."""
    pressure, tv = [], []
    for key in sorted(keys, reverse=True):
        values = levels[key]["values"]
        t = values.get("temperature", math.nan)
        if np.isfinite(t):
            pressure.append(key * 10.0)
            tv.append((t, values.get("dewpoint", math.nan)))
    if not pressure:
        return np.array([]), np.array([])
    t = np.array([x[0] for x in tv]) + T_ZERO_CELSIUS
    td = np.array([x[1] for x in tv]) + T_ZERO_CELSIUS
    return np.array(pressure), profile.profile_virtual_temperature(np.array(pressure), t, td)


def _thickness(levels, keys, p_bottom_key, p_top_key) -> float:
    """Hypsometric thickness between two levels through all temperature levels between
    them (NaN when the temperatures do not cover the layer)."""
    inside = [k for k in keys if p_top_key <= k <= p_bottom_key]
    pressure, tv = _profile(levels, inside)
    if pressure.size < 2 or pressure[0] != p_bottom_key * 10.0 or pressure[-1] != p_top_key * 10.0:
        return math.nan
    heights = profile.hydrostatic_heights(pressure, tv, pressure[0], 0.0)
    return float(heights[-1])


def _choose_heights(levels: dict, pressures: list, remarks: list) -> None:
    """Decide the thousands of every standard surface's height, surface first.

    Expected height: the level below with a known height plus the hypsometric thickness
    through the temperatures between; where temperatures do not cover the layer, the
    standard atmosphere's thickness. The candidate (base + k * period) nearest the
    expectation is taken; where it differs from the one nearest the standard atmosphere
    alone, a remark says so.
    """
    anchor = None  # (key, height)
    for key in sorted(levels, reverse=True):
        level = levels[key]
        height = level["values"].get("height", math.nan)
        if level["height_code"] is not None and not np.isfinite(height):
            base, period = level["height_code"]
            standard = float(profile.standard_atmosphere_height(key * 10.0))
            expected = standard
            how = "the standard atmosphere"
            if anchor is not None:
                thickness = _thickness(levels, list(levels), anchor[0], key)
                if np.isfinite(thickness):
                    expected, how = anchor[1] + thickness, f"the thickness from {anchor[0] / 10:g} hPa"
                else:
                    expected = anchor[1] + standard - float(profile.standard_atmosphere_height(anchor[0] * 10.0))
                    how = f"the standard atmosphere's thickness from {anchor[0] / 10:g} hPa"
            height = code.choose_height(base, period, expected)
            plain = code.choose_height(base, period, standard)
            if period and height != plain:
                remarks.append(
                    f"{key / 10:g} hPa height '{level['height_text']}' read as {height:g} m, "
                    f"not {plain:g} m, from {how}")
            level["values"]["height"] = height
        if np.isfinite(height):
            anchor = (key, height)


def _arrays(levels: dict):
    keys = sorted(levels, reverse=True)
    pressure = np.array([k * 10.0 for k in keys])
    columns = {name: np.array([levels[k]["values"].get(name, math.nan) for k in keys])
               for name in _FIELDS}
    columns["temperature"] = columns["temperature"] + T_ZERO_CELSIUS
    columns["dewpoint"] = columns["dewpoint"] + T_ZERO_CELSIUS
    positions = tuple(levels[k]["spans"] for k in keys)
    return pressure, columns, positions


def _winds_by_altitude(by_altitude, pressure, columns, positions, surface_pressure,
                       notices, remarks):
    """PILOT winds at altitudes -> pressures through the hydrostatic profile."""
    z_profile = _height_profile(pressure, columns)
    labels = sorted({part.label for part, _ in by_altitude})
    if z_profile is None:
        part, entry = by_altitude[0]
        notices.append(Notice(
            f"{', '.join(labels)}: the winds by altitude are left out: converting altitude to "
            "pressure needs the temperatures and a height (TEMP of the same station and "
            "time, or the station elevation)", entry.spans["pressure"]))
        return pressure, columns, positions
    p_levels, z_levels = z_profile
    remarks.append("PILOT winds by altitude placed at pressures through the hydrostatic "
                   "profile of the temperature levels (altitude taken as geopotential height)")
    new_p, new_cols, new_pos = list(pressure), {k: list(v) for k, v in columns.items()}, list(positions)
    outside = []
    for part, entry in by_altitude:
        if entry.altitude == 0.0 and surface_pressure is not None:
            p = surface_pressure * 100.0
        else:
            if entry.altitude == 0.0:
                outside.append(entry)
                continue
            p = float(profile.pressure_at_height(p_levels, z_levels, entry.altitude))
        if not np.isfinite(p):
            outside.append(entry)
            continue
        existing = np.flatnonzero(np.isclose(new_p, p, rtol=0, atol=1.0))
        if existing.size and np.isfinite(new_cols["wind_speed"][existing[0]]):
            notices.append(Notice(f"{part.label}: the wind at {entry.altitude:g} m "
                                  f"({p / 100:.1f} hPa) repeats a level that has one; left out",
                                  entry.spans["wind_speed"]))
            continue
        if existing.size:
            i = existing[0]
            new_cols["wind_direction"][i] = entry.values["wind_direction"]
            new_cols["wind_speed"][i] = entry.values["wind_speed"]
            continue
        new_p.append(p)
        for name in _FIELDS:
            new_cols[name].append(entry.values.get(name, math.nan))
        new_cols["height"][-1] = math.nan  # position only; not a reported height
        new_pos.append(entry.spans)
    if outside:
        notices.append(Notice(
            "winds at altitudes " + ", ".join(f"{e.altitude:g}" for e in outside)
            + " m lie outside the temperature profile and are left out",
            outside[0].spans["pressure"]))
    p, cols, pos = sort_levels(new_p, new_cols, new_pos)
    return p, cols, pos


def _height_profile(pressure, columns):
    """(pressure, height) at every temperature level, anchored at the lowest reported height."""
    t = columns["temperature"]
    has_t = np.isfinite(t)
    heights = columns["height"]
    known = np.flatnonzero(np.isfinite(heights))
    if has_t.sum() < 2 or known.size == 0:
        return None
    p_t = pressure[has_t]
    tv = profile.profile_virtual_temperature(p_t, t[has_t], columns["dewpoint"][has_t])
    anchor = known[0]
    if not (p_t[-1] <= pressure[anchor] <= p_t[0]):
        return None
    z = profile.hydrostatic_heights(p_t, tv, pressure[anchor], heights[anchor])
    return p_t, z


def _hydrostatic_check(pressure, columns, positions, levels, notices, label) -> None:
    """Warnings, at the group, where reported heights disagree with the temperatures."""
    keys = [round(p / 10.0) for p in pressure]
    resolution = np.array([levels[k]["height_resolution"] if k in levels else 1.0 for k in keys])
    resolution = np.nan_to_num(resolution, nan=1.0)
    for finding in hydrostatic.hydrostatic_findings(
            pressure, columns["height"], columns["temperature"], columns["dewpoint"], resolution):
        level = finding.level
        text = levels[keys[level]]["height_text"] if keys[level] in levels else ""
        span = positions[level].get("height") or positions[level].get("pressure")
        notices.append(Notice(f"{label}: " + hydrostatic.describe(
            finding, pressure, columns["height"], text), span))
