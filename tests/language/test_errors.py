"""Exact error text for bad inputs: tests/errors/NAME.layers -> NAME.expected.

A file without errors gives its warnings instead (what `layercalc check` prints).

Regenerate the expected files only on purpose:  python -m tests.language.test_errors --update
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

import layercalc

FOLDER = Path(__file__).resolve().parents[1] / "errors"
CASES = sorted(FOLDER.glob("*.layers"))


def formatted(path: Path) -> str:
    problems = layercalc.problems(path) or layercalc.load(path).check()
    text = "\n".join(p.format() for p in problems)
    return text.replace(str(path), f"errors/{path.name}") + "\n"


def test_there_are_cases():
    assert len(CASES) >= 20


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_error_text(path):
    expected = path.with_suffix(".expected")
    assert expected.exists(), f"no {expected.name}: run python -m tests.language.test_errors --update"
    got = formatted(path)
    assert got.strip(), "the file should have a problem"
    assert got == expected.read_text(encoding="utf-8")
    assert "Traceback" not in got
    assert f"errors/{path.name}:" in got  # every message has a file position


if __name__ == "__main__":
    if "--update" in sys.argv:
        for case in CASES:
            case.with_suffix(".expected").write_text(formatted(case), encoding="utf-8")
            print(f"wrote {case.with_suffix('.expected').name}")
