"""CF-NetCDF export of results: what a planner hands on to another tool or colleague.

``to_netcdf`` turns any result of the suite (a DataArray or Dataset) into a file that
follows the CF conventions 1.10 (checked in the tests with the IOOS compliance checker):

* coordinate attributes: ``lat``/``lon`` get standard names, units, ``axis`` and a
  ``bounds`` variable (``lat_bnds``/``lon_bnds``) built from the house's 1-D
  ``lat_lower``/``lat_upper``/``lon_lower``/``lon_upper`` coordinates, or inferred from the
  centres; curvilinear 2-D ``lat(y, x)``/``lon(y, x)`` become auxiliary coordinates named
  in the data variables' ``coordinates`` attribute, with (y, x, 4) corner bounds;
* ``time`` gets ``standard_name``, ``axis`` and, when the step is known
  (``attrs["step"]``), a ``time_bnds`` variable (each step starts at its time stamp);
* ``year``, ``month`` and ``period`` are not CF time axes here: a season's or water
  year's label is not a point in time, so they stay integer label coordinates with a
  ``long_name`` and ``units`` ("1" for year and month labels, "year" for a return
  period, a length of time).  This keeps the file readable as the suite's own objects
  (dims ``year``/``month``/``period``) and passes the CF checker;
* data variables: ``units`` kept, ``standard_name`` ``lwe_thickness_of_precipitation_amount``
  for precipitation depths, ``long_name`` always, ``cell_methods`` kept (``time: sum``
  added for precipitation per step), zlib compression;
* attributes netCDF cannot store are converted: None dropped, bools to "true"/"false",
  dicts and mixed lists to JSON text, lists of text joined with newlines;
* global ``Conventions``, ``title``, ``history`` (the object's own history plus a line for
  this write), ``source``, ``institution``.

The write is atomic (temporary file in the same folder, then ``os.replace``) and refuses
to overwrite an existing file unless ``overwrite=True``.  The file is written by one
worker thread while the calling thread waits: Ctrl-C (``KeyboardInterrupt``, which Python
delivers to the main thread only) then never lands inside the netCDF/HDF5 library or
between a lock's acquire and release; the writer is told to stop at the next block, closes
the file itself, the temporary file is removed and the interrupt is raised, with any
previous file intact.  A write that fails because the disk filled up (which the netCDF
library reports as "NetCDF: HDF error") is reported as a full disk naming the output
(:class:`climwidgets.atomic.OutputError` with ``errno.ENOSPC``).
"""

from __future__ import annotations

import errno
import json
import numbers
import os
import shutil
import threading
from datetime import date, datetime, timedelta
from pathlib import Path

import numpy as np
import xarray as xr

from .._version import __version__
from ..errors import GridError, ParameterError
from ..provenance import history_line
from ..atomic import OutputExistsError, atomic_write, check_target

__all__ = ["to_netcdf", "prepare_cf", "OutputExistsError", "CONVENTIONS"]

CONVENTIONS = "CF-1.10"
PRECIP_STANDARD_NAME = "lwe_thickness_of_precipitation_amount"
_PRECIP_NAMES = ("pr", "precip", "precipitation", "tp", "rain", "prcp")
_COMPRESSION = {"zlib": True, "complevel": 4, "shuffle": True}
_STEP_DELTA = {"hour": timedelta(hours=1), "day": timedelta(days=1)}
_BOUND_COORDS = ("lat_lower", "lat_upper", "lon_lower", "lon_upper")


# ----------------------------------------------------------------- attribute cleaning
def _clean_value(value):
    """A netCDF-storable attribute value, or None to drop the attribute."""
    if value is None:
        return None
    if isinstance(value, (bool, np.bool_)):
        return "true" if value else "false"
    if isinstance(value, (str, np.str_)):
        return str(value)
    if isinstance(value, numbers.Integral):
        return np.int32(value) if -(2**31) < int(value) < 2**31 else np.float64(value)
    if isinstance(value, numbers.Real):
        return np.float64(value)
    if isinstance(value, (datetime, date, np.datetime64)):
        return str(np.datetime_as_string(value) if isinstance(value, np.datetime64) else value.isoformat())
    if isinstance(value, dict):
        return json.dumps(value, default=str, sort_keys=True)
    if isinstance(value, np.ndarray) and value.ndim <= 1:
        value = value.tolist()
    if isinstance(value, (list, tuple, set)):
        items = list(value)
        if not items:
            return None
        if all(isinstance(v, (str, np.str_)) for v in items):
            return "\n".join(str(v) for v in items)
        if all(isinstance(v, numbers.Integral) and not isinstance(v, (bool, np.bool_)) for v in items):
            return np.asarray(items, dtype=np.int32 if max(abs(int(v)) for v in items) < 2**31 else np.float64)
        if all(isinstance(v, numbers.Real) and not isinstance(v, (bool, np.bool_)) for v in items):
            return np.asarray(items, dtype=np.float64)
        return json.dumps(items, default=str)
    return str(value)


