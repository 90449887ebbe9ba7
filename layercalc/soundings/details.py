"""What the soundings gave, kept for the outputs: frozen dataclasses holding numpy arrays in
SI, levels and layers from the surface upward, NaN for a missing value. Built while the
layers are built (soundings/levels.py, soundings/column.py), carried on the checked sheet
(`CheckedSheet.soundings`), worded by report/soundings.py, drawn by plots/stations.py and
converted to JSON only in formats/jsondoc.py. These describe the soundings as typed: a
scenario that changes level values (`at "Name"`, `at levels`) rebuilds its layers from
changed copies (soundings/rebuild.py) and leaves these as they are.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from layercalc.physics.levels import HydrostaticFlag


@dataclass(frozen=True)
class NetworkStation:
    """One station of a network: its place, its position on the tangent plane about the
    centroid, and its reported wind per level (east, north)."""

    name: str
    latitude: float        # [deg]
    longitude: float       # [deg]
    x: float               # [m], east at the centroid
    y: float               # [m], north at the centroid
    u: np.ndarray          # [m/s] per level
    v: np.ndarray          # [m/s] per level
    reported: str = "components"  # or "direction and speed" (rounding of the report applies)


@dataclass(frozen=True)
class NetworkLevels:
    """The fit at each level of the network."""

    pressure: np.ndarray                 # [Pa]
    divergence: np.ndarray               # [s^-1], inner gaps interpolated in ln p
    divergence_interpolated: np.ndarray  # bool: the level's divergence was interpolated
    vorticity: np.ndarray                # [s^-1]
    stations_used: np.ndarray            # int: stations with a wind at the level
    u_at_centroid: np.ndarray            # [m/s] the fitted wind at the plane's origin
    v_at_centroid: np.ndarray            # [m/s]


@dataclass(frozen=True)
class Network:
    """A station network and the divergence it gives."""

    centroid_latitude: float       # [deg]
    centroid_longitude: float      # [deg]
    area: float                    # [m^2]
    smallest_angle: float          # [deg]
    collinearity: float            # [1]
    smallest_separation: float     # [m]
    largest_separation: float      # [m]
    stations: tuple[NetworkStation, ...]
    levels: NetworkLevels
    layer_divergence: np.ndarray   # [s^-1], the layers' div (mean of two levels)


@dataclass(frozen=True)
class LayerWind:
    """Layer-mean winds of a levels table (the mean of u and v at the two levels)."""

    p_bottom: np.ndarray   # [Pa]
    p_top: np.ndarray      # [Pa]
    u: np.ndarray          # [m/s]
    v: np.ndarray          # [m/s]


@dataclass(frozen=True)
class CombinedLayer:
    """A layer the hydrostatic check took across levels without a temperature or height."""

    p_bottom: float                # [Pa]
    p_top: float                   # [Pa]
    observed_thickness: float      # [m]
    hypsometric_thickness: float   # [m]
    difference: float              # [m] observed minus hypsometric
    flagged: bool


@dataclass(frozen=True)
class HydrostaticTable:
    """The hydrostatic check of one sounding's reported heights, layer by layer."""

    sounding: str                          # "the levels table", 'station "A"'
    tolerance: float                       # [m] per layer
    p_bottom: np.ndarray                   # [Pa]
    p_top: np.ndarray                      # [Pa]
    observed_thickness: np.ndarray         # [m]
    hypsometric_thickness: np.ndarray      # [m]
    difference: np.ndarray                 # [m] observed minus hypsometric
    flagged: np.ndarray                    # bool
    implied_virtual_temperature: np.ndarray  # [K]
    flags: tuple[HydrostaticFlag, ...]     # the likely causes, structured
    messages: tuple[str, ...]              # the same in words, one per flag
    tv_per_temperature: np.ndarray | None = None  # [1] dTv/dT at the levels
    tv_per_dewpoint: np.ndarray | None = None     # [1] dTv/dTd at the levels (0: no Td)
    # layers not checked one by one: (p_bottom [Pa], p_top [Pa], why) per layer, surface first
    unchecked: tuple[tuple[float, float, str], ...] = ()
    # what was checked instead, across the levels that lack a value (each spans several
    # layers): same fields as the per-layer arrays, surface first
    combined: tuple[CombinedLayer, ...] = ()


@dataclass(frozen=True)
class SoundingDetails:
    """Everything the outputs show about the soundings of a sheet."""

    thermodynamics_from: str               # "the levels table" | "the mean over the stations"
    hydrostatic_tolerance: float           # [m]
    column_levels: dict                    # name -> values at the column's levels (SI);
                                           # "pressure" first, "z" last (empty without heights)
    network: Network | None
    layer_wind: LayerWind | None
    hydrostatic: tuple[HydrostaticTable, ...]
    level_counts: dict = field(default_factory=dict)  # name -> soundings reporting it at
                                                      # each level (0: interpolated)
    # the soundings as read (levels.Sounding, SI), for scenarios that change level values
    # (soundings/rebuild.py): the top-level levels table or None, the stations in order
    levels_table: object = None
    station_soundings: tuple = ()
    surface_cut: float | None = None  # [Pa] the surface_pressure that cut the column
