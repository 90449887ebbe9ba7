"""Sweeps: vary one or two input cells over ranges (a full grid) and tabulate chosen results.

All grid points are evaluated in one vectorised pass (Sheet.evaluate_many): the grid becomes
the leading scenario axis of every array.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from layercalc.names import close_names, did_you_mean
from layercalc.errors import UsageError
from layercalc.limits import LARGEST_VALUE

MAX_POINTS = 2_000_000  # grid points in one sweep
DEFAULT_OUTPUTS = ("surface_pressure_tendency", "omega_surface", "max_ascent",
                   "column_thickness")
NONDIVERGENCE = "level_of_nondivergence"  # not a cell: the lowest level, per grid point
_VARY = re.compile(r"^\s*([A-Za-z_][A-Za-z0-9_]*)\s*=\s*([^:]+):([^:]+):([^:]+)\s*$")


@dataclass(frozen=True)
class Range:
    """One varied cell: values in the cell's own unit (as written in the sheet) and in SI."""

    name: str
    values: np.ndarray
    si_values: np.ndarray
    unit: str


def parse_range(text: str, sheet) -> Range:
    """`NAME=START:STOP:STEP` (STOP included when the steps land on it), in the cell's unit."""
    match = _VARY.match(text)
    where = f"--vary {text!r}"
    if not match:
        raise UsageError(f"{where}: expected NAME=START:STOP:STEP, e.g. warming=0:5:0.5")
    name, *numbers = match.groups()
    try:
        start, stop, step = (float(n) for n in numbers)
    except ValueError:
        raise UsageError(f"{where}: START, STOP and STEP must be numbers") from None
    cells = sheet.checked.input_cells
    if name not in cells:
        close = close_names(name, cells, 3)
        raise UsageError(f"{where}: '{name}' is not an input cell of this sheet",
                         hint=did_you_mean(close) or "input cells: " + ", ".join(cells))
    if not np.isfinite([start, stop, step]).all():
        raise UsageError(f"{where}: START, STOP and STEP must be finite numbers")
    if step == 0 or (stop - start) / step < 0:
        raise UsageError(f"{where}: STEP must be non-zero and lead from START to STOP")
    steps = (stop - start) / step  # inf when the steps are too many for a float
    if not steps < MAX_POINTS:
        shown = "more than 1e308" if not np.isfinite(steps) else f"{steps + 1:.6g}"
        raise UsageError(f"{where}: the range has {shown} values; a sweep takes at most "
                         f"{MAX_POINTS:,}",
                         hint="take a larger STEP or a shorter range")
    count = int(np.floor(steps + 1e-9)) + 1
    if count > MAX_POINTS:
        raise UsageError(f"{where}: {count} values is more than {MAX_POINTS}")
    values = start + step * np.arange(count)
    unit = cells[name].unit  # a degC cell varies as an absolute temperature
    si_values = np.asarray(unit.to_si(values), dtype=float)
    if not np.all(np.abs(si_values) <= LARGEST_VALUE):
        raise UsageError(f"{where}: the values must lie within {LARGEST_VALUE:g} in SI units")
    return Range(name, values, si_values, unit.text)


def grid(ranges: list[Range]) -> dict[str, np.ndarray]:
    """The full grid of one or two ranges, flattened (first range varies slowest)."""
    if not 1 <= len(ranges) <= 2:
        raise UsageError("a sweep varies one or two cells")
    if len({r.name for r in ranges}) != len(ranges):
        raise UsageError(f"the cell '{ranges[0].name}' is varied twice",
                              hint="vary two different cells, or one")
    mesh = np.meshgrid(*[r.si_values for r in ranges], indexing="ij")
    total = mesh[0].size
    if total > MAX_POINTS:
        raise UsageError(f"the grid has {total} points; the limit is {MAX_POINTS}")
    return {r.name: m.ravel() for r, m in zip(ranges, mesh)}


@dataclass(frozen=True, eq=False)
class SweepTable:
    """One row per grid point: the varied cells and the chosen result cells, each a numpy
    array in its display unit (`units`). Reads like a small DataFrame (`columns`,
    `table[name]`, `len`, `attrs['units']`); pandas is imported only by `to_frame`."""

    data: dict
    units: dict

    @property
    def columns(self) -> list[str]:
        return list(self.data)

    @property
    def attrs(self) -> dict:
        return {"units": dict(self.units)}

    def __getitem__(self, name: str) -> np.ndarray:
        return self.data[name]

    def __len__(self) -> int:
        return len(next(iter(self.data.values())))

    def to_frame(self):
        import pandas as pd

        frame = pd.DataFrame(self.data)
        frame.attrs["units"] = dict(self.units)
        return frame

    def csv_rows(self) -> str:
        """The values as CSV lines (no header), numbers as pandas' to_csv writes them:
        the shortest text that reads back to the same float, empty for NaN."""
        texts = [["" if v != v else repr(v) for v in values.tolist()]
                 for values in self.data.values()]
        return "".join(",".join(row) + "\n" for row in zip(*texts))


