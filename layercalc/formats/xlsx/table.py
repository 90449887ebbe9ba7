"""The layer table of an imported workbook: header `name [unit]`, one row per layer, checked
cell by cell so that every problem names its sheet!cell (used by reader.py)."""

from __future__ import annotations

from layercalc.formats.xlsx.cells import HEADER, blank, cell_name, number_text
from layercalc.language import units as U
from layercalc.language.defaults import INPUT_UNITS

RELATIVE_MATCH = 1e-9  # interfaces closer than this (relative) are the same pressure


class LayerTable:
    def __init__(self, builder, sheet: str, rows: list[tuple]) -> None:
        self.builder = builder
        self.sheet = sheet
        self.rows = rows

    def error(self, message: str, cell: str, hint: str | None = None):
        return self.builder.error(message, self.sheet, cell, hint)

    def lines(self) -> list:
        header_index = next((i for i, row in enumerate(self.rows)
                             if any(not blank(v) for v in row)), None)
        if header_index is None:
            raise self.error("the sheet is empty", "A1",
                             hint="row 1 holds the header, e.g. p_bottom [hPa] | p_top [hPa] "
                                  "| T [degC]; then one row per layer")
        header_row = header_index + 1
        headings = self.header(self.rows[header_index], header_row)
        width = len(headings)
        body = [(header_row + 1 + i, tuple(row[:width]))
                for i, row in enumerate(self.rows[header_index + 1:])]
        while body and all(blank(v) for v in body[-1][1]):
            body.pop()
        if not body:
            raise self.error("the table has no layers under its header",
                             cell_name(header_row + 1, 1), hint="add one row per layer")
        table = []
        for r, row in body:
            row = row + (None,) * (width - len(row))
            if all(blank(v) for v in row):
                raise self.error("a blank row inside the layer table", cell_name(r, 1),
                                 hint="delete the row, or fill in the layer")
            table.append((r, [self.builder.number(v, self.sheet, r, j, f"{name}")
                              for j, (v, (name, _, _)) in enumerate(zip(row, headings),
                                                                      start=1)]))
        self.check(headings, table, header_row)
        lines = [[("layers", None, None)]]
        lines.append([(f"{name} [{text}]", self.sheet, cell_name(header_row, j))
                      for j, (name, text, _) in enumerate(headings, start=1)])
        for r, values in table:
            lines.append([(number_text(v), self.sheet, cell_name(r, j))
                          for j, v in enumerate(values, start=1)])
        lines.append([("end", None, None)])
        return lines

    def header(self, row: tuple, r: int) -> list[tuple]:
        headings, seen = [], {}
        for j, value in enumerate(row, start=1):
            if blank(value):
                break
            cell = cell_name(r, j)
            match = HEADER.match(value) if isinstance(value, str) else None
            if match is None:
                raise self.error(f"header '{value}' is not a column name with its unit",
                                 cell, hint="write name [unit], e.g. T [degC]; names are "
                                            "letters, digits and _ (p_bottom, p_top, T, Td, "
                                            "div)")
            name, text = match.group(1), match.group(2)
            if name in seen:
                raise self.error(f"column '{name}' appears twice in the header (first at "
                                 f"{seen[name]})", cell)
            seen[name] = cell
            if not text:
                text = INPUT_UNITS.get(name, "1")
                default = "the layercalc default for " + name if name in INPUT_UNITS else \
                    "dimensionless"
                self.builder.notice(f"column '{name}' has no unit: using [{text}] ({default})",
                                    self.sheet, cell)
            headings.append((name, text, self.builder.unit(text, self.sheet, cell)))
        for required in ("p_bottom", "p_top"):
            if required not in seen:
                raise self.error(f"the header has no '{required}' column",
                                 cell_name(r, len(headings) + 1),
                                 hint="a layer table needs p_bottom and p_top, e.g. "
                                      "p_bottom [hPa] | p_top [hPa] | T [degC] | div "
                                      "[1e-5 s^-1]")
            unit = headings[list(seen).index(required)][2]
            if not U.same_dimension(unit.dimension, U.PRESSURE):
                raise self.error(f"{required} must be a pressure, not "
                                 f"{U.dimension_name(unit.dimension)}", seen[required],
                                 hint="write its unit as [hPa] or [Pa]")
        return headings

    def check(self, headings: list[tuple], table: list, header_row: int) -> None:
        """Pressures above zero, falling upward, layers stacked without gaps or overlaps,
        temperatures above absolute zero."""
        names = [h[0] for h in headings]
        jb, jt = names.index("p_bottom"), names.index("p_top")
        to_si = [h[2].to_si for h in headings]
        rows = [(r, [float(f(v)) for f, v in zip(to_si, values)]) for r, values in table]
        for r, si in rows:
            for j in (jb, jt):
                if si[j] <= 0:
                    raise self.error("a pressure must be above zero", cell_name(r, j + 1))
            if si[jt] >= si[jb]:
                raise self.error(
                    f"p_top ({table_value(table, r, jt)}) must be lower than p_bottom "
                    f"({table_value(table, r, jb)}): pressure falls upward", cell_name(r, jt + 1),
                    hint="swap the two pressures of this layer")
        surface_first = len(rows) < 2 or rows[0][1][jb] > rows[1][1][jb]
        order = "surface first" if surface_first else "top first"
        for (r0, previous), (r1, current) in zip(rows, rows[1:]):
            falling = current[jb] < previous[jb]
            if current[jb] == previous[jb] or falling != surface_first:
                raise self.error(
                    f"pressures do not decrease upward: the rows run {order} (from "
                    f"{cell_name(rows[0][0], jb + 1)} and {cell_name(rows[1][0], jb + 1)}) but this "
                    f"p_bottom ({table_value(table, r1, jb)}) does not follow "
                    f"{cell_name(r0, jb + 1)} ({table_value(table, r0, jb)})", cell_name(r1, jb + 1),
                    hint="sort the layers by pressure, surface first or top first")
        for (r0, lower), (r1, upper) in zip(rows, rows[1:]):
            if not surface_first:
                (r0, lower), (r1, upper) = (r1, upper), (r0, lower)
            if abs(upper[jb] - lower[jt]) > RELATIVE_MATCH * lower[jt]:
                word = "overlaps" if upper[jb] > lower[jt] else "leaves a gap above"
                raise self.error(
                    f"this layer {word} the layer below: its p_bottom is "
                    f"{table_value(table, r1, jb)} but p_top at {cell_name(r0, jt + 1)} is "
                    f"{table_value(table, r0, jt)}", cell_name(r1, jb + 1),
                    hint="each layer's p_bottom must equal the p_top of the layer below")
        kelvin = U.lookup("K").dimension
        for j, (name, text, unit) in enumerate(headings):
            if not U.same_dimension(unit.dimension, kelvin):
                continue
            for r, si in rows:
                if si[j] <= 0:
                    raise self.error(f"{name} is below absolute zero ({si[j]:.2f} K)",
                                     cell_name(r, j + 1),
                                     hint=f"check the value and the unit in the header "
                                          f"({cell_name(header_row, j + 1)}: [{text}])")


def table_value(table: list, r: int, j: int) -> str:
    for row, values in table:
        if row == r:
            return f"{values[j]:g}"
    return "?"
