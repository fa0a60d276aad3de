"""Checks for climwidgets.compute.regrid (conservative and bilinear remapping)."""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.compute.regrid import separable_weights
from climwidgets.errors import GridError, InputError, ParameterError

R1 = 6_371_008.7714  # GRS80 mean radius (2a+b)/3, Moritz (1980) Bull. Geod. 54(3)


def _field(lat, lon, nt=2, seed=0, bounds=None):
    rng = np.random.default_rng(seed)
    da = xr.DataArray(
        rng.gamma(2.0, 20.0, (nt, len(lat), len(lon))),
        dims=("time", "lat", "lon"),
        coords={"time": np.arange(nt), "lat": lat, "lon": lon},
        attrs={"units": "mm", "step": "month"},
        name="pr",
    )
    if bounds is not None:
        da = da.assign_coords({k: (k[:3], v) for k, v in bounds.items()})
    return da


def _area(da):
    """Cell areas (m²) from climwidgets.geo.area.cell_area, an implementation independent
    of the regridding weights."""
    return cw.cell_area(da)


def _total(da):
    return (da * _area(da).values).sum(("lat", "lon")).values


# ------------------------------------------------------------------ conservation
# Invariant: a conservative remap keeps the area-weighted total when the target domain
# covers the source domain (common practice for first-order conservative remapping).
def test_conservation_coarsening_0p1_to_0p5():
    src = _field(np.arange(-4.95, 5.0, 0.1), np.arange(10.05, 20.0, 0.1))
    out, cov = cw.regrid(
        src, {"lat": np.arange(-4.75, 5.0, 0.5), "lon": np.arange(10.25, 20.0, 0.5)}, return_coverage=True
    )
    assert out.shape == (2, 20, 20)
    np.testing.assert_allclose(_total(out), _total(src), rtol=1e-10)
    np.testing.assert_allclose(cov.values, 1.0, rtol=1e-10)
    assert out.attrs["units"] == "mm" and "regrid" in out.attrs["history"]


def test_conservation_refining():
    src = _field(np.arange(-4.75, 5.0, 0.5), np.arange(10.25, 20.0, 0.5))
    out = cw.regrid(src, {"lat": np.arange(-4.95, 5.0, 0.1), "lon": np.arange(10.05, 20.0, 0.1)})
    np.testing.assert_allclose(_total(out), _total(src), rtol=1e-10)
    # refining a piecewise-constant field reproduces it exactly inside each source cell
    np.testing.assert_allclose(
        out.isel(lat=slice(0, 5), lon=slice(0, 5)).values,
        np.broadcast_to(src.isel(lat=[0], lon=[0]).values, (2, 5, 5)),
        rtol=1e-12,
    )


def test_conservation_shifted_global_grids_with_wrap():
    # source 2° global; target shifted by 0.7° in longitude (wrapping across ±180) and
    # irregular latitude bands with explicit bounds that still span pole to pole
    src = _field(np.arange(-89.0, 90.0, 2.0), np.arange(-179.0, 180.0, 2.0))
    lat_edges = np.array([-90, -71.3, -40.0, -12.5, 0.3, 22.0, 55.5, 80.1, 90.0])
    lon_edges = np.arange(-179.3, 181.0, 3.0)
    lon_edges = lon_edges[lon_edges <= 180.7]
    lat_c = 0.5 * (lat_edges[1:] + lat_edges[:-1])
    lon_c = 0.5 * (lon_edges[1:] + lon_edges[:-1])
    tgt = xr.Dataset(
        coords={
            "lat": lat_c,
            "lon": lon_c,
            "lat_lower": ("lat", lat_edges[:-1]),
            "lat_upper": ("lat", lat_edges[1:]),
            "lon_lower": ("lon", lon_edges[:-1]),
            "lon_upper": ("lon", lon_edges[1:]),
        }
    )
    assert lon_edges[-1] - lon_edges[0] == pytest.approx(360.0)
    out, cov = cw.regrid(src, tgt, return_coverage=True)
    np.testing.assert_allclose(cov.values, 1.0, rtol=1e-10)
    np.testing.assert_allclose(_total(out), _total(src), rtol=1e-10)


