"""The printed report: layout (80 columns, column top first), the trade's units, and that
every number shown is the result's own value converted."""

from __future__ import annotations

import re

import numpy as np

import pytest

import layercalc
from layercalc.cli.common import worked_cases_folder
from layercalc.report.text import TableColumn, auto, fixed, render, render_comparison, table_lines

from tests.helpers import BASE_TABLE

CASES = sorted(worked_cases_folder().glob("*.layers"))
TABLE = BASE_TABLE


def report_of(text: str, **options) -> str:
    sheet = layercalc.loads(text, name="case.layers")
    return render(sheet, sheet.evaluate(), **options)


def summary_value(report: str, label: str) -> float:
    line = next(ln for ln in report.splitlines() if ln.strip().startswith(label))
    return float(re.search(r"[-+]?\d+\.?\d*", line[len(label) + 2:]).group())


@pytest.mark.parametrize("case", CASES, ids=[c.stem for c in CASES])
def test_every_worked_case_fits_80_columns(case):
    sheet = layercalc.load(case)
    for name in ["base", *sheet.scenarios]:
        for options in ({}, {"system": "si"}, {"heights": "dam", "every_column": True}):
            text = render(sheet, sheet.evaluate(name), **options)
            assert max(len(line) for line in text.splitlines()) <= 80, (name, options)
            assert text.rstrip().splitlines()[-1].endswith("local procedures.")
    if sheet.scenarios:
        text = render_comparison(sheet, ["base", *sheet.scenarios])
        assert max(len(line) for line in text.splitlines()) <= 80


def test_layers_are_listed_top_first_with_the_surface_last():
    text = report_of(TABLE)
    rows = [ln.split()[0] for ln in text.splitlines()
            if re.match(r"^\d+-\d+ ", ln) or ln.startswith("surface ")]
    assert rows == ["300-200", "500-300", "700-500", "850-700", "1000-850", "surface"]


def test_trade_units_and_the_header_line():
    text = report_of(TABLE)
    for unit in ("degC", "1e-5/s", "hPa/h", "cm/s", "hPa per 3 h", "microbar/s"):
        assert unit in text
    assert "integrate = from_top" in text and "top mismatch: 0 by construction" in text


def test_header_names_the_adjustment_and_the_raw_mismatch():
    text = report_of("option integrate = from_surface\noption adjust = uniform\n" + TABLE)
    flat = " ".join(text.split())
    assert "integrate = from_surface" in flat
    assert "adjustment: uniform" in flat
    # raw mismatch = sum(div dp) = (-150 - 90 + 0 + 160 + 100) x 1e-5 hPa/s = +0.2 Pa/s
    assert "raw top mismatch: +0.72 hPa/h" in flat


def test_summary_numbers_are_the_results_converted():
    sheet = layercalc.loads(TABLE, name="case.layers")
    result = sheet.evaluate()
    text = render(sheet, result)
    cells = result.cells  # display units: hPa/(3 h), hPa/h, 1e-5 s^-1
    assert summary_value(text, "surface pressure tendency") == pytest.approx(
        cells["surface_pressure_tendency"], abs=0.005)
    assert summary_value(text, "omega at the surface") == pytest.approx(
        cells["omega_surface"], abs=0.005)
    assert summary_value(text, "Dines ratio") == pytest.approx(cells["dines_ratio"],
                                                               abs=0.0005)
    assert summary_value(text, "column-mean divergence") == pytest.approx(
        cells["column_mean_divergence"], abs=0.0005)
    microbar = re.search(r"omega at the surface.*\(([-+]\d+\.\d+) microbar/s\)", text)
    assert float(microbar.group(1)) == pytest.approx(result.si_cells["omega_surface"] * 10,
                                                     abs=0.005)  # 1 Pa = 10 microbar


def test_si_units():
    text = report_of(TABLE, system="si")
    assert "Pa/s" in text and "hPa" not in text.replace("hPa per", "")
    assert "100000-85000" in text


def test_dry_column_remark_replaced_default_and_warnings():
    text = report_of(TABLE.replace("div [1e-5 s^-1]", "div") + "column Tv [degC] = T + 1 K\n")
    assert "treated as dry" in text
    assert "your formula for Tv replaces the default" in text
    assert "Warnings" in text
    assert re.search(r"case.layers:2:\d+: warning: column 'div' has no unit", text)


