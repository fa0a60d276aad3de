"""Seasonal totals and seasonal share (climwidgets/compute/seasonal.py).

The reference for the shares is arithmetic on the calendar: with constant daily rain the
seasonal share is (days in season) / (days in the 12-month year).  Month lengths per
calendar: CF Conventions §4.4.1 (from memory).
"""

import numpy as np
import pandas as pd
import pytest
import xarray as xr

from climwidgets import ParameterError
from climwidgets.compute.seasonal import seasonal_fraction, seasonal_totals


def daily(start, end, calendar="standard", value=1.0):
    t = xr.date_range(start, end, freq="D", calendar=calendar, use_cftime=calendar != "standard")
    data = np.full((t.size, 1, 2), value, dtype=float)
    return xr.DataArray(
        data,
        dims=("time", "lat", "lon"),
        coords={"time": t, "lat": [10.0], "lon": [0.0, 1.0]},
        attrs={"units": "mm", "step": "day"},
        name="pr",
    )


def monthly(values, start="2001-01-01"):
    t = pd.date_range(start, periods=len(values), freq="MS")
    return xr.DataArray(
        np.asarray(values, float), dims="time", coords={"time": t}, attrs={"units": "mm", "step": "month"}
    )


@pytest.mark.parametrize(
    "calendar, year, expected",
    [
        ("standard", 2001, 62 / 365),  # Jul 31 + Aug 31
        ("standard", 2000, 62 / 366),  # leap year
        ("noleap", 2000, 62 / 365),
        ("360_day", 2000, 60 / 360),
        ("all_leap", 2001, 62 / 366),
    ],
)
def test_constant_rain_share_is_day_fraction(calendar, year, expected):
    end = f"{year}-12-30" if calendar == "360_day" else f"{year}-12-31"
    share = seasonal_fraction(daily(f"{year}-01-01", end, calendar), (7, 8))
    np.testing.assert_allclose(share.values, expected, rtol=1e-12)
    assert share.attrs["units"] == "1" and share.attrs["season_year_start"] == 1
    assert "seasonal_fraction" in share.attrs["history"]


@pytest.mark.filterwarnings("error")
def test_wrapping_season_measured_against_nov_oct_year():
    # Rain 1 mm/day in Nov-Mar, 2 mm/day otherwise.  Nov-Mar has 30+31+31+28+31 = 151 days
    # in a year without 29 Feb; the rest of the Nov-Oct year has 214 days.
    pr = daily("2000-01-01", "2003-12-31")
    month = pr.time.dt.month
    pr = pr.where(month.isin([11, 12, 1, 2, 3]), 2.0)
    share = seasonal_fraction(pr, (11, 12, 1, 2, 3), per_year=True)
    assert share.attrs["season_year_start"] == 11
    # Nov 2000-Oct 2001 -> 2001, ..., Nov 2002-Oct 2003 -> 2003; Jan-Oct 2000 and Nov-Dec 2003 dropped
    assert share.year.values.tolist() == [2001, 2002, 2003]
    np.testing.assert_allclose(share.values, 151 / (151 + 2 * 214), rtol=1e-12)
    tot = seasonal_totals(pr, (11, 12, 1, 2, 3))
    np.testing.assert_allclose(tot[:, 0, 0], 151.0)


def test_season_inside_the_water_year_uses_it():
    # Dec-Feb fits inside the Oct-Sep water year; with calendar years it does not, and the
    # Dec-Nov year is used instead (docs/architecture.md).  Hand count with 1 mm/day:
    pr = daily("1999-10-01", "2002-09-30")
    wy = seasonal_fraction(pr, (12, 1, 2), year_start=10, per_year=True)
    assert wy.attrs["season_year_start"] == 10
    assert wy.year.values.tolist() == [2000, 2001, 2002]
    # Dec 1999-Feb 2000 = 31+31+29 = 91 of 366; the other two 90 of 365
    np.testing.assert_allclose(wy[:, 0, 0], [91 / 366, 90 / 365, 90 / 365], rtol=1e-12)
    cal = seasonal_fraction(pr, (12, 1, 2), year_start=1, per_year=True)
    assert cal.attrs["season_year_start"] == 12
    # Dec-Nov years: Dec 1999-Nov 2000 (2000) and Dec 2000-Nov 2001 (2001)
    assert cal.year.values.tolist() == [2000, 2001]
    np.testing.assert_allclose(cal[:, 0, 0], [91 / 366, 90 / 365], rtol=1e-12)