def test_same_grid_is_identity():
    src = _field(np.arange(-4.75, 5.0, 0.5), np.arange(10.25, 20.0, 0.5))
    out = cw.regrid(src, src)
    np.testing.assert_allclose(out.values, src.values, rtol=1e-12)


def test_target_in_0_360_convention_is_a_roll():
    src = _field(np.arange(-89.0, 90.0, 2.0), np.arange(-179.0, 180.0, 2.0), nt=1)
    out = cw.regrid(src, {"lat": src.lat.values, "lon": np.arange(1.0, 360.0, 2.0)})
    np.testing.assert_allclose(out.values, np.roll(src.values, -90, axis=-1), rtol=1e-12)


def test_separable_weights_equal_analytic_spherical_areas():
    # A = R² Δλ (sin φ2 − sin φ1): area of a lat/lon cell from the spherical cap 2πR²(1 − sin φ)
    # (Snyder 1987, USGS PP 1395 — from memory).  No shapely involved on either side.
    wlat, wlon = separable_weights(
        (np.array([0.0]), np.array([1.0])),
        (np.array([0.0]), np.array([1.0])),
        (np.array([0.0]), np.array([1.0])),
        (np.array([0.0]), np.array([1.0])),
    )
    # computed value for R1 (GRS80 mean radius): 12 363 718 034.18 m² for the 1°x1° cell 0–1°N
    np.testing.assert_allclose(R1**2 * wlat[0, 0] * wlon[0, 0], 12_363_718_034.18, rtol=1e-10)
    # a partial overlap: source [0,1]x[0,1] with target [0.25,3]x[0.5,2] shares [0.25,1]x[0.5,1]
    wlat, wlon = separable_weights(
        (np.array([0.0]), np.array([1.0])),
        (np.array([0.0]), np.array([1.0])),
        (np.array([0.25]), np.array([3.0])),
        (np.array([0.5]), np.array([2.0])),
    )
    expect = R1**2 * np.deg2rad(0.5) * (np.sin(np.deg2rad(1.0)) - np.sin(np.deg2rad(0.25)))
    np.testing.assert_allclose(R1**2 * wlat[0, 0] * wlon[0, 0], expect, rtol=1e-12)
    # a global 1° grid: the overlap weights sum to the whole sphere, 4π (telescoping sum)
    e = np.arange(-90.0, 91.0, 1.0)
    el = np.arange(-180.0, 181.0, 1.0)
    wlat, wlon = separable_weights((e[:-1], e[1:]), (el[:-1], el[1:]), (e[:-1], e[1:]), (el[:-1], el[1:]))
    assert wlat.nnz == 180 and wlon.nnz == 360  # same grid: diagonal only
    np.testing.assert_allclose(wlat.sum() * wlon.sum(), 4 * np.pi, rtol=1e-12)
    # and cell by cell they equal geo.area.cell_area on the same grid
    grid = xr.Dataset(coords={"lat": np.arange(-89.5, 90.0), "lon": np.arange(-179.5, 180.0)})
    np.testing.assert_allclose(
        R1**2 * np.outer(wlat.diagonal(), wlon.diagonal()), cw.cell_area(grid, radius=R1).values, rtol=1e-10
    )


# ------------------------------------------------------------------ missing values
def test_missing_block_does_not_leak_and_coverage_is_reported():
    src = _field(np.arange(-4.95, 5.0, 0.1), np.arange(10.05, 20.0, 0.1), nt=1)
    src[:] = 5.0
    # NaN block: source rows 0..29 (lat -5..-2) and columns 0..11 (lon 10..11.2)
    src[:, :30, :12] = np.nan
    tgt = {"lat": np.arange(-4.75, 5.0, 0.5), "lon": np.arange(10.25, 20.0, 0.5)}
    out, cov = cw.regrid(src, tgt, return_coverage=True)
    # cells wholly inside the block stay missing
    assert np.isnan(out.values[0, :6, :2]).all()
    # lon 11.0-11.5 target column: 0.2 of its 0.5° width is in the block -> coverage 0.6
    np.testing.assert_allclose(cov.values[0, 0, 2], 0.6, rtol=1e-9)
    # every non-missing output is exactly the constant: no zeros leaked in
    np.testing.assert_allclose(out.values[np.isfinite(out.values)], 5.0, rtol=1e-12)
    assert np.isfinite(out.values[0, 0, 2])
    np.testing.assert_allclose(cov.values[0, 10:, :], 1.0, rtol=1e-10)
    assert cov.attrs["units"] == "1"
    # strict: any shortfall is missing; min_coverage: 0.6 < 0.8 is missing too
    strict = cw.regrid(src, tgt, coverage="strict")
    assert np.isnan(strict.values[0, 0, 2])
    assert np.isnan(cw.regrid(src, tgt, min_coverage=0.8).values[0, 0, 2])


