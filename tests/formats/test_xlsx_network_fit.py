"""A station network with a missing wind in a workbook (formats/xlsx/network_fit.py): the
fit at that level over the stations that have a wind, or, with fewer than three, the
divergence interpolated in ln p as layercalc does. Numbers are checked by LibreOffice in
test_libreoffice_levels.py."""

from __future__ import annotations

from openpyxl import load_workbook

import layercalc
from layercalc.formats.xlsx.export import write_workbook

from tests.formats.test_xlsx_export import worked_cases_folder

EASTMOOR_925 = "       925      8.9       7.5     756    187     27"
# a fourth made-up station west of the triangle, without a wind at 700 hPa
WESTBY = """
station "Westby" latitude 46.20 longitude -34.10
  levels
    p [hPa]  T [degC]  Td [degC]  z [m]  dir [deg]  speed [kt]
      1000     15.0      11.8    121    156     14
       925     10.2       8.0    776    190     21
       850      7.0       4.0   1476    208     25
       700     -1.6      -5.6   3049      -      -
       500    -17.6     -23.0   5648    232     48
       400    -28.4     -36.0   7283    236     60
       300    -42.4     -51.0   9285    240     77
       250    -50.0     -59.0  10497    241     84
       200    -56.2     -67.0  11934    244     75
  end
end
"""


def three_stations() -> str:
    text = (worked_cases_folder() / "three_stations.layers").read_text()
    return text[:text.index("\nscenario")] + "\n" if "\nscenario" in text else text


def without_a_wind() -> str:
    """three_stations with Eastmoor's 925 hPa wind left out: two winds there, so layercalc
    interpolates the divergence at 925 hPa."""
    text = three_stations()
    assert text.count(EASTMOOR_925) == 1
    return text.replace(EASTMOOR_925, EASTMOOR_925[:-13] + "     -      -")


def four_stations() -> str:
    """three_stations and Westby, which has no wind at 700 hPa: fitted from three."""
    return three_stations() + WESTBY


def test_a_missing_wind_is_live_on_the_stations_sheet(tmp_path):
    for name, text in (("interpolated", without_a_wind()), ("four", four_stations())):
        sheet = layercalc.loads(text, name=f"{name}.layers")
        path = tmp_path / f"{name}.xlsx"
        write_workbook(sheet, path)
        workbook = load_workbook(path)
        assert "stations" in workbook.sheetnames, name
        formulas = [c.value for row in workbook["stations"].iter_rows() for c in row
                    if isinstance(c.value, str) and c.value.startswith("=IF(COUNT(")]
        assert formulas, name  # the level's fit counts the winds there
        assert not any(isinstance(c.value, str) and c.value.startswith("NOT LIVE")
                       for row in workbook["layers"].iter_rows() for c in row)
