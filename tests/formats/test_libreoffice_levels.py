"""Levels tables and the hydrostatic check in workbooks recalculated by LibreOffice
(headless, as in test_libreoffice.py), after edits made in the workbook: every cell of the
hydrostatic sheet and every result equals layercalc's own evaluation of the same edit
(relative 1e-9); and every worked case, edited at one input cell, moves its results as
layercalc does.
"""

from __future__ import annotations

import numpy as np
import pytest
from openpyxl import load_workbook

import layercalc
from layercalc.constants import G0, RD
from layercalc.formats.xlsx.export import write_workbook
from layercalc.formats.xlsx.hydrostatic import across_rows, table_rows
from layercalc.formats.xlsx.reader import import_workbook
from layercalc.physics import humidity

from tests.formats.test_libreoffice import (
    SOFFICE, TOLERANCE, assert_recalculated, convert, relative_scale, summary_cells,
    summary_expected,
)
from tests.formats.test_xlsx_export import WORKED, derived_places
from tests.formats.test_xlsx_levels import GAP_AND_CUT, LEVELS

pytestmark = [pytest.mark.slow, pytest.mark.skipif(SOFFICE is None, reason="LibreOffice "
                                "(soffice) is not installed")]


def level_cell(ws, pressure: float, column: str) -> str:
    """The coordinate of a level's typed value on the levels sheet."""
    from layercalc.formats.xlsx.levels import HEADER_ROW

    header = {ws.cell(HEADER_ROW, j).value.split(" [")[0]: j
              for j in range(1, ws.max_column + 1) if ws.cell(HEADER_ROW, j).value}
    row = [r for r in range(HEADER_ROW + 1, ws.max_row + 1)
           if ws.cell(r, header["p"]).value == pressure][0]
    return ws.cell(row, header[column]).coordinate


def edit_levels(path, edits: dict, settings: dict | None = None) -> None:
    """Edit typed level values {(p hPa, column): value} and settings {name: value}."""
    workbook = load_workbook(path)
    for (pressure, column), value in edits.items():
        workbook["levels"][level_cell(workbook["levels"], pressure, column)].value = value
    for name, value in (settings or {}).items():
        row = [c.row for c in workbook["settings"]["A"] if c.value == name][0]
        workbook["settings"].cell(row, 2).value = value
    workbook.save(path)


def level_virtual_temperature(sheet) -> np.ndarray:
    """Tv [K] at the levels of the sheet's levels table, computed with layercalc's physics
    functions from the levels as loaded (Td where given, dry where Td is '-')."""
    levels = sheet.checked.document.statements
    from layercalc.language.nodes import Table

    table = [s for s in levels if isinstance(s, Table) and s.kind == "levels"][0]
    names = [h.name for h in table.headings]
    data = np.array(table.rows, dtype=float).reshape(len(table.rows), len(names))
    data = data[np.argsort(-data[:, names.index("p")], kind="stable")]
    p = data[:, names.index("p")] * 100.0  # [hPa] in these tables
    t = data[:, names.index("T")] + 273.15  # [degC]
    e = humidity.vapour_pressure_from_dewpoint(data[:, names.index("Td")] + 273.15)
    r = np.nan_to_num(humidity.mixing_ratio(e, p), nan=0.0)
    return humidity.virtual_temperature(t, r)


