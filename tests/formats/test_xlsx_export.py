"""Workbook export: layout, live formulas, values twin, chart, text safety, atomic writes.

The numbers in the workbook are checked against layercalc's own evaluation here (the values
sheet) and against LibreOffice's recalculation in test_libreoffice.py (the formulas).
The case texts below are made-up columns, shared with the import and LibreOffice tests.
"""

from __future__ import annotations

import os

import numpy as np
import pytest
from numpy.testing import assert_allclose
from openpyxl import load_workbook
from openpyxl.utils import column_index_from_string, get_column_letter

import layercalc
from layercalc.cli.common import worked_cases_folder
from layercalc.errors import OutputError
from layercalc.evaluation.engine import BINARY as EVALUATED_BINARY, UNARY as EVALUATED_UNARY
from layercalc.language.functions import AGGREGATE_MAX, AGGREGATE_MIN, FUNCTIONS, ROW_MAX, ROW_MIN
from layercalc.formats.xlsx.export import write_workbook
from layercalc.formats.xlsx.formulas import BINARY, CALLS, UNARY, number_text
from layercalc.formats.xlsx.layout import FIRST_ROW, HEADER_ROW

EVERY_FUNCTION = """\
title "=SUM(A1) is a title, not a formula"
note "+ made-up training column at Station A"
note "@ and - at the start stay text too"
option integrate = from_top
cell surface_height = 320 m
cell omega_top = -0.2 [Pa/s]
layers
  p_bottom [hPa]  p_top [hPa]  T [degC]  Td [degC]  div [1e-5 s^-1]
  1000  850   14.0    9.0  -1.0
  850   700    6.0    1.0  -0.5
  700   500   -5.0  -12.0   0.3
  500   300  -22.0  -35.0   0.8
  300   200  -45.0  -55.0   0.4
end
column lapse [K/km] = (T - above(T, T)) / (above(z_bottom, z_top) - z_bottom)
column T_below [degC] = below(T, T - 1 K)
column flag = where(T > 0 degC and not (Td < 253.15 K) or div >= 0.5 [1e-5 s^-1], 1, 0)
column compared = where(T == T, 1, 0) + where(T != Td, 2, 0) + where(T <= Td, 4, 0)
column mixed = (dp / 100 [hPa]) ^ 0.5 + exp(-abs(div) / 1 [1e-5 s^-1]) + ln(p_bottom / p_top)
column root = sqrt(p_mid * 1 [Pa]) / 1 [Pa]
column coolest [degC] = min(T, Td, T - 1 K)
column warmest [degC] = max(T, Td)
column es [hPa] = saturation_vapour_pressure(T)
column r_again [g/kg] = mixing_ratio(vapour_pressure(Td), p_mid)
column e_again [hPa] = vapour_pressure_from_mixing_ratio(r, p_mid)
column Tv_K [K] = virtual_temperature(T, r)
column dz_km [km] = hypsometric_thickness(Tv, p_bottom, p_top)
column w_mm [mm/s] = vertical_velocity(omega_top, p_top, Tv)
column density [kg m^-3] = p_mid / (Rd * Tv)
column gas_ratio = Rv / Rd * epsilon
column same_thickness [m] = thickness * g0 / g0
column warmth_sum [K] = upward_sum(T - 273.15 K)
column depth_above [hPa] = downward_sum(dp)
column T_running [K] = upward_sum(T)
column is_warm = T > 0 degC
cell mean_T [degC] = mean(T)
cell sum_T [K] = sum(T)
cell min_T [degC] = min(T)
cell max_div [1e-5 s^-1] = max(div)
cell top_T [degC] = highest_layer(T)
cell coldest_p [hPa] = at_min(T, p_mid)
cell driest_p [hPa] = at_max(T - Td, p_mid)
cell warm_column = where(mean_T > 0 degC, 1, 0)
cell pressures [hPa] = -lowest_layer(p_bottom) + +max(p_top)
cell spread [K] = max(T - Td) - min(abs(T - Td))
"""

