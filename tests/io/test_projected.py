"""Projected grids with only x/y and a CF grid_mapping; checked against pyproj itself."""

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from pyproj import CRS, Transformer

import climwidgets as cw
from climwidgets.errors import GridError
from climwidgets.geo.grid import cell_bounds

from .conftest import checksum

# Lambert conformal conic on open ocean (an invented product grid), spherical earth
MAPPING = {
    "grid_mapping_name": "lambert_conformal_conic",
    "standard_parallel": [30.0, 60.0],
    "longitude_of_central_meridian": -30.0,
    "latitude_of_projection_origin": 45.0,
    "false_easting": 0.0,
    "false_northing": 0.0,
    "earth_radius": 6371229.0,
}
X = np.arange(-200.0, 201.0, 20.0)  # km, cell centres
Y = np.arange(-160.0, 161.0, 20.0)


def _field(nt=4):
    yy, xx = np.meshgrid(Y, X, indexing="ij")
    base = 2.0 + np.sin(xx / 90.0) + np.cos(yy / 70.0)  # smooth, positive, mm/day
    return np.broadcast_to(base, (nt,) + base.shape) * (1 + np.arange(nt))[:, None, None]


def _projected_ds(with_latlon=False, with_mapping=True):
    times = pd.date_range("2001-01-01", periods=4, freq="D")
    attrs = {"units": "mm/day", **({"grid_mapping": "lambert"} if with_mapping else {})}
    ds = xr.Dataset(
        {"rr": (("time", "yc", "xc"), _field(), attrs)},
        coords={
            "time": times,
            "xc": ("xc", X, {"standard_name": "projection_x_coordinate", "units": "km"}),
            "yc": ("yc", Y, {"standard_name": "projection_y_coordinate", "units": "km"}),
        },
    )
    if with_mapping:
        ds["lambert"] = ((), 0, MAPPING)
    if with_latlon:
        to_geo = Transformer.from_crs(CRS.from_cf(MAPPING), CRS.from_cf(MAPPING).geodetic_crs, always_xy=True)
        gx, gy = np.meshgrid(X * 1000.0, Y * 1000.0)
        lon, lat = to_geo.transform(gx, gy)
        ds = ds.assign_coords(
            lat=(("yc", "xc"), lat, {"units": "degrees_north"}), lon=(("yc", "xc"), lon, {"units": "degrees_east"})
        )
    return ds


def test_latlon_from_the_grid_mapping_equal_pyproj(tmp_path):
    path = tmp_path / "radar.nc"
    _projected_ds().to_netcdf(path)
    before = checksum(path)
    pr = cw.open_precip(path)
    assert pr.dims == ("time", "y", "x") and pr.lat.dims == ("y", "x")
    # outside check: pyproj's own transform of the centres (metres = km x 1000)
    crs = CRS.from_cf(MAPPING)
    lon, lat = Transformer.from_crs(crs, crs.geodetic_crs, always_xy=True).transform(*np.meshgrid(X * 1e3, Y * 1e3))
    np.testing.assert_allclose(pr.lat.values, lat, atol=1e-10)
    np.testing.assert_allclose(pr.lon.values, lon, atol=1e-10)
    # by definition the projection origin (x = y = 0) is the origin's lon/lat
    j, i = np.flatnonzero(Y == 0)[0], np.flatnonzero(X == 0)[0]
    assert pr.lat.values[j, i] == pytest.approx(45.0, abs=1e-9)
    assert pr.lon.values[j, i] == pytest.approx(-30.0, abs=1e-9)
    np.testing.assert_allclose(pr.isel(time=0).values, _field()[0])  # 1 day of a mm/day rate
    assert "grid mapping" in pr.attrs["cell_bounds"]
    assert checksum(path) == before


def test_cell_corners_are_the_projected_edges_through_pyproj():
    pr = cw.open_precip(_projected_ds())
    b = cell_bounds(pr)
    crs = CRS.from_cf(MAPPING)
    to_geo = Transformer.from_crs(crs, crs.geodetic_crs, always_xy=True)
    # lower-left corner of cell (0, 0) is at (x0 - 10 km, y0 - 10 km); upper-right of the last cell
    lon, lat = to_geo.transform((X[0] - 10) * 1e3, (Y[0] - 10) * 1e3)
    assert (b.lon_corners[0, 0, 0], b.lat_corners[0, 0, 0]) == pytest.approx((lon, lat), abs=1e-10)
    lon, lat = to_geo.transform((X[-1] + 10) * 1e3, (Y[-1] + 10) * 1e3)
    assert (b.lon_corners[-1, -1, 2], b.lat_corners[-1, -1, 2]) == pytest.approx((lon, lat), abs=1e-10)


