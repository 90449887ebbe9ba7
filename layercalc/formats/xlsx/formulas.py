"""Typed AST -> spreadsheet formula text (the OOXML formula language, ISO/IEC 29500-1 §18.17).

Every node of a checked formula (layercalc/typed.py) becomes formula text in SI units, through
one table per node kind: NODES (node class), REFERENCES (what a name refers to), UNARY and
BINARY (operators) and CALLS (functions, keyed by name and layer rule). Adding a function to
layercalc/functions.py means one entry in CALLS here.

How values are read and written:
- inputs and derived values sit in the sheet in their display units; reading one inlines its
  SI factor, ``(C6*100)`` for hPa or ``(C6+273.15)`` for degC, and writing a result divides by
  the output unit, ``=(...-273.15)/1`` (Unit.to_si / Unit.from_si, the same arithmetic);
- constants (g0, Rd, Rv, epsilon) and the physics functions' coefficients are inlined as
  numbers from layercalc/constants.py, with full float precision;
- a column formula is written once per layer row: a reference to a column reads the same
  row, `above`/`below` read the row above/below (the edge value in the top/surface row),
  upward_sum/downward_sum become running sums ``SUM(F$6:F8)``;
- aggregates work over a column range; an argument that is not a plain column is first
  written into a helper column (in SI) by the layout (``Layout.helper``), so that no array
  formulas are needed and every spreadsheet program computes the same.

Rows are sheet rows; the layout puts the surface layer in the first row (see xlsx_layout.py).
"""

from __future__ import annotations

import math
from fractions import Fraction
from functools import lru_cache
from typing import Callable, Protocol

import numpy as np

from layercalc import constants as C
from layercalc.language.functions import AGGREGATE, ELEMENTWISE, SCAN
from layercalc.language.typed import COLUMN, TBinary, TCall, TNumber, TRef, TUnary

# Longest formula a cell may hold (Excel specifications and limits: 8,192 characters).
MAX_FORMULA_LENGTH = 8192


class Layout(Protocol):
    """What the translator needs to know about where values live in the sheet."""

    first_row: int  # sheet row of the surface layer
    last_row: int   # sheet row of the top layer

    def column_place(self, name: str) -> tuple[str, object]:
        """(column letter, display unit) of an input or derived column."""

    def cell_place(self, name: str) -> tuple[str, object]:
        """(absolute reference such as $B$20, display unit) of an input or derived cell."""

    def helper(self, node, translator: "Translator") -> str:
        """Column letter of a helper column holding `node` per layer row, in SI."""


def number_text(value: float) -> str:
    """A float as formula text that gives back the same double (see _number_text); the
    same few constants and unit factors recur in every row, so the text is cached."""
    return _number_text(float(value))


@lru_cache(maxsize=4096)
def _number_text(value: float) -> str:
    """A float as formula text that gives back the same double; negatives bracketed. A long
    decimal that is exactly a small ratio (1/36 for hPa/h in Pa/s) is written as the ratio:
    the spreadsheet's division is correctly rounded, like Python's."""
    value = float(value)
    if value == int(value) and abs(value) < 1e15:
        text = str(int(value))
    else:
        text = repr(value).replace("e", "E")
        ratio = Fraction(value).limit_denominator(10_000)
        if len(text) > 12 and ratio.numerator / ratio.denominator == value:
            text = f"({ratio.numerator}/{ratio.denominator})"  # e.g. hPa/h: (1/36)
    return f"({text})" if value < 0 else text


STORED_DIGITS = 16  # openpyxl writes numbers as "%.16g" (openpyxl.compat.strings)


def display_input(unit, si: float) -> float:
    """The shortest display number, of at most the 16 significant digits a workbook stores,
    that converts back to exactly the same SI value, so that a re-imported workbook gives
    bit-identical inputs. Typed inputs always have one; an input layercalc computed (from
    level tables or stations) may need 17 digits and is then stored rounded to 16 (a
    relative change below 1e-15)."""
    key = (unit.scale, unit.offset, float(si))
    found = _DISPLAYED.get(key)
    if found is None:
        if len(_DISPLAYED) > 100_000:
            _DISPLAYED.clear()
        found = _DISPLAYED[key] = _display_input(unit, si)
    return found


_DISPLAYED: dict[tuple, float] = {}  # (scale, offset, si) -> display number; inputs recur


def _display_input(unit, si: float) -> float:
    raw = float(unit.from_si(si))
    for digits in range(1, STORED_DIGITS + 1):
        candidate = float(f"{raw:.{digits}g}")
        if float(unit.to_si(candidate)) == float(si):
            return candidate
    return float(f"{raw:.{STORED_DIGITS}g}")


