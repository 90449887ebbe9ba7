"""A sounding as a text table: CSV (comma or semicolon) or columns separated by spaces.

    p [hPa]  T [degC]  Td [degC]  z [m]  dir [deg]  speed [kt]
    1000     14.0      9.0        110    200        10

The header row uses the names and unit syntax of a `levels` table (p required; T, Td or
RH or r, z, dir and speed or u and v); lines starting with '#' are comments, '-' or an
empty CSV cell is a missing value. The decimal mark is detected: dots, or commas when the
separator is not a comma (and then said in a warning); a file mixing both is an error.
Humidity as RH or r and wind as u, v are converted to the dewpoint and to direction and
speed (said in the remarks); other columns are left out with a warning.
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import numpy as np

from layercalc.errors import DefinitionError, InputError, LayercalcError, Notice
from layercalc.physics import humidity
from layercalc.physics.winds import wind_direction_and_speed
from layercalc.source import Source, Span, read_source

from .decoded import Decoded, DecodedSounding, sort_levels

__all__ = ["parse_text_table", "read_text_table", "looks_like_text_table"]

# name -> (dimension check unit, what it is)
KNOWN = {"p": ("hPa", "pressure"), "T": ("K", "temperature"), "Td": ("K", "dewpoint"),
         "RH": ("1", "relative humidity"), "r": ("1", "mixing ratio"), "z": ("m", "height"),
         "dir": ("deg", "wind direction"), "speed": ("m/s", "wind speed"),
         "u": ("m/s", "eastward wind"), "v": ("m/s", "northward wind")}
_HEADING = re.compile(r"\s*([A-Za-z_][A-Za-z0-9_]*)\s*(?:\[([^\]]*)\])?\s*")
_COMMA_DECIMAL = re.compile(r"^[+-]?\d+,\d+$")
_DOT_DECIMAL = re.compile(r"^[+-]?(\d+\.\d*|\.\d+)([eE][+-]?\d+)?$")


def read_text_table(path) -> Decoded:
    """Read a sounding table from a text file; see the module docstring."""
    return parse_source(read_source(path))


def parse_text_table(text: str, name: str = "<text>") -> Decoded:
    return parse_source(Source(name, text.replace("\r\n", "\n").replace("\r", "\n")))


def looks_like_text_table(text: str) -> bool:
    """True when the first line that is not a comment is a header naming p with a unit."""
    for line in text.splitlines():
        if line.strip() and not line.lstrip().startswith("#"):
            return re.match(r"\s*p\s*\[", line) is not None
    return False


def _cells(line: str, separator: str | None, start: int):
    """(text, start offset, end offset) of each cell of a line."""
    if separator is None:
        return [(m.group(0), start + m.start(), start + m.end()) for m in re.finditer(r"\S+", line)]
    cells, position = [], 0
    for piece in line.split(separator):
        stripped = piece.strip()
        offset = position + (len(piece) - len(piece.lstrip()))
        cells.append((stripped, start + offset, start + offset + max(len(stripped), 1)))
        position += len(piece) + 1
    return cells


def _header_cells(line: str, separator: str | None, start: int):
    if separator is not None:
        return _cells(line, separator, start)
    return [(m.group(0).strip(), start + m.start(), start + m.end())
            for m in re.finditer(r"[A-Za-z_][A-Za-z0-9_]*\s*(?:\[[^\]]*\])?", line)]


def parse_source(source: Source) -> Decoded:
    lines = source.text.split("\n")
    offsets = np.cumsum([0] + [len(line) + 1 for line in lines])
    rows = [(i, line) for i, line in enumerate(lines) if line.strip() and not line.lstrip().startswith("#")]
    if not rows:
        raise InputError(f"{source.name} holds no table", hint="the first line is a header like 'p [hPa]  T [degC]'")
    head_index, head = rows[0]
    separator = ";" if ";" in head else ("," if "," in re.sub(r"\[[^\]]*\]", "", head) else None)
    notices: list[Notice] = []
    names, units = [], []
    from layercalc.language.unit_text import parse_unit_string  # sympy: only when used
    from layercalc.language import units as U
    for text, begin, end in _header_cells(head, separator, offsets[head_index]):
        span = Span(source, begin, end)
        match = _HEADING.fullmatch(text)
        if not match:
            raise DefinitionError(f"'{text}' is not a column heading 'name [unit]'", span,
                                  hint="write e.g. p [hPa], T [degC], speed [kt]")
        name, unit_text = match.group(1), match.group(2)
        if name not in KNOWN:
            notices.append(Notice(f"column '{name}' is not a sounding quantity "
                                  f"({', '.join(KNOWN)}) and is left out", span))
            names.append(None)
            units.append(None)
            continue
        if name in names:
            raise DefinitionError(f"column '{name}' appears twice", span)
        if unit_text is None:
            if KNOWN[name][0] != "1":
                raise DefinitionError(f"column '{name}' has no unit", span,
                                      hint=f"write it as {name} [{KNOWN[name][0]}] or another {KNOWN[name][1]} unit")
            unit = parse_unit_string("1")
        else:
            try:
                unit = parse_unit_string(unit_text.strip())
            except LayercalcError as error:
                raise DefinitionError(f"column '{name}': {error.message}", span, hint=error.hint) from None
        want = parse_unit_string(KNOWN[name][0])
        if not U.same_dimension(unit.dimension, want.dimension):
            raise DefinitionError(f"column '{name}' is a {KNOWN[name][1]}, but [{unit_text}] is "
                                  f"not a unit of one", span,
                                  hint=f"e.g. {name} [{KNOWN[name][0]}]")
        names.append(name)
        units.append(unit)
    if "p" not in names:
        raise DefinitionError("the header has no pressure column 'p'",
                              Span(source, offsets[head_index], offsets[head_index] + len(head)),
                              hint="add a column p [hPa]")
    comma_decimal = None
    data = {name: [] for name in names if name}
    for index, line in rows[1:]:
        cells = _cells(line, separator, offsets[index])
        if len(cells) != len(names):
            raise DefinitionError(f"this row has {len(cells)} values; the header has {len(names)} columns",
                                  Span(source, offsets[index], offsets[index] + len(line)),
                                  hint="one value per column; '-' for a missing one")
        for (text, begin, end), name, unit in zip(cells, names, units):
            if name is None:
                continue
            span = Span(source, begin, end)
            if text in ("-", ""):
                data[name].append(math.nan)
                continue
            if _COMMA_DECIMAL.match(text) and separator != ",":
                if comma_decimal is False:
                    raise DefinitionError(f"'{text}' has a decimal comma, but earlier values use a dot", span)
                if comma_decimal is None:
                    notices.append(Notice("decimal commas detected: '3,5' is read as 3.5", span))
                comma_decimal = True
                text = text.replace(",", ".")
            elif _DOT_DECIMAL.match(text):
                if comma_decimal:
                    raise DefinitionError(f"'{text}' has a decimal dot, but earlier values use a comma", span)
                comma_decimal = False
            try:
                value = float(text)
            except ValueError:
                raise DefinitionError(f"'{text}' is not a number", span,
                                      hint="a number, or '-' for a missing value") from None
            if not math.isfinite(value):
                raise DefinitionError(f"'{text}' is not a finite number", span)
            data[name].append(unit.to_si(value))
    if not data["p"]:
        raise DefinitionError("the table has a header but no rows", Span(source, offsets[head_index], offsets[head_index] + len(head)))
    return Decoded((_sounding(source, data, notices),), tuple(notices), (), source.name, "text table")


def _sounding(source: Source, data: dict, notices: list) -> DecodedSounding:
    n = len(data["p"])
    nan = np.full(n, np.nan)
    pressure = np.asarray(data["p"])
    if not np.all(np.isfinite(pressure)) or np.any(pressure <= 0):
        raise DefinitionError("every row needs a positive pressure p",
                              Span(source, 0, 0))
    remarks = []
    temperature = np.asarray(data.get("T", nan))
    dewpoint = np.asarray(data.get("Td", nan))
    if "Td" not in data and "RH" in data:
        vapour = humidity.vapour_pressure_from_relative_humidity(np.asarray(data["RH"]), temperature)
        dewpoint = humidity.dewpoint_from_vapour_pressure(vapour)
        remarks.append("dewpoint computed from RH and T (Bolton 1980)")
    elif "Td" not in data and "r" in data:
        vapour = humidity.vapour_pressure_from_mixing_ratio(np.asarray(data["r"]), pressure)
        dewpoint = humidity.dewpoint_from_vapour_pressure(vapour)
        remarks.append("dewpoint computed from the mixing ratio r and p (Bolton 1980)")
    if "dir" in data:
        direction, speed = np.asarray(data["dir"]) * 180.0 / np.pi, np.asarray(data.get("speed", nan))
    elif "u" in data:
        direction, speed = wind_direction_and_speed(np.asarray(data["u"]), np.asarray(data.get("v", nan)))
        remarks.append("wind direction and speed computed from u and v")
    else:
        direction, speed = nan, nan
    pressure, columns, _ = sort_levels(pressure, {
        "height": data.get("z", nan), "temperature": temperature, "dewpoint": dewpoint,
        "wind_direction": direction, "wind_speed": speed})
    return DecodedSounding(
        station=Path(source.name).stem, kind="table", time="", latitude=None, longitude=None,
        elevation=None, position_source="", pressure=pressure, height=columns["height"],
        temperature=columns["temperature"], dewpoint=columns["dewpoint"],
        wind_direction=columns["wind_direction"], wind_speed=columns["wind_speed"],
        source=source.name, parts=("text table",), remarks=tuple(remarks))