def _clean_attrs(attrs: dict, drop=()) -> dict:
    out = {}
    for key, value in attrs.items():
        if key in drop or key.startswith("_"):
            continue
        cleaned = _clean_value(value)
        if cleaned is not None:
            out[str(key)] = cleaned
    return out


# ----------------------------------------------------------------- coordinates
def _is_time_like(var) -> bool:
    return np.issubdtype(var.dtype, np.datetime64) or (
        var.dtype == object and var.size > 0 and hasattr(np.ravel(var.values)[0], "calendar")
    )


def _time_bounds(time: xr.DataArray, step: str):
    """(n, 2) bounds of each step, assuming a step starts at its time stamp."""
    index = time.to_index()
    if step == "month":
        from ..io.timeaxis import month_starts

        lower = xr.DataArray(month_starts(time).values, dims="t").to_index()
        upper = lower.shift(1, "MS")
    elif step in _STEP_DELTA:
        lower = index.floor("D" if step == "day" else "h")
        upper = lower + _STEP_DELTA[step]
    else:
        return None
    return np.stack([np.asarray(lower), np.asarray(upper)], axis=-1)


def _label_coord_attrs(name: str, var: xr.DataArray, data_attrs: dict) -> dict:
    a = dict(var.attrs)
    if name == "year":
        start = data_attrs.get("season_year_start", data_attrs.get("year_start", 1))
        try:
            start = int(start)
        except (TypeError, ValueError):
            start = 1
        kind = "calendar year" if start == 1 else f"12-month year starting in month {start}"
        a.setdefault("long_name", f"year label ({kind}, labelled by the calendar year in which it ends)")
        a["units"] = "1"
    elif name == "month":
        a.setdefault("long_name", "month of the year (1 = January)")
        a["units"] = "1"
        a.setdefault("valid_range", np.asarray([1, 12], dtype=np.int32))
    elif name == "period":
        a["long_name"] = a.get("long_name", "return period")
        a["units"] = "year"  # a length of time, not a date: no "since" reference
    return a


def _int_dtype(var):
    """int32 for integer/bool variables that fit (CF-1.10 checkers reject int64)."""
    if var.dtype == bool:
        return np.int8
    if np.issubdtype(var.dtype, np.integer) and var.dtype.itemsize > 4:
        if var.size == 0 or var.chunks is not None:
            return np.int32
        vals = np.asarray(var.values)
        if vals.min() > -(2**31) and vals.max() < 2**31:
            return np.int32
        return np.float64
    return None


# ----------------------------------------------------------------- main preparation
def _as_dataset(obj) -> tuple[xr.Dataset, str]:
    if isinstance(obj, xr.DataArray):
        name = obj.name if obj.name is not None else "data"
        name = str(name)
        if name in obj.coords or name in _BOUND_COORDS:
            raise ParameterError(
                f"the DataArray is named {name!r}, like one of its coordinates",
                source="to_netcdf",
                variable=name,
                expected="a variable name distinct from its coordinates",
                fix="rename it first, e.g. da.rename('pr')",
            )
        ds = obj.to_dataset(name=name).copy(deep=False)
        ds.attrs = {"history": obj.attrs["history"]} if "history" in obj.attrs else {}
        ds[name].attrs = {k: v for k, v in obj.attrs.items() if k != "history"}
        return ds, f"DataArray '{name}'"
    if isinstance(obj, xr.Dataset):
        if not obj.data_vars:
            raise ParameterError(
                "the Dataset holds no data variables",
                source="to_netcdf",
                expected="at least one data variable",
                fix="pass the result Dataset, not an empty one",
            )
        return obj.copy(deep=False), "Dataset"
    raise ParameterError(
        f"cannot write a {type(obj).__name__}",
        source="to_netcdf",
        variable="obj",
        expected="an xarray DataArray or Dataset",
        fix="pass a result of the suite; for tables (pandas) use cw.to_csv",
    )


