"""Exact coverage weights (climwidgets/geo/coverage.py)."""

import numpy as np
import pytest
import shapely
import xarray as xr
from exactextract import exact_extract
from exactextract.feature import JSONFeatureSource
from exactextract.raster import NumPyRasterSource
from hypothesis import given, settings
from hypothesis import strategies as st

import climwidgets as cw
from climwidgets.errors import BasinError
from climwidgets.geo._cache import weights_cache
from climwidgets.geo.grid import cell_bounds

from ._grids import rect_grid, rotated_grid, star_polygon


def _exactextract_fractions(basin, grid):
    """Coverage fractions from exactextract 0.3 ("cell_id" and "coverage" operations)."""
    lat, lon = grid.lat.values, grid.lon.values
    step = lat[1] - lat[0]
    ny, nx = lat.size, lon.size
    raster = NumPyRasterSource(
        np.zeros((ny, nx)), lon[0] - step / 2, lat[0] - step / 2, lon[-1] + step / 2, lat[-1] + step / 2
    )
    feats = JSONFeatureSource(
        [{"type": "Feature", "properties": {"id": 1}, "geometry": shapely.geometry.mapping(basin.geometry)}]
    )
    (res,) = exact_extract(raster, feats, ["cell_id", "coverage"])
    out = np.zeros((ny, nx))
    rows, cols = np.divmod(np.asarray(res["properties"]["cell_id"]), nx)
    out[ny - 1 - rows, cols] = res["properties"]["coverage"]  # raster row 0 is the north edge
    return out


def _shapely_cell_by_cell(basin, grid):
    """Reference: each cell polygon intersected with the basin, one by one."""
    b = cell_bounds(grid)
    if b.kind == "rectilinear":
        cells = [
            [shapely.box(x0, y0, x1, y1) for x0, x1 in zip(b.lon_lower, b.lon_upper)]
            for y0, y1 in zip(b.lat_lower, b.lat_upper)
        ]
    else:
        cells = [
            [shapely.Polygon(np.c_[b.lon_corners[j, i], b.lat_corners[j, i]]) for i in range(b.shape[1])]
            for j in range(b.shape[0])
        ]
    return np.array([[c.intersection(basin.geometry).area / c.area for c in row] for row in cells])


@pytest.mark.parametrize("seed", [0, 1, 2, 3])
def test_matches_exactextract(seed):
    # exactextract 0.3.0 computes exact cell coverage fractions (Baston's algorithm).
    rng = np.random.default_rng(seed)
    grid = rect_grid(-35, -30, -150, -144, 0.25)
    verts = star_polygon(rng, -147.0, -32.5, 0.3, 2.3, n=int(rng.integers(5, 40)))
    basin = cw.Basin.from_vertices(verts, name=f"random {seed}")
    w = cw.coverage_weights(basin, grid)
    assert w.attrs["units"] == "1" and w.dims == ("lat", "lon")
    np.testing.assert_allclose(w.values, _exactextract_fractions(basin, grid), atol=1e-6)


def test_basin_with_hole_matches_exactextract():
    basin = cw.Basin.from_wkt(
        "POLYGON((-149.1 -34.2, -145.3 -34.6, -144.9 -30.8, -149.6 -31.1, -149.1 -34.2),"
        "(-148.13 -33.07, -146.41 -33.3, -146.9 -31.77, -148.13 -33.07))",
        name="ring",
    )
    grid = rect_grid(-35, -30, -150, -144, 0.25)
    np.testing.assert_allclose(cw.coverage_weights(basin, grid).values, _exactextract_fractions(basin, grid), atol=1e-6)


def test_curvilinear_against_shapely_cell_polygons():
    grid = rotated_grid()
    rng = np.random.default_rng(7)
    basin = cw.Basin.from_vertices(star_polygon(rng, -140.5, -27.0, 0.8, 2.5, n=15), name="curvy")
    w = cw.coverage_weights(basin, grid)
    assert w.dims == ("y", "x") and set(w.coords) == {"lat", "lon"}
    np.testing.assert_allclose(w.values, _shapely_cell_by_cell(basin, grid), atol=1e-12)
    assert ((w > 0) & (w < 1)).any() and w.values.max() == 1.0


