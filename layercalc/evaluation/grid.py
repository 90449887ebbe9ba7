"""The sheet over every column of a model grid, lazily, with xarray and dask.

Input: gridded fields on pressure levels (`formats.grid.GriddedFields`, or anything with
the same `dataset` and `geometry`), and the text of a sheet holding only formulas, cells
and options (no table: the layers come from the grid). Output: an xarray Dataset of dask
arrays, nothing computed until it is written or loaded.

Steps, each lazy:

1. Horizontal divergence at every level (`physics.grid`), block by block with a halo of
   one point (`dask.array.map_overlap`): centred differences inside, second-order
   one-sided at the edges of a grid that does not wrap, across the seam of one that does,
   the polar-cap mean at a pole row (filled from the whole row afterwards).
2. Layers between consecutive levels; a layer's T, humidity and divergence are the means
   of its two levels (every quantity linear in ln p, `physics.levels`). Levels below the
   model surface (pressure above the surface pressure), and every level below a missing
   one, are masked; the lowest level above ground is the column's bottom.
3. The sheet's formulas, defaults and the user's own, for every column at once: the columns
   of one block are the evaluator's leading (scenario) axis, `(S, L)`. Masked layers enter
   as layers of zero depth at the column's bottom with zero divergence, so running sums,
   omega and the adjustments see exactly the layers above ground; their values are nan in
   the output.
4. Per column: omega on the levels (the interfaces), and the lowest level of
   non-divergence (the first sign change of the adjusted divergence from the ground up,
   interpolated in ln p between layer midpoints).

Steps 2-4 are one vectorised numpy kernel called through
`xarray.apply_ufunc(..., dask="parallelized")` on blocks chunked along y, x (and time),
with one chunk along the levels.

Layer 5. May import: checking, language, physics and the top-level leaves.
"""

from __future__ import annotations

import functools

import numpy as np

from layercalc.caution import CAUTION
from layercalc.errors import InputError
from layercalc.physics.grid import divergence_latlon, divergence_projected
from layercalc.version import __version__

__all__ = ["grid_divergence", "evaluate_grid", "column_kernel", "template_text",
           "DIVERGENCE_METHOD"]

DIVERGENCE_METHOD = (
    "horizontal divergence by centred differences (second order); on latitude-longitude "
    "grids div = du/dlambda / (a cos phi) + dv/dphi / a - v tan(phi) / a on a sphere of the "
    "file's radius, wrapping across the seam of a global grid, the polar-cap mean (Gauss's "
    "theorem over the cap bounded by the next row) at a pole row; on Lambert conformal grids "
    "div = m^2 (d(u/m)/dx + d(v/m)/dy) of grid-relative winds with the map factor m; "
    "second-order one-sided differences at the edges of a grid that does not wrap")
MASKING_METHOD = (
    "levels with pressure above the model surface pressure (and any level below a missing "
    "value) are masked; layers lie between consecutive levels above ground, with the means "
    "of their two levels")
# Typical values the template table is checked with; never used in results. Common
# practice, no source: a mid-latitude 250 K and 50 % keep the checker's plausibility
# warnings quiet.
_TEMPLATE_T = "-23.15"
_TEMPLATE_RH = "50"


def template_text(user_text: str, levels, humidity: str | None) -> str:
    """The sheet the grid is evaluated with: the user's text and a layers table with one
    row per layer between consecutive levels (placeholder values; the grid replaces them)."""
    levels = np.asarray(levels, dtype=float)
    header = ["p_bottom [hPa]", "p_top [hPa]", "T [degC]", "div [1e-5 s^-1]"]
    extra = {"RH": ("RH [%]", _TEMPLATE_RH), "q": ("r [g/kg]", "1"),
             "Td": ("Td [degC]", "-30")}.get(humidity)
    if extra:
        header.append(extra[0])
    rows = []
    for bottom, top in zip(levels[:-1], levels[1:]):
        row = [f"{bottom / 100:.10g}", f"{top / 100:.10g}", _TEMPLATE_T, "0"]
        if extra:
            row.append(extra[1])
        rows.append("  " + "  ".join(row))
    return (user_text.rstrip("\n") + "\n\n# layers from the model grid (values replaced)\n"
            "layers\n  " + "  ".join(header) + "\n" + "\n".join(rows) + "\nend\n")


