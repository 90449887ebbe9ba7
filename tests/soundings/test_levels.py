"""Tests of layercalc.physics.levels: level table -> layers, hydrostatic check.

Reference column: the U.S. Standard Atmosphere 1976 (NOAA/NASA/USAF, Washington DC),
computed here from its defining equations for geopotential height H below 20 km:
  0 <= H <= 11 km:  T = 288.15 K - 0.0065 K/m * H,  p = 101325 Pa * (T / 288.15 K)**(g0 M0 / (R* L))
  11 <= H <= 20 km: T = 216.65 K,  p = p11 * exp(-g0 M0 (H - 11 km) / (R* T11))
with g0 = 9.80665 m/s2, R* = 8314.32 J/(kmol K), M0 = 28.9644 kg/kmol (the 1976 adopted
constants, from memory). The helper is cross-checked against the independent library
ambiance 1.3.1 (Atmosphere, geometric heights) below.
"""

import re

import numpy as np
import pytest
from hypothesis import given, strategies as st
from numpy.testing import assert_allclose

from layercalc.constants import G0, RD
from layercalc.errors import LayercalcError
from layercalc.physics.levels import (
    diagnose_hydrostatic_flags, hydrostatic_consistency, layer_mean_wind, layers_from_levels,
)
from layercalc.soundings.levels import describe_hydrostatic_flag

# USSA 1976 defining constants, written out here (not imported) so that a change of
# layercalc.constants shows up as a test failure or a stated mismatch term.
USSA_GAS_CONSTANT = 8314.32 / 28.9644      # R* / M0 [J kg-1 K-1], USSA 1976 (memory)
USSA_LAPSE_RATE = 0.0065                   # [K/m], USSA 1976, 0-11 km geopotential
USSA_SEA_LEVEL_T, USSA_SEA_LEVEL_P = 288.15, 101325.0    # [K], [Pa], USSA 1976
USSA_TROPOPAUSE_H, USSA_TROPOPAUSE_T = 11000.0, 216.65   # [m'], [K], USSA 1976
USSA_G0 = 9.80665                          # [m/s2], USSA 1976
EXPONENT = USSA_G0 / (USSA_GAS_CONSTANT * USSA_LAPSE_RATE)   # 5.25588
TROPOPAUSE_P = USSA_SEA_LEVEL_P * (USSA_TROPOPAUSE_T / USSA_SEA_LEVEL_T) ** EXPONENT

MANDATORY_HPA = [1000, 925, 850, 700, 500, 400, 300, 250, 200, 150, 100]
COARSE_HPA = [1000, 850, 700, 500, 300, 200, 100]


def ussa_column(pressure):
    """Geopotential height [m] and temperature [K] of USSA 1976 at pressures [Pa] <= 20 km."""
    pressure = np.asarray(pressure, dtype=float)
    height_troposphere = USSA_SEA_LEVEL_T / USSA_LAPSE_RATE * (
        1.0 - (pressure / USSA_SEA_LEVEL_P) ** (1.0 / EXPONENT))
    height_stratosphere = USSA_TROPOPAUSE_H + USSA_GAS_CONSTANT * USSA_TROPOPAUSE_T / USSA_G0 \
        * np.log(TROPOPAUSE_P / pressure)
    troposphere = pressure >= TROPOPAUSE_P
    height = np.where(troposphere, height_troposphere, height_stratosphere)
    temperature = np.where(troposphere, USSA_SEA_LEVEL_T - USSA_LAPSE_RATE * height,
                           USSA_TROPOPAUSE_T)
    return height, temperature


def test_ussa_helper_matches_ambiance():
    """Independent library ambiance 1.3.1 (USSA 1976, geometric altitude
    z = r0 H / (r0 - H), r0 = 6356766 m as in USSA 1976, from memory)."""
    from ambiance import Atmosphere

    pressure = np.array(MANDATORY_HPA) * 100.0
    height, temperature = ussa_column(pressure)
    earth_radius_ussa = 6356766.0
    atmosphere = Atmosphere(earth_radius_ussa * height / (earth_radius_ussa - height))
    assert_allclose(atmosphere.pressure, pressure, rtol=1e-5)        # ambiance 1.3.1
    assert_allclose(atmosphere.temperature, temperature, atol=1e-6)  # ambiance 1.3.1
    # published table values as remembered: 500 hPa near 5574 m, 100 hPa near 16180 m
    assert_allclose(height[[4, 10]], [5574.0, 16180.0], atol=1.0)    # from memory


# --- layers_from_levels ------------------------------------------------------------------

