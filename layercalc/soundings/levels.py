"""One sounding's level table, read and checked: the pieces soundings.py builds layers from.

A table of levels (`p` required; `T`, `Td`/`RH`/`r`, `z`, wind as `dir` and `speed` or `u`
and `v`; any other column carried along) is read into SI arrays sorted surface first, with
'-' as NaN. Also here: gap filling in ln p, and the hydrostatic consistency check with its
notices placed on the row of the level the diagnosis names.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from layercalc.language import units as U
from layercalc.language import plausibility
from layercalc.language.inputs import entry_span
from layercalc.language.unit_text import parse_unit_string, resolve_unit
from layercalc.errors import DefinitionError, LayercalcError, Notice, UnitError
from layercalc.language.nodes import Definition, Literal, Table, Unary
from layercalc.physics import humidity, levels as level_physics
from layercalc.physics.winds import wind_components
from layercalc.soundings.details import CombinedLayer, HydrostaticTable
from layercalc.source import Span

WIND_NAMES = ("dir", "speed", "u", "v")
LEVEL_ONLY = ("p", "z", *WIND_NAMES)  # never layer columns; everything else becomes one
EXPECTED_UNITS = {"p": "hPa", "T": "K", "Td": "K", "Tv": "K", "z": "m", "dir": "deg",
                  "speed": "m/s", "u": "m/s", "v": "m/s", "RH": "1", "r": "1"}


@dataclass
class Sounding:
    """One table's levels, surface first, values in SI (NaN for '-')."""

    name: str                      # "the levels table" or "station 'A'"
    table: Table
    pressure: np.ndarray           # [Pa]
    values: dict[str, np.ndarray]  # name -> SI values per level
    units: dict[str, U.Unit]
    order: np.ndarray              # table row of each sorted level

    def row_span(self, level: int) -> Span:
        return self.table.row_spans[int(self.order[level])]

    def entry_span(self, name: str, level: int) -> Span:
        column = [h.name for h in self.table.headings].index(name)
        return entry_span(self.table, int(self.order[level]), column)

    def wind(self) -> tuple[np.ndarray, np.ndarray] | None:
        if "dir" in self.values:
            return wind_components(np.rad2deg(self.values["dir"]), self.values["speed"])
        if "u" in self.values:
            return self.values["u"], self.values["v"]
        return None


def hpa(pressure: float) -> str:
    return f"{pressure / 100.0:g} hPa"


def mean_over_soundings(values) -> np.ndarray:
    """Mean over the first axis (soundings) of what is there: NaN where none has a value."""
    values = np.asarray(values, dtype=float)
    count = np.isfinite(values).sum(axis=0)
    total = np.where(np.isfinite(values), values, 0.0).sum(axis=0)
    return np.where(count > 0, total / np.maximum(count, 1), np.nan)


