"""A checked sheet and SI arrays to results: the vectorised evaluator with its leading
scenario axis (`engine`), scenarios applied and sweeps (`scenarios`, `level_changes`,
`sweep`), levels of
non-divergence and standard heights (`summary`), the scenario comparison (`compare`).

Layer 5. May import: checking, soundings, language, physics and the top-level leaves.
"""
