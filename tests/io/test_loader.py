"""open_precip / open_elevation on small files made here.

Expected totals are computed by hand from the unit definitions (1 kg m-2 of water = 1 mm;
86 400 s per day, SI Brochure) and the month lengths of each CF calendar (CF conventions,
section 4.4.1 "Calendar": noleap has no 29 February, all_leap always has it, 360_day has
twelve 30-day months, julian has a leap year every fourth year — from memory).
"""

import glob

import cftime
import dask.array
import numpy as np
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.errors import (
    CalendarError,
    DataValueError,
    GridError,
    MismatchError,
    SourceError,
    TimeAxisError,
    UnitsError,
    VariableError,
)

from .conftest import checksum, write_cf

DAY = 86400.0


def test_daily_flux_to_mm_per_day(tmp_path):
    path = write_cf(tmp_path / "a.nc", np.full((5, 3, 4), 2e-5), units="kg m-2 s-1", standard_name="precipitation_flux")
    before = checksum(path)
    pr = cw.open_precip(path)
    assert isinstance(pr.data, dask.array.Array)
    assert pr.attrs["units"] == "mm" and pr.attrs["step"] == "day"
    np.testing.assert_allclose(pr.values, 2e-5 * DAY, rtol=1e-12)
    assert pr.attrs["original_units"] == "kg m-2 s-1" and "86400" in pr.attrs["conversion"]
    assert "open_precip" in pr.attrs["history"]
    assert checksum(path) == before  # the input is never modified


@pytest.mark.parametrize(
    "units,factor",
    [
        ("mm", 1.0),
        ("mm/day", 1.0),
        ("mm d-1", 1.0),
        ("mm day-1", 1.0),
        ("mm/d", 1.0),
        ("mm/h", 24.0),
        ("mm/s", DAY),
        ("cm", 10.0),
        ("m", 1000.0),
        ("m/s", 1000 * DAY),
        ("m/day", 1000.0),
        ("in", 25.4),
        ("in/day", 25.4),
        ("kg m-2", 1.0),
        ("kg m-2 d-1", 1.0),
        ("kg m-2 s-1", DAY),
    ],
)
def test_every_unit_spelling_daily(tmp_path, units, factor):
    # 5 mm per day in every spelling (a plausible depth, so the depth bound does not apply)
    path = write_cf(tmp_path / "u.nc", np.full((4, 3, 4), 5.0 / factor), units=units, standard_name=None)
    pr = cw.open_precip(path, var="pr")
    np.testing.assert_allclose(pr.values, 5.0, rtol=1e-12)


@pytest.mark.parametrize(
    "calendar,feb_days,year",
    [
        ("noleap", 28, 2000),
        ("365_day", 28, 2000),
        ("all_leap", 29, 2001),
        ("366_day", 29, 2001),
        ("360_day", 30, 2001),
        ("standard", 29, 2000),
        ("gregorian", 28, 2001),
        ("proleptic_gregorian", 29, 2000),
        ("julian", 29, 1900),
    ],
)
def test_monthly_mean_flux_uses_calendar_month_length(tmp_path, calendar, feb_days, year):
    # A constant 1e-4 kg m-2 s-1 monthly mean in February is feb_days x 8.64 mm.
    path = write_cf(
        tmp_path / "m.nc",
        np.full((3, 3, 4), 1e-4),
        units="kg m-2 s-1",
        freq="MS",
        start=f"{year}-01-01",
        calendar=calendar,
        standard_name="precipitation_flux",
    )
    pr = cw.open_precip(path)
    assert pr.attrs["step"] == "month"
    jan_days = 30 if calendar == "360_day" else 31
    np.testing.assert_allclose(pr.isel(time=0).values, jan_days * DAY * 1e-4, rtol=1e-12)
    np.testing.assert_allclose(pr.isel(time=1).values, feb_days * DAY * 1e-4, rtol=1e-12)
    assert pr.attrs["calendar"] in (
        calendar,
        "standard",
        "gregorian",
        "proleptic_gregorian",
        "noleap",
        "all_leap",
        "360_day",
        "julian",
        "365_day",
        "366_day",
    )


