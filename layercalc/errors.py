"""One family of errors, each carrying where it happened; the text is built in one place."""

from __future__ import annotations

from typing import Sequence

from layercalc.names import did_you_mean

# errors.py sits below source.py: a span is any object with `location()` and `excerpt()`
# (layercalc.source.Span), named in annotations as text only.


class LayercalcError(Exception):
    """Base of every error a user can cause. The CLI catches this class and nothing else."""

    kind = "error"
    exit_code = 1

    def __init__(self, message: str, span: "Span | None" = None, hint: str | None = None,
                 location: str | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.span = span
        self.hint = hint
        self._location = location

    @property
    def location(self) -> str | None:
        """`file:line:column`, `sheet!cell` or None."""
        if self.span is not None:
            return self.span.location()
        return self._location

    def format(self) -> str:
        """The text users see: position, kind, message, caret excerpt, hint."""
        head = f"{self.kind}: {self.message}"
        if self.location:
            head = f"{self.location}: {head}"
        parts = [head]
        if self.span is not None:
            parts.append("    " + self.span.excerpt().replace("\n", "\n    "))
        if self.hint:
            parts.append(f"hint: {self.hint}")
        return "\n".join(parts)

    def __str__(self) -> str:
        return self.format()


class InputError(LayercalcError):
    """A file that cannot be read, is not text, or is too large."""

    kind = "input error"


class LayercalcSyntaxError(LayercalcError):
    kind = "syntax error"


class UnknownNameError(LayercalcError):
    kind = "name error"

    def __init__(self, message: str, span: "Span | None" = None, suggestions: Sequence[str] = (),
                 hint: str | None = None) -> None:
        self.suggestions = tuple(suggestions)
        if hint is None and self.suggestions:
            hint = did_you_mean(self.suggestions)
        super().__init__(message, span, hint)


class UnitError(LayercalcError):
    kind = "unit error"

    def __init__(self, message: str, span: "Span | None" = None, found: str | None = None,
                 expected: str | None = None, hint: str | None = None) -> None:
        self.found = found
        self.expected = expected
        super().__init__(message, span, hint)


class CycleError(LayercalcError):
    kind = "cycle"

    def __init__(self, message: str, span: "Span | None" = None, cycle: Sequence[str] = (),
                 hint: str | None = None) -> None:
        self.cycle = tuple(cycle)
        super().__init__(message, span, hint)


class DefinitionError(LayercalcError):
    """Duplicate names, bad options, a table with the wrong shape, a value out of range."""

    kind = "error"


class EvaluationError(LayercalcError):
    kind = "evaluation error"

    def __init__(self, message: str, span: "Span | None" = None, layer: int | None = None,
                 hint: str | None = None) -> None:
        self.layer = layer
        super().__init__(message, span, hint)


class SpreadsheetError(LayercalcError):
    kind = "spreadsheet error"

    def __init__(self, message: str, sheet: str | None = None, cell: str | None = None,
                 path: str | None = None, hint: str | None = None) -> None:
        self.sheet = sheet
        self.cell = cell
        self.path = path
        where = None
        if sheet is not None:
            where = f"{sheet}!{cell}" if cell else sheet
            if path:
                where = f"{path}:{where}"
        elif path:
            where = path
        super().__init__(message, None, hint, location=where)


class OutputError(LayercalcError):
    kind = "output error"


class UsageError(LayercalcError):
    """A command line that cannot work as given (an option's value, an output over the
    input): exit status 2, like argparse's usage errors."""

    kind = "usage error"
    exit_code = 2


class MessageError(LayercalcError):
    """A coded message (TEMP, PILOT, BUFR) that cannot be decoded.

    Keeps the report (its identification, e.g. "TTAA 99901 day 08 12 UTC") and the
    offending group; the position comes from the group's span (file:line:column, with the
    caret under the group), or for BUFR from `location` (file:message N (byte B)).
    """

    kind = "message error"

    def __init__(self, message: str, span: "Span | None" = None, report: str | None = None,
                 group: str | None = None, hint: str | None = None,
                 location: str | None = None) -> None:
        self.report = report
        self.group = group
        if report:
            message = f"{report}: {message}"
        super().__init__(message, span, hint, location=location)

    @property
    def line(self) -> int | None:
        return self.span.line if self.span is not None else None

    @property
    def column(self) -> int | None:
        return self.span.column if self.span is not None else None


class Notice:
    """A warning: a problem worth telling, that does not stop evaluation (plausibility, dewpoint above T)."""

    __slots__ = ("message", "span", "location_text")

    def __init__(self, message: str, span: "Span | None" = None, location: str | None = None):
        self.message = message
        self.span = span
        self.location_text = location

    def format(self) -> str:
        where = self.span.location() if self.span is not None else self.location_text
        return f"{where}: warning: {self.message}" if where else f"warning: {self.message}"

    def __repr__(self) -> str:
        return f"Notice({self.format()!r})"
