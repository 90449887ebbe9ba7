"""Any sounding file in: format recognised by content, positions from a station table,
stations chosen by identifier or by distance from a point.

    decoded = read_soundings("bulletin.txt")                       # TEMP/PILOT text
    decoded = read_soundings("obs.bufr", stations=["12345"])      # BUFR
    decoded = read_soundings("ascent.csv")                         # text table
    text = soundings_layers_text(decoded)                          # a .layers text

Recognition: bytes starting with (or containing, after a transmission header) b"BUFR"
are BUFR; text whose first line that is not a comment is a header `p [unit] ...` is a
text table; text with a TEMP or PILOT identifier (TTAA, PPBB, UUAA, ...) is coded text.
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import numpy as np

from layercalc.errors import InputError, Notice
from layercalc.constants import EARTH_MEAN_RADIUS
from layercalc.physics.sphere import great_circle_angles, unit_vectors
from layercalc.source import read_input_bytes, read_source

from . import bufr, temp, text_table
from .decoded import Decoded
from .layers_writer import layers_text

__all__ = ["FORMATS", "detect_format", "read_soundings", "read_station_table",
           "soundings_layers_text"]

FORMATS = ("temp", "bufr", "table")
_IDENT = re.compile(r"(?:^|\s)(TT|UU|XX|II|PP|QQ|EE)(AA|BB|CC|DD)(?:\s|$)")


def detect_format(data: bytes, name: str) -> str:
    """'bufr', 'table' or 'temp' from the content; an InputError when none fits."""
    if data[:4] == b"BUFR" or (b"BUFR" in data[:200] and b"7777" in data):
        return "bufr"
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise InputError(f"{name} is neither text nor BUFR (no 'BUFR' marker)",
                         hint="give a TEMP/PILOT bulletin, a BUFR file or a text table") from None
    if text_table.looks_like_text_table(text):
        return "table"
    if _IDENT.search(text):
        return "temp"
    raise InputError(
        f"{name}: cannot tell the format: not BUFR, no header row 'p [hPa] ...', no TEMP or "
        "PILOT identifier (TTAA, TTBB, PPBB, UUAA, ...)",
        hint="give --format temp, bufr or table if the file is one of these")


def read_soundings(path, format: str | None = None, stations=None, near=None,
                   station_table=None) -> Decoded:
    """Read soundings from a file, recognising the format by content.

    Parameters
    ----------
    path : str or Path
    format : {"temp", "bufr", "table"}, optional
        Skip recognition.
    stations : list of str, optional
        Keep these station identifiers (in this order); an identifier not found is an error.
    near : (latitude, longitude, radius_km), optional
        Keep the soundings within radius_km of the point (great-circle distance).
    station_table : str or Path, optional
        CSV id,latitude,longitude,elevation giving land stations their position.

    Returns
    -------
    Decoded
        The soundings chosen, with warnings. A report that could not be decoded raises its
        MessageError when it names a station chosen in `stations`, or when no report of
        the file decodes; otherwise it is left out with a warning naming the report, its
        line and group (with no choice made, the other reports are used).
    """
    path = Path(path)
    data = read_input_bytes(path)
    if format is None:
        format = detect_format(data, str(path))
    elif format not in FORMATS:
        raise InputError(f"unknown format '{format}'", hint="one of: " + ", ".join(FORMATS))
    if format == "bufr":
        decoded = bufr.parse_bufr(data, str(path))
    elif format == "table":
        decoded = text_table.read_text_table(path)
    else:
        decoded = None
    table = read_station_table(station_table) if station_table is not None else None
    if format == "temp":
        decoded = temp.read_temp(path, station_table=table)
    if table is not None:
        decoded = apply_station_table(decoded, table)
    return select(decoded, stations, near)


def select(decoded: Decoded, stations=None, near=None) -> Decoded:
    """The soundings asked for, with the problems that concern them raised."""
    chosen = list(decoded.soundings)
    notices = list(decoded.notices)
    if stations:
        by_id = {}
        for s in decoded.soundings:
            by_id.setdefault(s.station, []).append(s)
        chosen = []
        for ident in stations:
            if ident not in by_id:
                broken = [p for p in decoded.problems if ident in (getattr(p, "report", "") or "")]
                if broken:
                    raise broken[0]
                known = ", ".join(sorted(by_id)[:20]) + (" ..." if len(by_id) > 20 else "")
                raise InputError(f"{decoded.source}: no sounding of station {ident}",
                                 hint=f"stations in the file: {known}")
            if len(by_id[ident]) > 1:
                notices.append(Notice(f"station {ident} has {len(by_id[ident])} soundings "
                                      f"({', '.join(s.time for s in by_id[ident])}); the first is used",
                                      location=decoded.source))
            chosen.append(by_id[ident][0])
    if near is not None:
        latitude, longitude, radius = near
        if not (-90 <= latitude <= 90 and -180 <= longitude <= 360 and radius > 0):
            raise InputError(f"--near {latitude},{longitude},{radius}: expected a latitude in "
                             "-90..90, a longitude in -180..360 and a positive radius in km")
        located = [s for s in chosen if s.latitude is not None and s.longitude is not None]
        unlocated = [s.station for s in chosen if s.latitude is None]
        if unlocated:
            notices.append(Notice(
                "no position for " + ", ".join(unlocated[:10]) + (" ..." if len(unlocated) > 10 else "")
                + ": not considered for --near (give a station table)", location=decoded.source))
        point = unit_vectors(latitude, longitude)
        distance = [float(great_circle_angles(point, unit_vectors(s.latitude, s.longitude)))
                    * EARTH_MEAN_RADIUS / 1000.0 for s in located]
        chosen = [s for s, d in sorted(zip(located, distance), key=lambda x: x[1]) if d <= radius]
        if not chosen:
            raise InputError(f"{decoded.source}: no sounding within {radius:g} km of "
                             f"{latitude:g}, {longitude:g}")
    problems = list(decoded.problems)
    if problems and not chosen:
        raise problems[0]        # nothing decoded: the first problem is the answer
    for problem in problems:
        if stations and _concerns(problem, stations):
            raise problem        # a station asked for by name must decode whole
        notices.append(Notice(_skipped(problem, chosen=bool(stations) or near is not None),
                              problem.span,
                              location=problem.location if problem.span is None else None))
    return Decoded(tuple(chosen), tuple(notices), (), decoded.source, decoded.format)


def _concerns(problem, stations) -> bool:
    """Whether a broken report names one of the stations (its label holds the identifier)."""
    words = (getattr(problem, "report", None) or "").split()
    return any(ident in words for ident in stations)


def _skipped(problem, chosen: bool) -> str:
    """The warning for a report left out: which report, at which line and group, and why."""
    report = getattr(problem, "report", None)
    detail = problem.message
    if report and detail.startswith(report + ": "):
        detail = detail[len(report) + 2:]
    where = []
    line, group = getattr(problem, "line", None), getattr(problem, "group", None)
    if line is not None:
        where.append(f"line {line}")
    if group:
        where.append(f"group '{group}'")
    name = f"report {report}" if report else "a report"
    if where:
        name += f" ({', '.join(where)})"
    if chosen:
        return f"{name} is not among those chosen and cannot be decoded: {detail}"
    return f"{name} is skipped, it cannot be decoded: {detail}; the other reports are used"


def read_station_table(path) -> dict:
    """CSV id,latitude,longitude,elevation (a header row optional) -> {id: (lat, lon, elev, where)}."""
    source = read_source(path)
    table = {}
    offset = 0
    for number, line in enumerate(source.text.split("\n"), start=1):
        offset += len(line) + 1
        stripped = line.strip()
        if not stripped or stripped.startswith("#"):
            continue
        cells = [c.strip() for c in stripped.split(",")]
        if number == 1 and cells and cells[0].lower() in ("id", "station", "identifier"):
            continue
        if len(cells) != 4:
            raise InputError(f"a station table row has 4 values (id,latitude,longitude,elevation); "
                             f"this one has {len(cells)}", location=f"{source.name}:{number}:1")
        try:
            lat, lon = float(cells[1]), float(cells[2])
            elev = float(cells[3]) if cells[3] not in ("", "-") else None
        except ValueError:
            raise InputError("latitude, longitude and elevation must be numbers (elevation may be '-')",
                             location=f"{source.name}:{number}:1") from None
        if not (-90 <= lat <= 90 and -180 <= lon <= 360) or (elev is not None and not math.isfinite(elev)):
            raise InputError(f"station {cells[0]}: latitude {lat:g} or longitude {lon:g} out of range",
                             location=f"{source.name}:{number}:1")
        table[cells[0]] = (lat, lon, elev, f"station table {source.name} line {number}")
    return table


def apply_station_table(decoded: Decoded, table: dict) -> Decoded:
    """Land stations get position and elevation from the table; others keep their own."""
    soundings, notices = [], list(decoded.notices)
    for s in decoded.soundings:
        entry = table.get(s.station)
        if entry is None:
            if s.latitude is None:
                notices.append(Notice(f"station {s.station} ({', '.join(s.parts)}) is not in the "
                                      "station table: no position or elevation", location=decoded.source))
            soundings.append(s)
            continue
        lat, lon, elev, where = entry
        if s.latitude is not None:
            soundings.append(s)
            continue
        height = s.height.copy()
        remarks = list(s.remarks)
        if elev is not None and s.surface_pressure is not None:
            k = np.flatnonzero(s.pressure == s.surface_pressure)
            if k.size and not np.isfinite(height[k[0]]):
                height[k[0]] = elev
                remarks.append(f"surface height = station elevation {elev:g} m ({where})")
        soundings.append(s.with_changes(latitude=lat, longitude=lon, elevation=elev,
                                        position_source=where, height=height, remarks=tuple(remarks)))
    return Decoded(tuple(soundings), tuple(notices), decoded.problems, decoded.source, decoded.format)


def soundings_layers_text(decoded: Decoded) -> str:
    """The chosen soundings as a `.layers` text (see layers_writer)."""
    return layers_text(decoded.soundings, decoded.source, decoded.format)


__all__ += ["select", "apply_station_table"]