FROM_SURFACE_OBRIEN = """\
title "Northfield, made-up: integrated from the surface, O'Brien adjustment"
option integrate = from_surface
option adjust = obrien
cell surface_height = 150 m
cell omega_surface = 0.2 [Pa/s]
cell omega_top = 0 [Pa/s]
cell upslope_wind = 5 [m/s]
cell terrain_slope = 0.01
cell pressure_advection = 0.5 [hPa/h]
cell unused_note_value = 7 [m]
layers
  p_bottom [hPa]  p_top [hPa]  T [K]  RH [%]  div [1e-5 s^-1]
  400  250  240  40   1.2
  600  400  258  55   0.6
  800  600  272  70  -0.4
  1000 800  285  80  -0.9
end
"""

UNIFORM_MIXING_RATIO = """\
option integrate = from_surface
option adjust = uniform
layers
  p_bottom [kPa]  p_top [kPa]  T [degC]  r [g/kg]  div [s^-1]
  101.3  92.5   18.0  11.0  -2e-5
  92.5   85.0   13.0   9.0  -1e-5
  85.0   70.0    6.0   5.5   0.4e-5
  70.0   50.0   -8.0   2.0   1.6e-5
end
column w_mean [cm/s] = (w_bottom + w_top) / 2
"""

DRY = """\
title "Dry column, made-up"
layers
  p_bottom [hPa]  p_top [hPa]  T [degC]  div [1e-5 s^-1]
  1000  850   10.0  -0.8
  850   700    2.0  -0.2
  700   500  -10.0   0.4
  500   300  -30.0   0.6
end
"""

CASES = {"every_function": EVERY_FUNCTION, "from_surface_obrien": FROM_SURFACE_OBRIEN,
         "uniform_mixing_ratio": UNIFORM_MIXING_RATIO, "dry": DRY}
WORKED = sorted(worked_cases_folder().glob("*.layers"))


def case_sheet(name: str):
    """A test case by name: one of CASES or a worked case (file stem)."""
    if name in CASES:
        return layercalc.loads(CASES[name], name=f"{name}.layers")
    return layercalc.load(worked_cases_folder() / f"{name}.layers")


ALL_CASES = [*CASES, *(p.stem for p in WORKED)]


@pytest.fixture(scope="module")
def exported(tmp_path_factory):
    """Every case exported once: name -> (sheet, path)."""
    folder = tmp_path_factory.mktemp("export")
    out = {}
    for name in ALL_CASES:
        sheet = case_sheet(name)
        path = folder / f"{name}.xlsx"
        write_workbook(sheet, path)
        out[name] = (sheet, path)
    return out


def derived_places(sheet_or_checked, ws):
    """(formula, cell coordinates) of every derived column row and cell on a results sheet,
    found from its header row and its cells block."""
    checked = getattr(sheet_or_checked, "checked", sheet_or_checked)
    headers = {ws.cell(HEADER_ROW, j).value: j for j in range(1, ws.max_column + 1)}
    names = {}
    for row in range(FIRST_ROW + checked.layer_count + 2, ws.max_row + 1):
        if isinstance(ws.cell(row, 1).value, str):
            names.setdefault(ws.cell(row, 1).value, row)
    for formula in checked.formulas:
        if formula.kind == "column":
            column = headers[f"{formula.name} [{formula.unit.text}]"]
            yield formula, [ws.cell(FIRST_ROW + k, column).coordinate
                            for k in range(checked.layer_count)]
        else:
            yield formula, [f"B{names[formula.name]}"]


def test_every_function_and_operator_has_a_spreadsheet_form():
    # Structural: adding a function or operator without its spreadsheet form must fail here.
    for function in (*FUNCTIONS.values(), AGGREGATE_MIN, AGGREGATE_MAX, ROW_MIN, ROW_MAX):
        assert (function.name, function.layer_rule) in CALLS, function.name
    assert set(EVALUATED_BINARY) <= set(BINARY)
    assert set(EVALUATED_UNARY) <= set(UNARY)


