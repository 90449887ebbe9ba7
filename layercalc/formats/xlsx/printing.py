"""Print setup of an exported workbook, so that it prints readably as handed on: A4
landscape, fitted to the page width (as many pages down as needed), the header rows
repeated on every page, print areas without the SI helper columns, the chart on a page
of its own, the sheet name and page number in the header and the caution in every
page footer (ECMA-376 page setup, 18.3.1.63; header/footer codes, 18.3.1.46).
The plain-number twins (`values*`) are hidden: the live sheets carry the same numbers
as cached values, and printing both would double the pages."""

from __future__ import annotations

from dataclasses import dataclass

A4 = 9  # ECMA-376 paperSize 9: A4 (210 mm x 297 mm)
PAGE_WIDTH_CM = 27.6  # A4 landscape less the margins below
PAGE_HEIGHT_CM = 17.0  # A4 landscape less the margins, the header and the footer
ROW_CM = 0.462  # a default row as LibreOffice lays it out (13.1 pt; Excel: 15 pt)
CM_PER_WIDTH_UNIT = 0.19  # about one character of the default font (Calibri)
# LibreOffice without Calibri (measured: 0.215-0.227 cm per width unit, 13.1 pt rows)
LO_CM_PER_WIDTH_UNIT = 0.225
LO_ROW_POINTS = 13.1
CM_PER_POINT = 2.54 / 72
TITLE_EXTRA_POINTS = 8.0  # the 14 pt title row
MIN_SCALE = 0.55  # about 7 pt of an 11 pt font: smaller, a table takes more pages
CHART_WIDTH_CM, CHART_HEIGHT_CM = 12.5, 14.0  # each chart, as printed (some room to
# spare: the scale is an estimate)


def print_scale(widths: list[float]) -> float:
    """The factor fit-to-width printing shrinks a sheet of these column widths by."""
    total = sum(widths) * CM_PER_WIDTH_UNIT
    return min(1.0, PAGE_WIDTH_CM / total) if total else 1.0


def chart_rows(scale: float) -> int:
    """Rows the charts cover on the sheet when they print CHART_HEIGHT_CM high (rows as
    LibreOffice lays them out, the shorter: the print area covers the charts in Excel too)."""
    return int(CHART_HEIGHT_CM / scale / ROW_CM) + 2


@dataclass
class PagePlan:
    """How a results sheet prints: columns 1..`last_column` (the table's, and the blank
    column after them widened where needed), `heights` of wrapped rows [points], and the
    factor fit-to-width printing shrinks the page by."""

    last_column: int
    heights: dict
    scale: float


def page_plan(grid, widths: dict[int, float], printed: int, header_row: int,
              last_row: int) -> PagePlan:
    """The print plan of a grid (layout.Grid) whose columns 1..`printed` are printed,
    `widths` as set (the spacer column's width is added to it).

    The sheet is fitted to the page width only: fitted to two pages tall as well,
    LibreOffice drops the page break before the charts (seen: the charts printed below
    the table's last rows, cut off). So the page is made as wide as it must be for the
    table page to fit one page in height too: the blank column after the table
    (`printed` + 1, left of the helper columns) is widened. It is also widened up to a
    page's width at full size, so that the cells block's notes, merged up to it, keep to
    one line where they can. A table that would print below MIN_SCALE on one page prints
    at its width's scale, on more pages. Widths and row heights are LibreOffice's without
    Calibri (measured); Excel's columns print narrower, so Excel shrinks the page less."""
    if grid.print_columns is None:  # the compare sheet: its headers on one line, no charts
        return PagePlan(printed, {}, print_scale([widths.get(j, 10)
                                                  for j in range(1, printed + 1)]))
    spacer = printed + 1
    table = sum(widths.get(j, 10) for j in range(1, printed + 1))
    widths[spacer] = max(1.0, PAGE_WIDTH_CM / LO_CM_PER_WIDTH_UNIT - table)
    heights = grid_heights(grid, widths, spacer, header_row)
    end = last_row if grid.chart_row is None else grid.chart_row - 2
    points = (end * LO_ROW_POINTS + TITLE_EXTRA_POINTS
              + sum(h - LO_ROW_POINTS for r, h in heights.items() if r <= end))
    by_width = min(1.0, PAGE_WIDTH_CM / ((table + widths[spacer]) * LO_CM_PER_WIDTH_UNIT))
    by_height = PAGE_HEIGHT_CM / (points * CM_PER_POINT)
    scale = by_width if by_height < MIN_SCALE else min(by_width, by_height)
    if scale < by_width:
        widths[spacer] = PAGE_WIDTH_CM / (scale * LO_CM_PER_WIDTH_UNIT) - table
    return PagePlan(spacer, heights, scale)


