"""Tests of climwidgets/compute/_crest.py: the grid and crest geometry behind rain_shadow.

Outside sources: geodesic distances from pyproj.Geod (WGS84, Karney 2013,
doi:10.1007/s00190-012-0578-z); cell areas from the zone formula
A = R² Δλ (sin φ2 − sin φ1) (Snyder 1987, Map Projections: A Working Manual, USGS PP 1395,
the authalic sphere) and pyproj's geodesic polygon area; wind directions as the WMO
defines them (the direction the wind blows from, clockwise from north; WMO-No. 8).
"""

import numpy as np
import pytest
import xarray as xr
from pyproj import Geod

from climwidgets.compute import _crest
from climwidgets.errors import GridError, ParameterError


@pytest.mark.parametrize(
    "wind_from, toward", [(270.0, (1.0, 0.0)), (90.0, (-1.0, 0.0)), (0.0, (0.0, -1.0)), (180.0, (0.0, 1.0))]
)
def test_wind_axes_point_where_the_wind_goes(wind_from, toward):
    # a westerly (from 270) blows toward the east
    np.testing.assert_allclose(_crest.wind_axes(wind_from), toward, atol=1e-12)


@pytest.mark.parametrize("bad", [-1.0, 361.0, float("nan"), "west", None])
def test_check_wind_from_refuses_non_directions(bad):
    with pytest.raises(ParameterError, match="outside 0-360"):
        _crest.check_wind_from(bad, "rain_shadow")


def test_check_wind_from_folds_360_to_0():
    assert _crest.check_wind_from(360, "f") == 0.0 and _crest.check_wind_from("270", "f") == 270.0


def test_plane_round_trip_and_rotation_are_inverse():
    lon, lat = np.array([-150.0, -149.5]), np.array([-30.0, -29.0])
    x, y = _crest.to_plane(lon, lat, -29.5)
    np.testing.assert_allclose(_crest.from_plane(x, y, -29.5), (lon, lat))
    ex, ny = _crest.wind_axes(250.0)
    p, q = _crest.rotate(x, y, ex, ny)
    np.testing.assert_allclose(_crest.unrotate(p, q, ex, ny), (x, y))
    np.testing.assert_allclose(np.hypot(p, q), np.hypot(x, y))  # a rotation keeps lengths


def test_cell_area_matches_the_zone_formula_and_geodesic_areas():
    lat, lon = np.array([-30.5, -29.5]), np.array([-150.5, -149.5])
    da = xr.DataArray(np.zeros((2, 2)), dims=("lat", "lon"), coords={"lat": lat, "lon": lon})
    area = _crest.cell_area(da)
    r = _crest.EARTH_RADIUS_M
    zone = r**2 * np.radians(1.0) * (np.sin(np.radians(lat + 0.5)) - np.sin(np.radians(lat - 0.5)))
    np.testing.assert_allclose(area.values, np.repeat(zone[:, None], 2, axis=1), rtol=1e-12)
    # the authalic sphere against the WGS84 ellipsoid: within 0.5 % at 30 degrees south
    geod_area, _ = Geod(ellps="WGS84").polygon_area_perimeter([-151, -150, -150, -151], [-31, -31, -30, -30])
    assert abs(area.values[0, 0] / abs(geod_area) - 1) < 5e-3


def test_grid_coords_need_ascending_latitude():
    da = xr.DataArray(np.zeros((2, 2)), dims=("lat", "lon"), coords={"lat": [1.0, 0.0], "lon": [0.0, 1.0]})
    with pytest.raises(GridError, match="not strictly ascending"):
        _crest.grid_coords(da, "rain_shadow")


@pytest.mark.parametrize(
    "ridge, words",
    [
        ([1.0, 2.0], "not a list of"),
        ([(0.0, 0.0)], "at least 2"),
        ([(0.0, 0.0), (0.0, 95.0)], "out-of-range"),
    ],
)
def test_check_ridge_refuses(ridge, words):
    with pytest.raises(ParameterError, match=words):
        _crest.check_ridge(ridge, "rain_shadow")


def test_signed_distance_is_geodesic_and_negative_upwind():
    # a north-south crest at lon -150; westerly wind: cells to the west are windward (< 0)
    lat = np.array([-30.0, -29.5])
    lon = np.array([-151.0, -150.5, -149.5, -149.0])
    ridge = np.array([(-150.0, -31.0), (-150.0, -28.0)])
    dist = _crest.signed_distance_km(lat, lon, ridge, 270.0)
    assert dist.shape == (2, 4)
    assert (dist[:, :2] < 0).all() and (dist[:, 2:] > 0).all()
    geod = Geod(ellps="WGS84")
    for i, la in enumerate(lat):
        for j, lo in enumerate(lon):
            _, _, metres = geod.inv(lo, la, -150.0, la)
            assert dist[i, j] == pytest.approx(np.sign(lo + 150.0) * metres / 1000.0, rel=1e-3)


def test_cells_whose_wind_line_misses_the_crest_are_excluded_or_extended():
    lat = np.array([-30.0, -25.0])  # the crest spans -31..-28 only
    lon = np.array([-151.0, -149.0])
    ridge = np.array([(-150.0, -31.0), (-150.0, -28.0)])
    excluded = _crest.signed_distance_km(lat, lon, ridge, 270.0)
    assert np.isfinite(excluded[0]).all() and np.isnan(excluded[1]).all()
    nearest = _crest.signed_distance_km(lat, lon, ridge, 270.0, beyond_ends="nearest")
    assert np.isfinite(nearest).all()
