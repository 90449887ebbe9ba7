"""The scenario comparison printed by `layercalc run CASE --all-scenarios`: key results of
the base and every scenario side by side, each with its change from the base.

Nothing here computes physics: the values are compare.key_results of each variant,
converted once for display with the unit table.
"""

from __future__ import annotations

import math

from layercalc.language.units import si_unit_text
from layercalc.report.layout import (WIDTH, TableColumn, auto_decimals, fixed, is_zero, table_lines,
                            unit_words, wrap)

# Shorter labels for the comparison table's quantities (compare.key_results names).
COMPARISON_LABELS = {
    "surface_pressure_tendency": "pressure tendency", "omega_surface": "omega at surface",
    "max_ascent": "strongest ascent", "column_thickness": "column thickness",
    "column_mean_divergence": "mean div. as given", "top_mismatch": "raw top mismatch",
}
COMPARISON_DECIMALS = {"hPa/(3 h)": 2, "hPa/h": 2, "1e-5 s^-1": 3, "m": 0, "dam": 1, "hPa": 0}


def render_comparison(sheet, names: list[str], system: str = "trade") -> str:
    """Key results of the base and every scenario side by side, each with its change from
    the base in brackets, in tables no wider than 80 columns."""
    from layercalc.language.unit_text import parse_unit_string
    from layercalc.evaluation.compare import key_results
    from layercalc.caution import CAUTION

    rows: dict[str, dict[str, float]] = {}
    units: dict[str, str] = {}
    for name in names:
        for quantity, value, unit_text in key_results(sheet.evaluate(name)):
            if system == "si":
                unit = parse_unit_string(unit_text)
                value, unit_text = float(unit.to_si(value)), si_unit_text(unit.dimension)
            rows.setdefault(quantity, {})[name] = value
            units[quantity] = unit_text
    base = names[0]
    title = sheet.title or sheet.checked.source.name
    lines = [*wrap(title), "=" * min(WIDTH - 1, max(len(title), 20)),
             f"Scenarios compared with {names[0]}:"]
    for name in names[1:]:
        scenario = sheet.checked.scenarios[name]
        lines += wrap(f"{name}: {scenario.description or '(no description)'}"
                      + (f" (builds on {scenario.base})" if scenario.base else ""), "  ")
    lines += [""] + wrap(f"Each value with its change from {base} in brackets; "
                          "--scenario NAME gives one scenario's full report.") + [""]
    quantities = list(rows)
    labels = [COMPARISON_LABELS.get(q, q) for q in quantities]
    unit_texts = [unit_words(units[q]) for q in quantities]
    label_width = max(len(x) for x in labels)
    labels = [f"{label.ljust(label_width)}  {unit}" for label, unit in zip(labels, unit_texts)]

    def cell(q: str, name: str) -> str:
        value = rows[q].get(name, math.nan)
        text = _comparison_number(value, units[q], system)
        if name == base:
            return text
        change = value - rows[q].get(base, math.nan)
        change_text = _comparison_number(change, units[q], system)
        if change_text != "-" and not change_text.startswith("-") and not is_zero(change_text):
            change_text = "+" + change_text
        return f"{text} ({change_text})"

    columns = [TableColumn(name, "", [cell(q, name) for q in quantities]) for name in names]
    lines += table_lines("quantity", "", labels, columns, width=WIDTH - 1)
    notices = sheet.check()  # the sheet's, every scenario's, and results beyond air's
    if notices:
        lines += ["", "Warnings"]
        for notice in notices:
            lines += wrap("- " + notice.format())
    lines += [""] + wrap("caution: " + CAUTION)
    return "\n".join(lines) + "\n"


def _comparison_number(value: float, unit_text: str, system: str) -> str:
    if not math.isfinite(value):
        return "-"
    decimals = None if system == "si" else COMPARISON_DECIMALS.get(unit_text)
    if decimals is None:
        decimals = auto_decimals([value])
    return f"{value:.3e}" if decimals is None else fixed(value, decimals)
