"""Issue 12, third round of hardening: workbooks that cannot be read, that declare far-away
rows or huge texts, input cells holding formulas, what `import` writes, sweeps, options
that were silently ignored, and leftovers of interrupted writes.

Every reproducer is refused as our error: exit status 1 (2 for usage errors), a message with
its position, no traceback, nothing written and the input unchanged.
"""

from __future__ import annotations

import builtins
import re
import zipfile
from pathlib import Path

import pytest

from layercalc.cli.main import main
from tests.cli.test_cli_hardening import SMALL_TABLE, assert_our_error, cli, snapshot


@pytest.fixture
def book(tmp_path) -> Path:
    """A workbook exported from the small table (sheet1 is `layers`, sheet2 `settings`)."""
    source = tmp_path / "base.layers"
    source.write_text('title "Northfield"\n' + SMALL_TABLE, encoding="utf-8")
    path = tmp_path / "book.xlsx"
    assert main(["export", str(source), "-o", str(path)]) == 0
    source.unlink()
    return path


def patch_part(path: Path, part: str, change) -> None:
    """Rewrite one XML part of a workbook with `change(bytes) -> bytes`."""
    with zipfile.ZipFile(path) as archive:
        entries = [(info, archive.read(info)) for info in archive.infolist()]
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as archive:
        for info, data in entries:
            archive.writestr(info, change(data) if info.filename == part else data)


def refused(capsys, tmp_path, book, *needles) -> None:
    held = snapshot(tmp_path)
    for args in (["check", book], ["run", book], ["run", book, "--json"],
                 ["import", book, "-o", tmp_path / "n.layers"]):
        code, out, err = cli(capsys, *args)
        assert_our_error(code, out, err, *needles)
    assert snapshot(tmp_path) == held  # nothing written, the workbook unchanged


# ---------------------------------------------------------------- 1. workbooks
def test_an_unreadable_workbook_is_refused(capsys, tmp_path, book, monkeypatch):
    book.chmod(0o000)
    try:
        try:
            book.read_bytes()
        except PermissionError:
            pass
        else:  # root reads any file: the open fails as it would for another user
            real_open = builtins.open

            def refusing_open(file, *args, **kwargs):
                if str(file) == str(book):
                    raise PermissionError(13, "Permission denied", str(file))
                return real_open(file, *args, **kwargs)

            monkeypatch.setattr(builtins, "open", refusing_open)
        refused(capsys, tmp_path, book, f"{book}: spreadsheet error: cannot read the "
                "workbook: Permission denied")
    finally:
        book.chmod(0o644)


FAR = b'<row r="{r}"><c r="A{r}"><v>1</v></c></row></sheetData>'


@pytest.mark.parametrize("part, sheet", [("xl/worksheets/sheet1.xml", "layers"),
                                         ("xl/worksheets/sheet2.xml", "settings")])
@pytest.mark.parametrize("row, words", [
    (200_000_000, "row number '200000000' is outside a worksheet (1 to 1,048,576)"),
    (600_000, "the sheet reaches A600000: the blank rows up to there count as cells, "
              "more than the 500,000 layercalc reads")])
def test_a_far_away_row_is_refused_before_reading(capsys, tmp_path, book, part, sheet, row,
                                                  words):
    # used to run for minutes and end in MemoryError: blank rows were not counted
    patch_part(book, part, lambda data: data.replace(b"</sheetData>",
                                                     FAR.replace(b"{r}", str(row).encode())))
    refused(capsys, tmp_path, book, f"{book}:{sheet}!A{row}: spreadsheet error: ", words)


def test_a_cell_beyond_the_last_column_is_refused(capsys, tmp_path, book):
    patch_part(book, "xl/worksheets/sheet1.xml", lambda data: data.replace(
        b"</sheetData>", b'<row r="40"><c r="XFE40"><v>1</v></c></row></sheetData>'))
    refused(capsys, tmp_path, book, f"{book}:layers!XFE40: spreadsheet error: cell XFE40 "
            "is outside a worksheet")


