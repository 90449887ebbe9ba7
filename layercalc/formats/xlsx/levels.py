"""The `levels` sheet of a workbook built from a top-level `levels` table: the table as
typed, and the layers sheet's inputs as live layer means of it.

Written when the sheet has one top-level `levels` table and no stations, every level has
every value the layers use (no gap to interpolate) and no `surface_pressure` cuts the
lowest layer; otherwise the workbook keeps the layer means as inputs (see README).
Layout: notes in rows 1-2; the header `name [unit]` as typed in row HEADER_ROW, then one
row per level, SURFACE FIRST, blank for a missing value (z and winds only). On `layers`,
p_bottom and p_top link to consecutive levels and every other column is the mean of its
two levels (every quantity linear in ln p: physics.levels.layers_from_levels).
"""

from __future__ import annotations

import numpy as np

from layercalc.formats.xlsx.cells import letter, put_text, style
from layercalc.formats.xlsx.formulas import from_si, to_si

SHEET = "levels"
HEADER_ROW = 4


def live_levels(checked):
    """The `levels` table node when its layer means can be live, else None."""
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
    if not np.isfinite(data[:, [names.index(n) for n in layer_names]]).all():
        return None
    if checked.layer_count != data.shape[0] - 1:
        return None
    return table


def _sorted_rows(table) -> np.ndarray:
    names = [h.name for h in table.headings]
    data = np.array(table.rows, dtype=float).reshape(len(table.rows), len(names))
    return data[np.argsort(-data[:, names.index("p")], kind="stable")]


def levels_sheet(ws, table) -> dict:
    """Fill `ws`; returns name -> (column letter, unit) of each heading, and the first row."""
    from layercalc.formats.xlsx.stations import heading_text, heading_units

    notes = ("The levels as typed, SURFACE FIRST. Edit a value here and the layer means on "
             "'layers' (the mean of each layer's two levels) and the results recalculate.",
             "Adding or removing a level needs a new export; z and the winds are read back "
             "on import (the hydrostatic check is not live).")
    for row, text in enumerate(notes, start=1):
        put_text(ws.cell(row, 1), text)
        style(ws.cell(row, 1), "note")
    units = heading_units(table)
    places = {}
    for j, heading in enumerate(table.headings, start=1):
        put_text(ws.cell(HEADER_ROW, j), heading_text(heading))
        style(ws.cell(HEADER_ROW, j), "header")
        places[heading.name] = (letter(j), units[heading.name])
    for k, row in enumerate(_sorted_rows(table)):
        for j, value in enumerate(row, start=1):
            if np.isfinite(value):
                ws.cell(HEADER_ROW + 1 + k, j, float(value))
    from layercalc.formats.xlsx.cells import size_columns

    size_columns(ws, {j: 14 for j in range(1, len(table.headings) + 1)})
    return places


def layer_formula(places: dict, name: str, k: int, unit) -> str:
    """The layers sheet's `name` of layer k (surface first) from the levels sheet."""
    row = HEADER_ROW + 1 + k
    if name in ("p_bottom", "p_top"):
        source, source_unit = places["p"]
        ref = f"'{SHEET}'!{source}{row + (name == 'p_top')}"
        return "=" + from_si(to_si(ref, source_unit), unit)
    source, source_unit = places[name]
    bottom = to_si(f"'{SHEET}'!{source}{row}", source_unit)
    top = to_si(f"'{SHEET}'!{source}{row + 1}", source_unit)
    return "=" + from_si(f"({bottom}+{top})/2", unit)


def levels_block(builder, sheet: str) -> list:
    """The `levels` table of a levels sheet (its rows as reader._RawWorkbook read them) as
    `.layers` lines of (text, sheet, cell) pieces."""
    from layercalc.formats.xlsx.stations import table_lines

    rows = builder.raw.sheets[sheet]
    return [[("levels", None, None)], *table_lines(builder, sheet, rows, HEADER_ROW),
            [("end", None, None)]]


def live_inputs(workbook, checked):
    """Add a `stations` or `levels` sheet when the sheet's inputs can be live there; returns
    `formula(name, k, unit)` for the layers sheet (None for an input kept as a value), or
    None when neither applies."""
    from layercalc.formats.xlsx.stations import (
        layer_divergence_formula, live_network, stations_sheet,
    )

    network = live_network(checked)
    if network is not None:
        cells = stations_sheet(workbook.create_sheet("stations"), checked, network)
        return lambda name, k, unit: (layer_divergence_formula(cells, k, unit)
                                      if name == "div" else None)
    table = live_levels(checked)
    if table is not None:
        places = levels_sheet(workbook.create_sheet(SHEET), table)
        return lambda name, k, unit: layer_formula(places, name, k, unit)
    return None
