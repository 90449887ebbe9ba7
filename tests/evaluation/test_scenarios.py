"""Scenario semantics: range selections, chains, degC deltas, option switches, sweeps.

Expected values: the base sheet's own SI inputs changed by hand in numpy as each scenario
line says (common practice, no source), the hypsometric equation where named, and
one-at-a-time evaluation for the sweep."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from numpy.testing import assert_allclose

import layercalc
from layercalc.constants import G0, RD

from tests.helpers import BASE_TABLE, error_of, sheet

SCENARIOS = """
cell warming = 3 K
scenario warm "Warm 500-300 hPa"
  add warming to T between 500 hPa and 300 hPa
end
scenario warm_c
  add 3 degC to T between 300 hPa and 500 hPa
end
scenario aloft from warm
  scale div by 1.5 above 500 hPa
end
scenario low
  set T to 0 degC below 850 hPa
  cell surface_height = 100 m
end
scenario cond
  add 1 [1e-5 s^-1] to div where div > 0 [s^-1]
end
scenario obrien
  option integrate = from_surface
  option adjust = obrien
end
"""


def base_and(name):
    s = sheet(SCENARIOS)
    return s.evaluate().si_columns, s.evaluate(name).si_columns, s


def test_range_selection_warms_only_the_layer_inside():
    base, warm, _ = base_and("warm")
    assert_allclose(warm["T"] - base["T"], [0, 0, 0, 3, 0], atol=1e-12)


def test_warming_raises_surfaces_above_by_the_hypsometric_change():
    base, warm, _ = base_and("warm")
    # Hypsometric equation: d(thickness) = Rd dT / g0 ln(p1/p2) (e.g. Wallace and Hobbs 2006,
    # eq. 3.29 with Tv -> Tv + dT); Rd, g0 from layercalc.constants (USSA 1976, CGPM 1901).
    expected = RD * 3.0 / G0 * np.log(500 / 300)
    rise = warm["z_top"] - base["z_top"]
    assert_allclose(rise, [0, 0, 0, expected, expected], atol=1e-9)


def test_degC_delta_equals_K_delta():
    _, warm, s = base_and("warm")
    assert_allclose(s.evaluate("warm_c").si_columns["T"], warm["T"], rtol=0, atol=0)


def test_chained_scenario_keeps_its_base_changes():
    base, aloft, _ = base_and("aloft")
    assert_allclose(aloft["T"] - base["T"], [0, 0, 0, 3, 0], atol=1e-12)
    assert_allclose(aloft["div"], base["div"] * np.array([1, 1, 1, 1.5, 1.5]), rtol=1e-15)


def test_set_below_and_cell_override():
    base, low, s = base_and("low")
    assert_allclose(low["T"], np.concatenate([[273.15], base["T"][1:]]))
    assert s.evaluate("low").si_cells["surface_height"] == 100.0


def test_condition_selection():
    base, cond, _ = base_and("cond")
    assert_allclose(cond["div"] - base["div"], np.where(base["div"] > 0, 1e-5, 0.0),
                    atol=1e-20)


def test_option_switch_in_a_scenario():
    _, ob, s = base_and("obrien")
    result = s.evaluate("obrien")
    # adjusted column meets the top boundary (omega_top = 0): O'Brien 1970
    assert abs(result.si_columns["omega_top"][-1]) < 1e-12
    assert s.options["integrate"] == "from_top"


def test_unknown_scenario_suggests():
    s = sheet(SCENARIOS)
    with pytest.raises(layercalc.UnknownNameError, match="no scenario named 'wram'"):
        s.evaluate("wram")


@pytest.mark.parametrize("body, expected", [
    ("scenario x\n  add 3 K to p_top\nend\n", "cannot change p_top"),
    ("scenario x\n  add 3 hPa to T\nend\n", "cannot add a pressure to T (a temperature)"),
    ("scenario x\n  scale T by 2 K\nend\n", "needs a plain number"),
    ("scenario x\n  add 3 K to T between 500 K and 300 hPa\nend\n", "needs a pressure"),
    ("scenario x from y\nend\n", "unknown scenario 'y'"),
    ("scenario x from z\nend\nscenario z from x\nend\n", "in a circle"),
    ("scenario x\n  add 3 K to Tx\nend\n", "not an input column"),
    ("scenario x\n  add thickness to T\nend\n", "can read inputs only"),
])
def test_scenario_errors(body, expected):
    assert expected in error_of(BASE_TABLE + body).format()


@settings(max_examples=25, deadline=None)
@given(st.lists(st.floats(-5, 5, allow_nan=False), min_size=1, max_size=4),
       st.lists(st.floats(0, 3, allow_nan=False), min_size=1, max_size=4))
def test_sweep_grid_equals_one_at_a_time(warmings, scales):
    body = """
cell warming = 0 K
cell scale = 1
scenario what_if
  add warming to T between 500 hPa and 200 hPa
  scale div by scale above 500 hPa
end
"""
    s = sheet(body)
    w, k = np.meshgrid(warmings, scales, indexing="ij")
    many = s.evaluate_many({"warming": w.ravel(), "scale": k.ravel()}, scenario="what_if")
    for i, (wi, ki) in enumerate(zip(w.ravel(), k.ravel())):
        one = sheet(body.replace("cell warming = 0 K", f"cell warming = {float(wi)!r} K")
                    .replace("cell scale = 1", f"cell scale = {float(ki)!r}")).evaluate("what_if")
        for name in ("z_top", "omega_bottom"):
            col = np.broadcast_to(many.columns[name], (w.size, 5))[i]
            assert_allclose(col, one.si_columns[name], rtol=1e-12, atol=1e-15)
        tend = np.broadcast_to(many.cells["surface_pressure_tendency"], (w.size, 1))[i, 0]
        assert_allclose(tend, one.si_cells["surface_pressure_tendency"], rtol=1e-12,
                        atol=1e-15)


def test_a_scenario_cannot_take_temperatures_below_absolute_zero():
    s = sheet("scenario cold\n  add -400 K to T\nend\n")
    with pytest.raises(layercalc.EvaluationError) as info:
        s.evaluate("cold")
    text = info.value.format()
    assert "scenario 'cold': 'add -400 K to T' makes T" in text
    assert "absolute zero" in text and "test.layers:" in text
    assert layercalc.problems(BASE_TABLE + "scenario cold\n  add -400 K to T\nend\n",
                              is_text=True)  # `check` finds it too


def test_a_sweep_variant_below_absolute_zero_is_named():
    s = sheet("cell k = 1\nscenario scaled\n  scale T by k\nend\n")
    with pytest.raises(layercalc.EvaluationError, match="variant 1 of the sweep"):
        s.evaluate_many({"k": np.array([-1.0, 1.0])}, scenario="scaled")


def test_evaluation_errors_name_their_scenario():
    s2 = sheet("column q = 1 / (T - 300 K)\nscenario s\n  set T to 300 K\nend\n")
    s2.evaluate()  # the base is fine: no layer at 300 K
    with pytest.raises(layercalc.EvaluationError, match="scenario 's': column 'q' is infinite"):
        s2.evaluate("s")


def test_a_scenario_option_that_cannot_work_is_reported_at_its_line():
    err = error_of(BASE_TABLE + "scenario s\n  option adjust = obrien\nend\n")
    assert err.format().startswith("test.layers:10:3: error: scenario 's': 'adjust = obrien' "
                                   "needs 'integrate = from_surface'")