def number_format(values) -> str:
    """About four significant digits for the largest magnitude, 0 to 4 decimals."""
    finite = [abs(float(v)) for v in np.ravel(values) if np.isfinite(v)]
    largest = max(finite, default=0.0)
    if largest == 0.0:
        return "0.00"
    decimals = min(4, max(0, 3 - math.floor(math.log10(largest))))
    return "0" if decimals == 0 else "0." + "0" * decimals


def input_format(values) -> str:
    """How inputs show: with the decimals their typed values need, at most those of
    number_format (about four significant digits) and at least 3, so that a typed 5.15
    shows as typed and a computed mean 11.31666... as 11.317 (display only)."""
    needed = 0
    for value in np.ravel(values):
        if np.isfinite(value):
            text = repr(float(value))
            if "e" in text:
                needed = 16
                break
            needed = max(needed, len(text.partition(".")[2].rstrip("0")))
    largest = max((abs(float(v)) for v in np.ravel(values) if np.isfinite(v)), default=0.0)
    if 0.0 < largest < 1e-3:
        return "0.000E+00"
    decimals = min(needed, max(3, number_format(values).count("0") - 1))
    return "0" if decimals == 0 else "0." + "0" * decimals


def to_si(reference: str, unit) -> str:
    """Formula text reading `reference` (in `unit`, or SI when unit is None) as SI."""
    if unit is None:
        return reference
    text = reference
    if unit.scale != 1.0:
        text = f"{text}*{number_text(unit.scale)}"
    if unit.offset:
        text = f"{text}+{number_text(unit.offset)}"
    return text if text == reference else f"({text})"


def from_si(si_text: str, unit) -> str:
    """Formula text turning SI text into `unit`: (x - offset) / scale, as Unit.from_si."""
    text = si_text
    if unit.offset:
        text = f"({text}-{number_text(unit.offset)})"
    if unit.scale != 1.0:
        text = f"{text}/{number_text(unit.scale)}"
    return text


class Translator:
    """Translates typed expressions at a given sheet row (None for a cell formula)."""

    def __init__(self, layout: Layout) -> None:
        self.layout = layout

    def formula(self, formula, row: int | None) -> str:
        """The text after '=' for a column formula at `row` or a cell formula (row None)."""
        expr = formula.expr
        si = self.expr(expr, row)
        if expr.meta.condition:
            return f"IF({si},1,0)"
        return from_si(si, formula.unit)

    def expr(self, node, row: int | None) -> str:
        return NODES[type(node)](self, node, row)

    # -- ranges for aggregates and scans -------------------------------------------
    def column_range(self, node) -> tuple[str, object]:
        """(column letter, display unit or None for SI) holding `node` per row: the column
        itself for a plain column reference, else a helper column."""
        if isinstance(node, TRef) and node.meta.shape == COLUMN:
            return self.layout.column_place(node.name)
        return self.layout.helper(node, self), None

    def whole(self, letter: str) -> str:
        first, last = self.layout.first_row, self.layout.last_row
        return f"${letter}${first}:${letter}${last}"


# ---------------------------------------------------------------- nodes
def _number(t: Translator, node: TNumber, row) -> str:
    return number_text(node.value)


def _reference(t: Translator, node: TRef, row) -> str:
    return REFERENCES[node.kind](t, node, row)


def _column_reference(t: Translator, node: TRef, row) -> str:
    if row is None:
        raise AssertionError(f"column {node.name} read outside a layer row")
    letter, unit = t.layout.column_place(node.name)
    return to_si(f"{letter}{row}", unit)


def _cell_reference(t: Translator, node: TRef, row) -> str:
    reference, unit = t.layout.cell_place(node.name)
    return to_si(reference, unit)


def _constant(t: Translator, node: TRef, row) -> str:
    return number_text(C.CONSTANTS[node.name].value)


def _unary(t: Translator, node: TUnary, row) -> str:
    return UNARY[node.op](t.expr(node.operand, row))


def _binary(t: Translator, node: TBinary, row) -> str:
    return BINARY[node.op](t.expr(node.left, row), t.expr(node.right, row))


def _call(t: Translator, node: TCall, row) -> str:
    function = node.function
    return CALLS[(function.name, function.layer_rule)](t, node.args, row)


