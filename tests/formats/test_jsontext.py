"""formats/jsontext.dumps writes what json.dumps(indent=2, allow_nan=False,
ensure_ascii=False) writes (the standard library is the reference), byte for byte."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from layercalc.formats.jsontext import dumps


def reference(value) -> str:
    return json.dumps(value, indent=2, allow_nan=False, ensure_ascii=False)


PLAIN = st.one_of(st.none(), st.booleans(), st.integers(),
                  st.floats(allow_nan=False, allow_infinity=False),
                  st.text(alphabet=st.characters(), max_size=8))
KEYS = st.text(alphabet=st.characters(), max_size=6)
VALUES = st.recursive(PLAIN, lambda inner: st.lists(inner, max_size=4)
                      | st.dictionaries(KEYS, inner, max_size=4), max_leaves=30)
RECORDS = st.lists(st.dictionaries(KEYS, PLAIN, min_size=1, max_size=5), min_size=2,
                   max_size=6)


@settings(max_examples=300, deadline=None)
@given(VALUES)
def test_any_document_is_written_as_json_writes_it(value):
    assert dumps(value) == reference(value)


@settings(max_examples=200, deadline=None)
@given(RECORDS, st.dictionaries(KEYS, VALUES, max_size=3))
def test_lists_of_records_with_text_holding_braces_and_line_breaks(records, around):
    records.append({"a": '},\n      {"b": 1', "}": "{"})  # what the record split looks for
    document = {**around, "layers": records}
    assert dumps(document) == reference(document)


@pytest.mark.parametrize("value", [math.nan, [math.inf], {"a": [{"x": -math.inf},
                                                                 {"x": 1.0}]}])
def test_values_json_refuses_are_refused(value):
    with pytest.raises(ValueError):
        reference(value)
    with pytest.raises(ValueError):
        dumps(value)


def test_numpy_floats_and_tuples():
    value = {"a": (np.float64(1.5), 2), "b": [{"x": np.float64(0.1)}, {"x": 3}]}
    assert dumps(value) == reference({"a": [1.5, 2], "b": [{"x": 0.1}, {"x": 3}]})
