"""Print setup of an exported workbook, so that it prints readably as handed on: A4
landscape, fitted to the page width (as many pages down as needed), the header rows
repeated on every page, print areas without the SI helper columns, the chart on a page
of its own, the sheet name and page number in the header and the caution in every
page footer (ECMA-376 page setup, 18.3.1.63; header/footer codes, 18.3.1.46).
The plain-number twins (`values*`) are hidden: the live sheets carry the same numbers
as cached values, and printing both would double the pages."""

from __future__ import annotations

A4 = 9  # ECMA-376 paperSize 9: A4 (210 mm x 297 mm)
PAGE_WIDTH_CM = 28.0  # A4 landscape less the margins below
ROW_CM = 0.53  # a default row (15 pt)
CM_PER_WIDTH_UNIT = 0.19  # about one character of the default font
CHART_WIDTH_CM, CHART_HEIGHT_CM = 13.0, 15.0  # each chart, as printed


def print_scale(widths: list[float]) -> float:
    """The factor fit-to-width printing shrinks a sheet of these column widths by."""
    total = sum(widths) * CM_PER_WIDTH_UNIT
    return min(1.0, PAGE_WIDTH_CM / total) if total else 1.0


def chart_rows(scale: float) -> int:
    """Rows the charts cover on the sheet when they print CHART_HEIGHT_CM high."""
    return int(CHART_HEIGHT_CM / scale / ROW_CM) + 2


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
