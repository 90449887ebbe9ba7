"""The Python API: load a sheet, evaluate it, read the results."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Iterable, Mapping

import numpy as np

from layercalc.errors import LayercalcError, Notice
from layercalc.source import Source, read_source

if TYPE_CHECKING:  # pragma: no cover
    import pandas

from layercalc.caution import CAUTION  # noqa: F401  (the API names it too)


def _quiet(function):
    """Run `function` with numpy's floating-point warnings off: values beyond the range
    layercalc accepts are our errors (limits.py), and absurd values inside it may still
    overflow in an intermediate step whose result is checked; the warning would be noise, as
    on the command line."""
    import functools

    @functools.wraps(function)
    def quiet(*args, **kwargs):
        with np.errstate(all="ignore"):
            return function(*args, **kwargs)

    return quiet


@_quiet
def loads(text: str, name: str = "<string>") -> "Sheet":
    """A sheet from `.layers` text. Raises LayercalcError (with position) if it is invalid."""
    return Sheet(_compile(Source(name, text)))


@_quiet
def load(path: str | Path, *, reuse_checks: bool = False) -> "Sheet":
    """A sheet from a `.layers` file or an `.xlsx` workbook.

    `reuse_checks` (the command line sets it): when this process has not yet needed a unit
    dimension and the very same text passed a sympy unit check in an earlier run, reuse
    what sympy derived then instead of importing sympy's unit systems (dimensions.py).
    """
    path = Path(path)
    if path.suffix.lower() in (".xlsx", ".xlsm"):
        from layercalc.formats.xlsx.reader import import_workbook

        return import_workbook(path, loads).sheet  # problems point at sheet!cell
    return Sheet(_compile(read_source(path), reuse_checks=reuse_checks))


def _compile(source: Source, reuse_checks: bool = False):
    from layercalc.language import dimensions, units

    key = None
    if reuse_checks and units.source() is None and not dimensions.is_disabled():
        key = dimensions.sheet_key(source.text)
        table = dimensions.cached_outcome(key)
        if table is not None and units.use_cached(table):
            from layercalc.checking import stored

            kept = stored.load(key, table, source)  # the same text checked in an earlier run
            if kept is not None:
                return kept
    from layercalc.language.build import build_document
    from layercalc.checking.checker import check_document
    from layercalc.language.parser import parse

    checked = check_document(build_document(source, parse(source)))
    if key is not None and units.source() == "sympy":
        dimensions.remember(key, units.outcome_table())
    elif key is not None and units.source() == "cache":
        from layercalc.checking import stored

        stored.keep(key, table, source, checked)
    return checked


def read_soundings(path: str | Path, format: str | None = None, stations=None, near=None,
                   station_table=None):
    """Soundings from a TEMP/PILOT bulletin, a BUFR file or a text table (format by content).

    Returns a `layercalc.formats.decoded.Decoded`: `.soundings` (levels surface first, SI),
    `.all_notices`. `stations` picks identifiers; `near=(lat, lon, radius_km)` picks by
    distance; `station_table` is a CSV id,latitude,longitude,elevation for land stations.
    """
    from layercalc.formats.soundings_input import read_soundings as read

    return read(path, format=format, stations=stations, near=near, station_table=station_table)


def soundings_text(decoded) -> str:
    """A `.layers` text from `read_soundings`' result: a levels block for one sounding,
    station blocks for several (ready for the network divergence)."""
    from layercalc.formats.soundings_input import soundings_layers_text

    return soundings_layers_text(decoded)


def grid_column(path: str | Path, points, time_index: int = 0) -> str:
    """A `.layers` text of model columns from a CF-netCDF or GRIB file on pressure levels.

    `points`: (name, latitude, longitude) tuples in degrees; one point gives a levels table,
    three or more give station blocks and a levels table at their centroid with the model's
    omega (`omega_model`). Needs the extra layercalc[grid] (netCDF) or layercalc[grib].
    """
    from layercalc.formats.grid import read_grid
    from layercalc.formats.grid_layers import column_sheet

    return column_sheet(read_grid(path), list(points), time_index)


def grid_evaluate(path: str | Path, sheet_text: str = "", chunks: dict | None = None):
    """The sheet (formulas, cells and options; no table) over every column of a gridded
    file, as a lazy xarray Dataset (dask arrays; CF attributes). `chunks`: {"y": .., "x":
    .., "time": ..} (default 128 x 128). Write it with `result.to_netcdf(...)` or compute
    parts of it; `layercalc grid run` does both with a progress bar."""
    from layercalc.evaluation.grid import evaluate_grid
    from layercalc.formats.grid import read_grid

    fields = read_grid(path, chunks=dict(chunks or {"y": 128, "x": 128, "time": 1}))
    return evaluate_grid(fields, sheet_text, "<sheet>")


@_quiet
def problems(path_or_text: str | Path, *, is_text: bool = False) -> list[LayercalcError]:
    """Every problem found in a file (or text), without raising: for `layercalc check`.

    Besides parsing and checking, this evaluates the base sheet and every scenario, so that
    a file `check` passes is one `run` can evaluate (division by zero is found here too)."""
    return check_sheet(path_or_text, is_text=is_text)[1]


def check_sheet(path_or_text: str | Path, *, is_text: bool = False,
                reuse_checks: bool = False) -> tuple["Sheet | None", list[LayercalcError]]:
    """The sheet (None when it does not compile) and every problem `problems` finds, from
    one compilation; `reuse_checks` as in `load` (the command line's `check` sets it)."""
    try:
        sheet = loads(str(path_or_text)) if is_text else load(path_or_text,
                                                             reuse_checks=reuse_checks)
    except LayercalcError as exc:
        return None, list(getattr(exc, "problems", [exc]))
    from layercalc.evaluation.uncertainty import check_error_model

    found: list[LayercalcError] = []
    for scenario in (None, *sheet.scenarios):  # so that `check` and `run` agree
        try:
            sheet.evaluate(scenario)
            check_error_model(sheet.checked, scenario)
        except LayercalcError as exc:
            if exc.format() not in (seen.format() for seen in found):  # a base problem
                found.append(exc)                                       # once, not per variant
    return sheet, found


class Sheet:
    """A checked column sheet. Evaluate it (for a scenario, or over a sweep) to get results."""

    def __init__(self, checked) -> None:
        self.checked = checked

    @property
    def title(self) -> str:
        return self.checked.title

    @property
    def notes(self) -> list[str]:
        return list(self.checked.notes)

    @property
    def scenarios(self) -> list[str]:
        return list(self.checked.scenarios)

    @property
    def options(self) -> dict[str, str]:
        return dict(self.checked.options)

    def check(self) -> list[Notice]:
        """Every warning of the sheet (errors raise when the sheet is loaded): those found
        while checking, each scenario's (a range that selects no layer), and results beyond
        what the atmosphere does in the base sheet or any scenario (evaluation/outcomes.py)."""
        found = list(self.checked.notices)
        base: set[str] = set()
        for name in ("base", *self.scenarios):
            scenario = self.checked.scenarios.get(name)
            if scenario is not None:
                found += scenario.notices
            for notice in self._result_notices(self.evaluate(name)):
                text = notice.message.split(": ", 1)[1] if scenario else notice.message
                if scenario is None:
                    base.add(text)
                if scenario is None or text not in base:  # a scenario's own, not the base's
                    found.append(notice)
        return found

    def warnings(self, result: "Result") -> list[Notice]:
        """The warnings that belong with one result: the sheet's, its scenario's, and
        results beyond what the atmosphere does."""
        found = list(self.checked.notices)
        scenario = self.checked.scenarios.get(result.scenario)
        if scenario is not None:
            found += scenario.notices
        return found + self._result_notices(result)

    @staticmethod
    def _result_notices(result: "Result") -> list[Notice]:
        from layercalc.evaluation.outcomes import result_notices

        prefix = "" if result.scenario == "base" else f"scenario {result.scenario}: "
        return result_notices(result.sheet, result.si_cells, result.si_columns, prefix)

    @_quiet
    def evaluate(self, scenario: str | None = None) -> "Result":
        """Results for the base sheet or one named scenario."""
        from layercalc.evaluation.engine import evaluate

        if scenario in (None, "base"):
            return Result(evaluate(self.checked), 0, "base")
        from layercalc.errors import EvaluationError
        from layercalc.evaluation.scenarios import scenario_inputs

        checked, columns, cells = scenario_inputs(self.checked, scenario)
        try:
            return Result(evaluate(checked, columns, cells), 0, scenario)
        except EvaluationError as exc:
            raise EvaluationError(f"scenario '{scenario}': {exc.message}", exc.span,
                                  layer=exc.layer, hint=exc.hint) from None

    @_quiet
    def evaluate_many(self, cell_values: Mapping[str, np.ndarray],
                      scenario: str | None = None):
        """One vectorised pass over many variants: each entry of `cell_values` is an array of
        SI values, one per variant, for an input cell. Returns the raw Evaluation."""
        from layercalc.evaluation.scenarios import sweep_evaluation

        return sweep_evaluation(self.checked, dict(cell_values), scenario)

    @_quiet
    def compare(self, scenarios: Iterable[str] | None = None) -> "pandas.DataFrame":
        """A tidy table of key results per scenario with the difference from the base."""
        from layercalc.evaluation.compare import compare

        return compare(self, list(scenarios) if scenarios is not None else None)

    @_quiet
    def to_xlsx(self, path: str | Path) -> None:
        from layercalc.formats.xlsx.export import write_workbook

        write_workbook(self, path)


@dataclass
class Result:
    """Results for one variant. `layers`: a DataFrame, surface layer first, in each column's
    unit (`units`); `cells`: name -> value in its unit; `si_layers` / `si_cells` in SI."""

    evaluation: object
    index: int
    scenario: str
    _frames: dict = field(default_factory=dict, repr=False)

    @property
    def sheet(self):
        return self.evaluation.sheet

    @property
    def units(self) -> dict[str, str]:
        sheet = self.sheet
        units = {name: sheet.unit_of(name, "cell").text for name in sheet.cell_names}
        units.update({name: sheet.unit_of(name, "column").text for name in sheet.column_names})
        return units

    @property
    def cell_units(self) -> dict[str, str]:
        sheet = self.sheet
        return {name: sheet.unit_of(name, "cell").text for name in sheet.cell_names}

    def _pick(self, array: np.ndarray) -> np.ndarray:
        return array[min(self.index, array.shape[0] - 1)]

    @property
    def si_columns(self) -> dict[str, np.ndarray]:
        return {name: np.array(self._pick(a), dtype=float)
                for name, a in self.evaluation.columns.items()}

    @property
    def si_cells(self) -> dict[str, float]:
        return {name: float(self._pick(a)[0]) for name, a in self.evaluation.cells.items()}

    @property
    def layers(self) -> "pandas.DataFrame":
        if "display" not in self._frames:
            self._frames["display"] = self._frame(si=False)
        return self._frames["display"]

    @property
    def si_layers(self) -> "pandas.DataFrame":
        if "si" not in self._frames:
            self._frames["si"] = self._frame(si=True)
        return self._frames["si"]

    @_quiet
    def _frame(self, si: bool):
        import pandas as pd

        sheet = self.sheet
        data = {}
        for name in sheet.column_names:
            values = self.si_columns[name]
            data[name] = values if si else sheet.unit_of(name, "column").from_si(values)
        frame = pd.DataFrame(data)
        frame.attrs["units"] = {n: ("SI" if si else sheet.unit_of(n, "column").text)
                                for n in data}
        return frame

    @property
    @_quiet
    def cells(self) -> dict[str, float]:
        sheet = self.sheet
        return {name: float(sheet.unit_of(name, "cell").from_si(value))
                for name, value in self.si_cells.items()}

    @property
    @_quiet
    def summary(self) -> dict:
        """Diagnostics that are not single formulas: levels of non-divergence, standard
        thicknesses and heights (SI)."""
        from layercalc.evaluation.summary import summarise

        return summarise(self)
