"""The printed report: layout (80 columns, column top first), the trade's units, and that
every number shown is the result's own value converted."""

from __future__ import annotations

import re

import pytest

import layercalc
from layercalc.cli import worked_cases_folder
from layercalc.report import TableColumn, auto, fixed, render, render_comparison, table_lines

CASES = sorted(worked_cases_folder().glob("*.layers"))
TABLE = """\
layers
  p_bottom [hPa]  p_top [hPa]  T [degC]  div [1e-5 s^-1]
  1000  850   14.0  -1.0
  850   700    6.0  -0.6
  700   500   -6.0   0.0
  500   300  -25.0   0.8
  300   200  -45.0   1.0
end
"""


def report_of(text: str, **options) -> str:
    sheet = layercalc.loads(text, name="case.layers")
    return render(sheet, sheet.evaluate(), **options)


def summary_value(report: str, label: str) -> float:
    line = next(ln for ln in report.splitlines() if ln.strip().startswith(label))
    return float(re.search(r"[-+]?\d+\.?\d*", line[len(label) + 2:]).group())


@pytest.mark.parametrize("case", CASES, ids=[c.stem for c in CASES])
def test_every_worked_case_fits_80_columns(case):
    sheet = layercalc.load(case)
    for name in ["base", *sheet.scenarios]:
        for options in ({}, {"system": "si"}, {"heights": "dam", "every_column": True}):
            text = render(sheet, sheet.evaluate(name), **options)
            assert max(len(line) for line in text.splitlines()) <= 80, (name, options)
            assert text.rstrip().splitlines()[-1].endswith("local procedures.")
    if sheet.scenarios:
        text = render_comparison(sheet, ["base", *sheet.scenarios])
        assert max(len(line) for line in text.splitlines()) <= 80


def test_layers_are_listed_top_first_with_the_surface_last():
    text = report_of(TABLE)
    rows = [ln.split()[0] for ln in text.splitlines()
            if re.match(r"^\d+-\d+ ", ln) or ln.startswith("surface ")]
    assert rows == ["300-200", "500-300", "700-500", "850-700", "1000-850", "surface"]


def test_trade_units_and_the_header_line():
    text = report_of(TABLE)
    for unit in ("degC", "1e-5/s", "hPa/h", "cm/s", "hPa per 3 h", "microbar/s"):
        assert unit in text
    assert "integrate = from_top" in text and "top mismatch: 0 by construction" in text


def test_header_names_the_adjustment_and_the_raw_mismatch():
    text = report_of("option integrate = from_surface\noption adjust = uniform\n" + TABLE)
    flat = " ".join(text.split())
    assert "integrate = from_surface" in flat
    assert "adjustment: uniform" in flat
    # raw mismatch = sum(div dp) = (-150 - 90 + 0 + 160 + 100) x 1e-5 hPa/s = +0.2 Pa/s
    assert "raw top mismatch: +0.72 hPa/h" in flat


def test_summary_numbers_are_the_results_converted():
    sheet = layercalc.loads(TABLE, name="case.layers")
    result = sheet.evaluate()
    text = render(sheet, result)
    cells = result.cells  # display units: hPa/(3 h), hPa/h, 1e-5 s^-1
    assert summary_value(text, "surface pressure tendency") == pytest.approx(
        cells["surface_pressure_tendency"], abs=0.005)
    assert summary_value(text, "omega at the surface") == pytest.approx(
        cells["omega_surface"], abs=0.005)
    assert summary_value(text, "Dines ratio") == pytest.approx(cells["dines_ratio"],
                                                               abs=0.0005)
    assert summary_value(text, "column-mean divergence") == pytest.approx(
        cells["column_mean_divergence"], abs=0.0005)
    microbar = re.search(r"omega at the surface.*\(([-+]\d+\.\d+) microbar/s\)", text)
    assert float(microbar.group(1)) == pytest.approx(result.si_cells["omega_surface"] * 10,
                                                     abs=0.005)  # 1 Pa = 10 microbar


def test_si_units():
    text = report_of(TABLE, system="si")
    assert "Pa/s" in text and "hPa" not in text.replace("hPa per", "")
    assert "100000-85000" in text


def test_dry_column_remark_replaced_default_and_warnings():
    text = report_of(TABLE.replace("div [1e-5 s^-1]", "div") + "column Tv [degC] = T + 1 K\n")
    assert "treated as dry" in text
    assert "your formula for Tv replaces the default" in text
    assert "Warnings" in text
    assert re.search(r"case.layers:2:\d+: warning: column 'div' has no unit", text)


def test_user_columns_and_cells_are_shown_in_file_order():
    text = report_of(TABLE + "column lapse [K/km] = (below(T, T) - T) / thickness\n"
                     "column flag = where(T > 0 degC, 1, 0)\n"
                     "cell warmest [hPa] = at_max(T, p_top)\n")
    columns = text.split("Your columns, top first")[1]
    assert columns.index("lapse") < columns.index("flag") and "K/km" in columns
    cells = text.split("Your cells")[1]
    assert re.search(r"warmest\s+850(\.0)? hPa", cells)


def test_a_column_without_divergence():
    text = report_of(TABLE.replace("  div [1e-5 s^-1]", "").replace("  -1.0", "")
                     .replace("  -0.6", "").replace("   0.0", "").replace("   0.8", "")
                     .replace("   1.0", ""))
    assert "omega: not computed" in text and "omega at the surface" not in text


def test_layers_given_top_first_are_said_so():
    rows = TABLE.splitlines()
    text = report_of("\n".join([rows[0], rows[1], *reversed(rows[2:-1]), rows[-1]]) + "\n")
    assert "given top first" in text


def test_scenario_report_lists_its_changes():
    sheet = layercalc.load(worked_cases_folder() / "midlevel_warming.layers")
    text = render(sheet, sheet.evaluate("warmed_divergent"))
    assert "change (warmed): add warming to T between 500 hPa and 300 hPa" in text
    assert "change (warmed_divergent): scale div by div_scale above 500 hPa" in text


def test_comparison_values_and_changes():
    sheet = layercalc.load(worked_cases_folder() / "midlevel_warming.layers")
    text = render_comparison(sheet, ["base", *sheet.scenarios])
    line = next(ln for ln in text.splitlines() if ln.startswith("pressure tendency"))
    base = sheet.evaluate().cells["surface_pressure_tendency"]
    other = sheet.evaluate("warmed_divergent").cells["surface_pressure_tendency"]
    assert f"{other:.2f} ({other - base:+.2f})" in line


@pytest.mark.parametrize("value, decimals, text", [
    (-0.004, 2, "0.00"), (1.005, 1, "1.0"), (-3.25, 1, "-3.2"), (float("nan"), 2, "-")])
def test_fixed(value, decimals, text):
    assert fixed(value, decimals) == text


def test_auto_significant_digits_and_counts():
    assert auto([1234.5, 2.0]) == ["1234", "2"] or auto([1234.5, 2.0]) == ["1235", "2"]
    assert auto([0.012345]) == ["0.01235"] or auto([0.012345]) == ["0.01234"]
    assert auto([1.0, 0.0, 2.0], counts=True) == ["1", "0", "2"]
    assert auto([2.5e-5]) == ["2.500e-05"]


def test_wide_tables_are_split_and_keep_the_labels():
    columns = [TableColumn(f"column{i}", "unit", ["123456.789"]) for i in range(12)]
    lines = table_lines("layer", "hPa", ["1000-850"], columns)
    assert max(len(line) for line in lines) <= 80
    assert sum(line.startswith("1000-850") for line in lines) > 1
