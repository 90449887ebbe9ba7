"""The report's section on soundings (issue 7): the station network with its per-level
divergence and vorticity, and the hydrostatic check of the reported heights.

Shown only for sheets built from `levels` tables or `station` blocks. Every number comes
from the sheet's sounding details (sheet.checked.soundings: soundings.details, in SI)
and is converted once for display with the unit table; nothing is computed here. The
shape and missing-level warnings are the sheet's notices, listed under "Warnings".
"""

from __future__ import annotations

import math

import numpy as np

from layercalc.soundings.details import (
    HydrostaticTable, LayerWind, Network, NetworkLevels, SoundingDetails,
)

from layercalc.physics import stations as station_physics
from layercalc.soundings.levels import describe_unchecked
from layercalc.report.layout import TableColumn, auto, fixed, pressure_text, table_lines, unit_words, wrap

# Trade units of the section (SI with --units si): name -> (unit text, decimals).
TRADE = {
    "position": ("km", 1), "area": ("km^2", 0), "separation": ("km", 0),
    "divergence": ("1e-5 s^-1", 2), "virtual_temperature": ("degC", 1),
    "speed": ("kt", 0),
}
SI = {
    "position": ("m", 0), "area": ("m^2", None), "separation": ("m", 0),
    "divergence": ("s^-1", None), "virtual_temperature": ("K", 2),
    "speed": ("m/s", 1),
}
FLAG_TEXT = {True: "FLAG", False: "ok"}
INTERPOLATED_MARK = " *"


def _unit(text: str):
    from layercalc.language.unit_text import parse_unit_string

    return parse_unit_string(text)


def _floats(values) -> np.ndarray:
    """Details arrays (NaN for a missing value) as floats."""
    return np.asarray(values, dtype=float)


def _degrees(value: float, positive: str, negative: str) -> str:
    return f"{abs(value):.2f} {positive if value >= 0 else negative}"


