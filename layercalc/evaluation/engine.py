"""Checked sheet + SI arrays -> results. numpy only; a leading scenario axis throughout.

Columns are arrays of shape (S, L) (or (1, L) while they do not vary by scenario), cells
(S, 1) or (1, 1). One pass over the formulas in dependency order; no loop over rows or
scenarios. A subexpression written in more than one formula (omega's `div_adjusted * dp`,
the net mass divergence's `div * dp`, where `div_adjusted = div`) is computed once per
evaluation; an arithmetic step whose operand is a temporary of the same shape writes into
that temporary instead of a new array (+ - * / only: correctly rounded, so the values are
the same bits as a new array would hold). Every formula's values are checked to be finite
and within range; for a big array that scan is skipped where bounds worked out from the
operands' bounds prove it cannot find anything (bounds.py).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping

import numpy as np

from layercalc.constants import CONSTANTS
from layercalc.errors import EvaluationError
from layercalc.evaluation.bounds import FEWEST_VALUES, Bounds
from layercalc.limits import LARGEST_VALUE
from layercalc.language.functions import downward_sum, upward_sum
from layercalc.language.typed import COLUMN, TBinary, TCall, TNumber, TRef, TUnary

BINARY = {
    "+": np.add, "-": np.subtract, "*": np.multiply, "/": np.divide, "^": np.power,
    "<": np.less, "<=": np.less_equal, ">": np.greater, ">=": np.greater_equal,
    "==": np.equal, "!=": np.not_equal, "and": np.logical_and, "or": np.logical_or,
}
UNARY = {"-": np.negative, "+": np.positive, "not": np.logical_not}
# Operations that may write into a temporary operand (correctly rounded: same bits).
IN_PLACE = frozenset(("+", "-", "*", "/"))
# Function implementations that return a new array of their own (besides numpy ufuncs).
NEW_ARRAY = frozenset((upward_sum, downward_sum))


@dataclass
class Evaluation:
    """All values in SI: `columns[name]` (S, L) and `cells[name]` (S, 1), broadcastable."""

    sheet: object
    columns: dict[str, np.ndarray]
    cells: dict[str, np.ndarray]
    scenario_count: int = 1
    extras: dict = field(default_factory=dict)


def evaluate(sheet, column_inputs: Mapping[str, np.ndarray] | None = None,
             cell_inputs: Mapping[str, np.ndarray] | None = None,
             input_bounds: Mapping[str, tuple[float, float]] | None = None) -> Evaluation:
    """Evaluate every formula of a checked sheet.

    `column_inputs` / `cell_inputs` override the sheet's inputs (SI), with shapes (S, L) /
    (S,) or (S, 1); anything not given comes from the sheet. This is how scenarios and sweeps
    evaluate many variants in one pass. `input_bounds`: column name -> the exact (min, max)
    of a column input, when the caller knows them (scenarios.apply_changes does).
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
    shared, last_use = shared_subexpressions(sheet)
    env = Environment(columns, cells, sheet.layer_count, shared)
    bounds = Bounds(columns, cells, sheet.layer_count)
    for name, (lowest, highest) in (input_bounds or {}).items():
        bounds.record(True, name, lowest, highest)
    with np.errstate(all="ignore"):
        for number, formula in enumerate(sheet.formulas):
            value = env.run(formula.expr)
            value = np.asarray(value, dtype=float)
            if formula.kind == COLUMN:
                value = np.broadcast_to(value, (value.shape[0], sheet.layer_count)) \
                    if value.shape[-1] != sheet.layer_count else value
                columns[formula.name] = value
            else:
                cells[formula.name] = value.reshape(value.shape[0], 1)
            is_column = formula.kind == COLUMN
            proven = value.size >= FEWEST_VALUES and bounds.within_range(formula.expr,
                                                                         value.size)
            if proven:  # no scan: the values cannot be out of range
                bounds.record(is_column, formula.name, *proven, exact=False)
            else:
                bounds.record(is_column, formula.name, *_check_finite(formula, value, sheet))
            for key in last_use.get(number, ()):  # no later formula computes it
                env.kept.pop(key, None)
    return Evaluation(sheet, columns, cells, scenario_count)


