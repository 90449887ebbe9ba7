"""Issue 12, second round of hardening: short inputs that used to end in a traceback, values
so large that derived numbers overflowed, outputs over the input, inputs that are not
regular files, the grammar cache folder, usage errors and length limits.

Every reproducer is refused as our error: exit status 1 (2 for usage errors), a message with
its position, no traceback, nothing written and the input unchanged.
"""

from __future__ import annotations

import os
import re
import warnings
from pathlib import Path

import numpy as np
import pytest

import layercalc
from layercalc.cli.main import main
from tests.cli.test_cli_hardening import SMALL_TABLE, assert_our_error, cli, process, snapshot

TABLE_LINES = SMALL_TABLE.count("\n")
HUGE_EXPONENT = "9" * 4301  # one digit beyond Python's limit for int("...")


def regular_files(folder: Path) -> dict[str, str]:
    """snapshot() of the regular files only (reading a FIFO or /dev/zero never ends)."""
    return {str(p.relative_to(folder)): p.read_bytes().hex() for p in sorted(folder.rglob("*"))
            if p.is_file() and not p.is_symlink()} | {
        str(p.relative_to(folder)): "other" for p in folder.rglob("*")
        if p.is_symlink() or not (p.is_file() or p.is_dir())}


def case(tmp_path, *lines: str, name: str = "case.layers"):
    path = tmp_path / name
    path.write_text(SMALL_TABLE + "".join(line + "\n" for line in lines), encoding="utf-8")
    return path


def refused_everywhere(capsys, tmp_path, path, *needles) -> str:
    """check, run (also with -o and --json), export and plot all refuse `path` with our error
    at the position given in `needles`, write nothing and leave the input as it was."""
    held = snapshot(tmp_path)
    texts = []
    for args in (["check"], ["run"], ["run", "--json"], ["run", "-o", tmp_path / "r.txt"],
                 ["run", "--csv", tmp_path / "t.csv"],
                 ["export", "-o", tmp_path / "b.xlsx"], ["plot", "-o", tmp_path / "p.png"]):
        code, out, err = cli(capsys, args[0], path, *args[1:])
        assert_our_error(code, out, err, *needles)
        texts.append(out + err)
    assert snapshot(tmp_path) == held  # nothing written, the input unchanged
    return texts[0]


# ---------------------------------------------------------------- 1. short inputs
SHORT_INPUTS = {  # name -> (the line after the table, column of the message, words in it)
    "unit_power_overflow": ("cell x = 1 [km^400]", 13, "unit power 400 is out of range"),
    "unit_power_underflow": ("cell x = 1 [%^-400]", 13, "unit power -400 is out of range"),
    "unit_divided_by_zero": ("cell x = 1 [K/0]", 15, "the number 0 in a unit must be positive"),
    "unit_exponent_of_4301_digits": (f"cell x = 1 [m^{HUGE_EXPONENT}]", 13,
                                     "unit power of a million or more is out of range"),
    "unit_factor_overflow": ("cell x = 1 [1e200 1e200 m]", 13, "factor too large"),
    "unit_factor_underflow": ("cell x = 1 [m/(1e-200 1e-200)]", 13, "factor too large"),
    "infinite_exponent": ("column y = T ^ 1e309", 16, "the number 1e309 is out of range"),
    "infinite_exponent_dimensionless": ("column y = (T/T) ^ 1e309", 20,
                                        "the number 1e309 is out of range"),
    "dimensional_power_too_large": ("column y = T ^ 1e99", 16,
                                    "can only be raised to a power from -12 to 12"),
    "literal_beyond_the_range": ("column y [K] = T / 1e400", 20,
                                 "the number 1e400 is out of range"),
    "cell_beyond_the_range": ("cell y = 1e101 [K]", 10, "the number 1e101 [K] is out of range"),
}


