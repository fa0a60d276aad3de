"""Checks of the windward/leeward contrast, crest derivation and elevation gradient."""

from __future__ import annotations

import dask.array as da
import numpy as np
import pytest
import xarray as xr
from pyproj import Geod
from scipy import optimize, stats

import climwidgets as cw
from climwidgets.compute.orographic import side_mask
from climwidgets.errors import InsufficientDataError, MismatchError, ParameterError

GEOD = Geod(ellps="WGS84")
LAT = np.round(np.arange(40.0, 41.01, 0.1), 10)
LON = np.round(np.arange(-1.0, 2.01, 0.1), 10)
RIDGE_LON = 0.55  # between cell centres: no cell sits on the crest
RIDGE = [(RIDGE_LON, 30.0), (RIDGE_LON, 50.0)]
R = 6_371_007.2


def _grid(values, name="pr", units="mm"):
    return xr.DataArray(values, coords={"lat": LAT, "lon": LON}, dims=("lat", "lon"), name=name, attrs={"units": units})


def _sides(west, east):
    return _grid(np.where(LON[None, :] < RIDGE_LON, west, east) + 0 * LAT[:, None])


def _ridge_terrain(height=2000.0):
    return _grid(height * np.exp(-(((LON[None, :] - 0.5) / 0.3) ** 2)) + 0 * LAT[:, None], name="elevation", units="m")


def _cell_areas():
    # A = R²·Δλ·(sin φ2 − sin φ1): area of a lat/lon cell on the sphere (from memory:
    # Snyder 1987, USGS Prof. Paper 1395; the spherical-cap difference).
    half = 0.05
    band = np.sin(np.deg2rad(LAT + half)) - np.sin(np.deg2rad(LAT - half))
    return R**2 * np.deg2rad(0.1) * band[:, None] * np.ones(LON.size)[None, :]


# --- distances -------------------------------------------------------------------------


@pytest.mark.parametrize("i, j", [(0, 0), (3, 14), (5, 16), (10, 30), (7, 5)])
def test_signed_distance_matches_pyproj_geodesic(i, j):
    """Westerly wind, N-S crest: the crest point of a cell is on its own parallel.

    Reference: pyproj.Geod(ellps="WGS84").inv (pyproj 3.7), geodesic length in metres.
    """
    ds = cw.rain_shadow(_sides(100.0, 50.0), wind_from=270.0, ridge=RIDGE, band_km=(0, 200))
    _, _, metres = GEOD.inv(RIDGE_LON, LAT[i], LON[j], LAT[i])
    expected = np.sign(LON[j] - RIDGE_LON) * metres / 1000.0
    assert float(ds.distance_km[i, j]) == pytest.approx(expected, rel=1e-9)
    assert ds.distance_km.attrs["units"] == "km"


def test_sign_convention_and_flip():
    d270 = cw.rain_shadow(_sides(1.0, 1.0), 270.0, ridge=RIDGE, band_km=(0, 200)).distance_km
    d90 = cw.rain_shadow(_sides(1.0, 1.0), 90.0, ridge=RIDGE, band_km=(0, 200)).distance_km
    west = LON < RIDGE_LON
    assert np.all(d270.values[:, west] < 0) and np.all(d270.values[:, ~west] > 0)
    np.testing.assert_allclose(d90.values, -d270.values, rtol=1e-12)


def test_oblique_wind_distance_matches_pyproj():
    """Wind from 225 (south-west): the line through the cell runs north-east.

    In the local tangent plane (x = R·cos φ0·λ, y = R·φ) a line at 45° crosses the
    meridian of the crest after Δx = R cos φ0 (λr − λ), so at latitude
    φ + (λr − λ)·cos φ0; the length is then pyproj.Geod(ellps="WGS84").inv.
    """
    ds = cw.rain_shadow(_sides(1.0, 1.0), 225.0, ridge=RIDGE, band_km=(0, 200))
    cos0 = np.cos(np.deg2rad(LAT.mean()))
    for i, j in [(0, 0), (4, 20), (9, 8)]:
        lat_cross = LAT[i] + (RIDGE_LON - LON[j]) * cos0
        _, _, metres = GEOD.inv(RIDGE_LON, lat_cross, LON[j], LAT[i])
        expected = np.sign(LON[j] - RIDGE_LON) * metres / 1000.0
        assert float(ds.distance_km[i, j]) == pytest.approx(expected, rel=1e-9)


