"""CF-NetCDF export: CF compliance, round trips, attribute cleaning, atomic writes.

CF compliance is checked with the IOOS compliance checker (PyPI ``compliance-checker``,
version 6.1.0 when written; its ``cf:1.10`` suite, run offline on its bundled standard
name table).  A check of the highest priority that fails is an error; medium and low
priority findings (warnings, suggestions) are allowed.
"""

from __future__ import annotations

import json

import netCDF4
import numpy as np
import pandas as pd
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.errors import InputError, ParameterError
from climwidgets.io.grid import normalise_rectilinear
from climwidgets.report import netcdf as ncmod
from climwidgets.report.netcdf import OutputExistsError, to_netcdf

LAT = np.array([10.25, 10.75, 11.25])
LON = np.array([-150.25, -149.75])


def _precip(kind="daily", calendar="standard", chunks=None):
    rng = np.random.default_rng(1)
    if kind == "daily":
        t = xr.date_range("1991-01-01", "1991-12-31", freq="D", calendar=calendar, use_cftime=calendar != "standard")
        step = "day"
    else:
        t = xr.date_range("1991-01-01", periods=36, freq="MS", calendar=calendar, use_cftime=calendar != "standard")
        step = "month"
    da = xr.DataArray(
        rng.gamma(0.6, 5.0, (t.size, LAT.size, LON.size)),
        dims=("time", "lat", "lon"),
        coords={"time": t, "lat": LAT, "lon": LON},
        name="pr",
        attrs={
            "units": "mm",
            "step": step,
            "standard_name": "lwe_thickness_of_precipitation_amount",
            "cell_methods": "time: sum",
            "long_name": "precipitation depth per time step",
            "history": "2001-01-01T00:00:00Z made by hand for a test",
        },
    )
    da = normalise_rectilinear(da)
    return da.chunk(chunks) if chunks else da


def _cf_errors(path, version="cf:1.10"):
    """High-priority failures of the IOOS compliance checker (warnings are allowed)."""
    suite_mod = pytest.importorskip("compliance_checker.suite")
    from compliance_checker.base import BaseCheck

    cs = suite_mod.CheckSuite()
    cs.load_all_available_checkers()
    ds = cs.load_dataset(str(path))
    try:
        results, crashes = cs.run_all(ds, [version], skip_checks=[])[version]
    finally:
        ds.close()
    assert not crashes, crashes  # a check that raised is a failure too
    return [
        (r.name, r.msgs)
        for r in results
        if r.weight == BaseCheck.HIGH and isinstance(r.value, tuple) and r.value[0] < r.value[1]
    ]


# ----------------------------------------------------------------- CF checker
def test_precipitation_time_series_passes_cf_checker(tmp_path):
    path = to_netcdf(_precip(), tmp_path / "pr.nc", title="daily test field")
    assert _cf_errors(path) == []
    with netCDF4.Dataset(path) as nc:
        assert nc.Conventions == "CF-1.10"
        v = nc["pr"]
        assert v.standard_name == "lwe_thickness_of_precipitation_amount"
        assert v.units == "mm" and v.cell_methods == "time: sum"
        assert v.filters()["zlib"]
        assert nc["lat"].bounds == "lat_bnds" and nc["lon"].bounds == "lon_bnds"
        assert nc["time"].bounds == "time_bnds"
        assert nc["time"].standard_name == "time" and nc["time"].axis == "T"
        assert "lat_lower" not in nc.variables and "lon_upper" not in nc.variables
        # the house's 1-D bounds became CF (n, 2) bounds
        np.testing.assert_allclose(nc["lat_bnds"][:], [[10.0, 10.5], [10.5, 11.0], [11.0, 11.5]])
        np.testing.assert_allclose(nc["lon_bnds"][:], [[-150.5, -150.0], [-150.0, -149.5]])
        # each day's bounds span exactly one day
        np.testing.assert_allclose(np.diff(nc["time_bnds"][:], axis=1), 1.0)


