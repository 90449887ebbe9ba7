"""Gridded model fields on pressure levels: CF-netCDF (xarray) and GRIB (cfgrib/ecCodes).

`read_grid(path, chunks=None)` opens a file and hands the xarray datasets to
`interpret_datasets`, which never touches the file system (tests feed it datasets built in
memory). The result is a `GriddedFields`: one xarray Dataset with canonical names and SI
units, dims (time, level, y, x) (time only when the file has several), the level axis in Pa
from the surface up, winds earth-relative, and the `GridGeometry` the divergence needs.

Canonical variables (found by CF standard name in netCDF, by GRIB short name in GRIB):

| name | meaning, SI unit | CF standard names | GRIB short names |
|---|---|---|---|
| u, v | eastward, northward wind [m s-1] | eastward_wind / northward_wind (x_wind / y_wind grid-relative) | u, v |
| T | air temperature [K] | air_temperature | t |
| z | geopotential height [m] | geopotential_height, geopotential (/ g0) | gh, z |
| RH | relative humidity [1] | relative_humidity | r |
| q | specific humidity [kg kg-1] | specific_humidity | q |
| Td | dewpoint [K] | dew_point_temperature | dpt |
| omega | Dp/Dt [Pa s-1] | lagrangian_tendency_of_air_pressure | w |
| ps | surface pressure [Pa] | surface_air_pressure | sp |
| orography | surface height [m] | surface_altitude, surface_geopotential (/ g0) | orog |

GRIB files are opened in `formats.grib`, which describes the two traps of NCEP GRIB files
it avoids. The layering rule is formats/__init__'s.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from layercalc.constants import EARTH_MEAN_RADIUS, G0, T_ZERO_CELSIUS
from layercalc.errors import InputError
from layercalc.physics.grid import (
    LambertConformal, grid_to_earth_winds, lambert_forward, lambert_grid_rotation,
    lambert_inverse, lambert_map_factor, wraps_in_longitude,
)

__all__ = ["GridGeometry", "GriddedFields", "read_grid", "interpret_datasets", "require",
           "VARIABLES"]

GRIB_SUFFIXES = (".grib", ".grb", ".grib2", ".grb2", ".grib1", ".grb1")
NETCDF_SUFFIXES = (".nc", ".nc4", ".netcdf", ".cdf")


@dataclass(frozen=True)
class Variable:
    """Where a canonical variable comes from: CF standard names (grid-relative ones apart),
    GRIB short names, and whether it lives on pressure levels."""

    description: str
    standard_names: tuple[str, ...]
    grib_names: tuple[str, ...]
    on_levels: bool = True
    grid_relative_names: tuple[str, ...] = ()


VARIABLES = {
    "u": Variable("eastward wind", ("eastward_wind",), ("u",), grid_relative_names=("x_wind",)),
    "v": Variable("northward wind", ("northward_wind",), ("v",), grid_relative_names=("y_wind",)),
    "T": Variable("air temperature", ("air_temperature",), ("t",)),
    "z": Variable("geopotential height", ("geopotential_height", "geopotential"), ("gh", "z")),
    "RH": Variable("relative humidity", ("relative_humidity",), ("r",)),
    "q": Variable("specific humidity", ("specific_humidity",), ("q",)),
    "Td": Variable("dewpoint", ("dew_point_temperature",), ("dpt",)),
    "omega": Variable("omega (Dp/Dt)", ("lagrangian_tendency_of_air_pressure",
                                         "vertical_air_velocity_expressed_as_tendency_of_pressure"),
                      ("w",)),
    "ps": Variable("surface pressure", ("surface_air_pressure",), ("sp",), on_levels=False),
    "orography": Variable("orography", ("surface_altitude", "surface_geopotential"),
                          ("orog",), on_levels=False),
}
REQUIRED = ("u", "v", "T")
HUMIDITY = ("RH", "q", "Td")   # the first one found is used

# Unit text (as files write it) -> (SI scale, SI offset), per kind of quantity. A table, not
# a units library: only what model files carry. Sources: SI Brochure (2019) for the
# prefixes; 1 gpm = 1 m of geopotential height (WMO convention, common practice).
_UNITS = {
    "speed": {"m s-1": (1, 0), "m s**-1": (1, 0), "m/s": (1, 0), "m s^-1": (1, 0)},
    "temperature": {"K": (1, 0), "k": (1, 0), "degC": (1, T_ZERO_CELSIUS),
                    "celsius": (1, T_ZERO_CELSIUS), "C": (1, T_ZERO_CELSIUS)},
    "height": {"m": (1, 0), "gpm": (1, 0), "km": (1000, 0),
               "m2 s-2": (1 / G0, 0), "m**2 s**-2": (1 / G0, 0), "m^2 s^-2": (1 / G0, 0)},
    "fraction": {"%": (0.01, 0), "percent": (0.01, 0), "1": (1, 0), "": (1, 0),
                 "kg kg-1": (1, 0), "kg kg**-1": (1, 0), "kg/kg": (1, 0), "fraction": (1, 0)},
    "omega": {"Pa s-1": (1, 0), "Pa s**-1": (1, 0), "Pa/s": (1, 0), "hPa s-1": (100, 0)},
    "pressure": {"Pa": (1, 0), "hPa": (100, 0), "mbar": (100, 0), "millibar": (100, 0),
                 "mb": (100, 0), "kPa": (1000, 0)},
}
_KIND = {"u": "speed", "v": "speed", "T": "temperature", "Td": "temperature", "z": "height",
         "orography": "height", "RH": "fraction", "q": "fraction", "omega": "omega",
         "ps": "pressure"}


@dataclass(frozen=True)
class GridGeometry:
    """The horizontal grid. `kind` "latlon": `latitude` (ny,) and `longitude` (nx,) in
    degrees, `periodic` when the longitudes close the circle. `kind` "lambert": plane
    coordinates `x` (nx,), `y` (ny,) in m, 2-D `latitude`, `longitude`, the `projection`."""

    kind: str
    radius: float
    latitude: np.ndarray
    longitude: np.ndarray
    x: np.ndarray | None = None
    y: np.ndarray | None = None
    projection: LambertConformal | None = None
    periodic: bool = False

    def map_factor(self) -> np.ndarray:
        """Map factor (ny, nx) of a projected grid."""
        return lambert_map_factor(self.projection, self.latitude)

    def rotation(self) -> np.ndarray:
        """Angle (ny, nx) from the grid's y axis to true north [rad] (0 on lat-lon grids)."""
        if self.kind == "latlon":
            return np.zeros((self.latitude.size, self.longitude.size))
        return lambert_grid_rotation(self.projection, self.longitude)

    def latitude_2d(self) -> np.ndarray:
        if self.kind == "latlon":
            return np.broadcast_to(self.latitude[:, None], (self.latitude.size,
                                                            self.longitude.size))
        return self.latitude

    def longitude_2d(self) -> np.ndarray:
        if self.kind == "latlon":
            return np.broadcast_to(self.longitude[None, :], (self.latitude.size,
                                                             self.longitude.size))
        return self.longitude

    def fractional_index(self, latitude: float, longitude: float) -> tuple[float, float]:
        """(row, column) of a point as fractional grid indices."""
        if self.kind == "latlon":
            lat, lon = self.latitude, self.longitude
            row = float(np.interp(latitude, lat, np.arange(lat.size)) if lat[0] < lat[-1]
                        else np.interp(-latitude, -lat, np.arange(lat.size)))
            if not min(lat[0], lat[-1]) <= latitude <= max(lat[0], lat[-1]):
                row = -1.0
            step = lon[1] - lon[0]
            column = ((longitude - lon[0]) % 360.0) / step if step > 0 else \
                ((lon[0] - longitude) % 360.0) / -step
            if not self.periodic and column > lon.size - 1 + 1e-9:
                column = column - 360.0 / abs(step)
            return row, float(column)
        x, y = lambert_forward(self.projection, latitude, longitude)
        return float((y - self.y[0]) / (self.y[1] - self.y[0])), \
            float((x - self.x[0]) / (self.x[1] - self.x[0]))