def test_cells_beyond_crest_ends():
    short = [(RIDGE_LON, 40.25), (RIDGE_LON, 40.75)]
    ex = cw.rain_shadow(_sides(1.0, 1.0), ridge=short, band_km=(0, 200)).distance_km
    assert np.all(np.isnan(ex.sel(lat=40.0))) and np.all(np.isfinite(ex.sel(lat=40.5)))
    near = cw.rain_shadow(_sides(1.0, 1.0), ridge=short, band_km=(0, 200), beyond_ends="nearest").distance_km
    assert np.all(np.isfinite(near))
    np.testing.assert_allclose(near.sel(lat=40.5), ex.sel(lat=40.5))


# --- contrast --------------------------------------------------------------------------


def test_constant_sides_recover_ratio_exactly():
    ds = cw.rain_shadow(_sides(120.0, 45.0), 270.0, ridge=RIDGE, band_km=(0, 25, 50, 100))
    assert ds.sizes["band"] == 3
    np.testing.assert_allclose(ds.windward_mean, 120.0, rtol=1e-12)
    np.testing.assert_allclose(ds.ratio, 45.0 / 120.0, rtol=1e-12)
    np.testing.assert_allclose(ds.difference, -75.0, rtol=1e-12)
    np.testing.assert_array_equal(ds.band_upper_km, [25, 50, 100])
    assert ds.ratio.attrs["units"] == "1" and ds.windward_mean.attrs["units"] == "mm"
    assert "rain_shadow" in ds.attrs["history"]
    # an easterly wind swaps windward and leeward
    east = cw.rain_shadow(_sides(120.0, 45.0), 90.0, ridge=RIDGE, band_km=(0, 50))
    assert "band" not in east.dims
    assert float(east.ratio) == pytest.approx(120.0 / 45.0, rel=1e-12)


def test_means_are_area_weighted_and_basin_restricted():
    field = _grid(LAT[:, None] * 10.0 + 0 * LON[None, :])
    ds = cw.rain_shadow(field, 270.0, ridge=RIDGE, band_km=(0, 60))
    area = _cell_areas()
    d = ds.distance_km.values
    m = (d < 0) & (-d < 60)
    manual = (area * field.values)[m].sum() / area[m].sum()
    assert float(ds.windward_mean) == pytest.approx(manual, rel=1e-9)
    cov = _grid(np.where(LAT[:, None] < 40.45, 1.0, 0.0) + 0 * LON[None, :], units="1")
    basin = cw.rain_shadow(field, 270.0, ridge=RIDGE, band_km=(0, 60), basin=cov)
    mb = m & (cov.values > 0)
    manual_b = (area * field.values)[mb].sum() / area[mb].sum()
    assert float(basin.windward_mean) == pytest.approx(manual_b, rel=1e-9)
    assert float(basin.n_windward) == mb.sum()
    # the same restriction drawn as a basin polygon (coverage from climwidgets.geo)
    poly = cw.Basin.from_vertices([(-1.05, 39.95), (2.05, 39.95), (2.05, 40.45), (-1.05, 40.45)], name="southern strip")
    drawn = cw.rain_shadow(field, 270.0, ridge=RIDGE, band_km=(0, 60), basin=poly)
    assert float(drawn.windward_mean) == pytest.approx(manual_b, rel=1e-9)


def test_crest_from_elevation_and_rain_shadow_with_terrain():
    z = _ridge_terrain()
    crest = cw.crest_from_elevation(z, 270.0)
    assert len(crest) == LAT.size
    np.testing.assert_allclose([p[0] for p in crest], 0.5, atol=1e-9)
    np.testing.assert_allclose([p[1] for p in crest], LAT)
    # oblique wind: strips crossing the crest line find it; strips that clip only a flank
    # near a corner (the documented limit) fall below min_height and are dropped
    oblique = cw.crest_from_elevation(z, 225.0, min_height=1900.0)
    assert len(oblique) >= LAT.size
    np.testing.assert_allclose([p[0] for p in oblique], 0.5, atol=1e-9)
    # a northerly wind over an E-W range: one crest point per column
    zt = _grid(2000 * np.exp(-(((LAT[:, None] - 40.5) / 0.2) ** 2)) + 0 * LON[None, :], units="m")
    ns = cw.crest_from_elevation(zt, 0.0)
    assert len(ns) == LON.size
    np.testing.assert_allclose([p[1] for p in ns], 40.5, atol=1e-9)
    by_terrain = cw.rain_shadow(_sides(80.0, 20.0), 270.0, elevation=z, band_km=(0, 60))
    by_ridge = cw.rain_shadow(_sides(80.0, 20.0), 270.0, ridge=crest, band_km=(0, 60))
    np.testing.assert_allclose(by_terrain.distance_km, by_ridge.distance_km)
    assert float(by_terrain.ratio) == pytest.approx(0.25, rel=1e-12)


