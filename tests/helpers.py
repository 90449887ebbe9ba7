"""Small helpers shared by the tests (not fixtures: plain functions)."""

from __future__ import annotations

import textwrap

import layercalc

BASE_TABLE = """\
layers
  p_bottom [hPa]  p_top [hPa]  T [degC]  div [1e-5 s^-1]
  1000  850   14.0  -1.0
  850   700    6.0  -0.6
  700   500   -6.0   0.0
  500   300  -25.0   0.8
  300   200  -45.0   1.0
end
"""


def sheet(body: str = "", table: str = BASE_TABLE):
    """A sheet from the base table plus extra lines."""
    return layercalc.loads(table + textwrap.dedent(body), name="test.layers")


def error_of(text: str) -> layercalc.LayercalcError:
    try:
        layercalc.loads(textwrap.dedent(text), name="test.layers")
    except layercalc.LayercalcError as exc:
        return exc
    raise AssertionError("expected a LayercalcError")
