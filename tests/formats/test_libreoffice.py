"""The exported workbooks recalculated by a real spreadsheet program (LibreOffice Calc,
headless): every live formula must give layercalc's own number.

How: each workbook is converted xlsx -> xlsx by `soffice --headless --calc --convert-to`,
with a private user profile (per test session) set to recalculate every formula on load
(org.openoffice.Office.Calc/Formula/Load/OOXMLRecalcMode = 0, "always"); the converted
file holds LibreOffice's results as cached values, read back with openpyxl data_only=True.
The reference is layercalc's evaluation of the same sheet (the `values` twin as written by
the exporter, and Result.layers / Result.cells directly).

Relative difference: |calc - layercalc| / max(|layercalc|, m), below 1e-9, where m is the
largest magnitude of the same column of the layer table (or of the chart data) for layer
rows, the largest magnitude of its row for a cell of `compare` (a difference of two equal
heights is 0 in one program and 1e-12 in the other), and |layercalc| alone for other single
cells: an omega that is zero up to rounding at the top of a column is compared on the scale
of that column's omega.
Skipped only when soffice is not installed (CI installs libreoffice-calc-nogui).
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import zipfile
from pathlib import Path

import numpy as np
from numpy.testing import assert_allclose
import pytest
from openpyxl import load_workbook

import layercalc
import layercalc.cli.common
from layercalc.formats.xlsx.export import write_workbook
from layercalc.formats.xlsx.layout import FIRST_ROW

from tests.formats.test_xlsx_export import ALL_CASES, CASES, case_sheet, derived_places

SOFFICE = shutil.which("soffice") or shutil.which("libreoffice")
# CI (.ci/run) installs LibreOffice and sets LAYERCALC_REQUIRE_LIBREOFFICE=1: there a missing
# soffice is a failure, elsewhere a skip with the reason.
if SOFFICE is None and os.environ.get("LAYERCALC_REQUIRE_LIBREOFFICE") == "1":
    raise RuntimeError("LAYERCALC_REQUIRE_LIBREOFFICE=1 but soffice is not installed")
pytestmark = [pytest.mark.slow, pytest.mark.skipif(SOFFICE is None, reason="LibreOffice (soffice) is not "
                                "installed: apt-get install libreoffice-calc-nogui")]
TOLERANCE = 1e-9
TIMEOUT_SECONDS = 600
RECALCULATE_ALWAYS = """<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry"
  xmlns:xs="http://www.w3.org/2001/XMLSchema"
  xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="OOXMLRecalcMode"
  oor:op="fuse"><value>0</value></prop></item>