def test_layer_mean_is_the_log_pressure_weighted_mean():
    """Derivation in the docstring, checked by quadrature: a quantity linear in ln p,
    averaged over ln p with numpy.trapezoid on 10001 points (exact for linear)."""
    pressure = np.array([85000.0, 70000.0])
    temperature = np.array([280.0, 268.0])
    _, _, mean = layers_from_levels(pressure, temperature)
    s = np.linspace(np.log(85000.0), np.log(70000.0), 10001)
    profile = np.interp(s, np.log(pressure)[::-1], temperature[::-1])
    weighted = np.trapezoid(profile, s) / (s[-1] - s[0])
    assert_allclose(mean, [weighted], rtol=1e-12)        # quadrature of a linear profile
    assert_allclose(mean, [274.0], rtol=1e-15)          # (280 + 268) / 2, arithmetic


def test_levels_top_first_or_surface_first_give_the_same_layers():
    pressure = np.array(MANDATORY_HPA) * 100.0
    height, temperature = ussa_column(pressure)
    forward = layers_from_levels(pressure, temperature, height)
    backward = layers_from_levels(pressure[::-1], temperature[::-1], height[::-1])
    for a, b in zip(forward, backward):
        assert_allclose(a, b, rtol=0)                       # same numbers, same order
    assert np.all(np.diff(forward[0]) < 0) and np.all(forward[0] > forward[1])  # surface first
    assert forward[0].shape == (len(MANDATORY_HPA) - 1,)


@given(st.permutations(list(range(7))))
def test_any_level_order_gives_the_same_layers(order):
    pressure = np.array(COARSE_HPA, dtype=float)[order] * 100.0
    values = np.column_stack([pressure / 100.0, -pressure])      # (levels, 2) quantity
    p_bottom, p_top, mean = layers_from_levels(pressure, values)
    want_bottom = np.array(COARSE_HPA[:-1]) * 100.0
    want_top = np.array(COARSE_HPA[1:]) * 100.0
    assert_allclose(p_bottom, want_bottom, rtol=0)                   # sorted descending
    assert_allclose(mean[:, 0], (want_bottom + want_top) / 200.0, rtol=1e-15)  # arithmetic


@pytest.mark.parametrize("pressure, quantity, match", [
    ([85000.0, 85000.0, 70000.0], [1.0, 2.0, 3.0], "repeated: 850 hPa"),
    ([85000.0, -1.0], [1.0, 2.0], "finite and > 0"),
    ([85000.0], [1.0], "at least 2"),
    ([85000.0, 70000.0], [1.0, 2.0, 3.0], "expected 2 values"),
])
def test_bad_level_tables_raise_our_error(pressure, quantity, match):
    with pytest.raises(LayercalcError, match=match):
        layers_from_levels(pressure, quantity)


def test_layer_mean_wind_is_the_component_mean():
    """From west at 10 m/s below, from north at 10 m/s above: mean vector (5, -5) m/s,
    speed 7.07 m/s, less than the mean speed 10 (arithmetic, exact)."""
    p_bottom, p_top, u_mean, v_mean = layer_mean_wind([70000.0, 85000.0], [0.0, 10.0],
                                                      [-10.0, 0.0])
    assert_allclose([p_bottom[0], p_top[0]], [85000.0, 70000.0], rtol=0)
    assert_allclose([u_mean[0], v_mean[0]], [5.0, -5.0], rtol=1e-15)   # exact
    assert np.hypot(u_mean[0], v_mean[0]) < 10.0


# --- heights of the standard column: error of the linear-in-ln-p assumption -----------

def trapezoid_error_bounds(p_bottom, p_top):
    """Lower and upper bounds [m] of (endpoint-mean thickness - true thickness) per layer.

    With s = ln p the true thickness is (R/g0) * integral of T ds, the layer code uses
    (R/g0) * (T_b + T_t)/2 * ds: the trapezoid rule, whose error E = integral of
    (chord - T) ds is >= 0 for the convex T(s) of this column.
    - Constant lapse rate: T = T0 exp(kappa (s - s0)), kappa = R L / g0, T'' = kappa**2 T.
      Trapezoid remainder (mean-value form, any numerical analysis text): E =
      ds**3 / 12 * T''(xi) for some xi in the layer, so
      ds**3 / 12 * kappa**2 * T_t <= E <= ds**3 / 12 * kappa**2 * T_b.
    - Isothermal: E = 0.
    - Tropopause inside the layer (kink at s* = ln p11): T = polyline (T11 above s*, the
      chord of the lower branch below) minus a convex bulge, so E = triangle + bulge with
      triangle = ds / 2 * (chord(s*) - T11) (exact, piecewise linear) and the bulge the
      remainder above over the lower part only, between T11 and T_b.
    The bracket is narrow (at most 0.3 m wide per layer here), so an error of the layer
    code of half a metre would fail the test.
    """
    kappa = USSA_GAS_CONSTANT * USSA_LAPSE_RATE / USSA_G0
    _, t_bottom = ussa_column(p_bottom)
    _, t_top = ussa_column(p_top)
    ds = np.log(p_bottom / p_top)
    troposphere = p_top >= TROPOPAUSE_P
    stratosphere = p_bottom <= TROPOPAUSE_P
    kink = ~troposphere & ~stratosphere
    ds_lower = np.where(kink, np.log(p_bottom / TROPOPAUSE_P), ds)
    bulge_high = ds_lower**3 / 12.0 * kappa**2 * t_bottom
    bulge_low = ds_lower**3 / 12.0 * kappa**2 * np.where(kink, USSA_TROPOPAUSE_T, t_top)
    chord_at_kink = t_top + (t_bottom - t_top) * np.log(TROPOPAUSE_P / p_top) / ds
    triangle = np.where(kink, 0.5 * ds * (chord_at_kink - USSA_TROPOPAUSE_T), 0.0)
    lower = np.where(stratosphere, 0.0, triangle + bulge_low)
    upper = np.where(stratosphere, 0.0, triangle + bulge_high)
    scale = USSA_GAS_CONSTANT / USSA_G0
    return scale * lower, scale * upper


