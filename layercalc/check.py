"""Nodes -> a checked sheet: names resolved, formula order found, dimensions derived with sympy
and compared, SI factors recorded. No layer arithmetic happens here beyond reading the table."""

from __future__ import annotations

import difflib
import graphlib
import math
from dataclasses import dataclass, field
from fractions import Fraction

import numpy as np

from . import units as U
from .constants import CONSTANTS
from .defaults import CELL_DEFAULTS, INPUT_UNITS, OPTION_DEFAULTS, OPTIONS, prelude
from .errors import (
    CycleError, DefinitionError, LayercalcError, Notice, UnitError, UnknownNameError,
)
from .functions import AGGREGATE, SCAN, lookup as lookup_function, names as function_names
from .nodes import (
    Binary, Call, Definition, Document, Literal, Name, Note, Option, Scenario, Station, Table,
    Title, Unary, UnitName, UnitNumber, UnitOp, UnitPower,
)
from .source import Source, Span
from .typed import CELL, COLUMN, Formula, Meta, TBinary, TCall, TNumber, TRef, TUnary, references

ARITHMETIC = ("+", "-", "*", "/", "^")
COMPARISONS = ("<", "<=", ">", ">=", "==", "!=")
PLAUSIBLE_TEMPERATURE = (150.0, 340.0)  # K; outside: a warning (coldest/warmest observed air)
MAX_LAYERS = 1_000_000


@dataclass(frozen=True)
class InputColumn:
    name: str
    unit: U.Unit
    values: np.ndarray  # SI, surface layer first
    span: Span


@dataclass(frozen=True)
class InputCell:
    name: str
    unit: U.Unit
    value: float  # SI
    span: Span | None
    given: bool = True


@dataclass
class CheckedSheet:
    source: Source
    title: str
    notes: list[str]
    options: dict[str, str]
    input_columns: dict[str, InputColumn]
    input_cells: dict[str, InputCell]
    formulas: list[Formula]
    layer_count: int
    rows_given_top_first: bool
    notices: list[Notice] = field(default_factory=list)
    remarks: list[str] = field(default_factory=list)
    replaced_defaults: list[str] = field(default_factory=list)
    prelude_text: str = ""
    scenarios: dict = field(default_factory=dict)
    document: Document | None = None
    soundings: object = None  # details of layers built from levels/stations (soundings.py)

    def unit_of(self, name: str, kind: str | None = None) -> U.Unit:
        """The display unit of a column or cell (columns first when `kind` is not given)."""
        if kind in (None, COLUMN) and name in self.input_columns:
            return self.input_columns[name].unit
        for f in self.formulas:
            if f.name == name and f.kind == (kind or COLUMN):
                return f.unit
        if kind in (None, CELL) and name in self.input_cells:
            return self.input_cells[name].unit
        for f in self.formulas:
            if f.name == name and kind in (None, f.kind):
                return f.unit
        raise KeyError(name)

    @property
    def column_names(self) -> list[str]:
        return [*self.input_columns, *(f.name for f in self.formulas if f.kind == COLUMN)]

    @property
    def cell_names(self) -> list[str]:
        return [*self.input_cells, *(f.name for f in self.formulas if f.kind == CELL)]


def _first_of(problems: list[LayercalcError]) -> LayercalcError:
    """The first problem, carrying all of them in `.problems` (for `layercalc check`)."""
    first = problems[0]
    first.problems = list(problems)
    return first


# ---------------------------------------------------------------- units as written
def resolve_unit(node) -> U.Unit:
    if isinstance(node, UnitName):
        return U.lookup(node.symbol, node.span)
    if isinstance(node, UnitNumber):
        return U.number(node.value)
    if isinstance(node, UnitPower):
        return U.power(resolve_unit(node.base), node.exponent, node.span)
    if isinstance(node, UnitOp):
        left, right = resolve_unit(node.left), resolve_unit(node.right)
        if node.op == "*":
            return U.multiply(left, right, node.span)
        return U.divide(left, right, node.span)
    raise AssertionError(f"unit node {node!r}")


def unit_text(source: Source, node) -> str:
    return source.text[node.span.start:node.span.end].strip()


def _written_unit(node) -> U.Unit:
    unit = resolve_unit(node)
    text = node.span.source.text[node.span.start:node.span.end].strip().strip("[]").strip()
    return U.Unit(unit.dimension, unit.scale, unit.offset, text or unit.text)