@functools.lru_cache(maxsize=8)
def _checked(user_text: str, levels: tuple, humidity: str | None, name: str):
    """The checked template, compiled once per process (dask workers included)."""
    from layercalc.checking.checker import check_document
    from layercalc.language.build import build_document
    from layercalc.language.parser import parse
    from layercalc.source import Source

    source = Source(name, template_text(user_text, levels, humidity))
    checked = check_document(build_document(source, parse(source)))
    if checked.soundings is not None or checked.layer_count != len(levels) - 1:
        raise InputError(f"{name}: a sheet for a model grid takes its layers from the grid",
                         location=name, hint="remove the layers, levels and station "
                         "tables; keep formulas, cells and options")
    return checked


def output_names(user_text: str, levels, humidity: str | None, name: str = "<sheet>"):
    """(column names, cell names) the kernel returns, in order."""
    from layercalc.language.typed import CELL, COLUMN

    checked = _checked(user_text, tuple(float(p) for p in levels), humidity, name)
    inputs = [n for n in ("T", "div", "RH", "r", "Td") if n in checked.input_columns]
    columns = inputs + [f.name for f in checked.formulas if f.kind == COLUMN]
    cells = [f.name for f in checked.formulas if f.kind == CELL]
    return columns, cells, checked


def column_kernel(divergence, temperature, humidity_values, height, surface_pressure, *,
                  levels, user_text, humidity, name="<sheet>"):
    """The sheet for a block of columns: arrays (..., L) on levels and (...) for the surface
    pressure, SI. Returns one array per output: each column (..., L-1) in the order of
    `output_names`, each cell (...), omega on the levels (..., L) and the lowest level of
    non-divergence (...)."""
    from layercalc.evaluation.engine import Environment
    from layercalc.language.typed import COLUMN

    levels = np.asarray(levels, dtype=float)
    column_names, cell_names, checked = output_names(user_text, levels, humidity, name)
    lead = divergence.shape[:-1]
    count, nlev = int(np.prod(lead, dtype=int)), levels.size
    flat = lambda a: np.asarray(a, dtype=float).reshape(count, nlev)  # noqa: E731
    div, temp = flat(divergence), flat(temperature)
    hum = flat(humidity_values) if humidity else None
    z = flat(height) if height is not None and np.ndim(height) else None
    surface = np.broadcast_to(np.asarray(surface_pressure, dtype=float),
                              lead).reshape(count)

    # 2. levels above ground, contiguous from the top down
    valid = (levels[None, :] <= np.where(np.isfinite(surface), surface, np.inf)[:, None])
    for array in (div, temp, hum, z):
        if array is not None:
            valid &= np.isfinite(array)
    valid = np.flip(np.logical_and.accumulate(np.flip(valid, -1), -1), -1)
    layer_ok = valid[:, :-1] & valid[:, 1:]
    column_ok = layer_ok.any(axis=1)
    lowest = np.where(column_ok, np.argmax(valid, axis=1), 0)
    rows = np.arange(count)
    bottom_pressure = levels[lowest][:, None]

    def layer_mean(array, fill):
        mean = 0.5 * (array[:, :-1] + array[:, 1:])
        fallback = array[rows, lowest][:, None]
        fallback = np.where(np.isfinite(fallback), fallback, fill)
        return np.where(layer_ok, mean, fallback)

    columns = {
        "p_bottom": np.where(layer_ok, levels[None, :-1], bottom_pressure),
        "p_top": np.where(layer_ok, levels[None, 1:], bottom_pressure),
        "T": layer_mean(temp, 250.0),
        "div": np.where(layer_ok, 0.5 * (div[:, :-1] + div[:, 1:]), 0.0),
    }
    if humidity == "RH":
        columns["RH"] = layer_mean(hum, 0.5)
    elif humidity == "q":
        columns["r"] = layer_mean(hum / (1.0 - hum), 0.001)   # r = q / (1 - q)
    elif humidity == "Td":
        columns["Td"] = layer_mean(hum, 240.0)
    cells = {name: np.array([[cell.value]]) for name, cell in checked.input_cells.items()}
    if z is not None:
        cells["surface_height"] = np.where(column_ok, z[rows, lowest], 0.0)[:, None]

    # 3. the sheet, every column at once (columns are the scenario axis)
    env = Environment(columns, cells, checked.layer_count)
    with np.errstate(all="ignore"):
        for formula in checked.formulas:
            value = np.asarray(env.run(formula.expr), dtype=float)
            if formula.kind == COLUMN:
                shape = (count, checked.layer_count)
                columns[formula.name] = value if value.shape == shape else \
                    np.broadcast_to(value, shape)
            else:
                cells[formula.name] = np.broadcast_to(value.reshape(-1, 1), (count, 1))

    # 4. omega on the levels and the lowest level of non-divergence
    omega_levels = np.full((count, nlev), np.nan)
    if "omega_bottom" in columns:
        omega_levels[:, :-1] = columns["omega_bottom"]
        omega_levels[:, -1] = columns["omega_top"][:, -1]
        omega_levels[~valid] = np.nan
    with np.errstate(all="ignore"):
        nondivergence = _lowest_nondivergence(columns, layer_ok)

    # 5. every output its own contiguous array, masked in place where the kernel owns it;
    # cells first, as copies: a cell may be a view into a column (lowest_layer(omega_bottom))
    cell_out = [_masked(cells[n][:, 0], column_ok).reshape(lead) for n in cell_names]
    layer_out = [_masked(columns[n], layer_ok).reshape(*lead, nlev - 1) for n in column_names]
    return (*layer_out, *cell_out, omega_levels.reshape(*lead, nlev),
            nondivergence.reshape(lead))


