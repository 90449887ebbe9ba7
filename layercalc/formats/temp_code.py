"""The code rules of FM 35 TEMP and FM 32 PILOT, one small function per group type.

Each function reads one five-character group (digits and '/') and returns values in
plain units (hPa, degC, m, degrees, m/s), or raises `MessageError` positioned at the
group, saying what was found and what was expected. No function guesses: a value that
the rules leave ambiguous (a height with its thousands dropped) is returned as its
possible values, for the caller to choose with the hydrostatic check.

Source of the rules: WMO, Manual on Codes, WMO-No. 306, Volume I.1, Part A, FM 32 PILOT
and FM 35 TEMP (with FM 36/37/38 for ship, drop and mobile stations), their
specifications of symbolic letters and code tables 0265 (a4), 0777 (DD), 1734 (Id),
3333 (Qc). ALL FROM MEMORY: the Manual itself was not available while this was written;
each rule below says what it takes the regulation to be. README lists what is not
implemented.
"""

from __future__ import annotations

import re

import numpy as np

from layercalc.constants import KNOT
from layercalc.errors import MessageError

from .bulletin import Group

_DIGITS_OR_SLASH = re.compile(r"^[0-9/]{5}$")

# Standard isobaric surfaces of Part A and Part C: indicator PP -> (pressure [hPa], how
# hhh is coded). From memory of the FM 35 regulations on hnhnhn:
#   1000 hPa: geopotential metres; below mean sea level 500 is added to |h|;
#   925, 850, 700 hPa: geopotential metres, the thousands digit omitted;
#   500 hPa and above: geopotential decametres, the thousands (of decametres) omitted.
STANDARD_A = {"00": (1000.0, "m1000"), "92": (925.0, "m"), "85": (850.0, "m"),
              "70": (700.0, "m"), "50": (500.0, "dam"), "40": (400.0, "dam"),
              "30": (300.0, "dam"), "25": (250.0, "dam"), "20": (200.0, "dam"),
              "15": (150.0, "dam"), "10": (100.0, "dam")}
STANDARD_C = {"70": (70.0, "dam"), "50": (50.0, "dam"), "30": (30.0, "dam"),
              "20": (20.0, "dam"), "10": (10.0, "dam")}

# Id, code table 1734 (from memory): the hundreds of hPa (Part A) or tens of hPa
# (Part C) of the last standard surface whose wind is reported; '/' = none.
# Part A: 1 = 100, 2 = 200, 3 = 300, 4 = 400, 5 = 500, 7 = 700, 8 = 850, 9 = 925 (the
# 925 entry is our reading of "hundreds digit"), 0 = 1000 hPa.
# Part C: 1 = 10, 2 = 20, 3 = 30, 5 = 50, 7 = 70 hPa.
ID_A = {"1": 100.0, "2": 200.0, "3": 300.0, "4": 400.0, "5": 500.0, "7": 700.0,
        "8": 850.0, "9": 925.0, "0": 1000.0}
ID_C = {"1": 10.0, "2": 20.0, "3": 30.0, "5": 50.0, "7": 70.0}


def check_group(group: Group, report: str, what: str) -> str:
    """The group's text if it is five digits or '/'; else the error saying what was expected."""
    if not _DIGITS_OR_SLASH.match(group.text):
        raise MessageError(
            f"found '{group.text}' where {what} was expected (a group of five digits or '/')",
            group.span, report=report, group=group.text,
            hint="a group is five characters, digits or '/'; check for a missing or extra "
                 "character or a group split across a line")
    return group.text


def _digits(text: str) -> int | None:
    return int(text) if text.isdigit() else None


def day_and_wind_unit(group: Group, report: str) -> tuple[int, bool]:
    """YY of YYGGId: the day of the month, with 50 added when winds are in knots.

    Returns (day, winds_in_knots). Rule (from memory): YY = day + 50 means wind speeds
    in knots; YY = day means metres per second.
    """
    yy = _digits(group.text[:2])
    if yy is None or not (1 <= yy <= 31 or 51 <= yy <= 81):
        raise MessageError(
            f"day '{group.text[:2]}' in '{group.text}' is not a day of the month: expected "
            "01-31 (winds in m/s) or 51-81 (day + 50, winds in knots)",
            group.span, report=report, group=group.text)
    return (yy - 50, True) if yy > 50 else (yy, False)


