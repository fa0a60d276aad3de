"""Checks of climwidgets.analyses.extremes: at-site and regional point depths side by side.

Outside references: lmoments3 1.0.8 (``lmom_ratios``, ``distr.gev.lmom_fit``/``ppf``) for the
at-site fits and the pooled regional growth curve (Hosking & Wallis 1997, Regional Frequency
Analysis, sec. 4.1: record-length-weighted regional ratios; the T-year estimate is the cell's
mean annual maximum times the growth curve), and the exact area of a spherical cell,
R^2 dlon (sin lat_n - sin lat_s), for the basin averages.
"""

import lmoments3
import numpy as np
import pandas as pd
import pytest
import xarray as xr
from lmoments3 import distr

import climwidgets as cw
from climwidgets.analyses.meta import format_cell
from climwidgets.analyses.extremes import POINT_COLUMNS, point_depth_table, point_design_depths
from climwidgets.compute.warming import DESIGN_DEPTH_CAUTIONS
from climwidgets.errors import ParameterError

PERIODS = (2, 10, 50)
N_YEARS = 30
LAT = 10.0 + np.arange(4) * 0.5
LON = -30.0 + np.arange(4) * 0.5


def _daily(seed=3):
    """Daily depths that are zero except one storm a year: the annual maxima are known."""
    rng = np.random.default_rng(seed)
    time = pd.date_range("1981-01-01", f"{1980 + N_YEARS}-12-31", freq="D")
    maxima = rng.gumbel(60.0, 15.0, (N_YEARS, LAT.size, LON.size)) * rng.uniform(0.8, 1.2, (1, LAT.size, LON.size))
    values = np.zeros((time.size, LAT.size, LON.size))
    for k, year in enumerate(range(1981, 1981 + N_YEARS)):
        values[np.flatnonzero(time == f"{year}-07-15")[0]] = maxima[k]
    pr = xr.DataArray(
        values,
        dims=("time", "lat", "lon"),
        name="pr",
        attrs={"units": "mm"},
        coords={"time": time, "lat": LAT, "lon": LON},
    )
    return pr, maxima


def _cells_basin(name, rows, cols):
    """A basin whose outline follows cell edges exactly (full coverage of the listed cells)."""
    s, n = LAT[rows[0]] - 0.25, LAT[rows[-1]] + 0.25
    w, e = LON[cols[0]] - 0.25, LON[cols[-1]] + 0.25
    return cw.Basin.from_vertices([(w, s), (e, s), (e, n), (w, n)], name=name)


def _area_weights(rows):
    lat = LAT[rows]
    return np.sin(np.radians(lat + 0.25)) - np.sin(np.radians(lat - 0.25))  # per row; dlon is constant


def test_at_site_and_regional_against_lmoments3():
    pr, maxima = _daily()
    west, east = _cells_basin("west", [0, 1, 2, 3], [0, 1]), _cells_basin("east", [0, 1, 2, 3], [2, 3])
    ds = point_design_depths(pr, [west, east], periods=PERIODS, n_boot=100, n_sim=100).compute()
    F = 1 - 1 / np.asarray(PERIODS, float)
    for basin, cols in (("west", [0, 1]), ("east", [2, 3])):
        w = np.repeat(_area_weights([0, 1, 2, 3]), len(cols))
        cells = [maxima[:, j, i] for j in range(4) for i in cols]
        at_site = np.array([distr.gev.ppf(F, **distr.gev.lmom_fit(x)) for x in cells])
        np.testing.assert_allclose(ds["point_at_site_mm"].sel(basin=basin), w @ at_site / w.sum(), rtol=2e-3)
        ratios = np.array([lmoments3.lmom_ratios(x, 4) for x in cells])  # equal record lengths: plain means
        l1 = ratios[:, 0]
        t_r, t3_r, t4_r = (ratios[:, 1] / l1).mean(), ratios[:, 2].mean(), ratios[:, 3].mean()
        growth = distr.gev.ppf(F, **distr.gev.lmom_fit(lmom_ratios=[1.0, t_r, t3_r, t4_r]))
        regional = np.outer(l1, growth)
        np.testing.assert_allclose(ds["point_regional_mm"].sel(basin=basin), w @ regional / w.sum(), rtol=2e-3)
        assert int(ds["region_cells"].sel(basin=basin)) == 8
    # intervals bracket the estimates; depths grow with the return period
    for kind in ("at_site", "regional"):
        est = ds[f"point_{kind}_mm"]
        assert (ds[f"point_{kind}_lower_mm"] < est).all() and (est < ds[f"point_{kind}_upper_mm"]).all()
        assert (est.diff("return_period") > 0).all()
    assert ds.attrs["cautions"] == list(DESIGN_DEPTH_CAUTIONS)
    assert np.isfinite(ds["heterogeneity_h1"]).all()


