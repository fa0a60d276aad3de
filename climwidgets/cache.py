"""Cache of expensive intermediate results, keyed by a token of the inputs and parameters.

Climatologies are computed once per (data, parameters) and reused, so moving a basin or
changing a colour never recomputes the grid (docs/architecture.md).  The token of a lazily opened
file is the dask graph name, which xarray derives from the file name and modification
time, so reopening the same unchanged file hits the cache and a rewritten file misses it.

In memory by default (an LRU of computed results); ``configure(directory=...)`` adds an
on-disk Zarr cache so results survive a kernel restart.  :class:`LRUCache` is the suite's
one bounded, locked least-recently-used store: the geometry caches (coverage weights,
cell areas) are instances of it too, and it is safe to use from widget worker threads.
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from pathlib import Path

import dask.base
import xarray as xr

from .atomic import atomic_write_folder

__all__ = ["LRUCache", "configure", "cached", "token", "clear", "stats"]


class LRUCache:
    """Least-recently-used mapping with at most ``maxsize`` entries; every access is locked."""

    def __init__(self, maxsize: int = 64):
        self.maxsize = int(maxsize)
        self._data: OrderedDict = OrderedDict()
        self._lock = threading.Lock()

    def get(self, key, default=None):
        with self._lock:
            if key not in self._data:
                return default
            self._data.move_to_end(key)
            return self._data[key]

    def put(self, key, value) -> None:
        with self._lock:
            self._data[key] = value
            self._data.move_to_end(key)
            while len(self._data) > self.maxsize:
                self._data.popitem(last=False)

    def resize(self, maxsize: int) -> None:
        with self._lock:
            self.maxsize = int(maxsize)
            while len(self._data) > self.maxsize:
                self._data.popitem(last=False)

    def clear(self) -> None:
        with self._lock:
            self._data.clear()

    def __len__(self) -> int:
        with self._lock:
            return len(self._data)

    def __contains__(self, key) -> bool:
        with self._lock:
            return key in self._data


_memory = LRUCache(maxsize=32)
_directory: Path | None = None
_lock = threading.Lock()
_stats = {"hits": 0, "misses": 0, "disk_hits": 0}


def configure(directory=None, max_items: int = 32) -> None:
    """Set the on-disk cache folder (None for memory only) and the in-memory size."""
    global _directory
    _memory.resize(max_items)
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
        _count("hits")
        return hit
    if _directory is not None:
        store = _directory / f"{key}.zarr"
        if store.exists():
            result = xr.open_zarr(store, consolidated=False).load()
            if isinstance(result, xr.Dataset) and list(result.data_vars) == ["__dataarray__"]:
                result = result["__dataarray__"].rename(result.attrs.get("__name__"))
            _memory.put(key, result)
            _count("disk_hits")
            return result
    _count("misses")
    result = build().compute()
    _memory.put(key, result)
    if _directory is not None:
        _write_store(result, _directory / f"{key}.zarr")
    return result


def _count(what: str) -> None:
    with _lock:
        _stats[what] += 1


def _write_store(result, store: Path) -> None:
    """Write the store atomically (a temporary folder beside it, then rename)."""
    ds = result
    if isinstance(result, xr.DataArray):
        ds = result.to_dataset(name="__dataarray__")
        ds.attrs["__name__"] = result.name or ""
    ds = ds.copy()
    for v in ds.variables.values():
        v.encoding = {}
    atomic_write_folder(store, lambda tmp: ds.to_zarr(tmp, mode="w", consolidated=False), "result cache")


def clear() -> None:
    """Forget the in-memory results and reset the counters (the disk cache stays)."""
    _memory.clear()
    with _lock:
        for k in _stats:
            _stats[k] = 0


def stats() -> dict:
    """Counts of memory hits, misses and disk hits since the last :func:`clear`."""
    with _lock:
        return dict(_stats)