def grid_print(ws, grid, plan: PagePlan, header_row: int, last_row: int,
               caution: str) -> None:
    """Print setup of a results or compare sheet (layout.Grid) by its PagePlan: the
    table page, then the charts, when there are any, on a page of their own, drawn larger
    by the factor the page is shrunk by; the header row repeated on every page."""
    from openpyxl.utils import get_column_letter

    # Excel's columns are narrower in print than LibreOffice's without Calibri, so Excel
    # shrinks the page less: the charts are drawn for Excel's scale, and print a little
    # smaller, whole, in LibreOffice.
    chart_scale = min(1.0, plan.scale * LO_CM_PER_WIDTH_UNIT / CM_PER_WIDTH_UNIT)
    end = last_row if grid.chart_row is None else grid.chart_row + chart_rows(chart_scale)
    if grid.chart is not None:
        charts(ws, grid.chart, grid.chart_row, chart_scale)
        chart_page(ws, grid.chart_row)
    area = f"A1:{get_column_letter(plan.last_column)}{end}"
    page_setup(ws, caution, f"{header_row}:{header_row}", area)
    if grid.print_columns is None:  # compare: a few rows, no page break to keep
        ws.page_setup.fitToHeight = 1


def page_setup(ws, caution: str, title_rows: str | None = None, area: str | None = None,
               landscape: bool = True) -> None:
    """Landscape A4 fitted to one page wide, `title_rows` (e.g. "5:5") repeated,
    `area` (e.g. "A1:T70") printed, sheet name and page in the header, caution below."""
    setup = ws.page_setup
    setup.orientation = "landscape" if landscape else "portrait"
    setup.paperSize = A4
    setup.fitToWidth = 1
    setup.fitToHeight = 0  # as many pages down as the rows need
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.print_options.gridLines = False
    margins = ws.page_margins
    margins.left = margins.right = 0.4
    margins.top = margins.bottom = 0.5  # inches; the header and footer fit in 0.25
    margins.header = margins.footer = 0.25
    if title_rows:
        ws.print_title_rows = title_rows
    if area:
        ws.print_area = area
    ws.oddHeader.left.text = "&A"
    ws.oddHeader.right.text = "page &P of &N"
    ws.oddFooter.center.text = caution[:250]
    ws.oddFooter.center.size = 8


def chart_page(ws, chart_row: int) -> None:
    """A page break before the charts' row, so that they print on a page of their own."""
    from openpyxl.worksheet.pagebreak import Break

    ws.row_breaks.append(Break(id=chart_row - 1))


def column_after(ws, start: int, centimetres: float) -> int:
    """The first column from `start` whose left edge lies `centimetres` or more to the
    right of column `start`'s left edge (column widths as set on the sheet)."""
    from openpyxl.utils import get_column_letter

    column, total = start, 0.0
    while total < centimetres:
        width = ws.column_dimensions[get_column_letter(column)].width or 8.43
        total += width * CM_PER_WIDTH_UNIT
        column += 1
    return column


def wrap_columns(ws, columns: dict[int, float], rows: int) -> None:
    """Wrap the text of `columns` (number -> width) over `rows`, top aligned, each row as
    high as its longest wrapped text (spreadsheet programs do not all grow rows on load)."""
    import math

    from openpyxl.styles import Alignment
    from openpyxl.utils import get_column_letter

    wrapped = Alignment(wrap_text=True, vertical="top")
    lines = {}
    for column, width in columns.items():
        ws.column_dimensions[get_column_letter(column)].width = width
        for row in range(1, rows + 1):
            cell = ws.cell(row, column)
            cell.alignment = wrapped
            if isinstance(cell.value, str):
                lines[row] = max(lines.get(row, 1), math.ceil(len(cell.value) * 1.1 / width))
    for row, count in lines.items():
        if count > 1:
            ws.row_dimensions[row].height = 14.5 * count


ROW_POINTS = 14.5  # a line of wrapped text


def wrapped_lines(text: str, width: float) -> int:
    """Lines `text` wraps into in a column `width` characters wide (word wrap; bold
    headers are a little wider than plain text)."""
    import textwrap

    return max(1, len(textwrap.wrap(text, max(4, int(width * 0.9)))))


def fit_rows(ws, rows, last_column: int) -> None:
    """Each of `rows` as high as its longest wrapped text in columns 1..`last_column`
    (LibreOffice does not grow a row with wrapped text on load)."""
    from openpyxl.utils import get_column_letter

    for row in rows:
        lines = max(wrapped_lines(value, ws.column_dimensions[get_column_letter(j)].width
                                  or 8.43)
                    for j in range(1, last_column + 1)
                    if isinstance(value := ws.cell(row, j).value, str))
        if lines > 1:
            ws.row_dimensions[row].height = ROW_POINTS * lines


BOLD_CHARACTER = 1.1  # width units of a bold character, about (LibreOffice without Calibri)


def header_width(text: str) -> int:
    """The width a bold header needs when it wraps at its spaces (`omega_bottom [hPa/h]`
    on two lines): its longest word."""
    import math

    return math.ceil(max((len(word) for word in text.split()), default=1) * BOLD_CHARACTER)


