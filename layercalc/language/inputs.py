"""Input values as checked: the columns and cells a sheet gives, converted to SI. Shared by
the sounding readers and the checker (what a plausible value is: plausibility.py).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from layercalc.language import units as U
from layercalc.language.nodes import Table
from layercalc.source import Span


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


def entry_span(table: Table, row: int, column: int) -> Span:
    """The span of one number in a table row (found by splitting the row's text)."""
    span = table.row_spans[row]
    text = span.source.text[span.start:span.end]
    offset = 0
    for index_, piece in enumerate(text.split()):
        offset = text.index(piece, offset)
        if index_ == column:
            return Span(span.source, span.start + offset, span.start + offset + len(piece))
        offset += len(piece)
    return span