@pytest.mark.parametrize("name", sorted(SHORT_INPUTS))
def test_a_short_input_is_refused_with_its_position(name, capsys, tmp_path):
    line, column, words = SHORT_INPUTS[name]
    path = case(tmp_path, line)
    refused_everywhere(capsys, tmp_path, path, f"{path}:{TABLE_LINES + 1}:{column}: ", words)


def test_a_table_value_beyond_the_range_is_refused(capsys, tmp_path):
    path = tmp_path / "case.layers"
    path.write_text(SMALL_TABLE.replace("-1.0", "1e106"), encoding="utf-8")  # 1e101 s^-1
    refused_everywhere(capsys, tmp_path, path, f"{path}:3:", "out of range")


def test_a_chain_of_four_ending_in_an_unknown_name(capsys, tmp_path):
    # the cycle detector's internal signal used to escape here
    path = case(tmp_path, "cell a = b", "cell b = c", "cell c = d", "cell d = nosuch")
    refused_everywhere(capsys, tmp_path, path, f"{path}:{TABLE_LINES + 4}:10: name error",
                       "unknown name 'nosuch'")


def _chain(length: int, closed: bool = False) -> list[str]:
    """cell c{n} = c{n-1} + 1, written last first (each line reads one not yet defined)."""
    lines = [f"cell c{i} = c{i - 1} + 1" for i in range(length - 1, 0, -1)]
    return lines + [f"cell c0 = {'c' + str(length - 1) if closed else '1'}"]


@pytest.mark.parametrize("length", [300, 500, 3000])
def test_a_long_chain_of_definitions_runs(length, capsys, tmp_path):
    path = case(tmp_path, *_chain(length))
    code, out, err = cli(capsys, "run", path, "--json")
    assert code == 0, err
    # each link adds 1 to the one before: c{n} = n + 1 (exact in floating point)
    assert f'"c{length - 1}": {float(length)}' in out


def test_a_long_circle_of_definitions_is_one_short_message(capsys, tmp_path):
    path = case(tmp_path, *_chain(500, closed=True))
    text = refused_everywhere(capsys, tmp_path, path, f"{path}:{TABLE_LINES + 1}:6: cycle",
                              "c499 -> c0 -> c1 -> c2 -> ... (500 formulas in all)")
    assert max(len(line) for line in text.splitlines()) < 200


def test_a_chain_of_200_through_the_api():
    sheet = layercalc.loads(SMALL_TABLE + "\n".join(_chain(200)) + "\n", name="chain.layers")
    assert float(sheet.evaluate().cells["c199"]) == 200.0  # c{n} = n + 1, exact


def test_a_long_cell_name_fits_the_report(capsys, tmp_path):
    from layercalc.limits import MAX_NAME_CHARS

    name = "x" * MAX_NAME_CHARS  # longer than the report's label column (75 used to crash)
    path = case(tmp_path, f"cell {name} = 1", "cell short = 2")
    code, out, _ = cli(capsys, "check", path)
    assert code == 0
    code, out, err = cli(capsys, "run", path)
    assert code == 0 and "Traceback" not in err
    assert name in out and "short" in out


@pytest.mark.parametrize("label_width", [60, 75, 100, 500])
def test_the_report_layout_never_squeezes_text_to_nothing(label_width):
    from layercalc.report.layout import WIDTH, wrap, wrap_pair

    words = "a value with its unit and a remark " * 4
    lines = wrap_pair("x" * label_width, words, label_width)
    assert " ".join(" ".join(lines).split()) == " ".join((("x" * label_width) + " "
                                                          + words).split())
    assert all(len(line) < WIDTH for line in lines[1:])  # the text itself stays readable
    assert " ".join(wrap(words, " " * label_width)).split() == words.split()