def _looks_like_precip(name: str, attrs: dict) -> bool:
    if attrs.get("units") != "mm":
        return False
    if attrs.get("standard_name") == PRECIP_STANDARD_NAME:
        return True
    if "standard_name" in attrs:
        return False
    text = str(attrs.get("long_name", "")).lower()
    return (
        name.lower() in _PRECIP_NAMES
        or "step" in attrs
        or "cell_methods" in attrs
        or "precipitation" in text
        or "return level" in text
        or "interval" in text
    )


def _add_grid(ds: xr.Dataset, notes: list) -> xr.Dataset:
    from ..geo.grid import cell_bounds

    if "lat" not in ds.variables or "lon" not in ds.variables:
        return ds
    lat, lon = ds["lat"], ds["lon"]
    if lat.ndim == 1 and lon.ndim == 1:
        try:
            b = cell_bounds(ds)
        except GridError:
            b = None
            notes.append("lat/lon cell bounds unknown (single row or column)")
        ds = ds.drop_vars([c for c in _BOUND_COORDS if c in ds.variables])
        ds["lat"].attrs.update(standard_name="latitude", long_name="latitude", units="degrees_north", axis="Y")
        ds["lon"].attrs.update(standard_name="longitude", long_name="longitude", units="degrees_east", axis="X")
        if b is not None and lat.dims[0] == "lat" and lon.dims[0] == "lon":
            ds["lat_bnds"] = (("lat", "nv"), np.stack([b.lat_lower, b.lat_upper], axis=-1))
            ds["lon_bnds"] = (("lon", "nv"), np.stack([b.lon_lower, b.lon_upper], axis=-1))
            ds["lat"].attrs["bounds"] = "lat_bnds"
            ds["lon"].attrs["bounds"] = "lon_bnds"
    elif lat.ndim == 2 and lon.ndim == 2:
        ds["lat"].attrs.update(standard_name="latitude", long_name="latitude", units="degrees_north")
        ds["lon"].attrs.update(standard_name="longitude", long_name="longitude", units="degrees_east")
        for a in ("axis",):
            ds["lat"].attrs.pop(a, None)
            ds["lon"].attrs.pop(a, None)
        try:
            b = cell_bounds(ds)
        except GridError:
            b = None
            notes.append("curvilinear cell corners unknown (single row or column)")
        if b is not None:
            dims = tuple(lat.dims) + ("nv4",)
            ds["lat_bnds"] = (dims, b.lat_corners)
            ds["lon_bnds"] = (dims, b.lon_corners)
            ds["lat"].attrs["bounds"] = "lat_bnds"
            ds["lon"].attrs["bounds"] = "lon_bnds"
    return ds