@dataclass(frozen=True)
class GriddedFields:
    """Canonical fields (xarray Dataset, SI, lazily converted), their grid and what was said
    while reading them (`notes`: dropped levels, assumptions)."""

    dataset: object
    geometry: GridGeometry
    source: str
    humidity: str | None
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def levels(self) -> np.ndarray:
        """Pressure levels, surface first. [Pa]"""
        return np.asarray(self.dataset["level"].values, dtype=float)

    def has(self, name: str) -> bool:
        return name in self.dataset.data_vars


def require(modules: tuple[str, ...], extra: str, purpose: str) -> None:
    """Import optional packages or raise InputError naming the extra that provides them."""
    import importlib

    missing = []
    for module in modules:
        try:
            importlib.import_module(module)
        except ImportError:
            missing.append(module)
    if missing:
        raise InputError(f"{purpose} needs the optional package(s) {', '.join(missing)}",
                         hint=f"install them with: pip install 'layercalc[{extra}]'")


def read_grid(path: str | Path, chunks: dict | None = None,
              required: tuple[str, ...] = REQUIRED) -> GriddedFields:
    """Open a netCDF or GRIB file of model fields on pressure levels.

    `chunks` (canonical dims: {"y": 200, "x": 200, "time": 1}) makes every variable a lazy
    dask array, one chunk along the levels; the file is opened in its own natural pieces
    (a GRIB message, a netCDF chunk) and cut into these chunks after reading, so that no
    message is decoded twice. Without `chunks` xarray reads lazily without dask.
    """
    path = Path(path)
    if not path.is_file():
        raise InputError(f"no such file: {path}", hint="check the path and the file name")
    with open(path, "rb") as stream:
        magic = stream.read(8)
    is_grib = magic.startswith(b"GRIB") or path.suffix.lower() in GRIB_SUFFIXES
    is_netcdf = magic[:3] == b"CDF" or magic.startswith(b"\x89HDF")
    if not (is_grib or is_netcdf):
        raise InputError(f"{path} is neither netCDF nor GRIB (it starts with {magic[:4]!r})",
                         hint="give a CF-netCDF (.nc) or a GRIB (.grib2) file")
    if is_netcdf:
        require(("xarray", "netCDF4"), "grid", "reading netCDF")
        import xarray as xr

        if chunks:
            require(("dask",), "grid", "reading in chunks")
        try:
            dataset = xr.open_dataset(path, chunks={} if chunks is not None else None,
                                      decode_timedelta=False)
        except (OSError, ValueError) as exc:
            raise InputError(f"cannot read {path} as netCDF: {exc}") from None
        fields = interpret_datasets({"netcdf": dataset}, path.name, "netcdf", required)
    else:
        require(("xarray", "cfgrib", "eccodes"), "grib", "reading GRIB")
        if chunks is not None:
            require(("dask",), "grib", "reading in chunks")
        from layercalc.formats.grib import grib_inventory, open_grib

        wanted = {name: ("isobaricInhPa" if variable.on_levels else "surface",
                         variable.grib_names) for name, variable in VARIABLES.items()}
        fields = interpret_datasets(open_grib(path, grib_inventory(path), chunks, wanted),
                                    path.name, "grib", required)
    if chunks is None:
        return fields
    unknown = set(chunks) - {"y", "x", "time"}
    if unknown:
        raise InputError(f"chunks along {', '.join(sorted(unknown))}: only y, x and time "
                         f"can be chunked", hint="e.g. --chunks y=200,x=200 (levels stay "
                         "in one chunk)")
    wanted = {dim: size for dim, size in chunks.items() if dim in fields.dataset.dims}
    dataset = fields.dataset.chunk({**wanted, **({"level": -1} if "level" in
                                                  fields.dataset.dims else {})})
    return GriddedFields(dataset, fields.geometry, fields.source, fields.humidity,
                         fields.notes)


