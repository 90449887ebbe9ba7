"""The hydrostatic check of a decoded sounding: reported heights against temperatures.

For consecutive levels with reported heights, the reported thickness is compared with the
hypsometric thickness through every temperature level between them (Tv linear in ln p
between levels). Allowed: half the reporting resolution of each of the two heights plus
`HYDROSTATIC_ALLOWANCE_M`. Findings name the level to look at: two neighbouring layers off
by opposite amounts point at their shared height (a mistyped or shifted height group);
one layer alone at its temperatures or the heights at its ends.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from layercalc.physics import sounding_profile as profile

__all__ = ["HYDROSTATIC_ALLOWANCE_M", "Finding", "hydrostatic_findings", "layer_differences"]

# Allowed |reported - hypsometric| thickness of a layer between two levels of known
# height, on top of half the reporting resolution of its two heights [m]. Own choice, no
# source. A one-off run over all 420 messages of pdbufr 0.15.1's tests/sample_data/
# temp.bufr (7553 layers between levels with heights; the file is too large for
# tests/data) gave |reported - hypsometric| median 1.8 m, 90th percentile 13 m, 99th
# percentile 50 m; 25 m flags 1.8 % of the layers, among them plain errors (a 193 m step).
HYDROSTATIC_ALLOWANCE_M = 25.0


class Finding(NamedTuple):
    kind: str            # "height" (shared level) or "layer"
    level: int           # the level to point at (the shared level, or the layer's top)
    lower: int
    upper: int
    difference: float    # reported - hypsometric [m] (of the lower layer for "height")
    difference_above: float   # of the upper layer for "height", else NaN
    tolerance: float


def layer_differences(pressure, height, temperature, dewpoint, resolution):
    """(lower, upper, reported - hypsometric thickness, tolerance) for each pair of
    consecutive levels with heights whose layer the temperatures cover."""
    pressure = np.asarray(pressure, dtype=float)
    has_t = np.isfinite(temperature)
    known = np.flatnonzero(np.isfinite(height))
    if has_t.sum() < 2:
        return []
    p_t = pressure[has_t]
    tv = profile.profile_virtual_temperature(p_t, np.asarray(temperature)[has_t],
                                             np.asarray(dewpoint)[has_t])
    z_t = profile.hydrostatic_heights(p_t, tv, p_t[0], 0.0)
    rows = []
    for lower, upper in zip(known[:-1], known[1:]):
        if not (has_t[lower] and has_t[upper]):
            continue
        i, j = np.flatnonzero(p_t == pressure[lower])[0], np.flatnonzero(p_t == pressure[upper])[0]
        computed = z_t[j] - z_t[i]
        reported = height[upper] - height[lower]
        tolerance = 0.5 * (resolution[lower] + resolution[upper]) + HYDROSTATIC_ALLOWANCE_M
        rows.append((int(lower), int(upper), float(reported - computed), float(tolerance)))
    return rows


def hydrostatic_findings(pressure, height, temperature, dewpoint, resolution) -> list[Finding]:
    """Layers whose reported thickness disagrees with the temperatures, diagnosed."""
    rows = layer_differences(pressure, height, temperature, dewpoint, resolution)
    findings = []
    index = 0
    while index < len(rows):
        lower, upper, diff, tol = rows[index]
        if abs(diff) <= tol:
            index += 1
            continue
        if index + 1 < len(rows):
            lower2, upper2, diff2, tol2 = rows[index + 1]
            if (upper == lower2 and abs(diff2) > tol2 and np.sign(diff) != np.sign(diff2)
                    and abs(diff + diff2) <= 0.5 * max(abs(diff), abs(diff2))):
                findings.append(Finding("height", upper, lower, upper2, diff, diff2, tol))
                index += 2
                continue
        findings.append(Finding("layer", upper, lower, upper, diff, float("nan"), tol))
        index += 1
    return findings


def describe(finding: Finding, pressure, height, height_text: str = "") -> str:
    """The finding in words."""
    if finding.kind == "height":
        level = finding.level
        read = f" ('{height_text}', read as {height[level]:g} m)" if height_text else f" ({height[level]:g} m)"
        return (f"the height of {pressure[level] / 100:g} hPa{read} disagrees with the "
                f"temperatures: the layers below and above are off by {finding.difference:+.0f} m "
                f"and {finding.difference_above:+.0f} m (reported minus hypsometric); a "
                "mistyped or shifted height group?")
    d = finding.difference
    return (f"the layer {pressure[finding.lower] / 100:g}-{pressure[finding.upper] / 100:g} hPa "
            f"is {abs(d):.0f} m {'thicker' if d > 0 else 'thinner'} than its temperatures give "
            f"(reported minus hypsometric {d:+.0f} m, allowed {finding.tolerance:.0f} m): check "
            "the heights at its ends and the temperatures between")
