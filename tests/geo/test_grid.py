"""Cell bounds and grid tokens (climwidgets/geo/grid.py)."""

import numpy as np
import pytest
import xarray as xr

from climwidgets.errors import GridError
from climwidgets.geo.grid import cell_bounds, grid_token, horizontal_dims

from ._grids import rect_grid, rotated_grid


def test_bounds_inferred_from_centres():
    g = xr.DataArray(np.zeros((3, 3)), dims=("lat", "lon"), coords={"lat": [-89.0, 0.0, 89.5], "lon": [0.0, 1.0, 3.0]})
    b = cell_bounds(g)
    assert b.kind == "rectilinear"
    # Midpoints between centres, edge cells extrapolated by half a step, lat clipped to ±90.
    np.testing.assert_allclose(b.lon_lower, [-0.5, 0.5, 2.0])
    np.testing.assert_allclose(b.lon_upper, [0.5, 2.0, 4.0])
    np.testing.assert_allclose(b.lat_lower, [-90.0, -44.5, 44.75])
    np.testing.assert_allclose(b.lat_upper, [-44.5, 44.75, 90.0])


def test_curvilinear_corners_of_a_regular_mesh():
    g = rect_grid(10, 12, -20, -17, 0.5)
    lon2, lat2 = np.meshgrid(g.lon.values, g.lat.values)
    c = xr.DataArray(
        np.zeros(lat2.shape), dims=("y", "x"), coords={"lat": (("y", "x"), lat2), "lon": (("y", "x"), lon2)}
    )
    b, r = cell_bounds(c), cell_bounds(g)
    assert b.kind == "curvilinear" and b.lon_corners.shape == lat2.shape + (4,)
    np.testing.assert_allclose(b.lon_corners.min(-1), np.broadcast_to(r.lon_lower, lat2.shape))
    np.testing.assert_allclose(b.lat_corners.max(-1), np.broadcast_to(r.lat_upper[:, None], lat2.shape))
    assert horizontal_dims(c) == ("y", "x")


def test_curvilinear_across_antimeridian_stays_continuous():
    lon = np.array([[178.5, 179.5, -179.5], [178.5, 179.5, -179.5]])
    lat = np.array([[0.5, 0.5, 0.5], [1.5, 1.5, 1.5]])
    c = xr.DataArray(np.zeros((2, 3)), dims=("y", "x"), coords={"lat": (("y", "x"), lat), "lon": (("y", "x"), lon)})
    b = cell_bounds(c)
    width = b.lon_corners.max(-1) - b.lon_corners.min(-1)
    np.testing.assert_allclose(width, 1.0)
    np.testing.assert_allclose(b.lon_corners.mean(-1), lon)


def test_token_depends_on_coordinates_not_data():
    a = rect_grid(0, 2, 0, 2, 0.5)
    b = a + 5.0
    assert grid_token(a) == grid_token(b)
    assert grid_token(a) != grid_token(a.assign_coords(lon=a.lon + 0.1))
    with_bounds = a.assign_coords(lat_lower=("lat", a.lat.values - 0.2), lat_upper=("lat", a.lat.values + 0.2))
    assert grid_token(with_bounds) != grid_token(a)
    assert grid_token(rotated_grid()) == grid_token(rotated_grid())


def test_grid_errors():
    with pytest.raises(GridError, match="no lat coordinate.*Fix: rename"):
        cell_bounds(xr.DataArray(np.zeros((2, 2)), dims=("y", "lon"), coords={"lon": [0, 1]}))
    bad = xr.DataArray(np.zeros((3, 2)), dims=("lat", "lon"), coords={"lat": [0, 2, 1], "lon": [0, 1]})
    with pytest.raises(GridError, match="not strictly monotonic.*sortby"):
        cell_bounds(bad)
    with pytest.raises(GridError, match="xarray DataArray or Dataset"):
        cell_bounds(np.zeros(3))
