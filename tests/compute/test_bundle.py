"""One read of the data for many statistics (climatology_bundle)."""

import numpy as np
import pandas as pd
import pytest
import xarray as xr
import xarray.backends.netCDF4_ as nc_backend

import climwidgets as cw
from climwidgets import cache
from climwidgets.io import chunkreader, loader
from climwidgets.compute.bundle import climatology_bundle


def _write(path, years=4, chunks=(30, 4, 5)):
    t = pd.date_range("2001-01-01", f"{2000 + years}-12-31", freq="D")
    rng = np.random.default_rng(1)
    data = rng.gamma(0.6, 5.0, size=(t.size, 4, 5)).astype("f4")
    ds = xr.Dataset(
        {"pr": (("time", "lat", "lon"), data, {"units": "mm", "standard_name": "precipitation_amount"})},
        coords={
            "time": t,
            "lat": ("lat", np.arange(4.0), {"units": "degrees_north"}),
            "lon": ("lon", np.arange(5.0), {"units": "degrees_east"}),
        },
    )
    ds.to_netcdf(path, encoding={"pr": {"chunksizes": chunks, "zlib": True}})
    return path


@pytest.fixture(params=[True, False], ids=["direct-reads", "xarray-backend"])
def counted_reads(request, monkeypatch):
    """Count reads of the variable through whichever reader the loader uses."""
    calls = []
    monkeypatch.setattr(loader, "DIRECT_CHUNK_READS", request.param)
    original_backend = nc_backend.NetCDF4ArrayWrapper._getitem
    original_direct = chunkreader.read_region

    def counting_backend(self, key):
        if isinstance(key, tuple) and len(key) == 3:
            calls.append(key)
        return original_backend(self, key)

    def counting_direct(index, region):
        calls.append(region)
        return original_direct(index, region)

    monkeypatch.setattr(nc_backend.NetCDF4ArrayWrapper, "_getitem", counting_backend)
    monkeypatch.setattr(chunkreader, "read_region", counting_direct)
    return calls


def test_bundle_reads_every_stored_chunk_once(tmp_path, counted_reads):
    path = _write(tmp_path / "d.nc")
    pr = cw.open_precip(path, chunks={"time": 90}, validate=False)
    n_chunks = len(pr.chunks[0])
    counted_reads.clear()
    ds = climatology_bundle(pr, months=(7, 8), baseline=(2001, 2004), maxima_days=(1, 3), compute=True)
    # one read per dask chunk of the variable, for all six statistics together
    assert len(counted_reads) == n_chunks
    assert set(ds.data_vars) >= {"monthly_totals", "annual_totals", "seasonal_share", "normals", "annual_max_3day"}


def test_bundle_matches_the_separate_functions(tmp_path):
    pr = cw.open_precip(_write(tmp_path / "d.nc"), validate=False)
    ds = climatology_bundle(pr, months=(11, 12, 1, 2, 3), baseline=(2001, 2004), compute=True)
    # the bundle sums months in the stored float32 (compute/_fused.py): float32 rounding, 1e-6 relative
    xr.testing.assert_allclose(
        ds["annual_totals"], cw.annual_totals(pr).compute().drop_attrs(), check_dim_order=False, rtol=1e-6
    )
    np.testing.assert_allclose(ds["seasonal_share"], cw.seasonal_fraction(pr, months=(11, 12, 1, 2, 3)), rtol=1e-6)
    np.testing.assert_allclose(ds["normals"], cw.normals(pr, baseline=(2001, 2004)), rtol=1e-6)
    np.testing.assert_allclose(ds["annual_max_1day"], cw.annual_maxima(pr, duration_days=1))


def test_cache_is_hit_on_second_call(tmp_path):
    path = _write(tmp_path / "d.nc")
    cache.clear()
    first = climatology_bundle(cw.open_precip(path, validate=False), use_cache=True)
    # reopening the same unchanged file gives the same token: no recomputation
    second = climatology_bundle(cw.open_precip(path, validate=False), use_cache=True)
    assert cache.stats() == {"hits": 1, "misses": 1, "disk_hits": 0}
    assert second is first
    climatology_bundle(cw.open_precip(path, validate=False), months=(6, 7, 8), use_cache=True)
    assert cache.stats()["misses"] == 2  # other parameters: another entry


def test_disk_cache_survives_memory_loss(tmp_path):
    path = _write(tmp_path / "d.nc", years=2)
    cache.configure(directory=tmp_path / "cache")
    try:
        cache.clear()
        a = climatology_bundle(cw.open_precip(path, validate=False), use_cache=True)
        cache.clear()  # forget the in-memory copy, as a restarted kernel would
        b = climatology_bundle(cw.open_precip(path, validate=False), use_cache=True)
        assert cache.stats()["disk_hits"] == 1
        xr.testing.assert_allclose(a["seasonal_share"], b["seasonal_share"])
    finally:
        cache.configure(directory=None)


def test_seasonal_share_graph_grows_linearly_with_chunks(tmp_path):
    """One streaming pass: the task count is proportional to the number of chunks read."""
    path = _write(tmp_path / "d.nc", years=4)
    counts = {}
    for days in (30, 60, 120, 240):
        pr = cw.open_precip(path, chunks={"time": days}, validate=False)
        share = cw.seasonal_fraction(pr, months=(7, 8))
        counts[len(pr.chunks[0])] = len(share.__dask_graph__())
    n = np.array(sorted(counts))
    tasks = np.array([counts[k] for k in n])
    slope, intercept = np.polyfit(n, tasks, 1)
    assert np.allclose(tasks, slope * n + intercept, rtol=0.05)  # affine in the chunk count
    assert slope < 25  # a fixed handful of tasks per chunk read (read, convert, partial sums), not per day
