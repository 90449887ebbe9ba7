"""Text -> lark tree. The only module that sees lark's exceptions; they leave as our syntax error."""

from __future__ import annotations

from functools import lru_cache
from importlib import resources
from pathlib import Path

from layercalc.errors import InputError, LayercalcSyntaxError
from layercalc.limits import MAX_LINE_CHARS
from layercalc.source import Source, Span

MAX_NESTING = 200  # parentheses and brackets; deeper formulas are refused with a clear message

_STATEMENT_WORDS = ("title", "note", "option", "cell", "column", "layers", "levels",
                    "scenario", "station")

# Plain words for the grammar's named terminals; anonymous ones show their text.
_TERMINAL_WORDS = {
    "NAME": "a name",
    "NUMBER": "a number",
    "SIGNED_NUMBER": "a number",
    "OFFSET_SIGNED": "a number",
    "SIGNED_INT": "a whole number",
    "STRING": 'text in double quotes ("...")',
    "_NL": "the end of the line",
    "$END": "the end of the file",
    "BARE_UNIT": "a unit",
    "COMPARE": "a comparison (<, <=, >, >=, ==, !=)",
    "TABLE_KIND": "'layers' or 'levels'",
    "PERCENT": "'%'",
    "ROW": "a row of numbers",
}


def grammar_text() -> str:
    """The grammar, from the installed package or, in a checkout, from grammar/."""
    try:
        packaged = resources.files("layercalc").joinpath("grammar/layers.lark")
        if packaged.is_file():
            return packaged.read_text(encoding="utf-8")
    except (FileNotFoundError, ModuleNotFoundError):  # pragma: no cover - unusual installs
        pass
    checkout = Path(__file__).resolve().parents[2] / "grammar" / "layers.lark"
    return checkout.read_text(encoding="utf-8")


def cache_dir() -> Path | None:
    """Where layercalc keeps what it can reuse between runs (the compiled grammar):
    $LAYERCALC_CACHE_DIR, else $XDG_CACHE_HOME/layercalc, else ~/.cache/layercalc.
    None when it cannot be created, or when others may write to it (then nothing is
    cached, nor read back)."""
    import os

    base = os.environ.get("LAYERCALC_CACHE_DIR")
    if base == "":
        return None
    if base is None:
        xdg = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"),
                                                               ".cache")
        base = os.path.join(xdg, "layercalc")
    try:
        os.makedirs(base, mode=0o700, exist_ok=True)
    except OSError:
        return None
    if not (private(base) and os.access(base, os.W_OK)):
        return None  # a folder others may write to is never read from
    return Path(base)


def private(path: str | Path) -> bool:
    """True when only this user can change `path` (after symlinks): owned by this user and
    not writable by group or others. The compiled grammar is read back with pickle, which
    runs code, so layercalc reads it only from a private folder and a private file."""
    import os
    import stat

    try:
        status = os.stat(path)
    except OSError:
        return False
    if not hasattr(os, "getuid"):  # pragma: no cover - no owners to compare (Windows)
        return True
    return status.st_uid == os.getuid() and not status.st_mode & (stat.S_IWGRP | stat.S_IWOTH)


@lru_cache(maxsize=1)
def _parser():
    """The LALR parser, built once; its tables are cached in cache_dir() (lark checks the
    grammar's hash before reusing them), which saves about half a second per start."""
    import hashlib

    from lark import Lark

    text = grammar_text()
    options = dict(parser="lalr", start=["start", "unit_text"], propagate_positions=True,
                   maybe_placeholders=False)
    folder = cache_dir()
    if folder is not None:
        digest = hashlib.sha256(text.encode()).hexdigest()[:16]
        cached = folder / f"grammar-{digest}.lark"
        # lark unpickles the file: only one this user alone could have written (its folder
        # is private too, see cache_dir), or none yet (lark then writes it)
        if not cached.exists() or (cached.is_file() and not cached.is_symlink()
                                   and private(cached)):
            try:
                return Lark(text, cache=str(cached), **options)
            except (OSError, EOFError, ValueError):  # an unreadable cache: build afresh
                pass
    return Lark(text, **options)


