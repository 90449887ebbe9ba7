"""The command line under bad input and bad output paths (issue 8, the command-line half).

For every golden bad input (tests/errors/*.layers) `check` and `run` exit 1 with the file's
line:column and no traceback, and never touch the input. Commands that write files leave no
partial, clobbered or temporary file behind when the input is bad, when the output path
cannot be written, or when a write fails half-way. Usage errors exit 2, `--help` exits 0 with
an example. Unusual files (not UTF-8, a huge line, deep nesting, 100,000 layers) give the
documented exit status. `check` and `run` agree on what is valid.
"""

from __future__ import annotations

import errno
import hashlib
import os
import re
import zipfile
from pathlib import Path

import numpy as np
import pytest

import layercalc
from layercalc import files
from layercalc.cli.common import worked_cases, worked_cases_folder
from layercalc.cli.main import main
from tests.helpers import cli, process
from layercalc.constants import G0, RD
from layercalc.language.parser import MAX_NESTING
from layercalc.limits import MAX_LINE_CHARS, MAX_NOTE_CHARS

ERRORS = Path(__file__).resolve().parents[1] / "errors"
# The golden bad inputs; a golden text that is warnings only (a value beyond what air does)
# belongs to a file that runs, and is tested in tests/language/test_plausibility.py.
GOLDEN = [p for p in sorted(ERRORS.glob("*.layers"))
          if ": warning: " not in p.with_suffix(".expected").read_text(encoding="utf-8")]
WORKED = worked_cases()
WARMING = worked_cases_folder() / "midlevel_warming.layers"
COMMANDS = ("run", "check", "new", "demo", "plot", "export", "import", "sweep")
OLD = b"old bytes that must survive\n"
SMALL_TABLE = """\
layers
  p_bottom [hPa]  p_top [hPa]  T [degC]  div [1e-5 s^-1]
  1000  850   14.0  -1.0
  850   700    6.0   1.0
end
"""


# ---------------------------------------------------------------- helpers


def digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def snapshot(folder: Path) -> dict[str, str]:
    """Every file and folder under `folder` (hidden temporary files included) with a hash."""
    return {str(p.relative_to(folder)): ("folder" if p.is_dir() else digest(p))
            for p in sorted(folder.rglob("*"))}


def golden_position(path: Path) -> str:
    """`FILE:line:col` of the first problem, read from the golden NAME.expected text."""
    first = path.with_suffix(".expected").read_text(encoding="utf-8").splitlines()[0]
    found = re.match(rf"errors/{re.escape(path.name)}:(\d+):(\d+): ", first)
    assert found, first
    return f"{path}:{found[1]}:{found[2]}"


def assert_our_error(code, out, err, *needles) -> None:
    text = out + err
    assert code == 1, text
    assert "Traceback" not in text
    for needle in needles:
        assert str(needle) in text, (needle, text)


@pytest.fixture(scope="module")
def workbook(tmp_path_factory) -> Path:
    """A workbook exported from the mid-level warming case (for import)."""
    book = tmp_path_factory.mktemp("book") / "warming.xlsx"
    assert main(["export", str(WARMING), "-o", str(book)]) == 0
    return book


# ---------------------------------------------------------------- golden bad inputs
@pytest.mark.parametrize("path", GOLDEN, ids=[p.stem for p in GOLDEN])
def test_check_and_run_refuse_every_golden_bad_input(path, capsys):
    before = digest(path)
    position = golden_position(path)
    for command in ("check", "run"):
        code, out, err = cli(capsys, command, path)
        assert_our_error(code, out, err, position)
        assert "ok" not in out.splitlines()  # check and run agree: neither calls it valid
    assert digest(path) == before


