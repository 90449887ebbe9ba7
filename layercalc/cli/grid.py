"""`layercalc grid column` and `layercalc grid run`: model fields in.

`column` writes the column(s) at one or more points as a `.layers` sheet. `run` evaluates a
sheet's formulas over every column of the grid with xarray and dask and writes CF-netCDF;
when the file has the model's omega it prints (and with --json writes) the per-level
comparison, and draws maps on request.

The scheduler: a dask.distributed Client at --scheduler ADDRESS (or $LAYERCALC_SCHEDULER),
else dask's threaded scheduler on this machine. layercalc starts no cluster itself.
"""

from __future__ import annotations

import json
import os
import sys
from pathlib import Path

from layercalc.errors import InputError, OutputError, UsageError

SCHEDULER_VARIABLE = "LAYERCALC_SCHEDULER"
# Columns per block: memory grows with it, about 0.15 GB per 10,000 columns of 27 levels
# per worker thread (benchmarks/RESULTS.md); 128 x 128 keeps two threads near 1 GB.
DEFAULT_CHUNKS = {"y": 128, "x": 128, "time": 1}


def add_grid_commands(sub, command) -> None:
    """Register `grid column` and `grid run` under the main parser's subcommands."""
    grid = command(sub, "grid", "model fields on pressure levels: columns out, or the sheet "
                   "over every column",
                   "layercalc grid column nam.grib2 --point 40.0,-100.0\n"
                   "layercalc grid run gfs.nc -o diagnostics.nc --sheet formulas.layers",
                   "Read CF-netCDF or GRIB fields on pressure levels (GRIB needs the extra "
                   "layercalc[grib]; netCDF and the grid engine need layercalc[grid]).")
    inner = grid.add_subparsers(dest="grid_command", metavar="ACTION")
    column = command(inner, "column", "the model column(s) at one or more points as a "
                     ".layers sheet",
                     "layercalc grid column nam.grib2 --point 40.0,-100.0 -o column.layers\n"
                     "layercalc grid column nam.grib2 --point 41,-101,\"Station A\" "
                     "--point 40.5,-98.5,\"Station B\" --point 39,-100.5,\"Station C\"",
                     "One point gives a levels table; three or more give station blocks "
                     "and a levels table at their centroid with the model's omega, to "
                     "compare with the network's kinematic omega. Values are interpolated "
                     "bilinearly; levels below the model surface are dropped and said.")
    column.add_argument("file", metavar="FILE", help="a CF-netCDF or GRIB file")
    column.add_argument("--point", metavar="LAT,LON[,NAME]", action="append", required=True,
                        help="a point in degrees (north, east); repeat for a network")
    column.add_argument("--time", type=int, default=0, metavar="INDEX",
                        help="which time of a file with several (default 0, the first)")
    column.add_argument("-o", "--output", metavar="FILE.layers",
                        help="write the sheet to FILE instead of the screen")
    column.add_argument("--force", action="store_true", help="replace FILE if it exists")
    column.set_defaults(handler=command_grid_column)

    run = command(inner, "run", "the sheet over every column, to CF-netCDF",
                  "layercalc grid run nam.grib2 -o out.nc\n"
                  "layercalc grid run gfs.nc -o out.nc --sheet formulas.layers "
                  "--chunks y=200,x=200\n"
                  "layercalc grid run gfs.nc -o out.nc --omega-map omega500.png --level 500\n"
                  "layercalc grid run gfs.nc -o out.nc --scheduler tcp://10.0.0.5:8786",
                  "Divergence on the grid, omega by the sheet's boundary condition and "
                  "adjustment, w, the tendency, the level of non-divergence and the "
                  "sheet's own formulas for every column, written as CF-netCDF.")
    run.add_argument("file", metavar="FILE", help="a CF-netCDF or GRIB file")
    run.add_argument("-o", "--output", metavar="OUT.nc", required=True,
                     help="the netCDF file to write (replaced if it exists)")
    run.add_argument("--sheet", metavar="SHEET.layers",
                     help="formulas, cells and options (no table) to evaluate per column")
    run.add_argument("--chunks", metavar="DIM=N,...", default=None,
                     help="block size along y, x (and time), e.g. y=200,x=200; bounds the "
                          "memory (default y=128,x=128,time=1)")
    run.add_argument("--scheduler", metavar="ADDRESS", default=None,
                     help=f"a dask.distributed scheduler to run on (else ${SCHEDULER_VARIABLE}, "
                          "else threads on this machine)")
    run.add_argument("--no-progress", action="store_true", help="no progress bar")
    run.add_argument("--json", metavar="FILE.json",
                     help="also write the run's summary and the comparison with the "
                          "model's omega as JSON")
    run.add_argument("--tendency-map", metavar="FILE.png",
                     help="also draw the surface pressure tendency")
    run.add_argument("--omega-map", metavar="FILE.png",
                     help="also draw omega at --level (kinematic beside the model's)")
    run.add_argument("--level", type=float, default=500.0, metavar="HPA",
                     help="the level of --omega-map (default 500)")
    run.set_defaults(handler=command_grid_run)
    grid.set_defaults(handler=lambda args: _usage(grid))


