"""The default diagnostics a sheet computes equal the physics functions called directly,
for every boundary condition and adjustment; surface terms; alternative humidity inputs."""

from __future__ import annotations

import numpy as np
import pytest
from numpy.testing import assert_allclose

import layercalc
from layercalc.physics import humidity, hypsometric, kinematic

MOIST = """layers
  p_bottom [hPa]  p_top [hPa]  T [degC]  Td [degC]  div [1e-5 s^-1]
  1000  900   24.0   19.0   -1.4
  900   800   18.0   14.0   -0.8
  800   650    9.0    2.0   -0.2
  650   500   -2.0  -12.0    0.5
  500   350  -18.0  -30.0    1.1
  350   250  -38.0  -50.0    0.6
end
cell surface_height = 150 m
"""
PB = np.array([1000, 900, 800, 650, 500, 350]) * 100.0
PT = np.array([900, 800, 650, 500, 350, 250]) * 100.0
T = np.array([24.0, 18.0, 9.0, -2.0, -18.0, -38.0]) + 273.15
TD = np.array([19.0, 14.0, 2.0, -12.0, -30.0, -50.0]) + 273.15
DIV = np.array([-1.4, -0.8, -0.2, 0.5, 1.1, 0.6]) * 1e-5
DP = PB - PT


def evaluate(extra: str = "", table: str = MOIST):
    return layercalc.loads(table + extra, name="moist.layers").evaluate()


def test_humidity_and_thickness_defaults_equal_physics_functions():
    got = evaluate().si_columns
    p_mid = hypsometric.log_pressure_midpoint(PB, PT)
    e = humidity.vapour_pressure_from_dewpoint(TD)
    r = humidity.mixing_ratio(e, p_mid)
    tv = humidity.virtual_temperature(T, r)
    thickness = hypsometric.hypsometric_thickness(tv, PB, PT)
    z_bottom, z_top = hypsometric.interface_heights(thickness, 150.0)
    # same formulas reached two ways (layercalc's own physics module): rounding only
    assert_allclose(got["p_mid"], p_mid, rtol=1e-15)
    assert_allclose(got["e"], e, rtol=1e-14)
    assert_allclose(got["r"], r, rtol=1e-14)
    assert_allclose(got["Tv"], tv, rtol=1e-14)
    assert_allclose(got["thickness"], thickness, rtol=1e-14)
    assert_allclose(got["z_top"], z_top, rtol=1e-14)
    assert_allclose(got["z_bottom"], z_bottom, rtol=1e-14)
    assert np.all(got["Tv"] > T)  # moist air is lighter: Tv > T (any textbook)


def test_omega_from_top_equals_physics():
    got = evaluate().si_columns
    bottom, top = kinematic.omega_integrated_from_top(DIV, DP, 0.0)
    assert_allclose(got["omega_bottom"], bottom, rtol=1e-13, atol=1e-15)
    assert_allclose(got["omega_top"], top, rtol=1e-13, atol=1e-15)
    tv = got["Tv"]
    assert_allclose(got["w_bottom"], kinematic.vertical_velocity(bottom, PB, tv), rtol=1e-13,
                    atol=1e-15)


@pytest.mark.parametrize("adjust", ["none", "uniform", "obrien"])
def test_omega_from_surface_with_adjustment_equals_physics(adjust):
    options = f"option integrate = from_surface\noption adjust = {adjust}\n"
    result = evaluate(options)
    got = result.si_columns
    _, raw_top = kinematic.omega_integrated_from_surface(DIV, DP, 0.0)
    mismatch = kinematic.top_mismatch(raw_top[-1], 0.0)
    assert_allclose(result.si_cells["top_mismatch"], mismatch, rtol=1e-13)
    adjusted = {"none": DIV,
                "uniform": kinematic.divergence_adjustment_uniform(DIV, DP, mismatch),
                "obrien": kinematic.divergence_adjustment_obrien(DIV, DP, mismatch)}[adjust]
    assert_allclose(got["div_adjusted"], adjusted, rtol=1e-13, atol=1e-20)
    bottom, top = kinematic.omega_integrated_from_surface(adjusted, DP, 0.0)
    assert_allclose(got["omega_top"], top, rtol=1e-12, atol=1e-14)
    if adjust != "none":
        assert abs(got["omega_top"][-1]) < 1e-13  # the adjustment meets omega_top = 0


def test_obrien_closed_form_for_equal_layers_through_the_sheet():
    table = """layers
  p_bottom [hPa]  p_top [hPa]  T [K]  div [1e-5 s^-1]
  1000 900 280 -1.0
  900 800 275 -0.5
  800 700 270 0.2
  700 600 265 0.4
  600 500 260 0.9
end
option integrate = from_surface
option adjust = obrien
"""
    result = layercalc.loads(table).evaluate()
    div = np.array([-1.0, -0.5, 0.2, 0.4, 0.9]) * 1e-5
    raw = np.cumsum(div * 10000.0)  # raw omega at layer tops k = 1..K, omega_surface = 0
    e = raw[-1]
    k = np.arange(1, 6)
    # O'Brien (1970) for equal-depth layers: omega_k' = omega_k - e k(k+1) / (K(K+1))
    assert_allclose(result.si_columns["omega_top"], raw - e * k * (k + 1) / 30.0, rtol=1e-12,
                    atol=1e-15)


