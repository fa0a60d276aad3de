"""Open precipitation and terrain grids lazily, in the house conventions (docs/architecture.md).

``open_precip`` returns depth per time step in mm on a lazily read dask array.  Opening
reads metadata and coordinates only; data values are read when a result is computed.

Chunking policy: dask chunks follow the file's own on-disk chunks, so that every chunk
dask asks for is a whole number of stored chunks and nothing is read twice.  Along time
several stored chunks are grouped until a dask chunk holds about ``TARGET_CHUNK_BYTES``
of float64, but never fewer than ``MIN_STORED_PER_TASK`` stored chunks (a (1, ny, nx)-
chunked file becomes (k, ny, nx) with k stored fields per dask chunk; time-chunked tiles
keep their tiles and get several years per task).  Contiguous files are chunked along time
only.  Measured on 20 years of daily 512 x 512 data (benchmarks/RESULTS.md): 32 MiB keeps
peak memory under 0.8 GB and is faster than 128 MiB for field-per-step files; small tiles
need several stored chunks per task or per-task overhead dominates.
"""

from __future__ import annotations

import math
import os
from collections.abc import Hashable, Sequence
from typing import Any

import dask.base
import numpy as np
import xarray as xr
from dask.base import is_dask_collection

from ..errors import GridError, ParameterError, TimeAxisError, UnitsError, VariableError
from ..provenance import with_history
from . import grid as gridmod
from . import timeaxis
from .chunkreader import StoredValues, backend_reader, direct_reader
from .combine import combine_parts
from .extent import check_chunk_count, check_declared_sizes, check_zarr_chunks
from .projected import attach_latlon, attach_mapping
from .sources import is_zarr, open_raw, resolve, source_label
from .units import length_to_metres, parse_units, step_factor
from .values import check_packing, check_values, convert_block, default_max_depth

PRECIP_STANDARD_NAMES = (
    "lwe_thickness_of_precipitation_amount",
    "precipitation_amount",
    "precipitation_flux",
    "lwe_precipitation_rate",
    "thickness_of_rainfall_amount",
    "rainfall_amount",
    "rainfall_flux",
    "rainfall_rate",
    "lwe_thickness_of_stratiform_precipitation_amount",
    "lwe_thickness_of_convective_precipitation_amount",
    "convective_precipitation_flux",
    "stratiform_precipitation_flux",
    "lwe_convective_precipitation_rate",
)
PRECIP_NAMES = ("pr", "precip", "precipitation", "prcp", "tp", "rain", "rainfall", "ppt", "rr", "prec", "apcp")
ELEVATION_STANDARD_NAMES = ("surface_altitude", "height_above_mean_sea_level", "altitude", "height_above_geoid")
ELEVATION_NAMES = ("elevation", "orog", "orography", "elev", "z", "hgt", "height", "topo", "dem", "altitude")
TARGET_CHUNK_BYTES = 32 * 2**20
MIN_STORED_PER_TASK = 10
# Read deflate/shuffle-compressed NetCDF-4 chunks directly so threads decompress in parallel
# (see chunkreader); False falls back to xarray's netCDF4 backend everywhere.
DIRECT_CHUNK_READS = True
EAGER_CHECK_MAX_VALUES = 20_000_000  # small inputs are checked for bad values at open


def _describe(ds: xr.Dataset, name: Hashable) -> str:
    a = ds[name].attrs
    return f"{name} (units={a.get('units', '?')!r}, standard_name={a.get('standard_name', '-')}, dims={ds[name].dims})"


