"""Workbook import: our own export round-trips, a hand-entered workbook imports, and every
bad cell, bad file and oversized file gives a SpreadsheetError that names sheet!cell."""

from __future__ import annotations

import hashlib
import re
import zipfile
from pathlib import Path

import numpy as np
import pytest
from openpyxl import Workbook, load_workbook

import layercalc
from layercalc.formats.xlsx import reader as xlsx_import
from layercalc.constants import G0, RD, T_ZERO_CELSIUS
from layercalc.errors import SpreadsheetError
from layercalc.formats.xlsx.export import write_workbook
from layercalc.formats.xlsx.reader import import_workbook, read_workbook

from tests.formats.test_xlsx_export import ALL_CASES, case_sheet

# Inputs layercalc computes itself (means over stations) may need 17 significant digits;
# a workbook stores 16 (openpyxl writes "%.16g"), so these re-import within 1e-16
# (relative); omega near the ground is a small remainder of large terms there (Dines ratio
# 0.02), which makes that about 1e-14 in the results, hence 1e-12 for these cases.
NETWORK_CASES = {"three_stations", "three_stations_uncertainty"}

HEADER = ["p_bottom [hPa]", "p_top [hPa]", "T", "Td [degC]", "div [1e-5 s^-1]"]
ROWS_TOP_FIRST = [[300, 200, -45.0, -55.0, 0.4], [500, 300, -22.0, -35.0, 0.8],
                  [700, 500, -5.0, -12.0, 0.3], [850, 700, 6.0, 1.0, -0.5],
                  [1000, 850, 14.0, 9.0, -1.0]]
SETTINGS = [["name", "value", "unit"], ["title", "Hand-entered, Station A (made-up)", None],
            ["surface_height", 320, "m"], ["integrate", "from_surface", None],
            ["adjust", "obrien", None], ["omega_surface", 0, "Pa/s"]]
SAME_AS_TEXT = """\
title "Hand-entered, Station A (made-up)"
option integrate = from_surface
option adjust = obrien
cell surface_height = 320 m
cell omega_surface = 0 [Pa/s]
layers
  p_bottom [hPa]  p_top [hPa]  T [degC]  Td [degC]  div [1e-5 s^-1]
  300  200  -45.0  -55.0  0.4
  500  300  -22.0  -35.0  0.8
  700  500   -5.0  -12.0  0.3
  850  700    6.0    1.0 -0.5
  1000 850   14.0    9.0 -1.0
end
"""


def hand_workbook(path: Path, header=None, rows=None, settings=None, formulas=None,
                  title: str = "layers") -> Path:
    """A workbook as a forecaster might type it: top layer first, trailing blank rows,
    a note to the right of the table, T without a unit."""
    workbook = Workbook()
    ws = workbook.active
    ws.title = title
    ws.append(HEADER if header is None else header)
    for row in ROWS_TOP_FIRST if rows is None else rows:
        ws.append(row)
    ws["H1"] = "typed from the 12 UTC chart (made-up)"
    ws.cell(ws.max_row + 3, 1).number_format = "0.00"  # a formatted but empty cell
    ws.cell(ws.max_row + 1, 2).value = "   "
    if settings is not False:
        sheet = workbook.create_sheet("settings")
        for row in SETTINGS if settings is None else settings:
            sheet.append(row)
    if formulas:
        sheet = workbook.create_sheet("formulas")
        for line in formulas:
            sheet.append([line])
    workbook.save(path)
    return path


def assert_same_results(a, b, scenarios=(), rtol=0.0):
    """Every column and cell of two sheets, base and scenarios, equal (rtol 0: bit for bit)."""
    for name in (None, *scenarios):
        ra, rb = a.evaluate(name), b.evaluate(name)
        assert set(ra.si_columns) == set(rb.si_columns)
        assert set(ra.si_cells) == set(rb.si_cells)
        for key, values in ra.si_columns.items():
            np.testing.assert_allclose(rb.si_columns[key], values, rtol=rtol, atol=0,
                                       err_msg=f"{name}: {key}")
        for key, value in ra.si_cells.items():
            np.testing.assert_allclose(rb.si_cells[key], value, rtol=rtol, atol=0,
                                       err_msg=f"{name}: {key}")


