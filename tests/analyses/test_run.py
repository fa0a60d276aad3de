"""``analyses.run.compute`` on a distributed LocalCluster gives the same numbers as threads.

The check is against dask's own threaded scheduler (the reference path): several analyses,
and a dict of Datasets, computed in one pass under ``distributed.LocalCluster(processes=False,
n_workers=1)`` must equal the same objects computed with ``scheduler="threads"``.
"""

import numpy as np
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.analyses import run
from climwidgets.analyses.basins import basin_table, what_if
from climwidgets.compute.bundle import climatology_bundle

from ..compute.test_bundle import _write

BASINS = [
    cw.Basin.from_vertices([(0.2, 0.2), (2.6, 0.4), (1.5, 2.7)], name="first"),
    cw.Basin.from_vertices([(2.2, 1.1), (3.9, 1.0), (3.8, 2.9), (2.4, 2.8)], name="second"),
]


def _analyses(path):
    pr = cw.open_precip(path, chunks={"time": 90}, validate=False)
    bundle = climatology_bundle(pr, months=(6, 7, 8), baseline=(2001, 2003), maxima_days=())
    table = basin_table(pr, BASINS, months=(6, 7, 8), baseline=(2001, 2003), bundle=bundle)
    scenario = what_if(pr, BASINS, months=(6, 7, 8), percent=5.0, bundle=bundle)
    return {"table": table, "what_if": scenario}, [table["annual_mean_mm"], scenario]


def _undated(attrs):
    return {k: v for k, v in attrs.items() if k != "history"}  # the history line carries a time stamp


def _assert_same(a, b):
    if isinstance(a, dict):
        assert a.keys() == b.keys()
        for k in a:
            _assert_same(a[k], b[k])
    elif isinstance(a, (list, tuple)):
        assert len(a) == len(b)
        for x, y in zip(a, b):
            _assert_same(x, y)
    else:
        xr.testing.assert_allclose(a, b, rtol=1e-12)  # same floats; summation order may differ at 1 ulp
        for name in getattr(a, "data_vars", {}):
            assert _undated(a[name].attrs) == _undated(b[name].attrs)


@pytest.mark.slow
def test_run_compute_on_local_cluster_matches_threads(tmp_path):
    distributed = pytest.importorskip("distributed")
    path = _write(tmp_path / "d.nc", years=3)
    lazy = _analyses(path)
    threaded = run.compute(*lazy, scheduler="threads")
    with (
        distributed.LocalCluster(processes=False, n_workers=1, threads_per_worker=2, dashboard_address=None) as cluster,
        distributed.Client(cluster) as client,
    ):
        on_cluster = run.compute(*_analyses(path))
        assert client.scheduler_info()["workers"]  # the default scheduler was the cluster
    _assert_same(on_cluster, threaded)
    # the results are in memory and not all missing
    table = on_cluster[0]["table"]
    assert not any(hasattr(v.data, "dask") for v in table.variables.values())
    assert np.isfinite(table["annual_mean_mm"].values).all()
