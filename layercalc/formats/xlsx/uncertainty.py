"""The workbook's `uncertainty` sheet: how far to trust the base variant, from layercalc's
error model (evaluation/uncertainty.py); written only when the sheet has one.

Two kinds of columns, each headed as such, and a note at the top saying which is which:

- value: sigmas, percentiles and the chance of a fall computed by layercalc (exact
  propagation and its seeded ensemble). Plain numbers, NOT live: they do not follow an
  edit of the inputs.
- live: the propagation a spreadsheet can hold, as formulas on the `layers` and
  `settings` sheets (which hold the inputs in their written units):
  * a hand-entered `div` with `div_error`, independent layers (level_correlation 0) and
    no adjustment: omega at each layer top is a sum of dp_j div_j over the layers above
    it (from the top) or below it (from the surface), so its sigma is the root of the sum
    of squares of dp_j sigma_j, and the tendency's (from the top) that of every layer;
  * three stations with a declared `wind_error`: the fitted divergence at each level has
    sigma sqrt(L1^2 + L2^2 + L3^2) / (2 A) for independent errors of sigma per wind
    component (Davies-Jones, 1993, Mon. Wea. Rev. 121, 713-725; derived again in
    physics/uncertainty.divergence_variance_factor), sigma growing with depth as
    wind_error + wind_error_growth (p_lowest - p). Side lengths and area come from the
    stations' positions on the tangent plane (x, y), written here as values.
"""

from __future__ import annotations

import math

from layercalc.constants import KNOT
from layercalc.formats.xlsx.cells import letter, put_number, put_text, size_columns, style
from layercalc.formats.xlsx.formulas import number_format, number_text

SHEET = "uncertainty"
PER_3H = 10800.0 / 100.0   # Pa/s -> hPa per 3 h
PER_HOUR = 3600.0 / 100.0  # Pa/s -> hPa/h
NOTE = ("How far to trust the results of the base variant, from layercalc's error model "
        "({model}). Columns headed 'value' are NUMBERS computed by layercalc (exact "
        "propagation and an ensemble of {method}): they are NOT live and do not change when "
        "you edit the inputs; run layercalc again for new ones. Columns headed 'live' are "
        "formulas on the layers and settings sheets and follow your edits. Not live: the "
        "rounding of reported winds, correlated errors, adjustments, errors of T, Td and z.")


def uncertainty_sheet(workbook, sheet, links) -> None:
    """Add the `uncertainty` sheet for `sheet` (a layercalc.Sheet), or nothing without an
    error model. `links`: where the inputs are (layout.Links)."""
    from layercalc.evaluation.uncertainty import assess_sheet, network_of

    assessment = assess_sheet(sheet)
    if assessment is None:
        return
    checked = sheet.checked
    ws = workbook.create_sheet(SHEET)
    network = network_of(checked)
    note = ws.cell(1, 1)
    put_text(note, NOTE.format(model=_model_text(assessment.model, network),
                               method=assessment.method))
    style(note, "note")
    row = _cells_block(ws, 3, assessment)
    row = _layer_table(ws, row + 1, checked, assessment, links)
    if network is not None:
        _triangle_table(ws, row + 1, checked, network, assessment, links)
    from layercalc.formats.xlsx.printing import fit_rows, wrap_notes

    last = max(ws.max_column, 4)
    rows = range(1, ws.max_row + 1)
    names = [len(ws.cell(r, 1).value) for r in rows
             if isinstance(ws.cell(r, 1).value, str) and not ws.cell(r, 1).font.b
             and not ws.cell(r, 1).font.i]  # the quantities, layers and stations
    size_columns(ws, {j: 16 for j in range(1, last + 1)} | {1: min(max(names + [16]), 40)})
    wrap_notes(ws, [r for r in rows if ws.cell(r, 1).font.i], last)  # the notes (italic)
    fit_rows(ws, [r for r in rows if ws.cell(r, 1).font.b], last)  # the headers (bold)


# How the error model is named in the note: cell -> (unit shown, factor from SI).
SHOWN = {"wind_error": ("m/s", 1.0), "wind_error_growth": ("m/s per 100 hPa", 1e4),
         "level_correlation": ("", 1.0), "div_error": ("1e-5 s^-1", 1e5),
         "T_error": ("K", 1.0), "Td_error": ("K", 1.0), "z_error": ("m", 1.0)}


