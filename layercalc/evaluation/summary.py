"""Diagnostics that are not one formula each: levels of non-divergence, heights of the
standard pressure surfaces the column spans, standard thicknesses. All SI."""

from __future__ import annotations

import numpy as np

# Standard isobaric surfaces (WMO Manual on Codes, WMO-No. 306: mandatory levels), Pa.
STANDARD_SURFACES = (100000.0, 92500.0, 85000.0, 70000.0, 50000.0, 40000.0, 30000.0,
                     25000.0, 20000.0, 15000.0, 10000.0)
# Thicknesses forecasters read (common practice, no source), as (bottom, top) in Pa.
STANDARD_THICKNESSES = ((100000.0, 50000.0), (100000.0, 85000.0), (85000.0, 70000.0),
                        (85000.0, 50000.0), (70000.0, 50000.0), (50000.0, 30000.0))


def strongest_ascent(cells: dict) -> tuple[float, float] | None:
    """(omega, pressure) of the strongest ascent, SI, from the max_ascent cells; None when
    omega is nowhere negative: there is no ascent (the one meaning the report, the JSON and
    the scenario comparison give "strongest ascent")."""
    omega = cells.get("max_ascent")
    if omega is None or not np.isfinite(omega) or omega >= 0:
        return None
    return float(omega), float(cells.get("max_ascent_pressure", np.nan))


def interfaces(columns: dict) -> tuple[np.ndarray, np.ndarray] | None:
    """Interface pressures and heights of one column, surface first (L + 1 values)."""
    if "z_bottom" not in columns:
        return None
    p = np.concatenate([columns["p_bottom"][:1], columns["p_top"]])
    z = np.concatenate([columns["z_bottom"][:1], columns["z_top"]])
    return p, z


def summarise(result) -> dict:
    from layercalc.physics.hypsometric import height_at_pressure
    from layercalc.physics.kinematic import nondivergence_levels

    with np.errstate(all="ignore"):  # absurd but accepted inputs must not print warnings
        return _summarise(result, height_at_pressure, nondivergence_levels)


def _summarise(result, height_at_pressure, nondivergence_levels) -> dict:
    columns = result.si_columns
    out: dict = {}
    if "div_adjusted" in columns:
        div = columns["div_adjusted"]
        # a column without any divergence has no level where it changes sign
        out["level_of_nondivergence"] = [] if not np.any(div) else nondivergence_levels(
            columns["p_mid"], div)
    found = interfaces(columns)
    if found is not None:
        p, z = found
        wanted = np.array([s for s in STANDARD_SURFACES if p[-1] <= s <= p[0]])
        heights = height_at_pressure(p, z, wanted) if wanted.size else np.array([])
        out["standard_heights"] = {f"{s / 100:g}": float(h) for s, h in zip(wanted, heights)}
        thick = {}
        for bottom, top in STANDARD_THICKNESSES:
            if p[-1] <= top and bottom <= p[0]:
                zb, zt = height_at_pressure(p, z, np.array([bottom, top]))
                thick[f"{bottom / 100:g}-{top / 100:g}"] = float(zt - zb)
        out["standard_thicknesses"] = thick
    return out