@pytest.mark.parametrize("value", [0.0, 1.0, -273.15, 1e-05, 100.0 / 3600.0,
                                   100.0 / (3 * 3600.0), 287.05307204706463, -1.6280380500384461,
                                   0.6219800858985512, 1e300, -5e-324])
def test_number_text_gives_back_the_same_double(value):
    # Exact round trip of the printed number (Python's float parsing as the reference,
    # IEEE 754 correctly rounded division for the ratio form).
    text = number_text(value).strip("()")
    if "/" in text and "E" not in text:
        numerator, denominator = text.split("/")
        got = float(numerator) / float(denominator)
    else:
        got = float(text)
    assert got == value


def test_sheets_and_layout(exported):
    sheet, path = exported["every_function"]
    wb = load_workbook(path)
    assert wb.sheetnames == ["layers", "settings", "results", "values", "formulas", "notes"]
    layers = wb["layers"]
    header = [c.value for c in layers[1][:5]]
    assert header == ["p_bottom [hPa]", "p_top [hPa]", "T [degC]", "Td [degC]",
                      "div [1e-5 s^-1]"]
    # surface layer first, values as written in the case text (not computed: the input)
    assert [layers.cell(r, 1).value for r in range(2, 7)] == [1000, 850, 700, 500, 300]
    assert layers.freeze_panes == "A2"
    results = wb["results"]
    assert results.freeze_panes == f"C{FIRST_ROW}"
    assert results.cell(2, 1).value == layercalc.CAUTION
    assert wb["values"].cell(2, 1).value == layercalc.CAUTION
    # the printed headers wrap at their spaces: each column as wide as its header's longest
    # word, the header row as high as two lines or more
    printed = column_index_from_string(str(results.print_area).split(":")[-1].split("$")[1])
    for j in range(1, printed):
        header = results.cell(HEADER_ROW, j).value
        if header:
            width = results.column_dimensions[get_column_letter(j)].width
            assert width >= max(len(word) for word in header.split()), (header, width)
    assert results.cell(HEADER_ROW, 1).alignment.wrap_text
    assert results.row_dimensions[HEADER_ROW].height >= 2 * 14.5
    assert results.cell(HEADER_ROW, 1).font.bold
    formats = {results.cell(FIRST_ROW, j).number_format
               for j in range(6, 20)}
    assert formats - {"General"}, "derived columns get number formats"
    notes = [c.value for row in wb["notes"].iter_rows() for c in row if c.value]
    text = "\n".join(str(v) for v in notes)
    for needed in ("Bolton", "O'Brien", "Hypsometric", layercalc.__version__, layercalc.CAUTION,
                   "integrate = from_top", "column dp [hPa] = p_bottom - p_top",
                   "cell mean_T [degC] = mean(T)", "U.S. Standard Atmosphere"):
        assert needed in text, needed


def test_every_derived_value_is_a_live_formula_on_the_inputs(exported):
    sheet, path = exported["every_function"]
    ws = load_workbook(path)["results"]
    seen = 0
    for formula, cells in derived_places(sheet, ws):
        for coordinate in cells:
            value = ws[coordinate].value
            assert isinstance(value, str) and value.startswith("="), (formula.name, value)
            seen += 1
    checked = sheet.checked
    assert seen == sum(checked.layer_count if f.kind == "column" else 1
                       for f in checked.formulas)
    # inputs in the results sheet link to the layers and settings sheets
    assert ws.cell(FIRST_ROW, 3).value == "='layers'!C2"
    assert any(str(c.value).startswith("='settings'!") for c in ws["B"])