def _masked(array, keep):
    """`array` with nan where not `keep`: in place when it is a writeable array of its own
    (an output of this block's formulas), else in a copy."""
    if not (array.flags.writeable and array.flags.c_contiguous and array.base is None
            and array.shape == keep.shape):
        array = np.array(np.broadcast_to(array, keep.shape), dtype=float)
    np.copyto(array, np.nan, where=~keep)
    return array


def _lowest_nondivergence(columns, layer_ok):
    """First sign change of div_adjusted between neighbouring layers above ground, from the
    ground up, in ln p between layer midpoints (as `physics.kinematic.nondivergence_levels`;
    a layer of exactly zero divergence counts as a crossing at its midpoint)."""
    if "div_adjusted" not in columns:
        return np.full(layer_ok.shape[0], np.nan)
    d = np.where(layer_ok, columns["div_adjusted"], np.nan)
    log_mid = 0.5 * (np.log(columns["p_bottom"]) + np.log(columns["p_top"]))
    lower, upper = d[:, :-1], d[:, 1:]
    crossing = (lower * upper < 0) | (lower == 0)
    fraction = np.where(lower == 0, 0.0, lower / (lower - upper))
    log_p = log_mid[:, :-1] + (log_mid[:, 1:] - log_mid[:, :-1]) * fraction
    first = np.argmax(crossing, axis=1)
    found = crossing.any(axis=1)
    rows = np.arange(d.shape[0])
    return np.where(found, np.exp(log_p[rows, first]), np.nan)


