"""Nodes -> a checked sheet: names resolved, formula order found, dimensions derived with sympy
and compared, SI factors recorded. No layer arithmetic happens here beyond reading the table.

The work is shared by three modules: this one (statements, options, formulas and their
order), tables.py (the layers table) and expressions.py (typing expressions)."""

from __future__ import annotations

import graphlib
from dataclasses import replace
import math

from layercalc.names import close_names
from layercalc.checking.checked import CheckedSheet, first_with_all
from layercalc.checking.expressions import (
    POISONED, ExpressionChecker, Poisoned, constant_si, constant_value, is_constant, referenced_names,
)
from layercalc.checking.tables import TableChecker
from layercalc.constants import CONSTANTS
from layercalc.errors import (
    CycleError, DefinitionError, LayercalcError, Notice, UnitError, UnknownNameError,
)
from layercalc.language import units as U
from layercalc.language.defaults import (
    CELL_DEFAULTS, CELL_DIMENSIONS, INPUT_DIMENSIONS, OPTION_DEFAULTS, OPTIONS, prelude,
)
from layercalc.language.inputs import InputCell
from layercalc.language.nodes import (
    Definition, Document, Note, Option, Scenario, Station, Table, Title,
)
from layercalc.language.typed import CELL, COLUMN, Formula, references
from layercalc.language.unit_text import parse_unit_string, written_unit
from layercalc.source import Source


