"""Formula text of the stations sheet's fit at a level where some station has no wind:
the least-squares plane over the stations that have one, and, where fewer than three
have one, the divergence interpolated in ln p between the nearest fitted levels.

physics.stations.linear_wind_fit fits u = u0 + du/dx x + du/dy y (and v) over the
stations with a wind at the level (weights 0 or 1). With the sums over those stations,
n = count, Sx = sum x, Sxx = sum x^2 - Sx^2 / n, Sxy = sum x y - Sx Sy / n,
Sxu = sum x u - Sx Su / n (positions centred about their mean over those stations), the
closed form is du/dx = (Syy Sxu - Sxy Syu) / D, du/dy = (Sxx Syu - Sxy Sxu) / D,
D = Sxx Syy - Sxy^2; the same for v. On the sheet a missing wind is an empty text ("")
in the wind rows, which SUMPRODUCT and SUM take as nothing and COUNT does not count.
"""

from __future__ import annotations

MINIMUM_STATIONS = 3  # as physics.stations.MINIMUM_STATIONS


def present(text: str, cells: list[str]) -> str:
    """`text` (no leading '=') where every cell of `cells` holds a number, else ""."""
    return f'=IF(COUNT({",".join(cells)})={len(cells)},{text},"")'


def weighted_gradients(xs_u: str, ys_u: str, xs_v: str, ys_v: str, urow: str,
                       vrow: str) -> list[str]:
    """du/dx, du/dy, dv/dx, dv/dy (formula text, SI) over the stations with a wind in
    `urow`/`vrow` (a missing one is ""); `xs_*`, `ys_*` the positions under them."""
    n = f"COUNT({urow})"
    used = f"--ISNUMBER({urow})"
    sx, sy = f"SUMPRODUCT({xs_u},{used})", f"SUMPRODUCT({ys_u},{used})"
    sxx = f"(SUMPRODUCT({xs_u},{xs_u},{used})-{sx}^2/{n})"
    syy = f"(SUMPRODUCT({ys_u},{ys_u},{used})-{sy}^2/{n})"
    sxy = f"(SUMPRODUCT({xs_u},{ys_u},{used})-{sx}*{sy}/{n})"
    det = f"({sxx}*{syy}-{sxy}^2)"
    out = []
    for xs, ys, row in ((xs_u, ys_u, urow), (xs_v, ys_v, vrow)):
        total = f"SUM({row})"
        sxw = f"(SUMPRODUCT({xs},{row})-{sx}*{total}/{n})"
        syw = f"(SUMPRODUCT({ys},{row})-{sy}*{total}/{n})"
        out += [f"({syy}*{sxw}-{sxy}*{syw})/{det}", f"({sxx}*{syw}-{sxy}*{sxw})/{det}"]
    return out


def level_cells(gradients: list[str], urow: str, div_cells: tuple | None,
                columns: list[str], row: int) -> list[str]:
    """The fit row's six formulas (du/dx, du/dy, dv/dx, dv/dy, divergence, vorticity) at a
    level with a missing wind; `columns` the six cells' column letters. With fewer than
    three winds the gradients and vorticity are "-" and the divergence is `div_cells`'
    interpolation (formula text, SI) when given (layercalc interpolates it), else "-"."""
    enough = f"COUNT({urow})>={MINIMUM_STATIONS}"
    cells = [f'=IF({enough},{g},"-")' for g in gradients]
    du_dx, du_dy, dv_dx, dv_dy = (f"{c}{row}" for c in columns[:4])
    fallback = div_cells if div_cells is not None else '"-"'
    cells.append(f"=IF({enough},{du_dx}+{dv_dy},{fallback})")
    cells.append(f'=IF({enough},{dv_dx}-{du_dy},"-")')
    return cells


def partial_level(ws, k: int, rows: tuple, c0: int, wind_cells: list, first: int,
                  positions: tuple, interpolated, pressure, formats: tuple) -> None:
    """Write level k of the stations sheet's three fit blocks (header rows `rows` = east,
    plane, fit; first column `c0`) where some station has no wind: winds "" where missing,
    the fit over the stations that have one (weighted_gradients), and where layercalc
    interpolates the divergence (`interpolated[k]`), the interpolation in ln p between
    the nearest fitted levels (`pressure(level)`: SI text of a level's pressure)."""
    from layercalc.formats.xlsx.cells import SCIENTIFIC, letter, put_number
    from layercalc.formats.xlsx.column_levels import between
    from layercalc.formats.xlsx.formulas import number_text, to_si

    east, plane, fit = rows
    wind_format, shown = formats
    n = len(wind_cells)
    C = [None] + [letter(c0 + j - 1) for j in range(1, 2 + 2 * n + 9)]
    r, rp, rf = east + 1 + k, plane + 1 + k, fit + 1 + k
    for i, (kind, unit_a, unit_b, la, lb, row0) in enumerate(wind_cells):
        refs = [f"{la}{row0 + k}", f"{lb}{row0 + k}"]
        a, b = to_si(refs[0], unit_a), to_si(refs[1], unit_b)
        u, v = (f"-{b}*SIN({a})", f"-{b}*COS({a})") if kind == "dir" else (a, b)
        put_number(ws.cell(r, c0 + 1 + i), present(u, refs), wind_format)
        put_number(ws.cell(r, c0 + 1 + n + i), present(v, refs), wind_format)
        gamma = f"RADIANS($F${first + i})"
        ue, vn = f"{C[2 + i]}{r}", f"{C[2 + n + i]}{r}"
        put_number(ws.cell(rp, c0 + 1 + i),
                   present(f"{ue}*COS({gamma})+{vn}*SIN({gamma})", [ue, vn]), wind_format)
        put_number(ws.cell(rp, c0 + 1 + n + i),
                   present(f"-{ue}*SIN({gamma})+{vn}*COS({gamma})", [ue, vn]), wind_format)
    xrow, yrow = positions
    urow, vrow = f"{C[2]}{rp}:{C[1 + n]}{rp}", f"{C[2 + n]}{rp}:{C[1 + 2 * n]}{rp}"
    gradients = weighted_gradients(
        f"${C[2]}${xrow}:${C[1 + n]}${xrow}", f"${C[2]}${yrow}:${C[1 + n]}${yrow}",
        f"${C[2 + n]}${xrow}:${C[1 + 2 * n]}${xrow}",
        f"${C[2 + n]}${yrow}:${C[1 + 2 * n]}${yrow}", urow, vrow)
    fallback = None
    if interpolated[k]:
        fitted = [j for j in range(len(interpolated)) if not interpolated[j]]
        below = max(j for j in fitted if j < k)
        above = min(j for j in fitted if j > k)
        fallback = between(f"{C[6]}{fit + 1 + below}", f"{C[6]}{fit + 1 + above}",
                           pressure(below), pressure(above), pressure(k))
    for j, formula in enumerate(level_cells(gradients, urow, fallback, C[2:8], rf), start=1):
        put_number(ws.cell(rf, c0 + j), formula, SCIENTIFIC)
    for j, source in ((7, C[6]), (8, C[7])):
        put_number(ws.cell(rf, c0 + j),
                   f'=IF(ISNUMBER({source}{rf}),{source}{rf}/{number_text(1e-5)},"-")', shown)
