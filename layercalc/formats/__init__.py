"""Readers and writers: one module per file format, away from the physics.

Each reader is a public `read_x(path)` that opens the file and hands text or bytes to a
parser that never touches the file system, so tests feed the parser strings.
Exports nothing itself; import the format's module.
May import: evaluation, checking, soundings, language, physics and the top-level leaves
(errors, source, files, constants, names, caution, version). Never report, plots, cli or api.
"""
