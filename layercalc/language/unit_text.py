"""Units as written: unit nodes of the syntax tree, or unit text from a workbook header or a
command-line option, turned into `Unit` objects (factor checked)."""

from __future__ import annotations

import math
import sys

from layercalc.errors import UnitError
from layercalc.limits import LARGEST_UNIT_FACTOR
from layercalc.language import units as U
from layercalc.language.build import build_unit
from layercalc.language.nodes import UnitName, UnitNumber, UnitOp, UnitPower
from layercalc.language.parser import parse_unit_text
from layercalc.source import Source

MAX_NUMBER = sys.float_info.max  # 1.797e308, the largest float64


def _written(node) -> str:
    return node.span.source.text[node.span.start:node.span.end].strip()


def resolve_unit(node) -> U.Unit:
    """The Unit of a unit node (name, number, power, product or quotient)."""
    if isinstance(node, UnitName):
        return U.lookup(node.symbol, node.span)
    if isinstance(node, UnitNumber):
        if not (math.isfinite(node.value) and node.value > 0):
            raise UnitError(f"the number {_written(node)} in a unit must be positive and below "
                            f"{MAX_NUMBER:.4g}", node.span,
                            hint="write a scaled unit like [1e-5 s^-1] or [10 m]")
        return U.number(node.value)
    if isinstance(node, UnitPower):
        return U.power(resolve_unit(node.base), node.exponent, node.span)
    if isinstance(node, UnitOp):
        left, right = resolve_unit(node.left), resolve_unit(node.right)
        if node.op == "*":
            return U.multiply(left, right, node.span)
        return U.divide(left, right, node.span)
    raise AssertionError(f"unit node {node!r}")


def written_unit(node) -> U.Unit:
    """The Unit of a bracketed unit as written, keeping its text; its factor must be positive."""
    unit = resolve_unit(node)
    text = node.span.source.text[node.span.start:node.span.end].strip().strip("[]").strip()
    if not 1 / LARGEST_UNIT_FACTOR <= unit.scale <= LARGEST_UNIT_FACTOR:
        size = "too large" if unit.scale > 1 else "too small"
        raise UnitError(f"the unit [{text}] has a factor {size} (a unit's factor to SI must "
                        f"lie between {1 / LARGEST_UNIT_FACTOR:g} and {LARGEST_UNIT_FACTOR:g})",
                        node.span, hint="write a scaled unit like [1e-5 s^-1] or [10 m]")
    return U.Unit(unit.dimension, unit.scale, unit.offset, text or unit.text)


# Units already read from text, per unit table ("sympy" or "cache"): the same few texts
# (hPa, degC, 1e-5 s^-1) are read dozens of times per sheet, each a parse by lark. Only
# successes are kept; a Unit is frozen, and its value does not depend on `where`.
_READ: dict[tuple[str, str], U.Unit] = {}


def parse_unit_string(text: str, where: str = "<unit>") -> U.Unit:
    """A unit given as text (workbook headers, command-line options)."""
    table = U.source()
    if table is not None and (table, text) in _READ:
        return _READ[table, text]
    source = Source(where, text)
    unit = written_unit(build_unit(source, parse_unit_text(source)))
    table = U.source()  # reading the unit may have chosen the table
    if table is not None:
        _READ[table, text] = unit
    return unit


def units_read() -> dict[str, U.Unit]:
    """The units this process has read from text with the current unit table."""
    table = U.source()
    return {text: unit for (source, text), unit in _READ.items() if source == table}


def add_units_read(units: dict[str, U.Unit]) -> None:
    """Units read from these texts in an earlier run with the same unit table (a kept
    checked sheet brings them, checking/stored.py), so they need no parse now."""
    table = U.source()
    if table is not None:
        for text, unit in units.items():
            _READ.setdefault((table, text), unit)
