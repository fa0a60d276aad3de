"""Open precipitation and terrain grids lazily, in the house conventions (DESIGN.md §3).

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

import dask.base
import numpy as np
import xarray as xr

from ..errors import DataValueError, GridError, MismatchError, TimeAxisError, UnitsError, VariableError
from ..provenance import with_history
from . import grid as gridmod
from . import timeaxis
from .chunkreader import StoredValues, backend_reader, direct_reader
from .sources import open_raw, resolve
from .units import UnitInfo, length_to_metres, parse_units

PRECIP_STANDARD_NAMES = (
    "lwe_thickness_of_precipitation_amount", "precipitation_amount", "precipitation_flux",
    "lwe_precipitation_rate", "thickness_of_rainfall_amount", "rainfall_amount", "rainfall_flux",
    "rainfall_rate", "lwe_thickness_of_stratiform_precipitation_amount",
    "lwe_thickness_of_convective_precipitation_amount", "convective_precipitation_flux",
    "stratiform_precipitation_flux", "lwe_convective_precipitation_rate",
)
PRECIP_NAMES = ("pr", "precip", "precipitation", "prcp", "tp", "rain", "rainfall", "ppt", "rr", "prec", "apcp")
ELEVATION_STANDARD_NAMES = ("surface_altitude", "height_above_mean_sea_level", "altitude", "height_above_geoid")
ELEVATION_NAMES = ("elevation", "orog", "orography", "elev", "z", "hgt", "height", "topo", "dem", "altitude")
TARGET_CHUNK_BYTES = 32 * 2**20
MIN_STORED_PER_TASK = 10
# Read deflate/shuffle-compressed NetCDF-4 chunks directly so threads decompress in parallel
# (see chunkreader); False falls back to xarray's netCDF4 backend everywhere.
DIRECT_CHUNK_READS = True
NEGATIVE_TOLERANCE_MM = 0.01  # tiny negatives from packing or interpolation are set to 0
EAGER_CHECK_MAX_VALUES = 20_000_000  # small inputs are checked for bad values at open
_LIKELY_FILL = (-9999.0, -999.0, -99999.0)


def _describe(ds, name) -> str:
    a = ds[name].attrs
    return f"{name} (units={a.get('units', '?')!r}, standard_name={a.get('standard_name', '-')}, dims={ds[name].dims})"


def _choose_variable(ds: xr.Dataset, var, source, standard_names, names, kind) -> str:
    data_vars = [n for n in ds.data_vars if not n.endswith(("_bnds", "_bounds")) and ds[n].ndim >= 2]
    listing = "; ".join(_describe(ds, n) for n in ds.data_vars) or "none"
    if var is not None:
        if var not in ds.data_vars:
            raise VariableError(f"has no variable '{var}'", source=source, variable=var,
                                expected=f"one of the file's variables: {listing}", fix="pass var= with one of those names")
        return var
    by_sn = [n for n in data_vars if ds[n].attrs.get("standard_name") in standard_names]
    if len(by_sn) == 1:
        return by_sn[0]
    units_parser = parse_units if kind == "precipitation" else length_to_metres

    def plausible(n):
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
            raise VariableError(f"has '{bare[0]}' without units, while {', '.join(pool)} has precipitation units",
                                source=source, variable=bare[0], expected="units on the precipitation variable",
                                fix=f"set the 'units' attribute of '{bare[0]}', or pass var='{pool[0]}' if that "
                                    "is the precipitation")
    if len(pool) == 1:
        return pool[0]
    named = [n for n in (pool or data_vars) if n.lower() in names]
    if len(named) == 1:
        return named[0]
    if len(pool) > 1:
        raise VariableError(f"has several {kind}-like variables: {', '.join(pool)}", source=source,
                            expected=f"exactly one {kind} variable", fix=f"pass var= with one of: {', '.join(pool)}")
    raise VariableError(f"has no {kind}-like variable (found: {listing})", source=source,
                        expected=f"a variable with a {kind} standard_name or units",
                        fix="pass var= with the variable's name, and make sure it has a 'units' attribute")


def _chunk_plan(var: xr.Variable, dims: tuple, time_dim: str | None) -> dict:
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


def _decode_time(ds: xr.Dataset, tname: str, source) -> tuple[xr.DataArray, xr.DataArray | None]:
    tvar = ds[tname]
    timeaxis.check_calendar(tvar.attrs.get("calendar"), source=source, variable=tname)
    raw = tvar.values
    if np.issubdtype(np.asarray(raw).dtype, np.number):
        timeaxis.check_monotonic(raw, source=source)
    bname = tvar.attrs.get("bounds")
    keep = [tname] + ([bname] if bname in ds.variables else [])
    small = xr.Dataset({n: ds[n].variable for n in keep if n != tname}, coords={tname: tvar.variable})
    units = str(tvar.attrs.get("units", "")).strip()
    unit_word = units.split(" ")[0].lower()
    if " since " not in units and not np.issubdtype(tvar.dtype, np.datetime64) and tvar.dtype != object:
        raise TimeAxisError("has time values without CF units (" + (f"units={units!r})" if units else "no units attribute)"),
                            source=source,
                            variable=tname, expected="units such as 'days since 2001-01-01'",
                            fix=f"set the units attribute of '{tname}', e.g. ds['{tname}'].attrs['units'] = "
                                "'days since 2001-01-01', and save a copy of the file")
    try:
        decoded = xr.decode_cf(small).load()  # decode now, so bad stamps or bounds fail here
    except Exception as exc:
        if unit_word in ("month", "months", "year", "years", "common_year", "common_years"):
            raise TimeAxisError(f"has time units '{units}': a {unit_word.rstrip('s')} has no fixed length in the "
                                f"'{tvar.attrs.get('calendar', 'standard')}' calendar", source=source,
                                variable=tname, expected="units of days, hours or seconds since a date",
                                fix="rewrite the time as 'days since ...' (for example with cftime.date2num)") from None
        raise TimeAxisError(f"has a time axis that cannot be decoded ({type(exc).__name__}: {exc})", source=source,
                            variable=tname, expected="CF time units such as 'days since 1990-01-01'",
                            fix="set the time variable's units and calendar attributes") from None
    bounds = decoded[bname] if bname in decoded else None
    return decoded[tname], bounds


def _user_plan(plan: dict, chunks: dict, da, ds, tname, latn, lonn) -> dict:
    """Apply chunk sizes given with house names (time, lat, lon, y, x) to the file's own dims."""
    names = {}
    if tname:
        names["time"] = ds[tname].dims[0]
    lat, lon = ds[latn], ds[lonn]
    if lat.ndim == 1:
        names["lat"], names["lon"] = lat.dims[0], lon.dims[0]
    else:
        names["y"], names["x"] = lat.dims
    for key, size in chunks.items():
        dim = names.get(key, key)
        if dim in plan:
            plan[dim] = da.sizes[dim] if size in (-1, None) else int(size)
    return plan


