"""A checked sheet as JSON and back, without pickle (checking/stored.py keeps sheets so).

What it writes: None, bool, int, float (NaN and infinities as JSON's extensions), str,
tuples, lists, dicts (any hashable keys), sets, Fractions, numpy arrays and scalars of
plain numeric or boolean dtypes, rows of the function table (by name), and instances of
layercalc's own classes, by their attributes (`__dict__` and `__slots__`), as pickle would
keep them. Objects met twice are written once and referred to, so shared objects stay
shared (every span of a sheet refers to the one Source). Anything else (a lark token, a
lambda, an exception) makes `dumps` raise TypeError: such a sheet is not kept.

Reading creates instances of layercalc classes only (`object.__new__`, attributes set as
written, no `__init__` run, no other code called); an object's parts are written, and
made, before it, so a frozen dataclass is complete (and hashable) when a dict key needs it.
"""

from __future__ import annotations

import importlib
import json
from fractions import Fraction

import numpy as np

from layercalc.language.functions import Function, lookup

_PLAIN = (type(None), bool, int, float, str)
_DTYPES = {"?", "b", "B", "h", "H", "i", "I", "l", "L", "q", "Q", "e", "f", "d"}


def _state_names(cls) -> list[str]:
    names: list[str] = []
    for klass in cls.__mro__:
        slots = klass.__dict__.get("__slots__", ())
        for name in (slots,) if isinstance(slots, str) else slots:
            if name not in ("__dict__", "__weakref__") and name not in names:
                names.append(name)
    return names


def _allowed_class(cls) -> bool:
    return (cls.__module__ or "").startswith("layercalc.") and \
        not issubclass(cls, BaseException) and cls.__new__ is object.__new__


def dumps(root) -> str:
    return json.dumps(to_data(root), separators=(",", ":"))


def loads(text: str):
    return from_data(json.loads(text))


def to_data(root) -> dict:
    """`root` as plain JSON data (lists, dicts, numbers, strings), a snapshot of it now."""
    table: list = []
    memo: dict[int, int] = {}
    busy: set[int] = set()
    alive: list = []  # keeps every memoised object alive, so that no id is reused

    def ref(value, build):
        key = id(value)
        if key in memo:
            return {"$r": memo[key]}
        if key in busy:
            raise TypeError("an object contains itself")
        busy.add(key)
        alive.append(value)
        built = build()  # the parts first: every reference points to an earlier entry
        busy.discard(key)
        memo[key] = len(table)
        table.append(built)
        return {"$r": memo[key]}

    def enc(value):
        kind = type(value)
        if kind in _PLAIN:
            return value
        if kind is tuple:
            return {"$t": [enc(v) for v in value]}
        if kind is frozenset:
            return {"$F": [enc(v) for v in value]}
        if kind is Fraction:
            return {"$q": [value.numerator, value.denominator]}
        if kind is Function:
            if lookup(value.name, value.arity[0]) is not value:
                raise TypeError(f"function {value.name} is not a row of the table")
            return {"$fn": [value.name, value.arity[0]]}
        if isinstance(value, np.generic) and value.dtype.char in _DTYPES:
            return {"$n": [value.dtype.str, value.item()]}
        if kind is list:
            return ref(value, lambda: {"l": [enc(v) for v in value]})
        if kind is dict:
            return ref(value, lambda: {"d": [[enc(k), enc(v)] for k, v in value.items()]})
        if kind is set:
            return ref(value, lambda: {"s": [enc(v) for v in value]})
        if kind is np.ndarray:
            if value.dtype.char not in _DTYPES:
                raise TypeError(f"an array of dtype {value.dtype} is not written")
            order = "F" if value.flags.f_contiguous and not value.flags.c_contiguous else "C"
            return ref(value, lambda: {"a": [value.dtype.str, list(value.shape), order,
                                             bool(value.flags.writeable),
                                             value.ravel(order=order).tolist()]})
        if isinstance(kind, type) and _allowed_class(kind):
            def build():
                state = dict(getattr(value, "__dict__", {}))
                for name in _state_names(kind):
                    if hasattr(value, name):
                        state[name] = getattr(value, name)
                return {"o": f"{kind.__module__}:{kind.__qualname__}",
                        "v": [[name, enc(v)] for name, v in state.items()]}
            return ref(value, build)
        raise TypeError(f"a {kind.__name__} is not written")

    top = enc(root)
    return {"objects": table, "root": top}


def from_data(data: dict):
    table = data["objects"]
    made: list = []
    for entry in table:  # an object's parts come before it
        made.append(_make(entry, made))
    return _dec(data["root"], made)


def _class(name: str):
    module, _, qualname = name.partition(":")
    if not module.startswith("layercalc."):
        raise ValueError(f"not a layercalc class: {name}")
    found = importlib.import_module(module)
    for part in qualname.split("."):
        found = getattr(found, part)
    if not (isinstance(found, type) and _allowed_class(found)):
        raise ValueError(f"not a layercalc class: {name}")
    return found


def _make(entry: dict, made: list):
    if "l" in entry:
        return [_dec(v, made) for v in entry["l"]]
    if "d" in entry:
        return {_dec(k, made): _dec(v, made) for k, v in entry["d"]}
    if "s" in entry:
        return {_dec(v, made) for v in entry["s"]}
    if "a" in entry:
        dtype, shape, order, writeable, values = entry["a"]
        array = np.array(values, dtype=np.dtype(dtype)).reshape(shape, order=order)
        array.flags.writeable = writeable
        return array
    cls = _class(entry["o"])
    obj = object.__new__(cls)
    for name, value in entry["v"]:
        object.__setattr__(obj, name, _dec(value, made))
    return obj


def _dec(value, made: list):
    if not isinstance(value, dict):
        return value
    if "$r" in value:
        return made[value["$r"]]
    if "$t" in value:
        return tuple(_dec(v, made) for v in value["$t"])
    if "$F" in value:
        return frozenset(_dec(v, made) for v in value["$F"])
    if "$q" in value:
        return Fraction(*value["$q"])
    if "$fn" in value:
        found = lookup(*value["$fn"])
        if found is None:
            raise ValueError(f"no function {value['$fn'][0]}")
        return found
    if "$n" in value:
        dtype, item = value["$n"]
        return np.dtype(dtype).type(item)
    raise ValueError("an unknown entry")
