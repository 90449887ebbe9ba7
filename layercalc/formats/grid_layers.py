"""Columns out of a model grid, written as a `.layers` sheet.

One point gives a `levels` table; several points give one `station` block each and a
top-level `levels` table at their centroid (the column's thermodynamics, and the model's
own omega there as `omega_model`), so that a trainer can lay a triangle on a model field
and compare the network's kinematic omega with the model's omega at the centroid.

Values are interpolated bilinearly in grid index space from the four surrounding points
(`physics.grid.bilinear_weights`); winds are earth-relative (the reader turned grid-relative
ones). Levels below the model's surface (pressure above the interpolated surface pressure)
at any of the points are dropped from all of them, and the sheet says which.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from layercalc.errors import InputError
from layercalc.physics.grid import bilinear_weights
from layercalc.physics.stations import spherical_centroid

__all__ = ["PointColumn", "extract_points", "layers_text"]

# Level columns written, with their unit and format: canonical name -> (header, scale, format)
# (the value in SI is divided by the scale; degC written as K - 273.15).
_LEVEL_COLUMNS = {
    "T": ("T [degC]", None, "{:.2f}"),
    "RH": ("RH [%]", 0.01, "{:.1f}"),
    "q": ("r [g/kg]", None, "{:.3f}"),
    "Td": ("Td [degC]", None, "{:.2f}"),
    "z": ("z [m]", 1.0, "{:.1f}"),
    "u": ("u [m/s]", 1.0, "{:.2f}"),
    "v": ("v [m/s]", 1.0, "{:.2f}"),
    "omega": ("omega_model [Pa/s]", 1.0, "{:.4f}"),
}


@dataclass(frozen=True)
class PointColumn:
    """A column interpolated at one point: `values[name]` per level (SI), surface first."""

    name: str
    latitude: float
    longitude: float
    levels: np.ndarray
    values: dict
    surface_pressure: float | None
    orography: float | None


def extract_points(fields, points, time_index: int = 0) -> list[PointColumn]:
    """Interpolate every canonical variable at each (name, latitude, longitude)."""
    import xarray as xr

    dataset = fields.dataset
    if "time" in dataset.dims:
        dataset = dataset.isel(time=time_index)
    geometry = fields.geometry
    shape = (dataset.sizes["y"], dataset.sizes["x"])
    corners = []
    for name, latitude, longitude in points:
        row, column = geometry.fractional_index(latitude, longitude)
        try:
            corners.append(bilinear_weights(row, column, shape, geometry.periodic))
        except ValueError:
            lat, lon = geometry.latitude_2d(), geometry.longitude_2d()
            raise InputError(
                f"{name} at {latitude:g}, {longitude:g} lies outside the grid of "
                f"{fields.source}", location=fields.source,
                hint=f"the grid spans latitudes {lat.min():.2f} to {lat.max():.2f} and "
                     f"longitudes {lon.min():.2f} to {lon.max():.2f}") from None
    rows = xr.DataArray(np.stack([c[0] for c in corners]), dims=("point", "corner"))
    columns = xr.DataArray(np.stack([c[1] for c in corners]), dims=("point", "corner"))
    weights = xr.DataArray(np.stack([c[2] for c in corners]), dims=("point", "corner"))
    picked = (dataset.drop_vars(["latitude", "longitude"]).isel(y=rows, x=columns)
              * weights).sum("corner").compute()
    out = []
    for index, (name, latitude, longitude) in enumerate(points):
        one = picked.isel(point=index)
        values = {key: np.asarray(one[key].values, dtype=float)
                  for key in _LEVEL_COLUMNS if key in one and "level" in one[key].dims}
        out.append(PointColumn(
            name, float(latitude), float(longitude), np.asarray(one["level"].values, float),
            values, float(one["ps"]) if "ps" in one else None,
            float(one["orography"]) if "orography" in one else None))
    return out


def _kept_levels(columns: list[PointColumn]) -> tuple[np.ndarray, list[float]]:
    levels = columns[0].levels
    keep = np.ones(levels.size, dtype=bool)
    for column in columns:
        if column.surface_pressure is not None:
            keep &= levels <= column.surface_pressure
        for values in column.values.values():
            keep &= np.isfinite(values)
    return keep, levels[~keep].tolist()


def _value_text(name: str, value: float) -> str:
    header, scale, form = _LEVEL_COLUMNS[name]
    if name in ("T", "Td"):
        value = value - 273.15
    elif name == "q":
        value = 1000.0 * value / (1.0 - value)      # mixing ratio r = q / (1 - q), in g/kg
    else:
        value = value / scale
    return form.format(value)


def _table(column: PointColumn, keep, names, indent: str) -> list[str]:
    headers = ["p [hPa]"] + [_LEVEL_COLUMNS[n][0] for n in names]
    rows = [[f"{p / 100:g}"] + [_value_text(n, column.values[n][k]) for n in names]
            for k, p in enumerate(column.levels) if keep[k]]
    widths = [max(len(h), *(len(r[i]) for r in rows)) for i, h in enumerate(headers)]
    lines = [indent + "levels",
             indent + "  " + "  ".join(h.rjust(w) for h, w in zip(headers, widths))]
    lines += [indent + "  " + "  ".join(v.rjust(w) for v, w in zip(r, widths)) for r in rows]
    lines.append(indent + "end")
    return lines


def layers_text(fields, columns: list[PointColumn], centroid: PointColumn | None = None) -> str:
    """The `.layers` text: a levels table for one column; station blocks and a levels table
    at the centroid (`centroid`, from `extract_points`) for several."""
    keep, dropped = _kept_levels(columns + ([centroid] if centroid else []))
    if keep.sum() < 2:
        raise InputError(f"fewer than two levels above the model surface at the points "
                         f"asked for in {fields.source}", location=fields.source)
    thermo = [n for n in ("T", "RH", "q", "Td", "z") if n in columns[0].values]
    winds = [n for n in ("u", "v") if n in columns[0].values]
    omega = ["omega"] if "omega" in columns[0].values else []
    main = centroid or columns[0]
    lowest = int(np.flatnonzero(keep)[0])
    lines = []
    if centroid is None:
        lines.append(f'title "Model column at {main.latitude:.2f}, {main.longitude:.2f} '
                     f'({fields.source})"')
    else:
        lines.append(f'title "{len(columns)} model columns and their centroid '
                     f'({fields.source})"')
    valid = fields.dataset.attrs.get("valid_time")
    lines.append(f'note "Interpolated bilinearly from the model grid of {fields.source}'
                 f'{f", valid {valid} UTC" if valid else ""}; model values, not observations."')
    for note in fields.notes:
        lines.append(f'note "Reading the file: {note}."')
    if dropped:
        surface = ", ".join(f"{c.name}: {c.surface_pressure / 100:.1f} hPa" for c in
                            columns + ([centroid] if centroid else [])
                            if c.surface_pressure is not None)
        lines.append(f'note "Level(s) {", ".join(f"{p / 100:g}" for p in dropped)} hPa '
                     f'dropped: below the model surface (surface pressure at {surface})."')
    if main.orography is not None:
        lines.append(f'note "Model orography at {main.name}: {main.orography:.0f} m."')
    lines.append("")
    lines.append(f"# the height of the lowest level kept, {main.levels[lowest] / 100:g} hPa")
    lines.append(f"cell surface_height = {main.values['z'][lowest]:.1f} m"
                 if "z" in main.values else "# (no geopotential height in the file)")
    lines.append("")
    if centroid is None:
        lines += _table(main, keep, thermo + winds + omega, "")
        return "\n".join(lines) + "\n"
    lines.append("# the column's temperature, humidity and the model's omega: at the centroid")
    lines += _table(centroid, keep, thermo + omega, "")
    lines.append("")
    for column in columns:
        lines.append(f'station "{column.name}" latitude {column.latitude:.4f} '
                     f'longitude {column.longitude:.4f}')
        lines += _table(column, keep, thermo + winds, "  ")
        lines.append("end")
        lines.append("")
    if omega:
        lines.append("# kinematic omega of the network against the model's, as layer means")
        lines.append("column omega_kinematic_mean [hPa/h] = (omega_bottom + omega_top) / 2")
        lines.append("column omega_model_mean [hPa/h] = omega_model")
    return "\n".join(lines) + "\n"


def column_sheet(fields, points, time_index: int = 0) -> str:
    """`.layers` text for (name, latitude, longitude) points: one point, a levels table;
    three or more, station blocks with the model's column at their centroid."""
    if len(points) == 2:
        raise InputError("two points make no network: give one point, or three or more",
                         hint="divergence from a station network needs at least three")
    columns = extract_points(fields, points, time_index)
    if len(points) == 1:
        return layers_text(fields, columns)
    latitude, longitude = spherical_centroid(np.array([p[1] for p in points]),
                                             np.array([p[2] for p in points]))
    centroid = extract_points(fields, [("centroid", float(latitude), float(longitude))],
                              time_index)[0]
    return layers_text(fields, columns, centroid)
