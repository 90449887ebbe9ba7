"""Checked sheets kept between runs of the command line.

Parsing and checking a sheet (the user's text, the built-in formulas, the unit texts they
read) takes a few tens of milliseconds at every start. When the command line loads a text
whose sympy unit check it already reuses (language/dimensions.py), the sheet checked in an
earlier run from the very same text, under the same file name, by the same layercalc code
is read back instead (`load`), and a sheet checked afresh in that state is kept (`keep`).

The key is a hash of the unit-check key (layercalc version, grammar, text), the file name
as given (messages and notices show it), the Python and numpy versions and the size and
modification time of every file of the package, so an edited checkout never reads a sheet
its old code checked. The file is JSON (state_json.py: no pickle; reading it creates only
layercalc's own objects), and it holds the sheet's text, so it is kept like the compiled
grammar (language/parser.py): read only from the private cache folder and only when the
file itself is this user's alone (not group- or world-writable, no symlink), written with
mode 0600. Anything else, or anything that fails to read, means a fresh check. Nothing
here raises.
"""

from __future__ import annotations

import hashlib
import os
import sys
from pathlib import Path

from layercalc.checking.checked import CheckedSheet
from layercalc.source import Source

PREFIX = "checked-"
SUFFIX = ".json"
MAX_FILES = 64  # sheets kept; the least recently written are removed
# Only small sheets are kept: a text of 100,000 layers (2.6 MB) would need a 14 MB file, and
# its table is read at numpy speed anyway (language/table_body.py).
MAX_TEXT_CHARS = 200_000
MAX_FILE_BYTES = 4_000_000
_PACKAGE = Path(__file__).resolve().parents[1]
_STAMP: list[str] = []


def code_stamp() -> str:
    """Size and modification time of every file of the package (and the checkout's grammar)."""
    if not _STAMP:
        digest = hashlib.sha256()
        for folder, dirs, files in os.walk(_PACKAGE):
            dirs[:] = sorted(d for d in dirs if d != "__pycache__")
            for name in sorted(files):
                if name.endswith((".py", ".lark")):
                    status = os.stat(os.path.join(folder, name))
                    digest.update(f"{folder}/{name}:{status.st_size}:{status.st_mtime_ns}\n"
                                  .encode("utf-8", "surrogatepass"))
        grammar = _PACKAGE.parent / "grammar" / "layers.lark"
        if grammar.is_file():
            status = grammar.stat()
            digest.update(f"{grammar}:{status.st_size}:{status.st_mtime_ns}".encode(
                "utf-8", "surrogatepass"))
        _STAMP.append(digest.hexdigest())
    return _STAMP[0]


def stored_key(check_key: str, table: dict, source: Source) -> str:
    import json

    import numpy

    digest = hashlib.sha256()
    for part in ("checked-sheet-json-v1", check_key, json.dumps(table, sort_keys=True),
                 source.name, sys.version, numpy.__version__, code_stamp()):
        digest.update(part.encode("utf-8", "surrogatepass"))
        digest.update(b"\0")
    return digest.hexdigest()


def _path(key: str) -> Path | None:
    from layercalc.language.parser import cache_dir

    folder = cache_dir()  # None unless private to this user
    return None if folder is None else folder / f"{PREFIX}{key[:40]}{SUFFIX}"


def load(check_key: str, table: dict, source: Source) -> CheckedSheet | None:
    """The sheet kept for this text, or None (then check it afresh). The units it brings
    (those read from text in the run that kept it) are added to unit_text's."""
    from layercalc.language.parser import private
    from layercalc.language.unit_text import add_units_read
    from layercalc.language.units import Unit

    try:
        path = _path(stored_key(check_key, table, source))
        if path is None or path.is_symlink() or not path.is_file() or not private(path):
            return None
        import json

        from layercalc.checking.state_json import from_data

        data = json.loads(path.read_text(encoding="utf-8"))
        sheet_data = data["sheet"]
        sheet, units = from_data(sheet_data), from_data(data["units"])
    except Exception:  # noqa: BLE001 - an unreadable or stale file: check afresh
        return None
    if not isinstance(sheet, CheckedSheet) or not isinstance(units, dict) or \
            not all(isinstance(k, str) and isinstance(v, Unit) for k, v in units.items()) or \
            sheet.document is None or sheet.document.source.text != source.text or \
            sheet.document.source.name != source.name:
        return None
    add_units_read(units)
    _keep_at_exit(path, sheet_data, set(units))
    return sheet


def keep(check_key: str, table: dict, source: Source, sheet: CheckedSheet) -> None:
    """Keep a sheet just checked with the reused unit check: written down now, before anything
    evaluates it (its caches of evaluation plans and assessments are empty), written when
    this process ends with the units it read from text by then. Best effort, never raises."""
    try:
        from layercalc.checking.state_json import to_data

        sheets = [sheet, *sheet.option_variants.values()]
        if any(s.evaluation_plans or s.uncertainty for s in sheets):
            return  # not as checked: keep nothing
        if len(source.text) > MAX_TEXT_CHARS:
            return
        path = _path(stored_key(check_key, table, source))
        if path is not None:
            _keep_at_exit(path, to_data(sheet), None)
    except Exception:  # noqa: BLE001 - something state_json does not write: keep nothing
        return


def _keep_at_exit(path: Path, sheet_data: dict, had: set | None) -> None:
    import atexit

    atexit.register(_write, path, sheet_data, had)


def _write(path: Path, sheet_data: dict, had: set | None) -> None:
    """Write the sheet and the units read; when it was read back (`had`: the units it
    brought), only if this run read units it did not bring."""
    try:
        import json
        import tempfile

        from layercalc.checking.state_json import to_data
        from layercalc.language.unit_text import units_read

        units = units_read()
        if had is not None and set(units) <= had:
            return
        data = json.dumps({"sheet": sheet_data, "units": to_data(units)},
                          separators=(",", ":")).encode("utf-8")
        if len(data) > MAX_FILE_BYTES:
            return
        handle, temporary = tempfile.mkstemp(prefix=PREFIX, suffix=".tmp", dir=path.parent)
        try:
            with os.fdopen(handle, "wb") as stream:  # mkstemp: mode 0600
                stream.write(data)
            os.replace(temporary, path)
        except BaseException:
            os.unlink(temporary)
            raise
        _prune(path.parent)
    except Exception:  # noqa: BLE001 - a cache that cannot be written is no error of the user
        pass


def _prune(folder: Path) -> None:
    kept = sorted(folder.glob(f"{PREFIX}*{SUFFIX}"), key=lambda p: p.stat().st_mtime_ns)
    for old in kept[:-MAX_FILES]:
        old.unlink(missing_ok=True)
