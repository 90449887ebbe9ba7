"""Table bodies read in bulk (language/table_body.py) give what lark gives row by row: the
same numbers, row counts, row places and errors, and numpy accepts exactly the grammar's
numbers."""

from __future__ import annotations

import itertools
import math
import re

import numpy as np
import pytest

from layercalc.errors import LayercalcSyntaxError
from layercalc.language.build import build_document
from layercalc.language.nodes import Station, Table
from layercalc.language.parser import parse
from layercalc.language.table_body import table_bodies
from layercalc.source import Source

# the grammar's NUMBER with an optional sign (grammar/layers.lark, SIGNED_NUMBER)
GRAMMAR_NUMBER = re.compile(r"[+-]?([0-9]+(\.[0-9]*)?|\.[0-9]+)([eE][+-]?[0-9]+)?")
HEADER = "layers\n p_bottom [hPa] p_top [hPa] T [degC]\n"


def tables(text: str) -> list[Table]:
    source = Source("t.layers", text)
    found = []
    for statement in build_document(source, parse(source)).statements:
        if isinstance(statement, Station):
            found.append(statement.table)
        elif isinstance(statement, Table):
            found.append(statement)
    return found


def test_numpy_accepts_exactly_the_grammar_numbers():
    # every entry of up to 5 characters a row can hold (the ROW terminal's characters,
    # with 0 and 1 standing for all digits); the grammar is the reference
    for length in range(1, 6):
        for chars in itertools.product("-+.01eE", repeat=length):
            entry = "".join(chars)
            try:
                np.array([entry], dtype=np.float64)
                accepted = True
            except ValueError:
                accepted = False
            assert accepted == bool(GRAMMAR_NUMBER.fullmatch(entry)), entry


def test_bulk_rows_match_rows_one_by_one():
    body = " 1000 850 1.5 # warm\n\n# a comment line\n 850\t700 -  \n+.5e3 5. -1E-2\n"
    bulk = tables(HEADER + body + "end\n")[0]
    assert table_bodies(HEADER + body + "end\n")  # this body is read in bulk
    # a statement after a form feed is one table_body does not follow: lark reads the
    # table row by row
    assert not table_bodies('\ftitle "t"\n' + HEADER + body + "end\n")
    slow = tables('\ftitle "t"\n' + HEADER + body + "end\n")[0]
    assert len(bulk.rows) == len(slow.rows) == 3
    for a, b in zip(bulk.rows, slow.rows):
        assert np.array_equal(np.array(a), np.array(b), equal_nan=True)
    assert bulk.rows[0] == (1000.0, 850.0, 1.5)  # as written
    assert math.isnan(bulk.rows[1][2]) and bulk.rows[2] == (500.0, 5.0, -0.01)
    shift = len('\ftitle "t"\n')
    assert [(s.start + shift, s.end + shift) for s in bulk.row_spans] == \
        [(s.start, s.end) for s in slow.row_spans]
    assert bulk.row_spans[0].location() == "t.layers:3:2"


def test_a_header_named_like_a_table_kind_and_station_tables():
    text = ('levels\n layers\n 1\n 2\nend\n'
            'station "Station A" latitude 45 longitude 7\nlevels\n p [hPa] T [degC]\n'
            ' 1000 10\n 900 -\nend\nend\n')
    first, second = tables(text)
    assert first.rows[:] == [(1.0,), (2.0,)]
    assert second.rows[0] == (1000.0, 10.0) and math.isnan(second.rows[1][1])


def test_an_entry_that_is_not_a_number_is_placed():
    text = HEADER + " 1000 850 1\n 850 7e0.0 1\nend\n"
    with pytest.raises(LayercalcSyntaxError) as caught:
        tables(text)
    assert caught.value.message == "'7e0.0' is not a number"
    assert caught.value.location == "t.layers:4:6"


@pytest.mark.parametrize("text", [
    HEADER + " 1000 850 1\n 850 700 1\n",            # no end: lark reports it
    HEADER + " 1000 850 1\n layers\nend\n",          # not a row
    "scenario s\n add 1 K to T\n" + HEADER + " 1000 850 1\nend\n",  # block not closed
])
def test_bodies_lark_must_see_are_left_alone(text):
    assert not table_bodies(text + "\n")
    with pytest.raises(LayercalcSyntaxError):
        tables(text)
