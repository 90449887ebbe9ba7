"""Reusing an earlier sympy unit check (dimensions.py): the same text gives the same
results without importing sympy's unit systems; other text is checked with sympy; a cache
that does not fit is not trusted."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from layercalc.language.dimensions import PlainDimension

pytestmark = pytest.mark.slow  # see pyproject.toml: deselect with -m 'not slow'

ROOT = Path(__file__).resolve().parents[2]
CASE = ROOT / "worked_cases" / "midlevel_warming.layers"
PROBE = ("import sys, io, contextlib\n"
         "from layercalc.cli.main import main\n"
         "out = io.StringIO()\n"
         "with contextlib.redirect_stdout(out):\n"
         "    code = main([sys.argv[2], sys.argv[1], *(['--json'] if sys.argv[2] == 'run' "
         "else [])])\n"
         "import layercalc.language.units as U\n"
         "print(repr((code, U.source(), 'sympy.physics.units' in sys.modules)))\n"
         "print(out.getvalue())\n")


def run(case: Path, cache: Path, command: str = "run", **env):
    done = subprocess.run([sys.executable, "-c", PROBE, str(case), command],
                          capture_output=True,
                          text=True, timeout=120, cwd=ROOT,
                          env={**os.environ, "LAYERCALC_CACHE_DIR": str(cache), **env})
    assert done.returncode == 0, done.stderr
    first, _, rest = done.stdout.partition("\n")
    return eval_tuple(first), rest


def eval_tuple(text: str):
    code, source, imported = text.strip("()").split(", ")
    return int(code), source.strip("'"), imported == "True"


def test_second_run_reuses_the_check_and_gives_identical_output(tmp_path):
    state, first = run(CASE, tmp_path)
    assert state == (0, "sympy", True)
    state, second = run(CASE, tmp_path)
    assert state == (0, "cache", False)  # sympy's unit systems were not imported
    assert second == first
    assert json.loads(second)["summary"]["surface_pressure_tendency"] is not None


def test_check_checks_with_sympy_once_and_shares_the_record_with_run(tmp_path):
    state, printed = run(CASE, tmp_path, "check")
    assert state == (0, "sympy", True) and printed.strip() == "ok"  # the first check: sympy
    state, printed = run(CASE, tmp_path, "check")
    assert state == (0, "cache", False) and printed.strip() == "ok"
    state, _ = run(CASE, tmp_path, "run")
    assert state == (0, "cache", False)  # run reuses what check recorded


def test_changed_text_is_checked_with_sympy_again(tmp_path):
    run(CASE, tmp_path)
    changed = tmp_path / "changed.layers"
    changed.write_text(CASE.read_text(encoding="utf-8") + "\n# one more comment\n",
                       encoding="utf-8")
    state, _ = run(changed, tmp_path)
    assert state == (0, "sympy", True)


def test_a_cache_that_does_not_fit_is_not_trusted(tmp_path):
    run(CASE, tmp_path)
    path = tmp_path / "dimensions-v1.json"
    data = json.loads(path.read_text(encoding="utf-8"))
    data["table"]["units"]["hPa"] = {"length": "1"}  # a wrong exponent for a pressure
    path.write_text(json.dumps(data), encoding="utf-8")
    state, _ = run(CASE, tmp_path)
    assert state == (0, "sympy", True)


def test_the_cache_can_be_switched_off(tmp_path):
    run(CASE, tmp_path)
    state, _ = run(CASE, tmp_path, LAYERCALC_NO_DIMENSION_CACHE="1")
    assert state == (0, "sympy", True)


@pytest.mark.parametrize("a, b, product", [
    ({"length": 1}, {"time": -1}, {"length": 1, "time": -1}),
    ({"mass": 1, "length": -1, "time": -2}, {"length": 1}, {"mass": 1, "time": -2}),
    ({"length": 2}, {"length": 2}, {"length": 4}),
])
def test_plain_dimension_algebra(a, b, product):
    # exponent arithmetic of dimensional analysis (common practice, no source)
    assert PlainDimension(a) * PlainDimension(b) == PlainDimension(product)
    assert (PlainDimension(product) / PlainDimension(b)) == PlainDimension(a)
    assert PlainDimension({"length": 2}) ** 0.5 == PlainDimension({"length": 1})
    assert 1 / PlainDimension({"time": 1}) == PlainDimension({"time": -1})
