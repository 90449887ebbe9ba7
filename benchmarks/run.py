"""layercalc benchmarks: sweep speed against a hand-written numpy kernel and against a loop
over the public API, peak memory of a large sweep, and cold-start time of the CLI.

    python benchmarks/run.py            # writes benchmarks/RESULTS.md

Figures are ratios measured in one run on this machine; nothing here is asserted in tests.
"""

from __future__ import annotations

import os
import platform
import statistics
import subprocess
import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import layercalc  # noqa: E402
from layercalc.constants import EPSILON, G0, RD  # noqa: E402

CASE = ROOT / "worked_cases" / "midlevel_warming.layers"
SCENARIO = "warmed_divergent"  # warms 500-300 hPa by `warming`, scales div above 500 hPa
SIZES = {10_000: (100, 100), 100_000: (400, 250)}
REPEATS = 5
LOOP_SAMPLE = 300  # scenarios evaluated one at a time; the loop's total is extrapolated


def best_time(function, repeats=REPEATS):
    times = []
    result = None
    for _ in range(repeats):
        start = time.perf_counter()
        result = function()
        times.append(time.perf_counter() - start)
    return min(times), result


def grid(n_warming, n_scale):
    warming, scale = np.meshgrid(np.linspace(0.0, 6.0, n_warming),
                                 np.linspace(0.5, 2.0, n_scale), indexing="ij")
    return warming.ravel(), scale.ravel()


def kernel(sheet, warming, scale):
    """The same quantities as the sheet's defaults, written directly in numpy (surface
    first, scenarios on the leading axis): what a careful programmer would write by hand."""
    cols = sheet.checked.input_columns
    pb, pt = cols["p_bottom"].values, cols["p_top"].values
    t, td, div = cols["T"].values, cols["Td"].values, cols["div"].values
    warm_mask = (pb <= 50000.0 * (1 + 1e-6)) & (pt >= 30000.0 * (1 - 1e-6))
    div_mask = pb <= 50000.0 * (1 + 1e-6)
    T = t[None, :] + warming[:, None] * warm_mask
    D = div[None, :] * np.where(div_mask, scale[:, None], 1.0)
    dp = pb - pt
    p_mid = np.sqrt(pb * pt)
    e = 611.2 * np.exp(17.67 * (td - 273.15) / (td - 29.65))
    r = EPSILON * e / (p_mid - e)
    tv = T * (r + EPSILON) / (EPSILON * (1 + r))
    thickness = RD * tv / G0 * np.log(pb / pt)
    z_top = 40.0 + np.cumsum(thickness, axis=-1)
    z_bottom = z_top - thickness
    flux = D * dp
    omega_bottom = -np.cumsum(flux[:, ::-1], axis=-1)[:, ::-1]
    omega_top = omega_bottom + flux
    w_bottom = -omega_bottom * RD * tv / (pb * G0)
    w_top = -omega_top * RD * tv / (pt * G0)
    omega_surface = omega_bottom[:, 0]
    out = {
        "Tv": tv, "thickness": thickness, "z_top": z_top, "z_bottom": z_bottom,
        "omega_bottom": omega_bottom, "omega_top": omega_top, "w_bottom": w_bottom,
        "w_top": w_top, "surface_pressure_tendency": omega_surface,
        "column_mean_divergence": flux.sum(-1) / dp.sum(),
        "dines_ratio": np.abs(flux.sum(-1)) / (np.abs(D) * dp).sum(-1),
        "max_ascent": np.minimum(omega_bottom[:, 0], omega_top.min(-1)),
        "column_thickness": thickness.sum(-1),
    }
    return out


def compare_with_kernel(evaluation, kernel_out, size):
    worst = 0.0
    for name, want in kernel_out.items():
        got = evaluation.columns.get(name, evaluation.cells.get(name))
        got = np.broadcast_to(got, (size,) + (want.shape[1:] if want.ndim > 1 else (1,)))
        got = got if want.ndim > 1 else got[:, 0]
        scale = np.maximum(np.abs(want), 1e-30)
        worst = max(worst, float(np.max(np.abs(got - want) / scale)))
    return worst


def result_bytes(evaluation, size):
    total = 0
    for array in (*evaluation.columns.values(), *evaluation.cells.values()):
        total += size * array.shape[-1] * 8 if array.shape[0] in (1, size) else array.nbytes
    return total


