"""Where everything goes on a results sheet: a grid of entries, each with its live formula
and the number layercalc computed, so that the live sheet (`results`) and its plain-number
twin (`values`) are written from one model, cell for cell in the same place.

Results sheet layout (rows are sheet rows):
    1  title                          2  caution (layercalc.caution.CAUTION)
    3  what the sheet is              4  group labels (inputs, derived, helpers)
    5  header `name [unit]`           6.. one row per layer, the SURFACE LAYER FIRST
    then, after a blank row: the cells block `cell | value | unit | formula or note`
    (input cells, derived cells, then values that are not formulas), its notes wrapped
    over the printed columns; the charts below it, on a page of their own.
Columns: the input columns (linked to the `layers` sheet, or the scenario's own values),
the derived columns in dependency order, a blank column, then helper columns in SI units
and, after another blank column, the chart data (live, in the layer rows): only the
table and the cells block are printed, so that they fit one readable page.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from layercalc.formats.xlsx.cells import letter
from layercalc.formats.xlsx.entries import ChartSpec, Entry, Grid
from layercalc.formats.xlsx.summary_cells import summary_rows, table_check
from layercalc.language import units as U
from layercalc.language.typed import CELL, COLUMN
from layercalc.formats.xlsx.formulas import (
    stepped,
    MAX_FORMULA_LENGTH, Translator, display_input, from_si, input_format, number_format,
    to_si,
    untranslatable,
)

HEADER_ROW = 5
FIRST_ROW = 6
CHART_UNITS = {"pressure": U.Unit(U.PRESSURE, 100.0, 0.0, "hPa"),
               "omega": U.Unit(U.PRESSURE / U.time, 100.0 / 3600.0, 0.0, "hPa/h"),
               "divergence": U.Unit(1 / U.time, 1e-5, 0.0, "1e-5 s^-1")}


@dataclass
class Links:
    """Where a variant's inputs live on the `layers` and `settings` sheets, and the base
    values: an input equal to the base is a live link, a changed one a shaded value."""

    column_letters: dict  # input column name -> letter on `layers`
    first_row: int        # row of the surface layer on `layers`
    cell_rows: dict       # input cell name -> row on `settings`
    columns_si: dict      # base input columns, SI
    cells_si: dict        # base input cells, SI


@dataclass
class Variant:
    """The base sheet or one scenario, evaluated."""

    name: str
    sheet_name: str
    values_name: str
    checked: object   # CheckedSheet the formulas come from
    evaluation: object
    index: int
    columns: dict     # SI (L,) per column name, inputs included
    cells: dict       # SI per cell name
    summary: dict
    description: str = ""
    steps: dict = field(default_factory=dict)  # input column -> per-layer changes, or None
    # input column -> per layer (SI formula text, SI value) it is rebuilt from, before the
    # steps: a scenario's own stations or levels sheet (scenario_soundings.py)
    sources: dict = field(default_factory=dict)


def input_cell_rows(checked) -> dict[str, int]:
    """The row of each input cell in a results sheet's cells block (column B)."""
    first = FIRST_ROW + checked.layer_count + 2
    return {name: first + i for i, name in enumerate(checked.input_cells)}


def source_text(node) -> str:
    span = node.meta.span
    return span.source.text[span.start:span.end].strip()