def _yearly(rep_values_west, rep_values_east):
    """(rep, year, lat, lon) field, each side constant within a year."""
    west = LON < RIDGE_LON
    vals = np.where(west[None, None, None, :], rep_values_west[..., None, None], rep_values_east[..., None, None])
    vals = np.broadcast_to(vals, rep_values_west.shape + (LAT.size, LON.size))
    return xr.DataArray(
        vals,
        dims=("rep", "year", "lat", "lon"),
        coords={"year": np.arange(2000, 2000 + rep_values_west.shape[1]), "lat": LAT, "lon": LON},
        attrs={"units": "mm"},
    )


def test_bootstrap_interval_covers_at_about_nominal_rate():
    """Percentile bootstrap over years (Efron & Tibshirani 1993, An Introduction to the
    Bootstrap, ch. 13 — from memory): with independent yearly noise the 90 % interval of
    the ratio of means should cover the true ratio in roughly 90 % of simulations.
    Percentile intervals run a little short in small samples (about 0.87 here with 30
    years); the binomial sd over 300 runs is about 1.7 %."""
    rng = np.random.default_rng(42)
    n_rep, n_year = 300, 30
    west = 100.0 + 12.0 * rng.standard_normal((n_rep, n_year))
    east = 60.0 + 9.0 * rng.standard_normal((n_rep, n_year))
    ds = cw.rain_shadow(_yearly(west, east), 270.0, ridge=RIDGE, band_km=(0, 60), n_boot=400, ci=0.9, seed=1)
    assert ds.ratio_per_year.dims == ("rep", "year")
    np.testing.assert_allclose(ds.ratio_per_year, east / west, rtol=1e-12)
    np.testing.assert_allclose(ds.ratio, east.mean(1) / west.mean(1), rtol=1e-12)
    covered = ((ds.ratio_lower <= 0.6) & (ds.ratio_upper >= 0.6)).mean()
    assert 0.82 <= float(covered) <= 0.96
    assert np.all(ds.ratio_lower < ds.ratio) and np.all(ds.ratio < ds.ratio_upper)


def test_dask_input_stays_lazy_with_same_numbers():
    rng = np.random.default_rng(3)
    west = 100 + 10 * rng.standard_normal((1, 8))
    east = 55 + 10 * rng.standard_normal((1, 8))
    field = _yearly(west, east).isel(rep=0)
    lazy = field.chunk({"year": 4, "lat": 6})
    a = cw.rain_shadow(field, ridge=RIDGE, band_km=(0, 30, 60), n_boot=200)
    b = cw.rain_shadow(lazy, ridge=RIDGE, band_km=(0, 30, 60), n_boot=200)
    for name in ("windward_mean", "leeward_mean", "ratio", "ratio_lower", "ratio_upper"):
        assert isinstance(b[name].data, da.Array), name
        np.testing.assert_allclose(b[name].values, a[name].values, rtol=1e-12)


# --- errors ----------------------------------------------------------------------------


def test_ridge_with_one_point():
    with pytest.raises(ParameterError) as err:
        cw.rain_shadow(_sides(1.0, 1.0), ridge=[(0.5, 40.0)])
    assert "at least 2" in str(err.value) and err.value.variable == "ridge"


def test_wind_from_out_of_range():
    with pytest.raises(ParameterError) as err:
        cw.rain_shadow(_sides(1.0, 1.0), wind_from=361.0, ridge=RIDGE)
    assert "0-360" in str(err.value) and "blows FROM" in str(err.value)
    with pytest.raises(ParameterError):
        cw.crest_from_elevation(_ridge_terrain(), wind_from=-10.0)


def test_exactly_one_of_ridge_and_elevation():
    with pytest.raises(ParameterError, match="exactly one"):
        cw.rain_shadow(_sides(1.0, 1.0))
    with pytest.raises(ParameterError, match="exactly one"):
        cw.rain_shadow(_sides(1.0, 1.0), ridge=RIDGE, elevation=_ridge_terrain())


def test_elevation_grid_mismatch_names_coordinate_and_offset():
    z = _ridge_terrain().assign_coords(lon=LON + 0.05)
    with pytest.raises(MismatchError) as err:
        cw.rain_shadow(_sides(1.0, 1.0), elevation=z)
    msg = str(err.value)
    assert "lon" in msg and "0.05" in msg and "regrid" in msg
    with pytest.raises(MismatchError, match="has 6 lat values"):
        cw.elevation_gradient(_sides(1.0, 1.0), _ridge_terrain().isel(lat=slice(0, 6)))


def test_no_cell_on_one_side():
    with pytest.raises(InsufficientDataError) as err:
        cw.rain_shadow(_sides(1.0, 1.0), ridge=[(2.05, 30.0), (2.05, 50.0)], band_km=(0, 50))
    assert "no cell on the leeward side" in str(err.value) and "0-50 km" in str(err.value)


