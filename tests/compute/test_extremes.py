"""Checks of climwidgets.compute.extremes.annual_maxima on hand-made series with known maxima.

The expected values are worked out by hand from the events placed in the series (synthetic
fields with analytic answers); the completeness rule (>= 90 % of a year's steps present)
is common practice.
"""

import numpy as np
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.errors import DataValueError, ParameterError, TimeAxisError

EVENTS = {  # date -> depth (mm); zero elsewhere
    "2001-03-10": 30.0,
    "2001-03-11": 25.0,
    "2001-03-12": 20.0,
    "2001-08-01": 40.0,
    "2001-11-15": 33.0,
    "2002-06-05": 12.0,
    "2002-12-30": 18.0,
    "2002-12-31": 20.0,
    "2003-01-01": 25.0,
    "2003-07-04": 5.0,
}


def daily(calendar="standard", start="2001-01-01", end="2003-12-31"):
    """Two cells: cell 0 complete; cell 1 misses 2001-03-11 and 60 days of 2002."""
    t = xr.date_range(start, end, freq="D", calendar=calendar, use_cftime=calendar != "standard")
    pr = xr.DataArray(
        np.zeros((t.size, 1, 2)),
        dims=("time", "lat", "lon"),
        coords={"time": t, "lat": [10.0], "lon": [20.0, 21.0]},
        name="pr",
        attrs={"units": "mm", "step": "day"},
    )
    for day, v in EVENTS.items():
        if pr["time"].sel(time=day).size:
            pr.loc[{"time": day}] = v
    pr.loc[{"time": "2001-03-11", "lon": 21.0}] = np.nan
    pr.loc[{"time": slice("2002-02-01", "2002-04-01"), "lon": 21.0}] = np.nan
    return pr


def as_str(values):
    return [None if (v is None or v != v) else str(v)[:10] for v in np.asarray(values).ravel()]


@pytest.mark.parametrize("calendar", ["standard", "noleap"])
def test_one_and_three_day_maxima_calendar_year(calendar):
    pr = daily(calendar)
    one = cw.annual_maxima(pr, duration_days=1, return_dates=True)
    assert one["annual_max"].dims == ("year", "lat", "lon")
    np.testing.assert_array_equal(one["year"], [2001, 2002, 2003])
    np.testing.assert_allclose(one["annual_max"].isel(lat=0, lon=0), [40, 20, 25])
    assert as_str(one["end"].isel(lat=0, lon=0).values) == ["2001-08-01", "2002-12-31", "2003-01-01"]
    # cell 1: 60 of 365 days missing in 2002 (> 10 %) -> that year is NaN
    np.testing.assert_allclose(one["annual_max"].isel(lat=0, lon=1), [40, np.nan, 25])

    three = cw.annual_maxima(pr, duration_days=3, return_dates=True)
    a0 = three.isel(lat=0, lon=0)
    # 30 + 25 + 20 in March 2001; 0 + 18 + 20 ending 31 Dec 2002; 18 + 20 + 25 ending 1 Jan 2003
    np.testing.assert_allclose(a0["annual_max"], [75, 38, 63])
    assert as_str(a0["start"].values) == ["2001-03-10", "2002-12-29", "2002-12-30"]
    assert as_str(a0["end"].values) == ["2001-03-12", "2002-12-31", "2003-01-01"]
    # cell 1: windows through the missing 11 March are skipped; the 40 mm day wins, earliest window
    a1 = three.isel(lat=0, lon=1)
    np.testing.assert_allclose(a1["annual_max"], [40, np.nan, 63])
    assert as_str(a1["start"].values)[0] == "2001-07-30" and as_str(a1["end"].values)[0] == "2001-08-01"
    assert as_str(a1["end"].values)[1] is None
    assert three["annual_max"].attrs["units"] == "mm" and three["annual_max"].attrs["duration"] == "3 day"
    assert "90%" in three.attrs["completeness_rule"] and "history" in three.attrs


def test_water_year_labels_and_partial_years_dropped():
    pr = daily()
    wy = cw.annual_maxima(pr, duration_days=3, year_start=10).isel(lat=0, lon=0)
    # Oct 2001-Sep 2002 -> 2002, Oct 2002-Sep 2003 -> 2003; Jan-Sep 2001 and Oct-Dec 2003 are
    # partial water years (< 90 % of their days on the axis) and are dropped
    np.testing.assert_array_equal(wy["year"], [2002, 2003])
    np.testing.assert_allclose(wy, [33, 63])
    assert "labelled by the year it ends" in wy.attrs["year_label"]
    # a record starting in July drops its first calendar year
    late = cw.annual_maxima(daily(start="2000-07-01"))
    np.testing.assert_array_equal(late["year"], [2001, 2002, 2003])
    # ...unless the completeness fraction is relaxed
    loose = cw.annual_maxima(daily(start="2000-07-01"), min_valid_fraction=0.4)
    np.testing.assert_array_equal(loose["year"], [2000, 2001, 2002, 2003])


