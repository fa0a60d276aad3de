"""The geometry caches (coverage weights, cell areas): instances of the suite's one LRU cache.

Keys are tokens of the inputs (grid token, basin token, parameters), so moving a basin
recomputes only its own weights and never the grid's areas.
"""

from __future__ import annotations

from ..cache import LRUCache

__all__ = ["LRUCache", "weights_cache", "area_cache"]

# Weights are stored as bounding-box blocks, so entries stay small even on large grids.
weights_cache = LRUCache(maxsize=128)
area_cache = LRUCache(maxsize=16)
