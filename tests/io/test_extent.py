"""io/extent.py: declared sizes and chunk counts refused from the header, before any read."""

import numpy as np
import pytest
import xarray as xr

from climwidgets.errors import GridError
from climwidgets.io import extent


class _Sized:
    """Only ``sizes`` is read by the checks: a header, with no data behind it."""

    def __init__(self, **sizes):
        self.sizes = sizes


def test_a_grid_of_more_than_two_to_the_31_cells_is_refused():
    # Hand arithmetic: 50 000 x 50 000 = 2.5e9 > 2**31 = 2.147e9 cells.
    with pytest.raises(GridError, match="50,000 x 50,000"):
        extent.check_declared_sizes(_Sized(time=1, lat=50_000, lon=50_000), ("lat", "lon"), "time", "big.nc", "pr")
    extent.check_declared_sizes(_Sized(time=1, lat=21_600, lon=43_200), ("lat", "lon"), "time", "ok.nc", "pr")


def test_too_many_time_steps_are_refused():
    with pytest.raises(GridError, match="time steps"):
        extent.check_declared_sizes(_Sized(time=10**8 + 1, lat=1, lon=1), ("lat", "lon"), "time", "long.nc", "pr")
    extent.check_declared_sizes(_Sized(time=10**8, lat=1, lon=1), ("lat", "lon"), "time", "ok.nc", "pr")


def test_chunk_count_is_the_product_of_ceilings():
    da = xr.DataArray(np.zeros((4, 3)), dims=("time", "lat"))
    extent.check_chunk_count(da, {"time": 1, "lat": 1}, "a.nc", "pr", None)  # 12 chunks: fine
    # Hand arithmetic: 2 000 000 steps in chunks of 1 -> 2e6 chunks > 1e6.
    with pytest.raises(GridError, match="2,000,000 chunks"):
        extent.check_chunk_count(_Sized(time=2_000_000, lat=1), {"time": 1, "lat": 1}, "a.nc", "pr", {"time": 1})