def test_360_day_calendar_counts_360_days():
    # 30 missing days of 360 (8.3 %) keep the year at 90 %; 40 (11 %) do not
    t = xr.date_range("2001-01-01", "2003-12-30", freq="D", calendar="360_day", use_cftime=True)
    pr = xr.DataArray(np.ones(t.size), dims="time", coords={"time": t}, attrs={"units": "mm", "step": "day"})
    pr.loc[{"time": slice("2001-05-01", "2001-05-30")}] = np.nan
    pr.loc[{"time": slice("2003-05-01", "2003-06-10")}] = np.nan
    am = cw.annual_maxima(pr)
    np.testing.assert_array_equal(am["year"], [2001, 2002, 2003])
    assert np.isfinite(am.sel(year=2001)) and np.isnan(am.sel(year=2003))


def test_hourly_durations():
    t = xr.date_range("2001-01-01", "2002-12-31T23:00", freq="h")
    pr = xr.DataArray(np.zeros(t.size), dims="time", coords={"time": t}, attrs={"units": "mm", "step": "hour"})
    pr.loc["2001-05-01T10:00"] = 5.0
    pr.loc["2001-05-01T11:00"] = 8.0
    pr.loc["2001-05-01T12:00"] = 6.0
    pr.loc[slice("2001-06-01T00:00", "2001-06-01T23:00")] = 1.0  # 24 mm over one day
    pr.loc["2002-03-03T03:00"] = 2.0
    np.testing.assert_allclose(cw.annual_maxima(pr, duration_hours=1), [8, 2])
    three = cw.annual_maxima(pr, duration_hours=3, return_dates=True)
    np.testing.assert_allclose(three["annual_max"], [19, 2])
    assert str(three["start"].values[0])[:16] == "2001-05-01T10:00"
    np.testing.assert_allclose(cw.annual_maxima(pr, duration_hours=24), [24, 2])
    np.testing.assert_allclose(cw.annual_maxima(pr, duration_days=1), [24, 2])  # 1 day = 24 steps
    assert cw.annual_maxima(pr, duration_hours=3).attrs["duration"] == "3 hour"


def test_fixed_to_sliding_factor():
    pr = daily()
    am = cw.annual_maxima(pr, fixed_to_sliding=1.13)
    # Hershfield (1961), U.S. Weather Bureau Technical Paper 40: 1.13 for 1-day maxima
    np.testing.assert_allclose(am.isel(lat=0, lon=0), [40 * 1.13, 20 * 1.13, 25 * 1.13], rtol=1e-12)
    assert am.attrs["fixed_to_sliding"] == 1.13 and "Hershfield" in am.attrs["fixed_to_sliding_source"]
    assert cw.annual_maxima(pr).attrs["fixed_to_sliding"] == "none"


@pytest.mark.parametrize("calendar", ["standard", "noleap"])
def test_dask_in_dask_out(calendar):
    pr = daily(calendar)
    ref = cw.annual_maxima(pr, duration_days=3, year_start=10, return_dates=True)
    lazy = cw.annual_maxima(pr.chunk(time=200), duration_days=3, year_start=10, return_dates=True)
    assert lazy["annual_max"].chunks is not None and lazy["end"].chunks is not None
    got = lazy.compute()
    xr.testing.assert_allclose(got["annual_max"], ref["annual_max"])
    assert as_str(got["start"].values) == as_str(ref["start"].values)


def test_errors():
    pr = daily()
    with pytest.raises(ParameterError) as e:
        cw.annual_maxima(pr, duration_days=-1)
    assert "not positive" in str(e.value) and "(1, 2, 3, 5, 7, 10)" in str(e.value)
    with pytest.raises(ParameterError, match="not a supported duration"):
        cw.annual_maxima(pr, duration_days=4)
    with pytest.raises(ParameterError, match="needs hourly input"):
        cw.annual_maxima(pr, duration_hours=3)
    with pytest.raises(ParameterError, match="both duration_days and duration_hours"):
        cw.annual_maxima(pr.assign_attrs(step="hour"), duration_days=2, duration_hours=3)
    with pytest.raises(ParameterError, match="fixed_to_sliding"):
        cw.annual_maxima(pr, fixed_to_sliding=0.9)
    with pytest.raises(ParameterError, match="min_valid_fraction"):
        cw.annual_maxima(pr, min_valid_fraction=0)
    with pytest.raises(TimeAxisError, match="daily or hourly"):
        cw.annual_maxima(pr.assign_attrs(step="month"))
    with pytest.raises(TimeAxisError, match="gaps"):
        cw.annual_maxima(pr.isel(time=np.r_[0:100, 101 : pr.sizes["time"]]))
    neg = pr.copy()
    neg[5, 0, 0] = -9999.0
    with pytest.raises(DataValueError, match="negative"):
        cw.annual_maxima(neg)
