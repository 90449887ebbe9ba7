""".xlsx workbook -> `.layers` text, with every problem reported as sheet!cell.

Reads layercalc's own export and hand-entered workbooks:
- sheet `layers` (or, without one, the first sheet): the first non-blank row is the header
  `name [unit]` (p_bottom, p_top, T, Td, div, and any other columns); the table ends at the
  first blank header cell (notes may follow to the right); one row per layer, surface first
  or top first; blank rows at the end are ignored. A header without a unit takes the
  layercalc default for that name (layercalc.defaults.INPUT_UNITS) and a notice says so.
- sheet `settings` (optional): rows `name | value | unit` (a first row `name | value | unit`
  is a header): title, note, the options integrate and adjust, and input cells
  (surface_height, omega_top, ...; any other name must be read by a formula).
- sheet `formulas` (optional): one line of the layers language per row in column A (user
  formulas and scenario blocks), parsed by layercalc's own parser, never evaluated as code.

The workbook is opened read-only (data_only: a formula cell gives its saved value, and an
input cell holding a formula gets a warning naming it; formulas are never evaluated) and is
never modified. The read is bounded before openpyxl sees the file (size, zip entries,
decompressed size; then `scan`: the rows and columns the sheets read declare, the shared
strings' size) and while reading (cell count, a blank row counting as one).
"""

from __future__ import annotations

import math
import re
import zipfile
import zlib
from dataclasses import dataclass, field, replace
from pathlib import Path

from layercalc.errors import LayercalcError, Notice, SpreadsheetError
from layercalc.formats.xlsx.cells import blank, cell_name, number_text
from layercalc.formats.xlsx.scan import scan_workbook
from layercalc.formats.xlsx.table import LayerTable
from layercalc.language.defaults import CELL_DEFAULTS, OPTIONS
from layercalc.names import INPUT_CELLS, close_names, did_you_mean

MAX_FILE_BYTES = 50_000_000           # the .xlsx file on disk
MAX_UNCOMPRESSED_BYTES = 200_000_000  # sum of the zip entries' declared sizes
MAX_ZIP_ENTRIES = 5_000
MAX_CELLS = 500_000                   # cells read over the sheets used
OTHER_SHEETS = ("settings", "formulas", "stations", "levels")  # read beside the layers sheet
MAX_FORMULA_NOTICES = 10              # input cells holding formulas named one by one
# Input cells the default formulas may read (layercalc.names: the canonical input cells).
KNOWN_CELLS = INPUT_CELLS
TEXT_SETTINGS = ("title", "note")
IDENTIFIER = re.compile(r"[A-Za-z_][A-Za-z0-9_]*")
CFB_MAGIC = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"  # OLE2 compound file: encrypted or .xls


def read_workbook(path, compile_text) -> str:
    """The `.layers` text of a workbook; raises SpreadsheetError with sheet!cell.

    `compile_text(text, name)` compiles `.layers` text into a sheet (layercalc.api.loads);
    it is passed in because the API sits above the formats."""
    return import_workbook(path, compile_text).text


def aligned_tables(lines: list) -> list:
    """(pieces, widths, indent) per line: the header and rows of every `layers` or `levels`
    table right-aligned in columns and indented under the word that opens it, as one writes
    a table by hand; other lines as they are (widths None)."""
    out, block, indent = [], None, ""
    for line in lines:
        word = line[0][0].strip() if line else ""
        if block is None:
            out.append((line, None, ""))
            if word in ("layers", "levels"):
                block, indent = [], line[0][0][:len(line[0][0]) - len(line[0][0].lstrip())]
            continue
        if word == "end" and len(line) == 1:
            rows = [[piece for piece in row if piece[1] is not None or piece[0].strip()]
                    for row in block]
            widths = [max(len(row[k][0]) for row in rows if k < len(row))
                      for k in range(max((len(row) for row in rows), default=0))]
            out += [(row, widths, indent + "  ") for row in rows]
            out.append((line, None, ""))
            block = None
            continue
        block.append(line)
    return out


@dataclass
class ImportedWorkbook:
    """The text, the checked sheet built from it, and notices placed at sheet!cell."""

    text: str
    sheet: object
    notices: list = field(default_factory=list)


def import_workbook(path, compile_text) -> ImportedWorkbook:
    """The workbook's text and the sheet `compile_text` (layercalc.api.loads) makes of it,
    every problem placed at sheet!cell."""
    path = Path(path)
    scans = _guard(path)
    raw = _RawWorkbook.read(path, scans)
    builder = _TextBuilder(str(path), raw)
    text = builder.build()
    sheet = builder.check(text, compile_text)
    return ImportedWorkbook(text, sheet, builder.notices)