# ---------------------------------------------------------------- the checker
class Checker(TableChecker, ExpressionChecker):
    def __init__(self, document: Document, option_overrides: dict | None = None,
                 with_scenarios: bool = True) -> None:
        self.document = document
        self.option_overrides = option_overrides or {}
        self.with_scenarios = with_scenarios
        self.source = document.source
        self.problems: list[LayercalcError] = []
        self.notices: list[Notice] = []
        # State the mixins share, declared here (tables.py and expressions.py use it):
        self.dim_cache: dict = {}         # formula key -> derived dimension (None: in progress)
        self.row_order = None             # the layer table's rows, surface first (tables.py)
        self.sounding_details = None      # levels/stations details for the outputs (tables.py)

    def fail(self, error: LayercalcError) -> None:
        if isinstance(error, CycleError) and any(
                isinstance(p, CycleError) and set(p.cycle) == set(error.cycle)
                for p in self.problems):
            return  # the same circle, met again from another of its formulas
        self.problems.append(error)

    # -- top level --------------------------------------------------------
    def run(self) -> CheckedSheet:
        from layercalc.checking.lengths import length_problems

        too_long = length_problems(self.document)
        if too_long:  # before any other work
            raise first_with_all(too_long)
        title, notes, options, option_spans = "", [], {}, {}
        tables, definitions, scenarios, stations = [], [], [], []
        for st in self.document.statements:
            if isinstance(st, Title):
                if title:
                    self.fail(DefinitionError("a sheet has one title; this is a second one",
                                              st.span, hint="use note lines for more text"))
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
        sheet = replace(self.formulas(definitions, columns, n_layers, options), title=title,
                        notes=notes, rows_given_top_first=top_first, document=self.document,
                        soundings=self.sounding_details)
        if scenarios and self.with_scenarios and not self.problems:
            from layercalc.checking.scenarios import check_scenarios

            try:
                sheet = replace(sheet, scenarios=check_scenarios(self, sheet, scenarios))
            except LayercalcError as exc:
                self.fail(exc)
        if self.problems:
            raise first_with_all(self.problems)
        return replace(sheet, notices=self.notices)

    def option(self, st: Option, options: dict, spans: dict) -> None:
        if st.name not in OPTIONS:
            close = close_names(st.name, OPTIONS, 2)
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
            if d.kind == CELL and is_constant(d.expr):
                cell = self.input_cell(d)
                if cell is not None:
                    cells[d.name] = cell
            else:
                derived[key] = d
        inputs_ok = self.canonical_inputs(columns, cells)
        if inputs_ok:
            self.surface_pressure_notice(columns, cells)
            self.surface_height_notice(columns, cells)
        names = set(columns) | set(cells) | {n for _, n in derived}
        text, remarks = prelude(names, options) if inputs_ok else ("", [])
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
        referenced = referenced_names(default_defs)
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
        return replace(sheet, formulas=self.compile_all(sheet, formulas_in))

    def canonical_inputs(self, columns, cells) -> bool:
        """The inputs the built-in diagnostics read must have the dimension they expect;
        a mismatch is reported where the user wrote it (and the built-in formulas, which
        would only repeat it, are not compiled)."""
        ok = True
        for table, expected, what in ((columns, INPUT_DIMENSIONS, "column"),
                                      (cells, CELL_DIMENSIONS, "cell")):
            for name, item in table.items():
                if name not in expected:
                    continue
                want = parse_unit_string(expected[name])
                if not U.same_dimension(item.unit.dimension, want.dimension):
                    got = U.dimension_name(item.unit.dimension)
                    need = U.dimension_name(want.dimension)
                    self.fail(UnitError(
                        f"{what} {name} must be {U.with_article(need)}, "
                        f"not {U.with_article(got)} [{item.unit.text}]",
                        item.span, found=got, expected=need,
                        hint=f"give it a unit such as [{expected[name]}]"))
                    ok = False
        return ok

    def input_cell(self, d: Definition) -> InputCell | None:
        try:
            value, unit = constant_value(d.expr)
            if d.unit is not None:
                declared = written_unit(d.unit)
                self.same(declared.dimension, unit.dimension, d.expr.span,
                          f"cell {d.name} [{declared.text}]", "its value")
                unit = U.Unit(declared.dimension, declared.scale, declared.offset, declared.text)
                value_si = constant_si(d.expr)
            else:
                value_si = constant_si(d.expr)
            if not math.isfinite(value_si):
                raise DefinitionError(f"cell {d.name} is too large to be a number", d.expr.span,
                                      hint="give a finite value")
            return InputCell(d.name, unit, value_si, d.span)
        except LayercalcError as exc:
            self.fail(exc)
            return None

    def prelude_definitions(self, source: Source) -> list[Definition]:
        from layercalc.language.build import build_document
        from layercalc.language.parser import parse

        return [s for s in build_document(source, parse(source)).statements
                if isinstance(s, Definition)]

    def compile_all(self, sheet: CheckedSheet, formulas_in) -> list[Formula]:
        """The formulas compiled and in dependency order (none when they form a circle)."""
        graph: dict[tuple[str, str], set[tuple[str, str]]] = {}
        compiled: dict[tuple[str, str], Formula] = {}
        failed: set[tuple[str, str]] = set()
        self.sheet = sheet
        self.formula_keys = set(formulas_in)
        self.formula_defs = formulas_in
        in_defaults: list[LayercalcError] = []
        # Type the formulas in dependency order (found from the untyped expressions), so
        # that each reads only formulas already typed: a chain of any length needs no
        # recursion, and a circle is reported before any typing.
        needs = {key: {r for r in self.formula_references(d.expr, d.kind == COLUMN)
                       if r in formulas_in}
                 for key, (d, _) in formulas_in.items()}
        try:
            typing_order = list(graphlib.TopologicalSorter(needs).static_order())
        except graphlib.CycleError as exc:
            self.fail(self.cycle_error(exc, formulas_in))
            return []
        outcomes: dict = {}
        for key in typing_order:
            d, is_default = formulas_in[key]
            try:
                outcomes[key] = self.compile_definition(d, is_default)
            except (Poisoned, LayercalcError) as exc:
                outcomes[key] = exc
            if d.unit is None:
                done = outcomes[key]
                self.dim_cache[key] = (done.expr.meta.dimension
                                       if isinstance(done, Formula) else POISONED)
        for key, (d, is_default) in formulas_in.items():  # problems in the order written
            try:
                formula = outcomes[key]
                if not isinstance(formula, Formula):
                    raise formula
            except Poisoned:
                failed.add(key)
                continue
            except LayercalcError as exc:
                if is_default and not isinstance(exc, CycleError):
                    in_defaults.append(exc)
                else:
                    self.fail(exc)
                failed.add(key)
                continue
            compiled[key] = formula
            graph[key] = {r for r in references(formula.expr) if r in formulas_in}
        sorter = graphlib.TopologicalSorter(graph)
        try:
            order = list(sorter.static_order())
        except graphlib.CycleError as exc:
            self.fail(self.cycle_error(exc, formulas_in))
            return []
        ordered = [compiled[k] for k in order if k in compiled]
        if in_defaults and not self.problems:
            self.blame_user_definitions(in_defaults, formulas_in)
        return ordered

    @staticmethod
    def cycle_error(exc: graphlib.CycleError, formulas_in) -> CycleError:
        cycle = [name for _, name in exc.args[1]]
        first = formulas_in[exc.args[1][0]][0]
        shown = cycle if len(cycle) <= 9 else [
            *cycle[:4], f"... ({len(cycle) - 1} formulas in all)", *cycle[-2:]]
        return CycleError("formulas depend on each other in a circle: " + " -> ".join(shown),
                          first.name_span, cycle,
                          hint="one of them must be computed from other values")

    def blame_user_definitions(self, errors, formulas_in) -> None:
        """A built-in formula fails only because of something the user defined under a
        name it reads (a column of another dimension, say): report it at that definition."""
        formulas = {d.name: d.name_span for d, default in formulas_in.values() if not default}
        user = {name: col.span for name, col in self.sheet.input_columns.items()}
        user.update({name: cell.span for name, cell in self.sheet.input_cells.items()
                     if cell.span is not None})
        user.update(formulas)
        for exc in errors:
            d = next((d for d, default in formulas_in.values() if default and exc.span
                      and d.span.start <= exc.span.start < d.span.end), None)
            if d is None:
                self.fail(exc)
                continue
            read = sorted(referenced_names([d]) & set(user),
                          key=lambda n: (n not in formulas, user[n].start))
            span = user[read[0]] if read else None
            text = d.span.source.text[d.span.start:d.span.end].strip()
            self.fail(DefinitionError(
                f"the built-in formula for '{d.name}' cannot use "
                + (f"your '{read[0]}'" if read else "your definitions") + f": {exc.message}",
                span, hint=f"the built-in formula is: {text}; give '{read[0] if read else d.name}'"
                           " the unit it expects, rename yours, or define "
                           f"'{d.name}' yourself"))

    def compile_definition(self, d: Definition, is_default: bool) -> Formula:
        expr = self.expr(d.expr, prefer_columns=d.kind == COLUMN)
        if expr.meta.shape == COLUMN and d.kind == CELL:
            raise DefinitionError(
                f"cell {d.name} gives one value per layer", d.expr.span,
                hint="wrap the column in an aggregate: sum, mean, min, max, lowest_layer, "
                     "highest_layer, at_min or at_max; or make it a column")
        if d.unit is not None:
            unit = written_unit(d.unit)
            self.same(unit.dimension, expr.meta.dimension, d.expr.span,
                      f"{d.kind} {d.name} [{unit.text}]", "its formula", declared_first=True)
        else:
            unit = U.si_unit(expr.meta.dimension)
        text = d.span.source.text[d.span.start:d.span.end].strip()
        return Formula(d.kind, d.name, expr, unit, d.span, is_default, text)

def check_document(document: Document) -> CheckedSheet:
    return Checker(document).run()


def check_with_options(document: Document, options: dict[str, str]) -> CheckedSheet:
    """The base sheet of `document` checked again with other options (a scenario may switch
    integrate/adjust); its scenarios are not checked again."""
    return Checker(document, option_overrides=options, with_scenarios=False).run()
