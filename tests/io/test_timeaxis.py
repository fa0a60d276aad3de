"""Tests of climwidgets/io/timeaxis.py: calendars, step lengths, gaps.

Calendar facts are from the CF Conventions 1.10, section 4.4.1 "Calendar": ``noleap``
(365_day) has no leap years, ``all_leap`` (366_day) has 29 February every year, ``360_day``
has twelve 30-day months; ``standard`` is mixed Julian/Gregorian, ``julian`` has a leap
year every fourth year.  cftime (the reference implementation of those calendars) gives
the month lengths checked below.
"""

import cftime
import numpy as np
import pandas as pd
import pytest
import xarray as xr

from climwidgets.errors import CalendarError, TimeAxisError
from climwidgets.io import timeaxis


def _months(calendar, start="2000-01-01", periods=24):
    return xr.DataArray(
        xr.date_range(start, periods=periods, freq="MS", calendar=calendar, use_cftime=True), dims="time", name="time"
    )


def _cftime_days_in_month(calendar, year, month):
    start = cftime.datetime(year, month, 1, calendar=calendar)
    end = cftime.datetime(year + (month == 12), month % 12 + 1, 1, calendar=calendar)
    return (end - start).days


@pytest.mark.parametrize("calendar", ["noleap", "all_leap", "360_day", "julian", "proleptic_gregorian"])
def test_monthly_step_lengths_follow_the_calendar(calendar):
    time = _months(calendar, "1900-01-01", 24)  # 1900: leap in julian, not in proleptic_gregorian
    seconds = timeaxis.step_seconds(time, "month").values
    expected = [_cftime_days_in_month(calendar, t.year, t.month) * 86400.0 for t in time.values]
    np.testing.assert_array_equal(seconds, expected)


def test_february_lengths_from_cf_conventions():
    feb = {
        cal: timeaxis.step_seconds(_months(cal, "2001-02-01", 1), "month").item() / 86400
        for cal in ("noleap", "all_leap", "360_day")
    }
    assert feb == {"noleap": 28, "all_leap": 29, "360_day": 30}


def test_hour_and_day_steps_have_fixed_lengths():
    time = xr.DataArray(pd.date_range("2001-01-01", periods=3, freq="D"), dims="time")
    assert timeaxis.step_seconds(time, "day").values.tolist() == [86400.0] * 3
    assert timeaxis.step_seconds(time, "hour").values.tolist() == [3600.0] * 3


@pytest.mark.parametrize("freq, step", [("h", "hour"), ("D", "day"), ("MS", "month")])
def test_infer_step_from_spacing(freq, step):
    time = xr.DataArray(
        xr.date_range("2001-01-01", periods=40, freq=freq, calendar="noleap", use_cftime=True), dims="time"
    )
    assert timeaxis.infer_step(time) == step


def test_infer_step_prefers_bounds():
    # one monthly step whose bounds say how long it is
    time = xr.DataArray(pd.to_datetime(["2001-01-16"]), dims="time")
    bounds = xr.DataArray(pd.to_datetime(["2001-01-01", "2001-02-01"]).values.reshape(1, 2), dims=("time", "nv"))
    assert timeaxis.infer_step(time, bounds) == "month"


def test_infer_step_refuses_one_step_without_bounds():
    with pytest.raises(TimeAxisError, match="single time step"):
        timeaxis.infer_step(xr.DataArray(pd.to_datetime(["2001-01-01"]), dims="time"), source="f.nc")


@pytest.mark.parametrize("name", ["standard", "Gregorian", " noleap ", "365_day", "360_day", None])
def test_check_calendar_accepts_cf_names(name):
    assert timeaxis.check_calendar(name) in timeaxis.SUPPORTED_CALENDARS


@pytest.mark.parametrize("bad, words", [("lunar", "not supported"), (365, "not text")])
def test_check_calendar_refuses_others(bad, words):
    with pytest.raises(CalendarError, match=words) as info:
        timeaxis.check_calendar(bad, source="f.nc")
    assert "f.nc" in str(info.value) and "Fix:" in str(info.value)


