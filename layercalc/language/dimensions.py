"""Where dimensions come from: sympy, or a cache of what sympy said before.

The checker derives every formula's dimension with sympy (sympy.physics.units dimensions,
compared through dimsys_SI's dependency dicts). Importing sympy's unit systems costs about a
third of a second at every start, so the command line may reuse the outcome of an earlier
check of the very same text: `cached_outcome(key)` says whether a sheet with that key (a
hash of the layercalc version, the grammar and the sheet's text) passed a sympy check
before, and then the dimensions are the exponent sets sympy gave, stored with it
(`PlainDimension`). The same sheet text therefore gets the same dimensions either way; any
other text is checked with sympy. Nothing here reads user text: the cache holds hashes and
the unit table's base exponents, written as JSON.
"""

from __future__ import annotations

import hashlib
import json
import os
from fractions import Fraction

CACHE_FILE = "dimensions-v1.json"
MAX_KEYS = 2000  # sheets remembered; the oldest are dropped


class PlainDimension:
    """A dimension as base exponents, e.g. {"mass": 1, "length": -1, "time": -2}; the same
    algebra as sympy's Dimension (product, quotient, rational power)."""

    __slots__ = ("deps",)

    def __init__(self, deps) -> None:
        items = deps.items() if isinstance(deps, dict) else deps
        self.deps = frozenset((k, Fraction(v)) for k, v in items if Fraction(v) != 0)

    def _combine(self, other, sign):
        merged: dict[str, Fraction] = dict(self.deps)
        for k, v in other.deps:
            merged[k] = merged.get(k, Fraction(0)) + sign * v
        return PlainDimension(merged)

    def __mul__(self, other):
        return self._combine(_plain(other), 1)

    __rmul__ = __mul__

    def __truediv__(self, other):
        return self._combine(_plain(other), -1)

    def __rtruediv__(self, other):
        return _plain(other)._combine(self, -1)

    def __pow__(self, exponent):
        exponent = Fraction(str(exponent)) if not isinstance(exponent, (int, Fraction)) \
            else Fraction(exponent)
        return PlainDimension({k: v * exponent for k, v in self.deps})

    def __eq__(self, other):
        return isinstance(other, PlainDimension) and self.deps == other.deps

    def __hash__(self):
        return hash(self.deps)

    def __repr__(self):
        return f"PlainDimension({dict(sorted(self.deps))})"


def _plain(value):
    if isinstance(value, PlainDimension):
        return value
    if value == 1:
        return PlainDimension({})
    raise TypeError(f"cannot combine a dimension with {value!r}")


def sheet_key(text: str, extra: str = "") -> str:
    """The key of a sheet's check: layercalc version, grammar and text (and options)."""
    from layercalc.version import __version__
    from layercalc.language.parser import grammar_text

    digest = hashlib.sha256()
    for part in (__version__, grammar_text(), extra, text):
        digest.update(part.encode("utf-8", "surrogatepass"))
        digest.update(b"\0")
    return digest.hexdigest()


def _cache_path():
    from layercalc.language.parser import cache_dir

    folder = cache_dir()
    return None if folder is None else folder / CACHE_FILE


def _read() -> dict:
    path = _cache_path()
    if path is None or not path.is_file():
        return {}
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return {}
    return data if isinstance(data, dict) else {}


def cached_outcome(key: str) -> dict | None:
    """The stored base exponents of the unit table and named dimensions, if a sheet with
    this key passed a sympy check before; else None."""
    data = _read()
    if key in data.get("keys", []) and isinstance(data.get("table"), dict):
        return data["table"]
    return None


def remember(key: str, table: dict) -> None:
    """Record that the sheet with this key passed a sympy check (best effort)."""
    path = _cache_path()
    if path is None:
        return
    data = _read()
    keys = [k for k in data.get("keys", []) if k != key][-(MAX_KEYS - 1):] + [key]
    payload = json.dumps({"table": table, "keys": keys})
    try:
        from layercalc.files import write_text_atomic

        write_text_atomic(path, payload)
    except Exception:  # noqa: BLE001 - a cache that cannot be written is no error of the user
        pass


def exponents_text(deps) -> dict[str, str]:
    """Dependencies as JSON-friendly {base: "p/q"}."""
    return {str(k): str(v) for k, v in deps}


def is_disabled() -> bool:
    return os.environ.get("LAYERCALC_NO_DIMENSION_CACHE") == "1"
