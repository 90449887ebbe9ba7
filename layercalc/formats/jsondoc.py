"""Results as JSON and CSV, and the unit conventions of every output (SI or the trade's).

The JSON document (one per variant; values in SI, layers from the surface upward):

    {"title": str, "scenario": str, "description": str, "case": str,
     "units": {name: SI unit},
     "layers": [{"p_bottom": .., "p_top": .., "T": .., "Tv": .., "div": .., "thickness": ..,
                 "z_bottom": .., "z_top": .., "omega_bottom": .., "omega_top": ..,
                 "w_bottom": .., "w_top": .., ...every other column}],
     "summary": {"omega_surface": .., "omega_top": .., "surface_pressure_tendency": ..,
                 "top_mismatch": .., "column_thickness": .., "column_mean_divergence": ..,
                 "dines_ratio": .., "level_of_nondivergence": [..], ...every other cell,
                 "standard_heights": {"500": ..}, "standard_thicknesses": {"1000-500": ..}},
     "options": {..}, "notes": [..], "remarks": [..], "replaced_defaults": [..],
     "notices": [{"line": int|null, "column": int|null, "message": str}], "caution": str}

A documented key the sheet cannot compute (no `div` column: no omega) is present with null.

"uncertainty" (after "summary", or "soundings" when present) is null without an error model
(station networks always have one: the reporting resolution), otherwise, in SI:

    "uncertainty": {
      "model": {"wind_error": ..|null, "wind_error_growth": .., "level_correlation": ..,
                "direction_step": .., "speed_step": .., "div_error": ..|null,
                "T_error": ..|null, "Td_error": ..|null, "z_error": ..|null,
                "declared": [names the file gave]},
      "members": int, "seed": int,
      "cells": {name: {"sigma": .., "p05": .., "p50": .., "p95": ..}},
                # sigma exact (linear propagation) for the linear cells, else the
                # ensemble's; percentiles always from the ensemble
      "probability_falling": ..,                    # share of members with a falling p_s
      "layers": {column: [sigma per layer, surface first]},
      "levels": {"divergence": [..], "vorticity": [..]},   # station networks only, in
                # the order of soundings.network.levels.pressure
      "hydrostatic": [{"sounding": str, "difference_sigma": [..]}]}
                # with T_error, Td_error or z_error and heights only: one sigma of each
                # layer's observed minus hypsometric thickness, as soundings.hydrostatic

A sheet built from soundings (`levels` tables or `station` blocks, soundings.py) has one
more key, "soundings", after "summary" (sheets with a layers table have none): what the
soundings gave, in SI, levels and layers from the surface upward, null for a missing value.
It is the same for every scenario (scenario changes act on the layers, not the soundings).

    "soundings": {
      "thermodynamics_from": "the levels table" | "the mean over the stations",
      "hydrostatic_tolerance": ..,                  # per layer
      "units": {field name: SI unit},               # for every field below
      "column_levels": {"pressure": [..], "T": [..], "Td": [..], ..., "z": [..]},
                       # the column's values at its levels; "z" [] without heights
      "network": null | {                           # station blocks only
        "centroid_latitude": .., "centroid_longitude": .., "area": ..,
        "smallest_angle": .., "collinearity": .., "smallest_separation": ..,
        "largest_separation": ..,
        "stations": [{"name": str, "latitude": .., "longitude": .., "x": .., "y": ..,
                      "u": [..], "v": [..], "reported": "direction and speed" | "components"}],
                                                    # x, y on the tangent plane about the
                                                    # centroid; u, v east and north, per level
        "levels": {"pressure": [..], "divergence": [..],
                   "divergence_interpolated": [bool], "vorticity": [..],
                   "stations_used": [int], "u_at_centroid": [..], "v_at_centroid": [..]},
        "layer_divergence": [..]},                  # the layers' div (mean of two levels)
      "layer_wind": null | {"p_bottom": [..], "p_top": [..], "u": [..], "v": [..]},
                                                    # a levels table with winds only
      "hydrostatic": [{"sounding": str, "tolerance": .., "p_bottom": [..], "p_top": [..],
                       "observed_thickness": [..], "hypsometric_thickness": [..],
                       "difference": [..], "flagged": [bool],
                       "implied_virtual_temperature": [..], "messages": [str],
                       "unchecked": [{"p_bottom": .., "p_top": .., "reason": str}],
                                                    # layers not checked on their own (a
                                                    # level without T or z); null difference
                       "combined": [{"p_bottom": .., "p_top": .., "observed_thickness": ..,
                                     "hypsometric_thickness": .., "difference": ..,
                                     "flagged": bool}]}]}  # checked instead, across the gap
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from layercalc.checking.checked import TOP_FIRST_REMARK
from layercalc.evaluation.summary import strongest_ascent
from layercalc.language import units as U

LAYER_KEYS = ("p_bottom", "p_top", "T", "Tv", "div", "thickness", "z_bottom", "z_top",
              "omega_bottom", "omega_top", "w_bottom", "w_top")
SUMMARY_KEYS = ("omega_surface", "omega_top", "surface_pressure_tendency", "top_mismatch",
                "column_thickness", "column_mean_divergence", "dines_ratio",
                "level_of_nondivergence")
# Cells that are the sheet's own bookkeeping rather than results or inputs.
HIDDEN_CELLS = ("top_boundary", "surface_boundary")

# The units forecasters read, for the canonical names (columns, then cells).
TRADE_COLUMN_UNITS = {
    "p_bottom": "hPa", "p_top": "hPa", "p_mid": "hPa", "dp": "hPa",
    "depth_from_bottom": "hPa", "e": "hPa",
    "T": "degC", "Td": "degC", "Tv": "degC", "r": "g/kg", "RH": "%",
    "thickness": "m", "z_bottom": "m", "z_top": "m",
    "div": "1e-5 s^-1", "div_adjusted": "1e-5 s^-1",
    "omega_bottom": "hPa/h", "omega_top": "hPa/h", "w_bottom": "cm/s", "w_top": "cm/s",
}
TRADE_CELL_UNITS = {
    "omega_surface": "hPa/h", "omega_top": "hPa/h", "top_mismatch": "hPa/h",
    "surface_pressure_tendency": "hPa/(3 h)", "column_thickness": "m",
    "column_mean_divergence": "1e-5 s^-1", "max_ascent": "hPa/h",
    "max_ascent_pressure": "hPa", "surface_height": "m", "surface_pressure": "hPa",
    "dines_ratio": "1",
}
HEIGHT_NAMES = ("thickness", "z_bottom", "z_top", "column_thickness", "surface_height")

# SI units of the "soundings" fields (column_levels other than z take their column's unit).
SOUNDINGS_UNITS = {
    "hydrostatic_tolerance": "m", "pressure": "Pa", "z": "m",
    "centroid_latitude": "deg", "centroid_longitude": "deg", "area": "m^2",
    "smallest_angle": "deg", "collinearity": "1", "smallest_separation": "m",
    "largest_separation": "m", "latitude": "deg", "longitude": "deg", "x": "m", "y": "m",
    "u": "m/s", "v": "m/s", "divergence": "s^-1", "vorticity": "s^-1", "stations_used": "1",
    "u_at_centroid": "m/s", "v_at_centroid": "m/s", "layer_divergence": "s^-1",
    "p_bottom": "Pa", "p_top": "Pa", "tolerance": "m", "observed_thickness": "m",
    "hypsometric_thickness": "m", "difference": "m", "implied_virtual_temperature": "K",
}
NETWORK_KEYS = ("centroid_latitude", "centroid_longitude", "area", "smallest_angle",
                "collinearity", "smallest_separation", "largest_separation")




def output_unit(sheet, name: str, kind: str, system: str = "trade",
                heights: str = "m") -> U.Unit:
    """The unit a column or cell is shown in: SI (`system="si"`), or the trade's unit for
    the canonical names and the sheet's own unit for everything else. `heights` ("m" or
    "dam") applies to thicknesses and heights in trade units."""
    from layercalc.language.unit_text import parse_unit_string

    declared = sheet.unit_of(name, kind)
    if system == "si":
        return U.si_unit(declared.dimension)
    table = TRADE_COLUMN_UNITS if kind == "column" else TRADE_CELL_UNITS
    text = table.get(name)
    if text is None:
        return declared
    if name in HEIGHT_NAMES:
        text = heights
    unit = parse_unit_string(text)
    return unit if U.same_dimension(unit.dimension, declared.dimension) else declared


# ---------------------------------------------------------------- the JSON document
def _number(value):
    value = float(value)
    return value + 0.0 if math.isfinite(value) else None  # + 0.0: no "-0.0"


def _numbers(values) -> list:
    """_number of every value of an array, in one pass."""
    values = np.asarray(values, dtype=float) + 0.0
    out = values.tolist()
    for i in np.flatnonzero(~np.isfinite(values)).tolist():
        out[i] = None
    return out


def _notice(notice) -> dict:
    span = getattr(notice, "span", None)
    return {"line": span.line if span is not None else None,
            "column": span.column if span is not None else None,
            "message": notice.message}


def _scenario_info(sheet, name: str):
    found = sheet.checked.scenarios.get(name) if name != "base" else None
    return (found.description if found else ""), (list(found.notices) if found else [])


def result_document(sheet, result) -> dict:
    """One variant's results in the documented shape (SI units)."""
    checked = result.sheet  # the compiled sheet this variant used (options may differ)
    columns = result.si_columns
    cells = result.si_cells
    summary_extra = result.summary
    units: dict[str, str] = {}
    for name in [*LAYER_KEYS, *checked.column_names]:
        if name in columns and name not in units:
            units[name] = U.si_unit_text(checked.unit_of(name, "column").dimension)
    names = [*LAYER_KEYS, *(n for n in checked.column_names if n not in LAYER_KEYS)]
    values = [_numbers(columns[n]) if n in columns else [None] * checked.layer_count
              for n in names]  # column by column: one conversion per column, not per value
    layers = [dict(zip(names, row)) for row in zip(*values)]
    summary: dict = {}
    for name in SUMMARY_KEYS:
        if name == "level_of_nondivergence":
            levels = summary_extra.get(name)
            summary[name] = None if levels is None else [float(p) for p in levels]
            units[name] = "Pa"
        else:
            summary[name] = _number(cells[name]) if name in cells else None
            if name in cells:
                units.setdefault(name, U.si_unit_text(checked.unit_of(name, "cell").dimension))
    ascent = strongest_ascent(cells)  # null when omega is nowhere negative: no ascent
    for name in checked.cell_names:
        if name in summary or name in HIDDEN_CELLS:
            continue
        summary[name] = _number(cells[name])
        if name in ("max_ascent", "max_ascent_pressure") and ascent is None:
            summary[name] = None
        units.setdefault(name, U.si_unit_text(checked.unit_of(name, "cell").dimension))
    for key in ("standard_heights", "standard_thicknesses"):
        if key in summary_extra:
            summary[key] = {k: float(v) for k, v in summary_extra[key].items()}
            units[key] = "m"
    description, _ = _scenario_info(sheet, result.scenario)
    notices = sheet.warnings(result)
    document = {
        "title": sheet.title,
        "scenario": result.scenario,
        "description": description,
        "case": Path(sheet.checked.source.name).name,
        "units": units,
        "layers": layers,
        "summary": summary,
    }
    soundings = soundings_document(sheet.checked)
    if soundings is not None:
        document["soundings"] = soundings
    document["uncertainty"] = uncertainty_document(sheet, result.scenario)
    document.update({
        "options": dict(checked.options),
        "notes": sheet.notes,
        "remarks": [*checked.remarks,
                    *([TOP_FIRST_REMARK] if checked.rows_given_top_first else [])],
        "replaced_defaults": list(checked.replaced_defaults),
        "notices": [_notice(n) for n in notices],
        "caution": _caution(),
    })
    return document


