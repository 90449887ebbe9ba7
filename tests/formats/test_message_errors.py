"""Exact text a user sees for bad coded messages: tests/formats/messages/NAME.{txt,bufr} ->
NAME.expected (stderr of `layercalc import`, paths shown as messages/NAME).

Regenerate the expected files only on purpose:  python -m tests.formats.test_message_errors --update
(the inputs and their origin: tests/formats/messages/README.md).
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

FOLDER = Path(__file__).resolve().parent / "messages"
CASES = sorted(p for p in FOLDER.iterdir() if p.suffix in (".txt", ".bufr"))


def imported(path: Path, output: Path) -> tuple[int, str]:
    """(exit status, stderr) of `layercalc import PATH -o OUTPUT`, paths shortened."""
    import contextlib
    import io

    from layercalc.cli.main import main

    err = io.StringIO()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(io.StringIO()):
        try:
            code = main(["import", str(path), "-o", str(output)])
        except SystemExit as stop:
            code = stop.code
    text = err.getvalue().replace(str(path), f"messages/{path.name}")
    return code, text.replace(str(output), "out.layers")


def test_there_are_cases():
    assert {p.stem for p in CASES} >= {"malformed_temp_group", "dewpoint_code_51_55",
                                        "truncated", "skipped_broken_report"}


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_message_error_text(path, tmp_path):
    if path.suffix == ".bufr":
        pytest.importorskip("eccodes")
    expected = path.with_suffix(".expected")
    assert expected.exists(), f"no {expected.name}: run python -m tests.formats.test_message_errors --update"
    output = tmp_path / "out.layers"
    code, got = imported(path, output)
    assert got == expected.read_text(encoding="utf-8")
    assert "Traceback" not in got and f"messages/{path.name}:" in got  # positioned
    is_error = any(" error: " in line for line in got.splitlines())
    # an error: exit status 1 and nothing written; a warning: status 0 and the file
    assert code == (1 if is_error else 0)
    assert output.exists() is not is_error


if __name__ == "__main__":
    if "--update" in sys.argv:
        import tempfile

        for case in CASES:
            with tempfile.TemporaryDirectory() as folder:
                _, text = imported(case, Path(folder) / "out.layers")
            case.with_suffix(".expected").write_text(text, encoding="utf-8")
            print(f"wrote {case.with_suffix('.expected').name}")
