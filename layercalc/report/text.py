"""The printed report: one column read as a forecaster reads a sounding, top first, in the
trade's units (or SI), laid out for an 80-column terminal.

Nothing here computes physics: every number comes from a Result (SI) and is converted once
for display with the unit table.
"""

from __future__ import annotations

import math

from layercalc.language import units as U
from layercalc.names import INPUT_CELLS, LAYER_INPUTS
from layercalc.formats.jsondoc import output_unit
from layercalc.language.units import si_unit_text
from layercalc.checking.checked import TOP_FIRST_REMARK
from layercalc.report.compare import render_comparison
from layercalc.report.uncertainty import lines as uncertainty_lines
from layercalc.report.layout import (  # the layout helpers, public here as before
    WIDTH, TableColumn, auto, auto_decimals, fixed, fixed_all, grid, is_zero, pressure_text,
    table_lines, unit_words, wrap, wrap_pair,
)

__all__ = ["render", "render_comparison", "TableColumn", "auto", "auto_decimals", "fixed",
           "pressure_text", "table_lines", "wrap", "WIDTH"]

CANONICAL_INPUTS = LAYER_INPUTS
# Input cells with a meaning of their own (shown in the header or summary, not as "yours").
CANONICAL_CELLS = INPUT_CELLS
ADJUSTMENTS = {
    "none": "none (the mismatch stays in the profile)",
    "uniform": "uniform (the same divergence correction in every layer)",
    "obrien": "O'Brien 1970 (a divergence correction growing with height)",
}
# Columns of the main layer table: name, heading, decimals in trade units.
MAIN_COLUMNS = (
    ("T", "T", 1), ("Td", "Td", 1), ("Tv", "Tv", 1), ("thickness", "thick", 0),
    ("z_top", "z", 0), ("div", "div", 2), ("div_adjusted", "div adj", 2),
    ("omega_top", "omega", 2), ("w_top", "w", 2),
)
# Interface columns: the value at each layer's top, and at the surface in the last row.
AT_SURFACE = {"z_top": "z_bottom", "omega_top": "omega_bottom", "w_top": "w_bottom"}


