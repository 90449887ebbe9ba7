"""Soundings in the language: `levels` tables and `station` blocks -> layers (soundings.py).

Where the expected numbers come from:
- layer means of a quantity linear in ln p: the mean of its two levels (derivation in
  physics/levels.py, layers_from_levels; arithmetic);
- the U.S. Standard Atmosphere 1976 column and the error bound of the level-to-layer
  conversion: tests/soundings/test_levels.py (ussa_column, trapezoid_error_bounds), whose helper is
  checked there against ambiance 1.3.1;
- plane-linear wind fields: divergence a + d and vorticity c - b exactly, by construction
  (tests/physics/test_stations.py, plane_linear_winds; winds written to the text with 17
  significant digits, so the text adds only rounding);
- shape thresholds: the constants of physics/stations.py.
"""

from __future__ import annotations

import json
import re
import textwrap
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from numpy.testing import assert_allclose

import layercalc
from layercalc.constants import G0, RD
from layercalc.physics import stations as station_physics
from layercalc.physics.winds import wind_direction_and_speed

from tests.soundings.test_levels import COARSE_HPA, MANDATORY_HPA, trapezoid_error_bounds, ussa_column
from tests.physics.test_stations import pentagon, plane_linear_winds, triangle

WORKED_CASE = Path(__file__).resolve().parents[2] / "worked_cases" / "three_stations.layers"
KNOT = 1852.0 / 3600.0   # m/s, NIST SP 811 (1 kn = 1852 m/h), exact


# --- writing .layers text ------------------------------------------------------------------

def number(x) -> str:
    return "-" if not np.isfinite(x) else repr(float(x))


def levels_block(columns: dict, indent: str = "") -> str:
    """A levels table; columns maps 'name [unit]' -> values (NaN written '-')."""
    rows = zip(*columns.values())
    lines = [indent + "levels", indent + "  " + "  ".join(columns)]
    lines += [indent + "  " + "  ".join(number(x) for x in row) for row in rows]
    return "\n".join(lines + [indent + "end"]) + "\n"


def station_block(name, latitude, longitude, columns: dict) -> str:
    return (f'station "{name}" latitude {latitude!r} longitude {longitude!r}\n'
            + levels_block(columns, "  ") + "end\n")


def load(text: str):
    return layercalc.loads(text, name="test.layers")


def error_of(text: str) -> layercalc.LayercalcError:
    with pytest.raises(layercalc.LayercalcError) as info:
        load(text)
    return info.value


def line_of(text: str, fragment: str) -> int:
    """1-based line of the first line containing `fragment`."""
    return next(i for i, line in enumerate(text.splitlines(), 1) if fragment in line)


def messages(sheet) -> list[str]:
    return [n.message for n in sheet.check()]


# --- a levels table alone ------------------------------------------------------------------

SIMPLE = """\
cell surface_height = 110 m
levels
  p [hPa]  T [degC]  Td [degC]
  1000  14.0  9.0
  850    6.0  0.0
  700   -4.0 -10.0
  500  -19.0 -30.0
end
"""


def test_level_table_becomes_layers_of_level_means():
    result = load(SIMPLE).evaluate()
    layers = result.layers
    assert_allclose(layers["p_bottom"], [1000, 850, 700], rtol=0)   # consecutive levels
    assert_allclose(layers["p_top"], [850, 700, 500], rtol=0)
    # linear in ln p: the layer mean is the mean of the two levels (levels.py, arithmetic)
    assert_allclose(layers["T"], [10.0, 1.0, -11.5], rtol=1e-12)
    assert_allclose(layers["Td"], [4.5, -5.0, -20.0], rtol=1e-12)
    assert result.units["T"] == "degC" and result.units["p_bottom"] == "hPa"
    assert "thickness" in layers and "z_top" in layers      # the defaults follow
    assert_allclose(result.cells["surface_height"], 110.0)
    assert messages(load(SIMPLE)) == []


@settings(max_examples=20, deadline=None)
@given(st.permutations(list(range(4))))
def test_row_order_does_not_matter(order):
    rows = SIMPLE.splitlines()
    body = [rows[3 + i] for i in order]
    shuffled = "\n".join(rows[:3] + body + rows[7:]) + "\n"
    got = load(shuffled).evaluate().si_columns
    want = load(SIMPLE).evaluate().si_columns
    for name in ("p_bottom", "T", "Td", "thickness"):
        assert_allclose(got[name], want[name], rtol=0)   # same layers, sorted surface first


