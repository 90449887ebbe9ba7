"""Tests of layercalc.evaluation.grid and grid_compare: the sheet over every column.

Where the expected values come from:
- "the single-column sheet": the same column written as a `.layers` text (layers between
  the levels above ground, layer means of the two levels, surface height at the lowest
  level above ground) and evaluated by layercalc's ordinary path (`layercalc.loads`); the
  grid's vectorised kernel, with its zero-depth masked layers, must give the same numbers
  to 1e-9 (relative).
- "physics.grid": the divergence functions tested in tests/physics/test_grid.py.
- "NAM's omega": the model's own omega in the same file (NCEP NAM grid 211 analysis).
"""

import functools
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

from tests.helpers import optional  # noqa: E402

optional("dask", "cfgrib", "netCDF4", "xarray")

from layercalc.api import loads  # noqa: E402
from layercalc.evaluation import grid as engine  # noqa: E402
from layercalc.evaluation.grid_compare import compare_with_model  # noqa: E402
from layercalc.formats.grid import read_grid  # noqa: E402
from layercalc.physics.grid import divergence_latlon, divergence_projected  # noqa: E402

DATA = Path(__file__).resolve().parents[1] / "data" / "grid"
USER = """title "Grid test"
option integrate = from_surface
option adjust = obrien
cell omega_surface = 0 [Pa/s]
column lapse_rate [K/km] = (T - above(T, T)) / (above(z_bottom, z_top) - z_bottom)
cell mean_div_aloft [1e-5 s^-1] = sum(where(p_top < 50000 [Pa], div * dp, 0 [Pa/s])) / sum(dp)
"""


@functools.lru_cache(maxsize=None)
def fields(name, chunks=None):
    return read_grid(DATA / name, chunks=dict(chunks) if chunks else None)


@functools.lru_cache(maxsize=None)
def nam_result(user_text=USER, chunks=(("x", 31), ("y", 22))):
    return engine.evaluate_grid(fields("nam211_subset.grib2", chunks), user_text).compute()


def single_column_text(f, result, y, x, user_text):
    """The column at (y, x) as an ordinary sheet: only the layers above ground."""
    ds = f.dataset.isel(y=y, x=x)
    levels = f.levels
    keep = levels <= float(ds["ps"])
    p = levels[keep]
    T = ds["T"].values[keep].astype(float)
    RH = ds["RH"].values[keep].astype(float)
    div = result["divergence"].isel(y=y, x=x).values[keep].astype(float)
    rows = []
    for k in range(p.size - 1):
        rows.append(f"  {p[k] / 100:.10g} {p[k + 1] / 100:.10g} {float(T[k] + T[k + 1]) / 2!r} "
                    f"{float(RH[k] + RH[k + 1]) / 2!r} {float(div[k] + div[k + 1]) / 2!r}")
    z0 = float(ds["z"].values[keep][0])
    return (user_text + f"cell surface_height = {z0!r} m\nlayers\n"
            "  p_bottom [hPa] p_top [hPa] T [K] RH [1] div [s^-1]\n" + "\n".join(rows)
            + "\nend\n"), int(keep.sum())


@pytest.mark.parametrize("user_text", [USER, ""], ids=["from_surface_obrien", "defaults"])
@pytest.mark.parametrize("y, x", [(30, 40), (40, 20), (10, 70)])
def test_every_column_equals_the_single_column_sheet(y, x, user_text):
    f = fields("nam211_subset.grib2", (("x", 31), ("y", 22)))
    result = nam_result(user_text)
    text, kept = single_column_text(f, result, y, x, user_text)
    single = loads(text).evaluate()
    layers = slice(f.levels.size - kept, None)   # the grid's layers above ground
    for name in ("thickness", "z_top", "omega_bottom", "omega_top", "w_top", "div_adjusted",
                 "lapse_rate", "Tv"):
        if name not in single.si_columns:
            continue
        got = result[name].isel(y=y, x=x).values
        assert np.isnan(got[:f.levels.size - kept]).all()     # below ground: masked
        assert_allclose(got[layers], single.si_columns[name], rtol=1e-9, atol=1e-12)
    for name in ("surface_pressure_tendency", "top_mismatch", "column_thickness",
                 "dines_ratio", "mean_div_aloft", "max_ascent", "omega_surface",
                 "max_ascent_pressure"):
        if name not in result:
            continue
        assert_allclose(float(result[name].isel(y=y, x=x)), single.si_cells[name],
                        rtol=1e-9, atol=1e-12)
    lowest = single.summary["level_of_nondivergence"] if "level_of_nondivergence" in \
        single.summary else None
    if lowest:
        assert_allclose(float(result["level_of_nondivergence"].isel(y=y, x=x)), lowest[0],
                        rtol=1e-9)