def parse_unit_string(text: str, where: str = "<unit>") -> U.Unit:
    """A unit given as text (workbook headers, command-line options)."""
    from .build import build_unit
    from .parser import parse_unit_text

    source = Source(where, text)
    return _written_unit(build_unit(source, parse_unit_text(source)))


# ---------------------------------------------------------------- the checker
class _Checker:
    def __init__(self, document: Document, option_overrides: dict | None = None,
                 with_scenarios: bool = True) -> None:
        self.document = document
        self.option_overrides = option_overrides or {}
        self.with_scenarios = with_scenarios
        self.source = document.source
        self.problems: list[LayercalcError] = []
        self.notices: list[Notice] = []

    def fail(self, error: LayercalcError) -> None:
        if isinstance(error, CycleError) and any(
                isinstance(p, CycleError) and set(p.cycle) == set(error.cycle)
                for p in self.problems):
            return  # the same circle, met again from another of its formulas
        self.problems.append(error)

    # -- top level --------------------------------------------------------
    def run(self) -> CheckedSheet:
        title, notes, options, option_spans = "", [], {}, {}
        tables, definitions, scenarios, stations = [], [], [], []
        for st in self.document.statements:
            if isinstance(st, Title):
                title = st.text
            elif isinstance(st, Note):
                notes.append(st.text)
            elif isinstance(st, Option):
                self.option(st, options, option_spans)
            elif isinstance(st, Table):
                tables.append(st)
            elif isinstance(st, Definition):
                definitions.append(st)
            elif isinstance(st, Scenario):
                scenarios.append(st)
            elif isinstance(st, Station):
                stations.append(st)
        for key, value in OPTION_DEFAULTS.items():
            options.setdefault(key, value)
        options.update(self.option_overrides)
        if options["integrate"] == "from_top" and options["adjust"] != "none":
            self.fail(DefinitionError(
                f"'adjust = {options['adjust']}' needs 'integrate = from_surface'",
                option_spans.get("adjust"),
                hint="integrating from the top meets the top boundary by construction; "
                     "adjustment removes the mismatch left by integrating from the surface"))
        table = self.layer_table(tables, stations)
        if table is None:
            columns, n_layers, top_first = {}, 0, False
        elif isinstance(table, Table):
            columns, n_layers, top_first = self.inputs(table)
        else:  # layers built from level tables / station soundings (soundings.py)
            columns, n_layers, top_first = table.columns, table.layer_count, False
        sheet = self.formulas(definitions, columns, n_layers, options)
        sheet.title, sheet.notes, sheet.rows_given_top_first = title, notes, top_first
        sheet.document = self.document
        sheet.soundings = getattr(self, "sounding_details", None)
        if scenarios and self.with_scenarios and not self.problems:
            from .scenarios import check_scenarios

            try:
                sheet.scenarios = check_scenarios(self, sheet, scenarios)
            except LayercalcError as exc:
                self.fail(exc)
        if self.problems:
            raise _first_of(self.problems)
        sheet.notices = self.notices
        return sheet

    def option(self, st: Option, options: dict, spans: dict) -> None:
        if st.name not in OPTIONS:
            close = difflib.get_close_matches(st.name, list(OPTIONS), n=2)
            self.fail(UnknownNameError(f"unknown option '{st.name}'", st.span, close,
                                       hint=None if close else
                                       "options are: " + ", ".join(OPTIONS)))
            return
        allowed = OPTIONS[st.name]
        if st.value not in allowed:
            self.fail(DefinitionError(
                f"option {st.name} cannot be '{st.value}'", st.value_span,
                hint=f"choose one of: {', '.join(allowed)}"))
            return
        if st.name in options:
            self.fail(DefinitionError(f"option {st.name} is set twice", st.span))
        options[st.name] = st.value
        spans[st.name] = st.span

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
            from .soundings import layers_from_soundings

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
        for row, span in zip(table.rows, table.row_spans):
            if len(row) != width:
                self.fail(DefinitionError(
                    f"this row has {len(row)} values but the header names {width} columns",
                    span, hint="give one number per column, separated by spaces"))
                return {}, 0, False
        data = np.array(table.rows, dtype=float).reshape(len(table.rows), width)
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
            bad = np.flatnonzero(~np.isfinite(values))
            if bad.size:
                i = int(bad[0])
                what = "missing ('-')" if math.isnan(values[i]) else "too large to be a number"
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
        self.plausibility(table, columns)
        return columns, len(table.rows), top_first

    def heading_unit(self, heading) -> U.Unit:
        if heading.unit is not None:
            return _written_unit(heading.unit)
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
        for i in range(len(pb)):
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
        order = getattr(self, "row_order", np.arange(len(table.rows)))
        names = [h.name for h in table.headings]
        lo, hi = PLAUSIBLE_TEMPERATURE
        for name in ("T", "Td"):
            col = columns.get(name)
            if col is None or not U.same_dimension(col.unit.dimension, U.lookup("K").dimension):
                continue
            for k, value in enumerate(col.values):
                span = entry_span(table, int(order[k]), names.index(name))
                if value <= 0:
                    self.fail(DefinitionError(
                        f"{name} is below absolute zero ({value:.2f} K)", span,
                        hint="check the unit in the header ([degC] or [K])"))
                    return
                if not lo <= value <= hi:
                    self.notices.append(Notice(
                        f"{name} = {value - 273.15:.1f} degC is outside the plausible range "
                        f"{lo - 273.15:.0f} to {hi - 273.15:.0f} degC", span))
        if "T" in columns and "Td" in columns:
            over = np.flatnonzero(columns["Td"].values > columns["T"].values + 1e-9)
            for k in over[:3]:
                self.notices.append(Notice("dewpoint above temperature (supersaturated)",
                                           table.row_spans[int(order[k])]))

    # -- formulas ---------------------------------------------------------------
    def formulas(self, definitions, columns, n_layers, options) -> CheckedSheet:
        cells: dict[str, InputCell] = {}
        derived: dict[tuple[str, str], Definition] = {}
        for d in definitions:
            key = (d.kind, d.name)
            if d.name in CONSTANTS:
                self.fail(DefinitionError(f"'{d.name}' is a constant and cannot be redefined",
                                          d.name_span))
                continue
            if key in derived or (d.kind == COLUMN and d.name in columns) or (
                    d.kind == CELL and d.name in cells):
                self.fail(DefinitionError(f"{d.kind} '{d.name}' is defined twice", d.name_span))
                continue
            if d.kind == CELL and _is_constant(d.expr):
                cell = self.input_cell(d)
                if cell is not None:
                    cells[d.name] = cell
            else:
                derived[key] = d
        names = set(columns) | set(cells) | {n for _, n in derived}
        text, remarks = prelude(names, options)
        defaults_source = Source("<defaults>", text)
        default_defs = self.prelude_definitions(defaults_source)
        replaced = []
        formulas_in: dict[tuple[str, str], tuple[Definition, bool]] = {}
        for d in default_defs:
            key = (d.kind, d.name)
            user = key in derived or (d.kind == COLUMN and d.name in columns) or (
                d.kind == CELL and d.name in cells)
            if user:
                if key == ("cell", "omega_surface") and options["integrate"] == "from_top" \
                        and d.name in cells:
                    self.fail(DefinitionError(
                        "omega_surface is computed when integrating from the top",
                        cells[d.name].span,
                        hint="remove it, or add 'option integrate = from_surface' to impose it"))
                replaced.append(d.name)
                continue
            formulas_in[key] = (d, True)
        for key, d in derived.items():
            formulas_in[key] = (d, False)
        referenced = _referenced_names(default_defs)
        for name, text_value in CELL_DEFAULTS.items():
            if name not in cells and name in referenced and (CELL, name) not in formulas_in:
                unit = parse_unit_string(text_value.split(" ", 1)[1].strip("[]"))
                value = float(text_value.split(" ", 1)[0])
                cells[name] = InputCell(name, unit, unit.to_si(value), None, given=False)
                if name == "surface_height" and "T" in columns:
                    remarks.append("surface_height not given: heights start at 0 m")
        sheet = CheckedSheet(self.source, "", [], dict(options), columns, cells, [], n_layers,
                             False, remarks=remarks, replaced_defaults=replaced,
                             prelude_text=text)
        self.compile_all(sheet, formulas_in)
        return sheet

    def input_cell(self, d: Definition) -> InputCell | None:
        try:
            value, unit = _constant_value(d.expr)
            if d.unit is not None:
                declared = _written_unit(d.unit)
                self.same(declared.dimension, unit.dimension, d.expr.span,
                          f"cell {d.name} [{declared.text}]", "its value")
                unit = U.Unit(declared.dimension, declared.scale, declared.offset, declared.text)
                value_si = _constant_si(d.expr)
            else:
                value_si = _constant_si(d.expr)
            return InputCell(d.name, unit, value_si, d.span)
        except LayercalcError as exc:
            self.fail(exc)
            return None

    def prelude_definitions(self, source: Source) -> list[Definition]:
        from .build import build_document
        from .parser import parse

        return [s for s in build_document(source, parse(source)).statements
                if isinstance(s, Definition)]

    def compile_all(self, sheet: CheckedSheet, formulas_in) -> None:
        graph: dict[tuple[str, str], set[tuple[str, str]]] = {}
        compiled: dict[tuple[str, str], Formula] = {}
        failed: set[tuple[str, str]] = set()
        self.sheet = sheet
        self.formula_keys = set(formulas_in)
        self.formula_defs = formulas_in
        for key, (d, is_default) in formulas_in.items():
            try:
                formula = self.compile_definition(d, is_default)
            except _Poisoned:
                failed.add(key)
                continue
            except LayercalcError as exc:
                self.fail(exc)
                failed.add(key)
                continue
            compiled[key] = formula
            graph[key] = {r for r in references(formula.expr) if r in formulas_in}
        sorter = graphlib.TopologicalSorter(graph)
        try:
            order = list(sorter.static_order())
        except graphlib.CycleError as exc:
            cycle = [name for _, name in exc.args[1]]
            first = formulas_in[exc.args[1][0]][0]
            self.fail(CycleError("formulas depend on each other in a circle: "
                                 + " -> ".join(cycle), first.name_span, cycle,
                                 hint="one of them must be computed from other values"))
            return
        sheet.formulas = [compiled[k] for k in order if k in compiled]

    def compile_definition(self, d: Definition, is_default: bool) -> Formula:
        self.current_kind = d.kind
        expr = self.expr(d.expr, prefer_columns=d.kind == COLUMN)
        if expr.meta.shape == COLUMN and d.kind == CELL:
            raise DefinitionError(
                f"cell {d.name} gives one value per layer", d.expr.span,
                hint="wrap the column in an aggregate: sum, mean, min, max, lowest_layer, "
                     "highest_layer, at_min or at_max; or make it a column")
        if d.unit is not None:
            unit = _written_unit(d.unit)
            self.same(unit.dimension, expr.meta.dimension, d.expr.span,
                      f"{d.kind} {d.name} [{unit.text}]", "its formula", declared_first=True)
        else:
            unit = _si_unit(expr.meta.dimension)
        text = d.span.source.text[d.span.start:d.span.end].strip()
        return Formula(d.kind, d.name, expr, unit, d.span, is_default, text)

    # -- expressions ------------------------------------------------------------
    def expr(self, node, prefer_columns: bool, affine_as_difference: bool = False):
        if isinstance(node, Literal):
            return self.literal(node, affine_as_difference)
        if isinstance(node, Name):
            return self.name(node, prefer_columns)
        if isinstance(node, Unary):
            return self.unary(node, prefer_columns, affine_as_difference)
        if isinstance(node, Binary):
            return self.binary(node, prefer_columns, affine_as_difference)
        if isinstance(node, Call):
            return self.call(node, prefer_columns, affine_as_difference)
        raise AssertionError(f"expression node {node!r}")

    def literal(self, node: Literal, affine_as_difference: bool):
        if node.unit is None:
            return TNumber(Meta(node.span, U.DIMENSIONLESS, CELL), node.value, _text(node))
        unit = _written_unit(node.unit)
        if unit.affine and affine_as_difference:
            value = node.value * unit.scale
        else:
            value = unit.to_si(node.value)
        meta = Meta(node.span, unit.dimension, CELL)
        return TNumber(meta, value, _text(node), affine=unit.affine and not affine_as_difference)

    def name(self, node: Name, prefer_columns: bool):
        sheet = self.sheet
        name = node.name
        is_column = name in sheet.input_columns or (COLUMN, name) in self.formula_keys
        is_cell = name in sheet.input_cells or (CELL, name) in self.formula_keys
        if is_column and (prefer_columns or not is_cell):
            kind = "input_column" if name in sheet.input_columns else "column"
            dim = self.dimension_of(COLUMN, name, node)
            return TRef(Meta(node.span, dim, COLUMN), kind, name)
        if is_cell:
            kind = "input_cell" if name in sheet.input_cells else "cell"
            dim = self.dimension_of(CELL, name, node)
            return TRef(Meta(node.span, dim, CELL), kind, name)
        if name in CONSTANTS:
            value, unit_text_value, _ = CONSTANTS[name]
            unit = parse_unit_string(unit_text_value)
            return TRef(Meta(node.span, unit.dimension, CELL), "constant", name)
        known = [*sheet.input_columns, *sheet.input_cells, *(n for _, n in self.formula_keys),
                 *CONSTANTS]
        close = difflib.get_close_matches(name, known, n=3, cutoff=0.6)
        hint = None
        if name in U.UNIT_TABLE and not close:
            hint = (f"'{name}' is a unit here, not a value: put compound units in brackets, "
                    f"e.g. 10 [m/{name}]")
        raise UnknownNameError(f"unknown name '{name}'", node.span, close, hint=hint)

    def dimension_of(self, kind: str, name: str, node) -> object:
        sheet = self.sheet
        if kind == COLUMN and name in sheet.input_columns:
            return sheet.input_columns[name].unit.dimension
        if kind == CELL and name in sheet.input_cells:
            return sheet.input_cells[name].unit.dimension
        cache = self.__dict__.setdefault("dim_cache", {})
        key = (kind, name)
        if key in cache:
            if cache[key] is None:
                raise _CycleSignal(key)
            return cache[key]
        d, _ = self.formula_defs[key]
        if d.unit is not None:
            dim = _written_unit(d.unit).dimension
            cache[key] = dim
            return dim
        cache[key] = None  # in progress
        try:
            saved = getattr(self, "current_kind", None)
            expr = self.expr(d.expr, prefer_columns=d.kind == COLUMN)
            self.current_kind = saved
        except _CycleSignal as signal:
            del cache[key]
            raise CycleError(
                f"formulas depend on each other in a circle through '{name}' "
                f"(and '{signal.key[1]}')", d.name_span, [name, signal.key[1]],
                hint="one of them must be computed from other values") from None
        except CycleError:
            del cache[key]
            raise
        except LayercalcError:
            del cache[key]
            raise _Poisoned() from None
        cache[key] = expr.meta.dimension
        return expr.meta.dimension

    def unary(self, node: Unary, prefer_columns: bool, diff: bool):
        operand = self.expr(node.operand, prefer_columns, diff)
        if node.op == "not":
            self.need_condition(operand, "not")
            return TUnary(Meta(node.span, U.DIMENSIONLESS, operand.meta.shape, True), "not",
                          operand)
        self.need_number(operand, node.op)
        self.refuse_affine(operand, "negated")
        return TUnary(Meta(node.span, operand.meta.dimension, operand.meta.shape), node.op,
                      operand)

    def binary(self, node: Binary, prefer_columns: bool, diff: bool):
        left = self.expr(node.left, prefer_columns, diff)
        right = self.expr(node.right, prefer_columns, diff)
        shape = COLUMN if COLUMN in (left.meta.shape, right.meta.shape) else CELL
        op = node.op
        if op in ("and", "or"):
            self.need_condition(left, op)
            self.need_condition(right, op)
            return TBinary(Meta(node.span, U.DIMENSIONLESS, shape, True), op, left, right)
        self.need_number(left, op)
        self.need_number(right, op)
        if op in ("+", "-") or op in COMPARISONS:
            verb = {"+": "add", "-": "subtract"}.get(op, "compare")
            if not U.same_dimension(left.meta.dimension, right.meta.dimension):
                self.mismatch(node, left, right, verb)
            return TBinary(Meta(node.span, left.meta.dimension, shape, op in COMPARISONS),
                           op, left, right)
        if op in ("*", "/"):
            self.refuse_affine(left, "multiplied or divided")
            self.refuse_affine(right, "multiplied or divided")
            dim = left.meta.dimension * right.meta.dimension if op == "*" else \
                left.meta.dimension / right.meta.dimension
            return TBinary(Meta(node.span, dim, shape), op, left, right)
        # power
        self.refuse_affine(left, "raised to a power")
        if not U.is_dimensionless(right.meta.dimension):
            raise UnitError(f"an exponent must be dimensionless, not "
                            f"{_article(U.dimension_name(right.meta.dimension))}", right.meta.span)
        if U.is_dimensionless(left.meta.dimension):
            return TBinary(Meta(node.span, U.DIMENSIONLESS, shape), op, left, right)
        exponent = _constant_number(node.right)
        if exponent is None:
            raise UnitError(
                f"a {U.dimension_name(left.meta.dimension)} can only be raised to a fixed "
                f"number", right.meta.span,
                hint="write the exponent as a number, e.g. x^2 or x^0.5")
        from sympy import Rational

        frac = Fraction(exponent).limit_denominator(1000)
        dim = left.meta.dimension ** Rational(frac.numerator, frac.denominator)
        return TBinary(Meta(node.span, dim, shape), op, left, right)

    def call(self, node: Call, prefer_columns: bool, diff: bool):
        function = lookup_function(node.function, len(node.args))
        span = node.name_span or node.span
        if function is None:
            close = difflib.get_close_matches(node.function, function_names(), n=3, cutoff=0.6)
            raise UnknownNameError(f"unknown function '{node.function}'", span, close,
                                   hint=None if close else
                                   "functions: " + ", ".join(function_names()))
        low, high = function.arity
        n = len(node.args)
        if n < low or (high is not None and n > high):
            want = f"{low}" if low == high else (f"at least {low}" if high is None else
                                                 f"{low} to {high}")
            raise DefinitionError(f"{node.function} takes {want} argument"
                                  f"{'s' if want != '1' else ''}, not {n}", node.span,
                                  hint=function.summary)
        inner_columns = prefer_columns or function.layer_rule in (AGGREGATE, SCAN)
        args = [self.expr(a, inner_columns, diff) for a in node.args]
        for i, a in enumerate(args):
            if function.condition_first and i == 0:
                self.need_condition(a, node.function)
            else:
                self.need_number(a, node.function)
        dim = self.call_dimension(function, args, node)
        if function.layer_rule == AGGREGATE:
            shape = CELL
        elif function.layer_rule == SCAN:
            shape = COLUMN
        else:
            shape = COLUMN if any(a.meta.shape == COLUMN for a in args) else CELL
        return TCall(Meta(node.span, dim, shape), function, tuple(args))

    def call_dimension(self, function, args, node):
        rule = function.dimension
        numeric = args[1:] if function.condition_first else args
        if rule == "dimensionless":
            for a in numeric:
                if not U.is_dimensionless(a.meta.dimension):
                    raise UnitError(
                        f"{function.name} needs a dimensionless argument, not "
                        f"{_article(U.dimension_name(a.meta.dimension))}", a.meta.span,
                        found=U.dimension_name(a.meta.dimension), expected="dimensionless",
                        hint="divide by a reference value first, e.g. ln(p_bottom / p_top)")
            return U.DIMENSIONLESS
        if rule == "sqrt":
            self.refuse_affine(numeric[0], "passed to sqrt")
            from sympy import Rational

            return numeric[0].meta.dimension ** Rational(1, 2)
        if rule == "same":
            first = numeric[0]
            for a in numeric[1:]:
                if not U.same_dimension(first.meta.dimension, a.meta.dimension):
                    self.mismatch(node, first, a, f"use together in {function.name}")
            return first.meta.dimension
        if rule == "first":
            return args[function.result_like].meta.dimension
        expected, result = rule
        for a, want in zip(args, expected):
            if U.dimension_name(a.meta.dimension) != want:
                raise UnitError(
                    f"{function.name} needs {_article(want)} here, not "
                    f"{_article(U.dimension_name(a.meta.dimension))}", a.meta.span,
                    found=U.dimension_name(a.meta.dimension), expected=want,
                    hint=function.summary)
        return _named_dimension(result)

    # -- helpers -----------------------------------------------------------------
    def same(self, a, b, span, a_text, b_text, declared_first=False):
        if not U.same_dimension(a, b):
            raise UnitError(
                f"{a_text} is {_article(U.dimension_name(a))} but {b_text} gives "
                f"{_article(U.dimension_name(b))}", span,
                found=U.dimension_name(b), expected=U.dimension_name(a),
                hint="change the unit in brackets or the formula")

    def mismatch(self, node, left, right, verb):
        ln, rn = U.dimension_name(left.meta.dimension), U.dimension_name(right.meta.dimension)
        source = node.span.source
        lt = source.text[left.meta.span.start:left.meta.span.end]
        rt = source.text[right.meta.span.start:right.meta.span.end]
        if verb in ("add", "subtract"):
            message = f"cannot {verb} {_article(rn)} {'to' if verb == 'add' else 'from'} " \
                      f"{_article(ln)}"
        else:
            message = f"cannot {verb} {_article(ln)} with {_article(rn)}"
        raise UnitError(message, node.span, found=rn, expected=ln,
                        hint=f"{lt.strip()} is {_article(ln)}; {rt.strip()} is {_article(rn)}")

    def need_condition(self, node, op):
        if not node.meta.condition:
            raise DefinitionError(f"'{op}' needs a condition (a comparison such as T > 0 degC)",
                                  node.meta.span)

    def need_number(self, node, op):
        if node.meta.condition:
            raise DefinitionError(
                f"a condition (true/false) cannot be used with '{op}'", node.meta.span,
                hint="use where(condition, value_if_true, value_if_false)")

    def refuse_affine(self, node, verb):
        if isinstance(node, TNumber) and node.affine:
            raise UnitError(
                f"a degC value cannot be {verb}", node.meta.span,
                hint="degC is an offset scale: a degC number is an absolute temperature; "
                     "write differences and products in K")