def _model_text(model, network) -> str:
    """The error model in a few words: the reporting floor and the declared values."""
    parts = []
    if network is not None and network.reported:
        parts.append(f"reported winds rounded to {math.degrees(model.direction_step):g} deg "
                     f"and {model.speed_step / KNOT:g} kt")
    for name, (unit, factor) in SHOWN.items():
        value = getattr(model, name)
        if name in model.declared and getattr(value, "ndim", 0):  # a column, one per layer
            parts.append(f"{name} per layer (the div_error column of the layers sheet)")
        elif name in model.declared and value:
            parts.append(f"{name} {value * factor:g}{' ' + unit if unit else ''}")
    return "; ".join(parts) or "none declared"


def _header(ws, row, texts) -> None:
    for j, text in enumerate(texts, start=1):
        put_text(ws.cell(row, j), text)
        style(ws.cell(row, j), "header")


def _cells_block(ws, row, assessment) -> int:
    """The tendency's sigma, percentiles and chance of a fall (values)."""
    _header(ws, row, ["quantity", "value", "unit", "kind"])
    spread = assessment.cells.get("surface_pressure_tendency")
    rows = []
    if spread is not None:
        rows += [(f"surface_pressure_tendency {key}", spread[key] * PER_3H, "hPa/(3 h)")
                 for key in ("sigma", "p05", "p50", "p95")]
    if assessment.probability_falling is not None:
        rows.append(("chance the surface pressure falls", 100 * assessment.probability_falling,
                     "%"))
    for k, (name, value, unit) in enumerate(rows, start=1):
        put_text(ws.cell(row + k, 1), name)
        put_number(ws.cell(row + k, 2), float(value), number_format([value]))
        style(ws.cell(row + k, 2), "static")
        put_text(ws.cell(row + k, 3), unit)
        put_text(ws.cell(row + k, 4), "value")
    return row + len(rows) + 1


def _layer_table(ws, row, checked, assessment, links) -> int:
    """Per layer, surface first: layercalc's sigmas (values) and, for hand-entered div with
    independent layer errors, the live sum of squares for omega at the layer tops."""
    layers = checked.layer_count
    shown = [(name, unit, scale) for name, unit, scale in (
        ("div", "1e-5 s^-1", 1e5), ("omega_top", "hPa/h", PER_HOUR),
        ("w_top", "cm/s", 100.0), ("z_top", "m", 1.0), ("Tv", "K", 1.0))
        if name in assessment.layers]
    live = _live_omega(checked, assessment, links)
    headings = ["layer (surface first)"] + [f"sigma {n} [{u}] value" for n, u, _ in shown]
    if live is not None:
        headings += ["dp*div_error [hPa/h] live", "sigma omega_top [hPa/h] live"]
    _header(ws, row, headings)
    first = row + 1
    # display only: shown to about four significant digits, stored in full
    formats = {name: number_format(assessment.layers[name] * scale) for name, _, scale in shown}
    omega_format = formats.get("omega_top", "0.000")
    bottom, top = checked.input_columns["p_bottom"].values, checked.input_columns["p_top"].values
    for k in range(layers):
        r = first + k
        put_text(ws.cell(r, 1), f"{bottom[k] / 100:g}-{top[k] / 100:g} hPa")
        for j, (name, _, scale) in enumerate(shown, start=2):
            put_number(ws.cell(r, j), float(assessment.layers[name][k] * scale),
                       formats[name])
            style(ws.cell(r, j), "static")
        if live is not None:
            term = letter(len(shown) + 2)
            put_number(ws.cell(r, len(shown) + 2), live["term"](k), omega_format)
            rows = live["rows"](k, first)
            put_number(ws.cell(r, len(shown) + 3),
                       f"=SQRT(SUMSQ({term}{rows[0]}:{term}{rows[1]}))" if rows else "=0",
                       omega_format)
    end = first + layers
    if live is not None and live["tendency"]:
        put_text(ws.cell(end, 1), "sigma surface_pressure_tendency [hPa/(3 h)] live")
        term = letter(len(shown) + 2)
        put_number(ws.cell(end, len(shown) + 3),
                   f"=SQRT(SUMSQ({term}{first}:{term}{first + layers - 1}))*3", omega_format)
        end += 1
    return end


