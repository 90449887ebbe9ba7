"""One report of FM 35 TEMP or FM 32 PILOT decoded into its levels (one part at a time).

`decode_report` reads the identification (section 1) and the part's sections:

- TEMP Part A: surface 99PPP, standard surfaces 1000-100 hPa (PPhhh TTTaDD dddff, wind
  groups only down to the surface named by Id), tropopause 88PPP, maximum wind 77PPP or
  66PPP (with the optional 4vbvbvava shear group), then 31313, 41414 and the regional
  sections (51515 ... 59595, 61616 ...), which end decoding.
- TEMP Part C: standard surfaces 70-10 hPa, 88 and 77/66 with pressures in tenths of hPa.
- TEMP Parts B and D: significant temperature levels nnPPP TTTaDD (nn = 00 for the
  surface, then 11, 22, ... 99, 11, ...), significant winds after 21212 (nnPPP dddff);
  pressures in whole hPa (B) or tenths (D).
- PILOT Parts A and C: 44nP1P1 or 55nP1P1 followed by n winds at consecutive standard
  surfaces; 77/66 maximum wind.
- PILOT Parts B and D: 9tnu1u2u3 followed by one wind per altitude digit; altitudes are
  (10 tn + u) units of 300 m by default (the height unit is a parameter); 21212 winds by
  pressure as in TEMP.

Heights of standard surfaces stay as (base, period) here; `temp.py` chooses the period
by the hydrostatic check once all parts of a sounding are together. The layout of the
sections is from memory of WMO-No. 306 Vol. I.1 (see temp_code.py).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from layercalc.errors import MessageError, Notice
from layercalc.source import Span

from . import temp_code as code
from .bulletin import MIMI, Group, Report

# Section markers that end the standard surfaces or the significant levels.
_REGIONAL = {"51515", "52525", "53535", "54545", "55555", "56565", "57575", "58585",
             "59595", "61616", "62626"}
_SECTIONS = {"21212", "31313", "41414"} | _REGIONAL

# Altitude unit of PILOT Part B/D groups 9tnu1u2u3 [m]: 300 m (from memory; some
# services report 1000 ft instead, give pilot_height_unit=304.8 for those).
PILOT_HEIGHT_UNIT = 300.0


@dataclass
class Entry:
    """One level as one part gives it (pressure in hPa; altitude for PILOT by height)."""

    pressure: float                     # [hPa], NaN for a wind by altitude
    role: str                           # surface, standard, significant, wind, tropopause, max wind
    spans: dict = field(default_factory=dict)      # field name -> Span
    values: dict = field(default_factory=dict)     # temperature/dewpoint [degC], wind [deg, m/s]
    height_code: tuple | None = None    # (base, period) [m] of a standard surface
    height_text: str = ""               # the hhh as written, for messages
    altitude: float = math.nan          # [m] for PILOT winds by altitude


@dataclass
class Part:
    code: str            # "TEMP" or "PILOT"
    kind: str            # land, ship, drop, mobile
    part: str            # A, B, C, D
    identifier: str      # "TTAA"
    station: str
    day: int
    hour: int
    knots: bool
    report: Report
    label: str
    latitude: float | None = None
    longitude: float | None = None
    elevation: float | None = None
    entries: list = field(default_factory=list)
    remarks: list = field(default_factory=list)
    notices: list = field(default_factory=list)


class _Cursor:
    def __init__(self, groups, index, label):
        self.groups, self.index, self.label = groups, index, label

    def peek(self) -> Group | None:
        return self.groups[self.index] if self.index < len(self.groups) else None

    def take(self, what: str) -> Group:
        group = self.peek()
        if group is None:
            last = self.groups[-1]
            raise MessageError(
                f"the report ends after '{last.text}' where {what} was expected",
                last.span, report=self.label, group=last.text,
                hint="a group may be missing, or the report was cut off")
        self.index += 1
        return group


def _is_level_group(text: str, expected: str | None = None) -> bool:
    """nnPPP of Parts B/D: nn is 00, 11, ... 99, and not a section marker (55555 is
    the level 55 at 555 hPa when 55 is the level number due)."""
    return (len(text) == 5 and text[:2].isdigit() and text[0] == text[1]
            and (text not in _SECTIONS or text[:2] == expected))


def decode_report(report: Report, pilot_height_unit: float = PILOT_HEIGHT_UNIT) -> Part | None:
    """One report's part; None for a NIL report. Raises MessageError on the first problem."""
    groups = list(report.groups)
    ident = groups[0].text
    code_name, kind = MIMI[ident[:2]]
    part_letter = {"AA": "A", "BB": "B", "CC": "C", "DD": "D"}[ident[2:]]
    label = ident
    cursor = _Cursor(groups, 1, label)
    call_sign = None
    if kind in ("ship", "mobile"):
        call_sign = cursor.take("the call sign D....D").text
        label = f"{ident} {call_sign}"
        cursor.label = label
    if _nil(cursor):
        return None
    time_group = cursor.take("the group YYGG" + ("Id" if code_name == "TEMP" and part_letter in "AC" else "a4"))
    code.check_group(time_group, label, "the date group YYGG..")
    day, knots = code.day_and_wind_unit(time_group, label)
    hour = code.hour(time_group, label)
    part = Part(code_name, kind, part_letter, ident, "", day, hour, knots, report, label)
    if kind == "land":
        station_group = cursor.take("the station index IIiii")
        part.station = code.station_index(station_group, label)
    else:
        position_groups = [cursor.take(what) for what in (
            "the latitude group 99LaLaLa", "the longitude group QcLoLoLoLo",
            "the Marsden square group MMMULaULo")]
        part.latitude, part.longitude, remarks = code.position(position_groups, label)
        for remark in remarks:
            part.notices.append(Notice(f"{label}: {remark}", position_groups[2].span))
        if kind == "mobile":
            part.elevation = _mobile_elevation(cursor.take("the elevation group h0h0h0h0im"), label)
        part.station = call_sign if call_sign else f"drop {part.latitude:.1f} {part.longitude:.1f}"
    part.label = label = f"{ident} {part.station} day {day:02d} {hour:02d} UTC"
    cursor.label = label
    if _nil(cursor):
        return None
    if code_name == "TEMP" and part_letter in "AC":
        _temp_standard(part, cursor, time_group)
    elif code_name == "TEMP":
        _significant(part, cursor)
    elif part_letter in "AC":
        _pilot_standard(part, cursor)
    else:
        _pilot_heights(part, cursor, pilot_height_unit)
    _closing_sections(part, cursor)
    return part


