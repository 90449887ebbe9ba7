"""How far to trust the answer: the sheet's error model, exact propagation and an ensemble.

The error model is a set of input cells with reserved names (``MODEL_CELLS``), so their
units are checked like any cell and scenarios and sweeps may change them. Station
networks whose winds are reported as direction and speed always carry at least the
reporting resolution (``direction_step`` 5 deg, ``speed_step`` 1 kt, uniform errors,
independent): a floor, never the whole error.

Two methods, side by side:
- exact linear propagation (physics/uncertainty.py) of the wind or divergence covariance
  through the fit, the gap fill, the layer means, the adjustment and the integration:
  sigma of div, div_adjusted, omega, w (at fixed Tv) and of the linear cells (tendency,
  omega_surface, net and column-mean divergence, top mismatch); for more than three
  stations also the misfit estimate of the wind error (RSS / (2n - 6)) and the tendency
  sigma it implies;
- a Monte Carlo ensemble (physics/ensembles.py) for everything else and for the
  percentiles: members drawn with a seeded generator, the perturbed divergence handed to
  the evaluator as its leading scenario axis (one pass, no loop over members).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from layercalc.constants import G0, RD
from layercalc.errors import DefinitionError
from layercalc.language import units as U
from layercalc.language.unit_text import parse_unit_string
from layercalc.physics import ensembles as ens, error_models as err, uncertainty as unc
from layercalc.evaluation.network_errors import network_chain, network_members, network_of, \
    residual, sensitivity
from layercalc.physics.kinematic import nondivergence_levels

# Reserved input cells of the error model: name -> (expected unit, SI default or None).
MODEL_CELLS = {
    "wind_error": ("m/s", None),              # declared per-component wind error
    "wind_error_growth": ("m s^-1 hPa^-1", 0.0),  # its growth with depth above the surface
    "level_correlation": ("1", 0.0),          # correlation of adjacent levels' errors
    "direction_step": ("deg", np.deg2rad(err.DIRECTION_STEP_DEG)),  # reporting resolution
    "speed_step": ("kt", err.SPEED_STEP_KT * err.KNOT),
    "div_error": ("1e-5 s^-1", None),         # hand-entered layer divergence error
    "T_error": ("K", None),                   # each reported temperature (a difference)
    "Td_error": ("K", None),                  # each reported dewpoint
    "z_error": ("m", None),                   # each reported height
    "members": ("1", 10000.0),
    "seed": ("1", 1.0),
}
# Ensembles below this size give percentiles too rough to print (own choice, no source:
# the 5 % point of 200 members rests on 10 of them).
MINIMUM_MEMBERS = 200
# A temperature error above this is refused as a likely degC slip (a degC value is an
# absolute temperature: 0.5 degC is 273.65 K). Own choice, no source.
LARGEST_TEMPERATURE_ERROR = 50.0
# Thermodynamic errors: cell -> the input column it perturbs.
THERMAL_COLUMNS = {"T_error": "T", "Td_error": "Td"}
MAXIMUM_MEMBERS = 1_000_000
# Columns whose 5-95 % range the plot draws.
RANGED = ("omega_bottom", "omega_top", "div_adjusted")
# Cells and columns that are linear in the divergence (exact sigma by propagation).
LINEAR_CELLS = ("surface_pressure_tendency", "omega_surface", "net_mass_divergence",
                "column_mean_divergence", "top_mismatch")


@dataclass(frozen=True)
class ErrorModel:
    """One variant's error model, SI. ``declared``: names the file gave."""

    wind_error: float | None
    wind_error_growth: float
    level_correlation: float
    direction_step: float
    speed_step: float
    div_error: float | np.ndarray | None   # one sigma for every layer, or one per layer
    members: int
    seed: int
    declared: tuple = ()
    T_error: float | None = None
    Td_error: float | None = None
    z_error: float | None = None

    def as_dict(self) -> dict:
        return {"wind_error": self.wind_error, "wind_error_growth": self.wind_error_growth,
                "level_correlation": self.level_correlation,
                "direction_step": self.direction_step, "speed_step": self.speed_step,
                "div_error": (self.div_error.tolist() if isinstance(self.div_error, np.ndarray)
                              else self.div_error), "T_error": self.T_error,
                "Td_error": self.Td_error, "z_error": self.z_error,
                "declared": list(self.declared)}


