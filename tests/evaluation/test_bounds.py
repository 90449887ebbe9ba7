"""Bounds worked out from operands' bounds (evaluation/bounds.py): they must contain every
value the evaluator computes, and skipping the range scan they allow must change nothing,
neither the values nor the error a scan finds.

No expected number here comes from outside: each check compares layercalc with itself
(bounds against the values computed, the evaluator with and without skipped scans), so the
source of every expectation is the evaluator's own result ("common practice, no source").
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import layercalc
from layercalc.evaluation import engine
from layercalc.evaluation.bounds import Bounds

from tests.helpers import sheet

ROOT = Path(__file__).resolve().parents[2]
CASE = ROOT / "worked_cases" / "midlevel_warming.layers"
EVERYTHING = 10 ** 12  # a size that lets Bounds take the min and max of any operand

RULES = """
cell a = 1
cell b = 2
cell sum_ab = a + b
cell difference = a - b
cell product = a * b
cell quotient = a / b
cell negated = -a
cell absolute = abs(a)
cell smaller = min(a, b)
cell picked = where(a > b, a, b)
column scaled [K] = T * a
column running [K] = upward_sum(T * a)
column falling [K] = downward_sum(T * a)
cell total [K] = sum(T * a)
cell average [K] = mean(T * a)
cell lowest [K] = lowest_layer(T * a)
cell coldest_top [hPa] = at_min(T * a, p_top)
column moist [K] = virtual_temperature(T * a, b)
column depth [m] = hypsometric_thickness(T * a, p_bottom, p_top)
column speed [m/s] = vertical_velocity(omega_bottom * a, p_bottom, T * b)
"""
RULE_NAMES = {"sum_ab", "difference", "product", "quotient", "negated", "absolute",
              "smaller", "picked", "scaled", "running", "falling", "total", "average",
              "lowest", "coldest_top", "moist", "depth", "speed"}


def _bounded(evaluation) -> dict:
    """name -> (lowest, highest) of every formula Bounds can bound, after checking that
    the formula's values lie within them."""
    found = {}
    count = evaluation.scenario_count
    bounds = Bounds(evaluation.columns, evaluation.cells, evaluation.sheet.layer_count)
    for formula in evaluation.sheet.formulas:
        limits = bounds.of(formula.expr, EVERYTHING)
        if limits is None:
            continue
        store = evaluation.columns if formula.kind == "column" else evaluation.cells
        values = np.broadcast_to(store[formula.name], (count, store[formula.name].shape[-1]))
        assert limits[0] <= values.min() and values.max() <= limits[1], formula.name
        found[formula.name] = limits[:2]
    return found


def _draws(rng, size, low_exponent, high_exponent, sign):
    magnitude = 10.0 ** rng.uniform(low_exponent, high_exponent, size)
    signs = {"+": 1.0, "-": -1.0, "both": rng.choice([-1.0, 1.0], size)}[sign]
    return magnitude * signs


@pytest.mark.parametrize("sign_a, sign_b", [("+", "+"), ("-", "+"), ("both", "both"),
                                            ("both", "-"), ("+", "both")])
def test_bounds_contain_every_value_for_operands_of_any_sign_and_size(sign_a, sign_b):
    s = sheet(RULES)
    rng = np.random.default_rng(17)
    seen = set()
    for _ in range(8):
        a = _draws(rng, 400, -3, 3, sign_a)
        b = _draws(rng, 400, -3, 3, sign_b)
        seen |= set(_bounded(s.evaluate_many({"a": a, "b": b})))
    # the rules that need no sign (all but / by b, and r > -0.5 for virtual_temperature)
    # bounded their formula at least once
    expected = RULE_NAMES - ({"quotient", "moist"} if sign_b != "+" else set())
    assert expected <= seen


def test_bounds_contain_every_formula_of_a_worked_case_sweep():
    s = layercalc.load(CASE)
    rng = np.random.default_rng(3)
    size = 3000
    evaluation = s.evaluate_many({"warming": rng.uniform(-20.0, 20.0, size),
                                  "div_scale": rng.uniform(-3.0, 3.0, size)},
                                 scenario="warmed_divergent")
    found = _bounded(evaluation)
    # every column of variants x layers is bounded (so a big sweep scans none of them)
    assert {"div_adjusted", "Tv", "thickness", "z_top", "z_bottom", "omega_bottom",
            "omega_top", "w_bottom", "w_top"} <= set(found)


