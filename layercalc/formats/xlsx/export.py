"""Checked sheet -> .xlsx workbook whose results are live spreadsheet formulas.

Sheets, in order:
    layers            inputs, header `name [unit]`, one row per layer, surface layer first
    levels            a live levels table only (levels.py): the levels as typed; every
                      column of `layers` is then a formula of them
    stations          a live station network only (stations.py): positions, winds as
                      typed, the fit per level; `layers`' div is then its formula
    hydrostatic       with a live levels or stations sheet: the hydrostatic check of each
                      sounding with T and z, live (hydrostatic.py)
    settings          `name | value | unit | note`: title, notes, options, input cells
    results           every derived column and cell as a live formula (xlsx_layout.py)
    results_<name>    one per scenario, with its own input block (changed inputs shaded)
    compare           key cells of the base and each scenario, and their differences
    values, values_<name>, values_compare
                      the same layouts as plain numbers (hidden sheets)
    uncertainty       with an error model only: sigmas as values (not live) and the
                      propagation a spreadsheet can hold as live formulas (uncertainty.py)
    formulas          user formulas and scenario blocks in the layers language (re-imported)
    notes             title, notes, boundary condition, formulas, references, version, caution
Each results sheet ends with two scatter charts (omega, and divergence, against pressure
on a reversed log axis) on a page of their own; every sheet has a print setup
(printing.py), the values twins are hidden. The summary diagnostics are live formulas
(summary_cells.py); a check cell on `layers` and on each results sheet turns red when the
table has more or fewer rows than the formulas cover. The cells of the results, values and compare sheets are written as XML
(sheetxml.py), in time linear in the number of cells; the rest goes through openpyxl. The
file is written to a temporary file beside the target, then renamed.
"""

from __future__ import annotations

import math
from pathlib import Path

from layercalc.errors import OutputError
from layercalc.language.typed import CELL, references
from layercalc.formats.xlsx.cells import letter, put_text, red_when, size_columns, style
from layercalc.formats.xlsx.formulas import display_input, input_format
from layercalc.formats.xlsx.layout import HEADER_ROW, Grid, Links, ResultsLayout, Variant
from layercalc.formats.xlsx.scenarios import compare_grid, scenario_steps

MAX_SHEET_NAME = 31  # Excel's limit on sheet names


def write_workbook(sheet, path) -> None:
    """Write `sheet` (a layercalc.Sheet) to `path` as an .xlsx workbook, atomically.

    Raises OutputError (with the path) if the target cannot be written; never leaves a
    partly written file at `path`."""
    path = Path(path)
    if path.is_dir():
        raise OutputError(f"cannot write the workbook: {path} is a folder", location=str(path),
                          hint="give a file name ending in .xlsx")
    save_atomic(build_workbook(sheet), path)


def variants(sheet) -> list[Variant]:
    """The base and every scenario of `sheet`, evaluated."""
    results = [("base", sheet.evaluate())]
    results += [(name, sheet.evaluate(scenario=name)) for name in sheet.scenarios]
    described = _scenario_descriptions(sheet.checked)
    taken = {"results", "values", "compare", "values_compare", "layers", "settings",
             "formulas", "notes", "stations", "levels", "hydrostatic"}
    out = []
    for name, result in results:
        if name == "base":
            sheet_name, values_name = "results", "values"
        else:
            sheet_name = _unique(f"results_{name}", taken)
            values_name = _unique(f"values_{name}", taken)
        steps = scenario_steps(sheet.checked, name) if name in sheet.scenarios else {}
        out.append(Variant(name, sheet_name, values_name, result.sheet, result.evaluation,
                           result.index, result.si_columns, result.si_cells, result.summary,
                           described.get(name, ""), steps))
    return out


