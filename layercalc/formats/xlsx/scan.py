"""A streaming look at a workbook's XML before openpyxl reads it: the bounds of the sheets
that will be read, the formulas in them, and the size of the shared strings.

openpyxl's read-only mode yields every row up to the last one present, so one far-away
row (`<row r="200000000">`) makes it produce two hundred million empty rows; and it keeps
every shared string in memory. The XML parts are read here with `iterparse` (each element
freed once seen), so a short workbook that declares a huge sheet or a huge string is
refused with its sheet!cell before any of that work.

Parts and attributes: ECMA-376 / ISO/IEC 29500-1, 18.2.19 (sheet), 18.3.1.73 (row),
18.3.1.4 (c), 18.3.1.40 (f), 18.4.9 (sst), 18.4.8 (si).
"""

from __future__ import annotations

import posixpath
import re
import zipfile
from dataclasses import dataclass, field
from xml.etree.ElementTree import ParseError, iterparse

from layercalc.errors import SpreadsheetError

MAIN = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"
RELATION = "{http://schemas.openxmlformats.org/officeDocument/2006/relationships}id"
MAX_ROW = 1_048_576          # a worksheet's last row (Excel, LibreOffice)
MAX_COLUMN = 16_384          # a worksheet's last column, XFD
MAX_SHARED_STRING_CHARS = 200_000   # one text in a cell (a `.layers` line's limit)
MAX_SHARED_STRINGS_BYTES = 20_000_000  # the shared strings part unpacked
REFERENCE = re.compile(r"([A-Z]{1,3})([0-9]{1,10})$")


@dataclass
class SheetScan:
    """What one worksheet's XML declares: its last row and column, and its formulas."""

    last_row: int = 0
    last_column: int = 0
    formulas: dict = field(default_factory=dict)  # "B2" -> "=TEXT" (or "=(shared formula)")


def column_number(letters: str) -> int:
    number = 0
    for char in letters:
        number = number * 26 + ord(char) - 64
    return number


def relations(archive: zipfile.ZipFile) -> dict[str, tuple[str, str]]:
    """The workbook's relationships: id -> (type, part in the archive)."""
    targets = {}
    with archive.open("xl/_rels/workbook.xml.rels") as stream:
        for _, element in iterparse(stream):
            if element.tag.endswith("Relationship"):
                target = element.get("Target", "")
                part = (target.lstrip("/") if target.startswith("/")
                        else posixpath.normpath("xl/" + target))
                targets[element.get("Id")] = (element.get("Type", ""), part)
            element.clear()
    return targets


def sheet_parts(archive: zipfile.ZipFile) -> dict[str, str]:
    """Sheet name -> its part in the archive (workbook.xml and its relationships)."""
    targets = {key: part for key, (_, part) in relations(archive).items()}
    parts = {}
    with archive.open("xl/workbook.xml") as stream:
        for _, element in iterparse(stream):
            if element.tag == MAIN + "sheet":
                parts[element.get("name")] = targets.get(element.get(RELATION), "")
            element.clear()
    return parts


def scan_sheet(archive: zipfile.ZipFile, part: str, name: str, where: str,
               max_cells: int) -> SheetScan:
    """The last row and column a sheet declares and its formulas; a row or column beyond
    a worksheet's bounds, or a rectangle of more than `max_cells` cells, is refused with the
    cell that declares it."""
    scan = SheetScan()
    cell = None
    with archive.open(part) as stream:
        for event, element in iterparse(stream, events=("start", "end")):
            tag = element.tag
            if event == "start":
                if tag == MAIN + "row":
                    _row(scan, element.get("r"), name, where, max_cells)
                elif tag == MAIN + "c":
                    cell = element.get("r")
                    if cell is not None:
                        _cell(scan, cell, name, where, max_cells)
                continue
            if tag == MAIN + "t" and len(element.text or "") > MAX_SHARED_STRING_CHARS:
                raise SpreadsheetError(
                    f"the cell holds {len(element.text):,} characters, more than the "
                    f"{MAX_SHARED_STRING_CHARS:,} layercalc reads in one cell", sheet=name,
                    cell=cell, path=where)
            if tag == MAIN + "f" and cell is not None:
                text = (element.text or "").strip()
                scan.formulas[cell] = "=" + (text if text else "(shared formula)")
            if tag in (MAIN + "c", MAIN + "row"):
                element.clear()
    return scan


