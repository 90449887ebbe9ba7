"""Bad and unusual input at the language level: each gives our error class with a position,
or works as documented. (Golden message texts are in test_errors.py.)"""

from __future__ import annotations

import numpy as np
import pytest

import layercalc

from tests.helpers import BASE_TABLE, sheet

TABLE = """layers
  p_bottom [hPa]  p_top [hPa]  T [degC]  Td [degC]
  1000  850   14.0  9.0
  850   700    6.0  0.0
end
"""


def test_file_that_is_not_utf8(tmp_path):
    path = tmp_path / "latin1.layers"
    path.write_bytes('title "Caf\xe9"\n'.encode("latin-1") + BASE_TABLE.encode())
    with pytest.raises(layercalc.InputError) as info:
        layercalc.load(path)
    assert "latin1.layers:1:11" in info.value.format()
    assert "not UTF-8" in info.value.format()


def test_missing_file_and_folder(tmp_path):
    with pytest.raises(layercalc.InputError, match="no such file"):
        layercalc.load(tmp_path / "absent.layers")
    with pytest.raises(layercalc.InputError, match="is a folder"):
        layercalc.load(tmp_path)


def test_very_long_line_gives_a_windowed_excerpt():
    text = BASE_TABLE + "column x = (" + "T + " * 200 + "T) / 201" + " " * 10_000 + \
        "+ p_top\n"
    problems = layercalc.problems(text, is_text=True)
    assert len(problems) == 1 and isinstance(problems[0], layercalc.UnitError)
    assert problems[0].location == "<string>:9:12"
    excerpt = problems[0].format().splitlines()[1]
    assert len(excerpt) < 140


@pytest.mark.slow
def test_hundred_thousand_layers_work():
    n = 100_000
    p = np.linspace(1000.0, 100.0, n + 1)
    rows = "\n".join(f"{a:.4f} {b:.4f} -20 0.1" for a, b in zip(p[:-1], p[1:]))
    text = f"layers\n p_bottom [hPa] p_top [hPa] T [degC] div [1e-5 s^-1]\n{rows}\nend\n"
    result = layercalc.loads(text).evaluate()
    assert result.si_columns["z_top"].shape == (n,)
    # isothermal column: thickness = Rd T / g0 ln(1000/100) (hypsometric equation, e.g.
    # Wallace and Hobbs 2006, eq. 3.29, from memory)
    from layercalc.constants import G0, RD

    assert result.si_cells["column_thickness"] == pytest.approx(
        RD * 253.15 / G0 * np.log(10.0), rel=1e-9)


def test_single_layer_works():
    one = "layers\n p_bottom [hPa] p_top [hPa] T [K] div [1e-5 s^-1]\n 1000 500 260 0.5\nend\n"
    result = layercalc.loads(one).evaluate()
    assert result.summary["level_of_nondivergence"] == []
    # continuity equation in pressure coordinates, one layer (common practice, no source):
    # omega_s = -div dp = -0.5e-5 * 5e4 Pa = -0.25 Pa/s
    assert result.si_cells["omega_surface"] == pytest.approx(-0.25)


def test_implausible_temperature_warns_and_dewpoint_above_temperature_warns():
    warm = TABLE.replace("14.0  9.0", "75.0  9.0").replace("6.0  0.0", "6.0  8.0")
    notices = [n.format() for n in layercalc.loads(warm, name="w.layers").check()]
    assert any("outside the plausible range" in n and "w.layers:3:" in n for n in notices)
    assert any("dewpoint above temperature" in n and "w.layers:4:" in n for n in notices)


def test_unsorted_layers_are_sorted_with_a_notice():
    shuffled = BASE_TABLE.replace("  850   700    6.0  -0.6\n", "").replace(
        "end", "  850   700    6.0  -0.6\nend")
    s = layercalc.loads(shuffled)
    assert any("sorted them" in n.message for n in s.check())
    np.testing.assert_allclose(s.evaluate().si_columns["z_top"],
                               sheet().evaluate().si_columns["z_top"], rtol=0, atol=0)


def test_header_without_unit_uses_documented_default():
    text = "layers\n p_bottom p_top T\n 1000 850 10\nend\n"
    s = layercalc.loads(text)
    assert s.evaluate().si_columns["p_bottom"][0] == 100000.0  # hPa by default
    assert s.evaluate().si_columns["T"][0] == pytest.approx(283.15)  # degC by default
    assert any("has no unit: using [hPa]" in n.message for n in s.check())


def test_omega_surface_given_while_integrating_from_top_is_refused():
    problems = layercalc.problems(BASE_TABLE + "cell omega_surface = 0.1 [Pa/s]\n", is_text=True)
    assert "integrating from the top" in problems[0].message


def test_constant_cannot_be_redefined():
    problems = layercalc.problems(BASE_TABLE + "cell g0 = 9.8 [m/s^2]\n", is_text=True)
    assert "is a constant" in problems[0].message


def test_several_problems_are_all_reported():
    text = BASE_TABLE + "column a = T + p_top\ncolumn b = ln(T)\ncolumn c = zz\n"
    problems = layercalc.problems(text, is_text=True)
    assert len(problems) == 3
    assert [p.location.split(":")[1] for p in problems] == ["9", "10", "11"]