@dataclass
class Assessment:
    """Uncertainty of one variant. Sigmas SI; ``cells`` name -> EnsembleSummary-like dict."""

    model: ErrorModel
    cells: dict
    probability_falling: float | None
    layers: dict
    levels: dict | None
    nondivergence: list = field(default_factory=list)   # (base, p05, p50, p95, found)
    residual_sigma: np.ndarray | None = None             # per level, n > 3
    residual_tendency_sigma: float | None = None
    sensitivity: list = field(default_factory=list)      # (what, change, effect) SI
    linear: dict = field(default_factory=dict)           # name -> exact sigma
    members_of: dict = field(default_factory=dict, repr=False)  # RANGED column -> members
    method: str = ""
    hydrostatic: list = field(default_factory=list)      # (sounding, sigma per layer, table)
    _ranges: dict | None = field(default=None, repr=False)

    @property
    def ranges(self) -> dict:
        """RANGED column -> (p05, p95) per layer, from the ensemble; computed on first use
        (only the plot draws them, so the report and JSON do not pay for them)."""
        if self._ranges is None:
            self._ranges = {name: tuple(ens.percentiles(values, [5.0, 95.0], axis=0))
                            for name, values in self.members_of.items()}
        return self._ranges


def error_model(checked, cells: dict | None = None, columns: dict | None = None) -> ErrorModel:
    """The error model of the base sheet or a variant (``cells``: SI overrides (S,);
    ``columns``: the variant's input columns, for a div_error column a scenario changed)."""
    values, declared = {}, []
    for name, (_, default) in MODEL_CELLS.items():
        value = default
        if name in checked.input_cells and checked.input_cells[name].given:
            value, declared = checked.input_cells[name].value, declared + [name]
        if cells and name in cells:
            value = float(np.ravel(cells[name])[0])
            declared = declared if name in declared else declared + [name]
        values[name] = value
    column = checked.input_columns.get("div_error")
    if column is not None:  # a per-layer sigma given as a column of the layers table
        if "div_error" in declared:
            raise DefinitionError("div_error is given both as a column and as a cell",
                                  column.span, hint="keep one: a column for a sigma per "
                                  "layer, a cell for the same sigma in every layer")
        if not U.same_dimension(column.unit.dimension, parse_unit_string("s^-1").dimension):
            raise DefinitionError(f"the column div_error must be a divergence error, not "
                                  f"[{column.unit.text}]", column.span,
                                  hint="write it like div, e.g. div_error [1e-5 s^-1]")
        given = (columns or {}).get("div_error", column.values)
        values["div_error"] = np.array(np.atleast_2d(given)[0], dtype=float)
        declared.append("div_error")
    _check_ranges(checked, values)
    return ErrorModel(values["wind_error"], values["wind_error_growth"],
                      values["level_correlation"], values["direction_step"],
                      values["speed_step"], values["div_error"], int(values["members"]),
                      int(values["seed"]), tuple(declared), values["T_error"],
                      values["Td_error"], values["z_error"])


def _check_ranges(checked, values) -> None:
    def fail(name, text, hint):
        cell = checked.input_cells.get(name)
        raise DefinitionError(f"{name} {text}", cell.span if cell else None, hint=hint)

    for name in ("wind_error", "wind_error_growth", "direction_step", "speed_step",
                 "div_error", "T_error", "Td_error", "z_error"):
        if values[name] is not None and np.any(np.asarray(values[name]) < 0):
            fail(name, "must not be negative", "an error is a standard deviation or a "
                 "step, 0 or more")
    for name, column in THERMAL_COLUMNS.items():
        cell = checked.input_cells.get(name)
        if cell is not None and cell.given and getattr(cell.unit, "offset", 0):
            fail(name, f"is a temperature difference, given in [{cell.unit.text}], an "
                 "absolute scale", f"give it in K, e.g. 'cell {name} = 0.5 K'")
        if values[name] is not None and values[name] > LARGEST_TEMPERATURE_ERROR:
            fail(name, f"is {values[name]:g} K, more than {LARGEST_TEMPERATURE_ERROR:g} K",
                 "an error is a difference: give it in K, e.g. 0.5 K (a degC value is an "
                 "absolute temperature)")
        if values[name] and column not in checked.input_columns:
            fail(name, f"is given but the sheet has no {column} column",
                 f"remove {name}, or give {column} (errors of RH and r are not modelled)")
    if not -1.0 < values["level_correlation"] < 1.0:
        fail("level_correlation", "must lie strictly between -1 and 1",
             "0 for independent levels, e.g. 0.3 for weakly correlated ones")
    members = values["members"]
    if members != int(members) or not MINIMUM_MEMBERS <= members <= MAXIMUM_MEMBERS:
        fail("members", f"must be a whole number from {MINIMUM_MEMBERS} to {MAXIMUM_MEMBERS}",
             "10000 gives percentiles to about 1 %")
    if values["seed"] != int(values["seed"]) or values["seed"] < 0:
        fail("seed", "must be a whole number, 0 or more", "any fixed number, e.g. 1")