def _check_packing(da: xr.DataArray, source, name) -> None:
    """scale_factor, add_offset, _FillValue and missing_value must be numbers to be applied."""
    for key in ("scale_factor", "add_offset", "_FillValue", "missing_value"):
        for where in (da.encoding, da.attrs):
            value = where.get(key)
            if value is None:
                continue
            arr = np.asarray(value)
            if arr.dtype.kind not in "biuf" or (key in ("scale_factor", "add_offset") and arr.size != 1):
                raise DataValueError(f"has {key}={value!r}, which is not a number", source=source, variable=name,
                                     expected=f"a numeric {key} attribute",
                                     fix=f"correct or delete the {key} attribute (for example with ncatted or "
                                         "netCDF4) in a copy of the file")
            if key in ("scale_factor", "add_offset") and not np.all(np.isfinite(arr)):
                raise DataValueError(f"has {key}={value!r}", source=source, variable=name,
                                     expected=f"a finite {key}", fix=f"correct the {key} attribute in a copy of the file")


def _open_part(path, var, kind, chunks="auto"):
    """One file: choose the variable, decode time, find lat/lon, normalise the grid."""
    ds = open_raw(path)
    sn, names = (PRECIP_STANDARD_NAMES, PRECIP_NAMES) if kind == "precipitation" else (ELEVATION_STANDARD_NAMES, ELEVATION_NAMES)
    name = _choose_variable(ds, var, path, sn, names, kind)
    da = ds[name]
    _check_packing(da, path, name)
    tname = gridmod.find_coord(ds, da, "time")
    latn, lonn = gridmod.find_coord(ds, da, "lat"), gridmod.find_coord(ds, da, "lon")
    if latn is None or lonn is None:
        raise GridError("has no latitude/longitude coordinates", source=path, variable=name,
                        expected="lat and lon coordinate variables (CF units degrees_north/degrees_east)",
                        fix="add lat/lon coordinates; projected grids need 2-D lat(y, x) and lon(y, x) variables")
    info = {"name": name, "path": path, "attrs": dict(da.attrs)}
    if kind == "precipitation" and tname is None:
        raise TimeAxisError("has no time coordinate", source=path, variable=name,
                            expected="a CF time coordinate", fix="open a file that has a time axis")
    spatial = [d for d in ds[latn].dims] + [d for d in ds[lonn].dims if d not in ds[latn].dims]
    extra = [d for d in da.dims if d not in spatial and (tname is None or d not in ds[tname].dims)]
    for d in extra:
        if da.sizes[d] != 1:
            raise GridError(f"has an extra dimension '{d}' of length {da.sizes[d]}", source=path, variable=name,
                            expected="dimensions time, lat, lon (singleton extras are dropped)",
                            fix=f"select one {d} first, e.g. xr.open_dataset(path)['{name}'].isel({d}=0)")
    plan = _chunk_plan(da.variable, da.dims, ds[tname].dims[0] if tname else None)
    if isinstance(chunks, dict):
        plan = _user_plan(plan, chunks, da, ds, tname, latn, lonn)
    info["encoding"] = dict(da.encoding)
    # a token from the file's identity (path, size, mtime), so reopening an unchanged file
    # gives the same dask names and caches keyed on them are hit
    stat = os.stat(path) if os.path.exists(path) else None
    ident = dask.base.tokenize(path, name, plan, stat.st_size if stat else None, stat.st_mtime_ns if stat else None)
    direct = None
    if DIRECT_CHUNK_READS and "_Unsigned" not in da.encoding and "_Unsigned" not in da.attrs:
        direct = direct_reader(path, name, da.encoding, tuple(plan[d] for d in da.dims),
                               name=f"open_precip-{name}-direct-{ident}")
    if direct is not None:
        da = xr.DataArray(direct, dims=da.dims, coords=da.coords, attrs=da.attrs)
        da = da.isel({d: 0 for d in extra}, drop=True)
    else:
        da = da.isel({d: 0 for d in extra}, drop=True)
        data = backend_reader(da.variable, path, name, tuple(plan[d] for d in da.dims),
                              name=f"open_precip-{name}-{ident}")
        da = xr.DataArray(data, dims=da.dims, coords=da.coords, attrs=da.attrs)
    info["reader"] = "direct chunk reads (parallel decompression)" if direct is not None else "xarray netCDF4 backend"
    da = da.reset_coords(drop=True)
    if tname is not None:
        time, tb = _decode_time(ds, tname, path)
        tdim = ds[tname].dims[0]
        da = da.rename({tdim: "time"}).assign_coords(time=("time", time.values, {"standard_name": "time"}))
        info["time_bounds"] = tb
        info["calendar"] = timeaxis.calendar_of(da["time"])
    lat, lon = ds[latn], ds[lonn]
    if lat.ndim == 1 and lon.ndim == 1:
        da = da.rename({lat.dims[0]: "lat", lon.dims[0]: "lon"})
        da = da.assign_coords(lat=("lat", lat.values, dict(lat.attrs)), lon=("lon", lon.values, dict(lon.attrs)))
        edges = []
        for c in (lat, lon):
            b = c.attrs.get("bounds")
            edges.append(gridmod.bounds_to_edges(ds[b].values, c.values) if b in ds.variables else None)
        da = gridmod.normalise_rectilinear(da, edges[0], edges[1], source=path)
        order = ["time", "lat", "lon"] if "time" in da.dims else ["lat", "lon"]
        da = da.transpose(*order)
    elif lat.ndim == 2 and lon.ndim == 2:
        ydim, xdim = lat.dims
        da = da.rename({ydim: "y", xdim: "x"})
        da = da.assign_coords(lat=(("y", "x"), lat.values, dict(lat.attrs)), lon=(("y", "x"), lon.values, dict(lon.attrs)))
        da.attrs["cell_bounds"] = "inferred from cell centres"
        da = da.transpose(*(["time"] if "time" in da.dims else []), "y", "x")
    else:
        raise GridError("has latitude and longitude of different shapes", source=path, variable=f"{latn}/{lonn}",
                        expected="both 1-D (rectilinear) or both 2-D (curvilinear)", fix="repair the coordinates")
    info["grid"] = (da["lat"].values, da["lon"].values)
    return da, info


