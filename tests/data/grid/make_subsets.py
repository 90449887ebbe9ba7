"""Cut the gridded test data in this folder from two public sample files.

Sources (registry packages, fetched with pip's own client):

    pip download --no-binary :all: --no-deps cfgrib==0.9.15.1 -d /tmp/cfgrib
        -> cfgrib-0.9.15.1/nam.t00z.awp21100.tm00.grib2 (NCEP NAM, grid 211)
    pip download --no-binary pygrib --no-deps pygrib==2.1.8 -d /tmp/pygrib
        -> pygrib-2.1.8/sampledata/gfs.grb (NCEP GFS, 2.5 degrees)

Run: python tests/data/grid/make_subsets.py /tmp/cfgrib/cfgrib-0.9.15.1.tar.gz \
         /tmp/pygrib/pygrib-2.1.8.tar.gz
(the .tar.gz files or their unpacked folders). Needs eccodes, xarray, cfgrib, netCDF4.

Outputs (see README.md for what each is for):
- nam211_subset.grib2: the NAM messages of u/v (one multi-field message per level), t, gh,
  r, w on all 19 isobaric levels, and sp and orog, copied byte for byte.
- gfs_region_subset.grib2: the GFS fields on isobaric levels (gh, t, u, v on 26 levels,
  r on 25, w on 21: different level sets) and sp, orog, cut to 20-60 N, 250-310 E and
  re-encoded from ecCodes' GRIB2 sample with simple packing (16 bits).
- gfs_global_uv.nc: GFS u and v at 850, 500 and 250 hPa on the whole 2.5-degree grid
  (CF netCDF, pressure coordinate in Pa).
- nam211_lambert.nc: NAM x_wind, y_wind (grid-relative), air temperature, geopotential
  height, relative humidity and omega at 1000-100 hPa every 100 hPa, surface pressure and
  orography, on a 40 x 30 window of grid 211, CF netCDF with a lambert_conformal_conic
  grid mapping.
"""

from __future__ import annotations

import sys
import tarfile
import tempfile
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
NAM_MEMBER = "cfgrib-0.9.15.1/nam.t00z.awp21100.tm00.grib2"
GFS_MEMBER = "pygrib-2.1.8/sampledata/gfs.grb"
NAM_ISOBARIC = {"u", "t", "gh", "r", "w"}     # "u" messages carry v as a second field
SURFACE = {"sp", "orog"}
GFS_ISOBARIC = {"u", "v", "t", "gh", "r", "w"}
GFS_BOX = dict(north=60.0, south=20.0, west=250.0, east=310.0)
NAM_WINDOW = dict(y=slice(15, 45), x=slice(25, 65))


def _source(path: Path, member: str, workdir: Path) -> Path:
    path = Path(path)
    if path.is_dir():
        return path.parent / member if (path.parent / member).exists() else path / member.split("/", 1)[1]
    with tarfile.open(path) as archive:
        archive.extract(member, workdir, filter="data")
    return workdir / member


def _messages(path: Path, fields: bool = False):
    """One handle per physical message, or with `fields` one per field (the GFS file, like
    NAM, packs u and v into one multi-field message)."""
    import eccodes

    if fields:
        eccodes.codes_grib_multi_support_on()
    else:
        eccodes.codes_grib_multi_support_off()
    with open(path, "rb") as stream:
        while (handle := eccodes.codes_grib_new_from_file(stream)) is not None:
            yield handle
            eccodes.codes_release(handle)


def cut_nam_grib(source: Path, target: Path) -> None:
    import eccodes

    with open(target, "wb") as out:
        for handle in _messages(source):
            name = eccodes.codes_get(handle, "shortName")
            level_type = eccodes.codes_get(handle, "typeOfLevel")
            if (level_type == "isobaricInhPa" and name in NAM_ISOBARIC) or \
                    (level_type == "surface" and name in SURFACE):
                out.write(eccodes.codes_get_message(handle))


