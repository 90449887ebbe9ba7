"""layercalc works from an installed wheel (not only from a checkout): the grammar and the
worked cases ship inside the package."""

from __future__ import annotations

import os
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

pytestmark = pytest.mark.slow  # see pyproject.toml: deselect with -m 'not slow'

ROOT = Path(__file__).resolve().parent.parent


@pytest.fixture(scope="module")
def wheel(tmp_path_factory):
    out = tmp_path_factory.mktemp("wheel")
    done = subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "-q", "-w",
                           str(out), str(ROOT)], capture_output=True, text=True, timeout=600)
    assert done.returncode == 0, done.stderr
    wheels = list(out.glob("layercalc-*.whl"))
    assert len(wheels) == 1
    return wheels[0]


def test_wheel_contains_grammar_and_worked_cases(wheel):
    names = zipfile.ZipFile(wheel).namelist()
    assert "layercalc/grammar/layers.lark" in names
    assert "layercalc/worked_cases/midlevel_warming.layers" in names
    assert not any(n.startswith("tests/") for n in names)


def test_installed_wheel_parses_and_runs_from_another_folder(wheel, tmp_path):
    target = tmp_path / "site"
    done = subprocess.run([sys.executable, "-m", "pip", "install", "--no-deps", "-q",
                           "--target", str(target), str(wheel)], capture_output=True,
                          text=True, timeout=600)
    assert done.returncode == 0, done.stderr
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    env = dict(os.environ, PYTHONPATH=str(target), LAYERCALC_CACHE_DIR="")
    code = ("import layercalc, pathlib; "
            "assert pathlib.Path(layercalc.__file__).is_relative_to(pathlib.Path(r'%s')); "
            "from layercalc.language.parser import grammar_text; "
            "s = layercalc.loads(open(r'%s').read()); "
            "print(round(s.evaluate().cells['column_thickness']))"
            % (target, ROOT / "worked_cases" / "standard_atmosphere.layers"))
    done = subprocess.run([sys.executable, "-c", code], cwd=elsewhere, env=env,
                          capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    assert int(done.stdout) > 10000
    demo = subprocess.run([sys.executable, "-m", "layercalc", "demo"], cwd=elsewhere, env=env,
                          capture_output=True, text=True, timeout=120)
    assert demo.returncode == 0, demo.stderr
    assert "caution" in demo.stdout.lower()