def test_chunking_does_not_change_the_result():
    # one chunk against blocks of 31 x 22 (and a block edge through the comparison point)
    whole = engine.evaluate_grid(fields("nam211_subset.grib2"), USER).compute()
    blocks = nam_result()
    for name in ("divergence", "omega_top", "surface_pressure_tendency", "lapse_rate"):
        assert_allclose(whole[name].values, blocks[name].values, rtol=1e-12, atol=0,
                        equal_nan=True)


def test_grid_divergence_equals_the_physics_functions():
    # physics.grid on whole numpy arrays, against the chunked, lazily assembled field
    f = fields("nam211_subset.grib2", (("x", 31), ("y", 22)))
    g = f.geometry
    u, v = f.dataset["u"].values, f.dataset["v"].values
    rotation = g.rotation()
    u_grid = u * np.cos(rotation) - v * np.sin(rotation)
    v_grid = u * np.sin(rotation) + v * np.cos(rotation)
    want = divergence_projected(u_grid, v_grid, g.x, g.y, g.map_factor())
    assert_allclose(nam_result()["divergence"].values, want, rtol=1e-12, atol=1e-18)
    # a global lat-lon grid: seam and poles through the lazy path (chunks across both)
    glob = read_grid(DATA / "gfs_global_uv.nc", chunks={"x": 50, "y": 30}, required=("u", "v"))
    lazy = engine.grid_divergence(glob).values
    want = divergence_latlon(glob.dataset["u"].values, glob.dataset["v"].values,
                             glob.geometry.latitude, glob.geometry.longitude,
                             glob.geometry.radius)
    assert_allclose(lazy, want, rtol=1e-9, atol=1e-16)   # rounding (chunk-local seams)


def test_kinematic_omega_against_the_models_omega():
    # NAM's omega (the file's own) against kinematic omega from the file's winds.
    # Measured (area-weighted, points above ground): integrated from the top (omega = 0 at
    # 100 hPa), correlation 0.54-0.58 from 750 to 250 hPa falling to 0.45 at 900 hPa and
    # 0.10 at 1000 hPa, rms differences 7-12 hPa/h against a model rms of 8-15 hPa/h (at
    # 900 hPa and below the difference exceeds the model's own rms: the integration from
    # the top carries every level's divergence error down); integrated from the ground
    # with O'Brien's adjustment, 0.57-0.64 from 900 to 400 hPa. Not higher because grid
    # 211 is an 81 km interpolation of the native 12 km grid, so its divergence misses the
    # small scales (convection, terrain) that carry much of the model's omega, and the
    # winds are packed to 13 bits. The checks guard the sign and the size of the match,
    # not a tuned value.
    f = fields("nam211_subset.grib2", (("x", 31), ("y", 22)))
    result = engine.evaluate_grid(f, "").compute()
    rows = {round(r.pressure / 100): r for r in compare_with_model(result, f)}
    for level in (700, 500, 300):
        assert 0.5 < rows[level].correlation < 0.7
        assert rows[level].rms_difference < rows[level].rms_model
    assert rows[1000].correlation < rows[900].correlation < rows[700].correlation
    adjusted = {round(r.pressure / 100): r for r in compare_with_model(nam_result(), f)}
    for level in (900, 700, 500):
        assert 0.5 < adjusted[level].correlation < 0.7
        assert adjusted[level].rms_difference < adjusted[level].rms_model
    # the same with the model's omega shuffled in space has no correlation (derived:
    # independent fields), so the match above is not produced by the statistics themselves
    shuffled = f.dataset.copy()
    rng = np.random.default_rng(18)
    values = shuffled["omega"].values.copy()
    values = values.reshape(values.shape[0], -1)[:, rng.permutation(values[0].size)]
    shuffled["omega"] = (shuffled["omega"].dims, values.reshape(shuffled["omega"].shape))
    fake = type(f)(shuffled, f.geometry, f.source, f.humidity, f.notes)
    for row in compare_with_model(result, fake):
        if 30000 <= row.pressure <= 90000:
            assert abs(row.correlation) < 0.1