class _Poisoned(Exception):
    """A formula reads another that has its own (already reported) error."""


class _CycleSignal(Exception):
    def __init__(self, key):
        self.key = key


# ---------------------------------------------------------------- small helpers
def _article(words: str) -> str:
    return ("an " if words[:1] in "aeiou" else "a ") + words


def _text(node) -> str:
    return node.span.source.text[node.span.start:node.span.end].strip()


def _named_dimension(name: str):
    for named, dim in U._DIMENSION_NAMES:
        if named == name:
            return dim
    raise AssertionError(name)


def _si_unit(dimension) -> U.Unit:
    text = {"dimensionless": "1", "pressure": "Pa", "temperature": "K", "length": "m",
            "time": "s", "speed": "m/s", "inverse time (e.g. divergence)": "s^-1",
            "pressure per time (e.g. omega)": "Pa/s", "mass": "kg"}.get(
        U.dimension_name(dimension), "SI")
    return U.Unit(dimension, 1.0, 0.0, text)


def _is_constant(expr) -> bool:
    if isinstance(expr, Literal):
        return True
    if isinstance(expr, Unary) and expr.op in "-+":
        return _is_constant(expr.operand)
    return False


def _constant_value(expr):
    if isinstance(expr, Literal):
        unit = _written_unit(expr.unit) if expr.unit is not None else U.ONE
        return expr.value, unit
    value, unit = _constant_value(expr.operand)
    if unit.affine and expr.op == "-":
        return -value, unit  # -5 degC is a temperature, not a negated one
    return (-value if expr.op == "-" else value), unit