# ---------------------------------------------------------------- reading one table
def read_sounding(checker, table: Table, name: str) -> Sounding:
    """One levels table, checked (shape, header, units, pressures, values) and sorted.

    `name` says which table it is in messages ("the levels table", "station 'A'").
    Units come from `checker.heading_unit` (documented defaults for canonical names).
    """
    headings = [h.name for h in table.headings]
    if not table.rows:
        raise DefinitionError(f"{name} has no rows", table.span, hint="add one row per level")
    for j, heading in enumerate(table.headings):
        if heading.name in headings[:j]:
            raise DefinitionError(f"column '{heading.name}' appears twice in the header",
                                  heading.span)
        if heading.name in ("p_bottom", "p_top"):
            raise DefinitionError(
                f"a levels table has no '{heading.name}' column", heading.span,
                hint="give one pressure per level in a column 'p'; p_bottom and p_top "
                     "belong in a 'layers' table")
    if "p" not in headings:
        raise DefinitionError(f"{name} has no 'p' column", table.headings[0].span,
                              hint="a levels table needs the pressure of each level: p [hPa]")
    for a, b in (("dir", "speed"), ("speed", "dir"), ("u", "v"), ("v", "u")):
        if a in headings and b not in headings:
            raise DefinitionError(f"'{a}' is given without '{b}'",
                                  table.headings[headings.index(a)].span,
                                  hint="give the wind as dir and speed, or as u and v")
    if "dir" in headings and "u" in headings:
        raise DefinitionError("the wind is given twice (dir/speed and u/v)",
                              table.headings[headings.index("u")].span,
                              hint="keep one of the two forms")
    for row, span in zip(table.rows, table.row_spans):
        if len(row) != len(headings):
            raise DefinitionError(
                f"this row has {len(row)} value{'s' if len(row) != 1 else ''} but the "
                f"header names {len(headings)} columns",
                span, hint="give one number (or '-' if missing) per column")
    data = np.array(table.rows, dtype=float).reshape(len(table.rows), len(headings))
    for i, j in zip(*np.nonzero(np.isinf(data))):
        raise DefinitionError("this value is too large to be a number",
                              entry_span(table, int(i), int(j)))
    values, units = {}, {}
    for j, heading in enumerate(table.headings):
        unit = checker.heading_unit(heading)
        want = EXPECTED_UNITS.get(heading.name)
        if want and not U.same_dimension(unit.dimension, parse_unit_string(want).dimension):
            expected = U.dimension_name(parse_unit_string(want).dimension)
            raise UnitError(f"'{heading.name}' must be {U.with_article(expected)}, not "
                            f"{U.with_article(U.dimension_name(unit.dimension))}", heading.span,
                            found=U.dimension_name(unit.dimension), expected=expected,
                            hint=f"write it as e.g. {heading.name} [{want}]")
        values[heading.name], units[heading.name] = unit.to_si(data[:, j]), unit
    pressure = values["p"]
    for i, p in enumerate(pressure):
        if not (np.isfinite(p) and p > 0):
            raise DefinitionError(
                "a level's pressure must be a number above zero",
                entry_span(table, i, headings.index("p")),
                hint="every row needs its pressure; write '-' only for other values")
    order = np.argsort(-pressure, kind="stable")
    sounding = Sounding(name, table, pressure[order], {k: v[order] for k, v in values.items()},
                        units, order)
    repeated = np.flatnonzero(np.diff(sounding.pressure) == 0.0)
    if repeated.size:
        raise DefinitionError(f"{name} has the level {hpa(sounding.pressure[repeated[0]])} "
                              "twice", sounding.row_span(int(repeated[0]) + 1),
                              hint="merge or remove the duplicate row")
    if pressure.size < 2:
        raise DefinitionError(f"{name} has one level; layers need at least two", table.span)
    _plausible(sounding)
    return sounding


def _plausible(s: Sounding) -> None:
    """Our error for values that cannot be: T below 0 K, negative speed, direction off 0-360,
    and what language/plausibility.py calls an error (values no air has, the vapour
    pressure at or above the pressure, heights that do not fit the pressures)."""
    for name in ("T", "Td"):
        for k, value in enumerate(s.values.get(name, ())):
            if value <= 0:
                raise DefinitionError(f"{name} is below absolute zero ({value:.2f} K)",
                                      s.entry_span(name, k),
                                      hint="check the unit in the header ([degC] or [K])")
    for k, value in enumerate(s.values.get("speed", ())):
        if value < 0:
            raise DefinitionError("a wind speed cannot be negative", s.entry_span("speed", k))
    for k, value in enumerate(np.rad2deg(s.values.get("dir", np.array([])))):
        if np.isfinite(value) and not 0.0 <= value <= 360.0:
            raise DefinitionError(
                f"wind direction {value:g} deg is outside 0 to 360", s.entry_span("dir", k),
                hint="the direction the wind blows from, clockwise from north")
    for name, found in _findings(s):
        if found.kind == "error":
            raise DefinitionError(f"{s.name}: {found.message}", s.entry_span(name, found.index),
                                  hint=found.hint)
    vapour = _level_vapour_pressure(s)
    if vapour is not None:
        found = plausibility.vapour_pressure_finding(vapour[0], s.pressure, vapour[1],
                                                     s.units["p"])
        if found is not None:
            raise DefinitionError(f"{s.name}: {found.message}", s.row_span(found.index),
                                  hint=found.hint)
    if "z" in s.values:
        found = plausibility.height_finding(s.pressure, s.values["z"], s.units["z"])
        if found is not None:
            raise DefinitionError(f"{s.name}: {found.message}",
                                  s.table.headings[[h.name for h in s.table.headings]
                                                   .index("z")].span, hint=found.hint)


