"""Checks for climwidgets.compute.compare (align, compare, products_basin_table)."""

from __future__ import annotations

import cftime
import numpy as np
import pandas as pd
import pytest
import scipy.stats
import xarray as xr

import climwidgets as cw
from climwidgets.errors import MismatchError, ParameterError

# Worked example (o = reference, s = other); values computed with numpy and cross-checked
# with hydroeval 0.1.0 (evaluator kge / kgeprime / nse).
O = [12.0, 30.5, 8.2, 45.1, 22.7, 15.3, 60.8, 5.4, 27.9, 38.6]
S = [14.5, 26.1, 10.9, 40.2, 25.3, 12.8, 52.4, 7.7, 31.0, 35.2]
MONTHLY = {"units": "mm", "step": "month"}


def _series(values, name, start="2001-01-01"):
    t = pd.date_range(start, periods=len(values), freq="MS")
    return xr.DataArray(np.asarray(values, float), dims="time", coords={"time": t}, attrs=dict(MONTHLY), name=name)


# ------------------------------------------------------------------ compare: worked example
def test_metrics_worked_example():
    ds = cw.compare(_series(O, "o"), _series(S, "s"))
    r = 0.9867374830
    alpha, beta = 0.8162194963, 0.9609756098
    # Pearson r; also against scipy.stats.pearsonr
    np.testing.assert_allclose(ds.corr, r, rtol=1e-9)
    np.testing.assert_allclose(ds.corr, scipy.stats.pearsonr(S, O).statistic, rtol=1e-12)
    np.testing.assert_allclose(ds.ratio, beta, rtol=1e-9)  # beta = mean s / mean o
    # KGE = 1 - sqrt((r-1)^2 + (alpha-1)^2 + (beta-1)^2): Gupta, Kling, Yilmaz & Martinez
    # (2009) J. Hydrol. 377, 80-91; components alpha = sd ratio, beta = mean ratio
    np.testing.assert_allclose(1 - np.sqrt((r - 1) ** 2 + (alpha - 1) ** 2 + (beta - 1) ** 2), 0.8116543843, rtol=1e-9)
    np.testing.assert_allclose(ds.kge, 0.8116543843, rtol=1e-9)
    # NSE: Nash & Sutcliffe (1970) J. Hydrol. 10, 282-290 (formula from memory)
    np.testing.assert_allclose(ds.nse, 0.9407346924, rtol=1e-9)
    np.testing.assert_allclose(ds.rmse, 4.0858291692, rtol=1e-9)
    # monthly input: bias is the mean monthly difference x 12 = (25.61 - 26.65) x 12 mm/yr
    np.testing.assert_allclose(ds.bias, -12.48, rtol=1e-12)
    assert int(ds.n) == 10
    # KGE' with gamma = CV ratio: Kling, Fuchs & Paulin (2012) J. Hydrol. 424-425, 264-277
    ds12 = cw.compare(_series(O, "o"), _series(S, "s"), kge="2012")
    np.testing.assert_allclose(ds12.kge, 0.8438284266, rtol=1e-9)
    assert "Kling, Fuchs & Paulin (2012)" in ds12.kge.attrs["description"]
    assert "Gupta" in ds.kge.attrs["description"]
    for var, units in {
        "bias": "mm/yr",
        "ratio": "1",
        "rmse": "mm",
        "corr": "1",
        "kge": "1",
        "nse": "1",
        "anomaly_corr": "1",
    }.items():
        assert ds[var].attrs["units"] == units and ds[var].attrs["description"]
    assert "compare" in ds.attrs["history"]


def test_identical_products_score_perfectly():
    ds = cw.compare(_series(O, "o"), _series(O, "o2"))
    np.testing.assert_allclose([ds.kge, ds.nse, ds.corr, ds.ratio], 1.0, rtol=1e-12)
    np.testing.assert_allclose([ds.bias, ds.rmse], 0.0, atol=1e-12)


def test_missing_pairs_are_dropped_from_both():
    a, b = _series(O + [99.0], "o"), _series(S + [np.nan], "s")
    ds = cw.compare(a, b)  # the 11th month has no partner: same as the 10-value example
    np.testing.assert_allclose([ds.kge, ds.nse, ds.corr], [0.8116543843, 0.9407346924, 0.9867374830], rtol=1e-9)
    assert int(ds.n) == 10


