import hashlib

import cftime
import numpy as np
import pytest
import xarray as xr


def write_cf(
    path,
    data=None,
    *,
    units="mm",
    freq="D",
    start="2001-01-01",
    periods=None,
    calendar="standard",
    lat=(10.0, 10.5, 11.0),
    lon=(20.0, 20.5, 21.0, 21.5),
    name="pr",
    standard_name="precipitation_amount",
    bounds=True,
    time_values=None,
    extra_attrs=None,
    encoding=None,
    engine_format="NETCDF4",
):
    """Write a small CF-style precipitation file and return its path."""
    lat, lon = np.asarray(lat, float), np.asarray(lon, float)
    if time_values is None:
        n = periods if periods is not None else (data.shape[0] if data is not None else 10)
        times = xr.date_range(start, periods=n, freq=freq, calendar=calendar, use_cftime=True)
        time_num = cftime.date2num(list(times), "days since 1900-01-01", calendar=calendar)
    else:
        time_num = np.asarray(time_values, float)
    n = len(time_num)
    if data is None:
        data = np.ones((n, lat.size, lon.size))
    attrs = {"units": units} if units is not None else {}
    if standard_name:
        attrs["standard_name"] = standard_name
    attrs.update(extra_attrs or {})
    ds = xr.Dataset(
        {name: (("time", "lat", "lon"), np.asarray(data, float), attrs)},
        coords={
            "time": (
                "time",
                time_num,
                {"units": "days since 1900-01-01", "calendar": calendar, "standard_name": "time"},
            ),
            "lat": ("lat", lat, {"units": "degrees_north", "standard_name": "latitude"}),
            "lon": ("lon", lon, {"units": "degrees_east", "standard_name": "longitude"}),
        },
        attrs={"Conventions": "CF-1.10"},
    )
    if bounds:
        for c in ("lat", "lon"):
            v = ds[c].values
            step = (v[1] - v[0]) if v.size > 1 else 1.0
            ds[f"{c}_bnds"] = ((c, "nv"), np.stack([v - step / 2, v + step / 2], axis=1))
            ds[c].attrs["bounds"] = f"{c}_bnds"
    ds.to_netcdf(path, format=engine_format, encoding=encoding or {})
    return str(path)


def checksum(path):
    return hashlib.sha256(open(path, "rb").read()).hexdigest()


@pytest.fixture
def cf_file():
    return write_cf
