"""The `notes` sheet of an exported workbook: what the sheet is, how its formulas were made,
the boundary condition and adjustment, every formula in readable form, the references,
the constants with their sources, the layercalc version and the caution."""

from __future__ import annotations

from layercalc import constants as C

BOUNDARY = {
    "from_top": "omega is integrated downward from the top boundary (omega_top on the "
                "settings sheet); the surface omega and the tendency follow from it.",
    "from_surface": "omega is integrated upward from the surface boundary (omega_surface "
                    "on the settings sheet); top_mismatch is what is left at the top.",
}
ADJUSTMENT = {
    "none": "none: the divergence is used as given.",
    "uniform": "uniform: the same correction in every layer removes the top mismatch.",
    "obrien": "obrien: a correction growing linearly with pressure depth from the ground "
              "removes the top mismatch (O'Brien 1970).",
}
REFERENCES = (
    "Bolton, D., 1980: The computation of equivalent potential temperature. Mon. Wea. "
    "Rev., 108, 1046-1053: eq. 10, saturation vapour pressure over water.",
    "O'Brien, J. J., 1970: Alternative solutions to the classical vertical velocity "
    "problem. J. Appl. Meteor., 9, 197-203: divergence adjustment.",
    "Hypsometric equation dz = Rd Tv / g0 ln(p_bottom / p_top), e.g. Wallace, J. M. and "
    "P. V. Hobbs, 2006: Atmospheric Science, 2nd ed., section 3.2.2, as cited in "
    "layercalc.physics.hypsometric.",
    "Kinematic method (continuity in pressure coordinates, integrated layer by layer), "
    "e.g. Holton, J. R. and G. J. Hakim, 2013: An Introduction to Dynamic Meteorology, "
    "5th ed., as cited in layercalc.physics.kinematic.",
    "Spreadsheet formula language: ISO/IEC 29500-1 (Office Open XML), section 18.17.",
)
COEFFICIENTS = (
    ("T0 (0 degC)", C.T_ZERO_CELSIUS, "K", "SI Brochure, 9th ed. (BIPM 2019), 2.3.1"),
    ("es(0 degC)", C.BOLTON_SATURATION_VAPOUR_PRESSURE_AT_0C, "Pa", "Bolton (1980) eq. 10"),
    ("Bolton a", C.BOLTON_EXPONENT_COEFFICIENT, "1", "Bolton (1980) eq. 10"),
    ("Bolton b", C.BOLTON_TEMPERATURE_OFFSET, "K", "Bolton (1980) eq. 10"),
)


def notes_rows(checked, variants, version: str, caution: str) -> list[tuple]:
    """(label, text, ...) rows of the notes sheet; a label None marks a section title."""
    options = checked.options
    rows: list[tuple] = [(None, checked.title or "layercalc column diagnostics")]
    rows.append(("caution", caution))
    rows += [("note", text) for text in checked.notes]
    rows.append(("layercalc version", version))
    rows.append(("layer order", "surface layer first: row 2 of 'layers' and row 6 of each "
                                "results sheet is the lowest layer"))
    rows.append(("boundary condition", f"integrate = {options.get('integrate')}: " +
                 BOUNDARY.get(options.get("integrate"), "")))
    rows.append(("adjustment", "adjust = " + ADJUSTMENT.get(options.get("adjust"), "")))
    rows += [("remark", text) for text in checked.remarks]
    rows += [("replaced default", f"{name}: the file's own formula replaces the default")
             for name in checked.replaced_defaults]
    rows += [("warning", notice.format()) for notice in checked.notices]
    rows.append((None, "How the spreadsheet formulas are written"))
    rows += [
        ("units", "inputs and results are in the units of their headers; each formula "
                  "converts what it reads to SI (e.g. *100 for hPa, +273.15 for degC) and "
                  "divides its result by its own unit's SI factor"),
        ("constants", "g0, Rd, Rv, epsilon and the Bolton coefficients are written into the "
                      "formulas as numbers (table below)"),
        ("helpers", "grey helper columns hold intermediate values in SI units for sums, "
                    "means, running sums and at_min/at_max"),
        ("summary cells", "levels of non-divergence (two helper columns: the level in "
                          "or above each layer, and the running count; INDEX/MATCH picks the "
                          "i-th), heights of the standard surfaces (the layer holding the "
                          "surface found with SUMPRODUCT, height linear in ln p between its "
                          "interfaces) and standard thicknesses (differences of heights) are "
                          "live formulas too"),
        ("options", "integrate and adjust on the settings sheet are locked: they choose "
                    "which formulas are written; edit the .layers file and export again"),
        ("scenarios", "each results_<name> sheet has its own input block: inputs equal to "
                      "the base link to 'layers'/'settings', changed inputs are shaded "
                      "values; 'compare' sets the key cells side by side"
                      if len(variants) > 1 else "none in this sheet"),
    ]
    rows.append((None, "Default formulas (layers language)"))
    rows += [("default", line) for line in checked.prelude_text.splitlines() if line.strip()]
    user = [f.source_text for f in checked.formulas if not f.default]
    if user:
        rows.append((None, "Formulas of this sheet (layers language)"))
        rows += [("formula", text) for text in user]
    for variant in variants[1:]:
        rows.append(("scenario", f"{variant.name}: {variant.description}".rstrip(": ")))
    rows.append((None, "References"))
    rows += [("reference", text) for text in REFERENCES]
    rows.append((None, "Constants (name, value, unit, source)"))
    for name, constant in C.CONSTANTS.items():
        rows.append((name, repr(constant.value), constant.unit, constant.source))
    for name, value, unit, source in COEFFICIENTS:
        rows.append((name, repr(value), unit, source))
    return rows


def notes_sheet(ws, checked, variants, version: str, caution: str) -> None:
    from openpyxl.styles import Alignment

    from layercalc.formats.xlsx.cells import put_text, size_columns, style
    from layercalc.formats.xlsx.printing import wrap_columns

    titles = []
    for i, row in enumerate(notes_rows(checked, variants, version, caution), start=1):
        label, *texts = row
        if label is None:
            put_text(ws.cell(i, 1), texts[0])
            style(ws.cell(i, 1), "title" if i == 1 else "group")
            titles.append(i)
            continue
        put_text(ws.cell(i, 1), label)
        style(ws.cell(i, 1), "name")
        for j, text in enumerate(texts, start=2):
            put_text(ws.cell(i, j), text)
            style(ws.cell(i, j), "caution" if label == "caution" else "value")
    size_columns(ws, {1: 22, 2: 110, 3: 16, 4: 80})
    wrap_columns(ws, {1: 22, 2: 100, 4: 40}, ws.max_row)
    for i in titles:  # a title on one line across the sheet, not wrapped in column A
        ws.merge_cells(start_row=i, start_column=1, end_row=i, end_column=4)
        ws.cell(i, 1).alignment = Alignment(vertical="bottom")
        ws.row_dimensions[i].height = 20.0 if i == 1 else 15.0
