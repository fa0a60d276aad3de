"""io/combine.py: the files of a glob checked file by file and joined along time."""

import numpy as np
import pandas as pd
import pytest
import xarray as xr

from climwidgets.errors import MismatchError
from climwidgets.io.combine import combine_parts

LAT, LON = np.array([10.0, 11.0]), np.array([20.0, 21.0])


def _part(path, start, periods=3, units="mm", calendar="standard", lat=LAT, encoding=None, value=1.0):
    time = pd.date_range(start, periods=periods, freq="D")
    da = xr.DataArray(
        np.full((periods, lat.size, LON.size), value),
        dims=("time", "lat", "lon"),
        coords={"time": time, "lat": lat, "lon": LON},
    )
    info = {
        "path": path,
        "name": "pr",
        "attrs": {"units": units},
        "calendar": calendar,
        "grid": (lat, LON),
        "encoding": {"_FillValue": -1.0} if encoding is None else encoding,
        "time_bounds": None,
    }
    return da, info


def test_files_are_joined_in_time_order_whatever_the_list_order():
    parts = [_part("b.nc", "2001-01-04", value=2.0), _part("a.nc", "2001-01-01")]
    da, bounds, mask_fill, note = combine_parts(parts, ["b.nc", "a.nc"])
    assert da.sizes["time"] == 6
    np.testing.assert_array_equal(da.isel(lat=0, lon=0).values, [1, 1, 1, 2, 2, 2])
    assert bounds is None and mask_fill is False and note is None


@pytest.mark.parametrize(
    "other, match",
    [
        (dict(units="cm"), "units 'cm'"),
        (dict(calendar="noleap"), "calendar 'noleap'"),
        (dict(lat=np.array([10.0, 12.0])), "different grid"),
    ],
)
def test_a_file_that_disagrees_is_named(other, match):
    parts = [_part("a.nc", "2001-01-01"), _part("b.nc", "2001-01-04", **other)]
    with pytest.raises(MismatchError, match=match) as err:
        combine_parts(parts, ["a.nc", "b.nc"])
    assert "b.nc" in str(err.value) and "a.nc" in str(err.value)


def test_overlapping_files_are_refused():
    parts = [_part("a.nc", "2001-01-01"), _part("copy.nc", "2001-01-01")]
    with pytest.raises(MismatchError, match="same times appear in two files"):
        combine_parts(parts, ["a.nc", "copy.nc"])


def test_different_time_steps_are_refused():
    a = _part("a.nc", "2001-01-01")
    time = pd.date_range("2001-02-01", periods=3, freq="MS")
    b = (a[0].assign_coords(time=time), dict(a[1], path="m.nc"))
    with pytest.raises(MismatchError, match="steps"):
        combine_parts([a, b], ["a.nc", "m.nc"])


def test_fill_heuristics_only_for_the_file_without_fill_value():
    parts = [_part("a.nc", "2001-01-01"), _part("b.nc", "2001-01-04", encoding={}, value=1e20)]
    da, _, mask_fill, note = combine_parts(parts, ["a.nc", "b.nc"])
    assert mask_fill is False and "b.nc" in note and "a.nc" not in note
    values = da.isel(lat=0, lon=0).values
    assert np.all(values[:3] == 1.0) and np.all(np.isnan(values[3:]))
