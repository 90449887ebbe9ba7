"""Scenarios in a workbook: the changes a scenario makes to an input column, as steps a
live formula can repeat on the base value (`add 3 K` -> ='layers'!C9 ... +3), and the
`compare` sheet that sets the key cells of the base and each scenario side by side."""

from __future__ import annotations

import numpy as np

from layercalc.language.typed import CELL
from layercalc.formats.xlsx.cells import letter
from layercalc.formats.xlsx.layout import HEADER_ROW, Entry, Grid, Variant, number_format
from layercalc.formats.xlsx.summary_cells import summary_labels


def scenario_steps(checked, name: str) -> dict:
    """For each input column a scenario changes: per layer, the (action, amount, text)
    steps applied to the base value in order, as layercalc.evaluation.scenarios.apply_changes applies
    them; `amount` is the checked expression (numbers and input cells only). None for a
    column changed under a `where` condition or by an amount that reads an input column
    (a spreadsheet cannot replay those in place: the cells are written as values)."""
    from layercalc.checking.scenarios import chain, selection_mask
    from layercalc.language.typed import COLUMN, references

    steps: dict = {}
    layers = checked.layer_count
    for scenario in chain(checked, name):
        for change in scenario.changes:
            if change.place is not None:  # level values: see scenario_soundings.py
                continue
            per_layer = steps.setdefault(change.target, [[] for _ in range(layers)])
            if per_layer is None:
                continue
            if change.condition is not None or any(
                    shape == COLUMN for shape, _ in references(change.amount)):
                steps[change.target] = None
                continue
            for k in np.flatnonzero(selection_mask(checked, change)):
                per_layer[k].append((change.action, change.amount, change.text))
    return steps


def scenario_cells(checked) -> set[str]:
    """Input cells the scenarios' changes read (a what-if parameter such as `warming`)."""
    from layercalc.language.typed import CELL, references

    found = set()
    for scenario in checked.scenarios.values():
        for change in scenario.changes:
            for node in (change.amount, change.condition):
                if node is not None:
                    found |= {n for shape, n in references(node) if shape == CELL}
    return found


def compare_grid(base_grid: Grid, variants: list[Variant], grids: list[Grid],
                 caution: str) -> Grid:
    """Key results side by side: base, each scenario and its difference from the base,
    as live references to the results sheets (values in the twin)."""
    grid = Grid("compare", "values_compare")
    grid.put(1, 1, Entry("Scenarios compared with the base", style="title"))
    grid.put(2, 1, Entry(caution, style="caution"))
    grid.put(3, 1, Entry("Live references to the results sheets; differences are "
                         "scenario minus base (a degC difference is a K difference).",
                         style="note"))
    headers = ["cell", "unit", "base"]
    for v in variants[1:]:
        headers += [v.name, f"{v.name} - base"]
    for j, text in enumerate(headers, start=1):
        grid.put(HEADER_ROW, j, Entry(text, style="header"))
    base = variants[0]
    row = HEADER_ROW
    for formula in base.checked.formulas:
        if formula.kind != CELL:
            continue
        unit = formula.unit
        rows = [g.cell_rows.get(formula.name) for g in grids]
        units = [_cell_unit(v.checked, formula.name) for v in variants]
        if None in rows or any(u is None or u.text != unit.text for u in units):
            continue
        row += 1
        grid.put(row, 1, Entry(formula.name, style="name"))
        grid.put(row, 2, Entry(unit.text, style="unit"))
        values = [float(unit.from_si(v.cells[formula.name])) for v in variants]
        fmt = number_format(values)
        refs = [f"'{g.name}'!$B${r}" for g, r in zip(grids, rows)]
        grid.put(row, 3, Entry(values[0], refs[0], "derived", fmt))
        for i in range(1, len(variants)):
            col = 2 + 2 * i
            grid.put(row, col, Entry(values[i], refs[i], "derived", fmt))
            grid.put(row, col + 1, Entry(values[i] - values[0],
                                         f"{letter(col)}{row}-C{row}", "derived", fmt))
    for label in summary_labels(base.summary):
        rows = [g.cell_rows.get(label) for g in grids]
        if None in rows:  # e.g. a scenario with another number of levels of non-divergence
            continue
        row += 1
        grid.put(row, 1, Entry(label, style="name"))
        unit_text = "1" if label.startswith("levels_") else \
            ("hPa" if label.startswith("level_") else "m")
        grid.put(row, 2, Entry(unit_text, style="unit"))
        values = [g.entries[(r, 2)].value for g, r in zip(grids, rows)]
        fmt = grids[0].entries[(rows[0], 2)].number_format
        refs = [f"'{g.name}'!$B${r}" for g, r in zip(grids, rows)]
        grid.put(row, 3, Entry(values[0], refs[0], "derived", fmt))
        for i in range(1, len(variants)):
            col = 2 + 2 * i
            here, base_cell = f"{letter(col)}{row}", f"C{row}"
            numeric = all(isinstance(v, float) for v in (values[i], values[0]))
            grid.put(row, col, Entry(values[i], refs[i], "derived", fmt))
            grid.put(row, col + 1, Entry(
                values[i] - values[0] if numeric else "-",
                f'IF(AND(ISNUMBER({here}),ISNUMBER({base_cell})),{here}-{base_cell},"-")',
                "derived", fmt))
    grid.freeze = f"C{HEADER_ROW + 1}"
    return grid


def _cell_unit(checked, name: str):
    for formula in checked.formulas:
        if formula.kind == CELL and formula.name == name:
            return formula.unit
    return None