@pytest.mark.parametrize("name", ALL_CASES)
def test_own_export_imports_to_the_same_sheet(tmp_path, name):
    sheet = case_sheet(name)
    path = tmp_path / f"{name}.xlsx"
    write_workbook(sheet, path)
    again = import_workbook(path, layercalc.loads).sheet
    assert again.title == sheet.title and again.notes == sheet.notes
    assert again.options == sheet.options and again.scenarios == sheet.scenarios
    # source: layercalc's evaluation of the original case; identical bit for bit (a
    # station network comes back as its stations and is computed again the same way)
    assert_same_results(sheet, again, sheet.scenarios, rtol=0.0)


def sheet_contents(path: Path) -> dict:
    workbook = load_workbook(path)
    return {name: [[c.value for c in row] for row in workbook[name].iter_rows()]
            for name in workbook.sheetnames if name != "notes"}


@pytest.mark.parametrize("name", ALL_CASES)
def test_export_import_export_gives_the_same_workbook(tmp_path, name):
    first = tmp_path / "first.xlsx"
    write_workbook(case_sheet(name), first)
    second = tmp_path / "second.xlsx"
    write_workbook(import_workbook(first, layercalc.loads).sheet, second)
    a, b = sheet_contents(first), sheet_contents(second)
    if name in NETWORK_CASES:
        # a station network comes back as its stations (the stations sheet), so the
        # network, its live fit and its uncertainty sheet are all written again
        assert "stations" in a and "uncertainty" in a
    assert a.keys() == b.keys()
    for sheet in a:
        if sheet == "settings":  # the note column says "default" before the round trip
            a[sheet] = [row[:3] for row in a[sheet]]
            b[sheet] = [row[:3] for row in b[sheet]]
        assert a[sheet] == b[sheet], sheet


def test_hand_entered_workbook(tmp_path):
    path = hand_workbook(tmp_path / "hand.xlsx")
    imported = import_workbook(path, layercalc.loads)
    # source: layercalc's evaluation of the same column written as .layers text
    assert_same_results(layercalc.loads(SAME_AS_TEXT), imported.sheet)
    messages = [n.format() for n in imported.notices]
    assert any("layers!C1" in m and "no unit" in m and "[degC]" in m for m in messages)
    assert "T [degC]" in imported.text


def test_hand_entered_dry_layer_has_the_hypsometric_thickness(tmp_path):
    path = hand_workbook(tmp_path / "dry.xlsx", header=["p_bottom", "p_top [hPa]", "T"],
                         rows=[[1000, 850, 14.0]], settings=False)
    result = import_workbook(path, layercalc.loads).sheet.evaluate()
    # source: hypsometric equation dz = Rd T / g0 ln(p1/p2) (Wallace and Hobbs 2006,
    # eq. 3.29), by hand with the constants of layercalc.constants; the headers without
    # units take hPa and degC
    want = RD * (14.0 + T_ZERO_CELSIUS) / G0 * np.log(1000.0 / 850.0)
    assert result.si_columns["thickness"][0] == pytest.approx(want, rel=1e-12)


def test_first_sheet_is_used_without_a_layers_sheet(tmp_path):
    path = hand_workbook(tmp_path / "first.xlsx", title="Sheet1")
    assert_same_results(layercalc.loads(SAME_AS_TEXT), import_workbook(path, layercalc.loads).sheet)


def test_formulas_sheet_lines_are_read(tmp_path):
    path = hand_workbook(tmp_path / "f.xlsx", formulas=[
        "definition (layers language; read back on import)",
        "cell mean_T [degC] = mean(T)", "column warm = where(T > 0 degC, 1, 0)"])
    sheet = import_workbook(path, layercalc.loads).sheet
    # source: the mean of the five temperatures typed above, (-45-22-5+6+14)/5 degC
    assert sheet.evaluate().cells["mean_T"] == pytest.approx(-52.0 / 5.0, rel=1e-12)


def mutate_cell(sheet: str, cell: str, value):
    def change(workbook):
        workbook[sheet][cell] = value
    return change


def swap_rows(workbook):
    ws = workbook["layers"]
    for j in range(1, 6):
        a, b = ws.cell(3, j), ws.cell(4, j)
        a.value, b.value = b.value, a.value


