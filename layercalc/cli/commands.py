"""The commands run, check, new, demo, plot, export and import (sweep has its own module)."""

from __future__ import annotations

import sys
from pathlib import Path

from layercalc.names import close_names, did_you_mean
from layercalc.cli.common import (
    PLOT_SUFFIXES, case_summary, emit, load_case, need_scenario, need_suffix, refuse_overwrite,
    worked_cases, worked_cases_folder, write_files,
)
from layercalc.errors import InputError, LayercalcError, OutputError, UsageError

MAX_STATION_LEVEL_HPA = 1100.0  # the highest pressure any input may have (plausibility)


def command_run(args) -> int:
    from layercalc.formats import jsondoc as jsonout
    from layercalc.report import text as report

    if args.units == "si" and args.heights == "dam":
        raise UsageError("--heights dam and --units si contradict each other: SI heights "
                         "and thicknesses are in metres",
                         hint="drop --units si to get decametres, or drop --heights dam")
    args.heights = args.heights or "m"
    if args.all_scenarios and args.csv:
        raise UsageError("--csv writes one variant's layer table; with --all-scenarios "
                          "there are several", hint="use --scenario NAME with --csv")
    units, heights = args.units or "trade", args.heights or "m"  # None when not given
    sheet = load_case(args.case)
    need_scenario(sheet, args.scenario)
    if args.all_scenarios:
        names = ["base", *sheet.scenarios]
        if args.json:
            text = jsonout.dumps(jsonout.scenarios_document(sheet, names))
        elif len(names) == 1:
            text = report.render(sheet, sheet.evaluate(), units, heights,
                                 args.every_column)
            text += "\n(this sheet has no scenarios)\n"
        else:
            text = report.render_comparison(sheet, names, units)
        emit(text, args.output)
        return 0
    result = sheet.evaluate(args.scenario)
    if args.json:
        text = jsonout.dumps(jsonout.result_document(sheet, result))
    else:
        text = report.render(sheet, result, units, heights, args.every_column)
    files = []  # everything is computed before the first file is written
    if args.csv:
        table = jsonout.layer_table_csv(result, units, heights)
        files.append((args.csv, table.encode("utf-8")))
    if args.output:
        files.append((args.output, text.encode("utf-8")))
    write_files(files)
    if not args.output:
        sys.stdout.write(text)
    return 0


def command_check(args) -> int:
    from layercalc.api import check_sheet

    failed = False
    several = len(args.cases) > 1
    for path in args.cases:
        # one compilation per file; the sympy unit check of a text is remembered as by run
        sheet, found = check_sheet(path, reuse_checks=True)
        if found:
            failed = True
            for problem in found:
                print(problem.format())
            continue
        for notice in sheet.check():
            print(notice.format())
        print(f"{path}: ok" if several else "ok")
    return 1 if failed else 0


def command_new(args) -> int:
    from layercalc.cli.templates import TEMPLATE

    if args.output:
        refuse_overwrite(args.output, args.force)
        emit(TEMPLATE, args.output, force=args.force)
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
            print(f"{name.ljust(width)}  {case_summary(path)}")
        print(f"\nthe files are in {worked_cases_folder()}")
        return 0
    if args.name not in cases:
        close = close_names(args.name, cases, 2)
        raise InputError(f"no worked case named '{args.name}'",
                         hint=did_you_mean(close) or "see them all with: layercalc demo --list")
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
        raise UsageError(f"cannot draw to '{args.output}': the picture must end in .png, "
                         ".svg or .pdf", hint=f"e.g. -o {Path(args.output).stem or 'profile'}.png")
    if args.dpi < 20 or args.dpi > 1200:
        raise UsageError(f"--dpi {args.dpi} is out of range", hint="use 20 to 1200")
    if not 0 < args.station_level <= MAX_STATION_LEVEL_HPA:  # NaN fails too
        raise UsageError(f"--station-level {args.station_level:g} is out of range: it is a "
                         f"pressure in hPa, above 0 and at most {MAX_STATION_LEVEL_HPA:g}",
                         hint="e.g. --station-level 500")
    from layercalc.plots.profile import save_profile

    sheet = load_case(args.case)
    need_scenario(sheet, args.scenario)
    save_profile(sheet, args.output, scenario=args.scenario, dpi=args.dpi,
                 station_level=args.station_level)
    print(f"wrote {args.output}", file=sys.stderr)
    return 0


def command_export(args) -> int:
    from layercalc.formats.xlsx.export import write_workbook

    need_suffix(args.output, (".xlsx",), "the workbook")
    sheet = load_case(args.case)
    write_workbook(sheet, args.output)
    print(f"wrote {args.output}", file=sys.stderr)
    return 0


def command_import(args) -> int:
    from layercalc.api import loads
    from layercalc.formats.xlsx import reader as module

    need_suffix(args.output, (".layers",), "the sheet")
    refuse_overwrite(args.output, args.force)
    sounding_options = args.stations or args.near or args.station_table
    is_book = (args.format == "xlsx" or (args.format is None and
               Path(args.workbook).suffix.lower() in (".xlsx", ".xlsm")))
    if is_book and sounding_options:
        raise InputError("--stations, --near and --station-table are for soundings, not workbooks")
    if not is_book:
        text = _soundings_text(args)
        loads(text, name=args.output)  # refuse to write a sheet that would not load
    else:
        text = module.read_workbook(Path(args.workbook), loads)  # compiled there
    write_loadable(args.output, text, force=args.force)
    print(f"wrote {args.output}", file=sys.stderr)
    return 0


def write_loadable(path, text: str, force: bool = False) -> None:
    """Write an imported sheet only if the bytes written load again, read back from the
    file as `layercalc run` reads it (a text that compiles in memory may still not load
    from disk: a lone carriage return inside quotes ends the line when read).

    `text` has compiled in memory already (the caller did it): when the file reads back as
    the very same text, it loads as that did, so it is compiled again only when reading
    changed it (one compilation per import)."""
    from layercalc.api import load
    from layercalc.files import write_through_temporary
    from layercalc.source import read_source

    def written_and_read_back(temporary: str) -> None:
        Path(temporary).write_bytes(text.encode("utf-8"))
        if read_source(temporary).text == text:
            return
        try:
            load(temporary)
        except LayercalcError as exc:
            raise OutputError(
                f"cannot write {path}: the sheet made from the input does not load again "
                f"({exc.kind}: {exc.message}); nothing was written",
                hint="this is a fault in layercalc's import; please report it with the "
                     "input file") from None

    write_through_temporary(path, written_and_read_back, replace_read_only=force)


def _soundings_text(args) -> str:
    from layercalc.formats.soundings_input import read_soundings, soundings_layers_text

    stations = [s.strip() for s in args.stations.split(",") if s.strip()] if args.stations else None
    near = None
    if args.near:
        try:
            near = tuple(float(x) for x in args.near.split(","))
        except ValueError:
            near = ()
        if len(near) != 3:
            raise UsageError(f"--near {args.near}: expected LAT,LON,RADIUS_KM, e.g. 45.0,-30.0,400")
    decoded = read_soundings(args.workbook, format=args.format, stations=stations, near=near,
                             station_table=args.station_table)
    for notice in decoded.all_notices:
        print(notice.format(), file=sys.stderr)
    return soundings_layers_text(decoded)
