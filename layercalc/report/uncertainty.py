"""The report's "How far to trust it" section, worded from an evaluation.uncertainty
Assessment: the tendency as value +- 1 sigma with its 5-95 % range and the chance of a
falling surface pressure, omega and divergence per layer (and per level for a station
network) with +- sigma, the level of non-divergence with its range, the winds that move
the tendency most, and the method."""

from __future__ import annotations

import numpy as np

from layercalc.report.layout import wrap, wrap_pair

FLOOR = ("only the reporting resolution (direction {d:g} deg, speed {s:g} kt, uniform, "
         "independent): this is the floor of the real error, not all of it")
PER_3H = "hPa/(3 h)"


def model_words(model, network) -> str:
    from layercalc.physics.error_models import KNOT

    parts = []
    if network is not None and network.reported:
        floor = FLOOR.format(d=np.rad2deg(model.direction_step), s=model.speed_step / KNOT)
        if model.wind_error:
            floor = (f"reporting resolution (direction {np.rad2deg(model.direction_step):g} "
                     f"deg, speed {model.speed_step / KNOT:g} kt, uniform)")
        parts.append(floor)
    if network is not None and model.wind_error:
        text = f"a wind error of {model.wind_error:g} m/s per component"
        if model.wind_error_growth:
            text += f", growing by {model.wind_error_growth * 1e4:g} m/s per 100 hPa of height"
        if model.level_correlation:
            text += f", correlated {model.level_correlation:g} between adjacent levels"
        parts.append(text)
    if network is None and model.div_error is not None:
        if np.ndim(model.div_error):
            sigma = np.asarray(model.div_error) * 1e5
            text = (f"a divergence error of {sigma.min():g} to {sigma.max():g}e-5 s^-1 "
                    "by layer (the div_error column)")
        else:
            text = f"a divergence error of {model.div_error * 1e5:g}e-5 s^-1 in every layer"
        if model.level_correlation:
            text += f", correlated {model.level_correlation:g} between adjacent layers"
        parts.append(text)
    thermal = [f"{what} {value:g} {unit}" for what, value, unit in (
        ("temperature", model.T_error, "K"), ("dewpoint", model.Td_error, "K"),
        ("height", model.z_error, "m")) if value]
    if thermal:
        parts.append("an error of each reported " + ", ".join(thermal) + " (independent)")
    return "; plus ".join(parts) if parts else "none declared"