def test_a_workbook_header_with_an_exponent_of_4301_digits(capsys, tmp_path):
    from openpyxl import load_workbook

    book = tmp_path / "book.xlsx"
    assert main(["export", str(case(tmp_path, name="base.layers")), "-o", str(book)]) == 0
    workbook = load_workbook(book)
    sheet = workbook["layers"]
    header = next(c for c in sheet[1] if str(c.value or "").startswith("T "))
    header.value = f"T [K^{HUGE_EXPONENT}]"
    workbook.save(book)
    held = snapshot(tmp_path)
    for args in (["check", book], ["run", book], ["import", book, "-o", tmp_path / "n.layers"]):
        code, out, err = cli(capsys, *args)
        assert_our_error(code, out, err, f"layers!{header.coordinate}",
                         "unit power of a million or more")
    assert snapshot(tmp_path) == held


def test_units_power_refuses_large_exponents_through_the_api():
    with pytest.raises(layercalc.LayercalcError) as caught:
        layercalc.loads(SMALL_TABLE + "column y [m^13] = T\n", name="t.layers")
    assert "from -12 to 12" in caught.value.message
    # 12 itself is accepted: a dimension check follows (K is not m^12)
    with pytest.raises(layercalc.LayercalcError) as caught:
        layercalc.loads(SMALL_TABLE + "column y [m^12] = T\n", name="t.layers")
    assert "unit error" in caught.value.format() and "from -12" not in caught.value.message


# ---------------------------------------------------------------- 2. values out of range
OUT_OF_RANGE = {  # name -> (lines after the table, position "line:column", words)
    "omega_top_1e307": (["cell omega_top = 1e307 [Pa/s]"], "6:18", "out of range"),
    "surface_height_1e300": (["cell surface_height = 1e300 [m]"], "6:23", "out of range"),
    "divergence_of_minus_2e307": ([], "3:", "out of range"),  # table value, below
    "derived_value_beyond_the_range": (["column y [K] = T * 1e90 * 1e90"], "6:1",
                                       "column 'y' is out of range (2.87e+182"),
    "unit_factor_too_small_for_display": (["column y [1e-31 K] = T"], "6:11",
                                          "factor too small"),
}


@pytest.mark.parametrize("name", sorted(OUT_OF_RANGE))
def test_a_value_out_of_range_is_refused_before_any_output(name, capsys, tmp_path):
    lines, position, words = OUT_OF_RANGE[name]
    path = case(tmp_path, *lines)
    if name == "divergence_of_minus_2e307":
        path.write_text(SMALL_TABLE.replace("-1.0", "-2e307"), encoding="utf-8")
    refused_everywhere(capsys, tmp_path, path, f"{path}:{position}", words)


HUGE_BUT_IN_RANGE = {  # absurd values the range accepts: every output stays finite
    "omega_top": ["cell omega_top = 1e99 [Pa/s]"],
    "surface_height": ["cell surface_height = 1e99 [m]"],
    "temperature": [],  # the table's temperatures, below
}


@pytest.mark.parametrize("name", sorted(HUGE_BUT_IN_RANGE))
def test_huge_values_in_range_give_finite_outputs(name, capsys, tmp_path):
    path = case(tmp_path, *HUGE_BUT_IN_RANGE[name])
    if name == "temperature":
        path.write_text(SMALL_TABLE.replace("[degC]", "[K]").replace("14.0", "1e99")
                        .replace("6.0", "6e98"), encoding="utf-8")
    code, out, err = cli(capsys, "run", path, "--json")
    assert code == 0, err
    assert "Infinity" not in out and "NaN" not in out
    code, out, err = cli(capsys, "run", path, "--every-column", "--units", "si")
    assert code == 0, err
    assert re.findall(r"\d{20,}", out) == []  # powers of ten, not 100 digits
    for args in (["plot", "-o", tmp_path / "p.png"], ["export", "-o", tmp_path / "b.xlsx"],
                 ["run", "--csv", tmp_path / "t.csv"]):
        code, out, err = cli(capsys, args[0], path, *args[1:])
        assert code == 0 and "Traceback" not in err and "Warning" not in err, err
    assert "inf" not in (tmp_path / "t.csv").read_text().lower()


