"""Checks of climwidgets.compute.indices.precip_indices.

Two lines of checks:

* every index against the xclim library (version 0.62.0, the function named beside each
  check) on random daily data with dry spells across year ends and missing days; xclim's
  ``missing="any"`` rule is applied with ``xclim.core.missing.missing_any``;
* one hand-worked example per index on a short series whose answers are worked out by hand
  from the values placed in it (ETCCDI definitions: Zhang et al. 2011, WIREs Climate
  Change 2, 851-870).
"""

import numpy as np
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.compute.indices import _quantile_type8, wet_day_percentiles
from climwidgets.errors import DataValueError, ParameterError, TimeAxisError

xclim = pytest.importorskip("xclim")
from xclim import indices as xi
from xclim.core.missing import missing_any
from xclim.core.utils import calc_perc

FREQ = {"year": "YS", "season": "QS-DEC", "month": "MS"}


def random_daily(seed=0, start="1958-01-01", end="1995-12-31", shape=(3, 4), calendar="standard"):
    """Gamma depths on about 40 % of days; long dry spells over four year ends; some gaps."""
    t = xr.date_range(start, end, freq="D", calendar=calendar, use_cftime=calendar != "standard")
    rng = np.random.default_rng(seed)
    n = (t.size, *shape)
    depth = rng.gamma(0.7, 8.0, n) * (rng.random(n) < 0.4)
    pr = xr.DataArray(
        depth,
        dims=("time", "lat", "lon"),
        coords={"time": t, "lat": np.arange(shape[0]) + 5.0, "lon": np.arange(shape[1]) - 30.0},
        name="pr",
        attrs={"units": "mm", "step": "day"},
    )
    for year in (1962, 1970, 1985, 1990):  # dry from mid-November to late January
        pr.loc[{"time": slice(f"{year}-11-15", f"{year + 1}-01-25"), "lat": 5.0}] = 0.0
    for year in (1966, 1987):  # a wet run across the year end
        pr.loc[{"time": slice(f"{year}-12-27", f"{year + 1}-01-05"), "lon": -30.0}] = 12.0
    pr[rng.integers(0, t.size, 40), 1, shape[1] - 1] = np.nan  # scattered missing days in one cell
    pr.loc[{"time": slice("1975-06-01", "1975-06-03"), "lat": pr["lat"][-1]}] = np.nan
    return pr


def for_xclim(pr):
    return pr.assign_attrs(units="mm/d")


def xclim_masked(result, pr, freq):
    """xclim result with its missing='any' rule, on our labels (year or period start)."""
    miss = missing_any(for_xclim(pr), freq=FREQ[freq])
    out = result.where(~miss)
    if freq == "year":
        out = out.assign_coords(year=("time", out["time"].dt.year.values)).swap_dims(time="year").drop_vars("time")
    return out


def compare(ours, ref):
    ref = ref.sel({d: ours[d] for d in ("year", "time") if d in ours.dims})
    np.testing.assert_allclose(ours.transpose(*ref.dims).values, ref.values, rtol=1e-10, atol=1e-9)


@pytest.fixture(scope="module")
def pr():
    return random_daily()


@pytest.fixture(scope="module")
def ours(pr):
    return cw.precip_indices(pr, thresholds=(25,)).compute()


@pytest.mark.filterwarnings("ignore:All-NaN slice:RuntimeWarning")  # xclim on the all-missing row
def test_percentile_is_hyndman_fan_type8():
    # numpy's "median_unbiased" is H&F type 8; xclim.core.utils.calc_perc with
    # alpha = beta = 1/3 is the same estimator (xclim 0.62.0)
    rng = np.random.default_rng(3)
    x = rng.gamma(0.8, 5.0, (7, 50))
    x[1, :45] = np.nan
    x[2, :49] = np.nan
    x[3] = np.nan
    got = _quantile_type8(x, np.array([0.95, 0.99]))
    for row in range(7):
        v = x[row][~np.isnan(x[row])]
        if v.size == 0:
            assert np.isnan(got[row]).all()
            continue
        np.testing.assert_allclose(got[row], np.quantile(v, [0.95, 0.99], method="median_unbiased"))
    np.testing.assert_allclose(got, calc_perc(x, [95, 99], alpha=1 / 3, beta=1 / 3), rtol=1e-12)