def test_share_map_passes_cf_checker(tmp_path):
    share = cw.seasonal_fraction(_precip("monthly"), months=(7, 8))
    path = to_netcdf(share, tmp_path / "share.nc")
    assert _cf_errors(path) == []
    with netCDF4.Dataset(path) as nc:
        v = nc["seasonal_share"]
        assert v.units == "1" and "standard_name" not in v.ncattrs()
        assert "seasonal share" in v.long_name
        assert nc["n_years"].dtype == np.int32  # CF-1.10 checkers reject int64


def test_per_year_share_and_return_levels_pass_cf_checker(tmp_path):
    per_year = cw.seasonal_fraction(_precip("monthly"), months=(7, 8), per_year=True)
    p1 = to_netcdf(per_year, tmp_path / "share_year.nc")
    rng = np.random.default_rng(2)
    am = xr.DataArray(
        rng.gumbel(50, 10, (30, LAT.size, LON.size)),
        dims=("year", "lat", "lon"),
        coords={"year": np.arange(1991, 2021), "lat": LAT, "lon": LON},
        attrs={"units": "mm"},
        name="annual_max",
    )
    rl = cw.return_levels(am, periods=(2, 10, 100), n_boot=60)
    p2 = to_netcdf(rl, tmp_path / "return_levels.nc")
    assert _cf_errors(p1) == []
    assert _cf_errors(p2) == []
    with netCDF4.Dataset(p1) as nc:
        assert nc["year"].units == "1" and "year" in nc["year"].long_name
        assert nc["year"].dtype == np.int32
    with netCDF4.Dataset(p2) as nc:
        assert nc["period"].units == "year" and nc["period"].long_name == "return period"
        assert nc["estimate"].standard_name == "lwe_thickness_of_precipitation_amount"
        # GEV parameters are not precipitation amounts: no standard name guessed for them
        assert "standard_name" not in nc["scale"].ncattrs()
        # the design-depth cautions travel with the file, one per line
        assert "jurisdiction" in nc.cautions and len(nc.cautions.splitlines()) == len(cw.DESIGN_DEPTH_CAUTIONS)


def test_curvilinear_grid_has_auxiliary_coordinates(tmp_path):
    t = pd.date_range("2001-01-01", periods=24, freq="MS")
    yy, xx = np.meshgrid(np.arange(4), np.arange(5), indexing="ij")
    da = xr.DataArray(
        np.ones((24, 4, 5)),
        dims=("time", "y", "x"),
        coords={
            "time": t,
            "lat": (("y", "x"), 20 + 0.5 * yy + 0.1 * xx),
            "lon": (("y", "x"), -140 + 0.5 * xx - 0.1 * yy),
        },
        name="pr",
        attrs={"units": "mm", "step": "month"},
    )
    path = to_netcdf(da, tmp_path / "curv.nc")
    assert _cf_errors(path) == []
    with netCDF4.Dataset(path) as nc:
        assert sorted(nc["pr"].coordinates.split()) == ["lat", "lon"]
        assert nc["lat"].dimensions == ("y", "x") and nc["lat"].units == "degrees_north"
        assert nc["lat_bnds"].shape == (4, 5, 4)
        assert "coordinates" not in nc["lat_bnds"].ncattrs()
        # the added standard name and cell method for a precipitation depth per step
        assert nc["pr"].standard_name == "lwe_thickness_of_precipitation_amount"
        assert nc["pr"].cell_methods == "time: sum"


# ----------------------------------------------------------------- round trips
@pytest.mark.parametrize("calendar", ["standard", "noleap", "360_day"])
def test_round_trip_with_xarray_and_open_precip(tmp_path, calendar):
    da = _precip("monthly", calendar)
    path = to_netcdf(da, tmp_path / "pr.nc")
    back = xr.open_dataset(path, decode_times=xr.coders.CFDatetimeCoder(use_cftime=calendar != "standard"))
    np.testing.assert_array_equal(back["pr"].values, da.values)
    np.testing.assert_array_equal(back["time"].values, da["time"].values)
    assert back["pr"].attrs["units"] == "mm" and back["pr"].attrs["step"] == "month"
    assert back.attrs["history"].startswith("2001-01-01T00:00:00Z made by hand")
    assert "to_netcdf" in back.attrs["history"].splitlines()[-1]
    back.close()
    pr = cw.open_precip(str(path))
    assert pr.attrs["step"] == "month" and pr.attrs["units"] == "mm"
    assert pr.attrs["calendar"] == ("standard" if calendar == "standard" else calendar)
    np.testing.assert_allclose(pr.values, da.values)
    np.testing.assert_allclose(pr["lat_lower"].values, da["lat_lower"].values)
    np.testing.assert_allclose(pr["lon_upper"].values, da["lon_upper"].values)


