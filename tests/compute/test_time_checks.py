"""Tests of climwidgets/compute/_time.py: the shared time-axis checks of the climatology core.

Rules checked against their sources:
- a sum over a period with a missing step is missing (WMO-No. 1203, Guide to the
  calculation of climate normals, 2017: monthly totals need every day; common practice
  for sums);
- month lengths in each calendar follow the CF Conventions 1.10, section 4.4.1;
- a season is measured against the 12-month year that holds it (the house rule written in
  docs/architecture.md, "Seasons").
"""

import cftime
import numpy as np
import pandas as pd
import pytest
import xarray as xr

from climwidgets.compute import _time
from climwidgets.errors import InsufficientDataError, ParameterError, TimeAxisError, UnitsError


def _daily(start="2001-01-01", end="2002-12-31", calendar="standard", value=1.0):
    time = xr.date_range(start, end, freq="D", calendar=calendar, use_cftime=calendar != "standard")
    return xr.DataArray(
        np.full(time.size, value), dims="time", coords={"time": time}, name="pr", attrs={"units": "mm", "step": "day"}
    )


def test_check_precip_returns_the_step():
    assert _time.check_precip(_daily(), "f") == "day"


@pytest.mark.parametrize(
    "change, error, words",
    [
        (lambda pr: pr.values, ParameterError, "needs an xarray.DataArray"),
        (lambda pr: pr.rename(time="t"), TimeAxisError, "no 'time' dimension"),
        (lambda pr: pr.assign_attrs(units="kg m-2 s-1"), UnitsError, "units are"),
        (lambda pr: pr.assign_attrs(step="week"), TimeAxisError, "attrs\\['step'\\]"),
        (lambda pr: pr.isel(time=[2, 1, 0]), TimeAxisError, "unsorted or duplicated"),
        (lambda pr: pr.isel(time=[0, 0, 1]), TimeAxisError, "unsorted or duplicated"),
    ],
)
def test_check_precip_refuses_what_breaks_the_convention(change, error, words):
    with pytest.raises(error, match=words):
        _time.check_precip(change(_daily()), "monthly_totals")


@pytest.mark.parametrize(
    "months, expected",
    [
        ((7, 8), (7, 8)),
        (7, (7,)),
        ((11, 12, 1, 2, 3), (11, 12, 1, 2, 3)),
        (np.array([12, 1]), (12, 1)),
    ],
)
def test_check_months_accepts_runs_that_may_wrap(months, expected):
    assert _time.check_months(months, "f") == expected


@pytest.mark.parametrize(
    "months, words",
    [
        ((), "empty"),
        ((0, 1), "outside 1..12"),
        ((7, 7), "repeats"),
        ((7, 9), "consecutive"),
        (("Jul",), "not a month number"),
        ((True,), "not a month number"),
        (None, "not a sequence"),
    ],
)
def test_check_months_refuses(months, words):
    with pytest.raises(ParameterError, match=words):
        _time.check_months(months, "f")


def test_check_year_start_and_year_range():
    assert _time.check_year_start(10, "f") == 10
    for bad in (0, 13, True, 1.0):
        with pytest.raises(ParameterError):
            _time.check_year_start(bad, "f")
    assert _time.check_year_range((1991, 2020), "f", "baseline") == (1991, 2020)
    for bad in ((2020, 1991), (1991,), ("1991", "2020"), None):
        with pytest.raises(ParameterError):
            _time.check_year_range(bad, "f", "baseline")


@pytest.mark.parametrize(
    "months, year_start, expected",
    [
        ((7, 8), 1, 1),  # fits in the calendar year
        ((12, 1, 2), 1, 12),  # crosses Dec-Jan: the Dec-Nov year
        ((11, 12, 1, 2, 3), 1, 11),  # Nov-Oct year
        ((12, 1, 2), 10, 10),  # fits in the Oct-Sep water year
        ((9, 10), 10, 9),  # crosses the water-year start
    ],
)
def test_season_year_start(months, year_start, expected):
    assert _time.season_year_start(months, year_start) == expected


