"""Tests of layercalc.evaluation.uncertainty: the sheet's error model, exact propagation
beside the ensemble, scenarios, reproducibility and bad input.

Sources of expected values are given beside each check; Monte Carlo bounds are 5
standard errors of the statistic (derivation in tests/physics/test_uncertainty.py).
"""

from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

import layercalc
from tests.helpers import refused_in_both_places
from layercalc.errors import LayercalcError
from layercalc.evaluation.uncertainty import assess_sheet
from layercalc.physics import ensembles as ens

CASES = Path(__file__).resolve().parents[2] / "worked_cases"
HAND = """title "Made-up column with hand-entered divergence"
cell div_error = 0.3 [1e-5 s^-1]
cell members = 20000
cell seed = 5
layers
  p_bottom [hPa]  p_top [hPa]  T [degC]  div [1e-5 s^-1]
  1000  900   10   -1.0
  900   800    5   -0.5
  800   700    0    0.0
  700   600   -8    0.5
  600   500  -16    0.8
end
"""


def test_tendency_sigma_for_hand_entered_divergence_is_sigma_dp_root_k():
    # source: derived, from the top omega_s = -sum D dp, sigma = sigma_D dp sqrt(k) for k
    # independent layers of equal depth dp; ensemble within 5 standard errors of s for a
    # normal variable, 5 sqrt(2 / N) / 2 = 2.5 % at N = 20000
    assessment = assess_sheet(layercalc.loads(HAND))
    want = 0.3e-5 * 10000.0 * np.sqrt(5.0)
    assert_allclose(assessment.linear["surface_pressure_tendency"], want, rtol=1e-12)
    cell = assessment.cells["surface_pressure_tendency"]
    assert cell["sigma"] == assessment.linear["surface_pressure_tendency"]
    # the ensemble's 5-95 % range is +-1.645 sigma about the value (normal errors)
    sheet = layercalc.loads(HAND)
    value = sheet.evaluate().si_cells["surface_pressure_tendency"]
    half = (cell["p95"] - cell["p05"]) / 2.0
    assert_allclose(half, ens.NORMAL_QUANTILE_95 * want, rtol=0.05)  # quantile SE ~1 %
    assert_allclose(cell["p50"], value, atol=0.05 * want)
    p = ens.normal_probability_below(value, want)
    assert abs(assessment.probability_falling - p) < 5 * np.sqrt(p * (1 - p) / 20000)


def test_station_network_ensemble_agrees_with_exact_propagation():
    # source: derived (exact linear propagation of the linearised rounding covariance);
    # the ensemble draws the rounding exactly (uniform direction and speed), a sum of 54
    # small independent terms, nearly normal: 5 sqrt(2 / N) / 2 = 3.5 % at N = 10000
    assessment = assess_sheet(layercalc.load(CASES / "three_stations.layers"))
    assert assessment is not None and assessment.model.members == 10000
    linear = assessment.linear["surface_pressure_tendency"]
    sheet = layercalc.load(CASES / "three_stations.layers")
    from layercalc.evaluation.uncertainty import network_of
    assert network_of(sheet.checked).reported
    spread = assessment.cells["surface_pressure_tendency"]
    # the percentiles come from the ensemble; their half range must be near 1.645 sigma
    assert_allclose((spread["p95"] - spread["p05"]) / 2.0, ens.NORMAL_QUANTILE_95 * linear,
                    rtol=0.05)
    # levels: one sigma per level of soundings.network.levels.pressure, all positive
    assert assessment.levels["divergence"].shape == (9,)
    assert np.all(assessment.levels["divergence"] > 0)


def test_ensemble_is_reproducible_and_the_seed_matters():
    # source: common practice, no source (a seeded generator repeats itself)
    sheet = layercalc.loads(HAND)
    first, again = assess_sheet(sheet), assess_sheet(sheet)
    assert first.cells == again.cells
    other = assess_sheet(layercalc.loads(HAND.replace("seed = 5", "seed = 6")))
    assert other.cells["surface_pressure_tendency"]["p05"] != \
        first.cells["surface_pressure_tendency"]["p05"]


def test_a_scenario_changes_the_error_model():
    # source: derived, the declared error adds variance: the instrument variant's exact
    # sigma must exceed the rounding floor's; the growth makes the upper levels worse
    sheet = layercalc.load(CASES / "three_stations_uncertainty.layers")
    base, instrument = assess_sheet(sheet), assess_sheet(sheet, "instrument")
    assert instrument.model.wind_error == pytest.approx(1.5)
    assert base.model.wind_error == 0.0
    assert instrument.linear["surface_pressure_tendency"] > \
        1.2 * base.linear["surface_pressure_tendency"]
    assert np.all(instrument.levels["divergence"] > base.levels["divergence"])