class _Section:
    def __init__(self, details: SoundingDetails, system: str, heights: str) -> None:
        self.details = details
        self.system = system
        self.heights = heights
        self.units = SI if system == "si" else TRADE
        self.lines: list[str] = []

    def numbers(self, kind: str, values_si) -> tuple[str, list[str]]:
        """Unit text (as printed) and the values converted, with the kind's decimals."""
        text, decimals = self.units[kind]
        converted = list(_unit(text).from_si(_floats(values_si)))
        if decimals is None:
            return unit_words(text), auto(converted)
        return unit_words(text), [fixed(v, decimals) for v in converted]

    def one(self, kind: str, value_si: float) -> str:
        unit_text, (number,) = self.numbers(kind, [value_si])
        return f"{number} {unit_text}"

    def pressure_unit(self) -> str:
        return "Pa" if self.system == "si" else "hPa"

    # -- the station network --------------------------------------------------
    def network(self, stations: Network) -> None:
        members = stations.stations
        self.lines += ["", "Station network"]
        self.lines += wrap(
            f"{len(members)} stations; divergence and vorticity at each level from a linear "
            "wind field fitted to their winds (least squares) on a plane tangent at the "
            "centroid.", "  ")
        position_unit, xs = self.numbers("position", [s.x for s in members])
        _, ys = self.numbers("position", [s.y for s in members])
        columns = [
            TableColumn("latitude", "deg", [fixed(s.latitude, 2) for s in members]),
            TableColumn("longitude", "deg", [fixed(s.longitude, 2) for s in members]),
            TableColumn("x (east)", position_unit, xs),
            TableColumn("y (north)", position_unit, ys),
        ]
        self.lines += table_lines("station", "", [s.name for s in members], columns)
        separation = (f"{self.one('separation', stations.smallest_separation)} to "
                      f"{self.one('separation', stations.largest_separation)} "
                      f"(warned beyond "
                      f"{self.one('separation', station_physics.MAXIMUM_SEPARATION_WARNING_M)})")
        rows = [
            ("centroid", f"{_degrees(stations.centroid_latitude, 'N', 'S')}, "
                         f"{_degrees(stations.centroid_longitude, 'E', 'W')} "
                         "(the plane's origin)"),
            ("area", self.one("area", stations.area)),
            ("smallest angle", f"{fixed(stations.smallest_angle, 1)} deg (warned below "
                               f"{station_physics.SMALLEST_ANGLE_WARNING_DEG:g} deg)"),
            ("separations", separation),
        ]
        width = max(len(label) for label, _ in rows) + 2
        for label, text in rows:
            self.lines += wrap(f"{label.ljust(width)}{text}", "  ")
        self.levels(stations.levels)

    def levels(self, levels: NetworkLevels) -> None:
        pressure = _floats(levels.pressure)[::-1]  # top first, as the layer table
        interpolated = list(levels.divergence_interpolated)[::-1]
        divergence_unit, divergence = self.numbers("divergence", levels.divergence[::-1])
        _, vorticity = self.numbers("divergence", levels.vorticity[::-1])
        marked = [text + (INTERPOLATED_MARK if flag else "  ")
                  for text, flag in zip(divergence, interpolated)]
        columns = [TableColumn("div  ", divergence_unit + "  ", marked),
                   TableColumn("vort", divergence_unit, vorticity),
                   TableColumn("winds", "", [str(n) for n in levels.stations_used[::-1]])]
        self.lines += ["", "Divergence and relative vorticity at the levels, top first"]
        self.lines += table_lines("level", self.pressure_unit(),
                                  [pressure_text(p, self.system) for p in pressure], columns)
        self.lines.append("")
        if any(interpolated):
            self.lines += wrap(
                f"{INTERPOLATED_MARK.strip()} interpolated linearly in ln p: fewer than "
                f"{station_physics.MINIMUM_STATIONS} stations (not in a line) had a wind "
                "there, so no field was fitted and the vorticity is unknown.")
        self.lines += wrap("winds: the number of stations whose wind the fit used. A layer's "
                           "div is the mean of its two levels.")

    # -- the hydrostatic check ------------------------------------------------
    def hydrostatic(self, table: HydrostaticTable) -> None:
        height_unit = "m" if self.system == "si" else self.heights
        thickness_decimals = 1 if height_unit == "dam" else 0
        unit = _unit(height_unit)

        def heights(key: str, decimals: int) -> list[str]:
            return [fixed(v, decimals) for v in unit.from_si(_floats(getattr(table, key)))[::-1]]

        p_bottom = _floats(table.p_bottom)[::-1]
        p_top = _floats(table.p_top)[::-1]
        labels = [f"{pressure_text(b, self.system)}-{pressure_text(t, self.system)}"
                  for b, t in zip(p_bottom, p_top)]
        difference = _floats(table.difference)[::-1]
        flags = [FLAG_TEXT[bool(flag)] if math.isfinite(d) else "-"
                 for flag, d in zip(table.flagged[::-1], difference)]
        tv_unit, tv = self.numbers("virtual_temperature",
                                   table.implied_virtual_temperature[::-1])
        columns = [
            TableColumn("observed", height_unit, heights("observed_thickness",
                                                         thickness_decimals)),
            TableColumn("hypsometric", height_unit, heights("hypsometric_thickness",
                                                            thickness_decimals)),
            TableColumn("difference", height_unit, heights("difference",
                                                           thickness_decimals + 1)),
            TableColumn("flag", "", flags),
            TableColumn("implied Tv", tv_unit, tv),
        ]
        tolerance = f"{float(unit.from_si(table.tolerance)):g}"
        self.lines += [""] + wrap(f"Hydrostatic check, {table.sounding} (tolerance "
                                  f"{tolerance} {height_unit} per layer)")
        self.lines += table_lines("layer", self.pressure_unit(), labels, columns)
        if table.unchecked:
            self.lines += wrap(describe_unchecked(table.unchecked, table.combined)
                               .replace("layers not", "Layers shown '-' were not", 1) + ".")

    def hydrostatic_all(self) -> None:
        tables = self.details.hydrostatic
        for table in tables:
            self.hydrostatic(table)
        if tables:
            self.lines += [""] + wrap(
                "observed: the difference of the reported heights; hypsometric: the "
                "thickness from the reported temperatures (layer-mean Tv, Tv linear in "
                "ln p); FLAG: the difference exceeds the tolerance (the likely cause is "
                "under Warnings); implied Tv: the layer-mean virtual temperature that the "
                "observed thickness implies.")
        elif "T" in self.details.column_levels:
            self.lines += [""] + wrap("Hydrostatic check: no reported heights (add a z "
                                      "column to the levels to check them against the "
                                      "temperatures).")

    # -- layer-mean winds of a levels table -------------------------------------
    def layer_wind(self, wind: LayerWind) -> None:
        from layercalc.physics.winds import wind_direction_and_speed

        p_bottom = _floats(wind.p_bottom)[::-1]
        p_top = _floats(wind.p_top)[::-1]
        direction, speed = wind_direction_and_speed(_floats(wind.u)[::-1],
                                                    _floats(wind.v)[::-1])
        speed_unit, speeds = self.numbers("speed", speed)
        labels = [f"{pressure_text(b, self.system)}-{pressure_text(t, self.system)}"
                  for b, t in zip(p_bottom, p_top)]
        columns = [TableColumn("from", "deg", [fixed(d, 0) for d in direction]),
                   TableColumn("speed", speed_unit, speeds)]
        self.lines += ["", "Layer-mean wind (the mean of u and v at the two levels), top first"]
        self.lines += table_lines("layer", self.pressure_unit(), labels, columns)

    def render(self, scenario: str) -> list[str]:
        self.lines += ["", "Soundings"]
        source = self.details.thermodynamics_from
        if source:
            self.lines += wrap(f"The column's temperature and humidity at each level: "
                               f"{source}.", "  ")
        if scenario != "base":
            self.lines += wrap(f"As given in the file: the changes of scenario {scenario} "
                               "act on the layers, not on the soundings.", "  ")
        stations = self.details.network
        if stations:
            self.network(stations)
        if self.details.layer_wind is not None:
            self.layer_wind(self.details.layer_wind)
        self.hydrostatic_all()
        return self.lines


def section_lines(details: SoundingDetails | None, system: str = "trade", heights: str = "m",
                  scenario: str = "base") -> list[str]:
    """The soundings section as report lines (no lines for a sheet with a layers table).

    `details` is sheet.checked.soundings; `system` "trade" or "si"; `heights` "m" or "dam"
    (trade units only); `scenario` the variant being reported, for a note that scenario
    changes do not alter the soundings.
    """
    if not details:
        return []
    return _Section(details, system, heights).render(scenario)
