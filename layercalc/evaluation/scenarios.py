"""Scenarios applied: a scenario's changes replayed on the input arrays (SI) with a leading
scenario axis, the sheet compiled for a scenario's options, and sweeps over input cells."""

from __future__ import annotations


import numpy as np

from layercalc.names import close_names
from layercalc.checking.checker import check_with_options
from layercalc.checking.scenarios import CheckedChange, CheckedScenario, chain, selection_mask
from layercalc.errors import EvaluationError, LayercalcError, UnknownNameError
from layercalc.evaluation.engine import Environment, evaluate
from layercalc.evaluation.level_changes import changed_levels, rebuilt_columns
from layercalc.language import units as U
from layercalc.soundings.rebuild import depends_on, station_winds


def sheet_for_options(checked_sheet, options: dict[str, str]):
    """The base sheet compiled with other options (a scenario may switch integrate/adjust)."""
    wanted = {**checked_sheet.options, **options}
    if wanted == checked_sheet.options:
        return checked_sheet
    cache = checked_sheet.option_variants
    key = tuple(sorted(wanted.items()))
    if key not in cache:
        cache[key] = check_with_options(checked_sheet.document, wanted)
    return cache[key]


def apply_changes(checked_sheet, scenarios: list[CheckedScenario],
                  cell_values: dict[str, np.ndarray] | None = None,
                  bounds: dict | None = None):
    """Input arrays (SI) after applying the scenarios' changes; cells from `cell_values`
    (arrays of shape (S,)) vary across a leading scenario axis. `bounds`, when given, gets
    the exact (min, max) of each changed column where the changes' own checks found them
    (for engine.evaluate's input_bounds)."""
    bounds = {} if bounds is None else bounds
    columns, cells, env = _inputs(checked_sheet, scenarios, cell_values)
    with np.errstate(all="ignore"):
        columns.update(rebuilt_columns(checked_sheet, scenarios, env.run))  # level changes
        for sc in scenarios:
            for ch in sc.changes:
                if ch.place is not None:  # applied to the soundings above
                    continue
                amount = np.asarray(env.run(ch.amount), dtype=float)
                current = columns[ch.target]
                if ch.condition is None:  # a range of layers: change only those
                    layers = np.flatnonzero(selection_mask(checked_sheet, ch))
                    columns[ch.target] = _changed_layers(current, layers, amount, ch.action)
                    found = _layers_physical(checked_sheet, ch, columns[ch.target], layers)
                    if found is None:
                        bounds.pop(ch.target, None)
                        _still_physical(checked_sheet, sc, ch, columns[ch.target])
                    else:
                        _record_bounds(bounds, ch.target, current, layers, found)
                    continue
                mask = np.asarray(env.run(ch.condition), dtype=bool)
                if ch.action == "add":
                    new = current + np.where(mask, amount, 0.0)
                elif ch.action == "scale":
                    new = current * np.where(mask, amount, 1.0)
                else:
                    new = np.where(mask, amount, current)
                columns[ch.target] = np.asarray(new, dtype=float)
                bounds.pop(ch.target, None)
                _still_physical(checked_sheet, sc, ch, columns[ch.target])
    return columns, cells


def _inputs(checked_sheet, scenarios, cell_values=None):
    """The base input arrays with the scenarios' cells set, and an Environment over them."""
    columns = {n: c.values[None, :] for n, c in checked_sheet.input_columns.items()}
    cells = {n: np.array([[c.value]]) for n, c in checked_sheet.input_cells.items()}
    for sc in scenarios:
        for name, value in sc.cells.items():
            cells[name] = np.array([[value]])
    for name, values in (cell_values or {}).items():
        cells[name] = np.asarray(values, dtype=float).reshape(-1, 1)
    return columns, cells, Environment(columns, cells, checked_sheet.layer_count)


def rebuilt_inputs(checked_sheet, name: str) -> dict[str, np.ndarray]:
    """The layer columns (SI, one value per layer) a named scenario rebuilds from its
    changed soundings, before its changes to layer columns (for the workbook)."""
    scenarios = chain(checked_sheet, name)
    _, _, env = _inputs(checked_sheet, scenarios)
    with np.errstate(all="ignore"):
        return {n: v[0] for n, v in rebuilt_columns(checked_sheet, scenarios, env.run).items()}


def scenario_winds(checked_sheet, name: str) -> tuple | None:
    """The stations' winds (east, north), each (levels, stations) in m/s, after a named
    scenario's level changes (for its error model's wind chain); None when it changes no
    station wind."""
    scenarios = chain(checked_sheet, name)
    if not any(ch.place is not None and ch.place.kind != "levels"
               and depends_on(ch.target) == "div" for sc in scenarios for ch in sc.changes):
        return None
    _, _, env = _inputs(checked_sheet, scenarios)
    with np.errstate(all="ignore"):
        values, _ = changed_levels(checked_sheet, scenarios, env.run)
    details = checked_sheet.soundings
    offset = 1 if details.levels_table is not None else 0
    u, v = station_winds(details.station_soundings, values[offset:])
    return u[..., 0].T, v[..., 0].T