def test_monthly_labels_are_month_starts(tmp_path):
    mid = cftime.date2num([cftime.DatetimeNoLeap(2001, m, 15) for m in (1, 2, 3)], "days since 1900-01-01", "noleap")
    path = write_cf(tmp_path / "m.nc", np.ones((3, 3, 4)), units="mm", time_values=mid, calendar="noleap")
    pr = cw.open_precip(path)
    assert [t.day for t in pr.time.values] == [1, 1, 1]


def test_hourly_stays_hourly(tmp_path):
    path = write_cf(tmp_path / "h.nc", np.full((48, 3, 4), 0.1), units="mm/h", freq="h")
    pr = cw.open_precip(path)
    assert pr.attrs["step"] == "hour" and pr.sizes["time"] == 48
    np.testing.assert_allclose(pr.values, 0.1)


def test_lon_0_360_and_descending_lat_are_normalised(tmp_path):
    lon = np.arange(0.0, 360.0, 60.0)  # 0, 60, ..., 300
    lat = np.array([30.0, 0.0, -30.0])
    data = np.arange(5 * 3 * 6, dtype=float).reshape(5, 3, 6)
    path = write_cf(tmp_path / "g.nc", data, lat=lat, lon=lon)
    pr = cw.open_precip(path)
    assert list(pr.lat.values) == [-30.0, 0.0, 30.0]
    assert list(pr.lon.values) == [-180.0, -120.0, -60.0, 0.0, 60.0, 120.0]
    # value at (lat=30, lon=300) in the file is at (lat=30, lon=-60) after normalisation
    assert pr.sel(lat=30.0, lon=-60.0).isel(time=2).values.item() == data[2, 0, 5]
    np.testing.assert_allclose(pr.lon_lower.values, pr.lon.values - 30.0)
    np.testing.assert_allclose(pr.lat_upper.values, pr.lat.values + 15.0)
    assert pr.attrs["cell_bounds"] == "file"


def test_bounds_are_inferred_when_absent(tmp_path):
    path = write_cf(tmp_path / "g.nc", bounds=False)
    pr = cw.open_precip(path)
    np.testing.assert_allclose(pr.lat_lower.values, [9.75, 10.25, 10.75])
    assert pr.attrs["cell_bounds"].startswith("inferred")


def test_curvilinear_grid_is_kept(tmp_path):
    y, x = np.arange(3), np.arange(4)
    lat2d = 40 + 0.1 * y[:, None] + 0.01 * x[None, :]
    lon2d = -30 + 0.1 * x[None, :] - 0.02 * y[:, None]
    ds = xr.Dataset(
        {"precip": (("time", "y", "x"), np.ones((6, 3, 4)), {"units": "mm/day", "coordinates": "lat lon"})},
        coords={
            "time": ("time", np.arange(6.0), {"units": "days since 2000-01-01"}),
            "lat": (("y", "x"), lat2d, {"units": "degrees_north", "standard_name": "latitude"}),
            "lon": (("y", "x"), lon2d, {"units": "degrees_east", "standard_name": "longitude"}),
        },
    )
    path = tmp_path / "c.nc"
    ds.to_netcdf(path)
    pr = cw.open_precip(path)
    assert pr.dims == ("time", "y", "x") and pr["lat"].dims == ("y", "x")
    np.testing.assert_allclose(pr["lon"].values, lon2d)


def test_glob_and_list_combine_along_time(tmp_path):
    write_cf(tmp_path / "pr_2001.nc", np.full((365, 3, 4), 1.0), start="2001-01-01")
    write_cf(tmp_path / "pr_2000.nc", np.full((366, 3, 4), 2.0), start="2000-01-01")
    pr = cw.open_precip(str(tmp_path / "pr_*.nc"))
    assert pr.sizes["time"] == 731
    assert float(pr.isel(time=0).mean()) == 2.0 and float(pr.isel(time=-1).mean()) == 1.0
    pr2 = cw.open_precip(sorted(glob.glob(str(tmp_path / "pr_*.nc"))))
    xr.testing.assert_identical(pr.drop_attrs(), pr2.drop_attrs())