# ---------------------------------------------------------------- guards
def _guard(path: Path) -> dict:
    """Refuse what openpyxl should not see; return the scans of the sheets to be read."""
    where = str(path)
    if not path.is_file():
        raise SpreadsheetError("no such workbook" if not path.exists() else "not a file",
                               path=where)
    size = path.stat().st_size
    if size > MAX_FILE_BYTES:
        raise SpreadsheetError(f"the file is {size} bytes; workbooks above {MAX_FILE_BYTES} "
                               "bytes are refused", path=where)
    try:
        with open(path, "rb") as handle:
            start = handle.read(8)
    except OSError as exc:
        raise SpreadsheetError(f"cannot read the workbook: {exc.strerror or exc}", path=where,
                               hint="check the file's permissions (ls -l), or copy it "
                                    "somewhere you can read") from None
    if start == CFB_MAGIC:
        raise SpreadsheetError(
            "this is a password-protected (encrypted) workbook or an old .xls file",
            path=where, hint="save it without a password, as .xlsx")
    if not zipfile.is_zipfile(path):
        raise SpreadsheetError("not an .xlsx workbook (not a zip archive)", path=where,
                               hint="save the sheet from your spreadsheet program as .xlsx")
    try:
        with zipfile.ZipFile(path) as archive:
            entries = archive.infolist()
            if len(entries) > MAX_ZIP_ENTRIES:
                raise SpreadsheetError(f"the archive has {len(entries)} entries, more than "
                                       f"{MAX_ZIP_ENTRIES}", path=where)
            total = sum(e.file_size for e in entries)
            if total > MAX_UNCOMPRESSED_BYTES:
                raise SpreadsheetError(
                    f"the workbook unpacks to {total} bytes, more than the limit of "
                    f"{MAX_UNCOMPRESSED_BYTES} (a zip bomb?)", path=where)
            if "xl/workbook.xml" not in {e.filename for e in entries}:
                raise SpreadsheetError("a zip archive but not an .xlsx workbook "
                                       "(no xl/workbook.xml)", path=where,
                                       hint="save the sheet as .xlsx (not .ods or .zip)")
            bad = archive.testzip()  # bounded: zipfile stops at each entry's declared size
            if bad is None:
                scans = scan_workbook(archive, sheets_read, where, MAX_CELLS)
    except (zipfile.BadZipFile, zlib.error, OSError, EOFError, ValueError,
            NotImplementedError) as exc:
        raise SpreadsheetError(f"corrupt workbook: {exc}", path=where) from None
    if bad is not None:
        raise SpreadsheetError(f"corrupt workbook: entry {bad} fails its checksum", path=where)
    return scans


def sheets_read(names: list[str]) -> list[str]:
    """The sheets the reader uses: `layers` (or the first sheet), `settings`, `formulas`,
    `stations`, `levels`; the same list `_RawWorkbook.read` reads."""
    if not names:
        return []
    lower = {n.lower(): n for n in names}
    first = lower.get("layers", names[0])
    return [first] + [lower[n] for n in OTHER_SHEETS if n in lower and lower[n] != first]


# Exceptions openpyxl raises on damaged files (its own, zip, XML, and value errors).
def _openpyxl_errors() -> tuple:
    from xml.etree.ElementTree import ParseError

    from openpyxl.utils.exceptions import InvalidFileException

    return (InvalidFileException, zipfile.BadZipFile, ParseError, zlib.error, KeyError,
            ValueError, TypeError, IndexError, OSError, EOFError)