@pytest.mark.parametrize(
    "wkt",
    [
        "POLYGON((-139.8 -25.6, -139.78 -25.6, -139.78 -25.58, -139.8 -25.58, -139.8 -25.6))",  # inside one cell
        "POLYGON((-150 -40, -120 -40, -120 -10, -150 -10, -150 -40))",  # covers the whole grid
        "POLYGON((-142.5 -28.6, -138.6 -28.9, -138.2 -24.9, -142.8 -25.3, -142.5 -28.6),"
        "(-141.3 -27.4, -139.6 -27.7, -140.1 -26.0, -141.3 -27.4))",  # with a hole
    ],
)
def test_curvilinear_small_large_and_holed_basins(wkt):
    # Cells far from, next to and around the outline on the curvilinear path: each cell
    # matches its own polygon's shapely intersection.
    grid = rotated_grid()
    w = cw.coverage_weights(cw.Basin.from_wkt(wkt, name="b"), grid)
    np.testing.assert_allclose(w.values, _shapely_cell_by_cell(cw.Basin.from_wkt(wkt), grid), atol=1e-12)


def test_irregular_and_descending_grids():
    rng = np.random.default_rng(11)
    basin = cw.Basin.from_vertices(star_polygon(rng, -147.0, -32.5, 0.5, 2.0, n=20), name="b")
    grid = rect_grid(-35, -30, -150, -144, 0.5)
    w = cw.coverage_weights(basin, grid)
    flipped = cw.coverage_weights(basin, grid.isel(lat=slice(None, None, -1)))
    np.testing.assert_array_equal(flipped.values, w.values[::-1])
    # Cells with gaps between them (explicit bounds narrower than the spacing).
    gappy = grid.assign_coords(lat_lower=("lat", grid.lat.values - 0.2), lat_upper=("lat", grid.lat.values + 0.2))
    np.testing.assert_allclose(
        cw.coverage_weights(basin, gappy).values, _shapely_cell_by_cell(basin, gappy), atol=1e-12
    )
    # Uneven spacing takes the fast path too.
    uneven = xr.DataArray(
        np.zeros((6, 7)),
        dims=("lat", "lon"),
        coords={
            "lat": [-34.5, -34.0, -33.0, -32.5, -31.0, -30.5],
            "lon": [-149.5, -148.8, -148.0, -147.0, -146.5, -145.0, -144.5],
        },
    )
    np.testing.assert_allclose(
        cw.coverage_weights(basin, uneven).values, _shapely_cell_by_cell(basin, uneven), atol=1e-12
    )


def test_antimeridian_basin_on_global_grid():
    basin = cw.Basin.from_vertices([(178.25, 10.25), (-177.75, 10.25), (-177.75, 12.75), (178.25, 12.75)])
    grid = rect_grid(0, 20, -180, 180, 1.0)
    w = cw.coverage_weights(basin, grid)
    planar = float((w * 1.0).sum())  # 1° × 1° cells: Σ fraction = area in degrees²
    np.testing.assert_allclose(planar, 4.0 * 2.5, rtol=1e-12)
    assert float(w.sel(lon=179.5, lat=11.5)) == 1.0 and float(w.sel(lon=-178.5, lat=11.5)) == 1.0
    # A grid whose first cell straddles 180° (centre -180, edges -180.5..-179.5).
    shifted = xr.DataArray(
        np.zeros((3, 360)), dims=("lat", "lon"), coords={"lat": [10.5, 11.5, 12.5], "lon": np.arange(-180.0, 180.0)}
    )
    box = cw.Basin.from_vertices([(179.6, 10.0), (180.0, 10.0), (180.0, 13.0), (179.6, 13.0)])
    ws = cw.coverage_weights(box, shifted)
    np.testing.assert_allclose(ws.sel(lon=-180.0).values, 0.4, rtol=1e-12)
    np.testing.assert_allclose(float(ws.sum()), 1.2, rtol=1e-12)


def test_outside_grid_raises_and_cache_is_used():
    grid = rect_grid(-35, -30, -150, -144, 0.5)
    far = cw.Basin.from_vertices([(-30, -40), (-29, -40), (-29, -39)], name="far away")
    with pytest.raises(BasinError, match=r"basin 'far away': lies entirely outside the grid.*\(lon, lat\)"):
        cw.coverage_weights(far, grid)
    basin = cw.Basin.from_vertices([(-149, -34), (-146, -34), (-147, -31)])
    weights_cache.clear()
    a = cw.coverage_weights(basin, grid)
    assert len(weights_cache) == 1
    b = cw.coverage_weights(basin, grid + 1.0)  # same grid, other data: cache hit
    assert len(weights_cache) == 1
    xr.testing.assert_identical(a.drop_attrs(), b.drop_attrs())


