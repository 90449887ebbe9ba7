"""layercalc benchmarks, every figure beside its target, measured in one run:

- sweeps of the 12-layer worked case (1e4, 1e5, 1e6 scenarios) against a tight hand-written
  numpy kernel (benchmarks/kernels.py: layers outer, scenarios contiguous, in place), and
  the peak memory of both;
- a 100,000-layer table: `run` and `check` against a numpy script doing the same work
  (kernels.table_script: numpy.loadtxt, the same columns, the same table as text), the
  --json writer against json.dumps of the same document, loading against numpy.loadtxt;
- start-up: what `--help`, `check` and `sweep` import and compile, and `run` against the
  import floor `python -c "import numpy, lark, sympy.physics.units"`;
- the error ensemble of the three-station case against its hand kernel.

    python benchmarks/run.py            # writes benchmarks/RESULTS.md

Times are CPU times (this process, or the child processes' user + system time), the median
of several repetitions with the range beside it: the machine is shared with other work, and
CPU time is far less disturbed by it than wall time. Nothing here is asserted in tests.
"""

from __future__ import annotations

import json
import os
import platform
import resource
import statistics
import subprocess
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import layercalc  # noqa: E402
from kernels import CELLS, COLUMNS, sweep_kernel  # noqa: E402

CASE = ROOT / "worked_cases" / "midlevel_warming.layers"
SCENARIO = "warmed_divergent"  # warms 500-300 hPa by `warming`, scales div above 500 hPa
SIZES = (10_000, 100_000, 1_000_000)
REPEATS = {10_000: 15, 100_000: 9, 1_000_000: 5}
BIG_LAYERS = 100_000
ENV = {**os.environ, "PYTHONPATH": str(ROOT)}


def cpu_times(function, repeats):
    """CPU times of `function()` in this process, and its last result."""
    times, result = [], None
    for _ in range(repeats):
        result = None
        start = time.process_time()
        result = function()
        times.append(time.process_time() - start)
    return times, result


def child_cpu(command, env=ENV, repeats=5, cwd=ROOT):
    """CPU times (user + system) of a command run in a child process."""
    times = []
    for _ in range(repeats):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        subprocess.run(command, check=True, capture_output=True, env=env, cwd=cwd)
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        times.append(after.ru_utime - before.ru_utime + after.ru_stime - before.ru_stime)
    return times


def summary(times) -> str:
    return f"{statistics.median(times):.3f} ({min(times):.3f}-{max(times):.3f})"


def ratio(numerators, denominators) -> tuple[float, float, float]:
    """Median ratio of medians, and the range of the pairwise ratios of the repetitions."""
    pairs = [a / b for a, b in zip(numerators, denominators)]
    return statistics.median(numerators) / statistics.median(denominators), min(pairs), \
        max(pairs)


def verdict(value: float, target: float) -> str:
    return "met" if value <= target else "NOT met"


def ratio_cells(numerators, denominators, target) -> str:
    middle, low, high = ratio(numerators, denominators)
    return f"{middle:.2f} ({low:.2f}-{high:.2f}) | <= {target} | {verdict(middle, target)}"