def test_inner_missing_temperature_is_interpolated_in_log_pressure():
    """T linear in ln p by construction (T = 300 K + 40 K ln(p / 1000 hPa)), 850 hPa
    left out: the interpolated value, and so the layer means, are exact."""
    pressure = np.array([1000.0, 850.0, 700.0, 500.0])
    temperature = 300.0 + 40.0 * np.log(pressure / 1000.0)
    given_t = temperature.copy()
    given_t[1] = np.nan
    text = levels_block({"p [hPa]": pressure, "T [K]": given_t})
    sheet = load(text)
    assert_allclose(sheet.evaluate().si_columns["T"],
                    (temperature[:-1] + temperature[1:]) / 2, rtol=1e-12)  # arithmetic
    notice = next(n for n in sheet.check() if "missing" in n.message)
    assert "850 hPa" in notice.message and "interpolated linearly in ln p" in notice.message
    assert notice.span.line == line_of(text, "850.0")


def test_relative_humidity_and_other_columns_are_carried_as_layer_means():
    text = levels_block({"p [hPa]": [1000.0, 850.0, 700.0], "T [degC]": [10.0, 4.0, -4.0],
                         "RH [%]": [90.0, 70.0, 40.0], "theta_e [K]": [320.0, 318.0, 316.0]})
    result = load(text).evaluate()
    assert_allclose(result.layers["RH"], [80.0, 55.0], rtol=1e-12)        # arithmetic
    assert_allclose(result.layers["theta_e"], [319.0, 317.0], rtol=1e-12)  # arithmetic
    assert "e" in result.layers       # RH feeds the default vapour pressure


# --- U.S. Standard Atmosphere 1976 through the language -------------------------------------

@pytest.mark.parametrize("levels_hpa", [MANDATORY_HPA, COARSE_HPA])
def test_standard_atmosphere_heights_within_the_derived_bound(levels_hpa):
    """A dry USSA 1976 level table (T to 17 digits): the sheet's z_top minus the USSA
    heights lies within the trapezoid-rule bounds derived in tests/soundings/test_levels.py,
    summed upward (layercalc's Rd is the USSA R* / M0, so no constant term)."""
    pressure = np.array(levels_hpa, dtype=float) * 100.0
    height, temperature = ussa_column(pressure)
    text = (f"cell surface_height = {float(height[0])!r} m\n"
            + levels_block({"p [Pa]": pressure, "T [K]": temperature}))
    sheet = load(text)
    z_top = sheet.evaluate().si_columns["z_top"]
    lower, upper = trapezoid_error_bounds(pressure[:-1], pressure[1:])
    slack = 1e-6 * height[1:]        # float64 rounding of the sums, far below 1 mm
    error = z_top - height[1:]
    assert np.all(error >= np.cumsum(lower) - slack)    # derived bound, test_levels.py
    assert np.all(error <= np.cumsum(upper) + slack)
    assert any("treated as dry" in remark for remark in sheet.checked.remarks)


def reported_ussa_text(mistype_500: bool = False, extra: str = "") -> str:
    """USSA 1976 at the mandatory levels, T to 0.1 K and heights to the metre, as
    reported; optionally the 500 hPa height with two digits swapped (5574 -> 5754)."""
    pressure = np.array(MANDATORY_HPA, dtype=float)
    height, temperature = ussa_column(pressure * 100.0)
    height = np.round(height)
    if mistype_500:
        height[MANDATORY_HPA.index(500)] = 5754.0
    table = levels_block({"p [hPa]": pressure, "T [degC]": np.round(temperature - 273.15, 1),
                          "z [m]": height})
    return f"cell surface_height = {height[0]:.0f} m\n" + extra + table


def test_hydrostatic_check_passes_a_clean_column():
    sheet = load(reported_ussa_text())
    assert not [m for m in messages(sheet) if "hydrostatic" in m]
    table = sheet.checked.soundings.hydrostatic[0]
    assert not any(table.flagged)     # worst layer 7.5 m + rounding < 10 m (test_levels)
    # isothermal 200-100 hPa layers: implied Tv is USSA's 216.65 K to the height and
    # temperature rounding (0.5 m over ~1800 m, 0.05 K: < 0.15 K)
    assert_allclose(table.implied_virtual_temperature[-2:], 216.65, atol=0.15)


