"""Tests of layercalc.constants and the physics modules (humidity, hypsometric, kinematic).

Every numerical check names where its expected value comes from, beside the check:
a published source, an independent library and version (metpy 1.7.1, ambiance 1.3.1),
an analytic result derived in the test, "common practice, no source", or "from memory".
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from layercalc import constants
from layercalc.constants import CONSTANTS, EPSILON, G0, RD, RV, T_ZERO_CELSIUS
from layercalc.physics import humidity, hypsometric, kinematic

metpy_calc = pytest.importorskip("metpy.calc")
metpy_units = pytest.importorskip("metpy.units").units
metpy_constants = pytest.importorskip("metpy.constants").nounit
ambiance = pytest.importorskip("ambiance")

# numpy >= 2.0 name; numpy 1.x calls it trapz.
_trapezoid = getattr(np, "trapezoid", None) or np.trapz


def _metpy(quantity, unit):
    """Magnitude of a metpy (pint) result in the given unit."""
    return np.asarray(quantity.m_as(unit), dtype=float)


# --------------------------------------------------------------------------------------
# Reference saturation vapour pressure formulations (published equations, coded here).
# --------------------------------------------------------------------------------------

def _es_wagner_pruss(temperature):
    """Saturation pressure of water, Wagner and Pruss (2002), J. Phys. Chem. Ref. Data 31,
    387-535, eq. 2.5 (the IAPWS saturation-pressure equation; Tc = 647.096 K,
    pc = 22.064 MPa). Valid from the triple point 273.16 K upward. Coefficients from memory;
    guarded by test_reference_formulations_agree."""
    critical_temperature, critical_pressure = 647.096, 22.064e6
    tau = 1.0 - temperature / critical_temperature
    a1, a2, a3, a4, a5, a6 = (-7.85951783, 1.84408259, -11.7866497, 22.6807411,
                              -15.9618719, 1.80122502)
    series = (a1 * tau + a2 * tau**1.5 + a3 * tau**3 + a4 * tau**3.5 + a5 * tau**4
              + a6 * tau**7.5)
    return critical_pressure * np.exp(critical_temperature / temperature * series)


def _es_murphy_koop(temperature):
    """Vapour pressure of (supercooled) liquid water, Murphy and Koop (2005), Q. J. R.
    Meteorol. Soc. 131, 1539-1565, eq. 10, valid 123 K < T < 332 K, result in Pa.
    Coefficients from memory, matching the transcription on metformel.de (checked)."""
    t = temperature
    return np.exp(54.842763 - 6763.22 / t - 4.210 * np.log(t) + 0.000367 * t
                  + np.tanh(0.0415 * (t - 218.8))
                  * (53.878 - 1331.22 / t - 9.44523 * np.log(t) + 0.014025 * t))


CELSIUS_ABOVE_TRIPLE_POINT = [0.01, 5.0, 10.0, 15.0, 20.0, 25.0, 30.0, 35.0]
CELSIUS_SUPERCOOLED = [-30.0, -25.0, -20.0, -15.0, -10.0, -5.0, 0.0]


def test_reference_formulations_agree():
    # Guards the transcription of the two published reference equations above: two
    # independent formulations of the same measured curve must agree far better than the
    # 0.1 % tolerance they are used for. Expected: Wagner and Pruss (2002) eq. 2.5;
    # got: Murphy and Koop (2005) eq. 10; rtol 2e-4 (common practice, no source).
    temperature = np.array(CELSIUS_ABOVE_TRIPLE_POINT) + T_ZERO_CELSIUS
    assert_allclose(_es_murphy_koop(temperature), _es_wagner_pruss(temperature), rtol=2e-4)
    # IAPWS triple-point pressure 611.657 Pa (Wagner and Pruss 2002, from memory).
    assert_allclose(_es_wagner_pruss(273.16), 611.657, rtol=1e-5)


@pytest.mark.parametrize("celsius", CELSIUS_ABOVE_TRIPLE_POINT)
def test_bolton_within_stated_accuracy_of_iapws(celsius):
    # Expected: Wagner and Pruss (2002) eq. 2.5 (IAPWS). Tolerance: Bolton (1980) states
    # eq. 10 is accurate to 0.1 % over -30..35 degC (against Wexler's formulation).
    temperature = celsius + T_ZERO_CELSIUS
    assert_allclose(humidity.saturation_vapour_pressure(temperature),
                    _es_wagner_pruss(temperature), rtol=1.0e-3)


@pytest.mark.parametrize("celsius", CELSIUS_SUPERCOOLED)
def test_bolton_over_supercooled_water(celsius):
    # Expected: Murphy and Koop (2005) eq. 10. Tolerance 0.25 %, wider than Bolton's 0.1 %:
    # his 0.1 % is relative to Wexler's curve extended below 0 degC, and the published
    # supercooled-water formulations differ among themselves by about 0.2 % at -30 degC
    # (Goff-Gratch vs Murphy-Koop, computed while writing this test). Measured here: at
    # most 0.2 % (at about -26 degC).
    temperature = celsius + T_ZERO_CELSIUS
    assert_allclose(humidity.saturation_vapour_pressure(temperature),
                    _es_murphy_koop(temperature), rtol=2.5e-3)


def test_bolton_against_metpy():
    # Expected: metpy 1.7.1 saturation_vapor_pressure (phase='liquid'), which is Ambaum
    # (2020) eq. 13: constant heat capacities, anchored at 611.2 Pa at 273.16 K. That
    # anchor is 0.07 % below IAPWS's 611.657 Pa and the deviation grows with temperature,
    # to 0.35 % at 35 degC (asserted first, against Wagner and Pruss 2002). Bolton is
    # within 0.1 % of IAPWS there, so the two can differ by 0.45 %: rtol 4.5e-3.
    celsius = np.arange(-30.0, 35.0 + 1.0, 1.0)
    temperature = celsius + T_ZERO_CELSIUS
    metpy_es = _metpy(metpy_calc.saturation_vapor_pressure(
        metpy_units.Quantity(temperature, "K")), "Pa")
    warm = celsius >= 0.01
    assert_allclose(metpy_es[warm], _es_wagner_pruss(temperature[warm]), rtol=3.5e-3)
    assert_allclose(humidity.saturation_vapour_pressure(temperature), metpy_es, rtol=4.5e-3)


def test_dewpoint_is_bolton_eq_11_as_in_metpy():
    # Expected: metpy 1.7.1 dewpoint, which implements Bolton (1980) eq. 11 with 6.112 hPa,
    # 17.67 and 243.5 (read in its source): the same formula, so rtol 1e-12.
    vapour_pressure = np.array([50.0, 300.0, 611.2, 1500.0, 3000.0, 5600.0])
    want = _metpy(metpy_calc.dewpoint(metpy_units.Quantity(vapour_pressure, "Pa")), "K")
    assert_allclose(humidity.dewpoint_from_vapour_pressure(vapour_pressure), want,
                    rtol=1e-12)


def test_dewpoint_inverts_saturation_vapour_pressure():
    # Expected: the input temperature (analytic inverse of Bolton eq. 10); rtol 1e-12.
    temperature = np.linspace(240.0, 310.0, 15)
    vapour_pressure = humidity.vapour_pressure_from_dewpoint(temperature)
    assert_allclose(humidity.dewpoint_from_vapour_pressure(vapour_pressure), temperature,
                    rtol=1e-12)


# Mixing ratios and virtual temperature against metpy 1.7.1. metpy's epsilon is
# 18.015268 / 28.96546 = 0.621957 (constants/default.py); ours is 18.01528 / 28.9644 =
# 0.621980, 3.7e-5 higher. Passing our epsilon to metpy compares the formulas alone.
VAPOUR_PRESSURE_CASES = [  # (vapour pressure [Pa], total pressure [Pa])
    (100.0, 100000.0), (1200.0, 101325.0), (2500.0, 85000.0), (4000.0, 100000.0),
    (300.0, 50000.0),
]


@pytest.mark.parametrize("vapour_pressure, pressure", VAPOUR_PRESSURE_CASES)
def test_mixing_ratio_against_metpy(vapour_pressure, pressure):
    got = humidity.mixing_ratio(vapour_pressure, pressure)
    e, p = (metpy_units.Quantity(vapour_pressure, "Pa"), metpy_units.Quantity(pressure, "Pa"))
    # Expected: metpy 1.7.1 mixing_ratio given our epsilon: same formula, rtol 1e-12.
    same_epsilon = _metpy(metpy_calc.mixing_ratio(e, p, molecular_weight_ratio=EPSILON), "")
    assert_allclose(got, same_epsilon, rtol=1e-12)
    # Expected: metpy 1.7.1 mixing_ratio with its own epsilon; r is proportional to
    # epsilon, so they differ by the epsilon ratio, 3.7e-5: rtol 5e-5.
    own_epsilon = _metpy(metpy_calc.mixing_ratio(e, p), "")
    assert_allclose(got, own_epsilon, rtol=5e-5)


@pytest.mark.parametrize("vapour_pressure, pressure", VAPOUR_PRESSURE_CASES)
def test_vapour_pressure_from_mixing_ratio_inverts(vapour_pressure, pressure):
    # Expected: the input vapour pressure (analytic inverse); rtol 1e-12.
    ratio = humidity.mixing_ratio(vapour_pressure, pressure)
    assert_allclose(humidity.vapour_pressure_from_mixing_ratio(ratio, pressure),
                    vapour_pressure, rtol=1e-12)


@pytest.mark.parametrize("temperature, ratio", [
    (300.0, 0.0), (300.0, 0.02), (273.15, 0.005), (250.0, 0.0005), (305.0, 0.03),
])
def test_virtual_temperature_against_metpy(temperature, ratio):
    got = humidity.virtual_temperature(temperature, ratio)
    t = metpy_units.Quantity(temperature, "K")
    r = metpy_units.Quantity(ratio, "")
    # Expected: metpy 1.7.1 virtual_temperature given our epsilon; it uses the same exact
    # form T (r + eps) / (eps (1 + r)) (read in its source): rtol 1e-12.
    same_epsilon = _metpy(metpy_calc.virtual_temperature(t, r, molecular_weight_ratio=EPSILON),
                          "K")
    assert_allclose(got, same_epsilon, rtol=1e-12)
    # Expected: metpy 1.7.1 with its own epsilon. d ln Tv / d ln eps = -r / (r + eps), at
    # most 0.05 for r <= 0.03, times the 3.7e-5 epsilon difference: rtol 2e-6.
    own_epsilon = _metpy(metpy_calc.virtual_temperature(t, r), "K")
    assert_allclose(got, own_epsilon, rtol=2e-6)


@pytest.mark.parametrize("relative_humidity, temperature", [
    (0.0, 280.0), (0.5, 280.0), (0.8, 300.0), (1.0, 260.0),
])
def test_vapour_pressure_from_relative_humidity(relative_humidity, temperature):
    # Expected: RH * es with es from metpy 1.7.1 saturation_vapor_pressure; the two es
    # formulas differ by up to 0.45 % over -30..35 degC (see test_bolton_against_metpy),
    # so rtol 4.5e-3. RH = 0 must give exactly 0 (atol 0).
    es = _metpy(metpy_calc.saturation_vapor_pressure(metpy_units.Quantity(temperature, "K")),
                "Pa")
    assert_allclose(humidity.vapour_pressure_from_relative_humidity(relative_humidity,
                                                                     temperature),
                    relative_humidity * es, rtol=4.5e-3, atol=0.0)


# --------------------------------------------------------------------------------------
# Constants
# --------------------------------------------------------------------------------------

def test_constants_against_independent_values():
    # Expected: ambiance 1.3.1 CONST.R = 287.05287 (ICAO, M0 = 28.96442); ours uses the
    # USSA 1976 M0 = 28.9644, 7e-7 apart: rtol 1e-6.
    assert_allclose(RD, ambiance.CONST.R, rtol=1e-6)
    # Expected: 287.053 J kg^-1 K^-1 as quoted for USSA 1976 (from memory); rtol 2e-6.
    assert_allclose(RD, 287.053, rtol=2e-6)
    # Expected: metpy 1.7.1 constants (CODATA 2018 R, different molar masses): Rd within
    # 2e-5, Rv within 2e-5, epsilon within 4e-5 (the ratios computed from both sources).
    assert_allclose(RD, metpy_constants.Rd, rtol=2e-5)
    assert_allclose(RV, metpy_constants.Rv, rtol=2e-5)
    assert_allclose(EPSILON, metpy_constants.epsilon, rtol=4e-5)
    # Expected: standard gravity 9.80665, exact by convention (CGPM 1901); also metpy 1.7.1.
    assert G0 == metpy_constants.g == 9.80665


def test_constants_table_is_read_only_and_consistent():
    # Expected: the module-level constants themselves (the table must not copy values).
    assert CONSTANTS["g0"].value == G0
    assert CONSTANTS["Rd"].value == RD
    assert CONSTANTS["Rv"].value == RV
    assert CONSTANTS["epsilon"].value == EPSILON
    assert all(entry.unit and entry.source for entry in CONSTANTS.values())
    with pytest.raises(TypeError):
        CONSTANTS["g0"] = constants.Constant(9.81, "m s^-2", "rounded")


def test_knot_is_a_nautical_mile_per_hour():
    # Expected: 1 kn = 1852 m / 3600 s = 0.514444... m/s, exact by definition (SI Brochure,
    # 9th ed., table 8; from memory), and the unit table's 'kt' says the same (NIST SP 811).
    assert constants.KNOT == 1852.0 / 3600.0
    assert constants.KNOT == pytest.approx(0.5144444, abs=5e-8)
    from layercalc.language import units
    assert units.UNIT_TABLE["kt"].scale == constants.KNOT


def test_standard_atmosphere_base_pressures_against_the_published_table():
    from layercalc.physics.sounding_profile import (
        standard_atmosphere_base_pressures, standard_atmosphere_height)
    bases = standard_atmosphere_base_pressures()
    # Expected: U.S. Standard Atmosphere 1976, table 4 base pressures (from memory):
    # 101325 (adopted), 22632.06, 5474.889, 868.0187 Pa; within half the last digit given.
    published = [101325.0, 22632.06, 5474.889, 868.0187]
    half_last_digit = [0.0, 0.005, 0.0005, 0.00005]
    assert np.all(np.abs(np.array(bases) - published) <= half_last_digit), bases
    # Expected: ambiance 1.3.1 (ICAO 1993 = USSA 1976 below 32 km; its R 287.05287 differs
    # from ours in the 7th digit): the bases lie at 0, 11, 20, 32 km geopotential, 5 cm.
    assert_allclose(ambiance.Atmosphere.from_pressure(np.array(bases)).H,
                    [base for base, _, _ in constants.USSA_LAYERS], atol=0.05)
    # Expected: the layer table itself; the height function inverts the base pressures.
    assert_allclose(standard_atmosphere_height(np.array(bases)),
                    [base for base, _, _ in constants.USSA_LAYERS], atol=1e-6)


# --------------------------------------------------------------------------------------
# Hypsometric equation
# --------------------------------------------------------------------------------------

THICKNESS_PROFILES = {
    # name: (level pressures [hPa], level temperatures [K], level mixing ratios [1] or None)
    "isothermal 1000-500": ([1000, 850, 700, 500], [250.0, 250.0, 250.0, 250.0], None),
    "lapse 1000-300": ([1000, 925, 850, 700, 500, 300], [288.0, 283.0, 279.0, 270.0,
                                                          252.0, 228.0], None),
    "moist 1000-500": ([1000, 925, 850, 700, 500], [298.0, 293.0, 289.0, 280.0, 263.0],
                       [0.016, 0.013, 0.010, 0.006, 0.002]),
}


@pytest.mark.parametrize("name", THICKNESS_PROFILES)
def test_thickness_against_metpy(name):
    # metpy 1.7.1 thickness_hydrostatic integrates Tv over ln p with the trapezoid rule
    # over the levels. Our layers between consecutive levels with Tv linear in ln p have
    # the ln p mean (Tv_b + Tv_t) / 2 (layer_mean_temperature_log_linear), which is the
    # same trapezoid, so the only difference is Rd: metpy's 287.0475 vs our 287.0531.
    levels_hpa, temperature, ratio = THICKNESS_PROFILES[name]
    pressure = np.array(levels_hpa, dtype=float) * 100.0
    temperature = np.array(temperature)
    kwargs = {}
    level_tv = temperature
    if ratio is not None:
        ratio = np.array(ratio)
        level_tv = humidity.virtual_temperature(temperature, ratio)
        kwargs = {"mixing_ratio": metpy_units.Quantity(ratio, ""),
                  "molecular_weight_ratio": EPSILON}
    layer_tv = hypsometric.layer_mean_temperature_log_linear(level_tv[:-1], level_tv[1:])
    got = np.sum(hypsometric.hypsometric_thickness(layer_tv, pressure[:-1], pressure[1:]))
    want = _metpy(metpy_calc.thickness_hydrostatic(
        metpy_units.Quantity(pressure, "Pa"), metpy_units.Quantity(temperature, "K"),
        **kwargs), "m")
    # Expected: metpy 1.7.1 rescaled by our Rd / metpy's Rd: identical arithmetic, rtol 1e-12.
    assert_allclose(got, want * RD / metpy_constants.Rd, rtol=1e-12)
    # Expected: metpy 1.7.1 as is; the Rd values differ by 1.94e-5: rtol 2.5e-5.
    assert_allclose(got, want, rtol=2.5e-5)


def test_isothermal_thickness_closed_form():
    # Expected: Rd T / g0 ln 2 written out here with the USSA 1976 numbers R* = 8314.32,
    # M0 = 28.9644 and g0 = 9.80665 (independent of constants.py); rtol 1e-12.
    want = 8314.32 / 28.9644 * 255.0 / 9.80665 * math.log(2.0)
    assert_allclose(hypsometric.hypsometric_thickness(255.0, 100000.0, 50000.0), want,
                    rtol=1e-12)
    # Expected: the input temperature (analytic inverse); rtol 1e-12.
    assert_allclose(hypsometric.virtual_temperature_from_thickness(want, 100000.0, 50000.0),
                    255.0, rtol=1e-12)


def test_540_dam_thickness_means_about_minus_7_celsius():
    # Expected: a 1000-500 hPa thickness of 540 dam goes with a mean virtual temperature
    # near -7 degC (common practice, no source); exact value here is -7.0 degC.
    mean_tv = hypsometric.virtual_temperature_from_thickness(5400.0, 100000.0, 50000.0)
    assert abs((mean_tv - T_ZERO_CELSIUS) - (-7.0)) < 1.0


def test_choice_of_rd_changes_500_hpa_thickness_by_about_1_m():
    # Using the rounded Rd = 287.0 instead of 287.053 lowers a 540 dam 1000-500 hPa
    # thickness by 5400 m * 0.053 / 287.05 = 1.0 m (arithmetic done by hand, from the
    # published values only). Expected 1.0 m, atol 0.05 m.
    mean_tv = hypsometric.virtual_temperature_from_thickness(5400.0, 100000.0, 50000.0)
    ours = hypsometric.hypsometric_thickness(mean_tv, 100000.0, 50000.0)
    rounded_rd = 287.0 * mean_tv / G0 * math.log(2.0)
    assert_allclose(ours - rounded_rd, 1.0, atol=0.05)


def test_warming_one_kelvin_raises_500_hpa_by_about_20_m():
    # Expected: about 20 m of 1000-500 hPa thickness per kelvin of layer warming (common
    # practice, no source); exact Rd ln2 / g0 = 20.3 m. atol 0.5 m.
    change = hypsometric.thickness_change_for_warming(1.0, 100000.0, 50000.0)
    assert_allclose(change, 20.0, atol=0.5)
    # Expected: rise of the surfaces above = running sum of the changes (arithmetic).
    rise = hypsometric.rise_of_surfaces_above([change, 0.0, 2.0 * change])
    assert_allclose(rise, [change, change, 3.0 * change], rtol=1e-15)


def test_interface_heights_stack_thicknesses():
    # Expected: running sums written out by hand (arithmetic).
    z_bottom, z_top = hypsometric.interface_heights([100.0, 200.0, 300.0], 50.0)
    assert_allclose(z_bottom, [50.0, 150.0, 350.0], rtol=1e-15)
    assert_allclose(z_top, [150.0, 350.0, 650.0], rtol=1e-15)


def test_layer_mean_log_linear_is_the_ln_p_mean():
    # Expected: numerical ln p-weighted mean of T linear in ln p (numpy.trapezoid on
    # 2001 points, exact for a linear integrand up to rounding); rtol 1e-12.
    log_p = np.linspace(math.log(85000.0), math.log(70000.0), 2001)
    temperature = np.interp(log_p, [log_p[-1], log_p[0]], [270.0, 282.0])
    want = _trapezoid(temperature, log_p) / (log_p[-1] - log_p[0])
    assert_allclose(hypsometric.layer_mean_temperature_log_linear(282.0, 270.0), want,
                    rtol=1e-12)


def test_height_at_pressure_exact_in_isothermal_column():
    # Expected: z = Rd T / g0 ln(p_s / p) for an isothermal column (analytic), rtol 1e-12;
    # nan outside the column.
    temperature = 260.0
    interfaces = np.array([100000.0, 85000.0, 70000.0, 50000.0, 30000.0])
    heights = RD * temperature / G0 * np.log(interfaces[0] / interfaces)
    wanted = np.array([100000.0, 92000.0, 70000.0, 41000.0, 30000.0])
    got = hypsometric.height_at_pressure(interfaces, heights, wanted)
    assert_allclose(got, RD * temperature / G0 * np.log(interfaces[0] / wanted), rtol=1e-12,
                    atol=1e-9)
    outside = hypsometric.height_at_pressure(interfaces, heights, [101000.0, 29000.0])
    assert np.isnan(outside).all()
    # Expected: the ln p midpoint of an isothermal layer lies at its mid-height (analytic).
    middle = hypsometric.log_pressure_midpoint(85000.0, 70000.0)
    assert_allclose(hypsometric.height_at_pressure(interfaces, heights, middle),
                    (heights[1] + heights[2]) / 2.0, rtol=1e-12)


def test_height_at_pressure_broadcasts_columns_against_queries():
    # Expected: the same queries asked of each column separately (consistency).
    interfaces = np.array([[100000.0, 80000.0, 50000.0], [95000.0, 70000.0, 40000.0]])
    heights = np.array([[0.0, 1900.0, 5600.0], [400.0, 2900.0, 7200.0]])
    queries = np.array([90000.0, 60000.0, 45000.0])
    got = hypsometric.height_at_pressure(interfaces[:, None, :], heights[:, None, :], queries)
    assert got.shape == (2, 3)
    for column in range(2):
        assert_allclose(got[column],
                        hypsometric.height_at_pressure(interfaces[column], heights[column],
                                                       queries), rtol=1e-15)
    # 450 hPa lies above the first column's 500 hPa top but inside the second column.
    assert np.isnan(got[0, 2]) and not np.isnan(got[1, 2])


# U.S. Standard Atmosphere 1976 geopotential heights of the standard pressure surfaces.
USSA_LEVELS_HPA = [1000, 925, 850, 700, 500, 400, 300, 250, 200, 150, 100]
# Published USSA 1976 standard heights rounded to 1 gpm, from memory.
USSA_HEIGHTS_FROM_MEMORY = [111, 762, 1457, 3012, 5574, 7185, 9164, 10363, 11784, 13608,
                            16180]
USSA_R0 = 6356766.0  # USSA 1976 effective Earth radius for geopotential, [m] (from memory)


def _ussa_column():
    """Interface pressures from 1013.25 hPa (H = 0, USSA 1976 sea level) up to 100 hPa,
    their geopotential heights from ambiance 1.3.1, and the ln p-weighted layer-mean
    temperatures of the standard profile between them."""
    pressure = np.array([1013.25] + USSA_LEVELS_HPA, dtype=float) * 100.0
    geometric = np.asarray(ambiance.Atmosphere.from_pressure(pressure).h, dtype=float)
    # ambiance works in geometric altitude h; geopotential H = r0 h / (r0 + h) (USSA 1976).
    geopotential = USSA_R0 * geometric / (USSA_R0 + geometric)
    # ln p-weighted mean of T over each layer by quadrature on a fine grid of the standard
    # profile (trapezoid on 20001 points; the 11 km kink inside 250-200 hPa costs < 1e-6 K).
    fraction = np.linspace(0.0, 1.0, 20001)
    grid = geometric[:-1, None] + (geometric[1:, None] - geometric[:-1, None]) * fraction
    state = ambiance.Atmosphere(grid.ravel())
    temperature = np.asarray(state.temperature, dtype=float).reshape(grid.shape)
    log_p = np.log(np.asarray(state.pressure, dtype=float)).reshape(grid.shape)
    mean_temperature = (_trapezoid(temperature, log_p, axis=-1)
                        / (log_p[:, -1] - log_p[:, 0]))
    return pressure, geopotential, mean_temperature


def test_ussa_1976_heights_of_standard_pressure_surfaces():
    pressure, geopotential, mean_temperature = _ussa_column()
    # Check of the conversion: ambiance 1.3.1 reports the same geopotential (its own H).
    assert_allclose(geopotential,
                    ambiance.Atmosphere.from_pressure(pressure).H, rtol=0, atol=1e-6)
    thickness = hypsometric.hypsometric_thickness(mean_temperature, pressure[:-1],
                                                  pressure[1:])
    _, z_top = hypsometric.interface_heights(thickness, 0.0)
    # Expected: ambiance 1.3.1 (ICAO 1993 = USSA 1976 below 32 km), inverted pressure ->
    # height by ambiance's own Newton solver. atol 0.05 m (brief: 1 m): ambiance uses
    # R = 287.05287 (M0 = 28.96442), ours 287.05307 (M0 = 28.9644), 7e-7 relative or
    # 0.011 m at 16 km, and its layer-base pressures are tabulated to 6 significant
    # figures (22632.0 Pa at 11 km); measured while writing this test: at most 0.023 m.
    assert_allclose(z_top, geopotential[1:], rtol=0, atol=0.05)
    # Expected: published USSA 1976 heights to the nearest gpm (from memory): within 1 m.
    assert_allclose(z_top, USSA_HEIGHTS_FROM_MEMORY, rtol=0, atol=1.0)


# --------------------------------------------------------------------------------------
# Kinematic method
# --------------------------------------------------------------------------------------

UNEQUAL_DEPTH = np.array([5000.0, 10000.0, 15000.0, 20000.0, 25000.0, 15000.0])  # [Pa]


def test_constant_divergence_gives_omega_linear_in_pressure():
    # Expected: omega(p) = omega_s + D (p_s - p) for constant D (analytic integral of
    # d(omega)/dp = -D; Holton and Hakim 2013, section 3.5.1, from memory); rtol 1e-12.
    divergence, omega_s, p_s = 2.0e-6, -0.05, 100000.0
    p_top = p_s - np.cumsum(UNEQUAL_DEPTH)
    omega_bottom, omega_top = kinematic.omega_integrated_from_surface(
        np.full(6, divergence), UNEQUAL_DEPTH, omega_s)
    assert_allclose(omega_top, omega_s + divergence * (p_s - p_top), rtol=1e-12)
    assert_allclose(omega_bottom[0], omega_s, rtol=1e-15)
    # Expected: integrating down from that top value recovers the same profile (analytic).
    down_bottom, down_top = kinematic.omega_integrated_from_top(
        np.full(6, divergence), UNEQUAL_DEPTH, omega_top[-1])
    assert_allclose(down_bottom, omega_bottom, rtol=1e-12, atol=1e-15)
    assert_allclose(down_top, omega_top, rtol=1e-12, atol=1e-15)


def test_compensating_divergence_gives_zero_surface_omega():
    # Divergences whose mass-weighted sum is zero; integrating from omega_T = 0 the
    # surface omega must vanish (analytic). atol 1e-17 Pa/s against terms of 0.1 Pa/s.
    divergence = np.array([-8e-6, -4e-6, -1e-6, 2e-6, 3e-6, 0.0])
    divergence[-1] = -np.sum(divergence[:-1] * UNEQUAL_DEPTH[:-1]) / UNEQUAL_DEPTH[-1]
    omega_bottom, _ = kinematic.omega_integrated_from_top(divergence, UNEQUAL_DEPTH, 0.0)
    assert_allclose(omega_bottom[0], 0.0, atol=1e-17)
    assert abs(omega_bottom[2]) > 0.01  # the interior is not trivially zero
    # Expected: column mean 0 and Dines ratio 0 (definitions); atol 1e-20 s^-1 / 1e-12.
    assert_allclose(kinematic.column_mean_divergence(divergence, UNEQUAL_DEPTH), 0.0,
                    atol=1e-20)
    assert_allclose(kinematic.dines_ratio(divergence, UNEQUAL_DEPTH), 0.0, atol=1e-12)


def test_dines_ratio_limits():
    # Expected: 1 when all layers converge (definition), nan when all divergence is 0.
    assert_allclose(kinematic.dines_ratio(-np.ones(6) * 1e-6, UNEQUAL_DEPTH), 1.0,
                    rtol=1e-15)
    assert kinematic.dines_ratio(np.zeros(6), UNEQUAL_DEPTH) == 0.0  # our convention
    # Expected: mass-weighted mean written out by hand: (1*1 + 3*3) / 4 = 2.5 (arithmetic).
    assert_allclose(kinematic.column_mean_divergence([1.0, 3.0], [1.0, 3.0]), 2.5,
                    rtol=1e-15)


def test_obrien_equal_layers_closed_form():
    # Expected: omega'_k = omega_k - e k (k+1) / (K (K+1)) for K equal layers (closed form
    # derived in the docstring, the equal-layer form of O'Brien 1970); rtol 1e-12.
    layers = 5
    depth = np.full(layers, 16000.0)
    divergence = np.array([-6e-6, -2e-6, 1e-6, 5e-6, 4e-6])
    omega_s, target = 0.0, -0.02
    _, raw_top = kinematic.omega_integrated_from_surface(divergence, depth, omega_s)
    mismatch = kinematic.top_mismatch(raw_top[-1], target)
    adjusted = kinematic.divergence_adjustment_obrien(divergence, depth, mismatch)
    _, corrected_top = kinematic.omega_integrated_from_surface(adjusted, depth, omega_s)
    k = np.arange(1, layers + 1)
    assert_allclose(corrected_top,
                    raw_top - mismatch * k * (k + 1) / (layers * (layers + 1)), rtol=1e-12)
    assert_allclose(corrected_top[-1], target, rtol=1e-12)


@pytest.mark.parametrize("adjust", [kinematic.divergence_adjustment_uniform,
                                    kinematic.divergence_adjustment_obrien])
@pytest.mark.parametrize("target", [0.0, -0.03, 0.01])
def test_adjustment_reaches_target_top_omega(adjust, target):
    # Expected: the target top omega (by construction of both schemes); atol 1e-15 Pa/s.
    divergence = np.array([-9e-6, -3e-6, 2e-6, 7e-6, 4e-6, 1e-6])
    omega_s = 0.01
    _, raw_top = kinematic.omega_integrated_from_surface(divergence, UNEQUAL_DEPTH, omega_s)
    mismatch = kinematic.top_mismatch(raw_top[-1], target)
    assert abs(mismatch) > 0.01  # the raw profile does miss the target
    adjusted = adjust(divergence, UNEQUAL_DEPTH, mismatch)
    _, top = kinematic.omega_integrated_from_surface(adjusted, UNEQUAL_DEPTH, omega_s)
    assert_allclose(top[-1], target, rtol=0, atol=1e-15)


def test_adjustment_shapes_of_correction():
    # Expected: uniform gives one correction in every layer; O'Brien a correction
    # proportional to the pressure depth from the bottom to each layer's top
    # (definitions in the brief); rtol 1e-12.
    divergence = np.array([-9e-6, -3e-6, 2e-6, 7e-6, 4e-6, 1e-6])
    uniform = kinematic.divergence_adjustment_uniform(divergence, UNEQUAL_DEPTH, 0.04)
    assert_allclose(uniform - divergence, -0.04 / np.sum(UNEQUAL_DEPTH), rtol=1e-12)
    obrien = kinematic.divergence_adjustment_obrien(divergence, UNEQUAL_DEPTH, 0.04)
    ratio = (obrien - divergence) / np.cumsum(UNEQUAL_DEPTH)
    assert_allclose(ratio, ratio[0], rtol=1e-12)
    assert ratio[0] < 0


@settings(max_examples=60, deadline=None)
@given(depth=st.lists(st.floats(500.0, 30000.0), min_size=1, max_size=12),
       divergence_scale=st.floats(-2e-5, 2e-5), target=st.floats(-0.5, 0.5),
       omega_s=st.floats(-0.5, 0.5))
def test_adjustments_reach_target_property(depth, divergence_scale, target, omega_s):
    # Expected: the target top omega for any column (by construction); atol 1e-12 Pa/s.
    depth = np.array(depth)
    divergence = divergence_scale * np.cos(np.arange(depth.size))
    _, raw_top = kinematic.omega_integrated_from_surface(divergence, depth, omega_s)
    mismatch = kinematic.top_mismatch(raw_top[-1], target)
    for adjust in (kinematic.divergence_adjustment_uniform,
                   kinematic.divergence_adjustment_obrien):
        _, top = kinematic.omega_integrated_from_surface(adjust(divergence, depth, mismatch),
                                                         depth, omega_s)
        assert_allclose(top[-1], target, rtol=0, atol=1e-12)


@pytest.mark.parametrize("omega, pressure, temperature, ratio", [
    (-1.0, 50000.0, 253.0, 0.001), (0.3, 85000.0, 280.0, 0.008), (-2.5, 70000.0, 275.0, 0.0),
    (-0.1, 100000.0, 300.0, 0.02),
])
def test_vertical_velocity_against_metpy(omega, pressure, temperature, ratio):
    # Expected: metpy 1.7.1 vertical_velocity, w = -omega / (rho g) with rho from its own
    # Rd (287.0475, ours 287.0531: 1.94e-5) and epsilon (Tv effect < 1e-6): rtol 2.5e-5.
    want = _metpy(metpy_calc.vertical_velocity(
        metpy_units.Quantity(omega, "Pa/s"), metpy_units.Quantity(pressure, "Pa"),
        metpy_units.Quantity(temperature, "K"), metpy_units.Quantity(ratio, "")), "m/s")
    tv = humidity.virtual_temperature(temperature, ratio)
    assert_allclose(kinematic.vertical_velocity(omega, pressure, tv), want, rtol=2.5e-5)


def test_column_divergence_scale_of_surface_pressure_tendency():
    # Expected: a net column-mean divergence of 1e-6 s^-1 over 1000 hPa removes
    # 1e-6 * 1e5 Pa * 10800 s = 1080 Pa (10.8 hPa) in 3 h (common practice, no source).
    depth = np.full(10, 10000.0)
    omega_bottom, _ = kinematic.omega_integrated_from_top(np.full(10, 1e-6), depth, 0.0)
    tendency = kinematic.surface_pressure_tendency(omega_bottom[0])
    assert_allclose(tendency * 3 * 3600.0, -1080.0, rtol=1e-12)


def test_upslope_flow_without_pressure_change():
    # Steady upslope flow with no horizontal pressure gradient at constant height: the
    # surface omega is -rho g w_s and p_s must not change (analytic, from the derivation
    # in surface_pressure_tendency); atol 1e-15 Pa/s. w_s = 5 m/s * 0.01 = 0.05 m/s
    # (arithmetic).
    density = 1.1
    w_s = kinematic.terrain_vertical_velocity(5.0, 0.01)
    assert_allclose(w_s, 0.05, rtol=1e-15)
    terrain = kinematic.terrain_tendency_term(density, w_s)
    assert_allclose(terrain, density * 9.80665 * 0.05, rtol=1e-15)  # g0 from CGPM 1901
    omega_s = -density * 9.80665 * w_s
    assert_allclose(kinematic.surface_pressure_tendency(omega_s, 0.0, terrain), 0.0,
                    atol=1e-15)
    # Expected: advection toward higher pressure lowers p_s one for one (sign convention).
    assert_allclose(kinematic.surface_pressure_tendency(0.0, advection=0.002), -0.002,
                    rtol=1e-15)


def test_nondivergence_levels():
    # Divergence linear in ln p between midpoints, zero at 600 hPa: the interpolated level
    # must be 600 hPa exactly (analytic), rtol 1e-12.
    midpoint = np.array([95000.0, 80000.0, 65000.0, 50000.0, 35000.0])
    divergence = 1e-5 * np.log(midpoint / 60000.0)  # converges below, diverges above
    assert_allclose(kinematic.nondivergence_levels(midpoint, -divergence), [60000.0],
                    rtol=1e-12)
    # An exact zero in a layer counts once; a second crossing above is also found.
    levels = kinematic.nondivergence_levels(midpoint, [-2e-6, 0.0, 3e-6, -1e-6, -2e-6])
    assert len(levels) == 2
    assert_allclose(levels[0], 80000.0, rtol=1e-15)  # the zero layer's own midpoint
    # second: between 65000 (+3e-6) and 50000 (-1e-6), 3/4 of the way in ln p (analytic)
    assert_allclose(levels[1], math.exp(math.log(65000.0)
                                        + 0.75 * math.log(50000.0 / 65000.0)), rtol=1e-12)
    assert kinematic.nondivergence_levels(midpoint, np.full(5, 1e-6)) == []
    with pytest.raises(ValueError, match="one column"):
        kinematic.nondivergence_levels(np.ones((2, 3)), np.ones((2, 3)))


# --------------------------------------------------------------------------------------
# A leading scenario axis gives the same numbers as one column at a time
# --------------------------------------------------------------------------------------

_RNG = np.random.default_rng(20240501)
_S, _L = 4, 6
_LAYER = {
    "tv": 240.0 + 40.0 * _RNG.random((_S, _L)),
    "dp": 5000.0 + 15000.0 * _RNG.random((_S, _L)),
    "div": 1e-5 * (_RNG.random((_S, _L)) - 0.5),
    "omega": _RNG.random((_S, _L)) - 0.5,
}
_LAYER["p_bottom"] = 100000.0 - np.concatenate(
    [np.zeros((_S, 1)), np.cumsum(_LAYER["dp"], axis=-1)[:, :-1]], axis=-1)
_LAYER["p_top"] = _LAYER["p_bottom"] - _LAYER["dp"]
_COLUMN = {"zs": 500.0 * _RNG.random(_S), "w0": 0.1 * (_RNG.random(_S) - 0.5),
           "e": 0.1 * (_RNG.random(_S) - 0.5), "p": 45000.0 + 40000.0 * _RNG.random(_S)}


def _heights(x):
    dz = hypsometric.hypsometric_thickness(x["tv"], x["p_bottom"], x["p_top"])
    z_bottom, z_top = hypsometric.interface_heights(dz, x["zs"])
    pressures = np.concatenate([x["p_bottom"][..., :1], x["p_top"]], axis=-1)
    heights = np.concatenate([z_bottom[..., :1], z_top], axis=-1)
    return z_bottom, z_top, hypsometric.height_at_pressure(pressures, heights, x["p"])


SCENARIO_CASES = {
    "thickness and heights": _heights,
    "rise": lambda x: hypsometric.rise_of_surfaces_above(
        hypsometric.thickness_change_for_warming(x["tv"] - 260.0, x["p_bottom"], x["p_top"])),
    "omega from top": lambda x: kinematic.omega_integrated_from_top(x["div"], x["dp"], x["w0"]),
    "omega from surface": lambda x: kinematic.omega_integrated_from_surface(
        x["div"], x["dp"], x["w0"]),
    "uniform": lambda x: kinematic.divergence_adjustment_uniform(x["div"], x["dp"], x["e"]),
    "obrien": lambda x: kinematic.divergence_adjustment_obrien(x["div"], x["dp"], x["e"]),
    "column mean and dines": lambda x: (kinematic.column_mean_divergence(x["div"], x["dp"]),
                                        kinematic.dines_ratio(x["div"], x["dp"])),
    "w": lambda x: kinematic.vertical_velocity(x["omega"], x["p_bottom"], x["tv"]),
}


@pytest.mark.parametrize("name", SCENARIO_CASES)
def test_scenario_axis_matches_row_by_row(name):
    # Expected: the same function applied to each scenario row alone (consistency);
    # identical floating-point operations, so rtol 1e-15.
    function = SCENARIO_CASES[name]
    full = function({**_LAYER, **_COLUMN})
    full = full if isinstance(full, tuple) else (full,)
    for row in range(_S):
        single = function({key: value[row] for key, value in {**_LAYER, **_COLUMN}.items()})
        single = single if isinstance(single, tuple) else (single,)
        for got, want in zip(full, single, strict=True):
            assert np.shape(got[row]) == np.shape(want)
            assert_allclose(got[row], want, rtol=1e-15)


def test_textbook_example_height_of_the_1000_hpa_surface():
    """Wallace and Hobbs (2006), Atmospheric Science, 2nd ed., section 3.2, worked example
    (from memory): sea-level pressure 1014 hPa and a scale height H = Rd Tv / g0 of 8 km give
    the 1000 hPa surface at about 111 m (Z = H ln(1014/1000))."""
    tv = 8000.0 * constants.G0 / constants.RD  # the Tv whose scale height is 8 km
    thickness = hypsometric.hypsometric_thickness(tv, 101400.0, 100000.0)
    assert thickness == pytest.approx(111.0, abs=0.5)  # the book's rounded answer
    # and the rule of thumb from the same section: about 8 m per hPa near sea level
    assert thickness / 14.0 == pytest.approx(8.0, rel=0.02)