def _live_omega(checked, assessment, links):
    """Formulas for the live omega sigmas, or None when the propagation is not a plain
    sum of squares (a station network, correlated layers, an adjustment) or div_error is
    not on the settings sheet."""
    model = assessment.model
    if (checked.soundings is not None or model.div_error is None
            or model.level_correlation != 0.0 or "div_error" not in links.cell_rows
            or checked.options.get("adjust", "none") != "none"):
        return None
    from_top = checked.options.get("integrate", "from_top") == "from_top"
    pb, pt = links.column_letters["p_bottom"], links.column_letters["p_top"]
    p_scale = checked.input_columns["p_bottom"].unit.scale
    sigma = f"settings!$B${links.cell_rows['div_error']}"
    sigma_scale = checked.input_cells["div_error"].unit.scale
    factor = number_text(p_scale * sigma_scale * PER_HOUR)
    layers = checked.layer_count

    def term(k):
        r = links.first_row + k
        return f"=(layers!{pb}{r}-layers!{pt}{r})*{sigma}*{factor}"

    def rows(k, first):  # the layers whose div reaches omega at the top of layer k
        if from_top:
            return (first + k + 1, first + layers - 1) if k + 1 < layers else None
        return (first, first + k)

    return {"term": term, "rows": rows, "tendency": from_top}


def _triangle_table(ws, row, checked, network, assessment, links) -> int:
    """Three stations with a declared wind_error: the stations' plane positions (values)
    and, per level, the live sigma of the fitted divergence beside layercalc's."""
    model = assessment.model
    stations = checked.soundings.network.stations
    if len(stations) != 3 or not model.wind_error or "wind_error" not in links.cell_rows:
        put_text(ws.cell(row, 1), "Live divergence sigma per level: only for three stations "
                                  "with a declared wind_error (the formula of a triangle).")
        style(ws.cell(row, 1), "note")
        return row + 1
    _header(ws, row, ["station", "x [km] value", "y [km] value"])
    for k, station in enumerate(stations, start=1):
        put_text(ws.cell(row + k, 1), station.name)
        put_number(ws.cell(row + k, 2), station.x / 1000.0, "0.0")
        put_number(ws.cell(row + k, 3), station.y / 1000.0, "0.0")
        for j in (2, 3):
            style(ws.cell(row + k, j), "static")
    x = [f"$B${row + k}" for k in (1, 2, 3)]
    y = [f"$C${row + k}" for k in (1, 2, 3)]
    sides = "+".join(f"({x[a]}-{x[b]})^2+({y[a]}-{y[b]})^2" for a, b in ((1, 2), (2, 0), (0, 1)))
    area = f"ABS(({x[1]}-{x[0]})*({y[2]}-{y[0]})-({x[2]}-{x[0]})*({y[1]}-{y[0]}))/2"
    row += 5
    _header(ws, row, ["level [hPa]", "sigma per component [m/s] live",
                      "sigma div, wind_error only [1e-5 s^-1] live",
                      "sigma div, all errors [1e-5 s^-1] value"])
    error = f"settings!$B${links.cell_rows['wind_error']}"
    error_scale = number_text(checked.input_cells["wind_error"].unit.scale)
    growth = "0"
    if "wind_error_growth" in links.cell_rows:
        growth = (f"settings!$B${links.cell_rows['wind_error_growth']}*"
                  f"{number_text(checked.input_cells['wind_error_growth'].unit.scale)}")
    lowest = network.pressure[0]
    sigma_format = number_format(assessment.levels["divergence"] * 1e5)
    for k, pressure in enumerate(network.pressure, start=1):
        r = row + k
        ws.cell(r, 1, float(pressure / 100))
        put_number(ws.cell(r, 2), f"={error}*{error_scale}+{growth}*("
                   f"{number_text(float(lowest))}-A{r}*100)", "0.00")
        # km -> m: sqrt(sum L^2) / (2 A) in km^-1 is 1e-3 m^-1; times 1e5 for 1e-5 s^-1
        put_number(ws.cell(r, 3), f"=B{r}*SQRT({sides})/(2*{area})*1E-3*1E5", sigma_format)
        put_number(ws.cell(r, 4), float(assessment.levels["divergence"][k - 1] * 1e5),
                   sigma_format)
        style(ws.cell(r, 4), "static")
    return row + len(network.pressure) + 1