def _sweep(size, warming_last=0.0, scale_last=1.0):
    warming = np.linspace(0.0, 6.0, size)
    scale = np.linspace(0.5, 2.0, size)
    warming[-1], scale[-1] = warming_last, scale_last
    return {"warming": warming, "div_scale": scale}


def _scanned(monkeypatch) -> list:
    names = []
    scan = engine._check_finite

    def counted(formula, value, sheet):
        names.append(formula.name)
        return scan(formula, value, sheet)
    monkeypatch.setattr(engine, "_check_finite", counted)
    return names


def test_skipped_scans_leave_every_value_identical(monkeypatch):
    s = layercalc.load(CASE)
    points = _sweep(30_000)  # 360,000 values per column: above FEWEST_VALUES
    scanned = _scanned(monkeypatch)
    fast = s.evaluate_many(points, scenario="warmed_divergent")
    assert "w_top" not in scanned and "omega_bottom" not in scanned  # bounded instead
    scanned.clear()
    monkeypatch.setattr(engine, "FEWEST_VALUES", EVERYTHING)  # every formula scanned
    full = s.evaluate_many(points, scenario="warmed_divergent")
    assert "w_top" in scanned and "omega_bottom" in scanned
    assert fast.columns.keys() == full.columns.keys() and fast.cells.keys() == full.cells.keys()
    for name in fast.columns:
        np.testing.assert_array_equal(fast.columns[name], full.columns[name], err_msg=name)
    for name in fast.cells:
        np.testing.assert_array_equal(fast.cells[name], full.cells[name], err_msg=name)


@pytest.mark.parametrize("changes, words", [
    ({"warming_last": 1e150}, "column 'Tv' is out of range (1e+150"),
    ({"scale_last": 1e120}, "column 'div_adjusted' is out of range"),
    ({"scale_last": 1e306}, "column 'div_adjusted' is out of range"),
])
def test_a_value_out_of_range_in_the_last_variant_reads_as_before(monkeypatch, changes,
                                                                   words):
    s = layercalc.load(CASE)
    points = _sweep(30_000, **changes)
    with pytest.raises(layercalc.EvaluationError) as fast:
        s.evaluate_many(points, scenario="warmed_divergent")
    monkeypatch.setattr(engine, "FEWEST_VALUES", EVERYTHING)  # every formula scanned
    with pytest.raises(layercalc.EvaluationError) as full:
        s.evaluate_many(points, scenario="warmed_divergent")
    assert fast.value.format() == full.value.format()
    assert words in fast.value.format() and "scenario variant 30000" in fast.value.format()
    assert fast.value.layer == full.value.layer


def _outcome(s, points, scenario):
    try:
        evaluation = s.evaluate_many(points, scenario=scenario)
    except layercalc.LayercalcError as exc:
        return exc.format()
    return {**{("column", n): v for n, v in evaluation.columns.items()},
            **{("cell", n): v for n, v in evaluation.cells.items()}}


@pytest.mark.parametrize("path", sorted((ROOT / "worked_cases").glob("*.layers")),
                         ids=lambda p: p.stem)
def test_bounds_on_every_array_change_nothing_in_any_worked_case(monkeypatch, path):
    """Every input cell of every worked case swept over ordinary and absurd values, in the
    base and every scenario: with bounds tried on every array (even tiny ones) the values
    are the same bits, and an error has the same text, as with every array scanned."""
    s = layercalc.load(path)
    for cell, given in s.checked.input_cells.items():
        base = given.value if given.value != 0 else 1.0
        for factors in (np.linspace(-3.0, 3.0, 9), np.array([1.0, 1e60, 1e120, -1e200, 0.0])):
            points = {cell: base * factors}
            for scenario in [None, *s.scenarios]:
                monkeypatch.setattr(engine, "FEWEST_VALUES", 0)
                tried = _outcome(s, points, scenario)
                monkeypatch.setattr(engine, "FEWEST_VALUES", EVERYTHING)
                scanned = _outcome(s, points, scenario)
                if isinstance(scanned, str):
                    assert tried == scanned, (path.stem, cell, scenario)
                    continue
                assert not isinstance(tried, str) and tried.keys() == scanned.keys()
                for key, values in scanned.items():
                    np.testing.assert_array_equal(tried[key], values,
                                                  err_msg=f"{path.stem} {cell} {key}")
