"""The `sweep` command: vary one or two input cells over a grid and tabulate the results
(terminal, CSV, workbook, plot), all files written together or none."""

from __future__ import annotations

import math
import sys
from pathlib import Path

from layercalc.cli.common import (
    PLOT_SUFFIXES, load_case, need_scenario, need_suffix, write_files,
)
from layercalc.errors import UsageError

FIRST_VALUE_ROW = 6  # the sweep sheet: title, caution, blank, header, units, values
MAX_SHEET_ROWS = 1_048_576  # a worksheet's last row (Excel, LibreOffice)


def _sweep_workbook(frame, units: dict, title: str) -> bytes:
    """The sweep table as a workbook: title, caution, a header and a units row, values."""
    import io

    from openpyxl import Workbook
    from openpyxl.styles import Font

    from layercalc.caution import CAUTION
    from layercalc.formats.xlsx.sheetxml import ILLEGAL

    book = Workbook()
    sheet = book.active
    sheet.title = "sweep"
    for row, text in ((1, title or "layercalc sweep"), (2, CAUTION)):
        # characters XML cannot hold (a control character in the title) become spaces,
        # as in the exported workbook
        cell = sheet.cell(row=row, column=1, value=ILLEGAL.sub(" ", text))
        cell.data_type = "s"  # text as text, never a formula
    sheet.cell(row=1, column=1).font = Font(bold=True)
    for column, name in enumerate(frame.columns, start=1):
        sheet.cell(row=4, column=column, value=str(name)).font = Font(bold=True)
        sheet.cell(row=5, column=column, value=units.get(name, "")).data_type = "s"
        for row, value in enumerate(frame[name].tolist(), start=FIRST_VALUE_ROW):
            sheet.cell(row=row, column=column, value=float(value))
    sheet.freeze_panes = "A6"
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()


def sweep_command(args) -> int:
    from layercalc.report.text import TableColumn, auto, table_lines, wrap
    from layercalc.evaluation.sweep import parse_range, plot_sweep, sweep_table

    if len(args.vary) > 2:
        print("layercalc sweep: error: a sweep varies one or two cells (give --vary once or "
              "twice)", file=sys.stderr)
        return 2  # a usage error
    if args.plot and Path(args.plot).suffix.lower() not in PLOT_SUFFIXES:
        raise UsageError(f"cannot draw to '{args.plot}': the picture must end in .png, "
                          ".svg or .pdf")
    if args.xlsx:
        need_suffix(args.xlsx, (".xlsx",), "the sweep table")
    sheet = load_case(args.case)
    need_scenario(sheet, args.scenario)
    ranges = [parse_range(text, sheet) for text in args.vary]
    points = math.prod(len(r.values) for r in ranges)
    if args.xlsx and points > MAX_SHEET_ROWS - FIRST_VALUE_ROW + 1:
        raise UsageError(f"--xlsx {args.xlsx}: the sweep has {points:,} points, more than the "
                         f"{MAX_SHEET_ROWS - FIRST_VALUE_ROW + 1:,} rows a worksheet holds "
                         "under its header", hint="write it with --csv, or take fewer points")
    frame = sweep_table(sheet, ranges, scenario=args.scenario, outputs=args.show)
    units = frame.attrs.get("units", {})
    files = []  # every file is made before the first one is written
    if args.csv:
        header = ",".join(frame.columns) + "\n" + ",".join(units.get(c, "") for c in
                                                           frame.columns) + "\n"
        text = header + frame.csv_rows()
        files.append((args.csv, text.encode("utf-8")))
    if args.xlsx:
        files.append((args.xlsx, _sweep_workbook(frame, units, sheet.title)))
    if args.plot:
        import tempfile

        shown = [c for c in frame.columns if c not in {r.name for r in ranges}]
        with tempfile.TemporaryDirectory() as folder:
            drawn = Path(folder) / Path(args.plot).name
            plot_sweep(frame, ranges, shown[0], drawn)
            files.append((args.plot, drawn.read_bytes()))
    write_files(files)
    if not args.quiet:
        varied = [r.name for r in ranges]

        def texts(name: str) -> list[str]:
            shown = auto(frame[name])
            if name in ("max_ascent", "max_ascent_pressure"):  # NaN: no ascent, as run says
                shown = ["none" if v != v else t for v, t in zip(frame[name], shown)]
            return shown

        columns = [TableColumn(name, units.get(name, ""), texts(name))
                   for name in frame.columns if name not in varied]
        # both varied cells in the first column, so that every block of a table too wide
        # for the screen says which grid point each row is
        labels = [", ".join(row) for row in zip(*(auto(frame[n]) for n in varied))]
        lines = table_lines(", ".join(varied), ", ".join(units.get(n, "") for n in varied),
                            labels, columns)
        from layercalc.caution import CAUTION

        lines += ["", f"{len(frame)} points", *wrap("caution: " + CAUTION)]
        sys.stdout.write("\n".join(lines) + "\n")
    return 0
