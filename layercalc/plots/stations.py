"""The station panel of the profile figure (sheets with `station` blocks): the stations at
their positions on the tangent plane about the network's centroid, the network's outline,
and wind arrows at one chosen level, labelled with each station's name and its reported
wind; the fitted wind at the centroid and the level's divergence and vorticity in the title.

Positions, winds and the fit come from the sheet's sounding details (soundings.py, SI),
the same for every scenario (scenario changes act on the layers, not on the soundings).
The plane's axes are east and north at the centroid only: each station's wind is turned
into them with the projection's own north angle (physics.stations, meridian convergence),
so an arrow points where the wind blows on the plane. matplotlib is imported by the caller
(plot.py); this module only draws on the Axes it is given.
"""

from __future__ import annotations

import math

import numpy as np

from layercalc.errors import OutputError
from layercalc.physics import stations as station_physics, winds

DEFAULT_LEVEL_HPA = 500.0
STATION_COLOUR = "black"
WIND_COLOUR = "tab:blue"
CENTROID_COLOUR = "tab:red"
# The longest arrow is drawn this fraction of the network's largest extent long.
ARROW_FRACTION = 0.35
KEY_SPEEDS_KT = (5, 10, 20, 25, 50, 100)


def _floats(values) -> np.ndarray:
    return np.asarray(values, dtype=float)


def check_level(level_hpa) -> float:
    """The station level as a float [hPa]; OutputError unless it is a number above 0."""
    if not (isinstance(level_hpa, (int, float)) and math.isfinite(level_hpa)
            and level_hpa > 0):
        raise OutputError(f"the station level must be a pressure above 0 hPa, not "
                          f"{level_hpa!r}", hint="e.g. 500 (hPa)")
    return float(level_hpa)


def level_index(pressures_pa, level_hpa: float) -> int:
    """Index of the level nearest to `level_hpa` (in pressure; the higher pressure wins a
    tie). Raises OutputError for a level that is not a number above 0."""
    level_hpa = check_level(level_hpa)
    pressures = np.asarray(pressures_pa, dtype=float)
    distance = np.abs(pressures - level_hpa * 100.0)
    return int(np.flatnonzero(distance == distance.min())[0])  # surface first: higher p


def plane_winds(network, level: int) -> tuple[np.ndarray, np.ndarray]:
    """Each station's wind at `level` in the plane's (x, y) components [m/s] (NaN where a
    station has none): the reported (east, north) wind turned by the station's north angle
    (physics.stations.tangent_plane_coordinates, rotate_wind_to_plane)."""
    members = network.stations
    latitudes = np.array([s.latitude for s in members], dtype=float)
    longitudes = np.array([s.longitude for s in members], dtype=float)
    _, _, north_angle = station_physics.tangent_plane_coordinates(
        latitudes, longitudes, network.centroid_latitude, network.centroid_longitude)
    u = np.array([_floats(s.u)[level] for s in members])
    v = np.array([_floats(s.v)[level] for s in members])
    return station_physics.rotate_wind_to_plane(u, v, north_angle)


