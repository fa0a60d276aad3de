"""Climate normals (climwidgets/compute/normals.py).

Rules checked: WMO-No. 1203 (2017) *WMO Guidelines on the Calculation of Climate Normals*,
read through a climate-statistics guide that cites it (the primary text was not read):
a monthly sum with any missing day is missing; a monthly normal needs at least 80 % of the
years, i.e. 24 of 30; the annual normal is computed from the 12 monthly normals.
"""

import numpy as np
import pandas as pd
import pytest
import xarray as xr

from climwidgets import ParameterError
from climwidgets.compute.normals import annual_normal, normals, seasonal_normal

LEAP_1991_2020 = 8  # 1992, 1996, ..., 2020 (Gregorian leap-year rule, from memory)


def daily(start="1991-01-01", end="2020-12-31", ncell=2):
    t = pd.date_range(start, end, freq="D")
    return xr.DataArray(
        np.ones((t.size, 1, ncell)),
        dims=("time", "lat", "lon"),
        coords={"time": t, "lat": [5.0], "lon": np.arange(ncell, dtype=float)},
        attrs={"units": "mm", "step": "day"},
        name="pr",
    )


@pytest.fixture(scope="module")
def gappy():
    """30 years of 1 mm/day; January has one missing day in 6 years (cell 0) or 7 (cell 1)."""
    pr = daily()
    for k, year in enumerate(range(1991, 1998)):
        pr.loc[{"time": f"{year}-01-10", "lon": [0.0, 1.0] if k < 6 else [1.0]}] = np.nan
    return pr


def test_constant_rain_normals_are_mean_month_lengths():
    n = normals(daily())
    assert n.month.values.tolist() == list(range(1, 13))
    np.testing.assert_allclose(n.sel(month=1), 31.0)
    np.testing.assert_allclose(n.sel(month=2), (22 * 28 + LEAP_1991_2020 * 29) / 30, rtol=1e-12)
    assert n.attrs["units"] == "mm" and n.attrs["baseline"] == [1991, 2020]
    assert n.attrs["years_required"] == 24 and n.attrs["cells_failing_completeness"] == 0


def test_24_of_30_years_present_but_not_23(gappy):
    # WMO-No. 1203 80 % rule: 24 of 30 valid years -> normal present; 23 -> missing.
    n = normals(gappy)
    jan = n.sel(month=1).isel(lat=0)
    assert int(n.n_years.sel(month=1).isel(lat=0, lon=0)) == 24
    assert int(n.n_years.sel(month=1).isel(lat=0, lon=1)) == 23
    np.testing.assert_allclose(jan[0], 31.0)  # one missing day removes the whole month (sum rule)
    assert np.isnan(jan[1])
    np.testing.assert_allclose(n.sel(month=7), 31.0)
    assert n.attrs["cells_failing_completeness"] == 1
    assert n.attrs["cells_without_data"] == 0
    assert "24 of 30" in n.attrs["completeness_rule"]


def test_annual_and_seasonal_normals(gappy):
    ann = annual_normal(gappy)
    # annual normal = sum of monthly normals: 365 + 8/30 days; missing where January is
    np.testing.assert_allclose(ann.isel(lat=0, lon=0), 365 + LEAP_1991_2020 / 30, rtol=1e-12)
    assert np.isnan(ann.isel(lat=0, lon=1))
    assert ann.attrs["units"] == "mm" and "annual_normal" in ann.attrs["history"]
    ja = seasonal_normal(gappy, (7, 8))
    np.testing.assert_allclose(ja, 62.0)
    djf = seasonal_normal(gappy, (12, 1, 2))
    assert np.isnan(djf.isel(lat=0, lon=1)) and float(djf.isel(lat=0, lon=0)) > 0


def test_looser_fraction_and_monthly_input():
    t = pd.date_range("1991-01-01", periods=360, freq="MS")
    rng = np.random.default_rng(3)
    vals = rng.gamma(2.0, 20.0, 360)
    vals[0 : 12 * 10 : 12] = np.nan  # 10 Januaries missing -> 20 of 30 valid
    pr = xr.DataArray(vals, dims="time", coords={"time": t}, attrs={"units": "mm", "step": "month"})
    assert np.isnan(normals(pr).sel(month=1))
    loose = normals(pr, min_fraction=0.6)
    np.testing.assert_allclose(loose.sel(month=1), np.nanmean(vals[0::12]), rtol=1e-12)
    np.testing.assert_allclose(loose.sel(month=5), vals[4::12].mean(), rtol=1e-12)


def test_dask_same_numbers(gappy):
    lazy = normals(gappy.chunk({"time": 2000}))
    assert lazy.chunks is not None
    xr.testing.assert_allclose(lazy.compute().drop_attrs(), normals(gappy).drop_attrs())
    assert annual_normal(gappy.chunk({"time": 2000})).chunks is not None


def test_baseline_outside_data_names_the_period():
    pr = daily("2001-01-01", "2010-12-31")
    # judged by the WMO-No. 1203 count (24 of 30 years), not by whole years inside the record
    with pytest.raises(
        ParameterError,
        match="baseline=\\(1991, 2020\\) lies outside the data or overlaps "
        "it too little: 10 of its 30 years .*2001-2010.*at least 24",
    ) as err:
        normals(pr)
    assert "Fix:" in str(err.value)
    with pytest.raises(ParameterError, match="ends before it starts"):
        normals(pr, baseline=(2010, 2001))
    with pytest.raises(ParameterError, match="min_fraction=1.5"):
        normals(pr, baseline=(2001, 2010), min_fraction=1.5)
    with pytest.raises(ParameterError, match="repeats a month"):
        seasonal_normal(pr, (1, 1), baseline=(2001, 2010))


# ---- a record that starts in March 1991: judged month by month (WMO-No. 1203, 2017:
# a monthly normal needs at least 80 % of the baseline years, i.e. 24 of 30)


def test_record_starting_in_march_1991_uses_the_1991_2020_baseline():
    pr = daily("1991-03-01", "2020-12-31")
    n = normals(pr)
    # January and February have 29 of 30 years (>= 24): computed; March..December have 30
    assert n.n_years.sel(month=1).values.tolist() == [[29, 29]]
    assert n.n_years.sel(month=3).values.tolist() == [[30, 30]]
    np.testing.assert_allclose(n.sel(month=1), 31.0)
    # February over 1992-2020: 21 common years of 28 days and 8 leap years of 29
    leap_1992_2020 = 8  # 1992, 1996, …, 2020 (Gregorian rule, from memory)
    feb = (21 * 28 + leap_1992_2020 * 29) / 29
    np.testing.assert_allclose(n.sel(month=2), feb, rtol=1e-12)
    np.testing.assert_allclose(n.sel(month=3), 31.0)
    # annual normal = sum of the 12 monthly normals: 31 + Feb + 306 (March-December)
    np.testing.assert_allclose(annual_normal(pr), 31 + feb + 306, rtol=1e-12)


def test_too_short_a_start_fails_month_by_month_not_all_or_nothing():
    pr = daily("1997-03-01", "2020-12-31")  # March 1997 on: Jan/Feb 23 years, Mar-Dec 24 years
    n = normals(pr)
    assert np.isnan(n.sel(month=[1, 2])).all()  # 23 of 30 < 24
    np.testing.assert_allclose(n.sel(month=3), 31.0)  # 24 of 30 >= 24
    assert n.attrs["years_required"] == 24
    assert np.isnan(annual_normal(pr)).all()  # the sum of the 12 monthly normals needs all 12