def _book_with_title(tmp_path, title: str) -> Path:
    from openpyxl import Workbook

    workbook = Workbook()  # openpyxl writes text as shared strings
    layers = workbook.active
    layers.title = "layers"
    for row in ([("p_bottom [hPa]"), "p_top [hPa]", "T [degC]", "div [1e-5 s^-1]"],
                [1000, 850, 14.0, -1.0], [850, 700, 5.0, 0.5]):
        layers.append(row)
    settings = workbook.create_sheet("settings")
    settings.append(["title", title])
    path = tmp_path / "titled.xlsx"
    workbook.save(path)
    return path


def test_a_huge_shared_string_is_refused_before_openpyxl_reads_it(capsys, tmp_path):
    # a 35 KB workbook with a 30 MB title took 297 s and 5.6 GB; 300,000 characters here
    path = _book_with_title(tmp_path, "short title")
    # openpyxl writes inline strings (and cuts them at 32,767 characters); a spreadsheet
    # program writes a shared strings part, added here by hand (ECMA-376, 18.4.9)
    shared = (b'<sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" '
              b'count="1" uniqueCount="1"><si><t>' + b"x" * 300_000 + b"</t></si></sst>")
    kind = b"http://schemas.openxmlformats.org/officeDocument/2006/relationships/sharedStrings"
    patch_part(path, "xl/worksheets/sheet2.xml", lambda data: data.replace(
        b'<c r="B1" t="inlineStr"><is><t>short title</t></is></c>',
        b'<c r="B1" t="s"><v>0</v></c>'))
    patch_part(path, "xl/_rels/workbook.xml.rels", lambda data: data.replace(
        b"</Relationships>", b'<Relationship Type="' + kind + b'" Target="sharedStrings.xml" '
        b'Id="rId99" /></Relationships>'))
    patch_part(path, "[Content_Types].xml", lambda data: data.replace(
        b"</Types>", b'<Override PartName="/xl/sharedStrings.xml" ContentType="application/'
        b'vnd.openxmlformats-officedocument.spreadsheetml.sharedStrings+xml" /></Types>'))
    with zipfile.ZipFile(path, "a", zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("xl/sharedStrings.xml", shared)
    refused(capsys, tmp_path, path, f"{path}: spreadsheet error: text cell number 1 ",
            "holds 300,000 characters, more than the 200,000 layercalc reads in one cell")


def test_a_huge_inline_string_is_refused_with_its_cell(capsys, tmp_path):
    path = _book_with_title(tmp_path, "short title")
    patch_part(path, "xl/worksheets/sheet2.xml",
               lambda data: data.replace(b"short title", b"x" * 300_000))
    refused(capsys, tmp_path, path, f"{path}:settings!B1: spreadsheet error: the cell holds "
            "300,000 characters, more than the 200,000 layercalc reads in one cell")


# ---------------------------------------------------------------- 2. formulas in input cells
@pytest.mark.parametrize("formula", ['WEBSERVICE("http://example.invalid/t")',
                                     "[1]Sheet1!A1", 'HYPERLINK("http://example.invalid",5.5)'])
def test_an_input_cell_holding_a_formula_is_named_in_a_warning(capsys, tmp_path, book,
                                                               formula):
    from xml.sax.saxutils import escape

    def put_formula(data: bytes) -> bytes:
        found = re.search(rb'<c r="C2"[^>]*>', data)
        assert found, "the exported layers sheet has its T value in C2"
        return (data[:found.end()] + b"<f>" + escape(formula).encode() + b"</f>"
                + data[found.end():])

    patch_part(book, "xl/worksheets/sheet1.xml", put_formula)
    for args in (["check", book], ["run", book]):
        code, out, err = cli(capsys, *args)
        assert code == 0, out + err
        text = "".join((out + err).split())  # the report wraps its warnings, even the path
        want = f"{book}:layers!C2: warning: the input cell holds the formula ={formula}"
        assert "".join(want.split()) in text
        assert "neverevaluatestheformula" in text


# ---------------------------------------------------------------- 3. what import writes loads
def _title_with(book: Path, xml_text: bytes) -> None:
    """Put `xml_text` (XML, so &#13; is a carriage return that survives parsing) at the
    start of the exported settings sheet's title, B2."""
    def change(data: bytes) -> bytes:
        found = re.search(rb'<c r="B2"[^>]*><is><t>', data)
        assert found, "the exported settings sheet has its title in B2"
        return data[:found.end()] + xml_text + data[found.end():]

    patch_part(book, "xl/worksheets/sheet2.xml", change)


@pytest.mark.parametrize("xml_text, title", [(b"one&#13;two ", "one\ntwo Northfield"),
                                             (b"one&#13;&#10;two ", "one\ntwo Northfield"),
                                             (b"one&#9;two ", "one\ttwo Northfield")])
def test_import_of_a_title_with_a_line_break_writes_a_sheet_that_loads(capsys, tmp_path, book,
                                                                       xml_text, title):
    import layercalc

    _title_with(book, xml_text)
    out_path = tmp_path / "n.layers"
    code, out, err = cli(capsys, "import", book, "-o", out_path)
    assert code == 0, out + err
    assert b"\r" not in out_path.read_bytes()
    assert layercalc.load(out_path).checked.title == title
    code, out, err = cli(capsys, "check", out_path)
    assert code == 0, out + err


def test_import_refuses_to_write_a_sheet_that_does_not_load_from_disk(capsys, tmp_path, book,
                                                                      monkeypatch):
    from layercalc.formats.xlsx import reader

    # the quoting as it was: a lone carriage return stayed raw, which compiled in memory but
    # ended the line when the file was read back
    def old_quote(text: str) -> str:
        escaped = text.replace("\\", "\\\\").replace('"', '\\"')
        return '"' + escaped.replace("\r\n", "\\n").replace("\n", "\\n") + '"'

    monkeypatch.setattr(reader, "_quote", old_quote)
    _title_with(book, b"one&#13;two ")
    held = snapshot(tmp_path)
    code, out, err = cli(capsys, "import", book, "-o", tmp_path / "n.layers")
    assert_our_error(code, out, err, f"output error: cannot write {tmp_path / 'n.layers'}: the "
                     "sheet made from the input does not load again (syntax error", "nothing "
                     "was written")
    assert snapshot(tmp_path) == held


# ---------------------------------------------------------------- 4. sweeps
def _case_titled(tmp_path, title: str) -> Path:
    path = tmp_path / "case.layers"
    path.write_text(f'title "{title}"\n' + SMALL_TABLE + "cell omega_top = 0 [hPa/h]\n",
                    encoding="utf-8")
    return path


def test_a_control_character_in_the_title_does_not_break_the_sweep_workbook(capsys, tmp_path):
    from openpyxl import load_workbook

    path = _case_titled(tmp_path, "Station\x01A")
    book = tmp_path / "sweep.xlsx"
    code, out, err = cli(capsys, "sweep", path, "--vary", "omega_top=0:1:1", "--xlsx", book,
                         "--quiet")
    assert code == 0, out + err
    assert load_workbook(book)["sweep"]["A1"].value == "Station A"  # as export writes it


@pytest.mark.parametrize("vary, words", [
    ("omega_top=0:1e308:1e-308", "the range has more than 1e308 values; a sweep takes at "
                                 "most 2,000,000"),
    ("omega_top=-1e308:1e308:1", "the range has more than 1e308 values"),
    ("omega_top=0:1:1e-7", "the range has 1e+07 values; a sweep takes at most 2,000,000")])
def test_a_sweep_range_too_long_is_a_usage_error(capsys, tmp_path, vary, words):
    path = _case_titled(tmp_path, "Northfield")
    held = snapshot(tmp_path)
    code, out, err = cli(capsys, "sweep", path, "--vary", vary, "--csv", tmp_path / "s.csv")
    assert code == 2 and "Traceback" not in out + err
    assert f"usage error: --vary '{vary}': {words}" in out + err
    assert snapshot(tmp_path) == held


def test_a_sweep_longer_than_a_worksheet_is_refused_for_xlsx_up_front(capsys, tmp_path):
    path = _case_titled(tmp_path, "Northfield")
    held = snapshot(tmp_path)
    # 1,100,001 points: within the sweep limit, beyond a worksheet's 1,048,576 rows
    code, out, err = cli(capsys, "sweep", path, "--vary", "omega_top=0:1.1:0.000001",
                         "--xlsx", tmp_path / "s.xlsx", "--quiet")
    assert code == 2 and "Traceback" not in out + err
    assert (f"usage error: --xlsx {tmp_path / 's.xlsx'}: the sweep has 1,100,001 points, more "
            "than the 1,048,571 rows a worksheet holds under its header") in out + err
    assert snapshot(tmp_path) == held


# ---------------------------------------------------------------- 5. options ignored silently
IGNORED_OPTIONS = {  # name -> (arguments after the case or command, words of the message)
    "empty_report_name": (["run", "{case}", "-o", ""], "usage error: -o '': an empty file name"),
    "empty_csv_name": (["run", "{case}", "--csv", ""],
                       "usage error: --csv '': an empty file name"),
    "force_without_output": (["new", "--force"],
                             "usage error: --force without -o: there is no file to replace"),
    "every_column_with_json": (["run", "{case}", "--json", "--every-column"],
                               "usage error: --every-column has no effect with --json"),
    "units_with_json": (["run", "{case}", "--json", "--units", "si"],
                        "usage error: --units has no effect with --json"),
    "heights_with_json": (["run", "{case}", "--json", "--heights", "dam"],
                          "usage error: --heights has no effect with --json"),
    "station_level_huge_negative": (
        ["plot", "{case}", "-o", "{out}", "--station-level", "-1e308"],
        "usage error: --station-level -1e+308 is out of range: it is a pressure in hPa, "
        "above 0 and at most 1100"),
    "station_level_not_a_number": (
        ["plot", "{case}", "-o", "{out}", "--station-level", "nan"],
        "usage error: --station-level nan is out of range"),
}


@pytest.mark.parametrize("name", sorted(IGNORED_OPTIONS))
def test_an_option_that_would_be_ignored_is_a_usage_error(name, capsys, tmp_path,
                                                          monkeypatch):
    monkeypatch.chdir(tmp_path)  # `new` without -o would print; nothing may be written
    case_path = _case_titled(tmp_path, "Northfield")
    arguments, words = IGNORED_OPTIONS[name]
    arguments = [a.format(case=case_path, out=tmp_path / "p.png") for a in arguments]
    held = snapshot(tmp_path)
    code, out, err = cli(capsys, *arguments)
    assert code == 2 and "Traceback" not in out + err, out + err
    assert words in err
    assert snapshot(tmp_path) == held


def test_units_and_heights_with_json_still_apply_to_the_csv(capsys, tmp_path):
    case_path = _case_titled(tmp_path, "Northfield")
    code, out, err = cli(capsys, "run", case_path, "--json", "--csv", tmp_path / "t.csv",
                         "--heights", "dam")
    assert code == 0, out + err
    header, units = (tmp_path / "t.csv").read_text(encoding="utf-8").splitlines()[:2]
    assert dict(zip(header.split(","), units.split(",")))["thickness"] == "dam"


def test_a_negative_number_with_an_exponent_reaches_its_option():
    from layercalc.cli.main import build_parser

    args = build_parser().parse_args(["plot", "case.layers", "-o", "p.png",
                                      "--station-level", "-1e308"])
    assert args.station_level == -1e308


# ---------------------------------------------------------------- 6. files
def test_a_killed_writers_temporary_is_removed_on_the_next_write(tmp_path):
    import os
    import subprocess
    import sys
    import time

    from layercalc.files import write_text_atomic

    # a process that has ended stands for a writer killed with kill -9
    ended = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"],
                           capture_output=True, text=True, check=True)
    pid = int(ended.stdout)
    dead = tmp_path / f".out.txt.{pid}.abcd1234.tmp"
    old = tmp_path / ".report.txt.k2j4h5g6.tmp"  # the naming before the pid was added
    alive = tmp_path / f".out.txt.{os.getpid()}.zzzz9999.tmp"  # a write still going on
    young = tmp_path / ".report.txt.a1b2c3d4.tmp"
    foreign = tmp_path / ".notes.tmp"  # not our naming
    for path in (dead, old, alive, young, foreign):
        path.write_bytes(b"half")
    hour_ago = time.time() - 3700
    os.utime(old, (hour_ago, hour_ago))
    os.utime(foreign, (hour_ago, hour_ago))
    write_text_atomic(tmp_path / "other.txt", "whole\n")
    left = sorted(p.name for p in tmp_path.iterdir())
    assert left == sorted([alive.name, young.name, foreign.name, "other.txt"])