def lines(report) -> list[str]:
    """The section's lines for a report (report.text._Report), or [] without a model."""
    from layercalc.evaluation.uncertainty import assess_sheet, network_of

    assessment = assess_sheet(report.sheet, report.result.scenario)
    if assessment is None:
        return []
    network = network_of(report.checked)
    out = ["", "How far to trust it"]
    out += wrap("error model: " + model_words(assessment.model, network), indent="  ")
    rows = []
    cells, c = assessment.cells, report.cells
    tendency = cells.get("surface_pressure_tendency")
    if tendency is not None:
        value = c["surface_pressure_tendency"]
        unit = "hPa/h" if report.system == "si" else PER_3H
        rows.append(("surface pressure tendency",
                     f"{report.signed(value, unit, 2)} +- {_number(report, tendency['sigma'], unit, 2)}"
                     f" (1 sigma); 5-95 %: {_number(report, tendency['p05'], unit, 2, True)} "
                     f"to {_number(report, tendency['p95'], unit, 2, True)}"))
        if assessment.probability_falling is not None:
            rows.append(("chance it is falling", f"{100 * assessment.probability_falling:.0f} %"))
        if tendency["p05"] < 0 < tendency["p95"]:
            rows.append(("", "the 5-95 % range spans zero: the sign of the tendency is not "
                             "determined by these inputs"))
    if "max_ascent" in cells and c.get("max_ascent", 0) < 0:
        s = cells["max_ascent"]
        rows.append(("strongest ascent", f"{report.signed(c['max_ascent'], 'hPa/h', 2)}; "
                     f"5-95 %: {_number(report, s['p05'], 'hPa/h', 2, True)} to "
                     f"{_number(report, s['p95'], 'hPa/h', 2, True)}"))
    if "dines_ratio" in cells:
        s = cells["dines_ratio"]
        rows.append(("Dines ratio", f"{c['dines_ratio']:.3f}; 5-95 %: {s['p05']:.3f} to "
                     f"{s['p95']:.3f}"))
    for base, p05, p50, p95, found in assessment.nondivergence:
        text = (f"{report.pressure(round(base / 100) * 100)}; 5-95 %: "
                f"{_number(report, p05, 'hPa', 0)} to {report.pressure(round(p95 / 100) * 100)}")
        if found < 0.995:
            text += f" (no sign change in {100 * (1 - found):.0f} % of members)"
        rows.append(("level of non-divergence", text))
    if rows:
        width = max(len(label) for label, _ in rows) + 2
        for label, text in rows:
            out += wrap_pair(label, text, width)
    out += _layer_table(report, assessment)
    out += _thermal_table(report, assessment)
    out += _hydrostatic_lines(assessment)
    if assessment.levels is not None and network is not None:
        out += _level_table(report, assessment, network)
    out += _sensitivity(report, assessment)
    if assessment.residual_sigma is not None:
        sigma = assessment.residual_sigma
        out += wrap(f"internal estimate from the misfit of the fit ({network.latitudes.size} "
                    f"stations, RSS / (2n - 6)): {np.nanmean(sigma):.2f} m/s per component "
                    f"on average over the levels, which alone gives the tendency +- "
                    f"{report.quantity(assessment.residual_tendency_sigma, PER_3H, 2)}",
                    indent="  ")
    out += wrap(f"method: sigma by exact linear propagation through the fit, layer means, "
                f"adjustment and integration (w at the layer's own Tv); ranges, chances and "
                f"the non-linear results from an ensemble of {assessment.method}"
                + ("; temperature and dewpoint errors (Tv, heights, w) from the ensemble "
                   "only, the hydrostatic check's sigma by linear propagation"
                   if "z_top" in assessment.layers or assessment.hydrostatic else ""),
                indent="  ")
    return out


def _layer_table(report, assessment) -> list[str]:
    from layercalc.report.layout import TableColumn, table_lines

    layers, cols = assessment.layers, report.columns
    if "omega_top" not in layers:
        return []
    labels = report.layer_labels()
    order = slice(None, None, -1)  # top first, as the main table
    scale_div, scale_omega = 1e5, 36.0
    columns = []
    for name, heading, values, scale in (
            ("div", "div", cols["div"], scale_div),
            ("div", "+-", layers["div"], scale_div),
            ("omega_top", "omega", cols["omega_top"], scale_omega),
            ("omega_top", "+-", layers["omega_top"], scale_omega)):
        unit = "1e-5/s" if name == "div" else "hPa/h"
        columns.append(TableColumn(heading, unit, [f"{v * scale:.2f}" for v in values[order]]))
    return ["", "  divergence and omega (at each layer's top) +- 1 sigma, top first"] + [
        "  " + line for line in table_lines("layer", "hPa", labels, columns, width=78)]


def _thermal_table(report, assessment) -> list[str]:
    """Heights (and w) +- sigma when temperature or dewpoint errors are declared."""
    from layercalc.report.layout import TableColumn, table_lines

    layers, cols = assessment.layers, report.columns
    if "z_top" not in layers:
        return []
    order = slice(None, None, -1)
    columns = []
    for name, heading, unit, scale, digits in (("z_top", "z top", "m", 1.0, 0),
                                               ("thickness", "thickness", "m", 1.0, 1),
                                               ("Tv", "Tv", "K", 1.0, 2),
                                               ("w_top", "w top", "cm/s", 100.0, 3)):
        if name not in layers:
            continue
        if name != "Tv":
            columns.append(TableColumn(heading, unit, [f"{v * scale:.{digits}f}"
                                                       for v in cols[name][order]]))
        columns.append(TableColumn("Tv +-" if name == "Tv" else "+-", unit,
                                   [f"{v * scale:.{digits}f}"
                                    for v in layers[name][order]]))
    return ["", "  heights, virtual temperature and w (at each layer's top) +- 1 sigma, "
                "top first"] + ["  " + line for line in table_lines(
                    "layer", "hPa", report.layer_labels(), columns, width=78)]


