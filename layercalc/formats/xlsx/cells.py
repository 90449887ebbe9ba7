"""Cell-level helpers shared by the workbook writer and reader: safe text, styles, column
widths, cell names, and how a header or a number is read back."""

from __future__ import annotations

import re

HEADER = re.compile(r"^\s*([A-Za-z_][A-Za-z0-9_]*)\s*(?:\[\s*(.*?)\s*\])?\s*$")


def letter(column: int) -> str:
    """The column letters of a 1-based column number."""
    from openpyxl.utils import get_column_letter

    return get_column_letter(column)


def put_text(cell, text: str) -> None:
    """A text cell, never a formula: text starting with = + - @ stays text."""
    from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

    cell.value = ILLEGAL_CHARACTERS_RE.sub(" ", str(text))
    cell.data_type = "s"
    if cell.value[:1] in ("=", "+", "-", "@"):
        cell.quotePrefix = True


_STYLES: dict = {}


def style(cell, name: str) -> None:
    from openpyxl.styles import Alignment, Font, PatternFill

    def fill(colour: str):
        return PatternFill("solid", start_color=colour, end_color=colour)

    if not _STYLES:
        _STYLES.update({
            "title": {"font": Font(bold=True, size=14)},
            "caution": {"font": Font(italic=True, bold=True, color="9C0006"),
                        "alignment": Alignment(shrink_to_fit=True)},  # never cut off
            "note": {"font": Font(italic=True, color="555555")},
            "wrapped": {"font": Font(italic=True, color="555555"),  # a note over merged
                        "alignment": Alignment(wrap_text=True, vertical="top")},  # cells
            "group": {"font": Font(italic=True, bold=True, color="1F4E78")},
            "header": {"font": Font(bold=True), "fill": fill("DDEBF7"),
                       "alignment": Alignment(wrap_text=True, vertical="center")},
            # top aligned: level with the first line of a wrapped note beside them
            "input": {"fill": fill("E2EFDA"), "alignment": Alignment(vertical="top")},
            "changed": {"fill": fill("FCE4D6"), "font": Font(bold=True),
                        "alignment": Alignment(vertical="top")},
            "derived": {"alignment": Alignment(vertical="top")},
            "helper": {"font": Font(color="808080")},
            "static": {"fill": fill("FFF2CC"), "alignment": Alignment(vertical="top")},
            "name": {"font": Font(bold=True), "alignment": Alignment(vertical="top")},
            "unit": {"alignment": Alignment(indent=1, vertical="top")},  # apart from the
            # number before it
            "check": {"font": Font(bold=True, color="375623")},
            "wrapped_check": {"font": Font(bold=True, color="375623"),  # over merged cells
                              "alignment": Alignment(wrap_text=True, vertical="top")},
        })
    for attribute, value in _STYLES.get(name, {}).items():
        setattr(cell, attribute, value)


def red_when(ws, reference: str, condition: str) -> None:
    """Conditional formatting: `reference` turns red (white bold text on red) while the
    formula `condition` is TRUE."""
    from openpyxl.formatting.rule import FormulaRule
    from openpyxl.styles import Font, PatternFill

    ws.conditional_formatting.add(reference, FormulaRule(
        formula=[condition], fill=PatternFill("solid", start_color="C00000", end_color="C00000"),
        font=Font(bold=True, color="FFFFFF")))


def put_notes(ws, lines) -> None:
    """A sheet's notes in column A from row 1, one line each, in the note style."""
    for row, text in enumerate(lines, start=1):
        put_text(ws.cell(row, 1), text)
        style(ws.cell(row, 1), "note")


def put_check(ws, row: int, column: int, check: tuple[str, str]) -> None:
    """A check cell: its formula (OK/CHECK text) and the condition that turns it red."""
    formula, condition = check
    cell = ws.cell(row, column, "=" + formula)
    style(cell, "check")
    red_when(ws, cell.coordinate, condition)


def values_check(used: list, data, names: list, first_row: int, ok: str,
                 missing: str) -> tuple[str, str]:
    """A check cell's formula and its red condition: every value of the columns `used` of
    a table (rows from `first_row`, `data` as exported, NaN for blank) that was there at
    export is still a number (a blank counts as 0 in a formula, where layercalc would do
    otherwise: the two would differ silently). Its text: `ok`, else "CHECK: N" + `missing`."""
    import numpy as np

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
            runs.append(f"{column}{first_row + k}:{column}{first_row + end}")
            k = end + 1
    counted = f"COUNT({','.join(runs)})"
    text = f'IF({counted}={count},"{ok}","CHECK: "&({count}-{counted})&"{missing}")'
    return text, f"{counted}<>{count}"


SCIENTIFIC = "0.000E+00"  # for quantities like 1e-5 s^-1 or 1e11 m^2


def put_number(cell, value, number_format: str) -> None:
    """A number or formula cell shown with `number_format` (display only: the stored
    value and the formula keep full precision)."""
    cell.value = value
    cell.number_format = number_format


def size_columns(ws, widths: dict[int, float]) -> None:
    for column, width in widths.items():
        ws.column_dimensions[letter(column)].width = width


def blank(value) -> bool:
    return value is None or (isinstance(value, str) and not value.strip())


def cell_name(row: int, column: int) -> str:
    from openpyxl.utils import get_column_letter

    return f"{get_column_letter(column)}{row}"


def number_text(value) -> str:
    return str(value) if isinstance(value, int) else repr(float(value))