NODES: dict[type, Callable] = {
    TNumber: _number, TRef: _reference, TUnary: _unary, TBinary: _binary, TCall: _call,
}
REFERENCES: dict[str, Callable] = {
    "input_column": _column_reference, "column": _column_reference,
    "input_cell": _cell_reference, "cell": _cell_reference, "constant": _constant,
}


def _infix(symbol: str) -> Callable[[str, str], str]:
    return lambda a, b: f"({a}{symbol}{b})"


def _prefix(name: str) -> Callable[..., str]:
    return lambda *args: f"{name}({','.join(args)})"


# Every operator is bracketed: in spreadsheets unary minus binds tighter than ^ (-2^2 = 4).
UNARY: dict[str, Callable[[str], str]] = {
    "-": lambda a: f"(-{a})", "+": lambda a: a, "not": _prefix("NOT"),
}
BINARY: dict[str, Callable[[str, str], str]] = {
    "+": _infix("+"), "-": _infix("-"), "*": _infix("*"), "/": _infix("/"), "^": _infix("^"),
    "<": _infix("<"), "<=": _infix("<="), ">": _infix(">"), ">=": _infix(">="),
    "==": _infix("="), "!=": _infix("<>"), "and": _prefix("AND"), "or": _prefix("OR"),
}


# ---------------------------------------------------------------- functions
def _elementwise(build: Callable[..., str]) -> Callable:
    """A row-by-row function: translate the arguments at the same row, then combine."""
    def call(t: Translator, args, row) -> str:
        return build(*(t.expr(a, row) for a in args))
    return call


def _sum(t: Translator, args, row) -> str:
    letter, unit = t.column_range(args[0])
    if unit is not None and unit.offset:  # a sum of degC values: sum the SI values instead
        letter, unit = t.layout.helper(args[0], t), None
    return to_si(f"SUM({t.whole(letter)})", unit)


def _over_range(name: str) -> Callable:
    """mean, min, max: the spreadsheet function over the column, then to SI (scale > 0, so
    the smallest display value is the smallest SI value)."""
    def call(t: Translator, args, row) -> str:
        letter, unit = t.column_range(args[0])
        return to_si(f"{name}({t.whole(letter)})", unit)
    return call


def _at(pick: str) -> Callable:
    """at_min / at_max(key, values): INDEX(values, MATCH(MIN(key), key, 0)), the first
    layer from the surface on ties, like numpy.argmin."""
    def call(t: Translator, args, row) -> str:
        key, _ = t.column_range(args[0])
        values, unit = t.column_range(args[1])
        keys = t.whole(key)
        return to_si(f"INDEX({t.whole(values)},MATCH({pick}({keys}),{keys},0))", unit)
    return call


def _lowest(t: Translator, args, row) -> str:
    return t.expr(args[0], t.layout.first_row)


def _highest(t: Translator, args, row) -> str:
    return t.expr(args[0], t.layout.last_row)


def _running(upward: bool) -> Callable:
    def call(t: Translator, args, row) -> str:
        letter, unit = t.column_range(args[0])
        if unit is not None and unit.offset:
            letter, unit = t.layout.helper(args[0], t), None
        if upward:
            span = f"{letter}${t.layout.first_row}:{letter}{row}"
        else:
            span = f"{letter}{row}:{letter}${t.layout.last_row}"
        return to_si(f"SUM({span})", unit)
    return call


def _above(t: Translator, args, row) -> str:
    if row == t.layout.last_row:
        return t.expr(args[1], row)
    return t.expr(args[0], row + 1)


def _below(t: Translator, args, row) -> str:
    if row == t.layout.first_row:
        return t.expr(args[1], row)
    return t.expr(args[0], row - 1)


# Physics, mirroring layercalc/physics term by term (SI in, SI out; references there).
def saturation_vapour_pressure_text(temperature: str) -> str:
    """Bolton (1980) eq. 10: 611.2 Pa exp(17.67 t / (t + 243.5)), t = T - 273.15."""
    celsius = f"({temperature}-{number_text(C.T_ZERO_CELSIUS)})"
    return (f"({number_text(C.BOLTON_SATURATION_VAPOUR_PRESSURE_AT_0C)}*EXP("
            f"{number_text(C.BOLTON_EXPONENT_COEFFICIENT)}*{celsius}/({celsius}+"
            f"{number_text(C.BOLTON_TEMPERATURE_OFFSET)})))")


def mixing_ratio_text(vapour_pressure: str, pressure: str) -> str:
    """r = epsilon e / (p - e)."""
    return f"({number_text(C.EPSILON)}*{vapour_pressure}/({pressure}-{vapour_pressure}))"