def test_target_beyond_source_domain_is_masked_by_coverage():
    src = _field(np.arange(-4.75, 5.0, 0.5), np.arange(10.25, 20.0, 0.5), nt=1)
    # inferred target edges: lat 4, 5, 6; lon 12.75, 17.25, 21.75, 26.25; source ends at 5°N, 20°E
    tgt = {"lat": [4.5, 5.5], "lon": [15.0, 19.5, 24.0]}
    out, cov = cw.regrid(src, tgt, return_coverage=True)
    np.testing.assert_allclose(cov.values[0, 0], [1.0, 2.75 / 4.5, 0.0], rtol=1e-9, atol=1e-15)
    assert np.isfinite(out.values[0, 0, :2]).all() and np.isnan(out.values[0, 0, 2])
    assert np.isnan(out.values[0, 1]).all()


# ------------------------------------------------------------------ bilinear
def test_bilinear_matches_xarray_interp_on_smooth_field():
    lat = np.arange(-10.0, 10.1, 1.0)
    lon = np.arange(20.0, 40.1, 1.0)
    la, lo = np.meshgrid(lat, lon, indexing="ij")
    src = xr.DataArray(
        (50 + 10 * np.sin(np.deg2rad(3 * la)) * np.cos(np.deg2rad(2 * lo)))[None],
        dims=("time", "lat", "lon"),
        coords={"time": [0], "lat": lat, "lon": lon},
        attrs={"units": "mm", "step": "month"},
    )
    tlat, tlon = np.linspace(-9.3, 9.7, 13), np.linspace(20.2, 39.9, 17)
    out = cw.regrid(src, {"lat": tlat, "lon": tlon}, method="bilinear")
    ref = src.interp(lat=tlat, lon=tlon, method="linear")  # xarray's own DataArray.interp
    np.testing.assert_allclose(out.values, ref.values, rtol=1e-12)


def test_bilinear_wraps_a_global_source():
    lat = np.arange(-60.0, 61.0, 2.0)
    lon = np.arange(-179.0, 180.0, 2.0)
    src = xr.DataArray(
        np.broadcast_to(np.cos(np.deg2rad(lon)), (1, lat.size, lon.size)).copy(),
        dims=("time", "lat", "lon"),
        coords={"time": [0], "lat": lat, "lon": lon},
        attrs={"units": "mm", "step": "month"},
    )
    out = cw.regrid(src, {"lat": [0.0], "lon": [179.5, -179.5, 180.0]}, method="bilinear")
    # between centres 179 and -179 (=181): linear interpolation of cos gives cos(179°) there
    np.testing.assert_allclose(out.values[0, 0], np.cos(np.deg2rad(179.0)), rtol=1e-12)


# ------------------------------------------------------------------ curvilinear
def _curvilinear_copy(da):
    la, lo = np.meshgrid(da.lat.values, da.lon.values, indexing="ij")
    return xr.DataArray(
        da.values,
        dims=("time", "y", "x"),
        coords={"time": da.time.values, "lat": (("y", "x"), la), "lon": (("y", "x"), lo)},
        attrs=dict(da.attrs),
        name="pr",
    )


def test_curvilinear_polygon_path_agrees_with_separable_path():
    src = _field(np.arange(-2.9, 3.0, 0.2), np.arange(-3.9, 4.0, 0.2))
    tgt = {"lat": np.arange(-2.5, 3.0, 1.0), "lon": np.arange(-3.5, 4.0, 1.0)}
    a = cw.regrid(src, tgt)
    b = cw.regrid(_curvilinear_copy(src), tgt)
    np.testing.assert_allclose(b.values, a.values, rtol=1e-11)


