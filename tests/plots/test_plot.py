"""The profile figure: the pictures open with the expected pixel size, and the data drawn
(axis limits, lines) are the case's own numbers."""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

import layercalc
from layercalc.cli.common import worked_cases_folder
from layercalc.cli.main import main
from layercalc.plots.profile import COMPARE_SIZE, SINGLE_SIZE, profile_figure, save_profile

pytest.importorskip("matplotlib")

CASES = worked_cases_folder()


def title(figure) -> str:
    getter = getattr(figure, "get_suptitle", None)  # matplotlib >= 3.8
    return getter() if getter else figure._suptitle.get_text()


def line(axes, gid: str):
    for ax in axes:
        for drawn in ax.get_lines():
            if drawn.get_gid() == gid:
                return drawn
    raise AssertionError(f"no line {gid!r}")


def test_profile_axes_match_the_case():
    sheet = layercalc.load(CASES / "dines_compensation.layers")
    result = sheet.evaluate()
    columns = result.si_columns
    figure = profile_figure(sheet)
    main_axes = figure.axes[0]
    # pressure on a log axis, increasing downward, spanning exactly the column
    assert main_axes.get_yscale() == "log"
    assert main_axes.get_ylim() == pytest.approx((1000.0, 200.0))
    # divergence steps: each layer's value from its bottom to its top
    steps = line(figure.axes, "steps_div")
    assert_allclose(steps.get_xdata(), np.repeat(columns["div"] * 1e5, 2))
    assert_allclose(steps.get_ydata()[:2], [1000.0, 900.0])
    low, high = main_axes.get_xlim()
    assert low <= columns["div"].min() * 1e5 and high >= columns["div"].max() * 1e5
    # omega at the interfaces, in hPa/h, on its own (top) axis
    omega = line(figure.axes, "omega")
    want = np.concatenate([columns["omega_bottom"][:1], columns["omega_top"]]) * 36.0
    assert_allclose(omega.get_xdata(), want)
    assert_allclose(omega.get_ydata(), [1000, 900, 800, 700, 600, 500, 400, 300, 200])
    top_axes = omega.axes
    assert top_axes.get_xlim()[0] <= want.min() and top_axes.get_xlim()[1] >= want.max()
    # the level of non-divergence is marked where the summary puts it
    level = line(figure.axes, "nondivergence")
    assert level.get_ydata()[0] == pytest.approx(
        result.summary["level_of_nondivergence"][0] / 100)
    # heights on the right, from the interface heights
    labels = [ax.get_ylabel() for ax in figure.axes[0].child_axes]
    assert "height (km)" in labels
    assert "+0.54 hPa per 3 h" in title(figure)


def test_png_opens_with_the_expected_size(tmp_path):
    from matplotlib.image import imread

    sheet = layercalc.load(CASES / "dines_compensation.layers")
    target = tmp_path / "profile.png"
    save_profile(sheet, target, dpi=80)
    pixels = imread(target)
    assert pixels.shape[:2] == (round(SINGLE_SIZE[1] * 80), round(SINGLE_SIZE[0] * 80))
    assert pixels.std() > 0.05  # something was drawn


def test_scenarios_get_a_comparison_panel(tmp_path):
    from matplotlib.image import imread

    sheet = layercalc.load(CASES / "midlevel_warming.layers")
    figure = profile_figure(sheet)
    panel = figure.axes[1]
    assert panel.get_ylim() == pytest.approx((1000.0, 150.0))
    for name in ("base", "warmed", "warmed_divergent"):
        drawn = line([panel], f"omega_{name}")
        want = sheet.evaluate(name).si_columns["omega_top"] * 36.0
        assert_allclose(drawn.get_xdata()[1:], want)
        assert name in drawn.get_label()
    target = tmp_path / "compare.png"
    assert main(["plot", str(CASES / "midlevel_warming.layers"), "-o", str(target)]) == 0
    assert imread(target).shape[:2] == (round(COMPARE_SIZE[1] * 100),
                                        round(COMPARE_SIZE[0] * 100))


def test_a_scenario_in_the_first_panel():
    sheet = layercalc.load(CASES / "unbalanced_divergence.layers")
    figure = profile_figure(sheet, scenario="obrien")
    adjusted = line(figure.axes, "steps_div_adjusted")
    want = sheet.evaluate("obrien").si_columns["div_adjusted"] * 1e5
    assert_allclose(adjusted.get_xdata(), np.repeat(want, 2))
    assert "[obrien]" in title(figure)


def test_a_column_without_divergence_draws_temperature(tmp_path):
    sheet = layercalc.load(CASES / "standard_atmosphere.layers")
    figure = profile_figure(sheet)
    steps = line(figure.axes, "steps_T")
    assert_allclose(steps.get_xdata(),
                    np.repeat(sheet.evaluate().si_columns["T"] - 273.15, 2))
    assert figure.axes[0].get_ylim() == pytest.approx((1013.25, 100.0))
    target = tmp_path / "standard.svg"
    save_profile(sheet, target)
    assert "<svg" in target.read_text(encoding="utf-8")[:1000]


