"""Direct chunk reads give exactly what the netCDF4 library gives (xarray as the reference)."""

import numpy as np
import pytest
import xarray as xr

from climwidgets.io import chunkreader


def _write(path, data, encoding, attrs=None, dims=("time", "lat", "lon")):
    ds = xr.Dataset({"v": (dims, data, attrs or {})})
    ds.to_netcdf(path, encoding={"v": encoding}, format="NETCDF4")
    return str(path)


def _direct(path, chunks):
    raw = xr.open_dataset(path, decode_times=False)
    arr = chunkreader.direct_reader(path, "v", raw["v"].encoding, chunks, name="t")
    return raw["v"].values, arr


CASES = {
    "deflate+shuffle": {"zlib": True, "shuffle": True, "chunksizes": (4, 5, 6)},
    "deflate": {"zlib": True, "shuffle": False, "complevel": 9, "chunksizes": (3, 7, 5)},
    "no filter, chunked": {"chunksizes": (2, 4, 4)},
    "fletcher32": {"zlib": True, "fletcher32": True, "chunksizes": (4, 5, 6)},
}


@pytest.mark.parametrize("name", CASES)
def test_matches_netcdf4_library(tmp_path, name):
    rng = np.random.default_rng(3)
    data = rng.gamma(0.5, 4.0, size=(11, 13, 9)).astype("f4")  # edge chunks are partial
    data[2, 3, 4] = np.nan
    path = _write(tmp_path / "a.nc", data, CASES[name])
    expected, arr = _direct(path, (5, 13, 9))
    assert arr is not None
    np.testing.assert_array_equal(arr.compute(), expected)


def test_packed_int16_with_scale_offset_and_fill(tmp_path):
    data = np.linspace(0, 300, 11 * 13 * 9).reshape(11, 13, 9)
    data[0, 0, :3] = np.nan
    enc = {"dtype": "int16", "scale_factor": 0.01, "add_offset": 100.0, "_FillValue": -32767,
           "zlib": True, "chunksizes": (4, 13, 9)}
    path = _write(tmp_path / "p.nc", data, enc)
    expected, arr = _direct(path, (4, 13, 9))
    np.testing.assert_allclose(arr.compute(), expected, rtol=0, atol=1e-12, equal_nan=True)
    assert np.isnan(arr.compute()[0, 0, :3]).all()


def test_unwritten_chunks_read_as_fill(tmp_path):
    import netCDF4

    path = str(tmp_path / "sparse.nc")
    with netCDF4.Dataset(path, "w") as ds:
        for d, n in zip(("time", "lat", "lon"), (8, 4, 4)):
            ds.createDimension(d, n)
        v = ds.createVariable("v", "f4", ("time", "lat", "lon"), chunksizes=(2, 4, 4), zlib=True, fill_value=-1.0)
        v[4:6] = 7.0  # only one chunk written
    expected, arr = _direct(path, (8, 4, 4))
    np.testing.assert_array_equal(arr.compute(), expected)
    assert np.isnan(arr.compute()[0]).all() and (arr.compute()[4] == 7.0).all()


def test_contiguous_and_classic_files_fall_back(tmp_path):
    data = np.ones((3, 4, 5), "f4")
    path = _write(tmp_path / "c.nc", data, {"contiguous": True})
    assert _direct(path, (3, 4, 5))[1] is None
    ds = xr.Dataset({"v": (("time", "lat", "lon"), data)})
    ds.to_netcdf(tmp_path / "classic.nc", format="NETCDF3_CLASSIC")
    raw = xr.open_dataset(tmp_path / "classic.nc")
    assert chunkreader.direct_reader(str(tmp_path / "classic.nc"), "v", raw["v"].encoding, (3, 4, 5), name="t") is None