def test_a_killed_cli_write_leaves_nothing_behind_after_the_next(capsys, tmp_path):
    import os
    import signal
    import subprocess
    import sys

    case_path = _case_titled(tmp_path, "Northfield")
    # a writer that stops for good between creating its temporary file and the rename
    code = ("import os, sys, layercalc.files as f\n"
            "real = os.replace\n"
            "def stop(source, target):\n"
            "    if str(target).endswith('r.txt'):\n        os.kill(os.getpid(), 9)\n"
            "    return real(source, target)\n"
            "f.os.replace = stop\n"
            "from layercalc.cli.main import main\n"
            f"main(['run', {str(case_path)!r}, '-o', {str(tmp_path / 'r.txt')!r}])\n")
    result = subprocess.run([sys.executable, "-c", code], capture_output=True,
                            env={**os.environ, "PYTHONPATH": os.pathsep.join(sys.path)})
    assert result.returncode == -signal.SIGKILL
    assert [p.name for p in tmp_path.glob(".r.txt.*.tmp")]  # the leftover
    code, out, err = cli(capsys, "run", case_path, "-o", tmp_path / "r.txt")
    assert code == 0, out + err
    assert not list(tmp_path.glob(".*.tmp"))


@pytest.mark.parametrize("arguments", [["run", "{case}", "-o", "{target}"],
                                       ["run", "{case}", "--csv", "{target}"],
                                       ["export", "{case}", "-o", "{target}.xlsx"]])
def test_a_read_only_target_is_not_replaced(arguments, capsys, tmp_path):
    case_path = _case_titled(tmp_path, "Northfield")
    target = tmp_path / "locked.txt"
    arguments = [a.format(case=case_path, target=target) for a in arguments]
    target = Path(arguments[-1])
    target.write_bytes(b"kept\n")
    target.chmod(0o444)
    held = snapshot(tmp_path)
    code, out, err = cli(capsys, *arguments)
    assert_our_error(code, out, err, f"output error: cannot write {target}: the file is "
                     "read-only, so layercalc does not replace it; nothing was written")
    assert snapshot(tmp_path) == held


def test_force_replaces_a_read_only_file_where_the_command_has_it(capsys, tmp_path):
    target = tmp_path / "new.layers"
    target.write_bytes(b"kept\n")
    target.chmod(0o444)
    code, out, err = cli(capsys, "new", "-o", target)
    assert code == 1 and "exists" in out + err  # without --force: the overwrite rule
    assert target.read_bytes() == b"kept\n"
    code, out, err = cli(capsys, "new", "-o", target, "--force")
    assert code == 0, out + err
    assert target.read_bytes() != b"kept\n"
