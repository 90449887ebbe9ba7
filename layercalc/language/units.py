"""The unit table and unit algebra, checked with sympy dimensions.

Every unit is a dimension, an SI scale and an offset (only degC has one):
    value_SI = value * scale + offset
Unit work happens once per formula at check time; evaluation only sees SI floats.

Dimensions are sympy's (sympy.physics.units), compared through dimsys_SI's dependency
dicts. The command line may instead reuse what sympy derived for the same sheet text in an
earlier run (dimensions.py): `use_cached(table)` before anything else asks for a dimension.
The names below (DIMENSIONLESS, PRESSURE, ENERGY, length, mass, temperature, time,
UNIT_TABLE, ONE) are built on first use, by whichever source was chosen.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from functools import lru_cache
from types import MappingProxyType

from layercalc.names import close_names, did_you_mean
from layercalc.language.dimensions import PlainDimension
from layercalc.errors import UnitError

_LAZY = ("DIMENSIONLESS", "PRESSURE", "ENERGY", "length", "mass", "temperature", "time",
         "UNIT_TABLE", "_DIMENSION_NAMES", "ONE")
_SOURCE: list[str] = []  # "sympy" or "cache", once chosen


def __getattr__(name):
    if name in _LAZY:
        _ensure()
        return globals()[name]
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def source() -> str | None:
    """Where dimensions come from in this process: "sympy", "cache" or None (not yet)."""
    return _SOURCE[0] if _SOURCE else None


def _ensure() -> None:
    if not _SOURCE:
        use_sympy()


def use_sympy() -> None:
    """Build the unit table with sympy's dimensions (the default)."""
    if _SOURCE:
        return
    from sympy.physics.units.definitions.dimension_definitions import (
        length, mass, temperature, time,
    )
    from sympy.physics.units.dimensions import Dimension

    _install("sympy", Dimension(1), length, mass, temperature, time)


def use_cached(table: dict) -> bool:
    """Build the unit table from exponents sympy derived in an earlier run (see
    dimensions.py); False (and nothing changed) when the table does not fit."""
    if _SOURCE:
        return source() == "cache"
    try:
        bases = {name: PlainDimension(table["bases"][name])
                 for name in ("length", "mass", "temperature", "time")}
        stored_units = {k: PlainDimension(v) for k, v in table["units"].items()}
    except (KeyError, TypeError, ValueError, ZeroDivisionError):
        return False
    _install("cache", PlainDimension({}), bases["length"], bases["mass"],
             bases["temperature"], bases["time"])
    built = {k: e.dimension for k, e in globals()["UNIT_TABLE"].items()}
    if built != stored_units:  # a table from another version: do not trust it
        _SOURCE.clear()
        return False
    return True


def outcome_table() -> dict:
    """The base exponents of the current unit table, for dimensions.remember()."""
    from layercalc.language.dimensions import exponents_text

    _ensure()
    g = globals()
    return {"bases": {name: exponents_text(dependencies(g[name]))
                      for name in ("length", "mass", "temperature", "time")},
            "units": {k: exponents_text(dependencies(e.dimension))
                      for k, e in g["UNIT_TABLE"].items()}}


def _install(name, one, length, mass, temperature, time) -> None:
    g = globals()
    g.update(DIMENSIONLESS=one, length=length, mass=mass, temperature=temperature,
             time=time)
    g["PRESSURE"] = mass / (length * time ** 2)
    g["ENERGY"] = mass * length ** 2 / time ** 2
    g["UNIT_TABLE"] = MappingProxyType(_entries())
    g["_DIMENSION_NAMES"] = _dimension_names()
    g["ONE"] = Unit(one, 1.0, 0.0, "1")
    _SOURCE.append(name)
    _names_by_dependencies.cache_clear()


@dataclass(frozen=True)
class UnitEntry:
    """One row of the unit table."""

    symbol: str
    name: str
    dimension: object  # sympy Dimension, or PlainDimension from the cache
    scale: float
    offset: float
    source: str


def _entries() -> dict[str, UnitEntry]:
    g = globals()
    DIMENSIONLESS, PRESSURE, ENERGY = g["DIMENSIONLESS"], g["PRESSURE"], g["ENERGY"]
    length, mass, temperature, time = g["length"], g["mass"], g["temperature"], g["time"]
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