def _same_grid(a, b) -> bool:
    return all(x.shape == y.shape and np.allclose(x, y, atol=1e-6) for x, y in zip(a, b))


def _combine(parts, source_list):
    first_da, first = parts[0]
    u0 = parse_units(first["attrs"].get("units"), source=first["path"], variable=first["name"])
    for da, info in parts[1:]:
        u = parse_units(info["attrs"].get("units"), source=info["path"], variable=info["name"])
        if (u.kind, u.to_mm, u.per_month) != (u0.kind, u0.to_mm, u0.per_month):
            raise MismatchError(f"has units '{u.text}' but {first['path']} has '{u0.text}'", source=info["path"],
                                variable=info["name"], expected="the same units in every file of one product",
                                fix="open the files separately, or convert them to common units first")
        if info.get("calendar") != first.get("calendar"):
            raise MismatchError(f"uses the calendar '{info.get('calendar')}' but {first['path']} uses "
                                f"'{first.get('calendar')}'", source=info["path"], variable="time",
                                expected="one calendar across the files", fix="open the files as separate products")
        if not _same_grid(info["grid"], first["grid"]):
            raise MismatchError(f"is on a different grid from {first['path']}", source=info["path"],
                                variable=info["name"], expected="the same lat/lon grid in every file",
                                fix="open the files as separate products and use cw.regrid to bring them together")
    if len(parts) == 1:
        return first_da, first["time_bounds"]
    parts = sorted(parts, key=lambda p: p[0]["time"].values[0])
    da = xr.concat([p[0] for p in parts], dim="time", coords="minimal", compat="override", join="override",
                   combine_attrs="override")
    timeaxis.check_monotonic(da["time"].values, source=", ".join(source_list[:3]) + (" …" if len(source_list) > 3 else ""))
    bounds = [p[1]["time_bounds"] for p in parts]
    tb = xr.concat(bounds, dim=bounds[0].dims[0]) if all(b is not None for b in bounds) else None
    return da, tb


