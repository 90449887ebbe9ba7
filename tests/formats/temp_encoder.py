"""A small FM 35 TEMP / FM 32 PILOT encoder for round-trip tests (test code only).

Written separately from the decoder, from the same reading of the code rules (from
memory of WMO-No. 306 Vol. I.1, FM 35 and FM 32): it turns values into groups, the
decoder turns groups back into values. It refuses values the code cannot carry exactly
(a positive temperature with an odd tenths digit), so a round trip compares equal.
"""

from __future__ import annotations

from dataclasses import dataclass, field

KNOT = 1852.0 / 3600.0
PART_A = [(1000, "00"), (925, "92"), (850, "85"), (700, "70"), (500, "50"), (400, "40"),
          (300, "30"), (250, "25"), (200, "20"), (150, "15"), (100, "10")]
PART_C = [(70, "70"), (50, "50"), (30, "30"), (20, "20"), (10, "10")]
ID_A = {100: "1", 200: "2", 300: "3", 400: "4", 500: "5", 700: "7", 850: "8", 925: "9", 1000: "0"}
ID_C = {10: "1", 20: "2", 30: "3", 50: "5", 70: "7"}


def temperature(t: float | None) -> str:
    if t is None:
        return "///"
    tenths = round(abs(t) * 10)
    if abs(tenths - abs(t) * 10) > 1e-6:
        raise ValueError(f"{t} has more than one decimal")
    if (t >= 0) != (tenths % 2 == 0) and tenths != 0:
        raise ValueError(f"{t}: the tenths digit must be even for positive, odd for negative")
    if t < 0 and tenths % 2 == 0:
        raise ValueError(f"{t}: negative needs an odd tenths digit")
    return f"{tenths:03d}"


def depression(t: float | None, td: float | None) -> str:
    if t is None or td is None:
        return "//"
    d = round(t - td, 1)
    if d <= 5.0:
        return f"{round(d * 10):02d}"
    if abs(d - round(d)) > 1e-6 or d > 49:
        raise ValueError(f"depression {d} above 5 must be a whole number up to 49")
    return f"{round(d) + 50:02d}"


def wind(direction: float | None, speed: float | None) -> str:
    if direction is None:
        return "/////"
    if speed == 0:
        return "00000"
    if direction % 5:
        raise ValueError("direction must be a multiple of 5")
    return f"{int(direction) + int(speed) // 100:03d}{int(speed) % 100:02d}"


def standard_height(p: float, h: float | None) -> str:
    if h is None:
        return "///"
    if p == 1000:
        return f"{500 + round(-h):03d}" if h < 0 else f"{round(h):03d}"
    if p in (925, 850, 700):
        return f"{round(h) % 1000:03d}"
    return f"{round(h / 10) % 1000:03d}"


@dataclass
class Sounding:
    """Values in the units of the code: hPa, degC, m, degrees, speed in the message's unit."""

    station: str = "99901"
    day: int = 8
    hour: int = 12
    knots: bool = False
    surface: tuple | None = None            # (p, T, Td, dir, speed)
    standard: dict = field(default_factory=dict)   # p -> (h, T, Td, dir, speed)
    last_wind: int | None = 100             # Id surface (Part A) or Part C surface
    significant: list = field(default_factory=list)   # (p, T, Td), surface first
    winds: list = field(default_factory=list)         # (p, dir, speed)
    tropopause: tuple | None = None        # (p, T, Td, dir, speed)
    max_wind: tuple | None = None          # (p, dir, speed)
    ship: tuple | None = None              # (call sign, lat, lon)


def _yy(s: Sounding) -> str:
    return f"{s.day + (50 if s.knots else 0):02d}{s.hour:02d}"


def _ident(s: Sounding, part: str, tail: str) -> list[str]:
    if s.ship is None:
        return [f"TT{part}", _yy(s) + tail, s.station]
    call, lat, lon = s.ship
    quadrant = {(True, True): "1", (False, True): "3", (False, False): "5", (True, False): "7"}[
        (lat >= 0, lon >= 0)]
    return [f"UU{part}", call, _yy(s) + tail, f"99{round(abs(lat) * 10):03d}",
            f"{quadrant}{round(abs(lon) * 10):04d}", f"///{int(abs(lat)) % 10}{int(abs(lon)) % 10}"]


def part_a(s: Sounding, part_c: bool = False) -> str:
    table, ids = (PART_C, ID_C) if part_c else (PART_A, ID_A)
    tail = ids[s.last_wind] if s.last_wind is not None else "/"
    groups = _ident(s, "CC" if part_c else "AA", tail)
    if s.surface is not None and not part_c:
        p, t, td, d, f = s.surface
        groups += [f"99{round(p) % 1000:03d}", temperature(t) + depression(t, td), wind(d, f)]
    for p, indicator in table:
        if p not in s.standard:
            continue
        h, t, td, d, f = s.standard[p]
        groups += [indicator + standard_height(p, h), temperature(t) + depression(t, td)]
        if s.last_wind is not None and p >= s.last_wind:
            groups.append(wind(d, f))
    if s.tropopause is not None:
        p, t, td, d, f = s.tropopause
        code = round(p * 10) if part_c else round(p)
        groups += [f"88{code:03d}", temperature(t) + depression(t, td), wind(d, f)]
    else:
        groups.append("88999")
    if s.max_wind is not None:
        p, d, f = s.max_wind
        code = round(p * 10) if part_c else round(p)
        groups += [f"77{code:03d}", wind(d, f)]
    else:
        groups.append("77999")
    return " ".join(groups) + "="


def part_b(s: Sounding, part_d: bool = False) -> str:
    groups = _ident(s, "DD" if part_d else "BB", "/")
    n = 1
    for p, t, td in s.significant:
        nn = "00" if (not part_d and n == 1) else str((n - (1 if not part_d else 0) - 1) % 9 + 1) * 2
        code = round(p * 10) % 1000 if part_d else round(p) % 1000
        groups += [f"{nn}{code:03d}", temperature(t) + depression(t, td)]
        n += 1
    if s.winds:
        groups.append("21212")
        for i, (p, d, f) in enumerate(s.winds):
            nn = "00" if (i == 0 and not part_d) else str((i - (0 if part_d else 1)) % 9 + 1) * 2
            code = round(p * 10) % 1000 if part_d else round(p) % 1000
            groups += [f"{nn}{code:03d}", wind(d, f)]
    return " ".join(groups) + "="


def wrap(text: str, width: int = 60) -> str:
    """Wrap a report between groups, as bulletins do."""
    lines, line = [], ""
    for group in text.split(" "):
        if line and len(line) + 1 + len(group) > width:
            lines.append(line)
            line = group
        else:
            line = f"{line} {group}" if line else group
    lines.append(line)
    return "\n".join(lines)
