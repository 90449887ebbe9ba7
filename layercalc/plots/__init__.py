"""Figures (matplotlib, imported inside the functions): the profile of omega and divergence
against pressure (`profile`) and the station panel (`stations`).

Layer 7. May import: formats, evaluation, checking, soundings, language, physics and the
top-level leaves. Never report, api or cli.
"""