def assess(checked, compiled, columns: dict, cells: dict, base_columns: dict,
           winds: tuple | None = None) -> Assessment | None:
    """Uncertainty of one variant.

    checked: the base checked sheet; compiled, columns, cells: the variant as the evaluator
    takes it (``scenario_inputs``); base_columns: its evaluated columns (SI, 1-D); winds:
    the stations' winds of a scenario that changes them (``scenario_winds``).
    None when the sheet has no divergence or no error model applies.
    """
    from layercalc.evaluation.engine import evaluate

    if "p_bottom" not in checked.input_columns:
        return None
    model = error_model(checked, cells, columns)
    has_div = "div" in checked.input_columns
    network = network_of(checked, winds) if has_div else None
    thermal = _thermal_matrices(checked, model)
    hydrostatic = _hydrostatic(checked, model)
    if not (has_div and (network is not None or model.div_error is not None)) \
            and not thermal and not hydrostatic:
        return None
    dp = base_columns["p_bottom"] - base_columns["p_top"]
    layer_count = dp.size
    integrate = compiled.options.get("integrate", "from_top")
    adjust = compiled.options.get("adjust", "none") if integrate == "from_surface" else "none"
    rng = np.random.default_rng(model.seed)
    members = model.members
    chain, layer_cov, inputs, linear = None, None, dict(columns), {}
    if network is not None:
        chain = network_chain(network, model)
        layer_cov = chain["to_layers"] @ chain["covariance"] @ chain["to_layers"].T
        perturbation = network_members(network, model, chain, rng, members)
    elif has_div and model.div_error is not None:
        layer_cov = err.layer_divergence_covariance(_per_layer(model.div_error, layer_count),
                                                    model.level_correlation)
        perturbation = ens.draw_correlated_gaussian(
            rng, members, _per_layer(model.div_error, layer_count), model.level_correlation)
    if layer_cov is not None:
        omega = unc.omega_matrix(dp, integrate, adjust)
        adjusted = unc.adjustment_matrix(dp, adjust)
        linear = _linear_sigmas(base_columns, dp, omega, adjusted, layer_cov, integrate)
        base_div = np.atleast_2d(columns.get("div", checked.input_columns["div"].values))
        inputs["div"] = base_div + perturbation
    # thermodynamic errors after the wind draws, so that they leave those draws unchanged
    for name, (sigma, matrix) in thermal.items():
        draws = rng.standard_normal((members, matrix.shape[1]))
        base = np.atleast_2d(columns.get(name, checked.input_columns[name].values))
        inputs[name] = base + sigma * (draws @ matrix.T)
    if thermal:  # w reads Tv, and the terrain term lowest_layer(Tv): no longer linear
        for name in ("w_bottom", "w_top", "surface_pressure_tendency"):
            linear.pop(name, None)
    ensemble = evaluate(compiled, inputs, cells)
    if thermal and "terrain_term" not in ensemble.cells and "omega_surface" in linear:
        linear["surface_pressure_tendency"] = linear["omega_surface"]
    summaries, layers = _spread(ensemble, members, linear)
    tendency = ensemble.cells.get("surface_pressure_tendency")
    falling = None if tendency is None or tendency.shape[0] != members else \
        float(ens.probability_below(tendency[:, 0]))
    assessment = Assessment(model, summaries, falling, layers, None, linear=linear,
                            members_of={n: ensemble.columns[n] for n in RANGED
                                        if ensemble.columns.get(n, np.empty((1, 0))).shape[0]
                                        == members},
                            method=f"{members} members, seed {model.seed}")
    if ensemble.columns.get("div_adjusted", np.empty((1, 0))).shape[0] == members:
        assessment.nondivergence = _nondivergence(base_columns, ensemble.columns["div_adjusted"])
    assessment.hydrostatic = hydrostatic
    if chain is not None:
        assessment.levels = {"divergence": chain["level_sigma"][0],
                             "vorticity": chain["level_sigma"][1]}
        row = omega[0] @ chain["to_layers"]
        assessment.sensitivity = sensitivity(network, model, row)
        if network.latitudes.size > 3:
            assessment.residual_sigma, assessment.residual_tendency_sigma = \
                residual(network, chain, row)
    elif layer_cov is not None:
        assessment.sensitivity = _divergence_sensitivity(base_columns, omega[0], model)
    return assessment


