"""lark tree -> frozen nodes (nodes.py). Builds only; domain checks belong to check.py."""

from __future__ import annotations


from layercalc.errors import LayercalcSyntaxError
from layercalc.language.table_body import read_body, read_numbers
from layercalc.language.nodes import (
    Binary, Call, Change, Definition, Document, Heading, Literal, Name, Note, Option,
    Place, Scenario, Selection, Station, Table, Title, Unary, UnitName, UnitNumber, UnitOp,
    UnitPower,
)
from layercalc.source import Source, Span


MAX_DEPTH = 250  # operations nested in one formula; keeps every later (recursive) stage safe

_BINARY = {"add": "+", "subtract": "-", "multiply": "*", "divide": "/", "power": "^",
           "and_op": "and", "or_op": "or"}
_PLACES = {"at_station": "station", "at_every_station": "every station",
           "at_table": "levels"}
_SELECTIONS = {"select_between": "between", "select_above": "above",
               "select_below": "below", "select_where": "where",
               "select_level": "at"}


def build_document(source: Source, tree) -> Document:
    _check_depth(source, tree)
    builder = _Builder(source)
    return Document(source, tuple(builder.statement(t) for t in tree.children))


def build_unit(source: Source, tree):
    _check_depth(source, tree)
    return _Builder(source).unit(tree.children[0])


def _check_depth(source: Source, tree) -> None:
    from lark import Tree

    stack = [(tree, 0)]
    while stack:
        node, depth = stack.pop()
        if depth > MAX_DEPTH:
            raise LayercalcSyntaxError(
                f"this formula is too long or nested too deep: more than {MAX_DEPTH} "
                "operations chained", _span_of(source, node),
                hint="split it into several named columns or cells (a long sum of layers "
                     "is sum(x) over a column)")
        for child in node.children:
            if isinstance(child, Tree):
                stack.append((child, depth + 1))


def _span_of(source: Source, item) -> Span:
    from lark import Token

    if isinstance(item, Token):
        start = item.start_pos or 0
        return Span(source, start, item.end_pos or start + len(item))
    meta = item.meta
    if getattr(meta, "empty", True):
        return Span(source, 0, 0)
    return Span(source, meta.start_pos, meta.end_pos)


def _unquote(text: str) -> str:
    body = text[1:-1]
    out, i = [], 0
    while i < len(body):
        if body[i] == "\\" and i + 1 < len(body):
            nxt = body[i + 1]
            out.append({"n": "\n", "t": "\t"}.get(nxt, nxt))
            i += 2
        else:
            out.append(body[i])
            i += 1
    return "".join(out)