def test_user_columns_and_cells_are_shown_in_file_order():
    text = report_of(TABLE + "column lapse [K/km] = (below(T, T) - T) / thickness\n"
                     "column flag = where(T > 0 degC, 1, 0)\n"
                     "cell warmest [hPa] = at_max(T, p_top)\n")
    columns = text.split("Your columns, top first")[1]
    assert columns.index("lapse") < columns.index("flag") and "K/km" in columns
    cells = text.split("Your cells")[1]
    assert re.search(r"warmest\s+850(\.0)? hPa", cells)


def test_a_column_without_divergence():
    text = report_of(TABLE.replace("  div [1e-5 s^-1]", "").replace("  -1.0", "")
                     .replace("  -0.6", "").replace("   0.0", "").replace("   0.8", "")
                     .replace("   1.0", ""))
    assert "omega: not computed" in text and "omega at the surface" not in text


def test_layers_given_top_first_are_said_so():
    rows = TABLE.splitlines()
    text = report_of("\n".join([rows[0], rows[1], *reversed(rows[2:-1]), rows[-1]]) + "\n")
    assert "given top first" in text


def test_scenario_report_lists_its_changes():
    sheet = layercalc.load(worked_cases_folder() / "midlevel_warming.layers")
    text = render(sheet, sheet.evaluate("warmed_divergent"))
    assert "change (warmed): add warming to T between 500 hPa and 300 hPa" in text
    assert "change (warmed_divergent): scale div by div_scale above 500 hPa" in text


def test_comparison_values_and_changes():
    sheet = layercalc.load(worked_cases_folder() / "midlevel_warming.layers")
    text = render_comparison(sheet, ["base", *sheet.scenarios])
    line = next(ln for ln in text.splitlines() if ln.startswith("pressure tendency"))
    base = sheet.evaluate().cells["surface_pressure_tendency"]
    other = sheet.evaluate("warmed_divergent").cells["surface_pressure_tendency"]
    assert f"{other:.2f} ({other - base:+.2f})" in line


@pytest.mark.parametrize("value, decimals, text", [
    (-0.004, 2, "0.00"), (1.005, 1, "1.0"), (-3.25, 1, "-3.2"), (float("nan"), 2, "-")])
def test_fixed(value, decimals, text):
    assert fixed(value, decimals) == text


def test_auto_significant_digits_and_counts():
    assert auto([1234.5, 2.0]) == ["1234", "2"] or auto([1234.5, 2.0]) == ["1235", "2"]
    assert auto([0.012345]) == ["0.01235"] or auto([0.012345]) == ["0.01234"]
    assert auto([1.0, 0.0, 2.0], counts=True) == ["1", "0", "2"]
    assert auto([2.5e-5]) == ["2.500e-05"]


def test_wide_tables_are_split_and_keep_the_labels():
    columns = [TableColumn(f"column{i}", "unit", ["123456.789"]) for i in range(12)]
    lines = table_lines("layer", "hPa", ["1000-850"], columns)
    assert max(len(line) for line in lines) <= 80
    assert sum(line.startswith("1000-850") for line in lines) > 1


# ---------------------------------------------------------------- soundings (issue 7)
# Where the expected values of this section come from:
# - station positions: pyproj 3.7.2's oblique stereographic projection (+proj=stere, k_0=1,
#   sphere of the GRS80 mean radius) of the file's latitudes and longitudes about the
#   centroid the details give (the centroid itself: layercalc.physics.stations,
#   spherical_centroid, checked independently in tests/physics/test_stations.py);
# - separations: the haversine distance (tests/soundings/test_soundings.py, great_circle_km,
#   formula from memory) and the worked case's own header ("265, 271 and 306 km");
# - per-level divergence and vorticity: plane-linear wind fields, divergence a + d and
#   vorticity c - b by construction (tests/physics/test_stations.py, plane_linear_winds);
# - hydrostatic tables: the hypsometric equation dz = Rd Tv / g0 ln(p1 / p2) (Wallace and
#   Hobbs 2006, section 3.2) written out here, for an isothermal dry column.
from layercalc.constants import G0, RD  # noqa: E402

