"""The unit table against published factors, and the unit checker's messages."""

from __future__ import annotations

import math

import pytest
from numpy.testing import assert_allclose

import layercalc
from layercalc.language import units as U
from layercalc.language.unit_text import parse_unit_string

from tests.helpers import error_of, sheet

# symbol, SI value of one unit, source of the factor
PUBLISHED = [
    ("Pa", 1.0, "SI Brochure 9th ed. (2019), Table 4"),
    ("hPa", 100.0, "SI Brochure 9th ed. (2019), Table 7 (hecto = 1e2)"),
    ("kPa", 1000.0, "SI Brochure 9th ed. (2019), Table 7 (kilo = 1e3)"),
    ("mb", 100.0, "NIST SP 811 (2008), B.8: millibar = 1.0e2 Pa"),
    ("mbar", 100.0, "NIST SP 811 (2008), B.8: millibar = 1.0e2 Pa"),
    ("bar", 1.0e5, "NIST SP 811 (2008), B.8: bar = 1.0e5 Pa"),
    ("ubar", 0.1, "NIST SP 811 (2008), B.8: microbar = 1.0e-1 Pa"),
    ("microbar", 0.1, "NIST SP 811 (2008), B.8: microbar = 1.0e-1 Pa"),
    ("K", 1.0, "SI Brochure 9th ed. (2019), Table 2"),
    ("m", 1.0, "SI Brochure 9th ed. (2019), Table 2"),
    ("cm", 0.01, "SI Brochure 9th ed. (2019), Table 7 (centi = 1e-2)"),
    ("mm", 0.001, "SI Brochure 9th ed. (2019), Table 7 (milli = 1e-3)"),
    ("dam", 10.0, "SI Brochure 9th ed. (2019), Table 7 (deca = 1e1)"),
    ("km", 1000.0, "SI Brochure 9th ed. (2019), Table 7 (kilo = 1e3)"),
    ("ft", 0.3048, "NIST SP 811 (2008), B.8: foot = 3.048e-1 m (exact)"),
    ("s", 1.0, "SI Brochure 9th ed. (2019), Table 2"),
    ("min", 60.0, "SI Brochure 9th ed. (2019), Table 8"),
    ("h", 3600.0, "SI Brochure 9th ed. (2019), Table 8"),
    ("day", 86400.0, "SI Brochure 9th ed. (2019), Table 8"),
    ("kt", 0.5144444444, "NIST SP 811 (2008), B.8: knot = 5.144 444 e-1 m/s"),
    ("g", 0.001, "SI Brochure 9th ed. (2019), Table 2 and prefixes"),
    ("kg", 1.0, "SI Brochure 9th ed. (2019), Table 2"),
    ("%", 0.01, "ISO 80000-1 (2009): 1 % = 0.01"),
    ("deg", math.pi / 180, "SI Brochure 9th ed. (2019), Table 8: 1 deg = pi/180 rad"),
    ("J", 1.0, "SI Brochure 9th ed. (2019), Table 4"),
]


@pytest.mark.parametrize("symbol, factor, source", PUBLISHED)
def test_unit_factor_against_published(symbol, factor, source):
    entry = U.UNIT_TABLE[symbol]
    print(f"{symbol:>9} = {entry.scale:.10g} SI  ({source})")
    assert_allclose(entry.scale, factor, rtol=1e-9)


def test_every_unit_is_covered_by_a_published_factor():
    covered = {row[0] for row in PUBLISHED} | {"degC", "rad", "1", "N", "W"}
    assert set(U.UNIT_TABLE) <= covered


def test_degC_is_affine():
    # SI Brochure 9th ed. (2019), 2.3.1: t/degC = T/K - 273.15
    unit = U.lookup("degC")
    assert unit.to_si(0.0) == 273.15 and unit.to_si(-40.0) == pytest.approx(233.15)
    assert unit.from_si(300.0) == pytest.approx(26.85)


