"""The profile figure: divergence by layer (steps) and omega at the interfaces (a line)
against pressure on a log axis increasing downward, heights on the right, the level(s) of
non-divergence marked and the surface tendency in the title; a second panel compares the
omega profiles of the scenarios when the sheet has any; a last panel shows the station
network with its winds at one level (default 500 hPa, or the nearest level) when the sheet
has `station` blocks (plot_stations.py).

matplotlib is imported here only, inside the functions, through its object-oriented API
(a Figure on an Agg canvas) so that no global backend or pyplot state is touched.
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np

from layercalc.errors import OutputError
from layercalc.plots.stations import DEFAULT_LEVEL_HPA, check_level, station_panel

SINGLE_SIZE = (8.0, 6.5)    # inches: one panel
COMPARE_SIZE = (12.0, 6.5)  # inches: profile and scenario panels
STATION_PANEL_WIDTH = 6.0   # inches added for the station panel
PANEL_RATIOS = {"profile": 3.0, "scenarios": 2.0, "stations": 2.6}
STANDARD_TICKS = (1000, 925, 850, 700, 600, 500, 400, 300, 250, 200, 150, 100, 70, 50)
DIVERGENCE_COLOUR = "tab:blue"
OMEGA_COLOUR = "tab:red"
LEVEL_COLOUR = "tab:green"
HPA_PER_HOUR = "hPa/h"


def _units():
    from layercalc.language.unit_text import parse_unit_string

    return {text: parse_unit_string(text) for text in
            ("hPa", "degC", "km", "1e-5 s^-1", HPA_PER_HOUR, "hPa/(3 h)")}


def interfaces(result) -> tuple[np.ndarray, np.ndarray | None]:
    """Interface pressures (Pa) and heights (m, or None), surface first."""
    columns = result.si_columns
    p = np.concatenate([columns["p_bottom"][:1], columns["p_top"]])
    z = None
    if "z_bottom" in columns:
        z = np.concatenate([columns["z_bottom"][:1], columns["z_top"]])
    return p, z


def interface_omega(result) -> np.ndarray | None:
    columns = result.si_columns
    if "omega_top" not in columns:
        return None
    return np.concatenate([columns["omega_bottom"][:1], columns["omega_top"]])


def steps(values: np.ndarray, p_bottom: np.ndarray, p_top: np.ndarray):
    """x, y of a step line: each layer's value held from its bottom to its top."""
    return np.repeat(values, 2), np.column_stack([p_bottom, p_top]).ravel()


MOST_HEIGHT_TICKS = 60  # a tick every 1 or 2 km up to here; an automatic choice beyond
HIGHEST_AXIS_KM = 10_000.0  # heights beyond +-10,000 km get no height axis


def _height_axis(ax, p_hpa: np.ndarray, z_km: np.ndarray) -> None:
    """Heights on the right, from the interface heights (linear in ln p between them,
    extended at the ends with the end layers' slopes)."""
    log_p = np.log(p_hpa)[::-1]  # increasing
    z = z_km[::-1]
    slope_low = (z[1] - z[0]) / (log_p[1] - log_p[0])
    slope_high = (z[-1] - z[-2]) / (log_p[-1] - log_p[-2])
    if not (np.all(np.diff(z) < 0) and np.all(np.abs(z) <= HIGHEST_AXIS_KM)
            and slope_low < 0 and slope_high < 0):
        return  # absurd but accepted inputs: heights no axis can show, so none is drawn

    def to_height(p):
        x = np.log(np.clip(np.asarray(p, dtype=float), 1e-6, None))
        out = np.interp(x, log_p, z)
        out = np.where(x < log_p[0], z[0] + slope_low * (x - log_p[0]), out)
        return np.where(x > log_p[-1], z[-1] + slope_high * (x - log_p[-1]), out)

    def to_pressure(height):
        height = np.asarray(height, dtype=float)
        increasing_z = z[::-1]
        out = np.exp(np.interp(height, increasing_z, log_p[::-1]))
        out = np.where(height > z[0], np.exp(log_p[0] + (height - z[0]) / slope_low), out)
        return np.where(height < z[-1],
                        np.exp(log_p[-1] + (height - z[-1]) / slope_high), out)

    from matplotlib.ticker import FixedLocator, FormatStrFormatter, MaxNLocator, NullLocator

    right = ax.secondary_yaxis("right", functions=(to_height, to_pressure))
    top_km = float(np.max(z))
    step = 1.0 if top_km <= 12 else 2.0
    if 0.0 <= float(np.min(z)) and top_km <= MOST_HEIGHT_TICKS * step:
        right.yaxis.set_major_locator(FixedLocator(np.arange(0.0, top_km + step, step)))
    else:  # heights far from the troposphere's (absurd but accepted inputs)
        right.yaxis.set_major_locator(MaxNLocator(nbins=8))
    right.yaxis.set_major_formatter(FormatStrFormatter("%g"))
    right.yaxis.set_minor_locator(NullLocator())
    right.set_ylabel("height (km)")


