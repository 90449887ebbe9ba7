"""Checked expressions: every node knows its dimension, whether it is a cell or a column,
and whether it is a condition. Built by check.py, walked by evaluate.py and the spreadsheet
translator. Numbers are already in SI."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Union

from layercalc.language.functions import Function
from layercalc.source import Span

CELL = "cell"
COLUMN = "column"


@dataclass(frozen=True)
class Meta:
    span: Span
    dimension: object  # sympy Dimension
    shape: str  # CELL or COLUMN
    condition: bool = False


@dataclass(frozen=True)
class TNumber:
    meta: Meta
    value: float  # SI
    text: str     # as written, for readable formulas
    affine: bool = False  # a degC number standing for an absolute temperature


@dataclass(frozen=True)
class TRef:
    meta: Meta
    kind: str  # "input_column", "input_cell", "column", "cell", "constant"
    name: str


@dataclass(frozen=True)
class TUnary:
    meta: Meta
    op: str
    operand: "TExpr"


@dataclass(frozen=True)
class TBinary:
    meta: Meta
    op: str
    left: "TExpr"
    right: "TExpr"


@dataclass(frozen=True)
class TCall:
    meta: Meta
    function: Function
    args: tuple["TExpr", ...]


TExpr = Union[TNumber, TRef, TUnary, TBinary, TCall]


def references(expr: TExpr) -> set[tuple[str, str]]:
    """The (shape, name) keys an expression reads, for the dependency graph."""
    found: set[tuple[str, str]] = set()
    stack = [expr]
    while stack:
        node = stack.pop()
        if isinstance(node, TRef):
            if node.kind != "constant":
                found.add((node.meta.shape, node.name))
        elif isinstance(node, TUnary):
            stack.append(node.operand)
        elif isinstance(node, TBinary):
            stack.extend((node.left, node.right))
        elif isinstance(node, TCall):
            stack.extend(node.args)
    return found


@dataclass(frozen=True)
class Formula:
    """A derived column or cell, checked: `unit` is its output unit (display), the values
    are computed in SI."""

    kind: str  # CELL or COLUMN
    name: str
    expr: TExpr
    unit: object  # units.Unit
    span: Span
    default: bool = False
    source_text: str = ""