def test_anomaly_correlation_against_own_climatology():
    # a and b share anomalies but differ in their seasonal cycle: anomaly_corr = 1 exactly
    rng = np.random.default_rng(1)
    clim = 40 + 30 * np.sin(np.arange(12) / 12 * 2 * np.pi)
    x = rng.normal(0, 5, 60)
    a = _series(np.tile(clim, 5) + x, "a")
    b = _series(np.tile(2.5 * clim[::-1], 5) + x, "b")
    ds = cw.compare(a, b)
    np.testing.assert_allclose(ds.anomaly_corr, 1.0, rtol=1e-12)
    assert float(ds.corr) < 0.9
    # general case against scipy.stats.pearsonr on anomalies made with pandas groupby
    b2 = _series(np.tile(clim, 5) + rng.normal(0, 5, 60), "b2")
    anom = [s.to_series() - s.to_series().groupby(s.time.dt.month.values).transform("mean") for s in (a, b2)]
    np.testing.assert_allclose(
        cw.compare(a, b2).anomaly_corr, scipy.stats.pearsonr(anom[0], anom[1]).statistic, rtol=1e-10
    )


def _maps(nt=24, seed=0):
    rng = np.random.default_rng(seed)
    t = pd.date_range("2001-01-01", periods=nt, freq="MS")
    coords = {"time": t, "lat": [1.0, 2.0, 3.0], "lon": [10.0, 11.0]}
    a = xr.DataArray(
        rng.gamma(2, 20, (nt, 3, 2)), dims=("time", "lat", "lon"), coords=coords, attrs=dict(MONTHLY), name="a"
    )
    b = (a * rng.uniform(0.7, 1.3, a.shape) + 2).rename("b")
    b.attrs = dict(MONTHLY)
    return a, b


def test_maps_equal_per_cell_scalars_and_dask_stays_lazy():
    a, b = _maps()
    b[3, 1, 1] = np.nan
    eager = cw.compare(a, b)
    lazy = cw.compare(a.chunk({"time": 6}), b.chunk({"time": 6}))
    for v in eager.data_vars:
        assert lazy[v].chunks is not None, v
        np.testing.assert_allclose(lazy[v].values, eager[v].values, rtol=1e-12)
    for i, j in ((0, 0), (1, 1)):  # (1, 1) holds the missing month
        one = cw.compare(a[:, i, j], b[:, i, j])
        for v in ("bias", "ratio", "rmse", "corr", "kge", "nse", "anomaly_corr"):
            np.testing.assert_allclose(eager[v][i, j], one[v], rtol=1e-12)
    ok = np.isfinite(b[:, 1, 1].values)
    np.testing.assert_allclose(
        eager.corr[1, 1], scipy.stats.pearsonr(a[:, 1, 1].values[ok], b[:, 1, 1].values[ok]).statistic, rtol=1e-12
    )


def test_annual_totals_bias_is_per_year():
    a = xr.DataArray([800.0, 900.0, 1000.0], dims="year", coords={"year": [2001, 2002, 2003]}, attrs={"units": "mm"})
    b = a + 50.0
    np.testing.assert_allclose(cw.compare(a, b, dim="year").bias, 50.0)
    assert "anomaly_corr" not in cw.compare(a, b, dim="year")


def test_compare_errors():
    a, b = _maps()
    with pytest.raises(MismatchError, match="do not share coordinates") as e:
        cw.compare(a, b.assign_coords(lat=[1.5, 2.5, 3.5]))
    assert "cw.align" in str(e.value)
    with pytest.raises(ParameterError, match="unknown KGE form '2020'"):
        cw.compare(a, b, kge="2020")
    daily = a.copy()
    daily.attrs["step"] = "day"
    with pytest.raises(ParameterError, match="monthly or annual totals"):
        cw.compare(daily, b)
    with pytest.raises(ParameterError, match="no dimension 'year'"):
        cw.compare(a, b, dim="year")


# ------------------------------------------------------------------ align
def _rate(year, month):
    """An invented daily rate (mm/day) that differs every month."""
    return 1.0 + 0.1 * month + 0.01 * (year - 2000)


def _noleap_monthly(first=2000, last=2004):
    # a monthly mean-rate product on a noleap calendar, already converted to mm per month
    # (rate x days in the file's month: a noleap February has 28 days), labelled mid-month
    times = [cftime.DatetimeNoLeap(y, m, 15) for y in range(first, last + 1) for m in range(1, 13)]
    vals = [
        _rate(t.year, t.month) * (28 if t.month == 2 else pd.Period(f"2001-{t.month:02d}").days_in_month) for t in times
    ]
    data = np.broadcast_to(np.asarray(vals)[:, None, None], (len(vals), 2, 2)).copy()
    return xr.DataArray(
        data,
        dims=("time", "lat", "lon"),
        coords={"time": times, "lat": [0.5, 1.5], "lon": [0.5, 1.5]},
        attrs=dict(MONTHLY),
        name="model",
    )


