"""The summary diagnostics of a results sheet as live formulas: levels of non-divergence,
heights of the standard pressure surfaces and standard thicknesses
(layercalc.evaluation.summary computes the same numbers with numpy).

Level of non-divergence (layercalc.physics.kinematic.nondivergence_levels): two helper
columns beside the layer table. `level` holds, in each layer row k, the level that belongs
to that row: the layer's own mid pressure where its divergence is exactly 0, else the
crossing between k and k+1 where the divergences have opposite signs,

    p0 = exp(ln p_k + (ln p_k+1 - ln p_k) * D_k / (D_k - D_k+1)),

else 0 (no level); `count` is the running number of levels. The i-th level is
INDEX(level, MATCH(i, count, 0)); a column without any divergence has none.

Height of a standard surface P (layercalc.physics.hypsometric.height_at_pressure): the
layer holding it is the n-th, n = SUMPRODUCT(--(p_bottom >= P)) (surface first), and

    z = z_bottom_n + (z_top_n - z_bottom_n) * ln(p_bottom_n / P) / ln(p_bottom_n / p_top_n),

read with INDEX; outside the column the cell shows #N/A. A thickness is the difference of
two height cells. Only SUMPRODUCT, INDEX, MATCH, IF, LN, EXP and NA: no array entry.
"""

from __future__ import annotations

import numpy as np

from layercalc.formats.xlsx.cells import letter
from layercalc.formats.xlsx.entries import Entry
from layercalc.formats.xlsx.formulas import from_si, number_format, number_text, to_si
from layercalc.language import units as U

HPA = U.Unit(U.PRESSURE, 100.0, 0.0, "hPa")
METRE = U.Unit(U.length, 1.0, 0.0, "m")
NONE_FOUND = "none"


def summary_rows(layout, row: int) -> int:
    """Put the live summary cells after `row` of layout's cells block (name | value | unit |
    formula or note); returns the last row used. `layout` is a ResultsLayout."""
    row = _nondivergence(layout, row)
    return _standard_heights(layout, row)


def _nondivergence(layout, row: int) -> int:
    columns = layout.columns
    if not {"div_adjusted", "p_mid"} <= set(columns):
        return row
    summary = layout.variant.summary
    levels = summary.get("level_of_nondivergence", [])
    first, last = layout.first_row, layout.last_row
    d_letter, _ = columns["div_adjusted"]
    m_letter, m_unit = columns["p_mid"]
    level_column, count_column = layout.next_helper, layout.next_helper + 1
    layout.next_helper += 2
    level_letter, count_letter = letter(level_column), letter(count_column)
    grid = layout.grid
    grid.put(layout.header_row, level_column, Entry(
        "helper: level of non-divergence in or above this layer [hPa]", style="header",
        comment="the layer's mid pressure where its divergence is 0; the crossing (linear "
                "in ln p between mid pressures) where it changes sign towards the layer "
                "above; else 0"))
    grid.put(layout.header_row, count_column, Entry("helper: levels counted from the surface",
                                                    style="header"))
    divergence = np.broadcast_to(layout.variant.columns["div_adjusted"], (layout.layers,))
    middle = np.broadcast_to(layout.variant.columns["p_mid"], (layout.layers,))
    values = _level_values(middle, divergence)
    any_row = row + 1
    counted = 0
    level_format = number_format(values)
    for k in range(layout.layers):
        r = first + k
        d, p = f"{d_letter}{r}", to_si(f"{m_letter}{r}", m_unit)
        own = from_si(p, HPA)
        if r < last:
            d_up, p_up = f"{d_letter}{r + 1}", to_si(f"{m_letter}{r + 1}", m_unit)
            crossing = (f"IF({d}*{d_up}<0,EXP(LN({p})+(LN({p_up})-LN({p}))*{d}/({d}-{d_up}))"
                        f"/{number_text(HPA.scale)},0)")
        else:
            crossing = "0"
        text = f"IF($B${any_row}=0,0,IF({d}=0,{own},{crossing}))"
        grid.put(r, level_column, Entry(float(values[k]), text, "helper", level_format))
        counted += int(values[k] > 0)
        previous = "" if r == first else f"{count_letter}{r - 1}+"
        grid.put(r, count_column, Entry(float(counted), f"{previous}IF({level_letter}{r}>0,1,0)",
                                        "helper", "0"))
    divergent = int(np.count_nonzero(divergence))
    row += 1
    layout.put_cell_row(row, "divergent_layers", Entry(
        float(divergent), f"SUMPRODUCT(--(${d_letter}${first}:${d_letter}${last}<>0))",
        "derived", "0"), "1", "layers whose (adjusted) divergence is not 0")
    row += 1
    layout.put_cell_row(row, "levels_of_nondivergence", Entry(
        float(len(levels)), f"{count_letter}{last}", "derived", "0"), "1",
        "how many levels of non-divergence the column has now (a level cell per level "
        "found at export; more after edits are counted here)")
    wanted = range(1, max(len(levels), 1) + 1)
    level_range = f"${level_letter}${first}:${level_letter}${last}"
    count_range = f"${count_letter}${first}:${count_letter}${last}"
    for i in wanted:
        row += 1
        label = "level_of_nondivergence" + (f"_{i}" if len(levels) > 1 else "")
        value = float(levels[i - 1]) / HPA.scale if i <= len(levels) else NONE_FOUND
        text = f'IFERROR(INDEX({level_range},MATCH({i},{count_range},0)),"{NONE_FOUND}")'
        layout.put_cell_row(row, label, Entry(value, text, "derived", "0.0"), "hPa",
                            f"level {i} of non-divergence from the surface (interpolated "
                            "in ln p between layer mid pressures)")
    return row


