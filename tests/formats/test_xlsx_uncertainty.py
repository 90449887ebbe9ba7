"""The workbook's `uncertainty` sheet: layercalc's sigmas as values under a visible note
that they are not live, and live formulas where a spreadsheet can hold the propagation
(omega's sum of squares for independent hand-entered layer errors, the triangle formula
per level). The live formulas are recalculated by LibreOffice in the slow test below.

Sources of expected values are given beside each check.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose
from openpyxl import load_workbook

import layercalc
from layercalc.evaluation.uncertainty import assess_sheet
from layercalc.formats.xlsx.export import write_workbook

CASES = Path(__file__).resolve().parents[2] / "worked_cases"
HAND = """title "Made-up column with hand-entered divergence"
cell div_error = 0.3 [1e-5 s^-1]
layers
  p_bottom [hPa]  p_top [hPa]  T [degC]  div [1e-5 s^-1]
  1000  900   10   -1.0
  900   700    5   -0.5
  700   500   -8    0.4
  500   300  -16    1.6
end
"""
PER_3H, PER_HOUR = 108.0, 36.0  # Pa/s -> hPa per 3 h, hPa/h


def triangle_text(direction_step="5 deg", speed_step="1 kt") -> str:
    """The worked three-station case with a declared 1.5 m/s wind error in the base."""
    text = (CASES / "three_stations_uncertainty.layers").read_text(encoding="utf-8")
    for old, new in (("cell wind_error = 0 [m/s]", "cell wind_error = 1.5 [m/s]"),
                     ("cell wind_error_growth = 0 [m s^-1 hPa^-1]",
                      "cell wind_error_growth = 0.001 [m s^-1 hPa^-1]"),
                     ("cell direction_step = 5 deg", f"cell direction_step = {direction_step}"),
                     ("cell speed_step = 1 kt", f"cell speed_step = {speed_step}")):
        assert old in text
        text = text.replace(old, new)
    return text


def rows_of(ws) -> dict:
    """First-column label -> row number."""
    return {ws.cell(r, 1).value: r for r in range(1, ws.max_row + 1) if ws.cell(r, 1).value}


def column_of(ws, row: int, heading: str) -> int:
    return next(j for j in range(1, ws.max_column + 1) if ws.cell(row, j).value == heading)


def test_values_under_a_note_and_live_sums_of_squares(tmp_path):
    # source: the values are layercalc's own assessment (common practice, no source),
    # converted to hPa per 3 h (x 108) and hPa/h (x 36)
    sheet = layercalc.loads(HAND, "hand.layers")
    path = tmp_path / "hand.xlsx"
    write_workbook(sheet, path)
    wb = load_workbook(path)
    assert wb.sheetnames.index("uncertainty") == wb.sheetnames.index("formulas") - 1
    ws = wb["uncertainty"]
    assert "NOT live" in ws["A1"].value and "'live'" in ws["A1"].value
    assessment = assess_sheet(sheet)
    rows = rows_of(ws)
    spread = assessment.cells["surface_pressure_tendency"]
    assert ws.cell(rows["surface_pressure_tendency sigma"], 2).value == \
        pytest.approx(spread["sigma"] * PER_3H, rel=1e-15)
    assert ws.cell(rows["surface_pressure_tendency p95"], 4).value == "value"
    header = rows["layer (surface first)"]
    value_column = column_of(ws, header, "sigma omega_top [hPa/h] value")
    live_column = column_of(ws, header, "sigma omega_top [hPa/h] live")
    got = [ws.cell(header + 1 + k, value_column).value for k in range(4)]
    assert_allclose(got, assessment.layers["omega_top"] * PER_HOUR, rtol=1e-15)
    # live: the lowest layer's top sums the three layers above it; the top layer's is 0
    live = [ws.cell(header + 1 + k, live_column).value for k in range(4)]
    assert live[0].startswith("=SQRT(SUMSQ(") and f"{header + 2}:" in live[0]
    assert live[3] == "=0"
    term = ws.cell(header + 1, live_column - 1).value
    settings = {c.value: c.row for c in wb["settings"]["A"]}
    assert f"settings!$B${settings['div_error']}" in term and "layers!A2-layers!B2" in term


def test_no_uncertainty_sheet_without_an_error_model(tmp_path):
    # source: common practice, no source (nothing to show)
    path = tmp_path / "plain.xlsx"
    write_workbook(layercalc.load(CASES / "midlevel_warming.layers"), path)
    assert "uncertainty" not in load_workbook(path).sheetnames


def test_rounding_only_network_has_values_and_says_why_nothing_is_live(tmp_path):
    # source: common practice, no source; the reporting resolution alone is not an
    # isotropic per-component error, so the triangle formula does not apply
    path = tmp_path / "stations.xlsx"
    write_workbook(layercalc.load(CASES / "three_stations.layers"), path)
    ws = load_workbook(path)["uncertainty"]
    texts = [c.value for row in ws.iter_rows() for c in row if isinstance(c.value, str)]
    assert any(t.startswith("Live divergence sigma per level: only for three stations")
               for t in texts)
    assert not any(t.startswith("=") for t in texts)


def test_triangle_formula_is_written_per_level(tmp_path):
    # source: Davies-Jones (1993) as derived in physics/uncertainty.py: the formula text
    # names the three sides and the area from the stations' plane positions
    sheet = layercalc.loads(triangle_text(), "tri.layers")
    path = tmp_path / "tri.xlsx"
    write_workbook(sheet, path)
    ws = load_workbook(path)["uncertainty"]
    header = rows_of(ws)["level [hPa]"]
    formula = ws.cell(header + 1, 3).value
    assert formula.startswith("=B") and "SQRT(" in formula and "ABS(" in formula
    stations = rows_of(ws)["station"]
    assert [ws.cell(stations + k, 1).value for k in (1, 2, 3)] == \
        ["Northfield", "Eastmoor", "Southvale"]
    network = sheet.checked.soundings.network
    assert ws.cell(stations + 1, 2).value == pytest.approx(network.stations[0].x / 1000)


# ---------------------------------------------------------------- recalculated
@pytest.mark.slow
@pytest.mark.skipif(shutil.which("soffice") is None, reason="LibreOffice (soffice) is not "
                    "installed: apt-get install libreoffice-calc-nogui")
def test_live_formulas_recalculated_by_libreoffice_equal_the_exact_propagation(tmp_path):
    # source: layercalc's exact linear propagation (physics/uncertainty.py), itself checked
    # against finite differences and closed forms; for the triangle, the propagation of
    # the declared wind error alone (reporting steps 0), which the triangle formula gives
    # exactly for independent equal component errors (Davies-Jones 1993)
    from tests.formats.test_libreoffice import convert

    hand = layercalc.loads(HAND, "hand.layers")
    tri = layercalc.loads(triangle_text(), "tri.layers")
    files = [tmp_path / "hand.xlsx", tmp_path / "tri.xlsx"]
    write_workbook(hand, files[0])
    write_workbook(tri, files[1])
    converted = convert(files, tmp_path / "out", tmp_path / "profile")
    ws = load_workbook(converted[files[0]], data_only=True)["uncertainty"]
    header = rows_of(ws)["layer (surface first)"]
    live = column_of(ws, header, "sigma omega_top [hPa/h] live")
    got = np.array([ws.cell(header + 1 + k, live).value for k in range(4)], dtype=float)
    exact = assess_sheet(hand).linear
    assert_allclose(got, exact["omega_top"] * PER_HOUR, rtol=1e-9, atol=1e-12)
    total = ws.cell(rows_of(ws)["sigma surface_pressure_tendency [hPa/(3 h)] live"], live).value
    assert_allclose(total, exact["surface_pressure_tendency"] * PER_3H, rtol=1e-9)

    ws = load_workbook(converted[files[1]], data_only=True)["uncertainty"]
    header = rows_of(ws)["level [hPa]"]
    levels = tri.checked.soundings.network.levels.pressure.size
    got = np.array([ws.cell(header + k, 3).value for k in range(1, levels + 1)], dtype=float)
    declared_only = assess_sheet(layercalc.loads(triangle_text("0 deg", "0 kt"), "t.layers"))
    assert_allclose(got, declared_only.levels["divergence"] * 1e5, rtol=1e-9)
