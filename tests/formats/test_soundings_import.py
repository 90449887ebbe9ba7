"""Soundings in: text tables, recognition by content, station tables, choosing stations,
and the written .layers text (it must load and evaluate). Made-up stations only.
"""

import subprocess
import sys

import numpy as np
import pytest

import layercalc
from layercalc.errors import InputError, LayercalcError, MessageError
from layercalc.formats.soundings_input import detect_format, read_soundings, soundings_layers_text
from layercalc.formats.text_table import parse_text_table

from . import temp_encoder as E
from .test_temp import bulletin, made_up

KT = 1852.0 / 3600.0  # m/s per knot (definition)


def test_whitespace_table_in_the_levels_syntax():
    d = parse_text_table("# made up\np [hPa]  T [degC]  Td [degC]  z [m]  dir [deg]  speed [kt]\n"
                         "850  6.0  0.0  1540  230  25\n1000  14.0  9.0  110  200  10\n"
                         "700  -4.0  -  3100  250  35\n", "asc.txt")
    s = d.soundings[0]
    assert list(s.pressure) == [100000.0, 85000.0, 70000.0]          # sorted surface first
    assert s.temperature[1] == pytest.approx(279.15)                 # 6 degC (definition of degC)
    assert np.isnan(s.dewpoint[2])
    assert s.wind_speed[0] == pytest.approx(10 * KT)
    assert s.wind_direction[2] == pytest.approx(250.0)


def test_semicolon_csv_with_decimal_commas_is_detected_and_said():
    d = parse_text_table("p [hPa];T [degC];RH [%]\n1000;14,5;80\n850;6,25;70\n", "asc.csv")
    s = d.soundings[0]
    assert s.temperature[0] == pytest.approx(287.65)
    assert any("decimal commas" in n.message for n in d.notices)
    # Td from RH = 80 % at 14.5 degC: metpy 1.7.1 dewpoint_from_relative_humidity gives
    # 11.085 degC (an independent library; printed when this test was written)
    assert s.dewpoint[0] - 273.15 == pytest.approx(11.085, abs=0.02)


def test_comma_separated_with_dots_and_u_v_wind():
    d = parse_text_table("p [hPa],T [K],u [m/s],v [m/s]\n1000,287.0,0,-10\n850,280.0,10,0\n", "a.csv")
    s = d.soundings[0]
    # u = 0, v = -10 is a wind from the north (360), u = 10 from the west (270): WMO convention
    assert list(s.wind_direction) == [pytest.approx(360.0), pytest.approx(270.0)]
    assert list(s.wind_speed) == [pytest.approx(10.0), pytest.approx(10.0)]


@pytest.mark.parametrize("text, message", [
    ("p [hPa]  T [degC]\n1000  1,5\n850  2.5\n", "decimal dot"),
    ("p [hPa]  T [m]\n1000 1\n", "not a unit of one"),
    ("T [degC]\n10\n", "no pressure column"),
    ("p [hPa]  T [degC]\n1000  warm\n", "not a number"),
    ("p [hPa]  T [degC]\n1000\n", "values"),
])
def test_table_errors_are_positioned(text, message):
    with pytest.raises(LayercalcError, match=message) as caught:
        parse_text_table(text, "t.txt")
    assert caught.value.location is None or caught.value.location.startswith("t.txt:")


def test_format_recognition_by_content():
    assert detect_format(b"p [hPa] T [degC]\n1000 1\n", "x") == "table"
    assert detect_format(b"USXX01 EXMP 081200\nTTAA 58121 99901 NIL=", "x") == "temp"
    with pytest.raises(InputError, match="cannot tell the format"):
        detect_format(b"hello\n", "x")


def _write_bulletin(tmp_path, stations):
    reports = []
    for station in stations:
        s, _ = made_up()
        s.station = station
        reports += [E.part_a(s), E.part_b(s)]
    path = tmp_path / "bulletin.txt"
    path.write_text(bulletin(*reports))
    return path


def test_one_station_becomes_a_levels_block_that_loads_and_evaluates(tmp_path):
    path = _write_bulletin(tmp_path, ["99901"])
    table = tmp_path / "stations.csv"
    table.write_text("id,latitude,longitude,elevation\n99901,46.5,-31.2,35\n")
    decoded = read_soundings(path, station_table=table)
    text = soundings_layers_text(decoded)
    assert "\nlevels\n" in text and 'station "' not in text
    assert "cell surface_height = 35 m" in text and "the station elevation" in text
    assert "speed [kt]" in text   # the message's unit, values as decoded
    result = layercalc.loads(text).evaluate()
    # the lowest layer starts at the surface pressure of the report (1008 hPa, made up)
    assert result.si_layers["p_bottom"].iloc[0] == pytest.approx(100800.0)