def interpret_datasets(datasets: dict, name: str, kind: str,
                       required: tuple[str, ...] = REQUIRED) -> GriddedFields:
    """Canonical fields from opened datasets: for "grib", {canonical name: dataset of one
    variable}; for "netcdf", {"netcdf": the whole dataset}. Never touches the file system."""
    import xarray as xr

    notes: list[str] = []
    found: dict[str, xr.DataArray] = {}
    grid_relative = False
    mapping: dict = {}
    if kind == "grib":
        for canonical, dataset in datasets.items():
            array = dataset[VARIABLES[canonical].grib_names[0]] \
                if VARIABLES[canonical].grib_names[0] in dataset else \
                next(iter(dataset.data_vars.values()))
            found[canonical] = array
        grid_relative = any(found[c].attrs.get("GRIB_uvRelativeToGrid") == 1
                            for c in ("u", "v") if c in found)
    else:
        dataset = datasets["netcdf"]
        for canonical, variable in VARIABLES.items():
            for var in dataset.data_vars.values():
                standard = var.attrs.get("standard_name", "")
                if standard in variable.standard_names or \
                        standard in variable.grid_relative_names:
                    found[canonical] = var
                    grid_relative |= standard in variable.grid_relative_names
                    break
        if "u" in found and "grid_mapping" in found["u"].attrs:
            holder = found["u"].attrs["grid_mapping"]
            if holder not in dataset.variables:
                raise InputError(f"{name}: grid mapping variable '{holder}' named by "
                                 f"'{found['u'].name}' is missing", location=name)
            mapping = dict(dataset[holder].attrs)
    missing = [c for c in required if c not in found]
    if missing:
        names = ", ".join(f"{c} ({VARIABLES[c].description})" for c in missing)
        how = "GRIB short names" if kind == "grib" else "CF standard_name attributes"
        raise InputError(f"no {names} on pressure levels",
                         location=name,
                         hint=f"layercalc looks for {how}: " + "; ".join(
                             f"{c}: {', '.join(VARIABLES[c].grib_names if kind == 'grib' else VARIABLES[c].standard_names + VARIABLES[c].grid_relative_names)}"
                             for c in missing))
    geometry = _geometry(found["u"], name, kind, mapping, notes)
    converted = {}
    for canonical, array in found.items():
        converted[canonical] = _to_canonical(array, canonical, name, kind, geometry)
    humidity = next((h for h in HUMIDITY if h in converted), None)
    for other in HUMIDITY:
        if other in converted and other != humidity:
            del converted[other]
    converted = _common_levels(converted, notes)
    if grid_relative and geometry.kind == "lambert":
        rotation = xr.DataArray(geometry.rotation(), dims=("y", "x"))
        u, v = converted["u"], converted["v"]
        cos, sin = np.cos(rotation), np.sin(rotation)
        converted["u"] = (u * cos + v * sin).assign_attrs(u.attrs)
        converted["v"] = (-u * sin + v * cos).assign_attrs(v.attrs)
        notes.append("winds given relative to the grid were turned to east and north")
    elif grid_relative:
        notes.append("winds flagged grid-relative on a latitude-longitude grid: there the "
                     "grid's axes are east and north, nothing to turn")
    if "ps" not in converted:
        notes.append("no surface pressure: no level is dropped as below ground")
    result = xr.Dataset(converted)
    valid = next((result[c] for c in ("valid_time", "time") if c in result.coords
                  and result[c].ndim == 0), None)
    for extra in ("time", "step", "valid_time"):
        if extra in result.coords and result[extra].ndim == 0:
            result = result.drop_vars(extra)
    if valid is not None:        # one time: kept as text (ISO 8601, UTC as the file gives it)
        result.attrs["valid_time"] = str(np.datetime_as_string(valid.values, unit="m"))
    result = result.assign_coords(latitude=(("y", "x"), geometry.latitude_2d()),
                                  longitude=(("y", "x"), geometry.longitude_2d()))
    return GriddedFields(result, geometry, name, humidity, tuple(notes))