def _standard_daily(start="2001-01-01", end="2005-12-31"):
    t = pd.date_range(start, end, freq="D")
    vals = _rate(t.year.values, t.month.values)
    data = np.broadcast_to(vals[:, None, None], (t.size, 2, 2)).copy()
    return xr.DataArray(
        data,
        dims=("time", "lat", "lon"),
        coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]},
        attrs={"units": "mm", "step": "day"},
        name="gauge",
    )


def test_align_noleap_and_standard_months_line_up():
    out = cw.align({"model": _noleap_monthly(), "gauge": _standard_daily()})
    m, g = out["model"], out["gauge"]
    assert m.attrs["period"] == "2001-2004" and m.attrs["source_calendar"] == "noleap"
    np.testing.assert_array_equal(m.time.values, g.time.values)
    assert m.time.values[0] == np.datetime64("2001-01-01") and m.sizes["time"] == 48
    # month by month: the same rate times each calendar's own month length
    ratio = (g / m).isel(lat=0, lon=0).to_series()
    feb_2004 = ratio.index == pd.Timestamp("2004-02-01")
    np.testing.assert_allclose(ratio[~feb_2004], 1.0, rtol=1e-12)
    np.testing.assert_allclose(ratio[feb_2004], 29 / 28, rtol=1e-12)
    # and compare() can take them straight away
    ds = cw.compare(g, m)
    assert float(ds.corr[0, 0]) > 0.99


def test_align_common_period_and_errors():
    # a record starting mid-2001 makes 2001 incomplete: the common years are 2002-2004
    out = cw.align({"model": _noleap_monthly(), "gauge": _standard_daily(start="2001-06-10")})
    assert out["gauge"].attrs["period"] == "2002-2004"
    assert not np.isnan(out["gauge"].values).any()  # the partial month is outside the period
    sub = cw.align({"model": _noleap_monthly(), "gauge": _standard_daily()}, period=(2002, 2003))
    assert sub["model"].sizes["time"] == 24
    with pytest.raises(MismatchError, match="disjoint periods") as e:
        cw.align({"model": _noleap_monthly(1990, 1994), "gauge": _standard_daily()})
    assert "model: 1990-1994" in str(e.value) and "gauge: 2001-2005" in str(e.value)
    with pytest.raises(MismatchError, match="not covered by every product"):
        cw.align({"model": _noleap_monthly(), "gauge": _standard_daily()}, period=(1999, 2003))
    with pytest.raises(ParameterError, match="not one of the products"):
        cw.align({"model": _noleap_monthly(), "gauge": _standard_daily()}, grid="radar")
    with pytest.raises(ParameterError, match="non-empty dict"):
        cw.align({})


def test_align_regrids_to_the_coarsest_grid_and_stays_lazy():
    fine = _noleap_monthly(2001, 2002)
    lat, lon = np.arange(0.125, 2.0, 0.25), np.arange(0.125, 2.0, 0.25)
    fine = fine.interp(lat=lat, lon=lon, method="nearest", kwargs={"fill_value": "extrapolate"})
    fine.attrs = dict(MONTHLY)
    coarse = _noleap_monthly(2001, 2002).rename("coarse")
    out = cw.align({"fine": fine.chunk({"time": 12}), "coarse": coarse})
    assert out["fine"].chunks is not None
    np.testing.assert_array_equal(out["fine"].lat.values, coarse.lat.values)
    # the fine field is constant within each coarse cell, so conservation gives it back
    np.testing.assert_allclose(out["fine"].values, out["coarse"].values, rtol=1e-12)
    named = cw.align({"fine": fine, "coarse": coarse}, grid="fine")
    assert named["coarse"].sizes["lat"] == 8


# ------------------------------------------------------------------ basin table
BASE = np.array([80.0, 70.0, 60.0, 40.0, 30.0, 20.0, 90.0, 110.0, 50.0, 60.0, 70.0, 85.0])


