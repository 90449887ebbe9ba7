"""Hand-written numpy baselines for benchmarks/run.py: what a careful programmer would write
for the same work without layercalc.

sweep_kernel: the 12-layer worked case over many scenarios, layers on the outer axis and
scenarios contiguous, so that every step is a pass over contiguous memory (one row per
layer, in place into preallocated outputs) and the running sums are one add per layer.
Layer constants (dp, p_mid, vapour pressure, mixing ratio: twelve numbers each) come from
layercalc.physics, everything of size layers x scenarios is written here.
"""

from __future__ import annotations

import numpy as np

from layercalc.constants import EPSILON, G0, RD
from layercalc.physics import humidity

COLUMNS = ("T", "div", "Tv", "thickness", "z_top", "z_bottom", "omega_bottom", "omega_top",
           "w_bottom", "w_top")
CELLS = ("column_thickness", "omega_surface", "net_mass_divergence", "gross_mass_divergence",
         "column_mean_divergence", "dines_ratio", "max_ascent", "max_ascent_pressure")


def sweep_kernel(pb, pt, t, td, div, warm, aloft, surface_height, omega_top, warming, scale):
    """Columns (layers, scenarios) and cells (scenarios,) of the default diagnostics when
    `warming` is added to T in the `warm` layers and div is scaled by `scale` in the
    `aloft` layers (options integrate = from_top, adjust = none)."""
    layers, size = pb.size, warming.size
    out = {name: np.empty((layers, size)) for name in COLUMNS}
    T, D, tv, dz = out["T"], out["div"], out["Tv"], out["thickness"]
    z_top, z_bottom = out["z_top"], out["z_bottom"]
    omega_b, omega_t, w_b, w_t = (out[n] for n in ("omega_bottom", "omega_top", "w_bottom",
                                                   "w_top"))
    dp = pb - pt
    p_mid = np.sqrt(pb * pt)
    r = humidity.mixing_ratio(humidity.vapour_pressure_from_dewpoint(td), p_mid)
    tv_factor = (r + EPSILON) / (EPSILON * (1.0 + r))
    dz_factor = RD / G0 * np.log(pb / pt)
    for j in range(layers):
        if warm[j]:
            np.add(warming, t[j], out=T[j])
        else:
            T[j] = t[j]
        if aloft[j]:
            np.multiply(scale, div[j], out=D[j])
        else:
            D[j] = div[j]
        np.multiply(T[j], tv_factor[j], out=tv[j])
        np.multiply(tv[j], dz_factor[j], out=dz[j])
        if j == 0:
            np.add(dz[0], surface_height, out=z_top[0])
        else:
            np.add(z_top[j - 1], dz[j], out=z_top[j])
        np.subtract(z_top[j], dz[j], out=z_bottom[j])
    running = np.zeros(size)
    flux = np.empty(size)
    net = np.zeros(size)
    gross = np.zeros(size)
    for j in reversed(range(layers)):  # omega from the top down
        np.multiply(D[j], dp[j], out=flux)
        running += flux
        np.subtract(omega_top, running, out=omega_b[j])
        np.add(omega_b[j], flux, out=omega_t[j])
        net += flux
        gross += np.abs(flux)
        np.multiply(omega_b[j], -RD / (pb[j] * G0), out=w_b[j])
        w_b[j] *= tv[j]
        np.multiply(omega_t[j], -RD / (pt[j] * G0), out=w_t[j])
        w_t[j] *= tv[j]
    cells = {
        "column_thickness": z_top[-1] - surface_height,
        "omega_surface": omega_b[0],
        "net_mass_divergence": net,
        "gross_mass_divergence": gross,
        "column_mean_divergence": net / dp.sum(),
        "dines_ratio": np.divide(np.abs(net), gross, out=np.zeros(size), where=gross > 0),
        "max_ascent": np.minimum(omega_b[0], omega_t.min(axis=0)),
    }
    # where the strongest ascent is: the surface, or the top of the layer with the lowest
    # omega_top (the first of equals), found layer by layer
    lowest = omega_t[0].copy()
    pressure = np.full(size, pt[0])
    found = np.empty(size, dtype=bool)
    for j in range(1, layers):
        np.less(omega_t[j], lowest, out=found)
        np.copyto(lowest, omega_t[j], where=found)
        pressure[found] = pt[j]
    cells["max_ascent_pressure"] = np.where(omega_b[0] < lowest, pb[0], pressure)
    return out, cells


def table_script(path) -> str:
    """The numpy script a user would write instead of `layercalc run` for a plain layers
    table (p_bottom, p_top in hPa, T in degC, div in 1e-5 s^-1; a header line, rows, 'end'):
    read the rows with numpy.loadtxt, compute Tv (dry), thickness, heights, omega from the
    top and w, and format the same layer table (top first, the report's columns and
    decimals, in the trade's units) as text."""
    with open(path, encoding="utf-8") as handle:
        count = sum(1 for _ in handle) - 3  # 'layers', the header, ..., 'end'
    pb, pt, t, div = np.loadtxt(path, skiprows=2, max_rows=count, unpack=True)
    pb, pt, t, div = pb * 100.0, pt * 100.0, t + 273.15, div * 1e-5
    tv = t
    thickness = tv * (RD / G0 * np.log(pb / pt))
    z_top = np.cumsum(thickness)
    flux = div * (pb - pt)
    omega_bottom = -np.cumsum(flux[::-1])[::-1]
    omega_top = omega_bottom + flux
    w_top = omega_top * (-RD / (G0 * pt)) * tv
    table = np.column_stack([t - 273.15, tv - 273.15, thickness, z_top, div * 1e5,
                             omega_top * 36.0, w_top * 100.0])[::-1]
    labels = np.char.add(np.char.add((pb[::-1] / 100).astype(str), "-"),
                         (pt[::-1] / 100).astype(str))
    import io

    out = io.StringIO()
    np.savetxt(out, table, fmt=["%8.1f", "%8.1f", "%8.0f", "%8.0f", "%8.2f", "%8.2f",
                                "%8.2f"])
    rows = map(" ".join, zip(labels.tolist(), out.getvalue().splitlines()))
    return "layer T Tv thick z div omega w\n" + "\n".join(rows) + "\n"


if __name__ == "__main__":  # python benchmarks/kernels.py FILE: the table script on FILE
    import sys

    sys.stdout.write(table_script(sys.argv[1]))
