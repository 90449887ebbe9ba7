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
import sys
from pathlib import Path

from layercalc.errors import InputError, LayercalcError, OutputError

DEMO_CASE = "midlevel_warming"
PLOT_SUFFIXES = (".png", ".svg")


class _Formatter(argparse.RawDescriptionHelpFormatter):
    """Keeps the line breaks of descriptions and examples."""


def _command(subparsers, name: str, summary: str, example: str, description: str = ""):
    return subparsers.add_parser(
        name, help=summary, description=(description or summary),
        epilog="example:\n  " + example.replace("\n", "\n  "), formatter_class=_Formatter)


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
    run.add_argument("--units", choices=("trade", "si"), default="trade",
                     help="units of the report and CSV: the trade's (default) or SI")
    run.add_argument("--heights", choices=("m", "dam"), default="m",
                     help="heights and thicknesses in metres (default) or decametres")
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

    plot = _command(sub, "plot", "draw the column profile to a PNG or SVG file",
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
                      help="the picture to write: FILE.png or FILE.svg")
    plot.add_argument("--scenario", metavar="NAME", help="draw this scenario in the first "
                      "panel instead of the base")
    plot.add_argument("--dpi", type=int, default=100,
                      help="resolution of a PNG in dots per inch (default 100)")
    plot.add_argument("--station-level", metavar="HPA", type=float, default=500.0,
                      help="pressure of the station panel's winds in hPa (default 500; the "
                           "nearest level is drawn)")
    plot.set_defaults(handler=command_plot)

    export = _command(sub, "export", "write the sheet as an .xlsx workbook",
                      "layercalc export my_column.layers -o my_column.xlsx")
    export.add_argument("case", metavar="CASE", help="a .layers file")
    export.add_argument("-o", "--output", metavar="FILE", required=True,
                        help="the workbook to write (.xlsx)")
    export.set_defaults(handler=command_export)

    read = _command(sub, "import", "turn an .xlsx workbook into a .layers file",
                    "layercalc import filled_in.xlsx -o my_column.layers")
    read.add_argument("workbook", metavar="WORKBOOK", help="an .xlsx workbook")
    read.add_argument("-o", "--output", metavar="FILE", required=True,
                      help="the .layers file to write")
    read.add_argument("--force", action="store_true", help="replace FILE if it exists")
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
                            "tendency, surface omega, strongest ascent, column thickness)")
    sweep.add_argument("--csv", metavar="FILE", help="also write the table as CSV")
    sweep.add_argument("--xlsx", metavar="FILE", help="also write the table as a workbook")
    sweep.add_argument("--plot", metavar="FILE", help="also draw the first shown result "
                       "(.png): a line for one range, a shaded grid for two")
    sweep.add_argument("--quiet", action="store_true", help="do not print the table")
    sweep.set_defaults(handler=command_sweep)
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
            return args.handler(args)
    except LayercalcError as err:
        print(err.format(), file=sys.stderr)
        return err.exit_code
    except BrokenPipeError:  # the reader (e.g. `| head`) stopped reading: not an error of ours
        sys.stdout = open(os.devnull, "w")
        return 0


# ---------------------------------------------------------------- helpers
def load_case(path: str):
    """A sheet from a .layers file or an .xlsx workbook."""
    from layercalc.api import load

    return load(path, reuse_checks=True)


def _emit(text: str, output: str | None) -> None:
    if output:
        from layercalc.files import write_text_atomic

        write_text_atomic(output, text)
    else:
        sys.stdout.write(text)


def _write_files(outputs: list[tuple[str, bytes]]) -> None:
    """Write several output files all or none (layercalc.files.write_all_or_none)."""
    from layercalc.files import write_all_or_none

    write_all_or_none(outputs)


def _refuse_overwrite(path: str, force: bool) -> None:
    target = Path(path)
    if target.exists() and not force:
        raise OutputError(f"{path} exists already; nothing was written",
                          hint="choose another name, or add --force to replace it")
    if target.is_dir():
        raise OutputError(f"{path} is a folder")


def worked_cases_folder() -> Path:
    """The bundled worked cases: inside the installed package, or in a checkout."""
    from importlib import resources

    packaged = resources.files("layercalc").joinpath("worked_cases")
    if packaged.is_dir():
        return Path(str(packaged))
    checkout = Path(__file__).resolve().parents[2] / "worked_cases"
    if checkout.is_dir():
        return checkout
    raise InputError("the worked cases are missing from this copy of layercalc",
                     hint="reinstall layercalc, or run from a checkout of its repository")


def worked_cases() -> dict[str, Path]:
    return {p.stem: p for p in sorted(worked_cases_folder().glob("*.layers"))}


def _case_summary(path: Path) -> str:
    """The first comment line after the header rule, as a one-line description."""
    for line in path.read_text(encoding="utf-8").splitlines():
        text = line.lstrip("#").strip()
        if line.startswith("#") and text and not set(text) <= set("-=# "):
            return text
    return ""


