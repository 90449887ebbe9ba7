"""Lengths of the texts a sheet names: titles, notes, scenario descriptions and the names of
cells, columns, headings, scenarios and stations (limits.py). Checked first, before any
other work, each with the place of the text that is too long."""

from __future__ import annotations

from layercalc.errors import DefinitionError
from layercalc.language.nodes import Definition, Document, Note, Scenario, Station, Table, Title
from layercalc.limits import MAX_NAME_CHARS, MAX_NOTE_CHARS, MAX_TITLE_CHARS


def length_problems(document: Document) -> list[DefinitionError]:
    """One error per text longer than its limit, in the order written."""
    found: list[DefinitionError] = []

    def text(what: str, value: str, span, limit: int, hint: str) -> None:
        if len(value) > limit:
            found.append(DefinitionError(f"{what} has {len(value):,} characters; at most "
                                         f"{limit:,} are allowed", span, hint=hint))

    def name(what: str, value: str, span) -> None:
        text(f"the {what} name '{value[:20]}...'", value, span, MAX_NAME_CHARS,
             "choose a shorter name (it heads report columns and workbook cells)")

    def table(node: Table) -> None:
        for heading in node.headings:
            name("column", heading.name, heading.span)

    for st in document.statements:
        if isinstance(st, Title):
            text("the title", st.text, st.span, MAX_TITLE_CHARS,
                 "keep the title short; put more in note lines")
        elif isinstance(st, Note):
            text("this note", st.text, st.span, MAX_NOTE_CHARS,
                 "split it into several note lines")
        elif isinstance(st, Definition):
            name(st.kind, st.name, st.name_span)
        elif isinstance(st, Table):
            table(st)
        elif isinstance(st, Scenario):
            name("scenario", st.name, st.name_span)
            text("the scenario's description", st.description, st.span, MAX_TITLE_CHARS,
                 "keep the description short; put more in note lines")
            for cell in st.cells:
                name(cell.kind, cell.name, cell.name_span)
        elif isinstance(st, Station):
            name("station", st.name, st.span)
            table(st.table)
    return found