def build_workbook(sheet) -> "Built":
    """The workbook for `sheet` (see the module docstring for its layout): the openpyxl
    Workbook with the large sheets' cells kept aside as XML (Built)."""
    from openpyxl import Workbook

    from layercalc.version import __version__
    from layercalc.caution import CAUTION

    checked = sheet.checked
    found = variants(sheet)
    base = found[0]
    workbook = Workbook()
    layers = workbook.active
    layers.title = "layers"
    from layercalc.formats.xlsx.scenario_soundings import live_inputs

    live = live_inputs(workbook, checked, found)  # stations or levels sheets, when live
    letters = _layers_sheet(layers, checked, base.columns, live)
    settings_rows = _settings_sheet(workbook.create_sheet("settings"), checked, base.cells)
    links = Links(letters, 2, settings_rows,
                  {n: base.columns[n] for n in checked.input_columns},
                  {n: base.cells[n] for n in checked.input_cells})
    grids = [ResultsLayout(v, links, checked.title, CAUTION).build() for v in found]
    if len(found) > 1:
        grids.append(compare_grid(grids[0], found, grids[:len(found)], CAUTION))
    from layercalc.formats.xlsx.sheetxml import StyleIndex

    styles = StyleIndex(workbook)
    cells = {}
    live_sheets = [workbook.create_sheet(grid.name) for grid in grids]
    value_sheets = [workbook.create_sheet(grid.values_name) for grid in grids]
    for grid, live, values in zip(grids, live_sheets, value_sheets):
        note = (f"Plain numbers computed by layercalc {__version__}, cell for cell as on "
                f"the sheet '{grid.name}', for viewers that do not recalculate. " + CAUTION)
        cells[live.title], cells[values.title] = _write_grid(live, values, grid, styles, note)
    from layercalc.formats.xlsx.uncertainty import uncertainty_sheet

    uncertainty_sheet(workbook, sheet, links)  # only with an error model
    _formulas_sheet(workbook.create_sheet("formulas"), checked, set(settings_rows))
    from layercalc.formats.xlsx.notes import notes_sheet
    from layercalc.formats.xlsx.printing import page_setup, wrap_columns

    notes_sheet(workbook.create_sheet("notes"), checked, found, __version__, CAUTION)
    page_setup(layers, CAUTION, "1:1")
    page_setup(workbook["settings"], CAUTION, "1:1")
    for name in ("stations", "levels"):  # hydrostatic.py sets up its own sheet
        if name in workbook.sheetnames:
            page_setup(workbook[name], CAUTION)
    wrap_columns(workbook["settings"], {1: 18, 2: 30, 3: 12, 4: 70},
                 workbook["settings"].max_row)  # all top aligned: names beside values
    page_setup(workbook["formulas"], CAUTION, "1:1")
    wrap_columns(workbook["formulas"], {1: 100}, workbook["formulas"].max_row)
    page_setup(workbook["notes"], CAUTION)
    if "uncertainty" in workbook.sheetnames:
        page_setup(workbook["uncertainty"], CAUTION)
    from openpyxl.workbook.defined_name import DefinedName

    from layercalc.formats.xlsx.summary_cells import CHECK_NAME

    # the layer count the formulas cover, for the reader (a row added in the workbook)
    workbook.defined_names[CHECK_NAME] = DefinedName(CHECK_NAME,
                                                     attr_text=str(checked.layer_count))
    workbook.active = workbook.sheetnames.index("results")
    return Built(workbook, cells)


class Built:
    """The openpyxl workbook and the cells of its large sheets, written as XML on save
    (sheet title -> (sheetData xml, dimension))."""

    def __init__(self, workbook, cells: dict[str, tuple[str, str]]) -> None:
        self.workbook = workbook
        self.cells = cells

    def to_bytes(self) -> bytes:
        import io

        from layercalc.formats.xlsx.sheetxml import fill_saved

        buffer = io.BytesIO()
        self.workbook.save(buffer)
        parts = {self.workbook[title].path.lstrip("/"): xml
                 for title, xml in self.cells.items()}
        return fill_saved(buffer.getvalue(), parts)


