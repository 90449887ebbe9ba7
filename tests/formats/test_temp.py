"""TEMP and PILOT bulletins decoded whole: parts merged, traps of the code, warnings placed
at the group, round trips through the test encoder, and fuzzing.

Made-up stations (index 999xx, not real). Heights of made-up soundings come from the
hypsometric equation written out here (common practice, no source beyond any dynamic
meteorology text), with Rd and g0 from layercalc.constants.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from layercalc.constants import G0, KNOT, RD
from layercalc.errors import LayercalcError, MessageError
from layercalc.formats.temp import parse_temp

from . import temp_encoder as E

# A dry, made-up column: (p [hPa], T [degC]) at every level, surface first. Temperatures
# obey the code's parity (even tenths positive, odd negative).
PROFILE = [(1008, 14.2), (1000, 13.6), (950, 10.6), (925, 9.0), (850, 4.6), (780, 0.2),
           (700, -4.1), (620, -10.1), (500, -19.5), (400, -30.1), (300, -44.3),
           (250, -51.5), (215, -54.7), (200, -55.1), (150, -56.3), (100, -58.7)]
STANDARD = (1000, 925, 850, 700, 500, 400, 300, 250, 200, 150, 100)


def heights(profile, surface_height):
    """Heights by the hypsometric equation, T linear in ln p between levels, dry."""
    z = [surface_height]
    for (p1, t1), (p2, t2) in zip(profile[:-1], profile[1:]):
        z.append(z[-1] + RD / G0 * ((t1 + t2) / 2 + 273.15) * math.log(p1 / p2))
    return dict(zip([p for p, _ in profile], z))


def made_up(surface_height=35.0, profile=PROFILE, knots=True, last_wind=100, **changes):
    z = heights(profile, surface_height)
    temps = dict(profile)
    wind = {p: (200 + 5 * i, 10 + 5 * i) for i, p in enumerate(STANDARD)}
    standard = {p: (z[p], temps[p], None, *wind[p]) for p in STANDARD if p in temps}
    sounding = E.Sounding(
        station="99901", knots=knots, surface=(profile[0][0], profile[0][1], None, 195, 8),
        standard=standard, last_wind=last_wind,
        significant=[(p, t, None) for p, t in profile if p not in STANDARD or p == profile[0][0]],
        winds=[(profile[0][0], 195, 8), (900, 215, 18)],
        tropopause=(215, -54.7, None, 265, 100), max_wind=(250, 235, 45))
    for name, value in changes.items():
        setattr(sounding, name, value)
    return sounding, z


def bulletin(*reports, heading="USXX01 EXMP 081200"):
    return "ZCZC 123\n" + heading + "\n" + "\n".join(E.wrap(r) for r in reports) + "\nNNNN\n"


def only(decoded):
    assert decoded.problems == ()
    assert len(decoded.soundings) == 1
    return decoded.soundings[0]


def level(sounding, hpa):
    index = np.flatnonzero(sounding.pressure == hpa * 100.0)
    assert index.size == 1, f"no level {hpa} hPa"
    return index[0]


def test_parts_a_and_b_merge_into_one_sounding_with_every_level():
    s, z = made_up()
    decoded = parse_temp(bulletin(E.part_a(s), E.part_b(s)), "b.txt")
    sounding = only(decoded)
    assert sounding.station == "99901" and sounding.time == "day 08 12 UTC"
    assert [p / 100 for p in sounding.pressure] == sorted(
        {p for p, _ in PROFILE} | {900}, reverse=True)
    # temperatures as encoded; heights as computed (1 m at 1000-700 hPa, 10 m above)
    for p, t in PROFILE:
        assert sounding.temperature[level(sounding, p)] - 273.15 == pytest.approx(t, abs=1e-9)
    for p in (1000, 925, 850, 700):
        assert sounding.height[level(sounding, p)] == round(z[p])
    for p in (500, 300, 100):
        assert sounding.height[level(sounding, p)] == 10 * round(z[p] / 10)
    assert sounding.surface_pressure == 100800.0
    assert decoded.all_notices == ()  # hydrostatically consistent: no warning


def test_knots_when_50_is_added_to_the_day_and_ms_otherwise():
    for knots, factor in ((True, KNOT), (False, 1.0)):
        s, _ = made_up(knots=knots)
        sounding = only(parse_temp(bulletin(E.part_a(s)), "b.txt"))
        i = level(sounding, 500)
        assert sounding.wind_direction[i] == 220.0          # encoder: 200 + 5 * 4
        assert sounding.wind_speed[i] == pytest.approx(30 * factor)


def test_id_names_the_last_surface_with_wind_and_later_groups_omit_it():
    # Id = 7: winds at 1000-700 hPa only; the 500 hPa group follows 700's temperature
    s, _ = made_up(last_wind=700)
    text = E.part_a(s)
    assert text.split()[1] == "58127"
    sounding = only(parse_temp(bulletin(text), "b.txt"))
    assert np.isfinite(sounding.wind_speed[level(sounding, 700)])
    assert np.isnan(sounding.wind_speed[level(sounding, 500)])
    assert sounding.temperature[level(sounding, 500)] - 273.15 == pytest.approx(-19.5)


def test_surface_above_1000_hpa_drops_the_surfaces_below_ground_and_says_so():
    profile = [(987, 12.2)] + [(p, t) for p, t in PROFILE if p < 987]
    s, _ = made_up(profile=profile, surface_height=200.0)
    # the 1000 hPa surface is below ground: extrapolated height, no data (from memory)
    s.standard[1000] = (30.0, None, None, None, None)
    s.significant = [(987, 12.2, None)] + [x for x in s.significant if x[0] < 987]
    s.winds = [(987, 195, 8)]
    decoded = parse_temp(bulletin(E.part_a(s), E.part_b(s)), "b.txt")
    sounding = only(decoded)
    assert sounding.pressure[0] == 98700.0 and 100000.0 not in sounding.pressure
    assert any("below the surface" in r and "1000 hPa" in r for r in sounding.remarks)


def test_deep_low_heights_are_placed_by_the_hydrostatic_check():
    # 1000 hPa at -350 m (a deep low): 850 hPa near 950 m and 700 hPa near 2480 m. The
    # standard atmosphere alone would read '950' as 1950 m and '480' as 3480 m.
    cold = [(1000, 2.0), (925, -2.1), (850, -6.1), (700, -16.1), (500, -34.1)]
    z = heights(cold, -350.0)
    assert 900 < z[850] < 1000 and 2400 < z[700] < 2500      # the case is what it claims
    s = E.Sounding(standard={p: (z[p], t, None, 270, 20) for p, t in cold}, last_wind=500)
    sounding = only(parse_temp(bulletin(E.part_a(s)), "b.txt"))
    assert sounding.height[level(sounding, 1000)] == -350.0
    assert sounding.height[level(sounding, 850)] == round(z[850])
    assert sounding.height[level(sounding, 700)] == round(z[700])
    assert any("850 hPa height" in r and "not 1" in r for r in sounding.remarks)


def test_a_mistyped_height_is_pointed_at_in_the_message():
    s, z = made_up()
    right = round(z[500] / 10)
    s.standard[500] = (10 * (right + 10),) + s.standard[500][1:]   # 100 m too high
    text = bulletin(E.part_a(s), E.part_b(s))
    decoded = parse_temp(text, "b.txt")
    sounding = only(decoded)
    notices = [n for n in decoded.all_notices if "height of 500 hPa" in n.message]
    assert len(notices) == 1
    span = notices[0].span
    assert text[span.start:span.end] == f"50{(right + 10) % 1000:03d}"
    assert "mistyped or shifted" in notices[0].message
    assert notices[0].format().startswith(f"b.txt:{span.line}:{span.column}: warning:")
    assert sounding.height[level(sounding, 500)] == 10 * (right + 10)  # reported, not "fixed"


def test_parts_c_and_d_above_100_hpa():
    c = E.Sounding(standard={70: (18500, -60.1, None, 90, 10), 50: (20600, -59.5, None, 95, 12),
                             10: (31000, -50.3, None, 100, 20)}, last_wind=10)
    c.significant = [(85.0, -59.9, None), (45.5, -58.7, None)]
    text = bulletin(E.part_a(c, part_c=True), E.part_b(c, part_d=True).replace("TTDD", "TTDD"))
    sounding = only(parse_temp(text, "b.txt"))
    assert sounding.height[level(sounding, 70)] == 18500.0
    assert sounding.height[level(sounding, 50)] == 20600.0
    assert sounding.height[level(sounding, 10)] == 31000.0
    assert sounding.temperature[level(sounding, 45.5)] - 273.15 == pytest.approx(-58.7)


def test_nil_and_corrections_and_several_reports_in_one_bulletin():
    s, _ = made_up()
    other, _ = made_up()
    other.station = "99902"
    corrected = E.part_a(s).replace("58121", "58121", 1)
    text = (bulletin(E.part_a(s), "TTAA 58121 99903 NIL=", E.part_a(other))
            + bulletin(corrected, heading="USXX01 EXMP 081200 CCA"))
    decoded = parse_temp(text, "b.txt")
    assert sorted(x.station for x in decoded.soundings) == ["99901", "99902"]
    messages = [n.message for n in decoded.all_notices]
    assert any("NIL" in m for m in messages)
    assert any("given again (CCA)" in m and "replaces" in m for m in messages)


def test_ship_report_carries_its_position():
    s, _ = made_up()
    s.ship = ("SHIP1", 45.1, -30.2)
    sounding = only(parse_temp(bulletin(E.part_a(s)), "b.txt"))
    assert (sounding.station, sounding.kind) == ("SHIP1", "ship")
    assert (sounding.latitude, sounding.longitude) == (pytest.approx(45.1), pytest.approx(-30.2))


def test_pilot_winds_by_altitude_become_pressures_through_the_temperatures():
    # isothermal dry column at 0 degC: p(z) = p0 exp(-g0 z / (Rd T)) exactly (common
    # practice), and ln p is linear in z, so the interpolation is exact too
    iso = [(1000, 0.0), (850, 0.0), (700, 0.0), (500, 0.0)]
    z = heights(iso, 0.0)
    s = E.Sounding(surface=(1000, 0.0, None, 180, 10),
                   standard={p: (z[p], 0.0, None, 180, 10) for p, _ in iso}, last_wind=500)
    pilot = "PPBB 08120 99901 90012 18005 19010 20015 90357 21020 22025 23030="
    sounding = only(parse_temp(bulletin(E.part_a(s), pilot), "b.txt"))
    scale = RD * 273.15 / G0
    for altitude, direction in ((300, 190), (600, 200), (900, 210), (1500, 220), (2100, 230)):
        p = 100000.0 * math.exp(-altitude / scale)
        index = np.flatnonzero(np.isclose(sounding.pressure, p, rtol=1e-9, atol=0.5))
        assert index.size == 1, altitude
        assert sounding.wind_direction[index[0]] == direction
    # the PILOT surface wind (altitude 0, 18005) meets the TEMP's surface wind: kept out, said
    assert sounding.wind_speed[level(sounding, 1000)] == 10.0
    assert any("repeats a level" in n.message for n in sounding.notices)


def test_pilot_by_altitude_without_temperatures_is_left_out_and_said():
    decoded = parse_temp(bulletin("PPBB 08120 99905 90012 18005 19010 20015="), "b.txt")
    assert decoded.soundings == () or all(np.isnan(s.wind_speed).all() for s in decoded.soundings)
    assert decoded.problems or any("altitude" in n.message for n in decoded.all_notices)


def test_pilot_part_a_winds_at_standard_surfaces():
    s, _ = made_up()
    pilot = "PPAA 58120 99901 44385 24030 24535 25040 44350 25550 26055 26560 77250 24055 4////="
    sounding = only(parse_temp(bulletin(E.part_a(s), pilot), "b.txt"))
    # TEMP already gave winds there; PILOT values that differ are warned about, not mixed
    assert sounding.wind_direction[level(sounding, 850)] == 210.0


@pytest.mark.parametrize("report, where, what", [
    ("TTAA 58121 99901 99008 14250 1951/ 00088=", "1951/", "wind"),
    ("TTAA 58121 99901 99008 14250 19508 00088 1365", "1365", "five digits"),
    ("TTAA 58121 99901 99008 14250 19508 00088 13650 20512 93762=", "93762", "925 hPa surface"),
    ("TTAA 58186 99901 99008=", "58186", "Id '6'"),
    ("TTAA 58521 99901 99008=", "58521", "hour"),
    ("TTAA 58121 9990X 99008=", "9990X", "station index"),
])
def test_errors_point_at_the_group_with_what_was_expected(report, where, what):
    text = bulletin(report)
    decoded = parse_temp(text, "b.txt")
    assert decoded.problems, report
    error = decoded.problems[0]
    assert isinstance(error, MessageError)
    assert what in error.message
    assert text[error.span.start:error.span.end] == where
    assert error.report and error.report.startswith("TTAA")
    assert error.format().split(":")[0] == "b.txt"


def test_out_of_range_dewpoint_code_is_a_warning_at_the_group():
    s, _ = made_up()
    assert " 136// " in E.part_a(s)
    text = bulletin(E.part_a(s).replace(" 136// ", " 13653 ", 1))
    decoded = parse_temp(text, "b.txt")
    sounding = only(decoded)
    assert np.isnan(sounding.dewpoint[level(sounding, 1000)])
    notice = next(n for n in decoded.all_notices if "0777" in n.message)
    assert text[notice.span.start:notice.span.end] == "13653"


@pytest.mark.parametrize("t", [12.4, -12.3, 0.0, -0.1, 25.0, -60.9])
@pytest.mark.parametrize("direction, speed", [(275, 115), (360, 5), (5, 199)])
def test_round_trip_through_the_encoder(t, direction, speed):
    s = E.Sounding(surface=(1013, t, t - 6.0, direction, speed), standard={}, last_wind=None)
    sounding = only(parse_temp(bulletin(E.part_a(s)), "b.txt"))
    assert sounding.temperature[0] - 273.15 == pytest.approx(t, abs=1e-9)
    assert sounding.dewpoint[0] - 273.15 == pytest.approx(t - 6.0, abs=1e-9)
    assert sounding.wind_direction[0] == direction
    assert sounding.wind_speed[0] == pytest.approx(speed)


@settings(max_examples=300, deadline=None)
@given(st.lists(st.sampled_from(["TTAA", "TTBB", "PPBB", "UUAA", "58121", "99901", "99013",
                                 "00098", "13640", "/////", "00000", "21212", "88999",
                                 "77999", "NIL", "=", "31313", "51515", "92762", "9001",
                                 "90012", "11850", "1234/", "ABCDE", "\n"]), max_size=40))
def test_decoding_raises_nothing_but_our_errors(groups):
    try:
        parse_temp(" ".join(groups), "fuzz.txt")
    except LayercalcError:
        pass


@settings(max_examples=200, deadline=None)
@given(st.text(alphabet="0123456789/ =\nTUABCDP", max_size=200))
def test_decoding_random_text_raises_nothing_but_our_errors(text):
    try:
        parse_temp("TTAA " + text, "fuzz.txt")
    except LayercalcError:
        pass
