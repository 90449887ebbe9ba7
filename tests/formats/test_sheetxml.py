"""The large sheets' cells written as worksheet XML (layercalc.formats.xlsx.sheetxml): read
back by openpyxl as the same numbers, text, formulas and styles, and the work per layer
does not grow with the number of layers (the export used to be quadratic)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from openpyxl import load_workbook

import layercalc
from layercalc.formats.xlsx import layout as xlsx_layout
from layercalc.formats.xlsx.export import write_workbook
from layercalc.formats.xlsx.layout import FIRST_ROW, HEADER_ROW
from layercalc.formats.xlsx.sheetxml import formula_cell, number_cell, number_value, text_cell


def test_cells_escape_text_and_formulas():
    assert text_cell("A1", "a < b & c\x01", 0) == (
        '<c r="A1" s="0" t="inlineStr"><is><t xml:space="preserve">a &lt; b &amp; c '
        "</t></is></c>")
    assert formula_cell("B2", 'IF(A1<2,"&",0)', 1.5, 3) == (
        '<c r="B2" s="3"><f>IF(A1&lt;2,"&amp;",0)</f><v>1.5</v></c>')
    assert formula_cell("B2", "A1", math.nan, 3) == '<c r="B2" s="3"><f>A1</f></c>'
    assert number_cell("C3", math.inf, 0) == '<c r="C3" s="0" t="e"><v>#NUM!</v></c>'


@pytest.mark.parametrize("value", [0.1, -2.5e-17, 1e300, 123456789.0, 1 / 3, -0.0])
def test_numbers_are_written_to_read_back_the_same_double(value):
    # common practice, no source: repr gives the shortest text that round-trips a double
    assert float(number_value(value)) == value


def made_up_column(layers: int) -> str:
    edges = np.geomspace(1000.0, 100.0, layers + 1)
    rows = "\n".join(f"  {float(b)!r} {float(t)!r} {10.0 - 0.1 * k:.2f} {5.0 - 0.1 * k:.2f} "
                     f"{0.5 - k / layers:.3f}"
                     for k, (b, t) in enumerate(zip(edges[:-1], edges[1:])))
    return ("cell warming = 3 K\nlayers\n  p_bottom [hPa] p_top [hPa] T [degC] Td [degC] "
            f"div [1e-5 s^-1]\n{rows}\nend\nscenario warmed \"warmer aloft\"\n"
            "  add warming to T between 500 hPa and 300 hPa\nend\n")


def test_a_long_column_reads_back_formulas_values_styles_and_comments(tmp_path):
    sheet = layercalc.loads(made_up_column(120), name="long.layers")
    path = tmp_path / "long.xlsx"
    write_workbook(sheet, path)
    book = load_workbook(path)
    live, twin = book["results"], book["values"]
    header = [live.cell(HEADER_ROW, j).value for j in range(1, live.max_column + 1)]
    column = header.index("thickness [m]") + 1
    want = sheet.evaluate().layers["thickness"].to_numpy()
    for k in range(120):
        assert live.cell(FIRST_ROW + k, column).data_type == "f"
        # source: layercalc's own evaluation of the same sheet (the values twin)
        assert twin.cell(FIRST_ROW + k, column).value == pytest.approx(want[k], rel=1e-12)
    assert live.cell(HEADER_ROW, 1).font.b and live.cell(HEADER_ROW, 1).fill.fgColor.rgb
    assert live.cell(FIRST_ROW, column).number_format == \
        twin.cell(FIRST_ROW, column).number_format != "General"
    assert live.cell(HEADER_ROW, column).comment is not None
    warmed = book["results_warmed"]
    changed = [warmed.cell(FIRST_ROW + k, 3) for k in range(120)
               if warmed.cell(FIRST_ROW + k, 3).comment is not None]
    assert changed and all("add warming to T" in c.comment.text for c in changed)
    assert book["results"].dimensions == f"A1:{live.cell(1, live.max_column).column_letter}" \
                                         f"{live.max_row}"
    cached = load_workbook(path, data_only=True)["results"]
    # the formulas carry layercalc's numbers as cached values (viewers that do not
    # recalculate); source: layercalc's own evaluation
    assert cached.cell(FIRST_ROW + 5, column).value == pytest.approx(want[5], rel=1e-12)


def test_helper_columns_are_translated_once_per_node_not_once_per_row(monkeypatch):
    # A running sum asks for its helper in every row; translating the helper each time made
    # the export quadratic in the number of layers. Count the translations per layer.
    from layercalc.formats.xlsx.formulas import Translator

    counts = {}
    original = Translator.expr

    def counting(self, node, row):
        counts["n"] = counts.get("n", 0) + 1
        return original(self, node, row)

    monkeypatch.setattr(Translator, "expr", counting)
    per_layer = []
    for layers in (40, 160):
        counts["n"] = 0
        sheet = layercalc.loads(made_up_column(layers) + "column acc [K] = upward_sum(T - "
                                "273.15 K)\n", name="grow.layers")
        from layercalc.formats.xlsx.export import build_workbook

        build_workbook(sheet)
        per_layer.append(counts["n"] / layers)
    # linear work: the translations per layer stay the same (within the fixed part)
    assert per_layer[1] <= per_layer[0] * 1.05, per_layer


def test_number_formats_are_worked_out_once_per_column_not_once_per_row(monkeypatch):
    # A number format is chosen from a column's values; choosing it again in every row
    # from the whole column made the export quadratic (found with 5,000 layers). Count the
    # values looked at per layer, for 40 and 160 layers: linear work keeps it the same.
    from layercalc.formats.xlsx import formulas, layout, scenarios, summary_cells
    from layercalc.formats.xlsx.export import build_workbook

    looked_at = [0]
    original = formulas.number_format

    def counting(values):
        looked_at[0] += np.size(values)
        return original(values)

    for module in (layout, scenarios, summary_cells):
        monkeypatch.setattr(module, "number_format", counting)
    per_layer = []
    for layers in (40, 160):
        sheet = layercalc.loads(made_up_column(layers), name="grow.layers")
        looked_at[0] = 0
        build_workbook(sheet)
        per_layer.append(looked_at[0] / layers)
    assert per_layer[1] <= per_layer[0] * 1.05, per_layer
