"""open_precip on data the user already holds: xr.Dataset / xr.DataArray, CF names, members,
end-of-step stamps and any regular step.

Expected totals are hand-computed from constant rates over known steps (1 kg m-2 of water
= 1 mm; 86 400 s per day, 3 600 s per hour, SI Brochure) and the month lengths of the
Gregorian calendar (January 31 days, February 28 in a common year).
"""

import cftime
import dask.array
import numpy as np
import pandas as pd
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.errors import GridError, TimeAxisError, UnitsError, VariableError

from .conftest import checksum, write_cf


def _ds(times, data=None, *, units="kg m-2 s-1", names=("time", "lat", "lon"), time_attrs=None, extra=None):
    tn, yn, xn = names
    lat, lon = np.array([10.0, 10.5, 11.0]), np.array([20.0, 20.5, 21.0, 21.5])
    data = np.full((len(times), 3, 4), 1e-5) if data is None else data
    return xr.Dataset(
        {"precip": ((tn, yn, xn), data, {"units": units, "standard_name": "precipitation_flux", **(extra or {})})},
        coords={
            tn: (tn, times, time_attrs or {}),
            yn: (yn, lat, {"units": "degrees_north", "standard_name": "latitude"}),
            xn: (xn, lon, {"units": "degrees_east", "standard_name": "longitude"}),
        },
    )


# ---- xr.Dataset and xr.DataArray sources


@pytest.mark.parametrize("dasked", [False, True])
def test_dataset_in_hand_gives_the_same_as_the_file(tmp_path, dasked):
    path = write_cf(tmp_path / "a.nc", np.full((6, 3, 4), 2e-5), units="kg m-2 s-1", standard_name="precipitation_flux")
    from_file = cw.open_precip(path)
    ds = xr.open_dataset(path)
    if dasked:
        ds = ds.chunk({"time": 2})
    before = ds.copy(deep=True)
    from_obj = cw.open_precip(ds)
    assert isinstance(from_obj.data, dask.array.Array)
    xr.testing.assert_allclose(from_obj.drop_attrs(), from_file.drop_attrs())
    np.testing.assert_allclose(from_obj.values, 2e-5 * 86400.0)  # hand-computed: rate x seconds per day
    assert from_obj.attrs["units"] == "mm" and from_obj.attrs["step"] == "day"
    assert from_obj.attrs["sources"].startswith("the given Dataset")
    xr.testing.assert_identical(ds, before)  # the object is not modified (values, attrs, coords)


def test_dataarray_in_hand_with_cf_names_arrives_canonical():
    times = pd.date_range("2001-01-01", periods=4, freq="D")
    ds = _ds(times, names=("valid_time", "latitude", "longitude"))
    da = ds["precip"].isel(latitude=slice(None, None, -1))  # descending latitude, as many products
    attrs_before = dict(da.attrs)
    pr = cw.open_precip(da)
    assert pr.dims == ("time", "lat", "lon")
    assert np.all(np.diff(pr.lat.values) > 0)
    np.testing.assert_allclose(pr.values, 1e-5 * 86400.0)
    assert da.attrs == attrs_before and da.dims == ("valid_time", "latitude", "longitude")


def test_cf_detection_agrees_with_cf_xarray():
    """Outside check: cf-xarray's own reading of the same object names the same coordinates."""
    import cf_xarray  # noqa: F401

    from climwidgets.io.grid import find_coord

    times = pd.date_range("2001-01-01", periods=3, freq="D")
    ds = _ds(times, names=("valid_time", "latitude", "longitude"), time_attrs={"standard_name": "time"})
    da = ds["precip"]
    assert find_coord(ds, da, "lat") == ds.cf["latitude"].name == "latitude"
    assert find_coord(ds, da, "lon") == ds.cf["longitude"].name == "longitude"
    assert find_coord(ds, da, "time") == ds.cf["time"].name == "valid_time"
    # axis attributes only (no standard_name, no units on time)
    ds2 = xr.Dataset(
        {"rr": (("t", "y", "x"), np.ones((3, 2, 2)), {"units": "mm"})},
        coords={
            "t": ("t", times, {"axis": "T"}),
            "y": ("y", [1.0, 2.0], {"axis": "Y", "units": "degrees_north"}),
            "x": ("x", [1.0, 2.0], {"axis": "X", "units": "degrees_east"}),
        },
    )
    assert find_coord(ds2, ds2["rr"], "time") == ds2.cf.axes["T"][0] == "t"
    assert find_coord(ds2, ds2["rr"], "lat") == ds2.cf["latitude"].name == "y"
    pr = cw.open_precip(ds2)
    assert pr.dims == ("time", "lat", "lon")


