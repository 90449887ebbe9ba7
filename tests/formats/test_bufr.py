"""BUFR radiosonde messages through ecCodes: real sample data (tests/data/README.md) for
templates 3 09 007 and 3 09 057, small made-up messages encoded by ecCodes in the test
(tests/formats/bufr_encoder.py) for 3 09 052 and 3 09 056.

Expected values are what ecCodes itself returns for the same keys (the independent
reference, version printed in the assertion messages); the network test runs three real
soundings end to end to omega and the surface pressure tendency.
"""

from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

eccodes = pytest.importorskip("eccodes")

import layercalc  # noqa: E402
from layercalc.constants import G0  # noqa: E402
from layercalc.errors import InputError, MessageError  # noqa: E402
from layercalc.formats import bufr  # noqa: E402
from layercalc.formats.soundings_input import (  # noqa: E402
    detect_format, read_soundings, soundings_layers_text,
)

DATA = Path(__file__).parent.parent / "data"
NETWORK = DATA / "temp_network_309007.bufr"
HIRES = DATA / "temp_hires_309057.bufr"
SAMPLE = DATA / "temp_eccodes_309007.bufr"   # ecCodes' own 3-report sample
VERSION = eccodes.codes_get_api_version()


def eccodes_levels(path, index):
    """(pressure, height, T, Td, dir, speed) as ecCodes prints them, missing as NaN."""
    with open(path, "rb") as handle_file:
        for _ in range(index + 1):
            handle = eccodes.codes_bufr_new_from_file(handle_file)
    eccodes.codes_set(handle, "unpack", 1)
    keys = ["airTemperature", "dewpointTemperature", "windDirection", "windSpeed"]
    n = eccodes.codes_get_size(handle, "airTemperature")
    values = {k: np.asarray(eccodes.codes_get_array(handle, k), float)[:n] for k in keys + ["pressure"]}
    for key, scale in (("nonCoordinateGeopotentialHeight", 1.0), ("nonCoordinateGeopotential", 1.0 / G0)):
        try:
            values["height"] = np.asarray(eccodes.codes_get_array(handle, key), float)[:n] * scale
            break
        except eccodes.KeyValueNotFoundError:
            continue
    eccodes.codes_release(handle)
    for k, v in values.items():
        values[k] = np.where(np.abs(v) > 1e90, np.nan, np.where(v == 2147483647, np.nan, v))
    return values


@pytest.mark.parametrize("path, index, template", [(NETWORK, 0, "3 09 007"), (NETWORK, 2, "3 09 007"),
                                                    (HIRES, 0, "3 09 057"), (SAMPLE, 0, "3 09 007"),
                                                    (SAMPLE, 1, "3 09 007"), (SAMPLE, 2, "3 09 007")])
def test_levels_equal_what_eccodes_prints(path, index, template):
    sounding = bufr.read_bufr(path).soundings[index]
    want = eccodes_levels(path, index)
    assert f"BUFR template {template}" in sounding.remarks
    # every pressure ecCodes gives above 0 Pa is a level of ours, and no other
    assert sorted(set(sounding.pressure)) == sorted(set(want["pressure"][want["pressure"] > 0]))
    for ours, theirs in (("temperature", "airTemperature"), ("dewpoint", "dewpointTemperature"),
                         ("wind_direction", "windDirection"), ("wind_speed", "windSpeed"),
                         ("height", "height")):
        for p, value in zip(want["pressure"], want[theirs]):
            if p <= 0:
                continue   # not a level of the atmosphere: left out (test below)
            k = np.flatnonzero(sounding.pressure == p)
            assert k.size == 1
            got = getattr(sounding, ours)[k[0]]
            if np.isnan(value):
                continue   # a level repeated at one pressure may fill the gap from its twin
            assert got == pytest.approx(value, rel=1e-12), f"{ours} at {p} Pa (ecCodes {VERSION})"


def test_station_position_elevation_and_time_from_the_message():
    d = bufr.read_bufr(HIRES)
    s = d.soundings[0]
    # ecCodes 2.x prints for this message: 47.8341 N 10.8667 E, ground 760 m, 2025-02-23 10:45
    assert (s.latitude, s.longitude, s.elevation) == (pytest.approx(47.8341), pytest.approx(10.8667), 760.0)
    assert s.time == "2025-02-23 10:45 UTC" and s.position_source == "the BUFR message"
    assert any("balloon drift" in r for r in s.remarks)