def test_table_for_people_and_files():
    pr, _ = _daily(seed=4)
    basin = _cells_basin("all", [0, 1, 2, 3], [0, 1, 2, 3])
    ds = point_design_depths(pr, cw.BasinSet([basin]), periods=PERIODS, n_boot=60, n_sim=60)
    table = point_depth_table(ds, period=10, display=True)
    assert list(table.index) == ["all"]
    shown = [format_cell(v, table.attrs["columns"][c]) for c in table.columns for v in table[c]]
    assert not any("e+" in v or "e-" in v for v in shown)
    assert any("regional" in c for c in table.columns) and any("at-site" in c for c in table.columns)
    assert set(POINT_COLUMNS) <= set(point_depth_table(ds).columns)


def test_lazy_until_computed():
    pr, _ = _daily(seed=5)
    basin = _cells_basin("all", [0, 1, 2, 3], [0, 1, 2, 3])
    ds = point_design_depths(pr.chunk(time=3650), [basin], periods=PERIODS, n_boot=60, n_sim=60)
    assert ds["point_at_site_mm"].chunks is not None
    with pytest.raises(ParameterError):
        point_design_depths(pr, [], periods=PERIODS)


def test_regional_field_per_cell_against_lmoments3():
    """The per-cell regional map: each cell's mean annual maximum (l1) times the basin's
    growth curve from the pooled L-moment ratios (Hosking & Wallis 1997, sec. 6.2;
    lmoments3 lmom_ratios and gev.lmom_fit as the outside reference); cells in no basin
    are missing; its basin means are the regional column of point_design_depths."""
    from climwidgets.analyses.extremes import regional_depth_field

    pr, maxima = _daily()
    west = _cells_basin("west", [0, 1, 2, 3], [0, 1])
    field = regional_depth_field(pr, [west], periods=PERIODS, n_boot=60, n_sim=60).compute()
    F = 1 - 1 / np.asarray(PERIODS, float)
    cells = [(j, i) for j in range(4) for i in (0, 1)]
    ratios = np.array([lmoments3.lmom_ratios(maxima[:, j, i], 4) for j, i in cells])
    l1 = ratios[:, 0]
    growth = distr.gev.ppf(
        F, **distr.gev.lmom_fit(lmom_ratios=[1.0, (ratios[:, 1] / l1).mean(), ratios[:, 2].mean(), ratios[:, 3].mean()])
    )
    for (j, i), index in zip(cells, l1):
        np.testing.assert_allclose(field["estimate"].isel(lat=j, lon=i).values, index * growth, rtol=2e-3)
    assert np.isnan(field["estimate"].isel(lon=[2, 3]).values).all()  # outside the basin
    assert field["estimate"].attrs["units"] == "mm"
    point = point_design_depths(pr, [west], periods=PERIODS, n_boot=60, n_sim=60).compute()
    w = np.repeat(_area_weights([0, 1, 2, 3]), 2)
    mean = np.array([w @ field["estimate"].sel(period=t).values[:, :2].ravel() / w.sum() for t in PERIODS])
    np.testing.assert_allclose(point["point_regional_mm"].sel(basin="west").values, mean, rtol=1e-9)


def test_warmed_point_depths_scale_depths_not_h1():
    from climwidgets.analyses.extremes import warmed_point_depths

    pr, _ = _daily()
    west = _cells_basin("west", [0, 1, 2, 3], [0, 1])
    ds = point_design_depths(pr, [west], periods=PERIODS, n_boot=60, n_sim=60).compute()
    warm = warmed_point_depths(ds, 2.0, rate=0.07)
    for name in POINT_COLUMNS:  # (1 + rate) ** delta_t, the compound Clausius-Clapeyron scaling
        np.testing.assert_allclose(warm[name].values, ds[name].values * 1.07**2, rtol=1e-12)
        assert warm[name].attrs == ds[name].attrs
    xr.testing.assert_identical(warm["heterogeneity_h1"], ds["heterogeneity_h1"])
