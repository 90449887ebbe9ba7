"""The printed report: the text report (`text`), its table layout (`layout`), the scenario
comparison (`compare`) and the soundings section (`soundings`). Results stay structured
until these modules word them.

Layer 7. May import: formats, evaluation, checking, soundings, language, physics and the
top-level leaves. Never plots, api or cli.
"""
