"""surface_pressure against the column: a mismatch with the lowest p_bottom is a warning
with both values; in a levels table, levels below the surface are dropped and the layer
that straddles it is cut at it."""

from __future__ import annotations

import math

import pytest
from numpy.testing import assert_allclose

import layercalc
from layercalc.errors import DefinitionError

# made-up sounding
LEVELS = """levels
  p [hPa]  T [degC]  Td [degC]
  1000   14.0    9.0
  925    10.0    6.0
  850     6.0    0.0
  700    -4.0  -12.0
end
"""
LAYERS = """layers
  p_bottom [hPa]  p_top [hPa]  T [degC]
  1000  850   14.0
  850   700   -4.0
end
"""


def test_levels_below_the_surface_are_dropped_and_the_straddling_layer_cut():
    sheet = layercalc.loads(LEVELS + "cell surface_pressure = 960 hPa\n")
    columns = sheet.evaluate().si_columns
    assert_allclose(columns["p_bottom"], [960e2, 925e2, 850e2])
    assert_allclose(columns["p_top"], [925e2, 850e2, 700e2])
    # T linear in ln p between levels; a layer's value is the mean of its two levels
    # (README, "From soundings to layers"; common practice, no source)
    t_surface = 14.0 + (10.0 - 14.0) * math.log(1000 / 960) / math.log(1000 / 925)
    assert_allclose(columns["T"][0] - 273.15, (t_surface + 10.0) / 2, rtol=1e-12)
    assert_allclose(columns["T"][1] - 273.15, (10.0 + 6.0) / 2, rtol=1e-12)
    notices = [n.message for n in sheet.check()]
    assert any("1000 hPa below the surface is dropped" in m and "cut at 960 hPa" in m
               for m in notices)
    report = " ".join(sheet_report(sheet).split())
    assert "below the surface is dropped" in report


def sheet_report(sheet) -> str:
    from layercalc.report.text import render

    return render(sheet, sheet.evaluate())


def test_a_surface_on_a_level_drops_the_levels_below_only():
    sheet = layercalc.loads(LEVELS + "cell surface_pressure = 925 hPa\n")
    columns = sheet.evaluate().si_columns
    assert_allclose(columns["p_bottom"], [925e2, 850e2])
    assert not any("cut at" in n.message for n in sheet.check())


def test_a_surface_above_the_top_is_refused():
    with pytest.raises(DefinitionError, match="no layer is left above the ground"):
        layercalc.loads(LEVELS + "cell surface_pressure = 650 hPa\n")


def test_a_surface_below_the_lowest_level_is_a_mismatch_warning():
    sheet = layercalc.loads(LEVELS + "cell surface_pressure = 1013 hPa\n")
    assert any("surface_pressure 1013 hPa differs from the lowest layer's p_bottom 1000 hPa"
               in n.message for n in sheet.check())


@pytest.mark.parametrize("given, warned", [("960 hPa", True), ("1000.5 hPa", False),
                                           ("1013 hPa", True)])
def test_layers_table_mismatch_is_a_warning_with_both_values(given, warned):
    # tolerance 1 hPa (our choice; checking/tables.py)
    sheet = layercalc.loads(LAYERS + f"cell surface_pressure = {given}\n")
    found = [n.message for n in sheet.check() if "surface_pressure" in n.message]
    assert bool(found) == warned
    if warned:
        assert f"surface_pressure {given}" in found[0] and "p_bottom 1000 hPa" in found[0]


def test_surface_height_is_compared_with_the_heights_at_the_cut():
    text = LEVELS.replace("Td [degC]", "Td [degC]  z [m]").replace(
        "9.0\n", "9.0  110\n").replace("6.0\n  850", "6.0  780\n  850").replace(
        "0.0\n", "0.0  1500\n").replace("-12.0\n", "-12.0  3100\n")
    # z linear in ln p: 110 + 670 ln(1000/960) / ln(1000/925) = 460.8 m (as above)
    expected = 110 + 670 * math.log(1000 / 960) / math.log(1000 / 925)
    far = layercalc.loads(text + "cell surface_pressure = 960 hPa\ncell surface_height = 420 m\n")
    found = [n.message for n in far.check() if "surface_height is 420 m" in n.message]
    assert found and f"about {expected:.0f} m" in found[0]
    near = layercalc.loads(text + "cell surface_pressure = 960 hPa\ncell surface_height = 461 m\n")
    assert not any("surface_height is" in n.message for n in near.check())