def _uniform_product(years, lat, lon, factor, calendar):
    if calendar == "standard":
        times = pd.date_range(f"{years[0]}-01-01", periods=12 * len(years), freq="MS")
    else:
        times = [cftime.datetime(y, m, 15, calendar=calendar) for y in years for m in range(1, 13)]
    vals = np.concatenate([BASE * (1 + 0.03 * (y - 2001)) for y in years]) * factor
    data = np.broadcast_to(vals[:, None, None], (vals.size, len(lat), len(lon))).copy()
    return xr.DataArray(
        data,
        dims=("time", "lat", "lon"),
        coords={"time": times, "lat": lat, "lon": lon},
        attrs=dict(MONTHLY),
        name="pr",
    )


def test_products_basin_table_against_analytic_values():
    a = _uniform_product(range(2001, 2011), np.arange(10.25, 12.0, 0.5), np.arange(-30.75, -29.0, 0.5), 1.0, "standard")
    b = _uniform_product(range(2000, 2013), [10.5, 11.5], [-30.5, -29.5], 1.2, "noleap")
    square = cw.Basin.from_vertices([(-30.6, 10.4), (-29.4, 10.4), (-29.4, 11.6), (-30.6, 11.6)], name="upper")
    strip = cw.Basin.from_vertices([(-30.9, 10.1), (-29.1, 10.1), (-29.1, 10.6), (-30.9, 10.6)], name="lower")
    table = cw.products_basin_table({"gridA": a, "gridB": b.chunk({"time": 24})}, [square, strip])
    assert table.attrs["period"] == "2001-2010" and table.attrs["baseline"] == (2001, 2010)
    total = BASE.sum()
    # Sen (1968) slope of an exactly linear series is its slope; check with scipy.stats.theilslopes
    yrs = np.arange(2001, 2011)
    sen = scipy.stats.theilslopes(total * (1 + 0.03 * (yrs - 2001)), yrs).slope
    np.testing.assert_allclose(sen, 0.03 * total, rtol=1e-12)
    # Mann-Kendall for a strictly increasing n = 10 series: S = 45, Var(S) = n(n-1)(2n+5)/18 = 125,
    # Z = (S - 1)/sqrt(Var) (Mann 1945; Kendall 1975, from memory), two-sided normal p
    p_mk = 2 * scipy.stats.norm.sf(44 / np.sqrt(125))
    for basin in ("upper", "lower"):
        for prod, f in (("gridA", 1.0), ("gridB", 1.2)):
            row = table.loc[(basin, prod)]
            np.testing.assert_allclose(row.annual_mean_mm, f * total * (1 + 0.03 * 4.5), rtol=1e-10)
            np.testing.assert_allclose(row.seasonal_share, (BASE[6] + BASE[7]) / total, rtol=1e-10)
            # the normal over the whole period equals the mean annual total (sum of monthly means)
            np.testing.assert_allclose(row.normal_mm, row.annual_mean_mm, rtol=1e-10)
            np.testing.assert_allclose(row.trend_mm_per_year, f * sen, rtol=1e-9)
            np.testing.assert_allclose(row.trend_pvalue, p_mk, rtol=1e-9)
        spread = table.loc[(basin, "spread: max - min")]
        np.testing.assert_allclose(spread.annual_mean_mm, 0.2 * total * 1.135, rtol=1e-10)
        np.testing.assert_allclose(spread.seasonal_share, 0.0, atol=1e-12)
        cv = table.loc[(basin, "spread: coefficient of variation")]
        np.testing.assert_allclose(cv.annual_mean_mm, np.std([1.0, 1.2]) / 1.1, rtol=1e-10)
        assert np.isnan(cv.trend_mm_per_year) and np.isnan(spread.trend_pvalue)
    assert "products_basin_table" in table.attrs["history"]
    # a baseline inside the common period
    t2 = cw.products_basin_table({"gridA": a, "gridB": b}, square, baseline=(2001, 2005))
    np.testing.assert_allclose(t2.loc[("upper", "gridA")].normal_mm, total * (1 + 0.03 * 2), rtol=1e-10)


def test_products_basin_table_errors():
    a = _uniform_product(range(2001, 2004), [10.5, 11.5], [-30.5, -29.5], 1.0, "standard")
    with pytest.raises(ParameterError, match="Basin objects"):
        cw.products_basin_table({"a": a}, [(-30.0, 10.0)])
    b = _uniform_product(range(1980, 1983), [10.5, 11.5], [-30.5, -29.5], 1.0, "standard")
    sq = cw.Basin.from_vertices([(-30.6, 10.4), (-29.4, 10.4), (-29.4, 11.6)], name="tri")
    with pytest.raises(MismatchError, match="disjoint periods"):
        cw.products_basin_table({"a": a, "b": b}, sq)