class ResultsLayout:
    """Builds the results grid of one variant; is the translator's Layout."""

    def __init__(self, variant: Variant, links: Links, title: str, caution: str) -> None:
        self.variant = variant
        self.links = links
        self.checked = variant.checked
        self.grid = Grid(variant.sheet_name, variant.values_name)
        self.layers = self.checked.layer_count
        self.first_row = FIRST_ROW
        self.header_row = HEADER_ROW
        self.last_row = FIRST_ROW + self.layers - 1
        self.columns: dict[str, tuple[str, object]] = {}
        self.cells: dict[str, tuple[str, object]] = {}
        self.helpers: dict[tuple, str] = {}
        self.helper_nodes: dict[int, tuple] = {}  # id(node) -> (node, column letter)
        self.title = title
        self.caution = caution
        self._environment = None
        self._broadcast: dict[str, np.ndarray] = {}
        self._formats: dict[tuple, str] = {}

    # -- the Layout protocol --------------------------------------------------------
    def column_place(self, name: str):
        return self.columns[name]

    def cell_place(self, name: str):
        return self.cells[name]

    def helper(self, node, translator: Translator) -> str:
        # A running sum asks for its helper once per row: the same node object gets the
        # same column without translating every row again (that made export quadratic).
        known = self.helper_nodes.get(id(node))
        if known is not None and known[0] is node:
            return known[1]
        rows = range(self.first_row, self.last_row + 1)
        texts = tuple(translator.expr(node, row) for row in rows)
        if texts in self.helpers:
            self.helper_nodes[id(node)] = (node, self.helpers[texts])
            return self.helpers[texts]
        column = self.next_helper
        self.next_helper += 1
        self.helpers[texts] = letter(column)
        self.helper_nodes[id(node)] = (node, letter(column))
        values = self._evaluate(node)
        self.grid.put(HEADER_ROW, column, Entry(
            f"helper: {source_text(node)} [{U.si_unit_text(node.meta.dimension)}]", style="header",
            comment="intermediate values in SI units, for aggregates and running sums"))
        fmt = number_format(values)
        for row, text, value in zip(rows, texts, values):
            self.grid.put(row, column, Entry(float(value), text, "helper", fmt))
        return letter(column)

    def _evaluate(self, node) -> np.ndarray:
        from layercalc.evaluation.engine import Environment  # the evaluator's own walk, for helper values

        evaluation = self.variant.evaluation
        if self._environment is None:
            self._environment = Environment(evaluation.columns, evaluation.cells, self.layers)
        with np.errstate(all="ignore"):
            value = np.asarray(self._environment.run(node), dtype=float)
        value = np.broadcast_to(value, (value.shape[0], self.layers))
        return value[min(self.variant.index, value.shape[0] - 1)]

    # -- building ----------------------------------------------------------------------
    def build(self) -> Grid:
        checked, grid = self.checked, self.grid
        inputs = list(checked.input_columns)
        derived = [f for f in checked.formulas if f.kind == COLUMN]
        for j, name in enumerate(inputs, start=1):
            self.columns[name] = (letter(j), checked.input_columns[name].unit)
        for j, formula in enumerate(derived, start=len(inputs) + 1):
            self.columns[formula.name] = (letter(j), formula.unit)
        self.next_helper = len(inputs) + len(derived) + 2
        rows = input_cell_rows(checked)
        for name, cell in checked.input_cells.items():
            self.cells[name] = (f"$B${rows[name]}", cell.unit)
        cell_row = self.last_row + 3 + len(rows)
        for formula in checked.formulas:
            if formula.kind == CELL:
                self.cells[formula.name] = (f"$B${cell_row}", formula.unit)
                grid.cell_rows[formula.name] = cell_row
                cell_row += 1
        self._top(len(inputs), len(derived))
        translator = Translator(self)
        self._input_columns(inputs)
        for j, formula in enumerate(derived, start=len(inputs) + 1):
            self._derived_column(j, formula, translator)
        row = self._cells(translator)
        row = summary_rows(self, row + 1)
        self._chart_data(row + 2)
        grid.freeze = f"C{FIRST_ROW}"
        grid.print_columns = len(inputs) + len(derived)
        return grid

    def _top(self, n_inputs: int, n_derived: int) -> None:
        grid, variant = self.grid, self.variant
        title = self.title or "layercalc column diagnostics"
        if variant.name != "base":
            title += f" - scenario {variant.name}"
        grid.put(1, 1, Entry(title, style="title"))
        grid.put(2, 1, Entry(self.caution, style="caution"))
        grid.put(3, 1, Entry(self._explanation(), style="wrapped"))
        grid.wrapped[3] = (1, None)
        grid.put(4, 1, Entry("inputs", style="group"))
        first_input = self.links.column_letters.get("p_bottom")
        if first_input:
            formula, ok, _ = table_check(first_input, self.layers, "'layers'!")
            wide = n_inputs > 2  # wrapped over the input columns, beside the group labels
            grid.put(4, 2, Entry(ok, formula, "wrapped_check" if wide else "check"))
            if wide:
                grid.wrapped[4] = (2, n_inputs)
            grid.row_check = (4, 2, first_input, self.layers)
        grid.put(4, n_inputs + 1, Entry("derived (live formulas)", style="group"))
        if n_derived:
            grid.put(4, n_inputs + n_derived + 2, Entry("helpers (SI units)", style="group"))

    def _explanation(self) -> str:
        if self.variant.name == "base":
            return ("Live formulas. Inputs link to the sheets layers and settings: edit them "
                    "there and this sheet recalculates. Surface layer first (row "
                    f"{FIRST_ROW}). The sheet '{self.variant.values_name}' holds the same "
                    "numbers as plain values.")
        text = (f"Scenario {self.variant.name}" +
                (f": {self.variant.description}" if self.variant.description else "") +
                ". Inputs equal to the base link to layers/settings; inputs the scenario "
                "changes are shaded values. Surface layer first.")
        return text

    def _input_columns(self, inputs: list[str]) -> None:
        grid, checked, links = self.grid, self.checked, self.links
        for j, name in enumerate(inputs, start=1):
            unit = checked.input_columns[name].unit
            grid.put(HEADER_ROW, j, Entry(f"{name} [{unit.text}]", style="header"))
            si = self.variant.columns[name]
            base = links.columns_si.get(name)
            values = [display_input(unit, float(v)) for v in si[:self.layers]]
            fmt = input_format(values)
            for k, value in enumerate(values):
                entry = self._input_entry(name, k, unit, value, base, si)
                entry.number_format = fmt
                grid.put(FIRST_ROW + k, j, entry)

    def _input_entry(self, name, k, unit, value, base, si) -> Entry:
        """A live link to `layers` when unchanged; the base link with the scenario's steps
        when they reproduce its value exactly; else the scenario's value, shaded."""
        links = self.links
        if base is None or name not in links.column_letters:
            return Entry(value, None, "changed", comment=f"set by scenario {self.variant.name}")
        source = f"'layers'!{links.column_letters[name]}{links.first_row + k}"
        comment = f"changed by scenario {self.variant.name}"
        rebuilt = self.variant.sources.get(name)
        if rebuilt is None:
            if base[k] == si[k]:
                return Entry(value, source, "input")
            start_text, start = to_si(source, unit), float(base[k])
        else:  # from the scenario's own stations or levels sheet
            start_text, start = rebuilt[k]
            comment += " (its changed soundings)"
            if name not in self.variant.steps and start == si[k]:
                return Entry(value, from_si(start_text, unit), "changed", comment=comment)
        steps = (self.variant.steps.get(name) or [None] * self.layers)[k]
        if steps:
            row = FIRST_ROW + k
            text, got = stepped(start_text, start, steps,
                                lambda node: Translator(self).expr(node, row),
                                lambda node: float(self._evaluate(node)[k]))
            comment += ": " + "; ".join(dict.fromkeys(step[2] for step in steps))
            if got == si[k]:
                return Entry(value, from_si(text, unit), "changed", comment=comment)
        elif rebuilt is not None and start == si[k]:
            return Entry(value, from_si(start_text, unit), "changed", comment=comment)
        return Entry(value, None, "changed", comment=comment + " (written as a value)")

    def _derived_column(self, j: int, formula, translator: Translator) -> None:
        grid = self.grid
        grid.put(HEADER_ROW, j, Entry(f"{formula.name} [{formula.unit.text}]",
                                      style="header", comment=formula.source_text))
        values = formula.unit.from_si(np.broadcast_to(self.variant.columns[formula.name],
                                                       (self.layers,)))
        fmt = number_format(values)
        reason = untranslatable(formula)
        for k in range(self.layers):
            row = FIRST_ROW + k
            text = None if reason else translator.formula(formula, row)
            grid.put(row, j, self._formula_entry(text, float(values[k]), fmt, reason))

    def _formula_entry(self, text: str | None, value: float, fmt: str,
                       reason: str | None = None) -> Entry:
        """A live formula, or the value with a note saying why it is not one."""
        if text is not None and len(text) + 1 > MAX_FORMULA_LENGTH:
            reason = f"the formula is longer than {MAX_FORMULA_LENGTH} characters"
        if reason:
            return Entry(value, None, "static", fmt,
                         comment=f"{reason}: written as a value computed by layercalc")
        return Entry(value, text, "derived", fmt)

    def _cells(self, translator: Translator) -> int:
        grid, checked, links = self.grid, self.checked, self.links
        row = self.last_row + 2
        for j, text in enumerate(("cell", "value", "unit", "formula or note"), start=1):
            grid.put(row, j, Entry(text, style="header"))
        grid.wrapped[row] = (4, None)  # the note column's header over the notes' width
        for name, cell in checked.input_cells.items():
            row += 1
            si = self.variant.cells[name]
            value = display_input(cell.unit, si)
            if name in links.cell_rows and links.cells_si.get(name) == si:
                entry = Entry(value, f"'settings'!$B${links.cell_rows[name]}", "input")
                note = "input: edit it on the settings sheet"
            else:
                entry = Entry(value, None, "changed")
                note = f"input set by scenario {self.variant.name}"
            entry.number_format = input_format([value])
            self._cell_row(row, name, entry, cell.unit.text, note)
        for formula in checked.formulas:
            if formula.kind != CELL:
                continue
            row += 1
            value = float(formula.unit.from_si(self.variant.cells[formula.name]))
            reason = untranslatable(formula)
            text = None if reason else translator.formula(formula, None)
            entry = self._formula_entry(text, value, number_format([value]), reason)
            note = formula.source_text if entry.formula else \
                f"{entry.comment}. {formula.source_text}"
            self._cell_row(row, formula.name, entry, formula.unit.text, note)
        return row

    def put_cell_row(self, row, name, entry, unit_text, note) -> None:
        """A row of the cells block: name | value | unit | formula or note."""
        self.grid.cell_rows.setdefault(name, row)
        self._cell_row(row, name, entry, unit_text, note)

    def _cell_row(self, row, name, entry, unit_text, note) -> None:
        grid = self.grid
        grid.put(row, 1, Entry(name, style="name"))
        grid.put(row, 2, entry)
        grid.put(row, 3, Entry(unit_text, style="unit"))
        grid.put(row, 4, Entry(note, style="wrapped"))
        grid.wrapped[row] = (4, None)

    def _chart_data(self, chart_row: int) -> None:
        """Live chart data: omega at the layer interfaces and divergence at mid-layer, in
        fixed units (hPa, hPa/h, 1e-5 s^-1) so that the chart's axis titles hold; beside
        the helper columns, outside the print area. The charts go to `chart_row`, the
        first row of a page of their own."""
        have = set(self.columns)
        if not {"p_bottom", "p_top", "omega_bottom", "omega_top", "p_mid", "div"} <= have:
            return
        grid = self.grid
        labels = ("interface p [hPa]", "omega [hPa/h]", "", "p_mid [hPa]",
                  "div [1e-5 s^-1]", "div_adjusted [1e-5 s^-1]")
        c0 = self.next_helper  # one blank column after the helpers
        grid.put(HEADER_ROW - 1, c0 + 1, Entry("chart data (live)", style="group"))
        for j, text in enumerate(labels, start=c0 + 1):
            if text:
                grid.put(HEADER_ROW, j, Entry(text, style="header"))
        first = FIRST_ROW
        pressure, omega, divergence = (CHART_UNITS[k] for k in ("pressure", "omega",
                                                                  "divergence"))
        for k in range(self.layers + 1):
            top = k == self.layers
            source_row = FIRST_ROW + min(k, self.layers - 1)
            p_name, w_name = ("p_top", "omega_top") if top else ("p_bottom", "omega_bottom")
            self._link(first + k, c0 + 1, p_name, source_row, pressure)
            self._link(first + k, c0 + 2, w_name, source_row, omega)
        for k in range(self.layers):
            self._link(first + k, c0 + 4, "p_mid", FIRST_ROW + k, pressure)
            self._link(first + k, c0 + 5, "div", FIRST_ROW + k, divergence)
            if "div_adjusted" in have:
                self._link(first + k, c0 + 6, "div_adjusted", FIRST_ROW + k, divergence)
        bottom = max(float(self.variant.columns["p_bottom"][0]), 1.0) / 100.0
        top = float(self.variant.columns["p_top"][-1]) / 100.0
        series = [("omega [hPa/h]", c0 + 2, c0 + 1, first, first + self.layers),
                  ("div [1e-5 s^-1]", c0 + 5, c0 + 4, first, first + self.layers - 1)]
        if "div_adjusted" in have and self.checked.options.get("adjust", "none") != "none":
            series.append(("div_adjusted [1e-5 s^-1]", c0 + 6, c0 + 4, first,
                           first + self.layers - 1))
        grid.chart = ChartSpec("omega and divergence against pressure", series,
                               "omega [hPa/h], divergence [1e-5 s^-1]", "pressure [hPa]",
                               (math.floor(top / 100.0) * 100.0,
                                math.ceil(bottom / 100.0) * 100.0),
                               f"A{chart_row}")
        grid.chart_row = chart_row

    def _column_si(self, name: str) -> np.ndarray:
        found = self._broadcast.get(name)
        if found is None:
            found = self._broadcast[name] = np.broadcast_to(self.variant.columns[name],
                                                            (self.layers,))
        return found

    def _link(self, row: int, column: int, name: str, source_row: int, unit) -> None:
        source_letter, source_unit = self.columns[name]
        column_si = self._column_si(name)
        fmt = self._formats.get((name, unit.text))
        if fmt is None:  # one format for the chart column, from all of its values
            fmt = self._formats[(name, unit.text)] = number_format(unit.from_si(column_si))
        si = float(column_si[source_row - FIRST_ROW])
        text = from_si(to_si(f"{source_letter}{source_row}", source_unit), unit)
        self.grid.put(row, column, Entry(float(unit.from_si(si)), text, "derived", fmt))