def test_surface_masking_and_notes():
    f = fields("nam211_subset.grib2", (("x", 31), ("y", 22)))
    result = nam_result()
    ps = f.dataset["ps"].values
    below = f.levels[:, None, None] > ps[None]
    assert below[0].any() and not below.all()              # the sample has high ground
    assert np.isnan(result["omega_kinematic"].values[below]).all()
    assert np.isfinite(result["omega_kinematic"].values[~below]).all()
    assert result.attrs["caution"].startswith("Diagnostic estimates for checking")
    assert result["omega_top"].attrs["units"] == "Pa s-1"
    assert result["lapse_rate"].attrs["units"] == "K m-1"
    assert "= (T - above(T, T))" in result["lapse_rate"].attrs["formula"]


def test_a_sheet_with_its_own_table_is_refused():
    from layercalc.errors import LayercalcError

    with pytest.raises(LayercalcError):
        engine.evaluate_grid(fields("gfs_region_subset.grib2"),
                             "layers\n p_bottom [hPa] p_top [hPa] T [degC]\n 1000 900 10\nend\n")


@pytest.mark.slow
def test_two_worker_processes_give_the_threaded_result(tmp_path):
    distributed = pytest.importorskip("distributed")
    from layercalc.formats.grid_netcdf import write_results

    import xarray as xr

    f = fields("gfs_region_subset.grib2", (("x", 13), ("y", 9)))
    threaded = tmp_path / "threads.nc"
    write_results(engine.evaluate_grid(f, USER), threaded, progress=False)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster, \
            distributed.Client(cluster) as client:
        spread = tmp_path / "workers.nc"
        write_results(engine.evaluate_grid(f, USER), spread, client=client, progress=False)
    a, b = xr.open_dataset(threaded), xr.open_dataset(spread)
    assert set(a.data_vars) == set(b.data_vars)
    for name in a.data_vars:
        np.testing.assert_array_equal(a[name].values, b[name].values)


def test_the_python_api():
    import layercalc

    text = layercalc.grid_column(DATA / "gfs_region_subset.grib2", [("Point", 45.0, -100.0)])
    assert layercalc.loads(text).evaluate().cells["column_thickness"] > 0
    lazy = layercalc.grid_evaluate(DATA / "gfs_region_subset.grib2", "",
                                   chunks={"y": 9, "x": 13})
    import dask.array as da

    assert isinstance(lazy["omega_top"].data, da.Array)        # nothing computed yet
    direct = engine.evaluate_grid(fields("gfs_region_subset.grib2"), "").compute()
    assert_allclose(lazy["omega_top"].values, direct["omega_top"].values, rtol=1e-12,
                    equal_nan=True)


def test_a_time_axis_is_a_leading_axis():
    # two times (the same fields, the second with winds doubled): chunked along time, each
    # time's results equal the single-time run; divergence, omega and the tendency scale
    # by 2 (derived: they are linear in the winds)
    import xarray as xr

    f = fields("gfs_region_subset.grib2")
    doubled = f.dataset.copy()
    doubled["u"], doubled["v"] = 2 * doubled["u"], 2 * doubled["v"]
    both = xr.concat([f.dataset, doubled], dim="time").chunk({"time": 1, "y": 9, "x": 13})
    two = type(f)(both, f.geometry, f.source, f.humidity, f.notes)
    result = engine.evaluate_grid(two, "").compute()
    single = engine.evaluate_grid(f, "").compute()
    assert result["omega_top"].dims == ("time", "layer", "y", "x")
    assert_allclose(result["omega_top"].isel(time=0).values, single["omega_top"].values,
                    rtol=1e-12, equal_nan=True)
    for name in ("divergence", "omega_kinematic", "surface_pressure_tendency"):
        assert_allclose(result[name].isel(time=1).values, 2 * single[name].values,
                        rtol=1e-9, atol=1e-18, equal_nan=True)