def test_without_an_elevation_the_table_starts_at_the_lowest_reported_height(tmp_path):
    decoded = read_soundings(_write_bulletin(tmp_path, ["99901"]))
    text = soundings_layers_text(decoded)
    assert "lowest reported height, 1000 hPa" in text
    assert any("not in the station table" in n.message for n in decoded.all_notices) is False
    layercalc.loads(text).evaluate()


def test_stations_by_identifier_and_by_distance(tmp_path):
    path = _write_bulletin(tmp_path, ["99901", "99902", "99903", "99904"])
    table = tmp_path / "stations.csv"
    table.write_text("99901,47.1,-31.7,30\n99902,45.85,-28.75,40\n99903,44.7,-32.3,50\n"
                     "99904,30.0,-60.0,10\n")
    chosen = read_soundings(path, stations=["99903", "99901"], station_table=table)
    assert [s.station for s in chosen.soundings] == ["99903", "99901"]
    near = read_soundings(path, near=(45.9, -30.9, 300.0), station_table=table)
    assert sorted(s.station for s in near.soundings) == ["99901", "99902", "99903"]
    text = soundings_layers_text(near)
    assert text.count('station "') == 3
    layercalc.loads(text).evaluate()
    with pytest.raises(InputError, match="no sounding of station 99999"):
        read_soundings(path, stations=["99999"], station_table=table)


def test_a_network_without_positions_names_the_station_and_the_remedy(tmp_path):
    decoded = read_soundings(_write_bulletin(tmp_path, ["99901", "99902", "99903"]))
    with pytest.raises(LayercalcError, match="station 99901 .*no position") as caught:
        soundings_layers_text(decoded)
    assert "--station-table" in caught.value.hint


def test_cli_import_of_a_bulletin(tmp_path):
    path = _write_bulletin(tmp_path, ["99901"])
    out = tmp_path / "case.layers"
    run = subprocess.run([sys.executable, "-m", "layercalc", "import", str(path), "-o", str(out),
                          "--stations", "99901"], capture_output=True, text=True)
    assert run.returncode == 0, run.stderr
    assert out.exists() and "levels" in out.read_text()
    bad = subprocess.run([sys.executable, "-m", "layercalc", "import", str(path), "-o",
                          str(tmp_path / "x.layers"), "--near", "45,nope"],
                         capture_output=True, text=True)
    assert bad.returncode == 2 and "Traceback" not in bad.stderr  # a usage error
    assert not (tmp_path / "x.layers").exists()


def _bulletin_with_a_broken_report(tmp_path):
    """Stations 99901 and 99902; the TTBB of 99902 has a letter O for a zero."""
    path = _write_bulletin(tmp_path, ["99901", "99902"])
    text = path.read_text()
    good = "TTBB 5812/ 99902 00008 142// 11950 106//"
    assert text.count(good) == 1
    path.write_text(text.replace(good, "TTBB 5812/ 99902 00008 142// 11950 1O6//"))
    line = text[:text.index(good)].count("\n") + 1
    return path, line


def test_with_no_station_chosen_a_broken_report_is_skipped_and_named(tmp_path):
    path, line = _bulletin_with_a_broken_report(tmp_path)
    decoded = read_soundings(path)
    # both stations stay: 99902 keeps its Part A, its broken Part B is left out
    assert [s.station for s in decoded.soundings] == ["99901", "99902"]
    assert [p.split()[0] for p in decoded.soundings[1].parts] == ["TTAA"]
    skipped = [n.format() for n in decoded.all_notices if "skipped" in n.message]
    column = len("TTBB 5812/ 99902 00008 142// 11950 ") + 1
    assert skipped == [
        f"{path}:{line}:{column}: warning: report TTBB 99902 day 08 12 UTC (line {line}, "
        "group '1O6//') is skipped, it cannot be decoded: found '1O6//' where a temperature "
        "group TTTaDD was expected (a group of five digits or '/'); the other reports are used"]


def test_a_broken_report_of_a_station_chosen_by_name_stops_the_import(tmp_path):
    path, line = _bulletin_with_a_broken_report(tmp_path)
    with pytest.raises(MessageError) as caught:
        read_soundings(path, stations=["99902"])
    assert (caught.value.line, caught.value.group) == (line, "1O6//")
    # another station chosen: the broken report is only said
    other = read_soundings(path, stations=["99901"])
    assert [s.station for s in other.soundings] == ["99901"]
    assert any("TTBB 99902" in n.message and "not among those chosen" in n.message
               for n in other.all_notices)


def test_when_no_report_decodes_the_first_problem_is_the_error(tmp_path):
    path = tmp_path / "broken.txt"
    path.write_text("TTAA 58121 99901 99OO8 142// 19508=\nTTAA 58121 99902 990x8 142// 19508=\n")
    with pytest.raises(MessageError) as caught:
        read_soundings(path)
    assert caught.value.line == 1 and caught.value.group == "99OO8"