def test_zarr_store(tmp_path):
    nc = write_cf(tmp_path / "z.nc", np.full((10, 3, 4), 3.0), units="mm")
    xr.open_dataset(nc).to_zarr(tmp_path / "z.zarr", consolidated=False)
    pr = cw.open_precip(tmp_path / "z.zarr")
    np.testing.assert_allclose(pr.values, 3.0)


def test_on_disk_chunks_are_followed(tmp_path):
    path = write_cf(tmp_path / "c.nc", np.ones((40, 3, 4)), encoding={"pr": {"chunksizes": (1, 3, 4), "zlib": True}})
    pr = cw.open_precip(path)
    # (1, ny, nx) on disk: dask chunks group whole stored fields along time, never split space
    assert pr.chunks[1] == (3,) and pr.chunks[2] == (4,)
    assert pr.chunks[0] == (40,)


def test_gap_in_time_is_filled_with_missing(tmp_path):
    t = np.array([0, 1, 2, 5, 6], float)  # days 3 and 4 absent
    path = write_cf(tmp_path / "g.nc", np.ones((5, 3, 4)), time_values=t)
    pr = cw.open_precip(path)
    assert pr.sizes["time"] == 7 and pr.attrs["time_gaps_filled_with_missing"] == 2
    assert np.isnan(pr.isel(time=3).values).all()


def test_elevation_in_feet(tmp_path):
    ds = xr.Dataset(
        {"orog": (("lat", "lon"), np.full((3, 4), 1000.0), {"units": "ft", "standard_name": "surface_altitude"})},
        coords={
            "lat": ("lat", [1.0, 2.0, 3.0], {"units": "degrees_north"}),
            "lon": ("lon", [1.0, 2.0, 3.0, 4.0], {"units": "degrees_east"}),
        },
    )
    ds.to_netcdf(tmp_path / "e.nc")
    elev = cw.open_elevation(tmp_path / "e.nc")
    np.testing.assert_allclose(elev.values, 304.8)  # 1 ft = 0.3048 m exactly (international foot)
    assert elev.attrs["units"] == "m"


def test_small_negative_noise_is_clipped_large_negative_is_an_error(tmp_path):
    data = np.ones((5, 3, 4))
    data[1, 1, 1] = -0.001
    pr = cw.open_precip(write_cf(tmp_path / "n1.nc", data))
    assert pr.isel(time=1, lat=1, lon=1).values.item() == 0.0
    data[2, 0, 3] = -5.0
    path = write_cf(tmp_path / "n2.nc", data)
    with pytest.raises(DataValueError) as err:
        cw.open_precip(path)
    assert "1 negative value" in str(err.value) and "n2.nc" in str(err.value) and "lon=21.5" in str(err.value)


# ---------------------------------------------------------------- errors, message content


def test_error_no_precipitation_variable_lists_candidates(tmp_path):
    path = write_cf(tmp_path / "t.nc", name="tas", units="K", standard_name="air_temperature")
    with pytest.raises(VariableError) as err:
        cw.open_precip(path)
    msg = str(err.value)
    assert "t.nc" in msg and "tas" in msg and "air_temperature" in msg and "var=" in msg


def test_error_missing_units(tmp_path):
    path = write_cf(tmp_path / "nu.nc", units=None, standard_name="precipitation_flux")
    with pytest.raises(UnitsError, match="no units attribute"):
        cw.open_precip(path)


def test_error_unknown_units(tmp_path):
    path = write_cf(tmp_path / "uu.nc", units="buckets", standard_name="precipitation_amount")
    with pytest.raises(UnitsError) as err:
        cw.open_precip(path)
    assert "buckets" in str(err.value) and "uu.nc" in str(err.value)