def assert_hydrostatic(calc_ws, live_ws, sheet, sounding: int = 0) -> list[str]:
    """Every cell of one hydrostatic table against layercalc's check of `sheet`; returns
    the flags as LibreOffice shows them."""
    table = sheet.checked.soundings.hydrostatic[sounding]
    rows = table_rows(live_ws, table.sounding)
    assert len(rows) == table.p_bottom.size
    tv = level_virtual_temperature(sheet) if table.sounding == "the levels table" else None
    columns = {1: table.p_bottom / 100.0, 2: table.p_top / 100.0,
               6: table.observed_thickness, 7: table.hypsometric_thickness,
               8: table.difference, 10: table.implied_virtual_temperature - 273.15}
    # the layer-mean Tv as layercalc's hypsometric thickness implies it
    columns[5] = (table.hypsometric_thickness * G0 / (RD * np.log(table.p_bottom / table.p_top))
                  - 273.15)
    if tv is not None:
        columns[3], columns[4] = tv[:-1] - 273.15, tv[1:] - 273.15
    for column, want in columns.items():
        want = np.asarray(want, dtype=float)
        gap = ~np.isfinite(want)  # a layer layercalc cannot check on its own: "-" here
        assert [calc_ws.cell(r, column).value for r in np.array(rows)[gap]] == ["-"] * gap.sum()
        cells = [calc_ws.cell(r, column).coordinate for r in np.array(rows)[~gap]]
        # source: layercalc's hydrostatic check (soundings/levels.py) of the edited text
        assert_recalculated(calc_ws, cells, want[~gap], f"column {column}")
    flags = [calc_ws.cell(r, 9).value for r in rows]
    assert flags == ["FLAG" if f else "ok" if np.isfinite(d) else "not checked"
                     for f, d in zip(table.flagged, table.difference)]
    across = across_rows(live_ws, table.sounding)
    assert len(across) == len(table.combined)
    for row, layer in zip(across, table.combined):
        for column, want in ((1, layer.p_bottom / 100.0), (2, layer.p_top / 100.0),
                             (6, layer.observed_thickness), (7, layer.hypsometric_thickness),
                             (8, layer.difference)):
            # source: layercalc's check across the gap (CombinedLayer) of the edited text
            assert abs(calc_ws.cell(row, column).value - want) <= TOLERANCE * max(
                abs(want), abs(layer.observed_thickness)), (row, column)
        assert calc_ws.cell(row, 9).value == ("FLAG" if layer.flagged else "ok")
    return flags


def assert_results(calc, live, sheet, before=None) -> set:
    """Every derived cell of every results sheet against layercalc's evaluation of `sheet`;
    returns the names that moved from `before` (another Sheet), if given."""
    moved = set()
    for scenario in (None, *sheet.scenarios):
        result = sheet.evaluate(scenario)
        name = "results" if scenario is None else f"results_{scenario}"
        old = before.evaluate(scenario) if before is not None else None
        for formula, cells in derived_places(result.sheet, live[name]):
            want = (result.layers[formula.name].to_numpy() if formula.kind == "column"
                    else np.array([result.cells[formula.name]]))
            assert_recalculated(calc[name], cells, want, (name, formula.name))
            if old is None:
                continue
            was = (old.layers[formula.name].to_numpy() if formula.kind == "column"
                   else np.array([old.cells[formula.name]]))
            if np.any(np.abs(was - want) / relative_scale(want) > 1e-6):
                moved.add(formula.name)
        rows = summary_cells(live[name])
        expected = summary_expected(result.summary)
        if "levels_of_nondivergence" not in rows:  # a column without div has none
            expected = {k: v for k, v in expected.items() if "nondivergence" not in k}
        for label, want in expected.items():
            assert live[name].cell(rows[label], 2).data_type == "f", label
            got = calc[name].cell(rows[label], 2).value
            # source: layercalc's own summary (numpy) of the edited case
            assert abs(got - want) <= TOLERANCE * max(abs(want), 1.0), (name, label, got, want)
    return moved