@pytest.mark.parametrize("path", GOLDEN, ids=[p.stem for p in GOLDEN])
def test_a_golden_bad_input_writes_no_output_and_keeps_old_outputs(path, capsys, tmp_path):
    before = digest(path)
    outputs = {
        "run-csv": lambda t: ("run", path, "--csv", t / "out.csv"),
        "run-json": lambda t: ("run", path, "--json", "-o", t / "out.json"),
        "run-report": lambda t: ("run", path, "-o", t / "out.txt"),
        "plot": lambda t: ("plot", path, "-o", t / "out.png"),
        "sweep": lambda t: ("sweep", path, "--vary", "surface_height=0:100:50",
                            "--csv", t / "out.csv", "--xlsx", t / "out.xlsx",
                            "--plot", t / "out.png"),
        "export": lambda t: ("export", path, "-o", t / "out.xlsx"),
    }
    for name, arguments in outputs.items():
        fresh = tmp_path / f"{name}-fresh"
        fresh.mkdir()
        code, out, err = cli(capsys, *arguments(fresh))
        assert_our_error(code, out, err)
        assert list(fresh.iterdir()) == [], name  # nothing appeared, no temporary file
        kept = tmp_path / f"{name}-kept"
        kept.mkdir()
        for target in ("out.csv", "out.json", "out.txt", "out.png", "out.xlsx"):
            (kept / target).write_bytes(OLD)
        listing = snapshot(kept)
        code, out, err = cli(capsys, *arguments(kept))
        assert_our_error(code, out, err)
        assert snapshot(kept) == listing, name  # old bytes kept, nothing added
    assert digest(path) == before


@pytest.mark.slow
def test_golden_bad_inputs_through_a_process(tmp_path):
    """`check` takes every golden file in one process and names each problem's position."""
    done = process("check", *GOLDEN, cwd=tmp_path)
    assert done.returncode == 1
    assert "Traceback" not in done.stdout + done.stderr
    for path in GOLDEN:
        assert golden_position(path) in done.stdout, path.name
    bad = ERRORS / "unit_mismatch.layers"
    before = digest(bad)
    done = process("run", bad, "--csv", "out.csv", cwd=tmp_path)
    assert done.returncode == 1
    assert golden_position(bad) in done.stderr and "Traceback" not in done.stderr
    assert done.stdout == ""
    assert list(tmp_path.iterdir()) == [] and digest(bad) == before


# ---------------------------------------------------------------- check and run agree
@pytest.mark.parametrize("name", sorted(WORKED))
def test_check_and_run_agree_on_every_worked_case(name, capsys):
    path = WORKED[name]
    before = digest(path)
    code, out, _ = cli(capsys, "check", path)
    assert code == 0 and out.splitlines()[-1] == "ok"
    code, out, err = cli(capsys, "run", path)
    assert code == 0 and "Traceback" not in err and "caution:" in out
    for scenario in layercalc.load(path).scenarios:
        code, _, err = cli(capsys, "run", path, "--scenario", scenario)
        assert code == 0, err
    assert digest(path) == before


UNUSUAL = {  # name -> bytes of a .layers file; check and run must agree on each
    "byte_order_mark": b"\xef\xbb\xbf" + SMALL_TABLE.encode(),
    "crlf_line_ends": SMALL_TABLE.replace("\n", "\r\n").encode(),
    "nul_byte": SMALL_TABLE.replace("-1.0", "-1.0\x00").encode(),
    "empty_file": b"",
    "only_a_comment": b"# nothing here\n",
    "latin1": b'title "Caf\xe9"\n' + SMALL_TABLE.encode(),
    "utf16": SMALL_TABLE.encode("utf-16"),
    "unclosed_string": b'title "open\n' + SMALL_TABLE.encode(),
    "no_end": SMALL_TABLE.replace("end\n", "").encode(),
}


@pytest.mark.parametrize("name", sorted(UNUSUAL))
def test_check_and_run_agree_on_unusual_files(name, capsys, tmp_path):
    path = tmp_path / f"{name}.layers"
    path.write_bytes(UNUSUAL[name])
    checked, out, err = cli(capsys, "check", path)
    says_ok = bool(out.splitlines()) and out.splitlines()[-1] == "ok"
    ran, _, run_err = cli(capsys, "run", path)
    assert "Traceback" not in err + run_err
    assert (checked, ran) in ((0, 0), (1, 1)), (checked, ran)
    assert (ran == 0) == says_ok
    assert path.read_bytes() == UNUSUAL[name]


