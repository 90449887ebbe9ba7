"""Results beyond what the atmosphere does get a warning naming the likely cause
(layercalc/evaluation/outcomes.py); the thresholds' sources are in its table and README."""

from __future__ import annotations

from pathlib import Path

import pytest

import layercalc
from layercalc.evaluation.outcomes import RESULT_BOUNDS, readme_table


def one_layer(div: float, extra: str = "") -> str:
    # made-up column, one layer 1000-500 hPa
    return ("layers\n  p_bottom [hPa]  p_top [hPa]  T [degC]  div [1e-5 s^-1]\n"
            f"  1000  500  -5.0  {div}\nend\n{extra}")


def messages(text: str) -> list[str]:
    return [n.message for n in layercalc.loads(text).check()]


def test_the_limits_are_those_of_the_table():
    # 10 hPa per 3 h (the brief's figure, over three times Sanders and Gyakum's 1980 bomb
    # rate of 1 hPa/h), 100 hPa/h, 10 m/s; 1 hPa = 100 Pa, 1 h = 3600 s (SI Brochure)
    limits = {b.names[0]: b.limit for b in RESULT_BOUNDS}
    assert limits["surface_pressure_tendency"] == pytest.approx(1000.0 / 10800.0)
    assert limits["omega_top"] == pytest.approx(10000.0 / 3600.0)
    assert limits["w_top"] == pytest.approx(10.0)


def test_a_tendency_beyond_10_hpa_per_3_h_names_the_unbalanced_divergence():
    # omega_surface = omega_top - div dp (continuity in pressure coordinates, e.g. Holton
    # and Hakim 2013, 3.5; from memory) = 0.3e-5 s^-1 * 5e4 Pa = 0.15 Pa/s = 16.2 hPa/3 h
    found = [m for m in messages(one_layer(-0.3)) if "surface pressure tendency" in m]
    assert len(found) == 1
    assert "+16.2 hPa/(3 h)" in found[0] and "do not balance" in found[0]


def test_a_tendency_within_the_limit_is_quiet():
    # as above with 0.1e-5 s^-1: 5.4 hPa/3 h
    assert not any("tendency" in m for m in messages(one_layer(-0.1)))


def test_omega_beyond_100_hpa_per_h_is_named_with_its_level():
    # 6e-5 s^-1 * 5e4 Pa = 3 Pa/s = 108 hPa/h at the surface (as above)
    found = [m for m in messages(one_layer(-6.0)) if m.startswith("omega")]
    assert found and "+108 hPa/h at 1000 hPa" in found[0]


def test_w_beyond_10_m_per_s_names_the_divergence_unit():
    text = one_layer(-1.0).replace("div [1e-5 s^-1]", "div [s^-1]")
    found = [m for m in messages(text) if m.startswith("vertical velocity")]
    assert found and "divergence is in the wrong unit" in found[0]


def test_report_and_json_carry_the_warning():
    sheet = layercalc.loads(one_layer(-0.3))
    result = sheet.evaluate()
    from layercalc.formats.jsondoc import result_document
    from layercalc.report.text import render

    assert "surface pressure tendency +16.2" in render(sheet, result).replace("\n  ", " ")
    assert any("tendency" in n["message"] for n in result_document(sheet, result)["notices"])


def test_check_gives_a_scenario_its_own_result_warning_only():
    text = one_layer(-0.1, 'scenario strong "more convergence"\n  scale div by 3\nend\n'
                           'scenario same "nothing changes"\n  add 0 K to T\nend\n')
    found = messages(text)
    # base 5.4 hPa/3 h: quiet; tripled: 16.2 hPa/3 h (as above)
    assert [m for m in found if "tendency" in m] == [
        m for m in found if m.startswith("scenario strong: surface pressure tendency +16.2")]


def test_readme_shows_the_thresholds():
    readme = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
    assert "\n".join(readme_table()) in readme
