"""Property-based checks (hypothesis) of the computations on small generated fields.

The properties are the definitions themselves: a share of a total lies in [0, 1]; a
year's total is the sum of its months (WMO sums, common practice); a coverage fraction
lies in [0, 1]; conservative remapping keeps the area-weighted total (the defining
property of first-order conservative remapping, Jones 1999, Mon. Wea. Rev. 127); a dask
input gives the numbers of a numpy input.  Runs are derandomized so CI is reproducible.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import climwidgets as cw

SETTINGS = settings(
    max_examples=15,
    deadline=None,
    derandomize=True,
    print_blob=True,
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)
LAT = np.array([-30.75, -30.25])
LON = np.array([-140.75, -140.25, -139.75])


def _monthly(values, start="2001-01-01"):
    n = values.shape[0]
    time = pd.date_range(start, periods=n, freq="MS")
    return xr.DataArray(
        values,
        dims=("time", "lat", "lon"),
        coords={"time": time, "lat": LAT, "lon": LON},
        attrs={"units": "mm", "step": "month"},
        name="pr",
    )


def _daily(values, start="2001-01-01"):
    time = pd.date_range(start, periods=values.shape[0], freq="D")
    return xr.DataArray(
        values,
        dims=("time", "lat", "lon"),
        coords={"time": time, "lat": LAT, "lon": LON},
        attrs={"units": "mm", "step": "day"},
        name="pr",
    )


depth = st.one_of(st.just(0.0), st.floats(0.0, 500.0, allow_nan=False))


@st.composite
def fields(draw, n, allow_nan=True):
    """(n, 2, 3) depths from a drawn seed: gamma amounts, a drawn share of dry steps and of
    missing ones (drawing every value through hypothesis would be slow for no gain)."""
    rng = np.random.default_rng(draw(st.integers(0, 2**32 - 1)))
    values = rng.gamma(0.6, draw(st.sampled_from([0.1, 5.0, 80.0])), (n, 2, 3))
    values[rng.random(values.shape) < draw(st.sampled_from([0.0, 0.3, 1.0]))] = 0.0
    if allow_nan:
        values[rng.random(values.shape) < draw(st.sampled_from([0.0, 0.0, 0.05, 0.5]))] = np.nan
    return values


@st.composite
def monthly_fields(draw, allow_nan=True):
    n = draw(st.integers(2, 4)) * 12 + draw(st.integers(0, 11))
    return draw(fields(n, allow_nan))


@st.composite
def seasons(draw):
    first = draw(st.integers(1, 12))
    length = draw(st.integers(1, 11))
    return tuple((first - 1 + i) % 12 + 1 for i in range(length))


@given(
    values=monthly_fields(),
    months=seasons(),
    year_start=st.integers(1, 12),
    how=st.sampled_from(["ratio_of_sums", "mean_of_ratios"]),
)
@SETTINGS
def test_season_share_is_between_0_and_1(values, months, year_start, how):
    pr = _monthly(values)
    try:
        share = cw.seasonal_fraction(pr, months=months, how=how, year_start=year_start, per_year=True)
    except cw.InputError:
        return  # too few complete years for this season: a clear refusal is allowed
    v = share.values
    assert share.attrs["units"] == "1"
    assert np.all((v[np.isfinite(v)] >= 0.0) & (v[np.isfinite(v)] <= 1.0 + 1e-12))
    try:
        overall = cw.seasonal_fraction(pr, months=months, how=how, year_start=year_start).values
    except cw.InputError:
        return
    assert np.all((overall[np.isfinite(overall)] >= 0.0) & (overall[np.isfinite(overall)] <= 1.0 + 1e-12))


@given(values=monthly_fields(allow_nan=False), year_start=st.integers(1, 12))
@SETTINGS
def test_annual_totals_are_sums_of_monthly_totals(values, year_start):
    pr = _monthly(values)
    annual = cw.annual_totals(pr, year_start=year_start)
    monthly = cw.monthly_totals(pr)
    # the year labelled Y runs from month year_start of Y-1 (of Y when year_start is 1)
    ends = monthly["time"].dt.year + (monthly["time"].dt.month >= year_start) * (year_start > 1)
    by_hand = monthly.groupby(ends.rename("year")).sum("time", min_count=1)
    counts = monthly.groupby(ends.rename("year")).count("time")
    checked = 0
    for year in annual["year"].values:
        if int(counts.sel(year=year).min()) == 12:
            np.testing.assert_allclose(annual.sel(year=year).values, by_hand.sel(year=year).values, rtol=1e-12)
            checked += 1
    assert checked >= 1


@given(values=fields(500, allow_nan=False), year_start=st.sampled_from([1, 10]))
@settings(SETTINGS, max_examples=8)
def test_annual_totals_of_daily_data_are_sums_of_months(values, year_start):
    pr = _daily(values, start="2001-09-01")
    annual = cw.annual_totals(pr, year_start=year_start)
    monthly = cw.monthly_totals(pr)
    for year in annual["year"].values:
        a = annual.sel(year=year).values
        if np.all(np.isnan(a)):
            continue
        lo = pd.Timestamp(int(year) - (year_start > 1), year_start, 1)
        months = monthly.sel(time=slice(lo, lo + pd.DateOffset(months=11)))
        assert months.sizes["time"] == 12
        np.testing.assert_allclose(a, months.sum("time").values, rtol=1e-12)


coord = st.floats(-143.0, -137.0, allow_nan=False)
lat_c = st.floats(-33.0, -28.0, allow_nan=False)
vertex = st.tuples(coord, lat_c)


@given(
    vertices=st.lists(vertex, min_size=1, max_size=7)
    | st.lists(
        st.sampled_from([(-140.5, -30.5), (-140.0, -30.0), (-139.5, -29.5), (-140.5, -29.5)]), min_size=1, max_size=6
    )
)
@SETTINGS
def test_coverage_weights_are_between_0_and_1_for_any_polygon(vertices):
    grid = _monthly(np.zeros((1, 2, 3))).isel(time=0, drop=True)
    try:
        basin = cw.Basin.from_vertices(vertices, name="drawn")
        w = cw.coverage_weights(basin, grid)
    except cw.InputError as exc:  # degenerate outlines and basins off the grid are refused clearly
        assert "Fix: " in str(exc)
        return
    v = w.values
    assert np.all(np.isfinite(v)) and np.all((v >= 0.0) & (v <= 1.0))
    assert w.attrs["units"] == "1"


@given(values=st.lists(depth, min_size=2 * 4 * 6, max_size=2 * 4 * 6).map(lambda v: np.array(v).reshape(2, 4, 6)))
@SETTINGS
def test_conservative_regrid_keeps_the_area_weighted_total(values):
    lat = np.array([-31.75, -31.25, -30.75, -30.25])
    lon = np.array([-141.25, -140.75, -140.25, -139.75, -139.25, -138.75])
    src = xr.DataArray(
        values,
        dims=("time", "lat", "lon"),
        coords={"time": pd.date_range("2001-01-01", periods=2, freq="MS"), "lat": lat, "lon": lon},
        attrs={"units": "mm", "step": "month"},
        name="pr",
    )
    target = {"lat": np.array([-31.5, -30.5]), "lon": np.array([-141.0, -140.0, -139.0])}
    out = cw.regrid(src, target, method="conservative")
    total_in = (src * cw.cell_area(src)).sum(("lat", "lon"))
    total_out = (out * cw.cell_area(out)).sum(("lat", "lon"))
    np.testing.assert_allclose(total_out.values, total_in.values, rtol=1e-9, atol=1e-6)
    chunked = cw.regrid(src.chunk({"time": 1}), target, method="conservative")
    assert chunked.chunks is not None
    np.testing.assert_allclose(chunked.values, out.values, rtol=1e-12, equal_nan=True)


@given(values=monthly_fields(), months=seasons(), year_start=st.sampled_from([1, 10]))
@SETTINGS
def test_dask_and_numpy_inputs_give_the_same_numbers(values, months, year_start):
    pr = _monthly(values)
    lazy = pr.chunk({"time": 7, "lat": 1})
    pairs = [
        (cw.monthly_totals(pr), cw.monthly_totals(lazy)),
        (cw.annual_totals(pr, year_start), cw.annual_totals(lazy, year_start)),
    ]
    try:
        pairs.append(
            (
                cw.seasonal_fraction(pr, months, year_start=year_start, per_year=True),
                cw.seasonal_fraction(lazy, months, year_start=year_start, per_year=True),
            )
        )
    except cw.InputError:
        pass
    basin = cw.Basin.from_vertices([(-141.0, -31.0), (-140.0, -31.0), (-140.0, -30.2), (-141.0, -30.2)], name="b")
    pairs.append((cw.basin_mean(pr, basin), cw.basin_mean(lazy, basin)))
    for eager, dasked in pairs:
        assert dasked.chunks is not None, "a dask input must give a dask output"
        np.testing.assert_allclose(dasked.values, eager.values, rtol=1e-12, atol=1e-12, equal_nan=True)


@pytest.mark.parametrize("calendar", ["noleap", "360_day"])
def test_annual_totals_are_sums_of_months_on_cftime_calendars(calendar):
    time = xr.date_range(
        "2001-01-01", periods=730 if calendar == "noleap" else 720, freq="D", calendar=calendar, use_cftime=True
    )
    rng = np.random.default_rng(3)
    pr = xr.DataArray(
        rng.gamma(0.5, 4.0, (time.size, 2, 3)),
        dims=("time", "lat", "lon"),
        coords={"time": time, "lat": LAT, "lon": LON},
        attrs={"units": "mm", "step": "day"},
    )
    annual = cw.annual_totals(pr)
    monthly = cw.monthly_totals(pr)
    np.testing.assert_allclose(annual.values, monthly.groupby("time.year").sum("time").values, rtol=1e-12)
