"""What-if scenarios: named changes to the base sheet's inputs, checked once, applied as
numpy masks so that a scenario (or a sweep over its parameters) is one vectorised pass.

Selections, in terms of each layer's own bounds (base pressures):
    between P1 and P2   the layer lies inside [min(P1, P2), max(P1, P2)]
    above P             the layer lies wholly above P   (p_bottom <= P)
    below P             the layer lies wholly below P   (p_top >= P)
    where CONDITION     the condition holds for the layer (row by row)
(`at P`, one level, is for level changes only.)
A change `at "Station"`, `at every station` or `at levels` changes level values instead
(checking/level_changes.py: levels picked by their pressure, both ends inclusive).
Temperatures added with `add` are differences: `add 3 degC to T` equals `add 3 K to T`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from layercalc.checking import level_changes as LC
from layercalc.language import units as U
from layercalc.names import PRESSURE_BOUNDS, close_names
from layercalc.errors import DefinitionError, LayercalcError, Notice, UnitError, UnknownNameError
from layercalc.language.nodes import Definition, Scenario
from layercalc.language.typed import TExpr, TRef

PRESSURE_TOLERANCE = 1e-6  # relative, when a layer bound equals a selection pressure
FIXED_INPUTS = PRESSURE_BOUNDS


@dataclass(frozen=True)
class CheckedChange:
    action: str  # add, scale, set
    target: str
    amount: TExpr
    selection: str | None
    bounds: tuple[float, ...] = ()
    condition: TExpr | None = None
    text: str = ""
    span: object = None  # the change's line in the file
    place: object = None  # nodes.Place for a change to level values (level_changes.py)
    tables: tuple[int, ...] = ()  # the soundings it changes: levels table first, stations


@dataclass
class CheckedScenario:
    name: str
    base: str | None
    description: str
    changes: list[CheckedChange]
    cells: dict[str, float]  # input cell -> SI value
    options: dict[str, str]
    notices: list[Notice] = field(default_factory=list)
    span: object = None  # the scenario's name in the file
    option_spans: dict = field(default_factory=dict)


def check_scenarios(checker, sheet, scenarios: list[Scenario]) -> dict[str, CheckedScenario]:
    """Check every scenario block against the base sheet (names, dimensions, chains)."""
    by_name: dict[str, Scenario] = {}
    for sc in scenarios:
        if sc.name in by_name or sc.name == "base":
            raise DefinitionError(f"scenario '{sc.name}' is defined twice"
                                  if sc.name != "base" else "'base' names the unchanged sheet",
                                  sc.name_span)
        by_name[sc.name] = sc
    checked: dict[str, CheckedScenario] = {}
    for sc in scenarios:
        if sc.base not in (None, "base") and sc.base not in by_name:
            close = close_names(sc.base, [*by_name, "base"], 2)
            raise UnknownNameError(f"scenario '{sc.name}' builds on unknown scenario "
                                   f"'{sc.base}'", sc.base_span, close)
        _check_chain(sc, by_name)
        checked[sc.name] = _check_one(checker, sheet, sc)
    for name, sc in checked.items():
        _check_options(checker, sheet, name, checked)
    return checked


def _check_options(checker, sheet, name: str, checked: dict) -> None:
    """A scenario that switches integrate/adjust compiles the sheet anew: do it now, so
    that a combination that does not work is reported at the scenario's own line."""
    options: dict[str, str] = {}
    spans: dict = {}
    current, line = checked[name], []
    while current is not None:
        line.append(current)
        current = checked.get(current.base) if current.base else None
    for sc in reversed(line):
        options.update(sc.options)
        spans.update(sc.option_spans)
    wanted = {**sheet.options, **options}
    if wanted == sheet.options:
        return
    try:  # kept for evaluation (evaluation/scenarios.py sheet_for_options)
        sheet.option_variants[tuple(sorted(wanted.items()))] = type(checker)(
            checker.document, option_overrides=wanted, with_scenarios=False).run()
    except LayercalcError as exc:
        span = next(iter(spans.values()), None) or checked[name].span
        raise DefinitionError(f"scenario '{name}': {exc.message}", span,
                              hint=exc.hint) from None