def _outline(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The stations joined in order of their bearing from the centroid, closed."""
    order = np.argsort(np.arctan2(y, x))
    order = np.append(order, order[0])
    return x[order], y[order]


def _label_offset(u: float, v: float, distance: float = 22.0) -> tuple[float, float]:
    """Offset (points) of a station's label: opposite its arrow, below it without one."""
    if not (np.isfinite(u) and np.isfinite(v)) or math.hypot(u, v) == 0.0:
        return 0.0, -distance
    return -distance * u / math.hypot(u, v), -distance * v / math.hypot(u, v)


def _key_speed(largest_kt: float) -> int:
    fitting = [s for s in KEY_SPEEDS_KT if s <= max(largest_kt, KEY_SPEEDS_KT[0])]
    return fitting[-1]


def station_panel(ax, details, level_hpa: float = DEFAULT_LEVEL_HPA) -> int:
    """Draw the station network and its winds at the level nearest `level_hpa` on `ax`;
    returns the index of the level drawn (surface first, as in the details)."""
    from layercalc.language.unit_text import parse_unit_string

    knot = parse_unit_string("kt")
    km = parse_unit_string("km")
    network = details.network
    levels = network.levels
    level = level_index(levels.pressure, level_hpa)
    members = network.stations
    x = km.from_si(np.array([s.x for s in members], dtype=float))
    y = km.from_si(np.array([s.y for s in members], dtype=float))
    ox, oy = _outline(x, y)
    ax.plot(ox, oy, color="grey", linewidth=0.8, gid="network_outline")
    ax.plot(x, y, "o", color=STATION_COLOUR, markersize=5, gid="stations",
            label="stations")
    ax.plot([0.0], [0.0], "+", color=CENTROID_COLOUR, markersize=10, gid="centroid",
            label="centroid (fitted wind)")

    u_plane, v_plane = plane_winds(network, level)
    fit_u = _floats(levels.u_at_centroid)[level]  # at the origin the plane's axes are east, north
    fit_v = _floats(levels.v_at_centroid)[level]
    speeds = np.hypot(np.append(u_plane, fit_u), np.append(v_plane, fit_v))
    largest = np.nanmax(speeds) if np.isfinite(speeds).any() else 1.0
    extent = max(np.ptp(x), np.ptp(y), 1e-3)
    scale = max(largest, 1e-3) / (ARROW_FRACTION * extent)  # (m/s) per km of arrow
    quiver = ax.quiver(x, y, np.ma.masked_invalid(u_plane), np.ma.masked_invalid(v_plane),
                       angles="xy", scale_units="xy", scale=scale, color=WIND_COLOUR,
                       width=0.006, gid="station_winds")
    if np.isfinite(fit_u) and np.isfinite(fit_v):
        ax.quiver([0.0], [0.0], [fit_u], [fit_v], angles="xy", scale_units="xy",
                  scale=scale, color=CENTROID_COLOUR, width=0.006, gid="centroid_wind")
    key = _key_speed(float(knot.from_si(largest)))
    ax.quiverkey(quiver, 0.70, 0.95, float(knot.to_si(key)), f"{key} kt", labelpos="W",
                 coordinates="axes")

    u_given = np.array([_floats(s.u)[level] for s in members])
    v_given = np.array([_floats(s.v)[level] for s in members])
    direction, speed = winds.wind_direction_and_speed(u_given, v_given)
    for i, station in enumerate(members):
        wind = ("no wind" if not np.isfinite(speed[i]) else
                f"{direction[i]:03.0f}\N{DEGREE SIGN} {knot.from_si(speed[i]):.0f} kt")
        ax.annotate(f"{station.name}\n{wind}", (x[i], y[i]),
                    xytext=_label_offset(u_plane[i], v_plane[i]), textcoords="offset points",
                    ha="center", va="center", fontsize="small",
                    gid=f"label_{station.name}")

    tips_x = np.concatenate([x, [0.0], x + np.nan_to_num(u_plane) / scale])
    tips_y = np.concatenate([y, [0.0], y + np.nan_to_num(v_plane) / scale])
    margin = 0.25 * extent
    ax.set_xlim(tips_x.min() - margin, tips_x.max() + margin)
    ax.set_ylim(tips_y.min() - margin, tips_y.max() + 1.6 * margin)  # room for the key
    ax.set_aspect("equal", adjustable="box")
    ax.set_xlabel("x (km; east at the centroid)")
    ax.set_ylabel("y (km; north at the centroid)")
    ax.grid(True, alpha=0.3)
    ax.legend(loc="upper left", fontsize="small")
    pressure_hpa = float(levels.pressure[level]) / 100.0
    per_second = parse_unit_string("1e-5 s^-1")
    divergence = _floats(levels.divergence)[level]
    vorticity = _floats(levels.vorticity)[level]
    vorticity_text = ("-" if not math.isfinite(vorticity)
                      else f"{per_second.from_si(vorticity):+.2f}")
    note = " (interpolated)" if levels.divergence_interpolated[level] else ""
    ax.set_title(f"stations, winds at {pressure_hpa:g} hPa\ndivergence "
                 f"{per_second.from_si(divergence):+.2f}{note}, vorticity {vorticity_text} "
                 "(1e-5 s^-1)", fontsize="medium")
    return level