def _level_values(middle: np.ndarray, divergence: np.ndarray) -> np.ndarray:
    """The `level` helper column as numbers [hPa], as the sheet computes it."""
    out = np.zeros(middle.shape)
    if not np.any(divergence):
        return out
    with np.errstate(all="ignore"):
        log_p = np.log(middle)
        lower, upper = divergence[:-1], divergence[1:]
        crossing = np.exp(log_p[:-1] + (log_p[1:] - log_p[:-1]) * lower / (lower - upper))
    out[:-1] = np.where(lower * upper < 0, crossing / HPA.scale, 0.0)
    out = np.where(divergence == 0, middle / HPA.scale, out)
    return out


def _standard_heights(layout, row: int) -> int:
    columns = layout.columns
    if not {"p_bottom", "p_top", "z_bottom", "z_top"} <= set(columns):
        return row
    summary = layout.variant.summary
    first, last = layout.first_row, layout.last_row

    def whole(name):
        column, unit = columns[name]
        return to_si(f"${column}${first}:${column}${last}", unit), column, unit

    bottoms, b_letter, b_unit = whole("p_bottom")
    _, t_letter, t_unit = whole("p_top")
    _, zb_letter, zb_unit = whole("z_bottom")
    _, zt_letter, zt_unit = whole("z_top")
    surface = to_si(f"${b_letter}${first}", b_unit)
    top = to_si(f"${t_letter}${last}", t_unit)
    height_rows = {}
    for key, height in summary.get("standard_heights", {}).items():
        pressure = number_text(float(key) * HPA.scale)
        n = f"SUMPRODUCT(--({bottoms}>={pressure}))"

        def at(column, unit, n=n):
            return to_si(f"INDEX(${column}${first}:${column}${last},{n})", unit)

        p_k, p_up = at(b_letter, b_unit), at(t_letter, t_unit)
        z_k, z_up = at(zb_letter, zb_unit), at(zt_letter, zt_unit)
        text = (f"IF(OR({pressure}>{surface},{pressure}<{top}),NA(),"
                + from_si(f"({z_k}+({z_up}-{z_k})*(LN({p_k}/{pressure})/LN({p_k}/{p_up})))",
                          METRE) + ")")
        row += 1
        height_rows[key] = row
        layout.put_cell_row(row, f"height_{key}hPa", Entry(float(height), text, "derived",
                                                           number_format([height])), "m",
                            f"height of the {key} hPa surface, linear in ln p between the "
                            "interfaces of the layer holding it")
    for layer, thickness in summary.get("standard_thicknesses", {}).items():
        bottom, top_key = layer.split("-")
        row += 1
        text = f"$B${height_rows[top_key]}-$B${height_rows[bottom]}"
        layout.put_cell_row(row, f"thickness_{bottom}_{top_key}hPa", Entry(
            float(thickness), text, "derived", number_format([thickness])), "m",
            f"{bottom}-{top_key} hPa thickness: the difference of the two heights above")
    return row


# The last row of a sheet (ECMA-376 limits: 1,048,576 rows).
LAST_SHEET_ROW = 1048576
CHECK_NAME = "layercalc_exported_layers"  # workbook-level defined name: the layer count


def table_check(column: str, layers: int, sheet: str = "") -> tuple[str, str, str]:
    """(formula, its value at export, condition that is TRUE when the rows differ) of the
    cell that compares the layers in the table with the rows the formulas cover: a row
    added to or removed from `layers` is not in the results sheets' formulas."""
    count = f"COUNT({sheet}${column}$2:${column}${LAST_SHEET_ROW})"
    ok = f"OK: the formulas cover all {layers} layers"
    formula = (f'IF({count}={layers},"{ok}","CHECK: the table has "&{count}&" layers but '
               f"the results sheets' formulas cover {layers} (rows 2-{layers + 1}): their "
               'results leave out the change; export the workbook again with layercalc")')
    return formula, ok, f"{count}<>{layers}"


def summary_labels(summary: dict) -> list[str]:
    """The labels summary_rows writes for `summary`, in order (for the compare sheet)."""
    labels = []
    levels = summary.get("level_of_nondivergence")
    if levels is not None:
        labels += ["levels_of_nondivergence"]
        labels += ["level_of_nondivergence" + (f"_{i}" if len(levels) > 1 else "")
                   for i in range(1, max(len(levels), 1) + 1)]
    labels += [f"height_{key}hPa" for key in summary.get("standard_heights", {})]
    labels += [f"thickness_{layer.replace('-', '_')}hPa"
               for layer in summary.get("standard_thicknesses", {})]
    return labels