def _nil(cursor: _Cursor) -> bool:
    group = cursor.peek()
    return group is not None and group.text == "NIL"


def _mobile_elevation(group: Group, label: str) -> float | None:
    """h0h0h0h0im (FM 38): elevation, im 1-4 metres, 5-8 feet (from memory)."""
    text = code.check_group(group, label, "the elevation group h0h0h0h0im")
    if not text[:4].isdigit() or text[4] not in "12345678":
        raise MessageError(
            f"found '{text}' where the elevation group h0h0h0h0im was expected (elevation, "
            "then im 1-4 for metres or 5-8 for feet)", group.span, report=label, group=text)
    value = float(int(text[:4]))
    return value if text[4] in "1234" else value * 0.3048


def _level(part: Part, cursor: _Cursor, pressure: float, role: str, first: Group,
           wind: bool, temperature: bool = True) -> Entry:
    entry = Entry(pressure, role, spans={"pressure": first.span})
    if temperature:
        group = cursor.take(f"the temperature group TTTaDD of {pressure:g} hPa")
        t, td, problem = code.temperature_group(group, part.label)
        entry.values["temperature"], entry.values["dewpoint"] = t, td
        entry.spans["temperature"] = entry.spans["dewpoint"] = group.span
        if problem:
            part.notices.append(Notice(f"{part.label}: {problem} at {pressure:g} hPa", group.span))
    if wind:
        group = cursor.take(f"the wind group dddff of {pressure:g} hPa")
        direction, speed = code.wind_group(group, part.label, part.knots)
        entry.values["wind_direction"], entry.values["wind_speed"] = direction, speed
        entry.spans["wind_direction"] = entry.spans["wind_speed"] = group.span
    part.entries.append(entry)
    return entry


