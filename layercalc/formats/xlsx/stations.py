"""The `stations` sheet of a station-network workbook: the winds as typed, the fit live.

Written for a sheet with `station` blocks (with or without a top-level `levels` table; a
level where a station has no wind is fitted over the others, network_fit.py); otherwise
the workbook keeps the layer means as inputs (see README). Layout, rows from the top:
    notes; the geometry block `station | latitude [deg] | longitude [deg] | x [m] | y [m]
    | north angle [deg] | x - mean [m] | y - mean [m]` (latitude and longitude as typed,
    read back on import; x, y and the north angle are live formulas of them: the
    stereographic plane about the spherical centroid and the bearing of each station's
    north on it, as physics.stations.tangent_plane_coordinates computes them,
    plane_formulas); the sums of the centred positions, and beside them the centroid
    (centroid_formulas); then each station's levels table as typed (`station | name`, the
    header `name [unit]`, one row per level, SURFACE FIRST, blank for a missing value);
    then the fit, right of the station tables (from column len(GEOMETRY_HEADER) + 2, the
    mark FIT_MARK in the geometry header's row), in three blocks stacked whose header rows
    are those of the first three station tables, each at most 2n + 1 columns wide, so
    that the sheet prints on one readable page: u, v (east, north) from each station's
    dir and speed (or u and v); the centred positions as two rows over the winds turned
    to the plane by the north angle; the least-squares plane u = u0 + du/dx x + du/dy y
    (the same for v) in closed form from centred sums, and divergence du/dx + dv/dy and
    vorticity dv/dx - du/dy, all live. Computed cells carry number formats (display
    only: values and formulas are stored in full).
The `layers` sheet's div is then the mean of its two levels' divergence (a live formula).
"""

from __future__ import annotations

import numpy as np

from layercalc.formats.xlsx.cells import (SCIENTIFIC, letter, put_check, put_notes, put_number,
                                         put_text, style, values_check)
from layercalc.formats.xlsx.formulas import from_si, number_format, number_text, to_si

SHEET = "stations"
GEOMETRY_HEADER_ROW = 5
GEOMETRY_HEADER = ("station", "latitude [deg]", "longitude [deg]", "x [m]", "y [m]",
                   "north angle [deg]", "x - mean [m]", "y - mean [m]")
STATION_MARK = "station"
FIT_MARK = "fit per level"


def live_network(checked) -> tuple | None:
    """(stations nodes, network details) when the workbook can hold the fit live."""
    details = checked.soundings
    document = checked.document
    if details is None or details.network is None or document is None:
        return None
    from layercalc.language.nodes import Station

    stations = [s for s in document.statements if isinstance(s, Station)]
    network = details.network
    if "div" not in checked.input_columns:
        return None
    if not np.isfinite(network.levels.divergence).all():
        return None
    return stations, network


def heading_text(heading) -> str:
    span = heading.span
    return " ".join(span.source.text[span.start:span.end].split())