def _usage(parser) -> int:
    parser.print_help(sys.stderr)
    return 2


def parse_point(text: str, index: int) -> tuple[str, float, float]:
    parts = [p.strip() for p in text.split(",", 2)]
    try:
        latitude, longitude = float(parts[0]), float(parts[1])
    except (ValueError, IndexError):
        raise UsageError(f"--point '{text}': expected LAT,LON or LAT,LON,NAME in degrees",
                         hint="e.g. --point 40.5,-98.25,\"Station A\"") from None
    if not -90.0 <= latitude <= 90.0:
        raise UsageError(f"--point '{text}': latitude {latitude:g} outside -90..90")
    name = parts[2] if len(parts) == 3 and parts[2] else f"Point {index + 1}"
    if '"' in name:
        raise UsageError(f"--point '{text}': a name may not contain '\"'")
    return name, latitude, longitude


def parse_chunks(text: str | None) -> dict:
    if text is None:
        return dict(DEFAULT_CHUNKS)
    chunks = {}
    for item in text.split(","):
        name, _, size = item.partition("=")
        name = name.strip()
        if name not in ("y", "x", "time"):
            raise UsageError(f"--chunks '{text}': '{name}' is not y, x or time",
                             hint="e.g. --chunks y=200,x=200 (levels stay in one chunk)")
        try:
            chunks[name] = int(size)
        except ValueError:
            raise UsageError(f"--chunks '{text}': '{size}' is not a whole number") from None
        if chunks[name] < 3:
            raise UsageError(f"--chunks '{text}': {name} needs at least 3 points per chunk")
    return chunks


def command_grid_column(args) -> int:
    from layercalc.cli.common import need_suffix, refuse_overwrite
    from layercalc.formats.grid import read_grid
    from layercalc.formats.grid_layers import column_sheet

    points = [parse_point(text, index) for index, text in enumerate(args.point)]
    if args.output:
        need_suffix(args.output, (".layers",), "the sheet")
        refuse_overwrite(args.output, args.force)
    fields = read_grid(args.file)
    text = column_sheet(fields, points, args.time)
    if args.output:
        from layercalc.files import write_text_atomic

        write_text_atomic(args.output, text, replace_read_only=args.force)
        print(f"wrote {args.output}", file=sys.stderr)
    else:
        sys.stdout.write(text)
    return 0


def _client(address: str | None):
    address = address or os.environ.get(SCHEDULER_VARIABLE) or None
    if not address:
        return None
    from layercalc.formats.grid import require

    require(("distributed",), "grid", "running on a dask scheduler")
    from distributed import Client

    try:
        return Client(address, timeout="10s")
    except (OSError, TimeoutError, ValueError) as exc:
        raise InputError(f"cannot reach the dask scheduler at {address}: {exc}",
                         hint=f"check --scheduler or ${SCHEDULER_VARIABLE}") from None


