"""Output files, written whole or not at all.

Every file layercalc writes goes to a temporary file in the target's folder and is renamed
over the target only when complete, so a reader never sees half a file and a failed write
leaves the old file as it was. Several outputs of one command are written all or none.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from layercalc.errors import OutputError

_HINT = "check that the folder exists and that you may write there"


def file_mode(path: Path) -> int:
    """The mode a replaced file keeps, or what a new file gets under the umask (a temporary
    file starts readable by its owner only)."""
    try:
        return path.stat().st_mode & 0o7777
    except OSError:
        umask = os.umask(0)
        os.umask(umask)
        return 0o666 & ~umask


def write_atomic(path: str | Path, data: bytes) -> None:
    """Write bytes to `path` through a temporary file in the same folder, then rename.
    Any failure (a full disk, an interrupt) removes the temporary file and leaves the target
    untouched; OS errors become OutputError naming the path."""
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    if path.is_dir():
        raise OutputError(f"cannot write {path}: it is a folder",
                          hint="give a file name, e.g. " + str(path / "out"))
    if not folder.is_dir():
        what = "is not a folder" if folder.exists() else "does not exist"
        raise OutputError(f"cannot write {path}: {folder} {what}", hint=_HINT)
    try:
        handle, temporary = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp",
                                             dir=folder)
    except OSError as exc:
        raise OutputError(f"cannot write {path}: {exc.strerror or exc}", hint=_HINT) from None
    try:
        with os.fdopen(handle, "wb") as stream:
            stream.write(data)
            stream.flush()
            os.fsync(stream.fileno())
        os.chmod(temporary, file_mode(path))
        os.replace(temporary, path)
    except BaseException as exc:
        try:
            os.unlink(temporary)
        except OSError:
            pass
        if isinstance(exc, OSError):
            raise OutputError(f"cannot write {path}: {exc.strerror or exc}",
                              hint=_HINT) from None
        raise


def write_text_atomic(path: str | Path, text: str) -> None:
    """Write text (UTF-8) atomically; see write_atomic."""
    write_atomic(path, text.encode("utf-8"))


def write_all_or_none(outputs: list[tuple[str | Path, bytes]]) -> None:
    """Write several files, each atomically; if one cannot be written, those this call has
    already written get their old bytes back, or are removed when they were new."""
    written: list[tuple[Path, bytes | None]] = []
    try:
        for path, data in outputs:
            target = Path(path)
            try:
                old = target.read_bytes() if target.is_file() else None
            except OSError as exc:
                raise OutputError(f"cannot replace {path}: {exc.strerror}") from None
            write_atomic(target, data)
            written.append((target, old))
    except BaseException:
        for target, old in reversed(written):
            try:
                if old is None:
                    target.unlink(missing_ok=True)
                else:
                    write_atomic(target, old)
            except (OSError, OutputError):
                pass  # the newer file is complete (atomic); the first error is the one to tell
        raise


def write_through_temporary(path: str | Path, writer) -> None:
    """For writers that need a file name (netCDF): `writer(temporary_path)` writes a
    temporary file in the target's folder, which is renamed over `path` when the writer
    returns; any failure removes it and leaves the target untouched."""
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    if path.is_dir():
        raise OutputError(f"cannot write {path}: it is a folder",
                          hint="give a file name, e.g. " + str(path / "out"))
    if not folder.is_dir():
        what = "is not a folder" if folder.exists() else "does not exist"
        raise OutputError(f"cannot write {path}: {folder} {what}", hint=_HINT)
    try:
        handle, temporary = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp",
                                             dir=folder)
        os.close(handle)
    except OSError as exc:
        raise OutputError(f"cannot write {path}: {exc.strerror or exc}", hint=_HINT) from None
    try:
        writer(temporary)
        os.chmod(temporary, file_mode(path))
        os.replace(temporary, path)
    except BaseException as exc:
        try:
            os.unlink(temporary)
        except OSError:
            pass
        if isinstance(exc, OSError):
            raise OutputError(f"cannot write {path}: {exc.strerror or exc}",
                              hint=_HINT) from None
        raise
