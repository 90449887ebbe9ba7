"""What an input value can be, and the unit slip an absurd one points at.

One table, `BOUNDS`: for each input quantity the range outside which a value is an error
(no air can have it: the sheet would compute nonsense) and the narrower range outside which
it is a warning (air does not do it, but nothing breaks), in SI, with the source of each
figure and the units a hurried forecaster confuses for the quantity. A value outside its
range is re-read in each of those units; a unit in which every value of the column falls
inside the plausible range is named as the likely slip ("did you mean [hPa]?").

The table answers with `Finding`s (kind, position among the values, message, hint); the
checker (layers tables) and soundings.levels (levels tables) give them their place in the
file. Two checks need more than one column: a vapour pressure at or above the pressure
(`vapour_pressure_finding`) and heights that cannot fit their pressures
(`height_finding`, through the column's implied mean virtual temperature).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from layercalc.names import did_you_mean
from layercalc.constants import G0, RD
from layercalc.language import units as U
from layercalc.language.unit_text import parse_unit_string

INF = math.inf


@dataclass(frozen=True)
class Bound:
    """The plausible range of one input quantity (SI). `magnitude`: the bounds apply to
    the size of the value (divergence, wind components)."""

    quantity: str                  # words for messages and the README table
    names: tuple[str, ...]         # the input columns it applies to
    error: tuple[float, float]     # outside: an error
    warning: tuple[float, float]   # outside (and inside `error`): a warning
    display: str                   # the unit bounds are stated in
    slips: tuple[str, ...]         # units confused for this quantity, likeliest first
    why: tuple[str, str]           # what lies below and above the bounds, in a few words
    source: str
    magnitude: bool = False


BOUNDS = (
    Bound("pressure", ("p_bottom", "p_top", "p"), (0.0, 1.1e5), (200.0, 1.1e5), "hPa",
          ("hPa", "Pa", "kPa"),
          ("higher than radiosondes fly", "more than any surface pressure observed"),
          "highest sea-level pressure observed 1084.8 hPa, WMO World Weather and Climate "
          "Extremes Archive (from memory); balloon bursts near 5 hPa: common practice, "
          "no source"),
    Bound("temperature", ("T", "Td"), (150.0, INF), (150.0, 340.0), "K", ("degC", "K"),
          ("colder than any air", "warmer than any air"),
          "lowest air temperature observed -89.2 degC, highest 56.7 degC, WMO World Weather "
          "and Climate Extremes Archive (from memory); the 150 and 340 K bounds leave a "
          "margin: our choice"),
    Bound("relative humidity", ("RH",), (0.0, 1.05), (0.0, 1.0), "%", ("%", "1"),
          ("a humidity cannot be negative", "more supersaturated than air gets"),
          "definition (WMO-No. 8, 2018, Annex 4.B, from memory); 105 % allowance for "
          "sensors: our choice"),
    Bound("mixing ratio", ("r",), (0.0, 0.1), (0.0, 0.04), "g/kg", ("g/kg", "1"),
          ("a mixing ratio cannot be negative", "moister than any air: at 1000 hPa "
           "40 g/kg needs a dewpoint near 37 degC"),
          "definition; highest dewpoints about 35 degC (from memory); Bolton (1980) "
          "vapour pressure"),
    Bound("divergence", ("div",), (-INF, INF), (-1.0e-3, 1.0e-3), "s^-1",
          ("1e-5 s^-1", "s^-1"),
          ("", "more than even thunderstorm outflow; synoptic divergence is about "
               "1e-5 s^-1"),
          "Holton and Hakim (2013), An Introduction to Dynamic Meteorology, 5th ed., "
          "scale analysis (from memory); 1e-3 s^-1: our choice", magnitude=True),
    Bound("wind speed", ("speed", "u", "v"), (-INF, INF), (-150.0, 150.0), "m/s",
          ("m/s", "kt", "km/h"),
          ("", "faster than any jet stream, about 100 m/s at most"),
          "jet maxima about 100 m/s (from memory); 150 m/s leaves a margin: our choice",
          magnitude=True),
)
BY_NAME = {name: bound for bound in BOUNDS for name in bound.names}

# Heights against their pressures (levels tables): the mean virtual temperature the
# observed thickness of the whole sounding implies, Tv = g0 dz / (Rd ln(p_bottom / p_top)),
# must be air's (the temperature bounds above); otherwise the heights are in another unit.
HEIGHT_SLIPS = ("m", "dam", "ft", "km")


@dataclass(frozen=True)
class Finding:
    """A value outside its range: "error" or "warning", the position of the first such value
    among those given, the message (with the likely slip) and the next step."""

    kind: str
    index: int
    message: str
    hint: str | None = None


def _text(value: float) -> str:
    return f"{value:.6g}".replace("e-0", "e-").replace("e+0", "e+").replace("e+", "e")


def _outside(values, bounds: tuple[float, float], magnitude: bool) -> np.ndarray:
    x = np.abs(values) if magnitude else values
    lo, hi = bounds
    return np.isfinite(x) & ((x < lo) | (x > hi))


def _range_words(bound: Bound, bounds: tuple[float, float], side: str, kind: str) -> str:
    unit = parse_unit_string(bound.display)
    lo, hi = (float(unit.from_si(b)) if math.isfinite(b) else b for b in bounds)
    if bound.magnitude:
        return f"beyond +-{_text(hi)} {bound.display}"
    if kind == "warning" and math.isfinite(lo) and math.isfinite(hi):
        return f"outside the plausible range {_text(lo)} to {_text(hi)} {bound.display}"
    return f"below {_text(lo)} {bound.display}" if side == "low" else \
        f"above {_text(hi)} {bound.display}"


def slips(bound: Bound, written, unit: U.Unit) -> list[str]:
    """The units of `bound.slips` in which every number as written is plausible."""
    found = []
    for text in bound.slips:
        other = parse_unit_string(text)
        if text == unit.text or (other.scale == unit.scale and other.offset == unit.offset):
            continue
        if not U.same_dimension(other.dimension, unit.dimension):
            continue
        if not np.any(_outside(other.to_si(written), bound.warning, bound.magnitude)):
            found.append(text)
    return found


def check_values(name: str, values_si, unit: U.Unit) -> Finding | None:
    """The first problem with a column's values (SI), or None: an error before a warning."""
    bound = BY_NAME.get(name)
    values_si = np.asarray(values_si, dtype=float)
    if bound is None or values_si.size == 0 or not U.same_dimension(
            unit.dimension, parse_unit_string(bound.display).dimension):
        return None
    for kind, bounds in (("error", bound.error), ("warning", bound.warning)):
        bad = _outside(values_si, bounds, bound.magnitude)
        if not bad.any():
            continue
        i = int(np.flatnonzero(bad)[0])
        side = "low" if values_si[i] < bounds[0] and not bound.magnitude else "high"
        written = unit.from_si(values_si[np.isfinite(values_si)])
        value = float(unit.from_si(values_si[i]))
        more = int(bad.sum()) - 1
        also = f" (and {more} more value{'s' if more > 1 else ''})" if more else ""
        message = (f"{name} {_text(value)} [{unit.text}]{also} is "
                   f"{_range_words(bound, bounds, side, kind)} "
                   f"({bound.why[0 if side == 'low' else 1]})")
        likely = slips(bound, written, unit)
        if likely:
            message += _slip_words("these look like", likely, " values")
            hint = f"write the header as {name} [{likely[0]}]"
        else:
            hint = f"check this value and the unit in the header ({name} [{unit.text}])"
        return Finding(kind, i, message, hint)
    return None