def test_totals_intensity_counts_against_xclim(pr, ours):
    p = for_xclim(pr)
    # xclim.indices.prcptot(thresh="1 mm/d"): the function of xclim's wet_precip_accumulation (>= 1 mm)
    compare(ours["PRCPTOT"], xclim_masked(xi.prcptot(p, thresh="1 mm/d", freq="YS"), pr, "year"))
    # xclim.indices.daily_pr_intensity(thresh="1 mm/d", op=">=")
    compare(ours["SDII"], xclim_masked(xi.daily_pr_intensity(p, thresh="1 mm/d", op=">="), pr, "year"))
    # xclim.indices.wetdays(thresh, op=">=")
    for name, thresh in (("R10mm", "10 mm/d"), ("R20mm", "20 mm/d"), ("R25mm", "25 mm/d")):
        compare(ours[name], xclim_masked(xi.wetdays(p, thresh=thresh, op=">="), pr, "year"))


def test_spells_against_xclim(pr, ours):
    p = for_xclim(pr)
    # xclim.indices.maximum_consecutive_dry_days(thresh="1 mm/d", op="<", resample_before_rl=True)
    ref = xi.maximum_consecutive_dry_days(p, thresh="1 mm/d", op="<", resample_before_rl=True)
    compare(ours["CDD"], xclim_masked(ref, pr, "year"))
    # xclim.indices.maximum_consecutive_wet_days(thresh="1 mm/d", op=">=", resample_before_rl=True)
    ref = xi.maximum_consecutive_wet_days(p, thresh="1 mm/d", op=">=", resample_before_rl=True)
    compare(ours["CWD"], xclim_masked(ref, pr, "year"))
    # the forced dry spell 15 Nov 1962 - 25 Jan 1963 is cut at the year end: 47 days in 1962, 25 in 1963
    assert ours["CDD"].sel(year=1962, lat=5.0).min() >= 47
    assert ours["CDD"].sel(year=1963, lat=5.0).min() >= 25


def test_maxima_against_xclim(pr, ours):
    p = for_xclim(pr)
    # xclim.indices.max_1day_precipitation_amount and max_n_day_precipitation_amount(window=5)
    compare(ours["Rx1day"], xclim_masked(xi.max_1day_precipitation_amount(p, freq="YS"), pr, "year"))
    compare(ours["Rx5day"], xclim_masked(xi.max_n_day_precipitation_amount(p, window=5, freq="YS"), pr, "year"))


def test_percentile_indices_against_xclim(pr, ours):
    p = for_xclim(pr)
    base = pr.sel(time=slice("1961-01-01", "1990-12-31"))
    # per-cell wet-day percentiles by xclim.core.utils.calc_perc(alpha=beta=1/3)
    per = xr.apply_ufunc(
        lambda a: calc_perc(a, [95, 99], alpha=1 / 3, beta=1 / 3),
        base.where(base >= 1),
        input_core_dims=[["time"]],
        output_core_dims=[["percentile"]],
    )
    ours_per = wet_day_percentiles(pr)
    np.testing.assert_allclose(ours_per.transpose(*per.dims).values, per.values, rtol=1e-12)
    total = xi.prcptot(p, thresh="1 mm/d", freq="YS")
    for i, q in enumerate((95, 99)):
        # xclim.indices.fraction_over_precip_thresh(pr, pr_per, thresh="1 mm/d", op=">"): share of
        # wet-day precipitation from days above the percentile (random depths never equal 1 mm)
        frac = xi.fraction_over_precip_thresh(
            p, per.isel(percentile=i).assign_attrs(units="mm/d"), thresh="1 mm/d", op=">"
        )
        compare(ours[f"R{q}pTOT"], xclim_masked(100 * frac, pr, "year"))
        compare(ours[f"R{q}p"], xclim_masked(frac * total, pr, "year"))


@pytest.mark.parametrize("freq", ["season", "month"])
def test_seasons_and_months_against_xclim(pr, freq):
    ds = cw.precip_indices(pr, freq=freq, thresholds=(25,))
    assert "CDD" not in ds and "omitted" in ds.attrs
    p = for_xclim(pr)
    f = FREQ[freq]
    compare(ds["PRCPTOT"], xclim_masked(xi.prcptot(p, thresh="1 mm/d", freq=f), pr, freq))
    compare(ds["R10mm"], xclim_masked(xi.wetdays(p, thresh="10 mm/d", op=">=", freq=f), pr, freq))
    compare(ds["Rx5day"], xclim_masked(xi.max_n_day_precipitation_amount(p, window=5, freq=f), pr, freq))
    compare(ds["SDII"], xclim_masked(xi.daily_pr_intensity(p, thresh="1 mm/d", op=">=", freq=f), pr, freq))
    if freq == "season":  # the first DJF (December 1957 is not in the data) is dropped
        assert ds["time"].values[0] == np.datetime64("1958-03-01")
        assert ds["season"].values[0] == "MAM"