def uncertainty_document(sheet, scenario: str) -> dict | None:
    """The "uncertainty" key (see the module docstring); None without an error model."""
    from layercalc.evaluation.uncertainty import assess_sheet

    found = assess_sheet(sheet, scenario)
    if found is None:
        return None
    model = found.model.as_dict()
    return {
        "model": model,
        "members": found.model.members,
        "seed": found.model.seed,
        "cells": {name: {k: _number(v) for k, v in summary.items()}
                  for name, summary in found.cells.items()},
        "probability_falling": found.probability_falling,
        "layers": {name: [_number(x) for x in sigma] for name, sigma in found.layers.items()},
        **({"levels": {name: [_number(x) for x in sigma]
                       for name, sigma in found.levels.items()}}
           if found.levels is not None else {}),
        **({"hydrostatic": [{"sounding": sounding, "difference_sigma": jsonable(sigma)}
                            for sounding, sigma, _ in found.hydrostatic]}
           if found.hydrostatic else {}),
    }


def soundings_document(checked) -> dict | None:
    """The "soundings" key of a result document (see the module docstring), from the
    details the soundings stage keeps in checked.soundings (soundings.details); None for a
    sheet with a layers table."""
    details = checked.soundings
    if details is None:
        return None
    units = dict(SOUNDINGS_UNITS)
    for name in details.column_levels:
        if name in checked.column_names:
            units[name] = U.si_unit_text(checked.unit_of(name, "column").dimension)
    network = None
    if details.network is not None:
        given = details.network
        network = {**{key: float(getattr(given, key)) for key in NETWORK_KEYS},
                   "stations": [{"name": s.name, "latitude": s.latitude,
                                 "longitude": s.longitude, "x": s.x, "y": s.y,
                                 "u": jsonable(s.u), "v": jsonable(s.v),
                                 "reported": s.reported}
                                for s in given.stations],
                   "levels": _arrays(given.levels, LEVEL_KEYS),
                   "layer_divergence": jsonable(given.layer_divergence)}
    wind = details.layer_wind
    return {
        "thermodynamics_from": details.thermodynamics_from,
        "hydrostatic_tolerance": details.hydrostatic_tolerance,
        "units": units,
        "column_levels": {name: jsonable(values)
                          for name, values in details.column_levels.items()},
        "network": network,
        "layer_wind": None if wind is None else _arrays(wind, ("p_bottom", "p_top", "u", "v")),
        "hydrostatic": [{"sounding": table.sounding, "tolerance": table.tolerance,
                         **_arrays(table, HYDROSTATIC_KEYS), "messages": list(table.messages),
                         "unchecked": [{"p_bottom": b, "p_top": t, "reason": why}
                                       for b, t, why in table.unchecked],
                         "combined": [{key: getattr(c, key) for key in HYDROSTATIC_KEYS[:-1]}
                                      for c in table.combined]}
                        for table in details.hydrostatic],
    }