def stations_sheet(ws, checked, found, tables: list | None = None,
                   printed: bool = True) -> list[str]:
    """Fill `ws`; returns, per level surface first, the cell (on this sheet) of the
    level's divergence in s^-1. `tables` receives, per station, (first level's row,
    column names) of its table as typed; `printed` False leaves out the print area and
    page breaks (a hidden sheet: LibreOffice prints a hidden sheet that has a print area)."""

    stations, network = found
    n = len(stations)
    notes = ("Station network: the winds are live. Change a station's dir or speed (or u, v) "
             "in its table below and divergence, vorticity, the layers' div, omega and the "
             "tendency recalculate.",
             "x, y and the north angle are live: the stereographic plane about the stations' "
             "spherical centroid (below the list), as layercalc computes them; edit a latitude "
             "or longitude and the station moves, and the fit with it.",
             "Each station's levels are listed surface first; T, Td and z are read back on "
             "import (the layers sheet's T and Td are live station means, or with a levels "
             "table formulas of that table). A wind blanked here counts as 0 in the fit, "
             "while layercalc leaves that station out of the level's fit: the check beside "
             "the station's name turns red; type the wind or export again.")
    put_notes(ws, notes)
    top = GEOMETRY_HEADER_ROW
    for j, text in enumerate(GEOMETRY_HEADER, start=1):
        put_text(ws.cell(top, j), text)
        style(ws.cell(top, j), "header")
    first, last = top + 1, top + n
    sums = last + 2
    centre = (f"$F${sums}", f"$F${sums + 1}")
    for i, st in enumerate(stations):
        r = top + 1 + i
        put_text(ws.cell(r, 1), st.name)
        ws.cell(r, 2, st.latitude)
        ws.cell(r, 3, st.longitude)
        plane = plane_formulas(f"$B{r}", f"$C{r}", *centre)
        for j, (formula, shown) in enumerate(zip(plane, ("0", "0", "0.000")), start=4):
            put_number(ws.cell(r, j), "=" + formula, shown)  # shown rounded, stored in full
        put_number(ws.cell(r, 7), f"=D{r}-AVERAGE(D${first}:D${last})", "0")
        put_number(ws.cell(r, 8), f"=E{r}-AVERAGE(E${first}:E${last})", "0")
    for k, (label, formula) in enumerate(zip(("centre latitude [deg]",
                                              "centre longitude [deg]"),
                                             centroid_formulas(f"B{first}:B{last}",
                                                               f"C{first}:C{last}"))):
        put_text(ws.cell(sums + k, 4), label)
        put_number(ws.cell(sums + k, 6), "=" + formula, "0.000")
    texts = (("Sxx [m^2]", f"=SUMPRODUCT(G{first}:G{last},G{first}:G{last})"),
             ("Syy [m^2]", f"=SUMPRODUCT(H{first}:H{last},H{first}:H{last})"),
             ("Sxy [m^2]", f"=SUMPRODUCT(G{first}:G{last},H{first}:H{last})"),
             ("Sxx*Syy-Sxy^2 [m^4]", f"=B{sums}*B{sums + 1}-B{sums + 2}^2"))
    for k, (label, formula) in enumerate(texts):
        put_text(ws.cell(sums + k, 1), label)
        put_number(ws.cell(sums + k, 2), formula, SCIENTIFIC)
    sxx, syy, sxy, det = (f"$B${sums + k}" for k in range(4))
    row = sums + len(texts) + 1
    levels = network.levels.pressure.size
    wind_cells = []  # per station: (kind, unit a, unit b, letter a, letter b, first row)
    heads = []  # the header row of each station's table
    for st in stations:
        put_text(ws.cell(row, 1), STATION_MARK)
        style(ws.cell(row, 1), "header")
        put_text(ws.cell(row, 2), st.name)
        row += 1
        heads.append(row)
        names = [h.name for h in st.table.headings]
        for j, heading in enumerate(st.table.headings, start=1):
            put_text(ws.cell(row, j), heading_text(heading))
            style(ws.cell(row, j), "header")
        if tables is not None:
            tables.append((row + 1, names))
        data = np.array(st.table.rows, dtype=float).reshape(len(st.table.rows), len(names))
        order = np.argsort(-data[:, names.index("p")], kind="stable")
        for k, i in enumerate(order):
            for j, value in enumerate(data[i], start=1):
                if np.isfinite(value):
                    ws.cell(row + 1 + k, j, float(value))
        units = heading_units(st.table)
        pair = ("dir", "speed") if "dir" in names else ("u", "v")
        # a wind blanked after export counts as 0 in the fit's formulas, while layercalc
        # leaves that station out of the level's fit: the check beside the station's name
        # turns red then (a wind blank at export is fitted without it, live)
        put_check(ws, row - 1, 3, values_check(
            list(pair), data[order], names, row + 1, "OK: every wind is there",
            " blank wind value(s): the fit reads 0 (note above)"))
        # merged over the table's width: LibreOffice clips a red cell's text at its edge
        ws.merge_cells(start_row=row - 1, start_column=3, end_row=row - 1,
                       end_column=max(len(GEOMETRY_HEADER), len(names)))
        wind_cells.append((pair[0], units[pair[0]], units[pair[1]],
                           letter(names.index(pair[0]) + 1), letter(names.index(pair[1]) + 1),
                           row + 1))
        row += levels + 2
    left = max([len(GEOMETRY_HEADER)] + [len(st.table.headings) for st in stations])
    c0 = left + 2  # the fit's first column: right of the station tables, one blank between
    C = [None] + [letter(c0 + j - 1) for j in range(1, 2 + 4 * n + 9)]  # C[j]: block column j
    put_text(ws.cell(top, c0), FIT_MARK)
    style(ws.cell(top, c0), "header")
    names = [s.name for s in stations]
    wind_format = number_format(np.concatenate([np.ravel(st.u) for st in network.stations]
                                               + [np.ravel(st.v) for st in network.stations]))
    # three blocks stacked beside the station tables, each at most 2n + 1 columns wide,
    # so that the sheet prints on few readable pages: the winds east and north, the winds
    # on the plane (under the centred positions as rows, so that SUMPRODUCT pairs them
    # with a level's winds), and the fit with divergence and vorticity; their header rows
    # are those of the first three station tables (a wrapped header row grows on both)
    east, plane, fit = heads[:3]
    block_titles = (["p [hPa]"] + [f"u {name} [m/s]" for name in names]
                    + [f"v {name} [m/s]" for name in names])
    positions = plane - 2
    plane_titles = (["p [hPa]"] + [f"u plane {name} [m/s]" for name in names]
                    + [f"v plane {name} [m/s]" for name in names])
    fit_titles = ["p [hPa]", "du/dx [s^-1]", "du/dy [s^-1]", "dv/dx [s^-1]", "dv/dy [s^-1]",
                  "divergence [s^-1]", "vorticity [s^-1]", "divergence [1e-5 s^-1]",
                  "vorticity [1e-5 s^-1]"]
    for header, titles in ((east, block_titles), (plane, plane_titles), (fit, fit_titles)):
        for j, text in enumerate(titles):
            put_text(ws.cell(header, c0 + j), text)
            style(ws.cell(header, c0 + j), "header")
    for offset, source in ((0, "G"), (1, "H")):
        put_text(ws.cell(positions + offset, c0), ("x - mean [m]", "y - mean [m]")[offset])
        for i in range(n):
            for start in (2, 2 + n):
                put_number(ws.cell(positions + offset, c0 + start - 1 + i),
                           f"={source}{first + i}", "0")
    xrow, yrow = positions, positions + 1
    divergence_cells = []
    p_letter = letter([h.name for h in stations[0].table.headings].index("p") + 1)
    shown = number_format(network.levels.divergence / 1e-5)
    missing = ~np.isfinite(np.array([st.u + st.v for st in network.stations]).T)
    from layercalc.formats.xlsx.network_fit import partial_level

    p_unit = heading_units(stations[0].table)["p"]

    def pressure(level):
        return to_si(f"{p_letter}{wind_cells[0][5] + level}", p_unit)
    for k in range(levels):
        if missing[k].any():  # a station without a wind here (network_fit.py)
            ws.cell(east + 1 + k, c0, f"={p_letter}{wind_cells[0][5] + k}")
            ws.cell(plane + 1 + k, c0, f"={C[1]}{east + 1 + k}")
            ws.cell(fit + 1 + k, c0, f"={C[1]}{east + 1 + k}")
            partial_level(ws, k, (east, plane, fit), c0, wind_cells, first, (xrow, yrow),
                          network.levels.divergence_interpolated, pressure,
                          (wind_format, shown))
            divergence_cells.append(f"{C[6]}{fit + 1 + k}")
            continue
        r, rp, rf = east + 1 + k, plane + 1 + k, fit + 1 + k
        ws.cell(r, c0, f"={p_letter}{wind_cells[0][5] + k}")
        ws.cell(rp, c0, f"={C[1]}{r}")
        ws.cell(rf, c0, f"={C[1]}{r}")
        for i, (kind, unit_a, unit_b, la, lb, row0) in enumerate(wind_cells):
            a, b = to_si(f"{la}{row0 + k}", unit_a), to_si(f"{lb}{row0 + k}", unit_b)
            if kind == "dir":
                u, v = f"=-{b}*SIN({a})", f"=-{b}*COS({a})"
            else:
                u, v = f"={a}", f"={b}"
            put_number(ws.cell(r, c0 + 1 + i), u, wind_format)
            put_number(ws.cell(r, c0 + 1 + n + i), v, wind_format)
            gamma = f"RADIANS($F${first + i})"
            ue, vn = f"{C[2 + i]}{r}", f"{C[2 + n + i]}{r}"
            put_number(ws.cell(rp, c0 + 1 + i), f"={ue}*COS({gamma})+{vn}*SIN({gamma})",
                       wind_format)
            put_number(ws.cell(rp, c0 + 1 + n + i),
                       f"=-{ue}*SIN({gamma})+{vn}*COS({gamma})", wind_format)
        urow = f"{C[2]}{rp}:{C[1 + n]}{rp}"
        vrow = f"{C[2 + n]}{rp}:{C[1 + 2 * n]}{rp}"
        xs_u, ys_u = f"${C[2]}${xrow}:${C[1 + n]}${xrow}", f"${C[2]}${yrow}:${C[1 + n]}${yrow}"
        xs_v = f"${C[2 + n]}${xrow}:${C[1 + 2 * n]}${xrow}"
        ys_v = f"${C[2 + n]}${yrow}:${C[1 + 2 * n]}${yrow}"
        sxu, syu = f"SUMPRODUCT({xs_u},{urow})", f"SUMPRODUCT({ys_u},{urow})"
        sxv, syv = f"SUMPRODUCT({xs_v},{vrow})", f"SUMPRODUCT({ys_v},{vrow})"
        for j, formula in enumerate((f"=({syy}*{sxu}-{sxy}*{syu})/{det}",
                                     f"=({sxx}*{syu}-{sxy}*{sxu})/{det}",
                                     f"=({syy}*{sxv}-{sxy}*{syv})/{det}",
                                     f"=({sxx}*{syv}-{sxy}*{sxv})/{det}",
                                     f"={C[2]}{rf}+{C[5]}{rf}", f"={C[4]}{rf}-{C[3]}{rf}"),
                                    start=2):
            put_number(ws.cell(rf, c0 + j - 1), formula, SCIENTIFIC)
        put_number(ws.cell(rf, c0 + 7), f"={C[6]}{rf}/{number_text(1e-5)}", shown)
        put_number(ws.cell(rf, c0 + 8), f"={C[7]}{rf}/{number_text(1e-5)}", shown)
        divergence_cells.append(f"{C[6]}{rf}")
    from layercalc.formats.xlsx.cells import size_columns
    from layercalc.formats.xlsx.printing import fit_rows, wrap_notes

    last_column = c0 - 1 + max(1 + 2 * n, len(fit_titles))
    size_columns(ws, {j: 11 for j in range(1, last_column + 1)} | {1: 19, c0 - 1: 3})
    wrap_notes(ws, range(1, len(notes) + 1), last_column)
    fit_rows(ws, [top] + heads, last_column)
    if printed:
        ws.print_area = f"A1:{letter(last_column)}{row - 2}"
    return divergence_cells


