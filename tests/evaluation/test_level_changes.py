"""Scenarios that change level values: station winds and temperatures (`at "Name"`,
`at every station`) and a levels table (`at levels`).

Expected values: the same file with the change typed in by hand, evaluated as the base
sheet (common practice, no source): the scenario must give the same results to 1e-12.
That path reads the typed table and runs soundings/column.py; the scenario path changes
arrays and runs soundings/rebuild.py."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

import layercalc

from tests.helpers import error_of

CASE = (Path(__file__).resolve().parents[2] / "worked_cases" / "three_stations.layers").read_text()


def _compare(scenario_result, typed_text: str, name: str = "typed.layers") -> None:
    typed = layercalc.loads(typed_text, name=name).evaluate()
    for column, values in typed.si_columns.items():
        got = np.broadcast_to(scenario_result.si_columns[column], np.shape(values))
        assert_allclose(got, values, rtol=1e-12, atol=1e-20, err_msg=column)
    for cell, value in typed.si_cells.items():
        assert_allclose(scenario_result.si_cells[cell], value, rtol=1e-12, atol=1e-20,
                        err_msg=cell)


def _typed(text: str, rows: dict[str, str]) -> str:
    """`text` with whole table rows replaced (each old row occurs once)."""
    for old, new in rows.items():
        assert text.count(old) == 1, old
        text = text.replace(old, new)
    return text


def test_one_station_stronger_aloft_equals_the_winds_typed_in():
    sheet = layercalc.loads(CASE + """
scenario stronger
  scale speed by 1.2 at "Eastmoor" above 500 hPa
end
""", name="case.layers")
    result = sheet.evaluate("stronger")
    # Eastmoor's 500-200 hPa speeds (53, 66, 83, 90, 78 kt) times 1.2, typed by hand
    typed = _typed(CASE, {
        "500    -18.4     -24.5    5609    232     53": "500    -18.4     -24.5    5609    232     63.6",
        "400    -29.0     -37.0    7239    238     66": "400    -29.0     -37.0    7239    238     79.2",
        "300    -43.0     -51.5    9237    243     83": "300    -43.0     -51.5    9237    243     99.6",
        "250    -50.6     -59.5   10445    243     90": "250    -50.6     -59.5   10445    243     108",
        "200    -55.8     -66.5   11881    248     78": "200    -55.8     -66.5   11881    248     93.6",
    })
    _compare(result, typed)
    base = sheet.evaluate()
    assert not np.allclose(result.si_columns["div"], base.si_columns["div"])  # it changed
    assert_allclose(result.si_columns["T"], base.si_columns["T"], rtol=0)  # T did not


def test_every_station_turned_and_one_warmed_equals_the_table_typed_in():
    sheet = layercalc.loads(CASE + """
cell warming = 3 K
scenario turned
  add 5 deg to dir at every station between 700 hPa and 300 hPa
  add warming to T at "Southvale" below 850 hPa
end
""", name="case.layers")
    result = sheet.evaluate("turned")
    typed = _typed(CASE + "cell warming = 3 K\n", {
        # Northfield, Eastmoor, Southvale: directions at 700, 500, 400, 300 hPa + 5 deg
        "-3.8      -7.5    2990    219": "-3.8      -7.5    2990    224",
        "-19.6     -26.0    5568    229": "-19.6     -26.0    5568    234",
        "-30.2     -38.0    7190    234": "-30.2     -38.0    7190    239",
        "-44.0     -52.0    9178    239": "-44.0     -52.0    9178    244",
        "-2.6      -6.0    3019    219": "-2.6      -6.0    3019    224",
        "-18.4     -24.5    5609    232": "-18.4     -24.5    5609    237",
        "-29.0     -37.0    7239    238": "-29.0     -37.0    7239    243",
        "-43.0     -51.5    9237    243": "-43.0     -51.5    9237    248",
        "-1.6      -5.6    3049    222": "-1.6      -5.6    3049    227",
        "-17.6     -23.0    5648    229": "-17.6     -23.0    5648    234",
        "-28.4     -36.0    7283    233": "-28.4     -36.0    7283    238",
        "-42.4     -51.0    9285    238": "-42.4     -51.0    9285    243",
        # Southvale's T at 1000, 925, 850 hPa + 3 K
        "1000     15.0      11.8     121": "1000     18.0      11.8     121",
        "925     10.2       8.0     776": "925     13.2       8.0     776",
        "850      7.0       4.0    1476": "850     10.0       4.0    1476",
    })
    _compare(result, typed)


def test_a_direction_stays_within_a_full_turn():
    # Northfield's 1000 hPa wind from 143 deg turned by 300 deg comes from 83 deg
    sheet = layercalc.loads(CASE + """
