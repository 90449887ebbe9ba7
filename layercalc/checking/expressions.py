"""Typing expressions: names resolved, dimensions derived with sympy and compared, the
degC and condition rules. A mixin of the checker (check.py)."""

from __future__ import annotations

from fractions import Fraction

from layercalc.names import close_names
from layercalc.language import units as U
from layercalc.language.unit_text import parse_unit_string, written_unit
from layercalc.constants import CONSTANTS
from layercalc.limits import LARGEST_VALUE
from layercalc.errors import CycleError, DefinitionError, LayercalcError, UnitError, UnknownNameError
from layercalc.language.functions import AGGREGATE, SCAN, lookup as lookup_function, names as function_names
from layercalc.language.nodes import Binary, Call, Literal, Name, Unary
from layercalc.language.typed import CELL, COLUMN, Meta, TBinary, TCall, TNumber, TRef, TUnary

COMPARISONS = ("<", "<=", ">", ">=", "==", "!=")


class ExpressionChecker:
    # -- expressions ------------------------------------------------------------
    def expr(self, node, prefer_columns: bool, affine_as_difference: bool = False):
        if isinstance(node, Literal):
            return self.literal(node, affine_as_difference)
        if isinstance(node, Name):
            return self.name(node, prefer_columns)
        if isinstance(node, Unary):
            return self.unary(node, prefer_columns, affine_as_difference)
        if isinstance(node, Binary):
            return self.binary(node, prefer_columns, affine_as_difference)
        if isinstance(node, Call):
            return self.call(node, prefer_columns, affine_as_difference)
        raise AssertionError(f"expression node {node!r}")

    def literal(self, node: Literal, affine_as_difference: bool):
        if node.unit is None:
            in_range(node.value, node)
            return TNumber(Meta(node.span, U.DIMENSIONLESS, CELL), node.value, _text(node))
        unit = written_unit(node.unit)
        if unit.affine and affine_as_difference:
            value = node.value * unit.scale
        else:
            value = unit.to_si(node.value)
        in_range(value, node)
        meta = Meta(node.span, unit.dimension, CELL)
        return TNumber(meta, value, _text(node), affine=unit.affine and not affine_as_difference)

    def name(self, node: Name, prefer_columns: bool):
        sheet = self.sheet
        name = node.name
        is_column = name in sheet.input_columns or (COLUMN, name) in self.formula_keys
        is_cell = name in sheet.input_cells or (CELL, name) in self.formula_keys
        if is_column and (prefer_columns or not is_cell):
            kind = "input_column" if name in sheet.input_columns else "column"
            dim = self.dimension_of(COLUMN, name, node)
            return TRef(Meta(node.span, dim, COLUMN), kind, name)
        if is_cell:
            kind = "input_cell" if name in sheet.input_cells else "cell"
            dim = self.dimension_of(CELL, name, node)
            return TRef(Meta(node.span, dim, CELL), kind, name)
        if name in CONSTANTS:
            value, unit_text_value, _ = CONSTANTS[name]
            unit = parse_unit_string(unit_text_value)
            return TRef(Meta(node.span, unit.dimension, CELL), "constant", name)
        known = [*sheet.input_columns, *sheet.input_cells, *(n for _, n in self.formula_keys),
                 *CONSTANTS]
        close = close_names(name, known)
        hint = None
        if name in U.UNIT_TABLE and not close:
            hint = (f"'{name}' is a unit here, not a value: put compound units in brackets, "
                    f"e.g. 10 [m/{name}]")
        raise UnknownNameError(f"unknown name '{name}'", node.span, close, hint=hint)

    def formula_references(self, expr, prefer_columns: bool) -> list[tuple[str, str]]:
        """The formulas (kind, name) an expression reads, resolved as `name` resolves them,
        without typing anything: the checker compiles formulas in this dependency order, so
        that a chain of any length needs no recursion and a circle is found before typing."""
        sheet = self.sheet
        found: list[tuple[str, str]] = []
        stack = [(expr, prefer_columns)]
        while stack:
            node, prefer = stack.pop()
            if isinstance(node, Name):
                name = node.name
                is_column = name in sheet.input_columns or (COLUMN, name) in self.formula_keys
                is_cell = name in sheet.input_cells or (CELL, name) in self.formula_keys
                if is_column and (prefer or not is_cell):
                    if name not in sheet.input_columns:
                        found.append((COLUMN, name))
                elif is_cell and name not in sheet.input_cells:
                    found.append((CELL, name))
            elif isinstance(node, Unary):
                stack.append((node.operand, prefer))
            elif isinstance(node, Binary):
                stack.extend(((node.right, prefer), (node.left, prefer)))
            elif isinstance(node, Call):
                function = lookup_function(node.function, len(node.args))
                if function is None:
                    continue  # an unknown function: reported when typed, its arguments unread
                inner = prefer or function.layer_rule in (AGGREGATE, SCAN)
                stack.extend((a, inner) for a in reversed(node.args))
        return found

    def dimension_of(self, kind: str, name: str, node) -> object:
        sheet = self.sheet
        if kind == COLUMN and name in sheet.input_columns:
            return sheet.input_columns[name].unit.dimension
        if kind == CELL and name in sheet.input_cells:
            return sheet.input_cells[name].unit.dimension
        cache = self.dim_cache
        key = (kind, name)
        if key in cache:
            if cache[key] is None:
                raise _CycleSignal(key)
            if cache[key] is POISONED:
                raise Poisoned()
            return cache[key]
        d, _ = self.formula_defs[key]
        if d.unit is not None:
            dim = written_unit(d.unit).dimension
            cache[key] = dim
            return dim
        # Formulas are typed in dependency order (checker.compile_all), so this is reached
        # only for a formula read before its own turn: typed here once, remembered.
        cache[key] = None  # in progress
        try:
            expr = self.expr(d.expr, prefer_columns=d.kind == COLUMN)
        except _CycleSignal as signal:
            raise CycleError(
                f"formulas depend on each other in a circle through '{name}' "
                f"(and '{signal.key[1]}')", d.name_span, [name, signal.key[1]],
                hint="one of them must be computed from other values") from None
        except (CycleError, Poisoned):
            raise
        except LayercalcError:
            raise Poisoned() from None
        finally:
            if cache.get(key, 0) is None:  # whatever happened, no longer in progress
                del cache[key]
        cache[key] = expr.meta.dimension
        return expr.meta.dimension

    def unary(self, node: Unary, prefer_columns: bool, diff: bool):
        operand = self.expr(node.operand, prefer_columns, diff)
        if node.op == "not":
            self.need_condition(operand, "not")
            return TUnary(Meta(node.span, U.DIMENSIONLESS, operand.meta.shape, True), "not",
                          operand)
        self.need_number(operand, node.op)
        self.refuse_affine(operand, "negated")
        return TUnary(Meta(node.span, operand.meta.dimension, operand.meta.shape), node.op,
                      operand)

    def binary(self, node: Binary, prefer_columns: bool, diff: bool):
        left = self.expr(node.left, prefer_columns, diff)
        right = self.expr(node.right, prefer_columns, diff)
        shape = COLUMN if COLUMN in (left.meta.shape, right.meta.shape) else CELL
        op = node.op
        if op in ("and", "or"):
            self.need_condition(left, op)
            self.need_condition(right, op)
            return TBinary(Meta(node.span, U.DIMENSIONLESS, shape, True), op, left, right)
        self.need_number(left, op)
        self.need_number(right, op)
        if op in ("+", "-") or op in COMPARISONS:
            verb = {"+": "add", "-": "subtract"}.get(op, "compare")
            if not U.same_dimension(left.meta.dimension, right.meta.dimension):
                self.mismatch(node, left, right, verb)
            return TBinary(Meta(node.span, left.meta.dimension, shape, op in COMPARISONS),
                           op, left, right)
        if op in ("*", "/"):
            self.refuse_affine(left, "multiplied or divided")
            self.refuse_affine(right, "multiplied or divided")
            dim = left.meta.dimension * right.meta.dimension if op == "*" else \
                left.meta.dimension / right.meta.dimension
            return TBinary(Meta(node.span, dim, shape), op, left, right)
        # power
        self.refuse_affine(left, "raised to a power")
        if not U.is_dimensionless(right.meta.dimension):
            raise UnitError(f"an exponent must be dimensionless, not "
                            f"{U.with_article(U.dimension_name(right.meta.dimension))}", right.meta.span)
        if U.is_dimensionless(left.meta.dimension):
            return TBinary(Meta(node.span, U.DIMENSIONLESS, shape), op, left, right)
        exponent = _constant_number(node.right)
        if exponent is None:
            raise UnitError(
                f"a {U.dimension_name(left.meta.dimension)} can only be raised to a fixed "
                f"number", right.meta.span,
                hint="write the exponent as a number, e.g. x^2 or x^0.5")
        if not abs(exponent) <= U.MAX_UNIT_EXPONENT:  # also NaN
            raise UnitError(
                f"a {U.dimension_name(left.meta.dimension)} can only be raised to a power "
                f"from -{U.MAX_UNIT_EXPONENT} to {U.MAX_UNIT_EXPONENT}, not {exponent:g}",
                right.meta.span, hint="divide by a reference value first, e.g. (p/p0)^0.286")
        frac = Fraction(exponent).limit_denominator(1000)
        dim = left.meta.dimension ** U.rational(frac)
        return TBinary(Meta(node.span, dim, shape), op, left, right)

    def call(self, node: Call, prefer_columns: bool, diff: bool):
        function = lookup_function(node.function, len(node.args))
        span = node.name_span or node.span
        if function is None:
            close = close_names(node.function, function_names())
            raise UnknownNameError(f"unknown function '{node.function}'", span, close,
                                   hint=None if close else
                                   "functions: " + ", ".join(function_names()))
        low, high = function.arity
        n = len(node.args)
        if n < low or (high is not None and n > high):
            want = f"{low}" if low == high else (f"at least {low}" if high is None else
                                                 f"{low} to {high}")
            raise DefinitionError(f"{node.function} takes {want} argument"
                                  f"{'s' if want != '1' else ''}, not {n}", node.span,
                                  hint=function.summary)
        inner_columns = prefer_columns or function.layer_rule in (AGGREGATE, SCAN)
        args = [self.expr(a, inner_columns, diff) for a in node.args]
        for i, a in enumerate(args):
            if function.condition_first and i == 0:
                self.need_condition(a, node.function)
            else:
                self.need_number(a, node.function)
        dim = self.call_dimension(function, args, node)
        if function.layer_rule == AGGREGATE:
            shape = CELL
        elif function.layer_rule == SCAN:
            shape = COLUMN
        else:
            shape = COLUMN if any(a.meta.shape == COLUMN for a in args) else CELL
        return TCall(Meta(node.span, dim, shape), function, tuple(args))

    def call_dimension(self, function, args, node):
        rule = function.dimension
        numeric = args[1:] if function.condition_first else args
        if rule == "dimensionless":
            for a in numeric:
                if not U.is_dimensionless(a.meta.dimension):
                    raise UnitError(
                        f"{function.name} needs a dimensionless argument, not "
                        f"{U.with_article(U.dimension_name(a.meta.dimension))}", a.meta.span,
                        found=U.dimension_name(a.meta.dimension), expected="dimensionless",
                        hint="divide by a reference value first, e.g. ln(p_bottom / p_top)")
            return U.DIMENSIONLESS
        if rule == "sqrt":
            self.refuse_affine(numeric[0], "passed to sqrt")
            return numeric[0].meta.dimension ** U.rational(Fraction(1, 2))
        if rule == "same":
            first = numeric[0]
            for a in numeric[1:]:
                if not U.same_dimension(first.meta.dimension, a.meta.dimension):
                    self.mismatch(node, first, a, f"use together in {function.name}")
            return first.meta.dimension
        if rule == "first":
            return args[function.result_like].meta.dimension
        expected, result = rule
        for a, want in zip(args, expected):
            if U.dimension_name(a.meta.dimension) != want:
                raise UnitError(
                    f"{function.name} needs {U.with_article(want)} here, not "
                    f"{U.with_article(U.dimension_name(a.meta.dimension))}", a.meta.span,
                    found=U.dimension_name(a.meta.dimension), expected=want,
                    hint=function.summary)
        return _named_dimension(result)

    # -- helpers -----------------------------------------------------------------
    def same(self, a, b, span, a_text, b_text, declared_first=False):
        if not U.same_dimension(a, b):
            raise UnitError(
                f"{a_text} is {U.with_article(U.dimension_name(a))} but {b_text} gives "
                f"{U.with_article(U.dimension_name(b))}", span,
                found=U.dimension_name(b), expected=U.dimension_name(a),
                hint="change the unit in brackets or the formula")

    def mismatch(self, node, left, right, verb):
        ln, rn = U.dimension_name(left.meta.dimension), U.dimension_name(right.meta.dimension)
        source = node.span.source
        lt = source.text[left.meta.span.start:left.meta.span.end]
        rt = source.text[right.meta.span.start:right.meta.span.end]
        if verb in ("add", "subtract"):
            message = f"cannot {verb} {U.with_article(rn)} {'to' if verb == 'add' else 'from'} " \
                      f"{U.with_article(ln)}"
        else:
            message = f"cannot {verb} {U.with_article(ln)} with {U.with_article(rn)}"
        raise UnitError(message, node.span, found=rn, expected=ln,
                        hint=f"{lt.strip()} is {U.with_article(ln)}; {rt.strip()} is {U.with_article(rn)}")

    def need_condition(self, node, op):
        if not node.meta.condition:
            raise DefinitionError(f"'{op}' needs a condition (a comparison such as T > 0 degC)",
                                  node.meta.span)

    def need_number(self, node, op):
        if node.meta.condition:
            raise DefinitionError(
                f"a condition (true/false) cannot be used with '{op}'", node.meta.span,
                hint="use where(condition, value_if_true, value_if_false)")

    def refuse_affine(self, node, verb):
        if isinstance(node, TNumber) and node.affine:
            raise UnitError(f"a degC value cannot be {verb}", node.meta.span,
                            hint=AFFINE_HINTS.get(verb, AFFINE_HINTS[None]))