def test_levels_edited_in_the_workbook_move_the_hydrostatic_check_and_the_results(tmp_path):
    # 700 hPa: T -4 -> 1 degC, z 3100 -> 3160 m. The 850-700 hPa layer was within the
    # tolerance (-1.2 m) and is flagged after the edit.
    old_row, new_row = "  700    -4.0  -12.0   3100", "  700     1.0  -12.0   3160"
    assert LEVELS.count(old_row) == 1
    sheet = layercalc.loads(LEVELS, name="levels.layers")
    edited = layercalc.loads(LEVELS.replace(old_row, new_row), name="edited.layers")
    path, untouched = tmp_path / "levels.xlsx", tmp_path / "untouched.xlsx"
    write_workbook(sheet, path)
    write_workbook(sheet, untouched)
    edit_levels(path, {(700, "T"): 1.0, (700, "z"): 3160})
    converted = convert([path, untouched], tmp_path / "out", tmp_path / "profile")
    live = load_workbook(untouched)
    before = assert_hydrostatic(load_workbook(converted[untouched], data_only=True)
                                ["hydrostatic"], live["hydrostatic"], sheet)
    calc = load_workbook(converted[path], data_only=True)
    after = assert_hydrostatic(calc["hydrostatic"], live["hydrostatic"], edited)
    assert (before[1], after[1]) == ("ok", "FLAG")  # the 850-700 hPa layer flips
    # the same numbers as layercalc's evaluation of the edited workbook itself
    again = import_workbook(path, layercalc.loads).sheet
    assert_hydrostatic(calc["hydrostatic"], live["hydrostatic"], again)
    moved = assert_results(calc, live, edited, before=sheet)
    assert {"thickness", "z_top", "Tv"} <= moved, moved


def test_a_gap_and_the_cut_at_surface_pressure_follow_edits(tmp_path):
    # Td at 850 hPa is '-' (interpolated in ln p), surface_pressure 970 hPa cuts the
    # 1000-850 hPa layer. Edits: T at 850 hPa 6 -> 8 degC, Td at 700 hPa (the gap's upper
    # neighbour) -12 -> -10 degC, surface_pressure 970 -> 980 hPa; in a second workbook
    # the gap is filled by typing Td = 0 degC at 850 hPa.
    text = GAP_AND_CUT
    edited_text = (text.replace("  850     6.0    -", "  850     8.0    -")
                   .replace("  700    -4.0  -12.0", "  700    -4.0  -10.0")
                   .replace("surface_pressure = 970 hPa", "surface_pressure = 980 hPa"))
    filled_text = text.replace("  850     6.0    -", "  850     6.0    0.0")
    assert edited_text.count("-10.0") == 1 and "980 hPa" in edited_text
    assert filled_text != text
    sheet = layercalc.loads(text, name="gap.layers")
    path, filled = tmp_path / "gap.xlsx", tmp_path / "filled.xlsx"
    write_workbook(sheet, path)
    write_workbook(sheet, filled)
    edit_levels(path, {(850, "T"): 8.0, (700, "Td"): -10.0}, {"surface_pressure": 980})
    edit_levels(filled, {(850, "Td"): 0.0})
    converted = convert([path, filled], tmp_path / "out", tmp_path / "profile")
    live = load_workbook(tmp_path / "gap.xlsx")
    for book, reference in ((path, edited_text), (filled, filled_text)):
        want = layercalc.loads(reference, name="edited.layers")
        calc = load_workbook(converted[book], data_only=True)
        layers = calc["layers"]
        for j, name in enumerate(want.checked.input_columns, start=1):
            cells = [layers.cell(2 + k, j).coordinate for k in range(want.checked.layer_count)]
            # source: layercalc's layer means (gap filled, cut) of the edited text
            assert_recalculated(layers, cells, want.evaluate().layers[name].to_numpy(), name)
        assert_hydrostatic(calc["hydrostatic"], load_workbook(book)["hydrostatic"], want)
        moved = assert_results(calc, load_workbook(book), want, before=sheet)
        assert "Tv" in moved, moved
        checks = [c.value for name in ("levels", "layers") for row in calc[name].iter_rows()
                  for c in row if isinstance(c.value, str) and c.value.startswith(("OK", "CHECK"))]
        # values, level count, the layer count on layers, surface_pressure where it was
        assert len(checks) == 4 and all(c.startswith("OK") for c in checks), checks
    assert live["levels"][level_cell(live["levels"], 850, "Td")].value is None