# ---------------------------------------------------------------- the station panel
# Where the expected values come from:
# - positions: pyproj 3.7.2's stereographic projection (+proj=stere, k_0=1, sphere of the
#   GRS80 mean radius) of the file's latitudes and longitudes about the details' centroid;
# - arrow directions: the same pyproj projection of a point a few metres downwind of each
#   station (a finite difference of the projection, independent of layercalc's rotation);
# - arrow lengths and labels: the reported winds in the worked case (1 kt = 1852 m/h,
#   NIST SP 811, exact), turning a wind into the plane does not change its speed;
# - divergence and vorticity in the title: the details (layercalc.physics.stations,
#   checked independently in tests/physics/test_stations.py).
from layercalc.errors import OutputError  # noqa: E402
from layercalc.plots.profile import STATION_PANEL_WIDTH, figure_size  # noqa: E402

THREE = CASES / "three_stations.layers"
KNOT = 1852.0 / 3600.0  # m/s
RADIUS = 6371008.7714   # m, GRS80 mean radius
# The worked case at 500 and 700 hPa: station -> (latitude, longitude, {hPa: (dir, kt)}).
REPORTED = {"Northfield": (47.10, -31.70, {500: (229, 47), 700: (219, 31)}),
            "Eastmoor": (45.85, -28.75, {500: (232, 53), 700: (219, 38)}),
            "Southvale": (44.70, -32.30, {500: (229, 50), 700: (222, 36)})}


def station_axes(figure):
    return next(ax for ax in figure.axes if any(ln.get_gid() == "stations"
                                                for ln in ax.get_lines()))


def quiver(ax, gid: str):
    from matplotlib.quiver import Quiver

    return next(c for c in ax.collections if isinstance(c, Quiver) and c.get_gid() == gid)


def projection(network):
    import pyproj

    return pyproj.Proj(proj="stere", lat_0=network.centroid_latitude,
                       lon_0=network.centroid_longitude, k_0=1.0, R=RADIUS)


def downwind_direction(project, latitude, longitude, direction_from_deg):
    """Unit vector on the plane along which a wind from `direction_from_deg` blows."""
    to = np.deg2rad(direction_from_deg + 180.0)  # blows towards
    step = 5.0 / RADIUS  # 5 m along the sphere
    lat2 = latitude + np.rad2deg(step * np.cos(to))
    lon2 = longitude + np.rad2deg(step * np.sin(to) / np.cos(np.deg2rad(latitude)))
    x1, y1 = project(longitude, latitude)
    x2, y2 = project(lon2, lat2)
    vector = np.array([x2 - x1, y2 - y1])
    return vector / np.linalg.norm(vector)


@pytest.mark.parametrize("asked, drawn", [(500.0, 500), (480.0, 500), (620.0, 700)])
def test_station_panel_positions_and_winds(asked, drawn):
    sheet = layercalc.load(THREE)
    network = sheet.checked.soundings.network
    figure = profile_figure(sheet, station_level=asked)
    ax = station_axes(figure)
    project = projection(network)
    stations = line([ax], "stations")
    for i, (name, (latitude, longitude, winds)) in enumerate(REPORTED.items()):
        x, y = project(longitude, latitude)
        assert stations.get_xdata()[i] == pytest.approx(x / 1e3, abs=1e-6)  # km
        assert stations.get_ydata()[i] == pytest.approx(y / 1e3, abs=1e-6)
    arrows = quiver(ax, "station_winds")
    assert_allclose(arrows.X, stations.get_xdata())
    assert_allclose(arrows.Y, stations.get_ydata())
    for i, (name, (latitude, longitude, winds)) in enumerate(REPORTED.items()):
        direction, speed_kt = winds[drawn]  # the nearest level: 480 -> 500, 620 -> 700
        vector = np.array([arrows.U[i], arrows.V[i]])
        assert np.linalg.norm(vector) == pytest.approx(speed_kt * KNOT, rel=1e-9)
        want = downwind_direction(project, latitude, longitude, direction)
        angle = np.degrees(np.arccos(np.clip(vector @ want / np.linalg.norm(vector), -1, 1)))
        assert angle < 0.01  # degrees; the north angle here is 0.6 to 1.6 degrees
        label = next(t for t in ax.texts if t.get_gid() == f"label_{name}")
        assert label.get_text() == f"{name}\n{direction:03d}\N{DEGREE SIGN} {speed_kt} kt"
    level = network.levels.pressure.tolist().index(drawn * 100.0)
    centre = quiver(ax, "centroid_wind")
    assert_allclose([centre.U[0], centre.V[0]], [network.levels.u_at_centroid[level],
                                                 network.levels.v_at_centroid[level]])
    assert line([ax], "centroid").get_xdata()[0] == 0.0  # the plane's origin
    title = ax.get_title()
    assert f"winds at {drawn} hPa" in title
    assert f"divergence {network.levels.divergence[level] * 1e5:+.2f}" in title
    assert f"vorticity {network.levels.vorticity[level] * 1e5:+.2f}" in title
    # every arrow tip and label anchor lies inside the axes
    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    tips_x = arrows.X + arrows.U / arrows.scale
    tips_y = arrows.Y + arrows.V / arrows.scale
    assert np.all((x0 < tips_x) & (tips_x < x1) & (y0 < tips_y) & (tips_y < y1))