# ---------------------------------------------------------------- sweeps
def sweep_inputs(sheet, size):
    columns = sheet.checked.input_columns
    pb, pt = columns["p_bottom"].values, columns["p_top"].values
    warm = (pb <= 50000.0 * (1 + 1e-6)) & (pt >= 30000.0 * (1 - 1e-6))
    aloft = pb <= 50000.0 * (1 + 1e-6)
    cells = sheet.checked.input_cells
    warming = np.linspace(0.0, 6.0, size)
    scale = np.tile(np.linspace(0.5, 2.0, 100), size // 100)
    args = (pb, pt, columns["T"].values, columns["Td"].values, columns["div"].values, warm,
            aloft, cells["surface_height"].value, cells["omega_top"].value, warming, scale)
    return {"warming": warming, "div_scale": scale}, args


def worst_difference(evaluation, columns, cells, size) -> float:
    worst = 0.0
    pairs = [(np.broadcast_to(evaluation.columns[n], (size, columns[n].shape[0])),
              columns[n].T) for n in COLUMNS]
    pairs += [(np.broadcast_to(evaluation.cells[n], (size, 1))[:, 0],
               np.broadcast_to(cells[n], (size,))) for n in CELLS]
    for got, want in pairs:
        floor = np.abs(want).max() * 1e-12 + 1e-300  # values crossing zero: relative to the largest
        worst = max(worst, float(np.max(np.abs(got - want) / np.maximum(np.abs(want), floor))))
    return worst


def sweeps(sheet):
    rows = []
    for size in SIZES:
        cell_values, args = sweep_inputs(sheet, size)
        repeats = REPEATS[size]
        t_layercalc, t_kernel = [], []
        for _ in range(repeats):  # interleaved, so that both meet the same disturbances
            t_layercalc += cpu_times(lambda: sheet.evaluate_many(cell_values, SCENARIO), 1)[0]
            t_kernel += cpu_times(lambda: sweep_kernel(*args), 1)[0]
        evaluation = sheet.evaluate_many(cell_values, scenario=SCENARIO)
        columns, cells = sweep_kernel(*args)
        worst = worst_difference(evaluation, columns, cells, size)
        del evaluation, columns, cells
        tracemalloc.start()
        sheet.evaluate_many(cell_values, scenario=SCENARIO)
        peak_layercalc = tracemalloc.get_traced_memory()[1]
        tracemalloc.stop()
        tracemalloc.start()
        sweep_kernel(*args)
        peak_kernel = tracemalloc.get_traced_memory()[1]
        tracemalloc.stop()
        rows.append((size, repeats, t_layercalc, t_kernel, worst, peak_layercalc, peak_kernel))
    return rows


# ---------------------------------------------------------------- big tables
def big_table(folder: Path) -> Path:
    p = np.linspace(1000.0, 100.0, BIG_LAYERS + 1)
    rows = "\n".join(f"{a:.4f} {b:.4f} -20 0.1" for a, b in zip(p[:-1], p[1:]))
    path = folder / "hundred_thousand.layers"
    path.write_text(f"layers\n p_bottom [hPa] p_top [hPa] T [degC] div [1e-5 s^-1]\n{rows}\n"
                    "end\n", encoding="utf-8")
    return path


def tables(folder: Path, env):
    from layercalc.formats import jsondoc

    path = big_table(folder)
    cli = [sys.executable, "-m", "layercalc"]
    subprocess.run(cli + ["check", str(path)], check=True, capture_output=True, env=env)
    script = [sys.executable, str(ROOT / "benchmarks" / "kernels.py"), str(path)]
    t_script, t_run, t_check = [], [], []
    for _ in range(5):  # interleaved
        t_script += child_cpu(script, env, 1)
        t_run += child_cpu(cli + ["run", str(path)], env, 1)
        t_check += child_cpu(cli + ["check", str(path)], env, 1)
    sheet = layercalc.load(path)
    result = sheet.evaluate()
    t_writer, t_dumps = [], []
    for _ in range(5):  # one document alive at a time, as in `run --json`
        document = jsondoc.result_document(sheet, result)
        t_dumps += cpu_times(lambda: json.dumps(document), 1)[0]
        del document
        t_writer += cpu_times(lambda: jsondoc.dumps(jsondoc.result_document(sheet, result)),
                              1)[0]
    count = BIG_LAYERS
    t_load, t_loadtxt = [], []
    for _ in range(5):
        t_load += cpu_times(lambda: layercalc.load(path), 1)[0]
        t_loadtxt += cpu_times(lambda: np.loadtxt(path, skiprows=2, max_rows=count), 1)[0]
    return t_script, t_run, t_check, t_writer, t_dumps, t_load, t_loadtxt


# ---------------------------------------------------------------- start-up
PROBE = """import sys
compiled = []
if sys.argv[1] != "--help":  # counting compilations needs the API (and numpy) loaded first
    from layercalc import api
    original = api._compile
    api._compile = lambda *a, **k: compiled.append(1) or original(*a, **k)
from layercalc.cli.main import main
import io, contextlib
with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
    try:
        main(sys.argv[1:])
    except SystemExit:
        pass
units = sys.modules.get("layercalc.language.units")
print(sorted(m for m in ("numpy", "pandas", "lark", "sympy") if m in sys.modules),
      len(compiled), units.source() if units else None)
"""


def probe(env, *argv):
    done = subprocess.run([sys.executable, "-c", PROBE, *argv], check=True,
                          capture_output=True, text=True, env=env, cwd=ROOT)
    return done.stdout.strip().splitlines()[-1]


def startup(folder: Path, env):
    cache = folder / "cache"
    env = {**env, "LAYERCALC_CACHE_DIR": str(cache)}
    book = folder / "case.xlsx"
    subprocess.run([sys.executable, "-m", "layercalc", "export", str(CASE), "-o", str(book)],
                   check=True, capture_output=True, env=env)
    probes = {
        "help": probe(env, "--help"),
        "first check": probe(env, "check", str(CASE)),  # the cache is empty: sympy
        "second check": probe(env, "check", str(CASE)),
        "import": probe(env, "import", str(book), "-o", str(folder / "back.layers")),
        "sweep": probe(env, "sweep", str(CASE), "--vary", "warming=0:6:1", "--quiet"),
    }
    # byte-compile the package first, as pip does when it installs the wheel (this machine
    # sets PYTHONDONTWRITEBYTECODE, so a checkout would otherwise compile on every start)
    subprocess.run([sys.executable, "-m", "compileall", "-q", str(ROOT / "layercalc")],
                   check=True, env=env)
    uncached = {**env, "LAYERCALC_NO_DIMENSION_CACHE": "1"}
    cli = [sys.executable, "-m", "layercalc", "run", str(CASE)]
    floor = [sys.executable, "-c", "import numpy, lark, sympy.physics.units"]
    first = subprocess.run(cli + ["--json"], capture_output=True, env=env, check=True).stdout
    again = subprocess.run(cli + ["--json"], capture_output=True, env=env, check=True).stdout
    t_floor, t_first, t_cached = [], [], []
    for _ in range(9):  # interleaved
        t_floor += child_cpu(floor, env, 1)
        t_first += child_cpu(cli, uncached, 1)
        t_cached += child_cpu(cli, env, 1)
    return probes, t_floor, t_first, t_cached, first == again


ENSEMBLE_CASE = ROOT / "worked_cases" / "three_stations.layers"


def ensemble_kernel(latitudes, longitudes, pressure, direction, speed, members, seed):
    """The three-station ensemble by hand: rounding errors drawn as layercalc draws them,
    winds to components, the plane fit as a pseudo-inverse, layer means, omega from the
    top; returns the tendency's standard deviation and 5, 50, 95 % points [Pa/s]."""
    from layercalc.physics.stations import spherical_centroid, tangent_plane_coordinates

    rng = np.random.default_rng(seed)
    shape = direction.shape
    d = direction + 5.0 * (rng.random((members,) + shape) - 0.5)
    s = np.maximum(speed + (1852.0 / 3600.0) * (rng.random((members,) + shape) - 0.5), 0.0)
    u, v = -s * np.sin(np.deg2rad(d)), -s * np.cos(np.deg2rad(d))
    x, y, gamma = tangent_plane_coordinates(latitudes, longitudes,
                                            *spherical_centroid(latitudes, longitudes))
    u_plane = u * np.cos(gamma) + v * np.sin(gamma)
    v_plane = -u * np.sin(gamma) + v * np.cos(gamma)
    inverse = np.linalg.pinv(np.stack([np.ones_like(x), x, y], axis=-1))  # (3, n)
    divergence = u_plane @ inverse[1] + v_plane @ inverse[2]             # (members, levels)
    layer = 0.5 * (divergence[:, :-1] + divergence[:, 1:])
    tendency = -np.sum(layer * (pressure[:-1] - pressure[1:]), axis=-1)
    return (np.std(tendency, ddof=1), *np.percentile(tendency, [5.0, 50.0, 95.0]))


ENSEMBLE_REPEATS = 9
# Where benchmarks/grid.py's own section of RESULTS.md begins (kept when this script writes).
GRID_MARK = "<!-- grid benchmark: written by benchmarks/grid.py -->"


def ensemble_benchmark():
    """layercalc's 10,000-member error ensemble of the three-station case against the hand
    kernel (same draws), CPU times of ENSEMBLE_REPEATS interleaved pairs; and the whole
    `layercalc run` of that case (package byte-compiled, the text's sympy check reused as
    in normal use), wall and CPU times of ENSEMBLE_REPEATS runs."""
    from layercalc.evaluation.uncertainty import assess_sheet, network_of
    from layercalc.physics.winds import wind_direction_and_speed

    sheet = layercalc.load(ENSEMBLE_CASE)

    def layercalc_ensemble():
        sheet.checked.uncertainty.clear()  # no cached assessment: the whole work each time
        return assess_sheet(sheet)

    assessment = layercalc_ensemble()
    network = network_of(sheet.checked)
    direction, speed = wind_direction_and_speed(network.u, network.v)
    members, seed = assessment.model.members, assessment.model.seed

    def hand():
        return ensemble_kernel(network.latitudes, network.longitudes, network.pressure,
                               direction, speed, members, seed)

    kernel_out = hand()
    t_layercalc, t_kernel = [], []
    for _ in range(ENSEMBLE_REPEATS):
        times, assessment = cpu_times(layercalc_ensemble, 1)
        t_layercalc += times
        times, kernel_out = cpu_times(hand, 1)
        t_kernel += times
    got = assessment.cells["surface_pressure_tendency"]
    worst = max(abs(got[k] - w) / abs(w) for k, w in zip(("p05", "p50", "p95"),
                                                         kernel_out[1:]))
    subprocess.run([sys.executable, "-m", "compileall", "-q", str(ROOT / "layercalc")],
                   check=True, capture_output=True)
    command = [sys.executable, "-m", "layercalc", "run", str(ENSEMBLE_CASE)]
    subprocess.run(command, check=True, capture_output=True, cwd=ROOT, env=ENV)  # cache
    walls, cpus = [], []
    for _ in range(ENSEMBLE_REPEATS):
        start = time.perf_counter()
        cpus += child_cpu(command, ENV, 1)
        walls.append(time.perf_counter() - start)
    return (t_layercalc, t_kernel, worst, got["sigma"], kernel_out[0], members, walls, cpus)


def sweep_section(sheet, sweep_rows, note: str = "") -> list[str]:
    """The Sweeps section of RESULTS.md (`note`: a sentence on how it was measured)."""
    lines = []
    lines.append("## Sweeps\n")
    lines.append(
        f"Case `worked_cases/midlevel_warming.layers` ({sheet.checked.layer_count} layers), "
        f"scenario `{SCENARIO}` (warms 500-300 hPa by the cell `warming`, scales the "
        "divergence above 500 hPa by `div_scale`), both cells varied over the scenarios, "
        "evaluated by `Sheet.evaluate_many`. The baseline is `benchmarks/kernels.py` "
        "`sweep_kernel`: a tight hand-written numpy kernel with the layers on the outer axis "
        "and the scenarios contiguous, writing in place into preallocated arrays, one pass "
        "per quantity and layer (running sums as one add per layer), computing every "
        "quantity the sheet's defaults compute for each scenario (T, div, Tv, thickness, "
        "z_top, z_bottom, omega_bottom, omega_top, w_bottom, w_top, and the cells "
        "column_thickness, omega_surface, net and gross mass divergence, column mean "
        "divergence, Dines ratio, strongest ascent); the largest relative difference of "
        "all of them (against the largest value of each quantity where it crosses zero) is "
        "in the last column. layercalc also makes sure that every formula's values are "
        "finite and within 1e100, which the kernel does not: by a scan (one min and one max "
        "over the array) or, for an array of 65,536 values or more, by bounds worked out "
        "from its operands' bounds where they prove it (layercalc/evaluation/bounds.py). "
        "Here every array of variants x layers is proven without a scan; the cells of "
        "variants are scanned at 10,000 variants (below that size), and at 100,000 and "
        "1,000,000 two of them are (column mean divergence and Dines ratio: divisions by a "
        "sum).\n")
    if note:
        lines.append(note)
    lines.append("| scenarios | repetitions | layercalc [s] | kernel [s] | ratio | target "
                 "| | max rel. diff |")
    lines.append("|---|---|---|---|---|---|---|---|")
    for size, repeats, t_l, t_k, worst, _, _ in sweep_rows:
        lines.append(f"| {size:,} | {repeats} | {summary(t_l)} | {summary(t_k)} | "
                     f"{ratio_cells(t_l, t_k, 1.3)} | {worst:.1e} |")
    lines.append("")
    lines.append("Peak memory (tracemalloc, one evaluation each):\n")
    lines.append("| scenarios | layercalc [MiB] | kernel [MiB] | ratio | target | |")
    lines.append("|---|---|---|---|---|---|")
    for size, _, _, _, _, peak_l, peak_k in sweep_rows:
        lines.append(f"| {size:,} | {peak_l / 2**20:.1f} | {peak_k / 2**20:.1f} | "
                     f"{peak_l / peak_k:.2f} | <= 1.2 | {verdict(peak_l / peak_k, 1.2)} |")
    lines.append("")

    return lines


def sweeps_only() -> int:
    """`run.py --sweeps`: measure the sweeps again and replace only their section of
    RESULTS.md (the other sections keep the figures of the run that wrote them)."""
    load_average = os.getloadavg()[0]
    sheet = layercalc.load(CASE)
    rows = sweeps(sheet)
    note = (f"Measured again alone by `python benchmarks/run.py --sweeps` on "
            f"{time.strftime('%Y-%m-%d %H:%M')} UTC (load average {load_average:.1f} at the "
            f"start, {os.getloadavg()[0]:.1f} at the end); the other sections are from the "
            "run named at the top.\n")
    path = ROOT / "benchmarks" / "RESULTS.md"
    old = path.read_text(encoding="utf-8")
    start, end = old.index("## Sweeps\n"), old.index("## A table of")
    section = "\n".join(sweep_section(sheet, rows, note)) + "\n"
    path.write_text(old[:start] + section + old[end:], encoding="utf-8")
    print(section)
    return 0


def main() -> int:
    load_average = os.getloadavg()[0]
    sheet = layercalc.load(CASE)
    sweep_rows = sweeps(sheet)
    with tempfile.TemporaryDirectory(prefix="layercalc-bench-") as name:
        folder = Path(name)
        env = {**ENV, "LAYERCALC_CACHE_DIR": str(folder / "cache")}
        table_times = tables(folder, env)
        probes, t_floor, t_first, t_cached, same_output = startup(folder, env)
    ensemble = ensemble_benchmark()
    load_after = os.getloadavg()[0]

    lines = ["# Benchmark results\n"]
    lines.append(
        f"Measured by `python benchmarks/run.py` on {time.strftime('%Y-%m-%d')}, "
        f"{platform.machine()}, {os.cpu_count()} cores, Python {platform.python_version()}, "
        f"numpy {np.__version__}, layercalc {layercalc.__version__}. **The machine was "
        f"shared** with other work while this ran (load average {load_average:.1f} at the "
        f"start, {load_after:.1f} at the end, on {os.cpu_count()} cores): times are CPU "
        "times (of this process, or user + system time of the child process), which such "
        "sharing disturbs far less than wall time; each figure is the median of the "
        "repetitions with their range in brackets, and a ratio is the ratio of the medians "
        "with the range of the ratios of the paired (interleaved) repetitions.\n")

    lines += sweep_section(sheet, sweep_rows)

    t_script, t_run, t_check, t_writer, t_dumps, t_load, t_loadtxt = table_times
    lines.append(f"## A table of {BIG_LAYERS:,} layers\n")
    lines.append(
        "A `layers` table of 100,000 rows (p_bottom, p_top, T, div). `run` and `check` are "
        "whole commands in a child process (the sympy unit check of the text reused from "
        "an earlier check, as on any second use); the baseline is `python "
        "benchmarks/kernels.py FILE` (`table_script`: numpy.loadtxt of the rows, the same "
        "diagnostics, the same layer table formatted as text), also a whole process. The "
        "JSON writer (the result document and its text, as `run --json` makes them) is "
        "timed against `json.dumps` of the same document (compact, the C encoder); "
        "`layercalc.load` (parse, build, check) against `numpy.loadtxt` of the rows.\n")
    lines.append("| what | layercalc [s] | baseline [s] | ratio | target | |")
    lines.append("|---|---|---|---|---|---|")
    lines.append(f"| `layercalc run` vs the numpy script | {summary(t_run)} | "
                 f"{summary(t_script)} | {ratio_cells(t_run, t_script, 2)} |")
    lines.append(f"| `layercalc check` vs the numpy script | {summary(t_check)} | "
                 f"{summary(t_script)} | {ratio_cells(t_check, t_script, 2.5)} |")
    lines.append(f"| JSON writer vs `json.dumps` | {summary(t_writer)} | {summary(t_dumps)} | "
                 f"{ratio_cells(t_writer, t_dumps, 1.5)} |")
    middle, low, high = ratio(t_load, t_loadtxt)
    lines.append(f"| `layercalc.load` vs `numpy.loadtxt` | {summary(t_load)} | "
                 f"{summary(t_loadtxt)} | {middle:.2f} ({low:.2f}-{high:.2f}) | none | |")
    lines.append("")

    lines.append("## Start-up\n")
    lines.append("What each command imported (of numpy, pandas, lark, sympy), how many times "
                 "it compiled the sheet, and where its unit check came from (a fresh cache "
                 "folder; `import` reads a workbook exported from the worked case):\n")
    lines.append("| command | imported | compilations | unit check | target | |")
    lines.append("|---|---|---|---|---|---|")
    wanted = {
        "help": ("no numpy", lambda i, c, u: "numpy" not in i),
        "first check": ("one compilation, sympy", lambda i, c, u: c == "1" and u == "sympy"),
        "second check": ("one compilation, reused", lambda i, c, u: c == "1" and u == "cache"),
        "import": ("one compilation", lambda i, c, u: c == "1"),
        "sweep": ("no pandas", lambda i, c, u: "pandas" not in i),
    }
    commands = {"help": "`layercalc --help`", "first check": "`layercalc check CASE` (first)",
                "second check": "`layercalc check CASE` (again)",
                "import": "`layercalc import case.xlsx -o back.layers`",
                "sweep": "`layercalc sweep CASE --vary warming=0:6:1 --quiet`"}
    for key, found in probes.items():
        imported, compiled, source = found.rsplit(" ", 2)
        target, test = wanted[key]
        lines.append(f"| {commands[key]} | {imported} | {compiled} | {source} | {target} | "
                     f"{'met' if test(imported, compiled, source) else 'NOT met'} |")
    lines.append("")
    lines.append("`layercalc run worked_cases/midlevel_warming.layers` against the floor "
                 "`python -c \"import numpy, lark, sympy.physics.units\"` (what a first run "
                 "cannot avoid importing), package byte-compiled as installed, 9 interleaved "
                 "repetitions:\n")
    lines.append("| command | CPU time [s] | ratio to the floor | target | |")
    lines.append("|---|---|---|---|---|")
    lines.append(f"| the floor | {summary(t_floor)} | 1.00 | | |")
    lines.append(f"| first run: units checked by sympy (`LAYERCALC_NO_DIMENSION_CACHE=1`, or "
                 f"a new text) | {summary(t_first)} | {ratio_cells(t_first, t_floor, 1.35)} |")
    lines.append(f"| run again: the earlier sympy check reused | {summary(t_cached)} | "
                 f"{ratio_cells(t_cached, t_floor, 0.5)} |")
    lines.append("")
    lines.append(f"The reused run printed {'the same' if same_output else 'DIFFERENT'} JSON "
                 "as the sympy-checked run (byte for byte).\n")

    t_ens, t_hand, worst_ens, sigma_exact, sigma_mc, members, walls, cpus = ensemble
    lines.append("## Error ensemble\n")
    lines.append(f"Error ensemble of `worked_cases/three_stations.layers` ({members:,} members, "
                 "9 levels, rounding of the reported winds; the layercalc time is the "
                 "assessment of the loaded case: the base evaluation, the exact propagation, "
                 "the ensemble through the evaluator (every column and cell), the percentiles "
                 "of every cell and the level of non-divergence; the hand kernel computes only "
                 f"the tendency, with the same draws). CPU times of {ENSEMBLE_REPEATS} "
                 "interleaved pairs, median (range):\n")
    lines.append("| layercalc ensemble [s] | hand numpy kernel [s] | ratio | target | "
                 "| max rel. diff of the tendency's 5/50/95 % points | tendency sigma exact "
                 "/ ensemble |")
    lines.append("|---|---|---|---|---|---|---|")
    lines.append(f"| {summary(t_ens)} | {summary(t_hand)} | {ratio_cells(t_ens, t_hand, 2)} | "
                 f"{worst_ens:.1e} | {sigma_exact:.4g} / {sigma_mc:.4g} Pa/s |")
    lines.append("")
    middle = statistics.median(walls)
    lines.append(f"`layercalc run worked_cases/three_stations.layers` end to end (the text "
                 f"report with its 10,000-member ensemble; package byte-compiled, the text's "
                 f"sympy check reused as in normal use), {ENSEMBLE_REPEATS} runs: wall time "
                 f"{summary(walls)} s (target <= 1.5 s: {verdict(middle, 1.5)}), CPU time "
                 f"{summary(cpus)} s. Wall time is what the target names; on this shared "
                 "machine it depends on the other work running.\n")
    from export_scaling import measure, table

    lines.append("## Workbook export\n")
    lines.append("Workbook export (`layercalc export`, `benchmarks/export_scaling.py`): a "
                 "made-up column of N layers with two scenarios; time of `write_workbook` "
                 "(evaluation, layout, file), one run each, wall and CPU time (targets: 1,000 "
                 "layers under 4 s, 5,000 under 15 s):\n")
    lines.append(table(measure()))
    lines.append("")
    report = "\n".join(lines) + "\n"
    path = ROOT / "benchmarks" / "RESULTS.md"
    old = path.read_text(encoding="utf-8") if path.exists() else ""
    if GRID_MARK in old:  # benchmarks/grid.py's section stays as that script wrote it
        report += "\n" + old[old.index(GRID_MARK):]
    path.write_text(report, encoding="utf-8")
    print(report)
    return 0


if __name__ == "__main__":
    raise SystemExit(sweeps_only() if sys.argv[1:] == ["--sweeps"] else main())