def cut_gfs_grib(source: Path, target: Path) -> None:
    import eccodes

    box = GFS_BOX
    with open(target, "wb") as out:
        for handle in _messages(source, fields=True):
            name = eccodes.codes_get(handle, "shortName")
            level_type = eccodes.codes_get(handle, "typeOfLevel")
            if not ((level_type == "isobaricInhPa" and name in GFS_ISOBARIC)
                    or (level_type == "surface" and name in SURFACE)):
                continue
            ni, nj = eccodes.codes_get(handle, "Ni"), eccodes.codes_get(handle, "Nj")
            values = eccodes.codes_get_values(handle).reshape(nj, ni)
            lat = np.linspace(90.0, -90.0, nj)
            lon = np.arange(ni) * 360.0 / ni
            rows = np.flatnonzero((lat <= box["north"]) & (lat >= box["south"]))
            cols = np.flatnonzero((lon >= box["west"]) & (lon <= box["east"]))
            clone = eccodes.codes_grib_new_from_samples("GRIB2")  # regular_ll, simple
            for key in ("centre", "dataDate", "dataTime", "discipline", "parameterCategory",
                        "parameterNumber", "shapeOfTheEarth", "stepUnits", "forecastTime"):
                eccodes.codes_set(clone, key, eccodes.codes_get(handle, key))
            eccodes.codes_set(clone, "typeOfLevel", level_type)
            eccodes.codes_set(clone, "level", eccodes.codes_get(handle, "level"))
            eccodes.codes_set(clone, "Ni", cols.size)
            eccodes.codes_set(clone, "Nj", rows.size)
            eccodes.codes_set(clone, "iDirectionIncrementInDegrees", 360.0 / ni)
            eccodes.codes_set(clone, "jDirectionIncrementInDegrees", 180.0 / (nj - 1))
            eccodes.codes_set(clone, "jScansPositively", 0)
            eccodes.codes_set(clone, "latitudeOfFirstGridPointInDegrees", float(lat[rows[0]]))
            eccodes.codes_set(clone, "latitudeOfLastGridPointInDegrees", float(lat[rows[-1]]))
            eccodes.codes_set(clone, "longitudeOfFirstGridPointInDegrees", float(lon[cols[0]]))
            eccodes.codes_set(clone, "longitudeOfLastGridPointInDegrees", float(lon[cols[-1]]))
            eccodes.codes_set(clone, "bitsPerValue", 16)
            eccodes.codes_set_values(clone, values[np.ix_(rows, cols)].ravel())
            if eccodes.codes_get(clone, "shortName") != name:
                raise RuntimeError(f"re-encoded {name} reads back as "
                                   f"{eccodes.codes_get(clone, 'shortName')}")
            out.write(eccodes.codes_get_message(clone))
            eccodes.codes_release(clone)


def _open(path, short_name, level_type="isobaricInhPa"):
    import xarray as xr

    return xr.open_dataset(path, engine="cfgrib", backend_kwargs={
        "filter_by_keys": {"shortName": short_name, "typeOfLevel": level_type},
        "indexpath": ""})[short_name]


def write_gfs_global(source: Path, target: Path) -> None:
    import xarray as xr

    fields = {}
    for name, standard in (("u", "eastward_wind"), ("v", "northward_wind")):
        data = _open(source, name).sel(isobaricInhPa=[850.0, 500.0, 250.0]).astype("float32")
        data = data.rename(isobaricInhPa="plev").assign_coords(
            plev=("plev", data.isobaricInhPa.values * 100.0))
        data = data.drop_vars([c for c in data.coords if c not in ("plev", "latitude", "longitude")])
        data.attrs = {"standard_name": standard, "units": "m s-1", "grid_mapping": "crs",
                      "long_name": f"{standard.replace('_', ' ')} (NCEP GFS, 72 h forecast)"}
        fields[name] = data
    ds = xr.Dataset(fields)
    ds["crs"] = xr.DataArray(np.int32(0), attrs={  # the sphere GFS's GRIB states (shape 6)
        "grid_mapping_name": "latitude_longitude", "earth_radius": 6371229.0})
    ds.plev.attrs = {"standard_name": "air_pressure", "units": "Pa", "positive": "down",
                     "axis": "Z"}
    ds.latitude.attrs = {"standard_name": "latitude", "units": "degrees_north"}
    ds.longitude.attrs = {"standard_name": "longitude", "units": "degrees_east"}
    ds.attrs = {"Conventions": "CF-1.8", "source": "NCEP GFS 2.5-degree sample in pygrib 2.1.8 "
                "(sampledata/gfs.grb), 2011-10-08 00 UTC + 72 h; cut by make_subsets.py"}
    encoding = {name: {"zlib": True, "complevel": 9} for name in fields}
    ds.to_netcdf(target, encoding=encoding, format="NETCDF4")