# ---------------------------------------------------------------- unusual files
@pytest.mark.parametrize("encoding, position", [("latin-1", "1:11"), ("utf-16", "1:1")])
def test_a_file_that_is_not_utf8(encoding, position, capsys, tmp_path):
    path = tmp_path / "coded.layers"
    # 'title "Caf' is 10 characters: the e-acute is the 11th (latin-1); UTF-16 fails at its
    # byte order mark, the first byte
    path.write_bytes(('title "Café"\n' + SMALL_TABLE).encode(encoding))
    before = digest(path)
    for command in ("check", "run"):
        code, out, err = cli(capsys, command, path)
        assert_our_error(code, out, err, f"{path}:{position}", "not UTF-8")
    code, out, err = cli(capsys, "run", path, "--csv", tmp_path / "out.csv")
    assert_our_error(code, out, err)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["coded.layers"]
    assert digest(path) == before


@pytest.mark.slow
def test_a_file_that_is_not_utf8_through_a_process(tmp_path):
    path = tmp_path / "coded.layers"
    path.write_bytes(('title "Café"\n' + SMALL_TABLE).encode("latin-1"))
    done = process("run", path.name, cwd=tmp_path)
    assert done.returncode == 1 and done.stdout == ""
    assert "coded.layers:1:11" in done.stderr and "not UTF-8" in done.stderr
    assert "Traceback" not in done.stderr


def test_a_huge_line_that_is_valid_works(capsys, tmp_path):
    path = tmp_path / "long.layers"
    # the longest line and note the limits allow (layercalc/limits.py, README "Limits")
    path.write_text(SMALL_TABLE + "# " + "x" * (MAX_LINE_CHARS - 2) + "\n"
                    + 'note "' + "y" * MAX_NOTE_CHARS + '"\n', encoding="utf-8")
    code, out, _ = cli(capsys, "check", path)
    assert code == 0 and out.splitlines()[-1] == "ok"
    code, out, _ = cli(capsys, "run", path)
    assert code == 0 and "Summary" in out


@pytest.mark.slow
def test_a_huge_line_with_an_error_names_its_column_and_shows_a_window(capsys, tmp_path):
    path = tmp_path / "long.layers"
    head = "column bad [K] = " + " " * 100_000
    path.write_text(SMALL_TABLE + head + "T + p_top\n", encoding="utf-8")
    line = SMALL_TABLE.count("\n") + 1
    for command in ("check", "run"):
        code, out, err = cli(capsys, command, path)
        # the unit error points at the sum, which starts at T (golden unit_mismatch does so)
        assert_our_error(code, out, err, f"{path}:{line}:{len(head) + 1}: unit error")
        assert max(len(text) for text in (out + err).splitlines()) < 400  # a window


NESTED = {  # name -> (formula line, column of the first bracket beyond the limit or None)
    "parentheses": ("column x [K] = " + "(" * 10_000 + "T" + ")" * 10_000,
                    len("column x [K] = ") + MAX_NESTING + 1),
    "function_calls": ("column x = " + "ln(" * 10_000 + "T/T" + ")" * 10_000,
                       len("column x = ") + 3 * MAX_NESTING + 3),
    "unit_brackets": ("column x [" + "(" * 10_000 + "K" + ")" * 10_000 + "] = T",
                      len("column x [") + MAX_NESTING),  # the '[' is the first bracket
    "unclosed": ("column x [K] = " + "(" * 10_000 + "T", len("column x [K] = ") + MAX_NESTING + 1),
    "unary_minus": ("column x [K] = " + "-" * 10_000 + "T", None),
    "powers": ("column x = T/T" + " ^ 1" * 10_000, None),
}


@pytest.mark.parametrize("name", sorted(NESTED))
def test_ten_thousand_levels_of_nesting_are_a_clear_error(name, capsys, tmp_path):
    formula, column = NESTED[name]
    path = tmp_path / "deep.layers"
    path.write_text(SMALL_TABLE + formula + "\n", encoding="utf-8")
    line = SMALL_TABLE.count("\n") + 1
    where = f"{path}:{line}:{column}: syntax error" if column else f"{path}:{line}:"
    for command in ("check", "run"):
        code, out, err = cli(capsys, command, path)
        assert_our_error(code, out, err, where, "nest", "hint:")
        assert max(len(text) for text in (out + err).splitlines()) < 400