def _dimension_names() -> list:
    """Dimension names used in messages, keyed by their SI dependency dicts."""
    g = globals()
    DIMENSIONLESS, PRESSURE, ENERGY = g["DIMENSIONLESS"], g["PRESSURE"], g["ENERGY"]
    length, mass, temperature, time = g["length"], g["mass"], g["temperature"], g["time"]
    return [
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
def dependencies(dimension) -> frozenset:
    """A dimension's SI base-dimension exponents, as a hashable set of (base, power).

    Comparing these (not the sympy expressions) is what makes `length + time` a mismatch
    rather than an unevaluated sum, and keeps temperature apart from time.
    """
    if isinstance(dimension, PlainDimension):
        return dimension.deps
    from sympy.physics.units.dimensions import Dimension
    from sympy.physics.units.systems.si import dimsys_SI

    deps = dimsys_SI.get_dimensional_dependencies(dimension, mark_dimensionless=True)
    return frozenset((str(k.name), Fraction(int(v.p), int(v.q)))
                     for k, v in deps.items() if k != Dimension(1))


@lru_cache(maxsize=1)
def _names_by_dependencies() -> dict[frozenset, str]:
    _ensure()
    return {dependencies(d): name for name, d in globals()["_DIMENSION_NAMES"]}


def same_dimension(a, b) -> bool:
    return dependencies(a) == dependencies(b)


def is_dimensionless(a) -> bool:
    return not dependencies(a)


def dimension_name(dimension) -> str:
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

    dimension: object
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


# SI symbols for named dimensions; anything else is spelt from its base units.
_SI_BY_NAME = {
    "dimensionless": "1", "pressure": "Pa", "temperature": "K", "length": "m", "time": "s",
    "mass": "kg", "speed": "m/s", "inverse time (e.g. divergence)": "s^-1",
    "pressure per time (e.g. omega)": "Pa/s", "acceleration": "m/s^2",
    "density": "kg/m^3", "energy": "J", "temperature per length (e.g. lapse rate)": "K/m",
    "temperature per pressure": "K/Pa", "inverse length": "m^-1",
    "inverse pressure": "Pa^-1", "length per pressure": "m/Pa", "area": "m^2",
}
_SI_BASE = {"length": "m", "mass": "kg", "time": "s", "temperature": "K", "current": "A",
            "amount_of_substance": "mol", "luminous_intensity": "cd"}


def with_article(words: str) -> str:
    """A dimension's name for a sentence: "a pressure", "an inverse time", "a plain number"."""
    if words == "dimensionless":
        return "a plain number"
    return ("an " if words[:1] in "aeiou" else "a ") + words


def si_unit_text(dimension) -> str:
    """The SI unit of a dimension as text: "Pa/s", "K/m", or base units ("kg m^-1")."""
    named = _SI_BY_NAME.get(dimension_name(dimension))
    if named:
        return named
    parts = []
    for base, power in sorted(dependencies(dimension)):
        symbol = _SI_BASE.get(base, base)
        parts.append(symbol if power == 1 else f"{symbol}^{power}")
    return " ".join(parts) or "1"


def si_unit(dimension) -> "Unit":
    return Unit(dimension, 1.0, 0.0, si_unit_text(dimension))


def lookup(symbol: str, span=None) -> Unit:
    """One unit symbol from the table, or a UnitError naming close matches."""
    _ensure()
    UNIT_TABLE = globals()["UNIT_TABLE"]
    entry = UNIT_TABLE.get(symbol)
    if entry is None:
        close = close_names(symbol, UNIT_TABLE, 3, cutoff=0.5)
        hint = did_you_mean(close) or "known units: " + ", ".join(UNIT_TABLE)
        raise UnitError(f"unknown unit '{symbol}'", span, hint=hint)
    return Unit(entry.dimension, entry.scale, entry.offset, symbol)


def _refuse_affine(unit: Unit, span) -> None:
    if unit.affine:
        raise UnitError(
            "degC cannot be combined with other units or raised to a power",
            span, hint="degC is an offset scale; for a difference or a rate use K (e.g. K/km)")


# Powers of units stop here: no unit of the trade needs more than a cube, and a bound keeps
# the exact dimension arithmetic (and the float factors) small.
MAX_UNIT_EXPONENT = 12


def _factor(compute) -> float:
    """A unit factor from float arithmetic; an overflow or a division by a factor that
    underflowed to zero gives inf (written_unit refuses it with the unit's position)."""
    try:
        return float(compute())
    except (OverflowError, ZeroDivisionError):
        return math.inf


def multiply(a: Unit, b: Unit, span=None) -> Unit:
    _refuse_affine(a, span)
    _refuse_affine(b, span)
    return Unit(a.dimension * b.dimension, _factor(lambda: a.scale * b.scale), 0.0,
                f"{a.text} {b.text}")


def divide(a: Unit, b: Unit, span=None) -> Unit:
    _refuse_affine(a, span)
    _refuse_affine(b, span)
    return Unit(a.dimension / b.dimension, _factor(lambda: a.scale / b.scale), 0.0,
                f"{a.text}/{b.text}")


def power(a: Unit, exponent: Fraction | int, span=None) -> Unit:
    _refuse_affine(a, span)
    exponent = Fraction(exponent)
    if abs(exponent) > MAX_UNIT_EXPONENT:
        shown = f"{exponent}" if abs(exponent) < 10 ** 6 else "of a million or more"
        raise UnitError(f"the unit power {shown} is out of range: powers of units go from "
                        f"-{MAX_UNIT_EXPONENT} to {MAX_UNIT_EXPONENT}", span,
                        hint="write the unit as the quantity has it, e.g. [m/s^2] or [kg/m^3]")
    return Unit(a.dimension ** rational(exponent), _factor(lambda: a.scale ** float(exponent)),
                0.0, f"{a.text}^{exponent}")


def rational(value: Fraction):
    """An exact exponent for the current dimensions: sympy's Rational or a Fraction."""
    if source() == "cache":
        return Fraction(value)
    from sympy import Rational

    return Rational(value.numerator, value.denominator)


def number(value: float) -> Unit:
    _ensure()
    return Unit(globals()["DIMENSIONLESS"], float(value), 0.0, repr(value))