# ---------------------------------------------------------------- input sheets
def _layers_sheet(ws, checked, columns_si, live=None) -> dict[str, str]:
    """The inputs; `live(name, k, unit)` gives a formula for an input computed from a
    stations or levels sheet (scenario_soundings.live_inputs), or None for a plain value."""
    letters = {}
    for j, (name, column) in enumerate(checked.input_columns.items(), start=1):
        letters[name] = letter(j)
        put_text(ws.cell(1, j), f"{name} [{column.unit.text}]")
        style(ws.cell(1, j), "header")
        shown = [display_input(column.unit, float(si)) for si in columns_si[name]]
        fmt = input_format(shown)  # display only: values and formulas are stored in full
        for k, value in enumerate(shown):
            formula = live and live(name, k, column.unit)
            ws.cell(2 + k, j, formula or value).number_format = fmt
    lines = ("One row per layer, SURFACE LAYER FIRST (row 2 is the lowest layer).", None,
             "Header: name [unit]. Edit the values here and the results sheets recalculate.",
             "The table ends at the first blank header cell.",
             "The results sheets' formulas cover the rows exported: after adding or removing",
             "a layer, export again (the check in row 2 turns red until then).")
    for row, text in enumerate(lines, start=1):
        if text:
            note = ws.cell(row, len(letters) + 2)
            put_text(note, text)
            style(note, "note")
    if "p_bottom" in letters:
        from layercalc.formats.xlsx.summary_cells import table_check

        formula, _, condition = table_check(letters["p_bottom"], checked.layer_count)
        check = ws.cell(2, len(letters) + 2)
        check.value = "=" + formula
        style(check, "check")
        red_when(ws, check.coordinate, condition)
    size_columns(ws, {j: max(12, len(ws.cell(1, j).value) + 2) for j in range(1, len(letters) + 1)})
    ws.freeze_panes = "A2"
    return letters


def settings_cells(checked) -> list[str]:
    """Input cells written on the settings sheet: those the defaults may read and those a
    formula reads. The others (read by nothing) go on the formulas sheet."""
    from layercalc.formats.xlsx.reader import KNOWN_CELLS

    from layercalc.formats.xlsx.scenarios import scenario_cells

    read = {name for f in checked.formulas for shape, name in references(f.expr)
            if shape == CELL} | scenario_cells(checked)
    return [n for n in checked.input_cells if n in KNOWN_CELLS or n in read]


def _settings_sheet(ws, checked, cells_si) -> dict[str, int]:
    from layercalc.language.defaults import OPTIONS

    rows: list[tuple] = [("name", "value", "unit", "note")]
    if checked.title:
        rows.append(("title", checked.title, "", ""))
    rows += [("note", text, "", "") for text in checked.notes]
    option_rows = {}
    for option in OPTIONS:
        option_rows[option] = len(rows) + 1
        rows.append((option, checked.options[option], "",
                     "LOCKED: this option chooses which formulas the results sheets hold; "
                     "to change it, edit the .layers file and export again (choices: "
                     + ", ".join(OPTIONS[option]) + ")"))
    cell_rows = {}
    for name in settings_cells(checked):
        cell = checked.input_cells[name]
        cell_rows[name] = len(rows) + 1
        rows.append((name, display_input(cell.unit, cells_si[name]), cell.unit.text,
                     "input cell" if cell.given else "default: not given in the file"))
    for i, row in enumerate(rows, start=1):
        for j, value in enumerate(row, start=1):
            target = ws.cell(i, j)
            if isinstance(value, str):
                put_text(target, value)
            else:
                target.value = value
                target.number_format = input_format([value])
            style(target, "header" if i == 1 else {3: "unit", 4: "note"}.get(j, "value"))
    size_columns(ws, {1: 18, 2: 40, 3: 12, 4: 70})
    ws.freeze_panes = "A2"
    _lock_options(ws, option_rows, len(rows), checked.options)
    return cell_rows


def _lock_options(ws, option_rows: dict[str, int], last_row: int, options) -> None:
    """The option cells cannot be edited (the sheet is protected, without a password, and
    only the option values are locked) and accept only their exported value: the formulas
    were written for that choice, and a changed option would leave every result stale."""
    from openpyxl.styles import Protection
    from openpyxl.worksheet.datavalidation import DataValidation

    locked = set(option_rows.values())
    for row in range(1, last_row + 1):
        for column in range(1, 5):
            if not (column == 2 and row in locked):
                ws.cell(row, column).protection = Protection(locked=False)
    for option, row in option_rows.items():
        check = DataValidation(
            type="list", formula1=f'"{options[option]}"', allow_blank=False,
            showErrorMessage=True, errorTitle=f"{option} is fixed at export",
            error=f"The results were written for {option} = {options[option]}. Edit the "
                  ".layers file and export again to change it.")
        check.add(ws.cell(row, 2))
        ws.add_data_validation(check)
    protection = ws.protection
    protection.sheet = True
    protection.formatCells = protection.formatColumns = protection.formatRows = False
    protection.insertRows = protection.deleteRows = False


