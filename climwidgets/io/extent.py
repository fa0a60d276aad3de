"""Declared sizes and store completeness, checked at open from metadata and names only.

Sizes come from the file's header and are refused before coordinates, chunk indexes or a
dask graph are built; a Zarr store's chunk names are listed and compared with the chunk
grid its metadata declares. Nothing here reads data values.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
import xarray as xr

from ..errors import GridError, SourceError
from . import grid as gridmod
from .chunkreader import zarr_stored_chunks

__all__ = [
    "MAX_CHUNKS",
    "MAX_FIELD_CELLS",
    "MAX_TIME_STEPS",
    "check_chunk_count",
    "check_declared_sizes",
    "check_zarr_chunks",
]

# Declared sizes refused before anything is allocated. 2**31 cells per field is 17 GB as
# float64 for one time step (a 1 km global grid, 21 600 x 43 200, is 0.93e9); 1e8 steps is a
# century of one-minute data (its time axis alone 0.8 GB); a million dask chunks is a graph
# of about a gigabyte that takes minutes to build and schedule (common practice: keep dask
# graphs well below a million tasks).
MAX_FIELD_CELLS = 2**31
MAX_TIME_STEPS = 10**8
MAX_CHUNKS = 1_000_000


def check_declared_sizes(da: xr.DataArray, spatial: Sequence[Any], tdim: Any, where: object, name: object) -> None:
    """Sizes from the header, refused before coordinates or chunk indexes are read.

    Parameters
    ----------
    da : xarray.DataArray
        The variable as opened (lazily; only its sizes are read).
    spatial : sequence
        Its spatial dims.
    tdim : hashable or None
        Its time dim.
    where, name : object
        Named in the error message.

    Returns
    -------
    None

    Raises
    ------
    GridError
        For more than :data:`MAX_FIELD_CELLS` cells per step or :data:`MAX_TIME_STEPS` steps.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> check_declared_sizes(xr.DataArray(np.zeros((2, 3, 4)), dims=("time", "lat", "lon")),
    ...                      ["lat", "lon"], "time", "pr.nc", "pr")
    """
    sizes = dict(da.sizes)
    cells = math.prod(sizes[d] for d in spatial if d in sizes)
    grid = " x ".join(f"{sizes[d]:,}" for d in spatial if d in sizes)
    if cells > MAX_FIELD_CELLS:
        raise GridError(
            f"declares a grid of {grid} cells ({cells:.3g} per time step, {8 * cells / 1e9:.3g} GB "
            "per step as float64)",
            source=where,
            variable=name,
            expected=f"at most {MAX_FIELD_CELLS:.3g} cells per time step",
            fix="check the file's dimensions (ncdump -h); to work on part of a large grid, cut a "
            "region first (for example ncks -d lat,... -d lon,...) and open that",
        )
    if tdim is not None and sizes.get(tdim, 0) > MAX_TIME_STEPS:
        raise GridError(
            f"declares {sizes[tdim]:,} time steps",
            source=where,
            variable=name,
            expected=f"at most {MAX_TIME_STEPS:.3g} time steps",
            fix="check the file's time dimension (ncdump -h); resample to coarser steps or open a shorter period",
        )


def check_chunk_count(da: xr.DataArray, plan: Mapping[Any, Any], where: object, name: object, chunks: object) -> None:
    """Refuse a chunk plan that would make more than :data:`MAX_CHUNKS` dask chunks.

    Parameters
    ----------
    da : xarray.DataArray
        The variable as opened.
    plan : mapping
        Chunk size per dim.
    where, name : object
        Named in the error message.
    chunks : object
        What the user passed as ``chunks=`` (the fix differs for a dict).

    Returns
    -------
    None

    Raises
    ------
    GridError

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> check_chunk_count(xr.DataArray(np.zeros((10, 4)), dims=("time", "x")), {"time": 5, "x": 4},
    ...                   "pr.nc", "pr", "auto")
    """
    n = math.prod(-(-size // max(int(plan.get(d, size) or size), 1)) if size else 1 for d, size in da.sizes.items())
    if n > MAX_CHUNKS:
        shape = " x ".join(f"{int(plan.get(d, s)):,}" for d, s in da.sizes.items())
        raise GridError(
            f"would be read in {n:,} chunks of {shape} values",
            source=where,
            variable=name,
            expected=f"at most {MAX_CHUNKS:,} chunks (dask's graph grows with every chunk)",
            fix=(
                "pass larger chunks, e.g. chunks={'time': 365}"
                if isinstance(chunks, dict)
                else "pass larger chunks to cw.open_precip, e.g. chunks={'time': 365, 'lat': -1, "
                "'lon': -1}, or rewrite the file with larger stored chunks"
            ),
        )


def check_zarr_chunks(store: Any, ds: xr.Dataset, da: xr.DataArray, info: dict[str, Any], where: object) -> None:
    """Chunks absent from a Zarr store, found by listing its chunk names (no data read).

    Zarr reads an absent chunk as the fill value, so a chunk lost in an interrupted copy
    would read as a block of missing data (a silent missing year). A tile absent at some
    times but stored at others is refused; a tile absent at every time is what Zarr leaves
    when it skips chunks that hold only the fill value (ocean tiles of a land product), and
    is noted in attrs.

    Parameters
    ----------
    store : str or fsspec mapper
        The Zarr store.
    ds : xarray.Dataset
        The store as opened.
    da : xarray.DataArray
        The laid-out variable (gets ``attrs["absent_chunks"]`` for skipped fill-only tiles).
    info : dict
        The loader's record of the variable (its ``name``).
    where : object
        Named in the error message.

    Returns
    -------
    None

    Raises
    ------
    SourceError
        For chunks absent at some times but stored at others.

    Examples
    --------
    >>> import os, tempfile, numpy as np, xarray as xr
    >>> store = os.path.join(tempfile.mkdtemp(), "pr.zarr")
    >>> ds = xr.Dataset({"pr": (("time", "x"), np.ones((4, 2)))}).chunk({"time": 2})
    >>> _ = ds.to_zarr(store, zarr_format=2)
    >>> check_zarr_chunks(store, ds, ds["pr"], {"name": "pr"}, store)
    """
    name = info["name"]
    found = zarr_stored_chunks(store, name)
    if found is None:
        return
    grid, chunk, present = found
    total = math.prod(grid)
    if len(present) >= total:
        return
    dims = ds[name].dims
    tname = gridmod.find_coord(ds, ds[name], "time")
    if tname is None or ds[tname].dims[0] not in dims:
        return  # a single field (terrain): nothing to compare an absent chunk with
    taxis = dims.index(ds[tname].dims[0])
    absent_at: dict[tuple[int, ...], list[tuple[int, ...]]] = {}
    for pos in np.ndindex(*grid):
        if pos not in present:
            absent_at.setdefault(pos[:taxis] + pos[taxis + 1 :], []).append(pos)
    holes = sorted(p for ps in absent_at.values() if len(ps) < grid[taxis] for p in ps)
    missing = total - len(present)
    if holes:
        first = holes[0]
        a = first[taxis] * chunk[taxis]
        b = min(a + chunk[taxis], ds[name].shape[taxis]) - 1
        times = da["time"].values if "time" in da.coords else None
        stamp = f", {str(times[a])[:10]} to {str(times[b])[:10]}" if times is not None and b < times.size else ""
        what = f"chunk {first}: time steps {a}..{b}{stamp}"
        raise SourceError(
            f"has {len(holes)} of {total} chunks of '{name}' missing from the store where other "
            f"times of the same cells are stored (first {what}); Zarr would read them as "
            "missing values",
            source=where,
            variable=name,
            expected="every chunk of the array in the store",
            fix="copy or download the store again (an interrupted copy leaves chunks out); if "
            "those chunks were left out on purpose because they held only missing values, "
            "open the store with xr.open_zarr and pass the Dataset to cw.open_precip",
        )
    info["absent_chunks"] = (
        f"{missing} of {total} Zarr chunks absent from the store at every time (tiles "
        "holding only the fill value), read as missing"
    )