def _hydrostatic_lines(assessment) -> list[str]:
    """Each hydrostatic check's difference against what the declared errors explain."""
    out = []
    for sounding, sigma, table in assessment.hydrostatic:
        ratio = np.abs(table.difference) / np.where(sigma > 0, sigma, np.nan)
        text = (f"hydrostatic check, {sounding}: the declared errors allow observed minus "
                f"hypsometric thickness of +- {np.nanmin(sigma):.1f} to "
                f"{np.nanmax(sigma):.1f} m (1 sigma)")
        if np.isfinite(ratio).any():
            k = int(np.nanargmax(ratio))
            text += (f"; largest departure {table.difference[k]:+.1f} m = {ratio[k]:.1f} "
                     f"sigma ({table.p_bottom[k] / 100:g}-{table.p_top[k] / 100:g} hPa)")
            if ratio[k] > 3.0:
                text += ", more than the declared errors explain"
        out += wrap(text, indent="  ")
    return ["", *out] if out else []


def _level_table(report, assessment, network) -> list[str]:
    from layercalc.report.layout import TableColumn, table_lines

    order = slice(None, None, -1)
    pressure = network.pressure[order]
    labels = [f"{p / 100:g}" for p in pressure]
    columns = [TableColumn("div +-", "1e-5/s", [f"{s * 1e5:.2f}" for s in
                                              assessment.levels["divergence"][order]]),
               TableColumn("vort +-", "1e-5/s", [f"{s * 1e5:.2f}" for s in
                                               assessment.levels["vorticity"][order]])]
    return ["", "  one sigma of the fitted divergence and vorticity per level"] + [
        "  " + line for line in table_lines("level", "hPa", labels, columns, width=78)]


def _sensitivity(report, assessment) -> list[str]:
    from layercalc.physics.error_models import KNOT

    if not assessment.sensitivity:
        return []
    if assessment.sensitivity[0][1] == "div":
        out = ["", "  what moves the tendency most: the layer whose divergence error of one "
                   "sigma", "  changes it most (from the linear map)"]
    else:
        out = ["", "  what moves the tendency most: the wind whose error of one step (or one "
                   "sigma)", "  changes it most"]
    for label, kind, step, effect, *share in assessment.sensitivity[:6]:
        if kind == "direction":
            amount = f"{np.rad2deg(step):g} deg"
        elif kind == "speed":
            amount = f"{step / KNOT:g} kt"
        elif kind == "div":
            amount = f"{step * 1e5:.2g}e-5 s^-1"
        else:
            amount = f"{step:.2g} m/s"
        text = f"{label} ({amount}): {report.signed(effect, PER_3H, 2)}"
        if share and share[0] is not None:
            text += f" ({100 * share[0]:.0f} % of the variance)"
        out += wrap(text, indent="    ")
    return out


def _number(report, value_si: float, unit_text: str, decimals: int, signed: bool = False) -> str:
    """A bare number in the trade unit (the unit is said once, beside the value)."""
    from layercalc.language.unit_text import parse_unit_string
    from layercalc.report.layout import fixed

    if report.system == "si":
        return f"{value_si:+.4g}" if signed else f"{value_si:.4g}"
    text = fixed(parse_unit_string(unit_text).from_si(value_si), decimals)
    return "+" + text if signed and not text.startswith("-") else text