def vapour_pressure_finding(vapour_pressure, pressure, made_from: str,
                            pressure_unit: U.Unit | None = None) -> Finding | None:
    """An error where the vapour pressure [Pa] is at or above the pressure [Pa]: the mixing
    ratio r = eps e / (p - e) would be negative or infinite, and Tv wrong. With the unit the
    pressures were written in, a pressure unit that would fit is named as the likely slip."""
    e = np.asarray(vapour_pressure, dtype=float)
    p = np.asarray(pressure, dtype=float)
    bad = np.isfinite(e) & np.isfinite(p) & (e >= p)
    if not bad.any():
        return None
    i = int(np.flatnonzero(bad)[0])
    hint = f"check the units of {made_from} and of the pressures"
    likely = []
    if pressure_unit is not None:
        written = pressure_unit.from_si(p)
        likely = [text for text in slips(BY_NAME["p"], written, pressure_unit)
                  if np.all(e < parse_unit_string(text).to_si(written))]
    message = (f"the vapour pressure from {made_from}, {e[i] / 100.0:.4g} hPa, is at or "
               f"above the pressure, {p[i] / 100.0:.4g} hPa: no air holds that much water "
               "vapour (the mixing ratio would come out negative)")
    if likely:
        message += _slip_words("the pressures look like", likely)
        hint = f"write the pressures' unit as [{likely[0]}]"
    return Finding("error", i, message, hint)


def implied_virtual_temperature(pressure, height) -> float:
    """Mean virtual temperature [K] of the whole sounding from its heights [m] and
    pressures [Pa] (hypsometric equation, dz = Rd Tv / g0 ln(p_bottom / p_top); e.g.
    Wallace and Hobbs 2006, Atmospheric Science, 2nd ed., eq. 3.29); NaN without two
    heights."""
    p = np.asarray(pressure, dtype=float)
    z = np.asarray(height, dtype=float)
    known = np.isfinite(z) & np.isfinite(p)
    if known.sum() < 2:
        return math.nan
    pk, zk = p[known], z[known]
    bottom, top = int(np.argmax(pk)), int(np.argmin(pk))
    return float(G0 * (zk[top] - zk[bottom]) / (RD * math.log(pk[bottom] / pk[top])))


