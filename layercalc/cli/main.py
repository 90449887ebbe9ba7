"""The `layercalc` command (also `python -m layercalc`).

Exit status: 0 done, 1 a problem with the user's file, values or output path (our error,
printed without a traceback), 2 a usage error (argparse). Only LayercalcError is caught:
anything else is a bug and keeps its traceback.

Start-up stays light: the package's heavy parts (sympy through the checker, matplotlib for
plots, openpyxl for workbooks) load inside the command that needs them.
"""

from __future__ import annotations

import argparse
import os
import re
import sys
from layercalc.cli.commands import (
    command_check, command_demo, command_export, command_import, command_new, command_plot,
    command_run,
)
from layercalc.cli.common import DEMO_CASE, refuse_clashing_paths, refuse_ignored_options
from layercalc.cli.sweep import sweep_command as command_sweep
from layercalc.errors import LayercalcError


class _Formatter(argparse.RawDescriptionHelpFormatter):
    """Keeps the line breaks of descriptions and examples."""


NEGATIVE_NUMBER = re.compile(r"^-(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$|^-(inf|nan)$", re.IGNORECASE)


def _command(subparsers, name: str, summary: str, example: str, description: str = ""):
    command = subparsers.add_parser(
        name, help=summary, description=(description or summary),
        epilog="example:\n  " + example.replace("\n", "\n  "), formatter_class=_Formatter)
    command.set_defaults(command_parser=command)  # its usage line, for our usage errors
    # argparse takes a value such as -1e308 for an option (its pattern for negative numbers
    # has no exponent) and reports "expected one argument"; with this one the value reaches
    # the option, whose range check then says what is wrong with it
    command._negative_number_matcher = NEGATIVE_NUMBER
    return command


