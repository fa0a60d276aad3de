"""io/grid.py: coordinates found by CF attributes or names, cell edges, the house layout."""

import numpy as np
import pytest
import xarray as xr

from climwidgets.errors import GridError
from climwidgets.io import grid


def test_infer_edges_half_way_between_centres():
    # Hand arithmetic: centres 0, 1, 3 -> midpoints 0.5 and 2; outer edges mirror the first
    # and last half-gaps: 0 - 0.5 = -0.5 and 3 + 1 = 4.
    lower, upper = grid.infer_edges(np.array([0.0, 1.0, 3.0]))
    np.testing.assert_allclose(lower, [-0.5, 0.5, 2.0])
    np.testing.assert_allclose(upper, [0.5, 2.0, 4.0])


def test_infer_edges_descending_and_clipped_at_the_pole():
    # Hand arithmetic: 89.5, 88.5 (1-degree cells, north first) -> edges 90.0, 89, 88; a
    # 2-degree grid at 89 would give an outer edge at 90 + 1 = 91, clipped to 90.
    lower, upper = grid.infer_edges(np.array([89.5, 88.5]), clip=90.0)
    np.testing.assert_allclose(lower, [89.0, 88.0])
    np.testing.assert_allclose(upper, [90.0, 89.0])
    lower, upper = grid.infer_edges(np.array([87.0, 89.0]), clip=90.0)
    assert upper.max() == 90.0


def test_bounds_to_edges_orders_each_pair():
    lower, upper = grid.bounds_to_edges(np.array([[1.0, 0.0], [1.0, 2.0]]), np.array([0.5, 1.5]))
    np.testing.assert_array_equal(lower, [0.0, 1.0])
    np.testing.assert_array_equal(upper, [1.0, 2.0])


def test_find_coord_by_cf_attributes_then_by_name():
    ds = xr.Dataset(
        {"pr": (("t", "yy", "xx"), np.zeros((2, 2, 3)))},
        coords={
            "yy": ("yy", [1.0, 2.0], {"units": "degrees_north"}),
            "xx": ("xx", [1.0, 2.0, 3.0], {"standard_name": "longitude"}),
            "t": ("t", [0, 1], {"units": "days since 2000-01-01"}),
        },
    )
    assert grid.find_coord(ds, ds["pr"], "lat") == "yy"
    assert grid.find_coord(ds, ds["pr"], "lon") == "xx"
    assert grid.find_coord(ds, ds["pr"], "time") == "t"
    plain = xr.Dataset(
        {"pr": (("latitude", "longitude"), np.zeros((2, 2)))}, coords={"latitude": [0.0, 1.0], "longitude": [0.0, 1.0]}
    )
    assert grid.find_coord(plain, plain["pr"], "lat") == "latitude"


def test_canonical_names_renames_without_changing_the_input():
    da = xr.DataArray(
        np.zeros((2, 3)),
        dims=("latitude", "longitude"),
        coords={
            "latitude": ("latitude", [0.0, 1.0], {"standard_name": "latitude"}),
            "longitude": ("longitude", [0.0, 1.0, 2.0], {"standard_name": "longitude"}),
        },
    )
    out = grid.canonical_names(da)
    assert out.dims == ("lat", "lon")
    assert da.dims == ("latitude", "longitude")


def test_normalise_rectilinear_sorts_wraps_and_attaches_bounds():
    da = xr.DataArray(
        np.arange(6.0).reshape(2, 3), dims=("lat", "lon"), coords={"lat": [11.0, 10.0], "lon": [350.0, 355.0, 0.0]}
    )
    out = grid.normalise_rectilinear(da)
    np.testing.assert_array_equal(out.lat, [10.0, 11.0])
    # Hand arithmetic: 350, 355, 0 east are -10, -5, 0 in [-180, 180), 5-degree cells.
    np.testing.assert_array_equal(out.lon, [-10.0, -5.0, 0.0])
    np.testing.assert_allclose(out.lon_lower, [-12.5, -7.5, -2.5])
    np.testing.assert_allclose(out.lon_upper, [-7.5, -2.5, 2.5])
    np.testing.assert_allclose(out.lat_lower, [9.5, 10.5])
    assert out.sel(lat=11.0, lon=-10.0).item() == 0.0  # values follow their coordinates
    assert out.attrs["cell_bounds"] == "inferred from cell centres"


@pytest.mark.parametrize(
    "lat, lon, match",
    [
        ([0.0, 95.0], [0.0, 1.0], "outside -90..90"),
        ([0.0], [0.0, 1.0], "single latitude"),
        ([0.0, np.nan], [0.0, 1.0], "NaN"),
    ],
)
def test_normalise_rectilinear_refuses_bad_coordinates(lat, lon, match):
    da = xr.DataArray(np.zeros((len(lat), len(lon))), dims=("lat", "lon"), coords={"lat": lat, "lon": lon})
    with pytest.raises(GridError, match=match):
        grid.normalise_rectilinear(da, source="x.nc")