def _vapour_pressure_from_mixing_ratio(mixing_ratio: str, pressure: str) -> str:
    """e = r p / (epsilon + r)."""
    return f"({mixing_ratio}*{pressure}/({number_text(C.EPSILON)}+{mixing_ratio}))"


def virtual_temperature_text(temperature: str, mixing_ratio: str) -> str:
    """Tv = T (r + epsilon) / (epsilon (1 + r))."""
    epsilon = number_text(C.EPSILON)
    return (f"({temperature}*({mixing_ratio}+{epsilon})/({epsilon}*(1+{mixing_ratio})))")


def hypsometric_thickness_text(virtual_temperature: str, bottom: str, top: str) -> str:
    """dz = Rd Tv / g0 ln(p_bottom / p_top)."""
    return (f"({number_text(C.RD)}*{virtual_temperature}/{number_text(C.G0)}"
            f"*LN({bottom}/{top}))")


def _vertical_velocity(omega: str, pressure: str, virtual_temperature: str) -> str:
    """w = -omega / (rho g0), rho = p / (Rd Tv)."""
    density = f"({pressure}/({number_text(C.RD)}*{virtual_temperature}))"
    return f"((-{omega})/({density}*{number_text(C.G0)}))"


CALLS: dict[tuple[str, str], Callable] = {
    ("ln", ELEMENTWISE): _elementwise(_prefix("LN")),
    ("exp", ELEMENTWISE): _elementwise(_prefix("EXP")),
    ("sqrt", ELEMENTWISE): _elementwise(_prefix("SQRT")),
    ("abs", ELEMENTWISE): _elementwise(_prefix("ABS")),
    ("where", ELEMENTWISE): _elementwise(_prefix("IF")),
    ("min", ELEMENTWISE): _elementwise(_prefix("MIN")),
    ("max", ELEMENTWISE): _elementwise(_prefix("MAX")),
    ("sum", AGGREGATE): _sum,
    ("mean", AGGREGATE): _over_range("AVERAGE"),
    ("min", AGGREGATE): _over_range("MIN"),
    ("max", AGGREGATE): _over_range("MAX"),
    ("lowest_layer", AGGREGATE): _lowest,
    ("highest_layer", AGGREGATE): _highest,
    ("at_min", AGGREGATE): _at("MIN"),
    ("at_max", AGGREGATE): _at("MAX"),
    ("upward_sum", SCAN): _running(upward=True),
    ("downward_sum", SCAN): _running(upward=False),
    ("above", SCAN): _above,
    ("below", SCAN): _below,
    ("saturation_vapour_pressure", ELEMENTWISE): _elementwise(saturation_vapour_pressure_text),
    ("vapour_pressure", ELEMENTWISE): _elementwise(saturation_vapour_pressure_text),
    ("mixing_ratio", ELEMENTWISE): _elementwise(mixing_ratio_text),
    ("vapour_pressure_from_mixing_ratio", ELEMENTWISE):
        _elementwise(_vapour_pressure_from_mixing_ratio),
    ("virtual_temperature", ELEMENTWISE): _elementwise(virtual_temperature_text),
    ("hypsometric_thickness", ELEMENTWISE): _elementwise(hypsometric_thickness_text),
    ("vertical_velocity", ELEMENTWISE): _elementwise(_vertical_velocity),
}


def untranslatable(formula) -> str | None:
    """Why a formula cannot be written as a spreadsheet formula, or None if it can."""
    stack = [formula.expr]
    while stack:
        node = stack.pop()
        if isinstance(node, TCall):
            key = (node.function.name, node.function.layer_rule)
            if key not in CALLS:
                return f"function {node.function.name} has no spreadsheet form"
            stack.extend(node.args)
        elif isinstance(node, TUnary):
            if node.op not in UNARY:
                return f"operator {node.op} has no spreadsheet form"
            stack.append(node.operand)
        elif isinstance(node, TBinary):
            if node.op not in BINARY:
                return f"operator {node.op} has no spreadsheet form"
            stack.extend((node.left, node.right))
    return None


def stepped(base_text: str, base_si: float, steps: list, amount_text, amount_value):
    """Formula text (SI) and value of the base value with the scenario's steps;
    amount_text(node) / amount_value(node) translate / evaluate an amount at this row."""
    text, value = base_text, base_si
    for action, amount, _ in steps:
        shown, number = amount_text(amount), amount_value(amount)
        if action == "add":
            text, value = f"({text}+{shown})", value + number
        elif action == "scale":
            text, value = f"({text}*{shown})", value * number
        else:
            text, value = shown, number
    return text, value
