"""Text layout shared by the printed reports (report.py, report_compare.py,
report_soundings.py) and the sweep table: numbers with a fixed or automatic count of
decimals, right-aligned tables that split to stay within 80 columns, wrapped paragraphs
and label/value pairs.

Plain text only: no units are converted and nothing is computed here.
"""

from __future__ import annotations

import math
import textwrap
from dataclasses import dataclass

import numpy as np

WIDTH = 80


# ---------------------------------------------------------------- number formatting
def _clean(value: float, decimals: int) -> float:
    return round(float(value), decimals) + 0.0  # no "-0.00"


# Beyond this magnitude a number is printed with a power of ten, whatever its decimals:
# a value near the limit of what layercalc accepts (limits.py) would be 100 digits long.
FIXED_LIMIT = 1e9


def fixed(value: float, decimals: int) -> str:
    if not math.isfinite(value):
        return "-"
    if abs(value) >= FIXED_LIMIT:
        return f"{float(value):.3e}"
    return f"{_clean(value, decimals):.{decimals}f}"


def fixed_all(values, decimals: int) -> list[str]:
    """fixed() of every value, formatted in one pass: '{:.Nf}' rounds as round() does, so
    only '-0.00' and the non-finite values need a second look."""
    array = np.asarray(values, dtype=float).reshape(-1)
    texts = list(map(f"{{:.{decimals}f}}".format, array.tolist()))
    zero = f"{0.0:.{decimals}f}"
    for i in np.flatnonzero(~(array > 0) | np.isinf(array)).tolist():
        text = texts[i]
        texts[i] = "-" if text[-1] in "nf" else zero if text == "-" + zero else text
    return texts


def auto_decimals(values) -> int | None:
    """Decimals that show about four significant digits of the largest value; None means
    the values need powers of ten."""
    finite = [abs(float(v)) for v in values if math.isfinite(v)]
    largest = max(finite, default=0.0)
    if largest == 0.0:
        return 2
    if largest >= 1e6 or largest < 1e-3:
        return None
    return max(0, min(6, 3 - math.floor(math.log10(largest))))


def auto(values, counts: bool = False) -> list[str]:
    """Values with about four significant digits; `counts`: whole numbers without
    decimals (flags and counts, for dimensionless values)."""
    finite = [float(v) for v in values if math.isfinite(v)]
    if counts and finite and all(v.is_integer() and abs(v) < 1e6 for v in finite):
        return fixed_all(values, 0)
    decimals = auto_decimals(values)
    if decimals is None:
        return [f"{float(v):.3e}" if math.isfinite(v) else "-" for v in values]
    return fixed_all(values, decimals)


def pressure_text(pascals: float, system: str) -> str:
    return f"{pascals:g}" if system == "si" else f"{pascals / 100:g}"


# ---------------------------------------------------------------- tables
@dataclass
class TableColumn:
    heading: str
    unit: str
    cells: list[str]


def table_lines(label_heading: str, label_unit: str, labels: list[str],
                columns: list[TableColumn], width: int = WIDTH) -> list[str]:
    """Right-aligned columns after a left-aligned label; split into several tables (each
    repeating the labels) when one would be wider than `width`."""
    label_width = max(len(label_heading), len(label_unit), *map(len, labels))
    blocks, current, used = [], [], label_width
    for col in columns:
        w = max(len(col.heading), len(col.unit), *map(len, col.cells)) + 2
        if current and used + w > width:
            blocks.append(current)
            current, used = [], label_width
        current.append((col, w))
        used += w
    if current:
        blocks.append(current)
    lines: list[str] = []
    for n, block in enumerate(blocks):
        if n:
            lines.append("")
        lines.append(label_heading.ljust(label_width)
                     + "".join(c.heading.rjust(w) for c, w in block))
        if label_unit or any(c.unit for c, _ in block):
            lines.append(label_unit.ljust(label_width)
                         + "".join(c.unit.rjust(w) for c, w in block))
        # column by column, then joined row by row (a table can have 100,000 rows)
        padded = [[label.ljust(label_width) for label in labels],
                  *([cell.rjust(w) for cell in c.cells] for c, w in block)]
        lines.extend(map("".join, zip(*padded)))
    return list(map(str.rstrip, lines))


# The narrowest a wrapped text may get: longer labels or indents (a long name) move the
# text to lines of its own instead of squeezing it to nothing.
MIN_TEXT_WIDTH = 30


def wrap(text: str, indent: str = "", width: int = WIDTH) -> list[str]:
    if len(indent) + 2 > width - 1 - MIN_TEXT_WIDTH:
        indent = ""
    return textwrap.wrap(text, width=width - 1, initial_indent=indent,
                         subsequent_indent=indent + "  ", break_on_hyphens=False) or [indent]


# ---------------------------------------------------------------- small pieces
def is_zero(text: str) -> bool:
    number = text.split(" ", 1)[0]
    try:
        return float(number) == 0.0
    except ValueError:
        return False


def unit_words(text: str) -> str:
    """Unit text as printed: 'hPa/(3 h)' reads 'hPa per 3 h'."""
    return {"hPa/(3 h)": "hPa per 3 h", "1e-5 s^-1": "1e-5/s"}.get(text, text)


def wrap_pair(label: str, text: str, label_width: int) -> list[str]:
    first = "  " + label.ljust(label_width)
    if len(first) > WIDTH - 1 - MIN_TEXT_WIDTH:  # a long label: the text below it
        label_width = min(label_width, WIDTH - 1 - MIN_TEXT_WIDTH - 2)
        if len(label) > label_width:
            return ["  " + label.rstrip(), *("      " + line for line in
                                              textwrap.wrap(text, width=WIDTH - 7) or [""])]
        first = "  " + label.ljust(label_width)
    lines = textwrap.wrap(text, width=WIDTH - 1 - len(first)) or [""]
    return [first + lines[0], *(" " * len(first) + rest for rest in lines[1:])]


def grid(entries: list[str]) -> list[str]:
    width = max(len(e) for e in entries) + 4
    per_line = max(1, (WIDTH - 2) // width)
    return ["  " + "".join(e.ljust(width) for e in entries[i:i + per_line]).rstrip()
            for i in range(0, len(entries), per_line)]

