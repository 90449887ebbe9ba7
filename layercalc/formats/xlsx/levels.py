"""The `levels` sheet of a workbook built from a top-level `levels` table, and which inputs
of the layers sheet are live formulas of the soundings (live_inputs).

The levels sheet: notes in rows 1-2; the header `name [unit]` as typed in row HEADER_ROW,
then one row per level, SURFACE FIRST, blank for a missing value; beside the table (after a
blank column, so the reader does not take them for columns) the level count the formulas
cover (read back on import) and check cells that turn red when a level is added or a value
the formulas read is blanked. The layers sheet's inputs are then layer means of these
levels (column_levels.py: gaps filled and the layer across surface_pressure cut by
formulas); with stations, `div` comes from the stations sheet's fit per level, and without
a levels table the other columns are the stations' means (AVERAGE over the stations that
give a value, as soundings.column takes them).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from layercalc.formats.xlsx.cells import (letter, put_check, put_notes, put_text, style,
                                         values_check)
from layercalc.formats.xlsx.column_levels import (
    ColumnFormulas, column_structure, gap_filled, surface_block,
)
from layercalc.formats.xlsx.formulas import number_text, to_si

SHEET = "levels"
HEADER_ROW = 4
COUNT_LABEL = "levels the formulas cover"
LAST_ROW = 1048576  # the last row of a worksheet


@dataclass(frozen=True)
class LiveLevels:
    """A levels table whose layer means the workbook can hold live: `gaps[name]` maps each
    level (sorted, surface first) where `name` is blank to its nearest levels below and
    above that have it (soundings.levels.fill_gaps interpolates between them in ln p)."""

    table: object
    gaps: dict
    pressure: np.ndarray  # [Pa] sorted, surface first


def live_levels(checked, names_used) -> LiveLevels | None:
    """The top-level levels table when the layer columns `names_used` can be live formulas
    of it, else None (see README)."""
    from layercalc.language.nodes import Table

    tables = [s for s in checked.document.statements
              if isinstance(s, Table) and s.kind == "levels"]
    if len(tables) != 1:
        return None
    table = tables[0]
    names = [h.name for h in table.headings]
    data = _sorted_rows(table)
    if any(n not in names for n in names_used) or "p" not in names:
        return None
    gaps = {}
    for name in names_used:
        present = np.flatnonzero(np.isfinite(data[:, names.index(name)]))
        if present.size < 2 or present[0] != 0 or present[-1] != data.shape[0] - 1:
            return None  # layercalc refuses a gap at an end; nothing to mirror
        gaps[name] = {int(k): (int(present[present < k][-1]), int(present[present > k][0]))
                      for k in range(data.shape[0]) if k not in present}
    from layercalc.formats.xlsx.stations import heading_units

    pressure = heading_units(table)["p"].to_si(data[:, names.index("p")])
    return LiveLevels(table, gaps, np.asarray(pressure, dtype=float))


def _sorted_rows(table) -> np.ndarray:
    names = [h.name for h in table.headings]
    data = np.array(table.rows, dtype=float).reshape(len(table.rows), len(names))
    return data[np.argsort(-data[:, names.index("p")], kind="stable")]


def levels_sheet(ws, live: LiveLevels) -> dict:
    """Fill `ws` with the table as typed and the check cells beside it; returns name ->
    (column letter, unit) of each heading."""
    from layercalc.formats.xlsx.stations import heading_text, heading_units

    table = live.table
    notes = ("The levels as typed, SURFACE FIRST. Edit a value here and the layer means on "
             "'layers' (the mean of each layer's two levels) and the results recalculate.",
             "Adding or removing a level needs a new export; z and the winds are read back "
             "on import; the hydrostatic check of the heights is live on 'hydrostatic'.")
    put_notes(ws, notes)
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
    side = len(table.headings) + 2
    size_columns(ws, {side: 50})  # the check texts whole: they do not widen the page
    from layercalc.formats.xlsx.printing import wrap_notes

    wrap_notes(ws, range(1, len(notes) + 1), side)
    # the level count the formulas cover, read back by levels_block (a level added)
    put_text(ws.cell(HEADER_ROW - 1, side), COUNT_LABEL)
    style(ws.cell(HEADER_ROW - 1, side), "name")
    ws.cell(HEADER_ROW - 1, side + 1, data.shape[0])
    names = [h.name for h in table.headings]
    put_check(ws, HEADER_ROW, side, values_check(
        ["p", *live.gaps], data, names, HEADER_ROW + 1,
        "OK: every value the layer formulas read is there",
        " value(s) the layer formulas read are blank or text: a blank counts as 0 there "
        "(layercalc would interpolate); type the value or export again"))
    put_check(ws, HEADER_ROW + 1, side, _count_check(places["p"][0], data.shape[0]))
    return places


def level_sources(places: dict, live: LiveLevels, sheet: str = SHEET) -> tuple:
    """(pressure(i), {name: value(i)}) as SI formula text of the cells of the levels sheet
    (or of a scenario's copy named `sheet`), a gap filled in ln p from the levels that had
    the value at export."""
    def ref(name, level):
        return f"'{sheet}'!{places[name][0]}{HEADER_ROW + 1 + level}"

    def pressure(level):
        return to_si(ref("p", level), places["p"][1])

    def source(name):
        def value(level):
            si = to_si(ref(name, level), places[name][1])
            if level not in live.gaps[name]:
                return si
            below, above = live.gaps[name][level]
            return gap_filled(ref(name, level), si, value(below), value(above),
                              pressure(below), pressure(above), pressure(level))
        return value

    return pressure, {name: source(name) for name in live.gaps}


def _count_check(column: str, levels: int) -> tuple[str, str]:
    """The check that the table has the levels the formulas cover."""
    count = f"COUNT(${column}${HEADER_ROW + 1}:${column}${LAST_ROW})"
    return (f'IF({count}={levels},"OK: the formulas cover all {levels} levels","CHECK: the '
            f'table has "&{count}&" levels but the formulas cover {levels}: export again")',
            f"{count}<>{levels}")


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


def station_means(placed: list, names_used, levels: int) -> dict:
    """{name: value(i)}: the mean over the stations that give `name` at level i (SI text),
    for each layer column every station giving it in one unit with a value at every level
    from at least one station; the others stay values."""
    sources = {}
    for name in names_used:
        having = [s for s in placed if name in s.places]
        units = {(s.places[name][1].scale, s.places[name][1].offset) for s in having}
        if not having or len(units) != 1 or not all(
                any(s.present(name, k) for s in having) for k in range(levels)):
            continue
        unit = having[0].places[name][1]

        def value(level, having=having, name=name, unit=unit):
            refs = ",".join(s.ref(name, level) for s in having)
            return to_si(f"AVERAGE({refs})", unit)
        sources[name] = value
    return sources


@dataclass(frozen=True)
class LiveColumn:
    """What live_inputs made live: the layers sheet's formulas (`formulas.layer(name, k,
    unit)`, None for an input kept as a value), the live station network (stations nodes,
    details) and levels table, and the layer columns the soundings give."""

    formulas: ColumnFormulas
    network: tuple | None
    live: LiveLevels | None
    used: tuple


def live_inputs(workbook, checked) -> LiveColumn | None:
    """Add a `stations` and/or `levels` sheet when the sheet's inputs can be live there, and
    the `hydrostatic` sheet for their soundings; None when nothing is live."""
    from layercalc.formats.xlsx.hydrostatic import Placed, hydrostatic_sheet, placed_soundings
    from layercalc.formats.xlsx.stations import live_network, stations_sheet
    from layercalc.language.nodes import Station, Table

    details, document = checked.soundings, checked.document
    if details is None or document is None:
        return None
    network = live_network(checked)
    if network is None and any(isinstance(s, Station) for s in document.statements):
        return _not_live(workbook, checked, "the stations sheet cannot hold this network's "
                         "fit")
    used = [n for n in checked.input_columns if n not in ("p_bottom", "p_top", "div")
            or (n == "div" and network is None)]
    live = None
    if any(isinstance(s, Table) and s.kind == "levels" for s in document.statements):
        live = live_levels(checked, used)
        if live is None:
            return _not_live(workbook, checked, "the levels table lacks a value the layers "
                             "need at its lowest or highest level")
    level_pressure = live.pressure if live is not None else network[1].levels.pressure
    structure = column_structure(level_pressure, details.column_levels["pressure"])
    if structure is None:
        return _not_live(workbook, checked, "the column's levels are not the table's")
    sources, placed = {}, None
    if network is not None:
        cells = stations_sheet(workbook.create_sheet("stations"), checked, network)
        sources["div"] = lambda level: f"'stations'!{cells[level]}"
    if live is not None:
        places = levels_sheet(workbook.create_sheet(SHEET), live)
        pressure, found = level_sources(places, live)
        sources.update(found)
        placed = Placed("the levels table", SHEET, HEADER_ROW + 1, places,
                        len(live.table.rows))
    soundings = placed_soundings(workbook, checked, placed)
    if live is None:
        stations = [s for s in soundings if s.sheet == "stations"]
        pressure = stations[0].pressure
        sources.update(station_means(stations, used, level_pressure.size))
    formulas = ColumnFormulas(*structure, pressure, sources, None)
    cell = checked.input_cells.get("surface_pressure")
    if cell is not None and all(n in sources for n in used):
        surface_block(workbook["layers"], 8, len(checked.input_columns) + 2, cell, formulas,
                      level_pressure.size)
    elif cell is not None:  # an input kept as a value: the cut stays where it was
        formulas.surface = number_text(float(cell.value))
    hydrostatic_sheet(workbook, [s for s in soundings if s.checked], details)
    return LiveColumn(formulas, network, live, tuple(used))


def _not_live(workbook, checked, why: str) -> None:
    """A visible note beside the layers table of a sheet built from soundings whose layer
    means stay values here (the workbook is then a layer table: import reads it as one)."""
    column = len(checked.input_columns) + 2
    note = workbook["layers"].cell(8, column)
    put_text(note, "NOT LIVE OF THE SOUNDINGS: the layer means here are values layercalc "
             f"computed from the .layers file's soundings ({why}); this workbook holds them "
             "as a layer table (edit them here, or edit the .layers file and export again)")
    style(note, "changed")
    return None