def _findings(s: Sounding) -> list[tuple[str, plausibility.Finding]]:
    """Each column's first value outside its bounds (language/plausibility.py)."""
    found = []
    for name, values in s.values.items():
        finding = plausibility.check_values(name, values, s.units[name])
        if finding is not None:
            found.append((name, finding))
    return found


def level_notices(s: Sounding, notices: list[Notice]) -> None:
    """Warnings as the checker gives for layers: values beyond what air does (naming the
    likely unit slip), Td above T."""
    for name, found in _findings(s):
        if found.kind == "warning":
            notices.append(Notice(f"{s.name}: {found.message}", s.entry_span(name, found.index)))
    if "T" in s.values and "Td" in s.values:
        for k in np.flatnonzero(s.values["Td"] > s.values["T"] + 1e-9)[:3]:
            notices.append(Notice(f"{s.name}: dewpoint above temperature at "
                                  f"{hpa(s.pressure[k])} (supersaturated)", s.row_span(k)))


def _level_vapour_pressure(s: Sounding) -> tuple[np.ndarray, str] | None:
    """The vapour pressure at the levels [Pa] and what it is made from (Td, else RH and T)."""
    if "Td" in s.values:
        return humidity.vapour_pressure_from_dewpoint(s.values["Td"]), "Td"
    if "RH" in s.values and "T" in s.values:
        return (humidity.vapour_pressure_from_relative_humidity(s.values["RH"], s.values["T"]),
                "RH and T")
    return None


# ---------------------------------------------------------------- gaps, means, layers
def fill_gaps(pressure, values, name, where, span_of, notices) -> np.ndarray:
    """Inner gaps interpolated linearly in ln p (a notice each); a gap at an end: error."""
    missing = ~np.isfinite(values)
    if not missing.any():
        return values
    for end in (0, values.size - 1):
        if missing[end]:
            raise DefinitionError(
                f"{where}: {name} is missing at {hpa(pressure[end])}, the "
                f"{'lowest' if end == 0 else 'highest'} level", span_of(end),
                hint="give a value there, or remove that level from every table: "
                     "values are interpolated between levels, never extrapolated")
    s = np.log(pressure)
    filled = values.copy()
    filled[missing] = np.interp(-s[missing], -s[~missing], values[~missing])
    for k in np.flatnonzero(missing):
        below = pressure[:k][~missing[:k]][-1]
        above = pressure[k + 1:][~missing[k + 1:]][0]
        notices.append(Notice(
            f"{where}: {name} at {hpa(pressure[k])} is missing: interpolated linearly in "
            f"ln p between {hpa(below)} and {hpa(above)}", span_of(k)))
    return filled


# ---------------------------------------------------------------- hydrostatic check
def cell_definition(checker, name: str) -> Definition | None:
    """The sheet's `cell NAME = ...` statement, or None."""
    for st in checker.document.statements:
        if isinstance(st, Definition) and st.kind == "cell" and st.name == name:
            return st
    return None


def length_cell(checker, name: str, quiet: bool = False) -> tuple[float, Span] | None:
    """A constant length given as `cell NAME = 15 m` in the sheet: (value in m, its span).

    None when the sheet has no such cell. A cell that is not a constant length raises our
    error, or, with `quiet`, gives None (for cells the checker itself checks).
    """
    return constant_cell(checker, name, "length", "15 m", quiet)


def constant_cell(checker, name: str, quantity: str, example: str,
                  quiet: bool = False) -> tuple[float, Span] | None:
    """A constant `cell NAME = <number> <unit>` of the dimension of `example` ("15 m",
    "960 hPa"): (value in SI, its span); None when the sheet has no such cell. A cell that
    is not such a constant raises our error, or, with `quiet`, gives None."""
    st = cell_definition(checker, name)
    if st is None:
        return None
    expr, sign = st.expr, 1.0
    while isinstance(expr, Unary) and expr.op in "+-":
        expr, sign = expr.operand, (-sign if expr.op == "-" else sign)
    try:
        unit = resolve_unit(expr.unit) if isinstance(expr, Literal) and expr.unit else None
    except LayercalcError:
        if quiet:
            return None
        raise
    fits = unit is not None and U.same_dimension(
        unit.dimension, parse_unit_string(example.split(" ", 1)[1]).dimension)
    if quiet and not fits:
        return None
    if unit is None:
        raise DefinitionError(f"{name} must be a number with a {quantity} unit", st.expr.span,
                              hint=f"e.g. cell {name} = {example}")
    if not fits:
        raise UnitError(f"{name} must be {U.with_article(quantity)}, not "
                        f"{U.with_article(U.dimension_name(unit.dimension))}",
                        st.expr.span, found=U.dimension_name(unit.dimension),
                        expected=quantity, hint=f"e.g. cell {name} = {example}")
    return sign * float(unit.to_si(expr.value)), st.expr.span


