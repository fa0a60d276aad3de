"""The cluster path gives the same numbers as the threaded scheduler."""

import os
import pickle

import dask
import numpy as np
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.compute.bundle import climatology_bundle

from .compute.test_bundle import _write


@pytest.mark.slow
def test_local_cluster_matches_threaded(tmp_path):
    path = _write(tmp_path / "d.nc", years=3)
    threaded = climatology_bundle(cw.open_precip(path, validate=False), baseline=(2001, 2003), compute=True)
    client = cw.use_cluster(n_workers=2)
    try:
        assert len(client.scheduler_info()["workers"]) == 2
        on_cluster = climatology_bundle(cw.open_precip(path, validate=False), baseline=(2001, 2003), compute=True)
    finally:
        from climwidgets.scale import close_cluster

        close_cluster()
    for name in threaded.data_vars:
        np.testing.assert_allclose(on_cluster[name].values, threaded[name].values, rtol=1e-12, equal_nan=True)


@pytest.mark.slow
def test_fused_pass_on_a_cluster_is_identical_to_threads(tmp_path):
    """Workers read the files themselves (the chunk index travels as the file's name) and hand back partials."""
    from climwidgets.compute import _fused
    from climwidgets.scale import close_cluster

    path = _write(tmp_path / "d.nc", years=3, chunks=(1, 4, 5))
    pr = cw.open_precip(path, chunks={"time": 60}, validate=False)
    assert _fused.applicable(pr, "day", (1,)) and _fused._stored_record(pr) is not None
    lazy = climatology_bundle(pr, baseline=(2001, 2003))
    # tasks carry the file's name and regions, not daily arrays or open handles: no task of
    # the optimised graph pickles to more than a few kB (the data is ~4 kB per 60 days here,
    # so an embedded block would show; 8 kB is a bound with room for dask's own wrapping)
    (optimised,) = dask.optimize(lazy)
    sizes = [len(pickle.dumps(task)) for task in dict(optimised.__dask_graph__()).values()]
    assert max(sizes) < 8000
    threaded = climatology_bundle(pr, baseline=(2001, 2003), compute=True)
    client = cw.use_cluster(n_workers=2)
    try:
        # workers keep glibc's own allocator settings (the trim setting costs CPU per task)
        assert set(client.run(lambda: __import__("os").environ.get("MALLOC_TRIM_THRESHOLD_")).values()) <= {
            os.environ.get("MALLOC_TRIM_THRESHOLD_")
        }
        on_cluster = climatology_bundle(pr, baseline=(2001, 2003), compute=True)
    finally:
        close_cluster()
    xr.testing.assert_identical(on_cluster.drop_attrs(), threaded.drop_attrs())


@pytest.mark.slow
def test_cluster_progress_and_cancellation(tmp_path):
    import dask.array as dsa

    from climwidgets.scale import CancelledComputation, close_cluster, compute_on_cluster

    client = cw.use_cluster(n_workers=1)
    try:
        seen = []
        x = dsa.ones((400, 400), chunks=(50, 50)).sum()
        assert compute_on_cluster(x, client, on_progress=seen.append) == 160000
        with pytest.raises(CancelledComputation):
            slow = (
                dsa.ones((2000, 2000), chunks=(100, 100))
                .map_blocks(lambda b: (__import__("time").sleep(0.2), b)[1])
                .sum()
            )
            compute_on_cluster(slow, client, is_current=lambda: False)
    finally:
        close_cluster()