def _temp_standard(part: Part, cursor: _Cursor, time_group: Group) -> None:
    """Part A or C of TEMP: surface (A only), standard surfaces, tropopause, maximum wind."""
    part_c = part.part == "C"
    table = code.STANDARD_C if part_c else code.STANDARD_A
    id_table = code.ID_C if part_c else code.ID_A
    indicator = time_group.text[4]
    if indicator != "/" and indicator not in id_table:
        raise MessageError(
            f"Id '{indicator}' in '{time_group.text}' names no standard surface: expected "
            + ", ".join(f"{k} ({v:g} hPa)" for k, v in id_table.items()) + " or '/'",
            time_group.span, report=part.label, group=time_group.text)
    last_wind = id_table.get(indicator)  # None: no winds at standard surfaces
    if last_wind is None:
        part.remarks.append("Id is '/': no winds at the standard surfaces")
    group = cursor.peek()
    if not part_c and group is not None and group.text.startswith("99"):
        cursor.take("the surface group 99PPP")
        ppp = code.check_group(group, part.label, "the surface group 99PPP")[2:]
        if not ppp.isdigit():
            raise MessageError(f"surface pressure '{ppp}' in '{group.text}' is not three digits",
                               group.span, report=part.label, group=group.text)
        _level(part, cursor, code.surface_pressure(ppp), "surface", group, wind=True)
    order = list(table)
    position = 0
    while position < len(order):
        group = cursor.peek()
        if group is None or group.text[:2] in ("88", "77", "66") or group.text in _SECTIONS:
            break
        code.check_group(group, part.label, f"the group {order[position]}hhh")
        indicator_pp = group.text[:2]
        if indicator_pp != order[position]:
            later = order[position + 1:]
            if indicator_pp not in later:
                pressure = table[order[position]][0]
                raise MessageError(
                    f"found '{group.text}' where the {pressure:g} hPa surface "
                    f"{order[position]}hhh (or a tropopause 88, maximum wind 77/66 or section "
                    "group) was expected", group.span, report=part.label, group=group.text,
                    hint="standard surfaces come in order, each with its temperature group "
                         "and, down to the surface named by Id, a wind group")
            skipped = order[position:order.index(indicator_pp)]
            part.notices.append(Notice(
                f"{part.label}: the standard surfaces "
                + ", ".join(f"{table[k][0]:g}" for k in skipped)
                + " hPa are missing from the report", group.span))
            position = order.index(indicator_pp)
        cursor.take("a standard surface")
        pressure = table[indicator_pp][0]
        hhh = group.text[2:]
        if hhh != "///" and not hhh.isdigit():
            raise MessageError(f"height '{hhh}' in '{group.text}' is neither three digits nor '///'",
                               group.span, report=part.label, group=group.text)
        wind = last_wind is not None and pressure >= last_wind
        entry = _level(part, cursor, pressure, "standard", group, wind=wind)
        entry.height_code = code.height_code(indicator_pp, hhh, part_c)
        entry.height_text = group.text
        entry.spans["height"] = group.span
        position += 1
    _tropopause_and_max_wind(part, cursor, tenths=part_c)


def _tropopause_and_max_wind(part: Part, cursor: _Cursor, tenths: bool) -> None:
    while (group := cursor.peek()) is not None and group.text[:2] in ("88", "77", "66"):
        cursor.take("a tropopause or maximum wind group")
        text = code.check_group(group, part.label, "a tropopause or maximum wind group")
        if text[2:] == "999":
            part.remarks.append("no tropopause reported" if text[:2] == "88"
                                else "no maximum wind reported")
            continue
        if not text[2:].isdigit():
            raise MessageError(f"pressure '{text[2:]}' in '{text}' is not three digits",
                               group.span, report=part.label, group=text)
        pressure = code.significant_pressure(text[2:], tenths)
        if text[:2] == "88":
            _level(part, cursor, pressure, "tropopause", group, wind=True)
            part.remarks.append(f"tropopause at {pressure:g} hPa")
        else:
            _level(part, cursor, pressure, "max wind", group, wind=True, temperature=False)
            part.remarks.append(f"maximum wind at {pressure:g} hPa")
            shear = cursor.peek()
            if shear is not None and shear.text.startswith("4") and shear.text not in _SECTIONS:
                cursor.take("the wind shear group 4vbvbvava")  # shear is not used


def _significant(part: Part, cursor: _Cursor) -> None:
    """Parts B/D of TEMP: significant temperature levels, then 21212 winds."""
    tenths = part.part == "D"
    expected = "00" if not tenths else None
    while (group := cursor.peek()) is not None and _is_level_group(group.text, expected):
        cursor.take("a significant level")
        nn, ppp = group.text[:2], group.text[2:]
        if not ppp.isdigit():
            raise MessageError(f"pressure '{ppp}' in '{group.text}' is not three digits",
                               group.span, report=part.label, group=group.text)
        if expected is not None and nn != expected:
            part.notices.append(Notice(
                f"{part.label}: level number {nn} where {expected} was expected (00 for the "
                "surface, then 11, 22, ... 99, 11, ...); decoded as given", group.span))
        role = "surface" if nn == "00" and not tenths else "significant"
        _level(part, cursor, code.significant_pressure(ppp, tenths), role, group, wind=False)
        expected = _next_level_number(nn)
    _significant_winds(part, cursor, tenths)


def _next_level_number(nn: str) -> str:
    return "11" if nn in ("00", "99") else str(int(nn[0]) + 1) * 2


def _significant_winds(part: Part, cursor: _Cursor, tenths: bool) -> None:
    group = cursor.peek()
    if group is None or group.text != "21212":
        return
    cursor.take("21212")
    expected = None
    while (group := cursor.peek()) is not None and _is_level_group(group.text, expected):
        expected = _next_level_number(group.text[:2])
        cursor.take("a significant wind level")
        ppp = group.text[2:]
        if not ppp.isdigit():
            raise MessageError(f"pressure '{ppp}' in '{group.text}' is not three digits",
                               group.span, report=part.label, group=group.text)
        _level(part, cursor, code.significant_pressure(ppp, tenths), "wind", group,
               wind=True, temperature=False)


