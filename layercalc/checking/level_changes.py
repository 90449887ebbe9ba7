"""Scenario changes to level values: `scale speed by 1.2 at "Eastmoor" above 500 hPa`,
`add 5 deg to dir at every station`, `add 2 K to T at levels below 850 hPa`, checked once.

Places: `at "Name"` (one station's table), `at every station`, `at levels` (the top-level
levels table). A change may target a column of those tables that gives a layer column:
a station's wind (dir, speed or u, v: the divergence), and, when there is no levels
table, a station's T, Td or another column (the column is the mean over the stations);
at levels, T, Td and the other columns (not its winds or z: they give no layer column).
p is never changed (levels keep their pressures), nor z (observed heights feed only the
hydrostatic check).

Selections pick levels by their pressure, inclusive:
    between P1 and P2   min(P1, P2) <= p <= max(P1, P2)
    above P             p <= P
    below P             p >= P
    at P                p = P (one level, within a relative 1e-6)
so a layer is picked by a range exactly when both its levels are (the layer rule in
checking/scenarios.py). `where` is for layers only.
"""

from __future__ import annotations

import re

import numpy as np

from layercalc.errors import DefinitionError, UnitError, UnknownNameError
from layercalc.language import units as U
from layercalc.language.typed import COLUMN, references
from layercalc.names import close_names

PRESSURE_TOLERANCE = 1e-6  # relative, when a level equals a selection pressure
WIND_NAMES = ("dir", "speed", "u", "v")
_ANGLE = re.compile(r"\b(deg|rad)\b")
# the hint where a sheet's layers are a layers table (a workbook that holds its layer
# means as values, "not live", is one once imported)
_NO_SOUNDINGS = ("its layers come from a layers table; a change without 'at' changes them "
                 "(a workbook whose layers are not live of its soundings: change the "
                 "soundings in the .layers file it was exported from)")


def pressure_bounds(checker, selection) -> tuple[float, ...]:
    """The SI pressures of a `between`, `above` or `below` selection, each checked."""
    values = []
    for part in (p for p in (selection.first, selection.second) if p is not None):
        typed = checker.expr(part, prefer_columns=True)
        if not U.same_dimension(typed.meta.dimension, U.PRESSURE):
            raise UnitError(f"'{selection.kind}' needs a pressure, not "
                            f"{U.dimension_name(typed.meta.dimension)}", part.span,
                            hint="e.g. between 500 hPa and 300 hPa")
        values.append(typed.value)
    return tuple(values)


def level_mask(pressure, selection: str | None, bounds) -> np.ndarray:
    """Which levels (pressures in Pa) a range selection picks, inclusive (module docstring)."""
    pressure = np.asarray(pressure, dtype=float)
    tol = PRESSURE_TOLERANCE
    if selection == "between":
        high, low = max(bounds), min(bounds)
        return (pressure <= high * (1 + tol)) & (pressure >= low * (1 - tol))
    if selection == "above":
        return pressure <= bounds[0] * (1 + tol)
    if selection == "below":
        return pressure >= bounds[0] * (1 - tol)
    if selection == "at":
        return np.abs(pressure - bounds[0]) <= bounds[0] * tol
    return np.ones(pressure.shape, dtype=bool)


def tables_of(sheet, change) -> tuple[tuple[int, ...], list]:
    """The soundings a change's place names: (indices into levels table then stations,
    the Sounding objects). Unknown places are our error with suggestions."""
    details = sheet.soundings
    place = change.place
    main = details.levels_table if details is not None else None
    stations = list(details.station_soundings) if details is not None else []
    offset = 1 if main is not None else 0
    if place.kind == "levels":
        if main is None:
            raise DefinitionError("'at levels' changes the top-level levels table, and this "
                                  "sheet has none", place.span,
                                  hint="for a station's values write at \"Name\" or at "
                                       "every station" if stations else _NO_SOUNDINGS)
        return (0,), [main]
    if not stations:
        raise DefinitionError("this sheet has no station blocks to change", place.span,
                              hint="'at levels' changes the levels table" if main is not None
                              else _NO_SOUNDINGS)
    if place.kind == "every station":
        return tuple(range(offset, offset + len(stations))), stations
    names = [network_name(s) for s in stations]
    if place.station not in names:
        close = close_names(place.station, names, 3)
        raise UnknownNameError(f'no station named "{place.station}"', place.span, close,
                               hint=None if close else "stations in this sheet: "
                               + ", ".join(f'"{n}"' for n in names))
    index = names.index(place.station)
    return (offset + index,), [stations[index]]


def tables_with_column(sheet, name: str) -> str:
    """Which level tables have a column `name`, in words ('' if none): for the hint when a
    change names such a column without saying where."""
    details = sheet.soundings
    if details is None:
        return ""
    main = details.levels_table
    stations = list(details.station_soundings)
    found = []
    if any(name in s.values for s in stations):
        found.append("the station tables")
    if main is not None and name in main.values:
        found.append("the levels table")
    return " and ".join(found)