def sweep_table(sheet, ranges: list[Range], scenario: str | None = None,
                outputs: list[str] | None = None) -> SweepTable:
    """The sweep's table (SweepTable) without pandas."""
    points = grid(ranges)
    evaluation = sheet.evaluate_many(points, scenario=scenario)
    checked = evaluation.sheet
    outputs = list(outputs) if outputs else [o for o in DEFAULT_OUTPUTS
                                             if o in evaluation.cells]
    n = next(iter(points.values())).size
    data, units = {}, {}
    for r in ranges:
        unit = checked.input_cells[r.name].unit
        data[r.name] = np.asarray(unit.from_si(points[r.name]), dtype=float)
        units[r.name] = r.unit
    showable = [*evaluation.cells, *([NONDIVERGENCE] if "div_adjusted" in
                                        evaluation.columns else [])]
    for name in outputs:
        if name == NONDIVERGENCE and name in showable:
            data[name] = _lowest_nondivergence(evaluation, n) / 100.0
            units[name] = "hPa"
            continue
        if name not in evaluation.cells:
            close = close_names(name, showable, 3)
            listed = "cells that can be shown: " + ", ".join(showable)
            raise UsageError(f"--show {name}: '{name}' is not a cell of this sheet",
                             hint=(did_you_mean(close) + "; " if close else "") + listed)
        unit = checked.unit_of(name, "cell")
        values = np.broadcast_to(evaluation.cells[name], (n, 1))[:, 0]
        data[name] = np.asarray(unit.from_si(values), dtype=float)
        if name in ("max_ascent", "max_ascent_pressure") and "max_ascent" in evaluation.cells:
            # no ascent (omega nowhere negative): none, as the run report and JSON say
            # (evaluation.summary.strongest_ascent), empty in the CSV
            omega = np.broadcast_to(evaluation.cells["max_ascent"], (n, 1))[:, 0]
            data[name] = np.where(omega < 0, data[name], np.nan)
        units[name] = unit.text
    return SweepTable(data, units)


def _lowest_nondivergence(evaluation, count: int) -> np.ndarray:
    """Per grid point, the lowest level of non-divergence [Pa] (NaN when the profile has
    none), as the run report's first level (physics.kinematic.nondivergence_levels)."""
    from layercalc.physics.kinematic import nondivergence_levels

    p_mid = np.broadcast_to(evaluation.columns["p_mid"], (count, evaluation.columns[
        "p_mid"].shape[-1]))
    div = np.broadcast_to(evaluation.columns["div_adjusted"], p_mid.shape)
    out = np.full(count, np.nan)
    with np.errstate(all="ignore"):
        for k in range(count):
            if np.any(div[k]):
                levels = nondivergence_levels(p_mid[k], div[k])
                if levels:
                    out[k] = levels[0]
    return out


def run_sweep(sheet, ranges: list[Range], scenario: str | None = None,
              outputs: list[str] | None = None):
    """A DataFrame: one row per grid point, the varied cells and the chosen result cells,
    each in its display unit; `attrs['units']` names them (sweep_table without pandas)."""
    return sweep_table(sheet, ranges, scenario, outputs).to_frame()


# Words for the result cells a sweep shows most; any other name reads with spaces.
DISPLAY_NAMES = {
    "surface_pressure_tendency": "surface pressure tendency",
    "omega_surface": "omega at the surface", "omega_top": "omega at the top",
    "max_ascent": "strongest ascent (omega)", "max_ascent_pressure": "level of strongest ascent",
    "column_thickness": "column thickness", "column_mean_divergence": "column-mean divergence",
    "level_of_nondivergence": "lowest level of non-divergence", "dines_ratio": "Dines ratio",
    "top_mismatch": "top mismatch", "surface_height": "surface height",
}


def display_name(name: str) -> str:
    return DISPLAY_NAMES.get(name, name.replace("_", " "))


def axis_label(name: str, unit: str) -> str:
    """'surface pressure tendency [hPa/(3 h)]'; a plain number has no unit brackets."""
    return display_name(name) + (f" [{unit}]" if unit not in ("", "1") else "")


def map_colours(values) -> dict:
    """pcolormesh colours: a signed quantity (values on both sides of zero) gets the
    diverging map centred on zero, so white is zero and red/blue are the signs; one sign
    only gets a sequential map over its range (common practice, no source)."""
    finite = np.asarray(values, dtype=float)
    finite = finite[np.isfinite(finite)]
    if finite.size and finite.min() < 0.0 < finite.max():
        largest = float(np.abs(finite).max())
        return {"cmap": "RdBu_r", "vmin": -largest, "vmax": largest}
    return {"cmap": "viridis"}


def plot_sweep(frame, ranges: list[Range], output: str, path) -> None:
    """A line (one varied cell) or a shaded grid (two) of one output column."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    units = frame.attrs.get("units", {})
    fig, ax = plt.subplots(figsize=(6.4, 4.4), dpi=100)
    label = axis_label(output, units.get(output, ""))
    if len(ranges) == 1:
        x = ranges[0].name
        ax.plot(frame[x], frame[output], marker="o", ms=3)
        ax.set_xlabel(axis_label(x, units.get(x, "")))
        ax.set_ylabel(label)
        ax.axhline(0.0, color="0.6", lw=0.8)
    else:
        a, b = ranges
        z = np.asarray(frame[output], dtype=float).reshape(a.values.size, b.values.size)
        mesh = ax.pcolormesh(b.values, a.values, z, shading="nearest", **map_colours(z))
        fig.colorbar(mesh, ax=ax, label=label)
        ax.set_xlabel(axis_label(b.name, b.unit))
        ax.set_ylabel(axis_label(a.name, a.unit))
    ax.set_title(f"Sweep: {display_name(output)}")
    fig.tight_layout()
    fig.savefig(path)
    plt.close(fig)
