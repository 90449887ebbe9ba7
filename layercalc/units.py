"""The unit table and unit algebra, checked with sympy dimensions.

Every unit is a sympy dimension, an SI scale and an offset (only degC has one):
    value_SI = value * scale + offset
Unit work happens once per formula at check time; evaluation only sees SI floats.
"""

from __future__ import annotations

import difflib
import math
from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache
from types import MappingProxyType
from typing import Mapping

from sympy.physics.units.definitions.dimension_definitions import (
    length, mass, temperature, time,
)
from sympy.physics.units.dimensions import Dimension
from sympy.physics.units.systems.si import dimsys_SI

from .errors import UnitError

DIMENSIONLESS = Dimension(1)
PRESSURE = mass / (length * time ** 2)
ENERGY = mass * length ** 2 / time ** 2


@dataclass(frozen=True)
class UnitEntry:
    """One row of the unit table."""

    symbol: str
    name: str
    dimension: Dimension
    scale: float
    offset: float
    source: str


def _entries() -> dict[str, UnitEntry]:
    nist = "NIST SP 811 (2008), Appendix B.8"
    si = "SI Brochure, BIPM, 9th ed. (2019)"
    rows = [
        # symbol, name, dimension, SI scale, offset, source
        ("1", "dimensionless", DIMENSIONLESS, 1.0, 0.0, si),
        ("%", "percent", DIMENSIONLESS, 0.01, 0.0, "ISO 80000-1 (2009), 7.2 (1 % = 0.01)"),
        ("rad", "radian", DIMENSIONLESS, 1.0, 0.0, si + ", Table 4"),
        ("deg", "degree of angle", DIMENSIONLESS, math.pi / 180.0, 0.0, si + ", Table 8"),
        ("Pa", "pascal", PRESSURE, 1.0, 0.0, si + ", Table 4"),
        ("hPa", "hectopascal", PRESSURE, 1.0e2, 0.0, si + ", prefixes, Table 7"),
        ("kPa", "kilopascal", PRESSURE, 1.0e3, 0.0, si + ", prefixes, Table 7"),
        ("mb", "millibar", PRESSURE, 1.0e2, 0.0, nist + " (1 mbar = 100 Pa)"),
        ("mbar", "millibar", PRESSURE, 1.0e2, 0.0, nist + " (1 mbar = 100 Pa)"),
        ("bar", "bar", PRESSURE, 1.0e5, 0.0, nist + " (1 bar = 1e5 Pa)"),
        ("ubar", "microbar", PRESSURE, 1.0e-1, 0.0, nist + " (1 ubar = 0.1 Pa)"),
        ("microbar", "microbar", PRESSURE, 1.0e-1, 0.0, nist + " (1 ubar = 0.1 Pa)"),
        ("K", "kelvin", temperature, 1.0, 0.0, si + ", Table 2"),
        ("degC", "degree Celsius", temperature, 1.0, 273.15, si + ", 2.3.1 (t/degC = T/K - 273.15)"),
        ("m", "metre", length, 1.0, 0.0, si + ", Table 2"),
        ("mm", "millimetre", length, 1.0e-3, 0.0, si + ", prefixes"),
        ("cm", "centimetre", length, 1.0e-2, 0.0, si + ", prefixes"),
        ("dam", "decametre", length, 1.0e1, 0.0, si + ", prefixes"),
        ("km", "kilometre", length, 1.0e3, 0.0, si + ", prefixes"),
        ("ft", "foot", length, 0.3048, 0.0, nist + " (1 ft = 0.3048 m exactly)"),
        ("s", "second", time, 1.0, 0.0, si + ", Table 2"),
        ("min", "minute", time, 60.0, 0.0, si + ", Table 8"),
        ("h", "hour", time, 3600.0, 0.0, si + ", Table 8"),
        ("day", "day", time, 86400.0, 0.0, si + ", Table 8"),
        ("kt", "knot", length / time, 1852.0 / 3600.0, 0.0,
         nist + " (1 kn = 1852 m / 3600 s = 0.514 444 m/s)"),
        ("g", "gram", mass, 1.0e-3, 0.0, si + ", Table 2 (kg) and prefixes"),
        ("kg", "kilogram", mass, 1.0, 0.0, si + ", Table 2"),
        ("J", "joule", ENERGY, 1.0, 0.0, si + ", Table 4"),
        ("N", "newton", mass * length / time ** 2, 1.0, 0.0, si + ", Table 4"),
        ("W", "watt", ENERGY / time, 1.0, 0.0, si + ", Table 4"),
    ]
    return {r[0]: UnitEntry(*r) for r in rows}


UNIT_TABLE: Mapping[str, UnitEntry] = MappingProxyType(_entries())

