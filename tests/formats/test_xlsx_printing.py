"""The print plan of a results sheet (layercalc.formats.xlsx.printing.page_plan): the table
page fitted to one page in width and height by widening the blank column after the table,
never below the readable scale for the sake of one page."""

from __future__ import annotations

import pytest

from layercalc.formats.xlsx import printing as P
from layercalc.formats.xlsx.entries import Entry, Grid

HEADER_ROW = 5


def results_grid(rows: int, columns: int = 6) -> Grid:
    grid = Grid("results", "values")
    grid.print_columns = columns
    for j in range(1, columns + 1):
        grid.put(HEADER_ROW, j, Entry(f"name{j} [hPa]", style="header"))
        for row in range(HEADER_ROW + 1, rows + 1):
            grid.put(row, j, Entry(1.0, style="derived"))
    return grid


def page_width_units(widths: dict, last: int) -> float:
    return sum(widths[j] for j in range(1, last + 1))


def test_a_short_narrow_table_prints_at_full_size_with_the_notes_a_page_wide():
    grid = results_grid(rows=20)
    widths = {j: 10.0 for j in range(1, 7)}
    plan = P.page_plan(grid, widths, 6, HEADER_ROW, 20)
    assert plan.scale == 1.0 and plan.last_column == 7
    # the blank column widened to a page's width at full size (the notes merge up to it);
    # expected from the page width and the measured column width (LibreOffice)
    assert page_width_units(widths, 7) == pytest.approx(P.PAGE_WIDTH_CM / P.LO_CM_PER_WIDTH_UNIT)


def test_a_tall_table_is_shrunk_to_one_page_by_widening_the_page():
    rows = 60  # about 60 rows at 13.1 pt: taller than 17 cm at full size
    grid = results_grid(rows=rows)
    widths = {j: 10.0 for j in range(1, 7)}
    plan = P.page_plan(grid, widths, 6, HEADER_ROW, rows)
    points = rows * P.LO_ROW_POINTS + P.TITLE_EXTRA_POINTS + \
        plan.heights.get(HEADER_ROW, P.LO_ROW_POINTS) - P.LO_ROW_POINTS
    by_height = P.PAGE_HEIGHT_CM / (points * P.CM_PER_POINT)
    assert P.MIN_SCALE < by_height < 1.0
    assert plan.scale == pytest.approx(by_height)
    # fit to the page width then shrinks the page by that factor
    total = page_width_units(widths, plan.last_column) * P.LO_CM_PER_WIDTH_UNIT
    assert P.PAGE_WIDTH_CM / total == pytest.approx(by_height)


def test_a_table_too_long_for_one_readable_page_prints_at_its_width_on_more_pages():
    grid = results_grid(rows=200)
    widths = {j: 10.0 for j in range(1, 7)}
    plan = P.page_plan(grid, widths, 6, HEADER_ROW, 200)
    assert plan.scale == 1.0  # not 0.3 for the sake of one page


def test_headers_wrap_at_their_spaces():
    assert P.header_width("omega_bottom [hPa/h]") >= len("omega_bottom")
    assert P.header_width("omega_bottom [hPa/h]") < len("omega_bottom [hPa/h]")
    width = P.header_width("omega_bottom [hPa/h]") + 1
    assert P.header_lines("omega_bottom [hPa/h]", width) == 2
    assert P.header_lines("div [1e-5 s^-1]", P.header_width("div [1e-5 s^-1]") + 1) == 3
