"""Kinematic omega against the model's own omega, level by level.

For each pressure level: the area-weighted Pearson correlation and the root-mean-square
difference between layercalc's kinematic omega (on the levels, from the grid's divergence)
and the omega the model wrote, over the points where both exist (above ground). Area
weights: cos(latitude) on latitude-longitude grids, 1 / m^2 on projected grids (the area
a grid cell covers). One pass over the data (a single dask compute of weighted sums).

    r = cov_w(k, m) / sqrt(var_w(k) var_w(m)),  rms = sqrt(sum w (k - m)^2 / sum w)

Layer 5. May import: checking, language, physics and the top-level leaves.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["LevelComparison", "compare_with_model", "comparison_table", "comparison_json"]


@dataclass(frozen=True)
class LevelComparison:
    """Statistics at one level (SI): pressure [Pa], points compared, correlation [1], rms
    difference, mean kinematic and mean model omega, rms of the model omega [Pa s^-1]."""

    pressure: float
    points: int
    correlation: float
    rms_difference: float
    mean_kinematic: float
    mean_model: float
    rms_model: float


def area_weights(geometry) -> np.ndarray:
    """(ny, nx) weights proportional to the area of each grid cell."""
    if geometry.kind == "latlon":
        weights = np.cos(np.deg2rad(geometry.latitude_2d()))
        return np.clip(weights, 0.0, None)
    return 1.0 / geometry.map_factor() ** 2


def compare_with_model(result, fields) -> list[LevelComparison]:
    """Per-level statistics of result["omega_kinematic"] against fields.dataset["omega"]."""
    import dask
    import xarray as xr

    kinematic = result["omega_kinematic"]
    model = fields.dataset["omega"].sel(level=kinematic["level"])
    weight = xr.DataArray(area_weights(fields.geometry), dims=("y", "x"))
    both = np.isfinite(kinematic) & np.isfinite(model)
    w = weight.where(both, 0.0)
    k = kinematic.where(both, 0.0)
    m = model.where(both, 0.0)
    reduce = [d for d in kinematic.dims if d != "level"]
    sums = {name: value.sum(reduce) for name, value in {
        "n": both, "w": w, "wk": w * k, "wm": w * m, "wkk": w * k * k, "wmm": w * m * m,
        "wkm": w * k * m}.items()}
    (sums,) = dask.compute(sums)
    out = []
    for index, pressure in enumerate(np.asarray(kinematic["level"].values, dtype=float)):
        s = {name: float(value.values[index]) for name, value in sums.items()}
        if s["n"] < 3 or s["w"] <= 0:
            out.append(LevelComparison(pressure, int(s["n"]), *([np.nan] * 5)))
            continue
        mean_k, mean_m = s["wk"] / s["w"], s["wm"] / s["w"]
        var_k = s["wkk"] / s["w"] - mean_k ** 2
        var_m = s["wmm"] / s["w"] - mean_m ** 2
        cov = s["wkm"] / s["w"] - mean_k * mean_m
        correlation = cov / np.sqrt(var_k * var_m) if var_k > 0 and var_m > 0 else np.nan
        rms = np.sqrt(max(s["wkk"] - 2 * s["wkm"] + s["wmm"], 0.0) / s["w"])
        out.append(LevelComparison(pressure, int(s["n"]), float(correlation), float(rms),
                                   mean_k, mean_m, float(np.sqrt(s["wmm"] / s["w"]))))
    return out


def comparison_table(rows: list[LevelComparison]) -> str:
    """The table as printed: pressure in hPa, omega statistics in hPa/h."""
    to_hpa_h = 36.0        # 1 Pa/s = 3600 Pa/h = 36 hPa/h
    lines = ["level    points  correlation  rms diff  mean kin.  mean model  rms model",
             "hPa                             hPa/h      hPa/h       hPa/h      hPa/h"]
    for row in rows:
        lines.append(f"{row.pressure / 100:5.0f}  {row.points:8d}  {row.correlation:11.2f}  "
                     f"{row.rms_difference * to_hpa_h:8.2f}  {row.mean_kinematic * to_hpa_h:9.2f}"
                     f"  {row.mean_model * to_hpa_h:10.2f}  {row.rms_model * to_hpa_h:9.2f}")
    return "\n".join(lines)


def comparison_json(rows: list[LevelComparison]) -> list[dict]:
    """The rows as JSON-ready dicts (SI; nan as None)."""
    def clean(value):
        return None if isinstance(value, float) and not np.isfinite(value) else value

    return [{"pressure": row.pressure, "points": row.points,
             "correlation": clean(row.correlation), "rms_difference": clean(row.rms_difference),
             "mean_kinematic": clean(row.mean_kinematic), "mean_model": clean(row.mean_model),
             "rms_model": clean(row.rms_model)} for row in rows]
