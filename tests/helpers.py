"""Small helpers shared by the tests (not fixtures: plain functions)."""

from __future__ import annotations

import os
import subprocess
import sys
import textwrap
from pathlib import Path

import layercalc

BASE_TABLE = """\
layers
  p_bottom [hPa]  p_top [hPa]  T [degC]  div [1e-5 s^-1]
  1000  850   14.0  -1.0
  850   700    6.0  -0.6
  700   500   -6.0   0.0
  500   300  -25.0   0.8
  300   200  -45.0   1.0
end
"""


def sheet(body: str = "", table: str = BASE_TABLE):
    """A sheet from the base table plus extra lines."""
    return layercalc.loads(table + textwrap.dedent(body), name="test.layers")


def error_of(text: str) -> layercalc.LayercalcError:
    try:
        layercalc.loads(textwrap.dedent(text), name="test.layers")
    except layercalc.LayercalcError as exc:
        return exc
    raise AssertionError("expected a LayercalcError")


# ---------------------------------------------------------------- the command line
PACKAGE_ROOT = Path(layercalc.__file__).resolve().parent.parent


def cli(capsys, *args) -> tuple[int, str, str]:
    """`layercalc ARGS` in this process: (exit status, stdout, stderr); a usage error's
    SystemExit becomes its exit status."""
    from layercalc.cli.main import main

    try:
        code = main([str(a) for a in args])
    except SystemExit as stop:
        code = stop.code
    out, err = capsys.readouterr()
    return code, out, err


def process(*args, cwd: Path) -> subprocess.CompletedProcess:
    """`python -m layercalc ARGS` in another process, importing this checkout's layercalc."""
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join([str(PACKAGE_ROOT), env.get("PYTHONPATH", "")])
    return subprocess.run([sys.executable, "-m", "layercalc", *map(str, args)], cwd=cwd,
                          env=env, capture_output=True, text=True, timeout=300)


def optional(*modules: str):
    """Import optional packages (the grid and grib extras) or skip the test module; in CI
    (.ci/run sets LAYERCALC_REQUIRE_GRID=1) a missing package is a failure, not a skip."""
    import importlib
    import os

    import pytest

    loaded = []
    for name in modules:
        try:
            loaded.append(importlib.import_module(name))
        except ImportError:
            if os.environ.get("LAYERCALC_REQUIRE_GRID") == "1":
                raise
            pytest.skip(f"needs {name} (pip install 'layercalc[grib]')",
                        allow_module_level=True)
    return loaded[0] if len(loaded) == 1 else loaded


def refused_in_both_places(text: str, words: str, evaluate) -> None:
    """`evaluate(sheet)` of `text` raises our error with `words` and a position, and
    `layercalc check` (layercalc.problems) finds exactly that problem too."""
    import pytest

    with pytest.raises(layercalc.LayercalcError) as caught:
        evaluate(layercalc.loads(text, "case.layers"))
    assert words in caught.value.message
    assert caught.value.span is not None
    found = layercalc.problems(text, is_text=True)
    assert [words in p.message for p in found] == [True]