# Ticks closer than this ratio of pressures would print over each other at the figure's
# height (own choice: 3 % of ln p is about 10 pixels over a 1000-100 hPa axis)
TICK_CLEARANCE = 1.03
# Between two labelled ticks further apart than this ratio, 50 hPa steps are added (own
# choice: just above the 850-700 hPa gap, 1.214, the widest of the standard ticks below
# 500 hPa, so that a column from 1000 hPa keeps the standard ticks alone)
TICK_GAP = 1.22
# ... only in the lower troposphere, where a high surface leaves the axis bare; aloft the
# standard ticks are as a forecaster reads them (own choice)
FILL_BELOW_HPA = 600.0


def pressure_ticks(surface_hpa: float, top_hpa: float) -> tuple[list[float], list[str]]:
    """Pressure ticks [hPa] and their labels for an axis from the surface to the top:
    the standard pressures within it, the surface pressure itself (labelled 'NNN sfc'),
    the top when it is no standard pressure, and 50 hPa steps where the standard ones
    leave a wide gap below 600 hPa (a surface at 862 hPa otherwise has only 700 hPa below
    600 hPa)."""
    ticks = {round(surface_hpa, 1): f"{surface_hpa:.0f} sfc"}
    standard = [t for t in STANDARD_TICKS if top_hpa <= t <= surface_hpa]
    if not standard or min(standard) / top_hpa > TICK_GAP:
        standard.append(round(top_hpa, 1))
    for t in standard:
        if surface_hpa / t > TICK_CLEARANCE:
            ticks[float(t)] = f"{t:g}"
    ordered = sorted(ticks, reverse=True)
    for lower, upper in zip(ordered, ordered[1:]):
        if lower >= FILL_BELOW_HPA and lower / upper > TICK_GAP:
            for step in np.arange(np.floor(lower / 50.0) * 50.0, upper, -50.0):
                if lower / step > TICK_CLEARANCE and step / upper > TICK_CLEARANCE:
                    ticks[float(step)] = f"{step:g}"
    ordered = sorted(ticks, reverse=True)
    return ordered, [ticks[t] for t in ordered]


def _pressure_axis(ax, p_hpa: np.ndarray) -> None:
    from matplotlib.ticker import FixedLocator, NullFormatter, NullLocator, ScalarFormatter

    from matplotlib.ticker import FixedFormatter

    ax.set_yscale("log")
    ax.set_ylim(p_hpa.max(), p_hpa.min())  # pressure increasing downward
    ticks, labels = pressure_ticks(float(p_hpa.max()), float(p_hpa.min()))
    ax.yaxis.set_major_locator(FixedLocator(ticks))
    ax.yaxis.set_major_formatter(FixedFormatter(labels))
    ax.yaxis.set_minor_locator(NullLocator())
    ax.yaxis.set_minor_formatter(NullFormatter())
    ax.set_ylabel("pressure (hPa)")
    ax.grid(True, axis="y", alpha=0.3)


def _title(sheet, result, u) -> str:
    title = sheet.title or Path(sheet.checked.source.name).name
    if result.scenario != "base":
        title += f" [{result.scenario}]"
    cells = result.si_cells
    if "surface_pressure_tendency" in cells:
        tendency = cells["surface_pressure_tendency"]
        word = "falling" if tendency < 0 else "rising" if tendency > 0 else "steady"
        title += (f"\nsurface pressure tendency {u['hPa/(3 h)'].from_si(tendency):+.2f} "
                  f"hPa per 3 h ({word})")
    return title