from tests.soundings.test_soundings import (  # noqa: E402
    LEVEL_DIVERGENCE, LEVEL_VORTICITY, PRESSURES, great_circle_km, levels_block,
    network_text,
)
from tests.physics.test_stations import triangle  # noqa: E402

THREE_STATIONS = worked_cases_folder() / "three_stations.layers"


def block(text: str, heading: str) -> list[str]:
    """The lines of a report section from its heading line to the next blank line."""
    lines = text.splitlines()
    start = next(i for i, line in enumerate(lines) if line.startswith(heading))
    end = next((i for i in range(start, len(lines)) if not lines[i].strip()), len(lines))
    return lines[start:end]


def table_rows(lines: list[str], first_label: str) -> dict[str, list[str]]:
    """Rows of a report table as {label: [cells]}, from the row labelled `first_label`."""
    start = next(i for i, line in enumerate(lines) if line.split()[:1] == [first_label])
    rows = {}
    for line in lines[start:]:
        if not line.startswith(" ") and len(line.split()) > 1:
            rows[line.split()[0]] = line.split()[1:]
    return rows


def station_rows(text: str) -> dict[str, list[float]]:
    lines = block(text, "Station network")
    start = next(i for i, line in enumerate(lines) if line.startswith("station "))
    rows = {}
    for line in lines[start + 2:]:
        if line.startswith("  "):
            break
        name, *numbers = line.rsplit(None, 4)
        rows[name.strip()] = [float(n) for n in numbers]
    return rows


def test_station_network_positions_centroid_area_and_separations():
    import pyproj

    sheet = layercalc.load(THREE_STATIONS)
    text = render(sheet, sheet.evaluate())
    network = sheet.checked.soundings.network
    rows = station_rows(text)
    assert list(rows) == ["Northfield", "Eastmoor", "Southvale"]
    projection = pyproj.Proj(proj="stere", lat_0=network.centroid_latitude,
                             lon_0=network.centroid_longitude, k_0=1.0, R=6371008.7714)
    file_positions = {"Northfield": (47.10, -31.70), "Eastmoor": (45.85, -28.75),
                      "Southvale": (44.70, -32.30)}  # the worked case's station lines
    plane = {}
    for name, (latitude, longitude) in file_positions.items():
        x, y = projection(longitude, latitude)
        plane[name] = (x, y)
        assert rows[name][:2] == [latitude, longitude]
        assert rows[name][2] == pytest.approx(x / 1e3, abs=0.051)  # km, one decimal shown
        assert rows[name][3] == pytest.approx(y / 1e3, abs=0.051)
    flat = " ".join(text.split())
    latitude, longitude = network.centroid_latitude, network.centroid_longitude
    assert f"centroid {latitude:.2f} N, {-longitude:.2f} W" in flat  # west of Greenwich
    assert 45.0 < latitude < 47.1 and -32.3 < longitude < -28.75  # inside the triangle
    # area: shoelace formula on the pyproj plane positions (common practice, no source);
    # the stereographic scale (1.0002 at 170 km) moves it by less than 0.1 %
    (x1, y1), (x2, y2), (x3, y3) = plane.values()
    shoelace = abs((x2 - x1) * (y3 - y1) - (x3 - x1) * (y2 - y1)) / 2 / 1e6
    area = float(re.search(r"area\s+(\d+) km\^2", text).group(1))
    assert area == pytest.approx(shoelace, rel=1e-3)
    # separations: haversine, and the case's header "sides of 265, 271 and 306 km"
    sides = [great_circle_km(*file_positions[a], *file_positions[b])
             for a, b in (("Northfield", "Eastmoor"), ("Eastmoor", "Southvale"),
                          ("Southvale", "Northfield"))]
    assert sorted(round(s) for s in sides) == [265, 271, 306]
    assert f"separations {min(sides):.0f} km to {max(sides):.0f} km" in flat
    # smallest angle: plane angles of the pyproj triangle (law of cosines), to 0.1 deg
    angles = []
    for a, b, c in ((0, 1, 2), (1, 2, 0), (2, 0, 1)):
        p = [np.array(v) for v in plane.values()]
        u, w = p[b] - p[a], p[c] - p[a]
        angles.append(np.degrees(np.arccos(u @ w / np.linalg.norm(u) / np.linalg.norm(w))))
    shown = float(re.search(r"smallest angle\s+([\d.]+) deg", text).group(1))
    assert shown == pytest.approx(min(angles), abs=0.06)