def cold_start(runs=9):
    """Median wall times of `layercalc run` with the unit check done by sympy (cache off),
    with the earlier check reused (cache on), and of the import baseline; and whether the
    two runs print the same JSON."""
    import tempfile

    cache = tempfile.mkdtemp(prefix="layercalc-bench-cache-")
    env = dict(os.environ, LAYERCALC_CACHE_DIR=cache)
    uncached_env = dict(env, LAYERCALC_NO_DIMENSION_CACHE="1")
    cli = [sys.executable, "-m", "layercalc", "run", str(CASE)]
    base = [sys.executable, "-c", "import numpy, lark, sympy"]
    # byte-compile the package first, as pip does when it installs the wheel (this machine
    # sets PYTHONDONTWRITEBYTECODE, so a checkout would otherwise compile on every start)
    subprocess.run([sys.executable, "-m", "compileall", "-q", str(ROOT / "layercalc")],
                   check=True, env=env)
    first = subprocess.run(cli + ["--json"], capture_output=True, cwd=ROOT, env=env,
                           check=True).stdout  # checked with sympy; remembered
    again = subprocess.run(cli + ["--json"], capture_output=True, cwd=ROOT, env=env,
                           check=True).stdout  # reused
    same = first == again

    def median(cmd, environment):
        times = []
        for _ in range(runs):
            start = time.perf_counter()
            subprocess.run(cmd, capture_output=True, cwd=ROOT, env=environment, check=True)
            times.append(time.perf_counter() - start)
        return statistics.median(times)

    return median(cli, uncached_env), median(cli, env), median(base, env), same


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


def ensemble_benchmark():
    """layercalc's 10,000-member error ensemble of the three-station case against the hand
    kernel (same draws), and the whole `layercalc run` of that case."""
    from layercalc.evaluation.uncertainty import assess_sheet, network_of
    from layercalc.physics.winds import wind_direction_and_speed

    sheet = layercalc.load(ENSEMBLE_CASE)

    def layercalc_ensemble():
        sheet.checked.uncertainty.clear()  # no cached assessment: the whole work each time
        return assess_sheet(sheet)

    t_layercalc, assessment = best_time(layercalc_ensemble)
    network = network_of(sheet.checked)
    direction, speed = wind_direction_and_speed(network.u, network.v)
    members, seed = assessment.model.members, assessment.model.seed
    t_kernel, kernel_out = best_time(lambda: ensemble_kernel(
        network.latitudes, network.longitudes, network.pressure, direction, speed, members,
        seed))
    got = assessment.cells["surface_pressure_tendency"]
    mc_sigma = kernel_out[0]
    worst = max(abs(got[k] - w) / abs(w) for k, w in zip(("p05", "p50", "p95"),
                                                         kernel_out[1:]))
    runs = []
    for _ in range(5):
        start = time.perf_counter()
        subprocess.run([sys.executable, "-m", "layercalc", "run", str(ENSEMBLE_CASE)],
                       check=True, capture_output=True, cwd=ROOT,
                       env={**os.environ, "PYTHONPATH": str(ROOT)})
        runs.append(time.perf_counter() - start)
    return (t_layercalc, t_kernel, worst, got["sigma"], mc_sigma, members,
            statistics.median(runs))


