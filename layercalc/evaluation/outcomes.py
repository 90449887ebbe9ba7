"""Results outside what the atmosphere does: a warning naming the likely cause.

One table, `RESULT_BOUNDS`: for each computed quantity the size beyond which air does not
go (outside deep convection), with its source. A result beyond it is not refused (a
forecaster may be looking at a thunderstorm on purpose), but the report, the JSON and
`layercalc check` say so, and name what most often makes such a number: a divergence in the
wrong unit, divergences that do not balance, or a boundary value in the wrong unit.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from layercalc.errors import Notice
from layercalc.language.plausibility import BY_NAME
from layercalc.language.unit_text import parse_unit_string

HOURS = 3600.0  # s per hour (SI Brochure, 9th ed., Table 8)


@dataclass(frozen=True)
class ResultBound:
    """The largest size a result reaches in air outside deep convection (SI)."""

    quantity: str               # words for messages and the README table
    names: tuple[str, ...]      # the cells or columns it applies to
    kind: str                   # "cell" or "column"
    limit: float                # on |value|, SI
    display: str                # the unit the limit is stated in
    why: str                    # what lies beyond, in a few words
    source: str


RESULT_BOUNDS = (
    ResultBound("surface pressure tendency", ("surface_pressure_tendency",), "cell",
                10.0 * 100.0 / (3.0 * HOURS), "hPa/(3 h)",
                "over three times an explosive cyclone's deepening, 1 hPa/h for a day",
                "Sanders and Gyakum (1980), Mon. Wea. Rev. 108, 1589-1606: a 'bomb' deepens "
                "24 hPa in 24 h (at 60 deg latitude); 10 hPa per 3 h: our choice"),
    ResultBound("omega", ("omega_top", "omega_bottom"), "column", 100.0 * 100.0 / HOURS,
                "hPa/h",
                "synoptic ascent is a few hPa/h, strong cyclones reach some 20 hPa/h; more "
                "only in convection",
                "Holton and Hakim (2013), An Introduction to Dynamic Meteorology, 5th ed., "
                "scale analysis (from memory); 100 hPa/h: our choice"),
    ResultBound("vertical velocity w", ("w_top", "w_bottom"), "column", 10.0, "m/s",
                "a thunderstorm updraft's speed; layer means over a station network are "
                "cm/s",
                "Holton and Hakim (2013), scale analysis, w about 1 cm/s synoptic (from "
                "memory); 10 m/s: our choice"),
)


def _text(value: float) -> str:
    return f"{value:+.4g}".replace("e+0", "e").replace("e+", "e")


def likely_cause(sheet, cells: dict[str, float], bound: ResultBound) -> str:
    """What most often makes a result this large, from what the sheet holds."""
    columns = sheet.input_columns
    div = columns.get("div")
    if div is not None and np.any(np.abs(div.values) > BY_NAME["div"].warning[1]):
        return "the divergence is in the wrong unit (see its warning: [1e-5 s^-1] expected)"
    if bound.names[0] == "surface_pressure_tendency":
        if sheet.options.get("integrate") == "from_surface":
            return ("it is the omega_surface given plus any terms given; check their units "
                    "(1 Pa/s = 36 hPa/h)")
        net = cells.get("net_mass_divergence")
        if net is not None:
            depth = float(np.sum(columns["p_bottom"].values - columns["p_top"].values))
            bias = 0.1e-5 * depth * 3.0 * HOURS / 100.0  # 0.1e-5 s^-1 over the column
            return (f"the layer divergences do not balance (net mass divergence "
                    f"{_text(net * HOURS / 100.0)} hPa/h): a bias of only 0.1e-5 s^-1 over "
                    f"{depth / 100.0:g} hPa gives {bias:.0f} hPa per 3 h; check div, or "
                    "integrate from the surface with an adjustment")
    if bound.names[0].startswith("omega") or bound.names[0].startswith("w"):
        if sheet.options.get("integrate") == "from_surface" and \
                sheet.options.get("adjust") == "none":
            return ("integrating up from the surface without adjustment carries every "
                    "layer's divergence error upward; try option adjust = obrien")
        return "check the divergence values and their unit, and the omega boundary values"
    return "check the inputs and their units"


def result_notices(sheet, cells: dict[str, float], columns: dict[str, np.ndarray],
                   prefix: str = "") -> list[Notice]:
    """A warning for each quantity of RESULT_BOUNDS beyond its limit (the largest value,
    where it is, the likely cause). `cells` and `columns` in SI, one variant."""
    notices = []
    div = sheet.input_columns.get("div")
    span = div.span if div is not None else None
    for bound in RESULT_BOUNDS:
        unit = parse_unit_string(bound.display)
        worst, where = 0.0, ""
        for name in bound.names:
            if bound.kind == "cell" and name in cells:
                value = float(cells[name])
                if abs(value) > abs(worst):
                    worst, where = value, ""
            elif bound.kind == "column" and name in columns:
                values = np.asarray(columns[name], dtype=float)
                if values.size and np.all(np.isfinite(values)):
                    i = int(np.argmax(np.abs(values)))
                    if abs(values[i]) > abs(worst):
                        level = sheet.input_columns["p_top" if name.endswith("_top")
                                                    else "p_bottom"].values[i]
                        worst, where = float(values[i]), f" at {level / 100.0:g} hPa"
        if abs(worst) <= bound.limit:
            continue
        notices.append(Notice(
            f"{prefix}{bound.quantity} {_text(float(unit.from_si(worst)))} {bound.display}"
            f"{where} is beyond +-{float(unit.from_si(bound.limit)):g} {bound.display} "
            f"({bound.why}); likely cause: {likely_cause(sheet, cells, bound)}", span))
    return notices


def readme_table() -> list[str]:
    """The thresholds as a Markdown table (README, "Errors you may see"; a test compares)."""
    rows = ["| result | warning beyond | why | source |", "|---|---|---|---|"]
    for b in RESULT_BOUNDS:
        limit = float(parse_unit_string(b.display).from_si(b.limit))
        rows.append(f"| {b.quantity} ({', '.join(b.names)}) | +-{limit:g} {b.display} | "
                    f"{b.why} | {b.source} |")
    return rows