_GRID = rect_grid(-35, -30, -150, -144, 0.5)


@settings(max_examples=40, deadline=None)
@given(
    cx=st.floats(-152.0, -142.0),
    cy=st.floats(-37.0, -28.0),
    rmax=st.floats(0.2, 4.0),
    n=st.integers(3, 30),
    seed=st.integers(0, 2**31),
)
def test_property_weights_bounded_and_area_consistent(cx, cy, rmax, n, seed):
    verts = star_polygon(np.random.default_rng(seed), cx, cy, 0.1 * rmax, rmax, n=n)
    try:
        basin = cw.Basin.from_vertices(verts, name="random")
    except BasinError:
        return  # a degenerate random ring (tested separately)
    poly = basin.geometry
    grid_box = shapely.box(-150, -35, -144, -30)
    try:
        w = cw.coverage_weights(basin, _GRID)
    except BasinError:
        # By design an outline that does not overlap the grid raises (no all-zero weights).
        assert poly.intersection(grid_box).area == 0.0
        return
    assert np.all((w.values >= 0) & (w.values <= 1))
    # Σ fraction × cell area (degrees²) is the planar area of the basin inside the grid
    # (shapely's overlay as the outside reference): never more than the polygon.
    inside = float(w.sum()) * 0.25
    np.testing.assert_allclose(inside, poly.intersection(grid_box).area, rtol=1e-9, atol=1e-12)
    assert inside <= poly.area * (1 + 1e-9)
    # Moved entirely off the grid: BasinError.
    off = cw.Basin.from_vertices([(x + 20.0, y) for x, y in verts], name="moved")
    with pytest.raises(BasinError, match="outside the grid"):
        cw.coverage_weights(off, _GRID)


def test_curvilinear_grid_and_basin_across_antimeridian():
    # Translation invariance: the same grid and basin 10° west of 180° give the same weights.
    ring = [(179.3, -27.5), (-178.9, -27.0), (-179.2, -24.8), (178.8, -25.3)]
    west = [((x - 10.0 + 180.0) % 360.0) - 180.0 for x, _ in ring]
    crossing = cw.Basin.from_vertices(ring, name="across")
    assert crossing.geometry.geom_type == "MultiPolygon"
    near = cw.Basin.from_vertices(list(zip(west, [y for _, y in ring])), name="west of it")
    grid = rotated_grid(ny=14, nx=16, lat0=-29.0, lon0=177.0)
    grid = grid.assign_coords(lon=((grid.lon + 180.0) % 360.0) - 180.0)
    moved = grid.assign_coords(lon=grid.lon - 10.0)
    moved = moved.assign_coords(lon=((moved.lon + 180.0) % 360.0) - 180.0)
    np.testing.assert_allclose(
        cw.coverage_weights(crossing, grid).values, cw.coverage_weights(near, moved).values, atol=1e-9
    )


def test_whole_globe_and_polar_cap_cover_the_right_cells():
    lat, lon = np.arange(-89.0, 90.0, 2.0), np.arange(-179.0, 180.0, 2.0)
    field = xr.DataArray(np.ones((lat.size, lon.size)), dims=("lat", "lon"), coords={"lat": lat, "lon": lon})
    globe = cw.Basin.from_vertices([(-180, -90), (180, -90), (180, 90), (-180, 90)], name="globe")
    np.testing.assert_allclose(cw.coverage_weights(globe, field).values, 1.0)
    cap = cw.Basin.from_vertices([(-180, 60), (180, 60), (180, 90), (-180, 90)], name="cap")
    w = cw.coverage_weights(cap, field)
    # 2-degree rows with centres 61..89 lie wholly north of 60°N: 15 rows of 180 cells
    np.testing.assert_allclose(w.sel(lat=slice(60, 90)).values, 1.0)
    assert float(w.sel(lat=slice(-90, 60)).sum()) == 0.0