def test_translations_use_the_spreadsheet_functions(exported):
    # What each language construct becomes (structural; the numbers are checked in
    # test_libreoffice.py).
    sheet, path = exported["every_function"]
    ws = load_workbook(path)["results"]
    text = {f.name: [ws[c].value for c in cells] for f, cells in derived_places(sheet, ws)}
    assert "AVERAGE(" in text["mean_T"][0]
    assert "INDEX(" in text["coldest_p"][0] and "MATCH(MIN(" in text["coldest_p"][0]
    assert "MATCH(MAX(" in text["driest_p"][0]
    assert "AND(" in text["flag"][0] and "OR(" in text["flag"][0] and "NOT(" in text["flag"][0]
    assert "<>" in text["compared"][0] and "^" in text["mixed"][0]
    assert "LN(" in text["mixed"][0] and "EXP(" in text["es"][0]
    assert text["is_warm"][0].startswith("=IF(")
    # running sums: anchored at the surface row going up, at the top row going down
    assert f"$6:" in text["z_top"][2] and "SUM(" in text["z_top"][2]
    assert ":U$10" in text["omega_bottom"][0] or "$10)" in text["omega_bottom"][0]
    # above/below read the neighbouring row; the edge row takes the edge value
    assert "C7" in text["lapse"][0] and "C10" in text["lapse"][4]
    assert "C5" not in text["T_below"][0] and "C6" in text["T_below"][1]
    # constants inlined, not named
    assert "9.80665" in text["same_thickness"][0] and "g0" not in text["same_thickness"][0]


def test_values_sheet_holds_layercalc_numbers_cell_for_cell(exported):
    for name in ("every_function", "from_surface_obrien", "uniform_mixing_ratio", "dry"):
        sheet, path = exported[name]
        wb = load_workbook(path)
        results, values = wb["results"], wb["values"]
        result = sheet.evaluate()
        for formula, cells in derived_places(sheet, results):
            want = (result.layers[formula.name].to_numpy() if formula.kind == "column"
                    else [result.cells[formula.name]])
            got = [values[c].value for c in cells]
            # source: layercalc's own evaluation; the workbook stores 16 digits
            assert_allclose(got, want, rtol=1e-15, atol=0, err_msg=formula.name)
        for row in results.iter_rows():
            for cell in row:
                twin = values[cell.coordinate]
                assert twin.data_type != "f", cell.coordinate  # no formulas in the twin
                if cell.data_type == "f":  # a number, "none" (no such level), "-" (no
                    # difference) or the row check's "OK: ..."
                    assert isinstance(twin.value, (int, float)) or twin.value in (
                        "none", "-") or twin.value.startswith("OK: "), cell.coordinate


def test_text_starting_like_a_formula_stays_text(exported):
    sheet, path = exported["every_function"]
    wb = load_workbook(path)
    for ws, coordinate in ((wb["settings"], "B2"), (wb["results"], "A1"),
                           (wb["values"], "A1"), (wb["notes"], "A1")):
        cell = ws[coordinate]
        assert cell.value.startswith("=SUM(A1) is a title"), (ws.title, cell.value)
        assert cell.data_type == "s" and cell.quotePrefix
    notes = [c for c in wb["settings"]["B"] if c.value and str(c.value)[:1] in "+@"]
    assert len(notes) == 2 and all(c.data_type == "s" for c in notes)


