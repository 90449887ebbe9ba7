"""Station networks in the error assessment: the winds as the fit saw them, the chain from
winds to layer divergence as one matrix with the input covariance (the rounding floor
plus the declared wind error), the ensemble's layer-divergence perturbations, the winds
that move the tendency most, and the misfit estimate of the wind error.

Used by ``uncertainty`` (the assessment); matrices from physics/uncertainty.py,
covariances from physics/error_models.py, draws from physics/ensembles.py.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from layercalc.physics import ensembles as ens, error_models as err, uncertainty as unc
from layercalc.physics.stations import rotate_wind_to_plane, spherical_centroid, \
    tangent_plane_coordinates
from layercalc.physics.winds import wind_direction_and_speed


@dataclass
class Network:
    """Station winds as the fit saw them (SI), levels surface first."""

    names: list
    latitudes: np.ndarray
    longitudes: np.ndarray
    pressure: np.ndarray
    u: np.ndarray            # (levels, n), NaN missing
    v: np.ndarray
    reported: bool           # True: direction and speed (rounding applies)


def network_of(checked, winds: tuple | None = None) -> Network | None:
    """The sheet's station network as the fit saw it; `winds` (east, north), each (levels,
    stations), replaces the reported winds (a scenario that changes them)."""
    details = checked.soundings
    given = getattr(details, "network", None) if details is not None else None
    if given is None:
        return None
    stations = given.stations
    if winds is None:
        winds = (np.stack([np.asarray(s.u, dtype=float) for s in stations], axis=-1),
                 np.stack([np.asarray(s.v, dtype=float) for s in stations], axis=-1))
    return Network([s.name for s in stations],
                   np.array([s.latitude for s in stations]),
                   np.array([s.longitude for s in stations]),
                   np.asarray(given.levels.pressure, dtype=float),
                   np.asarray(winds[0], dtype=float), np.asarray(winds[1], dtype=float),
                   all(s.reported == "direction and speed" for s in stations))


def network_chain(network: Network, model) -> dict:
    """Matrices from flat winds (levels, 2, n) to level and layer divergence, and the
    input covariance (rounding floor plus the declared error)."""
    levels, n = network.u.shape
    valid = np.isfinite(network.u) & np.isfinite(network.v)
    rows = unc.divergence_vorticity_matrix(
        unc.station_fit_matrix(network.latitudes, network.longitudes, valid))
    fitted = np.isfinite(rows).all(axis=(-1, -2))
    rows = np.where(np.isfinite(rows), rows, 0.0)
    covariance = np.zeros((levels * 2 * n,) * 2)
    if network.reported:
        direction, speed = wind_direction_and_speed(network.u, network.v)
        rounding = np.nan_to_num(err.rounding_component_covariance(  # missing winds: 0
            direction, speed, np.rad2deg(model.direction_step), model.speed_step))
        grid = covariance.reshape(levels, 2, n, levels, 2, n)
        level, station = np.meshgrid(np.arange(levels), np.arange(n), indexing="ij")
        for c in range(2):
            for d in range(2):
                grid[level, c, station, level, d, station] = rounding[..., c, d]
    if model.wind_error is not None:
        sigma = err.wind_error_sigma(network.pressure, model.wind_error,
                                     model.wind_error_growth)
        grid_sigma = np.broadcast_to(sigma[:, None], (levels, n))
        covariance = covariance + err.wind_error_covariance(grid_sigma, grid_sigma,
                                                            model.level_correlation)
    valid_flat = np.repeat(valid[:, None, :], 2, axis=1).reshape(-1)
    covariance = covariance * np.outer(valid_flat, valid_flat)
    divergence_rows = unc.block_diagonal(rows[:, 0:1])
    vorticity_rows = unc.block_diagonal(rows[:, 1:2])
    level_sigma = [np.sqrt(np.diag(unc.propagate_covariance(m, covariance)))
                   for m in (divergence_rows, vorticity_rows)]
    level_sigma[0] = np.where(fitted, level_sigma[0], np.nan)
    level_sigma[1] = np.where(fitted, level_sigma[1], np.nan)
    to_layers = (unc.layer_mean_matrix(levels) @ unc.gap_fill_matrix(network.pressure, fitted)
                 @ divergence_rows)
    return {"rows": rows, "valid": valid, "valid_flat": valid_flat.astype(float),
            "covariance": covariance, "to_layers": to_layers,
            "level_sigma": level_sigma, "divergence_rows": divergence_rows}


def network_members(network, model, chain, rng, members) -> np.ndarray:
    """Layer divergence perturbations (members, L): rounding of the reports (exact, not
    linearised) plus the declared Gaussian error, through the linear fit.

    The perturbed winds go through the matrix whole (M (w + dw) - M w), so no array of
    differences is built; missing winds have zero columns in M (and are drawn as 0)."""
    levels, n = network.u.shape
    u = np.where(chain["valid"], network.u, 0.0)
    v = np.where(chain["valid"], network.v, 0.0)
    masked = chain["to_layers"] * chain["valid_flat"][None, :]
    to_layers = masked.reshape(-1, levels, 2, n)
    out = np.zeros((members, to_layers.shape[0]))
    if network.reported:
        direction, speed = wind_direction_and_speed(u, v)
        du, dv = ens.perturb_reported_winds(rng, members, direction, speed,
                                            np.rad2deg(model.direction_step), model.speed_step)
        for c, (perturbed, given) in enumerate(((du, u), (dv, v))):
            matrix = to_layers[:, :, c, :].reshape(to_layers.shape[0], -1)
            out += perturbed.reshape(members, -1) @ matrix.T
            out -= given.reshape(-1) @ matrix.T
    if model.wind_error is not None:
        sigma = err.wind_error_sigma(network.pressure, model.wind_error,
                                     model.wind_error_growth)
        delta = ens.draw_correlated_gaussian(
            rng, members, np.broadcast_to(sigma[:, None, None], (levels, 2, n)),
            model.level_correlation)
        out += delta.reshape(members, -1) @ masked.T
    return out


def sensitivity(network, model, row) -> list:
    """The tendency's change for one reporting step of each wind, largest first."""
    levels, n = network.u.shape
    per_wind = row.reshape(levels, 2, n)
    out = []
    if network.reported:
        direction, speed = wind_direction_and_speed(network.u, network.v)
        jacobian = err.wind_component_jacobian(direction, speed)
        effect = np.einsum("lcs,lscj->lsj", per_wind, np.nan_to_num(jacobian))
        for (label, j, step) in (("direction", 0, model.direction_step),
                                 ("speed", 1, model.speed_step)):
            for level in range(levels):
                for s in range(n):
                    out.append((f"{label} at {network.pressure[level] / 100:g} hPa, "
                                f"{network.names[s]}", label, step,
                                float(effect[level, s, j] * step)))
    if model.wind_error is not None:
        sigma = err.wind_error_sigma(network.pressure, model.wind_error,
                                     model.wind_error_growth)
        for level in range(levels):
            for s in range(n):
                for c, name in enumerate(("u", "v")):
                    out.append((f"{name} at {network.pressure[level] / 100:g} hPa, "
                                f"{network.names[s]}", name, float(sigma[level]),
                                float(per_wind[level, c, s] * sigma[level])))
    ranked = err.rank_sensitivity(np.array([o[3] for o in out]), 1.0)
    return [out[i] for i in ranked.order[:8]]


def residual(network, chain, row):
    """Misfit estimate of the wind error per level and the tendency sigma it implies."""
    centre = spherical_centroid(network.latitudes, network.longitudes)
    x, y, north = tangent_plane_coordinates(network.latitudes, network.longitudes, *centre)
    u, v = rotate_wind_to_plane(network.u, network.v, north)
    sigma = err.residual_wind_sigma(x, y, u, v)
    levels, n = network.u.shape
    grid = np.broadcast_to(np.nan_to_num(sigma)[:, None], (levels, n))
    covariance = err.wind_error_covariance(grid, grid, 0.0)
    return sigma, float(np.sqrt(row @ covariance @ row))