def grid_divergence(fields):
    """Lazy horizontal divergence (time, level, y, x) of the fields' winds. [s^-1]"""
    import dask.array as da
    import xarray as xr

    dataset, geometry = fields.dataset, fields.geometry
    u, v = dataset["u"], dataset["v"]
    if not isinstance(u.data, da.Array):
        u, v = u.chunk(), v.chunk()
    # a last block of one or two rows (721 rows in chunks of 360) joins the one before: the
    # one-sided differences at an edge need three points
    merged = {dim: merge_small(u.chunks[u.dims.index(dim)]) for dim in ("y", "x")}
    u, v = u.chunk(merged), v.chunk(merged)
    ny, nx = u.sizes["y"], u.sizes["x"]
    yx_chunks = (u.chunks[u.dims.index("y")], u.chunks[u.dims.index("x")])
    lead = u.ndim - 2
    depth = {i: 0 for i in range(lead)} | {lead: 1, lead + 1: 1}
    boundary = {i: "none" for i in range(lead)} | {
        lead: "none", lead + 1: "periodic" if geometry.periodic else "none"}
    if min(min(c) for c in yx_chunks) < 3:
        raise InputError("chunks along y and x must hold at least 3 points",
                         hint="choose larger --chunks")

    def plane(values):
        return da.from_array(np.broadcast_to(values, (ny, nx)).copy(), chunks=yx_chunks)

    def lift(array):  # a (y, x) array with the winds' leading dims, for map_overlap
        return array.reshape((1,) * lead + array.shape).rechunk(
            tuple((1,) for _ in range(lead)) + yx_chunks)

    radius = geometry.radius
    if geometry.kind == "latlon":
        def kernel(u, v, lat, lon):
            return divergence_latlon(u, v, lat[(0,) * lead][:, 0], lon[(0,) * lead][0, :],
                                     radius, periodic=False, poles="nan")
        lat2 = lift(plane(geometry.latitude[:, None]))
        lon2 = lift(plane(geometry.longitude[None, :]))
        data = da.map_overlap(kernel, u.data, v.data, lat2, lon2, depth=depth,
                              boundary=boundary, dtype=float, trim=True, align_arrays=False)
    else:
        rotation = xr.DataArray(geometry.rotation(), dims=("y", "x"))
        u_grid = u * np.cos(rotation) - v * np.sin(rotation)
        v_grid = u * np.sin(rotation) + v * np.cos(rotation)

        def kernel(u, v, x, y, m):
            pick = (0,) * lead
            return divergence_projected(u, v, x[pick][0, :], y[pick][:, 0], m[pick])
        data = da.map_overlap(kernel, u_grid.data, v_grid.data,
                              lift(plane(geometry.x[None, :])), lift(plane(geometry.y[:, None])),
                              lift(plane(geometry.map_factor())), depth=depth,
                              boundary=boundary, dtype=float, trim=True, align_arrays=False)
    div = xr.DataArray(data, dims=u.dims, coords={k: c for k, c in u.coords.items()})
    if geometry.kind == "latlon" and geometry.periodic:
        latitude = geometry.latitude
        is_row = xr.DataArray(np.arange(ny), dims="y")
        for row in np.flatnonzero(np.isclose(np.abs(latitude), 90.0, rtol=0.0, atol=1e-9)):
            neighbour = row + 1 if row + 1 < latitude.size else row - 1
            div = xr.where(is_row == row, _cap(v, latitude, row, neighbour, radius), div)
    return div.transpose(*u.dims)


def merge_small(chunks: tuple) -> tuple:
    """Block sizes with a last block below 3 merged into the one before it."""
    chunks = list(chunks)
    if len(chunks) > 1 and chunks[-1] < 3:
        chunks[-2] += chunks.pop()
    return tuple(chunks)


def _cap(v, latitude, row, neighbour, radius):
    """Polar-cap mean divergence from the next row's northward wind, lazily: the formula of
    `physics.grid.polar_cap_divergence` (a test checks that they agree)."""
    phi1 = np.deg2rad(latitude[neighbour])
    hemisphere = np.sign(latitude[row])
    return (-hemisphere * np.cos(phi1) * v.isel(y=neighbour).astype(float).mean("x")
            / (radius * (1.0 - hemisphere * np.sin(phi1))))


