"""Bounds of a formula's values worked out from the bounds of what it reads, so that the
evaluator can skip its scan for values out of range where none can be.

`engine.evaluate` makes sure that every formula's values are finite and within
+-LARGEST_VALUE (limits.py): one min and one max over the array. For a sweep of many
variants those scans are a large share of the work (two reads of every array of variants
x layers). Here the lowest and highest value a formula can take are worked out from those
of its operands, interval arithmetic on two floats, without touching the big arrays:

- the exact min and max of arrays already scanned (`engine` records them) or small enough
  to scan on the spot, and of the inputs a scenario changed (`scenarios` records them);
- + - * as the smallest and largest of the corner values, / only by an operand whose
  bounds are exact (its own min and max) and exclude zero; sums, running sums and means
  over the layers widened by a rounding allowance; picks (lowest_layer, min, at_min, where)
  within their operands' bounds; the three physics functions of the default formulas
  (virtual_temperature, hypsometric_thickness, vertical_velocity) by their formulas, each
  increasing or decreasing in every argument over the domain the rule requires.

Sound for the rounded values: + - * / are correctly rounded and rounding is monotone, so
the rounded result of values within the bounds lies within the rounded results at the
corners; sums may add in another order, hence the allowance. A formula whose bounds lie
within SAFE (half the range: a margin far beyond the rounding of a logarithm) cannot hold
an infinite value, NaN or a value out of range, and its scan is skipped. Anything else
(unknown bounds, a division by bounds that include zero, any other function) is scanned
as before, and an error is found and worded by the scan exactly as before.
"""

from __future__ import annotations

import math

import numpy as np

from layercalc.constants import CONSTANTS, EPSILON, G0, RD
from layercalc.limits import LARGEST_VALUE
from layercalc.language.typed import COLUMN, TBinary, TCall, TNumber, TRef, TUnary

SAFE = LARGEST_VALUE / 2
# A formula with fewer values than this is scanned: the scan costs less than the walk.
FEWEST_VALUES = 1 << 16
UNIT_ROUNDOFF = 2.0 ** -52  # an ulp of 1, an upper bound of the relative rounding


class Bounds:
    """(lowest, highest, exact) per value a formula can read; `exact` when they are the
    array's own min and max (only such bounds may divide)."""

    def __init__(self, columns, cells, layer_count: int) -> None:
        self.columns = columns
        self.cells = cells
        self.layer_count = layer_count
        self.known: dict = {}  # (is_column, name) -> (lowest, highest, exact)

    def record(self, is_column: bool, name: str, lowest: float, highest: float,
               exact: bool = True) -> None:
        self.known[(is_column, name)] = (float(lowest), float(highest), exact)

    def within_range(self, expr, size: int) -> tuple[float, float] | None:
        """(lowest, highest) when the values of `expr` (an array of `size` values) are
        provably finite and within +-SAFE; None means only that the scan must look."""
        found = self.of(expr, size)
        if found is not None and -SAFE <= found[0] and found[1] <= SAFE:
            return found[0], found[1]
        return None

    def of(self, node, size: int):
        """(lowest, highest, exact) of a typed expression's values, or None (unknown)."""
        found = _RULES.get(type(node), _none)(self, node, size)
        if found is None or not (math.isfinite(found[0]) and math.isfinite(found[1])):
            return None
        return found

    def _ref(self, node, size):
        if node.kind == "constant":
            value = CONSTANTS[node.name][0]
            return value, value, True
        is_column = node.meta.shape == COLUMN
        key = (is_column, node.name)
        if key not in self.known:
            values = (self.columns if is_column else self.cells).get(node.name)
            if values is None or values.size * 4 > size:  # a scan of its own would cost
                return None
            lowest, highest = np.min(values), np.max(values)  # NaN propagates: not finite
            self.record(is_column, node.name, lowest, highest)
        return self.known[key]

    def _unary(self, node, size):
        operand = self.of(node.operand, size)
        if operand is None or node.op not in ("-", "+"):
            return None
        return (-operand[1], -operand[0], operand[2]) if node.op == "-" else operand

    def _binary(self, node, size):
        left, right = self.of(node.left, size), self.of(node.right, size)
        if left is None or right is None:
            return None
        return _ARITHMETIC.get(node.op, _none)(left, right)

    def _call(self, node, size):
        rule = _FUNCTIONS.get(node.function.name)
        if rule is None:
            return None
        args = [self.of(a, size) for a in node.args]
        if any(a is None for a in args[node.function.condition_first:]):
            return None
        return rule(self, node, args)