scenario round
  add 300 deg to dir at "Northfield" below 1000 hPa
end
""", name="case.layers")
    typed = _typed(CASE, {"12.4      10.1      88    143": "12.4      10.1      88     83"})
    _compare(sheet.evaluate("round"), typed)


LEVELS = """title "Levels"
cell surface_height = 110 m
levels
  p [hPa]  T [degC]  Td [degC]  z [m]  div [1e-5 s^-1]
  1000   14.0    9.0    110   -1.2
  850     6.0    0.0   1540   -0.6
  700    -4.0  -12.0   3100    0.1
  500   -20.0  -30.0   5650    0.8
  300   -44.0  -55.0   9300    0.5
end
"""


@pytest.mark.parametrize("extra", ["", "cell surface_pressure = 960 hPa\n"])
def test_levels_table_changes_equal_the_table_typed_in(extra):
    sheet = layercalc.loads(LEVELS + extra + """
scenario moist
  set Td to -5 degC at levels between 850 hPa and 700 hPa
  add 2 K to T at levels above 500 hPa
  scale div by 2 at levels
end
""", name="levels.layers")
    typed = _typed(LEVELS + extra, {
        "850     6.0    0.0   1540   -0.6": "850     6.0   -5.0   1540   -1.2",
        "700    -4.0  -12.0   3100    0.1": "700    -4.0   -5.0   3100    0.2",
        "1000   14.0    9.0    110   -1.2": "1000   14.0    9.0    110   -2.4",
        "500   -20.0  -30.0   5650    0.8": "500   -18.0  -30.0   5650    1.6",
        "300   -44.0  -55.0   9300    0.5": "300   -42.0  -55.0   9300    1.0",
    })
    _compare(sheet.evaluate("moist"), typed)


def test_layer_changes_follow_the_rebuilt_layers():
    # a chain: the station change rebuilds div; the layer change then scales that div
    sheet = layercalc.loads(CASE + """
scenario stronger
  scale speed by 1.2 at "Eastmoor" above 500 hPa
end
scenario doubled from stronger
  scale div by 2 above 300 hPa
end
""", name="case.layers")
    stronger = sheet.evaluate("stronger").si_columns
    doubled = sheet.evaluate("doubled").si_columns
    picked = sheet.checked.input_columns["p_bottom"].values <= 300e2
    assert picked.sum() == 2
    assert_allclose(doubled["div"], np.where(picked, 2, 1) * stronger["div"], rtol=1e-15)


def test_a_sweep_over_a_what_if_cell_equals_one_at_a_time():
    body = CASE + """
cell gust = 1
scenario gusty
  scale speed by gust at "Eastmoor" above 500 hPa
