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
    lines += trust_lines(sheet, names, system)
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


def trust_lines(sheet, names: list[str], system: str = "trade") -> list[str]:
    """How far to trust the tendency in each variant with an error model: value +- 1 sigma
    (exact), the ensemble's 5-95 % range, the chance of a fall and whether the sign is
    determined (the 5-95 % range does not span zero); [] when no variant has one."""
    from layercalc.evaluation.uncertainty import assess_sheet
    from layercalc.language.unit_text import parse_unit_string

    unit_text = "hPa/(3 h)" if system != "si" else "Pa/s"
    unit = parse_unit_string(unit_text)
    decimals = 2 if system != "si" else None
    found = {}
    for name in names:
        assessment = assess_sheet(sheet, name)
        if assessment is not None and "surface_pressure_tendency" in assessment.cells:
            value = sheet.evaluate(name).si_cells["surface_pressure_tendency"]
            found[name] = (value, assessment)
    if not found:
        return []

    def number(value_si: float, signed: bool = False) -> str:
        value = float(unit.from_si(value_si))
        text = f"{value:.3e}" if decimals is None else fixed(value, decimals)
        return "+" + text if signed and not text.startswith("-") and not is_zero(text) else text

    rows = {"value +- 1 sigma": [], "5-95 % range": [], "chance it falls": [], "sign": []}
    for name in names:
        if name not in found:
            for row in rows.values():
                row.append("-")
            continue
        value, assessment = found[name]
        spread = assessment.cells["surface_pressure_tendency"]
        rows["value +- 1 sigma"].append(f"{number(value, True)} +- {number(spread['sigma'])}")
        rows["5-95 % range"].append(f"{number(spread['p05'], True)} to "
                                    f"{number(spread['p95'], True)}")
        falling = assessment.probability_falling
        rows["chance it falls"].append("-" if falling is None else f"{100 * falling:.0f} %")
        rows["sign"].append("falling" if spread["p95"] < 0 else "rising" if spread["p05"] > 0
                            else "not determined")
    columns = [TableColumn(name, "", [rows[r][i] for r in rows]) for i, name in enumerate(names)]
    return ["", *wrap(f"How far to trust the pressure tendency [{unit_words(unit_text)}]: "
                      "value +- 1 sigma from each variant's error model, the 5-95 % range "
                      "and the chance of a fall from its ensemble; the sign is determined "
                      "only when the 5-95 % range does not span zero."), "",
            *table_lines("tendency", "", list(rows), columns, width=WIDTH - 1)]