def _none(*_):
    return None


def _corners(values):
    values = list(values)
    return min(values), max(values), False


def _add(a, b):
    return a[0] + b[0], a[1] + b[1], False


def _subtract(a, b):
    return a[0] - b[1], a[1] - b[0], False


def _multiply(a, b):
    return _corners(x * y for x in a[:2] for y in b[:2])


def _divide(a, b):
    if not b[2] or b[0] <= 0.0 <= b[1]:  # only by an exact divisor that excludes zero
        return None
    return _corners(x / y for x in a[:2] for y in b[:2])


_ARITHMETIC = {"+": _add, "-": _subtract, "*": _multiply, "/": _divide}


def _allowance(bounds: Bounds, lowest: float, highest: float) -> float:
    """What adding up to layer_count values within the bounds may round to, beyond the
    exact sum: (n - 1) u times the sum of the magnitudes, with a factor of 4 to spare."""
    n = bounds.layer_count
    return 4.0 * n * n * UNIT_ROUNDOFF * max(abs(lowest), abs(highest))


def _sum(bounds, node, args):
    (lowest, highest, _), n = args[0], bounds.layer_count
    slack = _allowance(bounds, lowest, highest)
    return n * lowest - slack, n * highest + slack, False


def _running_sum(bounds, node, args):
    (lowest, highest, _), n = args[0], bounds.layer_count
    slack = _allowance(bounds, lowest, highest)
    return min(lowest, n * lowest) - slack, max(highest, n * highest) + slack, False


def _mean(bounds, node, args):
    lowest, highest, _ = args[0]
    slack = _allowance(bounds, lowest, highest)
    return lowest - slack, highest + slack, False


def _pick(bounds, node, args):
    """A value taken from one of the arguments (after a condition or a key)."""
    chosen = args[1:] if node.function.name in ("where", "at_min", "at_max") else args
    return min(a[0] for a in chosen), max(a[1] for a in chosen), False


def _absolute(bounds, node, args):
    lowest, highest, _ = args[0]
    low = 0.0 if lowest <= 0.0 <= highest else min(abs(lowest), abs(highest))
    return low, max(abs(lowest), abs(highest)), False


def _virtual_temperature(bounds, node, args):
    """T (r + epsilon) / (epsilon (1 + r)): the moisture factor increases with r for r > -1
    (derivative (1 - epsilon) / (epsilon (1 + r)^2)); required here with room: r > -0.5."""
    temperature, ratio = args
    if not ratio[0] > -0.5:
        return None
    factor = [(r + EPSILON) / (EPSILON * (1.0 + r)) for r in ratio[:2]]
    return _multiply(temperature, (*factor, False))


def _hypsometric_thickness(bounds, node, args):
    """Tv * (Rd / g0 ln(p_bottom / p_top)): the factor increases with p_bottom and
    decreases with p_top, both positive (exact bounds, as for a divisor)."""
    tv, bottom, top = args
    if not (bottom[2] and top[2] and bottom[0] > 0.0 and top[0] > 0.0):
        return None
    factor = (RD / G0 * np.log(bottom[0] / top[1]), RD / G0 * np.log(bottom[1] / top[0]))
    return _multiply(tv, (float(factor[0]), float(factor[1]), False))


def _vertical_velocity(bounds, node, args):
    """omega * (-Rd / (g0 p)) * Tv, p of one sign (an exact divisor, as for /)."""
    omega, pressure, tv = args
    factor = _divide((-RD, -RD, True), (G0 * pressure[0], G0 * pressure[1], pressure[2]))
    return None if factor is None else _multiply(_multiply(omega, factor), tv)


_FUNCTIONS = {
    "sum": _sum, "mean": _mean, "upward_sum": _running_sum, "downward_sum": _running_sum,
    "lowest_layer": _pick, "highest_layer": _pick, "min": _pick, "max": _pick,
    "where": _pick, "at_min": _pick, "at_max": _pick, "abs": _absolute,
    "virtual_temperature": _virtual_temperature,
    "hypsometric_thickness": _hypsometric_thickness,
    "vertical_velocity": _vertical_velocity,
}
_RULES = {
    TNumber: lambda bounds, node, size: (node.value, node.value, True),
    TRef: Bounds._ref, TUnary: Bounds._unary, TBinary: Bounds._binary, TCall: Bounds._call,
}