def _choose_variable(
    ds: xr.Dataset,
    var: str | None,
    source: object,
    standard_names: Sequence[str],
    names: Sequence[str],
    kind: str,
) -> str:
    # names in files are text; a variable with another name is chosen with var=
    data_vars = [
        n for n in ds.data_vars if isinstance(n, str) and not n.endswith(("_bnds", "_bounds")) and ds[n].ndim >= 2
    ]
    listing = "; ".join(_describe(ds, n) for n in ds.data_vars) or "none"
    if var is not None:
        if var not in ds.data_vars:
            raise VariableError(
                f"has no variable '{var}'",
                source=source,
                variable=var,
                expected=f"one of the file's variables: {listing}",
                fix="pass var= with one of those names",
            )
        return str(var)
    by_sn = [n for n in data_vars if ds[n].attrs.get("standard_name") in standard_names]
    if len(by_sn) == 1:
        return by_sn[0]
    units_parser = parse_units if kind == "precipitation" else length_to_metres

    def plausible(n: str) -> bool:
        try:
            units_parser(ds[n].attrs.get("units"))
            return True
        except UnitsError:
            return False

    pool = by_sn or [n for n in data_vars if plausible(n)]
    if kind == "precipitation" and not by_sn and pool:
        # a conventionally named variable without units beside one with units is more likely
        # a file whose units sit on the wrong variable than a choice to make silently
        bare = [n for n in data_vars if n.lower() in names and n not in pool and not ds[n].attrs.get("units")]
        if bare:
            raise VariableError(
                f"has '{bare[0]}' without units, while {', '.join(pool)} has precipitation units",
                source=source,
                variable=bare[0],
                expected="units on the precipitation variable",
                fix=f"set the 'units' attribute of '{bare[0]}', or pass var='{pool[0]}' if that is the precipitation",
            )
    if len(pool) == 1:
        return pool[0]
    named = [n for n in (pool or data_vars) if n.lower() in names]
    if len(named) == 1:
        return named[0]
    if len(pool) > 1:
        raise VariableError(
            f"has several {kind}-like variables: {', '.join(pool)}",
            source=source,
            expected=f"exactly one {kind} variable",
            fix=f"pass var= with one of: {', '.join(pool)}",
        )
    raise VariableError(
        f"has no {kind}-like variable (found: {listing})",
        source=source,
        expected=f"a variable with a {kind} standard_name or units",
        fix="pass var= with the variable's name, and make sure it has a 'units' attribute",
    )