@pytest.mark.parametrize("case", ["every_function", "midlevel_warming"])
def test_summary_diagnostics_are_live_formulas(exported, case):
    # Levels of non-divergence, standard heights and thicknesses used to be values that
    # went stale after an edit; they are formulas now, on every results sheet and compare.
    sheet, path = exported[case]
    wb = load_workbook(path)
    values = load_workbook(path)["values"]
    ws = wb["results"]
    rows = {ws.cell(r, 1).value: r for r in range(1, ws.max_row + 1)}
    summary = sheet.evaluate().summary
    labels = [f"height_{k}hPa" for k in summary["standard_heights"]] + \
        [f"thickness_{k.replace('-', '_')}hPa" for k in summary["standard_thicknesses"]]
    levels = summary["level_of_nondivergence"]
    labels += ["level_of_nondivergence" + (f"_{i}" if len(levels) > 1 else "")
               for i in range(1, len(levels) + 1)]
    assert len(labels) >= 8
    for label in labels:
        assert ws.cell(rows[label], 2).data_type == "f", label
    # source: layercalc's own summary of the same sheet (the values twin holds it)
    assert values.cell(rows["height_500hPa"], 2).value == pytest.approx(
        summary["standard_heights"]["500"], rel=1e-15)
    for name in wb.sheetnames:
        if name.startswith("results") or name == "compare":
            sheet_ws = wb[name]
            static = [c.coordinate for row in sheet_ws.iter_rows() for c in row
                      if c.fill.fgColor.rgb == "00FFF2CC"]
            assert not static, (name, static[:5])  # no shaded "not a formula" value left


def test_options_in_settings_are_locked_with_the_reason(exported):
    sheet, path = exported["midlevel_warming"]
    ws = load_workbook(path)["settings"]
    assert ws.protection.sheet
    rows = {ws.cell(r, 1).value: r for r in range(1, ws.max_row + 1)}
    for option in ("integrate", "adjust"):
        cell = ws.cell(rows[option], 2)
        assert cell.protection.locked
        assert "LOCKED" in ws.cell(rows[option], 4).value
        assert any(cell.coordinate in str(v.sqref) for v in ws.data_validations.dataValidation)
    assert not ws.cell(rows["warming"], 2).protection.locked  # what-if cells stay editable


def test_charts_plot_omega_and_divergence_on_their_own_axes_against_log_pressure(exported):
    sheet, path = exported["every_function"]
    ws = load_workbook(path)["results"]
    assert len(ws._charts) == 2  # omega and divergence: each its own axes
    omega, divergence = ws._charts
    for chart in (omega, divergence):
        assert chart.tagname == "scatterChart"
        assert chart.y_axis.scaling.orientation == "maxMin"  # pressure falls upward
        assert chart.y_axis.scaling.logBase == 10
    titles = [s.tx.v for s in omega.series] + [s.tx.v for s in divergence.series]
    assert titles[0].startswith("omega") and titles[1].startswith("div")
    looks = [(s.marker.symbol, s.graphicalProperties.line.solidFill.srgbClr)
             for s in omega.series + divergence.series]
    assert len(set(looks)) == len(looks)  # distinct colours and markers
    y_ref = omega.series[0].yVal.numRef.f
    column, first = y_ref.split("$")[1], int(y_ref.split("$")[2].split(":")[0])
    # the omega series' y values are interface pressures: surface first, then upward
    assert ws[f"{column}{first}"].value == f"=(A{FIRST_ROW}*100)/100"
    # the chart data sits beside the helper columns, outside the print area
    printed = column_index_from_string(str(ws.print_area).split(":")[-1].split("$")[1])
    assert column_index_from_string(column) > printed


