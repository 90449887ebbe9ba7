"""The plausibility table (layercalc/language/plausibility.py): values no air has are
errors, values beyond what air does are warnings, and the unit slip behind them is named.
The messages users see are golden texts in tests/errors/ (slip_*, negative_*,
vapour_pressure_above_pressure)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from layercalc.cli.main import main
from layercalc.language import plausibility as P
from layercalc.language.unit_text import parse_unit_string

ERRORS = Path(__file__).resolve().parents[1] / "errors"

# name, values as written, unit written, kind expected, slip expected. The values are
# made-up readings in the unit the slip names; the conversion factors behind the slips are
# the unit table's (NIST SP 811 / SI Brochure, tests/language/test_units.py).
SLIPS = [
    ("div", [-1.5, 0.8], "s^-1", "warning", "1e-5 s^-1"),
    ("p_top", [500.0, 100.0], "Pa", "warning", "hPa"),
    ("p", [100000.0, 85000.0], "hPa", "error", "Pa"),
    ("T", [14.0, -6.0 + 10.0], "K", "error", "degC"),
    ("Td", [283.0, 275.0], "degC", "warning", "K"),
    ("RH", [85.0, 40.0], "1", "error", "%"),
    ("r", [8.0, 3.0], "1", "error", "g/kg"),
    ("speed", [160.0, 190.0], "m/s", "warning", "kt"),
]


@pytest.mark.parametrize("name, written, unit_text, kind, slip", SLIPS,
                         ids=[row[0] + "-" + row[2] for row in SLIPS])
def test_a_unit_slip_is_named(name, written, unit_text, kind, slip):
    unit = parse_unit_string(unit_text)
    found = P.check_values(name, unit.to_si(np.array(written)), unit)
    assert found is not None and found.kind == kind
    assert f"did you mean [{slip}]" in found.message


@pytest.mark.parametrize("name, written, unit_text", [
    # typical values (from memory: a mid-latitude sounding, Wallace and Hobbs 2006, ch. 3)
    ("div", [-1.5, 0.8], "1e-5 s^-1"), ("p_bottom", [1000.0, 300.0], "hPa"),
    ("T", [14.0, -56.0], "degC"), ("RH", [85.0, 2.0], "%"), ("r", [8.0, 0.1], "g/kg"),
    ("speed", [10.0, 120.0], "kt"),
])
def test_ordinary_values_pass(name, written, unit_text):
    unit = parse_unit_string(unit_text)
    assert P.check_values(name, unit.to_si(np.array(written)), unit) is None


def test_impossible_values_are_errors_without_a_slip():
    unit = parse_unit_string("%")
    found = P.check_values("RH", unit.to_si(np.array([50.0, -3.0])), unit)
    assert found.kind == "error" and found.index == 1 and "did you mean" not in found.message


def test_vapour_pressure_at_the_pressure_is_an_error():
    # e = p exactly: r = eps e / (p - e) has no value (definition of the mixing ratio)
    assert P.vapour_pressure_finding([500.0], [500.0], "Td").kind == "error"
    assert P.vapour_pressure_finding([499.0], [500.0], "Td") is None


def test_heights_imply_air_temperatures_or_name_the_slip():
    pressure = np.array([1000e2, 500e2])
    # 1000-500 hPa thickness 5460 m <-> Tv = g0 dz / (Rd ln 2) = 269.3 K (hypsometric
    # equation, Wallace and Hobbs 2006, eq. 3.29; standard thickness from memory)
    metres = parse_unit_string("m")
    assert P.implied_virtual_temperature(pressure, [100.0, 5560.0]) == pytest.approx(
        9.80665 * 5460.0 / (287.05 * np.log(2.0)), rel=1e-3)
    assert P.height_finding(pressure, np.array([100.0, 5560.0]), metres) is None
    assert "did you mean [dam]" in P.height_finding(pressure, np.array([10.0, 556.0]),
                                                    metres).message
    feet = np.array([100.0, 5560.0]) / 0.3048  # 1 ft = 0.3048 m (NIST SP 811)
    assert "did you mean [ft]" in P.height_finding(pressure, feet, metres).message


def test_readme_shows_the_table():
    readme = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
    assert "\n".join(P.readme_table()) in readme


@pytest.mark.parametrize("case, status", [
    ("slip_temperature_kelvin", 1), ("negative_mixing_ratio", 1),
    ("vapour_pressure_above_pressure", 1), ("slip_divergence_per_second", 0),
])
def test_check_names_the_fix(capsys, case, status):
    assert main(["check", str(ERRORS / f"{case}.layers")]) == status
    out = capsys.readouterr().out
    assert ("did you mean" in out) or ("hint:" in out)


WARNING_ONLY = [p for p in sorted(ERRORS.glob("*.layers"))
                if ": warning: " in p.with_suffix(".expected").read_text(encoding="utf-8")]


@pytest.mark.parametrize("path", WARNING_ONLY, ids=[p.stem for p in WARNING_ONLY])
def test_a_warning_does_not_stop_the_run_and_the_report_shows_it(path, capsys):
    assert len(WARNING_ONLY) >= 3
    assert main(["run", str(path)]) == 0
    report = " ".join(capsys.readouterr().out.split())  # the report wraps lines
    golden = path.with_suffix(".expected").read_text(encoding="utf-8").splitlines()
    for line in golden:
        if ": warning: " in line:
            assert " ".join(line.split(": warning: ", 1)[1].split()) in report


@pytest.mark.parametrize("written, unit_text, slip", [
    # 850 hPa at 1457 m in the U.S. Standard Atmosphere 1976 (from memory; the code uses
    # physics.sounding_profile); 1 ft = 0.3048 m (NIST SP 811)
    (1500.0 / 0.3048, "m", "ft"), (150.0, "m", "dam"), (1.5, "m", "km"),
])
def test_surface_height_far_from_its_pressure_names_the_slip(written, unit_text, slip):
    found = P.surface_height_finding(parse_unit_string(unit_text).to_si(written), 85000.0,
                                     parse_unit_string(unit_text))
    assert found.kind == "warning" and f"did you mean [{slip}]" in found.message


def test_surface_height_near_its_pressure_is_quiet():
    # a deep low: 850 hPa some 400 m lower than standard (8 m per hPa, 50 hPa; from memory)
    assert P.surface_height_finding(1050.0, 85000.0, parse_unit_string("m")) is None