def centroid_formulas(latitudes: str, longitudes: str) -> tuple[str, str]:
    """The stations' spherical centroid (physics.stations.spherical_centroid) as formulas of
    their latitude and longitude ranges [deg]: the normalised sum of the unit vectors.
    Spreadsheet ATAN2 takes (x, y), numpy's arctan2 (y, x)."""
    phi, lam = f"RADIANS({latitudes})", f"RADIANS({longitudes})"
    sx = f"SUMPRODUCT(COS({phi}),COS({lam}))"
    sy = f"SUMPRODUCT(COS({phi}),SIN({lam}))"
    sz = f"SUMPRODUCT(SIN({phi}))"
    return (f"DEGREES(ASIN({sz}/SQRT({sx}^2+{sy}^2+{sz}^2)))", f"DEGREES(ATAN2({sx},{sy}))")


def plane_formulas(latitude: str, longitude: str, centre_latitude: str,
                   centre_longitude: str) -> tuple[str, str, str]:
    """x [m], y [m] and the north angle [deg] of a station on the stereographic plane about
    the centre, as formulas of its cells (physics.stations.tangent_plane_coordinates, whose
    docstring has the formulas and Snyder's reference). The north angle, there computed by
    transporting local north n along the great circle to the centre,
    T n = n - a (P + C) with a = (C . n) / (1 + P . C), gamma = atan2(T n . e0, T n . n0),
    is written out in the angles: with d = lam - lam0 and cos c = P . C,
        C . n = cos phi sin phi0 - sin phi cos phi0 cos d
        T n . e0 = -(sin phi + a cos phi) sin d
        T n . n0 = sin phi sin phi0 cos d + cos phi cos phi0
                   - a (sin phi cos phi0 - cos phi sin phi0 cos d)."""
    from layercalc.constants import EARTH_MEAN_RADIUS

    phi, lam = f"RADIANS({latitude})", f"RADIANS({longitude})"
    phi0 = f"RADIANS({centre_latitude})"
    d = f"({lam}-RADIANS({centre_longitude}))"
    cos_c = f"(SIN({phi0})*SIN({phi})+COS({phi0})*COS({phi})*COS({d}))"
    k = f"{number_text(EARTH_MEAN_RADIUS)}*2/(1+{cos_c})"
    x = f"{k}*COS({phi})*SIN({d})"
    y = f"{k}*(COS({phi0})*SIN({phi})-SIN({phi0})*COS({phi})*COS({d}))"
    a = f"(COS({phi})*SIN({phi0})-SIN({phi})*COS({phi0})*COS({d}))/(1+{cos_c})"
    east = f"-(SIN({phi})+{a}*COS({phi}))*SIN({d})"
    north = (f"SIN({phi})*SIN({phi0})*COS({d})+COS({phi})*COS({phi0})"
             f"-{a}*(SIN({phi})*COS({phi0})-COS({phi})*SIN({phi0})*COS({d}))")
    return x, y, f"DEGREES(ATAN2({north},{east}))"


