"""The compiled grammar's cache (language/parser.py): lark reads it back with pickle, which
runs code, so layercalc must never read it from a folder or a file that another user could
have written. A pickle that would create a marker folder when loaded is planted where the
cache lives; the marker shows whether it was loaded.
"""

from __future__ import annotations

import hashlib
import os
import pickle
import subprocess
import sys
from pathlib import Path

import pytest

import layercalc
from layercalc.language.parser import cache_dir, grammar_text, private

PACKAGE_ROOT = Path(layercalc.__file__).resolve().parent.parent
CASE = """\
layers
  p_bottom [hPa]  p_top [hPa]  T [degC]
  1000  850   14.0
end
"""

pytestmark = pytest.mark.skipif(not hasattr(os, "getuid"), reason="needs file owners")


class _MakesFolder:
    """Unpickling this calls os.mkdir(path): the proof that the pickle was loaded."""

    def __init__(self, path: Path) -> None:
        self.path = path

    def __reduce__(self):
        return (os.mkdir, (str(self.path),))


def _plant(folder: Path, marker: Path) -> Path:
    """The cache file layercalc would hand lark, holding the marker pickle where lark reads
    its first pickle (after one line)."""
    digest = hashlib.sha256(grammar_text().encode()).hexdigest()[:16]
    planted = folder / f"grammar-{digest}.lark"
    planted.write_bytes(b"0\n" + pickle.dumps(_MakesFolder(marker)))
    return planted


def _check_in_a_process(case: Path, folder: Path) -> subprocess.CompletedProcess:
    env = dict(os.environ, LAYERCALC_CACHE_DIR=str(folder))
    env["PYTHONPATH"] = os.pathsep.join([str(PACKAGE_ROOT), env.get("PYTHONPATH", "")])
    return subprocess.run([sys.executable, "-m", "layercalc", "check", str(case)], env=env,
                          capture_output=True, text=True, timeout=300)


@pytest.mark.parametrize("folder_mode, file_mode, loaded", [
    (0o777, 0o644, False),   # a world-writable folder
    (0o1777, 0o644, False),  # world-writable with the sticky bit, as /tmp
    (0o770, 0o644, False),   # a group-writable folder
    (0o700, 0o666, False),   # a private folder, but a file others may write
    (0o700, 0o644, True),    # private folder and file: this user's own cache is read
])
def test_a_pickle_is_read_only_from_a_private_cache(folder_mode, file_mode, loaded, tmp_path):
    folder = tmp_path / "cache"
    folder.mkdir()
    marker = tmp_path / "the pickle was loaded"
    planted = _plant(folder, marker)
    os.chmod(planted, file_mode)
    os.chmod(folder, folder_mode)
    case = tmp_path / "case.layers"
    case.write_text(CASE, encoding="utf-8")
    done = _check_in_a_process(case, folder)
    assert done.returncode == 0 and done.stdout.strip().endswith("ok"), done.stderr
    # the last row is the control: it shows that a loaded pickle leaves the marker
    assert marker.exists() is loaded


def test_a_folder_others_may_write_is_no_cache(tmp_path, monkeypatch):
    folder = tmp_path / "shared"
    folder.mkdir()
    os.chmod(folder, 0o777)
    monkeypatch.setenv("LAYERCALC_CACHE_DIR", str(folder))
    assert not private(folder) and cache_dir() is None
    os.chmod(folder, 0o700)
    assert private(folder) and cache_dir() == folder
