"""What the checker produces: the checked sheet (input columns and cells in SI, formulas in
order, scenarios, notices)."""

from __future__ import annotations

from dataclasses import dataclass, field


from layercalc.errors import LayercalcError, Notice
from layercalc.language import units as U
from layercalc.language.inputs import InputCell, InputColumn
from layercalc.language.nodes import Document
from layercalc.language.typed import CELL, COLUMN, Formula
from layercalc.source import Source


# The remark for a layers table given top first (the report and the JSON say it alike).
TOP_FIRST_REMARK = "the layers were given top first; they are computed surface first"


@dataclass(frozen=True)
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
    # the same sheet checked with other options, by sorted option items (evaluation/scenarios)
    option_variants: dict = field(default_factory=dict, repr=False)
    # uncertainty assessments by variant name (evaluation/uncertainty.assess_sheet)
    uncertainty: dict = field(default_factory=dict, repr=False)
    # the evaluator's plan of shared subexpressions, by id of `formulas` (evaluation/engine)
    evaluation_plans: dict = field(default_factory=dict, repr=False)

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


def first_with_all(problems: list[LayercalcError]) -> LayercalcError:
    """The first problem, carrying all of them in `.problems` (for `layercalc check`)."""
    first = problems[0]
    first.problems = list(problems)
    return first
