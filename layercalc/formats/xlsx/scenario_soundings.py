"""A hidden copy of the live `stations` and/or `levels` sheet for each scenario that
changes level values (`scale speed by 1.2 at "Eastmoor"`, `add 2 K to T at levels`).

A scenario's sheet, `stations_<scenario>` or `levels_<scenario>`, has the base sheet's
layout cell for cell. Every typed value there is a formula: a link to the same cell of the
base sheet, or, where the scenario changes it, the base cell with the change replayed
(`='stations'!E41*'results_x'!$B$20`: the amount reads the what-if cells through the
scenario's own results sheet, which links them to `settings` or holds the scenario's own
value; a direction is kept in 0-360 degrees with MOD). A stations copy has its own fit.
The scenario's layer columns are then built from the copies as the base's are from the
base sheets (levels.live_inputs, column_levels.ColumnFormulas: div from the fit, station
means, gaps, the cut at surface_pressure), and its results sheet takes each rebuilt input
from there, with its changes to layer columns replayed on top; so a wind edited on
`stations` or a what-if cell edited in `settings` moves the scenario's fit, its results
and `compare`. The copies are hidden, like the values twins, and carry no print area
(LibreOffice prints a hidden sheet that has one), so the printout keeps its length;
unhide one to watch the scenario's fit.
"""

from __future__ import annotations

from layercalc.formats.xlsx.cells import letter, put_notes, style
from layercalc.formats.xlsx.formulas import Translator, from_si, stepped, to_si

MAX_SHEET_NAME = 31  # Excel's limit on sheet names
FULL_TURN = "2*PI()"  # a direction's period [rad]


def live_inputs(workbook, checked, variants):
    """levels.live_inputs (the live `stations`/`levels` sheets and `hydrostatic`), and the
    hidden copies for each scenario that changes level values (setting its
    Variant.sources); returns the layers sheet's `formula(name, k, unit)`, or None."""
    from layercalc.formats.xlsx.levels import live_inputs as base_inputs

    found = base_inputs(workbook, checked)
    if found is None:
        return None
    for variant in variants[1:]:
        changes = _level_changes(checked, variant.name)
        if changes:
            _scenario_sheets(workbook, checked, found, variant, changes)
    return found.formulas.layer


def _level_changes(checked, name: str) -> list:
    from layercalc.checking.scenarios import chain

    return [ch for sc in chain(checked, name) for ch in sc.changes if ch.place is not None]


def _sheet_name(workbook, prefix: str, scenario: str) -> str:
    name = f"{prefix}_{scenario}"[:MAX_SHEET_NAME]
    taken = {n.lower() for n in workbook.sheetnames}
    number = 2
    while name.lower() in taken:
        tail = f"_{number}"
        name = f"{prefix}_{scenario}"[:MAX_SHEET_NAME - len(tail)] + tail
        number += 1
    return name


class _CellsOfResults:
    """The translator's layout for an amount: input cells as the scenario's results sheet
    holds them (linked to `settings`, or the scenario's own value)."""

    def __init__(self, checked, sheet_name: str) -> None:
        from layercalc.formats.xlsx.layout import input_cell_rows

        self.rows = input_cell_rows(checked)
        self.checked = checked
        self.sheet_name = sheet_name

    def cell_place(self, name: str):
        return (f"'{self.sheet_name}'!$B${self.rows[name]}",
                self.checked.input_cells[name].unit)

    def column_place(self, name: str):  # amounts read no columns (checking/level_changes)
        raise KeyError(name)


def _replay(ws, base_sheet: str, changes, index: int, sounding, first_row: int,
            names: list, amount_text) -> None:
    """Each typed value of one table on a scenario sheet: a link to the base sheet's cell,
    or the scenario's changes replayed on it."""
    from layercalc.checking.level_changes import level_mask

    masks = {id(ch): level_mask(sounding.pressure, ch.selection, ch.bounds) for ch in changes}
    for j, heading in enumerate(names, start=1):
        for k in range(sounding.pressure.size):
            cell = ws.cell(first_row + k, j)
            if cell.value is None:  # '-': a change never fills a missing value
                continue
            reference = f"'{base_sheet}'!{letter(j)}{first_row + k}"
            steps = [(ch.action, ch.amount, ch.text) for ch in changes
                     if index in ch.tables and ch.target == heading and masks[id(ch)][k]]
            if not steps:
                cell.value = "=" + reference
                continue
            unit = sounding.units[heading]
            text, _ = stepped(to_si(reference, unit), float(sounding.values[heading][k]),
                              steps, amount_text, lambda node: 0.0)
            if heading == "dir":
                text = f"MOD({text},{FULL_TURN})"
            cell.value = "=" + from_si(text, unit)
            style(cell, "changed")


