"""Errors of the reported temperatures, dewpoints and heights (T_error, Td_error, z_error):
the layer matrices, the hydrostatic check's sigma, the ensemble through Tv to the heights
and w, scenarios, the outputs and bad input.

Sources of expected values are given beside each check; Monte Carlo bounds are 5
standard errors of the statistic (for a standard deviation of a normal variable from N
members, SE = s / sqrt(2 N); derivation in tests/physics/test_uncertainty.py).
"""

import json
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

import layercalc
from tests.helpers import refused_in_both_places
from layercalc.constants import G0, RD
from layercalc.errors import LayercalcError
from layercalc.evaluation.uncertainty import assess_sheet
from layercalc.physics import error_models as err

CASES = Path(__file__).resolve().parents[2] / "worked_cases"
MEMBERS = 20000
SIGMA_TOLERANCE = 5.0 / np.sqrt(2.0 * MEMBERS)   # relative, 5 standard errors (2.5 %)

DRY = f"""title "Made-up dry column with temperature errors"
cell T_error = 0.5 K
cell members = {MEMBERS}
cell seed = 3
layers
  p_bottom [hPa]  p_top [hPa]  T [degC]
  1000  850   10
  850   700    2
  700   500  -10
  500   300  -30
end
"""

WITH_DIV = DRY.replace("cell seed = 3", "cell seed = 3\ncell div_error = 0.5 [1e-5 s^-1]") \
    .replace("T [degC]", "T [degC]  div [1e-5 s^-1]") \
    .replace("1000  850   10", "1000  850   10  -2.0").replace("850   700    2", "850   700    2  -1.0") \
    .replace("700   500  -10", "700   500  -10   0.5").replace("500   300  -30", "500   300  -30   1.5")


# ---------------------------------------------------------------- physics
def test_level_mean_error_matrix_of_complete_levels():
    # source: derived, a level mean of n independent values has sigma / sqrt(n), a layer
    # the mean of two independent levels: sigma / sqrt(2 n); adjacent layers share a
    # level, covariance sigma^2 / (4 n)
    pressure = np.array([1000.0, 850.0, 700.0, 500.0]) * 100
    matrix = err.level_mean_error_matrix(pressure, [3, 3, 3, 3])
    covariance = matrix @ matrix.T
    assert_allclose(np.sqrt(np.diag(covariance)), 1 / np.sqrt(6.0), rtol=1e-14)
    assert_allclose(covariance[0, 1], 1 / 12.0, rtol=1e-14)
    assert covariance[0, 2] == 0.0


def test_level_mean_error_matrix_interpolates_a_missing_level_in_ln_p():
    # source: derived, the 850 hPa value is w x_1000 + (1 - w) x_700 with
    # w = ln(850/700) / ln(1000/700); each reported level has sigma (one sounding)
    pressure = np.array([1000.0, 850.0, 700.0]) * 100
    matrix = err.level_mean_error_matrix(pressure, [1, 0, 1])
    w = np.log(850 / 700) / np.log(1000 / 700)
    assert_allclose(matrix, [[(1 + w) / 2, 0.0, (1 - w) / 2],
                             [w / 2, 0.0, (2 - w) / 2]], rtol=1e-14)


def test_hydrostatic_difference_sigma_for_dry_air():
    # source: derived from the hypsometric equation, dry air (dTv/dT = 1): Var = 2 sz^2 +
    # (Rd / g0 ln(pb / pt) / 2)^2 * 2 sT^2
    pb, pt = np.array([100000.0, 85000.0]), np.array([85000.0, 70000.0])
    got = err.hydrostatic_difference_sigma(pb, pt, np.ones(3), np.zeros(3), 0.5, 2.0, 5.0)
    factor = RD / G0 * np.log(pb / pt) / 2
    assert_allclose(got, np.sqrt(2 * 25.0 + factor**2 * 2 * 0.25), rtol=1e-14)