def test_eccodes_sample_reports_identified_as_eccodes_reads_them():
    decoded = bufr.read_bufr(SAMPLE)
    assert decoded.problems == () and len(decoded.soundings) == 3
    with open(SAMPLE, "rb") as stream:
        for sounding in decoded.soundings:
            handle = eccodes.codes_bufr_new_from_file(stream)
            eccodes.codes_set(handle, "unpack", 1)
            get = lambda key: eccodes.codes_get(handle, key)  # noqa: E731
            # Expected: what ecCodes (version in VERSION) reads from the same message
            assert sounding.station == f"{get('blockNumber'):02d}{get('stationNumber'):03d}"
            assert sounding.latitude == get("#1#latitude")
            assert sounding.longitude == get("#1#longitude")
            assert sounding.elevation == get("#1#heightOfStation")
            assert sounding.time == (f"{get('#1#year'):04d}-{get('#1#month'):02d}-{get('#1#day'):02d} "
                                     f"{get('#1#hour'):02d}:{get('#1#minute'):02d} UTC")
            eccodes.codes_release(handle)
    # Expected: written down from ecCodes 2.50 (stations 06060, 71836, 94998; 2014, 2016, 1979)
    assert [s.station for s in decoded.soundings] == ["06060", "71836", "94998"]
    assert [s.time[:4] for s in decoded.soundings] == ["2014", "2016", "1979"]


def test_a_level_at_0_pa_is_left_out_and_said():
    sounding = bufr.read_bufr(SAMPLE).soundings[2]
    # Expected: ecCodes 2.50 reads 36 pressures for the third report, the last 0 Pa and
    # 23900 Pa twice; 34 levels remain (0 Pa left out, the twins merged)
    assert sounding.level_count == 34 and sounding.pressure.min() == 2000.0
    assert "left out: 1 level at 0 Pa (not a pressure in the atmosphere)" in sounding.remarks


def test_one_sample_report_becomes_a_sheet_that_evaluates():
    decoded = read_soundings(SAMPLE, stations=["71836"])
    text = soundings_layers_text(decoded)
    assert "\nlevels\n" in text
    result = layercalc.loads(text).evaluate()
    # Expected: the layers run from the report's lowest level (1015 hPa, ecCodes 2.50)
    assert result.si_layers["p_bottom"].iloc[0] == pytest.approx(101500.0)


def test_geopotential_of_the_old_template_is_divided_by_g0():
    s = bufr.read_bufr(NETWORK).soundings[0]
    # ecCodes gives 0 10 003 in m2 s-2; the surface of the first station: heightOfStation
    # 33 m in the same message, so geopotential / g0 near the surface is near 33 m
    assert s.height[0] == pytest.approx(s.elevation, abs=5.0)


def test_real_three_station_network_end_to_end():
    decoded = read_soundings(NETWORK, stations=["17062", "17130", "17240"])
    text = soundings_layers_text(decoded)
    assert text.count('station "') == 3 and "cell surface_height" in text
    sheet = layercalc.loads(text)
    result = sheet.evaluate()
    si = result.si_cells
    layers = result.si_layers
    # the omega of the column is the integral of the network divergence (continuity):
    # d(omega)/dp = -div, so from the top (the default) omega_surface = omega_top - sum(div dp)
    integral = float((layers["div"] * (layers["p_bottom"] - layers["p_top"])).sum())
    assert si["omega_surface"] == pytest.approx(si["omega_top"] - integral, rel=1e-9)
    assert np.isfinite(si["surface_pressure_tendency"])
    block = text.split('station "17062"')[1].split("  end")[0].strip().splitlines()
    rows = len(block) - 3                  # minus the station line, "levels" and the header
    assert len(layers) == rows - 1         # consecutive levels become layers


def test_format_is_recognised_by_content():
    assert detect_format(NETWORK.read_bytes(), "x") == "bufr"
    with pytest.raises(InputError):
        detect_format(b"\x00\x01 nothing", "x")


def test_a_cut_off_message_is_an_error_with_its_byte():
    # Expected: the first message's length field says 1750 bytes (bytes 4-6, read by hand)
    with pytest.raises(MessageError, match=r"at byte 0 \(edition 3\) claims 1750 bytes, but 1000 remain"):
        bufr.parse_bufr(NETWORK.read_bytes()[:1000], "cut.bufr")


