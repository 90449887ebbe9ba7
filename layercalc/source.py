"""Source text and positions: where every user-facing message points."""

from __future__ import annotations

import bisect
import os
import stat
from dataclasses import dataclass, field
from pathlib import Path

from layercalc.errors import InputError
from layercalc.limits import MAX_TEXT_BYTES


@dataclass(frozen=True)
class Source:
    """A named piece of text: a file, a string passed to `loads`, or a workbook."""

    name: str
    text: str
    _line_starts: tuple[int, ...] = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        starts = [0]
        find = self.text.find
        index = find("\n")
        while index >= 0:
            starts.append(index + 1)
            index = find("\n", index + 1)
        object.__setattr__(self, "_line_starts", tuple(starts))

    def longest_line(self) -> tuple[int, int, int]:
        """(line number, length in characters, offset of its start) of the longest line,
        the first if several."""
        ends = [*self._line_starts[1:], len(self.text) + 1]
        lengths = [end - start - 1 for start, end in zip(self._line_starts, ends)]
        index = max(range(len(lengths)), key=lengths.__getitem__)
        return index + 1, lengths[index], self._line_starts[index]

    def line_col(self, offset: int) -> tuple[int, int]:
        """1-based line and column of a character offset."""
        offset = max(0, min(offset, len(self.text)))
        line = bisect.bisect_right(self._line_starts, offset) - 1
        return line + 1, offset - self._line_starts[line] + 1

    def line_text(self, line: int) -> str:
        start = self._line_starts[line - 1]
        end = self.text.find("\n", start)
        return self.text[start:] if end < 0 else self.text[start:end]


def read_input_bytes(path: str | Path, limit: int | None = None) -> bytes:
    """The bytes of an input file, which must be a regular file (after symlinks) of at most
    `limit` bytes: a FIFO would block for ever and a device (/dev/zero, /dev/urandom) never
    ends, so they are refused before reading, and no more than `limit` + 1 bytes are read
    even if the file grows meanwhile."""
    path = Path(path)
    limit = MAX_TEXT_BYTES if limit is None else limit
    try:
        # non-blocking, so that opening a FIFO returns at once; fstat then sees what it is
        descriptor = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except FileNotFoundError:
        raise InputError(f"no such file: {path}", hint="check the path and the file name") from None
    except IsADirectoryError:
        raise InputError(f"{path} is a folder, not a file") from None
    except OSError as exc:
        raise InputError(f"cannot read {path}: {exc.strerror}") from None
    mode = os.fstat(descriptor).st_mode
    if stat.S_ISDIR(mode):
        os.close(descriptor)
        raise InputError(f"{path} is a folder, not a file")
    with os.fdopen(descriptor, "rb") as stream:
        if not stat.S_ISREG(mode):
            kind = ("a pipe (FIFO)" if stat.S_ISFIFO(mode) else
                    "a device" if stat.S_ISCHR(mode) or stat.S_ISBLK(mode) else
                    "a socket" if stat.S_ISSOCK(mode) else "not a regular file")
            raise InputError(f"{path} is {kind}, not a regular file",
                             hint="save the input to a file and give its name")
        data = b""
        too_large = os.fstat(descriptor).st_size > limit  # refused without reading
        if not too_large:
            try:
                data = stream.read(limit + 1)
            except OSError as exc:
                raise InputError(f"cannot read {path}: {exc.strerror}") from None
    if too_large or len(data) > limit:
        raise InputError(f"{path} is larger than {limit:,} bytes, the most layercalc reads "
                         "from a text input", hint="split the file, or keep only the "
                         "layers you need")
    return data


def read_source(path: str | Path) -> Source:
    """Read a `.layers` file as UTF-8; a file that is not text is our error, not a traceback."""

    path = Path(path)
    data = read_input_bytes(path)
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = data.count(b"\n", 0, exc.start) + 1
        line_start = data.rfind(b"\n", 0, exc.start) + 1
        # columns count characters, as everywhere else: decode what precedes on the line
        column = len(data[line_start:exc.start].decode("utf-8", errors="replace")) + 1
        raise InputError(
            f"the file is not UTF-8 text (byte 0x{data[exc.start]:02x})",
            hint="save the file as UTF-8 (plain text) and try again",
            location=f"{path}:{line}:{column}",
        ) from None
    return Source(str(path), text.replace("\r\n", "\n").replace("\r", "\n"))


@dataclass(frozen=True)
class Span:
    """A stretch of a source, by character offsets [start, end)."""

    source: Source = field(repr=False)
    start: int
    end: int

    @property
    def line(self) -> int:
        return self.source.line_col(self.start)[0]

    @property
    def column(self) -> int:
        return self.source.line_col(self.start)[1]

    def location(self) -> str:
        return f"{self.source.name}:{self.line}:{self.column}"

    def excerpt(self, max_width: int = 100) -> str:
        """The line with a caret under the span, as in the error examples of the README."""
        line, column = self.line, self.column
        text = self.source.line_text(line)
        end_line, end_col = self.source.line_col(max(self.start, self.end - 1))
        width = (end_col - column + 1) if end_line == line else len(text) - column + 1
        width = max(1, width)
        start = 0
        if len(text) > max_width:  # very long lines: show a window around the caret
            start = max(0, column - 1 - max_width // 2)
            text = text[start:start + max_width]
        pad = " " * len(str(line))
        caret_pad = " " * (column - 1 - start)
        width = max(1, min(width, len(text) - (column - 1 - start)))
        return f"{line:>{len(pad)}} | {text}\n{pad} | {caret_pad}{'^' * width}"