def _scenario_sheets(workbook, checked, found, variant, changes) -> None:
    """The scenario's copies of the sheets its changes touch, and its rebuilt inputs."""
    from dataclasses import replace

    from layercalc.evaluation.scenarios import rebuilt_inputs
    from layercalc.formats.xlsx.column_levels import ColumnFormulas
    from layercalc.formats.xlsx.hydrostatic import placed_soundings
    from layercalc.formats.xlsx.levels import level_sources, station_means

    base = found.formulas
    sources = dict(base.sources)
    layout = _CellsOfResults(variant.checked, variant.sheet_name)

    def amount_text(node):
        return Translator(layout).expr(node, None)

    offset = 1 if checked.soundings.levels_table is not None else 0
    if found.network is not None and any(ch.place.kind != "levels" for ch in changes):
        name, cells = _stations_copy(workbook, checked, found.network, variant, changes,
                                     offset, amount_text)
        sources["div"] = lambda level, name=name, cells=cells: f"'{name}'!{cells[level]}"
        if found.live is None:  # the column's T, Td, ... are the stations' means
            placed = [replace(p, sheet=name) for p in placed_soundings(workbook, checked, None)
                      if p.sheet == "stations"]
            sources.update(station_means(placed, found.used, len(cells)))
    if found.live is not None and any(ch.place.kind == "levels" for ch in changes):
        name, places = _levels_copy(workbook, checked, found.live, variant, changes,
                                    amount_text)
        sources.update(level_sources(places, found.live, name)[1])
    formulas = ColumnFormulas(base.column, base.cut, base.pressure, sources, base.surface)
    for column, values in rebuilt_inputs(checked, variant.name).items():
        if column in sources:
            variant.sources[column] = [(formulas.layer_si(column, k), float(value))
                                       for k, value in enumerate(values)]


def _stations_copy(workbook, checked, network, variant, changes, offset, amount_text):
    """`stations_<scenario>`: (its name, the cells of its fitted divergence per level)."""
    from layercalc.formats.xlsx.stations import GEOMETRY_HEADER_ROW, SHEET, stations_sheet

    name = _sheet_name(workbook, SHEET, variant.name)
    ws = workbook.create_sheet(name)
    tables: list = []  # the layout is the base sheet's, cell for cell
    cells = stations_sheet(ws, checked, network, tables, printed=False)
    put_notes(ws, (f"Scenario {variant.name} (a hidden sheet, not printed): the stations as the "
                "scenario changes them. Every value links to the same cell of 'stations'; a "
                "changed one (shaded) replays the scenario's change on it, reading the "
                f"what-if cells through '{variant.sheet_name}'.",
                "The fit is this scenario's own: edit a wind on 'stations' or a what-if cell "
                f"in 'settings' and it, the inputs of '{variant.sheet_name}' and the results "
                "follow.", "Rows and columns are those of 'stations', cell for cell."))
    first = GEOMETRY_HEADER_ROW + 1
    for r in range(first, first + len(network[0])):  # network: (station nodes, details)
        for c in range(2, 7):  # latitude, longitude, x, y, north angle
            ws.cell(r, c).value = f"='{SHEET}'!{letter(c)}{r}"
    soundings = checked.soundings.station_soundings
    for i, ((first_row, names), sounding) in enumerate(zip(tables, soundings)):
        _replay(ws, SHEET, changes, offset + i, sounding, first_row, names, amount_text)
    _hide(ws)
    return name, cells


def _levels_copy(workbook, checked, live, variant, changes, amount_text):
    """`levels_<scenario>`: (its name, name -> (column letter, unit) of each heading)."""
    from layercalc.formats.xlsx.levels import HEADER_ROW, SHEET, levels_sheet

    name = _sheet_name(workbook, SHEET, variant.name)
    ws = workbook.create_sheet(name)
    places = levels_sheet(ws, live)
    put_notes(ws, (f"Scenario {variant.name} (a hidden sheet, not printed): the levels as the "
                "scenario changes them. Every value links to the same cell of 'levels'; a "
                "changed one (shaded) replays the scenario's change on it, reading the "
                f"what-if cells through '{variant.sheet_name}'.",
                f"The layer means of '{variant.sheet_name}' are formulas of this sheet."))
    _replay(ws, SHEET, changes, 0, checked.soundings.levels_table, HEADER_ROW + 1,
            [h.name for h in live.table.headings], amount_text)
    _hide(ws)
    return name, places


def _hide(ws) -> None:
    """Hidden and not printed (see the module docstring)."""
    ws.sheet_state = "hidden"