def test_no_numpy_warning_escapes_the_api():
    text = SMALL_TABLE.replace("[degC]", "[K]").replace("14.0", "1e99").replace("6.0", "6e98")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        sheet = layercalc.loads(text, name="t.layers")
        result = sheet.evaluate()
        assert all(np.isfinite(v) for v in result.cells.values())
        result.summary, result.layers, sheet.compare()
        # omega_top = 1e99 Pa/s over air this thin: w is beyond the range (our error)
        with pytest.raises(layercalc.LayercalcError, match="w_bottom' is out of range"):
            sheet.evaluate_many({"omega_top": np.array([0.0, 1e99])})


# ---------------------------------------------------------------- 3. outputs over the input
def _usage_error(code, out, err, *needles) -> None:
    assert code == 2, out + err
    assert "usage: layercalc" in err and "usage error: " in err and "Traceback" not in err
    for needle in needles:
        assert needle in err, (needle, err)


@pytest.fixture()
def inputs(tmp_path):
    """A .layers case and a workbook exported from it, in a folder of their own."""
    folder = tmp_path / "in"
    folder.mkdir()
    layers = folder / "c.layers"
    layers.write_text(SMALL_TABLE + "cell warming = 1 [K]\n", encoding="utf-8")
    book = folder / "book.xlsx"
    assert main(["export", str(layers), "-o", str(book)]) == 0
    return layers, book


CLASHES = {  # name -> arguments, with {c} the .layers case and {b} the workbook
    "run_output": ["run", "{c}", "-o", "{c}"],
    "run_csv": ["run", "{c}", "--csv", "{c}"],
    "run_json_output": ["run", "{c}", "--json", "-o", "{c}"],
    "run_another_spelling": ["run", "{c}", "-o", "{dir}/../in/./c.layers"],
    "run_symlink": ["run", "{c}", "-o", "{link}"],
    "run_hard_link": ["run", "{c}", "-o", "{hard}"],
    "run_symlink_as_input": ["run", "{link}", "-o", "{c}"],
    "sweep_csv": ["sweep", "{c}", "--vary", "warming=0:1:1", "--csv", "{c}"],
    "run_workbook": ["run", "{b}", "-o", "{b}"],
    "sweep_workbook": ["sweep", "{b}", "--vary", "warming=0:1:1", "--xlsx", "{b}"],
    "export_over_its_workbook": ["export", "{b}", "-o", "{b}"],
    "plot_over_the_case": ["plot", "{c}", "-o", "{c}"],
    "import_over_its_input": ["import", "{b}", "-o", "{b}", "--force"],
}


@pytest.mark.parametrize("name", sorted(CLASHES))
def test_an_output_over_the_input_is_a_usage_error(name, inputs, capsys, tmp_path):
    layers, book = inputs
    folder = layers.parent
    (folder / "link.layers").symlink_to(layers)
    (folder / "hard.layers").hardlink_to(layers)
    held = snapshot(tmp_path)
    args = [a.format(c=layers, b=book, dir=folder, link=folder / "link.layers",
                     hard=folder / "hard.layers") for a in CLASHES[name]]
    code, out, err = cli(capsys, *args)
    _usage_error(code, out, err, "is the input", "nothing was written")
    assert out == ""
    assert snapshot(tmp_path) == held


def test_two_outputs_on_one_path_are_a_usage_error(inputs, capsys, tmp_path):
    layers, _ = inputs
    held = snapshot(tmp_path)
    for args in (["sweep", layers, "--vary", "warming=0:1:1", "--csv", tmp_path / "s.xlsx",
                  "--xlsx", tmp_path / "s.xlsx"],
                 ["run", layers, "--csv", tmp_path / "x.txt", "-o", tmp_path / "x.txt"],
                 ["sweep", layers, "--vary", "warming=0:1:1", "--csv", tmp_path / "s.png",
                  "--plot", tmp_path / "in" / ".." / "s.png"]):
        code, out, err = cli(capsys, *args)
        _usage_error(code, out, err, "both name", "one output would be lost")
    assert snapshot(tmp_path) == held


