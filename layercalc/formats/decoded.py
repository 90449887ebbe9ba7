"""Decoded soundings: what every sounding reader hands the writer, and the message error.

A reader (coded TEMP/PILOT text, BUFR, a text table) produces `DecodedSounding` objects,
one per station and time: levels surface first in SI units, the station's position and
elevation with where each came from, and remarks about the decoding. `Decoded` holds the
soundings of one file with the warnings (`Notice`) and the reports that could not be
decoded (`layercalc.errors.MessageError`, kept so that a caller choosing a few stations can ignore the
broken report of another).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from layercalc.errors import LayercalcError, Notice

FIELDS = ("height", "temperature", "dewpoint", "wind_direction", "wind_speed")


@dataclass(frozen=True)
class DecodedSounding:
    """One station's sounding at one time, levels sorted surface first (pressure falling).

    Arrays have one entry per level; NaN where the message gave nothing. Heights are
    geopotential metres; wind direction in degrees (from which it blows), speed in m/s.
    """

    station: str                       # "12345", a ship's call sign, "drop 45.1 -30.2"
    kind: str                          # "land", "ship", "drop", "mobile" (TEMP/PILOT), "BUFR", "table"
    time: str                          # "day 08 12 UTC" or "2008-12-08 12:00 UTC"
    latitude: float | None             # [deg north]
    longitude: float | None            # [deg east]
    elevation: float | None            # station elevation [m]
    position_source: str               # "the report", "the BUFR message", "station table x.csv", ""
    pressure: np.ndarray               # [Pa]
    height: np.ndarray                 # [m]
    temperature: np.ndarray            # [K]
    dewpoint: np.ndarray               # [K]
    wind_direction: np.ndarray         # [deg]
    wind_speed: np.ndarray             # [m/s]
    source: str                        # the file it came from
    parts: tuple[str, ...] = ()        # "TTAA line 3", "BUFR message 4 (3 09 052)"
    remarks: tuple[str, ...] = ()      # plain-language notes on the decoding
    surface_pressure: float | None = None   # [Pa], when the message gives one
    positions: tuple = field(default=(), repr=False, compare=False)
    # per level: {field name: Span} of the group each value came from (TEMP text only)
    notices: tuple = ()                # warnings about this sounding (Notice)

    @property
    def level_count(self) -> int:
        return int(self.pressure.size)

    def with_changes(self, **changes) -> "DecodedSounding":
        from dataclasses import replace
        return replace(self, **changes)


@dataclass(frozen=True)
class Decoded:
    """Everything read from one file: soundings, warnings, reports that failed."""

    soundings: tuple[DecodedSounding, ...]
    notices: tuple[Notice, ...] = ()   # about the file (the sounding's own are on it)
    problems: tuple[LayercalcError, ...] = ()
    source: str = ""
    format: str = ""                   # "TEMP/PILOT text", "BUFR", "text table"

    @property
    def all_notices(self) -> tuple[Notice, ...]:
        """The file's warnings, then each sounding's."""
        return self.notices + tuple(n for s in self.soundings for n in s.notices)


def sort_levels(pressure, columns: dict, positions=None):
    """Levels sorted by pressure, descending (surface first); stable for equal pressures."""
    pressure = np.asarray(pressure, dtype=float)
    order = np.argsort(-pressure, kind="stable")
    sorted_columns = {name: np.asarray(values, dtype=float)[order] for name, values in columns.items()}
    sorted_positions = tuple(positions[i] for i in order) if positions is not None else ()
    return pressure[order], sorted_columns, sorted_positions