def _formulas_sheet(ws, checked, in_settings: set[str]) -> None:
    rows = [(f.source_text, "user formula") for f in checked.formulas if not f.default]
    for name, cell in checked.input_cells.items():
        if name not in in_settings and cell.given:
            value = display_input(cell.unit, cell.value)
            rows.append((f"cell {name} = {value!r} [{cell.unit.text}]",
                         "input cell read by no formula"))
    for text in scenario_texts(checked):
        rows += [(line, "scenario") for line in text.splitlines()]
    put_text(ws.cell(1, 1), "definition (layers language; read back on import)")
    put_text(ws.cell(1, 2), "what")
    style(ws.cell(1, 1), "header")
    style(ws.cell(1, 2), "header")
    for i, (text, what) in enumerate(rows, start=2):
        put_text(ws.cell(i, 1), text)
        put_text(ws.cell(i, 2), what)
        style(ws.cell(i, 2), "note")
    size_columns(ws, {1: 90, 2: 30})


def scenario_texts(checked) -> list[str]:
    """Each scenario block of the source, as written."""
    from layercalc.language.nodes import Scenario

    document = checked.document
    if document is None:
        return []
    return [s.span.source.text[s.span.start:s.span.end].strip()
            for s in document.statements if isinstance(s, Scenario)]


def _scenario_descriptions(checked) -> dict[str, str]:
    from layercalc.language.nodes import Scenario

    document = checked.document
    if document is None:
        return {}
    return {s.name: s.description for s in document.statements if isinstance(s, Scenario)}


def _unique(name: str, taken: set[str]) -> str:
    name = name[:MAX_SHEET_NAME]
    candidate, i = name, 2
    while candidate.lower() in taken:
        suffix = f"_{i}"
        candidate = name[:MAX_SHEET_NAME - len(suffix)] + suffix
        i += 1
    taken.add(candidate.lower())
    return candidate


