"""Checking the layers table: units of the header, values, pressure order, gaps and overlaps,
plausibility. A mixin of the checker (check.py)."""

from __future__ import annotations

import math

import numpy as np

from layercalc.language import units as U
from layercalc.language import plausibility
from layercalc.language.inputs import InputColumn, entry_span
from layercalc.language.unit_text import parse_unit_string, written_unit
from layercalc.language.defaults import INPUT_UNITS
from layercalc.errors import DefinitionError, LayercalcError, Notice, UnitError
from layercalc.limits import LARGEST_VALUE
from layercalc.language.nodes import Station, Table
from layercalc.physics import humidity
from layercalc.source import Span

MAX_LAYERS = 1_000_000
# surface_pressure and the lowest p_bottom may differ by rounding; more is a warning: 1 hPa,
# our choice (station pressures are reported to 0.1 hPa, layer tables often to 1 hPa).
SURFACE_PRESSURE_TOLERANCE = 100.0  # Pa


class TableChecker:
    # -- the layer table ----------------------------------------------------
    def layer_table(self, tables: list[Table], stations: list[Station]) -> Table | None:
        layer_tables = [t for t in tables if t.kind == "layers"]
        level_tables = [t for t in tables if t.kind == "levels"]
        if len(layer_tables) > 1:
            self.fail(DefinitionError("a sheet has one layers table; this is a second one",
                                      layer_tables[1].span))
        if layer_tables:
            if level_tables or stations:
                other = (level_tables or stations)[0]
                self.fail(DefinitionError(
                    "a sheet takes its layers either from a layers table or from levels "
                    "tables and stations, not both", other.span,
                    hint="remove the layers table to build the layers from the soundings"))
            return layer_tables[0]
        if level_tables or stations:
            from layercalc.soundings.column import layers_from_soundings

            try:
                built = layers_from_soundings(self, level_tables, stations)
            except LayercalcError as exc:
                self.fail(exc)
                return None
            self.notices.extend(built.notices)
            self.sounding_details = built.details
            return built
        self.fail(DefinitionError(
            "no layers table", Span(self.source, 0, 0),
            hint="add a table: a line 'layers', a header such as "
                 "'p_bottom [hPa]  p_top [hPa]  T [degC]', rows of numbers, and a line 'end'"))
        return None

    def inputs(self, table: Table) -> tuple[dict[str, InputColumn], int, bool]:
        columns: dict[str, InputColumn] = {}
        width = len(table.headings)
        if not table.rows:
            self.fail(DefinitionError("the layers table has no rows", table.span,
                                      hint="add one row of numbers per layer"))
            return {}, 0, False
        if len(table.rows) > MAX_LAYERS:
            self.fail(DefinitionError(f"more than {MAX_LAYERS} layers", table.span))
            return {}, 0, False
        ragged = table.first_ragged_row()
        if ragged is not None:
            self.fail(DefinitionError(
                f"this row has {len(table.rows[ragged])} values but the header names "
                f"{width} columns",
                table.row_spans[ragged], hint="give one number per column, separated by spaces"))
            return {}, 0, False
        data = table.grid()
        for j, heading in enumerate(table.headings):
            if heading.name in columns:
                self.fail(DefinitionError(f"column '{heading.name}' appears twice in the header",
                                          heading.span))
                continue
            try:
                unit = self.heading_unit(heading)
            except LayercalcError as exc:
                self.fail(exc)
                continue
            values = data[:, j]
            with np.errstate(all="ignore"):
                bad = np.flatnonzero(~(np.abs(unit.to_si(values)) <= LARGEST_VALUE))
            if bad.size:
                i = int(bad[0])
                what = "missing ('-')" if math.isnan(values[i]) else (
                    "too large to be a number" if math.isinf(values[i]) else
                    f"out of range (beyond {LARGEST_VALUE:g} in SI units)")
                self.fail(DefinitionError(
                    f"value in column '{heading.name}' is {what}",
                    entry_span(table, i, j),
                    hint="every layer needs a value here; leave the column out if unknown"))
                continue
            columns[heading.name] = InputColumn(heading.name, unit, unit.to_si(values),
                                                heading.span)
        for required in ("p_bottom", "p_top"):
            if required not in columns and not self.problems:
                self.fail(DefinitionError(
                    f"the layers table has no '{required}' column", table.headings[0].span,
                    hint="a layers table needs p_bottom and p_top (the layer's pressures)"))
        if self.problems:
            return columns, len(table.rows), False
        top_first = self.order_layers(table, columns)
        if not self.problems:
            self.plausibility(table, columns)
        return columns, len(table.rows), top_first

    def heading_unit(self, heading) -> U.Unit:
        if heading.unit is not None:
            return written_unit(heading.unit)
        if heading.name in INPUT_UNITS:
            text = INPUT_UNITS[heading.name]
            self.notices.append(Notice(f"column '{heading.name}' has no unit: using [{text}]",
                                       heading.span))
            return parse_unit_string(text)
        return U.ONE

    def order_layers(self, table: Table, columns: dict[str, InputColumn]) -> bool:
        pb = columns["p_bottom"].values
        pt = columns["p_top"].values
        for name in ("p_bottom", "p_top"):
            if not U.same_dimension(columns[name].unit.dimension, U.PRESSURE):
                self.fail(UnitError(f"{name} must be a pressure, not "
                                    f"{U.dimension_name(columns[name].unit.dimension)}",
                                    columns[name].span, hint="write it as e.g. [hPa]"))
                return False
        j_pb = [h.name for h in table.headings].index("p_bottom")
        j_pt = [h.name for h in table.headings].index("p_top")
        for i in map(int, np.flatnonzero((pb <= 0) | (pt <= 0) | (pt >= pb))[:1]):
            if pb[i] <= 0 or pt[i] <= 0:
                j = j_pb if pb[i] <= 0 else j_pt
                self.fail(DefinitionError("pressures must be above zero",
                                          entry_span(table, i, j)))
                return False
            if pt[i] >= pb[i]:
                self.fail(DefinitionError(
                    "p_top must be lower than p_bottom (pressure falls upward)",
                    table.row_spans[i], hint="swap the two pressures of this layer"))
                return False
        top_first = len(pb) > 1 and pb[0] < pb[-1]
        order = np.argsort(-pb, kind="stable")
        if np.any(np.diff(pb[order]) == 0):
            i = int(order[np.flatnonzero(np.diff(pb[order]) == 0)[0] + 1])
            self.fail(DefinitionError("two layers start at the same pressure",
                                      table.row_spans[i]))
            return False
        monotone = np.all(order == np.arange(len(pb))) or np.all(
            order == np.arange(len(pb))[::-1])
        if not monotone:
            i = int(np.flatnonzero(order != np.arange(len(pb)))[0])
            self.notices.append(Notice("layers are not in pressure order; sorted them",
                                       table.row_spans[min(i, len(pb) - 1)]))
        pbs, pts = pb[order], pt[order]
        mismatch = np.abs(pts[:-1] - pbs[1:]) > 1e-9 * pbs[1:]
        if np.any(mismatch):
            k = int(np.flatnonzero(mismatch)[0])
            row = int(order[k + 1])
            word = "overlaps" if pbs[k + 1] > pts[k] else "leaves a gap below"
            self.fail(DefinitionError(
                f"this layer {word} the next one down: its p_bottom is "
                f"{pbs[k + 1] / 100:g} hPa but the layer below ends at {pts[k] / 100:g} hPa",
                table.row_spans[row],
                hint="each layer's p_bottom must equal the p_top of the layer below"))
            return top_first
        for name, col in list(columns.items()):
            columns[name] = InputColumn(name, col.unit, np.ascontiguousarray(col.values[order]),
                                        col.span)
        self.row_order = order
        return bool(top_first)

    def plausibility(self, table: Table, columns: dict[str, InputColumn]) -> None:
        """Values no air has are errors, values beyond what air does are warnings, each
        naming the likely unit slip (language/plausibility.py holds the bounds)."""
        order = self.row_order if self.row_order is not None else np.arange(len(table.rows))
        names = [h.name for h in table.headings]

        def span(name: str, k: int) -> Span:
            return entry_span(table, int(order[k]), names.index(name))

        for name in ("T", "Td"):
            col = columns.get(name)
            if col is None or not U.same_dimension(col.unit.dimension, U.lookup("K").dimension):
                continue
            for k in map(int, np.flatnonzero(col.values <= 0)[:1]):  # whole column at once
                value = col.values[k]
                self.fail(DefinitionError(
                    f"{name} is below absolute zero ({value:.2f} K)", span(name, k),
                    hint="check the unit in the header ([degC] or [K])"))
                return
        failed = set()
        for name, col in columns.items():
            found = plausibility.check_values(name, col.values, col.unit)
            if found is None:
                continue
            if found.kind == "error":
                failed.add(name)
                self.fail(DefinitionError(found.message, span(name, found.index),
                                          hint=found.hint))
            else:
                self.notices.append(Notice(found.message, span(name, found.index)))
        if failed:
            return
        vapour = self.vapour_pressure(columns)
        if vapour is not None:
            e, made_from = vapour
            p_mid = np.sqrt(columns["p_bottom"].values * columns["p_top"].values)
            found = plausibility.vapour_pressure_finding(e, p_mid, made_from,
                                                         columns["p_bottom"].unit)
            if found is not None:
                self.fail(DefinitionError(found.message, table.row_spans[int(order[found.index])],
                                          hint=found.hint))
                return
        if "T" in columns and "Td" in columns:
            over = np.flatnonzero(columns["Td"].values > columns["T"].values + 1e-9)
            for k in over[:3]:
                self.notices.append(Notice("dewpoint above temperature (supersaturated)",
                                           table.row_spans[int(order[k])]))

    def surface_height_notice(self, columns: dict[str, InputColumn], cells) -> None:
        """A warning when a layers table's surface_height cannot be the height of its
        lowest p_bottom (language/plausibility.py; soundings compare their observed z)."""
        cell = cells.get("surface_height")
        if cell is None or not cell.given or self.sounding_details is not None or \
                "p_bottom" not in columns or not len(columns["p_bottom"].values):
            return
        found = plausibility.surface_height_finding(cell.value, columns["p_bottom"].values[0],
                                                    cell.unit)
        if found is not None:
            self.notices.append(Notice(found.message, cell.span))

    def surface_pressure_notice(self, columns: dict[str, InputColumn], cells) -> None:
        """A warning, with both values, when surface_pressure and the lowest layer's p_bottom
        differ by more than SURFACE_PRESSURE_TOLERANCE (the terrain term uses the one, the
        column starts at the other)."""
        cell = cells.get("surface_pressure")
        if cell is None or "p_bottom" not in columns or not len(columns["p_bottom"].values):
            return
        bottom = float(columns["p_bottom"].values[0])
        if abs(cell.value - bottom) > SURFACE_PRESSURE_TOLERANCE:
            where = "is below the column's bottom" if cell.value > bottom else \
                "is above the column's bottom"
            self.notices.append(Notice(
                f"surface_pressure {cell.value / 100.0:g} hPa differs from the lowest layer's "
                f"p_bottom {bottom / 100.0:g} hPa (the ground {where}): the terrain term "
                "uses surface_pressure, the column starts at p_bottom", cell.span))

    @staticmethod
    def vapour_pressure(columns: dict[str, InputColumn]) -> tuple[np.ndarray, str] | None:
        """The vapour pressure [Pa] the default formulas will use, and what it is made from
        (as language/defaults.py: from Td, else RH and T); None when neither is given."""
        kelvin = U.lookup("K").dimension
        if "Td" in columns and U.same_dimension(columns["Td"].unit.dimension, kelvin):
            return humidity.vapour_pressure_from_dewpoint(columns["Td"].values), "Td"
        if "RH" in columns and "T" in columns and U.is_dimensionless(
                columns["RH"].unit.dimension) and U.same_dimension(
                columns["T"].unit.dimension, kelvin):
            return (humidity.vapour_pressure_from_relative_humidity(
                columns["RH"].values, columns["T"].values), "RH and T")
        return None