def _check_chain(sc: Scenario, by_name: dict[str, Scenario]) -> None:
    seen = [sc.name]
    current = sc
    while current.base not in (None, "base"):
        current = by_name[current.base]
        if current.name in seen:
            raise DefinitionError("scenarios build on each other in a circle: "
                                  + " -> ".join([*seen, current.name]), sc.name_span)
        seen.append(current.name)


def _check_one(checker, sheet, sc: Scenario) -> CheckedScenario:
    changes = [_check_change(checker, sheet, ch) for ch in sc.changes]
    cells: dict[str, float] = {}
    for d in sc.cells:
        cells[d.name] = _check_cell(checker, sheet, d)
    options: dict[str, str] = {}
    option_spans: dict = {}
    for opt in sc.options:
        checker.option(opt, options, option_spans)
    notices = [n for ch in changes if (n := _empty_selection(sheet, ch, sc)) is not None]
    return CheckedScenario(sc.name, None if sc.base in (None, "base") else sc.base,
                           sc.description, changes, cells, options, notices, sc.name_span,
                           option_spans)


def _check_level_change(checker, sheet, ch) -> CheckedChange:
    """A change `at` a station or the levels table (checking/level_changes.py)."""
    indices, soundings = LC.tables_of(sheet, ch)
    LC.check_target(sheet, ch, soundings)
    amount = LC.check_amount(checker, sheet, ch, soundings[0].units[ch.target])
    bounds = ()
    if ch.selection is not None:
        if ch.selection.kind == "where":
            raise DefinitionError("'where' selects layers; a change at "
                                  f"{LC.place_text(ch.place)} picks levels by pressure",
                                  ch.selection.span,
                                  hint="use between P1 and P2, above P or below P")
        bounds = LC.pressure_bounds(checker, ch.selection)
    text = ch.span.source.text[ch.span.start:ch.span.end].strip()
    return CheckedChange(ch.action, ch.target, amount,
                         None if ch.selection is None else ch.selection.kind, bounds, None,
                         text, ch.span, ch.place, indices)


def _check_change(checker, sheet, ch) -> CheckedChange:
    if ch.place is not None:
        return _check_level_change(checker, sheet, ch)
    if ch.target in FIXED_INPUTS:
        raise DefinitionError(f"a scenario cannot change {ch.target}: layers keep their "
                              "pressures", ch.target_span,
                              hint="change T, Td, div or another input column")
    if ch.target not in sheet.input_columns:
        where = LC.tables_with_column(sheet, ch.target)
        if where:
            raise DefinitionError(f"'{ch.target}' is a column of {where}, not of the layers: "
                                  "say which table the change acts on", ch.target_span,
                                  hint=LC.place_hint(sheet, ch))
        close = close_names(ch.target, sheet.input_columns, 3)
        raise UnknownNameError(f"'{ch.target}' is not an input column of the layers table",
                               ch.target_span, close,
                               hint=None if close else "scenarios change input columns: "
                               + ", ".join(sheet.input_columns))
    amount = checker.expr(ch.amount, prefer_columns=True,
                          affine_as_difference=ch.action == "add")
    _inputs_only(amount, ch.amount.span)
    target_dim = sheet.input_columns[ch.target].unit.dimension
    if ch.action == "scale":
        if not U.is_dimensionless(amount.meta.dimension):
            raise UnitError(f"'scale {ch.target} by' needs a plain number, not "
                            f"{U.dimension_name(amount.meta.dimension)}", ch.amount.span,
                            hint="e.g. scale div by 1.5")
    elif not U.same_dimension(amount.meta.dimension, target_dim):
        verb = "add" if ch.action == "add" else "set"
        raise UnitError(f"cannot {verb} {U.with_article(U.dimension_name(amount.meta.dimension))} "
                        f"{'to' if verb == 'add' else 'as'} {ch.target} "
                        f"({U.with_article(U.dimension_name(target_dim))})", ch.amount.span,
                        found=U.dimension_name(amount.meta.dimension),
                        expected=U.dimension_name(target_dim))
    selection, bounds, condition = None, (), None
    if ch.selection is not None:
        selection = ch.selection.kind
        if selection == "at":
            raise DefinitionError("'at' with a pressure picks one level; a change to the "
                                  "layers picks layers, each between two levels",
                                  ch.selection.span,
                                  hint=("for one level of a table, say which: "
                                        + LC.place_hint(sheet, ch)
                                        if LC.tables_with_column(sheet, ch.target) else
                                        "e.g. between 350 hPa and 300 hPa, above 500 hPa "
                                        "or below 850 hPa"))
        if selection == "where":
            condition = checker.expr(ch.selection.first, prefer_columns=True)
            _inputs_only(condition, ch.selection.first.span)
            checker.need_condition(condition, "where")
        else:
            bounds = LC.pressure_bounds(checker, ch.selection)
    text = ch.span.source.text[ch.span.start:ch.span.end].strip()
    return CheckedChange(ch.action, ch.target, amount, selection, bounds, condition, text,
                         ch.span)


