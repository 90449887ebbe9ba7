"""Soundings to layers: `levels` tables read and checked (gap filling, hydrostatic check,
`levels`), and station networks turned into a column (`column`: the thermodynamics, and
divergence from the stations' winds through physics.stations), and the same path for a
scenario's changed level values (`rebuild`).

Layer 3. May import: language, physics and the top-level leaves. Never checking or above.
The checker hands itself in as an argument where these readers need its cell lookups.
"""
