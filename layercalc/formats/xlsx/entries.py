"""The model a results sheet is written from: a grid of entries, each with its live formula
and the number layercalc computed, so that the live sheet and its plain-number twin are
written cell for cell in the same place (used by layout, summary_cells, scenarios, export)."""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass
class Entry:
    """One sheet cell: `value` goes to the values twin (and to the live sheet when there is
    no formula); `formula` is the live formula text without the leading '='."""

    value: object = None
    formula: str | None = None
    style: str = "value"
    number_format: str | None = None
    comment: str | None = None


@dataclass
class ChartSpec:
    title: str
    series: list  # (label, x column, y column, first row, last row)
    x_title: str
    y_title: str
    y_range: tuple[float, float]
    anchor: str


@dataclass
class Grid:
    name: str
    values_name: str
    entries: dict = field(default_factory=dict)  # (row, column number) -> Entry
    freeze: str | None = None
    chart: ChartSpec | None = None
    cell_rows: dict = field(default_factory=dict)  # derived cell name -> row
    print_columns: int | None = None  # columns printed (inputs and derived, no helpers)
    chart_row: int | None = None  # first row of the chart's own page
    row_check: tuple | None = None  # (row, column, layers column letter, layers) of the check
    # row -> (column, last column) of a text merged over the columns up to the last one
    # (None: the last printed column) and wrapped there (style "wrapped", "check", "header")
    wrapped: dict = field(default_factory=dict)

    def put(self, row: int, column: int, entry: Entry) -> None:
        self.entries[(row, column)] = entry
