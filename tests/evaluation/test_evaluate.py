"""The evaluator: dependency order, cycles, scans both ways, neighbours, aggregates,
conditions; every result equal to the plain numpy computation of the same thing.

Source of every expected number here: the same arithmetic written directly in numpy in the
test, on the table's SI values (common practice, no source)."""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

import layercalc

from tests.helpers import BASE_TABLE, error_of, sheet

# The base table as SI numpy arrays, surface first (what the formulas should see).
PB = np.array([1000, 850, 700, 500, 300]) * 100.0
PT = np.array([850, 700, 500, 300, 200]) * 100.0
T = np.array([14.0, 6.0, -6.0, -25.0, -45.0]) + 273.15
DIV = np.array([-1.0, -0.6, 0.0, 0.8, 1.0]) * 1e-5


def columns(body: str, table: str = BASE_TABLE):
    return sheet(body, table).evaluate().si_columns


def cells(body: str):
    return sheet(body).evaluate().si_cells


def test_formulas_may_come_in_any_order():
    got = columns("""
        column c = b * 2
        column b = a + 1 K
        column a = T
    """)
    assert_allclose(got["c"], (T + 1) * 2, rtol=1e-15)  # plain numpy


def test_cycle_is_named():
    err = error_of(BASE_TABLE + "column a [K] = b\ncolumn b [K] = c\ncolumn c [K] = a\n")
    assert isinstance(err, layercalc.CycleError)
    assert "in a circle" in err.message
    assert set(err.cycle) >= {"a", "b", "c"}


def test_cycle_without_declared_units_is_named():
    err = error_of(BASE_TABLE + "column a = b\ncolumn b = a\n")
    assert isinstance(err, layercalc.CycleError)


def test_upward_and_downward_sums():
    got = columns("""
        column up = upward_sum(T)
        column down = downward_sum(T)
    """)
    assert_allclose(got["up"], np.cumsum(T), rtol=1e-15)
    assert_allclose(got["down"], np.cumsum(T[::-1])[::-1], rtol=1e-15)


def test_neighbours_with_edges():
    got = columns("""
        column up = above(T, 0 K)
        column down = below(T, T)
    """)
    assert_allclose(got["up"], np.append(T[1:], 0.0))
    assert_allclose(got["down"], np.insert(T[:-1], 0, T[0]))


def test_aggregates_to_cells():
    got = cells("""
        cell s = sum(T)
        cell m = mean(T)
        cell lo = min(T)
        cell hi = max(T)
        cell bottom = lowest_layer(T)
        cell top = highest_layer(T)
        cell coldest_p = at_min(T, p_top)
        cell warmest_p = at_max(T, p_bottom)
    """)
    assert_allclose([got["s"], got["m"], got["lo"], got["hi"]],
                    [T.sum(), T.mean(), T.min(), T.max()], rtol=1e-15)
    assert (got["bottom"], got["top"]) == (T[0], T[-1])
    assert got["coldest_p"] == PT[np.argmin(T)] and got["warmest_p"] == PB[np.argmax(T)]


def test_row_min_max_and_conditions():
    got = columns("""
        column a = min(T, 270 K)
        column b = max(T, 270 K, 260 K)
        column c = where(T > 0 degC and div < 0 [s^-1], 1, 0)
        column d = where(not (T > 0 degC) or p_top == 200 hPa, T, 0 K)
    """)
    assert_allclose(got["a"], np.minimum(T, 270.0))
    assert_allclose(got["b"], np.maximum(T, 270.0))
    assert_allclose(got["c"], np.where((T > 273.15) & (DIV < 0), 1, 0))
    assert_allclose(got["d"], np.where(~(T > 273.15) | (PT == 20000), T, 0.0))


def test_elementwise_functions_match_numpy():
    got = columns("""
        column a = ln(p_bottom / p_top)
        column b = exp(-(p_top / p_bottom))
        column c = sqrt(p_bottom * p_top)
        column d = abs(div)
        column e = (p_bottom / p_top) ^ 0.286
        column f [K/km] = (T - above(T, T)) / 1 km
    """)
    assert_allclose(got["a"], np.log(PB / PT), rtol=1e-15)
    assert_allclose(got["b"], np.exp(-PT / PB), rtol=1e-15)
    assert_allclose(got["c"], np.sqrt(PB * PT), rtol=1e-15)
    assert_allclose(got["d"], np.abs(DIV), rtol=1e-15)
    assert_allclose(got["e"], (PB / PT) ** 0.286, rtol=1e-15)
    assert_allclose(got["f"], (T - np.append(T[1:], T[-1])) / 1000.0, rtol=1e-15)


def test_output_units_convert_for_display_only():
    result = sheet("column thick_dam [dam] = thickness\n").evaluate()
    assert_allclose(result.layers["thick_dam"] * 10, result.si_layers["thickness"], rtol=1e-12)
    assert result.units["thick_dam"] == "dam"


def test_degC_literal_is_absolute_and_degC_output_converts():
    got = sheet("column tc [degC] = T\ncell freezing = 0 degC\n").evaluate()
    assert_allclose(got.layers["tc"], T - 273.15, atol=1e-12)
    assert got.si_cells["freezing"] == 273.15


