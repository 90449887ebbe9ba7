"""Readers and writers: one module per file format, away from the physics.

`jsondoc` (the JSON document), `xlsx/` (workbooks); soundings in: `temp` (FM 35 TEMP and
FM 32 PILOT bulletins, with `bulletin`, `temp_code`, `temp_parts`), `bufr` (through the
optional ecCodes), `text_table`, all giving `decoded.Decoded`, written as `.layers` text by
`layers_writer`; `soundings_input.read_soundings` recognises the format by content. The
home of every future reader and writer. Each reader is a public `read_x(path)` that opens the file and hands text or bytes
to a parser that never touches the file system, so tests feed the parser strings.
Exports nothing itself; import the format's module.

Layer 6. May import: evaluation, checking, soundings, language, physics and the top-level
leaves (errors, source, files, constants, caution, version). Never report, plots, api, cli.
"""
