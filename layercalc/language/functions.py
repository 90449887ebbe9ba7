"""The functions a formula may call: one table entry each, with its dimension rule.

Adding a function is one entry here (plus its spreadsheet form in xlsx_formulas.py) and one test.
Arrays are float64 with a leading scenario axis and the layer axis last (surface first);
cells have shape (S, 1) and broadcast against columns (S, L).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Sequence

import numpy as np

# How a function treats the layer axis.
ELEMENTWISE = "elementwise"  # row by row; cells broadcast
AGGREGATE = "aggregate"      # a column in, one value (a cell) out
SCAN = "scan"                # a column in, a column out, rows depend on other rows


@dataclass(frozen=True)
class Function:
    """A callable in formulas.

    `arity` is (fewest, most) arguments (most=None: any number). `dimension` tells what the
    arguments must be: "same" (all alike, result alike), "dimensionless", "first" (result like
    the first argument, others free), or a tuple of expected dimension names for each argument
    followed by the result's dimension name (physics functions). `condition_first`: the first
    argument is a true/false condition.
    """

    name: str
    impl: Callable
    arity: tuple[int, int | None]
    layer_rule: str
    dimension: object
    summary: str
    condition_first: bool = False
    result_like: int | None = 0  # index of the argument whose dimension the result takes


def _mean(x):
    return np.mean(x, axis=-1, keepdims=True)


def _sum(x):
    return np.sum(x, axis=-1, keepdims=True)


def _amin(x):
    return np.min(x, axis=-1, keepdims=True)


def _amax(x):
    return np.max(x, axis=-1, keepdims=True)


def _lowest(x):
    return x[..., :1]


def _highest(x):
    return x[..., -1:]


def _at(pick):
    better = np.less if pick is np.argmin else np.greater
    extreme = np.min if pick is np.argmin else np.max

    def at(key, values):
        key, values = np.broadcast_arrays(key, values)
        if _by_layer(key) and not np.isnan(extreme(key)):
            return _at_by_layer(key, values, better)
        index = pick(key, axis=-1)[..., None]
        return np.take_along_axis(values, index, axis=-1)
    return at


def _at_by_layer(key, values, better):
    """argmin/argmax's pick (the first extreme), layer by layer: for few layers and many
    variants, one pass per layer instead of a walk along the short layer axis per variant."""
    best = key[:, 0].copy()
    out = values[:, 0].copy()
    found = np.empty(best.shape, dtype=bool)
    for j in range(1, key.shape[-1]):
        better(key[:, j], best, out=found)  # strictly: the first of equal values stays
        np.copyto(best, key[:, j], where=found)
        np.copyto(out, values[:, j], where=found)
    return out[:, None]


def _by_layer(x) -> bool:
    """Whether a running sum is faster as one add per layer than as np.cumsum: few layers
    and many variants (a sweep), where cumsum would walk the short layer axis once per
    variant. Both add in the same order, so the sums are identical."""
    return x.ndim == 2 and x.shape[-1] <= 64 and x.shape[0] >= 4 * x.shape[-1]


def upward_sum(x):
    """Running sum from the surface layer upward, including the layer itself."""
    x = np.asarray(x, dtype=float)
    if not _by_layer(x):
        return np.cumsum(x, axis=-1)
    out = np.empty_like(x)  # keeps the layout: layers outer after a sweep's changes
    out[:, 0] = x[:, 0]
    for j in range(1, x.shape[-1]):
        np.add(out[:, j - 1], x[:, j], out=out[:, j])
    return out


def downward_sum(x):
    """Running sum from the top layer downward, including the layer itself."""
    x = np.asarray(x, dtype=float)
    if not _by_layer(x):
        return np.flip(np.cumsum(np.flip(x, axis=-1), axis=-1), axis=-1)
    out = np.empty_like(x)
    out[:, -1] = x[:, -1]
    for j in range(x.shape[-1] - 2, -1, -1):
        np.add(out[:, j + 1], x[:, j], out=out[:, j])
    return out


def above(x, edge):
    """The value in the layer above; the top layer takes `edge`."""
    x, edge = np.broadcast_arrays(x, edge)
    out = np.empty_like(x)
    out[..., :-1] = x[..., 1:]
    out[..., -1] = edge[..., -1]
    return out


def below(x, edge):
    """The value in the layer below; the surface layer takes `edge`."""
    x, edge = np.broadcast_arrays(x, edge)
    out = np.empty_like(x)
    out[..., 1:] = x[..., :-1]
    out[..., 0] = edge[..., 0]
    return out


def _minimum(*args):
    return np.minimum.reduce(np.broadcast_arrays(*args))


def _maximum(*args):
    return np.maximum.reduce(np.broadcast_arrays(*args))


def _physics(module: str, name: str) -> Callable:
    """Physics functions load on first call so that importing this table stays light."""
    def call(*args):
        import importlib

        return getattr(importlib.import_module(f"layercalc.physics.{module}"), name)(*args)
    call.__name__ = name
    return call


_ROWS: Sequence[Function] = (
    Function("ln", np.log, (1, 1), ELEMENTWISE, "dimensionless", "natural logarithm"),
    Function("exp", np.exp, (1, 1), ELEMENTWISE, "dimensionless", "exponential"),
    Function("sqrt", np.sqrt, (1, 1), ELEMENTWISE, "sqrt", "square root"),
    Function("abs", np.abs, (1, 1), ELEMENTWISE, "same", "absolute value"),
    Function("where", lambda c, a, b: np.where(c, a, b), (3, 3), ELEMENTWISE, "same",
             "where(condition, if_true, if_false), row by row", condition_first=True,
             result_like=1),
    Function("sum", _sum, (1, 1), AGGREGATE, "same", "sum over the layers"),
    Function("mean", _mean, (1, 1), AGGREGATE, "same",
             "plain mean over the layers (not mass-weighted)"),
    Function("lowest_layer", _lowest, (1, 1), AGGREGATE, "same", "value in the surface layer"),
    Function("highest_layer", _highest, (1, 1), AGGREGATE, "same", "value in the top layer"),
    Function("at_min", _at(np.argmin), (2, 2), AGGREGATE, "first",
             "at_min(key, value): value in the layer where key is smallest", result_like=1),
    Function("at_max", _at(np.argmax), (2, 2), AGGREGATE, "first",
             "at_max(key, value): value in the layer where key is largest", result_like=1),
    Function("upward_sum", upward_sum, (1, 1), SCAN, "same",
             "running sum from the surface up, including the layer"),
    Function("downward_sum", downward_sum, (1, 1), SCAN, "same",
             "running sum from the top down, including the layer"),
    Function("above", above, (2, 2), SCAN, "same",
             "above(x, edge): x in the layer above; the top layer takes edge"),
    Function("below", below, (2, 2), SCAN, "same",
             "below(x, edge): x in the layer below; the surface layer takes edge"),
    # physics, as in layercalc.physics (formulas and references there)
    Function("saturation_vapour_pressure",
             _physics("humidity", "saturation_vapour_pressure"), (1, 1), ELEMENTWISE,
             (("temperature",), "pressure"), "Bolton (1980) eq. 10, over water"),
    Function("vapour_pressure", _physics("humidity", "vapour_pressure_from_dewpoint"),
             (1, 1), ELEMENTWISE, (("temperature",), "pressure"),
             "vapour pressure from the dewpoint, Bolton (1980) eq. 10"),
    Function("mixing_ratio", _physics("humidity", "mixing_ratio"), (2, 2), ELEMENTWISE,
             (("pressure", "pressure"), "dimensionless"),
             "mixing_ratio(vapour_pressure, pressure) = epsilon e / (p - e)"),
    Function("vapour_pressure_from_mixing_ratio",
             _physics("humidity", "vapour_pressure_from_mixing_ratio"), (2, 2), ELEMENTWISE,
             (("dimensionless", "pressure"), "pressure"), "e = r p / (epsilon + r)"),
    Function("virtual_temperature", _physics("humidity", "virtual_temperature"), (2, 2),
             ELEMENTWISE, (("temperature", "dimensionless"), "temperature"),
             "Tv = T (r + epsilon) / (epsilon (1 + r))"),
    Function("hypsometric_thickness", _physics("hypsometric", "hypsometric_thickness"),
             (3, 3), ELEMENTWISE, (("temperature", "pressure", "pressure"), "length"),
             "Rd Tv / g0 ln(p_bottom / p_top)"),
    Function("vertical_velocity", _physics("kinematic", "vertical_velocity"), (3, 3),
             ELEMENTWISE, (("pressure per time (e.g. omega)", "pressure", "temperature"),
                           "speed"), "w = -omega Rd Tv / (p g0)"),
)

FUNCTIONS = {f.name: f for f in _ROWS}

# min and max: one argument is an aggregate over the layers, two or more compare row by row.
AGGREGATE_MIN = Function("min", _amin, (1, 1), AGGREGATE, "same", "smallest over the layers")
AGGREGATE_MAX = Function("max", _amax, (1, 1), AGGREGATE, "same", "largest over the layers")
ROW_MIN = Function("min", _minimum, (2, None), ELEMENTWISE, "same", "smallest, row by row")
ROW_MAX = Function("max", _maximum, (2, None), ELEMENTWISE, "same", "largest, row by row")


def lookup(name: str, n_args: int) -> Function | None:
    if name == "min":
        return AGGREGATE_MIN if n_args == 1 else ROW_MIN
    if name == "max":
        return AGGREGATE_MAX if n_args == 1 else ROW_MAX
    return FUNCTIONS.get(name)


def names() -> list[str]:
    return sorted([*FUNCTIONS, "min", "max"])