def test_hydrostatic_check_names_a_mistyped_height():
    """+180 m at 500 hPa: the layers below and above are 180 m off with opposite signs
    (construction; 2 m allowed for the rounding of the reported values)."""
    text = reported_ussa_text(mistype_500=True)
    sheet = load(text)
    found = [n for n in sheet.check() if "hydrostatic" in n.message]
    assert len(found) == 1
    notice = found[0]
    assert "height at 500 hPa is likely mistyped" in notice.message
    stated = float(re.search(r"about (\d+) m too high", notice.message).group(1))
    assert abs(stated - 180.0) <= 2.0
    assert notice.span.line == line_of(text, "5754")       # the row of the 500 hPa level
    assert layercalc.problems(text, is_text=True) == []    # a warning, not an error
    flagged = sheet.checked.soundings.hydrostatic[0].flagged
    assert [i for i, f in enumerate(flagged) if f] == [3, 4]   # 700-500 and 500-400 hPa


def test_hydrostatic_tolerance_is_a_cell():
    """Two levels at 274 K (dry), the top height 15 m above the hypsometric one:
    flagged at the default 10 m, not at 20 m (or 2 dam) (definition of the flag)."""
    thickness = RD * 274.0 / G0 * np.log(850.0 / 700.0)   # hypsometric equation
    table = levels_block({"p [hPa]": [850.0, 700.0], "T [K]": [274.0, 274.0],
                          "z [m]": [1500.0, 1500.0 + thickness + 15.0]})
    base = "cell surface_height = 1500 m\n"
    flagged = [m for m in messages(load(base + table)) if "hydrostatic" in m]
    assert len(flagged) == 1 and "off by +15 m" in flagged[0]
    for cell in ("20 m", "2 dam"):
        sheet = load(base + f"cell hydrostatic_tolerance = {cell}\n" + table)
        assert not [m for m in messages(sheet) if "hydrostatic" in m]
        assert_allclose(sheet.checked.soundings.hydrostatic_tolerance, 20.0)
    wrong_text = base + "cell hydrostatic_tolerance = 15 K\n" + table
    wrong = error_of(wrong_text)
    column = wrong_text.splitlines()[1].index("15 K") + 1
    assert isinstance(wrong, layercalc.UnitError)
    assert wrong.location == f"test.layers:2:{column}" and "not a temperature" in wrong.message
    negative = error_of(base + "cell hydrostatic_tolerance = -5 m\n" + table)
    assert "above 0 m" in negative.message and negative.span.line == 2


def test_missing_surface_height_is_pointed_out():
    text = reported_ussa_text().split("\n", 1)[1]     # without the surface_height cell
    notice = next(n for n in load(text).check() if "surface_height" in n.message)
    assert "observed at 111 m" in notice.message       # the USSA 1000 hPa height, rounded
    assert notice.span.line == line_of(text, "1000.0")
    computed = "cell surface_height = 100 m + 11 m\n" + text    # a formula: not read here
    assert not [m for m in messages(load(computed)) if "surface_height" in m]
    far = "cell surface_height = 150 m\n" + text                # 39 m off: > 10 m
    notice = next(n for n in load(far).check() if "surface_height" in n.message)
    assert "is 150 m but the lowest level is observed at 111 m" in notice.message
    assert notice.span.line == 1


# --- stations: divergence from the winds -----------------------------------------------------

PRESSURES = np.array([1000.0, 850.0, 700.0, 500.0, 300.0])
GRADIENTS = np.array([        # per level: du/dx, du/dy, dv/dx, dv/dy [1/s]
    [-1.0e-5, 0.4e-5, 2.0e-5, -0.6e-5],
    [-0.5e-5, -0.3e-5, 1.0e-5, -0.7e-5],
    [0.2e-5, 0.1e-5, 0.5e-5, -0.4e-5],
    [0.9e-5, -0.2e-5, 0.3e-5, 0.2e-5],
    [1.1e-5, 0.6e-5, -0.4e-5, 0.5e-5]])
LEVEL_DIVERGENCE = GRADIENTS[:, 0] + GRADIENTS[:, 3]   # a + d, by construction
LEVEL_VORTICITY = GRADIENTS[:, 2] - GRADIENTS[:, 1]    # c - b, by construction