def heading_units(table) -> dict:
    """Each heading's unit, as the checker reads it (documented defaults included)."""
    from layercalc.language import units as U
    from layercalc.language.defaults import INPUT_UNITS
    from layercalc.language.unit_text import parse_unit_string, written_unit

    return {h.name: written_unit(h.unit) if h.unit is not None else
            parse_unit_string(INPUT_UNITS[h.name]) if h.name in INPUT_UNITS else U.ONE
            for h in table.headings}


def layer_divergence_formula(cells: list[str], k: int, unit) -> str:
    """The layers sheet's div of layer k (surface first): the mean of its two levels."""
    return "=" + from_si(layer_divergence_si(cells, k), unit)


def layer_divergence_si(cells: list[str], k: int, sheet: str = SHEET) -> str:
    """Formula text (SI) of layer k's div from the fit on a sheet laid out as `stations`."""
    return f"('{sheet}'!{cells[k]}+'{sheet}'!{cells[k + 1]})/2"


# ---------------------------------------------------------------- reading it back
def station_blocks(builder, sheet: str, rows: list) -> list:
    """The `station` blocks of a stations sheet as `.layers` lines of (text, sheet, cell)
    pieces (reader._TextBuilder.add); the fit block is derived and not read."""
    from layercalc.formats.xlsx.cells import blank, cell_name, number_text

    def at(r: int, c: int):
        row = rows[r - 1] if r - 1 < len(rows) else ()
        return row[c - 1] if c - 1 < len(row) else None

    header = GEOMETRY_HEADER_ROW
    if at(header, 1) != GEOMETRY_HEADER[0] or at(header, 2) != GEOMETRY_HEADER[1]:
        raise builder.error(f"the stations sheet has no station list: expected "
                            f"'{GEOMETRY_HEADER[0]}' and '{GEOMETRY_HEADER[1]}' here", sheet,
                            cell_name(header, 1),
                            hint="keep the layout layercalc exported, or delete the sheet")
    places, r = {}, header + 1
    while not blank(at(r, 1)):
        name = str(at(r, 1)).strip()
        places[name] = (builder.number(at(r, 2), sheet, r, 2, f"latitude of {name}"),
                        builder.number(at(r, 3), sheet, r, 3, f"longitude of {name}"), r)
        r += 1
    lines, seen = [], set()
    for r in range(r, len(rows) + 1):
        if at(r, 1) == FIT_MARK:
            break
        if at(r, 1) != STATION_MARK:
            continue
        name = str(at(r, 2) or "").strip()
        if name not in places:
            raise builder.error(f"station '{name}' is not in the station list above", sheet,
                                cell_name(r, 2), hint="add it to the list with its position")
        seen.add(name)
        latitude, longitude, place_row = places[name]
        lines.append([("station", None, None), ('"' + name.replace('"', "'") + '"', sheet,
                                                cell_name(r, 2)),
                      ("latitude", None, None),
                      (number_text(latitude), sheet, cell_name(place_row, 2)),
                      ("longitude", None, None),
                      (number_text(longitude), sheet, cell_name(place_row, 3))])
        lines.append([("  levels", None, None)])
        lines += table_lines(builder, sheet, rows, r + 1)
        lines.append([("  end", None, None)])
        lines.append([("end", None, None)])
    missing = [n for n in places if n not in seen]
    if missing:
        raise builder.error(f"station '{missing[0]}' has no levels table on the sheet", sheet,
                            cell_name(places[missing[0]][2], 1))
    return lines


def table_lines(builder, sheet: str, rows: list, header_row: int) -> list:
    """A levels table as typed on a sheet (header `name [unit]` at `header_row`, one row per
    level until a blank first cell; blank for '-') as `.layers` lines of pieces."""
    from layercalc.formats.xlsx.cells import blank, cell_name, number_text

    def at(r: int, c: int):
        row = rows[r - 1] if r - 1 < len(rows) else ()
        return row[c - 1] if c - 1 < len(row) else None

    headings, c = [], 1
    while not blank(at(header_row, c)):
        headings.append((str(at(header_row, c)).strip(), sheet, cell_name(header_row, c)))
        c += 1
    lines = [[("   ", None, None)] + headings]
    k = header_row + 1
    while any(not blank(at(k, c)) for c in range(1, len(headings) + 1)):
        pieces = [("   ", None, None)]
        for c in range(1, len(headings) + 1):
            value = at(k, c)
            pieces.append(("-", sheet, cell_name(k, c)) if blank(value) else
                          (number_text(builder.number(value, sheet, k, c, headings[c - 1][0])),
                           sheet, cell_name(k, c)))
        lines.append(pieces)
        k += 1
    return lines