def _needs_fill_heuristics(encoding: dict, attrs: dict) -> bool:
    """Files without a _FillValue sometimes store 1e20 or -9999 for missing values."""
    return not ("_FillValue" in encoding or "missing_value" in encoding or "_FillValue" in attrs)


def _conversion(da: xr.DataArray, units: UnitInfo, step: str, source, name):
    """Factor per time step that turns stored values into mm per step, and its description."""
    if units.kind == "depth":
        return units.to_mm, f"depth in '{units.text}' x {units.to_mm:g} -> mm"
    if units.per_month:
        if step != "month":
            raise UnitsError(f"has per-month units '{units.text}' but {step}ly time steps", source=source,
                             variable=name, expected="monthly data for per-month units",
                             fix="set the units to the actual rate (for example mm/day)")
        return units.to_mm, f"monthly depth in '{units.text}' x {units.to_mm:g} -> mm"
    seconds = timeaxis.step_seconds(da["time"], step)
    how = ("x days in each month of the file's calendar x 86400 s" if step == "month"
           else f"x {timeaxis.STEP_SECONDS[step]:g} s per {step}")
    return seconds * units.to_mm, f"rate in '{units.text}' x {units.to_mm:g} -> mm/s, {how}"


def _convert_block(block, factor, mask_fill: bool, guard: bool, source=None, name=None):
    """Stored values -> mm per step (float64 for accurate sums), with few passes over a chunk.

    Two NaN-ignoring reductions (min, max) tell whether a chunk holds fill codes or
    negatives at all, so the usual chunk costs those two reductions and one multiply.
    ``guard`` raises on negatives beyond the tolerance and zeroes the tiny ones; it runs as
    each chunk is read, so large inputs are checked without a separate pass. The input
    block is never modified (dask may share it).
    """
    b = np.asarray(block)
    if b.size == 0:
        return b.astype(np.float64)
    flat = b.reshape(-1)
    lo, hi = float(np.fmin.reduce(flat)), float(np.fmax.reduce(flat))
    x = b.astype(np.float64)  # a new array: the input block is left as it is
    if not (np.isscalar(factor) and factor == 1.0):
        x *= factor  # (np.multiply with dtype= would take numpy's slow buffered casting path)
    if mask_fill and (hi >= 1e15 or lo <= min(_LIKELY_FILL, key=abs) or lo <= -1e15):
        bad = (np.abs(b) >= 1e15) | np.isin(b, _LIKELY_FILL)
        x[bad] = np.nan
        lo = float(np.fmin.reduce(x.reshape(-1))) if (~bad).any() else 0.0
    elif lo < 0:
        lo = float(np.fmin.reduce(x.reshape(-1)))  # in mm, after the factor
    if guard and lo < 0:
        if lo < -NEGATIVE_TOLERANCE_MM:
            raise DataValueError(f"has negative precipitation (lowest {lo:.4g} mm) in a chunk read from disk",
                                 source=source, variable=name, expected="precipitation depths >= 0",
                                 fix="open with validate=True to find where, and check scale_factor/add_offset and units")
        x[x < 0] = 0.0
    return x