_LEVEL_NAMES = ("isobaricInhPa", "level", "plev", "pressure", "lev", "isobaric")


def _dims(array) -> tuple[str | None, str, str]:
    """(level dim, y dim, x dim) of a variable: the level dim by name or by a pressure
    standard name or unit; the last two other dims (time and step apart) are y and x."""
    level = None
    for dim in array.dims:
        coordinate = array.coords.get(dim)
        attrs = coordinate.attrs if coordinate is not None else {}
        if dim in _LEVEL_NAMES or attrs.get("standard_name") == "air_pressure" or \
                attrs.get("units") in _UNITS["pressure"] and attrs.get("units"):
            level = dim
            break
    horizontal = [d for d in array.dims if d not in (level, "time", "step")]
    if len(horizontal) != 2:
        raise InputError(f"variable '{array.name}' has dims {tuple(array.dims)}",
                         hint="expected (level, y, x) or (y, x), with an optional time")
    return level, horizontal[0], horizontal[1]


def _geometry(array, name: str, kind: str, mapping: dict, notes: list[str]) -> GridGeometry:
    _, ydim, xdim = _dims(array)
    radius = _radius(array, kind, mapping, notes)
    grid = array.attrs.get("GRIB_gridType") if kind == "grib" else \
        mapping.get("grid_mapping_name", "latitude_longitude")
    if grid == "lambert" or grid == "lambert_conformal_conic":
        return _lambert_geometry(array, name, kind, mapping, ydim, xdim, radius)
    if grid not in ("regular_ll", "latitude_longitude"):
        raise InputError(f"{name}: the grid '{grid}' is not supported", location=name,
                         hint="supported: regular latitude-longitude grids and Lambert "
                              "conformal projections")
    latitude = np.asarray(array["latitude"].values if "latitude" in array.coords
                          else array[ydim].values, dtype=float)
    longitude = np.asarray(array["longitude"].values if "longitude" in array.coords
                           else array[xdim].values, dtype=float)
    if latitude.ndim != 1 or longitude.ndim != 1:
        raise InputError(f"{name}: latitude and longitude are not 1-D on a grid without a "
                         f"grid mapping", location=name,
                         hint="give a regular latitude-longitude grid or a grid_mapping")
    return GridGeometry("latlon", radius, latitude, longitude,
                        periodic=wraps_in_longitude(longitude))


