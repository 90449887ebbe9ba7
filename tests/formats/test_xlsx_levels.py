"""The levels sheet of a workbook built from a top-level levels table
(formats/xlsx/levels.py): layer means live (gaps filled and the layer across
surface_pressure cut by formulas), the hydrostatic sheet (formats/xlsx/hydrostatic.py), the
table read back on import. The numbers are
checked by LibreOffice in test_libreoffice.py
(test_a_level_edited_in_the_workbook_moves_its_two_layers_and_the_results)."""

from __future__ import annotations

import numpy as np
import pytest
from openpyxl import load_workbook

import layercalc
from layercalc.formats.xlsx.export import write_workbook
from layercalc.formats.xlsx.reader import import_workbook

from tests.formats.test_xlsx_import import assert_same_results, sheet_contents

# made-up levels (demo data)
LEVELS = """title "Levels live"
cell surface_height = 110 m
levels
  p [hPa]  T [degC]  Td [degC]  z [m]  dir [deg]  speed [kt]  div [1e-5 s^-1]
  1000   14.0    9.0    110   200   10   -1.2
  850     6.0    0.0   1540   230   25   -0.6
  700    -4.0  -12.0   3100   250   35    0.1
  500   -20.0  -30.0   5650   260   50    0.8
  300   -44.0  -55.0   9300   265   70    0.5
end
"""


def test_layer_means_are_formulas_of_the_levels(tmp_path):
    path = tmp_path / "levels.xlsx"
    write_workbook(layercalc.loads(LEVELS, name="levels.layers"), path)
    workbook = load_workbook(path)
    assert "levels" in workbook.sheetnames
    layers = workbook["layers"]
    assert [c.value for c in layers[1]][:5] == ["p_bottom [hPa]", "p_top [hPa]", "T [degC]",
                                                "Td [degC]", "div [1e-5 s^-1]"]
    assert layers["A2"].value == "=('levels'!A5*100)/100"
    assert layers["C3"].value == "=((('levels'!B6+273.15)+('levels'!B7+273.15))/2-273.15)"
    assert workbook["levels"]["B6"].value == 6  # 850 hPa T as typed


# a gap in Td at 850 hPa, no height at 500 hPa (the hydrostatic check skips the layers
# beside it) and a surface_pressure that cuts the 1000-850 hPa layer (made up)
GAP_AND_CUT = """title "Gap and cut"
cell surface_height = 300 m
cell surface_pressure = 970 hPa
cell hydrostatic_tolerance = 15 m
levels
  p [hPa]  T [degC]  Td [degC]  z [m]  div [1e-5 s^-1]
  1000   14.0    9.0    60   -1.2
  850     6.0    -    1510   -0.6
  700    -4.0  -12.0   3100    0.1
  500   -20.0  -30.0      -    0.8
  300   -44.0  -55.0   9300    0.5
end
"""


# a levels table (T, Td, z) with three stations giving the winds, cut at 980 hPa (made up)
STATIONS_AND_LEVELS = """title "Stations and levels"
cell surface_height = 104 m
cell surface_pressure = 980 hPa
levels
  p [hPa]  T [degC]  Td [degC]  z [m]
  1000   12.0   10.0   104
  925     7.5    5.0   750
  850     4.5    1.0  1440
  700    -3.5   -8.0  2995
  500   -19.5  -26.0  5570
end
station "Northfield" latitude 47.10 longitude -31.70
  levels
    p [hPa]  T [degC]  z [m]  dir [deg]  speed [kt]
      1000     12.4     88    143      9
       925      7.8    737    180     17
       850      4.6   1431    200     23
       700     -3.8   2990    219     31
       500    -19.6   5568    229     47
  end
end
station "Eastmoor" latitude 45.85 longitude -28.75
  levels
    p [hPa]  dir [deg]  speed [kt]
      1000    170     12
       925    195     20
       850    215     26
       700    230     35
       500    243     55
  end
end
station "Southvale" latitude 44.70 longitude -32.30
  levels
    p [hPa]  dir [deg]  speed [kt]
      1000    120     10
       925    160     15
       850    190     22
       700    215     30
       500    225     45
  end
end
"""


def test_stations_with_a_levels_table_are_both_live(tmp_path):
    path = tmp_path / "both.xlsx"
    write_workbook(layercalc.loads(STATIONS_AND_LEVELS, name="both.layers"), path)
    workbook = load_workbook(path)
    assert {"stations", "levels", "hydrostatic"} <= set(workbook.sheetnames)
    layers = workbook["layers"]
    header = [c.value for c in layers[1]]
    div, temperature = header.index("div [1e-5 s^-1]") + 1, header.index("T [degC]") + 1
    assert "'stations'!" in layers.cell(3, div).value
    assert "'levels'!" in layers.cell(3, temperature).value


def test_a_gap_is_filled_by_a_formula_and_a_typed_value_replaces_it(tmp_path):
    path = tmp_path / "gap.xlsx"
    write_workbook(layercalc.loads(GAP_AND_CUT, name="gap.layers"), path)
    workbook = load_workbook(path)
    assert "levels" in workbook.sheetnames and workbook["levels"]["C6"].value is None
    td_upper = workbook["layers"]["D3"].value  # layer 850-700: Td at 850 is the gap
    assert td_upper.startswith("=((IF(ISNUMBER('levels'!C6),") and "LN(" in td_upper