def height_finding(pressure, height_si, unit: U.Unit) -> Finding | None:
    """An error when a sounding's heights cannot belong to its pressures: the mean virtual
    temperature they imply lies outside the temperature bounds. Names the likely unit."""
    bound = BY_NAME["T"]
    tv = implied_virtual_temperature(pressure, height_si)
    if not math.isfinite(tv) or bound.warning[0] <= tv <= bound.warning[1]:
        return None
    written = unit.from_si(np.asarray(height_si, dtype=float))
    likely = []
    for text in HEIGHT_SLIPS:
        other = parse_unit_string(text)
        if text == unit.text or other.scale == unit.scale:
            continue
        tv_other = implied_virtual_temperature(pressure, other.to_si(written))
        if bound.warning[0] <= tv_other <= bound.warning[1]:
            likely.append(text)
    message = (f"the heights z [{unit.text}] do not fit the pressures: from the lowest level "
               f"to the highest they imply a mean virtual temperature of {_text(tv)} K "
               "(no air is that cold or warm)")
    if likely:
        message += _slip_words("these look like", likely)
        hint = f"write the header as z [{likely[0]}]"
    else:
        hint = "check the heights and the unit in the header"
    return Finding("error", 0, message, hint)


# A column's bottom lies near the standard-atmosphere height of its pressure: sea-level
# pressures of 950 to 1050 hPa move a pressure surface by about +-400 m (some 8 m per hPa
# near the ground, hypsometric equation); 1000 m: our choice, so that only a record low
# (about 870 hPa at sea level) comes near it.
SURFACE_HEIGHT_TOLERANCE = 1000.0  # m


def surface_height_finding(height_si: float, bottom_pressure_si: float,
                           unit: U.Unit) -> Finding | None:
    """A warning when surface_height is far from the standard-atmosphere height of the
    column's bottom pressure (U.S. Standard Atmosphere 1976, physics.sounding_profile),
    naming `ft`, `dam` or `km` when the number read in that unit would fit."""
    from layercalc.physics.sounding_profile import standard_atmosphere_height

    expected = float(standard_atmosphere_height(bottom_pressure_si))
    if not (math.isfinite(height_si) and math.isfinite(expected)) or \
            abs(height_si - expected) <= SURFACE_HEIGHT_TOLERANCE:
        return None
    written = float(unit.from_si(height_si))
    likely = [text for text in HEIGHT_SLIPS
              if parse_unit_string(text).scale != unit.scale and abs(
                  float(parse_unit_string(text).to_si(written)) - expected)
              <= SURFACE_HEIGHT_TOLERANCE]
    side = "above" if height_si > expected else "below"
    message = (f"surface_height {_text(written)} [{unit.text}] is "
               f"{_text(round(abs(height_si - expected)))} m {side} where the column's bottom, {bottom_pressure_si / 100.0:g} hPa, lies "
               f"in the standard atmosphere ({expected:.0f} m): weather moves a pressure "
               "surface a few hundred metres, not that far")
    if likely:
        message += _slip_words("this looks like", likely)
    return Finding("warning", 0, message)


def readme_table() -> list[str]:
    """The bounds as a Markdown table (README, "Errors you may see"; a test compares)."""
    rows = ["| quantity | error outside | warning outside | likely slips named | source |",
            "|---|---|---|---|---|"]
    for b in BOUNDS:
        unit = parse_unit_string(b.display)

        def shown(bounds):
            lo, hi = (float(unit.from_si(x)) if math.isfinite(x) else x for x in bounds)
            if not math.isfinite(hi) and not math.isfinite(lo):
                return "-"
            if b.magnitude:
                return f"+-{_text(hi)} {b.display}"
            if not math.isfinite(hi):
                return f"below {_text(lo)} {b.display}"
            return f"{_text(lo)} to {_text(hi)} {b.display}"

        rows.append(f"| {b.quantity} ({', '.join(b.names)}) | {shown(b.error)} | "
                    f"{shown(b.warning)} | {', '.join(b.slips)} | {b.source} |")
    return rows


def _slip_words(subject: str, likely: list[str], what: str = "") -> str:
    """"; these look like hPa values: did you mean [hPa]?" for the likely unit slips."""
    return (f"; {subject} {' or '.join(likely)}{what}: "
            + did_you_mean([f"[{unit}]" for unit in likely], quoted=False))
