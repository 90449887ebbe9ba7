"""Monte Carlo helpers: seeded perturbations with a leading member axis, and their spread.

Every draw has shape (members, ...): the member axis comes first, like the evaluator's
scenario axis, so an ensemble runs through the same vectorised code as scenarios do.
The generator is a ``numpy.random.Generator`` made by the caller from a seed
(``numpy.random.default_rng(seed)``), so results are reproducible.
"""

from math import erfc, sqrt
from typing import NamedTuple

import numpy as np

from .error_models import DIRECTION_STEP_DEG, KNOT, SPEED_STEP_KT, level_correlation
from .winds import wind_components

__all__ = [
    "NORMAL_QUANTILE_95", "EnsembleSummary", "draw_correlated_gaussian", "draw_uniform",
    "perturb_reported_winds", "percentiles", "ensemble_summary", "probability_below",
    "normal_probability_below",
]


# 95th percentile of the standard normal distribution, Phi^-1(0.95) (common practice,
# value from memory; tests check it against the erfc used in normal_probability_below).
NORMAL_QUANTILE_95 = 1.6448536269514722


class EnsembleSummary(NamedTuple):
    """Spread of an ensemble along its member axis (``ensemble_summary``)."""

    sigma: np.ndarray
    p05: np.ndarray
    p50: np.ndarray
    p95: np.ndarray


def draw_correlated_gaussian(generator, members, sigma, rho=0.0):
    """Gaussian errors with a leading member axis and AR(1) correlation along axis 0.

    e = sigma * (L z), z standard normal, L L^T = rho^|k - l| (Cholesky), applied along
    the first (level) axis of ``sigma``; independent along the other axes.

    Parameters
    ----------
    generator : numpy.random.Generator
    members : int
    sigma : array_like, shape (L, ...)
        Standard deviation per level (and station, component, ...).
    rho : float, optional
        Correlation of adjacent levels, -1 < rho < 1. [1]

    Returns
    -------
    numpy.ndarray, shape (members, L, ...)
    """
    sigma = np.atleast_1d(np.asarray(sigma, dtype=float))
    z = generator.standard_normal((members,) + sigma.shape)
    if rho != 0.0:
        factor = np.linalg.cholesky(level_correlation(sigma.shape[0], rho))
        z = np.einsum("kl,ml...->mk...", factor, z)
    return sigma * z


def draw_uniform(generator, members, step, shape=()):
    """Rounding errors uniform on [-step/2, step/2], shape (members, *shape)."""
    step = np.asarray(step, dtype=float)
    shape = np.broadcast_shapes(tuple(shape), step.shape)
    return step * (generator.random((members,) + shape) - 0.5)


def perturb_reported_winds(generator, members, direction_from, speed,
                           direction_step=DIRECTION_STEP_DEG, speed_step=SPEED_STEP_KT * KNOT):
    """Winds consistent with a rounded report: direction and speed plus uniform errors.

    The true value lies within half a step of the report; speeds are kept >= 0.

    Parameters
    ----------
    generator : numpy.random.Generator
    members : int
    direction_from : array_like  [deg]
    speed : array_like  [m/s]
    direction_step : float, optional  [deg]
    speed_step : float, optional  [m/s]

    Returns
    -------
    u, v : numpy.ndarray, shape (members, *shape)  [m/s]
    """
    direction_from, speed = np.broadcast_arrays(np.asarray(direction_from, float),
                                                np.asarray(speed, float))
    shape = direction_from.shape
    direction = direction_from + draw_uniform(generator, members, direction_step, shape)
    perturbed = np.maximum(speed + draw_uniform(generator, members, speed_step, shape), 0.0)
    return wind_components(direction, perturbed)


def percentiles(samples, q, axis=0):
    """Percentiles by linear interpolation between order statistics (numpy's default).

    With n samples sorted, x_(0) <= ... <= x_(n-1), the q % point is at the virtual index
    h = (n - 1) q / 100: x_(floor h) + (h - floor h) (x_(floor h + 1) - x_(floor h)),
    method 7 of Hyndman and Fan (1996, Am. Stat. 50, 361-365; from memory), evaluated
    as numpy.percentile evaluates it (the same numbers to the last bit, tested), from one
    partition at the few order statistics needed instead of a sort. Written here so that
    a run does not import numpy.ma, which numpy.percentile pulls in (about 0.05 s).

    Parameters
    ----------
    samples : array_like
        Finite values; the member axis is ``axis``.
    q : sequence of float
        Percentages, 0 to 100.
    axis : int, optional

    Returns
    -------
    numpy.ndarray, shape (len(q), *samples.shape without axis)
    """
    samples = np.moveaxis(np.asarray(samples, dtype=float), axis, -1)
    n = samples.shape[-1]
    virtual = (n - 1) * (np.asarray(q, dtype=float) / 100.0)
    below = np.floor(virtual).astype(np.intp)
    above = np.minimum(below + 1, n - 1)
    gamma = virtual - below
    needed = sorted({int(k) for k in (*below, *above)})  # not np.unique: it imports numpy.ma
    ordered = np.partition(samples, needed, axis=-1)
    low = np.moveaxis(ordered[..., below], -1, 0)
    high = np.moveaxis(ordered[..., above], -1, 0)
    gamma = gamma.reshape((-1,) + (1,) * (low.ndim - 1))
    difference = high - low
    # numpy's _lerp: a + d t below t = 0.5, b - d (1 - t) from there (exact at both ends)
    return np.where(gamma >= 0.5, high - difference * (1.0 - gamma), low + difference * gamma)


def ensemble_summary(samples, axis=0):
    """Standard deviation (ddof 1) and the 5, 50 and 95 % points along the member axis."""
    samples = np.asarray(samples, dtype=float)
    p05, p50, p95 = percentiles(samples, [5.0, 50.0, 95.0], axis=axis)
    return EnsembleSummary(np.std(samples, axis=axis, ddof=1), p05, p50, p95)


def probability_below(samples, threshold=0.0, axis=0):
    """Fraction of members below a threshold (e.g. a falling surface pressure). [1]"""
    return np.mean(np.asarray(samples, dtype=float) < threshold, axis=axis)


def normal_probability_below(value, sigma, threshold=0.0):
    """P(X < threshold) for X normal with mean ``value`` and standard deviation ``sigma``.

    P = erfc((value - threshold) / (sigma sqrt 2)) / 2; NaN where sigma is 0.
    """
    value, sigma = np.broadcast_arrays(np.asarray(value, float), np.asarray(sigma, float))
    z = np.divide(value - threshold, sigma * sqrt(2.0), out=np.full(value.shape, np.nan),
                  where=sigma > 0)
    return np.vectorize(lambda t: 0.5 * erfc(t) if np.isfinite(t) else np.nan,
                        otypes=[float])(z)