# Long names and methods of the outputs the defaults produce; user formulas get their text.
_LONG_NAMES = {
    "T": "layer-mean air temperature", "div": "layer-mean horizontal divergence",
    "RH": "layer-mean relative humidity", "r": "layer-mean water vapour mixing ratio",
    "Td": "layer-mean dewpoint", "dp": "pressure depth of the layer",
    "p_mid": "log-pressure midpoint of the layer", "e": "vapour pressure",
    "Tv": "layer-mean virtual temperature", "thickness": "hypsometric thickness of the layer",
    "z_top": "geopotential height of the layer top", "z_bottom":
    "geopotential height of the layer bottom", "div_adjusted": "divergence after adjustment",
    "omega_bottom": "kinematic omega at the layer bottom",
    "omega_top": "kinematic omega at the layer top",
    "w_bottom": "vertical velocity at the layer bottom", "w_top":
    "vertical velocity at the layer top", "column_thickness": "thickness of the column",
    "top_mismatch": "omega mismatch at the column top before adjustment",
    "omega_surface": "kinematic omega at the lowest level above ground",
    "surface_pressure_tendency": "surface pressure tendency from the kinematic omega",
    "net_mass_divergence": "net mass divergence of the column",
    "gross_mass_divergence": "gross mass divergence of the column",
    "column_mean_divergence": "mass-weighted column-mean divergence",
    "dines_ratio": "Dines ratio: net over gross mass divergence",
    "max_ascent": "strongest kinematic ascent (most negative omega)",
    "max_ascent_pressure": "pressure of the strongest ascent",
}
_CF_UNITS = {"1": "1", "s^-1": "s-1", "Pa/s": "Pa s-1", "m/s": "m s-1", "K/m": "K m-1",
             "m/s^2": "m s-2", "kg/m^3": "kg m-3", "K/Pa": "K Pa-1", "m/Pa": "m Pa-1"}


def _cf_units(unit) -> str:
    from layercalc.language.units import si_unit_text

    text = si_unit_text(unit.dimension)
    return _CF_UNITS.get(text, text)


def evaluate_grid(fields, user_text: str = "", sheet_name: str = "<sheet>"):
    """The lazy result Dataset: layer variables (time, layer, y, x), column variables
    (time, y, x), omega and divergence on levels, CF attributes. Nothing is computed."""
    import dask.array as da
    import xarray as xr

    dataset = fields.dataset
    levels = np.asarray(dataset["level"].values, dtype=float)
    if levels.size < 2:
        raise InputError(f"{fields.source}: fewer than two pressure levels",
                         location=fields.source)
    humidity = getattr(fields, "humidity", None)
    column_names, cell_names, checked = output_names(user_text, levels, humidity, sheet_name)
    divergence = grid_divergence(fields)

    def lazy(name):
        array = dataset[name]
        return array if isinstance(array.data, da.Array) else array.chunk()

    temperature = lazy("T")
    hum = lazy(humidity) if humidity else xr.zeros_like(temperature)
    height = lazy("z") if "z" in dataset else xr.full_like(temperature, np.nan)
    surface = lazy("ps") if "ps" in dataset else xr.full_like(temperature.isel(level=0),
                                                              np.inf)
    kernel = functools.partial(
        _kernel_for_ufunc, levels=tuple(levels.tolist()), user_text=user_text,
        humidity=humidity, name=sheet_name, has_height="z" in dataset)
    layer_count = levels.size - 1
    blocks = {"y": divergence.chunksizes["y"], "x": divergence.chunksizes["x"]}
    chunked = [a.chunk({"level": -1, **blocks}) for a in (divergence, temperature, hum, height)]
    surface = surface.chunk(blocks)
    count_columns, count_cells = len(column_names), len(cell_names)
    outputs = xr.apply_ufunc(
        kernel, *chunked, surface,
        input_core_dims=[["level"]] * 4 + [[]],
        output_core_dims=[["layer"]] * count_columns + [[]] * count_cells + [["level"], []],
        dask="parallelized", output_dtypes=[float] * (count_columns + count_cells + 2),
        dask_gufunc_kwargs={"output_sizes": {"layer": layer_count}, "allow_rechunk": False})
    omega_levels, nondivergence = outputs[-2:]
    lead = [d for d in divergence.dims if d not in ("level", "y", "x")]
    out = {}
    for name, array in zip(column_names, outputs[:count_columns]):
        out[name] = array.transpose(*lead, "layer", "y", "x")
        out[name].attrs = _attrs(name, checked, "column")
    for name, array in zip(cell_names, outputs[count_columns:count_columns + count_cells]):
        out[name] = array.transpose(*lead, "y", "x")
        out[name].attrs = _attrs(name, checked, "cell")
    out["divergence"] = divergence.transpose(*lead, "level", "y", "x").assign_attrs(
        units="s-1", long_name="horizontal divergence on the pressure levels",
        standard_name="divergence_of_wind", method=DIVERGENCE_METHOD)
    out["omega_kinematic"] = omega_levels.transpose(*lead, "level", "y", "x").assign_attrs(
        units="Pa s-1", long_name="kinematic omega on the pressure levels",
        standard_name="lagrangian_tendency_of_air_pressure", method=_omega_method(checked))
    out["level_of_nondivergence"] = nondivergence.transpose(*lead, "y", "x").assign_attrs(
        units="Pa", long_name="lowest level of non-divergence above ground",
        standard_name="air_pressure", method="first sign change of div_adjusted from the "
        "ground up, interpolated in ln p between layer midpoints")
    result = xr.Dataset(out)
    p_mid = np.sqrt(levels[:-1] * levels[1:])
    result = result.assign_coords(
        layer=("layer", p_mid, {"standard_name": "air_pressure", "units": "Pa",
                                "long_name": "log-pressure midpoint of the layer",
                                "positive": "down", "bounds": "layer_bounds"}),
        layer_bounds=(("layer", "bounds"), np.stack([levels[:-1], levels[1:]], axis=1),
                      {"units": "Pa"}),
        level=("level", levels, {"standard_name": "air_pressure", "units": "Pa",
                                 "positive": "down", "long_name": "pressure level"}),
        latitude=(("y", "x"), fields.geometry.latitude_2d(),
                  {"standard_name": "latitude", "units": "degrees_north"}),
        longitude=(("y", "x"), fields.geometry.longitude_2d(),
                   {"standard_name": "longitude", "units": "degrees_east"}))
    if "time" in dataset.coords:
        result = result.assign_coords(time=dataset["time"])
    result.attrs = {
        "Conventions": "CF-1.8",
        "title": checked.title or "layercalc diagnostics over a model grid",
        "source": f"layercalc {__version__} from {fields.source}",
        "layercalc_version": __version__,
        "caution": CAUTION,
        "divergence_method": DIVERGENCE_METHOD,
        "masking": MASKING_METHOD,
        "options": "; ".join(f"{k} = {v}" for k, v in sorted(checked.options.items())) or
                   "integrate = from_top; adjust = none",
        "reading_notes": "; ".join(getattr(fields, "notes", ())),
        "valid_time": dataset.attrs.get("valid_time", "as the time coordinate says"),
        "sheet_notes": "; ".join(checked.remarks),
    }
    return result


