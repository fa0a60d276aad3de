"""A corpus of malformed and awkward precipitation inputs, made by our own code.

Each :class:`Case` builds its input in a folder and states what ``cw.open_precip`` must do
with it: open it with the stated values (:class:`Opens`) or raise a ``cw.InputError``
subclass whose message names the file and the problem and suggests a fix
(:class:`Raises`).  Nothing here is committed as binary: ``build_corpus(folder)`` writes
every file on demand (the tests call it once per session into a temporary folder).

Run ``python -m tests.corpus.make_corpus OUT`` to write the corpus somewhere and print
the table used in ``tests/corpus/README.md``.

Coordinates are invented open-ocean points; values are small integers so that expected
depths are exact.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

import cftime
import numpy as np
import xarray as xr

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

LAT = np.array([-31.0, -30.5, -30.0])
LON = np.array([-141.0, -140.5, -140.0, -139.5])
TIME_UNITS = "days since 2001-01-01"
HUGE_SHAPE = (4000, 500, 500)  # 1e9 float32 values: 4 GB logical, a few kB of real disk


def field_values(nt, ny=LAT.size, nx=LON.size):
    """Values that tell every cell and step apart: t + 0.1*y + 0.01*x, in mm."""
    t, y, x = np.meshgrid(np.arange(nt), np.arange(ny), np.arange(nx), indexing="ij")
    return (t + 0.1 * y + 0.01 * x).astype(float)


def _dataset(
    data,
    *,
    name="pr",
    units="mm",
    standard_name="precipitation_amount",
    time=None,
    time_units=TIME_UNITS,
    calendar="standard",
    lat=LAT,
    lon=LON,
    dims=("time", "lat", "lon"),
    coord_names=None,
    attrs=None,
):
    nt = data.shape[0]
    time = np.arange(nt, dtype=float) if time is None else np.asarray(time, dtype=float)
    tn, yn, xn = coord_names or dims
    var_attrs = {} if units is None else {"units": units}
    if standard_name:
        var_attrs["standard_name"] = standard_name
    var_attrs.update(attrs or {})
    return xr.Dataset(
        {name: (dims, data, var_attrs)},
        coords={
            tn: (dims[0], time, {"units": time_units, "calendar": calendar, "standard_name": "time"}),
            yn: (dims[1], np.asarray(lat, float), {"units": "degrees_north", "standard_name": "latitude"}),
            xn: (dims[2], np.asarray(lon, float), {"units": "degrees_east", "standard_name": "longitude"}),
        },
        attrs={"Conventions": "CF-1.10"},
    )


def _write(ds, path, fmt="NETCDF4", encoding=None, **kw):
    ds.to_netcdf(path, format=fmt, encoding=encoding or {}, **kw)
    return str(path)


def _no_fill(ds):
    """Encoding that writes no _FillValue at all (xarray adds NaN for floats by default)."""
    return {n: {"_FillValue": None} for n in ds.variables}


# ---------------------------------------------------------------- expectations
@dataclass
class Opens:
    """The file opens; ``check(pr)`` asserts the values (raises AssertionError otherwise)."""

    check: Callable
    note: str


@dataclass
class Raises:
    """The file is refused with ``error``; its message holds every word in ``words``."""

    error: type
    words: tuple
    note: str


@dataclass
class Case:
    name: str
    what: str
    build: Callable  # build(folder: Path) -> source passed to open_precip
    expect: object
    files: list = field(default_factory=list)  # filled by build_corpus: paths to checksum


# ---------------------------------------------------------------- builders
def b_no_units(d):
    ds = _dataset(field_values(5), units=None)
    return _write(ds, d / "no_units.nc")


def b_unknown_units(d):
    return _write(_dataset(field_values(5), units="furlongs/fortnight"), d / "unknown_units.nc")


def b_units_on_wrong_variable(d):
    ds = _dataset(field_values(5), units=None, standard_name=None)
    ds["pr_spread"] = (("time", "lat", "lon"), np.ones((5, 3, 4)), {"units": "mm", "long_name": "ensemble spread"})
    return _write(ds, d / "units_on_wrong_variable.nc")


def b_packed_int16(d):
    data = field_values(6)
    data[2, 1, 1] = np.nan
    ds = _dataset(data)
    enc = {
        "pr": {
            "dtype": "int16",
            "scale_factor": 0.01,
            "add_offset": 1.0,
            "_FillValue": -32767,
            "zlib": True,
            "chunksizes": (2, 3, 4),
        }
    }
    return _write(ds, d / "packed_int16.nc", encoding=enc)


def b_packed_int16_contiguous(d):
    data = field_values(6)
    data[0, 0, 0] = np.nan
    enc = {"pr": {"dtype": "int16", "scale_factor": 0.01, "add_offset": 1.0, "_FillValue": -32767}}
    return _write(_dataset(data), d / "packed_int16_contiguous.nc", encoding=enc)


def b_fill_1e20_no_attr(d):
    data = field_values(5)
    data[1, 2, 3] = 1e20
    ds = _dataset(data)
    return _write(ds, d / "fill_1e20_no_attr.nc", encoding=_no_fill(ds))


def b_fill_9999_no_attr(d):
    data = field_values(5)
    data[3, 0, 2] = -9999.0
    ds = _dataset(data)
    return _write(ds, d / "fill_9999_no_attr.nc", encoding=_no_fill(ds))


def b_missing_value_only(d):
    data = field_values(5)
    data[4, 1, 0] = -999.0
    ds = _dataset(data, attrs={"missing_value": -999.0})
    enc = _no_fill(ds)
    return _write(ds, d / "missing_value_only.nc", encoding=enc)


def b_negative(d):
    data = field_values(5)
    data[2, 1, 2] = -3.5
    return _write(_dataset(data), d / "negative.nc")


def b_all_nan(d):
    return _write(_dataset(np.full((5, 3, 4), np.nan)), d / "all_nan.nc")


def b_single_step(d):
    return _write(_dataset(field_values(1)), d / "single_step.nc")


def b_single_step_bounds(d):
    ds = _dataset(field_values(1) + 2.0)
    ds["time_bnds"] = (("time", "nv"), np.array([[0.0, 1.0]]))
    ds["time"].attrs["bounds"] = "time_bnds"
    return _write(ds, d / "single_step_bounds.nc")


def b_duplicated_times(d):
    return _write(_dataset(field_values(5), time=[0, 1, 2, 2, 3]), d / "duplicated_times.nc")


def b_unsorted_times(d):
    return _write(_dataset(field_values(5), time=[0, 1, 3, 2, 4]), d / "unsorted_times.nc")


def _month_offsets(months, calendar="standard", year=2001):
    dates = [cftime.datetime(year + (m - 1) // 12, (m - 1) % 12 + 1, 1, calendar=calendar) for m in months]
    return cftime.date2num(dates, TIME_UNITS, calendar=calendar)


def b_month_gap(d):
    months = [1, 2, 3, 5, 6, 7]  # April is missing
    return _write(_dataset(field_values(6), time=_month_offsets(months)), d / "month_gap.nc")


def b_month_gap_across_files(d):
    sub = d / "gap_glob"
    sub.mkdir()
    _write(_dataset(field_values(3), time=_month_offsets([1, 2, 3])), sub / "pr_a.nc")
    _write(_dataset(field_values(3) + 10, time=_month_offsets([5, 6, 7])), sub / "pr_b.nc")
    return str(sub / "pr_*.nc")


def b_mixed_calendars(d):
    sub = d / "mixed_calendars"
    sub.mkdir()
    _write(_dataset(field_values(3), time=_month_offsets([1, 2, 3])), sub / "pr_1.nc")
    _write(_dataset(field_values(3), time=_month_offsets([4, 5, 6], "noleap"), calendar="noleap"), sub / "pr_2.nc")
    return str(sub / "pr_*.nc")


def b_mixed_grids(d):
    sub = d / "mixed_grids"
    sub.mkdir()
    _write(_dataset(field_values(3), time=[0, 1, 2]), sub / "pr_1.nc")
    _write(_dataset(field_values(3), time=[3, 4, 5], lon=LON + 0.25), sub / "pr_2.nc")
    return str(sub / "pr_*.nc")


def b_overlapping_files(d):
    sub = d / "overlap"
    sub.mkdir()
    _write(_dataset(field_values(4), time=[0, 1, 2, 3]), sub / "pr_1.nc")
    _write(_dataset(field_values(4), time=[3, 4, 5, 6]), sub / "pr_2.nc")
    return str(sub / "pr_*.nc")


def b_duplicate_copy(d):
    sub = d / "dupcopy"
    sub.mkdir()
    _write(_dataset(field_values(4), time=[0, 1, 2, 3]), sub / "pr_a.nc")
    (sub / "pr_a_copy.nc").write_bytes((sub / "pr_a.nc").read_bytes())
    return str(sub / "pr_*.nc")


def b_daily_and_monthly(d):
    sub = d / "daymon"
    sub.mkdir()
    _write(_dataset(field_values(40), time=np.arange(40)), sub / "pr_d.nc")
    # monthly stamps of the following year (month starts, days since the reference)
    _write(
        _dataset(field_values(12), time=[365 + x for x in (0, 31, 59, 90, 120, 151, 181, 212, 243, 273, 304, 334)]),
        sub / "pr_m.nc",
    )
    return str(sub / "pr_*.nc")


def b_glob_fill_in_later_file(d):
    sub = d / "fill_later"
    sub.mkdir()
    a = field_values(3)
    a[1, 1, 1] = np.nan
    _write(_dataset(a, time=[0, 1, 2]), sub / "pr_1.nc", encoding={"pr": {"_FillValue": -9999.0}})
    b = field_values(3) + 3
    b[1, 1, 1] = 1e20  # the second file has no _FillValue and stores 1e20 for missing
    ds = _dataset(b, time=[3, 4, 5])
    _write(ds, sub / "pr_2.nc", encoding=_no_fill(ds))
    return str(sub / "pr_*.nc")


def b_glob_fills_differ(d):
    sub = d / "fills_differ"
    sub.mkdir()
    for i, (fill, chunked) in enumerate(((-9999.0, True), (1e20, False), (-1.0, True))):
        data = field_values(3) + 3 * i
        data[1, 1, 1] = np.nan
        enc = {"_FillValue": fill, **({"zlib": True, "chunksizes": (1, 3, 4)} if chunked else {})}
        _write(_dataset(data, time=[3 * i, 3 * i + 1, 3 * i + 2]), sub / f"pr_{i}.nc", encoding={"pr": enc})
    return str(sub / "pr_*.nc")


def b_glob_mixed_units(d):
    sub = d / "mixed_units"
    sub.mkdir()
    _write(_dataset(field_values(3), time=[0, 1, 2]), sub / "pr_1.nc")
    _write(_dataset(field_values(3) / 86400.0, units="kg m-2 s-1", time=[3, 4, 5]), sub / "pr_2.nc")
    return str(sub / "pr_*.nc")


def b_glob_end_stamped_and_bare(d):
    sub = d / "stamping"
    sub.mkdir()
    ds = _dataset(field_values(3), time=[1, 2, 3])  # stamped at the end of each day
    ds["time_bnds"] = (("time", "nv"), np.stack([np.arange(3.0), np.arange(1.0, 4.0)], axis=1))
    ds["time"].attrs["bounds"] = "time_bnds"
    _write(ds, sub / "pr_1.nc")
    _write(_dataset(field_values(3), time=[3, 4, 5]), sub / "pr_2.nc")  # no bounds, stamped at the start
    return str(sub / "pr_*.nc")


def b_monthly_stamps_daily_bounds(d):
    starts = np.asarray(_month_offsets(range(1, 13)), float)
    ds = _dataset(field_values(12), time=starts)
    ds["time_bnds"] = (("time", "nv"), np.stack([starts, starts + 1.0], axis=1))  # one day each
    ds["time"].attrs["bounds"] = "time_bnds"
    return _write(ds, d / "monthly_stamps_daily_bounds.nc")


def b_glob_bounds_disagree_in_later_file(d):
    sub = d / "bounds_glob"
    sub.mkdir()
    for i, width in enumerate((1.0, 0.25)):  # the second file's bounds span a quarter of each day
        t = np.arange(3.0) + 3 * i
        ds = _dataset(field_values(3), time=t)
        ds["time_bnds"] = (("time", "nv"), np.stack([t, t + width], axis=1))
        ds["time"].attrs["bounds"] = "time_bnds"
        _write(ds, sub / f"pr_{i + 1}.nc")
    return str(sub / "pr_*.nc")


def b_nan_time_stamp(d):
    return _write(_dataset(field_values(6), time=[0, 1, 2, np.nan, 4, 5]), d / "nan_time.nc")


def b_reference_year_one(d):
    # "days since 0001-01-01" in the standard (mixed Julian/Gregorian) calendar: the day
    # numbers of 2001-01-01..05 are cftime's, so decoding must use the same calendar
    t0 = cftime.date2num(
        cftime.datetime(2001, 1, 1, calendar="standard"), "days since 0001-01-01 00:00:00", calendar="standard"
    )
    ds = _dataset(field_values(5), time=t0 + np.arange(5), time_units="days since 0001-01-01 00:00:00")
    return _write(ds, d / "reference_year_one.nc")


def b_reference_odd_format(d):
    # a reference with a time of day and a compact time zone, hours as the unit
    ds = _dataset(field_values(4), time=np.arange(4) * 24.0 + 18.0, time_units="hours since 2000-12-31 06:00:00Z")
    return _write(ds, d / "reference_odd_format.nc")


def b_reference_year_zero_noleap(d):
    t0 = 2001 * 365
    ds = _dataset(field_values(4), time=t0 + np.arange(4), time_units="days since 0000-01-01", calendar="noleap")
    return _write(ds, d / "reference_year_zero_noleap.nc")


def b_months_since(d):
    return _write(
        _dataset(field_values(4), time=np.arange(4), time_units="months since 2001-01-01"), d / "months_since.nc"
    )


def b_time_without_units(d):
    ds = _dataset(field_values(4))
    ds["time"].attrs = {}
    return _write(ds, d / "time_without_units.nc")


def b_unsupported_calendar(d):
    return _write(_dataset(field_values(4), calendar="lunar_pentad"), d / "unsupported_calendar.nc")


def b_three_hourly(d):
    return _write(_dataset(field_values(4), time=np.arange(4) * 0.125), d / "three_hourly.nc")


def b_lat_desc_lon_wrap(d):
    lat = LAT[::-1]
    lon = np.array([350.0, 355.0, 0.0, 5.0])
    return _write(_dataset(field_values(3), lat=lat, lon=lon), d / "lat_desc_lon_wrap.nc")


def b_cyclic_lon(d):
    return _write(_dataset(field_values(3), lon=np.array([0.0, 120.0, 240.0, 360.0])), d / "cyclic_lon.nc")


def b_lat_out_of_range(d):
    return _write(_dataset(field_values(3), lat=np.array([-140.0, -135.0, -130.0])), d / "lat_out_of_range.nc")


def b_nan_coordinate(d):
    return _write(_dataset(field_values(3), lat=np.array([-31.0, np.nan, -30.0])), d / "nan_coordinate.nc")


def b_curvilinear(d):
    j, i = np.mgrid[0:3, 0:4].astype(float)
    a = np.radians(15.0)
    lon2 = -140.0 + 0.5 * (i * np.cos(a) - j * np.sin(a))
    lat2 = -30.0 + 0.5 * (i * np.sin(a) + j * np.cos(a))
    ds = xr.Dataset(
        {"pr": (("time", "y", "x"), field_values(3), {"units": "mm", "coordinates": "lat lon"})},
        coords={
            "time": ("time", np.arange(3.0), {"units": TIME_UNITS, "calendar": "standard"}),
            "lat": (("y", "x"), lat2, {"units": "degrees_north", "standard_name": "latitude"}),
            "lon": (("y", "x"), lon2, {"units": "degrees_east", "standard_name": "longitude"}),
        },
    )
    return _write(ds, d / "curvilinear_no_bounds.nc")


def b_truncated(d):
    good = _write(_dataset(field_values(40)), d / "_whole.nc", encoding={"pr": {"zlib": True}})
    raw = Path(good).read_bytes()
    os.unlink(good)
    (d / "truncated.nc").write_bytes(raw[: len(raw) // 2])
    return str(d / "truncated.nc")


def b_truncated_netcdf3(d):
    # the netCDF library reads past the end of a short classic file as zeros, silently
    good = _write(_dataset(field_values(40)), d / "_whole.nc", fmt="NETCDF3_CLASSIC")
    raw = Path(good).read_bytes()
    os.unlink(good)
    (d / "truncated_netcdf3.nc").write_bytes(raw[: len(raw) - 1000])
    return str(d / "truncated_netcdf3.nc")


def b_empty_file(d):
    (d / "empty.nc").write_bytes(b"")
    return str(d / "empty.nc")


def b_not_netcdf(d):
    (d / "not_netcdf.nc").write_text("time,lat,lon,pr\n2001-01-01,-30,-140,1.0\n")
    return str(d / "not_netcdf.nc")


def b_plain_hdf5(d):
    import h5py

    with h5py.File(d / "plain_hdf5.nc", "w") as f:
        f.create_dataset("pr", data=field_values(3))
    return str(d / "plain_hdf5.nc")


def b_netcdf3_classic(d):
    return _write(_dataset(field_values(5)), d / "netcdf3_classic.nc", fmt="NETCDF3_CLASSIC")


def b_empty_zarr(d):
    (d / "empty.zarr").mkdir()
    return str(d / "empty.zarr")


def b_zarr_without_variables(d):
    xr.Dataset(attrs={"title": "nothing yet"}).to_zarr(d / "no_variables.zarr", mode="w", consolidated=False)
    return str(d / "no_variables.zarr")


def b_zarr(d):
    _dataset(field_values(5)).to_zarr(d / "good.zarr", mode="w", consolidated=False)
    return str(d / "good.zarr")


def b_zarr_missing_chunk(d):
    import shutil

    ds = _dataset(field_values(6)).chunk({"time": 2, "lat": 2})
    ds.to_zarr(d / "missing_chunk.zarr", mode="w", consolidated=False)
    var = d / "missing_chunk.zarr" / "pr"
    # the middle time chunk, as a cut copy leaves it: a folder in the Zarr v3 layout (zarr-python
    # 3), files "1.<lat>.<lon>" in the v2 layout (zarr-python 2)
    if (var / "c").is_dir():
        shutil.rmtree(var / "c" / "1")
    else:
        for chunk in var.glob("1.*"):
            chunk.unlink()
    return str(d / "missing_chunk.zarr")


def b_zarr_absent_tile(d):
    data = field_values(6)
    data[:, 2:, :] = np.nan  # the last row is one tile holding only missing values
    ds = _dataset(data).chunk({"time": 2, "lat": 2})
    ds.to_zarr(d / "absent_tile.zarr", mode="w", consolidated=False, write_empty_chunks=False)
    return str(d / "absent_tile.zarr")


def b_dims_t_y_x(d):
    ds = _dataset(field_values(4), dims=("t", "y", "x"))
    return _write(ds, d / "dims_t_y_x.nc")


def b_dims_latitude_longitude(d):
    ds = _dataset(field_values(4), dims=("time", "latitude", "longitude"))
    return _write(ds, d / "dims_latitude_longitude.nc")


def b_dims_valid_time(d):
    ds = _dataset(
        field_values(4), name="tp", units="m", standard_name=None, dims=("valid_time", "latitude", "longitude")
    )
    ds["tp"].values[:] = field_values(4) / 1000.0
    return _write(ds, d / "dims_valid_time.nc")


def b_singleton_height(d):
    ds = _dataset(field_values(4))
    ds = ds.expand_dims(height=[2.0], axis=1)
    ds["height"].attrs.update(units="m", standard_name="height")
    return _write(ds, d / "singleton_height.nc")


def b_singleton_member(d):
    ds = _dataset(field_values(4)).expand_dims(member=[0], axis=0)
    return _write(ds, d / "singleton_member.nc")


def b_three_members(d):
    ds = _dataset(field_values(4)).expand_dims(member=[0, 1, 2], axis=0)
    return _write(ds, d / "three_members.nc")


def b_three_levels(d):
    ds = _dataset(field_values(4)).expand_dims(level=[850, 700, 500], axis=1)
    return _write(ds, d / "three_levels.nc")


def b_five_daily(d):
    return _write(_dataset(field_values(4), time=np.arange(4) * 5.0), d / "five_daily.nc")


def b_half_hourly(d):
    return _write(_dataset(field_values(8), units="mm/h", time=np.arange(8) / 48.0), d / "half_hourly.nc")


def b_monthly_end_stamped(d):
    starts = np.asarray(_month_offsets(range(1, 14)), float)  # Jan 2001 .. Jan 2002
    ds = _dataset(np.ones((12, LAT.size, LON.size)), units="mm/day", time=starts[1:])
    ds["time_bnds"] = (("time", "nv"), np.stack([starts[:-1], starts[1:]], axis=1))
    ds["time"].attrs["bounds"] = "time_bnds"
    return _write(ds, d / "monthly_end_stamped.nc")


def b_projected_only(d):
    ds = xr.Dataset(
        {
            "pr": (("time", "y", "x"), field_values(4), {"units": "mm", "grid_mapping": "crs"}),
            "crs": (
                (),
                0,
                {
                    "grid_mapping_name": "polar_stereographic",
                    "latitude_of_projection_origin": -90.0,
                    "straight_vertical_longitude_from_pole": -140.0,
                    "standard_parallel": -60.0,
                    "false_easting": 0.0,
                    "false_northing": 0.0,
                    "earth_radius": 6371229.0,
                },
            ),
        },
        coords={
            "time": ("time", np.arange(4.0), {"units": TIME_UNITS, "standard_name": "time"}),
            "y": ("y", np.array([6.0e6, 6.05e6, 6.1e6]), {"standard_name": "projection_y_coordinate", "units": "m"}),
            "x": ("x", np.array([0.0, 5e4, 1e5, 1.5e5]), {"standard_name": "projection_x_coordinate", "units": "m"}),
        },
    )
    return _write(ds, d / "projected_only.nc")


def b_two_candidates(d):
    ds = _dataset(field_values(4), standard_name=None)
    ds["rain"] = (("time", "lat", "lon"), field_values(4), {"units": "mm"})
    return _write(ds, d / "two_candidates.nc")


def b_huge_chunks(d):
    # unlimited time lets the stored chunk be far longer than the data
    ds = _dataset(field_values(6))
    enc = {"pr": {"zlib": True, "chunksizes": (100_000, 3, 4)}}
    return _write(ds, d / "huge_chunks.nc", encoding=enc, unlimited_dims=["time"])


def _declared_only(path, nt, ny, nx):
    """A NetCDF-4 file that declares a huge grid and writes no data (a few kB on disk)."""
    import netCDF4

    with netCDF4.Dataset(path, "w") as f:
        f.createDimension("time", nt)
        f.createDimension("lat", ny)
        f.createDimension("lon", nx)
        t = f.createVariable("time", "f8", ("time",))
        t.units = TIME_UNITS
        t[:] = np.arange(nt, dtype=float)
        for name, n, units in (("lat", ny, "degrees_north"), ("lon", nx, "degrees_east")):
            c = f.createVariable(name, "f8", (name,), chunksizes=(min(n, 100_000),))  # chunked: never filled
            c.units = units
        v = f.createVariable("pr", "f4", ("time", "lat", "lon"), chunksizes=(1, 1000, 1000), zlib=True)
        v.units, v.standard_name = "mm", "precipitation_amount"
    return str(path)


def b_declared_1e5_grid(d):
    return _declared_only(d / "declared_1e5_grid.nc", 365, 100_000, 100_000)


def b_declared_2e6_grid(d):
    return _declared_only(d / "declared_2e6_grid.nc", 2, 2_000_000, 2_000_000)


def b_fill_not_declared(d):
    data = field_values(5)
    data[2, 1, 3] = 1e20  # missing stored as 1e20 while the file declares -9999
    return _write(_dataset(data), d / "fill_not_declared.nc", encoding={"pr": {"_FillValue": -9999.0}})


def b_rate_read_as_depth(d):
    # daily depths of a few mm labelled as a rate per second: 86 400 times too much
    return _write(_dataset(field_values(5) + 2.0, units="mm s-1"), d / "rate_read_as_depth.nc")


def b_nan_lat_bounds(d):
    ds = _dataset(field_values(3))
    bounds = np.stack([LAT - 0.25, LAT + 0.25], axis=1)
    bounds[1, 0] = np.nan
    ds["lat_bnds"] = (("lat", "nv"), bounds)
    ds["lat"].attrs["bounds"] = "lat_bnds"
    return _write(ds, d / "nan_lat_bounds.nc")


def _skeleton(f, nt, unlimited=False):
    f.createDimension("time", None if unlimited else nt)
    f.createDimension("lat", LAT.size)
    f.createDimension("lon", LON.size)
    t = f.createVariable("time", "f8", ("time",))
    t.units, t.calendar = TIME_UNITS, "standard"
    t[:] = np.arange(nt, dtype=float)
    for name, values, units in (("lat", LAT, "degrees_north"), ("lon", LON, "degrees_east")):
        c = f.createVariable(name, "f8", (name,))
        c.units = units
        c[:] = values


def b_compound_type(d):
    import netCDF4

    pair = np.dtype([("depth", "f4"), ("flag", "i4")])
    with netCDF4.Dataset(d / "compound_type.nc", "w") as f:
        _skeleton(f, 3)
        kind = f.createCompoundType(pair, "depth_and_flag")
        v = f.createVariable("pr", kind, ("time", "lat", "lon"))
        v.units = "mm"
        v[:] = np.zeros((3, LAT.size, LON.size), dtype=pair)
    return str(d / "compound_type.nc")


def b_int16_shorter_than_time(d):
    import netCDF4

    with netCDF4.Dataset(d / "int16_shorter_than_time.nc", "w") as f:
        _skeleton(f, 10, unlimited=True)  # time has 10 records ...
        v = f.createVariable("pr", "i2", ("time", "lat", "lon"), zlib=True, chunksizes=(2, 3, 4))
        v.units, v.scale_factor = "mm", 0.1
        v[:5] = field_values(5)  # ... the variable only 5
    return str(d / "int16_shorter_than_time.nc")


def b_one_cell(d):
    return _write(_dataset(field_values(4)[:, :1, :1], lat=LAT[:1], lon=LON[:1]), d / "one_cell.nc")


def b_one_cell_bounds(d):
    ds = _dataset(field_values(4)[:, :1, :1], lat=LAT[:1], lon=LON[:1])
    ds["lat_bnds"] = (("lat", "nv"), [[LAT[0] - 0.25, LAT[0] + 0.25]])
    ds["lon_bnds"] = (("lon", "nv"), [[LON[0] - 0.25, LON[0] + 0.25]])
    ds["lat"].attrs["bounds"], ds["lon"].attrs["bounds"] = "lat_bnds", "lon_bnds"
    return _write(ds, d / "one_cell_bounds.nc")


def b_huge_sparse(d):
    """A 4 GB (logical) NetCDF-3 file whose data are holes: only a few MB are on disk.

    Time is the record dimension, so the library writes only the record slots it is given
    (the time values and one value of pr); the rest of each record stays a hole.
    """
    import netCDF4

    path = d / "huge_sparse.nc"
    nt, ny, nx = HUGE_SHAPE
    with netCDF4.Dataset(path, "w", format="NETCDF3_64BIT_DATA") as f:
        f.set_fill_off()  # no fill pass: the file stays sparse
        f.createDimension("time", None)
        f.createDimension("lat", ny)
        f.createDimension("lon", nx)
        t = f.createVariable("time", "f8", ("time",))
        t.units, t.calendar = TIME_UNITS, "standard"
        la = f.createVariable("lat", "f8", ("lat",))
        la.units = "degrees_north"
        la[:] = -40.0 + 0.01 * np.arange(ny)
        lo = f.createVariable("lon", "f8", ("lon",))
        lo.units = "degrees_east"
        lo[:] = -150.0 + 0.01 * np.arange(nx)
        v = f.createVariable("pr", "f4", ("time", "lat", "lon"))
        v.units, v.standard_name = "mm", "precipitation_amount"
        t[:] = np.arange(nt, dtype=float)
        v[nt - 1, ny - 1, nx - 1] = 7.0  # the only value written; unwritten values read as 0
    return str(path)


# ---------------------------------------------------------------- value checks
def _close(a, b, tol=1e-9):
    np.testing.assert_allclose(np.asarray(a, float), np.asarray(b, float), atol=tol, rtol=0)


def c_packed(pr):
    expect = field_values(6)
    expect[2, 1, 1] = np.nan
    _close(pr.values, expect, tol=0.005 + 1e-9)  # packing resolution is scale_factor/2
    assert np.isnan(pr.values[2, 1, 1]) and np.isfinite(pr.values).sum() == expect.size - 1


def c_packed_contiguous(pr):
    expect = field_values(6)
    expect[0, 0, 0] = np.nan
    _close(pr.values, expect, tol=0.005 + 1e-9)


def _c_masked(where, nt=5):
    def check(pr):
        expect = field_values(nt)
        expect[where] = np.nan
        _close(pr.values, expect)

    return check


def c_single_bounds(pr):
    assert pr.attrs["step"] == "day" and pr.sizes["time"] == 1
    _close(pr.values, field_values(1) + 2.0)


def c_month_gap(pr):
    assert pr.attrs["step"] == "month" and pr.sizes["time"] == 7
    assert pr.attrs["time_gaps_filled_with_missing"] == 1
    assert list(pr["time"].dt.month.values) == [1, 2, 3, 4, 5, 6, 7]
    assert np.isnan(pr.values[3]).all()
    _close(pr.values[[0, 1, 2, 4, 5, 6]], field_values(6))


def c_month_gap_files(pr):
    assert pr.sizes["time"] == 7 and np.isnan(pr.values[3]).all()
    _close(pr.values[:3], field_values(3))
    _close(pr.values[4:], field_values(3) + 10)


def c_fill_in_later_file(pr):
    expect = np.concatenate([field_values(3), field_values(3) + 3])
    expect[[1, 4], 1, 1] = np.nan
    _close(pr.values, expect)
    assert "pr_2.nc" in pr.attrs["missing_value_heuristics"] and "pr_1.nc" not in pr.attrs["missing_value_heuristics"]


def c_fills_differ(pr):
    expect = np.concatenate([field_values(3) + 3 * i for i in range(3)])
    expect[[1, 4, 7], 1, 1] = np.nan
    _close(pr.values, expect)


def c_absent_tile(pr):
    expect = field_values(6)
    expect[:, 2:, :] = np.nan
    _close(pr.values, expect)
    assert "absent from the store at every time" in pr.attrs["absent_chunks"]


def c_shorter_than_time(pr):
    assert pr.sizes["time"] == 10
    _close(pr.values[:5], field_values(5), tol=0.05 + 1e-9)  # packing resolution is scale_factor/2
    assert np.isnan(pr.values[5:]).all()  # never written: missing, not the fill code scaled


def c_one_cell_bounds(pr):
    assert pr.shape == (4, 1, 1) and pr.attrs["cell_bounds"] == "file"
    _close([pr.lat_lower.item(), pr.lat_upper.item()], [LAT[0] - 0.25, LAT[0] + 0.25])
    _close(pr.values, field_values(4)[:, :1, :1])


def c_daily_2001(pr, n=5, offset=0.0):
    assert pr.attrs["step"] == "day"
    assert str(pr["time"].values[0])[:10] == "2001-01-01", pr["time"].values[0]
    _close(pr.values, field_values(n) + offset)


def c_reference_odd(pr):
    assert pr.attrs["step"] == "day"
    assert str(pr["time"].values[0])[:13] == "2001-01-01T00", pr["time"].values[0]
    _close(pr.values, field_values(4))


def c_year_zero(pr):
    assert pr.attrs["calendar"] == "noleap" and pr["time"].dt.year.values[0] == 2001
    _close(pr.values, field_values(4))


def c_months_since(pr):
    assert pr.attrs["step"] == "month" and list(pr["time"].dt.month.values) == [1, 2, 3, 4]
    _close(pr.values, field_values(4))


def c_lat_desc_lon_wrap(pr):
    assert list(pr["lat"].values) == sorted(LAT)
    assert list(pr["lon"].values) == [-10.0, -5.0, 0.0, 5.0]
    # stored lat index 2 (lowest latitude, stored last) is the first row now; lon order unchanged
    _close(pr.values, field_values(3)[:, ::-1, :])
    _close(pr["lon_lower"].values, [-12.5, -7.5, -2.5, 2.5])


def c_curvilinear(pr):
    assert pr.dims == ("time", "y", "x") and pr["lat"].shape == (3, 4)
    assert pr.attrs["cell_bounds"] == "inferred from cell centres"
    _close(pr.values, field_values(3))


def c_netcdf3(pr):
    assert pr.attrs["reader"] == "xarray netCDF4 backend"
    c_daily_2001(pr)


def c_plain4(pr):
    assert pr.dims == ("time", "lat", "lon")
    _close(pr.values, field_values(4))


def c_three_hourly(pr):
    assert pr.attrs["step"] == "3hour"
    _close(pr.values, field_values(4))


def c_three_members(pr):
    assert pr.dims == ("member", "time", "lat", "lon") and pr.sizes["member"] == 3
    for m in range(3):
        _close(pr.isel(member=m).values, field_values(4))


def c_half_hourly(pr):
    # 1 mm/h rates over two half hours make each hourly total the mean of its pair
    assert pr.attrs["step"] == "hour" and pr.attrs["native_step"] == "30min" and pr.sizes["time"] == 4
    v = field_values(8)
    _close(pr.values, 0.5 * (v[0::2] + v[1::2]))


def c_monthly_end_stamped(pr):
    assert "relabelled" in pr.attrs["time_labels"] and str(pr["time"].values[0])[:10] == "2001-01-01"
    _close(pr.values[:, 0, 0], [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])


def c_projected_only(pr):
    from pyproj import CRS, Transformer

    assert pr.dims == ("time", "y", "x") and pr.lat.dims == ("y", "x")
    crs = CRS.from_cf(
        {
            "grid_mapping_name": "polar_stereographic",
            "latitude_of_projection_origin": -90.0,
            "straight_vertical_longitude_from_pole": -140.0,
            "standard_parallel": -60.0,
            "false_easting": 0.0,
            "false_northing": 0.0,
            "earth_radius": 6371229.0,
        }
    )
    lon, lat = Transformer.from_crs(crs, crs.geodetic_crs, always_xy=True).transform(0.0, 6.0e6)
    _close([pr.lon.values[0, 0], pr.lat.values[0, 0]], [lon, lat])
    _close(pr.values, field_values(4))


def c_valid_time(pr):
    assert pr.attrs["original_variable"] == "tp" and pr.attrs["original_units"] == "m"
    _close(pr.values, field_values(4), tol=1e-9)


def c_huge_chunks(pr):
    _close(pr.values, field_values(6))


def c_huge(pr):
    """Only a corner is read: the loader must be lazy (reading the whole grid needs 8 GB)."""
    import dask.array

    assert isinstance(pr.data, dask.array.Array)
    assert pr.shape == HUGE_SHAPE
    corner = pr.isel(time=slice(-2, None), lat=slice(-2, None), lon=slice(-2, None)).values
    _close(corner, [[[0, 0], [0, 0]], [[0, 0], [0, 7.0]]])


# ---------------------------------------------------------------- the corpus
FIX = "Fix:"
CASES = [
    Case(
        "no_units",
        "precipitation variable without a units attribute",
        b_no_units,
        Raises(UnitsError, ("no units", "pr"), "UnitsError: has no units; lists the accepted units"),
    ),
    Case(
        "unknown_units",
        "units 'furlongs/fortnight'",
        b_unknown_units,
        Raises(UnitsError, ("furlongs",), "UnitsError naming the unit that is not understood"),
    ),
    Case(
        "units_on_wrong_variable",
        "'pr' has no units, a second variable 'pr_spread' has 'mm'",
        b_units_on_wrong_variable,
        Raises(
            VariableError,
            ("pr", "pr_spread", "var="),
            "VariableError: 'pr' has no units while 'pr_spread' has; asks for var= or units",
        ),
    ),
    Case(
        "packed_int16",
        "int16 with scale_factor, add_offset, _FillValue; deflate-chunked",
        b_packed_int16,
        Opens(c_packed, "opens (direct chunk reader); unpacked values within scale/2; fill -> NaN"),
    ),
    Case(
        "packed_int16_contiguous",
        "int16 packed, contiguous storage",
        b_packed_int16_contiguous,
        Opens(c_packed_contiguous, "opens (xarray backend); unpacked values; fill -> NaN"),
    ),
    Case(
        "fill_1e20_no_attr",
        "1e20 for missing, no _FillValue attribute",
        b_fill_1e20_no_attr,
        Opens(_c_masked((1, 2, 3)), "opens; 1e20 -> NaN, noted in attrs['missing_value_heuristics']"),
    ),
    Case(
        "fill_9999_no_attr",
        "-9999 for missing, no _FillValue attribute",
        b_fill_9999_no_attr,
        Opens(_c_masked((3, 0, 2)), "opens; -9999 -> NaN (not a negative-value error)"),
    ),
    Case(
        "missing_value_only",
        "-999 declared by missing_value only",
        b_missing_value_only,
        Opens(_c_masked((4, 1, 0)), "opens; -999 -> NaN"),
    ),
    Case(
        "negative",
        "a value of -3.5 mm",
        b_negative,
        Raises(DataValueError, ("negative", "-3.5"), "DataValueError with count, lowest value and where"),
    ),
    Case(
        "all_nan",
        "every value missing",
        b_all_nan,
        Raises(DataValueError, ("no valid values",), "DataValueError: all missing"),
    ),
    Case(
        "single_step",
        "one time step, no time bounds",
        b_single_step,
        Raises(TimeAxisError, ("single time step", "bounds"), "TimeAxisError: step length unknown; add time_bnds"),
    ),
    Case(
        "single_step_bounds",
        "one time step with time bounds of one day",
        b_single_step_bounds,
        Opens(c_single_bounds, "opens as daily from the bounds"),
    ),
    Case(
        "duplicated_times",
        "time stamps 0,1,2,2,3",
        b_duplicated_times,
        Raises(TimeAxisError, ("duplicated", "position 3"), "TimeAxisError with the first position"),
    ),
    Case(
        "unsorted_times",
        "time stamps 0,1,3,2,4",
        b_unsorted_times,
        Raises(TimeAxisError, ("backwards",), "TimeAxisError with the first position"),
    ),
    Case(
        "month_gap",
        "monthly, April missing",
        b_month_gap,
        Opens(c_month_gap, "opens; the missing month is a NaN step, counted in attrs"),
    ),
    Case(
        "month_gap_across_files",
        "glob of two monthly files with April missing between them",
        b_month_gap_across_files,
        Opens(c_month_gap_files, "opens; combined, missing month as NaN"),
    ),
    Case(
        "mixed_calendars",
        "glob: standard and noleap files",
        b_mixed_calendars,
        Raises(MismatchError, ("calendar", "noleap"), "MismatchError naming both files' calendars"),
    ),
    Case(
        "mixed_grids",
        "glob: second file's lon shifted by 0.25 deg",
        b_mixed_grids,
        Raises(MismatchError, ("different grid", "regrid"), "MismatchError; suggests cw.regrid"),
    ),
    Case(
        "overlapping_files",
        "glob: two files sharing one day",
        b_overlapping_files,
        Raises(
            MismatchError,
            ("same times appear in two files", "pr_1.nc", "pr_2.nc"),
            "MismatchError naming both files; suggests removing the overlapping one",
        ),
    ),
    Case(
        "duplicate_copy_in_glob",
        "glob: one file and its byte copy",
        b_duplicate_copy,
        Raises(
            MismatchError,
            ("same times appear in two files", "pr_a.nc", "pr_a_copy.nc"),
            "MismatchError naming both copies (not 'times go backwards')",
        ),
    ),
    Case(
        "daily_and_monthly_glob",
        "glob: a daily file and a monthly file",
        b_daily_and_monthly,
        Raises(
            MismatchError,
            ("month steps", "day steps", "pr_d.nc", "pr_m.nc"),
            "MismatchError naming both files and their steps (never monthly read as daily)",
        ),
    ),
    Case(
        "glob_fill_in_later_file",
        "glob: first file declares _FillValue -9999, second has none and stores 1e20",
        b_glob_fill_in_later_file,
        Opens(c_fill_in_later_file, "opens; each file's own fill handling (the 1e20 is missing, not 1e20 mm)"),
    ),
    Case(
        "glob_fills_differ",
        "glob: _FillValue -9999, 1e20 and -1 in three files (chunked and contiguous)",
        b_glob_fills_differ,
        Opens(c_fills_differ, "opens; every file's own _FillValue is honoured"),
    ),
    Case(
        "glob_mixed_units",
        "glob: a file in mm and one in kg m-2 s-1",
        b_glob_mixed_units,
        Raises(MismatchError, ("units", "kg m-2 s-1", "pr_1.nc", "pr_2.nc"), "MismatchError naming both files' units"),
    ),
    Case(
        "glob_end_stamped_and_bare",
        "glob: a file stamped at each day's end (time bounds) and one without bounds",
        b_glob_end_stamped_and_bare,
        Raises(
            MismatchError,
            ("at its end", "no time bounds", "pr_1.nc", "pr_2.nc"),
            "MismatchError naming both files (never a one-step shift of one file)",
        ),
    ),
    Case(
        "monthly_stamps_daily_bounds",
        "monthly stamps whose time bounds span one day each",
        b_monthly_stamps_daily_bounds,
        Raises(
            TimeAxisError,
            ("one day long", "one month apart", "time bounds"),
            "TimeAxisError: bounds disagree with the spacing (never daily data 97 % missing)",
        ),
    ),
    Case(
        "glob_bounds_disagree_in_later_file",
        "glob: the second file's time bounds span 6 hours of each day",
        b_glob_bounds_disagree_in_later_file,
        Raises(
            TimeAxisError,
            ("pr_2.nc", "about 6 hours long", "one day apart"),
            "TimeAxisError naming the file whose bounds disagree with its stamps",
        ),
    ),
    Case(
        "nan_time_stamp",
        "a NaN among the time stamps",
        b_nan_time_stamp,
        Raises(TimeAxisError, ("missing (NaN)",), "TimeAxisError naming the missing stamp"),
    ),
    Case(
        "reference_year_one",
        "'days since 0001-01-01 00:00:00', standard calendar",
        b_reference_year_one,
        Opens(c_daily_2001, "opens; dates decoded to 2001-01-01.."),
    ),
    Case(
        "reference_odd_format",
        "'hours since 2000-12-31 06:00:00Z'",
        b_reference_odd_format,
        Opens(c_reference_odd, "opens; daily, first stamp 2001-01-01T00"),
    ),
    Case(
        "reference_year_zero_noleap",
        "'days since 0000-01-01', noleap",
        b_reference_year_zero_noleap,
        Opens(c_year_zero, "opens as cftime noleap, year 2001"),
    ),
    Case(
        "months_since",
        "'months since 2001-01-01', standard calendar",
        b_months_since,
        Raises(
            TimeAxisError,
            ("months since", "no fixed length", "days since"),
            "TimeAxisError: a month has no fixed length; rewrite as days since",
        ),
    ),
    Case(
        "time_without_units",
        "time coordinate with plain numbers, no units",
        b_time_without_units,
        Raises(TimeAxisError, ("time", "units"), "TimeAxisError: time has no units; set them"),
    ),
    Case(
        "unsupported_calendar",
        "calendar 'lunar_pentad'",
        b_unsupported_calendar,
        Raises(CalendarError, ("lunar_pentad",), "CalendarError listing the supported calendars"),
    ),
    Case(
        "three_hourly", "3-hourly steps", b_three_hourly, Opens(c_three_hourly, "opens; step '3hour', values as stored")
    ),
    Case(
        "five_daily",
        "5-day steps (pentads)",
        b_five_daily,
        Raises(
            TimeAxisError,
            ("about 120 hours", "divide a day", "resample"),
            "TimeAxisError; lists the accepted steps, suggests resampling",
        ),
    ),
    Case(
        "half_hourly",
        "30-minute rates in mm/h",
        b_half_hourly,
        Opens(c_half_hourly, "opens; summed to hourly totals, native step in attrs"),
    ),
    Case(
        "monthly_end_stamped",
        "monthly 1 mm/day stamped at each month's end (time = upper time_bnds)",
        b_monthly_end_stamped,
        Opens(c_monthly_end_stamped, "opens; relabelled to month starts, January 31 mm"),
    ),
    Case(
        "projected_only",
        "polar stereographic x/y with a CF grid_mapping, no lat/lon",
        b_projected_only,
        Opens(c_projected_only, "opens curvilinear; lat/lon from the mapping (pyproj)"),
    ),
    Case(
        "lat_desc_lon_wrap",
        "lat descending, lon 350,355,0,5 (wraps through 0)",
        b_lat_desc_lon_wrap,
        Opens(c_lat_desc_lon_wrap, "opens; lat ascending, lon -10..5, values follow, bounds shifted"),
    ),
    Case(
        "cyclic_lon",
        "lon 0,120,240,360 (360 repeats 0)",
        b_cyclic_lon,
        Raises(GridError, ("duplicated longitudes",), "GridError; drop the cyclic column"),
    ),
    Case(
        "lat_out_of_range",
        "latitudes -140..-130",
        b_lat_out_of_range,
        Raises(GridError, ("outside -90..90",), "GridError; lat/lon swapped or radians?"),
    ),
    Case(
        "nan_coordinate",
        "a NaN latitude",
        b_nan_coordinate,
        Raises(GridError, ("NaN",), "GridError; repair the coordinates"),
    ),
    Case(
        "curvilinear_no_bounds",
        "2-D lat(y,x)/lon(y,x), no bounds",
        b_curvilinear,
        Opens(c_curvilinear, "opens on (time, y, x); bounds noted as inferred"),
    ),
    Case(
        "truncated",
        "a deflated NetCDF-4 file cut in half",
        b_truncated,
        Raises(SourceError, ("truncated", "bytes"), "SourceError with the size; copy the file again"),
    ),
    Case(
        "truncated_netcdf3",
        "a NETCDF3_CLASSIC file missing its last 1000 bytes",
        b_truncated_netcdf3,
        Raises(
            SourceError,
            ("shorter than its header says", "truncated"),
            "SourceError: size against the size its header declares",
        ),
    ),
    Case("empty_file", "a file of 0 bytes", b_empty_file, Raises(SourceError, ("0 bytes",), "SourceError")),
    Case(
        "not_netcdf", "a CSV file named .nc", b_not_netcdf, Raises(SourceError, ("not a NetCDF file",), "SourceError")
    ),
    Case(
        "plain_hdf5",
        "an HDF5 file with a bare array (no dims, no attributes)",
        b_plain_hdf5,
        Raises(GridError, ("no latitude/longitude",), "GridError: no lat/lon coordinates; says how to add them"),
    ),
    Case(
        "netcdf3_classic",
        "NETCDF3_CLASSIC format",
        b_netcdf3_classic,
        Opens(c_netcdf3, "opens through the xarray backend"),
    ),
    Case(
        "empty_zarr",
        "an empty folder named .zarr",
        b_empty_zarr,
        Raises(SourceError, ("Zarr",), "SourceError: empty or incomplete store"),
    ),
    Case(
        "zarr_without_variables",
        "a Zarr group with no arrays",
        b_zarr_without_variables,
        Raises(VariableError, ("no precipitation-like variable", "none"), "VariableError (found: none)"),
    ),
    Case("zarr", "a valid Zarr store", b_zarr, Opens(c_daily_2001, "opens")),
    Case(
        "zarr_missing_chunk",
        "a Zarr store whose middle time chunk was deleted",
        b_zarr_missing_chunk,
        Raises(
            SourceError,
            ("missing from the store", "time steps 2..3", "xr.open_zarr"),
            "SourceError from the chunk listing at open (never a silent block of missing values)",
        ),
    ),
    Case(
        "zarr_absent_tile",
        "a Zarr store written without its all-missing tile (write_empty_chunks=False)",
        b_zarr_absent_tile,
        Opens(c_absent_tile, "opens; the tile is missing, noted in attrs['absent_chunks']"),
    ),
    Case(
        "dims_t_y_x",
        "dims (t, y, x) with 1-D y/x coordinates in degrees",
        b_dims_t_y_x,
        Opens(c_plain4, "opens; renamed to time/lat/lon"),
    ),
    Case(
        "dims_latitude_longitude",
        "dims (time, latitude, longitude)",
        b_dims_latitude_longitude,
        Opens(c_plain4, "opens; renamed to lat/lon"),
    ),
    Case(
        "dims_valid_time",
        "variable 'tp' in m on (valid_time, latitude, longitude)",
        b_dims_valid_time,
        Opens(c_valid_time, "opens; m -> mm"),
    ),
    Case(
        "singleton_height",
        "extra dim height=1 between time and lat",
        b_singleton_height,
        Opens(c_plain4, "opens; singleton dropped"),
    ),
    Case(
        "singleton_member",
        "extra leading dim member=1",
        b_singleton_member,
        Opens(c_plain4, "opens; singleton dropped"),
    ),
    Case(
        "three_members",
        "extra dim member=3",
        b_three_members,
        Opens(c_three_members, "opens; member dimension kept in front of time"),
    ),
    Case(
        "three_levels",
        "extra dim level=3 between time and lat",
        b_three_levels,
        Raises(GridError, ("level", "isel", "member"), "GridError; select one level, or rename to member"),
    ),
    Case(
        "two_candidates",
        "two variables 'pr' and 'rain', both in mm, no standard_name",
        b_two_candidates,
        Raises(VariableError, ("several", "var="), "VariableError listing both"),
    ),
    Case(
        "fill_not_declared",
        "1e20 stored for missing while _FillValue says -9999",
        b_fill_not_declared,
        Raises(
            DataValueError,
            ("above the plausible", "time=2001-01-03", "max_depth_mm"),
            "DataValueError from the depth bound, naming the first place (never 1e20 mm)",
        ),
    ),
    Case(
        "rate_read_as_depth",
        "daily depths of 2-6 mm labelled 'mm s-1'",
        b_rate_read_as_depth,
        Raises(DataValueError, ("above the plausible", "units"), "DataValueError: implausible depths; check the units"),
    ),
    Case(
        "declared_1e5_grid",
        "NetCDF-4 declaring 365 x 1e5 x 1e5 float32, no data written",
        b_declared_1e5_grid,
        Raises(
            GridError,
            ("100,000 x 100,000", "cells per time step"),
            "GridError from the declared sizes, before any coordinate or chunk index is read",
        ),
    ),
    Case(
        "declared_2e6_grid",
        "NetCDF-4 declaring 2 x 2e6 x 2e6 float32, no data written",
        b_declared_2e6_grid,
        Raises(GridError, ("2,000,000 x 2,000,000",), "GridError at once (no millions of dask chunks)"),
    ),
    Case(
        "nan_lat_bounds",
        "a NaN in the latitude bounds variable",
        b_nan_lat_bounds,
        Raises(GridError, ("NaN", "latitude bounds"), "GridError at open (was a raw error in the area weights)"),
    ),
    Case(
        "compound_type",
        "'pr' of an HDF5 compound type (depth, flag)",
        b_compound_type,
        Raises(VariableError, ("compound type", "depth, flag"), "VariableError naming the fields"),
    ),
    Case(
        "int16_shorter_than_time",
        "packed int16 written for 5 of 10 records of the unlimited time",
        b_int16_shorter_than_time,
        Opens(c_shorter_than_time, "opens; the 5 records never written are missing (NaN)"),
    ),
    Case(
        "one_cell",
        "a grid of one cell without bounds",
        b_one_cell,
        Raises(GridError, ("single latitude", "bounds"), "GridError: cell size unknown; add bounds (no guess)"),
    ),
    Case(
        "one_cell_bounds",
        "a grid of one cell with CF bounds",
        b_one_cell_bounds,
        Opens(c_one_cell_bounds, "opens; cell from its bounds"),
    ),
    Case(
        "huge_chunks",
        "stored chunk (100000, 3, 4) on a 6-step unlimited time",
        b_huge_chunks,
        Opens(c_huge_chunks, "opens; values exact"),
    ),
    Case(
        "huge_sparse",
        f"NetCDF-3 64-bit-data file of {HUGE_SHAPE} float32 (4 GB, sparse)",
        b_huge_sparse,
        Opens(c_huge, "opens lazily; no data read at open; a corner reads back"),
    ),
]


def build_corpus(folder) -> dict:
    """Write every case into ``folder``; return {name: (case, source, [files])}."""
    folder = Path(folder)
    out = {}
    for case in CASES:
        d = folder / case.name
        d.mkdir(parents=True, exist_ok=True)
        source = case.build(d)
        files = sorted(p for p in d.rglob("*") if p.is_file())
        out[case.name] = (case, source, files)
    return out


def markdown_table() -> str:
    rows = ["| case | input | behaviour observed |", "| --- | --- | --- |"]
    for c in CASES:
        rows.append(f"| `{c.name}` | {c.what} | {c.expect.note} |")
    return "\n".join(rows)


# ---------------------------------------------------------------- command-line cases
# Bad basin files, output folders and option values given to the ``climwidgets`` command:
# each ends with exit 0, or exit 2 and one line that names the file (or option) and says
# how to fix it.  ``build(folder)`` writes the inputs and returns the command's arguments.
JOB_LAT, JOB_LON = np.array([-30.75, -30.25]), np.array([-140.75, -140.25])


@dataclass
class JobCase:
    name: str
    what: str
    build: Callable  # build(folder: Path) -> list of command-line arguments
    exit_code: int
    words: tuple  # in the error line (exit 2)
    note: str
    names: tuple = ()  # what the message must name instead of a file of the case (an option, a folder)


def _job_data(d):
    """Three years of 1 mm/day on 2 x 2 cells; a valid input for every case."""
    import pandas as pd

    time = pd.date_range("1991-01-01", "1993-12-31", freq="D")
    ds = _dataset(
        np.ones((time.size, 2, 2)),
        time=np.arange(time.size),
        time_units="days since 1991-01-01",
        lat=JOB_LAT,
        lon=JOB_LON,
        standard_name="lwe_thickness_of_precipitation_amount",
    )
    return _write(ds, d / "pr.nc")


def _job_square(name="square", west=-141.0):
    ring = [[west, -31.0], [west + 1, -31.0], [west + 1, -30.0], [west, -30.0], [west, -31.0]]
    return {"type": "Feature", "properties": {"name": name}, "geometry": {"type": "Polygon", "coordinates": [ring]}}


def _summary(d, basins, out=None, *extra):
    return [
        "summary",
        "--data",
        _job_data(d),
        "--basins",
        str(basins),
        "--months",
        "7,8",
        "--baseline",
        "1991-1993",
        "--out",
        str(out if out is not None else d / "out"),
        "--quiet",
        *extra,
    ]


def _geojson(d, name, obj):
    import json

    path = d / name
    path.write_text(obj if isinstance(obj, str) else json.dumps(obj))
    return path


def j_valid(d):
    return _summary(d, _geojson(d, "basins.geojson", {"type": "FeatureCollection", "features": [_job_square()]}))


def j_nested(d):
    return _summary(d, _geojson(d, "nested.geojson", "[" * 100_000 + "]" * 100_000))


def j_shapefile_without_dbf(d):
    import shapefile

    with shapefile.Writer(str(d / "outline"), shapeType=shapefile.POLYGON) as w:
        w.field("name", "C")
        w.poly(_job_square()["geometry"]["coordinates"])
        w.record("square")
    (d / "outline.dbf").unlink()
    return _summary(d, d / "outline.shp")


def j_fifo(d):
    os.mkfifo(d / "basins.geojson")  # reading it would block until someone writes
    return _summary(d, d / "basins.geojson")


def j_zero_area(d):
    line = {
        "type": "Feature",
        "properties": {"name": "flat"},
        "geometry": {"type": "Polygon", "coordinates": [[[-141, -31], [-140, -31], [-139, -31], [-141, -31]]]},
    }
    return _summary(d, _geojson(d, "flat.geojson", {"type": "FeatureCollection", "features": [line]}))


def j_outside(d):
    far = _job_square("far", west=10.0)
    return _summary(d, _geojson(d, "far.geojson", {"type": "FeatureCollection", "features": [far]}))


def j_features_not_list(d):
    return _summary(d, _geojson(d, "odd.geojson", {"type": "FeatureCollection", "features": {"a": 1}}))


def j_out_proc(d):
    return _summary(d, _geojson(d, "basins.geojson", _job_square()), "/proc")


def j_out_is_file(d):
    (d / "out.txt").write_text("a file where the output folder should be")
    return _summary(d, _geojson(d, "basins.geojson", _job_square()), d / "out.txt")


def j_typo(d):
    return ["extremes", "--data", _job_data(d), "--duration", "dayly", "--out", str(d / "out")]


def j_typo_choice(d):
    return ["compare", "--data", _job_data(d), _job_data(d), "--method", "bilinaer", "--out", str(d / "out")]


JOB_CASES = [
    JobCase(
        "job_valid",
        "summary of a valid file and basin (control)",
        j_valid,
        0,
        (),
        "exit 0; CSV, metadata, NetCDF and report written",
    ),
    JobCase(
        "job_basins_nested",
        "GeoJSON nested 100 000 levels",
        j_nested,
        2,
        ("nested too deeply",),
        "exit 2: SourceError naming the file (no RecursionError)",
    ),
    JobCase(
        "job_shapefile_without_dbf",
        "shapefile whose .dbf is missing",
        j_shapefile_without_dbf,
        2,
        ("outline.dbf",),
        "exit 2: SourceError naming the .shp and the missing .dbf",
    ),
    JobCase(
        "job_basins_fifo",
        "a named pipe given as the basin file",
        j_fifo,
        2,
        ("not a regular file",),
        "exit 2 at once: SourceError (the pipe is never opened, so nothing blocks)",
    ),
    JobCase(
        "job_basin_zero_area",
        "a basin whose vertices lie on one line",
        j_zero_area,
        2,
        ("basin 'flat'", "zero area"),
        "exit 2: BasinError naming the file and the basin",
    ),
    JobCase(
        "job_basin_outside_grid",
        "a basin far from the grid",
        j_outside,
        2,
        ("basin 'far'", "outside the grid"),
        "exit 2: BasinError naming the file and the basin",
    ),
    JobCase(
        "job_features_not_list",
        "'features' is an object, not a list",
        j_features_not_list,
        2,
        ("'features' is a dict",),
        "exit 2: BasinError naming the file (no AttributeError)",
    ),
    JobCase(
        "job_out_proc",
        "--out /proc",
        j_out_proc,
        2,
        ("does not accept new files",),
        "exit 2 before any data are read: OutputError naming /proc (no raw errno)",
        names=("/proc",),
    ),
    JobCase(
        "job_out_is_file",
        "--out names a regular file",
        j_out_is_file,
        2,
        ("is a file, not a folder",),
        "exit 2: ParameterError naming the file",
    ),
    JobCase(
        "job_typo_number",
        "--duration dayly",
        j_typo,
        2,
        ("'dayly' is not a whole number",),
        "exit 2: says a whole number of days is expected",
        names=("--duration",),
    ),
    JobCase(
        "job_typo_choice",
        "--method bilinaer",
        j_typo_choice,
        2,
        ("did you mean 'bilinear'",),
        "exit 2: suggests the nearest valid word (difflib)",
        names=("--method",),
    ),
]


def build_job_corpus(folder) -> dict:
    """Write every command-line case into ``folder``; return {name: (case, argv, [files])}."""
    folder = Path(folder)
    out = {}
    for case in JOB_CASES:
        d = folder / case.name
        d.mkdir(parents=True, exist_ok=True)
        argv = case.build(d)
        files = sorted(p for p in d.rglob("*") if p.is_file())
        out[case.name] = (case, argv, files)
    return out


def job_markdown_table() -> str:
    rows = ["| case | input | behaviour observed |", "| --- | --- | --- |"]
    for c in JOB_CASES:
        rows.append(f"| `{c.name}` | {c.what} | {c.note} |")
    return "\n".join(rows)


if __name__ == "__main__":  # pragma: no cover - a helper for people
    import sys

    where = Path(sys.argv[1] if len(sys.argv) > 1 else "corpus_out")
    build_corpus(where)
    build_job_corpus(where)
    print(markdown_table())
    print()
    print(job_markdown_table())
