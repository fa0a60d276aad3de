"""Cache of expensive intermediate results, keyed by a token of the inputs and parameters.

Climatologies are computed once per (data, parameters) and reused, so moving a basin or
changing a colour never recomputes the grid (DESIGN.md §6).  The token of a lazily opened
file is the dask graph name, which xarray derives from the file name and modification
time, so reopening the same unchanged file hits the cache and a rewritten file misses it.

In memory by default (an LRU of computed results); ``configure(directory=...)`` adds an
on-disk Zarr cache so results survive a kernel restart.
"""

from __future__ import annotations

import os
import threading
from pathlib import Path

import dask.base
import xarray as xr

from .geo._cache import LRUCache

__all__ = ["configure", "cached", "token", "clear", "stats"]

_memory = LRUCache(maxsize=32)
_directory: Path | None = None
_lock = threading.Lock()
_stats = {"hits": 0, "misses": 0, "disk_hits": 0}


def configure(directory=None, max_items: int = 32) -> None:
    """Set the on-disk cache folder (None for memory only) and the in-memory size."""
    global _directory
    _memory.maxsize = int(max_items)
    _directory = Path(directory).expanduser() if directory else None
    if _directory:
        _directory.mkdir(parents=True, exist_ok=True)


def _identity(obj):
    """What identifies an input: its dask graph name (or values), coords and attrs, not its history."""
    if isinstance(obj, xr.DataArray):
        data = obj.data.name if hasattr(obj.data, "dask") else dask.base.tokenize(obj.values)
        attrs = {k: v for k, v in obj.attrs.items() if k != "history"}
        coords = {k: dask.base.tokenize(v.values) for k, v in obj.coords.items()}
        return ("DataArray", obj.name, obj.dims, data, sorted(coords.items()), sorted(map(str, attrs.items())))
    if isinstance(obj, xr.Dataset):
        return ("Dataset", sorted((k, _identity(v)) for k, v in obj.data_vars.items()))
    return obj


def token(*parts, **params) -> str:
    """A deterministic token of xarray/dask inputs and parameters (cheap: no data read)."""
    return dask.base.tokenize(*[_identity(p) for p in parts], sorted(params.items()))


def cached(name: str, build, *parts, **params):
    """Return ``build()`` computed, from the cache when the same inputs were seen before.

    ``build`` returns an xarray object (lazy or not); it is computed once and stored.
    """
    key = f"{name}-{token(*parts, **params)}"
    hit = _memory.get(key)
    if hit is not None:
        _stats["hits"] += 1
        return hit
    if _directory is not None:
        store = _directory / f"{key}.zarr"
        if store.exists():
            result = xr.open_zarr(store, consolidated=False).load()
            if isinstance(result, xr.Dataset) and list(result.data_vars) == ["__dataarray__"]:
                result = result["__dataarray__"].rename(result.attrs.get("__name__"))
            _memory.put(key, result)
            _stats["disk_hits"] += 1
            return result
    _stats["misses"] += 1
    result = build().compute()
    _memory.put(key, result)
    if _directory is not None:
        _write_store(result, _directory / f"{key}.zarr")
    return result


def _write_store(result, store: Path) -> None:
    """Write atomically: a temporary store in the same folder, then rename."""
    ds = result
    if isinstance(result, xr.DataArray):
        ds = result.to_dataset(name="__dataarray__")
        ds.attrs["__name__"] = result.name or ""
    tmp = store.with_name(store.name + f".tmp{os.getpid()}")
    ds = ds.copy()
    for v in ds.variables.values():
        v.encoding = {}
    with _lock:
        ds.to_zarr(tmp, mode="w", consolidated=False)
        os.replace(tmp, store) if not store.exists() else None


def clear() -> None:
    _memory.clear()
    for k in _stats:
        _stats[k] = 0


def stats() -> dict:
    return dict(_stats)