class _Builder:
    def __init__(self, source: Source) -> None:
        self.source = source

    def span(self, item) -> Span:
        return _span_of(self.source, item)

    # ---- statements ----
    def statement(self, tree):
        kind = tree.data
        c = tree.children
        if kind == "title":
            return Title(self.span(tree), _unquote(c[0]))
        if kind == "note":
            return Note(self.span(tree), _unquote(c[0]))
        if kind == "option":
            return Option(self.span(tree), str(c[0]), str(c[1]), self.span(c[1]))
        if kind in ("cell", "column"):
            return self.definition(tree)
        if kind == "table":
            return self.table(tree)
        if kind == "scenario":
            return self.scenario(tree)
        if kind == "station":
            return self.station(tree)
        raise AssertionError(f"grammar rule without a builder: {kind}")  # a bug, not user input

    def definition(self, tree) -> Definition:
        c = tree.children
        unit = self.unit(c[1]) if len(c) == 3 else None
        return Definition(self.span(tree), str(tree.data), str(c[0]), self.span(c[0]), unit,
                          self.expr(c[-1]))

    def table(self, tree) -> Table:
        from lark import Token

        kind_token, header, *rows = tree.children
        headings = tuple(
            Heading(self.span(h), str(h.children[0]),
                    self.unit(h.children[1]) if len(h.children) > 1 else None)
            for h in header.children)
        if len(rows) == 1 and isinstance(rows[0], Token):  # the whole body (parser.parse)
            numbers = read_body(self.source, rows[0].start_pos,
                                rows[0].start_pos + len(rows[0]))
        else:
            tokens = [row.children[0] for row in rows]
            numbers = read_numbers(self.source, [str(t).rstrip() for t in tokens],
                                   [t.start_pos for t in tokens])
        return Table(self.span(tree), str(kind_token), headings, numbers)

    def scenario(self, tree) -> Scenario:
        from lark import Token

        c = list(tree.children)
        name = c.pop(0)
        base = base_span = None
        description = ""
        changes, cells, options = [], [], []
        for item in c:
            if isinstance(item, Token):  # the description string
                description = _unquote(item)
            elif item.data == "base":
                base, base_span = str(item.children[0]), self.span(item.children[0])
            elif item.data in ("cell", "column"):
                cells.append(self.definition(item))
            elif item.data == "option":
                options.append(self.statement(item))
            else:
                changes.append(self.change(item))
        return Scenario(self.span(tree), str(name), self.span(name), base, base_span,
                        description, tuple(changes), tuple(cells), tuple(options))

    def change(self, tree) -> Change:
        c = tree.children
        action = str(tree.data).removesuffix("_change")
        if action in ("scale", "set"):
            target, amount = c[0], c[1]
        else:
            amount, target = c[0], c[1]
        place = selection = None
        for extra in c[2:]:
            if extra.data in _PLACES:
                place = self.place(extra)
            else:
                selection = self.selection(extra)
        return Change(self.span(tree), action, str(target), self.span(target),
                      self.expr(amount), selection, place)

    def place(self, tree) -> Place:
        kind = _PLACES[tree.data]
        if kind == "station":
            return Place(self.span(tree), kind, _unquote(tree.children[0]))
        if kind == "levels" and str(tree.children[0]) != "levels":
            raise LayercalcSyntaxError(
                f"found 'at {tree.children[0]}'; expected 'at \"Station name\"', "
                "'at every station' or 'at levels'", self.span(tree),
                hint="a change to the layers table needs no 'at': "
                     "e.g. scale div by 1.2 above 500 hPa")
        return Place(self.span(tree), kind)

    def selection(self, tree) -> Selection:
        kind = _SELECTIONS[tree.data]
        parts = [self.expr(x) for x in tree.children]
        return Selection(self.span(tree), kind, *parts)

    def station(self, tree) -> Station:
        name, lat, lon, table = tree.children
        return Station(self.span(tree), _unquote(name), float(lat.children[0]),
                       float(lon.children[0]), self.table(table), self.span(lat),
                       self.span(lon))

    # ---- expressions ----
    def expr(self, tree):
        from lark import Token

        if isinstance(tree, Token):  # a bare NAME reduced by an inlined rule
            return Name(self.span(tree), str(tree))
        kind = tree.data
        c = tree.children
        span = self.span(tree)
        if kind == "literal":
            unit = self.unit(c[1]) if len(c) > 1 else None
            return Literal(span, float(str(c[0]).replace(" ", "").replace("\t", "")), unit)
        if kind == "name":
            return Name(span, str(c[0]))
        if kind == "call":
            return Call(span, str(c[0]), tuple(self.expr(a) for a in c[1:]), self.span(c[0]))
        if kind in ("negate", "plus", "not_op"):
            op = {"negate": "-", "plus": "+", "not_op": "not"}[kind]
            return Unary(span, op, self.expr(c[0]))
        if kind == "compare":
            return Binary(span, str(c[1]), self.expr(c[0]), self.expr(c[2]))
        if kind in _BINARY:
            return Binary(span, _BINARY[kind], self.expr(c[0]), self.expr(c[1]))
        raise AssertionError(f"expression rule without a builder: {kind}")

    # ---- units ----
    def unit(self, tree):
        from lark import Token

        if isinstance(tree, Token):  # BARE_UNIT such as hPa or s^-1
            span = self.span(tree)
            symbol, _, exponent = str(tree).partition("^")
            name = UnitName(Span(span.source, span.start, span.start + len(symbol)), symbol)
            return UnitPower(span, name, _exponent(exponent)) if exponent else name
        kind = tree.data
        c = tree.children
        span = self.span(tree)
        if kind == "unit":
            return self.unit(c[0])
        if kind == "unit_name":
            return UnitName(span, str(c[0]))
        if kind == "unit_number":
            return UnitNumber(span, float(c[0]))
        if kind == "unit_multiply":
            return UnitOp(span, "*", self.unit(c[0]), self.unit(c[1]))
        if kind == "unit_divide":
            return UnitOp(span, "/", self.unit(c[0]), self.unit(c[1]))
        if kind == "unit_raise":
            return UnitPower(span, self.unit(c[0]), _exponent(str(c[1])))
        raise AssertionError(f"unit rule without a builder: {kind}")


# A unit exponent longer than this many digits is kept as a stand-in of that size: far
# beyond what units.power accepts, and Python's int() refuses strings of over 4,300 digits.
_EXPONENT_DIGITS = 9


def _exponent(text: str) -> int:
    """A unit exponent as written (`-2`, `+3`), without converting thousands of digits."""
    sign = -1 if text.startswith("-") else 1
    digits = text.lstrip("+-").lstrip("0") or "0"
    if len(digits) > _EXPONENT_DIGITS:
        return sign * 10 ** _EXPONENT_DIGITS
    return sign * int(digits)