def test_dask_input_is_written_and_not_modified(tmp_path):
    da = _precip(chunks={"time": 100})  # one year of days
    before = dict(da.attrs)
    to_netcdf(da, tmp_path / "pr.nc")
    assert da.chunks is not None and da.attrs == before and "lat_lower" in da.coords
    assert "bounds" not in da["lat"].attrs
    with xr.open_dataset(tmp_path / "pr.nc") as back:
        np.testing.assert_array_equal(back["pr"].values, da.values)


def test_attributes_are_made_serialisable(tmp_path):
    da = _precip("monthly")
    da.attrs.update(
        flag=True,
        settings={"months": [7, 8]},
        nothing=None,
        years=[1991, 2020],
        notes=("first", "second"),
        mixed=[1, "a"],
    )
    path = to_netcdf(da, tmp_path / "pr.nc", source="test grid", institution="test team")
    with netCDF4.Dataset(path) as nc:
        v = nc["pr"]
        assert v.flag == "true"
        assert json.loads(v.settings) == {"months": [7, 8]}
        assert "nothing" not in v.ncattrs()
        np.testing.assert_array_equal(v.years, [1991, 2020])
        assert v.notes == "first\nsecond"
        assert json.loads(v.mixed) == [1, "a"]
        assert nc.source == "test grid" and nc.institution == "test team"


def test_year_and_month_label_coordinates(tmp_path):
    normals = cw.normals(_precip("monthly"), baseline=(1991, 1993), min_fraction=0.6)
    path = to_netcdf(normals, tmp_path / "normals.nc")
    assert _cf_errors(path) == []
    with netCDF4.Dataset(path) as nc:
        assert nc["month"].units == "1" and list(nc["month"][:]) == list(range(1, 13))
        assert nc["pr"].cell_methods.startswith("time: sum within months")


# ----------------------------------------------------------------- safety
def test_refuses_to_overwrite(tmp_path):
    path = tmp_path / "pr.nc"
    path.write_bytes(b"earlier result")
    with pytest.raises(OutputExistsError) as info:
        to_netcdf(_precip("monthly"), path)
    msg = str(info.value)
    assert str(path) in msg and "overwrite=True" in msg
    assert isinstance(info.value, InputError) and isinstance(info.value, FileExistsError)
    assert path.read_bytes() == b"earlier result"
    to_netcdf(_precip("monthly"), path, overwrite=True)
    with xr.open_dataset(path) as back:
        assert "pr" in back


def test_failed_write_leaves_no_partial_file(tmp_path, monkeypatch):
    path = tmp_path / "pr.nc"
    path.write_bytes(b"earlier result")

    def broken(ds, tmp, encoding):
        tmp.write_bytes(b"half a file")
        raise OSError("disk full (simulated)")

    monkeypatch.setattr(ncmod, "_write_dataset", broken)
    with pytest.raises(OSError, match="simulated"):
        to_netcdf(_precip("monthly"), path, overwrite=True)
    assert path.read_bytes() == b"earlier result"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["pr.nc"]
    with pytest.raises(OSError):
        to_netcdf(_precip("monthly"), tmp_path / "new.nc")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["pr.nc"]


def test_bad_arguments(tmp_path):
    with pytest.raises(ParameterError, match="cw.to_csv"):
        to_netcdf(pd.DataFrame({"a": [1]}), tmp_path / "x.nc")
    with pytest.raises(ParameterError, match="does not exist"):
        to_netcdf(_precip("monthly"), tmp_path / "missing" / "x.nc")
    with pytest.raises(ParameterError, match="folder"):
        to_netcdf(_precip("monthly"), tmp_path)
    with pytest.raises(ParameterError, match="no data variables"):
        to_netcdf(xr.Dataset(), tmp_path / "x.nc")
    assert list(tmp_path.iterdir()) == []