end
"""
    sheet = layercalc.loads(body, name="case.layers")
    gusts = np.array([0.8, 1.0, 1.25, 1.5])
    many = sheet.evaluate_many({"gust": gusts}, scenario="gusty")
    for i, gust in enumerate(gusts):
        one = layercalc.loads(body.replace("cell gust = 1", f"cell gust = {float(gust)!r}"),
                              name="case.layers").evaluate("gusty")
        # source: the same scenario evaluated once per value (common practice, no source)
        assert_allclose(np.broadcast_to(many.columns["div"], (4, 8))[i],
                        one.si_columns["div"], rtol=1e-12)
        assert_allclose(np.broadcast_to(many.cells["surface_pressure_tendency"], (4, 1))[i, 0],
                        one.si_cells["surface_pressure_tendency"], rtol=1e-12)


@pytest.mark.parametrize("body, expected", [
    ('scale speed by 1.2 at "Eastmor"', "no station named \"Eastmor\""),
    ('scale speed by 1.2 at "Eastmor"', "did you mean 'Eastmoor'?"),
    ("add 3 K to T at levels", "this sheet has none"),
    ('add 3 kt to dir at "Eastmoor"', "cannot add a speed to dir (an angle)"),
    ('add 5 to dir at "Eastmoor"', "needs its angle unit"),
    ('scale dir by 2 at "Eastmoor"', "cannot be scaled"),
    ('add 3 K to spead at every station', "has no column 'spead'"),
    ('add 3 K to z at every station', "cannot change z"),
    ('add 3 K to p at every station', "cannot change p"),
    ('scale speed by 2 [m/s] at every station', "needs a plain number"),
    ('scale speed by div at every station', "input cells only"),
    ('scale speed by 2 at every station where T > 0 degC', "'where' selects layers"),
    ('scale speed by 2 at layers', "expected 'at \"Station name\"'"),
    ('add 5 deg to dir at "Eastmoor" at 3 K', "'at' needs a pressure"),
    ("add 2 K to T at 300 hPa", "'at' with a pressure picks one level"),
    ("scale speed by 1.2 above 500 hPa", "'speed' is a column of the station tables"),
    ("scale speed by 1.2 above 500 hPa",
     "'scale speed by 1.2 at \"Northfield\" above 500 hPa'"),
    ("add 5 deg to dir   # no place", "'add 5 deg to dir at every station'"),
])
def test_level_change_errors(body, expected):
    text = error_of(CASE + f"scenario x\n  {body}\nend\n").format()
    assert expected in text
    assert "test.layers:" in text  # positioned


def test_a_selection_of_no_level_warns():
    sheet = layercalc.loads(CASE + 'scenario high\n  scale speed by 2 at "Eastmoor" '
                            "above 100 hPa\nend\n", name="case.layers")
    texts = [n.format() if hasattr(n, "format") else str(n) for n in sheet.check()]
    assert any("selects no level" in t for t in texts)


def test_a_negative_speed_is_refused_with_its_place():
    sheet = layercalc.loads(CASE + 'scenario calm\n  add -20 kt to speed at "Northfield"\n'
                            "end\n", name="case.layers")
    with pytest.raises(layercalc.EvaluationError, match="makes speed negative") as info:
        sheet.evaluate("calm")
    assert "case.layers:" in info.value.format()


def test_the_error_model_of_a_scenario_uses_its_changed_winds():
    # the three-station case with its error model: the scenario's assessment (the wind
    # chain's rounding floor at the changed winds, the ensemble, the sensitivities) equals
    # the base assessment of the same file with the change typed in (common practice,
    # no source)
    from layercalc.evaluation.uncertainty import assess_sheet

    case = (Path(__file__).resolve().parents[2] / "worked_cases"
            / "three_stations_uncertainty.layers").read_text()
    old = "300    -43.0     -51.5    9237    243     83"
    assert case.count(old) == 1
    sheet = layercalc.loads(case + 'scenario turned\n  add 20 deg to dir at "Eastmoor" '
                            "between 300 hPa and 300 hPa\nend\n", name="case.layers")
    typed = layercalc.loads(case.replace(old, old.replace("243", "263")), name="typed.layers")
    got, want = assess_sheet(sheet, "turned"), assess_sheet(typed)
    base = assess_sheet(sheet)
    for name, sigma in want.linear.items():
        assert_allclose(got.linear[name], sigma, rtol=1e-12, err_msg=name)
    assert got.probability_falling == pytest.approx(want.probability_falling, abs=1e-12)
    assert [s[:2] for s in got.sensitivity] == [s[:2] for s in want.sensitivity]
    assert_allclose([s[2] for s in got.sensitivity], [s[2] for s in want.sensitivity],
                    rtol=1e-9)
    # and it differs from the base's: the rounding floor moved with the wind
    assert any(not np.allclose(base.linear[n], want.linear[n], rtol=1e-9)
               for n in want.linear)


def test_a_level_without_enough_winds_is_interpolated_in_a_scenario_too():
    # Eastmoor's 850 hPa wind missing: two winds are too few to fit that level, so its
    # divergence is interpolated in ln p (the base path, soundings/column.py), in the
    # scenario as in the typed file
    old = "       850      5.8       3.4    1453    202     32"
    assert CASE.count(old) == 1
    gapped = CASE.replace(old, old[:-12] + "  -      -")
    sheet = layercalc.loads(gapped + "scenario faster\n  add 10 kt to speed at "
                            '"Northfield"\n  scale speed by 1.1 at every station above 400 hPa'
                            "\nend\n", name="case.layers")
    # typed in: Northfield's speeds + 10 kt, then every station's speeds at 400-200 hPa
    # times 1.1 (the changes in the order written)
    lines, station, typed = gapped.splitlines(), None, []
    for line in lines:
        if line.startswith("station "):
            station = line.split('"')[1]
        parts = line.split()
        if station and len(parts) == 6 and parts[0].isdigit() and parts[5] != "-":
            speed = float(parts[5]) + (10 if station == "Northfield" else 0)
            speed *= 1.1 if float(parts[0]) <= 400 else 1.0
            line = line[:line.rindex(parts[5])] + repr(speed)
        typed.append(line)
    _compare(sheet.evaluate("faster"), "\n".join(typed) + "\n")


def _edit_station(text: str, station: str, column: str, change) -> str:
    """`text` with `change(value, pressure_hpa)` applied to one station's column, row by
    row (a '-' left alone): the change typed in."""
    out, current, heading = [], None, None
    for line in text.splitlines():
        parts = line.split()
        if line.startswith("station "):
            current, heading = line.split('"')[1], None
        elif current == station and parts and parts[0] == "p":
            heading = [p for p in parts if not p.startswith("[")]
        elif current == station and heading and len(parts) == len(heading) \
                and parts[0][0].isdigit():
            j = heading.index(column)
            if parts[j] != "-":
                parts[j] = repr(change(float(parts[j]), float(parts[0])))
            line = "  " + "  ".join(parts)
        out.append(line)
    return "\n".join(out) + "\n"


def test_a_least_squares_network_with_components_equals_the_winds_typed_in():
    # five stations (a least-squares fit, not an exact one), winds as u and v, one wind
    # missing; the scenario changes one station's u above 700 hPa
    from tests.physics.test_stations import pentagon
    from tests.soundings.test_soundings import network_text

    latitudes, longitudes = pentagon(50.0, 20.0, 10.0)
    text = network_text(latitudes, longitudes, missing=[(3, 1)], form="uv")
    assert "u [m/s]" in text and "Station C" in text
    sheet = layercalc.loads(text + 'scenario pushed\n  add 4 [m/s] to u at "Station C" '
                            "above 700 hPa\nend\n", name="pentagon.layers")
    typed = _edit_station(text, "Station C", "u",
                          lambda value, p: value + 4.0 if p <= 700 else value)
    assert typed != text
    _compare(sheet.evaluate("pushed"), typed)


def test_the_sweep_command_varies_a_cell_a_station_change_reads(capsys, tmp_path):
    import csv

    from tests.helpers import cli

    path = Path(__file__).resolve().parents[2] / "worked_cases" / "three_stations.layers"
    target = tmp_path / "sweep.csv"
    code, _, _ = cli(capsys, "sweep", str(path), "--scenario", "eastmoor_turned",
                     "--vary", "turn=0:10:5", "--csv", str(target), "--quiet")
    assert code == 0
    rows = list(csv.reader(target.open()))[2:]
    assert [float(r[0]) for r in rows] == [0.0, 5.0, 10.0]
    text = path.read_text()
    for row in rows:
        one = layercalc.loads(text.replace("cell turn = 5 deg", f"cell turn = {row[0]} deg"),
                              name="one.layers").evaluate("eastmoor_turned")
        # source: the scenario evaluated once per value (common practice, no source);
        # the CSV holds hPa per 3 h
        assert float(row[1]) == pytest.approx(
            one.si_cells["surface_pressure_tendency"] * 3 * 3600 / 100, rel=1e-12)
    assert float(rows[0][1]) != pytest.approx(float(rows[2][1]))  # the turn moves it


def test_a_station_change_in_a_sheet_of_layers_says_where_its_layers_come_from():
    # a workbook whose layers are values, once imported, is such a sheet
    from tests.helpers import BASE_TABLE

    text = error_of(BASE_TABLE + 'scenario x\n  scale speed by 2 at "A"\nend\n').format()
    assert "no station blocks to change" in text
    assert "its layers come from a layers table" in text and "test.layers:" in text


def test_one_level_picked_with_at_equals_the_wind_typed_in():
    # `at 300 hPa` picks the 300 hPa level alone, like `between 300 hPa and 300 hPa`
    sheet = layercalc.loads(CASE + """
scenario one
  add turn to dir at "Eastmoor" at 300 hPa
end
scenario same
  add turn to dir at "Eastmoor" between 300 hPa and 300 hPa
end
""", name="case.layers")
    typed = _typed(CASE, {
        "300    -43.0     -51.5    9237    243     83": "300    -43.0     -51.5    9237    248     83"})
    _compare(sheet.evaluate("one"), typed)
    assert_allclose(sheet.evaluate("one").si_cells["surface_pressure_tendency"],
                    sheet.evaluate("same").si_cells["surface_pressure_tendency"], rtol=0)


def test_at_a_pressure_between_levels_picks_no_level_and_warns():
    sheet = layercalc.loads(CASE + 'scenario off\n  add 5 deg to dir at "Eastmoor" '
                            "at 310 hPa\nend\n", name="case.layers")
    texts = [n.format() if hasattr(n, "format") else str(n) for n in sheet.check()]
    assert any("selects no level" in t for t in texts)
