"""JSON text as `json.dumps(value, indent=2, allow_nan=False, ensure_ascii=False)` writes
it, byte for byte, at the speed of the compact encoder.

With `indent`, the standard library falls back to its pure-Python encoder, which for a
100,000-layer result spends seconds on a million small calls. The C encoder still runs when
the indentation is put into its separators: a container of plain values (numbers, text,
true/false/null) is one C call with the item separator "," + line break + indentation, and
a list of such records (the layers) is one C call too, the line breaks around each record's
braces put in afterwards. That is unambiguous because the encoder escapes every line break
inside text, so a real line break only ever comes from a separator. Everything else (a few
dozen nested keys) is written by a short recursive walk.
"""

from __future__ import annotations

import json

_STEP = "  "
_PLAIN = frozenset((float, int, str, bool, type(None)))


def dumps(value, end: str = "") -> str:
    """`json.dumps(value, indent=2, allow_nan=False, ensure_ascii=False) + end`."""
    parts: list[str] = []
    _write(value, "\n", parts)
    parts.append(end)
    return "".join(parts)


def _compact(value, separator: str) -> str:
    return json.dumps(value, separators=(separator, ": "), allow_nan=False,
                      ensure_ascii=False)


def _write(value, indent: str, parts: list[str]) -> None:
    is_dict = isinstance(value, dict)
    if not value or not (is_dict or isinstance(value, (list, tuple))):
        parts.append(_compact(value, ", "))  # a plain value, {} or []
        return
    inner = indent + _STEP
    items = value.values() if is_dict else value
    kinds = set(map(type, items))
    if kinds <= _PLAIN:  # one C call
        text = _compact(value, "," + inner)
        parts += [text[0], inner, text[1:-1], indent, text[-1]]
        return
    if kinds == {dict} and not is_dict and all(value):
        field = inner + _STEP
        text = _compact(value, "," + field)  # [{"a": 1,<field>"b": 2},<field>{...}]
        # flat records only: a nested list or dict would add a bracket or brace (cheaper
        # to count in the text than to look at every value's type)
        if text.count("{") == len(value) and text.count("[") == 1:
            records = text.replace("}," + field + "{", inner + "}," + inner + "{" + field)
            # pieces, not one concatenation: the text can be tens of megabytes
            parts += ["[", inner, "{", field, records[2:-2], inner, "}", indent, "]"]
            return
    opening, closing = ("{", "}") if is_dict else ("[", "]")
    separator = opening
    for key, item in (value.items() if is_dict else zip(value, value)):
        if is_dict:
            key_text = _compact({key: 0}, ", ")[1:-4]  # the key as json writes it
            parts.append(separator + inner + key_text + ": ")
        else:
            parts.append(separator + inner)
        separator = ","
        _write(item, inner, parts)
    parts.append(indent + closing)