def _radius(array, kind, mapping, notes) -> float:
    if kind == "grib":
        shape = array.attrs.get("GRIB_shapeOfTheEarth")
        if shape in (0, 6) and array.attrs.get("GRIB_radius"):
            return float(array.attrs["GRIB_radius"])
    elif "earth_radius" in mapping:
        return float(mapping["earth_radius"])
    notes.append(f"the file gives no sphere radius: {EARTH_MEAN_RADIUS:.0f} m used")
    return EARTH_MEAN_RADIUS


def _lambert_geometry(array, name, kind, mapping, ydim, xdim, radius) -> GridGeometry:
    latitude = np.asarray(array["latitude"].values, dtype=float)
    longitude = np.asarray(array["longitude"].values, dtype=float)
    if kind == "grib":
        a = array.attrs
        projection = LambertConformal(a["GRIB_Latin1InDegrees"], a["GRIB_Latin2InDegrees"],
                                      a["GRIB_LoVInDegrees"], a["GRIB_LaDInDegrees"], radius)
        x0, y0 = lambert_forward(projection, latitude[0, 0], longitude[0, 0])
        x = x0 + a["GRIB_DxInMetres"] * np.arange(array.sizes[xdim]) * (
            -1 if a.get("GRIB_iScansNegatively") else 1)
        y = y0 + a["GRIB_DyInMetres"] * np.arange(array.sizes[ydim]) * (
            1 if a.get("GRIB_jScansPositively", 1) else -1)
    else:
        try:
            parallels = np.atleast_1d(mapping["standard_parallel"]).astype(float)
            projection = LambertConformal(parallels[0], parallels[-1],
                                          float(mapping["longitude_of_central_meridian"]),
                                          float(mapping["latitude_of_projection_origin"]),
                                          radius)
        except KeyError as exc:
            raise InputError(f"{name}: the Lambert conformal grid mapping has no {exc}",
                             location=name) from None
        x = _plane(array[xdim], name)
        y = _plane(array[ydim], name)
    check_lat, check_lon = lambert_inverse(projection, *np.meshgrid(x, y))
    error = max(np.abs(check_lat - latitude).max(),
                np.abs((check_lon - longitude + 180.0) % 360.0 - 180.0).max())
    if error > 0.01:
        raise InputError(f"{name}: the latitudes and longitudes of the grid differ by up to "
                         f"{error:.2f} degrees from its Lambert conformal definition",
                         location=name, hint="check the grid mapping's parameters")
    return GridGeometry("lambert", radius, latitude, longitude, x, y, projection)