@pytest.mark.parametrize("calendar, feb_days", [("standard", 28), ("noleap", 28), ("all_leap", 29), ("360_day", 30)])
def test_monthly_sums_count_every_day_of_the_calendar(calendar, feb_days):
    monthly, covered = _time.monthly_with_coverage(
        _daily("2001-01-01", "2001-12-30" if calendar == "360_day" else "2001-12-31", calendar), "day"
    )
    assert covered.all()
    assert monthly.isel(time=1).item() == feb_days  # 1 mm a day


def test_a_month_with_a_missing_day_is_missing_and_a_cut_month_is_not_covered():
    pr = _daily("2001-01-01", "2001-03-15")
    pr[40] = np.nan  # 10 February
    monthly, covered = _time.monthly_with_coverage(pr, "day")
    assert monthly.values[0] == 31 and np.isnan(monthly.values[1])
    assert covered.tolist() == [True, True, False] and np.isnan(monthly.values[2])


def test_hourly_coverage_counts_24_steps_a_day():
    time = pd.date_range("2001-02-01", "2001-03-01", freq="h", inclusive="left")
    pr = xr.DataArray(np.ones(time.size), dims="time", coords={"time": time})
    assert _time.month_coverage(pr, "hour").values.tolist() == [True]
    assert _time.month_coverage(pr.isel(time=slice(1, None)), "hour").values.tolist() == [False]


def test_year_blocks_label_water_years_by_their_end():
    monthly, covered = _time.monthly_with_coverage(_daily("2000-10-01", "2002-09-30"), "day")
    blocks = _time.year_blocks(monthly, covered, 10)
    assert blocks["year"].values.tolist() == [2001, 2002]  # Oct 2000-Sep 2001 is water year 2001
    assert blocks["month"].values.tolist() == [10, 11, 12, 1, 2, 3, 4, 5, 6, 7, 8, 9]
    # water year 2001: 365 days; 2002: 365 days (neither holds a 29 February)
    assert blocks.sum("month").values.tolist() == [365.0, 365.0]


def test_year_blocks_need_one_complete_year():
    monthly, covered = _time.monthly_with_coverage(_daily("2001-03-01", "2001-12-31"), "day")
    with pytest.raises(InsufficientDataError, match="no complete 12-month year starting in Jan"):
        _time.year_blocks(monthly, covered, 1)


def test_select_years_within_the_record():
    yearly = xr.DataArray(np.arange(5.0), dims="year", coords={"year": np.arange(2001, 2006)})
    assert _time.select_years(yearly, (2002, 2003), "f", "years", "src")["year"].values.tolist() == [2002, 2003]
    with pytest.raises(ParameterError, match="outside the data"):
        _time.select_years(yearly, (1991, 2003), "f", "years", "src")


def test_safe_divide_gives_missing_for_zero_denominators():
    out = _time.safe_divide(xr.DataArray([1.0, 1.0, 1.0]), xr.DataArray([2.0, 0.0, np.nan]))
    assert out.values[0] == 0.5 and np.isnan(out.values[1:]).all()


def test_is_dask_and_names():
    pr = _daily()
    assert not _time.is_dask(pr) and _time.is_dask(pr.chunk({"time": 100}))
    assert _time.source_name(pr) == "DataArray 'pr'" and _time.source_name(pr.rename(None)) == "input DataArray"
    assert _time.MONTH_NAMES[0] == "Jan" and len(_time.MONTH_NAMES) == 12


def test_data_period_text():
    monthly, _ = _time.monthly_with_coverage(_daily("2001-01-01", "2001-03-31", "noleap"), "day")
    assert _time.data_period(monthly) == "2001-01 to 2001-03"
    assert isinstance(monthly["time"].values[0], cftime.datetime)
