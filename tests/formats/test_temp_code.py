"""Each FM 35 / FM 32 code rule on hand-worked groups.

Expected values are worked by hand from the rules as we remember them from WMO-No. 306,
Manual on Codes, Vol. I.1, Part A (FM 32 PILOT, FM 35 TEMP): every row is "from memory"
(the Manual was not at hand), except where a row says otherwise.
"""

import math

import pytest

from layercalc.constants import KNOT
from layercalc.errors import LayercalcError, MessageError
from layercalc.formats import temp_code as code
from layercalc.formats.bulletin import Group
from layercalc.source import Source, Span


def group(text):
    source = Source("msg.txt", f"TTAA {text}=")
    return Group(text, Span(source, 5, 5 + len(text)))


@pytest.mark.parametrize("text, want", [
    ("124", 12.4), ("123", -12.3), ("001", -0.1), ("000", 0.0), ("250", 25.0),
    ("251", -25.1), ("///", math.nan),
])  # temperature tenths digit even for positive, odd for negative (from memory)
def test_temperature_sign_by_tenths_parity(text, want):
    got = code.temperature(text)
    assert (math.isnan(got) and math.isnan(want)) or got == pytest.approx(want)


@pytest.mark.parametrize("text, want", [
    ("00", 0.0), ("07", 0.7), ("50", 5.0), ("56", 6.0), ("60", 10.0), ("99", 49.0),
])  # code table 0777 (from memory): 00-50 tenths, 56-99 minus 50 whole degrees
def test_dewpoint_depression_code_table_0777(text, want):
    value, problem = code.dewpoint_depression(text)
    assert problem is None
    assert value == pytest.approx(want)


@pytest.mark.parametrize("text", ["51", "52", "53", "54", "55"])
def test_dewpoint_depression_51_to_55_are_refused_with_a_reason(text):
    value, problem = code.dewpoint_depression(text)
    assert math.isnan(value)
    assert "not used" in problem and "0777" in problem


def test_temperature_group_gives_dewpoint_from_depression():
    # '12456': T = +12.4 degC, depression 56 -> 6 K, Td = 6.4 degC (from memory)
    t, td, problem = code.temperature_group(group("12456"), "r")
    assert (t, td, problem) == (pytest.approx(12.4), pytest.approx(6.4), None)


@pytest.mark.parametrize("text, knots, direction, speed", [
    ("27615", False, 275.0, 115.0),       # 500 added to the direction: hundreds of speed
    ("27015", False, 270.0, 15.0),
    ("36010", False, 360.0, 10.0),
    ("00510", False, 5.0, 10.0),
    ("00000", False, 0.0, 0.0),           # calm
    ("24535", True, 245.0, 35.0 * KNOT),  # knots when 50 was added to the day
    ("27799", True, 275.0, 299.0 * KNOT),
])  # wind group dddff (from memory); 1 kt = 1852/3600 m/s (definition)
def test_wind_group(text, knots, direction, speed):
    got = code.wind_group(group(text), "r", knots)
    assert got == (pytest.approx(direction), pytest.approx(speed))


def test_missing_wind_is_nan_not_zero():
    d, f = code.wind_group(group("/////"), "r", False)
    assert math.isnan(d) and math.isnan(f)


@pytest.mark.parametrize("text, why", [
    ("37010", "above 360"), ("00110", "direction 000 with a speed"), ("270/5", "neither"),
])
def test_impossible_winds_are_errors_at_the_group(text, why):
    with pytest.raises(MessageError) as caught:
        code.wind_group(group(text), "TTAA 99901", False)
    assert why in caught.value.message
    assert caught.value.format().startswith("msg.txt:1:6: message error: TTAA 99901:")
    assert "^^^^^" in caught.value.format()


@pytest.mark.parametrize("text, day, knots", [("58121", 8, True), ("08121", 8, False),
                                             ("81000", 31, True), ("31000", 31, False)])
def test_day_with_50_added_means_knots(text, day, knots):
    assert code.day_and_wind_unit(group(text), "r") == (day, knots)


@pytest.mark.parametrize("text", ["32121", "00121", "50121", "82121"])
def test_impossible_days_are_errors(text):
    with pytest.raises(MessageError, match="not a day of the month"):
        code.day_and_wind_unit(group(text), "r")


@pytest.mark.parametrize("ppp, want", [("013", 1013.0), ("099", 1099.0), ("985", 985.0),
                                       ("700", 700.0)])
def test_surface_pressure_thousands_dropped(ppp, want):
    assert code.surface_pressure(ppp) == want


@pytest.mark.parametrize("ppp, tenths, want", [("002", False, 1002.0), ("850", False, 850.0),
                                               ("700", True, 70.0), ("045", True, 4.5)])
def test_significant_level_pressure(ppp, tenths, want):
    assert code.significant_pressure(ppp, tenths) == pytest.approx(want)


@pytest.mark.parametrize("indicator, hhh, part_c, expected, want", [
    ("00", "098", False, 100.0, 98.0),          # 1000 hPa, metres
    ("00", "512", False, 100.0, -12.0),         # below sea level: 500 + |h|
    ("00", "500", False, 100.0, 0.0),
    ("92", "762", False, 760.0, 762.0),
    ("92", "050", False, 1000.0, 1050.0),       # a 925 hPa surface above 1000 m
    ("85", "478", False, 1460.0, 1478.0),       # thousands dropped: 1478 m
    ("85", "950", False, 950.0, 950.0),         # deep low: 950 m, not 1950 m
    ("70", "061", False, 3010.0, 3061.0),
    ("70", "480", False, 2500.0, 2480.0),
    ("50", "566", False, 5570.0, 5660.0),       # decametres
    ("30", "927", False, 9160.0, 9270.0),
    ("25", "047", False, 10360.0, 10470.0),     # 1047 dam, thousand of dam dropped
    ("10", "628", False, 16200.0, 16280.0),
    ("70", "850", True, 18440.0, 18500.0),      # Part C, 70 hPa
    ("50", "060", True, 20580.0, 20600.0),
    ("10", "100", True, 31050.0, 31000.0),
])  # height coding by level (from memory); `expected` is what the caller would supply
def test_height_coding_by_level(indicator, hhh, part_c, expected, want):
    base, period = code.height_code(indicator, hhh, part_c)
    assert code.choose_height(base, period, expected) == pytest.approx(want)


def test_position_groups_of_ship_and_drop_reports():
    # 99451 7 0302 ... : 45.1 N, 30.2 W (Qc 7: north-west); units digits 5 and 0 (from memory)
    lat, lon, remarks = code.position([group("99451"), group("70302"), group("///50")], "r")
    assert (lat, lon, remarks) == (pytest.approx(45.1), pytest.approx(-30.2), [])
    lat, lon, remarks = code.position([group("99123"), group("31500"), group("///22")], "r")
    assert (lat, lon) == (pytest.approx(-12.3), pytest.approx(150.0))
    assert remarks and "do not match" in remarks[0]


def test_errors_are_layercalc_errors():
    assert issubclass(MessageError, LayercalcError)
    with pytest.raises(MessageError, match="five digits or '/'"):
        code.check_group(group("12a45"), "r", "a temperature group")