def first_input_edit(workbook) -> tuple[str, str, float]:
    """(sheet, cell, new value) of a typed input every worked case has: a station's wind
    direction (stations sheet), a level's temperature (levels sheet), else the surface
    layer's temperature on layers, each moved by a few units."""
    if "stations" in workbook.sheetnames:
        from tests.formats.test_libreoffice import station_wind_cell

        ws = workbook["stations"]
        name = [ws.cell(r, 1).value for r in range(6, 20) if ws.cell(r, 1).value][0]
        cell = station_wind_cell(ws, name, 500, "dir")
        return "stations", cell, ws[cell].value + 15.0
    if "levels" in workbook.sheetnames:
        cell = level_cell(workbook["levels"], 700, "T")
        return "levels", cell, workbook["levels"][cell].value + 3.0
    ws = workbook["layers"]
    column = [c.column_letter for c in ws[1] if str(c.value).startswith("T [")][0]
    return "layers", f"{column}2", ws[f"{column}2"].value + 3.0


@pytest.mark.parametrize("path", WORKED, ids=[p.stem for p in WORKED])
def test_every_worked_case_follows_an_edited_input(tmp_path, path):
    sheet = layercalc.load(path)
    book, untouched = tmp_path / "edited.xlsx", tmp_path / "untouched.xlsx"
    write_workbook(sheet, book)
    write_workbook(sheet, untouched)
    workbook = load_workbook(book)
    name, cell, value = first_input_edit(workbook)
    assert isinstance(workbook[name][cell].value, (int, float))
    workbook[name][cell].value = value
    workbook.save(book)
    converted = convert([book], tmp_path / "out", tmp_path / "profile")
    # source: layercalc's evaluation of the edited workbook (imported, then evaluated)
    edited = import_workbook(book, layercalc.loads).sheet
    calc = load_workbook(converted[book], data_only=True)
    moved = assert_results(calc, load_workbook(untouched), edited, before=sheet)
    assert moved, (path.stem, name, cell)
    print(f"{path.stem}: {name}!{cell} -> {value}: {len(moved)} results moved")
    if "hydrostatic" not in calc.sheetnames:
        return
    for table in edited.checked.soundings.hydrostatic:
        rows = table_rows(load_workbook(untouched)["hydrostatic"], table.sounding)
        flags = [calc["hydrostatic"].cell(r, 9).value for r in rows]
        # source: layercalc's hydrostatic check of the edited workbook
        assert flags == ["FLAG" if f else "ok" for f in table.flagged], flags
        for column, want in ((6, table.observed_thickness), (7, table.hypsometric_thickness),
                             (8, table.difference)):
            assert_recalculated(calc["hydrostatic"], [calc["hydrostatic"].cell(r, column)
                                                      .coordinate for r in rows],
                                want, (table.sounding, column))


def assert_inputs(calc, want) -> None:
    """The layers sheet's inputs (live formulas) against layercalc's layer means."""
    layers = calc["layers"]
    result = want.evaluate()
    for j, name in enumerate(want.checked.input_columns, start=1):
        cells = [layers.cell(2 + k, j).coordinate for k in range(want.checked.layer_count)]
        # source: layercalc's layer means of the edited text
        assert_recalculated(layers, cells, result.layers[name].to_numpy(), name)


def assert_follows(tmp_path, path, untouched, sheet, edited_text: str, moving: set) -> None:
    """The edited workbook `path` recalculated by LibreOffice: its inputs, every result and
    every hydrostatic table equal layercalc's evaluation of `edited_text` (the same edits
    made in the text), and the results named in `moving` moved from `sheet`'s."""
    converted = convert([path], tmp_path / "out", tmp_path / "profile")
    want = layercalc.loads(edited_text, name="edited.layers")
    calc, live = load_workbook(converted[path], data_only=True), load_workbook(untouched)
    assert_inputs(calc, want)
    moved = assert_results(calc, live, want, before=sheet)
    assert moving <= moved, moved
    for k in range(len(want.checked.soundings.hydrostatic)):
        assert_hydrostatic(calc["hydrostatic"], live["hydrostatic"], want, k)