@pytest.mark.slow
def test_a_hundred_thousand_layers_through_the_cli(capsys, tmp_path):
    """Documented to work (README: no layer limit); takes some 10-20 s, mostly parsing."""
    n = 100_000
    pressure = np.linspace(1000.0, 100.0, n + 1)
    rows = "\n".join(f"{a:.4f} {b:.4f} -20 0.1" for a, b in zip(pressure[:-1], pressure[1:]))
    path = tmp_path / "many.layers"
    path.write_text("layers\n p_bottom [hPa] p_top [hPa] T [degC] div [1e-5 s^-1]\n"
                    f"{rows}\nend\n", encoding="utf-8")
    table, report = tmp_path / "many.csv", tmp_path / "many.txt"
    code, out, err = cli(capsys, "run", path, "--csv", table, "-o", report)
    assert code == 0 and out == "" and "Traceback" not in err
    assert "Summary" in report.read_text(encoding="utf-8")
    lines = table.read_text(encoding="utf-8").splitlines()
    assert len(lines) == 2 + n  # header, units row, one row per layer
    names, units = lines[0].split(","), lines[1].split(",")
    top = dict(zip(names, map(float, lines[-1].split(","))))
    surface = dict(zip(names, map(float, lines[2].split(","))))
    assert units[names.index("z_top")] == "m"
    # isothermal dry column, hypsometric equation: Z = Rd T / g0 ln(1000 / 100)
    # (Wallace and Hobbs 2006, section 3.2.2; summing 100,000 layers only adds rounding)
    assert top["z_top"] == pytest.approx(RD * 253.15 / G0 * np.log(10.0), rel=1e-9)
    # continuity equation integrated from omega_top = 0 (common practice, no source):
    # omega_surface = -div * (p_s - p_top) = -0.1e-5 s^-1 * 90000 Pa = -0.09 Pa/s
    assert units[names.index("omega_bottom")] == "hPa/h"
    assert surface["omega_bottom"] == pytest.approx(-0.09 * 36.0, rel=1e-9)  # Pa/s -> hPa/h
    assert sorted(p.name for p in tmp_path.iterdir()) == ["many.csv", "many.layers",
                                                          "many.txt"]


# ---------------------------------------------------------------- usage errors and help
USAGE_ERRORS = {
    "unknown_command": ["frobnicate"],
    "unknown_option": ["run", str(WARMING), "--no-such-option"],
    "unknown_option_check": ["check", "--fast", str(WARMING)],
    "run_without_case": ["run"],
    "check_without_case": ["check"],
    "plot_without_output": ["plot", str(WARMING)],
    "export_without_output": ["export", str(WARMING)],
    "import_without_output": ["import", "book.xlsx"],
    "sweep_without_vary": ["sweep", str(WARMING)],
    "option_without_value": ["run", str(WARMING), "--csv"],
    "vary_without_value": ["sweep", str(WARMING), "--vary"],
    "bad_choice": ["run", str(WARMING), "--units", "imperial"],
    "not_an_integer": ["plot", str(WARMING), "-o", "p.png", "--dpi", "many"],
    "extra_argument": ["demo", "midlevel_warming", "standard_atmosphere"],
    "exclusive_options": ["run", str(WARMING), "--scenario", "warmed", "--all-scenarios"],
    "no_command": [],
}