def main() -> int:
    sheet = layercalc.load(CASE)
    lines = []
    rows = []
    for size, (nw, ns) in SIZES.items():
        warming, scale = grid(nw, ns)
        cells = {"warming": warming, "div_scale": scale}
        t_layercalc, evaluation = best_time(
            lambda: sheet.evaluate_many(cells, scenario=SCENARIO))
        t_kernel, kernel_out = best_time(lambda: kernel(sheet, warming, scale))
        worst = compare_with_kernel(evaluation, kernel_out, size)
        sample = min(LOOP_SAMPLE, size)
        start = time.perf_counter()
        for i in range(sample):
            sheet.evaluate_many({"warming": warming[i:i + 1], "div_scale": scale[i:i + 1]},
                                scenario=SCENARIO)
        per_scenario = (time.perf_counter() - start) / sample
        t_loop = per_scenario * size
        rows.append((size, t_layercalc, t_kernel, t_loop, worst))
    warming, scale = grid(*SIZES[100_000])
    tracemalloc.start()
    evaluation = sheet.evaluate_many({"warming": warming, "div_scale": scale},
                                     scenario=SCENARIO)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    size_results = result_bytes(evaluation, warming.size)
    t_uncached, t_cached, t_base, same_output = cold_start()

    lines.append("# Benchmark results\n")
    lines.append(f"Measured by `python benchmarks/run.py` on {time.strftime('%Y-%m-%d')}, "
                 f"{platform.machine()}, {os.cpu_count()} cores, Python "
                 f"{platform.python_version()}, numpy {np.__version__}, layercalc "
                 f"{layercalc.__version__}. Case: `worked_cases/midlevel_warming.layers` "
                 f"({sheet.checked.layer_count} layers), scenario `{SCENARIO}` (warms 500-300 hPa "
                 "by the cell `warming`, scales the divergence above 500 hPa by `div_scale`); "
                 "sweeps over warming x div_scale.\n")
    lines.append("| scenarios | layercalc sweep [s] | numpy kernel [s] | ratio (target <= 1.5) "
                 "| loop over public API [s] | speed-up (target >= 50) | max rel. diff |")
    lines.append("|---|---|---|---|---|---|---|")
    for size, t_l, t_k, t_loop, worst in rows:
        lines.append(f"| {size:,} | {t_l:.4f} | {t_k:.4f} | {t_l / t_k:.2f} | {t_loop:.1f} "
                     f"(extrapolated from {min(LOOP_SAMPLE, size)}) | {t_loop / t_l:.0f} | "
                     f"{worst:.1e} |")
    lines.append("")
    lines.append(f"Peak memory of the 100,000-scenario sweep (tracemalloc): "
                 f"{peak / 2**20:.1f} MiB; result arrays (every column and cell counted dense, "
                 f"scenarios x layers of float64): {size_results / 2**20:.1f} MiB; "
                 f"ratio {peak / size_results:.2f} (target < 8).\n")
    lines.append("Cold start (package byte-compiled, as installed), median of 9 runs each:\n")
    lines.append("| command | time [s] | ratio to the import baseline (target <= 1.5) |")
    lines.append("|---|---|---|")
    lines.append(f"| `python -c \"import numpy, lark, sympy\"` | {t_base:.3f} | 1.00 |")
    lines.append(f"| `layercalc run worked_cases/midlevel_warming.layers`, unit check by sympy "
                 f"(`LAYERCALC_NO_DIMENSION_CACHE=1`, or the first run of a text) | "
                 f"{t_uncached:.3f} | {t_uncached / t_base:.2f} |")
    lines.append(f"| the same, reusing the earlier sympy check of the same text | "
                 f"{t_cached:.3f} | {t_cached / t_base:.2f} |")
    lines.append("")
    lines.append(f"The reused run printed {'the same' if same_output else 'DIFFERENT'} JSON "
                 "as the sympy-checked run (byte for byte).\n")
    t_ens, t_hand, worst_ens, sigma_exact, sigma_mc, members, t_run = ensemble_benchmark()
    lines.append(f"Error ensemble of `worked_cases/three_stations.layers` ({members:,} members, "
                 "rounding of the reported winds; the layercalc time is the assessment of the "
                 "loaded case: the base evaluation, the exact propagation, the ensemble through "
                 "the evaluator (every column and cell), the percentiles of every cell and the "
                 "level of non-divergence; the hand kernel computes only the tendency, with the "
                 "same draws):\n")
    lines.append("| layercalc ensemble [s] | hand numpy kernel [s] | ratio (target <= 2) "
                 "| `layercalc run` end to end [s] (target <= 1.5) | max rel. diff of the "
                 "tendency's 5/50/95 % points | tendency sigma exact / ensemble |")
    lines.append("|---|---|---|---|---|---|")
    lines.append(f"| {t_ens:.3f} | {t_hand:.3f} | {t_ens / t_hand:.1f} | {t_run:.2f} | "
                 f"{worst_ens:.1e} | {sigma_exact:.4g} / {sigma_mc:.4g} Pa/s |")
    lines.append("")
    from export_scaling import measure, table

    lines.append("Workbook export (`layercalc export`, `benchmarks/export_scaling.py`): a "
                 "made-up column of N layers with two scenarios; time of `write_workbook` "
                 "(evaluation, layout, file), one run each (targets: 1,000 layers under 4 s, "
                 "5,000 under 15 s):\n")
    lines.append(table(measure()))
    lines.append("")
    lines.append("Times are the best of five runs (sweeps) or medians (cold start); the loop "
                 "times a sample of scenarios one at a time through `Sheet.evaluate_many` "
                 "and scales to the full count. Other processes on the machine add noise.")
    report = "\n".join(lines) + "\n"
    (ROOT / "benchmarks" / "RESULTS.md").write_text(report, encoding="utf-8")
    print(report)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
