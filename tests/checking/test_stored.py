"""Checked sheets kept between runs (checking/stored.py, state_json.py): a third run of the
same text reads the sheet an earlier run checked instead of parsing and checking again, with
output identical to a run that keeps and reuses nothing; a changed text, another file name,
a corrupt file and a file or folder others may write (or another user owns) mean a fresh
check. A kept file whose title was altered shows whether it was read at all."""

from __future__ import annotations

import os
import json
import subprocess
import sys
from pathlib import Path

import pytest

import layercalc

PACKAGE_ROOT = Path(layercalc.__file__).resolve().parent.parent
CASE = PACKAGE_ROOT / "worked_cases" / "midlevel_warming.layers"
WARNED = PACKAGE_ROOT / "tests" / "errors" / "slip_wind_speed.layers"  # warnings only
PROBE = ("import sys, runpy\n"
         "code = 0\n"
         "try:\n"
         "    runpy.run_module('layercalc', run_name='__main__', alter_sys=True)\n"
         "except SystemExit as exc:\n"
         "    code = exc.code\n"
         "finally:\n"
         "    sys.stdout.flush()\n"
         "    parsed = 'lark' in sys.modules\n"
         "    sys.stderr.write(f'\\nPROBE {code} parsed={parsed}')\n")

pytestmark = pytest.mark.skipif(not hasattr(os, "getuid"), reason="needs file owners")


def run(case: Path, cache: Path, *args: str, **env) -> tuple[str, str, str]:
    """stdout, stderr and the probe line ("PROBE <exit> parsed=<lark loaded>")."""
    full_env = dict(os.environ, LAYERCALC_CACHE_DIR=str(cache), **env)
    full_env["PYTHONPATH"] = os.pathsep.join([str(PACKAGE_ROOT),
                                              full_env.get("PYTHONPATH", "")])
    done = subprocess.run([sys.executable, "-c", PROBE, "run", str(case), *args],
                          env=full_env, capture_output=True, text=True, timeout=300)
    err, _, probe = done.stderr.rpartition("\nPROBE ")
    return done.stdout, err, probe


def reference(case: Path, tmp_path: Path, *args: str) -> tuple[str, str]:
    """The output with nothing reused: no unit-check record, so no kept sheet either."""
    out, err, probe = run(case, tmp_path / "unused", *args, LAYERCALC_NO_DIMENSION_CACHE="1")
    assert "parsed=True" in probe
    return out, err


def prepare(case: Path, cache: Path, *args: str) -> Path:
    """Two runs: the first checks with sympy, the second reuses it and keeps the sheet."""
    cache.mkdir(mode=0o700, exist_ok=True)
    for _ in range(2):
        assert "parsed=True" in run(case, cache, *args)[2]
    kept = list(cache.glob("checked-*.json"))
    assert len(kept) == 1
    return kept[0]


@pytest.mark.parametrize("case, args", [(CASE, ()), (CASE, ("--json",)),
                                        (CASE, ("--all-scenarios",)), (WARNED, ())])
def test_a_kept_sheet_gives_identical_output_without_parsing(case, args, tmp_path):
    want = reference(case, tmp_path, *args)
    cache = tmp_path / "cache"
    prepare(case, cache, *args)
    for _ in range(2):  # the third run reads it; the fourth too (no rewrite needed)
        out, err, probe = run(case, cache, *args)
        assert probe.startswith("0 ")
        assert "parsed=False" in probe  # lark not even imported: no parse, no check
        assert (out, err) == want
    if case == WARNED:
        assert "warning" in want[1] + want[0]  # the notices are still printed


def test_a_changed_text_or_another_name_is_checked_afresh(tmp_path):
    cache = tmp_path / "cache"
    prepare(CASE, cache)
    changed = tmp_path / "changed.layers"
    changed.write_text(CASE.read_text(encoding="utf-8").replace(
        "title \"", "title \"Changed: ", 1), encoding="utf-8")
    want = reference(changed, tmp_path)
    assert want[0] != reference(CASE, tmp_path)[0]
    out, err, probe = run(changed, cache)
    assert "parsed=True" in probe and (out, err) == want
    same_text = tmp_path / "same.layers"  # same text, another name: messages show the name
    same_text.write_text(CASE.read_text(encoding="utf-8"), encoding="utf-8")
    out, err, probe = run(same_text, cache)
    assert "parsed=True" in probe and (out, err) == reference(same_text, tmp_path)


def tamper(kept: Path) -> None:
    """Give the kept sheet another title (the report prints it)."""
    data = json.loads(kept.read_text(encoding="utf-8"))
    sheets = [entry for entry in data["sheet"]["objects"]
              if entry.get("o", "").endswith(":CheckedSheet")]
    title = next(pair for pair in sheets[-1]["v"] if pair[0] == "title")
    title[1] = "A title written into the cache"
    kept.write_text(json.dumps(data), encoding="utf-8")


@pytest.mark.parametrize("folder_mode, file_mode, foreign, loaded", [
    (0o700, 0o666, False, False),  # a file others may write
    (0o700, 0o620, False, False),  # a file the group may write
    (0o770, 0o600, False, False),  # a folder the group may write: no cache at all
    (0o700, 0o600, True, False),   # a file another user owns
    (0o700, 0o600, False, True),   # control: this user's own private file is read
])
def test_a_kept_sheet_is_read_only_when_private(folder_mode, file_mode, foreign, loaded,
                                                 tmp_path):
    if foreign and os.getuid() != 0:
        pytest.skip("giving a file to another user needs root")
    want = reference(CASE, tmp_path)
    cache = tmp_path / "cache"
    kept = prepare(CASE, cache)
    tamper(kept)
    os.chmod(kept, file_mode)
    if foreign:
        os.chown(kept, 65534, 65534)
    os.chmod(cache, folder_mode)
    out, err, probe = run(CASE, cache)
    # the last row is the control: it shows that a file read back would be noticed
    assert ("A title written into the cache" in out) is loaded
    if not loaded:
        assert "parsed=True" in probe and (out, err) == want


def test_a_corrupt_or_linked_file_is_checked_afresh(tmp_path):
    want = reference(CASE, tmp_path)
    cache = tmp_path / "cache"
    kept = prepare(CASE, cache)
    good = kept.read_bytes()
    kept.write_bytes(good[: len(good) // 2])  # cut short
    out, err, probe = run(CASE, cache)
    assert "parsed=True" in probe and (out, err) == want
    elsewhere = tmp_path / "elsewhere.pickle"
    elsewhere.write_bytes(good)
    kept.unlink(missing_ok=True)
    kept.symlink_to(elsewhere)
    out, err, probe = run(CASE, cache)
    assert "parsed=True" in probe and (out, err) == want


def test_a_big_text_is_not_kept(tmp_path):
    from layercalc.checking.stored import MAX_TEXT_CHARS

    rows = "\n".join(f"{1000 - i * 0.08:.2f} {1000 - (i + 1) * 0.08:.2f} -20 0.1"
                     for i in range(10_000))
    case = tmp_path / "big.layers"
    case.write_text("layers\n p_bottom [hPa] p_top [hPa] T [degC] div [1e-5 s^-1]\n"
                    f"{rows}\nend\n", encoding="utf-8")
    assert len(case.read_text(encoding="utf-8")) > MAX_TEXT_CHARS
    cache = tmp_path / "cache"
    cache.mkdir(mode=0o700)
    for _ in range(3):
        assert "parsed=True" in run(case, cache, "--json")[2]
    assert list(cache.glob("checked-*")) == [] and (cache / "dimensions-v1.json").exists()