class _RawWorkbook:
    """The cell values of the sheets used, read once (read-only, saved values)."""

    def __init__(self, path: Path, layers: str, sheets: dict,
                 exported_layers: int | None = None, formulas: dict | None = None) -> None:
        self.path = path
        self.formulas = formulas or {}  # sheet -> {"B2": "=TEXT"} (from the XML scan)
        self.layers_name = layers
        self.sheets = sheets  # name -> list of row tuples (row 1 first)
        self.exported_layers = exported_layers  # layers the exported formulas cover

    @classmethod
    def read(cls, path: Path, scans: dict | None = None) -> "_RawWorkbook":
        from openpyxl import load_workbook

        try:
            workbook = load_workbook(path, read_only=True, data_only=True)
            try:
                names = workbook.sheetnames
                if not names:
                    raise SpreadsheetError("the workbook has no sheets", path=str(path))
                lower = {n.lower(): n for n in names}
                layers = lower.get("layers", names[0])
                wanted = sheets_read(names)
                sheets, count = {}, 0
                for name in wanted:
                    ws = workbook[name]
                    ws.reset_dimensions()  # do not trust a declared size
                    rows = []
                    for row in ws.iter_rows(min_row=1, values_only=True):
                        count += max(len(row), 1)  # a blank row counts as a cell
                        if count > MAX_CELLS:
                            raise SpreadsheetError(
                                f"more than {MAX_CELLS} cells in the sheets read", sheet=name,
                                path=str(path))
                        rows.append(tuple(row))
                    sheets[name] = rows
                exported = _exported_layers(workbook)
            finally:
                workbook.close()
        except _openpyxl_errors() as exc:
            raise SpreadsheetError(f"corrupt or unreadable workbook: {exc}",
                                   path=str(path)) from None
        formulas = {name: scan.formulas for name, scan in (scans or {}).items()}
        return cls(path, layers, sheets, exported, formulas)

    def formula_at(self, sheet: str, cell: str) -> str | None:
        """The formula text of a cell (from the XML scan), or None."""
        return self.formulas.get(sheet, {}).get(cell)


def _exported_layers(workbook) -> int | None:
    """The layer count a layercalc export wrote its formulas for (a defined name), or None
    for a workbook typed by hand."""
    from layercalc.formats.xlsx.summary_cells import CHECK_NAME

    found = workbook.defined_names.get(CHECK_NAME)
    text = getattr(found, "attr_text", None)
    return int(text) if isinstance(text, str) and text.strip().isdigit() else None


# ---------------------------------------------------------------- cells to text


def _quote(text: str) -> str:
    """Text in double quotes as the layers language reads it back: a line break of any
    kind (CR LF, a lone CR as old spreadsheets write it, LF) becomes \\n, a tab \\t."""
    escaped = text.replace("\\", "\\\\").replace('"', '\\"')
    escaped = escaped.replace("\r\n", "\n").replace("\r", "\n")
    return '"' + escaped.replace("\n", "\\n").replace("\t", "\\t") + '"'