def place_hint(sheet, change) -> str:
    """The change as written with its place put in (after the column and the amount, where
    the grammar has it), for the hint when a change names a level column without one."""
    details = sheet.soundings
    text = change.span.source.text
    cut = max(change.target_span.end, change.amount.span.end)
    head = " ".join(text[change.span.start:cut].split())
    selection = change.selection
    tail = "" if selection is None else " ".join(
        text[selection.span.start:selection.span.end].split())
    places = []
    if change.target in stations_columns(details):
        places += [f'at "{network_name(details.station_soundings[0])}"', "at every station"]
    if details.levels_table is not None and change.target in details.levels_table.values:
        places.append("at levels")
    return "e.g. " + " or ".join(f"'{' '.join(p for p in (head, place, tail) if p)}'"
                                 for place in places[:2])


def stations_columns(details) -> set:
    return {name for s in details.station_soundings for name in s.values}


def network_name(sounding) -> str:
    """The station name of a Sounding named 'station "Name"'."""
    return sounding.name.removeprefix("station ").strip('"')


def check_target(sheet, change, soundings) -> None:
    """The changed column exists in every table the change names and gives a layer column."""
    target, place = change.target, change.place
    if target == "p":
        raise DefinitionError("a scenario cannot change p: levels keep their pressures",
                              change.target_span, hint="change T, Td or the winds")
    if target == "z":
        raise DefinitionError("a scenario cannot change z: observed heights feed only the "
                              "hydrostatic check, not the layers", change.target_span,
                              hint="change T and Td; heights follow from them")
    details = sheet.soundings
    for s in soundings:
        if target not in s.values:
            known = list(s.values)
            close = close_names(target, known, 3)
            raise UnknownNameError(f"{s.name} has no column '{target}'", change.target_span,
                                   close, hint=None if close else
                                   f"its columns: {', '.join(known)}")
    if place.kind == "levels" and target in WIND_NAMES:
        raise DefinitionError(f"the levels table's {target} gives no layer column (its winds "
                              "feed only the layer-mean winds of the report)",
                              change.target_span, hint="change a station's wind with "
                              "at \"Name\", or T, Td at levels")
    if place.kind != "levels" and target not in WIND_NAMES and \
            details.levels_table is not None:
        raise DefinitionError(f"the stations' {target} is used only for their hydrostatic "
                              "check: the levels table gives the column's "
                              f"{target}", change.target_span,
                              hint="change it with 'at levels'")


def check_amount(checker, sheet, change, unit) -> object:
    """The amount, typed: numbers and input cells only, in the column's dimension (a plain
    number for scale). A direction takes an angle with its unit, and is never scaled."""
    target = change.target
    amount = checker.expr(change.amount, prefer_columns=False,
                          affine_as_difference=change.action == "add")
    for shape, name in references(amount):
        if shape == COLUMN or name not in sheet.input_cells:
            raise DefinitionError(f"a change at {place_text(change.place)} reads numbers and "
                                  f"input cells only; '{name}' is "
                                  f"{'a layer column' if shape == COLUMN else 'computed'}",
                                  change.amount.span,
                                  hint="e.g. scale speed by 1.2, or a what-if cell")
    if change.action == "scale":
        if target == "dir":
            raise DefinitionError("a wind direction cannot be scaled", change.span,
                                  hint="turn it: add 5 deg to dir")
        if not U.is_dimensionless(amount.meta.dimension):
            raise UnitError(f"'scale {target} by' needs a plain number, not "
                            f"{U.dimension_name(amount.meta.dimension)}", change.amount.span,
                            hint="e.g. scale speed by 1.2")
        return amount
    if not U.same_dimension(amount.meta.dimension, unit.dimension):
        verb = "add" if change.action == "add" else "set"
        found, expected = (U.dimension_name(d) for d in (amount.meta.dimension,
                                                         unit.dimension))
        if target == "dir":
            expected = "angle"
        raise UnitError(f"cannot {verb} {U.with_article(found)} "
                        f"{'to' if verb == 'add' else 'as'} {target} "
                        f"({U.with_article(expected)})", change.amount.span,
                        found=found, expected=expected)
    if target == "dir" and not _angle_written(change, sheet, amount):
        raise UnitError("a direction change needs its angle unit", change.amount.span,
                        hint="e.g. add 5 deg to dir (a plain number would be radians)")
    return amount


def _angle_written(change, sheet, amount) -> bool:
    """The amount shows its angle unit: a literal in deg or rad, or an input cell in one."""
    span = change.amount.span
    if _ANGLE.search(span.source.text[span.start:span.end]):
        return True
    return any(_ANGLE.fullmatch(sheet.input_cells[name].unit.text or "")
               for _, name in references(amount) if name in sheet.input_cells)


def place_text(place) -> str:
    return {"station": f'"{place.station}"', "every station": "every station",
            "levels": "levels"}[place.kind]