def header_lines(text: str, width: float) -> int:
    """Lines a header wraps into at its spaces in a column `width` characters wide."""
    import textwrap

    return max(1, len(textwrap.wrap(text, max(1, int(width / BOLD_CHARACTER)),
                                    break_long_words=False)))


NOTE_CHARACTERS = 1.25  # characters of italic text per width unit (Calibri; more elsewhere)


def grid_heights(grid, widths: dict[int, float], printed: int,
                 header_row: int) -> dict[int, float]:
    """Row heights [points] of a results grid (layout.Grid): the header row as high as its
    most wrapped header in columns 1..`printed`, and each row of a wrapped note (merged
    from its column to `printed`) as high as the note's lines."""
    heights = {}
    lines = max((header_lines(entry.value, widths.get(j, 10))
                 for j in range(1, printed + 1)
                 if (entry := grid.entries.get((header_row, j))) is not None
                 and isinstance(entry.value, str)), default=1)
    if lines > 1:
        heights[header_row] = ROW_POINTS * lines
    for row, (column, last) in grid.wrapped.items():
        text = grid.entries[(row, column)].value
        width = sum(widths.get(j, 10) for j in range(column, max(last or printed, column) + 1))
        lines = wrapped_lines(text, width * NOTE_CHARACTERS) if isinstance(text, str) else 1
        if lines > 1:
            heights[row] = ROW_POINTS * lines
    return heights


def wrap_notes(ws, rows, last_column: int) -> None:
    """Each note row's text (in column A) wrapped over columns A to `last_column`, merged,
    the row as high as the wrapped text, so that a long note neither widens the printed
    page nor runs off it."""
    from openpyxl.styles import Alignment
    from openpyxl.utils import get_column_letter

    width = sum(ws.column_dimensions[get_column_letter(j)].width or 8.43
                for j in range(1, last_column + 1))
    for row in rows:
        cell = ws.cell(row, 1)
        text = cell.value if isinstance(cell.value, str) else ""
        ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=last_column)
        cell.alignment = Alignment(wrap_text=True, vertical="top")
        ws.row_dimensions[row].height = ROW_POINTS * wrapped_lines(text, width)


# Series look: (line and marker colour, marker symbol); distinct in colour and shape
SERIES_LOOK = (("1F4E9A", "circle"), ("C55A11", "triangle"), ("7030A0", "diamond"))


def charts(ws, spec, chart_row: int, scale: float) -> None:
    """Two scatter charts side by side on their own page: omega against pressure and the
    divergence (and the adjusted divergence) against pressure, each with its own axis;
    pressure on a logarithmic axis, reversed (pressure falls upward)."""
    from openpyxl.chart import Reference, ScatterChart, Series
    from openpyxl.utils import get_column_letter

    panels = [("omega against pressure", "omega [hPa/h]", spec.series[:1]),
              ("divergence against pressure", "divergence [1e-5 s^-1]", spec.series[1:])]
    column = 1
    for number, (title, x_title, series_list) in enumerate(panels):
        chart = ScatterChart()
        chart.title = title
        chart.style = 13
        chart.x_axis.title = x_title
        chart.y_axis.title = spec.y_title
        chart.y_axis.scaling.orientation = "maxMin"  # pressure decreases upward
        chart.y_axis.scaling.logBase = 10
        chart.y_axis.scaling.min, chart.y_axis.scaling.max = spec.y_range
        chart.x_axis.crosses = "max"  # the x axis at the highest pressure: the bottom
        chart.y_axis.crosses = "min"  # the pressure axis at the left edge, not at x = 0
        chart.x_axis.delete = False
        chart.y_axis.delete = False
        chart.legend.position = "b"
        for i, (label, x_column, y_column, first, last) in enumerate(series_list):
            colour, symbol = SERIES_LOOK[(number + i) % len(SERIES_LOOK)]
            xs = Reference(ws, min_col=x_column, min_row=first, max_row=last)
            ys = Reference(ws, min_col=y_column, min_row=first, max_row=last)
            series = Series(ys, xs, title=label)
            series.marker.symbol = symbol
            series.smooth = False  # straight lines between the layers, no spline
            series.marker.size = 7
            series.marker.graphicalProperties.solidFill = colour
            series.marker.graphicalProperties.line.solidFill = colour
            series.graphicalProperties.line.solidFill = colour
            series.graphicalProperties.line.width = 22000  # EMU, about 1.7 pt
            if i:
                series.graphicalProperties.line.dashStyle = "dash"
            chart.series.append(series)
        # drawn larger by the factor fit-to-width printing shrinks the sheet by
        chart.height, chart.width = CHART_HEIGHT_CM / scale, CHART_WIDTH_CM / scale
        ws.add_chart(chart, f"{get_column_letter(column)}{chart_row}")
        column = column_after(ws, column, (CHART_WIDTH_CM + 0.5) / scale)