def test_error_unsupported_calendar(tmp_path):
    path = write_cf(tmp_path / "cal.nc")
    ds = xr.open_dataset(path, decode_times=False).load()
    ds.time.attrs["calendar"] = "lunar"
    ds.to_netcdf(tmp_path / "cal2.nc")
    with pytest.raises(CalendarError, match="lunar"):
        cw.open_precip(tmp_path / "cal2.nc")


@pytest.mark.parametrize("t,word", [([0, 1, 1, 2], "duplicated"), ([0, 2, 1, 3], "backwards")])
def test_error_bad_time_order(tmp_path, t, word):
    path = write_cf(tmp_path / "t.nc", np.ones((4, 3, 4)), time_values=t)
    with pytest.raises(TimeAxisError, match=word):
        cw.open_precip(path)


def test_error_missing_lat_lon(tmp_path):
    ds = xr.Dataset(
        {"pr": (("time", "a", "b"), np.ones((3, 2, 2)), {"units": "mm"})},
        coords={"time": ("time", [0.0, 1, 2], {"units": "days since 2000-01-01"})},
    )
    ds.to_netcdf(tmp_path / "nolat.nc")
    with pytest.raises(GridError, match="no latitude/longitude"):
        cw.open_precip(tmp_path / "nolat.nc")


def test_error_all_missing(tmp_path):
    path = write_cf(tmp_path / "nan.nc", np.full((4, 3, 4), np.nan))
    with pytest.raises(DataValueError, match="all missing"):
        cw.open_precip(path)


def test_error_mixed_units_and_grids_in_glob(tmp_path):
    write_cf(tmp_path / "a_2000.nc", start="2000-01-01", units="mm")
    write_cf(tmp_path / "a_2001.nc", start="2001-01-01", units="kg m-2 s-1")
    with pytest.raises(MismatchError, match="units"):
        cw.open_precip(str(tmp_path / "a_*.nc"))
    write_cf(tmp_path / "b_2000.nc", start="2000-01-01")
    write_cf(tmp_path / "b_2001.nc", start="2001-01-01", lat=(10.0, 10.25, 10.5))
    with pytest.raises(MismatchError, match="different grid"):
        cw.open_precip(str(tmp_path / "b_*.nc"))


