"""The worked cases: each loads, matches its checked-in expected JSON, has the documented
JSON shape, and shows what its header says it shows.

Regenerate the expected files only on purpose:  python -m pytest tests/test_worked_cases.py
--update  (then read the diff before committing).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

import layercalc
from layercalc.cli.common import worked_cases_folder
from layercalc.constants import G0, RD
from layercalc.formats.jsondoc import LAYER_KEYS, SUMMARY_KEYS, dumps, scenarios_document

FOLDER = worked_cases_folder()
CASES = sorted(FOLDER.glob("*.layers"))
NAMES = [p.stem for p in CASES]
RTOL = 1e-9


def expected_path(case: Path) -> Path:
    return case.with_name(case.stem + ".expected.json")


def current_document(case: Path) -> dict:
    """What `layercalc run CASE --json --all-scenarios` prints, as data."""
    sheet = layercalc.load(case)
    return json.loads(dumps(scenarios_document(sheet, ["base", *sheet.scenarios])))


def assert_same(got, want, where: str = "$") -> None:
    """Equal structure; floats within RTOL (relative), everything else exactly."""
    if isinstance(want, dict):
        assert isinstance(got, dict), where
        assert list(got) == list(want), f"{where}: keys {list(got)} != {list(want)}"
        for key in want:
            assert_same(got[key], want[key], f"{where}.{key}")
    elif isinstance(want, list):
        assert isinstance(got, list) and len(got) == len(want), where
        for i, (g, w) in enumerate(zip(got, want)):
            assert_same(g, w, f"{where}[{i}]")
    elif isinstance(want, float) and not isinstance(want, bool):
        assert isinstance(got, (int, float)), where
        assert math.isclose(got, want, rel_tol=RTOL, abs_tol=1e-12), \
            f"{where}: {got!r} != {want!r}"
    else:
        assert got == want, f"{where}: {got!r} != {want!r}"


def test_at_least_six_cases():
    assert len(CASES) >= 6
    for name in ("midlevel_warming", "standard_atmosphere", "moist_summer",
                 "unbalanced_divergence", "dines_compensation", "trainer_exercise"):
        assert name in NAMES


@pytest.mark.parametrize("case", CASES, ids=NAMES)
def test_header_says_what_it_shows(case):
    text = case.read_text(encoding="utf-8")
    header = text.split("\ntitle ", 1)[0]
    assert header.startswith("# ")
    assert "What it shows" in header
    assert "What a forecaster should notice" in header


@pytest.mark.parametrize("case", CASES, ids=NAMES)
def test_matches_expected_json(case, request):
    document = current_document(case)
    path = expected_path(case)
    if request.config.getoption("--update"):
        path.write_text(json.dumps(document, indent=2, ensure_ascii=False) + "\n",
                        encoding="utf-8")
        return
    assert path.is_file(), f"{path.name} is missing: run pytest with --update and review it"
    assert_same(document, json.loads(path.read_text(encoding="utf-8")))


@pytest.mark.parametrize("case", CASES, ids=NAMES)
def test_json_has_the_documented_shape(case):
    document = current_document(case)
    assert set(document) == {"title", "caution", "scenarios"}
    assert document["scenarios"][0]["scenario"] == "base"
    for variant in document["scenarios"]:
        assert isinstance(variant["title"], str) and variant["title"]
        assert isinstance(variant["scenario"], str)
        assert variant["caution"] == layercalc.CAUTION
        units, layers, summary = variant["units"], variant["layers"], variant["summary"]
        assert isinstance(units, dict) and isinstance(layers, list) and layers
        for layer in layers:
            assert list(layer)[:len(LAYER_KEYS)] == list(LAYER_KEYS)
            for key, value in layer.items():
                assert value is None or isinstance(value, float), key
                if value is not None:
                    assert key in units, key
        assert list(summary)[:len(SUMMARY_KEYS)] == list(SUMMARY_KEYS)
        levels = summary["level_of_nondivergence"]
        assert levels is None or all(isinstance(p, float) for p in levels)
        # surface first: pressures fall upward and the layers join
        p_bottom = [layer["p_bottom"] for layer in layers]
        p_top = [layer["p_top"] for layer in layers]
        assert p_bottom == sorted(p_bottom, reverse=True)
        assert p_top[:-1] == p_bottom[1:]
        # SI units
        assert units["p_bottom"] == "Pa" and units["T"] == "K"
        if layers[0]["omega_top"] is not None:
            assert units["omega_top"] == "Pa/s" and units["w_top"] == "m/s"
            assert units["div"] == "s^-1"
            assert units["surface_pressure_tendency"] == "Pa/s"


# ---------------------------------------------------------------- what each case shows
def load(name: str):
    return layercalc.load(FOLDER / f"{name}.layers")


def hpa_per_3h(pa_per_s: float) -> float:
    return pa_per_s * 3 * 3600 / 100


def test_midlevel_warming_falls_and_the_warmed_layers_lift_the_surfaces_above():
    sheet = load("midlevel_warming")
    assert sheet.checked.layer_count == 12  # the benchmark's 12-layer case
    base, warmed, both = (sheet.evaluate(n) for n in ("base", "warmed", "warmed_divergent"))
    div = base.si_columns["div"]
    assert div[0] < 0 < div[-4]  # convergence below, divergence aloft
    tendency = hpa_per_3h(base.si_cells["surface_pressure_tendency"])
    # the case is built to show a falling surface pressure (its header, a made-up scenario)
    assert tendency < -1.0
    # warming alone changes heights, not the tendency
    assert warmed.si_cells["surface_pressure_tendency"] == pytest.approx(
        base.si_cells["surface_pressure_tendency"], rel=1e-12)
    # rise of every surface above 300 hPa = Rd dT / g0 ln(500/300): hypsometric equation
    rise = RD * 3.0 / G0 * math.log(500 / 300)
    above = base.si_columns["p_top"] <= 30000.0 + 1e-6
    assert_allclose((warmed.si_columns["z_top"] - base.si_columns["z_top"])[above], rise,
                    rtol=2e-3)  # Tv, not T, is warmed by 3 K: a moist layer differs slightly
    assert hpa_per_3h(both.si_cells["surface_pressure_tendency"]) < tendency - 1.0


def ussa1976_height(p: float) -> float:
    """Geopotential height (m) of pressure p (Pa) in the U.S. Standard Atmosphere 1976
    (NOAA-S/T 76-1562), from its defining equations below 20 km: lapse rate -6.5 K/km to
    11 km from 288.15 K and 101325 Pa, isothermal 216.65 K above; R* = 8314.32 J/(kmol K),
    M0 = 28.9644 kg/kmol, g0 = 9.80665 m/s^2. Written here independently of the package."""
    r = 8314.32 / 28.9644
    g0 = 9.80665
    p11 = 101325.0 * (288.15 / 216.65) ** (g0 / (r * -0.0065))
    if p >= p11:
        t = 288.15 * (p / 101325.0) ** (-r * -0.0065 / g0)
        return (t - 288.15) / -0.0065
    return 11000.0 - r * 216.65 / g0 * math.log(p / p11)


# Geopotential heights of the standard pressure surfaces in the U.S. Standard Atmosphere
# 1976, as tabulated (rounded to the metre) in its pressure-altitude tables (NOAA-S/T
# 76-1562, Part 4; values written from memory and checked here against the defining
# equations above, which reproduce each within 0.6 m).
USSA1976_HEIGHTS = {1000: 111, 925: 762, 850: 1457, 700: 3012, 500: 5574, 400: 7185,
                    300: 9164, 250: 10363, 200: 11784, 150: 13608, 100: 16180}


def test_standard_atmosphere_layer_temperatures_are_the_standards_means():
    sheet = load("standard_atmosphere")
    inputs = sheet.checked.input_columns
    for pb, pt, t in zip(inputs["p_bottom"].values, inputs["p_top"].values,
                         inputs["T"].values):
        # ln p-weighted mean of T = g0 dH / (R ln(pb/pt)) (hypsometric equation)
        mean = 9.80665 * (ussa1976_height(pt) - ussa1976_height(pb)) / (
            8314.32 / 28.9644 * math.log(pb / pt))
        assert t == pytest.approx(mean, abs=1e-4)


def test_standard_atmosphere_heights_match_the_published_standard_within_1_m():
    sheet = load("standard_atmosphere")
    result = sheet.evaluate()
    heights = result.summary["standard_heights"]
    assert "treated as dry" in " ".join(sheet.checked.remarks)
    for level, published in USSA1976_HEIGHTS.items():
        assert abs(ussa1976_height(level * 100.0) - published) < 0.6
        assert heights[str(level)] == pytest.approx(published, abs=1.0)
        assert heights[str(level)] == pytest.approx(ussa1976_height(level * 100.0), abs=0.05)


def test_standard_atmosphere_against_an_independent_library():
    # ambiance 1.3.1 (ICAO Standard Atmosphere 1993, identical to the U.S. Standard
    # Atmosphere 1976 below 32 km), from the test extra
    ambiance = pytest.importorskip("ambiance")
    result = load("standard_atmosphere").evaluate()
    levels = np.array([float(k) for k in result.summary["standard_heights"]])
    ours = np.array(list(result.summary["standard_heights"].values()))
    theirs = ambiance.Atmosphere.from_pressure(levels * 100.0).H
    assert_allclose(ours, theirs, atol=1.0)


def test_moist_summer_heights_rise_with_moisture():
    """Thresholds from the virtual-temperature relation Tv = T (r + eps) / (eps (1 + r)):
    r of about 15 g/kg near the ground gives Tv - T of about 0.6 r T = 2.6 K, and the dry
    upper air gives almost none (common practice, no source); the 1000-500 hPa lift is
    Rd dTv / g0 ln 2, some 20-40 m for a layer-mean dTv of 1-2 K (hypsometric equation)."""
    result = load("moist_summer").evaluate()
    columns, cells = result.si_columns, result.si_cells
    assert columns["Tv"][0] - columns["T"][0] > 2.5
    assert abs(columns["Tv"][-1] - columns["T"][-1]) < 0.1
    assert cells["moisture_lift_500"] > 20.0
    assert cells["moisture_lift_top"] >= cells["moisture_lift_500"]
    assert np.all(columns["thickness"] > columns["dry_thickness"])


def test_unbalanced_divergence_adjustments_close_the_column():
    sheet = load("unbalanced_divergence")
    base = sheet.evaluate()
    mismatch = base.si_cells["top_mismatch"]
    # hPa/h: sum(div dp) of the case's table worked by hand (continuity equation, from the
    # surface with omega_surface = 0; common practice, no source), + at the top
    assert mismatch * 3600 / 100 == pytest.approx(5.4)
    assert base.si_columns["omega_top"][-1] == pytest.approx(mismatch)
    for name in ("uniform", "obrien"):
        result = sheet.evaluate(name)
        assert result.sheet.options["adjust"] == name
        assert result.si_columns["omega_top"][-1] == pytest.approx(0.0, abs=1e-12)
        assert result.si_cells["top_mismatch"] == pytest.approx(mismatch)
    # equal-depth layers: O'Brien's closed form omega_k' = omega_k - e k(k+1) / (K(K+1))
    obrien = sheet.evaluate("obrien").si_columns["omega_top"]
    raw = base.si_columns["omega_top"]
    k = np.arange(1, raw.size + 1)
    assert_allclose(obrien, raw - mismatch * k * (k + 1) / (raw.size * (raw.size + 1)),
                    atol=1e-12)


def test_dines_compensation_big_divergences_tiny_tendency():
    """The case is built (made-up scenario, see its header) so that layer divergences of
    3e-5 s^-1 nearly cancel: thresholds are the case's own design figures."""
    result = load("dines_compensation").evaluate()
    cells = result.si_cells
    assert np.abs(result.si_columns["div"]).max() > 2.5e-5
    assert cells["dines_ratio"] < 0.01
    assert abs(hpa_per_3h(cells["surface_pressure_tendency"])) < 1.0
    assert result.si_columns["omega_top"].min() * 36 < -20.0  # hPa/h: strong ascent aloft


def test_trainer_exercise_user_columns_and_cells():
    sheet = load("trainer_exercise")
    result = sheet.evaluate()
    columns, cells = result.si_columns, result.si_cells
    for name in ("z_mid", "lapse_rate", "theta", "dtheta_dz", "stability"):
        assert name in columns
    lapse_k_per_km = columns["lapse_rate"] * 1000
    # 9.8 K/km: the dry-adiabatic lapse rate g0/cp (from memory; any textbook, e.g. Wallace
    # and Hobbs 2006, section 3.5)
    assert lapse_k_per_km[0] > 9.8 and columns["stability"][0] == 2  # superadiabatic
    assert columns["dtheta_dz"][0] < 0
    inversion = int(np.argmin(lapse_k_per_km))
    assert lapse_k_per_km[inversion] < 0 and columns["p_bottom"][inversion] == 80000.0
    assert cells["layers_steeper_than_moist"] == np.sum(lapse_k_per_km > 6.0)
    document = current_document(FOLDER / "trainer_exercise.layers")["scenarios"][0]
    assert "lapse_rate" in document["layers"][0] and document["units"]["lapse_rate"] == "K/m"
    assert "mean_theta" in document["summary"]