# ---------------------------------------------------------------- the report
class _Report:
    def __init__(self, sheet, result, system: str, heights: str, every_column: bool) -> None:
        self.sheet = sheet
        self.result = result
        self.checked = result.sheet
        self.system = system
        self.heights = heights
        self.every_column = every_column
        self.columns = result.si_columns
        self.cells = result.si_cells
        self.lines: list[str] = []

    # -- helpers -------------------------------------------------------------
    def unit(self, name: str, kind: str) -> U.Unit:
        return output_unit(self.checked, name, kind, self.system, self.heights)

    def quantity(self, value_si: float, trade_text: str, decimals: int) -> str:
        """A value with its unit: the trade unit given, or SI in SI mode."""
        from layercalc.language.unit_text import parse_unit_string

        unit = parse_unit_string(trade_text)
        if self.system == "si":
            return f"{value_si:.4g} {si_unit_text(unit.dimension)}"
        return f"{fixed(unit.from_si(value_si), decimals)} {unit_words(trade_text)}"

    def signed(self, value_si: float, trade_text: str, decimals: int) -> str:
        text = self.quantity(value_si, trade_text, decimals)
        return text if text.startswith("-") or is_zero(text) else "+" + text

    def pressure(self, pascals: float) -> str:
        return f"{pascals:g} Pa" if self.system == "si" else f"{pascals / 100:g} hPa"

    def add(self, *lines: str) -> None:
        self.lines.extend(lines)

    # -- sections ------------------------------------------------------------
    def render(self) -> str:
        self.heading()
        self.boundary()
        self.add("")
        self.layer_table()
        self.summary()
        self.add(*uncertainty_lines(self))
        self.soundings()
        self.user_columns()
        self.user_cells()
        if self.every_column:
            self.all_columns()
        self.remarks()
        self.add("")
        from layercalc.caution import CAUTION

        self.add(*wrap("caution: " + CAUTION))
        return "\n".join(self.lines) + "\n"

    def heading(self) -> None:
        title = self.sheet.title or self.checked.source.name
        self.add(*wrap(title), "=" * min(WIDTH - 1, max(len(title), 20)))
        for note in self.sheet.notes:
            self.add(*wrap(note))
        scenario = self.sheet.checked.scenarios.get(self.result.scenario)
        if scenario is not None:
            from layercalc.checking.scenarios import chain

            self.add(*wrap(f"scenario {scenario.name}"
                           + (f": {scenario.description}" if scenario.description else "")))
            for step in chain(self.sheet.checked, scenario.name):
                for change in step.changes:
                    self.add(*wrap(f"change ({step.name}): {change.text}", "  "))
                for name, value in step.cells.items():
                    unit = self.checked.unit_of(name, "cell")
                    self.add(f"  change ({step.name}): cell {name} = "
                             f"{auto([unit.from_si(value)])[0]} {unit.text}")
                for option, value in step.options.items():
                    self.add(f"  change ({step.name}): option {option} = {value}")

    def boundary(self) -> None:
        options = self.checked.options
        columns, cells = self.columns, self.cells
        if "omega_top" not in columns:
            self.add(*wrap("omega: not computed (the layers table has no div column)"))
            return
        p_surface = columns["p_bottom"][0]
        p_top = columns["p_top"][-1]
        if options["integrate"] == "from_top":
            text = (f"omega integrated down from the top (integrate = from_top): "
                    f"omega_top = {self.quantity(cells['omega_top'], 'hPa/h', 2)} at "
                    f"{self.pressure(p_top)}; adjustment: none needed; top mismatch: 0 by "
                    f"construction")
        else:
            text = (f"omega integrated up from the surface (integrate = from_surface): "
                    f"omega_surface = {self.quantity(cells['omega_surface'], 'hPa/h', 2)} at "
                    f"{self.pressure(p_surface)}; adjustment: "
                    f"{ADJUSTMENTS[options['adjust']]}; raw top mismatch: "
                    f"{self.signed(cells['top_mismatch'], 'hPa/h', 2)} against omega_top = "
                    f"{self.quantity(cells['omega_top'], 'hPa/h', 2)} at "
                    f"{self.pressure(p_top)}")
        self.add(*wrap(text))

    def layer_labels(self) -> list[str]:
        pb, pt = self.columns["p_bottom"][::-1], self.columns["p_top"][::-1]
        if self.system != "si":  # pressure_text's hPa, for the whole column at once
            pb, pt = pb / 100, pt / 100
        return list(map("{:g}-{:g}".format, pb.tolist(), pt.tolist()))

    def column_cells(self, name: str, decimals: int | None) -> tuple[str, list[str]]:
        """A column's unit text and its values top first (plus the surface row for
        interface columns: blank for layer means)."""
        unit = self.unit(name, "column")
        values = list(unit.from_si(self.columns[name])[::-1])
        if name in AT_SURFACE and AT_SURFACE[name] in self.columns:
            values.append(float(unit.from_si(self.columns[AT_SURFACE[name]][0])))
        else:
            values.append(math.nan)
        if decimals is None or self.system == "si":
            texts = auto(values)
        else:
            texts = fixed_all(values, decimals)
        if name not in AT_SURFACE:
            texts[-1] = ""
        return unit.text, texts

    def layer_table(self) -> None:
        shown = [(n, h, d) for n, h, d in MAIN_COLUMNS if n in self.columns]
        if self.checked.options.get("adjust", "none") == "none":
            shown = [c for c in shown if c[0] != "div_adjusted"]
        if self.heights == "dam":
            shown = [(n, h, 1 if n in ("thickness", "z_top") else d) for n, h, d in shown]
        columns = []
        for name, heading, decimals in shown:
            unit_text, texts = self.column_cells(name, decimals)
            columns.append(TableColumn(heading, unit_words(unit_text), texts))
        labels = [*self.layer_labels(), "surface"]
        pressure_unit = "Pa" if self.system == "si" else "hPa"
        if any(n in AT_SURFACE for n, _, _ in shown):
            self.add("Layers, top first; z, omega and w at each layer's top, the surface last.")
        else:
            self.add("Layers, top first.")
        self.add(*table_lines("layer", pressure_unit, labels, columns))

    def summary(self) -> None:
        c, cols = self.cells, self.columns
        height_decimals = 1 if self.heights == "dam" else 0
        rows: list[tuple[str, str]] = []
        if "surface_pressure_tendency" in c:
            tendency = c["surface_pressure_tendency"]
            word = "falling" if tendency < 0 else "rising" if tendency > 0 else "steady"
            if self.system == "si":
                text = f"{self.quantity(tendency, 'hPa/h', 2)} ({word})"
            else:
                text = (f"{self.signed(tendency, 'hPa/(3 h)', 2)} "
                        f"({self.signed(tendency, 'hPa/h', 2)}), {word}")
            if self.checked.options.get("integrate") == "from_surface":
                text += "; from the omega_surface given, not diagnosed"
            rows.append(("surface pressure tendency", text))
            if "terrain_term" in c:
                rows.append(("  of which terrain term",
                             self.signed(c["terrain_term"], "hPa/(3 h)", 2)))
            if "pressure_advection" in c:
                rows.append(("  less pressure advection",
                             self.signed(c["pressure_advection"], "hPa/(3 h)", 2)))
        if "omega_surface" in c and "omega_top" in cols:
            rows.append(("omega at the surface", self.omega_text(c["omega_surface"])))
        if "max_ascent" in c:
            from layercalc.evaluation.summary import strongest_ascent

            ascent = strongest_ascent(c)
            if ascent is not None:
                rows.append(("strongest ascent", f"{self.omega_text(ascent[0])} at "
                             f"{self.pressure(ascent[1])}"))
            else:
                rows.append(("strongest ascent", "none: omega is nowhere negative"))
        if "column_mean_divergence" in c:
            rows.append(("column-mean divergence",
                         self.signed(c["column_mean_divergence"], "1e-5 s^-1", 3)
                         + " (mass-weighted)"))
        if "dines_ratio" in c:
            rows.append(("Dines ratio", f"{c['dines_ratio']:.3f} (0 = full cancelling, "
                         "1 = none)"))
        levels = self.result.summary.get("level_of_nondivergence")
        if levels is not None:
            label = "levels of non-divergence" if len(levels) > 1 else "level of non-divergence"
            text = ", ".join(self.pressure(_round_pressure(p)) for p in levels) or \
                "none (the divergence keeps one sign)"
            rows.append((label, text))
        if "column_thickness" in c:
            rows.append(("column thickness",
                         f"{self.quantity(c['column_thickness'], self.heights, height_decimals)} "
                         f"({self.pressure(cols['p_bottom'][0])} to "
                         f"{self.pressure(cols['p_top'][-1])})"))
        if "surface_height" in c:
            rows.append(("surface height",
                         self.quantity(c["surface_height"], self.heights, height_decimals)))
        if not rows:
            return
        self.add("", "Summary")
        label_width = max(len(label) for label, _ in rows) + 2
        for label, text in rows:
            self.add(*wrap_pair(label, text, label_width))
        self.standard_levels()

    def omega_text(self, omega_si: float) -> str:
        if self.system == "si":
            return self.quantity(omega_si, "hPa/h", 2)
        return (f"{self.signed(omega_si, 'hPa/h', 2)} "
                f"({self.signed(omega_si, 'microbar/s', 2)})")

    def standard_levels(self) -> None:
        summary = self.result.summary
        unit_text = "m" if self.system == "si" else self.heights
        decimals = 1 if unit_text == "dam" else 0
        from layercalc.language.unit_text import parse_unit_string

        unit = parse_unit_string(unit_text)
        for key, title in (("standard_heights", f"Heights of standard surfaces ({unit_text})"),
                           ("standard_thicknesses", f"Standard thicknesses ({unit_text})")):
            values = summary.get(key) or {}
            if not values:
                continue
            names = [self.level_name(name) for name in values]
            width = max(len(name) for name in names)
            entries = [f"{name:>{width}} {fixed(unit.from_si(v), decimals):>7}"
                       for name, v in zip(names, values.values())]
            self.add("", title)
            self.add(*grid(entries))

    def level_name(self, name: str) -> str:
        """'500' or '1000-500' (hPa, as the summary keys them) in the report's units."""
        if self.system != "si":
            return f"{name} hPa"
        return "-".join(f"{float(part) * 100:g}" for part in name.split("-")) + " Pa"

    def soundings(self) -> None:
        from layercalc.report.soundings import section_lines

        self.add(*section_lines(self.sheet.checked.soundings, self.system, self.heights,
                                self.result.scenario))

    def user_column_names(self) -> list[str]:
        names = [n for n in self.checked.input_columns if n not in CANONICAL_INPUTS]
        names += [f.name for f in _in_file_order(self.checked.formulas)
                  if f.kind == "column" and not f.default and
                  f.name not in (n for n, _, _ in MAIN_COLUMNS)]
        return names

    def user_columns(self) -> None:
        names = self.user_column_names()
        if names:
            self.add("", "Your columns, top first")
            self.add(*self.columns_table(names))

    def columns_table(self, names: list[str]) -> list[str]:
        columns = []
        for name in names:
            unit = self.unit(name, "column")
            values = list(unit.from_si(self.columns[name])[::-1])
            plain = unit.text == "1"
            columns.append(TableColumn(name, "" if plain else unit_words(unit.text),
                                       auto(values, counts=plain)))
        pressure_unit = "Pa" if self.system == "si" else "hPa"
        return table_lines("layer", pressure_unit, self.layer_labels(), columns)

    def user_cells(self) -> None:
        rows = []
        for name, cell in self.checked.input_cells.items():
            if cell.given and name not in CANONICAL_CELLS:
                rows.append(name)
        rows += [f.name for f in _in_file_order(self.checked.formulas)
                 if f.kind == "cell" and not f.default]
        if not rows:
            return
        self.add("", "Your cells")
        width = max(len(n) for n in rows) + 2
        for name in rows:
            unit = self.unit(name, "cell")
            value = auto([unit.from_si(self.cells[name])], counts=unit.text == "1")[0]
            text = value if unit.text == "1" else f"{value} {unit_words(unit.text)}"
            self.add(*wrap_pair(name, text, width))

    def all_columns(self) -> None:
        shown = {n for n, _, _ in MAIN_COLUMNS} | set(self.user_column_names())
        rest = [n for n in self.checked.column_names
                if n not in shown and n not in ("p_bottom", "p_top")]
        if rest:
            self.add("", "Every other column, top first")
            self.add(*self.columns_table(rest))

    def remarks(self) -> None:
        remarks = list(self.checked.remarks)
        remarks += [f"your formula for {name} replaces the default"
                    for name in self.checked.replaced_defaults]
        if self.checked.rows_given_top_first:
            remarks.append(TOP_FIRST_REMARK)
        notices = self.sheet.warnings(self.result)
        if remarks:
            self.add("", "Remarks")
            for text in remarks:
                self.add(*wrap("- " + text))
        if notices:
            self.add("", "Warnings")
            for notice in notices:
                self.add(*wrap("- " + notice.format()))


def _in_file_order(formulas):
    """Formulas as the user wrote them (the sheet keeps them in evaluation order)."""
    return sorted(formulas, key=lambda f: (f.span.start if f.span is not None else -1))


def _round_pressure(pascals: float) -> float:
    return round(pascals / 100.0) * 100.0  # to the whole hPa: the interpolation is no finer


def render(sheet, result, system: str = "trade", heights: str = "m",
           every_column: bool = False) -> str:
    """The report for one result of `sheet` (a layercalc.Sheet) as text."""
    return _Report(sheet, result, system, heights, every_column).render()