def test_error_truncated_and_non_netcdf_files(tmp_path):
    good = write_cf(tmp_path / "good.nc", np.ones((50, 3, 4)))
    raw = open(good, "rb").read()
    (tmp_path / "cut.nc").write_bytes(raw[: len(raw) // 3])
    (tmp_path / "text.nc").write_text("this is not a NetCDF file\n")
    for name in ("cut.nc", "text.nc"):
        before = checksum(tmp_path / name)
        with pytest.raises(SourceError) as err:
            cw.open_precip(tmp_path / name)
        assert name in str(err.value) and "truncated" in str(err.value)
        assert checksum(tmp_path / name) == before


def test_error_empty_glob_and_missing_file(tmp_path):
    with pytest.raises(SourceError, match="matches no files"):
        cw.open_precip(str(tmp_path / "nothing_*.nc"))
    with pytest.raises(SourceError, match="does not exist"):
        cw.open_precip(tmp_path / "absent.nc")


def test_input_error_is_value_error():
    assert issubclass(cw.InputError, ValueError)


def test_end_of_hour_stamps_with_bounds_are_relabelled_to_the_start(tmp_path):
    # 48 hourly accumulations for 2001-01-31 00:00 .. 2001-02-02 00:00, stamped at the end of
    # each hour (CF time bounds [start, end]); January 31 must hold 24 hours, not 23.
    start = cftime.date2num(cftime.DatetimeGregorian(2001, 1, 31), "hours since 2001-01-01", "standard")
    ends = start + np.arange(1, 49, dtype=float)
    ds = xr.Dataset(
        {
            "pr": (
                ("time", "lat", "lon"),
                np.ones((48, 2, 2)),
                {"units": "mm", "standard_name": "precipitation_amount"},
            ),
            "time_bnds": (("time", "nv"), np.stack([ends - 1, ends], axis=1)),
        },
        coords={
            "time": ("time", ends, {"units": "hours since 2001-01-01", "calendar": "standard", "bounds": "time_bnds"}),
            "lat": ("lat", [1.0, 2.0], {"units": "degrees_north"}),
            "lon": ("lon", [1.0, 2.0], {"units": "degrees_east"}),
        },
    )
    ds.to_netcdf(tmp_path / "h.nc")
    pr = cw.open_precip(tmp_path / "h.nc")
    assert pr.attrs["step"] == "hour" and "relabelled" in pr.attrs["time_labels"]
    assert str(pr.time.values[0])[:19] == "2001-01-31T00:00:00"
    jan = pr.sel(time=slice("2001-01-31", "2001-01-31T23:59")).sum("time")
    np.testing.assert_allclose(jan.values, 24.0)


def test_error_glob_mixing_daily_and_monthly_names_both_files(tmp_path):
    # A daily file and a monthly file are two products, never one daily record.
    write_cf(tmp_path / "m_2000.nc", start="2000-01-01", freq="D", periods=40)
    write_cf(tmp_path / "m_2001.nc", start="2001-01-01", freq="MS", periods=12)
    with pytest.raises(MismatchError, match="has month steps but .*m_2000.nc has day steps") as err:
        cw.open_precip(str(tmp_path / "m_*.nc"))
    assert "m_2001.nc" in str(err.value)


def test_error_two_copies_in_a_glob_say_same_times(tmp_path):
    a = write_cf(tmp_path / "c_2000.nc", start="2000-01-01")
    (tmp_path / "c_2000_copy.nc").write_bytes(open(a, "rb").read())
    with pytest.raises(MismatchError, match="the same times appear in two files") as err:
        cw.open_precip(str(tmp_path / "c_*.nc"))
    assert "c_2000.nc" in str(err.value) and "c_2000_copy.nc" in str(err.value)


def test_error_nan_time_stamp_is_named(tmp_path):
    times = np.arange(10.0) + 36525.0
    times[4] = np.nan
    write_cf(tmp_path / "n.nc", time_values=times, bounds=False)
    with pytest.raises(cw.InputError) as err:
        cw.open_precip(str(tmp_path / "n.nc"))
    msg = str(err.value)
    assert "n.nc" in msg and "missing (NaN)" in msg and "nan hours" not in msg


# ------------------------------------------------------------------ plausible depths
def test_default_depth_bound_is_above_the_world_records():
    from climwidgets.io.values import default_max_depth

    # world-record point rainfalls (WMO World Weather and Climate Extremes Archive; from memory):
    # 305 mm in 42 minutes (Holt, Missouri, 1947), 1825 mm in 24 hours (Foc-Foc, La Reunion,
    # 1966), 9300 mm in a month (Cherrapunji, July 1861)
    assert default_max_depth(3600.0) > 305.0
    assert default_max_depth(86400.0) > 1825.0
    assert default_max_depth(31 * 86400.0) > 9300.0
    assert default_max_depth(86400.0) < 10_000.0  # a rate in mm/s read as 1 mm/day is still refused


def _with_undeclared_fill(tmp_path, name="d.nc", value=1e20):
    data = np.full((6, 3, 4), 2.0)
    data[4, 1, 2] = value  # missing stored as 1e20 while the file declares -9999
    return write_cf(
        tmp_path / name, data, encoding={"pr": {"_FillValue": -9999.0, "zlib": True, "chunksizes": (2, 3, 4)}}
    )


@pytest.mark.parametrize("validate", ["auto", False])
def test_implausible_depth_is_refused_naming_the_file_and_the_place(tmp_path, validate):
    path = _with_undeclared_fill(tmp_path)
    before = checksum(path)
    with pytest.raises(DataValueError, match="above the plausible") as err:
        cw.open_precip(path, validate=validate).load()
    text = str(err.value)
    assert "d.nc" in text and "time=2001-01-05" in text and "lat=10.5" in text and "lon=21.0" in text
    assert "max_depth_mm" in text and err.value.__cause__ is None
    assert checksum(path) == before


def test_depth_bound_is_configurable_and_can_be_turned_off(tmp_path):
    path = _with_undeclared_fill(tmp_path, value=5000.0)
    with pytest.raises(DataValueError, match="above the plausible"):
        cw.open_precip(path).load()
    assert float(cw.open_precip(path, max_depth_mm=6000).max()) == 5000.0
    assert float(cw.open_precip(path, max_depth_mm=None).max()) == 5000.0
    with pytest.raises(DataValueError, match="above the plausible 100 mm"):
        cw.open_precip(path, max_depth_mm=100).load()
    with pytest.raises(cw.InputError, match="max_depth_mm"):
        cw.open_precip(path, max_depth_mm=-1)


def test_depth_bound_is_checked_as_chunks_are_read_without_an_extra_pass(tmp_path, monkeypatch):
    """validate=False: opening reads nothing; the bound is checked inside the conversion task."""
    from climwidgets.io import values

    path = _with_undeclared_fill(tmp_path)
    calls = []
    original = values.check_depth_bound
    monkeypatch.setattr(values, "check_depth_bound", lambda *a, **k: (calls.append(1), original(*a, **k)))
    pr = cw.open_precip(path, validate=False, chunks={"time": 2})
    assert calls == []
    assert float(pr.isel(time=slice(0, 2)).max()) == 2.0  # a chunk below the bound: no exact check at all
    assert calls == []
    with pytest.raises(DataValueError, match="above the plausible"):
        pr.load()
    assert len(calls) == 1  # only the chunk whose stored maximum passes the bound is looked at


def test_depth_bound_holds_on_the_fused_climatology_path(tmp_path):
    data = np.full((730, 3, 4), 2.0)
    data[400, 0, 1] = 1e20
    path = write_cf(
        tmp_path / "two_years.nc",
        data,
        encoding={"pr": {"_FillValue": -9999.0, "zlib": True, "chunksizes": (73, 3, 4)}},
    )
    pr = cw.open_precip(path, validate=False)
    with pytest.raises(DataValueError, match="above the plausible") as err:
        cw.climatology_bundle(pr).compute()
    assert "two_years.nc" in str(err.value)


# ------------------------------------------------------------------ declared sizes
def test_too_many_chunks_are_refused_before_the_graph_is_built(tmp_path, monkeypatch):
    from climwidgets.io import extent

    path = write_cf(tmp_path / "c.nc", np.ones((40, 3, 4)))
    monkeypatch.setattr(extent, "MAX_CHUNKS", 100)
    with pytest.raises(GridError, match="480 chunks of 1 x 1 x 1") as err:
        cw.open_precip(path, chunks={"time": 1, "lat": 1, "lon": 1})
    assert "c.nc" in str(err.value) and "larger chunks" in str(err.value)
    assert cw.open_precip(path, chunks={"time": 10}).data.npartitions == 4


def test_declared_time_steps_are_bounded(tmp_path, monkeypatch):
    from climwidgets.io import extent

    path = write_cf(tmp_path / "t.nc", np.ones((40, 3, 4)))
    monkeypatch.setattr(extent, "MAX_TIME_STEPS", 30)
    with pytest.raises(GridError, match="declares 40 time steps"):
        cw.open_precip(path)


def test_depth_bound_in_a_glob_names_the_file_the_value_came_from(tmp_path):
    for i, start in enumerate(("2001-01-01", "2001-01-07", "2001-01-13")):
        data = np.full((6, 3, 4), 2.0)
        if i == 1:
            data[3, 0, 0] = 1e20
        write_cf(tmp_path / f"pr_{i}.nc", data, start=start, encoding={"pr": {"_FillValue": -9999.0}})
    with pytest.raises(DataValueError, match="above the plausible") as err:
        cw.open_precip(str(tmp_path / "pr_*.nc")).load()
    assert str(err.value).startswith(str(tmp_path / "pr_1.nc")) and "time=2001-01-10" in str(err.value)