# What to write instead of an operation on a degC number, by operation.
AFFINE_HINTS = {
    "negated": "a temperature below freezing takes its sign against the number: -6 degC "
               "(no brackets between); a temperature difference is written in K: -(6 K)",
    None: "degC is an offset scale: a degC number is an absolute temperature; "
          "write differences and products in K",
}



class Poisoned(Exception):
    """A formula reads another that has its own (already reported) error."""


POISONED = object()  # dim_cache value of a formula that failed to type


class _CycleSignal(Exception):
    def __init__(self, key):
        self.key = key


# ---------------------------------------------------------------- small helpers
def _text(node) -> str:
    return node.span.source.text[node.span.start:node.span.end].strip()


def _named_dimension(name: str):
    for named, dim in U._DIMENSION_NAMES:
        if named == name:
            return dim
    raise AssertionError(name)


def is_constant(expr) -> bool:
    if isinstance(expr, Literal):
        return True
    if isinstance(expr, Unary) and expr.op in "-+":
        return is_constant(expr.operand)
    return False


def constant_value(expr):
    if isinstance(expr, Literal):
        unit = written_unit(expr.unit) if expr.unit is not None else U.ONE
        return expr.value, unit
    value, unit = constant_value(expr.operand)
    if unit.affine and expr.op == "-":
        return -value, unit  # -5 degC is a temperature, not a negated one
    return (-value if expr.op == "-" else value), unit