def build_parser() -> argparse.ArgumentParser:
    from layercalc.version import __version__

    parser = argparse.ArgumentParser(
        prog="layercalc", formatter_class=_Formatter,
        description="Column diagnostics by layers: thickness, heights, kinematic omega, w "
                    "and the surface pressure tendency, from a .layers file.",
        epilog="examples:\n  layercalc demo\n  layercalc new -o my_column.layers\n"
               "  layercalc run my_column.layers\n\n"
               "Run 'layercalc COMMAND --help' for each command's options.")
    parser.add_argument("--version", action="version", version=f"layercalc {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    run = _command(sub, "run", "compute a column and print the report",
                   "layercalc run worked_cases/midlevel_warming.layers\n"
                   "layercalc run case.layers --scenario warmed --json > warmed.json\n"
                   "layercalc run case.layers --all-scenarios\n"
                   "layercalc run case.layers --csv layers.csv --heights dam",
                   "Compute a column and print the layer table (top first) and the summary "
                   "in the trade's units: hPa, degC, m or dam, 1e-5 s^-1, hPa/h, cm/s.")
    run.add_argument("case", metavar="CASE", help="a .layers file (or an .xlsx workbook)")
    which = run.add_mutually_exclusive_group()
    which.add_argument("--scenario", metavar="NAME", help="compute one named scenario")
    which.add_argument("--all-scenarios", action="store_true",
                       help="compare the base and every scenario side by side")
    run.add_argument("--json", action="store_true",
                     help="print one JSON document (SI units) instead of the report")
    run.add_argument("--csv", metavar="FILE",
                     help="also write the layer table (surface first, with a units row)")
    run.add_argument("--units", choices=("trade", "si"), default=None,
                     help="units of the report and CSV: the trade's (default) or SI")
    run.add_argument("--heights", choices=("m", "dam"), default=None,
                     help="heights and thicknesses in metres (default) or decametres (the "
                          "trade's units only: SI heights are in metres)")
    run.add_argument("--every-column", action="store_true",
                     help="also list every intermediate column (dp, p_mid, e, r, ...)")
    run.add_argument("-o", "--output", metavar="FILE",
                     help="write the report (or JSON) to FILE instead of the screen")
    run.set_defaults(handler=command_run)

    check = _command(sub, "check", "read and unit-check files without computing",
                     "layercalc check my_column.layers",
                     "Parse and unit-check each file. Prints 'ok' or every problem with its "
                     "file:line:column; exits 1 if any file has a problem.")
    check.add_argument("cases", metavar="CASE", nargs="+", help="one or more .layers files")
    check.set_defaults(handler=command_check)

    new = _command(sub, "new", "write a commented template sheet to start from",
                   "layercalc new -o my_column.layers",
                   "Write a commented .layers template that uses every construct of the "
                   "format (to the screen, or to a file with -o).")
    new.add_argument("-o", "--output", metavar="FILE", help="the file to write")
    new.add_argument("--force", action="store_true", help="replace FILE if it exists")
    new.set_defaults(handler=command_new)

    demo = _command(sub, "demo", "run a bundled worked case",
                    "layercalc demo\nlayercalc demo standard_atmosphere\nlayercalc demo --list",
                    "Run one of the worked cases that come with layercalc and say where to "
                    "go next.")
    demo.add_argument("name", metavar="NAME", nargs="?", default=DEMO_CASE,
                      help=f"which worked case (default {DEMO_CASE})")
    demo.add_argument("--list", action="store_true", help="list the worked cases")
    demo.set_defaults(handler=command_demo)

    plot = _command(sub, "plot", "draw the column profile to a PNG, SVG or PDF file",
                    "layercalc plot worked_cases/midlevel_warming.layers -o profile.png",
                    "Draw divergence by layer and omega at the interfaces against pressure "
                    "(log axis, heights on the right), with the level(s) of non-divergence "
                    "and the surface tendency; a second panel compares the scenarios when "
                    "the sheet has any. For a sheet with station blocks, a last panel shows "
                    "the stations on the tangent plane with wind arrows at one level "
                    "(--station-level), the fitted centroid wind and that level's divergence "
                    "and vorticity.")
    plot.add_argument("case", metavar="CASE", help="a .layers file (or an .xlsx workbook)")
    plot.add_argument("-o", "--output", metavar="FILE", required=True,
                      help="the picture to write: FILE.png, FILE.svg or FILE.pdf")
    plot.add_argument("--scenario", metavar="NAME", help="draw this scenario in the first "
                      "panel instead of the base")
    plot.add_argument("--dpi", type=int, default=100,
                      help="resolution of a PNG in dots per inch (default 100)")
    plot.add_argument("--station-level", metavar="HPA", type=float, default=500.0,
                      help="pressure of the station panel's winds in hPa (default 500; the "
                           "nearest level is drawn)")
    plot.set_defaults(handler=command_plot)

    export = _command(sub, "export", "write the sheet as an .xlsx workbook",
                      "layercalc export my_column.layers -o my_column.xlsx\n"
                      "layercalc export worked_cases/three_stations.layers -o network.xlsx",
                      "Write the sheet as a workbook whose results are live formulas: edit "
                      "an input and the spreadsheet recalculates. Sheets: 'layers' (the "
                      "inputs, one row per layer: edit these), 'settings' (surface height, "
                      "boundary values, what-if cells, options), 'results' (every derived "
                      "column and cell as a formula, the readable formula beside it, a "
                      "chart), 'results_<scenario>' and 'compare' (per scenario, and side "
                      "by side), 'values...' (the same as plain numbers, hidden), "
                      "'uncertainty' (with an error model), 'formulas' (your formulas and "
                      "scenarios as .layers text), 'notes' (formulas in words, references, "
                      "constants). 'layercalc import' reads it back.")
    export.add_argument("case", metavar="CASE", help="a .layers file")
    export.add_argument("-o", "--output", metavar="FILE", required=True,
                        help="the workbook to write (.xlsx)")
    export.set_defaults(handler=command_export)

    read = _command(sub, "import", "turn a workbook or soundings into a .layers file",
                    "layercalc import filled_in.xlsx -o my_column.layers\n"
                    "layercalc import bulletin.txt --stations 99901 -o sounding.layers\n"
                    "layercalc import obs.bufr --near 45.0,-30.0,400 -o network.layers",
                    "Write a .layers file from FILE (recognised by content, or say "
                    "--format). A workbook: sheet 'layers' (or the first sheet) is read "
                    "as the input table (header 'name [unit]', one row per layer), "
                    "'settings' for the title, notes, options and input cells, and "
                    "'formulas' for your formulas and scenario blocks; every other sheet "
                    "(results, compare, values, notes) is recomputed, never read. A "
                    "TEMP or PILOT bulletin, a BUFR file or a text table with a header "
                    "row like 'p [hPa]  T [degC]': one station becomes a levels table, "
                    "several become station blocks (pick them with --stations or "
                    "--near). Nothing is written when FILE has an error; the message "
                    "names its sheet!cell or line.")
    read.add_argument("workbook", metavar="FILE",
                      help="an .xlsx workbook, a TEMP/PILOT bulletin, a BUFR file or a text "
                           "table (recognised by content)")
    read.add_argument("-o", "--output", metavar="FILE", required=True,
                      help="the .layers file to write")
    read.add_argument("--force", action="store_true", help="replace FILE if it exists")
    read.add_argument("--format", choices=("xlsx", "temp", "bufr", "table"),
                      help="the input's format, when recognising it by content is not wanted")
    read.add_argument("--stations", metavar="ID,ID", help="soundings of these stations only")
    read.add_argument("--near", metavar="LAT,LON,RADIUS_KM",
                      help="soundings within RADIUS_KM of a point")
    read.add_argument("--station-table", metavar="FILE",
                      help="CSV id,latitude,longitude,elevation for land stations")
    read.set_defaults(handler=command_import)

    sweep = _command(sub, "sweep", "vary one or two input cells and tabulate results",
                     "layercalc sweep case.layers --vary \"omega_top=-2:2:0.5\"\n"
                     "layercalc sweep case.layers --vary \"omega_top=-2:2:1\" "
                     "--vary \"surface_height=0:300:100\" --csv grid.csv --plot grid.png",
                     "Vary input cells over ranges (NAME=START:STOP:STEP in the cell's own "
                     "unit; two --vary give a full grid), evaluate every point in one pass "
                     "and print a table of chosen results.")
    sweep.add_argument("case", metavar="CASE", help="a .layers file (or an .xlsx workbook)")
    sweep.add_argument("--vary", metavar="NAME=START:STOP:STEP", action="append",
                       required=True, help="an input cell and its range (once or twice)")
    sweep.add_argument("--scenario", metavar="NAME", help="sweep this scenario's sheet")
    sweep.add_argument("--show", metavar="CELL", action="append",
                       help="a result cell to tabulate (repeat for several; default: "
                            "tendency, surface omega, strongest ascent, column thickness; "
                            "level_of_nondivergence gives the lowest such level)")
    sweep.add_argument("--csv", metavar="FILE", help="also write the table as CSV")
    sweep.add_argument("--xlsx", metavar="FILE", help="also write the table as a workbook")
    sweep.add_argument("--plot", metavar="FILE", help="also draw the first shown result "
                       "(.png, .svg or .pdf): a line for one range, a shaded grid for two")
    sweep.add_argument("--quiet", action="store_true", help="do not print the table")
    sweep.set_defaults(handler=command_sweep)

    from layercalc.cli.grid import add_grid_commands

    add_grid_commands(sub, _command)
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help(sys.stderr)
        return 2
    import numpy as np

    try:
        # absurd but accepted values (1e308 Pa/s) overflow in unit conversions: the report
        # shows them as '-', and numpy's warnings would only add noise on stderr
        with np.errstate(all="ignore"):
            refuse_ignored_options(args)
            refuse_clashing_paths(args)
            return args.handler(args)
    except LayercalcError as err:
        if err.exit_code == 2 and getattr(args, "command_parser", None) is not None:
            args.command_parser.print_usage(sys.stderr)  # as argparse does for its own
        print(err.format(), file=sys.stderr)
        return err.exit_code
    except BrokenPipeError:  # the reader (e.g. `| head`) stopped reading: not an error of ours
        sys.stdout = open(os.devnull, "w")
        return 0
