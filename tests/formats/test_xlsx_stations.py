"""The stations sheet of a station-network workbook (formats/xlsx/stations.py): what is live,
what falls back to layer means, and how a bad stations sheet is reported on import. The
numbers are checked by LibreOffice in test_libreoffice.py
(test_a_station_wind_turned_in_the_workbook_moves_divergence_omega_and_the_tendency)."""

from __future__ import annotations

import re

import pytest
from openpyxl import load_workbook

import layercalc
from layercalc.errors import SpreadsheetError
from layercalc.formats.xlsx.export import write_workbook
from layercalc.formats.xlsx.reader import import_workbook
from layercalc.formats.xlsx.stations import FIT_MARK, GEOMETRY_HEADER_ROW, STATION_MARK

from tests.formats.test_xlsx_export import case_sheet, worked_cases_folder


def exported(tmp_path, text=None):
    sheet = case_sheet("three_stations") if text is None else layercalc.loads(text, name="n.layers")
    path = tmp_path / "book.xlsx"
    write_workbook(sheet, path)
    return path, load_workbook(path)


def test_the_layers_div_is_the_mean_of_two_live_level_divergences(tmp_path):
    _, workbook = exported(tmp_path)
    layers, stations = workbook["layers"], workbook["stations"]
    column = [c.column for c in layers[1] if c.value == "div [1e-5 s^-1]"][0]
    first = layers.cell(2, column).value
    # the fit sits right of the station tables (column J on), its header rows those of
    # the station tables (rows 16, 28, 40)
    assert re.fullmatch(r"=\('stations'!O41\+'stations'!O42\)/2/1E-05", first), first
    assert stations["J5"].value == FIT_MARK
    assert stations["O40"].value == "divergence [s^-1]"
    assert stations["O41"].value == "=K41+N41"  # du/dx + dv/dy
    # Northfield's u at the lowest level from its typed speed [kt] and dir [deg]:
    # u = -speed sin(dir) (common practice, no source), 1 kt = 463/900 m/s
    assert stations["K16"].value == "u Northfield [m/s]"
    u_cell = stations["K17"].value
    assert re.fullmatch(r"=-\(F17\*\(463/900\)\)\*SIN\(\(E17\*0\.0174532925199\d*\)\)", u_cell), u_cell
    typed = [c.row for c in stations["A"]
             if c.value == STATION_MARK and c.row > GEOMETRY_HEADER_ROW]  # not the list's header
    assert [stations.cell(r, 2).value for r in typed] == ["Northfield", "Eastmoor", "Southvale"]
    assert stations.cell(typed[0] + 2, 5).value == 143  # the 1000 hPa dir as typed


def test_a_network_with_a_missing_wind_is_live_too(tmp_path):
    # the level's fit counts the winds there (formats/xlsx/network_fit.py; LibreOffice
    # checks the numbers in test_libreoffice_levels.py)
    text = (worked_cases_folder() / "three_stations.layers").read_text()
    old = "       850      5.8       3.4    1453    202     32"
    assert text.count(old) == 1
    _, workbook = exported(tmp_path, text.replace(old, old[:-12] + "  -      -"))
    assert "stations" in workbook.sheetnames
    layers = workbook["layers"]
    column = [c.column for c in layers[1] if c.value == "div [1e-5 s^-1]"][0]
    assert "'stations'!" in layers.cell(2, column).value


def refused_at(tmp_path, find_row, column: int, value) -> tuple[int, str]:
    """The three-station workbook with `value` typed into the stations sheet at (the row
    `find_row(sheet)` gives, `column`): (that row, the import error's text)."""
    path, workbook = exported(tmp_path)
    stations = workbook["stations"]
    row = find_row(stations)
    stations.cell(row, column).value = value
    workbook.save(path)
    with pytest.raises(SpreadsheetError) as caught:
        import_workbook(path, layercalc.loads)
    return row, caught.value.format()


def marks(stations) -> list[int]:
    return [c.row for c in stations["A"] if c.value == STATION_MARK]


def test_a_latitude_beyond_the_pole_is_reported_at_its_cell(tmp_path):
    row, text = refused_at(tmp_path, lambda ws: [c.row for c in ws["A"]
                                                 if c.value == "Eastmoor"][0], 2, 95.85)
    assert f"stations!B{row}:" in text  # the station list's latitude cell
    assert "is at latitude 95.85" in text


def test_text_in_a_wind_cell_is_reported_at_its_cell(tmp_path):
    row, text = refused_at(tmp_path, lambda ws: marks(ws)[2] + 2, 5, "calm")  # Eastmoor 1000
    assert f"stations!E{row}" in text
    assert "'calm' is not a number" in text


