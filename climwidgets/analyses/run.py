"""Computing several analyses together, in one pass over the data.

``compute(a, b, ...)`` gathers the dask arrays of every variable (and coordinate) of the
given xarray objects and computes them in one ``dask.compute``, so chunks shared by the
analyses (all built on one :func:`cw.climatology_bundle`) are read once.  It works on the
arrays themselves, as ``Dataset.compute`` does, rather than on the Datasets as dask
collections (which some dask versions fail to finalize when the graphs overlap).
"""

from __future__ import annotations

from typing import Any

from dask.base import compute as dask_compute
from dask.base import is_dask_collection
import xarray as xr

__all__ = ["compute", "monthly_source", "small_in_memory", "IN_MEMORY_BYTES"]


def _walk(obj: Any, found: list[tuple[tuple[Any, ...], Any]], path: tuple[Any, ...] = ()) -> None:
    if isinstance(obj, (xr.Dataset, xr.DataArray)):
        found.append((path, obj))
    elif isinstance(obj, dict):
        for k, v in obj.items():
            _walk(v, found, path + (k,))
    elif isinstance(obj, (list, tuple)):
        for i, v in enumerate(obj):
            _walk(v, found, path + (i,))


def _variables(obj: Any) -> dict[tuple[Any, ...], xr.Variable]:
    if isinstance(obj, xr.DataArray):
        return {**{("coord", k): v.variable for k, v in obj.coords.items()}, ("data",): obj.variable}
    return {("var", k): v for k, v in obj.variables.items()}


def _rebuild(obj: Any, values: dict[tuple[Any, ...], Any]) -> Any:
    out = obj.copy(deep=False)
    for key, value in values.items():
        if key == ("data",):
            out.variable.data = value
        elif key[0] == "coord":
            out[key[1]].variable.data = value
        else:
            out.variables[key[1]].data = value
    return out


def _replace(obj: Any, path: tuple[Any, ...], new: Any) -> Any:
    if not path:
        return new
    head, rest = path[0], path[1:]
    if isinstance(obj, dict):
        return {**obj, head: _replace(obj[head], rest, new)}
    items = list(obj)
    items[head] = _replace(items[head], rest, new)
    return type(obj)(items) if isinstance(obj, tuple) else items


def compute(*objs: Any, **dask_kwargs: Any) -> Any:
    """Compute xarray objects (possibly inside dicts, lists, tuples) in one dask pass.

    Parameters
    ----------
    *objs : Any
        xarray Datasets or DataArrays, or dicts, lists and tuples holding them; any other
        value passes through unchanged.
    **dask_kwargs : Any
        Passed on to ``dask.compute`` (``scheduler=...``, for example).

    Returns
    -------
    Any
        A tuple with one item per argument: the same structure, with every xarray object
        in memory.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> a = xr.DataArray(np.arange(4.0), dims="x").chunk(2)
    >>> (out,) = compute({"a": a, "n": 3})
    >>> out["a"].chunks is None, out["n"]
    (True, 3)
    """
    found: list[tuple[tuple[Any, ...], Any]] = []
    _walk(objs, found)
    lazy: list[tuple[tuple[Any, ...], tuple[Any, ...], Any]] = []
    for path, obj in found:
        for key, var in _variables(obj).items():
            if is_dask_collection(var.data):
                lazy.append((path, key, var.data))
    values = dask_compute(*[x for _, _, x in lazy], **dask_kwargs) if lazy else ()  # type: ignore[no-untyped-call]
    by_path: dict[tuple[Any, ...], dict[tuple[Any, ...], Any]] = {}
    for (path, key, _), value in zip(lazy, values):
        by_path.setdefault(path, {})[key] = value
    out = objs
    for path, obj in found:
        if path in by_path:
            out = _replace(out, path, _rebuild(obj, by_path[path]))
    return out


#: Monthly totals up to this size are computed once and kept in memory for interactive use.
IN_MEMORY_BYTES = 256 * 2**20


def monthly_source(pr: xr.DataArray) -> xr.DataArray:
    """Monthly totals of ``pr`` for interactive analyses.

    Where they fit in memory (:data:`IN_MEMORY_BYTES`) they are computed once — one read
    of every stored chunk — and kept in the result cache (``climwidgets.cache``), so every
    later analysis of the same data (another season, a new basin, another widget) reads
    nothing.  Larger ones stay lazy and each analysis reads the data again.

    Parameters
    ----------
    pr : xarray.DataArray
        Precipitation (daily or monthly, ``attrs["step"] == "month"`` for monthly).

    Returns
    -------
    xarray.DataArray
        Monthly totals: in memory when they were lazy and small, else lazy.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> t = xr.date_range("2000-01-01", periods=3, freq="MS")
    >>> pr = xr.DataArray(np.ones(3), dims="time", coords={"time": t}, attrs={"step": "month"})
    >>> monthly_source(pr) is pr  # already monthly and in memory
    True
    """
    from .. import cache
    from ..compute.totals import monthly_totals

    monthly = pr if pr.attrs.get("step") == "month" else monthly_totals(pr)
    if not is_dask_collection(monthly):
        return monthly
    if monthly.nbytes <= IN_MEMORY_BYTES:
        return cache.cached("monthly_totals", lambda: monthly, pr)
    return monthly


def small_in_memory(pr: xr.DataArray) -> xr.DataArray:
    """``pr`` read into memory when it is at most :data:`IN_MEMORY_BYTES`, else unchanged.

    For interactive analyses that build many small graphs over the same data (anomalies of
    every basin and period): on a small grid the dask overhead of those graphs costs more
    than the arithmetic, so the data are read once and kept.

    Parameters
    ----------
    pr : xarray.DataArray
        Precipitation, lazy (dask) or in memory.

    Returns
    -------
    xarray.DataArray
        A new in-memory array when ``pr`` was lazy and small, else ``pr`` itself.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> pr = xr.DataArray(np.ones(4), dims="x").chunk(2)
    >>> small_in_memory(pr).chunks is None, pr.chunks is None
    (True, False)
    """
    if pr.chunks is not None and pr.nbytes <= IN_MEMORY_BYTES:
        return pr.compute()  # a new object: the caller's stays lazy
    return pr
