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
    enc = {
        "dtype": "int16",
        "scale_factor": 0.01,
        "add_offset": 100.0,
        "_FillValue": -32767,
        "zlib": True,
        "chunksizes": (4, 13, 9),
    }
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


def _corrupt_first_chunk(path, varname="v"):
    """Flip one byte inside the first stored chunk (located with h5py's chunk index)."""
    import h5py

    with h5py.File(path, "r") as f:
        info = f[varname].id.get_chunk_info(0)
    with open(path, "r+b") as fh:
        fh.seek(info.byte_offset + info.size // 2)
        byte = fh.read(1)
        fh.seek(info.byte_offset + info.size // 2)
        fh.write(bytes([byte[0] ^ 0x40]))


@pytest.mark.parametrize("fast", [True, False], ids=["numcodecs", "own sum"])
def test_fletcher32_matches_hdf5_on_every_stored_chunk(tmp_path, monkeypatch, fast):
    # Reference: the HDF5 library itself. It stores each chunk's Fletcher-32 sum as the
    # last 4 bytes; our check must accept every chunk HDF5 wrote, for odd and even sizes,
    # through numcodecs' codec and through our own sum alike.
    import h5py

    if not fast:
        monkeypatch.setattr(chunkreader, "_FAST_FLETCHER32", [None])

    rng = np.random.default_rng(5)
    for n, shape, chunks, dtype in (
        (0, (7, 5, 3), (3, 5, 3), "f4"),
        (1, (9, 7), (4, 3), "i2"),
        (2, (6, 4), (5, 3), "u1"),
        (3, (700, 600), (700, 600), "f8"),
    ):
        path = str(tmp_path / f"f{n}.nc")
        values = (rng.random(shape) * 100).astype(dtype)
        values[: chunks[0]] = 0  # an all-zero chunk: HDF5's sums stay 0
        with h5py.File(path, "w") as f:
            f.create_dataset("v", data=values, chunks=chunks, fletcher32=True)
        index = chunkreader._build_index(path, "v")
        assert index is not None and chunkreader._FLETCHER32 in index.filters
        with h5py.File(path, "r") as f:
            expected = f["v"][...]
        region = tuple(slice(0, s) for s in shape)
        np.testing.assert_array_equal(chunkreader.read_region(index, region), expected)


def test_fletcher32_published_check_values():
    # Classic Fletcher-32 test vectors (Wikipedia, "Fletcher's checksum", from memory):
    # "abcde" -> 0xF04FC729, "abcdef" -> 0x56502D2A, "abcdefgh" -> 0xEBE19591, with 16-bit
    # words taken little-endian and an odd last byte zero-padded. HDF5 takes the words
    # big-endian, so the same words are fed here with each byte pair swapped.
    def swapped(text):
        b = text.encode() + (b"\0" if len(text) % 2 else b"")
        return b"".join(b[i + 1 : i + 2] + b[i : i + 1] for i in range(0, len(b), 2))

    assert chunkreader._fletcher32(swapped("abcde")) == 0xF04FC729
    assert chunkreader._fletcher32(swapped("abcdef")) == 0x56502D2A
    assert chunkreader._fletcher32(swapped("abcdefgh")) == 0xEBE19591


def test_corrupted_chunk_with_fletcher32_is_refused_naming_file_and_region(tmp_path):
    from climwidgets.errors import SourceError

    rng = np.random.default_rng(6)
    data = rng.gamma(0.5, 4.0, size=(8, 6, 5)).astype("f4")
    path = _write(tmp_path / "bad.nc", data, {"fletcher32": True, "chunksizes": (4, 6, 5)})
    _corrupt_first_chunk(path)
    raw = xr.open_dataset(path, decode_times=False)  # HDF5 itself refuses the chunk too
    arr = chunkreader.direct_reader(path, "v", raw["v"].encoding, (4, 6, 5), name="t")
    assert arr is not None
    with pytest.raises(SourceError) as err:
        arr[:4].compute()
    msg = str(err.value)
    assert "bad.nc" in msg and "variable 'v'" in msg and "checksum" in msg
    assert "time steps 0–3, rows 0–5 (lat), columns 0–4 (lon)" in msg and "[time 0:4, lat 0:6, lon 0:5]" in msg
    arr[4:].compute()  # the undamaged chunk still reads


def test_index_travels_as_the_file_name_and_refuses_a_changed_file(tmp_path):
    """A worker process reads the chunk index itself; a file changed since opening is refused."""
    import os
    import pickle

    from climwidgets.errors import SourceError

    data = np.arange(40 * 4 * 4, dtype="f4").reshape(40, 4, 4)
    path = _write(tmp_path / "a.nc", data, {"zlib": True, "chunksizes": (1, 4, 4)})
    index = chunkreader._build_index(path, "v")
    payload = pickle.dumps(index)
    assert len(payload) < 500 < len(pickle.dumps(index.entries))  # no per-chunk offsets on the wire
    chunkreader._INDEXES.clear()
    again = pickle.loads(payload)
    assert again.entries == index.entries
    region = (slice(3, 9), slice(0, 4), slice(0, 4))
    np.testing.assert_array_equal(chunkreader.read_region(again, region), data[3:9])
    chunkreader._INDEXES.clear()
    os.utime(path, ns=(0, 0))  # the file looks changed
    with pytest.raises(SourceError, match="changed"):
        pickle.loads(payload)


def _h5py_netcdf(path, values, chunks, **filters):
    """A file written by h5py alone, with dimension scales so that netCDF4 sees time, lat, lon."""
    import h5py

    with h5py.File(path, "w") as f:
        for name, n in zip(("time", "lat", "lon"), values.shape):
            f[name] = np.arange(n, dtype="f8")
            f[name].make_scale(name)
        d = f.create_dataset("pr", data=values, chunks=chunks, **filters)
        for i, name in enumerate(("time", "lat", "lon")):
            d.dims[i].attach_scale(f[name])
    return str(path)


def _netcdf4_values(path, varname="pr"):
    import netCDF4

    with netCDF4.Dataset(path) as ds:
        v = ds[varname]
        v.set_auto_maskandscale(False)  # the stored numbers
        return v[...]


@pytest.mark.parametrize(
    "filters",
    [
        {"fletcher32": True},
        {"fletcher32": True, "compression": "gzip", "compression_opts": 1, "shuffle": True},
        {"fletcher32": True, "shuffle": True},
    ],
)
def test_h5py_fletcher32_file_reads_as_netcdf4_and_a_flipped_byte_is_refused(tmp_path, filters):
    # Reference: the netCDF4 library (netCDF-C over HDF5) reads the clean file; HDF5 itself
    # verifies every chunk's Fletcher-32 sum there.
    from climwidgets.errors import InputError

    rng = np.random.default_rng(8)
    values = np.round(rng.gamma(0.6, 5.0, size=(10, 7, 9)), 1).astype("f4")  # odd sizes: partial chunks
    path = _h5py_netcdf(tmp_path / "h5.nc", values, (4, 7, 5), **filters)
    index = chunkreader._build_index(path, "pr")
    assert index is not None and chunkreader._FLETCHER32 in index.filters and index.dims == ["time", "lat", "lon"]
    expected = _netcdf4_values(path)
    arr = chunkreader.direct_reader(path, "pr", {}, (10, 7, 9), name="h5")
    np.testing.assert_array_equal(arr.compute(), expected)

    import h5py

    with h5py.File(path, "r") as f:  # the stored chunk at time 4:8, columns 5:9
        info = f["pr"].id.get_chunk_info_by_coord((4, 0, 5))
    with open(path, "r+b") as fh:
        fh.seek(info.byte_offset + 3)
        byte = fh.read(1)
        fh.seek(info.byte_offset + 3)
        fh.write(bytes([byte[0] ^ 0x01]))
    arr = chunkreader.direct_reader(path, "pr", {}, (10, 7, 9), name="h5-bad")
    with pytest.raises(InputError) as err:
        arr.compute()
    msg = str(err.value)
    assert "h5.nc" in msg and "variable 'pr'" in msg and "Fletcher-32 checksum mismatch" in msg
    assert "time steps 4–7, rows 0–6 (lat), columns 5–8 (lon)" in msg
    assert "[time 4:8, lat 0:7, lon 5:9]" in msg
    with pytest.raises(RuntimeError, match="HDF error"):  # the library refuses the same chunk
        _netcdf4_values(path)


def test_fletcher32_fast_codec_agrees_with_our_sum():
    # numcodecs' Fletcher32 is used only when it follows HDF5's convention (checked on first
    # use); either way a chunk gives the same body, and a mismatch is refused.
    rng = np.random.default_rng(9)
    for size in (1, 2, 3, 4097, 40000):
        body = rng.integers(0, 256, size, dtype=np.uint8).tobytes()
        chunk = body + chunkreader._fletcher32(body).to_bytes(4, "little")
        assert bytes(chunkreader._check_fletcher32(chunk)) == body
        bad = bytes([chunk[0] ^ 0x80]) + chunk[1:]
        with pytest.raises(chunkreader.ChecksumError, match="stored 0x"):
            chunkreader._check_fletcher32(bad)
    codec = chunkreader._fast_fletcher32()
    import numcodecs

    if tuple(int(p) for p in numcodecs.__version__.split(".")[:2]) >= (0, 16):
        assert codec is not None  # numcodecs 0.16 computes HDF5's sum


def test_damaged_deflate_chunk_is_refused_naming_the_chunk(tmp_path):
    from climwidgets.errors import SourceError

    data = np.random.default_rng(10).gamma(0.5, 4.0, size=(8, 6, 5)).astype("f4")
    path = _write(tmp_path / "z.nc", data, {"zlib": True, "shuffle": True, "chunksizes": (4, 6, 5)})
    _corrupt_first_chunk(path)
    raw = xr.open_dataset(path, decode_times=False)
    arr = chunkreader.direct_reader(path, "v", raw["v"].encoding, (8, 6, 5), name="t")
    with pytest.raises(SourceError) as err:
        arr.compute()
    msg = str(err.value)
    assert "z.nc" in msg and "deflate" in msg and "time steps 0–3" in msg


def test_unknown_filter_falls_back_to_the_library(tmp_path):
    # HDF5's scale-offset filter (id 6, lossless on integers) is not one the direct reader
    # undoes: it declines, and open_precip reads the file through the netCDF4 library,
    # giving the library's numbers (reference: netCDF4 itself).
    import climwidgets as cw

    rng = np.random.default_rng(11)
    tenths = rng.integers(0, 500, size=(12, 6, 7)).astype("i2")
    path = tmp_path / "so.nc"
    import h5py

    with h5py.File(path, "w") as f:
        f["time"] = np.arange(12, dtype="f8")
        f["time"].attrs.update(units="days since 2001-01-01", calendar="standard")
        f["lat"] = np.linspace(30.0, 31.25, 6)
        f["lat"].attrs["units"] = "degrees_north"
        f["lon"] = np.linspace(-150.0, -148.5, 7)
        f["lon"].attrs["units"] = "degrees_east"
        for name in ("time", "lat", "lon"):
            f[name].make_scale(name)
        d = f.create_dataset("pr", data=tenths, chunks=(4, 6, 7), scaleoffset=0, compression="gzip")
        for i, name in enumerate(("time", "lat", "lon")):
            d.dims[i].attach_scale(f[name])
        d.attrs.update(units="mm", scale_factor=np.float32(0.1))
    assert chunkreader._build_index(str(path), "pr") is None
    assert chunkreader.direct_reader(str(path), "pr", {}, (12, 6, 7), name="so") is None
    pr = cw.open_precip(str(path), validate=False)
    expected = _netcdf4_values(str(path)) * np.float32(0.1)
    np.testing.assert_allclose(pr.values, expected, rtol=1e-6)
