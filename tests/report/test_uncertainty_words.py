"""The uncertainty as the reports word it: the --all-scenarios comparison's tendency
+- sigma and sign per variant, and the sensitivity of the tendency to each layer's
hand-entered divergence error.

Sources of expected values are given beside each check.
"""

from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

import layercalc
from layercalc.evaluation.uncertainty import assess_sheet
from layercalc.report.compare import render_comparison, trust_lines

CASES = Path(__file__).resolve().parents[2] / "worked_cases"
# made-up column; depths 100, 200, 200, 200 hPa; integration from the top
HAND = """title "Made-up column with hand-entered divergence"
cell div_error = 0.3 [1e-5 s^-1]
cell members = 20000
layers
  p_bottom [hPa]  p_top [hPa]  T [degC]  div [1e-5 s^-1]
  1000  900   10   -1.0
  900   700    5   -0.5
  700   500   -8    0.4
  500   300  -16    1.6
end

scenario sloppy "The same divergence known to 3e-5 s^-1 only"
  cell div_error = 3 [1e-5 s^-1]
end
"""
DEPTHS = np.array([100.0, 200.0, 200.0, 200.0]) * 100  # Pa


def test_divergence_sensitivity_is_the_linear_map_times_sigma():
    # source: derived, from the top omega_s = -sum_k div_k dp_k, so a one-sigma error of
    # layer k alone moves the tendency by -dp_k sigma; independent layers share the
    # variance as dp_k^2 / sum dp^2: 1/13 for the 100 hPa layer, 4/13 for each 200 hPa one
    assessment = assess_sheet(layercalc.loads(HAND))
    entries = assessment.sensitivity
    assert [e[0] for e in entries] == ["div of 900-700 hPa", "div of 700-500 hPa",
                                       "div of 500-300 hPa", "div of 1000-900 hPa"]
    sigma = 0.3e-5
    by_label = {e[0]: e for e in entries}
    for label, depth in (("div of 1000-900 hPa", DEPTHS[0]), ("div of 900-700 hPa", DEPTHS[1])):
        _, kind, step, effect, share = by_label[label]
        assert kind == "div" and step == pytest.approx(sigma, rel=1e-12)
        assert_allclose(effect, -depth * sigma, rtol=1e-12)
        assert_allclose(share, depth**2 / np.sum(DEPTHS**2), rtol=1e-12)
    # the shares of independent layers add up to the whole variance
    assert_allclose(sum(e[4] for e in entries), 1.0, rtol=1e-12)


def test_divergence_sensitivity_with_correlated_layers_gives_no_shares():
    # source: derived, with correlated errors the variance is not a sum over layers
    text = HAND.replace("cell members = 20000", "cell members = 20000\ncell level_correlation = 0.5")
    entries = assess_sheet(layercalc.loads(text)).sensitivity
    assert entries and all(e[4] is None for e in entries)


def test_no_divergence_sensitivity_when_the_tendency_is_the_surface_boundary():
    # source: derived, integrated from the surface the tendency is omega_surface, an
    # input: no layer's divergence reaches it
    text = HAND.replace("cell members = 20000", "cell members = 20000\n"
                        "option integrate = from_surface")
    assert assess_sheet(layercalc.loads(text)).sensitivity == []


def test_report_words_the_divergence_sensitivity(capsys, tmp_path):
    from tests.helpers import cli

    case = tmp_path / "hand.layers"
    case.write_text(HAND, encoding="utf-8")
    code, out, _ = cli(capsys, "run", case)
    assert code == 0
    assert "the layer whose divergence error of one sigma" in out
    # source: derived, -dp sigma = -20000 Pa * 0.3e-5 s^-1 = -0.06 Pa/s, times 10800 s
    # / 100 Pa/hPa = -6.48 hPa per 3 h; share 4/13 = 31 %
    assert "div of 900-700 hPa (0.3e-5 s^-1): -6.48 hPa per 3 h (31 % of the variance)" in out


def test_comparison_shows_the_tendency_sigma_and_whether_its_sign_is_determined():
    # source: the assessments' own numbers (common practice, no source) and, for the
    # sign, derived: value -sum div dp = -(-1e-5*1e4 - 0.5e-5*2e4 + 0.4e-5*2e4
    # + 1.6e-5*2e4) = -0.2 Pa/s; sigma = 0.3e-5 * sqrt(1e8 + 3 * 4e8) = 0.108 Pa/s, so
    # the 5-95 % range (+-1.645 sigma = +-0.178) stays below zero; with 3e-5 s^-1 it is
    # ten times wider and spans zero
    sheet = layercalc.loads(HAND)
    value = sheet.evaluate().si_cells["surface_pressure_tendency"]
    assert_allclose(value, -0.2, rtol=1e-12)
    base, sloppy = assess_sheet(sheet), assess_sheet(sheet, "sloppy")
    assert_allclose(base.linear["surface_pressure_tendency"],
                    0.3e-5 * np.sqrt(1e8 + 3 * 4e8), rtol=1e-12)
    text = render_comparison(sheet, ["base", "sloppy"])
    rows = {line.split("  ")[0]: line for line in text.splitlines()
            if line.startswith(("value +- 1 sigma", "sign", "chance it falls"))}
    assert rows["sign"].split()[1:] == ["falling", "not", "determined"]
    per_3h = 10800 / 100  # Pa/s -> hPa per 3 h
    assert f"-{0.2 * per_3h:.2f} +- {base.linear['surface_pressure_tendency'] * per_3h:.2f}" \
        in rows["value +- 1 sigma"]
    assert f"{100 * sloppy.probability_falling:.0f} %" in rows["chance it falls"]


def test_comparison_without_an_error_model_has_no_trust_table():
    # source: common practice, no source (nothing to say without an error model)
    sheet = layercalc.load(CASES / "midlevel_warming.layers")
    assert trust_lines(sheet, ["base", *sheet.scenarios]) == []
    assert "How far to trust" not in render_comparison(sheet, ["base", *sheet.scenarios])


def test_comparison_of_the_worked_case_names_each_scenario():
    # source: the assessments' own numbers, printed to two decimals in hPa per 3 h
    sheet = layercalc.load(CASES / "three_stations_uncertainty.layers")
    names = ["base", *sheet.scenarios]
    text = "\n".join(trust_lines(sheet, names))
    instrument = assess_sheet(sheet, "instrument").cells["surface_pressure_tendency"]
    assert f"+- {instrument['sigma'] * 108:.2f}" in text
    assert text.count("not determined") == 3