def test_bad_bands():
    with pytest.raises(ParameterError, match="band_km"):
        cw.rain_shadow(_sides(1.0, 1.0), ridge=RIDGE, band_km=(50, 10))


# --- elevation gradient ----------------------------------------------------------------


def test_gradient_recovers_linear_rise():
    z = _ridge_terrain()
    field = (400.0 + 0.8 * z).assign_attrs(units="mm")  # 80 mm per 100 m
    g = cw.elevation_gradient(field, z, band_m=500.0)
    assert float(g.slope) == pytest.approx(80.0, rel=0.01)
    assert float(g.r2) == pytest.approx(1.0, abs=1e-9)
    assert float(g.intercept) == pytest.approx(400.0, rel=1e-6)
    assert g.slope.attrs["units"] == "mm (100 m)-1"
    assert "elevation_gradient" in g.attrs["history"]
    # band means of a linear field sit on the line at the band's mean elevation
    ok = g.band_cells > 0
    np.testing.assert_allclose(
        g.band_mean.where(ok, drop=True), (400 + 0.8 * g.band_elevation).where(ok, drop=True), rtol=1e-9
    )
    assert int(g.band_cells.sum()) == LAT.size * LON.size


def test_gradient_matches_scipy_regressions():
    rng = np.random.default_rng(7)
    z = _ridge_terrain()
    field = 300.0 + 0.5 * z + rng.normal(0, 60, z.shape)
    # ordinary least squares: scipy.stats.linregress (scipy 1.17), t-interval from its stderr
    ols = cw.elevation_gradient(field, z, weighted=False, ci=0.9)
    ref = stats.linregress(z.values.ravel(), field.values.ravel())
    t = stats.t.ppf(0.95, z.size - 2)
    assert float(ols.slope) == pytest.approx(100 * ref.slope, rel=1e-9)
    assert float(ols.lower) == pytest.approx(100 * (ref.slope - t * ref.stderr), rel=1e-9)
    assert float(ols.upper) == pytest.approx(100 * (ref.slope + t * ref.stderr), rel=1e-9)
    assert float(ols.r2) == pytest.approx(ref.rvalue**2, rel=1e-9)
    assert int(ols.n) == z.size
    # weighted: scipy.optimize.curve_fit with sigma = 1/sqrt(area), relative sigma
    w = _cell_areas().ravel()
    popt, pcov = optimize.curve_fit(
        lambda x, a, b: a + b * x, z.values.ravel(), field.values.ravel(), sigma=1 / np.sqrt(w), absolute_sigma=False
    )
    wls = cw.elevation_gradient(field, z)
    assert float(wls.slope) == pytest.approx(100 * popt[1], rel=1e-7)
    se = np.sqrt(pcov[1, 1])
    assert float(wls.upper - wls.slope) == pytest.approx(100 * t * se, rel=1e-6)


def test_gradient_by_side_and_mask_and_dask():
    z = _ridge_terrain()
    west = (LON < RIDGE_LON)[None, :] + 0 * LAT[:, None]
    field = xr.where(west, 200 + 1.0 * z, 200 + 0.2 * z)  # steeper rise windward
    field.attrs["units"] = "mm"
    d = cw.rain_shadow(field, ridge=RIDGE, band_km=(0, 200)).distance_km
    ww = cw.elevation_gradient(field, z, side="windward", distance_km=d)
    lw = cw.elevation_gradient(field, z, side="leeward", distance_km=d)
    assert float(ww.slope) == pytest.approx(100.0, rel=1e-9)
    assert float(lw.slope) == pytest.approx(20.0, rel=1e-9)
    near = cw.rain_shadow(field, ridge=RIDGE, band_km=(0, 30))
    assert int(side_mask(d, "windward", band_km=(0, 30)).sum()) == int(near.n_windward)
    assert int(side_mask(d, "leeward", band_km=(0, 30)).sum()) == int(near.n_leeward)
    masked = cw.elevation_gradient(field, z, mask=side_mask(d, "windward"))
    assert float(masked.slope) == pytest.approx(100.0, rel=1e-9)
    lazy = cw.elevation_gradient(field.chunk({"lat": 5}), z, side="leeward", distance_km=d)
    assert isinstance(lazy.slope.data, da.Array)
    assert float(lazy.slope) == pytest.approx(float(lw.slope), rel=1e-12)
    with pytest.raises(ParameterError, match="distance_km"):
        cw.elevation_gradient(field, z, side="windward")
    with pytest.raises(ParameterError, match="windward"):
        side_mask(d, "upwind")