def edited_and_exported(tmp_path, text: str, edits, name: str) -> tuple:
    """(sheet of `text`, `text` with each (old, new) edit made once, the workbook to edit,
    an untouched copy)."""
    edited_text = text
    for old, new in edits:
        assert edited_text.count(old) == 1, old
        edited_text = edited_text.replace(old, new)
    sheet = layercalc.loads(text, name=f"{name}.layers")
    path, untouched = tmp_path / f"{name}.xlsx", tmp_path / "untouched.xlsx"
    write_workbook(sheet, path)
    write_workbook(sheet, untouched)
    return sheet, edited_text, path, untouched


def test_stations_with_a_levels_table_and_a_cut_follow_edits(tmp_path):
    # T at 850 hPa on the levels sheet 4.5 -> 6.5 degC, Eastmoor's 700 hPa wind 230 -> 245
    # degrees, surface_pressure 980 -> 990 hPa (still inside the 1000-925 hPa layer).
    from tests.formats.test_libreoffice import station_wind_cell
    from tests.formats.test_xlsx_levels import STATIONS_AND_LEVELS as text

    edits = (("  850     4.5    1.0  1440", "  850     6.5    1.0  1440"),
             ("       700    230     35", "       700    245     35"),
             ("surface_pressure = 980 hPa", "surface_pressure = 990 hPa"))
    sheet, edited_text, path, untouched = edited_and_exported(tmp_path, text, edits, "both")
    edit_levels(path, {(850, "T"): 6.5}, {"surface_pressure": 990})
    workbook = load_workbook(path)
    cell = station_wind_cell(workbook["stations"], "Eastmoor", 700, "dir")
    assert workbook["stations"][cell].value == 230
    workbook["stations"][cell].value = 245
    workbook.save(path)
    assert_follows(tmp_path, path, untouched, sheet, edited_text, {"omega_bottom", "thickness",
                                                                   "surface_pressure_tendency"})


def test_a_station_column_cut_at_surface_pressure_follows_edits(tmp_path):
    # three_stations with surface_pressure 980 hPa (its div was wrong in the cut layer
    # before the column's levels were formulas): Northfield's 925 hPa T 7.8 -> 9.8 degC on
    # the stations sheet, then surface_pressure 980 -> 960 hPa.
    from tests.formats.test_libreoffice import station_wind_cell
    from tests.formats.test_xlsx_export import worked_cases_folder

    text = (worked_cases_folder() / "three_stations.layers").read_text()
    text = text.replace("cell surface_height = 104 m",
                        "cell surface_height = 104 m\ncell surface_pressure = 980 hPa")
    row = "       925      7.8       6.2     737    180     17"
    assert text.count(row) == 1 and text.count("980 hPa") == 1
    edited_text = (text.replace(row, row.replace("7.8", "9.8"))
                   .replace("surface_pressure = 980 hPa", "surface_pressure = 960 hPa"))
    sheet = layercalc.loads(text, name="cut.layers")
    path, untouched = tmp_path / "cut.xlsx", tmp_path / "untouched.xlsx"
    write_workbook(sheet, path)
    write_workbook(sheet, untouched)
    workbook = load_workbook(path)
    cell = station_wind_cell(workbook["stations"], "Northfield", 925, "T")
    assert workbook["stations"][cell].value == 7.8
    workbook["stations"][cell].value = 9.8
    row = [c.row for c in workbook["settings"]["A"] if c.value == "surface_pressure"][0]
    workbook["settings"].cell(row, 2).value = 960
    workbook.save(path)
    assert_follows(tmp_path, path, untouched, sheet, edited_text, {"omega_bottom", "Tv",
                                                                   "surface_pressure_tendency"})