def parse(source: Source):
    """Parse a whole `.layers` text into a lark tree, or raise LayercalcSyntaxError.

    Table bodies that are plain rows of numbers are not tokenised row by row: lark parses
    the text with them blanked, and each such table gets its body as one BODY token for
    the builder (table_body.py explains why and when)."""
    from layercalc.language.table_body import blank_bodies, table_bodies

    _check_line_length(source)
    _check_nesting(source)
    text = source.text + "\n"
    bodies = table_bodies(text)
    tree = _parse(source, "start", blank_bodies(text, bodies), text)
    if bodies:
        _attach_bodies(tree, text, bodies)
    return tree


def _attach_bodies(tree, text: str, bodies: dict[int, int]) -> None:
    from lark import Token

    for statement in tree.children:
        table = statement.children[-1] if statement.data == "station" else statement
        if table.data != "table":
            continue
        start = text.find("\n", table.children[1].meta.end_pos) + 1
        if start in bodies:
            table.children.append(Token("BODY", text[start:bodies[start]], start_pos=start))


def parse_unit_text(source: Source):
    """Parse a unit written on its own (`hPa`, `1e-5 s^-1`), e.g. from a workbook header."""
    _check_line_length(source)
    _check_nesting(source)
    return _parse(source, "unit_text", source.text)


def _parse(source: Source, start: str, text: str, written: str | None = None):
    """`written`: the text as written when `text` has table bodies blanked."""
    from lark.exceptions import UnexpectedCharacters, UnexpectedInput, UnexpectedToken

    parser = _parser()
    try:
        return parser.parse(text, start=start)
    except UnexpectedToken as exc:
        raise _token_error(source, exc, parser) from None
    except UnexpectedCharacters as exc:
        offset = min(exc.pos_in_stream, len(source.text))
        written = text if written is None else written
        char = written[exc.pos_in_stream] if exc.pos_in_stream < len(written) else ""
        span = Span(source, offset, offset + 1)
        expected = _describe_expected(exc.allowed or set(), parser)
        raise LayercalcSyntaxError(
            f"unexpected character {char!r}" + (f"; expected {expected}" if expected else ""),
            span, hint=_hint_for_character(char)) from None
    except UnexpectedInput:  # UnexpectedEOF and relatives
        offset = len(source.text)
        raise LayercalcSyntaxError("the file ends in the middle of a statement",
                                   Span(source, max(0, offset - 1), offset)) from None


def _token_error(source: Source, exc, parser) -> LayercalcSyntaxError:
    token = exc.token
    text_len = len(source.text)
    start = token.start_pos if token.start_pos is not None else text_len
    start = min(start, text_len)
    end = min(token.end_pos if token.end_pos is not None else start + 1, text_len)
    if token.type == "_NL":
        found = "the end of the line"
        end = start + 1
    elif token.type == "$END":
        found = "the end of the file"
        start = max(0, text_len - 1)
        end = text_len
    else:
        found = f"'{token.value}'"
    span = Span(source, start, max(end, start + 1))
    expected = _describe_expected(exc.expected or set(), parser)
    hint = None
    if token.type == "NAME" and "BARE_UNIT" not in (exc.expected or ()) and \
            "NAME" not in (exc.expected or ()) and token.value in _STATEMENT_WORDS:
        hint = f"'{token.value}' starts a statement: put it at the start of its own line"
    if token.type == "_NL" and "\"end\"" in str(exc.expected) or "END" in (exc.expected or ()):
        hint = "a table, scenario or station block closes with a line 'end'"
    if token.value == ",":
        hint = _comma_hint(source.text, start)
    return LayercalcSyntaxError(f"found {found}; expected {expected}", span, hint=hint)