@pytest.mark.parametrize("levels_hpa", [MANDATORY_HPA, COARSE_HPA])
def test_standard_column_heights_within_derived_bound(levels_hpa):
    """Heights integrated upward from the 1000 hPa height with layer-mean T (linear in
    ln p) against USSA 1976: the error lies between the derived bounds summed upward,
    plus the (signed) effect of any difference between layercalc's Rd and the USSA R.
    Measured for the coarse column: 300-200 hPa layer +21.8 m (tropopause kink), the
    others <= 1 m; mandatory column: 250-200 hPa +7.5 m."""
    pressure = np.array(levels_hpa, dtype=float) * 100.0
    height, temperature = ussa_column(pressure)
    p_bottom, p_top, mean_temperature = layers_from_levels(pressure, temperature)
    check = hydrostatic_consistency(p_bottom, p_top, np.diff(height), mean_temperature)
    computed = height[0] + np.concatenate([[0.0], np.cumsum(check.hypsometric_thickness)])
    error = computed - height
    lower, upper = trapezoid_error_bounds(p_bottom, p_top)
    constant_term = ((RD / G0) / (USSA_GAS_CONSTANT / USSA_G0) - 1.0) * (height - height[0])
    slack = 1e-6 * height     # rounding of float64 sums, far below 1 mm
    low = np.concatenate([[0.0], np.cumsum(lower)]) + constant_term - slack
    high = np.concatenate([[0.0], np.cumsum(upper)]) + constant_term + slack
    assert np.all(error >= low) and np.all(error <= high)    # derived bound (docstring)


def test_tropopause_layer_figure_quoted_in_the_module():
    """levels.py says the USSA 1976 300-200 hPa layer is 22 m off: keep that true."""
    pressure = np.array([30000.0, 20000.0])
    height, temperature = ussa_column(pressure)
    p_bottom, p_top, mean = layers_from_levels(pressure, temperature)
    check = hydrostatic_consistency(p_bottom, p_top, np.diff(height), mean)
    assert 21.0 < -check.difference[0] < 23.0     # module comment, from this computation


# --- hydrostatic check and diagnosis ----------------------------------------------------

def reported_column():
    """USSA 1976 at the mandatory levels, heights rounded to the metre as reported."""
    pressure = np.array(MANDATORY_HPA, dtype=float) * 100.0
    height, temperature = ussa_column(pressure)
    return pressure, np.round(height), temperature


def check_column(pressure, height, temperature):
    p_bottom, p_top, mean_temperature = layers_from_levels(pressure, temperature)
    check = hydrostatic_consistency(p_bottom, p_top, np.diff(height), mean_temperature)
    return p_bottom, p_top, check


def test_clean_standard_column_is_not_flagged():
    pressure, height, temperature = reported_column()
    p_bottom, p_top, check = check_column(pressure, height, temperature)
    assert not check.flagged.any()   # worst layer 7.5 m + rounding < 10 m (derived above)
    assert diagnose_hydrostatic_flags(p_bottom, p_top, check.difference, check.flagged) == []
    # isothermal 200-100 hPa layers: implied Tv is the USSA 216.65 K to the height
    # rounding (0.5 m over ~1800 m thickness: < 0.1 K)
    assert_allclose(check.implied_virtual_temperature[-2:], 216.65, atol=0.1)