def _profile_panel(ax, sheet, result, u) -> None:
    columns = result.si_columns
    p, z = interfaces(result)
    p_hpa = u["hPa"].from_si(p)
    pb, pt = u["hPa"].from_si(columns["p_bottom"]), u["hPa"].from_si(columns["p_top"])
    _pressure_axis(ax, p_hpa)
    if z is not None and len(p) > 1:
        _height_axis(ax, p_hpa, u["km"].from_si(z))
    if "div" not in columns:  # nothing kinematic: show the temperature profile instead
        for name, style in (("T", "-"), ("Tv", "--")):
            if name in columns:
                x, y = steps(u["degC"].from_si(columns[name]), pb, pt)
                ax.plot(x, y, style, color=DIVERGENCE_COLOUR, label=f"{name} (layer mean)",
                        gid=f"steps_{name}")
        ax.set_xlabel("temperature (degC)")
        ax.legend(loc="upper right", fontsize="small")
        return
    x, y = steps(u["1e-5 s^-1"].from_si(columns["div"]), pb, pt)
    ax.plot(x, y, color=DIVERGENCE_COLOUR, label="divergence (layer mean)", gid="steps_div")
    if result.sheet.options.get("adjust", "none") != "none" and "div_adjusted" in columns:
        xa, ya = steps(u["1e-5 s^-1"].from_si(columns["div_adjusted"]), pb, pt)
        ax.plot(xa, ya, "--", color=DIVERGENCE_COLOUR, label="divergence, adjusted",
                gid="steps_div_adjusted")
    assessment = _uncertainty(sheet, result)
    if assessment is not None and "div" in assessment.layers:
        middle = np.sqrt(pb * pt)  # error bars at the layer's log-pressure midpoint
        ax.errorbar(u["1e-5 s^-1"].from_si(columns["div"]), middle,
                    xerr=u["1e-5 s^-1"].from_si(assessment.layers["div"]), fmt="none",
                    ecolor=DIVERGENCE_COLOUR, elinewidth=0.8, capsize=2, gid="div_error")
        x = np.concatenate([x, x + u["1e-5 s^-1"].from_si(assessment.layers["div"]).max(),
                            x - u["1e-5 s^-1"].from_si(assessment.layers["div"]).max()])
    ax.axvline(0.0, color="grey", linewidth=0.8)
    ax.set_xlabel("divergence (1e-5 s^-1)", color=DIVERGENCE_COLOUR)
    span = max(np.abs(x).max(), 1e-3) * 1.15
    ax.set_xlim(-span, span)
    for level in result.summary.get("level_of_nondivergence", []):
        level_hpa = u["hPa"].from_si(level)
        ax.axhline(level_hpa, color=LEVEL_COLOUR, linestyle=":", gid="nondivergence")
        ax.annotate(f"non-divergence {level_hpa:.0f} hPa", (0.02, level_hpa),
                    xycoords=("axes fraction", "data"), color=LEVEL_COLOUR, fontsize="small",
                    va="bottom")
    omega = interface_omega(result)
    top = ax.twiny()
    top.plot(u[HPA_PER_HOUR].from_si(omega), p_hpa, "o-", color=OMEGA_COLOUR, markersize=3,
             label="omega at interfaces", gid="omega")
    shown = [u[HPA_PER_HOUR].from_si(omega)]
    if assessment is not None and "omega_top" in assessment.ranges:
        low = np.concatenate([assessment.ranges["omega_bottom"][0][:1],
                              assessment.ranges["omega_top"][0]])
        high = np.concatenate([assessment.ranges["omega_bottom"][1][:1],
                               assessment.ranges["omega_top"][1]])
        low, high = u[HPA_PER_HOUR].from_si(low), u[HPA_PER_HOUR].from_si(high)
        top.fill_betweenx(p_hpa, low, high, color=OMEGA_COLOUR, alpha=0.15, linewidth=0,
                          label="omega, 5-95 % of the error ensemble", gid="omega_range")
        shown += [low, high]
    top.set_xlabel("omega (hPa/h; negative = ascent)", color=OMEGA_COLOUR)
    omega_span = max(np.abs(np.concatenate(shown)).max(), 1e-3) * 1.15
    top.set_xlim(-omega_span, omega_span)
    top.set_ylim(ax.get_ylim())
    lines = ax.get_lines() + top.get_lines() + [c for c in top.collections
                                                 if c.get_gid() == "omega_range"]
    ax.legend([ln for ln in lines if not ln.get_label().startswith("_")],
              [ln.get_label() for ln in lines if not ln.get_label().startswith("_")],
              loc="best", fontsize="small")