def test_every_sheet_has_a_print_setup(exported):
    from layercalc.caution import CAUTION

    sheet, path = exported["midlevel_warming"]
    wb = load_workbook(path)
    for ws in wb.worksheets:
        if ws.title.startswith("values"):
            assert ws.sheet_state == "hidden"  # the live sheets carry the numbers
            continue
        assert ws.page_setup.orientation == "landscape", ws.title
        # one page wide; as many down as needed, but a compare sheet (no page break to
        # keep) on one page
        assert ws.page_setup.fitToWidth == 1
        assert ws.page_setup.fitToHeight == (1 if ws.title == "compare" else 0), ws.title
        assert ws.sheet_properties.pageSetUpPr.fitToPage
        assert ws.oddFooter.center.text == CAUTION, ws.title
    results = wb["results"]
    assert results.print_title_rows == f"${HEADER_ROW}:${HEADER_ROW}"  # header repeated
    area = str(results.print_area)
    helpers = [j for j in range(1, results.max_column + 1)
               if str(results.cell(HEADER_ROW, j).value).startswith("helper")]
    last_printed = column_index_from_string(area.split(":")[-1].split("$")[1])
    assert helpers and last_printed < helpers[0]  # the SI helper columns are not printed
    # each readable formula of the cells block wrapped over the printed width (merged up
    # to the blank column after the table, which is printed), not cut at the page edge
    assert results.cell(HEADER_ROW, last_printed).value is None
    note_rows = [r for r in range(FIRST_ROW, results.max_row + 1)
                 if str(results.cell(r, 4).value).startswith("cell ")]
    merged = {str(m) for m in results.merged_cells.ranges}
    assert note_rows and all(f"D{r}:{get_column_letter(last_printed)}{r}" in merged
                             for r in note_rows)
    assert all(results.cell(r, 4).alignment.wrap_text for r in note_rows)
    # the charts start on a page of their own, inside the print area
    breaks = [b.id for b in results.row_breaks.brk]
    anchor_row = results._charts[0].anchor._from.row + 1
    assert breaks == [anchor_row - 1]
    assert int(area.split("$")[-1]) > anchor_row
    notes = wb["notes"]
    assert notes.cell(2, 2).alignment.wrap_text  # notes wrapped, not one long line


def test_scenarios_get_their_own_sheets_and_a_comparison(exported):
    sheet, path = exported["midlevel_warming"]
    wb = load_workbook(path)
    names = wb.sheetnames
    for scenario in sheet.scenarios:
        assert f"results_{scenario}" in names and f"values_{scenario}" in names
    assert "compare" in names and "values_compare" in names
    ws = wb["results_warmed"]
    column = [ws.cell(HEADER_ROW, j).value for j in range(1, 6)].index("T [degC]") + 1
    cells = [ws.cell(FIRST_ROW + k, column) for k in range(sheet.checked.layer_count)]
    linked = [c for c in cells if str(c.value).startswith("='layers'!")]
    changed = [c for c in cells if c not in linked]
    assert changed and linked
    # a changed input replays the scenario on the base value: T + warming, live
    warming = [r for r in range(1, ws.max_row + 1) if ws.cell(r, 1).value == "warming"]
    assert warming and str(ws.cell(warming[0], 2).value).startswith("='settings'!")
    for cell in changed:
        assert "'layers'!C" in cell.value and f"+$B${warming[0]})" in cell.value
        assert "add warming to T" in cell.comment.text
    compare = wb["compare"]
    assert compare.cell(HEADER_ROW, 3).value == "base"
    assert str(compare.cell(HEADER_ROW + 1, 3).value).startswith("='results'!")


def test_what_cannot_be_a_formula_is_a_value_with_a_note(tmp_path, monkeypatch):
    # Every function has a spreadsheet form today; this removes one (ln) and shortens the
    # formula limit to show the fallback: the value layercalc computed, and a note.
    from layercalc.formats.xlsx import formulas as xlsx_formulas, layout as xlsx_layout
    from layercalc.language.functions import ELEMENTWISE

    monkeypatch.delitem(xlsx_formulas.CALLS, ("ln", ELEMENTWISE))
    monkeypatch.setattr(xlsx_layout, "MAX_FORMULA_LENGTH", 60)
    sheet = case_sheet("every_function")
    write_workbook(sheet, tmp_path / "v.xlsx")
    ws = load_workbook(tmp_path / "v.xlsx")["results"]
    result = sheet.evaluate()
    places = {f.name: cells for f, cells in derived_places(sheet, ws)}
    mixed = [ws[c] for c in places["mixed"]]
    assert all(c.data_type == "n" for c in mixed)
    assert "function ln has no spreadsheet form" in mixed[0].comment.text
    # source: layercalc's own evaluation of the same sheet
    assert_allclose([c.value for c in mixed], result.layers["mixed"], rtol=1e-15)
    long = [ws[c] for c in places["w_bottom"]]
    assert all(c.data_type == "n" for c in long)
    assert "longer than 60 characters" in long[0].comment.text
    assert ws[places["dp"][0]].data_type == "f"


