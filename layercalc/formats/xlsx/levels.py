"""The `levels` sheet of a workbook built from a top-level `levels` table: the table as
typed, and the layers sheet's inputs as live layer means of it.

Written when the sheet has one top-level `levels` table and no stations; otherwise the
workbook keeps the layer means as inputs (see README). Layout: notes in rows 1-2; the
header `name [unit]` as typed in row HEADER_ROW, then one row per level, SURFACE FIRST,
blank for a missing value; beside the table (after a blank column, so the reader does not
take them for columns) a check cell, and with surface_pressure its link to `settings` and
a check that it still cuts the column where the formulas do. On `layers`, p_bottom and
p_top link to consecutive levels and every other column is the mean of its two levels
(every quantity linear in ln p: physics.levels.layers_from_levels), mirroring
soundings.column: a blank inner value is interpolated linearly in ln p between the nearest
levels that have it (fill_gaps), and levels below a surface_pressure are left out, the
layer across it cut there with its values interpolated in ln p (_cut_at_surface).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from layercalc.formats.xlsx.cells import letter, put_text, red_when, style
from layercalc.formats.xlsx.formulas import from_si, to_si

SHEET = "levels"
HEADER_ROW = 4
COUNT_LABEL = "levels the formulas cover"
LAST_ROW = 1048576  # the last row of a worksheet


@dataclass(frozen=True)
class LiveLevels:
    """A levels table whose layer means the workbook holds live, and how the column is
    made of its levels: `column[j]` is the sheet level (sorted, surface first) of the
    column's level j, or None for the level at surface_pressure, cut between sheet
    levels `cut` (below, above) by interpolation in ln p; `gaps[name]` lists the sheet
    levels where `name` is blank, each with its nearest levels below and above that have
    it (soundings.levels.fill_gaps interpolates between them in ln p)."""

    table: object
    column: tuple
    cut: tuple | None
    gaps: dict


def live_levels(checked) -> LiveLevels | None:
    """How the layer means can be live, or None when they cannot (see README)."""
    document = checked.document
    if document is None or checked.soundings is None:
        return None
    from layercalc.language.nodes import Station, Table

    statements = document.statements
    tables = [s for s in statements if isinstance(s, Table) and s.kind == "levels"]
    if len(tables) != 1 or any(isinstance(s, Station) for s in statements):
        return None
    table = tables[0]
    names = [h.name for h in table.headings]
    data = _sorted_rows(table)
    layer_names = [n for n in checked.input_columns if n not in ("p_bottom", "p_top")]
    if any(n not in names for n in layer_names) or "p" not in names:
        return None
    gaps = {}
    for name in layer_names:
        present = np.flatnonzero(np.isfinite(data[:, names.index(name)]))
        if present.size < 2 or present[0] != 0 or present[-1] != data.shape[0] - 1:
            return None  # layercalc refuses a gap at an end; nothing to mirror
        gaps[name] = {int(k): (int(present[present < k][-1]), int(present[present > k][0]))
                      for k in range(data.shape[0]) if k not in present}
    from layercalc.formats.xlsx.stations import heading_units

    pressure = heading_units(table)["p"].to_si(data[:, names.index("p")])
    column_pressure = checked.soundings.column_levels["pressure"]
    below = int(np.count_nonzero(pressure > column_pressure[0]))
    if below and pressure[below] == column_pressure[0]:
        column, cut = tuple(range(below, data.shape[0])), None
    elif below:
        column, cut = (None, *range(below, data.shape[0])), (below - 1, below)
    else:
        column, cut = tuple(range(data.shape[0])), None
    if checked.layer_count != len(column) - 1:
        return None
    if not np.array_equal(column_pressure[1:], pressure[list(column[1:])]):
        return None
    return LiveLevels(table, column, cut, gaps)


def _sorted_rows(table) -> np.ndarray:
    names = [h.name for h in table.headings]
    data = np.array(table.rows, dtype=float).reshape(len(table.rows), len(names))
    return data[np.argsort(-data[:, names.index("p")], kind="stable")]


def levels_sheet(ws, live: LiveLevels, checked) -> "LevelFormulas":
    """Fill `ws` with the table as typed and the check cells beside it; returns the
    formulas of the layers sheet's inputs."""
    from layercalc.formats.xlsx.stations import heading_text, heading_units

    table = live.table
    notes = ("The levels as typed, SURFACE FIRST. Edit a value here and the layer means on "
             "'layers' (the mean of each layer's two levels) and the results recalculate.",
             "Adding or removing a level needs a new export; z and the winds are read back "
             "on import; the hydrostatic check of the heights is live on 'hydrostatic'.")
    for row, text in enumerate(notes, start=1):
        put_text(ws.cell(row, 1), text)
        style(ws.cell(row, 1), "note")
    units = heading_units(table)
    places = {}
    for j, heading in enumerate(table.headings, start=1):
        put_text(ws.cell(HEADER_ROW, j), heading_text(heading))
        style(ws.cell(HEADER_ROW, j), "header")
        places[heading.name] = (letter(j), units[heading.name])
    data = _sorted_rows(table)
    for k, row in enumerate(data):
        for j, value in enumerate(row, start=1):
            if np.isfinite(value):
                ws.cell(HEADER_ROW + 1 + k, j, float(value))
    from layercalc.formats.xlsx.cells import size_columns

    size_columns(ws, {j: 14 for j in range(1, len(table.headings) + 1)})
    size_columns(ws, {len(table.headings) + 2: 26})
    formulas = LevelFormulas(places, live, None)
    side = len(table.headings) + 2
    # the level count the formulas cover, read back by levels_block (a level added)
    put_text(ws.cell(HEADER_ROW - 1, side), COUNT_LABEL)
    style(ws.cell(HEADER_ROW - 1, side), "name")
    ws.cell(HEADER_ROW - 1, side + 1, data.shape[0])
    column = places["p"][0]
    _check(ws, HEADER_ROW + 1, side, _count_check(column, data.shape[0]))
    used = ["p", *live.gaps]
    _check(ws, HEADER_ROW, side, _values_check(places, used, data,
                                               [h.name for h in table.headings]))
    cell = checked.input_cells.get("surface_pressure")
    if cell is not None:
        label = ws.cell(HEADER_ROW + 3, side)
        put_text(label, f"surface_pressure [{cell.unit.text}]")
        style(label, "name")
        link = ws.cell(HEADER_ROW + 3, side + 1,
                       "=INDEX('settings'!$B:$B,MATCH(\"surface_pressure\",'settings'!$A:$A,0))")
        link.number_format = "0.0"
        surface = to_si(f"'{SHEET}'!${letter(side + 1)}${HEADER_ROW + 3}", cell.unit)
        formulas = LevelFormulas(places, live, surface)
        _check(ws, HEADER_ROW + 4, side, _surface_check(formulas))
        note = ws.cell(HEADER_ROW + 5, side)
        put_text(note, "(from 'settings'; the layers start there: "
                 + ("the layer across it is cut, its values interpolated in ln p)"
                    if live.cut else "no layer is cut)"))
        style(note, "note")
    return formulas