def constant_si(expr) -> float:
    value, unit = constant_value(expr)
    return in_range(float(unit.to_si(value)), expr)


def in_range(value_si: float, node) -> float:
    """A number as written, once in SI, must lie within +-LARGEST_VALUE (limits.py)."""
    if not abs(value_si) <= LARGEST_VALUE:  # also inf and NaN
        raise DefinitionError(
            f"the number {_text(node)} is out of range: numbers must lie between "
            f"-{LARGEST_VALUE:g} and {LARGEST_VALUE:g} (in SI units)", node.span,
            hint="check the exponent of the number and its unit")
    return value_si


def _constant_number(expr) -> float | None:
    if isinstance(expr, Literal) and expr.unit is None:
        return expr.value
    if isinstance(expr, Unary) and expr.op in "-+":
        inner = _constant_number(expr.operand)
        return None if inner is None else (-inner if expr.op == "-" else inner)
    if isinstance(expr, Binary) and expr.op == "/":
        a, b = _constant_number(expr.left), _constant_number(expr.right)
        if a is not None and b:
            return a / b
    return None


def referenced_names(definitions) -> set[str]:
    found = set()
    stack = [d.expr for d in definitions]
    while stack:
        node = stack.pop()
        if isinstance(node, Name):
            found.add(node.name)
        elif isinstance(node, Unary):
            stack.append(node.operand)
        elif isinstance(node, Binary):
            stack.extend((node.left, node.right))
        elif isinstance(node, Call):
            stack.extend(node.args)
    return found