def test_dask_matches_numpy_and_stays_lazy(pr, ours):
    lazy = cw.precip_indices(pr.chunk(time=5000, lat=2, lon=2), thresholds=(25,))
    for v in lazy.data_vars:
        assert lazy[v].chunks is not None, v
    xr.testing.assert_allclose(lazy.compute(), ours)


def test_water_year_against_xclim(pr):
    ds = cw.precip_indices(pr, names=["PRCPTOT", "CDD"], year_start=10, base_period=None)
    p = for_xclim(pr)
    # xclim labels an October-September year by its start; ours by the year it ends
    ref = xi.prcptot(p, thresh="1 mm/d", freq="YS-OCT").where(~missing_any(p, freq="YS-OCT"))
    ref = ref.assign_coords(year=("time", ref["time"].dt.year.values + 1)).swap_dims(time="year")
    compare(ds["PRCPTOT"], ref.drop_vars("time"))
    ref = xi.maximum_consecutive_dry_days(p, thresh="1 mm/d", freq="YS-OCT").where(~missing_any(p, freq="YS-OCT"))
    ref = ref.assign_coords(year=("time", ref["time"].dt.year.values + 1)).swap_dims(time="year")
    compare(ds["CDD"], ref.drop_vars("time"))
    assert ds["year"].values[0] == 1959 and ds["year"].values[-1] == 1995  # Oct 1958 - Sep 1995


def test_noleap_calendar_against_xclim():
    pr = random_daily(seed=4, start="1961-01-01", end="1990-12-31", shape=(2, 2), calendar="noleap")
    ds = cw.precip_indices(pr, names=["PRCPTOT", "CDD", "R95p"])
    p = for_xclim(pr)
    compare(ds["PRCPTOT"], xclim_masked(xi.prcptot(p, thresh="1 mm/d"), pr, "year"))
    compare(ds["CDD"], xclim_masked(xi.maximum_consecutive_dry_days(p, thresh="1 mm/d"), pr, "year"))


# ----------------------------------------------------------------------------- worked by hand


def hand_series():
    """Two calendar years 2001-2002 (730 days), one cell; zero except the days below.

    2001: 31 Jan 1.0, 1 Feb 10.0, 2 Feb 20.0, 3 Feb 0.5, 10 Jul 30.0, 11 Jul 5.0;
    2002: 1 Jan 2.0, 2 Jan 3.0, 20 Dec 25.0.  With base_period=None every wet day of both
    years is in the base: the 8 wet days sorted are 1, 2, 3, 5, 10, 20, 25, 30.
    """
    t = xr.date_range("2001-01-01", "2002-12-31", freq="D")
    pr = xr.DataArray(
        np.zeros((t.size, 1)),
        dims=("time", "cell"),
        coords={"time": t},
        name="pr",
        attrs={"units": "mm", "step": "day"},
    )
    for day, v in {
        "2001-01-31": 1.0,
        "2001-02-01": 10.0,
        "2001-02-02": 20.0,
        "2001-02-03": 0.5,
        "2001-07-10": 30.0,
        "2001-07-11": 5.0,
        "2002-01-01": 2.0,
        "2002-01-02": 3.0,
        "2002-12-20": 25.0,
    }.items():
        pr.loc[{"time": day}] = v
    return pr


