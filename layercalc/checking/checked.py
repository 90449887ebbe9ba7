"""What the checker produces: input columns and cells in SI, the checked sheet, and the
helpers that turn written units into Unit objects."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from layercalc.language import units as U
from layercalc.errors import LayercalcError, Notice
from layercalc.language.nodes import Document, UnitName, UnitNumber, UnitOp, UnitPower
from layercalc.source import Source, Span
from layercalc.language.typed import CELL, COLUMN, Formula


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


def written_unit(node) -> U.Unit:
    import math

    from layercalc.errors import UnitError

    unit = resolve_unit(node)
    text = node.span.source.text[node.span.start:node.span.end].strip().strip("[]").strip()
    if not (math.isfinite(unit.scale) and unit.scale > 0):
        raise UnitError(f"the unit [{text}] has the factor {unit.scale:g}; a unit's factor "
                        "must be a positive number", node.span,
                        hint="write a scaled unit like [1e-5 s^-1] or [10 m]")
    return U.Unit(unit.dimension, unit.scale, unit.offset, text or unit.text)


def parse_unit_string(text: str, where: str = "<unit>") -> U.Unit:
    """A unit given as text (workbook headers, command-line options)."""
    from layercalc.language.build import build_unit
    from layercalc.language.parser import parse_unit_text

    source = Source(where, text)
    return written_unit(build_unit(source, parse_unit_text(source)))