def blank_row(workbook):
    for j in range(1, 6):
        workbook["layers"].cell(4, j).value = None


def second_surface_height(workbook):
    workbook["settings"].append(["surface_height", 300, "m"])


def bad_formula(workbook):
    ws = workbook.create_sheet("formulas")
    ws.append(["definition"])
    ws.append(["column wrong [m] = T + p_bottom"])


BAD_CELLS = [
    ("text", mutate_cell("layers", "C3", "warm"), "layers!C3", "'warm' is not a number"),
    ("error value", mutate_cell("layers", "C3", "#DIV/0!"), "layers!C3", "error value"),
    ("boolean", mutate_cell("layers", "E4", True), "layers!E4", "not a number"),
    ("missing", mutate_cell("layers", "D4", None), "layers!D4", "missing value for Td"),
    ("formula without value", mutate_cell("layers", "C3", "=C2+10"), "layers!C3",
     "has no saved value"),
    ("unknown unit", mutate_cell("layers", "C1", "T [degF]"), "layers!C1", "unknown unit"),
    ("not a header", mutate_cell("layers", "A1", "p bottom (hPa)"), "layers!A1",
     "not a column name"),
    ("duplicate column", mutate_cell("layers", "D1", "T [degC]"), "layers!D1",
     "appears twice"),
    ("no p_top", mutate_cell("layers", "B1", "ptop [hPa]"), "layers!F1", "no 'p_top'"),
    ("p_bottom not a pressure", mutate_cell("layers", "A1", "p_bottom [K]"), "layers!A1",
     "must be a pressure"),
    ("p_top above p_bottom", mutate_cell("layers", "B2", 350), "layers!B2",
     "must be lower than p_bottom"),
    ("not decreasing", swap_rows, "layers!A4", "do not decrease upward"),
    ("overlap", mutate_cell("layers", "A2", 320), "layers!A2", "overlaps"),
    ("gap", mutate_cell("layers", "A2", 280), "layers!A2", "leaves a gap"),
    ("below absolute zero", mutate_cell("layers", "C5", -300), "layers!C5",
     "below absolute zero"),
    ("zero pressure", mutate_cell("layers", "B2", 0), "layers!B2", "above zero"),
    ("blank row inside", blank_row, "layers!A4", "blank row inside"),
    ("unknown setting", mutate_cell("settings", "A3", "surface_heigth"), "settings!A3",
     "unknown setting 'surface_heigth'"),
    ("bad option", mutate_cell("settings", "B4", "from_bottom"), "settings!B4",
     "cannot be 'from_bottom'"),
    ("text setting value", mutate_cell("settings", "B3", "high"), "settings!B3",
     "not a number"),
    ("unknown setting unit", mutate_cell("settings", "C3", "meters"), "settings!C3",
     "unknown unit"),
    ("setting twice", second_surface_height, "settings!A7", "given twice"),
    ("bad formula line", bad_formula, "formulas!A2", "cannot add"),
]


@pytest.mark.parametrize("case, change, where, message", BAD_CELLS,
                         ids=[c[0] for c in BAD_CELLS])
def test_bad_cell_names_its_sheet_and_cell(tmp_path, case, change, where, message):
    path = hand_workbook(tmp_path / "bad.xlsx")
    workbook = load_workbook(path)
    change(workbook)
    workbook.save(path)
    with pytest.raises(SpreadsheetError) as caught:
        read_workbook(path, layercalc.loads)
    text = caught.value.format()
    assert f"{path}:{where}:" in text, text
    assert message in text, text


def test_unknown_setting_suggests_the_close_name(tmp_path):
    path = hand_workbook(tmp_path / "bad.xlsx")
    workbook = load_workbook(path)
    workbook["settings"]["A3"] = "surface_heigth"
    workbook.save(path)
    with pytest.raises(SpreadsheetError) as caught:
        read_workbook(path, layercalc.loads)
    assert "did you mean 'surface_height'" in caught.value.hint


def test_the_workbook_is_not_modified(tmp_path):
    path = hand_workbook(tmp_path / "hand.xlsx")
    before = (hashlib.sha256(path.read_bytes()).hexdigest(), path.stat().st_mtime_ns)
    read_workbook(path, layercalc.loads)
    layercalc.load(path).evaluate()
    assert (hashlib.sha256(path.read_bytes()).hexdigest(), path.stat().st_mtime_ns) == before