def test_hand_worked_example_every_index():
    ds = cw.precip_indices(hand_series(), base_period=None, thresholds=(25,)).isel(cell=0)
    expect = {
        # wet days (>= 1 mm) of 2001: 1 + 10 + 20 + 30 + 5 = 66 (the 0.5 mm day is dry); 2002: 2 + 3 + 25
        "PRCPTOT": [66.0, 30.0],
        "SDII": [66.0 / 5, 30.0 / 3],
        "R10mm": [3, 1],  # 10, 20, 30 (10 counts: ">= 10 mm"); 25
        "R20mm": [2, 1],  # 20, 30; 25
        "R25mm": [1, 1],  # 30; 25
        # 2001: dry 1-30 Jan = 30, 3 Feb - 9 Jul = 157, 12 Jul - 31 Dec = 173 days;
        # 2002: 3 Jan - 19 Dec = 351 (21-31 Dec = 11 stays in 2002, the year is cut there)
        "CDD": [173, 351],
        # 2001: 31 Jan, 1 Feb, 2 Feb = 3; 2002: 1-2 Jan = 2 (the run is not joined to 2001's 31 Dec, a dry day)
        "CWD": [3, 2],
        # type 8 on n = 8: 95th at h = (8 + 1/3) 0.95 + 1/3 = 8.25 -> above the 8th value: 30;
        # 99th likewise 30.  Nothing is strictly above 30: R95p = R99p = 0
        "R95p": [0.0, 0.0],
        "R99p": [0.0, 0.0],
        "R95pTOT": [0.0, 0.0],
        "R99pTOT": [0.0, 0.0],
        "Rx1day": [30.0, 25.0],
        # 2001: 31 Jan - 4 Feb = 1 + 10 + 20 + 0.5 + 0 = 31.5 vs 10-14 Jul = 35; 2002: 25 (20 Dec)
        "Rx5day": [35.0, 25.0],
    }
    for name, values in expect.items():
        np.testing.assert_allclose(ds[name].values, values, err_msg=name)
        assert {"units", "long_name", "description"} <= set(ds[name].attrs), name


def test_hand_worked_percentile_indices():
    # The 8 wet days of hand_series(): type 8 median at h = (8 + 1/3) 0.5 + 1/3 = 4.5
    # -> 5 + 0.5 (10 - 5) = 7.5; the 95th at h = 8.25 >= n -> the largest, 30.
    got = _quantile_type8(np.array([[1, 2, 3, 5, 10, 20, 25, 30.0]]), np.array([0.5, 0.95]))
    np.testing.assert_allclose(got[0], [7.5, 30.0])
    # A record where the 95th percentile sits below the top: 40 wet days 1..40 mm in 2001.
    # h = (40 + 1/3) 0.95 + 1/3 = 38.65 -> 38 + 0.65 (39 - 38) = 38.65 mm; days above: 39, 40
    t = xr.date_range("2001-01-01", "2001-12-31", freq="D")
    v = np.zeros(t.size)
    v[:40] = np.arange(1, 41)
    pr = xr.DataArray(v, dims="time", coords={"time": t}, attrs={"units": "mm", "step": "day"})
    ds = cw.precip_indices(pr, names=["R95p", "R95pTOT", "PRCPTOT", "R99p"], base_period=None)
    np.testing.assert_allclose(float(wet_day_percentiles(pr, None).sel(percentile=95)), 38.65)
    np.testing.assert_allclose(ds["R95p"], [79.0])
    np.testing.assert_allclose(ds["R95pTOT"], [100 * 79.0 / 820.0])
    # 99th: h = 40.2 >= n -> 40 mm; nothing strictly above
    np.testing.assert_allclose(ds["R99p"], [0.0])


def test_missing_day_makes_period_nan():
    pr = hand_series()
    pr[100, 0] = np.nan
    ds = cw.precip_indices(pr, base_period=None).isel(cell=0)
    for name in ds.data_vars:
        assert np.isnan(ds[name].values[0]) and np.isfinite(ds[name].values[1]), name


def test_bad_input():
    pr = hand_series()
    with pytest.raises(ParameterError, match="unknown index"):
        cw.precip_indices(pr, names=["R95"])
    with pytest.raises(ParameterError, match="years only"):
        cw.precip_indices(pr, names=["CDD"], freq="month")
    with pytest.raises(ParameterError, match="base_period"):
        cw.precip_indices(pr, names=["R95p"], base_period=(1961, 1990))
    with pytest.raises(ParameterError, match="freq"):
        cw.precip_indices(pr, freq="week")
    with pytest.raises(ParameterError, match="threshold"):
        cw.precip_indices(pr, thresholds=(-5,))
    with pytest.raises(ParameterError, match="year_start"):
        cw.precip_indices(pr, freq="season", year_start=10)
    with pytest.raises(TimeAxisError, match="step"):
        cw.precip_indices(pr.assign_attrs(step="hour"))
    with pytest.raises(TimeAxisError, match="gaps"):
        cw.precip_indices(pr.isel(time=np.r_[0:10, 12:730]))
    bad = pr.copy()
    bad[5, 0] = -1.0
    with pytest.raises(DataValueError, match="negative"):
        cw.precip_indices(bad)
    assert float(pr[5, 0]) == 0.0  # input untouched
