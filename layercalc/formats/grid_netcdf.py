"""Writing the grid results as CF-netCDF, computing the lazy Dataset on the way.

The Dataset from `evaluation.grid.evaluate_grid` holds dask arrays; `write_results` hands
xarray a delayed write and computes it, on the threaded scheduler (with a progress bar on
the error stream when the work lasts more than a second or two), or on a
`dask.distributed` Client when one is given (its workers write into the same file, so the
output must be on a file system they share). The file is written to a temporary name in
the target's folder and renamed when whole (layercalc.files).

May import: evaluation, physics and the top-level leaves.
"""

from __future__ import annotations

import sys
from pathlib import Path

__all__ = ["write_results", "compute"]

# Seconds of work before the threaded scheduler's progress bar appears [s]; common
# practice, no source: short runs stay quiet.
PROGRESS_AFTER = 2.0


def compute(delayed_or_collection, client=None, progress: bool = True):
    """Compute a dask object on `client` (distributed) or the threaded scheduler."""
    if client is not None:
        future = client.compute(delayed_or_collection)
        if progress:
            from distributed import progress as show

            show(future)
            sys.stderr.write("\n")
        return future.result()
    import dask
    from dask.diagnostics import ProgressBar

    if progress:
        with ProgressBar(minimum=PROGRESS_AFTER, out=sys.stderr):
            return dask.compute(delayed_or_collection, scheduler="threads")[0]
    return dask.compute(delayed_or_collection, scheduler="threads")[0]


def write_results(result, path: str | Path, client=None, progress: bool = True) -> None:
    """Compute the result Dataset and write it to `path` (netCDF-4, compressed)."""
    import numpy as np

    from layercalc.files import write_through_temporary

    encoding = {name: {"zlib": True, "complevel": 1, "_FillValue": np.nan,
                       "dtype": "float32" if name != "layer_bounds" else "float64"}
                for name in result.data_vars}

    def writer(temporary):
        delayed = result.to_netcdf(temporary, mode="w", format="NETCDF4", engine="netcdf4",
                                   encoding=encoding, compute=False)
        compute(delayed, client, progress)

    write_through_temporary(path, writer)