def write_zip(path: Path, entries: dict[str, bytes]) -> Path:
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as archive:
        for name, data in entries.items():
            archive.writestr(name, data)
    return path


def damaged_copy(source: Path, target: Path) -> Path:
    """A workbook whose sheet XML has a corrupted byte (its checksum fails)."""
    data = bytearray(source.read_bytes())
    with zipfile.ZipFile(source) as archive:
        info = archive.getinfo("xl/worksheets/sheet1.xml")
    start = info.header_offset + 30 + len(info.filename) + len(info.extra)
    data[start + info.compress_size // 2] ^= 0xFF
    target.write_bytes(bytes(data))
    return target


def test_files_that_are_not_workbooks(tmp_path):
    good = hand_workbook(tmp_path / "good.xlsx")
    cases = [
        (tmp_path / "missing.xlsx", "no such workbook"),
        (tmp_path / "text.xlsx", "not an .xlsx workbook"),
        (tmp_path / "empty.xlsx", "not an .xlsx workbook"),
        (tmp_path / "locked.xlsx", "password-protected"),
        (write_zip(tmp_path / "other.xlsx", {"hello.txt": b"hi"}), "no xl/workbook.xml"),
        (damaged_copy(good, tmp_path / "damaged.xlsx"), "corrupt"),
    ]
    (tmp_path / "text.xlsx").write_text("p_bottom,p_top\n1000,850\n")
    (tmp_path / "empty.xlsx").write_bytes(b"")
    (tmp_path / "locked.xlsx").write_bytes(b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\0" * 504)
    for path, message in cases:
        with pytest.raises(SpreadsheetError) as caught:
            read_workbook(path, layercalc.loads)
        assert message in caught.value.message, (path.name, caught.value.format())
        assert str(path) in caught.value.format()


def test_zip_bomb_is_refused_before_reading(tmp_path, monkeypatch):
    monkeypatch.setattr(xlsx_import, "MAX_UNCOMPRESSED_BYTES", 1_000_000)
    good = hand_workbook(tmp_path / "good.xlsx")
    with zipfile.ZipFile(good) as archive:
        entries = {n: archive.read(n) for n in archive.namelist()}
    entries["xl/media/padding.bin"] = b"\0" * 5_000_000  # about 5 kB once compressed
    bomb = write_zip(tmp_path / "bomb.xlsx", entries)
    assert bomb.stat().st_size < 100_000
    with pytest.raises(SpreadsheetError) as caught:
        read_workbook(bomb, layercalc.loads)
    assert "zip bomb" in caught.value.message
    read_workbook(good, layercalc.loads)  # the same workbook without the padding is fine


def test_too_many_cells_are_refused(tmp_path, monkeypatch):
    monkeypatch.setattr(xlsx_import, "MAX_CELLS", 20)
    with pytest.raises(SpreadsheetError) as caught:
        read_workbook(hand_workbook(tmp_path / "big.xlsx"), layercalc.loads)
    assert "more than 20 cells" in caught.value.message


def test_an_empty_layers_sheet(tmp_path):
    path = hand_workbook(tmp_path / "e.xlsx", header=[], rows=[])
    with pytest.raises(SpreadsheetError) as caught:
        read_workbook(path, layercalc.loads)
    assert "layers!" in caught.value.format() and "header" in caught.value.format()


def test_load_reads_workbooks(tmp_path):
    path = hand_workbook(tmp_path / "hand.xlsx")
    # source: layercalc's evaluation of the same column written as .layers text
    assert_same_results(layercalc.loads(SAME_AS_TEXT), layercalc.load(path))


def test_import_command_writes_a_layers_file_with_the_same_results(tmp_path, capsys):
    from layercalc.cli.main import main

    path = hand_workbook(tmp_path / "hand.xlsx")
    out = tmp_path / "hand.layers"
    assert main(["import", str(path), "-o", str(out)]) == 0
    assert_same_results(layercalc.loads(SAME_AS_TEXT), layercalc.load(out))
    workbook = load_workbook(path)
    workbook["layers"]["C3"] = "warm"
    workbook.save(path)
    bad_out = tmp_path / "bad.layers"
    assert main(["import", str(path), "-o", str(bad_out)]) == 1
    assert "layers!C3" in capsys.readouterr().err
    assert not bad_out.exists()


def test_an_evaluation_error_after_import_names_a_cell(tmp_path):
    book = Workbook()
    ws = book.active
    ws.title = "layers"
    ws.append(["p_bottom [hPa]", "p_top [hPa]", "T [degC]", "x"])
    ws.append([1000, 850, 12, 0])
    ws.append([850, 700, 10, 1])
    book.create_sheet("formulas").append(["column y = T / x"])
    path = tmp_path / "zero.xlsx"
    book.save(path)
    with pytest.raises(SpreadsheetError) as info:
        layercalc.load(path)
    text = info.value.format()
    assert text.startswith(f"{path}:formulas!A1:")
    assert "column 'y' is infinite" in text and "1000-850 hPa" in text


def with_a_layer_added(source: Path, target: Path) -> None:
    """The exported midlevel_warming workbook with a 13th layer typed under the table."""
    workbook = load_workbook(source)
    workbook["layers"].append([150, 100, -56.0, -70.0, 0.0])
    workbook.save(target)


def test_a_row_added_in_the_workbook_is_said_not_silently_computed_twice(tmp_path, capsys):
    # The results sheets' formulas cover the 12 exported layers; layercalc reads 13. The
    # two answers must be said: a check cell in the workbook (LibreOffice test) and a
    # warning from layercalc run.
    from tests.helpers import cli

    path = tmp_path / "book.xlsx"
    write_workbook(case_sheet("midlevel_warming"), path)
    assert not [n for n in import_workbook(path, layercalc.loads).notices
                if "two answers" in n.message]
    added = tmp_path / "added.xlsx"
    with_a_layer_added(path, added)
    imported = import_workbook(added, layercalc.loads)
    assert imported.sheet.checked.layer_count == 13
    said = [n for n in imported.notices if "two answers" in n.message]
    assert len(said) == 1 and "13 layers" in said[0].message and "cover the 12" in \
        said[0].message and said[0].location_text.endswith("layers!A1")
    code, out, err = cli(capsys, "run", added)
    assert code == 0 and "two answers" in out + err
    # the check cells are formulas, turned red by a conditional format while they differ
    workbook = load_workbook(path)
    layers = workbook["layers"]
    check = [c for c in layers[2] if isinstance(c.value, str) and "COUNT(" in c.value]
    assert len(check) == 1 and "=12" in check[0].value
    assert any(check[0].coordinate in str(rng.sqref)
               for rng in layers.conditional_formatting)
    for name in ("results", "results_warmed"):
        assert "COUNT('layers'!$A$2:$A$1048576)=12" in workbook[name]["B4"].value
        assert any("B4" in str(rng.sqref) for rng in workbook[name].conditional_formatting)


@pytest.mark.parametrize("name", ["midlevel_warming", "three_stations"])
def test_imported_text_is_laid_out_as_one_writes_it(tmp_path, name):
    """Tables aligned (every number right-aligned under its header, indented under the word
    that opens the table) and a plain number written as one: `1.1`, not `1.1 [1]`."""
    path = tmp_path / "book.xlsx"
    write_workbook(case_sheet(name), path)
    text = import_workbook(path, layercalc.loads).text
    assert " [1]" not in text
    if name == "midlevel_warming":
        assert "\ncell div_scale = 1.1\n" in text
    lines = text.splitlines()
    blocks = [k for k, line in enumerate(lines) if line.strip() in ("layers", "levels")]
    assert blocks
    for start in blocks:
        end = next(k for k in range(start + 1, len(lines)) if lines[k].strip() == "end")
        rows = lines[start + 1:end]
        opener = len(lines[start]) - len(lines[start].lstrip())
        assert all(row.startswith(" " * (opener + 2)) for row in rows)
        # right edges of the header's columns = right edges of every row's numbers
        edges = {tuple(m.end() for m in re.finditer(r"\S+(?: \[[^\]]*\])?",
                                                                  rows[0]))}
        for row in rows[1:]:
            assert tuple(m.end() for m in re.finditer(r"\S+", row)) in edges, row