def test_object_errors_name_the_object():
    times = pd.date_range("2001-01-01", periods=3, freq="D")
    ds = _ds(times)
    with pytest.raises(VariableError, match="the given Dataset.*has no variable 'rain'"):
        cw.open_precip(ds, var="rain")
    with pytest.raises(UnitsError, match="DataArray 'precip'.*no units attribute"):
        cw.open_precip(ds["precip"].drop_attrs())
    bad = ds.assign_coords(time=ds.time.values[::-1])
    with pytest.raises(TimeAxisError, match="go backwards"):
        cw.open_precip(bad)
    nogrid = xr.DataArray(
        np.ones((3, 2)), dims=("time", "station"), coords={"time": times}, name="pr", attrs={"units": "mm"}
    )
    with pytest.raises(GridError, match="no latitude/longitude.*grid_mapping"):
        cw.open_precip(nogrid)


# ---- ensemble members


@pytest.mark.parametrize("dim", ["member", "realization", "ensemble", "model"])
def test_member_dimension_is_kept_in_front(dim):
    times = pd.date_range("2001-01-01", periods=5, freq="D")
    rates = np.arange(1, 4)[:, None, None, None] * np.full((3, 5, 3, 4), 1e-5)
    ds = _ds(times).drop_vars("precip")
    ds["precip"] = ((dim, "time", "lat", "lon"), rates, {"units": "kg m-2 s-1"})
    ds = ds.assign_coords({dim: [f"m{i}" for i in range(3)]})
    pr = cw.open_precip(ds)
    assert pr.dims == (dim, "time", "lat", "lon") and list(pr[dim].values) == ["m0", "m1", "m2"]
    for i in range(3):  # per-member result equals the member opened on its own
        alone = cw.open_precip(ds.isel({dim: i}, drop=True))
        np.testing.assert_allclose(pr.isel({dim: i}).values, alone.values)
        np.testing.assert_allclose(alone.values, (i + 1) * 1e-5 * 86400.0)


def test_member_file_opens_and_other_extra_dims_are_refused(tmp_path):
    times = pd.date_range("2001-01-01", periods=4, freq="D")
    ds = _ds(times).drop_vars("precip")
    ds["precip"] = (("realization", "time", "lat", "lon"), np.full((2, 4, 3, 4), 1e-5), {"units": "kg m-2 s-1"})
    ds.to_netcdf(tmp_path / "ens.nc")
    before = checksum(tmp_path / "ens.nc")
    pr = cw.open_precip(tmp_path / "ens.nc")
    assert pr.sizes["realization"] == 2
    assert checksum(tmp_path / "ens.nc") == before
    other = ds.rename(realization="level")
    with pytest.raises(GridError, match="extra dimension 'level'.*rename it to 'member'"):
        cw.open_precip(other)


# ---- monthly stamps at the end of each month (time = upper bound of time_bnds)


def _monthly_end_stamped(tmp_path, with_bounds=True):
    starts = [cftime.DatetimeGregorian(1991, m, 1) for m in range(1, 13)] + [cftime.DatetimeGregorian(1992, 1, 1)]
    num = cftime.date2num(starts, "days since 1991-01-01", "standard")
    ends = num[1:]
    ds = xr.Dataset(
        {"pr": (("time", "lat", "lon"), np.full((12, 2, 2), 1.0), {"units": "mm/day"})},
        coords={
            "time": ("time", ends, {"units": "days since 1991-01-01", "calendar": "standard"}),
            "lat": ("lat", [1.0, 2.0], {"units": "degrees_north"}),
            "lon": ("lon", [1.0, 2.0], {"units": "degrees_east"}),
        },
    )
    if with_bounds:
        ds["time_bnds"] = (("time", "nv"), np.stack([num[:-1], ends], axis=1))
        ds["time"].attrs["bounds"] = "time_bnds"
    path = tmp_path / "monthly_end.nc"
    ds.to_netcdf(path)
    return path


