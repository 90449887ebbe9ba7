"""Invariants (hypothesis): row order does not matter; splitting a dry layer in two with the
same mean values changes nothing but rounding; unit-equivalent inputs give identical results."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings, strategies as st
from numpy.testing import assert_allclose

import layercalc


@st.composite
def columns(draw, min_layers=2, max_layers=8):
    n = draw(st.integers(min_layers, max_layers))
    cuts = sorted(set(draw(st.lists(st.integers(150, 990), min_size=n - 1, max_size=n - 1,
                                    unique=True))), reverse=True)
    p = np.array([1000, *cuts, 100], dtype=float)
    t = np.array(draw(st.lists(st.floats(-60, 30), min_size=len(p) - 1,
                               max_size=len(p) - 1)))
    div = np.array(draw(st.lists(st.floats(-3, 3), min_size=len(p) - 1,
                                 max_size=len(p) - 1)))
    return p, t, div


def table(p, t, div, order=None, units=("hPa", "degC", "1e-5 s^-1"), factors=(1, 1, 1),
          offsets=(0, 0, 0)):
    rows = list(range(len(t)))
    if order is not None:
        rows = order
    lines = [f"  p_bottom [{units[0]}]  p_top [{units[0]}]  T [{units[1]}]  "
             f"div [{units[2]}]"]
    for i in rows:
        values = (p[i] * factors[0], p[i + 1] * factors[0], t[i] * factors[1] + offsets[1],
                  div[i] * factors[2])
        lines.append("  " + " ".join(repr(float(v)) for v in values))
    return "layers\n" + "\n".join(lines) + "\nend\ncell surface_height = 100 m\n"


KEYS = ("z_top", "thickness", "omega_top", "omega_bottom", "w_top")


@settings(max_examples=40, deadline=None)
@given(columns(), st.randoms())
def test_row_order_does_not_matter(column, rnd):
    p, t, div = column
    order = list(range(len(t)))
    rnd.shuffle(order)
    a = layercalc.loads(table(p, t, div)).evaluate()
    b = layercalc.loads(table(p, t, div, order=order)).evaluate()
    for key in KEYS:
        assert_allclose(a.si_columns[key], b.si_columns[key], rtol=0, atol=0)
    assert a.si_cells == b.si_cells


@settings(max_examples=40, deadline=None)
@given(columns(), st.data())
def test_splitting_a_dry_layer_changes_nothing_but_rounding(column, data):
    p, t, div = column
    k = data.draw(st.integers(0, len(t) - 1))
    mid = data.draw(st.floats(0.05, 0.95)) * (p[k] - p[k + 1]) + p[k + 1]
    p2 = np.insert(p, k + 1, mid)
    t2 = np.insert(t, k, t[k])
    d2 = np.insert(div, k, div[k])
    a = layercalc.loads(table(p, t, div)).evaluate()
    b = layercalc.loads(table(p2, t2, d2)).evaluate()
    # analytic: ln is additive and sum(div dp) is additive, so only rounding differs
    assert_allclose(b.si_cells["surface_pressure_tendency"],
                    a.si_cells["surface_pressure_tendency"], rtol=1e-9, atol=1e-15)
    assert_allclose(b.si_cells["column_thickness"], a.si_cells["column_thickness"],
                    rtol=1e-12)
    assert_allclose(np.delete(b.si_columns["z_top"], k), a.si_columns["z_top"], rtol=1e-12)


@settings(max_examples=40, deadline=None)
@given(columns())
def test_unit_equivalent_inputs_give_identical_results(column):
    p, t, div = column
    a = layercalc.loads(table(p, t, div)).evaluate()
    # hPa -> Pa, degC -> K, 1e-5 s^-1 -> s^-1 (SI Brochure factors); decimal text differs,
    # so results agree to rounding of the written numbers
    b = layercalc.loads(table(p, t, div, units=("Pa", "K", "s^-1"), factors=(100, 1, 1e-5),
                              offsets=(0, 273.15, 0))).evaluate()
    for key in KEYS:
        assert_allclose(a.si_columns[key], b.si_columns[key], rtol=1e-12, atol=1e-14)
