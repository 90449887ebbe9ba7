"""A signed number against an offset unit (-6 degC) is one literal, an absolute temperature,
in formulas, cells and scenarios alike; a degC value still cannot be multiplied.
Conversions: t/degC = T/K - 273.15 (SI Brochure, 9th ed., 2019, 2.3.1)."""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

import layercalc
from layercalc.errors import UnitError
from layercalc.language.build import build_document
from layercalc.language.nodes import Binary, Literal
from layercalc.language.parser import parse
from layercalc.source import Source

# made-up column
TABLE = """layers
  p_bottom [hPa]  p_top [hPa]  T [degC]
  1000  900   14.0
  900   700   -6.0
  700   500  -12.0
end
"""
K = 273.15  # SI Brochure 2.3.1


def expression(text: str):
    source = Source("<t>", TABLE + f"column x = {text}\n")
    return build_document(source, parse(source)).statements[-1].expr


@pytest.mark.parametrize("text", ["-6 degC", "- 6 [degC]", "-6[degC]", "+6 degC"])
def test_a_signed_degC_number_is_one_literal(text):
    node = expression(text)
    assert isinstance(node, Literal)
    assert node.value == (6.0 if text.startswith("+") else -6.0)


def test_a_sign_after_an_operand_still_subtracts():
    node = expression("T -6 degC")
    assert isinstance(node, Binary) and node.op == "-"
    result = layercalc.loads(TABLE + "column d = T -6 degC\n").evaluate()
    # T - 6 degC as two absolute temperatures: a difference in K
    assert_allclose(result.si_columns["d"], np.array([14.0, -6.0, -12.0]) - 6.0, atol=1e-12)


def test_cells_and_conditions_below_freezing():
    text = TABLE + ("cell x = -6 degC\n"
                    "column cold = where(T < -10 degC, 1, 0)\n")
    result = layercalc.loads(text).evaluate()
    assert result.si_cells["x"] == pytest.approx(-6.0 + K)
    assert list(result.si_columns["cold"]) == [0.0, 0.0, 1.0]


def test_scenarios_set_and_select_below_freezing():
    text = TABLE + ('scenario set_cold "set"\n  set T to -6 degC below 900 hPa\nend\n'
                    'scenario warm_cold "add"\n  add 2 K to T where T < -10 degC\nend\n')
    sheet = layercalc.loads(text)
    # "below 900 hPa": the layers beneath the 900 hPa surface (README, scenarios)
    assert_allclose(sheet.evaluate("set_cold").si_columns["T"],
                    np.array([-6.0, -6.0, -12.0]) + K, atol=1e-12)
    assert_allclose(sheet.evaluate("warm_cold").si_columns["T"],
                    np.array([14.0, -6.0, -10.0]) + K, atol=1e-12)


def test_a_degC_value_still_cannot_be_multiplied():
    with pytest.raises(UnitError, match="cannot be multiplied") as caught:
        layercalc.loads(TABLE + "column x = 2 * -6 degC\n")
    assert "write differences and products in K" in caught.value.hint


def test_negating_a_bracketed_degC_value_says_where_the_sign_goes():
    with pytest.raises(UnitError, match="cannot be negated") as caught:
        layercalc.loads(TABLE + "column x = where(T < -(10 degC), 1, 0)\n")
    assert "-6 degC" in caught.value.hint