def test_curvilinear_rotated_grid_conserves_total():
    import shapely  # shapely's polygon area as the independent measure of the source quads

    from climwidgets.geo.grid import cell_bounds

    j, i = np.meshgrid(np.arange(12), np.arange(14), indexing="ij")
    t = np.deg2rad(20.0)
    lat = 0.3 * (np.cos(t) * j - np.sin(t) * i) + 2.0
    lon = 0.3 * (np.sin(t) * j + np.cos(t) * i) + 179.0  # crosses the antimeridian
    lon = (lon + 180.0) % 360.0 - 180.0
    rng = np.random.default_rng(3)
    src = xr.DataArray(
        rng.gamma(2.0, 10.0, (1, 12, 14)),
        dims=("time", "y", "x"),
        coords={"time": [0], "lat": (("y", "x"), lat), "lon": (("y", "x"), lon)},
        attrs={"units": "mm", "step": "month"},
    )
    tgt = {"lat": np.arange(-1.75, 8.0, 0.5), "lon": np.arange(-179.75, 180.0, 0.5)}
    out, cov = cw.regrid(src, tgt, coverage="renormalise", min_coverage=1e-12, return_coverage=True)
    g = cell_bounds(src)
    xy = np.stack([np.deg2rad(g.lon_corners), np.sin(np.deg2rad(g.lat_corners))], -1).reshape(-1, 4, 2)
    quad_area = shapely.area(shapely.polygons(xy)).reshape(12, 14)
    unit = _area(out) / _area(out).attrs["radius_m"] ** 2  # unit-sphere areas, as the quads
    tgt_total = float((out.fillna(0) * cov * unit.values).sum())
    np.testing.assert_allclose(tgt_total, float((src[0] * quad_area).sum()), rtol=1e-10)
    # a constant field stays constant wherever it is covered at all
    const = cw.regrid(xr.full_like(src, 7.0), tgt, min_coverage=1e-12)
    np.testing.assert_allclose(const.values[np.isfinite(const.values)], 7.0, rtol=1e-12)


# ------------------------------------------------------------------ laziness
def test_dask_in_dask_out():
    src = _field(np.arange(-4.95, 5.0, 0.1), np.arange(10.05, 20.0, 0.1), nt=4)
    src[1, :10, :10] = np.nan
    tgt = {"lat": np.arange(-4.75, 5.0, 0.5), "lon": np.arange(10.25, 20.0, 0.5)}
    eager = cw.regrid(src, tgt)
    lazy, cov = cw.regrid(src.chunk({"time": 2, "lat": 50}), tgt, return_coverage=True)
    assert lazy.chunks is not None and cov.chunks is not None
    assert lazy.chunks[0] == (2, 2)
    np.testing.assert_allclose(lazy.values, eager.values, rtol=1e-12, equal_nan=True)
    blin = cw.regrid(src.chunk({"time": 2}), tgt, method="bilinear")
    assert blin.chunks is not None


# ------------------------------------------------------------------ errors
def test_errors_name_the_problem():
    src = _field(np.arange(-4.75, 5.0, 0.5), np.arange(10.25, 20.0, 0.5), nt=1)
    with pytest.raises(GridError, match="do not overlap") as e:
        cw.regrid(src, {"lat": [50.0, 51.0], "lon": [100.0, 101.0]})
    assert "Fix:" in str(e.value)
    with pytest.raises(GridError, match="no lat/lon"):
        cw.regrid(src, {"y": [1, 2]})
    with pytest.raises(GridError, match="lat/lon"):
        cw.regrid(src, xr.DataArray(np.zeros(3), dims="x"))
    with pytest.raises(ParameterError, match="unknown regridding method 'nearest'") as e:
        cw.regrid(src, src, method="nearest")
    assert "conservative" in str(e.value)
    with pytest.raises(ParameterError, match="coverage"):
        cw.regrid(src, src, coverage="loose")
    with pytest.raises(ParameterError, match="min_coverage"):
        cw.regrid(src, src, min_coverage=1.5)
    with pytest.raises(InputError, match="bilinear regridding needs a rectilinear source"):
        cw.regrid(_curvilinear_copy(src.isel(lat=slice(0, 3), lon=slice(0, 3))), src, method="bilinear")