def _constant_si(expr) -> float:
    value, unit = _constant_value(expr)
    return float(unit.to_si(value))


def _constant_number(expr) -> float | None:
    if isinstance(expr, Literal) and expr.unit is None:
        return expr.value
    if isinstance(expr, Unary) and expr.op in "-+":
        inner = _constant_number(expr.operand)
        return None if inner is None else (-inner if expr.op == "-" else inner)
    if isinstance(expr, Binary) and expr.op == "/":
        a, b = _constant_number(expr.left), _constant_number(expr.right)
        if a is not None and b:
            return a / b
    return None


def _referenced_names(definitions) -> set[str]:
    found = set()
    stack = [d.expr for d in definitions]
    while stack:
        node = stack.pop()
        if isinstance(node, Name):
            found.add(node.name)
        elif isinstance(node, Unary):
            stack.append(node.operand)
        elif isinstance(node, Binary):
            stack.extend((node.left, node.right))
        elif isinstance(node, Call):
            stack.extend(node.args)
    return found


def entry_span(table: Table, row: int, column: int) -> Span:
    """The span of one number in a table row (found by splitting the row's text)."""
    span = table.row_spans[row]
    text = span.source.text[span.start:span.end]
    offset, index = 0, -1
    for index_, piece in enumerate(text.split()):
        offset = text.index(piece, offset)
        if index_ == column:
            return Span(span.source, span.start + offset, span.start + offset + len(piece))
        offset += len(piece)
    return span


def check_document(document: Document) -> CheckedSheet:
    return _Checker(document).run()