def _divergence_sensitivity(columns, row, model) -> list:
    """Which layer's divergence error moves the tendency most: d(tendency)/d(div_k) (the
    surface row of the omega matrix) times that layer's sigma, largest first, with each
    layer's share of the tendency variance when the layers are independent. Layers that
    do not reach the tendency (integration from the surface) are left out."""
    sigma = _per_layer(model.div_error, row.shape[0])
    ranked = err.rank_sensitivity(row, sigma)
    independent = model.level_correlation == 0.0
    return [(f"div of {columns['p_bottom'][k] / 100:g}-{columns['p_top'][k] / 100:g} hPa",
             "div", float(sigma[k]), float(ranked.per_sigma[k]),
             float(ranked.share[k]) if independent else None)
            for k in ranked.order[:8] if ranked.per_sigma[k] != 0.0]


def _spread(ensemble, members: int, linear: dict) -> tuple[dict, dict]:
    """Cell summaries (sigma, 5, 50, 95 %) and layer sigmas of an ensemble.

    The percentiles of every varying cell come from one stacked array (rows contiguous,
    one partition each); standard deviations (ddof 1) are computed only where no exact
    sigma is known, so the linear results cost no pass over the members.
    """
    cells = [n for n, v in ensemble.cells.items() if v.shape[0] == members]
    summaries = {}
    if cells:
        stack = np.stack([ensemble.cells[n][:, 0] for n in cells])
        p05, p50, p95 = ens.percentiles(stack, [5.0, 50.0, 95.0], axis=1)
        for i, name in enumerate(cells):
            sigma = linear[name] if name in linear else np.std(stack[i], ddof=1)
            summaries[name] = {"sigma": float(sigma), "p05": float(p05[i]),
                               "p50": float(p50[i]), "p95": float(p95[i])}
    layers = {name: np.asarray(linear[name] if name in linear else
                               np.std(values, axis=0, ddof=1), dtype=float)
              for name, values in ensemble.columns.items() if values.shape[0] == members}
    return summaries, layers


def _thermal_matrices(checked, model: ErrorModel) -> dict:
    """Input column -> (sigma, B): its layer errors are sigma B z, z standard normal per
    level of the soundings (``error_models.level_mean_error_matrix``) or per layer of a
    layers table (B = I); only for errors above 0."""
    details = checked.soundings
    out = {}
    for cell, column in THERMAL_COLUMNS.items():
        sigma = getattr(model, cell)
        if not sigma or column not in checked.input_columns:
            continue
        if details is None:
            out[column] = (sigma, np.eye(checked.layer_count))
        elif column in details.level_counts:
            out[column] = (sigma, err.level_mean_error_matrix(
                details.column_levels["pressure"], details.level_counts[column]))
    return out


def _hydrostatic(checked, model: ErrorModel) -> list:
    """Per hydrostatic table: one sigma of its difference (observed minus hypsometric
    thickness) from the declared T, Td and z errors; [] when none is declared."""
    errors = [model.T_error or 0.0, model.Td_error or 0.0, model.z_error or 0.0]
    details = checked.soundings
    if details is None or not any(errors):
        return []
    return [(table.sounding, err.hydrostatic_difference_sigma(
        table.p_bottom, table.p_top, table.tv_per_temperature, table.tv_per_dewpoint,
        *errors), table) for table in details.hydrostatic]