@pytest.mark.parametrize("name", sorted(USAGE_ERRORS))
def test_usage_errors_exit_2(name, capsys, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    code, out, err = cli(capsys, *USAGE_ERRORS[name])
    assert code == 2
    assert "usage: layercalc" in err and "Traceback" not in err
    assert out == ""
    assert list(tmp_path.iterdir()) == []


@pytest.mark.slow
def test_a_usage_error_through_a_process(tmp_path):
    done = process("run", WARMING, "--no-such-option", cwd=tmp_path)
    assert done.returncode == 2
    # argparse reports an unknown option of a command with the top-level usage line
    assert "usage: layercalc" in done.stderr
    assert "unrecognized arguments: --no-such-option" in done.stderr
    assert "Traceback" not in done.stderr


@pytest.mark.parametrize("command", COMMANDS)
def test_help_on_every_command_exits_0_with_an_example(command, capsys):
    code, out, err = cli(capsys, command, "--help")
    assert code == 0 and err == ""
    example = out.split("example:", 1)
    assert len(example) == 2, out
    assert f"layercalc {command}" in example[1]


def test_top_level_help_lists_every_command(capsys):
    code, out, _ = cli(capsys, "--help")
    assert code == 0 and "examples:" in out
    for command in COMMANDS:
        assert command in out


# ---------------------------------------------------------------- unwritable output paths
def _unwritable_folder(tmp_path: Path) -> Path | None:
    """A folder made read-only with chmod 0o555, or None where that does not stop writes
    (root ignores the mode bits)."""
    folder = tmp_path / "locked"
    folder.mkdir()
    folder.chmod(0o555)
    probe = folder / "probe"
    try:
        probe.write_bytes(b"")
    except PermissionError:
        return folder
    probe.unlink()
    folder.chmod(0o755)
    folder.rmdir()
    return None


@pytest.fixture(params=["missing_folder", "under_a_file", "a_folder", "read_only_folder"])
def bad_place(request, tmp_path):
    """(kind, folder to put the output name in, name is made a folder first?)"""
    kind = request.param
    if kind == "missing_folder":
        yield kind, tmp_path / "absent" / "deeper"
    elif kind == "under_a_file":
        (tmp_path / "some_file.txt").write_bytes(OLD)
        yield kind, tmp_path / "some_file.txt"
    elif kind == "a_folder":
        yield kind, tmp_path
    else:
        locked = _unwritable_folder(tmp_path)
        if locked is not None:
            yield kind, locked
            locked.chmod(0o755)
            return
        proc = Path("/proc")
        probe = proc / "layercalc_probe"
        try:  # as root: /proc is a folder where no file can be created
            probe.write_bytes(b"")
        except OSError:
            yield kind, proc
            return
        probe.unlink()
        pytest.skip("no folder here refuses to be written")


OUTPUT_COMMANDS = {  # name -> (arguments for an output path, suffix of that path)
    "run_report": (lambda t: ["run", WARMING, "-o", t], ".txt"),
    "run_json": (lambda t: ["run", WARMING, "--json", "-o", t], ".json"),
    "run_csv": (lambda t: ["run", WARMING, "--csv", t], ".csv"),
    "run_all_scenarios": (lambda t: ["run", WARMING, "--all-scenarios", "-o", t], ".txt"),
    "plot": (lambda t: ["plot", WARMING, "-o", t], ".png"),
    "sweep_csv": (lambda t: ["sweep", WARMING, "--vary", "omega_top=-1:1:1", "--quiet",
                             "--csv", t], ".csv"),
    "sweep_xlsx": (lambda t: ["sweep", WARMING, "--vary", "omega_top=-1:1:1", "--quiet",
                              "--xlsx", t], ".xlsx"),
    "sweep_plot": (lambda t: ["sweep", WARMING, "--vary", "omega_top=-1:1:1", "--quiet",
                              "--plot", t], ".png"),
    "new": (lambda t: ["new", "-o", t], ".layers"),
    "new_forced": (lambda t: ["new", "-o", t, "--force"], ".layers"),
    "export": (lambda t: ["export", WARMING, "-o", t], ".xlsx"),
    "import": (None, ".layers"),
}


@pytest.mark.parametrize("name", sorted(OUTPUT_COMMANDS))
def test_an_output_path_that_cannot_be_written(name, bad_place, capsys, tmp_path, request):
    kind, folder = bad_place
    arguments, suffix = OUTPUT_COMMANDS[name]
    if arguments is None:
        book = request.getfixturevalue("workbook")
        arguments = lambda t: ["import", book, "-o", t]  # noqa: E731
    target = folder / f"out{suffix}"
    if kind == "a_folder":
        target.mkdir()
    before = snapshot(tmp_path)
    code, out, err = cli(capsys, *arguments(target))
    assert_our_error(code, out, err, target)
    assert out == ""
    assert snapshot(tmp_path) == before  # nothing left behind, no temporary file
    if kind == "a_folder":
        assert target.is_dir() and list(target.iterdir()) == []
    else:
        assert not target.exists()


def test_several_outputs_are_written_all_or_none(capsys, tmp_path):
    """A later output that cannot be written takes back the earlier ones of the same run."""
    table = tmp_path / "layers.csv"
    code, out, err = cli(capsys, "run", WARMING, "--csv", table, "-o", tmp_path / "no" / "r.txt")
    assert_our_error(code, out, err, tmp_path / "no" / "r.txt")
    assert list(tmp_path.iterdir()) == []
    table.write_bytes(OLD)
    code, out, err = cli(capsys, "run", WARMING, "--csv", table, "-o", tmp_path)
    assert_our_error(code, out, err, tmp_path)
    assert table.read_bytes() == OLD and list(tmp_path.iterdir()) == [table]
    code, out, err = cli(capsys, "sweep", WARMING, "--vary", "omega_top=-1:1:1", "--quiet",
                         "--csv", tmp_path / "s.csv", "--xlsx", tmp_path / "s.xlsx",
                         "--plot", tmp_path / "no" / "s.png")
    assert_our_error(code, out, err, tmp_path / "no" / "s.png")
    assert list(tmp_path.iterdir()) == [table] and table.read_bytes() == OLD
    # and when every path is fine, every file is written
    code, _, err = cli(capsys, "run", WARMING, "--csv", table, "-o", tmp_path / "r.txt")
    assert code == 0, err
    assert table.read_bytes().startswith(b"p_bottom,") and (tmp_path / "r.txt").is_file()


def test_new_refuses_an_existing_file_without_force(capsys, tmp_path):
    target = tmp_path / "mine.layers"
    target.write_bytes(OLD)
    code, out, err = cli(capsys, "new", "-o", target)
    assert_our_error(code, out, err, target, "--force")
    assert target.read_bytes() == OLD and list(tmp_path.iterdir()) == [target]


# ---------------------------------------------------------------- bad workbooks
def _bad_workbooks(folder: Path, good: Path) -> dict[str, Path]:
    made = {}
    made["text"] = folder / "text.xlsx"
    made["text"].write_text("p_bottom,p_top,T\n1000,850,10\n", encoding="utf-8")
    made["truncated"] = folder / "truncated.xlsx"
    data = good.read_bytes()
    made["truncated"].write_bytes(data[: len(data) // 2])
    made["zip_without_a_workbook"] = folder / "other.xlsx"
    with zipfile.ZipFile(made["zip_without_a_workbook"], "w") as archive:
        archive.writestr("readme.txt", "not a workbook")
    made["missing"] = folder / "absent.xlsx"
    return made


def test_import_of_a_bad_workbook_writes_nothing(workbook, capsys, tmp_path):
    books = tmp_path / "books"
    books.mkdir()
    for kind, book in _bad_workbooks(books, workbook).items():
        held = snapshot(books)
        out_dir = tmp_path / kind
        out_dir.mkdir()
        code, out, err = cli(capsys, "import", book, "-o", out_dir / "new.layers")
        assert_our_error(code, out, err, book)
        assert list(out_dir.iterdir()) == [], kind
        kept = out_dir / "kept.layers"
        kept.write_bytes(OLD)
        code, out, err = cli(capsys, "import", book, "-o", kept, "--force")
        assert_our_error(code, out, err, book)
        assert kept.read_bytes() == OLD and list(out_dir.iterdir()) == [kept], kind
        for command in ("check", "run"):  # a workbook as CASE: refused the same way
            code, out, err = cli(capsys, command, book)
            assert_our_error(code, out, err, book)
        assert snapshot(books) == held  # the workbooks themselves are untouched


# ---------------------------------------------------------------- interrupted writes
class _HalfWriter:
    """A file that takes the first half of what it is given, then fails."""

    def __init__(self, stream, failure, log):
        self.stream, self.failure, self.log = stream, failure, log

    def write(self, data):
        self.stream.write(data[: len(data) // 2])
        self.stream.flush()
        self.log.append(len(data) // 2)
        raise self.failure

    def __getattr__(self, name):
        return getattr(self.stream, name)

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.stream.close()
        return False


class _FailingWrites:
    """Stands in for `os` inside layercalc.files: the `fail_on`-th file opened there for
    writing fails half-way (disk full, or an interrupt); the others are written normally."""

    def __init__(self, failure, fail_on=1):
        self.failure, self.fail_on, self.opened, self.log = failure, fail_on, 0, []

    def fdopen(self, descriptor, *args, **kwargs):
        stream = os.fdopen(descriptor, *args, **kwargs)
        self.opened += 1
        if self.opened == self.fail_on:
            return _HalfWriter(stream, self.failure, self.log)
        return stream

    def __getattr__(self, name):
        return getattr(os, name)


DISK_FULL = OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))


@pytest.mark.parametrize("existing", [False, True], ids=["new_file", "existing_file"])
@pytest.mark.parametrize("name", ["run_report", "run_json", "run_csv", "plot", "sweep_csv",
                                  "new"])
def test_a_write_that_fails_half_way_leaves_the_destination_as_it_was(
        name, existing, capsys, tmp_path, monkeypatch):
    arguments, suffix = OUTPUT_COMMANDS[name]
    target = tmp_path / f"out{suffix}"
    if existing:
        target.write_bytes(OLD)
        arguments_used = arguments(target) + (["--force"] if name == "new" else [])
    else:
        arguments_used = arguments(target)
    before = snapshot(tmp_path)
    failing = _FailingWrites(DISK_FULL)
    monkeypatch.setattr(files, "os", failing)
    code, out, err = cli(capsys, *arguments_used)
    monkeypatch.undo()
    assert failing.log and failing.log[0] > 0  # the failure happened after a partial write
    assert_our_error(code, out, err, target, os.strerror(errno.ENOSPC))
    assert snapshot(tmp_path) == before  # old bytes (or no file), no temporary file


def test_a_failed_second_write_takes_back_the_first(capsys, tmp_path, monkeypatch):
    table, report = tmp_path / "layers.csv", tmp_path / "report.txt"
    for old in (None, OLD):
        if old is not None:
            table.write_bytes(old)
        before = snapshot(tmp_path)
        failing = _FailingWrites(DISK_FULL, fail_on=2)  # the CSV goes through, the report fails
        monkeypatch.setattr(files, "os", failing)
        code, out, err = cli(capsys, "run", WARMING, "--csv", table, "-o", report)
        monkeypatch.undo()
        assert failing.opened >= 2 and failing.log
        assert_our_error(code, out, err, report)
        assert snapshot(tmp_path) == before


def test_an_export_that_fails_half_way_leaves_the_destination_as_it_was(
        workbook, capsys, tmp_path, monkeypatch):
    from openpyxl.workbook.workbook import Workbook

    log = []

    def half_save(self, target):
        target.write(b"PK\x03\x04 half a workbook")
        log.append(target)
        raise DISK_FULL

    for existing in (False, True):
        target = tmp_path / "out.xlsx"
        if existing:
            target.write_bytes(OLD)
        before = snapshot(tmp_path)
        monkeypatch.setattr(Workbook, "save", half_save)
        code, out, err = cli(capsys, "export", WARMING, "-o", target)
        monkeypatch.undo()
        assert log, "the export did not reach the workbook writer"
        assert_our_error(code, out, err, target)
        assert snapshot(tmp_path) == before


def test_an_interrupt_in_the_middle_of_a_write_leaves_no_temporary_file(
        capsys, tmp_path, monkeypatch):
    target = tmp_path / "out.csv"
    target.write_bytes(OLD)
    monkeypatch.setattr(files, "os", _FailingWrites(KeyboardInterrupt()))
    with pytest.raises(KeyboardInterrupt):
        main(["run", str(WARMING), "--csv", str(target)])
    monkeypatch.undo()
    capsys.readouterr()
    assert target.read_bytes() == OLD  # the destination is untouched either way
    assert list(tmp_path.iterdir()) == [target]  # and the temporary file is gone