@pytest.mark.parametrize("text, si_factor, source", [
    ("1e-5 s^-1", 1e-5, "definition of the scaled unit (common practice, no source)"),
    ("hPa/h", 100 / 3600, "SI Brochure factors above"),
    ("hPa/(3 h)", 100 / 10800, "SI Brochure factors above"),
    ("hPa/3 h", 100 / 10800, "juxtaposition binds tighter than '/' (our documented rule)"),
    ("cm/s", 0.01, "SI Brochure factors above"),
    ("ubar/s", 0.1, "NIST SP 811 (2008), B.8"),
    ("g/kg", 0.001, "SI Brochure factors above"),
    ("J kg^-1 K^-1", 1.0, "SI Brochure 9th ed. (2019), Table 4"),
    ("10^-5 s^-1", 1e-5, "definition"),
])
def test_compound_units(text, si_factor, source):
    assert_allclose(parse_unit_string(text).scale, si_factor, rtol=1e-12)


def test_dimension_names_in_words():
    assert U.dimension_name(U.lookup("hPa").dimension) == "pressure"
    assert U.dimension_name(U.lookup("K").dimension) == "temperature"
    # temperature and time share the symbol T in sympy; we keep them apart
    assert not U.same_dimension(U.lookup("K").dimension, U.lookup("s").dimension)
    assert not U.same_dimension(U.lookup("m").dimension, U.lookup("s").dimension)


def test_cannot_add_pressure_to_temperature():
    err = error_of(f"""\
        {_TABLE}
        column bad = T + p_bottom
        """)
    assert isinstance(err, layercalc.UnitError)
    text = err.format()
    assert "cannot add a pressure to a temperature" in text
    assert "test.layers:7:14" in text
    assert "^^^^^^^^^^^^" in text
    assert "T is a temperature; p_bottom is a pressure" in text


_TABLE = """layers
          p_bottom [hPa]  p_top [hPa]  T [degC]
          1000  850  14
          850  700  6
        end
"""


@pytest.mark.parametrize("formula, expected", [
    ("column c = ln(T)", "ln needs a dimensionless argument, not a temperature"),
    ("column c = exp(p_bottom)", "exp needs a dimensionless argument, not a pressure"),
    ("column c = 2 ^ T", "an exponent must be dimensionless, not a temperature"),
    ("column c [m] = T * 2", "column c [m] is a length but its formula gives a temperature"),
    ("column c = T < p_top", "cannot compare a temperature with a pressure"),
    ("column c = 2 * 5 degC", "a degC value cannot be multiplied or divided"),
    ("column c = -(5 degC)", "a degC value cannot be negated"),
    ("column c [degC/km] = T", "degC cannot be combined with other units"),
    ("column c = T + 3 furlong", "unknown unit 'furlong'"),
    ("column c = max(T, p_top)", "cannot use together in max a temperature with a pressure"),
    ("column c = where(T, 1, 2)", "'where' needs a condition"),
    ("column c = (T > 0 K) + 1", "a condition (true/false) cannot be used with '+'"),
    ("column c = T ^ p_top", "an exponent must be dimensionless, not a pressure"),
    ("column c = vapour_pressure(p_top)", "vapour_pressure needs a temperature here"),
])
def test_unit_mismatch_messages(formula, expected):
    err = error_of(_TABLE + formula + "\n")
    assert expected in err.format()
    assert err.format().startswith("test.layers:")


def test_unknown_unit_suggests_close_match():
    err = error_of(_TABLE + "column c = T + 3 Kk\n")
    assert "did you mean 'K'" in err.format()


def test_unit_equivalent_inputs_give_identical_results():
    in_hpa = sheet().evaluate().si_columns["thickness"]
    pa_table = """layers
  p_bottom [Pa]  p_top [Pa]  T [K]  div [s^-1]
  100000  85000   287.15  -1.0e-5
  85000   70000    279.15  -0.6e-5
  70000   50000   267.15   0.0
  50000   30000   248.15   0.8e-5
  30000   20000   228.15   1.0e-5
end
"""
    in_pa = sheet(table=pa_table).evaluate().si_columns
    assert_allclose(in_pa["thickness"], in_hpa, rtol=1e-12)  # same SI inputs (exact)
    assert_allclose(in_pa["omega_top"], sheet().evaluate().si_columns["omega_top"],
                    rtol=1e-12, atol=1e-15)
