"""The column language: text to checked-ready syntax, and the units.

Holds the grammar loader and parser (`parser`), the syntax nodes (`nodes`) and their builder
(`build`), the typed expression tree (`typed`), the function table (`functions`), the unit
table (`units`) and units as written (`unit_text`), input values in SI (`inputs`), the
default diagnostics written in the language (`defaults`) and the reused unit-check cache
(`dimensions`). Exports nothing itself: import the module you need.

Layer 2. May import: physics and the top-level leaves (errors, source, files, constants,
caution, version). Never checking, soundings, evaluation, formats, report, plots, api, cli.
"""
