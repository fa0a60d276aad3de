"""The cluster path gives the same numbers as the threaded scheduler."""

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