def test_level_divergence_and_vorticity_of_a_linear_wind_field():
    latitudes, longitudes = triangle(45.0, 20.0, 0.0)
    sheet = layercalc.loads(network_text(latitudes, longitudes), name="case.layers")
    text = render(sheet, sheet.evaluate())
    rows = table_rows(block(text, "Divergence and relative vorticity"), "300")
    assert list(rows) == ["300", "500", "700", "850", "1000"]  # top first
    for pressure, divergence, vorticity in zip(PRESSURES, LEVEL_DIVERGENCE, LEVEL_VORTICITY):
        cells = rows[f"{pressure:g}"]
        # a + d and c - b by construction, in 1e-5 s^-1 to two decimals
        assert cells == [f"{divergence * 1e5:.2f}", f"{vorticity * 1e5:.2f}", "3"]
    assert "*" not in " ".join(block(text, "Divergence and relative vorticity"))
    assert max(len(line) for line in text.splitlines()) <= 80


def test_an_interpolated_level_is_flagged():
    """700 hPa wind missing at Station B: no fit there; the divergence is interpolated in
    ln p (soundings.py), so the row is marked and its vorticity unknown."""
    latitudes, longitudes = triangle(50.0, 5.0, 15.0)
    divergence = 1e-5 * np.log(PRESSURES / 700.0)  # linear in ln p: exact interpolation
    gradients = np.column_stack([divergence / 2, np.full(5, 0.2e-5), np.full(5, 0.8e-5),
                                 divergence / 2])
    sheet = layercalc.loads(network_text(latitudes, longitudes, gradients,
                                         missing=[(1, 2)]), name="case.layers")
    text = render(sheet, sheet.evaluate())
    section = block(text, "Divergence and relative vorticity")
    rows = table_rows(section, "300")
    assert rows["700"] == ["0.00", "*", "-", "2"]  # ln(700/700) = 0, by construction
    assert rows["500"][:2] == [f"{divergence[3] * 1e5:.2f}", "0.60"]  # c - b = 0.6e-5
    assert "interpolated linearly in ln p" in " ".join(text.split())
    assert "Station B" in text.split("\nWarnings\n")[1]  # the notice says whose wind is missing


ISOTHERMAL_K = 283.15  # 10 degC, dry: Tv = T


def isothermal_heights(pressures_hpa, surface_m=100.0):
    """Heights of an isothermal dry column (hypsometric equation, written out)."""
    steps = RD * ISOTHERMAL_K / G0 * np.log(np.array(pressures_hpa[:-1]) /
                                            np.array(pressures_hpa[1:]))
    return surface_m + np.concatenate([[0.0], np.cumsum(steps)])


def test_hydrostatic_table_observed_hypsometric_difference_flag_and_implied_tv():
    pressures = [1000.0, 850.0, 700.0, 500.0]
    heights = isothermal_heights(pressures)
    heights[1] += 200.0  # the 850 hPa height mistyped by +200 m
    text_in = "cell surface_height = 100 m\n" + levels_block(
        {"p [hPa]": pressures, "T [degC]": [10.0] * 4, "z [m]": heights})
    sheet = layercalc.loads(text_in, name="case.layers")
    text = render(sheet, sheet.evaluate())
    section = block(text, "Hydrostatic check, the levels table")
    assert "(tolerance 10 m per layer)" in section[0]
    rows = table_rows(section, "700-500")
    assert list(rows) == ["700-500", "850-700", "1000-850"]
    for (bottom, top), offset in (((1000, 850), 200.0), ((850, 700), -200.0),
                                  ((700, 500), 0.0)):
        hypsometric = RD * ISOTHERMAL_K / G0 * np.log(bottom / top)
        observed = hypsometric + offset
        implied = G0 * observed / (RD * np.log(bottom / top)) - 273.15  # degC
        assert rows[f"{bottom}-{top}"] == [
            f"{observed:.0f}", f"{hypsometric:.0f}", f"{offset:.1f}",
            "FLAG" if offset else "ok", f"{implied:.1f}"]
    assert rows["700-500"][-1] == "10.0"  # the column's own temperature
    assert "likely mistyped" in text.split("\nWarnings\n")[1]