def _kernel_for_ufunc(divergence, temperature, humidity_values, height, surface, *, levels,
                      user_text, humidity, name, has_height):
    return column_kernel(divergence, temperature, humidity_values if humidity else None,
                         height if has_height else None, surface, levels=np.array(levels),
                         user_text=user_text, humidity=humidity, name=name)


def _attrs(name, checked, kind):
    formula = next((f for f in checked.formulas if f.name == name and f.kind == kind), None)
    unit = checked.unit_of(name, kind)
    attrs = {"units": _cf_units(unit)}
    if formula is not None and not formula.default:
        attrs["long_name"] = f"{name} (a formula of the sheet)"
        attrs["formula"] = formula.source_text or name
    else:
        attrs["long_name"] = _LONG_NAMES.get(name, name)
        if formula is not None and formula.source_text:
            attrs["formula"] = formula.source_text
    if name.startswith("omega") or name in ("top_mismatch", "surface_pressure_tendency"):
        attrs["method"] = _omega_method(checked)
    if kind == "column":
        attrs["cell_methods"] = "layer: mean" if name in ("T", "div", "RH", "r", "Td") else ""
        if not attrs["cell_methods"]:
            del attrs["cell_methods"]
    return attrs


def _omega_method(checked) -> str:
    options = checked.options
    return ("kinematic method: continuity equation in pressure coordinates integrated "
            f"{'down from the top' if options.get('integrate', 'from_top') == 'from_top' else 'up from the lowest level above ground'}"
            f" (integrate = {options.get('integrate', 'from_top')}), adjustment "
            f"{options.get('adjust', 'none')}; layers below the model surface masked")