def test_a_station_missing_from_the_list_is_reported(tmp_path):
    row, text = refused_at(tmp_path, lambda ws: marks(ws)[3], 2, "Westvale")  # Southvale's
    assert f"stations!B{row}" in text
    assert "station 'Westvale' is not in the station list" in text


def test_the_stations_sheet_prints_readably_with_every_computed_cell_formatted(tmp_path):
    # the fit is stacked in blocks of at most 2n + 1 columns beside the station tables,
    # so that fit-to-width shrinks the sheet little (it shrank the 21-column fit table to
    # a third); every computed number is shown with a number format (display only)
    from openpyxl.utils import column_index_from_string

    from layercalc.formats.xlsx.printing import print_scale

    _, workbook = exported(tmp_path)
    stations = workbook["stations"]
    area = stations.print_area.split("!")[1].replace("$", "")
    last_column = column_index_from_string(re.match(r"A1:([A-Z]+)\d+", area).group(1))
    widths = [stations.column_dimensions[letter].width
              for letter in "ABCDEFGHIJKLMNOPQRSTUVWXYZ"[:last_column]]
    assert last_column <= 18 and print_scale(widths) >= 0.65, widths
    computed = [c for row in stations.iter_rows() for c in row
                if isinstance(c.value, str) and c.value.startswith("=")
                and not re.fullmatch(r"=[A-Z]+\d+", c.value)  # not a copy of a typed p
                and '"OK: ' not in c.value]  # nor a check cell's words
    assert len(computed) > 100
    assert [c.coordinate for c in computed if c.number_format == "General"] == []
    assert stations["K17"].number_format == "0.00"  # a wind in m/s
    assert stations["O41"].number_format == "0.000E+00"  # divergence in s^-1
    assert stations["Q41"].number_format == "0.000"  # divergence in 1e-5 s^-1
    assert stations["Q41"].value == "=O41/1E-05"  # the stored formula in full


def test_a_scenario_that_turns_a_wind_has_its_own_live_stations_sheet(tmp_path):
    # worked case: scenario eastmoor_turned adds the what-if cell `turn` to Eastmoor's
    # 300 hPa direction; the numbers are checked by LibreOffice in test_libreoffice.py
    # (test_a_scenario_that_changes_station_winds_follows_a_wind_and_a_what_if_cell)
    _, workbook = exported(tmp_path)
    ws = workbook["stations_eastmoor_turned"]
    stations = workbook["stations"]
    typed = [c.row for c in ws["A"] if c.value == STATION_MARK and c.row > GEOMETRY_HEADER_ROW]
    eastmoor = typed[1]
    rows = {stations.cell(r, 1).value: r for r in range(eastmoor + 2, eastmoor + 11)}
    changed = ws.cell(rows[300], 5).value  # Eastmoor's 300 hPa dir
    assert changed.startswith("=MOD((('stations'!E") and "'results_eastmoor_turned'!$B$" in changed
    assert changed.endswith(",2*PI())/0.017453292519943295"), changed
    assert ws.cell(rows[500], 5).value == f"='stations'!E{rows[500]}"  # unchanged: a link
    assert ws.cell(rows[300], 6).value == f"='stations'!F{rows[300]}"
    assert ws["B6"].value == "='stations'!B6"  # positions link to the base sheet
    results = workbook["results_eastmoor_turned"]
    div = [c.column for c in results[5] if c.value == "div [1e-5 s^-1]"][0]
    assert results.cell(6, div).value.startswith("=('stations_eastmoor_turned'!")
    # the what-if cell the amount reads is the results sheet's link to settings
    cell_row = int(changed.split("'results_eastmoor_turned'!$B$")[1].split("*")[0].rstrip(")"))
    assert results.cell(cell_row, 1).value == "turn"


def test_export_import_export_keeps_a_station_scenario(tmp_path):
    from tests.formats.test_xlsx_import import assert_same_results

    sheet = case_sheet("three_stations")
    path, _ = exported(tmp_path)
    again = import_workbook(path, layercalc.loads).sheet
    assert again.scenarios == ["eastmoor_turned", "eastmoor_faster"]
    # source: layercalc's evaluation of the worked case itself
    assert_same_results(sheet, again, sheet.scenarios, rtol=1e-12)
    second = tmp_path / "second.xlsx"
    write_workbook(again, second)
    assert load_workbook(second)["stations_eastmoor_turned"].sheet_state == "hidden"