def test_virtual_temperature_derivatives_agree_with_metpy():
    # source: metpy 1.7.1 (independent library), virtual_temperature(T, mixing_ratio(
    # saturation_vapor_pressure(Td), p)), differentiated here by central differences of
    # 0.01 K; metpy's vapour pressure formula (Bolton) differs slightly from ours, so
    # rtol 2 % on dTv/dTd
    import metpy.calc as mpcalc
    from metpy.units import units

    sheet = layercalc.load(CASES / "three_stations.layers")
    table = sheet.checked.soundings.hydrostatic[0]
    t = np.array([12.4, 7.8, 4.6, -3.8, -19.6, -30.2, -44.0, -51.2, -55.4]) + 273.15
    td = np.array([10.1, 6.2, 1.8, -7.5, -26.0, -38.0, -52.0, -60.0, -66.0]) + 273.15
    p = np.array([1000, 925, 850, 700, 500, 400, 300, 250, 200.0])

    def tv(t_k, td_k):
        r = mpcalc.mixing_ratio(mpcalc.saturation_vapor_pressure(td_k * units.K),
                                p * units.hPa)
        return mpcalc.virtual_temperature(t_k * units.K, r).to("K").magnitude

    h = 0.01
    assert_allclose(table.tv_per_temperature, (tv(t + h, td) - tv(t - h, td)) / (2 * h),
                    rtol=1e-4)
    assert_allclose(table.tv_per_dewpoint, (tv(t, td + h) - tv(t, td - h)) / (2 * h),
                    rtol=0.02, atol=1e-5)


# ---------------------------------------------------------------- the ensemble
def test_temperature_errors_reach_tv_thickness_and_heights():
    # source: derived, dry air: Tv = T, thickness = Rd / g0 Tv ln(pb / pt), so
    # sigma(thickness_k) = Rd / g0 ln(pb / pt) sT; layers of a layers table independent,
    # so sigma(z_top_k) = sqrt(sum_{j <= k} sigma(thickness_j)^2) (surface_height exact)
    assessment = assess_sheet(layercalc.loads(DRY))
    pb = np.array([1000.0, 850, 700, 500]) * 100
    pt = np.array([850.0, 700, 500, 300]) * 100
    thickness = RD / G0 * np.log(pb / pt) * 0.5
    assert_allclose(assessment.layers["Tv"], 0.5, rtol=SIGMA_TOLERANCE)
    assert_allclose(assessment.layers["thickness"], thickness, rtol=SIGMA_TOLERANCE)
    assert_allclose(assessment.layers["z_top"], np.sqrt(np.cumsum(thickness**2)),
                    rtol=SIGMA_TOLERANCE)
    cell = assessment.cells["column_thickness"]
    assert_allclose(cell["sigma"], np.sqrt(np.sum(thickness**2)), rtol=SIGMA_TOLERANCE)


def test_w_carries_both_the_divergence_and_the_temperature_error():
    # source: derived, w = -omega Rd Tv / (p g0) with independent omega and Tv errors:
    # Var(w) = (Rd Tv / (p g0))^2 Var(omega) + (Rd omega / (p g0))^2 Var(Tv), to first
    # order; omega's sigma is the exact linear one; tolerance 5 standard errors
    sheet = layercalc.loads(WITH_DIV)
    assessment = assess_sheet(sheet)
    columns = sheet.evaluate().si_columns
    k = RD / (columns["p_top"] * G0)
    want = np.sqrt((k * columns["Tv"] * assessment.layers["omega_top"]) ** 2
                   + (k * columns["omega_top"] * 0.5) ** 2)
    top = slice(0, -1)  # omega_top of the last layer is the boundary value, 0 +- 0
    assert_allclose(assessment.layers["w_top"][top], want[top], rtol=SIGMA_TOLERANCE)
    # with an exact divergence, w is linear in Tv: sigma(w) = |Rd omega / (p g0)| sT
    exact_div = WITH_DIV.replace("cell div_error = 0.5 [1e-5 s^-1]\n", "")
    only_t = assess_sheet(layercalc.loads(exact_div))
    assert "omega_top" not in only_t.layers  # no divergence error: omega is exact
    assert_allclose(only_t.layers["w_top"][top], np.abs(k * columns["omega_top"])[top] * 0.5,
                    rtol=SIGMA_TOLERANCE)
    without = assess_sheet(layercalc.loads(WITH_DIV.replace("cell T_error = 0.5 K\n", "")))
    # the tendency reads no temperature: its exact sigma is unchanged
    assert assessment.linear["surface_pressure_tendency"] == \
        without.linear["surface_pressure_tendency"]