# ---------------------------------------------------------------- commands
def command_run(args) -> int:
    from layercalc.formats import jsondoc as jsonout
    from layercalc.report import text as report

    if args.csv and args.output and Path(args.csv).resolve() == Path(args.output).resolve():
        raise OutputError(f"--csv and -o both name {args.csv}; nothing was written",
                          hint="give the table and the report different files")
    if args.all_scenarios and args.csv:
        raise OutputError("--csv writes one variant's layer table; with --all-scenarios "
                          "there are several", hint="use --scenario NAME with --csv")
    sheet = load_case(args.case)
    if args.all_scenarios:
        names = ["base", *sheet.scenarios]
        if args.json:
            text = jsonout.dumps(jsonout.scenarios_document(sheet, names))
        elif len(names) == 1:
            text = report.render(sheet, sheet.evaluate(), args.units, args.heights,
                                 args.every_column)
            text += "\n(this sheet has no scenarios)\n"
        else:
            text = report.render_comparison(sheet, names, args.units)
        _emit(text, args.output)
        return 0
    result = sheet.evaluate(args.scenario)
    if args.json:
        text = jsonout.dumps(jsonout.result_document(sheet, result))
    else:
        text = report.render(sheet, result, args.units, args.heights, args.every_column)
    files = []  # everything is computed before the first file is written
    if args.csv:
        table = jsonout.layer_table_csv(result, args.units, args.heights)
        files.append((args.csv, table.encode("utf-8")))
    if args.output:
        files.append((args.output, text.encode("utf-8")))
    _write_files(files)
    if not args.output:
        sys.stdout.write(text)
    return 0


def command_check(args) -> int:
    from layercalc.api import load, problems

    failed = False
    several = len(args.cases) > 1
    for path in args.cases:
        found = problems(path)
        if found:
            failed = True
            for problem in found:
                print(problem.format())
            continue
        for notice in load(path).check():
            print(notice.format())
        print(f"{path}: ok" if several else "ok")
    return 1 if failed else 0


def command_new(args) -> int:
    from layercalc.cli.templates import TEMPLATE

    if args.output:
        _refuse_overwrite(args.output, args.force)
        _emit(TEMPLATE, args.output)
        print(f"wrote {args.output}; edit it, then: layercalc run {args.output}",
              file=sys.stderr)
    else:
        sys.stdout.write(TEMPLATE)
    return 0


def command_demo(args) -> int:
    from layercalc.api import load
    from layercalc.report import text as report

    cases = worked_cases()
    if args.list:
        width = max(len(n) for n in cases)
        for name, path in cases.items():
            print(f"{name.ljust(width)}  {_case_summary(path)}")
        print(f"\nthe files are in {worked_cases_folder()}")
        return 0
    if args.name not in cases:
        import difflib

        close = difflib.get_close_matches(args.name, list(cases), n=2)
        raise InputError(f"no worked case named '{args.name}'",
                         hint=("did you mean " + " or ".join(close) + "? ") if close else
                         "see them all with: layercalc demo --list")
    path = cases[args.name]
    sheet = load(path)
    sys.stdout.write(report.render(sheet, sheet.evaluate()))
    print("\nWhere to go next")
    print("  This case is the file (CASE below; copy it to change it):")
    print(f"    {path}")
    steps = [("every worked case", "layercalc demo --list"),
             ("draw this column", "layercalc plot CASE -o profile.png")]
    if sheet.scenarios:
        steps.insert(0, ("its scenarios side by side", "layercalc run CASE --all-scenarios"))
    steps += [("start your own sheet", "layercalc new -o my_column.layers"),
              ("check it, then run it", "layercalc check my_column.layers"),
              ("", "layercalc run my_column.layers"),
              ("results for scripts", "layercalc run my_column.layers --json"),
              ("help on any command", "layercalc run --help")]
    for what, how in steps:
        print(f"  {(what + ':') if what else '':<28} {how}")
    return 0


def command_plot(args) -> int:
    suffix = Path(args.output).suffix.lower()
    if suffix not in PLOT_SUFFIXES:
        raise OutputError(f"cannot draw to '{args.output}': the picture must end in .png or "
                          ".svg", hint=f"e.g. -o {Path(args.output).stem or 'profile'}.png")
    if args.dpi < 20 or args.dpi > 1200:
        raise OutputError(f"--dpi {args.dpi} is out of range", hint="use 20 to 1200")
    from layercalc.plots.profile import save_profile

    sheet = load_case(args.case)
    save_profile(sheet, args.output, scenario=args.scenario, dpi=args.dpi,
                 station_level=args.station_level)
    print(f"wrote {args.output}", file=sys.stderr)
    return 0


def command_export(args) -> int:
    from layercalc.formats.xlsx.export import write_workbook

    _need_suffix(args.output, (".xlsx",), "the workbook")
    sheet = load_case(args.case)
    write_workbook(sheet, args.output)
    print(f"wrote {args.output}", file=sys.stderr)
    return 0


def command_import(args) -> int:
    from layercalc.api import loads
    from layercalc.files import write_text_atomic
    from layercalc.formats.xlsx import reader as module

    _need_suffix(args.output, (".layers",), "the sheet")
    _refuse_overwrite(args.output, args.force)
    text = module.read_workbook(Path(args.workbook))
    loads(text, name=args.workbook)  # refuse to write a sheet that would not load
    write_text_atomic(args.output, text)
    print(f"wrote {args.output}", file=sys.stderr)
    return 0


def _need_suffix(path: str, suffixes: tuple[str, ...], what: str) -> None:
    if Path(path).suffix.lower() not in suffixes:
        raise OutputError(f"cannot write {what} to '{path}': the name must end in "
                          + " or ".join(suffixes),
                          hint=f"e.g. -o {Path(path).stem or 'out'}{suffixes[0]}")


def command_sweep(args) -> int:
    from layercalc.cli.sweep import sweep_command

    return sweep_command(args)
