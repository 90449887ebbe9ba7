"""Frozen AST nodes of the column language. Every node carries its span first."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Optional, Union

import numpy as np

from layercalc.language.table_body import TableNumbers
from layercalc.source import Source, Span


# ---- units as written ----
@dataclass(frozen=True)
class UnitName:
    span: Span
    symbol: str


@dataclass(frozen=True)
class UnitNumber:
    span: Span
    value: float


@dataclass(frozen=True)
class UnitOp:
    span: Span
    op: str  # "*" or "/"
    left: "UnitNode"
    right: "UnitNode"


@dataclass(frozen=True)
class UnitPower:
    span: Span
    base: "UnitNode"
    exponent: int


UnitNode = Union[UnitName, UnitNumber, UnitOp, UnitPower]


# ---- expressions ----
@dataclass(frozen=True)
class Literal:
    span: Span
    value: float
    unit: Optional[UnitNode] = None


@dataclass(frozen=True)
class Name:
    span: Span
    name: str


@dataclass(frozen=True)
class Call:
    span: Span
    function: str
    args: tuple["Expr", ...]
    name_span: Optional[Span] = None


@dataclass(frozen=True)
class Unary:
    span: Span
    op: str  # "-", "+", "not"
    operand: "Expr"


@dataclass(frozen=True)
class Binary:
    span: Span
    op: str  # + - * / ^ < <= > >= == != and or
    left: "Expr"
    right: "Expr"


Expr = Union[Literal, Name, Call, Unary, Binary]


# ---- statements ----
@dataclass(frozen=True)
class Title:
    span: Span
    text: str


@dataclass(frozen=True)
class Note:
    span: Span
    text: str


@dataclass(frozen=True)
class Option:
    span: Span
    name: str
    value: str
    value_span: Span


@dataclass(frozen=True)
class Definition:
    """`cell NAME [unit] = expr` or `column NAME [unit] = expr`."""

    span: Span
    kind: str  # "cell" or "column"
    name: str
    name_span: Span
    unit: Optional[UnitNode]
    expr: Expr


@dataclass(frozen=True)
class Heading:
    span: Span
    name: str
    unit: Optional[UnitNode]


@dataclass(frozen=True, eq=False)
class Table:
    """A table as written. Its numbers stay in one array (table_body.TableNumbers): `rows`
    and `row_spans` read them row by row, `grid()` as one (rows, columns) array."""

    span: Span
    kind: str  # "layers" or "levels"
    headings: tuple[Heading, ...]
    numbers: TableNumbers

    @property
    def row_count(self) -> int:
        return len(self.numbers.counts)

    @property
    def rows(self) -> "_Rows":
        """Each row's numbers as a tuple (NaN where the file says "-")."""
        return _Rows(self.numbers)

    @property
    def row_spans(self) -> "_RowSpans":
        return _RowSpans(self.span.source, self.numbers)

    def first_ragged_row(self) -> int | None:
        """The first row whose count of numbers differs from the header's, or None."""
        wrong = np.flatnonzero(self.numbers.counts != len(self.headings))
        return int(wrong[0]) if wrong.size else None

    def grid(self) -> np.ndarray:
        """The numbers as a (rows, columns) array; every row must have one per heading."""
        return self.numbers.values.reshape(self.row_count, len(self.headings))


class _Rows(Sequence):
    def __init__(self, numbers: TableNumbers) -> None:
        self._numbers = numbers
        self._offsets = np.concatenate(([0], np.cumsum(numbers.counts)))

    def __len__(self) -> int:
        return len(self._numbers.counts)

    def __getitem__(self, index):
        if isinstance(index, slice):
            return [self[i] for i in range(*index.indices(len(self)))]
        index = range(len(self))[index]
        return tuple(self._numbers.values[self._offsets[index]:self._offsets[index + 1]]
                     .tolist())


class _RowSpans(Sequence):
    def __init__(self, source: Source, numbers: TableNumbers) -> None:
        self._source = source
        self._numbers = numbers

    def __len__(self) -> int:
        return len(self._numbers.counts)

    def __getitem__(self, index):
        if isinstance(index, slice):
            return [self[i] for i in range(*index.indices(len(self)))]
        index = range(len(self))[index]
        return Span(self._source, int(self._numbers.starts[index]),
                    int(self._numbers.ends[index]))


@dataclass(frozen=True)
class Selection:
    span: Span
    kind: str  # "between", "above", "below", "where", "at" (one level: level changes only)
    first: Optional[Expr] = None
    second: Optional[Expr] = None


@dataclass(frozen=True)
class Place:
    """Where a change to level values applies: `at "Name"` (one station), `at every
    station`, or `at levels` (the top-level levels table)."""

    span: Span
    kind: str  # "station", "every station", "levels"
    station: Optional[str] = None  # the station's name for kind "station"


@dataclass(frozen=True)
class Change:
    """One line of a scenario: add / scale / set a column, optionally on selected layers;
    with a `place`, a column of level tables, optionally on selected levels."""

    span: Span
    action: str  # "add", "scale", "set"
    target: str
    target_span: Span
    amount: Expr
    selection: Optional[Selection] = None
    place: Optional[Place] = None


@dataclass(frozen=True)
class Scenario:
    span: Span
    name: str
    name_span: Span
    base: Optional[str]
    base_span: Optional[Span]
    description: str
    changes: tuple[Change, ...]
    cells: tuple[Definition, ...]
    options: tuple[Option, ...]


@dataclass(frozen=True)
class Station:
    span: Span
    name: str
    latitude: float
    longitude: float
    table: Table
    latitude_span: Optional[Span] = None   # the numbers as written, for errors about them
    longitude_span: Optional[Span] = None


Statement = Union[Title, Note, Option, Definition, Table, Scenario, Station]


@dataclass(frozen=True)
class Document:
    source: Source
    statements: tuple[Statement, ...] = field(default_factory=tuple)
