"""The `layercalc` command: the argument parser and dispatch (`main`), the commands
(`commands`, `sweep`), what they share (`common`) and the `new` template (`templates`).
Catches LayercalcError only.

Layer 9, the top. May import everything below it.
"""