def test_station_panel_png_size_and_no_panel_without_stations(tmp_path):
    from matplotlib.image import imread

    # the worked case without its what-if scenarios: one profile panel and the stations
    text = THREE.read_text(encoding="utf-8").split("\n# What-if")[0]
    assert "\nscenario " not in text
    sheet = layercalc.loads(text, name="three.layers")
    assert figure_size(sheet) == (SINGLE_SIZE[0] + STATION_PANEL_WIDTH, SINGLE_SIZE[1])
    target = tmp_path / "three.png"
    save_profile(sheet, target, dpi=60, station_level=300.0)
    pixels = imread(target)
    assert pixels.shape[:2] == (round(SINGLE_SIZE[1] * 60),
                                round((SINGLE_SIZE[0] + STATION_PANEL_WIDTH) * 60))
    assert pixels.std() > 0.05
    plain = layercalc.load(CASES / "dines_compensation.layers")
    assert figure_size(plain) == SINGLE_SIZE
    assert len(profile_figure(plain).axes) == 2  # profile and its omega axis: no stations


def test_station_panel_beside_the_scenario_panel():
    text = THREE.read_text(encoding="utf-8") + (
        'scenario stronger from base "More divergence aloft"\n'
        "  scale div by 1.5 above 400 hPa\nend\n")
    sheet = layercalc.loads(text, name="three.layers")
    figure = profile_figure(sheet)
    assert figure_size(sheet) == (COMPARE_SIZE[0] + STATION_PANEL_WIDTH, COMPARE_SIZE[1])
    line(figure.axes, "omega_stronger")  # the scenario panel is there
    ax = station_axes(figure)
    assert ax.get_position().x0 > 0.6  # the last panel, on the right


def test_a_station_without_wind_at_the_level_has_no_arrow():
    from tests.soundings.test_soundings import network_text
    from tests.physics.test_stations import triangle

    latitudes, longitudes = triangle(50.0, 5.0, 15.0)
    sheet = layercalc.loads(network_text(latitudes, longitudes, missing=[(1, 2)]),
                            name="gap.layers")
    ax = station_axes(profile_figure(sheet, station_level=700.0))
    arrows = quiver(ax, "station_winds")
    hidden = np.broadcast_to(arrows.Umask, arrows.U.shape)  # matplotlib keeps the mask
    assert hidden.tolist() == [False, True, False]            # apart: Station B is masked
    label = next(t for t in ax.texts if t.get_gid() == "label_Station B")
    assert label.get_text() == "Station B\nno wind"
    assert "(interpolated)" in ax.get_title()  # soundings.py: two winds cannot be fitted
    assert "vorticity -" in ax.get_title()


@pytest.mark.parametrize("case", [THREE, CASES / "dines_compensation.layers"])
@pytest.mark.parametrize("level", [0.0, -500.0, float("nan"), "500"])
def test_a_bad_station_level_is_our_error(case, level):
    with pytest.raises(OutputError, match="above 0 hPa"):
        profile_figure(layercalc.load(case), station_level=level)


HIGH_SURFACE = """\
title "Highland station (made-up)"
cell surface_height = 1350 m
layers
  p_bottom [hPa]  p_top [hPa]  T [degC]  div [1e-5 s^-1]
     862           800          12.0      -1.0
     800           700           6.0      -0.6
     700           600          -1.0      -0.2
     600           500          -9.0       0.3
     500           400         -19.0       0.6
     400           300         -32.0       0.8
     300           250         -44.0       0.4
     250           200         -52.0       0.2
end
"""


def test_a_high_surface_is_labelled_with_enough_pressure_ticks():
    """Surface at 862 hPa: its own label, then 800 and 750 hPa (50 hPa steps) before the
    standard 700 hPa, where before only 850 hPa (beside the surface) and 700 hPa were
    labelled. A column from 1000 hPa keeps the standard ticks (nothing added aloft)."""
    from layercalc.plots.profile import pressure_ticks

    figure = profile_figure(layercalc.loads(HIGH_SURFACE, name="high.layers"))
    axis = figure.axes[0]
    labels = [t.get_text() for t in axis.get_yticklabels()]
    ticks = list(axis.get_yticks())
    assert labels[:4] == ["862 sfc", "800", "750", "700"]
    assert_allclose(ticks[:4], [862.0, 800.0, 750.0, 700.0])
    assert "850" not in labels          # beside the surface label it would print over it
    ticks, labels = pressure_ticks(1000.0, 100.0)
    assert labels == ["1000 sfc", "925", "850", "700", "600", "500", "400", "300", "250",
                      "200", "150", "100"]
    assert pressure_ticks(780.0, 150.0)[1][:3] == ["780 sfc", "700", "600"]
