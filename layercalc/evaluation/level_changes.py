"""Scenario changes to level values applied: the changed soundings (a trailing variant
axis per level) and the layer columns rebuilt from them (soundings/rebuild.py).

Order within a scenario chain: every change to level values (of the whole chain, in the
order written) is applied to the soundings first and the layers are rebuilt from them;
then the chain's changes to layer columns are applied to those layers. A change never
fills a missing value ('-' stays missing). A direction stays in [0, 360) deg after a
change; a speed must stay >= 0, a temperature above absolute zero.
"""

from __future__ import annotations

import numpy as np

from layercalc.checking.level_changes import level_mask
from layercalc.errors import EvaluationError
from layercalc.soundings.levels import hpa
from layercalc.soundings.rebuild import depends_on, rebuild_layers

FULL_TURN = 2.0 * np.pi  # [rad]


def level_changes(scenarios) -> list:
    """(scenario, change) for every change to level values in the chain, in order."""
    return [(sc, ch) for sc in scenarios for ch in sc.changes if ch.place is not None]


def changed_levels(checked_sheet, scenarios, run) -> tuple[list[dict], set[str]]:
    """Each sounding's level values (levels, variants) in SI after the chain's level
    changes, and the layer columns they change. `run(expr)` evaluates an amount
    (shape (variants, 1))."""
    details = checked_sheet.soundings
    soundings = ([details.levels_table] if details.levels_table is not None else []) + \
        list(details.station_soundings)
    values = [{name: v[:, None] for name, v in s.values.items()} for s in soundings]
    wanted: set[str] = set()
    for sc, ch in level_changes(scenarios):
        amount = np.asarray(run(ch.amount), dtype=float).reshape(1, -1)  # (1, variants)
        for index in ch.tables:
            sounding = soundings[index]
            picked = level_mask(sounding.pressure, ch.selection, ch.bounds)[:, None]
            current = values[index][ch.target]
            if ch.action == "add":
                new = np.where(picked, current + amount, current)
            elif ch.action == "scale":
                new = np.where(picked, current * amount, current)
            else:
                new = np.where(picked & np.isfinite(current), amount, current)
            if ch.target == "dir":
                new = np.where(picked, np.mod(new, FULL_TURN), new)
            _still_physical(sc, ch, sounding, current, new)
            values[index][ch.target] = new
        wanted.add(depends_on(ch.target))
    return values, wanted


def rebuilt_columns(checked_sheet, scenarios, run) -> dict[str, np.ndarray]:
    """The layer columns (variants, layers) in SI that the chain's level changes rebuild;
    empty when it has none."""
    if not level_changes(scenarios):
        return {}
    values, wanted = changed_levels(checked_sheet, scenarios, run)
    return rebuild_layers(checked_sheet.soundings, values, wanted)


def _still_physical(sc, ch, sounding, before, after) -> None:
    """A change must keep a value a number where it was one, a speed >= 0 and a
    temperature above absolute zero (the table refuses such values; a scenario must too)."""
    was = np.isfinite(before)
    bad = was & ~np.isfinite(after)
    what = "not a number"
    if ch.target == "speed":
        bad |= was & (after < 0)
        what = "negative (or not a number)"
    elif ch.target in ("T", "Td"):
        bad |= was & (after <= 0)
        what = "at or below absolute zero (or not a number)"
    if not bad.any():
        return
    level, variant = (int(i[0]) for i in np.nonzero(bad))
    where = f" at {hpa(sounding.pressure[level])} in {sounding.name}"
    if after.shape[1] > 1:
        where += f", variant {variant + 1} of the sweep"
    raise EvaluationError(f"scenario '{sc.name}': '{ch.text}' makes {ch.target} {what}{where}",
                          ch.span, hint="a scenario's change must keep the inputs physical; "
                          "check its amount (and the cells it reads)")
