"""Output files, written whole or not at all.

Every file layercalc writes goes to a temporary file in the target's folder and is renamed
over the target only when complete, so a reader never sees half a file and a failed write
leaves the old file as it was. Several outputs of one command are written all or none.

A temporary file is named `.NAME.PID.XXXXXXXX.tmp` (PID: the writing process). A writer
killed outright (kill -9, a power cut) cannot remove its own; the next write to that
folder removes those whose process is gone or that are older than an hour, and only
regular files of this user with that naming.

A read-only target (no write bit) is not replaced unless the caller allows it (the
commands' --force): its owner made it so on purpose.
"""

from __future__ import annotations

import os
import re
import stat
import tempfile
import time
from pathlib import Path

from layercalc.errors import OutputError

_HINT = "check that the folder exists and that you may write there"
STALE_SECONDS = 3600  # a temporary file this old is a leftover whatever its process
_TEMPORARY = re.compile(r"^\..+?\.(?:(\d+)\.)?[a-z0-9_]{8}\.tmp$")


def temporary_prefix(path: Path) -> str:
    return f".{path.name}.{os.getpid()}."


def _process_gone(pid: int) -> bool:
    if pid == os.getpid():
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return True
    except OSError:  # alive, another user's
        return False
    return False


def remove_stale_temporaries(folder: Path, now: float | None = None) -> list[Path]:
    """Remove the temporary files of killed writers in `folder` (see the module docstring);
    returns those removed. Errors are ignored: this is tidying, never the write itself."""
    now = time.time() if now is None else now
    removed = []
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return removed
    for entry in entries:
        found = _TEMPORARY.match(entry.name)
        if not found:
            continue
        try:
            info = entry.stat(follow_symlinks=False)
            if not stat.S_ISREG(info.st_mode) or info.st_uid != os.getuid():
                continue
            old = now - info.st_mtime > STALE_SECONDS
            if old or (found[1] is not None and _process_gone(int(found[1]))):
                os.unlink(entry.path)
                removed.append(Path(entry.path))
        except OSError:
            continue
    return removed


def refuse_read_only(path: Path, replace_read_only: bool) -> None:
    """A target without any write bit is refused unless the command allows it (--force)."""
    try:
        mode = path.stat().st_mode
    except OSError:
        return
    if stat.S_ISREG(mode) and not mode & 0o222 and not replace_read_only:
        raise OutputError(f"cannot write {path}: the file is read-only, so layercalc does not "
                          "replace it; nothing was written",
                          hint=f"make it writable (chmod u+w {path}), give --force where the "
                               "command has it, or choose another name")


def _prepare(path: Path, replace_read_only: bool) -> Path:
    """The target's folder, after the checks every write makes."""
    folder = path.parent if str(path.parent) else Path(".")
    if path.is_dir():
        raise OutputError(f"cannot write {path}: it is a folder",
                          hint="give a file name, e.g. " + str(path / "out"))
    if not folder.is_dir():
        what = "is not a folder" if folder.exists() else "does not exist"
        raise OutputError(f"cannot write {path}: {folder} {what}", hint=_HINT)
    refuse_read_only(path, replace_read_only)
    remove_stale_temporaries(folder)
    return folder


def file_mode(path: Path) -> int:
    """The mode a replaced file keeps, or what a new file gets under the umask (a temporary
    file starts readable by its owner only)."""
    try:
        return path.stat().st_mode & 0o7777
    except OSError:
        umask = os.umask(0)
        os.umask(umask)
        return 0o666 & ~umask


def write_atomic(path: str | Path, data: bytes, replace_read_only: bool = False) -> None:
    """Write bytes to `path` through a temporary file in the same folder, then rename.
    Any failure (a full disk, an interrupt) removes the temporary file and leaves the target
    untouched; OS errors become OutputError naming the path."""
    def write_bytes(temporary: str) -> None:
        with os.fdopen(os.open(temporary, os.O_WRONLY | os.O_TRUNC), "wb") as stream:
            stream.write(data)
            stream.flush()
            os.fsync(stream.fileno())

    write_through_temporary(path, write_bytes, replace_read_only)


def write_text_atomic(path: str | Path, text: str, replace_read_only: bool = False) -> None:
    """Write text (UTF-8) atomically; see write_atomic."""
    write_atomic(path, text.encode("utf-8"), replace_read_only)


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
                    write_atomic(target, old, replace_read_only=True)
            except (OSError, OutputError):
                pass  # the newer file is complete (atomic); the first error is the one to tell
        raise


def write_through_temporary(path: str | Path, writer, replace_read_only: bool = False) -> None:
    """For writers that need a file name (netCDF): `writer(temporary_path)` writes a
    temporary file in the target's folder, which is renamed over `path` when the writer
    returns; any failure removes it and leaves the target untouched."""
    path = Path(path)
    folder = _prepare(path, replace_read_only)
    try:
        handle, temporary = tempfile.mkstemp(prefix=temporary_prefix(path), suffix=".tmp",
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