def test_basin_mean_equals_the_same_grid_with_explicit_latlon():
    basin = cw.Basin.from_vertices([(-31.5, 44.2), (-28.9, 44.0), (-28.4, 45.6), (-30.8, 46.1)], name="b")
    mapping_only = cw.open_precip(_projected_ds())
    both = cw.open_precip(_projected_ds(with_latlon=True))  # lat/lon stored, and the mapping
    latlon_only = cw.open_precip(_projected_ds(with_latlon=True, with_mapping=False))
    a, b, c = (cw.basin_mean(p, basin) for p in (mapping_only, both, latlon_only))
    np.testing.assert_allclose(a.values, b.values, rtol=1e-12)
    # without the mapping the corners are inferred from the centres: the same to 1e-4
    np.testing.assert_allclose(a.values, c.values, rtol=1e-4)
    np.testing.assert_allclose(
        cw.basin_volume(mapping_only, basin).values, cw.basin_volume(both, basin).values, rtol=1e-12
    )


def test_bad_grid_mapping_and_units_are_explained():
    ds = _projected_ds()
    ds["lambert"].attrs = {"grid_mapping_name": "no_such_projection"}
    with pytest.raises(GridError, match="grid mapping pyproj cannot read.*Fix: complete"):
        cw.open_precip(ds)
    ds = _projected_ds()
    ds["xc"].attrs["units"] = "furlong"
    with pytest.raises(GridError, match="projection coordinates in 'furlong'"):
        cw.open_precip(ds)


def _with_bounds(ds, x_edges, y_edges, centre_x=None, centre_y=None):
    """``ds`` with CF x_bnds/y_bnds (km) from the given edges (and optionally moved centres)."""
    ds = ds.copy()
    if centre_x is not None:
        ds = ds.assign_coords(xc=("xc", centre_x, ds["xc"].attrs))
    if centre_y is not None:
        ds = ds.assign_coords(yc=("yc", centre_y, ds["yc"].attrs))
    ds["xc_bnds"] = (("xc", "nv"), np.stack([x_edges[:-1], x_edges[1:]], axis=1))
    ds["yc_bnds"] = (("yc", "nv"), np.stack([y_edges[:-1], y_edges[1:]], axis=1))
    ds["xc"].attrs["bounds"], ds["yc"].attrs["bounds"] = "xc_bnds", "yc_bnds"
    return ds


def test_stored_projected_bounds_give_the_corners():
    # cells whose centres are not half-way between edges (e.g. a product stamped at the
    # cell's lower-left quarter): the stored bounds, not the centres, define the corners
    x_edges, y_edges = np.append(X - 10.0, X[-1] + 10.0), np.append(Y - 10.0, Y[-1] + 10.0)
    x_edges[5] += 4.0  # one uneven edge
    ds = _with_bounds(_projected_ds(), x_edges, y_edges, centre_x=0.5 * (x_edges[:-1] + x_edges[1:]) - 3.0)
    pr = cw.open_precip(ds)
    b = cell_bounds(pr)
    crs = CRS.from_cf(MAPPING)
    to_geo = Transformer.from_crs(crs, crs.geodetic_crs, always_xy=True)
    # outside check: pyproj's transform of the stored edges (km x 1000)
    for j, i in ((0, 0), (3, 4), (3, 5), (len(Y) - 1, len(X) - 1)):
        lon, lat = to_geo.transform(x_edges[i] * 1e3, y_edges[j] * 1e3)
        assert (b.lon_corners[j, i, 0], b.lat_corners[j, i, 0]) == pytest.approx((lon, lat), abs=1e-10)
        lon, lat = to_geo.transform(x_edges[i + 1] * 1e3, y_edges[j + 1] * 1e3)
        assert (b.lon_corners[j, i, 2], b.lat_corners[j, i, 2]) == pytest.approx((lon, lat), abs=1e-10)
    # arithmetic keeps the coordinate attributes, and so the corners
    again = cell_bounds(pr * 1.5)
    np.testing.assert_array_equal(again.lon_corners, b.lon_corners)


def test_bad_projected_bounds_are_explained():
    x_edges, y_edges = np.append(X - 10.0, X[-1] + 10.0), np.append(Y - 10.0, Y[-1] + 10.0)
    ds = _with_bounds(_projected_ds(), x_edges, y_edges)
    ds["xc_bnds"][3, 1] = ds["xc_bnds"][3, 1] + 5.0  # a gap between cells 3 and 4
    with pytest.raises(GridError, match="xc_bnds.*not contiguous"):
        cw.open_precip(ds)
    ds = _with_bounds(_projected_ds(), x_edges, y_edges)
    ds["yc_bnds"][2, 0] = np.nan
    with pytest.raises(GridError, match="yc_bnds"):
        cw.open_precip(ds)
    ds = _with_bounds(_projected_ds(), x_edges + 30.0, y_edges)  # every centre outside its cell
    with pytest.raises(GridError, match="outside"):
        cw.open_precip(ds)
