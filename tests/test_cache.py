"""Tests of climwidgets/cache.py: results keyed by a token of their inputs and parameters.

Tokens come from dask's ``tokenize`` (the general-purpose reference for "same input, same
key"); the checks here are that the cache keys on what matters (data, coordinates,
parameters) and ignores what does not (the history line), and that the disk store
round-trips results exactly.
"""

import numpy as np
import pytest
import xarray as xr

from climwidgets import cache


@pytest.fixture(autouse=True)
def fresh_cache():
    cache.configure(directory=None)
    cache.clear()
    yield
    cache.configure(directory=None)
    cache.clear()


def _field(value=1.0, name="pr"):
    return xr.DataArray(
        np.full((4, 3), value),
        dims=("lat", "lon"),
        name=name,
        coords={"lat": np.arange(4.0), "lon": np.arange(3.0)},
        attrs={"units": "mm"},
    )


def test_token_is_deterministic_and_cheap_on_lazy_input():
    a = _field()
    assert cache.token(a, months=(7, 8)) == cache.token(a.copy(deep=True), months=(7, 8))
    lazy = a.chunk({"lat": 2})
    assert cache.token(lazy) == cache.token(lazy)  # the dask graph name, no values read


def test_token_ignores_history_but_not_data_coords_attrs_or_parameters():
    a = _field()
    base = cache.token(a, k=1)
    assert cache.token(a.assign_attrs(history="another chain of calls"), k=1) == base
    assert cache.token(_field(2.0), k=1) != base
    assert cache.token(a.assign_coords(lat=a["lat"] + 0.5), k=1) != base
    assert cache.token(a.assign_attrs(units="in"), k=1) != base
    assert cache.token(a, k=2) != base
    assert cache.token(a, k=1, j=0) != base


def test_token_of_a_dataset_covers_its_variables():
    ds = xr.Dataset({"a": _field(1.0), "b": _field(2.0)})
    assert cache.token(ds) == cache.token(ds.copy(deep=True))
    assert cache.token(ds) != cache.token(ds.assign(b=_field(3.0)))


def test_cached_builds_once_and_returns_computed_results():
    calls = []

    def build():
        calls.append(1)
        return (_field().chunk({"lat": 2}) * 2).rename("double")

    first = cache.cached("double", build, _field(), factor=2)
    again = cache.cached("double", build, _field(), factor=2)
    assert len(calls) == 1 and again is first
    assert not hasattr(first.data, "dask")  # computed
    assert cache.stats() == {"hits": 1, "misses": 1, "disk_hits": 0}
    cache.cached("double", build, _field(), factor=3)
    assert len(calls) == 2


def test_memory_cache_is_least_recently_used():
    cache.configure(directory=None, max_items=2)
    for value in (1.0, 2.0, 3.0):
        cache.cached("f", lambda v=value: _field(v), _field(value))
    assert cache.stats()["misses"] == 3
    cache.cached("f", lambda: _field(3.0), _field(3.0))  # still there
    cache.cached("f", lambda: _field(1.0), _field(1.0))  # evicted: built again
    assert cache.stats() == {"hits": 1, "misses": 4, "disk_hits": 0}


@pytest.mark.parametrize(
    "make", [lambda: _field(5.0, name="depth"), lambda: xr.Dataset({"a": _field(1.0), "b": _field(2.0)})]
)
def test_disk_cache_round_trips_exactly(tmp_path, make):
    cache.configure(directory=tmp_path / "store")
    first = cache.cached("thing", make, _field())
    cache.clear()  # forget the memory copy, as a restarted kernel would
    again = cache.cached("thing", lambda: pytest.fail("rebuilt instead of read from disk"), _field())
    assert cache.stats()["disk_hits"] == 1
    xr.testing.assert_identical(again, first)
    stores = sorted(p.name for p in (tmp_path / "store").iterdir())
    assert len(stores) == 1 and stores[0].startswith("thing-") and stores[0].endswith(".zarr")


def test_configure_creates_the_folder(tmp_path):
    folder = tmp_path / "a" / "b"
    cache.configure(directory=folder)
    assert folder.is_dir()
