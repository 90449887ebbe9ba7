"""The rows of `layers` and `levels` tables, read in bulk.

A table body can be 100,000 lines of numbers. Handing every row to lark costs a token, a tree
node and positions per row; instead the parser asks `table_bodies` where the bodies are, lets
lark parse the text with those lines blanked (same length, same line breaks, so every other
position is unchanged), and hands each body to the builder as one piece of text, whose
numbers `read_numbers` converts in one numpy step. Positions are worked out only for a value
that is not a number (the same message as a row parsed one by one).

`table_bodies` follows the line structure of the grammar (statements one per line, tables,
scenario and station blocks closed by `end`) and gives up at the first line it does not
expect: from there on lark sees the text as written and reports any error itself. A body is
only blanked when every line of it is a row lark would accept (numbers, spaces, a comment)
and the table's `end` line follows, so lark's verdict on the rest of the text is the same.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from layercalc.errors import LayercalcSyntaxError
from layercalc.source import Source, Span

_BLANK = re.compile(r"[\t ]*(?:#[^\n]*)?\r?\n")
_WORD = re.compile(r"[\t ]*([A-Za-z_][A-Za-z0-9_]*)")
_KIND = re.compile(r"[\t ]*(?:layers|levels)[\t ]*(?:#[^\n]*)?\r?\n")
_END = re.compile(r"[\t ]*end[\t ]*(?:#[^\n]*)?\r?\n")
# the grammar's ROW terminal, then an optional comment, line by line
# (possessive: a line either matches or ends the body, nothing to backtrack; 10x faster)
_BODY = re.compile(r"(?:[\t ]*+(?:[-+.0-9][-+.0-9eE \t]*+)?+(?:#[^\n]*+)?+\r?\n)*+")
_COMMENT = re.compile(r"#[^\n]*")
_ENTRY = re.compile(r"[^ \t]+")
_NUMBER = re.compile(r"[+-]?([0-9]+(\.[0-9]*)?|\.[0-9]+)([eE][+-]?[0-9]+)?")

_ONE_LINE = ("title", "note", "option", "cell", "column")
_CHANGES = ("add", "scale", "set", "cell", "option")


def table_bodies(text: str) -> dict[int, int]:
    """Start -> end offsets of the table bodies that can be read in bulk (see the module
    docstring). `text` ends with a line break."""
    bodies: dict[int, int] = {}
    size = len(text)
    pos = 0

    def skip(at: int) -> int:
        while at < size:
            blank = _BLANK.match(text, at)
            if blank is None:
                break
            at = blank.end()
        return at

    def line_end(at: int) -> int:
        end = text.find("\n", at)
        return size if end < 0 else end + 1

    def table(at: int) -> int | None:
        kind = _KIND.match(text, at)
        if kind is None:
            return None
        header = skip(kind.end())
        if header >= size:
            return None
        start = line_end(header)
        body_end = _BODY.match(text, start).end()
        end = _END.match(text, body_end)
        if end is None:
            return None
        if body_end > start:
            bodies[start] = body_end
        return end.end()

    while True:
        pos = skip(pos)
        if pos >= size:
            return bodies
        word = _WORD.match(text, pos)
        word = word.group(1) if word else None
        if word in _ONE_LINE:
            pos = line_end(pos)
        elif word in ("layers", "levels"):
            pos = table(pos)
        elif word == "station":
            pos = table(skip(line_end(pos)))
            end = _END.match(text, skip(pos)) if pos is not None else None
            pos = end.end() if end else None
        elif word == "scenario":
            pos = line_end(pos)
            while True:
                pos = skip(pos)
                end = _END.match(text, pos)
                if end is not None:
                    pos = end.end()
                    break
                change = _WORD.match(text, pos)
                if change is None or change.group(1) not in _CHANGES:
                    return bodies
                pos = line_end(pos)
        else:
            return bodies
        if pos is None:
            return bodies


def blank_bodies(text: str, bodies: dict[int, int]) -> str:
    """`text` with the bodies' characters turned into spaces, line breaks kept."""
    if not bodies:
        return text
    parts, last = [], 0
    for start, end in sorted(bodies.items()):
        breaks = text.count("\n", start, end)
        parts += [text[last:start], " " * (end - start - breaks), "\n" * breaks]
        last = end
    parts.append(text[last:])
    return "".join(parts)


@dataclass(frozen=True, eq=False)
class TableNumbers:
    """Every number of a table body, row after row (NaN where the file says '-'), with
    how many each row has and where each row is."""

    values: np.ndarray  # float64, all rows joined
    counts: np.ndarray  # numbers per row
    starts: np.ndarray  # offset of each row's first character
    ends: np.ndarray  # offset after each row's last number


def read_body(source: Source, start: int, end: int) -> TableNumbers:
    """The numbers of a body (source.text[start:end], lines of rows as table_bodies found
    them), converted in one step, with rows and their places found by numpy."""
    body = source.text[start:end]
    if "#" in body:  # comments become spaces: positions stay, and the rest is ASCII
        body = _COMMENT.sub(lambda comment: " " * len(comment.group()), body)
    codes = np.frombuffer(body.encode("ascii"), dtype=np.uint8)
    filled = (codes != 32) & (codes != 9) & (codes != 10) & (codes != 13)
    edges = np.diff(filled.astype(np.int8), prepend=0, append=0)
    entry_starts = np.flatnonzero(edges == 1)
    entry_ends = np.flatnonzero(edges == -1)
    line = np.cumsum(codes == 10)[entry_starts]
    first = np.flatnonzero(np.diff(line, prepend=-1))  # each row's first entry
    counts = np.diff(first, append=len(line))
    entries = body.split()  # the same entries, in the same order

    def where(index: int) -> int:
        return start + int(entry_starts[index])

    values = _convert(source, entries, where)
    return TableNumbers(values, counts, start + entry_starts[first],
                        start + entry_ends[first + counts - 1])


def read_numbers(source: Source, texts: list[str], starts: list[int]) -> TableNumbers:
    """The numbers of rows given one by one (each row's text and offset)."""
    pieces = [row.split() for row in texts]
    entries = [entry for row in pieces for entry in row]
    counts = np.fromiter(map(len, pieces), dtype=np.intp, count=len(pieces))

    def where(index: int) -> int:
        return [start + match.start() for row, start in zip(texts, starts)
                for match in _ENTRY.finditer(row)][index]

    values = _convert(source, entries, where)
    starts_array = np.array(starts, dtype=np.intp)
    ends = starts_array + np.fromiter(map(len, texts), dtype=np.intp, count=len(texts))
    return TableNumbers(values, counts, starts_array, ends)


def _convert(source: Source, entries: list[str], where) -> np.ndarray:
    """Entries -> float64 in one numpy step ('-' is NaN); LayercalcSyntaxError at the first
    entry that is not a number, placed by `where(index)` (asked only then)."""
    try:
        return np.array(entries, dtype=np.float64)  # accepts exactly the grammar's numbers
    except ValueError:  # a '-' (missing value), or an entry that is not a number
        pass
    try:
        return np.array([math.nan if e == "-" else e for e in entries], dtype=np.float64)
    except ValueError:
        pass
    for index, entry in enumerate(entries):
        if entry != "-" and not _NUMBER.fullmatch(entry):
            at = where(index)
            raise LayercalcSyntaxError(
                f"'{entry}' is not a number", Span(source, at, at + len(entry)),
                hint="write numbers like 850, -12.5 or 1.2e-5, and '-' for a missing value")
    raise AssertionError("numpy refused a number the grammar accepts")  # a bug