def network_text(latitudes, longitudes, gradients=GRADIENTS, pressures=PRESSURES,
                 missing=(), form="dir"):
    """Station blocks with the plane-linear winds; `missing` lists (station, level)."""
    u, v = plane_linear_winds(latitudes, longitudes, gradients, (14.0, 6.0))
    for station, level in missing:
        u[level, station] = v[level, station] = np.nan
    direction, speed = wind_direction_and_speed(u, v)
    text = ""
    for i, (lat, lon) in enumerate(zip(latitudes, longitudes)):
        if form == "dir":
            columns = {"dir [deg]": direction[:, i], "speed [kt]": speed[:, i] / KNOT}
        else:
            columns = {"u [m/s]": u[:, i], "v [m/s]": v[:, i]}
        text += station_block(f"Station {'ABCDE'[i]}", float(lat), float(lon),
                              {"p [hPa]": pressures, **columns})
    return text


@pytest.mark.parametrize("network", ["triangle", "pentagon"])
@pytest.mark.parametrize("latitude, bearing", [(45.0, 0.0), (-35.0, 37.0), (70.0, 110.0)])
def test_linear_wind_field_gives_its_divergence_in_the_div_column(network, latitude, bearing):
    make = triangle if network == "triangle" else pentagon
    latitudes, longitudes = make(latitude, 20.0, bearing)
    sheet = load(network_text(latitudes, longitudes))
    result = sheet.evaluate()
    # layer div: the mean of its two levels' divergences (linear in ln p), exact
    want = (LEVEL_DIVERGENCE[:-1] + LEVEL_DIVERGENCE[1:]) / 2
    assert_allclose(result.si_columns["div"], want, rtol=0, atol=1e-17)
    assert_allclose(result.layers["div"], want / 1e-5, rtol=0, atol=1e-12)  # display unit
    details = sheet.checked.soundings.network
    assert_allclose(details.levels.divergence, LEVEL_DIVERGENCE, rtol=0, atol=1e-17)
    assert_allclose(details.levels.vorticity, LEVEL_VORTICITY, rtol=0, atol=1e-17)
    # omega follows: integrated from omega = 0 at the top, continuity gives the surface
    # value -sum(div dp) (arithmetic)
    dp = (PRESSURES[:-1] - PRESSURES[1:]) * 100.0
    assert_allclose(result.si_cells["omega_surface"], -np.sum(want * dp), rtol=1e-12)
    assert result.units["div"] == "1e-5 s^-1"
    assert messages(sheet) == []          # well-shaped networks, every wind present


def test_wind_as_u_and_v_gives_the_same_divergence():
    latitudes, longitudes = triangle(45.0, 20.0, 0.0)
    by_uv = load(network_text(latitudes, longitudes, form="uv")).evaluate()
    want = (LEVEL_DIVERGENCE[:-1] + LEVEL_DIVERGENCE[1:]) / 2   # by construction
    assert_allclose(by_uv.si_columns["div"], want, rtol=0, atol=1e-17)


def test_missing_wind_at_one_of_three_stations_is_interpolated_in_log_pressure():
    """Level divergence linear in ln p by construction (a + d = 1e-5 ln(p / 700 hPa)
    per level; a, d split evenly), 700 hPa wind missing at Station B: interpolating the
    divergence there from 850 and 500 hPa is exact."""
    divergence = 1e-5 * np.log(PRESSURES / 700.0)
    gradients = np.column_stack([divergence / 2, np.full(5, 0.2e-5), np.full(5, 0.8e-5),
                                 divergence / 2])
    latitudes, longitudes = triangle(50.0, 5.0, 15.0)
    text = network_text(latitudes, longitudes, gradients, missing=[(1, 2)])
    sheet = load(text)
    want = (divergence[:-1] + divergence[1:]) / 2
    assert_allclose(sheet.evaluate().si_columns["div"], want, rtol=0, atol=1e-17)
    found = [n for n in sheet.check() if "700 hPa" in n.message]
    assert any("Station B" in n.message and "cannot be fitted" in n.message for n in found)
    assert any("interpolated linearly in ln p between 850 hPa and 500 hPa" in n.message
               for n in found)
    station_b = text.index('station "Station B"')
    assert found[0].span.line == line_of(text[station_b:], "700.0") + \
        text[:station_b].count("\n")       # Station B's 700 hPa row
    details = sheet.checked.soundings.network.levels
    assert details.divergence_interpolated.tolist() == [False, False, True, False, False]
    assert details.stations_used[2] == 2


def test_missing_wind_at_one_of_five_stations_is_fitted_from_the_rest():
    latitudes, longitudes = pentagon(45.0, 20.0, 0.0)
    sheet = load(network_text(latitudes, longitudes, missing=[(3, 1)]))
    want = (LEVEL_DIVERGENCE[:-1] + LEVEL_DIVERGENCE[1:]) / 2   # exact linear field
    assert_allclose(sheet.evaluate().si_columns["div"], want, rtol=0, atol=1e-17)
    notice = next(n for n in sheet.check() if "850 hPa" in n.message)
    assert "Station D" in notice.message and "fitted from the other 4 stations" in notice.message