def hour(group: Group, report: str) -> int:
    """GG of YYGG..: the hour of the observation, UTC, 00-23 (from memory)."""
    gg = _digits(group.text[2:4])
    if gg is None or gg > 23:
        raise MessageError(
            f"hour '{group.text[2:4]}' in '{group.text}' is not an hour: expected 00-23 UTC",
            group.span, report=report, group=group.text)
    return gg


def station_index(group: Group, report: str) -> str:
    """IIiii: block and station number, five digits."""
    if not group.text.isdigit() or len(group.text) != 5:
        raise MessageError(
            f"found '{group.text}' where the station index IIiii was expected (five digits)",
            group.span, report=report, group=group.text)
    return group.text


def temperature(text: str) -> float:
    """TTTa: temperature in degC, or NaN for '///'.

    TT whole degrees and Ta tenths; Ta even for a positive, odd for a negative
    temperature (from memory: code table 3931). '124' is +12.4, '123' is -12.3,
    '001' is -0.1.
    """
    if text == "///":
        return float("nan")
    value = int(text) / 10.0
    return -value if int(text[2]) % 2 else value


def temperature_valid(text: str) -> bool:
    return text == "///" or text.isdigit()


def dewpoint_depression(text: str) -> tuple[float, str | None]:
    """DD, code table 0777 (from memory): depression T - Td in K, or NaN.

    00-50: 0.0 to 5.0 K in tenths; 51-55: not used; 56-99: 6 to 49 K (DD - 50, whole
    degrees); '//' missing. Returns (value, problem) with the problem text for 51-55.
    """
    if text == "//":
        return float("nan"), None
    if not text.isdigit():
        return float("nan"), f"dewpoint depression '{text}' is not two digits or '//'"
    code = int(text)
    if code <= 50:
        return code / 10.0, None
    if code <= 55:
        return float("nan"), (f"dewpoint depression code {text} is not used (code table "
                              "0777: 00-50 are tenths, 56-99 whole degrees + 50); the "
                              "dewpoint is left out")
    return float(code - 50), None


def temperature_group(group: Group, report: str) -> tuple[float, float, str | None]:
    """TTTaDD: (T [degC], Td [degC], problem text or None)."""
    text = check_group(group, report, "a temperature group TTTaDD")
    if not temperature_valid(text[:3]):
        raise MessageError(
            f"temperature '{text[:3]}' in '{text}' is neither three digits nor '///'",
            group.span, report=report, group=text)
    t = temperature(text[:3])
    depression, problem = dewpoint_depression(text[3:])
    return t, t - depression, problem


def wind_group(group: Group, report: str, knots: bool) -> tuple[float, float]:
    """dddff: (direction [deg], speed [m/s]); NaN for '/////'; calm '00000' is (0, 0).

    Rule (from memory): ddd is the direction to 5 degrees; the hundreds of the speed are
    added to ddd (500 added to the speed code), so ddd % 5 is the speed's hundreds and
    ddd - ddd % 5 the direction; '27615' is 275 degrees, 115 units. Units: knots when 50
    was added to the day, else m/s. A direction above 360 or 000 with a speed is an error.
    """
    text = check_group(group, report, "a wind group dddff")
    if text == "/////":
        return float("nan"), float("nan")
    if not text.isdigit():
        raise MessageError(
            f"wind '{text}' is neither five digits nor '/////' (a partly missing wind "
            "cannot be used)", group.span, report=report, group=text)
    ddd, ff = int(text[:3]), int(text[3:])
    direction = ddd - ddd % 5
    speed = (ddd % 5) * 100 + ff
    if direction > 360:
        raise MessageError(
            f"wind direction {direction} degrees in '{text}' is above 360",
            group.span, report=report, group=text,
            hint="ddd is the direction to 5 degrees, with the speed's hundreds added")
    if direction == 0 and speed != 0:
        raise MessageError(
            f"wind '{text}' has direction 000 with a speed: north is 360, 00000 is calm",
            group.span, report=report, group=text)
    return float(direction), speed * (KNOT if knots else 1.0)