def test_unwritable_target_is_an_output_error_with_the_path(tmp_path):
    sheet = case_sheet("dry")
    missing = tmp_path / "no_such_folder" / "out.xlsx"
    with pytest.raises(OutputError) as caught:
        write_workbook(sheet, missing)
    assert str(missing) in caught.value.format()
    with pytest.raises(OutputError) as caught:
        write_workbook(sheet, tmp_path)
    assert "folder" in caught.value.message


def test_a_failed_write_leaves_the_old_file_and_no_temporary(tmp_path, monkeypatch):
    sheet = case_sheet("dry")
    target = tmp_path / "case.xlsx"
    target.write_bytes(b"the previous workbook")
    from openpyxl.workbook.workbook import Workbook

    def broken_save(self, handle):
        handle.write(b"PK half a zip")
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(Workbook, "save", broken_save)
    with pytest.raises(OutputError) as caught:
        write_workbook(sheet, target)
    assert "No space left" in caught.value.message
    assert target.read_bytes() == b"the previous workbook"
    assert sorted(os.listdir(tmp_path)) == ["case.xlsx"]


def test_written_file_gets_ordinary_permissions(tmp_path):
    target = tmp_path / "case.xlsx"
    write_workbook(case_sheet("dry"), target)
    mask = os.umask(0)
    os.umask(mask)
    assert target.stat().st_mode & 0o777 == 0o666 & ~mask
    assert load_workbook(target)["results"].cell(FIRST_ROW, 1).value == "='layers'!A2"


def test_sheet_to_xlsx_is_the_same_writer(tmp_path):
    sheet = case_sheet("dry")
    sheet.to_xlsx(tmp_path / "a.xlsx")
    write_workbook(sheet, tmp_path / "b.xlsx")
    a = load_workbook(tmp_path / "a.xlsx")["results"]
    b = load_workbook(tmp_path / "b.xlsx")["results"]
    assert [[c.value for c in r] for r in a.iter_rows()] == \
        [[c.value for c in r] for r in b.iter_rows()]


def test_input_values_are_stored_so_that_they_convert_back_exactly(exported):
    # The layers sheet holds display values that give back the very same SI inputs.
    for name in CASES:
        sheet, path = exported[name]
        ws = load_workbook(path)["layers"]
        for j, (column_name, column) in enumerate(sheet.checked.input_columns.items(), 1):
            stored = np.array([ws.cell(2 + k, j).value for k in range(len(column.values))],
                              dtype=float)
            assert np.array_equal(column.unit.to_si(stored), column.values), column_name



@pytest.mark.parametrize("name", ALL_CASES)
def test_every_computed_cell_carries_a_number_format(exported, name):
    # printed readably: a computed number shows with sensible decimals, not the 15 digits
    # of General; display only, the formula and the stored value stay in full
    import re

    _, path = exported[name]
    workbook = load_workbook(path)
    bare = []
    count = 0
    for ws in workbook.worksheets:
        if ws.sheet_state != "visible":
            continue
        for row in ws.iter_rows():
            for cell in row:
                if cell.data_type != "f":
                    continue
                text = str(cell.value)
                if '"OK: ' in text or re.fullmatch(r"=\$?[A-Z]+\$?\d+", text):
                    continue  # the row check's words; a copy of a typed value on its sheet
                count += 1
                if cell.number_format == "General":
                    bare.append(f"{ws.title}!{cell.coordinate}: {text[:60]}")
    assert count > 50
    assert bare == []
