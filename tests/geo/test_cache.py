"""Tests of climwidgets/geo/_cache.py: the small LRU cache for weights and areas.

Least-recently-used eviction as in functools.lru_cache (Python standard library), which
serves as the reference below.
"""

import functools
import threading

from climwidgets.geo._cache import LRUCache


def test_evicts_the_least_recently_used_like_functools():
    ours = LRUCache(maxsize=3)
    calls = []

    @functools.lru_cache(maxsize=3)
    def reference(key):
        calls.append(key)
        return key

    ours_misses = []
    for key in [1, 2, 3, 1, 4, 2, 5, 1, 3, 3, 4]:
        if ours.get(key) is None:
            ours_misses.append(key)
            ours.put(key, key)
        reference(key)
    assert ours_misses == calls
    assert len(ours) == 3


def test_get_default_contains_and_clear():
    c = LRUCache(maxsize=2)
    assert c.get("a", "none") == "none" and "a" not in c
    c.put("a", 1)
    c.put("a", 2)  # replacing keeps one entry
    assert c.get("a") == 2 and "a" in c and len(c) == 1
    c.clear()
    assert len(c) == 0


def test_maxsize_change_applies_at_the_next_put():
    c = LRUCache(maxsize=4)
    for k in range(4):
        c.put(k, k)
    c.maxsize = 2
    c.put(4, 4)
    assert len(c) == 2 and 3 in c and 4 in c


def test_threads_share_one_consistent_cache():
    c = LRUCache(maxsize=50)

    def work(offset):
        for k in range(200):
            c.put((offset, k % 60), k)
            c.get((offset, (k * 7) % 60))

    threads = [threading.Thread(target=work, args=(i,)) for i in range(4)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert len(c) == 50