# ---------------------------------------------------------------- 6. option values
OPTION_VALUES = {  # name -> (arguments after the case, words of the message)
    "dpi_zero": (["plot", "-o", "p.png", "--dpi", "0"], "--dpi 0 is out of range"),
    "vary_not_numbers": (["sweep", "--vary", "warming=a:b:c"], "must be numbers"),
    "vary_backwards": (["sweep", "--vary", "warming=1:0:1"], "STEP must be non-zero"),
    "vary_zero_step": (["sweep", "--vary", "warming=0:1:0"], "STEP must be non-zero"),
    "vary_beyond_the_range": (["sweep", "--vary", "warming=0:1e101:1e100"],
                              "must lie within 1e+100"),
    "vary_unknown_cell": (["sweep", "--vary", "warmin=0:1:1"], "did you mean 'warming'"),
    "vary_same_cell_twice": (["sweep", "--vary", "warming=0:1:1", "--vary", "warming=0:2:1"],
                             "varied twice"),
    "show_unknown_cell": (["sweep", "--vary", "warming=0:1:1", "--show", "nosuch"],
                          "--show nosuch"),
    "plot_jpg": (["plot", "-o", "p.jpg"], "must end in .png, .svg or .pdf"),
    "export_txt": (["export", "-o", "b.txt"], "must end in .xlsx"),
    "run_csv_and_output_on_one_file": (["run", "--csv", "X", "-o", "X"], "both name X"),
    "run_unknown_scenario": (["run", "--scenario", "nosuch"], "no scenario named 'nosuch'"),
    "plot_unknown_scenario": (["plot", "-o", "p.png", "--scenario", "nosuch"],
                              "no scenario named 'nosuch'"),
    "sweep_unknown_scenario": (["sweep", "--vary", "warming=0:1:1", "--scenario", "nosuch"],
                               "no scenario named 'nosuch'"),
    "all_scenarios_with_csv": (["run", "--all-scenarios", "--csv", "t.csv"],
                               "with --all-scenarios"),
}


@pytest.mark.parametrize("name", sorted(OPTION_VALUES))
def test_a_bad_option_value_is_a_usage_error(name, inputs, capsys, tmp_path, monkeypatch):
    layers, _ = inputs
    work = tmp_path / "work"
    work.mkdir()
    monkeypatch.chdir(work)
    held = snapshot(tmp_path)
    args, words = OPTION_VALUES[name]
    code, out, err = cli(capsys, args[0], layers, *args[1:])
    _usage_error(code, out, err, words)
    assert snapshot(tmp_path) == held


# ---------------------------------------------------------------- 4. inputs that are not files
def _not_regular(tmp_path) -> dict:
    fifo = tmp_path / "case.layers"
    os.mkfifo(fifo)
    zero = tmp_path / "zero.layers"
    zero.symlink_to("/dev/zero")
    return {"fifo": fifo, "symlink_to_dev_zero": zero, "dev_urandom": Path("/dev/urandom")}


@pytest.mark.parametrize("kind", ["fifo", "symlink_to_dev_zero", "dev_urandom"])
def test_an_input_that_is_not_a_regular_file_is_refused_at_once(kind, capsys, tmp_path):
    path = _not_regular(tmp_path)[kind]
    held = regular_files(tmp_path)
    what = "a pipe (FIFO)" if kind == "fifo" else "a device"
    for args in (["check"], ["run"], ["run", "-o", tmp_path / "r.txt"],
                 ["export", "-o", tmp_path / "b.xlsx"], ["import", "-o", tmp_path / "n.layers"],
                 ["sweep", "--vary", "warming=0:1:1"]):
        code, out, err = cli(capsys, args[0], path, *args[1:])
        assert_our_error(code, out, err, f"{path} is {what}, not a regular file")
    assert regular_files(tmp_path) == held