def _linear_sigmas(columns, dp, omega, adjusted, layer_cov, integrate) -> dict:
    def sigma(matrix):
        return np.sqrt(np.maximum(np.diag(unc.propagate_covariance(matrix, layer_cov)), 0.0))

    interface = sigma(omega)
    out = {"div": sigma(np.eye(dp.size)), "div_adjusted": sigma(adjusted),
           "omega_bottom": interface[:-1], "omega_top": interface[1:]}
    if "Tv" in columns:  # w = -omega Rd Tv / (p g0): linear in omega at fixed Tv
        out["w_bottom"] = out["omega_bottom"] * RD * columns["Tv"] / (columns["p_bottom"] * G0)
        out["w_top"] = out["omega_top"] * RD * columns["Tv"] / (columns["p_top"] * G0)
    out["omega_surface"] = out["surface_pressure_tendency"] = float(interface[0])
    out["net_mass_divergence"] = float(sigma(dp[None, :])[0])
    out["column_mean_divergence"] = out["net_mass_divergence"] / float(np.sum(dp))
    # from the top the mismatch is 0 by construction; from the surface it is
    # omega_s + sum(div dp) - omega_top, of the divergence as given
    out["top_mismatch"] = 0.0 if integrate == "from_top" else out["net_mass_divergence"]
    return out


def _nondivergence(columns, members_div) -> list:
    """For each level of non-divergence of the variant: the members' nearest crossing."""
    base = nondivergence_levels(columns["p_mid"], columns["div_adjusted"]) \
        if np.any(columns["div_adjusted"]) else []
    log_p = np.log(columns["p_mid"])
    lower, upper = members_div[:, :-1], members_div[:, 1:]
    crossing = lower * upper < 0
    with np.errstate(all="ignore"):
        fraction = lower / (lower - upper)
    crossing_log_p = np.where(crossing, log_p[:-1] + (log_p[1:] - log_p[:-1]) * fraction,
                              np.nan)
    out = []
    for level in base:
        distance = np.abs(crossing_log_p - np.log(level))
        has = crossing.any(axis=1)
        nearest = np.take_along_axis(crossing_log_p, np.nanargmin(
            np.where(np.isfinite(distance), distance, np.inf), axis=1)[:, None], axis=1)[:, 0]
        found = np.exp(nearest[has])
        p05, p50, p95 = ens.percentiles(found, [5, 50, 95]) if found.size else (np.nan,) * 3
        out.append((level, float(p05), float(p50), float(p95), float(has.mean())))
    return out


def assess_sheet(sheet, scenario: str | None = None) -> Assessment | None:
    """``assess`` for the base sheet or a named scenario of an API ``Sheet``."""
    checked = sheet.checked
    key = scenario or "base"
    if key not in checked.uncertainty:
        checked.uncertainty[key] = _assess_variant(sheet, None if key == "base" else key)
    return checked.uncertainty[key]


def _assess_variant(sheet, scenario):
    checked = sheet.checked
    result = sheet.evaluate(scenario)
    winds = None
    if scenario in (None, "base"):
        compiled, columns, cells = checked, {}, {}
    else:
        from layercalc.evaluation.scenarios import scenario_inputs, scenario_winds

        compiled, columns, cells = scenario_inputs(checked, scenario)
        winds = scenario_winds(checked, scenario)
    return assess(checked, compiled, columns, cells, result.si_columns, winds)


def check_error_model(checked, scenario: str | None = None) -> ErrorModel:
    """The error model of a variant, its values checked (for ``layercalc check``)."""
    cells, columns = {}, {}
    if scenario not in (None, "base"):
        from layercalc.evaluation.scenarios import scenario_inputs

        _, columns, cells = scenario_inputs(checked, scenario)
    return error_model(checked, cells, columns)


def _per_layer(sigma, layer_count: int) -> np.ndarray:
    """A divergence sigma given once for every layer, or per layer (a column), per layer."""
    return np.broadcast_to(np.asarray(sigma, dtype=float), (layer_count,)).copy()