class _TextBuilder:
    """Validates the raw cells and writes the `.layers` text, remembering which cell each
    piece of text came from so that later errors point at sheet!cell."""

    def __init__(self, path: str, raw: _RawWorkbook) -> None:
        self.path = path
        self.raw = raw
        self.lines: list[str] = []
        self.marks: dict[int, list[tuple[int, int, str, str]]] = {}  # line -> pieces
        self.notices: list[Notice] = []
        self.formula_cells: set[tuple[str, str]] = set()

    # -- errors and notices -----------------------------------------------------
    def error(self, message: str, sheet: str, cell: str | None, hint: str | None = None):
        return SpreadsheetError(message, sheet=sheet, cell=cell, path=self.path, hint=hint)

    def notice(self, message: str, sheet: str, cell: str) -> None:
        self.notices.append(Notice(message, location=f"{self.path}:{sheet}!{cell}"))

    def formula_warning(self, sheet: str, cell: str) -> None:
        """A notice for an input cell that holds a formula: its saved value is taken as it
        is; layercalc never evaluates it (a web request, a link to another file)."""
        formula = self.raw.formula_at(sheet, cell)
        if formula is None or (sheet, cell) in self.formula_cells:
            return
        self.formula_cells.add((sheet, cell))
        if len(self.formula_cells) > MAX_FORMULA_NOTICES:
            return
        shown = formula if len(formula) <= 60 else formula[:57] + "..."
        self.notice(f"the input cell holds the formula {shown}: layercalc takes the value "
                    "the spreadsheet saved and never evaluates the formula (nor fetches what "
                    "it links to); type the number to make the input plain", sheet, cell)

    def number(self, value, sheet: str, row: int, column: int, what: str) -> float:
        """A cell that must hold a number."""
        cell = cell_name(row, column)
        self.formula_warning(sheet, cell)
        if blank(value):
            formula = self.raw.formula_at(sheet, cell) if value is None else None
            if formula:
                raise self.error(f"{what}: the formula {formula} has no saved value", sheet,
                                 cell, hint="open and save the workbook in a spreadsheet "
                                            "program so it stores the result, or type the number")
            raise self.error(f"missing value for {what}", sheet, cell,
                             hint="every layer needs a number here; delete the column if "
                                  "it is not known")
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            shown = str(value)[:40]
            hint = ("it holds an error value from a formula" if shown.startswith("#") else
                    "type a plain number (a dot for decimals, no unit in the cell)")
            raise self.error(f"{what}: '{shown}' is not a number", sheet, cell, hint=hint)
        if not math.isfinite(float(value)):
            raise self.error(f"{what}: the value is not finite", sheet, cell)
        return value

    def unit(self, text: str, sheet: str, cell: str):
        from layercalc.language.unit_text import parse_unit_string

        self.formula_warning(sheet, cell)
        try:
            return parse_unit_string(text, where=f"{sheet}!{cell}")
        except LayercalcError as exc:
            message = exc.message if f"'{text}'" in exc.message else \
                f"{exc.message} in '{text}'"
            raise self.error(message, sheet, cell, hint=exc.hint) from None

    # -- text with places ---------------------------------------------------------
    def add(self, pieces: list[tuple[str, str | None, str | None]],
            widths: list[int] | None = None, indent: str = "") -> None:
        """One line from (text, sheet, cell) pieces joined by spaces; with `widths`, each
        piece right-aligned in its column, columns two spaces apart (an aligned table)."""
        line_number = len(self.lines) + 1
        separator = "  " if widths else " "
        parts, column, marks = [], 1 + len(indent), []
        for k, (text, sheet, cell) in enumerate(pieces):
            pad = max(widths[k] - len(text), 0) if widths else 0
            if sheet is not None:
                marks.append((column + pad, column + pad + len(text), sheet, cell))
            parts.append(" " * pad + text)
            column += pad + len(text) + len(separator)
        self.lines.append(indent + separator.join(parts))
        self.marks[line_number] = marks

    def place(self, span) -> tuple[str | None, str | None]:
        if span is None or span.source.name != self.path:
            return None, None
        line, column = span.source.line_col(span.start)
        marks = self.marks.get(line, [])
        for start, end, sheet, cell in marks:
            if start <= column < end:
                return sheet, cell
        return (marks[0][2], marks[0][3]) if marks else (None, None)

    # -- building -------------------------------------------------------------------
    def build(self) -> str:
        formula_lines = self.formula_lines()
        read_names = {m for line, _, _ in formula_lines for m in IDENTIFIER.findall(line)}
        settings = self.settings(read_names)
        stations, levels, table = self._named("stations"), self._named("levels"), []
        if levels is not None:  # the column's levels (formats/xlsx/levels.py)
            from layercalc.formats.xlsx.levels import levels_block

            table = levels_block(self, levels)
        if stations is not None:  # the winds, and the soundings (formats/xlsx/stations.py)
            from layercalc.formats.xlsx.stations import station_blocks

            table += station_blocks(self, stations, self.raw.sheets[stations])
        if not table:
            table = self.layers()
        extra = len(self.formula_cells) - MAX_FORMULA_NOTICES
        if extra > 0:
            sheet, cell = sorted(self.formula_cells)[0]
            self.notice(f"{extra} more input cells hold formulas; their saved values are "
                        "taken, never evaluated", sheet, cell)
        layers = len(table) - 3  # the lines `layers`, header, ..., `end`
        exported = self.raw.exported_layers
        if table[0][0][0] == "layers" and exported is not None and layers != exported:
            self.notice(f"the table has {layers} layers but this workbook's own formulas "
                        f"(the results sheets) cover the {exported} it was exported with: "
                        f"the sheets and layercalc now give two answers; layercalc computes "
                        f"all {layers} layers. Export the workbook again (layercalc import, "
                        "then layercalc export) so that its formulas cover the table",
                        self.raw.layers_name, "A1")
        self.add([(f"# Imported from {Path(self.path).name} by layercalc", None, None)])
        for notice in self.notices:
            where = notice.location_text.rpartition(":")[2]
            self.add([(f"# {where}: {notice.message}", None, None)])
        for line in settings:
            self.add(line)
        for line, widths, indent in aligned_tables(table):
            self.add(line, widths, indent)
        for text, sheet, cell in formula_lines:
            self.add([(text, sheet, cell)])
        return "\n".join(self.lines) + "\n"

    def check(self, text: str, compile_text):
        """Compile the text with layercalc itself; its errors and notices, placed."""
        try:
            sheet = compile_text(text, name=self.path)
        except LayercalcError as exc:
            problems = getattr(exc, "problems", [exc])
            first = problems[0]
            where = self.place(first.span)
            more = f" ({len(problems) - 1} more problems)" if len(problems) > 1 else ""
            hint = (first.hint or "") + more
            message = first.message if first.kind in ("error", "spreadsheet error") else \
                f"{first.kind}: {first.message}"
            raise self.error(message, where[0], where[1], hint=hint or None) from None
        for scenario in (None, *sheet.scenarios):  # evaluation errors, placed too
            try:
                sheet.evaluate(scenario)
            except LayercalcError as exc:
                where = self.place(exc.span)
                raise self.error(f"{exc.kind}: {exc.message}", where[0] or self.raw.layers_name,
                                 where[1], hint=exc.hint) from None
        for notice in sheet.checked.notices:
            where = self.place(notice.span)
            if where[0] is not None:
                self.notice(notice.message, *where)
            else:
                self.notices.append(notice)
        sheet.checked = replace(sheet.checked, notices=list(self.notices))
        return sheet

    def formula_lines(self) -> list[tuple[str, str, str]]:
        rows = self.raw.sheets.get(self._named("formulas"), [])
        name = self._named("formulas")
        out = []
        for r, row in enumerate(rows, start=1):
            value = row[0] if row else None
            if blank(value):
                continue
            if not isinstance(value, str):
                raise self.error("a formula must be text in the layers language", name,
                                 cell_name(r, 1))
            self.formula_warning(name, cell_name(r, 1))
            if r == 1 and value.strip().lower().startswith("definition"):
                continue
            out += [(line.rstrip(), name, cell_name(r, 1)) for line in value.splitlines()
                    if line.strip()]
        return out

    def _named(self, wanted: str) -> str | None:
        return next((n for n in self.raw.sheets if n.lower() == wanted
                     and n != self.raw.layers_name), None)

    def settings(self, read_names: set[str]) -> list:
        name = self._named("settings")
        lines: list = []
        if name is None:
            return lines
        seen: dict[str, str] = {}
        known_cells = set(KNOWN_CELLS) | read_names
        for r, row in enumerate(self.raw.sheets[name], start=1):
            key, value, unit = (tuple(row) + (None, None, None))[:3]
            if blank(key) and blank(value):
                continue
            where = cell_name(r, 1)
            if blank(key):
                raise self.error("a setting without a name", name, where,
                                 hint="column A holds the name, B the value, C the unit")
            if not isinstance(key, str):
                raise self.error(f"a setting name must be text, not {key!r}", name, where)
            key = key.strip()
            if not seen and key.lower() == "name" and str(value).strip().lower() == "value":
                seen[""] = where
                continue
            if key in seen and key != "note":
                raise self.error(f"setting {key} is given twice (first at {seen[key]})",
                                 name, where)
            seen[key] = where
            lines.append(self.setting(name, r, key, value, unit, known_cells))
        return lines

    def setting(self, name: str, r: int, key: str, value, unit, known_cells: set[str]):
        value_cell = cell_name(r, 2)
        if key in TEXT_SETTINGS:
            self.formula_warning(name, value_cell)
            text = "" if value is None else str(value)
            return [(key, None, None), (_quote(text), name, value_cell)]
        if key in OPTIONS:
            self.formula_warning(name, value_cell)
            choice = "" if value is None else str(value).strip()
            if choice not in OPTIONS[key]:
                raise self.error(f"setting {key} cannot be '{choice}'", name, value_cell,
                                 hint="choose one of: " + ", ".join(OPTIONS[key]))
            return [("option", None, None), (key, name, cell_name(r, 1)), ("=", None, None),
                    (choice, name, value_cell)]
        if key not in known_cells or not IDENTIFIER.fullmatch(key):
            choices = [*TEXT_SETTINGS, *OPTIONS, *sorted(known_cells)]
            close = close_names(key, choices, 2)
            hint = did_you_mean(close) or "settings are: " + ", ".join(choices)
            raise self.error(f"unknown setting '{key}'", name, cell_name(r, 1),
                             hint=hint + " (a value of your own must be read by a formula on "
                                         "the formulas sheet)")
        number = self.number(value, name, r, 2, f"setting {key}")
        unit_cell = cell_name(r, 3)
        if blank(unit):
            unit_text = CELL_DEFAULTS.get(key, "0 1").split(" ", 1)[1].strip("[]")
            self.notice(f"setting {key} has no unit: using [{unit_text}]", name, unit_cell)
        else:
            unit_text = str(unit).strip()
            self.unit(unit_text, name, unit_cell)
        line = [("cell", None, None), (key, name, cell_name(r, 1)), ("=", None, None),
                (number_text(number), name, value_cell)]
        if unit_text not in ("1", ""):  # a plain number is written as one: `2`, not `2 [1]`
            line.append((f"[{unit_text}]", name, unit_cell))
        return line

    def layers(self) -> list:

        return LayerTable(self, self.raw.layers_name, self.raw.sheets[self.raw.layers_name]
                          ).lines()