# ---------------------------------------------------------------- writing grids
def _write_grid(live_ws, values_ws, grid: Grid, styles, note: str) -> tuple:
    """Lay out the live sheet and its plain-number twin for `grid` (widths, panes, chart,
    comments) and return the cells of each as (sheetData xml, dimension), put into the
    saved file by sheetxml.fill_saved: one pass over the entries, no openpyxl object per
    cell. The twin has the note in A3 instead of the sheet's explanation, values instead
    of formulas, and no cell comments."""
    from openpyxl.comments import Comment

    from layercalc.formats.xlsx import sheetxml as X

    live_rows: dict[int, list] = {}
    value_rows: dict[int, list] = {}
    letters: dict[int, str] = {}
    widths: dict[int, int] = {}
    numbers: dict[int, dict] = {}  # column -> {(decimals, scientific): largest magnitude}
    known = styles.known
    from layercalc.formats.xlsx import printing

    wrap_headers = grid.print_columns or 0  # a results table's headers wrap at their spaces
    decimals_of: dict = {}  # number format -> decimals shown
    last_row = last_column = 1
    for (row, column), entry in grid.entries.items():
        column_letter = letters.get(column)
        if column_letter is None:
            column_letter = letters[column] = letter(column)
        reference = f"{column_letter}{row}"
        text = entry.value
        fmt = entry.number_format
        if type(text) is float and math.isfinite(text):  # most cells: a finite number
            style_id = known.get((entry.style, fmt, False))
            if style_id is None:
                style_id = styles(entry.style, fmt, False)
            shown = repr(text)
            value_xml = f'<c r="{reference}" s="{style_id}"><v>{shown}</v></c>'
            formula = entry.formula
            if formula is None:
                live_xml = value_xml
            else:
                if "&" in formula or "<" in formula or ">" in formula:
                    formula = X.escape(formula)
                live_xml = f'<c r="{reference}" s="{style_id}"><f>{formula}</f><v>{shown}</v></c>'
            if row >= HEADER_ROW and entry.style not in NOTES:
                shape = decimals_of.get(fmt)
                if shape is None:
                    shape = decimals_of[fmt] = _number_shape(fmt)
                size = text if text >= 0 else -10.0 * text
                found = numbers.setdefault(column, {})
                if size > found.get(shape, -1.0):
                    found[shape] = size
        else:
            is_text = isinstance(text, str)
            key = (entry.style, None, text[:1] in ("=", "+", "-", "@")) if is_text else \
                (entry.style, fmt, False)
            style_id = known.get(key)
            if style_id is None:
                style_id = styles(*key)
            if is_text:
                value_xml = X.text_cell(reference, text, style_id)
            elif text is None:
                value_xml = X.empty_cell(reference, style_id)
            else:
                value_xml = X.number_cell(reference, float(text), style_id)
            live_xml = value_xml if entry.formula is None else \
                X.formula_cell(reference, entry.formula, text, style_id)
            if row >= HEADER_ROW and entry.style not in NOTES and \
                    grid.wrapped.get(row, (0,))[0] != column:  # notes run on or wrap
                shown = printing.header_width(text) if entry.style == "header" and \
                    column <= wrap_headers else _shown_width(text, entry)
                widths[column] = max(widths.get(column, MIN_WIDTH), shown)
        if row == 3 and column == 1:
            value_xml = X.text_cell(reference, note, styles(entry.style, None, False))
        live_rows.setdefault(row, []).append((column, live_xml))
        value_rows.setdefault(row, []).append((column, value_xml))
        if row > last_row:
            last_row = row
        if column > last_column:
            last_column = column
        if entry.comment:
            live_ws.cell(row, column).comment = Comment(entry.comment, "layercalc",
                                                        width=320, height=120)
    for column, shapes in numbers.items():  # the widest number as shown, per format
        widths[column] = max(widths.get(column, MIN_WIDTH),
                             *(_shown_number(size, shape) for shape, size in shapes.items()))
    dimension = f"A1:{letter(last_column)}{last_row}"
    widths = {j: min(w + 1, 48) for j, w in widths.items()}
    printed = max(grid.print_columns or last_column, 8)
    plan = printing.page_plan(grid, widths, printed, HEADER_ROW, last_row)
    for ws in (live_ws, values_ws):
        size_columns(ws, widths)
        ws.freeze_panes = grid.freeze
        for row, (column, last) in grid.wrapped.items():  # a note wrapped over columns
            ws.merge_cells(start_row=row, start_column=column, end_row=row,
                           end_column=last or plan.last_column)
        # the caution over the printed columns, shrunk to fit
        ws.merge_cells(start_row=2, start_column=1, end_row=2, end_column=plan.last_column)
    from layercalc.caution import CAUTION

    printing.grid_print(live_ws, grid, plan, HEADER_ROW, last_row, CAUTION)
    values_ws.sheet_state = "hidden"  # the live sheet carries the same numbers, cached
    if grid.row_check is not None:
        from layercalc.formats.xlsx.summary_cells import table_check

        row, column, first_input, layers = grid.row_check
        red_when(live_ws, f"{letter(column)}{row}",
                 table_check(first_input, layers, "'layers'!")[2])
    return ((X.sheet_data(live_rows, plan.heights), dimension),
            (X.sheet_data(value_rows, plan.heights), dimension))


MIN_WIDTH = 5  # characters: a column of short numbers under a wrapped header stays narrow
NOTES = ("note", "wrapped")  # text that runs on into empty cells, or wraps over them


def _number_shape(fmt: str | None) -> tuple[int, bool]:
    """(decimals, scientific) of a number format such as "0.000" or "0.000E+00"."""
    text = fmt or "0.00"
    return text.partition(".")[2].partition("E")[0].count("0"), "E" in text


def _shown_number(size: float, shape: tuple[int, bool]) -> int:
    """Characters of a number shown with a format of `shape`; `size` is its magnitude, or
    ten times it for a negative number (a digit's room for the minus sign)."""
    decimals, scientific = shape
    if scientific:  # -d.dddE+00
        return decimals + 7
    return len(f"{size:.{decimals}f}")


def _shown_width(value, entry) -> int:
    if isinstance(value, str):
        return min(len(value), 60 if entry.style == "note" else 40)
    return 10


# ---------------------------------------------------------------- atomic write
def save_atomic(built: Built, path: Path) -> None:
    """Build the file whole in memory, then write it atomically (layercalc.files)."""
    from layercalc.files import write_atomic

    try:
        data = built.to_bytes()
    except OSError as exc:
        raise OutputError(f"cannot write {path}: {exc.strerror or exc}",
                          location=str(path)) from None
    write_atomic(path, data)