def test_cell_needs_an_aggregate():
    err = error_of(BASE_TABLE + "cell x = T\n")
    assert "gives one value per layer" in err.message


def test_division_by_zero_names_formula_and_layer():
    with pytest.raises(layercalc.EvaluationError) as info:
        sheet("column bad = T / (p_top - 500 hPa)\n").evaluate()
    err = info.value
    assert "column 'bad' is infinite" in err.message
    assert "500-300 hPa" not in err.message and "700-500 hPa" in err.message
    assert err.layer == 2
    assert layercalc.problems(BASE_TABLE + "column bad = T / (p_top - 500 hPa)\n",
                              is_text=True)  # `check` finds it too


def test_unknown_name_suggests():
    err = error_of(BASE_TABLE + "column x = Tt * 2\n")
    assert isinstance(err, layercalc.UnknownNameError)
    assert "'T'" in (err.hint or "")


def test_duplicate_definition():
    err = error_of(BASE_TABLE + "column x = T\ncolumn x = T\n")
    assert "defined twice" in err.message


def test_layers_top_first_are_normalised():
    top_first = """layers
  p_bottom [hPa]  p_top [hPa]  T [degC]  div [1e-5 s^-1]
  300   200  -45.0   1.0
  500   300  -25.0   0.8
  700   500   -6.0   0.0
  850   700    6.0  -0.6
  1000  850   14.0  -1.0
end
"""
    a = sheet(table=top_first)
    b = sheet()
    assert a.checked.rows_given_top_first and not b.checked.rows_given_top_first
    for name in ("z_top", "omega_top", "thickness"):
        assert_allclose(a.evaluate().si_columns[name], b.evaluate().si_columns[name],
                        rtol=0, atol=0)


def test_user_formula_replaces_default_and_is_reported():
    s = sheet("column Tv [K] = T + 1 K\n")
    assert "Tv" in s.checked.replaced_defaults
    assert_allclose(s.evaluate().si_columns["Tv"], T + 1)


def test_many_variants_in_one_pass_equal_one_at_a_time():
    s = sheet("cell shift = 0 K\ncolumn T2 = T + shift\n")
    heights = np.array([0.0, 100.0, 250.0])
    many = s.evaluate_many({"surface_height": heights})
    assert many.columns["z_top"].shape == (3, 5)
    for i, h in enumerate(heights):
        one = sheet(f"cell surface_height = {h} m\ncell shift = 0 K\n"
                    "column T2 = T + shift\n").evaluate().si_columns["z_top"]
        assert_allclose(many.columns["z_top"][i], one, rtol=1e-15)


def test_shared_subexpressions_are_computed_once_and_change_nothing_else():
    from layercalc.evaluation.engine import shared_subexpressions

    body = """
        cell shift = 0 K
        column a = T
        column f1 = -(a * dp)
        column f2 = T * dp * 2
        column f3 = upward_sum(T * dp) - T * dp
        column f4 = T + shift - T
        scenario warm "the middle layers warmer"
          add shift to T between 850 hPa and 500 hPa
        end
    """
    s = sheet(body)
    shared, last_use = shared_subexpressions(s.checked)
    product = ("*", ("name", "column", "T"), ("name", "column", "dp"))
    assert list(shared.values()).count(product) == 4  # a * dp counts as T * dp
    names = [f.name for f in s.checked.formulas]
    assert product in last_use[max(names.index(n) for n in ("f1", "f2", "f3"))]
    shifts = np.linspace(0.0, 3.0, 40)  # a sweep of a scenario: the layers-outer layout
    many = s.evaluate_many({"shift": shifts}, scenario="warm")
    warmed = T + np.where((PB <= 85000) & (PT >= 50000), shifts[7], 0.0)
    cases = [(s.evaluate().si_columns, T),
             ({n: np.broadcast_to(v, (40, 5))[7] for n, v in many.columns.items()}, warmed)]
    for got, t in cases:  # plain numpy, as every expectation in this file
        flux = t * (PB - PT)
        assert_allclose(got["T"], t, rtol=1e-15)  # inputs are never written into
        assert_allclose(got["f1"], -flux, rtol=1e-15)
        assert_allclose(got["f2"], flux * 2, rtol=1e-15)
        assert_allclose(got["f3"], np.cumsum(flux) - flux, rtol=1e-15)
    assert_allclose(s.evaluate().si_columns["T"], T, rtol=0)
    assert_allclose(many.columns["f4"], many.columns["T"] + shifts[:, None] - many.columns["T"],
                    rtol=1e-15)


def test_sweep_error_names_formula_layer_and_variant():
    s = sheet("cell shift = 0 K\ncolumn bad = T / (shift - 5 K)\n")
    shifts = np.linspace(0.0, 10.0, 20_001)  # 10,000th step is exactly 5 K
    with pytest.raises(layercalc.EvaluationError) as info:
        s.evaluate_many({"shift": shifts})
    assert "column 'bad' is infinite" in info.value.message
    assert "layer 1 from the surface" in info.value.message
    assert "scenario variant 10001" in info.value.message
