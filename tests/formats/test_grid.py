"""Tests of layercalc.formats.grid: reading model fields from GRIB and CF-netCDF.

Data: tests/data/grid/ (origins and licences in its README.md): NCEP NAM grid 211 and
NCEP GFS 2.5-degree samples shipped in the cfgrib 0.9.15.1 and pygrib 2.1.8 source
packages, cut by tests/data/grid/make_subsets.py.

Where the expected values come from is said beside each check: "ecCodes 2.50" (decoding the
same messages directly), "metpy 1.7.1" (an independent divergence), "pyproj 3.7.2",
"derived" (unit conversions worked out by hand), or the file's own inventory.
"""

import functools
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

from tests.helpers import optional  # noqa: E402

xr, _ = optional("xarray", "netCDF4")

from layercalc.errors import InputError, LayercalcError  # noqa: E402
from layercalc.formats import grid as reader  # noqa: E402
from layercalc.formats.grib import grib_inventory  # noqa: E402
from layercalc.physics.grid import divergence_latlon  # noqa: E402

DATA = Path(__file__).resolve().parents[1] / "data" / "grid"
NAM_GRIB = DATA / "nam211_subset.grib2"
GFS_GRIB = DATA / "gfs_region_subset.grib2"
GFS_NC = DATA / "gfs_global_uv.nc"
NAM_NC = DATA / "nam211_lambert.nc"

optional("cfgrib", "eccodes", "dask")  # the grib extra, for the whole module


@functools.lru_cache(maxsize=None)
def read(path):
    """Each sample read once per test session (a GRIB file is opened once per variable)."""
    return reader.read_grid(path)


def decode_fields(path, short_name, multi):
    """Every field `short_name` on isobaric levels, decoded with ecCodes directly."""
    import eccodes

    (eccodes.codes_grib_multi_support_on if multi else eccodes.codes_grib_multi_support_off)()
    fields = {}
    try:
        with open(path, "rb") as stream:
            if multi:
                eccodes.codes_grib_multi_support_reset_file(stream)
            while (handle := eccodes.codes_grib_new_from_file(stream)) is not None:
                if eccodes.codes_get(handle, "shortName") == short_name and \
                        eccodes.codes_get(handle, "typeOfLevel") == "isobaricInhPa":
                    fields[eccodes.codes_get(handle, "level")] = eccodes.codes_get_values(handle)
                eccodes.codes_release(handle)
    finally:
        eccodes.codes_grib_multi_support_off()
    return fields


def test_multi_field_messages_give_v():
    # The trap: NAM packs u and v of a level in one message. Without multi-field support
    # ecCodes sees u only (ecCodes 2.50, the file's own inventory: 19 levels of each).
    assert decode_fields(NAM_GRIB, "v", multi=False) == {}
    v_direct = decode_fields(NAM_GRIB, "v", multi=True)
    assert len(v_direct) == 19
    assert grib_inventory(NAM_GRIB)[("v", "isobaricInhPa")] == sorted(v_direct)
    # the reader's v, turned back to the grid, is ecCodes' v (float32 storage)
    fields = read(NAM_GRIB)
    assert fields.levels.size == 19 and fields.has("v")
    u, v = fields.dataset["u"].sel(level=50000.0), fields.dataset["v"].sel(level=50000.0)
    rotation = fields.geometry.rotation()
    v_grid = u * np.sin(rotation) + v * np.cos(rotation)
    assert_allclose(v_grid.values.ravel(), v_direct[500], rtol=1e-6, atol=1e-5)
    assert not np.allclose(u.values, v.values)


def test_variables_with_their_own_level_sets_are_kept():
    # The trap: opened with one filter for all isobaric fields, cfgrib keeps the level set
    # it met first (26 levels) and skips relative humidity (25) and omega (21).
    together = xr.open_dataset(GFS_GRIB, engine="cfgrib", backend_kwargs={
        "filter_by_keys": {"typeOfLevel": "isobaricInhPa"}, "indexpath": ""})
    assert "r" not in together.data_vars and "w" not in together.data_vars
    fields = read(GFS_GRIB)
    assert fields.has("RH") and fields.has("omega") and fields.humidity == "RH"
    # levels every variable has: the 21 omega levels, 1000-100 hPa (file inventory)
    assert fields.levels.size == 21
    assert fields.levels[0] == 100000.0 and fields.levels[-1] == 10000.0
    assert any("70, 50, 30, 20, 10 hPa dropped" in note for note in fields.notes)


