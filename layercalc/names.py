"""Names with a meaning of their own, and how a misspelt name is answered.

One table of the canonical names (inputs of the layer and level tables, input cells the
default diagnostics read), so the checker, the default formulas, the report and the
workbook reader agree on them; and one "did you mean" helper for every unknown-name message.
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass


@dataclass(frozen=True)
class Canonical:
    """A canonical name: where it is given, the unit assumed when a table header gives none,
    the unit whose dimension the default diagnostics expect, and the value of an input cell
    the defaults read when the file does not give it."""

    name: str
    where: str                 # "layers" (a layer-table column), "levels", or "cell"
    assumed_unit: str = ""     # for a header without a unit (a notice says so)
    expected_unit: str = ""    # the dimension the defaults expect, as a unit
    default: str = ""          # an input cell's value when not given ("" = none)
    meaning: str = ""


CANONICAL = {c.name: c for c in (
    Canonical("p_bottom", "layers", "hPa", "hPa", meaning="pressure at the layer's bottom"),
    Canonical("p_top", "layers", "hPa", "hPa", meaning="pressure at the layer's top"),
    Canonical("T", "layers", "degC", "K", meaning="temperature"),
    Canonical("Td", "layers", "degC", "K", meaning="dewpoint"),
    Canonical("RH", "layers", "%", "%", meaning="relative humidity"),
    Canonical("r", "layers", "g/kg", "g/kg", meaning="water vapour mixing ratio"),
    Canonical("div", "layers", "1e-5 s^-1", "s^-1", meaning="horizontal divergence"),
    Canonical("thickness", "layers", "m", meaning="an observed layer thickness"),
    Canonical("p", "levels", "hPa", meaning="pressure of a level"),
    Canonical("z", "levels", "m", meaning="observed height of a level"),
    Canonical("dir", "levels", "deg", meaning="wind direction (from which it blows)"),
    Canonical("speed", "levels", "kt", meaning="wind speed"),
    Canonical("surface_height", "cell", expected_unit="m", default="0 m",
              meaning="height of the column's bottom above sea level"),
    Canonical("surface_pressure", "cell", expected_unit="hPa", meaning="surface pressure"),
    Canonical("omega_top", "cell", expected_unit="Pa/s", default="0 [Pa/s]",
              meaning="omega at the column top (boundary value)"),
    Canonical("omega_surface", "cell", expected_unit="Pa/s", default="0 [Pa/s]",
              meaning="omega at the surface (boundary value from the surface)"),
    Canonical("upslope_wind", "cell", expected_unit="m/s", meaning="wind up the terrain"),
    Canonical("terrain_slope", "cell", expected_unit="1", meaning="rise over run"),
    Canonical("pressure_advection", "cell", expected_unit="Pa/s",
              meaning="advection of surface pressure by the synoptic pattern"),
    # the error model (evaluation/uncertainty.py); defaults there, not injected here
    Canonical("wind_error", "cell", expected_unit="m/s",
              meaning="random wind error per component, at the lowest level"),
    Canonical("wind_error_growth", "cell", expected_unit="m s^-1 hPa^-1",
              meaning="growth of the wind error per pressure depth above the lowest level"),
    Canonical("level_correlation", "cell", expected_unit="1",
              meaning="correlation of the errors of adjacent levels or layers"),
    Canonical("direction_step", "cell", expected_unit="deg",
              meaning="resolution of the reported wind directions"),
    Canonical("speed_step", "cell", expected_unit="kt",
              meaning="resolution of the reported wind speeds"),
    Canonical("div_error", "cell", expected_unit="s^-1",
              meaning="error of a hand-entered layer divergence"),
    Canonical("T_error", "cell", expected_unit="K",
              meaning="random error of each reported temperature (a difference, in K)"),
    Canonical("Td_error", "cell", expected_unit="K",
              meaning="random error of each reported dewpoint (a difference, in K)"),
    Canonical("z_error", "cell", expected_unit="m",
              meaning="random error of each reported height"),
    Canonical("members", "cell", expected_unit="1", meaning="size of the error ensemble"),
    Canonical("seed", "cell", expected_unit="1", meaning="seed of the error ensemble"),
)}
ERROR_MODEL_CELLS = ("wind_error", "wind_error_growth", "level_correlation", "direction_step",
                     "speed_step", "div_error", "T_error", "Td_error", "z_error", "members",
                     "seed")

PRESSURE_BOUNDS = ("p_bottom", "p_top")          # a layer's bounds; scenarios cannot change them
LAYER_INPUTS = ("p_bottom", "p_top", "T", "Td", "RH", "r", "div")
INPUT_CELLS = tuple(c.name for c in CANONICAL.values() if c.where == "cell")


def close_names(name: str, known, count: int = 3, cutoff: float = 0.6) -> list[str]:
    """The known names closest to a misspelt one, best first (difflib's ratio)."""
    return difflib.get_close_matches(name, list(known), n=count, cutoff=cutoff)


def did_you_mean(close, quoted: bool = True) -> str | None:
    """"did you mean 'a' or 'b'?" for suggestions, or None when there are none."""
    if not close:
        return None
    shown = [f"'{c}'" if quoted else str(c) for c in close]
    return "did you mean " + " or ".join(shown) + "?"
