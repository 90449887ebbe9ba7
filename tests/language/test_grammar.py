"""Every construct of the .layers language parses and builds; random text only ever raises
our error class."""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings, strategies as st

import layercalc
from layercalc.language.build import build_document
from layercalc.language.nodes import Binary, Call, Definition, Literal, Scenario, Station, Table, Unary
from layercalc.language.parser import parse
from layercalc.source import Source

EVERYTHING = '''\
# a comment before anything
title "Every construct"
note "Notes are free text; # is not a comment inside quotes"
option integrate = from_surface
option adjust = obrien
cell surface_height = 320 m          # a bare unit after a number
cell warming [K] = 3 [K]             # a bracketed unit, and a declared output unit
cell tiny = -0.9 [1e-5 s^-1]         # a scaled unit
cell rate = 2.5 [hPa/(3 h)]
cell half = 10^-1 * 5
layers
  p_bottom [hPa]  p_top [hPa]  T [degC]  Td [degC]  div [1e-5 s^-1]
  # comments and blank lines inside a table

  1000  850   14.0   9.0  -1.0
  850   700    6.0   -    +0.5
end
column lapse [K/km] = (T - above(T, T)) / (z_top - z_bottom)
column flag = where(T > 0 degC and not (T < 5 degC) or div != 0 [s^-1], 1, 0)
column power = (p_bottom / p_top) ^ -0.5
cell mean_T [degC] = mean(T)
scenario warm from base "Warm aloft"
  add 3 K to T between 500 hPa and 300 hPa
  scale div by 1.5 above 400 hPa
  set Td to T - 2 K where T > 250 K
  add warming to T below 850 hPa
  cell surface_height = 300 m
  option adjust = uniform
end
station "Station A" latitude 45.2 longitude -7.1
  levels
    p [hPa]  T [degC]  dir [deg]  speed [kt]
    1000  12  270  10
  end
end'''


def build(text: str, name: str = "t.layers"):
    source = Source(name, text)
    return build_document(source, parse(source))


def test_every_construct_parses():
    doc = build(EVERYTHING)
    kinds = [type(s).__name__ for s in doc.statements]
    assert kinds.count("Definition") == 9
    assert "Table" in kinds and "Scenario" in kinds and "Station" in kinds
    table = next(s for s in doc.statements if isinstance(s, Table))
    assert [h.name for h in table.headings] == ["p_bottom", "p_top", "T", "Td", "div"]
    assert table.rows[0] == (1000.0, 850.0, 14.0, 9.0, -1.0)
    assert math.isnan(table.rows[1][3]) and table.rows[1][4] == 0.5
    scenario = next(s for s in doc.statements if isinstance(s, Scenario))
    assert [c.action for c in scenario.changes] == ["add", "scale", "set", "add"]
    assert [c.selection.kind for c in scenario.changes] == ["between", "above", "where",
                                                            "below"]
    assert scenario.base == "base" and scenario.description == "Warm aloft"
    station = next(s for s in doc.statements if isinstance(s, Station))
    assert (station.name, station.latitude, station.longitude) == ("Station A", 45.2, -7.1)


def test_precedence_and_associativity():
    doc = build("cell x = -a ^ 2 * b + c / d - e\n")
    expr = doc.statements[0].expr
    # ((-(a^2)) * b + c / d) - e
    assert isinstance(expr, Binary) and expr.op == "-"
    left = expr.left
    assert left.op == "+" and left.left.op == "*"
    assert isinstance(left.left.left, Unary) and left.left.left.operand.op == "^"
    assert build("cell x = a ^ b ^ c\n").statements[0].expr.right.op == "^"  # right assoc


def test_comparison_and_boolean_precedence():
    expr = build("cell x = a < b and c >= d or not e == f\n").statements[0].expr
    assert expr.op == "or" and expr.left.op == "and"
    assert isinstance(expr.right, Unary) and expr.right.op == "not"


def test_units_on_literals():
    doc = build("cell a = 850 hPa\ncell b = 1.2e-5 s^-1\ncell c = 3 [m/s]\n")
    values = [d.expr for d in doc.statements]
    assert all(isinstance(v, Literal) and v.unit is not None for v in values)
    assert values[1].unit.exponent == -1


@pytest.mark.parametrize("text, where, expected", [
    ("cell x = 3 +\n", "1:13", "expected a value"),
    ("cel x = 1\n", "1:1", "expected a statement"),
    ("cell x = (1\n", "1:12", "expected ')'"),
    ("layers\n p_bottom [hPa] p_top [hPa]\n 1000 850\n", "3:", "'end'"),
    ("title Mid level\n", "1:7", "text in double quotes"),
    ("cell x = 3 $\n", "1:12", "unexpected character '$'"),
])
def test_syntax_errors_in_plain_words(text, where, expected):
    with pytest.raises(layercalc.LayercalcSyntaxError) as info:
        layercalc.loads(text, name="t.layers")
    message = info.value.format()
    assert message.startswith(f"t.layers:{where}")
    assert expected in message
    assert "NAME" not in message and "_NL" not in message  # no lark token names


def test_deep_nesting_is_a_clear_error():
    text = "cell x = " + "(" * 10_000 + "1" + ")" * 10_000 + "\n"
    with pytest.raises(layercalc.LayercalcSyntaxError, match="nest more than"):
        layercalc.loads(text)


def test_long_chain_of_operators_is_a_clear_error():
    text = "cell x = 1" + " + 1" * 5000 + "\n"
    with pytest.raises(layercalc.LayercalcSyntaxError, match="too long or nested too deep"):
        layercalc.loads(text)


def test_grammar_loads_from_package_or_checkout():
    from layercalc.language.parser import grammar_text

    assert "start:" in grammar_text()


TOKENS = ["title", "note", "option", "cell", "column", "layers", "levels", "end", "scenario",
          "station", "from", "add", "to", "scale", "by", "set", "between", "above", "below",
          "where", "and", "or", "not", "=", "(", ")", "[", "]", "+", "-", "*", "/", "^", "<",
          ">=", "==", ",", '"x"', "1", "2.5e-3", "hPa", "degC", "s^-1", "T", "p_bottom",
          "\n", " ", "#c\n", "%", "\t", "é"]


@settings(max_examples=300, deadline=None)
@given(st.lists(st.sampled_from(TOKENS), max_size=40))
def test_token_soup_only_raises_our_error(tokens):
    try:
        layercalc.loads(" ".join(tokens))
    except layercalc.LayercalcError:
        pass


@settings(max_examples=200, deadline=None)
@given(st.text(max_size=200))
def test_random_text_only_raises_our_error(text):
    try:
        layercalc.loads(text)
    except layercalc.LayercalcError:
        pass