def test_the_layer_across_surface_pressure_is_cut_by_formulas(tmp_path):
    path = tmp_path / "cut.xlsx"
    write_workbook(layercalc.loads(GAP_AND_CUT, name="cut.layers"), path)
    workbook = load_workbook(path)
    layers = workbook["layers"]
    link = [c for row in layers.iter_rows() for c in row
            if isinstance(c.value, str) and c.value.startswith("=INDEX('settings'")]
    assert len(link) == 1
    assert layers["A2"].value == f"=('layers'!${link[0].column_letter}${link[0].row}*100)/100"
    assert layers["B2"].value == "=('levels'!A6*100)/100"  # the 850 hPa level
    assert layers.max_row >= 5 and layers["A5"].value == "=('levels'!A8*100)/100"


def test_the_hydrostatic_sheet_holds_one_live_table_per_checked_sounding(tmp_path):
    from layercalc.formats.xlsx.hydrostatic import table_rows

    path = tmp_path / "levels.xlsx"
    write_workbook(layercalc.loads(LEVELS, name="levels.layers"), path)
    ws = load_workbook(path)["hydrostatic"]
    rows = table_rows(ws, "the levels table")
    assert len(rows) == 4  # five levels, four layers
    assert all(ws.cell(r, j).data_type == "f" for r in rows for j in range(1, 11))
    assert ws.cell(rows[0], 9).value.startswith("=IF(ISNUMBER(H")
    assert ws["B5"].value == 10  # the default tolerance, HYDROSTATIC_TOLERANCE_M


def test_station_soundings_get_their_hydrostatic_tables(tmp_path):
    from layercalc.formats.xlsx.hydrostatic import table_rows
    from tests.formats.test_xlsx_export import case_sheet

    sheet = case_sheet("three_stations")
    path = tmp_path / "stations.xlsx"
    write_workbook(sheet, path)
    ws = load_workbook(path)["hydrostatic"]
    for table in sheet.checked.soundings.hydrostatic:
        assert len(table_rows(ws, table.sounding)) == table.p_bottom.size


@pytest.mark.parametrize("text", [LEVELS, GAP_AND_CUT, STATIONS_AND_LEVELS],
                         ids=["levels", "gap_and_cut", "stations_and_levels"])
def test_export_import_export_keeps_the_levels(tmp_path, text):
    sheet = layercalc.loads(text, name="levels.layers")
    first, second = tmp_path / "first.xlsx", tmp_path / "second.xlsx"
    write_workbook(sheet, first)
    again = import_workbook(first, layercalc.loads).sheet
    # source: layercalc's evaluation of the original text; the levels come back as typed
    assert_same_results(sheet, again, sheet.scenarios, rtol=0.0)
    assert np.array_equal(again.checked.soundings.column_levels["pressure"],
                          sheet.checked.soundings.column_levels["pressure"])
    write_workbook(again, second)
    a, b = sheet_contents(first), sheet_contents(second)
    assert a.keys() == b.keys() and {"levels", "hydrostatic"} <= a.keys()
    for name in a:
        if name in ("settings", "results", "values") and "hydrostatic_tolerance" in text:
            continue  # the cell comes back after the table: same cells, another order
        if name == "settings":  # the note column says "default" before the round trip
            a[name] = [row[:3] for row in a[name]]
            b[name] = [row[:3] for row in b[name]]
        assert a[name] == b[name], name


def test_a_level_added_in_the_workbook_is_warned_about_on_import(tmp_path):
    path = tmp_path / "levels.xlsx"
    write_workbook(layercalc.loads(LEVELS, name="levels.layers"), path)
    workbook = load_workbook(path)
    ws = workbook["levels"]
    assert ws["A10"].value is None  # five levels in rows 5-9
    for column, value in zip("ABCDEFG", (200, -52.0, -62.0, 11800, 270, 80, 0.2)):
        ws[f"{column}10"] = value
    workbook.save(path)
    imported = import_workbook(path, layercalc.loads)
    messages = [n.message for n in imported.notices]
    assert any("the levels table has 6 levels but this workbook's own formulas cover the 5"
               in m for m in messages), messages
    assert imported.sheet.checked.layer_count == 5  # layercalc uses every level


def test_a_scenario_on_the_levels_has_its_own_levels_sheet(tmp_path):
    # numbers checked by LibreOffice in test_libreoffice.py
    # (test_a_scenario_that_changes_level_values_follows_a_level_and_a_what_if_cell)
    text = LEVELS + ("cell warming = 2 K\nscenario warm\n"
                     "  add warming to T at levels above 700 hPa\nend\n")
    path = tmp_path / "levels.xlsx"
    write_workbook(layercalc.loads(text, name="levels.layers"), path)
    workbook = load_workbook(path)
    ws = workbook["levels_warm"]
    assert ws["B5"].value == "='levels'!B5"  # 1000 hPa T: unchanged, a link
    assert ws["B7"].value.startswith("=((('levels'!B7+273.15)+'results_warm'!$B$")  # 700 hPa
    results = workbook["results_warm"]
    assert results["C6"].value.startswith("=((('levels_warm'!B5+273.15)+('levels_warm'!B6")
    assert results["D6"].value == "='layers'!D2"  # Td: not changed


def test_export_import_export_keeps_a_scenario_on_the_levels(tmp_path):
    text = LEVELS + ("cell warming = 2 K\nscenario warm\n"
                     "  add warming to T at levels above 700 hPa\nend\n")
    sheet = layercalc.loads(text, name="levels.layers")
    first, second = tmp_path / "first.xlsx", tmp_path / "second.xlsx"
    write_workbook(sheet, first)
    again = import_workbook(first, layercalc.loads).sheet
    assert again.scenarios == ["warm"]
    # source: layercalc's evaluation of the original text
    assert_same_results(sheet, again, sheet.scenarios, rtol=1e-12)
    write_workbook(again, second)
    assert load_workbook(second)["levels_warm"].sheet_state == "hidden"
