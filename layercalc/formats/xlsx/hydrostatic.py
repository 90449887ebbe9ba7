"""The `hydrostatic` sheet: the hydrostatic check of every sounding the workbook holds live
(the `levels` sheet's table, each station table on `stations`), as live formulas of the
levels as typed.

Per layer between consecutive levels, SURFACE FIRST, as soundings.levels.hydrostatic_check
computes it: Tv at each level from T and the humidity at that level (Td, else RH, else r;
a level without one counts as dry, Tv = T), the layer's Tv the mean of its two levels'
(Tv linear in ln p), the observed thickness z_top - z_bottom as typed, the hypsometric
thickness Rd Tv / g0 ln(p_bottom / p_top), their difference, the flag (FLAG when
|difference| exceeds the tolerance, the same as layercalc's) and the implied Tv
g0 dz / (Rd ln(p_bottom / p_top)). A layer with T or z blank at one of its levels shows
"-" and "not checked"; layercalc's report checks across such a gap and names the likely
cause of each flag, which this sheet does not (they are words, not numbers).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from layercalc import constants as C
from layercalc.formats.xlsx.cells import letter, put_notes, put_text, red_when, size_columns, style
from layercalc.formats.xlsx.formulas import (
    from_si, hypsometric_thickness_text, mixing_ratio_text, number_text,
    saturation_vapour_pressure_text, to_si, virtual_temperature_text,
)

SHEET = "hydrostatic"
TOLERANCE_ROW = 5
MARK = "hydrostatic check"
TITLES = ("p_bottom [hPa]", "p_top [hPa]", "Tv bottom [degC]", "Tv top [degC]",
          "Tv mean [degC]", "observed thickness [m]", "hypsometric thickness [m]",
          "difference [m]", "flag", "implied Tv [degC]")
FORMATS = ("0", "0", "0.00", "0.00", "0.00", "0.0", "0.0", "0.0", "@", "0.00")
NOT_CHECKED = "not checked"
# Rows printed on one A4 landscape page at no less than about 70 % of full size (35 rows
# at full size; own measure with LibreOffice, no source): a sheet up to this long is fitted
# to one page, a longer one prints on as many pages as it needs at full width.
ONE_PAGE_ROWS = 50


@dataclass(frozen=True)
class Placed:
    """Where one sounding's levels sit: sheet, first data row (surface first), the column
    letter and unit of each heading, and the number of levels."""

    name: str          # as layercalc names it: "the levels table", 'station "A"'
    sheet: str
    first_row: int
    places: dict       # heading name -> (column letter, unit)
    levels: int
    blank: frozenset = frozenset()  # (name, level) blank at export

    @property
    def checked(self) -> bool:
        """Whether layercalc checks it: it has T and z."""
        return "T" in self.places and "z" in self.places

    def present(self, name: str, level: int) -> bool:
        return (name, level) not in self.blank

    def pressure(self, level: int) -> str:
        return self.si("p", level)

    def ref(self, name: str, level: int) -> str:
        return f"'{self.sheet}'!{self.places[name][0]}{self.first_row + level}"

    def si(self, name: str, level: int) -> str:
        return to_si(self.ref(name, level), self.places[name][1])


def level_virtual_temperature(s: Placed, level: int) -> str:
    """Tv [K] at a level as formula text, as soundings.levels computes it: from Td, else
    RH, else r at that level; dry (Tv = T) where that value is blank or none is given."""
    temperature, pressure = s.si("T", level), s.si("p", level)
    for name in ("Td", "RH", "r"):
        if name not in s.places:
            continue
        if name == "Td":
            vapour = saturation_vapour_pressure_text(s.si("Td", level))
        elif name == "RH":
            vapour = f"({s.si('RH', level)}*{saturation_vapour_pressure_text(temperature)})"
        ratio = s.si("r", level) if name == "r" else mixing_ratio_text(vapour, pressure)
        moist = virtual_temperature_text(temperature, ratio)
        return f"IF(ISNUMBER({s.ref(name, level)}),{moist},{temperature})"
    return temperature


def placed_soundings(workbook, checked, levels: Placed | None) -> list[Placed]:
    """The soundings on the live sheets (`.checked`: those whose heights layercalc checks): the
    levels sheet's table (`levels`, from levels.live_inputs) and each station table of a
    live stations sheet (found by its mark row `station | name`, as the reader finds it:
    the header below it, then the levels surface first)."""
    from layercalc.formats.xlsx.stations import FIT_MARK, STATION_MARK, heading_units
    from layercalc.language.nodes import Station

    statements = checked.document.statements
    found = [levels] if levels is not None else []
    if "stations" in workbook.sheetnames:
        ws = workbook["stations"]
        stations = {s.name: s for s in statements if isinstance(s, Station)}
        for row in range(1, ws.max_row + 1):
            mark = ws.cell(row, 1).value
            if mark == FIT_MARK:
                break
            station = stations.get(ws.cell(row, 2).value) if mark == STATION_MARK else None
            if station is None:
                continue
            units = heading_units(station.table)
            names = [h.name for h in station.table.headings]
            places = {name: (letter(j), units[name]) for j, name in enumerate(names, start=1)}
            data = np.array(station.table.rows, dtype=float).reshape(-1, len(names))
            data = data[np.argsort(-data[:, names.index("p")], kind="stable")]
            blank = frozenset((names[j], int(k)) for k, j in zip(*np.nonzero(np.isnan(data))))
            found.append(Placed(f'station "{station.name}"', ws.title, row + 2, places,
                                len(station.table.rows), blank))
    return found


def hydrostatic_sheet(workbook, soundings: list[Placed], details) -> None:
    """Add the sheet with one live table per sounding (nothing when the list is empty);
    `details` (soundings.details.SoundingDetails) gives the tolerance and the layers
    layercalc checked across gaps."""
    if not soundings:
        return
    ws = workbook.create_sheet(SHEET)
    notes = ("Hydrostatic check of the reported heights, live: each layer's thickness from "
             "the heights as typed against the hypsometric thickness from the temperatures "
             "(virtual temperature, linear in ln p). Edit a level's T, Td or z on '"
             + soundings[0].sheet + "' and this table follows.",
             "FLAG: |observed - hypsometric| exceeds the tolerance below. Layers SURFACE "
             "FIRST. A layer with T or z blank at one of its levels is not checked on its "
             "own; below the table it is checked across the gap as layercalc checks it. "
             "layercalc's report names the likely cause of each flag (a mistyped height or "
             "temperature); this sheet does not.",
             "The check is for the reported sounding; the layers and results do not use the "
             "heights (they start at surface_height).")
    put_notes(ws, notes)
    put_text(ws.cell(TOLERANCE_ROW, 1), "tolerance [m]")
    style(ws.cell(TOLERANCE_ROW, 1), "name")
    ws.cell(TOLERANCE_ROW, 2, float(details.hydrostatic_tolerance))
    put_text(ws.cell(TOLERANCE_ROW + 1, 1), "The tolerance per layer is layercalc's (cell "
             "hydrostatic_tolerance in the .layers file, 10 m if not given); another value "
             "here changes the flags of this sheet only, not layercalc's report.")
    style(ws.cell(TOLERANCE_ROW + 1, 1), "note")
    size_columns(ws, {j: 13 for j in range(1, len(TITLES) + 1)})
    row, notes_rows = TOLERANCE_ROW + 3, [*range(1, len(notes) + 1), TOLERANCE_ROW + 1]
    tables = {table.sounding: table for table in details.hydrostatic}
    for sounding in soundings:
        last, across = _table(ws, sounding, row, _combined(tables.get(sounding.name)))
        notes_rows += across
        row = last + 2
    from layercalc.caution import CAUTION
    from layercalc.formats.xlsx.printing import page_setup, wrap_notes

    wrap_notes(ws, notes_rows, len(TITLES))  # so that no note widens the printed page
    page_setup(ws, CAUTION)
    if ws.max_row <= ONE_PAGE_ROWS:  # a few soundings: one page, still readable
        ws.page_setup.fitToHeight = 1


def _combined(table) -> list[tuple[int, int]]:
    """The level pairs layercalc checked across gaps, as indices of the levels (surface
    first: the layers' bottoms, then the top)."""
    if table is None or not table.combined:
        return []
    levels = list(table.p_bottom) + [table.p_top[-1]]
    return [(levels.index(c.p_bottom), levels.index(c.p_top)) for c in table.combined]


def across_rows(ws, name: str) -> list[int]:
    """The sheet rows of one sounding's checks across gaps (for tests)."""
    row = table_rows(ws, name)[-1] + 2
    if not str(ws.cell(row, 1).value or "").startswith(ACROSS_MARK):
        return []
    rows, row = [], row + 1
    while ws.cell(row, 1).value is not None:
        rows.append(row)
        row += 1
    return rows


def table_rows(ws, name: str) -> list[int]:
    """The sheet rows of one sounding's layers (for tests and readers of the sheet)."""
    marks = [c.row for c in ws["A"] if c.value == f"{MARK} of {name}"]
    rows, row = [], marks[0] + 2
    while ws.cell(row, 1).value is not None:
        rows.append(row)
        row += 1
    return rows


ACROSS_MARK = "across a gap"


def _table(ws, s: Placed, row: int, combined: list) -> tuple[int, list]:
    """Write one sounding's table from `row`, then its rows across gaps (`combined`: pairs
    of levels, as layercalc checks them where a level between lacks T or z); returns the
    last row written and the rows of its notes."""
    put_text(ws.cell(row, 1), f"{MARK} of {s.name}")
    style(ws.cell(row, 1), "group")
    for j, title in enumerate(TITLES, start=1):
        put_text(ws.cell(row + 1, j), title)
        style(ws.cell(row + 1, j), "header")
    first = row + 2
    last = _rows(ws, s, first, [(k, k + 1) for k in range(s.levels - 1)])
    notes = [last + 2] if combined else []
    if combined:
        put_text(ws.cell(last + 2, 1), f"{ACROSS_MARK}: layercalc's check where a level "
                 "between lacks T or z, from the nearest levels that have both (the levels "
                 "as exported)")
        style(ws.cell(last + 2, 1), "note")
        last = _rows(ws, s, last + 3, combined)
    red_when(ws, f"I{first}:I{last}", f'$I{first}="FLAG"')
    return last, notes


def _rows(ws, s: Placed, first: int, pairs: list) -> int:
    """One row per (bottom, top) pair of levels from row `first`; returns the last row."""
    from openpyxl.styles import Alignment

    from layercalc.language.unit_text import parse_unit_string

    hpa, celsius = parse_unit_string("hPa"), parse_unit_string("degC")
    tolerance = f"$B${TOLERANCE_ROW}"
    rd, g0 = number_text(C.RD), number_text(C.G0)
    centred = Alignment(horizontal="center")
    for r, (a, b) in enumerate(pairs, start=first):
        bottom, top = s.si("p", a), s.si("p", b)
        log_ratio = f"LN({bottom}/{top})"
        cells = [
            "=" + from_si(bottom, hpa),
            "=" + from_si(top, hpa),
            *(f'=IF(ISNUMBER({s.ref("T", i)}),'
              f'{from_si(level_virtual_temperature(s, i), celsius)},"-")' for i in (a, b)),
            f'=IF(COUNT(C{r}:D{r})=2,(C{r}+D{r})/2,"-")',
            f'=IF(COUNT({s.ref("z", a)},{s.ref("z", b)})=2,'
            f'{s.si("z", b)}-{s.si("z", a)},"-")',
            f'=IF(ISNUMBER(E{r}),{hypsometric_thickness_text(to_si(f"E{r}", celsius), bottom, top)},"-")',
            f'=IF(COUNT(F{r}:G{r})=2,F{r}-G{r},"-")',
            f'=IF(ISNUMBER(H{r}),IF(ABS(H{r})>{tolerance},"FLAG","ok"),"{NOT_CHECKED}")',
            f'=IF(ISNUMBER(F{r}),{from_si(f"({g0}*F{r}/({rd}*{log_ratio}))", celsius)},"-")',
        ]
        for j, (text, form) in enumerate(zip(cells, FORMATS), start=1):
            cell = ws.cell(r, j, text)
            cell.number_format = form
        ws.cell(r, 9).alignment = centred
    return first + len(pairs) - 1