def _check(ws, row: int, column: int, check: tuple[str, str]) -> None:
    formula, condition = check
    cell = ws.cell(row, column, "=" + formula)
    style(cell, "check")
    red_when(ws, cell.coordinate, condition)


def _values_check(places: dict, used: list, data: np.ndarray, names: list) -> tuple[str, str]:
    """A check cell's formula and its red condition: every value the layer formulas read
    and that was there at export is still a number (a blank counts as 0 in a formula)."""
    runs, count = [], 0
    for name in used:
        column = letter(names.index(name) + 1)
        present = np.isfinite(data[:, names.index(name)])
        count += int(present.sum())
        k = 0
        while k < present.size:
            if not present[k]:
                k += 1
                continue
            end = k
            while end + 1 < present.size and present[end + 1]:
                end += 1
            runs.append(f"{column}{HEADER_ROW + 1 + k}:{column}{HEADER_ROW + 1 + end}")
            k = end + 1
    counted = f"COUNT({','.join(runs)})"
    text = ('IF({c}={n},"OK: every value the layer formulas read is there",'
            '"CHECK: "&({n}-{c})&" value(s) the layer formulas read are blank or text: a '
            'blank counts as 0 there (layercalc would interpolate); type the value or export '
            'again")').format(c=counted, n=count)
    return text, f"{counted}<>{count}"


def _count_check(column: str, levels: int) -> tuple[str, str]:
    """The check that the table has the levels the formulas cover."""
    count = f"COUNT(${column}${HEADER_ROW + 1}:${column}${LAST_ROW})"
    return (f'IF({count}={levels},"OK: the formulas cover all {levels} levels","CHECK: the '
            f'table has "&{count}&" levels but the formulas cover {levels}: export again")',
            f"{count}<>{levels}")


def _surface_check(formulas: "LevelFormulas") -> tuple[str, str]:
    """The check that surface_pressure still cuts the column where the formulas cut it."""
    live, surface = formulas.live, formulas.surface
    if live.cut is not None:
        below, above = live.cut
        inside = f"AND({surface}<{formulas.pressure(below)},{surface}>{formulas.pressure(above)})"
    elif live.column[0] > 0:
        inside = f"{surface}={formulas.pressure(live.column[0])}"
    else:
        inside = f"{surface}>={formulas.pressure(0)}"
    ok = "OK: the layers start where layercalc starts them"
    text = (f'IF({inside},"{ok}","CHECK: surface_pressure has moved past a level; the '
            f'formulas still start the column as exported, layercalc would not: export '
            f'again")')
    return text, f"NOT({inside})"


