"""Smaller slips of issue 13: a scenario range that selects no layer is warned wherever the
scenarios are shown; "strongest ascent" means the most negative omega, and nothing (null,
"-", "none") when omega is nowhere negative; CSV numbers without float noise or -0; the
JSON remarks say what the report says about layers given top first."""

from __future__ import annotations

import json

import numpy as np
import pytest

import layercalc
from layercalc.cli.common import worked_cases_folder
from layercalc.cli.main import main
from layercalc.formats.jsondoc import layer_table_csv, result_document
from layercalc.report.text import render

# made-up column; divergence -1, -0.6, 0.4 (1e-5 s^-1)
TABLE = """layers
  p_bottom [hPa]  p_top [hPa]  T [degC]  div [1e-5 s^-1]
  1000  850   14.0  -1.0
  850   700   -4.0  -0.6
  700   500  -12.0   0.4
end
"""
EMPTY = 'scenario aloft "nothing up there"\n  add 2 K to T between 300 hPa and 200 hPa\nend\n'


@pytest.fixture
def case(tmp_path):
    path = tmp_path / "case.layers"
    path.write_text(TABLE + EMPTY, encoding="utf-8")
    return path


def test_check_warns_of_a_range_that_selects_no_layer(case, capsys):
    assert main(["check", str(case)]) == 0
    assert "scenario aloft: 'add 2 K to T between 300 hPa and 200 hPa' selects no layer" \
        in capsys.readouterr().out


def test_all_scenarios_warns_of_it_in_text_and_json(case, capsys):
    assert main(["run", str(case), "--all-scenarios"]) == 0
    assert "selects no layer" in " ".join(capsys.readouterr().out.split())
    assert main(["run", str(case), "--all-scenarios", "--json"]) == 0
    document = json.loads(capsys.readouterr().out)
    aloft = [d for d in document["scenarios"] if d["scenario"] == "aloft"][0]
    assert any("selects no layer" in n["message"] for n in aloft["notices"])


def test_no_ascent_is_null_none_and_a_dash():
    # every divergence negative: omega = -sum(div dp) is positive at every level (continuity
    # in pressure coordinates, common practice), so there is no ascent
    text = TABLE.replace("   0.4\n", "  -0.4\n") + EMPTY
    sheet = layercalc.loads(text)
    result = sheet.evaluate()
    assert np.all(result.si_columns["omega_top"][:-1] > 0)
    summary = result_document(sheet, result)["summary"]
    assert summary["max_ascent"] is None and summary["max_ascent_pressure"] is None
    assert "strongest ascent           none" in render(sheet, result)
    from layercalc.report.compare import render_comparison

    row = [line for line in render_comparison(sheet, ["base", "aloft"]).splitlines()
           if line.startswith("strongest ascent")][0]
    assert row.split()[-2:] == ["-", "-"] or row.split()[-3:] == ["-", "-", "(-)"]


def test_ascent_is_the_most_negative_omega_in_json():
    sheet = layercalc.loads(TABLE)
    result = sheet.evaluate()
    summary = result_document(sheet, result)["summary"]
    assert summary["max_ascent"] == pytest.approx(result.si_columns["omega_top"].min())
    assert summary["max_ascent"] < 0


def test_csv_numbers_carry_no_float_noise_and_no_negative_zero():
    # omega at 850 hPa, integrated down from omega = 0 at 500 hPa (continuity in pressure
    # coordinates, common practice): -(0.4e-5 * 20000) - (-0.6e-5 * 15000) = 0.01 Pa/s
    # = 0.36 hPa/h, which float64 sums give as 0.359999999999999 (the noise this test is
    # about); -0.0 arises as -0 * a positive depth
    sheet = layercalc.loads(TABLE + "column minus_zero = -0 * dp\n")
    text = layer_table_csv(sheet.evaluate())
    assert "0000000000" not in text and "9999999999" not in text
    assert "-0," not in text and not any(line.endswith(",-0") for line in text.splitlines())
    assert ",0.36," in text


def test_json_remarks_say_the_layers_were_given_top_first():
    lines = TABLE.splitlines()
    top_first = "\n".join([lines[0], lines[1], *reversed(lines[2:5]), lines[5]]) + "\n"
    sheet = layercalc.loads(top_first)
    result = sheet.evaluate()
    remark = "the layers were given top first; they are computed surface first"
    assert remark in result_document(sheet, result)["remarks"]
    assert remark in " ".join(render(sheet, result).split())


def test_the_unbalanced_divergence_header_says_what_its_table_has():
    path = worked_cases_folder() / "unbalanced_divergence.layers"
    assert "# All nine layers are 100 hPa deep" in path.read_text(encoding="utf-8")
    columns = layercalc.load(path).evaluate().si_columns
    assert len(columns["dp"]) == 9
    assert np.allclose(columns["p_bottom"] - columns["p_top"], 100e2)