def test_end_of_month_stamps_with_bounds_are_relabelled(tmp_path):
    path = _monthly_end_stamped(tmp_path)
    before = checksum(path)
    pr = cw.open_precip(path)
    assert pr.attrs["step"] == "month" and "relabelled" in pr.attrs["time_labels"]
    assert str(pr.time.values[0])[:10] == "1991-01-01"  # the first year is kept
    # hand-computed: 1 mm/day over the Gregorian months of 1991
    np.testing.assert_allclose(pr.isel(lat=0, lon=0).values, [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
    annual = cw.annual_totals(pr)
    assert list(annual.year.values) == [1991] and float(annual.isel(year=0, lat=0, lon=0)) == 365.0
    assert checksum(path) == before


# ---- any regular step


@pytest.mark.parametrize("hours", [3, 6])
def test_three_and_six_hourly_rates_are_exact(hours):
    times = pd.date_range("2001-01-01", "2001-02-28 23:00", freq=f"{hours}h")
    ds = _ds(times, np.full((times.size, 3, 4), 1.0), units="mm/h")
    pr = cw.open_precip(ds)
    assert pr.attrs["step"] == f"{hours}hour"
    np.testing.assert_allclose(pr.values, float(hours))  # 1 mm/h x the step in hours
    monthly = cw.monthly_totals(pr)
    np.testing.assert_allclose(monthly.isel(lat=0, lon=0).values, [31 * 24.0, 28 * 24.0])
    amax = cw.annual_maxima(pr, duration_hours=24, min_valid_fraction=0.1)
    np.testing.assert_allclose(amax.isel(lat=0, lon=0).values, 24.0)


def test_six_hourly_accumulations_with_bounds_at_the_end(tmp_path):
    # 6-hour accumulations stamped at the end of each interval: 2001-01-31 06:00 .. 2001-02-02 00:00
    start = cftime.date2num(cftime.DatetimeGregorian(2001, 1, 31), "hours since 2001-01-01", "standard")
    ends = start + 6.0 * np.arange(1, 9)
    ds = xr.Dataset(
        {"tp": (("time", "lat", "lon"), np.full((8, 2, 2), 0.002), {"units": "m"})},
        coords={
            "time": ("time", ends, {"units": "hours since 2001-01-01", "bounds": "time_bnds"}),
            "lat": ("lat", [1.0, 2.0], {"units": "degrees_north"}),
            "lon": ("lon", [1.0, 2.0], {"units": "degrees_east"}),
        },
    )
    ds["time_bnds"] = (("time", "nv"), np.stack([ends - 6, ends], axis=1))
    ds.to_netcdf(tmp_path / "six.nc")
    pr = cw.open_precip(tmp_path / "six.nc")
    assert pr.attrs["step"] == "6hour" and str(pr.time.values[0])[:13] == "2001-01-31T00"
    jan31 = pr.sel(time=slice("2001-01-31", "2001-01-31T23:59")).sum("time")
    np.testing.assert_allclose(jan31.values, 4 * 2.0)  # four 6-hour steps of 0.002 m = 2 mm


@pytest.mark.parametrize("minutes", [30, 10, 1])
def test_subhourly_rates_are_summed_to_hourly_totals(minutes):
    times = pd.date_range("2001-01-01 00:00", "2001-01-01 05:59", freq=f"{minutes}min")
    ds = _ds(times, np.full((times.size, 3, 4), 2.0), units="mm/h")
    pr = cw.open_precip(ds)
    assert pr.attrs["step"] == "hour" and pr.attrs["native_step"] == f"{minutes}min"
    assert pr.sizes["time"] == 6
    np.testing.assert_allclose(pr.values, 2.0)  # 2 mm/h for a whole hour = 2 mm


def test_subhourly_partial_hour_is_missing_not_short():
    times = pd.date_range("2001-01-01 00:30", "2001-01-01 02:59", freq="30min")  # starts mid-hour
    ds = _ds(times, np.full((times.size, 3, 4), 1.0), units="mm")
    pr = cw.open_precip(ds)
    assert np.isnan(pr.isel(time=0)).all()  # 00:00-01:00 lacks its first half hour
    np.testing.assert_allclose(pr.isel(time=slice(1, None)).values, 2.0)


def test_step_that_does_not_divide_a_day_is_refused():
    times = pd.date_range("2001-01-01", periods=5, freq="5D")
    with pytest.raises(TimeAxisError, match="time step of about 120 hours.*divide a day"):
        cw.open_precip(_ds(times))


def test_elevation_from_a_dataarray_in_feet():
    z = xr.DataArray(
        np.full((3, 4), 1000.0),
        dims=("latitude", "longitude"),
        name="orog",
        coords={
            "latitude": ("latitude", [10.0, 10.5, 11.0], {"standard_name": "latitude"}),
            "longitude": ("longitude", [20.0, 20.5, 21.0, 21.5], {"standard_name": "longitude"}),
        },
        attrs={"units": "ft"},
    )
    elev = cw.open_elevation(z)
    assert elev.dims == ("lat", "lon")
    np.testing.assert_allclose(elev.values, 304.8)  # international foot = 0.3048 m exactly


def test_info_lists_members_and_native_step():
    from climwidgets.io.info import describe

    times = pd.date_range("2001-01-01", periods=48, freq="30min")
    ds = _ds(times, np.full((48, 3, 4), 1.0), units="mm").drop_vars("precip")
    ds["precip"] = (("member", "time", "lat", "lon"), np.ones((2, 48, 3, 4)), {"units": "mm"})
    text = describe(ds.assign_coords(member=["a", "b"]))
    assert "native step:  30min" in text and "member:       2 (a, b)" in text


def test_unnamed_dask_dataarray_and_chunks_asked_for():
    times = pd.date_range("2001-01-01", periods=10, freq="D")
    da = _ds(times)["precip"].rename(None).chunk({"time": 5})
    pr = cw.open_precip(da)
    assert pr.attrs["original_variable"] == "pr" and pr.chunks[0] == (5, 5)
    assert cw.open_precip(da, chunks={"time": 2}).chunks[0] == (2,) * 5


def test_subhourly_stamps_off_the_step_grid_are_refused():
    times = pd.date_range("2001-01-01 00:10", periods=12, freq="30min")  # 00:10, 00:40, ...
    with pytest.raises(
        TimeAxisError, match="the given Dataset.*30min stamps that are not whole multiples.*resample to hourly"
    ):
        cw.open_precip(_ds(times, np.ones((12, 3, 4)), units="mm"))


def test_one_cell_object_needs_bounds_and_keeps_them_when_reopened():
    time = pd.date_range("2001-01-01", periods=4, freq="D")
    bare = xr.DataArray(
        np.ones((4, 1, 1)),
        dims=("time", "lat", "lon"),
        coords={"time": time, "lat": [10.5], "lon": [-160.5]},
        attrs={"units": "mm"},
        name="pr",
    )
    with pytest.raises(cw.InputError, match="single latitude"):
        cw.open_precip(bare)
    edged = bare.assign_coords(
        lat_lower=("lat", [10.0]), lat_upper=("lat", [11.0]), lon_lower=("lon", [-161.0]), lon_upper=("lon", [-160.0])
    )
    pr = cw.open_precip(edged)
    again = cw.open_precip(pr)  # an opened one-cell grid opens again with its own bounds
    for p in (pr, again):
        assert (p.lat_lower.item(), p.lat_upper.item(), p.lon_lower.item(), p.lon_upper.item()) == (
            10.0,
            11.0,
            -161.0,
            -160.0,
        )