def test_grib_units_and_order():
    fields = read(GFS_GRIB)
    ds = fields.dataset
    assert list(ds["T"].dims) == ["level", "y", "x"]
    assert np.all(np.diff(fields.levels) < 0)          # surface first
    # relative humidity from percent to a fraction (derived: / 100); ecCodes 2.50 values
    rh_direct = decode_fields(GFS_GRIB, "r", multi=True)[500]
    assert_allclose(ds["RH"].sel(level=50000.0).values.ravel(), rh_direct / 100, rtol=1e-6)
    assert 0.0 <= float(ds["RH"].min()) and float(ds["RH"].max()) <= 1.05
    assert 40000.0 < float(ds["ps"].min()) and float(ds["ps"].max()) < 110000.0
    assert fields.geometry.kind == "latlon" and not fields.geometry.periodic
    assert fields.geometry.radius == 6371229.0          # GRIB shape of the Earth 6


def test_lambert_grid_from_grib_matches_pyproj():
    pyproj = pytest.importorskip("pyproj")
    geometry = read(NAM_GRIB).geometry
    assert geometry.kind == "lambert" and geometry.projection.central_meridian == 265.0
    proj = pyproj.Proj(proj="lcc", lat_1=25, lat_2=25, lat_0=25, lon_0=265, R=6371229.0)
    x, y = proj(geometry.longitude, geometry.latitude)
    # the plane coordinates built from the first point and Dx, Dy agree with the
    # file's latitudes and longitudes projected by pyproj 3.7.2 to within 50 m (the
    # file's coordinates are given to 1e-6 degree and rounded in the grid definition)
    assert np.abs(x - geometry.x[None, :]).max() < 50.0
    assert np.abs(y - geometry.y[:, None]).max() < 50.0


def test_netcdf_lambert_subset_equals_the_grib():
    # nam211_lambert.nc holds grid-relative x_wind/y_wind cut from the same messages;
    # after turning, both readers must give the same earth-relative winds (float32)
    grib = read(NAM_GRIB).dataset
    netcdf_fields = reader.read_grid(NAM_NC)
    nc = netcdf_fields.dataset
    window = dict(y=slice(15, 45), x=slice(25, 65))
    for name in ("u", "v", "T", "z", "RH", "omega"):
        assert_allclose(nc[name].values, grib[name].isel(**window).sel(level=nc.level).values,
                        rtol=1e-6, atol=1e-4)
    assert_allclose(nc["ps"].values, grib["ps"].isel(**window).values, rtol=1e-6)
    assert any("turned to east and north" in note for note in netcdf_fields.notes)


def test_gfs_divergence_against_metpy():
    # metpy 1.7.1 `divergence` with the lat-lon metric terms, on the same sphere
    # (6371229 m, GFS's GRIB). Both are second-order centred differences, but metpy takes
    # dx as the geodesic distance between neighbours and corrects with derivatives of its
    # map factors; the two differ by a relative amount growing as tan(latitude):
    # measured rms differences 9e-5 (|lat| < 30), 1.1e-3 (30-60), 4.4e-3 (60-75) of the
    # field's rms. Pole rows and the row beside them are left out (metpy does not treat
    # the pole; we take the polar-cap mean), and so are the first and last columns (metpy
    # does not wrap in longitude).
    mpcalc = pytest.importorskip("metpy.calc")
    fields = reader.read_grid(GFS_NC, required=("u", "v"))
    ds = fields.dataset
    radius = fields.geometry.radius
    assert radius == 6371229.0
    ours = divergence_latlon(ds["u"].values, ds["v"].values, fields.geometry.latitude,
                             fields.geometry.longitude, radius)
    raw = xr.open_dataset(GFS_NC).metpy.assign_crs(grid_mapping_name="latitude_longitude",
                                                   earth_radius=radius)
    theirs = mpcalc.divergence(raw["u"], raw["v"]).metpy.dequantify().values
    theirs = theirs[np.argsort(raw.plev.values)[::-1]]          # ours: surface first
    latitude = fields.geometry.latitude
    for low, high, bound in ((0, 30, 3e-4), (30, 60, 3e-3), (60, 75, 1e-2)):
        rows = (np.abs(latitude) >= low) & (np.abs(latitude) < high)
        difference = (ours - theirs)[:, rows, 1:-1]
        reference = theirs[:, rows, 1:-1]
        assert np.sqrt(np.mean(difference ** 2) / np.mean(reference ** 2)) < bound
    # the seam: our first column equals metpy's interior formula applied across it, so
    # compare with a copy rolled by half the globe (metpy 1.7.1 again)
    rolled = raw.roll(longitude=72, roll_coords=True)
    rolled = rolled.assign_coords(longitude=np.unwrap(rolled.longitude.values, period=360))
    seam = mpcalc.divergence(rolled["u"], rolled["v"]).metpy.dequantify().values
    seam = np.roll(seam[np.argsort(raw.plev.values)[::-1]], -72, axis=-1)
    rows = np.abs(latitude) < 30
    assert_allclose(ours[:, rows, 0], seam[:, rows, 0], rtol=2e-3, atol=1e-9)