def test_the_check_cells_turn_when_the_formulas_no_longer_mirror_layercalc(tmp_path):
    # surface_pressure moved past the 850 hPa level, a value the layer formulas read blanked
    sheet = layercalc.loads(GAP_AND_CUT, name="gap.layers")
    path = tmp_path / "moved.xlsx"
    write_workbook(sheet, path)
    edit_levels(path, {(700, "T"): None}, {"surface_pressure": 800})
    calc = load_workbook(convert([path], tmp_path / "out", tmp_path / "profile")[path],
                         data_only=True)
    checks = [c.value for name in ("levels", "layers") for row in calc[name].iter_rows()
              for c in row if isinstance(c.value, str) and c.value.startswith(("OK", "CHECK"))]
    assert sorted(c.split(":")[0] for c in checks) == ["CHECK", "CHECK", "OK", "OK"], checks
    assert any("1 value(s) the layer formulas read are blank" in c for c in checks)
    assert any("surface_pressure has moved past a level" in c for c in checks)


def level_values(calc_ws, live_ws, title: str) -> list:
    from tests.formats.test_libreoffice import fit_column

    return [calc_ws[c].value for c in fit_column(live_ws, title)]


@pytest.mark.parametrize("case", ["interpolated", "four"])
def test_a_network_with_a_missing_wind_follows_edits(tmp_path, case):
    # Northfield's 500 hPa wind turned 229 -> 244 degrees; in a second workbook the
    # missing wind is typed in (Eastmoor 925 hPa 187/27, or Westby 700 hPa 222/35).
    from tests.formats.test_libreoffice import station_wind_cell
    from tests.formats.test_xlsx_network_fit import (
        EASTMOOR_925, WESTBY, four_stations, without_a_wind,
    )

    text = without_a_wind() if case == "interpolated" else four_stations()
    north_500 = "       500    -19.6     -26.0    5568    229     47"
    assert text.count(north_500) == 1
    turned = text.replace(north_500, north_500.replace("229", "244"))
    if case == "interpolated":
        station, level, wind = "Eastmoor", 925, (187, 27)
        filled = text.replace(EASTMOOR_925[:-13] + "     -      -", EASTMOOR_925)
    else:
        station, level, wind = "Westby", 700, (222, 35)
        row = "       700     -1.6      -5.6   3049      -      -"
        assert WESTBY.count(row) == 1
        filled = text.replace(row, row.replace("     -      -", "    222     35"))
    assert filled != text
    sheet = layercalc.loads(text, name="missing.layers")
    levels = sheet.checked.soundings.network.levels
    assert levels.stations_used.min() == (2 if case == "interpolated" else 3)
    paths = {name: tmp_path / f"{name}.xlsx" for name in ("untouched", "turned", "filled")}
    for path in paths.values():
        write_workbook(sheet, path)
    workbook = load_workbook(paths["turned"])
    workbook["stations"][station_wind_cell(workbook["stations"], "Northfield", 500, "dir")] = 244
    workbook.save(paths["turned"])
    workbook = load_workbook(paths["filled"])
    for column, value in zip(("dir", "speed"), wind):
        cell = station_wind_cell(workbook["stations"], station, level, column)
        assert workbook["stations"][cell].value is None
        workbook["stations"][cell] = value
    workbook.save(paths["filled"])
    converted = convert(list(paths.values()), tmp_path / "out", tmp_path / "profile")
    live = load_workbook(paths["untouched"])
    for name, reference in (("untouched", text), ("turned", turned), ("filled", filled)):
        want = layercalc.loads(reference, name=f"{name}.layers")
        calc = load_workbook(converted[paths[name]], data_only=True)
        fitted = want.checked.soundings.network.levels
        got = level_values(calc["stations"], live["stations"], "divergence [s^-1]")
        # source: layercalc's fit per level (physics/stations.py) of the edited text
        assert np.allclose(got, fitted.divergence, rtol=TOLERANCE, atol=0.0), (name, got)
        vorticity = level_values(calc["stations"], live["stations"], "vorticity [s^-1]")
        for got_v, want_v in zip(vorticity, fitted.vorticity):
            assert got_v == "-" if not np.isfinite(want_v) else np.isclose(
                got_v, want_v, rtol=TOLERANCE, atol=1e-9 * np.nanmax(np.abs(fitted.vorticity)))
        assert_inputs(calc, want)
        assert_results(calc, live, want, before=None if name == "untouched" else sheet)