def _changed_layers(current, layers, amount, action: str) -> np.ndarray:
    """`current` (S, L) or (1, L) with the change applied to the given layers only.

    The result has the layers on the outer axis in memory (Fortran order of (S, L)): each
    layer's variants are contiguous, so the change is one pass per changed layer and the
    evaluation after it runs over contiguous memory (a sweep has few layers and many
    variants). Same values as adding 0 or scaling by 1 elsewhere. Each layer is written
    once: a changed one with the changed values, the others copied."""
    count = max(current.shape[0], amount.shape[0])
    new = np.empty((count, current.shape[-1]), order="F")
    changed = layers.tolist()
    for j in sorted(set(range(current.shape[-1])) - set(changed)):
        new[:, j] = current[:, j]
    by_layer = amount.shape[-1] != 1
    for j in changed:
        value = amount[:, j] if by_layer else amount[:, 0]
        if action == "add":
            np.add(current[:, j], value, out=new[:, j])
        elif action == "scale":
            np.multiply(current[:, j], value, out=new[:, j])
        else:
            new[:, j] = value
    return new


def _layers_physical(checked_sheet, ch: CheckedChange, values, layers):
    """The (min, max) of the changed layers when they stay finite (and above absolute zero
    for a temperature), else None: one min and max per changed layer. Only changed layers
    can have become unphysical; _still_physical finds and words the problem otherwise."""
    unit = checked_sheet.input_columns[ch.target].unit
    is_temperature = U.same_dimension(unit.dimension, U.lookup("K").dimension)
    found = (np.inf, -np.inf)
    for j in layers.tolist():
        lowest, highest = np.min(values[:, j]), np.max(values[:, j])
        if not (np.isfinite(lowest) and np.isfinite(highest)) or (
                is_temperature and lowest <= 0.0):
            return None
        found = (min(found[0], float(lowest)), max(found[1], float(highest)))
    return found


def _record_bounds(bounds: dict, target: str, before, layers, changed) -> None:
    """The exact (min, max) of a column after a change of some layers: those of the changed
    layers and of the others as they were (when the values before are one row); nothing
    otherwise (a column changed twice is scanned by the evaluator)."""
    others = np.ones(before.shape[-1], dtype=bool)
    others[layers] = False
    if not others.any():
        bounds[target] = changed
    elif before.shape[0] == 1:
        kept = before[0, others]
        bounds[target] = (min(changed[0], float(np.min(kept))),
                          max(changed[1], float(np.max(kept))))
    else:
        bounds.pop(target, None)


def _still_physical(checked_sheet, sc: CheckedScenario, ch: CheckedChange, values) -> None:
    """A change must not take a temperature to or below absolute zero (the table refuses
    such values; a scenario must too), nor produce a value that is not a number."""
    unit = checked_sheet.input_columns[ch.target].unit
    is_temperature = U.same_dimension(unit.dimension, U.lookup("K").dimension)
    lowest = np.min(values)  # one reduction: NaN propagates, so this also finds NaN
    if np.isfinite(lowest) and np.isfinite(np.max(values)) and (
            lowest > 0.0 or not is_temperature):
        return
    bad = ~np.isfinite(values) | ((values <= 0.0) if is_temperature else False)
    if not np.any(bad):
        return
    variant, layer = (int(i[0]) for i in np.nonzero(np.atleast_2d(bad)))
    value = np.atleast_2d(values)[variant, layer]
    pb = checked_sheet.input_columns["p_bottom"].values[layer] / 100
    pt = checked_sheet.input_columns["p_top"].values[layer] / 100
    what = (f"{U.lookup('degC').from_si(value):.1f} degC, at or below absolute zero,"
            if np.isfinite(value)
            else "not a number")
    where = f" in the layer {pb:g}-{pt:g} hPa"
    if np.atleast_2d(values).shape[0] > 1:
        where += f", variant {variant + 1} of the sweep"
    raise EvaluationError(f"scenario '{sc.name}': '{ch.text}' makes {ch.target} {what}{where}",
                          ch.span, layer=layer, hint="a scenario's change must keep the "
                          "inputs physical; check its amount (and the cells it reads)")


def scenario_inputs(checked_sheet, name: str):
    """(compiled sheet, column inputs, cell inputs) for one named scenario."""
    scenarios = chain(checked_sheet, name)
    options: dict[str, str] = {}
    for sc in scenarios:
        options.update(sc.options)
    compiled = sheet_for_options(checked_sheet, options)
    columns, cells = apply_changes(checked_sheet, scenarios)
    return compiled, columns, cells


def sweep_evaluation(checked_sheet, cell_values: dict[str, np.ndarray],
                     scenario: str | None = None):
    """Evaluate many variants in one pass: each input cell in `cell_values` takes an array of
    SI values (all the same length S)."""
    for name in cell_values:
        if name not in checked_sheet.input_cells:
            close = close_names(name, checked_sheet.input_cells, 3)
            raise UnknownNameError(f"'{name}' is not an input cell of this sheet", None, close,
                                   hint=None if close else "input cells: "
                                   + ", ".join(checked_sheet.input_cells))
    lengths = {np.size(v) for v in cell_values.values()}
    if len(lengths) > 1:
        raise LayercalcError("every varied cell needs the same number of values")
    scenarios = chain(checked_sheet, scenario) if scenario not in (None, "base") else []
    options: dict[str, str] = {}
    for sc in scenarios:
        options.update(sc.options)
    compiled = sheet_for_options(checked_sheet, options)
    bounds: dict = {}
    columns, cells = apply_changes(checked_sheet, scenarios, cell_values, bounds)
    return evaluate(compiled, columns, cells, bounds)
