"""Fuzzing the workbook import: random hand-entered workbooks (random cell types and values
in the layers and settings sheets, random headers) and byte-mutated exports never raise
anything but our error class, and never modify the file."""

from __future__ import annotations

import hashlib
import random
from pathlib import Path

from hypothesis import HealthCheck, given, settings, strategies as st
from openpyxl import Workbook

import layercalc
import pytest

pytestmark = pytest.mark.slow  # see pyproject.toml: deselect with -m 'not slow'

HEADERS = ["p_bottom [hPa]", "p_top [hPa]", "T [degC]", "Td [degC]", "div [1e-5 s^-1]",
           "T", "p_bottom", "RH [%]", "r [g/kg]", "x [furlong]", "div [s^-1", "", None,
           "=1+1", "T [degC] [K]", "lapse [K/km]", "p_top [Pa]"]
VALUES = st.one_of(st.none(), st.floats(allow_nan=True, allow_infinity=True),
                   st.integers(-10**6, 10**6),
                   st.text(st.characters(blacklist_categories=("Cc", "Cs")), max_size=12),
                   st.booleans(),
                   st.sampled_from(["-", "1e999", "=A1", "850", " 12.5 ", "#N/A"]))
SETTING_NAMES = ["surface_height", "integrate", "adjust", "omega_top", "omega_surface",
                 "title", "note", "warming", "bogus", "", None, "=cmd"]


def digest(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def load_quietly(path: Path) -> None:
    try:
        sheet = layercalc.load(path)
        sheet.evaluate()
    except layercalc.LayercalcError:
        pass


@settings(max_examples=60, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(header=st.lists(st.sampled_from(HEADERS), min_size=0, max_size=6),
       rows=st.lists(st.lists(VALUES, max_size=6), max_size=6),
       settings_rows=st.lists(st.tuples(st.sampled_from(SETTING_NAMES), VALUES,
                                        st.sampled_from(["m", "Pa/s", "", None, "K", "ft"])),
                              max_size=5))
def test_random_hand_entered_workbooks(tmp_path, header, rows, settings_rows):
    book = Workbook()
    ws = book.active
    ws.title = "layers"
    ws.append(header)
    for row in rows:
        ws.append(row)
    extra = book.create_sheet("settings")
    extra.append(["name", "value", "unit"])
    for row in settings_rows:
        extra.append(list(row))
    path = tmp_path / "random.xlsx"
    book.save(path)
    before = digest(path)
    load_quietly(path)
    assert digest(path) == before


@settings(max_examples=40, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.integers(0, 2**32 - 1))
def test_byte_mutated_exports(tmp_path, seed):
    base = tmp_path / "base.xlsx"
    if not base.exists():
        layercalc.load(Path(__file__).resolve().parents[2] / "worked_cases" /
                       "dines_compensation.layers").to_xlsx(base)
    data = bytearray(base.read_bytes())
    rnd = random.Random(seed)
    for _ in range(rnd.randint(1, 8)):
        i = rnd.randrange(len(data))
        data[i] = rnd.randrange(256)
    path = tmp_path / f"mutated_{seed}.xlsx"
    path.write_bytes(bytes(data))
    before = digest(path)
    load_quietly(path)
    assert digest(path) == before