def test_netcdf_units_are_converted(tmp_path):
    # built in memory: T in degC, geopotential in m2 s-2, RH in %, levels in Pa (derived
    # conversions: + 273.15 K, / g0 = 9.80665, / 100)
    levels = np.array([50000.0, 85000.0])
    lat, lon = np.array([40.0, 45.0, 50.0]), np.array([0.0, 5.0, 10.0, 15.0])
    shape = (2, 3, 4)

    def var(value, standard, units):
        return xr.DataArray(np.full(shape, value), dims=("plev", "lat", "lon"),
                            attrs={"standard_name": standard, "units": units})

    ds = xr.Dataset({"ua": var(1.0, "eastward_wind", "m s-1"),
                     "va": var(2.0, "northward_wind", "m s-1"),
                     "ta": var(-20.0, "air_temperature", "degC"),
                     "zg": var(9806.65, "geopotential", "m2 s-2"),
                     "hur": var(50.0, "relative_humidity", "%")},
                    coords={"plev": ("plev", levels, {"standard_name": "air_pressure",
                                                      "units": "Pa"}),
                            "lat": ("lat", lat, {"standard_name": "latitude"}),
                            "lon": ("lon", lon, {"standard_name": "longitude"})})
    fields = reader.interpret_datasets({"netcdf": ds}, "memory.nc", "netcdf")
    out = fields.dataset
    assert_allclose(fields.levels, [85000.0, 50000.0])
    assert_allclose(out["T"].values, 253.15)
    assert_allclose(out["z"].values, 1000.0)
    assert_allclose(out["RH"].values, 0.5)
    assert fields.geometry.kind == "latlon" and not fields.geometry.periodic
    ds["ta"].attrs["units"] = "F"
    with pytest.raises(InputError) as caught:
        reader.interpret_datasets({"netcdf": ds}, "memory.nc", "netcdf")
    assert "memory.nc:ta" in caught.value.format() and "'F'" in caught.value.format()


def test_missing_variables_are_named():
    ds = xr.open_dataset(GFS_NC)
    with pytest.raises(InputError) as caught:
        reader.interpret_datasets({"netcdf": ds}, "gfs_global_uv.nc", "netcdf")
    text = caught.value.format()
    assert "gfs_global_uv.nc: input error: no T (air temperature)" in text
    assert "air_temperature" in text


def test_missing_extra_is_named(monkeypatch):
    import importlib

    real = importlib.import_module

    def fake(name, *args, **kwargs):
        if name == "cfgrib":
            raise ImportError("no cfgrib")
        return real(name, *args, **kwargs)

    monkeypatch.setattr(importlib, "import_module", fake)
    with pytest.raises(InputError) as caught:
        reader.read_grid(NAM_GRIB)
    assert "layercalc[grib]" in caught.value.format() and "cfgrib" in caught.value.format()


def test_not_a_grid_file(tmp_path):
    path = tmp_path / "case.layers"
    path.write_text("title \"x\"\n")
    with pytest.raises(LayercalcError) as caught:
        reader.read_grid(path)
    assert "neither netCDF nor GRIB" in caught.value.format()
    with pytest.raises(InputError):
        reader.read_grid(tmp_path / "absent.nc")