# Dimension names used in messages, keyed by their SI dependency dicts.
_DIMENSION_NAMES = [
    ("dimensionless", DIMENSIONLESS),
    ("pressure", PRESSURE),
    ("temperature", temperature),
    ("length", length),
    ("time", time),
    ("mass", mass),
    ("speed", length / time),
    ("inverse time (e.g. divergence)", 1 / time),
    ("pressure per time (e.g. omega)", PRESSURE / time),
    ("acceleration", length / time ** 2),
    ("density", mass / length ** 3),
    ("energy", ENERGY),
    ("specific gas constant", ENERGY / (mass * temperature)),
    ("temperature per length (e.g. lapse rate)", temperature / length),
    ("temperature per pressure", temperature / PRESSURE),
    ("inverse length", 1 / length),
    ("inverse pressure", 1 / PRESSURE),
    ("length per pressure", length / PRESSURE),
    ("area", length ** 2),
]


@lru_cache(maxsize=4096)
def dependencies(dimension: Dimension) -> frozenset:
    """A dimension's SI base-dimension exponents, as a hashable set of (base, power).

    Comparing these (not the sympy expressions) is what makes `length + time` a mismatch
    rather than an unevaluated sum, and keeps temperature apart from time.
    """
    deps = dimsys_SI.get_dimensional_dependencies(dimension, mark_dimensionless=True)
    return frozenset((str(k), v) for k, v in deps.items() if k != Dimension(1))


@lru_cache(maxsize=1)
def _names_by_dependencies() -> dict[frozenset, str]:
    return {dependencies(d): name for name, d in _DIMENSION_NAMES}


def same_dimension(a: Dimension, b: Dimension) -> bool:
    return dependencies(a) == dependencies(b)


def is_dimensionless(a: Dimension) -> bool:
    return not dependencies(a)


def dimension_name(dimension: Dimension) -> str:
    """A dimension in words: "pressure", "temperature", or base powers spelt out."""
    deps = dependencies(dimension)
    named = _names_by_dependencies().get(deps)
    if named:
        return named
    parts = []
    for base, power in sorted(deps):
        power_text = "" if power == 1 else f"^{power}"
        parts.append(f"{base}{power_text}")
    return " ".join(parts)


@dataclass(frozen=True)
class Unit:
    """A resolved unit: SI value = value * scale + offset."""

    dimension: Dimension
    scale: float
    offset: float = 0.0
    text: str = "1"

    @property
    def affine(self) -> bool:
        return self.offset != 0.0

    def to_si(self, value):
        return value * self.scale + self.offset if self.offset else value * self.scale

    def from_si(self, value):
        return (value - self.offset) / self.scale if self.offset else value / self.scale

    def describe(self) -> str:
        return f"{dimension_name(self.dimension)} [{self.text}]"


ONE = Unit(DIMENSIONLESS, 1.0, 0.0, "1")


def lookup(symbol: str, span=None) -> Unit:
    """One unit symbol from the table, or a UnitError naming close matches."""
    entry = UNIT_TABLE.get(symbol)
    if entry is None:
        close = difflib.get_close_matches(symbol, list(UNIT_TABLE), n=3, cutoff=0.5)
        hint = ("did you mean " + " or ".join(f"'{c}'" for c in close) + "?") if close else (
            "known units: " + ", ".join(UNIT_TABLE))
        raise UnitError(f"unknown unit '{symbol}'", span, hint=hint)
    return Unit(entry.dimension, entry.scale, entry.offset, symbol)


def _refuse_affine(unit: Unit, span) -> None:
    if unit.affine:
        raise UnitError(
            "degC cannot be combined with other units or raised to a power",
            span, hint="degC is an offset scale; for a difference or a rate use K (e.g. K/km)")


def multiply(a: Unit, b: Unit, span=None) -> Unit:
    _refuse_affine(a, span)
    _refuse_affine(b, span)
    return Unit(a.dimension * b.dimension, a.scale * b.scale, 0.0, f"{a.text} {b.text}")


def divide(a: Unit, b: Unit, span=None) -> Unit:
    _refuse_affine(a, span)
    _refuse_affine(b, span)
    return Unit(a.dimension / b.dimension, a.scale / b.scale, 0.0, f"{a.text}/{b.text}")


def power(a: Unit, exponent: Fraction | int, span=None) -> Unit:
    _refuse_affine(a, span)
    exponent = Fraction(exponent)
    from sympy import Rational

    return Unit(a.dimension ** Rational(exponent.numerator, exponent.denominator),
                a.scale ** float(exponent), 0.0, f"{a.text}^{exponent}")


def number(value: float) -> Unit:
    return Unit(DIMENSIONLESS, float(value), 0.0, repr(value))


def bare_unit(text: str, span=None) -> Unit:
    """A unit written without brackets after a number: `hPa`, `K`, `s^-1`."""
    symbol, _, exponent = text.partition("^")
    unit = lookup(symbol, span)
    if exponent:
        unit = power(unit, int(exponent), span)
    return Unit(unit.dimension, unit.scale, unit.offset, text)