@pytest.mark.slow
def test_a_fifo_input_through_a_process_does_not_block(tmp_path):
    fifo = _not_regular(tmp_path)["fifo"]
    done = process("check", fifo, cwd=tmp_path)  # would block for ever (timeout 300 s)
    text = done.stdout + done.stderr  # check lists its problems on stdout
    assert done.returncode == 1 and "Traceback" not in text
    assert "is a pipe (FIFO), not a regular file" in text


def test_a_text_input_above_the_size_limit_is_refused_without_reading(capsys, tmp_path):
    from layercalc.limits import MAX_TEXT_BYTES

    path = tmp_path / "huge.layers"
    with open(path, "wb") as stream:
        stream.truncate(MAX_TEXT_BYTES + 1)  # sparse: no disk space used
    held = regular_files(tmp_path)
    for command in ("check", "run"):
        code, out, err = cli(capsys, command, path)
        assert_our_error(code, out, err, f"{path} is larger than {MAX_TEXT_BYTES:,} bytes")
    assert regular_files(tmp_path) == held


# ---------------------------------------------------------------- 7. lengths of texts
from layercalc.limits import (  # noqa: E402  (beside the tests that use them)
    MAX_LINE_CHARS, MAX_NAME_CHARS, MAX_NOTE_CHARS, MAX_TITLE_CHARS,
)

TOO_LONG = {  # name -> (the line after the table, column, words of the message)
    "title": (f'title "{"t" * (MAX_TITLE_CHARS + 1)}"', 1,
              f"the title has {MAX_TITLE_CHARS + 1} characters; at most {MAX_TITLE_CHARS}"),
    "note": (f'note "{"n" * (MAX_NOTE_CHARS + 1)}"', 1,
             f"this note has {MAX_NOTE_CHARS + 1:,} characters; at most {MAX_NOTE_CHARS:,}"),
    "cell_name": (f"cell {'x' * (MAX_NAME_CHARS + 1)} = 1", 6,
                  f"has {MAX_NAME_CHARS + 1} characters; at most {MAX_NAME_CHARS}"),
    "column_name": (f"column {'y' * 75} [K] = T", 8, "the column name 'yyyyyyyyyyyyyyyyyyyy...'"),
    "scenario_name": (f"scenario {'s' * 70}\nend", 10, "the scenario name"),
    "scenario_description": (f'scenario warm "{"d" * (MAX_TITLE_CHARS + 1)}"\nend', 1,
                             "the scenario's description has"),
    "line": ("# " + "c" * MAX_LINE_CHARS, MAX_LINE_CHARS + 1,
             f"has {MAX_LINE_CHARS + 2:,} characters; a line may have at most"),
}


@pytest.mark.parametrize("name", sorted(TOO_LONG))
def test_a_text_beyond_its_length_limit_is_refused_first(name, capsys, tmp_path):
    line, column, words = TOO_LONG[name]
    # a unit error further down must not be reported first: lengths are checked before
    path = case(tmp_path, line, "column bad = T + p_top")
    refused_everywhere(capsys, tmp_path, path, f"{path}:{TABLE_LINES + 1}:{column}: ", words)


def test_a_table_heading_beyond_the_name_limit(capsys, tmp_path):
    path = tmp_path / "case.layers"
    path.write_text(SMALL_TABLE.replace("div [", "d" * (MAX_NAME_CHARS + 1) + " ["),
                    encoding="utf-8")
    refused_everywhere(capsys, tmp_path, path, f"{path}:2:", "the column name 'ddd")


def test_texts_at_their_limits_are_accepted(capsys, tmp_path):
    path = case(tmp_path, f'title "{"t" * MAX_TITLE_CHARS}"',
                f"cell {'x' * MAX_NAME_CHARS} = 1")
    code, out, err = cli(capsys, "run", path)
    assert code == 0, err