def test_thermometry_scenario_leaves_the_wind_draws_alone():
    # source: derived; the temperature, dewpoint and height errors are drawn after the
    # winds and the tendency does not read them, so its percentiles are the same numbers;
    # the hydrostatic sigma is at least sqrt(2) z_error (two independent heights)
    sheet = layercalc.load(CASES / "three_stations_uncertainty.layers")
    base, thermal = assess_sheet(sheet), assess_sheet(sheet, "thermometry")
    assert thermal.model.T_error == 0.5 and thermal.model.z_error == 5.0
    assert base.cells["surface_pressure_tendency"] == thermal.cells["surface_pressure_tendency"]
    assert "z_top" not in base.layers and "z_top" in thermal.layers
    assert base.hydrostatic == [] and len(thermal.hydrostatic) == 3
    for _, sigma, table in thermal.hydrostatic:
        assert np.all(sigma > np.sqrt(2.0) * 5.0)
        # T error alone (Td and z 0) gives the closed form with dTv/dT from the table
        alone = err.hydrostatic_difference_sigma(table.p_bottom, table.p_top,
                                                 table.tv_per_temperature,
                                                 table.tv_per_dewpoint, 0.5, 0.0, 0.0)
        assert np.all(sigma > alone)
    # station means: a level of 3 soundings has 0.5 / sqrt(3) K, a layer 0.5 / sqrt(6)
    # in T; Tv adds the dewpoint's share, so its sigma is at least that
    assert np.all(thermal.layers["Tv"] > 0.5 / np.sqrt(6.0) * (1 - SIGMA_TOLERANCE))


def test_json_carries_the_thermal_sigmas():
    # source: common practice, no source (the documented JSON shape, module docstring of
    # formats/jsondoc.py)
    from layercalc.formats.jsondoc import dumps, result_document

    sheet = layercalc.load(CASES / "three_stations_uncertainty.layers")
    document = json.loads(dumps(result_document(sheet, sheet.evaluate("thermometry"))))
    found = document["uncertainty"]
    assert found["model"]["T_error"] == 0.5 and found["model"]["z_error"] == 5.0
    assert len(found["layers"]["z_top"]) == 8 and len(found["layers"]["w_top"]) == 8
    assert [h["sounding"] for h in found["hydrostatic"]] == \
        ['station "Northfield"', 'station "Eastmoor"', 'station "Southvale"']
    assert all(len(h["difference_sigma"]) == 8 for h in found["hydrostatic"])


def test_report_shows_heights_and_the_hydrostatic_sigma(capsys):
    # source: common practice, no source (the report's wording); the numbers are the
    # assessment's, printed to the decimals shown
    from tests.helpers import cli

    case = CASES / "three_stations_uncertainty.layers"
    code, out, _ = cli(capsys, "run", case, "--scenario", "thermometry")
    assert code == 0
    flat = " ".join(out.split())
    assert "temperature 0.5 K, dewpoint 2 K, height 5 m (independent)" in flat
    assert "heights, virtual temperature and w (at each layer's top) +- 1 sigma" in out
    thermal = assess_sheet(layercalc.load(case), "thermometry")
    lowest = [line for line in out.splitlines() if line.startswith("  1000-925")][-1]
    assert f"{thermal.layers['z_top'][0]:.0f}" in lowest.split()[2]
    assert 'hydrostatic check, station "Northfield": the declared errors allow' in flat
    code, out, _ = cli(capsys, "run", case)
    assert "heights, virtual temperature" not in out and "declared errors allow" not in out


@pytest.mark.parametrize("line, words", [
    ("cell T_error = 0.5 degC", "T_error is a temperature difference"),
    ("cell T_error = -1 K", "T_error must not be negative"),
    ("cell Td_error = 2 K", "Td_error is given but the sheet has no Td column"),
    ("cell T_error = 80 K", "T_error is 80 K, more than 50 K"),
])
def test_bad_thermal_errors_are_refused_with_their_position(line, words):
    refused_in_both_places(DRY.replace("cell T_error = 0.5 K", line), words, assess_sheet)


def test_thermal_error_units_are_checked_like_any_cell():
    text = DRY.replace("cell T_error = 0.5 K", "cell z_error = 5 K")
    with pytest.raises(LayercalcError) as caught:
        layercalc.loads(text, "case.layers")
    assert "cell z_error must be a length, not a temperature" in caught.value.message