def _describe_expected(expected: set[str], parser) -> str:
    names = set(expected)
    words: list[str] = []
    keywords = {n for n in names if _literal(parser, n) in _STATEMENT_WORDS} | (
        {"TABLE_KIND"} & names)
    if len(keywords) >= 4:
        words.append("a statement (" + ", ".join(_STATEMENT_WORDS) + ")")
        names -= keywords
    value_starters = {"NAME", "NUMBER", "LPAR", "MINUS"}
    if value_starters <= names:
        words.append("a value (a number, a name, a function call or '(')")
        names -= value_starters | {"PLUS", "NOT", "OFFSET_SIGNED"}
    operators = {"PLUS", "MINUS", "STAR", "SLASH", "CIRCUMFLEX", "COMPARE"}
    if len(operators & names) >= 4:
        words.append("an operator (+ - * / ^ or a comparison)")
        names -= operators | {"AND", "OR"}
    for name in sorted(names):
        if name in _TERMINAL_WORDS:
            word = _TERMINAL_WORDS[name]
        else:
            literal = _literal(parser, name)
            word = f"'{literal}'" if literal is not None else name.lower()
        if word not in words:
            words.append(word)
    if not words:
        return "something else"
    if len(words) > 7:
        words = words[:7] + ["..."]
    return words[0] if len(words) == 1 else ", ".join(words[:-1]) + " or " + words[-1]


def _literal(parser, terminal_name: str) -> str | None:
    try:
        term = parser.get_terminal(terminal_name)
    except KeyError:
        return None
    pattern = term.pattern
    if type(pattern).__name__ == "PatternStr":
        return pattern.value
    return None


def _comma_hint(text: str, offset: int) -> str:
    """A comma written as a decimal separator (14,5) gets the number as it should be."""
    before = len(text[:offset]) - len(text[:offset].rstrip("0123456789"))
    after = len(text[offset + 1:]) - len(text[offset + 1:].lstrip("0123456789"))
    if before and after:
        whole, fraction = text[offset - before:offset], text[offset + 1:offset + 1 + after]
        return f"decimals take a dot: write {whole}.{fraction}, not {whole},{fraction}"
    return "table entries and a statement's parts are separated by spaces; commas only " \
        "separate a function's arguments"


def _hint_for_character(char: str) -> str | None:
    if char in "'":
        return 'text goes in double quotes: "like this"'
    if char == ",":
        return "table entries are separated by spaces, and decimals take a dot: write 14.5, " \
            "not 14,5"
    if char == "\t":
        return None
    return None


def _check_line_length(source: Source) -> None:
    """Refuse a line longer than MAX_LINE_CHARS before any parsing."""
    line, length, start = source.longest_line()
    if length > MAX_LINE_CHARS:
        start += MAX_LINE_CHARS
        raise InputError(f"line {line} has {length:,} characters; a line may have at most "
                         f"{MAX_LINE_CHARS:,}", Span(source, start, start + 1),
                         hint="split the text over several lines (a note per paragraph, a "
                              "table row per layer)")


def _check_nesting(source: Source) -> None:
    """Refuse formulas nested deeper than MAX_NESTING before the parser or the AST builder
    (which recurse) meet them."""
    depth = 0
    text = source.text
    if text.count("(") + text.count("[") <= MAX_NESTING:
        return
    in_string = False
    in_comment = False
    for offset, char in enumerate(text):
        if in_comment:
            in_comment = char != "\n"
            continue
        if char == '"':
            in_string = not in_string
        elif in_string:
            in_string = char != "\n"
        elif char == "#":
            in_comment = True
        elif char in "([":
            depth += 1
            if depth > MAX_NESTING:
                raise LayercalcSyntaxError(
                    f"brackets nest more than {MAX_NESTING} deep",
                    Span(source, offset, offset + 1),
                    hint="split the formula into several named columns or cells")
        elif char in ")]":
            depth = max(0, depth - 1)
        elif char == "\n":
            depth = 0
