"""GRIB files through cfgrib and ecCodes: the inventory and one dataset per variable.

Two traps of GRIB files are handled here, each with a test (tests/formats/test_grid.py):
NCEP packs u and v of a level into one multi-field message, which ecCodes reads as u alone
unless multi-field support is on (cfgrib switches it on when it reads; `grib_inventory`
does too); and cfgrib drops a variable whose level set differs from the first one it met
in a dataset (GFS: relative humidity and omega have fewer levels than the winds), so every
variable is opened with its own filter (`open_grib`).

May import: the top-level leaves; `formats.grid` turns the datasets into canonical fields.
"""

from __future__ import annotations

from pathlib import Path

from layercalc.errors import InputError

__all__ = ["grib_inventory", "open_grib", "GRIB_KEYS"]


def grib_inventory(path: str | Path) -> dict[tuple[str, str], list[float]]:
    """(shortName, typeOfLevel) -> sorted levels of every field in a GRIB file, read with
    multi-field support on (without it, the v of NCEP's u/v messages is not seen)."""
    import eccodes

    found: dict[tuple[str, str], set] = {}
    eccodes.codes_grib_multi_support_on()
    try:
        with open(path, "rb") as stream:
            eccodes.codes_grib_multi_support_reset_file(stream)
            while (handle := eccodes.codes_grib_new_from_file(stream)) is not None:
                try:
                    key = (eccodes.codes_get(handle, "shortName"),
                           eccodes.codes_get(handle, "typeOfLevel"))
                    found.setdefault(key, set()).add(float(eccodes.codes_get(handle, "level")))
                finally:
                    eccodes.codes_release(handle)
    except eccodes.CodesInternalError as exc:
        raise InputError(f"cannot read {Path(path).name} as GRIB: {exc}") from None
    finally:
        eccodes.codes_grib_multi_support_off()
    return {key: sorted(levels) for key, levels in found.items()}


GRIB_KEYS = ["uvRelativeToGrid", "LoVInDegrees", "Latin1InDegrees", "Latin2InDegrees",
              "LaDInDegrees", "radius", "shapeOfTheEarth", "DxInMetres", "DyInMetres",
              "iScansNegatively", "jScansPositively"]


_INDEX_FOLDER: list = []


def _index_path(path: Path) -> str:
    """Where cfgrib keeps its message index for this process: a temporary folder (removed
    at exit), never beside the user's file. The index is built by the first open of a file
    and reused by the opens of the other variables (one scan of the file, not one each)."""
    import os
    import tempfile

    import hashlib

    if not _INDEX_FOLDER:
        _INDEX_FOLDER.append(tempfile.TemporaryDirectory(prefix="layercalc-grib-"))
    status = path.stat()
    key = hashlib.sha1(f"{path.resolve()}|{status.st_size}|{status.st_mtime_ns}".encode())
    return os.path.join(_INDEX_FOLDER[0].name, key.hexdigest()[:16] + ".{short_hash}.idx")


def open_grib(path: Path, inventory, chunks, wanted: dict):
    """One dataset per wanted variable, each opened with its own filter: `wanted` maps a
    name to (typeOfLevel, GRIB short names to try in order)."""
    import xarray as xr

    opened = {}
    for name, (level_type, short_names) in wanted.items():
        for short in short_names:
            if (short, level_type) not in inventory:
                continue
            dataset = xr.open_dataset(path, engine="cfgrib",
                                      chunks={} if chunks is not None else None,
                                      decode_timedelta=False, backend_kwargs={
                                          "filter_by_keys": {"shortName": short,
                                                             "typeOfLevel": level_type},
                                          "indexpath": _index_path(path),
                                          "read_keys": GRIB_KEYS})
            if short in dataset.data_vars:
                opened[name] = dataset
                break
    return opened