def write_nam_lambert(source: Path, target: Path) -> None:
    import xarray as xr

    levels = [1000.0, 900.0, 800.0, 700.0, 600.0, 500.0, 400.0, 300.0, 200.0, 100.0]
    table = {"u": ("x_wind", "m s-1"), "v": ("y_wind", "m s-1"),
             "t": ("air_temperature", "K"), "gh": ("geopotential_height", "m"),
             "r": ("relative_humidity", "%"),
             "w": ("lagrangian_tendency_of_air_pressure", "Pa s-1")}
    sample = _open(source, "u")
    attrs = sample.attrs
    first_lat = attrs["GRIB_latitudeOfFirstGridPointInDegrees"]
    first_lon = attrs["GRIB_longitudeOfFirstGridPointInDegrees"]
    dx, dy = attrs["GRIB_DxInMetres"], attrs["GRIB_DyInMetres"]
    # plane coordinates from the grid's own definition (spherical Lambert, R = 6371229 m)
    sys.path.insert(0, str(HERE.parents[2]))
    from layercalc.physics.grid import LambertConformal, lambert_forward

    projection = LambertConformal(25.0, 25.0, 265.0, 25.0, 6371229.0)
    x0, y0 = lambert_forward(projection, first_lat, first_lon)
    ny, nx = sample.shape[-2:]
    x = x0 + dx * np.arange(nx)
    y = y0 + dy * np.arange(ny)
    fields = {}
    for name, (standard, units) in table.items():
        data = _open(source, name).sel(isobaricInhPa=levels).astype("float32")
        data = data.isel(**NAM_WINDOW).rename(isobaricInhPa="pressure")
        data = data.drop_vars([c for c in data.coords
                               if c not in ("pressure", "latitude", "longitude")])
        data.attrs = {"standard_name": standard, "units": units,
                      "grid_mapping": "lambert_conformal", "coordinates": "latitude longitude"}
        fields[{"u": "ua", "v": "va", "t": "ta", "gh": "zg", "r": "hur", "w": "wap"}[name]] = data
    for name, standard, short in (("ps", "surface_air_pressure", "sp"),
                                  ("orog", "surface_altitude", "orog")):
        data = _open(source, short, "surface").isel(**NAM_WINDOW).astype("float32")
        data = data.drop_vars([c for c in data.coords if c not in ("latitude", "longitude")])
        data.attrs = {"standard_name": standard, "units": "Pa" if short == "sp" else "m",
                      "grid_mapping": "lambert_conformal", "coordinates": "latitude longitude"}
        fields[name] = data
    ds = xr.Dataset(fields)
    ds = ds.assign_coords(x=("x", x[NAM_WINDOW["x"]] / 1000.0), y=("y", y[NAM_WINDOW["y"]] / 1000.0))
    ds.x.attrs = {"standard_name": "projection_x_coordinate", "units": "km"}
    ds.y.attrs = {"standard_name": "projection_y_coordinate", "units": "km"}
    ds.pressure.attrs = {"standard_name": "air_pressure", "units": "hPa", "positive": "down"}
    ds.latitude.attrs = {"standard_name": "latitude", "units": "degrees_north"}
    ds.longitude.attrs = {"standard_name": "longitude", "units": "degrees_east"}
    ds["lambert_conformal"] = xr.DataArray(np.int32(0), attrs={
        "grid_mapping_name": "lambert_conformal_conic", "standard_parallel": 25.0,
        "longitude_of_central_meridian": 265.0, "latitude_of_projection_origin": 25.0,
        "earth_radius": 6371229.0})
    ds.attrs = {"Conventions": "CF-1.8", "source": "NCEP NAM grid 211 sample in cfgrib "
                "0.9.15.1 (nam.t00z.awp21100.tm00.grib2), 2018-09-17 00 UTC analysis; "
                "cut by make_subsets.py"}
    encoding = {name: {"zlib": True, "complevel": 9} for name in fields}
    ds.to_netcdf(target, encoding=encoding, format="NETCDF4")


def main(argv: list[str]) -> None:
    import eccodes

    cfgrib_sdist, pygrib_sdist = argv
    with tempfile.TemporaryDirectory() as work:
        work = Path(work)
        nam = _source(Path(cfgrib_sdist), NAM_MEMBER, work)
        gfs = _source(Path(pygrib_sdist), GFS_MEMBER, work)
        cut_nam_grib(nam, HERE / "nam211_subset.grib2")
        cut_gfs_grib(gfs, HERE / "gfs_region_subset.grib2")
        eccodes.codes_grib_multi_support_off()
        write_gfs_global(gfs, HERE / "gfs_global_uv.nc")
        write_nam_lambert(nam, HERE / "nam211_lambert.nc")
    for path in sorted(HERE.glob("*.grib2")) + sorted(HERE.glob("*.nc")):
        print(f"{path.name}: {path.stat().st_size / 1024:.0f} KiB")


if __name__ == "__main__":
    main(sys.argv[1:])