LEVEL_KEYS = ("pressure", "divergence", "divergence_interpolated", "vorticity",
              "stations_used", "u_at_centroid", "v_at_centroid")
HYDROSTATIC_KEYS = ("p_bottom", "p_top", "observed_thickness", "hypsometric_thickness",
                    "difference", "flagged", "implied_virtual_temperature")


def _arrays(record, keys) -> dict:
    """Named arrays of a details record as JSON lists."""
    return {key: jsonable(getattr(record, key)) for key in keys}


def jsonable(values) -> list:
    """Floats (None for NaN), booleans or integers, for JSON."""
    array = np.asarray(values)
    if array.dtype == bool:
        return [bool(x) for x in array]
    if array.dtype.kind in "iu":
        return [int(x) for x in array]
    return [None if not np.isfinite(x) else float(x) for x in array.astype(float)]


def scenarios_document(sheet, names: list[str]) -> dict:
    """Several variants (the base first): {"title", "caution", "scenarios": [document...]}."""
    return {"title": sheet.title, "caution": _caution(),
            "scenarios": [result_document(sheet, sheet.evaluate(n)) for n in names]}


def _caution() -> str:
    from layercalc.caution import CAUTION

    return CAUTION


def dumps(document: dict) -> str:
    """The document as text: json.dumps(indent=2, allow_nan=False, ensure_ascii=False), byte
    for byte, written at the C encoder's speed (jsontext.py)."""
    from layercalc.formats.jsontext import dumps as indented

    return indented(document, end="\n")