def _inputs_only(expr: TExpr, span) -> None:
    stack = [expr]
    while stack:
        node = stack.pop()
        if isinstance(node, TRef) and node.kind in ("column", "cell"):
            raise DefinitionError(
                f"a scenario change can read inputs only; '{node.name}' is computed",
                node.meta.span, hint="scenarios change inputs; results follow from them")
        stack.extend(getattr(node, "args", ()))
        for attr in ("operand", "left", "right"):
            if hasattr(node, attr):
                stack.append(getattr(node, attr))


def _check_cell(checker, sheet, d: Definition) -> float:
    from layercalc.checking.expressions import is_constant

    if d.kind != "cell":
        raise DefinitionError("a scenario changes input columns with add, scale or set; "
                              "it cannot define a column", d.span)
    if d.name not in sheet.input_cells:
        close = close_names(d.name, sheet.input_cells, 3)
        raise UnknownNameError(f"'{d.name}' is not an input cell of the sheet", d.name_span,
                               close, hint="a scenario can set the sheet's input cells "
                               "(" + ", ".join(sheet.input_cells) + ")")
    if not is_constant(d.expr):
        raise DefinitionError("in a scenario, a cell is set to a number with a unit",
                              d.expr.span, hint=f"e.g. cell {d.name} = 300 m")
    cell = checker.input_cell(d)
    if cell is None:
        raise DefinitionError(f"cell {d.name} could not be read", d.span)
    want = sheet.input_cells[d.name].unit.dimension
    if not U.same_dimension(cell.unit.dimension, want):
        raise UnitError(f"{d.name} is {U.dimension_name(want)}, not "
                        f"{U.dimension_name(cell.unit.dimension)}", d.expr.span)
    return cell.value


def _empty_selection(sheet, ch: CheckedChange, sc) -> Notice | None:
    if ch.selection in (None, "where"):
        return None
    if ch.place is not None:
        _, soundings = LC.tables_of(sheet, ch)
        if not any(LC.level_mask(s.pressure, ch.selection, ch.bounds).any()
                   for s in soundings):
            return Notice(f"scenario {sc.name}: '{ch.text}' selects no level", ch.span)
        return None
    mask = selection_mask(sheet, ch)
    if not mask.any():
        return Notice(f"scenario {sc.name}: '{ch.text}' selects no layer", ch.span or sc.span)
    return None


def selection_mask(sheet, ch: CheckedChange) -> np.ndarray:
    """Which layers a range selection picks, shape (L,)."""
    pb = sheet.input_columns["p_bottom"].values
    pt = sheet.input_columns["p_top"].values
    tol = PRESSURE_TOLERANCE
    if ch.selection == "between":
        high, low = max(ch.bounds), min(ch.bounds)
        return (pb <= high * (1 + tol)) & (pt >= low * (1 - tol))
    if ch.selection == "above":
        return pb <= ch.bounds[0] * (1 + tol)
    if ch.selection == "below":
        return pt >= ch.bounds[0] * (1 - tol)
    return np.ones_like(pb, dtype=bool)


# ---------------------------------------------------------------- applying scenarios
def chain(checked_sheet, name: str) -> list[CheckedScenario]:
    """The scenario and those it builds on, base first."""
    if name not in checked_sheet.scenarios:
        close = close_names(name, checked_sheet.scenarios, 3)
        raise UnknownNameError(f"no scenario named '{name}'", None, close,
                               hint=None if close else "scenarios in this sheet: "
                               + (", ".join(checked_sheet.scenarios) or "none"))
    out = []
    current = checked_sheet.scenarios[name]
    while current is not None:
        out.append(current)
        current = checked_sheet.scenarios.get(current.base) if current.base else None
    return out[::-1]