def test_missing_wind_at_the_lowest_level_is_an_error():
    latitudes, longitudes = triangle(45.0, 20.0, 0.0)
    text = network_text(latitudes, longitudes, missing=[(2, 0)])
    err = error_of(text)
    assert "1000 hPa" in err.message and "lowest level" in err.message
    station_c = text.index('station "Station C"')
    assert err.span.line == text[:station_c].count("\n") + 4   # Station C's 1000 hPa row


def test_badly_shaped_networks_warn():
    """Thresholds of physics/stations.py: smallest angle 20 deg, largest separation
    600 km."""
    thin = network_text(np.array([50.0, 50.0, 50.6]), np.array([0.0, 12.0, 6.0]))
    text = " ".join(messages(load(thin)))
    assert "smallest interior angle" in text and "more than 600 km" in text
    far_lat, far_lon = triangle(45.0, 20.0, 0.0, side_m=900e3)
    assert any("more than 600 km" in m for m in messages(load(network_text(far_lat, far_lon))))


# --- stations: thermodynamics ------------------------------------------------------------------

def thermo_station(name, lat, lon, temperature, height=None):
    columns = {"p [hPa]": [1000.0, 850.0, 700.0], "T [degC]": temperature,
               "dir [deg]": [200.0, 220.0, 240.0], "speed [kt]": [10.0, 20.0, 30.0]}
    if height is not None:
        columns["z [m]"] = height
    return station_block(name, lat, lon, columns)


def test_column_temperature_is_the_mean_over_the_stations():
    text = (thermo_station("A", 45.0, 7.0, [12.0, 6.0, -2.0])
            + thermo_station("B", 46.5, 9.0, [14.0, 5.0, float("nan")])
            + thermo_station("C", 44.5, 10.0, [16.0, 7.0, -4.0]))
    sheet = load(text)
    levels = np.array([14.0, 6.0, -3.0])       # station means; B's '-' leaves it out
    assert_allclose(sheet.evaluate().layers["T"], (levels[:-1] + levels[1:]) / 2, rtol=1e-12)
    notice = next(n for n in sheet.check() if 'station "B" has no T' in n.message)
    assert "700 hPa" in notice.message
    assert sheet.checked.soundings.thermodynamics_from == "the mean over the stations"


def test_levels_table_gives_the_thermodynamics_and_stations_the_winds():
    table = levels_block({"p [hPa]": [1000.0, 850.0, 700.0], "T [degC]": [20.0, 10.0, 0.0]})
    stations = (thermo_station("A", 45.0, 7.0, [12.0, 6.0, -2.0])
                + thermo_station("B", 46.5, 9.0, [14.0, 5.0, -3.0])
                + thermo_station("C", 44.5, 10.0, [16.0, 7.0, -4.0]))
    sheet = load(table + stations)
    layers = sheet.evaluate().layers
    assert_allclose(layers["T"], [15.0, 5.0], rtol=1e-12)    # the table's levels, arithmetic
    assert "div" in layers and "omega_bottom" in layers
    assert any("used only for their hydrostatic check" in m for m in messages(sheet))


def test_each_station_is_checked_hydrostatically():
    """Station B's 850 hPa height 200 m too high (construction): named with the station."""
    dz1 = RD * 283.15 / G0 * np.log(1000.0 / 850.0)     # isothermal 10 degC, hypsometric
    dz2 = RD * 283.15 / G0 * np.log(850.0 / 700.0)
    good = [100.0, 100.0 + dz1, 100.0 + dz1 + dz2]
    bad = [100.0, 300.0 + dz1, 100.0 + dz1 + dz2]
    text = ("cell surface_height = 100 m\n" + thermo_station("A", 45.0, 7.0, [10.0] * 3, good)
            + thermo_station("B", 46.5, 9.0, [10.0] * 3, bad)
            + thermo_station("C", 44.5, 10.0, [10.0] * 3, good))
    found = [n for n in load(text).check() if "hydrostatic" in n.message]
    assert len(found) == 1 and 'station "B"' in found[0].message
    assert "height at 850 hPa is likely mistyped" in found[0].message
    station_b = text.index('station "B"')
    assert found[0].span.line == text[:station_b].count("\n") + 5   # B's 850 hPa row


