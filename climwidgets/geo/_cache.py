"""A small thread-safe LRU cache for grid-derived arrays (weights, areas).

Keys are tokens of the inputs (grid token, basin token, parameters), so moving a basin
recomputes only its own weights and never the grid's areas (DESIGN.md §6).
"""

from __future__ import annotations

import threading
from collections import OrderedDict

__all__ = ["LRUCache", "weights_cache", "area_cache"]


class LRUCache:
    """Least-recently-used mapping with at most ``maxsize`` entries."""

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

    def clear(self) -> None:
        with self._lock:
            self._data.clear()

    def __len__(self) -> int:
        return len(self._data)

    def __contains__(self, key) -> bool:
        return key in self._data


# Weights are stored as bounding-box blocks, so entries stay small even on large grids.
weights_cache = LRUCache(maxsize=128)
area_cache = LRUCache(maxsize=16)