# Step of the central differences dTv/dT, dTv/dTd [K] (own choice, no source: Tv is
# smooth, so the truncation error ~ step^2 is far below the errors it is used for).
TV_DIFFERENCE_STEP_K = 0.01


def _level_virtual_temperature(s: Sounding, temperature_shift: float = 0.0,
                               dewpoint_shift: float = 0.0) -> np.ndarray:
    """Tv at the levels; where no humidity is given the air counts as dry (r = 0).
    The shifts [K] are added to T and Td (for derivatives)."""
    temperature, p = s.values["T"] + temperature_shift, s.pressure
    if "Td" in s.values:
        r = humidity.mixing_ratio(humidity.vapour_pressure_from_dewpoint(
            s.values["Td"] + dewpoint_shift), p)
    elif "RH" in s.values:
        vapour = humidity.vapour_pressure_from_relative_humidity(s.values["RH"], temperature)
        r = humidity.mixing_ratio(vapour, p)
    else:
        r = s.values.get("r", np.zeros_like(p))
    return humidity.virtual_temperature(temperature, np.nan_to_num(r, nan=0.0))


def describe_hydrostatic_flag(flag: level_physics.HydrostaticFlag) -> str:
    """A hydrostatic diagnosis in words, naming the level or layer and the likely error."""
    if flag.cause == "height":
        d1, d2 = flag.differences
        direction = "high" if d1 > 0 else "low"
        return (f"height at {hpa(flag.level)} is likely mistyped: the layers below and above "
                f"it are off by {d1:+.0f} m and {d2:+.0f} m (observed minus hypsometric), "
                f"so the reported height is about {abs(d1):.0f} m too {direction}")
    if flag.cause == "temperature":
        d1, d2 = flag.differences
        below, above = flag.temperature_errors
        shared = hpa(flag.level)
        return (f"temperature at {shared} is likely wrong: the layers below and above "
                f"it are both off ({d1:+.0f} m, {d2:+.0f} m), as from a temperature "
                f"error of about {below:+.1f} K (from the layer below) or "
                f"{above:+.1f} K (from the layer above) at {shared}")
    bottom, top = hpa(flag.pressure_bottom), hpa(flag.pressure_top)
    text = (f"layer {bottom} to {top} is off by {flag.differences[0]:+.0f} m (observed minus "
            f"hypsometric): check the temperature at {bottom} or {top} (one of them "
            f"off by about {flag.temperature_errors[0]:+.1f} K would explain it)")
    if flag.lowest:
        text += f", or the height at {bottom}, the lowest level"
    if flag.highest:
        text += f", or the height at {top}, the highest level"
    return text


def _flag_span(s: Sounding, flag: level_physics.HydrostaticFlag) -> Span:
    """The row of the level a diagnosis names (both rows for a layer); the table if none."""
    levels = list(s.pressure)
    if flag.level is not None:
        return s.row_span(levels.index(flag.level)) if flag.level in levels else s.table.span
    if flag.pressure_bottom not in levels or flag.pressure_top not in levels:
        return s.table.span
    low = s.row_span(levels.index(flag.pressure_bottom))
    high = s.row_span(levels.index(flag.pressure_top))
    return Span(low.source, min(low.start, high.start), max(low.end, high.end))