def test_messages_before_a_cut_off_one_are_read_and_the_cut_one_said(tmp_path):
    path = tmp_path / "cut.bufr"
    # message 1 is bytes 0-1749, message 2 claims 1988 bytes from 1750 (length fields,
    # read by hand): 3000 bytes keep message 1 whole and cut message 2
    path.write_bytes(NETWORK.read_bytes()[:3000])
    decoded = bufr.read_bufr(path)
    assert len(decoded.soundings) == 1 and len(decoded.problems) == 1
    assert "at byte 1750" in decoded.problems[0].message
    # no station chosen: the whole message is used, the cut one skipped with a warning
    chosen = read_soundings(path)
    assert [s.station for s in chosen.soundings] == [decoded.soundings[0].station]
    warning = [n.format() for n in chosen.all_notices if "skipped" in n.message]
    assert warning == [f"{path}:byte 1750: warning: a report is skipped, it cannot be decoded: "
                       "the BUFR message at byte 1750 (edition 3) claims 1988 bytes, but 1250 "
                       "remain; the other reports are used"]


# --------------------------------------------------------------------------------------
# Templates 3 09 052 and 3 09 056: small made-up messages encoded by ecCodes in the test
# (tests/formats/bufr_encoder.py), decoded by the reader; expected = the values encoded.
# --------------------------------------------------------------------------------------

# Made-up levels, each value at the element's resolution (10 Pa, 1 gpm, 0.01 K, 1 degree,
# 0.1 m/s) so that encoding is exact to float rounding.
SYNTHETIC = {
    "pressure": [100800.0, 100000.0, 92500.0, 85000.0, 70000.0, 50000.0],
    "height": [35.0, 102.0, 751.0, 1444.0, 2996.0, 5570.0],
    "temperature": [287.35, 286.75, 282.15, 277.75, 269.05, 253.65],
    "dewpoint": [283.35, 282.15, 279.15, 271.75, 258.05, 240.65],
    "wind_direction": [195.0, 200.0, 205.0, 210.0, 215.0, 220.0],
    "wind_speed": [4.1, 5.1, 7.7, 10.3, 12.9, 15.4],
}


def _assert_levels_as_encoded(sounding, levels, order):
    for name, values in levels.items():
        want = np.asarray(values)[order]
        # Expected: the values encoded above; the element scales make them exact up to
        # the float rounding of value * 10**scale (1e-9 relative is far below resolution)
        assert_allclose(getattr(sounding, name), want, rtol=1e-9, atol=1e-9, err_msg=name)


@pytest.mark.parametrize("template, name, top_first", [(309052, "3 09 052", False),
                                                       (309056, "3 09 056", True)])
def test_synthetic_template_levels_decode_as_encoded(template, name, top_first):
    from .bufr_encoder import encode_sounding
    order = slice(None, None, -1) if top_first else slice(None)
    # 3 09 056 is a descent: its loop runs from the release down, and the reader sorts
    levels = {k: list(np.asarray(v)[order]) for k, v in SYNTHETIC.items()}
    if template == 309052:
        data = encode_sounding(template, levels, block=99, station=901, elevation=35.0)
    else:
        data = encode_sounding(template, levels, identifier="DROP07", release_height=9000.0)
    assert len(data) < 400   # tiny: a few hundred bytes
    decoded = bufr.parse_bufr(data, "made_up.bufr")
    assert decoded.problems == () and len(decoded.soundings) == 1
    sounding = decoded.soundings[0]
    assert f"BUFR template {name}" in sounding.remarks
    _assert_levels_as_encoded(sounding, SYNTHETIC, slice(None))
    # Expected: the identification encoded above (made up)
    assert sounding.time == "2026-03-14 11:30 UTC"
    assert (sounding.latitude, sounding.longitude) == (pytest.approx(46.5), pytest.approx(-31.25))
    if template == 309052:
        assert (sounding.station, sounding.kind, sounding.elevation) == ("99901", "land", 35.0)
    else:
        # the release height (aircraft) is said, never taken as the ground's elevation
        assert (sounding.station, sounding.kind, sounding.elevation) == ("DROP07", "drop", None)
        assert any("released at 9000 m" in r for r in sounding.remarks)


def test_synthetic_message_reads_back_the_same_through_eccodes_itself(tmp_path):
    # the encoder's own check: ecCodes (VERSION) reads back what was set, independent of
    # the reader under test
    from .bufr_encoder import encode_sounding
    path = tmp_path / "made_up.bufr"
    path.write_bytes(encode_sounding(309052, SYNTHETIC, block=99, station=901))
    want = eccodes_levels(path, 0)
    assert_allclose(want["pressure"], SYNTHETIC["pressure"], rtol=1e-12)
    assert_allclose(want["airTemperature"], SYNTHETIC["temperature"], rtol=1e-9)
    assert_allclose(want["height"], SYNTHETIC["height"], rtol=1e-12)
