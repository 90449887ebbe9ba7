"""`layercalc grid column` and `layercalc grid run`, in process (layercalc.cli.main.main).

Where the expected values come from is said beside each check: "derived" (bilinear
interpolation at a grid node returns the node's value; a dropped level is one whose
pressure exceeds the point's surface pressure), or the files' own content.
"""

import json
from pathlib import Path

import numpy as np
import pytest

from tests.helpers import optional

xr = optional("xarray")
optional("dask", "cfgrib", "netCDF4")

import layercalc  # noqa: E402
from layercalc.cli.main import main  # noqa: E402
from layercalc.formats.grid import read_grid  # noqa: E402

DATA = Path(__file__).resolve().parents[1] / "data" / "grid"
GFS = DATA / "gfs_region_subset.grib2"


def test_one_point_gives_a_levels_sheet(capsys):
    # 45 N, 260 E is a node of the 2.5-degree grid: the values are the node's (derived)
    assert main(["grid", "column", str(GFS), "--point", "45,-100"]) == 0
    text = capsys.readouterr().out
    sheet = layercalc.loads(text)
    assert "levels" in text and "omega_model [Pa/s]" in text
    fields = read_grid(GFS)
    node = fields.dataset.sel(y=6, x=4) if False else fields.dataset.isel(y=6, x=4)
    assert float(node.latitude) == 45.0 and float(node.longitude) == 260.0
    row = next(line for line in text.splitlines() if line.strip().startswith("500 "))
    assert float(row.split()[1]) == pytest.approx(float(node["T"].sel(level=50000.0)) - 273.15,
                                                  abs=0.005)
    dropped = fields.levels[fields.levels > float(node["ps"])]
    for p in dropped:
        assert f"\n  {p / 100:7g}" not in text
    if dropped.size:
        assert "dropped: below the model surface" in text
    assert sheet.evaluate().cells["column_thickness"] > 0


def test_three_points_give_stations_and_the_centroid(tmp_path, capsys):
    out = tmp_path / "net.layers"
    assert main(["grid", "column", str(GFS), "--point", "46,-96,Station A",
                 "--point", "44,-94,Station B", "--point", "44,-98,Station C",
                 "-o", str(out)]) == 0
    text = out.read_text()
    assert text.count("station \"") == 3 and "omega_model" in text
    result = layercalc.load(out).evaluate()
    assert "omega_kinematic_mean" in result.layers and "omega_model_mean" in result.layers
    # a second time without --force: refused, the file unchanged
    assert main(["grid", "column", str(GFS), "--point", "46,-96", "--point", "44,-94",
                 "--point", "44,-98", "-o", str(out)]) == 1
    assert out.read_text() == text
    assert "exists already" in capsys.readouterr().err


def test_points_outside_and_two_points(capsys):
    assert main(["grid", "column", str(GFS), "--point", "80,10"]) == 1
    err = capsys.readouterr().err
    assert "outside the grid" in err and "Traceback" not in err
    assert main(["grid", "column", str(GFS), "--point", "45,-100", "--point", "46,-99"]) == 1
    assert "two points make no network" in capsys.readouterr().err


def test_run_writes_cf_netcdf_and_the_comparison(tmp_path, capsys):
    sheet = tmp_path / "formulas.layers"
    sheet.write_text('column lapse_rate [K/km] = (T - above(T, T)) / '
                     '(above(z_bottom, z_top) - z_bottom)\n')
    out, summary = tmp_path / "out.nc", tmp_path / "out.json"
    assert main(["grid", "run", str(GFS), "-o", str(out), "--sheet", str(sheet),
                 "--json", str(summary), "--chunks", "y=9,x=13", "--no-progress"]) == 0
    printed = capsys.readouterr().out
    assert "correlation" in printed and "caution:" in printed
    with xr.open_dataset(out) as ds:
        assert ds.attrs["caution"] == layercalc.CAUTION
        assert ds.attrs["Conventions"] == "CF-1.8"
        assert ds["lapse_rate"].attrs["units"] == "K m-1"
        assert ds["surface_pressure_tendency"].attrs["units"] == "Pa s-1"
        assert ds["omega_kinematic"].dims == ("level", "y", "x")
        assert np.isfinite(ds["surface_pressure_tendency"].values).all()
    document = json.loads(summary.read_text())
    assert len(document["comparison"]) == 21 and document["caution"] == layercalc.CAUTION


def test_run_refuses_bad_options_and_writes_nothing(tmp_path, capsys):
    out = tmp_path / "out.nc"
    assert main(["grid", "run", str(GFS), "-o", str(out), "--chunks", "z=4"]) == 2  # usage
    assert "'z' is not y, x or time" in capsys.readouterr().err
    assert main(["grid", "run", str(GFS), "-o", str(tmp_path / "out.txt")]) == 2
    sheet = tmp_path / "bad.layers"
    sheet.write_text("column bad [K] = T + p_bottom\n")
    assert main(["grid", "run", str(GFS), "-o", str(out), "--sheet", str(sheet)]) == 1
    err = capsys.readouterr().err
    assert "bad.layers:1:" in err and "unit error" in err and "Traceback" not in err
    assert list(tmp_path.iterdir()) == [sheet]


def test_run_writes_all_or_none(tmp_path, capsys):
    # a level the file does not have is found only after the computation: the old output
    # stays as it was and no partial file is left behind
    out = tmp_path / "out.nc"
    out.write_bytes(b"old")
    assert main(["grid", "run", str(GFS), "-o", str(out), "--omega-map",
                 str(tmp_path / "o.png"), "--level", "123", "--no-progress"]) == 1
    assert "no level 123 hPa" in capsys.readouterr().err
    assert out.read_bytes() == b"old"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.nc"]