def test_mistyped_height_at_500_hpa_is_named():
    """5574 m reported as 5754 m (two digits swapped): +180 m. The 700-500 hPa layer
    comes out 180 m too thick and 500-400 hPa 180 m too thin."""
    pressure, height, temperature = reported_column()
    level = MANDATORY_HPA.index(500)
    typed = str(int(height[level]))
    typed = typed[0] + typed[2] + typed[1] + typed[3]
    error = float(typed) - height[level]
    assert error == 180.0                  # construction check: "5574" -> "5754"
    height[level] = float(typed)
    p_bottom, p_top, check = check_column(pressure, height, temperature)
    assert list(np.flatnonzero(check.flagged)) == [level - 1, level]
    assert_allclose(check.difference[level - 1:level + 1], [error, -error], atol=2.0)
    flags = diagnose_hydrostatic_flags(p_bottom, p_top, check.difference, check.flagged)
    messages = [describe_hydrostatic_flag(flag) for flag in flags]
    assert len(messages) == 1
    assert messages[0].startswith("height at 500 hPa is likely mistyped")
    assert flags[0].cause == "height" and flags[0].level == 50000.0   # the structured form
    stated = float(re.search(r"about (\d+) m too high", messages[0]).group(1))
    assert abs(stated - error) <= 2.0   # rounding of the reported heights, 1 m per layer


def test_mistyped_temperature_at_the_lowest_level_flags_one_layer():
    """14.3 degC at 1000 hPa reported as -14.3 degC (sign lost): -28.6 K, which moves
    the 1000-925 hPa mean by -14.3 K and its thickness by Rd/g0 * 14.3 * ln(1000/925)
    = 32.6 m; the diagnosis inverts that to about -28.6 K at one endpoint."""
    pressure, height, temperature = reported_column()
    celsius = temperature[0] - 273.15
    temperature[0] = -celsius + 273.15
    temperature_error = -2.0 * celsius
    p_bottom, p_top, check = check_column(pressure, height, temperature)
    assert list(np.flatnonzero(check.flagged)) == [0]
    want = -RD / G0 * temperature_error / 2.0 * np.log(1000.0 / 925.0)   # hypsometric
    assert_allclose(check.difference[0], want, atol=1.0)   # plus height rounding <= 1 m
    flags = diagnose_hydrostatic_flags(p_bottom, p_top, check.difference, check.flagged)
    messages = [describe_hydrostatic_flag(flag) for flag in flags]
    assert len(messages) == 1
    assert "layer 1000 hPa to 925 hPa" in messages[0] and "temperature" in messages[0]
    stated = float(re.search(r"about ([+-][\d.]+) K", messages[0]).group(1))
    # inverse of the hypsometric shift; 1 m of height rounding is 0.9 K over this layer
    assert abs(stated - temperature_error) <= 1.0
    assert "height at 1000 hPa, the lowest level" in messages[0]
    assert flags[0].cause == "layer" and flags[0].lowest and not flags[0].highest


def test_mistyped_temperature_at_an_inner_level_is_named():
    """500 hPa temperature 9 K too warm: both adjacent layers too thin by
    Rd/g0 * 4.5 K * ln(pb/pt) (44 m and 29 m), same sign: the shared level's temperature."""
    pressure, height, temperature = reported_column()
    level = MANDATORY_HPA.index(500)
    temperature[level] += 9.0
    p_bottom, p_top, check = check_column(pressure, height, temperature)
    assert list(np.flatnonzero(check.flagged)) == [level - 1, level]
    want = -RD / G0 * 4.5 * np.log(p_bottom[level - 1:level + 1] / p_top[level - 1:level + 1])
    assert_allclose(check.difference[level - 1:level + 1], want, atol=1.5)  # hypsometric
    flags = diagnose_hydrostatic_flags(p_bottom, p_top, check.difference, check.flagged)
    messages = [describe_hydrostatic_flag(flag) for flag in flags]
    assert len(messages) == 1
    assert messages[0].startswith("temperature at 500 hPa is likely wrong")
    assert flags[0].cause == "temperature" and flags[0].level == 50000.0
    stated = [float(t) for t in re.findall(r"([+-]\d+\.\d) K", messages[0])]
    assert len(stated) == 2
    # inverse formula per layer; height rounding (<= 1 m) plus the layer's own trapezoid
    # error (< 1 m) is < 0.4 K in either layer (0.20 K/m for 700-500, 0.31 K/m for 500-400)
    assert_allclose(stated, 9.0, atol=0.6)


def test_tolerance_argument_controls_the_flags():
    """A 15 m discrepancy is flagged at 10 m and not at 20 m (definition of the flag)."""
    dz = RD * 274.0 / G0 * np.log(85000.0 / 70000.0)                  # hypsometric
    check_10 = hydrostatic_consistency(85000.0, 70000.0, dz + 15.0, 274.0)
    check_20 = hydrostatic_consistency(85000.0, 70000.0, dz + 15.0, 274.0, tolerance=20.0)
    assert_allclose(check_10.difference, 15.0, rtol=1e-12)
    assert bool(check_10.flagged) and not bool(check_20.flagged)
    assert_allclose(check_10.implied_virtual_temperature,
                    G0 * (dz + 15.0) / (RD * np.log(85000.0 / 70000.0)), rtol=1e-12)
