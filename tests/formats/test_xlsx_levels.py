"""The levels sheet of a workbook built from a top-level levels table
(formats/xlsx/levels.py): layer means live, the table read back on import. The numbers are
checked by LibreOffice in test_libreoffice.py
(test_a_level_edited_in_the_workbook_moves_its_two_layers_and_the_results)."""

from __future__ import annotations

import numpy as np
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


def test_a_gap_in_the_levels_keeps_the_layer_means_as_inputs(tmp_path):
    text = LEVELS.replace("  700    -4.0  -12.0", "  700    -    -12.0")
    path = tmp_path / "gap.xlsx"
    write_workbook(layercalc.loads(text, name="gap.layers"), path)
    workbook = load_workbook(path)
    assert "levels" not in workbook.sheetnames
    assert isinstance(workbook["layers"]["C3"].value, float)


def test_export_import_export_keeps_the_levels(tmp_path):
    sheet = layercalc.loads(LEVELS, name="levels.layers")
    first, second = tmp_path / "first.xlsx", tmp_path / "second.xlsx"
    write_workbook(sheet, first)
    again = import_workbook(first, layercalc.loads).sheet
    # source: layercalc's evaluation of the original text; the levels come back as typed
    assert_same_results(sheet, again, sheet.scenarios, rtol=0.0)
    assert np.array_equal(again.checked.soundings.column_levels["pressure"],
                          sheet.checked.soundings.column_levels["pressure"])
    write_workbook(again, second)
    a, b = sheet_contents(first), sheet_contents(second)
    assert a.keys() == b.keys() and "levels" in a
    for name in a:
        if name == "settings":  # the note column says "default" before the round trip
            a[name] = [row[:3] for row in a[name]]
            b[name] = [row[:3] for row in b[name]]
        assert a[name] == b[name], name