def command_grid_run(args) -> int:
    from layercalc.cli.common import need_suffix
    from layercalc.formats.grid import read_grid, require

    require(("xarray", "dask", "netCDF4"), "grid", "evaluating a grid")
    need_suffix(args.output, (".nc",), "the results")
    for option, path in (("--tendency-map", args.tendency_map),
                         ("--omega-map", args.omega_map)):
        if path:
            need_suffix(path, (".png", ".svg"), f"the map of {option}")
    if args.json:
        need_suffix(args.json, (".json",), "the summary")
    paths = [p for p in (args.output, args.json, args.tendency_map, args.omega_map) if p]
    if len({str(Path(p).resolve()) for p in paths}) != len(paths):
        raise OutputError("two outputs name the same file", hint="give each its own name")
    user_text, sheet_name = "", "<no sheet>"
    if args.sheet:
        from layercalc.source import read_source

        source = read_source(args.sheet)
        user_text, sheet_name = source.text, source.name
    fields = read_grid(args.file, chunks=parse_chunks(args.chunks))
    from layercalc.evaluation.grid import evaluate_grid
    from layercalc.formats.grid_netcdf import write_results

    result = evaluate_grid(fields, user_text, sheet_name)
    target = Path(args.output)
    # all or none: the netCDF goes to a hidden name beside the target, the summary and the
    # maps are made from it, and only when they are written is it renamed into place
    partial = target.with_name(f".{target.name}.{os.getpid()}.partial.nc")
    client = _client(args.scheduler)
    try:
        write_results(result, partial, client=client, progress=not args.no_progress)
        outputs = _after(args, fields, partial)
        if outputs:
            from layercalc.files import write_all_or_none

            write_all_or_none(outputs)
        try:
            os.replace(partial, target)
        except OSError as exc:
            raise OutputError(f"cannot write {target}: {exc.strerror or exc}") from None
    finally:
        partial.unlink(missing_ok=True)
        if client is not None:
            client.close()
    from layercalc.caution import CAUTION

    print(f"wrote {', '.join([args.output] + [p for p, _ in outputs])}", file=sys.stderr)
    print(f"caution: {CAUTION}")
    return 0


def _after(args, fields, written_path) -> list[tuple[str, bytes]]:
    """Print the summary and the comparison with the model's omega; return the JSON and the
    maps to write. All from the file just written (nothing is computed twice)."""
    import xarray as xr

    from layercalc.caution import CAUTION
    from layercalc.evaluation.grid_compare import (
        compare_with_model, comparison_json, comparison_table,
    )

    outputs: list[tuple[str, bytes]] = []
    with xr.open_dataset(written_path, chunks={}) as written:
        geometry = fields.geometry
        size = f"{written.sizes['y']} x {written.sizes['x']}"
        print(f"{fields.source}: {'latitude-longitude' if geometry.kind == 'latlon' else 'Lambert conformal'} "
              f"grid {size}, {written.sizes['level']} levels "
              f"{written['level'].values[0] / 100:g}-{written['level'].values[-1] / 100:g} hPa")
        for note in fields.notes:
            print(f"  {note}")
        rows = None
        if fields.has("omega"):
            rows = compare_with_model(written, fields)
            print("\nKinematic omega against the model's omega, per level (area-weighted, "
                  "points above ground):")
            print(comparison_table(rows))
        if args.json:
            document = {"source": fields.source, "output": args.output,
                        "grid": geometry.kind, "shape": [written.sizes["y"], written.sizes["x"]],
                        "levels": [float(p) for p in written["level"].values],
                        "notes": list(fields.notes), "options": written.attrs.get("options"),
                        "comparison": comparison_json(rows) if rows is not None else None,
                        "caution": CAUTION}
            outputs.append((args.json, (json.dumps(document, indent=1) + "\n").encode()))
        if args.tendency_map or args.omega_map:
            outputs += _maps(args, written, fields)
    return outputs


def _maps(args, written, fields) -> list[tuple[str, bytes]]:
    import io

    from layercalc.plots import grid_maps

    out = []
    figures = []
    if args.tendency_map:
        figures.append((args.tendency_map, grid_maps.tendency_map(written, fields.source)))
    if args.omega_map:
        model = fields.dataset["omega"] if fields.has("omega") else None
        figures.append((args.omega_map,
                        grid_maps.omega_map(written, args.level, fields.source, model)))
    for path, figure in figures:
        buffer = io.BytesIO()
        figure.savefig(buffer, format=Path(path).suffix.lower().lstrip("."), dpi=100)
        grid_maps.close(figure)
        out.append((path, buffer.getvalue()))
    return out