def prepare_cf(obj, title=None, source=None, institution=None, path=None) -> tuple[xr.Dataset, dict]:
    """The Dataset and encoding that :func:`to_netcdf` writes (no file is touched).

    Exposed so that callers can inspect or extend the CF metadata before writing.
    """
    ds, what = _as_dataset(obj)
    notes: list[str] = []
    step = next((str(ds[v].attrs["step"]) for v in ds.data_vars if "step" in ds[v].attrs), None)
    data_attrs = {k: v for v in ds.data_vars for k, v in ds[v].attrs.items()}

    ds = _add_grid(ds, notes)

    # time axis and its bounds
    if "time" in ds.dims and "time" in ds.coords and ds["time"].ndim == 1 and _is_time_like(ds["time"]):
        ds["time"].attrs = {k: v for k, v in ds["time"].attrs.items() if k not in ("units", "calendar", "bounds")}
        ds["time"].attrs.update(standard_name="time", long_name="time", axis="T")
        bnds = _time_bounds(ds["time"], step) if step else None
        if bnds is not None:
            ds["time_bnds"] = (("time", "nv"), bnds)
            ds["time"].attrs["bounds"] = "time_bnds"
            notes.append(f"time_bnds: each {step} starts at its time stamp")

    for name in ("year", "month", "period"):
        if name in ds.coords and ds[name].ndim == 1:
            ds[name].attrs = _label_coord_attrs(name, ds[name], data_attrs)

    encoding: dict = {}
    coord_like = set(ds.coords) | {v for v in ds.data_vars if v.endswith("_bnds")}
    for vname in list(ds.variables):
        var = ds[vname]
        is_bounds = vname.endswith("_bnds")
        drop = ("units", "calendar") if _is_time_like(var) else ()
        attrs = _clean_attrs(var.attrs, drop=drop)
        if is_bounds:
            attrs = {}  # CF: bounds inherit the parent's metadata
        enc: dict = {}
        aux_names = None
        if vname in coord_like or is_bounds:
            enc["_FillValue"] = None
        if _is_time_like(var):
            enc["dtype"] = "float64"
            enc["units"] = var.encoding.get("units") or "days since 1970-01-01 00:00:00"
            if var.dtype == object:
                enc["calendar"] = np.ravel(var.values)[0].calendar
        dt = _int_dtype(var)
        if dt is not None:
            enc["dtype"] = dt
            if var.dtype == bool:
                attrs.setdefault("flag_values", np.asarray([0, 1], dtype=np.int8))
                attrs.setdefault("flag_meanings", "false true")
        if var.dtype.kind in "OUS" and not _is_time_like(var):
            pass  # strings: netCDF4 variable-length strings
        elif vname not in coord_like and var.ndim >= 1:
            enc.update(_COMPRESSION)
        if vname in ds.data_vars and not is_bounds:
            if _looks_like_precip(vname, attrs):
                attrs["standard_name"] = PRECIP_STANDARD_NAME
                attrs.setdefault("long_name", "precipitation depth")
                if "step" in attrs:
                    attrs.setdefault("cell_methods", "time: sum")
            attrs.setdefault("long_name", vname.replace("_", " "))
            if "lat" in ds.coords and ds["lat"].ndim == 2 and set(ds["lat"].dims) <= set(var.dims):
                aux = [c for c in ds.coords if c not in ds.dims and set(ds[c].dims) <= set(var.dims)]
                aux_names = " ".join(sorted(aux))
        elif vname in ds.coords and vname not in ds.dims and var.dtype.kind in "iufb":
            attrs.setdefault("long_name", vname.replace("_", " "))
            attrs.setdefault("units", "1")
        var.attrs = attrs
        # Bounds carry no "coordinates" attribute (CF 7.1: they inherit the parent's).
        var.encoding = {"coordinates": None} if is_bounds else {"coordinates": aux_names} if aux_names else {}
        encoding[vname] = enc

    g = _clean_attrs(ds.attrs, drop=("history", "Conventions", "title", "source", "institution"))
    previous = str(ds.attrs.get("history", "")).strip()
    line = history_line("to_netcdf", path=str(path) if path else None)
    g.update(
        Conventions=CONVENTIONS,
        title=str(title) if title else _default_title(ds),
        history=f"{previous}\n{line}" if previous else line,
        source=str(source) if source else f"climwidgets {__version__} ({what})",
    )
    if institution:
        g["institution"] = str(institution)
    if notes:
        g["comment"] = "; ".join(notes)
    ds.attrs = g
    return ds, encoding


def _default_title(ds: xr.Dataset) -> str:
    names = [str(ds[v].attrs.get("long_name", v)) for v in ds.data_vars if not str(v).endswith("_bnds")]
    return ", ".join(names[:3]) + (" …" if len(names) > 3 else "")


def _write_dataset(ds: xr.Dataset, tmp: Path, encoding: dict) -> None:
    """The actual write; a separate function so tests can make it fail mid-way."""
    ds.to_netcdf(tmp, mode="w", format="NETCDF4", engine="netcdf4", encoding=encoding)


class _Stopped(Exception):
    """Raised in the writer thread between two blocks after the caller was interrupted."""


def _free_bytes(folder) -> int:
    """Free space for an unprivileged writer in ``folder`` (a function so tests can set it)."""
    return shutil.disk_usage(folder).free


# Below this much free space a failed write is taken to be the full disk: the netCDF
# library reports ENOSPC only as "NetCDF: HDF error", and HDF5 fails once a chunk no
# longer fits, so the space left is at most about one chunk.
_FULL_DISK_MARGIN = 8 * 2**20


