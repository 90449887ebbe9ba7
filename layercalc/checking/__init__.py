"""Syntax nodes to a checked sheet: names resolved, formula order found, dimensions derived
(sympy) and compared, SI factors recorded, scenarios checked; no layer arithmetic.

Modules: `checker` (statements, options, formulas, order; `check_document`), `tables` (the
layers table), `expressions` (typing expressions), `scenarios` (scenario blocks checked),
`level_changes` (changes at a station or the levels table),
`checked` (the `CheckedSheet` it produces).

Layer 4. May import: soundings, language, physics and the top-level leaves.
"""