def _chunk_plan(var: xr.Variable, dims: tuple[Hashable, ...], time_dim: Hashable | None) -> dict[Hashable, int]:
    """Dask chunks aligned with the stored chunks (see the module docstring)."""
    enc = var.encoding
    stored = enc.get("chunksizes") or enc.get("chunks") or enc.get("preferred_chunks")
    if isinstance(stored, dict):
        stored = tuple(stored.get(d, s) for d, s in zip(dims, var.shape))
    shape = dict(zip(dims, var.shape))
    plan = dict(zip(dims, stored)) if stored else dict(shape)
    if time_dim is None:
        return plan
    if not stored:
        plan[time_dim] = 1
    field_bytes = 8 * math.prod(v for d, v in plan.items() if d != time_dim)
    per_block = plan[time_dim] * field_bytes
    k = max(MIN_STORED_PER_TASK if stored else 1, TARGET_CHUNK_BYTES // max(per_block, 1))
    plan[time_dim] = int(min(shape[time_dim], plan[time_dim] * k))
    return plan


def _decode_time(ds: xr.Dataset, tname: str, source: object) -> tuple[xr.DataArray, xr.DataArray | None]:
    tvar = ds[tname]
    timeaxis.check_calendar(tvar.attrs.get("calendar"), source=source, variable=tname)
    raw = tvar.values
    if np.issubdtype(np.asarray(raw).dtype, np.number):
        timeaxis.check_monotonic(raw, source=source)
    bname = tvar.attrs.get("bounds") or tvar.encoding.get("bounds")
    keep = [tname] + ([bname] if bname in ds.variables else [])
    small = xr.Dataset({n: ds[n].variable for n in keep if n != tname}, coords={tname: tvar.variable})
    units = str(tvar.attrs.get("units", "")).strip()
    unit_word = units.split(" ")[0].lower()
    if " since " not in units and not np.issubdtype(tvar.dtype, np.datetime64) and tvar.dtype != object:
        raise TimeAxisError(
            "has time values without CF units (" + (f"units={units!r})" if units else "no units attribute)"),
            source=source,
            variable=tname,
            expected="units such as 'days since 2001-01-01'",
            fix=f"set the units attribute of '{tname}', e.g. ds['{tname}'].attrs['units'] = "
            "'days since 2001-01-01', and save a copy of the file",
        )
    try:
        decoded = xr.decode_cf(small).load()  # decode now, so bad stamps or bounds fail here
    except Exception as exc:
        if unit_word in ("month", "months", "year", "years", "common_year", "common_years"):
            raise TimeAxisError(
                f"has time units '{units}': a {unit_word.rstrip('s')} has no fixed length in the "
                f"'{tvar.attrs.get('calendar', 'standard')}' calendar",
                source=source,
                variable=tname,
                expected="units of days, hours or seconds since a date",
                fix="rewrite the time as 'days since ...' (for example with cftime.date2num)",
            ) from None
        raise TimeAxisError(
            f"has a time axis that cannot be decoded ({type(exc).__name__}: {exc})",
            source=source,
            variable=tname,
            expected="CF time units such as 'days since 1990-01-01'",
            fix="set the time variable's units and calendar attributes",
        ) from None
    bounds = decoded[bname] if bname in decoded else None
    if not np.issubdtype(np.asarray(raw).dtype, np.number):  # given decoded (xarray objects)
        timeaxis.check_monotonic(decoded[tname].values, source=source)
    return decoded[tname], bounds


def _user_plan(
    plan: dict[Hashable, int],
    chunks: dict[str, int | None],
    da: xr.DataArray,
    ds: xr.Dataset,
    tname: str | None,
    spatial: Sequence[Hashable],
) -> dict[Hashable, int]:
    """Apply chunk sizes given with house names (time, lat, lon, y, x) to the file's own dims."""
    names: dict[str, Hashable] = {}
    if tname:
        names["time"] = ds[tname].dims[0]
    names["lat"] = names["y"] = spatial[0]
    names["lon"] = names["x"] = spatial[-1]
    for key, size in chunks.items():
        dim = names.get(key, key)
        if dim in plan:
            plan[dim] = da.sizes[dim] if size in (-1, None) else int(size)
    return plan


MEMBER_DIMS = ("member", "realization", "ensemble", "model")  # extra dims kept as they are


def _spatial_names(
    ds: xr.Dataset, da: xr.DataArray, name: str, source: object
) -> tuple[str | None, str | None, tuple[Hashable, Hashable, str] | None]:
    """``(latn, lonn, projected)``: lat/lon variables, or a projected (x, y, grid_mapping)."""
    latn, lonn = gridmod.find_coord(ds, da, "lat"), gridmod.find_coord(ds, da, "lon")
    if latn is not None and lonn is not None:
        return latn, lonn, None
    projected = gridmod.find_projected(ds, da)
    if projected is None:
        raise GridError(
            "has no latitude/longitude coordinates",
            source=source,
            variable=name,
            expected="lat and lon coordinate variables (CF units degrees_north/degrees_east), or "
            "projected x/y coordinates with a CF grid_mapping",
            fix="add lat/lon coordinates, or the grid_mapping attribute and its variable; "
            "projected grids may instead carry 2-D lat(y, x) and lon(y, x) variables",
        )
    return None, None, projected


def _extra_dims(
    da: xr.DataArray, spatial: Sequence[Hashable], time_dims: Sequence[Hashable], source: object, name: str
) -> tuple[list[Hashable], list[Hashable]]:
    """Dims beyond time and space: members kept, other singletons dropped, the rest refused."""
    extra = [d for d in da.dims if d not in spatial and d not in time_dims]
    members: list[Hashable] = [d for d in extra if d in MEMBER_DIMS and da.sizes[d] > 1]
    for d in extra:
        if d not in members and da.sizes[d] != 1:
            raise GridError(
                f"has an extra dimension '{d}' of length {da.sizes[d]}",
                source=source,
                variable=name,
                expected="dimensions time, lat, lon, with ensemble members on one of "
                f"{', '.join(MEMBER_DIMS)} (singleton extras are dropped)",
                fix=f"select one {d} first, e.g. ds['{name}'].isel({d}=0), or rename it to 'member' "
                f"if it holds ensemble members (ds.rename({d}='member'))",
            )
    return [d for d in extra if d not in members], members


def _file_data(
    da: xr.DataArray, path: str, name: str, plan: dict[Hashable, int], ident: str, dims: Sequence[Hashable]
) -> tuple[Any, str]:
    """A dask array that reads the file's chunks (directly where the codec allows)."""
    direct = None
    if DIRECT_CHUNK_READS and "_Unsigned" not in da.encoding and "_Unsigned" not in da.attrs:
        direct = direct_reader(
            path,
            name,
            da.encoding,
            tuple(plan[d] for d in dims),
            name=f"open_precip-{name}-direct-{ident}",
            shape=da.shape,
        )
    if direct is not None:
        return direct, "direct chunk reads (parallel decompression)"
    data = backend_reader(da.variable, path, name, tuple(plan[d] for d in dims), name=f"open_precip-{name}-{ident}")
    return data, "xarray netCDF4 backend"


def _object_data(da: xr.DataArray, plan: dict[Hashable, int], rechunk: bool = False) -> tuple[Any, str]:
    """A dask array over an in-memory or lazily backed variable (dask input kept as it is,
    unless chunk sizes were asked for)."""
    if is_dask_collection(da.data):
        return (da.chunk({d: plan[d] for d in da.dims}).data if rechunk else da.data), "the given dask array"
    return da.chunk({d: plan[d] for d in da.dims}).data, "xarray (in-memory object or fsspec store)"


def _open_part(path: Any, var: str | None, kind: str, chunks: Any = "auto") -> tuple[xr.DataArray, dict[str, Any]]:
    """One file or store: open it lazily, then lay it out (see _layout)."""
    ds = open_raw(path)
    zarr = is_zarr(path)
    local = isinstance(path, str) and os.path.exists(path) and not zarr
    da, info = _layout(ds, var, kind, chunks, source_label(path), path if local else None)
    if zarr:
        check_zarr_chunks(path, ds, da, info, source_label(path))
    return da, info


def _open_object(
    obj: xr.Dataset | xr.DataArray, var: str | None, kind: str, chunks: Any = "auto"
) -> tuple[xr.DataArray, dict[str, Any]]:
    """An xr.Dataset or xr.DataArray given by the user (never modified: a shallow copy is used)."""
    if isinstance(obj, xr.DataArray):
        name = str(obj.name) if obj.name is not None and obj.name not in obj.coords else "pr"
        ds = obj.to_dataset(name=name)
        var = name if var is None else var
    else:
        ds = obj.copy(deep=False)
    return _layout(ds, var, kind, chunks, source_label(obj), None)


def _layout(
    ds: xr.Dataset, var: str | None, kind: str, chunks: Any, where: str, path: str | None
) -> tuple[xr.DataArray, dict[str, Any]]:
    """Choose the variable, decode time, find lat/lon (or derive them), normalise the grid."""
    sn, names = (
        (PRECIP_STANDARD_NAMES, PRECIP_NAMES)
        if kind == "precipitation"
        else (ELEVATION_STANDARD_NAMES, ELEVATION_NAMES)
    )
    name = _choose_variable(ds, var, where, sn, names, kind)
    da = ds[name]
    if da.dtype.kind not in "biuf":
        what = (
            f"a compound type (fields {', '.join(da.dtype.names)})" if da.dtype.names else f"values of type {da.dtype}"
        )
        raise VariableError(
            f"holds {what}, not numbers",
            source=where,
            variable=name,
            expected="a numeric variable (integer or floating point)",
            fix="write the numeric field to a variable of its own in a copy of the file (with "
            f"netCDF4: new[:] = old['{name}'][:]['field_name']) and open that",
        )
    check_packing(da, where, name)
    tname = gridmod.find_coord(ds, da, "time")
    latn, lonn, projected = _spatial_names(ds, da, name, where)
    info: dict[str, Any] = {"name": name, "path": where, "attrs": dict(da.attrs)}
    if kind == "precipitation" and tname is None:
        raise TimeAxisError(
            "has no time coordinate",
            source=where,
            variable=name,
            expected="a CF time coordinate",
            fix="open a file that has a time axis",
        )
    if projected is None:
        spatial = list(ds[latn].dims) + [d for d in ds[lonn].dims if d not in ds[latn].dims]
    else:
        spatial = [ds[projected[1]].dims[0], ds[projected[0]].dims[0]]
    drop, members = _extra_dims(da, spatial, ds[tname].dims if tname else (), where, name)
    check_declared_sizes(da, spatial, ds[tname].dims[0] if tname else None, where, name)
    plan = _chunk_plan(da.variable, da.dims, ds[tname].dims[0] if tname else None)
    if isinstance(chunks, dict):
        plan = _user_plan(plan, chunks, da, ds, tname, spatial)
    check_chunk_count(da, plan, where, name, chunks)
    info["encoding"] = dict(da.encoding)
    if path is not None:
        # a token from the file's identity (path, size, mtime), so reopening an unchanged file
        # gives the same dask names and caches keyed on them are hit
        stat = os.stat(path)
        ident = dask.base.tokenize(path, name, plan, stat.st_size, stat.st_mtime_ns)
        data, info["reader"] = _file_data(da, path, name, plan, ident, da.dims)
    else:
        data, info["reader"] = _object_data(da, plan, rechunk=isinstance(chunks, dict))
    da = xr.DataArray(data, dims=da.dims, coords=da.coords, attrs=dict(da.attrs))
    da = da.isel({d: 0 for d in drop}, drop=True)
    member_coords = {d: ds[d].variable for d in members if d in ds.variables}
    da = da.reset_coords(drop=True)
    if member_coords:
        da = da.assign_coords(member_coords)
    if tname is not None:
        time, tb = _decode_time(ds, tname, where)
        tdim = ds[tname].dims[0]
        da = da.rename({tdim: "time"}).assign_coords(time=("time", time.values, {"standard_name": "time"}))
        info["time_bounds"] = tb
        info["calendar"] = timeaxis.calendar_of(da["time"])
    head = members + (["time"] if "time" in da.dims else [])
    if projected is not None:
        da = attach_latlon(da, ds, *projected, source=where)
        da.attrs["cell_bounds"] = "cell corners from the grid mapping (pyproj) at the projected cell edges"
        da = da.transpose(*head, "y", "x")
    elif ds[latn].ndim == 1 and ds[lonn].ndim == 1:
        lat, lon = ds[latn], ds[lonn]
        da = da.rename({lat.dims[0]: "lat", lon.dims[0]: "lon"})
        da = da.assign_coords(lat=("lat", lat.values, dict(lat.attrs)), lon=("lon", lon.values, dict(lon.attrs)))
        edges: list[tuple[np.ndarray, np.ndarray] | None] = []
        for c, short in ((lat, "lat"), (lon, "lon")):
            b = c.attrs.get("bounds")
            lower, upper = ds.coords.get(f"{short}_lower"), ds.coords.get(f"{short}_upper")
            if b in ds.variables:
                edges.append(gridmod.bounds_to_edges(ds[b].values, c.values))
            elif lower is not None and upper is not None and lower.dims == upper.dims == c.dims:
                edges.append((np.asarray(lower.values, float), np.asarray(upper.values, float)))  # an opened object
            else:
                edges.append(None)
        da = gridmod.normalise_rectilinear(da, edges[0], edges[1], source=where)
        da = da.transpose(*head, "lat", "lon")
    elif ds[latn].ndim == 2 and ds[lonn].ndim == 2:
        lat, lon = ds[latn], ds[lonn]
        ydim, xdim = lat.dims
        da = da.rename({ydim: "y", xdim: "x"})
        da = da.assign_coords(
            lat=(("y", "x"), lat.values, dict(lat.attrs)), lon=(("y", "x"), lon.values, dict(lon.attrs))
        )
        da.attrs["cell_bounds"] = "inferred from cell centres"
        mapping = gridmod.find_projected(ds, ds[name])
        if mapping is not None and (ds[mapping[1]].dims[0], ds[mapping[0]].dims[0]) == (ydim, xdim):
            da = attach_mapping(da, ds, *mapping, source=where)[0]  # exact corners from the mapping
            da.attrs["cell_bounds"] = "cell corners from the grid mapping (pyproj) at the projected cell edges"
        da = da.transpose(*head, "y", "x")
    else:
        raise GridError(
            "has latitude and longitude of different shapes",
            source=where,
            variable=f"{latn}/{lonn}",
            expected="both 1-D (rectilinear) or both 2-D (curvilinear)",
            fix="repair the coordinates",
        )
    info["grid"] = (da["lat"].values, da["lon"].values)
    return da, info


def _block_labels(da: xr.DataArray) -> list[xr.DataArray]:
    """One 1-D array per dim of ``da`` (coordinate values, else positions), chunked as ``da``,
    so that each block of the conversion knows where it lies (for the depth bound's message)."""
    import dask.array as dsa

    out = []
    for i, d in enumerate(da.dims):
        values = da[d].values if d in da.coords and da[d].dims == (d,) else np.arange(da.sizes[d])
        data = dsa.from_array(values, chunks=(da.chunks[i],)) if da.chunks is not None else values  # type: ignore[no-untyped-call]
        out.append(xr.DataArray(data, dims=(d,)))
    return out


def _file_starts(parts: Sequence[tuple[xr.DataArray, dict[str, Any]]], stamps: np.ndarray) -> list[tuple[Any, str]]:
    """``(first stamp, path)`` of each file in the combined time order (to name a file in a glob)."""
    ordered = sorted(parts, key=lambda p: p[0]["time"].values[0])
    starts = np.cumsum([0] + [p[0].sizes["time"] for p in ordered[:-1]])
    return [(stamps[int(i)], p[1]["path"]) for i, p in zip(starts, ordered)]


def _max_depth(max_depth_mm: Any, step: str, where: object) -> float | None:  # user input, checked here
    if max_depth_mm is None:
        return None
    if isinstance(max_depth_mm, str) and max_depth_mm == "auto":
        seconds = 31 * 86400.0 if step == "month" else timeaxis.STEP_SECONDS[step]
        return default_max_depth(seconds)
    try:
        bound = float(max_depth_mm)
    except (TypeError, ValueError):
        bound = float("nan")
    if not bound > 0:
        raise ParameterError(
            f"max_depth_mm={max_depth_mm!r} is not a positive number",
            source=where,
            expected="'auto', a positive depth in mm per step, or None",
            fix="pass max_depth_mm='auto' (the default), a number such as 2000, or None",
        )
    return bound


def open_precip(
    source: Any,
    var: str | None = None,
    chunks: Any = "auto",
    validate: bool | str = "auto",
    max_depth_mm: float | str | None = "auto",
) -> xr.DataArray:
    """Open precipitation lazily as depth per time step in mm.

    Parameters
    ----------
    source
        A NetCDF path, a glob pattern, a list of paths (combined along time), an OPeNDAP
        URL, a Zarr store, an fsspec URL (``file://``, ``memory://``; ``s3://`` and
        ``gs://`` with the ``cloud`` extra) or mapper, or an ``xr.Dataset`` /
        ``xr.DataArray`` (numpy- or dask-backed) already in hand.
    var
        Variable name; by default the variable is found by its CF standard_name, else by
        precipitation-like units, else by a conventional name (pr, precip, tp, …).
    chunks
        "auto" follows the on-disk chunking (see the module docstring); a dict is passed
        to dask; None returns an in-memory-on-use (numpy) array.
    validate
        "auto" checks negative and all-missing values at open for inputs of at most
        20 million values and chunk by chunk as data are read for larger ones; True always
        checks at open (reads the data once); False only guards chunks as they are read.
    max_depth_mm
        The largest plausible depth in mm per (native) time step; larger values raise a
        DataValueError naming the first place found, as the chunk is read (or at open for
        small inputs), never with an extra pass over the data. "auto" is twice the envelope
        of the world's greatest observed point rainfalls for the step length (Jennings 1950:
        about 840 mm for an hour, 3.8 m for a day, 19.5 m for a month); a number sets the
        bound; None turns the check off.

    Time stamps are taken as the start of each step. Files whose CF time bounds show the
    stamp at the end of the step (hourly accumulations, monthly means stamped at the next
    month's first instant) are relabelled to the start (``attrs["time_labels"]`` says so);
    without bounds the two cannot be told apart.

    Any regular step that divides a day, or a calendar month, is accepted.  Sub-hourly steps
    (1 to 30 minutes) are summed to hourly totals on open, an hour with any missing step
    being missing (``attrs["native_step"]`` keeps the original); n-hourly steps (2, 3, 4, 6,
    8, 12 hours) are kept as ``"3hour"`` and so on.  Rates are multiplied by the exact step.

    Variables and coordinates are found the CF way (standard_name, axis, units, as
    cf-xarray reads them), so ``latitude``/``longitude``, ``valid_time`` and similar names
    arrive as time/lat/lon.  Ensemble dimensions (``member``, ``realization``,
    ``ensemble``, ``model``) are kept, in front of time.  A grid with only projected x/y
    and a CF ``grid_mapping`` gets 2-D lat/lon from the mapping (pyproj) and is curvilinear.

    Raises
    ------
    climwidgets.InputError
        A subclass naming the source, the variable, what was expected and the fix, for
        anything the checks refuse (units, time axis, grid, values, missing files).

    Returns
    -------
    xr.DataArray with dims ([member,] time, lat, lon) or ([member,] time, y, x),
    ``units="mm"``, ``step`` in {"hour", "2hour" … "12hour", "day", "month"}, and the
    original units, conversion and sources in attrs.  The input (file or object) is never
    modified.

    References
    ----------
    CF Conventions 1.11: sections 3.1 (units), 4.4 (time), 5.6 (grid mappings) and 7.1
    (cell boundaries).

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> given = xr.DataArray(
    ...     np.full((3, 2, 2), 1e-5, dtype="float32"), dims=("time", "lat", "lon"),
    ...     coords={"time": pd.date_range("2001-01-01", periods=3), "lat": [10.0, 11.0], "lon": [0.0, 1.0]},
    ...     attrs={"units": "kg m-2 s-1"}, name="pr")
    >>> pr = open_precip(given)
    >>> pr.attrs["units"], pr.attrs["step"], round(float(pr[0, 0, 0]), 3)
    ('mm', 'day', 0.864)
    """
    if isinstance(source, (xr.Dataset, xr.DataArray)):
        sources = [source_label(source)]
        parts = [_open_object(source, var, "precipitation", chunks)]
    else:
        resolved = resolve(source)
        sources = [source_label(p) for p in resolved]
        parts = [_open_part(p, var, "precipitation", chunks) for p in resolved]
    da, tbounds, mask_fill, fill_note = combine_parts(parts, sources)
    info = parts[0][1]
    name, attrs = info["name"], info["attrs"]
    where = sources[0] if len(sources) == 1 else f"{sources[0]} (+{len(sources) - 1} more)"
    stamps, label_note = timeaxis.start_labels(da["time"], tbounds)
    if label_note:  # before the step lengths are taken, so each step gets its own month's length
        da = da.assign_coords(time=("time", stamps, da["time"].attrs))
    step = timeaxis.infer_step(da["time"], tbounds, source=where)
    units = parse_units(attrs.get("units"), source=where, variable=name)
    factor, conversion = step_factor(units, da["time"], step, source=where, variable=name)
    if chunks is None:
        da = da.compute()
    eager = validate is True or (validate == "auto" and da.size <= EAGER_CHECK_MAX_VALUES)
    bound = _max_depth(max_depth_mm, step, where)
    guard = {
        "mask_fill": mask_fill,
        "guard": not eager,
        "source": where,
        "name": name,
        "max_depth": bound,
        "dims": list(da.dims),
        "files": _file_starts(parts, da["time"].values) if len(parts) > 1 else None,
    }
    stored = da.data
    labels = _block_labels(da) if bound is not None else []
    da = xr.apply_ufunc(
        convert_block,
        da,
        factor,
        *labels,
        kwargs=guard,
        dask="parallelized",
        output_dtypes=[np.float64],
        keep_attrs=False,
    )
    if is_dask_collection(stored):  # lets compute/_fused.py sum stored float32 and convert the sums
        da.encoding["stored_values"] = StoredValues(
            da.data.name, stored, factor, mask_fill, not eager, where, name, max_depth=bound, dims=list(da.dims)
        )
    if eager:
        check_values(da, where, name)
        da = da.where(~(da < 0), 0.0)  # tiny negatives within tolerance
    if step == "month":
        da = da.assign_coords(time=timeaxis.month_starts(da["time"]))
    native_step = step
    if timeaxis.is_subhourly(step):
        da = timeaxis.sum_to_hours(da, step, source=where)  # missing steps make the hour missing
        step = "hour"
    full = timeaxis.full_axis(da["time"], step)
    gaps = len(full) - da.sizes["time"]
    if gaps > 0 and not da["time"].to_index().isin(full).all():
        gaps = 0  # irregular stamps (mixed times of day): leave the axis as it is
    if gaps > 0:
        da = da.reindex(time=full)  # missing steps become NaN (lazy), so no period is silently short
    out_attrs = {
        "units": "mm",
        "standard_name": "lwe_thickness_of_precipitation_amount",
        "long_name": "precipitation depth per time step",
        "cell_methods": "time: sum",
        "step": step,
        "calendar": timeaxis.calendar_of(da["time"]),
        "original_units": str(attrs.get("units")),
        "original_variable": name,
        "conversion": conversion,
        "sources": "; ".join(sources),
        "cell_bounds": parts[0][0].attrs.get("cell_bounds", "inferred from cell centres"),
        "reader": info["reader"],
    }
    if gaps > 0:
        out_attrs["time_gaps_filled_with_missing"] = int(gaps)
    if fill_note:
        out_attrs["missing_value_heuristics"] = fill_note
    absent = [p[1]["absent_chunks"] for p in parts if p[1].get("absent_chunks")]
    if absent:
        out_attrs["absent_chunks"] = "; ".join(absent)
    if label_note:
        out_attrs["time_labels"] = label_note
    if native_step != step:
        out_attrs["native_step"] = native_step
        out_attrs["conversion"] += (
            f"; {native_step} steps summed to hourly totals (an hour with any missing step is missing)"
        )
    da.attrs = out_attrs
    da.name = "pr"
    return with_history(da, "open_precip", None, source=where, var=name)


def open_elevation(source: Any, var: str | None = None) -> xr.DataArray:
    """Open a terrain grid as elevation in metres on the house grid layout (lat, lon) or (y, x).

    Parameters
    ----------
    source : str, os.PathLike, list, fsspec mapper, xarray.Dataset or xarray.DataArray
        Anything :func:`open_precip` takes.
    var : str, optional
        The elevation variable; found by standard_name (``surface_altitude``) or name
        otherwise.

    Returns
    -------
    xarray.DataArray
        Elevation in metres, in memory, ``units="m"``, with the original units in attrs.

    Raises
    ------
    climwidgets.InputError
        For units that are not a length, more than one time step, or the reader's checks.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> given = xr.DataArray(np.array([[100.0, 2000.0]]), dims=("lat", "lon"),
    ...                      coords={"lat": [10.0], "lon": [0.0, 1.0]}, name="orog",
    ...                      attrs={"units": "ft", "standard_name": "surface_altitude"})
    >>> given = given.assign_coords(lat_lower=("lat", [9.5]), lat_upper=("lat", [10.5]))
    >>> open_elevation(given).values.round(1)
    array([[ 30.5, 609.6]])
    """
    if isinstance(source, (xr.Dataset, xr.DataArray)):
        sources = [source_label(source)]
        da, info = _open_object(source, var, "elevation")
    else:
        resolved = resolve(source)
        sources = [source_label(resolved[0])]
        da, info = _open_part(resolved[0], var, "elevation")
    name = info["name"]
    if "time" in da.dims:
        if da.sizes["time"] != 1:
            raise GridError(
                f"has {da.sizes['time']} time steps",
                source=sources[0],
                variable=name,
                expected="a single terrain field",
                fix="select one time step first",
            )
        da = da.isel(time=0, drop=True)
    factor = length_to_metres(info["attrs"].get("units", "m"), source=sources[0], variable=name)
    da = (da * factor).compute()
    da.attrs = {
        "units": "m",
        "standard_name": "surface_altitude",
        "long_name": "elevation",
        "original_units": str(info["attrs"].get("units", "m (assumed)")),
        "original_variable": name,
        "sources": sources[0],
        "cell_bounds": da.attrs.get("cell_bounds", ""),
    }
    da.name = "elevation"
    return with_history(da, "open_elevation", None, source=sources[0], var=name)
