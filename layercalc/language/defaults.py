"""The diagnostics every sheet gets, written in the column language itself.

Because the defaults are ordinary formulas, they are unit-checked like the user's, shown in
readable form in reports and workbooks, and translated into live spreadsheet formulas by the
same translator. A user formula of the same name replaces a default (the report says so).
The physics behind each line is in layercalc/physics (formulas and references in docstrings).
"""

from __future__ import annotations

from layercalc.names import CANONICAL

OPTIONS = {
    "integrate": ("from_top", "from_surface"),
    "adjust": ("none", "uniform", "obrien"),
}
OPTION_DEFAULTS = {"integrate": "from_top", "adjust": "none"}

# Input cells the defaults read, with the value used when the file does not give them.
CELL_DEFAULTS = {n: c.default for n, c in CANONICAL.items() if c.default}
# Units assumed for canonical input names given without a unit (a notice says so).
INPUT_UNITS = {n: c.assumed_unit for n, c in CANONICAL.items() if c.assumed_unit}
# What the defaults expect each canonical input to be (checked where the user wrote it).
INPUT_DIMENSIONS = {n: c.expected_unit for n, c in CANONICAL.items()
                    if c.where == "layers" and c.expected_unit}
CELL_DIMENSIONS = {n: c.expected_unit for n, c in CANONICAL.items() if c.where == "cell"}


def prelude(names: set[str], options: dict[str, str]) -> tuple[str, list[str]]:
    """The default formulas for a sheet whose input and user-formula names are `names`.

    Returns the formulas as text in the column language and a list of plain notes for the
    report (e.g. that the column is treated as dry).
    """
    lines: list[str] = []
    notes: list[str] = []
    add = lines.append
    if not {"p_bottom", "p_top"} <= names:
        return "", notes
    add("column dp [hPa] = p_bottom - p_top")
    add("column p_mid [hPa] = sqrt(p_bottom * p_top)")
    if "T" in names:
        _humidity(names, add, notes)
        add("column thickness [m] = hypsometric_thickness(Tv, p_bottom, p_top)")
        add("column z_top [m] = surface_height + upward_sum(thickness)")
        add("column z_bottom [m] = z_top - thickness")
        add("cell column_thickness [m] = sum(thickness)")
    if "div" in names:
        _kinematic(names, options, add, notes)
    return "\n".join(lines) + "\n", notes


def _humidity(names: set[str], add, notes: list[str]) -> None:
    if "Td" in names:
        add("column e [hPa] = vapour_pressure(Td)")
    elif "RH" in names:
        add("column e [hPa] = RH * saturation_vapour_pressure(T)")
    elif "r" in names:
        add("column e [hPa] = vapour_pressure_from_mixing_ratio(r, p_mid)")
    else:
        add("column Tv [degC] = T")
        notes.append("no humidity given (Td, RH or r): the column is treated as dry, Tv = T")
        return
    if "r" not in names:
        add("column r [g/kg] = mixing_ratio(e, p_mid)")
    add("column Tv [degC] = virtual_temperature(T, r)")


def _kinematic(names: set[str], options: dict[str, str], add, notes: list[str]) -> None:
    integrate = options.get("integrate", OPTION_DEFAULTS["integrate"])
    adjust = options.get("adjust", OPTION_DEFAULTS["adjust"])
    add("cell top_boundary [hPa/h] = omega_top")
    if integrate == "from_top":
        add("column div_adjusted [1e-5 s^-1] = div")
        add("column omega_bottom [hPa/h] = top_boundary - downward_sum(div_adjusted * dp)")
        add("column omega_top [hPa/h] = omega_bottom + div_adjusted * dp")
        add("cell top_mismatch [hPa/h] = 0 [Pa/s]")
        add("cell omega_surface [hPa/h] = lowest_layer(omega_bottom)")
    else:
        add("cell surface_boundary [hPa/h] = omega_surface")
        add("cell top_mismatch [hPa/h] = surface_boundary + net_mass_divergence - top_boundary")
        if adjust == "none":
            add("column div_adjusted [1e-5 s^-1] = div")
        elif adjust == "uniform":
            add("column div_adjusted [1e-5 s^-1] = div - top_mismatch / sum(dp)")
        else:
            add("column depth_from_bottom [hPa] = upward_sum(dp)")
            add("column div_adjusted [1e-5 s^-1] = div - top_mismatch * depth_from_bottom"
                " / sum(depth_from_bottom * dp)")
        add("column omega_top [hPa/h] = surface_boundary + upward_sum(div_adjusted * dp)")
        add("column omega_bottom [hPa/h] = omega_top - div_adjusted * dp")
    if "Tv" in names or "T" in names:
        add("column w_bottom [cm/s] = vertical_velocity(omega_bottom, p_bottom, Tv)")
        add("column w_top [cm/s] = vertical_velocity(omega_top, p_top, Tv)")
    _tendency(names, add)
    # net and gross mass divergence of the column (as given, before any adjustment)
    add("cell net_mass_divergence [hPa/h] = sum(div * dp)")
    add("cell gross_mass_divergence [hPa/h] = sum(abs(div) * dp)")
    add("cell column_mean_divergence [1e-5 s^-1] = net_mass_divergence / sum(dp)")
    # 0 for a column without any divergence (nothing to compensate), instead of 0/0
    add("cell dines_ratio = where(gross_mass_divergence > 0 [Pa/s],"
        " abs(net_mass_divergence) / gross_mass_divergence, 0)")
    add("cell max_ascent [hPa/h] = min(lowest_layer(omega_bottom), min(omega_top))")
    add("cell max_ascent_pressure [hPa] = where(lowest_layer(omega_bottom) < min(omega_top),"
        " lowest_layer(p_bottom), at_min(omega_top, p_top))")


def _tendency(names: set[str], add) -> None:
    terms = ["omega_surface"]
    if {"upslope_wind", "terrain_slope"} <= names and "T" in names:
        add("cell terrain_w [cm/s] = upslope_wind * terrain_slope")
        pressure = "surface_pressure" if "surface_pressure" in names else \
            "lowest_layer(p_bottom)"
        add(f"cell surface_density [kg m^-3] = {pressure} / (Rd * lowest_layer(Tv))")
        add("cell terrain_term [hPa/h] = surface_density * g0 * terrain_w")
        terms.append("+ terrain_term")
    if "pressure_advection" in names:
        terms.append("- pressure_advection")
    add("cell surface_pressure_tendency [hPa/(3 h)] = " + " ".join(terms))