def _uncertainty(sheet, result):
    """The variant's error assessment (evaluation/uncertainty.py), or None."""
    from layercalc.evaluation.uncertainty import assess_sheet

    return assess_sheet(sheet, result.scenario)


def _scenario_panel(ax, sheet, names: list[str], u) -> None:
    p_hpa = None
    styles = ("-", "--", "-.", ":")
    for n, name in enumerate(names):
        result = sheet.evaluate(name)
        p, _ = interfaces(result)
        p_hpa = u["hPa"].from_si(p)
        omega = interface_omega(result)
        label = name
        tendency = result.si_cells.get("surface_pressure_tendency")
        if tendency is not None:
            label += f": {u['hPa/(3 h)'].from_si(tendency):+.2f} hPa/3 h"
        if omega is not None:
            ax.plot(u[HPA_PER_HOUR].from_si(omega), p_hpa, marker="o", markersize=3,
                    linestyle=styles[n % len(styles)], label=label, gid=f"omega_{name}")
        else:
            columns = result.si_columns
            x, y = steps(u["degC"].from_si(columns["T"]),
                         u["hPa"].from_si(columns["p_bottom"]),
                         u["hPa"].from_si(columns["p_top"]))
            ax.plot(x, y, linestyle=styles[n % len(styles)], label=name,
                    gid=f"steps_T_{name}")
    _pressure_axis(ax, p_hpa)
    ax.axvline(0.0, color="grey", linewidth=0.8)
    kinematic = interface_omega(sheet.evaluate(names[0])) is not None
    ax.set_xlabel("omega (hPa/h; negative = ascent)" if kinematic else "temperature (degC)")
    ax.set_title("scenarios" + (" (surface tendency)" if kinematic else ""), fontsize="medium")
    ax.legend(loc="best", fontsize="small")


def figure_size(sheet) -> tuple[float, float]:
    """Width and height (inches) of the profile figure for this sheet's panels."""
    width, height = COMPARE_SIZE if sheet.scenarios else SINGLE_SIZE
    if _station_details(sheet):
        width += STATION_PANEL_WIDTH
    return width, height


def _station_details(sheet):
    """The sheet's sounding details when it has a station network, else None."""
    details = sheet.checked.soundings
    return details if details is not None and details.network is not None else None


def profile_figure(sheet, scenario: str | None = None,
                   station_level: float = DEFAULT_LEVEL_HPA):
    """The profile of one variant (the base unless `scenario` is named), with a panel
    comparing all variants when the sheet has scenarios and a panel of the station network
    with its winds at the level nearest `station_level` [hPa] when it has stations.
    Returns a matplotlib Figure (on an Agg canvas), for saving or for reading in tests."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    check_level(station_level)  # also for a sheet without stations: the same rule
    u = _units()
    result = sheet.evaluate(scenario)
    names = ["base", *sheet.scenarios]
    stations = _station_details(sheet)
    panels = ["profile"] + (["scenarios"] if len(names) > 1 else []) + \
        (["stations"] if stations else [])
    figure = Figure(figsize=figure_size(sheet), layout="constrained")
    FigureCanvasAgg(figure)
    axes = figure.subplots(1, len(panels), squeeze=False,
                           gridspec_kw={"width_ratios": [PANEL_RATIOS[p] for p in panels]})[0]
    by_panel = dict(zip(panels, axes))
    if "scenarios" in by_panel:
        _scenario_panel(by_panel["scenarios"], sheet, names, u)
    if stations:
        station_panel(by_panel["stations"], stations, station_level)
    _profile_panel(by_panel["profile"], sheet, result, u)
    figure.suptitle(_title(sheet, result, u), fontsize="medium")
    return figure


def save_profile(sheet, path: str | Path, scenario: str | None = None,
                 dpi: int = 100, station_level: float = DEFAULT_LEVEL_HPA) -> None:
    """Draw the profile to a .png, .svg or .pdf file (written whole, then renamed into place);
    `station_level` [hPa]: the level of the station panel's winds (the nearest level)."""
    from layercalc.files import write_atomic

    path = Path(path)
    suffix = path.suffix.lower().lstrip(".")
    if suffix not in ("png", "svg", "pdf"):
        raise OutputError(f"cannot draw to '{path}': the picture must end in .png, .svg or "
                          ".pdf")
    figure = profile_figure(sheet, scenario, station_level)
    buffer = io.BytesIO()
    figure.savefig(buffer, format=suffix, dpi=dpi)
    write_atomic(path, buffer.getvalue())
