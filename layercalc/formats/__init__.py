"""Readers and writers: one module per file format, away from the physics.

`jsondoc` (the JSON document), `xlsx/` (workbooks); the home of every future reader and
writer. Each reader is a public `read_x(path)` that opens the file and hands text or bytes
to a parser that never touches the file system, so tests feed the parser strings.
Exports nothing itself; import the format's module.

Layer 6. May import: evaluation, checking, soundings, language, physics and the top-level
leaves (errors, source, files, constants, caution, version). Never report, plots, api, cli.
"""