def surface_pressure(text: str) -> float:
    """PPP of 99PPP (Part A surface): whole hPa, the thousands digit omitted (from memory).

    000-099 are 1000-1099 hPa; 100-999 as written.
    """
    value = float(int(text))
    return value + 1000.0 if value < 100.0 else value


def significant_pressure(text: str, tenths: bool) -> float:
    """PPP of nnPPP (Parts B and D) and of 88PPP/77PPP in hPa.

    Parts A/B: whole hPa, thousands omitted (000-099 are 1000-1099 hPa); Parts C/D:
    tenths of hPa (from memory).
    """
    value = float(int(text))
    if tenths:
        return value / 10.0
    return value + 1000.0 if value < 100.0 else value


def height_code(indicator: str, hhh: str, part_c: bool) -> tuple[float, float] | None:
    """hhh of a standard surface: (base [m], period [m]) or None for '///'.

    The height is base + k * period for some integer k >= 0; the caller picks k by the
    hydrostatic check (or, without temperatures, nearest the standard atmosphere).
    1000 hPa: 500-999 mean -(hhh - 500) m, unique (period 0).
    925/850/700 hPa: metres with the thousands omitted: period 1000 m.
    500 hPa and above (and all of Part C): decametres with the thousands omitted:
    base 10 * hhh m, period 10000 m.
    """
    if hhh == "///":
        return None
    value = float(int(hhh))
    coding = (STANDARD_C if part_c else STANDARD_A)[indicator][1]
    if coding == "m1000":
        return (-(value - 500.0) if value >= 500.0 else value), 0.0
    if coding == "m":
        return value, 1000.0
    return 10.0 * value, 10000.0


def choose_height(base: float, period: float, expected: float) -> float:
    """The height base + k * period (k >= 0) nearest an expected height [m]."""
    if period == 0.0:
        return base
    k = max(0.0, np.round((expected - base) / period))
    return base + k * period


def position(groups: list[Group], report: str) -> tuple[float, float, list[str]]:
    """99LaLaLa QcLoLoLoLo MMMULaULo: (latitude, longitude, remarks) in degrees.

    LaLaLa and LoLoLoLo are tenths of a degree; Qc (code table 3333, from memory):
    1 north-east, 3 south-east, 5 south-west, 7 north-west. ULa, ULo repeat the units
    digits of latitude and longitude and are checked; the Marsden square MMM is not.
    """
    lat_group, lon_group, square_group = groups
    lat_text = check_group(lat_group, report, "the latitude group 99LaLaLa")
    if not lat_text.startswith("99") or not lat_text[2:].isdigit() or int(lat_text[2:]) > 900:
        raise MessageError(
            f"found '{lat_text}' where the latitude group 99LaLaLa was expected (latitude "
            "in tenths of a degree, 000-900)", lat_group.span, report=report, group=lat_text)
    lon_text = check_group(lon_group, report, "the longitude group QcLoLoLoLo")
    if (not lon_text.isdigit() or lon_text[0] not in "1357" or int(lon_text[1:]) > 1800):
        raise MessageError(
            f"found '{lon_text}' where the longitude group QcLoLoLoLo was expected (Qc 1, 3, "
            "5 or 7; longitude in tenths of a degree, 0000-1800)",
            lon_group.span, report=report, group=lon_text)
    latitude = int(lat_text[2:]) / 10.0
    longitude = int(lon_text[1:]) / 10.0
    quadrant = lon_text[0]
    if quadrant in "35":
        latitude = -latitude
    if quadrant in "57":
        longitude = -longitude
    remarks = []
    square = check_group(square_group, report, "the Marsden square group MMMULaULo")
    if square[3:].isdigit():
        ula, ulo = int(square[3]), int(square[4])
        if ula != int(abs(latitude)) % 10 or ulo != int(abs(longitude)) % 10:
            remarks.append(
                f"the units digits in '{square}' ({ula}, {ulo}) do not match latitude "
                f"{latitude:g} and longitude {longitude:g}; the position groups were used")
    return latitude, longitude, remarks