</oor:items>
"""
EDITED_TEMPERATURE = -2.0  # layer 3 of the every_function case: -5 degC in the text
EDITED_WARMING = 5.0  # the midlevel_warming case's what-if parameter: 3 K in the file


def convert(files: list[Path], out: Path, profile: Path) -> dict[Path, Path]:
    """Recalculate and save each workbook with LibreOffice; original -> converted path."""
    (profile / "user").mkdir(parents=True, exist_ok=True)
    (profile / "user" / "registrymodifications.xcu").write_text(RECALCULATE_ALWAYS)
    out.mkdir(parents=True, exist_ok=True)
    command = [SOFFICE, f"-env:UserInstallation={profile.as_uri()}", "--headless",
               "--norestore", "--calc", "--convert-to", "xlsx", "--outdir", str(out),
               *map(str, files)]
    done = subprocess.run(command, capture_output=True, text=True, timeout=TIMEOUT_SECONDS)
    converted = {f: out / f.name for f in files}
    missing = [str(f) for f, c in converted.items() if not c.exists()]
    assert done.returncode == 0 and not missing, (done.returncode, done.stderr, missing)
    return converted


def edited_text() -> str:
    text = CASES["every_function"]
    old = "  700   500   -5.0  -12.0   0.3"
    assert old in text
    return text.replace(old, f"  700   500   {EDITED_TEMPERATURE}  -12.0   0.3")


def stale_copy(converted: Path, target: Path) -> None:
    """The converted workbook (cached values present) with layers!C4 changed inside the
    sheet XML, leaving every cached result as it was (stale)."""
    with zipfile.ZipFile(converted) as source, zipfile.ZipFile(target, "w") as out:
        for item in source.infolist():
            data = source.read(item.filename)
            if item.filename == "xl/worksheets/sheet1.xml":  # `layers`, the first sheet
                text = data.decode("utf-8")
                new, count = re.subn(r'(<c r="C4"[^>]*><v>)[^<]*(</v>)',
                                     rf"\g<1>{EDITED_TEMPERATURE}\g<2>", text)
                assert count == 1
                data = new.encode("utf-8")
            out.writestr(item, data)


@pytest.fixture(scope="module")
def recalculated(tmp_path_factory):
    """Every case exported, plus an edited and a stale-cache workbook, recalculated by
    LibreOffice in one run (then the stale one in a second run, since it is built from
    the first run's output)."""
    folder = tmp_path_factory.mktemp("calc")
    exported = {}
    for name in ALL_CASES:
        exported[name] = (case_sheet(name), folder / f"{name}.xlsx")
        write_workbook(*exported[name])
    edited = folder / "edited.xlsx"
    shutil.copy(exported["every_function"][1], edited)
    workbook = load_workbook(edited)
    assert workbook["layers"]["C4"].value == -5
    workbook["layers"]["C4"].value = EDITED_TEMPERATURE
    workbook.save(edited)
    what_if = folder / "what_if.xlsx"
    shutil.copy(exported["midlevel_warming"][1], what_if)
    workbook = load_workbook(what_if)
    rows = [c.row for c in workbook["settings"]["A"] if c.value == "warming"]
    assert len(rows) == 1 and workbook["settings"].cell(rows[0], 2).value == 3
    workbook["settings"].cell(rows[0], 2).value = EDITED_WARMING
    workbook.save(what_if)
    profile = folder / "profile"
    converted = convert([p for _, p in exported.values()] + [edited, what_if], folder / "out",
                        profile)
    stale = folder / "stale.xlsx"
    stale_copy(converted[exported["every_function"][1]], stale)
    converted.update(convert([stale], folder / "out_stale", profile))
    return exported, converted, edited, stale, what_if


def compare_sheets(live_path: Path, calc_path: Path, want_path: Path | None = None,
                   only: tuple = ()) -> tuple[int, float, list]:
    """Every formula cell of the live sheets (those in `only`, if given) against the
    exporter's values twin (layercalc's numbers), of the same workbook or of `want_path`.
    Returns (cells compared, worst relative difference, failures)."""
    live = load_workbook(live_path)
    calc = load_workbook(calc_path, data_only=True)
    wanted = load_workbook(want_path) if want_path is not None else live
    twin_of = {}
    for name in [n for n in live.sheetnames if not only or n in only]:
        if name == "results":
            twin_of[name] = "values"
        elif name.startswith("results_"):
            twin_of[name] = "values_" + name[len("results_"):]
        elif name == "compare":
            twin_of[name] = "values_compare"
    count, worst, failures = 0, 0.0, []
    for name, twin in twin_of.items():
        ws, want_ws, got_ws = live[name], wanted[twin], calc[name]
        layers = sum(1 for r in range(FIRST_ROW, ws.max_row + 1)
                     if str(ws.cell(r, 1).value or "").startswith("='layers'!")) \
            if name != "compare" else 0
        chart_columns = [c.column for row in ws.iter_rows(max_row=FIRST_ROW) for c in row
                         if c.value == "chart data (live)"]  # beside the helpers
        chart_start = chart_columns[0] if chart_columns else ws.max_column + 1
        scales: dict = {}
        cells = []
        for row in ws.iter_rows():
            for cell in row:
                if cell.data_type != "f":
                    continue
                want = want_ws[cell.coordinate].value
                got = got_ws[cell.coordinate].value
                if isinstance(want, str):  # "none" (no such level), "-" (no difference)
                    count += 1
                    if got != want:
                        failures.append((name, cell.coordinate, got, want))
                    continue
                if name == "compare":  # a difference on the scale of what it compares
                    group = ("row", cell.row)
                elif cell.column >= chart_start:
                    group = ("chart", cell.column)
                elif FIRST_ROW <= cell.row < FIRST_ROW + layers:
                    group = ("layers", cell.column)
                else:
                    group = ("cell", cell.coordinate)
                scales[group] = max(scales.get(group, 0.0), abs(want))
                cells.append((cell.coordinate, group, got, want))
        for coordinate, group, got, want in cells:
            count += 1
            if not isinstance(got, (int, float)) or isinstance(got, bool):
                failures.append((name, coordinate, got, want))
                continue
            scale = max(abs(want), scales[group]) if group[0] != "cell" else abs(want)
            difference = abs(got - want) / scale if scale else abs(got - want)
            worst = max(worst, difference)
            if difference >= TOLERANCE:
                failures.append((name, coordinate, got, want))
    return count, worst, failures


@pytest.mark.parametrize("name", ALL_CASES)
def test_libreoffice_recalculates_layercalcs_numbers(recalculated, name):
    exported, converted, *_ = recalculated
    sheet, path = exported[name]
    count, worst, failures = compare_sheets(path, converted[path])
    # source: layercalc's own evaluation of the same case (the values twin)
    assert not failures, failures[:5]
    formulas = sum(sheet.checked.layer_count if f.kind == "column" else 1
                   for f in sheet.checked.formulas)
    assert count >= formulas
    print(f"{name}: {count} formula cells, worst relative difference {worst:.2e}")


@pytest.mark.parametrize("name", ["every_function", "midlevel_warming"])
def test_recalculated_results_equal_the_api_results(recalculated, name):
    # The same check without the values twin in between: LibreOffice's numbers against
    # Result.layers and Result.cells of sheet.evaluate() (source: layercalc's evaluation).
    exported, converted, *_ = recalculated
    sheet, path = exported[name]
    live = load_workbook(path)["results"]
    calc = load_workbook(converted[path], data_only=True)["results"]
    result = sheet.evaluate()
    for formula, cells in derived_places(sheet, live):
        want = (result.layers[formula.name].to_numpy() if formula.kind == "column"
                else np.array([result.cells[formula.name]]))
        assert_recalculated(calc, cells, want, formula.name)


def relative_scale(want: np.ndarray) -> np.ndarray:
    """Each layer row measured against its column's largest value (LibreOffice rounds a
    nearly cancelling subtraction to exactly 0 where numpy keeps 1e-15)."""
    scale = np.maximum(np.abs(want), np.max(np.abs(want)))
    scale[scale == 0] = 1.0
    return scale


def assert_recalculated(calc, cells, want: np.ndarray, name: str) -> None:
    got = np.array([calc[c].value for c in cells], dtype=float)
    assert np.all(np.abs(got - want) / relative_scale(want) < TOLERANCE), (name, got, want)


def assert_results_moved(edited, result, before, live_ws, calc_ws) -> set:
    """Every derived column and cell of a results sheet as recalculated equals `result`
    (layercalc's evaluation of the edited file); returns the names that moved from
    `before` (the evaluation before the edit)."""
    moved = set()
    for formula, cells in derived_places(edited, live_ws):
        want = (result.layers[formula.name].to_numpy() if formula.kind == "column"
                else np.array([result.cells[formula.name]]))
        old = (before.layers[formula.name].to_numpy() if formula.kind == "column"
               else np.array([before.cells[formula.name]]))
        assert_recalculated(calc_ws, cells, want, formula.name)
        if np.any(np.abs(old - want) / relative_scale(want) > 1e-6):
            moved.add(formula.name)
    return moved


def check_follows_edit(calc_path: Path, original_path: Path) -> None:
    sheet = layercalc.loads(edited_text(), name="edited.layers")
    result = sheet.evaluate()
    live = load_workbook(original_path)["results"]
    calc = load_workbook(calc_path, data_only=True)["results"]
    before = case_sheet("every_function").evaluate()
    # source: layercalc's evaluation of the case with the same edit made in the text
    moved = assert_results_moved(sheet, result, before, live, calc)
    assert len(moved) >= 10  # the edit reaches thickness, heights, lapse rate, ...


def test_an_edit_in_layers_flows_through_the_formulas(recalculated):
    exported, converted, edited, *_ = recalculated
    check_follows_edit(converted[edited], exported["every_function"][1])


def summary_expected(summary: dict) -> dict:
    """label -> value in the sheet's units of layercalc's summary (levels of
    non-divergence in hPa, heights and thicknesses in m)."""
    levels = summary.get("level_of_nondivergence", [])
    out = {"levels_of_nondivergence": float(len(levels))}
    for i, level in enumerate(levels, start=1):
        out["level_of_nondivergence" + (f"_{i}" if len(levels) > 1 else "")] = level / 100.0
    out.update({f"height_{k}hPa": v for k, v in summary.get("standard_heights", {}).items()})
    out.update({f"thickness_{k.replace('-', '_')}hPa": v
                for k, v in summary.get("standard_thicknesses", {}).items()})
    return out


def summary_cells(ws) -> dict:
    """label -> row of the cells block of a results sheet (column A names, B values)."""
    return {ws.cell(r, 1).value: r for r in range(1, ws.max_row + 1)
            if isinstance(ws.cell(r, 1).value, str)}


def assert_summary(calc_ws, live_ws, summary: dict, minimum: int) -> int:
    rows = summary_cells(live_ws)
    checked = 0
    for label, want in summary_expected(summary).items():
        assert label in rows, label
        assert live_ws.cell(rows[label], 2).data_type == "f", label  # live, not a value
        got = calc_ws.cell(rows[label], 2).value
        # source: layercalc's own summary (numpy) of the same edited case
        assert abs(got - want) <= TOLERANCE * max(abs(want), 1.0), (label, got, want)
        checked += 1
    assert checked >= minimum
    return checked


def test_summary_cells_follow_an_edit_in_layers(recalculated):
    # levels of non-divergence, standard heights and thicknesses are live formulas
    exported, converted, edited, *_ = recalculated
    sheet = layercalc.loads(edited_text(), name="edited.layers")
    live = load_workbook(exported["every_function"][1])["results"]
    calc = load_workbook(converted[edited], data_only=True)["results"]
    before = case_sheet("every_function").evaluate().summary
    after = sheet.evaluate().summary
    assert before["standard_heights"]["300"] != after["standard_heights"]["300"]
    assert_summary(calc, live, after, minimum=8)


def test_libreoffice_recalculates_rather_than_reading_saved_values(recalculated):
    # The stale workbook still carries the old results as cached values; only a real
    # recalculation gives the edited case's numbers.
    exported, converted, _, stale, _ = recalculated
    check_follows_edit(converted[stale], exported["every_function"][1])


def test_text_that_looks_like_a_formula_stays_text_in_libreoffice(recalculated):
    exported, converted, *_ = recalculated
    calc = load_workbook(converted[exported["every_function"][1]])
    for sheet, coordinate in (("results", "A1"), ("settings", "B2"), ("notes", "A1")):
        cell = calc[sheet][coordinate]
        assert cell.data_type == "s" and cell.value.startswith("=SUM(A1) is a title")


def test_a_what_if_parameter_edited_in_settings_flows_into_the_scenarios(recalculated):
    exported, converted, _, _, what_if = recalculated
    path = layercalc.cli.common.worked_cases_folder() / "midlevel_warming.layers"
    text = path.read_text()
    assert "cell warming = 3 K" in text
    sheet = layercalc.loads(text.replace("cell warming = 3 K", f"cell warming = "
                                         f"{EDITED_WARMING} K"), name="what_if.layers")
    live = load_workbook(exported["midlevel_warming"][1])
    calc = load_workbook(converted[what_if], data_only=True)
    for scenario in ("warmed", "warmed_divergent"):
        result = sheet.evaluate(scenario)
        name = f"results_{scenario}"
        for formula, cells in derived_places(result.sheet, live[name]):
            want = (result.layers[formula.name].to_numpy() if formula.kind == "column"
                    else np.array([result.cells[formula.name]]))
            got = np.array([calc[name][c].value for c in cells], dtype=float)
            scale = np.maximum(np.abs(want), np.max(np.abs(want)))
            scale[scale == 0] = 1.0
            # source: layercalc's evaluation of the case with warming = 5 K in the text
            assert np.all(np.abs(got - want) / scale < TOLERANCE), (scenario, formula.name)
        assert_summary(calc[name], live[name], result.summary, minimum=15)
    # compare: live references and differences (the 300 hPa height rises by about 75 m
    # with 5 K instead of 45 m with 3 K)
    rows = summary_cells(live["compare"])
    base = sheet.evaluate().summary["standard_heights"]["300"]
    warmed = sheet.evaluate("warmed").summary["standard_heights"]["300"]
    compare = calc["compare"]
    row = rows["height_300hPa"]
    # source: layercalc's own summary of the case with warming = 5 K
    assert abs(compare.cell(row, 3).value - base) < TOLERANCE * base
    assert abs(compare.cell(row, 4).value - warmed) < TOLERANCE * warmed
    assert abs(compare.cell(row, 5).value - (warmed - base)) < 1e-6
    assert 70.0 < compare.cell(row, 5).value < 80.0


def test_a_row_added_in_the_workbook_turns_the_check_cells(tmp_path):
    # The results sheets' formulas cover the exported rows; after a 13th layer is typed in
    # `layers`, LibreOffice shows the check cells as CHECK (the red format's condition
    # holds), instead of quietly leaving the layer out.
    from tests.formats.test_xlsx_import import with_a_layer_added

    path = tmp_path / "book.xlsx"
    write_workbook(case_sheet("midlevel_warming"), path)
    added = tmp_path / "added.xlsx"
    with_a_layer_added(path, added)
    converted = convert([path, added], tmp_path / "out", tmp_path / "profile")
    before = load_workbook(converted[path], data_only=True)
    after = load_workbook(converted[added], data_only=True)
    check_column = [c.column for c in load_workbook(path)["layers"][2]
                    if isinstance(c.value, str) and "COUNT(" in c.value][0]
    assert before["layers"].cell(2, check_column).value.startswith("OK: ")
    assert before["results"]["B4"].value.startswith("OK: ")
    for ws, cell in ((after["layers"], after["layers"].cell(2, check_column)),
                     (after["results"], after["results"]["B4"]),
                     (after["results_warmed"], after["results_warmed"]["B4"])):
        assert cell.value.startswith("CHECK: the table has 13 layers"), (ws.title, cell.value)


PDFTOTEXT = shutil.which("pdftotext")
# pages of each worked case as printed by LibreOffice: the targets for
# midlevel_warming (12) and the station case (15); the others as measured when every
# sheet printed readably (common practice, no source: each sheet one page, notes two, a
# results sheet its table and its charts)
PAGE_LIMITS = {"midlevel_warming": 12, "three_stations": 15, "three_stations_uncertainty": 15,
               "dines_compensation": 7, "moist_summer": 7, "standard_atmosphere": 6,
               "trainer_exercise": 7, "unbalanced_divergence": 12}
SHEET_PAGES = {"results": 2, "notes": 2}  # pages a sheet may take; every other sheet one
# the smallest median height of a word's box (points) on a page: 12.4 at full size for
# the default 11 pt font; the stations sheet printed at 4.7 and the uncertainty sheet at
# 3.4 before their layouts were narrowed (from memory and judgement: below about 4 pt of
# type a printed page is not read). The wide results tables print smallest: 5.3 pt (4.3 for
# trainer_exercise) before their headers wrapped and the chart data left the print area,
# 6.9-11 pt after (measured).
SMALLEST_TEXT = {"results": 6.5}
SMALLEST_TEXT_OTHERS = 6.5


def to_pdf(files: list[Path], out: Path, profile: Path) -> dict[Path, Path]:
    (profile / "user").mkdir(parents=True, exist_ok=True)
    out.mkdir(parents=True, exist_ok=True)
    command = [SOFFICE, f"-env:UserInstallation={profile.as_uri()}", "--headless",
               "--norestore", "--convert-to", "pdf", "--outdir", str(out), *map(str, files)]
    done = subprocess.run(command, capture_output=True, text=True, timeout=TIMEOUT_SECONDS)
    converted = {f: out / (f.stem + ".pdf") for f in files}
    assert done.returncode == 0 and all(p.exists() for p in converted.values()), done.stderr
    return converted


def pdf_pages(path: Path) -> int:
    """Page objects of a PDF (/Type /Page, not /Pages): LibreOffice writes them plainly."""
    return len(re.findall(rb"/Type\s*/Page(?![s\w])", path.read_bytes()))


def test_the_workbooks_print_on_few_readable_pages(tmp_path):
    from layercalc.caution import CAUTION

    files = []
    for name in PAGE_LIMITS:
        path = tmp_path / f"{name}.xlsx"
        write_workbook(case_sheet(name), path)
        files.append(path)
    pdfs = to_pdf(files, tmp_path / "pdf", tmp_path / "profile")
    for path, pdf in pdfs.items():
        pages = pdf_pages(pdf)
        print(f"{path.stem}: {pages} pages")
        # the target of the issue (landscape, fitted to the width, charts on their own page)
        assert 6 <= pages <= PAGE_LIMITS[path.stem], (path.stem, pages)
        if PDFTOTEXT is None:
            continue
        text = subprocess.run([PDFTOTEXT, "-layout", str(pdf), "-"], capture_output=True,
                              text=True, check=True).stdout
        printed = text.split("\f")[:pages]
        words = " ".join(CAUTION.split()[:6])
        assert all(words in " ".join(page.split()) for page in printed)  # every footer
        if load_workbook(path)["results"]._charts:  # a case without omega has no chart
            assert any("omega against pressure" in page for page in printed)
        assert not any(page.strip().startswith("values") for page in printed)
        assert "###" not in text  # every number fits its column (narrow columns)
        sheets = [page.split()[0] for page in printed]  # the header: sheet name, page
        for name in set(sheets):
            kind = "results" if name.startswith("results") else name
            assert sheets.count(name) <= SHEET_PAGES.get(kind, 1), (path.stem, name, sheets)
        for number, (name, height) in enumerate(text_heights(pdf), start=1):
            kind = "results" if name.startswith("results") else name
            assert height >= SMALLEST_TEXT.get(kind, SMALLEST_TEXT_OTHERS), \
                (path.stem, number, name, height)


def text_heights(pdf: Path) -> list[tuple[str, float]]:
    """Per page: its first word (the sheet name in the header) and the median height of
    its words' boxes in points (pdftotext -bbox)."""
    import statistics

    boxes = subprocess.run([PDFTOTEXT, "-bbox", str(pdf), "-"], capture_output=True,
                           text=True, check=True).stdout
    out = []
    for page in boxes.split("<page ")[1:]:
        found = re.findall(r'yMin="([\d.]+)" xMax="[\d.]+" yMax="([\d.]+)">([^<]*)<', page)
        out.append((found[0][2], statistics.median(float(b) - float(a) for a, b, _ in found)))
    return out


def test_an_edit_in_settings_moves_every_height(tmp_path):
    # surface_height 40 m -> 140 m on the settings sheet: every height, the standard
    # heights included, follows; thicknesses do not change.
    sheet = case_sheet("midlevel_warming")
    path = tmp_path / "book.xlsx"
    write_workbook(sheet, path)
    workbook = load_workbook(path)
    settings = workbook["settings"]
    row = [c.row for c in settings["A"] if c.value == "surface_height"][0]
    assert settings.cell(row, 2).value == 40
    settings.cell(row, 2).value = 140
    edited = tmp_path / "edited.xlsx"
    workbook.save(edited)
    converted = convert([edited], tmp_path / "out", tmp_path / "profile")
    text = (layercalc.cli.common.worked_cases_folder() / "midlevel_warming.layers").read_text()
    assert "cell surface_height = 40 m" in text
    again = layercalc.loads(text.replace("cell surface_height = 40 m",
                                         "cell surface_height = 140 m"), name="e.layers")
    live = load_workbook(path)
    calc = load_workbook(converted[edited], data_only=True)
    for scenario in (None, "warmed"):
        result = again.evaluate(scenario)
        name = "results" if scenario is None else f"results_{scenario}"
        for formula, cells in derived_places(result.sheet, live[name]):
            want = (result.layers[formula.name].to_numpy() if formula.kind == "column"
                    else np.array([result.cells[formula.name]]))
            # source: layercalc's evaluation of the case with surface_height = 140 m
            assert_recalculated(calc[name], cells, want, formula.name)
        assert_summary(calc[name], live[name], result.summary, minimum=15)
    rows = summary_cells(live["results"])
    assert abs(calc["results"].cell(rows["height_500hPa"], 2).value
               - sheet.evaluate().summary["standard_heights"]["500"] - 100.0) < 1e-6


EASTMOOR_300 = "       300    -43.0     -51.5    9237    243     83"
TURNED_DIRECTION = 248.0  # the case's comment: Eastmoor's 300 hPa wind turned 243 -> 248 deg


def station_wind_cell(ws, station: str, pressure: float, column: str) -> str:
    """The coordinate of a station's typed value on the stations sheet."""
    from layercalc.formats.xlsx.stations import STATION_MARK

    mark = [c.row for c in ws["A"] if c.value == STATION_MARK and ws.cell(c.row, 2).value == station]
    assert len(mark) == 1
    header, j = {}, 1
    while ws.cell(mark[0] + 1, j).value:  # the table's header, up to its first blank cell
        header[ws.cell(mark[0] + 1, j).value.split(" [")[0]] = j
        j += 1
    row = mark[0] + 2
    while ws.cell(row, header["p"]).value != pressure:
        row += 1
    return ws.cell(row, header[column]).coordinate


def fit_column(ws, title: str) -> list[str]:
    from layercalc.formats.xlsx.stations import FIT_MARK

    mark = [c.column for row in ws.iter_rows() for c in row if c.value == FIT_MARK][0]
    header, column = [(r, j) for r in range(1, ws.max_row + 1)
                      for j in range(mark, ws.max_column + 1) if ws.cell(r, j).value == title][0]
    cells, row = [], header + 1
    while ws.cell(row, mark).value is not None:  # the block's levels, down to its end
        cells.append(ws.cell(row, column).coordinate)
        row += 1
    return cells


def test_a_station_wind_turned_in_the_workbook_moves_divergence_omega_and_the_tendency(tmp_path):
    # Eastmoor's 300 hPa wind turned by 5 degrees on the stations sheet; LibreOffice
    # recalculates the fit, the layers' div and every result.
    sheet = case_sheet("three_stations")
    path = tmp_path / "stations.xlsx"
    write_workbook(sheet, path)
    workbook = load_workbook(path)
    cell = station_wind_cell(workbook["stations"], "Eastmoor", 300, "dir")
    assert workbook["stations"][cell].value == 243
    workbook["stations"][cell].value = TURNED_DIRECTION
    workbook.save(path)
    calc_path = convert([path], tmp_path / "out", tmp_path / "profile")[path]
    from tests.formats.test_xlsx_export import worked_cases_folder

    text = (worked_cases_folder() / "three_stations.layers").read_text()
    assert text.count(EASTMOOR_300) == 1
    edited = layercalc.loads(text.replace(EASTMOOR_300, EASTMOOR_300.replace("243", "248")),
                             name="edited.layers")
    result, before = edited.evaluate(), sheet.evaluate()
    calc = load_workbook(calc_path, data_only=True)
    live = load_workbook(path)
    # source for every expectation below: layercalc's evaluation of the .layers file with
    # the same wind turned in its station block
    levels = edited.checked.soundings.network.levels
    stations_cells = fit_column(live["stations"], "divergence [s^-1]")
    assert len(stations_cells) == levels.pressure.size
    assert_recalculated(calc["stations"], stations_cells, levels.divergence, "level divergence")
    vorticity_cells = fit_column(live["stations"], "vorticity [s^-1]")
    assert_recalculated(calc["stations"], vorticity_cells, levels.vorticity, "level vorticity")
    layers = calc["layers"]
    div_column = [c.column for c in layers[1] if c.value == "div [1e-5 s^-1]"][0]
    div_cells = [layers.cell(2 + k, div_column).coordinate for k in range(sheet.checked.layer_count)]
    assert_recalculated(layers, div_cells, result.layers["div"].to_numpy(), "layer div")
    moved = assert_results_moved(edited, result, before, live["results"], calc["results"])
    # the turn reaches omega and the tendency (about 7 hPa/3h, the case's comment)
    assert {"omega_bottom", "omega_top", "surface_pressure_tendency"} <= moved, moved
    assert_summary(calc["results"], live["results"], result.summary, 1)


def test_a_level_edited_in_the_workbook_moves_its_two_layers_and_the_results(tmp_path):
    # the 700 hPa temperature -4 -> 1 degC on the levels sheet: the two layers that share
    # the level, their thickness, every height above and the summary follow.
    from tests.formats.test_xlsx_levels import LEVELS

    old_row, new_row = "  700    -4.0  -12.0", "  700     1.0  -12.0"
    assert LEVELS.count(old_row) == 1
    sheet = layercalc.loads(LEVELS, name="levels.layers")
    path = tmp_path / "levels.xlsx"
    write_workbook(sheet, path)
    workbook = load_workbook(path)
    levels = workbook["levels"]
    row = [c.row for c in levels["A"] if c.value == 700][0]
    assert levels.cell(row, 2).value == -4
    levels.cell(row, 2).value = 1.0
    workbook.save(path)
    calc_path = convert([path], tmp_path / "out", tmp_path / "profile")[path]
    edited = layercalc.loads(LEVELS.replace(old_row, new_row), name="edited.layers")
    result, before = edited.evaluate(), sheet.evaluate()
    calc = load_workbook(calc_path, data_only=True)
    live = load_workbook(path)
    # source for every expectation below: layercalc's evaluation of the .layers file with
    # the same value edited in its levels table
    layers = calc["layers"]
    for j, name in enumerate(sheet.checked.input_columns, start=1):
        cells = [layers.cell(2 + k, j).coordinate for k in range(sheet.checked.layer_count)]
        assert_recalculated(layers, cells, result.layers[name].to_numpy(), name)
    moved = assert_results_moved(edited, result, before, live["results"], calc["results"])
    assert {"thickness", "z_top", "Tv"} <= moved, moved
    assert_summary(calc["results"], live["results"], result.summary, 1)


def test_a_scenario_that_changes_station_winds_follows_a_wind_and_a_what_if_cell(tmp_path):
    # The case's scenario eastmoor_turned turns Eastmoor's 300 hPa wind by the what-if
    # cell `turn` (5 deg), on its own sheet stations_eastmoor_turned with its own fit.
    # Edited in the workbook: Eastmoor's 500 hPa speed on `stations` (53 -> 58 kt) and
    # `turn` in `settings` (5 -> 8 deg). LibreOffice recalculates.
    sheet = case_sheet("three_stations")
    path = tmp_path / "scenario_winds.xlsx"
    write_workbook(sheet, path)
    workbook = load_workbook(path)
    assert "stations_eastmoor_turned" in workbook.sheetnames
    cell = station_wind_cell(workbook["stations"], "Eastmoor", 500, "speed")
    assert workbook["stations"][cell].value == 53
    workbook["stations"][cell].value = 58.0
    rows = [c.row for c in workbook["settings"]["A"] if c.value == "turn"]
    assert len(rows) == 1 and workbook["settings"].cell(rows[0], 2).value == 5
    workbook["settings"].cell(rows[0], 2).value = 8.0
    workbook.save(path)
    calc_path = convert([path], tmp_path / "out", tmp_path / "profile")[path]
    from tests.formats.test_xlsx_export import worked_cases_folder

    text = (worked_cases_folder() / "three_stations.layers").read_text()
    old_500 = "       500    -18.4     -24.5    5609    232     53"
    assert text.count(old_500) == 1 and text.count("cell turn = 5 deg") == 1
    edited_text = text.replace(old_500, old_500[:-2] + "58").replace(
        "cell turn = 5 deg", "cell turn = 8 deg")
    edited = layercalc.loads(edited_text, name="edited.layers")
    # source for every expectation below: layercalc's evaluation of the .layers file with
    # the same two edits typed in (its workbook's values twins hold that evaluation)
    want_path = tmp_path / "edited.xlsx"
    write_workbook(edited, want_path)
    count, worst, failures = compare_sheets(
        path, calc_path, want_path,
        only=("results_eastmoor_turned", "results_eastmoor_faster", "compare"))
    assert not failures, failures[:5]
    assert count > 200
    print(f"scenario sheets and compare: {count} cells, worst relative difference {worst:.2e}")
    live = load_workbook(path)
    calc = load_workbook(calc_path, data_only=True)
    before = sheet.evaluate("eastmoor_turned")
    result = edited.evaluate("eastmoor_turned")
    moved = assert_results_moved(edited, result, before, live["results_eastmoor_turned"], calc["results_eastmoor_turned"])
    assert {"omega_bottom", "surface_pressure_tendency"} <= moved, moved
    assert_summary(calc["results_eastmoor_turned"], live["results_eastmoor_turned"],
                   result.summary, 1)
    # the scenario's own fit: the level divergences of the file with the scenario's turn
    # typed in too (Eastmoor's 300 hPa wind 243 + 8 = 251 deg; same file with the change
    # typed in, common practice)
    eastmoor_300 = "       300    -43.0     -51.5    9237    243     83"
    typed = layercalc.loads(edited_text.replace(eastmoor_300,
                                                eastmoor_300.replace("243", "251")),
                            name="typed.layers")
    levels = typed.checked.soundings.network.levels
    cells = fit_column(live["stations_eastmoor_turned"], "divergence [s^-1]")
    assert_recalculated(calc["stations_eastmoor_turned"], cells, levels.divergence,
                        "scenario level divergence")
    assert_allclose(result.si_columns["div"], typed.evaluate().si_columns["div"], rtol=1e-12)


LEVELS_SCENARIO = """cell warming = 2 K
scenario warm_aloft
  add warming to T at levels above 700 hPa
  scale div by 2 at levels below 850 hPa
  add 0.1 [1e-5 s^-1] to div above 500 hPa
end
"""


def test_a_scenario_that_changes_level_values_follows_a_level_and_a_what_if_cell(tmp_path):
    # A levels table with a scenario on its levels (and a change to a layer column on
    # top): the scenario's sheet levels_warm_aloft replays the changes on the levels;
    # edited in the workbook: the 700 hPa T on `levels` (-4 -> 1 degC) and `warming` in
    # `settings` (2 -> 4 K). LibreOffice recalculates.
    from tests.formats.test_xlsx_levels import LEVELS

    sheet = layercalc.loads(LEVELS + LEVELS_SCENARIO, name="levels.layers")
    path = tmp_path / "levels_scenario.xlsx"
    write_workbook(sheet, path)
    workbook = load_workbook(path)
    assert "levels_warm_aloft" in workbook.sheetnames
    levels = workbook["levels"]
    row = [c.row for c in levels["A"] if c.value == 700][0]
    assert levels.cell(row, 2).value == -4
    levels.cell(row, 2).value = 1.0
    rows = [c.row for c in workbook["settings"]["A"] if c.value == "warming"]
    assert len(rows) == 1 and workbook["settings"].cell(rows[0], 2).value == 2
    workbook["settings"].cell(rows[0], 2).value = 4.0
    workbook.save(path)
    calc_path = convert([path], tmp_path / "out", tmp_path / "profile")[path]
    old_row, new_row = "  700    -4.0  -12.0", "  700     1.0  -12.0"
    assert LEVELS.count(old_row) == 1
    edited = layercalc.loads((LEVELS + LEVELS_SCENARIO).replace(old_row, new_row).replace(
        "cell warming = 2 K", "cell warming = 4 K"), name="edited.layers")
    # source: layercalc's evaluation of the .layers file with the same two edits typed in
    want_path = tmp_path / "edited.xlsx"
    write_workbook(edited, want_path)
    count, worst, failures = compare_sheets(path, calc_path, want_path,
                                            only=("results_warm_aloft", "compare"))
    assert not failures, failures[:5]
    assert count > 100
    print(f"levels scenario and compare: {count} cells, worst relative difference {worst:.2e}")
    live = load_workbook(path)["results_warm_aloft"]
    calc = load_workbook(calc_path, data_only=True)["results_warm_aloft"]
    result = edited.evaluate("warm_aloft")
    for j, name in enumerate(sheet.checked.input_columns, start=1):
        cells = [live.cell(FIRST_ROW + k, j).coordinate for k in range(sheet.checked.layer_count)]
        assert all(live[c].data_type == "f" for c in cells), name  # live, not values
        assert_recalculated(calc, cells, result.layers[name].to_numpy(), name)


def settings_edited_and_compared(tmp_path, text: str, edits: list, sheets: tuple):
    """Export `text`, edit what-if cells in `settings` ((name, old, new, unit) each: the
    file's `cell name = old unit` becomes new), let LibreOffice recalculate, and compare
    every formula cell of `sheets` with layercalc's evaluation of the file with the same
    edits typed in (its workbook's values twins). Returns (sheet, path, count, worst)."""
    sheet = layercalc.loads(text, name="case.layers")
    path = tmp_path / "case.xlsx"
    write_workbook(sheet, path)
    workbook = load_workbook(path)
    settings = workbook["settings"]
    typed = text
    for name, old, new, unit in edits:
        rows = [c.row for c in settings["A"] if c.value == name]
        assert len(rows) == 1 and settings.cell(rows[0], 2).value == old
        settings.cell(rows[0], 2).value = new
        written = f"cell {name} = {old} {unit}".rstrip()
        assert typed.count(written) == 1, written
        typed = typed.replace(written, f"cell {name} = {new} {unit}".rstrip())
    workbook.save(path)
    calc_path = convert([path], tmp_path / "out", tmp_path / "profile")[path]
    # source: layercalc's evaluation of the .layers file with the same edits typed in
    want_path = tmp_path / "edited.xlsx"
    write_workbook(layercalc.loads(typed, name="edited.layers"), want_path)
    count, worst, failures = compare_sheets(path, calc_path, want_path, only=sheets)
    assert not failures, failures[:5]
    assert count > 200
    return sheet, path, count, worst


def test_a_scenario_on_every_station_and_a_station_temperature_is_live(tmp_path):
    # every station's upper winds scaled by a what-if cell, and one station's low-level T
    # warmed (the column's T is the stations' mean): both live on the scenario's copy of
    # the stations sheet. Edited: `gust` in settings (1.2 -> 1.1) and `warming` (2 -> 3 K).
    from tests.formats.test_xlsx_export import worked_cases_folder

    extra = """
cell gust = 1.2
cell warming = 2 K
scenario gusty_warm
  scale speed by gust at every station above 500 hPa
  add warming to T at "Southvale" below 850 hPa
end
"""
    text = (worked_cases_folder() / "three_stations.layers").read_text() + extra
    sheet, path, count, worst = settings_edited_and_compared(
        tmp_path, text, [("gust", 1.2, 1.1, ""), ("warming", 2, 3.0, "K")],
        ("results_gusty_warm", "compare"))
    print(f"every station and T: {count} cells, worst relative difference {worst:.2e}")
    workbook = load_workbook(path)
    assert workbook["stations_gusty_warm"].sheet_state == "hidden"
    live = workbook["results_gusty_warm"]
    for j, name in enumerate(sheet.checked.input_columns, start=1):
        if name in ("T", "div"):  # rebuilt from the scenario's stations copy: formulas
            assert "'stations_gusty_warm'!" in live.cell(FIRST_ROW, j).value, name


COMBINED_LEVELS = """
levels
  p [hPa]  T [degC]  Td [degC]  z [m]
  1000   13.6   11.0    104
   925    8.9    7.5    756
   850    5.8    3.4   1453
   700   -2.6   -6.0   3019
   500  -18.4  -24.5   5609
   400  -29.0  -37.0   7239
   300  -43.0  -51.5   9237
   250  -50.6  -59.5  10445
   200  -55.8  -66.5  11881
end
cell turn = 5 deg
cell warming = 1 K
scenario both
  add turn to dir at every station above 700 hPa
  add warming to T at levels between 850 hPa and 500 hPa
end
"""


def test_a_scenario_on_stations_and_on_a_levels_table_together_is_live(tmp_path):
    # stations (div) with a top-level levels table (T, Td; made-up values): the scenario
    # turns every station's upper winds and warms mid levels of the table, each on its
    # hidden copy. Edited: `turn` (5 -> 8 deg) and `warming` (1 -> 2 K) in settings.
    from tests.formats.test_xlsx_export import worked_cases_folder

    stations = (worked_cases_folder() / "three_stations.layers").read_text()
    text = stations.split("\n# What-if")[0] + COMBINED_LEVELS
    sheet, path, count, worst = settings_edited_and_compared(
        tmp_path, text, [("turn", 5, 8.0, "deg"), ("warming", 1, 2.0, "K")],
        ("results_both", "compare"))
    print(f"stations and levels together: {count} cells, worst relative difference "
          f"{worst:.2e}")
    live = load_workbook(path)["results_both"]
    formulas = {name: live.cell(FIRST_ROW, j).value
                for j, name in enumerate(sheet.checked.input_columns, start=1)}
    assert "'stations_both'!" in formulas["div"] and "'levels_both'!" in formulas["T"]
