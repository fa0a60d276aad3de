"""Monthly and annual totals (climwidgets/compute/totals.py)."""

import numpy as np
import pandas as pd
import pytest
import xarray as xr

from climwidgets import InputError, ParameterError, TimeAxisError, UnitsError
from climwidgets.compute.totals import annual_totals, monthly_totals

# Calendar month lengths: CF Conventions §4.4.1 (calendar definitions) - from memory.
DAYS = {
    "standard": [31, 29, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31],  # 2000 is a leap year
    "noleap": [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31],
    "all_leap": [31, 29, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31],
    "360_day": [30] * 12,
    "julian": [31, 29, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31],
}


def daily(start, end, calendar="standard", value=1.0, ncell=2):
    t = xr.date_range(start, end, freq="D", calendar=calendar, use_cftime=calendar != "standard")
    data = np.full((t.size, 1, ncell), value, dtype=float)
    return xr.DataArray(
        data,
        dims=("time", "lat", "lon"),
        coords={"time": t, "lat": [10.0], "lon": np.arange(ncell, dtype=float)},
        attrs={"units": "mm", "step": "day"},
        name="pr",
    )


@pytest.mark.parametrize("calendar", list(DAYS))
def test_monthly_totals_of_constant_rain_are_month_lengths(calendar):
    end = "2000-12-30" if calendar == "360_day" else "2000-12-31"
    m = monthly_totals(daily("2000-01-01", end, calendar))
    np.testing.assert_allclose(m.isel(lat=0, lon=0).values, DAYS[calendar], rtol=0, atol=1e-12)
    assert m.attrs["step"] == "month" and m.attrs["units"] == "mm"
    assert m.attrs["cell_methods"] == "time: sum"
    assert "monthly_totals" in m.attrs["history"]
    assert m.time.dt.day.values.tolist() == [1] * 12


def test_one_missing_day_makes_the_month_missing():
    # WMO-No. 1203 (2017) rule for sums (read via a climate-statistics guide citing it):
    # any missing day makes the monthly total missing.
    pr = daily("2001-01-01", "2001-03-31")
    pr[40, 0, 0] = np.nan  # 10 Feb, first cell only
    m = monthly_totals(pr)
    assert np.isnan(m[1, 0, 0]) and m[1, 0, 1] == 28
    assert m[0, 0, 0] == 31 and m[2, 0, 0] == 31


def test_edge_months_not_covered_are_missing():
    m = monthly_totals(daily("2001-01-15", "2001-03-20"))
    assert m.sizes["time"] == 3
    assert np.isnan(m[0, 0, 0]) and m[1, 0, 0] == 28 and np.isnan(m[2, 0, 0])


def test_hourly_input_sums_to_months():
    t = pd.date_range("2001-02-01", "2001-03-31 23:00", freq="h")
    pr = xr.DataArray(np.full(t.size, 0.5), dims="time", coords={"time": t}, attrs={"units": "mm", "step": "hour"})
    np.testing.assert_allclose(monthly_totals(pr).values, [0.5 * 24 * 28, 0.5 * 24 * 31])
    pr[5] = np.nan
    assert np.isnan(monthly_totals(pr)[0])


def test_monthly_input_passes_through_relabelled():
    t = xr.date_range("2001-01-16", periods=3, freq="MS", calendar="noleap", use_cftime=True)
    t = [d.replace(day=16) for d in t]
    pr = xr.DataArray([5.0, np.nan, 7.0], dims="time", coords={"time": t}, attrs={"units": "mm", "step": "month"})
    m = monthly_totals(pr)
    np.testing.assert_array_equal(m.values, [5.0, np.nan, 7.0])
    assert [d.day for d in m.time.values] == [1, 1, 1]


def test_annual_calendar_and_water_year_hand_computed():
    pr = daily("1999-10-01", "2001-09-30")
    cal = annual_totals(pr)
    # calendar years: 1999 and 2001 are only partly covered and dropped; 2000 is a leap year
    assert cal.year.values.tolist() == [2000]
    assert float(cal[0, 0, 0]) == 366
    wy = annual_totals(pr, year_start=10)
    # Oct 1999-Sep 2000 holds 29 Feb 2000 -> 366 days, labelled 2000 (year it ends, common practice)
    assert wy.year.values.tolist() == [2000, 2001]
    np.testing.assert_array_equal(wy[:, 0, 0].values, [366.0, 365.0])
    assert wy.attrs["year_start"] == 10 and wy.attrs["units"] == "mm"


def test_annual_with_a_missing_month_is_missing_but_kept():
    pr = daily("2000-01-01", "2002-12-31")
    pr.loc[{"time": "2001-06-03"}] = np.nan
    a = annual_totals(pr)
    assert a.year.values.tolist() == [2000, 2001, 2002]
    assert np.isnan(a.sel(year=2001)).all() and float(a.sel(year=2002)[0, 0]) == 365


def test_dask_gives_dask_and_same_numbers():
    pr = daily("2000-01-01", "2002-12-31")
    pr[100:110, 0, 1] = np.nan
    for f in (monthly_totals, annual_totals, lambda p: annual_totals(p, year_start=10)):
        lazy = f(pr.chunk({"time": 200}))
        assert lazy.chunks is not None
        xr.testing.assert_allclose(lazy.compute(), f(pr))


def test_curvilinear_grid():
    t = pd.date_range("2001-01-01", "2001-12-31", freq="D")
    lat2d = np.array([[10.0, 10.1], [10.5, 10.6]])
    pr = xr.DataArray(
        np.ones((t.size, 2, 2)),
        dims=("time", "y", "x"),
        coords={"time": t, "lat": (("y", "x"), lat2d), "lon": (("y", "x"), lat2d + 100)},
        attrs={"units": "mm", "step": "day"},
    )
    a = annual_totals(pr)
    assert a.dims == ("year", "y", "x") and a.lat.dims == ("y", "x")
    assert float(a.sum()) == 4 * 365


def test_bad_inputs_explain_themselves():
    pr = daily("2001-01-01", "2001-12-31")
    with pytest.raises(UnitsError, match="units 'furlongs'.*not a unit of mass, length or time"):
        monthly_totals(pr.assign_attrs(units="furlongs"))
    with pytest.raises(TimeAxisError, match="step"):
        monthly_totals(pr.assign_attrs(step="week"))
    with pytest.raises(TimeAxisError, match="no 'time' dimension"):
        monthly_totals(pr.isel(time=0))
    with pytest.raises(ParameterError, match="year_start=13.*Fix: pass year_start=1"):
        annual_totals(pr, year_start=13)
    with pytest.raises(InputError, match="no complete 12-month year starting in Oct"):
        annual_totals(pr, year_start=10)