def _pilot_standard(part: Part, cursor: _Cursor) -> None:
    """PILOT Parts A/C: 44nP1P1 (or 55nP1P1) and n winds at consecutive standard surfaces."""
    part_c = part.part == "C"
    table = code.STANDARD_C if part_c else code.STANDARD_A
    order = list(table)
    while (group := cursor.peek()) is not None and group.text[:2] in ("44", "55"):
        cursor.take("a group 44nP1P1")
        text = code.check_group(group, part.label, "a group 44nP1P1")
        if not text[2].isdigit() or text[3:] not in table:
            raise MessageError(
                f"found '{text}' where 44nP1P1 was expected (n winds from the standard "
                "surface P1P1: " + ", ".join(order) + ")", group.span, report=part.label,
                group=text)
        if text[:2] == "55":
            part.remarks.append("pressures of the standard surfaces not measured (55nP1P1)")
        count, start = int(text[2]), order.index(text[3:])
        if start + count > len(order):
            raise MessageError(f"'{text}' announces {count} winds from {table[text[3:]][0]:g} "
                               "hPa, more than the standard surfaces above it",
                               group.span, report=part.label, group=text)
        for key in order[start:start + count]:
            _level(part, cursor, table[key][0], "standard", group, wind=True, temperature=False)
    _tropopause_and_max_wind(part, cursor, tenths=part_c)


def _pilot_heights(part: Part, cursor: _Cursor, unit: float) -> None:
    """PILOT Parts B/D: 9tnu1u2u3 groups, each followed by one wind per altitude given."""
    while (group := cursor.peek()) is not None and group.text.startswith("9") and group.text not in _SECTIONS:
        cursor.take("a group 9tnu1u2u3")
        text = code.check_group(group, part.label, "a group 9tnu1u2u3")
        tens = text[1]
        units = [u for u in text[2:] if u != "/"]
        if not tens.isdigit() or not all(u.isdigit() for u in units) or not units:
            raise MessageError(
                f"found '{text}' where 9tnu1u2u3 was expected (the tens digit, then up to "
                "three units digits of the altitudes, '/' for none)",
                group.span, report=part.label, group=text)
        for u in units:
            altitude = (int(tens) * 10 + int(u)) * unit
            wind = cursor.take(f"the wind group at altitude {altitude:g} m")
            direction, speed = code.wind_group(wind, part.label, part.knots)
            entry = Entry(math.nan, "wind by altitude", altitude=altitude,
                          spans={"pressure": group.span, "wind_direction": wind.span,
                                 "wind_speed": wind.span},
                          values={"wind_direction": direction, "wind_speed": speed})
            part.entries.append(entry)
    _significant_winds(part, cursor, tenths=part.part == "D")


def _closing_sections(part: Part, cursor: _Cursor) -> None:
    """31313 and 41414 (read past), regional and national sections (end of decoding)."""
    while (group := cursor.peek()) is not None:
        text = group.text
        if text == "31313":
            cursor.take("31313")
            cursor.take("the group srrarasasa")
            launch = cursor.take("the launch time group 8GGgg")
            if launch.text.startswith("8") and launch.text[1:].isdigit():
                part.remarks.append(f"launch time {launch.text[1:3]}:{launch.text[3:]} UTC")
            nxt = cursor.peek()
            if nxt is not None and nxt.text.startswith("9") and nxt.text not in _SECTIONS:
                cursor.take("the sea temperature group 9snTwTwTw")
            continue
        if text == "41414":
            cursor.take("41414")
            cursor.take("the cloud group NhCLhCMCH")
            continue
        if text in _REGIONAL or text[:3] == "101":
            part.remarks.append(f"the groups from '{text}' on (regional, national or "
                                "additional data) are not decoded")
            cursor.index = len(cursor.groups)
            return
        expected = {"A": "a standard surface, 88PPP, 77PPP/66PPP or a section (31313, 41414, 51515...)",
                    "C": "a standard surface, 88PPP, 77PPP/66PPP or a section (31313, 41414, 51515...)",
                    "B": "a level nnPPP, 21212 or a section (31313, 41414, 51515...)",
                    "D": "a level nnPPP, 21212 or a section (31313, 41414, 51515...)"}[part.part]
        if part.code == "PILOT":
            expected = ("44nP1P1, 77PPP/66PPP or a section" if part.part in "AC"
                        else "9tnu1u2u3, 21212 or a section")
        raise MessageError(f"found '{text}' where {expected} was expected",
                           group.span, report=part.label, group=text,
                           hint="a group may be missing or doubled before this one")


def report_span(part: Part) -> Span:
    return part.report.groups[0].span