class Environment:
    """The values a formula can read (columns and cells by name); `run` walks a typed
    expression with numpy. Also used to apply scenario changes and by the workbook writer.

    `shared` (from shared_subexpressions) names the nodes whose value is kept for the other
    formulas that compute the same; without it nothing is kept."""

    def __init__(self, columns, cells, layer_count, shared=None) -> None:
        self.columns = columns
        self.cells = cells
        self.layer_count = layer_count
        self.shared = shared or {}
        self.kept: dict = {}

    def run(self, node):
        return self._run(node)[0]

    def _run(self, node):
        """(value, whether the value is a temporary nobody else holds)."""
        if isinstance(node, TNumber):
            return np.array([[node.value]]), False
        if isinstance(node, TRef):
            if node.kind == "constant":
                return np.array([[CONSTANTS[node.name][0]]]), False
            if node.meta.shape == COLUMN:
                return self.columns[node.name], False
            return self.cells[node.name], False
        key = self.shared.get(id(node))
        if key is not None:
            if key not in self.kept:
                self.kept[key] = self._compute(node)[0]
            return self.kept[key], False  # held for the next formula: never written into
        return self._compute(node)

    def _compute(self, node):
        if isinstance(node, TUnary):
            value, temporary = self._run(node.operand)
            if node.op == "-" and temporary and value.dtype == np.float64:
                return np.negative(value, out=value), True
            return UNARY[node.op](value), True
        if isinstance(node, TBinary):
            (left, left_new), (right, right_new) = self._run(node.left), self._run(node.right)
            if node.op in IN_PLACE and (left_new or right_new):
                out = _writable_operand(left, left_new, right, right_new)
                if out is not None:
                    return BINARY[node.op](left, right, out=out), True
            return BINARY[node.op](left, right), True
        if isinstance(node, TCall):
            args = [self._run(a)[0] for a in node.args]
            if node.function.layer_rule != "elementwise":
                args = [np.broadcast_to(a, (a.shape[0], self.layer_count))
                        if a.shape[-1] == 1 and self.layer_count != 1 else a for a in args]
            impl = node.function.impl
            value = impl(*args)
            temporary = (isinstance(impl, np.ufunc) or impl in NEW_ARRAY) and isinstance(
                value, np.ndarray) and value.flags.owndata and value.flags.writeable
            return value, temporary
        raise AssertionError(f"typed node {node!r}")


def _writable_operand(left, left_new, right, right_new):
    """The temporary operand the result can be written into (float64, the result's shape),
    or None."""
    if not (left.dtype == np.float64 and right.dtype == np.float64):
        return None
    shape = np.broadcast_shapes(left.shape, right.shape)
    if left_new and left.shape == shape:
        return left
    if right_new and right.shape == shape:
        return right
    return None


def shared_subexpressions(sheet) -> tuple[dict, dict]:
    """id(node) -> key for the subexpressions (not plain names or numbers) that more than
    one place of the sheet's formulas computes (a formula that only renames another value,
    `div_adjusted = div`, counts as that value), and formula index -> the keys no formula
    after it computes. Worked out once per sheet."""
    formulas = sheet.formulas
    plans = getattr(sheet, "evaluation_plans", None)
    if plans is not None:
        found = plans.get(id(formulas))
        if found is not None and found[0] is formulas:
            return found[1]
    alias: dict = {}
    nodes: dict = {}  # key -> ids of the nodes with that key
    last: dict = {}  # key -> index of the last formula computing it

    def key(node):
        if isinstance(node, TNumber):
            return ("number", node.value)
        if isinstance(node, TRef):
            if node.kind == "constant":
                return ("constant", node.name)
            name = (node.meta.shape, node.name)
            return alias.get(name, ("name",) + name)
        if isinstance(node, TUnary):
            found = (node.op, key(node.operand))
        elif isinstance(node, TBinary):
            found = (node.op, key(node.left), key(node.right))
        else:
            found = (id(node.function), *(key(a) for a in node.args))
        nodes.setdefault(found, []).append(id(node))
        last[found] = number
        return found

    for number, formula in enumerate(formulas):
        found = key(formula.expr)
        if isinstance(formula.expr, TRef) and formula.expr.kind != "constant" \
                and formula.expr.meta.shape == formula.kind:
            alias[(formula.kind, formula.name)] = found
    shared = {i: k for k, ids in nodes.items() if len(ids) > 1 for i in ids}
    last_use: dict = {}
    for k, ids in nodes.items():
        if len(ids) > 1:
            last_use.setdefault(last[k], []).append(k)
    if plans is not None:
        plans[id(formulas)] = (formulas, (shared, last_use))
    return shared, last_use


def _check_finite(formula, value: np.ndarray, sheet) -> tuple[float, float]:
    """The values' (min, max) when they are finite and within +-LARGEST_VALUE (limits.py);
    otherwise our error naming the first value that is not, its layer and variant."""
    # Two reductions first (no temporary array; NaN propagates through both): only values
    # beyond +-LARGEST_VALUE, inf or NaN need the full look.
    if value.size == 0:
        return 0.0, 0.0
    lowest, highest = np.minimum.reduce(value, None), np.maximum.reduce(value, None)
    if -LARGEST_VALUE <= lowest and highest <= LARGEST_VALUE:
        return lowest, highest
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