def test_column_cells_equal_physics():
    cells = evaluate().si_cells
    assert_allclose(cells["column_mean_divergence"],
                    kinematic.column_mean_divergence(DIV, DP), rtol=1e-13)
    assert_allclose(cells["dines_ratio"], kinematic.dines_ratio(DIV, DP), rtol=1e-13)
    bottom, _ = kinematic.omega_integrated_from_top(DIV, DP, 0.0)
    assert_allclose(cells["omega_surface"], bottom[0], rtol=1e-13)
    assert_allclose(cells["surface_pressure_tendency"], bottom[0], rtol=1e-13)
    assert cells["max_ascent"] == pytest.approx(
        min(evaluate().si_columns["omega_top"].min(), bottom[0]))


def test_level_of_nondivergence_in_summary():
    levels = evaluate().summary["level_of_nondivergence"]
    p_mid = np.sqrt(PB * PT)
    assert_allclose(levels, kinematic.nondivergence_levels(p_mid, DIV), rtol=1e-14)
    assert 65000 < levels[0] < 80000  # between the 800-650 and 650-500 midpoints


def _humidity_column(heading: str, values) -> str:
    """MOIST with its Td column replaced (a negative humidity is refused, so every row)."""
    lines = MOIST.splitlines()
    lines[1] = lines[1].replace("Td [degC]", heading)
    for i, value in enumerate(values, start=2):
        cells = lines[i].split()
        cells[3] = f"{value:g}"
        lines[i] = "  " + "  ".join(cells)
    return "\n".join(lines) + "\n"


def test_relative_humidity_and_mixing_ratio_inputs():
    # made-up humidities; only the lowest layer's is checked below
    rh_table = _humidity_column("RH [%]", [74, 70, 60, 50, 40, 30])
    rh = layercalc.loads(rh_table).evaluate().si_columns
    es = humidity.saturation_vapour_pressure(T[0])
    assert_allclose(rh["e"][0], 0.74 * es, rtol=1e-14)  # e = RH es(T), definition of RH
    r_table = _humidity_column("r [g/kg]", [12, 9, 5, 2, 0.5, 0.1])
    r = layercalc.loads(r_table).evaluate().si_columns
    assert_allclose(r["Tv"][0], humidity.virtual_temperature(T[0], 0.012), rtol=1e-14)


def test_dry_column_says_so():
    table = MOIST.replace("  Td [degC]", "").replace("div [1e-5", "div [1e-5")
    rows = [line.split() for line in table.splitlines()[2:8]]
    dry = "layers\n  p_bottom [hPa]  p_top [hPa]  T [degC]  div [1e-5 s^-1]\n" + "\n".join(
        f"  {r[0]} {r[1]} {r[2]} {r[4]}" for r in rows) + "\nend\n"
    sheet = layercalc.loads(dry)
    assert any("treated as dry" in note for note in sheet.checked.remarks)
    assert_allclose(sheet.evaluate().si_columns["Tv"], T, rtol=0)


def test_terrain_and_advection_terms():
    extra = ("cell upslope_wind = 10 [m/s]\ncell terrain_slope = 0.002\n"
             "cell pressure_advection = 0.5 [hPa/h]\ncell surface_pressure = 1000 hPa\n")
    result = evaluate(extra)
    cells = result.si_cells
    tv0 = result.si_columns["Tv"][0]
    rho = 100000.0 / (layercalc.constants.RD * tv0)  # ideal gas law
    w_s = kinematic.terrain_vertical_velocity(10.0, 0.002)
    term = kinematic.terrain_tendency_term(rho, w_s)
    want = kinematic.surface_pressure_tendency(cells["omega_surface"], 0.5 * 100 / 3600, term)
    assert_allclose(cells["surface_pressure_tendency"], want, rtol=1e-13)


def test_divergences_summing_to_zero_give_zero_tendency():
    table = """layers
  p_bottom [hPa]  p_top [hPa]  T [K]  div [1e-5 s^-1]
  1000 800 280 -1.5
  800 500 265 0.0
  500 300 240 1.5
end
"""
    cells = layercalc.loads(table).evaluate().si_cells
    # analytic: sum(div dp) = -1.5*200 + 1.5*200 = 0 -> omega_surface = 0 (continuity eq.)
    assert abs(cells["surface_pressure_tendency"]) < 1e-15
    assert cells["dines_ratio"] == pytest.approx(0.0, abs=1e-12)


def test_scale_of_net_divergence():
    table = """layers
  p_bottom [hPa]  p_top [hPa]  T [K]  div [s^-1]
  1000 500 260 1e-6
  500 1 230 1e-6
end
"""
    result = layercalc.loads(table).evaluate()
    # common practice, no source: 1e-6 s^-1 over 999 hPa -> 999e2 * 1e-6 * 10800 s = 10.79 hPa/3h
    assert result.cells["surface_pressure_tendency"] == pytest.approx(-10.79, rel=1e-3)