@pytest.mark.parametrize("old, line, words", [
    ("cell seed = 5", "cell level_correlation = 1",
     "level_correlation must lie strictly between -1 and 1"),
    ("cell members = 20000", "cell members = 10", "members must be a whole number"),
    ("cell div_error = 0.3 [1e-5 s^-1]", "cell div_error = -1 [1e-5 s^-1]",
     "div_error must not be negative"),
])
def test_bad_error_model_values_are_refused_with_their_position(old, line, words):
    # layercalc check finds it too, at the cell's line
    refused_in_both_places(HAND.replace(old, line), words, assess_sheet)


def test_error_model_units_are_checked_like_any_cell():
    text = HAND.replace("cell seed = 5", "cell wind_error = 3 K")
    with pytest.raises(LayercalcError) as caught:
        layercalc.loads(text, "case.layers")
    assert "cell wind_error must be a speed, not a temperature" in caught.value.message


def test_a_missing_wind_leaves_finite_sigmas_through_the_gap_fill():
    # source: derived, an unfitted level is interpolated in ln p from fitted ones, so the
    # layer sigmas stay finite while that level's own sigma is undefined (None in JSON)
    from tests.physics.test_stations import triangle
    from tests.soundings.test_soundings import network_text

    latitudes, longitudes = triangle(50.0, 5.0, 15.0)
    sheet = layercalc.loads(network_text(latitudes, longitudes, missing=[(1, 2)]), "gap.layers")
    assessment = assess_sheet(sheet)
    assert np.all(np.isfinite(assessment.layers["div"]))
    assert np.all(np.isfinite(assessment.layers["omega_top"]))
    assert np.isnan(assessment.levels["divergence"][2])
    assert np.isfinite(np.delete(assessment.levels["divergence"], 2)).all()


def test_a_run_with_an_ensemble_does_not_import_numpy_ma(tmp_path):
    # source: common practice, no source; numpy.percentile and numpy.unique import
    # numpy.ma (about 0.05 s of a cold start), so the ensemble avoids both
    import os
    import subprocess
    import sys

    from tests.helpers import PACKAGE_ROOT

    script = ("import sys, io, contextlib\nfrom layercalc.cli.main import main\n"
              "with contextlib.redirect_stdout(io.StringIO()):\n"
              f"    main(['run', {str(CASES / 'three_stations.layers')!r}])\n"
              "print('numpy.ma' in sys.modules)\n")
    found = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                           env={**os.environ, "PYTHONPATH": str(PACKAGE_ROOT)},
                           cwd=tmp_path, timeout=300)
    assert found.returncode == 0, found.stderr
    assert found.stdout.strip() == "False"


COLUMN_ERRORS = """title "Made-up column with a divergence error per layer"
layers
  p_bottom [hPa]  p_top [hPa]  T [degC]  div [1e-5 s^-1]  div_error [1e-5 s^-1]
  1000  850   14.0  -1.0  0.1
  850   700    6.0  -0.6  0.2
  700   500   -6.0   0.0  0.3
  500   300  -25.0   0.8  0.4
end
scenario worse
  scale div_error by 2
end
"""


def test_a_div_error_column_gives_each_layer_its_own_sigma():
    # source: derived, from the top omega_s = -sum D_k dp_k, so for independent layers
    # sigma^2 = sum (sigma_k dp_k)^2 = (1e-6 15000)^2 + (2e-6 15000)^2 + (3e-6 20000)^2
    # + (4e-6 20000)^2 = 0.011125 (Pa/s)^2; a scenario scaling the column doubles it
    sheet = layercalc.loads(COLUMN_ERRORS)
    want = np.sqrt(0.011125)
    base = assess_sheet(sheet)
    assert_allclose(base.linear["surface_pressure_tendency"], want, rtol=1e-12)
    assert_allclose(base.model.div_error, [1e-6, 2e-6, 3e-6, 4e-6], rtol=1e-12)
    worse = assess_sheet(sheet, "worse")
    assert_allclose(worse.linear["surface_pressure_tendency"], 2 * want, rtol=1e-12)


@pytest.mark.parametrize("change, message", [
    ("div_error [1e-5 s^-1]", "div_error [K]"),
    ("title", "cell div_error = 0.2 [1e-5 s^-1]\ntitle"),
])
def test_a_div_error_column_of_the_wrong_kind_or_twice_is_refused(change, message):
    # common practice, no source: a divergence error is a divergence; one place for it
    text = COLUMN_ERRORS.replace(change, message, 1)
    found = layercalc.problems(text, is_text=True)
    assert len(found) == 1 and "div_error" in found[0].message
    assert found[0].location.startswith("<string>:")