def test_details_are_frozen_records_and_plain_json_only_in_the_json_writer():
    import dataclasses

    from layercalc.formats.jsondoc import soundings_document

    latitudes, longitudes = triangle(45.0, 20.0, 0.0)
    checked = load(network_text(latitudes, longitudes, missing=[(1, 2)])).checked
    details = checked.soundings
    assert np.isnan(details.network.stations[1].u[2])  # the missing wind, NaN in SI arrays
    with pytest.raises(dataclasses.FrozenInstanceError):
        details.network = None
    text = json.dumps(soundings_document(checked), allow_nan=False)  # raises on NaN/numpy
    assert json.loads(text)["network"]["stations"][1]["u"][2] is None


# --- bad input: our error, with a position -----------------------------------------------------

THREE = (thermo_station("A", 45.0, 7.0, [12.0, 6.0, -2.0])
         + thermo_station("B", 46.5, 9.0, [14.0, 5.0, -3.0])
         + thermo_station("C", 44.5, 10.0, [16.0, 7.0, -4.0]))


def replaced(text, old, new, count=1):
    assert old in text
    return text.replace(old, new, count)


ERRORS = [  # text, words in the message (or hint), fragment on the line it must point at
    (THREE.split('station "C"')[0], "2 stations given", 'station "A"'),
    ("levels\n  T [degC]\n  10\n  5\nend\n", "has no 'p' column", "T [degC]"),
    ("levels\n  p_bottom [hPa]  T [degC]\n  1000 10\n  850 5\nend\n", "no 'p_bottom'",
     "p_bottom"),
    ("levels\n  p [hPa]  T [degC]\n  1000 10\n  1000 5\nend\n", "1000 hPa twice", "1000 5"),
    ("levels\n  p [hPa]  T [degC]\n  1000 10\n  850\nend\n", "2 columns", "850"),
    ("levels\n  p [hPa]  T [degC]\n  1000 10\n  - 5\nend\n", "pressure must be", "- 5"),
    ("levels\n  p [hPa]  T [degC]\n  1000 10\n  850 5\n  700 -\nend\n",
     "missing at 700 hPa, the highest level", "700 -"),
    ("levels\n  p [hPa]  T [m]\n  1000 10\n  850 5\nend\n", "must be a temperature", "T [m]"),
    ("levels\n  p [hPa]  T [degC]\n  1000 10\nend\n", "one level", "levels"),
    ("levels\n  p [hPa]  T [degC]\n  1000 10\n  850 5\nend\n"
     "levels  # again\n  p [hPa]  T [degC]\n  1000 10\n  850 5\nend\n", "second one",
     "# again"),
    (replaced(THREE, "240.0", "400.0"), "outside 0 to 360", "400.0"),
    (replaced(THREE, "  10.0\n", "  -10.0\n"), "cannot be negative", "-10.0"),
    (replaced(THREE, '"B"', '"A"'), "appears twice", 'latitude 46.5'),
    (replaced(THREE, "latitude 46.5", "latitude 95.0"), "latitude 95", "latitude 95"),
    (replaced(THREE, "  speed [kt]", "", 1), "'dir' is given without 'speed'", "dir [deg]"),
    (replaced(THREE, "    700.0  -3.0  240.0  30.0\n", ""), "has no row for 700 hPa",
     'station "B"'),
    (replaced(THREE, "    700.0  -3.0", "    600.0  -3.0"), "reports 600 hPa", "600.0"),
    (levels_block({"p [hPa]": [1000.0, 850.0, 500.0], "T [degC]": [1.0, 2.0, 3.0]}) + THREE,
     "same levels", "500.0"),
    (levels_block({"p [hPa]": [1000.0, 850.0, 700.0], "div": [1.0, 2.0, 3.0]}) + THREE,
     "also comes from the station winds", "div"),
    (replaced(THREE, "latitude 44.5 longitude 10.0", "latitude 45.0 longitude 7.0"),
     "same place", 'station "C"'),
    (THREE.replace("  dir [deg]  speed [kt]", "").replace("  200.0  10.0", "")
     .replace("  220.0  20.0", "").replace("  240.0  30.0", ""), "has no wind", "p [hPa]"),
]


@pytest.mark.parametrize("text, words, fragment", ERRORS)
def test_bad_input_is_our_error_with_a_position(text, words, fragment):
    err = error_of(text)
    assert words in err.message + (err.hint or "")
    assert err.location == f"test.layers:{err.span.line}:{err.span.column}"
    assert err.span.line == line_of(text, fragment)
    assert layercalc.problems(text, is_text=True)       # `check` reports it too