class LevelFormulas:
    """Formula text of the layers sheet's inputs from the levels sheet (and of the column's
    levels: a gap filled, the level at surface_pressure cut, all in SI)."""

    def __init__(self, places: dict, live: LiveLevels, surface: str | None) -> None:
        self.places, self.live, self.surface = places, live, surface

    def ref(self, name: str, level: int) -> str:
        return f"'{SHEET}'!{self.places[name][0]}{HEADER_ROW + 1 + level}"

    def pressure(self, level: int) -> str:
        return to_si(self.ref("p", level), self.places["p"][1])

    def value(self, name: str, level: int) -> str:
        """`name` at a sheet level in SI; a gap filled in ln p from the nearest levels
        that have it at export (a value typed into the gap is used instead)."""
        ref = self.ref(name, level)
        si = to_si(ref, self.places[name][1])
        if level not in self.live.gaps.get(name, {}):
            return si
        below, above = self.live.gaps[name][level]
        filled = between(self.value(name, below), self.value(name, above),
                         self.pressure(below), self.pressure(above), self.pressure(level))
        return f"IF(ISNUMBER({ref}),{si},{filled})"

    def column_value(self, name: str, j: int) -> str:
        level = self.live.column[j]
        if level is not None:
            return self.pressure(level) if name == "p" else self.value(name, level)
        if name == "p":
            return self.surface
        below, above = self.live.cut
        return between(self.value(name, below), self.value(name, above),
                       self.pressure(below), self.pressure(above), self.surface)

    def layer(self, name: str, k: int, unit) -> str:
        """The layers sheet's `name` of layer k (surface first)."""
        if name in ("p_bottom", "p_top"):
            j = k + (name == "p_top")
            level = self.live.column[j]
            if level is None:
                return "=" + from_si(self.surface, unit)
            source, source_unit = self.places["p"]
            return "=" + from_si(to_si(f"'{SHEET}'!{source}{HEADER_ROW + 1 + level}",
                                       source_unit), unit)
        return "=" + from_si(f"({self.column_value(name, k)}+{self.column_value(name, k + 1)})/2",
                             unit)


def between(low: str, high: str, p_low: str, p_high: str, p: str) -> str:
    """Linear in ln p between two levels (SI text): low + (high - low) ln(p_low / p) /
    ln(p_low / p_high), as soundings.levels.fill_gaps and the cut at surface_pressure."""
    return f"({low}+({high}-{low})*LN({p_low}/{p})/LN({p_low}/{p_high}))"


def levels_block(builder, sheet: str) -> list:
    """The `levels` table of a levels sheet (its rows as reader._RawWorkbook read them) as
    `.layers` lines of (text, sheet, cell) pieces."""
    from layercalc.formats.xlsx.stations import table_lines

    from layercalc.formats.xlsx.cells import cell_name

    rows = builder.raw.sheets[sheet]
    lines = table_lines(builder, sheet, rows, HEADER_ROW)
    label = rows[HEADER_ROW - 2] if len(rows) >= HEADER_ROW - 1 else ()
    for j, value in enumerate(label[:-1]):
        covered = label[j + 1]
        if value == COUNT_LABEL and isinstance(covered, int) and covered != len(lines) - 1:
            builder.notice(f"the levels table has {len(lines) - 1} levels but this workbook's "
                           f"own formulas cover the {covered} it was exported with: the sheets"
                           " and layercalc now give two answers; layercalc uses every level. "
                           "Export the workbook again (layercalc import, then layercalc "
                           "export) so that its formulas cover the table", sheet,
                           cell_name(HEADER_ROW - 1, j + 2))
    return [[("levels", None, None)], *lines, [("end", None, None)]]


def live_inputs(workbook, checked):
    """Add a `stations` or `levels` sheet when the sheet's inputs can be live there, and the
    `hydrostatic` sheet for their soundings; returns `formula(name, k, unit)` for the
    layers sheet (None for an input kept as a value), or None when neither applies."""
    from layercalc.formats.xlsx.hydrostatic import Placed, hydrostatic_sheet, placed_soundings
    from layercalc.formats.xlsx.stations import (
        layer_divergence_formula, live_network, stations_sheet,
    )

    network = live_network(checked)
    live = live_levels(checked) if network is None else None
    formula, placed = None, None
    if network is not None:
        cells = stations_sheet(workbook.create_sheet("stations"), checked, network)

        def formula(name, k, unit):
            return layer_divergence_formula(cells, k, unit) if name == "div" else None
    elif live is not None:
        formulas = levels_sheet(workbook.create_sheet(SHEET), live, checked)
        placed = Placed("the levels table", SHEET, HEADER_ROW + 1, formulas.places,
                        len(live.table.rows))
        formula = formulas.layer
    if formula is not None:
        hydrostatic_sheet(workbook, placed_soundings(workbook, checked, placed),
                          checked.soundings.hydrostatic_tolerance)
    return formula
