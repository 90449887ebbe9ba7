"""Checked sheet + SI arrays -> results. numpy only; a leading scenario axis throughout.

Columns are arrays of shape (S, L) (or (1, L) while they do not vary by scenario), cells
(S, 1) or (1, 1). One pass over the formulas in dependency order; no loop over rows or
scenarios.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping

import numpy as np

from layercalc.constants import CONSTANTS
from layercalc.errors import EvaluationError
from layercalc.limits import LARGEST_VALUE
from layercalc.language.typed import COLUMN, TBinary, TCall, TNumber, TRef, TUnary

BINARY = {
    "+": np.add, "-": np.subtract, "*": np.multiply, "/": np.divide, "^": np.power,
    "<": np.less, "<=": np.less_equal, ">": np.greater, ">=": np.greater_equal,
    "==": np.equal, "!=": np.not_equal, "and": np.logical_and, "or": np.logical_or,
}
UNARY = {"-": np.negative, "+": np.positive, "not": np.logical_not}


@dataclass
class Evaluation:
    """All values in SI: `columns[name]` (S, L) and `cells[name]` (S, 1), broadcastable."""

    sheet: object
    columns: dict[str, np.ndarray]
    cells: dict[str, np.ndarray]
    scenario_count: int = 1
    extras: dict = field(default_factory=dict)


def evaluate(sheet, column_inputs: Mapping[str, np.ndarray] | None = None,
             cell_inputs: Mapping[str, np.ndarray] | None = None) -> Evaluation:
    """Evaluate every formula of a checked sheet.

    `column_inputs` / `cell_inputs` override the sheet's inputs (SI), with shapes (S, L) /
    (S,) or (S, 1); anything not given comes from the sheet. This is how scenarios and sweeps
    evaluate many variants in one pass.
    """
    columns: dict[str, np.ndarray] = {
        name: col.values[None, :] for name, col in sheet.input_columns.items()}
    cells: dict[str, np.ndarray] = {
        name: np.array([[cell.value]]) for name, cell in sheet.input_cells.items()}
    for name, values in (column_inputs or {}).items():
        values = np.asarray(values, dtype=float)
        columns[name] = values if values.ndim == 2 else values[None, :]
    for name, values in (cell_inputs or {}).items():
        values = np.asarray(values, dtype=float)
        cells[name] = values.reshape(-1, 1)
    sizes = {a.shape[0] for a in (*columns.values(), *cells.values())}
    scenario_count = max(sizes) if sizes else 1
    env = Environment(columns, cells, sheet.layer_count)
    with np.errstate(all="ignore"):
        for formula in sheet.formulas:
            value = env.run(formula.expr)
            value = np.asarray(value, dtype=float)
            if formula.kind == COLUMN:
                value = np.broadcast_to(value, (value.shape[0], sheet.layer_count)) \
                    if value.shape[-1] != sheet.layer_count else value
                columns[formula.name] = value
            else:
                cells[formula.name] = value.reshape(value.shape[0], 1)
            _check_finite(formula, value, sheet)
    return Evaluation(sheet, columns, cells, scenario_count)


class Environment:
    """The values a formula can read (columns and cells by name); `run` walks a typed
    expression with numpy. Also used to apply scenario changes and by the workbook writer."""

    def __init__(self, columns, cells, layer_count) -> None:
        self.columns = columns
        self.cells = cells
        self.layer_count = layer_count

    def run(self, node):
        if isinstance(node, TNumber):
            return np.array([[node.value]])
        if isinstance(node, TRef):
            if node.kind == "constant":
                return np.array([[CONSTANTS[node.name][0]]])
            if node.meta.shape == COLUMN:
                return self.columns[node.name]
            return self.cells[node.name]
        if isinstance(node, TUnary):
            return UNARY[node.op](self.run(node.operand))
        if isinstance(node, TBinary):
            return BINARY[node.op](self.run(node.left), self.run(node.right))
        if isinstance(node, TCall):
            args = [self.run(a) for a in node.args]
            if node.function.layer_rule != "elementwise":
                args = [np.broadcast_to(a, (a.shape[0], self.layer_count))
                        if a.shape[-1] == 1 and self.layer_count != 1 else a for a in args]
            return node.function.impl(*args)
        raise AssertionError(f"typed node {node!r}")


def _check_finite(formula, value: np.ndarray, sheet) -> None:
    # Two reductions first (no temporary array; NaN propagates through both): only values
    # beyond +-LARGEST_VALUE (limits.py), inf or NaN need the full look.
    if value.size == 0 or (-LARGEST_VALUE <= np.min(value) and np.max(value) <= LARGEST_VALUE):
        return
    scenario, index = (int(i[0]) for i in np.nonzero(~(np.abs(value) <= LARGEST_VALUE)))
    bad = value[scenario, index]
    if np.isinf(bad):
        what = "infinite (a division by zero?)"
    elif np.isnan(bad):
        what = "not a number (a division 0/0, or ln, sqrt or a power of a negative value?)"
    else:
        what = f"out of range ({bad:.3g}; values must lie within {LARGEST_VALUE:g} in SI units)"
    where = ""
    layer = None
    if formula.kind == COLUMN:
        layer = index
        pb = sheet.input_columns.get("p_bottom")
        pt = sheet.input_columns.get("p_top")
        if pb is not None and pt is not None:
            where = (f" in the layer {pb.values[index] / 100:g}-{pt.values[index] / 100:g} hPa"
                     f" (layer {index + 1} from the surface)")
        else:
            where = f" in layer {index + 1} from the surface"
    if value.shape[0] > 1:
        where += f", scenario variant {scenario + 1}"
    raise EvaluationError(f"{formula.kind} '{formula.name}' is {what}{where}", formula.span,
                          layer=layer, hint="check the values this formula reads")