def test_collinear_stations_are_an_error():
    text = network_text(np.array([45.0, 45.5, 46.0]), np.array([7.0, 7.0, 7.0]))
    err = error_of(text)
    assert "in a line" in err.message and err.span.line == 1


# --- the worked case ---------------------------------------------------------------------------

def great_circle_km(lat1, lon1, lat2, lon2):
    """Haversine distance on the GRS80 mean sphere (formula from memory). [km]"""
    p1, p2, dl = np.deg2rad(lat1), np.deg2rad(lat2), np.deg2rad(lon2 - lon1)
    h = np.sin((p2 - p1) / 2) ** 2 + np.cos(p1) * np.cos(p2) * np.sin(dl / 2) ** 2
    return 2.0 * station_physics.EARTH_MEAN_RADIUS * np.arcsin(np.sqrt(h)) / 1e3


def test_worked_case_evaluates_cleanly():
    assert layercalc.problems(WORKED_CASE) == []
    sheet = layercalc.load(WORKED_CASE)
    assert sheet.check() == []                  # no warnings: every check passes
    result = sheet.evaluate()
    details = sheet.checked.soundings
    stations = list(details.network.stations)
    assert len(stations) == 3
    sides = [great_circle_km(a.latitude, a.longitude, b.latitude, b.longitude)
             for a, b in zip(stations, stations[1:] + stations[:1])]
    assert all(200.0 < side < 400.0 for side in sides)     # the brief for this case
    level = np.array(details.network.levels.divergence)
    assert_allclose(result.si_columns["div"], (level[:-1] + level[1:]) / 2, rtol=1e-12)
    assert np.isfinite(result.cells["surface_pressure_tendency"])


def test_worked_case_header_figures_hold():
    """The figures quoted in the case's comment header, from this computation."""
    text = WORKED_CASE.read_text()
    cells = layercalc.loads(text).evaluate().cells
    assert abs(cells["surface_pressure_tendency"] + 1.7) < 0.05      # "falls by about 1.7"
    assert abs(cells["dines_ratio"] - 0.02) < 0.005                   # "about 0.02"
    assert cells["max_ascent_pressure"] == 500.0                      # "strongest at 500"
    assert abs(cells["max_ascent"] + 13.0) < 0.5                      # "about 13 hPa/h"
    row = next(line for line in text.splitlines() if line.split()[:1] == ["300"]
               and "9237" in line)                                    # Eastmoor, 300 hPa
    turned = layercalc.loads(text.replace(row, row.replace(" 243 ", " 248 "))).evaluate()
    faster = layercalc.loads(text.replace(row, row.replace(" 83", " 84"))).evaluate()
    change_turned = turned.cells["surface_pressure_tendency"] - cells["surface_pressure_tendency"]
    change_faster = faster.cells["surface_pressure_tendency"] - cells["surface_pressure_tendency"]
    assert 6.5 < abs(change_turned) < 7.5             # "about 7 hPa/3h"
    assert 1.2 < abs(change_faster) < 1.4             # "about 1.3 hPa/3h"


def test_a_station_near_a_pole_is_warned_about():
    latitudes, longitudes = triangle(86.0, 20.0, 0.0)
    sheet = load(network_text(latitudes, longitudes))
    assert any("of a pole" in m for m in messages(sheet))
    latitudes, longitudes = triangle(45.0, 20.0, 0.0)
    assert not any("of a pole" in m for m in messages(load(network_text(latitudes,
                                                                          longitudes))))


# --- a level without a temperature, and the two thicknesses of a moist layer -------------
def _gap_at_850_and_700_height_raised(rise: float = 60.0) -> str:
    """USSA as reported, no temperature at 850 hPa, the 700 hPa height `rise` m too high."""
    lines = reported_ussa_text().splitlines()
    for i, line in enumerate(lines):
        parts = line.split()
        if parts and parts[0] == "850.0":
            lines[i] = "  ".join([parts[0], "-", parts[2]])
        if parts and parts[0] == "700.0":
            lines[i] = "  ".join([parts[0], parts[1], f"{float(parts[2]) + rise:.1f}"])
    return "\n".join(lines) + "\n"