def hydrostatic_check(s: Sounding, tolerance: float,
                      notices: list[Notice]) -> HydrostaticTable:
    """Hydrostatic consistency of one sounding's reported heights; notices for the flags.

    Per layer between consecutive levels (physics.levels.hydrostatic_consistency):
    dz_obs = z_top - z_bottom against dz_hyp = Rd / g0 * Tv_mean * ln(p_bottom / p_top),
    Tv_mean = (Tv_bottom + Tv_top) / 2 from Tv at the levels (Tv linear in ln p); a layer
    is flagged when |dz_obs - dz_hyp| > tolerance [m]. The likely cause of each flag
    (physics.levels.diagnose_hydrostatic_flags) becomes a notice on the row of the level
    it names (both rows for a layer). Returns the table, in SI, for the outputs.
    """
    p_bottom, p_top, tv = level_physics.layers_from_levels(s.pressure,
                                                           _level_virtual_temperature(s))
    # dTv/dT and dTv/dTd at the levels, central differences of the same Tv (for the
    # uncertainty of the difference, evaluation/uncertainty.py)
    step = TV_DIFFERENCE_STEP_K
    per_t, per_td = ((_level_virtual_temperature(s, **{name: step})
                      - _level_virtual_temperature(s, **{name: -step})) / (2.0 * step)
                     for name in ("temperature_shift", "dewpoint_shift"))
    observed = np.diff(s.values["z"])
    check = level_physics.hydrostatic_consistency(p_bottom, p_top, observed, tv, tolerance)
    level_tv = _level_virtual_temperature(s)
    usable = level_physics.checkable_levels(level_tv, s.values["z"])
    unchecked = _unchecked_layers(s, usable)
    # the diagnosis runs over the layers between the usable levels, so that a level
    # without a temperature does not hide a height error next to it
    low, high = usable[:-1], usable[1:]
    spans = level_physics.hydrostatic_consistency(
        s.pressure[low], s.pressure[high], s.values["z"][high] - s.values["z"][low],
        (level_tv[low] + level_tv[high]) / 2.0, tolerance)
    combined = tuple(CombinedLayer(float(s.pressure[a]), float(s.pressure[b]),
                                   float(s.values["z"][b] - s.values["z"][a]),
                                   float(spans.hypsometric_thickness[k]),
                                   float(spans.difference[k]), bool(spans.flagged[k]))
                     for k, (a, b) in enumerate(zip(low, high)) if b - a > 1)
    flags = level_physics.diagnose_hydrostatic_flags(s.pressure[low], s.pressure[high],
                                                     spans.difference, spans.flagged)
    messages = [describe_hydrostatic_flag(flag) for flag in flags]
    for flag, message in zip(flags, messages):
        notices.append(Notice(f"hydrostatic check, {s.name}: {message}", _flag_span(s, flag)))
    # a level without a height is ordinary (significant levels report none): said in the
    # report and JSON only; a missing temperature is a gap in what was reported: a warning
    if any("temperature" in why for _, _, why in unchecked):
        notices.append(Notice(f"hydrostatic check, {s.name}: "
                              + describe_unchecked(unchecked, combined),
                              s.row_span(int(np.flatnonzero(~np.isfinite(
                                  s.values["T"]))[0]))))
    return HydrostaticTable(s.name, tolerance, p_bottom, p_top, observed,
                            check.hypsometric_thickness, check.difference, check.flagged,
                            check.implied_virtual_temperature, tuple(flags), tuple(messages),
                            per_t, per_td, unchecked, combined)


def _unchecked_layers(s: Sounding, usable: np.ndarray) -> tuple[tuple[float, float, str], ...]:
    """The layers between consecutive levels that the check cannot test on their own, with
    the reason (the value missing at one of its levels)."""
    missing = {}
    for k in range(s.pressure.size):
        gaps = [what for what, values in (("temperature", s.values["T"]),
                                           ("height", s.values["z"]))
                if not np.isfinite(values[k])]
        if gaps:
            missing[k] = f"no {' and no '.join(gaps)} at {hpa(s.pressure[k])}"
    out = []
    for k in range(s.pressure.size - 1):
        reasons = [missing[j] for j in (k, k + 1) if j in missing]
        if reasons:
            out.append((float(s.pressure[k]), float(s.pressure[k + 1]), "; ".join(reasons)))
    return tuple(out)


def describe_unchecked(unchecked, combined) -> str:
    """The layers the hydrostatic check skipped, why, and what it checked instead."""
    skipped = "; ".join(f"{hpa(b)} to {hpa(t)} ({why})" for b, t, why in unchecked)
    text = f"layers not checked on their own: {skipped}"
    if combined:
        text += ("; checked instead as one layer across the gap: "
                 + ", ".join(f"{hpa(c.p_bottom)} to {hpa(c.p_top)} (off by "
                             f"{c.difference:+.0f} m{', flagged' if c.flagged else ''})"
                             for c in combined))
    return text
