"""Maps of grid results on plain latitude-longitude axes: the surface pressure tendency, and
omega at one level (kinematic beside the model's when the file has it).

No map projection and no coastlines: longitude and latitude as the axes, each grid point
drawn at its own position (pcolormesh on the 2-D coordinates), so Lambert grids look bent.
Values in the trade's units (hPa per 3 h, hPa/h).

Layer 7. May import: formats, evaluation, physics and the top-level leaves.
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np

from layercalc.caution import CAUTION
from layercalc.errors import InputError, OutputError

__all__ = ["tendency_map", "omega_map", "save_figure", "close"]

# 1 Pa/s = 3600 Pa/h = 36 hPa/h; per 3 h: 108 hPa (exact).
HPA_PER_HOUR = 36.0
HPA_PER_3H = 108.0


def _pyplot():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def _longitudes(result) -> np.ndarray:
    """Longitudes in -180..180 when the grid does not cross the date line that way, so
    that a Lambert grid over America is one piece."""
    longitude = np.asarray(result["longitude"].values, dtype=float)
    wrapped = (longitude + 180.0) % 360.0 - 180.0
    return wrapped if np.ptp(wrapped) <= np.ptp(longitude) else longitude


def _panel(ax, result, values, title, units, figure, symmetric=True):
    longitude = _longitudes(result)
    latitude = np.asarray(result["latitude"].values, dtype=float)
    limit = np.nanpercentile(np.abs(values), 99) if np.isfinite(values).any() else 1.0
    limit = limit if limit > 0 else 1.0
    mesh = ax.pcolormesh(longitude, latitude, np.ma.masked_invalid(values), cmap="RdBu_r",
                         vmin=-limit if symmetric else None, vmax=limit, shading="nearest")
    ax.set_xlabel("longitude (degrees east)")
    ax.set_ylabel("latitude (degrees north)")
    ax.set_title(title, fontsize="medium")
    ax.set_aspect(1.0 / max(np.cos(np.deg2rad(np.nanmean(latitude))), 0.2))
    figure.colorbar(mesh, ax=ax, shrink=0.8, label=units)


def _one_time(array):
    return array.isel(time=0) if "time" in array.dims else array


def tendency_map(result, source: str):
    """Figure of the surface pressure tendency (hPa per 3 h)."""
    plt = _pyplot()
    figure, ax = plt.subplots(figsize=(8, 5.5), constrained_layout=True)
    values = np.asarray(_one_time(result["surface_pressure_tendency"]).values) * HPA_PER_3H
    options = result.attrs.get("options", "")
    _panel(ax, result, values, f"surface pressure tendency from kinematic omega\n{source}"
           f" ({options})", "hPa per 3 h", figure)
    figure.text(0.01, 0.005, CAUTION, fontsize="x-small", wrap=True)
    return figure


def omega_map(result, level_hpa: float, source: str, model_omega=None):
    """Figure of omega at the level nearest `level_hpa`: kinematic, and the model's beside
    it when given (a DataArray on the same grid with a `level` axis in Pa)."""
    levels = np.asarray(result["level"].values, dtype=float)
    index = int(np.argmin(np.abs(levels - level_hpa * 100.0)))
    if abs(levels[index] - level_hpa * 100.0) > 1.0:
        raise InputError(f"no level {level_hpa:g} hPa in {source}",
                         hint="levels: " + ", ".join(f"{p / 100:g}" for p in levels))
    plt = _pyplot()
    panels = 2 if model_omega is not None else 1
    figure, axes = plt.subplots(1, panels, figsize=(7.5 * panels, 5.5), squeeze=False,
                                constrained_layout=True)
    kinematic = np.asarray(_one_time(result["omega_kinematic"]).isel(level=index).values)
    _panel(axes[0, 0], result, kinematic * HPA_PER_HOUR,
           f"kinematic omega at {levels[index] / 100:g} hPa\n{source}", "hPa/h", figure)
    if model_omega is not None:
        model = np.asarray(_one_time(model_omega).sel(level=levels[index]).values)
        model = np.where(np.isfinite(kinematic), model, np.nan)   # the same points
        _panel(axes[0, 1], result, model * HPA_PER_HOUR,
               f"the model's omega at {levels[index] / 100:g} hPa", "hPa/h", figure)
    figure.text(0.01, 0.005, CAUTION, fontsize="x-small", wrap=True)
    return figure


def close(figure) -> None:
    _pyplot().close(figure)


def save_figure(figure, path: str | Path, dpi: int = 100) -> None:
    """Write a figure to .png or .svg, whole or not at all."""
    from layercalc.files import write_atomic

    path = Path(path)
    suffix = path.suffix.lower().lstrip(".")
    if suffix not in ("png", "svg"):
        raise OutputError(f"cannot draw to '{path}': the picture must end in .png or .svg")
    buffer = io.BytesIO()
    figure.savefig(buffer, format=suffix, dpi=dpi)
    _pyplot().close(figure)
    write_atomic(path, buffer.getvalue())