def test_ratio_of_sums_and_mean_of_ratios_hand_computed():
    # year 1: season 20 of 100; year 2: season 30 of 50; year 3: no rain at all
    y1 = [10, 5, 5, 5, 5, 10, 10, 10, 10, 10, 10, 10]  # Jul+Aug = 20, total 100
    y2 = [2, 2, 2, 2, 2, 2, 15, 15, 2, 2, 2, 2]  # Jul+Aug = 30, total 50
    pr = monthly(y1 + y2 + [0] * 12)
    ros = seasonal_fraction(pr, (7, 8))
    mor = seasonal_fraction(pr, (7, 8), how="mean_of_ratios")
    np.testing.assert_allclose(float(ros), 50 / 150, rtol=1e-12)
    np.testing.assert_allclose(float(mor), (0.2 + 0.6) / 2, rtol=1e-12)
    assert mor.attrs["years_with_zero_annual_total"] == 1 and int(mor.n_years) == 2
    np.testing.assert_allclose(seasonal_fraction(pr, (7, 8), years=(2002, 2002)), 0.6)


def test_daily_and_monthly_input_agree():
    rng = np.random.default_rng(1)
    pr = daily("2001-01-01", "2004-12-31")
    pr = pr.copy(data=rng.gamma(0.6, 5.0, pr.shape))
    mon = pr.resample(time="MS").sum().assign_attrs(units="mm", step="month")
    for kw in (
        {"months": (7, 8)},
        {"months": (11, 12, 1, 2, 3)},
        {"months": (6, 7, 8), "how": "mean_of_ratios"},
        {"months": (3, 4), "year_start": 10},
    ):
        xr.testing.assert_allclose(seasonal_fraction(pr, **kw).drop_attrs(), seasonal_fraction(mon, **kw).drop_attrs())


@pytest.mark.filterwarnings("error")
def test_missing_month_drops_the_year_and_dry_cell_is_nan_without_warning():
    pr = daily("2001-01-01", "2003-12-31")
    pr = pr.where(pr.time.dt.year != 2003, 3.0)
    pr[:, 0, 1] = 0.0  # a cell that never rains
    pr.loc[{"time": "2002-03-05", "lon": 0.0}] = np.nan  # 2002 incomplete in the first cell
    per_year = seasonal_fraction(pr, (7, 8), per_year=True)
    assert np.isnan(per_year.sel(year=2002, lon=0.0))
    share = seasonal_fraction(pr, (7, 8))
    np.testing.assert_allclose(share.sel(lon=0.0), (62 + 3 * 62) / (365 + 3 * 365), rtol=1e-12)
    assert int(share.n_years.sel(lat=10.0, lon=0.0)) == 2
    assert np.isnan(share.sel(lon=1.0)).all()
    assert np.isnan(seasonal_fraction(pr, (7, 8), how="mean_of_ratios").sel(lon=1.0)).all()


def test_dask_and_curvilinear():
    rng = np.random.default_rng(2)
    t = pd.date_range("2001-01-01", "2003-12-31", freq="D")
    lat2d = np.array([[1.0, 1.1], [1.5, 1.6]])
    pr = xr.DataArray(
        rng.gamma(0.5, 4.0, (t.size, 2, 2)),
        dims=("time", "y", "x"),
        coords={"time": t, "lat": (("y", "x"), lat2d), "lon": (("y", "x"), -lat2d)},
        attrs={"units": "mm", "step": "day"},
    )
    for kw in ({}, {"how": "mean_of_ratios"}, {"per_year": True}):
        lazy = seasonal_fraction(pr.chunk({"time": 300, "x": 1}), (11, 12, 1), **kw)
        assert lazy.chunks is not None
        eager = seasonal_fraction(pr, (11, 12, 1), **kw)
        assert eager.lat.dims == ("y", "x")
        xr.testing.assert_allclose(lazy.compute().drop_attrs(), eager.drop_attrs())
    assert seasonal_totals(pr.chunk({"time": 300}), (7, 8)).chunks is not None


@pytest.mark.parametrize(
    "months, message",
    [
        (("Jul", "Aug"), "contains 'Jul', not a month number"),
        ((7, 13), "contains 13, outside 1..12"),
        ((7, 7), "repeats a month"),
        ((1, 7), "not a run of consecutive months"),
        ((), "empty"),
    ],
)
def test_bad_months(months, message):
    pr = daily("2001-01-01", "2001-12-31")
    with pytest.raises(ParameterError, match=message) as err:
        seasonal_fraction(pr, months)
    assert "Fix:" in str(err.value) and "months" in str(err.value)


def test_bad_how_and_years():
    pr = daily("2001-01-01", "2002-12-31")
    with pytest.raises(ParameterError, match="how='median'"):
        seasonal_fraction(pr, how="median")
    with pytest.raises(ParameterError, match="outside the data, whose complete years are 2001-2002"):
        seasonal_fraction(pr, years=(1991, 2020))
