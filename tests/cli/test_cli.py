"""The command line: every command through a real process (`python -m layercalc`, run from a
fresh folder) and in-process (`layercalc.cli.main`), exit codes, and errors without
tracebacks."""

from __future__ import annotations

import csv
import json
import re
from pathlib import Path

import numpy as np
import pytest
from numpy.testing import assert_allclose

import layercalc
from layercalc.cli.common import worked_cases_folder
from layercalc.cli.main import main
from layercalc.cli.templates import TEMPLATE
from tests.helpers import cli, process

CASES = worked_cases_folder()
WARMING = CASES / "midlevel_warming.layers"
COMMANDS = ("run", "check", "new", "demo", "plot", "export", "import", "sweep")

BAD_UNITS = """\
title "bad"
layers
  p_bottom [hPa]  p_top [hPa]  T [degC]
  1000  850  10
end
column bad = T + p_bottom
"""


@pytest.fixture
def bad_case(tmp_path) -> Path:
    path = tmp_path / "bad.layers"
    path.write_text(BAD_UNITS, encoding="utf-8")
    return path


# ---------------------------------------------------------------- through a process
@pytest.mark.slow
def test_run_in_a_process_from_a_fresh_folder(tmp_path):
    done = process("run", str(WARMING), cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert "Kestrel Fell" in done.stdout and "Summary" in done.stdout
    assert "caution:" in done.stdout
    assert list(tmp_path.iterdir()) == []  # nothing left behind


@pytest.mark.slow
def test_json_in_a_process(tmp_path):
    done = process("run", str(WARMING), "--json", cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    document = json.loads(done.stdout)
    assert document["scenario"] == "base" and len(document["layers"]) == 12


@pytest.mark.slow
def test_a_bad_file_gives_exit_1_with_position_and_no_traceback(tmp_path, bad_case):
    for command in ("run", "check", "plot"):
        extra = ("-o", str(tmp_path / "x.png")) if command == "plot" else ()
        done = process(command, str(bad_case), *extra, cwd=tmp_path)
        assert done.returncode == 1, (command, done.stderr)
        text = done.stdout + done.stderr
        assert f"{bad_case}:6:14: unit error" in text
        assert "^" in text
        assert "Traceback" not in text


@pytest.mark.slow
def test_usage_errors_exit_2(tmp_path):
    assert process(cwd=tmp_path).returncode == 2
    done = process("run", str(WARMING), "--no-such-option", cwd=tmp_path)
    assert done.returncode == 2 and "Traceback" not in done.stderr
    assert process("frobnicate", cwd=tmp_path).returncode == 2
    both = process("run", str(WARMING), "--scenario", "warmed",
                             "--all-scenarios", cwd=tmp_path)
    assert both.returncode == 2


@pytest.mark.slow
def test_demo_in_a_process_from_any_folder(tmp_path):
    done = process("demo", cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert "Where to go next" in done.stdout and "layercalc new" in done.stdout
    assert "surface pressure tendency" in done.stdout


@pytest.mark.slow
def test_new_plot_and_check_in_a_process(tmp_path):
    made = process("new", "-o", "mine.layers", cwd=tmp_path)
    assert made.returncode == 0, made.stderr
    assert (tmp_path / "mine.layers").read_text(encoding="utf-8") == TEMPLATE
    assert process("check", "mine.layers", cwd=tmp_path).stdout.strip() == "ok"
    drawn = process("plot", "mine.layers", "-o", "mine.png", cwd=tmp_path)
    assert drawn.returncode == 0, drawn.stderr
    assert (tmp_path / "mine.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


@pytest.mark.slow
@pytest.mark.parametrize("command", COMMANDS)
def test_help_on_every_command_has_an_example(command, tmp_path):
    done = process(command, "--help", cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert "example" in done.stdout and f"layercalc {command}" in done.stdout


# ---------------------------------------------------------------- in-process


def test_top_level_help_and_version(capsys):
    with pytest.raises(SystemExit) as stop:
        main(["--help"])
    assert stop.value.code == 0
    assert "layercalc demo" in capsys.readouterr().out
    with pytest.raises(SystemExit):
        main(["--version"])
    assert layercalc.__version__ in capsys.readouterr().out


def test_no_command_is_a_usage_error(capsys):
    code, _, err = cli(capsys)
    assert code == 2 and "usage" in err


def test_run_report(capsys):
    code, out, err = cli(capsys, "run", str(WARMING))
    assert code == 0 and err == ""
    assert max(len(line) for line in out.splitlines()) <= 80
    assert "200-150" in out.split("1000-950")[0]  # the column top comes first


def test_run_si_units_and_decametres(capsys):
    _, si, _ = cli(capsys, "run", str(WARMING), "--units", "si")
    assert "Pa/s" in si and "hPa/h" not in si
    _, dam, _ = cli(capsys, "run", str(WARMING), "--heights", "dam")
    assert "Heights of standard surfaces (dam)" in dam


def test_run_one_scenario_and_all_scenarios(capsys):
    code, out, _ = cli(capsys, "run", str(WARMING), "--scenario", "warmed")
    assert code == 0 and "scenario warmed: the 500-300" in out and "add warming to T" in out
    code, out, _ = cli(capsys, "run", str(WARMING), "--all-scenarios")
    assert code == 0 and "warmed_divergent" in out and "Scenarios compared" in out
    assert max(len(line) for line in out.splitlines()) <= 80
    code, out, _ = cli(capsys, "run", str(WARMING), "--all-scenarios", "--json")
    names = [d["scenario"] for d in json.loads(out)["scenarios"]]
    assert names == ["base", "warmed", "warmed_divergent"]


def test_an_unknown_scenario_is_our_error(capsys):
    code, out, err = cli(capsys, "run", str(WARMING), "--scenario", "warmd")
    assert code == 2 and out == ""  # a usage error
    assert "no scenario named 'warmd'" in err and "warmed" in err


def test_csv_has_a_units_row_and_is_written_whole(capsys, tmp_path):
    target = tmp_path / "layers.csv"
    code, _, _ = cli(capsys, "run", str(WARMING), "--csv", str(target))
    assert code == 0
    rows = list(csv.reader(target.open(encoding="utf-8")))
    assert rows[0][:3] == ["p_bottom", "p_top", "T"]
    assert rows[1][:3] == ["hPa", "hPa", "degC"]
    assert len(rows) == 2 + 12 and float(rows[2][0]) == 1000.0  # surface first
    assert sorted(p.name for p in tmp_path.iterdir()) == ["layers.csv"]  # no temp file left
    code, _, _ = cli(capsys, "run", str(WARMING), "--csv", str(target), "--units", "si")
    assert list(csv.reader(target.open(encoding="utf-8")))[1][:3] == ["Pa", "Pa", "K"]


def test_output_to_a_file_and_to_a_missing_folder(capsys, tmp_path):
    code, out, _ = cli(capsys, "run", str(WARMING), "--json", "-o", str(tmp_path / "r.json"))
    assert code == 0 and out == ""
    assert json.loads((tmp_path / "r.json").read_text(encoding="utf-8"))["layers"]
    code, _, err = cli(capsys, "run", str(WARMING), "-o", str(tmp_path / "no" / "r.txt"))
    assert code == 1 and "does not exist" in err


def test_missing_file(capsys, tmp_path):
    code, _, err = cli(capsys, "run", str(tmp_path / "nothing.layers"))
    assert code == 1 and "no such file" in err


def test_check_ok_and_problems(capsys, bad_case):
    code, out, _ = cli(capsys, "check", str(WARMING))
    assert code == 0 and out.strip().endswith("ok")
    code, out, _ = cli(capsys, "check", str(bad_case))
    assert code == 1
    assert out.startswith(f"{bad_case}:6:14: unit error: cannot add a pressure to a "
                          "temperature")
    assert "6 | column bad = T + p_bottom" in out
    code, out, _ = cli(capsys, "check", str(WARMING), str(bad_case))
    assert code == 1 and f"{WARMING}: ok" in out


def test_check_lists_every_problem(capsys, tmp_path):
    path = tmp_path / "two.layers"
    path.write_text(BAD_UNITS + "column worse = ln(p_top)\n", encoding="utf-8")
    code, out, _ = cli(capsys, "check", str(path))
    assert code == 1
    assert f"{path}:6:" in out and f"{path}:7:" in out


def test_new_template_loads_refuses_to_overwrite_and_forces(capsys, tmp_path):
    code, out, _ = cli(capsys, "new")
    assert code == 0 and out == TEMPLATE
    target = tmp_path / "c.layers"
    assert cli(capsys, "new", "-o", str(target))[0] == 0
    target.write_text("mine", encoding="utf-8")
    code, _, err = cli(capsys, "new", "-o", str(target))
    assert code == 1 and "exists already" in err and "--force" in err
    assert target.read_text(encoding="utf-8") == "mine"
    assert cli(capsys, "new", "-o", str(target), "--force")[0] == 0
    sheet = layercalc.load(target)
    sheet.evaluate()
    for scenario in sheet.scenarios:
        sheet.evaluate(scenario)


def _template_with_layers_table(text: str) -> str:
    """The template's commented alternative: the levels table and stations replaced by the
    layers table (its lines uncommented), as the template tells the user to do."""
    start, end = text.index("\nlevels\n"), text.index("# ---- or: a layers table")
    rest = text[:start + 1] + text[end:]
    a, b = rest.index("# layers\n"), rest.index("# end\n") + len("# end\n")
    return rest[:a] + "\n".join(line[2:] for line in rest[a:b].splitlines()) + "\n" + rest[b:]


def test_template_uses_every_construct():
    sheet = layercalc.loads(TEMPLATE, name="template.layers")
    assert sheet.title and sheet.notes and sheet.scenarios == ["warmer_aloft", "drier"]
    assert sheet.options == {"integrate": "from_surface", "adjust": "obrien"}
    assert sheet.check() == []
    formulas = " ".join(f.source_text for f in sheet.checked.formulas if not f.default)
    for word in ("below(", "above(", "where(", "sum(", "at_max(", "^"):
        assert word in formulas
    for word in ("add ", "scale ", "between", "above", "below 700 hPa", " from warmer_aloft",
                 "\nlevels\n", 'station "', "\n# layers\n"):
        assert word in TEMPLATE
    details = sheet.checked.soundings
    assert details.network is not None and len(details.network.stations) == 3
    assert details.hydrostatic and not any(details.hydrostatic[0].flagged)
    result = sheet.evaluate()
    for scenario in sheet.scenarios:
        sheet.evaluate(scenario)
    assert np.isfinite(np.asarray(result.si_layers["div"])).all()

    alternative = layercalc.loads(_template_with_layers_table(TEMPLATE), name="alt.layers")
    assert alternative.check() == [] and alternative.checked.soundings is None
    other = alternative.evaluate()
    for scenario in alternative.scenarios:
        alternative.evaluate(scenario)
    # the alternative's layers are the levels' layer means (mean of the two levels)
    assert_allclose(np.asarray(other.si_layers["T"]), np.asarray(result.si_layers["T"]))


def test_template_lapse_rate_is_right_in_the_lowest_layer():
    """The lowest layer's lapse rate is the one-sided difference to the layer above, not
    0 (the edge value below(T, T) = T made it 0 before). Expected: the template's own
    levels, (14 - 6) K over 1472 - 120 m = 5.92 K/km; the layer means give 5.83 K/km
    (one-sided difference of the two lowest layer means, computed from the result's T and
    z_mid below); 0.2 K/km between the two is common practice, no source."""
    result = layercalc.loads(TEMPLATE, name="template.layers").evaluate()
    layers = result.si_layers
    t, z_mid, lapse = (np.asarray(layers[n], dtype=float) for n in ("T", "z_mid", "lapse_rate"))
    assert_allclose(lapse[0], (t[0] - t[1]) / (z_mid[1] - z_mid[0]), rtol=1e-9)
    assert_allclose(lapse[0] * 1000.0, (14.0 - 6.0) / (1472.0 - 120.0) * 1000.0, atol=0.2)
    assert_allclose(lapse[-1], (t[-2] - t[-1]) / (z_mid[-1] - z_mid[-2]), rtol=1e-9)
    assert_allclose(lapse[2], (t[1] - t[3]) / (z_mid[3] - z_mid[1]), rtol=1e-9)


def test_demo_list_and_unknown(capsys):
    code, out, _ = cli(capsys, "demo", "--list")
    assert code == 0 and "standard_atmosphere" in out
    code, _, err = cli(capsys, "demo", "standard_atmosphre")
    assert code == 1 and "standard_atmosphere" in err


def test_plot_refuses_other_formats(capsys, tmp_path):
    code, _, err = cli(capsys, "plot", str(WARMING), "-o", str(tmp_path / "p.jpg"))
    assert code == 2 and ".png, .svg or .pdf" in err
    assert list(tmp_path.iterdir()) == []


def test_sweep(capsys, tmp_path):
    code, out, _ = cli(capsys, "sweep", str(WARMING), "--vary", "omega_top=-1:1:1",
                       "--csv", str(tmp_path / "s.csv"))
    assert code == 0 and "3 points" in out
    rows = list(csv.reader((tmp_path / "s.csv").open(encoding="utf-8")))
    assert rows[0][0] == "omega_top" and len(rows) == 2 + 3
    code, _, err = cli(capsys, "sweep", str(WARMING), "--vary", "nothing=0:1:1")
    assert code == 2 and "nothing" in err


def test_sweep_workbook_has_caution_and_units_and_three_ranges_are_a_usage_error(
        capsys, tmp_path):
    from openpyxl import load_workbook

    from layercalc.api import CAUTION

    target = tmp_path / "s.xlsx"
    code, _, _ = cli(capsys, "sweep", str(WARMING), "--scenario", "warmed_divergent",
                     "--vary", "warming=0:2:1", "--xlsx", str(target), "--quiet")
    assert code == 0
    rows = list(load_workbook(target)["sweep"].iter_rows(values_only=True))
    assert rows[1][0] == CAUTION
    assert rows[3][:2] == ("warming", "surface_pressure_tendency")
    assert rows[4][:2] == ("K", "hPa/(3 h)")
    assert [r[0] for r in rows[5:]] == [0, 1, 2]
    code, _, err = cli(capsys, "sweep", str(WARMING), "--vary", "warming=0:1:1",
                       "--vary", "div_scale=1:2:1", "--vary", "surface_height=0:1:1")
    assert code == 2 and "one or two cells" in err


def test_export_and_import(capsys, tmp_path):
    book = tmp_path / "case.xlsx"
    code, _, err = cli(capsys, "export", str(WARMING), "-o", str(book))
    assert code == 0 and book.is_file()
    back = tmp_path / "back.layers"
    code, _, err = cli(capsys, "import", str(book), "-o", str(back))
    assert code == 0, err
    layercalc.load(back).evaluate()
    code, _, err = cli(capsys, "import", str(book), "-o", str(back))
    assert code == 1 and "exists already" in err


# ---------------------------------------------------------------- soundings (issue 7)
THREE_STATIONS = CASES / "three_stations.layers"


def test_run_a_station_network_report(capsys):
    for options in ((), ("--units", "si"), ("--heights", "dam", "--every-column")):
        code, out, err = cli(capsys, "run", str(THREE_STATIONS), *options)
        assert code == 0 and err == "", options
        assert max(len(line) for line in out.splitlines()) <= 80, options
        assert out.rstrip().endswith("local procedures.")
        assert "Station network" in out and "Divergence and relative vorticity" in out
        for name in ("Northfield", "Eastmoor", "Southvale"):
            assert f'Hydrostatic check, station "{name}"' in out
    # every layer passes (the case's header: "every station's heights pass")
    _, out, _ = cli(capsys, "run", str(THREE_STATIONS))
    tables = out.split("Hydrostatic check", 1)[1].split("observed:")[0]
    flags = [line.split()[-2] for line in tables.splitlines() if re.match(r"\d+-\d+ ", line)]
    assert flags == ["ok"] * 24  # 3 stations x 8 layers


def test_json_gains_a_soundings_key_and_keeps_the_rest(capsys):
    _, plain, _ = cli(capsys, "run", str(WARMING), "--json")
    plain_keys = list(json.loads(plain))
    assert "soundings" not in plain_keys  # a layers table: no soundings
    code, out, _ = cli(capsys, "run", str(THREE_STATIONS), "--json")
    assert code == 0
    document = json.loads(out)
    assert [k for k in document if k != "soundings"] == plain_keys  # nothing else moves
    soundings = document["soundings"]
    assert list(soundings) == ["thermodynamics_from", "hydrostatic_tolerance", "units",
                               "column_levels", "network", "layer_wind", "hydrostatic"]
    units = soundings["units"]
    network = soundings["network"]
    # SI, as documented in jsonout.py
    assert units["divergence"] == "s^-1" and units["x"] == "m" and units["area"] == "m^2"
    assert units["T"] == "K" and units["implied_virtual_temperature"] == "K"
    assert soundings["hydrostatic_tolerance"] == 10.0  # physics.levels default, 10 m
    assert [(s["name"], s["latitude"], s["longitude"]) for s in network["stations"]] == [
        ("Northfield", 47.10, -31.70), ("Eastmoor", 45.85, -28.75), ("Southvale", 44.70, -32.30)]
    levels = network["levels"]
    assert levels["pressure"][0] == 100000.0 and levels["pressure"][-1] == 20000.0
    assert levels["divergence_interpolated"] == [False] * 9
    # a layer's div is the mean of its two levels' divergences (soundings.py: linear in
    # ln p; arithmetic), and equals the layer table's div
    divergence = np.array(levels["divergence"])
    layer_div = [layer["div"] for layer in document["layers"]]
    assert_allclose(layer_div, (divergence[:-1] + divergence[1:]) / 2, rtol=1e-12)
    assert_allclose(network["layer_divergence"], layer_div, rtol=1e-12)
    # the station mean of the reported 1000 hPa heights, 88, 104 and 121 m (the file)
    assert soundings["column_levels"]["z"][0] == pytest.approx((88 + 104 + 121) / 3)
    assert soundings["layer_wind"] is None  # winds only in station blocks
    assert [t["sounding"] for t in soundings["hydrostatic"]] == [
        'station "Northfield"', 'station "Eastmoor"', 'station "Southvale"']
    assert all(not any(t["flagged"]) and t["messages"] == [] for t in soundings["hydrostatic"])


def test_json_soundings_of_a_linear_wind_field_with_a_missing_wind(capsys, tmp_path):
    from tests.soundings.test_soundings import LEVEL_DIVERGENCE, LEVEL_VORTICITY, network_text
    from tests.physics.test_stations import pentagon

    latitudes, longitudes = pentagon(45.0, 20.0, 0.0)
    case = tmp_path / "five.layers"
    case.write_text(network_text(latitudes, longitudes, missing=[(3, 1)]), encoding="utf-8")
    code, out, err = cli(capsys, "run", str(case), "--json")
    assert code == 0, err
    network = json.loads(out)["soundings"]["network"]
    # divergence a + d and vorticity c - b by construction (tests/physics/test_stations.py,
    # plane_linear_winds); four stations still fit the 850 hPa level exactly
    assert_allclose(network["levels"]["divergence"], LEVEL_DIVERGENCE, rtol=0, atol=1e-17)
    assert_allclose(network["levels"]["vorticity"], LEVEL_VORTICITY, rtol=0, atol=1e-17)
    assert network["levels"]["stations_used"] == [5, 4, 5, 5, 5]
    assert network["stations"][3]["u"][1] is None  # the missing wind is null, not NaN


def test_plot_a_station_network(capsys, tmp_path):
    from matplotlib.image import imread

    from layercalc.plots.profile import COMPARE_SIZE, STATION_PANEL_WIDTH

    target = tmp_path / "three.png"
    code, _, err = cli(capsys, "plot", str(THREE_STATIONS), "-o", str(target), "--dpi", "50")
    assert code == 0 and f"wrote {target}" in err
    # profile and scenario panels (the case has scenarios) plus the station panel
    # (plot.py's sizes, in inches, at 50 dpi)
    assert imread(target).shape[:2] == (round(COMPARE_SIZE[1] * 50),
                                        round((COMPARE_SIZE[0] + STATION_PANEL_WIDTH) * 50))


def test_plot_station_level_option(capsys, tmp_path, monkeypatch):
    import layercalc.plots.profile as plot_module

    seen = []
    real = plot_module.profile_figure

    def spy(sheet, scenario=None, station_level=500.0):
        figure = real(sheet, scenario, station_level)
        seen.append([ax.get_title() for ax in figure.axes])
        return figure

    monkeypatch.setattr(plot_module, "profile_figure", spy)
    target = tmp_path / "three.png"
    code, _, _ = cli(capsys, "plot", str(THREE_STATIONS), "-o", str(target), "--dpi", "30",
                     "--station-level", "850")
    assert code == 0
    # the worked case reports at 850 hPa (a standard level), so that level is drawn
    assert any("winds at 850 hPa" in title for title in seen[0])


def test_json_soundings_of_a_levels_table_with_winds(capsys, tmp_path):
    case = tmp_path / "levels.layers"
    case.write_text("cell surface_height = 110 m\nlevels\n"
                    "  p [hPa]  T [degC]  dir [deg]  speed [m/s]\n"
                    "  1000  14.0  180  10\n  850  6.0  270  20\n  700  -4.0  360  30\nend\n",
                    encoding="utf-8")
    code, out, err = cli(capsys, "run", str(case), "--json")
    assert code == 0, err
    soundings = json.loads(out)["soundings"]
    assert soundings["network"] is None and soundings["hydrostatic"] == []
    assert soundings["thermodynamics_from"] == "the levels table"
    assert soundings["column_levels"]["T"] == pytest.approx([287.15, 279.15, 269.15])
    assert soundings["column_levels"]["z"] == []  # no heights given
    wind = soundings["layer_wind"]
    # WMO convention (direction the wind blows from; tests/physics/test_stations.py): from 180 ->
    # (0, +10), from 270 -> (+20, 0), from 360 -> (0, -30) m/s; a layer's wind is the mean
    # of its two levels (soundings.py: linear in ln p)
    assert wind["p_bottom"] == [100000.0, 85000.0] and wind["p_top"] == [85000.0, 70000.0]
    assert_allclose(wind["u"], [10.0, 10.0], atol=1e-12)
    assert_allclose(wind["v"], [5.0, -15.0], atol=1e-12)


def test_output_names_must_fit_their_format(capsys, tmp_path):
    code, _, err = cli(capsys, "export", str(WARMING), "-o", str(tmp_path / "book.csv"))
    assert code == 2 and "must end in .xlsx" in err
    code, _, err = cli(capsys, "sweep", str(WARMING), "--vary", "warming=0:1:1",
                       "--xlsx", str(tmp_path / "s.csv"))
    assert code == 2 and "must end in .xlsx" in err
    same = tmp_path / "same.txt"
    code, _, err = cli(capsys, "run", str(WARMING), "--csv", str(same), "-o", str(same))
    assert code == 2 and "both name" in err
    assert list(tmp_path.iterdir()) == []


def test_a_second_title_and_a_column_without_divergence():
    import layercalc

    problems = layercalc.problems('title "a"\ntitle "b"\n' + WARMING.read_text(), is_text=True)
    assert any("one title" in p.message for p in problems)
    calm = ("layers\n  p_bottom [hPa]  p_top [hPa]  T [degC]  div [1e-5 s^-1]\n"
            "  1000 850 10 0\n  850 700 2 0\nend\n")
    result = layercalc.loads(calm).evaluate()
    assert result.summary["level_of_nondivergence"] == []  # nothing changes sign
    assert result.cells["dines_ratio"] == 0.0  # the documented convention for no divergence


@pytest.mark.parametrize("case", [WARMING, "bad"])
def test_check_compiles_each_file_once(case, bad_case, monkeypatch, capsys):
    from layercalc import api

    compiled = []
    original = api._compile
    monkeypatch.setattr(api, "_compile", lambda *a, **k: compiled.append(1) or original(*a, **k))
    code = main(["check", str(bad_case if case == "bad" else case)])
    assert code == (1 if case == "bad" else 0) and len(compiled) == 1
    capsys.readouterr()


def test_import_compiles_the_sheet_once(monkeypatch, capsys, tmp_path):
    # the sheet made from the workbook is compiled where its errors can name a cell; the
    # file written is read back and, being the same text, not compiled a second time
    from layercalc import api

    book = tmp_path / "book.xlsx"
    assert main(["export", str(WARMING), "-o", str(book)]) == 0
    compiled = []
    original = api._compile
    monkeypatch.setattr(api, "_compile", lambda *a, **k: compiled.append(1) or original(*a, **k))
    back = tmp_path / "back.layers"
    assert main(["import", str(book), "-o", str(back)]) == 0
    assert len(compiled) == 1
    assert api.load(back).evaluate().cells["surface_pressure_tendency"] == \
        api.load(WARMING).evaluate().cells["surface_pressure_tendency"]  # the same sheet
    capsys.readouterr()


def test_sweep_and_help_leave_the_heavy_libraries_alone():
    import subprocess
    import sys

    probe = ("import sys\nfrom layercalc.cli.main import main\n"
             "try:\n    main(sys.argv[1:])\nexcept SystemExit:\n    pass\n"
             "print(sorted(m for m in ('numpy', 'pandas') if m in sys.modules))\n")
    root = Path(__file__).resolve().parents[2]

    def imported(*argv):
        done = subprocess.run([sys.executable, "-c", probe, *argv], capture_output=True,
                              text=True, cwd=root, timeout=120, check=True)
        return done.stdout.strip().splitlines()[-1]

    assert imported("--help") == "[]"  # no numpy for the help text
    assert imported("sweep", str(WARMING), "--vary", "warming=0:6:1", "--quiet") \
        == "['numpy']"  # a sweep needs numpy, not pandas


# --- option rough edges -------------------------------------------------------------------
def test_units_si_with_heights_dam_is_a_usage_error(capsys):
    code, out, err = cli(capsys, "run", str(WARMING), "--units", "si", "--heights", "dam")
    assert code == 2 and out == ""
    assert "--heights dam and --units si contradict each other" in err
    assert "usage: layercalc run" in err and "Traceback" not in err
    for options in (("--units", "si"), ("--heights", "dam"), ("--units", "si", "--heights", "m")):
        assert cli(capsys, "run", str(WARMING), *options)[0] == 0


def test_sweep_show_unknown_lists_the_names_and_shows_nondivergence(capsys, tmp_path):
    code, _, err = cli(capsys, "sweep", str(WARMING), "--vary", "warming=0:1:1",
                       "--show", "level_of_nondivergenc")
    assert code == 2
    assert "did you mean 'level_of_nondivergence'" in err
    assert "cells that can be shown:" in err and "surface_pressure_tendency" in err
    target = tmp_path / "sweep.csv"
    code, out, _ = cli(capsys, "sweep", str(WARMING), "--vary", "warming=2:4:1", "--show",
                       "level_of_nondivergence", "--csv", str(target))
    assert code == 0 and "level_of_nondivergence" in out
    rows = list(csv.reader(target.open(encoding="utf-8")))
    column = rows[0].index("level_of_nondivergence")
    # the sheet's own warming is 3 K: that row equals the run's first (lowest) level
    # (same code path as `run`; expected from layercalc's run, not an outside source)
    levels = layercalc.load(WARMING).evaluate().summary["level_of_nondivergence"]
    row = next(r for r in rows if r[0] in ("3", "3.0"))
    assert_allclose(float(row[column]), levels[0] / 100.0, rtol=1e-9)


@pytest.mark.parametrize("suffix, magic", [(".pdf", b"%PDF"), (".png", b"\x89PNG"),
                                           (".svg", b"<?xml")])
def test_plot_writes_pdf_png_and_svg(capsys, tmp_path, suffix, magic):
    target = tmp_path / f"profile{suffix}"
    assert cli(capsys, "plot", str(WARMING), "-o", str(target))[0] == 0
    assert target.read_bytes().startswith(magic)
    code, _, err = cli(capsys, "plot", str(WARMING), "-o", str(tmp_path / "p.jpg"))
    assert code == 2 and "must end in .png, .svg or .pdf" in err


def test_export_and_import_help_have_examples_and_say_what_is_in_each_sheet(capsys):
    for command, words in (("export", ("example:", "'layers'", "'settings'", "'results'",
                                       "'compare'", "'formulas'", "'notes'")),
                           ("import", ("example:", "'layers'", "'settings'", "'formulas'",
                                       "never read", "levels table", "station blocks"))):
        with pytest.raises(SystemExit):
            main([command, "--help"])
        out = " ".join(capsys.readouterr().out.split())
        for word in words:
            assert word in out, (command, word)


def test_run_csv_columns_follow_the_table_order(capsys, tmp_path):
    """Heights bottom before top, Tv with the thermodynamics, omega and w after them, the
    user's columns last as written (order of the report's layer table)."""
    target = tmp_path / "moist.csv"
    case = CASES / "moist_summer.layers"
    assert cli(capsys, "run", str(case), "--csv", str(target))[0] == 0
    header = target.read_text(encoding="utf-8").splitlines()[0].split(",")
    assert header[:4] == ["p_bottom", "p_top", "T", "Td"]
    position = {name: header.index(name) for name in header}
    assert position["Td"] < position["dp"] < position["p_mid"] < position["e"] < position["r"] < position["Tv"]
    assert position["Tv"] < position["thickness"] < position["z_bottom"] < position["z_top"]
    assert position["z_top"] < position["div"] < position["div_adjusted"]
    assert position["omega_bottom"] < position["omega_top"] < position["w_bottom"] < position["w_top"]
    user = [name for name in ("dry_thickness", "virtual_excess") if name in header]
    assert user and all(position[name] > position["w_top"] for name in user)
    text = case.read_text(encoding="utf-8")
    assert [n for n in header if n in user] == sorted(user, key=lambda n: text.index(f"column {n}"))
    sheet = layercalc.load(case)
    computed = sheet.evaluate().si_columns
    assert sorted(header) == sorted(n for n in sheet.checked.column_names if n in computed)


NO_ASCENT_SHEET = """\
title "uniform omega"
cell omega_top [hPa/h] = -1 [hPa/h]
layers
  p_bottom [hPa]  p_top [hPa]  T [degC]  div [1e-5 s^-1]
  1000  850  10  0
   850  700   2  0
end
"""


def test_sweep_gives_no_ascent_as_none_and_keeps_both_varied_cells_in_every_block(
        capsys, tmp_path):
    """div = 0 everywhere: omega equals omega_top in every layer (integration from the top,
    derived), so omega_top >= 0 has no ascent: none in the table, empty in the CSV, as
    `run` says none."""
    case = tmp_path / "uniform.layers"
    case.write_text(NO_ASCENT_SHEET, encoding="utf-8")
    target = tmp_path / "s.csv"
    code, out, _ = cli(capsys, "sweep", str(case), "--vary", "omega_top=-1:1:1",
                       "--vary", "surface_height=0:100:100", "--show", "max_ascent",
                       "--show", "max_ascent_pressure", "--show", "surface_pressure_tendency",
                       "--show", "omega_surface", "--show", "column_thickness",
                       "--show", "column_mean_divergence", "--csv", str(target))
    assert code == 0
    blocks = [b for b in out.split("\n\n") if "omega_top, surface_height" in b]
    assert len(blocks) >= 2                      # wrapped: every block names both cells
    for block in blocks:
        assert block.splitlines()[2].startswith("-1.000, 0.0 ")
    first = blocks[0].splitlines()
    assert first[2].split()[2] == "-1.000" and first[-1].split()[2] == "none"
    rows = list(csv.reader(target.open(encoding="utf-8")))
    column = rows[0].index("max_ascent")
    assert [r[column] for r in rows[2:]] == ["-1.0", "-1.0", "", "", "", ""]
    assert [r[column + 1] for r in rows[2:]][-1] == ""
    case.write_text(NO_ASCENT_SHEET.replace("= -1 [hPa/h]", "= 1 [hPa/h]"), encoding="utf-8")
    code, run_out, _ = cli(capsys, "run", str(case))
    assert code == 0 and "none: omega is nowhere negative" in run_out


def test_sweep_heat_map_is_centred_on_zero_with_display_labels(capsys, tmp_path):
    from layercalc.evaluation.sweep import axis_label, map_colours

    # signed: symmetric limits, so zero is the map's centre (white)
    assert map_colours([-1.0, 3.0]) == {"cmap": "RdBu_r", "vmin": -3.0, "vmax": 3.0}
    assert map_colours([1.0, 3.0]) == {"cmap": "viridis"}          # one sign: sequential
    assert axis_label("surface_pressure_tendency", "hPa/(3 h)") == (
        "surface pressure tendency [hPa/(3 h)]")
    assert axis_label("div_scale", "1") == "div scale"              # no '[1]'
    target = tmp_path / "map.png"
    assert cli(capsys, "sweep", str(WARMING), "--vary", "omega_top=-2:2:1", "--vary",
               "surface_height=0:100:50", "--plot", str(target), "--quiet")[0] == 0
    assert target.read_bytes().startswith(b"\x89PNG")
