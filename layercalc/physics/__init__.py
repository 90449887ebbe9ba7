"""Pure numpy physics, one topic a module: humidity, hypsometric (thickness and heights),
kinematic (omega, adjustments, tendency), levels (level tables to layer means), stations
(the station-network wind fit), sphere (points and directions on the sphere), line_integral
(the exact spherical reference), winds, uncertainty (error propagation and ensembles).
Formula, units and reference in every docstring.

Layer 1. May import: constants and errors only.
"""
