"""Sweeps: range parsing, grid shape, values equal to one-at-a-time evaluation."""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

import layercalc
from layercalc.constants import G0, RD
from layercalc.evaluation.sweep import grid, parse_range, run_sweep

from tests.helpers import sheet

BODY = """
cell warming = 0 K
cell div_scale = 1
scenario what_if "Warm 500-300 hPa, scale divergence aloft"
  add warming to T between 500 hPa and 300 hPa
  scale div by div_scale above 500 hPa
end
"""


def test_parse_range_includes_stop():
    r = parse_range("warming=0:5:0.5", sheet(BODY))
    assert r.values.size == 11 and r.values[-1] == 5.0 and r.unit == "K"


@pytest.mark.parametrize("text, expected", [
    ("warming=0:5", "expected NAME=START:STOP:STEP"),
    ("warming=0:5:-1", "STEP must be non-zero"),
    ("warmin=0:5:1", "did you mean 'warming'"),
    ("warming=a:5:1", "must be numbers"),
    ("warming=nan:5:1", "must be finite numbers"),
])
def test_parse_range_errors(text, expected):
    with pytest.raises(layercalc.LayercalcError) as info:
        parse_range(text, sheet(BODY))
    assert expected in info.value.format()


def test_grid_is_full_and_first_range_slowest():
    s = sheet(BODY)
    points = grid([parse_range("warming=0:2:1", s), parse_range("div_scale=1:2:0.5", s)])
    assert_allclose(points["warming"], [0, 0, 0, 1, 1, 1, 2, 2, 2])
    assert_allclose(points["div_scale"], [1, 1.5, 2] * 3)


def test_sweep_table_equals_one_at_a_time_and_hypsometric_rise():
    s = sheet(BODY)
    ranges = [parse_range("warming=0:3:1.5", s), parse_range("div_scale=0.5:1.5:0.5", s)]
    frame = run_sweep(s, ranges, scenario="what_if",
                      outputs=["surface_pressure_tendency", "column_thickness"])
    assert frame.shape == (9, 4)
    for _, row in frame.iterrows():
        text = BODY.replace("cell warming = 0 K", f"cell warming = {float(row.warming)!r} K") \
                   .replace("cell div_scale = 1", f"cell div_scale = {float(row.div_scale)!r}")
        one = sheet(text).evaluate("what_if").cells
        assert_allclose(row.surface_pressure_tendency, one["surface_pressure_tendency"],
                        rtol=1e-12)
        assert_allclose(row.column_thickness, one["column_thickness"], rtol=1e-12)
    # hypsometric equation (e.g. Wallace and Hobbs 2006, eq. 3.29, from memory): warming dT
    # in 500-300 hPa adds Rd dT/g0 ln(5/3) to the column
    base = frame[frame.warming == 0].column_thickness.iloc[0]
    warm = frame[frame.warming == 3].column_thickness.iloc[0]
    assert_allclose(warm - base, RD * 3 / G0 * np.log(5 / 3), rtol=1e-9)


def test_sweep_plot_writes_png(tmp_path):
    from layercalc.evaluation.sweep import plot_sweep

    s = sheet(BODY)
    ranges = [parse_range("warming=0:3:1", s), parse_range("div_scale=0.5:1.5:0.5", s)]
    frame = run_sweep(s, ranges, scenario="what_if")
    out = tmp_path / "sweep.png"
    plot_sweep(frame, ranges, "surface_pressure_tendency", out)
    import matplotlib.image

    image = matplotlib.image.imread(out)
    assert image.shape[:2] == (440, 640)