def _check_values(da: xr.DataArray, source, name):
    """Negative depths and all-missing data, checked in one pass."""
    import dask

    lowest, valid = dask.compute(da.min(skipna=True), da.count())
    if int(valid) == 0:
        raise DataValueError("contains no valid values (all missing)", source=source, variable=name,
                             expected="some non-missing precipitation", fix="check _FillValue/missing_value and the period chosen")
    if float(lowest) < -NEGATIVE_TOLERANCE_MM:
        neg = da < -NEGATIVE_TOLERANCE_MM
        count = int(neg.sum())
        where = neg.argmax(dim=...)
        loc = ", ".join(f"{k}={da[k].values[int(v)]}" for k, v in where.items())
        raise DataValueError(f"has {count} negative value(s) below -{NEGATIVE_TOLERANCE_MM} mm (lowest {float(lowest):.4g} mm; "
                             f"first at {loc})", source=source, variable=name,
                             expected="precipitation depths >= 0", fix="check the scale_factor/add_offset and units; "
                             "clip small negatives with .clip(min=0) if they are interpolation noise")


def open_precip(source, var=None, chunks="auto", validate="auto") -> xr.DataArray:
    """Open precipitation lazily as depth per time step in mm.

    Parameters
    ----------
    source
        A NetCDF path, a glob pattern, a list of paths (combined along time), an OPeNDAP
        URL, or a Zarr store.
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

    Time stamps are taken as the start of each step. Hourly or daily files whose CF time
    bounds show the stamp at the end of the step are relabelled to the start
    (``attrs["time_labels"]`` says so); without bounds the two cannot be told apart.

    Returns
    -------
    xr.DataArray with dims (time, lat, lon) or (time, y, x), ``units="mm"``, ``step`` in
    {"hour", "day", "month"}, and the original units, conversion and sources in attrs.
    """
    sources = resolve(source)
    parts = [_open_part(p, var, "precipitation", chunks) for p in sources]
    da, tbounds = _combine(parts, sources)
    info = parts[0][1]
    name, attrs = info["name"], info["attrs"]
    where = sources[0] if len(sources) == 1 else f"{sources[0]} (+{len(sources) - 1} more)"
    step = timeaxis.infer_step(da["time"], tbounds, source=where)
    units = parse_units(attrs.get("units"), source=where, variable=name)
    mask_fill = _needs_fill_heuristics(info["encoding"], attrs)
    fill_note = ("values >= 1e15 and -9999/-999/-99999 treated as missing (no _FillValue in the file)"
                 if mask_fill else None)
    factor, conversion = _conversion(da, units, step, where, name)
    if chunks is None:
        da = da.compute()
    eager = validate is True or (validate == "auto" and da.size <= EAGER_CHECK_MAX_VALUES)
    guard = {"mask_fill": mask_fill, "guard": not eager, "source": where, "name": name}
    stored = da.data
    da = xr.apply_ufunc(_convert_block, da, factor, kwargs=guard,
                        dask="parallelized", output_dtypes=[np.float64], keep_attrs=False)
    if dask.is_dask_collection(stored):  # lets compute/_fused.py sum stored float32 and convert the sums
        da.encoding["stored_values"] = StoredValues(da.data.name, stored, factor, mask_fill, not eager, where, name)
    if eager:
        _check_values(da, where, name)
        da = da.where(~(da < 0), 0.0)  # tiny negatives within tolerance
    if step == "month":
        da = da.assign_coords(time=timeaxis.month_starts(da["time"]))
    label_note = None
    if step in ("hour", "day") and tbounds is not None and tbounds.shape == (da.sizes["time"], 2):
        # Sums are attributed by the time stamp, taken as the start of each step. Files that
        # stamp the end of the interval (common for hourly accumulations) say so in their
        # CF time bounds: relabel those to the interval start, so that no hour or day is
        # counted in the next month or year.
        lower, upper = tbounds.values[:, 0], tbounds.values[:, 1]
        if np.all(da["time"].values == upper) and not np.all(da["time"].values == lower):
            da = da.assign_coords(time=("time", lower, da["time"].attrs))
            label_note = "time stamps marked the end of each step (time bounds); relabelled to the start"
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
    if label_note:
        out_attrs["time_labels"] = label_note
    da.attrs = out_attrs
    da.name = "pr"
    return with_history(da, "open_precip", None, source=where, var=name)


def open_elevation(source, var=None) -> xr.DataArray:
    """Open a terrain grid as elevation in metres on the house grid layout (lat, lon) or (y, x)."""
    sources = resolve(source)
    da, info = _open_part(sources[0], var, "elevation")
    name = info["name"]
    if "time" in da.dims:
        if da.sizes["time"] != 1:
            raise GridError(f"has {da.sizes['time']} time steps", source=sources[0], variable=name,
                            expected="a single terrain field", fix="select one time step first")
        da = da.isel(time=0, drop=True)
    factor = length_to_metres(info["attrs"].get("units", "m"), source=sources[0], variable=name)
    da = (da * factor).compute()
    da.attrs = {"units": "m", "standard_name": "surface_altitude", "long_name": "elevation",
                "original_units": str(info["attrs"].get("units", "m (assumed)")), "original_variable": name,
                "sources": sources[0], "cell_bounds": da.attrs.get("cell_bounds", "")}
    da.name = "elevation"
    return with_history(da, "open_elevation", None, source=sources[0], var=name)
