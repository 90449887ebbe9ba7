"""Side-by-side scenario results: a tidy table (one row per scenario and quantity)."""

from __future__ import annotations

import numpy as np

from layercalc.evaluation.summary import strongest_ascent

# Cells compared for every scenario, with the unit they are shown in.
KEY_CELLS = (
    ("surface_pressure_tendency", "hPa/(3 h)"),
    ("omega_surface", "hPa/h"),
    ("max_ascent", "hPa/h"),
    ("column_thickness", "m"),
    ("column_mean_divergence", "1e-5 s^-1"),
    ("top_mismatch", "hPa/h"),
)


def key_results(result) -> list[tuple[str, float, str]]:
    """(quantity, value, unit) rows for one result: key cells, standard heights and
    thicknesses, and omega at each layer top."""
    from layercalc.language.unit_text import parse_unit_string

    rows = []
    cells = result.si_cells
    ascent = strongest_ascent(cells)
    for name, unit_text in KEY_CELLS:
        if name in cells:
            value = cells[name]
            if name == "max_ascent":  # NaN: no ascent (evaluation.summary.strongest_ascent)
                value = ascent[0] if ascent is not None else np.nan
            rows.append((name, float(parse_unit_string(unit_text).from_si(value)),
                         unit_text))
    summary = result.summary
    for level, height in summary.get("standard_heights", {}).items():
        rows.append((f"height of {level} hPa", height, "m"))
    for layer, thickness in summary.get("standard_thicknesses", {}).items():
        rows.append((f"thickness {layer} hPa", thickness, "m"))
    columns = result.si_columns
    if "omega_top" in columns:
        per_hour = parse_unit_string("hPa/h")
        for p, omega in zip(columns["p_top"], columns["omega_top"]):
            rows.append((f"omega at {p / 100:g} hPa", float(per_hour.from_si(omega)), "hPa/h"))
    return rows


def compare(sheet, names: list[str] | None = None):
    """Key results of the base sheet and each scenario, with the difference from the base."""
    import pandas as pd

    names = ["base", *sheet.scenarios] if names is None else list(names)
    if "base" not in names:
        names = ["base", *names]
    base_rows = {q: v for q, v, _ in key_results(sheet.evaluate())}
    records = []
    for name in names:
        for quantity, value, unit in key_results(sheet.evaluate(name)):
            base = base_rows.get(quantity, np.nan)
            records.append({"scenario": name, "quantity": quantity, "value": value,
                            "unit": unit, "difference_from_base": value - base})
    return pd.DataFrame.from_records(records,
                                     columns=["scenario", "quantity", "value", "unit",
                                              "difference_from_base"])