def test_hydrostatic_tables_in_decametres_and_si():
    pressures = [1000.0, 850.0, 700.0]
    heights = isothermal_heights(pressures)
    sheet = layercalc.loads("cell surface_height = 100 m\n" + levels_block(
        {"p [hPa]": pressures, "T [degC]": [10.0] * 3, "z [m]": heights}), name="c.layers")
    thickness = RD * ISOTHERMAL_K / G0 * np.log(850.0 / 700.0)  # hypsometric, written out
    dam = table_rows(block(render(sheet, sheet.evaluate(), heights="dam"),
                           "Hydrostatic check"), "850-700")
    assert dam["850-700"][:2] == [f"{thickness / 10:.1f}"] * 2
    assert "(tolerance 1 dam per layer)" in render(sheet, sheet.evaluate(), heights="dam")
    si = render(sheet, sheet.evaluate(), system="si")
    rows = table_rows(block(si, "Hydrostatic check"), "85000-70000")
    assert rows["85000-70000"][-1] == f"{ISOTHERMAL_K:.2f}"  # implied Tv in K


def test_station_section_in_si_units():
    sheet = layercalc.load(THREE_STATIONS)
    text = render(sheet, sheet.evaluate(), system="si")
    network = sheet.checked.soundings.network
    rows = station_rows(text)
    # positions in m: layercalc.physics.stations via soundings.py (checked against pyproj
    # in test_station_network_positions_centroid_area_and_separations)
    assert rows["Eastmoor"][2:] == [round(network.stations[1].x),
                                    round(network.stations[1].y)]
    level_rows = table_rows(block(text, "Divergence and relative vorticity"), "20000")
    assert list(level_rows)[-1] == "100000"
    assert float(level_rows["100000"][0]) == pytest.approx(
        network.levels.divergence[0], rel=1e-3)  # four digits shown
    assert block(text, "Divergence and relative vorticity")[2].split() == ["Pa", "s^-1", "s^-1"]


def test_no_soundings_section_for_a_layers_table_and_no_heights_said():
    assert "Soundings" not in report_of(TABLE)
    sheet = layercalc.loads(levels_block({"p [hPa]": [1000.0, 850.0, 700.0],
                                          "T [degC]": [10.0, 2.0, -6.0]}), name="c.layers")
    text = render(sheet, sheet.evaluate())
    assert "Soundings" in text and "Station network" not in text
    assert "no reported heights" in text


def test_a_scenario_report_says_the_soundings_are_as_given():
    text_in = THREE_STATIONS.read_text(encoding="utf-8") + (
        'scenario stronger from base "More divergence aloft"\n'
        "  scale div by 1.5 above 400 hPa\nend\n")
    sheet = layercalc.loads(text_in, name="three.layers")
    flat = " ".join(render(sheet, sheet.evaluate("stronger")).split())
    assert "As given in the file: the changes of scenario stronger act on the layers" in flat
    assert "As given" not in render(sheet, sheet.evaluate())


def test_layer_mean_wind_of_a_levels_table():
    text = ("cell surface_height = 110 m\nlevels\n  p [hPa]  T [degC]  dir [deg]  speed [kt]\n"
            "  1000  14.0  180  10\n  850  6.0  270  20\n  700  -4.0  360  30\nend\n")
    sheet = layercalc.loads(text, name="winds.layers")
    report = render(sheet, sheet.evaluate())
    rows = {line.split()[0]: line.split()[1:] for line in report.splitlines()
            if line[:1].isdigit() and "-" in line.split()[0]}
    # vector mean of the two levels (WMO convention, common practice, no source):
    # 850-700: (u, v) = ((20 + 0) / 2, (0 - 30) / 2) = (10, -15) kt -> from 326 deg, 18 kt
    # 1000-850: ((0 + 20) / 2, (10 + 0) / 2) = (10, 5) kt -> from 243 deg, 11 kt
    assert rows["850-700"][:2] == ["326", "18"]
    assert rows["1000-850"][:2] == ["243", "11"]
