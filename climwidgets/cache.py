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

import os
import threading
from collections import OrderedDict
from collections.abc import Callable, Hashable
from pathlib import Path
from typing import Any, TypeVar

import dask.base
import xarray as xr

from .atomic import atomic_write_folder

__all__ = ["LRUCache", "configure", "cached", "token", "clear", "stats"]

_X = TypeVar("_X", xr.DataArray, xr.Dataset)


class LRUCache:
    """Least-recently-used mapping with at most ``maxsize`` entries; every access is locked.

    Parameters
    ----------
    maxsize : int, default 64
        The most entries kept; putting one more drops the least recently used.

    Examples
    --------
    >>> from climwidgets.cache import LRUCache
    >>> c = LRUCache(maxsize=2)
    >>> c.put("a", 1); c.put("b", 2)
    >>> c.get("a")  # "a" is now the most recently used
    1
    >>> c.put("c", 3)  # drops "b", the least recently used
    >>> "b" in c, len(c), c.get("b", "gone")
    (False, 2, 'gone')
    """

    def __init__(self, maxsize: int = 64) -> None:
        self.maxsize = int(maxsize)
        self._data: OrderedDict[Hashable, Any] = OrderedDict()
        self._lock = threading.Lock()

    def get(self, key: Hashable, default: Any = None) -> Any:
        """The value stored under ``key`` (marking it recently used), else ``default``."""
        with self._lock:
            if key not in self._data:
                return default
            self._data.move_to_end(key)
            return self._data[key]

    def put(self, key: Hashable, value: Any) -> None:
        """Store ``value`` under ``key``, dropping the least recently used beyond ``maxsize``."""
        with self._lock:
            self._data[key] = value
            self._data.move_to_end(key)
            while len(self._data) > self.maxsize:
                self._data.popitem(last=False)

    def resize(self, maxsize: int) -> None:
        """Change ``maxsize``, dropping the least recently used entries beyond it."""
        with self._lock:
            self.maxsize = int(maxsize)
            while len(self._data) > self.maxsize:
                self._data.popitem(last=False)

    def clear(self) -> None:
        """Drop every entry."""
        with self._lock:
            self._data.clear()

    def __len__(self) -> int:
        with self._lock:
            return len(self._data)

    def __contains__(self, key: object) -> bool:
        with self._lock:
            return key in self._data


_memory = LRUCache(maxsize=32)
_directory: Path | None = None
_lock = threading.Lock()
_stats = {"hits": 0, "misses": 0, "disk_hits": 0}


def configure(directory: str | os.PathLike[str] | None = None, max_items: int = 32) -> None:
    """Set the on-disk cache folder (None for memory only) and the in-memory size.

    Parameters
    ----------
    directory : str or path-like, optional
        Folder for the Zarr stores of computed results (created if absent; ``~`` is
        expanded).  None keeps results in memory only.
    max_items : int, default 32
        The most results kept in memory.

    Returns
    -------
    None

    Examples
    --------
    >>> import tempfile
    >>> from climwidgets import cache
    >>> with tempfile.TemporaryDirectory() as folder:
    ...     cache.configure(directory=folder, max_items=8)
    ...     cache.configure()  # back to memory only, 32 results
    """
    global _directory
    _memory.resize(max_items)
    _directory = Path(directory).expanduser() if directory else None
    if _directory:
        _directory.mkdir(parents=True, exist_ok=True)


def _identity(obj: Any) -> Any:
    """What identifies an input: its dask graph name (or values), coords and attrs, not its history."""
    if isinstance(obj, xr.DataArray):
        data = obj.data.name if hasattr(obj.data, "dask") else dask.base.tokenize(obj.values)
        attrs = {k: v for k, v in obj.attrs.items() if k != "history"}
        coords = {k: dask.base.tokenize(v.values) for k, v in obj.coords.items()}
        return ("DataArray", obj.name, obj.dims, data, sorted(coords.items()), sorted(map(str, attrs.items())))
    if isinstance(obj, xr.Dataset):
        return ("Dataset", sorted((k, _identity(v)) for k, v in obj.data_vars.items()))
    return obj