def test_calendar_of_numpy_and_cftime_axes():
    assert timeaxis.calendar_of(xr.DataArray(pd.date_range("2001-01-01", periods=2), dims="time")) == "standard"
    assert timeaxis.calendar_of(_months("360_day")) == "360_day"


def test_check_monotonic_names_the_first_problem():
    timeaxis.check_monotonic(pd.date_range("2001-01-01", periods=3).values)  # fine
    days = pd.to_datetime(["2001-01-01", "2001-01-02", "2001-01-02", "2001-01-03"]).values
    with pytest.raises(TimeAxisError, match="1 duplicated time stamp.*position 2"):
        timeaxis.check_monotonic(days)
    with pytest.raises(TimeAxisError, match="go backwards"):
        timeaxis.check_monotonic(np.array([0.0, 2.0, 1.0]))


def test_month_starts_keep_the_calendar():
    mid = xr.DataArray([cftime.datetime(2001, m, 15, calendar="360_day") for m in (1, 2, 3)], dims="time")
    starts = timeaxis.month_starts(mid).values
    assert [(t.year, t.month, t.day, t.calendar) for t in starts] == [(2001, m, 1, "360_day") for m in (1, 2, 3)]
    numpy_mid = xr.DataArray(pd.to_datetime(["2001-02-15", "2001-03-31"]), dims="time")
    assert (
        timeaxis.month_starts(numpy_mid).values.tolist() == pd.to_datetime(["2001-02-01", "2001-03-01"]).values.tolist()
    )


def test_full_axis_has_the_calendar_year_length():
    first_last = xr.DataArray(
        [cftime.datetime(2001, 1, 1, calendar="360_day"), cftime.datetime(2001, 12, 30, calendar="360_day")],
        dims="time",
    )
    assert len(timeaxis.full_axis(first_last, "day")) == 360
    leap = xr.DataArray(pd.to_datetime(["2000-01-01", "2000-12-31"]), dims="time")
    assert len(timeaxis.full_axis(leap, "day")) == 366  # 2000 is a Gregorian leap year


def _monthly_stamps_with_bounds(days):
    time = xr.DataArray(pd.date_range("2001-01-01", periods=12, freq="MS"), dims="time")
    lower = time.values
    bounds = xr.DataArray(np.stack([lower, lower + np.timedelta64(days, "D")], axis=1), dims=("time", "nv"))
    return time, bounds


def test_infer_step_refuses_bounds_that_disagree_with_the_spacing():
    # monthly stamps with one-day bounds would be read as daily data, 97 % missing
    time, bounds = _monthly_stamps_with_bounds(1)
    with pytest.raises(TimeAxisError, match="time bounds one day long, but its time stamps are one month apart") as e:
        timeaxis.infer_step(time, bounds, source="f.nc")
    assert "f.nc" in str(e.value) and "Fix: " in str(e.value)


def test_infer_step_refuses_bounds_spanning_several_steps():
    time = xr.DataArray(pd.date_range("2001-01-01", periods=10, freq="D"), dims="time")
    lower = time.values - np.timedelta64(2, "D")
    bounds = xr.DataArray(np.stack([lower, time.values + np.timedelta64(1, "D")], axis=1), dims=("time", "nv"))
    with pytest.raises(TimeAxisError, match="about 3 days long, but its time stamps are one day apart"):
        timeaxis.infer_step(time, bounds)


def test_infer_step_accepts_bounds_that_match_the_spacing():
    time = xr.DataArray(pd.date_range("2001-01-01", periods=12, freq="MS"), dims="time")
    upper = pd.date_range("2001-02-01", periods=12, freq="MS").values
    bounds = xr.DataArray(np.stack([time.values, upper], axis=1), dims=("time", "nv"))
    assert timeaxis.infer_step(time, bounds) == "month"