def _largest_chunk_bytes(ds: xr.Dataset) -> int:
    largest = 0
    for var in ds.variables.values():
        shape = [max(c) for c in var.chunks] if var.chunks else list(var.shape)
        largest = max(largest, int(np.prod(shape, dtype=np.int64)) * var.dtype.itemsize)
    return largest


def _disk_full_error(exc: BaseException, ds: xr.Dataset, tmp: Path) -> OSError | None:
    """An ENOSPC OSError when ``exc`` from the netCDF library came from a full disk."""
    if isinstance(exc, OSError) and exc.errno is not None:
        return None  # already says what it is
    if not isinstance(exc, (RuntimeError, OSError)):
        return None
    try:
        free = _free_bytes(tmp.parent)
    except OSError:
        return None
    if free > max(_FULL_DISK_MARGIN, _largest_chunk_bytes(ds)):
        return None
    return OSError(
        errno.ENOSPC,
        f"{os.strerror(errno.ENOSPC)} ({free} bytes free; the netCDF library said: {' '.join(str(exc).split())})",
    )


# Lazy results up to this size are computed in memory before the file is opened, so that an
# interrupt stops the computation with no file open; larger ones are written block by block
# and an interrupt waits for the write to end (the file is then discarded).
_IN_MEMORY_LIMIT = 2 * 2**30


def _compute_stoppable(ds: xr.Dataset, stop: threading.Event) -> xr.Dataset:
    """``ds.compute()`` that raises :class:`_Stopped` between two blocks once ``stop`` is set."""
    from dask.callbacks import Callback

    ident = threading.get_ident()

    def pretask(key, dsk, state):
        if stop.is_set() and threading.get_ident() == ident:  # only this computation's scheduler loop
            raise _Stopped()

    with Callback(pretask=pretask):
        return ds.compute()


def _write_in_worker(ds: xr.Dataset, tmp: Path, encoding: dict) -> None:
    """Write in a worker thread; on KeyboardInterrupt stop it cleanly, then re-raise.

    Python raises KeyboardInterrupt in the main thread only, so the netCDF/HDF5 calls made
    by the worker are never cut in the middle (where a held file lock would deadlock the
    close).  Lazy data are computed first, with no file open, and that computation stops
    at the next block when interrupted.
    """
    stop = threading.Event()
    outcome: dict = {}

    def run():
        try:
            data = ds
            if any(v.chunks for v in ds.variables.values()) and ds.nbytes <= _IN_MEMORY_LIMIT:
                data = _compute_stoppable(ds, stop)
            if stop.is_set():
                raise _Stopped()
            _write_dataset(data, tmp, encoding)
        except BaseException as exc:  # handed to the calling thread below
            outcome["error"] = exc

    writer = threading.Thread(target=run, name="climwidgets-netcdf-writer")
    writer.start()
    interrupted = False
    while writer.is_alive():
        try:
            writer.join(0.2)
        except KeyboardInterrupt:
            interrupted = True  # the writer stops at the next block, or finishes and is discarded
            stop.set()
    if interrupted:
        raise KeyboardInterrupt
    error = outcome.get("error")
    if error is not None:
        full = _disk_full_error(error, ds, tmp)
        if full is not None:
            raise full from error
        raise error


def to_netcdf(
    obj,
    path,
    overwrite: bool = False,
    title: str | None = None,
    source: str | None = None,
    institution: str | None = None,
) -> Path:
    """Write a DataArray or Dataset to a CF-1.10 NetCDF file, atomically.

    Parameters
    ----------
    obj
        A result of the suite (lazy dask arrays are computed chunk by chunk as written).
    path
        Output file; its folder must exist.
    overwrite
        Replace an existing file.  Without it an existing file raises
        :class:`OutputExistsError` (an ``InputError`` and a ``FileExistsError``).
    title, source, institution
        Global attributes; ``title`` defaults to the variables' long names and ``source``
        to the package and version.

    Returns
    -------
    pathlib.Path of the written file.  The object itself is not modified.
    """
    target = check_target(path, overwrite, "to_netcdf")
    ds, encoding = prepare_cf(obj, title=title, source=source, institution=institution, path=target.name)
    return atomic_write(target, overwrite, lambda tmp: _write_in_worker(ds, tmp, encoding), "to_netcdf")
