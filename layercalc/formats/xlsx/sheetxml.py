"""Large sheets written straight as worksheet XML, in time linear in the number of cells.

openpyxl builds an object per cell and hashes its style on every assignment; a results
sheet of 5,000 layers holds about 400,000 cells, which took minutes. The exporter instead
lays the sheet out with openpyxl (column widths, frozen panes, charts, comments, print
setup: everything but the cells), saves the workbook, and then puts the cells into the
saved sheet's empty `<sheetData>` (ECMA-376 / ISO/IEC 29500-1, 18.3.1.80) as text written
here: numbers as `<v>`, text as inline strings (18.3.1.53, `t="inlineStr"`), formulas as
`<f>` with the number layercalc computed as the cached value (viewers that do not
recalculate show layercalc's numbers; spreadsheet programs recalculate on load because
the workbook asks for a full calculation).

Cell styles are registered in the openpyxl workbook once per (style, number format, quote
prefix), so that the style index written here is the one openpyxl writes into styles.xml.
"""

from __future__ import annotations

import math
import re
from xml.sax.saxutils import escape  # noqa: F401  (also used by the exporter)

from layercalc.formats.xlsx.cells import letter, style

SHEET_DATA = re.compile(r"<sheetData\s*/>|<sheetData>.*?</sheetData>", re.DOTALL)
DIMENSION = re.compile(r'<dimension ref="[^"]*"\s*/>')
# Characters XML 1.0 does not allow (openpyxl's ILLEGAL_CHARACTERS_RE, written here so
# that this module needs no openpyxl import at load time).
ILLEGAL = re.compile(r"[\000-\010]|[\013-\014]|[\016-\037]")


class StyleIndex:
    """Workbook-wide cell format index of (style name, number format, quote prefix)."""

    def __init__(self, workbook) -> None:
        self.workbook = workbook
        self.known: dict[tuple, int] = {}

    def __call__(self, name: str | None, number_format: str | None = None,
                 quote: bool = False) -> int:
        key = (name, number_format, quote)
        found = self.known.get(key)
        if found is None:
            from openpyxl.cell.cell import Cell
            from openpyxl.styles.cell_style import StyleArray

            probe = Cell(self.workbook.worksheets[0], row=1, column=1)
            if name:
                style(probe, name)
            if number_format:
                probe.number_format = number_format
            if quote:
                probe.quotePrefix = True
            array = StyleArray(probe._style) if probe._style is not None else StyleArray()
            found = self.known[key] = self.workbook._cell_styles.add(array)
        return found


def text_cell(reference: str, text: str, style_id: int) -> str:
    text = escape(ILLEGAL.sub(" ", text))
    return (f'<c r="{reference}" s="{style_id}" t="inlineStr"><is><t xml:space="preserve">'
            f"{text}</t></is></c>")


def number_cell(reference: str, value: float, style_id: int) -> str:
    if not math.isfinite(value):
        return f'<c r="{reference}" s="{style_id}" t="e"><v>#NUM!</v></c>'
    return f'<c r="{reference}" s="{style_id}"><v>{number_value(value)}</v></c>'


def formula_cell(reference: str, formula: str, cached, style_id: int) -> str:
    if "&" in formula or "<" in formula or ">" in formula:
        formula = escape(formula)
    body = f"<f>{formula}</f>"
    if isinstance(cached, bool):
        cached = float(cached)
    if isinstance(cached, (int, float)) and math.isfinite(cached):
        body += f"<v>{number_value(cached)}</v>"
    return f'<c r="{reference}" s="{style_id}">{body}</c>'


def empty_cell(reference: str, style_id: int) -> str:
    return f'<c r="{reference}" s="{style_id}"/>'


def number_value(value: float) -> str:
    """The shortest text that reads back as the same double (Python's repr)."""
    value = float(value)
    if value == int(value) and abs(value) < 1e15:
        return str(int(value))
    return repr(value)


def sheet_data(rows: dict[int, list[tuple[int, str]]],
               heights: dict[int, float] | None = None) -> str:
    """`<sheetData>` of cells given as row -> [(column, cell xml)], any order; `heights`
    (row -> points) for rows of wrapped text (18.3.1.73: ht, customHeight)."""
    heights = heights or {}
    parts = ["<sheetData>"]
    for row in sorted(rows):
        cells = sorted(rows[row])
        height = heights.get(row)
        parts.append(f'<row r="{row}">' if height is None else
                     f'<row r="{row}" ht="{height:g}" customHeight="1">')
        parts.extend(xml for _, xml in cells)
        parts.append("</row>")
    parts.append("</sheetData>")
    return "".join(parts)


def reference(row: int, column: int, letters: dict[int, str]) -> str:
    found = letters.get(column)
    if found is None:
        found = letters[column] = letter(column)
    return f"{found}{row}"


def fill_saved(data: bytes, sheets: dict[str, tuple[str, str]]) -> bytes:
    """The saved workbook (bytes of the .xlsx) with each part's `<sheetData>` replaced:
    `sheets` maps a worksheet part name (xl/worksheets/sheet3.xml) to (sheetData xml,
    dimension such as A1:K1020)."""
    import io
    import zipfile

    source = zipfile.ZipFile(io.BytesIO(data))
    out_buffer = io.BytesIO()
    with zipfile.ZipFile(out_buffer, "w", zipfile.ZIP_DEFLATED) as out:
        for item in source.infolist():
            content = source.read(item.filename)
            if item.filename in sheets:
                xml, dimension = sheets[item.filename]
                text = content.decode("utf-8")
                text, count = SHEET_DATA.subn(lambda _: xml, text, count=1)
                if count != 1:
                    raise AssertionError(f"no sheetData in {item.filename}")
                text = DIMENSION.sub(f'<dimension ref="{dimension}"/>', text, count=1)
                content = text.encode("utf-8")
            out.writestr(item, content, compress_type=zipfile.ZIP_DEFLATED, compresslevel=1)
    return out_buffer.getvalue()