def test_a_missing_temperature_does_not_turn_a_height_error_into_a_temperature_error():
    """The 700 hPa height 60 m too high (construction) next to 850 hPa without T: the check
    spans 925-700 hPa, so the two checked layers beside 700 hPa are off by about +60 and
    -60 m (construction; USSA's own departure < 10 m, test_levels) and the height is named;
    the skipped layers are said, with the reason."""
    text = _gap_at_850_and_700_height_raised()
    sheet = load(text)
    found = [n.message for n in sheet.check() if "hydrostatic" in n.message]
    assert any("height at 700 hPa is likely mistyped" in m for m in found), found
    assert not any("temperature at" in m and "likely wrong" in m for m in found)
    assert not any("check the temperature" in m for m in found)
    skipped = next(n for n in sheet.check() if "not checked on their own" in n.message)
    assert ("925 hPa to 850 hPa (no temperature at 850 hPa); 850 hPa to 700 hPa (no "
            "temperature at 850 hPa)") in skipped.message
    assert "925 hPa to 700 hPa (off by +" in skipped.message
    assert skipped.span.line == line_of(text, "850.0  -")
    table = sheet.checked.soundings.hydrostatic[0]
    assert [(b / 100, t / 100) for b, t, _ in table.unchecked] == [(925.0, 850.0), (850.0, 700.0)]
    (combined,) = table.combined
    assert (combined.p_bottom, combined.p_top, combined.flagged) == (92500.0, 70000.0, True)
    assert abs(combined.difference - 60.0) < 10.0     # 60 m raised, USSA within 10 m
    assert np.isnan(table.difference[1:3]).all()      # the two layers themselves: no value


def test_skipped_hydrostatic_layers_in_the_report_and_json(tmp_path):
    from layercalc.cli.main import main

    path = tmp_path / "gap.layers"
    path.write_text(_gap_at_850_and_700_height_raised())
    report, document = tmp_path / "report.txt", tmp_path / "out.json"
    assert main(["run", str(path), "-o", str(report)]) == 0
    text = " ".join(report.read_text().split())
    assert "Layers shown '-' were not checked on their own: 925 hPa to 850 hPa" in text
    assert "checked instead as one layer across the gap: 925 hPa to 700 hPa" in text
    assert main(["run", str(path), "--json", "-o", str(document)]) == 0
    hydrostatic = json.loads(document.read_text())["soundings"]["hydrostatic"][0]
    assert hydrostatic["unchecked"][0] == {"p_bottom": 92500.0, "p_top": 85000.0,
                                           "reason": "no temperature at 850 hPa"}
    assert hydrostatic["difference"][1] is None
    assert [(c["p_bottom"], c["p_top"], c["flagged"]) for c in hydrostatic["combined"]] == [
        (92500.0, 70000.0, True)]


def test_layer_thickness_and_hydrostatic_thickness_differ_as_the_readme_says():
    """README's levels example: the layer's `thickness` uses Tv of the mean T and Td, the
    check uses the mean of the levels' Tv. Expected values from metpy 1.7.1 (independent
    library: virtual_temperature of mixing_ratio of saturation_vapor_pressure(Td)), with
    Rd / g0 from layercalc.constants; README quotes -0.12 and -0.18 m."""
    import metpy.calc as mpcalc
    from metpy.units import units

    text = ("levels\n  p [hPa]  T [degC]  Td [degC]  z [m]\n  1000  14.0  9.0  110\n"
            "  850  6.0  0.0  1540\n  700  -4.0  -12.0  3100\nend\n")
    sheet = load(text)
    got = (np.asarray(sheet.evaluate().si_layers["thickness"])
           - sheet.checked.soundings.hydrostatic[0].hypsometric_thickness)

    def tv(p, t, td):
        r = mpcalc.mixing_ratio(mpcalc.saturation_vapor_pressure(td * units.degC), p * units.hPa)
        return mpcalc.virtual_temperature(t * units.degC, r).to("K").magnitude

    p, t, td = np.array([1000.0, 850.0, 700.0]), np.array([14.0, 6.0, -4.0]), np.array([9.0, 0.0, -12.0])
    log_ratio = np.log(p[:-1] / p[1:])
    layer = tv(np.sqrt(p[:-1] * p[1:]), (t[:-1] + t[1:]) / 2, (td[:-1] + td[1:]) / 2)
    levels = tv(p, t, td)
    want = RD / G0 * log_ratio * (layer - (levels[:-1] + levels[1:]) / 2)
    assert_allclose(got, want, atol=0.01)
    assert_allclose(got, [-0.12, -0.18], atol=0.005)      # as README states
