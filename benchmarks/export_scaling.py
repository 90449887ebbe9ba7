"""Workbook export time against the number of layers (issue: export was quadratic).

    python benchmarks/export_scaling.py [LAYERS ...]     # default 100 1000 5000

Builds a made-up column of N layers (1000 hPa to 100 hPa, a smooth temperature and a
divergence profile, the midlevel_warming scenarios), exports it with `write_workbook`
and prints the time per size and the ratio time/layers relative to the smallest size
(a linear export keeps that ratio near 1). Nothing here is asserted in tests.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

import layercalc  # noqa: E402

DEFAULT_SIZES = (100, 1000, 5000)


def column_text(layers: int) -> str:
    """A made-up column of `layers` equal-log-pressure layers with the scenarios of
    worked_cases/midlevel_warming.layers."""
    edges = np.geomspace(1000.0, 100.0, layers + 1)
    lines = ['title "made-up benchmark column"', "cell surface_height = 40 m", "layers",
             "  p_bottom [hPa]  p_top [hPa]  T [degC]  Td [degC]  div [1e-5 s^-1]"]
    for bottom, top in zip(edges[:-1], edges[1:]):
        mid = np.sqrt(bottom * top)
        t = max(10.0 - 60.0 * np.log(1000.0 / mid), -60.0)  # no colder than -60 degC
        div = np.sin(np.pi * np.log(1000.0 / mid) / np.log(10.0)) * -1.0
        lines.append(f"  {float(bottom)!r} {float(top)!r} {t:.3f} {t - 5.0:.3f} {div:.3f}")
    lines += ["end", "cell warming = 3 K", "cell div_scale = 1.1",
              'scenario warmed "warmer aloft"', "  add warming to T between 500 hPa and 300 hPa",
              "end",
              'scenario warmed_divergent from warmed "and more divergence"',
              "  scale div by div_scale above 500 hPa", "end"]
    return "\n".join(lines) + "\n"


def time_export(layers: int) -> tuple[float, float]:
    """Wall and CPU seconds of write_workbook (evaluation of base and scenarios, layout,
    file); the CPU time of this process does not count other processes' load."""
    from layercalc.formats.xlsx.export import write_workbook

    sheet = layercalc.loads(column_text(layers), name=f"bench_{layers}.layers")
    with tempfile.TemporaryDirectory() as folder:
        start, cpu = time.perf_counter(), time.process_time()
        write_workbook(sheet, Path(folder) / "bench.xlsx")
        return time.perf_counter() - start, time.process_time() - cpu


def measure(sizes=DEFAULT_SIZES) -> list[tuple[int, float, float]]:
    time_export(10)  # imports (openpyxl, the unit table) out of the first timing
    return [(n, *time_export(n)) for n in sizes]


def table(rows: list[tuple[int, float, float]]) -> str:
    first_n, _, first_cpu = rows[0]
    lines = ["| layers | export, wall [s] | export, CPU [s] | CPU time per layer relative to "
             "the first row (linear: ~1) |", "|---|---|---|---|"]
    for n, wall, cpu in rows:
        lines.append(f"| {n:,} | {wall:.2f} | {cpu:.2f} | "
                     f"{(cpu / n) / (first_cpu / first_n):.2f} |")
    return "\n".join(lines)


if __name__ == "__main__":
    sizes = tuple(int(a) for a in sys.argv[1:]) or DEFAULT_SIZES
    print(table(measure(sizes)))