def token(*parts: Any, **params: Any) -> str:
    """A deterministic token of xarray/dask inputs and parameters (cheap: no data read).

    A lazy array counts by its dask graph name (derived by xarray from the file name and
    modification time), an in-memory one by its values; coordinates and attrs count, the
    ``history`` attribute does not.

    Parameters
    ----------
    *parts : object
        Inputs (DataArray, Dataset or any tokenizable object).
    **params : object
        Parameters; their order does not matter.

    Returns
    -------
    str
        A hexadecimal token, equal for equal inputs and parameters.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> from climwidgets.cache import token
    >>> a = xr.DataArray(np.arange(3.0), dims="time", attrs={"units": "mm"})
    >>> b = a.copy()
    >>> b.attrs["history"] = "made elsewhere"
    >>> token(a, months=(6, 7)) == token(b, months=(6, 7))  # history does not count
    True
    >>> token(a, months=(6, 7)) == token(a + 1, months=(6, 7))
    False
    """
    return dask.base.tokenize(*[_identity(p) for p in parts], sorted(params.items()))


def cached(name: str, build: Callable[[], _X], *parts: Any, **params: Any) -> _X:
    """Return ``build()`` computed, from the cache when the same inputs were seen before.

    ``build`` returns an xarray object (lazy or not); it is computed once and stored, in
    memory and, after :func:`configure` with a folder, as a Zarr store written atomically.

    Parameters
    ----------
    name : str
        What is cached (the start of the key), e.g. ``"normals"``.
    build : callable
        Called without arguments on a miss; returns a DataArray or Dataset.
    *parts : object
        The inputs that identify the result (see :func:`token`).
    **params : object
        The parameters that identify the result.

    Returns
    -------
    xarray.DataArray or xarray.Dataset
        The computed result (the same object on a memory hit).

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> from climwidgets import cache
    >>> cache.clear()
    >>> data = xr.DataArray(np.arange(4.0), dims="time")
    >>> first = cache.cached("total", lambda: data.sum(), data)
    >>> again = cache.cached("total", lambda: data.sum(), data)
    >>> float(again), again is first, cache.stats()
    (6.0, True, {'hits': 1, 'misses': 1, 'disk_hits': 0})
    """
    key = f"{name}-{token(*parts, **params)}"
    hit = _memory.get(key)
    if hit is not None:
        _count("hits")
        return hit  # type: ignore[no-any-return]  # stored by this function: what build() made
    if _directory is not None:
        store = _directory / f"{key}.zarr"
        if store.exists():
            stored: Any = xr.open_zarr(store, consolidated=False).load()
            if isinstance(stored, xr.Dataset) and list(stored.data_vars) == ["__dataarray__"]:
                stored = stored["__dataarray__"].rename(stored.attrs.get("__name__"))
            _memory.put(key, stored)
            _count("disk_hits")
            return stored  # type: ignore[no-any-return]  # the store holds what build() made
    _count("misses")
    result = build().compute()
    _memory.put(key, result)
    if _directory is not None:
        _write_store(result, _directory / f"{key}.zarr")
    return result


def _count(what: str) -> None:
    with _lock:
        _stats[what] += 1


def _write_store(result: xr.DataArray | xr.Dataset, store: Path) -> None:
    """Write the store atomically (a temporary folder beside it, then rename)."""
    ds: xr.Dataset
    if isinstance(result, xr.DataArray):
        ds = result.to_dataset(name="__dataarray__")
        ds.attrs["__name__"] = result.name or ""
    else:
        ds = result
    ds = ds.copy()
    for v in ds.variables.values():
        v.encoding = {}
    atomic_write_folder(store, lambda tmp: ds.to_zarr(tmp, mode="w", consolidated=False), "result cache")


def clear() -> None:
    """Forget the in-memory results and reset the counters (the disk cache stays).

    Returns
    -------
    None

    Examples
    --------
    >>> from climwidgets import cache
    >>> cache.clear()
    >>> cache.stats()
    {'hits': 0, 'misses': 0, 'disk_hits': 0}
    """
    _memory.clear()
    with _lock:
        for k in _stats:
            _stats[k] = 0


def stats() -> dict[str, int]:
    """Counts of memory hits, misses and disk hits since the last :func:`clear`.

    Returns
    -------
    dict of str to int
        ``hits`` (from memory), ``misses`` (computed) and ``disk_hits`` (read from the
        Zarr cache folder).

    Examples
    --------
    >>> from climwidgets import cache
    >>> sorted(cache.stats())
    ['disk_hits', 'hits', 'misses']
    """
    with _lock:
        return dict(_stats)