# ---------------------------------------------------------------- CSV
def _csv_number(value) -> str:
    """A number to 12 significant digits, never -0, empty when not finite: float64 carries
    about 16, of which the conversions from SI and the sums leave the last few noise
    (5.400000000000001, 0.359999999999999 for 0.36); no input is given to more than 12."""
    value = float(value)
    if not math.isfinite(value):
        return ""
    return f"{value + 0.0:.12g}"  # + 0.0 turns -0.0 into 0.0

# The default columns in the order the report's layer table reads: the layer's pressures
# and temperatures, then the rest of the thermodynamics (dp, p_mid, humidity, Tv,
# thickness, the heights bottom before top), then kinematics (div, adjusted, omega and w,
# bottom before top).
TABLE_ORDER = ("p_bottom", "p_top", "T", "Td", "RH", "dp", "p_mid", "e", "r", "Tv",
               "thickness", "z_bottom", "z_top", "div", "div_adjusted", "omega_bottom",
               "omega_top", "w_bottom", "w_top")


def table_order(checked, names: list[str]) -> list[str]:
    """`names` in table order: the defaults as TABLE_ORDER, then the other input columns
    as given, then the user's columns as written in the file (the sheet itself keeps
    its formulas in evaluation order, which put z_top before z_bottom)."""
    known = [n for n in TABLE_ORDER if n in names]
    inputs = [n for n in checked.input_columns if n in names and n not in known]
    written = {f.name: (f.span.start if f.span is not None else -1)
               for f in checked.formulas if f.kind == "column"}
    rest = sorted((n for n in names if n not in known and n not in inputs),
                  key=lambda n: written.get(n, -1))
    return known + inputs + rest


def layer_table_csv(result, system: str = "trade", heights: str = "m") -> str:
    """The layer table as CSV text: a row of names, a row of units, one row per layer from
    the surface upward."""
    import csv
    import io

    checked = result.sheet
    columns = result.si_columns
    names = table_order(checked, [n for n in checked.column_names if n in columns])
    units = [output_unit(checked, n, "column", system, heights) for n in names]
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(names)
    writer.writerow([u.text for u in units])
    converted = [u.from_si(columns[n]) for n, u in zip(names, units)]
    for i in range(checked.layer_count):
        writer.writerow([_csv_number(values[i]) for values in converted])
    return buffer.getvalue()


# ---------------------------------------------------------------- writing files