def _plane(coordinate, name) -> np.ndarray:
    units = coordinate.attrs.get("units", "m")
    scale = {"m": 1.0, "km": 1000.0}.get(units)
    if scale is None:
        raise InputError(f"{name}: plane coordinate '{coordinate.name}' in '{units}'",
                         location=name, hint="expected m or km")
    return np.asarray(coordinate.values, dtype=float) * scale


def _to_canonical(array, canonical, name, kind, geometry):
    """Rename dims to (time, level, y, x), levels in Pa surface first, values in SI."""
    level, ydim, xdim = _dims(array)
    if VARIABLES[canonical].on_levels and level is None:
        raise InputError(f"{name}: {canonical} ({VARIABLES[canonical].description}) has no "
                         f"pressure level axis", location=f"{name}:{array.name}")
    rename = {ydim: "y", xdim: "x"}
    if level is not None:
        rename[level] = "level"
    out = array.rename(rename)
    drop = [c for c in out.coords if c not in ("level", "time")]
    out = out.drop_vars(drop)
    if "step" in out.dims:
        out = out.rename(step="time")
    if level is not None:
        level_units = array[level].attrs.get("units", "hPa" if level == "isobaricInhPa" else "")
        scale = _UNITS["pressure"].get(level_units)
        if scale is None:
            raise InputError(f"{name}: pressure levels of '{array.name}' in '{level_units}'",
                             location=f"{name}:{array.name}",
                             hint="expected Pa, hPa, mbar or kPa")
        out = out.assign_coords(level=np.asarray(array[level].values, float) * scale[0])
        out = out.sortby("level", ascending=False)
    units = array.attrs.get("units", array.attrs.get("GRIB_units", ""))
    if canonical in ("z", "orography") and kind == "grib" and \
            array.attrs.get("GRIB_shortName") == "z":
        units = "m2 s-2"
    table = _UNITS[_KIND[canonical]]
    if units not in table:
        raise InputError(f"{name}: {canonical} ({VARIABLES[canonical].description}) in "
                         f"'{units}'", location=f"{name}:{array.name}",
                         hint=f"expected one of: {', '.join(repr(u) for u in table if u)}")
    scale, offset = table[units]
    out = out * scale + offset if (scale, offset) != (1, 0) else out
    return out.assign_attrs(source_name=str(array.name), source_units=units)


def _common_levels(converted, notes):
    """Keep the levels every variable on levels has; say which were dropped and why."""
    on_levels = {c: a for c, a in converted.items() if "level" in a.dims}
    sets = {c: set(np.asarray(a["level"].values, float).tolist()) for c, a in on_levels.items()}
    common = set.intersection(*sets.values())
    if not common:
        raise InputError("the variables share no pressure level",
                         hint="; ".join(f"{c}: {len(s)} levels" for c, s in sets.items()))
    dropped = set.union(*sets.values()) - common
    if dropped:
        lacking = "; ".join(
            f"{c} lacks {', '.join(f'{p / 100:g}' for p in sorted(dropped - s, reverse=True))}"
            for c, s in sets.items() if dropped - s)
        notes.append(f"level(s) {', '.join(f'{p / 100:g}' for p in sorted(dropped, reverse=True))}"
                     f" hPa dropped, not every variable is given there ({lacking} hPa)")
    keep = sorted(common, reverse=True)
    return {c: (a.sel(level=keep) if "level" in a.dims else a) for c, a in converted.items()}