def _row(scan: SheetScan, r: str | None, name: str, where: str, max_cells: int) -> None:
    if r is None:
        scan.last_row += 1
        return
    if not r.isdigit() or not 1 <= int(r) <= MAX_ROW:
        raise SpreadsheetError(f"row number '{r[:20]}' is outside a worksheet (1 to {MAX_ROW:,})",
                               sheet=name, cell=f"A{r[:20]}", path=where)
    _bound(int(r), name, f"A{r}", where, max_cells)
    scan.last_row = max(scan.last_row, int(r))


def _cell(scan: SheetScan, reference: str, name: str, where: str, max_cells: int) -> None:
    found = REFERENCE.match(reference)
    if not found:
        raise SpreadsheetError(f"'{reference[:20]}' is not a cell reference", sheet=name,
                               path=where)
    column, row = column_number(found[1]), int(found[2])
    if column > MAX_COLUMN or not 1 <= row <= MAX_ROW:
        raise SpreadsheetError(f"cell {reference} is outside a worksheet (A1 to XFD{MAX_ROW})",
                               sheet=name, cell=reference, path=where)
    _bound(row, name, reference, where, max_cells)
    scan.last_column = max(scan.last_column, column)


def _bound(row: int, name: str, cell: str, where: str, max_cells: int) -> None:
    if row > max_cells:
        raise SpreadsheetError(
            f"the sheet reaches {cell}: the blank rows up to there count as cells, "
            f"more than the {max_cells:,} layercalc reads", sheet=name, cell=cell, path=where,
            hint="delete the far-away cells (select the rows below the table, delete them, "
                 "save) or copy the table into a new workbook")


def check_shared_strings(archive: zipfile.ZipFile, where: str) -> None:
    """The shared strings part (xl/sharedStrings.xml) within its size, and no string in it longer than a `.layers`
    line may be (openpyxl keeps them all in memory, and a title of 30 MB that compresses
    to a few KB took minutes and gigabytes)."""
    for kind, part in relations(archive).values():
        if kind.endswith("/sharedStrings") and part in archive.namelist():
            _check_shared_strings(archive, archive.getinfo(part), where)


def _check_shared_strings(archive: zipfile.ZipFile, info: zipfile.ZipInfo, where: str) -> None:
    if info.file_size > MAX_SHARED_STRINGS_BYTES:
        raise SpreadsheetError(
            f"the workbook's shared texts ({info.filename}) unpack to {info.file_size:,} "
            f"bytes, more than the {MAX_SHARED_STRINGS_BYTES:,} layercalc reads", path=where)
    index = 0
    with archive.open(info) as stream:
        for _, element in iterparse(stream):
            if element.tag == MAIN + "t" and len(element.text or "") > MAX_SHARED_STRING_CHARS:
                raise SpreadsheetError(
                    f"text cell number {index + 1} of the workbook holds "
                    f"{len(element.text):,} characters, more than the "
                    f"{MAX_SHARED_STRING_CHARS:,} layercalc reads in one cell", path=where)
            if element.tag == MAIN + "si":
                index += 1
                element.clear()


def scan_workbook(archive: zipfile.ZipFile, wanted, where: str,
                  max_cells: int) -> dict[str, SheetScan]:
    """The scans of the sheets `wanted(names)` picks, after the shared strings' check.
    XML errors become SpreadsheetError."""
    try:
        check_shared_strings(archive, where)
        parts = sheet_parts(archive)
        scans = {}
        for name in wanted(list(parts)):
            part = parts.get(name)
            if part and part in archive.namelist():
                scans[name] = scan_sheet(archive, part, name, where, max_cells)
        return scans
    except (ParseError, KeyError, ValueError) as exc:
        raise SpreadsheetError(f"corrupt workbook: {exc}", path=where) from None
