"""The profile figure: the pictures open with the expected pixel size, and the data drawn
(axis limits, lines) are the case's own numbers."""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

import layercalc
from layercalc.cli import main, worked_cases_folder
from layercalc.plot import COMPARE_SIZE, SINGLE_SIZE, profile_figure, save_profile

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
