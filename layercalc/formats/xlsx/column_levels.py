"""The column's levels as formulas of a sounding's levels, and the layers sheet's inputs as
their layer means: the formula side of soundings/column.py.

layercalc builds a column from levels (a `levels` table, the stations' means, the stations'
fitted divergence): a value missing at an inner level is interpolated linearly in ln p
between the nearest levels that have it (soundings.levels.fill_gaps); levels below a
`surface_pressure` are left out and the layer across it is cut there, every value at the
cut interpolated linearly in ln p between the two levels (soundings.column._cut_at_surface);
a layer's value is the mean of its two levels (physics.levels.layers_from_levels). Here the
same, as formula text in SI: `column_structure` finds which level each column level is,
`ColumnFormulas` writes the layer means from per-quantity sources (formula text of a
quantity at a level), and `surface_block` links surface_pressure from `settings` with a
check that it still cuts the column where the formulas do.
"""

from __future__ import annotations

from typing import Callable

import numpy as np

from layercalc.formats.xlsx.cells import put_text, red_when, style
from layercalc.formats.xlsx.formulas import from_si, to_si

SURFACE_LINK = "=INDEX('settings'!$B:$B,MATCH(\"surface_pressure\",'settings'!$A:$A,0))"


def column_structure(level_pressure, column_pressure) -> tuple[tuple, tuple | None] | None:
    """(column, cut): column[j] is the level (index into `level_pressure`, sorted surface
    first) of the column's level j, or None for the level at surface_pressure, which lies
    between the levels `cut` = (below, above); None when the column's levels are not the
    sounding's levels below a cut (nothing to mirror). Pressures in Pa."""
    level_pressure = np.asarray(level_pressure, dtype=float)
    column_pressure = np.asarray(column_pressure, dtype=float)
    n = level_pressure.size
    below = int(np.count_nonzero(level_pressure > column_pressure[0]))
    if below and below < n and level_pressure[below] == column_pressure[0]:
        column, cut = tuple(range(below, n)), None
    elif below:
        column, cut = (None, *range(below, n)), (below - 1, below)
    else:
        column, cut = tuple(range(n)), None
    if len(column) != column_pressure.size or not np.array_equal(
            column_pressure[1:], level_pressure[list(column[1:])]):
        return None
    return column, cut


def between(low: str, high: str, p_low: str, p_high: str, p: str) -> str:
    """Linear in ln p between two levels (SI text): low + (high - low) ln(p_low / p) /
    ln(p_low / p_high), as fill_gaps and the cut at surface_pressure."""
    return f"({low}+({high}-{low})*LN({p_low}/{p})/LN({p_low}/{p_high}))"


def gap_filled(ref: str, si: str, below: str, above: str, p_below: str, p_above: str,
               p: str) -> str:
    """A level's value (SI) where it was blank at export: the value typed there, else the
    interpolation in ln p between the nearest levels that have it."""
    return f"IF(ISNUMBER({ref}),{si},{between(below, above, p_below, p_above, p)})"


class ColumnFormulas:
    """Formula text of the layers sheet's inputs: `pressure(i)` and `sources[name](i)` give
    SI text at level i (gaps already filled); `surface` is the SI text of surface_pressure
    (a link, or the number when the column is not live in every input)."""

    def __init__(self, column: tuple, cut: tuple | None, pressure: Callable[[int], str],
                 sources: dict[str, Callable[[int], str]], surface: str | None) -> None:
        self.column, self.cut, self.pressure = column, cut, pressure
        self.sources, self.surface = sources, surface

    def column_value(self, name: str, j: int) -> str:
        level = self.column[j]
        if level is not None:
            return self.sources[name](level)
        below, above = self.cut
        return between(self.sources[name](below), self.sources[name](above),
                       self.pressure(below), self.pressure(above), self.surface)

    def column_pressure(self, j: int) -> str:
        level = self.column[j]
        return self.surface if level is None else self.pressure(level)

    def layer(self, name: str, k: int, unit) -> str | None:
        """The layers sheet's `name` of layer k (surface first); None for an input kept as
        a value (no source)."""
        text = self.layer_si(name, k)
        return None if text is None else "=" + from_si(text, unit)

    def layer_si(self, name: str, k: int) -> str | None:
        """Formula text (SI) of layer k's `name`; None without a source."""
        if name in ("p_bottom", "p_top"):
            return self.column_pressure(k + (name == "p_top"))
        if name not in self.sources:
            return None
        return f"({self.column_value(name, k)}+{self.column_value(name, k + 1)})/2"


def surface_block(ws, row: int, column: int, cell, formulas: ColumnFormulas,
                  levels: int) -> str:
    """surface_pressure linked from `settings` at (row, column) of `ws`, with the check that
    it still lies where the formulas start the column, and a note; returns its SI text."""
    from layercalc.formats.xlsx.cells import letter, size_columns

    size_columns(ws, {column: 24})  # the label whole beside its value
    label = ws.cell(row, column)
    put_text(label, f"surface_pressure [{cell.unit.text}]")
    style(label, "name")
    link = ws.cell(row, column + 1, SURFACE_LINK)
    link.number_format = "0.0"
    surface = to_si(f"'{ws.title}'!${letter(column + 1)}${row}", cell.unit)
    formulas.surface = surface
    if formulas.cut is not None:
        below, above = formulas.cut
        inside = (f"AND({surface}<{formulas.pressure(below)},"
                  f"{surface}>{formulas.pressure(above)})")
    elif formulas.column[0] > 0:
        inside = f"{surface}={formulas.pressure(formulas.column[0])}"
    else:
        inside = f"{surface}>={formulas.pressure(0)}"
    check = ws.cell(row + 1, column, f'=IF({inside},"OK: the layers start where layercalc '
                    'starts them","CHECK: surface_pressure has moved past a level; the '
                    'formulas still start the column as exported, layercalc would not: '
                    'export again")')
    style(check, "check")
    red_when(ws, check.coordinate, f"NOT({inside})")
    note = ws.cell(row + 2, column)
    put_text(note, "(from 'settings'; the column starts there: " + (
        "the layer across it is cut, its values interpolated in ln p)" if formulas.cut else
        f"{levels - len(formulas.column)} level(s) below it left out)" if formulas.column[0]
        else "no level is below it)"))
    style(note, "note")
    return surface