def test_a_wind_blanked_on_the_stations_sheet_turns_its_check_red(tmp_path):
    # a wind present at export counts as 0 in the fit's formulas once blanked, while
    # layercalc leaves the station out of that level's fit: the station's check says so
    sheet = layercalc.load(next(p for p in WORKED if p.name == "three_stations.layers"))
    path = tmp_path / "blanked.xlsx"
    write_workbook(sheet, path)
    book = load_workbook(path)
    ws = book["stations"]
    marks = [r for r in range(1, ws.max_row + 1) if ws.cell(r, 1).value == "station"
             and ws.cell(r, 2).value != "latitude [deg]"]  # not the station list's header
    eastmoor = next(r for r in marks if ws.cell(r, 2).value == "Eastmoor")
    ws.cell(eastmoor + 2, 5).value = None  # the surface level's dir
    book.save(path)
    calc = load_workbook(convert([path], tmp_path / "out", tmp_path / "profile")[path],
                         data_only=True)["stations"]
    checks = {calc.cell(r, 2).value: calc.cell(r, 3).value for r in marks}
    assert checks == {"Northfield": "OK: every wind is there",
                      "Eastmoor": "CHECK: 1 blank wind value(s): the fit reads 0 (note above)",
                      "Southvale": "OK: every wind is there"}, checks


def test_a_station_moved_on_the_stations_sheet_moves_the_plane_and_the_fit(tmp_path):
    # Eastmoor's latitude 45.85 -> 46.35 and Southvale's longitude -32.30 -> -32.00 on the
    # station list: the centroid, x, y and the north angles are live formulas, so the fit,
    # divergence per level and every result follow as layercalc computes the moved network.
    text = next(p for p in WORKED if p.name == "three_stations.layers").read_text()
    edits = (('station "Eastmoor" latitude 45.85', 'station "Eastmoor" latitude 46.35'),
             ('station "Southvale" latitude 44.70 longitude -32.30',
              'station "Southvale" latitude 44.70 longitude -32.00'))
    sheet, edited_text, path, untouched = edited_and_exported(tmp_path, text, edits, "moved")
    workbook = load_workbook(path)
    ws = workbook["stations"]
    rows = {ws.cell(r, 1).value: r for r in range(6, 9)}
    assert ws.cell(rows["Eastmoor"], 2).value == 45.85
    assert ws.cell(rows["Southvale"], 3).value == -32.3
    ws.cell(rows["Eastmoor"], 2).value = 46.35
    ws.cell(rows["Southvale"], 3).value = -32.0
    workbook.save(path)
    assert_follows(tmp_path, path, untouched, sheet, edited_text,
                   {"omega_bottom", "surface_pressure_tendency"})
    calc = load_workbook(tmp_path / "out" / "moved.xlsx", data_only=True)["stations"]
    want = layercalc.loads(edited_text, name="edited.layers").checked.soundings.network
    from layercalc.physics.stations import tangent_plane_coordinates

    latitudes = [calc.cell(r, 2).value for r in sorted(rows.values())]
    longitudes = [calc.cell(r, 3).value for r in sorted(rows.values())]
    x, y, angle = tangent_plane_coordinates(latitudes, longitudes, want.centroid_latitude,
                                            want.centroid_longitude)
    for column, expected in ((4, x), (5, y), (6, np.rad2deg(angle))):
        got = [calc.cell(r, column).value for r in sorted(rows.values())]
        # source: layercalc's own plane (physics/stations.py) about the moved network's
        # centroid; the sheet's formulas are independent of it
        assert np.allclose(got, expected, rtol=1e-12, atol=1e-9), (column, got, expected)
